//! The three field-file examples (`examples/field-files/`) replayed exactly as
//! a user would, from the repository root:
//!
//! ```text
//! tenmin replay --config examples/field-files/<folder>/station.toml examples/field-files/<folder>/<file>
//! ```
//!
//! and compared with `tests/data/field-files-reference.csv`, which
//! `tests/scripts/field_files_reference.py` computed from the same original
//! files with pandas' own parsers and numpy (versions in its first line; no
//! tenmin code involved). Also: every number of threads and chunk size, and
//! the `.gz` and `.zst` of each file, give the same records.

use std::collections::BTreeMap;
use std::io::Write;

mod common;
use common::{root, tenmin, text};

/// The examples: folder, data file.
const EXAMPLES: [(&str, &str); 3] = [
    ("midc-1min", "midc-uat-20181018-1min.csv"),
    ("surfrad-1min", "surfrad-alamosa-2016-001-1min.dat"),
    ("asos-ewr-hourly", "asos-nyc-2013-hourly.csv"),
];

/// One test for each example (by its index in `EXAMPLES`) calling `$check`.
macro_rules! each_example {
    ($check:ident: $($name:ident = $i:literal),+ $(,)?) => {
        $(
            #[test]
            fn $name() {
                let (folder, file) = EXAMPLES[$i];
                $check(folder, file);
            }
        )+
    };
}

/// Relative tolerance of means, minima and maxima. The reference quantizes
/// each value to the channel's resolution exactly as the core does (half away
/// from zero) before any arithmetic, so both sides hold the same whole numbers
/// of quanta; what remains is the order and form of the f64 operations that
/// turn a sum of quanta into a mean (a few units in the last place, about
/// 1e-16 relative; in these files they come out bit-identical). 1e-9 leaves
/// room for that and nothing else: one quantum more or less in an interval's
/// sum moves a mean by at least 1e-7 relative in these files (the closest
/// case: midc-1min's pressure, 0.001 hPa over 10 samples near 928 hPa).
const REL_TOL: f64 = 1e-9;

/// Tolerance of the unit-vector mean direction, in degrees. The core sums
/// integer Q30 sines and cosines from its own tables (each within 2^-29 of the
/// exact value, `qc-core/src/angle.rs`) where numpy uses f64 `sin`/`cos` of the
/// same 0.01-degree directions; the two mean directions differ by at most
/// about 1e-7 degree in these files (the daily hourly intervals, whose
/// vectors partly cancel, the most). 1e-6 degree is still far below a
/// quantum of direction (0.01 degree).
const DIR_TOL_DEG: f64 = 1e-6;

fn config(folder: &str) -> String {
    format!("examples/field-files/{folder}/station.toml")
}

fn data(folder: &str, file: &str) -> String {
    format!("examples/field-files/{folder}/{file}")
}

/// Runs `tenmin replay --config <station> <input> <extra...>` from the
/// repository root; returns the records (stdout) after checking exit code 0.
fn replay(folder: &str, input: &str, extra: &[&str]) -> Vec<u8> {
    let cfg = config(folder);
    let mut args = vec!["replay", "--config", cfg.as_str(), input];
    args.extend_from_slice(extra);
    let out = tenmin(&args, &root());
    assert_eq!(
        out.status.code(),
        Some(0),
        "{folder}: tenmin {args:?}: {}",
        text(&out.stderr)
    );
    assert!(!out.stdout.is_empty(), "{folder}: no records");
    out.stdout
}

/// One row of statistics: n_valid, mean, min, max (empty fields as None).
#[derive(Debug)]
struct Stats {
    n_valid: u64,
    mean: Option<f64>,
    min: Option<f64>,
    max: Option<f64>,
}

fn num(field: &str, what: &str) -> Option<f64> {
    if field.is_empty() {
        None
    } else {
        Some(
            field
                .parse()
                .unwrap_or_else(|_| panic!("{what}: not a number: {field:?}")),
        )
    }
}

/// The records CSV by (interval start, channel).
fn records(bytes: &[u8]) -> (BTreeMap<(String, String), Stats>, Vec<String>) {
    let s = String::from_utf8(bytes.to_vec()).expect("records are UTF-8");
    let mut lines = s.lines();
    let header: Vec<&str> = lines.next().expect("a header").split(',').collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| *h == name)
            .unwrap_or_else(|| panic!("records have no column {name}"))
    };
    let (start, channel, n_valid, mean, min, max) = (
        col("start"),
        col("channel"),
        col("n_valid"),
        col("mean"),
        col("min"),
        col("max"),
    );
    let mut map = BTreeMap::new();
    let mut order = Vec::new();
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        assert_eq!(f.len(), header.len(), "records row {line:?}");
        let key = (f[start].to_string(), f[channel].to_string());
        let stats = Stats {
            n_valid: f[n_valid].parse().expect("n_valid"),
            mean: num(f[mean], line),
            min: num(f[min], line),
            max: num(f[max], line),
        };
        order.push(format!("{} {}", key.0, key.1));
        assert!(
            map.insert(key, stats).is_none(),
            "records row twice: {line}"
        );
    }
    (map, order)
}

