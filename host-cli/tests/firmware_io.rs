//! The firmware's files through `tenmin`, without QEMU: `tenmin export` writes
//! a sample file, the example firmware's own replay loop and logger
//! (`firmware-example/src/{replay,logger}.rs`, compiled here by `#[path]`) turn
//! it into a record log on the host, `tenmin decode` turns the log into records
//! CSV and `tenmin verify` checks it against the samples; then the same with
//! damaged logs. `firmware-example/run-checks.sh` does the same under QEMU on
//! Cortex-M0 and Cortex-M4F.
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

use qc_core::wire::{self, FRAME_LEN};
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
use common::{tenmin, text};

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

struct Setup {
    dir: tempfile::TempDir,
    /// The replay's records of the samples.
    replay_csv: String,
    /// The firmware's record log.
    log: Vec<u8>,
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
        let o = tenmin(&["replay", "-q", "-c", "st.toml", "s.csv"], dir.path());
        ok(&o, "replay");
        Setup {
            replay_csv: text(&o.stdout),
            log,
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
    assert!(
        err.contains("fw.log: byte 512: the frame does not match"),
        "{err}"
    );
    assert!(err.contains("channel index 4, but the station has 4 channels"));
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
