/* Flash footprint of the C interface in a minimal 8-channel logger (the
 * budgets' "flash share"), as the Rust footprint binaries measure it
 * (firmware-example/src/bin/footprint*.rs): a day of the scenario's
 * readings from stand-in sensor registers, one sample a second, frames to a
 * stand-in flash writer; exit status 0 when it wrote the 144 intervals of 8
 * frames.
 *
 *   -DFOOTPRINT_STATES   a state logger (tm_state_logger_start_c8g3)
 *   -DFOOTPRINT_RECORDS  a record logger (tm_record_logger_start_c8g3)
 *   neither              the baseline: the same loop without the library
 *                        (every 600th sample's raw registers copied into a frame)
 *   -DSTORED_LAYOUT      with either logger: the layout loaded from its
 *                        image (stored_layouts.c, validated on a PC) with
 *                        tm_layout_load_c8g3, not built at run time
 *
 * Unlike the Rust loggers', whose layout is validated at compile time into
 * flash, this one builds its layout at run time from C settings (stations.c):
 * the validation is part of its flash. With -DSTORED_LAYOUT it only checks
 * and uses a layout validated on a PC: the image (1,492 B) is in its flash,
 * the validation's code is not. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "stations.h"
#include "stored_layouts.h"
#include "tenmin_qc.h"

#define T0 1705276800000LL /* 2024-01-15T00:00:00Z */

/* Stand-in for a flash write the compiler must assume happens. */
static void flash_write(const uint8_t *frame, size_t len) { __asm__ volatile("" : : "r"(frame), "r"(len) : "memory"); }

#if defined(FOOTPRINT_STATES) || defined(FOOTPRINT_RECORDS)
#define V(x) {TM_READING_VALUE, 0, (x)}
#define K(x) {TM_READING_COUNTS, (x), 0.0}
#define M {TM_READING_MISSING, 0, 0.0}
/* The scenario's readings (shared/footprint_day.rs), cycled. */
static const tm_reading REGISTERS[4][SCENARIO_CHANNELS] = {
    {K(151), K(149), V(6.52), K(25930), V(1.51), V(88.2), V(1012.4), V(12.61)},
    {K(163), K(160), V(6.91), K(26010), V(1.52), V(88.3), V(1012.4), V(12.61)},
    {K(140), M, V(6.07), K(120), V(1.52), V(88.1), V(1012.5), V(12.60)},
    {K(157), K(155), V(-999.0), K(25880), V(1.53), V(88.0), V(1012.5), V(12.60)},
};

static uint64_t layout_mem[TM_LAYOUT_C8G3_SIZE / 8];
#ifdef FOOTPRINT_STATES
static uint64_t logger_mem[TM_STATE_LOGGER_C8G3_SIZE / 8];
#define START tm_state_logger_start_c8g3
#else
static uint64_t logger_mem[TM_RECORD_LOGGER_C8G3_SIZE / 8];
#define START tm_record_logger_start_c8g3
#endif
static uint8_t frames[SCENARIO_CHANNELS * TM_FRAME_LEN];

int main(void) {
#ifdef STORED_LAYOUT
    if (tm_layout_load_c8g3(layout_mem, sizeof layout_mem, SCENARIO_LAYOUT, sizeof SCENARIO_LAYOUT) != TM_OK)
        return 1;
#else
    if (scenario_station(layout_mem, sizeof layout_mem) != TM_OK) return 1;
#endif
    if (START(logger_mem, sizeof logger_mem, layout_mem) != TM_OK) return 1;
    uint32_t written = 0;
    volatile uint32_t n = 86400;
    tm_push_result res;
    for (uint32_t i = 0; i < n; i++) {
        const tm_reading *r = REGISTERS[i & 3];
        __asm__ volatile("" : "+r"(r));
        if (tm_logger_push(logger_mem, T0 + (int64_t)i * 1000, r, SCENARIO_CHANNELS, frames, sizeof frames, &res) !=
            TM_OK)
            return 1;
        flash_write(frames, res.frames * TM_FRAME_LEN);
        written += res.frames;
    }
    if (tm_logger_close(logger_mem, frames, sizeof frames, &res) != TM_OK) return 1;
    flash_write(frames, res.frames * TM_FRAME_LEN);
    written += res.frames;
    return written == 144 * SCENARIO_CHANNELS ? 0 : 1;
}
#else
/* Stand-in sensor registers (raw 32-bit words). */
static const uint32_t REGISTERS[4][SCENARIO_CHANNELS] = {
    {151, 149, 652, 25930, 151, 882, 10124, 1261},
    {163, 160, 691, 26010, 152, 883, 10124, 1261},
    {140, 0, 607, 120, 152, 881, 10125, 1260},
    {157, 155, 0, 25880, 153, 880, 10125, 1260},
};

int main(void) {
    uint8_t frame[TM_FRAME_LEN] = {0};
    uint32_t written = 0;
    volatile uint32_t n = 86400;
    for (uint32_t i = 0; i < n; i++) {
        int64_t t = T0 + (int64_t)i * 1000;
        const uint32_t *r = REGISTERS[i & 3];
        __asm__ volatile("" : "+r"(r));
        if (i % 600 == 599) {
            for (int c = 0; c < SCENARIO_CHANNELS; c++) {
                memcpy(frame, &t, 8);
                memcpy(frame + 8 + 4 * c, &r[c], 4);
                flash_write(frame, sizeof frame);
                written++;
            }
        }
    }
    return written == 144 * SCENARIO_CHANNELS ? 0 : 1;
}
#endif
