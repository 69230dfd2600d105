//! An independent, plain two-pass `f64` reference for the interval statistics.
//!
//! Written from the published formulas, not from `qc-core`'s code: it works on
//! engineering values (m/s, degrees) in `f64` with the standard library's math
//! (`sin`, `cos`, `atan2`, `asin`, `sqrt`), keeps whole sample lists in memory,
//! and takes two passes where a formula wants them. It is slow and simple on
//! purpose; the core is fast, streaming and integer. Tests compare the two.
//!
//! Formulas and sources:
//! - mean; standard deviation with divisor N (population form, the form `qc-core`
//!   documents on `ChannelRecord`), computed as `sqrt(sum((x - mean)^2) / N)` in
//!   a second pass; minimum; maximum.
//! - gust: the largest mean of `w` consecutive valid samples, where a missing or
//!   out-of-range sample, or a step in time longer than 1.5 nominal sample
//!   periods, breaks the run (gust = maximum running mean: WMO-No. 8, Part I,
//!   ch. 5; the break rules are common practice).
//! - unit-vector mean direction `atan2(mean sin, mean cos)` in [0, 360)
//!   (US EPA-454/R-99-005 sec. 6.2.2); mean resultant length
//!   `sqrt(mean sin^2 + mean cos^2)`.
//! - Yamartino sigma-theta: `eps = sqrt(1 - (sa^2 + ca^2))`,
//!   `sigma = asin(eps) (1 + (2/sqrt(3) - 1) eps^3)` (Yamartino 1984,
//!   J. Climate Appl. Meteor. 23, 1362-1366; EPA-454/R-99-005 sec. 6.2.1).
//! - speed-weighted resultant: `Ve = -(1/N) sum(u sin th)`,
//!   `Vn = -(1/N) sum(u cos th)`, speed `sqrt(Ve^2 + Vn^2)`, direction
//!   `atan2(Ve, Vn) + 180` (EPA-454/R-99-005 sec. 6.2.2).

/// Arithmetic mean; `None` for no samples.
pub fn mean(xs: &[f64]) -> Option<f64> {
    if xs.is_empty() {
        return None;
    }
    Some(xs.iter().sum::<f64>() / xs.len() as f64)
}

/// Population standard deviation (divisor N), two passes; `None` for no samples.
pub fn sd_population(xs: &[f64]) -> Option<f64> {
    let m = mean(xs)?;
    let ss: f64 = xs.iter().map(|x| (x - m) * (x - m)).sum();
    Some((ss / xs.len() as f64).sqrt())
}

/// Smallest sample; `None` for no samples.
pub fn min(xs: &[f64]) -> Option<f64> {
    xs.iter().copied().reduce(f64::min)
}

/// Largest sample; `None` for no samples.
pub fn max(xs: &[f64]) -> Option<f64> {
    xs.iter().copied().reduce(f64::max)
}

/// The nominal sampling of an interval: its length and how many samples it
/// should hold. The nominal sample period is `interval_ms / samples_per_interval`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Cadence {
    /// Interval length, ms.
    pub interval_ms: i64,
    /// Samples per interval at the nominal rate.
    pub samples_per_interval: u32,
}

impl Cadence {
    /// Whether two consecutive samples `dt_ms` apart leave a gap: `dt` longer
    /// than 1.5 nominal periods, i.e. `dt > 1.5 * interval / n`, compared
    /// exactly as `2 n dt > 3 interval` in integers.
    pub fn is_gap(&self, dt_ms: i64) -> bool {
        2 * i128::from(self.samples_per_interval) * i128::from(dt_ms)
            > 3 * i128::from(self.interval_ms)
    }
}

/// The gust: the largest mean of `w` consecutive valid samples.
///
/// `samples` are `(time ms, value)` in time order; `None` is a missing or
/// out-of-range sample. A `None`, or a time step that [`Cadence::is_gap`], ends
/// a run; windows never span the end of a run. `None` when no run holds `w`
/// samples (or `w` is 0).
pub fn gust(samples: &[(i64, Option<f64>)], w: usize, cadence: Cadence) -> Option<f64> {
    if w == 0 {
        return None;
    }
    // First pass: cut the series into runs of consecutive valid samples.
    let mut runs: Vec<Vec<f64>> = Vec::new();
    let mut current: Vec<f64> = Vec::new();
    let mut last_t: Option<i64> = None;
    for &(t, v) in samples {
        if let Some(prev) = last_t {
            if cadence.is_gap(t - prev) {
                runs.push(std::mem::take(&mut current));
            }
        }
        last_t = Some(t);
        match v {
            Some(x) => current.push(x),
            None => runs.push(std::mem::take(&mut current)),
        }
    }
    runs.push(current);
    // Second pass: every full window of every run.
    let mut best: Option<f64> = None;
    for run in &runs {
        for window in run.windows(w) {
            let m = window.iter().sum::<f64>() / w as f64;
            best = Some(best.map_or(m, |b| b.max(m)));
        }
    }
    best
}

/// Normalises degrees into [0, 360).
pub fn normalise_deg(d: f64) -> f64 {
    let r = d.rem_euclid(360.0);
    if r >= 360.0 {
        0.0
    } else {
        r
    }
}

/// The smaller angle between two directions, degrees, in [0, 180].
pub fn angle_between_deg(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(360.0);
    d.min(360.0 - d)
}

