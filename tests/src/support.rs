//! Helpers shared by the test files.

use qc_core::{
    ChannelConfig, ChannelRecord, Civil, Layout, Reading, Stat, StationConfig, Timestamp,
};

use crate::reference;

/// Gust-window capacity used by the test stations.
pub const G: usize = 4;

/// Channel order of [`four_channels`].
pub const SPEED: usize = 0;
/// Direction channel linked to [`SPEED`] (speed-weighted resultant).
pub const LINKED: usize = 1;
/// Direction channel without a linked speed.
pub const VANE: usize = 2;
/// Scalar channel (a thermometer at 0.1 C, -50 to 60 C).
pub const SCALAR: usize = 3;

/// Speed resolution of [`four_channels`], m/s per quantum.
pub const SPEED_STEP: f64 = 0.01;
/// Speed quanta per m/s.
pub const SPEED_PER_UNIT: f64 = 100.0;
/// Scalar resolution of [`four_channels`].
pub const SCALAR_STEP: f64 = 0.1;
/// Scalar quanta per unit.
pub const SCALAR_PER_UNIT: f64 = 10.0;
/// Direction quanta (centidegrees) per degree.
pub const CD_PER_DEG: f64 = 100.0;
/// Scalar range of [`four_channels`].
pub const SCALAR_RANGE: (f64, f64) = (-50.0, 60.0);

/// A station with one channel of each kind: speed (0.01 m/s, 0 to 75 m/s,
/// gust window `w`), direction linked to it, direction alone, scalar.
///
/// # Panics
///
/// If `w` is not in `1..=G` (a test's own mistake).
pub fn four_channels(config: StationConfig, w: u16) -> Layout<4> {
    Layout::new::<G>(
        config,
        &[
            ChannelConfig::speed(SPEED_STEP).with_gust_window(w),
            ChannelConfig::direction().with_speed_channel(SPEED as u8),
            ChannelConfig::direction(),
            ChannelConfig::scalar(SCALAR_STEP).with_range(SCALAR_RANGE.0, SCALAR_RANGE.1),
        ],
    )
    .expect("valid test layout")
}

/// 10-minute intervals with `n` samples each, missing-value codes -999 and -9999.
pub fn ten_minutes(n: u32) -> StationConfig {
    StationConfig {
        samples_per_interval: n,
        ..StationConfig::ten_minute_1hz()
    }
}

/// A UTC instant.
///
/// # Panics
///
/// On an impossible date (a test's own mistake).
pub fn utc(year: i32, month: u8, day: u8, hour: u8, minute: u8, second: u8) -> Timestamp {
    Timestamp::from_civil(Civil {
        year,
        month,
        day,
        hour,
        minute,
        second,
        milli: 0,
    })
    .expect("valid test date")
}

/// The bits of a statistic, or why it is absent (as text).
pub fn stat_bits(s: Stat) -> Result<u64, String> {
    match s {
        Stat::Value(v) => Ok(v.to_bits()),
        Stat::Absent(a) => Err(a.name().to_string()),
    }
}

/// The statistics of a record whose value does not depend on sample order:
/// everything but the gust (and the order-dependent screening).
pub fn order_free_stats(r: &ChannelRecord) -> [Result<u64, String>; 8] {
    [
        stat_bits(r.mean),
        stat_bits(r.sd),
        stat_bits(r.min),
        stat_bits(r.max),
        stat_bits(r.ti),
        stat_bits(r.resultant_length),
        stat_bits(r.resultant_speed),
        stat_bits(r.resultant_direction),
    ]
}

/// Checks two records are the same bit for bit, every field included: the
/// `Debug` text prints every field, and prints each `f64` in its shortest form
/// that reads back to the same bits (so `0.0` and `-0.0` differ, as do any two
/// distinct values; `Stat` is never NaN). Statistics are also compared by bits.
pub fn same_record(a: &ChannelRecord, b: &ChannelRecord) -> Result<(), String> {
    let (da, db) = (format!("{a:?}"), format!("{b:?}"));
    if da != db {
        return Err(format!("records differ:\n  {da}\n  {db}"));
    }
    if order_free_stats(a) != order_free_stats(b) || stat_bits(a.gust) != stat_bits(b.gust) {
        return Err(format!("statistics differ in bits:\n  {da}\n  {db}"));
    }
    Ok(())
}

/// The value of a statistic, panicking with `what` if it is absent.
///
/// # Panics
///
/// When the statistic is absent.
pub fn value(s: Stat, what: &str) -> f64 {
    match s {
        Stat::Value(v) => v,
        Stat::Absent(a) => panic!("{what}: absent ({})", a.name()),
    }
}

/// Bound on how far one unit vector from the core's Q30 tables lies from the
/// true `(sin, cos)`: `2^-29` (checked over every 0.01-degree direction in
/// `properties.rs`; the worst is about 1.6e-9). A mean of such vectors is then
/// within the same bound of the true mean vector.
pub const TABLE_VECTOR_ERROR: f64 = 1.0 / (1u64 << 29) as f64;

/// Widest difference in unit-vector mean direction (degrees) that table
/// rounding of up to `delta` in the mean vector can cause when the true mean
/// resultant length is `r`: `asin(delta / (r - delta))`; 180 when `r <= 2 delta`.
pub fn mean_direction_band_deg(r: f64, delta: f64) -> f64 {
    if r <= 2.0 * delta {
        return 180.0;
    }
    (delta / (r - delta)).min(1.0).asin().to_degrees()
}

/// Widest difference in Yamartino sigma-theta (degrees) that a mean vector off
/// by up to `delta` can cause when the true mean resultant length is `r`:
/// sigma-theta falls as `r` grows, so the band is
/// `sigma((r - delta)^2) - sigma((r + delta)^2)` (with `r + delta` capped at 1,
/// and a margin for the core's rule that reads `1 - r^2 <= 2^-28` as no spread).
pub fn sigma_band_deg(r: f64, delta: f64) -> f64 {
    let lo = (r + delta).min(1.0);
    let hi = (r - delta).max(0.0);
    let floor = reference::yamartino_deg(1.0 - 1.0 / (1u64 << 28) as f64);
    reference::yamartino_deg(hi * hi) - reference::yamartino_deg(lo * lo) + floor
}

/// A small deterministic random source (SplitMix64, public domain), for
/// generating long realistic series from one proptest-drawn seed.
#[derive(Clone, Debug)]
pub struct SplitMix(pub u64);

impl SplitMix {
    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Uniform integer in `lo..=hi`.
    pub fn range(&mut self, lo: i64, hi: i64) -> i64 {
        lo + (self.next_u64() % (hi - lo + 1) as u64) as i64
    }

    /// True with probability `p`.
    pub fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }
}

/// A reading of `q` quanta as the core would take it from a logger: either the
/// raw counts or the engineering value `q / per_unit` (for example
/// `per_unit = 100` for 0.01 m/s), the decimal value a logger prints.
pub fn reading(q: i64, per_unit: f64, as_counts: bool) -> Reading {
    if as_counts {
        Reading::Counts(q as i32)
    } else {
        Reading::Value(q as f64 / per_unit)
    }
}
