//! Other loggers' conventions, computed from the core's exact interval state.
//!
//! A logger whose firmware is not this core writes its own 10-minute table:
//! a standard deviation with divisor N or N-1, a gust that is the largest
//! sample or the largest running mean, a direction averaged as unit vectors or
//! weighted by speed, a sigma-theta by one estimator or another, each value
//! rounded to a few decimals. This module computes every alternative that the
//! exact state of an interval ([`ChannelState`], from
//! [`crate::IntervalAcc::state`]) supports, beside [`crate::Layout::finish`],
//! each as an [`Estimate`]: the value, and a bound on its distance from the
//! exact statistic of the samples the core classified. It also says whether a
//! number written with `d` decimals is that statistic rounded under a rule
//! ([`Estimate::accepts`]).
//!
//! Nothing here is linked into a logger that does not call it: the firmware
//! finishes with [`crate::Layout::finish`] only.
//!
//! # What the exact state supports
//!
//! | statistic | alternatives | exact? |
//! |---|---|---|
//! | mean (speed, scalar) | arithmetic | a ratio of integers when the channel's values are `q / k` (a resolution such as 0.01, no calibration offset) |
//! | sd (speed, scalar) | divisor N, divisor N-1 | `f64` from the exact integer variance numerator, bound 8 ulps |
//! | min | smallest sample | ratio |
//! | max, gust | largest sample; largest running mean over the channel's gust window | ratio |
//! | direction mean | unit-vector mean; speed-weighted (resultant) mean | bound from the unit-vector tables (`2^-29` per vector) |
//! | direction spread | Yamartino's sigma-theta; circular sd `sqrt(-2 ln R)`; angular deviation `sqrt(2 (1 - R))` | bound from the tables, through `R` |
//!
//! And what it does not, with the reason:
//! - the smallest running mean (a "min of running means"): the state holds
//!   the largest gust-window sum only, not the smallest;
//! - a running mean over any window but the channel's `gust_window`, or means
//!   over consecutive non-overlapping blocks: the state holds the best sum of
//!   one window length, and a block mean needs the block boundaries;
//! - an arithmetic direction mean or spread with a wrap rule, or a sequential
//!   estimator (each sample unwrapped against the previous one): they depend on
//!   the order and the raw angles, and the state holds only the sums of unit
//!   vectors, which forget both;
//! - a median or percentiles: the state holds no distribution.
//!
//! # Bounds
//!
//! A ratio is exact: its rounding is decided in integers, ties included. An
//! `f64` value carries a bound that covers its floating-point error and, for
//! directions, the unit-vector tables (each Q30 vector within `2^-29` of the
//! true one, [`crate::direction`]): the mean direction moves by at most
//! `asin(2^-29 / R)`, and each spread estimator, a monotonic function of the
//! mean resultant length `R`, lies between its values at `R - 2^-29` and
//! `R + 2^-29`. A written value within the bound of a rounding boundary is
//! accepted as either neighbour under any rule.
//!
//! Directions are those of the samples at 0.01 degree, as the core classifies
//! them; a logger that averaged finer readings can differ by that rounding.

use crate::channel::{ChannelState, Kind, StateForm};
use crate::direction::{yamartino_deg, MIN_RESULTANT};
use crate::moments::variance;
use crate::station::Layout;

/// The standard deviation's divisor.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Divisor {
    /// N: the population sd (what [`crate::Layout::finish`] reports).
    N,
    /// N-1: the sample sd (Bessel's correction); needs 2 samples.
    NMinus1,
}

/// What a maximum or gust is the largest of.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Largest {
    /// The largest single sample.
    Sample,
    /// The largest running mean over the channel's gust window (the core's gust).
    RunningMean,
}

/// How the mean direction is formed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum DirectionMean {
    /// `atan2(sum sin, sum cos)` of unit vectors (EPA-454/R-99-005, 6.2.2).
    UnitVector,
    /// The direction of the speed-weighted resultant vector (EPA-454/R-99-005,
    /// 6.2.2); needs a linked speed channel.
    SpeedWeighted,
}

