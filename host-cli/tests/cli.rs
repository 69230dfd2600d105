//! Integration tests: run the built `tenmin` on fixture files in a temporary
//! folder. Expected values are computed by hand or from the cited formulas,
//! never copied from the program's own output.

use std::collections::HashMap;
use std::io::Read;
use std::process::{Command, Stdio};

mod common;
use common::{records, tenmin, text, write, BIN};

fn num(r: &HashMap<String, String>, col: &str) -> f64 {
    r[col]
        .parse()
        .unwrap_or_else(|_| panic!("{col} = {:?}", r[col]))
}

fn assert_close(got: f64, want: f64, tol: f64, what: &str) {
    assert!((got - want).abs() <= tol, "{what}: got {got}, want {want}");
}

/// Angle difference in degrees, folded to [0, 180].
fn angle_diff(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(360.0);
    d.min(360.0 - d)
}

/// A 1-minute, 1 Hz station: anemometer, linked vane, thermometer, and a
/// scalar read as raw counts (value = 1 + 0.5 counts, valid 0 to 20).
const SMALL_TOML: &str = r#"
[logging]
interval_s = 60
sample_rate_hz = 1

[[channel]]
id = "ws"
kind = "speed"
unit = "m/s"
height_m = 10
resolution = 0.01

[[channel]]
id = "wd"
kind = "direction"
speed_channel = "ws"

[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1

[[channel]]
id = "raw"
kind = "scalar"
slope = 0.5
offset = 1
range = [0, 20]
"#;

// 2025-01-20T00:00:00Z = 1737331200 s (POSIX time, common practice).
const SMALL_CSV: &str = "\
time,ws,wd,t,raw
2025-01-20T00:00:00Z,8.0,350,1.0,10
2025-01-20T01:00:01+01:00,8.5,10,-999,20
1737331202,9.0,350,NaN,30
1737331203.000,7.5,10,2.0,-999
2025-01-20T00:00:04.000Z,8.0,,3.0,40
2025-01-20T00:03:30Z,5.0,90,4.0,2
";

fn small_setup() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "station.toml", SMALL_TOML);
    write(dir.path(), "samples.csv", SMALL_CSV);
    dir
}

