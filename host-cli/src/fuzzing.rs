//! The bodies of the fuzz targets (`host-cli/fuzz/`), here so that an ordinary
//! test (`tests/fuzz_corpus.rs`) replays every committed corpus input through
//! the same code on stable Rust.
//!
//! Each function takes any bytes, feeds them through the real reader (written
//! to a scratch file when the reader takes paths), and asserts what must hold
//! for every input: it returns (no panic, no hang), an error is an `Err` whose
//! message names the file, and every sample is accounted for where samples can
//! be counted. Where two paths must agree (sequential and parallel replay, a
//! log read whole and in pieces, a frame decoded and encoded again) they are
//! compared. A failed assertion is a crash for the fuzzer and a failed test for
//! the corpus replay.
//!
//! | function | reader |
//! |---|---|
//! | [`samples`] | samples CSV through `tenmin replay` (one thread and two, strict and `--skip-bad-rows`), and through `tenmin export` and a core station of the firmware's size, whose records must be the replay's |
//! | [`layouts`] | a field file of a declared layout ([`LAYOUTS`]): each row read in one pass and the general way alike, the file replayed and exported as [`samples`] |
//! | [`columnar`] | a Parquet or Arrow IPC file as samples through `tenmin replay` and as records |
//! | [`draft`] | a field file through `tenmin draft`, and the draft, when it loads, replaying it |
//! | [`station`] | station file (TOML), the engine it builds, its sample-file header |
//! | [`records`] | records CSV through `tenmin report` and `tenmin verify` |
//! | [`frames`] | `qc_core::wire`: record frames, state frames, a sample file (header and sample frames) replayed through a core station |
//! | [`logscan`] | a logger's log: the core's scanner whole and in pieces, and `tenmin decode` |
//! | [`campaign`] | the campaign's side files (sensor history, exclusions, events) through replay, `verify` of the records written and `report` |
//! | [`table`] | another logger's table and its `[logger_table]`/`[conventions]` through `tenmin verify` and `--infer` |
//! | [`image`] | `qc_core::Layout::load_image` (a layout image, as a logger keeps it in flash), and a core station on the layout it loads |
//!
//! Inputs with bytes that fail a CRC reach little beyond the check, so
//! [`frames`], [`logscan`] and [`image`] also try a copy with every CRC made right.

use std::cell::RefCell;
use std::fs;
use std::io::{self, Read};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use anyhow::Result;
use qc_core::wire::{
    self, crc32, decode_record, decode_state, encode_record, encode_sample, encode_sample_header,
    encode_state, sample_header_len, SampleReader, Span, FRAME_LEN, SYNC,
};
use qc_core::{
    config_fingerprint, ChannelConfig, ChannelRecord, Event, IntervalAcc, Layout, Station,
    Timestamp,
};

use crate::config::{self, Decode, StationFile};
use crate::engine::{self, Sink};
use crate::records::{write_header, write_row};
use crate::samples::{one_pass_against_general, Options, Parser};
use crate::summary::Summary;
use crate::{decode, export, replay, report, verify};

/// The station every target but [`station`] reads with: the `tenmin demo`
/// station (a copy, so that the corpus keeps its meaning if the demo
/// changes): three anemometers with a partner and a shear pair, a vane read as
/// raw counts with a mounting offset and a speed link, temperature and
/// humidity with icing tests.
pub const STATION: &str = r#"[logging]
interval_s = 600
sample_rate_hz = 1
missing_values = [-999, -9999]

[station]
name = "fuzz"

[[channel]]
id = "ws80a"
kind = "speed"
range = [0, 75]
resolution = 0.01
gust_window_s = 3

[channel.screen]
partner = "ws80b"
icing = { temperature = "t76", humidity = "rh76" }

[[channel]]
id = "ws80b"
kind = "speed"
range = [0, 75]
resolution = 0.01
gust_window_s = 3

[[channel]]
id = "ws60"
kind = "speed"
range = [0, 75]
resolution = 0.01

[channel.screen]
above = "ws80a"

[[channel]]
id = "wd78"
kind = "direction"
slope = 0.1
offset_deg = 4
speed_channel = "ws80a"

[channel.screen]
icing = { temperature = "t76", humidity = "rh76" }

[[channel]]
id = "t76"
kind = "scalar"
range = [-40, 50]
resolution = 0.1

[[channel]]
id = "rh76"
kind = "scalar"
range = [0, 100]
resolution = 0.1
"#;

/// `--max-gap-days` of the targets: small, so that a clock jump in an input
/// does not write a year of empty rows (the check itself is still reached).
const MAX_GAP_DAYS: u32 = 2;

/// A folder of scratch files for one thread, removed when the thread ends.
struct Scratch(PathBuf);

impl Scratch {
    fn new() -> Self {
        static NEXT: AtomicU64 = AtomicU64::new(0);
        let dir = std::env::temp_dir().join(format!(
            "tenmin-fuzz-{}-{}",
            std::process::id(),
            NEXT.fetch_add(1, Ordering::Relaxed)
        ));
        fs::create_dir_all(&dir).expect("create a scratch folder for the fuzz target");
        Scratch(dir)
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = fs::remove_dir_all(&self.0);
    }
}

thread_local! {
    static SCRATCH: RefCell<Option<Scratch>> = const { RefCell::new(None) };
}

/// Writes `bytes` to the scratch file `name` and returns its path.
fn scratch(name: &str, bytes: &[u8]) -> PathBuf {
    let dir = SCRATCH.with(|s| s.borrow_mut().get_or_insert_with(Scratch::new).0.clone());
    let path = dir.join(name);
    fs::write(&path, bytes).expect("write a scratch file for the fuzz target");
    path
}

/// The [`STATION`], read from a scratch file as `tenmin` reads it.
fn station_file() -> StationFile {
    let path = scratch("station.toml", STATION.as_bytes());
    config::load(&path).expect("the fuzz station file reads")
}

/// Asserts that an error message names `path` (the contract: errors name the
/// place).
fn names(e: &anyhow::Error, path: &Path) {
    let msg = format!("{e:#}");
    let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
    assert!(
        msg.contains(name),
        "the error does not name the file {name}: {msg}"
    );
}

/// A sink keeping the rows as records CSV and, per channel, the samples the
/// rows count.
struct Rows {
    ids: Vec<String>,
    csv: Vec<u8>,
    rows: u64,
    held: Vec<u64>,
}

impl Rows {
    fn new(cfg: &StationFile) -> Self {
        let mut csv = Vec::new();
        let _ = write_header(&mut csv);
        Rows {
            ids: cfg.channels.iter().map(|c| c.id.clone()).collect(),
            csv,
            rows: 0,
            held: vec![0; cfg.channels.len()],
        }
    }
}

/// Samples a record counts: valid, missing, out of range, rejected, flagged
/// (a quality code) and excluded ([`qc_core::Tally::total`]).
fn held(r: &ChannelRecord) -> u64 {
    r.tally.total()
}

