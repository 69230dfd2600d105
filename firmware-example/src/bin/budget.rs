//! Instruction budgets of qc-core, measured under QEMU.
//!
//! Run under `qemu-system-arm -icount shift=0 ...`: QEMU then advances its
//! virtual clock by exactly 1 ns per guest instruction, and SysTick counts that
//! virtual clock. The program first calibrates instructions per SysTick tick
//! with a loop of known length, then times each case as (loop with the work)
//! minus (the same loop without it), over many repetitions, and prints
//! instructions per operation. See the README ("Budgets") for the limits of the
//! method. Exit status 0 when every measurement ran.

#![no_std]
#![no_main]

use core::borrow::Borrow;
use core::hint::black_box;

use cortex_m::peripheral::syst::SystClkSource;
use cortex_m::peripheral::{Peripherals, SYST};
use cortex_m_rt::entry;
use firmware_example::logger::{Core, Logger as AnyLogger};
use firmware_example::scenario::{self, Logger, LoggerSlot, CHANNELS};
use qc_core::wire::{encode_record, ConfigStamp, RecordFrame, FRAME_LEN};
use qc_core::{ChannelConfig, Event, Layout, Reading, Station, StationConfig, Timestamp};
use semihosting::{println, process};

/// 2024-01-15T00:00:00Z, an interval boundary.
const T0: i64 = 1_705_276_800_000;
/// Samples timed per case (within one interval, after a warm-up).
const N: u32 = 400;
const SYST_MASK: u32 = 0x00FF_FFFF;

fn now() -> u32 {
    SYST::get_current()
}

/// SysTick ticks from `start` to `end` (it counts down and wraps at 2^24).
fn ticks(start: u32, end: u32) -> u32 {
    start.wrapping_sub(end) & SYST_MASK
}

/// Instructions per SysTick tick, x1000, from a loop of 3 instructions an
/// iteration (`nop`, `subs`, `bne`; checked in the disassembly by the run script).
#[inline(never)]
fn calibrate() -> u64 {
    const LOOPS: u32 = 200_000;
    let start = now();
    let mut i = black_box(LOOPS);
    while i != 0 {
        cortex_m::asm::nop();
        i -= 1;
    }
    let t = u64::from(ticks(start, now())).max(1);
    u64::from(3 * LOOPS) * 1000 / t
}

struct Meter {
    milli_insn_per_tick: u64,
}

impl Meter {
    /// Instructions of `work` per repetition, minus those of `base`.
    fn per_op(&self, reps: u32, work: u32, base: u32) -> u64 {
        let d = u64::from(work.saturating_sub(base));
        d * self.milli_insn_per_tick / 1000 / u64::from(reps.max(1))
    }
}

/// Pushes `n` samples from `t0`, one a second, cycling through `table`; with
/// `push` false it runs the same loop without the station (the baseline).
#[inline(never)]
fn pushes<const C: usize, L: Borrow<Layout<C>>>(
    st: &mut Station<C, 3, L>,
    t0: i64,
    table: &[[Reading; C]; 8],
    n: u32,
    push: bool,
) -> u32 {
    let start = now();
    for i in 0..n {
        let t = Timestamp::from_millis(t0 + i64::from(i) * 1000);
        let r = black_box(&table[(i & 7) as usize]);
        if push {
            black_box(st.push(t, r, |e| {
                black_box(&e);
            }));
        } else {
            black_box((t, r));
        }
    }
    ticks(start, now())
}

