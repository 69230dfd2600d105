//! `tenmin draft`: looks at a field file as it is and prints a starter station
//! file that declares its layout (`[input]`, `[input.time]`, per channel
//! `column` and `source_unit`), for the user to check and edit.
//!
//! Only the start of the file is read: at most [`SNIFF_BYTES`] bytes and
//! [`SNIFF_LINES`] lines (decompressed, for `.gz` and `.zst`), so memory is
//! bounded whatever the file. Every guess is made from those lines:
//!
//! - the delimiter: the one (comma, semicolon, tab, runs of spaces) that gives
//!   the same number of fields, at least two, on the most lines; lines before
//!   that block with another count are skipped lines (station metadata);
//! - the header: the first line of the block when it holds words where the
//!   data hold numbers; a units line when the next one does too; a third such
//!   line makes the layout positional (the names go to comments);
//! - the time: candidate columns and formats are read with the real time
//!   parser ([`TimeSpec::parse`]); a candidate is kept only when it reads every
//!   row read and the times mostly increase with one common step;
//! - the sample period: that common step; the interval: 600 s, or 3600 s or a
//!   day for slower data, with at least three samples per interval;
//! - the channels: from each column's name, unit and values (see
//!   [`Meaning`]); missing-value codes seen in the numbers.
//!
//! The draft is checked with [`crate::config::parse`] before it is written,
//! so what it prints loads as a station file.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt::Write as _;
use std::io::{self, Read, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use clap::Args;

use crate::localtime::{Form, Format, Label, Pick, TimeProblem, TimeSpec, Zone};
use crate::{config, output, reader};

/// Bytes of the file read at most.
pub const SNIFF_BYTES: usize = 1 << 20;
/// Lines of the file read at most.
pub const SNIFF_LINES: usize = 5000;
/// Columns tried as time fields (a time is near the start of a row).
const TIME_COLUMNS: usize = 16;
/// Missing-value texts listed at most.
const MAX_MISSING: usize = 16;
/// Numbers loggers and archives write for "no reading" (common practice).
const CODES: &[f64] = &[
    -99999.0, -9999.9, -9999.0, -999.9, -999.0, -7999.0, -6999.0, 9999.0, 9999.9, 99999.0,
];

/// Arguments of `tenmin draft`.
#[derive(Args, Debug)]
pub struct DraftArgs {
    /// The field file to look at (read as it is; `.gz` and `.zst` decompressed).
    #[arg(value_name = "FILE")]
    file: PathBuf,
    /// File to write the station draft to [default: stdout]: written whole or not at
    /// all, never over the field file.
    #[arg(long, short = 'o', value_name = "STATION.toml")]
    output: Option<PathBuf>,
    /// Do not print the summary of what was found on stderr.
    #[arg(long, short = 'q')]
    quiet: bool,
}

/// Runs `tenmin draft`.
pub fn run(a: &DraftArgs) -> Result<ExitCode> {
    if let Some(out) = &a.output {
        output::refuse_inputs(out, &[("field file", a.file.as_path())])?;
    }
    let sniff = sniff(&a.file)?;
    let name = a.file.display().to_string();
    let d = draft(&name, &sniff)?;
    let check = config::parse(
        a.output.as_deref().unwrap_or(Path::new("draft.toml")),
        &d.text,
    );
    output::write_to(a.output.as_deref(), "the station draft", |w| {
        Ok(w.write_all(d.text.as_bytes())?)
    })?;
    if !a.quiet {
        let mut e = io::stderr().lock();
        let _ = writeln!(e, "tenmin draft: {}", d.summary);
        if let Err(err) = check {
            let _ = writeln!(
                e,
                "tenmin draft: the draft does not load as it is, edit it first: {err:#}"
            );
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// The start of a file, as lines.
pub struct Sniff {
    /// Lines (1-based number, text without its terminator).
    pub lines: Vec<(usize, String)>,
    /// Bytes read.
    pub bytes: usize,
    /// Whether the whole file was read.
    pub whole: bool,
}

/// Reads the start of `path` (see the module docs); an empty file, a binary
/// file and a file whose first line does not end within [`SNIFF_BYTES`] are
/// errors naming the file.
pub fn sniff(path: &Path) -> Result<Sniff> {
    let shown = path.display();
    let src = reader::open_maybe_compressed(path)?;
    let mut buf = Vec::with_capacity(64 << 10);
    src.take(SNIFF_BYTES as u64 + 1)
        .read_to_end(&mut buf)
        .with_context(|| format!("cannot read {shown}"))?;
    sniff_bytes(&shown.to_string(), &buf)
}

/// [`sniff`] of bytes already read (at most [`SNIFF_BYTES`] + 1 of them: one
/// more means the file goes on).
pub fn sniff_bytes(name: &str, buf: &[u8]) -> Result<Sniff> {
    let whole = buf.len() <= SNIFF_BYTES;
    let buf = &buf[..buf.len().min(SNIFF_BYTES)];
    if buf.is_empty() {
        bail!("{name}: empty: there are no lines to draft a station file from");
    }
    if let Some(at) = buf
        .iter()
        .position(|&c| c < 0x20 && !matches!(c, b'\t' | b'\n' | b'\r' | 0x0c))
    {
        bail!(
            "{name}: byte {} is 0x{:02x}, a control byte: not a text file (a field file is lines of text fields){}",
            at + 1,
            buf[at],
            if whole { "" } else { "; only the first 1048576 bytes were looked at" }
        );
    }
    let text = String::from_utf8_lossy(buf);
    let bad = text.chars().filter(|&c| c == '\u{FFFD}').count();
    if bad * 20 > text.chars().count().max(1) {
        bail!(
            "{name}: not text: {bad} of the first {} bytes are not UTF-8 (nor ASCII)",
            buf.len()
        );
    }
    // Lines as the replay counts them: each `\n`, `\r\n` and lone `\r`
    // ends one (`reader::count_line_ends`).
    let mut parts: Vec<&str> = Vec::new();
    let mut rest = &text[..];
    while let Some(p) = rest.find(['\n', '\r']) {
        parts.push(&rest[..p]);
        let end = if rest[p..].starts_with("\r\n") { 2 } else { 1 };
        rest = &rest[p + end..];
    }
    parts.push(rest);
    if !whole {
        if parts.len() < 2 {
            bail!(
                "{name}:1: no line end in the first {SNIFF_BYTES} bytes: not a text table (one endless line?)"
            );
        }
        parts.pop(); // a line cut by the limit
    }
    let mut lines = Vec::new();
    for (i, p) in parts.iter().enumerate() {
        if lines.len() >= SNIFF_LINES {
            break;
        }
        let mut s = p.strip_suffix('\r').unwrap_or(p);
        if i == 0 {
            s = s.strip_prefix('\u{FEFF}').unwrap_or(s);
        }
        lines.push((i + 1, s.to_string()));
    }
    let whole = whole && lines.len() == parts.len();
    Ok(Sniff {
        lines,
        bytes: buf.len(),
        whole,
    })
}

/// A drafted station file.
pub struct Draft {
    /// The TOML text.
    pub text: String,
    /// One line saying what was found, for stderr.
    pub summary: String,
}

/// How fields are separated.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Delim {
    Comma,
    Semicolon,
    Tab,
    Spaces,
}

impl Delim {
    fn toml(self) -> &'static str {
        match self {
            Delim::Comma => "\",\"",
            Delim::Semicolon => "\";\"",
            Delim::Tab => "\"tab\"",
            Delim::Spaces => "\"whitespace\"",
        }
    }
    fn said(self) -> &'static str {
        match self {
            Delim::Comma => "comma",
            Delim::Semicolon => "semicolon",
            Delim::Tab => "tab",
            Delim::Spaces => "runs of spaces",
        }
    }
}

/// The fields of `line`, trimmed; quotes of a one-byte delimiter honoured.
fn split(line: &str, d: Delim) -> Vec<String> {
    let sep = match d {
        Delim::Comma => ',',
        Delim::Semicolon => ';',
        Delim::Tab => '\t',
        Delim::Spaces => {
            return line
                .split([' ', '\t'])
                .filter(|f| !f.is_empty())
                .map(str::to_string)
                .collect()
        }
    };
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        if quoted {
            if c == '"' {
                if chars.peek() == Some(&'"') {
                    cur.push('"');
                    chars.next();
                } else {
                    quoted = false;
                }
            } else {
                cur.push(c);
            }
        } else if c == '"' && cur.trim().is_empty() {
            cur.clear();
            quoted = true;
        } else if c == sep {
            out.push(cur.trim().to_string());
            cur.clear();
        } else {
            cur.push(c);
        }
    }
    out.push(cur.trim().to_string());
    out
}

/// A number as the replay reads it (`decimal_comma`: `3,5`), not NaN.
fn number(s: &str, decimal_comma: bool) -> Option<f64> {
    let t = s.trim();
    if t.is_empty() || !t.bytes().any(|c| c.is_ascii_digit()) {
        return None;
    }
    let v: f64 = if decimal_comma && t.contains(',') {
        t.replace(',', ".").parse().ok()?
    } else {
        t.parse().ok()?
    };
    v.is_finite().then_some(v)
}

fn is_nan_text(s: &str) -> bool {
    s.eq_ignore_ascii_case("nan")
}

/// Decimals a number is written with, floating-point noise of a printed
/// binary value (`1.5119999999999998`) taken off.
fn decimals(s: &str, v: f64) -> u32 {
    let t = s.trim().replace(',', ".");
    let Some((_, frac)) = t.split_once('.') else {
        return 0;
    };
    let frac = frac.split(['e', 'E']).next().unwrap_or("");
    let n = frac.len() as u32;
    if n <= 6 {
        return n;
    }
    for d in 0..=6u32 {
        let p = 10f64.powi(d as i32);
        if ((v * p).round() / p - v).abs() <= 1e-9 * v.abs().max(1.0) {
            return d;
        }
    }
    6
}

