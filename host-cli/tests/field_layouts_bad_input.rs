//! Bad input in declared layouts (`[input]`): each fault is planted in a copy
//! of an example field file or in a few invented lines, and `tenmin replay` is
//! run on it as a user would. Every fault stops the command with exit code 2
//! and a message naming the place (file and line, the station file's line or
//! key) and what was expected; with `--skip-bad-rows` a bad row is counted
//! and the rest replayed. Nothing is written under the output's name when the
//! command fails.

use std::path::{Path, PathBuf};
use std::process::Output;

mod common;
use common::{tenmin, text, write};

const MIDC_DATA: &str = "midc-uat-20181018-1min.csv";
const SURFRAD_DATA: &str = "surfrad-alamosa-2016-001-1min.dat";

fn example(folder: &str, file: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples/field-files")
        .join(folder)
        .join(file)
}

fn read_example(folder: &str, file: &str) -> String {
    std::fs::read_to_string(example(folder, file)).expect("read the example")
}

/// The midc example's station file with `from` replaced by `to` (which must
/// be there once).
fn midc_station_with(from: &str, to: &str) -> String {
    let s = read_example("midc-1min", "station.toml");
    assert_eq!(
        s.matches(from).count(),
        1,
        "{from:?} in the midc station file"
    );
    s.replace(from, to)
}

/// The 1-based line of `text` that contains `needle` (once).
fn line_of(text: &str, needle: &str) -> usize {
    let lines: Vec<usize> = text
        .lines()
        .enumerate()
        .filter(|(_, l)| l.contains(needle))
        .map(|(i, _)| i + 1)
        .collect();
    assert_eq!(lines.len(), 1, "{needle:?}");
    lines[0]
}

/// `tenmin replay -c <station> <data> -o out.csv <extra>` in `dir`.
fn replay(dir: &Path, station: &str, data: &str, extra: &[&str]) -> Output {
    let mut args = vec!["replay", "-c", station, data, "-o", "out.csv"];
    args.extend_from_slice(extra);
    tenmin(&args, dir)
}

/// Exit code 2, a message containing every `needle`, and no output file.
fn refused(dir: &Path, out: &Output, needles: &[&str]) -> String {
    let err = common::refused(out, needles);
    assert!(
        !dir.join("out.csv").exists(),
        "a failed replay left out.csv"
    );
    err
}

/// The midc file with its last data line cut after its 10th field, as a
/// file cut off while it was written.
fn midc_cut_short(dir: &Path) -> usize {
    let original = read_example("midc-1min", MIDC_DATA);
    let mut lines: Vec<String> = original.lines().map(str::to_string).collect();
    let last = lines.len(); // 1-based number of the last line
    let cut: Vec<&str> = lines[last - 1].split(',').take(10).collect();
    lines[last - 1] = cut.join(",");
    write(dir, MIDC_DATA, lines.join("\n") + "\n");
    write(
        dir,
        "station.toml",
        read_example("midc-1min", "station.toml"),
    );
    last
}

#[test]
fn a_row_with_too_few_fields_names_file_line_and_the_count() {
    let dir = tempfile::tempdir().unwrap();
    let last = midc_cut_short(dir.path());
    assert_eq!(
        last, 1441,
        "1 header line and 1440 minutes (the file as shipped)"
    );
    let out = replay(dir.path(), "station.toml", MIDC_DATA, &[]);
    // The header has 19 names; the cut line keeps 10 fields.
    refused(
        dir.path(),
        &out,
        &[
            &format!("{MIDC_DATA}:1441:"),
            "expected 19 fields",
            "found 10",
        ],
    );
}

