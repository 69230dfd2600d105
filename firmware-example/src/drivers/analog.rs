//! Analog sensors (temperature, humidity, pressure, battery) on a Microchip
//! MCP3208 12-bit SPI ADC, each with a linear transfer function.

use embedded_hal::spi::SpiDevice;
use qc_core::Reading;

/// A linear sensor transfer function: `value = offset + slope * counts`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Linear {
    /// Engineering units per ADC count.
    pub slope: f64,
    /// Value at 0 counts.
    pub offset: f64,
}

impl Linear {
    /// A sensor whose output spans `lo` to `hi` (engineering units) over 0 V to
    /// `full_scale_v`, read on a 12-bit ADC with reference `vref` volts.
    pub fn span(lo: f64, hi: f64, full_scale_v: f64, vref: f64) -> Linear {
        let volts_per_count = vref / 4096.0;
        Linear {
            slope: (hi - lo) / full_scale_v * volts_per_count,
            offset: lo,
        }
    }

    /// The value of `counts`.
    pub fn apply(&self, counts: u16) -> f64 {
        self.offset + self.slope * f64::from(counts)
    }
}

/// The three command bytes of a single-ended conversion of `input` (0 to 7):
/// start bit, SGL = 1, D2 in the first byte; D1 D0 at the top of the second.
/// The 12-bit result comes back in the low nibble of the second reply byte and
/// the third.
pub const fn command(input: u8) -> [u8; 3] {
    let ch = input & 0b111;
    [0b0000_0110 | (ch >> 2), (ch & 0b11) << 6, 0]
}

/// An MCP3208 on its own SPI device (chip select handled by the HAL).
#[derive(Debug)]
pub struct AnalogFrontEnd<SPI> {
    spi: SPI,
}

impl<SPI: SpiDevice> AnalogFrontEnd<SPI> {
    /// Takes the SPI device.
    pub const fn new(spi: SPI) -> Self {
        AnalogFrontEnd { spi }
    }

    /// One conversion of `input` (0 to 7), counts 0 to 4095.
    pub fn read_counts(&mut self, input: u8) -> Result<u16, SPI::Error> {
        let mut buf = command(input);
        self.spi.transfer_in_place(&mut buf)?;
        Ok((u16::from(buf[1] & 0x0F) << 8) | u16::from(buf[2]))
    }

    /// One sample of `input` through `transfer`, as a value reading.
    pub fn sample(&mut self, input: u8, transfer: &Linear) -> Result<Reading, SPI::Error> {
        Ok(Reading::Value(transfer.apply(self.read_counts(input)?)))
    }

    /// Gives the device back.
    pub fn release(self) -> SPI {
        self.spi
    }
}
