//! Channels: configuration, the per-interval accumulator of each kind, and the
//! finished per-interval statistics.
//!
//! A reading becomes an integer once, at the boundary ([`Channel::classify`]):
//! speed and scalar readings become quanta `q` with `value = offset + step * q`;
//! direction readings become centidegrees in `0..36_000` after the mounting
//! offset. From there on everything is integer arithmetic until
//! [`ChannelAcc::finish`]. No function in this module panics on any input.

use crate::cmath;
use crate::direction::{ColumnResultant, DirectionSums, ResultantSums};
use crate::error::ChannelProblem;
use crate::flags::Flags;
use crate::gust::{Column, Gust};
use crate::moments::{mul_i32, variance, ColumnSums, Moments};
use crate::sentinel::Sentinels;
use crate::spike::Spikes;

/// What a channel measures.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Kind {
    /// Wind speed (anemometer): mean, standard deviation, min, max, gust, turbulence intensity.
    Speed,
    /// Wind direction (vane): unit-vector mean, sigma-theta, resultant.
    Direction,
    /// Any other quantity (temperature, humidity, pressure, voltage): mean, sd, min, max.
    Scalar,
}

/// Icing test settings of a speed or direction channel.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Icing {
    /// Index of the air temperature channel (deg C).
    pub temperature: u8,
    /// Index of the relative humidity channel (%).
    pub humidity: u8,
    /// Icing is suspected at or below this interval mean temperature, deg C.
    /// Default 2.0 (common practice; not from a found source).
    pub max_temperature: f64,
    /// ... and at or above this interval mean relative humidity, %.
    /// Default 85.0 (common practice; not from a found source).
    pub min_humidity: f64,
}

impl Icing {
    /// Icing watched with the given temperature and humidity channels, at the
    /// default 2 deg C and 85 % RH (common practice).
    pub const fn new(temperature: u8, humidity: u8) -> Self {
        Icing {
            temperature,
            humidity,
            max_temperature: 2.0,
            min_humidity: 85.0,
        }
    }
}

/// Screening settings of one channel. `None` switches a test off.
///
/// Defaults by kind (see [`Screen::for_kind`]) come from published screening
/// criteria where one exists, and are marked common practice where not.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Screen {
    /// Largest plausible change between consecutive valid samples (engineering
    /// units; degrees for direction, along the shorter arc).
    pub step_limit: Option<f64>,
    /// Plausible interval mean, inclusive (not used for direction).
    pub mean_range: Option<(f64, f64)>,
    /// Plausible interval standard deviation (sigma-theta for direction), inclusive.
    pub sd_range: Option<(f64, f64)>,
    /// Gusts at or above this are implausible (speed).
    pub gust_max: Option<f64>,
    /// Smallest acceptable valid / possible in an interval, 0 to 1.
    pub min_recovery: Option<f64>,
    /// Flat-line span, seconds: flagged when the channel stays within
    /// `flat_tolerance` at least this long.
    pub flat_span_s: Option<u32>,
    /// Flat-line tolerance: largest total variation still counted as flat
    /// (engineering units; degrees for direction).
    pub flat_tolerance: f64,
    /// Index of the redundant anemometer at the same height (speed).
    pub partner: Option<u8>,
    /// Largest acceptable difference of the partners' interval means.
    pub pair_mean_diff: f64,
    /// Largest acceptable difference of the partners' interval maxima.
    pub pair_max_diff: f64,
    /// Index of the next higher anemometer (speed), for the shear test.
    pub above: Option<u8>,
    /// How much faster than the higher anemometer this one may read on average.
    pub shear_tolerance: f64,
    /// Icing test (speed with a partner, or direction).
    pub icing: Option<Icing>,
}

impl Screen {
    /// Every test off.
    pub const OFF: Screen = Screen {
        step_limit: None,
        mean_range: None,
        sd_range: None,
        gust_max: None,
        min_recovery: None,
        flat_span_s: None,
        flat_tolerance: 0.0,
        partner: None,
        pair_mean_diff: 0.5,
        pair_max_diff: 2.0,
        above: None,
        shear_tolerance: 0.5,
        icing: None,
    };

    /// Defaults for a kind of channel:
    ///
    /// - all kinds: `min_recovery` 0.9 per interval (the 90 % recovery target of
    ///   EPA-454/R-99-005 sec. 5.3.2, there per quarter; per interval is common practice).
    /// - speed: mean 0 to 25 m/s, sd 0 to 3 m/s, gust below 30 m/s (NREL/SR-440-22223
    ///   tables 9.1-9.3, range tests); flat-line when varying <= 0.1 m/s over 3 hours
    ///   (EPA-454/R-99-005 sec. 8); step limit 10 m/s between samples (common practice);
    ///   partner limits 0.5 m/s mean and 2.0 m/s maximum difference (NREL relational
    ///   tests); shear tolerance 0.5 m/s (common practice).
    /// - direction: sigma-theta 3 to 75 degrees (NREL tables 9.1-9.3); flat-line when
    ///   varying <= 1 degree over 3 hours (EPA sec. 8).
    /// - scalar: recovery only; ranges depend on the quantity. EPA sec. 8 suggests for
    ///   temperature a flat-line at <= 0.5 C over 12 hours: set it per channel.
    pub const fn for_kind(kind: Kind) -> Screen {
        let mut s = Screen::OFF;
        s.min_recovery = Some(0.9);
        match kind {
            Kind::Speed => {
                s.step_limit = Some(10.0);
                s.mean_range = Some((0.0, 25.0));
                s.sd_range = Some((0.0, 3.0));
                s.gust_max = Some(30.0);
                s.flat_span_s = Some(3 * 3600);
                s.flat_tolerance = 0.1;
            }
            Kind::Direction => {
                s.sd_range = Some((3.0, 75.0));
                s.flat_span_s = Some(3 * 3600);
                s.flat_tolerance = 1.0;
            }
            Kind::Scalar => {}
        }
        s
    }
}

/// One sample of one channel, as the logger or file gives it.
///
/// `#[repr(u8)]`: a one-byte tag (the variants in order, from 0), the counts
/// at byte 4 and the value at byte 8 (the layout the reference gives a
/// primitive representation), so that the C interface (`qc-core/capi`,
/// `tm_reading`) hands a C program's row of readings to the core without
/// converting or copying it.
#[repr(u8)]
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Reading {
    /// An engineering value (m/s, degrees, deg C ...). NaN or a configured
    /// missing-value code counts as missing.
    Value(f64),
    /// Raw integer counts, turned into a value by the channel's scale
    /// (`value = offset + step * counts`). A count equal to a missing-value code
    /// counts as missing.
    Counts(i32),
    /// No reading (sensor absent, logger reported a fault).
    Missing,
    /// The source marked this reading bad (a quality code): counted in
    /// [`Tally::flagged`], whatever its value, and never used in statistics.
    Flagged,
    /// Excluded by a decision after the fact (an exclusion list: tower work, a
    /// broken cable confirmed on site): counted in [`Tally::excluded`],
    /// whatever its value, and never used in statistics. The core judges
    /// nothing else of it; the caller decides which readings are excluded.
    Excluded,
}

/// The linear map from integer quanta to engineering values: `offset + step * q`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Scale {
    /// Value of quantum 0.
    pub offset: f64,
    /// Value of one quantum (resolution, or calibration slope for raw counts).
    pub step: f64,
}

impl Scale {
    /// `offset + step * (num / den)`, computed as `offset + num / (den * 1/step)`
    /// when `1/step` is a whole number (resolutions like 0.1 or 0.01), so that
    /// results are the correctly rounded decimal (0.01 * 1500 is exactly 15).
    fn ratio(&self, inv: Option<f64>, num: f64, den: f64) -> f64 {
        let v = match inv {
            Some(inv) => num / (den * inv),
            None => self.step * (num / den),
        };
        self.offset + v
    }

    fn spread(&self, inv: Option<f64>, sd_q: f64) -> f64 {
        match inv {
            Some(inv) => sd_q / inv,
            None => self.step * sd_q,
        }
    }

    /// `1/step` when it is a whole number up to 2^20.
    pub(crate) const fn inverse(&self) -> Option<f64> {
        if self.step > 1.0 {
            return None;
        }
        let inv = cmath::round(1.0 / self.step);
        if inv <= 1_048_576.0 && (inv * self.step - 1.0).abs() < 1e-12 {
            Some(inv)
        } else {
            None
        }
    }
}

/// A re-calibration: the logger recorded values with one transfer function
/// (`logger_slope`, `logger_offset`, often a generic consensus one) and the
/// sensor's calibration certificate gives another (`cert_slope`,
/// `cert_offset`). The engineering value is (common practice in wind resource
/// assessment)
///
/// ```text
/// v = (v_logged - logger_offset) / logger_slope * cert_slope + cert_offset
/// ```
///
/// evaluated as four IEEE-754 `f64` operations in exactly this order, each
/// rounded to nearest: a subtraction, a division, a multiplication, an
/// addition (no fused multiply-add: Rust never contracts them). The result is
/// then judged against the channel's range and rounded to the channel's
/// quantum as any value is (`Channel::classify` is the only place this
/// happens), so every target gives the same integer.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Recal {
    /// Slope of the transfer function programmed in the logger (value per
    /// unit of the sensor's signal, for example m/s per Hz).
    pub logger_slope: f64,
    /// Offset of the logger's transfer function.
    pub logger_offset: f64,
    /// Slope of the sensor's calibration certificate.
    pub cert_slope: f64,
    /// Offset of the sensor's calibration certificate.
    pub cert_offset: f64,
}

impl Recal {
    /// The re-calibrated value of `v_logged`, in the order of operations
    /// stated on [`Recal`].
    #[inline]
    pub fn apply(&self, v_logged: f64) -> f64 {
        (v_logged - self.logger_offset) / self.logger_slope * self.cert_slope + self.cert_offset
    }

    /// Whether the slopes are finite and positive and the offsets finite.
    pub const fn is_valid(&self) -> bool {
        self.logger_slope.is_finite()
            && self.logger_slope > 0.0
            && self.cert_slope.is_finite()
            && self.cert_slope > 0.0
            && self.logger_offset.is_finite()
            && self.cert_offset.is_finite()
    }
}

/// Configuration of one channel. Build with [`ChannelConfig::speed`],
/// [`ChannelConfig::direction`] or [`ChannelConfig::scalar`] and the `with_*`
/// methods; [`crate::Layout::new`] validates it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ChannelConfig {
    /// What the channel measures.
    pub kind: Kind,
    /// Quanta to values. For direction channels it applies to [`Reading::Counts`]
    /// only (default: counts are centidegrees); values are degrees.
    pub scale: Scale,
    /// Physically possible values, inclusive; readings outside are counted out
    /// of range and left out of the statistics.
    pub range: (f64, f64),
    /// Gust window in samples (speed channels); 0 computes no gust (for
    /// samples slower than any gust window: a 3-second gust cannot come from
    /// 1-minute means), and the record's gust is
    /// [`Absent::NotApplicable`].
    pub gust_window: u16,
    /// Vane mounting offset, degrees, -360 to 360: `true = (raw + offset) mod 360`
    /// (common practice).
    pub mounting_offset_deg: f64,
    /// Index of the speed channel that weights this direction's resultant vector.
    pub speed_channel: Option<u8>,
    /// Screening settings (defaults by kind: [`Screen::for_kind`]).
    pub screen: Screen,
    /// Re-calibration of logged values (speed and scalar channels), `None`
    /// for values taken as they are.
    pub recal: Option<Recal>,
}

impl ChannelConfig {
    /// An anemometer giving values at `resolution` (m/s per quantum), range
    /// 0 to 75 m/s, 3-sample gust window.
    pub const fn speed(resolution: f64) -> Self {
        ChannelConfig {
            kind: Kind::Speed,
            scale: Scale {
                offset: 0.0,
                step: resolution,
            },
            range: (0.0, 75.0),
            gust_window: 3,
            mounting_offset_deg: 0.0,
            speed_channel: None,
            screen: Screen::for_kind(Kind::Speed),
            recal: None,
        }
    }

    /// A wind vane, range 0 to 360 degrees; directions are kept to 0.01 degree.
    pub const fn direction() -> Self {
        ChannelConfig {
            kind: Kind::Direction,
            scale: Scale {
                offset: 0.0,
                step: 0.01,
            },
            range: (0.0, 360.0),
            gust_window: 1,
            mounting_offset_deg: 0.0,
            speed_channel: None,
            screen: Screen::for_kind(Kind::Direction),
            recal: None,
        }
    }

    /// Any other quantity at `resolution`, with an unbounded range until set.
    pub const fn scalar(resolution: f64) -> Self {
        ChannelConfig {
            kind: Kind::Scalar,
            scale: Scale {
                offset: 0.0,
                step: resolution,
            },
            range: (-1e6, 1e6),
            gust_window: 1,
            mounting_offset_deg: 0.0,
            speed_channel: None,
            screen: Screen::for_kind(Kind::Scalar),
            recal: None,
        }
    }

    /// Raw counts calibrated as `value = offset + slope * counts`.
    pub const fn with_calibration(mut self, slope: f64, offset: f64) -> Self {
        self.scale = Scale {
            offset,
            step: slope,
        };
        self
    }

