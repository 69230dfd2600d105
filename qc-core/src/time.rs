//! Integer UTC time: timestamps, calendar dates and UTC-aligned intervals.
//!
//! Time is never a float here. A [`Timestamp`] counts milliseconds since
//! 1970-01-01T00:00:00Z on the proleptic Gregorian calendar without leap seconds
//! (POSIX time), so every target computes the same interval for the same sample.
//! The supported span is the years 0000 to 9999; [`Timestamp::is_supported`] tells,
//! and the station rejects (and counts) samples outside it, which keeps every
//! interval computation free of overflow.

/// Milliseconds since 1970-01-01T00:00:00Z (UTC, no leap seconds).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Timestamp(i64);

/// A UTC calendar date and time of day, as split from a [`Timestamp`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Civil {
    /// Year, 0 to 9999 for supported timestamps.
    pub year: i32,
    /// Month, 1 to 12.
    pub month: u8,
    /// Day of month, 1 to 31.
    pub day: u8,
    /// Hour, 0 to 23.
    pub hour: u8,
    /// Minute, 0 to 59.
    pub minute: u8,
    /// Second, 0 to 59.
    pub second: u8,
    /// Millisecond, 0 to 999.
    pub milli: u16,
}

const MS_PER_DAY: i64 = 86_400_000;

impl Timestamp {
    /// The earliest supported instant, 0000-01-01T00:00:00Z.
    pub const MIN: Timestamp = Timestamp(-62_167_219_200_000);
    /// The end of the supported span, 10000-01-01T00:00:00Z (exclusive).
    pub const END: Timestamp = Timestamp(253_402_300_800_000);

    /// A timestamp from milliseconds since the epoch.
    pub const fn from_millis(ms: i64) -> Self {
        Timestamp(ms)
    }

    /// A timestamp from whole seconds since the epoch; `None` on overflow.
    pub const fn from_secs(s: i64) -> Option<Self> {
        match s.checked_mul(1000) {
            Some(ms) => Some(Timestamp(ms)),
            None => None,
        }
    }

    /// Milliseconds since the epoch.
    pub const fn millis(self) -> i64 {
        self.0
    }

    /// Whether the timestamp lies in the supported span (years 0000 to 9999).
    pub const fn is_supported(self) -> bool {
        self.0 >= Self::MIN.0 && self.0 < Self::END.0
    }

    /// The timestamp of a UTC calendar date and time; `None` if a field is out of
    /// its range or the instant is outside the supported span.
    pub fn from_civil(c: Civil) -> Option<Self> {
        if !(1..=12).contains(&c.month)
            || c.day == 0
            || c.day > days_in_month(c.year, c.month)
            || c.hour > 23
            || c.minute > 59
            || c.second > 59
            || c.milli > 999
        {
            return None;
        }
        let days = days_from_civil(i64::from(c.year), c.month, c.day);
        let ms = days * MS_PER_DAY
            + i64::from(c.hour) * 3_600_000
            + i64::from(c.minute) * 60_000
            + i64::from(c.second) * 1000
            + i64::from(c.milli);
        let t = Timestamp(ms);
        t.is_supported().then_some(t)
    }

    /// The UTC calendar date and time of this instant.
    ///
    /// Defined for every `i64`; years outside 0 to 9999 come out as computed.
    pub fn civil(self) -> Civil {
        let days = self.0.div_euclid(MS_PER_DAY);
        let ms = self.0.rem_euclid(MS_PER_DAY);
        let (year, month, day) = civil_from_days(days);
        Civil {
            year: year as i32,
            month,
            day,
            hour: (ms / 3_600_000) as u8,
            minute: (ms / 60_000 % 60) as u8,
            second: (ms / 1000 % 60) as u8,
            milli: (ms % 1000) as u16,
        }
    }

    /// The calendar month this instant falls in.
    pub fn month(self) -> Month {
        let c = self.civil();
        Month {
            year: c.year,
            month: c.month,
        }
    }
}

/// A UTC calendar month.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Month {
    /// Year.
    pub year: i32,
    /// Month, 1 to 12.
    pub month: u8,
}

impl Month {
    /// The first instant of the month.
    pub fn start(self) -> Timestamp {
        Timestamp(days_from_civil(i64::from(self.year), self.month, 1) * MS_PER_DAY)
    }

    /// The following month.
    pub const fn next(self) -> Month {
        if self.month >= 12 {
            Month {
                year: self.year + 1,
                month: 1,
            }
        } else {
            Month {
                year: self.year,
                month: self.month + 1,
            }
        }
    }
}

/// Whether `year` is a Gregorian leap year.
pub const fn is_leap(year: i32) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

/// Days in a month of a year (0 for an invalid month).
pub const fn days_in_month(year: i32, month: u8) -> u8 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap(year) => 29,
        2 => 28,
        _ => 0,
    }
}

/// Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant's algorithm,
/// "chrono-Compatible Low-Level Date Algorithms", public domain).
fn days_from_civil(y: i64, m: u8, d: u8) -> i64 {
    let m = i64::from(m);
    let d = i64::from(d);
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The inverse of [`days_from_civil`].
fn civil_from_days(z: i64) -> (i64, u8, u8) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u8;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u8;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn civil(year: i32, month: u8, day: u8, hour: u8, minute: u8, second: u8) -> Civil {
        Civil {
            year,
            month,
            day,
            hour,
            minute,
            second,
            milli: 0,
        }
    }

    #[test]
    fn known_epoch_instants() {
        // POSIX time values, common practice (any `date -u -d ... +%s` gives them).
        let cases = [
            (civil(1970, 1, 1, 0, 0, 0), 0),
            (civil(2000, 3, 1, 0, 0, 0), 951_868_800_000),
            (civil(2024, 2, 29, 23, 59, 59), 1_709_251_199_000),
            (civil(1969, 12, 31, 23, 59, 59), -1000),
            (civil(0, 1, 1, 0, 0, 0), Timestamp::MIN.millis()),
        ];
        for (c, ms) in cases {
            assert_eq!(Timestamp::from_civil(c), Some(Timestamp::from_millis(ms)));
            assert_eq!(Timestamp::from_millis(ms).civil(), c);
        }
    }

    #[test]
    fn rejects_impossible_dates() {
        assert_eq!(Timestamp::from_civil(civil(2023, 2, 29, 0, 0, 0)), None);
        assert_eq!(Timestamp::from_civil(civil(2024, 13, 1, 0, 0, 0)), None);
        assert_eq!(Timestamp::from_civil(civil(2024, 4, 31, 0, 0, 0)), None);
        assert_eq!(Timestamp::from_civil(civil(10000, 1, 1, 0, 0, 0)), None);
        assert_eq!(Timestamp::from_civil(civil(2024, 1, 1, 24, 0, 0)), None);
    }

    #[test]
    fn round_trip_every_day_for_eight_centuries() {
        let mut day = days_from_civil(1600, 1, 1);
        let end = days_from_civil(2400, 1, 1);
        while day < end {
            let (y, m, d) = civil_from_days(day);
            assert_eq!(days_from_civil(y, m, d), day);
            day += 1;
        }
    }

    #[test]
    fn month_starts() {
        let t = Timestamp::from_civil(civil(2024, 2, 17, 13, 5, 0)).unwrap();
        assert_eq!(
            t.month(),
            Month {
                year: 2024,
                month: 2
            }
        );
        assert_eq!(
            t.month().start(),
            Timestamp::from_civil(civil(2024, 2, 1, 0, 0, 0)).unwrap()
        );
    }
}
