//! A catalogue of bad logs and bad records for `tenmin decode`, `verify` and
//! `report`: each fault class injected into an otherwise clean record log (or
//! records file) of an invented station, with what the command must do.
//!
//! The log is written here the way a record logger writes it (a
//! `qc_core::Station` over invented samples, one version-2 record frame per
//! channel per closed interval, stamped with the station file's channel
//! count and fingerprint). The reference rows are `tenmin replay` of the same
//! samples, a path that does not go through `decode`; the faults are invented
//! (fault injection).

use std::path::Path;
use std::process::Output;

use qc_core::wire::{self, ConfigStamp, RecordFrame, Span, FRAME_LEN};
use qc_core::{Event, Reading, Station, Timestamp};

mod common;
use common::{refused, tenmin, text};

/// Three channels at 0.1 Hz: 60 samples an interval.
const STATION: &str = r#"
[logging]
interval_s = 600
sample_rate_hz = 0.1

[[channel]]
id = "ws80"
kind = "speed"
resolution = 0.01
gust_window_s = 30

[[channel]]
id = "ws60"
kind = "speed"
resolution = 0.1
gust_window_s = 30

[[channel]]
id = "t"
kind = "scalar"
range = [-40, 50]
resolution = 0.1
"#;

const CHANNELS: usize = 3;

/// Intervals of samples: 600 frames.
const INTERVALS: i64 = 200;

/// 2025-01-20T00:00:00Z, s: on an interval boundary.
const T0: i64 = 1_737_331_200;

/// A day, ms.
const DAY_MS: i64 = 86_400_000;

/// Invented samples, every 10 s, no gaps: (epoch seconds, readings).
fn samples() -> Vec<(i64, [f64; 3])> {
    (0..INTERVALS * 60)
        .map(|i| {
            let ws80 = 5.0 + ((i * 7) % 13) as f64 / 10.0;
            let ws60 = 4.0 + ((i * 3) % 11) as f64 / 10.0;
            let t = 10.0 + (i % 50) as f64 / 10.0;
            (T0 + 10 * i, [ws80, ws60, t])
        })
        .collect()
}

fn samples_csv() -> String {
    let mut s = String::from("time,ws80,ws60,t\n");
    for (t, r) in samples() {
        s.push_str(&format!("{t},{},{},{}\n", r[0], r[1], r[2]));
    }
    s
}

/// The record frames a logger of `STATION` writes for the samples, its
/// sequence numbers starting at `first`.
fn frames(first: u32) -> Vec<RecordFrame> {
    let cfg = host_cli::config::parse(Path::new("st.toml"), STATION).unwrap();
    let layout = cfg.layout::<4>().unwrap();
    // The fingerprint of the three channels in use (the layout has a fourth,
    // unused slot), as a logger of this station stamps its frames.
    let cores: Vec<_> = cfg.channels.iter().map(|c| c.core).collect();
    let stamp = ConfigStamp {
        channels: CHANNELS as u8,
        fingerprint: qc_core::config_fingerprint(&cfg.station, &cores),
    };
    let mut station: Station<4, 64> = Station::new(layout);
    let mut out = Vec::new();
    let mut keep = |e: Event<'_, 4, 64>| {
        if let Event::Closed(acc, records) = e {
            for (c, record) in records.iter().take(CHANNELS).enumerate() {
                out.push(RecordFrame {
                    sequence: first.wrapping_add(out.len() as u32),
                    interval_start: layout.interval_start(acc.index()),
                    channel: c as u8,
                    config: Some(stamp),
                    record: *record,
                });
            }
        }
    };
    for (t, r) in samples() {
        let readings = [
            Reading::Value(r[0]),
            Reading::Value(r[1]),
            Reading::Value(r[2]),
            Reading::Missing,
        ];
        station.push(Timestamp::from_millis(t * 1000), &readings, &mut keep);
    }
    station.close(&mut keep);
    assert_eq!(out.len(), INTERVALS as usize * CHANNELS);
    out
}

fn log_of(frames: &[RecordFrame]) -> Vec<u8> {
    frames
        .iter()
        .flat_map(|f| {
            let mut b = [0u8; FRAME_LEN];
            wire::encode_record(f, &mut b);
            b
        })
        .collect()
}

struct Setup {
    dir: tempfile::TempDir,
    /// `tenmin replay` of the samples: the reference rows.
    replay: String,
}

