//! Sample and record times: parsing RFC 3339 and epoch seconds from bytes,
//! printing RFC 3339 UTC.
//!
//! Times are integers from the start ([`qc_core::Timestamp`], milliseconds):
//! no float ever holds a time, so every parse is exact or an error.

use core::fmt;

use qc_core::{Civil, Timestamp};

/// Why a time field could not be read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TimeError {
    /// Empty field.
    Empty,
    /// Not the RFC 3339 shape `YYYY-MM-DDTHH:MM:SS[.fff](Z|+hh:mm)`, nor epoch seconds.
    Shape,
    /// No time zone: RFC 3339 needs `Z` or a numeric offset.
    NoZone,
    /// A date or time field out of its range (month 13, 30 February, hour 24...).
    Field,
    /// Second 60: POSIX time has no leap seconds.
    LeapSecond,
    /// Digits finer than milliseconds that are not zero.
    Precision,
    /// Epoch seconds too large to hold in milliseconds.
    Overflow,
    /// Not UTF-8 text.
    Encoding,
    /// A valid time outside the supported span of sample times
    /// ([`SAMPLES_FROM`] to [`SAMPLES_END`]).
    Unsupported,
}

/// The first supported sample time, 0000-01-01T00:00:00Z.
pub const SAMPLES_FROM: Timestamp = Timestamp::MIN;

/// The end of the supported sample times (exclusive), 9999-12-31T00:00:00Z: the
/// last day of the year 9999 stays free, so that every interval of a supported
/// sample (at most a day long) ends at a time RFC 3339 can write, and every
/// records file tenmin writes reads back.
pub const SAMPLES_END: Timestamp = Timestamp::from_millis(253_402_214_400_000);

impl fmt::Display for TimeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            TimeError::Empty => "the time is empty",
            TimeError::Shape => {
                "expected an RFC 3339 time such as 2025-01-20T00:00:00Z or epoch seconds such as 1737331200"
            }
            TimeError::NoZone => {
                "RFC 3339 time without a zone: add Z (UTC) or a numeric offset such as +01:00"
            }
            TimeError::Field => "a date or time field is out of range (month, day, hour, minute, second or offset)",
            TimeError::LeapSecond => "second 60 (leap second) is not supported: times are POSIX time",
            TimeError::Precision => "time finer than a millisecond: at most 3 non-zero decimals of a second",
            TimeError::Overflow => "epoch seconds out of range",
            TimeError::Encoding => "the time is not valid UTF-8",
            TimeError::Unsupported => "the time is outside the supported span of sample times, 0000-01-01T00:00:00Z to 9999-12-30T23:59:59.999Z (a 13-digit epoch number is milliseconds: tenmin reads epoch seconds)",
        })
    }
}

/// Parses a sample time: RFC 3339 (`Z` or a numeric offset, optional fraction
/// of a second to the millisecond) or epoch seconds (integer, or decimal to the
/// millisecond). Surrounding ASCII spaces are ignored. A time outside
/// [`SAMPLES_FROM`]..[`SAMPLES_END`] is [`TimeError::Unsupported`]: refused
/// when read, never dropped later.
pub fn parse_time(field: &[u8]) -> Result<Timestamp, TimeError> {
    let t = parse_time_any(field)?;
    if t >= SAMPLES_FROM && t < SAMPLES_END {
        Ok(t)
    } else {
        Err(TimeError::Unsupported)
    }
}

/// [`parse_time`] without the span check, for the times of records files
/// (an interval's end may be [`SAMPLES_END`] itself). The result may lie
/// outside the years 0000-9999 (epoch seconds, or an offset at the edge).
pub fn parse_time_any(field: &[u8]) -> Result<Timestamp, TimeError> {
    let b = field.trim_ascii();
    if b.is_empty() {
        return Err(TimeError::Empty);
    }
    let digits = b.strip_prefix(b"-").unwrap_or(b);
    if !digits.is_empty() && digits.iter().all(|c| c.is_ascii_digit() || *c == b'.') {
        return parse_epoch(b);
    }
    if core::str::from_utf8(b).is_err() {
        return Err(TimeError::Encoding);
    }
    parse_rfc3339(b)
}