/// Steady-state instructions per sample of a station, and of closing an
/// interval (the push that ends it, less an ordinary push), and of finishing
/// each channel's record.
#[inline(never)]
fn station_case<const C: usize>(
    m: &Meter,
    name: &str,
    layout: &Layout<C>,
    table: &[[Reading; C]; 8],
) -> (u64, u64) {
    let mut st: Station<C, 3, &Layout<C>> = Station::new(layout);
    // Warm up: open the interval and fill the gust window.
    pushes(&mut st, T0, table, 10, true);
    let work = pushes(&mut st, T0 + 10_000, table, N, true);
    let base = pushes(&mut st, T0 + 10_000, table, N, false);
    let per_sample = m.per_op(N, work, base);
    // Fill the interval, then time the push that closes it: the first close of
    // a calendar month (the station works out the month's span once).
    pushes(&mut st, T0 + i64::from(10 + N) * 1000, table, 590 - N, true);
    let r = black_box(&table[0]);
    let closing_push = |st: &mut Station<C, 3, &Layout<C>>, at: i64| {
        let start = now();
        st.push(Timestamp::from_millis(at), r, |e| {
            black_box(&e);
        });
        ticks(start, now())
    };
    let first = m
        .per_op(1, closing_push(&mut st, T0 + 600_000), 0)
        .saturating_sub(per_sample);
    // The next interval's close: the steady state.
    pushes(&mut st, T0 + 600_000 + 1000, table, 599, true);
    let close = m
        .per_op(1, closing_push(&mut st, T0 + 1_200_000), 0)
        .saturating_sub(per_sample);
    // Time `finish` of every channel of a full interval.
    let mut finish = 0u64;
    let lay = layout;
    pushes(&mut st, T0 + 1_200_000 + 1000, table, 599, true);
    st.push(Timestamp::from_millis(T0 + 1_800_000), r, |e| {
        if let Event::Closed(acc, _) = e {
            let start = now();
            for ch in 0..C {
                black_box(lay.finish(acc, ch));
            }
            finish = m.per_op(1, ticks(start, now()), 0);
        }
    });
    println!(
        "budget: {:<34} per sample {:>6}   interval close {:>6}   first of a month {:>6}   finish {:>6} ({} per channel)",
        name,
        per_sample,
        close,
        first,
        finish,
        finish / C.max(1) as u64
    );
    (per_sample, finish / C.max(1) as u64)
}

fn speed_values(step: f64) -> [[Reading; 1]; 8] {
    core::array::from_fn(|i| [Reading::Value(8.0 + step * (i as f64 * 37.0 % 11.0))])
}

/// One case of [`single_channel_cases`]: a station of `channels`, fed `table`.
/// Not inlined, so that the cases' layouts and tables do not pile up in one
/// stack frame (the replay board's stack is 9 KiB, `memory/microbit.x`).
#[inline(never)]
fn case<const C: usize>(
    m: &Meter,
    name: &str,
    channels: [ChannelConfig; C],
    table: &[[Reading; C]; 8],
) -> Option<()> {
    match Layout::new::<3>(StationConfig::ten_minute_1hz(), &channels) {
        Ok(ref layout) => {
            station_case(m, name, layout, table);
            Some(())
        }
        Err(_) => None,
    }
}

