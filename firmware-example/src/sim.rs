//! Simulated bus devices, so the drivers run where no sensor is wired: under
//! QEMU (the `sensors` binary) and in host tests. They follow the same
//! register map and command format as the drivers' parts (see [`crate::drivers`]).

use core::cell::Cell;

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{self, ErrorKind as PinErrorKind, OutputPin};
use embedded_hal::i2c::{self, ErrorKind as I2cErrorKind, NoAcknowledgeSource};
use embedded_hal::spi::{self, ErrorKind as SpiErrorKind};

use crate::drivers::cup::PulseCounter;
use crate::drivers::vane::{REG_CONFIG, REG_CONVERSION};

/// A simulated ADS1115: a configuration register, a pointer register, and the
/// voltage (as counts) on each of its four inputs, shared with whoever drives
/// the simulation.
#[derive(Clone, Debug)]
pub struct SimAds1115<'a> {
    /// Its I2C address.
    pub address: u8,
    /// The counts each input would convert to.
    pub inputs: &'a [Cell<i16>; 4],
    config: u16,
    pointer: u8,
}

impl<'a> SimAds1115<'a> {
    /// A device at `address` reading `inputs`, in its power-on configuration.
    pub const fn new(address: u8, inputs: &'a [Cell<i16>; 4]) -> Self {
        SimAds1115 {
            address,
            inputs,
            config: 0x8583,
            pointer: 0,
        }
    }

    /// The configuration register.
    pub const fn config(&self) -> u16 {
        self.config
    }

    fn conversion(&self) -> i16 {
        // MUX 0b100..0b111: single-ended inputs 0 to 3; others read 0 here.
        let mux = (self.config >> 12) & 0b111;
        if mux >= 0b100 {
            self.inputs[usize::from(mux & 0b11)].get()
        } else {
            0
        }
    }
}

impl i2c::ErrorType for SimAds1115<'_> {
    type Error = I2cErrorKind;
}

impl i2c::I2c for SimAds1115<'_> {
    fn transaction(
        &mut self,
        address: u8,
        operations: &mut [i2c::Operation<'_>],
    ) -> Result<(), Self::Error> {
        if address != self.address {
            return Err(I2cErrorKind::NoAcknowledge(NoAcknowledgeSource::Address));
        }
        for op in operations {
            match op {
                i2c::Operation::Write(bytes) => match bytes {
                    [p] => self.pointer = *p,
                    [p, hi, lo] if *p == REG_CONFIG => {
                        self.pointer = *p;
                        self.config = u16::from_be_bytes([*hi, *lo]);
                    }
                    _ => return Err(I2cErrorKind::NoAcknowledge(NoAcknowledgeSource::Data)),
                },
                i2c::Operation::Read(buf) => {
                    let v = match self.pointer {
                        REG_CONVERSION => self.conversion().to_be_bytes(),
                        REG_CONFIG => self.config.to_be_bytes(),
                        _ => [0, 0],
                    };
                    for (i, b) in buf.iter_mut().enumerate() {
                        *b = v.get(i).copied().unwrap_or(0xFF);
                    }
                }
            }
        }
        Ok(())
    }
}

/// A simulated MCP3208: eight inputs, as 12-bit counts.
#[derive(Clone, Debug)]
pub struct SimMcp3208<'a> {
    /// The counts each input would convert to (the low 12 bits are used).
    pub inputs: &'a [Cell<u16>; 8],
}

impl SimMcp3208<'_> {
    fn exchange(&self, cmd: [u8; 3]) -> Result<[u8; 3], SpiErrorKind> {
        // Start bit and single-ended bit must be set (anything else is not
        // what the driver sends).
        if cmd[0] & 0b110 != 0b110 {
            return Err(SpiErrorKind::Other);
        }
        let ch = ((cmd[0] & 1) << 2) | (cmd[1] >> 6);
        let v = self.inputs[usize::from(ch)].get() & 0x0FFF;
        Ok([0, (v >> 8) as u8, v as u8])
    }
}

impl spi::ErrorType for SimMcp3208<'_> {
    type Error = SpiErrorKind;
}

impl spi::SpiDevice for SimMcp3208<'_> {
    fn transaction(
        &mut self,
        operations: &mut [spi::Operation<'_, u8>],
    ) -> Result<(), Self::Error> {
        for op in operations {
            match op {
                spi::Operation::TransferInPlace(buf) => {
                    let cmd: [u8; 3] = (&buf[..]).try_into().map_err(|_| SpiErrorKind::Other)?;
                    buf.copy_from_slice(&self.exchange(cmd)?);
                }
                spi::Operation::DelayNs(_) => {}
                _ => return Err(SpiErrorKind::Other),
            }
        }
        Ok(())
    }
}

/// A simulated pulse counter: whoever drives the simulation adds pulses.
#[derive(Clone, Debug)]
pub struct SimPulses<'a> {
    /// Pulses counted since the last [`PulseCounter::take_count`].
    pub pending: &'a Cell<u32>,
}

impl PulseCounter for SimPulses<'_> {
    type Error = core::convert::Infallible;

    fn take_count(&mut self) -> Result<u32, Self::Error> {
        Ok(self.pending.take())
    }
}

/// A simulated output pin: its level, how often it was switched, and whether
/// it fails (a broken load switch), shared with whoever drives the simulation.
#[derive(Clone, Debug)]
pub struct SimPin<'a> {
    /// The level: `true` is high.
    pub high: &'a Cell<bool>,
    /// Level changes asked for.
    pub switches: &'a Cell<u32>,
    /// When set, every change fails with this error.
    pub broken: &'a Cell<bool>,
}