/// What one column holds, from the rows read.
#[derive(Default, Debug)]
struct Col {
    name: Option<String>,
    unit: Option<String>,
    /// Non-empty fields.
    filled: usize,
    /// Fields read as numbers (missing-value codes not among them).
    numbers: usize,
    /// Numbers that are missing-value codes, as written.
    codes: BTreeSet<String>,
    /// Other texts, with counts (at most a few kept).
    texts: BTreeMap<String, usize>,
    min: f64,
    max: f64,
    dec: u32,
    integer: bool,
    distinct: BTreeSet<i64>,
    steps: f64,
    rises: usize,
    falls: usize,
    last: Option<f64>,
}

impl Col {
    /// Numbers, with at most a few other texts (missing-value markers).
    fn numeric(&self) -> bool {
        self.numbers > 0
            && (self.numbers * 10 >= self.filled * 9
                || self.texts.len() <= 3 && self.texts.keys().all(|t| t.chars().count() <= 12))
    }
    fn values_said(&self) -> String {
        if self.numbers == 0 {
            return "no numbers in the rows read".into();
        }
        let d = self.dec.min(6) as usize;
        format!("values {:.*}..{:.*}", d, self.min, d, self.max)
    }
    fn varies(&self) -> bool {
        self.max > self.min
    }
    /// Small whole numbers, few of them: a quality or status code.
    fn codes_like(&self) -> bool {
        self.integer
            && self.numbers > 0
            && self.min >= 0.0
            && self.max <= 99.0
            && self.distinct.len() <= 4
    }
    fn monotone(&self) -> bool {
        self.rises > 0 && self.falls * 100 <= self.rises
    }
}

/// What a column measures, as guessed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Meaning {
    Speed,
    Gust,
    Direction,
    Temperature,
    Humidity,
    Pressure,
    /// A quantity known by name but not drafted as a channel.
    Other(&'static str),
    Unknown,
}

/// A TOML basic string.
fn q(s: &str) -> String {
    let mut o = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => o.push_str("\\\""),
            '\\' => o.push_str("\\\\"),
            c if (c as u32) < 0x20 || c == '\u{7f}' => {
                let _ = write!(o, "\\u{:04X}", c as u32);
            }
            c => o.push(c),
        }
    }
    o.push('"');
    o
}

