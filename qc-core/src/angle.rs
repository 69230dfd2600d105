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
    let (quadrant, r) = quadrant_of(cd);
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
    rotate(quadrant, s, c)
}

/// `(sin, cos)` of `r` centidegrees of the first quadrant (`0..9_000`), Q30,
/// as [`sin_cos_q30`] computes them: its tables, its split into whole degrees
/// and hundredths and its rounding, at compile time (for [`TURN_SIN_Q30`]).
const fn quadrant_q30(r: usize) -> (i32, i32) {
    let deg = (r as u32 * 5_243) >> 19;
    let centi = r - 100 * deg as usize;
    let deg = deg as usize;
    let (sd, cd_) = (SIN_DEG[deg] as u32, SIN_DEG[90 - deg] as u32);
    let (sc, cc) = (SIN_CENTI[centi] as u32, COS_CENTI[centi] as u32);
    let s = round_q60((mul_u32(sd, cc) + mul_u32(cd_, sc)) as i64) as i32;
    let c = round_q60(mul_u32(cd_, cc) as i64 - mul_u32(sd, sc) as i64) as i32;
    (s, c)
}

/// Centidegrees [`TURN_SIN_Q30`] holds: a turn and a quarter, so that the
/// cosine of `0..36_000` is the sine a quarter turn on.
const TURN_SIN_LEN: usize = (FULL_TURN_CD + QUARTER_CD) as usize;

/// The sine of every centidegree of a turn and a quarter (`0..45_000`), Q30,
/// as [`sin_cos_q30`] computes it: [`quadrant_q30`] turned into each quadrant
/// by [`rotate`]'s signs and swap, at compile time (180,000 bytes of
/// read-only data in the host binary only; a logger never links it). The
/// cosine of `cd` is the entry `cd + 9_000`: [`rotate`] of the next quadrant
/// gives as its sine what it gives as the cosine of this one (`c`, `-s`,
/// `-c`, `s` for quadrants 0 to 3). For the host's block path
/// ([`sin_cos_q30_table`]).
static TURN_SIN_Q30: [i32; TURN_SIN_LEN] = {
    let mut t = [0i32; TURN_SIN_LEN];
    let mut cd = 0;
    while cd < TURN_SIN_LEN {
        // `quadrant_of` and `rotate`'s sine, by hand (a `const` context).
        let quadrant = (cd / QUARTER_CD as usize) % 4;
        let (s, c) = quadrant_q30(cd % QUARTER_CD as usize);
        t[cd] = match quadrant {
            0 => s,
            1 => c,
            2 => -s,
            _ => -c,
        };
        cd += 1;
    }
    t
};

/// [`sin_cos_q30`] by two look-ups in [`TURN_SIN_Q30`] (the sine at `cd`
/// and at `cd + 9_000`) instead of four table reads and four products, and
/// with no quadrant to find: the same pair for every `cd` (checked for every
/// centidegree of three turns, `table_is_sin_cos_q30`). A direction outside
/// `0..36_000` takes [`sin_cos_q30`] (out of line; the block path's
/// directions are wrapped into a turn before). For the host's block path,
/// which pushes a column of directions at once.
#[inline(always)]
pub(crate) fn sin_cos_q30_table(cd: i32) -> (i32, i32) {
    let i = cd as u32 as usize;
    match (
        TURN_SIN_Q30.get(i),
        TURN_SIN_Q30.get(i + QUARTER_CD as usize),
    ) {
        // `cd + 9_000` is in the table for `0 <= cd < 36_000` only.
        (Some(&s), Some(&c)) => (s, c),
        _ => sin_cos_q30_cold(cd),
    }
}

/// [`sin_cos_q30`] out of line, for [`sin_cos_q30_table`]'s directions
/// outside a turn.
#[cold]
#[inline(never)]
fn sin_cos_q30_cold(cd: i32) -> (i32, i32) {
    sin_cos_q30(cd)
}

/// `cd`'s quadrant (0 to 3) and its angle within it (`0..QUARTER_CD`), for
/// [`sin_cos_q30`]: comparisons, not
/// `r / QUARTER_CD` (nor a loop the compiler turns into one).
#[inline(always)]
fn quadrant_of(cd: i32) -> (i32, i32) {
    let mut r = cd;
    if !(0..FULL_TURN_CD).contains(&r) {
        r = reduce_turn(r);
    }
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
    (quadrant, r - quadrant * QUARTER_CD)
}