#[test]
fn skip_bad_rows_counts_the_short_row_and_replays_the_rest() {
    let dir = tempfile::tempdir().unwrap();
    midc_cut_short(dir.path());
    let out = replay(dir.path(), "station.toml", MIDC_DATA, &["--skip-bad-rows"]);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{err}");
    assert!(err.contains("1440 from 1 file(s)"), "{err}");
    assert!(err.contains("1439 accepted"), "{err}");
    assert!(err.contains("+ 1 bad rows"), "{err}");
    assert!(err.contains("1 wrong field count"), "{err}");
    assert!(
        err.contains(&format!("{MIDC_DATA}:1441: expected 19 fields")),
        "{err}"
    );
    // The last 10-minute interval (06:50 to 07:00 UTC, 23:50 to 24:00 local)
    // held 10 rows, one of them the cut one: 9 valid speeds.
    let records = std::fs::read_to_string(dir.path().join("out.csv")).unwrap();
    let last_ws = records
        .lines()
        .find(|l| l.starts_with("2018-10-19T06:50:00Z,") && l.split(',').nth(2) == Some("ws"))
        .expect("the last interval's speed row");
    assert_eq!(last_ws.split(',').nth(4), Some("9"), "{last_ws}");
}

#[test]
fn a_short_row_in_a_whitespace_file_names_line_and_count() {
    let dir = tempfile::tempdir().unwrap();
    // The network file's layout with its speed and direction (no quality
    // columns): the highest column used is 45.
    let station = r#"
[logging]
interval_s = 600
sample_period_s = 60
missing_values = []

[input]
delimiter = "whitespace"
skip_lines = 2
header = false
missing = ["-9999.9"]

[input.time]
columns = [1, 3, 4, 5, 6]
format = "%Y %m %d %H %M"
zone = "UTC"

[[channel]]
id = "ws"
kind = "speed"
resolution = 0.1
column = 43

[[channel]]
id = "wd"
kind = "direction"
speed_channel = "ws"
column = 45
"#;
    write(dir.path(), "station.toml", station);
    let original = read_example("surfrad-1min", SURFRAD_DATA);
    let mut lines: Vec<String> = original.lines().map(str::to_string).collect();
    // Line 500 (the 498th minute) keeps its first 25 fields.
    let cut: Vec<&str> = lines[499].split_whitespace().take(25).collect();
    lines[499] = cut.join(" ");
    write(dir.path(), SURFRAD_DATA, lines.join("\n") + "\n");
    let out = replay(dir.path(), "station.toml", SURFRAD_DATA, &[]);
    refused(
        dir.path(),
        &out,
        &[
            &format!("{SURFRAD_DATA}:500:"),
            "at least 45 fields",
            "found 25",
        ],
    );
}

#[test]
fn a_column_not_in_the_header_names_the_channel_and_the_header() {
    let dir = tempfile::tempdir().unwrap();
    let station = midc_station_with(
        "column = \"Avg Wind Speed @ 3m [m/s]\"",
        "column = \"Avg Wind Speed @ 10m [m/s]\"",
    );
    write(dir.path(), "station.toml", station);
    let data = example("midc-1min", MIDC_DATA);
    let out = replay(dir.path(), "station.toml", data.to_str().unwrap(), &[]);
    let err = refused(
        dir.path(),
        &out,
        &["station.toml", "\"ws\"", "\"Avg Wind Speed @ 10m [m/s]\""],
    );
    // Every name of the file's header (its first line), so the user can see
    // what to write instead.
    let original = read_example("midc-1min", MIDC_DATA);
    let header = original.lines().next().unwrap();
    for name in header.split(',') {
        assert!(err.contains(&format!("{name:?}")), "{name:?} not in: {err}");
    }
}

#[test]
fn a_format_that_cannot_read_the_first_row_names_file_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let station = midc_station_with("format = \"%Y %j %{hhmm}\"", "format = \"%Y-%m-%d %H:%M\"");
    write(dir.path(), "station.toml", station);
    write(dir.path(), MIDC_DATA, read_example("midc-1min", MIDC_DATA));
    let out = replay(dir.path(), "station.toml", MIDC_DATA, &[]);
    // Line 2 is the first data row; Year is the file's 2nd column (after an
    // unnamed index column); the joined time columns are "2018 291 0".
    refused(
        dir.path(),
        &out,
        &[
            &format!("{MIDC_DATA}:2:"),
            "field 2 (Year)",
            "time format",
            "\"2018 291 0\"",
        ],
    );
}

