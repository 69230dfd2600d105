//! Samples CSV: reading field files into core readings and pushing them.
//!
//! Header `time,<channel ids...>`, columns in any order, every channel of the
//! station file exactly once. Times are RFC 3339 or epoch seconds
//! ([`crate::timefmt::parse_time`]); a missing reading is an empty field, `NaN`,
//! or one of the station's missing-value codes (the core counts the last two).
//! Several files replay as one record, in the order given.
//!
//! The row loop reuses one `csv::ByteRecord` and one readings buffer, and parses
//! numbers from bytes: nothing is allocated per row unless the row is bad.

use std::fmt;
use std::fs::File;
use std::io::{BufReader, IsTerminal};
use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Context, Result};
use csv::ByteRecord;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use qc_core::Reading;

use crate::config::{Decode, StationFile};
use crate::engine::Engine;
use crate::timefmt::parse_time;

/// How to read samples.
#[derive(Clone, Copy, Debug, Default)]
pub struct Options {
    /// Count bad rows and go on instead of stopping at the first.
    pub skip_bad_rows: bool,
    /// Show a progress bar on stderr (only when it is a terminal and the input is large).
    pub progress: bool,
}

/// Why a row was bad.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BadKind {
    /// Too few or too many fields (a truncated line, a stray comma).
    FieldCount,
    /// The time field could not be read.
    Time,
    /// A reading could not be read as a number (or integer counts).
    Value,
    /// A field is not valid UTF-8.
    Encoding,
}

/// Bad rows by kind.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct BadCounts {
    /// Wrong number of fields.
    pub field_count: u64,
    /// Unreadable time.
    pub time: u64,
    /// Unreadable reading.
    pub value: u64,
    /// Not UTF-8.
    pub encoding: u64,
}

impl BadCounts {
    /// All bad rows.
    pub fn total(&self) -> u64 {
        self.field_count + self.time + self.value + self.encoding
    }

    fn add(&mut self, k: BadKind) {
        match k {
            BadKind::FieldCount => self.field_count += 1,
            BadKind::Time => self.time += 1,
            BadKind::Value => self.value += 1,
            BadKind::Encoding => self.encoding += 1,
        }
    }
}

/// What was read from the samples files.
#[derive(Clone, Debug, Default)]
pub struct InputStats {
    /// Files read.
    pub files: usize,
    /// Data rows read (headers not counted).
    pub rows: u64,
    /// Bad rows skipped (only with `--skip-bad-rows`).
    pub bad: BadCounts,
    /// The first few bad-row messages.
    pub examples: Vec<String>,
    /// Empty files skipped (only with `--skip-bad-rows`).
    pub empty_files: Vec<PathBuf>,
}

/// How many bad-row messages to keep for the summary.
pub const EXAMPLES: usize = 5;

struct BadRow {
    kind: BadKind,
    /// Column index (0-based) and its name.
    column: Option<(usize, String)>,
    msg: String,
}

impl fmt::Display for BadRow {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some((i, name)) = &self.column {
            write!(f, "field {} ({name}): ", i + 1)?;
        }
        f.write_str(&self.msg)
    }
}

/// What each column of a file holds.
#[derive(Clone, Copy)]
enum Col {
    Time,
    Channel(usize),
}

/// Reads `files` in order and pushes every good row into `engine`.
pub fn feed(
    files: &[PathBuf],
    cfg: &StationFile,
    opts: Options,
    engine: &mut dyn Engine,
) -> Result<InputStats> {
    let total_bytes: u64 = files
        .iter()
        .filter_map(|p| std::fs::metadata(p).ok())
        .map(|m| m.len())
        .sum();
    let bar = if opts.progress && std::io::stderr().is_terminal() && total_bytes > 8 << 20 {
        let bar = ProgressBar::with_draw_target(Some(total_bytes), ProgressDrawTarget::stderr());
        if let Ok(style) =
            ProgressStyle::with_template("{bar:40} {bytes}/{total_bytes} ({eta} left) {msg}")
        {
            bar.set_style(style);
        }
        Some(bar)
    } else {
        None
    };
    let mut stats = InputStats::default();
    let mut readings = vec![Reading::Missing; cfg.channels.len()];
    let mut done_bytes = 0u64;
    for path in files {
        if let Some(bar) = &bar {
            bar.set_message(path.display().to_string());
        }
        feed_file(
            path,
            cfg,
            opts,
            engine,
            &mut stats,
            &mut readings,
            &bar,
            done_bytes,
        )?;
        done_bytes += std::fs::metadata(path).map(|m| m.len()).unwrap_or(0);
        stats.files += 1;
    }
    if let Some(bar) = bar {
        bar.finish_and_clear();
    }
    engine.close()?;
    Ok(stats)
}