/// `(sin, cos)` of the first quadrant turned into `quadrant`.
#[inline(always)]
fn rotate(quadrant: i32, s: i32, c: i32) -> (i32, i32) {
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

// ---------------------------------------------------------------------------
// Integer arctangent and square root
//
// The statistics of direction need `atan2` (the mean direction), `asin`
// (Yamartino's sigma-theta) and square roots. In software `f64`, as on a
// Cortex-M0, `libm`'s versions cost thousands of instructions each. The
// functions below compute them from exact integers instead: the arctangent by
// CORDIC in vectoring mode (Volder 1959, IRE Trans. Electronic Computers
// EC-8(3)); the square root, and the reciprocal `1/n` used to divide by the
// sample count, by Newton steps from small table seeds. They use integer
// shifts, additions, comparisons and 32 x 32-bit multiplies only (the
// multiplies from 16-bit parts on a Cortex-M0, as [`mul_u32`] does), so they
// give the same bits on every target; `f64` appears only in the final
// conversions.

/// Fractional bits of the angles below: one unit is `2^-55` degree (about
/// `2.8e-17` degree), so a full turn, `360 << 55`, fits in a `u64`.
pub const ANGLE_FRAC_BITS: u32 = 55;

/// 45 degrees in angle units.
const EIGHTH_TURN: u64 = 45 << ANGLE_FRAC_BITS;

/// 90 degrees in angle units.
pub const QUARTER_TURN: u64 = 90 << ANGLE_FRAC_BITS;

/// 180 degrees in angle units.
pub const HALF_TURN: u64 = 180 << ANGLE_FRAC_BITS;

/// 360 degrees in angle units.
pub const FULL_TURN: u64 = 360 << ANGLE_FRAC_BITS;

/// CORDIC turns by `atan(2^-i)`, `i = 0..STEPS`. After them the angle left is
/// below `2^-23` radian, small enough that `atan(t) = t` to `2^-70`: one
/// division finishes the job.
const STEPS: usize = 24;

/// Fractional bits of the compile-time fixed point below.
const Q: u32 = 120;

/// `atan(1 / m)` in Q120 radians by its Taylor series, in integers (compile
/// time only; each term is truncated, so the sum is within about 40 units of
/// `2^-120`).
const fn atan_recip_q120(m: u128) -> u128 {
    let m2 = m * m;
    let mut p = (1u128 << Q) / m; // m^-(2k+1) in Q120
    let mut sum = 0u128;
    let mut k = 0u128;
    while p != 0 {
        let term = p / (2 * k + 1);
        if k % 2 == 0 {
            sum += term;
        } else {
            sum -= term;
        }
        p /= m2;
        k += 1;
    }
    sum
}

/// pi in Q120, by Machin's formula `pi = 16 atan(1/5) - 4 atan(1/239)` (compile time only).
const PI_Q120: u128 = 16 * atan_recip_q120(5) - 4 * atan_recip_q120(239);

/// `atan(2^-i)` in angle units, rounded, for `i` in `0..STEPS` (compile time only).
const ATAN_STEP: [i64; STEPS] = {
    let mut t = [0i64; STEPS];
    // The radians are in Q120 (below 2^120 * 0.79), so times 180 stays below
    // 2^128; dividing by pi in Q65 leaves degrees in Q55.
    let pi_q65 = PI_Q120 >> (Q - 65);
    let mut i = 0;
    while i < STEPS {
        let rad = if i == 0 {
            PI_Q120 / 4
        } else {
            atan_recip_q120(1u128 << i)
        };
        t[i] = ((rad * 180 + pi_q65 / 2) / pi_q65) as i64;
        i += 1;
    }
    t
};

/// Angle units per radian times `2^-54 * 2^25`, rounded: `(360 / pi) * 2^25`
/// (below 2^32). The division step yields `t * 2^54`; times this and shifted
/// down by 25 it is `t` radians in angle units.
const RAD_Q54_TO_UNITS_Q25: u32 = {
    let pi_q75 = PI_Q120 >> (Q - 75);
    (((360u128 << 100) + pi_q75 / 2) / pi_q75) as u32
};

/// Integer square root of a `u128`, rounded down (for compile-time tables).
pub(crate) const fn isqrt_u128_const(v: u128) -> u128 {
    let mut rem = v;
    let mut root = 0u128;
    let mut bit = 1u128 << 126;
    while bit > v {
        bit >>= 2;
    }
    while bit != 0 {
        if rem >= root + bit {
            rem -= root + bit;
            root = (root >> 1) + bit;
        } else {
            root >>= 1;
        }
        bit >>= 2;
    }
    root
}

/// `2^64 / K`, rounded, where `K = prod(sqrt(1 + 2^-2i), i < STEPS)` is the
/// CORDIC gain: the length of the vector after the turns is `K` times the
/// length before.
const INV_GAIN_Q64: u64 = {
    // K^2 in Q120: each factor 1 + 2^-2i is a shift and an add.
    let mut k2 = 1u128 << Q;
    let mut i = 0;
    while i < STEPS {
        k2 += k2 >> (2 * i);
        i += 1;
    }
    // sqrt(K^2 in Q120) is K in Q60, and 2^124 / (K in Q60) is 1/K in Q64.
    let k_q60 = isqrt_u128_const(k2);
    (((1u128 << 124) + k_q60 / 2) / k_q60) as u64
};

/// The high 64 bits of the 128-bit product `a * b`, exact, from 32 x 32-bit
/// partial products ([`mul_u32`]).
pub fn mul_hi_u64(a: u64, b: u64) -> u64 {
    let (ah, al) = ((a >> 32) as u32, a as u32);
    let (bh, bl) = ((b >> 32) as u32, b as u32);
    let ll = mul_u32(al, bl);
    let lh = mul_u32(al, bh);
    let hl = mul_u32(ah, bl);
    let hh = mul_u32(ah, bh);
    // Below 3 * 2^32: cannot overflow.
    let mid = (ll >> 32) + (lh & 0xFFFF_FFFF) + (hl & 0xFFFF_FFFF);
    hh + (lh >> 32) + (hl >> 32) + (mid >> 32)
}

/// `a * a` as a `u128`, exact, from 32 x 32-bit partial products ([`mul_u32`]).
pub fn square_u64(a: u64) -> u128 {
    let (ah, al) = ((a >> 32) as u32, a as u32);
    let hh = u128::from(mul_u32(ah, ah));
    let hl = u128::from(mul_u32(ah, al));
    let ll = u128::from(mul_u32(al, al));
    (hh << 64) + (hl << 33) + ll
}

/// Leading zeros of a `u64` with one 32-bit count (a Cortex-M0 has no
/// count-leading-zeros instruction; the library routine is called per word).
#[inline]
fn lz64(v: u64) -> u32 {
    let hi = (v >> 32) as u32;
    if hi != 0 {
        hi.leading_zeros()
    } else {
        32 + (v as u32).leading_zeros()
    }
}

/// Leading zeros of a `u128`, as [`lz64`].
fn lz128(v: u128) -> u32 {
    let hi = (v >> 64) as u64;
    if hi != 0 {
        lz64(hi)
    } else {
        64 + lz64(v as u64)
    }
}

/// Seeds for [`recip32`]: `2^63 / d` in units of `2^16` at the middle of each
/// of 128 equal steps of `d` in `[2^31, 2^32)` (compile time; within `2^-8`).
static RECIP_SEED: [u16; 128] = {
    let mut t = [0u16; 128];
    let mut k = 0;
    while k < 128 {
        // 2^32 / (1 + (k + 1/2) / 128) / 2^16 = 2^24 / (257 + 2k), rounded.
        let den = 257 + 2 * k as u32;
        t[k] = ((2 * (1u32 << 24) + den) / (2 * den)) as u16;
        k += 1;
    }
    t
};

/// One Newton step toward `2^63 / d`: `y + y (2^63 - d y) / 2^63`, in 32 x
/// 32-bit multiplies (`y` within `2^-6` of it; the relative error is squared,
/// down to about `2^-31`).
#[inline]
fn recip_step(d: u32, y: u32) -> u32 {
    let p = mul_u32(d, y);
    let y1 = if p <= 1 << 63 {
        u64::from(y) + (mul_u32(y, (((1u64 << 63) - p) >> 31) as u32) >> 32)
    } else {
        u64::from(y) - (mul_u32(y, ((p - (1u64 << 63)) >> 31) as u32) >> 32)
    };
    y1.min(u64::from(u32::MAX)) as u32
}

/// `2^63 / d` for `d` in `[2^31, 2^32)`, within about `2^-30` of itself (at
/// most `u32::MAX`): a table seed and two Newton steps, no division.
fn recip32(d: u32) -> u32 {
    let y = u32::from(RECIP_SEED[((d >> 24) & 127) as usize]) << 16;
    recip_step(d, recip_step(d, y))
}

/// `v >> i` for `1 <= i <= 31`, from 32-bit shifts of the two halves (a
/// Cortex-M0 has no 64-bit shift; the generic one is a library call).
#[inline(always)]
fn asr64(v: i64, i: u32) -> i64 {
    let hi = (v >> 32) as i32;
    let lo = v as u32;
    let l = (lo >> i) | ((hi as u32) << (32 - i));
    (i64::from(hi >> i) << 32) | i64::from(l)
}

/// A vector in the first quadrant in polar form, from [`polar`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Polar {
    /// `atan2(y, x)` in units of `2^-55` degree, from 0 to [`QUARTER_TURN`].
    pub angle: u64,
    /// The length of the vector is `len * 2^exp`; `len` is 0 (the zero
    /// vector) or at least `2^57`.
    pub len: u64,
    /// Binary exponent of the length.
    pub exp: i32,
}

