//! Vector statistics of wind direction.
//!
//! Directions are where the wind comes *from*, clockwise from true north, in
//! centidegrees (`0..36_000`). Unit vectors are summed exactly in Q30 integers
//! (see [`crate::angle`]); the unit-vector mean direction is `atan2(sum sin, sum cos)`
//! (US EPA-454/R-99-005, sec. 6.2.2) and the spread is Yamartino's single-pass
//! sigma-theta (Yamartino 1984, J. Climate Appl. Meteor. 23, 1362-1366).
//!
//! With a linked speed channel, the speed-weighted resultant vector
//! `Ve = -(1/N) sum(u sin th)`, `Vn = -(1/N) sum(u cos th)` (EPA sec. 6.2.2) is
//! accumulated exactly too: the speed enters as its integer quanta `q`, with
//! `u = offset + step * q`, so `sum(u sin th) = offset * sum(sin th) + step * sum(q sin th)`.
//!
//! Finishing needs `atan2`, `asin` and square roots; they are computed from the
//! exact integer sums with integer CORDIC and Newton steps ([`crate::angle::polar`],
//! [`crate::angle::sqrt_u128`]), not with software `f64`, which on a Cortex-M0
//! costs hundreds of instructions an operation.

use crate::angle::{
    f64_significand, isqrt_u128_const, mul_hi_u64, polar, polar_angle, recip_u32, scale2,
    shift_u64, sin_cos_q30, sin_cos_q30_table, sqrt_u128, square_u64, to_deg, units_to_deg,
    ANGLE_FRAC_BITS, FULL_TURN, HALF_TURN,
};
use crate::moments::{mul_i32, mul_u32, Wide};

/// Below this mean resultant length the mean direction is reported undefined.
///
/// The Q30 tables are within about `2e-9` per component, so a smaller resultant
/// cannot be told apart from vectors that cancel; `1e-6` leaves a wide margin and
/// is far below any direction a station would report (common practice: a mean
/// direction is meaningless when the vectors cancel).
pub const MIN_RESULTANT: f64 = 1e-6;

/// Largest `1 - r^2` (`r` the mean resultant length) still read as "every
/// direction the same", for which sigma-theta is reported as exactly 0.
///
/// Each Q30 unit vector is within `2^-29` of the true one (about `1.6e-9` at
/// worst over the whole 0.01-degree grid), so for directions that all agree `r`
/// comes out within `2^-29` of 1 and `1 - r^2` within `2^-28` of 0, which
/// Yamartino's formula would turn into a sigma-theta of up to 0.0035 degrees
/// (0.0003 degrees for a constant 10 degrees). Below this floor the spread
/// cannot be told from table rounding; it is also far below any vane's
/// resolution (1 degree, EPA-454/R-99-005 Table 5-1).
pub const SPREAD_FLOOR: f64 = 1.0 / (1u64 << 28) as f64;

/// Unit-vector sums of the valid directions in an interval.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DirectionSums {
    pub(crate) sin: i64,
    pub(crate) cos: i64,
}

/// Finished direction statistics.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DirectionStats {
    /// Unit-vector mean direction in [0, 360), `None` when the vectors cancel.
    pub mean_deg: Option<f64>,
    /// Yamartino sigma-theta, degrees (exactly 0 when `1 - r^2` is at most
    /// [`SPREAD_FLOOR`]).
    pub sigma_deg: f64,
    /// Mean resultant length of the unit vectors, 0 to 1.
    pub resultant_length: f64,
}

impl DirectionSums {
    /// No samples.
    pub const fn new() -> Self {
        DirectionSums { sin: 0, cos: 0 }
    }

    /// Adds a direction in centidegrees (`0..36_000`).
    #[inline]
    pub fn push(&mut self, cd: i32) {
        self.push_q30(cd);
    }

    /// Adds a direction in centidegrees and returns its Q30 unit vector.
    #[inline]
    pub(crate) fn push_q30(&mut self, cd: i32) -> (i32, i32) {
        let (s, c) = sin_cos_q30(cd);
        self.sin += i64::from(s);
        self.cos += i64::from(c);
        (s, c)
    }

