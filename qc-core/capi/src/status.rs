//! Status codes and their messages. No `unsafe` in this file.

#![allow(non_camel_case_types)]

use core::ffi::CStr;

/// What a call did: `TM_OK`, a refused configuration (`TM_CONFIG_...`, one
/// code for each way `Layout::new` refuses one) or a refused call
/// (`TM_ERR_...`). `tm_message` gives each a sentence.
#[repr(i32)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum tm_status {
    /// Done.
    TM_OK = 0,
    /// The interval is 0 or does not divide a day (86,400 s) evenly.
    TM_CONFIG_INTERVAL = 1,
    /// Samples per interval is 0, too many, or more than one per millisecond.
    TM_CONFIG_SAMPLE_COUNT = 2,
    /// More than 4 missing-value codes, or a NaN code.
    TM_CONFIG_SENTINELS = 3,
    /// More than 255 channels.
    TM_CONFIG_TOO_MANY_CHANNELS = 4,
    /// A channel's resolution or slope is not finite and positive, or its
    /// offset is not finite.
    TM_CONFIG_SCALE = 5,
    /// A channel's range is not finite, or low is above high.
    TM_CONFIG_RANGE = 6,
    /// A channel's range is too wide for its resolution.
    TM_CONFIG_RANGE_TOO_WIDE = 7,
    /// A gust window longer than the shape's gust capacity.
    TM_CONFIG_GUST_WINDOW = 8,
    /// A direction's speed channel does not exist or is not a speed channel.
    TM_CONFIG_SPEED_LINK = 9,
    /// A direction calibration slope above 300 degrees per count.
    TM_CONFIG_DIRECTION_SLOPE = 10,
    /// A mounting offset beyond +/-360 degrees.
    TM_CONFIG_MOUNTING_OFFSET = 11,
    /// A screening setting out of its domain.
    TM_CONFIG_SCREEN = 12,
    /// A screening test names a missing channel, one of the wrong kind, or
    /// the channel itself.
    TM_CONFIG_SCREEN_LINK = 13,
    /// The core refused the configuration for a reason newer than this header.
    TM_CONFIG_OTHER = 14,
    /// A channel index in the settings is neither -1 nor 0 to 255, or an
    /// icing test names a temperature channel but no humidity channel.
    TM_CONFIG_CHANNEL_INDEX = 15,
    /// More channels than the shape holds, or none.
    TM_CONFIG_CAPACITY = 16,
    /// A pointer argument is NULL.
    TM_ERR_NULL = 100,
    /// A memory block or buffer is shorter than the call needs.
    TM_ERR_SIZE = 101,
    /// A memory block is not aligned to `TM_ALIGN` bytes.
    TM_ERR_ALIGN = 102,
    /// The memory block holds no layout or logger of this shape (never
    /// built, built for another shape, or overwritten).
    TM_ERR_NOT_READY = 103,
    /// A reading's kind is not one of `TM_READING_...`.
    TM_ERR_READING = 104,
    /// The number of readings is not the layout's channel count.
    TM_ERR_CHANNELS = 105,
    /// A channel kind code is not one of `TM_KIND_...`.
    TM_ERR_KIND = 106,
    /// Running recovery asked of a state logger (it has none: the PC counts it).
    TM_ERR_NO_RECOVERY = 107,
    /// A channel index beyond the layout's channels.
    TM_ERR_CHANNEL = 108,
    /// Bytes that are not a good frame (sync marker, version, CRC or contents).
    TM_ERR_FRAME = 109,
    /// Bytes that are not a layout image (`tm_layout_image`) of this
    /// library's format and version, or not of its length.
    TM_ERR_IMAGE = 110,
    /// A layout image of another shape than the load function's.
    TM_ERR_IMAGE_SHAPE = 111,
    /// A layout image whose CRC-32 does not match its bytes (changed since
    /// it was written).
    TM_ERR_IMAGE_CRC = 112,
    /// A function of a logger kind or shape this build of the library
    /// leaves out (a configured build, e.g. `--no-default-features
    /// --features state-logger,c8g3`: firmware-example/README.md, "From C");
    /// nothing was done. The published build has every kind and shape.
    TM_ERR_NOT_BUILT = 113,
}

