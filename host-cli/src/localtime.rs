//! Times of field files as they are written: one or several columns, a format
//! string, epoch seconds or milliseconds, UTC, a fixed offset or a named time
//! zone, stamps at the start or the end of the sample's period.
//!
//! A format is a string of literal bytes and specifiers, applied to the time
//! columns joined by one space:
//!
//! | specifier | reads |
//! |---|---|
//! | `%Y` | year, 1 to 4 digits |
//! | `%y` | year of the century, 2 digits: 69-99 are 1969-1999, 00-68 are 2000-2068 (POSIX) |
//! | `%m` `%d` | month, day: 1 or 2 digits |
//! | `%j` | day of the year, 1 to 3 digits |
//! | `%H` `%M` `%S` | hour (0-24, 24 only as 24:00:00), minute, second: 1 or 2 digits |
//! | `%f` | a fraction of a second, 1 to 9 digits (non-zero past milliseconds is an error) |
//! | `%{hhmm}` | hours and minutes as one number, `HHMM` with leading zeros optional (`5` is 00:05, `2400` is 24:00) |
//! | `%%` | a `%` |
//!
//! A space in the format matches one or more spaces; any other byte matches
//! itself. Numbers read their digits greedily up to their width, so `%H%M`
//! reads `0005` as 00:05 and `%m/%d/%Y %H:%M` reads `1/1/2022 0:05`.
//!
//! Local times become UTC through the zone: a fixed offset, or a named zone of
//! the IANA database bundled with `jiff` (daylight saving resolved there, no
//! hand-written rules). A local time that does not exist (skipped at a change
//! of clock) or occurs twice is refused, naming both candidate instants,
//! unless the station file picks the earlier or the later.
//!
//! The label says what the stamp marks: `start` (the sample's period begins
//! at the stamp, the core's own convention) or `end` (it ends there): an end
//! stamp is moved back by one sample period, so that a 10-minute mean stamped
//! 00:10 belongs to the interval 00:00-00:10. `24:00` is accepted only for
//! end labels.

use std::fmt;

use jiff::tz::{AmbiguousOffset, TimeZone};
use qc_core::{Civil, Timestamp};

use crate::timefmt::{self, Rfc3339, TimeError, SAMPLES_END, SAMPLES_FROM};

/// How the time columns are written.
#[derive(Clone, Debug)]
pub enum Form {
    /// One column: RFC 3339 or epoch seconds (tenmin's own samples).
    Auto,
    /// Epoch seconds (integer or decimal).
    EpochSeconds,
    /// Epoch milliseconds (integer).
    EpochMillis,
    /// A format string (see the module docs).
    Format(Format),
}

/// The zone local times are in.
#[derive(Clone, Debug)]
pub enum Zone {
    /// UTC.
    Utc,
    /// A fixed offset from UTC, in minutes (east positive).
    Fixed(i32),
    /// A named zone of the IANA database.
    Named(String, TimeZone),
}

/// What a stamp marks.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Label {
    /// The start of the sample's period.
    Start,
    /// The end of the sample's period.
    End,
}

/// What to do with a local time that does not exist or occurs twice.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Pick {
    /// Refuse the row, naming both candidates.
    Refuse,
    /// The earlier candidate instant.
    Earlier,
    /// The later candidate instant.
    Later,
}

/// Everything about a file's time.
#[derive(Clone, Debug)]
pub struct TimeSpec {
    /// How it is written.
    pub form: Form,
    /// The zone of local times (not used by RFC 3339 with its own offset, nor epochs).
    pub zone: Zone,
    /// What the stamp marks.
    pub label: Label,
    /// The sample period in milliseconds (end labels move back by it).
    pub period_ms: i64,
    /// For local times that do not exist.
    pub skipped: Pick,
    /// For local times that occur twice.
    pub repeated: Pick,
}

/// Why a time could not be read.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum TimeProblem {
    /// As in tenmin's own samples.
    Parse(TimeError),
    /// The text does not match the format at byte `at` of the joined columns.
    Format { at: usize },
    /// A field is out of its range (month 13, day 366 of a common year ...).
    Field,
    /// `24:00` with a start label, or past 24:00:00.
    Hour24,
    /// A local time that does not exist in the zone: the two candidates.
    Skipped(Timestamp, Timestamp),
    /// A local time that occurs twice in the zone: the two candidates.
    Repeated(Timestamp, Timestamp),
}

impl fmt::Display for TimeProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            TimeProblem::Parse(e) => write!(f, "{e}"),
            TimeProblem::Format { at } => write!(
                f,
                "does not match the time format of the station file (from byte {} of the time columns joined by a space)",
                at + 1
            ),
            TimeProblem::Field => f.write_str("a date or time field is out of range"),
            TimeProblem::Hour24 => f.write_str(
                "24:00 is accepted only as 24:00:00 with `label = \"end\"` (the end of a day)",
            ),
            TimeProblem::Skipped(a, b) => write!(
                f,
                "this local time does not exist in the zone (skipped at a change of clock): it could be {} or {}; set `skipped = \"earlier\"` or `\"later\"` in [input.time] to pick one",
                Rfc3339(*a),
                Rfc3339(*b)
            ),
            TimeProblem::Repeated(a, b) => write!(
                f,
                "this local time occurs twice in the zone (at a change of clock): it is {} or {}; set `repeated = \"earlier\"` or `\"later\"` in [input.time] to pick one",
                Rfc3339(*a),
                Rfc3339(*b)
            ),
        }
    }
}

impl From<TimeError> for TimeProblem {
    fn from(e: TimeError) -> Self {
        TimeProblem::Parse(e)
    }
}

/// One step of a format.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Tok {
    /// A byte that must be there.
    Lit(u8),
    /// One or more spaces.
    Space,
    Year,
    Year2,
    Month,
    Day,
    DayOfYear,
    Hour,
    Minute,
    Second,
    Fraction,
    HourMinute,
}

/// A compiled format string.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Format {
    toks: Vec<Tok>,
}