    /// [`DirectionSums::push_q30`] with the unit vector looked up whole
    /// ([`crate::angle::sin_cos_q30_table`]: the same pair), for the host's
    /// block path.
    #[inline(always)]
    pub(crate) fn push_q30_table(&mut self, cd: i32) -> (i32, i32) {
        let (s, c) = sin_cos_q30_table(cd);
        self.sin += i64::from(s);
        self.cos += i64::from(c);
        (s, c)
    }

    /// Adds the sums of `other`.
    pub fn merge(&mut self, other: &Self) {
        self.sin += other.sin;
        self.cos += other.cos;
    }

    /// Statistics of `n` samples, `None` when `n` is 0.
    ///
    /// Computed from the exact sums, with `N = n * 2^30` the length the sum
    /// would have if every direction were the same:
    /// - the mean direction `atan2(sum sin, sum cos)` and the length `|V|` of
    ///   the sum vector by the integer CORDIC of [`crate::angle::polar`];
    /// - `r = |V| / N` with `1/n` from [`crate::angle::recip_u32`] (no division);
    /// - `N^2 - |V|^2 = N^2 (1 - r^2)` exactly in 128-bit integers, so that the
    ///   test against [`SPREAD_FLOOR`] is exact and `eps = sqrt(1 - r^2)` keeps
    ///   its precision when `r` is close to 1;
    /// - `asin(eps) = atan2(eps N, r N)` by the same CORDIC, on
    ///   `sqrt(N^2 - |V|^2)` ([`crate::angle::sqrt_u128`]) and `|V|`, and
    ///   Yamartino's factor `1 + (2/sqrt(3) - 1) eps^3` in 64-bit fixed point.
    ///
    /// Only integer operations, conversions to `f64` and exponent changes are
    /// used (no `f64` arithmetic, which is in software on a Cortex-M0), so the
    /// bits are the same on every target. The mean direction and sigma-theta
    /// agree with `libm`'s `atan2` and `asin` on the same sums to one unit in
    /// the last place (under `6e-14` degree), and `r` with `libm`'s `sqrt` to
    /// `2.3e-16` (the tests state the worst differences found).
    pub fn finish(&self, n: u32) -> Option<DirectionStats> {
        if n == 0 {
            return None;
        }
        let (s, c) = (self.sin.unsigned_abs(), self.cos.unsigned_abs());
        let v = polar(c, s);
        let (inv, inv_exp) = recip_u32(n);
        // r = |V| / (n 2^30).
        let r = ratio_f64(v.len, v.exp, inv, inv_exp);
        let mean_deg = at_least(r, MIN_RESULTANT)
            .then(|| full_circle_deg(v.angle, self.sin < 0, self.cos < 0));
        // N^2 - |V|^2 = n^2 2^60 - (sin^2 + cos^2), exact (each term below 2^127).
        let nn = u128::from(mul_u32(n, n));
        let d = (nn << 60).saturating_sub(square_u64(s) + square_u64(c));
        // 1 - r^2 <= 2^-28 exactly when N^2 - |V|^2 <= n^2 2^32.
        let sigma_deg = if d <= nn << 32 {
            0.0
        } else {
            let (root, exp) = sqrt_u128(d);
            // asin(eps) = atan2(sqrt(N^2 - |V|^2), |V|), on a common exponent.
            let e = exp.max(v.exp);
            let spread = polar_angle(shift_u64(v.len, v.exp - e), shift_u64(root, exp - e));
            // eps = sqrt(N^2 - |V|^2) / N in Q62, at most 1.
            let eps = shift_u64(mul_hi_u64(root, inv), 64 + exp + inv_exp - 30 + 62).min(1 << 62);
            yamartino_deg_fixed(spread, eps)
        };
        Some(DirectionStats {
            mean_deg,
            sigma_deg,
            resultant_length: if at_least(r, 1.0) { 1.0 } else { r },
        })
    }
}