impl Sink for Rows {
    fn interval(
        &mut self,
        start: Timestamp,
        end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()> {
        assert!(end > start, "an interval ends before it starts");
        for (i, (id, r)) in self.ids.iter().zip(records).enumerate() {
            write_row(&mut self.csv, start, end, (id, i), r, None)?;
            self.rows += 1;
            self.held[i] += held(r);
        }
        Ok(())
    }
}

/// Every row is accepted, rejected or bad; every pushed sample is in one
/// counter of every channel's rows, or unplaced.
fn accounted(s: &Summary, rows: &Rows) {
    assert_eq!(
        s.rows_accounted(),
        s.input.rows,
        "rows read are not all accounted for: {s:?}"
    );
    assert_eq!(
        s.record_rows, rows.rows,
        "record rows counted twice or lost"
    );
    for (i, h) in rows.held.iter().enumerate() {
        assert_eq!(
            h + s.pushed.unplaced,
            s.pushed.pushed(),
            "channel {i}: {h} samples in its rows and {} unplaced, {} pushed",
            s.pushed.unplaced,
            s.pushed.pushed()
        );
    }
}

fn replay_rows(cfg: &StationFile, path: &Path, opts: Options) -> Result<(Summary, Rows)> {
    let mut rows = Rows::new(cfg);
    let s = replay::replay(cfg, &[path.to_path_buf()], opts, &mut rows)?;
    Ok((s, rows))
}

/// Samples CSV: each row read in one pass as the general way reads it, and
/// `tenmin replay` on one thread, strict and with `--skip-bad-rows`, and on
/// two threads in 64-byte chunks with `--skip-bad-rows` ([`replays_agree`]).
pub fn samples(data: &[u8]) {
    let cfg = station_file();
    // Its rows read straight and by the column plan as the general way reads
    // them ([`one_pass_against_general`]), after a header that reads.
    if let Some(at) = data.iter().position(|&b| b == b'\n') {
        let header = data[..at].strip_suffix(b"\r").unwrap_or(&data[..at]);
        let fields = header.split(|&b| b == b',');
        if let Ok(parser) = Parser::new(Path::new("samples.csv"), 1, fields, &cfg) {
            one_pass_against_general(&parser, &data[at + 1..]);
        }
    }
    let path = scratch("samples.csv", data);
    let lenient = replays_agree(&cfg, &path);
    logger_agrees(&cfg, &path, lenient.as_ref());
}

/// The samples as a logger receives them: `tenmin export` of `path` (with
/// `--skip-bad-rows`) into memory, and its sample frames through a core
/// station of the example firmware's size ([`SAMPLE_C`] channels, a gust
/// capacity of [`SAMPLE_G`] samples), one sample at a time, as the firmware's
/// replay loop pushes them. The records it closes, and those of the empty
/// intervals of its gaps, must be the replay's (`replayed`: its records with
/// `--skip-bad-rows`) byte for byte; the export fails where that replay does.
fn logger_agrees(cfg: &StationFile, path: &Path, replayed: Result<&Rows, &anyhow::Error>) {
    let opts = Options {
        max_gap_days: MAX_GAP_DAYS,
        skip_bad_rows: true,
        ..Options::default()
    };
    let mut file = Vec::new();
    let exported = export::export(cfg, &[path.to_path_buf()], opts, &mut file);
    let rows = match (exported, replayed) {
        (Ok(_), Ok(rows)) => rows,
        (Err(_), Err(_)) => return,
        (a, b) => panic!(
            "export and replay disagree: {:?} and {:?}",
            a.err(),
            b.err()
        ),
    };
    let reader = SampleReader::<SAMPLE_C>::new(&file).expect("a sample file tenmin wrote reads");
    let h = *reader.header();
    let n = h.count();
    let Ok(layout) = Layout::<SAMPLE_C>::new::<SAMPLE_G>(h.station, &h.channels) else {
        // A station the firmware's size cannot hold (gust windows longer
        // than its capacity).
        return;
    };
    let mut station = Box::new(Station::<SAMPLE_C, SAMPLE_G>::new(layout));
    let mut csv = Vec::new();
    let _ = write_header(&mut csv);
    let mut row = |index: i64, records: &[ChannelRecord]| {
        let start = layout.interval_start(index);
        let end = layout.interval_start(index.saturating_add(1));
        for (i, (id, r)) in rows.ids.iter().zip(records).enumerate() {
            write_row(&mut csv, start, end, (id, i), r, None).expect("writing to memory");
        }
    };
    let mut emit = |e: Event<'_, SAMPLE_C, SAMPLE_G>| match e {
        Event::Closed(acc, records) => row(acc.index(), &records[..n]),
        Event::Gap(gap) => {
            for k in 0..gap.count {
                let index = gap.first.saturating_add(k as i64);
                let acc = IntervalAcc::<SAMPLE_C, SAMPLE_G>::new(&layout, index);
                let records: Vec<ChannelRecord> =
                    (0..n).filter_map(|i| layout.finish(&acc, i)).collect();
                row(index, &records);
            }
        }
    };
    for sample in reader {
        let (t, readings) = sample.expect("a sample frame tenmin wrote reads");
        station.push(t, &readings, &mut emit);
    }
    station.close(&mut emit);
    assert!(
        csv == rows.csv,
        "the firmware-sized station's records differ from the replay's:\n{}\n---\n{}",
        String::from_utf8_lossy(&csv),
        String::from_utf8_lossy(&rows.csv)
    );
}

/// `path` replayed with `cfg` on one thread, strict and with
/// `--skip-bad-rows`, and on two threads in 64-byte chunks with
/// `--skip-bad-rows`: every row and sample accounted for, errors naming the
/// file, one thread and two alike, and the strict read's records those of
/// `--skip-bad-rows` when it reads the file.
fn replays_agree(cfg: &StationFile, path: &Path) -> Result<Rows> {
    let base = Options {
        max_gap_days: MAX_GAP_DAYS,
        ..Options::default()
    };
    let strict = replay_rows(cfg, path, base);
    let skip = Options {
        skip_bad_rows: true,
        ..base
    };
    let lenient = replay_rows(cfg, path, skip);
    let parallel = replay_rows(
        cfg,
        path,
        Options {
            jobs: 2,
            chunk_size: 64,
            ..skip
        },
    );
    for r in [&strict, &lenient, &parallel] {
        match r {
            Ok((s, rows)) => accounted(s, rows),
            Err(e) => names(e, path),
        }
    }
    match (&lenient, &parallel) {
        (Ok((a, ra)), Ok((b, rb))) => {
            assert!(
                ra.csv == rb.csv,
                "one thread and two write different records"
            );
            assert_eq!(a.pushed, b.pushed, "one thread and two push differently");
            assert_eq!(a.input.rows, b.input.rows);
            assert_eq!(a.input.bad, b.input.bad);
        }
        (Err(a), Err(b)) => assert_eq!(format!("{a:#}"), format!("{b:#}")),
        (a, b) => panic!(
            "one thread and two disagree: {:?} and {:?}",
            a.as_ref().err(),
            b.as_ref().err()
        ),
    }
    if let Ok((s, rows)) = &strict {
        let (l, lrows) = lenient
            .as_ref()
            .expect("--skip-bad-rows refuses what the strict read takes");
        assert_eq!(l.input.bad.total(), 0, "bad rows the strict read took");
        assert!(
            rows.csv == lrows.csv,
            "--skip-bad-rows changes good records"
        );
        assert_eq!(s.pushed, l.pushed);
    }
    lenient.map(|(_, rows)| rows)
}

