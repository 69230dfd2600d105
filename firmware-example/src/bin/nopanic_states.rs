//! The link-time proof that no panic is reachable in the minimal state logger
//! (`footprint_states`): the same program and the same day
//! (`shared/footprint_day.rs`: per-sample pushes, interval closes, state
//! frames), with a panic handler that calls a function defined nowhere
//! (`shared/no_panic.rs`). The link succeeds only if no panic path is left.
//!
//! Build (`run-checks.sh` builds it and runs it under QEMU):
//! `cargo build --release --no-default-features --features nopanic --bin nopanic_states`
//! (without the semihosting crate's panic handler, which would be a second
//! one). README "No-panic proof" says what it covers and what it does not.

#![no_std]
#![no_main]

use cortex_m_rt::entry;
use firmware_example::scenario::{self, SamplerSlot};
use semihosting::process;

#[path = "shared/footprint_day.rs"]
mod day;
#[path = "shared/no_panic.rs"]
mod no_panic;

#[entry]
fn main() -> ! {
    static mut LOGGER: SamplerSlot = SamplerSlot::new();
    no_panic::canary();
    let Some(mut logger) = scenario::start_states_in(LOGGER) else {
        process::exit(1)
    };
    day::run_day(&mut logger)
}
