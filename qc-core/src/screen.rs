//! Screening: tests that flag samples and intervals for review.
//!
//! Screening never deletes or alters a valid sample: flags only mark an interval
//! of a channel for review ("flag, do not delete": US EPA-454/R-99-005 sec. 8;
//! NREL/SR-440-22223 ch. 9). The only sample-level exclusion is the hard range
//! test of each channel, whose failures are counted `out_of_range`.
//!
//! | flag | test | where | state |
//! |---|---|---|---|
//! | `spike` | change between consecutive valid samples above `step_limit` | per sample, in the interval | 16 bytes a channel |
//! | `implausible` | an implausible interval statistic: mean, sd (sigma-theta) or gust outside plausible limits (`mean_range`, `sd_range`, `gust_max`; printed `range` before) | per interval | none |
//! | `low_recovery` | valid / possible below `min_recovery` | per interval | none |
//! | `partial` | the record does not cover the whole interval | per interval | none |
//! | `clock` | samples rejected for their timestamps | per interval | none |
//! | `flatline` | no movement within `flat_tolerance` for at least `flat_span_s` | across intervals | 40 bytes a channel |
//! | `pair_mismatch` | redundant anemometers' means or maxima differ beyond limits | across channels | none |
//! | `shear` | a lower anemometer's mean exceeds the higher one's by more than `shear_tolerance` | across channels | none |
//! | `icing` | cold and humid while a vane is still or an anemometer falls behind its partner | across channels | none |
//!
//! Multi-interval tests keep fixed state and never buffer past intervals, so a
//! flat-line is flagged from the interval in which its span is reached onward;
//! the intervals before it in the same run are not flagged again later.

pub use crate::channel::{Icing, Screen};
pub use crate::spike::Spikes;

use crate::channel::{Channel, ChannelRecord, Kind, Stat};
use crate::flags::{Flag, Flags};

/// Whether a value lies outside an optional inclusive range.
fn outside(v: Stat, range: Option<(f64, f64)>) -> bool {
    match (v.value(), range) {
        (Some(v), Some((lo, hi))) => v < lo || v > hi,
        _ => false,
    }
}

/// Flags one channel's record by its own interval tests: implausible, low recovery,
/// spike, partial and clock.
pub(crate) fn interval_flags(r: &ChannelRecord, s: &Screen, spikes: u32) -> Flags {
    let mut f = Flags::EMPTY;
    let t = r.tally;
    if t.held() < u64::from(r.n_possible) {
        f.insert(Flag::Partial);
    }
    if t.rejected > 0 {
        f.insert(Flag::Clock);
    }
    if t.excluded > 0 {
        f.insert(Flag::Excluded);
    }
    if spikes > 0 {
        f.insert(Flag::Spike);
    }
    if let Some(min) = s.min_recovery {
        if r.n_possible > 0 && f64::from(t.valid) < min * f64::from(r.n_possible) {
            f.insert(Flag::LowRecovery);
        }
    }
    let mean_range = if r.kind == Kind::Direction {
        None
    } else {
        s.mean_range
    };
    let gust_high = match (r.gust.value(), s.gust_max) {
        (Some(g), Some(max)) => g >= max,
        _ => false,
    };
    if outside(r.mean, mean_range) || outside(r.sd, s.sd_range) || gust_high {
        f.insert(Flag::Implausible);
    }
    f
}

/// Flat-line state of one channel across intervals.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Flat {
    /// Lowest and highest value (or angle offset from `reference`) in the run.
    lo: f64,
    hi: f64,
    reference: f64,
    /// Intervals in the current run (0: no run), saturating.
    len: u32,
}