/// A declared layout of the target [`layouts`]: its station file, the lines
/// before the data rows, the header's fields, and a good data row.
pub struct FieldLayout {
    /// What the layout exercises.
    pub name: &'static str,
    /// The station file (TOML).
    pub toml: &'static str,
    /// The file's lines before its data rows (skipped lines, header, units).
    pub preamble: &'static str,
    /// The header's fields, as the reader splits them (none without one).
    pub header: &'static [&'static str],
    /// A data row the layout reads, for the seeds.
    pub row: &'static str,
}

/// The layouts of [`layouts`], each an invented station: between them every
/// one-pass reader (the column plan, the straight loop with one time column,
/// several, a quality code after each reading, a filter's column first,
/// whitespace) and the features around them (decimal comma, units line,
/// missing-value texts, quality codes, a filter first, last and by position,
/// fixed offsets and a zone with daylight saving, end labels, epoch
/// milliseconds, comments, converted units).
pub const LAYOUTS: [FieldLayout; 8] = [
    FieldLayout {
        name: "semicolons, decimal comma, units line, columns out of order, a quality code",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 0"
[input]
delimiter = ";"
decimal = ","
units_line = true
missing = ["NAN", "-99,9"]
[input.time]
column = "Zeit"
format = "%d.%m.%Y %H:%M:%S"
zone = "+01:00"
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
range = [0, 75]
column = "WG"
quality = { column = "Q", good = ["0"] }
[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"
column = "WR"
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
column = "T"
"##,
        preamble: "Zeit;T;WR;WG;Q\n;degC;0.1 deg;m/s;\n",
        header: &["Zeit", "T", "WR", "WG", "Q"],
        row: "20.01.2025 10:00:01;1,5;2710;5,12;0",
    },
    FieldLayout {
        name: "commas, RFC 3339 times first, the channels in order (the straight loop)",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 1"
[input]
missing = ["NA"]
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
range = [0, 75]
[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
"##,
        preamble: "time,ws,wd,t\n",
        header: &["time", "ws", "wd", "t"],
        row: "2025-01-20T10:00:01Z,5.12,2710,1.5",
    },
    FieldLayout {
        name: "a station column first (a filter), a zone with daylight saving",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 2"
[input]
filter = { column = "mast", value = "M1" }
[input.time]
column = "time"
format = "%Y-%m-%d %H:%M:%S"
zone = "Europe/Berlin"
repeated = "earlier"
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
range = [0, 75]
[[channel]]
id = "wd"
kind = "direction"
speed_channel = "ws"
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
"##,
        preamble: "mast,time,ws,wd,t\n",
        header: &["mast", "time", "ws", "wd", "t"],
        row: "M1,2025-03-30 01:59:59,5.1,271.5,1.5",
    },
    FieldLayout {
        name: "no header, a date and a clock column, a filter last, km/h",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 3"
[input]
header = false
filter = { column = 6, value = "M1" }
[input.time]
columns = [1, 2]
format = "%Y-%m-%d %H:%M:%S"
[[channel]]
id = "ws"
kind = "speed"
unit = "m/s"
resolution = 0.01
range = [0, 75]
column = 3
source_unit = "km/h"
[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"
column = 4
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
column = 5
"##,
        preamble: "",
        header: &[],
        row: "2025-01-20,10:00:01,18.4,2710,1.5,M1",
    },
    FieldLayout {
        name: "whitespace, a skipped line, five time columns, quality codes, a text missing code",
        toml: r##"[logging]
sample_period_s = 60
[station]
name = "fuzz layout 4"
[input]
delimiter = "whitespace"
skip_lines = 1
header = false
missing = ["-9999.9"]
[input.time]
columns = [1, 2, 3, 4, 5]
format = "%Y %m %d %H %M"
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.1
range = [0, 75]
column = 6
quality = { column = 7, good = ["0"] }
[[channel]]
id = "wd"
kind = "direction"
speed_channel = "ws"
column = 8
quality = { column = 9, good = ["0"] }
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
column = 10
"##,
        preamble: "an invented network station 37.1 -105.9 2317\n",
        header: &[],
        row: " 2025  1 20 10  1    5.1 0  271.0 0   -1.5",
    },
    FieldLayout {
        name: "tabs, epoch milliseconds first, a comment, degrees F",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 5"
[input]
delimiter = "tab"
comment = "#"
[input.time]
column = "ts"
epoch = "ms"
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
range = [0, 75]
[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"
[[channel]]
id = "t"
kind = "scalar"
unit = "degC"
resolution = 0.01
range = [-40, 50]
source_unit = "degF"
"##,
        preamble: "# an invented logger, firmware 0.0\nts\tws\twd\tt\n",
        header: &["ts", "ws", "wd", "t"],
        row: "1737367201000\t5.12\t2710\t34.7",
    },
    FieldLayout {
        name: "semicolons, a quality code right after each reading, stamps at the period's end",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 6"
[input]
delimiter = ";"
[input.time]
column = "time"
format = "%Y-%m-%dT%H:%M:%S"
label = "end"
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
range = [0, 75]
quality = { column = "ws_q", good = ["0", "1"] }
[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"
quality = { column = "wd_q", good = ["0"] }
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
"##,
        preamble: "time;ws;ws_q;wd;wd_q;t\n",
        header: &["time", "ws", "ws_q", "wd", "wd_q", "t"],
        row: "2025-01-20T10:00:01;5.1;0;2710;0;1.5",
    },
    FieldLayout {
        name: "whitespace, no header, a station column first by position",
        toml: r##"[logging]
sample_rate_hz = 1
[station]
name = "fuzz layout 7"
[input]
delimiter = "whitespace"
header = false
filter = { column = 1, value = "M1" }
missing = ["NA"]
[input.time]
columns = [2, 3]
format = "%Y-%m-%d %H:%M:%S"
[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
range = [0, 75]
column = 4
[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"
column = 5
[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]
column = 6
"##,
        preamble: "",
        header: &[],
        row: "M1 2025-01-20 10:00:01 5.12 2710 1.5",
    },
];

/// A field file of a declared layout ([`LAYOUTS`], picked by the first byte;
/// the rest are its data rows after the layout's preamble): each row read in
/// one pass and the general way alike ([`crate::samples::one_pass_against_general`]),
/// and the whole file through `tenmin replay` as in [`samples`].
pub fn layouts(data: &[u8]) {
    let Some((&pick, rows)) = data.split_first() else {
        return;
    };
    let layout = &LAYOUTS[usize::from(pick) % LAYOUTS.len()];
    let cfg = config::load(&scratch("layout.toml", layout.toml.as_bytes()))
        .unwrap_or_else(|e| panic!("{}: the layout reads: {e:#}", layout.name));
    let header_line = layout.preamble.lines().count() as u64;
    let parser = Parser::new(
        Path::new("layout.txt"),
        header_line,
        layout.header.iter().map(|f| f.as_bytes()),
        &cfg,
    )
    .unwrap_or_else(|e| panic!("{}: the header reads: {e:#}", layout.name));
    one_pass_against_general(&parser, rows);
    let mut file = layout.preamble.as_bytes().to_vec();
    file.extend_from_slice(rows);
    let path = scratch("layout.txt", &file);
    let lenient = replays_agree(&cfg, &path);
    logger_agrees(&cfg, &path, lenient.as_ref());
}

/// A field file through `tenmin draft`: a draft or an error naming the file;
/// a draft that loads as a station file (one that needs no edit first)
/// replays the same file with `--skip-bad-rows` as [`samples`] checks a
/// replay: every row and sample accounted for, or an error naming the file.
pub fn draft(data: &[u8]) {
    let name = "field.txt";
    let drafted =
        crate::draft::sniff_bytes(name, data).and_then(|sniff| crate::draft::draft(name, &sniff));
    let d = match drafted {
        Ok(d) => d,
        Err(e) => return names(&e, Path::new(name)),
    };
    let Ok(cfg) = config::load(&scratch("draft.toml", d.text.as_bytes())) else {
        return;
    };
    let path = scratch(name, data);
    let opts = Options {
        max_gap_days: MAX_GAP_DAYS,
        skip_bad_rows: true,
        allow_no_records: true,
        ..Options::default()
    };
    match replay_rows(&cfg, &path, opts) {
        Ok((s, rows)) => accounted(&s, &rows),
        Err(e) => names(&e, &path),
    }
}

/// For a fuzz target's start: the panic hook installed so far (libFuzzer's,
/// which aborts on any panic) is skipped for a panic that
/// [`crate::columnar`] catches in the decoding crates and turns into an
/// error naming the file, as `tenmin`'s own hook skips it; any other panic
/// still aborts.
pub fn let_guarded_panics_unwind() {
    let hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if !crate::columnar::in_guarded_decoding() {
            hook(info);
        }
    }));
}

/// Columnar files: the first byte picks the name's extension (`.parquet` or
/// `.arrow`, Arrow's file or stream format told apart by the bytes), the rest
/// is the file. Read as samples through `tenmin replay` (strict and
/// `--skip-bad-rows`: every row and sample accounted for, errors naming the
/// file) and as a records file (the reader of `tenmin report` and `verify`):
/// rows or an error, never a panic and never unbounded memory (the fuzzer's
/// memory limit).
pub fn columnar(data: &[u8]) {
    let Some((&pick, bytes)) = data.split_first() else {
        return;
    };
    let ext = ["parquet", "arrow"][usize::from(pick) % 2];
    let cfg = station_file();
    let path = scratch(&format!("samples.{ext}"), bytes);
    let base = Options {
        max_gap_days: MAX_GAP_DAYS,
        ..Options::default()
    };
    for skip_bad_rows in [false, true] {
        match replay_rows(
            &cfg,
            &path,
            Options {
                skip_bad_rows,
                ..base
            },
        ) {
            Ok((s, rows)) => accounted(&s, &rows),
            Err(e) => names(&e, &path),
        }
    }
    let mut csv = Vec::new();
    if let Err(e) = crate::columnar::records_to_csv(&path, &mut csv) {
        names(&e, &path);
    }
}

/// One sample of every channel, as the samples reader hands it to the core.
fn readings(cfg: &StationFile, i: i32) -> Vec<qc_core::Reading> {
    cfg.channels
        .iter()
        .map(|c| match (c.decode, i % 5) {
            (_, 4) => qc_core::Reading::Missing,
            (Decode::Counts, _) => qc_core::Reading::Counts(i * 37 - 50),
            (Decode::Value, _) => qc_core::Reading::Value(f64::from(i) * 0.73 - 1.5),
        })
        .collect()
}

/// Station file: `config::load`; for a file that reads, the engine it builds
/// (a few samples across an interval boundary, every one accounted for), and
/// its sample file header, which must read back to the same configuration.
pub fn station(data: &[u8]) {
    let path = scratch("station.toml", data);
    let cfg = match config::load(&path) {
        Ok(cfg) => cfg,
        Err(e) => return names(&e, &path),
    };
    let mut rows = Rows::new(&cfg);
    let pushed = match engine::new(&cfg, &mut rows) {
        Err(e) => return names(&e, &path),
        Ok(mut engine) => {
            let t0 = 1_737_331_200_000i64 - 3_000;
            for i in 0..12 {
                let t = Timestamp::from_millis(t0 + i64::from(i) * 997);
                engine
                    .push(t, &readings(&cfg, i))
                    .expect("the rows sink does not fail");
            }
            engine.close().expect("the rows sink does not fail");
            engine.totals()
        }
    };
    for (i, h) in rows.held.iter().enumerate() {
        assert_eq!(
            h + pushed.unplaced,
            pushed.pushed(),
            "channel {i} lost samples"
        );
    }
    let cores: Vec<ChannelConfig> = cfg.channels.iter().map(|c| c.core).collect();
    match export::header(&cfg) {
        Err(e) => names(&e, &path),
        Ok(head) => {
            let h = wire::decode_sample_header::<{ config::MAX_CHANNELS }>(&head)
                .expect("a header tenmin writes reads back");
            assert_eq!(h.encoded_len(), head.len());
            assert_eq!(
                config_fingerprint(&h.station, h.configs()),
                config_fingerprint(&cfg.station, &cores),
                "the header carries another configuration"
            );
            let mut again = vec![0u8; head.len()];
            encode_sample_header(&h.station, h.configs(), &mut again)
                .expect("a header that reads writes again");
            assert!(again == head, "a configuration with two encodings");
        }
    }
}

/// A samples file for [`records`]' `tenmin verify`: an hour at one sample in
/// ten seconds, with a missing reading and a duplicate time.
fn verify_samples() -> Vec<u8> {
    let mut s = String::from("time,ws80a,ws80b,ws60,wd78,t76,rh76\n");
    for i in 0..360i64 {
        let t = 1_737_331_200 + i * 10;
        let ws = 5.0 + (i % 17) as f64 * 0.13;
        let t76 = if i == 40 {
            String::new()
        } else {
            format!("{:.1}", 2.0 + (i % 7) as f64 * 0.1)
        };
        s.push_str(&format!(
            "{t},{ws:.2},{:.2},{:.2},{},{t76},{:.1}\n",
            ws - 0.02,
            ws * 0.9,
            2_400 + (i * 53) % 900,
            80.0 + (i % 11) as f64
        ));
        if i == 100 {
            s.push_str(&format!("{t},1,1,1,1,1,1\n"));
        }
    }
    s.into_bytes()
}

/// `tenmin report`'s arguments for the records file `records` of `cfg`'s
/// station (16 sectors, standard air density; [`report::render`] writes
/// nothing).
fn report_args(cfg: &StationFile, records: &Path) -> report::ReportArgs {
    report::ReportArgs {
        config: cfg.path.clone(),
        records: vec![records.to_path_buf()],
        output: records.with_extension("report"),
        sectors: 16,
        air_density: 1.225,
        reference: None,
    }
}

/// Records CSV: `tenmin report` of the file (page, tables and summary, nothing
/// written) and `tenmin verify` of an hour of samples against it.
pub fn records(data: &[u8]) {
    let cfg = station_file();
    let path = scratch("records.csv", data);
    if let Err(e) = report::render(&cfg, &report_args(&cfg, &path)) {
        names(&e, &path);
    }
    let ids: Vec<String> = cfg.channels.iter().map(|c| c.id.clone()).collect();
    let samples = scratch("verify-samples.csv", &verify_samples());
    let opts = Options {
        max_gap_days: MAX_GAP_DAYS,
        ..Options::default()
    };
    let result = verify::Comparer::open(&path, cfg.station, ids, 5).and_then(|mut cmp| {
        replay::replay(&cfg, &[samples], opts, &mut cmp)?;
        cmp.finish()
    });
    match result {
        Ok(report) => {
            assert!(report.shown.len() as u64 <= report.total.min(5));
            assert!(report.rows_compared <= report.replay_rows);
        }
        Err(e) => names(&e, &path),
    }
}

/// Makes the CRC of `frame` (one frame: record, state) right.
fn fix_frame_crc(frame: &mut [u8]) {
    if frame.len() == FRAME_LEN {
        let crc = crc32(&frame[..FRAME_LEN - 4]);
        frame[FRAME_LEN - 4..].copy_from_slice(&crc.to_le_bytes());
    }
}

/// A good record or state frame must encode again to the same bytes, and the
/// scanner must find exactly it. A record frame of version 2, still read, is
/// written as version 3, which does not store the turbulence intensity (it
/// is computed from the mean and the standard deviation when read): written
/// so, it reads back with everything else the same, and writes again to the
/// same bytes.
fn one_frame(b: &[u8; FRAME_LEN]) {
    let mut again = [0u8; FRAME_LEN];
    let record = decode_record(b);
    if let Ok(f) = &record {
        encode_record(f, &mut again);
        // Byte 4: the frame's version (CONTRACT.md, "Record frame format").
        if b[4] == wire::RECORD_VERSION_2 {
            let g = decode_record(&again).expect("a version-2 frame written as version 3 reads");
            let mut third = [0u8; FRAME_LEN];
            encode_record(&g, &mut third);
            assert!(
                third == again,
                "a version-2 frame written twice differs: {f:?}"
            );
            let mut want = *f;
            want.record.ti = g.record.ti;
            assert_eq!(
                format!("{want:?}"),
                format!("{g:?}"),
                "a version-2 frame written as version 3 reads otherwise"
            );
        } else {
            assert!(again == *b, "a record frame with two encodings: {f:?}");
        }
    }
    let state = decode_state(b);
    if let Ok(f) = &state {
        encode_state(f, &mut again);
        assert!(again == *b, "a state frame with two encodings: {f:?}");
    }
    assert!(record.is_err() || state.is_err(), "a frame of both kinds");
    let spans: Vec<Span> = wire::scan(b).collect();
    let good = record.is_ok() || state.is_ok();
    match spans.as_slice() {
        [Span::Frame { offset: 0, .. } | Span::State { offset: 0, .. }] => assert!(good),
        [Span::Damaged { offset: 0, len } | Span::Erased { offset: 0, len }] => {
            assert!(!good && *len == FRAME_LEN)
        }
        other => panic!("one frame scans as {other:?}"),
    }
}

/// Makes the header CRC of a sample file and the CRC of every sample frame
/// after it right, as far as the tags can be read.
fn fix_sample_crcs(file: &mut [u8]) {
    let count = usize::from(file.get(5).copied().unwrap_or(0));
    let len = sample_header_len(count);
    if file.len() < len || count == 0 {
        return;
    }
    // The length field must agree with the count for the CRC to be reached.
    if let Ok(n) = u16::try_from(len) {
        file[6..8].copy_from_slice(&n.to_le_bytes());
    }
    let crc = crc32(&file[..len - 4]);
    file[len - 4..len].copy_from_slice(&crc.to_le_bytes());
    let mut at = len;
    loop {
        let mut end = at + 8;
        for _ in 0..count {
            end += match file.get(end) {
                Some(0) => 1,
                Some(1) => 9,
                Some(2) => 5,
                _ => return,
            };
        }
        let Some(body) = file.get(at..end) else {
            return;
        };
        let crc = crc32(body).to_le_bytes();
        let Some(slot) = file.get_mut(end..end + 4) else {
            return;
        };
        slot.copy_from_slice(&crc);
        at = end + 4;
    }
}

/// Channels of the station the sample-file check builds, and its gust
/// capacity (the replay board's).
const SAMPLE_C: usize = 8;
const SAMPLE_G: usize = 12;

/// A sample file: its header must encode again to the same bytes; if the core
/// accepts its configuration, every sample goes through a station of the core
/// and is accounted for in every channel; every sample frame encodes again to
/// its bytes.
fn sample_file(file: &[u8]) {
    let Ok(reader) = SampleReader::<SAMPLE_C>::new(file) else {
        return;
    };
    let h = *reader.header();
    let len = h.encoded_len();
    let mut again = vec![0u8; len];
    encode_sample_header(&h.station, h.configs(), &mut again)
        .expect("a header that reads writes again");
    assert!(
        again == file[..len],
        "a sample file header with two encodings"
    );
    let layout = Layout::<SAMPLE_C>::new::<SAMPLE_G>(h.station, &h.channels).ok();
    let mut station = layout.map(|l| Box::new(Station::<SAMPLE_C, SAMPLE_G>::new(l)));
    let n = h.count();
    let mut held = [0u64; SAMPLE_C];
    let mut count = |e: Event<'_, SAMPLE_C, SAMPLE_G>| {
        if let Event::Closed(_, records) = e {
            for (h, r) in held.iter_mut().zip(records) {
                *h += self::held(r);
            }
        }
    };
    let mut pushed = 0u64;
    let mut frame = vec![0u8; wire::sample_frame_max_len(SAMPLE_C)];
    let mut at = len;
    for sample in reader {
        let Ok((t, readings)) = sample else { break };
        let k =
            encode_sample(t, &readings[..n], &mut frame).expect("a sample that reads writes again");
        assert!(
            frame[..k] == file[at..at + k],
            "a sample frame with two encodings"
        );
        at += k;
        if let Some(st) = station.as_mut() {
            st.push(t, &readings, &mut count);
            pushed += 1;
        }
    }
    if let Some(mut st) = station {
        st.close(&mut count);
        let totals = *st.totals();
        assert_eq!(totals.pushed(), pushed);
        for (i, h) in held.iter().enumerate().take(n) {
            assert_eq!(h + totals.unplaced, pushed, "channel {i} lost samples");
        }
    }
}

/// `qc_core::wire`: every 128 bytes as a record or state frame, and the
/// input as a sample file; each also with its CRCs made right.
pub fn frames(data: &[u8]) {
    for chunk in data.chunks_exact(FRAME_LEN) {
        let mut b = [0u8; FRAME_LEN];
        b.copy_from_slice(chunk);
        one_frame(&b);
        fix_frame_crc(&mut b);
        one_frame(&b);
    }
    sample_file(data);
    let mut fixed = data.to_vec();
    fix_sample_crcs(&mut fixed);
    sample_file(&fixed);
}

/// A reader handing out 1 to 7 bytes at a time.
struct Trickle<'a>(&'a [u8], usize);

impl Read for Trickle<'_> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        self.1 = self.1 % 7 + 1;
        let n = self.1.min(buf.len()).min(self.0.len());
        buf[..n].copy_from_slice(&self.0[..n]);
        self.0 = &self.0[n..];
        Ok(n)
    }
}