/// The angle and length of the vector `(x, y)` with `x, y >= 0`.
///
/// CORDIC in vectoring mode (Volder 1959, IRE Trans. Electronic Computers
/// EC-8(3)): the vector is scaled so that its larger component lies in
/// `[2^58, 2^59)`, reflected into the first octant, and turned toward the x
/// axis by `+-atan(2^-i)`, `i = 0..24`, each turn two shifts and three
/// additions, while the turns are added up from a table. The angle left, below
/// `2^-23` radian, is `y / x` (to `2^-69`), found by a 32-bit reciprocal. `y =
/// 0` gives exactly 0, `y = x` exactly 45 degrees, `x = 0` exactly 90.
///
/// Error: the table entries are rounded to `2^-55` degree, each turn drops
/// less than `2^-58` of the length, and the last division is good to about
/// `2^-52` radian; in all within `2e-14` degree of the exact angle (the tests
/// compare with `libm::atan2`). The length is within about `2^-56` of itself.
pub fn polar(x: u64, y: u64) -> Polar {
    first_quadrant(x, y, true)
}

/// The angle of [`polar`] alone (the same bits), without the length.
pub fn polar_angle(x: u64, y: u64) -> u64 {
    first_quadrant(x, y, false).angle
}

/// [`polar`], with the length only when `with_len` (else `len` is 0).
fn first_quadrant(x: u64, y: u64, with_len: bool) -> Polar {
    let (big, small, swapped) = if y > x { (y, x, true) } else { (x, y, false) };
    if big == 0 {
        return Polar {
            angle: 0,
            len: 0,
            exp: 0,
        };
    }
    // Scale so that big is in [2^58, 2^59): the length then stays below
    // sqrt(2) * 1.65 * 2^59 < 2^61 through the turns.
    let shift = lz64(big) as i32 - 5;
    let (bx, by) = if shift >= 0 {
        (big << shift, small << shift)
    } else {
        (big >> -shift, small >> -shift)
    };
    let (octant_angle, len) = if by == 0 {
        (0, bx)
    } else {
        let (z, len) = vectoring(bx, by, with_len);
        let a = if by == bx {
            EIGHTH_TURN
        } else {
            z.clamp(0, EIGHTH_TURN as i64) as u64
        };
        (a, len)
    };
    Polar {
        angle: if swapped {
            QUARTER_TURN - octant_angle
        } else {
            octant_angle
        },
        len,
        exp: -shift,
    }
}

