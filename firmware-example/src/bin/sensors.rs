//! Sensor board demo: the drivers sample simulated devices (an ADS1115 for the
//! vane, an MCP3208 for the analog sensors behind a switched supply, pulse
//! counters for the cups) once a second for 25 minutes of invented wind, and feed the scenario's station
//! exactly as a logger would. Prints each closed interval and exits 0 when two
//! full intervals of 8 channels were recorded.

#![no_std]
#![no_main]

use core::cell::Cell;

use cortex_m_rt::entry;
use firmware_example::drivers::analog::{AnalogFrontEnd, Linear};
use firmware_example::drivers::cup::CupAnemometer;
use firmware_example::drivers::power::SwitchedSupply;
use firmware_example::drivers::vane::{Vane, ADDRESS_GND};
use firmware_example::scenario::{self, LoggerSlot, CHANNELS};
use firmware_example::sim::{SimAds1115, SimDelay, SimMcp3208, SimPin, SimPulses};
use qc_core::wire::{decode_record, FRAME_LEN};
use qc_core::{Reading, Stat, Timestamp};
use semihosting::{println, process};

const T0: i64 = 1_705_276_800_000; // 2024-01-15T00:00:00Z

/// A failed read is a missing reading.
fn ok<E>(r: Result<Reading, E>) -> Reading {
    r.unwrap_or(Reading::Missing)
}

fn show(s: Stat) -> f64 {
    s.value().unwrap_or(f64::NAN)
}

#[entry]
fn main() -> ! {
    // cortex-m-rt turns this into a `&'static mut` owned by `main`: the logger's
    // running state (2 KiB; its layout is in flash) lives in static memory,
    // not on the 16 KiB part's stack.
    static mut LOGGER: LoggerSlot = LoggerSlot::new();
    let Some(mut logger) = scenario::start_in(LOGGER) else {
        println!("sensors: scenario layout refused");
        process::exit(1)
    };
    // The simulated world the devices see.
    let vane_in: [Cell<i16>; 4] = Default::default();
    let analog_in: [Cell<u16>; 8] = Default::default();
    let (pulses_a, pulses_b) = (Cell::new(0u32), Cell::new(0u32));

    let Ok(mut vane) = Vane::new(SimAds1115::new(ADDRESS_GND, &vane_in), ADDRESS_GND, 0) else {
        println!("sensors: vane ADC did not answer");
        process::exit(1)
    };
    let mut adc = AnalogFrontEnd::new(SimMcp3208 { inputs: &analog_in });
    // The analog sensors' supply, on for 50 ms of settling and the reading
    // (an invented figure: use the sensor maker's).
    let (supply_on, switches, broken) = (Cell::new(false), Cell::new(0u32), Cell::new(false));
    let waited = Cell::new(0u64);
    let pin = SimPin {
        high: &supply_on,
        switches: &switches,
        broken: &broken,
    };
    let Ok(mut supply) = SwitchedSupply::new(pin, SimDelay { waited_ns: &waited }, 50_000) else {
        println!("sensors: supply switch did not respond");
        process::exit(1)
    };
    let mut cup_a = CupAnemometer::new(SimPulses { pending: &pulses_a });
    let mut cup_b = CupAnemometer::new(SimPulses { pending: &pulses_b });
    // Transfer functions: 0-3.3 V outputs on a 3.3 V reference.
    let temperature = Linear::span(-40.0, 60.0, 3.3, 3.3);
    let humidity = Linear::span(0.0, 100.0, 3.3, 3.3);
    let pressure = Linear::span(600.0, 1100.0, 3.3, 3.3);
    let battery = Linear::span(0.0, 19.8, 3.3, 3.3); // 6:1 divider
    let mut records = 0u32;
    let mut on_frame = |f: &[u8; FRAME_LEN]| -> Result<(), ()> {
        if let Ok(fr) = decode_record(f) {
            let r = fr.record;
            println!(
                "{} ch{} valid {} mean {} sd {} max {} gust {} flags [{}]",
                fr.interval_start.millis(),
                fr.channel,
                r.tally.valid,
                show(r.mean),
                show(r.sd),
                show(r.max),
                show(r.gust),
                r.flags
            );
            records += 1;
        }
        Ok(())
    };
    for i in 0..1500i32 {
        // Invented wind: a slow swell and a 7 s flutter, as pulses per second.
        let swell = i % 240 - 120;
        let flutter = [0, 9, 3, -6, -11, 2, 5][(i % 7) as usize];
        let pulses = 160 + swell / 4 + flutter;
        pulses_a.set(pulses as u32);
        pulses_b.set((pulses - 2) as u32);
        vane_in[0].set((6_000 + i * 37 % 1_200) as i16);
        for (cell, v) in analog_in.iter().zip([1_700, 3_400, 3_300, 2_600]) {
            cell.set(v);
        }

        // The sampling step a logger runs every second: a failed read is a
        // missing reading, never a stopped logger.
        // The analog sensors are powered only while they are read; without
        // supply (a switch that failed) they count as missing.
        let analog = supply
            .powered(|| {
                let on = supply_on.get();
                let transfers = [&temperature, &humidity, &pressure, &battery];
                core::array::from_fn::<Reading, 4, _>(|ch| match transfers.get(ch) {
                    Some(t) if on => ok(adc.sample(ch as u8, t)),
                    _ => Reading::Missing,
                })
            })
            .unwrap_or([Reading::Missing; 4]);
        let readings: [Reading; CHANNELS] = [
            ok(cup_a.sample()),
            ok(cup_b.sample()),
            Reading::Value(7.0 + f64::from(swell) / 60.0),
            ok(vane.sample()),
            analog[0],
            analog[1],
            analog[2],
            analog[3],
        ];
        let t = Timestamp::from_millis(T0 + i64::from(i) * 1000);
        let _ = logger.push(t, &readings, &mut on_frame);
    }
    if records == 2 * CHANNELS as u32 {
        println!("sensors: OK, {} records", records);
        process::exit(0)
    }
    println!(
        "sensors: expected {} records, got {}",
        2 * CHANNELS,
        records
    );
    process::exit(1)
}
