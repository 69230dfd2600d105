//! A long synthetic record with planted faults: how often each screening test
//! finds what was planted, and how often it flags clean intervals.
//!
//! Scenario (invented): the "Harrow Fell" test mast, 60 days at 0.1 Hz, two
//! redundant top anemometers (A, B), a lower anemometer, a vane linked to A,
//! temperature and humidity. Faults planted at known intervals: single-sample
//! spikes on A, a vane frozen during three cold humid spells, B reading low for
//! two days, the lower anemometer reading above A for a day, a loose connector on
//! A dropping 35 % of its samples in scattered intervals, and a day of A stuck at
//! 40 m/s by a wiring fault.
//!
//! Run with `cargo test -p qc-core --test screening_scenario -- --nocapture` to see
//! the table; DEVELOPERS.md keeps the figures of the last run.

use qc_core::{
    ChannelConfig, Event, Flag, Flags, Icing, Kind, Layout, Reading, Screen, Station,
    StationConfig, Timestamp,
};

const T0: i64 = 1_735_689_600_000; // 2025-01-01T00:00:00Z
const PER: i64 = 60; // samples per 10-minute interval at 0.1 Hz
const DAYS: i64 = 60;
const N: i64 = DAYS * 144;

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        // xorshift64*, deterministic; only shapes invented weather.
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        // Sum of 12 uniforms minus 6: close enough to a standard normal for weather.
        (0..12).map(|_| self.next()).sum::<f64>() - 6.0
    }
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Fault {
    Spike,
    FrozenVane,
    BLow,
    ShearInverted,
    Dropouts,
    StuckHigh,
}

fn layout() -> Layout<6> {
    let mut cfg = StationConfig::ten_minute_1hz();
    cfg.samples_per_interval = PER as u32;
    let mut a = Screen::for_kind(Kind::Speed);
    a.partner = Some(1);
    a.icing = Some(Icing::new(4, 5));
    let mut low = Screen::for_kind(Kind::Speed);
    low.above = Some(0);
    let mut vane = Screen::for_kind(Kind::Direction);
    vane.icing = Some(Icing::new(4, 5));
    Layout::new::<3>(
        cfg,
        &[
            ChannelConfig::speed(0.01).with_screen(a),
            ChannelConfig::speed(0.01),
            ChannelConfig::speed(0.01).with_screen(low),
            ChannelConfig::direction()
                .with_speed_channel(0)
                .with_screen(vane),
            ChannelConfig::scalar(0.01).with_range(-40.0, 50.0),
            ChannelConfig::scalar(0.1).with_range(0.0, 100.0),
        ],
    )
    .unwrap()
}

/// Which faults are planted in interval `k`, and on which channel.
fn plan(k: i64, rng: &mut Rng) -> Vec<(Fault, usize)> {
    let day = k / 144;
    let mut f = Vec::new();
    // Spikes and dropouts on A are not planted on the day A is stuck high.
    if rng.next() < 0.02 && day != 50 {
        f.push((Fault::Spike, 0));
    }
    // Frozen vane: 12 hours from noon on days 10, 25 and 40.
    if [10, 25, 40]
        .iter()
        .any(|d| k >= d * 144 + 72 && k < d * 144 + 144)
    {
        f.push((Fault::FrozenVane, 3));
    }
    if (15..17).contains(&day) {
        f.push((Fault::BLow, 1));
    }
    if day == 30 {
        f.push((Fault::ShearInverted, 2));
    }
    if day > 2 && day != 50 && rng.next() < 0.01 {
        f.push((Fault::Dropouts, 0));
    }
    if day == 50 {
        f.push((Fault::StuckHigh, 0));
    }
    f
}

struct Interval {
    planted: Vec<(Fault, usize)>,
    flags: [Flags; 6],
}

fn simulate() -> Vec<Interval> {
    let layout = layout();
    let mut station: Station<6, 3> = Station::new(layout);
    let mut rng = Rng(0x5eed_1234_abcd_0001);
    let mut plans = Vec::new();
    let mut closed: Vec<[Flags; 6]> = Vec::new();
    let mut emit = |e: Event<'_, 6, 3>| match e {
        Event::Closed(acc, _) => closed.push(core::array::from_fn(|c| {
            layout.finish(acc, c).map(|r| r.flags).unwrap_or_default()
        })),
        Event::Gap(_) => panic!("no gaps are planted"),
    };
    let mut mean = 8.0f64;
    let mut dir = 240.0f64;
    for k in 0..N {
        // Slowly varying weather: mean speed 4 to 14 m/s, direction wandering.
        mean = (mean + 0.3 * rng.normal()).clamp(4.0, 14.0);
        dir = (dir + 5.0 * rng.normal()).rem_euclid(360.0);
        let day_frac = (k % 144) as f64 / 144.0;
        let planted = plan(k, &mut rng);
        let has = |f: Fault| planted.iter().any(|p| p.0 == f);
        let cold = has(Fault::FrozenVane);
        let temp = if cold {
            -3.0
        } else {
            8.0 + 6.0 * (day_frac * std::f64::consts::TAU).sin()
        };
        let rh = if cold {
            93.0
        } else {
            65.0 + 10.0 * (day_frac * std::f64::consts::TAU).cos()
        };
        let spike_at = (rng.next() * PER as f64) as i64;
        for i in 0..PER {
            let u = (mean + 0.12 * mean * rng.normal()).max(0.3);
            let mut a = u;
            let mut b = u + 0.05 * rng.normal();
            let mut low = u * 0.88 + 0.05 * rng.normal();
            let mut vane = (dir + 12.0 * rng.normal()).rem_euclid(360.0);
            if has(Fault::Spike) && i == spike_at {
                a += 15.0;
            }
            if cold {
                vane = 123.4;
            }
            if has(Fault::BLow) {
                b -= 0.8;
            }
            if has(Fault::ShearInverted) {
                low = u + 0.9;
            }
            if has(Fault::Dropouts) && rng.next() < 0.35 {
                a = -999.0;
            }
            if has(Fault::StuckHigh) {
                a = 40.0;
            }
            let readings = [a, b, low, vane, temp, rh].map(Reading::Value);
            let t = Timestamp::from_millis(T0 + k * 600_000 + i * 10_000);
            station.push(t, &readings, &mut emit);
        }
        plans.push(planted);
    }
    station.close(&mut emit);
    assert_eq!(closed.len(), plans.len());
    plans
        .into_iter()
        .zip(closed)
        .map(|(planted, flags)| Interval { planted, flags })
        .collect()
}

