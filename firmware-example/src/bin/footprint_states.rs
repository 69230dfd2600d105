//! Flash footprint of qc-core in a minimal 8-channel logger (the budgets'
//! "qc-core flash share"): the fixed scenario station (`scenario`), readings
//! from stand-in sensor registers, one record-log frame per channel for every
//! closed interval handed to a stand-in flash writer. `footprint_base` is the
//! same program without qc-core; the flash of this one minus that one's is
//! what qc-core adds to a logger (statistics, screening, recovery, record
//! frames, and the soft-float, 64-bit and `libm` helpers they pull in).
//!
//! Runs a day of samples under QEMU and exits 0, so that the measured
//! program is one that works. `core::hint::black_box` stands in for the
//! hardware: the compiler must assume the readings and the writes are real.

#![no_std]
#![no_main]

use core::hint::black_box;

use cortex_m_rt::entry;
use firmware_example::scenario::{self, SamplerSlot, CHANNELS};
use qc_core::wire::FRAME_LEN;
use qc_core::{Reading, Timestamp};
use semihosting::process;

/// 2024-01-15T00:00:00Z.
const T0: i64 = 1_705_276_800_000;

/// Stand-in sensor registers: the scenario's readings (pulse counts, values,
/// ADC counts), cycled.
static REGISTERS: [[Reading; CHANNELS]; 4] = [
    [
        Reading::Counts(151),
        Reading::Counts(149),
        Reading::Value(6.52),
        Reading::Counts(25_930),
        Reading::Value(1.51),
        Reading::Value(88.2),
        Reading::Value(1_012.4),
        Reading::Value(12.61),
    ],
    [
        Reading::Counts(163),
        Reading::Counts(160),
        Reading::Value(6.91),
        Reading::Counts(26_010),
        Reading::Value(1.52),
        Reading::Value(88.3),
        Reading::Value(1_012.4),
        Reading::Value(12.61),
    ],
    [
        Reading::Counts(140),
        Reading::Missing,
        Reading::Value(6.07),
        Reading::Counts(120),
        Reading::Value(1.52),
        Reading::Value(88.1),
        Reading::Value(1_012.5),
        Reading::Value(12.60),
    ],
    [
        Reading::Counts(157),
        Reading::Counts(155),
        Reading::Value(-999.0),
        Reading::Counts(25_880),
        Reading::Value(1.53),
        Reading::Value(88.0),
        Reading::Value(1_012.5),
        Reading::Value(12.60),
    ],
];

#[entry]
fn main() -> ! {
    // The running state (2 KiB) in static memory; the layout is in flash.
    static mut LOGGER: SamplerSlot = SamplerSlot::new();
    let Some(mut logger) = scenario::start_states_in(LOGGER) else {
        process::exit(1)
    };
    let mut frames = 0u32;
    let mut flash = |f: &[u8; FRAME_LEN]| -> Result<(), ()> {
        black_box(f);
        frames += 1;
        Ok(())
    };
    let n = black_box(86_400u32);
    for i in 0..n {
        let t = Timestamp::from_millis(black_box(T0 + i64::from(i) * 1000));
        let r = black_box(&REGISTERS[(i & 3) as usize]);
        if logger.push(t, r, &mut flash).is_err() {
            process::exit(1)
        }
    }
    if logger.close(&mut flash).is_err() {
        process::exit(1)
    }
    // 144 intervals of 8 frames.
    process::exit(if frames == 144 * 8 { 0 } else { 1 })
}
