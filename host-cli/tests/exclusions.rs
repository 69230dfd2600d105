//! Exclusions (readings excluded by decision) and provenance files, through
//! the built `tenmin`. Expected counts are computed by hand from the fixture;
//! hashes are checked against coreutils `sha256sum` (FIPS 180-4 SHA-256, run
//! here as a separate program) and sizes against the file system.

use std::collections::HashMap;
use std::path::Path;
use std::process::Command;

mod common;
use common::{exits, records, refused, tenmin, text, write};

/// A 1-minute, 1 Hz station: anemometer, linked vane, thermometer (range
/// -40..50), with an exclusions file.
const STATION: &str = r#"
[logging]
interval_s = 60
sample_rate_hz = 1

[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01

[[channel]]
id = "wd"
kind = "direction"
speed_channel = "ws"

[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1
range = [-40, 50]

[campaign]
exclusions = "side/exclusions.csv"
"#;

// 2025-01-20T00:00:00Z = 1737331200 s (POSIX time, common practice).
const T0: i64 = 1_737_331_200;

/// Two minutes of rows, 1 s apart, except seconds 100 to 104 (no rows). Row
/// 5 has the thermometer out of range (99), rows 6 and 7 a missing speed
/// (-999).
fn samples() -> String {
    let mut s = String::from("time,ws,wd,t\n");
    for i in 0..120 {
        if (100..105).contains(&i) {
            continue;
        }
        let ws = match i {
            6 | 7 => "-999".to_string(),
            _ => format!("{}", 5 + i % 4),
        };
        let t = if i == 5 { "99" } else { "10" };
        s.push_str(&format!("{},{ws},{},{t}\n", T0 + i, 90 + i % 3));
    }
    s
}

/// `ws` excluded 00:00:05 to 00:00:20 (15 rows: 5..=19), every channel
/// 00:01:30 to 00:01:50 (rows 90..=109, of which 100..=104 never came: 15
/// readings), `wd|t` again 00:00:18 to 00:00:22 (rows 18..=21).
const EXCLUSIONS: &str = "\
# test exclusions
channels,from,to,reason,who,entered
ws,2025-01-20T00:00:05Z,2025-01-20T00:00:20Z,\"boom work, ws only\",A. Tester,2025-01-21
all,2025-01-20T01:01:30+01:00,2025-01-20T00:01:50Z,cable cut,B. Tester,2025-01-21T08:00:00Z
wd|t,2025-01-20T00:00:18Z,2025-01-20T00:00:22Z,vane and thermometer checked,C,2025-01-22
";

fn setup() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "station.toml", STATION);
    std::fs::create_dir(dir.path().join("side")).unwrap();
    write(dir.path(), "side/exclusions.csv", EXCLUSIONS);
    write(dir.path(), "samples.csv", samples());
    dir
}

fn n(r: &HashMap<String, String>, col: &str) -> u64 {
    r[col]
        .parse()
        .unwrap_or_else(|_| panic!("{col} = {:?}", r[col]))
}

