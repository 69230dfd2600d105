//! Outages: the intervals a channel lost, merged into runs, with their cause.
//!
//! An interval of a channel is *lost* when it does not pass screening
//! ([`qc_core::screen::passes`]). Its cause is, first that applies:
//!
//! 1. `no row`: the records hold no row for the interval (a logger outage, a
//!    file left out); in a replay, an interval the samples never reached;
//! 2. `excluded`: samples of the interval were excluded by decision (a records
//!    column `n_excluded` above 0, or the flag `excluded`);
//! 3. `no valid samples`: a row with `n_valid` 0;
//! 4. `flagged`: valid samples, but a screening flag other than `partial` and
//!    `clock` (the flags are listed).
//!
//! Consecutive lost intervals of one channel are one run, whatever their
//! causes (a logger outage typically shows a flagged interval, intervals
//! without samples, and another flagged interval: one outage with three
//! causes); runs of several channels with the same start, end and causes are
//! one outage listing those channels. [`Outages`] is fed interval by interval in
//! time order (the replay's sink, or the report's grid) and needs memory only
//! for one open run per channel plus the finished list.

use std::collections::BTreeMap;

use qc_core::{Flag, Flags, Timestamp};

/// Why an interval was lost.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Cause {
    /// No records row for the interval.
    NoRow,
    /// Samples excluded by decision.
    Excluded,
    /// A row without valid samples.
    NoValidSamples,
    /// Valid samples, but flagged by screening.
    Flagged,
}

impl Cause {
    /// Every cause, in the order of precedence.
    pub const ALL: [Cause; 4] = [
        Cause::NoRow,
        Cause::Excluded,
        Cause::NoValidSamples,
        Cause::Flagged,
    ];

    fn bit(self) -> u8 {
        1 << self as u8
    }

    /// The cause in words, as the tables print it.
    pub fn name(self) -> &'static str {
        match self {
            Cause::NoRow => "no row",
            Cause::Excluded => "excluded",
            Cause::NoValidSamples => "no valid samples",
            Cause::Flagged => "flagged",
        }
    }
}

/// The flag that marks excluded samples (added by the exclusion list; read by
/// name so that records with or without it work).
const EXCLUDED: &str = "excluded";

/// Whether `flags` holds the `excluded` flag.
pub fn has_excluded(flags: Flags) -> bool {
    flags.iter().any(|f| f.name() == EXCLUDED)
}

/// The cause of a lost interval from its records row: `None` when it passes
/// screening. `n_excluded` is the records column (0 when absent).
pub fn cause_of(passed: bool, n_valid: u32, n_excluded: u32, flags: Flags) -> Option<Cause> {
    if passed {
        None
    } else if n_excluded > 0 || has_excluded(flags) {
        Some(Cause::Excluded)
    } else if n_valid == 0 {
        Some(Cause::NoValidSamples)
    } else {
        Some(Cause::Flagged)
    }
}

/// One outage: a run of lost intervals of one or more channels.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Outage {
    /// Start of the first lost interval.
    pub start: Timestamp,
    /// End of the last lost interval.
    pub end: Timestamp,
    /// Channels (station-file indices), in order.
    pub channels: Vec<usize>,
    /// Why, every cause seen in the run, in the order of [`Cause::ALL`].
    pub causes: Vec<Cause>,
    /// Every flag seen in flagged intervals of the run other than `partial`
    /// and `clock`.
    pub flags: Flags,
}

impl Outage {
    /// Duration in milliseconds.
    pub fn duration_ms(&self) -> i64 {
        self.end.millis() - self.start.millis()
    }

    /// The causes with the flags, e.g. `no valid samples; flagged (implausible, icing)`.
    pub fn cause_text(&self) -> String {
        let names: Vec<&str> = self.flags.iter().map(Flag::name).collect();
        self.causes
            .iter()
            .map(|c| {
                if *c == Cause::Flagged && !names.is_empty() {
                    format!("{} ({})", c.name(), names.join(", "))
                } else {
                    c.name().to_string()
                }
            })
            .collect::<Vec<_>>()
            .join("; ")
    }
}