#[test]
fn replay_small_input_matches_hand_computed_values() {
    let dir = small_setup();
    let out = tenmin(
        &["replay", "--config", "station.toml", "samples.csv"],
        dir.path(),
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let rows = records(&text(&out.stdout));
    // Intervals 00:00, 00:01, 00:02 (empty) and 00:03, four channels each, in config order.
    assert_eq!(rows.len(), 16);
    let chans: Vec<&str> = rows.iter().map(|r| r["channel"].as_str()).collect();
    assert_eq!(&chans[..4], ["ws", "wd", "t", "raw"]);
    assert_eq!(rows[0]["start"], "2025-01-20T00:00:00Z");
    assert_eq!(rows[0]["end"], "2025-01-20T00:01:00Z");
    assert_eq!(rows[12]["start"], "2025-01-20T00:03:00Z");
    assert!(rows.iter().all(|r| r["n_possible"] == "60"));

    // ws: 8.0, 8.5, 9.0, 7.5, 8.0 (by hand): mean 41/5 = 8.2; deviations
    // -0.2 0.3 0.8 -0.7 -0.2, squares sum 1.3, population sd sqrt(0.26);
    // gust = largest 3-sample running mean = (8 + 8.5 + 9)/3 = 8.5 (3 s gust,
    // WMO-No. 8 ch. 5); min 7.5, max 9.
    let ws = &rows[0];
    assert_eq!(ws["n_valid"], "5");
    assert_close(num(ws, "mean"), 8.2, 1e-12, "ws mean");
    assert_close(num(ws, "sd"), 0.26f64.sqrt(), 1e-12, "ws sd");
    assert_close(num(ws, "gust"), 8.5, 1e-12, "ws gust");
    assert_close(num(ws, "min"), 7.5, 0.0, "ws min");
    assert_close(num(ws, "max"), 9.0, 0.0, "ws max");
    assert_close(num(ws, "ti"), 0.26f64.sqrt() / 8.2, 1e-12, "ws ti");

    // wd: 350, 10, 350, 10 and one empty field. Unit-vector mean north, not the
    // arithmetic 180 (US EPA-454/R-99-005 sec. 6.2.2).
    let wd = &rows[1];
    assert_eq!(wd["n_valid"], "4");
    assert_eq!(wd["n_missing"], "1");
    assert!(
        angle_diff(num(wd, "mean"), 0.0) < 1e-6,
        "wd mean {}",
        wd["mean"]
    );
    assert_eq!(wd["min"], "");
    assert_eq!(wd["gust"], "");
    // Resultant vector, EPA-454/R-99-005 sec. 6.2.2: Ve = -(1/N) sum u sin(th),
    // Vn = -(1/N) sum u cos(th), direction atan2(Ve, Vn) + 180, computed here.
    let pairs = [(8.0f64, 350.0f64), (8.5, 10.0), (9.0, 350.0), (7.5, 10.0)];
    let ve = -pairs
        .iter()
        .map(|(u, d)| u * d.to_radians().sin())
        .sum::<f64>()
        / 4.0;
    let vn = -pairs
        .iter()
        .map(|(u, d)| u * d.to_radians().cos())
        .sum::<f64>()
        / 4.0;
    let dir = ve.atan2(vn).to_degrees() + 180.0;
    assert_close(
        num(wd, "resultant_speed"),
        ve.hypot(vn),
        1e-6,
        "resultant speed",
    );
    assert!(
        angle_diff(num(wd, "resultant_direction"), dir) < 1e-4,
        "{}",
        wd["resultant_direction"]
    );

    // t: 1.0, -999 (missing-value code), NaN, 2.0, 3.0: mean 2 of 3 valid (by hand).
    let t = &rows[2];
    assert_eq!((t["n_valid"].as_str(), t["n_missing"].as_str()), ("3", "2"));
    assert_close(num(t, "mean"), 2.0, 1e-12, "t mean");

    // raw counts 10, 20, 30, -999, 40 -> 6, 11, 16, missing, 21 (above range 20):
    // mean (6 + 11 + 16) / 3 = 11 (by hand).
    let raw = &rows[3];
    assert_eq!(raw["n_valid"], "3");
    assert_eq!(raw["n_missing"], "1");
    assert_eq!(raw["n_out_of_range"], "1");
    assert_close(num(raw, "mean"), 11.0, 1e-12, "raw mean");
    assert_close(num(raw, "max"), 16.0, 0.0, "raw max");

    // 00:01 and 00:02 had no samples: rows with empty statistics.
    for r in &rows[4..12] {
        assert_eq!(r["n_valid"], "0", "{r:?}");
        for col in ["mean", "sd", "min", "max", "gust", "ti", "resultant_speed"] {
            assert_eq!(r[col], "", "{col} in {r:?}");
        }
    }
    assert_eq!(rows[4]["start"], "2025-01-20T00:01:00Z");
    assert_eq!(rows[8]["start"], "2025-01-20T00:02:00Z");
    // Last interval: one sample of each.
    assert_close(num(&rows[12], "mean"), 5.0, 0.0, "ws 00:03");
    assert_close(num(&rows[15], "mean"), 2.0, 0.0, "raw 00:03 = 1 + 0.5 * 2");
}

#[test]
fn gust_sd_and_vector_check_values() {
    // 600 samples of 8.0 with samples 100-102 = 14, 15, 16: mean 8.035, min 8,
    // max 16, gust 15.0, sd 0.49710 with divisor N
    // (/work/shared CHECK-VALUES, derived with numpy; gust per WMO-No. 8 ch. 5).
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "st.toml",
        "[logging]\nsample_rate_hz = 1\n[[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\n\
         [[channel]]\nid = \"wd\"\nkind = \"direction\"\nspeed_channel = \"ws\"\n",
    );
    let mut csv = String::from("time,ws,wd\n");
    for i in 0..600 {
        let v = match i {
            100 => 14.0,
            101 => 15.0,
            102 => 16.0,
            _ => 8.0,
        };
        csv.push_str(&format!("{},{v},0\n", 1_737_331_200 + i));
    }
    // Next interval: 2 m/s from 0 and 4 m/s from 90: unit-vector mean 45,
    // resultant direction 63.435, speed 2.2361, scalar mean 3.0 (CHECK-VALUES,
    // derived from EPA-454/R-99-005 sec. 6.2.2).
    csv.push_str("1737331800,2,0\n1737331801,4,90\n");
    write(dir.path(), "s.csv", csv);
    let out = tenmin(&["replay", "-c", "st.toml", "s.csv"], dir.path());
    assert!(out.status.success(), "{}", text(&out.stderr));
    let rows = records(&text(&out.stdout));
    let ws = &rows[0];
    assert_close(num(ws, "mean"), 8.035, 1e-12, "mean");
    assert_close(num(ws, "min"), 8.0, 0.0, "min");
    assert_close(num(ws, "max"), 16.0, 0.0, "max");
    assert_close(num(ws, "gust"), 15.0, 1e-12, "gust");
    assert_close(num(ws, "sd"), 0.49710, 5e-6, "sd");
    let wd = &rows[3];
    assert_close(num(&rows[2], "mean"), 3.0, 1e-12, "scalar mean speed");
    assert!(angle_diff(num(wd, "mean"), 45.0) < 1e-4, "{}", wd["mean"]);
    assert!(angle_diff(num(wd, "resultant_direction"), 63.435) < 1e-3);
    assert_close(num(wd, "resultant_speed"), 2.2361, 1e-4, "resultant speed");
}