#[test]
fn excluded_readings_are_tallied_by_hand_and_every_sample_counted_once() {
    let dir = setup();
    let out = tenmin(
        &["replay", "-c", "station.toml", "samples.csv", "-o", "r.csv"],
        dir.path(),
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let csv = std::fs::read_to_string(dir.path().join("r.csv")).unwrap();
    let r = records(&csv);
    assert_eq!(r.len(), 6);
    // (n_valid, n_missing, n_out_of_range, n_excluded) by hand:
    // minute 0 (60 rows): ws excluded 5..=19 (15), which includes the missing
    //   rows 6 and 7 (excluded wins: the decision covers the reading whatever
    //   it is), so missing 0 and valid 45; wd excluded 18..=21 (4), valid 56;
    //   t excluded 18..=21 (4), out of range 1 (row 5), valid 55.
    // minute 1 (55 rows, 100..=104 absent): every channel excluded 90..=109
    //   minus the 5 absent rows = 15, valid 40.
    let want = [
        ("ws", 45, 0, 0, 15),
        ("wd", 56, 0, 0, 4),
        ("t", 55, 0, 1, 4),
        ("ws", 40, 0, 0, 15),
        ("wd", 40, 0, 0, 15),
        ("t", 40, 0, 0, 15),
    ];
    for (row, (id, valid, missing, oor, excluded)) in r.iter().zip(want) {
        assert_eq!(row["channel"], id);
        let got = (
            n(row, "n_valid"),
            n(row, "n_missing"),
            n(row, "n_out_of_range"),
            n(row, "n_excluded"),
        );
        assert_eq!(got, (valid, missing, oor, excluded), "{row:?}");
        assert!(row["flags"].split('|').any(|f| f == "excluded"), "{row:?}");
        // The partition: every sample the interval held in exactly one counter.
        let held = n(row, "n_valid")
            + n(row, "n_missing")
            + n(row, "n_out_of_range")
            + n(row, "n_flagged")
            + n(row, "n_excluded");
        let rows_in_minute = if row["start"].ends_with("00:00Z") {
            60
        } else {
            55
        };
        assert_eq!(held, rows_in_minute, "{row:?}");
    }
    // The speed mean of minute 0 leaves the excluded rows out: the valid
    // rows are 0..=4 and 20..=59, speeds 5 + i % 4 (by hand: rows 0..=4 sum
    // 5+6+7+8+5 = 31; rows 20..=59 are ten cycles of 5..8, sum 260).
    let mean: f64 = r[0]["mean"].parse().unwrap();
    assert!((mean - 291.0 / 45.0).abs() < 1e-12, "{mean}");

    // The summary splits lost from excluded: ws possible 120, valid 85,
    // excluded 30, lost 5 (the absent rows).
    let err = text(&out.stderr);
    let line = err.lines().find(|l| l.starts_with("ws ")).unwrap();
    let f: Vec<&str> = line.split_whitespace().collect();
    // channel possible valid missing out_range rejected flagged excluded absent lost
    assert_eq!(
        &f[..10],
        ["ws", "120", "85", "0", "0", "0", "0", "30", "5", "5"],
        "{line}"
    );

    // Two threads, small chunks: the same bytes.
    let par = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "samples.csv",
            "-j",
            "2",
            "--chunk-size",
            "200",
            "-o",
            "p.csv",
        ],
        dir.path(),
    );
    assert!(par.status.success(), "{}", text(&par.stderr));
    assert_eq!(
        std::fs::read(dir.path().join("p.csv")).unwrap(),
        csv.as_bytes()
    );
    // The report reads n_excluded back and splits lost from excluded.
    let rep = tenmin(
        &["report", "-c", "station.toml", "r.csv", "-o", "rep"],
        dir.path(),
    );
    assert!(rep.status.success(), "{}", text(&rep.stderr));
    let rec = std::fs::read_to_string(dir.path().join("rep/recovery.csv")).unwrap();
    let all_ws = records(&rec)
        .into_iter()
        .find(|r| r["channel"] == "ws" && r["month"] == "all")
        .unwrap();
    assert_eq!((n(&all_ws, "n_excluded"), n(&all_ws, "n_lost")), (30, 5));
    // Nothing is deleted from any input.
    assert_eq!(
        std::fs::read_to_string(dir.path().join("side/exclusions.csv")).unwrap(),
        EXCLUSIONS
    );
    assert_eq!(
        std::fs::read_to_string(dir.path().join("samples.csv")).unwrap(),
        samples()
    );
}

