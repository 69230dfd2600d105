//! The station: a fixed set of channels sampled together, cut into UTC-aligned
//! intervals.
//!
//! [`Layout`] is the validated configuration. [`Station`] takes timestamped
//! samples, keeps one open [`IntervalAcc`], and hands each closed interval (and
//! each run of intervals with no samples, as one [`Gap`]) to a callback.
//! It is two halves: a [`Sampler`] (time rules, the open interval, the
//! interval's exact state handed out as it closes) and a [`Finisher`]
//! (finishing, screening and running recovery, interval by interval in time
//! order). A logger may run the sampler alone and leave the finisher to a PC
//! (see [`crate::wire`], state frames).
//! [`IntervalAcc::merge`] joins pieces of one interval accumulated apart, with the
//! same result, bit for bit, as accumulating them in one pass.
//!
//! Time rules:
//! - Interval `k` covers `[k * interval, (k + 1) * interval)` milliseconds since the
//!   epoch; since the interval divides a day, boundaries fall on whole multiples
//!   of the interval since each UTC midnight.
//! - A sample whose timestamp is not after the last accepted one is rejected
//!   (duplicate or backward) and counted, never merged.
//! - A sample in a later interval closes the open one; intervals in between are
//!   reported as one [`Gap`] in constant time, however long.
//! - Consecutive accepted samples more than 1.5 nominal periods apart break the
//!   gust runs of every channel.
//!
//! Nothing here panics, whatever the input.

use crate::channel::{
    quanta_of, Channel, ChannelAcc, ChannelConfig, ChannelRecord, ChannelState, ImageReader,
    ImageWriter, Kind, Reading, Slot, Tally, LINK_ROWS, NO_SPEED,
};
use crate::cmath::div_floor;
use crate::crc::Crc32;
use crate::error::{ChannelProblem, ConfigError, TallyError};
use crate::flags::Flags;
use crate::limits::{MAX_SAMPLES_PER_INTERVAL, MAX_SENTINELS};
use crate::recovery::Recovery;
use crate::screen::{interval_flags, passes, Screener};
use crate::sentinel::Sentinels;
use crate::time::{Month, Timestamp};
use core::borrow::Borrow;

/// "No time yet" in a millisecond field: below every supported timestamp.
const NONE_MS: i64 = i64::MIN;

/// Station-wide settings.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StationConfig {
    /// Interval length in seconds; must divide 86,400. 600 for 10-minute statistics.
    pub interval_s: u32,
    /// Samples per interval at the nominal rate (600 for 1 Hz and 10 minutes).
    pub samples_per_interval: u32,
    /// Missing-value codes (for example -999 and -9999), compared exactly.
    pub missing_values: [Option<f64>; MAX_SENTINELS],
}

impl StationConfig {
    /// 10-minute intervals at 1 Hz with missing-value codes -999 and -9999.
    pub const fn ten_minute_1hz() -> Self {
        StationConfig {
            interval_s: 600,
            samples_per_interval: 600,
            missing_values: [Some(-999.0), Some(-9999.0), None, None],
        }
    }

    /// Whether `n_possible` and `tally` can be the counts of one channel's
    /// record of one interval of a station of these settings, as the station
    /// counts: `n_possible` is always the samples per interval, and the
    /// samples an interval holds (valid, missing, out of range and flagged, see
    /// [`Tally::held`]) have strictly increasing millisecond times inside it,
    /// so there are at most as many as the interval has milliseconds.
    /// Rejected samples have no such bound.
    ///
    /// More valid samples than possible ones pass: the station counts every
    /// sample it accepts, and samples that come faster than the nominal rate
    /// (a fast clock, or a rate set wrong in the configuration) make more. The
    /// channels of one interval must agree, too ([`Tally::same_samples`]);
    /// that takes more than one record to check.
    pub const fn check_tally(&self, n_possible: u32, tally: &Tally) -> Result<(), TallyError> {
        let interval_ms = self.interval_s as i64 * 1000;
        check_tally(self.samples_per_interval, interval_ms, n_possible, tally)
    }
}

const fn check_tally(
    samples: u32,
    interval_ms: i64,
    n_possible: u32,
    tally: &Tally,
) -> Result<(), TallyError> {
    if n_possible != samples {
        return Err(TallyError::Possible {
            found: n_possible,
            expected: samples,
        });
    }
    let most = if interval_ms > 0 {
        interval_ms as u64
    } else {
        0
    };
    if tally.held() > most {
        return Err(TallyError::TooManySamples {
            held: tally.held(),
            most,
        });
    }
    Ok(())
}

/// Whether channel `idx` (if any) exists among `channels` and is of `kind`.
const fn link_is(channels: &[ChannelConfig], idx: Option<u8>, kind: Kind) -> bool {
    match idx {
        None => true,
        Some(j) => {
            let j = j as usize;
            j < channels.len() && channels[j].kind as u8 == kind as u8
        }
    }
}

/// Feeds `Option<f64>` to a fingerprint: presence, then the bit pattern.
const fn fp_opt(c: Crc32, v: Option<f64>) -> Crc32 {
    match v {
        Some(x) => c.word(1).word(x.to_bits()),
        None => c.word(0).word(0),
    }
}

/// Feeds `Option<u8>` (a channel index) to a fingerprint.
const fn fp_index(c: Crc32, v: Option<u8>) -> Crc32 {
    match v {
        Some(i) => c.word(1 << 8 | i as u64),
        None => c.word(0),
    }
}

/// The fingerprint of a configuration ([`Layout::fingerprint`]): the CRC-32 of
/// its fields, each fed as one little-endian `u64` word, in declaration order
/// (an `Option` as a presence word and its value), the channel count first.
///
/// A logger whose station uses only its first `n` channel slots stamps its
/// state frames with the fingerprint of those `n` channels, which is what a PC
/// computes from a station of `n` channels.
pub const fn config_fingerprint(station: &StationConfig, channels: &[ChannelConfig]) -> u32 {
    fingerprint_of(station, channels, true)
}

/// [`config_fingerprint`], or with `entry` false the fingerprint of the
/// station's frame ([`Layout::frame`]): every field but those a sensor-history
/// entry sets (mounting offset, re-calibration).
///
/// A re-calibration feeds its presence word and four values only when there
/// is one, so the fingerprint of a configuration without any is what it was
/// before re-calibrations existed.
const fn fingerprint_of(station: &StationConfig, channels: &[ChannelConfig], entry: bool) -> u32 {
    let mut c = Crc32::new()
        .word(station.interval_s as u64)
        .word(station.samples_per_interval as u64);
    let mut i = 0;
    while i < MAX_SENTINELS {
        c = fp_opt(c, station.missing_values[i]);
        i += 1;
    }
    c = c.word(channels.len() as u64);
    let mut k = 0;
    while k < channels.len() {
        let ch = &channels[k];
        let s = &ch.screen;
        c = c
            .word(ch.kind as u64)
            .word(ch.scale.offset.to_bits())
            .word(ch.scale.step.to_bits())
            .word(ch.range.0.to_bits())
            .word(ch.range.1.to_bits())
            .word(ch.gust_window as u64)
            .word(if entry {
                ch.mounting_offset_deg.to_bits()
            } else {
                0
            });
        if entry {
            if let Some(r) = ch.recal {
                c = c
                    .word(1)
                    .word(r.logger_slope.to_bits())
                    .word(r.logger_offset.to_bits())
                    .word(r.cert_slope.to_bits())
                    .word(r.cert_offset.to_bits());
            }
        }
        c = fp_index(c, ch.speed_channel);
        c = fp_opt(c, s.step_limit);
        let (mean, sd) = (s.mean_range, s.sd_range);
        c = fp_opt(
            c,
            match mean {
                Some(r) => Some(r.0),
                None => None,
            },
        );
        c = fp_opt(
            c,
            match mean {
                Some(r) => Some(r.1),
                None => None,
            },
        );
        c = fp_opt(
            c,
            match sd {
                Some(r) => Some(r.0),
                None => None,
            },
        );
        c = fp_opt(
            c,
            match sd {
                Some(r) => Some(r.1),
                None => None,
            },
        );
        c = fp_opt(c, s.gust_max);
        c = fp_opt(c, s.min_recovery);
        c = match s.flat_span_s {
            Some(v) => c.word(1).word(v as u64),
            None => c.word(0).word(0),
        };
        c = c.word(s.flat_tolerance.to_bits());
        c = fp_index(c, s.partner);
        c = c
            .word(s.pair_mean_diff.to_bits())
            .word(s.pair_max_diff.to_bits());
        c = fp_index(c, s.above);
        c = c.word(s.shear_tolerance.to_bits());
        c = match s.icing {
            Some(ice) => c
                .word(1)
                .word(ice.temperature as u64)
                .word(ice.humidity as u64)
                .word(ice.max_temperature.to_bits())
                .word(ice.min_humidity.to_bits()),
            None => c.word(0),
        };
        k += 1;
    }
    c.value()
}

/// A validated station configuration for `C` channels.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Layout<const C: usize> {
    interval_ms: i64,
    samples: u32,
    /// Largest step between samples that is not a gap, ms.
    max_step_ms: i64,
    sentinels: Sentinels,
    /// [`Layout::fingerprint`].
    fingerprint: u32,
    /// [`Layout::frame`].
    frame: u32,
    channels: [Channel; C],
}

impl<const C: usize> Layout<C> {
    /// Validates a station. `G` is the gust-window capacity, in samples, of the
    /// [`Station`] or [`IntervalAcc`] that will use the layout.
    ///
    /// A `const fn`: a logger with a fixed configuration can validate it at
    /// compile time and keep the layout in flash,
    ///
    /// ```
    /// use qc_core::{ChannelConfig, Layout, StationConfig};
    /// static LAYOUT: Layout<2> = match Layout::new::<3>(
    ///     StationConfig::ten_minute_1hz(),
    ///     &[ChannelConfig::speed(0.01), ChannelConfig::direction()],
    /// ) {
    ///     Ok(layout) => layout,
    ///     Err(_) => panic!("invalid station"),
    /// };
    /// assert_eq!(LAYOUT.interval_ms(), 600_000);
    /// ```
    pub const fn new<const G: usize>(
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<Self, ConfigError> {
        let mut layout = Self::PLACEHOLDER;
        match layout.validate::<G>(station, channels) {
            Ok(()) => Ok(layout),
            Err(e) => Err(e),
        }
    }

    /// A stand-in for [`Layout::rebuild`] to fill: ten-minute intervals of 600
    /// samples and placeholder channels that take no reading as valid.
    pub const PLACEHOLDER: Self = Layout {
        interval_ms: 600_000,
        samples: 600,
        max_step_ms: 1_500,
        sentinels: Sentinels::NONE,
        fingerprint: 0,
        frame: 0,
        channels: [Channel::placeholder(); C],
    };

    /// [`Layout::new`] in place: validates the station into `self`, without a
    /// second layout on the stack (2.4 KiB for 8 channels, on a logger whose
    /// stack is a few KiB). On an error `self` is [`Layout::PLACEHOLDER`].
    pub const fn rebuild<const G: usize>(
        &mut self,
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<(), ConfigError> {
        match self.validate::<G>(station, channels) {
            Ok(()) => Ok(()),
            Err(e) => {
                *self = Self::PLACEHOLDER;
                Err(e)
            }
        }
    }

    /// The work of [`Layout::new`] and [`Layout::rebuild`]: writes the
    /// validated station into `self` (partly, on an error).
    const fn validate<const G: usize>(
        &mut self,
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<(), ConfigError> {
        if C > 255 {
            return Err(ConfigError::TooManyChannels);
        }
        if station.interval_s == 0 || 86_400 % station.interval_s != 0 {
            return Err(ConfigError::Interval);
        }
        let n = station.samples_per_interval;
        // Timestamps are whole milliseconds, so at most one sample per ms.
        if n == 0 || n > MAX_SAMPLES_PER_INTERVAL || n as u64 > station.interval_s as u64 * 1000 {
            return Err(ConfigError::SampleCount);
        }
        let sentinels = match Sentinels::new(&station.missing_values) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let mut i = 0;
        while i < C {
            let index = i as u8;
            let cfg = &channels[i];
            self.channels[i] = match Channel::new(*cfg, G) {
                Ok(ch) => ch,
                Err(problem) => return Err(ConfigError::Channel { index, problem }),
            };
            self.channels[i].note_codes(&sentinels);
            let sc = &cfg.screen;
            let icing_ok = match sc.icing {
                Some(ice) => {
                    link_is(channels, Some(ice.temperature), Kind::Scalar)
                        && link_is(channels, Some(ice.humidity), Kind::Scalar)
                }
                None => true,
            };
            // A pair or shear test of a channel against itself would compare
            // equal means and never fire: refused like a missing channel.
            let not_itself = !matches!(sc.partner, Some(j) if j == index)
                && !matches!(sc.above, Some(j) if j == index);
            if !(link_is(channels, sc.partner, Kind::Speed)
                && link_is(channels, sc.above, Kind::Speed)
                && icing_ok
                && not_itself)
            {
                return Err(ConfigError::Channel {
                    index,
                    problem: ChannelProblem::ScreenLink,
                });
            }
            if cfg.speed_channel.is_some()
                && !(link_is(channels, cfg.speed_channel, Kind::Speed)
                    && matches!(cfg.kind, Kind::Direction))
            {
                return Err(ConfigError::Channel {
                    index,
                    problem: ChannelProblem::SpeedLink,
                });
            }
            i += 1;
        }
        let interval_ms = station.interval_s as i64 * 1000;
        self.interval_ms = interval_ms;
        self.samples = n;
        // In 32 bits (the same quotient: 3 * 86,400,000 < 2^32 and n <= 2^24),
        // so a run-time validation (the C interface's) links no 64-bit division.
        self.max_step_ms = (3 * (interval_ms as u32) / (2 * n)) as i64;
        self.sentinels = sentinels;
        self.fingerprint = config_fingerprint(&station, channels);
        self.frame = fingerprint_of(&station, channels, false);
        Ok(())
    }

    /// A CRC-32 of the whole configuration the layout was validated from (the
    /// station and every field of every channel, [`Screen`](crate::Screen)
    /// settings included), computed when the layout is validated (at compile
    /// time for a `static` layout). A logger puts it in every interval state
    /// it sends ([`crate::wire::encode_state`]) so that a PC finishing them
    /// with a different configuration refuses instead of computing wrong
    /// records.
    pub const fn fingerprint(&self) -> u32 {
        self.fingerprint
    }

    /// A CRC-32 of the configuration without what a sensor-history entry
    /// sets (each channel's mounting offset and [`crate::Recal`]): two layouts
    /// of one frame count samples in the same quanta, ranges, windows and
    /// screening, so an interval's samples may be classified by either
    /// ([`Station::push_with`]) and finished by either.
    pub const fn frame(&self) -> u32 {
        self.frame
    }

    /// Interval length, ms.
    pub const fn interval_ms(&self) -> i64 {
        self.interval_ms
    }

    /// Samples per interval at the nominal rate.
    pub const fn samples_per_interval(&self) -> u32 {
        self.samples
    }

    /// Whether `n_possible` and `tally` can be the counts of one channel's
    /// record of one interval of this layout ([`StationConfig::check_tally`]).
    pub const fn check_tally(&self, n_possible: u32, tally: &Tally) -> Result<(), TallyError> {
        check_tally(self.samples, self.interval_ms, n_possible, tally)
    }

    /// The channels.
    pub const fn channels(&self) -> &[Channel; C] {
        &self.channels
    }

    /// The index of the interval holding `t`.
    pub const fn interval_of(&self, t: Timestamp) -> i64 {
        div_floor(t.millis(), self.interval_ms)
    }

    /// The start of interval `index`.
    pub const fn interval_start(&self, index: i64) -> Timestamp {
        Timestamp::from_millis(index.saturating_mul(self.interval_ms))
    }

    /// Whether two consecutive accepted samples `dt` ms apart leave a gap.
    pub const fn is_gap(&self, dt: i64) -> bool {
        dt > self.max_step_ms
    }

    /// Finished statistics of channel `ch` of `acc`, with its screening flags;
    /// `None` if `ch >= C`.
    ///
    /// The flags of the channel's own interval tests are always set; flags that
    /// need other channels or earlier intervals (flat-line, pair mismatch, shear,
    /// icing) are set once the interval has been screened ([`Layout::screen`]),
    /// which [`Station`] does before it hands an interval out.
    pub fn finish<const G: usize>(
        &self,
        acc: &IntervalAcc<C, G>,
        ch: usize,
    ) -> Option<ChannelRecord> {
        let channel = self.channels.get(ch)?;
        let speed = channel
            .config()
            .speed_channel
            .and_then(|s| self.channels.get(usize::from(s)));
        let slot = acc.slots.get(ch)?;
        let excluded = acc.excluded_of(slot);
        let mut r = slot
            .acc
            .finish(channel, self.samples, speed, (acc.rejected, excluded));
        r.spikes = slot.spikes.count();
        r.flags = Flags::from_bits(
            interval_flags(&r, &channel.config().screen, r.spikes).bits() | acc.flags[ch].bits(),
        );
        Some(r)
    }

    /// Finished records of every channel of `acc`.
    pub fn finish_all<const G: usize>(&self, acc: &IntervalAcc<C, G>) -> [ChannelRecord; C] {
        core::array::from_fn(|i| {
            // `i < C`, so `finish` always has a record; the fallback is never used.
            self.finish(acc, i).unwrap_or_else(|| {
                acc.slots[i].acc.finish(
                    &self.channels[i],
                    self.samples,
                    None,
                    (acc.rejected, acc.excluded_of(&acc.slots[i])),
                )
            })
        })
    }

    /// Runs the cross-interval and cross-channel tests on a complete interval
    /// and stores their flags in it. Intervals must be screened in time order
    /// with one `screener`; returns the finished, flagged records.
    pub fn screen<const G: usize>(
        &self,
        screener: &mut Screener<C>,
        acc: &mut IntervalAcc<C, G>,
    ) -> [ChannelRecord; C] {
        let mut records = self.finish_all(acc);
        screener.screen(acc.index, self.interval_ms, &self.channels, &mut records);
        for (f, r) in acc.flags.iter_mut().zip(records.iter()) {
            *f = r.flags;
        }
        records
    }
}

/// Building a layout at run time into memory of its own (the C interface's
/// layout block, `qc-core/capi`), without the whole-layout constant
/// [`Layout::PLACEHOLDER`] in flash: a `const fn` that starts from it, or
/// writes it back, keeps a copy of all its channels (2.7 KiB for 8 channels)
/// in the program; these write one placeholder channel into each slot in a
/// loop (one channel's worth, 0.3 KiB).
impl<const C: usize> Layout<C> {
    /// [`Layout::PLACEHOLDER`], made at run time a channel at a time (equal
    /// to it). For `MaybeUninit::write` into memory a layout is then built in
    /// ([`Layout::rebuild_at_run_time`]).
    #[inline]
    pub fn placeholder() -> Self {
        Layout {
            interval_ms: 600_000,
            samples: 600,
            max_step_ms: 1_500,
            sentinels: Sentinels::NONE,
            fingerprint: 0,
            frame: 0,
            channels: [Channel::placeholder(); C],
        }
    }

    /// [`Layout::rebuild`], not `const`: validates the station into `self`
    /// in place; on an error `self` is [`Layout::placeholder`] again.
    pub fn rebuild_at_run_time<const G: usize>(
        &mut self,
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<(), ConfigError> {
        let result = self.validate::<G>(station, channels);
        if result.is_err() {
            self.reset();
        }
        result
    }

    /// [`Layout::rebuild_at_run_time`] without the reset on an error: then
    /// `self` is left partly validated, a layout to discard, not to run a
    /// station on (it is still a `Layout` value; it may hold any channel
    /// the station's settings gave). For a caller that marks the memory
    /// unusable on an error anyway (the C interface's layout block): it
    /// links no [`Layout::placeholder`] reset.
    ///
    /// # Errors
    ///
    /// As [`Layout::rebuild_at_run_time`].
    pub fn rebuild_no_reset<const G: usize>(
        &mut self,
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<(), ConfigError> {
        self.validate::<G>(station, channels)
    }

    /// Makes `self` [`Layout::placeholder`] again, a channel at a time.
    fn reset(&mut self) {
        self.interval_ms = 600_000;
        self.samples = 600;
        self.max_step_ms = 1_500;
        self.sentinels = Sentinels::NONE;
        self.fingerprint = 0;
        self.frame = 0;
        for ch in self.channels.iter_mut() {
            *ch = Channel::placeholder();
        }
    }
}

/// Version of the layout image format ([`Layout::to_image`]); a change to
/// the image's fields, or to the channel's state the image holds, changes it.
pub const LAYOUT_IMAGE_VERSION: u8 = 2;

/// Why a layout image was refused ([`Layout::to_image`], [`Layout::load_image`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ImageError {
    /// Not a layout image, or one of another version of the format.
    Format,
    /// An image of another shape: another channel capacity `C` or gust
    /// capacity `G`.
    Shape,
    /// Longer than an image of this shape can be, or shorter than its head
    /// and CRC (or a buffer too short for the image).
    Length,
    /// The CRC-32 does not match: the bytes were changed since they were written.
    Crc,
    /// A field holds no value of its kind (a CRC-checked image written by
    /// this library never does).
    Field,
}

impl core::fmt::Display for ImageError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            ImageError::Format => "not a layout image of this version",
            ImageError::Shape => "a layout image of another channel or gust capacity",
            ImageError::Length => "not the length of a layout image of this shape",
            ImageError::Crc => "the layout image's CRC does not match its bytes",
            ImageError::Field => "a field of the layout image holds no value of its kind",
        })
    }
}