/// The reference rows of one example, in file order.
fn reference(example: &str) -> Vec<((String, String), Stats)> {
    let path = root().join("tests/data/field-files-reference.csv");
    let s = std::fs::read_to_string(&path).expect("read the reference");
    let mut lines = s.lines().filter(|l| !l.starts_with('#'));
    assert_eq!(
        lines.next(),
        Some("example,interval_start_utc,channel,n_valid,mean,min,max")
    );
    let rows: Vec<_> = lines
        .filter(|l| l.split(',').next() == Some(example))
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            assert_eq!(f.len(), 7, "reference row {l:?}");
            (
                (f[1].to_string(), f[2].to_string()),
                Stats {
                    n_valid: f[3].parse().expect("n_valid"),
                    mean: num(f[4], l),
                    min: num(f[5], l),
                    max: num(f[6], l),
                },
            )
        })
        .collect();
    assert!(!rows.is_empty(), "no reference rows for {example}");
    rows
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= REL_TOL * a.abs().max(b.abs()).max(1.0)
}

fn angle_close(a: f64, b: f64) -> bool {
    let d = (a - b).rem_euclid(360.0);
    d.min(360.0 - d) <= DIR_TOL_DEG
}

/// Compares a replay with the reference: every reference row must be in the
/// records with the same n_valid and statistics within tolerance, and the
/// records hold no row the reference does not.
fn check_against_reference(folder: &str, file: &str) {
    let recs = replay(folder, &data(folder, file), &[]);
    compare_with_reference(folder, &recs);
}

each_example!(check_against_reference:
    midc_1min_matches_the_pandas_reference = 0,
    surfrad_1min_matches_the_pandas_reference = 1,
    asos_ewr_hourly_matches_the_pandas_reference = 2,
);

/// The comparison of [`check_against_reference`], on records already made.
fn compare_with_reference(folder: &str, recs: &[u8]) {
    let (got, order) = records(recs);
    let want = reference(folder);
    let direction_channels = ["wd"];
    let mut problems = Vec::new();
    for (key, r) in &want {
        let Some(g) = got.get(key) else {
            problems.push(format!("{} {}: no records row", key.0, key.1));
            continue;
        };
        let what = format!("{} {}", key.0, key.1);
        if g.n_valid != r.n_valid {
            problems.push(format!(
                "{what}: n_valid tenmin {} reference {}",
                g.n_valid, r.n_valid
            ));
        }
        let dir = direction_channels.contains(&key.1.as_str());
        let fields = [
            ("mean", g.mean, r.mean),
            ("min", g.min, r.min),
            ("max", g.max, r.max),
        ];
        for (name, a, b) in fields {
            let ok = match (a, b) {
                (None, None) => true,
                (Some(a), Some(b)) if dir && name == "mean" => angle_close(a, b),
                (Some(a), Some(b)) => close(a, b),
                _ => false,
            };
            if !ok {
                problems.push(format!("{what}: {name} tenmin {a:?} reference {b:?}"));
            }
        }
    }
    for key in got.keys() {
        if !want.iter().any(|(k, _)| k == key) {
            problems.push(format!(
                "{} {}: a records row not in the reference",
                key.0, key.1
            ));
        }
    }
    // Intervals in time order, channels in station-file order: the same order
    // as the reference.
    let want_order: Vec<String> = want
        .iter()
        .map(|(k, _)| format!("{} {}", k.0, k.1))
        .collect();
    if problems.is_empty() && order != want_order {
        problems.push("records rows in another order than the reference".into());
    }
    assert!(
        problems.is_empty(),
        "{folder}: {} difference(s) from tests/data/field-files-reference.csv:\n{}",
        problems.len(),
        problems[..problems.len().min(40)].join("\n")
    );
    assert_eq!(got.len(), want.len());
}

