//! Exact integer sines and cosines of directions in hundredths of a degree.
//!
//! A direction enters the core as an integer number of centidegrees in
//! `0..36_000`. Its unit vector is looked up, not computed with floating point,
//! so that summing unit vectors is integer addition: exact, independent of order,
//! and the same on every target. The values are fixed point with 30 fractional
//! bits (Q30: `1.0 == 1 << 30`).
//!
//! Memory: two small tables (91 whole degrees, 100 hundredths), 1,164 bytes of
//! read-only data, built at compile time by [`const fn`] Taylor series, which the
//! compiler evaluates in software floating point, identically for every target.
//! The angle is split as `a + b` (whole degrees, hundredths) and combined with the
//! angle-sum identities in 64-bit integers, so each component is within about
//! `2e-9` of the true value (checked against `libm` in the tests).

/// One in Q30 fixed point.
pub const ONE_Q30: i64 = 1 << 30;

/// Centidegrees in a full turn.
pub const FULL_TURN_CD: i32 = 36_000;

const QUARTER_CD: i32 = 9_000;

use crate::moments::mul_u32;

/// sin of whole degrees 0..=90, Q30.
static SIN_DEG: [i32; 91] = {
    let mut t = [0i32; 91];
    let mut i = 0;
    while i <= 90 {
        t[i] = q30(taylor_sin(i as f64 * DEG));
        i += 1;
    }
    t
};

/// sin and cos of hundredths of a degree 0..=99, Q30.
static SIN_CENTI: [i32; 100] = {
    let mut t = [0i32; 100];
    let mut i = 0;
    while i < 100 {
        t[i] = q30(taylor_sin(i as f64 * DEG / 100.0));
        i += 1;
    }
    t
};

static COS_CENTI: [i32; 100] = {
    let mut t = [0i32; 100];
    let mut i = 0;
    while i < 100 {
        t[i] = q30(taylor_cos(i as f64 * DEG / 100.0));
        i += 1;
    }
    t
};

const DEG: f64 = core::f64::consts::PI / 180.0;

/// sin x for 0 <= x <= pi/2 by its Taylor series (compile time only).
const fn taylor_sin(x: f64) -> f64 {
    let mut term = x;
    let mut sum = x;
    let mut k = 1;
    while k < 20 {
        term = -term * x * x / ((2 * k) as f64 * (2 * k + 1) as f64);
        sum += term;
        k += 1;
    }
    sum
}

/// cos x for 0 <= x <= pi/2 by its Taylor series (compile time only).
const fn taylor_cos(x: f64) -> f64 {
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1;
    while k < 20 {
        term = -term * x * x / ((2 * k - 1) as f64 * (2 * k) as f64);
        sum += term;
        k += 1;
    }
    sum
}

/// Rounds a value in [0, 1] to Q30.
const fn q30(v: f64) -> i32 {
    let scaled = v * ONE_Q30 as f64 + 0.5;
    scaled as i32
}

/// Rounds a Q60 product sum to Q30 (non-negative inputs).
const fn round_q60(x: i64) -> i64 {
    (x + (1 << 29)) >> 30
}

/// `(sin, cos)` of a direction in centidegrees, Q30.
///
/// Any `i32` is accepted and reduced modulo a full turn first.
pub fn sin_cos_cd(cd: i32) -> (i64, i64) {
    let (s, c) = sin_cos_q30(cd);
    (i64::from(s), i64::from(c))
}

/// [`sin_cos_cd`] as `i32` (every component is within `[-2^30, 2^30]`).
///
/// No division on the path of a direction in `0..36_000`: a Cortex-M0 has no
/// divide instruction, and its division helper costs more than the rest.
#[inline]
pub(crate) fn sin_cos_q30(cd: i32) -> (i32, i32) {
    let mut r = cd;
    if !(0..FULL_TURN_CD).contains(&r) {
        r = reduce_turn(r);
    }
    // Comparisons, not `r / QUARTER_CD` (nor a loop the compiler turns into one).
    let quadrant = if r >= 2 * QUARTER_CD {
        if r >= 3 * QUARTER_CD {
            3
        } else {
            2
        }
    } else if r >= QUARTER_CD {
        1
    } else {
        0
    };
    r -= quadrant * QUARTER_CD;
    // r / 100 for 0 <= r < 9_000 (checked for every r in the tests).
    let deg = ((r as u32 * 5_243) >> 19) as usize;
    let centi = (r as usize) - 100 * deg;
    // Table values are in [0, 2^30], so the products are unsigned 32 x 32 bits.
    let (Some(&sd), Some(&cd_), Some(&sc), Some(&cc)) = (
        SIN_DEG.get(deg),
        SIN_DEG.get(90 - deg.min(90)),
        SIN_CENTI.get(centi),
        COS_CENTI.get(centi),
    ) else {
        return (0, 0);
    };
    let (sd, cd_, sc, cc) = (sd as u32, cd_ as u32, sc as u32, cc as u32);
    // sin(a + b) and cos(a + b), both in [0, 2^30]: rounded Q60 sums to Q30.
    let s = round_q60((mul_u32(sd, cc) + mul_u32(cd_, sc)) as i64) as i32;
    let c = round_q60(mul_u32(cd_, cc) as i64 - mul_u32(sd, sc) as i64) as i32;
    match quadrant {
        0 => (s, c),
        1 => (c, -s),
        2 => (-s, -c),
        _ => (-c, s),
    }
}