#[test]
fn numbers_round_trip_through_the_shortest_decimal() {
    let dir = tempfile::tempdir().unwrap();
    let out = tenmin(&["demo", "--days", "1", "--out", "d"], dir.path());
    assert!(out.status.success(), "{}", text(&out.stderr));
    let csv = std::fs::read_to_string(dir.path().join("d/logger-records.csv")).unwrap();
    let mut checked = 0;
    for r in records(&csv) {
        for col in [
            "mean",
            "sd",
            "min",
            "max",
            "gust",
            "ti",
            "resultant_length",
            "resultant_speed",
            "resultant_direction",
        ] {
            let s = &r[col];
            if s.is_empty() {
                continue;
            }
            let v: f64 = s.parse().unwrap();
            // Rust's `{}` for f64 prints the shortest string that parses back to the same bits.
            assert_eq!(&format!("{v}"), s);
            assert_eq!(
                format!("{v}").parse::<f64>().unwrap().to_bits(),
                v.to_bits()
            );
            checked += 1;
        }
    }
    assert!(checked > 1000, "{checked}");
}

#[test]
fn verify_passes_on_own_output_and_fails_one_ulp_off() {
    let dir = small_setup();
    let d = dir.path();
    let out = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "samples.csv",
            "-o",
            "rec.csv",
        ],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let verify = |records: &str| {
        tenmin(
            &[
                "verify",
                "-c",
                "station.toml",
                "--samples",
                "samples.csv",
                "--records",
                records,
            ],
            d,
        )
    };
    let ok = verify("rec.csv");
    assert_eq!(ok.status.code(), Some(0), "{}", text(&ok.stdout));
    assert!(text(&ok.stdout).contains("every field identical"));

    // One number one ULP up.
    let original = std::fs::read_to_string(d.join("rec.csv")).unwrap();
    let mut lines: Vec<String> = original.lines().map(String::from).collect();
    let mut f: Vec<String> = lines[1].split(',').map(String::from).collect();
    let mean: f64 = f[5].parse().unwrap();
    f[5] = format!("{}", f64::from_bits(mean.to_bits() + 1));
    lines[1] = f.join(",");
    write(d, "ulp.csv", lines.join("\n") + "\n");
    let bad = verify("ulp.csv");
    assert_eq!(bad.status.code(), Some(1));
    let msg = text(&bad.stdout);
    assert!(msg.contains("2025-01-20T00:00:00Z ws mean"), "{msg}");
    assert!(msg.contains("(1 ulp apart)"), "{msg}");

    // A missing row and an extra row are differences too.
    let mut lines: Vec<String> = original.lines().map(String::from).collect();
    let removed = lines.remove(2);
    lines.push(lines[lines.len() - 1].replace(",raw,", ",extra,"));
    write(d, "rows.csv", lines.join("\n") + "\n");
    let bad = verify("rows.csv");
    assert_eq!(bad.status.code(), Some(1));
    let msg = text(&bad.stdout);
    assert!(removed.contains(",wd,"));
    assert!(
        msg.contains("2025-01-20T00:00:00Z wd: row missing"),
        "{msg}"
    );
    assert!(
        msg.contains("2025-01-20T00:03:00Z extra: row in the logger records"),
        "{msg}"
    );
    assert!(msg.contains("2 difference(s)"), "{msg}");

    // The same numbers printed differently are the same bits: no difference.
    let same = original.replacen(",8.2,", ",8.20,", 1);
    assert_ne!(same, original);
    write(d, "same.csv", same);
    assert_eq!(verify("same.csv").status.code(), Some(0));
}