impl Flat {
    /// Feeds the next interval; `continues` when it directly follows the one
    /// fed before (the [`Screener`] feeds every channel every interval, so it
    /// keeps that index once for all). Returns whether the run now spans the
    /// flat-line time.
    fn feed(&mut self, continues: bool, r: &ChannelRecord, s: &Screen, interval_ms: i64) -> bool {
        let Some(span_s) = s.flat_span_s else {
            return false;
        };
        let tol = s.flat_tolerance;
        let (lo, hi) = match r.kind {
            Kind::Direction => match (r.mean.value(), r.sd.value()) {
                (Some(m), Some(sd)) if sd <= tol => {
                    let continuing = self.len > 0 && continues;
                    let d = if continuing {
                        wrap180(m - self.reference)
                    } else {
                        0.0
                    };
                    (d, d)
                }
                _ => {
                    self.len = 0;
                    return false;
                }
            },
            _ => match (r.min.value(), r.max.value()) {
                (Some(a), Some(b)) if b - a <= tol => (a, b),
                _ => {
                    self.len = 0;
                    return false;
                }
            },
        };
        // Plain comparisons (no NaN here: statistics are never NaN); `f64::min`
        // and `max` are library calls on a core without an FPU.
        let new_lo = if lo < self.lo { lo } else { self.lo };
        let new_hi = if hi > self.hi { hi } else { self.hi };
        if self.len > 0 && continues && new_hi - new_lo <= tol {
            self.lo = new_lo;
            self.hi = new_hi;
            self.len = self.len.saturating_add(1);
        } else {
            if r.kind == Kind::Direction {
                // Restart the run with this interval's mean as the reference.
                self.reference = r.mean.value().unwrap_or(0.0);
                self.lo = 0.0;
                self.hi = 0.0;
            } else {
                self.lo = lo;
                self.hi = hi;
            }
            self.len = 1;
        }
        i64::from(self.len).saturating_mul(interval_ms) >= i64::from(span_s) * 1000
    }
}

/// Angle difference folded into (-180, 180]. Both angles are mean directions
/// in [0, 360), so `d` is within one turn and one add or subtract folds it
/// (no `fmod`, 1.6 KB of flash on a Cortex-M0).
fn wrap180(d: f64) -> f64 {
    let mut x = d;
    if x > 180.0 {
        x -= 360.0;
    } else if x <= -180.0 {
        x += 360.0;
    }
    x
}

/// Cross-interval and cross-channel screening of a station: the flat-line
/// state of each channel. Feed it every closed interval in time order.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Screener<const C: usize> {
    flat: [Flat; C],
    /// Index of the interval screened last (`i64::MIN` before the first).
    last: i64,
}

impl<const C: usize> Default for Screener<C> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const C: usize> Screener<C> {
    /// No history.
    pub const fn new() -> Self {
        Screener {
            flat: [Flat {
                lo: 0.0,
                hi: 0.0,
                reference: 0.0,
                len: 0,
            }; C],
            last: i64::MIN,
        }
    }

    /// Adds the cross-interval and cross-channel flags to the records of
    /// interval `index`, whose own flags are already set.
    pub fn screen(
        &mut self,
        index: i64,
        interval_ms: i64,
        channels: &[Channel; C],
        records: &mut [ChannelRecord; C],
    ) {
        let continues = self.last != i64::MIN && self.last.checked_add(1) == Some(index);
        self.last = index;
        for i in 0..C {
            if self.flat[i].feed(
                continues,
                &records[i],
                &channels[i].config().screen,
                interval_ms,
            ) {
                records[i].flags.insert(Flag::Flatline);
            }
        }
        let mean = |r: &ChannelRecord| r.mean.value();
        for i in 0..C {
            let s = &channels[i].config().screen;
            if records[i].kind == Kind::Speed {
                if let Some(p) = s.partner.map(usize::from).filter(|&p| p < C && p != i) {
                    let dm = diff(mean(&records[i]), mean(&records[p]));
                    let dx = diff(records[i].max.value(), records[p].max.value());
                    if dm.is_some_and(|d| d > s.pair_mean_diff)
                        || dx.is_some_and(|d| d > s.pair_max_diff)
                    {
                        records[i].flags.insert(Flag::PairMismatch);
                        records[p].flags.insert(Flag::PairMismatch);
                    }
                }
                if let Some(h) = s.above.map(usize::from).filter(|&h| h < C && h != i) {
                    if let (Some(lo), Some(hi)) = (mean(&records[i]), mean(&records[h])) {
                        if lo - hi > s.shear_tolerance {
                            records[i].flags.insert(Flag::Shear);
                        }
                    }
                }
            }
            if let Some(ice) = s.icing {
                let (t, h) = (usize::from(ice.temperature), usize::from(ice.humidity));
                let cold_humid = match (
                    records.get(t).and_then(|r| r.mean.value()),
                    records.get(h).and_then(|r| r.mean.value()),
                ) {
                    (Some(t), Some(h)) => t <= ice.max_temperature && h >= ice.min_humidity,
                    _ => false,
                };
                let symptom = match records[i].kind {
                    Kind::Direction => {
                        records[i].flags.contains(Flag::Flatline)
                            || records[i]
                                .sd
                                .value()
                                .is_some_and(|sd| sd <= s.flat_tolerance)
                    }
                    Kind::Speed => s
                        .partner
                        .map(usize::from)
                        .filter(|&p| p < C)
                        .is_some_and(|p| {
                            matches!((mean(&records[i]), mean(&records[p])),
                            (Some(a), Some(b)) if b - a > s.pair_mean_diff)
                        }),
                    Kind::Scalar => false,
                };
                if cold_humid && symptom {
                    records[i].flags.insert(Flag::Icing);
                }
            }
        }
    }
}

