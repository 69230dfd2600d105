//! The firmware's files through `tenmin`, without QEMU: `tenmin export` writes
//! a sample file, the example firmware's own replay loop and logger
//! (`firmware-example/src/{replay,logger}.rs`, compiled here by `#[path]`) turn
//! it into a record log on the host, `tenmin decode` turns the log into records
//! CSV and `tenmin verify` checks it against the samples; then the same with
//! damaged logs. The same firmware replay run as a state logger
//! (`replay::replay_states`: the logger samples, the PC finishes) writes a
//! state log, which `tenmin decode` finishes into the same records.
//! `firmware-example/run-checks.sh` does the same under QEMU on Cortex-M0 and
//! Cortex-M4F.
//!
//! The reference is the replay's own output (`tenmin replay` of the same
//! samples): two independent paths through the core (the CLI's station with
//! 64-sample gust capacity and a channel count rounded up, the firmware's
//! 8-channel, 12-sample one) must agree bit for bit.

// The firmware's files name their optional `defmt` feature, which this crate
// does not have (a module-level `allow` does not reach `cfg_attr`).
#![allow(unexpected_cfgs)]

use std::path::PathBuf;
use std::process::Output;

use qc_core::wire::{self, Span, StateFrame, FRAME_LEN};
use qc_core::{Kind, Screen};

#[allow(dead_code)]
#[path = "../../firmware-example/src/logger.rs"]
mod logger;
#[allow(dead_code)]
#[path = "../../firmware-example/src/replay.rs"]
mod replay;
// The replay loop's own unit tests use the fixed scenario; they run here too.
#[allow(dead_code)]
#[path = "../../firmware-example/src/scenario.rs"]
mod scenario;

mod common;
use common::{refused, tenmin, text};

fn ok(o: &Output, what: &str) {
    assert!(
        o.status.success(),
        "{what}: {:?}\nstdout: {}\nstderr: {}",
        o.status,
        text(&o.stdout),
        text(&o.stderr)
    );
}

/// A station of five channels using every kind of setting the sample file
/// header carries: values and raw counts, a calibration, a vane with a
/// mounting offset and a speed link, screening overrides with a partner, an
/// icing test and a switched-off test.
const STATION: &str = r#"
[logging]
interval_s = 600
sample_rate_hz = 1
missing_values = [-999, -9999]

[[channel]]
id = "ws"
kind = "speed"
range = [0, 75]
resolution = 0.01
gust_window_s = 3

[[channel]]
id = "wsb"
kind = "speed"
slope = 0.049
offset = 0.25
gust_window_s = 5

[channel.screen]
partner = "ws"
step_limit = 8
off = ["flatline"]

[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
offset_deg = 4
speed_channel = "ws"

[channel.screen]
icing = { temperature = "t", humidity = "rh", max_temperature = 1.5 }

[[channel]]
id = "t"
kind = "scalar"
range = [-40, 50]
resolution = 0.1

[[channel]]
id = "rh"
kind = "scalar"
range = [0, 100]
resolution = 0.1
"#;

/// 2025-01-20T00:00:00Z, s.
const T0: i64 = 1_737_331_200;

/// Three and a half hours of invented 1 Hz samples (epoch seconds) with a
/// 25-minute outage (rows absent: two intervals without samples), empty
/// fields, NaN, missing-value codes, out-of-range readings, a duplicate and a
/// backward time, a cold humid spell with a stuck vane.
fn samples() -> String {
    let mut s = String::from("time,ws,wsb,wd,t,rh\n");
    let mut x: u64 = 0x2545_F491;
    let mut rnd = || {
        // xorshift64 (Marsaglia 2003)
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        (x >> 11) as f64 / (1u64 << 53) as f64
    };
    for i in 0..12_600i64 {
        if (4_000..5_500).contains(&i) {
            continue;
        }
        let u = 6.0 + 3.0 * ((i as f64) / 900.0).sin() + 1.5 * (rnd() - 0.5);
        let ws = if i % 97 == 0 {
            String::new()
        } else if i == 777 {
            "80".into()
        } else {
            format!("{:.2}", u.max(0.0))
        };
        let wsb = if i % 401 == 5 {
            "-999".into()
        } else {
            format!("{}", ((u * 1.01 - 0.25) / 0.049).round().max(0.0) as i64)
        };
        let wd = if (7_000..8_000).contains(&i) {
            "2710".into()
        } else {
            format!(
                "{}",
                ((2_900.0 + 700.0 * (rnd() - 0.5)) as i64).rem_euclid(3_600)
            )
        };
        let cold = (6_500..9_000).contains(&i);
        let t = if i % 1_000 == 3 {
            "NaN".into()
        } else {
            format!("{:.1}", if cold { -1.0 } else { 4.0 } + rnd())
        };
        let rh = if i == 200 {
            "104.2".into()
        } else if i % 733 == 0 {
            "-9999".into()
        } else {
            format!("{:.1}", if cold { 95.0 } else { 70.0 } + 3.0 * rnd())
        };
        s.push_str(&format!("{},{ws},{wsb},{wd},{t},{rh}\n", T0 + i));
        if i == 3_000 {
            // The same time again, then a time 2 s back.
            s.push_str(&format!("{},1,1,1,1,1\n", T0 + i));
            s.push_str(&format!("{},1,1,1,1,1\n", T0 + i - 2));
        }
    }
    s
}

/// A sample file in memory, read a few bytes at a time as the firmware reads.
struct Bytes<'a>(&'a [u8]);