impl core::error::Error for ImageError {}

/// A layout as bytes: validated once (on a PC, say), stored as a checked
/// image, and read back on a logger that only checks and uses it, without
/// the validation's code. The image: `"TMLI"`, [`LAYOUT_IMAGE_VERSION`],
/// the capacities `C` (u8) and `G` (u16), every field of the layout and of
/// each of its `C` channels little-endian (an option none: its tag byte
/// alone), and the CRC-32 (IEEE 802.3) of all bytes before it: at most
/// [`Layout::IMAGE_LEN`] bytes. A layout read back is
/// equal to the one written (`==`), so a logger on it computes the same
/// bits.
impl<const C: usize> Layout<C> {
    /// Bytes of the image of a layout of `C` channels, at most (every
    /// option of every channel some; a layout's image is shorter by the
    /// values of its options that are none).
    pub const IMAGE_LEN: usize = image_len(C);

    /// Writes the image of this layout, validated for the gust capacity `G`,
    /// into the start of `out`; returns its length (at most
    /// [`Layout::IMAGE_LEN`]).
    ///
    /// # Errors
    ///
    /// [`ImageError::Length`] if `out` is shorter than the image,
    /// [`ImageError::Shape`] if `C` or `G` does not fit its field (u8, u16).
    pub fn to_image<const G: usize>(&self, out: &mut [u8]) -> Result<usize, ImageError> {
        let (Ok(c), Ok(g)) = (u8::try_from(C), u16::try_from(G)) else {
            return Err(ImageError::Shape);
        };
        let mut w = ImageWriter::new(out);
        w.bytes(b"TMLI");
        w.u8(LAYOUT_IMAGE_VERSION);
        w.u8(c);
        w.u16(g);
        let Layout {
            interval_ms,
            samples,
            max_step_ms,
            sentinels,
            fingerprint,
            frame,
            channels,
        } = self;
        w.i64(*interval_ms);
        w.u32(*samples);
        w.i64(*max_step_ms);
        let values = sentinels.values();
        let counts = sentinels.counts();
        w.u8(values.len() as u8);
        for i in 0..MAX_SENTINELS {
            w.f64(values.get(i).copied().unwrap_or(0.0));
        }
        w.u8(counts.len() as u8);
        for i in 0..MAX_SENTINELS {
            w.i32(counts.get(i).copied().unwrap_or(0));
        }
        w.u32(*fingerprint);
        w.u32(*frame);
        for ch in channels {
            ch.write_image(&mut w);
        }
        let crc = crate::crc::crc32(w.written());
        w.u32(crc);
        w.len().ok_or(ImageError::Length)
    }

    /// Reads the image `image` ([`Layout::to_image`] of a layout of this
    /// shape: `C` channels, gust capacity `G`) into `self`, in place (no
    /// second layout on the stack), after checking its format, version,
    /// shape, length and CRC; no validation of the station runs. On an error
    /// `self` is [`Layout::placeholder`].
    ///
    /// The CRC tells an image [`Layout::to_image`] wrote from one changed
    /// since; it does not make other bytes valid. An image made up or edited
    /// with its CRC made right is read as it is, its fields never validated:
    /// a station on it computes wrong statistics (without a panic: the
    /// `image` fuzz target of `host-cli` runs one on every image that
    /// loads). Store only images `to_image` wrote.
    ///
    /// # Errors
    ///
    /// [`ImageError`]: what is wrong with the image.
    pub fn load_image<const G: usize>(&mut self, image: &[u8]) -> Result<(), ImageError> {
        let result = self.read_image::<G>(image);
        if result.is_err() {
            self.reset();
        }
        result
    }

    /// [`Layout::load_image`] without the reset on an error: then `self` is
    /// left partly written, a layout to discard, not to run a station on (it
    /// is still a `Layout` value; its fields and its channels' may hold any
    /// values the image's bytes gave). For a caller that marks the memory
    /// unusable on an error anyway: it links no [`Layout::placeholder`]
    /// reset.
    ///
    /// # Errors
    ///
    /// As [`Layout::load_image`].
    pub fn load_image_no_reset<const G: usize>(&mut self, image: &[u8]) -> Result<(), ImageError> {
        self.read_image::<G>(image)
    }

    /// [`Layout::load_image`] into memory that holds no layout yet (the C
    /// interface's layout block): writes a blank layout into `slot` (cleared
    /// memory: no placeholder layout built field by field, 0.3 KiB less
    /// flash on a Cortex-M0 for 8 channels), reads the image into it in
    /// place, and returns it. On an error `slot` holds a blank layout that
    /// no station may run on; it is not handed out.
    ///
    /// # Errors
    ///
    /// As [`Layout::load_image`].
    pub fn load_image_into<'a, const G: usize>(
        slot: &'a mut core::mem::MaybeUninit<Self>,
        image: &[u8],
    ) -> Result<&'a mut Self, ImageError> {
        let layout = blank(slot);
        layout.read_image::<G>(image)?;
        Ok(layout)
    }

    /// The work of [`Layout::load_image`] (`self` partly written on an
    /// error): the shape's part, small; the rest is [`read_image`], one
    /// function for every shape.
    fn read_image<const G: usize>(&mut self, image: &[u8]) -> Result<(), ImageError> {
        let Layout {
            interval_ms,
            samples,
            max_step_ms,
            sentinels,
            fingerprint,
            frame,
            channels,
        } = self;
        let scalars = ImageScalars {
            interval_ms,
            samples,
            max_step_ms,
            sentinels,
            fingerprint,
            frame,
        };
        read_image(image, C, G, scalars, channels)
    }
}

/// Writes the blank layout [`Layout::load_image_into`] reads an image
/// into (not inlined: a temporary the compiler may build for it takes stack
/// only while this runs, not during the read).
#[inline(never)]
fn blank<const C: usize>(slot: &mut core::mem::MaybeUninit<Layout<C>>) -> &mut Layout<C> {
    slot.write(Blank::<C>::LAYOUT)
}

/// The blank layout of `C` channels (a constant, not built: a constant of
/// cleared memory is written as one memory clear, without a temporary).
struct Blank<const C: usize>;

impl<const C: usize> Blank<C> {
    const LAYOUT: Layout<C> = Layout {
        interval_ms: 0,
        samples: 0,
        max_step_ms: 0,
        sentinels: Sentinels::NONE,
        fingerprint: 0,
        frame: 0,
        channels: [Channel::BLANK; C],
    };
}

/// Bytes of the image of a layout of `c` channels at most ([`Layout::IMAGE_LEN`]).
const fn image_len(c: usize) -> usize {
    8 + 20 + 2 + 12 * MAX_SENTINELS + 8 + c * Channel::IMAGE_LEN + 4
}

/// A layout's fields besides its channels, where [`read_image`] reads
/// them to (in place: no copy of them on the stack to move afterwards).
struct ImageScalars<'a> {
    interval_ms: &'a mut i64,
    samples: &'a mut u32,
    max_step_ms: &'a mut i64,
    sentinels: &'a mut Sentinels,
    fingerprint: &'a mut u32,
    frame: &'a mut u32,
}

/// Reads a layout image of `c` channels and gust capacity `g` (its length
/// checked by the caller): the channels into `channels` (`c` of them), the
/// rest into `out` (on an error some may be written: the layout is then
/// reset or discarded). Not generic, so that a program loading images of
/// several shapes has this code once.
fn read_image(
    image: &[u8],
    c: usize,
    g: usize,
    out: ImageScalars<'_>,
    channels: &mut [Channel],
) -> Result<(), ImageError> {
    let Some((body, crc)) = image.split_last_chunk::<4>() else {
        return Err(ImageError::Length);
    };
    let mut r = ImageReader::new(body);
    if r.u32() != u32::from_le_bytes(*b"TMLI") || r.u8() != LAYOUT_IMAGE_VERSION {
        return Err(ImageError::Format);
    }
    if usize::from(r.u8()) != c || usize::from(r.u16()) != g {
        return Err(ImageError::Shape);
    }
    // Its options decide its length: too long a one is refused here, one
    // whose fields end before or after its CRC by `r.rest()` below.
    if image.len() > image_len(c) {
        return Err(ImageError::Length);
    }
    if crate::crc::crc32(body) != u32::from_le_bytes(*crc) {
        return Err(ImageError::Crc);
    }
    *out.interval_ms = r.i64();
    *out.samples = r.u32();
    *out.max_step_ms = r.i64();
    // Read as made (`from_fn` calls in index order), not cleared first.
    let n_values = r.u8();
    let values: [f64; MAX_SENTINELS] = core::array::from_fn(|_| r.f64());
    let n_counts = r.u8();
    let counts: [i32; MAX_SENTINELS] = core::array::from_fn(|_| r.i32());
    let sentinels = Sentinels::from_parts(values, n_values, counts, n_counts);
    *out.fingerprint = r.u32();
    *out.frame = r.u32();
    // What a state of capacity `g` relies on (the image was written from a
    // layout validated for it): the gust window a speed channel runs, the
    // only kind with a gust (validation checks no other's).
    let mut gust_ok = true;
    for ch in channels.iter_mut() {
        ch.read_image(&mut r);
        gust_ok &= ch.window() <= g;
    }
    let Some(sentinels) = sentinels else {
        return Err(ImageError::Field);
    };
    *out.sentinels = sentinels;
    if !(r.ok() && gust_ok && *out.interval_ms > 0 && *out.samples > 0 && r.rest() == 0) {
        return Err(ImageError::Field);
    }
    Ok(())
}

