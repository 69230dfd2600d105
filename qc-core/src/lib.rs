//! Exact, fixed-memory interval statistics for wind-measurement loggers.
//!
//! `qc-core` turns timestamped samples of anemometers, wind vanes and other
//! sensors into interval statistics (usually 10 minutes): mean, standard
//! deviation, min, max, gust, turbulence intensity; for direction the unit-vector
//! mean, Yamartino sigma-theta and the speed-weighted resultant; and how many
//! samples were possible, valid, missing, out of range, rejected or flagged bad
//! by their source. It runs the
//! same on a Cortex-M0 logger and on a PC, with the same bits in every result.
//!
//! ```
//! use qc_core::{ChannelConfig, Event, Layout, Reading, Station, StationConfig, Timestamp};
//!
//! // A 10-minute, 1 Hz station: anemometer at 0.01 m/s, vane linked to it.
//! let layout = Layout::new::<3>(
//!     StationConfig::ten_minute_1hz(),
//!     &[ChannelConfig::speed(0.01), ChannelConfig::direction().with_speed_channel(0)],
//! )?;
//! let mut station: Station<2, 3> = Station::new(layout);
//! let t0 = 1_700_000_400_000; // ms since the epoch, on a 10-minute boundary
//! let mut means = Vec::new();
//! for i in 0..1200 {
//!     let readings = [Reading::Value(8.0), Reading::Value(if i % 2 == 0 { 350.0 } else { 10.0 })];
//!     station.push(Timestamp::from_millis(t0 + i * 1000), &readings, |event| {
//!         if let Event::Closed(acc, _) = event {
//!             let vane = layout.finish(acc, 1).unwrap();
//!             means.push((vane.mean.value(), vane.tally.valid));
//!         }
//!     });
//! }
//! // The second sample after 600 s closed the first interval: 600 valid samples,
//! // mean direction north (the arithmetic mean of 350 and 10 would say 180).
//! assert_eq!(means.len(), 1);
//! assert_eq!(means[0].1, 600);
//! let mean = means[0].0.unwrap();
//! assert!(mean < 1e-9 || mean > 360.0 - 1e-9);
//! # Ok::<(), qc_core::ConfigError>(())
//! ```
//!
//! # Exactness
//!
//! Every reading becomes an integer once, at the boundary: speeds and scalars
//! become quanta of their resolution (`value = offset + step * q`), directions
//! become hundredths of a degree, whose unit vectors come from integer tables
//! ([`angle`]). Sums, sums of squares, minima, maxima and gust window sums are
//! then exact integers, so an interval's state does not depend on the order of
//! its samples (except the gust, which is defined by sample order) and pieces
//! merge exactly ([`IntervalAcc::merge`]). Floating point is used only to turn
//! the exact sums into results, with `libm`, never platform math, and only
//! IEEE-754 operations that every target rounds the same way.
//!
//! Exact is not the same as infinitely precise: directions are kept to 0.01
//! degree, and their unit vectors carry the tables' rounding (about 2e-9 per
//! component), so a mean direction can differ from the true one by up to about
//! 1e-7 degree (a constant 265.8 reads back as 265.80000002). The same bits come
//! out on every target; the tests bound the difference from numpy.
//!
//! # Floating point on a core without an FPU
//!
//! On a Cortex-M0 (`thumbv6m`) there is no FPU: the per-sample path for raw
//! counts ([`Reading::Counts`]) is integer only; [`Reading::Value`] costs a
//! software multiply and rounding per sample. Finishing an interval costs a few
//! software `f64` operations per speed or scalar channel (one division per
//! statistic, a square root); the direction finish is integer (CORDIC and
//! Newton steps in [`angle`]) up to the final conversion. A Cortex-M4F has a
//! single-precision FPU only, so `f64` is in software there too. The firmware
//! README has the instruction counts.
//!
//! # Memory
//!
//! All state has a size fixed at compile time; nothing allocates. On every
//! target (all fields are 8-byte aligned at most):
//!
//! | state | bytes |
//! |---|---|
//! | [`SpeedAcc<3>`] (speed, 3-sample gust window) | 88 |
//! | [`DirectionAcc`] (vane) | 32 |
//! | [`LinkedDirectionAcc`] (vane with speed-weighted resultant) | 88 |
//! | [`ScalarAcc`] | 48 |
//! | [`Recovery`] (running recovery of one channel) | 88 |
//! | [`screen::Spikes`] (spike test, one channel, one interval) | 16 |
//! | [`Screener<1>`] (flat-line history: 32 per channel, 8 per station) | 40 |
//! | [`IntervalAcc<8, 3>`] (open interval, 8 channels, with spikes and flags) | 952 |
//! | [`Layout<8>`] (validated configuration of 8 channels) | 2,712 |
//! | [`Station<8, 3>`] (all of the above for 8 channels, owning its layout) | 4,736 |
//! | `Station<8, 3, &Layout<8>>` (the running state, the layout elsewhere) | 2,024 on 32-bit targets, 2,032 on 64-bit |
//! | `Sampler<8, 3, &Layout<8>>` (a state logger's running state: no recovery or screening history) | 1,032 on 32-bit targets, 1,040 on 64-bit |
//!
//! Each gust sample beyond 3 adds 8 bytes to a speed channel (4 in the running
//! window, 4 in the head kept for exact merging). A channel's accumulator
//! counts its valid, missing, out-of-range and flagged samples; the samples
//! rejected for their timestamp are rejected on every channel alike, so the
//! interval counts them once ([`IntervalAcc::reject`]) and each channel's
//! [`Tally`] shows that count. Readings excluded by decision
//! ([`Reading::Excluded`]) are counted by difference: the interval counts its
//! accepted samples once (every one holds a reading of every channel), and a
//! channel's excluded readings are those minus the readings its accumulator
//! counted (a fifth count in an accumulator would cost 8 bytes a channel in
//! alignment, and the per-sample path an instruction or two a channel).
//! [`Recovery`] keeps its 88 bytes with the excluded counts in it by storing
//! the samples per interval once, beside the interval count, instead of the
//! possible samples twice. The sizes are asserted in this crate's tests.
//!
//! # Finishing on the logger, or on a PC
//!
//! A [`Station`] is a [`Sampler`] (samples in, exact interval states out)
//! and a [`Finisher`] (interval states in, screened records and running
//! recovery out). A logger runs both, and writes records. A logger short of
//! flash runs the sampler alone and sends each interval's exact state
//! ([`wire::encode_state`], [`IntervalAcc::state`]); a PC puts the states back
//! ([`IntervalAcc::set_state`]) and finishes them with its own [`Finisher`].
//! The records are the same, bit for bit, either way; the sampler alone
//! leaves the finishing code and most of the software floating point off the
//! logger (on a Cortex-M0 about 15 KB of flash instead of 30 KB for an
//! 8-channel logger; the firmware README has the figures). A
//! [`Layout::fingerprint`] in every frame (state frames, and record frames
//! from format version 2) makes a PC refuse the frames of a logger of a
//! different configuration.
//!
//! A logger with a fixed configuration validates its layout at compile time
//! ([`Layout::new`] is a `const fn`) into a `static`, which stays in flash, and
//! gives the station a reference to it: the station's RAM is then its running
//! state alone.
//!
//! # Layers
//!
//! The modules form layers that read bottom-up: each imports only from the
//! layers below it and from the modules to its left in its own row, never
//! from above, so there are no import circles. The crate root re-exports
//! the public items; the old paths (`qc_core::screen::Screen`,
//! `qc_core::wire::Crc32`, ...) stay. `qc-core/tests/layers.rs` checks the
//! imports against this table, and this diagram against the test's table.
//!
//! ```text
//! wire, analysis  wire::frame  wire::record  wire::state  wire::scan  wire::sample  wire  analysis  conventions
//! station         station
//! screen          screen  recovery
//! channel         channel
//! primitives      limits  error  flags  time  cmath  moments  angle  direction  gust  spike  crc  sentinel
//! ```
//!
//! - primitives: fixed limits, errors, flags, time, exact integer and
//!   rounding arithmetic ([`moments`], [`angle`], [`direction`] sums, [`gust`]
//!   windows), the spike chain ([`screen::Spikes`]), CRC-32 ([`wire::Crc32`]),
//!   missing-value codes ([`Sentinels`]);
//! - channel: a channel's configuration and screening settings
//!   ([`ChannelConfig`], [`Screen`]), classifying a reading, its accumulators
//!   and finished [`ChannelRecord`];
//! - screen: the per-interval and cross-interval tests ([`Screener`]), and
//!   running [`Recovery`];
//! - station: [`Layout`], [`IntervalAcc`], [`Sampler`], [`Finisher`],
//!   [`Station`];
//! - wire and analysis: the byte formats ([`wire`]: the frame both frame kinds
//!   share, record frames, state frames, the log scanner, sample files), and
//!   what reports build on ([`analysis`], [`conventions`]).
//!
//! # Panics
//!
//! None reachable from input: configurations are validated once by
//! [`Layout::new`]; after that no method panics on any reading or timestamp.

