//! Records CSV files read into a time grid: one slot per interval and channel.
//!
//! The grid runs from the earliest interval start to the latest interval end
//! found in the files, in steps of the station's interval. A slot with no row
//! (a logger outage the records do not show, a file left out) counts as an
//! interval with no samples, exactly as `tenmin replay` writes one.
//!
//! Whether an interval passes screening is the core's decision
//! ([`qc_core::screen::passes`]): it has valid samples and no flag other than
//! `partial` and `clock`.
//!
//! Counts that no station makes stop the reading with the file and line
//! (`qc_core::StationConfig::check_tally`: `n_possible` the station file's
//! samples per interval, no more samples held than the interval has
//! milliseconds; and the channels of one interval holding the same samples,
//! checked where the files have every count column), since they would skew
//! the recovery.

use std::fs::File;
use std::io::BufReader;
use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Context, Result};
use qc_core::{Absent, ChannelRecord, Flag, Flags, Kind, Stat, Tally, Timestamp};

use crate::config::{ChannelSpec, StationFile};
use crate::limits;
use crate::records::COLUMNS;
use crate::timefmt::{parse_time_any as parse_time, Rfc3339};

/// The longest grid accepted, in intervals (about 19 years of 10-minute
/// intervals): a guard against a stray time in a file.
pub const MAX_INTERVALS: i64 = 1_000_000;

/// One interval of one channel, as the records give it.
#[derive(Clone, Copy, Debug)]
pub struct Row {
    /// Samples possible at the nominal rate.
    pub n_possible: u32,
    /// Samples by outcome.
    pub tally: Tally,
    /// Mean (direction: unit-vector mean), if present.
    pub mean: Option<f64>,
    /// Turbulence intensity (speed), if present.
    pub ti: Option<f64>,
    /// Gust (speed), if present.
    pub gust: Option<f64>,
    /// Screening flags.
    pub flags: Flags,
    /// Whether the interval passes screening ([`qc_core::screen::passes`]).
    pub passed: bool,
    /// Samples excluded by decision (records column `n_excluded`; 0 when the
    /// records have no such column).
    pub n_excluded: u32,
}

/// One channel over the whole grid.
#[derive(Clone, Debug)]
pub struct Series {
    /// The channel as configured.
    pub spec: ChannelSpec,
    /// One slot per interval; `None` when no row was found.
    pub rows: Vec<Option<Row>>,
}

impl Series {
    /// The interval's mean when it passes screening.
    pub fn value(&self, i: usize) -> Option<f64> {
        match self.rows.get(i) {
            Some(Some(r)) if r.passed => r.mean,
            _ => None,
        }
    }

    /// Whether interval `i` passes screening (a slot without a row does not).
    pub fn passes(&self, i: usize) -> bool {
        matches!(self.rows.get(i), Some(Some(r)) if r.passed)
    }

    /// Turbulence intensity of a passing interval.
    pub fn ti(&self, i: usize) -> Option<f64> {
        match self.rows.get(i) {
            Some(Some(r)) if r.passed => r.ti,
            _ => None,
        }
    }

    /// The interval's gust when it passes screening.
    pub fn gust(&self, i: usize) -> Option<f64> {
        match self.rows.get(i) {
            Some(Some(r)) if r.passed => r.gust,
            _ => None,
        }
    }

    /// Channel id.
    pub fn id(&self) -> &str {
        &self.spec.id
    }

    /// Height above ground, m, if configured.
    pub fn height(&self) -> Option<f64> {
        self.spec.height_m
    }

    /// Unit as configured, or a default for the kind.
    pub fn unit(&self) -> &str {
        match (&self.spec.unit, self.spec.kind) {
            (Some(u), _) => u,
            (None, Kind::Speed) => "m/s",
            (None, Kind::Direction) => "deg",
            (None, _) => "",
        }
    }
}

