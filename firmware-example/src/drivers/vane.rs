//! A potentiometer wind vane read through one input of a TI ADS1115 I2C ADC.
//!
//! The ADC runs in continuous-conversion mode on the vane's input, so a sample
//! is one register read: no polling, no timeout, and the only error is the
//! bus's.

use embedded_hal::i2c::I2c;
use qc_core::{ChannelConfig, Reading};

/// The ADS1115's address with its ADDR pin tied to GND.
pub const ADDRESS_GND: u8 = 0x48;

/// Conversion result register (big-endian two's complement).
pub const REG_CONVERSION: u8 = 0x00;
/// Configuration register.
pub const REG_CONFIG: u8 = 0x01;

/// Configuration for continuous conversion of single-ended input `input`
/// (0 to 3) at +/-4.096 V full scale, 128 samples/s, comparator off:
/// MUX = 0b100 + input (bits 14:12), PGA = 0b001 (11:9), MODE = 0 (8),
/// DR = 0b100 (7:5), COMP_QUE = 0b11 (1:0).
pub const fn continuous_config(input: u8) -> u16 {
    ((0b100 | (input as u16 & 0b11)) << 12) | (0b001 << 9) | (0b100 << 5) | 0b11
}

/// A wind vane on one ADS1115 input. Owns the I2C bus.
#[derive(Debug)]
pub struct Vane<I2C> {
    i2c: I2C,
    address: u8,
}

impl<I2C: I2c> Vane<I2C> {
    /// Starts continuous conversion of `input` (0 to 3) of the ADC at `address`.
    pub fn new(mut i2c: I2C, address: u8, input: u8) -> Result<Self, I2C::Error> {
        let [hi, lo] = continuous_config(input).to_be_bytes();
        i2c.write(address, &[REG_CONFIG, hi, lo])?;
        Ok(Vane { i2c, address })
    }

    /// The latest conversion, in ADC counts (32,767 = 4.096 V).
    pub fn read_counts(&mut self) -> Result<i16, I2C::Error> {
        let mut b = [0u8; 2];
        self.i2c
            .write_read(self.address, &[REG_CONVERSION], &mut b)?;
        Ok(i16::from_be_bytes(b))
    }

    /// One sample as a reading for a direction channel configured with
    /// [`Vane::channel_config`]. Counts outside the calibrated span are left
    /// for the channel's range check to count as out of range.
    pub fn sample(&mut self) -> Result<Reading, I2C::Error> {
        Ok(Reading::Counts(i32::from(self.read_counts()?)))
    }

    /// Gives the bus back.
    pub fn release(self) -> I2C {
        self.i2c
    }

    /// A direction channel for this vane: `full_scale` counts are 360 degrees.
    pub fn channel_config(full_scale: i32) -> ChannelConfig {
        ChannelConfig::direction().with_calibration(360.0 / f64::from(full_scale.max(1)), 0.0)
    }
}
