//! Records CSV: one row per interval and channel, channels in station-file order.
//!
//! Columns: [`COLUMNS`]. Times are RFC 3339 UTC with `Z` (milliseconds only when
//! not zero). A statistic the core reports as absent is an empty field. Numbers
//! print with Rust's `{}` for `f64`: the shortest decimal that parses back to
//! the same bits, so a records file carries the core's results exactly.
//! `flags` is `qc_core::Flags` printed (names joined with `|`).
//! With a sensor history (`[campaign] sensors`), `sensor_entries` names the
//! history's entries in force during the interval (ids joined with `|`) and
//! `flags` holds `sensor_change` when the entry changed inside it
//! ([`crate::sensors::History::mark`]); without one the column is empty.

use std::io::{self, Write};
use std::sync::Arc;

use anyhow::Result;
use qc_core::{ChannelRecord, Stat, Timestamp};

use crate::engine::Sink;
use crate::sensors::History;
use crate::timefmt::Rfc3339;

/// How a column is compared by `verify`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Type {
    /// RFC 3339 time.
    Time,
    /// Channel id.
    Text,
    /// Unsigned count.
    Count,
    /// `f64`, or empty when absent.
    Number,
    /// Flag names joined with `|`.
    Flags,
}

/// A records column.
#[derive(Clone, Copy, Debug)]
pub struct Column {
    /// Header name.
    pub name: &'static str,
    /// Its type.
    pub ty: Type,
}

const fn col(name: &'static str, ty: Type) -> Column {
    Column { name, ty }
}

/// The records columns, in order. The first eleven are fixed by the contract.
pub const COLUMNS: [Column; 22] = [
    col("start", Type::Time),
    col("end", Type::Time),
    col("channel", Type::Text),
    col("n_possible", Type::Count),
    col("n_valid", Type::Count),
    col("mean", Type::Number),
    col("sd", Type::Number),
    col("min", Type::Number),
    col("max", Type::Number),
    col("gust", Type::Number),
    col("flags", Type::Flags),
    col("n_missing", Type::Count),
    col("n_out_of_range", Type::Count),
    col("n_rejected", Type::Count),
    col("ti", Type::Number),
    col("resultant_length", Type::Number),
    col("resultant_speed", Type::Number),
    col("resultant_direction", Type::Number),
    col("n_spikes", Type::Count),
    col("n_flagged", Type::Count),
    col("n_excluded", Type::Count),
    col("sensor_entries", Type::Text),
];

/// Index in [`COLUMNS`] of `n_flagged`, the readings the source marked bad:
/// a records file written before it has no such column, which reads as 0.
pub const N_FLAGGED: usize = 19;

/// Index in [`COLUMNS`] of `n_excluded`, the readings excluded by decision
/// (the station file's exclusions): a records file written before it has no
/// such column, which reads as 0.
pub const N_EXCLUDED: usize = 20;

/// Whether column `k` may be absent from a records file (added after the
/// first version; absent reads as 0).
pub const fn optional(k: usize) -> bool {
    k == N_FLAGGED || k == N_EXCLUDED || k == SENSOR_ENTRIES
}

/// Index in [`COLUMNS`] of `sensor_entries`, the sensor-history entries in
/// force: a records file written before it has no such column, which reads
/// as empty (no history).
pub const SENSOR_ENTRIES: usize = 21;

/// Writes the header line.
pub fn write_header<W: Write>(w: &mut W) -> io::Result<()> {
    for (i, c) in COLUMNS.iter().enumerate() {
        if i > 0 {
            w.write_all(b",")?;
        }
        w.write_all(c.name.as_bytes())?;
    }
    w.write_all(b"\n")
}