#[test]
fn a_zone_that_is_not_a_zone_names_the_station_file_line() {
    let dir = tempfile::tempdir().unwrap();
    let station = midc_station_with("zone = \"-07:00\"", "zone = \"Mountain/Standard\"");
    let line = line_of(&station, "zone = ");
    write(dir.path(), "station.toml", &station);
    let data = example("midc-1min", MIDC_DATA);
    let out = replay(dir.path(), "station.toml", data.to_str().unwrap(), &[]);
    refused(
        dir.path(),
        &out,
        &[
            &format!("station.toml:{line}:"),
            "`zone`",
            "\"Mountain/Standard\"",
            "IANA",
        ],
    );
}

/// A station logging in Berlin local time (invented file).
const BERLIN: &str = r#"
[logging]
interval_s = 600
sample_period_s = 60
missing_values = []

[input]
delimiter = ","

[input.time]
column = "Zeit"
format = "%Y-%m-%d %H:%M"
zone = "Europe/Berlin"

[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
column = "Speed"
"#;

// Summer time in the EU begins at 01:00 UTC on the last Sunday of March and
// ends at 01:00 UTC on the last Sunday of October (Directive 2000/84/EC,
// Articles 2 and 3); Berlin keeps UTC+1 in winter, UTC+2 in summer. In 2025
// those Sundays are 30 March and 26 October: local 02:00 to 03:00 is skipped
// on 30 March and local 02:00 to 03:00 occurs twice on 26 October.

/// Replays `rows` (a file `berlin.csv`) with the station `BERLIN` in `dir`.
fn berlin(dir: &Path, rows: &str, extra: &[&str]) -> Output {
    write(dir, "station.toml", BERLIN);
    write(dir, "berlin.csv", rows);
    replay(dir, "station.toml", "berlin.csv", extra)
}

#[test]
fn a_local_time_in_the_spring_gap_names_both_candidates() {
    let dir = tempfile::tempdir().unwrap();
    let out = berlin(
        dir.path(),
        "Zeit,Speed\n2025-03-30 01:59,3.1\n2025-03-30 02:30,3.2\n2025-03-30 03:00,3.3\n",
        &[],
    );
    // 02:30 read as summer time (UTC+2) is 00:30 UTC, as winter time (UTC+1)
    // 01:30 UTC.
    refused(
        dir.path(),
        &out,
        &[
            "berlin.csv:3:",
            "field 1 (Zeit)",
            "does not exist",
            "2025-03-30T00:30:00Z",
            "2025-03-30T01:30:00Z",
            "skipped",
        ],
    );
}

#[test]
fn a_local_time_repeated_in_autumn_names_both_candidates() {
    let dir = tempfile::tempdir().unwrap();
    let out = berlin(
        dir.path(),
        "Zeit,Speed\n2025-10-26 01:59,3.1\n2025-10-26 02:30,3.2\n",
        &[],
    );
    // 02:30 summer time (UTC+2) is 00:30 UTC; 02:30 winter time (UTC+1) is
    // 01:30 UTC.
    refused(
        dir.path(),
        &out,
        &[
            "berlin.csv:3:",
            "occurs twice",
            "2025-10-26T00:30:00Z",
            "2025-10-26T01:30:00Z",
            "repeated",
        ],
    );
}

#[test]
fn skip_bad_rows_counts_a_time_in_the_gap_as_a_bad_time() {
    let dir = tempfile::tempdir().unwrap();
    let out = berlin(
        dir.path(),
        "Zeit,Speed\n2025-03-30 01:59,3.1\n2025-03-30 02:30,3.2\n2025-03-30 03:00,3.3\n",
        &["--skip-bad-rows"],
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{err}");
    assert!(err.contains("+ 1 bad rows"), "{err}");
    assert!(err.contains("1 bad time"), "{err}");
    // 01:59 local (UTC+1) is 00:59 UTC; 03:00 local (UTC+2) is 01:00 UTC:
    // one valid speed in each of the intervals 00:50 and 01:00 UTC.
    let records = std::fs::read_to_string(dir.path().join("out.csv")).unwrap();
    let rows: Vec<(&str, &str)> = records
        .lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (f[0], f[4])
        })
        .collect();
    assert_eq!(
        rows,
        [("2025-03-30T00:50:00Z", "1"), ("2025-03-30T01:00:00Z", "1")]
    );
}
