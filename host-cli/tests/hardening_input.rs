//! Hardening of the input side: bounded memory on any file (record and station
//! file limits), the supported span of sample times refused when read, no
//! silent empty result, and a catalogue of malformed samples files that must
//! each end in exit 0 or 2 (never a panic or an abort), with a message naming
//! the file when it is 2.

use std::path::Path;
use std::process::{Command, Output};

mod common;
use common::{refused, tenmin, text, write, BIN};

/// A 1-minute, 1 Hz station of one anemometer and one vane.
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
"#;

const HEADER: &str = "time,ws,wd\n";

/// `n` good rows from 2025-01-20T00:00:00Z on, one a second.
fn good_rows(n: usize) -> String {
    // 2025-01-20T00:00:00Z = 1737331200 s (POSIX time, common practice).
    (0..n)
        .map(|i| format!("{},{}.5,{}\n", 1_737_331_200 + i, 5 + i % 3, 100 + i % 7))
        .collect()
}

fn setup() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "station.toml", STATION);
    dir
}

/// Runs `tenmin` with the address space limited to 64 MiB (the bound the
/// hardening promises for any input), through `sh -c 'ulimit -v'`.
#[cfg(target_os = "linux")]
fn tenmin_in_64_mib(args: &[&str], dir: &Path) -> Output {
    let mut script = String::from("ulimit -v 65536 && exec \"$0\"");
    for i in 0..args.len() {
        script.push_str(&format!(" \"${}\"", i + 1));
    }
    Command::new("sh")
        .arg("-c")
        .arg(script)
        .arg(BIN)
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run tenmin under ulimit")
}

