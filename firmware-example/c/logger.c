/* A minimal logger in C over the tenmin C interface (libtenmin_qc.a).
 *
 * Replays a sample file as `tenmin export` writes it (the replay input of
 * the Rust loggers, firmware-example/src/replay.rs) through the `tenmin
 * demo` station, built at run time from C settings (stations.c), and appends
 * the frames of every closed interval to a log: record frames (the logger
 * finishes on board), or with `states` state frames (a PC finishes them with
 * `tenmin decode --config`).
 *
 *   logger SAMPLES LOG [states]
 *
 * The same source builds for the host (plain cc, stdio) and for Cortex-M
 * under QEMU (arm-none-eabi-gcc, newlib, file I/O through semihosting; see
 * board/). Exit status 0 on success, 1 on any error, said on stderr.
 *
 * Memory: the layout and the logger live in static blocks this program
 * provides (the library allocates nothing), the frames of one interval in a
 * static buffer of DEMO_CHANNELS * TM_FRAME_LEN bytes.
 *
 * Built with -DSTORED_LAYOUT, it loads the station's layout from its image
 * (stored_layouts.c: validated on a PC by image.c, checked and used here by
 * tm_layout_load_c8g3) instead of building it; its logs are the same bytes. */
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "stations.h"
#include "stored_layouts.h"
#include "tenmin_qc.h"

/* Blocks for the library, aligned as it needs (TM_ALIGN = 8). */
static uint64_t layout_mem[TM_LAYOUT_C8G3_SIZE / 8];
static uint64_t logger_mem[TM_RECORD_LOGGER_C8G3_SIZE / 8];
/* One closed interval's frames. */
static uint8_t frames[DEMO_CHANNELS * TM_FRAME_LEN];

/* The sample file, read in chunks of 256 bytes (more than the longest
 * sample frame: 8 + 9 per channel + 4 bytes). */
static struct {
    FILE *f;
    uint8_t buf[256];
    size_t start, filled;
    unsigned long offset;
    int eof;
} in;

static size_t pending(void) { return in.filled - in.start; }

/* Reads until `n` bytes are pending; 0 if the file ends first. */
static int fill(size_t n) {
    while (pending() < n && !in.eof) {
        memmove(in.buf, in.buf + in.start, pending());
        in.filled -= in.start;
        in.start = 0;
        size_t got = fread(in.buf + in.filled, 1, sizeof in.buf - in.filled, in.f);
        if (got == 0) in.eof = 1;
        in.filled += got;
    }
    return pending() >= n;
}

static void consume(size_t n) {
    in.start += n;
    in.offset += n;
}

static uint32_t le32(const uint8_t *p) {
    return (uint32_t)p[0] | (uint32_t)p[1] << 8 | (uint32_t)p[2] << 16 | (uint32_t)p[3] << 24;
}

static uint64_t le64(const uint8_t *p) { return (uint64_t)le32(p) | (uint64_t)le32(p + 4) << 32; }

/* Sample file header (qc-core src/wire/sample.rs, "Sample file"): magic "TMSF",
 * version, channel count at byte 5, header length at 6, the station's
 * settings (which this logger has in C, stations.c, and so only skips),
 * CRC-32 last: checked piece by piece. */
static int read_header(void) {
    if (!fill(56)) return fprintf(stderr, "logger: sample file: truncated header\n"), 0;
    const uint8_t *h = in.buf + in.start;
    if (memcmp(h, "TMSF", 4) != 0) return fprintf(stderr, "logger: not a sample file\n"), 0;
    unsigned channels = h[5];
    size_t len = (size_t)h[6] | (size_t)h[7] << 8;
    if (channels != DEMO_CHANNELS) {
        fprintf(stderr, "logger: the sample file's station has %u channels; this logger's has %d\n",
                channels, DEMO_CHANNELS);
        return 0;
    }
    if (len != 56 + 160 * channels + 4) return fprintf(stderr, "logger: sample file: bad header length\n"), 0;
    uint32_t crc = 0;
    for (size_t left = len - 4; left > 0;) {
        size_t n = left < 128 ? left : 128;
        if (!fill(n)) return fprintf(stderr, "logger: sample file: truncated header\n"), 0;
        tm_crc32(crc, in.buf + in.start, n, &crc);
        consume(n);
        left -= n;
    }
    if (!fill(4) || crc != le32(in.buf + in.start)) {
        return fprintf(stderr, "logger: sample file: header CRC does not match\n"), 0;
    }
    consume(4);
    return 1;
}

/* One sample frame at the start of the pending bytes: 8-byte time (ms),
 * per channel a tag (0 missing, 1 value f64, 2 counts i32, 3 flagged) and
 * its payload, CRC-32 of all that. 1: a sample of `*len` bytes; 0: more
 * bytes needed; -1: a bad frame. */
