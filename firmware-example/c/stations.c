/* The stations of the C logger examples: C settings structs, validated by
 * tm_layout_build_c8g3 into the caller's memory. */
#include <stdio.h>

#include "stations.h"

/* Prints why a station was refused (not in the footprint builds, which
 * define STATIONS_QUIET: a minimal logger as the Rust footprint binaries). */
static tm_status report(tm_status s, uint8_t channel) {
#ifdef STATIONS_QUIET
    (void)channel;
#else
    if (s != TM_OK) {
        if (channel != 255) {
            fprintf(stderr, "station refused: channel %u: %s\n", channel, tm_message(s));
        } else {
            fprintf(stderr, "station refused: %s\n", tm_message(s));
        }
    }
#endif
    return s;
}

/* A channel of `kind` with the defaults of its kind at `resolution`. */
static tm_channel_settings channel(uint8_t kind, double resolution) {
    tm_channel_settings c;
    tm_channel_defaults(kind, resolution, &c);
    return c;
}

tm_status demo_station(void *mem, size_t len) {
    /* host-cli/src/demo.rs, STATION_TOML: 10-minute intervals at 1 Hz,
     * missing-value codes -999 and -9999 (the defaults). */
    tm_station_settings station;
    tm_station_defaults(&station);
    tm_channel_settings ch[DEMO_CHANNELS];
    /* ws80a: cup at 80 m, 0.01 m/s, 0 to 75 m/s, 3 s gust; screened against
     * its partner ws80b, icing watched with t76 and rh76. */
    ch[0] = channel(TM_KIND_SPEED, 0.01);
    ch[0].range_low = 0.0;
    ch[0].range_high = 75.0;
    ch[0].gust_window = 3;
    ch[0].screen.partner = 1;
    ch[0].screen.icing_temperature = 4;
    ch[0].screen.icing_humidity = 5;
    /* ws80b: the redundant cup. */
    ch[1] = channel(TM_KIND_SPEED, 0.01);
    ch[1].range_low = 0.0;
    ch[1].range_high = 75.0;
    ch[1].gust_window = 3;
    /* ws60: cup at 60 m, shear test against ws80a. */
    ch[2] = channel(TM_KIND_SPEED, 0.01);
    ch[2].range_low = 0.0;
    ch[2].range_high = 75.0;
    ch[2].screen.above = 0;
    /* wd78: vane in raw counts of 0.1 degree, mounted 4 degrees off north,
     * resultant weighted by ws80a, icing watched. */
    ch[3] = channel(TM_KIND_DIRECTION, 0.0);
    ch[3].step = 0.1;
    ch[3].offset = 0.0;
    ch[3].mounting_offset_deg = 4.0;
    ch[3].speed_channel = 0;
    ch[3].screen.icing_temperature = 4;
    ch[3].screen.icing_humidity = 5;
    /* t76: air temperature, 0.1 C, -40 to 50 C. */
    ch[4] = channel(TM_KIND_SCALAR, 0.1);
    ch[4].range_low = -40.0;
    ch[4].range_high = 50.0;
    /* rh76: relative humidity, 0.1 %, 0 to 100 %. */
    ch[5] = channel(TM_KIND_SCALAR, 0.1);
    ch[5].range_low = 0.0;
    ch[5].range_high = 100.0;
    uint8_t bad = 255;
    return report(tm_layout_build_c8g3(mem, len, &station, ch, DEMO_CHANNELS, &bad), bad);
}

tm_status scenario_station(void *mem, size_t len) {
    /* firmware-example/src/scenario.rs (invented calibrations). */
    tm_station_settings station;
    tm_station_defaults(&station);
    tm_channel_settings ch[SCENARIO_CHANNELS];
    for (int i = 0; i < 2; i++) {
        /* Cups A and B: pulse counts, 0.25 + 0.049 * counts m/s, partners. */
        ch[i] = channel(TM_KIND_SPEED, 1.0);
        ch[i].step = 0.049;
        ch[i].offset = 0.25;
        ch[i].screen.partner = (int16_t)(1 - i);
        ch[i].screen.icing_temperature = 4;
        ch[i].screen.icing_humidity = 5;
    }
    ch[2] = channel(TM_KIND_SPEED, 0.01);
    ch[2].screen.above = 0;
    ch[3] = channel(TM_KIND_DIRECTION, 0.0);
    ch[3].step = 360.0 / 26400.0;
    ch[3].speed_channel = 0;
    ch[3].screen.icing_temperature = 4;
    ch[3].screen.icing_humidity = 5;
    ch[4] = channel(TM_KIND_SCALAR, 0.01);
    ch[4].range_low = -40.0;
    ch[4].range_high = 60.0;
    ch[5] = channel(TM_KIND_SCALAR, 0.1);
    ch[5].range_low = 0.0;
    ch[5].range_high = 100.0;
    ch[6] = channel(TM_KIND_SCALAR, 0.1);
    ch[6].range_low = 500.0;
    ch[6].range_high = 1100.0;
    ch[7] = channel(TM_KIND_SCALAR, 0.001);
    ch[7].range_low = 0.0;
    ch[7].range_high = 20.0;
    uint8_t bad = 255;
    return report(tm_layout_build_c8g3(mem, len, &station, ch, SCENARIO_CHANNELS, &bad), bad);
}
