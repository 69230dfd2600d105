//! Running data recovery: since start, and for the current UTC calendar month.
//!
//! Recovery rate = valid samples / possible samples. Possible samples come from
//! the nominal rate, so intervals that were never recorded (a logger outage)
//! count as possible and lost. A recovery of at least 90 % is the usual target
//! (US EPA-454/R-99-005 sec. 5.3.2); the target itself is the caller's to apply.

use crate::channel::Tally;
use crate::time::{Month, Timestamp};

/// Sample totals of one channel over a span of intervals.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Totals {
    /// Samples the span should hold at the nominal rate.
    pub possible: u64,
    /// Valid samples.
    pub valid: u64,
    /// Missing readings.
    pub missing: u64,
    /// Readings out of range.
    pub out_of_range: u64,
    /// Samples rejected for their timestamp.
    pub rejected: u64,
    /// Readings their source marked bad ([`crate::Reading::Flagged`]).
    pub flagged: u64,
    /// Readings excluded by decision ([`crate::Reading::Excluded`]).
    pub excluded: u64,
    /// Intervals in the span (possible intervals).
    pub intervals: u64,
    /// Intervals with valid samples that passed screening
    /// ([`crate::screen::passes`]).
    pub passed: u64,
}

impl Totals {
    /// Valid / possible, or `None` when nothing was possible.
    pub fn rate(&self) -> Option<f64> {
        (self.possible > 0).then(|| self.valid as f64 / self.possible as f64)
    }

    /// Passed intervals / possible intervals, or `None` when there were none.
    pub fn interval_rate(&self) -> Option<f64> {
        (self.intervals > 0).then(|| self.passed as f64 / self.intervals as f64)
    }

    /// Possible samples never recorded at all: possible minus valid, missing,
    /// out of range, flagged and excluded (0 if the record held more samples
    /// than the nominal rate).
    pub const fn absent(&self) -> u64 {
        self.possible
            .saturating_sub(self.valid)
            .saturating_sub(self.missing)
            .saturating_sub(self.out_of_range)
            .saturating_sub(self.flagged)
            .saturating_sub(self.excluded)
    }

    /// Possible samples lost: neither valid nor excluded by decision
    /// (possible minus valid minus excluded, 0 if negative). The possible
    /// samples are `valid + excluded + lost` when the record held no more
    /// samples than the nominal rate.
    pub const fn lost(&self) -> u64 {
        self.possible
            .saturating_sub(self.valid)
            .saturating_sub(self.excluded)
    }

    /// Adds one interval's tally; `passed` if it passed screening.
    pub fn add(&mut self, possible: u32, t: &Tally, passed: bool) {
        self.intervals += 1;
        self.passed += u64::from(passed);
        self.possible += u64::from(possible);
        self.valid += u64::from(t.valid);
        self.missing += u64::from(t.missing);
        self.out_of_range += u64::from(t.out_of_range);
        self.rejected += u64::from(t.rejected);
        self.flagged += u64::from(t.flagged);
        self.excluded += u64::from(t.excluded);
    }

    /// Adds all counts of `other`.
    pub fn merge(&mut self, o: &Totals) {
        self.possible += o.possible;
        self.valid += o.valid;
        self.missing += o.missing;
        self.out_of_range += o.out_of_range;
        self.rejected += o.rejected;
        self.flagged += o.flagged;
        self.excluded += o.excluded;
        self.intervals += o.intervals;
        self.passed += o.passed;
    }
}

/// Totals of one calendar month in 32 bits where that always suffices: a
/// month has fewer than 2^32 milliseconds, and a station accepts at most one
/// sample per millisecond (strictly increasing timestamps) and expects at most
/// one ([`crate::Layout::new`] refuses more samples per interval than its
/// milliseconds). Rejected samples have no such bound, but an interval counts
/// them in 32 bits already ([`Tally`]). The adds saturate, so that a caller
/// outside those bounds gets a capped count, never a wrapped one or a panic.
/// The possible samples are not stored: they are the intervals times the
/// samples per interval (kept in [`SinceStart`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct MonthTotals {
    rejected: u32,
    excluded: u32,
    valid: u32,
    missing: u32,
    out_of_range: u32,
    flagged: u32,
    intervals: u32,
    passed: u32,
}

impl MonthTotals {
    const ZERO: MonthTotals = MonthTotals {
        rejected: 0,
        excluded: 0,
        valid: 0,
        missing: 0,
        out_of_range: 0,
        flagged: 0,
        intervals: 0,
        passed: 0,
    };

