//! Parallel replay against sequential replay: `--jobs 2` (and 3), with chunks
//! as small as 64 bytes so that chunk boundaries land on every kind of row,
//! must write the same records, byte for byte, and the same summary as
//! `--jobs 1`, which feeds one `qc_core::Station` row by row. The inputs are
//! generated here with every cross-chunk case planted: duplicate and backward
//! times, gaps, unsupported years, bad rows, blank lines, CRLF, quoted files,
//! empty files. Also the `--max-gap-days` check.

use std::path::Path;
use std::process::Output;

mod common;
use common::{refused, rfc3339, tenmin, text};

/// Chunk sizes for the parallel runs: a row or two, a few rows, and larger.
const CHUNKS: [&str; 4] = ["64", "150", "1000", "4096"];

/// Replays with `args` (after `replay`) on one thread, then on two and three
/// with every chunk size, and checks that exit code, records and summary are
/// identical. Returns the sequential run.
fn same_as_sequential(dir: &Path, args: &[&str]) -> Output {
    let run = |extra: &[&str]| {
        let mut all = vec!["replay"];
        all.extend_from_slice(args);
        all.extend_from_slice(extra);
        tenmin(&all, dir)
    };
    let base = run(&["--jobs", "1"]);
    let mut variants: Vec<Vec<&str>> = CHUNKS
        .iter()
        .map(|c| vec!["--jobs", "2", "--chunk-size", c])
        .collect();
    variants.push(vec!["--jobs", "3", "--chunk-size", "100"]);
    variants.push(vec!["--jobs", "2"]);
    for v in &variants {
        let par = run(v);
        assert_eq!(
            par.status.code(),
            base.status.code(),
            "{args:?} {v:?}: {}",
            text(&par.stderr)
        );
        assert!(
            par.stdout == base.stdout,
            "{args:?} {v:?}: records differ\n{}",
            first_difference(&base.stdout, &par.stdout)
        );
        assert_eq!(text(&par.stderr), text(&base.stderr), "{args:?} {v:?}");
    }
    base
}

fn first_difference(a: &[u8], b: &[u8]) -> String {
    let (a, b) = (text(a), text(b));
    for (i, (x, y)) in a.lines().zip(b.lines()).enumerate() {
        if x != y {
            return format!("line {}:\n  sequential {x}\n  parallel   {y}", i + 1);
        }
    }
    format!(
        "one is a prefix of the other: {} and {} lines",
        a.lines().count(),
        b.lines().count()
    )
}

/// A 1-minute, 1 Hz station whose screening looks across intervals and
/// channels (flat-line over 2 minutes, redundant pair, icing), so that the
/// screening state crosses chunk boundaries.
const STATION: &str = r#"
[logging]
interval_s = 60
sample_rate_hz = 1

[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01

[channel.screen]
partner = "ws2"
flat_span_s = 120
icing = { temperature = "t", humidity = "rh" }

[[channel]]
id = "ws2"
kind = "speed"
resolution = 0.01

[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
speed_channel = "ws"

[channel.screen]
flat_span_s = 120
icing = { temperature = "t", humidity = "rh" }

[[channel]]
id = "t"
kind = "scalar"
resolution = 0.1

[[channel]]
id = "rh"
kind = "scalar"
resolution = 0.1
range = [0, 100]
"#;

/// 2025-01-20T00:00:00Z in seconds since the epoch (POSIX time, common practice).
const T0: i64 = 1_737_331_200;

/// A small linear congruential generator (Knuth's MMIX constants, from memory).
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        self.0 >> 33
    }

    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }

    /// True with probability `per_mille` / 1000.
    fn chance(&mut self, per_mille: u64) -> bool {
        self.below(1000) < per_mille
    }
}

/// What to plant in a generated file.
#[derive(Clone, Copy, Default)]
struct Plant {
    /// Duplicate, backward and far-backward times.
    disorder: bool,
    /// Forward jumps of up to a few hours (gaps of empty intervals).
    gaps: bool,
    /// Times outside the years 0000-9999 (rejected by the core).
    unsupported: bool,
    /// Bad rows: wrong field counts, unreadable times and numbers.
    bad: bool,
    /// Blank lines, CRLF, spaces, other time and number forms.
    forms: bool,
    /// Stuck sensors (flat-line) and cold humid spells (icing).
    faults: bool,
}

