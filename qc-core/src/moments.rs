//! Exact moments of integer quanta: count by the caller, sum, sum of squares,
//! minimum and maximum.
//!
//! Every sample is an `i32` number of quanta (see [`crate::Scale`]). Sums are
//! kept in integers wide enough never to overflow for `u32::MAX` samples, so the
//! state after any set of samples is the same whatever their order, and two
//! states merge exactly. Floating point is used only in [`Moments::finish`].

/// A 128-bit signed integer stored as two 64-bit halves, so that structures
/// holding it have 8-byte alignment (and the same size) on every target.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Wide {
    pub(crate) lo: u64,
    pub(crate) hi: u64,
}

impl Wide {
    /// Zero.
    pub const ZERO: Wide = Wide { lo: 0, hi: 0 };

    /// The value.
    pub const fn get(self) -> i128 {
        (((self.hi as u128) << 64) | self.lo as u128) as i128
    }

    /// Stores a value.
    pub const fn new(v: i128) -> Self {
        let u = v as u128;
        Wide {
            lo: u as u64,
            hi: (u >> 64) as u64,
        }
    }

    /// Adds `v` (wrapping; callers keep within range by the bounds in the module doc).
    pub fn add(&mut self, v: i128) {
        *self = Wide::new(self.get().wrapping_add(v));
    }

    /// Adds a non-negative 64-bit value: one add with carry, no 128-bit
    /// arithmetic (cheap on a 32-bit core).
    #[inline]
    pub fn add_u64(&mut self, v: u64) {
        let (lo, carry) = self.lo.overflowing_add(v);
        self.lo = lo;
        // Rare: a branch, not a 64-bit add of the carry on every call.
        if carry {
            self.hi = self.hi.wrapping_add(1);
        }
    }

    /// Adds a 32-bit value: on a 32-bit core one add to the low word, and the
    /// carry through the other words only when there is one.
    #[inline]
    pub fn add_u32(&mut self, v: u32) {
        let (low, carry) = (self.lo as u32).overflowing_add(v);
        if carry {
            self.add_u64(u64::from(v));
        } else {
            self.lo = (self.lo & !0xFFFF_FFFF) | u64::from(low);
        }
    }

    /// Adds a signed 64-bit value (sign-extended): adds with carry, no
    /// 128-bit arithmetic.
    #[inline]
    pub fn add_i64(&mut self, v: i64) {
        let (lo, carry) = self.lo.overflowing_add(v as u64);
        self.lo = lo;
        let ext = if v < 0 { u64::MAX } else { 0 };
        self.hi = self.hi.wrapping_add(ext).wrapping_add(u64::from(carry));
    }
}

/// `a * b` for 32-bit operands as a 64-bit product, from four 16-bit partial
/// products: a Cortex-M0 has only a 32-bit multiply, and the generic 64-bit
/// multiply helper costs several times more. Exact for every input.
#[inline]
#[cfg(not(target_pointer_width = "64"))]
pub const fn mul_u32(a: u32, b: u32) -> u64 {
    mul_u32_parts(a, b)
}

/// The partial-product multiply behind [`mul_u32`] on 32-bit targets, compiled
/// everywhere so that the host tests check it against the native multiply.
#[inline]
pub const fn mul_u32_parts(a: u32, b: u32) -> u64 {
    let (ah, al) = (a >> 16, a & 0xFFFF);
    let (bh, bl) = (b >> 16, b & 0xFFFF);
    let low = al * bl;
    let mid1 = ah * bl;
    let mid2 = al * bh;
    let high = ah * bh;
    let mid = mid1 as u64 + mid2 as u64;
    ((high as u64) << 32) + (mid << 16) + low as u64
}

/// `a * b` for 32-bit operands as a 64-bit product: on 64-bit targets the
/// native multiply (the same integer as the partial products elsewhere).
#[inline]
#[cfg(target_pointer_width = "64")]
pub const fn mul_u32(a: u32, b: u32) -> u64 {
    a as u64 * b as u64
}

/// `a * b` for signed 32-bit operands, exact, via [`mul_u32`].
#[inline]
pub const fn mul_i32(a: i32, b: i32) -> i64 {
    let p = mul_u32(a.unsigned_abs(), b.unsigned_abs()) as i64;
    if (a < 0) != (b < 0) {
        -p
    } else {
        p
    }
}

/// Sum, sum of squares, minimum and maximum of `i32` quanta.
///
/// The sample count is not stored here: the owner keeps it (it is the channel's
/// valid count), which saves 8 bytes a channel. With at most `u32::MAX`
/// samples, `|sum| < 2^63` and `sum_sq < 2^94`, so neither can overflow.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Moments {
    pub(crate) sum_sq: Wide,
    pub(crate) sum: i64,
    pub(crate) min: i32,
    pub(crate) max: i32,
}

/// Finished moments in quanta.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MomentStats {
    /// Mean, in quanta.
    pub mean: f64,
    /// Population standard deviation (divisor N), in quanta.
    pub sd: f64,
    /// Smallest sample.
    pub min: i32,
    /// Largest sample.
    pub max: i32,
}