impl replay::Source for Bytes<'_> {
    type Error = ();
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, ()> {
        let n = buf.len().min(self.0.len()).min(100);
        buf[..n].copy_from_slice(&self.0[..n]);
        self.0 = &self.0[n..];
        Ok(n)
    }
}

/// The record log in memory.
struct Log(Vec<u8>);

impl replay::Sink for Log {
    type Error = ();
    fn write_frame(&mut self, frame: &[u8; FRAME_LEN]) -> Result<(), ()> {
        self.0.extend_from_slice(frame);
        Ok(())
    }
}

/// The firmware's replay of a sample file: its record log.
fn firmware_replay(tmsf: &[u8]) -> Result<Vec<u8>, String> {
    let mut layouts = Box::new(replay::ReplayLayoutSlot::new());
    let mut slot = Box::new(replay::ReplaySlot::new());
    let mut log = Log(Vec::new());
    replay::replay(&mut Bytes(tmsf), &mut log, &mut layouts, &mut slot)
        .map_err(|e| e.to_string())?;
    Ok(log.0)
}

/// The firmware's replay of a sample file as a state logger: its state log.
fn firmware_replay_states(tmsf: &[u8]) -> Result<Vec<u8>, String> {
    let mut layouts = Box::new(replay::ReplayLayoutSlot::new());
    let mut slot = Box::new(replay::ReplaySlot::new());
    let mut log = Log(Vec::new());
    replay::replay_states(&mut Bytes(tmsf), &mut log, &mut layouts, &mut slot)
        .map_err(|e| e.to_string())?;
    Ok(log.0)
}

struct Setup {
    dir: tempfile::TempDir,
    /// The replay's records of the samples.
    replay_csv: String,
    /// The firmware's record log.
    log: Vec<u8>,
    /// The firmware's state log of the same samples.
    states: Vec<u8>,
}

impl Setup {
    fn new() -> Self {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("st.toml"), STATION).unwrap();
        std::fs::write(dir.path().join("s.csv"), samples()).unwrap();
        let o = tenmin(
            &["export", "-c", "st.toml", "s.csv", "-o", "s.tmsf"],
            dir.path(),
        );
        ok(&o, "export");
        let tmsf = std::fs::read(dir.path().join("s.tmsf")).unwrap();
        let log = firmware_replay(&tmsf).unwrap();
        let states = firmware_replay_states(&tmsf).unwrap();
        let o = tenmin(&["replay", "-q", "-c", "st.toml", "s.csv"], dir.path());
        ok(&o, "replay");
        Setup {
            replay_csv: text(&o.stdout),
            log,
            states,
            dir,
        }
    }

    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// `tenmin decode` of `log` (written as `name`): its output and records.
    fn decode(&self, name: &str, log: &[u8], strict: bool) -> (Output, String) {
        std::fs::write(self.path(name), log).unwrap();
        let csv = format!("{name}.csv");
        let mut args = vec!["decode", "-c", "st.toml", name, "-o", csv.as_str()];
        if strict {
            args.push("--strict");
        }
        let o = tenmin(&args, self.dir.path());
        let records = std::fs::read_to_string(self.path(&csv)).unwrap_or_default();
        (o, records)
    }

    fn verify(&self, records: &str) -> Output {
        tenmin(
            &[
                "verify",
                "-q",
                "-c",
                "st.toml",
                "--samples",
                "s.csv",
                "--records",
                records,
                "--max-diffs",
                "1000",
            ],
            self.dir.path(),
        )
    }
}

/// The rows of a records CSV.
fn lines(csv: &str) -> Vec<&str> {
    csv.lines().collect()
}

#[test]
fn export_firmware_replay_decode_verify() {
    let s = Setup::new();
    // 12,600 s are 21 intervals; the outage from 4,000 s to 5,500 s leaves
    // intervals 7 and 8 without samples, so the logger writes 19 intervals of
    // 5 channels: 95 frames.
    assert_eq!(s.log.len(), 95 * FRAME_LEN);
    let (o, records) = s.decode("fw.log", &s.log, true);
    ok(&o, "decode --strict of a clean log");
    assert!(
        text(&o.stderr).contains("95 good frames"),
        "{}",
        text(&o.stderr)
    );
    assert!(text(&o.stderr).contains("10 of them for 2 intervals with no samples"));
    // Bit for bit the replay's records, text included: the same writer.
    assert_eq!(records, s.replay_csv);
    assert_eq!(lines(&records).len(), 1 + 21 * 5);
    let v = s.verify("fw.log.csv");
    ok(&v, "verify");
    assert!(
        text(&v.stdout).contains("105 rows compared"),
        "{}",
        text(&v.stdout)
    );
    assert!(text(&v.stdout).contains("every field identical"));
}