#[inline(never)]
fn single_channel_cases(m: &Meter) -> Option<()> {
    let speed = ChannelConfig::speed(0.01);
    let cup = ChannelConfig::speed(1.0).with_calibration(scenario::CUP_SLOPE, scenario::CUP_OFFSET);
    let vane_counts = ChannelConfig::direction().with_calibration(360.0 / 26_400.0, 0.0);
    // The station's own work per sample (time checks, interval bookkeeping).
    case(m, "station alone (0 channels)", [], &[[]; 8])?;
    case(m, "speed, Reading::Value", [speed], &speed_values(0.17))?;
    let t: [[Reading; 1]; 8] =
        core::array::from_fn(|i| [Reading::Counts(150 + (i as i32 * 7) % 23)]);
    case(m, "speed, Reading::Counts (cup)", [cup], &t)?;
    let t: [[Reading; 1]; 8] =
        core::array::from_fn(|i| [Reading::Value((350.0 + i as f64 * 3.7) % 360.0)]);
    case(
        m,
        "direction, Reading::Value",
        [ChannelConfig::direction()],
        &t,
    )?;
    let t: [[Reading; 1]; 8] = core::array::from_fn(|i| [Reading::Counts(25_900 + i as i32 * 130)]);
    case(m, "direction, Reading::Counts (vane)", [vane_counts], &t)?;
    let t: [[Reading; 1]; 8] = core::array::from_fn(|i| [Reading::Value(3.0 + i as f64 * 0.03)]);
    case(
        m,
        "scalar, Reading::Value",
        [ChannelConfig::scalar(0.01)],
        &t,
    )?;
    // A temperature on a 12-bit ADC: counts calibrated to deg C.
    let t: [[Reading; 1]; 8] = core::array::from_fn(|i| [Reading::Counts(1_850 + i as i32 * 3)]);
    case(
        m,
        "scalar, Reading::Counts (ADC)",
        [ChannelConfig::scalar(1.0)
            .with_calibration(100.0 / 4095.0, -40.0)
            .with_range(-40.0, 60.0)],
        &t,
    )?;
    // A direction linked to a speed: the two-channel station less the speed alone.
    let t: [[Reading; 2]; 8] = core::array::from_fn(|i| {
        [
            Reading::Counts(150 + (i as i32 * 7) % 23),
            Reading::Counts(25_900 + i as i32 * 130),
        ]
    });
    case(
        m,
        "cup + linked vane (2 channels)",
        [cup, vane_counts.with_speed_channel(0)],
        &t,
    )
}

/// Marks the start of a profiled region in an instruction trace.
#[inline(never)]
fn profile_mark(case: u32) {
    black_box(case);
}

#[inline(never)]
fn profile_cases() -> Option<()> {
    let st = StationConfig::ten_minute_1hz();
    let cup = ChannelConfig::speed(1.0).with_calibration(scenario::CUP_SLOPE, scenario::CUP_OFFSET);
    let vane = ChannelConfig::direction().with_calibration(360.0 / 26_400.0, 0.0);
    let value = speed_values(0.17);
    let counts: [[Reading; 1]; 8] = core::array::from_fn(|i| [Reading::Counts(150 + i as i32)]);
    let dirs: [[Reading; 1]; 8] =
        core::array::from_fn(|i| [Reading::Counts(25_900 + i as i32 * 130)]);
    for (case, layout, table) in [
        (
            1,
            Layout::new::<3>(st, &[ChannelConfig::speed(0.01)]).ok()?,
            &value,
        ),
        (2, Layout::new::<3>(st, &[cup]).ok()?, &counts),
        (3, Layout::new::<3>(st, &[vane]).ok()?, &dirs),
    ] {
        let mut s: Station<1, 3> = Station::new(layout);
        pushes(&mut s, T0, table, 10, true);
        profile_mark(case);
        pushes(&mut s, T0 + 10_000, table, 100, true);
        profile_mark(100 + case);
        pushes(&mut s, T0 + 110_000, table, 490, true);
        profile_mark(200 + case);
        pushes(&mut s, T0 + 600_000, table, 1, true);
        profile_mark(300 + case);
    }
    Some(())
}

/// Profile case 4: eight cups, the layout in flash (a function of its own, so
/// that its station and the cases above do not share one stack frame).
#[inline(never)]
fn profile_eight_cups() {
    let mut s: Station<CHANNELS, 3, &Layout<CHANNELS>> = Station::new(&EIGHT_CUPS_LAYOUT);
    pushes(&mut s, T0, &EIGHT_CUPS, 10, true);
    profile_mark(4);
    pushes(&mut s, T0 + 10_000, &EIGHT_CUPS, 100, true);
    profile_mark(104);
    pushes(&mut s, T0 + 110_000, &EIGHT_CUPS, 490, true);
    profile_mark(204);
    pushes(&mut s, T0 + 600_000, &EIGHT_CUPS, 1, true);
    profile_mark(304);
}