/// The accumulated state of one interval (or one piece of it).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct IntervalAcc<const C: usize, const G: usize> {
    index: i64,
    /// First and last accepted sample times, ms; [`NONE_MS`] before any.
    first: i64,
    last: i64,
    slots: [Slot<G>; C],
    flags: [Flags; C],
    /// Samples rejected for their timestamp: a rejected sample is rejected on
    /// every channel alike, so the interval counts it once.
    rejected: u32,
    /// Whether [`IntervalAcc::set_state`] has set a channel's state (and with
    /// it `rejected`).
    from_states: bool,
    /// Samples accepted into the interval. Every one holds a reading of
    /// every channel, so a channel's readings excluded by decision
    /// ([`Reading::Excluded`]) are this minus the readings its accumulator
    /// counted: one count for all channels, as `rejected`, instead of one per
    /// channel (4 bytes a channel, or 8 in an accumulator's alignment).
    accepted: u32,
}

/// The class of the reading of the speed channel `ch` is linked to, if any
/// ([`IntervalAcc::push`], a linked direction). Out of line with the
/// feature `linked-speed-call` (code generation only): inlined into the
/// push's channel loop (as LTO does where the push has one caller, the C
/// interface's configured library), its indexing of another channel made
/// the compiler address every channel by index, two multiplies and spilled
/// pointers a channel on a Cortex-M0: 7 instructions a channel more
/// (firmware-example/README.md, "Configured builds, measured"). Without
/// the feature the compiler decides, as before it (the Rust firmware's
/// figures, where a linked vane would pay the call).
#[cfg_attr(feature = "linked-speed-call", inline(never))]
fn linked_speed<const C: usize>(
    layout: &Layout<C>,
    readings: &[Reading; C],
    ch: &Channel,
) -> Option<crate::channel::Class> {
    let s = usize::from(ch.config().speed_channel?);
    match (layout.channels.get(s), readings.get(s)) {
        (Some(sc), Some(sr)) => Some(sc.classify(*sr, &layout.sentinels)),
        _ => None,
    }
}

impl<const C: usize, const G: usize> IntervalAcc<C, G> {
    /// An empty interval `index` of `layout`.
    pub fn new(layout: &Layout<C>, index: i64) -> Self {
        IntervalAcc {
            index,
            first: NONE_MS,
            last: NONE_MS,
            slots: core::array::from_fn(|i| Slot::new(&layout.channels[i])),
            flags: [Flags::EMPTY; C],
            rejected: 0,
            from_states: false,
            accepted: 0,
        }
    }

    /// A stand-in before the first interval (channels of no kind yet); a
    /// [`Station`] resets it for the first interval it opens.
    const fn placeholder() -> Self {
        IntervalAcc {
            index: 0,
            first: NONE_MS,
            last: NONE_MS,
            slots: [Slot::EMPTY; C],
            flags: [Flags::EMPTY; C],
            rejected: 0,
            from_states: false,
            accepted: 0,
        }
    }

    /// The interval's index (interval number since the epoch).
    pub const fn index(&self) -> i64 {
        self.index
    }

    /// First and last accepted sample times, if any sample was accepted.
    pub const fn span(&self) -> Option<(Timestamp, Timestamp)> {
        if self.first == NONE_MS {
            None
        } else {
            Some((
                Timestamp::from_millis(self.first),
                Timestamp::from_millis(self.last),
            ))
        }
    }

    /// The per-channel states, in channel order.
    pub fn channels(&self) -> impl ExactSizeIterator<Item = &ChannelAcc<G>> + '_ {
        self.slots.iter().map(|s| &s.acc)
    }

    /// The state of channel `ch`, if `ch < C`.
    pub fn channel(&self, ch: usize) -> Option<&ChannelAcc<G>> {
        self.slots.get(ch).map(|s| &s.acc)
    }

    /// The sample counts of channel `ch` by outcome, if `ch < C` (the
    /// samples rejected for their timestamp are the interval's, the same on
    /// every channel).
    pub fn tally(&self, ch: usize) -> Option<Tally> {
        self.slots
            .get(ch)
            .map(|s| s.acc.counts().tally(self.rejected, self.excluded_of(s)))
    }

    /// Samples rejected for their timestamp while this interval was open.
    pub const fn rejected(&self) -> u32 {
        self.rejected
    }

    /// The readings of `slot` excluded by decision: the accepted samples
    /// minus the readings its accumulator counted.
    const fn excluded_of(&self, slot: &Slot<G>) -> u32 {
        self.accepted.saturating_sub(slot.acc.counts().counted())
    }

    /// The end state of channel `ch`, to send to a PC that finishes it
    /// ([`crate::wire::encode_state`]); `None` if `ch >= C`. Its tally
    /// carries the interval's rejected samples.
    pub fn state(&self, ch: usize) -> Option<ChannelState> {
        self.slots
            .get(ch)
            .map(|s| s.state(self.rejected, self.excluded_of(s)))
    }

    /// Puts a channel's end state, received from a logger, into this
    /// interval, for finishing ([`Finisher::interval`]). The result finishes
    /// exactly as the logger's own interval would; it cannot be merged
    /// ([`IntervalAcc::merge`] needs the gust window and spike chain, which a
    /// state leaves out).
    ///
    /// The interval counts samples rejected for their timestamp once for all
    /// channels: the first state set gives the count, and a later state of
    /// another count is refused ([`StateError::RejectedDiffers`]), leaving the
    /// interval as it was.
    pub fn set_state(
        &mut self,
        layout: &Layout<C>,
        ch: usize,
        state: &ChannelState,
    ) -> Result<(), StateError> {
        let channel = layout.channels.get(ch).ok_or(StateError::NoSuchChannel)?;
        let slot = self.slots.get_mut(ch).ok_or(StateError::NoSuchChannel)?;
        let new = Slot::from_state(channel, state).ok_or(StateError::WrongForm)?;
        let rejected = state.tally().rejected;
        if self.from_states && self.rejected != rejected {
            return Err(StateError::RejectedDiffers {
                interval: self.rejected,
                state: rejected,
            });
        }
        *slot = new;
        // The samples the state's interval held: the same on every channel
        // (readers check `Tally::same_samples`), so the last state's stands.
        self.accepted = u32::try_from(state.tally().held()).unwrap_or(u32::MAX);
        self.rejected = rejected;
        self.from_states = true;
        Ok(())
    }

    /// Adds one accepted sample at `t` (the caller keeps `t` increasing and within
    /// this interval; [`Station::push`] does).
    pub fn push(&mut self, layout: &Layout<C>, t: Timestamp, readings: &[Reading; C]) {
        let ms = t.millis();
        let broken = if self.last == NONE_MS {
            self.first = ms;
            false
        } else {
            // Supported times are far from the i64 limits: no overflow.
            layout.is_gap(ms.wrapping_sub(self.last))
        };
        self.last = ms;
        if broken {
            for slot in &mut self.slots {
                slot.break_run();
            }
        }
        let sentinels = &layout.sentinels;
        // One pass over the channels (a Cortex-M0 pays for every extra load and
        // store); a direction linked to a speed classifies that speed's reading
        // again rather than keeping every channel's class in an array.
        self.accepted = self.accepted.saturating_add(1);
        for ((slot, ch), reading) in self
            .slots
            .iter_mut()
            .zip(layout.channels.iter())
            .zip(readings.iter())
        {
            let speed = || linked_speed(layout, readings, ch);
            slot.push_reading(ch, reading, sentinels, speed);
        }
    }

    /// Adds `n` accepted samples at once, channel by channel: `columns[c]`
    /// holds channel `c`'s readings (at least `n`), `last_ms` is the time of
    /// the last. The caller ([`Sampler::push_run`]) has checked that every one
    /// follows the one before, this interval's last included, within the
    /// interval and with no gap: the same state as [`IntervalAcc::push`] of
    /// each in turn.
    ///
    /// A direction linked to a speed reads the quanta its speed's column
    /// kept ([`Slot::push_column`]): the speed is classified once. Its
    /// channel is taken right after its speed's, [`LINK_ROWS`] rows at a time
    /// (the quanta are a local array: nothing in the state).
    fn push_run(&mut self, layout: &Layout<C>, n: usize, last_ms: i64, columns: &[&[Reading]; C]) {
        let sentinels = &layout.sentinels;
        let chans = &layout.channels;
        let kind = |c: usize| chans.get(c).map(|ch| ch.config().kind);
        // The linked speed of direction `d`, whose kept quanta it reads: the
        // `speed` that `push` classifies for it, if that is not a direction
        // (a layout refuses a link to anything but a speed; such a direction
        // classifies its link's column itself, below).
        let speed_of = |d: usize| -> Option<usize> {
            let s = usize::from(chans.get(d)?.config().speed_channel?);
            (s < C && kind(d) == Some(Kind::Direction)).then_some(s)
        };
        // Each channel's speed to read the kept quanta of, and whether a
        // direction reads its own: once a run, not once a piece.
        let link: [Option<usize>; C] =
            core::array::from_fn(|d| speed_of(d).filter(|&s| kind(s) != Some(Kind::Direction)));
        let mut linked = [false; C];
        for s in link.iter().flatten() {
            if let Some(l) = linked.get_mut(*s) {
                *l = true;
            }
        }
        let mut quanta = [NO_SPEED; LINK_ROWS];
        let mut start = 0;
        while start < n {
            let end = n.min(start.saturating_add(LINK_ROWS));
            let len = end - start;
            let col_of = |c: usize| {
                let col = columns.get(c).copied().unwrap_or_default();
                col.get(start..end).unwrap_or_default()
            };
            for (c, ((ch, &to), &linked)) in chans.iter().zip(&link).zip(&linked).enumerate() {
                if to.is_some() {
                    // Taken right after its speed's column.
                    continue;
                }
                let Some(slot) = self.slots.get_mut(c) else {
                    break;
                };
                if let (Some(s), Some(sc)) = (speed_of(c), speed_of(c).and_then(|s| chans.get(s))) {
                    // Linked to a direction: refused by a layout, kept exact.
                    let out = quanta.get_mut(..len).unwrap_or_default();
                    quanta_of(sc, col_of(s), sentinels, out);
                    slot.push_column(ch, col_of(c), sentinels, quanta.get(..len), None);
                    continue;
                }
                let keep = quanta.get_mut(..len).filter(|_| linked);
                slot.push_column(ch, col_of(c), sentinels, None, keep);
                if !linked {
                    continue;
                }
                for (d, dc) in chans.iter().enumerate() {
                    if link.get(d).copied().flatten() != Some(c) {
                        continue;
                    }
                    if let Some(slot) = self.slots.get_mut(d) {
                        slot.push_column(dc, col_of(d), sentinels, quanta.get(..len), None);
                    }
                }
            }
            start = end;
        }
        self.last = last_ms;
        // As `push` of each: every sample holds a reading of every channel.
        self.accepted = self
            .accepted
            .saturating_add(u32::try_from(n).unwrap_or(u32::MAX));
    }

    /// Empties the accumulator in place for interval `index` of `layout`, as
    /// [`IntervalAcc::new`] would make it.
    pub fn reset(&mut self, layout: &Layout<C>, index: i64) {
        self.index = index;
        self.first = NONE_MS;
        self.last = NONE_MS;
        for (slot, ch) in self.slots.iter_mut().zip(layout.channels.iter()) {
            *slot = Slot::new(ch);
        }
        self.flags = [Flags::EMPTY; C];
        self.rejected = 0;
        self.from_states = false;
        self.accepted = 0;
    }

    /// Clears the flags set by [`Layout::screen`] (a piece screened on its own
    /// must be screened again once complete, in time order).
    pub fn clear_flags(&mut self) {
        self.flags = [Flags::EMPTY; C];
    }

    /// Counts one sample rejected for its timestamp (on every channel: the
    /// interval counts it once, and each channel's tally shows it).
    pub fn reject(&mut self) {
        self.rejected = self.rejected.saturating_add(1);
    }

    /// Merges `later`, a piece of the same interval whose samples all follow this
    /// piece's. Gust windows and spikes straddling the join are found exactly.
    ///
    /// Screening flags from other channels and earlier intervals are cleared:
    /// screen the merged interval again ([`Layout::screen`]), in time order with
    /// the other intervals, to get them back.
    pub fn merge(&mut self, layout: &Layout<C>, later: &Self) {
        let joined = self.last == NONE_MS
            || later.first == NONE_MS
            || !layout.is_gap(later.first.saturating_sub(self.last));
        for ((a, b), ch) in self
            .slots
            .iter_mut()
            .zip(later.slots.iter())
            .zip(layout.channels.iter())
        {
            a.acc.merge(&b.acc, ch.window(), joined);
            let circular = ch.config().kind == Kind::Direction;
            a.spikes.merge(&b.spikes, ch.spike_lim(), circular, joined);
        }
        self.clear_flags();
        self.rejected = self.rejected.saturating_add(later.rejected);
        self.accepted = self.accepted.saturating_add(later.accepted);
        if self.first == NONE_MS {
            self.first = later.first;
        }
        if later.last != NONE_MS {
            self.last = later.last;
        }
    }
}

/// Why [`IntervalAcc::set_state`] refused a state.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum StateError {
    /// The layout has no channel of that index.
    NoSuchChannel,
    /// The state is not of the channel's form (kind, or linked speed).
    WrongForm,
    /// The state's count of samples rejected for their timestamp is not the
    /// one another channel's state already set for this interval (a rejected
    /// sample is rejected on every channel alike).
    RejectedDiffers {
        /// The count already set.
        interval: u32,
        /// The count of the state refused.
        state: u32,
    },
}

impl core::fmt::Display for StateError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            StateError::NoSuchChannel => "no channel of that index in the station",
            StateError::WrongForm => {
                "the state is not of the channel's kind (speed, direction with or without a linked speed, scalar)"
            }
            StateError::RejectedDiffers { interval, state } => {
                return write!(
                    f,
                    "the state counts {state} samples rejected for their timestamp, another channel of the same interval {interval}"
                );
            }
        })
    }
}

/// Why a sample was rejected for its timestamp.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Reject {
    /// The same timestamp as the last accepted sample.
    Duplicate,
    /// Earlier than the last accepted sample.
    Backward,
    /// In an interval already closed by [`Station::close`] or [`Station::tick`].
    ClosedInterval,
    /// Outside the years 0000 to 9999.
    UnsupportedTime,
}

/// [`Station::push_with`] was given a layout of another frame
/// ([`Layout::frame`]): its quanta, ranges or screening are not the station's,
/// so the sample was handed back, not pushed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct OtherFrame;

impl core::fmt::Display for OtherFrame {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str("the layout in force differs from the station's in more than mounting offsets and re-calibrations")
    }
}

impl core::error::Error for OtherFrame {}

/// What [`Station::push`] did with a sample.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Pushed {
    /// Accepted into the open interval (each reading counted valid, missing or
    /// out of range by its channel).
    Accepted,
    /// Rejected for its timestamp, and counted.
    Rejected(Reject),
}

/// Intervals in a row with no samples at all.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Gap {
    /// Index of the first empty interval.
    pub first: i64,
    /// How many empty intervals.
    pub count: u64,
}

/// What a station hands to its callback.
#[derive(Debug)]
pub enum Event<'a, const C: usize, const G: usize> {
    /// An interval closed: its state (to merge, or to finish again) and the
    /// finished records of its channels, screened and flagged (what
    /// [`Layout::finish`] gives once the station has screened the interval).
    Closed(&'a IntervalAcc<C, G>, &'a [ChannelRecord; C]),
    /// Intervals that held no samples; each counts as possible and lost.
    Gap(Gap),
}

