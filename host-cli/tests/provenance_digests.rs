//! The provenance file of `tenmin replay -o` names each samples file's
//! SHA-256 and size, computed in the replay's own reading of it: checked
//! against coreutils `sha256sum` (FIPS 180-4 SHA-256, run here as a separate
//! program) and the file system's size, for plain, `.gz` and `.zst` files, a
//! last line without a newline, and `--jobs 1` and `--jobs 2`; and the
//! records file's, read back while it was written.

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

#[test]
fn replay_provenance_digests_match_sha256sum_for_every_kind_of_file() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("station.toml"), STATION).unwrap();
    // Two hours at 1 Hz from 2025-01-20T00:00:00Z (1737331200 s).
    let mut csv = String::from("time,ws\n");
    for i in 0..7200i64 {
        csv.push_str(&format!(
            "{},{}.{:02}\n",
            1_737_331_200 + i,
            4 + i % 7,
            i % 100
        ));
    }
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
            assert_eq!(
                prov["output"]["sha256"].as_str().unwrap(),
                sha256sum(&d.join("r.csv")),
                "{name} -j {jobs}: output"
            );
            assert_eq!(
                prov["output"]["size"].as_u64().unwrap(),
                std::fs::metadata(d.join("r.csv")).unwrap().len()
            );
            let v = Command::new(BIN)
                .args(["verify", "--provenance", "r.csv"])
                .current_dir(d)
                .output()
                .unwrap();
            assert!(v.status.success(), "{name}: {v:?}");
        }
    }
}