#[test]
fn export_header_carries_the_station_file() {
    let s = Setup::new();
    let tmsf = std::fs::read(s.path("s.tmsf")).unwrap();
    let h = wire::decode_sample_header::<8>(&tmsf).unwrap();
    assert_eq!(h.count(), 5);
    assert_eq!(h.station.interval_s, 600);
    assert_eq!(h.station.samples_per_interval, 600);
    assert_eq!(
        h.station.missing_values,
        [Some(-999.0), Some(-9999.0), None, None]
    );
    let c = h.configs();
    let kinds: Vec<Kind> = c.iter().map(|c| c.kind).collect();
    assert_eq!(
        kinds,
        [
            Kind::Speed,
            Kind::Speed,
            Kind::Direction,
            Kind::Scalar,
            Kind::Scalar
        ]
    );
    // As written in the station file (CONTRACT.md, "Station file").
    assert_eq!(c[0].scale.step, 0.01);
    assert_eq!(c[0].range, (0.0, 75.0));
    assert_eq!((c[0].gust_window, c[1].gust_window), (3, 5));
    assert_eq!((c[1].scale.step, c[1].scale.offset), (0.049, 0.25));
    assert_eq!(c[1].screen.partner, Some(0));
    assert_eq!(c[1].screen.step_limit, Some(8.0));
    assert_eq!(c[1].screen.flat_span_s, None);
    assert_eq!(c[2].scale.step, 0.1);
    assert_eq!(c[2].mounting_offset_deg, 4.0);
    assert_eq!(c[2].speed_channel, Some(0));
    let ice = c[2].screen.icing.unwrap();
    assert_eq!(
        (
            ice.temperature,
            ice.humidity,
            ice.max_temperature,
            ice.min_humidity
        ),
        (3, 4, 1.5, 85.0)
    );
    assert_eq!(c[3].range, (-40.0, 50.0));
    assert_eq!(c[4].screen, Screen::for_kind(Kind::Scalar));
    // After the header, one frame per row that reads, duplicates included.
    let rows = samples().lines().count() - 1;
    let frames = wire::SampleReader::<8>::new(&tmsf).unwrap().count();
    assert_eq!(frames, rows);
}

#[test]
fn damaged_logs_are_reported_and_the_rest_verifies() {
    let s = Setup::new();
    let replay_rows = lines(&s.replay_csv);
    let frame = |i: usize| i * FRAME_LEN;
    // Frame 7 with a flipped bit, and the last frame cut short (a torn tail).
    let mut bad = s.log.clone();
    bad[frame(7) + 33] ^= 0x04;
    bad.truncate(frame(94) + 90);
    let (o, records) = s.decode("bad.log", &bad, false);
    ok(&o, "decode of a damaged log, without --strict");
    let err = text(&o.stderr);
    assert!(
        err.contains("bytes 896 to 1024 (128 bytes): damaged"),
        "{err}"
    );
    assert!(err.contains("1 frame lost (sequence number 7)"), "{err}");
    assert!(
        err.contains("bytes 12032 to 12122 (90 bytes): torn tail"),
        "{err}"
    );
    let (o, _) = s.decode("bad.log", &bad, true);
    assert_eq!(o.status.code(), Some(1), "--strict on a damaged log");
    // The rows are the replay's less the two lost ones: frame 7 is channel 2
    // of the second interval (line 9, index 8, after the header and 7 rows),
    // the cut one is the very last row.
    let mut want: Vec<&str> = replay_rows.clone();
    want.pop();
    want.remove(8);
    assert_eq!(lines(&records), want);
    let v = s.verify("bad.log.csv");
    assert_eq!(v.status.code(), Some(1));
    let out = text(&v.stdout);
    assert!(out.starts_with("verify: 2 difference(s)"), "{out}");
    assert_eq!(
        out.matches("row missing from the logger records").count(),
        2
    );
}

#[test]
fn lost_intervals_are_not_guessed() {
    let s = Setup::new();
    // Interval 4 lost whole: frames 20 to 24 cut out of the log. Whether it
    // held samples is unknown, so no rows are made up for it.
    let mut log = s.log[..20 * FRAME_LEN].to_vec();
    log.extend_from_slice(&s.log[25 * FRAME_LEN..]);
    let (o, records) = s.decode("gap.log", &log, true);
    assert_eq!(o.status.code(), Some(1));
    let err = text(&o.stderr);
    assert!(
        err.contains("5 frames lost (sequence numbers 20 to 24)"),
        "{err}"
    );
    assert!(
        err.contains("1 intervals without frames where frames were lost"),
        "{err}"
    );
    let mut want = lines(&s.replay_csv);
    want.drain(21..26);
    assert_eq!(lines(&records), want);
    // Erased flash after the log is not damage.
    let mut erased = s.log.clone();
    erased.extend(std::iter::repeat_n(0xFF, 4096));
    let (o, records) = s.decode("erased.log", &erased, true);
    ok(&o, "decode with erased flash after the frames");
    assert_eq!(records, s.replay_csv);
    assert!(text(&o.stderr).contains("4096 bytes of erased flash"));
}