    /// The physically possible range, inclusive.
    pub const fn with_range(mut self, lo: f64, hi: f64) -> Self {
        self.range = (lo, hi);
        self
    }

    /// Gust window in samples (for example 3 s at 1 Hz is 3, at 4 Hz is 12).
    pub const fn with_gust_window(mut self, samples: u16) -> Self {
        self.gust_window = samples;
        self
    }

    /// Vane mounting offset in degrees.
    pub const fn with_mounting_offset(mut self, deg: f64) -> Self {
        self.mounting_offset_deg = deg;
        self
    }

    /// Screening settings.
    pub const fn with_screen(mut self, screen: Screen) -> Self {
        self.screen = screen;
        self
    }

    /// Re-calibrates logged values ([`Recal`]): speed and scalar channels.
    pub const fn with_recalibration(mut self, recal: Recal) -> Self {
        self.recal = Some(recal);
        self
    }

    /// Links a direction channel to the speed channel at `index`.
    pub const fn with_speed_channel(mut self, index: u8) -> Self {
        self.speed_channel = Some(index);
        self
    }
}

/// A validated channel with its integer limits precomputed.
///
/// `repr(C)`, the fields of the per-sample path first: a Cortex-M0 load
/// reaches 124 bytes past a pointer in one instruction, so fields behind the
/// 224-byte configuration cost an extra address computation on every sample.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Channel {
    /// Valid counts (and, for speed and scalar, valid quanta), inclusive.
    lo_k: i32,
    hi_k: i32,
    /// Whether a missing-value code lies in the valid range, as counts and as a
    /// value (when not, a reading in range needs no comparison with the codes).
    code_in_counts: bool,
    code_in_values: bool,
    /// Gust window in samples (speed), a copy of the configuration's.
    gust_w: u16,
    /// Spike step limit in quanta (centidegrees for direction); `u32::MAX`
    /// without one (no two samples differ by more).
    spike_lim: u32,
    /// Direction counts `dir_inline_lo..=dir_fast_k` are in range, on the 32-bit
    /// path, and no missing-value code: [`Channel::classify_direction`] takes
    /// them inline (`i32::MAX` for none).
    dir_inline_lo: i32,
    /// Counts `0..=dir_fast_k` take the 32-bit path of [`Channel::classify`]
    /// (`k * dir_mul` fits a `u32`, `dir_add` is non-negative); -1 for none.
    dir_fast_k: i32,
    offset_cd: i32,
    /// Direction counts to centidegrees, Q16: `cd = (k * mul + add) >> 16`.
    dir_mul: i64,
    dir_add: i64,
    inv_step: Option<f64>,
    cfg: ChannelConfig,
}

/// A reading after validation.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Class {
    /// Quanta (speed, scalar) or centidegrees (direction).
    Valid(i32),
    Missing,
    OutOfRange,
    /// Marked bad by its source ([`Reading::Flagged`]).
    Flagged,
    /// Excluded by decision ([`Reading::Excluded`]).
    Excluded,
}

const Q_LIMIT: f64 = 2_147_483_000.0;

const fn max_i64(a: i64, b: i64) -> i64 {
    if a > b {
        a
    } else {
        b
    }
}

const fn min_i64(a: i64, b: i64) -> i64 {
    if a < b {
        a
    } else {
        b
    }
}

/// Whether a pair is absent or ordered (`a <= b`, so neither is NaN).
const fn ordered(r: Option<(f64, f64)>) -> bool {
    match r {
        Some((a, b)) => a <= b,
        None => true,
    }
}

/// Whether the screening settings are usable (no NaN, no negative tolerance,
/// ordered ranges, a recovery fraction within 0 to 1).
const fn screen_valid(sc: &Screen) -> bool {
    let tolerances = [
        sc.flat_tolerance,
        sc.pair_mean_diff,
        sc.pair_max_diff,
        sc.shear_tolerance,
    ];
    let mut i = 0;
    while i < tolerances.len() {
        if tolerances[i].is_nan() || tolerances[i] < 0.0 {
            return false;
        }
        i += 1;
    }
    let gust_ok = match sc.gust_max {
        Some(g) => !g.is_nan(),
        None => true,
    };
    let recovery_ok = match sc.min_recovery {
        Some(m) => m >= 0.0 && m <= 1.0,
        None => true,
    };
    let icing_ok = match sc.icing {
        Some(i) => !i.max_temperature.is_nan() && !i.min_humidity.is_nan(),
        None => true,
    };
    ordered(sc.mean_range) && ordered(sc.sd_range) && gust_ok && recovery_ok && icing_ok
}

impl Channel {
    /// A placeholder for array initialisation; always overwritten.
    pub(crate) const fn placeholder() -> Self {
        Channel {
            cfg: ChannelConfig::scalar(1.0),
            inv_step: None,
            lo_k: 0,
            hi_k: 0,
            dir_mul: 0,
            dir_add: 0,
            dir_fast_k: -1,
            offset_cd: 0,
            code_in_counts: true,
            code_in_values: true,
            dir_inline_lo: i32::MAX,
            gust_w: 1,
            spike_lim: u32::MAX,
        }
    }

    /// A channel to be overwritten whole by [`Channel::read_image`] before
    /// any use: every field zero, off or the first of its kind (so the
    /// compiler writes it as cleared memory, not as a constant per field).
    /// Not a channel to run: [`crate::Layout::load_image_into`] alone makes
    /// it, and hands out the layout only after an image filled it.
    pub(crate) const BLANK: Channel = Channel {
        cfg: ChannelConfig {
            kind: Kind::Speed,
            scale: Scale {
                offset: 0.0,
                step: 0.0,
            },
            range: (0.0, 0.0),
            gust_window: 0,
            mounting_offset_deg: 0.0,
            speed_channel: None,
            // Every test off, and the tolerances zero too.
            screen: Screen {
                pair_mean_diff: 0.0,
                pair_max_diff: 0.0,
                shear_tolerance: 0.0,
                ..Screen::OFF
            },
            recal: None,
        },
        inv_step: None,
        lo_k: 0,
        hi_k: 0,
        dir_mul: 0,
        dir_add: 0,
        dir_fast_k: 0,
        offset_cd: 0,
        code_in_counts: false,
        code_in_values: false,
        dir_inline_lo: 0,
        gust_w: 0,
        spike_lim: 0,
    };

    /// Validates a configuration. `gust_capacity` is the station's `G`.
    /// A `const fn`, so that a layout can be checked at compile time.
    pub(crate) const fn new(
        cfg: ChannelConfig,
        gust_capacity: usize,
    ) -> Result<Self, ChannelProblem> {
        let Scale { offset, step } = cfg.scale;
        if !(step.is_finite() && step > 0.0 && offset.is_finite()) {
            return Err(ChannelProblem::Scale);
        }
        let (lo, hi) = cfg.range;
        if !(lo.is_finite() && hi.is_finite() && lo <= hi) {
            return Err(ChannelProblem::Range);
        }
        let lo_q = cmath::ceil((lo - offset) / step);
        let hi_q = cmath::floor((hi - offset) / step);
        if !(lo_q >= -Q_LIMIT && hi_q <= Q_LIMIT) {
            return Err(ChannelProblem::RangeTooWide);
        }
        let mut ch = Channel {
            cfg,
            inv_step: cfg.scale.inverse(),
            lo_k: lo_q as i32,
            hi_k: hi_q as i32,
            dir_mul: 0,
            dir_add: 0,
            dir_fast_k: -1,
            offset_cd: 0,
            code_in_counts: true,
            code_in_values: true,
            dir_inline_lo: i32::MAX,
            // A channel without a gust still keeps a 1-sample window: the
            // per-sample path stays the same, and the finish leaves it out.
            gust_w: if cfg.gust_window == 0 {
                1
            } else {
                cfg.gust_window
            },
            spike_lim: u32::MAX,
        };
        let sc = &cfg.screen;
        if let Some(l) = sc.step_limit {
            if !(l.is_finite() && l >= 0.0) {
                return Err(ChannelProblem::Screen);
            }
            let q = if matches!(cfg.kind, Kind::Direction) {
                l * 100.0
            } else {
                l / step
            };
            // Steps are at most u32::MAX quanta, so a limit there or above is
            // never exceeded: the same as none.
            let limit = cmath::floor(q.min(1e15));
            ch.spike_lim = if limit < u32::MAX as f64 {
                limit as u32
            } else {
                u32::MAX
            };
        }
        if !screen_valid(sc) {
            return Err(ChannelProblem::Screen);
        }
        match cfg.kind {
            Kind::Speed => {
                let w = ch.gust_w as usize;
                if w > gust_capacity {
                    return Err(ChannelProblem::GustWindow);
                }
                // Gust window sums are i32 (crate::gust): any `w` quanta in range
                // (+/-1 for the rounding of values) must sum within it.
                let widest = max_i64((ch.lo_k as i64).abs(), (ch.hi_k as i64).abs()) + 1;
                if widest * w as i64 > i32::MAX as i64 {
                    return Err(ChannelProblem::RangeTooWide);
                }
            }
            Kind::Direction => {
                if lo.abs() > 1e6 || hi.abs() > 1e6 {
                    return Err(ChannelProblem::RangeTooWide);
                }
                if step > 300.0 {
                    return Err(ChannelProblem::DirectionSlope);
                }
                let mount = cfg.mounting_offset_deg;
                if !(mount.is_finite() && mount.abs() <= 360.0) {
                    return Err(ChannelProblem::MountingOffset);
                }
                ch.dir_mul = cmath::round(step * 100.0 * 65_536.0) as i64;
                ch.dir_add = cmath::round(offset * 100.0 * 65_536.0) as i64 + (1 << 15);
                if ch.dir_mul > 0 && ch.dir_add >= 0 && ch.dir_add < 1 << 32 {
                    // In 32 bits (the same quotient: `step <= 300` keeps
                    // `dir_mul` below 2^31), so a run-time validation (the C
                    // interface's) links no 64-bit division.
                    let k = if ch.dir_mul <= u32::MAX as i64 {
                        (u32::MAX / ch.dir_mul as u32) as i64
                    } else {
                        0
                    };
                    ch.dir_fast_k = min_i64(min_i64(k, ch.hi_k as i64), i32::MAX as i64) as i32;
                }
                // Within one turn either way; a whole turn is 0 once wrapped.
                ch.offset_cd = cmath::round(mount * 100.0) as i32;
            }
            Kind::Scalar => {}
        }
        if let Some(r) = cfg.recal {
            if !r.is_valid() || matches!(cfg.kind, Kind::Direction) {
                return Err(ChannelProblem::Recalibration);
            }
            // Raw counts of a re-calibrated channel go through the value path
            // ([`Channel::classify_slow`]): no count takes the inline path.
            ch.lo_k = 1;
            ch.hi_k = 0;
        }
        Ok(ch)
    }

    /// The configuration this channel was built from.
    pub const fn config(&self) -> &ChannelConfig {
        &self.cfg
    }

    /// Spike step limit in quanta (centidegrees for direction); `u32::MAX`
    /// without one.
    pub(crate) const fn spike_lim(&self) -> u32 {
        self.spike_lim
    }

    /// Gust window in samples (0 for channels other than speed; 1 for a
    /// speed channel that computes no gust).
    pub(crate) fn window(&self) -> usize {
        match self.cfg.kind {
            Kind::Speed => usize::from(self.gust_w),
            _ => 0,
        }
    }

    /// Turns a reading into an integer, or says why it is not valid.
    /// `sentinels` are the station's missing-value codes.
    pub(crate) fn classify(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match self.cfg.kind {
            Kind::Direction => self.classify_direction(r, sentinels),
            _ => self.classify_linear(r, sentinels),
        }
    }

    /// [`Channel::classify`] for a speed or scalar channel: raw counts in range
    /// inline, the rest out of line.
    #[inline(always)]
    fn classify_linear(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match r {
            Reading::Counts(k) if k >= self.lo_k && k <= self.hi_k => {
                if self.code_in_counts && sentinels.matches_counts(k) {
                    Class::Missing
                } else {
                    Class::Valid(k)
                }
            }
            Reading::Missing => Class::Missing,
            _ => self.classify_slow(r, sentinels),
        }
    }

    /// [`Channel::classify`] for a direction channel: ADC counts in range on the
    /// 32-bit path inline, the rest out of line.
    #[inline(always)]
    fn classify_direction(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match r {
            // In range, on the 32-bit path, no missing-value code in range.
            Reading::Counts(k) if k >= self.dir_inline_lo && k <= self.dir_fast_k => {
                // The same integer as the general formula, in one 32-bit multiply.
                // Wrapping: never with a validated layout (its limits keep the
                // product in range); a forged stored image (`Layout::load_image`)
                // wraps as a release build does, in every build.
                let p = u64::from((k as u32).wrapping_mul(self.dir_mul as u32))
                    .wrapping_add(self.dir_add as u64);
                Class::Valid(self.wrap_cd((p >> 16) as i64))
            }
            Reading::Missing => Class::Missing,
            _ => self.classify_slow(r, sentinels),
        }
    }