    fn add(&mut self, t: &Tally, passed: bool) {
        self.intervals = self.intervals.saturating_add(1);
        self.passed = self.passed.saturating_add(u32::from(passed));
        self.valid = self.valid.saturating_add(t.valid);
        self.missing = self.missing.saturating_add(t.missing);
        self.out_of_range = self.out_of_range.saturating_add(t.out_of_range);
        self.rejected = self.rejected.saturating_add(t.rejected);
        self.flagged = self.flagged.saturating_add(t.flagged);
        self.excluded = self.excluded.saturating_add(t.excluded);
    }

    fn add_empty(&mut self, intervals: u64) {
        let n = u32::try_from(intervals).unwrap_or(u32::MAX);
        self.intervals = self.intervals.saturating_add(n);
    }

    /// The totals, with `samples` per interval.
    const fn totals(&self, samples: u32) -> Totals {
        Totals {
            possible: self.intervals.saturating_mul(samples) as u64,
            valid: self.valid as u64,
            missing: self.missing as u64,
            out_of_range: self.out_of_range as u64,
            rejected: self.rejected as u64,
            flagged: self.flagged as u64,
            excluded: self.excluded as u64,
            intervals: self.intervals as u64,
            passed: self.passed as u64,
        }
    }
}

/// Bits of [`SinceStart::span`] holding the interval count: 2^39 intervals of
/// the shortest interval, 1 s, are 17,400 years, more than the supported
/// years 0000 to 9999 hold.
const INTERVAL_BITS: u32 = 39;
const INTERVAL_MASK: u64 = (1 << INTERVAL_BITS) - 1;
/// Largest samples per interval the span holds (25 bits; the station allows
/// at most [`crate::MAX_SAMPLES_PER_INTERVAL`] = 2^24).
const SAMPLES_MAX: u32 = (1 << (64 - INTERVAL_BITS)) - 1;

/// Totals since start as [`Recovery`] keeps them: the sample counts that a
/// fast logger can push past 2^32 in 64 bits; the samples rejected for their
/// timestamp, the readings excluded by decision and the passed intervals in
/// 32 bits, saturating (2^32 excluded readings are 6.8 years of exclusions at
/// 20 Hz). The possible samples are not stored: they are the intervals times
/// the samples per interval, which every interval of a station shares (the
/// layout's); both sit in one 64-bit `span` (intervals in the low 39 bits,
/// samples per interval in the high 25), so that a channel's recovery stays
/// 88 bytes with the excluded counts in it. The month key sits here too.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct SinceStart {
    valid: u64,
    missing: u64,
    out_of_range: u64,
    flagged: u64,
    /// Intervals (low [`INTERVAL_BITS`] bits, saturating) and samples per
    /// interval at the nominal rate, as last given (the bits above).
    span: u64,
    rejected: u32,
    excluded: u32,
    passed: u32,
    /// `year * 12 + month - 1` of the month [`Recovery::this_month`] counts,
    /// plus 1; 0 before any.
    month_key: u32,
}

impl SinceStart {
    const ZERO: SinceStart = SinceStart {
        valid: 0,
        missing: 0,
        out_of_range: 0,
        flagged: 0,
        span: 0,
        rejected: 0,
        excluded: 0,
        passed: 0,
        month_key: 0,
    };

    const fn intervals(&self) -> u64 {
        self.span & INTERVAL_MASK
    }

    const fn samples(&self) -> u32 {
        (self.span >> INTERVAL_BITS) as u32
    }

    /// Sets the samples per interval and adds `n` intervals (saturating).
    fn add_intervals(&mut self, samples: u32, n: u64) {
        let i = self.intervals().saturating_add(n).min(INTERVAL_MASK);
        let s = u64::from(samples.min(SAMPLES_MAX));
        self.span = s << INTERVAL_BITS | i;
    }

    fn add(&mut self, samples: u32, t: &Tally, passed: bool) {
        self.add_intervals(samples, 1);
        self.passed = self.passed.saturating_add(u32::from(passed));
        self.valid += u64::from(t.valid);
        self.missing += u64::from(t.missing);
        self.out_of_range += u64::from(t.out_of_range);
        self.flagged += u64::from(t.flagged);
        self.rejected = self.rejected.saturating_add(t.rejected);
        self.excluded = self.excluded.saturating_add(t.excluded);
    }

    const fn totals(&self) -> Totals {
        Totals {
            possible: self.intervals() * self.samples() as u64,
            valid: self.valid,
            missing: self.missing,
            out_of_range: self.out_of_range,
            rejected: self.rejected as u64,
            flagged: self.flagged,
            excluded: self.excluded as u64,
            intervals: self.intervals(),
            passed: self.passed as u64,
        }
    }
}

/// Running recovery of one channel: totals since start and for the month of
/// the latest interval (88 bytes).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Recovery {
    since: SinceStart,
    month_totals: MonthTotals,
}