/// Direction statistics of a set of directions.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DirectionStats {
    /// Unit-vector mean direction in [0, 360) (meaningless when
    /// `resultant_length` is about 0).
    pub mean_deg: f64,
    /// Mean resultant length, 0 to 1.
    pub resultant_length: f64,
    /// `1 - (sa^2 + ca^2)` before clamping: `eps^2` of Yamartino's estimator.
    pub eps2: f64,
    /// Yamartino sigma-theta, degrees.
    pub sigma_deg: f64,
}

/// Unit-vector mean, mean resultant length and Yamartino sigma-theta of
/// directions in degrees; `None` for no samples.
pub fn direction_stats(dirs_deg: &[f64]) -> Option<DirectionStats> {
    if dirs_deg.is_empty() {
        return None;
    }
    let n = dirs_deg.len() as f64;
    let sa = dirs_deg.iter().map(|d| d.to_radians().sin()).sum::<f64>() / n;
    let ca = dirs_deg.iter().map(|d| d.to_radians().cos()).sum::<f64>() / n;
    let r2 = sa * sa + ca * ca;
    Some(DirectionStats {
        mean_deg: normalise_deg(sa.atan2(ca).to_degrees()),
        resultant_length: r2.sqrt(),
        eps2: 1.0 - r2,
        sigma_deg: yamartino_deg(r2),
    })
}

/// Yamartino's sigma-theta, degrees, from `sa^2 + ca^2` (squared mean
/// resultant length); `eps` clamped at 0 since rounding can make `1 - r^2`
/// slightly negative.
pub fn yamartino_deg(r2: f64) -> f64 {
    let b = 2.0 / 3.0_f64.sqrt() - 1.0;
    let eps = (1.0 - r2).max(0.0).sqrt();
    (eps.asin() * (1.0 + b * eps.powi(3))).to_degrees()
}

/// The speed-weighted resultant wind vector.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Resultant {
    /// Resultant speed, in the speed's unit.
    pub speed: f64,
    /// Resultant direction (from), [0, 360) (meaningless when `speed` is about 0).
    pub direction_deg: f64,
}

/// The resultant of `(speed, direction deg)` pairs; `None` for no pairs.
pub fn resultant(pairs: &[(f64, f64)]) -> Option<Resultant> {
    if pairs.is_empty() {
        return None;
    }
    let n = pairs.len() as f64;
    let ve = -pairs
        .iter()
        .map(|(u, d)| u * d.to_radians().sin())
        .sum::<f64>()
        / n;
    let vn = -pairs
        .iter()
        .map(|(u, d)| u * d.to_radians().cos())
        .sum::<f64>()
        / n;
    Some(Resultant {
        speed: (ve * ve + vn * vn).sqrt(),
        direction_deg: normalise_deg(ve.atan2(vn).to_degrees() + 180.0),
    })
}

#[cfg(test)]
mod tests {
    //! The reference checked against values worked by hand, so that a mistake in
    //! it cannot hide one in the core.
    use super::*;

    #[test]
    fn moments_by_hand() {
        let xs = [2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0];
        assert_eq!(mean(&xs), Some(5.0));
        // The classic population-sd example: variance 4, sd 2 (common practice).
        assert_eq!(sd_population(&xs), Some(2.0));
        assert_eq!(min(&xs), Some(2.0));
        assert_eq!(max(&xs), Some(9.0));
        assert_eq!(mean(&[]), None);
    }

    #[test]
    fn gust_by_hand() {
        let c = Cadence {
            interval_ms: 600_000,
            samples_per_interval: 600,
        };
        let s = |v: &[Option<f64>]| -> Vec<(i64, Option<f64>)> {
            v.iter()
                .enumerate()
                .map(|(i, x)| (i as i64 * 1000, *x))
                .collect()
        };
        assert_eq!(
            gust(&s(&[Some(1.0), Some(5.0), Some(2.0), Some(9.0)]), 2, c),
            Some(5.5)
        );
        assert_eq!(gust(&s(&[Some(1.0), None, Some(9.0)]), 2, c), None);
        // 1.5 s is not a gap at 1 Hz; 1.501 s is.
        assert!(!c.is_gap(1500));
        assert!(c.is_gap(1501));
        let timed = [(0, Some(1.0)), (1000, Some(1.0)), (2501, Some(10.0))];
        assert_eq!(gust(&timed, 2, c), Some(1.0));
    }

    #[test]
    fn directions_by_hand() {
        let d = direction_stats(&[1.0, 0.0, 359.0]).unwrap();
        assert!(angle_between_deg(d.mean_deg, 0.0) < 1e-12);
        let d = direction_stats(&[90.0, 270.0]).unwrap();
        assert!(d.resultant_length < 1e-15);
        // eps = 1: sigma = (pi/2)(2/sqrt 3) = pi/sqrt(3) rad.
        assert!((d.sigma_deg - (std::f64::consts::PI / 3f64.sqrt()).to_degrees()).abs() < 1e-12);
        let r = resultant(&[(2.0, 0.0), (4.0, 90.0)]).unwrap();
        assert!((r.speed - 5f64.sqrt()).abs() < 1e-12);
        assert!((r.direction_deg - 2f64.atan().to_degrees()).abs() < 1e-12);
        assert_eq!(angle_between_deg(359.0, 1.0), 2.0);
    }
}