/// The network file's reader (runs of
/// spaces, two lines skipped, columns by position, five time columns) against
/// the reference, with the example's `quality` keys left out. Every quality
/// code the example reads is 0 (good) in this file (checked here), so the
/// reference holds for this station file too.
#[test]
fn surfrad_1min_without_quality_keys_matches_the_pandas_reference() {
    let (folder, file) = EXAMPLES[1];
    let original = std::fs::read_to_string(root().join(data(folder, file))).unwrap();
    for l in original.lines().skip(2) {
        let f: Vec<&str> = l.split_whitespace().collect();
        for q in [40, 42, 44, 46, 48] {
            assert_eq!(f[q - 1], "0", "quality column {q} of {l:?}");
        }
    }
    let station = std::fs::read_to_string(root().join(config(folder))).unwrap();
    let kept: Vec<&str> = station
        .lines()
        .filter(|l| !l.starts_with("quality ="))
        .collect();
    assert_eq!(station.lines().count() - kept.len(), 5, "5 quality keys");
    let dir = tempfile::tempdir().unwrap();
    let cfg = dir.path().join("station.toml");
    std::fs::write(&cfg, kept.join("\n") + "\n").unwrap();
    let cfg = cfg.to_str().expect("a UTF-8 temp path");
    let input = data(folder, file);
    let out = tenmin(&["replay", "--config", cfg, &input], &root());
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    compare_with_reference(folder, &out.stdout);
}

/// One thread, two threads, and two threads with 4 KiB chunks (hundreds of
/// chunks per file, boundaries inside intervals) write the same records.
fn same_records_for_every_job_count(folder: &str, file: &str) {
    let input = data(folder, file);
    let one = replay(folder, &input, &["--jobs", "1"]);
    for extra in [
        &["--jobs", "2"][..],
        &["--jobs", "2", "--chunk-size", "4096"][..],
    ] {
        let other = replay(folder, &input, extra);
        assert!(
            other == one,
            "{folder}: {extra:?} writes other records than --jobs 1"
        );
    }
}

each_example!(same_records_for_every_job_count:
    midc_1min_same_records_for_every_job_count = 0,
    surfrad_1min_same_records_for_every_job_count = 1,
    asos_ewr_hourly_same_records_for_every_job_count = 2,
);

/// The `.gz` and `.zst` of the file (made here with the flate2 and zstd
/// crates) give the same records as the plain file.
fn same_records_compressed(folder: &str, file: &str) {
    let plain = replay(folder, &data(folder, file), &[]);
    let bytes = std::fs::read(root().join(data(folder, file))).expect("read the example");
    let dir = tempfile::tempdir().unwrap();

    let gz = dir.path().join(format!("{file}.gz"));
    let mut enc = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    enc.write_all(&bytes).unwrap();
    std::fs::write(&gz, enc.finish().unwrap()).unwrap();

    let zst = dir.path().join(format!("{file}.zst"));
    std::fs::write(&zst, zstd::encode_all(&bytes[..], 3).unwrap()).unwrap();

    for p in [&gz, &zst] {
        let input = p.to_str().expect("a UTF-8 temp path");
        for jobs in ["1", "2"] {
            let got = replay(folder, input, &["--jobs", jobs]);
            assert!(
                got == plain,
                "{folder}: {} (--jobs {jobs}) gives other records than the plain file",
                p.display()
            );
        }
    }
}

each_example!(same_records_compressed:
    midc_1min_compressed_same_records = 0,
    surfrad_1min_compressed_same_records = 1,
    asos_ewr_hourly_compressed_same_records = 2,
);

/// The reference covers every example and was not cut short.
#[test]
fn the_reference_file_covers_every_example() {
    for (folder, _) in EXAMPLES {
        let rows = reference(folder);
        // 144 ten-minute intervals x 5 channels in a day; the EWR rows run
        // from 2013-01-01T06:00Z to 2013-12-30T23:00Z (the file's
        // `time_hour`): 364 UTC days x 5 channels.
        let expected = match folder {
            "asos-ewr-hourly" => 364 * 5,
            _ => 144 * 5,
        };
        assert_eq!(rows.len(), expected, "{folder}");
    }
}

/// `line` with its `n`-th (1-based) whitespace-separated field replaced by
/// `to`, padded on the left to the field's width so the columns stay aligned.
fn replace_field(line: &str, n: usize, to: &str) -> String {
    let bytes = line.as_bytes();
    let mut i = 0;
    let mut k = 0;
    while i < bytes.len() {
        while i < bytes.len() && bytes[i] == b' ' {
            i += 1;
        }
        let start = i;
        while i < bytes.len() && bytes[i] != b' ' {
            i += 1;
        }
        k += 1;
        if k == n {
            let width = i - start;
            return format!("{}{to:>width$}{}", &line[..start], &line[i..]);
        }
    }
    panic!("line has no field {n}: {line:?}");
}