/// How the spread of direction is formed from the mean resultant length `R`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Spread {
    /// Yamartino's sigma-theta (Yamartino 1984; EPA-454/R-99-005, 6.2.1).
    Yamartino,
    /// The circular standard deviation `sqrt(-2 ln R)` (Mardia and Jupp 2000,
    /// 2.3.11; `scipy.stats.circstd`).
    Circular,
    /// The angular deviation `sqrt(2 (1 - R))` (Batschelet 1981; Zar,
    /// Biostatistical Analysis, 26.5).
    Angular,
}

/// A statistic of one channel and interval, in one convention.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Statistic {
    /// Arithmetic mean (speed, scalar).
    Mean,
    /// Standard deviation (speed, scalar).
    Sd(Divisor),
    /// Smallest sample (speed, scalar).
    Min,
    /// Largest sample or running mean (speed, scalar; a running mean on speed only).
    Max(Largest),
    /// Mean direction.
    Direction(DirectionMean),
    /// Spread of direction, degrees.
    Spread(Spread),
}

/// How a logger rounds to its decimals.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Rounding {
    /// To nearest, ties to even (IEEE 754's default; numpy's `round`).
    HalfEven,
    /// To nearest, ties away from zero (the schoolbook rule).
    HalfAway,
    /// Toward zero (digits cut off).
    Truncate,
    /// Not known: any value within half a unit of the last decimal (plus the
    /// estimate's bound) is accepted.
    Unknown,
}

impl Rounding {
    /// Every rule, in the order inference tries them.
    pub const ALL: [Rounding; 4] = [
        Rounding::HalfEven,
        Rounding::HalfAway,
        Rounding::Truncate,
        Rounding::Unknown,
    ];
}

/// How north is written after rounding a direction.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum North {
    /// As 0 (directions in `[0, 360)`; a mean that rounds to 360 is written 0).
    Zero,
    /// As 360 (directions in `(0, 360]`; a mean that rounds to 0 is written 360).
    Full,
}

/// Most decimals a convention may declare.
pub const MAX_DECIMALS: u8 = 6;

const EPS: f64 = f64::EPSILON / 2.0;

/// Per-vector error of the Q30 unit-vector tables ([`crate::direction`]).
const TABLE_ERR: f64 = 1.0 / (1u64 << 29) as f64;

/// A statistic: its value in `f64`, a bound on the distance to the exact
/// statistic, and the exact ratio when there is one.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Estimate {
    /// The value, as an `f64` (for [`Statistic::Mean`], `Sd(N)`, `Min`, `Max`,
    /// unit-vector direction and Yamartino spread the same bits as
    /// [`crate::Layout::finish`]).
    pub value: f64,
    /// `|exact - value| <= bound` (0 for an exact ratio).
    pub bound: f64,
    /// `value = num / den` exactly, `den > 0`.
    ratio: Option<(i128, i128)>,
}

impl Estimate {
    fn ratio(num: i128, den: i128, value: f64) -> Estimate {
        Estimate {
            value,
            bound: 0.0,
            ratio: (den > 0).then_some((num, den)),
        }
    }

    fn approx(value: f64, bound: f64) -> Estimate {
        Estimate {
            value,
            bound,
            ratio: None,
        }
    }

    /// Whether the value is an exact ratio of integers.
    pub const fn is_exact(&self) -> bool {
        self.ratio.is_some()
    }

    /// `written` as a whole number of units of its last decimal (`decimals`
    /// of them), or `None` when it has more decimals than that.
    pub fn units(written: f64, decimals: u8) -> Option<i64> {
        let s = pow10(decimals);
        let w = written * s;
        let k = libm::round(w);
        let ok = w.is_finite()
            && libm::fabs(k) < 9.0e15
            && libm::fabs(w - k) <= 1e-6 + 4.0 * EPS * libm::fabs(w);
        ok.then_some(k as i64)
    }

