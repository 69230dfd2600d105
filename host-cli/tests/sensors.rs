//! The sensor history (`[campaign] sensors`): the example of
//! `examples/station-history/` run as a user would, its re-scaled statistics
//! against numpy, a history against its periods replayed alone, a state
//! logger re-calibrated at the site visit, and histories that are refused.

use qc_core::wire::{encode_state, StateFrame, FRAME_LEN};
use qc_core::{Ended, Reading, Sampler, Timestamp};

mod common;
use common::{exits, root, tenmin, text, write};

const STATION: &str = "examples/station-history/station.toml";
const SAMPLES: [&str; 2] = [
    "examples/station-history/samples-1.csv",
    "examples/station-history/samples-2.csv",
];

/// Runs tenmin from the repository root; checks exit code 0; returns stdout.
fn ok(args: &[&str]) -> Vec<u8> {
    let o = tenmin(args, &root());
    assert_eq!(
        o.status.code(),
        Some(0),
        "tenmin {args:?}: {}",
        text(&o.stderr)
    );
    o.stdout
}

/// `tenmin verify` of `records` against the example's samples, from the
/// repository root.
fn verify(records: &str, extra: &[&str]) -> std::process::Output {
    let mut args = vec![
        "verify",
        "-q",
        "-c",
        STATION,
        "--samples",
        SAMPLES[0],
        SAMPLES[1],
        "--records",
        records,
    ];
    args.extend_from_slice(extra);
    tenmin(&args, &root())
}

/// Records CSV as rows of fields, header first.
fn rows(csv: &[u8]) -> Vec<Vec<String>> {
    text(csv)
        .lines()
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

fn column(header: &[String], name: &str) -> usize {
    header.iter().position(|h| h == name).expect(name)
}

#[test]
fn the_example_runs_as_documented_and_marks_the_changes() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("records.csv");
    let out_s = out.to_str().unwrap();
    // The command of the README and CONTRACT.md, from the repository root.
    ok(&["replay", "-c", STATION, SAMPLES[0], SAMPLES[1], "-o", out_s]);
    let records = std::fs::read(&out).unwrap();
    let r = rows(&records);
    let (h, body) = r.split_first().unwrap();
    let (start, ch, flags, entries) = (
        column(h, "start"),
        column(h, "channel"),
        column(h, "flags"),
        column(h, "sensor_entries"),
    );
    for row in body {
        let changed = row[flags].contains("sensor_change");
        let swap = row[start] == "2025-03-11T10:20:00Z" && row[ch] == "ws80a";
        let realign = row[start] == "2025-03-11T10:40:00Z" && row[ch] == "wd78";
        assert_eq!(changed, swap || realign, "{row:?}");
        if swap {
            assert_eq!(row[entries], "ws80a-A1042|ws80a-A1187");
        }
        if realign {
            assert_eq!(row[entries], "wd78-V310|wd78-V310-realigned");
        }
        if row[ch] == "ws60" {
            assert_eq!(row[entries], "", "ws60 has no history");
        }
    }
    // Every thread count gives the same bytes, and verify reads back what
    // replay wrote (the flag and the entries column included).
    let one = ok(&[
        "replay", "-q", "-j", "1", "-c", STATION, SAMPLES[0], SAMPLES[1],
    ]);
    let two = ok(&[
        "replay", "-q", "-j", "2", "-c", STATION, SAMPLES[0], SAMPLES[1],
    ]);
    assert_eq!(one, records);
    assert_eq!(two, records);
    // Records tenmin wrote, with the example's exclusions applied.
    exits(&verify(out_s, &["--with-exclusions"]), 0);
    // A changed entry column is a difference.
    let edited = text(&records).replace("ws80a-A1042|ws80a-A1187", "ws80a-A1042");
    write(dir.path(), "edited.csv", edited);
    let edited_path = dir.path().join("edited.csv");
    let o = verify(edited_path.to_str().unwrap(), &[]);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stdout));
    assert!(
        text(&o.stdout).contains("sensor_entries"),
        "{}",
        text(&o.stdout)
    );
}

/// `tests/data/sensor-history-reference.csv`, from
/// `tests/scripts/sensor_history_reference.py` (numpy 2.4.6): per interval
/// start, [n_valid, mean, sd, min, max, gust, mean_exact].
fn reference() -> Vec<(String, Vec<f64>)> {
    let text =
        std::fs::read_to_string(root().join("tests/data/sensor-history-reference.csv")).unwrap();
    assert!(
        text.starts_with("# numpy 2.4.6;"),
        "the reference names numpy 2.4.6"
    );
    text.lines()
        .skip(2)
        .map(|l| {
            let mut f = l.split(',');
            let start = f.next().unwrap().to_string();
            (start, f.map(|x| x.parse().unwrap()).collect())
        })
        .collect()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1.0)
}

