//! `tenmin demo`: an invented station, its samples with planted problems, the
//! logger's records computed through the core, then replay and verify.
//!
//! Everything here is made up: the station, its weather and its faults describe
//! no real site. The weather is a smooth daily cycle plus a storm a day and
//! correlated turbulence; the faults are logger outages (rows absent),
//! missing-value code blocks, a vane stuck during a cold humid spell, and an
//! anemometer that drops out only in strong wind. Random numbers come from a
//! small PCG generator written here (`Pcg32`), normal deviates from a sum of
//! twelve uniforms, and every transcendental function (`exp`, `sin`, `sqrt`,
//! `round`, `fmod`) comes from the `libm` crate rather than the platform's
//! math library, so `tenmin demo --seed N` writes the same bytes on every
//! machine.

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use qc_core::wire::{encode_record, ConfigStamp, RecordFrame, FRAME_LEN};
use qc_core::{config_fingerprint, ChannelRecord, Flag, Reading, Timestamp};

use crate::config;
use crate::engine::{self, Sink};
use crate::output::{self, Output};
use crate::records;
use crate::replay;
use crate::samples::Options;
use crate::summary::percent;
use crate::timefmt::Rfc3339;
use crate::verify;

/// The demo's first day, 2025-01-20T00:00:00Z, in seconds since the epoch
/// (POSIX time; `date -u -d 2025-01-20 +%s`).
const START_S: i64 = 1_737_331_200;
const DAY_S: i64 = 86_400;

/// The demo campaign's events (`[campaign] events`), shown on the report's
/// time axes: invented, like everything here.
const EVENTS_CSV: &str = "# Events of the invented demo campaign (lines starting with # are comments).
# time (UTC),kind (site_visit, maintenance, logger_reset, calibration, sensor_swap, other),text
time,kind,text
2025-01-20T14:00:00Z,site_visit,Routine visit: both 80 m anemometers and the logger inspected, nothing changed (invented)
";

const STATION_TOML: &str = r#"# An invented station for `tenmin demo`: no real site.
[logging]
interval_s = 600
sample_rate_hz = 1
missing_values = [-999, -9999]

[station]
name = "Vellendrax Ridge demo mast (invented)"

# The campaign's side files, relative to this file. Readings excluded by
# decision (tower work and the like) are kept apart from the samples: `tenmin
# replay` counts them `excluded`; the logger knew nothing of it. The sensor
# history: ws80b was swapped at a site visit.
[campaign]
events = "events.csv"
exclusions = "exclusions.csv"
sensors = "sensors.toml"

# Two redundant cup anemometers at the top of the mast.
[[channel]]
id = "ws80a"
kind = "speed"
unit = "m/s"
height_m = 80
range = [0, 75]
resolution = 0.01
gust_window_s = 3

# Screening over the defaults: compare with the redundant partner, and watch
# for icing with the temperature and humidity sensors.
[channel.screen]
partner = "ws80b"
icing = { temperature = "t76", humidity = "rh76" }

[[channel]]
id = "ws80b"
kind = "speed"
unit = "m/s"
height_m = 80
range = [0, 75]
resolution = 0.01
gust_window_s = 3

[[channel]]
id = "ws60"
kind = "speed"
unit = "m/s"
height_m = 60
range = [0, 75]
resolution = 0.01

[channel.screen]
above = "ws80a"

# Vane read as raw counts of 0.1 degree, mounted 4 degrees off north;
# its resultant vector is weighted by ws80a.
[[channel]]
id = "wd78"
kind = "direction"
unit = "deg"
height_m = 78
slope = 0.1
offset_deg = 4
speed_channel = "ws80a"

[channel.screen]
icing = { temperature = "t76", humidity = "rh76" }

[[channel]]
id = "t76"
kind = "scalar"
unit = "degC"
height_m = 76
range = [-40, 50]
resolution = 0.1

[[channel]]
id = "rh76"
kind = "scalar"
unit = "%"
height_m = 76
range = [0, 100]
resolution = 0.1
"#;

/// The demo's exclusions: the ws60 boom re-levelled on a mast climb on the
/// first day, 09:00 to 11:30 UTC (invented).
const EXCLUSIONS_CSV: &str = "\
# Readings excluded by decision, for `tenmin replay` (invented, like the rest of the demo).
# channels: `all` or ids joined by |; from, to: RFC 3339, a reading at from <= t < to is excluded.
channels,from,to,reason,who,entered
ws60,2025-01-20T09:00:00Z,2025-01-20T11:30:00Z,mast climb: ws60 boom re-levelled (invented),demo crew,2025-01-21
";