/// CORDIC turn `i` (1 to 23) on `x` and `w = y 2^i`: turns by `-atan(2^-i)`
/// when `y >= 0`, else by `+atan(2^-i)`, and adds that to `z`. `w' = 2 (w -+
/// x)` is exact; `x` moves by `y 2^-i = w 2^-2i`, shifted down.
#[inline(always)]
fn turn(x: &mut i64, w: &mut i64, z: &mut i64, i: usize) {
    let a = ATAN_STEP.get(i).copied().unwrap_or(0);
    let s = 2 * i as u32;
    // |w| < 2^61, so past 32 bits of shift the result fits the high word.
    let dx = if s < 32 {
        asr64(*w, s)
    } else {
        i64::from(((*w >> 32) as i32) >> (s - 32))
    };
    if *w >= 0 {
        *w = (*w - *x) * 2;
        *x += dx;
        *z += a;
    } else {
        *w = (*w + *x) * 2;
        *x -= dx;
        *z -= a;
    }
}

/// The CORDIC turns for `0 < y <= x`, `x` in `[2^58, 2^59)`: returns the
/// angle, in units of `2^-55` degree, and the length of `(x, y)` (same scale;
/// 0 unless `with_len`).
///
/// After turn `i` the angle left is below `atan(2^-i)`, so `|y| < x 2^-i`; `y`
/// is kept as `w = y 2^i`, which stays below `2x` in magnitude (see [`turn`]).
fn vectoring(x0: u64, y0: u64, with_len: bool) -> (i64, u64) {
    // Turn 0, by -45 degrees (y0 > 0).
    let mut x = (x0 + y0) as i64;
    let mut w = (y0 as i64 - x0 as i64) * 2;
    let mut z = ATAN_STEP[0];
    // Turns 1 to 23 in a loop (unrolled, they cost 2.5 KB of flash on a
    // Cortex-M0 for some 700 instructions less per interval).
    let mut i = 1;
    while i < 24 {
        turn(&mut x, &mut w, &mut z, i);
        i += 1;
    }
    // Now x is in [2^58.7, 2^60.3) and t = |y| / x = |w| / (x 2^24) < 2^-23.
    // With the top 32 bits of x, d = x 2^-sx, and r = |w| 2^-(sx + 2) < d / 2:
    // q = r (2^63 / d) 2^-31 = t 2^54, within 2 units.
    let ux = x as u64;
    let sx = if ux >> 60 != 0 {
        29
    } else if ux >> 59 != 0 {
        28
    } else {
        27
    };
    let d = (ux >> sx) as u32;
    let r = (w.unsigned_abs() >> (sx + 2)).min(u64::from(d >> 1)) as u32;
    let q = (mul_u32(r, recip32(d)) >> 31) as u32;
    // atan(t) = t - t^3 / 3 + ..., and t^3 < 2^-69: t in angle units.
    let rest = (mul_u32(q, RAD_Q54_TO_UNITS_Q25) >> 25) as i64;
    z += if w < 0 { -rest } else { rest };
    if !with_len {
        return (z, 0);
    }
    // |(x, y)| = x sqrt(1 + t^2) = x (1 + t^2 / 2) to 2^-92; then less the gain.
    let q2 = mul_u32(q, q);
    let stretch = mul_u32((ux >> 32) as u32, (q2 >> 32) as u32) >> 45;
    (z, mul_hi_u64(ux + stretch, INV_GAIN_Q64))
}

