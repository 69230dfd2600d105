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
}
