//! Verify: replay samples and compare every field of every row with a records
//! file written elsewhere (by the logger).
//!
//! The comparison streams: the logger's records must be in time order (as a
//! logger writes them); within one interval channels may come in any order.
//! Numbers are equal when their bits are equal (`8.0` and `8` are the same
//! number); otherwise the difference says how many units in the last place
//! (ULP) apart they are. Counts compare as integers, flags as sets, times as
//! instants.
//!
//! The logger's counts must be counts a station makes
//! (`qc_core::StationConfig::check_tally`: `n_possible` the station file's
//! samples per interval, no more samples held than the interval has
//! milliseconds, and the channels of one interval holding the same samples):
//! a row that breaks them is bad input (exit 2) naming its file and line,
//! not a difference.
//!
//! A logger file without the `n_flagged` column (written before it existed)
//! reads as 0 flagged readings on every row: no column difference is
//! reported, and a replay row with flagged readings differs in `n_flagged`.

use std::fmt;
use std::fs::File;
use std::io::{BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{anyhow, bail, Context, Result};
use qc_core::{ChannelRecord, Flag, StationConfig, Tally, Timestamp};

use crate::engine::Sink;
use crate::limits::{self, Capped};
use crate::records::{
    optional, ulp_distance, write_row, Type, COLUMNS, N_EXCLUDED, N_FLAGGED, SENSOR_ENTRIES,
};
use crate::timefmt::{parse_time_any as parse_time, Rfc3339};

/// One difference found.
#[derive(Clone, Debug)]
pub struct Difference {
    /// Interval start, as printed.
    pub start: String,
    /// Channel id.
    pub channel: String,
    /// What differs.
    pub what: What,
}

/// The kinds of difference.
#[derive(Clone, Debug)]
pub enum What {
    /// A field differs.
    Field {
        /// Column name.
        column: &'static str,
        /// The replay's value.
        replay: String,
        /// The logger's value.
        logger: String,
        /// ULP distance, for two numbers.
        ulps: Option<u64>,
    },
    /// The replay has a row the logger records lack.
    MissingRow,
    /// The logger records have a row the replay does not (at this line).
    ExtraRow(u64),
    /// A column only one side has (reported once).
    Column {
        /// Its name.
        name: String,
        /// Whether the logger records have it (else only the replay).
        in_logger: bool,
    },
}

impl fmt::Display for Difference {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let show = |s: &str| {
            if s.is_empty() {
                "(empty)".to_string()
            } else {
                s.to_string()
            }
        };
        match &self.what {
            What::Column {
                name,
                in_logger: true,
            } => {
                write!(f, "column {name:?}: in the logger records only")
            }
            What::Column {
                name,
                in_logger: false,
            } => {
                write!(f, "column {name:?}: missing from the logger records")
            }
            What::Field {
                column,
                replay,
                logger,
                ulps,
            } => {
                write!(
                    f,
                    "{} {} {column}: replay {} logger {}",
                    self.start,
                    self.channel,
                    show(replay),
                    show(logger)
                )?;
                match ulps {
                    Some(1) => f.write_str(" (1 ulp apart)"),
                    Some(n) => write!(f, " ({n} ulps apart)"),
                    None => Ok(()),
                }
            }
            What::MissingRow => write!(
                f,
                "{} {}: row missing from the logger records",
                self.start, self.channel
            ),
            What::ExtraRow(line) => write!(
                f,
                "{} {}: row in the logger records (line {line}) but not in the replay",
                self.start, self.channel
            ),
        }
    }
}

/// Differences found, the first `cap` kept.
#[derive(Debug, Default)]
pub struct Report {
    /// The first differences, in order found.
    pub shown: Vec<Difference>,
    /// All differences.
    pub total: u64,
    /// Rows compared (replay rows matched with logger rows).
    pub rows_compared: u64,
    /// Rows the replay produced.
    pub replay_rows: u64,
    cap: usize,
}

impl Report {
    fn add(&mut self, d: Difference) {
        self.total += 1;
        if self.shown.len() < self.cap {
            self.shown.push(d);
        }
    }
}

struct LoggerRow {
    line: u64,
    channel: String,
    fields: Vec<String>,
}

struct Group {
    start_ms: i64,
    start: String,
    rows: Vec<LoggerRow>,
}