/// The demo's sensor history: the redundant anemometer ws80b swapped at the
/// site visit of the first day, the logger re-programmed with the new
/// sensor's certificate (so its values are logged calibrated and nothing is
/// re-scaled: the statistics are those of a station without a history; the
/// intervals of the swap carry `sensor_change`).
const SENSORS_TOML: &str = r#"# The demo mast's sensor history (invented: sensors, serials and
# certificates are made up). Each entry is in force from `from` until the
# channel's next entry.
#
# CAUTION: certificates and transfer functions decide every wind speed;
# check them against the campaign's measurement procedures and the
# accredited calibration certificates themselves.

[[entry]]
id = "ws80b-B0931"
channel = "ws80b"
from = "2025-01-20T00:00:00Z"
model = "cup anemometer, class 1"
serial = "B0931"
certificate = { id = "TM-CAL-2024-091", date = "2024-10-08", slope = 0.04598, offset = 0.2087 }
logger = { slope = 0.04598, offset = 0.2087 }   # programmed with its own certificate

[[entry]]
id = "ws80b-B1220"
channel = "ws80b"
from = "2025-01-20T13:05:00Z"
model = "cup anemometer, class 1"
serial = "B1220"
certificate = { id = "TM-CAL-2025-002", date = "2025-01-09", slope = 0.04611, offset = 0.1995 }
logger = { slope = 0.04611, offset = 0.1995 }   # re-programmed at the swap
note = "swapped at the site visit of 2025-01-20 (disconnected from 13:02)"
"#;

/// The swap of [`SENSORS_TOML`], seconds after the start.
const SWAP_S: i64 = 13 * 3600 + 5 * 60;

const IDS: [&str; 6] = ["ws80a", "ws80b", "ws60", "wd78", "t76", "rh76"];
const WS80A: usize = 0;
const WS80B: usize = 1;
const WS60: usize = 2;
const WD78: usize = 3;
const T76: usize = 4;
const RH76: usize = 5;
const VANE_OFFSET_DEG: f64 = 4.0;
/// ws80b loses a sample with this probability when it reads above this speed.
const DROPOUT_ABOVE: f64 = 14.0;
const DROPOUT_P: f64 = 0.5;
/// Intervals whose ws80a mean reaches this count as strong wind in the summary.
const STRONG: f64 = 12.0;

/// PCG32 (M. E. O'Neill, "PCG: A family of simple fast space-efficient
/// statistically good algorithms for random number generation", 2014): the
/// XSH-RR output on a 64-bit LCG.
struct Pcg32 {
    state: u64,
    inc: u64,
}

impl Pcg32 {
    fn new(seed: u64, stream: u64) -> Self {
        let mut r = Pcg32 {
            state: 0,
            inc: (stream << 1) | 1,
        };
        r.next_u32();
        r.state = r.state.wrapping_add(seed);
        r.next_u32();
        r
    }

    fn next_u32(&mut self) -> u32 {
        let old = self.state;
        self.state = old
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(self.inc);
        let xorshifted = (((old >> 18) ^ old) >> 27) as u32;
        xorshifted.rotate_right((old >> 59) as u32)
    }

    /// Uniform in [0, 1).
    fn uniform(&mut self) -> f64 {
        let hi = u64::from(self.next_u32()) << 21;
        let lo = u64::from(self.next_u32() >> 11);
        ((hi | lo) as f64) * (1.0 / (1u64 << 53) as f64)
    }

    /// Approximately standard normal: twelve uniforms minus 6 (Irwin-Hall).
    fn normal(&mut self) -> f64 {
        (0..12).map(|_| self.uniform()).sum::<f64>() - 6.0
    }

    fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }
}

/// A first-order autoregressive process: unit-variance noise with a time scale.
struct Ar1 {
    x: f64,
    phi: f64,
}

impl Ar1 {
    fn new(tau_s: f64) -> Self {
        Ar1 {
            x: 0.0,
            phi: libm::exp(-1.0 / tau_s),
        }
    }