/// Sample counts of a station by outcome, since start (one per `push`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PushTotals {
    /// Accepted samples.
    pub accepted: u64,
    /// Rejected: same timestamp as the last accepted.
    pub duplicate: u64,
    /// Rejected: earlier than the last accepted.
    pub backward: u64,
    /// Rejected: in an interval already closed.
    pub closed_interval: u64,
    /// Rejected: outside the supported years.
    pub unsupported_time: u64,
    /// Of the rejected, those that arrived while no interval was open, so that
    /// no interval record counts them.
    pub unplaced: u64,
}

impl PushTotals {
    /// All samples pushed.
    pub const fn pushed(&self) -> u64 {
        self.accepted
            + self.duplicate
            + self.backward
            + self.closed_interval
            + self.unsupported_time
    }
}

/// What a [`Sampler`] hands to its callback.
#[derive(Debug)]
pub enum Ended<'a, const C: usize, const G: usize> {
    /// An interval closed: the layout and the interval's exact state, not yet
    /// finished or screened ([`Finisher::interval`] does both).
    Interval(&'a Layout<C>, &'a mut IntervalAcc<C, G>),
    /// Intervals that held no samples ([`Finisher::gap`] counts them).
    Gap(&'a Layout<C>, Gap),
}

/// The sampling half of a [`Station`]: takes timestamped samples, keeps the open
/// interval, rejects and counts samples out of time order, and hands each
/// closed interval's exact state (and each run of empty intervals) to a
/// callback, without finishing it.
///
/// A logger that sends interval states ([`crate::wire::encode_state`]) for a PC
/// to finish with a [`Finisher`] runs a sampler alone: the finishing and
/// screening code (and the software floating point it needs on a core
/// without an FPU) then stays off the logger. The PC's records are those a
/// [`Station`] on the logger would have made, bit for bit.
#[derive(Clone, Debug)]
pub struct Sampler<const C: usize, const G: usize, L: Borrow<Layout<C>> = Layout<C>> {
    layout: L,
    /// The interval state; kept after an interval closes and reset in place for
    /// the next (no copies of it on the stack of a small logger).
    open: IntervalAcc<C, G>,
    /// Whether `open` holds an open interval.
    live: bool,
    /// Index of the next interval not yet reported; `i64::MIN` before any.
    cursor: i64,
    /// Time of the last accepted sample, ms; [`NONE_MS`] before any.
    last: i64,
    /// End (ms, exclusive) of the open interval; `i64::MIN` when none is open.
    open_end: i64,
    totals: PushTotals,
}

impl<const C: usize, const G: usize, L: Borrow<Layout<C>>> Sampler<C, G, L> {
    /// A sampler with nothing recorded yet.
    pub const fn new(layout: L) -> Self {
        Sampler {
            layout,
            open: IntervalAcc::placeholder(),
            live: false,
            cursor: i64::MIN,
            last: NONE_MS,
            open_end: i64::MIN,
            totals: PushTotals {
                accepted: 0,
                duplicate: 0,
                backward: 0,
                closed_interval: 0,
                unsupported_time: 0,
                unplaced: 0,
            },
        }
    }

    /// The layout.
    pub fn layout(&self) -> &Layout<C> {
        self.layout.borrow()
    }

    /// Samples pushed, by outcome.
    pub const fn totals(&self) -> &PushTotals {
        &self.totals
    }

    /// The open interval, if any.
    pub const fn open(&self) -> Option<&IntervalAcc<C, G>> {
        if self.live {
            Some(&self.open)
        } else {
            None
        }
    }

    /// Adds one sample: a time and one reading per channel. Closed intervals and
    /// gaps that this sample ends are handed to `emit` first, in time order.
    #[inline]
    pub fn push<F>(&mut self, t: Timestamp, readings: &[Reading; C], mut emit: F) -> Pushed
    where
        F: FnMut(Ended<'_, C, G>),
    {
        // Steady state: after the last accepted sample and inside the open
        // interval (`open_end` is `i64::MIN` when none is open), which lies in
        // the supported years, so none of the checks below can reject it.
        let ms = t.millis();
        if !(ms < self.open_end && ms > self.last) {
            if let Err(reason) = self.enter(t, &mut emit) {
                return Pushed::Rejected(reason);
            }
        }
        self.open.push(self.layout.borrow(), t, readings);
        self.last = ms;
        self.totals.accepted += 1;
        Pushed::Accepted
    }

    /// [`Sampler::push`] with the readings classified by `entry` instead of
    /// the sampler's own layout: the configuration in force at `t` when a
    /// sensor history changes mounting offsets or re-calibrations
    /// ([`crate::Recal`]) over time. The time rules, the interval and the
    /// finish stay the sampler's. `entry` must be of the sampler's frame
    /// ([`Layout::frame`]); one that is not is handed back
    /// ([`OtherFrame`]) and the sample is neither pushed nor counted.
    pub fn push_with<F>(
        &mut self,
        entry: &Layout<C>,
        t: Timestamp,
        readings: &[Reading; C],
        mut emit: F,
    ) -> Result<Pushed, OtherFrame>
    where
        F: FnMut(Ended<'_, C, G>),
    {
        if entry.frame != self.layout.borrow().frame {
            return Err(OtherFrame);
        }
        let ms = t.millis();
        if !(ms < self.open_end && ms > self.last) {
            if let Err(reason) = self.enter(t, &mut emit) {
                return Ok(Pushed::Rejected(reason));
            }
        }
        self.open.push(entry, t, readings);
        self.last = ms;
        self.totals.accepted += 1;
        Ok(Pushed::Accepted)
    }

    /// Adds the leading samples of a block that are each simply the next one
    /// of the open interval (after the last accepted sample, inside the
    /// interval, with no gap in time), channel by channel; returns how many
    /// (0 when the first is not). `columns[c]` holds channel `c`'s readings,
    /// one per time (a shorter column shortens the run).
    ///
    /// The state is the one [`Sampler::push`] of each sample in turn makes:
    /// the same classification and, step by step, the same integers, the
    /// channels taken one after the other (they are independent; a linked
    /// direction reads its speed's readings, not its state), each in a loop
    /// of its kind with the interval's state in locals (checked on random
    /// data against samples pushed one by one, `run_tests`). A host feeds
    /// blocks of rows so: one loop per channel instead of one call per channel
    /// and sample. The sample after the run (if any) goes through
    /// [`Sampler::push`], which opens intervals, ends gaps and rejects, and
    /// the next run starts after it. Nothing is emitted.
    pub fn push_run(&mut self, times: &[Timestamp], columns: &[&[Reading]; C]) -> usize {
        self.run(None, times, columns)
    }

    /// [`Sampler::push_run`] with the readings classified by `entry`, the
    /// configuration in force at every time of the run: the same state as
    /// [`Sampler::push_with`] of each sample with `entry` (the caller ends
    /// the run where another entry comes into force). An entry of another
    /// frame is handed back ([`OtherFrame`]) and nothing is pushed.
    pub fn push_run_with(
        &mut self,
        entry: &Layout<C>,
        times: &[Timestamp],
        columns: &[&[Reading]; C],
    ) -> Result<usize, OtherFrame> {
        if entry.frame != self.layout.borrow().frame {
            return Err(OtherFrame);
        }
        Ok(self.run(Some(entry), times, columns))
    }

    /// [`Sampler::push_run`], the readings classified by `entry` or (`None`)
    /// the sampler's own layout; the time rules are the sampler's.
    fn run(
        &mut self,
        entry: Option<&Layout<C>>,
        times: &[Timestamp],
        columns: &[&[Reading]; C],
    ) -> usize {
        if !self.live || self.open.last == NONE_MS {
            return 0;
        }
        let layout = self.layout.borrow();
        let len = columns.iter().fold(times.len(), |n, col| n.min(col.len()));
        let times = times.get(..len).unwrap_or_default();
        let mut prev = self.last;
        let mut n = 0;
        // Four at a time while each follows the one before without a gap
        // (`&`, not `&&`: no branch each) and the fourth, so all four, is
        // within the interval; then one by one, the same test.
        let follows = |p: i64, ms: i64| (ms > p) & !layout.is_gap(ms.wrapping_sub(p));
        for four in times.chunks_exact(4) {
            let [a, b, c, d] = [0, 1, 2, 3].map(|k| four.get(k).map_or(NONE_MS, |t| t.millis()));
            if !(follows(prev, a) & follows(a, b) & follows(b, c) & follows(c, d))
                || d >= self.open_end
            {
                break;
            }
            prev = d;
            n += 4;
        }
        for t in times.get(n..).unwrap_or_default() {
            let ms = t.millis();
            // Supported times are far from the i64 limits: no overflow.
            if !(ms < self.open_end && ms > prev) || layout.is_gap(ms.wrapping_sub(prev)) {
                break;
            }
            prev = ms;
            n += 1;
        }
        if n > 0 {
            self.open
                .push_run(entry.unwrap_or(layout), n, prev, columns);
            self.last = prev;
            self.totals.accepted += n as u64;
        }
        n
    }

    /// The rare part of [`Sampler::push`], out of line: checks the time of a
    /// sample that is not simply the next one in the open interval, counts a
    /// rejection, or closes intervals and opens the sample's.
    #[inline(never)]
    fn enter<F: FnMut(Ended<'_, C, G>)>(
        &mut self,
        t: Timestamp,
        emit: &mut F,
    ) -> Result<(), Reject> {
        if let Some(reason) = self.check_time(t) {
            match reason {
                Reject::Duplicate => self.totals.duplicate += 1,
                Reject::Backward => self.totals.backward += 1,
                Reject::ClosedInterval => self.totals.closed_interval += 1,
                Reject::UnsupportedTime => self.totals.unsupported_time += 1,
            }
            if self.live {
                self.open.reject();
            } else {
                self.totals.unplaced += 1;
            }
            return Err(reason);
        }
        let ms = t.millis();
        if ms >= self.open_end {
            let layout = self.layout.borrow();
            // Usually the next interval: no division.
            let k = if self.live && ms - self.open_end < layout.interval_ms {
                self.open.index + 1
            } else {
                layout.interval_of(t)
            };
            self.close(&mut *emit);
            self.gap_to(k, emit);
            self.open.reset(self.layout.borrow(), k);
            self.live = true;
            self.open_end = self.layout.borrow().interval_start(k + 1).millis();
        }
        Ok(())
    }

    fn check_time(&self, t: Timestamp) -> Option<Reject> {
        if !t.is_supported() {
            return Some(Reject::UnsupportedTime);
        }
        let ms = t.millis();
        if ms == self.last {
            return Some(Reject::Duplicate);
        }
        if ms < self.last {
            return Some(Reject::Backward);
        }
        if self.live {
            // After the last accepted sample, which lies in the open interval.
            return None;
        }
        if self.cursor != i64::MIN && self.layout.borrow().interval_of(t) < self.cursor {
            Some(Reject::ClosedInterval)
        } else {
            None
        }
    }

    /// Reports intervals before `k` not yet reported as one gap.
    fn gap_to<F: FnMut(Ended<'_, C, G>)>(&mut self, k: i64, emit: &mut F) {
        if self.cursor == i64::MIN {
            self.cursor = k;
        }
        let first = self.cursor;
        if k > first {
            let gap = Gap {
                first,
                count: (k - first) as u64,
            };
            emit(Ended::Gap(self.layout.borrow(), gap));
        }
        self.cursor = k.max(first);
    }

    /// Closes the open interval, if any, and hands it to `emit` (end of data).
    /// Later samples in that interval are rejected as [`Reject::ClosedInterval`].
    pub fn close<F: FnMut(Ended<'_, C, G>)>(&mut self, mut emit: F) {
        self.open_end = i64::MIN;
        if !self.live {
            return;
        }
        self.live = false;
        self.cursor = self.open.index + 1;
        emit(Ended::Interval(self.layout.borrow(), &mut self.open));
    }

    /// Tells the sampler the time is `now` without a sample (a timer at an
    /// interval boundary): closes the open interval if it has ended, and reports
    /// intervals that have ended with no samples as a gap.
    pub fn tick<F: FnMut(Ended<'_, C, G>)>(&mut self, now: Timestamp, mut emit: F) {
        if !now.is_supported() {
            return;
        }
        let k = self.layout.borrow().interval_of(now);
        if self.live && self.open.index < k {
            self.close(&mut emit);
        }
        if !self.live && self.cursor != i64::MIN {
            self.gap_to(k, &mut emit);
        }
    }
}

/// The finishing half of a [`Station`]: finishes and screens complete
/// intervals, in time order, and keeps the running recovery and the screening
/// history between them.
///
/// A [`Station`] holds one beside its [`Sampler`]. A PC that finishes interval
/// states sent by a logger ([`crate::wire::decode_state`]) holds one of its own
/// and feeds it the same intervals and gaps, in the same order: the records
/// and recovery come out as the logger's own station would have made them.
#[derive(Clone, Debug)]
pub struct Finisher<const C: usize> {
    /// The month of the latest closed interval and its span `[from, to)`, ms
    /// (an empty span before the first).
    month: Month,
    month_from: i64,
    month_to: i64,
    recovery: [Recovery; C],
    screener: Screener<C>,
}

impl<const C: usize> Default for Finisher<C> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const C: usize> Finisher<C> {
    /// No intervals yet.
    pub const fn new() -> Self {
        Finisher {
            month: Month { year: 0, month: 1 },
            month_from: 0,
            month_to: 0,
            recovery: [Recovery::new(); C],
            screener: Screener::new(),
        }
    }

    /// Running recovery of each channel.
    pub const fn recovery(&self) -> &[Recovery; C] {
        &self.recovery
    }

    /// Finishes and screens `acc`, a complete interval later than any before
    /// (its screening flags are stored in it), counts it in the running
    /// recovery, and returns its records. An interval outside the supported
    /// years ([`Timestamp::is_supported`]) is finished but not counted (a
    /// [`Sampler`] never closes one).
    pub fn interval<const G: usize>(
        &mut self,
        layout: &Layout<C>,
        acc: &mut IntervalAcc<C, G>,
    ) -> [ChannelRecord; C] {
        let start = layout.interval_start(acc.index);
        let records = layout.screen(&mut self.screener, acc);
        if !start.is_supported() {
            return records;
        }
        let month = self.month_of(start);
        for (r, rec) in self.recovery.iter_mut().zip(records.iter()) {
            r.add_interval_in(month, layout.samples, &rec.tally, passes(rec));
        }
        records
    }

    /// Counts `gap`, intervals with no samples, as possible and lost. A gap
    /// reaching outside the supported years ([`Timestamp::is_supported`]) is
    /// not counted (a [`Sampler`] never reports one).
    pub fn gap(&mut self, layout: &Layout<C>, gap: Gap) {
        let start = layout.interval_start(gap.first);
        let span = i64::try_from(gap.count).unwrap_or(i64::MAX);
        let last = layout.interval_start(gap.first.saturating_add(span.saturating_sub(1)));
        if !(start.is_supported() && last.is_supported()) {
            return;
        }
        for r in &mut self.recovery {
            r.add_gap(start, gap.count, layout.interval_ms, layout.samples);
        }
    }

    /// The calendar month of `t`, from a cache of the current month's span.
    fn month_of(&mut self, t: Timestamp) -> Month {
        if (self.month_from..self.month_to).contains(&t.millis()) {
            return self.month;
        }
        let m = t.month();
        self.month = m;
        self.month_from = m.start().millis();
        self.month_to = m.next().start().millis();
        m
    }
}

/// A logging station: a [`Sampler`] and a [`Finisher`]. Hands out each closed
/// interval with its finished, screened records, and keeps running recovery.
///
/// `C` is the number of channels, `G` the largest gust window in samples. The
/// whole state has a fixed size known at compile time (see the crate docs).
///
/// `L` holds the layout: the station owns it by default; a logger can give a
/// reference instead (`Station<C, G, &'static Layout<C>>`), so that a layout
/// validated at compile time stays in flash and the station's RAM is only its
/// running state.
#[derive(Clone, Debug)]
pub struct Station<const C: usize, const G: usize, L: Borrow<Layout<C>> = Layout<C>> {
    sampler: Sampler<C, G, L>,
    finisher: Finisher<C>,
}

/// Finishes what a sampler ended and hands it on as an [`Event`].
fn finish_ended<const C: usize, const G: usize>(
    finisher: &mut Finisher<C>,
    ended: Ended<'_, C, G>,
    emit: &mut impl FnMut(Event<'_, C, G>),
) {
    match ended {
        Ended::Interval(layout, acc) => {
            let records = finisher.interval(layout, acc);
            emit(Event::Closed(acc, &records));
        }
        Ended::Gap(layout, gap) => {
            finisher.gap(layout, gap);
            emit(Event::Gap(gap));
        }
    }
}

impl<const C: usize, const G: usize, L: Borrow<Layout<C>>> Station<C, G, L> {
    /// A station with nothing recorded yet.
    pub const fn new(layout: L) -> Self {
        Station {
            sampler: Sampler::new(layout),
            finisher: Finisher::new(),
        }
    }

    /// The layout.
    pub fn layout(&self) -> &Layout<C> {
        self.sampler.layout()
    }

    /// Running recovery of each channel (updated as intervals close).
    pub const fn recovery(&self) -> &[Recovery; C] {
        self.finisher.recovery()
    }

    /// Samples pushed, by outcome.
    pub const fn totals(&self) -> &PushTotals {
        self.sampler.totals()
    }

    /// The open interval, if any.
    pub const fn open(&self) -> Option<&IntervalAcc<C, G>> {
        self.sampler.open()
    }

    /// Adds one sample: a time and one reading per channel. Closed intervals and
    /// gaps that this sample ends are handed to `emit` first, in time order.
    #[inline]
    pub fn push<F>(&mut self, t: Timestamp, readings: &[Reading; C], mut emit: F) -> Pushed
    where
        F: FnMut(Event<'_, C, G>),
    {
        let finisher = &mut self.finisher;
        self.sampler
            .push(t, readings, |e| finish_ended(finisher, e, &mut emit))
    }

    /// [`Station::push`] with the readings classified by `entry`, the
    /// configuration in force at `t` ([`Sampler::push_with`]).
    pub fn push_with<F>(
        &mut self,
        entry: &Layout<C>,
        t: Timestamp,
        readings: &[Reading; C],
        mut emit: F,
    ) -> Result<Pushed, OtherFrame>
    where
        F: FnMut(Event<'_, C, G>),
    {
        let finisher = &mut self.finisher;
        self.sampler
            .push_with(entry, t, readings, |e| finish_ended(finisher, e, &mut emit))
    }

    /// Adds the leading samples of a block that are each simply the next one
    /// of the open interval, channel by channel, and returns how many
    /// ([`Sampler::push_run`]): the same state as [`Station::push`] of each.
    pub fn push_run(&mut self, times: &[Timestamp], columns: &[&[Reading]; C]) -> usize {
        self.sampler.push_run(times, columns)
    }

    /// [`Station::push_run`] with the readings classified by `entry`, the
    /// configuration in force over the whole run
    /// ([`Sampler::push_run_with`]): the same state as
    /// [`Station::push_with`] of each sample with `entry`.
    pub fn push_run_with(
        &mut self,
        entry: &Layout<C>,
        times: &[Timestamp],
        columns: &[&[Reading]; C],
    ) -> Result<usize, OtherFrame> {
        self.sampler.push_run_with(entry, times, columns)
    }

    /// Closes the open interval, if any, and hands it to `emit` (end of data).
    /// Later samples in that interval are rejected as [`Reject::ClosedInterval`].
    pub fn close<F: FnMut(Event<'_, C, G>)>(&mut self, mut emit: F) {
        let finisher = &mut self.finisher;
        self.sampler.close(|e| finish_ended(finisher, e, &mut emit));
    }

    /// Tells the station the time is `now` without a sample (a timer at an
    /// interval boundary): closes the open interval if it has ended, and reports
    /// intervals that have ended with no samples as a gap.
    pub fn tick<F: FnMut(Event<'_, C, G>)>(&mut self, now: Timestamp, mut emit: F) {
        let finisher = &mut self.finisher;
        self.sampler
            .tick(now, |e| finish_ended(finisher, e, &mut emit));
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn a_speed_channel_with_gust_window_0_has_no_gust_and_the_same_statistics() {
        use super::{Event, Layout, Station, StationConfig};
        use crate::{Absent, ChannelConfig, Reading, Stat, Timestamp};
        // Two anemometers reading the same values, one with a 1-sample window.
        let layout = Layout::<2>::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.01).with_gust_window(0),
                ChannelConfig::speed(0.01).with_gust_window(1),
            ],
        )
        .unwrap();
        let mut st: Station<2, 3> = Station::new(layout);
        let mut seen = 0;
        for s in 0..1200i64 {
            let v = 5.0 + (s % 7) as f64 * 0.3;
            st.push(
                Timestamp::from_millis(s * 1000),
                &[Reading::Value(v), Reading::Value(v)],
                |e| {
                    if let Event::Closed(_, records) = e {
                        let (a, b) = (records[0], records[1]);
                        assert_eq!(a.gust, Stat::Absent(Absent::NotApplicable));
                        assert!(matches!(b.gust, Stat::Value(_)));
                        assert_eq!((a.mean, a.sd, a.min, a.max), (b.mean, b.sd, b.min, b.max));
                        assert_eq!((a.tally, a.flags), (b.tally, b.flags));
                        seen += 1;
                    }
                },
            );
        }
        assert_eq!(seen, 1);
    }

    #[test]
    fn a_pair_or_shear_test_against_the_channel_itself_is_refused() {
        use super::{Layout, StationConfig};
        use crate::{ChannelConfig, ChannelProblem, ConfigError, Kind, Screen};
        for self_link in [true, false] {
            for pair in [true, false] {
                let mut s = Screen::for_kind(Kind::Speed);
                let other = if self_link { 0 } else { 1 };
                if pair {
                    s.partner = Some(other);
                } else {
                    s.above = Some(other);
                }
                let r = Layout::<2>::new::<3>(
                    StationConfig::ten_minute_1hz(),
                    &[
                        ChannelConfig::speed(0.01).with_screen(s),
                        ChannelConfig::speed(0.01),
                    ],
                );
                if self_link {
                    assert_eq!(
                        r.err(),
                        Some(ConfigError::Channel {
                            index: 0,
                            problem: ChannelProblem::ScreenLink
                        })
                    );
                } else {
                    assert!(r.is_ok());
                }
            }
        }
    }

    #[test]
    fn finisher_takes_any_gap_or_interval_without_panic() {
        use super::{Finisher, Gap, IntervalAcc, Layout, StationConfig};
        use crate::ChannelConfig;
        let layout = Layout::<1>::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[ChannelConfig::speed(0.1)],
        )
        .unwrap();
        let mut f: Finisher<1> = Finisher::new();
        for first in [i64::MIN, -1, 0, 2_833_000, i64::MAX / 600_000, i64::MAX] {
            for count in [0, 1, 1 << 40, u64::MAX] {
                f.gap(&layout, Gap { first, count });
            }
            let mut acc: IntervalAcc<1, 3> = IntervalAcc::new(&layout, first);
            f.interval(&layout, &mut acc);
        }
        // Only the supported ones count (years 0 to 9999): at -1, 0 and
        // 2,833,000 (1969, 1970, 2023) the one-interval gap and the interval;
        // the 2^40-interval gaps reach past the year 9999 and count nothing.
        assert_eq!(f.recovery()[0].since_start().intervals, 6);
    }
}

#[cfg(test)]
mod tally_tests {
    use super::*;

    #[test]
    fn tallies_the_station_cannot_make_are_refused() {
        let cfg = StationConfig::ten_minute_1hz();
        let layout = Layout::new::<3>(cfg, &[ChannelConfig::speed(0.1)]).unwrap();
        let t = |valid, missing, out_of_range, rejected| Tally {
            valid,
            missing,
            out_of_range,
            rejected,
            flagged: 0,
            excluded: 0,
        };
        // A full interval, a partial one, and one with a sample more than
        // the nominal rate gives (a fast clock): all as a station counts.
        for ok in [t(600, 0, 0, 0), t(10, 5, 3, 9_999), t(601, 0, 0, 0)] {
            assert_eq!(cfg.check_tally(600, &ok), Ok(()));
            assert_eq!(layout.check_tally(600, &ok), Ok(()));
        }
        // 600,000 ms in 10 minutes: at most one sample each.
        assert_eq!(cfg.check_tally(600, &t(599_999, 1, 0, u32::MAX)), Ok(()));
        assert_eq!(
            cfg.check_tally(600, &t(599_999, 1, 1, 0)),
            Err(TallyError::TooManySamples {
                held: 600_001,
                most: 600_000
            })
        );
        assert_eq!(
            layout.check_tally(600, &t(u32::MAX, u32::MAX, u32::MAX, 0)),
            Err(TallyError::TooManySamples {
                held: 3 * u64::from(u32::MAX),
                most: 600_000
            })
        );
        assert_eq!(
            cfg.check_tally(599, &t(1, 0, 0, 0)),
            Err(TallyError::Possible {
                found: 599,
                expected: 600
            })
        );
        // Flagged readings are held samples too.
        let flagged = Tally {
            flagged: 2,
            ..t(599_998, 0, 0, 0)
        };
        assert_eq!(flagged.held(), 600_000);
        assert_eq!(flagged.total(), 600_000);
        assert_eq!(cfg.check_tally(600, &flagged), Ok(()));
        let over = Tally {
            flagged: 3,
            ..t(599_998, 0, 0, 7)
        };
        assert_eq!(over.total(), 600_008);
        assert_eq!(
            cfg.check_tally(600, &over),
            Err(TallyError::TooManySamples {
                held: 600_001,
                most: 600_000
            })
        );
        // Two channels of one interval hold the same samples.
        assert!(t(590, 10, 0, 2).same_samples(&t(580, 12, 8, 2)));
        assert!(t(590, 10, 0, 2).same_samples(&Tally {
            flagged: 10,
            ..t(590, 0, 0, 2)
        }));
        assert!(!t(590, 10, 0, 2).same_samples(&t(591, 10, 0, 2)));
        assert!(!t(590, 10, 0, 2).same_samples(&t(590, 10, 0, 3)));
    }

    #[test]
    fn a_station_makes_only_tallies_that_pass() {
        // Samples faster than the nominal rate, duplicates and backward
        // times: every record the station writes passes, and the channels of
        // one interval agree.
        let cfg = StationConfig {
            interval_s: 60,
            samples_per_interval: 6,
            missing_values: [None; MAX_SENTINELS],
        };
        let layout = Layout::new::<3>(
            cfg,
            &[
                ChannelConfig::speed(0.1),
                ChannelConfig::scalar(0.1).with_range(0.0, 10.0),
            ],
        )
        .unwrap();
        let mut station: Station<2, 3> = Station::new(layout);
        let mut seen = 0;
        let mut check = |e: Event<'_, 2, 3>| {
            if let Event::Closed(_, records) = e {
                for r in records {
                    assert_eq!(cfg.check_tally(r.n_possible, &r.tally), Ok(()));
                    assert!(r.tally.same_samples(&records[0].tally));
                }
                seen += 1;
            }
        };
        let mut ms = 1_700_000_000_000i64;
        for i in 0..500i64 {
            ms += [700, 0, -300, 9_000, 1][(i % 5) as usize];
            let r = [
                Reading::Value((i % 9) as f64),
                Reading::Value((i % 13) as f64),
            ];
            station.push(Timestamp::from_millis(ms), &r, &mut check);
        }
        station.close(&mut check);
        assert!(seen > 10);
    }
}

#[cfg(test)]
mod flagged_tests {
    use crate::{
        Absent, ChannelConfig, Event, IntervalAcc, Layout, Reading, Stat, StateError, Station,
        StationConfig, Tally, Timestamp,
    };