/// The logger's records file, read one interval at a time.
struct LoggerFile {
    path: PathBuf,
    rdr: csv::Reader<Capped<BufReader<File>>>,
    record: csv::StringRecord,
    n_fields: usize,
    /// For each of our columns, its index in the logger file.
    index: Vec<Option<usize>>,
    /// A row read ahead (the first of the next group).
    ahead: Option<(i64, String, LoggerRow)>,
    last_start: Option<i64>,
    /// The station the counts must fit.
    station: StationConfig,
    /// The line of the last record read.
    last_line: u64,
}

impl LoggerFile {
    fn open(path: &Path, station: StationConfig, report: &mut Report) -> Result<Self> {
        let file = File::open(path).with_context(|| format!("cannot open {}", path.display()))?;
        let mut rdr = limits::csv_reader(BufReader::new(file));
        let mut record = csv::StringRecord::new();
        let got = rdr
            .read_record(&mut record)
            .map_err(|e| csv_error(path, e, 1))?;
        if got {
            limits::next_record(&mut rdr, record.position());
        }
        if !got {
            bail!(
                "{}:1: empty file: expected a records header starting `start,end,channel,...`",
                path.display()
            );
        }
        let names: Vec<String> = record
            .iter()
            .enumerate()
            .map(|(i, s)| {
                let s = s.trim();
                if i == 0 {
                    s.trim_start_matches('\u{feff}')
                } else {
                    s
                }
                .to_string()
            })
            .collect();
        for c in &COLUMNS[..11] {
            if !names.iter().any(|n| n == c.name) {
                bail!(
                    "{}:1: header: no column {:?} (records start with `start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags`)",
                    path.display(),
                    c.name
                );
            }
        }
        let index: Vec<Option<usize>> = COLUMNS
            .iter()
            .map(|c| names.iter().position(|n| n == c.name))
            .collect();
        for (k, (c, i)) in COLUMNS.iter().zip(&index).enumerate() {
            if i.is_none() && !optional(k) {
                report.add(Difference {
                    start: String::new(),
                    channel: String::new(),
                    what: What::Column {
                        name: c.name.to_string(),
                        in_logger: false,
                    },
                });
            }
        }
        for n in &names {
            if !COLUMNS.iter().any(|c| c.name == n) {
                report.add(Difference {
                    start: String::new(),
                    channel: String::new(),
                    what: What::Column {
                        name: n.clone(),
                        in_logger: true,
                    },
                });
            }
        }
        Ok(LoggerFile {
            path: path.to_path_buf(),
            rdr,
            record,
            n_fields: names.len(),
            index,
            ahead: None,
            last_start: None,
            station,
            last_line: 1,
        })
    }

    /// The counts of a row (`None` for a count that does not parse, which
    /// the comparison reports), and whether it has every count column.
    fn tally(&self, row: &LoggerRow) -> Option<(u32, Tally, bool)> {
        let count = |k: usize| -> Option<Option<u32>> {
            match self.index[k] {
                Some(j) => row.fields.get(j)?.parse::<u32>().ok().map(Some),
                None => Some(None),
            }
        };
        let n_possible = count(3)??;
        let valid = count(4)??;
        let (missing, out_of_range, rejected) = (count(11)?, count(12)?, count(13)?);
        let full = missing.is_some() && out_of_range.is_some() && rejected.is_some();
        let tally = Tally {
            valid,
            missing: missing.unwrap_or(0),
            out_of_range: out_of_range.unwrap_or(0),
            rejected: rejected.unwrap_or(0),
            // No column: a file from before flagged readings, 0.
            flagged: count(N_FLAGGED)?.unwrap_or(0),
            // No column: a file from before exclusions, 0.
            excluded: count(N_EXCLUDED)?.unwrap_or(0),
        };
        Some((n_possible, tally, full))
    }

