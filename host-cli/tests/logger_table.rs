//! `tenmin verify` of another logger's own 10-minute table, and `--infer`.
//!
//! The tables are invented and written by an independent script,
//! `tests/scripts/logger_table_reference.py` (numpy 2.4.6, pandas 3.1.1, and
//! Python's `fractions` and `decimal` for exact rounding), from the same
//! invented samples (`examples/logger-table/samples.csv`); each table's
//! conventions are listed in `tests/data/logger-tables/variants.csv` by that
//! script. Nothing expected here is produced by tenmin.

mod common;
use std::path::Path;

use common::{refused, root, tenmin, text, write};

fn example(name: &str) -> String {
    root()
        .join("examples/logger-table")
        .join(name)
        .display()
        .to_string()
}

/// The script's list of tables and their conventions, by column name.
fn variants() -> Vec<Vec<(String, String)>> {
    let t = std::fs::read_to_string(root().join("tests/data/logger-tables/variants.csv")).unwrap();
    let mut lines = t.lines();
    let head: Vec<String> = lines.next().unwrap().split(',').map(String::from).collect();
    lines
        .map(|l| {
            head.iter()
                .cloned()
                .zip(l.split(',').map(String::from))
                .collect()
        })
        .collect()
}

fn get<'a>(v: &'a [(String, String)], key: &str) -> &'a str {
    &v.iter().find(|(k, _)| k == key).unwrap().1
}

fn table_path(v: &[(String, String)]) -> String {
    match get(v, "name") {
        "example" => example("logger-table.csv"),
        name => root()
            .join("tests/data/logger-tables")
            .join(format!("{name}.csv"))
            .display()
            .to_string(),
    }
}

const CHANNELS: &str = r#"[logging]
interval_s = 600
sample_rate_hz = 1

[[channel]]
id = "ws80a"
kind = "speed"
unit = "m/s"
resolution = 0.01
gust_window_s = 3

[[channel]]
id = "wd78"
kind = "direction"
speed_channel = "ws80a"
"#;

/// A station file for table `v`: its time layout, and for each column either
/// the script's conventions (`declare`) or the column alone (for --infer).
fn station(v: &[(String, String)], declare: bool) -> String {
    let label = get(v, "label");
    let zone = match get(v, "zone_h") {
        "0" => "UTC",
        "1" => "+01:00",
        z => panic!("zone {z}"),
    };
    let mut s = format!(
        "{CHANNELS}\n[logger_table]\n[logger_table.time]\ncolumn = \"time_{label}\"\nformat = \"%Y-%m-%d %H:%M:%S\"\nzone = \"{zone}\"\nlabel = \"{label}\"\n\n"
    );
    let (ds, dsd, dd) = (
        get(v, "speed_decimals"),
        get(v, "sd_decimals"),
        get(v, "direction_decimals"),
    );
    let rounding = match get(v, "rounding") {
        "truncate" => "truncate",
        _ => "unknown",
    };
    if declare {
        s += &format!(
            "[conventions.ws80a]\nmean = {{ column = \"ws80a_mean\", decimals = {ds} }}\nsd = {{ column = \"ws80a_sd\", decimals = {dsd}, divisor = \"{}\" }}\nmin = {{ column = \"ws80a_min\", decimals = {ds} }}\nmax = {{ column = \"ws80a_max\", decimals = {ds}, of = \"{}\" }}\ngust = {{ column = \"ws80a_gust\", decimals = {ds}, of = \"{}\" }}\nrounding = \"{rounding}\"\nmin_samples = {}\n\n[conventions.wd78]\nmean = {{ column = \"wd78_mean\", decimals = {dd}, method = \"{}\", north = \"{}\" }}\nsd = {{ column = \"wd78_sd\", decimals = {dd}, method = \"{}\" }}\nrounding = \"{rounding}\"\n",
            get(v, "divisor"),
            get(v, "max"),
            get(v, "gust"),
            get(v, "min_samples"),
            get(v, "direction_mean"),
            get(v, "north"),
            get(v, "spread"),
        );
    } else {
        s += "[conventions.ws80a]\nmean = { column = \"ws80a_mean\" }\nsd = { column = \"ws80a_sd\" }\nmin = { column = \"ws80a_min\" }\nmax = { column = \"ws80a_max\" }\ngust = { column = \"ws80a_gust\" }\n\n[conventions.wd78]\nmean = { column = \"wd78_mean\" }\nsd = { column = \"wd78_sd\" }\n";
    }
    s
}

fn verify(dir: &Path, toml: &str, table: &str, infer: bool) -> std::process::Output {
    let samples = example("samples.csv");
    let mut args = vec![
        "verify",
        "-q",
        "-c",
        toml,
        "--samples",
        &samples,
        "--records",
        table,
    ];
    if infer {
        args.push("--infer");
    }
    tenmin(&args, dir)
}

/// `table` written as `dir/name`, verified against the example's station file.
fn verify_table(dir: &Path, name: &str, table: impl AsRef<[u8]>) -> std::process::Output {
    let p = write(dir, name, table);
    verify(dir, &example("station.toml"), p.to_str().unwrap(), false)
}

