//! Missing-value codes: the station's sentinels, as values and as counts,
//! validated once and matched per reading.

use crate::cmath;
use crate::error::ConfigError;
use crate::limits::MAX_SENTINELS;

/// The station's missing-value codes, as values and as counts.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Sentinels {
    values: [f64; MAX_SENTINELS],
    counts: [i32; MAX_SENTINELS],
    n_values: u8,
    n_counts: u8,
}

impl Sentinels {
    /// No codes.
    pub(crate) const NONE: Sentinels = Sentinels {
        values: [0.0; MAX_SENTINELS],
        counts: [0; MAX_SENTINELS],
        n_values: 0,
        n_counts: 0,
    };

    pub(crate) const fn new(codes: &[Option<f64>; MAX_SENTINELS]) -> Result<Self, ConfigError> {
        let mut s = Sentinels::NONE;
        let mut i = 0;
        while i < MAX_SENTINELS {
            if let Some(v) = codes[i] {
                if v.is_nan() {
                    return Err(ConfigError::Sentinels);
                }
                // The counters are at most `i` (< MAX_SENTINELS); the checks
                // say so to the compiler, so no panic path is left (run at
                // run time by `Layout::rebuild`, under the C interface's
                // link-time no-panic proof).
                if (s.n_values as usize) < MAX_SENTINELS {
                    s.values[s.n_values as usize] = v;
                    s.n_values += 1;
                }
                if cmath::trunc(v) == v
                    && v >= i32::MIN as f64
                    && v <= i32::MAX as f64
                    && (s.n_counts as usize) < MAX_SENTINELS
                {
                    s.counts[s.n_counts as usize] = v as i32;
                    s.n_counts += 1;
                }
            }
            i += 1;
        }
        Ok(s)
    }

    /// Codes as [`Sentinels::values`] and [`Sentinels::counts`] gave them
    /// (the first `n_values` and `n_counts` of each array; the rest zero),
    /// for a layout read back from its image (`Layout::load_image`).
    /// `None` for a count over [`MAX_SENTINELS`].
    pub(crate) const fn from_parts(
        values: [f64; MAX_SENTINELS],
        n_values: u8,
        counts: [i32; MAX_SENTINELS],
        n_counts: u8,
    ) -> Option<Self> {
        if n_values as usize > MAX_SENTINELS || n_counts as usize > MAX_SENTINELS {
            return None;
        }
        Some(Sentinels {
            values,
            counts,
            n_values,
            n_counts,
        })
    }

    /// Whether `v` is a missing-value code.
    // Out of line: only engineering values reach it (already the slow path,
    // in soft floating point), and inlined it costs the raw-count path of
    // `Channel::classify_slow` registers (4 instructions per 8 vanes).
    #[inline(never)]
    pub fn matches_value(&self, v: f64) -> bool {
        // `get`, not indexing: the same one comparison, and no panic path
        // (`n_values` is at most `MAX_SENTINELS` by construction; the
        // link-time no-panic proof, `nopanic_states`, checks no panic is left).
        match self.values.get(..usize::from(self.n_values)) {
            Some(codes) => codes.contains(&v),
            None => false,
        }
    }

    /// The codes as values.
    pub const fn values(&self) -> &[f64] {
        // `split_at_checked`: no panic path (the count is in range by construction).
        match self.values.split_at_checked(self.n_values as usize) {
            Some((codes, _)) => codes,
            None => &[],
        }
    }

    /// The codes that are whole numbers within `i32`, as counts.
    pub const fn counts(&self) -> &[i32] {
        match self.counts.split_at_checked(self.n_counts as usize) {
            Some((codes, _)) => codes,
            None => &[],
        }
    }

    /// Whether raw counts `k` equal a missing-value code.
    #[inline]
    pub fn matches_counts(&self, k: i32) -> bool {
        // As in `matches_value`: no panic path, no extra work.
        match self.counts.get(..usize::from(self.n_counts)) {
            Some(codes) => codes.contains(&k),
            None => false,
        }
    }
}
