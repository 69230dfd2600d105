//! Flash footprint of qc-core in a minimal 8-channel logger (the budgets'
//! "qc-core flash share"): the fixed scenario station (`scenario`), readings
//! from stand-in sensor registers, one record-log frame per channel for every
//! closed interval handed to a stand-in flash writer. `footprint_base` is the
//! same program without qc-core; the flash of this one minus that one's is
//! what qc-core adds to a logger (statistics, screening, recovery, record
//! frames, and the soft-float, 64-bit and `libm` helpers they pull in).
//!
//! Runs a day of samples under QEMU (`shared/footprint_day.rs`) and exits 0,
//! so that the measured program is one that works.

#![no_std]
#![no_main]

use cortex_m_rt::entry;
use firmware_example::scenario::{self, LoggerSlot};
use semihosting::process;

#[path = "shared/footprint_day.rs"]
mod day;

#[entry]
fn main() -> ! {
    // The running state (2 KiB) in static memory; the layout is in flash.
    static mut LOGGER: LoggerSlot = LoggerSlot::new();
    let Some(mut logger) = scenario::start_in(LOGGER) else {
        process::exit(1)
    };
    day::run_day(&mut logger)
}
