//! Errors. Small `Copy` enums that never allocate.

use core::fmt;

/// Why a station or channel configuration was refused by [`crate::Layout::new`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ConfigError {
    /// The interval is 0 or does not divide a day (86,400 s) evenly.
    Interval,
    /// Samples per interval is 0, above [`crate::MAX_SAMPLES_PER_INTERVAL`], or
    /// more than one per millisecond of the interval.
    SampleCount,
    /// More than [`crate::MAX_SENTINELS`] missing-value codes, or a NaN code.
    Sentinels,
    /// A channel is misconfigured.
    Channel {
        /// The channel's position in the station.
        index: u8,
        /// What is wrong with it.
        problem: ChannelProblem,
    },
    /// More than 255 channels.
    TooManyChannels,
}

/// What is wrong with one channel's configuration.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ChannelProblem {
    /// Resolution or calibration slope is not a finite positive number, or the
    /// calibration offset is not finite.
    Scale,
    /// The valid range is not finite or its low end is above its high end.
    Range,
    /// The range, at this resolution, does not fit 31-bit quanta (speed, scalar)
    /// or lies beyond +/-1e6 degrees (direction).
    RangeTooWide,
    /// The gust window is longer than the station's gust capacity `G`.
    GustWindow,
    /// The linked speed channel does not exist or is not a speed channel.
    SpeedLink,
    /// A direction calibration slope above 300 degrees per count.
    DirectionSlope,
    /// The mounting offset is not finite or beyond +/-360 degrees.
    MountingOffset,
    /// A screening setting is out of its domain (NaN, negative limit, low end
    /// above high end, recovery outside 0 to 1).
    Screen,
    /// A screening test names a channel that does not exist, is of the wrong
    /// kind (partner and above: speed; icing: scalar temperature and humidity),
    /// or is the channel itself (partner, above).
    ScreenLink,
    /// A re-calibration ([`crate::Recal`]) with a slope not finite and
    /// positive or an offset not finite, or one on a direction channel (a
    /// vane's history changes its mounting offset only).
    Recalibration,
}

impl fmt::Display for ChannelProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ChannelProblem::Scale => "resolution or calibration slope must be finite and positive, offset finite",
            ChannelProblem::Range => "range must be finite with low <= high",
            ChannelProblem::RangeTooWide => "range is too wide for the resolution (quanta must fit 31 bits, and for speed a gust window of them too; directions within +/-1e6 degrees)",
            ChannelProblem::GustWindow => "gust window must be within the station's gust capacity (0: no gust)",
            ChannelProblem::SpeedLink => "linked speed channel must exist and be of kind speed",
            ChannelProblem::DirectionSlope => "direction calibration slope must be at most 300 degrees per count",
            ChannelProblem::MountingOffset => "mounting offset must be within -360 to 360 degrees",
            ChannelProblem::Screen => "screening setting out of range (NaN, negative limit, low above high, or recovery outside 0..1)",
            ChannelProblem::Recalibration => "re-calibration slopes must be finite and positive, offsets finite, and only on speed and scalar channels (a vane's history changes its mounting offset)",
            ChannelProblem::ScreenLink => "screening names a missing channel, one of the wrong kind (partner/above: speed; icing: scalar temperature and humidity) or the channel itself (partner/above)",
        })
    }
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ConfigError::Interval => {
                f.write_str("interval must be a positive number of seconds dividing 86400")
            }
            ConfigError::SampleCount => write!(
                f,
                "samples per interval must be 1 to {}, and at most one per millisecond",
                crate::limits::MAX_SAMPLES_PER_INTERVAL
            ),
            ConfigError::Sentinels => write!(
                f,
                "at most {} missing-value codes, none NaN",
                crate::limits::MAX_SENTINELS
            ),
            ConfigError::Channel { index, problem } => write!(f, "channel {index}: {problem}"),
            ConfigError::TooManyChannels => f.write_str("at most 255 channels"),
        }
    }
}

impl core::error::Error for ConfigError {}

/// Why the counts of a record cannot be one channel's record of one interval
/// of a layout ([`crate::Layout::check_tally`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum TallyError {
    /// `n_possible` is not the layout's samples per interval.
    Possible {
        /// The record's samples possible.
        found: u32,
        /// The layout's samples per interval.
        expected: u32,
    },
    /// More samples held (valid, missing and out of range) than the interval
    /// has milliseconds: a station accepts at most one sample per
    /// millisecond (strictly increasing times).
    TooManySamples {
        /// Valid, missing and out-of-range samples of the record.
        held: u64,
        /// The interval's milliseconds.
        most: u64,
    },
}

impl fmt::Display for TallyError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            TallyError::Possible { found, expected } => write!(
                f,
                "n_possible is {found}, the station's samples per interval are {expected}"
            ),
            TallyError::TooManySamples { held, most } => write!(
                f,
                "n_valid + n_missing + n_out_of_range = {held}, more than the {most} milliseconds of the interval (a station takes at most one sample per millisecond)"
            ),
        }
    }
}

impl core::error::Error for TallyError {}