/// With one replaying thread and with two (each runs of rows classified by
/// the entry in force, split where the next comes into force).
#[test]
fn rescaled_statistics_match_numpy() {
    for jobs in ["1", "2"] {
        rescaled_statistics_match_numpy_with(jobs);
    }
}

fn rescaled_statistics_match_numpy_with(jobs: &str) {
    let r = rows(&ok(&[
        "replay", "-q", "-j", jobs, "-c", STATION, SAMPLES[0], SAMPLES[1],
    ]));
    let (h, body) = r.split_first().unwrap();
    let ws: Vec<&Vec<String>> = body.iter().filter(|r| r[2] == "ws80a").collect();
    let reference = reference();
    assert_eq!(ws.len(), reference.len());
    let c = |n: &str| column(h, n);
    for (row, (start, want)) in ws.iter().zip(&reference) {
        assert_eq!(&row[c("start")], start);
        let got = |n: &str| row[c(n)].parse::<f64>().unwrap();
        assert_eq!(got("n_valid"), want[0], "{start}");
        // Both sides hold the same whole numbers of 0.01 m/s quanta (the
        // reference quantizes half away from zero as the core does); what is
        // left is the order of f64 operations: 1e-9 relative (see
        // field_files.rs for why that is tight).
        assert!(
            close(got("mean"), want[1], 1e-9),
            "{start} mean {} {}",
            got("mean"),
            want[1]
        );
        assert!(close(got("sd"), want[2], 1e-9), "{start} sd");
        assert_eq!(got("min"), want[3], "{start} min");
        assert_eq!(got("max"), want[4], "{start} max");
        assert!(close(got("gust"), want[5], 1e-12), "{start} gust");
        // Against the unquantized re-scaled values: within half a quantum.
        assert!((got("mean") - want[6]).abs() <= 0.005, "{start} mean_exact");
    }
    // The check can fail: without the history (values as logged) the means
    // differ from the reference by far more than its tolerance.
    let dir = tempfile::tempdir().unwrap();
    let plain = std::fs::read_to_string(root().join(STATION))
        .unwrap()
        .replace("sensors = \"sensors.toml\"", "");
    let st = write(dir.path(), "station.toml", plain);
    copy_exclusions(dir.path());
    let r = rows(&ok(&[
        "replay",
        "-q",
        "-c",
        st.to_str().unwrap(),
        SAMPLES[0],
        SAMPLES[1],
    ]));
    let logged: f64 = r[1][c("mean")].parse().unwrap();
    assert!((logged - reference[0].1[1]).abs() > 0.01, "{logged}");
}

/// The example's exclusions file beside a copied station file (it names it
/// relative to itself): the exclusions apply alike in both replays compared.
fn copy_exclusions(dir: &std::path::Path) {
    std::fs::copy(
        root().join("examples/station-history/exclusions.csv"),
        dir.join("exclusions.csv"),
    )
    .unwrap();
}

/// The example's sensors file with only the entries in force at `t`, each
/// moved to a `from` before the samples: the history of one period, static.
fn one_period(t: &str) -> String {
    let text =
        std::fs::read_to_string(root().join("examples/station-history/sensors.toml")).unwrap();
    let mut keep = Vec::new();
    let entries: Vec<&str> = text.split("[[entry]]").skip(1).collect();
    for ch in ["ws80a", "wd78"] {
        let mine: Vec<&&str> = entries
            .iter()
            .filter(|e| e.contains(&format!("channel = \"{ch}\"")))
            .collect();
        let from = |e: &str| {
            let at = e.find("from = \"").unwrap() + 8;
            e[at..at + 20].to_string()
        };
        let current = mine.iter().rev().find(|e| from(e).as_str() <= t).unwrap();
        keep.push(format!(
            "[[entry]]{}",
            current.replace(&from(current), "2025-01-01T00:00:00Z")
        ));
    }
    keep.join("\n")
}