    /// The whole numbers of units of `10^-decimals` that this statistic
    /// rounds to under `rule`: every `k` from the first to the second.
    /// `None` when the range is too wide to say (an estimate that is not
    /// finite).
    pub fn rounds_to(&self, decimals: u8, rule: Rounding) -> Option<(i64, i64)> {
        let d = decimals.min(MAX_DECIMALS);
        if let Some((num, den)) = self.ratio {
            let scale = pow10_i(d);
            if let Some(m) = num.checked_mul(scale) {
                let q = m.div_euclid(den);
                let r = m.rem_euclid(den); // 0 <= r < den
                let (lo, hi) = match rule {
                    Rounding::HalfEven => {
                        let up = 2 * r > den || (2 * r == den && q.rem_euclid(2) == 1);
                        let k = if up { q + 1 } else { q };
                        (k, k)
                    }
                    Rounding::HalfAway => {
                        let up = 2 * r > den || (2 * r == den && m >= 0);
                        let k = if up { q + 1 } else { q };
                        (k, k)
                    }
                    Rounding::Truncate => {
                        let k = if m < 0 && r != 0 { q + 1 } else { q };
                        (k, k)
                    }
                    Rounding::Unknown => {
                        let lo = if 2 * r <= den { q } else { q + 1 };
                        let hi = if 2 * r >= den { q + 1 } else { q };
                        (lo, hi)
                    }
                };
                return Some((lo as i64, hi as i64));
            }
        }
        let s = pow10(d);
        let a = (self.value - self.bound) * s;
        let b = (self.value + self.bound) * s;
        // The products and the sums each round once.
        let slack = 4.0 * EPS * (libm::fabs(a) + libm::fabs(b)) + 4.0 * EPS * s * self.bound;
        let (a, b) = (a - slack, b + slack);
        if !(a.is_finite() && b.is_finite()) || libm::fabs(a) > 9.0e15 || libm::fabs(b) > 9.0e15 {
            return None;
        }
        let (lo, hi) = match rule {
            Rounding::HalfEven => (libm::rint(a), libm::rint(b)),
            Rounding::HalfAway => (libm::round(a), libm::round(b)),
            Rounding::Truncate => (libm::trunc(a), libm::trunc(b)),
            Rounding::Unknown => (libm::ceil(a - 0.5), libm::floor(b + 0.5)),
        };
        Some((lo as i64, hi as i64))
    }

    /// Whether `written` (read from a table declaring `decimals` decimals) is
    /// this statistic rounded under `rule`. A value with more decimals than
    /// declared is never accepted.
    pub fn accepts(&self, written: f64, decimals: u8, rule: Rounding) -> bool {
        match (
            Self::units(written, decimals),
            self.rounds_to(decimals, rule),
        ) {
            (Some(k), Some((lo, hi))) => lo <= k && k <= hi,
            _ => false,
        }
    }

    /// As [`Estimate::accepts`], for a direction in degrees: the statistic
    /// (in `[0, 360)`) rounded and then written with north as `north`.
    pub fn accepts_direction(
        &self,
        written: f64,
        decimals: u8,
        rule: Rounding,
        north: North,
    ) -> bool {
        let (Some(k), Some((lo, hi))) = (
            Self::units(written, decimals),
            self.rounds_to(decimals, rule),
        ) else {
            return false;
        };
        let turn = 360 * pow10_i(decimals.min(MAX_DECIMALS)) as i64;
        if hi.saturating_sub(lo) >= turn {
            return (0..=turn).contains(&k);
        }
        (lo..=hi).any(|j| {
            let w = j.rem_euclid(turn);
            let shown = match north {
                North::Zero => w,
                North::Full if w == 0 => turn,
                North::Full => w,
            };
            shown == k
        })
    }

    /// `|written - value|`, in the statistic's unit; for a direction, the
    /// shorter way round the circle.
    pub fn difference(&self, written: f64, circular: bool) -> f64 {
        let d = libm::fabs(written - self.value);
        if circular {
            let d = libm::fmod(d, 360.0);
            d.min(360.0 - d)
        } else {
            d
        }
    }
}

fn pow10(d: u8) -> f64 {
    let mut s = 1.0;
    for _ in 0..d.min(MAX_DECIMALS) {
        s *= 10.0;
    }
    s
}