    fn step(&mut self, rng: &mut Pcg32) -> f64 {
        self.x = self.phi * self.x + libm::sqrt(1.0 - self.phi * self.phi) * rng.normal();
        self.x
    }
}

/// A sample field as written and as the logger reads it.
#[derive(Clone, Copy)]
enum Field {
    Value(f64),
    Counts(i32),
    Empty,
}

impl Field {
    fn reading(self) -> Reading {
        match self {
            Field::Value(v) => Reading::Value(v),
            Field::Counts(k) => Reading::Counts(k),
            Field::Empty => Reading::Missing,
        }
    }
}

fn round_to(x: f64, step_inv: f64) -> f64 {
    libm::round(x * step_inv) / step_inv
}

/// A span of seconds since the demo start, `[start, end)`.
#[derive(Clone, Copy)]
struct Span {
    start: i64,
    end: i64,
}

impl Span {
    fn contains(&self, s: i64) -> bool {
        (self.start..self.end).contains(&s)
    }

    fn minutes(&self) -> i64 {
        (self.end - self.start) / 60
    }
}

fn clock(s: i64) -> String {
    let text = Rfc3339(Timestamp::from_millis((START_S + s) * 1000)).to_string();
    // 2025-01-20T18:30:00Z -> 2025-01-20 18:30
    format!("{} {}", &text[..10], &text[11..16])
}

struct Plan {
    outages: Vec<Span>,
    blocks: Vec<(usize, f64, Span)>,
    stuck: Span,
    spell: Span,
    storms: Vec<(f64, f64)>,
}

fn plan(rng: &mut Pcg32, days: u32) -> Plan {
    let mut outages = Vec::new();
    let mut blocks = Vec::new();
    let mut storms = Vec::new();
    for d in 0..i64::from(days) {
        let day0 = d * DAY_S;
        let n = 1 + rng.next_u32() % 2;
        for _ in 0..n {
            let len = (rng.between(3.0, 40.0) as i64) * 60;
            let start = day0 + rng.between(0.0, (DAY_S - len) as f64) as i64;
            outages.push(Span {
                start,
                end: start + len,
            });
        }
        for _ in 0..2 {
            let ch = [WS60, T76, RH76][(rng.next_u32() % 3) as usize];
            let code = if rng.uniform() < 0.5 { -999.0 } else { -9999.0 };
            let len = (rng.between(5.0, 25.0) as i64) * 60;
            let start = day0 + rng.between(0.0, (DAY_S - len) as f64) as i64;
            blocks.push((
                ch,
                code,
                Span {
                    start,
                    end: start + len,
                },
            ));
        }
        // Storm centre (hour of the day) and peak strength (m/s).
        storms.push((rng.between(12.0, 16.0), rng.between(4.0, 7.0)));
    }
    outages.sort_by_key(|s| s.start);
    blocks.sort_by_key(|b| b.2.start);
    Plan {
        outages,
        blocks,
        // A cold humid evening on the first day; the vane freezes half an hour in.
        spell: Span {
            start: 18 * 3600,
            end: 24 * 3600,
        },
        stuck: Span {
            start: 18 * 3600 + 1800,
            end: 23 * 3600 + 3000,
        },
        storms,
    }
}

/// The invented weather, advanced one second at a time.
struct Weather {
    synoptic: Ar1,
    turb: Ar1,
    veer: Ar1,
    swing: Ar1,
    temp: Ar1,
    hum: Ar1,
    stuck_counts: Option<i32>,
}

impl Weather {
    fn new() -> Self {
        Weather {
            synoptic: Ar1::new(7200.0),
            turb: Ar1::new(8.0),
            veer: Ar1::new(3600.0),
            swing: Ar1::new(6.0),
            temp: Ar1::new(3600.0),
            hum: Ar1::new(3600.0),
            stuck_counts: None,
        }
    }