impl Setup {
    fn new() -> Self {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("st.toml"), STATION).unwrap();
        std::fs::write(dir.path().join("s.csv"), samples_csv()).unwrap();
        let o = tenmin(&["replay", "-q", "-c", "st.toml", "s.csv"], dir.path());
        assert!(o.status.success(), "{}", text(&o.stderr));
        let replay = text(&o.stdout);
        assert_eq!(replay.lines().count(), 1 + INTERVALS as usize * CHANNELS);
        Setup { dir, replay }
    }

    fn run(&self, args: &[&str]) -> Output {
        tenmin(args, self.dir.path())
    }

    /// `tenmin verify -q` of the records file `records` against the samples.
    fn verify(&self, records: &str) -> Output {
        self.run(&[
            "verify",
            "-q",
            "-c",
            "st.toml",
            "--samples",
            "s.csv",
            "--records",
            records,
        ])
    }

    /// `tenmin decode [--strict]` of `log` with station file `station`:
    /// its output and records (empty when none were written).
    fn decode(&self, log: &[u8], station: &str, strict: bool) -> (Output, String) {
        std::fs::write(self.dir.path().join("x.log"), log).unwrap();
        let _ = std::fs::remove_file(self.dir.path().join("x.csv"));
        let mut args = vec!["decode", "-c", station, "x.log", "-o", "x.csv"];
        if strict {
            args.push("--strict");
        }
        let o = self.run(&args);
        let records = std::fs::read_to_string(self.dir.path().join("x.csv")).unwrap_or_default();
        (o, records)
    }

    /// The replay's rows less those of frames `left_out` (indices into the
    /// clean log, which is in the replay's row order).
    fn replay_without(&self, left_out: &[usize]) -> String {
        self.replay
            .lines()
            .enumerate()
            .filter(|(i, _)| *i == 0 || !left_out.contains(&(i - 1)))
            .map(|(_, l)| format!("{l}\n"))
            .collect()
    }
}

/// Moves frame `i`'s interval start by `ms` (CRC resealed by the encoder:
/// a glitch of the logger's clock, not damage).
fn shift(frames: &mut [RecordFrame], i: usize, ms: i64) {
    let t = frames[i].interval_start.millis() + ms;
    frames[i].interval_start = Timestamp::from_millis(t);
}

/// The clean log with frame `i` moved by `ms` (see [`shift`]).
fn frame_shifted(i: usize, ms: i64) -> Vec<u8> {
    let mut f = frames(0);
    shift(&mut f, i, ms);
    log_of(&f)
}

/// The clean log with every channel's frame of interval `k` moved by `ms`.
fn interval_shifted(k: usize, ms: i64) -> Vec<u8> {
    let mut f = frames(0);
    for c in 0..CHANNELS {
        shift(&mut f, at(k, c), ms);
    }
    log_of(&f)
}

/// One class of bad log: how to make it from the clean frames, and what
/// `decode` must do with it.
struct Case {
    name: &'static str,
    make: fn() -> Vec<u8>,
    /// Frames (indices into the clean log) whose rows are left out.
    left_out: Vec<usize>,
    /// Text of the replay's rows changed in the decoded rows (rows kept at
    /// the time their frames give).
    moved: &'static [(&'static str, &'static str)],
    /// Lines stderr must hold.
    says: &'static [&'static str],
    /// Text stderr must not hold.
    never: &'static [&'static str],
}

/// Frame index of interval `k`, channel `c`.
const fn at(k: usize, c: usize) -> usize {
    k * CHANNELS + c
}