impl Default for Moments {
    fn default() -> Self {
        Self::new()
    }
}

impl Moments {
    /// No samples.
    pub const fn new() -> Self {
        Moments {
            sum_sq: Wide::ZERO,
            sum: 0,
            min: i32::MAX,
            max: i32::MIN,
        }
    }

    /// Adds one sample.
    #[inline]
    pub fn push(&mut self, q: i32) {
        self.sum += i64::from(q);
        let a = q.unsigned_abs();
        // Quanta below 2^16 (0.01 m/s up to 655 m/s) square in one 32-bit
        // multiply, and add to the low word alone but for a rare carry.
        if a < 1 << 16 {
            self.sum_sq.add_u32(a * a);
        } else {
            self.sum_sq.add_u64(mul_u32(a, a));
        }
        // Stores only when the extreme moves (rare once an interval is under way).
        if q < self.min {
            self.min = q;
        }
        if q > self.max {
            self.max = q;
        }
    }

    /// Adds all samples of `other`.
    pub fn merge(&mut self, other: &Moments) {
        self.sum += other.sum;
        self.sum_sq.add(other.sum_sq.get());
        self.min = self.min.min(other.min);
        self.max = self.max.max(other.max);
    }

    /// Exact sum of the samples.
    pub const fn sum(&self) -> i64 {
        self.sum
    }

    /// Smallest sample (`i32::MAX` before any).
    pub const fn min(&self) -> i32 {
        self.min
    }

    /// Largest sample (`i32::MIN` before any).
    pub const fn max(&self) -> i32 {
        self.max
    }

    /// Mean, standard deviation (divisor N), min and max of `n` samples, or
    /// `None` when `n` is 0.
    ///
    /// The variance numerator `n * sum_sq - sum^2` is formed exactly in integers,
    /// so a constant series gives exactly 0 and never a negative or NaN value.
    pub fn finish(&self, n: u32) -> Option<MomentStats> {
        if n == 0 {
            return None;
        }
        let nf = f64::from(n);
        let mean = self.sum as f64 / nf;
        let num = self.variance_numerator(n);
        Some(MomentStats {
            mean,
            sd: libm::sqrt(variance(num, n)),
            min: self.min,
            max: self.max,
        })
    }

    /// `n * sum_sq - sum^2` (n times the sum of squared deviations), exact.
    ///
    /// With 32-bit partial products ([`mul_u32`]): `n * sum_sq` is three of
    /// them (`sum_sq < 2^94`), `sum^2` three more; a 128-bit multiply on a
    /// Cortex-M0 costs several times that. Never negative for the moments of
    /// real samples (Cauchy-Schwarz); clamped at 0 all the same.
    pub fn variance_numerator(&self, n: u32) -> u128 {
        let q = self.sum_sq;
        // sum_sq < 2^94, so its top 32 bits are 0; wrapping adds keep this
        // panic-free whatever the state.
        let n_sq = u128::from(mul_u32(q.lo as u32, n))
            .wrapping_add(u128::from(mul_u32((q.lo >> 32) as u32, n)) << 32)
            .wrapping_add(u128::from(mul_u32(q.hi as u32, n)) << 64);
        let a = self.sum.unsigned_abs();
        let (lo, hi) = (a as u32, (a >> 32) as u32);
        let sum_sq = u128::from(mul_u32(lo, lo))
            .wrapping_add(u128::from(mul_u32(lo, hi)) << 33)
            .wrapping_add(u128::from(mul_u32(hi, hi)) << 64);
        n_sq.saturating_sub(sum_sq)
    }
}

/// The moments of a column of samples in locals, for the host's block path:
/// the sum of squares as one `u128` (an add with carry a sample on a 64-bit
/// host, where [`Moments::push`] branches on the size of the square and on a
/// carry, as a Cortex-M0 needs), added to a [`Moments`] once
/// ([`ColumnSums::add_to`]). The same integers: sums are exact (wrapping
/// only where [`Moments`] would overflow, which it never does), min and max
/// order-free.
#[derive(Clone, Copy, Debug)]
pub(crate) struct ColumnSums {
    sum: i64,
    sum_sq: u128,
    min: i32,
    max: i32,
}

impl ColumnSums {
    /// No samples.
    pub(crate) const fn new() -> Self {
        ColumnSums {
            sum: 0,
            sum_sq: 0,
            min: i32::MAX,
            max: i32::MIN,
        }
    }

    /// [`Moments::push`].
    #[inline(always)]
    pub(crate) fn push(&mut self, q: i32) {
        self.sum = self.sum.wrapping_add(i64::from(q));
        let w = i64::from(q);
        // |q| <= 2^31: the square fits an i64 and is not negative.
        self.sum_sq = self.sum_sq.wrapping_add(u128::from((w * w) as u64));
        self.min = self.min.min(q);
        self.max = self.max.max(q);
    }