/// A duration as `1 d 2 h 30 min` (whole minutes).
pub fn duration_text(ms: i64) -> String {
    let min = ms / 60_000;
    let (d, h, m) = (min / 1440, min / 60 % 24, min % 60);
    let mut parts = Vec::new();
    if d > 0 {
        parts.push(format!("{d} d"));
    }
    if h > 0 {
        parts.push(format!("{h} h"));
    }
    if m > 0 || parts.is_empty() {
        parts.push(format!("{m} min"));
    }
    parts.join(" ")
}

#[derive(Clone, Copy, Debug)]
struct Run {
    start: i64,
    end: i64,
    causes: u8,
    flags: Flags,
}

/// Builds the outage list from intervals in time order.
#[derive(Clone, Debug)]
pub struct Outages {
    interval_ms: i64,
    open: Vec<Option<Run>>,
    /// End of the last interval seen.
    next: Option<i64>,
    /// Finished runs: (channel, run).
    done: Vec<(usize, Run)>,
}

impl Outages {
    /// A builder for `channels` channels of intervals `interval_ms` long.
    pub fn new(channels: usize, interval_ms: i64) -> Outages {
        Outages {
            interval_ms: interval_ms.max(1),
            open: vec![None; channels],
            next: None,
            done: Vec::new(),
        }
    }

    /// The interval starting at `start_ms`, with each channel's cause (`None`
    /// when it passes) and flags. A jump in time since the last interval is a
    /// run of intervals with no row for every channel. Intervals out of time
    /// order are ignored (a replay hands them in order).
    pub fn interval(&mut self, start_ms: i64, causes: &[(Option<Cause>, Flags)]) {
        if let Some(n) = self.next {
            if start_ms < n {
                return;
            }
            if start_ms > n {
                let all: Vec<(Option<Cause>, Flags)> =
                    vec![(Some(Cause::NoRow), Flags::EMPTY); self.open.len()];
                self.span(n, start_ms, &all);
            }
        }
        self.span(start_ms, start_ms + self.interval_ms, causes);
        self.next = Some(start_ms + self.interval_ms);
    }

    fn span(&mut self, a: i64, b: i64, causes: &[(Option<Cause>, Flags)]) {
        for (c, slot) in self.open.iter_mut().enumerate() {
            let (cause, flags) = causes.get(c).copied().unwrap_or((None, Flags::EMPTY));
            let mut shown = Flags::EMPTY;
            for f in flags.iter() {
                if !matches!(f, Flag::Partial | Flag::Clock) {
                    shown.insert(f);
                }
            }
            match (slot.as_mut(), cause) {
                (Some(r), Some(k)) if r.end == a => {
                    r.end = b;
                    r.causes |= k.bit();
                    if k == Cause::Flagged {
                        for f in shown.iter() {
                            r.flags.insert(f);
                        }
                    }
                }
                (_, k) => {
                    if let Some(r) = slot.take() {
                        self.done.push((c, r));
                    }
                    *slot = k.map(|cause| Run {
                        start: a,
                        end: b,
                        causes: cause.bit(),
                        flags: if cause == Cause::Flagged {
                            shown
                        } else {
                            Flags::EMPTY
                        },
                    });
                }
            }
        }
    }