/// `len * 2^exp / (n 2^30)` in `f64`, with `1/n = inv * 2^inv_exp`.
fn ratio_f64(len: u64, exp: i32, inv: u64, inv_exp: i32) -> f64 {
    scale2(mul_hi_u64(len, inv) as f64, 64 + exp + inv_exp - 30)
}

/// `a >= b` for non-negative, non-NaN `a` and `b`: their IEEE-754 bit
/// patterns order like the numbers, so one integer comparison does (a
/// software `f64` comparison costs dozens of instructions on a Cortex-M0).
fn at_least(a: f64, b: f64) -> bool {
    a.to_bits() >= b.to_bits()
}

/// Degrees in [0, 360) of a vector with components of the given signs whose
/// first-quadrant angle (of `(|x|, |y|)`, from [`polar`]) is `a`.
fn full_circle_deg(a: u64, y_negative: bool, x_negative: bool) -> f64 {
    let t = match (x_negative, y_negative) {
        (false, false) => a,
        (true, false) => HALF_TURN - a,
        (true, true) => HALF_TURN + a,
        (false, true) if a == 0 => 0,
        (false, true) => FULL_TURN - a,
    };
    // Near a full turn the f64 step is 2^11 units: from 2^10 below it, t
    // would round to 360, which belongs to 0.
    if t >= FULL_TURN - (1 << 10) {
        0.0
    } else {
        units_to_deg(t, ANGLE_FRAC_BITS)
    }
}

/// `2/sqrt(3) - 1` in Q64 (0.1547...), from the integer square root of 4/3:
/// `sqrt(4/3 * 2^124) = 2/sqrt(3) * 2^62` (compile time).
const YAMARTINO_B_Q64: u64 = ((isqrt_u128_const((4u128 << 124) / 3) - (1 << 62)) << 2) as u64;

/// Yamartino's sigma-theta in degrees from `asin(eps)` in units of `2^-55`
/// degree and `eps` in Q62 (at most `2^62`): `asin(eps) (1 + B eps^3)`,
/// `B = 2/sqrt(3) - 1`, in 64-bit fixed point (each product truncated, so the
/// factor is within `2^-56` of itself).
fn yamartino_deg_fixed(asin_units: u64, eps_q62: u64) -> f64 {
    let e2 = mul_hi_u64(eps_q62, eps_q62); // Q60
    let e3 = mul_hi_u64(e2, eps_q62); // Q58
    let b = mul_hi_u64(e3, YAMARTINO_B_Q64); // Q58, below 0.155 * 2^58
    let factor = (1u64 << 63) + (b << 5); // Q63, below 1.155 * 2^63
    units_to_deg(mul_hi_u64(asin_units, factor), ANGLE_FRAC_BITS - 1)
}

/// Yamartino's sigma-theta from the squared mean resultant length `sa^2 + ca^2`:
/// `eps = sqrt(1 - (sa^2 + ca^2))`, `sigma = asin(eps) (1 + (2/sqrt(3) - 1) eps^3)`
/// (Yamartino 1984, eq. as reproduced in EPA-454/R-99-005 sec. 6.2.1).
/// `eps` is clamped at 0, since rounding can make `1 - r^2` slightly negative.
///
/// This is the plain `f64` form with `libm`, kept as the reference formula;
/// [`DirectionSums::finish`] computes the same from the exact sums without
/// `sqrt` and `asin` (its tests check it against this formula evaluated with
/// `libm`).
pub fn yamartino_deg(r2: f64) -> f64 {
    const B: f64 = 0.154_700_538_379_251_5; // 2/sqrt(3) - 1
    let eps = libm::sqrt((1.0 - r2).max(0.0));
    to_deg(libm::asin(eps) * (1.0 + B * eps * eps * eps))
}

/// Speed-weighted sums for the resultant wind vector of a direction channel and
/// its linked speed channel, over the samples where both are valid.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ResultantSums {
    pub(crate) q_sin: Wide,
    pub(crate) q_cos: Wide,
    pub(crate) sin: i64,
    pub(crate) cos: i64,
    pub(crate) n: u32,
}

