//! The C types and their mapping to and from qc-core's types: the one place
//! where a C reading, a C channel setting or a C tally meets the core. A new
//! reading kind or tally count in the core is added here (and to the header's
//! constants) and nowhere else.
//!
//! No `unsafe` in this file.

#![allow(non_camel_case_types)]

use qc_core::screen::Screen;
use qc_core::{
    ChannelConfig, ChannelProblem, ConfigError, Icing, Kind, PushTotals, Reading, Reject, Scale,
    StationConfig, Totals, MAX_SENTINELS,
};

use crate::status::tm_status;

/// `tm_reading.kind`: an engineering value in `value` (m/s, degrees, deg C
/// ...); NaN or a missing-value code counts as missing.
pub const TM_READING_VALUE: u8 = 0;
/// `tm_reading.kind`: raw integer counts in `counts`, turned into a value
/// by the channel's scale (`offset + step * counts`).
pub const TM_READING_COUNTS: u8 = 1;
/// `tm_reading.kind`: no reading (sensor absent, a fault).
pub const TM_READING_MISSING: u8 = 2;
/// `tm_reading.kind`: the source marked the reading bad (a quality code);
/// counted as flagged and never used in statistics.
pub const TM_READING_FLAGGED: u8 = 3;

/// One sample of one channel.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct tm_reading {
    /// `TM_READING_VALUE`, `TM_READING_COUNTS`, `TM_READING_MISSING` or
    /// `TM_READING_FLAGGED`.
    pub kind: u8,
    /// The raw counts, when `kind` is `TM_READING_COUNTS`.
    pub counts: i32,
    /// The engineering value, when `kind` is `TM_READING_VALUE`.
    pub value: f64,
}

/// A C reading as the core's, or `None` for an unknown kind: the meaning of
/// the kinds, field by field. A row that fills its shape is not converted
/// (`core_row` reads it as the core's, in place; the tests check that both
/// agree), a shorter one is, into a padded row.
pub(crate) fn reading(r: &tm_reading) -> Option<Reading> {
    match r.kind {
        TM_READING_VALUE => Some(Reading::Value(r.value)),
        TM_READING_COUNTS => Some(Reading::Counts(r.counts)),
        TM_READING_MISSING => Some(Reading::Missing),
        TM_READING_FLAGGED => Some(Reading::Flagged),
        _ => None,
    }
}

/// `tm_channel_settings.kind`: wind speed (anemometer).
pub const TM_KIND_SPEED: u8 = 0;
/// `tm_channel_settings.kind`: wind direction (vane).
pub const TM_KIND_DIRECTION: u8 = 1;
/// `tm_channel_settings.kind`: any other quantity (temperature, humidity,
/// pressure, voltage).
pub const TM_KIND_SCALAR: u8 = 2;

/// No channel (speed link, screening partner, above, icing channels).
pub const TM_NO_CHANNEL: i16 = -1;

/// Station-wide settings (as `tenmin`'s `[logging]` section).
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct tm_station_settings {
    /// Interval length in seconds; must divide 86,400 (600: 10 minutes).
    pub interval_s: u32,
    /// Samples per interval at the nominal rate (600 for 1 Hz and 10 minutes).
    pub samples_per_interval: u32,
    /// How many of `missing_values` are used (0 to 4).
    pub missing_count: u8,
    /// Missing-value codes (for example -999 and -9999), compared exactly.
    pub missing_values: [f64; 4],
}