impl Format {
    /// Compiles `s`; an unknown specifier or a format that cannot give a date
    /// is an error saying why.
    pub fn new(s: &str) -> Result<Format, String> {
        let b = s.as_bytes();
        let mut toks = Vec::new();
        let mut i = 0;
        while i < b.len() {
            let c = b[i];
            if c == b'%' {
                let rest = &s[i + 1..];
                let (tok, len) = if let Some(r) = rest.strip_prefix("{hhmm}") {
                    let _ = r;
                    (Some(Tok::HourMinute), 7)
                } else {
                    let t = match rest.as_bytes().first() {
                        Some(b'Y') => Some(Tok::Year),
                        Some(b'y') => Some(Tok::Year2),
                        Some(b'm') => Some(Tok::Month),
                        Some(b'd') => Some(Tok::Day),
                        Some(b'j') => Some(Tok::DayOfYear),
                        Some(b'H') => Some(Tok::Hour),
                        Some(b'M') => Some(Tok::Minute),
                        Some(b'S') => Some(Tok::Second),
                        Some(b'f') => Some(Tok::Fraction),
                        Some(b'%') => Some(Tok::Lit(b'%')),
                        _ => None,
                    };
                    (t, 2)
                };
                let Some(tok) = tok else {
                    return Err(format!(
                        "unknown specifier at byte {} of {s:?}: use %Y %y %m %d %j %H %M %S %f %{{hhmm}} %%",
                        i + 1
                    ));
                };
                toks.push(tok);
                i += len;
            } else if c == b' ' {
                if toks.last() != Some(&Tok::Space) {
                    toks.push(Tok::Space);
                }
                i += 1;
            } else {
                toks.push(Tok::Lit(c));
                i += 1;
            }
        }
        let has = |t: Tok| toks.contains(&t);
        let year = has(Tok::Year) || has(Tok::Year2);
        let date = has(Tok::DayOfYear) || (has(Tok::Month) && has(Tok::Day));
        if !(year && date) {
            return Err(format!(
                "{s:?} gives no full date: it needs a year (%Y or %y) and either %j or %m and %d"
            ));
        }
        Ok(Format { toks })
    }

    /// Whether a row's time can come from the previous row's by its minute
    /// and second alone ([`Memo`]): the format has both, and no fraction.
    fn memo_ok(&self) -> bool {
        self.toks.contains(&Tok::Minute)
            && self.toks.contains(&Tok::Second)
            && !self.toks.contains(&Tok::Fraction)
    }

    /// Reads `text` into local civil fields (hour may be 24), with the byte
    /// spans of the minute and the second.
    fn read_spans(&self, text: &[u8]) -> Result<(Local, [(usize, usize); 2]), TimeProblem> {
        let mut spans = [(0usize, 0usize); 2];
        let mut l = Local::default();
        let mut p = 0usize;
        let bad = |p: usize| TimeProblem::Format { at: p };
        for tok in &self.toks {
            match *tok {
                Tok::Lit(c) => {
                    if text.get(p) != Some(&c) {
                        return Err(bad(p));
                    }
                    p += 1;
                }
                Tok::Space => {
                    let n = text[p.min(text.len())..]
                        .iter()
                        .take_while(|&&c| c == b' ')
                        .count();
                    if n == 0 {
                        return Err(bad(p));
                    }
                    p += n;
                }
                Tok::Fraction => {
                    let n = digits(text, p, 9);
                    if n == 0 {
                        return Err(bad(p));
                    }
                    let f = &text[p..p + n];
                    let mut ms = 0u32;
                    for (k, &c) in f.iter().enumerate() {
                        let d = u32::from(c - b'0');
                        if k < 3 {
                            ms = ms * 10 + d;
                        } else if d != 0 {
                            return Err(TimeProblem::Parse(TimeError::Precision));
                        }
                    }
                    for _ in n..3 {
                        ms *= 10;
                    }
                    l.milli = ms;
                    p += n;
                }
                _ => {
                    let width = match *tok {
                        Tok::Year | Tok::HourMinute => 4,
                        Tok::DayOfYear => 3,
                        _ => 2,
                    };
                    let n = digits(text, p, width);
                    if n == 0 {
                        return Err(bad(p));
                    }
                    let v = text[p..p + n]
                        .iter()
                        .fold(0u32, |v, c| v * 10 + u32::from(c - b'0'));
                    match *tok {
                        Tok::Minute => spans[0] = (p, n),
                        Tok::Second => spans[1] = (p, n),
                        _ => {}
                    }
                    p += n;
                    match *tok {
                        Tok::Year => l.year = Some(v as i32),
                        Tok::Year2 => l.year = Some(if v >= 69 { 1900 } else { 2000 } + v as i32),
                        Tok::Month => l.month = Some(v),
                        Tok::Day => l.day = Some(v),
                        Tok::DayOfYear => l.yday = Some(v),
                        Tok::Hour => l.hour = v,
                        Tok::Minute => l.minute = v,
                        Tok::Second => l.second = v,
                        Tok::HourMinute => {
                            l.hour = v / 100;
                            l.minute = v % 100;
                        }
                        _ => {}
                    }
                }
            }
        }
        if p != text.len() {
            return Err(bad(p));
        }
        Ok((l, spans))
    }
}

/// The last time read with a format, so that the next row, whose text
/// differs only in its minute and second digits (consecutive samples within
/// an hour), is read without the format and the zone: the same result, as
/// local civil time is affine in minutes and seconds within an hour, and the
/// zone's offset is cached for the span it holds ([`ZoneCache`]).
#[derive(Clone, Debug, Default)]
pub struct Memo {
    text: Vec<u8>,
    /// Byte spans of the minute and the second in `text`.
    spans: [(usize, usize); 2],
    /// Local milliseconds (read as if UTC) of minute 0, second 0.
    hour_ms: i64,
    valid: bool,
    /// For texts of 8 to 32 bytes: the memo's text as four 8-byte words at
    /// [`window`] offsets, and per word a mask of the bytes that must be
    /// equal (all but the minute's and the second's): one compare a word
    /// instead of one a byte. Unused (`words == 0`) for other lengths.
    words: usize,
    word: [u64; 4],
    mask: [u64; 4],
}

/// The offset of word `k` of a text of `len` bytes (8 to 32): words at 0, 8
/// and 16, and the last 8 bytes, overlapping when the text is shorter.
#[inline]
fn window(k: usize, len: usize) -> usize {
    (8 * k).min(len - 8)
}

/// The 8 bytes of `text` at `at`, little-endian (0 where `text` is short).
#[inline]
fn word_at(text: &[u8], at: usize) -> u64 {
    text.get(at..at + 8)
        .and_then(|w| w.try_into().ok())
        .map_or(0, u64::from_le_bytes)
}

