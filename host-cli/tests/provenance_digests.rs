//! The provenance file of `tenmin replay -o` names each samples file's
//! SHA-256 and size, computed in the replay's own reading of it: checked
//! against coreutils `sha256sum` (FIPS 180-4 SHA-256, run here as a separate
//! program) and the file system's size, for plain, `.gz` and `.zst` files, a
//! last line without a newline, and `--jobs 1` and `--jobs 2`; and the
//! output's (the records of `replay` and `decode`, a report's page), read
//! back while it was written.

use std::io::Write;
use std::path::Path;
use std::process::Command;

const BIN: &str = env!("CARGO_BIN_EXE_tenmin");

const STATION: &str = "\
[logging]
interval_s = 600
sample_rate_hz = 1

[[channel]]
id = \"ws\"
kind = \"speed\"
resolution = 0.01
";

/// `sha256sum FILE` (coreutils), lowercase hex.
fn sha256sum(path: &Path) -> String {
    let out = Command::new("sha256sum").arg(path).output().unwrap();
    assert!(out.status.success());
    String::from_utf8(out.stdout).unwrap()[..64].to_string()
}

/// The provenance `prov`'s output digest is `sha256sum`'s of `path`, and
/// its size the file system's.
fn output_digest_is_sha256sums(prov: &serde_json::Value, path: &Path, what: &str) {
    assert_eq!(
        prov["output"]["sha256"].as_str().unwrap(),
        sha256sum(path),
        "{what}: output"
    );
    assert_eq!(
        prov["output"]["size"].as_u64().unwrap(),
        std::fs::metadata(path).unwrap().len(),
        "{what}: output size"
    );
}

/// `seconds` samples of the station at 1 Hz from 2025-01-20T00:00:00Z
/// (1737331200 s), as tenmin's own CSV.
fn samples(seconds: i64) -> String {
    let mut csv = String::from("time,ws\n");
    for i in 0..seconds {
        csv.push_str(&format!(
            "{},{}.{:02}\n",
            1_737_331_200 + i,
            4 + i % 7,
            i % 100
        ));
    }
    csv
}

#[test]
fn replay_provenance_digests_match_sha256sum_for_every_kind_of_file() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("station.toml"), STATION).unwrap();
    // Two hours at 1 Hz.
    let csv = samples(7200);
    std::fs::write(d.join("a.csv"), &csv).unwrap();
    std::fs::write(d.join("nonl.csv"), csv.trim_end()).unwrap();
    let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    gz.write_all(csv.as_bytes()).unwrap();
    std::fs::write(d.join("a.csv.gz"), gz.finish().unwrap()).unwrap();
    std::fs::write(
        d.join("a.csv.zst"),
        zstd::encode_all(csv.as_bytes(), 3).unwrap(),
    )
    .unwrap();

    for name in ["a.csv", "nonl.csv", "a.csv.gz", "a.csv.zst"] {
        for jobs in ["1", "2"] {
            let out = Command::new(BIN)
                .args(["replay", "-q", "-j", jobs, "--chunk-size", "8192"])
                .args(["-c", "station.toml", name, "-o", "r.csv"])
                .current_dir(d)
                .output()
                .unwrap();
            assert!(out.status.success(), "{name}: {out:?}");
            let prov: serde_json::Value =
                serde_json::from_slice(&std::fs::read(d.join("r.csv.provenance.json")).unwrap())
                    .unwrap();
            let inputs = prov["inputs"].as_array().unwrap();
            let s = inputs.last().unwrap();
            assert_eq!(s["role"], "samples");
            assert_eq!(s["path"], name);
            assert_eq!(
                s["sha256"].as_str().unwrap(),
                sha256sum(&d.join(name)),
                "{name} -j {jobs}"
            );
            assert_eq!(
                s["size"].as_u64().unwrap(),
                std::fs::metadata(d.join(name)).unwrap().len()
            );
            // The records file's digest, read back on a helper thread while
            // it was written.
            output_digest_is_sha256sums(&prov, &d.join("r.csv"), &format!("{name} -j {jobs}"));
            let v = Command::new(BIN)
                .args(["verify", "--provenance", "r.csv"])
                .current_dir(d)
                .output()
                .unwrap();
            assert!(v.status.success(), "{name}: {v:?}");
        }
    }
}

