//! The baseline of `footprint`: the same stand-in sensor registers, loop and
//! flash writer, without qc-core (every 600th sample's raw readings are copied
//! into a frame instead of statistics). See `footprint.rs`.

#![no_std]
#![no_main]

use core::hint::black_box;

use cortex_m_rt::entry;
use semihosting::process;

const CHANNELS: usize = 8;
const FRAME_LEN: usize = 128;

/// Stand-in sensor registers (raw 32-bit words).
static REGISTERS: [[u32; CHANNELS]; 4] = [
    [151, 149, 652, 25_930, 151, 882, 10_124, 1_261],
    [163, 160, 691, 26_010, 152, 883, 10_124, 1_261],
    [140, 0, 607, 120, 152, 881, 10_125, 1_260],
    [157, 155, 0, 25_880, 153, 880, 10_125, 1_260],
];

#[entry]
fn main() -> ! {
    let mut frames = 0u32;
    let mut frame = [0u8; FRAME_LEN];
    let n = black_box(86_400u32);
    for i in 0..n {
        let t = black_box(1_705_276_800_000i64 + i64::from(i) * 1000);
        let r = black_box(&REGISTERS[(i & 3) as usize]);
        if i % 600 == 599 {
            // No index that could fail: the loggers measured against this
            // base reach no panic (nopanic_states, nopanic_records prove it),
            // so their panic handler and core::fmt are not linked, and this
            // base must not link them either (README "Budgets": the base
            // links exactly the runtime the measured loggers link).
            let (head, words) = frame.split_at_mut(8);
            for (word, v) in words.chunks_exact_mut(4).zip(r.iter()) {
                word.copy_from_slice(&v.to_le_bytes());
                head.copy_from_slice(&t.to_le_bytes());
                black_box((&*head, &*word));
                frames += 1;
            }
        }
    }
    process::exit(if frames == 144 * 8 { 0 } else { 1 })
}
