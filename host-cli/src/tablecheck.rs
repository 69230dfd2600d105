//! `tenmin verify` of another logger's own interval table (`[logger_table]`):
//! every declared field against the statistic the core computes from the
//! samples in the declared convention, with a tolerance from the decimals
//! written; and `--infer`, which tries every convention the core supports on
//! every column and prints the station-file lines of the winners.
//!
//! The statistics are never computed here: each comes from
//! `qc_core::conventions` on the exact interval state the replay hands out
//! ([`crate::engine::Sink::alternatives`]); this module only compares.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

use anyhow::{bail, Result};
use qc_core::conventions::{Alternatives, Estimate, North, Rounding, Statistic};
use qc_core::{ChannelRecord, Kind, Timestamp};

use crate::config::StationFile;
use crate::engine::Sink;
use crate::logtable::{self, Key, LoggerTable, Rows, StatColumn};
use crate::timefmt::Rfc3339;

/// One interval of the replay: its alternatives and the samples each channel held.
struct Interval {
    alts: Vec<Alternatives>,
    held: u64,
}

/// Collects the replay's intervals.
#[derive(Default)]
pub struct Collect {
    pending: Option<(i64, Vec<Alternatives>)>,
    intervals: BTreeMap<i64, Interval>,
    interval_ms: i64,
}

impl Collect {
    /// For a station of `interval_s` intervals.
    pub fn new(interval_s: u32) -> Self {
        Collect {
            pending: None,
            intervals: BTreeMap::new(),
            interval_ms: i64::from(interval_s) * 1000,
        }
    }
}

impl Sink for Collect {
    fn interval(
        &mut self,
        start: Timestamp,
        _end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()> {
        let k = start.millis().div_euclid(self.interval_ms);
        let alts = match self.pending.take() {
            Some((p, a)) if p == start.millis() => a,
            _ => bail!("internal: an interval without its alternatives"),
        };
        let held = records.iter().map(|r| r.tally.held()).max().unwrap_or(0);
        self.intervals.insert(k, Interval { alts, held });
        Ok(())
    }

    fn wants_alternatives(&self) -> bool {
        true
    }

    fn alternatives(&mut self, start: Timestamp, alternatives: &[Alternatives]) -> Result<()> {
        self.pending = Some((start.millis(), alternatives.to_vec()));
        Ok(())
    }
}

fn unit(cfg: &StationFile, ch: usize) -> String {
    let spec = &cfg.channels[ch];
    match (&spec.unit, spec.kind) {
        (Some(u), _) => u.clone(),
        (None, Kind::Speed) => "m/s".into(),
        (None, Kind::Direction) => "deg".into(),
        (None, Kind::Scalar) => String::new(),
    }
}

fn rule_name(r: Rounding) -> &'static str {
    match r {
        Rounding::HalfEven => "half_even",
        Rounding::HalfAway => "half_away",
        Rounding::Truncate => "truncate",
        Rounding::Unknown => "unknown",
    }
}

fn is_direction_mean(c: &StatColumn, cfg: &StationFile) -> bool {
    c.key == Key::Mean && cfg.channels[c.channel].kind == Kind::Direction
}

fn accepts(e: &Estimate, w: f64, d: u8, rule: Rounding, north: Option<North>) -> bool {
    match north {
        Some(n) => e.accepts_direction(w, d, rule, n),
        None => e.accepts(w, d, rule),
    }
}

/// The statistic `c` expects in interval `alt`, under its declared rule for
/// few samples.
fn expected(c: &StatColumn, stat: Statistic, alt: &Alternatives) -> Option<Estimate> {
    if alt.valid() < c.min_samples {
        return None;
    }
    alt.get(stat)
}

/// What `verify` found.
#[derive(Default)]
pub struct Outcome {
    /// Differences found.
    pub differences: u64,
}