fn parse_epoch(b: &[u8]) -> Result<Timestamp, TimeError> {
    let (negative, rest) = match b.strip_prefix(b"-") {
        Some(r) => (true, r),
        None => (false, b),
    };
    let (whole, frac) = match rest.iter().position(|c| *c == b'.') {
        Some(p) => (&rest[..p], Some(&rest[p + 1..])),
        None => (rest, None),
    };
    if whole.is_empty() || frac.is_some_and(|f| f.is_empty() || f.contains(&b'.')) {
        return Err(TimeError::Shape);
    }
    let mut secs: i64 = 0;
    for c in whole {
        secs = secs
            .checked_mul(10)
            .and_then(|s| s.checked_add(i64::from(c - b'0')))
            .ok_or(TimeError::Overflow)?;
    }
    let millis = match frac {
        Some(f) => fraction_millis(f)?,
        None => 0,
    };
    let ms = secs
        .checked_mul(1000)
        .and_then(|s| s.checked_add(millis))
        .ok_or(TimeError::Overflow)?;
    Ok(Timestamp::from_millis(if negative { -ms } else { ms }))
}

/// Milliseconds of a decimal fraction of a second (digits only, at least one).
fn fraction_millis(f: &[u8]) -> Result<i64, TimeError> {
    let mut ms = 0i64;
    for (i, c) in f.iter().enumerate() {
        if !c.is_ascii_digit() {
            return Err(TimeError::Shape);
        }
        let d = i64::from(c - b'0');
        if i < 3 {
            ms = ms * 10 + d;
        } else if d != 0 {
            return Err(TimeError::Precision);
        }
    }
    for _ in f.len()..3 {
        ms *= 10;
    }
    Ok(ms)
}

fn num(b: &[u8]) -> Result<u32, TimeError> {
    if b.is_empty() || !b.iter().all(u8::is_ascii_digit) {
        return Err(TimeError::Shape);
    }
    Ok(b.iter().fold(0u32, |n, c| n * 10 + u32::from(c - b'0')))
}

fn parse_rfc3339(b: &[u8]) -> Result<Timestamp, TimeError> {
    // YYYY-MM-DDTHH:MM:SS is 19 bytes; the fraction and the zone follow.
    if b.len() < 19
        || b[4] != b'-'
        || b[7] != b'-'
        || !matches!(b[10], b'T' | b't' | b' ')
        || b[13] != b':'
        || b[16] != b':'
    {
        return Err(TimeError::Shape);
    }
    let year = num(&b[0..4])?;
    let month = num(&b[5..7])?;
    let day = num(&b[8..10])?;
    let hour = num(&b[11..13])?;
    let minute = num(&b[14..16])?;
    let second = num(&b[17..19])?;
    let mut rest = &b[19..];
    let mut milli = 0i64;
    if let Some(r) = rest.strip_prefix(b".") {
        let n = r.iter().take_while(|c| c.is_ascii_digit()).count();
        if n == 0 {
            return Err(TimeError::Shape);
        }
        milli = fraction_millis(&r[..n])?;
        rest = &r[n..];
    }
    let offset_min: i64 = match rest {
        [] => return Err(TimeError::NoZone),
        [b'Z' | b'z'] => 0,
        [sign @ (b'+' | b'-'), h1, h2, b':', m1, m2] => {
            let h = num(&[*h1, *h2])?;
            let m = num(&[*m1, *m2])?;
            if h > 23 || m > 59 {
                return Err(TimeError::Field);
            }
            let v = i64::from(h * 60 + m);
            if *sign == b'-' {
                -v
            } else {
                v
            }
        }
        _ => return Err(TimeError::Shape),
    };
    if second == 60 {
        return Err(TimeError::LeapSecond);
    }
    let field = |v: u32| u8::try_from(v).map_err(|_| TimeError::Field);
    let civil = Civil {
        year: year as i32,
        month: field(month)?,
        day: field(day)?,
        hour: field(hour)?,
        minute: field(minute)?,
        second: field(second)?,
        milli: milli as u16,
    };
    let local = Timestamp::from_civil(civil).ok_or(TimeError::Field)?;
    Ok(Timestamp::from_millis(local.millis() - offset_min * 60_000))
}