/// Appends `v` as Rust's `{}` prints an `f64` (the shortest decimal that
/// parses back to the same bits, never an exponent, no `.0` on a whole
/// number). `ryu` finds the same shortest digits, except where two of them
/// are equally close to `v` (then `ryu` takes the even digit, `{}` may not:
/// 1307662877903348.25 prints as `…348.3` and `ryu` gives `…348.2`); such a
/// tie needs `v` to be exactly a decimal of at most 18 digits
/// ([`may_tie`]). `ryu` prints without an exponent from 1e-5 to below
/// 1e16, every value a record holds in practice. A possible tie, an
/// exponent, NaN and the infinities go through `{}` itself. Unit tests
/// compare the two on random values of every exponent.
fn push_f64(line: &mut Vec<u8>, v: f64) {
    if v.is_finite() && !may_tie(v) {
        let mut b = ryu::Buffer::new();
        let s = b.format_finite(v).as_bytes();
        if !s.contains(&b'e') {
            line.extend_from_slice(s.strip_suffix(b".0").unwrap_or(s));
            return;
        }
    }
    // Writing to a Vec does not fail.
    let _ = write!(line, "{v}");
}

/// Whether finite `v` may lie exactly halfway between two shortest decimals
/// that read back to it. With `v = m·2^q`, `m` odd: a whole `v` (`q ≥ 0`)
/// below 1e16 never does (its neighbours are at most 2 apart, a tie would
/// be 5 away); for `q < 0` the exact decimal of `v` has as many significant
/// digits as `m·5^-q`, and a tie between two decimals of at most 17 digits
/// needs it to have at most 18, its last a 5. So: false when `m·5^-q` has
/// 19 digits or more (conservative: true sometimes without a tie).
fn may_tie(v: f64) -> bool {
    let bits = v.to_bits() & !(1 << 63);
    let exp = (bits >> 52) as i32;
    let frac = bits & ((1 << 52) - 1);
    let (m, q) = if exp == 0 {
        (frac, -1074)
    } else {
        (frac | (1 << 52), exp - 1075)
    };
    if m == 0 {
        return false;
    }
    let tz = m.trailing_zeros();
    let (m, q) = (m >> tz, q + tz as i32);
    if q >= 0 {
        return false;
    }
    let s = q.unsigned_abs();
    // 5^27 > 10^18: every odd m gives 19 digits or more.
    s < 27 && u128::from(m) * 5u128.pow(s) < 10u128.pow(18)
}

/// Appends `n` in decimal, as `{}` prints it.
fn push_u64(line: &mut Vec<u8>, mut n: u64) {
    let mut d = [0u8; 20];
    let mut i = d.len();
    loop {
        i -= 1;
        d[i] = b'0' + (n % 10) as u8;
        n /= 10;
        if n == 0 {
            break;
        }
    }
    line.extend_from_slice(&d[i..]);
}

/// Appends a statistic: its value, or nothing when absent.
fn push_stat(line: &mut Vec<u8>, s: Stat) {
    if let Stat::Value(v) = s {
        push_f64(line, v);
    }
}

/// An interval's two times, printed once for all of its rows.
struct Times {
    start: Timestamp,
    end: Timestamp,
    text: Vec<u8>,
    /// Where the end's text starts in `text`.
    split: usize,
}

impl Times {
    fn new() -> Self {
        Times {
            start: Timestamp::from_millis(0),
            end: Timestamp::from_millis(0),
            text: Vec::with_capacity(64),
            split: 0,
        }
    }

    /// The printed times of `[start, end)` (printed again only when they
    /// changed).
    fn set(&mut self, start: Timestamp, end: Timestamp) {
        if self.split > 0 && self.start == start && self.end == end {
            return;
        }
        self.text.clear();
        // Writing to a Vec does not fail.
        let _ = write!(self.text, "{}", Rfc3339(start));
        self.split = self.text.len();
        let _ = write!(self.text, "{}", Rfc3339(end));
        (self.start, self.end) = (start, end);
    }
}