#[test]
fn the_example_runs_as_it_is_and_passes() {
    let out = verify(
        &root(),
        &example("station.toml"),
        &example("logger-table.csv"),
        false,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let o = text(&out.stdout);
    assert!(o.contains("No differences."), "{o}");
    assert!(
        o.contains("ws80a sd (column \"ws80a_sd\"): 12 intervals, 0 differ"),
        "{o}"
    );
}

/// The example's table with one field moved by `delta` hundredths (decimal
/// text arithmetic, not tenmin's).
fn with_field_moved(line: usize, column: usize, delta: i64) -> String {
    let t = std::fs::read_to_string(example("logger-table.csv")).unwrap();
    let mut lines: Vec<String> = t.lines().map(String::from).collect();
    let mut f: Vec<String> = lines[line - 1].split(',').map(String::from).collect();
    let (a, b) = f[column].split_once('.').unwrap();
    let h = a.parse::<i64>().unwrap() * 100 + b.parse::<i64>().unwrap() + delta;
    f[column] = format!("{}.{:02}", h / 100, h % 100);
    lines[line - 1] = f.join(",");
    lines.join("\n") + "\n"
}

#[test]
fn a_gust_off_by_four_hundredths_is_named() {
    let dir = tempfile::tempdir().unwrap();
    // Line 5 is the interval 00:30 to 00:40 UTC (01:40 local, end label);
    // column 6 (0-based 5) is ws80a_gust.
    let off = with_field_moved(5, 5, 4);
    let out = verify_table(dir.path(), "off.csv", off);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out.stderr));
    let o = text(&out.stdout);
    assert!(o.contains("off.csv:5: 2026-03-01T00:30:00Z to 2026-03-01T00:40:00Z ws80a gust (column \"ws80a_gust\""), "{o}");
    assert!(o.contains("differs by 0.04 m/s"), "{o}");
    assert!(o.contains("ws80a gust (column \"ws80a_gust\"): 12 intervals, 1 differ, largest difference 0.04 m/s"), "{o}");
    assert!(o.contains("1 difference(s)."), "{o}");
    // One unit of the last decimal off (0.01 m/s on a mean) is a difference too.
    let out = verify_table(dir.path(), "off1.csv", with_field_moved(5, 1, 1));
    assert_eq!(out.status.code(), Some(1));
    assert!(text(&out.stdout).contains("ws80a mean"));
}

#[test]
fn a_missing_row_and_an_empty_field_are_differences() {
    let dir = tempfile::tempdir().unwrap();
    let t = std::fs::read_to_string(example("logger-table.csv")).unwrap();
    let mut lines: Vec<&str> = t.lines().collect();
    lines.remove(3);
    let mut l2: Vec<String> = lines[1].split(',').map(String::from).collect();
    l2[2].clear();
    let l2 = l2.join(",");
    lines[1] = &l2;
    let out = verify_table(dir.path(), "t.csv", lines.join("\n") + "\n");
    assert_eq!(out.status.code(), Some(1));
    let o = text(&out.stdout);
    assert!(
        o.contains("no row for the interval 2026-03-01T00:20:00Z to 2026-03-01T00:30:00Z"),
        "{o}"
    );
    assert!(
        o.contains("ws80a sd (column \"ws80a_sd\"") && o.contains("empty in the table, expected"),
        "{o}"
    );
}

