//! The summary printed on stderr after a replay: where every row went, and
//! each channel's sample counts and recovery.

use std::io::{self, Write};

use qc_core::{PushTotals, Totals};

use crate::config::StationFile;
use crate::samples::InputStats;

/// Everything a replay counted.
#[derive(Clone, Debug)]
pub struct Summary {
    /// What the samples files held.
    pub input: InputStats,
    /// Samples pushed to the station, by outcome.
    pub pushed: PushTotals,
    /// Recovery since start of each channel.
    pub recovery: Vec<Totals>,
    /// Record rows produced.
    pub record_rows: u64,
    /// Runs of intervals lost to screening, with their cause
    /// ([`crate::outages`]).
    pub outages: Vec<crate::outages::Outage>,
}

/// Outages listed in full by the summary; more are counted.
pub const OUTAGES_SHOWN: usize = 20;

/// Recovery as a percentage, or "-" when nothing was possible.
pub fn percent(t: &Totals) -> String {
    match t.rate() {
        Some(r) => format!("{:.1}%", 100.0 * r),
        None => "-".into(),
    }
}

/// The rows and files skipped with `--skip-bad-rows`, by kind, with examples.
pub fn write_skipped(w: &mut dyn Write, input: &InputStats) -> io::Result<()> {
    let b = &input.bad;
    if b.total() > 0 {
        writeln!(
            w,
            "bad rows skipped: {} wrong field count, {} bad time, {} bad value, {} not UTF-8",
            b.field_count, b.time, b.value, b.encoding
        )?;
        for e in &input.examples {
            writeln!(w, "  {e}")?;
        }
        if b.total() > input.examples.len() as u64 {
            writeln!(
                w,
                "  ... and {} more",
                b.total() - input.examples.len() as u64
            )?;
        }
    }
    for f in &input.empty_files {
        writeln!(w, "empty file skipped: {}", f.display())?;
    }
    Ok(())
}

impl Summary {
    /// Rows accounted for: accepted, rejected by reason, bad.
    pub fn rows_accounted(&self) -> u64 {
        self.pushed.pushed() + self.input.bad.total() + self.input.bad.filtered
    }

    /// Writes the summary.
    pub fn write(&self, w: &mut dyn Write, cfg: &StationFile) -> io::Result<()> {
        let p = &self.pushed;
        let b = &self.input.bad;
        write!(
            w,
            "rows read: {} from {} file(s) = {} accepted + {} rejected (duplicate {}, backward {}, closed interval {}, unsupported time {}) + {} bad rows",
            self.input.rows,
            self.input.files,
            p.accepted,
            p.pushed() - p.accepted,
            p.duplicate,
            p.backward,
            p.closed_interval,
            p.unsupported_time,
            b.total()
        )?;
        if b.filtered > 0 {
            write!(
                w,
                " + {} rows of other stations (left out by [input] filter)",
                b.filtered
            )?;
        }
        writeln!(w)?;
        write_skipped(w, &self.input)?;
        if self.rows_accounted() != self.input.rows {
            // Cannot happen: every row is pushed or counted bad. Said loudly if it does.
            writeln!(
                w,
                "warning: {} rows accounted for, {} read",
                self.rows_accounted(),
                self.input.rows
            )?;
        }
        writeln!(
            w,
            "records: {} rows (intervals x channels)",
            self.record_rows
        )?;
        if let Some(h) = &cfg.sensors {
            let with: Vec<String> = cfg
                .channels
                .iter()
                .zip(&h.channels)
                .filter(|(_, es)| !es.is_empty())
                .map(|(c, es)| format!("{} {}", c.id, es.len()))
                .collect();
            writeln!(
                w,
                "sensor history {}: entries per channel: {} (records: sensor_entries, flag sensor_change)",
                h.path.display(),
                if with.is_empty() {
                    "none".to_string()
                } else {
                    with.join(", ")
                }
            )?;
        }
        let width = cfg
            .channels
            .iter()
            .map(|c| c.id.len())
            .max()
            .unwrap_or(7)
            .max(7);
        writeln!(
            w,
            "{:<width$} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>9} {:>9}",
            "channel",
            "possible",
            "valid",
            "missing",
            "out_range",
            "rejected",
            "flagged",
            "excluded",
            "absent",
            "lost",
            "recovery",
            "screened"
        )?;
        for (ch, t) in cfg.channels.iter().zip(&self.recovery) {
            writeln!(
                w,
                "{:<width$} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>10} {:>9} {:>9}",
                ch.id,
                t.possible,
                t.valid,
                t.missing,
                t.out_of_range,
                t.rejected,
                t.flagged,
                t.excluded,
                t.absent(),
                t.lost(),
                percent(t),
                t.interval_rate()
                    .map_or_else(|| "-".into(), |r| format!("{:.1}%", 100.0 * r))
            )?;
        }
        if !self.outages.is_empty() {
            writeln!(
                w,
                "outages: {} (runs of intervals that fail screening, merged across intervals and channels)",
                self.outages.len()
            )?;
            for o in self.outages.iter().take(OUTAGES_SHOWN) {
                let ids: Vec<&str> = o
                    .channels
                    .iter()
                    .filter_map(|&c| cfg.channels.get(c).map(|s| s.id.as_str()))
                    .collect();
                writeln!(
                    w,
                    "  {} to {} {:>12}  {}: {}",
                    crate::timefmt::Rfc3339(o.start),
                    crate::timefmt::Rfc3339(o.end),
                    crate::outages::duration_text(o.duration_ms()),
                    o.cause_text(),
                    if ids.len() == cfg.channels.len() && ids.len() > 1 {
                        "all channels".to_string()
                    } else {
                        ids.join(", ")
                    }
                )?;
            }
            if self.outages.len() > OUTAGES_SHOWN {
                writeln!(
                    w,
                    "  ... and {} more (the report's outages table lists them all)",
                    self.outages.len() - OUTAGES_SHOWN
                )?;
            }
        }
        writeln!(
            w,
            "(recovery = valid / possible samples since the first interval; screened = intervals with valid\n samples and no flag but partial, clock or excluded / possible intervals; flagged = readings the source's\n quality code marked bad; excluded = readings excluded by decision (the station file's exclusions);\n absent = possible samples with no row; lost = possible samples neither valid nor excluded)"
        )
    }
}
