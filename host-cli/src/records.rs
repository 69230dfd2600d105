//! Records CSV: one row per interval and channel, channels in station-file order.
//!
//! Columns: [`COLUMNS`]. Times are RFC 3339 UTC with `Z` (milliseconds only when
//! not zero). A statistic the core reports as absent is an empty field. Numbers
//! print with Rust's `{}` for `f64`: the shortest decimal that parses back to
//! the same bits, so a records file carries the core's results exactly.
//! `flags` is `qc_core::Flags` printed (names joined with `|`).
//! With a sensor history (`[campaign] sensors`), `sensor_entries` names the
//! history's entries in force during the interval (ids joined with `|`) and
//! `flags` holds `sensor_change` when the entry changed inside it
//! ([`crate::sensors::History::mark`]); without one the column is empty.

use std::io::{self, Write};
use std::sync::Arc;

use anyhow::Result;
use qc_core::{ChannelRecord, Stat, Timestamp};

use crate::engine::Sink;
use crate::sensors::History;
use crate::timefmt::Rfc3339;

/// How a column is compared by `verify`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Type {
    /// RFC 3339 time.
    Time,
    /// Channel id.
    Text,
    /// Unsigned count.
    Count,
    /// `f64`, or empty when absent.
    Number,
    /// Flag names joined with `|`.
    Flags,
}

/// A records column.
#[derive(Clone, Copy, Debug)]
pub struct Column {
    /// Header name.
    pub name: &'static str,
    /// Its type.
    pub ty: Type,
}

const fn col(name: &'static str, ty: Type) -> Column {
    Column { name, ty }
}

/// The records columns, in order. The first eleven are fixed by the contract.
pub const COLUMNS: [Column; 22] = [
    col("start", Type::Time),
    col("end", Type::Time),
    col("channel", Type::Text),
    col("n_possible", Type::Count),
    col("n_valid", Type::Count),
    col("mean", Type::Number),
    col("sd", Type::Number),
    col("min", Type::Number),
    col("max", Type::Number),
    col("gust", Type::Number),
    col("flags", Type::Flags),
    col("n_missing", Type::Count),
    col("n_out_of_range", Type::Count),
    col("n_rejected", Type::Count),
    col("ti", Type::Number),
    col("resultant_length", Type::Number),
    col("resultant_speed", Type::Number),
    col("resultant_direction", Type::Number),
    col("n_spikes", Type::Count),
    col("n_flagged", Type::Count),
    col("n_excluded", Type::Count),
    col("sensor_entries", Type::Text),
];

/// Index in [`COLUMNS`] of `n_flagged`, the readings the source marked bad:
/// a records file written before it has no such column, which reads as 0.
pub const N_FLAGGED: usize = 19;

/// Index in [`COLUMNS`] of `n_excluded`, the readings excluded by decision
/// (the station file's exclusions): a records file written before it has no
/// such column, which reads as 0.
pub const N_EXCLUDED: usize = 20;

/// Whether column `k` may be absent from a records file (added after the
/// first version; absent reads as 0).
pub const fn optional(k: usize) -> bool {
    k == N_FLAGGED || k == N_EXCLUDED || k == SENSOR_ENTRIES
}

/// Index in [`COLUMNS`] of `sensor_entries`, the sensor-history entries in
/// force: a records file written before it has no such column, which reads
/// as empty (no history).
pub const SENSOR_ENTRIES: usize = 21;

/// Writes the header line.
pub fn write_header<W: Write>(w: &mut W) -> io::Result<()> {
    for (i, c) in COLUMNS.iter().enumerate() {
        if i > 0 {
            w.write_all(b",")?;
        }
        w.write_all(c.name.as_bytes())?;
    }
    w.write_all(b"\n")
}

struct S(Stat);

impl std::fmt::Display for S {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.0 {
            Stat::Value(v) => write!(f, "{v}"),
            Stat::Absent(_) => Ok(()),
        }
    }
}