impl Memo {
    /// Keeps `text` with the spans of its minute and second, and the local
    /// milliseconds of its minute 0, second 0.
    fn set(&mut self, text: &[u8], spans: [(usize, usize); 2], hour_ms: i64) {
        self.text.clear();
        self.text.extend_from_slice(text);
        self.spans = spans;
        self.hour_ms = hour_ms;
        self.valid = true;
        self.words = 0;
        let len = text.len();
        if (8..=32).contains(&len) {
            let [(m0, mn), (s0, sn)] = spans;
            for k in 0..4 {
                let at = window(k, len);
                let mut mask = 0u64;
                for b in 0..8 {
                    let i = at + b;
                    if i.wrapping_sub(m0) >= mn && i.wrapping_sub(s0) >= sn {
                        mask |= 0xff << (8 * b);
                    }
                }
                self.word[k] = word_at(text, at);
                self.mask[k] = mask;
            }
            self.words = 4;
        }
    }

    /// The local milliseconds of `text` if it differs from the memo's only in
    /// the minute and second digits, each still below 60.
    #[inline]
    fn local_ms(&self, text: &[u8]) -> Option<i64> {
        if !self.valid || text.len() != self.text.len() {
            return None;
        }
        let [(m0, mn), (s0, sn)] = self.spans;
        if self.words == 4 {
            let len = text.len();
            for k in 0..4 {
                if (word_at(text, window(k, len)) ^ self.word[k]) & self.mask[k] != 0 {
                    return None;
                }
            }
        } else {
            // Every byte equal but the minute's and the second's (short texts: a
            // plain loop, no call).
            for (k, (a, b)) in text.iter().zip(&self.text).enumerate() {
                if a != b && k.wrapping_sub(m0) >= mn && k.wrapping_sub(s0) >= sn {
                    return None;
                }
            }
        }
        let num = |(at, n): (usize, usize)| -> Option<i64> {
            if n == 2 {
                // The usual two digits, read directly (the same value as the
                // loop below).
                let [a, b] = *text.get(at..)?.first_chunk::<2>()?;
                let (a, b) = (a.wrapping_sub(b'0'), b.wrapping_sub(b'0'));
                return (a < 10 && b < 10).then(|| i64::from(a * 10 + b));
            }
            let d = text.get(at..at + n)?;
            d.iter()
                .all(u8::is_ascii_digit)
                .then(|| d.iter().fold(0i64, |v, c| v * 10 + i64::from(c - b'0')))
        };
        let (m, s) = (num((m0, mn))?, num((s0, sn))?);
        (m < 60 && s < 60).then_some(self.hour_ms + m * 60_000 + s * 1000)
    }
}

/// The memo's hour as [`TimeSpec::quick`] folds it: a time field of `len`
/// bytes (8 to 31) whose bytes but the two-digit minute and second equal the
/// memo's (the first 32 bytes compared as two 128-bit words under masks),
/// read as the sample time `base` + the minute's and second's milliseconds
/// when those lie in `lo..hi` (the zone's span and the supported span). The
/// same results as [`TimeSpec::parse_memo`] on the field; `len` 0: reads
/// nothing.
#[derive(Clone, Copy, Debug, Default)]
pub struct Quick {
    len: usize,
    text: [u128; 2],
    mask: [u128; 2],
    minute: usize,
    second: usize,
    base: i64,
    lo: i64,
    hi: i64,
}

impl Quick {
    /// The sample time of the field at the start of `b` and its length, if
    /// `b` holds 32 bytes, the field is `len` bytes long (ended by `delim`,
    /// `\n` or `\r`) and reads in the memo's hour as above; `None` otherwise.
    /// Out of line: inlined, its setup was repeated for every field of a
    /// row's loop.
    #[inline(never)]
    pub fn read(&self, b: &[u8], delim: u8) -> Option<(Timestamp, usize)> {
        let n = self.len;
        let w = b.first_chunk::<32>()?;
        if n == 0 {
            return None;
        }
        let end = w[n & 31];
        if !(end == delim || end == b'\n' || end == b'\r') {
            return None;
        }
        let (lo, hi) = w.split_at(16);
        let lo = u128::from_le_bytes(lo.try_into().ok()?);
        let hi = u128::from_le_bytes(hi.try_into().ok()?);
        if ((lo ^ self.text[0]) & self.mask[0]) | ((hi ^ self.text[1]) & self.mask[1]) != 0 {
            return None;
        }
        let (m, s) = (self.minute & 31, self.second & 31);
        let d = |i: usize| w[i & 31].wrapping_sub(b'0');
        let (m1, m2, s1, s2) = (d(m), d(m + 1), d(s), d(s + 1));
        if !(m1 < 6 && m2 < 10 && s1 < 6 && s2 < 10) {
            return None;
        }
        let d = i64::from(m1 * 10 + m2) * 60_000 + i64::from(s1 * 10 + s2) * 1000;
        (d >= self.lo && d < self.hi).then(|| (Timestamp::from_millis(self.base + d), n))
    }
}

/// A named zone's offset over the span of UTC instants it holds, so that
/// only a row outside the span asks the zone database.
#[derive(Clone, Copy, Debug, Default)]
pub struct ZoneCache {
    /// Local milliseconds (read as if UTC) from which, and before which, every
    /// local time has exactly this offset.
    from: i64,
    to: i64,
    offset_ms: i64,
}

/// The digits at `text[p..]`, at most `width`.
fn digits(text: &[u8], p: usize, width: usize) -> usize {
    text.get(p..)
        .unwrap_or_default()
        .iter()
        .take(width)
        .take_while(|c| c.is_ascii_digit())
        .count()
}

/// Civil fields as read.
#[derive(Clone, Copy, Debug, Default)]
struct Local {
    year: Option<i32>,
    month: Option<u32>,
    day: Option<u32>,
    yday: Option<u32>,
    hour: u32,
    minute: u32,
    second: u32,
    milli: u32,
}

