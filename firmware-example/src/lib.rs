//! Example logger firmware for Cortex-M, built on `qc-core`.
//!
//! - [`drivers`]: sensor drivers generic over embedded-hal 1.0 (a vane on an
//!   I2C ADC, analog sensors on an SPI ADC) and a pulse-counter trait of ours
//!   for cup anemometers.
//! - [`logger`]: the [`logger::Logger`] that turns samples into record-log
//!   frames (a `qc_core::Station` and a frame writer); the host example
//!   `qc-core/examples/replay_frames.rs` and the host test
//!   `host-cli/tests/firmware_io.rs` compile the same file.
//! - [`scenario`]: a fixed 8-channel station for the `sensors` and `budget`
//!   binaries and the host example.
//! - [`replay`]: the replay loop over a sample file, which builds its station
//!   from the file's header.
//! - [`sim`]: simulated bus devices for running the drivers without hardware.
//!
//! The binaries (`src/bin`) run under QEMU with semihosting; see the README.
//!
//! # Panics
//!
//! Nothing here panics on any input; the drivers return their bus's errors.

#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod drivers;
pub mod logger;
pub mod replay;
pub mod scenario;
pub mod sim;