#[test]
fn a_history_equals_its_periods_replayed_alone() {
    let full = rows(&ok(&[
        "replay", "-q", "-c", STATION, SAMPLES[0], SAMPLES[1],
    ]));
    let h = &full[0];
    let entries = column(h, "sensor_entries");
    // The periods of the example: the swap at 10:25:00, the re-alignment at
    // 10:47:30; and the intervals wholly inside each.
    let periods = [
        (
            "2025-03-11T10:00:00Z",
            "2025-03-11T10:25:00Z",
            &["10:00", "10:10"][..],
        ),
        (
            "2025-03-11T10:25:00Z",
            "2025-03-11T10:47:30Z",
            &["10:30"][..],
        ),
        (
            "2025-03-11T10:47:30Z",
            "2025-03-11T12:00:00Z",
            &[
                "10:50", "11:00", "11:10", "11:20", "11:30", "11:40", "11:50",
            ][..],
        ),
    ];
    let samples: Vec<String> = SAMPLES
        .iter()
        .flat_map(|f| {
            std::fs::read_to_string(root().join(f))
                .unwrap()
                .lines()
                .skip(1)
                .map(str::to_string)
                .collect::<Vec<_>>()
        })
        .collect();
    let station = std::fs::read_to_string(root().join(STATION)).unwrap();
    let mut compared = 0;
    for (from, to, whole) in periods {
        let dir = tempfile::tempdir().unwrap();
        write(dir.path(), "sensors.toml", one_period(from));
        let st = write(dir.path(), "station.toml", &station);
        copy_exclusions(dir.path());
        // The period's samples alone.
        let mut csv = String::from("time,ws80a,ws60,wd78\n");
        for l in samples.iter().filter(|l| {
            let t = &l[..20];
            t >= from && t < to
        }) {
            csv.push_str(l);
            csv.push('\n');
        }
        let sf = write(dir.path(), "period.csv", csv);
        let alone = rows(&ok(&[
            "replay",
            "-q",
            "-c",
            st.to_str().unwrap(),
            sf.to_str().unwrap(),
        ]));
        for hm in whole {
            let start = format!("2025-03-11T{hm}:00Z");
            let pick = |r: &[Vec<String>]| -> Vec<Vec<String>> {
                r.iter().filter(|row| row[0] == start).cloned().collect()
            };
            let (a, b) = (pick(&full), pick(&alone));
            assert_eq!(a.len(), 3, "{start}");
            // Bit for bit: every field as printed (the shortest decimal of
            // the f64), the entry column included.
            assert_eq!(a, b, "{start}");
            assert!(a.iter().all(|r| !r[entries].contains('|')));
            compared += 1;
        }
    }
    assert_eq!(compared, 10);
}

#[test]
fn a_state_logger_recalibrated_at_the_visit_decodes_as_the_replay() {
    // The example's station, run as a state logger would: a sampler holding
    // the entry in force (re-programmed at 10:25:00 and 10:47:30), writing
    // each interval's states stamped with the configuration it holds.
    let cfg = host_cli::config::load(&root().join(STATION)).unwrap();
    let base = cfg.layout::<4>().unwrap();
    let epochs = cfg.epochs::<4>().unwrap().unwrap();
    let mut sampler: Sampler<4, { host_cli::engine::G }> = Sampler::new(base);
    let mut log = Vec::new();
    let mut seq = 0u32;
    let mut cursor = 0;
    let mut emit = |e: Ended<'_, 4, { host_cli::engine::G }>, stamp: u32| {
        if let Ended::Interval(_, acc) = e {
            for ch in 0..3 {
                let frame = StateFrame {
                    sequence: seq,
                    interval_start: base.interval_start(acc.index()),
                    channel: ch as u8,
                    channels: 3,
                    fingerprint: stamp,
                    state: acc.state(ch).unwrap(),
                };
                let mut bytes = [0u8; FRAME_LEN];
                encode_state(&frame, &mut bytes);
                log.extend_from_slice(&bytes);
                seq += 1;
            }
        }
    };
    let mut last_stamp = 0;
    for f in SAMPLES {
        for line in std::fs::read_to_string(root().join(f))
            .unwrap()
            .lines()
            .skip(1)
        {
            let v: Vec<&str> = line.split(',').collect();
            let t = host_cli::timefmt::parse_time(v[0].as_bytes()).unwrap();
            let r = |s: &str| Reading::Value(s.parse().unwrap());
            let readings = [r(v[1]), r(v[2]), r(v[3]), Reading::Missing];
            let stamp = epochs.fingerprint_at(t);
            last_stamp = stamp;
            let entry = epochs.at(t, &mut cursor);
            sampler
                .push_with(entry, t, &readings, |e| emit(e, stamp))
                .unwrap();
        }
    }
    sampler.close(|e| emit(e, last_stamp));
    let dir = tempfile::tempdir().unwrap();
    let lp = write(dir.path(), "state.log", &log);
    // A logger knows no exclusions (decided afterwards, on a PC): compare
    // with a replay of the example's station without its exclusions file.
    std::fs::copy(
        root().join("examples/station-history/sensors.toml"),
        dir.path().join("sensors.toml"),
    )
    .unwrap();
    let no_excl = std::fs::read_to_string(root().join(STATION))
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with("exclusions ="))
        .collect::<Vec<_>>()
        .join("\n");
    let st = write(dir.path(), "station.toml", no_excl);
    let st = st.to_str().unwrap();
    let decoded = ok(&["decode", "-q", "-c", st, lp.to_str().unwrap()]);
    let replayed = ok(&["replay", "-q", "-c", st, SAMPLES[0], SAMPLES[1]]);
    assert_eq!(text(&decoded), text(&replayed));
    // A log whose logger kept the first entry after the swap (never
    // re-programmed) is refused at the first interval past the change.
    let stale = epochs.fingerprint_at(Timestamp::from_millis(0));
    let mut wrong = log.clone();
    for frame in wrong.chunks_mut(FRAME_LEN) {
        let bytes: &mut [u8; FRAME_LEN] = frame.try_into().unwrap();
        let mut f = qc_core::wire::decode_state(bytes).unwrap();
        f.fingerprint = stale;
        encode_state(&f, bytes);
    }
    let wp = write(dir.path(), "stale.log", &wrong);
    let o = tenmin(
        &["decode", "-q", "-c", STATION, wp.to_str().unwrap()],
        &root(),
    );
    common::refused(
        &o,
        &["not that of the sensor-history entries in force then"],
    );
}