impl Local {
    /// Milliseconds of this local time as if it were UTC; `Hour24` for 24:00
    /// (allowed only with `end_ok`).
    fn as_utc_ms(&self, end_ok: bool) -> Result<i64, TimeProblem> {
        let year = self.year.ok_or(TimeProblem::Field)?;
        if !(0..=9999).contains(&year) {
            return Err(TimeProblem::Parse(TimeError::Unsupported));
        }
        let (month, day) = match (self.month, self.day, self.yday) {
            (Some(m), Some(d), _) => (m, d),
            (_, _, Some(j)) => month_day(year, j).ok_or(TimeProblem::Field)?,
            _ => return Err(TimeProblem::Field),
        };
        let mut extra_day = 0i64;
        let mut hour = self.hour;
        if hour == 24 {
            if !(end_ok && self.minute == 0 && self.second == 0 && self.milli == 0) {
                return Err(TimeProblem::Hour24);
            }
            hour = 0;
            extra_day = 86_400_000;
        }
        if self.minute > 59 || self.second > 59 {
            return Err(if self.second == 60 {
                TimeProblem::Parse(TimeError::LeapSecond)
            } else {
                TimeProblem::Field
            });
        }
        let field = |v: u32| u8::try_from(v).map_err(|_| TimeProblem::Field);
        let civil = Civil {
            year,
            month: field(month)?,
            day: field(day)?,
            hour: field(hour)?,
            minute: field(self.minute)?,
            second: field(self.second)?,
            milli: self.milli as u16,
        };
        let t = Timestamp::from_civil(civil).ok_or(TimeProblem::Field)?;
        Ok(t.millis() + extra_day)
    }
}

/// Month and day of day-of-year `j` (1-based) of `year`.
fn month_day(year: i32, j: u32) -> Option<(u32, u32)> {
    let mut left = j;
    if left == 0 {
        return None;
    }
    for m in 1..=12u8 {
        let n = u32::from(qc_core::time::days_in_month(year, m));
        if left <= n {
            return Some((u32::from(m), left));
        }
        left -= n;
    }
    None
}

impl TimeSpec {
    /// The sample time of `text` (the time columns joined by one space): in
    /// UTC, moved to the start of its period, inside the supported span.
    pub fn parse(&self, text: &[u8]) -> Result<Timestamp, TimeProblem> {
        self.parse_with(text, &mut Memo::default(), &mut ZoneCache::default())
    }

    /// [`TimeSpec::parse_with`] when it needs neither the format nor the zone
    /// database: a formatted time that differs from the memo's only in its
    /// minute and second, in the zone span cached (or a zone without
    /// rules); `None` for anything else, which `parse_with` then reads (the
    /// same result: this is its first step, inlined into a row's one pass).
    #[inline]
    pub fn parse_memo(&self, text: &[u8], memo: &Memo, zc: &ZoneCache) -> Option<Timestamp> {
        let Form::Format(_) = &self.form else {
            return None;
        };
        let ms = memo.local_ms(text)?;
        let utc = match &self.zone {
            Zone::Named(..) if ms >= zc.from && ms < zc.to => ms - zc.offset_ms,
            Zone::Utc => ms,
            Zone::Fixed(min) => ms - i64::from(*min) * 60_000,
            Zone::Named(..) => return None,
        };
        let start = match self.label {
            Label::Start => utc,
            Label::End => utc - self.period_ms,
        };
        let t = Timestamp::from_millis(start);
        (t >= SAMPLES_FROM && t < SAMPLES_END).then_some(t)
    }

    /// [`TimeSpec::parse_memo`] of the hour that `memo` and `zc` hold, folded
    /// into one compare of the fixed bytes, one read of the minute and second
    /// and one window ([`Quick`]), for a field ended by `delim`, `\n`, `\r`
    /// or the end of the text; an empty one (which reads nothing) when the
    /// memo cannot be read so.
    #[inline(never)]
    pub fn quick(&self, memo: &Memo, zc: &ZoneCache, delim: u8) -> Quick {
        let none = Quick::default();
        let Form::Format(_) = &self.form else {
            return none;
        };
        let [(m0, 2), (s0, 2)] = memo.spans else {
            return none;
        };
        let len = memo.text.len();
        if !memo.valid
            || memo.words != 4
            || memo
                .text
                .iter()
                .any(|&c| c == delim || c == b'\n' || c == b'\r')
        {
            return none;
        }
        // Local milliseconds `ms` = `hour_ms` + `d` with `d` the minute's and
        // second's milliseconds (0 to 3,599,000): the zone's span bounds `ms`,
        // the supported span the sample time `base` + `d`.
        const WIDE: i64 = i64::MAX / 4;
        let (offset_ms, from, to) = match &self.zone {
            Zone::Named(..) => (zc.offset_ms, zc.from, zc.to),
            Zone::Utc => (0, -WIDE, WIDE),
            Zone::Fixed(min) => (i64::from(*min) * 60_000, -WIDE, WIDE),
        };
        let period = match self.label {
            Label::Start => 0,
            Label::End => self.period_ms,
        };
        let hour_ms = memo.hour_ms;
        let base = hour_ms - offset_ms - period;
        let lo = 0
            .max(from.saturating_sub(hour_ms))
            .max(SAMPLES_FROM.millis().saturating_sub(base));
        let hi = 3_600_000
            .min(to.saturating_sub(hour_ms))
            .min(SAMPLES_END.millis().saturating_sub(base));
        if lo >= hi {
            return none;
        }
        if len >= 32 || m0 + 2 > len || s0 + 2 > len {
            return none;
        }
        let (mut text, mut mask) = ([0u8; 32], [0u8; 32]);
        for (i, &c) in memo.text.iter().enumerate() {
            text[i] = c;
            if i.wrapping_sub(m0) >= 2 && i.wrapping_sub(s0) >= 2 {
                mask[i] = 0xff;
            }
        }
        let word = |a: &[u8; 32], k: usize| {
            let mut h = [0u8; 16];
            h.copy_from_slice(&a[16 * k..16 * k + 16]);
            u128::from_le_bytes(h)
        };
        Quick {
            len,
            text: [word(&text, 0), word(&text, 1)],
            mask: [word(&mask, 0), word(&mask, 1)],
            minute: m0,
            second: s0,
            base,
            lo,
            hi,
        }
    }

