//! Small aggregation helpers for the report: bins, means, percentiles.
//!
//! The statistics proper (Weibull fits, power density, shear, turbulence
//! categories, independence tests) come from `qc_core::analysis`; what is here
//! only groups and counts interval values to feed them.

/// Arithmetic mean, `None` for no values.
pub fn mean(v: &[f64]) -> Option<f64> {
    (!v.is_empty()).then(|| v.iter().sum::<f64>() / v.len() as f64)
}

/// Population standard deviation (divisor N, as the core's interval sd), `None`
/// for no values.
pub fn sd(v: &[f64]) -> Option<f64> {
    let m = mean(v)?;
    Some((v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / v.len() as f64).sqrt())
}

/// Percentile `p` (0 to 100) by linear interpolation between closest ranks,
/// the default method of `numpy.percentile` ("linear", Hyndman and Fan type 7).
/// Sorts `v` in place. `None` for no values.
pub fn percentile(v: &mut [f64], p: f64) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let h = (v.len() - 1) as f64 * (p / 100.0).clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(v.len() - 1);
    Some(v[lo] + (h - lo as f64) * (v[hi] - v[lo]))
}

/// Mean wind power density from speeds, `0.5 rho mean(v^3)`, W/m^2.
pub fn power_density(speeds: &[f64], rho: f64) -> Option<f64> {
    mean(&speeds.iter().map(|v| v * v * v).collect::<Vec<_>>()).map(|m| 0.5 * rho * m)
}

/// Equal-width bins `[lo + i w, lo + (i+1) w)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Bins {
    /// Lower edge of the first bin.
    pub lo: f64,
    /// Width.
    pub width: f64,
    /// Number of bins; values beyond the last bin go into it, below the first into it.
    pub n: usize,
}

impl Bins {
    /// Bins of `width` covering `[floor(min/w) w, max]`, at most `cap` bins
    /// (the last then holds everything above). `None` without finite values.
    pub fn covering(values: impl Iterator<Item = f64>, width: f64, cap: usize) -> Option<Bins> {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for v in values.filter(|v| v.is_finite()) {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        if !lo.is_finite() {
            return None;
        }
        let lo = (lo / width).floor() * width;
        let n = (((hi - lo) / width).floor() as usize + 1).clamp(1, cap.max(1));
        Some(Bins { lo, width, n })
    }

    /// Bin of a value (clamped to the first and last bin).
    pub fn of(&self, v: f64) -> usize {
        let i = ((v - self.lo) / self.width).floor();
        if i < 0.0 {
            0
        } else {
            (i as usize).min(self.n - 1)
        }
    }

    /// Lower edge of bin `i`.
    pub fn low(&self, i: usize) -> f64 {
        self.lo + i as f64 * self.width
    }

    /// A label like `4-6` or `>= 20` for the open last bin.
    pub fn label(&self, i: usize, open_last: bool) -> String {
        let a = self.low(i);
        if open_last && i + 1 == self.n && self.n > 1 {
            format!(">= {}", trim(a))
        } else {
            format!("{}-{}", trim(a), trim(a + self.width))
        }
    }
}

/// A number without needless decimals (for bin labels).
pub fn trim(x: f64) -> String {
    let s = format!("{x:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.into()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentile_matches_numpy_linear() {
        // numpy 2.4.6: np.percentile([1, 2, 3, 4, 10], 90) -> 7.6 and
        // np.percentile([3, 1, 2], 50) -> 2.0; np.percentile([5], 90) -> 5.0
        // (default method "linear").
        assert!((percentile(&mut [1.0, 2.0, 3.0, 4.0, 10.0], 90.0).unwrap() - 7.6).abs() < 1e-12);
        assert_eq!(percentile(&mut [3.0, 1.0, 2.0], 50.0), Some(2.0));
        assert_eq!(percentile(&mut [5.0], 90.0), Some(5.0));
        assert_eq!(percentile(&mut [], 90.0), None);
    }

    #[test]
    fn bins_and_labels() {
        let b = Bins::covering([0.3, 7.9, 3.0].into_iter(), 2.0, 50).unwrap();
        assert_eq!(
            b,
            Bins {
                lo: 0.0,
                width: 2.0,
                n: 4
            }
        );
        assert_eq!(
            (b.of(0.0), b.of(1.999), b.of(2.0), b.of(99.0), b.of(-1.0)),
            (0, 0, 1, 3, 0)
        );
        assert_eq!(b.label(1, true), "2-4");
        assert_eq!(b.label(3, true), ">= 6");
        assert_eq!(trim(-0.0), "0");
        assert_eq!(trim(2.5), "2.5");
        // Common practice check: 0.5 rho v^3 at 8 m/s, rho 1.225 -> 313.6 W/m^2.
        assert!((power_density(&[8.0], 1.225).unwrap() - 313.6).abs() < 1e-9);
        assert_eq!(sd(&[2.0, 4.0]), Some(1.0));
    }
}