/// Runs `tenmin` with `args` in `dir`, killed after 60 s (a check that
/// would read without end fails instead of hanging the test run).
fn tenmin_within_a_minute(args: &[&str], dir: &Path) -> std::process::Output {
    let mut child = Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let start = std::time::Instant::now();
    while child.try_wait().unwrap().is_none() {
        if start.elapsed() > std::time::Duration::from_secs(60) {
            child.kill().unwrap();
            panic!("tenmin {args:?} still running after 60 s");
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.wait_with_output().unwrap()
}

/// `verify --provenance` reads only what a provenance file's sizes allow: a
/// path it names that is now a device or a FIFO is reported changed without
/// being read (it would be read without end, or wait for a writer), and a
/// file grown since is read no further than its recorded size and one byte.
#[test]
fn a_provenance_check_reads_no_more_than_the_recorded_sizes() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("station.toml"), STATION).unwrap();
    let csv = samples(1200);
    std::fs::write(d.join("a.csv"), &csv).unwrap();
    let out = Command::new(BIN)
        .args(["replay", "-q", "-c", "station.toml", "a.csv", "-o", "r.csv"])
        .current_dir(d)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let prov_path = d.join("r.csv.provenance.json");
    let prov: serde_json::Value =
        serde_json::from_slice(&std::fs::read(&prov_path).unwrap()).unwrap();
    let check = || {
        let out = tenmin_within_a_minute(&["verify", "--provenance", "r.csv"], d);
        (
            out.status.code(),
            String::from_utf8_lossy(&out.stdout).into_owned(),
        )
    };
    assert_eq!(check().0, Some(0));

    // The samples input renamed to a device and to a FIFO in the provenance.
    let fifo = d.join("pipe");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success());
    for named in ["/dev/zero", fifo.to_str().unwrap()] {
        let mut p = prov.clone();
        for input in p["inputs"].as_array_mut().unwrap() {
            if input["role"] == "samples" {
                input["path"] = serde_json::Value::from(named);
            }
        }
        std::fs::write(&prov_path, serde_json::to_vec_pretty(&p).unwrap()).unwrap();
        let (code, so) = check();
        assert_eq!(code, Some(1), "{so}");
        let changed: Vec<&str> = so.lines().filter(|l| l.starts_with("CHANGED")).collect();
        assert_eq!(changed.len(), 1, "{so}");
        assert!(
            changed[0].contains(named) && changed[0].contains("not a regular file"),
            "{so}"
        );
    }

    // The samples grown since: a change, read no further than one byte more.
    std::fs::write(&prov_path, serde_json::to_vec_pretty(&prov).unwrap()).unwrap();
    let mut grown = csv.clone();
    grown.push_str("1737332400,5.00\n");
    std::fs::write(d.join("a.csv"), &grown).unwrap();
    let (code, so) = check();
    assert_eq!(code, Some(1), "{so}");
    assert!(
        so.contains("CHANGED  input (samples): ")
            && so.contains(&format!("a.csv: more than {} bytes", csv.len())),
        "{so}"
    );
}

/// The output's digest in the provenance files of `tenmin decode -o` and
/// `tenmin report` (its `report.html`), read back while the file was
/// written: coreutils `sha256sum` and the file system's size, and `verify
/// --provenance` passes on both. The demo's day gives the log.
#[test]
fn decode_and_report_provenance_digests_match_sha256sum() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let run = |args: &[&str]| {
        let out = Command::new(BIN)
            .args(args)
            .current_dir(d)
            .output()
            .unwrap();
        assert!(out.status.success(), "{args:?}: {out:?}");
    };
    run(&["demo", "--days", "1", "--out", "demo"]);
    run(&[
        "decode",
        "-q",
        "-c",
        "demo/station.toml",
        "demo/logger.log",
        "-o",
        "decoded.csv",
    ]);
    run(&[
        "report",
        "-c",
        "demo/station.toml",
        "decoded.csv",
        "-o",
        "report",
    ]);
    for output in ["decoded.csv", "report/report.html"] {
        let prov: serde_json::Value = serde_json::from_slice(
            &std::fs::read(d.join(format!("{output}.provenance.json"))).unwrap(),
        )
        .unwrap();
        output_digest_is_sha256sums(&prov, &d.join(output), output);
        run(&["verify", "--provenance", output]);
    }
}