/// Lowercase words of a name (letters and digits), its unit in brackets left out.
fn words(name: &str) -> Vec<String> {
    let base = strip_unit(name);
    let mut out: Vec<String> = Vec::new();
    let mut cur = String::new();
    let mut prev_lower = false;
    for c in base.chars() {
        if c.is_alphanumeric() {
            // camelCase splits: WindSpeed -> wind speed
            if c.is_uppercase() && prev_lower && !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev_lower = c.is_lowercase() || c.is_ascii_digit();
            cur.extend(c.to_lowercase());
        } else {
            prev_lower = false;
            if !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
        }
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// `name` without a trailing `[unit]` or `(unit)`.
fn strip_unit(name: &str) -> &str {
    let t = name.trim_end();
    for (open, close) in [('[', ']'), ('(', ')'), ('{', '}')] {
        if t.ends_with(close) {
            if let Some(i) = t.rfind(open) {
                return &t[..i];
            }
        }
    }
    t
}

/// The unit in brackets at the end of a name.
fn bracket_unit(name: &str) -> Option<String> {
    let t = name.trim_end();
    for (open, close) in [('[', ']'), ('(', ')'), ('{', '}')] {
        if let Some(inner) = t.strip_suffix(close) {
            if let Some(i) = inner.rfind(open) {
                let u = inner[i + open.len_utf8()..].trim();
                if !u.is_empty() {
                    return Some(u.to_string());
                }
            }
        }
    }
    None
}

/// A unit text as a known unit: (what it measures, the spelling the station
/// file's `source_unit` takes, or `None` when it is already the channel's).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum UnitOf {
    Speed(Option<&'static str>),
    Temperature(Option<&'static str>),
    Pressure(Option<&'static str>),
    Degrees,
    Percent,
}

fn unit_of(text: &str) -> Option<UnitOf> {
    let t = text.trim().to_lowercase().replace(['_', ' '], "");
    let t = t.trim_start_matches("in");
    Some(match t {
        "m/s" | "ms-1" | "ms^-1" | "mps" | "m/sec" | "meters/second" | "metres/second" => {
            UnitOf::Speed(None)
        }
        "mph" | "mi/h" | "miles/hour" => UnitOf::Speed(Some("mph")),
        "knots" | "knot" | "kn" | "kt" | "kts" => UnitOf::Speed(Some("knot")),
        "km/h" | "kmh" | "kph" | "km/hr" => UnitOf::Speed(Some("km/h")),
        "degc" | "°c" | "c" | "celsius" | "oc" | "ºc" => UnitOf::Temperature(None),
        "degf" | "°f" | "f" | "fahrenheit" | "of" | "ºf" => UnitOf::Temperature(Some("degF")),
        "k" | "kelvin" => UnitOf::Temperature(Some("K")),
        "hpa" => UnitOf::Pressure(None),
        "mbar" | "mb" | "millibar" => UnitOf::Pressure(Some("mbar")),
        "kpa" => UnitOf::Pressure(Some("kPa")),
        "pa" => UnitOf::Pressure(Some("Pa")),
        "deg" | "degrees" | "degree" | "°" | "degfromn" | "degn" | "degtrue" | "degt" | "º" => {
            UnitOf::Degrees
        }
        "%" | "percent" | "%rh" | "pct" => UnitOf::Percent,
        _ => return None,
    })
}

/// The unit named by the last word of a name (`wind_speed_mph`, `T_degC`).
fn suffix_unit(name: &str) -> Option<String> {
    let w = words(name);
    let last = w.last()?;
    if w.len() < 2 {
        return None;
    }
    match last.as_str() {
        "mph" | "kts" | "knots" | "kmh" | "kph" | "degc" | "degf" | "hpa" | "mbar" | "kpa"
        | "pct" => Some(last.clone()),
        "ms" => Some("m/s".into()),
        _ => None,
    }
}

/// The meaning of a column from its name and unit.
fn meaning_by_name(name: &str, unit: Option<UnitOf>) -> Meaning {
    let w = words(name);
    let has = |k: &[&str]| w.iter().any(|x| k.contains(&x.as_str()));
    let joined: String = w.concat();
    let statistic = has(&["sd", "std", "stdev", "stddev", "sigma", "sdev", "ti", "var"]);
    let directional = has(&[
        "dir",
        "direction",
        "wd",
        "wdir",
        "winddir",
        "dn",
        "dm",
        "dx",
    ]) || joined.contains("winddir")
        || joined.contains("richtung")
        || unit == Some(UnitOf::Degrees)
            && !has(&[
                "lat",
                "latitude",
                "lon",
                "longitude",
                "zenith",
                "azimuth",
                "elevation",
                "angle",
            ]);
    let gusty = has(&["gust", "gusts", "peak", "max", "maximum", "wsmax", "wgust"]);
    let speedy = has(&[
        "speed",
        "ws",
        "wspd",
        "spd",
        "windspeed",
        "windspd",
        "wsavg",
        "wsmean",
        "vel",
        "ff",
        "anemometer",
        "sknt",
        "wind",
    ]) || joined.contains("windspeed")
        || joined.contains("geschwindigkeit")
        || joined.contains("windspd")
        || matches!(unit, Some(UnitOf::Speed(_)));
    if directional {
        if statistic {
            return Meaning::Other("direction standard deviation");
        }
        return Meaning::Direction;
    }
    if speedy && !has(&["chill", "power", "energy", "run"]) {
        if statistic {
            return Meaning::Other("speed standard deviation");
        }
        if has(&["min", "minimum"]) {
            return Meaning::Other("minimum speed");
        }
        if gusty {
            return Meaning::Gust;
        }
        return Meaning::Speed;
    }
    if gusty && has(&["gust", "gusts", "wgust"]) {
        return Meaning::Gust;
    }
    if has(&["dew", "dewp", "dewpoint", "td", "dwpt", "dwpf"]) || joined.contains("dewpoint") {
        return Meaning::Other("dew point");
    }
    if has(&["rh", "humidity", "humid", "hum", "relh", "relhum"])
        || joined.contains("humidity")
        || joined.contains("feuchte")
        || joined.contains("relhum")
    {
        return Meaning::Humidity;
    }
    let temp_word = has(&[
        "temp",
        "temperature",
        "tair",
        "airtemp",
        "ta",
        "t",
        "tmp",
        "tc",
        "tf",
        "temps",
    ]) || joined.contains("temperat")
        || joined.contains("airtemp");
    if temp_word || matches!(unit, Some(UnitOf::Temperature(_))) {
        return Meaning::Temperature;
    }
    if has(&[
        "pressure",
        "pres",
        "press",
        "baro",
        "bp",
        "p",
        "slp",
        "mslp",
        "barometer",
        "pmsl",
        "stnp",
        "prs",
    ]) || joined.contains("pressure")
        || joined.contains("druck")
        || matches!(unit, Some(UnitOf::Pressure(_)))
    {
        return Meaning::Pressure;
    }
    if has(&["precip", "rain", "precipitation", "prcp", "p01i"]) {
        return Meaning::Other("precipitation");
    }
    if has(&["batt", "battery", "volt", "voltage", "vdc", "vbatt"]) {
        return Meaning::Other("a supply voltage");
    }
    if has(&[
        "solar",
        "radiation",
        "ghi",
        "dni",
        "dhi",
        "global",
        "direct",
        "diffuse",
        "irradiance",
        "swdn",
        "lw",
        "sw",
        "par",
    ]) {
        return Meaning::Other("radiation");
    }
    if has(&["visib", "visibility", "vis", "vsby"]) {
        return Meaning::Other("visibility");
    }
    if has(&[
        "record", "rec", "recnbr", "index", "id", "no", "nr", "seq", "unnamed",
    ]) {
        return Meaning::Other("a record number or index");
    }
    Meaning::Unknown
}

/// A role a column plays in a time made of several columns.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Role {
    Year,
    Month,
    Day,
    DayOfYear,
    Hour,
    Minute,
    Second,
    HourMinute,
}

impl Role {
    /// Every role.
    const ALL: [Role; 8] = [
        Role::Year,
        Role::Month,
        Role::Day,
        Role::DayOfYear,
        Role::Hour,
        Role::Minute,
        Role::Second,
        Role::HourMinute,
    ];

    fn spec(self) -> &'static str {
        match self {
            Role::Year => "%Y",
            Role::Month => "%m",
            Role::Day => "%d",
            Role::DayOfYear => "%j",
            Role::Hour => "%H",
            Role::Minute => "%M",
            Role::Second => "%S",
            Role::HourMinute => "%{hhmm}",
        }
    }
    fn fits(self, lo: f64, hi: f64) -> bool {
        let (a, b) = match self {
            Role::Year => (1900.0, 2100.0),
            Role::Month => (1.0, 12.0),
            Role::Day => (1.0, 31.0),
            Role::DayOfYear => (1.0, 366.0),
            Role::Hour => (0.0, 24.0),
            Role::Minute | Role::Second => (0.0, 59.0),
            Role::HourMinute => (0.0, 2400.0),
        };
        lo >= a && hi <= b
    }
    fn named(self, name: &str) -> bool {
        let w = words(name);
        let has = |k: &[&str]| w.iter().any(|x| k.contains(&x.as_str()));
        match self {
            Role::Year => has(&["year", "yr", "yyyy", "yy"]),
            Role::Month => has(&["month", "mon", "mo"]),
            Role::Day => has(&["day", "dd", "dom", "mday"]) && !has(&["doy", "julian"]),
            Role::DayOfYear => {
                has(&["doy", "jday", "julian", "jd", "yday", "dayofyear"])
                    || w.concat().contains("dayofyear")
            }
            Role::Hour => has(&["hour", "hr", "hh", "hours"]),
            Role::Minute => has(&["minute", "min", "mi", "minutes"]),
            Role::Second => has(&["second", "sec", "ss", "seconds"]),
            Role::HourMinute => has(&[
                "hhmm", "hrmn", "hourmin", "hm", "time", "mst", "lst", "utc", "ut", "cst", "est",
                "pst", "local",
            ]),
        }
    }
}

/// Orders of several time columns tried, in this order.
const PATTERNS: &[&[Role]] = &[
    &[
        Role::Year,
        Role::Month,
        Role::Day,
        Role::Hour,
        Role::Minute,
        Role::Second,
    ],
    &[Role::Year, Role::Month, Role::Day, Role::Hour, Role::Minute],
    &[
        Role::Year,
        Role::DayOfYear,
        Role::Hour,
        Role::Minute,
        Role::Second,
    ],
    &[Role::Year, Role::DayOfYear, Role::Hour, Role::Minute],
    &[Role::Year, Role::DayOfYear, Role::HourMinute],
    &[Role::Year, Role::Month, Role::Day, Role::HourMinute],
    &[Role::Year, Role::Month, Role::Day, Role::Hour],
    &[Role::Year, Role::DayOfYear, Role::Hour],
];

/// Formats tried on one text column, or two columns (date, time) joined by a
/// space.
const FORMATS: &[&str] = &[
    "%Y-%m-%d %H:%M:%S",
    "%Y-%m-%d %H:%M:%S.%f",
    "%Y-%m-%d %H:%M",
    "%Y-%m-%dT%H:%M:%S",
    "%Y-%m-%dT%H:%M:%S.%f",
    "%Y-%m-%dT%H:%M",
    "%Y/%m/%d %H:%M:%S",
    "%Y/%m/%d %H:%M",
    "%m/%d/%Y %H:%M:%S",
    "%m/%d/%Y %H:%M",
    "%d/%m/%Y %H:%M:%S",
    "%d/%m/%Y %H:%M",
    "%m/%d/%y %H:%M:%S",
    "%m/%d/%y %H:%M",
    "%d/%m/%y %H:%M",
    "%d.%m.%Y %H:%M:%S",
    "%d.%m.%Y %H:%M",
    "%d-%m-%Y %H:%M:%S",
    "%d-%m-%Y %H:%M",
    "%Y%m%d %H%M%S",
    "%Y%m%d %H%M",
    "%Y%m%d%H%M%S",
    "%Y%m%d%H%M",
    "%Y-%m-%d",
    "%m/%d/%Y",
    "%d.%m.%Y",
];

/// How a time is written, as drafted.
#[derive(Clone, Debug, PartialEq, Eq)]
enum TimeForm {
    /// RFC 3339 with its offset.
    Rfc3339,
    EpochS,
    EpochMs,
    Format(String),
}

/// A way of reading the time that reads every row.
#[derive(Clone, Debug)]
struct TimeGuess {
    cols: Vec<usize>,
    form: TimeForm,
    end_label: bool,
    /// Sample times (ms), in row order.
    times: Vec<i64>,
    /// Higher is better: the kind of reading (a time with its offset, an
    /// epoch, a format on text, numbers in columns), time-like names, fewer
    /// gaps between the columns, the longer common step (the plainer
    /// reading: a minute column read as seconds gives a step of 1 s), more
    /// columns, the earlier column.
    score: (u8, usize, i64, i64, i64, i64),
}

fn spec_of(form: &TimeForm, end: bool) -> Option<TimeSpec> {
    let form = match form {
        TimeForm::Rfc3339 => Form::Auto,
        TimeForm::EpochS => Form::EpochSeconds,
        TimeForm::EpochMs => Form::EpochMillis,
        TimeForm::Format(f) => Form::Format(Format::new(f).ok()?),
    };
    Some(TimeSpec {
        form,
        zone: Zone::Utc,
        label: if end { Label::End } else { Label::Start },
        period_ms: 0,
        skipped: Pick::Refuse,
        repeated: Pick::Refuse,
    })
}

/// The times of `rows` read from `cols` as `form` (start, else end labels
/// when only 24:00 stood in the way), if every row reads and the times mostly
/// increase with one common step.
fn try_time(rows: &[Vec<String>], cols: &[usize], form: &TimeForm) -> Option<(Vec<i64>, bool)> {
    let mut joined = String::new();
    'label: for end in [false, true] {
        let spec = spec_of(form, end)?;
        let mut times = Vec::with_capacity(rows.len());
        for r in rows {
            joined.clear();
            for (k, &c) in cols.iter().enumerate() {
                if k > 0 {
                    joined.push(' ');
                }
                joined.push_str(r.get(c)?.trim());
            }
            match spec.parse(joined.as_bytes()) {
                Ok(t) => times.push(t.millis()),
                Err(TimeProblem::Hour24) if !end => continue 'label,
                Err(_) => return None,
            }
        }
        return steady(&times).then_some((times, end));
    }
    None
}

/// The steps between consecutive times.
fn steps_of(times: &[i64]) -> Vec<i64> {
    times.windows(2).map(|w| w[1] - w[0]).collect()
}

/// Whether times mostly increase (at least 95 % of the steps) with one step
/// making at least half of them.
fn steady(times: &[i64]) -> bool {
    if times.len() < 2 {
        return !times.is_empty();
    }
    let steps: Vec<i64> = times.windows(2).map(|w| w[1] - w[0]).collect();
    let up = steps.iter().filter(|&&s| s > 0).count();
    if up * 100 < steps.len() * 95 {
        return false;
    }
    let (_, n) = mode(&steps);
    n * 2 >= up
}

/// The most common positive step and how often it occurs.
fn mode(steps: &[i64]) -> (i64, usize) {
    let mut count: BTreeMap<i64, usize> = BTreeMap::new();
    for &s in steps.iter().filter(|&&s| s > 0) {
        *count.entry(s).or_default() += 1;
    }
    count
        .into_iter()
        .max_by_key(|&(s, n)| (n, -s))
        .unwrap_or((0, 0))
}

/// Candidates for the time, best first.
fn find_time(rows: &[Vec<String>], cols: &[Col], header: bool) -> Vec<TimeGuess> {
    let mut found: Vec<TimeGuess> = Vec::new();
    let width = cols.len();
    let sample = |c: usize| rows.iter().take(50).filter_map(move |r| r.get(c));
    let named_time = |c: usize| {
        cols[c].name.as_deref().is_some_and(|n| {
            let w = words(n);
            w.iter().any(|x| {
                ["time", "date", "timestamp", "datetime", "ts", "utc"].contains(&x.as_str())
            })
        })
    };
    let mut push = |cols_: Vec<usize>, form: TimeForm, rank: u8, names: usize, gaps: i64| {
        if let Some((times, end)) = try_time(rows, &cols_, &form) {
            let step = mode(&steps_of(&times)).0;
            let n = cols_.len();
            let first = cols_[0] as i64;
            found.push(TimeGuess {
                cols: cols_,
                form,
                end_label: end,
                times,
                score: (rank, names, -gaps, step, n as i64, -first),
            });
        }
    };
    // One column: RFC 3339 with an offset, epoch seconds or milliseconds, a format.
    for c in 0..width.min(TIME_COLUMNS * 4) {
        let names = usize::from(named_time(c));
        let texts: Vec<&String> = sample(c).collect();
        if texts.is_empty() {
            continue;
        }
        if texts.iter().all(|t| t.contains(':') && t.contains('-')) {
            push(vec![c], TimeForm::Rfc3339, 5, names, 0);
        }
        let digits = |t: &str| {
            let (int, frac) = t.split_once('.').unwrap_or((t, ""));
            (int.bytes().all(|b| b.is_ascii_digit()) && frac.bytes().all(|b| b.is_ascii_digit()))
                .then_some((int.len(), frac.len()))
        };
        let shapes: Option<Vec<(usize, usize)>> = texts.iter().map(|t| digits(t)).collect();
        if let Some(shapes) = shapes {
            if shapes.iter().all(|&(i, _)| (9..=10).contains(&i)) {
                push(vec![c], TimeForm::EpochS, 4, names, 0);
            } else if shapes
                .iter()
                .all(|&(i, f)| (12..=13).contains(&i) && f == 0)
            {
                push(vec![c], TimeForm::EpochMs, 4, names, 0);
            }
        }
        if texts
            .iter()
            .all(|t| t.bytes().any(|b| matches!(b, b'-' | b'/' | b'.' | b':')) || t.len() >= 12)
        {
            for f in FORMATS {
                push(vec![c], TimeForm::Format((*f).into()), 3, names, 0);
            }
            // A date and a time in two columns.
            if c + 1 < width {
                let names2 = names + usize::from(named_time(c + 1));
                for f in FORMATS.iter().filter(|f| f.contains(' ')) {
                    push(vec![c, c + 1], TimeForm::Format((*f).into()), 3, names2, 0);
                }
            }
        }
    }
    // Several whole-number columns: year, month, day, hour ...
    let fits: Vec<Vec<Role>> = (0..width.min(TIME_COLUMNS))
        .map(|c| {
            let col = &cols[c];
            if !(col.integer && col.numbers == rows.len() && col.codes.is_empty()) {
                return Vec::new();
            }
            Role::ALL
                .into_iter()
                .filter(|r| {
                    r.fits(col.min, col.max)
                        && (*r != Role::HourMinute
                            || col.distinct.iter().all(|v| v.rem_euclid(100) < 60))
                })
                .collect()
        })
        .collect();
    for (pi, pat) in PATTERNS.iter().enumerate() {
        let mut chosen = Vec::new();
        assign(pat, 0, &fits, &mut chosen, &mut |cs: &[usize]| {
            let names = if header {
                cs.iter()
                    .zip(pat.iter())
                    .filter(|(c, r)| cols[**c].name.as_deref().is_some_and(|n| r.named(n)))
                    .count()
            } else {
                0
            };
            // Gaps between the columns, but after the year (often followed
            // by a day of the year the pattern does not use).
            let gaps: i64 = cs
                .windows(2)
                .skip(1)
                .map(|w| (w[1] - w[0]) as i64 - 1)
                .sum();
            let f: Vec<&str> = pat.iter().map(|r| r.spec()).collect();
            let _ = pi;
            push(cs.to_vec(), TimeForm::Format(f.join(" ")), 2, names, gaps);
        });
    }
    found.sort_by_key(|g| std::cmp::Reverse(g.score));
    found
}

/// Calls `f` for every choice of increasing columns taking the roles `pat`.
fn assign(
    pat: &[Role],
    from: usize,
    fits: &[Vec<Role>],
    chosen: &mut Vec<usize>,
    f: &mut dyn FnMut(&[usize]),
) {
    let Some((role, rest)) = pat.split_first() else {
        f(chosen);
        return;
    };
    for c in from..fits.len() {
        if fits[c].contains(role) {
            chosen.push(c);
            assign(rest, c + 1, fits, chosen, f);
            chosen.pop();
        }
    }
}

/// A channel drafted.
struct Chan {
    col: usize,
    id: String,
    meaning: Meaning,
    why: String,
    quality: Option<(usize, String)>,
}

/// Drafts a station file from the lines of `sniff` (of the file `name`).
pub fn draft(name: &str, sniff: &Sniff) -> Result<Draft> {
    let lines: Vec<(usize, &str)> = sniff.lines.iter().map(|(n, s)| (*n, s.as_str())).collect();
    let comment_lines = lines
        .iter()
        .filter(|(_, s)| s.trim_start().starts_with('#'))
        .count();
    // Records: not blank (the reader skips blank lines), not comments.
    let recs: Vec<(usize, &str)> = lines
        .iter()
        .copied()
        .filter(|(_, s)| !s.trim().is_empty() && !s.trim_start().starts_with('#'))
        .collect();
    let read = format!(
        "{} {} ({} bytes{})",
        lines.len(),
        if lines.len() == 1 { "line" } else { "lines" },
        sniff.bytes,
        if sniff.whole { ", the whole file" } else { "" }
    );
    if recs.is_empty() {
        bail!("{name}: no lines with fields in the first {read}");
    }

    // The delimiter: the most lines with one field count, at least 2.
    let mut best: Option<(Delim, usize, usize, usize)> = None; // delim, fields, start, consistent
    for d in [Delim::Tab, Delim::Semicolon, Delim::Comma, Delim::Spaces] {
        let counts: Vec<usize> = recs.iter().map(|(_, s)| split(s, d).len()).collect();
        let (fields, _) = mode(&counts.iter().map(|&c| c as i64).collect::<Vec<_>>());
        let fields = fields as usize;
        if fields < 2 {
            continue;
        }
        // The block: from the first line where this count holds on the next
        // few lines too.
        let Some(start) =
            (0..counts.len()).find(|&i| counts[i..].iter().take(5).all(|&c| c == fields))
        else {
            continue;
        };
        let consistent = counts[start..].iter().filter(|&&c| c == fields).count();
        let better = match best {
            None => true,
            Some((_, bf, _, bc)) => (consistent, fields) > (bc, bf),
        };
        if better {
            best = Some((d, fields, start, consistent));
        }
    }
    let Some((delim, fields, start, consistent)) = best else {
        bail!(
            "{name}: no table in the first {read}: no delimiter (comma, semicolon, tab, spaces) gives the same number of fields, at least 2, on consecutive lines"
        );
    };
    let block: Vec<(usize, Vec<String>)> = recs[start..]
        .iter()
        .map(|(n, s)| (*n, split(s, delim)))
        .filter(|(_, f)| f.len() == fields)
        .collect();
    let odd = recs.len() - start - block.len();

    // Decimal comma: numbers written 3,5 and none written 3.5.
    let body = &block[block.len().min(3).min(block.len().saturating_sub(1))..];
    let decimal_comma = delim != Delim::Comma && {
        let mut comma = 0usize;
        let mut point = 0usize;
        for (_, f) in body.iter().take(500) {
            for x in f {
                let t = x.trim_start_matches(['-', '+']);
                let shape = |sep: char| {
                    t.split_once(sep).is_some_and(|(a, b)| {
                        !a.is_empty()
                            && !b.is_empty()
                            && a.bytes().all(|c| c.is_ascii_digit())
                            && b.bytes().all(|c| c.is_ascii_digit())
                    })
                };
                comma += usize::from(shape(','));
                point += usize::from(shape('.'));
            }
        }
        comma > 0 && point == 0
    };
    let is_num = |s: &str| number(s, decimal_comma).is_some() || is_nan_text(s.trim());
    // Which columns hold numbers in the body.
    let numeric_col: Vec<bool> = (0..fields)
        .map(|c| {
            let (mut n, mut filled) = (0usize, 0usize);
            for (_, f) in body.iter().take(500) {
                let x = f[c].trim();
                if !x.is_empty() {
                    filled += 1;
                    n += usize::from(is_num(x));
                }
            }
            n > 0 && n * 2 >= filled
        })
        .collect();
    let wordy = |f: &[String]| {
        let num_cols = numeric_col.iter().filter(|&&b| b).count();
        let words = f
            .iter()
            .zip(&numeric_col)
            .filter(|(x, &numeric)| numeric && !x.trim().is_empty() && !is_num(x))
            .count();
        num_cols > 0 && words * 2 >= num_cols.max(1) && words > 0
    };
    let mut pre = 0usize; // block lines before the data
    while pre < block.len().saturating_sub(1) && pre < 4 && wordy(&block[pre].1) {
        pre += 1;
    }
    let (header, units_line, positional) = match pre {
        0 => (false, false, false),
        1 => (true, false, false),
        2 => (true, true, false),
        _ => (false, false, true),
    };
    let data: Vec<&Vec<String>> = block[pre..].iter().map(|(_, f)| f).collect();
    if data.is_empty() {
        bail!("{name}: no data rows in the first {read}: only a header");
    }
    let first_data_line = block[pre].0;
    let header_line = block.first().map_or(1, |b| b.0);
    let names: Vec<Option<String>> = (0..fields)
        .map(|c| {
            (pre > 0)
                .then(|| block[0].1[c].trim().to_string())
                .filter(|s| !s.is_empty())
        })
        .collect();
    let units: Vec<Option<String>> = (0..fields)
        .map(|c| {
            (pre > 1)
                .then(|| block[1].1[c].trim().to_string())
                .filter(|s| !s.is_empty())
        })
        .collect();

    // Column statistics.
    let stats = |rows: &[&Vec<String>]| -> Vec<Col> {
        let mut cols: Vec<Col> = (0..fields)
            .map(|c| {
                let name = names[c].clone();
                let unit = units[c]
                    .clone()
                    .or_else(|| name.as_deref().and_then(bracket_unit))
                    .or_else(|| name.as_deref().and_then(suffix_unit));
                Col {
                    name,
                    unit,
                    min: f64::INFINITY,
                    max: f64::NEG_INFINITY,
                    integer: true,
                    ..Col::default()
                }
            })
            .collect();
        for r in rows {
            for (c, col) in cols.iter_mut().enumerate() {
                let x = r[c].trim();
                if x.is_empty() || is_nan_text(x) {
                    continue;
                }
                col.filled += 1;
                match number(x, decimal_comma) {
                    Some(v) if CODES.contains(&v) => {
                        if col.codes.len() < 4 {
                            col.codes.insert(x.to_string());
                        }
                    }
                    Some(v) => {
                        col.numbers += 1;
                        col.min = col.min.min(v);
                        col.max = col.max.max(v);
                        col.dec = col.dec.max(decimals(x, v));
                        col.integer &= v.fract() == 0.0;
                        if col.distinct.len() <= 400 && v.fract() == 0.0 && v.abs() < 1e15 {
                            col.distinct.insert(v as i64);
                        } else if v.fract() != 0.0 {
                            col.distinct.insert(i64::MAX);
                        }
                        if let Some(l) = col.last {
                            col.steps += (v - l).abs();
                            if v > l {
                                col.rises += 1;
                            } else if v < l {
                                col.falls += 1;
                            }
                        }
                        col.last = Some(v);
                    }
                    None => {
                        if col.texts.len() < 8 || col.texts.contains_key(x) {
                            *col.texts.entry(x.to_string()).or_default() += 1;
                        }
                    }
                }
            }
        }
        for col in &mut cols {
            if col.numbers == 0 {
                col.min = 0.0;
                col.max = 0.0;
                col.integer = false;
            }
        }
        cols
    };
    let mut cols = stats(&data);

    // The time; rows of several stations filtered if that is what it takes.
    let mut filter: Option<(usize, String)> = None;
    let mut guesses = find_time(
        &data.iter().map(|r| (*r).clone()).collect::<Vec<_>>(),
        &cols,
        header,
    );
    let station_col = (0..fields).find(|&c| {
        let col = &cols[c];
        col.numbers == 0 && !col.texts.is_empty() && col.texts.len() <= 8
    });
    if guesses.is_empty() {
        if let Some(sc) = station_col {
            if cols[sc].texts.len() >= 2 {
                let keep = data[0][sc].trim().to_string();
                let rows: Vec<Vec<String>> = data
                    .iter()
                    .filter(|r| r[sc].trim() == keep)
                    .map(|r| (*r).clone())
                    .collect();
                let refs: Vec<&Vec<String>> = rows.iter().collect();
                let c2 = stats(&refs);
                let g = find_time(&rows, &c2, header);
                if !g.is_empty() {
                    guesses = g;
                    cols = c2;
                    filter = Some((sc, keep));
                }
            }
        }
    }
    let time = guesses.first().cloned();
    let time_cols: BTreeSet<usize> = time.iter().flat_map(|t| t.cols.iter().copied()).collect();

    // The sample period and the interval.
    let steps: Vec<i64> = time
        .as_ref()
        .map(|t| t.times.windows(2).map(|w| w[1] - w[0]).collect())
        .unwrap_or_default();
    let (period_ms, period_n) = mode(&steps);
    let ups = steps.iter().filter(|&&s| s > 0).count();
    let period_known = period_ms > 0;
    let period_ms = if period_known { period_ms } else { 60_000 };
    let interval_s = [600u32, 3600, 86_400]
        .into_iter()
        .chain((1..=86_400u32).filter(|d| 86_400 % d == 0))
        .find(|&i| {
            let ms = i64::from(i) * 1000;
            ms % period_ms == 0 && ms / period_ms >= 3
        });

    // The channels.
    let mut chans: Vec<Chan> = Vec::new();
    let mut used: BTreeSet<usize> = time_cols.clone();
    if let Some((c, _)) = &filter {
        used.insert(*c);
    }
    let mut counters: BTreeMap<&'static str, usize> = BTreeMap::new();
    let mut next_id = |base: &'static str| {
        let n = counters.entry(base).or_default();
        *n += 1;
        if *n == 1 {
            base.to_string()
        } else {
            format!("{base}{n}")
        }
    };
    let meaning: Vec<Meaning> = cols
        .iter()
        .map(|c| match c.name.as_deref() {
            Some(n) if !positional => meaning_by_name(n, c.unit.as_deref().and_then(unit_of)),
            Some(n) => meaning_by_name(n, c.unit.as_deref().and_then(unit_of)),
            None => Meaning::Unknown,
        })
        .collect();
    // Texts that stand for a missing reading among numbers: those of the
    // columns of numbers, and the codes they hold.
    let mut missing: BTreeSet<String> = BTreeSet::new();
    for col in cols.iter().filter(|c| c.numeric()) {
        for code in &col.codes {
            missing.insert(code.clone());
            if let Some(v) = number(code, decimal_comma) {
                missing.insert(format!("{v}"));
                missing.insert(format!("{v:.1}"));
            }
        }
        missing.extend(col.texts.keys().filter(|t| t.len() <= 64).cloned());
    }
    // A column named like a measurement whose rows read are all missing.
    let blank = |c: usize| {
        let col = &cols[c];
        col.numbers == 0
            && col.filled > 0
            && (!col.codes.is_empty() || !col.texts.is_empty())
            && col.texts.keys().all(|t| missing.contains(t))
            && matches!(
                meaning[c],
                Meaning::Speed
                    | Meaning::Gust
                    | Meaning::Direction
                    | Meaning::Temperature
                    | Meaning::Humidity
                    | Meaning::Pressure
            )
    };
    let vc = |used: &BTreeSet<usize>, c: usize| -> bool {
        !used.contains(&c) && (cols[c].numeric() || blank(c))
    };
    // Speed and direction by name, vetoed by values that cannot be.
    let mut speed_cols: Vec<(usize, Meaning, String)> = Vec::new();
    let mut dir_cols: Vec<(usize, String)> = Vec::new();
    for c in 0..fields {
        if !vc(&used, c) {
            continue;
        }
        let col = &cols[c];
        match meaning[c] {
            Meaning::Speed | Meaning::Gust if col.min >= 0.0 || col.min > -1.0 => {
                let why = format!(
                    "the name says {}",
                    if meaning[c] == Meaning::Gust {
                        "gust"
                    } else {
                        "wind speed"
                    }
                );
                speed_cols.push((c, meaning[c], why));
            }
            Meaning::Direction if col.min >= -1.0 && col.max <= 720.0 => {
                dir_cols.push((c, "the name says wind direction".into()));
            }
            _ => {}
        }
    }
    // By values when the names do not tell: a direction is 0 to 360 and
    // varies widely; a speed is small, not negative, and comes just before it.
    let speed_like = |col: &Col| {
        col.min >= 0.0
            && col.max <= 60.0
            && col.max >= 0.5
            && col.varies()
            && !col.codes_like()
            && !col.monotone()
    };
    let dir_like = |col: &Col| {
        col.min >= 0.0 && col.max <= 360.0 && col.max - col.min >= 45.0 && !col.monotone()
    };
    let unknown = |c: usize| {
        matches!(meaning[c], Meaning::Unknown) || positional && meaning[c] == Meaning::Unknown
    };
    if dir_cols.is_empty() {
        // Directions right after a speed-like column (quality codes between allowed).
        for c in 0..fields {
            if !(vc(&used, c) && unknown(c) && dir_like(&cols[c])) {
                continue;
            }
            let before = (0..c)
                .rev()
                .find(|&b| !cols[b].codes_like() || !vc(&used, b))
                .filter(|&b| {
                    vc(&used, b)
                        && speed_like(&cols[b])
                        && (unknown(b) || matches!(meaning[b], Meaning::Speed))
                });
            if let Some(b) = before {
                dir_cols.push((
                    c,
                    "CHECK: no name; values like a direction, after a column like a speed"
                        .to_string(),
                ));
                if !speed_cols.iter().any(|s| s.0 == b) {
                    speed_cols.push((
                        b,
                        Meaning::Speed,
                        "CHECK: no name; values like a speed, before a column like a direction"
                            .to_string(),
                    ));
                }
            }
        }
    }
    if speed_cols.iter().all(|s| s.1 != Meaning::Speed) {
        if let Some(c) = (0..fields).find(|&c| {
            vc(&used, c) && unknown(c) && speed_like(&cols[c]) && !dir_cols.iter().any(|d| d.0 == c)
        }) {
            speed_cols.push((
                c,
                Meaning::Speed,
                "CHECK: only the values suggest a speed".to_string(),
            ));
        }
    }
    speed_cols.sort_by_key(|s| s.0);
    dir_cols.sort_by_key(|d| d.0);
    for (c, m, why) in speed_cols {
        let id = next_id(if m == Meaning::Gust { "gust" } else { "ws" });
        chans.push(Chan {
            col: c,
            id,
            meaning: m,
            why,
            quality: None,
        });
        used.insert(c);
    }
    for (c, why) in dir_cols {
        let id = next_id("wd");
        chans.push(Chan {
            col: c,
            id,
            meaning: Meaning::Direction,
            why,
            quality: None,
        });
        used.insert(c);
    }
    // Temperature, humidity, pressure: the first of each (air temperature first).
    let scalar = |used: &BTreeSet<usize>, m: Meaning, prefer: &[&str]| -> Option<usize> {
        let cands: Vec<usize> = (0..fields)
            .filter(|&c| vc(used, c) && meaning[c] == m)
            .collect();
        cands
            .iter()
            .copied()
            .find(|&c| {
                let w = words(cols[c].name.as_deref().unwrap_or(""));
                w.iter().any(|x| prefer.contains(&x.as_str()))
            })
            .or_else(|| cands.first().copied())
    };
    for (m, base, prefer) in [
        (
            Meaning::Temperature,
            "t",
            &["air", "tair", "ta", "airtemp"][..],
        ),
        (Meaning::Humidity, "rh", &["rh", "relative"][..]),
        (
            Meaning::Pressure,
            "p",
            &["station", "stn", "baro", "pressure"][..],
        ),
    ] {
        let c = scalar(&used, m, prefer);
        let c = c.or_else(|| {
            // A pressure by its values: 500 to 1100 hPa, changing slowly.
            (m == Meaning::Pressure)
                .then(|| {
                    (0..fields).find(|&c| {
                        vc(&used, c)
                            && unknown(c)
                            && cols[c].min >= 500.0
                            && cols[c].max <= 1100.0
                            && cols[c].max - cols[c].min < 60.0
                    })
                })
                .flatten()
        });
        if let Some(c) = c {
            let why = if meaning[c] == m {
                format!(
                    "the name says {}",
                    match m {
                        Meaning::Temperature => "temperature",
                        Meaning::Humidity => "humidity",
                        _ => "pressure",
                    }
                )
            } else {
                "CHECK: only the values suggest air pressure in hPa".to_string()
            };
            chans.push(Chan {
                col: c,
                id: next_id(base),
                meaning: m,
                why,
                quality: None,
            });
            used.insert(c);
        }
    }
    chans.sort_by_key(|ch| ch.col);
    // Quality codes right after a channel's column.
    for ch in &mut chans {
        let qc = ch.col + 1;
        if qc < fields && !used.contains(&qc) && cols[qc].codes_like() && !cols[ch.col].codes_like()
        {
            let named_q = cols[qc].name.as_deref().is_none_or(|n| {
                let w = words(n);
                w.iter().any(|x| {
                    ["qc", "q", "flag", "flg", "quality", "qa", "status"].contains(&x.as_str())
                }) || w
                    .iter()
                    .any(|x| x.starts_with("qc") || x.starts_with("flag"))
            });
            if named_q {
                let good = cols[qc].distinct.iter().next().copied().unwrap_or(0);
                ch.quality = Some((qc, good.to_string()));
                used.insert(qc);
            }
        }
    }
    if chans.is_empty() {
        // Nothing recognised: the first column of numbers as a placeholder.
        if let Some(c) = (0..fields).find(|&c| vc(&used, c)) {
            chans.push(Chan {
                col: c,
                id: next_id("x"),
                meaning: Meaning::Unknown,
                why: "CHECK: nothing was recognised; the first column of numbers, as a placeholder"
                    .into(),
                quality: None,
            });
            used.insert(c);
        } else {
            bail!("{name}: no column of numbers in lines {first_data_line}-{}: nothing to draft channels from", block.last().map_or(first_data_line, |b| b.0));
        }
    }
    chans.truncate(config::MAX_CHANNELS);

    let missing: Vec<String> = missing.into_iter().take(MAX_MISSING).collect();

    // Where a column is: by name when the header names it once, else by position.
    let by_name = |c: usize| -> Option<&str> {
        if !header {
            return None;
        }
        let n = names[c].as_deref()?;
        (names.iter().filter(|m| m.as_deref() == Some(n)).count() == 1).then_some(n)
    };
    let col_ref = |c: usize| match by_name(c) {
        Some(n) => q(n),
        None => format!("{}", c + 1),
    };
    let col_said = |c: usize| match names[c].as_deref() {
        Some(n) => format!("column {} {}", c + 1, q(n)),
        None => format!("column {}", c + 1),
    };

    // The text.
    let mut o = String::new();
    let mut found: Vec<String> = Vec::new();
    let _ = writeln!(
        o,
        "# Station file drafted by `tenmin draft` from {}.",
        q(name)
    );
    let _ = writeln!(
        o,
        "# A starting point to check and edit, not a finished station file: every"
    );
    let _ = writeln!(o, "# guess below comes from the first {read} of the file.");
    let _ = writeln!(
        o,
        "# Check the lines marked CHECK (the time zone first), then try it:"
    );
    let _ = writeln!(
        o,
        "#   tenmin replay --config THIS-FILE.toml {} -o records.csv",
        shell_word(name)
    );
    let _ = writeln!(o, "#");
    let _ = writeln!(o, "# What was found:");
    let _ = writeln!(
        o,
        "#   delimiter: {} ({} of the {} lines from line {} have {} fields{})",
        delim.said(),
        consistent,
        recs.len() - start,
        recs[start].0,
        fields,
        if odd > 0 {
            format!("; {odd} lines with other counts were left out of the guesses")
        } else {
            String::new()
        }
    );
    found.push(format!("delimiter {}", delim.said()));
    let skip = if positional {
        first_data_line - 1
    } else {
        header_line - 1
    };
    if recs[start].0 > 1 {
        let first_pre = recs.first().map_or("", |r| r.1);
        let _ = writeln!(
            o,
            "#   lines before the table: {} (the first: {})",
            recs[start].0 - 1,
            q(&clip(first_pre.trim(), 60))
        );
    }
    if comment_lines > 0 {
        let _ = writeln!(o, "#   comment lines starting with \"#\": {comment_lines}");
    }
    if header {
        let _ = writeln!(
            o,
            "#   header: line {header_line} (its fields are names where the data hold numbers)"
        );
        found.push(format!("header line {header_line}"));
    } else if positional {
        let _ = writeln!(
            o,
            "#   header: lines {header_line} to {} hold names and units, more than [input] declares",
            first_data_line - 1
        );
        let _ = writeln!(
            o,
            "#     (a header and one units line): they are skipped and columns given by position"
        );
        found.push(format!("{pre} header lines, columns by position"));
    } else {
        let _ = writeln!(o, "#   header: none (line {first_data_line} is already data): columns by position, counted from 1");
        found.push("no header".into());
    }
    if units_line {
        let _ = writeln!(o, "#   units line: line {}", block[1].0);
    }
    if decimal_comma {
        let _ = writeln!(o, "#   decimal comma: numbers are written 3,5");
    }
    let time_said = match &time {
        Some(t) => {
            let cs: Vec<String> = t.cols.iter().map(|&c| col_said(c)).collect();
            let how = match &t.form {
                TimeForm::Rfc3339 => "RFC 3339 with its UTC offset".to_string(),
                TimeForm::EpochS => "seconds since 1970-01-01 UTC".to_string(),
                TimeForm::EpochMs => "milliseconds since 1970-01-01 UTC".to_string(),
                TimeForm::Format(f) => format!("the format {}", q(f)),
            };
            let _ = writeln!(
                o,
                "#   time: {} read as {how}: every one of the {} rows read",
                cs.join(", "),
                t.times.len()
            );
            if let Some(other) = guesses
                .iter()
                .find(|g| g.times != t.times && g.cols != t.cols)
            {
                let cs: Vec<String> = other.cols.iter().map(|&c| col_said(c)).collect();
                let how = match &other.form {
                    TimeForm::Format(f) => q(f),
                    TimeForm::Rfc3339 => "RFC 3339".into(),
                    TimeForm::EpochS => "epoch seconds".into(),
                    TimeForm::EpochMs => "epoch milliseconds".into(),
                };
                let _ = writeln!(
                    o,
                    "#     CHECK: also readable, giving other times: {} as {how}",
                    cs.join(", ")
                );
            }
            found.push(format!("time {}", cs.join(", ")));
            true
        }
        None => {
            let _ = writeln!(o, "#   time: CHECK: no column or columns were read as times in every row: fill in [input.time]");
            found.push("no time found".into());
            false
        }
    };
    if period_known {
        let _ = writeln!(
            o,
            "#   sample period: {} ({period_n} of the {ups} steps between the times read)",
            secs(period_ms)
        );
    } else if time_said {
        let _ = writeln!(
            o,
            "#   sample period: CHECK: unknown (fewer than two rows read), 60 s written"
        );
    }
    if let Some((c, v)) = &filter {
        let _ = writeln!(
            o,
            "#   rows of several stations: {} holds {} values; the draft keeps {}",
            col_said(*c),
            cols[*c].texts.len(),
            q(v)
        );
    }
    if !missing.is_empty() {
        let shown: Vec<String> = missing.iter().map(|m| q(m)).collect();
        let _ = writeln!(
            o,
            "#   missing values written as: {} (besides empty fields and NaN)",
            shown.join(", ")
        );
    }
    let _ = writeln!(o);

    // [logging]
    let _ = writeln!(o, "[logging]");
    match interval_s {
        Some(i) => {
            let n = i64::from(i) * 1000 / period_ms;
            let what = match i {
                600 => "10-minute records".to_string(),
                3600 => "hourly records".to_string(),
                86_400 => "daily records".to_string(),
                _ => format!("{i}-second records"),
            };
            let _ = writeln!(
                o,
                "interval_s = {i:<12} # {what}, {n} samples each (at least 3 per interval)"
            );
        }
        None => {
            let _ = writeln!(o, "interval_s = 600           # CHECK: the sample period does not divide any interval of a day evenly");
        }
    }
    if period_ms <= 1000 && 1000 % period_ms == 0 {
        let _ = writeln!(
            o,
            "sample_rate_hz = {:<8} # {} between rows",
            1000 / period_ms,
            secs(period_ms)
        );
    } else if period_ms <= 3_600_000 {
        let _ = writeln!(
            o,
            "sample_period_s = {:<7} # {}the most common step between the times read",
            fmt_secs(period_ms),
            if period_known { "" } else { "CHECK: " }
        );
    } else {
        let _ = writeln!(o, "sample_period_s = 3600   # CHECK: the rows are {} apart; this build takes at most 3600 s", secs(period_ms));
    }
    let _ = writeln!(
        o,
        "missing_values = []       # the file's missing-value codes are texts in [input] missing"
    );
    let _ = writeln!(o);
    let stem = Path::new(name)
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    let stem = stem
        .strip_suffix(".csv")
        .or(stem.strip_suffix(".dat"))
        .or(stem.strip_suffix(".txt"))
        .unwrap_or(&stem)
        .to_string();
    let _ = writeln!(o, "[station]");
    let _ = writeln!(o, "name = {}   # CHECK: from the file name", q(&stem));
    let _ = writeln!(o);

    // [input]
    let _ = writeln!(o, "[input]");
    let _ = writeln!(o, "delimiter = {}", delim.toml());
    if skip > 0 {
        let _ = writeln!(
            o,
            "skip_lines = {skip:<10} # lines before the {}",
            if header { "header" } else { "first data line" }
        );
    }
    if !header {
        let _ = writeln!(
            o,
            "header = false            # columns by position, counted from 1"
        );
    }
    if units_line {
        let _ = writeln!(
            o,
            "units_line = true         # line {} holds units",
            block[1].0
        );
    }
    if comment_lines > 0 {
        let _ = writeln!(o, "comment = \"#\"");
    }
    if decimal_comma {
        let _ = writeln!(o, "decimal = \",\"");
    }
    if !missing.is_empty() {
        let shown: Vec<String> = missing.iter().map(|m| q(m)).collect();
        let _ = writeln!(
            o,
            "missing = [{}]   # CHECK: texts seen among the numbers",
            shown.join(", ")
        );
    }
    if let Some((c, v)) = &filter {
        let _ = writeln!(
            o,
            "filter = {{ column = {}, value = {} }}   # CHECK: the rows of one station",
            col_ref(*c),
            q(v)
        );
    } else if let Some(sc) = station_col.filter(|c| !used.contains(c)) {
        if let Some(v) = data.first().map(|r| r[sc].trim().to_string()) {
            let _ = writeln!(
                o,
                "# filter = {{ column = {}, value = {} }}   # {} holds texts ({}): if the file holds rows of several stations, keep one",
                col_ref(sc),
                q(&v),
                col_said(sc),
                cols[sc].texts.keys().take(4).map(|t| q(t)).collect::<Vec<_>>().join(", ")
            );
        }
    }
    let _ = writeln!(o);

    // [input.time]
    let _ = writeln!(o, "[input.time]");
    match &time {
        Some(t) => {
            if t.cols.len() == 1 {
                let _ = writeln!(o, "column = {}", col_ref(t.cols[0]));
            } else {
                let cs: Vec<String> = t.cols.iter().map(|&c| col_ref(c)).collect();
                let _ = writeln!(o, "columns = [{}]", cs.join(", "));
            }
            match &t.form {
                TimeForm::Rfc3339 => {
                    let _ = writeln!(
                        o,
                        "# RFC 3339: each time carries its UTC offset, no zone needed"
                    );
                }
                TimeForm::EpochS => {
                    let _ = writeln!(
                        o,
                        "epoch = \"s\"               # CHECK: seconds since 1970-01-01T00:00:00Z"
                    );
                }
                TimeForm::EpochMs => {
                    let _ = writeln!(o, "epoch = \"ms\"              # CHECK: milliseconds since 1970-01-01T00:00:00Z");
                }
                TimeForm::Format(f) => {
                    let _ = writeln!(o, "format = {}", q(f));
                    if f.contains("%d/%m") || f.contains("%m/%d") {
                        let other = if f.contains("%d/%m") {
                            f.replace("%d/%m", "%m/%d")
                        } else {
                            f.replace("%m/%d", "%d/%m")
                        };
                        if guesses
                            .iter()
                            .any(|g| g.form == TimeForm::Format(other.clone()))
                        {
                            let _ = writeln!(o, "# CHECK: {} reads the rows too: day and month cannot be told apart here", q(&other));
                        }
                    }
                    let _ = writeln!(o, "zone = \"UTC\"              # CHECK: the file does not say; use \"+01:00\" or a zone name (\"Europe/Berlin\") for local times");
                    let hints: Vec<String> = (0..fields)
                        .filter_map(|c| names[c].as_deref())
                        .filter(|n| {
                            words(n).iter().any(|w| {
                                [
                                    "mst", "lst", "local", "pst", "cst", "est", "akst", "hst",
                                    "cet", "eet", "lt", "standard",
                                ]
                                .contains(&w.as_str())
                            })
                        })
                        .map(q)
                        .collect();
                    if !hints.is_empty() {
                        let _ = writeln!(
                            o,
                            "# CHECK: the header names {}: the times may be local standard time all year (for example MST is -07:00, as zone = \"-07:00\")",
                            hints.join(", ")
                        );
                    }
                    if t.end_label {
                        let _ = writeln!(o, "label = \"end\"             # some stamps read 24:00: each stamp ends its period");
                    } else {
                        let _ = writeln!(o, "label = \"start\"           # CHECK: \"end\" if a stamp marks the end of its sample's period");
                    }
                }
            }
        }
        None => {
            let _ = writeln!(
                o,
                "# CHECK: no time was found: this draft does not load until you name the"
            );
            let _ = writeln!(
                o,
                "# time column(s) and their format here (see `tenmin draft --help`)."
            );
            let _ = writeln!(
                o,
                "columns = []              # CHECK: such as [1, 2] or [\"Date\", \"Time\"]"
            );
            let _ = writeln!(
                o,
                "format = \"\"               # CHECK: such as \"%Y-%m-%d %H:%M:%S\""
            );
        }
    }
    let _ = writeln!(o);

    // The channels.
    let first_speed = chans
        .iter()
        .find(|c| c.meaning == Meaning::Speed)
        .map(|c| (c.col, c.id.clone()));
    for ch in &chans {
        let col = &cols[ch.col];
        let unit = col.unit.as_deref().and_then(unit_of);
        let _ = writeln!(o, "[[channel]]");
        let _ = writeln!(o, "id = {}", q(&ch.id));
        let kind = match ch.meaning {
            Meaning::Speed | Meaning::Gust => "speed",
            Meaning::Direction => "direction",
            _ => "scalar",
        };
        let _ = writeln!(o, "kind = \"{kind}\"");
        let (chan_unit, source, note) = match (ch.meaning, unit) {
            (Meaning::Speed | Meaning::Gust, Some(UnitOf::Speed(s))) => ("m/s", s, None),
            (Meaning::Speed | Meaning::Gust, _) => ("m/s", None, Some("CHECK: the file gives no speed unit: m/s assumed; for others add source_unit = \"mph\", \"knot\" or \"km/h\"")),
            (Meaning::Direction, _) => ("deg", None, None),
            (Meaning::Temperature, Some(UnitOf::Temperature(s))) => ("degC", s, None),
            (Meaning::Temperature, _) if col.numbers > 0 && col.min >= 200.0 && col.max <= 350.0 => ("degC", Some("K"), Some("CHECK: no unit in the file; values over 200 look like kelvin")),
            (Meaning::Temperature, _) if col.numbers > 0 && col.max > 60.0 && col.min >= -80.0 && col.max <= 140.0 => ("degC", Some("degF"), Some("CHECK: no unit in the file; values over 60 look like degrees F")),
            (Meaning::Temperature, _) => ("degC", None, Some("CHECK: the file gives no unit: degC assumed; add source_unit = \"degF\" or \"K\" for others")),
            (Meaning::Humidity, _) => ("%", None, None),
            (Meaning::Pressure, Some(UnitOf::Pressure(s))) => ("hPa", s, None),
            (Meaning::Pressure, _) if col.min >= 50.0 && col.max <= 110.0 => ("hPa", Some("kPa"), Some("CHECK: no unit in the file; the values look like kPa")),
            (Meaning::Pressure, _) if col.min >= 5000.0 => ("hPa", Some("Pa"), Some("CHECK: no unit in the file; the values look like Pa")),
            (Meaning::Pressure, _) => ("hPa", None, Some("CHECK: no unit in the file: hPa assumed")),
            _ => ("", None, None),
        };
        if !chan_unit.is_empty() {
            match note {
                Some(n) => {
                    let _ = writeln!(o, "unit = {:<18} # {n}", q(chan_unit));
                }
                None => {
                    let _ = writeln!(o, "unit = {}", q(chan_unit));
                }
            }
        } else if let Some(u) = &col.unit {
            let _ = writeln!(o, "unit = {}", q(u));
        }
        if let Some(h) = col.name.as_deref().and_then(height) {
            let _ = writeln!(o, "height_m = {h:<14} # from the name");
        }
        if kind != "direction" {
            let extra = match source {
                Some("mph" | "knot" | "km/h" | "degF" | "K") => 1,
                Some("Pa") => 2,
                _ => 0,
            };
            if col.numbers == 0 {
                let _ = writeln!(
                    o,
                    "resolution = 0.01         # CHECK: no numbers in the rows read"
                );
            } else {
                let dec = (col.dec + extra).min(4);
                let _ = writeln!(
                    o,
                    "resolution = {:<12} # the file writes {} decimal{}{}",
                    resolution(dec),
                    col.dec,
                    if col.dec == 1 { "" } else { "s" },
                    if extra > 0 {
                        ", finer after the unit conversion"
                    } else {
                        ""
                    }
                );
            }
        }
        match ch.meaning {
            Meaning::Temperature => {
                let _ = writeln!(
                    o,
                    "range = [-50, 60]         # degC, common practice for air temperature: CHECK"
                );
            }
            Meaning::Humidity => {
                let _ = writeln!(o, "range = [0, 100]          # %, common practice");
            }
            Meaning::Pressure => {
                let _ = writeln!(o, "range = [500, 1100]       # hPa, stations up to about 5 km high (common practice)");
            }
            _ => {}
        }
        if kind == "speed" {
            gust_line(&mut o, period_ms);
        }
        if ch.meaning == Meaning::Direction {
            let link = chans
                .iter()
                .filter(|s| s.meaning == Meaning::Speed && s.col < ch.col)
                .max_by_key(|s| s.col)
                .map(|s| s.id.clone())
                .or(first_speed.as_ref().map(|f| f.1.clone()));
            if let Some(l) = link {
                let _ = writeln!(o, "speed_channel = {}", q(&l));
            }
        }
        let _ = writeln!(
            o,
            "column = {:<16} # {}: {}, {}",
            col_ref(ch.col),
            col_said(ch.col),
            ch.why,
            col.values_said()
        );
        if let Some(s) = source {
            let _ = writeln!(o, "source_unit = {}", q(s));
        }
        if let Some((qc, good)) = &ch.quality {
            let codes: Vec<String> = cols[*qc].distinct.iter().map(|v| v.to_string()).collect();
            let _ = writeln!(
                o,
                "quality = {{ column = {}, good = [{}] }}",
                col_ref(*qc),
                q(good)
            );
            let _ = writeln!(
                o,
                "#   CHECK: {} holds codes {}: which mean good? A reading with another code is counted flagged, never used.",
                col_said(*qc),
                codes.join(", ")
            );
        }
        let _ = writeln!(o);
    }

    // Columns left out.
    let rest: Vec<usize> = (0..fields)
        .filter(|c| !used.contains(c) && !chans.iter().any(|ch| ch.col == *c))
        .collect();
    if !rest.is_empty() || !time_cols.is_empty() {
        let _ = writeln!(o, "# Columns not drafted as channels (add a [[channel]] with `column` for those you need):");
        for c in 0..fields {
            if chans
                .iter()
                .any(|ch| ch.col == c || ch.quality.as_ref().is_some_and(|q| q.0 == c))
            {
                continue;
            }
            let col = &cols[c];
            let what = if time_cols.contains(&c) {
                "read as the time".to_string()
            } else if filter.as_ref().is_some_and(|f| f.0 == c) {
                "the station filter".to_string()
            } else if !col.numeric() {
                format!(
                    "text ({})",
                    col.texts
                        .keys()
                        .take(3)
                        .map(|t| q(&clip(t, 20)))
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            } else {
                let guess = match meaning[c] {
                    Meaning::Other(w) => format!("{w}?"),
                    Meaning::Temperature => "a temperature besides the air temperature?".into(),
                    Meaning::Humidity => "another humidity?".into(),
                    Meaning::Pressure => "another pressure?".into(),
                    Meaning::Speed | Meaning::Gust | Meaning::Direction => {
                        "wind, but its values do not fit?".into()
                    }
                    Meaning::Unknown if col.codes_like() => "codes (quality or status?)".into(),
                    Meaning::Unknown
                        if col.integer
                            && Role::ALL.iter().any(|r| {
                                *r != Role::HourMinute
                                    && col.name.as_deref().is_some_and(|n| r.named(n))
                            }) =>
                    {
                        "a date or time field, not used for the time?".into()
                    }
                    Meaning::Unknown => "scalar?".into(),
                };
                format!("{guess} {}", col.values_said())
            };
            let _ = writeln!(o, "#   {}: {what}", col_said(c));
        }
    }

    let ids: Vec<String> = chans
        .iter()
        .map(|c| format!("{} = {}", c.id, col_said(c.col)))
        .collect();
    let summary = format!(
        "{name}: {}; channels {}; check the lines marked CHECK (the time zone first)",
        found.join(", "),
        ids.join(", ")
    );
    Ok(Draft { text: o, summary })
}

/// The gust window line of a speed channel at this sample period.
fn gust_line(o: &mut String, period_ms: i64) {
    let per = 3000 / period_ms.max(1);
    if period_ms > 3000 {
        let _ = writeln!(
            o,
            "# no gust_window_s: a 3-second gust cannot come from samples {} apart",
            secs(period_ms)
        );
    } else if 3000 % period_ms != 0 || per > config::GUST_CAPACITY as i64 {
        let n = per.clamp(1, config::GUST_CAPACITY as i64);
        let _ = writeln!(
            o,
            "gust_window_s = {:<9} # CHECK: {n} samples, the nearest to 3 s this build takes",
            fmt_secs(n * period_ms)
        );
    }
}

/// A height from a name: `@ 3m`, `80m`, `WS_80m_A`.
fn height(name: &str) -> Option<String> {
    let b = strip_unit(name).as_bytes();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit()
            && (i == 0 || !b[i - 1].is_ascii_alphanumeric() && b[i - 1] != b'.')
        {
            let s = i;
            while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
                i += 1;
            }
            let mut j = i;
            while j < b.len() && b[j] == b' ' {
                j += 1;
            }
            let after = b.get(j + 1).copied();
            if b.get(j) == Some(&b'm')
                && !after.is_some_and(|c| c.is_ascii_alphanumeric() || c == b'/')
            {
                let v = std::str::from_utf8(&b[s..i]).ok()?;
                let x: f64 = v.parse().ok()?;
                if x > 0.0 && x < 1000.0 {
                    return Some(v.to_string());
                }
            }
        } else {
            i += 1;
        }
    }
    None
}

