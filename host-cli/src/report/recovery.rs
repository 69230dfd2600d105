//! Recovery per channel and calendar month, and joint recovery of speed and
//! direction.
//!
//! Sample recovery is valid / possible samples; the possible samples not valid
//! are split into those excluded by decision (the station file's exclusions,
//! `n_excluded`) and those lost (`possible - valid - excluded`: never recorded,
//! missing, out of range, flagged by their source). Interval recovery is intervals
//! passing screening / possible intervals ([`qc_core::Totals`]). Possible
//! intervals are those of the period the records cover, month by month. The
//! usual target is 90 % (US EPA-454/R-99-005 sec. 5.3.2, there per quarter,
//! per variable and jointly for speed and direction).

use qc_core::{Kind, Month, Tally, Totals};

use super::data::Dataset;
use super::table::{int, pct, text, Table};

/// The usual recovery target (EPA-454/R-99-005 sec. 5.3.2).
pub const TARGET: f64 = 0.9;

/// Recovery of one channel.
#[derive(Clone, Debug)]
pub struct ChannelRecovery {
    /// Channel index.
    pub channel: usize,
    /// Per calendar month in the period.
    pub months: Vec<(Month, Totals)>,
    /// Over the whole period.
    pub all: Totals,
}

/// Joint recovery of a vane and its speed channel.
#[derive(Clone, Debug)]
pub struct JointRecovery {
    /// Direction channel index.
    pub direction: usize,
    /// Speed channel index.
    pub speed: usize,
    /// Per month: (possible intervals, intervals where both pass).
    pub months: Vec<(Month, u64, u64)>,
    /// Whole period.
    pub all: (u64, u64),
}

/// All recovery figures.
#[derive(Clone, Debug)]
pub struct Recovery {
    /// One per channel, in station order.
    pub channels: Vec<ChannelRecovery>,
    /// One per direction channel with a speed channel.
    pub joint: Vec<JointRecovery>,
}

fn month_index(months: &mut Vec<Month>, m: Month) -> usize {
    match months.last() {
        Some(last) if *last == m => months.len() - 1,
        _ => {
            months.push(m);
            months.len() - 1
        }
    }
}

/// The speed channel paired with a vane: its configured `speed_channel`, else
/// the speed channel nearest in height (first in file order on a tie).
pub fn vane_speed(d: &Dataset, vane: usize) -> Option<usize> {
    if let Some(s) = d.channels[vane].spec.core.speed_channel {
        return Some(usize::from(s));
    }
    let h = d.channels[vane].height();
    d.channels
        .iter()
        .enumerate()
        .filter(|(_, c)| c.spec.kind == Kind::Speed)
        .min_by(|a, b| {
            let dist = |c: &super::data::Series| match (h, c.height()) {
                (Some(x), Some(y)) => (x - y).abs(),
                _ => f64::INFINITY,
            };
            dist(a.1).total_cmp(&dist(b.1))
        })
        .map(|(i, _)| i)
}

/// Computes recovery figures.
pub fn compute(d: &Dataset) -> Recovery {
    let mut months: Vec<Month> = Vec::new();
    let month_of: Vec<usize> = (0..d.len)
        .map(|i| month_index(&mut months, d.start(i).month()))
        .collect();
    let channels = d
        .channels
        .iter()
        .enumerate()
        .map(|(ci, s)| {
            let mut per = vec![Totals::default(); months.len()];
            for (i, slot) in s.rows.iter().enumerate() {
                let t = &mut per[month_of[i]];
                match slot {
                    Some(r) => t.add(r.n_possible, &r.tally, r.passed),
                    None => t.add(d.samples_per_interval, &Tally::default(), false),
                }
            }
            let mut all = Totals::default();
            for t in &per {
                all.merge(t);
            }
            ChannelRecovery {
                channel: ci,
                months: months.iter().copied().zip(per).collect(),
                all,
            }
        })
        .collect();
    let joint = (0..d.channels.len())
        .filter(|&c| d.channels[c].spec.kind == Kind::Direction)
        .filter_map(|dir| {
            let sp = vane_speed(d, dir)?;
            let mut per = vec![(0u64, 0u64); months.len()];
            for (i, &m) in month_of.iter().enumerate() {
                per[m].0 += 1;
                per[m].1 += u64::from(d.channels[dir].passes(i) && d.channels[sp].passes(i));
            }
            let all = per.iter().fold((0, 0), |a, b| (a.0 + b.0, a.1 + b.1));
            Some(JointRecovery {
                direction: dir,
                speed: sp,
                months: months
                    .iter()
                    .copied()
                    .zip(per)
                    .map(|(m, (a, b))| (m, a, b))
                    .collect(),
                all,
            })
        })
        .collect();
    Recovery { channels, joint }
}

fn month_label(m: Month) -> String {
    format!("{:04}-{:02}", m.year, m.month)
}

fn rate(num: u64, den: u64) -> Option<f64> {
    (den > 0).then(|| num as f64 / den as f64)
}

fn marked(v: Option<f64>) -> super::table::Cell {
    let c = pct(v, 1);
    match v {
        Some(x) if x < TARGET => c.class("below"),
        Some(_) => c.class("ok"),
        None => c,
    }
}

/// Per channel and month (and `all`), the recovery table.
pub fn table(d: &Dataset, r: &Recovery) -> Table {
    let mut t = Table::new(
        "recovery",
        &[
            ("channel", "channel"),
            ("month", "month"),
            ("n_possible", "samples possible"),
            ("n_valid", "valid"),
            ("n_excluded", "excluded by decision"),
            ("n_lost", "lost"),
            ("sample_recovery", "sample recovery"),
            ("intervals", "intervals"),
            ("intervals_passed", "passing"),
            ("interval_recovery", "interval recovery"),
            ("meets_90_percent", "both >= 90 %"),
        ],
    );
    for c in &r.channels {
        let rows = c
            .months
            .iter()
            .map(|(m, t)| (month_label(*m), *t))
            .chain(std::iter::once(("all".to_string(), c.all)));
        for (label, tot) in rows {
            let s = tot.rate();
            let iv = tot.interval_rate();
            let meets = s.is_some_and(|x| x >= TARGET) && iv.is_some_and(|x| x >= TARGET);
            t.push(vec![
                text(d.channels[c.channel].id()),
                text(label),
                int(tot.possible),
                int(tot.valid),
                int(tot.excluded),
                int(tot.lost()),
                marked(s),
                int(tot.intervals),
                int(tot.passed),
                marked(iv),
                text(if meets { "yes" } else { "no" }),
            ]);
        }
    }
    t
}

/// Joint speed and direction recovery table.
pub fn joint_table(d: &Dataset, r: &Recovery) -> Table {
    let mut t = Table::new(
        "recovery-joint",
        &[
            ("direction", "vane"),
            ("speed", "anemometer"),
            ("month", "month"),
            ("intervals", "intervals possible"),
            ("both_passed", "both passing"),
            ("joint_recovery", "joint recovery"),
        ],
    );
    for j in &r.joint {
        let rows = j
            .months
            .iter()
            .map(|(m, a, b)| (month_label(*m), *a, *b))
            .chain(std::iter::once(("all".to_string(), j.all.0, j.all.1)));
        for (label, a, b) in rows {
            t.push(vec![
                text(d.channels[j.direction].id()),
                text(d.channels[j.speed].id()),
                text(label),
                int(a),
                int(b),
                marked(rate(b, a)),
            ]);
        }
    }
    t
}