/// Where a span is and what it is, for comparing scans.
fn place(s: &Span) -> (u8, usize, usize) {
    match *s {
        Span::Frame { offset, .. } => (0, offset, FRAME_LEN),
        Span::State { offset, .. } => (1, offset, FRAME_LEN),
        Span::Damaged { offset, len } => (2, offset, len),
        Span::Torn { offset, len } => (3, offset, len),
        Span::Erased { offset, len } => (4, offset, len),
    }
}

/// Makes the CRC of every frame that starts with the sync marker right.
fn fix_log_crcs(log: &mut [u8]) {
    let mut i = 0;
    while i + FRAME_LEN <= log.len() {
        if log[i..i + 4] == SYNC {
            fix_frame_crc(&mut log[i..i + FRAME_LEN]);
            i += FRAME_LEN;
        } else {
            i += 1;
        }
    }
}

/// `tenmin decode` of `log`: an error names the log; otherwise every byte is
/// in a frame taken or skipped, damage or erased flash, and every row is
/// counted.
fn decode_log(cfg: &StationFile, log: &[u8]) {
    let path = Path::new("fuzz.log");
    let mut out = Vec::new();
    match decode::decode(cfg, log, path, &mut out, MAX_GAP_DAYS) {
        Err(e) => names(&e, path),
        Ok(d) => {
            // Every good frame is in `frames`, those put back in order
            // (`out_of_order`) and those left out (`behind`, `glitched`)
            // among them.
            let bytes = d.damaged_bytes + d.erased_bytes + FRAME_LEN as u64 * d.frames;
            assert_eq!(
                bytes,
                log.len() as u64,
                "bytes of the log unaccounted for: {d:?}"
            );
            let lines = out.iter().filter(|&&b| b == b'\n').count() as u64;
            assert_eq!(lines, d.rows + 1, "rows written and counted differ");
        }
    }
}