    /// Every reading, every kind: the general path (values in soft floating
    /// point on a core without an FPU, readings out of range, missing-value
    /// codes).
    #[inline(never)]
    fn classify_slow(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match r {
            Reading::Missing => Class::Missing,
            Reading::Flagged => Class::Flagged,
            Reading::Excluded => Class::Excluded,
            Reading::Counts(k) if self.cfg.recal.is_some() => {
                if sentinels.matches_counts(k) {
                    return Class::Missing;
                }
                let Scale { offset, step } = self.cfg.scale;
                self.classify_recal(offset + step * k as f64)
            }
            Reading::Value(v) if self.cfg.recal.is_some() => {
                if v.is_nan() || sentinels.matches_value(v) {
                    return Class::Missing;
                }
                self.classify_recal(v)
            }
            Reading::Counts(k) => {
                // Range first: most readings are in range, and then the codes
                // need checking only if one of them lies in the range too.
                if k < self.lo_k || k > self.hi_k {
                    return if sentinels.matches_counts(k) {
                        Class::Missing
                    } else {
                        Class::OutOfRange
                    };
                }
                if self.code_in_counts && sentinels.matches_counts(k) {
                    return Class::Missing;
                }
                if self.cfg.kind != Kind::Direction {
                    return Class::Valid(k);
                }
                if (0..=self.dir_fast_k).contains(&k) {
                    // The same integer as below, in one 32-bit multiply.
                    // Wrapping: never with a validated layout (its limits keep the
                    // product in range); a forged stored image (`Layout::load_image`)
                    // wraps as a release build does, in every build.
                    let p = u64::from((k as u32).wrapping_mul(self.dir_mul as u32))
                        .wrapping_add(self.dir_add as u64);
                    return Class::Valid(self.wrap_cd((p >> 16) as i64));
                }
                // |dir_mul| < 2^31 (slope <= 300 deg/count), so one 32 x 32 product.
                let cd = (mul_i32(k, self.dir_mul as i32) + self.dir_add) >> 16;
                Class::Valid(self.wrap_cd(cd))
            }
            Reading::Value(v) => {
                // `!(in range)` is also true for NaN.
                if !(v >= self.cfg.range.0 && v <= self.cfg.range.1) {
                    return if v.is_nan() || sentinels.matches_value(v) {
                        Class::Missing
                    } else {
                        Class::OutOfRange
                    };
                }
                if self.code_in_values && sentinels.matches_value(v) {
                    return Class::Missing;
                }
                if self.cfg.kind == Kind::Direction {
                    return Class::Valid(self.wrap_cd(libm::round(v * 100.0) as i64));
                }
                let Scale { offset, step } = self.cfg.scale;
                let q = round_half_away(match self.inv_step {
                    Some(inv) => (v - offset) * inv,
                    None => (v - offset) / step,
                });
                // In range, so within the validated 31-bit limits (+/-1 for rounding).
                Class::Valid(q as i32)
            }
        }
    }

    /// A logged value, not missing, of a re-calibrated channel: re-scaled
    /// ([`Recal::apply`]), then judged against the range and quantised as
    /// any value (a missing-value code is a logged value: it was compared
    /// before re-scaling).
    fn classify_recal(&self, logged: f64) -> Class {
        let v = match self.cfg.recal {
            Some(r) => r.apply(logged),
            None => logged,
        };
        if !(v >= self.cfg.range.0 && v <= self.cfg.range.1) {
            return Class::OutOfRange;
        }
        let Scale { offset, step } = self.cfg.scale;
        let q = round_half_away(match self.inv_step {
            Some(inv) => (v - offset) * inv,
            None => (v - offset) / step,
        });
        Class::Valid(q as i32)
    }

    /// [`Channel::classify`] for the host's block path
    /// ([`Slot::push_column`]): an engineering value in range of a channel
    /// without a re-calibration is classified inline, with the same range
    /// test, missing-value check and quantisation as [`Channel::classify_slow`]
    /// ([`quantum`] and [`round_cd`] are its rounding, in integers); every
    /// other reading takes [`Channel::classify`]. The same class for every
    /// reading, by construction (and checked: `block_classify_is_classify`).
    /// Not linked into a logger, whose per-sample path keeps its code.
    #[inline(always)]
    pub(crate) fn classify_block(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match self.cfg.kind {
            Kind::Direction => self.block_direction(r, sentinels),
            _ => self.block_linear(r, sentinels),
        }
    }

    /// [`Channel::classify_block`] out of line: the readings a column's loop
    /// does not take inline ([`Linear`], [`Vane`]), so that the loop keeps
    /// its state in registers.
    #[cold]
    #[inline(never)]
    fn classify_rest(&self, r: &Reading, sentinels: &Sentinels) -> Class {
        self.classify_block(*r, sentinels)
    }

    /// [`Channel::classify_block`] for a speed or scalar channel.
    #[inline(always)]
    fn block_linear(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match r {
            Reading::Value(v)
                if self.cfg.recal.is_none() && v >= self.cfg.range.0 && v <= self.cfg.range.1 =>
            {
                if self.code_in_values && sentinels.matches_value(v) {
                    return Class::Missing;
                }
                let Scale { offset, step } = self.cfg.scale;
                Class::Valid(quantum(match self.inv_step {
                    Some(inv) => (v - offset) * inv,
                    None => (v - offset) / step,
                }))
            }
            _ => self.classify_linear(r, sentinels),
        }
    }

    /// [`Channel::classify_block`] for a direction channel.
    #[inline(always)]
    fn block_direction(&self, r: Reading, sentinels: &Sentinels) -> Class {
        match r {
            Reading::Value(v)
                if self.cfg.recal.is_none() && v >= self.cfg.range.0 && v <= self.cfg.range.1 =>
            {
                if self.code_in_values && sentinels.matches_value(v) {
                    return Class::Missing;
                }
                Class::Valid(self.wrap_cd(round_cd(v * 100.0)))
            }
            _ => self.classify_direction(r, sentinels),
        }
    }

    /// Records whether any of the station's missing-value codes lies in this
    /// channel's valid range (set by [`crate::Layout::new`]).
    pub(crate) const fn note_codes(&mut self, sentinels: &Sentinels) {
        let (lo, hi) = self.cfg.range;
        let counts = sentinels.counts();
        let values = sentinels.values();
        self.code_in_counts = false;
        self.code_in_values = false;
        let mut i = 0;
        while i < counts.len() {
            if counts[i] >= self.lo_k && counts[i] <= self.hi_k {
                self.code_in_counts = true;
            }
            i += 1;
        }
        let mut i = 0;
        while i < values.len() {
            if values[i] >= lo && values[i] <= hi {
                self.code_in_values = true;
            }
            i += 1;
        }
        self.dir_inline_lo = if self.code_in_counts || self.dir_fast_k < 0 {
            i32::MAX
        } else if self.lo_k > 0 {
            self.lo_k
        } else {
            0
        };
    }

    /// Centidegrees with the mounting offset, wrapped into `0..36_000`: out
    /// of line on a logger, the same body as [`Channel::wrap_cd_inline`].
    fn wrap_cd(&self, cd: i64) -> i32 {
        self.wrap_cd_inline(cd)
    }

    /// [`Channel::wrap_cd`] inline, for the host's block path.
    #[inline(always)]
    fn wrap_cd_inline(&self, cd: i64) -> i32 {
        let cd = cd.wrapping_add(i64::from(self.offset_cd));
        // In-range directions are within a turn or two of 0..36000: compare and
        // subtract instead of a 64-bit division (costly on a 32-bit core).
        if (-36_000..72_000).contains(&cd) {
            let mut c = cd as i32;
            if c < 0 {
                c += 36_000;
            } else if c >= 36_000 {
                c -= 36_000;
            }
            c
        } else {
            // Rare (raw counts far outside a turn): no 64-bit division helper.
            // Wrapping only near the ends of i64 (a forged stored image).
            cd.wrapping_sub(cmath::div_floor(cd, 36_000).wrapping_mul(36_000)) as i32
        }
    }
}

/// Rounds half away from zero, as `libm::round`, bit for bit ([`cmath::round`]
/// is checked against it): on 64-bit hosts by two exact conversions, cheaper
/// there; on a core without an FPU those conversions cost more than
/// `libm::round`'s bit manipulation, so there it is `libm::round`.
#[inline]
fn round_half_away(x: f64) -> f64 {
    if cfg!(target_pointer_width = "64") {
        cmath::round(x)
    } else {
        libm::round(x)
    }
}

/// 2^52: from here on every `f64` is a whole number.
const WHOLE: f64 = 4_503_599_627_370_496.0;

/// `round_half_away(x) as i32` in integer steps, for the host's block path:
/// below 2^52 `x - trunc(x)` is exact, so comparing it with one half rounds
/// as [`cmath::round`] (and `libm::round`) does; the clamp is the saturating
/// `as i32` of the rounded value. Larger or NaN: [`round_half_away`] itself.
#[inline(always)]
fn quantum(x: f64) -> i32 {
    if x.abs() < WHOLE {
        let t = x as i64;
        let d = x - t as f64;
        let q = t + i64::from(d >= 0.5) - i64::from(d <= -0.5);
        q.clamp(i64::from(i32::MIN), i64::from(i32::MAX)) as i32
    } else {
        round_half_away(x) as i32
    }
}

/// 1.5 * 2^52: `x + MAGIC` for `|x| < 2^51` lies in `[2^52, 2^53)`, where
/// the `f64` step is 1, so the sum is `MAGIC` plus `x` rounded to the
/// nearest whole number (ties to even), held in the low bits of the sum.
const MAGIC: f64 = 6_755_399_441_055_744.0;

/// [`quantum`] of a value in a channel's range, for the block path's loop
/// ([`Linear::class`]): `|x|` is then below `2^31 - 645` (`Channel::new`
/// refuses ranges past [`Q_LIMIT`] quanta; a few units in the last place of
/// rounding cannot reach the limit), so `quantum`'s clamp never acts and
/// `x` is far below `2^51`. `x + MAGIC - MAGIC` is `x` rounded to even (both
/// steps exact), `x - t` is exact as in [`quantum`], and a tie (`|x - t| =
/// 1/2`) rounded towards zero is moved one away from it: round half away
/// from zero, as [`quantum`] (`block_rounding_is_the_per_sample_rounding`
/// checks both against [`round_half_away`]). The whole number is read from
/// the sum's low 32 bits: no saturating conversion.
#[inline(always)]
fn quantum_in_range(x: f64) -> i32 {
    let y = x + MAGIC;
    let t = y - MAGIC;
    // The low 32 bits of MAGIC's pattern are 0: these are `t`, two's complement.
    let q = y.to_bits() as u32 as i32;
    let d = x - t;
    if d.abs() == 0.5 {
        // A tie, rounded to even: away from zero instead.
        if d > 0.0 && x > 0.0 {
            return q.wrapping_add(1);
        }
        if d < 0.0 && x < 0.0 {
            return q.wrapping_sub(1);
        }
    }
    q
}

/// `libm::round(x) as i64` in integer steps (see [`quantum`]), for a
/// direction in hundredths of a degree.
#[inline(always)]
fn round_cd(x: f64) -> i64 {
    if x.abs() < WHOLE {
        let t = x as i64;
        let d = x - t as f64;
        t + i64::from(d >= 0.5) - i64::from(d <= -0.5)
    } else {
        libm::round(x) as i64
    }
}

/// Sample counts of one channel in one interval, by outcome. Every sample
/// pushed to the station while the interval is open lands in exactly one.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Tally {
    /// Valid samples, used in the statistics.
    pub valid: u32,
    /// Missing readings (NaN, missing-value code, or [`Reading::Missing`]).
    pub missing: u32,
    /// Readings outside the channel's range.
    pub out_of_range: u32,
    /// Samples rejected for their timestamp (duplicate, backward, unsupported).
    pub rejected: u32,
    /// Readings their source marked bad ([`Reading::Flagged`], a quality code).
    pub flagged: u32,
    /// Readings excluded by decision ([`Reading::Excluded`], an exclusion list).
    pub excluded: u32,
}

impl Tally {
    /// Adds another tally.
    pub fn merge(&mut self, o: &Tally) {
        self.valid = self.valid.saturating_add(o.valid);
        self.missing = self.missing.saturating_add(o.missing);
        self.out_of_range = self.out_of_range.saturating_add(o.out_of_range);
        self.rejected = self.rejected.saturating_add(o.rejected);
        self.flagged = self.flagged.saturating_add(o.flagged);
        self.excluded = self.excluded.saturating_add(o.excluded);
    }

    /// All samples counted: valid, missing, out of range, rejected, flagged
    /// and excluded.
    pub const fn total(&self) -> u64 {
        self.held() + self.rejected as u64
    }

    /// Samples the interval held: valid, missing, out of range, flagged and
    /// excluded (the rejected ones came with a time the station refused).
    /// Every accepted sample holds one reading of every channel, so this is
    /// the same on every channel of one interval.
    pub const fn held(&self) -> u64 {
        self.valid as u64
            + self.missing as u64
            + self.out_of_range as u64
            + self.flagged as u64
            + self.excluded as u64
    }

    /// Whether `self` and `other` can be two channels' tallies of the same
    /// interval: every sample is counted once on every channel, so the
    /// samples held and the samples rejected are the same on each.
    pub const fn same_samples(&self, other: &Tally) -> bool {
        self.held() == other.held() && self.rejected == other.rejected
    }
}

