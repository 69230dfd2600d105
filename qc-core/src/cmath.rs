//! Rounding functions as `const fn`, so that a station's [`crate::Layout`] can
//! be validated at compile time (and kept in flash by a logger).
//!
//! Each gives the same result as its `libm` counterpart for every `f64`
//! (checked in the tests): below 2^52 the truncation by an integer conversion
//! is exact, and at or above it every `f64` is already a whole number.

/// 2^52: from here on every `f64` is a whole number.
const WHOLE: f64 = 4_503_599_627_370_496.0;

/// `x` rounded toward zero (`libm::trunc`).
pub(crate) const fn trunc(x: f64) -> f64 {
    if x.is_nan() || x.abs() >= WHOLE {
        return x;
    }
    let t = x as i64 as f64;
    // Keep the sign of a zero, as libm does (-0.4 -> -0.0).
    if t == 0.0 && x.is_sign_negative() {
        -0.0
    } else {
        t
    }
}

/// The largest whole number not above `x` (`libm::floor`).
pub(crate) const fn floor(x: f64) -> f64 {
    let t = trunc(x);
    if t > x {
        t - 1.0
    } else {
        t
    }
}

/// The smallest whole number not below `x` (`libm::ceil`).
pub(crate) const fn ceil(x: f64) -> f64 {
    let t = trunc(x);
    if t < x {
        // (-0.5).ceil() is -0.0 in libm.
        if t == 0.0 && x < 0.0 {
            -0.0
        } else {
            t + 1.0
        }
    } else {
        t
    }
}

/// `x` rounded to the nearest whole number, halves away from zero (`libm::round`).
pub(crate) const fn round(x: f64) -> f64 {
    if x.is_nan() || x.abs() >= WHOLE {
        return x;
    }
    let t = trunc(x);
    // Exact: t and x agree in sign and magnitude down to the units.
    let d = x - t;
    if d >= 0.5 {
        t + 1.0
    } else if d <= -0.5 {
        t - 1.0
    } else {
        t
    }
}

/// `n.div_euclid(d)` for `d > 0`, by shifts and subtractions: a Cortex-M0 has
/// no divide instruction, and a logger that only samples ([`Sampler`]) then
/// links no 64-bit division routine (900 bytes). Called once per interval;
/// one step per significant bit of `n`.
pub(crate) const fn div_floor(n: i64, d: i64) -> i64 {
    // For n < 0: floor(n / d) = -(floor((-n - 1) / d) + 1) = !floor(!n / d).
    let neg = n < 0;
    let m = if neg { !n as u64 } else { n as u64 };
    let d = d as u64;
    let mut q = 0u64;
    let mut r = 0u64;
    let mut i = 64 - m.leading_zeros();
    while i > 0 {
        i -= 1;
        r = (r << 1) | ((m >> i) & 1);
        q <<= 1;
        if r >= d {
            r -= d;
            q |= 1;
        }
    }
    if neg {
        !(q as i64)
    } else {
        q as i64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn same(a: f64, b: f64) -> bool {
        a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan())
    }

    #[test]
    fn agree_with_libm_bit_for_bit() {
        // Reference: the libm crate 0.2.16 (a port of FreeBSD msun), which the
        // core uses everywhere else; every bit, the sign of zero included.
        let mut values = std::vec![
            0.0,
            -0.0,
            0.5,
            -0.5,
            1.5,
            -1.5,
            2.5,
            0.49999999999999994,
            -0.49999999999999994,
            4_503_599_627_370_495.5,
            -4_503_599_627_370_495.5,
            4_503_599_627_370_496.0,
            1e300,
            -1e300,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
            f64::MIN_POSITIVE,
            -f64::MIN_POSITIVE,
            9.223_372_036_854_776e18,
        ];
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..200_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            values.push(f64::from_bits(x));
            let scale = [1.0, 100.0, 1e6, 3e9, 1e17][(x % 5) as usize];
            values.push(((x >> 11) as f64 / (1u64 << 53) as f64 - 0.5) * scale);
            values.push((x % 2_000_001) as f64 / 4.0 - 250_000.0);
        }
        for v in values {
            assert!(same(trunc(v), libm::trunc(v)), "trunc {v:e}");
            assert!(same(floor(v), libm::floor(v)), "floor {v:e}");
            assert!(same(ceil(v), libm::ceil(v)), "ceil {v:e}");
            assert!(same(round(v), libm::round(v)), "round {v:e}");
        }
    }

    #[test]
    fn div_floor_is_div_euclid() {
        let mut rng = crate::test_rng::Rng(7);
        let ds = [1i64, 2, 3, 1000, 60_000, 600_000, 86_400_000];
        for i in 0..200_000u64 {
            let n = match i % 4 {
                0 => rng.next() as i64,
                1 => rng.wide() as i64,
                2 => -(rng.wide() as i64),
                _ => (rng.next() % 2_000_001) as i64 - 1_000_000,
            };
            let d = ds[(i % ds.len() as u64) as usize];
            assert_eq!(div_floor(n, d), n.div_euclid(d), "{n} / {d}");
        }
        for n in [i64::MIN, i64::MIN + 1, -1, 0, 1, i64::MAX] {
            for d in ds {
                assert_eq!(div_floor(n, d), n.div_euclid(d), "{n} / {d}");
            }
        }
    }
}