/// Compares the table with the replay; writes the differences and the
/// counts per channel and statistic to `out`.
pub fn verify(
    cfg: &StationFile,
    table_path: &Path,
    rows: &Rows,
    collected: &Collect,
    max_diffs: usize,
    out: &mut dyn Write,
) -> Result<Outcome> {
    let lt = table_of(cfg)?;
    for c in &lt.columns {
        if c.decimals.is_none() {
            bail!(
                "{}:{}: [conventions.{}] {}: `decimals` (the decimals the logger writes) is needed to verify; `tenmin verify --infer` finds them",
                cfg.path.display(),
                c.line,
                cfg.channels[c.channel].id,
                c.key.name()
            );
        }
    }
    let tp = table_path.display();
    let mut shown = 0usize;
    let mut total = 0u64;
    let mut lines = String::new();
    let mut note = |s: String, total: &mut u64| {
        *total += 1;
        if shown < max_diffs {
            shown += 1;
            lines.push_str(&s);
            lines.push('\n');
        }
    };
    // Per column: compared, differing, largest difference.
    let mut per: Vec<(u64, u64, f64)> = vec![(0, 0, 0.0); lt.columns.len()];
    let ms = collected.interval_ms;
    let span = |k: i64| {
        format!(
            "{} to {}",
            Rfc3339(Timestamp::from_millis(k * ms)),
            Rfc3339(Timestamp::from_millis((k + 1) * ms))
        )
    };
    for (k, row) in &rows.by_interval {
        let Some(iv) = collected.intervals.get(k) else {
            note(
                format!(
                    "{tp}:{}: row for the interval {}, which the samples do not cover",
                    row.line,
                    span(*k)
                ),
                &mut total,
            );
            continue;
        };
        for (i, c) in lt.columns.iter().enumerate() {
            let Some(alt) = iv.alts.get(c.channel) else {
                continue;
            };
            let d = c.decimals.unwrap_or(0);
            let north = is_direction_mean(c, cfg).then_some(c.north);
            let e = expected(c, c.stat, alt);
            let w = row.values.get(i).copied().flatten();
            let id = &cfg.channels[c.channel].id;
            let u = unit(cfg, c.channel);
            per[i].0 += 1;
            let what = format!(
                "{tp}:{}: {} {id} {} ({}, {} valid samples)",
                row.line,
                span(*k),
                c.key.name(),
                c.describe(),
                alt.valid()
            );
            match (e, w) {
                (None, None) => {}
                (Some(e), Some(w)) if accepts(&e, w, d, c.rounding, north) => {}
                (Some(e), Some(w)) => {
                    let diff = e.difference(w, north.is_some());
                    per[i].1 += 1;
                    per[i].2 = per[i].2.max(diff);
                    let more = if Estimate::units(w, d).is_none() {
                        ", written with more decimals than declared"
                    } else {
                        ""
                    };
                    note(
                        format!(
                            "{what}: table {w}, expected {:.dd$} ({d} decimals, rounding {}{more}; statistic {}{}), differs by {} {u}",
                            e.value,
                            rule_name(c.rounding),
                            e.value,
                            if e.bound > 0.0 { format!(" +/- {:.1e}", e.bound) } else { String::new() },
                            trim(diff),
                            dd = usize::from(d)
                        ),
                        &mut total,
                    );
                }
                (Some(e), None) => {
                    per[i].1 += 1;
                    note(
                        format!(
                            "{what}: empty in the table, expected {:.d$}",
                            e.value,
                            d = usize::from(d)
                        ),
                        &mut total,
                    );
                }
                (None, Some(w)) => {
                    per[i].1 += 1;
                    note(
                        format!(
                            "{what}: table {w}, expected an empty field (no value from {} valid samples; min_samples = {})",
                            alt.valid(),
                            c.min_samples
                        ),
                        &mut total,
                    );
                }
            }
        }
    }
    for (k, iv) in &collected.intervals {
        if iv.held > 0 && !rows.by_interval.contains_key(k) {
            note(
                format!(
                    "{tp}: no row for the interval {}, which holds {} samples",
                    span(*k),
                    iv.held
                ),
                &mut total,
            );
        }
    }
    out.write_all(lines.as_bytes())?;
    if total as usize > shown {
        writeln!(out, "... and {} more differences", total - shown as u64)?;
    }
    writeln!(
        out,
        "Checked {tp} against the samples (per channel and statistic):"
    )?;
    for (c, (n, bad, worst)) in lt.columns.iter().zip(&per) {
        let id = &cfg.channels[c.channel].id;
        write!(
            out,
            "  {id} {} ({}): {n} intervals, {bad} differ",
            c.key.name(),
            c.describe()
        )?;
        if *bad > 0 && *worst > 0.0 {
            write!(
                out,
                ", largest difference {} {}",
                trim(*worst),
                unit(cfg, c.channel)
            )?;
        }
        writeln!(out)?;
    }
    if !rows.undeclared.is_empty() {
        writeln!(
            out,
            "  not checked (no declaration names them): {}",
            rows.undeclared
                .iter()
                .map(|h| format!("{h:?}"))
                .collect::<Vec<_>>()
                .join(", ")
        )?;
    }
    if total == 0 {
        writeln!(out, "No differences.")?;
    } else {
        writeln!(out, "{total} difference(s).")?;
    }
    Ok(Outcome { differences: total })
}

/// A difference with the digits that matter.
fn trim(x: f64) -> String {
    let s = format!("{x:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "0" && x > 0.0 {
        format!("{x:.2e}")
    } else {
        s.to_string()
    }
}

