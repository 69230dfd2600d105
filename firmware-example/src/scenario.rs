//! The fixed scenario: an invented 8-channel wind measurement station, used by
//! the `sensors` and `budget` binaries, and by the host example
//! `qc-core/examples/replay_frames.rs` to generate a day of samples for it.
//!
//! This one file is compiled into the firmware (`firmware_example::scenario`)
//! and into the host example (by `#[path]`, with `logger.rs`), so both use the
//! same layout. The `replay` binary does not use it: it builds its station from
//! the sample file's header.
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

use qc_core::{ChannelConfig, ConfigError, Icing, Kind, Layout, Screen, StationConfig};

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

/// The scenario's station-wide settings.
pub const fn station() -> StationConfig {
    StationConfig::ten_minute_1hz()
}

/// A cup anemometer of the scenario, screened against its `partner`.
const fn cup(partner: usize) -> ChannelConfig {
    let mut s = Screen::for_kind(Kind::Speed);
    s.partner = Some(partner as u8);
    s.icing = Some(Icing::new(TEMPERATURE as u8, HUMIDITY as u8));
    ChannelConfig::speed(1.0)
        .with_calibration(CUP_SLOPE, CUP_OFFSET)
        .with_screen(s)
}

/// The scenario's channels.
pub const CHANNEL_CONFIGS: [ChannelConfig; CHANNELS] = {
    let mut low = Screen::for_kind(Kind::Speed);
    low.above = Some(TOP_A as u8);
    let mut vane = Screen::for_kind(Kind::Direction);
    vane.icing = Some(Icing::new(TEMPERATURE as u8, HUMIDITY as u8));
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
    ]
};

/// The scenario's channels (a copy of [`CHANNEL_CONFIGS`]).
pub fn channels() -> [ChannelConfig; CHANNELS] {
    CHANNEL_CONFIGS
}

/// The scenario's station layout, validated at compile time (a configuration
/// the core refuses does not build) and kept in flash.
pub static LAYOUT: Layout<CHANNELS> = match Layout::new::<GUST>(station(), &CHANNEL_CONFIGS) {
    Ok(layout) => layout,
    Err(_) => panic!("the scenario's station configuration is refused by qc-core"),
};

/// The scenario's station layout, validated at run time (the same as [`LAYOUT`]).
pub fn layout() -> Result<Layout<CHANNELS>, ConfigError> {
    Layout::new::<GUST>(station(), &CHANNEL_CONFIGS)
}

/// The scenario's logger: the station above, a frame for every channel.
pub type Logger<'s> = crate::logger::RecordLogger<'s, 'static, CHANNELS, GUST>;

/// Static storage for the scenario's [`Logger`].
pub type LoggerSlot = crate::logger::LoggerSlot<'static, CHANNELS, GUST>;

/// A new logger of the scenario's layout ([`LAYOUT`], in flash), started in
/// `slot`; `None` only if the slot could not be filled (which does not happen).
pub fn start_in(slot: &mut LoggerSlot) -> Option<Logger<'_>> {
    slot.start(&LAYOUT)
}

/// The scenario's state logger: the station's sampling half, a state frame for
/// every channel, finished on a PC.
pub type StateLogger<'s> = crate::logger::StateLogger<'s, 'static, CHANNELS, GUST>;

/// Static storage for the scenario's [`StateLogger`].
pub type SamplerSlot = crate::logger::SamplerSlot<'static, CHANNELS, GUST>;

/// A new state logger of the scenario's layout ([`LAYOUT`], in flash),
/// started in `slot`; `None` only if the slot could not be filled.
pub fn start_states_in(slot: &mut SamplerSlot) -> Option<StateLogger<'_>> {
    slot.start(&LAYOUT)
}