/// One channel's sample counts in an interval, as the accumulators keep them:
/// a [`Tally`] without the samples rejected for their timestamp, which the
/// interval counts once for all its channels ([`crate::IntervalAcc::reject`]),
/// and without the excluded readings: every accepted sample holds one reading
/// of every channel, so a channel's excluded readings are the interval's
/// accepted samples minus the four counts here (`IntervalAcc::accepted`, one
/// count for all channels, as `rejected`: a fifth count here would cost 8
/// bytes a channel in alignment, and the per-sample path nothing).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(crate) struct Counts {
    pub(crate) valid: u32,
    pub(crate) missing: u32,
    pub(crate) out_of_range: u32,
    pub(crate) flagged: u32,
}

impl Counts {
    pub(crate) const ZERO: Counts = Counts {
        valid: 0,
        missing: 0,
        out_of_range: 0,
        flagged: 0,
    };

    /// The counts as a [`Tally`], with the interval's `rejected` and the
    /// channel's `excluded`.
    pub(crate) const fn tally(&self, rejected: u32, excluded: u32) -> Tally {
        Tally {
            valid: self.valid,
            missing: self.missing,
            out_of_range: self.out_of_range,
            rejected,
            flagged: self.flagged,
            excluded,
        }
    }

    /// The counts of `t` (its `rejected` and `excluded` left out).
    pub(crate) const fn of(t: &Tally) -> Counts {
        Counts {
            valid: t.valid,
            missing: t.missing,
            out_of_range: t.out_of_range,
            flagged: t.flagged,
        }
    }

    fn merge(&mut self, o: &Counts) {
        self.valid = self.valid.saturating_add(o.valid);
        self.missing = self.missing.saturating_add(o.missing);
        self.out_of_range = self.out_of_range.saturating_add(o.out_of_range);
        self.flagged = self.flagged.saturating_add(o.flagged);
    }

    /// The readings counted here: valid, missing, out of range and flagged.
    pub(crate) const fn counted(&self) -> u32 {
        self.valid
            .saturating_add(self.missing)
            .saturating_add(self.out_of_range)
            .saturating_add(self.flagged)
    }

    /// Counts `c`. An excluded reading is counted by difference: the
    /// interval's accepted samples minus [`Counts::counted`].
    fn count(&mut self, c: Class) {
        let slot = match c {
            Class::Valid(_) => &mut self.valid,
            Class::Missing => &mut self.missing,
            Class::OutOfRange => &mut self.out_of_range,
            Class::Flagged => &mut self.flagged,
            Class::Excluded => return,
        };
        *slot = slot.saturating_add(1);
    }
}

/// Interval state of a speed channel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SpeedAcc<const G: usize> {
    counts: Counts,
    moments: Moments,
    gust: Gust<G>,
}

/// Interval state of a direction channel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DirectionAcc {
    counts: Counts,
    sums: DirectionSums,
}

/// Interval state of a direction channel linked to a speed channel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LinkedDirectionAcc {
    direction: DirectionAcc,
    resultant: ResultantSums,
}

/// Interval state of a scalar channel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ScalarAcc {
    counts: Counts,
    moments: Moments,
}

/// Interval state of one channel, of its kind.
///
/// `repr(u8)`: a one-byte tag, one load and compare on a 32-bit core (the
/// size is the same, the largest variant's 8-byte alignment pads it anyway).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[repr(u8)]
pub enum ChannelAcc<const G: usize> {
    /// Speed.
    Speed(SpeedAcc<G>),
    /// Direction without a linked speed.
    Direction(DirectionAcc),
    /// Direction with a linked speed.
    LinkedDirection(LinkedDirectionAcc),
    /// Scalar.
    Scalar(ScalarAcc),
}

impl<const G: usize> ChannelAcc<G> {
    /// A stand-in (an empty scalar) for array initialisation; replaced by
    /// [`ChannelAcc::new`] before use.
    pub(crate) const EMPTY: Self = ChannelAcc::Scalar(ScalarAcc {
        counts: Counts::ZERO,
        moments: Moments::new(),
    });

    /// An empty accumulator for `ch`.
    pub(crate) fn new(ch: &Channel) -> Self {
        let counts = Counts::ZERO;
        match ch.cfg.kind {
            Kind::Speed => ChannelAcc::Speed(SpeedAcc {
                counts,
                moments: Moments::new(),
                gust: Gust::new(),
            }),
            Kind::Direction => {
                let direction = DirectionAcc {
                    counts,
                    sums: DirectionSums::new(),
                };
                match ch.cfg.speed_channel {
                    Some(_) => ChannelAcc::LinkedDirection(LinkedDirectionAcc {
                        direction,
                        resultant: ResultantSums::new(),
                    }),
                    None => ChannelAcc::Direction(direction),
                }
            }
            Kind::Scalar => ChannelAcc::Scalar(ScalarAcc {
                counts,
                moments: Moments::new(),
            }),
        }
    }

    /// Counts by outcome, without the samples rejected for their timestamp
    /// (the interval counts those: [`crate::IntervalAcc::tally`]).
    pub(crate) const fn counts(&self) -> &Counts {
        match self {
            ChannelAcc::Speed(a) => &a.counts,
            ChannelAcc::Direction(a) => &a.counts,
            ChannelAcc::LinkedDirection(a) => &a.direction.counts,
            ChannelAcc::Scalar(a) => &a.counts,
        }
    }

    /// Breaks the gust run (a gap in time).
    pub(crate) fn break_run(&mut self) {
        if let ChannelAcc::Speed(a) = self {
            a.gust.break_run();
        }
    }

    /// Merges `later` (same channel, same interval, later in time). `joined`
    /// says whether the two pieces are contiguous in time.
    pub(crate) fn merge(&mut self, later: &Self, w: usize, joined: bool) {
        match (self, later) {
            (ChannelAcc::Speed(a), ChannelAcc::Speed(b)) => {
                a.counts.merge(&b.counts);
                a.moments.merge(&b.moments);
                a.gust.merge(&b.gust, w, joined);
            }
            (ChannelAcc::Direction(a), ChannelAcc::Direction(b)) => {
                a.counts.merge(&b.counts);
                a.sums.merge(&b.sums);
            }
            (ChannelAcc::LinkedDirection(a), ChannelAcc::LinkedDirection(b)) => {
                a.direction.counts.merge(&b.direction.counts);
                a.direction.sums.merge(&b.direction.sums);
                a.resultant.merge(&b.resultant);
            }
            (ChannelAcc::Scalar(a), ChannelAcc::Scalar(b)) => {
                a.counts.merge(&b.counts);
                a.moments.merge(&b.moments);
            }
            // Accumulators come from the same layout, so kinds always match.
            _ => {}
        }
    }

    /// Finishes the statistics. `speed` is the linked speed channel's config
    /// (for the resultant's units); `rejected` the interval's samples rejected
    /// for their timestamp, `excluded` the channel's readings excluded.
    pub(crate) fn finish(
        &self,
        ch: &Channel,
        n_possible: u32,
        speed: Option<&Channel>,
        (rejected, excluded): (u32, u32),
    ) -> ChannelRecord {
        let counts = self.counts();
        let tally = counts.tally(rejected, excluded);
        let mut r = ChannelRecord::empty(ch.cfg.kind, n_possible, tally);
        let n = counts.valid;
        let (scale, inv) = (ch.cfg.scale, ch.inv_step);
        match self {
            ChannelAcc::Speed(SpeedAcc { moments, .. })
            | ChannelAcc::Scalar(ScalarAcc { moments, .. }) => {
                if n > 0 {
                    let nf = f64::from(n);
                    let mean = scale.ratio(inv, moments.sum() as f64, nf);
                    let num = moments.variance_numerator(n);
                    // sd = sqrt(num) / (n / step): one division (soft floating
                    // point divisions cost hundreds of instructions on a
                    // Cortex-M0) while n * (1/step) is exact.
                    let sd = match inv {
                        Some(inv) if n < 1 << 26 => libm::sqrt(num as f64) / (nf * inv),
                        _ => scale.spread(inv, libm::sqrt(variance(num, n))),
                    };
                    r.mean = Stat::Value(mean);
                    r.sd = Stat::Value(sd);
                    r.min = Stat::Value(scale.ratio(inv, f64::from(moments.min()), 1.0));
                    r.max = Stat::Value(scale.ratio(inv, f64::from(moments.max()), 1.0));
                    if let ChannelAcc::Speed(a) = self {
                        r.ti = if mean > 0.0 {
                            Stat::Value(sd / mean)
                        } else {
                            Stat::Absent(Absent::ZeroMean)
                        };
                        r.gust = match a.gust.best_sum() {
                            _ if ch.cfg.gust_window == 0 => Stat::Absent(Absent::NotApplicable),
                            Some(b) => Stat::Value(scale.ratio(inv, b as f64, ch.window() as f64)),
                            None => Stat::Absent(Absent::NoFullWindow),
                        };
                    }
                }
            }
            ChannelAcc::Direction(DirectionAcc { sums, .. }) => {
                r.resultant_speed = Stat::Absent(Absent::NotApplicable);
                r.resultant_direction = Stat::Absent(Absent::NotApplicable);
                fill_direction(&mut r, sums, n);
            }
            ChannelAcc::LinkedDirection(LinkedDirectionAcc {
                direction,
                resultant,
            }) if n > 0 => {
                fill_direction(&mut r, &direction.sums, n);
                let sp = speed.map(|s| s.cfg.scale).unwrap_or(Scale {
                    offset: 0.0,
                    step: 1.0,
                });
                match resultant.finish(sp.offset, sp.step) {
                    Some(v) => {
                        r.resultant_speed = Stat::Value(v.speed);
                        r.resultant_direction = match v.direction_deg {
                            Some(d) => Stat::Value(d),
                            None => Stat::Absent(Absent::VectorsCancel),
                        };
                    }
                    None => {
                        r.resultant_speed = Stat::Absent(Absent::NoPairs);
                        r.resultant_direction = Stat::Absent(Absent::NoPairs);
                    }
                }
            }
            ChannelAcc::LinkedDirection(_) => {}
        }
        r
    }
}

/// One channel's state in an interval: the accumulator of its kind and its
/// spike chain, side by side, so that the per-sample path passes one pointer a
/// channel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(crate) struct Slot<const G: usize> {
    pub(crate) acc: ChannelAcc<G>,
    pub(crate) spikes: Spikes,
}

impl<const G: usize> Slot<G> {
    /// An empty slot for `ch`.
    pub(crate) fn new(ch: &Channel) -> Self {
        Slot {
            acc: ChannelAcc::new(ch),
            spikes: Spikes::EMPTY,
        }
    }

    /// A stand-in for array initialisation.
    pub(crate) const EMPTY: Self = Slot {
        acc: ChannelAcc::EMPTY,
        spikes: Spikes::EMPTY,
    };

    /// Classifies one reading of `ch` and adds it, with its spike check;
    /// `speed` gives the linked speed's class, if any (an excluded reading is
    /// counted by difference, see [`Counts::count`]).
    ///
    /// One out-of-line function per kind of channel with everything else
    /// inlined into it, and the rare paths (engineering values, readings out of
    /// range) out of line: on a Cortex-M0, calls, their stack frames and
    /// register spills cost as much as the statistics themselves.
    #[inline(always)]
    pub(crate) fn push_reading(
        &mut self,
        ch: &Channel,
        r: &Reading,
        codes: &Sentinels,
        speed: impl FnOnce() -> Option<Class>,
    ) {
        match self.acc {
            ChannelAcc::Speed(_) => push_speed(self, ch, r, codes),
            ChannelAcc::Direction(_) => {
                push_direction(self, ch, r, codes);
            }
            ChannelAcc::LinkedDirection(_) => {
                if let Some((s, c)) = push_direction(self, ch, r, codes) {
                    if let (Some(Class::Valid(q)), ChannelAcc::LinkedDirection(a)) =
                        (speed(), &mut self.acc)
                    {
                        a.resultant.push_q30(s, c, q);
                    }
                }
            }
            ChannelAcc::Scalar(_) => push_scalar(self, ch, r, codes),
        }
    }

    /// Breaks the gust run and the spike chain (a gap in time).
    pub(crate) fn break_run(&mut self) {
        self.acc.break_run();
        self.spikes.break_chain();
    }
}

/// One reading of a speed channel (see [`Slot::push_reading`]).
#[inline(never)]
fn push_speed<const G: usize>(slot: &mut Slot<G>, ch: &Channel, r: &Reading, codes: &Sentinels) {
    let Slot {
        acc: ChannelAcc::Speed(a),
        spikes,
    } = slot
    else {
        return;
    };
    let class = ch.classify_linear(*r, codes);
    speed_step(a, spikes, ch, class);
}

/// A classified reading of a speed channel into its state: the one
/// per-sample step of [`push_speed`] and [`Slot::push_column`].
#[inline(always)]
fn speed_step<const G: usize>(
    a: &mut SpeedAcc<G>,
    spikes: &mut Spikes,
    ch: &Channel,
    class: Class,
) {
    a.counts.count(class);
    match class {
        Class::Valid(q) => {
            a.moments.push(q);
            a.gust.push(q, usize::from(ch.gust_w));
            // Speed channels screen spikes by default: no test for a limit
            // (without one, `u32::MAX` is never exceeded).
            spikes.push(q, ch.spike_lim, false);
        }
        _ => {
            a.gust.break_run();
            spikes.break_chain();
        }
    }
}