fn pow10_i(d: u8) -> i128 {
    let mut s = 1i128;
    for _ in 0..d.min(MAX_DECIMALS) {
        s *= 10;
    }
    s
}

/// `1 / step` when it is a whole number up to 2^20 (as the core's finish
/// uses it), so that values are `q / inv` exactly.
fn inverse(step: f64) -> Option<f64> {
    if step > 1.0 {
        return None;
    }
    let inv = libm::round(1.0 / step);
    (inv <= 1_048_576.0 && libm::fabs(inv * step - 1.0) < 1e-12).then_some(inv)
}

/// The statistics one channel's exact interval state supports, in every
/// convention ([`Alternatives::get`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Alternatives {
    kind: Kind,
    offset: f64,
    step: f64,
    inv: Option<f64>,
    /// Gust window in samples (0: none).
    window: u16,
    /// The linked speed channel's offset, step and largest `|value|`.
    speed: Option<(f64, f64, f64)>,
    state: ChannelState,
}

impl Alternatives {
    /// The alternatives of channel `ch` of `layout` for its interval state
    /// `state`; `None` when there is no such channel or the state is of
    /// another form.
    pub fn of<const C: usize>(
        layout: &Layout<C>,
        ch: usize,
        state: &ChannelState,
    ) -> Option<Alternatives> {
        let channel = layout.channels().get(ch)?;
        let cfg = channel.config();
        if StateForm::of(cfg) != state.form {
            return None;
        }
        let speed = cfg
            .speed_channel
            .and_then(|s| layout.channels().get(usize::from(s)))
            .map(|s| {
                let c = s.config();
                let umax = libm::fabs(c.range.0).max(libm::fabs(c.range.1));
                (c.scale.offset, c.scale.step, umax)
            });
        Some(Alternatives {
            kind: cfg.kind,
            offset: cfg.scale.offset,
            step: cfg.scale.step,
            inv: inverse(cfg.scale.step),
            window: if cfg.kind == Kind::Speed {
                cfg.gust_window
            } else {
                0
            },
            speed,
            state: *state,
        })
    }

    /// What the channel measures.
    pub const fn kind(&self) -> Kind {
        self.kind
    }

    /// Valid samples in the interval.
    pub const fn valid(&self) -> u32 {
        self.state.tally.valid
    }

    /// Whether `stat` applies to this channel's kind (and links).
    pub fn supports(&self, stat: Statistic) -> bool {
        match (self.kind, stat) {
            (Kind::Direction, Statistic::Direction(DirectionMean::SpeedWeighted)) => {
                self.speed.is_some()
            }
            (Kind::Direction, Statistic::Direction(_) | Statistic::Spread(_)) => true,
            (Kind::Direction, _) => false,
            (_, Statistic::Direction(_) | Statistic::Spread(_)) => false,
            (Kind::Speed, Statistic::Max(Largest::RunningMean)) => self.window > 0,
            (Kind::Scalar, Statistic::Max(Largest::RunningMean)) => false,
            _ => true,
        }
    }

    /// A value `q` quanta (or `num / den` quanta) in the channel's unit.
    fn quanta(&self, num: i128, den: i128) -> Estimate {
        // As the core's finish computes it (`Scale::ratio`).
        let scaled = match self.inv {
            Some(inv) => num as f64 / (den as f64 * inv),
            None => self.step * (num as f64 / den as f64),
        };
        let value = self.offset + scaled;
        match self.inv {
            Some(inv) if self.offset == 0.0 => Estimate::ratio(num, den * inv as i128, value),
            _ => {
                let bound =
                    8.0 * EPS * (libm::fabs(self.offset) + libm::fabs(scaled) + libm::fabs(value));
                Estimate::approx(value, bound)
            }
        }
    }

