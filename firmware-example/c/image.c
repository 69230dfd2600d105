/* Writes the layout images of the example stations (stations.c) as C
 * source: stored_layouts.c, the stored layouts the loggers built with
 * -DSTORED_LAYOUT load (tm_layout_load_c8g3) instead of building and
 * validating their station at run time. Run on a PC, against the host
 * build of the library:
 *
 *   cc -std=c99 -I ../../qc-core/capi/include image.c stations.c \
 *      path/to/libtenmin_qc.a -lpthread -ldl -lm -o image
 *   ./image > stored_layouts.c
 *
 * This is what a C logger's project does with its own station: build it
 * on the PC with the same C settings as the firmware would, write the
 * image into the firmware's source, and load it there. The test
 * host-cli/tests/c_logger.rs regenerates the file and fails when the
 * committed one differs. */
#include <stdint.h>
#include <stdio.h>

#include "stations.h"
#include "tenmin_qc.h"

static uint64_t layout_mem[TM_LAYOUT_C8G3_SIZE / 8];
static uint8_t image[TM_LAYOUT_IMAGE_MAX_SIZE];

/* Prints the image of the station `build` makes as `const uint8_t NAME[]`. */
static int print(const char *name, tm_status (*build)(void *, size_t)) {
    size_t n = 0;
    if (build(layout_mem, sizeof layout_mem) != TM_OK) return 0;
    tm_status s = tm_layout_image(layout_mem, image, sizeof image, &n);
    if (s != TM_OK) return fprintf(stderr, "image: %s\n", tm_message(s)), 0;
    printf("\nconst uint8_t %s[%lu] = {", name, (unsigned long)n);
    for (size_t i = 0; i < n; i++) printf("%s0x%02x,", i % 12 ? " " : "\n    ", image[i]);
    printf("\n};\n");
    return 1;
}

int main(void) {
    printf("/* Layout images of the example stations (stations.c), shape c8g3:\n"
           " * written by image.c with the library's tm_layout_image; do not edit.\n"
           " * Regenerate: see image.c. */\n"
           "#include \"stored_layouts.h\"\n");
    if (!print("SCENARIO_LAYOUT", scenario_station)) return 1;
    if (!print("DEMO_LAYOUT", demo_station)) return 1;
    return 0;
}