/// The scenario's readings, cycled (in flash: the replay board's stack is
/// 9 KiB, `memory/microbit.x`).
static SCENARIO_TABLE: [[Reading; CHANNELS]; 8] = {
    let mut t = [[Reading::Missing; CHANNELS]; 8];
    let mut i = 0;
    while i < 8 {
        let k = i as i32;
        let x = i as f64;
        t[i] = [
            Reading::Counts(150 + (k * 7) % 23),
            Reading::Counts(149 + (k * 5) % 19),
            Reading::Value(6.5 + x * 0.13),
            Reading::Counts((25_900 + k * 130) % 26_400),
            Reading::Value(1.5 + x * 0.01),
            Reading::Value(88.0 + x * 0.2),
            Reading::Value(1_012.4),
            Reading::Value(12.61 - x * 0.001),
        ];
        i += 1;
    }
    t
};

/// Pushes `n` samples from `t0`, one a second, cycling through `table`, into
/// a logger whose frames go nowhere; with `push` false the same loop without
/// the logger (the baseline). SysTick ticks taken.
fn logger_pushes(
    logger: &mut AnyLogger<'_, '_, CHANNELS, impl Core<CHANNELS>>,
    table: &[[Reading; CHANNELS]; 8],
    t0: i64,
    n: u32,
    push: bool,
) -> u32 {
    let mut sink = |f: &[u8; FRAME_LEN]| -> Result<(), ()> {
        black_box(f);
        Ok(())
    };
    let start = now();
    for i in 0..n {
        let t = Timestamp::from_millis(t0 + i64::from(i) * 1000);
        let r = black_box(&table[(i & 7) as usize]);
        if push {
            black_box(logger.push(t, r, &mut sink).is_ok());
        } else {
            black_box((t, r));
        }
    }
    ticks(start, now())
}

/// Steady-state instructions per sample of a logger fed `table` from `T0`:
/// a warm-up of 10 samples, then `N` timed less the same loop without it.
fn logger_per_sample(
    m: &Meter,
    logger: &mut AnyLogger<'_, '_, CHANNELS, impl Core<CHANNELS>>,
    table: &[[Reading; CHANNELS]; 8],
) -> u64 {
    logger_pushes(logger, table, T0, 10, true);
    let work = logger_pushes(logger, table, T0 + 10_000, N, true);
    let base = logger_pushes(logger, table, T0 + 10_000, N, false);
    m.per_op(N, work, base)
}

/// Eight channels of one kind in the logger slot (8 x 3 channels, as the
/// scenario's): instructions per sample of the whole logger, and per channel.
#[inline(never)]
fn eight_case(
    m: &Meter,
    slot: &mut LoggerSlot,
    name: &str,
    layout: &'static Layout<CHANNELS>,
    table: &[[Reading; CHANNELS]; 8],
) -> Option<()> {
    let mut logger = slot.start(layout)?;
    let per_sample = logger_per_sample(m, &mut logger, table);
    println!(
        "budget: {:<34} per sample {:>6}   per channel {:>6}",
        name,
        per_sample,
        per_sample / CHANNELS as u64
    );
    Some(())
}

/// A cup anemometer (pulse counts), as the scenario's.
const CUP: ChannelConfig =
    ChannelConfig::speed(1.0).with_calibration(scenario::CUP_SLOPE, scenario::CUP_OFFSET);
/// A vane (ADC counts), as the scenario's.
const VANE: ChannelConfig = ChannelConfig::direction().with_calibration(360.0 / 26_400.0, 0.0);

/// Eight cups (in flash, validated at compile time).
static EIGHT_CUPS_LAYOUT: Layout<CHANNELS> =
    match Layout::new::<3>(StationConfig::ten_minute_1hz(), &[CUP; CHANNELS]) {
        Ok(l) => l,
        Err(_) => panic!("eight cups"),
    };

