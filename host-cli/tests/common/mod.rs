//! Helpers shared by the integration tests: run the built `tenmin`, read its
//! output, check its exit code, and the calendar arithmetic the fixtures use.
#![allow(dead_code)]

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The `tenmin` binary cargo built for these tests.
pub const BIN: &str = env!("CARGO_BIN_EXE_tenmin");

/// Runs `tenmin` with `args` in `dir`.
pub fn tenmin(args: &[&str], dir: &Path) -> Output {
    Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run tenmin")
}

/// Output bytes as text.
pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// Writes a fixture file into `dir`.
pub fn write(dir: &Path, name: &str, content: impl AsRef<[u8]>) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, content).unwrap();
    p
}

/// The workspace root (the folder that holds `host-cli/` and `examples/`).
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("workspace root")
        .to_path_buf()
}

/// Asserts that `out` exited with `code`, showing its stdout and stderr when
/// not; returns stdout followed by stderr, as text.
pub fn exits(out: &Output, code: i32) -> String {
    let both = format!("{}{}", text(&out.stdout), text(&out.stderr));
    assert_eq!(out.status.code(), Some(code), "{both}");
    both
}

/// Asserts exit code 2 and a message on stderr holding each of `wants`;
/// returns stderr.
pub fn refused(out: &Output, wants: &[&str]) -> String {
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    for w in wants {
        assert!(err.contains(w), "expected {w:?} in: {err}");
    }
    err
}

/// A CSV with no quoted field (the records CSV) as rows of column -> field;
/// every row must have as many fields as the header.
pub fn records(csv: &str) -> Vec<HashMap<String, String>> {
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    lines
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            assert_eq!(f.len(), header.len(), "{l}");
            header
                .iter()
                .zip(f)
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

/// Civil date (year, month, day) of days since 1970-01-01 (H. Hinnant,
/// "chrono-Compatible Low-Level Date Algorithms", civil_from_days, public
/// domain; from memory, common practice).
pub fn civil(days: i64) -> (i64, i64, i64) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (yoe + era * 400 + i64::from(m <= 2), m, d)
}

/// Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant's
/// days_from_civil, the inverse of [`civil`], public domain; common practice).
pub fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// Seconds since the epoch as RFC 3339 UTC, `YYYY-MM-DDThh:mm:ssZ`.
pub fn rfc3339(s: i64) -> String {
    let (y, m, d) = civil(s.div_euclid(86_400));
    let r = s.rem_euclid(86_400);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        r / 3600,
        r / 60 % 60,
        r % 60
    )
}