#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

/// This crate's version (`Cargo.toml`), for provenance records.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");

pub mod analysis;
pub mod angle;
mod channel;
mod cmath;
pub mod conventions;
mod crc;
pub mod direction;
mod error;
mod flags;
pub mod gust;
mod limits;
pub mod moments;
mod recovery;
pub mod screen;
mod sentinel;
mod spike;
mod station;
#[cfg(test)]
mod test_rng;
pub mod time;
pub mod wire;

pub use channel::{
    Absent, Channel, ChannelAcc, ChannelConfig, ChannelRecord, ChannelState, DirectionAcc, Kind,
    LinkedDirectionAcc, Reading, Recal, ScalarAcc, Scale, SpeedAcc, Stat, StateForm, Tally,
};
pub use error::{ChannelProblem, ConfigError, TallyError};
pub use flags::{Flag, Flags};
pub use limits::{MAX_SAMPLES_PER_INTERVAL, MAX_SENTINELS};
pub use recovery::{Recovery, Totals};
pub use screen::{Icing, Screen, Screener};
pub use sentinel::Sentinels;
pub use station::{
    config_fingerprint, Ended, Event, Finisher, Gap, IntervalAcc, Layout, OtherFrame, PushTotals,
    Pushed, Reject, Sampler, StateError, Station, StationConfig,
};
pub use station::{ImageError, LAYOUT_IMAGE_VERSION};
pub use time::{Civil, Month, Timestamp};