impl Recovery {
    /// Nothing counted yet.
    pub const fn new() -> Self {
        Recovery {
            since: SinceStart::ZERO,
            month_totals: MonthTotals::ZERO,
        }
    }

    /// Since the first interval. The samples rejected for their timestamp,
    /// the excluded readings and the passed intervals saturate at `u32::MAX`,
    /// the intervals at 2^39 - 1.
    pub const fn since_start(&self) -> Totals {
        self.since.totals()
    }

    /// For the calendar month of the latest interval ([`Recovery::month`]).
    pub const fn this_month(&self) -> Totals {
        self.month_totals.totals(self.since.samples())
    }

    /// The month [`Recovery::this_month`] counts, if any interval was added.
    pub const fn month(&self) -> Option<Month> {
        match self.since.month_key {
            0 => None,
            k => {
                let k = k - 1;
                Some(Month {
                    year: (k / 12) as i32,
                    month: (k % 12) as u8 + 1,
                })
            }
        }
    }

    fn enter_month(&mut self, m: Month) {
        // Supported years are 0 to 9999 (crate::Timestamp).
        let key = (m.year.max(0) as u32) * 12 + u32::from(m.month.saturating_sub(1)) + 1;
        if self.since.month_key != key {
            self.since.month_key = key;
            self.month_totals = MonthTotals::ZERO;
        }
    }

    /// Adds a closed interval starting at `start`; `passed` if it passed screening.
    pub fn add_interval(&mut self, start: Timestamp, possible: u32, t: &Tally, passed: bool) {
        self.add_interval_in(start.month(), possible, t, passed);
    }

    /// [`Recovery::add_interval`] for a caller that already knows the month of
    /// the interval (splitting a timestamp into a date costs 64-bit divisions).
    ///
    /// `possible` is the samples per interval at the nominal rate, the same
    /// for every interval of a station (its layout's): the recovery keeps one
    /// value, the latest given, and counts possible samples as intervals times
    /// that value.
    pub fn add_interval_in(&mut self, month: Month, possible: u32, t: &Tally, passed: bool) {
        self.since.add(possible, t, passed);
        self.enter_month(month);
        self.month_totals.add(t, passed);
    }

    /// Adds `count` intervals with no samples at all, the first starting at
    /// `first`, each `interval_ms` long. Constant time, however long the gap.
    pub fn add_gap(&mut self, first: Timestamp, count: u64, interval_ms: i64, possible: u32) {
        if count == 0 {
            return;
        }
        self.since.add_intervals(possible, count);
        let last = first.millis() + (count as i64 - 1) * interval_ms;
        let month = Timestamp::from_millis(last).month();
        let from = first.millis().max(month.start().millis());
        // `checked_div`: `interval_ms` is a validated, positive interval, so
        // this is the plain division, without a panic path.
        let in_month = ((last - from).checked_div(interval_ms).unwrap_or(0) + 1) as u64;
        self.enter_month(month);
        self.month_totals.add_empty(in_month);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::time::Civil;

    fn at(year: i32, month: u8, day: u8, hour: u8) -> Timestamp {
        Timestamp::from_civil(Civil {
            year,
            month,
            day,
            hour,
            minute: 0,
            second: 0,
            milli: 0,
        })
        .unwrap()
    }

    #[test]
    fn gap_across_months_counts_only_the_latest_month_for_this_month() {
        let mut r = Recovery::new();
        let tally = Tally {
            valid: 600,
            ..Tally::default()
        };
        r.add_interval(at(2024, 1, 31, 23), 600, &tally, true);
        // From 2024-01-31 23:10 to 2024-02-01 00:50: 5 intervals in January, 6 in February.
        let first = Timestamp::from_millis(at(2024, 1, 31, 23).millis() + 600_000);
        r.add_gap(first, 11, 600_000, 600);
        assert_eq!(r.since_start().possible, 12 * 600);
        assert_eq!(r.this_month().possible, 6 * 600);
        assert_eq!(r.month().unwrap().month, 2);
        r.add_interval(at(2024, 2, 1, 1), 600, &tally, false);
        assert_eq!(r.this_month().possible, 7 * 600);
        assert_eq!(r.this_month().valid, 600);
    }

    #[test]
    fn rates() {
        // 540 of 600 is 0.90 (the usual target, EPA-454/R-99-005 sec. 5.3.2); 539 falls short.
        let t = Totals {
            possible: 600,
            valid: 540,
            ..Totals::default()
        };
        assert_eq!(t.rate(), Some(0.9));
        let t = Totals {
            possible: 600,
            valid: 539,
            ..Totals::default()
        };
        assert!(t.rate().unwrap() < 0.9);
        assert_eq!(Totals::default().rate(), None);
    }
}