/// Seeds for [`sqrt_u128`]: `1/sqrt(u)` in Q15 at the middle of each of 96
/// steps of `u` in `[1/4, 1)`, `u = (k + 1/2) / 128` (compile time; within
/// `2^-8`): `2^15 sqrt(128 / (k + 1/2)) = sqrt(2^38 / (2k + 1))`.
static RSQRT_SEED: [u16; 96] = {
    let mut t = [0u16; 96];
    let mut k = 0;
    while k < 96 {
        let v = (1u128 << 38) / (2 * (k as u128 + 32) + 1);
        t[k] = isqrt_u128_const(v) as u16;
        k += 1;
    }
    t
};

/// Square root of a `u128` as `(root, exp)`: `sqrt(v)` is within `2^-55` of
/// itself from `root * 2^exp`, with `root` within 32 of `[2^60, 2^61]` (0
/// when `v` is 0).
///
/// `v` is scaled by an even power of two to `w` in `[2^60, 2^62)`. Its
/// reciprocal square root, from a table and three Newton steps `g' = g (3 -
/// u g^2) / 2` in 32-bit fixed point, gives `sqrt(w) = w g` to about `2^-29`;
/// one Newton step for the root itself, on the exact remainder `w - s^2`,
/// brings that to `2^-55`. No division.
pub fn sqrt_u128(v: u128) -> (u64, i32) {
    if v == 0 {
        return (0, 0);
    }
    // Even shift that brings the top bit to 60 or 61.
    let top = 127 - lz128(v) as i32;
    let shift = (top - 60) & !1;
    let w = if shift >= 0 {
        (v >> shift) as u64
    } else {
        (v << -shift) as u64
    };
    // u = w / 2^62 in [1/4, 1), as Q32; g ~ 1/sqrt(u) in (1, 2], as Q30.
    let u = (w >> 30) as u32;
    // The index is 0 to 95 (w in [2^60, 2^62)); `get` costs what the bounds
    // check costs and leaves no panic path.
    let seed = RSQRT_SEED.get(((w >> 55) - 32) as usize).copied();
    let mut g = u32::from(seed.unwrap_or(1 << 15)) << 15;
    for _ in 0..3 {
        // h = u g^2 in Q61 (g^2 in Q29 fits 32 bits); g' = g + g (1 - h) / 2.
        let h = mul_u32(u, (mul_u32(g, g) >> 31) as u32);
        g = if h <= 1 << 61 {
            g + (mul_u32(g, (((1u64 << 61) - h) >> 30) as u32) >> 32) as u32
        } else {
            g - (mul_u32(g, ((h - (1u64 << 61)) >> 30) as u32) >> 32) as u32
        };
    }
    // s = sqrt(w) = w g / 2^61 = u g / 2^31, within a few units (31 bits).
    let s = (mul_u32(u, g) >> 31) as u32;
    // sqrt(w) 2^30 = s 2^30 + (w - s^2) 2^29 / s (less than 1/2 unit more),
    // and 2^29 / s = g / 2^32 to 2^-29: |w - s^2| < 2^35, taken as 8 units.
    let e = w as i64 - mul_u32(s, s) as i64;
    let c = mul_u32((e.unsigned_abs() >> 3) as u32, g) >> 29;
    let base = u64::from(s) << 30;
    let root = if e < 0 { base - c } else { base + c };
    (root, shift / 2 - 30)
}