/// A logger's log: `wire::scan` of the whole log covers every byte once, in
/// order; `logscan::scan_reader` in pieces of every size finds the same spans;
/// `tenmin decode` reads it (and a copy with every CRC made right).
pub fn logscan(data: &[u8]) {
    let whole: Vec<(u8, usize, usize)> = wire::scan(data).map(|s| place(&s)).collect();
    let mut at = 0;
    for (i, &(kind, offset, len)) in whole.iter().enumerate() {
        assert_eq!(offset, at, "spans leave a hole or overlap");
        assert!(len > 0, "an empty span");
        if kind == 3 {
            assert!(
                i + 1 == whole.len() && len < FRAME_LEN,
                "a torn span that is not a short tail"
            );
        }
        if kind == 4 {
            assert!(data[offset..offset + len].iter().all(|&b| b == 0xFF));
        }
        at += len;
    }
    assert_eq!(at, data.len(), "the spans do not reach the end");
    for chunk in [1, FRAME_LEN, FRAME_LEN + 75, 1 << 20] {
        let mut pieces = Vec::new();
        let n = crate::logscan::scan_reader(data, chunk, |s| -> io::Result<()> {
            pieces.push(place(&s));
            Ok(())
        })
        .expect("reading from memory does not fail");
        assert_eq!(n, data.len());
        assert!(
            pieces == whole,
            "read {chunk} bytes at a time, the log scans otherwise"
        );
    }
    let mut pieces = Vec::new();
    crate::logscan::scan_reader(Trickle(data, 0), FRAME_LEN, |s| -> io::Result<()> {
        pieces.push(place(&s));
        Ok(())
    })
    .expect("reading from memory does not fail");
    assert!(
        pieces == whole,
        "read a few bytes at a time, the log scans otherwise"
    );
    let cfg = station_file();
    decode_log(&cfg, data);
    let mut fixed = data.to_vec();
    fix_log_crcs(&mut fixed);
    if fixed != data {
        decode_log(&cfg, &fixed);
    }
}