/// Appends one row of channel `ch` (`channel` its id) to `line`, its times
/// already printed in `times`.
fn push_row(
    line: &mut Vec<u8>,
    times: &Times,
    (channel, ch): (&str, usize),
    r: &ChannelRecord,
    sensors: Option<&History>,
    entries: &mut String,
) {
    let t = &r.tally;
    entries.clear();
    let flags = match sensors {
        Some(h) => h.mark(ch, times.start, times.end, r.flags, entries),
        None => r.flags,
    };
    line.extend_from_slice(&times.text[..times.split]);
    line.push(b',');
    line.extend_from_slice(&times.text[times.split..]);
    line.push(b',');
    line.extend_from_slice(channel.as_bytes());
    for n in [u64::from(r.n_possible), u64::from(t.valid)] {
        line.push(b',');
        push_u64(line, n);
    }
    for s in [r.mean, r.sd, r.min, r.max, r.gust] {
        line.push(b',');
        push_stat(line, s);
    }
    line.push(b',');
    for (i, f) in flags.iter().enumerate() {
        if i > 0 {
            line.push(b'|');
        }
        line.extend_from_slice(f.name().as_bytes());
    }
    for n in [t.missing, t.out_of_range, t.rejected] {
        line.push(b',');
        push_u64(line, u64::from(n));
    }
    for s in [
        r.ti,
        r.resultant_length,
        r.resultant_speed,
        r.resultant_direction,
    ] {
        line.push(b',');
        push_stat(line, s);
    }
    for n in [r.spikes, t.flagged, t.excluded] {
        line.push(b',');
        push_u64(line, u64::from(n));
    }
    line.push(b',');
    line.extend_from_slice(entries.as_bytes());
    line.push(b'\n');
}

/// Writes one row of channel `ch` (`channel` its id). Channel ids hold no
/// commas or quotes (the station file checks), nor do entry ids (the sensor
/// history checks), and no other field can, so no quoting is ever needed.
/// With `sensors`, the row carries the history's mark
/// ([`crate::sensors::History::mark`]).
pub fn write_row<W: Write>(
    w: &mut W,
    start: Timestamp,
    end: Timestamp,
    channel: (&str, usize),
    r: &ChannelRecord,
    sensors: Option<&History>,
) -> io::Result<()> {
    let mut times = Times::new();
    times.set(start, end);
    let mut line = Vec::with_capacity(256);
    push_row(&mut line, &times, channel, r, sensors, &mut String::new());
    w.write_all(&line)
}

/// A sink writing records CSV.
pub struct Writer<W: Write> {
    out: W,
    ids: Vec<String>,
    sensors: Option<Arc<History>>,
    /// Rows written.
    pub rows: u64,
    /// The current interval's times, printed once.
    times: Times,
    /// An interval's rows, written at once.
    lines: Vec<u8>,
    /// A row's sensor entries.
    entries: String,
}

impl<W: Write> Writer<W> {
    /// A writer for channels `ids`; writes the header at once.
    pub fn new(mut out: W, ids: Vec<String>) -> io::Result<Self> {
        write_header(&mut out)?;
        Ok(Writer {
            out,
            ids,
            sensors: None,
            rows: 0,
            times: Times::new(),
            lines: Vec::new(),
            entries: String::new(),
        })
    }

    /// Marks the rows with the sensor history `sensors` (the station file's).
    pub fn with_sensors(mut self, sensors: Option<Arc<History>>) -> Self {
        self.sensors = sensors;
        self
    }

    /// Flushes and returns the output.
    pub fn finish(mut self) -> io::Result<W> {
        self.out.flush()?;
        Ok(self.out)
    }
}