    const T0: i64 = 1_700_000_400_000;

    fn layout() -> Layout<3> {
        Layout::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.1),
                ChannelConfig::direction().with_speed_channel(0),
                ChannelConfig::scalar(0.1).with_range(-50.0, 50.0),
            ],
        )
        .unwrap()
    }

    /// The records of one interval of `rows` (1 s apart), closed by a sample
    /// in the next interval.
    fn records(rows: &[[Reading; 3]]) -> [crate::ChannelRecord; 3] {
        let mut st: Station<3, 3> = Station::new(layout());
        let mut out = None;
        let mut keep = |e: Event<'_, 3, 3>| {
            if let Event::Closed(_, r) = e {
                out.get_or_insert(*r);
            }
        };
        for (i, r) in rows.iter().enumerate() {
            st.push(Timestamp::from_millis(T0 + 1000 * i as i64), r, &mut keep);
        }
        st.close(&mut keep);
        out.unwrap()
    }

    #[test]
    fn flagged_readings_are_counted_and_never_in_statistics() {
        use Reading::{Flagged, Missing, Value};
        // Speeds 9, 9, (flagged 30), 9: with a 3-sample gust window the
        // flagged reading breaks the run as a missing one does, so no full
        // window (were it skipped, 9, 9, 9 would make a gust of 9).
        let v = |s: f64, d: f64, x: f64| [Value(s), Value(d), Value(x)];
        let rows = [
            v(9.0, 90.0, 1.0),
            v(9.0, 90.0, 2.0),
            [Flagged, Flagged, Flagged],
            v(9.0, 90.0, 3.0),
            [Value(9.0), Flagged, Value(4.0)],
            v(9.0, 90.0, 5.0),
        ];
        let r = records(&rows);
        assert_eq!(
            r[0].tally,
            Tally {
                valid: 5,
                flagged: 1,
                ..Tally::default()
            }
        );
        assert_eq!(r[1].tally.flagged, 2);
        assert_eq!(r[1].tally.valid, 4);
        assert_eq!(r[0].mean, Stat::Value(9.0));
        assert_eq!(r[0].gust, Stat::Value(9.0));
        // The mean of 1, 2, 3, 4, 5: the flagged reading is not in it.
        assert_eq!(r[2].mean, Stat::Value(3.0));
        assert_eq!(r[2].max, Stat::Value(5.0));
        // Only 9, 9, F, 9: no full gust window.
        let r = records(&rows[..4]);
        assert_eq!(r[0].gust, Stat::Absent(Absent::NoFullWindow));
        // Flagged whatever the value: a flagged reading is never valid.
        // The same rows with the flagged readings missing: every statistic
        // equal, missing and flagged swapped.
        let as_missing: Vec<[Reading; 3]> = rows
            .iter()
            .map(|r| r.map(|x| if x == Flagged { Missing } else { x }))
            .collect();
        let (f, m) = (records(&rows), records(&as_missing));
        for (a, b) in f.iter().zip(&m) {
            assert_eq!(a.tally.missing, b.tally.flagged);
            assert_eq!(a.tally.flagged, b.tally.missing);
            let swapped = Tally {
                missing: a.tally.flagged,
                flagged: a.tally.missing,
                ..a.tally
            };
            assert_eq!(
                crate::ChannelRecord {
                    tally: swapped,
                    ..*a
                },
                *b
            );
        }
    }

    #[test]
    fn rejected_is_the_intervals_and_states_must_agree_on_it() {
        let layout = layout();
        let mut acc: IntervalAcc<3, 3> = IntervalAcc::new(&layout, 0);
        let r = [Reading::Value(5.0), Reading::Flagged, Reading::Missing];
        acc.push(&layout, Timestamp::from_millis(0), &r);
        acc.reject();
        acc.reject();
        for ch in 0..3 {
            assert_eq!(acc.tally(ch).unwrap().rejected, 2);
            assert_eq!(acc.state(ch).unwrap().tally().rejected, 2);
        }
        assert_eq!(acc.tally(1).unwrap().flagged, 1);
        assert_eq!(acc.tally(3), None);
        // Merging pieces adds the interval's rejected once.
        let mut twice = acc;
        twice.merge(&layout, &acc);
        assert_eq!(twice.tally(0).unwrap().rejected, 4);
        assert_eq!(twice.tally(1).unwrap().flagged, 2);
        // States put back: the first sets the count, a different one is refused.
        let mut back: IntervalAcc<3, 3> = IntervalAcc::new(&layout, 0);
        back.set_state(&layout, 0, &acc.state(0).unwrap()).unwrap();
        let mut other = acc;
        other.reject();
        let before = back;
        assert_eq!(
            back.set_state(&layout, 1, &other.state(1).unwrap()),
            Err(StateError::RejectedDiffers {
                interval: 2,
                state: 3
            })
        );
        assert_eq!(
            back, before,
            "a refused state leaves the interval as it was"
        );
        back.set_state(&layout, 1, &acc.state(1).unwrap()).unwrap();
        back.set_state(&layout, 2, &acc.state(2).unwrap()).unwrap();
        for ch in 0..3 {
            assert_eq!(back.tally(ch), acc.tally(ch));
            assert_eq!(layout.finish(&back, ch), layout.finish(&acc, ch));
        }
        // A reset interval takes a new count.
        back.reset(&layout, 1);
        back.set_state(&layout, 0, &other.state(0).unwrap())
            .unwrap();
        assert_eq!(back.rejected(), 3);
    }
}