/// The line between the parts of a [`campaign`] or [`table`] input.
pub const PART: &[u8] = b"\n%%\n";

/// `data` cut at each [`PART`] line, into at most `n` parts (the last takes
/// the rest).
fn parts(data: &[u8], n: usize) -> Vec<&[u8]> {
    let mut out = Vec::with_capacity(n);
    let mut rest = data;
    while out.len() + 1 < n {
        let Some(at) = rest.windows(PART.len()).position(|w| w == PART) else {
            break;
        };
        out.push(&rest[..at]);
        rest = &rest[at + PART.len()..];
    }
    out.push(rest);
    out
}

/// The campaign's side files: the input's parts ([`PART`]) are a sensor
/// history (TOML), an exclusions file and an events file, each named in the
/// [`STATION`]'s `[campaign]` when the input has that part. The station
/// loads, or its error names one of the side files. One that loads replays
/// an hour of samples as [`samples`] checks a replay (one thread and two,
/// every sample accounted for, the excluded ones too); the records CSV of
/// that replay, written as `tenmin replay` writes it (sensor entries
/// included), reads back through `tenmin verify --with-exclusions` with no
/// difference (one thread and two), and through `tenmin report` with the events, or an error
/// naming the events file.
pub fn campaign(data: &[u8]) {
    const NAMES: [(&str, &str); 3] = [
        ("sensors", "sensors.toml"),
        ("exclusions", "exclusions.csv"),
        ("events", "events.csv"),
    ];
    let mut toml = format!("{STATION}\n[campaign]\n");
    for ((key, name), part) in NAMES.iter().zip(parts(data, NAMES.len())) {
        scratch(name, part);
        toml.push_str(&format!("{key} = \"{name}\"\n"));
    }
    let cfg = match config::load(&scratch("campaign.toml", toml.as_bytes())) {
        Ok(cfg) => cfg,
        Err(e) => {
            let msg = format!("{e:#}");
            assert!(
                NAMES.iter().any(|(_, n)| msg.contains(n)),
                "the error names no side file: {msg}"
            );
            return;
        }
    };
    let samples = scratch("campaign-samples.csv", &verify_samples());
    // (No [`logger_agrees`]: a logger knows no sensor history or
    // exclusions; `tenmin verify` applies them to the replay only.)
    let _ = replays_agree(&cfg, &samples);
    let opts = Options {
        max_gap_days: MAX_GAP_DAYS,
        ..Options::default()
    };
    let ids: Vec<String> = cfg.channels.iter().map(|c| c.id.clone()).collect();
    let mut writer = crate::records::Writer::new(Vec::new(), ids.clone())
        .expect("writing to memory does not fail")
        .with_sensors(cfg.sensors.clone());
    if let Err(e) = replay::replay(&cfg, std::slice::from_ref(&samples), opts, &mut writer) {
        // A strict replay may refuse the samples only for a reason of its
        // own input (none here) or the campaign's.
        return names(&e, &samples);
    }
    let csv = writer.finish().expect("writing to memory does not fail");
    let records = scratch("campaign-records.csv", &csv);
    // Verified on one thread and on two in 64-byte chunks.
    let two = Options {
        jobs: 2,
        chunk_size: 64,
        ..opts
    };
    for opts in [opts, two] {
        let report = verify::Comparer::open(&records, cfg.station, ids.clone(), 5)
            .map(|cmp| cmp.with_sensors(cfg.sensors.clone()))
            .and_then(|mut cmp| {
                replay::replay(&cfg, std::slice::from_ref(&samples), opts, &mut cmp)?;
                cmp.finish()
            })
            .unwrap_or_else(|e| panic!("records tenmin wrote do not verify: {e:#}"));
        assert_eq!(
            report.total,
            0,
            "records tenmin wrote differ from their replay ({} threads): {:?}",
            opts.jobs,
            report.shown.first().map(|d| format!("{:?}", d.what))
        );
    }
    if let Err(e) = report::render(&cfg, &report_args(&cfg, &records)) {
        let msg = format!("{e:#}");
        assert!(
            msg.contains("events.csv") || msg.contains("campaign-records.csv"),
            "the report's error names neither the events nor the records: {msg}"
        );
    }
}