/// Writes `rows` rows from second `t` on; returns the file and the next time.
fn samples(rng: &mut Rng, mut t: i64, rows: usize, p: Plant) -> (Vec<u8>, i64) {
    let mut out = String::from("time,ws,ws2,wd,t,rh\n");
    let mut stuck = 0u32;
    let mut cold = 0u32;
    let mut last_dir = 1800;
    for _ in 0..rows {
        let mut time = t;
        if p.disorder && rng.chance(40) {
            time = t - 1; // duplicate of the previous row
        } else if p.disorder && rng.chance(20) {
            time = t - 1 - rng.below(30) as i64; // backward step
        } else if p.gaps && rng.chance(8) {
            t += 60 + rng.below(3 * 3600) as i64;
            time = t;
        }
        let time_field = if p.unsupported && rng.chance(15) {
            // Year 10000 and before year 0, as epoch seconds.
            if rng.chance(500) {
                "253402300800".to_string()
            } else {
                "-62167219300".to_string()
            }
        } else if p.forms && rng.chance(100) {
            match rng.below(4) {
                0 => time.to_string(),
                1 => format!("{time}.000"),
                2 => rfc3339(time + 3600).replace('Z', "+01:00"),
                _ => rfc3339(time).replace('T', " "),
            }
        } else {
            rfc3339(time)
        };
        if p.faults && stuck == 0 && rng.chance(3) {
            stuck = 200 + rng.below(300) as u32;
        }
        if p.faults && cold == 0 && rng.chance(2) {
            cold = 300;
        }
        let speed = 2.0 + (rng.below(1500) as f64) / 100.0;
        let ws = if stuck > 0 { 7.77 } else { speed };
        let ws2 = ws + (rng.below(300) as f64) / 100.0 - 1.0;
        if stuck == 0 {
            last_dir = rng.below(3600);
        }
        let (temp, rh) = if cold > 0 {
            (-1.5, 96.0)
        } else {
            (
                5.0 + (rng.below(100) as f64) / 10.0,
                60.0 + (rng.below(300) as f64) / 10.0,
            )
        };
        stuck = stuck.saturating_sub(1);
        cold = cold.saturating_sub(1);
        let mut fields = vec![
            time_field,
            format!("{ws:.2}"),
            format!("{:.2}", ws2.max(0.0)),
            last_dir.to_string(),
            format!("{temp:.1}"),
            format!("{rh:.1}"),
        ];
        if rng.chance(30) {
            let i = 1 + rng.below(5) as usize;
            fields[i] = ["", "NaN", "-999", "-9999"][rng.below(4) as usize].to_string();
        }
        if p.forms && rng.chance(30) {
            let i = 1 + rng.below(5) as usize;
            if i != 3 {
                fields[i] = match rng.below(3) {
                    0 => format!(" {} ", fields[i]),
                    1 => format!("+{}", fields[i]),
                    _ => "1.5e1".to_string(),
                };
            }
        }
        if p.bad && rng.chance(10) {
            match rng.below(4) {
                0 => {
                    fields.pop();
                }
                1 => fields.push("1".into()),
                2 => fields[0] = "yesterday".into(),
                _ => fields[1 + rng.below(5) as usize] = "8..5".into(),
            }
        }
        out.push_str(&fields.join(","));
        if p.forms && rng.chance(20) {
            out.push_str("\r\n");
        } else {
            out.push('\n');
        }
        if p.forms && rng.chance(10) {
            out.push('\n');
        }
        t += 1;
    }
    (out.into_bytes(), t)
}

fn setup() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("station.toml"), STATION).unwrap();
    dir
}