    /// `stat` in this interval; `None` when it has no value (no valid sample,
    /// one sample for `Sd(NMinus1)`, no full gust window, vectors that cancel,
    /// no speed-direction pairs) or does not apply ([`Alternatives::supports`]).
    pub fn get(&self, stat: Statistic) -> Option<Estimate> {
        if !self.supports(stat) {
            return None;
        }
        let n = self.state.tally.valid;
        if n == 0 {
            return None;
        }
        let m = &self.state.moments;
        match stat {
            Statistic::Mean => {
                let e = self.quanta(i128::from(m.sum()), i128::from(n));
                // The core's finish: offset + sum / (n * inv), or offset + step * (sum / n).
                Some(e)
            }
            Statistic::Min => Some(self.quanta(i128::from(m.min()), 1)),
            Statistic::Max(Largest::Sample) => Some(self.quanta(i128::from(m.max()), 1)),
            Statistic::Max(Largest::RunningMean) => {
                let best = self.state.gust_best?;
                Some(self.quanta(i128::from(best), i128::from(self.window)))
            }
            Statistic::Sd(div) => {
                let num = m.variance_numerator(n);
                let nf = f64::from(n);
                let value = match (div, self.inv) {
                    (Divisor::NMinus1, _) if n < 2 => return None,
                    // As the core's finish computes it.
                    (Divisor::N, Some(inv)) if n < 1 << 26 => libm::sqrt(num as f64) / (nf * inv),
                    (Divisor::N, Some(inv)) => libm::sqrt(variance(num, n)) / inv,
                    (Divisor::N, None) => self.step * libm::sqrt(variance(num, n)),
                    (Divisor::NMinus1, Some(inv)) => libm::sqrt(num as f64 / nf / (nf - 1.0)) / inv,
                    (Divisor::NMinus1, None) => {
                        self.step * libm::sqrt(num as f64 / nf / (nf - 1.0))
                    }
                };
                // num to f64, the divisions, the square root and the
                // scaling: each one rounding.
                Some(Estimate::approx(value, 8.0 * EPS * value))
            }
            Statistic::Direction(DirectionMean::UnitVector) => {
                let d = self.state.sums.finish(n)?;
                let mean = d.mean_deg?;
                let r = d.resultant_length;
                Some(Estimate::approx(
                    mean,
                    angle_bound(TABLE_ERR + 8.0 * EPS, r),
                ))
            }
            Statistic::Direction(DirectionMean::SpeedWeighted) => {
                let (offset, step, umax) = self.speed?;
                let v = self.state.resultant.finish(offset, step)?;
                let dir = v.direction_deg?;
                // Each term u (sin, cos): the table's error times |u| <= umax,
                // and the f64 sums of offset and step terms.
                let err = umax * TABLE_ERR + 8.0 * EPS * (libm::fabs(offset) + umax);
                Some(Estimate::approx(dir, angle_bound(err, v.speed)))
            }
            Statistic::Spread(method) => {
                let d = self.state.sums.finish(n)?;
                let r = d.resultant_length;
                let f = |r: f64| -> f64 {
                    match method {
                        Spread::Yamartino => yamartino_deg(r * r),
                        Spread::Circular => deg(libm::sqrt(-2.0 * libm::log(r))),
                        Spread::Angular => deg(libm::sqrt(2.0 * (1.0 - r))),
                    }
                };
                if method == Spread::Circular && r < MIN_RESULTANT {
                    return None;
                }
                let value = match method {
                    Spread::Yamartino => d.sigma_deg,
                    _ => f(r),
                };
                let dr = TABLE_ERR + 8.0 * EPS;
                let lo = (r - dr).max(if method == Spread::Circular {
                    MIN_RESULTANT / 2.0
                } else {
                    0.0
                });
                let hi = (r + dr).min(1.0);
                let (a, b) = (f(hi), f(lo));
                let bound = libm::fabs(a - value).max(libm::fabs(b - value))
                    + 16.0 * EPS * libm::fabs(value)
                    + 1e-12;
                Some(Estimate::approx(value, bound))
            }
        }
    }
}

fn deg(rad: f64) -> f64 {
    rad * (180.0 / core::f64::consts::PI)
}