#[cfg(test)]
mod excluded_tests {
    use crate::{
        ChannelConfig, Event, Flag, IntervalAcc, Layout, Reading, Stat, Station, StationConfig,
        Tally, Timestamp,
    };

    const T0: i64 = 1_700_000_400_000; // 2023-11-14T22:20:00Z, an interval start

    fn layout() -> Layout<3> {
        Layout::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.1),
                ChannelConfig::direction().with_speed_channel(0),
                ChannelConfig::scalar(0.1).with_range(-50.0, 50.0),
            ],
        )
        .unwrap()
    }

    /// 600 rows of one interval, 1 s apart: speed 5 + (i mod 7) m/s,
    /// direction 90, temperature 10; the speed excluded from row 100 to 219
    /// (120 rows), every channel from row 400 to 459 (60 rows), rows 10 and 11
    /// missing on every channel, row 20 out of range on the temperature.
    fn rows() -> Vec<[Reading; 3]> {
        use Reading::{Excluded, Missing, Value};
        (0..600)
            .map(|i| {
                let mut r = [Value(5.0 + (i % 7) as f64), Value(90.0), Value(10.0)];
                if (100..220).contains(&i) {
                    r[0] = Excluded;
                }
                if (400..460).contains(&i) {
                    r = [Excluded; 3];
                }
                if i == 10 || i == 11 {
                    r = [Missing; 3];
                }
                if i == 20 {
                    r[2] = Value(99.0);
                }
                r
            })
            .collect()
    }

    fn run(rows: &[[Reading; 3]]) -> ([crate::ChannelRecord; 3], [crate::Totals; 3]) {
        let mut st: Station<3, 3> = Station::new(layout());
        let mut out = None;
        let mut keep = |e: Event<'_, 3, 3>| {
            if let Event::Closed(_, r) = e {
                out.get_or_insert(*r);
            }
        };
        for (i, r) in rows.iter().enumerate() {
            st.push(Timestamp::from_millis(T0 + 1000 * i as i64), r, &mut keep);
        }
        st.close(&mut keep);
        let rec = st.recovery();
        (
            out.unwrap(),
            [
                rec[0].since_start(),
                rec[1].since_start(),
                rec[2].since_start(),
            ],
        )
    }

    #[test]
    fn excluded_readings_are_counted_by_hand_and_never_in_statistics() {
        let (r, totals) = run(&rows());
        // By hand: 600 rows; speed: 120 + 60 excluded, 2 missing, 418 valid.
        assert_eq!(
            r[0].tally,
            Tally {
                valid: 418,
                missing: 2,
                excluded: 180,
                ..Tally::default()
            }
        );
        // Direction: 60 excluded, 2 missing, 538 valid.
        assert_eq!(
            r[1].tally,
            Tally {
                valid: 538,
                missing: 2,
                excluded: 60,
                ..Tally::default()
            }
        );
        // Temperature: 60 excluded, 2 missing, 1 out of range, 537 valid.
        assert_eq!(
            r[2].tally,
            Tally {
                valid: 537,
                missing: 2,
                out_of_range: 1,
                excluded: 60,
                ..Tally::default()
            }
        );
        // The partition: every sample in exactly one counter, on every channel.
        for rec in &r {
            assert_eq!(rec.tally.total(), 600);
            assert!(rec.flags.contains(Flag::Excluded));
        }
        assert!(r[0].tally.same_samples(&r[2].tally));
        // Never in the statistics: the speed mean is the mean of the valid
        // speeds alone, computed here in plain f64 from the rows.
        let valid: Vec<f64> = rows()
            .iter()
            .filter_map(|x| match x[0] {
                Reading::Value(v) => Some(v),
                _ => None,
            })
            .collect();
        assert_eq!(valid.len(), 418);
        let mean = valid.iter().sum::<f64>() / valid.len() as f64;
        let Stat::Value(got) = r[0].mean else {
            panic!("no mean")
        };
        assert!((got - mean).abs() < 1e-9, "{got} {mean}");
        // Running recovery: lost and excluded apart. 600 possible: 418 valid,
        // 180 excluded by decision, 2 lost.
        assert_eq!(totals[0].possible, 600);
        assert_eq!(totals[0].excluded, 180);
        assert_eq!(totals[0].lost(), 2);
        assert_eq!(totals[2].excluded, 60);
        assert_eq!(totals[2].lost(), 3);
        assert_eq!(totals[2].absent(), 0);
    }

    #[test]
    fn excluded_counts_merge_exactly_and_travel_in_states() {
        let l = layout();
        let rows = rows();
        let whole = {
            let mut acc: IntervalAcc<3, 3> = IntervalAcc::new(&l, 0);
            for (i, r) in rows.iter().enumerate() {
                acc.push(&l, Timestamp::from_millis(1000 * i as i64), r);
            }
            acc
        };
        for cut in [0, 1, 100, 150, 219, 220, 430, 599, 600] {
            let mut a: IntervalAcc<3, 3> = IntervalAcc::new(&l, 0);
            let mut b: IntervalAcc<3, 3> = IntervalAcc::new(&l, 0);
            for (i, r) in rows.iter().enumerate() {
                let t = Timestamp::from_millis(1000 * i as i64);
                if i < cut {
                    a.push(&l, t, r);
                } else {
                    b.push(&l, t, r);
                }
            }
            a.merge(&l, &b);
            for ch in 0..3 {
                assert_eq!(a.tally(ch), whole.tally(ch), "cut at {cut}");
                assert_eq!(l.finish(&a, ch), l.finish(&whole, ch), "cut at {cut}");
            }
        }
        // A channel's state carries its excluded count, and puts it back.
        let mut back: IntervalAcc<3, 3> = IntervalAcc::new(&l, 0);
        for ch in 0..3 {
            let s = whole.state(ch).unwrap();
            assert_eq!(*s.tally(), whole.tally(ch).unwrap());
            back.set_state(&l, ch, &s).unwrap();
        }
        for ch in 0..3 {
            assert_eq!(back.tally(ch), whole.tally(ch));
            assert_eq!(l.finish(&back, ch), l.finish(&whole, ch));
        }
    }
}

#[cfg(test)]
mod recalibration {
    use crate::{
        ChannelConfig, Event, Layout, OtherFrame, Pushed, Reading, Recal, Station, StationConfig,
        Timestamp,
    };

    // A generic logger transfer function and a certificate; values invented.
    const RECAL: Recal = Recal {
        logger_slope: 0.765,
        logger_offset: 0.35,
        cert_slope: 0.7612,
        cert_offset: 0.2143,
    };

    fn channels(recal: Option<Recal>, mount: f64) -> [ChannelConfig; 2] {
        let mut speed = ChannelConfig::speed(0.01);
        speed.recal = recal;
        [
            speed,
            ChannelConfig::direction()
                .with_speed_channel(0)
                .with_mounting_offset(mount),
        ]
    }

    fn layout(recal: Option<Recal>, mount: f64) -> Layout<2> {
        Layout::new::<3>(StationConfig::ten_minute_1hz(), &channels(recal, mount)).unwrap()
    }

    #[test]
    fn the_value_is_rescaled_in_the_stated_order_then_quantised() {
        let l = layout(Some(RECAL), 0.0);
        let mut st: Station<2, 3> = Station::new(l);
        let t0 = 1_700_000_400_000;
        let logged = [8.0, 12.37, 0.35, 30.0];
        for (i, v) in logged.iter().enumerate() {
            st.push(
                Timestamp::from_millis(t0 + i as i64 * 1000),
                &[Reading::Value(*v), Reading::Value(90.0)],
                |_| {},
            );
        }
        let mut got = None;
        st.close(|e| {
            if let Event::Closed(_, r) = e {
                got = Some(r[0]);
            }
        });
        let r = got.unwrap();
        // The formula of the issue (common practice), evaluated here in the
        // stated order and rounded to the 0.01 quantum by hand.
        let q = |v: f64| ((v - 0.35) / 0.765 * 0.7612 + 0.2143) * 100.0;
        let qs: Vec<f64> = logged.iter().map(|v| q(*v).round()).collect();
        let min = qs.iter().cloned().fold(f64::MAX, f64::min) / 100.0;
        let max = qs.iter().cloned().fold(f64::MIN, f64::max) / 100.0;
        assert_eq!(r.min.value(), Some(min));
        assert_eq!(r.max.value(), Some(max));
        assert_eq!(r.tally.valid, 4);
    }

    #[test]
    fn missing_codes_are_logged_values_and_the_range_is_the_rescaled_ones() {
        // -999 is a code: missing, not re-scaled. A logged 0.0 re-scales to
        // below 0 (0.2143 - 0.35 * 0.7612 / 0.765 < 0): out of range.
        let l = layout(Some(RECAL), 0.0);
        let mut st: Station<2, 3> = Station::new(l);
        let t0 = 1_700_000_400_000;
        for (i, v) in [-999.0, 0.0, 5.0, f64::NAN].iter().enumerate() {
            st.push(
                Timestamp::from_millis(t0 + i as i64 * 1000),
                &[Reading::Value(*v), Reading::Missing],
                |_| {},
            );
        }
        let t = st.open().unwrap().tally(0).unwrap();
        assert_eq!((t.valid, t.missing, t.out_of_range), (1, 2, 1));
    }

    #[test]
    fn raw_counts_of_a_rescaled_channel_take_the_value_path() {
        let mut speed = ChannelConfig::speed(0.01);
        speed.scale.step = 0.05; // counts of 0.05 m/s
        speed.recal = Some(RECAL);
        let l = Layout::new::<3>(StationConfig::ten_minute_1hz(), &[speed]).unwrap();
        let mut st: Station<1, 3> = Station::new(l);
        st.push(
            Timestamp::from_millis(1_700_000_400_000),
            &[Reading::Counts(160)],
            |_| {},
        );
        let t = st.open().unwrap().tally(0).unwrap();
        assert_eq!(t.valid, 1);
    }

    #[test]
    fn a_rescaling_of_a_vane_or_with_a_zero_slope_is_refused() {
        let mut vane = ChannelConfig::direction();
        vane.recal = Some(RECAL);
        assert!(Layout::<1>::new::<3>(StationConfig::ten_minute_1hz(), &[vane]).is_err());
        let mut speed = ChannelConfig::speed(0.01);
        speed.recal = Some(Recal {
            logger_slope: 0.0,
            ..RECAL
        });
        assert!(Layout::<1>::new::<3>(StationConfig::ten_minute_1hz(), &[speed]).is_err());
    }

    #[test]
    fn entries_share_the_frame_and_differ_in_fingerprint() {
        let a = layout(None, 0.0);
        let b = layout(Some(RECAL), 7.5);
        assert_eq!(a.frame(), b.frame());
        assert_ne!(a.fingerprint(), b.fingerprint());
        let other = Layout::<2>::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[ChannelConfig::speed(0.1), ChannelConfig::direction()],
        )
        .unwrap();
        assert_ne!(a.frame(), other.frame());
        let mut st: Station<2, 3> = Station::new(a);
        let t = Timestamp::from_millis(1_700_000_400_000);
        let r = [Reading::Value(5.0), Reading::Value(10.0)];
        assert_eq!(st.push_with(&other, t, &r, |_| {}), Err(OtherFrame));
        assert_eq!(st.totals().pushed(), 0);
        assert_eq!(st.push_with(&b, t, &r, |_| {}), Ok(Pushed::Accepted));
    }

    #[test]
    fn the_fingerprint_without_a_rescaling_is_unchanged() {
        // The fingerprint of a station without re-calibration must stay what
        // loggers built before re-calibrations stamp in their frames: the
        // value below was printed by this crate before `Recal` was added.
        let l = layout(None, 4.0);
        assert_eq!(l.fingerprint(), FINGERPRINT_BEFORE);
    }

    const FINGERPRINT_BEFORE: u32 = 0x994b_ee3e;

    use proptest::prelude::*;

    proptest! {
        /// A re-scaled channel gives the records of a plain channel fed the
        /// re-scaled values (computed here by the formula, in its order): the
        /// re-scaling path judges and quantises as the value path does.
        #[test]
        fn rescaling_in_the_core_is_feeding_the_rescaled_values(
            logged in proptest::collection::vec(-5.0f64..80.0, 1..700),
            ls in 0.02f64..2.0,
            lo in -1.0f64..1.0,
            cs in 0.02f64..2.0,
            co in -1.0f64..1.0,
        ) {
            let recal = Recal { logger_slope: ls, logger_offset: lo, cert_slope: cs, cert_offset: co };
            let mut a: Station<2, 3> = Station::new(layout(Some(recal), 0.0));
            let mut b: Station<2, 3> = Station::new(layout(None, 0.0));
            let t0 = 1_700_000_400_000;
            for (i, v) in logged.iter().enumerate() {
                let t = Timestamp::from_millis(t0 + i as i64 * 1000);
                let w = (v - lo) / ls * cs + co;
                a.push(t, &[Reading::Value(*v), Reading::Missing], |_| {});
                b.push(t, &[Reading::Value(w), Reading::Missing], |_| {});
            }
            let mut ra = None;
            let mut rb = None;
            a.close(|e| if let Event::Closed(_, r) = e { ra = Some(r[0]) });
            b.close(|e| if let Event::Closed(_, r) = e { rb = Some(r[0]) });
            prop_assert_eq!(ra, rb);
        }
    }
}

#[cfg(test)]
mod run_tests {
    use crate::test_rng::Rng;
    use crate::{
        ChannelConfig, ChannelRecord, Event, IntervalAcc, Layout, PushTotals, Reading, Recal,
        Screen, Station, StationConfig, Timestamp,
    };

    const C: usize = 8;
    const G: usize = 5;