/// Screening settings of one channel (`tm_channel_defaults` fills the defaults
/// of its kind). A test whose channel or `has_` field is -1 or 0 is off.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct tm_screen_settings {
    /// 1: `step_limit` is used.
    pub has_step_limit: u8,
    /// Largest plausible change between consecutive valid samples
    /// (engineering units; degrees for direction).
    pub step_limit: f64,
    /// 1: `mean_low` and `mean_high` are used.
    pub has_mean_range: u8,
    /// Plausible interval mean, low end, inclusive (not for direction).
    pub mean_low: f64,
    /// Plausible interval mean, high end, inclusive.
    pub mean_high: f64,
    /// 1: `sd_low` and `sd_high` are used.
    pub has_sd_range: u8,
    /// Plausible interval standard deviation (sigma-theta), low end.
    pub sd_low: f64,
    /// Plausible interval standard deviation, high end.
    pub sd_high: f64,
    /// 1: `gust_max` is used.
    pub has_gust_max: u8,
    /// Gusts at or above this are implausible (speed).
    pub gust_max: f64,
    /// 1: `min_recovery` is used.
    pub has_min_recovery: u8,
    /// Smallest acceptable valid / possible in an interval, 0 to 1.
    pub min_recovery: f64,
    /// 1: `flat_span_s` is used.
    pub has_flat_span: u8,
    /// Flat-line span, seconds.
    pub flat_span_s: u32,
    /// Flat-line tolerance: largest total variation still counted as flat.
    pub flat_tolerance: f64,
    /// Index of the redundant anemometer at the same height, or -1.
    pub partner: i16,
    /// Largest acceptable difference of the partners' interval means.
    pub pair_mean_diff: f64,
    /// Largest acceptable difference of the partners' interval maxima.
    pub pair_max_diff: f64,
    /// Index of the next higher anemometer (shear test), or -1.
    pub above: i16,
    /// How much faster than the higher anemometer this one may read on average.
    pub shear_tolerance: f64,
    /// Index of the air temperature channel of the icing test, or -1 (test off).
    pub icing_temperature: i16,
    /// Index of the relative humidity channel of the icing test.
    pub icing_humidity: i16,
    /// Icing suspected at or below this interval mean temperature, deg C.
    pub icing_max_temperature: f64,
    /// ... and at or above this interval mean relative humidity, %.
    pub icing_min_humidity: f64,
}

/// One channel's settings (as a `[[channel]]` of a `tenmin` station file).
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct tm_channel_settings {
    /// `TM_KIND_SPEED`, `TM_KIND_DIRECTION` or `TM_KIND_SCALAR`.
    pub kind: u8,
    /// Value of quantum 0 (calibration offset).
    pub offset: f64,
    /// Value of one quantum: the resolution, or the calibration slope of raw
    /// counts. For direction channels it applies to counts only.
    pub step: f64,
    /// Physically possible values, low end, inclusive.
    pub range_low: f64,
    /// Physically possible values, high end, inclusive.
    pub range_high: f64,
    /// Gust window in samples (speed); 0 computes no gust.
    pub gust_window: u16,
    /// Vane mounting offset, degrees, -360 to 360.
    pub mounting_offset_deg: f64,
    /// Index of the speed channel that weights a direction's resultant, or -1.
    pub speed_channel: i16,
    /// Screening settings.
    pub screen: tm_screen_settings,
}

/// `Some(index)` for 0..=255, `None` for -1; `Err` for anything else.
fn index(i: i16) -> Result<Option<u8>, ()> {
    match i {
        TM_NO_CHANNEL => Ok(None),
        _ => u8::try_from(i).map(Some).map_err(|_| ()),
    }
}

fn c_index(i: Option<u8>) -> i16 {
    i.map_or(TM_NO_CHANNEL, i16::from)
}

fn opt(has: u8, v: f64) -> Option<f64> {
    (has != 0).then_some(v)
}

/// The station settings as the core's.
pub(crate) fn station(s: &tm_station_settings) -> Result<StationConfig, tm_status> {
    let mut out = StationConfig::ten_minute_1hz();
    out.interval_s = s.interval_s;
    out.samples_per_interval = s.samples_per_interval;
    if usize::from(s.missing_count) > MAX_SENTINELS.min(s.missing_values.len()) {
        return Err(tm_status::TM_CONFIG_SENTINELS);
    }
    out.missing_values = [None; MAX_SENTINELS];
    for (slot, v) in out
        .missing_values
        .iter_mut()
        .zip(s.missing_values.iter())
        .take(usize::from(s.missing_count))
    {
        *slot = Some(*v);
    }
    Ok(out)
}

/// The core's station settings as C's.
pub(crate) fn c_station(s: &StationConfig) -> tm_station_settings {
    let mut out = tm_station_settings {
        interval_s: s.interval_s,
        samples_per_interval: s.samples_per_interval,
        missing_count: 0,
        missing_values: [0.0; 4],
    };
    for v in s.missing_values.iter().flatten() {
        if let Some(slot) = out.missing_values.get_mut(usize::from(out.missing_count)) {
            *slot = *v;
            out.missing_count += 1;
        }
    }
    out
}