static int decode_sample(int64_t *t, tm_reading *r, size_t *len) {
    const uint8_t *p = in.buf + in.start;
    size_t n = pending(), at = 8;
    if (n < at) return 0;
    *t = (int64_t)le64(p);
    for (int c = 0; c < DEMO_CHANNELS; c++) {
        if (n < at + 1) return 0;
        uint8_t tag = p[at++];
        r[c].counts = 0;
        r[c].value = 0.0;
        switch (tag) {
        case 0: r[c].kind = TM_READING_MISSING; break;
        case 3: r[c].kind = TM_READING_FLAGGED; break;
        case 1: {
            if (n < at + 8) return 0;
            uint64_t bits = le64(p + at);
            memcpy(&r[c].value, &bits, 8);
            r[c].kind = TM_READING_VALUE;
            at += 8;
            break;
        }
        case 2:
            if (n < at + 4) return 0;
            r[c].counts = (int32_t)le32(p + at);
            r[c].kind = TM_READING_COUNTS;
            at += 4;
            break;
        default: return -1;
        }
    }
    if (n < at + 4) return 0;
    uint32_t crc = 0;
    tm_crc32(0, p, at, &crc);
    if (crc != le32(p + at)) return -1;
    *len = at + 4;
    return 1;
}

static FILE *out;
static unsigned long written;

static int append(const tm_push_result *res) {
    if (res->frames == 0) return 1;
    if (fwrite(frames, TM_FRAME_LEN, res->frames, out) != res->frames) {
        fprintf(stderr, "logger: writing the log failed\n");
        return 0;
    }
    written += res->frames;
    return 1;
}

int main(int argc, char **argv) {
    const char *samples = argc > 1 ? argv[1] : "replay-day.tmsf";
    const char *log = argc > 2 ? argv[2] : "replay-day.log";
    int states = argc > 3 && strcmp(argv[3], "states") == 0;
    if (argc > 3 && !states) return fprintf(stderr, "logger: the third argument can only be `states`\n"), 1;

    /* No stdio buffers (newlib would allocate them on the heap). */
    setvbuf(stdout, NULL, _IONBF, 0);
    setvbuf(stderr, NULL, _IONBF, 0);
    tm_status s;
#ifdef STORED_LAYOUT
    s = tm_layout_load_c8g3(layout_mem, sizeof layout_mem, DEMO_LAYOUT, sizeof DEMO_LAYOUT);
    if (s != TM_OK) return fprintf(stderr, "logger: stored layout: %s\n", tm_message(s)), 1;
#else
    if (demo_station(layout_mem, sizeof layout_mem) != TM_OK) return 1;
#endif
    s = states ? tm_state_logger_start_c8g3(logger_mem, sizeof logger_mem, layout_mem)
                         : tm_record_logger_start_c8g3(logger_mem, sizeof logger_mem, layout_mem);
    if (s != TM_OK) return fprintf(stderr, "logger: %s\n", tm_message(s)), 1;

    in.f = fopen(samples, "rb");
    if (!in.f) return fprintf(stderr, "logger: cannot open %s\n", samples), 1;
    out = fopen(log, "wb");
    if (!out) return fprintf(stderr, "logger: cannot create %s\n", log), 1;
    /* Whole chunks and whole intervals of frames are read and written at a
     * time: no stdio buffers. */
    setvbuf(in.f, NULL, _IONBF, 0);
    setvbuf(out, NULL, _IONBF, 0);
    if (!read_header()) return 1;

    unsigned long samples_read = 0;
    tm_reading readings[DEMO_CHANNELS];
    for (;;) {
        int64_t t;
        size_t len = 0;
        int d = decode_sample(&t, readings, &len);
        if (d < 0) return fprintf(stderr, "logger: sample file, byte %lu: bad sample frame\n", in.offset), 1;
        if (d == 0) {
            if (in.eof) {
                if (pending() == 0) break;
                return fprintf(stderr, "logger: sample file, byte %lu: truncated\n", in.offset), 1;
            }
            fill(pending() + 1);
            continue;
        }
        tm_push_result res;
        s = tm_logger_push(logger_mem, t, readings, DEMO_CHANNELS, frames, sizeof frames, &res);
        if (s != TM_OK) return fprintf(stderr, "logger: %s\n", tm_message(s)), 1;
        if (!append(&res)) return 1;
        samples_read++;
        consume(len);
    }
    tm_push_result res;
    s = tm_logger_close(logger_mem, frames, sizeof frames, &res);
    if (s != TM_OK) return fprintf(stderr, "logger: %s\n", tm_message(s)), 1;
    if (!append(&res)) return 1;
    if (fclose(out) != 0) return fprintf(stderr, "logger: closing the log failed\n"), 1;
    fclose(in.f);

    tm_push_totals totals;
    tm_logger_totals(logger_mem, &totals);
    unsigned long rejected = (unsigned long)(totals.duplicate + totals.backward + totals.closed_interval +
                                             totals.unsupported_time);
    printf("c logger: %d channels, %lu samples (%lu accepted, %lu rejected), %lu %s frames\n",
           DEMO_CHANNELS, samples_read, (unsigned long)totals.accepted, rejected, written,
           states ? "state" : "record");
    if (!states) {
        tm_recovery rec;
        if (tm_logger_recovery(logger_mem, 0, &rec) == TM_OK && rec.since_start.possible > 0) {
            printf("c logger: channel 0 recovery since start %lu of %lu samples\n",
                   (unsigned long)rec.since_start.valid, (unsigned long)rec.since_start.possible);
        }
    }
    return 0;
}