/// The message of a status code (a static NUL-terminated string).
///
/// Not generated from one table with the variants' documentation: the
/// header's comments are the variants' doc comments as cbindgen reads them
/// in the source, and a table or macro producing both would have to be
/// expanded first, which cbindgen does only with a nightly compiler
/// (`parse.expand`); the messages of refused channels must besides be the
/// core's own `Display` texts (`messages_are_the_cores`), which the header
/// cannot quote. So the two are written side by side, the doc comment saying
/// when a code is returned and the message what to fix, and the test
/// `every_status_has_its_own_message` checks that every code has a message
/// of its own.
pub(crate) fn message(code: i32) -> &'static CStr {
    use tm_status::*;
    // Each arm names its code once (no second list of the variants).
    let is = |s: tm_status| code == s as i32;
    match () {
        _ if is(TM_OK) => c"ok",
        // The channel messages are the core's (`ChannelProblem`'s Display),
        // checked by the test `messages_are_the_cores`.
        _ if is(TM_CONFIG_INTERVAL) => c"interval must be a positive number of seconds dividing 86400",
        _ if is(TM_CONFIG_SAMPLE_COUNT) => c"samples per interval must be 1 to the core's maximum, and at most one per millisecond",
        _ if is(TM_CONFIG_SENTINELS) => c"at most 4 missing-value codes, none NaN",
        _ if is(TM_CONFIG_TOO_MANY_CHANNELS) => c"at most 255 channels",
        _ if is(TM_CONFIG_SCALE) => c"resolution or calibration slope must be finite and positive, offset finite",
        _ if is(TM_CONFIG_RANGE) => c"range must be finite with low <= high",
        _ if is(TM_CONFIG_RANGE_TOO_WIDE) => c"range is too wide for the resolution (quanta must fit 31 bits, and for speed a gust window of them too; directions within +/-1e6 degrees)",
        _ if is(TM_CONFIG_GUST_WINDOW) => c"gust window must be within the station's gust capacity (0: no gust)",
        _ if is(TM_CONFIG_SPEED_LINK) => c"linked speed channel must exist and be of kind speed",
        _ if is(TM_CONFIG_DIRECTION_SLOPE) => c"direction calibration slope must be at most 300 degrees per count",
        _ if is(TM_CONFIG_MOUNTING_OFFSET) => c"mounting offset must be within -360 to 360 degrees",
        _ if is(TM_CONFIG_SCREEN) => c"screening setting out of range (NaN, negative limit, low above high, or recovery outside 0..1)",
        _ if is(TM_CONFIG_SCREEN_LINK) => c"screening names a missing channel, one of the wrong kind (partner/above: speed; icing: scalar temperature and humidity) or the channel itself (partner/above)",
        _ if is(TM_CONFIG_OTHER) => c"the core refused the configuration (a reason newer than this library's codes)",
        _ if is(TM_CONFIG_CHANNEL_INDEX) => c"a channel index must be -1 (none) or 0 to 255, and an icing test needs both its channels",
        _ if is(TM_CONFIG_CAPACITY) => c"the station has no channels, or more than the shape holds",
        _ if is(TM_ERR_NULL) => c"a pointer argument is NULL",
        _ if is(TM_ERR_SIZE) => c"a memory block or buffer is too short",
        _ if is(TM_ERR_ALIGN) => c"a memory block is not aligned to TM_ALIGN bytes",
        _ if is(TM_ERR_NOT_READY) => c"the memory holds no layout or logger of this shape",
        _ if is(TM_ERR_READING) => c"a reading's kind is not a TM_READING_ code",
        _ if is(TM_ERR_CHANNELS) => c"the number of readings is not the layout's channel count",
        _ if is(TM_ERR_KIND) => c"a channel kind is not a TM_KIND_ code",
        _ if is(TM_ERR_NO_RECOVERY) => c"a state logger keeps no running recovery (the PC counts it)",
        _ if is(TM_ERR_CHANNEL) => c"the channel index is beyond the layout's channels",
        _ if is(TM_ERR_FRAME) => c"not a good frame (sync marker, version, CRC or contents)",
        _ if is(TM_ERR_IMAGE) => c"not a layout image of this library's version (or cut short): write it again with tm_layout_image",
        _ if is(TM_ERR_IMAGE_SHAPE) => c"a layout image of another shape than the load function's",
        _ if is(TM_ERR_IMAGE_CRC) => c"the layout image's CRC does not match: its bytes changed since it was written",
        _ if is(TM_ERR_NOT_BUILT) => c"this build of the library leaves out that logger kind or shape: build it with its Cargo feature (record-logger, state-logger, c4g3, c8g3, c8g12, c16g12)",
        _ => c"unknown status code",
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use qc_core::{ChannelProblem, ConfigError};
    use std::string::ToString;

    #[test]
    fn messages_are_the_cores() {
        let problems = [
            ChannelProblem::Scale,
            ChannelProblem::Range,
            ChannelProblem::RangeTooWide,
            ChannelProblem::GustWindow,
            ChannelProblem::SpeedLink,
            ChannelProblem::DirectionSlope,
            ChannelProblem::MountingOffset,
            ChannelProblem::Screen,
            ChannelProblem::ScreenLink,
        ];
        for problem in problems {
            let (status, index) =
                crate::types::config_error(ConfigError::Channel { index: 2, problem });
            assert_eq!(index, 2);
            assert_eq!(
                message(status as i32).to_str().unwrap(),
                problem.to_string()
            );
        }
        for e in [
            ConfigError::Interval,
            ConfigError::Sentinels,
            ConfigError::TooManyChannels,
        ] {
            let (status, _) = crate::types::config_error(e);
            assert_eq!(message(status as i32).to_str().unwrap(), e.to_string());
        }
        assert_eq!(message(-5).to_str().unwrap(), "unknown status code");
    }

    #[test]
    fn every_status_has_its_own_message() {
        // Every code from 0 to 255 that is a status has a message other than
        // the fallback, and no two share one.
        let mut seen = std::vec::Vec::new();
        for code in 0..256 {
            let m = message(code).to_str().unwrap();
            if m != "unknown status code" {
                assert!(!seen.contains(&m), "{code}: {m}");
                seen.push(m);
            }
        }
        assert_eq!(seen.len(), 31);
    }
}