/// One reading of a scalar channel.
#[inline(never)]
fn push_scalar<const G: usize>(slot: &mut Slot<G>, ch: &Channel, r: &Reading, codes: &Sentinels) {
    let Slot {
        acc: ChannelAcc::Scalar(a),
        spikes,
    } = slot
    else {
        return;
    };
    let class = ch.classify_linear(*r, codes);
    scalar_step(a, spikes, ch, class);
}

/// A classified reading of a scalar channel into its state (see
/// [`speed_step`]).
#[inline(always)]
fn scalar_step(a: &mut ScalarAcc, spikes: &mut Spikes, ch: &Channel, class: Class) {
    a.counts.count(class);
    match class {
        Class::Valid(q) => {
            a.moments.push(q);
            if ch.spike_lim != u32::MAX {
                spikes.push(q, ch.spike_lim, false);
            }
        }
        _ => spikes.break_chain(),
    }
}

/// One reading of a direction channel, linked or not; its Q30 unit vector if
/// valid (for a linked resultant).
#[inline(never)]
fn push_direction<const G: usize>(
    slot: &mut Slot<G>,
    ch: &Channel,
    r: &Reading,
    codes: &Sentinels,
) -> Option<(i32, i32)> {
    let (tally, sums) = match &mut slot.acc {
        ChannelAcc::Direction(a) => (&mut a.counts, &mut a.sums),
        ChannelAcc::LinkedDirection(a) => (&mut a.direction.counts, &mut a.direction.sums),
        _ => return None,
    };
    let class = ch.classify_direction(*r, codes);
    direction_step(tally, sums, &mut slot.spikes, ch, class)
}

/// A classified reading of a direction channel into its state; its Q30 unit
/// vector if valid (see [`speed_step`]).
#[inline(always)]
fn direction_step(
    tally: &mut Counts,
    sums: &mut DirectionSums,
    spikes: &mut Spikes,
    ch: &Channel,
    class: Class,
) -> Option<(i32, i32)> {
    tally.count(class);
    match class {
        Class::Valid(cd) => {
            if ch.spike_lim != u32::MAX {
                spikes.push(cd, ch.spike_lim, true);
            }
            Some(sums.push_q30(cd))
        }
        _ => {
            spikes.break_chain();
            None
        }
    }
}

impl<const G: usize> Slot<G> {
    /// Adds a run of readings of `ch` in sample order, with no gap in time
    /// between them: the same state as [`Slot::push_reading`] of each in
    /// turn. `speed` is the linked speed channel and its column (at least as
    /// long as `rs`), if any. For hosts, which feed blocks of rows
    /// ([`crate::Sampler::push_run`]).
    ///
    /// One loop per kind of channel over the column, with what the channel
    /// decides hoisted out of it ([`Linear`], [`Vane`]) and the interval's
    /// state in locals while the loop runs: counts, exact sums and the spike
    /// chain are copied out and added back once, the gust window runs as a
    /// [`crate::gust::Column`]. Long runs of values in range take steady
    /// loops in functions of their own ([`speed_steady`], [`scalar_steady`],
    /// [`linked_steady`]: the branches of the per-sample steps that a full
    /// gust window and a chain going on decide). Each step is the per-sample
    /// step's code ([`Spikes::push_inline`], [`Channel::classify_block`]) or
    /// its twin on locals ([`crate::gust::Column::push`],
    /// [`crate::gust::Steady::push`], [`ColumnSums::push`], [`Tallies`],
    /// [`ColumnResultant::push_q30`], [`DirectionSums::push_q30_table`]),
    /// each checked against it; `station::run_tests` checks the whole state
    /// against samples pushed one by one. Not linked into a logger.
    ///
    /// A linked speed is classified once: `keep` (at least as long as `rs`)
    /// takes a speed channel's quanta, [`NO_SPEED`] for a reading that is not
    /// valid, and a linked direction reads them as `speed` (the quanta of its
    /// speed's column, at least as long as `rs`; `None` when it has no speed
    /// column, as [`Slot::push_reading`] without a speed class).
    pub(crate) fn push_column(
        &mut self,
        ch: &Channel,
        rs: &[Reading],
        codes: &Sentinels,
        speed: Option<&[i32]>,
        keep: Option<&mut [i32]>,
    ) {
        let spikes = &mut self.spikes;
        match (&mut self.acc, keep) {
            (ChannelAcc::Speed(a), Some(out)) => {
                speed_column::<G, true>(a, spikes, ch, rs, codes, out);
            }
            (ChannelAcc::Speed(a), None) => {
                speed_column::<G, false>(a, spikes, ch, rs, codes, &mut []);
            }
            (acc, keep) => {
                // A speed link to a channel that is not a speed (a layout
                // refuses it): its classes, as the per-sample path takes them.
                if let Some(out) = keep {
                    quanta_of(ch, rs, codes, out);
                }
                match acc {
                    ChannelAcc::Speed(_) => {}
                    ChannelAcc::Scalar(a) => scalar_column(a, spikes, ch, rs, codes),
                    ChannelAcc::Direction(a) => {
                        direction_column(&mut a.counts, &mut a.sums, spikes, ch, rs, codes);
                    }
                    ChannelAcc::LinkedDirection(a) => {
                        let d = &mut a.direction;
                        match speed {
                            Some(quanta) => linked_column(
                                (&mut d.counts, &mut d.sums, &mut a.resultant),
                                spikes,
                                ch,
                                rs,
                                codes,
                                quanta,
                            ),
                            None => {
                                direction_column(&mut d.counts, &mut d.sums, spikes, ch, rs, codes)
                            }
                        }
                    }
                }
            }
        }
    }
}

/// Rows of a run whose linked speed quanta the block path keeps at once
/// (`IntervalAcc::push_run` takes longer runs in pieces of this many; a host
/// block is as many, `host_cli::samples::BLOCK_ROWS`): 2 KiB
/// of stack on the host, nothing in the state.
pub(crate) const LINK_ROWS: usize = 512;

/// A linked speed reading that is not valid, among the quanta a speed column
/// keeps for its direction ([`Slot::push_column`]). No valid reading has
/// these quanta: [`Channel::new`] refuses ranges past [`Q_LIMIT`] quanta.
pub(crate) const NO_SPEED: i32 = i32::MIN;

/// The quanta of each reading of `rs` ([`Channel::classify_block`]), or
/// [`NO_SPEED`], into `out`: for a speed link to a channel a layout refuses
/// as one (see [`Slot::push_column`]).
#[cold]
#[inline(never)]
pub(crate) fn quanta_of(ch: &Channel, rs: &[Reading], codes: &Sentinels, out: &mut [i32]) {
    for (r, o) in rs.iter().zip(out.iter_mut()) {
        *o = match ch.classify_block(*r, codes) {
            Class::Valid(q) => q,
            _ => NO_SPEED,
        };
    }
}

/// A column's counts in locals, added to the channel's [`Counts`] once: `n`
/// saturating increments of a count are one saturating add of `n`. The
/// loops count what is not valid (excluded readings too); the valid
/// readings are the rest of the column.
#[derive(Clone, Copy, Default)]
struct Tallies {
    missing: usize,
    out_of_range: usize,
    flagged: usize,
    excluded: usize,
}

impl Tallies {
    /// [`Counts::count`] of a reading that is not valid.
    #[inline(always)]
    fn count(&mut self, c: Class) {
        match c {
            Class::Valid(_) => {}
            Class::Missing => self.missing += 1,
            Class::OutOfRange => self.out_of_range += 1,
            Class::Flagged => self.flagged += 1,
            Class::Excluded => self.excluded += 1,
        }
    }

    /// Adds the counts of a column of `len` readings.
    #[inline(always)]
    fn add_to(&self, len: usize, c: &mut Counts) {
        let n = |k: usize| u32::try_from(k).unwrap_or(u32::MAX);
        let valid = len
            .saturating_sub(self.missing)
            .saturating_sub(self.out_of_range)
            .saturating_sub(self.flagged)
            .saturating_sub(self.excluded);
        c.valid = c.valid.saturating_add(n(valid));
        c.missing = c.missing.saturating_add(n(self.missing));
        c.out_of_range = c.out_of_range.saturating_add(n(self.out_of_range));
        c.flagged = c.flagged.saturating_add(n(self.flagged));
    }
}

/// How many readings open `rs` as [`Reading::Missing`] (an unused channel
/// slot's whole column): counted and broken at once, as each would be (a
/// break is the same once or many times), so that they cost a compare each.
#[inline(always)]
fn leading_missing(rs: &[Reading]) -> usize {
    let missing = |r: &Reading| matches!(r, Reading::Missing);
    // Four at a time, then one by one.
    let mut k = 0;
    for four in rs.chunks_exact(4) {
        if !four.iter().all(missing) {
            break;
        }
        k += 4;
    }
    k + rs
        .get(k..)
        .unwrap_or_default()
        .iter()
        .take_while(|r| missing(r))
        .count()
}

/// The range of values a column's loop classifies inline: the channel's
/// range for a channel without a re-calibration or a missing-value code in
/// its range, else an empty one (`lo > hi`), which sends every value to the
/// out-of-line classification.
#[inline(always)]
fn inline_range(ch: &Channel) -> (f64, f64) {
    if ch.cfg.recal.is_none() && !ch.code_in_values {
        ch.cfg.range
    } else {
        (f64::INFINITY, f64::NEG_INFINITY)
    }
}

/// What classifying a speed or scalar reading needs, hoisted out of a
/// column's loop: the values [`Channel::classify_block`] takes inline (in
/// range, of a channel without a re-calibration or a missing-value code in
/// its range) and how a value becomes quanta. An empty range (`lo > hi`)
/// sends every value to [`Channel::classify_rest`], as every other reading.
#[derive(Clone, Copy)]
struct Linear {
    lo: f64,
    hi: f64,
    offset: f64,
    step: f64,
    /// `1/step` when a whole number ([`Scale::inverse`]), then multiplied
    /// by (`has_inv`); else the value is divided by `step`.
    inv: f64,
    has_inv: bool,
}

impl Linear {
    #[inline(always)]
    fn of(ch: &Channel) -> Linear {
        let (lo, hi) = inline_range(ch);
        Linear {
            lo,
            hi,
            offset: ch.cfg.scale.offset,
            step: ch.cfg.scale.step,
            inv: ch.inv_step.unwrap_or(1.0),
            has_inv: ch.inv_step.is_some(),
        }
    }

    /// The quanta of a value in range, or `None` for any other reading.
    #[inline(always)]
    fn value(&self, r: &Reading) -> Option<i32> {
        if self.has_inv {
            self.value_by::<true>(r)
        } else {
            self.value_by::<false>(r)
        }
    }

    /// [`Linear::value`] with `has_inv` decided by the caller (`INV`), so a
    /// loop need not test it.
    #[inline(always)]
    fn value_by<const INV: bool>(&self, r: &Reading) -> Option<i32> {
        match *r {
            // `!(in range)` for NaN.
            Reading::Value(v) if v >= self.lo && v <= self.hi => Some(quantum_in_range(if INV {
                (v - self.offset) * self.inv
            } else {
                (v - self.offset) / self.step
            })),
            _ => None,
        }
    }

    /// [`Channel::classify_block`] of `r` (`ch` is the channel this was made
    /// of): values in range inline, every other reading out of line
    /// ([`Channel::classify_rest`]; counts in range go its inline way there).
    #[inline(always)]
    fn class(&self, ch: &Channel, r: &Reading, codes: &Sentinels) -> Class {
        match self.value(r) {
            Some(q) => Class::Valid(q),
            None => ch.classify_rest(r, codes),
        }
    }
}

/// [`Linear`] for a direction channel: the counts [`Channel::classify_direction`]
/// takes inline, and values in range without a missing-value code in range.
#[derive(Clone, Copy)]
struct Vane {
    lo: f64,
    hi: f64,
    inline_lo: i32,
    fast_k: i32,
    mul: u32,
    add: u64,
}

impl Vane {
    #[inline(always)]
    fn of(ch: &Channel) -> Vane {
        let (lo, hi) = inline_range(ch);
        Vane {
            lo,
            hi,
            inline_lo: ch.dir_inline_lo,
            fast_k: ch.dir_fast_k,
            mul: ch.dir_mul as u32,
            add: ch.dir_add as u64,
        }
    }

    /// The centidegrees of the readings taken inline (counts on the fast
    /// path, values in range), or `None` for any other reading.
    #[inline(always)]
    fn direction(&self, ch: &Channel, r: &Reading) -> Option<i32> {
        match *r {
            Reading::Counts(k) if k >= self.inline_lo && k <= self.fast_k => {
                let p = u64::from(k as u32 * self.mul) + self.add;
                Some(ch.wrap_cd_inline((p >> 16) as i64))
            }
            Reading::Value(v) if v >= self.lo && v <= self.hi => {
                Some(ch.wrap_cd_inline(round_cd(v * 100.0)))
            }
            _ => None,
        }
    }