/// A kind code as the core's kind.
pub(crate) fn kind(code: u8) -> Option<Kind> {
    match code {
        TM_KIND_SPEED => Some(Kind::Speed),
        TM_KIND_DIRECTION => Some(Kind::Direction),
        TM_KIND_SCALAR => Some(Kind::Scalar),
        _ => None,
    }
}

fn kind_code(k: Kind) -> u8 {
    match k {
        Kind::Speed => TM_KIND_SPEED,
        Kind::Direction => TM_KIND_DIRECTION,
        Kind::Scalar => TM_KIND_SCALAR,
    }
}

/// One channel's settings as the core's; `Err` names what is not even
/// representable (an unknown kind, a channel index outside 0..=255 or -1).
pub(crate) fn channel(c: &tm_channel_settings) -> Result<ChannelConfig, tm_status> {
    let k = kind(c.kind).ok_or(tm_status::TM_ERR_KIND)?;
    let link = |i| index(i).map_err(|()| tm_status::TM_CONFIG_CHANNEL_INDEX);
    let s = &c.screen;
    let mut screen = Screen::OFF;
    screen.step_limit = opt(s.has_step_limit, s.step_limit);
    screen.mean_range = (s.has_mean_range != 0).then_some((s.mean_low, s.mean_high));
    screen.sd_range = (s.has_sd_range != 0).then_some((s.sd_low, s.sd_high));
    screen.gust_max = opt(s.has_gust_max, s.gust_max);
    screen.min_recovery = opt(s.has_min_recovery, s.min_recovery);
    screen.flat_span_s = (s.has_flat_span != 0).then_some(s.flat_span_s);
    screen.flat_tolerance = s.flat_tolerance;
    screen.partner = link(s.partner)?;
    screen.pair_mean_diff = s.pair_mean_diff;
    screen.pair_max_diff = s.pair_max_diff;
    screen.above = link(s.above)?;
    screen.shear_tolerance = s.shear_tolerance;
    screen.icing = match (link(s.icing_temperature)?, link(s.icing_humidity)?) {
        (None, _) => None,
        (Some(t), Some(h)) => {
            let mut icing = Icing::new(t, h);
            icing.max_temperature = s.icing_max_temperature;
            icing.min_humidity = s.icing_min_humidity;
            Some(icing)
        }
        (Some(_), None) => return Err(tm_status::TM_CONFIG_CHANNEL_INDEX),
    };
    let mut out = ChannelConfig::scalar(1.0);
    out.kind = k;
    out.scale = Scale {
        offset: c.offset,
        step: c.step,
    };
    out.range = (c.range_low, c.range_high);
    out.gust_window = c.gust_window;
    out.mounting_offset_deg = c.mounting_offset_deg;
    out.speed_channel = link(c.speed_channel)?;
    out.screen = screen;
    Ok(out)
}

/// The core's channel settings as C's.
pub(crate) fn c_channel(c: &ChannelConfig) -> tm_channel_settings {
    let s = &c.screen;
    let (mean_low, mean_high) = s.mean_range.unwrap_or((0.0, 0.0));
    let (sd_low, sd_high) = s.sd_range.unwrap_or((0.0, 0.0));
    let icing = s.icing.unwrap_or(Icing::new(0, 0));
    tm_channel_settings {
        kind: kind_code(c.kind),
        offset: c.scale.offset,
        step: c.scale.step,
        range_low: c.range.0,
        range_high: c.range.1,
        gust_window: c.gust_window,
        mounting_offset_deg: c.mounting_offset_deg,
        speed_channel: c_index(c.speed_channel),
        screen: tm_screen_settings {
            has_step_limit: u8::from(s.step_limit.is_some()),
            step_limit: s.step_limit.unwrap_or(0.0),
            has_mean_range: u8::from(s.mean_range.is_some()),
            mean_low,
            mean_high,
            has_sd_range: u8::from(s.sd_range.is_some()),
            sd_low,
            sd_high,
            has_gust_max: u8::from(s.gust_max.is_some()),
            gust_max: s.gust_max.unwrap_or(0.0),
            has_min_recovery: u8::from(s.min_recovery.is_some()),
            min_recovery: s.min_recovery.unwrap_or(0.0),
            has_flat_span: u8::from(s.flat_span_s.is_some()),
            flat_span_s: s.flat_span_s.unwrap_or(0),
            flat_tolerance: s.flat_tolerance,
            partner: c_index(s.partner),
            pair_mean_diff: s.pair_mean_diff,
            pair_max_diff: s.pair_max_diff,
            above: c_index(s.above),
            shear_tolerance: s.shear_tolerance,
            icing_temperature: c_index(s.icing.map(|i| i.temperature)),
            icing_humidity: c_index(s.icing.map(|i| i.humidity)),
            icing_max_temperature: icing.max_temperature,
            icing_min_humidity: icing.min_humidity,
        },
    }
}

