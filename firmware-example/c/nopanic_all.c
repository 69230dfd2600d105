/* Every entry point of the C interface, called with arguments the compiler
 * cannot know (volatile), so that all of them are linked: check.sh links this
 * against the library built with the feature `nopanic`, which proves that no
 * entry point, of any shape, reaches a panic. Run under QEMU it only has to
 * exit; what the calls return is not the point. */
#include <stdint.h>

#include "tenmin_qc.h"

static uint64_t mem[TM_RECORD_LOGGER_C16G12_SIZE / 8 + TM_LAYOUT_C16G12_SIZE / 8];
static uint8_t bytes[512];
static tm_reading readings[16];
static tm_channel_settings channels[16];
static tm_station_settings station;

/* An opaque value: the compiler must assume any. */
static uintptr_t any(uintptr_t v) {
    __asm__ volatile("" : "+r"(v));
    return v;
}
#define P(T, x) ((T)any((uintptr_t)(x)))

int main(void) {
    void *m = P(void *, mem);
    void *l = P(void *, (uint8_t *)mem + TM_RECORD_LOGGER_C16G12_SIZE);
    size_t n = any(2), len = any(sizeof mem);
    uint8_t u8;
    uint32_t u32;
    tm_push_result res;
    tm_push_totals totals;
    tm_recovery rec;
    tm_frame_info info;
    tm_station_defaults(P(tm_station_settings *, &station));
    tm_channel_defaults((uint8_t)any(0), 0.01, P(tm_channel_settings *, channels));
    tm_layout_build_c4g3(l, len, &station, channels, n, &u8);
    tm_layout_build_c8g3(l, len, &station, channels, n, &u8);
    tm_layout_build_c8g12(l, len, &station, channels, n, &u8);
    tm_layout_build_c16g12(l, len, &station, channels, n, &u8);
    tm_record_logger_start_c4g3(m, len, l);
    tm_state_logger_start_c4g3(m, len, l);
    tm_record_logger_start_c8g3(m, len, l);
    tm_state_logger_start_c8g3(m, len, l);
    tm_record_logger_start_c8g12(m, len, l);
    tm_state_logger_start_c8g12(m, len, l);
    tm_record_logger_start_c16g12(m, len, l);
    tm_state_logger_start_c16g12(m, len, l);
    tm_layout_load_c4g3(l, len, P(uint8_t *, bytes), any(sizeof bytes));
    tm_layout_load_c8g3(l, len, P(uint8_t *, bytes), any(sizeof bytes));
    tm_layout_load_c8g12(l, len, P(uint8_t *, bytes), any(sizeof bytes));
    tm_layout_load_c16g12(l, len, P(uint8_t *, bytes), any(sizeof bytes));
    size_t written;
    tm_layout_image(l, P(uint8_t *, bytes), any(sizeof bytes), &written);
    tm_layout_info(l, &u8, &u32);
    tm_logger_push(m, (int64_t)any(1), P(tm_reading *, readings), n, P(uint8_t *, bytes), any(sizeof bytes), &res);
    tm_logger_close(m, P(uint8_t *, bytes), any(sizeof bytes), &res);
    tm_logger_recovery(m, any(0), &rec);
    tm_logger_totals(m, &totals);
    tm_crc32((uint32_t)any(0), P(uint8_t *, bytes), any(4), &u32);
    tm_frame_check(P(uint8_t *, bytes), any(128), &info);
    return *tm_message((int32_t)any(0)) == 'o' ? 0 : 1;
}