/// A station file naming `sensors` written into a fresh folder.
fn refused(sensors: &str) -> String {
    let dir = tempfile::tempdir().unwrap();
    let station = std::fs::read_to_string(root().join(STATION)).unwrap();
    write(dir.path(), "station.toml", station);
    write(dir.path(), "sensors.toml", sensors);
    let o = tenmin(&["replay", "-c", "station.toml", "x.csv"], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    text(&o.stderr)
}

#[test]
fn overlapping_backward_and_unknown_entries_are_refused_with_file_line_and_key() {
    let entry = |id: &str, ch: &str, from: &str, extra: &str| {
        format!("[[entry]]\nid = \"{id}\"\nchannel = \"{ch}\"\nfrom = \"{from}\"\n{extra}\n")
    };
    // Back in time: the second entry of ws80a (line 6) starts before the first.
    let e = refused(&format!(
        "{}\n{}",
        entry("a", "ws80a", "2025-03-01T00:00:00Z", ""),
        entry("b", "ws80a", "2025-02-01T00:00:00Z", "")
    ));
    assert!(
        e.contains("sensors.toml:10: `from`: 2025-02-01T00:00:00Z goes back in time"),
        "{e}"
    );
    // Overlap: the first entry ends (to) after the second begins.
    let e = refused(&format!(
        "{}\n{}",
        entry(
            "a",
            "ws80a",
            "2025-03-01T00:00:00Z",
            "to = \"2025-03-05T00:00:00Z\""
        ),
        entry("b", "ws80a", "2025-03-04T00:00:00Z", "")
    ));
    assert!(e.contains("sensors.toml:10: `from`: 2025-03-04T00:00:00Z overlaps channel \"ws80a\"'s entry \"a\" (line 1)"), "{e}");
    // The same instant twice is an overlap too (it goes back to the same time).
    let e = refused(&format!(
        "{}\n{}",
        entry("a", "ws80a", "2025-03-01T00:00:00Z", ""),
        entry("b", "ws80a", "2025-03-01T00:00:00Z", "")
    ));
    assert!(e.contains("sensors.toml:10: `from`"), "{e}");
    // An unknown channel.
    let e = refused(&entry("a", "ws100", "2025-03-01T00:00:00Z", ""));
    assert!(e.contains("sensors.toml:3: `channel`: \"ws100\" is not a channel of the station file (channels: ws80a, ws60, wd78)"), "{e}");
    // A re-scaling without the logger's transfer function, and a vane re-scaled.
    let e = refused(&entry(
        "a",
        "ws80a",
        "2025-03-01T00:00:00Z",
        "certificate = { id = \"c\", slope = 0.046, offset = 0.2 }",
    ));
    assert!(e.contains("sensors.toml:5: `certificate`: re-scaling to the certificate needs the transfer function programmed in the logger"), "{e}");
    let e = refused(&entry(
        "a",
        "wd78",
        "2025-03-01T00:00:00Z",
        "logger = { slope = 1, offset = 0 }",
    ));
    assert!(
        e.contains("sensors.toml:5: `logger`: a vane is not re-scaled"),
        "{e}"
    );
    // A key tenmin does not know is refused (informational ones are kept).
    let e = refused(&entry(
        "a",
        "ws80a",
        "2025-03-01T00:00:00Z",
        "colour = \"red\"",
    ));
    assert!(e.contains("sensors.toml") && e.contains("colour"), "{e}");
    let e = refused(&entry(
        "a",
        "ws80a",
        "2025-03-01T00:00:00Z",
        "model = \"m\"\nserial = \"s\"\nnote = \"n\"\ncertificate = { id = \"c\", date = \"2025-13-01\" }",
    ));
    assert!(
        e.contains("sensors.toml:8: `certificate.date`: \"2025-13-01\""),
        "{e}"
    );
}