/// Another logger's table: the input's parts ([`PART`]) are the
/// `[logger_table]` and `[conventions]` of a station file (after the
/// [`STATION`]'s own) and the table. The station loads or its error names
/// it; the table reads or its error names it; then an hour of samples is
/// replayed and the table checked against it, as `tenmin verify` does and
/// with `--infer`: a result, or an error naming the station or the table.
pub fn table(data: &[u8]) {
    let [decl, body] = parts(data, 2)[..] else {
        return;
    };
    let mut toml = STATION.as_bytes().to_vec();
    toml.push(b'\n');
    toml.extend_from_slice(decl);
    let station = scratch("table-station.toml", &toml);
    let cfg = match config::load(&station) {
        Ok(cfg) if cfg.logger_table.is_some() => cfg,
        Ok(_) => return,
        Err(e) => return names(&e, &station),
    };
    let path = scratch("logger-table.csv", body);
    let rows = match crate::logtable::read(&cfg, &path) {
        Ok(rows) => rows,
        Err(e) => return names(&e, &path),
    };
    let samples = scratch("table-samples.csv", &verify_samples());
    let mut collect = crate::tablecheck::Collect::new(cfg.station.interval_s);
    let opts = Options {
        max_gap_days: MAX_GAP_DAYS,
        ..Options::default()
    };
    replay::replay(&cfg, &[samples], opts, &mut collect)
        .unwrap_or_else(|e| panic!("the table's samples do not replay: {e:#}"));
    let mut out = Vec::new();
    let checked = crate::tablecheck::verify(&cfg, &path, &rows, &collect, 5, &mut out).map(|_| ());
    let inferred = crate::tablecheck::infer(&cfg, &path, &rows, &collect, &mut out).map(|_| ());
    for r in [checked, inferred] {
        if let Err(e) = r {
            let msg = format!("{e:#}");
            assert!(
                msg.contains("table-station.toml") || msg.contains("logger-table.csv"),
                "the error names neither the station nor the table: {msg}"
            );
        }
    }
}

// ---------------------------------------------------------------- image

/// Channels and gust capacity of the images [`image`] reads as they come (a
/// shape of the C interface's, `c4g3`).
const IMAGE_C: usize = 4;
const IMAGE_G: usize = 3;

/// Layout images (`qc_core::Layout::to_image`: a layout validated on a PC,
/// as a logger keeps it in flash and the C interface's `tm_layout_load_*`
/// reads it, checking its format, shape, length and CRC and validating
/// nothing again).
///
/// - The input as an image (as it is, and with its head and CRC made
///   right): a refused one leaves the placeholder layout; a loaded one
///   writes its image again, which loads to the same bytes, and a station
///   runs on it without a panic ([`any_layout_runs`]): an image with its CRC
///   made right by hand is not one the library wrote and its fields were
///   never validated, so its statistics may be wrong (the contract: README
///   of `firmware-example`, "A stored layout"), but no build stops on it.
/// - The input as a sample file (as it is, and with its CRCs made right, as
///   [`frames`] reads it): when the core validates its configuration for a
///   station of the example firmware's size, that layout's image loads to
///   a layout with the same image, and a station on the loaded layout gives
///   the same record and state frames, bit for bit, as one on the layout
///   validated, for every sample of the file.
pub fn image(data: &[u8]) {
    any_image(data);
    let mut fixed = data.to_vec();
    fix_image(&mut fixed);
    any_image(&fixed);
    stored_layout_agrees(data);
    let mut fixed = data.to_vec();
    fix_sample_crcs(&mut fixed);
    stored_layout_agrees(&fixed);
}

/// Makes the head of `image` that of a layout image of [`IMAGE_C`]
/// channels and gust capacity [`IMAGE_G`], and its CRC right.
fn fix_image(image: &mut Vec<u8>) {
    if image.len() < 12 {
        image.resize(12, 0);
    }
    image[..4].copy_from_slice(b"TMLI");
    image[4] = qc_core::LAYOUT_IMAGE_VERSION;
    image[5] = IMAGE_C as u8;
    image[6..8].copy_from_slice(&(IMAGE_G as u16).to_le_bytes());
    let n = image.len() - 4;
    let crc = crc32(&image[..n]);
    image[n..].copy_from_slice(&crc.to_le_bytes());
}

/// The image of `layout` for gust capacity `G`.
fn image_of<const C: usize, const G: usize>(layout: &Layout<C>) -> Vec<u8> {
    let mut out = vec![0u8; Layout::<C>::IMAGE_LEN];
    let n = layout
        .to_image::<G>(&mut out)
        .expect("a layout writes its image");
    out.truncate(n);
    out
}

/// See [`image`]: `img` loaded as it is.
fn any_image(img: &[u8]) {
    let mut layout = Layout::<IMAGE_C>::placeholder();
    if layout.load_image::<IMAGE_G>(img).is_err() {
        assert!(
            image_of::<IMAGE_C, IMAGE_G>(&layout)
                == image_of::<IMAGE_C, IMAGE_G>(&Layout::placeholder()),
            "a refused image left other than the placeholder"
        );
        return;
    }
    reloaded::<IMAGE_C, IMAGE_G>(&image_of::<IMAGE_C, IMAGE_G>(&layout));
    any_layout_runs(layout);
}

/// A station on `layout` (loaded from an image, maybe one made up with its
/// CRC right, whose fields were never validated) takes samples of every
/// kind at the edges of their ranges, with a gap, without a panic, even
/// with overflow checks on, and accounts for every sample: its statistics
/// may be wrong, its run may not stop.
fn any_layout_runs(layout: Layout<IMAGE_C>) {
    use qc_core::Reading;
    const READINGS: [Reading; 10] = [
        Reading::Counts(0),
        Reading::Counts(i32::MAX),
        Reading::Counts(i32::MIN),
        Reading::Counts(3600),
        Reading::Counts(-5),
        Reading::Value(5.5),
        Reading::Value(359.9),
        Reading::Value(-1e300),
        Reading::Value(f64::INFINITY),
        Reading::Missing,
    ];
    let mut st = Box::new(Station::<IMAGE_C, IMAGE_G>::new(layout));
    let mut held = [0u64; IMAGE_C];
    let mut count = |e: Event<'_, IMAGE_C, IMAGE_G>| {
        if let Event::Closed(_, records) = e {
            for (h, r) in held.iter_mut().zip(records) {
                *h += self::held(r);
            }
        }
    };
    let mut t = 1_700_000_400_000i64;
    let mut k = 0usize;
    for i in 0..1500usize {
        t += if i == 900 { 86_400_000 } else { 1000 };
        let rs: [Reading; IMAGE_C] = core::array::from_fn(|c| {
            k = k.wrapping_mul(31).wrapping_add(c + i);
            READINGS[k % READINGS.len()]
        });
        st.push(Timestamp::from_millis(t), &rs, &mut count);
    }
    st.close(&mut count);
    let totals = *st.totals();
    assert_eq!(totals.pushed(), 1500);
    for (i, h) in held.iter().enumerate() {
        assert_eq!(h + totals.unplaced, 1500, "channel {i} lost samples");
    }
}

