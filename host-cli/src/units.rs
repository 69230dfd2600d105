//! Source units of field files, converted to the channel's unit with the
//! `uom` crate's definitions (no hand-written factor table).
//!
//! The factors are the exact definitions of the units: 1 mph = 0.44704 m/s,
//! 1 knot = 1852/3600 m/s, 1 km/h = 1/3.6 m/s, degrees F = (F + 459.67) * 5/9 K,
//! degrees C = K - 273.15, 1 hPa = 1 mbar = 100 Pa, 1 kPa = 1000 Pa. `uom`
//! holds each as the nearest `f64` and converts through the SI base unit, one
//! IEEE `f64` computation, the same on every machine.

use std::fmt;

use uom::si::f64::{Pressure, ThermodynamicTemperature, Velocity};
use uom::si::{pressure, thermodynamic_temperature as temp, velocity};

/// A unit tenmin can convert from or to.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Unit {
    /// Metres per second.
    MetrePerSecond,
    /// Kilometres per hour.
    KilometrePerHour,
    /// Statute miles per hour.
    MilePerHour,
    /// Knots (nautical miles per hour).
    Knot,
    /// Degrees Celsius.
    Celsius,
    /// Degrees Fahrenheit.
    Fahrenheit,
    /// Kelvin.
    Kelvin,
    /// Hectopascal.
    Hectopascal,
    /// Kilopascal.
    Kilopascal,
    /// Millibar.
    Millibar,
    /// Pascal.
    Pascal,
}

/// What a unit measures: conversions stay within one quantity.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Quantity {
    /// Wind speed.
    Speed,
    /// Temperature.
    Temperature,
    /// Pressure.
    Pressure,
}

/// The spellings each unit is read from, first the one printed.
const NAMES: &[(Unit, &[&str])] = &[
    (Unit::MetrePerSecond, &["m/s", "m s-1", "mps"]),
    (Unit::KilometrePerHour, &["km/h", "kmh", "kph"]),
    (Unit::MilePerHour, &["mph", "mi/h"]),
    (Unit::Knot, &["knot", "knots", "kn", "kt"]),
    (Unit::Celsius, &["degC", "°C", "C", "deg C"]),
    (Unit::Fahrenheit, &["degF", "°F", "F", "deg F"]),
    (Unit::Kelvin, &["K"]),
    (Unit::Hectopascal, &["hPa"]),
    (Unit::Kilopascal, &["kPa"]),
    (Unit::Millibar, &["mbar", "mb"]),
    (Unit::Pascal, &["Pa"]),
];

impl Unit {
    /// The unit spelled `s` (see [`Unit::all`]), if known.
    pub fn parse(s: &str) -> Option<Unit> {
        let s = s.trim();
        NAMES
            .iter()
            .find(|(_, names)| names.contains(&s))
            .map(|(u, _)| *u)
    }

    /// Every spelling, for messages.
    pub fn all() -> String {
        NAMES
            .iter()
            .map(|(_, n)| n[0])
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// What it measures.
    pub fn quantity(self) -> Quantity {
        match self {
            Unit::MetrePerSecond | Unit::KilometrePerHour | Unit::MilePerHour | Unit::Knot => {
                Quantity::Speed
            }
            Unit::Celsius | Unit::Fahrenheit | Unit::Kelvin => Quantity::Temperature,
            Unit::Hectopascal | Unit::Kilopascal | Unit::Millibar | Unit::Pascal => {
                Quantity::Pressure
            }
        }
    }
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let name = NAMES
            .iter()
            .find(|(u, _)| u == self)
            .map_or("?", |(_, n)| n[0]);
        f.write_str(name)
    }
}

/// A conversion from a source unit to a channel's unit of the same quantity.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Convert {
    /// The unit of the file.
    pub from: Unit,
    /// The channel's unit.
    pub to: Unit,
}

impl Convert {
    /// A conversion, or `None` when the quantities differ.
    pub fn new(from: Unit, to: Unit) -> Option<Convert> {
        (from.quantity() == to.quantity()).then_some(Convert { from, to })
    }

    /// `v` in `from`, as `to`.
    pub fn apply(self, v: f64) -> f64 {
        if self.from == self.to {
            return v;
        }
        match self.from.quantity() {
            Quantity::Speed => speed_to(self.to, speed_from(self.from, v)),
            Quantity::Temperature => temp_to(self.to, temp_from(self.from, v)),
            Quantity::Pressure => pressure_to(self.to, pressure_from(self.from, v)),
        }
    }
}