    /// Readings at second `s` since the start (before faults other than the stuck vane).
    fn sample(&mut self, rng: &mut Pcg32, plan: &Plan, s: i64) -> [Field; 6] {
        use std::f64::consts::PI;
        let hour = (s % DAY_S) as f64 / 3600.0;
        let day = (s / DAY_S) as usize;
        let (centre, peak) = plan.storms.get(day).copied().unwrap_or((14.0, 8.0));
        let z = (hour - centre) / 2.0;
        let storm = peak * libm::exp(-0.5 * z * z);
        let mean = (7.0
            + 2.0 * libm::sin(2.0 * PI * (hour - 9.0) / 24.0)
            + storm
            + 1.2 * self.synoptic.step(rng))
        .max(0.5);
        let u = (0.11 * mean + 0.2) * self.turb.step(rng);
        let v80 = mean + u;
        let ws80a = round_to((v80 + 0.04 * rng.normal()).max(0.0), 100.0);
        let ws80b = round_to((v80 + 0.04 * rng.normal()).max(0.0), 100.0);
        let ws60 = round_to(
            (0.945 * mean + 1.08 * u + 0.04 * rng.normal()).max(0.0),
            100.0,
        );

        let hours = s as f64 / 3600.0;
        let dir_mean =
            250.0 + 110.0 * libm::sin(2.0 * PI * hours / 36.0) + 10.0 * self.veer.step(rng);
        let sigma = (8.0 + 25.0 / mean).clamp(5.0, 40.0);
        let dir = dir_mean + sigma * self.swing.step(rng);
        let raw = libm::fmod(dir - VANE_OFFSET_DEG, 360.0);
        let raw = if raw < 0.0 { raw + 360.0 } else { raw };
        let mut counts = (libm::round(raw * 10.0) as i32).rem_euclid(3600);
        if plan.stuck.contains(s) {
            counts = *self.stuck_counts.get_or_insert(counts);
        }

        // Cold and humid during the spell, blended in and out over 30 minutes.
        let w = if plan.spell.contains(s) {
            let into = (s - plan.spell.start) as f64 / 1800.0;
            let left = (plan.spell.end - s) as f64 / 1800.0;
            into.min(left).min(1.0)
        } else {
            0.0
        };
        let daily = libm::sin(2.0 * PI * (hour - 9.0) / 24.0);
        let t = (3.5 + 3.0 * daily + 0.6 * self.temp.step(rng)) * (1.0 - w) + (-1.5) * w;
        let rh =
            ((76.0 - 8.0 * daily + 3.0 * self.hum.step(rng)) * (1.0 - w) + 96.0 * w).min(100.0);
        let mut f = [Field::Empty; 6];
        f[WS80A] = Field::Value(ws80a);
        f[WS80B] = Field::Value(ws80b);
        f[WS60] = Field::Value(ws60);
        f[WD78] = Field::Counts(counts);
        f[T76] = Field::Value(round_to(t, 10.0));
        f[RH76] = Field::Value(round_to(rh, 10.0));
        f
    }
}

/// The logger's sink: writes its records (as CSV, and as the record frames of
/// its log) and keeps what the summary reports.
struct Logger<W: Write, L: Write> {
    writer: records::Writer<W>,
    log: LogWriter<L>,
    flags: Vec<[u64; Flag::ALL.len()]>,
    pair_all: (f64, u64),
    pair_strong: (f64, u64),
}

/// A record log as a logger writes it: one `qc_core::wire` record frame per
/// channel of each closed interval, numbered from 0, and none for an interval
/// without samples (the engine hands those out too, with every count 0).
struct LogWriter<L: Write> {
    out: L,
    sequence: u32,
    /// The logger's channel count and configuration fingerprint, in every frame.
    stamp: ConfigStamp,
}

impl<L: Write> LogWriter<L> {
    fn interval(&mut self, start: Timestamp, recs: &[ChannelRecord]) -> Result<()> {
        if recs.iter().all(|r| r.tally.total() == 0) {
            return Ok(());
        }
        let mut frame = [0u8; FRAME_LEN];
        for (channel, record) in recs.iter().enumerate() {
            let f = RecordFrame {
                sequence: self.sequence,
                interval_start: start,
                channel: channel as u8,
                config: Some(self.stamp),
                record: *record,
            };
            encode_record(&f, &mut frame);
            self.out.write_all(&frame)?;
            self.sequence = self.sequence.wrapping_add(1);
        }
        Ok(())
    }
}