/// [`ResultantSums`] of a column in locals, for the host's block path:
/// products in one native 64-bit multiply (the same integer as
/// [`mul_i32`]'s partial products, which a Cortex-M0 needs: `|s| <= 2^30`,
/// `|q| <= 2^31`, so `|s q| < 2^62`), summed in `i128` and added to the
/// interval's sums once ([`ColumnResultant::add_to`]): the same integers as
/// [`ResultantSums::push_q30`] of each pair.
#[derive(Clone, Copy, Debug)]
pub(crate) struct ColumnResultant {
    q_sin: i128,
    q_cos: i128,
    sin: i64,
    cos: i64,
    n: usize,
}

impl ColumnResultant {
    /// No pairs.
    pub(crate) const fn new() -> Self {
        ColumnResultant {
            q_sin: 0,
            q_cos: 0,
            sin: 0,
            cos: 0,
            n: 0,
        }
    }

    /// [`ResultantSums::push_q30`].
    #[inline(always)]
    pub(crate) fn push_q30(&mut self, s: i32, c: i32, q: i32) {
        let q = i64::from(q);
        self.q_sin = self.q_sin.wrapping_add(i128::from(i64::from(s) * q));
        self.q_cos = self.q_cos.wrapping_add(i128::from(i64::from(c) * q));
        self.sin = self.sin.wrapping_add(i64::from(s));
        self.cos = self.cos.wrapping_add(i64::from(c));
        self.n += 1;
    }

    /// Adds the column's pairs to `r`.
    #[inline(always)]
    pub(crate) fn add_to(&self, r: &mut ResultantSums) {
        r.q_sin.add(self.q_sin);
        r.q_cos.add(self.q_cos);
        r.sin = r.sin.wrapping_add(self.sin);
        r.cos = r.cos.wrapping_add(self.cos);
        r.n =
            r.n.saturating_add(u32::try_from(self.n).unwrap_or(u32::MAX));
    }
}

/// The resultant (speed-weighted) wind vector.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Resultant {
    /// Resultant speed, in the speed channel's unit.
    pub speed: f64,
    /// Resultant direction (from), [0, 360); `None` when the resultant speed is
    /// below [`MIN_RESULTANT`] in the speed channel's unit (the vectors cancel).
    pub direction_deg: Option<f64>,
    /// Number of samples where both direction and speed were valid.
    pub pairs: u32,
}

impl ResultantSums {
    /// No samples.
    pub const fn new() -> Self {
        ResultantSums {
            q_sin: Wide::ZERO,
            q_cos: Wide::ZERO,
            sin: 0,
            cos: 0,
            n: 0,
        }
    }

    /// Adds a pair: direction in centidegrees and speed quanta.
    #[inline]
    pub fn push(&mut self, cd: i32, q: i32) {
        let (s, c) = sin_cos_q30(cd);
        self.push_q30(s, c, q);
    }

    /// Adds a pair given as the direction's Q30 unit vector `(s, c)` and speed
    /// quanta `q`. Each product fits an `i64` (`|s| <= 2^30`), so it is one
    /// 32 x 32-bit multiply and a sign-extended add into the wide sums.
    #[inline]
    pub(crate) fn push_q30(&mut self, s: i32, c: i32, q: i32) {
        self.q_sin.add_i64(mul_i32(s, q));
        self.q_cos.add_i64(mul_i32(c, q));
        self.sin += i64::from(s);
        self.cos += i64::from(c);
        self.n = self.n.saturating_add(1);
    }

    /// Adds the sums of `other`.
    pub fn merge(&mut self, other: &Self) {
        self.q_sin.add(other.q_sin.get());
        self.q_cos.add(other.q_cos.get());
        self.sin += other.sin;
        self.cos += other.cos;
        self.n = self.n.saturating_add(other.n);
    }