    /// Checks the counts of one interval's rows: each as a station makes
    /// them, and the same samples on every channel.
    fn check_counts(&self, group: &Group) -> Result<()> {
        let mut first: Option<(&LoggerRow, Tally)> = None;
        for row in &group.rows {
            let Some((n_possible, t, full)) = self.tally(row) else {
                continue;
            };
            if let Err(e) = self.station.check_tally(n_possible, &t) {
                bail!(
                    "{}:{}: {} {}: {e}: these counts cannot come from a station",
                    self.path.display(),
                    row.line,
                    group.start,
                    row.channel
                );
            }
            if !full {
                continue;
            }
            match first {
                None => first = Some((row, t)),
                Some((r0, t0)) if !t0.same_samples(&t) => bail!(
                    "{}:{}: {} {}: {} samples held (n_valid + n_missing + n_out_of_range + n_flagged + n_excluded) and {} rejected, but {} of the same interval (line {}) has {} and {}: every sample is counted once on every channel, so these counts cannot come from a station",
                    self.path.display(),
                    row.line,
                    group.start,
                    row.channel,
                    t.held(),
                    t.rejected,
                    r0.channel,
                    r0.line,
                    t0.held(),
                    t0.rejected
                ),
                Some(_) => {}
            }
        }
        Ok(())
    }

    fn read_row(&mut self) -> Result<Option<(i64, String, LoggerRow)>> {
        let next_line = self.last_line + 1;
        let more = self
            .rdr
            .read_record(&mut self.record)
            .map_err(|e| csv_error(&self.path, e, next_line))?;
        if !more {
            return Ok(None);
        }
        let line = limits::next_record(&mut self.rdr, self.record.position());
        self.last_line = line;
        let at = |msg: String| anyhow!("{}:{line}: {msg}", self.path.display());
        if self.record.len() != self.n_fields {
            return Err(at(format!(
                "expected {} fields as in the header, found {}",
                self.n_fields,
                self.record.len()
            )));
        }
        let field = |i: Option<usize>| i.and_then(|i| self.record.get(i)).unwrap_or("").trim();
        let start = field(self.index[0]);
        let start_ms = parse_time(start.as_bytes())
            .map_err(|e| at(format!("column \"start\": {e}, found {start:?}")))?
            .millis();
        if let Some(last) = self.last_start {
            if start_ms < last {
                return Err(at(format!(
                    "records are not in time order: start {start} after {}",
                    Rfc3339(Timestamp::from_millis(last))
                )));
            }
        }
        self.last_start = Some(start_ms);
        let fields: Vec<String> = self.record.iter().map(|s| s.trim().to_string()).collect();
        let channel = field(self.index[2]).to_string();
        Ok(Some((
            start_ms,
            start.to_string(),
            LoggerRow {
                line,
                channel,
                fields,
            },
        )))
    }

    /// The next interval's rows.
    fn next_group(&mut self) -> Result<Option<Group>> {
        let first = match self.ahead.take() {
            Some(r) => r,
            None => match self.read_row()? {
                Some(r) => r,
                None => return Ok(None),
            },
        };
        let (start_ms, start, row) = first;
        let mut group = Group {
            start_ms,
            start,
            rows: vec![row],
        };
        while let Some(next) = self.read_row()? {
            if next.0 == start_ms {
                group.rows.push(next.2);
            } else {
                self.ahead = Some(next);
                break;
            }
        }
        self.check_counts(&group)?;
        Ok(Some(group))
    }
}

/// A `csv` error of `path`, where the record being read starts on `next_line`.
fn csv_error(path: &Path, e: csv::Error, next_line: u64) -> anyhow::Error {
    if let Some(long) = limits::csv_long_record(&e, path, next_line) {
        return long;
    }
    let line = e.position().map_or(next_line, |p| p.line());
    match e.kind() {
        csv::ErrorKind::Utf8 { .. } => anyhow!("{}:{line}: not valid UTF-8", path.display()),
        _ => anyhow!("{}:{line}: {e}", path.display()),
    }
}

/// The comparing sink.
pub struct Comparer {
    logger: LoggerFile,
    pending: Option<Group>,
    ids: Vec<String>,
    buf: Vec<u8>,
    sensors: Option<std::sync::Arc<crate::sensors::History>>,
    /// Differences so far.
    pub report: Report,
}

impl Comparer {
    /// Opens the logger's records of the station `station` (whose counts
    /// they must fit); keeps the first `cap` differences.
    pub fn open(path: &Path, station: StationConfig, ids: Vec<String>, cap: usize) -> Result<Self> {
        let mut report = Report {
            cap,
            ..Report::default()
        };
        let logger = LoggerFile::open(path, station, &mut report)?;
        Ok(Comparer {
            logger,
            pending: None,
            ids,
            buf: Vec::with_capacity(256),
            sensors: None,
            report,
        })
    }