/// All records on one grid.
#[derive(Clone, Debug)]
pub struct Dataset {
    /// Station name, if the station file gives one.
    pub name: Option<String>,
    /// Interval length, ms.
    pub interval_ms: i64,
    /// Start of the first interval, ms since the epoch.
    pub t0_ms: i64,
    /// Intervals in the grid.
    pub len: usize,
    /// Samples an interval should hold.
    pub samples_per_interval: u32,
    /// Channels in station-file order.
    pub channels: Vec<Series>,
    /// Files read.
    pub files: Vec<PathBuf>,
    /// Data rows read.
    pub rows_read: u64,
    /// Whether the records carried a `ti` column (else sd / mean is used).
    pub ti_column: bool,
}

impl Dataset {
    /// Start of interval `i`.
    pub fn start(&self, i: usize) -> Timestamp {
        Timestamp::from_millis(self.t0_ms + i as i64 * self.interval_ms)
    }
}

/// Where a field was read, for messages.
struct Place<'a> {
    path: &'a Path,
    line: u64,
}

impl Place<'_> {
    fn err(&self, field: usize, name: &str, msg: impl std::fmt::Display) -> anyhow::Error {
        anyhow!(
            "{}:{}: field {} ({name}): {msg}",
            self.path.display(),
            self.line,
            field + 1
        )
    }
}

/// Column positions in one file.
struct Columns {
    start: usize,
    end: usize,
    channel: usize,
    n_possible: usize,
    n_valid: usize,
    mean: usize,
    sd: usize,
    gust: usize,
    flags: usize,
    n_missing: Option<usize>,
    n_out_of_range: Option<usize>,
    n_rejected: Option<usize>,
    n_flagged: Option<usize>,
    n_excluded: Option<usize>,
    ti: Option<usize>,
    width: usize,
}

fn columns(path: &Path, header: &csv::ByteRecord) -> Result<Columns> {
    let names: Vec<String> = header
        .iter()
        .enumerate()
        .map(|(i, f)| {
            let s = String::from_utf8_lossy(f).trim().to_string();
            if i == 0 {
                s.trim_start_matches('\u{feff}').to_string()
            } else {
                s
            }
        })
        .collect();
    let find = |name: &str| names.iter().position(|n| n == name);
    for c in &COLUMNS[..11] {
        if find(c.name).is_none() {
            bail!(
                "{}:1: header: no column {:?} (records start with `start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags`)",
                path.display(),
                c.name
            );
        }
    }
    let need = |name: &str| find(name).unwrap_or(0);
    Ok(Columns {
        start: need("start"),
        end: need("end"),
        channel: need("channel"),
        n_possible: need("n_possible"),
        n_valid: need("n_valid"),
        mean: need("mean"),
        sd: need("sd"),
        gust: need("gust"),
        flags: need("flags"),
        n_missing: find("n_missing"),
        n_out_of_range: find("n_out_of_range"),
        n_rejected: find("n_rejected"),
        n_flagged: find("n_flagged"),
        n_excluded: find("n_excluded"),
        ti: find("ti"),
        width: names.len(),
    })
}

fn text<'r>(rec: &'r csv::ByteRecord, at: &Place<'_>, i: usize, name: &str) -> Result<&'r str> {
    let f = rec.get(i).unwrap_or_default();
    std::str::from_utf8(f)
        .map(str::trim)
        .map_err(|_| at.err(i, name, "not valid UTF-8"))
}

fn count(rec: &csv::ByteRecord, at: &Place<'_>, i: usize, name: &str) -> Result<u32> {
    let s = text(rec, at, i, name)?;
    s.parse::<u32>()
        .map_err(|_| at.err(i, name, format!("expected a whole count, found {s:?}")))
}

fn number(rec: &csv::ByteRecord, at: &Place<'_>, i: usize, name: &str) -> Result<Option<f64>> {
    let s = text(rec, at, i, name)?;
    if s.is_empty() {
        return Ok(None);
    }
    match s.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Some(v)),
        _ => Err(at.err(
            i,
            name,
            format!("expected a finite number or an empty field, found {s:?}"),
        )),
    }
}

fn flags(rec: &csv::ByteRecord, at: &Place<'_>, i: usize) -> Result<Flags> {
    let s = text(rec, at, i, "flags")?;
    let mut f = Flags::EMPTY;
    for name in s.split('|').map(str::trim).filter(|n| !n.is_empty()) {
        let flag = Flag::from_name(name).ok_or_else(|| {
            let known: Vec<&str> = Flag::ALL.iter().map(|f| f.name()).collect();
            at.err(
                i,
                "flags",
                format!(
                    "unknown flag {name:?} (known: {}, joined with |)",
                    known.join(", ")
                ),
            )
        })?;
        f.insert(flag);
    }
    Ok(f)
}