/// Eight vanes.
static EIGHT_VANES_LAYOUT: Layout<CHANNELS> =
    match Layout::new::<3>(StationConfig::ten_minute_1hz(), &[VANE; CHANNELS]) {
        Ok(l) => l,
        Err(_) => panic!("eight vanes"),
    };

/// Readings of eight cups (pulse counts), cycled.
static EIGHT_CUPS: [[Reading; CHANNELS]; 8] = {
    let mut t = [[Reading::Missing; CHANNELS]; 8];
    let mut i = 0;
    while i < 8 {
        let mut c = 0;
        while c < CHANNELS {
            t[i][c] = Reading::Counts(150 + ((i * 7 + c) % 23) as i32);
            c += 1;
        }
        i += 1;
    }
    t
};

/// Readings of eight vanes (ADC counts), cycled.
static EIGHT_VANES: [[Reading; CHANNELS]; 8] = {
    let mut t = [[Reading::Missing; CHANNELS]; 8];
    let mut i = 0;
    while i < 8 {
        let mut c = 0;
        while c < CHANNELS {
            t[i][c] = Reading::Counts(25_900 + (i * 130 + c * 11) as i32);
            c += 1;
        }
        i += 1;
    }
    t
};

#[inline(never)]
fn scenario_case(m: &Meter, slot: &mut LoggerSlot) -> Option<()> {
    let mut logger = scenario::start_in(slot)?;
    let table = &SCENARIO_TABLE;
    let run = |logger: &mut Logger<'_>, t0: i64, n: u32, push: bool| {
        logger_pushes(logger, table, t0, n, push)
    };
    let per_sample = logger_per_sample(m, &mut logger, table);
    run(&mut logger, T0 + i64::from(10 + N) * 1000, 590 - N, true);
    let closing = run(&mut logger, T0 + 600_000, 1, true);
    let first = m.per_op(1, closing, 0).saturating_sub(per_sample);
    run(&mut logger, T0 + 601_000, 599, true);
    let closing = run(&mut logger, T0 + 1_200_000, 1, true);
    let close = m.per_op(1, closing, 0).saturating_sub(per_sample);
    println!(
        "budget: {:<34} per sample {:>6}   interval close {:>6}   first of a month {:>6}   ({} per channel, incl. frames)",
        "scenario logger (8 channels)",
        per_sample,
        close,
        first,
        close / CHANNELS as u64
    );
    // One record frame: encode only.
    let frame = RecordFrame {
        sequence: 7,
        interval_start: Timestamp::from_millis(T0),
        channel: 3,
        config: Some(ConfigStamp {
            channels: CHANNELS as u8,
            fingerprint: logger.core().layout().fingerprint(),
        }),
        record: logger.core().layout().finish(logger.core().open()?, 3)?,
    };
    let mut out = [0u8; FRAME_LEN];
    let start = now();
    for _ in 0..50 {
        encode_record(black_box(&frame), &mut out);
        black_box(&out);
    }
    let enc = m.per_op(50, ticks(start, now()), 0);
    println!(
        "budget: {:<34} {:>6} instructions",
        "encode one record frame", enc
    );
    println!(
        "budget: sizes: Station<8,3,&Layout> {} B, Layout<8> {} B, IntervalAcc<8,3> {} B, 8 x Recovery {} B, Screener<8> {} B, ChannelRecord {} B",
        core::mem::size_of::<Station<CHANNELS, 3, &'static Layout<CHANNELS>>>(),
        core::mem::size_of::<Layout<CHANNELS>>(),
        core::mem::size_of::<qc_core::IntervalAcc<CHANNELS, 3>>(),
        core::mem::size_of::<[qc_core::Recovery; CHANNELS]>(),
        core::mem::size_of::<qc_core::Screener<CHANNELS>>(),
        core::mem::size_of::<qc_core::ChannelRecord>(),
    );
    println!(
        "budget: sizes: Sampler<8,3,&Layout> {} B (the state logger's running state)",
        core::mem::size_of::<qc_core::Sampler<CHANNELS, 3, &'static Layout<CHANNELS>>>(),
    );
    {
        use firmware_example::replay::{ReplayLayoutSlot, ReplaySlot, CAPACITY, GUST_CAPACITY};
        println!(
            "budget: replay logger: Station<8,12,&Layout> {} B, IntervalAcc<8,12> {} B, station slot {} B, layout slot {} B",
            core::mem::size_of::<Station<CAPACITY, GUST_CAPACITY, &'static Layout<CAPACITY>>>(),
            core::mem::size_of::<qc_core::IntervalAcc<CAPACITY, GUST_CAPACITY>>(),
            core::mem::size_of::<ReplaySlot<'static>>(),
            core::mem::size_of::<ReplayLayoutSlot>(),
        );
    }
    Some(())
}