    /// Every kind of channel: speeds (with and without a gust window, spikes
    /// on and off), direction as counts and as values, linked and not,
    /// scalars with and without a spike limit; one channel left a padding
    /// scalar.
    fn layout() -> Layout<C> {
        let mut no_spikes = Screen::for_kind(crate::Kind::Scalar);
        no_spikes.step_limit = None;
        let mut spiky = Screen::for_kind(crate::Kind::Scalar);
        spiky.step_limit = Some(2.0);
        Layout::new::<G>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.01).with_gust_window(3),
                ChannelConfig::speed(0.1).with_gust_window(0),
                ChannelConfig::direction()
                    .with_calibration(0.1, 0.0)
                    .with_mounting_offset(4.0)
                    .with_speed_channel(0),
                ChannelConfig::direction(),
                ChannelConfig::scalar(0.1)
                    .with_range(-40.0, 50.0)
                    .with_screen(spiky),
                ChannelConfig::scalar(0.1)
                    .with_range(0.0, 100.0)
                    .with_screen(no_spikes),
                ChannelConfig::direction().with_speed_channel(1),
                ChannelConfig::scalar(1.0),
            ],
        )
        .unwrap()
    }

    /// What the block path's inline value classification
    /// ([`crate::channel::Channel::classify_block`]) must agree on with the
    /// per-sample path: steps without an exact inverse (0.3, 0.25 with an
    /// offset), a missing-value code inside a channel's range (0.5),
    /// re-calibrated channels (values and counts), a vane read as values with
    /// a mounting offset and linked to a speed of step 0.3.
    fn layout_values() -> Layout<C> {
        let recal = Recal {
            logger_slope: 0.765,
            logger_offset: 0.35,
            cert_slope: 0.7581,
            cert_offset: 0.2214,
        };
        values_layout(recal, -7.25)
    }

    /// [`layout_values`] with `recal` and the first vane's mounting `offset`.
    fn values_layout(recal: Recal, offset: f64) -> Layout<C> {
        let mut cfg = StationConfig::ten_minute_1hz();
        cfg.missing_values = [Some(-999.0), Some(0.5), Some(7.0), None];
        Layout::new::<G>(
            cfg,
            &[
                ChannelConfig::speed(0.3).with_gust_window(3),
                ChannelConfig::speed(0.01)
                    .with_gust_window(2)
                    .with_recalibration(recal),
                ChannelConfig::direction()
                    .with_mounting_offset(offset)
                    .with_speed_channel(0),
                ChannelConfig::scalar(0.25)
                    .with_calibration(0.25, 0.1)
                    .with_range(-40.0, 50.0),
                ChannelConfig::scalar(0.1).with_range(-100.0, 100.0),
                ChannelConfig::scalar(0.01)
                    .with_range(0.0, 100.0)
                    .with_recalibration(recal),
                ChannelConfig::direction()
                    .with_calibration(0.5, 0.0)
                    .with_speed_channel(1),
                ChannelConfig::speed(0.05).with_range(0.0, 40.0),
            ],
        )
        .unwrap()
    }

    /// A random reading for [`layout_values`]: values on and between quanta
    /// (halves included: the rounding's ties), counts, codes, and the rest.
    fn reading_values(rng: &mut Rng, c: usize) -> Reading {
        let steps = [0.3, 0.01, 0.01, 0.25, 0.1, 0.01, 0.5, 0.05];
        let offsets = [0.0, 0.0, 0.0, 0.1, 0.0, 0.0, 0.0, 0.0];
        match rng.next() % 30 {
            0 => Reading::Missing,
            1 => Reading::Flagged,
            2 => Reading::Excluded,
            3 => Reading::Value(f64::NAN),
            4 => Reading::Value(0.5),
            5 => Reading::Value(7.0),
            6 => Reading::Value(-999.0),
            7 => Reading::Value(f64::INFINITY),
            8 => Reading::Counts((rng.next() % 2000) as i32 - 100),
            9 => Reading::Value(-(rng.unit() * 50.0)),
            _ => {
                // k quanta, a half quantum more, or anywhere between.
                let k = (rng.next() % 800) as f64;
                let frac = match rng.next() % 3 {
                    0 => 0.0,
                    1 => 0.5,
                    _ => rng.unit(),
                };
                Reading::Value(offsets[c] + steps[c] * (k + frac))
            }
        }
    }

    /// A random reading of channel `c`: mostly valid, some missing, flagged,
    /// NaN, out of range or a missing-value code.
    fn reading(rng: &mut Rng, c: usize) -> Reading {
        match rng.next() % 40 {
            0 => Reading::Missing,
            39 => Reading::Excluded,
            1 => Reading::Flagged,
            2 => Reading::Value(f64::NAN),
            3 => Reading::Value(-999.0),
            4 => Reading::Value(1e6),
            5 => Reading::Counts(-9999),
            6 => Reading::Counts(rng.next() as i32),
            _ => {
                let u = rng.unit();
                match c {
                    0 | 1 => Reading::Value((u * 3000.0).round() / 100.0),
                    2 => Reading::Counts((u * 3600.0) as i32),
                    3 | 6 => Reading::Value((u * 36000.0).round() / 100.0),
                    4 => Reading::Value((u * 900.0).round() / 10.0 - 40.0),
                    5 => Reading::Counts((u * 1000.0) as i32),
                    _ => Reading::Missing,
                }
            }
        }
    }

    /// What the block path's steady loops and their exits must agree on:
    /// long stretches of valid values (a full gust window, a spike chain
    /// going on), a gust window of `G` and of 1, spike limits that are
    /// crossed now and then (speed, scalar, a vane), steps with and without
    /// an exact inverse, scalars with and without spike screening, a vane
    /// read as counts and one as values, both linked.
    fn layout_steady() -> Layout<C> {
        let mut no_spikes = Screen::for_kind(crate::Kind::Scalar);
        no_spikes.step_limit = None;
        let mut spiky = Screen::for_kind(crate::Kind::Scalar);
        spiky.step_limit = Some(2.0);
        let mut calm = Screen::for_kind(crate::Kind::Speed);
        calm.step_limit = Some(1.5);
        let mut veering = Screen::for_kind(crate::Kind::Direction);
        veering.step_limit = Some(30.0);
        Layout::new::<G>(
            StationConfig::ten_minute_1hz(),
            &[
                ChannelConfig::speed(0.01).with_gust_window(3),
                ChannelConfig::speed(0.1)
                    .with_gust_window(G as u16)
                    .with_screen(calm),
                ChannelConfig::direction()
                    .with_calibration(0.1, 0.0)
                    .with_mounting_offset(4.0)
                    .with_speed_channel(0),
                ChannelConfig::direction()
                    .with_speed_channel(1)
                    .with_screen(veering),
                ChannelConfig::scalar(0.1)
                    .with_range(-40.0, 50.0)
                    .with_screen(spiky),
                ChannelConfig::scalar(0.1)
                    .with_range(0.0, 100.0)
                    .with_screen(no_spikes),
                ChannelConfig::scalar(0.3)
                    .with_range(-100.0, 100.0)
                    .with_screen(spiky),
                ChannelConfig::speed(0.3).with_gust_window(1),
            ],
        )
        .unwrap()
    }

    /// Anything but a plain value in range, for the readings below: missing,
    /// flagged, excluded, NaN, the missing-value code -999, out of range
    /// either way, values that are in range for some channels and not for
    /// others, raw counts (negative ones too).
    fn reading_odd(rng: &mut Rng) -> Reading {
        match rng.next() % 9 {
            0 => Reading::Missing,
            1 => Reading::Flagged,
            2 => Reading::Excluded,
            3 => Reading::Value(f64::NAN),
            4 => Reading::Value(-999.0),
            5 => Reading::Value(-5.0),
            6 => Reading::Value(if rng.next() % 2 == 0 { 1e6 } else { -1.0 }),
            7 => Reading::Value(45.0),
            _ => Reading::Counts((rng.next() % 5000) as i32 - 500),
        }
    }

    /// A reading for [`layout_steady`]: valid but for one in 50 (then
    /// anything: missing, flagged, excluded, NaN, a missing-value code, out
    /// of range, raw counts), values on quanta and between them, speeds and
    /// temperatures that mostly move little, now and then a jump.
    fn reading_steady(rng: &mut Rng, c: usize) -> Reading {
        if rng.next() % 50 == 0 {
            return reading_odd(rng);
        }
        let u = rng.unit();
        let jump = rng.next() % 10 == 0;
        let near = |mid: f64, spread: f64| {
            if jump {
                u * 2.0 * mid
            } else {
                mid + spread * (u - 0.5)
            }
        };
        match c {
            0 => Reading::Value((near(12.0, 1.0) * 100.0).round() / 100.0),
            1 => Reading::Value(near(8.0, 2.0)),
            2 => Reading::Counts((u * 3600.0) as i32),
            3 => Reading::Value((near(180.0, 40.0) * 100.0).round() / 100.0),
            4 => Reading::Value((near(5.0, 3.0) * 10.0).round() / 10.0),
            5 => Reading::Value(u * 100.0),
            6 => Reading::Value(near(0.0, 5.0)),
            _ => Reading::Value(near(10.0, 4.0)),
        }
    }

    type Out = (
        Vec<(IntervalAcc<C, G>, [ChannelRecord; C])>,
        Vec<crate::Gap>,
    );

    fn keep(out: &mut Out) -> impl FnMut(Event<'_, C, G>) + '_ {
        |e| match e {
            Event::Closed(acc, r) => out.0.push((*acc, *r)),
            Event::Gap(g) => out.1.push(g),
        }
    }

    fn same(a: &ChannelRecord, b: &ChannelRecord) -> bool {
        // Bit for bit (NaN-free, but compare the bits of every f64 anyway).
        format!("{a:?}") == format!("{b:?}")
    }

    /// What the linked speeds' kept quanta must agree on (the block path
    /// classifies a linked speed once, in its own column, and its directions
    /// read the quanta): hour intervals, so that runs pass the
    /// [`crate::channel::LINK_ROWS`] rows kept at once; a speed after its
    /// direction and one linked to two vanes (counts and values); a linked
    /// speed with a re-calibration, and one with a missing-value code (-5) in
    /// its range (both classified out of line); a speed linked to nothing.
    fn layout_links() -> Layout<C> {
        let mut cfg = StationConfig::ten_minute_1hz();
        cfg.interval_s = 3_600;
        cfg.samples_per_interval = 3_600;
        cfg.missing_values = [Some(-999.0), Some(-5.0), None, None];
        let mut veering = Screen::for_kind(crate::Kind::Direction);
        veering.step_limit = Some(30.0);
        let recal = Recal {
            logger_slope: 0.765,
            logger_offset: 0.35,
            cert_slope: 0.7581,
            cert_offset: 0.2214,
        };
        Layout::new::<G>(
            cfg,
            &[
                ChannelConfig::direction()
                    .with_calibration(0.1, 0.0)
                    .with_mounting_offset(4.0)
                    .with_speed_channel(3),
                ChannelConfig::direction()
                    .with_speed_channel(3)
                    .with_screen(veering),
                ChannelConfig::speed(0.01)
                    .with_range(-10.0, 75.0)
                    .with_gust_window(3),
                ChannelConfig::speed(0.05)
                    .with_range(0.0, 40.0)
                    .with_gust_window(2),
                ChannelConfig::speed(0.01)
                    .with_gust_window(G as u16)
                    .with_recalibration(recal),
                ChannelConfig::direction()
                    .with_calibration(0.5, 0.0)
                    .with_speed_channel(4),
                ChannelConfig::speed(0.3)
                    .with_range(0.0, 50.0)
                    .with_gust_window(1),
                ChannelConfig::direction()
                    .with_mounting_offset(-7.25)
                    .with_speed_channel(2),
            ],
        )
        .unwrap()
    }

    /// A reading for [`layout_links`]: valid but for one in 12, so that a
    /// linked speed is missing, out of range, flagged, excluded, a code or
    /// raw counts while its vane is fine, and the other way round, inside
    /// stretches where both are fine.
    fn reading_links(rng: &mut Rng, c: usize) -> Reading {
        if rng.next() % 12 == 0 {
            return reading_odd(rng);
        }
        let u = rng.unit();
        let half = if rng.next() % 4 == 0 { 0.5 } else { 0.0 };
        // Speeds that mostly move little (a full gust window and a spike
        // chain going on: the steady loops), now and then a jump; some at 0.
        let mut near = |mid: f64| match rng.next() % 20 {
            0 => u * 2.0 * mid,
            1 => 0.0,
            _ => mid + u - 0.5,
        };
        match c {
            0 => Reading::Counts((u * 3600.0) as i32),
            1 => Reading::Value(((1800.0 + 2000.0 * u).round() + half) / 100.0),
            7 => Reading::Value(((u * 36000.0).round() + half) / 100.0),
            2 => Reading::Value(((near(8.0) * 100.0).round() + half) / 100.0),
            3 => Reading::Value(((near(12.0) * 20.0).round() + half) * 0.05),
            4 => Reading::Value(near(10.0)),
            5 => Reading::Value(((u * 720.0).round() + half) * 0.5),
            _ => Reading::Value(((near(6.0) / 0.3).round() + half) * 0.3),
        }
    }

    #[test]
    fn runs_pushed_by_column_equal_samples_pushed_one_by_one() {
        same_by_block_and_by_sample(layout(), None, reading, 11, 700, 100);
    }

    #[test]
    fn values_classified_in_the_block_equal_samples_pushed_one_by_one() {
        same_by_block_and_by_sample(layout_values(), None, reading_values, 12, 700, 100);
    }

    /// The values of [`layout_values`] pushed with another entry of its frame
    /// (other re-calibrations and mounting offsets: a sensor history's next
    /// period), one by one ([`Station::push_with`]) and as runs
    /// ([`Station::push_run_with`]); and that the entry is what classified
    /// them (the records differ from the station's own layout's).
    #[test]
    fn runs_with_an_entry_equal_samples_pushed_one_by_one_with_it() {
        let entry = values_layout(
            Recal {
                logger_slope: 0.765,
                logger_offset: 0.35,
                cert_slope: 0.7702,
                cert_offset: 0.1875,
            },
            3.5,
        );
        let own = layout_values();
        assert_eq!(entry.frame(), own.frame());
        let with = same_by_block_and_by_sample(own, Some(&entry), reading_values, 15, 700, 100);
        let without = same_by_block_and_by_sample(own, None, reading_values, 15, 700, 100);
        assert_eq!(with.len(), without.len());
        let differ = with.iter().zip(&without).filter(|(a, b)| a != b).count();
        assert!(differ > with.len() / 2, "{differ} of {}", with.len());
    }

    #[test]
    fn steady_stretches_by_column_equal_samples_pushed_one_by_one() {
        same_by_block_and_by_sample(layout_steady(), None, reading_steady, 13, 700, 100);
    }

    #[test]
    fn linked_speeds_classified_once_equal_samples_pushed_one_by_one() {
        same_by_block_and_by_sample(layout_links(), None, reading_links, 14, 1_600, 4_000);
    }

    /// Random rounds of `reading`s of `layout`, pushed one by one and as
    /// blocks of up to `longest` rows split anywhere (classified by `entry`
    /// when given: `push_with` and `push_run_with`): the same interval
    /// states, records, gaps, totals and recovery. Five in `calm` time steps
    /// are not the next second (a duplicate, a step back, a gap, a jump over
    /// intervals, a quarter second). Returns the records, as text.
    fn same_by_block_and_by_sample(
        layout: Layout<C>,
        entry: Option<&Layout<C>>,
        reading: fn(&mut Rng, usize) -> Reading,
        seed: u64,
        longest: u64,
        calm: u64,
    ) -> Vec<String> {
        let mut records = Vec::new();
        let mut rng = Rng(seed);
        for round in 0..40 {
            // Times: mostly 1 s steps, with gaps, duplicates, backward steps,
            // sub-second steps and jumps over whole intervals.
            let n = 200 + (rng.next() % 3000) as usize;
            let mut ms = 1_700_000_400_000i64 + (rng.next() % 600_000) as i64;
            let mut times = Vec::with_capacity(n);
            for _ in 0..n {
                ms += match rng.next() % calm {
                    0 => 0,
                    1 => -2000,
                    2 => 7_000,
                    3 => 1_900_000,
                    4 => 250,
                    _ => 1000,
                };
                times.push(Timestamp::from_millis(ms));
            }
            let cols: Vec<Vec<Reading>> = (0..C)
                .map(|c| (0..n).map(|_| reading(&mut rng, c)).collect())
                .collect();
            let row = |i: usize| -> [Reading; C] { core::array::from_fn(|c| cols[c][i]) };

            let mut one: Station<C, G> = Station::new(layout);
            let mut a: Out = (Vec::new(), Vec::new());
            for (i, t) in times.iter().enumerate() {
                match entry {
                    None => one.push(*t, &row(i), keep(&mut a)),
                    Some(e) => one.push_with(e, *t, &row(i), keep(&mut a)).unwrap(),
                };
            }

            let mut block: Station<C, G> = Station::new(layout);
            let mut b: Out = (Vec::new(), Vec::new());
            let mut i = 0;
            let mut runs = 0usize;
            while i < n {
                // Blocks of random length, split anywhere.
                let end = (i + 1 + (rng.next() % longest) as usize).min(n);
                while i < end {
                    let cols_at: [&[Reading]; C] = core::array::from_fn(|c| &cols[c][i..end]);
                    let k = match entry {
                        None => block.push_run(&times[i..end], &cols_at),
                        Some(e) => block.push_run_with(e, &times[i..end], &cols_at).unwrap(),
                    };
                    runs += usize::from(k > 0);
                    i += k;
                    if i < end {
                        match entry {
                            None => block.push(times[i], &row(i), keep(&mut b)),
                            Some(e) => block.push_with(e, times[i], &row(i), keep(&mut b)).unwrap(),
                        };
                        i += 1;
                    }
                }
            }
            one.close(keep(&mut a));
            block.close(keep(&mut b));
            assert!(runs > 0, "round {round}");
            let totals = |s: &Station<C, G>| -> PushTotals { *s.totals() };
            assert_eq!(totals(&one), totals(&block), "round {round}");
            assert_eq!(a.1, b.1, "round {round}: gaps");
            assert_eq!(a.0.len(), b.0.len(), "round {round}");
            for ((acc_a, ra), (acc_b, rb)) in a.0.iter().zip(&b.0) {
                assert_eq!(acc_a, acc_b, "round {round}: interval state");
                for (x, y) in ra.iter().zip(rb) {
                    assert!(same(x, y), "round {round}: {x:?} != {y:?}");
                }
                records.push(format!("{ra:?}"));
            }
            let rec = |s: &Station<C, G>| format!("{:?}", s.recovery());
            assert_eq!(rec(&one), rec(&block), "round {round}");
        }
        records
    }
}