const HEADER: &str = "time,ws,wd,t,raw\n";
const GOOD_ROW: &str = "2025-01-20T00:00:00Z,8.0,350,1.0,10\n";

fn bad_cases() -> Vec<(&'static str, Vec<u8>, &'static str)> {
    let with = |rows: &str| format!("{HEADER}{GOOD_ROW}{rows}").into_bytes();
    vec![
        (
            "truncated line",
            with("2025-01-20T00:00:01Z,8.5,1"),
            "b.csv:3: expected 5 fields",
        ),
        (
            "too many fields",
            with("2025-01-20T00:00:01Z,8.5,10,1,2,3\n"),
            "b.csv:3: expected 5 fields",
        ),
        (
            "bad time",
            with("2025-01-20T00:00:61Z,8.5,10,1,2\n"),
            "b.csv:3: field 1 (time)",
        ),
        (
            "time without zone",
            with("2025-01-20T00:00:01,8.5,10,1,2\n"),
            "b.csv:3: field 1 (time)",
        ),
        (
            "sub-millisecond time",
            with("1737331201.0005,8.5,10,1,2\n"),
            "b.csv:3: field 1 (time)",
        ),
        (
            "bad number",
            with("2025-01-20T00:00:01Z,8..5,10,1,2\n"),
            "b.csv:3: field 2 (ws)",
        ),
        (
            "decimal counts",
            with("2025-01-20T00:00:01Z,8.5,10,1,2.5\n"),
            "b.csv:3: field 5 (raw)",
        ),
        (
            "not UTF-8",
            [
                HEADER.as_bytes(),
                GOOD_ROW.as_bytes(),
                b"2025-01-20T00:00:01Z,8.5,1\xff0,1,2\n",
            ]
            .concat(),
            "b.csv:3: field 3 (wd): not valid UTF-8",
        ),
        (
            "unknown column",
            b"time,ws,wd,t,raw,gust2\n".to_vec(),
            "b.csv:1: header field 6: unknown column \"gust2\"",
        ),
        (
            "missing channel",
            b"time,ws,wd,t\n".to_vec(),
            "b.csv:1: header: no column for channel raw",
        ),
        (
            "no time column",
            b"ws,wd,t,raw\n".to_vec(),
            "b.csv:1: header: no \"time\" column",
        ),
        ("empty file", Vec::new(), "b.csv:1: empty file"),
    ]
}

#[test]
fn bad_input_is_exit_2_naming_file_line_and_field() {
    let dir = small_setup();
    for (what, content, want) in bad_cases() {
        write(dir.path(), "b.csv", &content);
        let out = tenmin(&["replay", "-c", "station.toml", "b.csv"], dir.path());
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{what}: {err}");
        assert!(err.contains(want), "{what}: {err}");
        assert!(!err.contains("panicked"), "{what}: {err}");
    }
    // A bad station file names the key and its line.
    write(
        dir.path(),
        "bad.toml",
        SMALL_TOML.replace("unit = \"m/s\"", "unit = \"m/s\"\nheight = 3"),
    );
    let out = tenmin(&["replay", "-c", "bad.toml", "samples.csv"], dir.path());
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("height") && err.contains("line 10"), "{err}");
}