fn diff(a: Option<f64>, b: Option<f64>) -> Option<f64> {
    Some(libm::fabs(a? - b?))
}

/// Whether an interval with these flags passes screening: it has valid samples
/// and no flag other than the record-coverage flags `partial`, `clock`,
/// `sensor_change` (a change of sensor-history entry, not a fault) and
/// `excluded` (what is left after an exclusion is judged by the other tests:
/// `low_recovery` catches an interval with too few valid samples left).
pub fn passes(r: &ChannelRecord) -> bool {
    r.tally.valid > 0
        && r.flags.iter().all(|f| {
            matches!(
                f,
                Flag::Partial | Flag::Clock | Flag::Excluded | Flag::SensorChange
            )
        })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{ChannelConfig, Event, Layout, Reading, Station, StationConfig, Timestamp};

    const T0: i64 = 1_704_067_200_000; // 2024-01-01T00:00:00Z

    /// A 10-minute station at 0.1 Hz (60 samples an interval):
    /// 0 top anemometer A, 1 top anemometer B (partner of A), 2 lower anemometer
    /// (below A), 3 vane, 4 temperature, 5 humidity.
    fn layout() -> Layout<6> {
        let mut cfg = StationConfig::ten_minute_1hz();
        cfg.samples_per_interval = 60;
        let mut top = Screen::for_kind(Kind::Speed);
        top.partner = Some(1);
        top.icing = Some(Icing::new(4, 5));
        let mut low = Screen::for_kind(Kind::Speed);
        low.above = Some(0);
        let mut vane = Screen::for_kind(Kind::Direction);
        vane.icing = Some(Icing::new(4, 5));
        Layout::new::<3>(
            cfg,
            &[
                ChannelConfig::speed(0.01).with_screen(top),
                ChannelConfig::speed(0.01),
                ChannelConfig::speed(0.01).with_screen(low),
                ChannelConfig::direction().with_screen(vane),
                ChannelConfig::scalar(0.01).with_range(-60.0, 60.0),
                ChannelConfig::scalar(0.1).with_range(0.0, 100.0),
            ],
        )
        .unwrap()
    }

    /// Runs `intervals` intervals; `f(interval, sample)` gives the six readings.
    /// Returns the flags of every channel of every interval.
    fn run(intervals: i64, f: impl Fn(i64, i64) -> [f64; 6]) -> std::vec::Vec<[Flags; 6]> {
        let layout = layout();
        let mut st: Station<6, 3> = Station::new(layout);
        let mut out = std::vec::Vec::new();
        let mut emit = |e: Event<'_, 6, 3>| {
            if let Event::Closed(acc, records) = e {
                // The records handed out are the finished, screened ones.
                for (c, r) in records.iter().enumerate() {
                    assert_eq!(layout.finish(acc, c).as_ref(), Some(r));
                }
                out.push(records.map(|r| r.flags));
            }
        };
        for k in 0..intervals {
            for i in 0..60 {
                let v = f(k, i);
                let t = Timestamp::from_millis(T0 + k * 600_000 + i * 10_000);
                st.push(t, &v.map(Reading::Value), &mut emit);
            }
        }
        st.close(&mut emit);
        out
    }

    /// Steady, clean weather: 8 m/s with small turbulence, vane swinging about 270.
    fn clean(k: i64, i: i64) -> [f64; 6] {
        let wiggle = ((i * 7 + k * 3) % 11) as f64 / 10.0 - 0.5;
        let dir = 270.0 + 8.0 * (((i * 5 + k) % 13) as f64 - 6.0);
        [8.0 + wiggle, 8.05 + wiggle, 7.2 + wiggle, dir, 12.0, 60.0]
    }

    fn count(flags: &[[Flags; 6]], ch: usize, f: Flag) -> usize {
        flags.iter().filter(|x| x[ch].contains(f)).count()
    }

    #[test]
    fn clean_weather_raises_no_flags() {
        let flags = run(36, clean);
        for (k, row) in flags.iter().enumerate() {
            for (c, f) in row.iter().enumerate() {
                assert!(f.is_empty(), "interval {k} channel {c}: {f}");
            }
        }
    }

    #[test]
    fn spike_fires_on_a_jump_above_the_step_limit_only() {
        // Step limit 10 m/s between samples (common practice default).
        let over = run(2, |k, i| {
            let mut v = clean(k, i);
            if k == 1 && i == 30 {
                v[0] += 10.6;
            }
            v
        });
        assert!(over[1][0].contains(Flag::Spike));
        assert!(!over[0][0].contains(Flag::Spike));
        let under = run(2, |k, i| {
            let mut v = clean(k, i);
            if k == 1 && i == 30 {
                v[0] += 9.0;
            }
            v
        });
        assert!(!under[1][0].contains(Flag::Spike));
    }

    #[test]
    fn range_uses_the_published_limits() {
        // NREL/SR-440-22223 tables 9.1-9.3: mean speed <= 25 m/s, gust < 30 m/s.
        let mean_at = |m: f64| {
            run(1, move |k, i| {
                let mut v = clean(k, i);
                v[0] = m;
                v[1] = m;
                v
            })
        };
        assert!(!mean_at(25.0)[0][0].contains(Flag::Implausible));
        assert!(mean_at(25.01)[0][0].contains(Flag::Implausible));
        // Direction sigma-theta 3 to 75 degrees (same tables): a vane steady to
        // within +/-1 degree is flagged, the clean swinging vane is not.
        let steady = run(1, |k, i| {
            let mut v = clean(k, i);
            v[3] = if i % 2 == 0 { 269.0 } else { 271.0 };
            v
        });
        assert!(steady[0][3].contains(Flag::Implausible));
        assert!(!run(1, clean)[0][3].contains(Flag::Implausible));
    }

    #[test]
    fn flatline_needs_the_whole_span() {
        // EPA-454/R-99-005 sec. 8: speed varying <= 0.1 m/s over 3 hours.
        let stuck_from = |start: i64, var: f64| {
            run(30, move |k, i| {
                let mut v = clean(k, i);
                if k >= start {
                    v[2] = 4.0 + if i % 2 == 0 { var } else { 0.0 };
                }
                v
            })
        };
        let f = stuck_from(10, 0.1);
        // 18 intervals make 3 hours: flagged from interval 10 + 17 on.
        assert_eq!(count(&f, 2, Flag::Flatline), 30 - 27);
        assert!(f[27][2].contains(Flag::Flatline) && !f[26][2].contains(Flag::Flatline));
        // Varying by 0.11 m/s is movement.
        assert_eq!(count(&stuck_from(10, 0.11), 2, Flag::Flatline), 0);
        // 2 h 50 min of flat-line is not enough.
        assert_eq!(count(&stuck_from(13, 0.0), 2, Flag::Flatline), 0);
    }

    #[test]
    fn pair_mismatch_at_the_published_limits() {
        // NREL relational test: redundant anemometers differ by <= 0.5 m/s in mean.
        let offset = |d: f64| {
            run(1, move |k, i| {
                let mut v = clean(k, i);
                v[1] = v[0] + d;
                v
            })
        };
        assert!(!offset(0.5)[0][0].contains(Flag::PairMismatch));
        let f = offset(0.51);
        assert!(f[0][0].contains(Flag::PairMismatch) && f[0][1].contains(Flag::PairMismatch));
    }

    #[test]
    fn shear_fires_when_the_lower_anemometer_reads_faster() {
        let f = run(1, |k, i| {
            let mut v = clean(k, i);
            v[2] = v[0] + 0.6;
            v
        });
        assert!(f[0][2].contains(Flag::Shear));
        assert!(!run(1, clean)[0][2].contains(Flag::Shear));
    }

    #[test]
    fn icing_needs_cold_humid_air_and_a_symptom() {
        let scenario = |temp: f64, rh: f64, stuck: bool| {
            run(1, move |k, i| {
                let mut v = clean(k, i);
                v[4] = temp;
                v[5] = rh;
                if stuck {
                    v[3] = 123.0;
                }
                v
            })[0]
        };
        assert!(scenario(-1.0, 95.0, true)[3].contains(Flag::Icing));
        assert!(!scenario(-1.0, 95.0, false)[3].contains(Flag::Icing));
        assert!(!scenario(5.0, 95.0, true)[3].contains(Flag::Icing));
        assert!(!scenario(-1.0, 70.0, true)[3].contains(Flag::Icing));
        // An iced top anemometer falls behind its heated partner.
        let slow = run(1, |k, i| {
            let mut v = clean(k, i);
            v[0] -= 1.5;
            v[4] = -2.0;
            v[5] = 92.0;
            v
        });
        assert!(slow[0][0].contains(Flag::Icing));
    }

    #[test]
    fn low_recovery_partial_and_clock() {
        let layout = layout();
        let mut st: Station<6, 3> = Station::new(layout);
        let mut got = std::vec::Vec::new();
        let mut emit = |e: Event<'_, 6, 3>| {
            if let Event::Closed(acc, _) = e {
                got.push(layout.finish(acc, 0).unwrap());
            }
        };
        // 54 of 60 samples (0.90, passes), then 53 (fails), then a duplicate timestamp.
        for (k, n) in [(0i64, 54i64), (1, 53), (2, 60)] {
            for i in 0..n {
                let t = Timestamp::from_millis(T0 + k * 600_000 + i * 10_000);
                st.push(t, &clean(k, i).map(Reading::Value), &mut emit);
                if k == 2 && i == 5 {
                    st.push(t, &clean(k, i).map(Reading::Value), &mut emit);
                }
            }
        }
        st.close(&mut emit);
        assert_eq!(got[0].flags.bits(), {
            let mut f = Flags::EMPTY;
            f.insert(Flag::Partial);
            f.bits()
        });
        assert!(got[1].flags.contains(Flag::LowRecovery) && got[1].flags.contains(Flag::Partial));
        assert!(got[2].flags.contains(Flag::Clock) && !got[2].flags.contains(Flag::Partial));
        // Recovery twice: samples, and intervals that pass screening.
        let rec = st.recovery()[0].since_start();
        assert_eq!((rec.valid, rec.possible), (54 + 53 + 60, 180));
        assert_eq!((rec.passed, rec.intervals), (2, 3));
    }

    #[test]
    fn spike_counts_merge_exactly_across_any_cut() {
        let layout = layout();
        let samples: std::vec::Vec<(i64, [f64; 6])> = (0..60)
            .map(|i| {
                let mut v = clean(0, i);
                if i % 9 == 4 {
                    v[0] += 12.0;
                    v[3] += 180.0;
                }
                if i % 17 == 3 {
                    v[0] = f64::NAN;
                }
                (T0 + i * 10_000 + if i > 40 { 20_000 } else { 0 }, v)
            })
            .collect();
        let mut whole = crate::IntervalAcc::<6, 3>::new(&layout, T0 / 600_000);
        for (t, v) in &samples {
            whole.push(&layout, Timestamp::from_millis(*t), &v.map(Reading::Value));
        }
        for cut in 0..=samples.len() {
            let mut a = crate::IntervalAcc::<6, 3>::new(&layout, T0 / 600_000);
            let mut b = a;
            for (t, v) in &samples[..cut] {
                a.push(&layout, Timestamp::from_millis(*t), &v.map(Reading::Value));
            }
            for (t, v) in &samples[cut..] {
                b.push(&layout, Timestamp::from_millis(*t), &v.map(Reading::Value));
            }
            a.merge(&layout, &b);
            for c in 0..6 {
                assert_eq!(
                    layout.finish(&a, c).unwrap().spikes,
                    layout.finish(&whole, c).unwrap().spikes,
                    "cut {cut} channel {c}"
                );
            }
        }
        assert!(layout.finish(&whole, 0).unwrap().spikes > 0);
    }
}