impl<W: Write> Sink for Writer<W> {
    fn interval(
        &mut self,
        start: Timestamp,
        end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()> {
        let sensors = self.sensors.as_deref();
        self.times.set(start, end);
        self.lines.clear();
        for (ch, (id, r)) in self.ids.iter().zip(records).enumerate() {
            let line = &mut self.lines;
            push_row(line, &self.times, (id, ch), r, sensors, &mut self.entries);
            self.rows += 1;
        }
        self.out.write_all(&self.lines)?;
        Ok(())
    }
}

/// Distance in units in the last place between two finite `f64`s (0 when
/// equal bits; +0 and -0 are 1 apart).
pub fn ulp_distance(a: f64, b: f64) -> u64 {
    fn key(x: f64) -> i64 {
        let i = x.to_bits() as i64;
        if i < 0 {
            i ^ i64::MAX
        } else {
            i
        }
    }
    (i128::from(key(a)) - i128::from(key(b))).unsigned_abs() as u64
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ulps() {
        assert_eq!(ulp_distance(1.0, 1.0), 0);
        assert_eq!(ulp_distance(1.0, f64::from_bits(1.0f64.to_bits() + 1)), 1);
        assert_eq!(ulp_distance(f64::from_bits(1.0f64.to_bits() + 3), 1.0), 3);
        assert_eq!(ulp_distance(0.0, -0.0), 1);
        assert_eq!(
            ulp_distance(f64::MIN_POSITIVE, -f64::MIN_POSITIVE),
            2 * (1u64 << 52) + 1
        );
        assert_eq!(
            ulp_distance(-1.0, f64::from_bits((-1.0f64).to_bits() + 1)),
            1
        );
    }

    /// splitmix64 (Steele, Lea, Flood 2014): a fixed, seeded stream.
    fn mix(state: &mut u64) -> u64 {
        *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = *state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    fn f64_text(v: f64) -> String {
        let mut line = Vec::new();
        push_f64(&mut line, v);
        String::from_utf8(line).unwrap()
    }

    /// The records' numbers print as Rust's own `{}` (the formatting the
    /// records used before, and the outside reference here): edges of the
    /// plain range, whole numbers, signed zeros, subnormals, non-finite
    /// values, random bit patterns over every exponent, and values of the
    /// kind the core reports (sums divided by counts, few decimals).
    #[test]
    fn numbers_print_as_rusts_display() {
        let mut edges = vec![
            0.0,
            -0.0,
            1.0,
            -1.0,
            0.1,
            0.3,
            2.5,
            1e-5,
            1e-6,
            9.999_999_999_999_999e-6,
            1e15,
            1e16,
            9_007_199_254_740_992.0,
            9_999_999_999_999_998.0,
            123_456_789_012_345.67,
            f64::MAX,
            f64::MIN_POSITIVE,
            f64::from_bits(1),
            f64::EPSILON,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            359.999_999_999_999_94,
            // A tie: ryu's digits end in 2, `{}`'s in 3.
            f64::from_bits(0x4312_953f_f54b_27d1),
            0.5,
            7.25,
            1_307_662_877_903_348.0,
        ];
        for e in -30..=30 {
            edges.push(10f64.powi(e));
            edges.push(-(10f64.powi(e)));
            edges.push(f64::from_bits(10f64.powi(e).to_bits() - 1));
            edges.push(f64::from_bits(10f64.powi(e).to_bits() + 1));
        }
        for v in edges {
            assert_eq!(f64_text(v), format!("{v}"), "bits {:#x}", v.to_bits());
        }
        // TENMIN_F64_ROUNDS=N for a longer run (in release: 20,000,000 rounds,
        // 120 million values, were checked when this was written).
        let rounds = std::env::var("TENMIN_F64_ROUNDS")
            .ok()
            .and_then(|n| n.parse().ok())
            .unwrap_or(20_000);
        let mut state = 0x5eed_u64;
        for _ in 0..rounds {
            let bits = f64::from_bits(mix(&mut state));
            let r = mix(&mut state);
            // A mean of integer readings: a sum over a count up to 600.
            let mean = (r >> 40) as f64 / 100.0 / ((r % 600) + 1) as f64;
            let r2 = mix(&mut state);
            // A reading with up to three decimals, and a whole number.
            let dec = (r2 % 2_000_000) as f64 / 1000.0 - 1000.0;
            let whole = (r2 >> 20) as f64;
            // A value in the plain range with a random mantissa.
            let plain = f64::from_bits((mix(&mut state) >> 12) | 0x3ff0_0000_0000_0000)
                * 10f64.powi((r2 % 21) as i32 - 5);
            for v in [bits, mean, dec, whole, plain, -plain] {
                assert_eq!(f64_text(v), format!("{v}"), "bits {:#x}", v.to_bits());
            }
        }
    }

    #[test]
    fn counts_print_as_rusts_display() {
        let mut state = 7_u64;
        let mut line = Vec::new();
        for n in [0, 1, 9, 10, 99, 100, u64::from(u32::MAX), u64::MAX]
            .into_iter()
            .chain((0..10_000).map(|_| mix(&mut state) >> (mix(&mut state) % 64)))
        {
            line.clear();
            push_u64(&mut line, n);
            assert_eq!(line, n.to_string().as_bytes());
        }
    }

    /// A row as the records printed it before (one `writeln!` of every
    /// field through `{}`), against the row written now; with flags, absent
    /// statistics, and a time with milliseconds.
    #[test]
    fn rows_print_as_before() {
        use qc_core::{Absent, Flag, Flags, Kind, Tally};
        struct S(Stat);
        impl std::fmt::Display for S {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                match self.0 {
                    Stat::Value(v) => write!(f, "{v}"),
                    Stat::Absent(_) => Ok(()),
                }
            }
        }
        let mut state = 11_u64;
        let mut flags = Flags::EMPTY;
        flags.insert(Flag::Implausible);
        flags.insert(Flag::Clock);
        for k in 0..200 {
            let mut stat = || {
                let r = mix(&mut state);
                if r % 5 == 0 {
                    Stat::Absent(Absent::NoValidSamples)
                } else {
                    Stat::Value(f64::from_bits(r % (1 << 63)).sqrt() / 1e70)
                }
            };
            let r = ChannelRecord {
                kind: Kind::Speed,
                n_possible: 600,
                mean: stat(),
                sd: stat(),
                min: stat(),
                max: stat(),
                gust: stat(),
                ti: stat(),
                resultant_length: stat(),
                resultant_speed: stat(),
                resultant_direction: stat(),
                spikes: k,
                flags: if k % 2 == 0 { flags } else { Flags::EMPTY },
                tally: Tally {
                    valid: 590 - k,
                    missing: k,
                    out_of_range: 3,
                    rejected: 4,
                    flagged: 5,
                    excluded: 6,
                },
            };
            let start = Timestamp::from_millis(1_737_331_200_000 + i64::from(k) * 600_250);
            let end = Timestamp::from_millis(start.millis() + 600_000);
            let t = &r.tally;
            let before = format!(
                "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n",
                Rfc3339(start),
                Rfc3339(end),
                "ws80",
                r.n_possible,
                t.valid,
                S(r.mean),
                S(r.sd),
                S(r.min),
                S(r.max),
                S(r.gust),
                r.flags,
                t.missing,
                t.out_of_range,
                t.rejected,
                S(r.ti),
                S(r.resultant_length),
                S(r.resultant_speed),
                S(r.resultant_direction),
                r.spikes,
                t.flagged,
                t.excluded,
                "",
            );
            let mut w = Writer::new(Vec::new(), vec!["ws80".into(), "ws80".into()]).unwrap();
            w.interval(start, end, &[r, r]).unwrap();
            let text = String::from_utf8(w.finish().unwrap()).unwrap();
            let mut lines = text.lines().skip(1);
            assert_eq!(format!("{}\n", lines.next().unwrap()), before);
            assert_eq!(format!("{}\n", lines.next().unwrap()), before);
            let mut one = Vec::new();
            write_row(&mut one, start, end, ("ws80", 0), &r, None).unwrap();
            assert_eq!(String::from_utf8(one).unwrap(), before);
        }
    }

    #[test]
    fn header_starts_with_the_fixed_columns() {
        let mut v = Vec::new();
        write_header(&mut v).unwrap();
        assert!(String::from_utf8(v)
            .unwrap()
            .starts_with("start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags,"));
        assert_eq!(COLUMNS[N_FLAGGED].name, "n_flagged");
        assert_eq!(COLUMNS[SENSOR_ENTRIES].name, "sensor_entries");
        assert_eq!(
            COLUMNS.len(),
            SENSOR_ENTRIES + 1,
            "sensor_entries is the last column"
        );
    }
}