fn catalogue() -> Vec<Case> {
    vec![
        Case {
            name: "clean",
            make: || log_of(&frames(0)),
            left_out: vec![],
            moved: &[],
            says: &["600 good frames, 600 rows written (0 of them for 0 intervals with no samples)"],
            never: &["frame lost", "frames lost (", "left out;", "put back in sequence order"],
        },
        Case {
            // The interval of frames 300 to 302 stamped a day ahead, sequence
            // numbers running on: no day of empty rows, and the 297 good
            // frames after it kept.
            name: "one interval a day ahead",
            make: || interval_shifted(100, DAY_MS),
            left_out: vec![at(100, 0), at(100, 1), at(100, 2)],
            moved: &[],
            says: &[
                "bytes 38400 to 38784: 3 frames (sequence numbers 300 to 302) for 2025-01-21T16:40:00Z, a time the frames around them contradict (a logger clock glitch?); left out",
                "3 frames with a glitched time (left out)",
                "0 of them for 0 intervals with no samples",
                "0 frames lost",
            ],
            never: &["jump forward", "not after"],
        },
        Case {
            name: "one frame a day ahead",
            make: || frame_shifted(at(50, 0), DAY_MS),
            left_out: vec![at(50, 0)],
            moved: &[],
            says: &[
                "byte 19200: 1 frame (sequence number 150) for 2025-01-21T08:20:00Z, a time the frames around them contradict",
                "1 frames with a glitched time (left out)",
            ],
            never: &["jump forward", "intervals unknown: 1"],
        },
        Case {
            // A frame a day behind what has been written already.
            name: "one frame a day behind",
            make: || frame_shifted(at(170, 1), -DAY_MS),
            left_out: vec![at(170, 1)],
            moved: &[],
            says: &[
                "byte 65408: 1 frame with a time before the frames already read, which the frames after them contradict",
                "1 frames with a glitched time (left out)",
            ],
            never: &["frame lost", "frames lost ("],
        },
        Case {
            // The last interval a day ahead: nothing after it confirms the
            // time, so no empty rows are written before it.
            name: "last interval a day ahead",
            make: || interval_shifted(199, DAY_MS),
            left_out: vec![],
            moved: &[(
                "2025-01-21T09:10:00Z,2025-01-21T09:20:00Z",
                "2025-01-22T09:10:00Z,2025-01-22T09:20:00Z",
            )],
            says: &[
                "byte 76416: the last frames jump forward from 2025-01-21T09:00:00Z to 2025-01-22T09:10:00Z with no later frame to confirm the time; the intervals between are not written",
                "0 of them for 0 intervals with no samples",
            ],
            never: &["clock glitch"],
        },
        Case {
            // The first interval a day behind: nothing before it confirms
            // its time, so no day of empty rows after it.
            name: "first interval a day behind",
            make: || interval_shifted(0, -DAY_MS),
            left_out: vec![],
            moved: &[(
                "2025-01-20T00:00:00Z,2025-01-20T00:10:00Z",
                "2025-01-19T00:00:00Z,2025-01-19T00:10:00Z",
            )],
            says: &[
                "byte 384: the frames jump forward from the log's first interval, 2025-01-19T00:00:00Z, to 2025-01-20T00:10:00Z with no earlier frame to confirm the time of the first; the intervals between are not written",
                "0 of them for 0 intervals with no samples",
            ],
            never: &["clock glitch"],
        },
        Case {
            // Two frames swapped within an interval, and two across an
            // interval boundary: put back, nothing lost.
            name: "swapped frames",
            make: || {
                let mut f = frames(0);
                f.swap(30, 31);
                f.swap(at(14, 2), at(15, 0));
                log_of(&f)
            },
            left_out: vec![],
            moved: &[],
            says: &[
                "byte 3968: the frame with sequence number 30 comes after the frame at byte 3840 (sequence number 31) in the log; put back in sequence order",
                "2 frames out of order (put back in order)",
                "0 frames lost",
                "0 frames with a glitched time",
            ],
            never: &["left out;"],
        },
        Case {
            // Sequence numbers from 2^32 - 10, through 0.
            name: "sequence numbers near 2^32, wrapping through 0",
            make: || log_of(&frames(u32::MAX - 9)),
            left_out: vec![],
            moved: &[],
            says: &[
                "byte 0: the first good frame has sequence number 4294967286, not 0",
                "0 frames lost, 0 sequence restarts",
            ],
            never: &["frames lost (", "goes back"],
        },
        Case {
            // The frame numbered 0 after the wrap lost: one frame, not
            // four billion.
            name: "a frame lost at the wrap",
            make: || {
                let mut f = frames(u32::MAX - 9);
                f.remove(10);
                log_of(&f)
            },
            left_out: vec![10],
            moved: &[],
            says: &[
                "bytes 1280 to 1280: 1 frame lost (sequence number 0)",
                "1 frames lost, 0 sequence restarts",
            ],
            never: &["goes back"],
        },
        Case {
            // A frame written twice in a row.
            name: "a frame repeated",
            make: || {
                let mut f = frames(0);
                f.insert(41, f[40]);
                log_of(&f)
            },
            left_out: vec![],
            moved: &[],
            says: &[
                "byte 5248: the frame with sequence number 40 repeats the frame at byte 5120 (written twice?); left out",
                "1 frames repeated or behind the log (left out)",
                "0 frames out of order",
            ],
            never: &["clock glitch", "goes back"],
        },
    ]
}

