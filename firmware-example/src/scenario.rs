//! The replay scenario: an invented 8-channel wind measurement station, and the
//! code that turns its samples into record-log frames.
//!
//! This one file is compiled into the firmware (`firmware_example::scenario`)
//! and into the host example `qc-core/examples/replay_frames.rs` (by `#[path]`),
//! so the logger and the PC replay a day with the same layout and the same
//! record-writing code, and their logs can be compared bit for bit.
//!
//! | index | channel | reading | configuration |
//! |---:|---|---|---|
//! | 0 | cup anemometer A, top (80 m) | pulse counts per 1 s sample | `0.25 + 0.049 * counts` m/s; partner of 1; icing watched |
//! | 1 | cup anemometer B, top (80 m), redundant | pulse counts per 1 s sample | as A; partner of 0 |
//! | 2 | cup anemometer, lower (60 m) | m/s | 0.01 m/s; shear test against A |
//! | 3 | wind vane (78 m) | ADC counts | 360 degrees = 26,400 counts; linked to A; icing watched |
//! | 4 | air temperature | deg C | 0.01 C, -40 to 60 C |
//! | 5 | relative humidity | % | 0.1 %, 0 to 100 % |
//! | 6 | air pressure | hPa | 0.1 hPa, 500 to 1100 hPa |
//! | 7 | logger battery | V | 0.001 V, 0 to 20 V |
//!
//! 10-minute intervals at 1 Hz, missing-value codes -999 and -9999. The
//! calibrations and heights are invented for the scenario.

use qc_core::wire::{self, RecordFrame, FRAME_LEN};
use qc_core::{
    ChannelConfig, ConfigError, Event, Icing, IntervalAcc, Kind, Layout, Pushed, Reading, Screen,
    Station, StationConfig, Timestamp,
};

/// Channels in the scenario's station.
pub const CHANNELS: usize = 8;
/// Gust window capacity, samples (3 s at 1 Hz).
pub const GUST: usize = 3;

/// Top cup anemometer A (pulse counts).
pub const TOP_A: usize = 0;
/// Top cup anemometer B, redundant with A (pulse counts).
pub const TOP_B: usize = 1;
/// Lower cup anemometer (m/s).
pub const LOW: usize = 2;
/// Wind vane (ADC counts), linked to [`TOP_A`].
pub const VANE: usize = 3;
/// Air temperature (deg C).
pub const TEMPERATURE: usize = 4;
/// Relative humidity (%).
pub const HUMIDITY: usize = 5;
/// Air pressure (hPa).
pub const PRESSURE: usize = 6;
/// Logger battery (V).
pub const BATTERY: usize = 7;

/// Cup calibration slope: m/s per pulse counted in a 1 s sample (invented).
pub const CUP_SLOPE: f64 = 0.049;
/// Cup calibration offset, m/s (invented).
pub const CUP_OFFSET: f64 = 0.25;
/// Vane ADC counts at 360 degrees (a 3.3 V potentiometer on a 4.096 V
/// full-scale 16-bit ADC input: 3.3 / 4.096 * 32768, rounded).
pub const VANE_FULL_SCALE: i32 = 26_400;

/// The scenario's station layout.
#[inline(never)]
pub fn layout() -> Result<Layout<CHANNELS>, ConfigError> {
    let icing = Some(Icing::new(TEMPERATURE as u8, HUMIDITY as u8));
    let cup = |partner: usize| {
        let mut s = Screen::for_kind(Kind::Speed);
        s.partner = Some(partner as u8);
        s.icing = icing;
        ChannelConfig::speed(1.0)
            .with_calibration(CUP_SLOPE, CUP_OFFSET)
            .with_screen(s)
    };
    let mut low = Screen::for_kind(Kind::Speed);
    low.above = Some(TOP_A as u8);
    let mut vane = Screen::for_kind(Kind::Direction);
    vane.icing = icing;
    Layout::new::<GUST>(
        StationConfig::ten_minute_1hz(),
        [
            cup(TOP_B),
            cup(TOP_A),
            ChannelConfig::speed(0.01).with_screen(low),
            ChannelConfig::direction()
                .with_calibration(360.0 / VANE_FULL_SCALE as f64, 0.0)
                .with_speed_channel(TOP_A as u8)
                .with_screen(vane),
            ChannelConfig::scalar(0.01).with_range(-40.0, 60.0),
            ChannelConfig::scalar(0.1).with_range(0.0, 100.0),
            ChannelConfig::scalar(0.1).with_range(500.0, 1100.0),
            ChannelConfig::scalar(0.001).with_range(0.0, 20.0),
        ],
    )
}