/// Writes `n` files of `rows` rows each, one continuing the other.
fn files(dir: &Path, seed: u64, n: usize, rows: usize, p: Plant) -> Vec<String> {
    let mut rng = Rng(seed);
    let mut t = T0;
    (0..n)
        .map(|i| {
            let (bytes, next) = samples(&mut rng, t, rows, p);
            t = next;
            let name = format!("s{seed}-{i}.csv");
            std::fs::write(dir.join(&name), bytes).unwrap();
            name
        })
        .collect()
}

fn args<'a>(files: &'a [String], extra: &[&'a str]) -> Vec<&'a str> {
    let mut a = vec!["-c", "station.toml"];
    a.extend_from_slice(extra);
    a.extend(files.iter().map(String::as_str));
    a
}

#[test]
fn demo_day_is_the_same_in_parallel() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let out = tenmin(&["demo", "--days", "1", "--out", "demo"], d);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let base = same_as_sequential(
        d,
        &["-c", "demo/station.toml", "demo/samples-2025-01-20.csv"],
    );
    assert!(base.status.success());
    assert!(text(&base.stderr).contains("records: 864 rows"));
}

#[test]
fn disorder_gaps_and_unsupported_times_across_chunks() {
    let dir = setup();
    let d = dir.path();
    let plant = Plant {
        disorder: true,
        gaps: true,
        unsupported: true,
        faults: true,
        ..Plant::default()
    };
    let names = files(d, 1, 3, 1500, plant);
    // Times outside the supported span are bad rows, refused when read: counted
    // with --skip-bad-rows, the same way by both readers.
    let base = same_as_sequential(d, &args(&names, &["--skip-bad-rows"]));
    let err = text(&base.stderr);
    assert!(base.status.success(), "{err}");
    // The planted cases did happen, so the comparison covers them.
    for absent in ["duplicate 0,", "backward 0,", " 0 bad time", "+ 0 rejected"] {
        assert!(!err.contains(absent), "{absent}: {err}");
    }
    let records = text(&base.stdout);
    assert!(records.contains("flatline"), "no flat-line flag planted");
    // Empty intervals (gaps) are rows with n_valid 0.
    assert!(records.lines().any(|l| l.split(',').nth(4) == Some("0")));
}

#[test]
fn bad_rows_forms_and_blank_lines_with_skip_bad_rows() {
    let dir = setup();
    let d = dir.path();
    let plant = Plant {
        disorder: true,
        gaps: true,
        unsupported: true,
        bad: true,
        forms: true,
        faults: true,
    };
    let names = files(d, 2, 2, 2000, plant);
    let base = same_as_sequential(d, &args(&names, &["--skip-bad-rows"]));
    let err = text(&base.stderr);
    assert!(base.status.success(), "{err}");
    assert!(!err.contains("+ 0 bad rows"), "{err}");
    assert!(err.contains("... and"), "{err}");
}

#[test]
fn the_first_bad_row_stops_both_the_same_way() {
    let dir = setup();
    let d = dir.path();
    let mut rng = Rng(3);
    let (mut good, _) = samples(
        &mut rng,
        T0,
        3000,
        Plant {
            disorder: true,
            ..Plant::default()
        },
    );
    // A bad row about two thirds in.
    let at = good.len() * 2 / 3;
    let nl = at + good[at..].iter().position(|b| *b == b'\n').unwrap() + 1;
    good.splice(nl..nl, b"2025-01-20T00:40:00Z,1,2,3\n".iter().copied());
    std::fs::write(d.join("bad.csv"), &good).unwrap();
    let base = same_as_sequential(d, &["-c", "station.toml", "bad.csv"]);
    refused(&base, &["bad.csv:", "expected 6 fields"]);
    // Records of the intervals closed before the bad row are on stdout.
    assert!(text(&base.stdout).lines().count() > 1);
}