    /// [`Channel::classify_block`] of `r` for a direction channel `ch`.
    #[inline(always)]
    fn class(&self, ch: &Channel, r: &Reading, codes: &Sentinels) -> Class {
        match self.direction(ch, r) {
            Some(cd) => Class::Valid(cd),
            None => ch.classify_rest(r, codes),
        }
    }
}

/// A column of a speed channel ([`speed_step`] of each reading); with `KEEP`
/// each reading's quanta (or [`NO_SPEED`]) into `keep`, for a linked
/// direction.
#[inline(never)]
fn speed_column<const G: usize, const KEEP: bool>(
    a: &mut SpeedAcc<G>,
    spikes: &mut Spikes,
    ch: &Channel,
    rs: &[Reading],
    codes: &Sentinels,
    keep: &mut [i32],
) {
    let lin = Linear::of(ch);
    let lim = ch.spike_lim;
    let mut t = Tallies::default();
    let mut m = ColumnSums::new();
    let mut sp = *spikes;
    a.gust.with_column(usize::from(ch.gust_w), |g| {
        let k = leading_missing(rs);
        if k > 0 {
            t.missing = k;
            g.break_run();
            sp.break_chain();
            if KEEP {
                keep.iter_mut().take(k).for_each(|o| *o = NO_SPEED);
            }
        }
        let mut rest = rs.get(k..).unwrap_or_default();
        while let Some((r, more)) = rest.split_first() {
            rest = more;
            let q = match lin.class(ch, r, codes) {
                Class::Valid(q) => {
                    m.push(q);
                    g.push(q);
                    sp.push_inline(q, lim, false);
                    q
                }
                c => {
                    t.count(c);
                    g.break_run();
                    sp.break_chain();
                    NO_SPEED
                }
            };
            // The row after `r`.
            let at = rs.len() - rest.len();
            if KEEP {
                if let Some(o) = keep.get_mut(at.wrapping_sub(1)) {
                    *o = q;
                }
            }
            // A full window and a chain going on: values in range take the
            // steps' steady branches until another reading comes.
            if g.is_steady() && sp.ends_valid() {
                let out = if KEEP {
                    keep.get_mut(at..).unwrap_or_default()
                } else {
                    &mut []
                };
                let n = if lin.has_inv {
                    speed_steady::<G, true, KEEP>(rest, &lin, &mut m, g, &mut sp, lim, out)
                } else {
                    speed_steady::<G, false, KEEP>(rest, &lin, &mut m, g, &mut sp, lim, out)
                };
                rest = rest.get(n..).unwrap_or_default();
            }
        }
    });
    t.add_to(rs.len(), &mut a.counts);
    m.add_to(&mut a.moments);
    *spikes = sp;
}

/// The values in range that open `rs`, pushed into a steady window and a
/// chain going on (the caller checked both): [`speed_step`]'s branches for
/// them, in a function of its own so that its loop keeps sums, window and
/// chain in registers. Returns how many it took; with `KEEP` their quanta
/// into `keep`.
#[inline(never)]
fn speed_steady<const G: usize, const INV: bool, const KEEP: bool>(
    rs: &[Reading],
    lin: &Linear,
    m: &mut ColumnSums,
    g: &mut Column<'_, G>,
    sp: &mut Spikes,
    lim: u32,
    keep: &mut [i32],
) -> usize {
    let mut sums = *m;
    let mut chain = *sp;
    let (mut st, tail) = g.steady();
    let mut step = |q: i32| {
        sums.push(q);
        st.push(tail, q);
        chain.push_steady(q, lim, false);
    };
    let mut n = 0;
    if KEEP {
        // As long as `keep` (the caller gives one as long as `rs`).
        for (r, o) in rs.iter().zip(keep.iter_mut()) {
            let Some(q) = lin.value_by::<INV>(r) else {
                break;
            };
            *o = q;
            step(q);
            n += 1;
        }
    } else {
        for r in rs {
            let Some(q) = lin.value_by::<INV>(r) else {
                break;
            };
            step(q);
            n += 1;
        }
    }
    g.set_steady(st);
    *m = sums;
    *sp = chain;
    n
}

/// [`speed_steady`] for a scalar channel: the sums and, with spike
/// screening (`SPIKY`), a chain going on.
#[inline(never)]
fn scalar_steady<const INV: bool, const SPIKY: bool>(
    rs: &[Reading],
    lin: &Linear,
    m: &mut ColumnSums,
    sp: &mut Spikes,
    lim: u32,
) -> usize {
    let mut sums = *m;
    let mut chain = *sp;
    let mut n = 0;
    for r in rs {
        let Some(q) = lin.value_by::<INV>(r) else {
            break;
        };
        sums.push(q);
        if SPIKY {
            chain.push_steady(q, lim, false);
        }
        n += 1;
    }
    *m = sums;
    *sp = chain;
    n
}

/// A column of a scalar channel ([`scalar_step`] of each reading).
#[inline(never)]
fn scalar_column(
    a: &mut ScalarAcc,
    spikes: &mut Spikes,
    ch: &Channel,
    rs: &[Reading],
    codes: &Sentinels,
) {
    let lin = Linear::of(ch);
    let lim = ch.spike_lim;
    let spiky = lim != u32::MAX;
    let mut t = Tallies::default();
    let mut m = ColumnSums::new();
    let mut sp = *spikes;
    let k = leading_missing(rs);
    if k > 0 {
        t.missing = k;
        sp.break_chain();
    }
    let mut rest = rs.get(k..).unwrap_or_default();
    while let Some((r, more)) = rest.split_first() {
        rest = more;
        match lin.class(ch, r, codes) {
            Class::Valid(q) => {
                m.push(q);
                if spiky {
                    sp.push_inline(q, lim, false);
                }
            }
            c => {
                t.count(c);
                sp.break_chain();
            }
        }
        // Values in range: without spike screening only the sums, with it
        // a chain going on takes its steady branch.
        let n = match (spiky, lin.has_inv) {
            (false, true) => scalar_steady::<true, false>(rest, &lin, &mut m, &mut sp, lim),
            (false, false) => scalar_steady::<false, false>(rest, &lin, &mut m, &mut sp, lim),
            (true, _) if !sp.ends_valid() => 0,
            (true, true) => scalar_steady::<true, true>(rest, &lin, &mut m, &mut sp, lim),
            (true, false) => scalar_steady::<false, true>(rest, &lin, &mut m, &mut sp, lim),
        };
        rest = rest.get(n..).unwrap_or_default();
    }
    t.add_to(rs.len(), &mut a.counts);
    m.add_to(&mut a.moments);
    *spikes = sp;
}

/// A column of a direction channel without a linked speed in the column
/// ([`direction_step`] of each reading).
#[inline(never)]
fn direction_column(
    counts: &mut Counts,
    sums: &mut DirectionSums,
    spikes: &mut Spikes,
    ch: &Channel,
    rs: &[Reading],
    codes: &Sentinels,
) {
    let vane = Vane::of(ch);
    let lim = ch.spike_lim;
    let spiky = lim != u32::MAX;
    let mut t = Tallies::default();
    let mut ds = *sums;
    let mut sp = *spikes;
    let k = leading_missing(rs);
    if k > 0 {
        t.missing = k;
        sp.break_chain();
    }
    for r in rs.get(k..).unwrap_or_default() {
        match vane.class(ch, r, codes) {
            Class::Valid(cd) => {
                if spiky {
                    sp.push_inline(cd, lim, true);
                }
                ds.push_q30_table(cd);
            }
            c => {
                t.count(c);
                sp.break_chain();
            }
        }
    }
    t.add_to(rs.len(), counts);
    *sums = ds;
    *spikes = sp;
}

/// A column of a direction channel with its linked speed's quanta
/// ([`direction_step`] of each reading, and the resultant of a valid
/// direction with a valid speed: quanta that are not [`NO_SPEED`]).
#[inline(never)]
fn linked_column(
    (counts, sums, resultant): (&mut Counts, &mut DirectionSums, &mut ResultantSums),
    spikes: &mut Spikes,
    ch: &Channel,
    rs: &[Reading],
    codes: &Sentinels,
    col: &[i32],
) {
    let vane = Vane::of(ch);
    let lim = ch.spike_lim;
    let spiky = lim != u32::MAX;
    let mut t = Tallies::default();
    let mut ds = *sums;
    let mut res = ColumnResultant::new();
    let mut sp = *spikes;
    let mut i = 0;
    while let Some(r) = rs.get(i) {
        match vane.class(ch, r, codes) {
            Class::Valid(cd) => {
                if spiky {
                    sp.push_inline(cd, lim, true);
                }
                let (s, c) = ds.push_q30_table(cd);
                match col.get(i) {
                    Some(&q) if q != NO_SPEED => res.push_q30(s, c, q),
                    _ => {}
                }
            }
            c => {
                t.count(c);
                sp.break_chain();
            }
        }
        i += 1;
        // Rows of a direction taken inline.
        let (rest, speeds) = (
            rs.get(i..).unwrap_or_default(),
            col.get(i..).unwrap_or_default(),
        );
        i += linked_steady(rest, speeds, (&vane, ch), (&mut ds, &mut res, &mut sp), lim);
    }
    t.add_to(rs.len(), counts);
    *sums = ds;
    res.add_to(resultant);
    *spikes = sp;
}

/// The rows that open `rs` (and `col`, the speed's quanta) with a direction
/// taken inline ([`Vane::direction`]): what [`linked_column`] does with
/// them, in a function of its own (its loop keeps the sums in registers).
/// Returns how many it took.
#[inline(never)]
fn linked_steady(
    rs: &[Reading],
    col: &[i32],
    (vane, ch): (&Vane, &Channel),
    (ds, res, sp): (&mut DirectionSums, &mut ColumnResultant, &mut Spikes),
    lim: u32,
) -> usize {
    let spiky = lim != u32::MAX;
    let (mut sums, mut pairs, mut chain) = (*ds, *res, *sp);
    let mut n = 0;
    for (r, &q) in rs.iter().zip(col) {
        let Some(cd) = vane.direction(ch, r) else {
            break;
        };
        if spiky {
            chain.push_inline(cd, lim, true);
        }
        let (s, c) = sums.push_q30_table(cd);
        if q != NO_SPEED {
            pairs.push_q30(s, c, q);
        }
        n += 1;
    }
    *ds = sums;
    *res = pairs;
    *sp = chain;
    n
}

/// Which accumulator a [`ChannelState`] comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum StateForm {
    /// A speed channel.
    Speed,
    /// A direction channel without a linked speed.
    Direction,
    /// A direction channel with a linked speed (speed-weighted resultant).
    LinkedDirection,
    /// A scalar channel.
    Scalar,
}

impl StateForm {
    /// The form of `ch`'s accumulator.
    pub const fn of(cfg: &ChannelConfig) -> StateForm {
        match (cfg.kind, cfg.speed_channel) {
            (Kind::Speed, _) => StateForm::Speed,
            (Kind::Direction, None) => StateForm::Direction,
            (Kind::Direction, Some(_)) => StateForm::LinkedDirection,
            (Kind::Scalar, _) => StateForm::Scalar,
        }
    }
}

/// The exact end state of one channel in one complete interval: the integer
/// sums, extremes, largest gust window sum, spike count and sample counts that
/// finishing needs, and nothing more (not the gust window or spike chain that
/// merging needs).
///
/// A logger that leaves finishing to a PC sends one per channel and interval
/// ([`crate::wire::encode_state`]); the PC puts them back into an
/// [`crate::IntervalAcc`] ([`crate::IntervalAcc::set_state`]) and finishes it
/// with a [`crate::Finisher`], with the same records, bit for bit, as a
/// station on the logger.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ChannelState {
    pub(crate) form: StateForm,
    pub(crate) tally: Tally,
    pub(crate) spikes: u32,
    pub(crate) moments: Moments,
    pub(crate) gust_best: Option<i32>,
    pub(crate) sums: DirectionSums,
    pub(crate) resultant: ResultantSums,
}

impl ChannelState {
    /// The accumulator it comes from.
    pub const fn form(&self) -> StateForm {
        self.form
    }

    /// Counts by outcome.
    pub const fn tally(&self) -> &Tally {
        &self.tally
    }

    /// Spikes counted.
    pub const fn spikes(&self) -> u32 {
        self.spikes
    }

    /// An empty state of `form`.
    pub(crate) const fn empty(form: StateForm) -> ChannelState {
        ChannelState {
            form,
            tally: Tally {
                valid: 0,
                missing: 0,
                out_of_range: 0,
                rejected: 0,
                flagged: 0,
                excluded: 0,
            },
            spikes: 0,
            moments: Moments::new(),
            gust_best: None,
            sums: DirectionSums::new(),
            resultant: ResultantSums::new(),
        }
    }
}

impl<const G: usize> Slot<G> {
    /// The slot's end state (see [`ChannelState`]), with the interval's
    /// `rejected` and the channel's `excluded`.
    pub(crate) fn state(&self, rejected: u32, excluded: u32) -> ChannelState {
        let mut s = ChannelState::empty(StateForm::Scalar);
        s.spikes = self.spikes.count();
        s.tally = self.acc.counts().tally(rejected, excluded);
        match &self.acc {
            ChannelAcc::Speed(a) => {
                s.form = StateForm::Speed;
                s.moments = a.moments;
                s.gust_best = a.gust.best();
            }
            ChannelAcc::Direction(a) => {
                s.form = StateForm::Direction;
                s.sums = a.sums;
            }
            ChannelAcc::LinkedDirection(a) => {
                s.form = StateForm::LinkedDirection;
                s.sums = a.direction.sums;
                s.resultant = a.resultant;
            }
            ChannelAcc::Scalar(a) => {
                s.moments = a.moments;
            }
        }
        s
    }