#[test]
fn bad_exclusion_files_are_refused_with_file_line_and_field() {
    let head = "channels,from,to,reason,who,entered\n";
    for (body, want) in [
        (
            "ws,2025-01-20T00:01:00Z,2025-01-20T00:00:00Z,r,w,2025-01-21\n",
            "side/exclusions.csv:2: field `to`",
        ),
        (
            "ws|gust,2025-01-20T00:00:00Z,2025-01-20T00:01:00Z,r,w,2025-01-21\n",
            "side/exclusions.csv:2: field `channels`: no channel \"gust\"",
        ),
        (
            "ws,yesterday,2025-01-20T00:01:00Z,r,w,2025-01-21\n",
            "side/exclusions.csv:2: field `from`",
        ),
        (
            "ws,2025-01-20T00:00:00Z,2025-01-20T00:01:00Z,r,,2025-01-21\n",
            "side/exclusions.csv:2: field `who`",
        ),
    ] {
        let dir = setup();
        write(dir.path(), "side/exclusions.csv", format!("{head}{body}"));
        let out = tenmin(&["replay", "-c", "station.toml", "samples.csv"], dir.path());
        refused(&out, &[want]);
        assert!(out.stdout.is_empty());
    }
    // A missing file, and an empty key, name the file and the key.
    let dir = setup();
    std::fs::remove_file(dir.path().join("side/exclusions.csv")).unwrap();
    let out = tenmin(&["replay", "-c", "station.toml", "samples.csv"], dir.path());
    refused(&out, &["side/exclusions.csv"]);
    write(
        dir.path(),
        "station.toml",
        STATION.replace("side/exclusions.csv", ""),
    );
    let out = tenmin(&["replay", "-c", "station.toml", "samples.csv"], dir.path());
    refused(&out, &["station.toml:"]);
}

/// `sha256sum FILE` (coreutils), lowercase hex.
fn sha256sum(path: &Path) -> String {
    let out = Command::new("sha256sum")
        .arg(path)
        .output()
        .expect("run sha256sum");
    assert!(out.status.success());
    text(&out.stdout)
        .split_whitespace()
        .next()
        .unwrap()
        .to_string()
}