#[test]
fn quoted_empty_and_header_only_files() {
    let dir = setup();
    let d = dir.path();
    let plant = Plant {
        disorder: true,
        forms: true,
        ..Plant::default()
    };
    let names = files(d, 4, 2, 1200, plant);
    // A third file continuing the record, with quoted times from its middle on.
    let mut rng = Rng(44);
    let (bytes, _) = samples(&mut rng, T0 + 3000, 1200, plant);
    let text_file = text(&bytes);
    let mut quoted = String::new();
    for (i, line) in text_file.lines().enumerate() {
        if i > 600 && !line.is_empty() {
            let (time, rest) = line.split_once(',').unwrap();
            quoted.push_str(&format!("\"{time}\",{rest}\n"));
        } else {
            quoted.push_str(line);
            quoted.push('\n');
        }
    }
    std::fs::write(d.join("quoted.csv"), quoted).unwrap();
    std::fs::write(d.join("empty.csv"), "").unwrap();
    std::fs::write(d.join("blank.csv"), "\n\n\r\n").unwrap();
    std::fs::write(d.join("header-only.csv"), "time,ws,ws2,wd,t,rh\n").unwrap();
    let all = [
        names[0].clone(),
        "empty.csv".into(),
        "quoted.csv".into(),
        "header-only.csv".into(),
        "blank.csv".into(),
        names[1].clone(),
    ];
    let base = same_as_sequential(d, &args(&all, &["--skip-bad-rows"]));
    let err = text(&base.stderr);
    assert!(base.status.success(), "{err}");
    assert!(err.contains("from 6 file(s)"), "{err}");
    assert!(err.contains("empty file skipped: empty.csv"), "{err}");
    assert!(err.contains("empty file skipped: blank.csv"), "{err}");
    // Without --skip-bad-rows the empty file stops both at the same place.
    let base = same_as_sequential(d, &args(&all, &[]));
    assert_eq!(base.status.code(), Some(2));
    assert!(text(&base.stderr).contains("empty.csv:1: empty file"));
}

#[test]
fn a_row_past_the_first_pieces_is_named_by_its_line() {
    // 25,000 rows (over 1 MiB): `--jobs 1` reads it in pieces of 256 KiB,
    // `--jobs 2` in chunks of 1 MiB and of the sizes of `same_as_sequential`;
    // the line of a row far into the file is the sum of every piece's line
    // ends before it (counted where the pieces are cut).
    let dir = setup();
    let d = dir.path();
    let mut rng = Rng(11);
    let (mut joined, _) = samples(&mut rng, T0, 25_000, Plant::default());
    assert!(joined.len() > 1 << 20, "{}", joined.len());
    // Two years later, at line 25,002 (the header, 25,000 rows, then this).
    let (later, _) = samples(&mut rng, T0 + 730 * 86_400, 1, Plant::default());
    joined.extend_from_slice(later.split(|b| *b == b'\n').nth(1).unwrap());
    joined.push(b'\n');
    std::fs::write(d.join("long.csv"), &joined).unwrap();
    let out = same_as_sequential(d, &["-c", "station.toml", "long.csv"]);
    refused(&out, &["long.csv:25002:", "to 2027-01-20T00:00:00Z"]);
    // The same lines ended by `\r\n`, by a lone `\r` (old Mac), by the
    // three in turn, and with the header quoted (the `csv` crate reads the
    // file then): each line end is one line, wherever the pieces are cut
    // (between a `\r` and its `\n` too).
    let lines: Vec<&[u8]> = joined
        .split(|b| *b == b'\n')
        .filter(|l| !l.is_empty())
        .collect();
    assert_eq!(lines.len(), 25_002);
    let ends: [&[&[u8]]; 3] = [&[b"\r\n"], &[b"\r"], &[b"\n", b"\r\n", b"\r"]];
    for (k, end) in ends.iter().enumerate() {
        for quoted in [false, true] {
            let mut text = Vec::new();
            for (i, l) in lines.iter().enumerate() {
                if i == 0 && quoted {
                    text.extend_from_slice(b"\"time\"");
                    text.extend_from_slice(&l[4..]);
                } else {
                    text.extend_from_slice(l);
                }
                text.extend_from_slice(end[i % end.len()]);
            }
            let name = format!("long-{k}-{quoted}.csv");
            std::fs::write(d.join(&name), &text).unwrap();
            let out = same_as_sequential(d, &["-c", "station.toml", &name]);
            refused(
                &out,
                &[&format!("{name}:25002:"), "to 2027-01-20T00:00:00Z"],
            );
        }
    }
}