impl<W: Write, L: Write> Sink for Logger<W, L> {
    fn interval(&mut self, start: Timestamp, end: Timestamp, recs: &[ChannelRecord]) -> Result<()> {
        self.writer.interval(start, end, recs)?;
        self.log.interval(start, recs)?;
        for (counts, r) in self.flags.iter_mut().zip(recs) {
            for f in r.flags.iter() {
                counts[f as usize] += 1;
            }
        }
        if let (Some(a), Some(b)) = (
            recs.get(WS80A).and_then(|r| r.mean.value()),
            recs.get(WS80B).and_then(|r| r.mean.value()),
        ) {
            self.pair_all.0 += b - a;
            self.pair_all.1 += 1;
            if a >= STRONG {
                self.pair_strong.0 += b - a;
                self.pair_strong.1 += 1;
            }
        }
        Ok(())
    }
}

fn write_fields(w: &mut impl Write, t: i64, fields: &[Field; 6]) -> std::io::Result<()> {
    write!(w, "{}", Rfc3339(Timestamp::from_millis(t * 1000)))?;
    for f in fields {
        match f {
            Field::Value(v) => write!(w, ",{v}")?,
            Field::Counts(k) => write!(w, ",{k}")?,
            Field::Empty => w.write_all(b",")?,
        }
    }
    w.write_all(b"\n")
}

/// A path as a shell word: as it is when it holds only characters no shell
/// treats specially, else in single quotes.
fn shell_word(p: &Path) -> String {
    let s = p.display().to_string();
    let plain = !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || "/._-+,:@%=".contains(c));
    if plain {
        s
    } else {
        format!("'{}'", s.replace('\'', "'\\''"))
    }
}