    /// Marks the replay's rows with the sensor history (the station file's),
    /// as `tenmin replay` writes them.
    pub fn with_sensors(
        mut self,
        sensors: Option<std::sync::Arc<crate::sensors::History>>,
    ) -> Self {
        self.sensors = sensors;
        self
    }

    fn extra_rows(&mut self, g: Group) {
        for r in g.rows {
            self.report.add(Difference {
                start: g.start.clone(),
                channel: r.channel,
                what: What::ExtraRow(r.line),
            });
        }
    }

    /// Reports logger rows after the replay's last interval. Call once, after
    /// the replay.
    pub fn finish(mut self) -> Result<Report> {
        if let Some(g) = self.pending.take() {
            self.extra_rows(g);
        }
        while let Some(g) = self.logger.next_group()? {
            self.extra_rows(g);
        }
        Ok(self.report)
    }

    fn compare(&mut self, start: &str, id: &str, ours: &[&str], theirs: &LoggerRow) {
        for (k, c) in COLUMNS.iter().enumerate() {
            let b = match self.logger.index[k] {
                Some(j) => theirs.fields.get(j).map_or("", String::as_str),
                // A file from before the column: no flagged readings.
                // A file from before the column: no sensor history.
                None if k == SENSOR_ENTRIES => "",
                None if optional(k) => "0",
                None => continue,
            };
            let a = ours.get(k).copied().unwrap_or("");
            if let Some(ulps) = differs(c.ty, a, b) {
                self.report.add(Difference {
                    start: start.to_string(),
                    channel: id.to_string(),
                    what: What::Field {
                        column: c.name,
                        replay: a.to_string(),
                        logger: b.to_string(),
                        ulps,
                    },
                });
            }
        }
    }
}

/// `None` if equal; `Some(ulps)` if different (`ulps` for two numbers).
fn differs(ty: Type, a: &str, b: &str) -> Option<Option<u64>> {
    if a == b {
        return None;
    }
    match ty {
        Type::Number => match (a.parse::<f64>(), b.parse::<f64>()) {
            (Ok(x), Ok(y)) if x.to_bits() == y.to_bits() => None,
            (Ok(x), Ok(y)) if x.is_finite() && y.is_finite() => Some(Some(ulp_distance(x, y))),
            _ => Some(None),
        },
        Type::Count => match (a.parse::<u64>(), b.parse::<u64>()) {
            (Ok(x), Ok(y)) if x == y => None,
            _ => Some(None),
        },
        Type::Time => match (parse_time(a.as_bytes()), parse_time(b.as_bytes())) {
            (Ok(x), Ok(y)) if x == y => None,
            _ => Some(None),
        },
        Type::Flags => {
            let set = |s: &str| -> Option<u16> {
                let mut bits = 0u16;
                for name in s.split('|').filter(|n| !n.is_empty()) {
                    bits |= 1 << Flag::from_name(name.trim())? as u8;
                }
                Some(bits)
            };
            match (set(a), set(b)) {
                (Some(x), Some(y)) if x == y => None,
                _ => Some(None),
            }
        }
        Type::Text => Some(None),
    }
}

