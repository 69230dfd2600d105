/* Layout images of the example stations (stored_layouts.c, written by
 * image.c): validated on a PC, loaded by a logger with tm_layout_load_c8g3,
 * which only checks them (format, version, shape, CRC-32) and uses them. */
#ifndef STORED_LAYOUTS_H
#define STORED_LAYOUTS_H

#include <stdint.h>

/* The scenario station (scenario_station in stations.c). */
extern const uint8_t SCENARIO_LAYOUT[1492];
/* The `tenmin demo` station (demo_station in stations.c). */
extern const uint8_t DEMO_LAYOUT[1497];

#endif