    /// A slot holding `s` for finishing, if `s` is of `ch`'s form.
    pub(crate) fn from_state(ch: &Channel, s: &ChannelState) -> Option<Self> {
        if StateForm::of(&ch.cfg) != s.form {
            return None;
        }
        let counts = Counts::of(&s.tally);
        let acc = match s.form {
            StateForm::Speed => ChannelAcc::Speed(SpeedAcc {
                counts,
                moments: s.moments,
                gust: Gust::with_best(s.gust_best),
            }),
            StateForm::Direction => ChannelAcc::Direction(DirectionAcc {
                counts,
                sums: s.sums,
            }),
            StateForm::LinkedDirection => ChannelAcc::LinkedDirection(LinkedDirectionAcc {
                direction: DirectionAcc {
                    counts,
                    sums: s.sums,
                },
                resultant: s.resultant,
            }),
            StateForm::Scalar => ChannelAcc::Scalar(ScalarAcc {
                counts,
                moments: s.moments,
            }),
        };
        Some(Slot {
            acc,
            spikes: Spikes::with_count(s.spikes),
        })
    }
}

fn fill_direction(r: &mut ChannelRecord, sums: &DirectionSums, n: u32) {
    if let Some(d) = sums.finish(n) {
        r.mean = match d.mean_deg {
            Some(m) => Stat::Value(m),
            None => Stat::Absent(Absent::VectorsCancel),
        };
        r.sd = Stat::Value(d.sigma_deg);
        r.resultant_length = Stat::Value(d.resultant_length);
    }
}

/// Why a statistic has no value.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Absent {
    /// The statistic does not exist for this kind of channel, or was not
    /// asked for (the gust of a speed channel with `gust_window` 0).
    NotApplicable,
    /// No valid samples in the interval.
    NoValidSamples,
    /// No run of consecutive valid samples as long as the gust window.
    NoFullWindow,
    /// The vectors cancel: the mean direction is undefined.
    VectorsCancel,
    /// No sample had both a valid direction and a valid linked speed.
    NoPairs,
    /// The mean speed is 0, so turbulence intensity is undefined.
    ZeroMean,
}

impl Absent {
    /// A short name for records and logs.
    pub const fn name(self) -> &'static str {
        match self {
            Absent::NotApplicable => "not_applicable",
            Absent::NoValidSamples => "no_valid_samples",
            Absent::NoFullWindow => "no_full_window",
            Absent::VectorsCancel => "vectors_cancel",
            Absent::NoPairs => "no_pairs",
            Absent::ZeroMean => "zero_mean",
        }
    }
}

/// A statistic: a value, or the reason there is none. Never NaN.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Stat {
    /// The value.
    Value(f64),
    /// No value, and why.
    Absent(Absent),
}

impl Stat {
    /// The value, if any.
    pub const fn value(self) -> Option<f64> {
        match self {
            Stat::Value(v) => Some(v),
            Stat::Absent(_) => None,
        }
    }
}

/// Finished statistics of one channel over one interval.
///
/// For direction channels `mean` is the unit-vector mean direction and `sd`
/// is Yamartino's sigma-theta, both in degrees. Standard deviations use the
/// divisor N (population form): it is the form in which interval states merge
/// exactly, it matches the single-pass Yamartino estimator, and at 600 samples
/// it differs from the N-1 form by 0.08 %.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ChannelRecord {
    /// Channel kind.
    pub kind: Kind,
    /// Samples the interval should hold at the nominal rate.
    pub n_possible: u32,
    /// Samples by outcome.
    pub tally: Tally,
    /// Mean (direction: unit-vector mean, degrees).
    pub mean: Stat,
    /// Standard deviation, divisor N (direction: Yamartino sigma-theta).
    pub sd: Stat,
    /// Minimum valid sample.
    pub min: Stat,
    /// Maximum valid sample.
    pub max: Stat,
    /// Largest running mean over the gust window (speed).
    pub gust: Stat,
    /// Turbulence intensity, sd / mean (speed).
    pub ti: Stat,
    /// Mean resultant length of the unit vectors, 0 to 1 (direction).
    pub resultant_length: Stat,
    /// Speed-weighted resultant speed (direction with a linked speed).
    pub resultant_speed: Stat,
    /// Speed-weighted resultant direction (direction with a linked speed).
    pub resultant_direction: Stat,
    /// Valid samples that changed from the previous one by more than the step limit.
    pub spikes: u32,
    /// Screening flags.
    pub flags: Flags,
}

impl ChannelRecord {
    pub(crate) fn empty(kind: Kind, n_possible: u32, tally: Tally) -> Self {
        let none = Stat::Absent(Absent::NoValidSamples);
        let na = Stat::Absent(Absent::NotApplicable);
        let (minmax, gust, vector, resultant) = match kind {
            Kind::Speed => (none, none, na, na),
            Kind::Direction => (na, na, none, none),
            Kind::Scalar => (none, na, na, na),
        };
        ChannelRecord {
            kind,
            n_possible,
            tally,
            mean: none,
            sd: none,
            min: minmax,
            max: minmax,
            gust,
            ti: gust,
            resultant_length: vector,
            resultant_speed: resultant,
            resultant_direction: resultant,
            spikes: 0,
            flags: Flags::EMPTY,
        }
    }
}

// ---------------------------------------------------------------------------
// A channel as bytes, for a layout image (`Layout::to_image`, station.rs):
// every field, little-endian, in declaration order; an `Option` as a tag
// byte (0 none, 1 some) and, when some, its value (a none takes one byte:
// image version 2; version 1 wrote zeros for it, the whole length every
// time). Written from a
// validated channel and read back without validating again (the image's CRC
// and version are checked by `Layout::load_image`); the exhaustive
// destructuring below fails to compile when a field is added, so the image
// cannot silently leave one out.

/// Writes little-endian fields into a byte buffer (a layout image).
pub(crate) struct ImageWriter<'a> {
    buf: &'a mut [u8],
    at: usize,
    ok: bool,
}

impl<'a> ImageWriter<'a> {
    /// A writer at the start of `buf`.
    pub(crate) fn new(buf: &'a mut [u8]) -> Self {
        ImageWriter {
            buf,
            at: 0,
            ok: true,
        }
    }

    /// Bytes written; `None` if `buf` was too short.
    pub(crate) fn len(&self) -> Option<usize> {
        self.ok.then_some(self.at)
    }

    /// The bytes written so far (empty if `buf` was too short).
    pub(crate) fn written(&self) -> &[u8] {
        self.buf.get(..self.at).unwrap_or(&[])
    }

    pub(crate) fn bytes(&mut self, b: &[u8]) {
        match self.buf.get_mut(self.at..self.at + b.len()) {
            Some(dst) => {
                dst.copy_from_slice(b);
                self.at += b.len();
            }
            None => self.ok = false,
        }
    }

    pub(crate) fn u8(&mut self, v: u8) {
        self.bytes(&[v]);
    }

    pub(crate) fn u16(&mut self, v: u16) {
        self.bytes(&v.to_le_bytes());
    }

    pub(crate) fn u32(&mut self, v: u32) {
        self.bytes(&v.to_le_bytes());
    }

    pub(crate) fn i32(&mut self, v: i32) {
        self.bytes(&v.to_le_bytes());
    }

    pub(crate) fn i64(&mut self, v: i64) {
        self.bytes(&v.to_le_bytes());
    }

    pub(crate) fn f64(&mut self, v: f64) {
        self.bytes(&v.to_bits().to_le_bytes());
    }

    fn flag(&mut self, v: bool) {
        self.u8(u8::from(v));
    }

    fn opt_u8(&mut self, v: Option<u8>) {
        self.flag(v.is_some());
        if let Some(v) = v {
            self.u8(v);
        }
    }

    fn opt_u32(&mut self, v: Option<u32>) {
        self.flag(v.is_some());
        if let Some(v) = v {
            self.u32(v);
        }
    }

    fn opt_f64(&mut self, v: Option<f64>) {
        self.flag(v.is_some());
        if let Some(v) = v {
            self.f64(v);
        }
    }

    fn opt_pair(&mut self, v: Option<(f64, f64)>) {
        self.flag(v.is_some());
        if let Some((a, b)) = v {
            self.f64(a);
            self.f64(b);
        }
    }
}

/// Reads what [`ImageWriter`] wrote. A read past the end gives zeros, a
/// byte that is no value of its field a stand-in; either leaves the reader
/// not [`ImageReader::ok`] (one check at the end, not one per field: the
/// reader is the loader's code in a logger's flash).
pub(crate) struct ImageReader<'a> {
    buf: &'a [u8],
    ok: bool,
}

impl<'a> ImageReader<'a> {
    /// A reader at the start of `buf`.
    pub(crate) fn new(buf: &'a [u8]) -> Self {
        ImageReader { buf, ok: true }
    }

    /// Whether every read so far was within the bytes and a value of its field.
    pub(crate) fn ok(&self) -> bool {
        self.ok
    }

    /// Bytes not read yet.
    pub(crate) fn rest(&self) -> usize {
        self.buf.len()
    }

    /// The next `n` (at most 8) bytes as a little-endian number.
    #[inline(never)]
    fn le(&mut self, n: usize) -> u64 {
        let Some((head, rest)) = self.buf.split_at_checked(n) else {
            self.ok = false;
            self.buf = &[];
            return 0;
        };
        self.buf = rest;
        head.iter().rev().fold(0, |v, b| (v << 8) | u64::from(*b))
    }

    pub(crate) fn u8(&mut self) -> u8 {
        self.le(1) as u8
    }

    pub(crate) fn u16(&mut self) -> u16 {
        self.le(2) as u16
    }

    pub(crate) fn u32(&mut self) -> u32 {
        self.le(4) as u32
    }

    pub(crate) fn i32(&mut self) -> i32 {
        self.le(4) as u32 as i32
    }

    pub(crate) fn i64(&mut self) -> i64 {
        self.le(8) as i64
    }

    pub(crate) fn f64(&mut self) -> f64 {
        f64::from_bits(self.le(8))
    }

    #[inline(never)]
    fn flag(&mut self) -> bool {
        let b = self.u8();
        if b > 1 {
            self.ok = false;
        }
        b == 1
    }

    #[inline(never)]
    fn opt_u8(&mut self) -> Option<u8> {
        self.flag().then(|| self.u8())
    }

    #[inline(never)]
    fn opt_u32(&mut self) -> Option<u32> {
        self.flag().then(|| self.u32())
    }

    #[inline(never)]
    fn opt_f64(&mut self) -> Option<f64> {
        self.flag().then(|| self.f64())
    }

    #[inline(never)]
    fn opt_pair(&mut self) -> Option<(f64, f64)> {
        self.flag().then(|| (self.f64(), self.f64()))
    }
}

impl Channel {
    /// Bytes of a channel in a layout image at most (every option some;
    /// each none takes its value's bytes less).
    pub(crate) const IMAGE_LEN: usize = 53 + 45 + 121 + 33;

    /// Writes the channel, every field (see the section's comment).
    pub(crate) fn write_image(&self, w: &mut ImageWriter<'_>) {
        let Channel {
            lo_k,
            hi_k,
            code_in_counts,
            code_in_values,
            gust_w,
            spike_lim,
            dir_inline_lo,
            dir_fast_k,
            offset_cd,
            dir_mul,
            dir_add,
            inv_step,
            cfg,
        } = *self;
        w.i32(lo_k);
        w.i32(hi_k);
        w.flag(code_in_counts);
        w.flag(code_in_values);
        w.u16(gust_w);
        w.u32(spike_lim);
        w.i32(dir_inline_lo);
        w.i32(dir_fast_k);
        w.i32(offset_cd);
        w.i64(dir_mul);
        w.i64(dir_add);
        w.opt_f64(inv_step);
        let ChannelConfig {
            kind,
            scale: Scale { offset, step },
            range: (low, high),
            gust_window,
            mounting_offset_deg,
            speed_channel,
            screen,
            recal,
        } = cfg;
        w.u8(match kind {
            Kind::Speed => 0,
            Kind::Direction => 1,
            Kind::Scalar => 2,
        });
        w.f64(offset);
        w.f64(step);
        w.f64(low);
        w.f64(high);
        w.u16(gust_window);
        w.f64(mounting_offset_deg);
        w.opt_u8(speed_channel);
        let Screen {
            step_limit,
            mean_range,
            sd_range,
            gust_max,
            min_recovery,
            flat_span_s,
            flat_tolerance,
            partner,
            pair_mean_diff,
            pair_max_diff,
            above,
            shear_tolerance,
            icing,
        } = screen;
        w.opt_f64(step_limit);
        w.opt_pair(mean_range);
        w.opt_pair(sd_range);
        w.opt_f64(gust_max);
        w.opt_f64(min_recovery);
        w.opt_u32(flat_span_s);
        w.f64(flat_tolerance);
        w.opt_u8(partner);
        w.f64(pair_mean_diff);
        w.f64(pair_max_diff);
        w.opt_u8(above);
        w.f64(shear_tolerance);
        w.flag(icing.is_some());
        if let Some(Icing {
            temperature,
            humidity,
            max_temperature,
            min_humidity,
        }) = icing
        {
            w.u8(temperature);
            w.u8(humidity);
            w.f64(max_temperature);
            w.f64(min_humidity);
        }
        w.flag(recal.is_some());
        if let Some(Recal {
            logger_slope,
            logger_offset,
            cert_slope,
            cert_offset,
        }) = recal
        {
            w.f64(logger_slope);
            w.f64(logger_offset);
            w.f64(cert_slope);
            w.f64(cert_offset);
        }
    }