/// The status of a refused configuration, and the channel it names (or 255).
pub(crate) fn config_error(e: ConfigError) -> (tm_status, u8) {
    use tm_status::*;
    match e {
        ConfigError::Interval => (TM_CONFIG_INTERVAL, 255),
        ConfigError::SampleCount => (TM_CONFIG_SAMPLE_COUNT, 255),
        ConfigError::Sentinels => (TM_CONFIG_SENTINELS, 255),
        ConfigError::TooManyChannels => (TM_CONFIG_TOO_MANY_CHANNELS, 255),
        ConfigError::Channel { index, problem } => (
            match problem {
                ChannelProblem::Scale => TM_CONFIG_SCALE,
                ChannelProblem::Range => TM_CONFIG_RANGE,
                ChannelProblem::RangeTooWide => TM_CONFIG_RANGE_TOO_WIDE,
                ChannelProblem::GustWindow => TM_CONFIG_GUST_WINDOW,
                ChannelProblem::SpeedLink => TM_CONFIG_SPEED_LINK,
                ChannelProblem::DirectionSlope => TM_CONFIG_DIRECTION_SLOPE,
                ChannelProblem::MountingOffset => TM_CONFIG_MOUNTING_OFFSET,
                ChannelProblem::Screen => TM_CONFIG_SCREEN,
                ChannelProblem::ScreenLink => TM_CONFIG_SCREEN_LINK,
                _ => TM_CONFIG_OTHER,
            },
            index,
        ),
        _ => (TM_CONFIG_OTHER, 255),
    }
}

/// `tm_push_result.outcome`: accepted into the open interval.
pub const TM_ACCEPTED: u8 = 0;
/// `tm_push_result.outcome`: rejected, the same time as the last accepted sample.
pub const TM_REJECTED_DUPLICATE: u8 = 1;
/// `tm_push_result.outcome`: rejected, earlier than the last accepted sample.
pub const TM_REJECTED_BACKWARD: u8 = 2;
/// `tm_push_result.outcome`: rejected, in an interval already closed.
pub const TM_REJECTED_CLOSED_INTERVAL: u8 = 3;
/// `tm_push_result.outcome`: rejected, outside the years 0000 to 9999.
pub const TM_REJECTED_UNSUPPORTED_TIME: u8 = 4;
/// `tm_push_result.outcome`: rejected for a reason newer than this header.
pub const TM_REJECTED_OTHER: u8 = 255;

/// The outcome code of a pushed sample.
pub(crate) fn outcome(p: qc_core::Pushed) -> u8 {
    match p {
        qc_core::Pushed::Accepted => TM_ACCEPTED,
        qc_core::Pushed::Rejected(Reject::Duplicate) => TM_REJECTED_DUPLICATE,
        qc_core::Pushed::Rejected(Reject::Backward) => TM_REJECTED_BACKWARD,
        qc_core::Pushed::Rejected(Reject::ClosedInterval) => TM_REJECTED_CLOSED_INTERVAL,
        qc_core::Pushed::Rejected(Reject::UnsupportedTime) => TM_REJECTED_UNSUPPORTED_TIME,
        qc_core::Pushed::Rejected(_) => TM_REJECTED_OTHER,
    }
}

/// What one push or close did.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct tm_push_result {
    /// `TM_ACCEPTED` or a `TM_REJECTED_...` reason (always `TM_ACCEPTED`
    /// after a close).
    pub outcome: u8,
    /// Frames written to the caller's buffer: 0, or one per channel when an
    /// interval closed.
    pub frames: u32,
    /// Start of the closed interval, ms since 1970-01-01 UTC, when `frames` > 0.
    pub interval_start_ms: i64,
}