#[allow(clippy::too_many_arguments)]
fn feed_file(
    path: &Path,
    cfg: &StationFile,
    opts: Options,
    engine: &mut dyn Engine,
    stats: &mut InputStats,
    readings: &mut [Reading],
    bar: &Option<ProgressBar>,
    done_bytes: u64,
) -> Result<()> {
    let file = File::open(path).with_context(|| format!("cannot open {}", path.display()))?;
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(BufReader::with_capacity(1 << 16, file));
    let mut rec = ByteRecord::new();
    let read = |rdr: &mut csv::Reader<_>, rec: &mut ByteRecord| {
        rdr.read_byte_record(rec)
            .with_context(|| format!("cannot read {}", path.display()))
    };
    if !read(&mut rdr, &mut rec)? {
        if opts.skip_bad_rows {
            stats.empty_files.push(path.to_path_buf());
            return Ok(());
        }
        bail!(
            "{}:1: empty file: expected a header line `time,<channel ids>`",
            path.display()
        );
    }
    let header_line = rec.position().map_or(1, |p| p.line());
    let cols = header(path, header_line, &rec, cfg)?;
    let mut rows_here = 0u64;
    while read(&mut rdr, &mut rec)? {
        stats.rows += 1;
        rows_here += 1;
        if let Some(bar) = bar {
            if rows_here % 8192 == 0 {
                bar.set_position(done_bytes + rdr.position().byte());
            }
        }
        match parse_row(&rec, &cols, cfg, readings) {
            Ok(t) => {
                engine.push(t, readings)?;
            }
            Err(bad) => {
                let line = rec.position().map_or(0, |p| p.line());
                if !opts.skip_bad_rows {
                    bail!("{}:{line}: {bad}", path.display());
                }
                stats.bad.add(bad.kind);
                if stats.examples.len() < EXAMPLES {
                    stats
                        .examples
                        .push(format!("{}:{line}: {bad}", path.display()));
                }
            }
        }
    }
    Ok(())
}

fn header(path: &Path, line: u64, rec: &ByteRecord, cfg: &StationFile) -> Result<Vec<Col>> {
    let at = |msg: String| anyhow!("{}:{line}: {msg}", path.display());
    let mut cols = Vec::with_capacity(rec.len());
    let mut seen = vec![false; cfg.channels.len()];
    let mut time_seen = false;
    for (i, raw) in rec.iter().enumerate() {
        let raw = if i == 0 {
            raw.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(raw)
        } else {
            raw
        };
        let name = std::str::from_utf8(raw.trim_ascii())
            .map_err(|_| at(format!("header field {}: not valid UTF-8", i + 1)))?;
        if name == "time" {
            if time_seen {
                return Err(at(format!(
                    "header field {}: column \"time\" appears twice",
                    i + 1
                )));
            }
            time_seen = true;
            cols.push(Col::Time);
            continue;
        }
        let Some(c) = cfg.channels.iter().position(|c| c.id == name) else {
            let ids: Vec<&str> = cfg.channels.iter().map(|c| c.id.as_str()).collect();
            return Err(at(format!(
                "header field {}: unknown column {name:?}: not a channel of {} (expected \"time\" and {})",
                i + 1,
                cfg.path.display(),
                ids.join(", ")
            )));
        };
        if seen[c] {
            return Err(at(format!(
                "header field {}: column {name:?} appears twice",
                i + 1
            )));
        }
        seen[c] = true;
        cols.push(Col::Channel(c));
    }
    if !time_seen {
        return Err(at(
            "header: no \"time\" column (expected `time,<channel ids>`)".into(),
        ));
    }
    let missing: Vec<&str> = cfg
        .channels
        .iter()
        .zip(&seen)
        .filter(|(_, s)| !**s)
        .map(|(c, _)| c.id.as_str())
        .collect();
    if !missing.is_empty() {
        return Err(at(format!(
            "header: no column for channel {} of {}",
            missing.join(", "),
            cfg.path.display()
        )));
    }
    Ok(cols)
}