#[cfg(target_os = "linux")]
#[test]
fn an_endless_record_is_refused_in_bounded_memory() {
    let dir = setup();
    let d = dir.path();
    // 8 MiB each: eight times the record limit.
    let big = 8 << 20;
    let mut one_line = b"time,".to_vec();
    one_line.resize(big, b'x');
    write(d, "one-line.csv", &one_line);
    write(d, "nul.csv", vec![0u8; big]);
    let mut data_line = format!("{HEADER}{}", good_rows(5)).into_bytes();
    data_line.extend(b"1737331300,");
    data_line.resize(big, b'7');
    write(d, "data-line.csv", &data_line);
    // A quote that never closes: the `csv` crate's way, with its own cap.
    let mut quoted = format!("{HEADER}{}1737331300,\"", good_rows(5)).into_bytes();
    while quoted.len() < big {
        quoted.extend(b"7\n");
    }
    write(d, "quote.csv", &quoted);
    for (file, line) in [
        ("one-line.csv", 1),
        ("nul.csv", 1),
        ("data-line.csv", 7),
        ("quote.csv", 7),
    ] {
        for jobs in ["1", "2"] {
            let out = tenmin_in_64_mib(
                &[
                    "replay",
                    "-c",
                    "station.toml",
                    file,
                    "-j",
                    jobs,
                    "-o",
                    "records.csv",
                ],
                d,
            );
            refused(
                &out,
                &[&format!("{file}:{line}: a record (line) longer than")],
            );
            assert!(!d.join("records.csv").exists(), "{file} -j {jobs}");
        }
    }
    // A records file with an endless line, for verify and report.
    write(d, "samples.csv", format!("{HEADER}{}", good_rows(90)));
    let ok = tenmin(
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
    assert!(ok.status.success(), "{}", text(&ok.stderr));
    let mut records = std::fs::read(d.join("rec.csv")).unwrap();
    let lines = records.iter().filter(|&&b| b == b'\n').count();
    records.resize(big, b'9');
    write(d, "rec-long.csv", &records);
    let at = format!("rec-long.csv:{}: a record (line) longer than", lines + 1);
    let out = tenmin_in_64_mib(
        &[
            "verify",
            "-c",
            "station.toml",
            "--samples",
            "samples.csv",
            "--records",
            "rec-long.csv",
        ],
        d,
    );
    refused(&out, &[&at]);
    let out = tenmin_in_64_mib(
        &[
            "report",
            "-c",
            "station.toml",
            "rec-long.csv",
            "--out",
            "rep",
        ],
        d,
    );
    refused(&out, &[&at]);
}

#[cfg(target_os = "linux")]
#[test]
fn an_oversized_or_endless_station_file_is_refused() {
    let dir = setup();
    let d = dir.path();
    write(d, "samples.csv", format!("{HEADER}{}", good_rows(3)));
    let mut huge = STATION.to_string();
    while huge.len() <= 2 << 20 {
        huge.push_str("# a comment line that pads the station file far past its limit\n");
    }
    write(d, "huge.toml", &huge);
    for station in ["huge.toml", "/dev/zero"] {
        let out = tenmin_in_64_mib(&["replay", "-c", station, "samples.csv"], d);
        refused(&out, &[station, "not a station file"]);
    }
}

#[test]
fn times_outside_the_supported_span_are_refused_when_read() {
    let dir = setup();
    let d = dir.path();
    // Epoch milliseconds where seconds are expected (year 57024), a day in the
    // last day of 9999 kept free, year 10000 as epoch seconds, and before year 0.
    for (bad, name) in [
        ("1737331200000", "ms"),
        ("9999-12-31T00:00:00Z", "last-day"),
        ("253402300800", "y10000"),
        ("-62167219201", "before-0"),
    ] {
        let file = format!("{name}.csv");
        write(d, &file, format!("{HEADER}{}{bad},5,100\n", good_rows(2)));
        let out = tenmin(&["replay", "-c", "station.toml", &file, "-q"], d);
        refused(
            &out,
            &[
                &format!("{file}:4: field 1 (time)"),
                "outside the supported span",
            ],
        );
    }
    // The last supported second: its interval ends at 9999-12-31T00:00:00Z,
    // which the records readers (verify, report) read back.
    write(
        d,
        "edge.csv",
        format!("{HEADER}9999-12-30T23:59:59Z,5,100\n"),
    );
    let out = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "edge.csv",
            "-o",
            "edge-rec.csv",
            "-q",
        ],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let rec = std::fs::read_to_string(d.join("edge-rec.csv")).unwrap();
    assert!(
        rec.contains("9999-12-30T23:59:00Z,9999-12-31T00:00:00Z,ws,"),
        "{rec}"
    );
    let out = tenmin(
        &[
            "verify",
            "-c",
            "station.toml",
            "--samples",
            "edge.csv",
            "--records",
            "edge-rec.csv",
            "-q",
        ],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let out = tenmin(
        &[
            "report",
            "-c",
            "station.toml",
            "edge-rec.csv",
            "--out",
            "rep",
        ],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
}

#[test]
fn rows_that_give_no_records_are_an_error_unless_allowed() {
    let dir = setup();
    let d = dir.path();
    write(
        d,
        "all-bad.csv",
        format!("{HEADER}1737331200000,5,100\nnot a time,5,100\n"),
    );
    for jobs in ["1", "2"] {
        let out = tenmin(
            &[
                "replay",
                "-c",
                "station.toml",
                "all-bad.csv",
                "--skip-bad-rows",
                "-q",
                "-j",
                jobs,
                "-o",
                "rec.csv",
            ],
            d,
        );
        refused(
            &out,
            &[
                "all-bad.csv",
                "2 data row(s) read, no records",
                "--allow-no-records",
            ],
        );
        assert!(!d.join("rec.csv").exists());
    }
    let out = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "all-bad.csv",
            "--skip-bad-rows",
            "--allow-no-records",
            "-q",
            "-o",
            "rec.csv",
        ],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    // A header alone is no data: an empty records file, exit 0.
    write(d, "header-only.csv", HEADER);
    let out = tenmin(
        &["replay", "-c", "station.toml", "header-only.csv", "-q"],
        d,
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    // `tenmin export` by the same rule: no sample file from rows that give
    // no samples, unless allowed; a header alone exports an empty file.
    for out_file in ["s.tmsf", "s.parquet"] {
        let export = |samples: &str, allow: bool| {
            let mut args = vec![
                "export",
                "-c",
                "station.toml",
                samples,
                "--skip-bad-rows",
                "-q",
                "-o",
                out_file,
            ];
            if allow {
                args.push("--allow-no-records");
            }
            tenmin(&args, d)
        };
        refused(
            &export("all-bad.csv", false),
            &[
                "all-bad.csv",
                "2 data row(s) read, no samples",
                "--allow-no-records",
            ],
        );
        assert!(!d.join(out_file).exists(), "{out_file}");
        let out = export("all-bad.csv", true);
        assert!(out.status.success(), "{}", text(&out.stderr));
        assert!(d.join(out_file).exists(), "{out_file}");
        std::fs::remove_file(d.join(out_file)).unwrap();
        let out = export("header-only.csv", false);
        assert!(out.status.success(), "{}", text(&out.stderr));
        std::fs::remove_file(d.join(out_file)).unwrap();
    }
}

/// A catalogue of malformed samples files: each one read with and without
/// `--skip-bad-rows`, on one and two threads. Every run ends in 0 or 2 (never
/// a panic, 101, or an abort), a 2 names the file, and both readers agree.
#[test]
fn catalogue_of_malformed_samples_files() {
    let dir = setup();
    let d = dir.path();
    let good = good_rows(200);
    let cases: Vec<(&str, Vec<u8>)> = vec![
        ("empty", Vec::new()),
        ("bom-header", format!("\u{feff}{HEADER}{good}").into_bytes()),
        (
            "header-twice",
            format!("{HEADER}{HEADER}{good}").into_bytes(),
        ),
        ("no-header", good.clone().into_bytes()),
        (
            "cr-only",
            format!("{HEADER}{good}").replace('\n', "\r").into_bytes(),
        ),
        (
            "crlf",
            format!("{HEADER}{good}").replace('\n', "\r\n").into_bytes(),
        ),
        (
            "truncated-row",
            format!("{HEADER}{}1737331300,5", good).into_bytes(),
        ),
        (
            "extra-field",
            format!("{HEADER}{}1737331300,5,100,7\n", good).into_bytes(),
        ),
        ("latin1", {
            let mut v = format!("{HEADER}{good}").into_bytes();
            v.extend(b"1737331300,5\xe9,100\n");
            v
        }),
        (
            "nul-in-row",
            format!("{HEADER}{}17373\x0031300,5,100\n", good).into_bytes(),
        ),
        (
            "unclosed-quote",
            format!("{HEADER}{}\"1737331300,5,100\n", good).into_bytes(),
        ),
        (
            "quoted-fields",
            format!("{HEADER}\"1737331300\",\"5\",\"100\"\n").into_bytes(),
        ),
        ("only-commas", format!("{HEADER},,\n,,\n").into_bytes()),
        (
            "huge-number",
            format!("{HEADER}1737331300,1e400,100\n").into_bytes(),
        ),
        (
            "negative-zero",
            format!("{HEADER}1737331300,-0,-0\n").into_bytes(),
        ),
        (
            "many-fields",
            format!("{HEADER}{}\n", ",".repeat(100_000)).into_bytes(),
        ),
        (
            "blank-lines",
            format!("\n\n{HEADER}\n\n{good}\n\n").into_bytes(),
        ),
        (
            "duplicate-column",
            "time,ws,ws\n1737331300,5,5\n".as_bytes().to_vec(),
        ),
        (
            "unknown-column",
            "time,ws,wd,zz\n1737331300,5,5,5\n".as_bytes().to_vec(),
        ),
    ];
    for (name, bytes) in &cases {
        let file = format!("{name}.csv");
        write(d, &file, bytes);
        for skip in [false, true] {
            let mut outs = Vec::new();
            for jobs in ["1", "2"] {
                let mut args = vec!["replay", "-c", "station.toml", &file, "-j", jobs];
                if skip {
                    args.push("--skip-bad-rows");
                }
                let out = tenmin(&args, d);
                let err = text(&out.stderr);
                match out.status.code() {
                    Some(0) => {}
                    Some(2) => assert!(err.contains(&file), "{name}: {err}"),
                    c => panic!("{name} (skip {skip}, jobs {jobs}): exit {c:?}: {err}"),
                }
                outs.push((out.status.code(), out.stdout, err));
            }
            assert_eq!(outs[0].0, outs[1].0, "{name} (skip {skip})");
            assert_eq!(outs[0].1, outs[1].1, "{name} (skip {skip})");
        }
    }
}

/// Damaged Parquet and Arrow IPC samples: a file of `tenmin export` cut short
/// and with bytes changed at many places, a Parquet footer whose metadata
/// holds a thrift type the `parquet` crate does not read (it panicked there),
/// an Arrow stream whose message declares a body of petabytes (the `arrow`
/// crate reserved it before reading), and a Parquet page header of 3 KiB
/// that made the `parquet` crate take 1.7 GB (all found by the fuzz target
/// `columnar`): each ends in exit 0 or 2 within a 64 MiB address space, with
/// no panic printed, and exit 2 names the file.
#[cfg(target_os = "linux")]
#[test]
fn damaged_columnar_files_are_errors_not_crashes() {
    let dir = setup();
    let d = dir.path();
    write(d, "s.csv", format!("{HEADER}{}", good_rows(200)));
    // The files the fuzzer found hold the fuzz targets' channels.
    write(d, "fuzz.toml", host_cli::fuzzing::STATION);
    let mut cases: Vec<(String, Vec<u8>, &str)> = Vec::new();
    for ext in ["parquet", "arrow"] {
        let name = format!("good.{ext}");
        let out = tenmin(
            &["export", "-q", "-c", "station.toml", "s.csv", "-o", &name],
            d,
        );
        assert!(out.status.success(), "{}", text(&out.stderr));
        let good = std::fs::read(d.join(&name)).unwrap();
        let mut x = 0x9E37_79B9_7F4A_7C15u64;
        let mut next = move || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for k in 1..=12 {
            let cut = good.len() * k / 13;
            cases.push((
                format!("cut-{k}.{ext}"),
                good[..cut].to_vec(),
                "station.toml",
            ));
        }
        for k in 0..60 {
            let mut bad = good.clone();
            for _ in 0..1 + k % 3 {
                let at = (next() % bad.len() as u64) as usize;
                bad[at] ^= 1 << (next() % 8);
            }
            cases.push((format!("flip-{k}.{ext}"), bad, "station.toml"));
        }
    }
    // The fuzzer's inputs: a selector byte, then the file.
    for (found, name) in [
        (
            "found-parquet-thrift-map-not-implemented",
            "thrift-map.parquet",
        ),
        (
            "found-arrow-stream-body-past-the-end",
            "body-past-the-end.arrows",
        ),
        (
            "found-parquet-page-of-gigabytes",
            "page-of-gigabytes.parquet",
        ),
    ] {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("fuzz/corpus/columnar")
            .join(found);
        let bytes = std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        cases.push((name.into(), bytes[1..].to_vec(), "fuzz.toml"));
    }
    let mut refused_files = 0;
    for (name, bytes, station) in &cases {
        std::fs::write(d.join(name), bytes).unwrap();
        let out = tenmin_in_64_mib(&["replay", "-q", "-c", station, "--skip-bad-rows", name], d);
        let err = text(&out.stderr);
        assert!(!err.contains("panicked"), "{name}: {err}");
        match out.status.code() {
            Some(0) => {}
            Some(2) => {
                assert!(err.contains(name.as_str()), "{name}: {err}");
                refused_files += 1;
            }
            c => panic!("{name}: exit {c:?}: {err}"),
        }
    }
    assert!(
        refused_files >= cases.len() / 3,
        "{refused_files} of {}",
        cases.len()
    );
    for (name, says) in [
        (
            "thrift-map.parquet",
            "cannot read: the Parquet reader failed",
        ),
        (
            "body-past-the-end.arrows",
            "damaged: a message's body of 5629499534216512 bytes at byte 888, past the file's end",
        ),
        (
            "page-of-gigabytes.parquet",
            "damaged: row group 0, column \"time\": a page header at byte 4 that does not read",
        ),
    ] {
        let out = tenmin(&["replay", "-q", "-c", "fuzz.toml", name], d);
        assert_eq!(out.status.code(), Some(2));
        let err = text(&out.stderr);
        assert!(err.contains(&format!("{name}: {says}")), "{err}");
    }
}