/// Quoted fields: each field, the times alone, the header alone (the
/// quotes taken out and the rows read by the block readers), and a value
/// with the delimiter inside quotes far into the file (the `csv` crate
/// reads from its piece on): the records of the file without quotes, the
/// same on one thread and two, and the bad value named by its line.
#[test]
fn quoted_fields_read_as_the_csv_crate_reads_them() {
    let dir = setup();
    let d = dir.path();
    let mut rng = Rng(21);
    let (plain, _) = samples(&mut rng, T0, 25_000, Plant::default());
    std::fs::write(d.join("plain.csv"), &plain).unwrap();
    let want = same_as_sequential(d, &["-c", "station.toml", "plain.csv"]);
    assert_eq!(want.status.code(), Some(0), "{}", text(&want.stderr));
    let text_of = String::from_utf8(plain).unwrap();
    let quote = |line: &str, which: &dyn Fn(usize) -> bool| -> String {
        line.split(',')
            .enumerate()
            .map(|(k, f)| {
                if which(k) {
                    format!("\"{f}\"")
                } else {
                    f.to_string()
                }
            })
            .collect::<Vec<_>>()
            .join(",")
    };
    type Quoting = fn(usize, usize) -> bool;
    let ways: [(&str, Quoting); 3] = [
        ("all", |_, _| true),
        ("times", |i, k| i > 0 && k == 0),
        ("header", |i, _| i == 0),
    ];
    for (name, way) in ways {
        let body: String = text_of
            .lines()
            .enumerate()
            .map(|(i, l)| quote(l, &|k| way(i, k)) + "\n")
            .collect();
        let file = format!("quoted-{name}.csv");
        std::fs::write(d.join(&file), body).unwrap();
        let got = same_as_sequential(d, &["-c", "station.toml", &file]);
        assert_eq!(got.status.code(), Some(0), "{name}: {}", text(&got.stderr));
        assert!(got.stdout == want.stdout, "{name}: records differ");
    }
    // Row 20,000 (line 20,001) holds `"5,5"`: one field for the `csv`
    // crate, not a number.
    let body: String = text_of
        .lines()
        .enumerate()
        .map(|(i, l)| {
            let mut f: Vec<String> = l.split(',').map(str::to_string).collect();
            if i == 20_000 {
                f[1] = "\"5,5\"".into();
            }
            f.join(",") + "\n"
        })
        .collect();
    std::fs::write(d.join("late.csv"), body).unwrap();
    let out = same_as_sequential(d, &["-c", "station.toml", "late.csv"]);
    refused(&out, &["late.csv:20001:", "5,5"]);
}

