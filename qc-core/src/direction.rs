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

use crate::angle::{sin_cos_q30, to_deg, ONE_Q30};
use crate::moments::{mul_i32, Wide};

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
    sin: i64,
    cos: i64,
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

    /// Adds the sums of `other`.
    pub fn merge(&mut self, other: &Self) {
        self.sin += other.sin;
        self.cos += other.cos;
    }

    /// Statistics of `n` samples, `None` when `n` is 0.
    pub fn finish(&self, n: u32) -> Option<DirectionStats> {
        if n == 0 {
            return None;
        }
        // atan2 does not depend on the common scale of its arguments, so the sums
        // go in as they are; one division gives r^2 (each f64 division costs
        // hundreds of instructions on a core without an FPU).
        let (s, c) = (self.sin as f64, self.cos as f64);
        let scale = ONE_Q30 as f64 * f64::from(n);
        let r2 = (s * s + c * c) / (scale * scale);
        let r = libm::sqrt(r2);
        let mean_deg = (r >= MIN_RESULTANT).then(|| from_atan2_deg(libm::atan2(s, c)));
        let sigma_deg = if 1.0 - r2 <= SPREAD_FLOOR {
            0.0
        } else {
            yamartino_deg(r2)
        };
        Some(DirectionStats {
            mean_deg,
            sigma_deg,
            resultant_length: r.min(1.0),
        })
    }
}

/// Degrees in [0, 360) from an `atan2` result in [-pi, pi].
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

/// Yamartino's sigma-theta from the squared mean resultant length `sa^2 + ca^2`:
/// `eps = sqrt(1 - (sa^2 + ca^2))`, `sigma = asin(eps) (1 + (2/sqrt(3) - 1) eps^3)`
/// (Yamartino 1984, eq. as reproduced in EPA-454/R-99-005 sec. 6.2.1).
/// `eps` is clamped at 0, since rounding can make `1 - r^2` slightly negative.
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
    q_sin: Wide,
    q_cos: Wide,
    sin: i64,
    cos: i64,
    n: u32,
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
    pub fn finish(&self, offset: f64, step: f64) -> Option<Resultant> {
        if self.n == 0 {
            return None;
        }
        let scale = ONE_Q30 as f64 * f64::from(self.n);
        // The wind blows toward -(Ve, Vn): the direction it comes from is
        // atan2(Ve, Vn) + 180, i.e. atan2 of the sums without their minus signs.
        let e = offset * self.sin as f64 + step * self.q_sin.get() as f64;
        let m = offset * self.cos as f64 + step * self.q_cos.get() as f64;
        let speed = libm::sqrt(e * e + m * m) / scale;
        let direction_deg = (speed >= MIN_RESULTANT).then(|| from_atan2_deg(libm::atan2(e, m)));
        Some(Resultant {
            speed,
            direction_deg,
            pairs: self.n,
        })
    }
}