/// `cd` modulo a full turn, out of line: the compiler would otherwise compute
/// the remainder (a division helper call on a Cortex-M0) on every call.
#[cold]
#[inline(never)]
fn reduce_turn(cd: i32) -> i32 {
    cd.rem_euclid(FULL_TURN_CD)
}

/// Normalises degrees into [0, 360).
pub fn normalise_deg(d: f64) -> f64 {
    // Within one turn either side (every caller in this crate), one add or
    // subtract gives what `fmod` would, without its cost in software floating point.
    let mut r = if (-360.0..720.0).contains(&d) {
        if d >= 360.0 {
            d - 360.0
        } else {
            d
        }
    } else {
        libm::fmod(d, 360.0)
    };
    if r < 0.0 {
        r += 360.0;
    }
    if r >= 360.0 {
        r = 0.0;
    }
    r
}

/// Radians to degrees.
pub fn to_deg(rad: f64) -> f64 {
    rad * (180.0 / core::f64::consts::PI)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_matches_libm_everywhere() {
        // Reference: libm 0.2 sin/cos in f64 (a port of FreeBSD msun), rounded to Q30.
        let mut worst = 0i64;
        for cd in 0..FULL_TURN_CD {
            let (s, c) = sin_cos_cd(cd);
            let rad = f64::from(cd) / 100.0 * DEG;
            let rs = libm::round(libm::sin(rad) * ONE_Q30 as f64) as i64;
            let rc = libm::round(libm::cos(rad) * ONE_Q30 as f64) as i64;
            worst = worst.max((s - rs).abs()).max((c - rc).abs());
        }
        // At most 2 units of 2^-30 (about 1.9e-9) from the correctly rounded value.
        assert!(worst <= 2, "worst table error {worst} units of 2^-30");
    }

    #[test]
    fn exact_at_the_cardinal_points() {
        assert_eq!(sin_cos_cd(0), (0, ONE_Q30));
        assert_eq!(sin_cos_cd(9_000), (ONE_Q30, 0));
        assert_eq!(sin_cos_cd(18_000), (0, -ONE_Q30));
        assert_eq!(sin_cos_cd(27_000), (-ONE_Q30, 0));
        assert_eq!(sin_cos_cd(36_000), (0, ONE_Q30));
        assert_eq!(sin_cos_cd(-9_000), (-ONE_Q30, 0));
    }

    #[test]
    fn symmetric_points_cancel_exactly() {
        // Three directions 120 degrees apart: their unit vectors sum to exactly zero,
        // so an undefined mean direction is recognised exactly.
        for start in [0, 1_234, 4_500, 11_999] {
            let (mut s, mut c) = (0, 0);
            for k in 0..3 {
                let (a, b) = sin_cos_cd(start + k * 12_000);
                s += a;
                c += b;
            }
            assert!(s.abs() <= 2 && c.abs() <= 2, "start {start}: {s} {c}");
        }
    }

    #[test]
    fn hundredths_split_without_division() {
        for r in 0..QUARTER_CD {
            assert_eq!(((r as u32 * 5_243) >> 19) as i32, r / 100, "{r}");
        }
    }

    #[test]
    fn normalise() {
        assert_eq!(normalise_deg(-0.0), 0.0);
        assert_eq!(normalise_deg(-90.0), 270.0);
        assert_eq!(normalise_deg(720.5), 0.5);
        assert_eq!(normalise_deg(-1e-20), 0.0);
    }
}