    /// Adds the column's samples to `m`.
    #[inline(always)]
    pub(crate) fn add_to(&self, m: &mut Moments) {
        m.sum = m.sum.wrapping_add(self.sum);
        m.sum_sq.add(self.sum_sq as i128);
        m.min = m.min.min(self.min);
        m.max = m.max.max(self.max);
    }
}

/// The population variance `num / n^2` from [`Moments::variance_numerator`]:
/// one division while `n^2` is exact in `f64` (n below 2^26, 67 million
/// samples in an interval), two otherwise.
pub fn variance(num: u128, n: u32) -> f64 {
    let nf = f64::from(n);
    if n < 1 << 26 {
        num as f64 / (nf * nf)
    } else {
        (num as f64 / nf) / nf
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn variance_numerator_matches_i128() {
        let mut x: u64 = 0x1234_5678_9ABC_DEF1;
        for case in 0..2_000 {
            let mut m = Moments::new();
            let (mut sum, mut sq) = (0i128, 0i128);
            let n = 1 + case % 700;
            for _ in 0..n {
                x ^= x << 13;
                x ^= x >> 7;
                x ^= x << 17;
                let q = match case % 4 {
                    0 => (x % 20_000) as i32,
                    1 => x as i32,
                    2 => i32::MIN + (x % 3) as i32,
                    _ => -((x % 70_000) as i32),
                };
                m.push(q);
                sum += i128::from(q);
                sq += i128::from(q) * i128::from(q);
            }
            let want = i128::from(n) * sq - sum * sum;
            assert_eq!(m.variance_numerator(n) as i128, want, "case {case}");
        }
    }

    #[test]
    fn small_adds_carry_through_every_word() {
        let mut w = Wide::new(i128::from(u32::MAX) - 1);
        let mut r = i128::from(u32::MAX) - 1;
        for v in [1u32, 1, u32::MAX, 7, u32::MAX, u32::MAX] {
            w.add_u32(v);
            r += i128::from(v);
            assert_eq!(w.get(), r);
        }
        let mut w = Wide::new(i128::from(u64::MAX));
        w.add_u32(5);
        assert_eq!(w.get(), i128::from(u64::MAX) + 5);
    }

    #[test]
    fn signed_adds_match_i128() {
        let values = [
            0i64,
            1,
            -1,
            i64::MAX,
            i64::MIN,
            1 << 62,
            -(1 << 62),
            123_456_789_012,
        ];
        let mut w = Wide::ZERO;
        let mut r = 0i128;
        for _ in 0..3 {
            for &v in &values {
                w.add_i64(v);
                r += i128::from(v);
                assert_eq!(w.get(), r);
            }
        }
        let mut w = Wide::new(-5);
        w.add_i64(3);
        assert_eq!(w.get(), -2);
        w.add_i64(7);
        assert_eq!(w.get(), 5);
    }

    #[test]
    fn small_multiplies_are_exact() {
        let edge = [
            0u32,
            1,
            2,
            0xFFFF,
            0x1_0000,
            0x1_0001,
            0x7FFF_FFFF,
            0x8000_0000,
            u32::MAX,
        ];
        for a in edge {
            for b in edge {
                assert_eq!(mul_u32(a, b), u64::from(a) * u64::from(b), "{a} {b}");
                assert_eq!(mul_u32_parts(a, b), u64::from(a) * u64::from(b), "{a} {b}");
            }
        }
        let signed = [0i32, 1, -1, i32::MAX, i32::MIN, 12_345, -65_536, 1 << 30];
        for a in signed {
            for b in signed {
                assert_eq!(mul_i32(a, b), i64::from(a) * i64::from(b), "{a} {b}");
            }
        }
        let mut w = Wide::new(i128::from(u64::MAX) - 3);
        w.add_u64(10);
        assert_eq!(w.get(), i128::from(u64::MAX) + 7);
    }

    #[test]
    fn wide_round_trips() {
        for v in [
            0i128,
            1,
            -1,
            i128::from(u64::MAX) + 5,
            -(1 << 100),
            1 << 126,
        ] {
            assert_eq!(Wide::new(v).get(), v);
        }
    }

    #[test]
    fn constant_series_has_zero_sd() {
        let mut m = Moments::new();
        for _ in 0..600 {
            m.push(-123_456);
        }
        let s = m.finish(600).unwrap();
        assert_eq!(s.sd, 0.0);
        assert_eq!(s.mean, -123_456.0);
    }

    #[test]
    fn extreme_quanta_do_not_overflow() {
        let mut m = Moments::new();
        for i in 0..10_000 {
            m.push(if i % 2 == 0 { i32::MAX } else { i32::MIN });
        }
        let s = m.finish(10_000).unwrap();
        assert_eq!(s.min, i32::MIN);
        assert_eq!(s.max, i32::MAX);
        assert!((s.sd - 2_147_483_647.5).abs() < 1.0);
    }

    #[test]
    fn empty_has_no_stats() {
        assert_eq!(Moments::new().finish(0), None);
    }
}
