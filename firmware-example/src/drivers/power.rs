//! A sensor supply switched by an output pin (a load switch or a MOSFET on a
//! GPIO), so that sensors read once a second draw nothing in between: the
//! supply goes on, the sensors settle for a fixed time, they are read, the
//! supply goes off. Generic over embedded-hal 1.0's [`OutputPin`] and
//! [`DelayNs`].
//!
//! The settling time is the sensor maker's figure (warm-up of a humidity
//! probe, settling of a divider and ADC input); size the switch for the
//! sensors' inrush current. A pin that fails to switch on means the sensors
//! are not read (the sampling step counts them missing); a pin that fails to
//! switch off keeps the reading and is counted in [`SwitchedSupply::faults`],
//! so that a stuck supply, which drains a battery, shows up.

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::OutputPin;

/// A switched sensor supply: `pin` high is on.
#[derive(Debug)]
pub struct SwitchedSupply<P, D> {
    pin: P,
    delay: D,
    settle_us: u32,
    faults: u32,
}

impl<P: OutputPin, D: DelayNs> SwitchedSupply<P, D> {
    /// A supply on `pin`, switched off now; the sensors need `settle_us`
    /// microseconds after switch-on before a reading is good.
    pub fn new(mut pin: P, delay: D, settle_us: u32) -> Result<Self, P::Error> {
        pin.set_low()?;
        Ok(SwitchedSupply {
            pin,
            delay,
            settle_us,
            faults: 0,
        })
    }

    /// Switches the supply on, waits the settling time, runs `read`, and
    /// switches the supply off again. `Err` (and `read` not run) when the pin
    /// does not switch on; a failure to switch off is counted, not returned.
    pub fn powered<T>(&mut self, read: impl FnOnce() -> T) -> Result<T, P::Error> {
        self.pin.set_high()?;
        self.delay.delay_us(self.settle_us);
        let value = read();
        if self.pin.set_low().is_err() {
            self.faults = self.faults.saturating_add(1);
        }
        Ok(value)
    }

    /// Times the supply could not be switched off after a reading.
    pub const fn faults(&self) -> u32 {
        self.faults
    }

    /// The pin and the delay back.
    pub fn release(self) -> (P, D) {
        (self.pin, self.delay)
    }
}