#[test]
fn skip_bad_rows_counts_them_and_changes_nothing_else() {
    let dir = small_setup();
    let d = dir.path();
    // Interleave one bad row of each row-level kind with the good rows.
    let mut mixed = String::from(HEADER);
    let bad_rows = [
        "2025-01-20T00:00:01Z,8.5,1\n",
        "yesterday,8.5,10,1,2\n",
        "2025-01-20T00:00:01Z,8.5,abc,1,2\n",
    ];
    for (i, line) in SMALL_CSV.lines().skip(1).enumerate() {
        mixed.push_str(line);
        mixed.push('\n');
        if let Some(b) = bad_rows.get(i) {
            mixed.push_str(b);
        }
    }
    let mut bytes = mixed.into_bytes();
    bytes.extend_from_slice(b"2025-01-20T00:03:31Z,\xff,1,1,1\n");
    write(d, "mixed.csv", &bytes);
    let strict = tenmin(&["replay", "-c", "station.toml", "mixed.csv"], d);
    assert_eq!(strict.status.code(), Some(2));
    let out = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "--skip-bad-rows",
            "mixed.csv",
        ],
        d,
    );
    let err = text(&out.stderr);
    assert!(out.status.success(), "{err}");
    assert!(
        err.contains("rows read: 10 from 1 file(s) = 6 accepted + 0 rejected"),
        "{err}"
    );
    assert!(err.contains("+ 4 bad rows"), "{err}");
    assert!(
        err.contains("1 wrong field count, 1 bad time, 1 bad value, 1 not UTF-8"),
        "{err}"
    );
    assert!(err.contains("mixed.csv:3: expected 5 fields"), "{err}");
    let clean = tenmin(&["replay", "-c", "station.toml", "samples.csv"], d);
    assert_eq!(text(&out.stdout), text(&clean.stdout));
}

#[test]
fn duplicate_and_backward_times_are_counted_not_errors() {
    let dir = small_setup();
    let csv = "time,ws,wd,t,raw\n\
        2025-01-20T00:00:00Z,8,0,1,2\n\
        2025-01-20T00:00:01Z,8,0,1,2\n\
        2025-01-20T00:00:01Z,9,0,1,2\n\
        2025-01-20T00:00:00.500Z,9,0,1,2\n\
        2025-01-20T00:00:02Z,8,0,1,2\n";
    write(dir.path(), "dup.csv", csv);
    let out = tenmin(&["replay", "-c", "station.toml", "dup.csv"], dir.path());
    let err = text(&out.stderr);
    assert!(out.status.success(), "{err}");
    assert!(
        err.contains("= 3 accepted + 2 rejected (duplicate 1, backward 1,"),
        "{err}"
    );
    let rows = records(&text(&out.stdout));
    assert_eq!(rows[0]["n_valid"], "3");
    assert_eq!(rows[0]["n_rejected"], "2");
    assert_close(
        num(&rows[0], "mean"),
        8.0,
        0.0,
        "rejected samples stay out of the mean",
    );
}

#[test]
fn several_files_replay_as_one() {
    let dir = small_setup();
    let d = dir.path();
    let lines: Vec<&str> = SMALL_CSV.lines().collect();
    // Three files; the second has its columns in another order, and the third
    // repeats the last row of the second (a duplicate across files).
    write(
        d,
        "a.csv",
        format!("{}\n{}\n{}\n", lines[0], lines[1], lines[2]),
    );
    let reorder = |l: &str| {
        let f: Vec<&str> = l.split(',').collect();
        format!("{},{},{},{},{}", f[4], f[0], f[3], f[2], f[1])
    };
    write(
        d,
        "b.csv",
        format!(
            "{}\n{}\n{}\n",
            reorder(lines[0]),
            reorder(lines[3]),
            reorder(lines[4])
        ),
    );
    write(
        d,
        "c.csv",
        format!("{}\n{}\n{}\n{}\n", lines[0], lines[4], lines[5], lines[6]),
    );
    let split = tenmin(
        &["replay", "-c", "station.toml", "a.csv", "b.csv", "c.csv"],
        d,
    );
    assert!(split.status.success(), "{}", text(&split.stderr));
    write(
        d,
        "all.csv",
        format!("{}\n{}\n", lines[..5].join("\n"), lines[4..].join("\n")),
    );
    let whole = tenmin(&["replay", "-c", "station.toml", "all.csv"], d);
    assert!(whole.status.success(), "{}", text(&whole.stderr));
    assert_eq!(text(&split.stdout), text(&whole.stdout));
    assert!(
        text(&split.stderr).contains("duplicate 1"),
        "{}",
        text(&split.stderr)
    );
    // And the duplicate changes nothing but the rejected count.
    let plain = tenmin(&["replay", "-c", "station.toml", "samples.csv"], d);
    let (a, b) = (records(&text(&split.stdout)), records(&text(&plain.stdout)));
    assert_eq!(a[0]["n_rejected"], "1");
    assert_eq!((&a[0]["mean"], &a[0]["sd"]), (&b[0]["mean"], &b[0]["sd"]));
}