    /// The resultant vector for speed `u = offset + step * q`; `None` without pairs.
    ///
    /// The sums `E = offset * sum sin + step * sum(q sin)` and `M` (likewise
    /// with cos) are formed in `f64`; their length and `atan2(E, M)` then come
    /// from the integer CORDIC of [`crate::angle::polar`] on their exact binary
    /// significands, and the speed is `|(E, M)| / N` with `1/n` from
    /// [`crate::angle::recip_u32`].
    pub fn finish(&self, offset: f64, step: f64) -> Option<Resultant> {
        if self.n == 0 {
            return None;
        }
        // The wind blows toward -(Ve, Vn): the direction it comes from is
        // atan2(Ve, Vn) + 180, i.e. atan2 of the sums without their minus signs.
        let sums = |offset: f64, step: f64| {
            (
                offset * self.sin as f64 + step * self.q_sin.get() as f64,
                offset * self.cos as f64 + step * self.q_cos.get() as f64,
            )
        };
        let (mut e, mut m) = sums(offset, step);
        let mut scale = 0;
        if !(e.is_finite() && m.is_finite()) {
            // Only with an offset or step near the end of the f64 range (both
            // are finite): the same sums from offset and step scaled by 2^-600,
            // exactly, and the length scaled back at the end.
            scale = 600;
            (e, m) = sums(scale2(offset, -scale), scale2(step, -scale));
        }
        let (me, xe) = f64_significand(e);
        let (mm, xm) = f64_significand(m);
        // Both significands (below 2^53) moved up 10 bits, then onto the larger exponent.
        let x = xe.max(xm);
        let v = polar(shift_u64(mm << 10, xm - x), shift_u64(me << 10, xe - x));
        let (inv, inv_exp) = recip_u32(self.n);
        let speed = ratio_f64(v.len, v.exp + x - 10 + scale, inv, inv_exp);
        let direction_deg =
            at_least(speed, MIN_RESULTANT).then(|| full_circle_deg(v.angle, e < 0.0, m < 0.0));
        Some(Resultant {
            speed,
            direction_deg,
            pairs: self.n,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::angle::{FULL_TURN_CD, ONE_Q30};

    use crate::test_rng::Rng;

    const B: f64 = 0.154_700_538_379_251_5; // 2/sqrt(3) - 1

    /// Degrees in [0, 360) from an `atan2` result in [-pi, pi] (the former
    /// conversion, for the reference).
    fn from_atan2_deg(rad: f64) -> f64 {
        let d = to_deg(rad);
        if d < 0.0 {
            let w = d + 360.0;
            // -1e-20 + 360 rounds to 360, which belongs to 0.
            if w >= 360.0 {
                0.0
            } else {
                w
            }
        } else {
            d
        }
    }

    /// The same statistics in f64 with the libm crate's (0.2.16, a port of
    /// FreeBSD msun) `sqrt`, `atan2` and `asin`, on the same exact sums (`N^2 - |V|^2` formed exactly, as in `finish`, so
    /// that the reference keeps its precision when r is close to 1). Where
    /// `asin(eps)` is ill-conditioned (eps near 1, where a rounding of eps by
    /// 1e-16 moves it by 1e-16 / r), the reference takes `acos(r)` instead,
    /// the same angle.
    fn reference(sin: i64, cos: i64, n: u32) -> (Option<f64>, f64, f64) {
        let big_n = ONE_Q30 as f64 * f64::from(n);
        let v2 = square_u64(sin.unsigned_abs()) + square_u64(cos.unsigned_abs());
        let r = libm::sqrt(v2 as f64) / big_n;
        let mean =
            (r >= MIN_RESULTANT).then(|| from_atan2_deg(libm::atan2(sin as f64, cos as f64)));
        let nn = u128::from(n) * u128::from(n);
        let d = (nn << 60).saturating_sub(v2);
        let sigma = if d <= nn << 32 {
            0.0
        } else {
            let eps = libm::sqrt(d as f64) / big_n;
            let a = if eps <= 0.7 {
                libm::asin(eps)
            } else {
                libm::acos(r)
            };
            to_deg(a * (1.0 + B * eps * eps * eps))
        };
        (mean, sigma, r.min(1.0))
    }

    fn apart(a: f64, b: f64) -> f64 {
        let d = (a - b).abs() % 360.0;
        d.min(360.0 - d)
    }

    /// Worst differences from the reference so far: mean, sigma (degrees), r.
    #[derive(Default)]
    struct Worst(f64, f64, f64);

    impl Worst {
        fn check(&mut self, sin: i64, cos: i64, n: u32) {
            let got = DirectionSums { sin, cos }.finish(n).expect("n > 0");
            let (mean, sigma, r) = reference(sin, cos, n);
            let what = format!("sin {sin} cos {cos} n {n}: {got:?} vs {mean:?} {sigma} {r}");
            assert!((got.resultant_length - r).abs() <= 4e-16, "{what}");
            assert!(
                got.resultant_length <= 1.0 && got.resultant_length >= 0.0,
                "{what}"
            );
            self.2 = self.2.max((got.resultant_length - r).abs());
            // The MIN_RESULTANT test agrees except within a rounding of r.
            match (got.mean_deg, mean) {
                (Some(a), Some(b)) => {
                    assert!((0.0..360.0).contains(&a), "{what}");
                    assert!(apart(a, b) <= 1e-13, "{what}");
                    self.0 = self.0.max(apart(a, b));
                }
                (None, None) => {}
                _ => assert!((r - MIN_RESULTANT).abs() <= 1e-21, "{what}"),
            }
            assert!(got.sigma_deg >= 0.0, "{what}");
            assert!((got.sigma_deg - sigma).abs() <= 1e-13, "{what}");
            self.1 = self.1.max((got.sigma_deg - sigma).abs());
        }
    }

    #[test]
    fn finish_matches_libm_on_realistic_series() {
        let mut rng = Rng(42);
        let mut worst = Worst::default();
        for case in 0..1_000 {
            // A vane wandering around a random direction, from steady to all over.
            let spread = [0.0, 0.05, 1.0, 10.0, 60.0, 180.0][case % 6];
            let centre = rng.unit() * 360.0;
            let n = 1 + (rng.next() % 1_200) as u32;
            let mut sums = DirectionSums::new();
            for _ in 0..n {
                let d = centre + spread * (2.0 * rng.unit() - 1.0);
                sums.push(libm::round(d * 100.0) as i32);
            }
            worst.check(sums.sin, sums.cos, n);
        }
        println!(
            "realistic series vs libm: mean {:e} deg, sigma {:e} deg, r {:e}",
            worst.0, worst.1, worst.2
        );
    }

    #[test]
    fn finish_matches_libm_on_any_sums() {
        // Sums of every length from 0 to 1 (and a little over, as table
        // rounding allows), in every direction, for n up to u32::MAX.
        let mut rng = Rng(5);
        let mut worst = Worst::default();
        for i in 0..200_000 {
            let n = match i % 4 {
                0 => 1 + (rng.next() % 1_000) as u32,
                1 => (rng.next() >> 32) as u32 | 1,
                2 => u32::MAX,
                _ => 600,
            };
            let r = match i % 7 {
                0 => rng.unit(),
                1 => 1.0 - rng.unit() * 1e-6,
                2 => 1.0 - rng.unit() * 1e-8,
                3 => rng.unit() * 1e-5,
                4 => 1.0,
                5 => 1.0 + rng.unit() * 2e-9,
                _ => 1.0 - libm::ldexp(rng.unit(), -((rng.next() % 50) as i32)),
            };
            let th = rng.unit() * core::f64::consts::TAU;
            let big_n = ONE_Q30 as f64 * f64::from(n);
            let sin = libm::round(r * big_n * libm::sin(th)) as i64;
            let cos = libm::round(r * big_n * libm::cos(th)) as i64;
            worst.check(sin, cos, n);
        }
        // Worst found: mean 5.7e-14 deg and sigma 4.3e-14 deg (one unit in the
        // last place of results above 256 and 64 degrees), r 2.2e-16.
        println!(
            "any sums vs libm: mean {:e} deg, sigma {:e} deg, r {:e}",
            worst.0, worst.1, worst.2
        );
    }

    #[test]
    fn exact_directions_and_edges() {
        let (one, h) = (ONE_Q30, 12_345_678);
        let mean = |sin: i64, cos: i64| DirectionSums { sin, cos }.finish(1).unwrap().mean_deg;
        assert_eq!(mean(0, one), Some(0.0));
        assert_eq!(mean(one, 0), Some(90.0));
        assert_eq!(mean(0, -one), Some(180.0));
        assert_eq!(mean(-one, 0), Some(270.0));
        assert_eq!(mean(h, h), Some(45.0));
        assert_eq!(mean(h, -h), Some(135.0));
        assert_eq!(mean(-h, -h), Some(225.0));
        assert_eq!(mean(-h, h), Some(315.0));
        // Just below north: 360 - 1e-15 degree, which is 0 after rounding to f64.
        let m = mean(-1, 1 << 62).unwrap();
        assert!((0.0..360.0).contains(&m), "{m}");
        // All vectors cancel: no mean, sigma of eps = 1 is 90 (1 + B) degrees.
        for n in [1, 2, 600, u32::MAX] {
            let s = DirectionSums::new().finish(n).unwrap();
            assert_eq!(s.mean_deg, None);
            assert_eq!(s.resultant_length, 0.0);
            assert!(
                (s.sigma_deg - 90.0 * (1.0 + B)).abs() < 1e-13,
                "{}",
                s.sigma_deg
            );
        }
        assert_eq!(DirectionSums::new().finish(0), None);
        // Every direction the same, any count: r = 1, sigma exactly 0.
        for cd in (0..FULL_TURN_CD).step_by(7) {
            let mut sums = DirectionSums::new();
            for _ in 0..10 {
                sums.push(cd);
            }
            let s = sums.finish(10).unwrap();
            assert_eq!(s.sigma_deg, 0.0, "{cd}");
            assert!((s.resultant_length - 1.0).abs() < 4e-9, "{cd}");
            let m = s.mean_deg.unwrap();
            assert!(apart(m, f64::from(cd) / 100.0) < 2e-7, "{cd}: {m}");
        }
        // Sums no push can make, and the largest count: no panic, sane values.
        for (sin, cos) in [
            (i64::MAX, i64::MAX),
            (i64::MIN, i64::MIN),
            (i64::MIN, i64::MAX),
            (i64::MAX, 0),
            (0, i64::MIN),
            (1, -1),
        ] {
            for n in [1, 3, u32::MAX] {
                let s = DirectionSums { sin, cos }.finish(n).unwrap();
                assert!((0.0..=1.0).contains(&s.resultant_length));
                assert!(s.sigma_deg >= 0.0 && s.sigma_deg < 104.0);
                if let Some(m) = s.mean_deg {
                    assert!((0.0..360.0).contains(&m));
                }
            }
        }
    }

    #[test]
    fn spread_floor_is_exact() {
        // 1 - r^2 <= 2^-28 exactly when N^2 - |V|^2 <= n^2 2^32: for a vector
        // along north, the smallest cos with sigma 0 is ceil(n sqrt(2^60 - 2^32)).
        for n in [1u32, 7, 600, 65_537, u32::MAX] {
            let nn = u128::from(n) * u128::from(n);
            let limit = (nn << 60) - (nn << 32);
            // Integer square root by bisection (test only).
            let (mut lo, mut hi) = (0u128, 1u128 << 62);
            while lo < hi {
                let mid = (lo + hi) / 2;
                if mid * mid >= limit {
                    hi = mid;
                } else {
                    lo = mid + 1;
                }
            }
            let c = lo as i64;
            let at = DirectionSums { sin: 0, cos: c }.finish(n).unwrap();
            let below = DirectionSums { sin: 0, cos: c - 1 }.finish(n).unwrap();
            assert_eq!(at.sigma_deg, 0.0, "{n}");
            // A unit or so more of N^2 - |V|^2 than the floor: sigma of about
            // eps = 2^-13.7 radian.
            assert!(
                below.sigma_deg > 0.0 && below.sigma_deg < 0.005,
                "{n}: {below:?}"
            );
            assert_eq!(at.mean_deg, Some(0.0));
        }
    }

    #[test]
    fn yamartino_constant() {
        let b = YAMARTINO_B_Q64 as f64 / 2f64.powi(64);
        // 2/sqrt(3) - 1 = 0.154700538379251529018...
        assert!((b - 0.154_700_538_379_251_53).abs() < 3e-17, "{b}");
    }

    #[test]
    fn yamartino_reference_form_is_unchanged() {
        // The public f64 form: eps = 1 gives pi / sqrt(3) radian.
        assert!((yamartino_deg(0.0) - 103.923_048_454_132_63).abs() < 1e-12);
        assert_eq!(yamartino_deg(1.0), 0.0);
        assert_eq!(yamartino_deg(1.5), 0.0);
    }

    #[test]
    fn resultant_matches_libm() {
        // The speed-weighted resultant against the former f64 path (libm sqrt
        // and atan2 on the same f64 sums).
        let mut rng = Rng(9);
        let (mut worst_dir, mut worst_speed) = (0.0f64, 0.0f64);
        for case in 0..2_000 {
            let (offset, step) = [
                (0.0, 0.01),
                (0.25, 0.05),
                (-0.4, 1.0),
                (0.3, 1.0 / 26_400.0),
            ][case % 4];
            let centre = rng.unit() * 360.0;
            let spread = [0.5, 20.0, 180.0][case % 3];
            let n = 1 + (rng.next() % 900) as usize;
            let mut sums = ResultantSums::new();
            for _ in 0..n {
                let d = centre + spread * (2.0 * rng.unit() - 1.0);
                let q = (rng.next() % 3_000) as i32 - 100;
                sums.push(libm::round(d * 100.0) as i32, q);
            }
            let got = sums.finish(offset, step).unwrap();
            let e = offset * sums.sin as f64 + step * sums.q_sin.get() as f64;
            let m = offset * sums.cos as f64 + step * sums.q_cos.get() as f64;
            let speed = libm::sqrt(e * e + m * m) / (ONE_Q30 as f64 * n as f64);
            assert_eq!(got.pairs, n as u32);
            let err = (got.speed - speed).abs() / speed.max(1e-300);
            assert!(err <= 5e-16, "{got:?} vs {speed}");
            worst_speed = worst_speed.max(err);
            if speed >= 2.0 * MIN_RESULTANT {
                let dir = from_atan2_deg(libm::atan2(e, m));
                let d = apart(got.direction_deg.unwrap(), dir);
                assert!(d <= 1e-13, "{got:?} vs {dir}");
                worst_dir = worst_dir.max(d);
            }
        }
        // Axes exactly, the empty case, and sums too large for f64 (the former path).
        let mut east = ResultantSums::new();
        east.push(9_000, 500);
        let v = east.finish(0.0, 0.01).unwrap();
        assert_eq!(v.direction_deg, Some(90.0));
        assert_eq!(v.speed, 5.0);
        assert_eq!(ResultantSums::new().finish(0.0, 1.0), None);
        // Sums beyond the f64 range (an absurd offset): still the right
        // direction, and the speed 1e308 + 500 * 1e308 is infinite.
        let huge = east.finish(1e308, 1.0).unwrap();
        assert_eq!((huge.pairs, huge.direction_deg), (1, Some(90.0)));
        assert!((huge.speed / 1e308 - 1.0).abs() < 1e-15, "{huge:?}");
        let huge = east.finish(1e308, 1e308).unwrap();
        assert_eq!(
            (huge.speed, huge.direction_deg),
            (f64::INFINITY, Some(90.0))
        );
        // Worst found: 5.7e-14 degree (one unit in the last place above 256
        // degrees), 2.2e-16 of the speed.
        println!("resultant vs libm: direction {worst_dir:e} deg, speed {worst_speed:e} relative");
    }
}