impl digital::ErrorType for SimPin<'_> {
    type Error = PinErrorKind;
}

impl OutputPin for SimPin<'_> {
    fn set_low(&mut self) -> Result<(), PinErrorKind> {
        self.set(false)
    }

    fn set_high(&mut self) -> Result<(), PinErrorKind> {
        self.set(true)
    }
}

impl SimPin<'_> {
    fn set(&mut self, high: bool) -> Result<(), PinErrorKind> {
        self.switches.set(self.switches.get() + 1);
        if self.broken.get() {
            return Err(PinErrorKind::Other);
        }
        self.high.set(high);
        Ok(())
    }
}

/// A simulated delay: adds up the time waited, in nanoseconds.
#[derive(Clone, Debug)]
pub struct SimDelay<'a> {
    /// Nanoseconds waited so far.
    pub waited_ns: &'a Cell<u64>,
}

impl DelayNs for SimDelay<'_> {
    fn delay_ns(&mut self, ns: u32) {
        self.waited_ns.set(self.waited_ns.get() + u64::from(ns));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::drivers::analog::{command, AnalogFrontEnd, Linear};
    use crate::drivers::cup::{CupAnemometer, Differencing};
    use crate::drivers::vane::{continuous_config, Vane, ADDRESS_GND};
    use qc_core::Reading;

    #[test]
    fn vane_configures_continuous_mode_and_reads_its_input() {
        let inputs = [
            Cell::new(11),
            Cell::new(-3),
            Cell::new(26_400),
            Cell::new(0),
        ];
        // Wrong address: the bus error comes back unchanged.
        assert!(matches!(
            Vane::new(SimAds1115::new(0x49, &inputs), ADDRESS_GND, 2),
            Err(I2cErrorKind::NoAcknowledge(NoAcknowledgeSource::Address))
        ));
        let mut vane = Vane::new(SimAds1115::new(ADDRESS_GND, &inputs), ADDRESS_GND, 2).unwrap();
        assert_eq!(vane.sample(), Ok(Reading::Counts(26_400)));
        inputs[2].set(13_200);
        assert_eq!(vane.read_counts(), Ok(13_200));
        let dev = vane.release();
        // Datasheet power-on default 0x8583; ours: AIN2 single-ended, +/-4.096 V,
        // continuous, 128 SPS, comparator off (ADS1115 datasheet, from memory).
        assert_eq!(dev.config(), 0x6283);
        assert_eq!(continuous_config(0), 0x4283);
    }

    #[test]
    fn analog_front_end_reads_each_input() {
        let inputs: [Cell<u16>; 8] = core::array::from_fn(|i| Cell::new(500 * i as u16 + 1));
        let mut adc = AnalogFrontEnd::new(SimMcp3208 { inputs: &inputs });
        for i in 0..8u8 {
            assert_eq!(adc.read_counts(i), Ok(500 * u16::from(i) + 1));
        }
        assert_eq!(command(5), [0b0000_0111, 0b0100_0000, 0]);
        let t = Linear::span(-40.0, 60.0, 3.3, 3.3);
        inputs[0].set(2048);
        assert_eq!(
            adc.sample(0, &t),
            Ok(Reading::Value(-40.0 + 100.0 / 4096.0 * 2048.0))
        );
    }

    #[test]
    fn supply_is_on_and_settled_only_while_the_sensors_are_read() {
        use crate::drivers::power::SwitchedSupply;
        let (high, switches, broken) = (Cell::new(true), Cell::new(0), Cell::new(false));
        let waited = Cell::new(0u64);
        let pin = SimPin {
            high: &high,
            switches: &switches,
            broken: &broken,
        };
        let mut supply = SwitchedSupply::new(pin, SimDelay { waited_ns: &waited }, 50_000).unwrap();
        assert!(!high.get(), "switched off at start");
        // While reading: on, and the settling time has passed.
        let seen = supply.powered(|| (high.get(), waited.get())).unwrap();
        assert_eq!(seen, (true, 50_000_000));
        assert!(!high.get(), "off again after the reading");
        assert_eq!((switches.get(), supply.faults()), (3, 0));
        // A switch that does not switch on: the sensors are not read.
        broken.set(true);
        let mut read = false;
        assert_eq!(supply.powered(|| read = true), Err(PinErrorKind::Other));
        assert!(!read);
        // A switch that fails only when switching off: the reading is kept,
        // the fault counted.
        broken.set(false);
        let value = supply.powered(|| {
            broken.set(true);
            7
        });
        assert_eq!((value, supply.faults()), (Ok(7), 1));
    }

    #[test]
    fn cups_count_pulses_per_period() {
        let pending = Cell::new(0);
        let mut cup = CupAnemometer::new(SimPulses { pending: &pending });
        pending.set(212);
        assert_eq!(cup.sample(), Ok(Reading::Counts(212)));
        assert_eq!(cup.sample(), Ok(Reading::Counts(0)));
        // A 16-bit free-running counter that wraps between two samples.
        let raw = Cell::new(65_530u32);
        let mut counter = CupAnemometer::new(Differencing::new(|| raw.get(), 16));
        raw.set(65_536 + 20);
        assert_eq!(counter.sample(), Ok(Reading::Counts(26)));
        let c = CupAnemometer::<SimPulses>::channel_config(0.098, 0.25, 2000);
        assert_eq!(c.scale.step, 0.049);
    }
}