#[cfg(test)]
mod image_tests {
    use super::*;
    use crate::channel::{Icing, Recal, Screen};

    /// A station that sets every optional field somewhere: partners, shear,
    /// icing, a direction weighted by a speed, a re-calibration, plausible
    /// ranges, raw-count calibrations, a mounting offset, missing-value
    /// codes as values only and as counts.
    fn stations() -> Vec<(StationConfig, [ChannelConfig; 5])> {
        let mut cup = Screen::for_kind(Kind::Speed);
        cup.partner = Some(1);
        cup.icing = Some(Icing::new(3, 4));
        cup.mean_range = Some((0.5, 40.0));
        cup.step_limit = None;
        let mut upper = Screen::for_kind(Kind::Speed);
        upper.above = Some(0);
        upper.flat_span_s = None;
        let chans = [
            ChannelConfig::speed(1.0)
                .with_calibration(0.049, 0.25)
                .with_screen(cup),
            ChannelConfig::speed(0.01)
                .with_screen(upper)
                .with_recalibration(Recal {
                    logger_slope: 0.765,
                    logger_offset: 0.35,
                    cert_slope: 0.7612,
                    cert_offset: 0.281,
                }),
            ChannelConfig::direction()
                .with_calibration(360.0 / 26_400.0, 0.0)
                .with_mounting_offset(-4.5)
                .with_speed_channel(0),
            ChannelConfig::scalar(0.01).with_range(-40.0, 60.0),
            ChannelConfig::scalar(0.1).with_range(0.0, 100.0),
        ];
        let mut odd = StationConfig::ten_minute_1hz();
        odd.interval_s = 60;
        odd.samples_per_interval = 240;
        odd.missing_values = [Some(-999.5), None, Some(7.0), Some(-9999.0)];
        vec![(StationConfig::ten_minute_1hz(), chans), (odd, chans)]
    }

    #[test]
    fn an_image_reads_back_as_the_layout_it_was_written_from() {
        for (station, chans) in stations() {
            let layout = Layout::new::<12>(station, &chans).unwrap();
            let mut image = [0u8; Layout::<5>::IMAGE_LEN + 3];
            let n = layout.to_image::<12>(&mut image).unwrap();
            let image = &image[..n];
            let mut back = Layout::<5>::placeholder();
            assert_eq!(back.load_image::<12>(image), Ok(()));
            assert_eq!(back, layout);
            assert_eq!(back.fingerprint(), layout.fingerprint());
            // Each channel's bytes are at most Channel::IMAGE_LEN, less by
            // the values of its options that are none (a none is its tag
            // byte alone); the image is the head, the channels and the CRC.
            let mut one = [0u8; Channel::IMAGE_LEN];
            let mut channels = 0;
            let mut nones = 0;
            for ch in layout.channels() {
                let mut w = ImageWriter::new(&mut one);
                ch.write_image(&mut w);
                let len = w.len().unwrap();
                assert!(len <= Channel::IMAGE_LEN);
                channels += len;
                let sc = &ch.config().screen;
                // The value bytes of each none (the field widths of write_image).
                let none_bytes = [
                    (ch.config().scale.inverse().is_none(), 8),
                    (ch.config().speed_channel.is_none(), 1),
                    (sc.step_limit.is_none(), 8),
                    (sc.mean_range.is_none(), 16),
                    (sc.sd_range.is_none(), 16),
                    (sc.gust_max.is_none(), 8),
                    (sc.min_recovery.is_none(), 8),
                    (sc.flat_span_s.is_none(), 4),
                    (sc.partner.is_none(), 1),
                    (sc.above.is_none(), 1),
                    (sc.icing.is_none(), 18),
                    (ch.config().recal.is_none(), 32),
                ]
                .iter()
                .filter(|(none, _)| *none)
                .map(|(_, bytes)| bytes)
                .sum::<usize>();
                assert_eq!(len + none_bytes, Channel::IMAGE_LEN);
                nones += none_bytes;
            }
            assert_eq!(
                n,
                Layout::<5>::IMAGE_LEN - 5 * Channel::IMAGE_LEN + channels
            );
            assert!(nones > 0 && n < Layout::<5>::IMAGE_LEN);
        }
    }

    /// Every layout validation accepts stores and loads: a vane or a
    /// thermometer whose (unused) gust window is longer than the gust
    /// capacity is valid, and its image loads to the same layout (found by
    /// the `image` fuzz target: such an image was refused as `Field`, so a
    /// logger on a layout built and stored on a PC would not start).
    #[test]
    fn a_valid_layout_with_a_long_gust_window_on_a_vane_stores_and_loads() {
        let chans = [
            ChannelConfig::speed(0.01).with_gust_window(3),
            ChannelConfig::direction()
                .with_gust_window(60)
                .with_speed_channel(0),
            ChannelConfig::scalar(0.1).with_gust_window(u16::MAX),
        ];
        let layout = Layout::new::<3>(StationConfig::ten_minute_1hz(), &chans).unwrap();
        let mut image = [0u8; Layout::<3>::IMAGE_LEN];
        let n = layout.to_image::<3>(&mut image).unwrap();
        let mut back = Layout::<3>::placeholder();
        assert_eq!(back.load_image::<3>(&image[..n]), Ok(()));
        assert_eq!(back, layout);
        // A speed channel's gust window is still held to the capacity.
        let long = [chans[0].with_gust_window(4), chans[1], chans[2]];
        assert_eq!(
            Layout::new::<3>(StationConfig::ten_minute_1hz(), &long).map(drop),
            Err(ConfigError::Channel {
                index: 0,
                problem: ChannelProblem::GustWindow
            })
        );
    }

    #[test]
    fn a_changed_short_or_foreign_image_is_refused_and_leaves_the_placeholder() {
        let (station, chans) = stations().remove(0);
        let layout = Layout::new::<3>(station, &chans).unwrap();
        let mut image = vec![0u8; Layout::<5>::IMAGE_LEN];
        let n = layout.to_image::<3>(&mut image).unwrap();
        image.truncate(n);
        let mut back = Layout::<5>::placeholder();
        // Every single-bit change of every byte is found.
        for i in 0..image.len() {
            for bit in [0x01u8, 0x80] {
                let mut bad = image.clone();
                bad[i] ^= bit;
                back.load_image::<3>(&image).unwrap();
                let refused = back.load_image::<3>(&bad);
                assert!(refused.is_err(), "byte {i} bit {bit:#x}");
                assert_eq!(back, Layout::<5>::placeholder(), "byte {i}");
                // Without the reset: the same answer (its layout is discarded).
                let mut spoiled = Layout::<5>::placeholder();
                assert_eq!(spoiled.load_image_no_reset::<3>(&bad), refused, "byte {i}");
                // Into memory holding no layout: the same answer.
                let mut slot = core::mem::MaybeUninit::<Layout<5>>::uninit();
                let into = Layout::load_image_into::<3>(&mut slot, &bad).map(|_| ());
                assert_eq!(into, refused, "byte {i}");
            }
        }
        let mut fresh = Layout::<5>::placeholder();
        assert_eq!(fresh.load_image_no_reset::<3>(&image), Ok(()));
        back.load_image::<3>(&image).unwrap();
        assert_eq!(fresh, back);
        // Into memory holding no layout (from the blank one): the same layout,
        // equal to the one the image was written from.
        let mut slot = core::mem::MaybeUninit::<Layout<5>>::uninit();
        let into = Layout::load_image_into::<3>(&mut slot, &image).unwrap();
        assert_eq!(*into, back);
        // Its length follows from its options: one byte short, the CRC is
        // read from the wrong bytes; longer than any image, refused unread.
        assert_eq!(
            back.load_image::<3>(&image[..image.len() - 1]),
            Err(ImageError::Crc)
        );
        let mut long = image.clone();
        long.resize(Layout::<5>::IMAGE_LEN + 1, 0);
        assert_eq!(back.load_image::<3>(&long), Err(ImageError::Length));
        assert_eq!(back.load_image::<3>(&[]), Err(ImageError::Length));
        assert_eq!(back.load_image::<12>(&image), Err(ImageError::Shape));
        let mut other = Layout::<4>::placeholder();
        assert_eq!(other.load_image::<3>(&image), Err(ImageError::Shape));
        let mut v2 = image.clone();
        v2[4] = LAYOUT_IMAGE_VERSION + 1;
        assert_eq!(back.load_image::<3>(&v2), Err(ImageError::Format));
        let mut short = [0u8; 100];
        assert_eq!(layout.to_image::<3>(&mut short), Err(ImageError::Length));
        // A field out of its values, under a good CRC, is refused too.
        let mut kind = image.clone();
        let at = 8 + 20 + 2 + 12 * MAX_SENTINELS + 8 + 8; // channel 0's first flag
        assert!(kind[at] <= 1);
        kind[at] = 2;
        let n = kind.len() - 4;
        let crc = crate::crc::crc32(&kind[..n]);
        kind[n..].copy_from_slice(&crc.to_le_bytes());
        assert_eq!(back.load_image::<3>(&kind), Err(ImageError::Field));
        // The CRC is zlib's (IEEE 802.3) over every byte before it (the
        // check value of "123456789", 0xCBF43926, in crc.rs's tests).
        let n = image.len() - 4;
        assert_eq!(
            crate::crc::crc32(&image[..n]).to_le_bytes(),
            image[n..],
            "CRC-32 of the image's bytes"
        );
    }

    /// An image with a good CRC but changed fields (a writer's bug, or
    /// bytes forged with their CRC) is refused, or loads as exactly what its
    /// bytes say: written back, it is the same bytes. Nothing else is read
    /// into the layout, and a logger on any layout reaches no panic (the
    /// link-time proof of `firmware-example/c/check.sh` links the stored
    /// layout's logger, whose layout is only known at run time; here, with
    /// overflow checks on, a station runs on each). Every byte of the body
    /// set to values at the edges of its field's kinds.
    /// A station on `layout` (maybe a forged one) takes readings at the
    /// edges of every kind, with overflow checks on (tests): no panic, every
    /// sample in a record.
    fn runs_without_a_panic(layout: &Layout<5>) {
        let edges = [
            Reading::Counts(0),
            Reading::Counts(i32::MAX),
            Reading::Counts(i32::MIN),
            Reading::Counts(26_399),
            Reading::Value(-1e300),
            Reading::Value(f64::INFINITY),
            Reading::Value(7.5),
        ];
        let mut st = Station::<5, 3, &Layout<5>>::new(layout);
        let t0 = 1_700_000_400_000;
        for i in 0..edges.len() * 3 {
            let r = core::array::from_fn(|c| edges[(i + c) % edges.len()]);
            st.push(Timestamp::from_millis(t0 + 1000 * i as i64), &r, |_| {});
        }
        st.close(|_| {});
        assert_eq!(st.totals().pushed(), 3 * edges.len() as u64);
    }

    #[test]
    fn a_good_crc_over_changed_fields_is_refused_or_read_as_written() {
        let (station, chans) = stations().remove(0);
        let layout = Layout::new::<3>(station, &chans).unwrap();
        let mut image = vec![0u8; Layout::<5>::IMAGE_LEN];
        let n = layout.to_image::<3>(&mut image).unwrap();
        image.truncate(n);
        let (mut refused, mut loaded) = (0, 0);
        for at in 8..n - 4 {
            for v in [0u8, 2, 0x80, 0xFF] {
                let mut bad = image.clone();
                if bad[at] == v {
                    continue;
                }
                bad[at] = v;
                let body = bad.len() - 4;
                let crc = crate::crc::crc32(&bad[..body]);
                bad[body..].copy_from_slice(&crc.to_le_bytes());
                let mut back = Layout::<5>::placeholder();
                match back.load_image_no_reset::<3>(&bad) {
                    Ok(()) => {
                        loaded += 1;
                        runs_without_a_panic(&back);
                        let mut again = vec![0u8; Layout::<5>::IMAGE_LEN];
                        let m = back.to_image::<3>(&mut again).unwrap();
                        assert_eq!(m, n, "byte {at} = {v}");
                        // The same bytes, but the missing-value codes past
                        // their count (kept, never used; written back as 0).
                        let unused = |i: usize| (29..61).contains(&i) || (62..78).contains(&i);
                        for i in (0..n - 4).filter(|&i| !unused(i)) {
                            assert_eq!(again[i], bad[i], "byte {at} = {v}: byte {i} read back");
                        }
                    }
                    Err(e) => {
                        refused += 1;
                        assert!(
                            matches!(e, ImageError::Field | ImageError::Length),
                            "byte {at} = {v}: {e:?}"
                        );
                    }
                }
            }
        }
        // Both happen: a flag of 2 or a sentinel count of 5 is refused, a
        // changed calibration value loads.
        assert!(
            refused > 100 && loaded > 100,
            "{refused} refused, {loaded} loaded"
        );
    }
}