/// Sample counts of one channel over a span of intervals.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct tm_totals {
    /// Samples the span should hold at the nominal rate.
    pub possible: u64,
    /// Valid samples.
    pub valid: u64,
    /// Missing readings.
    pub missing: u64,
    /// Readings out of range.
    pub out_of_range: u64,
    /// Samples rejected for their timestamp.
    pub rejected: u64,
    /// Readings their source marked bad.
    pub flagged: u64,
    /// Intervals in the span.
    pub intervals: u64,
    /// Intervals with valid samples that passed screening.
    pub passed: u64,
}

/// The core's totals as C's.
pub(crate) fn c_totals(t: &Totals) -> tm_totals {
    tm_totals {
        possible: t.possible,
        valid: t.valid,
        missing: t.missing,
        out_of_range: t.out_of_range,
        rejected: t.rejected,
        flagged: t.flagged,
        intervals: t.intervals,
        passed: t.passed,
    }
}

/// Running recovery of one channel (record loggers only).
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct tm_recovery {
    /// Since the first interval.
    pub since_start: tm_totals,
    /// For the calendar month of the latest interval.
    pub this_month: tm_totals,
    /// That month's year (0 before the first interval).
    pub month_year: i32,
    /// That month, 1 to 12 (0 before the first interval).
    pub month: u8,
}

/// Sample counts of a logger by outcome, since it started (one per push).
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct tm_push_totals {
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
    /// Of the rejected, those that arrived while no interval was open.
    pub unplaced: u64,
}

/// The core's push totals as C's.
pub(crate) fn c_push_totals(t: &PushTotals) -> tm_push_totals {
    tm_push_totals {
        accepted: t.accepted,
        duplicate: t.duplicate,
        backward: t.backward,
        closed_interval: t.closed_interval,
        unsupported_time: t.unsupported_time,
        unplaced: t.unplaced,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use qc_core::Layout;

    #[test]
    fn settings_round_trip_through_c() {
        let mut s = Screen::for_kind(Kind::Speed);
        s.partner = Some(1);
        s.above = Some(2);
        s.icing = Some(Icing::new(4, 5));
        let cases = [
            ChannelConfig::speed(0.01)
                .with_screen(s)
                .with_gust_window(12),
            ChannelConfig::direction()
                .with_calibration(0.1, 0.0)
                .with_mounting_offset(4.0)
                .with_speed_channel(0),
            ChannelConfig::scalar(0.1).with_range(-40.0, 50.0),
        ];
        for c in cases {
            assert_eq!(channel(&c_channel(&c)), Ok(c));
        }
        let st = StationConfig::ten_minute_1hz();
        assert_eq!(station(&c_station(&st)), Ok(st));
    }

    #[test]
    fn readings_map_to_the_core() {
        let r = |kind, counts, value| tm_reading {
            kind,
            counts,
            value,
        };
        assert_eq!(
            reading(&r(TM_READING_VALUE, 0, 1.5)),
            Some(Reading::Value(1.5))
        );
        assert_eq!(
            reading(&r(TM_READING_COUNTS, -7, 0.0)),
            Some(Reading::Counts(-7))
        );
        assert_eq!(
            reading(&r(TM_READING_MISSING, 0, 0.0)),
            Some(Reading::Missing)
        );
        assert_eq!(
            reading(&r(TM_READING_FLAGGED, 0, 0.0)),
            Some(Reading::Flagged)
        );
        assert_eq!(reading(&r(9, 0, 0.0)), None);
    }

    #[test]
    fn every_config_error_has_its_own_status() {
        // The core's own validation gives each error; each maps to a code of its own.
        let bad_interval = StationConfig {
            interval_s: 7,
            ..StationConfig::ten_minute_1hz()
        };
        let e = Layout::<1>::new::<3>(bad_interval, &[ChannelConfig::scalar(1.0)]).unwrap_err();
        assert_eq!(config_error(e).0, tm_status::TM_CONFIG_INTERVAL);
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
        let mut codes: std::vec::Vec<i32> = problems
            .iter()
            .map(|&problem| config_error(ConfigError::Channel { index: 3, problem }).0 as i32)
            .chain(
                [
                    ConfigError::Interval,
                    ConfigError::SampleCount,
                    ConfigError::Sentinels,
                    ConfigError::TooManyChannels,
                ]
                .iter()
                .map(|&e| config_error(e).0 as i32),
            )
            .collect();
        let n = codes.len();
        codes.sort_unstable();
        codes.dedup();
        assert_eq!(codes.len(), n);
        assert!(!codes.contains(&(tm_status::TM_CONFIG_OTHER as i32)));
    }
}