/// Prints a timestamp as RFC 3339 UTC with `Z`, with milliseconds only when
/// they are not zero: `2025-01-20T00:10:00Z`, `2025-01-20T00:10:00.250Z`.
#[derive(Clone, Copy, Debug)]
pub struct Rfc3339(pub Timestamp);

impl fmt::Display for Rfc3339 {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let c = self.0.civil();
        write!(
            f,
            "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}",
            c.year, c.month, c.day, c.hour, c.minute, c.second
        )?;
        if c.milli != 0 {
            write!(f, ".{:03}", c.milli)?;
        }
        f.write_str("Z")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ms(s: &str) -> Result<i64, TimeError> {
        parse_time(s.as_bytes()).map(Timestamp::millis)
    }

    #[test]
    fn accepted_forms() {
        // 2025-01-20T00:00:00Z is 1737331200 s since the epoch (POSIX time,
        // common practice: `date -u -d 2025-01-20 +%s`).
        let t0 = 1_737_331_200_000;
        let cases: &[(&str, i64)] = &[
            ("2025-01-20T00:00:00Z", t0),
            ("2025-01-20t00:00:00z", t0),
            ("2025-01-20 00:00:00Z", t0),
            ("2025-01-20T01:00:00+01:00", t0),
            ("2025-01-19T22:30:00-01:30", t0),
            ("2025-01-20T00:00:00.5Z", t0 + 500),
            ("2025-01-20T00:00:00.25Z", t0 + 250),
            ("2025-01-20T00:00:00.125Z", t0 + 125),
            ("2025-01-20T00:00:00.125000Z", t0 + 125),
            ("1737331200", t0),
            ("1737331200.5", t0 + 500),
            ("1737331200.007", t0 + 7),
            ("  1737331200 ", t0),
            ("-1.5", -1500),
            ("0", 0),
        ];
        for (s, want) in cases {
            assert_eq!(ms(s), Ok(*want), "{s}");
        }
    }

    #[test]
    fn refused_forms() {
        let cases: &[(&str, TimeError)] = &[
            ("", TimeError::Empty),
            ("2025-01-20T00:00:00", TimeError::NoZone),
            ("2025-01-20T00:00:00.1234Z", TimeError::Precision),
            ("1737331200.0001", TimeError::Precision),
            ("2025-02-29T00:00:00Z", TimeError::Field),
            ("2025-13-01T00:00:00Z", TimeError::Field),
            ("2025-01-20T24:00:00Z", TimeError::Field),
            ("2016-12-31T23:59:60Z", TimeError::LeapSecond),
            ("2025-01-20T00:00:00+24:00", TimeError::Field),
            ("2025-01-20T00:00", TimeError::Shape),
            ("2025-01-20T00:00:00.Z", TimeError::Shape),
            ("2025-01-20T00:00:00+0100", TimeError::Shape),
            ("20250120T000000Z", TimeError::Shape),
            ("1.2.3", TimeError::Shape),
            ("99999999999999999999", TimeError::Overflow),
            ("yesterday", TimeError::Shape),
        ];
        for (s, want) in cases {
            assert_eq!(ms(s), Err(*want), "{s}");
        }
        assert_eq!(
            parse_time(b"2025-01-20T00:00:00\xff"),
            Err(TimeError::Encoding)
        );
    }

    #[test]
    fn prints_utc_with_millis_only_when_needed() {
        let t = Timestamp::from_millis(1_737_331_200_000);
        assert_eq!(Rfc3339(t).to_string(), "2025-01-20T00:00:00Z");
        let t = Timestamp::from_millis(1_737_331_200_250);
        assert_eq!(Rfc3339(t).to_string(), "2025-01-20T00:00:00.250Z");
        assert_eq!(
            Rfc3339(Timestamp::from_millis(0)).to_string(),
            "1970-01-01T00:00:00Z"
        );
        for s in [
            "2025-01-20T00:00:00Z",
            "2025-01-20T00:00:00.250Z",
            "0001-03-01T12:34:56.001Z",
        ] {
            assert_eq!(Rfc3339(parse_time(s.as_bytes()).unwrap()).to_string(), s);
        }
    }
}