/// The layout the image `img` (one the library wrote) loads to, which must
/// write the same image again.
fn reloaded<const C: usize, const G: usize>(img: &[u8]) -> Layout<C> {
    let mut loaded = Layout::<C>::placeholder();
    loaded
        .load_image::<G>(img)
        .expect("an image the library wrote loads");
    assert!(
        image_of::<C, G>(&loaded) == img,
        "a layout image with two encodings"
    );
    loaded
}

/// See [`image`]: the configuration of the sample file `file`, validated,
/// stored as an image and loaded, runs as the layout validated does.
fn stored_layout_agrees(file: &[u8]) {
    let Ok(reader) = SampleReader::<SAMPLE_C>::new(file) else {
        return;
    };
    let h = *reader.header();
    let Ok(layout) = Layout::<SAMPLE_C>::new::<SAMPLE_G>(h.station, &h.channels) else {
        return;
    };
    let loaded = reloaded::<SAMPLE_C, SAMPLE_G>(&image_of::<SAMPLE_C, SAMPLE_G>(&layout));
    let mut validated = Box::new(Station::<SAMPLE_C, SAMPLE_G>::new(layout));
    let mut stored = Box::new(Station::<SAMPLE_C, SAMPLE_G>::new(loaded));
    let mut a = Vec::new();
    let mut b = Vec::new();
    for sample in reader {
        let Ok((t, readings)) = sample else { break };
        validated.push(t, &readings, |e| frames_of(&layout, e, &mut a));
        stored.push(t, &readings, |e| frames_of(&loaded, e, &mut b));
        assert!(a == b, "a station on a stored layout wrote other frames");
        a.clear();
        b.clear();
    }
    validated.close(|e| frames_of(&layout, e, &mut a));
    stored.close(|e| frames_of(&loaded, e, &mut b));
    assert!(a == b, "a station on a stored layout wrote other frames");
    assert_eq!(validated.totals(), stored.totals());
    assert!(validated.recovery() == stored.recovery());
}

/// The record and state frames a logger on `layout` writes of the event
/// `e`, appended to `out` (a gap: its first interval and length).
fn frames_of(layout: &Layout<SAMPLE_C>, e: Event<'_, SAMPLE_C, SAMPLE_G>, out: &mut Vec<u8>) {
    let (acc, records) = match e {
        Event::Closed(acc, records) => (acc, records),
        Event::Gap(gap) => {
            out.extend_from_slice(&gap.first.to_le_bytes());
            out.extend_from_slice(&gap.count.to_le_bytes());
            return;
        }
    };
    let interval_start = layout.interval_start(acc.index());
    let mut b = [0u8; FRAME_LEN];
    for (i, r) in records.iter().enumerate() {
        let f = wire::RecordFrame {
            sequence: i as u32,
            interval_start,
            channel: i as u8,
            config: Some(wire::ConfigStamp {
                channels: SAMPLE_C as u8,
                fingerprint: layout.fingerprint(),
            }),
            record: *r,
        };
        encode_record(&f, &mut b);
        out.extend_from_slice(&b);
        if let Some(state) = acc.state(i) {
            let f = wire::StateFrame {
                sequence: i as u32,
                interval_start,
                channel: i as u8,
                channels: SAMPLE_C as u8,
                fingerprint: layout.fingerprint(),
                state,
            };
            encode_state(&f, &mut b);
            out.extend_from_slice(&b);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::panic::{catch_unwind, AssertUnwindSafe};

    /// Every layout of [`layouts`] reads its own row in one pass, and a file
    /// of three of them replays: one sample accepted, two duplicates, none
    /// bad. (A layout that no longer did would leave its one-pass reader out
    /// of the fuzz target.)
    #[test]
    fn every_layout_reads_its_row() {
        for layout in &LAYOUTS {
            let rows = format!("{}\n{}\n{}\n", layout.row, layout.row, layout.row);
            let cfg = config::load(&scratch("l.toml", layout.toml.as_bytes())).unwrap();
            let parser = Parser::new(
                Path::new("l.txt"),
                1,
                layout.header.iter().map(|f| f.as_bytes()),
                &cfg,
            )
            .unwrap();
            assert_eq!(
                one_pass_against_general(&parser, rows.as_bytes()),
                Some([3, 0, 0]),
                "{}",
                layout.name
            );
            let file = format!("{}{rows}", layout.preamble);
            let (s, _) = replay_rows(&cfg, &scratch("l.txt", file.as_bytes()), Options::default())
                .unwrap_or_else(|e| panic!("{}: {e:#}", layout.name));
            assert_eq!(
                (s.pushed.accepted, s.pushed.duplicate, s.input.bad.total()),
                (1, 2, 0),
                "{}",
                layout.name
            );
        }
    }

    /// The checks the targets make can fail (a check that cannot would pass
    /// every corpus): invented faults, each caught.
    #[test]
    fn the_checks_fire_on_invented_faults() {
        // An error that does not name its file.
        let e = anyhow::anyhow!("line 3: expected a number");
        assert!(catch_unwind(|| names(&e, Path::new("/tmp/x/samples.csv"))).is_err());
        names(
            &anyhow::anyhow!("/tmp/x/samples.csv:3: bad"),
            Path::new("/tmp/x/samples.csv"),
        );
        // A sample lost from a channel's rows.
        let cfg = station_file();
        let (s, mut rows) = replay_rows(
            &cfg,
            &scratch("s.csv", &verify_samples()),
            Options::default(),
        )
        .expect("the verify samples replay");
        accounted(&s, &rows);
        rows.held[3] -= 1;
        assert!(catch_unwind(AssertUnwindSafe(|| accounted(&s, &rows))).is_err());
        // A record of the replay that the firmware-sized station does not
        // write: the samples' records, one field changed.
        let path = scratch("s.csv", &verify_samples());
        let lenient = Options {
            skip_bad_rows: true,
            ..Options::default()
        };
        let (_, mut rows) = replay_rows(&cfg, &path, lenient).expect("the verify samples replay");
        logger_agrees(&cfg, &path, Ok(&rows));
        let at = rows.csv.len() / 2;
        rows.csv[at] = if rows.csv[at] == b'1' { b'2' } else { b'1' };
        assert!(catch_unwind(AssertUnwindSafe(|| logger_agrees(&cfg, &path, Ok(&rows)))).is_err());
    }
}