fn table_of(cfg: &StationFile) -> Result<&LoggerTable> {
    cfg.logger_table.as_ref().ok_or_else(|| {
        anyhow::anyhow!(
            "{}: no [logger_table]: --infer reads another logger's table, declared in the station file (see CONTRACT.md, \"Checking another logger's table\")",
            cfg.path.display()
        )
    })
}

/// The least decimals that write every value of column `i`.
fn decimals_of(rows: &Rows, i: usize) -> u8 {
    let mut d = 0u8;
    for row in rows.by_interval.values() {
        if let Some(w) = row.values.get(i).copied().flatten() {
            while d < qc_core::conventions::MAX_DECIMALS && Estimate::units(w, d).is_none() {
                d += 1;
            }
        }
    }
    d
}

/// What inference found for one column.
struct Found {
    decimals: u8,
    /// Intervals with a value in the table and samples behind it.
    written: u64,
    /// Per choice: its text and counts per rule (in `Rounding::ALL` order).
    choices: Vec<(Statistic, &'static str, [u64; 4])>,
    /// For a direction mean: counts with north written 0 and 360 (best choice, unknown rule).
    north: Option<(u64, u64)>,
}

/// `--infer`: tries every convention on every declared column and prints
/// how many intervals each explains, then the station-file lines of the
/// winners. Returns whether every winner explains every interval.
pub fn infer(
    cfg: &StationFile,
    table_path: &Path,
    rows: &Rows,
    collected: &Collect,
    out: &mut dyn Write,
) -> Result<bool> {
    let lt = table_of(cfg)?;
    let mut found = Vec::new();
    for (i, c) in lt.columns.iter().enumerate() {
        let kind = cfg.channels[c.channel].kind;
        let d = decimals_of(rows, i);
        let dir = is_direction_mean(c, cfg);
        let mut f = Found {
            decimals: d,
            written: 0,
            choices: logtable::Key::choices(c.key, kind)
                .into_iter()
                .map(|(s, t)| (s, t, [0; 4]))
                .collect(),
            north: dir.then_some((0, 0)),
        };
        for (k, row) in &rows.by_interval {
            let (Some(iv), Some(w)) = (
                collected.intervals.get(k),
                row.values.get(i).copied().flatten(),
            ) else {
                continue;
            };
            let Some(alt) = iv.alts.get(c.channel) else {
                continue;
            };
            f.written += 1;
            for (stat, _, counts) in &mut f.choices {
                let Some(e) = alt.get(*stat) else { continue };
                for (n, rule) in counts.iter_mut().zip(Rounding::ALL) {
                    let ok = if dir {
                        accepts(&e, w, d, rule, Some(North::Zero))
                            || accepts(&e, w, d, rule, Some(North::Full))
                    } else {
                        accepts(&e, w, d, rule, None)
                    };
                    *n += u64::from(ok);
                }
            }
        }
        found.push(f);
    }
    // The best choice of each column, then north.
    let best = |f: &Found| -> usize {
        (0..f.choices.len())
            .max_by_key(|&j| {
                (
                    f.choices[j].2.iter().max().copied().unwrap_or(0),
                    std::cmp::Reverse(j),
                )
            })
            .unwrap_or(0)
    };
    for (i, c) in lt.columns.iter().enumerate() {
        let f = &mut found[i];
        let j = best(f);
        if let Some(nc) = &mut f.north {
            let stat = f.choices.get(j).map(|x| x.0);
            for (k, row) in &rows.by_interval {
                let (Some(iv), Some(w), Some(stat)) = (
                    collected.intervals.get(k),
                    row.values.get(i).copied().flatten(),
                    stat,
                ) else {
                    continue;
                };
                let Some(e) = iv.alts.get(c.channel).and_then(|a| a.get(stat)) else {
                    continue;
                };
                nc.0 +=
                    u64::from(e.accepts_direction(w, f.decimals, Rounding::Unknown, North::Zero));
                nc.1 +=
                    u64::from(e.accepts_direction(w, f.decimals, Rounding::Unknown, North::Full));
            }
        }
    }
    let tp = table_path.display();
    writeln!(
        out,
        "Conventions of {tp}, tried on every interval with a value and samples behind it:"
    )?;
    let mut all = true;
    let mut per_channel: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    for (i, c) in lt.columns.iter().enumerate() {
        per_channel.entry(c.channel).or_default().push(i);
        let f = &found[i];
        let id = &cfg.channels[c.channel].id;
        writeln!(
            out,
            "{id} {} ({}): decimals written: {}; intervals with a value: {}",
            c.key.name(),
            c.describe(),
            f.decimals,
            f.written
        )?;
        let mut order: Vec<usize> = (0..f.choices.len()).collect();
        order
            .sort_by_key(|&j| std::cmp::Reverse(f.choices[j].2.iter().max().copied().unwrap_or(0)));
        for j in order {
            let (_, text, counts) = &f.choices[j];
            let label = if text.is_empty() { "arithmetic" } else { text };
            let rules: Vec<String> = Rounding::ALL
                .iter()
                .zip(counts)
                .map(|(r, n)| format!("{} {n}", rule_name(*r)))
                .collect();
            writeln!(
                out,
                "  {label} explains {} of {} intervals (by rounding: {})",
                counts.iter().max().copied().unwrap_or(0),
                f.written,
                rules.join(", ")
            )?;
        }
        if let Some((z, full)) = f.north {
            writeln!(
                out,
                "  north written as 0 explains {z}, as 360 explains {full}"
            )?;
        }
        let j = best(f);
        if f.choices
            .get(j)
            .is_none_or(|x| x.2.iter().max().copied().unwrap_or(0) < f.written)
        {
            all = false;
        }
    }
    // The station-file lines.
    writeln!(out)?;
    writeln!(out, "# Station-file lines declaring the winners (check them, then `tenmin verify` without --infer):")?;
    for (ch, cols) in &per_channel {
        let id = &cfg.channels[*ch].id;
        writeln!(out, "[conventions.{id}]")?;
        // One rounding rule per channel: the one explaining most over its columns.
        let mut sums = [0u64; 4];
        for &i in cols {
            let f = &found[i];
            if let Some(x) = f.choices.get(best(f)) {
                for (s, n) in sums.iter_mut().zip(x.2) {
                    *s += n;
                }
            }
        }
        let top = sums.iter().max().copied().unwrap_or(0);
        // Half-even and half-away agreeing (no exact tie met) cannot be told apart.
        let rule = if sums[0] == top && sums[1] == top {
            Rounding::Unknown
        } else {
            Rounding::ALL[(0..4).find(|&r| sums[r] == top).unwrap_or(3)]
        };
        // Fields empty although the samples give a value: the logger's rule for few samples.
        let mut min_samples = 1u32;
        // The fewest valid samples behind a value written: the rule's upper end.
        let mut fewest_written = u32::MAX;
        for &i in cols {
            let c = &lt.columns[i];
            let f = &found[i];
            let Some(&(stat, _, _)) = f.choices.get(best(f)) else {
                continue;
            };
            for (k, row) in &rows.by_interval {
                let Some(alt) = collected
                    .intervals
                    .get(k)
                    .and_then(|iv| iv.alts.get(c.channel))
                else {
                    continue;
                };
                let written = row.values.get(i).copied().flatten().is_some();
                if !written && alt.get(stat).is_some() {
                    min_samples = min_samples.max(alt.valid() + 1);
                }
                if written {
                    fewest_written = fewest_written.min(alt.valid());
                }
            }
        }
        for &i in cols {
            let c = &lt.columns[i];
            let f = &found[i];
            let mut line = format!(
                "{} = {{ column = {}, decimals = {}",
                c.key.name(),
                column_text(&c.column),
                f.decimals
            );
            let mut tied = Vec::new();
            if let Some(x) = f.choices.get(best(f)) {
                if !x.1.is_empty() {
                    let _ = write!(line, ", {}", x.1);
                }
                let top = x.2.iter().max().copied().unwrap_or(0);
                tied = f
                    .choices
                    .iter()
                    .filter(|y| y.1 != x.1 && y.2.iter().max().copied().unwrap_or(0) == top)
                    .map(|y| y.1)
                    .collect();
            }
            if let Some((z, full)) = f.north {
                let _ = write!(line, ", north = \"{}\"", if full > z { "360" } else { "0" });
            }
            line.push_str(" }");
            if !tied.is_empty() {
                let _ = write!(
                    line,
                    "  # CHECK: {} explains as many intervals: the table cannot tell them apart",
                    tied.join(", ")
                );
            }
            writeln!(out, "{line}")?;
        }
        writeln!(out, "rounding = \"{}\"", rule_name(rule))?;
        if fewest_written != u32::MAX && fewest_written > min_samples {
            writeln!(
                out,
                "min_samples = {min_samples}  # any value from {min_samples} to {fewest_written} explains the table"
            )?;
        } else {
            writeln!(out, "min_samples = {min_samples}")?;
        }
        writeln!(out)?;
    }
    if all {
        writeln!(
            out,
            "Every column is explained on every interval by its winner."
        )?;
    } else {
        writeln!(
            out,
            "Some intervals are explained by no convention tried (see the counts above)."
        )?;
    }
    Ok(all)
}

fn column_text(c: &crate::table::Column) -> String {
    match c {
        crate::table::Column::Name(n) => format!("{n:?}"),
        crate::table::Column::Index(i) => format!("{}", i + 1),
    }
}
