//! Flash footprint of qc-core in a minimal 8-channel *state* logger (the
//! budgets' "qc-core flash share"): as `footprint`, but the logger runs only
//! the sampling half of the core (`qc_core::Sampler`) and writes one state
//! frame per channel and interval, which a PC finishes (`tenmin decode`).
//! Otherwise the same as `footprint` (the day is `shared/footprint_day.rs`);
//! this one minus `footprint_base` is the flash qc-core adds to a state
//! logger: the sampler, state frames, the layout, and the soft-float helpers
//! that engineering-value readings pull in.

#![no_std]
#![no_main]

use cortex_m_rt::entry;
use firmware_example::scenario::{self, SamplerSlot};
use semihosting::process;

#[path = "shared/footprint_day.rs"]
mod day;

#[entry]
fn main() -> ! {
    // The running state (1 KiB) in static memory; the layout is in flash.
    static mut LOGGER: SamplerSlot = SamplerSlot::new();
    let Some(mut logger) = scenario::start_states_in(LOGGER) else {
        process::exit(1)
    };
    day::run_day(&mut logger)
}