fn stat(v: Option<f64>) -> Stat {
    v.map_or(Stat::Absent(Absent::NoValidSamples), Stat::Value)
}

/// The files `paths` for a message: every name up to five, then how many more.
fn list(paths: &[PathBuf]) -> String {
    let mut s: Vec<String> = paths
        .iter()
        .take(5)
        .map(|p| p.display().to_string())
        .collect();
    if paths.len() > 5 {
        s.push(format!("and {} more files", paths.len() - 5));
    }
    s.join(", ")
}

/// Reads records files for the station `cfg` onto one grid.
pub fn read(cfg: &StationFile, paths: &[PathBuf]) -> Result<Dataset> {
    let interval_ms = i64::from(cfg.station.interval_s) * 1000;
    // Interval start, channel, row, file, line, whether the file has every
    // count column.
    let mut cells: Vec<(i64, usize, Row, u32, u64, bool)> = Vec::new();
    let mut rows_read = 0u64;
    let mut ti_column = true;
    for (file_no, path) in paths.iter().enumerate() {
        let file = File::open(path).with_context(|| format!("cannot open {}", path.display()))?;
        let mut rdr = limits::csv_reader(BufReader::new(file));
        let mut rec = csv::ByteRecord::new();
        let bad = |e: csv::Error, line: u64| {
            limits::csv_long_record(&e, path, line)
                .unwrap_or_else(|| anyhow!("{}: {e}", path.display()))
        };
        if limits::read_csv(&mut rdr, &mut rec)
            .map_err(|e| bad(e, 1))?
            .is_none()
        {
            bail!(
                "{}:1: empty file: expected a records header starting `start,end,channel,...`",
                path.display()
            );
        }
        let cols = columns(path, &rec)?;
        ti_column &= cols.ti.is_some();
        let mut line = 1u64;
        while let Some(at) = limits::read_csv(&mut rdr, &mut rec).map_err(|e| bad(e, line + 1))? {
            line = at;
            let at = Place { path, line };
            if rec.len() != cols.width {
                bail!(
                    "{}:{line}: {} fields, the header has {}",
                    path.display(),
                    rec.len(),
                    cols.width
                );
            }
            let time = |i: usize, name: &str| -> Result<i64> {
                let f = rec.get(i).unwrap_or_default();
                parse_time(f)
                    .map(Timestamp::millis)
                    .map_err(|e| at.err(i, name, e))
            };
            let start = time(cols.start, "start")?;
            let end = time(cols.end, "end")?;
            if end - start != interval_ms || start.rem_euclid(interval_ms) != 0 {
                return Err(at.err(
                    cols.start,
                    "start",
                    format!(
                        "interval {} to {} is not one of the station's UTC-aligned {}-second intervals",
                        Rfc3339(Timestamp::from_millis(start)),
                        Rfc3339(Timestamp::from_millis(end)),
                        cfg.station.interval_s
                    ),
                ));
            }
            let id = text(&rec, &at, cols.channel, "channel")?;
            let ch = cfg
                .channels
                .iter()
                .position(|c| c.id == id)
                .ok_or_else(|| {
                    at.err(
                        cols.channel,
                        "channel",
                        format!("channel {id:?} is not in {}", cfg.path.display()),
                    )
                })?;
            let opt = |i: Option<usize>, name: &str| -> Result<u32> {
                i.map_or(Ok(0), |i| count(&rec, &at, i, name))
            };
            let tally = Tally {
                valid: count(&rec, &at, cols.n_valid, "n_valid")?,
                missing: opt(cols.n_missing, "n_missing")?,
                out_of_range: opt(cols.n_out_of_range, "n_out_of_range")?,
                rejected: opt(cols.n_rejected, "n_rejected")?,
                // Records from before the column: no flagged readings.
                flagged: opt(cols.n_flagged, "n_flagged")?,
                // Records from before the column: no excluded readings.
                excluded: opt(cols.n_excluded, "n_excluded")?,
            };
            let n_possible = count(&rec, &at, cols.n_possible, "n_possible")?;
            if let Err(e) = cfg.station.check_tally(n_possible, &tally) {
                bail!(
                    "{}:{line}: {} {id}: {e}: these counts cannot come from a station",
                    path.display(),
                    Rfc3339(Timestamp::from_millis(start))
                );
            }
            let mean = number(&rec, &at, cols.mean, "mean")?;
            let sd = number(&rec, &at, cols.sd, "sd")?;
            let ti = match cols.ti {
                Some(i) => number(&rec, &at, i, "ti")?,
                // Older records without the column: the core's definition sd / mean.
                None => match (mean, sd) {
                    (Some(m), Some(s)) if m > 0.0 => Some(s / m),
                    _ => None,
                },
            };
            let flags = flags(&rec, &at, cols.flags)?;
            let gust = number(&rec, &at, cols.gust, "gust")?;
            let spec = &cfg.channels[ch];
            let record = ChannelRecord {
                kind: spec.kind,
                n_possible,
                tally,
                mean: stat(mean),
                sd: stat(sd),
                min: stat(None),
                max: stat(None),
                gust: stat(None),
                ti: stat(ti),
                resultant_length: stat(None),
                resultant_speed: stat(None),
                resultant_direction: stat(None),
                spikes: 0,
                flags,
            };
            let row = Row {
                n_possible,
                tally,
                mean,
                ti: if spec.kind == Kind::Speed { ti } else { None },
                gust: if spec.kind == Kind::Speed { gust } else { None },
                flags,
                passed: qc_core::screen::passes(&record),
                n_excluded: opt(cols.n_excluded, "n_excluded")?,
            };
            let full = cols.n_missing.is_some()
                && cols.n_out_of_range.is_some()
                && cols.n_rejected.is_some();
            cells.push((start, ch, row, file_no as u32, line, full));
            rows_read += 1;
        }
    }
    if cells.is_empty() {
        bail!(
            "no records rows in {}: expected rows after the header",
            list(paths)
        );
    }
    let first = cells.iter().min_by_key(|c| c.0);
    let last = cells.iter().max_by_key(|c| c.0);
    let t0 = first.map_or(0, |c| c.0);
    let t1 = last.map_or(0, |c| c.0) + interval_ms;
    let len = (t1 - t0) / interval_ms;
    if len > MAX_INTERVALS {
        let place = |c: Option<&(i64, usize, Row, u32, u64, bool)>| {
            c.map_or(String::new(), |c| {
                format!("{}:{}", paths[c.3 as usize].display(), c.4)
            })
        };
        bail!(
            "the records span {} ({}) to {} ({}): {len} intervals, more than {MAX_INTERVALS}; is a time wrong?",
            Rfc3339(Timestamp::from_millis(t0)),
            place(first),
            Rfc3339(Timestamp::from_millis(t1)),
            place(last)
        );
    }
    let len = len as usize;
    let mut channels: Vec<Series> = cfg
        .channels
        .iter()
        .map(|spec| Series {
            spec: spec.clone(),
            rows: vec![None; len],
        })
        .collect();
    let mut seen: Vec<Vec<(u32, u64)>> = vec![vec![(0, 0); len]; cfg.channels.len()];
    // Per interval: the first row with every count, its tally and place.
    let mut held: Vec<Option<(Tally, usize, u32, u64)>> = vec![None; len];
    for (start, ch, row, file_no, line, full) in cells {
        let i = ((start - t0) / interval_ms) as usize;
        if channels[ch].rows[i].is_some() {
            let (f0, l0) = seen[ch][i];
            bail!(
                "{}:{line}: a second row for channel {:?} at {} (the first is {}:{l0})",
                paths[file_no as usize].display(),
                cfg.channels[ch].id,
                Rfc3339(Timestamp::from_millis(start)),
                paths[f0 as usize].display()
            );
        }
        if full {
            match held[i] {
                None => held[i] = Some((row.tally, ch, file_no, line)),
                Some((t0, ch0, f0, l0)) if !t0.same_samples(&row.tally) => bail!(
                    "{}:{line}: {} {}: {} samples held (n_valid + n_missing + n_out_of_range + n_flagged + n_excluded) and {} rejected, but {} of the same interval ({}:{l0}) has {} and {}: every sample is counted once on every channel, so these counts cannot come from a station",
                    paths[file_no as usize].display(),
                    Rfc3339(Timestamp::from_millis(start)),
                    cfg.channels[ch].id,
                    row.tally.held(),
                    row.tally.rejected,
                    cfg.channels[ch0].id,
                    paths[f0 as usize].display(),
                    t0.held(),
                    t0.rejected
                ),
                Some(_) => {}
            }
        }
        channels[ch].rows[i] = Some(row);
        seen[ch][i] = (file_no, line);
    }
    Ok(Dataset {
        name: cfg.name.clone(),
        interval_ms,
        t0_ms: t0,
        len,
        samples_per_interval: cfg.station.samples_per_interval,
        channels,
        files: paths.to_vec(),
        rows_read,
        ti_column,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    const TOML: &str = r#"
[logging]
interval_s = 600
sample_rate_hz = 1

[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
"#;

    fn load(csv: &str) -> Result<Dataset> {
        let dir = tempfile::tempdir().unwrap();
        let cfg = crate::config::parse(Path::new("st.toml"), TOML).unwrap();
        let p = dir.path().join("r.csv");
        std::fs::write(&p, csv).unwrap();
        read(&cfg, &[p])
    }

    const HEAD: &str = "start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags\n";

    #[test]
    fn grid_fills_absent_intervals_and_screens_with_the_core() {
        let csv = format!(
            "{HEAD}2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,600,5,1,,,,\n\
             2025-01-20T00:20:00Z,2025-01-20T00:30:00Z,ws,600,500,6,1,,,,partial|low_recovery\n\
             2025-01-20T00:30:00Z,2025-01-20T00:40:00Z,ws,600,590,7,1,,,,partial|clock\n"
        );
        let d = load(&csv).unwrap();
        assert_eq!(d.len, 4);
        let s = &d.channels[0];
        assert!(s.rows[1].is_none());
        // screen::passes: valid samples and only partial/clock flags.
        assert_eq!(
            (0..4).map(|i| s.passes(i)).collect::<Vec<_>>(),
            [true, false, false, true]
        );
        assert_eq!(s.value(3), Some(7.0));
        assert!(!d.ti_column);
        assert_eq!(s.ti(0), Some(0.2));
    }

    #[test]
    fn errors_name_file_line_and_field() {
        let cases = [
            (
                "2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,wx,600,600,5,1,,,,",
                "r.csv:2: field 3 (channel)",
            ),
            (
                "2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,six,5,1,,,,",
                "r.csv:2: field 5 (n_valid)",
            ),
            (
                "2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,600,5,1,,,,iced",
                "unknown flag \"iced\"",
            ),
            (
                "2025-01-20T00:05:00Z,2025-01-20T00:15:00Z,ws,600,600,5,1,,,,",
                "UTC-aligned 600-second",
            ),
            (
                "2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,600,x,1,,,,",
                "field 6 (mean)",
            ),
            (
                "2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,600,5,1,,,",
                "r.csv:2: 10 fields, the header has 11",
            ),
        ];
        for (row, want) in cases {
            let msg = format!("{:#}", load(&format!("{HEAD}{row}\n")).unwrap_err());
            assert!(msg.contains(want), "{row}: {msg}");
        }
        let dup = format!(
            "{HEAD}2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,600,5,1,,,,\n\
             2025-01-20T00:00:00Z,2025-01-20T00:10:00Z,ws,600,600,5,1,,,,\n"
        );
        let msg = format!("{:#}", load(&dup).unwrap_err());
        assert!(
            msg.contains(":3: a second row") && msg.contains(":2)"),
            "{msg}"
        );
        assert!(format!("{:#}", load("").unwrap_err()).contains("empty file"));
        // A file with only a header: the message names it.
        let msg = format!("{:#}", load(HEAD).unwrap_err());
        assert!(
            msg.contains("no records rows in") && msg.contains("r.csv"),
            "{msg}"
        );
    }
}