    /// [`TimeSpec::parse`] with the last row's time and the zone's span kept
    /// (a reader keeps one of each per file): the same results, faster.
    pub fn parse_with(
        &self,
        text: &[u8],
        memo: &mut Memo,
        zc: &mut ZoneCache,
    ) -> Result<Timestamp, TimeProblem> {
        let utc = match &self.form {
            Form::Auto => timefmt::parse_time_any(text)?.millis(),
            Form::EpochSeconds => {
                let t = text.trim_ascii();
                if t.is_empty() {
                    return Err(TimeError::Empty.into());
                }
                if !t
                    .iter()
                    .all(|c| c.is_ascii_digit() || *c == b'.' || *c == b'-')
                {
                    return Err(TimeError::Shape.into());
                }
                timefmt::parse_time_any(t)?.millis()
            }
            Form::EpochMillis => {
                let t = text.trim_ascii();
                let (neg, digits) = match t.strip_prefix(b"-") {
                    Some(d) => (true, d),
                    None => (false, t),
                };
                if digits.is_empty() || !digits.iter().all(u8::is_ascii_digit) || digits.len() > 18
                {
                    return Err(TimeError::Shape.into());
                }
                let v = digits
                    .iter()
                    .fold(0i64, |v, c| v * 10 + i64::from(c - b'0'));
                if neg {
                    -v
                } else {
                    v
                }
            }
            Form::Format(f) => {
                let text = match (text.first(), text.last()) {
                    (Some(a), Some(b)) if a.is_ascii_whitespace() || b.is_ascii_whitespace() => {
                        text.trim_ascii()
                    }
                    _ => text,
                };
                let ms = match memo.local_ms(text) {
                    Some(ms) => ms,
                    None => {
                        let (local, spans) = f.read_spans(text)?;
                        let ms = local.as_utc_ms(self.label == Label::End)?;
                        memo.valid = false;
                        if f.memo_ok() && local.hour < 24 {
                            let hour_ms = ms
                                - i64::from(local.minute) * 60_000
                                - i64::from(local.second) * 1000;
                            memo.set(text, spans, hour_ms);
                        }
                        ms
                    }
                };
                match &self.zone {
                    Zone::Named(..) if ms >= zc.from && ms < zc.to => ms - zc.offset_ms,
                    _ => self.to_utc(ms, zc)?,
                }
            }
        };
        let start = match self.label {
            Label::Start => utc,
            Label::End => utc - self.period_ms,
        };
        let t = Timestamp::from_millis(start);
        if t >= SAMPLES_FROM && t < SAMPLES_END {
            Ok(t)
        } else {
            Err(TimeError::Unsupported.into())
        }
    }

    /// A local time (as milliseconds read as if UTC) in UTC; for a named
    /// zone, `zc` learns the span of local times around it with the same
    /// offset.
    fn to_utc(&self, local_ms: i64, zc: &mut ZoneCache) -> Result<i64, TimeProblem> {
        match &self.zone {
            Zone::Utc => Ok(local_ms),
            Zone::Fixed(min) => Ok(local_ms - i64::from(*min) * 60_000),
            Zone::Named(_, tz) => {
                let dt = civil_of(local_ms).ok_or(TimeProblem::Field)?;
                let amb = tz.to_ambiguous_timestamp(dt);
                let at = |off: jiff::tz::Offset| local_ms - i64::from(off.seconds()) * 1000;
                match amb.offset() {
                    AmbiguousOffset::Unambiguous { offset } => {
                        let utc = at(offset);
                        *zc = zone_span(tz, utc, offset).unwrap_or_default();
                        Ok(utc)
                    }
                    AmbiguousOffset::Gap { before, after } => {
                        // Read with the offset before the change, the instant is
                        // after it; with the one after, before it.
                        let (a, b) = order(at(before), at(after));
                        pick(self.skipped, a, b, TimeProblem::Skipped)
                    }
                    AmbiguousOffset::Fold { before, after } => {
                        let (a, b) = order(at(before), at(after));
                        pick(self.repeated, a, b, TimeProblem::Repeated)
                    }
                }
            }
        }
    }
}

/// The local times (as milliseconds read as if UTC) around the instant
/// `utc` that all have `offset` with no other reading: from a day after the
/// zone's last change before `utc` to a day before its next change (no change
/// of clock moves local time by a day, so nothing near a change is cached).
fn zone_span(tz: &TimeZone, utc: i64, offset: jiff::tz::Offset) -> Option<ZoneCache> {
    const DAY: i64 = 86_400_000;
    let ts = jiff::Timestamp::from_millisecond(utc).ok()?;
    // A change at `utc` itself counts as before it.
    let after = jiff::Timestamp::from_millisecond(utc + 1).ok()?;
    let prev = tz
        .preceding(after)
        .next()
        .map_or(i64::MIN / 4, |t| t.timestamp().as_millisecond());
    let next = tz
        .following(ts)
        .next()
        .map_or(i64::MAX / 4, |t| t.timestamp().as_millisecond());
    let offset_ms = i64::from(offset.seconds()) * 1000;
    let (from, to) = (prev + offset_ms + DAY, next + offset_ms - DAY);
    let local = utc + offset_ms;
    (from <= local && local < to).then_some(ZoneCache {
        from,
        to,
        offset_ms,
    })
}

fn order(a: i64, b: i64) -> (i64, i64) {
    (a.min(b), a.max(b))
}

fn pick(
    p: Pick,
    a: i64,
    b: i64,
    err: fn(Timestamp, Timestamp) -> TimeProblem,
) -> Result<i64, TimeProblem> {
    match p {
        Pick::Refuse => Err(err(Timestamp::from_millis(a), Timestamp::from_millis(b))),
        Pick::Earlier => Ok(a),
        Pick::Later => Ok(b),
    }
}

/// `jiff`'s civil date-time of milliseconds read as UTC.
fn civil_of(ms: i64) -> Option<jiff::civil::DateTime> {
    let c = Timestamp::from_millis(ms).civil();
    jiff::civil::DateTime::new(
        i16::try_from(c.year).ok()?,
        i8::try_from(c.month).ok()?,
        i8::try_from(c.day).ok()?,
        i8::try_from(c.hour).ok()?,
        i8::try_from(c.minute).ok()?,
        i8::try_from(c.second).ok()?,
        i32::from(c.milli) * 1_000_000,
    )
    .ok()
}