/// Runs the demo into the folder `out`: every file it writes goes through
/// [`crate::output`] (replaced atomically), and the paths it prints are the
/// paths it wrote.
pub fn run(out: &Path, days: u32, seed: u64) -> Result<ExitCode> {
    if out.exists() && !out.is_dir() {
        bail!(
            "{}: is a file; the output of `tenmin demo` is a folder to write its files into",
            out.display()
        );
    }
    fs::create_dir_all(out)
        .with_context(|| format!("cannot create the folder {}", out.display()))?;
    let station_path = out.join("station.toml");
    output::write_file(
        &station_path,
        "the demo station file",
        STATION_TOML.as_bytes(),
    )?;
    output::write_file(
        &out.join("sensors.toml"),
        "the demo's sensor history",
        SENSORS_TOML.as_bytes(),
    )?;
    let exclusions_path = out.join("exclusions.csv");
    output::write_file(
        &exclusions_path,
        "the demo's exclusions",
        EXCLUSIONS_CSV.as_bytes(),
    )?;
    // Parsed, not loaded: the logger and the verify below know no exclusions.
    let cfg = config::parse(&station_path, STATION_TOML)?;
    output::write_file(
        &out.join("events.csv"),
        "the demo events file",
        EVENTS_CSV.as_bytes(),
    )?;
    let ids: Vec<String> = cfg.channels.iter().map(|c| c.id.clone()).collect();
    debug_assert_eq!(ids, IDS);

    let mut rng = Pcg32::new(seed, 0x7e4d_1a2b);
    let plan = plan(&mut rng, days);
    let mut weather = Weather::new();

    // The logger: every sample goes through the core as the firmware would push it.
    let logger_path = out.join("logger-records.csv");
    let log_path = out.join("logger.log");
    let mut logger = Logger {
        writer: records::Writer::new(Output::file(&logger_path, "records")?, ids.clone())?
            .with_sensors(cfg.sensors.clone()),
        log: LogWriter {
            out: Output::file(&log_path, "the demo logger's log")?,
            sequence: 0,
            stamp: ConfigStamp {
                channels: cfg.channels.len() as u8,
                fingerprint: config_fingerprint(
                    &cfg.station,
                    &cfg.channels.iter().map(|c| c.core).collect::<Vec<_>>(),
                ),
            },
        },
        flags: vec![[0; Flag::ALL.len()]; ids.len()],
        pair_all: (0.0, 0),
        pair_strong: (0.0, 0),
    };
    let mut files: Vec<PathBuf> = Vec::new();
    let mut dropped = 0u64;
    let mut outage_rows = 0u64;
    {
        let mut station = engine::new(&cfg, &mut logger)?;
        let mut readings = [Reading::Missing; 6];
        let mut file: Option<Output> = None;
        for s in 0..i64::from(days) * DAY_S {
            if s % DAY_S == 0 {
                if let Some(f) = file.take() {
                    f.finish()?;
                }
                let date = &Rfc3339(Timestamp::from_millis((START_S + s) * 1000)).to_string()[..10];
                let path = out.join(format!("samples-{date}.csv"));
                let mut f = Output::file(&path, "samples")?;
                writeln!(f, "time,{}", IDS.join(","))?;
                files.push(path);
                file = Some(f);
            }
            let mut fields = weather.sample(&mut rng, &plan, s);
            let outage = plan.outages.iter().any(|o| o.contains(s));
            if let Field::Value(v) = fields[WS80B] {
                if v > DROPOUT_ABOVE && rng.uniform() < DROPOUT_P {
                    fields[WS80B] = Field::Empty;
                    dropped += u64::from(!outage);
                }
            }
            for (ch, code, span) in &plan.blocks {
                if span.contains(s) {
                    fields[*ch] = Field::Value(*code);
                }
            }
            // ws80b disconnected for the swap: the logger's missing code.
            if (SWAP_S - 180..SWAP_S).contains(&s) {
                fields[WS80B] = Field::Value(-999.0);
            }
            if outage {
                outage_rows += 1;
                continue;
            }
            let t = START_S + s;
            if let Some(f) = file.as_mut() {
                write_fields(f, t, &fields)?;
            }
            for (r, f) in readings.iter_mut().zip(&fields) {
                *r = f.reading();
            }
            station.push(Timestamp::from_millis(t * 1000), &readings)?;
        }
        if let Some(f) = file.take() {
            f.finish()?;
        }
        station.close()?;
    }
    let logger_rows = logger.writer.rows;
    let Logger {
        writer,
        log,
        flags,
        pair_all,
        pair_strong,
    } = logger;
    writer.finish()?.finish()?;
    let log_frames = log.sequence;
    log.out.finish()?;

    // Replay from disk (on all cores, up to two) and verify against the
    // logger's records.
    let mut cmp = verify::Comparer::open(&logger_path, cfg.station, ids.clone(), 10)?
        .with_sensors(cfg.sensors.clone());
    let opts = Options {
        jobs: replay::default_jobs(&files),
        ..Options::default()
    };
    let summary = replay::replay(&cfg, &files, opts, &mut cmp)?;
    let report = cmp.finish()?;

    let mut o = Output::stdout("the demo's summary");
    writeln!(
        o,
        "tenmin demo: {}, {days} day(s) at 1 Hz from 2025-01-20, seed {seed}",
        cfg.name.as_deref().unwrap_or("station")
    )?;
    writeln!(o, "wrote:")?;
    writeln!(o, "  {}: the station", station_path.display())?;
    writeln!(
        o,
        "  {}: the campaign's events (a site visit)",
        out.join("events.csv").display()
    )?;
    writeln!(
        o,
        "  {}: readings excluded by decision (for `tenmin replay`)",
        exclusions_path.display()
    )?;
    writeln!(
        o,
        "  {}: its sensor history (a swap of ws80b)",
        out.join("sensors.toml").display()
    )?;
    match (files.first(), files.last()) {
        (Some(a), Some(b)) if files.len() > 1 => writeln!(
            o,
            "  {} to {}: samples, one file per day ({} files)",
            a.display(),
            b.display(),
            files.len()
        )?,
        (Some(a), _) => writeln!(o, "  {}: samples of one day", a.display())?,
        _ => {}
    }
    writeln!(
        o,
        "  {}: the logger's records ({logger_rows} rows)",
        logger_path.display()
    )?;
    writeln!(
        o,
        "  {}: the logger's log, the same records as {log_frames} record frames",
        log_path.display()
    )?;
    writeln!(o)?;
    writeln!(o, "planted problems (invented):")?;
    let outage_list: Vec<String> = plan
        .outages
        .iter()
        .map(|s| format!("{} {} min", clock(s.start), s.minutes()))
        .collect();
    writeln!(
        o,
        "  logger outages, rows absent ({outage_rows} s in all): {}",
        outage_list.join(", ")
    )?;
    let block_list: Vec<String> = plan
        .blocks
        .iter()
        .map(|(ch, code, s)| {
            format!(
                "{} {code} at {} for {} min",
                IDS[*ch],
                clock(s.start),
                s.minutes()
            )
        })
        .collect();
    writeln!(o, "  missing-value code blocks: {}", block_list.join(", "))?;
    writeln!(
        o,
        "  excluded by decision: ws60 on 2025-01-20 from 09:00 to 11:30 (exclusions.csv): `tenmin replay`\n    counts those readings `excluded` and flags the intervals; the logger's records do not"
    )?;
    writeln!(
        o,
        "  vane wd78 stuck from {} to {} in a cold humid spell (about -1.5 degC, 96 % RH)",
        clock(plan.stuck.start),
        clock(plan.stuck.end)
    )?;
    writeln!(
        o,
        "  ws80b drops out above {DROPOUT_ABOVE} m/s (half the samples there): {dropped} samples lost"
    )?;
    writeln!(
        o,
        "  ws80b swapped at {} (sensors.toml: B0931 for B1220, disconnected 3 min before; the interval is flagged sensor_change)",
        clock(SWAP_S)
    )?;
    writeln!(o)?;
    let p = &summary.pushed;
    writeln!(
        o,
        "replayed {} rows from disk: {} accepted, {} rejected, {} bad",
        summary.input.rows,
        p.accepted,
        p.pushed() - p.accepted,
        summary.input.bad.total()
    )?;
    verify::print_report(&mut o, &report, &logger_path)?;
    writeln!(o)?;
    writeln!(
        o,
        "per channel: recovery (valid / possible samples) and intervals flagged by the core"
    )?;
    for ((id, t), counts) in ids.iter().zip(&summary.recovery).zip(&flags) {
        let flagged: Vec<String> = Flag::ALL
            .iter()
            .filter(|f| counts[**f as usize] > 0)
            .map(|f| format!("{} {}", f.name(), counts[*f as usize]))
            .collect();
        writeln!(
            o,
            "  {id:<6} {:>6}  {}",
            percent(t),
            if flagged.is_empty() {
                "-".to_string()
            } else {
                flagged.join(", ")
            }
        )?;
    }
    writeln!(o)?;
    let mean = |(sum, n): (f64, u64)| if n > 0 { sum / n as f64 } else { f64::NAN };
    writeln!(
        o,
        "strong-wind dropout: ws80b recovery is {} against {} for its partner ws80a, yet its 10-minute",
        percent(&summary.recovery[WS80B]),
        percent(&summary.recovery[WS80A])
    )?;
    writeln!(
        o,
        "  means read {:+.3} m/s against ws80a on average ({} intervals) and {:+.3} m/s in intervals",
        mean(pair_all),
        pair_all.1,
        mean(pair_strong)
    )?;
    writeln!(
        o,
        "  where ws80a >= {STRONG} m/s ({}): lost samples that depend on the wind itself bias the mean low",
        pair_strong.1
    )?;
    writeln!(o, "  even when recovery looks fine.")?;
    writeln!(o)?;
    writeln!(o, "try:")?;
    let station = shell_word(&station_path);
    let samples = format!("{}*.csv", shell_word(&out.join("samples-")));
    writeln!(
        o,
        "  tenmin replay --config {station} {samples} -o records.csv"
    )?;
    writeln!(
        o,
        "  tenmin verify --config {station} --samples {samples} --records {}",
        shell_word(&logger_path)
    )?;
    writeln!(
        o,
        "  tenmin decode --config {station} {} -o decoded.csv",
        shell_word(&log_path)
    )?;
    writeln!(
        o,
        "Invented data for learning the tool; real measurement campaigns and energy estimates need qualified review."
    )?;
    o.finish()?;
    Ok(if report.total == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pcg32_reference_output() {
        // The PCG reference implementation (pcg32-demo, seed 42, stream 54)
        // prints 0xa15c02b7 0x7b47f409 0xba1d3330 first (from memory).
        let mut r = Pcg32::new(42, 54);
        assert_eq!(
            [r.next_u32(), r.next_u32(), r.next_u32()],
            [0xa15c_02b7, 0x7b47_f409, 0xba1d_3330]
        );
    }

    #[test]
    fn uniform_and_normal_moments() {
        let mut r = Pcg32::new(1, 2);
        let n = 100_000;
        let xs: Vec<f64> = (0..n).map(|_| r.normal()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        // Irwin-Hall with 12 terms: mean 0, variance 1 (12 * 1/12).
        assert!(mean.abs() < 0.02, "{mean}");
        assert!((var - 1.0).abs() < 0.02, "{var}");
        assert!((0..1000).all(|_| (0.0..1.0).contains(&r.uniform())));
    }
}