/// `10^-dec` as written in TOML.
fn resolution(dec: u32) -> String {
    if dec == 0 {
        "1".into()
    } else {
        format!("0.{}1", "0".repeat(dec as usize - 1))
    }
}

/// Milliseconds as seconds for TOML (`60`, `0.5`).
fn fmt_secs(ms: i64) -> String {
    if ms % 1000 == 0 {
        format!("{}", ms / 1000)
    } else {
        let s = format!("{}.{:03}", ms / 1000, ms % 1000);
        s.trim_end_matches('0').to_string()
    }
}

/// Milliseconds said in words.
fn secs(ms: i64) -> String {
    format!("{} s", fmt_secs(ms))
}

fn clip(s: &str, n: usize) -> String {
    if s.chars().count() > n {
        format!("{}...", s.chars().take(n).collect::<String>())
    } else {
        s.to_string()
    }
}

/// A path as one shell word (quoted when it needs it).
fn shell_word(s: &str) -> String {
    if !s.is_empty()
        && s.bytes()
            .all(|b| b.is_ascii_alphanumeric() || b"/._-+=:,@".contains(&b))
    {
        s.to_string()
    } else {
        format!("'{}'", s.replace('\'', "'\\''"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Lines numbered as the replay numbers them (each `\n`, `\r\n` and lone
    /// `\r` ends one), whatever mix of line ends a file has.
    #[test]
    fn lines_end_at_lf_crlf_and_lone_cr() {
        for (text, want) in [
            (&b"a\nb\nc"[..], &["a", "b", "c"][..]),
            (b"a\r\nb\r\nc\r\n", &["a", "b", "c", ""]),
            (b"a\rb\rc", &["a", "b", "c"]),
            (b"a\nb\rc\r\n\rd", &["a", "b", "c", "", "d"]),
        ] {
            let got = sniff_bytes("x", text).unwrap();
            let lines: Vec<(usize, &str)> =
                got.lines.iter().map(|(n, l)| (*n, l.as_str())).collect();
            let want: Vec<(usize, &str)> =
                want.iter().enumerate().map(|(i, l)| (i + 1, *l)).collect();
            assert_eq!(lines, want, "{:?}", String::from_utf8_lossy(text));
            // The replay's count of line ends before each line agrees.
            assert_eq!(
                crate::reader::count_line_ends(text) as usize + 1,
                want.len(),
                "{:?}",
                String::from_utf8_lossy(text)
            );
        }
    }

    #[test]
    fn fields_split_with_quotes_and_spaces() {
        assert_eq!(split("a,\"b,c\",d", Delim::Comma), ["a", "b,c", "d"]);
        assert_eq!(
            split("\"say \"\"hi\"\"\";2", Delim::Semicolon),
            ["say \"hi\"", "2"]
        );
        assert_eq!(
            split("  2016   1 -9999.9 ", Delim::Spaces),
            ["2016", "1", "-9999.9"]
        );
    }

    #[test]
    fn decimals_without_printing_noise() {
        // 1.512 printed from its nearest double (Python's repr, from memory).
        assert_eq!(decimals("1.5119999999999998", 1.5119999999999998), 3);
        assert_eq!(decimals("10.357019999999999", 10.357019999999999), 5);
        assert_eq!(decimals("3,40", 3.4), 2);
        assert_eq!(decimals("270", 270.0), 0);
    }

    #[test]
    fn names_units_and_heights() {
        let m = |n: &str| meaning_by_name(n, bracket_unit(n).as_deref().and_then(unit_of));
        assert_eq!(m("Avg Wind Speed @ 3m [m/s]"), Meaning::Speed);
        assert_eq!(m("Peak Wind Speed @ 3m [m/s]"), Meaning::Gust);
        assert_eq!(
            m("Avg Wind Direction @ 3m [deg from N]"),
            Meaning::Direction
        );
        assert_eq!(m("WS_80m_SD"), Meaning::Other("speed standard deviation"));
        assert_eq!(m("Air Temperature [deg C]"), Meaning::Temperature);
        assert_eq!(m("Rel Humidity [%]"), Meaning::Humidity);
        assert_eq!(m("Station Pressure [mBar]"), Meaning::Pressure);
        assert_eq!(m("dewp"), Meaning::Other("dew point"));
        assert_eq!(unit_of("mBar"), Some(UnitOf::Pressure(Some("mbar"))));
        assert_eq!(unit_of("°F"), Some(UnitOf::Temperature(Some("degF"))));
        assert_eq!(height("Avg Wind Speed @ 3m [m/s]").as_deref(), Some("3"));
        assert_eq!(height("WS_80m_A").as_deref(), Some("80"));
        assert_eq!(height("wind_speed_mph"), None);
    }

    #[test]
    fn a_steady_time_needs_one_common_step() {
        assert!(steady(&[0, 60, 120, 180, 240]));
        assert!(!steady(&[0, 60, 0, 60, 0]));
        assert!(!steady(&[0, 1, 3, 6, 10, 15]));
    }
}
