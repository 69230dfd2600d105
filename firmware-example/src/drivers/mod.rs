//! Sensor drivers, generic over embedded-hal 1.0 traits (and one small trait of
//! ours for pulse counting). Each driver owns its bus or device and returns the
//! bus's own error type; none of them panics or allocates.
//!
//! Board wiring these drivers assume (see the README):
//! - wind vane: a potentiometer vane across a 3.3 V reference, wiper on input
//!   AIN0 of a TI ADS1115 16-bit I2C ADC at address 0x48 ([`vane::Vane`]);
//! - temperature, humidity, pressure and battery: 0-3.3 V analog outputs (battery
//!   through a divider) on inputs 0 to 3 of a Microchip MCP3208 12-bit SPI ADC
//!   ([`analog::AnalogFrontEnd`]);
//! - cup anemometers: reed or opto pulse outputs on timer/counter inputs that
//!   the board exposes through [`cup::PulseCounter`];
//! - the analog sensors' supply: a load switch on a GPIO, on only while they
//!   are read ([`power::SwitchedSupply`], an output pin and a delay).
//!
//! Register maps and command formats are from memory of the parts' datasheets
//! (TI SBAS444 for the ADS1115, Microchip DS21298 for the MCP3208): check them
//! against the datasheet of the part you fit.

pub mod analog;
pub mod cup;
pub mod power;
pub mod vane;