/// The zone named `s`: `UTC`, a fixed offset `+01:00` / `-07:00`, or an IANA
/// name such as `Europe/Berlin`.
pub fn zone(s: &str) -> Result<Zone, String> {
    let t = s.trim();
    if t.eq_ignore_ascii_case("utc") || t == "Z" {
        return Ok(Zone::Utc);
    }
    if let Some(rest) = t.strip_prefix(['+', '-']) {
        let b = rest.as_bytes();
        let ok = b.len() == 5
            && b[2] == b':'
            && b.iter()
                .enumerate()
                .all(|(i, c)| i == 2 || c.is_ascii_digit());
        if !ok {
            return Err(format!("{s:?}: a fixed offset is written +HH:MM or -HH:MM"));
        }
        let h = i32::from(b[0] - b'0') * 10 + i32::from(b[1] - b'0');
        let m = i32::from(b[3] - b'0') * 10 + i32::from(b[4] - b'0');
        if h > 23 || m > 59 {
            return Err(format!("{s:?}: offset out of range"));
        }
        let v = h * 60 + m;
        return Ok(Zone::Fixed(if t.starts_with('-') { -v } else { v }));
    }
    TimeZone::get(t).map(|tz| Zone::Named(t.to_string(), tz)).map_err(|_| {
        format!("{s:?} is not UTC, a fixed offset (+01:00) or a time zone of the IANA database (such as Europe/Berlin)")
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec(form: Form, zone: Zone, label: Label, period_ms: i64) -> TimeSpec {
        TimeSpec {
            form,
            zone,
            label,
            period_ms,
            skipped: Pick::Refuse,
            repeated: Pick::Refuse,
        }
    }

    fn fmt(s: &str) -> Form {
        Form::Format(Format::new(s).unwrap())
    }

    fn iso(t: Timestamp) -> String {
        Rfc3339(t).to_string()
    }

    #[test]
    fn formats_read_field_files() {
        let utc = |f: &str, text: &str| {
            spec(fmt(f), Zone::Utc, Label::Start, 1000)
                .parse(text.as_bytes())
                .map(iso)
        };
        // Unpadded month, day and hour.
        assert_eq!(
            utc("%m/%d/%Y %H:%M", "1/1/2022 0:05").unwrap(),
            "2022-01-01T00:05:00Z"
        );
        // Year, day of year (2018-10-18 is day 291: 273 days to the end of
        // September plus 18, common practice), HHMM without leading zeros.
        assert_eq!(
            utc("%Y %j %{hhmm}", "2018 291 5").unwrap(),
            "2018-10-18T00:05:00Z"
        );
        assert_eq!(
            utc("%Y %j %{hhmm}", "2018 291 2359").unwrap(),
            "2018-10-18T23:59:00Z"
        );
        // Several spaces where the format has one; adjacent fixed-width numbers.
        assert_eq!(
            utc("%Y %m %d %H %M", " 2016   1  1  0  7").unwrap(),
            "2016-01-01T00:07:00Z"
        );
        assert_eq!(
            utc("%Y%m%d%H%M%S", "20250120000102").unwrap(),
            "2025-01-20T00:01:02Z"
        );
        assert_eq!(
            utc("%Y-%m-%d %H:%M:%S.%f", "2025-01-20 00:01:02.25").unwrap(),
            "2025-01-20T00:01:02.250Z"
        );
        assert_eq!(
            utc("%y-%m-%d %H", "69-01-01 00").unwrap(),
            "1969-01-01T00:00:00Z"
        );
        assert_eq!(
            utc("%y-%m-%d %H", "68-01-01 00").unwrap(),
            "2068-01-01T00:00:00Z"
        );
        // Wrong shapes and fields.
        assert!(matches!(
            utc("%Y-%m-%d", "2025/01/20"),
            Err(TimeProblem::Format { at: 4 })
        ));
        assert!(matches!(
            utc("%Y-%m-%d", "2025-02-30"),
            Err(TimeProblem::Field)
        ));
        assert!(matches!(utc("%Y %j", "2025 366"), Err(TimeProblem::Field)));
        assert!(utc("%Y %j", "2024 366").is_ok());
        assert!(matches!(
            utc("%Y %j %H", "2024 1 24"),
            Err(TimeProblem::Hour24)
        ));
        assert!(Format::new("%H:%M").is_err());
        assert!(Format::new("%Y-%q").is_err());
    }

    #[test]
    fn end_labels_move_back_one_period_and_take_24_00() {
        let s = spec(fmt("%Y-%m-%d %H:%M"), Zone::Utc, Label::End, 60_000);
        assert_eq!(
            iso(s.parse(b"2022-01-01 00:01").unwrap()),
            "2022-01-01T00:00:00Z"
        );
        assert_eq!(
            iso(s.parse(b"2022-01-01 24:00").unwrap()),
            "2022-01-01T23:59:00Z"
        );
        assert!(matches!(
            s.parse(b"2022-01-01 24:01"),
            Err(TimeProblem::Hour24)
        ));
    }

    #[test]
    fn fixed_offsets_and_epochs() {
        let s = spec(
            fmt("%Y %j %{hhmm}"),
            zone("-07:00").unwrap(),
            Label::Start,
            60_000,
        );
        // Local standard time UTC-7: 00:00 local is 07:00 UTC.
        assert_eq!(iso(s.parse(b"2018 291 0").unwrap()), "2018-10-18T07:00:00Z");
        let ms = spec(Form::EpochMillis, Zone::Utc, Label::Start, 1000);
        // 2025-01-20T00:00:00Z = 1737331200 s (POSIX time, common practice).
        assert_eq!(
            iso(ms.parse(b"1737331200250").unwrap()),
            "2025-01-20T00:00:00.250Z"
        );
        let s = spec(Form::EpochSeconds, Zone::Utc, Label::Start, 1000);
        assert_eq!(
            iso(s.parse(b"1737331200.5").unwrap()),
            "2025-01-20T00:00:00.500Z"
        );
        assert!(s.parse(b"2025-01-20T00:00:00Z").is_err());
        assert!(zone("+1:00").is_err());
        assert!(zone("Mars/Olympus_Mons").is_err());
    }

    #[test]
    fn the_memo_and_the_zone_cache_change_no_result() {
        // Every 7 s and every 13 min over the days around both changes of
        // clock of 2025 in Europe/Berlin, read with one memo and one zone
        // cache as a file is, and each alone: the same instants and errors.
        let z = zone("Europe/Berlin").unwrap();
        for pick in [Pick::Refuse, Pick::Later] {
            let mut s = spec(fmt("%d.%m.%Y %H:%M:%S"), z.clone(), Label::End, 1000);
            s.skipped = pick;
            s.repeated = pick;
            let (mut memo, mut zc) = (Memo::default(), ZoneCache::default());
            for day0 in ["2025-03-29T00:00:00Z", "2025-10-25T00:00:00Z"] {
                let t0 = timefmt::parse_time(day0.as_bytes()).unwrap().millis();
                for step in [7_000i64, 13 * 60_000] {
                    for k in 0..(3 * 86_400_000 / step) {
                        let c = Timestamp::from_millis(t0 + k * step).civil();
                        let text = format!(
                            "{:02}.{:02}.{:04} {:02}:{:02}:{:02}",
                            c.day, c.month, c.year, c.hour, c.minute, c.second
                        );
                        let alone = s.parse(text.as_bytes());
                        let kept = s.parse_with(text.as_bytes(), &mut memo, &mut zc);
                        assert_eq!(alone, kept, "{text}");
                    }
                }
            }
        }
    }

    #[test]
    fn the_memo_compared_a_word_at_a_time_reads_as_the_format_does() {
        // Texts of 6 to 40 bytes (the memo's words cover 8 to 32), with the
        // minute and second anywhere, against the format alone: every
        // neighbour text (one byte changed, or a minute/second digit out of
        // range) after a memo of the first.
        let z = zone("Europe/Berlin").unwrap();
        let formats = [
            "%y%m%d%H%M%S",
            "%Y%m%d%H%M%S",
            "%M:%S %d.%m.%Y %H",
            "%d.%m.%Y %H:%M:%S",
            "%Y-%m-%dT%H:%M:%S",
            "date %Y-%m-%d, time %H:%M:%S (local)",
            "%Y/%j/%H:%M:%S",
        ];
        for f in formats {
            let s = spec(fmt(f), z.clone(), Label::Start, 1000);
            let Form::Format(ref compiled) = s.form else {
                panic!()
            };
            let t0 = timefmt::parse_time(b"2025-01-20T13:37:42Z").unwrap();
            let c = t0.civil();
            let text = f
                .replace("%Y", &format!("{:04}", c.year))
                .replace("%y", &format!("{:02}", c.year % 100))
                .replace("%m", &format!("{:02}", c.month))
                .replace("%d", &format!("{:02}", c.day))
                .replace("%j", "020")
                .replace("%H", &format!("{:02}", c.hour))
                .replace("%M", &format!("{:02}", c.minute))
                .replace("%S", &format!("{:02}", c.second));
            assert!(compiled.read_spans(text.as_bytes()).is_ok(), "{f}: {text}");
            let mut variants = vec![text.clone().into_bytes()];
            for i in 0..text.len() {
                // `/` and `:` are the bytes just below `0` and above `9`.
                for b in [b'0', b'5', b'6', b'9', b'x', b'/', b':'] {
                    let mut v = text.clone().into_bytes();
                    v[i] = b;
                    variants.push(v);
                }
            }
            for v in variants {
                let (mut memo, mut zc) = (Memo::default(), ZoneCache::default());
                let first = s.parse_with(text.as_bytes(), &mut memo, &mut zc);
                assert!(first.is_ok());
                assert!(memo.valid && (memo.words == 4) == (8..=32).contains(&text.len()));
                let kept = s.parse_with(&v, &mut memo, &mut zc);
                assert_eq!(s.parse(&v), kept, "{f}: {}", String::from_utf8_lossy(&v));
            }
        }
    }

    #[test]
    fn daylight_saving_is_resolved_by_the_zone_database() {
        // Europe/Berlin: clocks go from 02:00 CET to 03:00 CEST on 2025-03-30
        // and from 03:00 CEST back to 02:00 CET on 2025-10-26 (EU Directive
        // 2000/84/EC: the last Sundays of March and October at 01:00 UTC).
        let z = zone("Europe/Berlin").unwrap();
        let mut s = spec(fmt("%Y-%m-%d %H:%M"), z, Label::Start, 60_000);
        assert_eq!(
            iso(s.parse(b"2025-01-20 12:00").unwrap()),
            "2025-01-20T11:00:00Z"
        );
        assert_eq!(
            iso(s.parse(b"2025-07-01 12:00").unwrap()),
            "2025-07-01T10:00:00Z"
        );
        match s.parse(b"2025-03-30 02:30") {
            Err(TimeProblem::Skipped(a, b)) => {
                assert_eq!(
                    (iso(a).as_str(), iso(b).as_str()),
                    ("2025-03-30T00:30:00Z", "2025-03-30T01:30:00Z")
                );
            }
            other => panic!("{other:?}"),
        }
        match s.parse(b"2025-10-26 02:30") {
            Err(TimeProblem::Repeated(a, b)) => {
                assert_eq!(
                    (iso(a).as_str(), iso(b).as_str()),
                    ("2025-10-26T00:30:00Z", "2025-10-26T01:30:00Z")
                );
            }
            other => panic!("{other:?}"),
        }
        s.repeated = Pick::Later;
        assert_eq!(
            iso(s.parse(b"2025-10-26 02:30").unwrap()),
            "2025-10-26T01:30:00Z"
        );
        s.skipped = Pick::Earlier;
        assert_eq!(
            iso(s.parse(b"2025-03-30 02:30").unwrap()),
            "2025-03-30T00:30:00Z"
        );
    }

    /// A declared layout's times read as its one-pass reader does ([`Quick`]
    /// first, then [`TimeSpec::parse_memo`], then [`TimeSpec::parse_with`],
    /// the fold rebuilt after each) against [`TimeSpec::parse`] alone with
    /// neither memo nor zone span, on invented walks of local time: a week
    /// either side of the clock changes of Europe/Berlin (one hour, at
    /// 02:00/03:00 local), Australia/Lord_Howe (half an hour, at 02:00
    /// local) and America/St_Johns in 2010 (one hour, at 00:01 local: the
    /// zone's span ends a minute into an hour; dates from memory of the
    /// zones' rules, the zone database decides), the year's end, the first and last days of the supported
    /// span; steps of a second to an hour and a half, some backwards; `24:00`
    /// for midnight under an end label; unpadded fields, texts of 12 to 33
    /// bytes; a byte changed, dropped or added in some rows; fields ended by
    /// `;`, `\n`, `\r`, the end of the text or not at all.
    #[test]
    fn quick_times_agree_with_the_format_and_the_zone() {
        let named = |n: &str| zone(n).unwrap();
        let with = |zone: Zone, label: Label, period_ms: i64, skipped: Pick, repeated: Pick| {
            move |form: Form| TimeSpec {
                form,
                zone,
                label,
                period_ms,
                skipped,
                repeated,
            }
        };
        let cases = [
            (
                with(
                    named("Europe/Berlin"),
                    Label::End,
                    1000,
                    Pick::Refuse,
                    Pick::Refuse,
                ),
                "%d.%m.%Y %H:%M:%S",
                0,
            ),
            (
                with(
                    named("Europe/Berlin"),
                    Label::Start,
                    1000,
                    Pick::Earlier,
                    Pick::Later,
                ),
                "%Y%m%d%H%M%S",
                1,
            ),
            (
                with(
                    named("Australia/Lord_Howe"),
                    Label::End,
                    600_000,
                    Pick::Later,
                    Pick::Earlier,
                ),
                "%d.%m.%Y %H:%M:%S",
                2,
            ),
            (
                with(
                    named("America/St_Johns"),
                    Label::End,
                    1000,
                    Pick::Earlier,
                    Pick::Refuse,
                ),
                "%d.%m.%Y %H:%M:%S",
                0,
            ),
            (
                with(
                    Zone::Fixed(330),
                    Label::Start,
                    1000,
                    Pick::Refuse,
                    Pick::Refuse,
                ),
                "%Y-%m-%d %H:%M:%S local.end",
                3,
            ),
            (
                with(Zone::Utc, Label::End, 1000, Pick::Refuse, Pick::Refuse),
                "%Y-%m-%d %H:%M:%S local.end.xyz",
                4,
            ),
            (
                with(
                    Zone::Fixed(-600),
                    Label::End,
                    600_000,
                    Pick::Refuse,
                    Pick::Refuse,
                ),
                "%d.%m.%Y %H:%M:%S",
                0,
            ),
        ];
        let local = |y: i32, mo: u8, d: u8| {
            Timestamp::from_civil(Civil {
                year: y,
                month: mo,
                day: d,
                hour: 0,
                minute: 0,
                second: 0,
                milli: 0,
            })
            .unwrap()
            .millis()
        };
        let starts = [
            local(2025, 3, 23),
            local(2025, 10, 19),
            local(2025, 12, 28),
            local(2025, 3, 30),
            local(2025, 9, 28),
            local(9999, 12, 24),
            local(0, 1, 1),
            local(2010, 3, 7),
            local(2010, 10, 31),
        ];
        let steps: [i64; 16] = [
            1, 1, 1, 1, 1, 1, 2, 59, 61, 600, 1799, 3599, 3600, 5400, -1, -3599,
        ];
        const ODD: &[u8] = b"0123456789:.; \n\rx-";
        let mut x = 11u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        for (make, f, kind) in cases {
            let spec = make(fmt(f));
            let (mut memo, mut zc, mut quick) =
                (Memo::default(), ZoneCache::default(), Quick::default());
            let (mut hits, mut rows) = (0, 0);
            for &start in &starts {
                let mut ms = start;
                for _ in 0..1500 {
                    ms += steps[rnd(steps.len() as u64) as usize] * 1000;
                    let c = Timestamp::from_millis(ms).civil();
                    let (y, mo, d, h, mi, se) =
                        (c.year, c.month, c.day, c.hour, c.minute, c.second);
                    let mut text = match kind {
                        0 if (h, mi, se) == (0, 0, 0) && rnd(2) == 0 => {
                            let p = Timestamp::from_millis(ms - 86_400_000).civil();
                            format!("{:02}.{:02}.{:04} 24:00:00", p.day, p.month, p.year)
                        }
                        0 => format!("{d:02}.{mo:02}.{y:04} {h:02}:{mi:02}:{se:02}"),
                        1 => format!("{y:04}{mo:02}{d:02}{h:02}{mi:02}{se:02}"),
                        2 => format!("{d}.{mo}.{y:04} {h}:{mi:02}:{se:02}"),
                        3 => format!("{y:04}-{mo:02}-{d:02} {h:02}:{mi:02}:{se:02} local.end"),
                        _ => format!("{y:04}-{mo:02}-{d:02} {h:02}:{mi:02}:{se:02} local.end.xyz"),
                    }
                    .into_bytes();
                    let at = rnd(text.len() as u64) as usize;
                    let odd = ODD[rnd(ODD.len() as u64) as usize];
                    match rnd(40) {
                        0 => text[at] = odd,
                        1 => {
                            text.remove(at);
                        }
                        2 => text.insert(at, odd),
                        _ => {}
                    }
                    let end: &[u8] = [&b";"[..], b"\n", b"\r", b"", b",x"][rnd(5) as usize];
                    // Mostly a whole row after the field; in some, the end of a buffer.
                    let k = if rnd(4) == 0 { rnd(30) } else { 29 };
                    let fill = &b"5,33;5,39;4,99;2486;1,4;81,7\n"[..k as usize];
                    let buf = [&text[..], end, fill].concat();
                    let n = buf
                        .iter()
                        .position(|&c| c == b';' || c == b'\n' || c == b'\r')
                        .unwrap_or(buf.len());
                    let field = &buf[..n];
                    let want = spec.parse(field).ok();
                    let shown = String::from_utf8_lossy(&buf);
                    rows += 1;
                    if let Some((t, len)) = quick.read(&buf, b';') {
                        assert_eq!((Some(t), len), (want, n), "{f:?}: {shown:?}");
                        hits += 1;
                        continue;
                    }
                    let got = match spec.parse_memo(field, &memo, &zc) {
                        Some(t) => Some(t),
                        None => {
                            let r = spec.parse_with(field, &mut memo, &mut zc).ok();
                            quick = spec.quick(&memo, &zc, b';');
                            r
                        }
                    };
                    assert_eq!(got, want, "{f:?}: {shown:?}");
                }
            }
            // Texts of 32 bytes and more are never folded; the others mostly.
            if kind == 4 {
                assert_eq!(hits, 0);
            } else {
                assert!(hits * 5 > rows, "{f:?}: {hits} of {rows}");
            }
        }
    }
}