/// Storage for a [`Logger`] in a `static`: empty until [`Logger::start_in`].
///
/// `#[repr(C)]` makes the empty slot all zero bytes, so a `static` of it lands
/// in `.bss`. (`Option<Logger>::None` is not all zero, so a static of it would
/// cost a 5 KiB initial image in flash.)
#[repr(C)]
#[derive(Clone, Debug)]
#[allow(clippy::large_enum_variant)] // the point: one static slot, filled once
pub enum LoggerSlot {
    /// No logger yet.
    Empty,
    /// A running logger.
    Full(Logger),
}

/// A logging station that writes one record-log frame per channel for every
/// interval it closes. The firmware and the host run this same code.
#[derive(Clone, Debug)]
pub struct Logger {
    station: Station<CHANNELS, GUST>,
    sequence: u32,
}

impl Logger {
    /// A logger with nothing recorded; frame sequence numbers start at 0.
    pub const fn new(layout: Layout<CHANNELS>) -> Self {
        Logger {
            station: Station::new(layout),
            sequence: 0,
        }
    }

    /// A new logger of the scenario's layout, put in `slot`; `None` if the
    /// layout is refused (a bug in [`layout`], which the host tests would show).
    ///
    /// The layout and the logger are built on the stack and then moved;
    /// building them in two functions that are not inlined keeps the two
    /// temporaries (about 5 KiB each) from sharing one stack frame.
    #[inline(never)]
    pub fn start_in(slot: &mut LoggerSlot) -> Option<&mut Logger> {
        match &layout() {
            Ok(layout) => Self::install(slot, layout),
            Err(_) => None,
        }
    }

    #[inline(never)]
    fn install<'a>(slot: &'a mut LoggerSlot, layout: &Layout<CHANNELS>) -> Option<&'a mut Logger> {
        *slot = LoggerSlot::Full(Logger::new(*layout));
        match slot {
            LoggerSlot::Full(logger) => Some(logger),
            LoggerSlot::Empty => None,
        }
    }

    /// The station.
    pub const fn station(&self) -> &Station<CHANNELS, GUST> {
        &self.station
    }

    /// Frames written so far.
    pub const fn frames(&self) -> u32 {
        self.sequence
    }

    /// Adds one sample; every interval it closes goes to `write` as frames, in
    /// channel order. Stops writing at the first error of `write` and returns it.
    ///
    /// Not inlined, so that its temporaries (an interval copy, eight records)
    /// take stack only while it runs: on a 16 KiB Cortex-M0 that matters.
    #[inline(never)]
    pub fn push<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; CHANNELS],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        // A push closes at most one interval. It is copied out of the callback
        // and finished after the push, when the layout can be borrowed again.
        let mut closed = None;
        let pushed = self.station.push(t, readings, |event| {
            if let Event::Closed(acc) = event {
                closed = Some(*acc);
            }
        });
        if let Some(acc) = closed {
            self.write_interval(&acc, write)?;
        }
        Ok(pushed)
    }

    /// Closes the open interval (end of data) and writes its frames.
    #[inline(never)]
    pub fn close<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        let mut closed = None;
        self.station.close(|event| {
            if let Event::Closed(acc) = event {
                closed = Some(*acc);
            }
        });
        match closed {
            Some(acc) => self.write_interval(&acc, write),
            None => Ok(()),
        }
    }

    /// Writes one frame per channel of a closed interval. Intervals with no
    /// sample at all (gaps) write no frames.
    #[inline(never)]
    fn write_interval<E>(
        &mut self,
        acc: &IntervalAcc<CHANNELS, GUST>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        let layout = self.station.layout();
        let mut frame = [0u8; FRAME_LEN];
        for channel in 0..CHANNELS {
            if let Some(record) = layout.finish(acc, channel) {
                let f = RecordFrame {
                    sequence: self.sequence,
                    interval_start: layout.interval_start(acc.index()),
                    channel: channel as u8,
                    record,
                };
                wire::encode_record(&f, &mut frame);
                write(&frame)?;
                self.sequence = self.sequence.wrapping_add(1);
            }
        }
        Ok(())
    }
}