fn speed_from(u: Unit, v: f64) -> Velocity {
    match u {
        Unit::KilometrePerHour => Velocity::new::<velocity::kilometer_per_hour>(v),
        Unit::MilePerHour => Velocity::new::<velocity::mile_per_hour>(v),
        Unit::Knot => Velocity::new::<velocity::knot>(v),
        _ => Velocity::new::<velocity::meter_per_second>(v),
    }
}

fn speed_to(u: Unit, v: Velocity) -> f64 {
    match u {
        Unit::KilometrePerHour => v.get::<velocity::kilometer_per_hour>(),
        Unit::MilePerHour => v.get::<velocity::mile_per_hour>(),
        Unit::Knot => v.get::<velocity::knot>(),
        _ => v.get::<velocity::meter_per_second>(),
    }
}

fn temp_from(u: Unit, v: f64) -> ThermodynamicTemperature {
    match u {
        Unit::Fahrenheit => ThermodynamicTemperature::new::<temp::degree_fahrenheit>(v),
        Unit::Kelvin => ThermodynamicTemperature::new::<temp::kelvin>(v),
        _ => ThermodynamicTemperature::new::<temp::degree_celsius>(v),
    }
}

fn temp_to(u: Unit, v: ThermodynamicTemperature) -> f64 {
    match u {
        Unit::Fahrenheit => v.get::<temp::degree_fahrenheit>(),
        Unit::Kelvin => v.get::<temp::kelvin>(),
        _ => v.get::<temp::degree_celsius>(),
    }
}

fn pressure_from(u: Unit, v: f64) -> Pressure {
    match u {
        Unit::Kilopascal => Pressure::new::<pressure::kilopascal>(v),
        Unit::Millibar => Pressure::new::<pressure::millibar>(v),
        Unit::Pascal => Pressure::new::<pressure::pascal>(v),
        _ => Pressure::new::<pressure::hectopascal>(v),
    }
}

fn pressure_to(u: Unit, v: Pressure) -> f64 {
    match u {
        Unit::Kilopascal => v.get::<pressure::kilopascal>(),
        Unit::Millibar => v.get::<pressure::millibar>(),
        Unit::Pascal => v.get::<pressure::pascal>(),
        _ => v.get::<pressure::hectopascal>(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn conv(from: &str, to: &str, v: f64) -> f64 {
        Convert::new(Unit::parse(from).unwrap(), Unit::parse(to).unwrap())
            .unwrap()
            .apply(v)
    }

    #[test]
    fn definitions_of_the_units() {
        // Exact definitions (NIST SP 811, appendix B.8): 1 mph = 0.44704 m/s,
        // 1 knot = 1852 m / 3600 s, 1 km/h = 1/3.6 m/s; within one f64 rounding.
        let close = |a: f64, b: f64| (a - b).abs() <= 4.0 * f64::EPSILON * b.abs().max(1.0);
        assert!(close(conv("mph", "m/s", 10.0), 4.4704));
        assert!(close(conv("knot", "m/s", 10.0), 18520.0 / 3600.0));
        assert!(close(conv("km/h", "m/s", 36.0), 10.0));
        assert!(close(conv("m/s", "mph", 4.4704), 10.0));
        // Temperatures (NIST SP 811, 4.2.1.1): 212 F = 100 C, 32 F = 0 C, 0 C = 273.15 K.
        assert!(close(conv("degF", "degC", 212.0), 100.0));
        assert!(conv("degF", "degC", 32.0).abs() < 1e-12);
        assert!(close(conv("K", "degC", 273.15), 0.0) || conv("K", "degC", 273.15).abs() < 1e-12);
        assert!(close(conv("degC", "K", 0.0), 273.15));
        // Pressure: 1 hPa = 1 mbar = 100 Pa, 1 kPa = 10 hPa.
        assert!(close(conv("kPa", "hPa", 101.325), 1013.25));
        assert!(close(conv("mbar", "hPa", 1013.25), 1013.25));
        assert!(close(conv("Pa", "hPa", 101_325.0), 1013.25));
    }

    #[test]
    fn quantities_do_not_mix() {
        assert!(Convert::new(Unit::MilePerHour, Unit::Celsius).is_none());
        assert!(Unit::parse("furlong/fortnight").is_none());
        assert_eq!(Unit::parse(" mph ").unwrap().to_string(), "mph");
    }
}