/// The network file's quality codes are all 0 (good) in the five columns the
/// example reads (checked below), so the file as shipped puts no sample out by
/// its code: plant bad codes in a copy and check that exactly those samples
/// leave the statistics and are counted apart.
#[test]
fn surfrad_1min_a_bad_quality_code_takes_the_sample_out() {
    let (folder, file) = EXAMPLES[1];
    let original = std::fs::read_to_string(root().join(data(folder, file))).unwrap();
    let mut lines: Vec<String> = original.lines().map(str::to_string).collect();
    for l in &lines[2..] {
        let f: Vec<&str> = l.split_whitespace().collect();
        for q in [40, 42, 44, 46, 48] {
            assert_eq!(f[q - 1], "0", "quality column {q} of {l:?}");
        }
    }
    // File lines 3 to 5 are 00:00 to 00:02 UTC: the speed's code (field 44)
    // set to 1. File line 13 is 00:10: the direction's code (field 46) set to 2.
    for l in &mut lines[2..5] {
        *l = replace_field(l, 44, "1");
    }
    lines[12] = replace_field(&lines[12], 46, "2");
    let dir = tempfile::tempdir().unwrap();
    let planted = dir.path().join(file);
    std::fs::write(&planted, lines.join("\n") + "\n").unwrap();

    let plain = String::from_utf8(replay(folder, &data(folder, file), &[])).unwrap();
    let got = String::from_utf8(replay(folder, planted.to_str().unwrap(), &[])).unwrap();
    let header: Vec<&str> = got.lines().next().unwrap().split(',').collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| *h == name)
            .unwrap_or_else(|| panic!("records have no column {name}: {header:?}"))
    };
    let (n_valid, mean, flagged) = (col("n_valid"), col("mean"), col("n_flagged"));
    let held = [
        "n_valid",
        "n_missing",
        "n_out_of_range",
        "n_rejected",
        "n_flagged",
    ]
    .map(col);
    assert_eq!(plain.lines().count(), got.lines().count());
    let mut changed = 0;
    for (p, g) in plain.lines().zip(got.lines()).skip(1) {
        let f: Vec<&str> = g.split(',').collect();
        // Every sample in one tally: each interval holds 10 rows of the file.
        let sum: u64 = held.iter().map(|&i| f[i].parse::<u64>().unwrap()).sum();
        assert_eq!(sum, 10, "{g}");
        match (f[0], f[2]) {
            ("2016-01-01T00:00:00Z", "ws") => {
                changed += 1;
                assert_eq!((f[n_valid], f[flagged]), ("7", "3"), "{g}");
                // The mean of the speeds of file lines 6 to 12 (00:03 to
                // 00:09), in tenths of m/s (the channel's resolution).
                let tenths: f64 = lines[5..12]
                    .iter()
                    .map(|l| {
                        let v: f64 = l.split_whitespace().nth(42).unwrap().parse().unwrap();
                        (v * 10.0).round()
                    })
                    .sum();
                let want = tenths / 70.0;
                let m: f64 = f[mean].parse().unwrap();
                assert!(close(m, want), "{g}: mean {m}, expected {want}");
            }
            ("2016-01-01T00:10:00Z", "wd") => {
                changed += 1;
                assert_eq!((f[n_valid], f[flagged]), ("9", "1"), "{g}");
            }
            // The 00:00 direction keeps its 10 samples; only its
            // speed-weighted resultant columns may change (3 speeds are out).
            ("2016-01-01T00:00:00Z", "wd") => {
                assert_eq!((f[n_valid], f[flagged]), ("10", "0"), "{g}");
            }
            _ => {
                assert_eq!(f[flagged], "0", "{g}");
                assert_eq!(p, g, "a row without planted codes changed");
            }
        }
    }
    assert_eq!(changed, 2);
}

#[test]
fn replace_field_keeps_the_columns() {
    let line = " 2016   1  1  1  0  0  0.000  91.65    -1.8 0    -0.8 0";
    assert_eq!(
        replace_field(line, 10, "1"),
        " 2016   1  1  1  0  0  0.000  91.65    -1.8 1    -0.8 0"
    );
    assert_eq!(
        replace_field(line, 11, "12.5"),
        " 2016   1  1  1  0  0  0.000  91.65    -1.8 0    12.5 0"
    );
    assert_eq!(
        replace_field(line, 1, "2017"),
        " 2017   1  1  1  0  0  0.000  91.65    -1.8 0    -0.8 0"
    );
}
