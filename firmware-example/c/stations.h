/* The stations of the C logger examples, built at run time from C settings
 * structs (tm_channel_settings) into the caller's layout block. */
#ifndef STATIONS_H
#define STATIONS_H

#include <stddef.h>
#include "tenmin_qc.h"

/* Channels of the `tenmin demo` station (ws80a, ws80b, ws60, wd78, t76, rh76). */
#define DEMO_CHANNELS 6
/* Channels of the fixed 8-channel scenario (firmware-example/src/scenario.rs). */
#define SCENARIO_CHANNELS 8

/* Builds the `tenmin demo` station (its station.toml, setting for setting)
 * into `mem`, a layout block of shape c8g3. Returns tm_status; on an error
 * prints why. */
tm_status demo_station(void *mem, size_t len);

/* Builds the scenario station (8 channels, raw counts: cups, vane, ...) into
 * `mem`, a layout block of shape c8g3. */
tm_status scenario_station(void *mem, size_t len);

#endif
