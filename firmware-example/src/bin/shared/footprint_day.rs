//! The day both minimal loggers run (`footprint`, `footprint_states`): the
//! scenario's readings from stand-in sensor registers, one sample a second,
//! frames to a stand-in flash writer. `core::hint::black_box` stands in for
//! the hardware: the compiler must assume the readings and the writes are
//! real. Included by `#[path]`.

use core::hint::black_box;

use firmware_example::logger::{Core, Logger};
use firmware_example::scenario::CHANNELS;
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

/// Runs a day of samples through `logger` and exits 0 if it wrote the
/// expected 144 intervals of 8 frames, else 1.
pub fn run_day(logger: &mut Logger<'_, '_, CHANNELS, impl Core<CHANNELS>>) -> ! {
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