#[test]
fn catalogue_of_bad_logs() {
    let s = Setup::new();
    for case in catalogue() {
        let log = (case.make)();
        let (o, records) = s.decode(&log, "st.toml", false);
        let err = text(&o.stderr);
        assert_eq!(o.status.code(), Some(0), "{}: {err}", case.name);
        let mut want = s.replay_without(&case.left_out);
        for (from, to) in case.moved {
            assert!(want.contains(from), "{}: {from}", case.name);
            want = want.replace(from, to);
        }
        assert_eq!(records, want, "{}: {err}", case.name);
        for want in case.says {
            assert!(err.contains(want), "{}: no {want:?} in\n{err}", case.name);
        }
        for not in case.never {
            assert!(!err.contains(not), "{}: {not:?} in\n{err}", case.name);
        }
        // --strict: 1 for every fault, 0 for the clean log; the same rows.
        let (o, strict) = s.decode(&log, "st.toml", true);
        let want = if case.name == "clean" { 0 } else { 1 };
        assert_eq!(o.status.code(), Some(want), "{} --strict", case.name);
        assert_eq!(strict, records, "{} --strict", case.name);
    }
}

#[test]
fn a_station_file_that_is_not_the_loggers_is_refused() {
    let s = Setup::new();
    let log = log_of(&frames(0));
    // One channel more.
    let more =
        format!("{STATION}\n[[channel]]\nid = \"rh\"\nkind = \"scalar\"\nresolution = 0.1\n");
    std::fs::write(s.dir.path().join("more.toml"), more).unwrap();
    let (o, records) = s.decode(&log, "more.toml", false);
    refused(&o, &["x.log: byte 0: the frame does not match more.toml: the logger's station has 3 channels, the station file 4"]);
    assert!(records.is_empty() && !s.dir.path().join("x.csv.partial").exists());
    // The two anemometers swapped (their ids move with their settings): the
    // kinds still fit, the fingerprint tells.
    let (a, b) = STATION.split_once("[[channel]]\nid = \"ws60\"").unwrap();
    let (ws80, rest) = a.split_once("[[channel]]\nid = \"ws80\"").unwrap();
    let (ws60, t) = b.split_once("[[channel]]").unwrap();
    let swapped = format!(
        "{ws80}[[channel]]\nid = \"ws60\"{ws60}[[channel]]\nid = \"ws80\"{rest}[[channel]]{t}"
    );
    assert!(
        swapped.find("\"ws60\"") < swapped.find("\"ws80\""),
        "{swapped}"
    );
    std::fs::write(s.dir.path().join("swapped.toml"), swapped).unwrap();
    let (o, records) = s.decode(&log, "swapped.toml", false);
    refused(
        &o,
        &[
            "x.log: byte 0: record frame of another station configuration (fingerprint 0x",
            "swapped.toml is not that file",
        ],
    );
    assert!(records.is_empty());
}

#[test]
fn version_1_logs_still_read_with_a_warning() {
    let s = Setup::new();
    let old: Vec<RecordFrame> = frames(0)
        .into_iter()
        .map(|f| RecordFrame { config: None, ..f })
        .collect();
    let log = log_of(&old);
    assert_eq!(log[4], 1, "version byte");
    let (o, records) = s.decode(&log, "st.toml", false);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    assert_eq!(records, s.replay);
    let err = text(&o.stderr);
    assert!(
        err.contains("byte 0: record frames of format version 1 carry no configuration fingerprint: whether st.toml is the station file of the logger that wrote them cannot be checked"),
        "{err}"
    );
    assert!(
        err.contains("600 frames without a configuration fingerprint"),
        "{err}"
    );
    let (o, _) = s.decode(&log, "st.toml", true);
    assert_eq!(o.status.code(), Some(1), "--strict: unchecked");
}

/// The frames with frame `i`'s counts changed by `edit` (CRC resealed).
fn edited(i: usize, edit: impl Fn(&mut RecordFrame)) -> Vec<u8> {
    let mut f = frames(0);
    edit(&mut f[i]);
    log_of(&f)
}