/// The scenario's state logger (the sampling half only, state frames for the
/// PC to finish): instructions per sample, and the interval close with its 8
/// state frames.
#[inline(never)]
fn state_case(m: &Meter, slot: &mut LoggerSlot) -> Option<()> {
    let mut logger = slot.start_states(&scenario::LAYOUT)?;
    let table = &SCENARIO_TABLE;
    let per_sample = logger_per_sample(m, &mut logger, table);
    logger_pushes(
        &mut logger,
        table,
        T0 + i64::from(10 + N) * 1000,
        590 - N,
        true,
    );
    logger_pushes(&mut logger, table, T0 + 600_000, 1, true);
    logger_pushes(&mut logger, table, T0 + 601_000, 599, true);
    let closing = logger_pushes(&mut logger, table, T0 + 1_200_000, 1, true);
    let close = m.per_op(1, closing, 0).saturating_sub(per_sample);
    println!(
        "budget: {:<34} per sample {:>6}   interval close {:>6}   ({} per channel, incl. state frames)",
        "state logger (8 channels)",
        per_sample,
        close,
        close / CHANNELS as u64
    );
    Some(())
}

#[entry]
fn main() -> ! {
    // The 8-channel logger lives in static memory (see the replay binary).
    static mut LOGGER: LoggerSlot = LoggerSlot::new();
    let Some(p) = Peripherals::take() else {
        process::exit(1)
    };
    let mut syst = p.SYST;
    syst.set_clock_source(SystClkSource::Core);
    syst.set_reload(SYST_MASK);
    syst.clear_current();
    syst.enable_counter();
    let m = Meter {
        milli_insn_per_tick: calibrate(),
    };
    println!(
        "budget: calibration {}.{:03} instructions per SysTick tick",
        m.milli_insn_per_tick / 1000,
        m.milli_insn_per_tick % 1000
    );
    // `budget profile` (semihosting command line): only a few pushes of each
    // kind, for an instruction trace (`-singlestep -d exec,nochain`).
    let args = semihosting::experimental::env::args::<128>();
    let profile = args
        .as_ref()
        .ok()
        .and_then(|a| a.into_iter().nth(1))
        .is_some_and(|a| a == Ok("profile"));
    if profile {
        profile_cases();
        profile_eight_cups();
        process::exit(0)
    }
    if single_channel_cases(&m).is_none()
        || eight_case(
            &m,
            LOGGER,
            "8 x speed, Reading::Counts (cup)",
            &EIGHT_CUPS_LAYOUT,
            &EIGHT_CUPS,
        )
        .is_none()
        || eight_case(
            &m,
            LOGGER,
            "8 x direction, Reading::Counts",
            &EIGHT_VANES_LAYOUT,
            &EIGHT_VANES,
        )
        .is_none()
        || scenario_case(&m, LOGGER).is_none()
        || state_case(&m, LOGGER).is_none()
    {
        println!("budget: a case did not run");
        process::exit(1)
    }
    process::exit(0)
}