#[cfg(test)]
mod tests {
    use super::*;
    use core::mem::size_of;

    #[test]
    fn documented_sizes() {
        assert_eq!(size_of::<SpeedAcc<3>>(), 88);
        assert_eq!(size_of::<DirectionAcc>(), 32);
        assert_eq!(size_of::<LinkedDirectionAcc>(), 88);
        assert_eq!(size_of::<ScalarAcc>(), 48);
        assert_eq!(size_of::<Recovery>(), 88);
        assert_eq!(size_of::<screen::Spikes>(), 16);
        assert_eq!(size_of::<Screener<1>>(), 40);
        assert_eq!(size_of::<IntervalAcc<8, 3>>(), 952);
        assert_eq!(size_of::<Layout<8>>(), 2712);
        assert_eq!(size_of::<Station<8, 3>>(), 4736);
        // With the layout by reference (in flash): the running state alone. On a
        // 32-bit target the reference is 4 bytes, so 4 less (checked there by
        // the firmware's budget program).
        assert_eq!(size_of::<Station<8, 3, &'static Layout<8>>>(), 2032);
        // The issue's budgets: speed with a 3-sample window <= 96, direction <= 64,
        // 8 channels' running state within 2 KiB on the 32-bit logger (2,048
        // bytes at most there, with its 4-byte reference: the firmware's budget
        // program checks it on the target).
        assert!(size_of::<Station<8, 3, &'static Layout<8>>>() <= 2048 + 8);
        assert!(size_of::<SpeedAcc<3>>() <= 96);
        assert!(size_of::<DirectionAcc>() <= 64);
        // A state logger's running state: the sampling half alone.
        assert_eq!(size_of::<Sampler<8, 3, &'static Layout<8>>>(), 1040);
    }
}