/// `1 / n` as `(m, e)`: `m` in `[2^63, 2^64)` and `1/n = m * 2^e` to
/// `2^-57` (0 is taken as 1): `n` scaled to 32 bits, a 32-bit reciprocal
/// from a table seed and two Newton steps, then one more Newton step, to 64
/// bits, in 32 x 32-bit multiplies; no division.
pub fn recip_u32(n: u32) -> (u64, i32) {
    let n = n.max(1);
    let lz = n.leading_zeros() as i32;
    let d = n << lz;
    if d == 1 << 31 {
        // A power of two: exact.
        return (1 << 63, lz - 94);
    }
    // y ~ 2^63 / d; m = y 2^32 + y (2^63 - d y) / 2^31 ~ 2^95 / d, below
    // 2^64 - 2^33 since d > 2^31. |2^63 - d y| < 2^35, so e / 16 fits 32 bits.
    let y = recip32(d);
    let p = mul_u32(d, y);
    let base = u64::from(y) << 32;
    let m = if p <= 1 << 63 {
        base + (mul_u32(y, (((1u64 << 63) - p) >> 4) as u32) >> 27)
    } else {
        base - (mul_u32(y, ((p - (1u64 << 63)) >> 4) as u32) >> 27)
    };
    (m, lz - 95)
}

/// `|v|` of a finite `v` as `(significand, exponent)`: `|v| = significand * 2^exponent`.
pub fn f64_significand(v: f64) -> (u64, i32) {
    let bits = v.to_bits();
    let field = ((bits >> 52) & 0x7FF) as i32;
    let frac = bits & ((1 << 52) - 1);
    if field == 0 {
        (frac, -1074)
    } else {
        (frac | (1 << 52), field - 1075)
    }
}

/// `v * 2^e` for finite `v`: an exponent change when the result is normal
/// (exact, as the multiplication would be), else `libm::scalbn`.
pub fn scale2(v: f64, e: i32) -> f64 {
    let bits = v.to_bits();
    let field = ((bits >> 52) & 0x7FF) as i32;
    if v == 0.0 {
        return v;
    }
    if field == 0 || field == 0x7FF || !(1..=0x7FE).contains(&(field + e)) {
        return libm::scalbn(v, e);
    }
    f64::from_bits(bits.wrapping_add(((e as i64) << 52) as u64))
}

/// `v * 2^k` as an integer: shifted left (saturating at `u64::MAX`) or right
/// (0 when `k <= -64`).
pub fn shift_u64(v: u64, k: i32) -> u64 {
    if k >= 0 {
        if k >= 64 || v > u64::MAX >> k {
            if v == 0 {
                0
            } else {
                u64::MAX
            }
        } else {
            v << k
        }
    } else if k <= -64 {
        0
    } else {
        v >> -k
    }
}