#[test]
fn bad_input_is_refused_with_its_place() {
    let s = Setup::new();
    // The log of another station: it has 5 channels, this one 4.
    let four = STATION
        .split("[[channel]]")
        .take(5)
        .collect::<Vec<_>>()
        .join("[[channel]]")
        .replace(
            "[channel.screen]\nicing = { temperature = \"t\", humidity = \"rh\", max_temperature = 1.5 }\n",
            "",
        );
    std::fs::write(s.path("four.toml"), four).unwrap();
    std::fs::write(s.path("fw.log"), &s.log).unwrap();
    let o = tenmin(&["decode", "-c", "four.toml", "fw.log"], s.dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    // Every frame says how many channels its logger has: the first one tells.
    assert!(
        err.contains("fw.log: byte 0: the frame does not match four.toml: the logger's station has 5 channels, the station file 4"),
        "{err}"
    );
    // A bad row: export stops with the replay's own message...
    let mut csv = samples();
    csv = csv.replacen("\n1737331210,", "\n1737331210,8.3.1", 1);
    std::fs::write(s.path("bad.csv"), &csv).unwrap();
    let e = tenmin(
        &["export", "-c", "st.toml", "bad.csv", "-o", "b.tmsf"],
        s.dir.path(),
    );
    let r = tenmin(&["replay", "-c", "st.toml", "bad.csv"], s.dir.path());
    assert_eq!((e.status.code(), r.status.code()), (Some(2), Some(2)));
    assert!(
        text(&e.stderr).contains("bad.csv:12: field 2 (ws)"),
        "{}",
        text(&e.stderr)
    );
    assert_eq!(text(&e.stderr), text(&r.stderr));
    assert!(!s.path("b.tmsf").exists() && !s.path("b.tmsf.partial").exists());
    // ... and with --skip-bad-rows leaves the row out, as the replay does.
    let e = tenmin(
        &[
            "export",
            "--skip-bad-rows",
            "-c",
            "st.toml",
            "bad.csv",
            "-o",
            "b.tmsf",
        ],
        s.dir.path(),
    );
    ok(&e, "export --skip-bad-rows");
    assert!(
        text(&e.stderr).contains("1 bad rows"),
        "{}",
        text(&e.stderr)
    );
    let log = firmware_replay(&std::fs::read(s.path("b.tmsf")).unwrap()).unwrap();
    let (_, records) = s.decode("b.log", &log, true);
    let r = tenmin(
        &[
            "replay",
            "-q",
            "--skip-bad-rows",
            "-c",
            "st.toml",
            "bad.csv",
        ],
        s.dir.path(),
    );
    assert_eq!(records, text(&r.stdout));
}

#[test]
fn the_firmware_refuses_stations_that_do_not_fit() {
    let dir = tempfile::tempdir().unwrap();
    let mut nine = String::from("[logging]\nsample_rate_hz = 1\n");
    let mut header = String::from("time");
    for i in 0..9 {
        nine.push_str(&format!(
            "\n[[channel]]\nid = \"c{i}\"\nkind = \"scalar\"\nresolution = 0.1\n"
        ));
        header.push_str(&format!(",c{i}"));
    }
    std::fs::write(dir.path().join("nine.toml"), nine).unwrap();
    std::fs::write(
        dir.path().join("nine.csv"),
        format!("{header}\n{T0},1,2,3,4,5,6,7,8,9\n"),
    )
    .unwrap();
    let o = tenmin(
        &[
            "export",
            "-q",
            "-c",
            "nine.toml",
            "nine.csv",
            "-o",
            "n.tmsf",
        ],
        dir.path(),
    );
    ok(&o, "export of 9 channels");
    let e = firmware_replay(&std::fs::read(dir.path().join("n.tmsf")).unwrap()).unwrap_err();
    assert_eq!(
        e,
        "the sample file's station has 9 channels; this logger holds at most 8"
    );
}

// ---------------------------------------------------------------------------
// State logs: the logger samples, `tenmin decode` finishes.

/// The good state frames of a state log, in log order.
fn state_frames(log: &[u8]) -> Vec<StateFrame> {
    wire::scan(log)
        .filter_map(|span| match span {
            Span::State { frame, .. } => Some(frame),
            _ => None,
        })
        .collect()
}

/// Channels of [`STATION`].
const CHANNELS: usize = 5;

/// The interval of `f`, counted from [`T0`] (10-minute intervals).
fn interval_of(f: &StateFrame) -> usize {
    ((f.interval_start.millis() / 1000 - T0) / 600) as usize
}

/// The line of `f`'s row in the replay's records (the header is line 0).
fn line_of(f: &StateFrame) -> usize {
    1 + interval_of(f) * CHANNELS + usize::from(f.channel)
}

/// The interval of the replay's records line `line` (not the header).
fn interval_of_line(line: usize) -> usize {
    (line - 1) / CHANNELS
}

/// Checks that the decoded `records` are the replay's lines that `keep`
/// keeps, in order. Rows of the intervals in `incomplete` (finished without
/// some channels' states) may differ from the replay's in their flags only:
/// the cross-channel tests saw the lost channels without samples. Every
/// other row is identical, text and all.
fn assert_rows(
    records: &str,
    replay: &str,
    keep: impl Fn(usize) -> bool,
    incomplete: &[usize],
    what: &str,
) {
    let want: Vec<(usize, &str)> = replay
        .lines()
        .enumerate()
        .filter(|(i, _)| keep(*i))
        .collect();
    let got: Vec<&str> = records.lines().collect();
    assert_eq!(got.len(), want.len(), "{what}: rows\n{records}");
    for (g, (i, w)) in got.iter().zip(&want) {
        if *i > 0 && incomplete.contains(&interval_of_line(*i)) {
            let strip = |l: &str| {
                let mut f: Vec<String> = l.split(',').map(String::from).collect();
                f[10].clear();
                f
            };
            assert_eq!(strip(g), strip(w), "{what}: line {i} (flags aside)");
        } else {
            assert_eq!(g, w, "{what}: line {i}");
        }
    }
}

#[test]
fn state_log_finished_by_decode_gives_the_replay_records() {
    let s = Setup::new();
    // The same 19 intervals of 5 channels as the record log: 95 state frames,
    // stamped with the fingerprint of the station file's configuration.
    assert_eq!(s.states.len(), 95 * FRAME_LEN);
    let frames = state_frames(&s.states);
    assert_eq!(frames.len(), 95);
    assert!(frames.iter().all(|f| f.channels == 5));
    // The samples hold rejected times (a duplicate and a backward one) and
    // an outage of two intervals: both reach the records.
    let rejected = s
        .replay_csv
        .lines()
        .skip(1)
        .filter(|l| l.split(',').nth(13) != Some("0"))
        .count();
    assert_eq!(rejected, CHANNELS, "{}", s.replay_csv);
    let (o, records) = s.decode("st.log", &s.states, true);
    ok(&o, "decode --strict of a clean state log");
    let err = text(&o.stderr);
    assert!(
        err.contains(
            "state log: 95 good state frames, 19 intervals finished here (0 of them incomplete), \
             105 rows written (10 of them for 2 intervals with no samples)"
        ),
        "{err}"
    );
    // Finished on the PC, bit for bit the replay's records.
    assert_eq!(records, s.replay_csv);
    let v = s.verify("st.log.csv");
    ok(&v, "verify of the state log's records");
    assert!(text(&v.stdout).contains("every field identical"));
    // The record log of the same samples decodes to the same text.
    let (_, from_records) = s.decode("fw.log", &s.log, true);
    assert_eq!(records, from_records);
}

#[test]
fn state_log_cut_anywhere_loses_only_the_cut_frame() {
    let s = Setup::new();
    let frames = state_frames(&s.states);
    // Every byte of the first three frames, and a stride over the rest that
    // meets every offset within a frame class by class.
    let cuts: Vec<usize> = (0..3 * FRAME_LEN)
        .chain((3 * FRAME_LEN..s.states.len()).step_by(41))
        .collect();
    // Each cut runs `tenmin decode` twice (about 1,000 runs): two threads
    // take every other cut, each with its own file names, so that this test
    // does not run alone on one core at the end of the suite.
    std::thread::scope(|scope| {
        for part in 0..2 {
            let (s, frames, cuts) = (&s, &frames, &cuts);
            scope.spawn(move || {
                for &cut in cuts.iter().skip(part).step_by(2) {
                    check_cut(s, frames, cut, part);
                }
            });
        }
    });
}

/// [`state_log_cut_anywhere_loses_only_the_cut_frame`] at one cut; `part`
/// names its files.
fn check_cut(s: &Setup, frames: &[StateFrame], cut: usize, part: usize) {
    let n = frames.len();
    let (cut_log, torn_log) = (format!("cut{part}.log"), format!("torn{part}.log"));
    let (i, j) = (cut / FRAME_LEN, cut % FRAME_LEN);
    // 1. The log ends at `cut` (power lost while frame `i` was written,
    //    and nothing after): the frames before `i` are all there.
    let (o, records) = s.decode(&cut_log, &s.states[..cut], false);
    ok(&o, &format!("decode of the log cut at byte {cut}"));
    let err = text(&o.stderr);
    assert_eq!(j != 0, err.contains("torn tail"), "cut at {cut}: {err}");
    let last = i.checked_sub(1).map(|p| &frames[p]);
    let incomplete: Vec<usize> = last
        .filter(|f| usize::from(f.channel) + 1 < CHANNELS)
        .map(interval_of)
        .into_iter()
        .collect();
    assert_eq!(
        !incomplete.is_empty(),
        err.contains("did not arrive"),
        "cut at {cut}: {err}"
    );
    let end = last.map_or(0, line_of);
    // When the last interval left jumps forward, no frame after it
    // confirms its time: the empty intervals before it are not written.
    let unconfirmed = last
        .map(interval_of)
        .and_then(|k| {
            let first = frames[..i].iter().position(|f| interval_of(f) == k)?;
            let b = interval_of(frames.get(first.checked_sub(1)?)?);
            (k > b + 1).then_some(b + 1..k)
        })
        .unwrap_or(0..0);
    assert_eq!(
        !unconfirmed.is_empty(),
        err.contains("with no later frame to confirm the time"),
        "cut at {cut}: {err}"
    );
    assert_rows(
        &records,
        &s.replay_csv,
        |l| l <= end && (l == 0 || !unconfirmed.contains(&interval_of_line(l))),
        &incomplete,
        &format!("log cut at byte {cut}"),
    );
    // 2. Frame `i` torn after `j` bytes and the log going on after it
    //    (a write cut short, the next one appended behind it): only its
    //    row is lost, and the intervals without samples next to it. (The
    //    last frame torn is the cut log above.)
    if i + 1 >= n {
        return;
    }
    let mut torn = s.states[..cut].to_vec();
    torn.extend_from_slice(&s.states[(i + 1) * FRAME_LEN..]);
    let (o, records) = s.decode(&torn_log, &torn, false);
    ok(&o, &format!("decode with frame {i} torn after {j} bytes"));
    let err = text(&o.stderr);
    let lost = if i == 0 {
        "the first good frame has sequence number 1, not 0: the frames before it are lost"
            .to_string()
    } else {
        format!("1 frame lost (sequence number {i})")
    };
    assert!(err.contains(&lost), "frame {i} torn after {j} bytes: {err}");
    assert_eq!(
        j != 0,
        err.contains("): damaged (no good frame there)"),
        "{err}"
    );
    assert_rows_lost(
        s,
        &records,
        frames,
        i,
        &format!("frame {i} torn after {j} bytes"),
    );
}

/// Checks the records of the state log less frame `i`: the replay's rows
/// without frame `i`'s row nor those of the intervals without samples next to
/// it (whether they held samples is unknown once a frame is lost); the other
/// rows of frame `i`'s interval may differ in their flags.
fn assert_rows_lost(s: &Setup, records: &str, frames: &[StateFrame], i: usize, what: &str) {
    let lost = line_of(&frames[i]);
    let before = i.checked_sub(1).map_or(0, |p| interval_of(&frames[p]));
    let after = frames.get(i + 1).map_or(usize::MAX, interval_of);
    let unknown = |l: usize| l > 0 && (before + 1..after).contains(&interval_of_line(l));
    assert_rows(
        records,
        &s.replay_csv,
        |l| l != lost && !unknown(l),
        &[interval_of(&frames[i])],
        what,
    );
}

#[test]
fn a_flipped_bit_in_a_state_frame_loses_that_frame_only() {
    let s = Setup::new();
    let frames = state_frames(&s.states);
    // A byte of every field of the state frame layout (qc_core::wire).
    let classes: [(usize, &str); 15] = [
        (1, "sync marker"),
        (4, "version"),
        (5, "form"),
        (6, "channel"),
        (7, "channel count"),
        (9, "sequence number"),
        (15, "interval start"),
        (21, "fingerprint"),
        (30, "sample counts"),
        (41, "spikes"),
        (44, "gust flag"),
        (46, "reserved"),
        (60, "sums"),
        (118, "unused bytes"),
        (126, "CRC"),
    ];
    for (c, (at, class)) in classes.iter().enumerate() {
        // A different frame and bit each time, never the first or the last.
        let i = 1 + (c * 13) % (frames.len() - 2);
        let mut bad = s.states.clone();
        bad[i * FRAME_LEN + at] ^= 1 << (c % 8);
        let (o, records) = s.decode("flip.log", &bad, false);
        let what = format!("bit {} of the {class} (byte {at}) of frame {i}", c % 8);
        ok(&o, &what);
        let err = text(&o.stderr);
        let (from, to) = (i * FRAME_LEN, (i + 1) * FRAME_LEN);
        assert!(
            err.contains(&format!("bytes {from} to {to} (128 bytes): damaged")),
            "{what}: {err}"
        );
        assert!(
            err.contains(&format!("1 frame lost (sequence number {i})")),
            "{what}: {err}"
        );
        assert!(err.contains("1 damaged spans (128 bytes)"), "{what}: {err}");
        assert_rows_lost(&s, &records, &frames, i, &what);
        if c == 0 {
            let (o, strict) = s.decode("flip.log", &bad, true);
            assert_eq!(o.status.code(), Some(1), "--strict: {what}");
            assert_eq!(strict, records);
        }
    }
}

#[test]
fn an_incomplete_interval_names_its_lost_channels() {
    let s = Setup::new();
    let frames = state_frames(&s.states);
    // Frames 12 and 13 (interval 2, "wd" and "t") cut out.
    let mut log = s.states[..12 * FRAME_LEN].to_vec();
    log.extend_from_slice(&s.states[14 * FRAME_LEN..]);
    let (o, records) = s.decode("two.log", &log, true);
    assert_eq!(o.status.code(), Some(1), "--strict with frames lost");
    let err = text(&o.stderr);
    assert!(
        err.contains("2 frames lost (sequence numbers 12 to 13)"),
        "{err}"
    );
    assert!(
        err.contains(
            "2025-01-20T00:20:00Z: the states of wd, t did not arrive (frames lost, damaged or left out)"
        ),
        "{err}"
    );
    assert!(
        err.contains(
            "cross-channel screening flags (pair, shear, icing) treat them as having no samples"
        ),
        "{err}"
    );
    assert!(
        err.contains("19 intervals finished here (1 of them incomplete)"),
        "{err}"
    );
    let lost = [line_of(&frames[12]), line_of(&frames[13])];
    assert_rows(
        &records,
        &s.replay_csv,
        |l| !lost.contains(&l),
        &[2],
        "wd, t lost",
    );
    // The rh state of 02:00 lost: the icing test of wd, which needs the
    // humidity, finds none in that interval and stays quiet there.
    let i = frames
        .iter()
        .position(|f| interval_of(f) == 12 && f.channel == 4)
        .unwrap();
    let mut log = s.states[..i * FRAME_LEN].to_vec();
    log.extend_from_slice(&s.states[(i + 1) * FRAME_LEN..]);
    let (o, records) = s.decode("rh.log", &log, false);
    ok(&o, "decode with rh of 02:00 lost");
    let wd = |csv: &str| {
        csv.lines()
            .find(|l| l.starts_with("2025-01-20T02:00:00Z,2025-01-20T02:10:00Z,wd,"))
            .map(|l| l.split(',').nth(10).unwrap().to_string())
    };
    assert_eq!(wd(&s.replay_csv).as_deref(), Some("implausible|icing"));
    assert_eq!(wd(&records).as_deref(), Some("implausible"));
    assert_rows_lost(&s, &records, &frames, i, "rh of 02:00 lost");
    // A whole interval lost with the empty ones after it: none of them is
    // written or finished, and the next interval is finished as usual.
    let mut log = s.states[..30 * FRAME_LEN].to_vec();
    log.extend_from_slice(&s.states[35 * FRAME_LEN..]);
    let (o, records) = s.decode("whole.log", &log, false);
    ok(&o, "decode with interval 6 lost");
    let err = text(&o.stderr);
    assert!(
        err.contains("3 intervals without frames where frames were lost or left out; no rows written for them"),
        "{err}"
    );
    assert!(!err.contains("did not arrive"), "{err}");
    assert!(
        err.contains("18 intervals finished here (0 of them incomplete)"),
        "{err}"
    );
    assert_rows(
        &records,
        &s.replay_csv,
        |l| l == 0 || !(6..9).contains(&interval_of_line(l)),
        &[],
        "interval 6 lost",
    );
}

#[test]
fn a_state_log_written_twice_is_read_once() {
    let s = Setup::new();
    let mut twice = s.states.clone();
    twice.extend_from_slice(&s.states);
    let (o, records) = s.decode("twice.log", &twice, true);
    assert_eq!(o.status.code(), Some(1));
    let err = text(&o.stderr);
    // The second copy is behind everything read (its sequence numbers start
    // again): left out, not counted as out of order or lost.
    assert!(
        err.contains("95 frames repeated or behind the log (left out)"),
        "{err}"
    );
    assert!(err.contains("1 sequence restarts"), "{err}");
    assert!(err.contains("0 frames lost"), "{err}");
    assert_eq!(records, s.replay_csv);
}

#[test]
fn a_state_log_of_another_configuration_is_refused() {
    let s = Setup::new();
    let fingerprint = state_frames(&s.states)[0].fingerprint;
    std::fs::write(s.path("st.log"), &s.states).unwrap();
    // One screening setting changed: the statistics would be the same, the
    // flags not; the fingerprint tells.
    let changed = STATION.replace("step_limit = 8", "step_limit = 9");
    assert_ne!(changed, STATION);
    std::fs::write(s.path("changed.toml"), changed).unwrap();
    let o = tenmin(
        &["decode", "-c", "changed.toml", "st.log", "-o", "c.csv"],
        s.dir.path(),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(
        err.contains(&format!(
            "st.log: byte 0: state frame of another station configuration (fingerprint {fingerprint:#010x}, the station file's is 0x"
        )),
        "{err}"
    );
    assert!(err.contains("changed.toml"), "{err}");
    assert!(!s.path("c.csv").exists() && !s.path("c.csv.partial").exists());
    // The record log of the same logger carries it too (record frames of
    // version 2).
    let o = tenmin(&["decode", "-c", "changed.toml", "fw.log"], s.dir.path());
    assert_eq!(o.status.code(), Some(2), "no fw.log yet");
    std::fs::write(s.path("fw.log"), &s.log).unwrap();
    let o = tenmin(
        &["decode", "-q", "-c", "changed.toml", "fw.log"],
        s.dir.path(),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(
        text(&o.stderr).contains(&format!(
            "fw.log: byte 0: record frame of another station configuration (fingerprint {fingerprint:#010x}, the station file's is 0x"
        )),
        "{}",
        text(&o.stderr)
    );
    // A state that does not fit its channel (the vane's state in a frame of
    // the first anemometer, fingerprint and CRC good) names the channel.
    let frames = state_frames(&s.states);
    let mut wrong = s.states.clone();
    let mut bytes = [0u8; FRAME_LEN];
    wire::encode_state(
        &StateFrame {
            state: frames[2].state,
            ..frames[0]
        },
        &mut bytes,
    );
    wrong[..FRAME_LEN].copy_from_slice(&bytes);
    let (o, _) = s.decode("wrong.log", &wrong, false);
    refused(&o, &["wrong.log: byte 0: the frame does not match st.toml: channel 0 (ws) takes a Speed state, the frame holds a LinkedDirection state"]);
    // A station of another channel count says so.
    let fewer = STATION
        .rsplit_once("[[channel]]")
        .unwrap()
        .0
        .replace("humidity = \"rh\"", "humidity = \"t\"");
    std::fs::write(s.path("fewer.toml"), fewer).unwrap();
    let o = tenmin(&["decode", "-c", "fewer.toml", "st.log"], s.dir.path());
    refused(&o, &["byte 0: the frame does not match fewer.toml: the logger's station has 5 channels, the station file 4"]);
}

#[test]
fn a_log_mixing_record_and_state_frames_is_refused() {
    let s = Setup::new();
    let at = 10 * FRAME_LEN;
    let mut mixed = s.states[..at].to_vec();
    mixed.extend_from_slice(&s.log[at..]);
    let (o, _) = s.decode("mixed.log", &mixed, false);
    refused(&o, &["mixed.log: byte 1280: a record frame in a state log (its first good frame, at byte 0, is a state frame)"]);
    // And the other way round, after a damaged span.
    let mut mixed = s.log[..at].to_vec();
    mixed.extend_from_slice(&[0x55; 7]);
    mixed.extend_from_slice(&s.states[at..]);
    let (o, _) = s.decode("mixed.log", &mixed, false);
    refused(&o, &["mixed.log: byte 1287: a state frame in a record log (its first good frame, at byte 0, is a record frame)"]);
}

#[test]
fn a_clock_jump_between_frames_is_refused_unless_allowed() {
    let s = Setup::new();
    // The record log with the interval starts of its second half moved 400
    // days on (sequence numbers still consecutive: no frame lost, so the
    // intervals between would be written as empty).
    let half = (s.log.len() / FRAME_LEN / 2) * FRAME_LEN;
    let mut jumped = s.log[..half].to_vec();
    for span in wire::scan(&s.log[half..]) {
        let Span::Frame { mut frame, .. } = span else {
            panic!("{span:?}")
        };
        frame.interval_start =
            qc_core::Timestamp::from_millis(frame.interval_start.millis() + 400 * 86_400_000);
        let mut b = [0u8; FRAME_LEN];
        wire::encode_record(&frame, &mut b);
        jumped.extend_from_slice(&b);
    }
    let (o, _) = s.decode("jump.log", &jumped, false);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(
        err.contains(&format!(
            "jump.log: after the frame at byte {}: the frames jump forward 400.",
            half - FRAME_LEN
        )) && err.contains("more than --max-gap-days 366 allows"),
        "{err}"
    );
    assert!(!s.path("jump.log.csv").exists());
    // Allowed: every interval between is written as an empty row.
    std::fs::write(s.path("jump.log"), &jumped).unwrap();
    let o = tenmin(
        &[
            "decode",
            "-c",
            "st.toml",
            "jump.log",
            "-o",
            "jump.csv",
            "--max-gap-days",
            "401",
        ],
        s.dir.path(),
    );
    ok(&o, "decode --max-gap-days 401");
    let rows = std::fs::read_to_string(s.path("jump.csv"))
        .unwrap()
        .lines()
        .count();
    assert!(rows > lines(&s.replay_csv).len() + 400 * 144, "{rows}");
}