/// The flag each fault should raise on its channel, and from which interval of
/// the fault's run on (flat-line needs its 3-hour span: 18 intervals).
fn expected(f: Fault) -> (Flag, usize) {
    match f {
        Fault::Spike => (Flag::Spike, 0),
        Fault::FrozenVane => (Flag::Icing, 0),
        Fault::BLow => (Flag::PairMismatch, 0),
        Fault::ShearInverted => (Flag::Shear, 0),
        Fault::Dropouts => (Flag::LowRecovery, 0),
        Fault::StuckHigh => (Flag::Implausible, 0),
    }
}

#[test]
fn detection_and_false_flag_rates() {
    let intervals = simulate();
    println!("fault            channel flag           planted detected rate");
    let faults = [
        Fault::Spike,
        Fault::FrozenVane,
        Fault::BLow,
        Fault::ShearInverted,
        Fault::Dropouts,
        Fault::StuckHigh,
    ];
    for fault in faults {
        let (flag, _) = expected(fault);
        let hits: Vec<bool> = intervals
            .iter()
            .filter_map(|iv| {
                iv.planted
                    .iter()
                    .find(|p| p.0 == fault)
                    .map(|p| iv.flags[p.1].contains(flag))
            })
            .collect();
        let detected = hits.iter().filter(|h| **h).count();
        if fault == Fault::Spike {
            // Misses: spikes planted in an interval whose dropouts hid the spiked sample.
            let overlap = intervals
                .iter()
                .filter(|iv| {
                    iv.planted.iter().any(|p| p.0 == Fault::Spike)
                        && iv.planted.iter().any(|p| p.0 == Fault::Dropouts)
                        && !iv.flags[0].contains(Flag::Spike)
                })
                .count();
            println!("(spike misses in intervals that also had dropouts: {overlap})");
        }
        let rate = detected as f64 / hits.len() as f64;
        let ch = intervals
            .iter()
            .find_map(|iv| iv.planted.iter().find(|p| p.0 == fault).map(|p| p.1))
            .unwrap();
        println!(
            "{:<16} {:>7} {:<14} {:>7} {:>8} {:.3}",
            format!("{fault:?}"),
            ch,
            flag.name(),
            hits.len(),
            detected,
            rate
        );
        assert!(!hits.is_empty());
        assert!(rate >= 0.95, "{fault:?}: detection {rate}");
    }
    // The frozen vane is also a flat-line once the 3-hour span is reached.
    let frozen: Vec<&Interval> = intervals
        .iter()
        .filter(|iv| iv.planted.iter().any(|p| p.0 == Fault::FrozenVane))
        .collect();
    let flat = frozen
        .iter()
        .filter(|iv| iv.flags[3].contains(Flag::Flatline))
        .count();
    // Each 12-hour spell is 72 intervals, flagged from its 18th: 55 each.
    println!(
        "FrozenVane             3 flatline       {:>7} {:>8}",
        frozen.len(),
        flat
    );
    assert_eq!(flat, 3 * (72 - 17));

    // False flags: any flag on a channel in an interval where nothing was planted
    // on any channel (partial cannot happen: every sample is present).
    println!("channel clean-intervals flagged rate");
    for ch in 0..6 {
        let clean: Vec<&Interval> = intervals
            .iter()
            .filter(|iv| iv.planted.is_empty())
            .collect();
        let flagged = clean.iter().filter(|iv| !iv.flags[ch].is_empty()).count();
        let rate = flagged as f64 / clean.len() as f64;
        println!("{ch:>7} {:>15} {flagged:>7} {rate:.4}", clean.len());
        for iv in clean.iter().filter(|iv| !iv.flags[ch].is_empty()).take(3) {
            println!("        e.g. {}", iv.flags[ch]);
        }
        assert!(rate <= 0.01, "channel {ch}: false-flag rate {rate}");
    }
}