fn shown(b: &[u8]) -> String {
    let s = String::from_utf8_lossy(b);
    if s.chars().count() > 40 {
        format!("{:?}...", s.chars().take(40).collect::<String>())
    } else {
        format!("{s:?}")
    }
}

fn parse_row(
    rec: &ByteRecord,
    cols: &[Col],
    cfg: &StationFile,
    readings: &mut [Reading],
) -> Result<qc_core::Timestamp, BadRow> {
    if rec.len() != cols.len() {
        return Err(BadRow {
            kind: BadKind::FieldCount,
            column: None,
            msg: format!(
                "expected {} fields (time and {} channels), found {}",
                cols.len(),
                cols.len() - 1,
                rec.len()
            ),
        });
    }
    let mut time = None;
    for (i, (field, col)) in rec.iter().zip(cols).enumerate() {
        match *col {
            Col::Time => match parse_time(field) {
                Ok(t) => time = Some(t),
                Err(e) => {
                    let kind = if e == crate::timefmt::TimeError::Encoding {
                        BadKind::Encoding
                    } else {
                        BadKind::Time
                    };
                    return Err(BadRow {
                        kind,
                        column: Some((i, "time".into())),
                        msg: format!("{e}, found {}", shown(field)),
                    });
                }
            },
            Col::Channel(c) => {
                let ch = &cfg.channels[c];
                readings[c] = parse_reading(field, ch.decode).map_err(|kind| {
                    let msg = match (kind, ch.decode) {
                        (BadKind::Encoding, _) => format!("not valid UTF-8: {}", shown(field)),
                        (_, Decode::Value) => format!(
                            "expected a number, NaN or an empty field, found {}",
                            shown(field)
                        ),
                        (_, Decode::Counts) => format!(
                            "expected integer counts (a 32-bit integer), NaN or an empty field, found {}",
                            shown(field)
                        ),
                    };
                    BadRow {
                        kind,
                        column: Some((i, ch.id.clone())),
                        msg,
                    }
                })?;
            }
        }
    }
    // The header guarantees one time column.
    time.ok_or_else(|| BadRow {
        kind: BadKind::Time,
        column: None,
        msg: "no time".into(),
    })
}

/// One reading from its field. Empty is `Missing`; NaN is passed on (values)
/// or `Missing` (counts); missing-value codes are passed on for the core to count.
fn parse_reading(field: &[u8], decode: Decode) -> Result<Reading, BadKind> {
    let b = field.trim_ascii();
    if b.is_empty() {
        return Ok(Reading::Missing);
    }
    let s = std::str::from_utf8(b).map_err(|_| BadKind::Encoding)?;
    match decode {
        Decode::Value => s
            .parse::<f64>()
            .map(Reading::Value)
            .map_err(|_| BadKind::Value),
        Decode::Counts => match s.parse::<i32>() {
            Ok(k) => Ok(Reading::Counts(k)),
            Err(_) if s.eq_ignore_ascii_case("nan") => Ok(Reading::Missing),
            Err(_) => Err(BadKind::Value),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn readings() {
        let v = |s: &str| parse_reading(s.as_bytes(), Decode::Value);
        let k = |s: &str| parse_reading(s.as_bytes(), Decode::Counts);
        assert_eq!(v("8.25"), Ok(Reading::Value(8.25)));
        assert_eq!(v(" 8.25 "), Ok(Reading::Value(8.25)));
        assert_eq!(v(""), Ok(Reading::Missing));
        assert_eq!(v("-999"), Ok(Reading::Value(-999.0)));
        assert!(matches!(v("NaN"), Ok(Reading::Value(x)) if x.is_nan()));
        assert_eq!(v("8,25"), Err(BadKind::Value));
        assert_eq!(v("abc"), Err(BadKind::Value));
        assert_eq!(
            parse_reading(b"8\xff", Decode::Value),
            Err(BadKind::Encoding)
        );
        assert_eq!(k("1234"), Ok(Reading::Counts(1234)));
        assert_eq!(k("-999"), Ok(Reading::Counts(-999)));
        assert_eq!(k("nan"), Ok(Reading::Missing));
        assert_eq!(k("12.5"), Err(BadKind::Value));
        assert_eq!(k("99999999999"), Err(BadKind::Value));
    }
}