    /// The outages, by start time, then end; runs of several channels with
    /// the same start, end and causes are one outage.
    pub fn finish(mut self) -> Vec<Outage> {
        for (c, slot) in self.open.iter_mut().enumerate() {
            if let Some(r) = slot.take() {
                self.done.push((c, r));
            }
        }
        let mut grouped: BTreeMap<(i64, i64, u8), (Vec<usize>, Flags)> = BTreeMap::new();
        for (c, r) in self.done {
            let e = grouped
                .entry((r.start, r.end, r.causes))
                .or_insert_with(|| (Vec::new(), Flags::EMPTY));
            e.0.push(c);
            for f in r.flags.iter() {
                e.1.insert(f);
            }
        }
        grouped
            .into_iter()
            .map(|((start, end, causes), (mut channels, flags))| {
                channels.sort_unstable();
                Outage {
                    start: Timestamp::from_millis(start),
                    end: Timestamp::from_millis(end),
                    channels,
                    causes: Cause::ALL
                        .into_iter()
                        .filter(|c| causes & c.bit() != 0)
                        .collect(),
                    flags,
                }
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const M: i64 = 600_000;

    fn ok() -> (Option<Cause>, Flags) {
        (None, Flags::EMPTY)
    }

    fn lost(c: Cause, f: &[Flag]) -> (Option<Cause>, Flags) {
        let mut s = Flags::EMPTY;
        for x in f {
            s.insert(*x);
        }
        (Some(c), s)
    }

    #[test]
    fn runs_merge_across_intervals_and_channels() {
        let mut o = Outages::new(3, M);
        o.interval(0, &[ok(), ok(), ok()]);
        // Intervals 1 and 2 absent: no row for all three channels.
        o.interval(3 * M, &[lost(Cause::NoValidSamples, &[]), ok(), ok()]);
        o.interval(
            4 * M,
            &[
                lost(Cause::NoValidSamples, &[]),
                lost(Cause::Flagged, &[Flag::Icing, Flag::Partial]),
                ok(),
            ],
        );
        o.interval(
            5 * M,
            &[
                ok(),
                lost(Cause::Flagged, &[Flag::Implausible, Flag::Icing]),
                ok(),
            ],
        );
        o.interval(6 * M, &[ok(), ok(), lost(Cause::Excluded, &[])]);
        let v = o.finish();
        assert_eq!(v.len(), 4, "{v:?}");
        // Channels 1 and 2 share the no-row run.
        assert_eq!((v[0].start.millis(), v[0].end.millis()), (M, 3 * M));
        assert_eq!(v[0].channels, [1, 2]);
        assert_eq!(v[0].causes, [Cause::NoRow]);
        // Channel 0: no row, then no valid samples: one run of 4 intervals.
        assert_eq!((v[1].start.millis(), v[1].end.millis()), (M, 5 * M));
        assert_eq!(v[1].channels, [0]);
        assert_eq!(v[1].causes, [Cause::NoRow, Cause::NoValidSamples]);
        assert_eq!(v[1].cause_text(), "no row; no valid samples");
        assert_eq!(v[1].duration_ms(), 40 * 60_000);
        assert_eq!(v[2].channels, [1]);
        assert_eq!((v[2].start.millis(), v[2].end.millis()), (4 * M, 6 * M));
        // Flags of the run, partial and clock left out, in the core's order.
        assert_eq!(v[2].cause_text(), "flagged (implausible, icing)");
        assert_eq!(v[3].causes, [Cause::Excluded]);
        assert_eq!(v[3].end.millis(), 7 * M);
    }

    #[test]
    fn causes_and_durations() {
        assert_eq!(cause_of(true, 600, 0, Flags::EMPTY), None);
        assert_eq!(
            cause_of(false, 0, 0, Flags::EMPTY),
            Some(Cause::NoValidSamples)
        );
        assert_eq!(cause_of(false, 0, 5, Flags::EMPTY), Some(Cause::Excluded));
        assert_eq!(cause_of(false, 500, 0, Flags::EMPTY), Some(Cause::Flagged));
        assert_eq!(duration_text(30 * 60_000), "30 min");
        assert_eq!(duration_text(26 * 3_600_000 + 60_000), "1 d 2 h 1 min");
        assert_eq!(duration_text(0), "0 min");
    }
}