#[test]
fn a_clock_jump_beyond_max_gap_days_is_an_error_naming_the_row() {
    let dir = setup();
    let d = dir.path();
    let mut rng = Rng(5);
    let (first, _) = samples(&mut rng, T0, 500, Plant::default());
    // Two years later: 2027-01-20T00:00:00Z is T0 + 730 days.
    let later = T0 + 730 * 86_400;
    let (second, _) = samples(&mut rng, later, 500, Plant::default());
    std::fs::write(d.join("a.csv"), &first).unwrap();
    std::fs::write(d.join("b.csv"), &second).unwrap();
    // Within one file, at line 502 (header, 500 rows, then the jump).
    let mut joined = first.clone();
    joined.extend_from_slice(second.split(|b| *b == b'\n').nth(1).unwrap());
    joined.push(b'\n');
    std::fs::write(d.join("joined.csv"), &joined).unwrap();

    let out = same_as_sequential(d, &["-c", "station.toml", "joined.csv"]);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("joined.csv:502:"), "{err}");
    assert!(err.contains("2025-01-20T00:08:19Z"), "{err}");
    assert!(err.contains("2027-01-20T00:00:00Z"), "{err}");
    assert!(err.contains("730.0 days"), "{err}");
    assert!(
        err.contains("check the logger clock, or raise --max-gap-days"),
        "{err}"
    );
    assert!(!err.contains("panicked"), "{err}");

    // Across files: the first row of b.csv (line 2).
    let out = same_as_sequential(d, &["-c", "station.toml", "a.csv", "b.csv"]);
    refused(&out, &["b.csv:2:"]);

    // Raising the limit lets a jump through: three days later, with a limit of
    // two days and then three.
    let (third, _) = samples(&mut rng, T0 + 3 * 86_400, 500, Plant::default());
    std::fs::write(d.join("c.csv"), &third).unwrap();
    let out = same_as_sequential(
        d,
        &[
            "-c",
            "station.toml",
            "--max-gap-days",
            "2",
            "a.csv",
            "c.csv",
        ],
    );
    refused(&out, &["3.0 days"]);
    let out = same_as_sequential(
        d,
        &[
            "-c",
            "station.toml",
            "--max-gap-days",
            "3",
            "a.csv",
            "c.csv",
        ],
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    // 5 channels x (3 days of 1-minute intervals + the 9 minutes c.csv covers).
    let rows = text(&out.stdout).lines().count() - 1;
    assert_eq!(rows, 5 * (3 * 1440 + 9));

    // A jump of exactly the limit is allowed, one second more is not.
    for (skip, ok) in [(0, true), (1, false)] {
        let (fourth, _) = samples(&mut rng, T0 + 499 + 86_400 + skip, 5, Plant::default());
        std::fs::write(d.join("e.csv"), &fourth).unwrap();
        let out = tenmin(
            &[
                "replay",
                "-c",
                "station.toml",
                "--max-gap-days",
                "1",
                "a.csv",
                "e.csv",
            ],
            d,
        );
        assert_eq!(out.status.success(), ok, "{}", text(&out.stderr));
    }
}

/// A logger table shared by three masts (`[input] filter` keeps `M1`):
/// another mast's row before most of the kept ones, some of them with an
/// unreadable time or value (still another mast's rows), some with a field
/// too many or too few (bad rows, as in any layout). The records are those
/// of the kept rows alone, and the same on one thread and on two with every
/// chunk size; the summary counts every other mast's row.
#[test]
fn rows_of_other_masts_are_passed_over_alike_in_parallel() {
    let dir = setup();
    let d = dir.path();
    let plant = Plant {
        disorder: true,
        gaps: true,
        bad: true,
        faults: true,
        ..Plant::default()
    };
    let names = files(d, 7, 2, 1500, plant);
    let filter = "\n[input]\nfilter = { column = \"mast\", value = \"M1\" }\n\n\
                  [input.time]\ncolumn = \"time\"\n";
    std::fs::write(d.join("masts.toml"), format!("{STATION}{filter}")).unwrap();
    let mut rng = Rng(11);
    let (mut shared, mut kept) = (Vec::new(), Vec::new());
    let mut others = 0;
    for name in &names {
        let file = std::fs::read_to_string(d.join(name)).unwrap();
        let (mut all, mut one) = (String::new(), String::new());
        for (i, line) in file.lines().enumerate() {
            if i == 0 {
                all += &format!("mast,{line}\n");
                one += &format!("mast,{line}\n");
                continue;
            }
            if rng.chance(800) {
                let other = match rng.below(6) {
                    0 => "M2,yesterday,1,2,3,4,5".to_string(),
                    1 => format!("M3,{}", line.replace('.', "..")),
                    2 => "M2,1,2".to_string(),
                    3 => format!("M12,{line},7"),
                    _ => format!(" M2 ,{line}"),
                };
                // Another mast's row has the header's 7 fields; any other
                // row is bad.
                others += usize::from(other.split(',').count() == 7);
                all += &other;
                all.push('\n');
            }
            all += &format!("M1,{line}\n");
            one += &format!("M1,{line}\n");
        }
        let (a, b) = (format!("all-{name}"), format!("one-{name}"));
        std::fs::write(d.join(&a), all).unwrap();
        std::fs::write(d.join(&b), one).unwrap();
        shared.push(a);
        kept.push(b);
    }
    let run = |files: &[String]| {
        let mut a = vec!["-c", "masts.toml", "--skip-bad-rows"];
        a.extend(files.iter().map(String::as_str));
        same_as_sequential(d, &a)
    };
    let (both, alone) = (run(&shared), run(&kept));
    assert!(both.status.success(), "{}", text(&both.stderr));
    assert!(
        both.stdout == alone.stdout,
        "{}",
        first_difference(&alone.stdout, &both.stdout)
    );
    let err = text(&both.stderr);
    assert!(
        err.contains(&format!("+ {others} rows of other stations")),
        "{others}: {err}"
    );
}