#[test]
fn frame_counts_no_station_makes_are_refused() {
    let s = Setup::new();
    // n_valid above n_possible on one channel: the other channels of the
    // interval held 60 samples.
    let log = edited(at(20, 1), |f| f.record.tally.valid = 61);
    let (o, records) = s.decode(&log, "st.toml", false);
    refused(&o, &["x.log: byte 7808: the frame of 2025-01-20T03:20:00Z channel ws60 counts 61 samples held (valid + missing + out of range + flagged + excluded) and 0 rejected, but the frame of channel ws80 of the same interval (byte 7680) counts 60 and 0"]);
    assert!(records.is_empty());
    // More samples than the interval has milliseconds (600,000), on every
    // channel alike.
    let mut f = frames(0);
    for c in 0..CHANNELS {
        f[at(5, c)].record.tally.missing = 600_000 - 59;
    }
    let (o, _) = s.decode(&log_of(&f), "st.toml", false);
    refused(&o, &["x.log: byte 1920: the frame's counts cannot come from a station: n_valid + n_missing + n_out_of_range = 600001, more than the 600000 milliseconds of the interval"]);
    // Samples possible other than the station's 60.
    let log = edited(at(3, 2), |f| f.record.n_possible = 600);
    let (o, _) = s.decode(&log, "st.toml", false);
    refused(&o, &["x.log: byte 1408: the frame does not match st.toml: n_possible is 600, the station's samples per interval are 60"]);
}

#[test]
fn records_rows_no_station_makes_are_refused() {
    let s = Setup::new();
    let rows: Vec<String> = s.replay.lines().map(String::from).collect();
    // Column 4 is n_valid, 3 n_possible, 11 n_missing (CONTRACT.md, records CSV).
    let edit = |row: usize, col: usize, value: &str| -> String {
        let mut out = rows.clone();
        let mut f: Vec<&str> = out[row].split(',').collect();
        f[col] = value;
        out[row] = f.join(",");
        out.join("\n") + "\n"
    };
    let cases = [
        // Row 62 is interval 20, ws60 (line 63 of the file).
        (
            edit(62, 4, "61"),
            "bad.csv:63: 2025-01-20T03:20:00Z ws60: 61 samples held (n_valid + n_missing + n_out_of_range + n_flagged + n_excluded) and 0 rejected, but ws80 of the same interval",
        ),
        (
            edit(10, 3, "600"),
            "bad.csv:11: 2025-01-20T00:30:00Z ws80: n_possible is 600, the station's samples per interval are 60",
        ),
        (
            edit(1, 11, "600000"),
            "bad.csv:2: 2025-01-20T00:00:00Z ws80: n_valid + n_missing + n_out_of_range = 600060, more than the 600000 milliseconds of the interval",
        ),
    ];
    for (csv, want) in cases {
        std::fs::write(s.dir.path().join("bad.csv"), &csv).unwrap();
        let v = s.verify("bad.csv");
        assert_eq!(v.status.code(), Some(2), "verify: {}", text(&v.stderr));
        assert!(
            text(&v.stderr).contains(want),
            "verify: {}",
            text(&v.stderr)
        );
        let r = s.run(&["report", "-c", "st.toml", "bad.csv", "--out", "rep"]);
        assert_eq!(r.status.code(), Some(2), "report: {}", text(&r.stderr));
        // The report reads every row before comparing the channels of an
        // interval; its message names the same line, interval and channel.
        let place: String = want.split(": ").take(2).collect::<Vec<_>>().join(": ");
        assert!(
            text(&r.stderr).contains(&place),
            "report: {place}: {}",
            text(&r.stderr)
        );
    }
    // The clean records pass both.
    std::fs::write(s.dir.path().join("good.csv"), &s.replay).unwrap();
    let v = s.verify("good.csv");
    assert_eq!(v.status.code(), Some(0), "{}", text(&v.stdout));
}

#[test]
fn every_frame_of_the_catalogue_logs_is_a_good_frame() {
    // The faults above are of time, order and counts, not damage: every
    // frame still scans as a good version-2 frame.
    for case in catalogue() {
        let log = (case.make)();
        assert!(
            wire::scan(&log)
                .all(|s| matches!(s, Span::Frame { frame, .. } if frame.config.is_some())),
            "{}",
            case.name
        );
    }
}
