/* Instruction budgets of the C interface, measured under QEMU as the Rust
 * budget binary measures qc-core's (firmware-example/src/bin/budget.rs): run
 * with `qemu-system-arm -icount shift=0`, QEMU's virtual clock advances 1 ns
 * per instruction and SysTick counts it; instructions per SysTick tick are
 * calibrated with a loop of known length, and each case is timed as (loop
 * with the work) minus (the same loop without it) over N samples in one
 * interval, after a warm-up. The cases are the Rust budget's 8-channel ones
 * (8 cups, 8 vanes, raw counts), through tm_logger_push. A case whose
 * logger kind the library was built without (a configured build, README
 * "From C") prints "not built". */
#include <stdint.h>
#include <stdio.h>

#include "tenmin_qc.h"

#define SYST_CSR (*(volatile uint32_t *)0xE000E010)
#define SYST_RVR (*(volatile uint32_t *)0xE000E014)
#define SYST_CVR (*(volatile uint32_t *)0xE000E018)
#define MASK 0x00FFFFFFu
#define T0 1705276800000LL /* 2024-01-15T00:00:00Z, an interval boundary */
#define N 400u
#define CH 8

static uint32_t now(void) { return SYST_CVR; }
static uint32_t ticks(uint32_t start, uint32_t end) { return (start - end) & MASK; }

/* Instructions per SysTick tick, x1000, from a loop of 3 instructions an
 * iteration (nop, subs, bne). */
static uint32_t calibrate(void) {
    uint32_t loops = 200000, start = now();
    __asm__ volatile(".syntax unified\n1: nop\n subs %0, %0, #1\n bne 1b" : "+l"(loops));
    uint32_t t = ticks(start, now());
    return (uint32_t)(3ull * 200000 * 1000 / (t ? t : 1));
}

static uint64_t layout_mem[TM_LAYOUT_C8G3_SIZE / 8];
static uint64_t logger_mem[TM_RECORD_LOGGER_C8G3_SIZE / 8];
static uint8_t frames[CH * TM_FRAME_LEN];
static tm_reading table[8][CH];

/* Pushes n samples from t0, one a second, cycling through the table; with
 * push 0 the same loop without the logger. SysTick ticks taken. */
static uint32_t pushes(int64_t t0, uint32_t n, int push) {
    tm_push_result res;
    uint32_t start = now();
    for (uint32_t i = 0; i < n; i++) {
        int64_t t = t0 + (int64_t)i * 1000;
        const tm_reading *r = table[i & 7];
        __asm__ volatile("" : "+r"(r), "+r"(t));
        if (push) tm_logger_push(logger_mem, t, r, CH, frames, sizeof frames, &res);
    }
    return ticks(start, now());
}

static int run(uint32_t milli, const char *name, const tm_channel_settings *c, int states) {
    tm_station_settings st;
    tm_channel_settings ch[CH];
    tm_station_defaults(&st);
    for (int i = 0; i < CH; i++) ch[i] = *c;
    if (tm_layout_build_c8g3(layout_mem, sizeof layout_mem, &st, ch, CH, NULL) != TM_OK) return 0;
    tm_status s = states ? tm_state_logger_start_c8g3(logger_mem, sizeof logger_mem, layout_mem)
                         : tm_record_logger_start_c8g3(logger_mem, sizeof logger_mem, layout_mem);
    if (s == TM_ERR_NOT_BUILT) { /* a configured library of the other kind */
        printf("budget: %-44s not built\n", name);
        return 1;
    }
    if (s != TM_OK) return 0;
    pushes(T0, 10, 1);
    uint32_t work = pushes(T0 + 10000, N, 1), base = pushes(T0 + 10000, N, 0);
    uint32_t per_sample = (uint32_t)((uint64_t)(work - base) * milli / 1000 / N);
    printf("budget: %-44s per sample %6lu   per channel %6lu\n", name, (unsigned long)per_sample,
           (unsigned long)(per_sample / CH));
    return 1;
}

int main(void) {
    SYST_RVR = MASK;
    SYST_CVR = 0;
    SYST_CSR = 5; /* enable, core clock */
    uint32_t milli = calibrate();
    printf("budget: calibration %lu.%03lu instructions per SysTick tick\n", (unsigned long)(milli / 1000),
           (unsigned long)(milli % 1000));
    /* A cup anemometer (pulse counts) and a vane (ADC counts), as the
     * scenario's (firmware-example/src/scenario.rs). */
    tm_channel_settings cup, vane;
    tm_channel_defaults(TM_KIND_SPEED, 1.0, &cup);
    cup.step = 0.049;
    cup.offset = 0.25;
    tm_channel_defaults(TM_KIND_DIRECTION, 0.0, &vane);
    vane.step = 360.0 / 26400.0;
    vane.offset = 0.0;
    for (int i = 0; i < 8; i++)
        for (int c = 0; c < CH; c++) table[i][c] = (tm_reading){TM_READING_COUNTS, 150 + (i * 7 + c) % 23, 0.0};
    if (!run(milli, "C: 8 x speed, counts (cup), record logger", &cup, 0)) return 1;
    if (!run(milli, "C: 8 x speed, counts (cup), state logger", &cup, 1)) return 1;
    for (int i = 0; i < 8; i++)
        for (int c = 0; c < CH; c++) table[i][c] = (tm_reading){TM_READING_COUNTS, 25900 + i * 130 + c * 11, 0.0};
    if (!run(milli, "C: 8 x direction, counts, record logger", &vane, 0)) return 1;
    if (!run(milli, "C: 8 x direction, counts, state logger", &vane, 1)) return 1;
    return 0;
}