#[test]
fn inference_recovers_every_generating_convention() {
    let dir = tempfile::tempdir().unwrap();
    for v in variants() {
        let name = get(&v, "name").to_string();
        let table = table_path(&v);
        // Declared as the script wrote it: no difference.
        write(dir.path(), "declared.toml", station(&v, true));
        let out = verify(dir.path(), "declared.toml", &table, false);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{name}: {}{}",
            text(&out.stdout),
            text(&out.stderr)
        );
        // Columns alone: --infer finds the conventions.
        write(dir.path(), "columns.toml", station(&v, false));
        let out = verify(dir.path(), "columns.toml", &table, true);
        let o = text(&out.stdout);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{name}: {o}{}",
            text(&out.stderr)
        );
        let (ds, dsd, dd) = (
            get(&v, "speed_decimals"),
            get(&v, "sd_decimals"),
            get(&v, "direction_decimals"),
        );
        // Samples have 2 decimals, so min, max and a largest-sample gust never
        // need more: a table writing them with 3 or 4 (trailing zeros) reads
        // the same once parsed, and inference reports 2.
        let dx = ds.min("2");
        let dg = if get(&v, "gust") == "sample" { dx } else { ds };
        let dm = if get(&v, "max") == "sample" { dx } else { ds };
        let want = [
            format!("mean = {{ column = \"ws80a_mean\", decimals = {ds} }}"),
            format!("min = {{ column = \"ws80a_min\", decimals = {dx}, of = \"sample\" }}"),
            format!(
                "sd = {{ column = \"ws80a_sd\", decimals = {dsd}, divisor = \"{}\" }}",
                get(&v, "divisor")
            ),
            format!(
                "max = {{ column = \"ws80a_max\", decimals = {dm}, of = \"{}\" }}",
                get(&v, "max")
            ),
            format!(
                "gust = {{ column = \"ws80a_gust\", decimals = {dg}, of = \"{}\" }}",
                get(&v, "gust")
            ),
            format!(
                "mean = {{ column = \"wd78_mean\", decimals = {dd}, method = \"{}\", north = \"{}\" }}",
                get(&v, "direction_mean"),
                get(&v, "north")
            ),
            format!(
                "sd = {{ column = \"wd78_sd\", decimals = {dd}, method = \"{}\" }}",
                get(&v, "spread")
            ),
        ];
        for w in &want {
            assert!(
                o.lines().any(|l| l == w),
                "{name}: expected the line\n{w}\nin\n{o}"
            );
        }
        // The rule for few samples: a range the table cannot narrow (no interval
        // holds a number of samples in between), which must hold the script's.
        let ws = o.split("[conventions.ws80a]").nth(1).unwrap();
        let ms = ws
            .lines()
            .find(|l| l.starts_with("min_samples = "))
            .unwrap();
        let nums: Vec<u32> = ms
            .split(|c: char| !c.is_ascii_digit())
            .filter_map(|t| t.parse().ok())
            .collect();
        let want: u32 = get(&v, "min_samples").parse().unwrap();
        let (lo, hi) = (nums[0], *nums.last().unwrap());
        assert!(
            lo <= want && (want <= hi || (want == 1 && lo == 1)),
            "{name}: {ms}, script {want}"
        );
        if get(&v, "rounding") == "truncate" {
            assert!(o.contains("rounding = \"truncate\""), "{name}: {o}");
        } else {
            assert!(!o.contains("rounding = \"truncate\""), "{name}: {o}");
        }
        // The lines printed are a station file that verifies.
        let printed = o
            .split("(check them, then `tenmin verify` without --infer):\n")
            .nth(1)
            .unwrap()
            .split("\nEvery column")
            .next()
            .unwrap();
        let toml = station(&v, false);
        let head = toml.split("[conventions.ws80a]").next().unwrap();
        write(dir.path(), "printed.toml", format!("{head}{printed}"));
        let out = verify(dir.path(), "printed.toml", &table, false);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{name}: {}{}",
            text(&out.stdout),
            text(&out.stderr)
        );
    }
}

/// `t` with `from` replaced by `to` (the first time) written as `dir/name`,
/// verified against the example's station file: exit 2, stderr returned.
fn refused_table(dir: &Path, name: &str, t: &str, from: &str, to: &str) -> String {
    refused(&verify_table(dir, name, t.replacen(from, to, 1)), &[])
}

#[test]
fn bad_tables_are_exit_2_naming_file_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let t = std::fs::read_to_string(example("logger-table.csv")).unwrap();
    // A column the declaration names is not in the header.
    let e = refused_table(d, "renamed.csv", &t, "ws80a_sd", "ws80a_std");
    assert!(
        e.contains("renamed.csv:1:") && e.contains("no column \"ws80a_sd\""),
        "{e}"
    );
    // A time off the interval grid.
    let e = refused_table(d, "grid.csv", &t, "01:30:00,", "01:33:00,");
    assert!(
        e.contains("grid.csv:4:")
            && e.contains("time column \"time_end\"")
            && e.contains("not on the 600 s interval grid"),
        "{e}"
    );
    // A field that is not a number.
    let e = refused_table(d, "text.csv", &t, ",7.89,", ",7.8x,");
    assert!(
        e.contains("text.csv:3:") && e.contains("field 2 (ws80a.mean)"),
        "{e}"
    );
    // A row of fewer fields than the header.
    let e = refused_table(d, "short.csv", &t, ",9.2\n", "\n");
    assert!(e.contains("short.csv:4:"), "{e}");
    // A declaration the core cannot compute.
    let bad = std::fs::read_to_string(example("station.toml"))
        .unwrap()
        .replace(
            "min = { column = \"ws80a_min\", decimals = 2, of = \"sample\" }",
            "min = { column = \"ws80a_min\", decimals = 2, of = \"running_mean\" }",
        );
    write(dir.path(), "bad.toml", bad);
    let out = verify(dir.path(), "bad.toml", &example("logger-table.csv"), false);
    assert_eq!(out.status.code(), Some(2));
    let e = text(&out.stderr);
    assert!(
        e.contains("bad.toml:") && e.contains("smallest running mean"),
        "{e}"
    );
    // A [logger_table] without [conventions] (found by the fuzz target
    // `table`): the error names the station file and the table's line.
    let example_toml = std::fs::read_to_string(example("station.toml")).unwrap();
    let at = example_toml.find("[conventions.ws80a]").unwrap();
    let bare = &example_toml[..at];
    let line = bare.lines().position(|l| l == "[logger_table]").unwrap() + 1;
    write(dir.path(), "bare.toml", bare);
    let out = verify(dir.path(), "bare.toml", &example("logger-table.csv"), false);
    assert_eq!(out.status.code(), Some(2));
    let e = text(&out.stderr);
    assert!(
        e.contains(&format!("bare.toml:{line}:")) && e.contains("needs [conventions."),
        "{e}"
    );
}