/// A declared layout whose time format cannot read the first data row is
/// refused with `--skip-bad-rows` at every chunk size and thread count, also
/// when the chunk that ends the header holds no data row (it ends with the
/// header, or only comment lines follow it), and when the file goes to the
/// `csv` crate before its first data row. The check once looked for the
/// first data row in that chunk alone, so `--jobs 2` in small chunks replayed
/// such a file, and `--jobs 1` one with a quote further on (both found by
/// the fuzz target `layouts`).
#[test]
fn the_first_rows_time_is_checked_whatever_the_chunks() {
    let dir = setup();
    let d = dir.path();
    let names = files(d, 5, 1, 200, Plant::default());
    let layout = "\n[input]\ncomment = \"#\"\n\n[input.time]\ncolumn = \"time\"\n\
                  format = \"%Y-%m-%d %H:%M:%S\"\n";
    std::fs::write(d.join("layout.toml"), format!("{STATION}{layout}")).unwrap();
    let file = std::fs::read_to_string(d.join(&names[0])).unwrap();
    let (header, rows) = file.split_once('\n').unwrap();
    // RFC 3339 times: the layout's format reads none of them.
    let comments = "# a comment line of an invented logger's file\n".repeat(30);
    // An uneven quote near the end: from the chunk holding it, the rest of
    // the file goes to the `csv` crate (with the default chunk, the whole
    // file), whose records the check must see as well.
    let quoted = format!("{rows}\"an unclosed quote\n");
    for (name, between, rows) in [
        ("right-after.csv", "", rows),
        ("comments.csv", &comments[..], rows),
        ("quote-later.csv", "", &quoted[..]),
    ] {
        std::fs::write(d.join(name), format!("{header}\n{between}{rows}")).unwrap();
        let out = same_as_sequential(d, &["-c", "layout.toml", "--skip-bad-rows", name]);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{name}: {err}");
        assert!(
            err.contains("cannot read the first data row"),
            "{name}: {err}"
        );
    }
}

/// A UTF-8 BOM at the start of a line past the file's start is data (here
/// it spoils the time: a bad row), also where the rest of the file goes to
/// the `csv` crate from that line on (a quote further on, small chunks): the
/// `csv` crate took it for the file's BOM and dropped it, so `--jobs 2` read
/// a row `--jobs 1` counted bad (found by the fuzz target `layouts`).
#[test]
fn a_bom_inside_the_file_is_data_whatever_the_chunks() {
    let dir = setup();
    let d = dir.path();
    let names = files(d, 9, 1, 120, Plant::default());
    let file = std::fs::read_to_string(d.join(&names[0])).unwrap();
    let mut lines = file.lines();
    let mut all = format!("{}\n", lines.next().unwrap());
    for (i, line) in lines.enumerate() {
        // The first rows plain; then every row behind a BOM, one of them
        // with a quoted field.
        match i {
            0..40 => all += line,
            60 => all += &format!("\u{feff}\"{}", line.replacen(',', "\",", 1)),
            _ => all += &format!("\u{feff}{line}"),
        }
        all.push('\n');
    }
    std::fs::write(d.join("bom.csv"), all).unwrap();
    let out = same_as_sequential(d, &["-c", "station.toml", "--skip-bad-rows", "bom.csv"]);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let err = text(&out.stderr);
    assert!(err.contains("+ 80 bad rows"), "{err}");
}