/// How far a mean direction can turn when its mean vector, of length `len`,
/// moves by at most `err`: `asin(err / len)` in degrees, widened for rounding
/// and the CORDIC (within an ulp of `libm`), or a half turn when `err` is not
/// below `len`.
fn angle_bound(err: f64, len: f64) -> f64 {
    if len.is_nan() || len <= 0.0 || err >= len {
        return 180.0;
    }
    deg(libm::asin(err / len)) * (1.0 + 1e-6) + 1e-12
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{ChannelConfig, IntervalAcc, Reading, StationConfig, Timestamp};

    fn est(num: i128, den: i128) -> Estimate {
        Estimate::ratio(num, den, num as f64 / den as f64)
    }

    #[test]
    fn exact_ties_follow_the_rule() {
        // 7.405 = 1481/200 is a tie at 2 decimals.
        let x = est(1481, 200);
        assert_eq!(x.rounds_to(2, Rounding::HalfEven), Some((740, 740)));
        assert_eq!(x.rounds_to(2, Rounding::HalfAway), Some((741, 741)));
        assert_eq!(x.rounds_to(2, Rounding::Truncate), Some((740, 740)));
        assert_eq!(x.rounds_to(2, Rounding::Unknown), Some((740, 741)));
        // -0.125 at 2 decimals.
        let y = est(-1, 8);
        assert_eq!(y.rounds_to(2, Rounding::HalfEven), Some((-12, -12)));
        assert_eq!(y.rounds_to(2, Rounding::HalfAway), Some((-13, -13)));
        assert_eq!(y.rounds_to(2, Rounding::Truncate), Some((-12, -12)));
        // Not a tie: every rule but truncation agrees.
        let z = est(7413, 1000);
        for rule in [Rounding::HalfEven, Rounding::HalfAway, Rounding::Unknown] {
            assert_eq!(z.rounds_to(2, rule), Some((741, 741)), "{rule:?}");
        }
        let t = est(7418, 1000);
        assert_eq!(t.rounds_to(2, Rounding::Truncate), Some((741, 741)));
        assert_eq!(t.rounds_to(2, Rounding::HalfEven), Some((742, 742)));
    }

    /// The `f64` path with its bound always contains what the exact path
    /// decides, for every rule (random ratios, ties included).
    #[test]
    fn the_approximate_path_contains_the_exact_rounding() {
        let mut rng = crate::test_rng::Rng(11);
        for _ in 0..20_000 {
            let den = 1 + (rng.next() % 60_000) as i128;
            let num = (rng.next() % 4_000_000) as i128 - 2_000_000;
            let exact = est(num, den);
            let value = num as f64 / den as f64;
            let approx = Estimate::approx(value, 4.0 * EPS * libm::fabs(value));
            for d in 0..=4 {
                for rule in Rounding::ALL {
                    let (a, b) = exact.rounds_to(d, rule).unwrap();
                    let (lo, hi) = approx.rounds_to(d, rule).unwrap();
                    assert!(lo <= a && b <= hi, "{num}/{den} d {d} {rule:?}");
                    assert!(hi - lo <= 1, "{num}/{den} d {d} {rule:?}");
                }
            }
        }
    }

    #[test]
    fn approximate_values_near_a_boundary_accept_both_neighbours() {
        let x = Estimate::approx(0.834_999_999_999_9, 1e-12);
        assert_eq!(x.rounds_to(3, Rounding::HalfEven), Some((835, 835)));
        let y = Estimate::approx(0.8345, 1e-9);
        assert_eq!(y.rounds_to(3, Rounding::HalfEven), Some((834, 835)));
        assert!(y.accepts(0.834, 3, Rounding::HalfAway));
        assert!(y.accepts(0.835, 3, Rounding::HalfAway));
        assert!(!y.accepts(0.836, 3, Rounding::Unknown));
        // More decimals than declared is never accepted.
        assert!(!y.accepts(0.8345, 3, Rounding::Unknown));
    }

    #[test]
    fn north_is_written_as_declared() {
        let x = Estimate::approx(359.97, 1e-9);
        assert!(x.accepts_direction(0.0, 1, Rounding::Unknown, North::Zero));
        assert!(!x.accepts_direction(360.0, 1, Rounding::Unknown, North::Zero));
        assert!(x.accepts_direction(360.0, 1, Rounding::Unknown, North::Full));
        assert!(!x.accepts_direction(0.0, 1, Rounding::Unknown, North::Full));
        assert!(x.accepts_direction(359.9, 1, Rounding::Truncate, North::Zero));
        assert!((x.difference(0.0, true) - 0.03).abs() < 1e-9);
    }

    /// An interval of samples through a station layout, its alternatives.
    fn alternatives(speeds: &[f64], dirs: &[f64]) -> (Alternatives, Alternatives) {
        let layout = Layout::<2>::new::<4>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.01),
                ChannelConfig::direction().with_speed_channel(0),
            ],
        )
        .unwrap();
        let mut acc = IntervalAcc::<2, 4>::new(&layout, 0);
        for (i, (s, d)) in speeds.iter().zip(dirs).enumerate() {
            let r = [Reading::Value(*s), Reading::Value(*d)];
            acc.push(&layout, Timestamp::from_millis(i as i64 * 1000), &r);
        }
        (
            Alternatives::of(&layout, 0, &acc.state(0).unwrap()).unwrap(),
            Alternatives::of(&layout, 1, &acc.state(1).unwrap()).unwrap(),
        )
    }

    #[test]
    fn alternatives_against_numpy() {
        // numpy 2.4.6: x = [5.0, 7.5, 6.25, 9.0, 8.0]; np.mean(x) = 7.15,
        // np.std(x) = 1.3928388277184118, np.std(x, ddof=1) = 1.5572411502397436;
        // the running mean of 3: max = 7.75 (7.5, 6.25, 9.0 ... 6.25, 9.0, 8.0 = 7.75).
        let (s, _) = alternatives(&[5.0, 7.5, 6.25, 9.0, 8.0], &[10.0; 5]);
        let v = |st| s.get(st).unwrap();
        assert_eq!(v(Statistic::Mean).value, 7.15);
        assert!(v(Statistic::Mean).is_exact());
        assert!((v(Statistic::Sd(Divisor::N)).value - 1.392_838_827_718_411_8).abs() < 1e-15);
        assert!((v(Statistic::Sd(Divisor::NMinus1)).value - 1.557_241_150_239_743_6).abs() < 1e-15);
        assert_eq!(v(Statistic::Min).value, 5.0);
        assert_eq!(v(Statistic::Max(Largest::Sample)).value, 9.0);
        // The window here is the configured 3 samples.
        assert_eq!(v(Statistic::Max(Largest::RunningMean)).value, 7.75);
    }

    #[test]
    fn direction_alternatives_against_numpy() {
        // th = radians([350, 10, 20, 340, 5]), u = [4, 6, 8, 2, 5]; the formulas as
        // numpy and scipy.stats.circstd evaluate them (R = hypot(mean sin, mean cos);
        // mean direction degrees(arctan2(sum sin, sum cos)) % 360; circular sd
        // degrees(sqrt(-2 log R)); angular deviation degrees(sqrt(2 (1 - R)))),
        // here in plain f64 with libm, from the true sines and cosines.
        let dirs = [350.0, 10.0, 20.0, 340.0, 5.0];
        let speeds = [4.0, 6.0, 8.0, 2.0, 5.0];
        let (_, d) = alternatives(&speeds, &dirs);
        // Plain f64 with libm, the formulas as numpy evaluates them.
        let (mut s, mut c, mut us, mut uc) = (0.0, 0.0, 0.0, 0.0);
        for (th, u) in dirs.iter().zip(speeds) {
            let r = th * core::f64::consts::PI / 180.0;
            s += libm::sin(r);
            c += libm::cos(r);
            us += u * libm::sin(r);
            uc += u * libm::cos(r);
        }
        let r = libm::hypot(s / 5.0, c / 5.0);
        let mean = deg(libm::atan2(s, c)).rem_euclid(360.0);
        let wmean = deg(libm::atan2(us, uc)).rem_euclid(360.0);
        let checks = [
            (Statistic::Direction(DirectionMean::UnitVector), mean),
            (Statistic::Direction(DirectionMean::SpeedWeighted), wmean),
            (Statistic::Spread(Spread::Yamartino), yamartino_deg(r * r)),
            (
                Statistic::Spread(Spread::Circular),
                deg(libm::sqrt(-2.0 * libm::log(r))),
            ),
            (
                Statistic::Spread(Spread::Angular),
                deg(libm::sqrt(2.0 * (1.0 - r))),
            ),
        ];
        for (st, want) in checks {
            let e = d.get(st).unwrap();
            let diff = e.difference(want, true);
            assert!(
                diff <= e.bound,
                "{st:?}: {} vs {want}, bound {}",
                e.value,
                e.bound
            );
            assert!(e.bound < 1e-5, "{st:?}: bound {}", e.bound);
        }
    }

    /// The alternatives that are the core's own statistics have the bits of
    /// [`Layout::finish`], on random intervals of values and of calibrated
    /// counts (an offset: no exact ratio).
    #[test]
    fn the_cores_own_conventions_have_the_bits_of_finish() {
        let mut rng = crate::test_rng::Rng(7);
        let layout = Layout::<3>::new::<4>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.01),
                ChannelConfig::speed(0.0498).with_calibration(0.0498, 0.21),
                ChannelConfig::direction(),
            ],
        )
        .unwrap();
        for case in 0..300 {
            let mut acc = IntervalAcc::<3, 4>::new(&layout, 0);
            let n = 1 + (rng.next() % 600) as i64;
            for i in 0..n {
                let miss = rng.next() % 10 == 0;
                let r = [
                    if miss {
                        Reading::Missing
                    } else {
                        Reading::Value((rng.next() % 3000) as f64 / 100.0)
                    },
                    Reading::Counts((rng.next() % 800) as i32),
                    Reading::Value(libm::fmod(
                        200.0 + 120.0 * rng.unit() * (case % 3) as f64,
                        360.0,
                    )),
                ];
                acc.push(&layout, Timestamp::from_millis(i * 1000), &r);
            }
            for ch in 0..3 {
                let rec = layout.finish(&acc, ch).unwrap();
                let alt = Alternatives::of(&layout, ch, &acc.state(ch).unwrap()).unwrap();
                let bits = |s: Option<Estimate>| s.map(|e| e.value.to_bits());
                let stat = |s: crate::Stat| s.value().map(f64::to_bits);
                if ch < 2 {
                    assert_eq!(
                        bits(alt.get(Statistic::Mean)),
                        stat(rec.mean),
                        "{case} {ch}"
                    );
                    assert_eq!(
                        bits(alt.get(Statistic::Sd(Divisor::N))),
                        stat(rec.sd),
                        "{case} {ch}"
                    );
                    assert_eq!(bits(alt.get(Statistic::Min)), stat(rec.min), "{case} {ch}");
                    assert_eq!(
                        bits(alt.get(Statistic::Max(Largest::Sample))),
                        stat(rec.max)
                    );
                    assert_eq!(
                        bits(alt.get(Statistic::Max(Largest::RunningMean))),
                        stat(rec.gust)
                    );
                    let exact = alt.get(Statistic::Mean).map(|e| e.is_exact());
                    assert_eq!(exact, rec.mean.value().map(|_| ch == 0));
                } else {
                    let unit = alt.get(Statistic::Direction(DirectionMean::UnitVector));
                    assert_eq!(bits(unit), stat(rec.mean), "{case}");
                    assert_eq!(
                        bits(alt.get(Statistic::Spread(Spread::Yamartino))),
                        stat(rec.sd)
                    );
                }
            }
        }
    }

    #[test]
    fn too_few_samples_give_no_value() {
        let (s, d) = alternatives(&[5.0], &[90.0]);
        assert!(s.get(Statistic::Sd(Divisor::N)).is_some());
        assert!(s.get(Statistic::Sd(Divisor::NMinus1)).is_none());
        assert!(s.get(Statistic::Max(Largest::RunningMean)).is_none());
        assert!(d.get(Statistic::Mean).is_none());
        let (s, _) = alternatives(&[], &[]);
        assert!(s.get(Statistic::Mean).is_none());
    }
}