#[test]
fn demo_one_day_runs_and_verifies() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let out = tenmin(&["demo", "--days", "1", "--out", "demo"], d);
    let stdout = text(&out.stdout);
    assert!(out.status.success(), "{stdout}{}", text(&out.stderr));
    assert!(stdout.contains("every field identical"), "{stdout}");
    assert!(d.join("demo/samples-2025-01-20.csv").exists());
    // The same check by hand, through the command line.
    let v = tenmin(
        &[
            "verify",
            "-c",
            "demo/station.toml",
            "--samples",
            "demo/samples-2025-01-20.csv",
            "--records",
            "demo/logger-records.csv",
        ],
        d,
    );
    assert_eq!(v.status.code(), Some(0), "{}", text(&v.stdout));
    // 144 ten-minute intervals in a day, six channels.
    let csv = std::fs::read_to_string(d.join("demo/logger-records.csv")).unwrap();
    assert_eq!(records(&csv).len(), 144 * 6);
}

#[test]
fn closed_stdout_pipe_exits_quietly() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    assert!(tenmin(&["demo", "--days", "1", "--out", "demo"], d)
        .status
        .success());
    let mut child = Command::new(BIN)
        .args([
            "replay",
            "-c",
            "demo/station.toml",
            "demo/samples-2025-01-20.csv",
        ])
        .current_dir(d)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut first = [0u8; 64];
    child.stdout.take().unwrap().read_exact(&mut first).unwrap();
    // The read end is closed here; the rest of the records (about 100 kB) cannot be written.
    let out = child.wait_with_output().unwrap();
    let err = text(&out.stderr);
    assert!(out.status.success(), "{err}");
    assert!(!err.contains("panicked") && !err.contains("error"), "{err}");
}

#[test]
fn help_teaches_formats_examples_and_exit_codes() {
    let dir = tempfile::tempdir().unwrap();
    for sub in ["replay", "verify", "demo"] {
        let out = tenmin(&[sub, "--help"], dir.path());
        assert!(out.status.success());
        let h = text(&out.stdout);
        assert!(h.contains("Example"), "{sub}: {h}");
        assert!(h.contains("Exit codes"), "{sub}: {h}");
    }
    let h = text(&tenmin(&["replay", "--help"], dir.path()).stdout);
    assert!(h.contains("samples CSV") && h.contains("records CSV") && h.contains("station.toml"));
    let h = text(&tenmin(&["--help"], dir.path()).stdout);
    assert!(h.contains("2  bad input"), "{h}");
    assert_eq!(tenmin(&["replay"], dir.path()).status.code(), Some(2));
}

#[test]
fn summary_reports_sample_and_screened_recovery() {
    // Two 1-minute intervals at 1 Hz: the first complete and steady, the second
    // with 30 of 60 samples (recovery 0.5 < 0.9: low_recovery, and partial).
    // Samples: 90 / 120 = 75.0 %; screened intervals: 1 / 2 = 50.0 % (by hand).
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "station.toml",
        "[logging]\ninterval_s = 60\nsample_rate_hz = 1\n\n[[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\n",
    );
    let mut csv = String::from("time,ws\n");
    for s in (0..60).chain(60..90) {
        csv.push_str(&format!(
            "{},{}\n",
            1_737_331_200 + s,
            8.0 + f64::from(s % 3) * 0.1
        ));
    }
    write(dir.path(), "s.csv", csv);
    let out = tenmin(
        &["replay", "-c", "station.toml", "s.csv", "-o", "r.csv"],
        dir.path(),
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let err = text(&out.stderr);
    let line = err
        .lines()
        .find(|l| l.starts_with("ws "))
        .unwrap_or_else(|| panic!("no channel line in {err}"));
    assert!(line.contains("75.0%") && line.contains("50.0%"), "{line}");
}