impl Sink for Comparer {
    fn interval(
        &mut self,
        start: Timestamp,
        end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()> {
        let start_ms = start.millis();
        // Logger intervals before this one are extra.
        let group = loop {
            let g = match self.pending.take() {
                Some(g) => g,
                None => match self.logger.next_group()? {
                    Some(g) => g,
                    None => break None,
                },
            };
            if g.start_ms < start_ms {
                self.extra_rows(g);
            } else if g.start_ms == start_ms {
                break Some(g);
            } else {
                self.pending = Some(g);
                break None;
            }
        };
        let start_text = Rfc3339(start).to_string();
        let mut rows = group.map(|g| g.rows).unwrap_or_default();
        let ids = std::mem::take(&mut self.ids);
        for (ch, (id, r)) in ids.iter().zip(records).enumerate() {
            self.report.replay_rows += 1;
            let mut buf = std::mem::take(&mut self.buf);
            buf.clear();
            write_row(&mut buf, start, end, (id, ch), r, self.sensors.as_deref())?;
            let line = std::str::from_utf8(&buf).unwrap_or("").trim_end();
            let ours: Vec<&str> = line.split(',').collect();
            match rows.iter().position(|row| row.channel == *id) {
                Some(p) => {
                    let theirs = rows.swap_remove(p);
                    self.report.rows_compared += 1;
                    self.compare(&start_text, id, &ours, &theirs);
                }
                None => self.report.add(Difference {
                    start: start_text.clone(),
                    channel: id.clone(),
                    what: What::MissingRow,
                }),
            }
            self.buf = buf;
        }
        self.ids = ids;
        rows.sort_by_key(|r| r.line);
        for r in rows {
            self.report.add(Difference {
                start: start_text.clone(),
                channel: r.channel,
                what: What::ExtraRow(r.line),
            });
        }
        Ok(())
    }
}

/// Prints the outcome: one line when all is identical, else the listed
/// differences and a count of the rest.
pub fn print_report(w: &mut dyn std::io::Write, r: &Report, logger: &Path) -> std::io::Result<()> {
    if r.total == 0 {
        return writeln!(
            w,
            "verify: {} rows compared with {}: every field identical",
            r.rows_compared,
            logger.display()
        );
    }
    writeln!(
        w,
        "verify: {} difference(s) between the replay ({} rows) and {} ({} rows matched):",
        r.total,
        r.replay_rows,
        logger.display(),
        r.rows_compared
    )?;
    for d in &r.shown {
        writeln!(w, "  {d}")?;
    }
    let rest = r.total - r.shown.len() as u64;
    if rest > 0 {
        writeln!(
            w,
            "  ... and {rest} more difference(s) (--max-diffs N lists more)"
        )?;
    }
    Ok(())
}

/// `tenmin verify --provenance OUTPUT`: checks `OUTPUT` (or, given a
/// provenance file, the output it names) and every input its provenance file
/// names against their recorded sizes and SHA-256; prints one line per file.
/// Exit 1 when any changed or is gone; a provenance file that cannot be read
/// is an error (exit 2).
pub fn provenance(given: &Path) -> Result<ExitCode> {
    use crate::provenance::{check, path_for};
    let is_prov = given
        .file_name()
        .is_some_and(|n| n.to_string_lossy().ends_with(".provenance.json"));
    let (prov, output) = if is_prov {
        (given.to_path_buf(), None)
    } else {
        (path_for(given), Some(given))
    };
    let c = check(&prov, output)?;
    let mut out = crate::output::Output::stdout("the provenance check");
    for (what, p) in &c.same {
        writeln!(out, "same     {what}: {}", p.display())?;
    }
    for (what, p, why) in &c.changed {
        writeln!(out, "CHANGED  {what}: {}: {why}", p.display())?;
    }
    if c.changed.is_empty() {
        writeln!(
            out,
            "{}: the output and all {} inputs match their provenance",
            prov.display(),
            c.same.len() - 1
        )?;
    } else {
        writeln!(
            out,
            "{}: {} of {} files changed or are gone since the output was written",
            prov.display(),
            c.changed.len(),
            c.changed.len() + c.same.len()
        )?;
    }
    out.finish()?;
    Ok(if c.changed.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_comparison() {
        assert!(differs(Type::Number, "8", "8.0").is_none());
        assert!(differs(Type::Number, "", "").is_none());
        assert_eq!(differs(Type::Number, "", "8"), Some(None));
        assert_eq!(
            differs(Type::Number, "1", "1.0000000000000002"),
            Some(Some(1))
        );
        assert_eq!(differs(Type::Number, "0", "-0"), Some(Some(1)));
        assert!(differs(Type::Count, "600", "0600").is_none());
        assert_eq!(differs(Type::Count, "600", "599"), Some(None));
        assert!(differs(Type::Flags, "partial|clock", "clock|partial").is_none());
        assert_eq!(differs(Type::Flags, "partial", ""), Some(None));
        assert_eq!(differs(Type::Flags, "partial", "bogus"), Some(None));
        assert!(differs(
            Type::Time,
            "2025-01-20T00:00:00Z",
            "2025-01-20T01:00:00+01:00"
        )
        .is_none());
        assert_eq!(differs(Type::Text, "a", "b"), Some(None));
    }
}