    /// Reads a channel [`Channel::write_image`] wrote into `self`, field by
    /// field in place (in the writer's order; no channel on the stack to
    /// copy, the loader's code in a logger's flash); whether it was good is
    /// the reader's [`ImageReader::ok`]. The exhaustive destructuring fails
    /// to compile when a field is added, as the writer's does.
    pub(crate) fn read_image(&mut self, r: &mut ImageReader<'_>) {
        let Channel {
            lo_k,
            hi_k,
            code_in_counts,
            code_in_values,
            gust_w,
            spike_lim,
            dir_inline_lo,
            dir_fast_k,
            offset_cd,
            dir_mul,
            dir_add,
            inv_step,
            cfg,
        } = self;
        *lo_k = r.i32();
        *hi_k = r.i32();
        *code_in_counts = r.flag();
        *code_in_values = r.flag();
        *gust_w = r.u16();
        *spike_lim = r.u32();
        *dir_inline_lo = r.i32();
        *dir_fast_k = r.i32();
        *offset_cd = r.i32();
        *dir_mul = r.i64();
        *dir_add = r.i64();
        *inv_step = r.opt_f64();
        let ChannelConfig {
            kind,
            scale: Scale { offset, step },
            range: (low, high),
            gust_window,
            mounting_offset_deg,
            speed_channel,
            screen,
            recal,
        } = cfg;
        *kind = match r.u8() {
            0 => Kind::Speed,
            1 => Kind::Direction,
            2 => Kind::Scalar,
            _ => {
                r.ok = false;
                Kind::Scalar
            }
        };
        *offset = r.f64();
        *step = r.f64();
        *low = r.f64();
        *high = r.f64();
        *gust_window = r.u16();
        *mounting_offset_deg = r.f64();
        *speed_channel = r.opt_u8();
        let Screen {
            step_limit,
            mean_range,
            sd_range,
            gust_max,
            min_recovery,
            flat_span_s,
            flat_tolerance,
            partner,
            pair_mean_diff,
            pair_max_diff,
            above,
            shear_tolerance,
            icing,
        } = screen;
        *step_limit = r.opt_f64();
        *mean_range = r.opt_pair();
        *sd_range = r.opt_pair();
        *gust_max = r.opt_f64();
        *min_recovery = r.opt_f64();
        *flat_span_s = r.opt_u32();
        *flat_tolerance = r.f64();
        *partner = r.opt_u8();
        *pair_mean_diff = r.f64();
        *pair_max_diff = r.f64();
        *above = r.opt_u8();
        *shear_tolerance = r.f64();
        *icing = r.flag().then(|| Icing {
            temperature: r.u8(),
            humidity: r.u8(),
            max_temperature: r.f64(),
            min_humidity: r.f64(),
        });
        *recal = r.flag().then(|| Recal {
            logger_slope: r.f64(),
            logger_offset: r.f64(),
            cert_slope: r.f64(),
            cert_offset: r.f64(),
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limits_of_the_compact_state_are_refused_at_configuration() {
        // A speed range whose quanta times the gust window would not fit i32.
        let wide = ChannelConfig::speed(0.001).with_range(0.0, 1e6);
        assert_eq!(Channel::new(wide, 3), Err(ChannelProblem::RangeTooWide));
        assert!(Channel::new(ChannelConfig::speed(0.001).with_range(0.0, 1e5), 3).is_ok());
        // Mounting offsets beyond a turn either way.
        let vane = |deg| ChannelConfig::direction().with_mounting_offset(deg);
        assert_eq!(
            Channel::new(vane(360.5), 1),
            Err(ChannelProblem::MountingOffset)
        );
        assert_eq!(
            Channel::new(vane(-361.0), 1),
            Err(ChannelProblem::MountingOffset)
        );
        assert!(Channel::new(vane(-360.0), 1).is_ok());
        // More samples per interval than milliseconds.
        let mut st = crate::StationConfig::ten_minute_1hz();
        st.interval_s = 1;
        st.samples_per_interval = 1_001;
        let ch = [ChannelConfig::scalar(1.0)];
        assert_eq!(
            crate::Layout::new::<1>(st, &ch).err(),
            Some(crate::ConfigError::SampleCount)
        );
        st.samples_per_interval = 1_000;
        assert!(crate::Layout::new::<1>(st, &ch).is_ok());
    }

    #[test]
    fn rebuild_in_place_is_new_or_the_placeholder() {
        use crate::{ConfigError, Layout, StationConfig};
        let st = StationConfig::ten_minute_1hz();
        let good = [
            ChannelConfig::speed(0.01),
            ChannelConfig::direction().with_speed_channel(0),
        ];
        let mut layout = Layout::<2>::PLACEHOLDER;
        assert_eq!(layout.rebuild::<3>(st, &good), Ok(()));
        assert_eq!(Some(layout), Layout::new::<3>(st, &good).ok());
        // A refused station: the same error as `new`, and the placeholder left.
        let bad = [
            ChannelConfig::speed(0.01),
            ChannelConfig::direction().with_speed_channel(1),
        ];
        let want = Layout::new::<3>(st, &bad).err();
        assert!(matches!(want, Some(ConfigError::Channel { index: 1, .. })));
        assert_eq!(layout.rebuild::<3>(st, &bad).err(), want);
        assert_eq!(layout, Layout::<2>::PLACEHOLDER);
        // And a layout validated at compile time equals one validated at run time.
        const AT_COMPILE_TIME: Result<Layout<2>, ConfigError> = Layout::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.01),
                ChannelConfig::direction().with_speed_channel(0),
            ],
        );
        assert_eq!(AT_COMPILE_TIME.ok(), Layout::new::<3>(st, &good).ok());
    }

    #[test]
    fn block_rounding_is_the_per_sample_rounding() {
        // `quantum` and `round_cd` against the per-sample path's rounding
        // (`round_half_away`, `libm::round`: libm 0.2, halves away from zero).
        let mut rng = crate::test_rng::Rng(5);
        let mut xs: std::vec::Vec<f64> = std::vec![
            0.0,
            -0.0,
            0.5,
            -0.5,
            1.5,
            -1.5,
            2.5,
            -2.5,
            0.49999999999999994,
            -0.49999999999999994,
            2_147_483_647.5,
            -2_147_483_648.5,
            3e9,
            -3e9,
            4_503_599_627_370_495.5,
            4_503_599_627_370_496.0,
            1e300,
            -1e300,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
            f64::MIN_POSITIVE,
        ];
        for _ in 0..200_000 {
            let b = rng.next();
            xs.push(f64::from_bits(b));
            xs.push((b % 10_000_000) as f64 / 100.0 - 50_000.0);
            xs.push((b % 4_000_000) as f64 * 0.5 - 1_000_000.0);
            xs.push(rng.unit() * 6e9 - 3e9);
        }
        // Halves and their neighbours one unit in the last place away, both
        // signs, up to the in-range limit of `quantum_in_range`.
        for k in (0..2_000i64).chain((0..2_000).map(|_| (rng.next() % (1 << 31)) as i64)) {
            let h = k as f64 + 0.5;
            for v in [
                h,
                f64::from_bits(h.to_bits() + 1),
                f64::from_bits(h.to_bits() - 1),
            ] {
                xs.push(v);
                xs.push(-v);
            }
        }
        let limit = f64::from(i32::MAX - 645);
        for x in xs {
            assert_eq!(quantum(x), round_half_away(x) as i32, "{x:e}");
            assert_eq!(round_cd(x), libm::round(x) as i64, "{x:e}");
            if x.abs() < limit {
                assert_eq!(quantum_in_range(x), round_half_away(x) as i32, "{x:e}");
            }
        }
    }

    #[test]
    fn block_classify_is_classify() {
        // Every kind, steps with and without an exact inverse, offsets, a code
        // in range, a re-calibration: the block path's class is the per-sample
        // path's for every reading.
        let codes = [Some(-999.0), Some(0.5), Some(12.0), None];
        let sentinels = Sentinels::new(&codes).unwrap();
        let recal = Recal {
            logger_slope: 0.765,
            logger_offset: 0.35,
            cert_slope: 0.7581,
            cert_offset: 0.2214,
        };
        let cfgs = [
            ChannelConfig::speed(0.01),
            ChannelConfig::speed(0.3),
            ChannelConfig::speed(0.05).with_recalibration(recal),
            ChannelConfig::scalar(0.25).with_calibration(0.25, 0.1),
            ChannelConfig::scalar(0.1).with_range(-100.0, 100.0),
            ChannelConfig::scalar(1e-6).with_range(-2000.0, 2000.0),
            // At the quanta limit (Q_LIMIT) both ways; a large offset.
            ChannelConfig::scalar(1e-6).with_range(-2147.483, 2147.483),
            ChannelConfig::speed(0.3)
                .with_calibration(0.3, -644_245_000.0)
                .with_range(-644_245_000.0, -644_244_000.0),
            ChannelConfig::direction(),
            ChannelConfig::direction().with_mounting_offset(-7.25),
            ChannelConfig::direction()
                .with_calibration(0.5, 0.0)
                .with_mounting_offset(359.0)
                .with_range(-720.0, 720.0),
        ];
        let mut rng = crate::test_rng::Rng(9);
        for cfg in cfgs {
            let mut ch = Channel::new(cfg, 3).unwrap();
            ch.note_codes(&sentinels);
            for _ in 0..100_000 {
                let step = cfg.scale.step;
                let r = match rng.next() % 12 {
                    0 => Reading::Missing,
                    1 => Reading::Flagged,
                    2 => Reading::Excluded,
                    3 => Reading::Value(f64::from_bits(rng.next())),
                    4 => Reading::Counts(rng.next() as i32 % 5000),
                    5 => Reading::Value([0.5, 12.0, -999.0, f64::NAN][(rng.next() % 4) as usize]),
                    // The ends of the range and their neighbours.
                    8 | 9 => {
                        let (lo, hi) = cfg.range;
                        let e = if rng.next() % 2 == 0 { lo } else { hi };
                        let b = e.to_bits();
                        Reading::Value(f64::from_bits(
                            [b, b.wrapping_add(1), b.wrapping_sub(1)][(rng.next() % 3) as usize],
                        ))
                    }
                    6 => Reading::Value(rng.unit() * 4000.0 - 2000.0),
                    _ => {
                        let k = (rng.next() % 20_000) as f64 - 1000.0;
                        let half = [0.0, 0.5, rng.unit()][(rng.next() % 3) as usize];
                        Reading::Value(cfg.scale.offset + step * (k + half))
                    }
                };
                let want = ch.classify(r, &sentinels);
                assert_eq!(ch.classify_block(r, &sentinels), want, "{cfg:?} {r:?}");
                // What the column loops take inline, and the rest.
                let column = match cfg.kind {
                    Kind::Direction => Vane::of(&ch).class(&ch, &r, &sentinels),
                    _ => Linear::of(&ch).class(&ch, &r, &sentinels),
                };
                assert_eq!(column, want, "{cfg:?} {r:?}");
            }
        }
    }

    #[test]
    fn direction_counts_fast_path_is_the_general_formula() {
        let sentinels = crate::Sentinels::new(&[None; crate::MAX_SENTINELS]).unwrap();
        for (slope, offset, mount) in [
            (360.0 / 26_400.0, 0.0, 0.0),
            (360.0 / 1_024.0, 0.0, 12.5),
            (0.1, 0.0, -7.25),
            (0.01, 3.0, 0.0),
            (1.0, -4.0, 359.0),
            (300.0, 0.0, 0.0),
        ] {
            let cfg = ChannelConfig::direction()
                .with_calibration(slope, offset)
                .with_mounting_offset(mount)
                .with_range(-1e5, 1e5);
            let ch = Channel::new(cfg, 1).unwrap();
            let mut ks: std::vec::Vec<i32> = (-2_000..70_000).step_by(7).collect();
            ks.extend([0, 1, ch.dir_fast_k, ch.dir_fast_k + 1, ch.hi_k, ch.lo_k]);
            for k in ks {
                let got = ch.classify(Reading::Counts(k), &sentinels);
                let want = if k < ch.lo_k || k > ch.hi_k {
                    Class::OutOfRange
                } else {
                    let cd = (i64::from(k) * ch.dir_mul + ch.dir_add) >> 16;
                    Class::Valid(ch.wrap_cd(cd))
                };
                assert_eq!(got, want, "slope {slope} offset {offset} k {k}");
            }
        }
    }
}