/// Writes one row of channel `ch` (`channel` its id). Channel ids hold no
/// commas or quotes (the station file checks), nor do entry ids (the sensor
/// history checks), and no other field can, so no quoting is ever needed.
/// With `sensors`, the row carries the history's mark
/// ([`crate::sensors::History::mark`]).
pub fn write_row<W: Write>(
    w: &mut W,
    start: Timestamp,
    end: Timestamp,
    (channel, ch): (&str, usize),
    r: &ChannelRecord,
    sensors: Option<&History>,
) -> io::Result<()> {
    let t = &r.tally;
    let mut entries = String::new();
    let flags = match sensors {
        Some(h) => h.mark(ch, start, end, r.flags, &mut entries),
        None => r.flags,
    };
    writeln!(
        w,
        "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}",
        Rfc3339(start),
        Rfc3339(end),
        channel,
        r.n_possible,
        t.valid,
        S(r.mean),
        S(r.sd),
        S(r.min),
        S(r.max),
        S(r.gust),
        flags,
        t.missing,
        t.out_of_range,
        t.rejected,
        S(r.ti),
        S(r.resultant_length),
        S(r.resultant_speed),
        S(r.resultant_direction),
        r.spikes,
        t.flagged,
        t.excluded,
        entries,
    )
}

/// A sink writing records CSV.
pub struct Writer<W: Write> {
    out: W,
    ids: Vec<String>,
    sensors: Option<Arc<History>>,
    /// Rows written.
    pub rows: u64,
}

impl<W: Write> Writer<W> {
    /// A writer for channels `ids`; writes the header at once.
    pub fn new(mut out: W, ids: Vec<String>) -> io::Result<Self> {
        write_header(&mut out)?;
        Ok(Writer {
            out,
            ids,
            sensors: None,
            rows: 0,
        })
    }

    /// Marks the rows with the sensor history `sensors` (the station file's).
    pub fn with_sensors(mut self, sensors: Option<Arc<History>>) -> Self {
        self.sensors = sensors;
        self
    }

    /// Flushes and returns the output.
    pub fn finish(mut self) -> io::Result<W> {
        self.out.flush()?;
        Ok(self.out)
    }
}

impl<W: Write> Sink for Writer<W> {
    fn interval(
        &mut self,
        start: Timestamp,
        end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()> {
        let sensors = self.sensors.as_deref();
        for (ch, (id, r)) in self.ids.iter().zip(records).enumerate() {
            write_row(&mut self.out, start, end, (id, ch), r, sensors)?;
            self.rows += 1;
        }
        Ok(())
    }
}

/// Distance in units in the last place between two finite `f64`s (0 when
/// equal bits; +0 and -0 are 1 apart).
pub fn ulp_distance(a: f64, b: f64) -> u64 {
    fn key(x: f64) -> i64 {
        let i = x.to_bits() as i64;
        if i < 0 {
            i ^ i64::MAX
        } else {
            i
        }
    }
    (i128::from(key(a)) - i128::from(key(b))).unsigned_abs() as u64
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ulps() {
        assert_eq!(ulp_distance(1.0, 1.0), 0);
        assert_eq!(ulp_distance(1.0, f64::from_bits(1.0f64.to_bits() + 1)), 1);
        assert_eq!(ulp_distance(f64::from_bits(1.0f64.to_bits() + 3), 1.0), 3);
        assert_eq!(ulp_distance(0.0, -0.0), 1);
        assert_eq!(
            ulp_distance(f64::MIN_POSITIVE, -f64::MIN_POSITIVE),
            2 * (1u64 << 52) + 1
        );
        assert_eq!(
            ulp_distance(-1.0, f64::from_bits((-1.0f64).to_bits() + 1)),
            1
        );
    }

    #[test]
    fn header_starts_with_the_fixed_columns() {
        let mut v = Vec::new();
        write_header(&mut v).unwrap();
        assert!(String::from_utf8(v)
            .unwrap()
            .starts_with("start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags,"));
        assert_eq!(COLUMNS[N_FLAGGED].name, "n_flagged");
        assert_eq!(COLUMNS[SENSOR_ENTRIES].name, "sensor_entries");
        assert_eq!(
            COLUMNS.len(),
            SENSOR_ENTRIES + 1,
            "sensor_entries is the last column"
        );
    }
}
