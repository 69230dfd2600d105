//! Screening flags on interval records: a closed, stable list.
//!
//! A flag marks an interval of one channel for review; it never deletes data
//! (flag, do not delete: US EPA-454/R-99-005 sec. 8; NREL/SR-440-22223 ch. 9).
//! The names below are the ones records print, joined with `|`.

use core::fmt;

/// One screening flag.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[repr(u8)]
pub enum Flag {
    /// An implausible interval statistic: the interval's mean, sd (sigma-theta
    /// for a vane: a stuck vane's too-small spread) or gust outside the
    /// plausible limits of the channel's screening (`mean_range`, `sd_range`,
    /// `gust_max`). Printed `implausible`; records of earlier versions print
    /// it `range`, which [`Flag::from_name`] still reads. Samples outside the
    /// channel's valid range are not flagged but counted (`out_of_range`).
    Implausible = 0,
    /// A change between consecutive samples above the channel's step limit.
    Spike = 1,
    /// The sensor did not move (within resolution) over the flat-line span.
    Flatline = 2,
    /// Suspected icing: cold and humid while the vane flat-lines or an anemometer
    /// falls against its redundant partner.
    Icing = 3,
    /// Redundant anemometers at one height differ by more than the limit.
    PairMismatch = 4,
    /// A lower anemometer reads faster than a higher one beyond the tolerance.
    Shear = 5,
    /// Valid / possible below the recovery threshold.
    LowRecovery = 6,
    /// The record does not cover the whole interval.
    Partial = 7,
    /// Samples in the interval were rejected for their timestamps.
    Clock = 8,
    /// Readings in the interval were excluded by decision (an exclusion list).
    Excluded = 9,
    /// The sensor-history entry in force changed inside the interval (a
    /// sensor swapped, re-calibrated or a vane re-aligned): its samples were
    /// converted with two entries. Set by the reader of the history (the
    /// `tenmin` command), not by screening; not a fault of the data.
    SensorChange = 10,
}

impl Flag {
    /// Every flag, in the order records print them.
    pub const ALL: [Flag; 11] = [
        Flag::Implausible,
        Flag::Spike,
        Flag::Flatline,
        Flag::Icing,
        Flag::PairMismatch,
        Flag::Shear,
        Flag::LowRecovery,
        Flag::Partial,
        Flag::Clock,
        Flag::Excluded,
        Flag::SensorChange,
    ];

    /// The name records print.
    pub const fn name(self) -> &'static str {
        match self {
            Flag::Implausible => "implausible",
            Flag::Spike => "spike",
            Flag::Flatline => "flatline",
            Flag::Icing => "icing",
            Flag::PairMismatch => "pair_mismatch",
            Flag::Shear => "shear",
            Flag::LowRecovery => "low_recovery",
            Flag::Partial => "partial",
            Flag::Clock => "clock",
            Flag::Excluded => "excluded",
            Flag::SensorChange => "sensor_change",
        }
    }

    /// The flag of a name, if it is one; `range`, the name earlier versions
    /// printed for [`Flag::Implausible`], is read as it.
    pub fn from_name(name: &str) -> Option<Flag> {
        if name == "range" {
            return Some(Flag::Implausible);
        }
        Flag::ALL.into_iter().find(|f| f.name() == name)
    }
}

/// A set of flags.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Flags(u16);

impl Flags {
    /// No flags.
    pub const EMPTY: Flags = Flags(0);

    /// Adds a flag.
    pub fn insert(&mut self, f: Flag) {
        self.0 |= 1 << f as u8;
    }

    /// Whether the set holds `f`.
    pub const fn contains(self, f: Flag) -> bool {
        self.0 & (1 << f as u8) != 0
    }

    /// Whether the set is empty.
    pub const fn is_empty(self) -> bool {
        self.0 == 0
    }

    /// The set as bits (bit `n` is the flag with discriminant `n`).
    pub const fn bits(self) -> u16 {
        self.0
    }

    /// A set from bits; unknown bits are dropped.
    pub const fn from_bits(bits: u16) -> Flags {
        Flags(bits & ((1 << Flag::ALL.len()) - 1))
    }

    /// The flags in the set, in print order.
    pub fn iter(self) -> impl Iterator<Item = Flag> {
        Flag::ALL.into_iter().filter(move |f| self.contains(*f))
    }
}

/// Prints the names joined with `|` (nothing for an empty set).
impl fmt::Display for Flags {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, flag) in self.iter().enumerate() {
            if i > 0 {
                f.write_str("|")?;
            }
            f.write_str(flag.name())?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_print_in_order() {
        let mut s = Flags::EMPTY;
        for f in Flag::ALL {
            assert_eq!(Flag::from_name(f.name()), Some(f));
        }
        s.insert(Flag::Clock);
        s.insert(Flag::Implausible);
        assert_eq!(std::format!("{s}"), "implausible|clock");
        // The name of earlier versions still reads (records written before).
        assert_eq!(Flag::from_name("range"), Some(Flag::Implausible));
        assert_eq!(Flags::from_bits(s.bits()), s);
        assert_eq!(std::format!("{}", Flags::EMPTY), "");
    }
}