#[test]
fn provenance_names_every_input_with_sha256_and_size_and_verify_checks_it() {
    let dir = setup();
    let d = dir.path();
    let out = tenmin(
        &[
            "replay",
            "-q",
            "-c",
            "station.toml",
            "samples.csv",
            "-o",
            "r.csv",
        ],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    // The records stay plain CSV; the provenance is beside them.
    let csv = std::fs::read_to_string(d.join("r.csv")).unwrap();
    assert!(csv.starts_with("start,end,channel,"));
    let prov: serde_json::Value =
        serde_json::from_slice(&std::fs::read(d.join("r.csv.provenance.json")).unwrap()).unwrap();
    assert_eq!(prov["format"], "tenmin-provenance/1");
    assert_eq!(prov["tool"]["name"], "tenmin");
    assert_eq!(prov["core"]["name"], "qc-core");
    let cmd: Vec<&str> = prov["command"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    assert_eq!(
        &cmd[1..],
        [
            "replay",
            "-q",
            "-c",
            "station.toml",
            "samples.csv",
            "-o",
            "r.csv"
        ]
    );
    let fp = prov["config_fingerprint"].as_str().unwrap();
    assert!(fp.starts_with("0x") && fp.len() == 10, "{fp}");
    let inputs = prov["inputs"].as_array().unwrap();
    let named: Vec<(&str, &str)> = inputs
        .iter()
        .map(|i| (i["role"].as_str().unwrap(), i["path"].as_str().unwrap()))
        .collect();
    assert_eq!(
        named,
        [
            ("station", "station.toml"),
            ("exclusions", "side/exclusions.csv"),
            ("samples", "samples.csv")
        ]
    );
    let files = inputs.iter().chain(std::iter::once(&prov["output"]));
    for f in files {
        let p = d.join(f["path"].as_str().unwrap());
        assert_eq!(
            f["sha256"].as_str().unwrap(),
            sha256sum(&p),
            "{}",
            p.display()
        );
        assert_eq!(
            f["size"].as_u64().unwrap(),
            std::fs::metadata(&p).unwrap().len(),
            "{}",
            p.display()
        );
    }

    // verify --provenance: all match.
    let v = tenmin(&["verify", "--provenance", "r.csv"], d);
    exits(&v, 0);
    // From another folder, through the provenance file itself.
    let v = tenmin(
        &[
            "verify",
            "--provenance",
            &d.join("r.csv.provenance.json").to_string_lossy(),
        ],
        Path::new("/"),
    );
    exits(&v, 0);

    // One byte of one input changed: exit 1, naming that file alone.
    for (file, role) in [
        ("samples.csv", "samples"),
        ("side/exclusions.csv", "exclusions"),
    ] {
        let p = d.join(file);
        let orig = std::fs::read(&p).unwrap();
        let mut b = orig.clone();
        let last = b.len() - 2;
        b[last] ^= 1;
        std::fs::write(&p, &b).unwrap();
        let v = tenmin(&["verify", "--provenance", "r.csv"], d);
        let so = text(&v.stdout);
        assert_eq!(v.status.code(), Some(1), "{so}{}", text(&v.stderr));
        let changed: Vec<&str> = so.lines().filter(|l| l.starts_with("CHANGED")).collect();
        assert_eq!(changed.len(), 1, "{so}");
        assert!(
            changed[0].contains(&format!("input ({role})")) && changed[0].contains(file),
            "{so}"
        );
        std::fs::write(&p, &orig).unwrap();
    }
    // The output itself changed.
    std::fs::write(d.join("r.csv"), csv.replace("ws", "wx")).unwrap();
    let v = tenmin(&["verify", "--provenance", "r.csv"], d);
    assert_eq!(v.status.code(), Some(1));
    assert!(
        text(&v.stdout).contains("CHANGED  output"),
        "{}",
        text(&v.stdout)
    );
    // An unreadable provenance file: exit 2, naming it.
    write(d, "r.csv.provenance.json", "{\"format\": 3}");
    let v = tenmin(&["verify", "--provenance", "r.csv"], d);
    refused(&v, &["r.csv.provenance.json"]);
    // To stdout: no provenance file (nowhere beside it).
    std::fs::remove_file(d.join("r.csv.provenance.json")).unwrap();
    let out = tenmin(&["replay", "-q", "-c", "station.toml", "samples.csv"], d);
    assert!(out.status.success());
    assert!(!d.join("r.csv.provenance.json").exists());
    assert!(!d.join("-.provenance.json").exists());
}

#[test]
fn decode_and_report_write_provenance_beside_their_outputs() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = tenmin(&["demo", "--days", "1", "-o", "demo"], d);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let dec = tenmin(
        &[
            "decode",
            "-c",
            "demo/station.toml",
            "demo/logger.log",
            "-o",
            "dec.csv",
        ],
        d,
    );
    assert!(dec.status.success(), "{}", text(&dec.stderr));
    let prov: serde_json::Value =
        serde_json::from_slice(&std::fs::read(d.join("dec.csv.provenance.json")).unwrap()).unwrap();
    let roles: Vec<&str> = prov["inputs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|i| i["role"].as_str().unwrap())
        .collect();
    // The demo's station names its exclusions, sensor history and events.
    assert_eq!(roles, ["station", "exclusions", "sensors", "events", "log"]);
    assert_eq!(
        prov["inputs"][4]["sha256"].as_str().unwrap(),
        sha256sum(&d.join("demo/logger.log"))
    );
    assert_eq!(
        tenmin(&["verify", "--provenance", "dec.csv"], d)
            .status
            .code(),
        Some(0)
    );
    let rep = tenmin(
        &["report", "-c", "demo/station.toml", "dec.csv", "-o", "rep"],
        d,
    );
    assert!(rep.status.success(), "{}", text(&rep.stderr));
    let v = tenmin(&["verify", "--provenance", "rep/report.html"], d);
    assert_eq!(v.status.code(), Some(0), "{}", text(&v.stdout));
    assert!(
        text(&v.stdout).contains("input (records): "),
        "{}",
        text(&v.stdout)
    );
}