/// Degrees from `a` units of `2^-shift` degree: `a` rounded once to `f64`,
/// then scaled exactly.
pub fn units_to_deg(a: u64, shift: u32) -> f64 {
    scale2(a as f64, -(shift as i32))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_is_sin_cos_q30() {
        for cd in -36_000..72_000 {
            assert_eq!(sin_cos_q30_table(cd), sin_cos_q30(cd), "{cd}");
        }
        for cd in [i32::MIN, i32::MIN + 1, -1_000_000, 1_000_000, i32::MAX] {
            assert_eq!(sin_cos_q30_table(cd), sin_cos_q30(cd), "{cd}");
        }
    }

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

    use crate::test_rng::Rng;

    #[test]
    fn helpers_match_native_arithmetic() {
        let mut rng = Rng(1);
        for _ in 0..100_000 {
            let (a, b) = (rng.wide(), rng.wide());
            assert_eq!(
                mul_hi_u64(a, b),
                ((u128::from(a) * u128::from(b)) >> 64) as u64
            );
            assert_eq!(square_u64(a), u128::from(a) * u128::from(a));
            assert_eq!(lz64(a), a.leading_zeros());
            let v = (u128::from(a) << 64) | u128::from(b);
            assert_eq!(lz128(v), v.leading_zeros());
            assert_eq!(lz128(u128::from(b)), u128::from(b).leading_zeros());
            for i in 1..32 {
                assert_eq!(asr64(a as i64, i), (a as i64) >> i);
            }
        }
        for v in [0u64, 1, u64::MAX, 1 << 63] {
            assert_eq!(lz64(v), v.leading_zeros());
            assert_eq!(
                mul_hi_u64(v, u64::MAX),
                ((u128::from(v) * u128::from(u64::MAX)) >> 64) as u64
            );
        }
    }

    #[test]
    fn tables_are_right() {
        // 45 degrees exactly, and each entry within one unit of atan(2^-i) from libm.
        assert_eq!(ATAN_STEP[0], EIGHTH_TURN as i64);
        for (i, &a) in ATAN_STEP.iter().enumerate() {
            let want = libm::atan(libm::ldexp(1.0, -(i as i32))) * (180.0 / core::f64::consts::PI);
            let got = a as f64 / (1u64 << ANGLE_FRAC_BITS) as f64;
            let unit = 1.0 / (1u64 << ANGLE_FRAC_BITS) as f64;
            assert!(
                (got - want).abs() <= unit + 1e-15 * want,
                "step {i}: {got} {want}"
            );
        }
        let gain: f64 = (0..STEPS)
            .map(|i| libm::sqrt(1.0 + libm::ldexp(1.0, -2 * i as i32)))
            .product();
        let inv = INV_GAIN_Q64 as f64 / 2f64.powi(64);
        assert!((inv * gain - 1.0).abs() < 1e-15, "{inv} {gain}");
        let pi = (PI_Q120 >> 60) as f64 / 2f64.powi(60);
        assert_eq!(pi, core::f64::consts::PI);
        let k = f64::from(RAD_Q54_TO_UNITS_Q25) / 2f64.powi(25);
        assert!((k - 360.0 / core::f64::consts::PI).abs() < 1e-7);
    }

    #[test]
    fn polar_matches_libm_atan2_and_hypot() {
        // Reference: libm::atan2 and libm::hypot on the components rounded to f64
        // (which alone can move the angle by 2^-53 radian, 6e-15 degree).
        let mut inputs = vec![
            (1u64, 0u64),
            (0, 1),
            (1, 1),
            (2, 1),
            (1, 2),
            (3, 4),
            (4, 3),
            (u64::MAX, 0),
            (0, u64::MAX),
            (u64::MAX, u64::MAX),
            (u64::MAX, 1),
            (1, u64::MAX),
            (u64::MAX, u64::MAX - 1),
            (1 << 58, 1),
            (1 << 62, (1 << 62) - 1),
            ((1 << 62) - 1, 1 << 62),
            (1 << 30, 1 << 30),
            (123_456_789, 1),
        ];
        let mut rng = Rng(7);
        for _ in 0..300_000 {
            // Same scale, different scales, and near the axes and the diagonal.
            let a = rng.wide();
            let b = match rng.next() % 4 {
                0 => rng.wide(),
                1 => a >> (rng.next() % 64),
                2 => a.saturating_add(rng.next() % 1000),
                _ => rng.next() >> (rng.next() % 64),
            };
            inputs.push((a, b));
            inputs.push((b, a));
        }
        let (mut worst_deg, mut worst_len) = (0.0f64, 0.0f64);
        for &(x, y) in &inputs {
            let p = polar(x, y);
            let deg = units_to_deg(p.angle, ANGLE_FRAC_BITS);
            assert!(p.angle <= QUARTER_TURN);
            if x == 0 && y == 0 {
                assert_eq!((p.angle, p.len), (0, 0));
                continue;
            }
            let want = libm::atan2(y as f64, x as f64) * (180.0 / core::f64::consts::PI);
            let e = (deg - want).abs();
            assert!(e <= 5e-14, "({x}, {y}): {deg} vs {want}");
            worst_deg = worst_deg.max(e);
            let len = scale2(p.len as f64, p.exp);
            let want = libm::hypot(x as f64, y as f64);
            let e = (len - want).abs() / want;
            assert!(e <= 4e-16, "({x}, {y}): {len} vs {want}");
            worst_len = worst_len.max(e);
        }
        // Exact where it should be.
        assert_eq!(polar(5, 0).angle, 0);
        assert_eq!(polar(0, 5).angle, QUARTER_TURN);
        assert_eq!(polar(7, 7).angle, EIGHTH_TURN);
        assert_eq!(polar(u64::MAX, u64::MAX).angle, EIGHTH_TURN);
        // The angle alone is the same.
        for &(x, y) in inputs.iter().take(1_000) {
            assert_eq!(polar_angle(x, y), polar(x, y).angle);
        }
        // Worst found: 2.8e-14 degree (one unit in the last place of a result
        // between 64 and 90 degrees) and 2.7e-16 of the length.
        println!("polar vs libm: worst {worst_deg:e} degree, {worst_len:e} relative length");
    }

    #[test]
    fn sqrt_is_within_32_units() {
        let mut rng = Rng(11);
        let mut values = vec![
            1u128,
            2,
            3,
            4,
            5,
            u128::MAX,
            u128::MAX >> 4,
            1 << 124,
            (1 << 124) - 1,
        ];
        for _ in 0..200_000 {
            let v = (u128::from(rng.wide()) << 64) | u128::from(rng.next());
            values.push(v >> (rng.next() % 128));
        }
        let mut worst = 0.0f64;
        for v in values.into_iter().filter(|&v| v != 0) {
            let (root, exp) = sqrt_u128(v);
            assert!(
                ((1 << 60) - 32..=(1 << 61) + 32).contains(&root),
                "{v}: {root}"
            );
            // root / 2^30 against sqrt(w), w = v scaled by 2^-(2 exp + 60) as in the
            // function: (root - 32)^2 <= w 2^60 <= (root + 32)^2 (2^-55 of the root).
            let shift = 2 * (exp + 30);
            let w = if shift >= 0 { v >> shift } else { v << -shift };
            let w60 = w << 60;
            let (lo, hi) = (u128::from(root - 32), u128::from(root + 32));
            assert!(lo * lo <= w60 && w60 <= hi * hi, "{v}: {root} {exp}");
            let got = scale2(root as f64, exp);
            let want = libm::sqrt(v as f64);
            worst = worst.max((got - want).abs() / want);
        }
        assert_eq!(sqrt_u128(0), (0, 0));
        assert!(worst <= 2.3e-16, "{worst:e}");
    }

    #[test]
    fn reciprocal_is_within_2_to_the_minus_57() {
        let mut ns: Vec<u32> = vec![
            1,
            2,
            3,
            5,
            7,
            600,
            36_000,
            (1 << 31) - 1,
            1 << 31,
            (1 << 31) + 1,
        ];
        ns.extend([
            u32::MAX,
            u32::MAX - 1,
            0xAAAA_AAAB,
            0x8000_FFFF,
            0xFFFF_0000,
        ]);
        let mut rng = Rng(3);
        for _ in 0..200_000 {
            ns.push((rng.next() >> (rng.next() % 32)) as u32);
        }
        for k in 0..32 {
            ns.extend([1u32 << k, (1u32 << k).wrapping_sub(1), (1u32 << k) + 1]);
        }
        let mut worst = 0.0f64;
        for n in ns {
            let (m, e) = recip_u32(n);
            assert!(m >= 1 << 63, "{n}");
            // m n 2^e = 1: compare m n with 2^-e exactly.
            let prod = u128::from(m) * u128::from(n.max(1));
            let one = 1u128 << (-e);
            let err = prod.abs_diff(one) as f64 / one as f64;
            assert!(err <= 1.0 / (1u64 << 57) as f64, "{n}: {m} {e}");
            worst = worst.max(err);
        }
        assert_eq!(recip_u32(0), recip_u32(1));
        println!("1/n: worst relative error {worst:e}");
    }

    #[test]
    fn scaling_helpers() {
        assert_eq!(scale2(1.5, 3), 12.0);
        assert_eq!(scale2(0.0, -5), 0.0);
        assert_eq!(scale2(1.0, -1074), libm::ldexp(1.0, -1074));
        assert_eq!(scale2(3.0, 2000), f64::INFINITY);
        assert_eq!(shift_u64(3, 2), 12);
        assert_eq!(shift_u64(3, -1), 1);
        assert_eq!(shift_u64(3, -64), 0);
        assert_eq!(shift_u64(3, 63), u64::MAX);
        assert_eq!(shift_u64(0, 100), 0);
        assert_eq!(f64_significand(1.0), (1 << 52, -52));
        assert_eq!(f64_significand(-0.75), (3 << 51, -53));
        assert_eq!(f64_significand(f64::from_bits(1)), (1, -1074));
        assert_eq!(units_to_deg(FULL_TURN, ANGLE_FRAC_BITS), 360.0);
    }
}
