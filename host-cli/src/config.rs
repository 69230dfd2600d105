//! The station file (TOML): read, check, and turn into `qc-core` configurations.
//!
//! ```toml
//! [logging]
//! interval_s = 600            # default 600; must divide 86400
//! sample_rate_hz = 1          # required; interval_s * rate must be whole
//! missing_values = [-999, -9999]   # default; at most 4
//!
//! [station]
//! name = "Example ridge"      # optional
//!
//! [[channel]]
//! id = "ws80a"                # letters, digits, _ - . ; the samples' column name
//! kind = "speed"              # speed | direction | scalar
//! unit = "m/s"
//! height_m = 80
//! range = [0, 75]
//! resolution = 0.01           # or slope (+ offset) when the column holds raw counts
//! gust_window_s = 3           # speed only, default 3
//! ```
//!
//! Direction channels take `offset_deg` (mounting offset) and `speed_channel`
//! (the id of the anemometer that weights the resultant vector). Unknown keys
//! are errors naming the key and its line.
//!
//! Screening settings go in an optional `[channel.screen]` table after the
//! channel's `[[channel]]` table; each key overrides the core's default for the
//! kind (`qc_core::Screen::for_kind`, where each default names its source):
//!
//! ```toml
//! [channel.screen]
//! step_limit = 10             # spike: largest change between samples
//! mean_range = [0, 25]        # implausible: plausible interval mean
//! sd_range = [0, 3]           # implausible: plausible sd (sigma-theta for direction)
//! gust_max = 30               # implausible: gusts at or above are implausible
//! min_recovery = 0.9          # low_recovery: valid / possible per interval
//! flat_span_s = 10800         # flatline: span in seconds ...
//! flat_tolerance = 0.1        # ... within which the sensor counts as still
//! partner = "ws80b"           # pair_mismatch: redundant anemometer (speed)
//! pair_mean_diff = 0.5
//! pair_max_diff = 2.0
//! above = "ws100"             # shear: the next higher anemometer (speed)
//! shear_tolerance = 0.5
//! icing = { temperature = "t76", humidity = "rh76", max_temperature = 2, min_humidity = 85 }
//! off = ["spike"]             # switch tests off by flag name
//! ```
//!
//! Adding an optional per-channel key: add an `Option<Spanned<T>>` field to
//! [`RawChannel`] and apply it in [`build_channel`] (screening settings go in
//! the marked place there); spans give the line for error messages.

use std::collections::BTreeMap;
use std::ops::Range;
use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Result};
use qc_core::{
    ChannelConfig, ConfigError, Icing, Kind, Layout, Screen, StationConfig, MAX_SENTINELS,
};
use serde::Deserialize;

use crate::logtable::{self, LoggerTable, RawConventions};
use crate::table::{self, RawColumn, RawInput, RawQuality, RawSource, Table};
use toml::Spanned;

/// Most channels a station may have in this build.
pub const MAX_CHANNELS: usize = 32;
/// The gust window of a speed channel without `gust_window_s`, seconds (the
/// 3-second gust, WMO-No. 8, part I, 5.8.3).
pub const DEFAULT_GUST_S: f64 = 3.0;
/// Gust-window capacity in samples of this build (the core's `G`).
pub const GUST_CAPACITY: usize = 64;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    logging: Spanned<RawLogging>,
    station: Option<RawStation>,
    input: Option<Spanned<RawInput>>,
    logger_table: Option<Spanned<RawInput>>,
    conventions: Option<Spanned<BTreeMap<String, Spanned<RawConventions>>>>,
    campaign: Option<RawCampaign>,
    #[serde(default)]
    channel: Vec<Spanned<RawChannel>>,
}

/// `[campaign]`: the campaign's side files, paths relative to the station
/// file. An absent key means none.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCampaign {
    /// Readings excluded by decision (`exclusions.rs`).
    exclusions: Option<Spanned<String>>,
    /// Events file (site visits, maintenance, logger resets), read by
    /// `tenmin report` ([`crate::report`]'s events).
    events: Option<Spanned<String>>,
    /// The sensor history ([`crate::sensors`]).
    sensors: Option<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawLogging {
    interval_s: Option<Spanned<u32>>,
    sample_rate_hz: Option<Spanned<f64>>,
    sample_period_s: Option<Spanned<f64>>,
    missing_values: Option<Spanned<Vec<f64>>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawStation {
    name: Option<String>,
}

#[derive(Clone, Copy, Deserialize)]
#[serde(rename_all = "lowercase")]
enum RawKind {
    Speed,
    Direction,
    Scalar,
}

/// One `[[channel]]` table as written.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawChannel {
    id: Spanned<String>,
    kind: Spanned<RawKind>,
    unit: Option<String>,
    height_m: Option<Spanned<f64>>,
    // Informational: the sensor (its history, if it changes, goes in the
    // `[campaign] sensors` file).
    #[allow(dead_code)]
    model: Option<String>,
    #[allow(dead_code)]
    serial: Option<String>,
    #[allow(dead_code)]
    note: Option<String>,
    range: Option<Spanned<[f64; 2]>>,
    resolution: Option<Spanned<f64>>,
    gust_window_s: Option<Spanned<f64>>,
    offset_deg: Option<Spanned<f64>>,
    speed_channel: Option<Spanned<String>>,
    slope: Option<Spanned<f64>>,
    offset: Option<Spanned<f64>>,
    screen: Option<Spanned<RawScreen>>,
    column: Option<Spanned<RawColumn>>,
    source_unit: Option<Spanned<String>>,
    quality: Option<Spanned<RawQuality>>,
}

/// A channel's `[channel.screen]` table: screening settings over the core's
/// defaults for the channel's kind.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawScreen {
    step_limit: Option<Spanned<f64>>,
    mean_range: Option<Spanned<[f64; 2]>>,
    sd_range: Option<Spanned<[f64; 2]>>,
    gust_max: Option<Spanned<f64>>,
    min_recovery: Option<Spanned<f64>>,
    flat_span_s: Option<Spanned<u32>>,
    flat_tolerance: Option<Spanned<f64>>,
    partner: Option<Spanned<String>>,
    pair_mean_diff: Option<Spanned<f64>>,
    pair_max_diff: Option<Spanned<f64>>,
    above: Option<Spanned<String>>,
    shear_tolerance: Option<Spanned<f64>>,
    icing: Option<Spanned<RawIcing>>,
    off: Option<Spanned<Vec<String>>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawIcing {
    temperature: String,
    humidity: String,
    max_temperature: Option<f64>,
    min_humidity: Option<f64>,
}

/// How a channel's sample column is read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Decode {
    /// Engineering values (decimal numbers).
    Value,
    /// Raw integer counts, calibrated by the core.
    Counts,
}

/// One channel of the station file, checked. Some fields are informational,
/// kept for commands that describe the station.
#[allow(dead_code)]
#[derive(Clone, Debug)]
pub struct ChannelSpec {
    /// Column name in the samples, channel name in the records.
    pub id: String,
    /// What it measures.
    pub kind: Kind,
    /// Unit, as written (informational).
    pub unit: Option<String>,
    /// Height above ground, m (informational).
    pub height_m: Option<f64>,
    /// How the samples column is read.
    pub decode: Decode,
    /// The core's configuration.
    pub core: ChannelConfig,
    /// Line of the `[[channel]]` table.
    pub line: usize,
}

/// A checked station file.
#[allow(dead_code)]
#[derive(Clone, Debug)]
pub struct StationFile {
    /// Where it was read from.
    pub path: PathBuf,
    /// `[station] name`, if given.
    pub name: Option<String>,
    /// Sampling rate, Hz.
    pub sample_rate_hz: f64,
    /// The sample period in whole milliseconds.
    pub sample_period_ms: i64,
    /// How the samples files are laid out.
    pub table: Table,
    /// The core's station-wide settings.
    pub station: StationConfig,
    /// Channels, in file order.
    pub channels: Vec<ChannelSpec>,
    /// Another logger's interval table and its conventions
    /// (`[logger_table]`, `[conventions]`), for `tenmin verify`.
    pub logger_table: Option<LoggerTable>,
    /// `[campaign] events`: the events file, resolved against the station
    /// file's folder, with the key's line in the station file.
    pub events: Option<(PathBuf, usize)>,
    /// `[campaign] exclusions`: the exclusions file, relative paths resolved
    /// against the station file's folder; read by [`load`].
    pub exclusions_file: Option<PathBuf>,
    /// The exclusions ([`load`] reads them; empty without the key).
    pub exclusions: crate::exclusions::Exclusions,
    /// The sensor history named by `[campaign] sensors`, if any.
    pub sensors: Option<std::sync::Arc<crate::sensors::History>>,
}

impl StationFile {
    /// Every file the station file names (the `[campaign]` side files), in a
    /// fixed order, for provenance; the station file itself is not in it.
    pub fn side_files(&self) -> Vec<(&'static str, PathBuf)> {
        let mut v = Vec::new();
        if let Some(p) = &self.exclusions_file {
            v.push(("exclusions", p.clone()));
        }
        if let Some(h) = &self.sensors {
            v.push(("sensors", h.path.clone()));
        }
        if let Some((p, _)) = &self.events {
            v.push(("events", p.clone()));
        }
        v
    }
}

/// Reads and checks a station file.
pub fn load(path: &Path) -> Result<StationFile> {
    let bytes = crate::limits::read_station_file(path)?;
    let text = crate::limits::utf8_text(path, bytes)?;
    let mut file = parse(path, &text)?;
    if let Some(x) = &file.exclusions_file {
        let ids: Vec<&str> = file.channels.iter().map(|c| c.id.as_str()).collect();
        file.exclusions = crate::exclusions::Exclusions::load(x, &ids)?;
    }
    Ok(file)
}

/// Checks a station file given as text; `path` is used in messages.
pub fn parse(path: &Path, text: &str) -> Result<StationFile> {
    let raw: RawFile = toml::from_str(text)
        .map_err(|e| anyhow!("{}: {}", path.display(), e.to_string().trim_end()))?;
    let at = Locator { path, text };
    let logging = raw.logging.get_ref();

    let interval_s = logging.interval_s.as_ref().map_or(600, |s| *s.get_ref());
    if interval_s == 0 || 86_400 % interval_s != 0 {
        let span = logging
            .interval_s
            .as_ref()
            .map_or(raw.logging.span(), |s| s.span());
        bail!(at.err(
            span,
            "`interval_s` must divide 86400 (a day) evenly, such as 600 for 10 minutes"
        ));
    }
    // The rate, or the period (sub-1 Hz data need no 17-digit rate).
    let (rate, rate_span) = match (&logging.sample_rate_hz, &logging.sample_period_s) {
        (Some(_), Some(p)) => bail!(at.err(
            p.span(),
            "give `sample_rate_hz` or `sample_period_s`, not both"
        )),
        (Some(r), None) => (*r.get_ref(), r.span()),
        (None, Some(p)) => {
            let period = *p.get_ref();
            if !(0.05..=3600.0).contains(&period) || ((period * 1000.0).round() - period * 1000.0).abs() > 1e-6 {
                bail!(at.err(
                    p.span(),
                    &format!("`sample_period_s` {period}: from 0.05 to 3600 seconds, in whole milliseconds")
                ));
            }
            (1000.0 / (period * 1000.0).round(), p.span())
        }
        (None, None) => bail!(at.err(
            raw.logging.span(),
            "[logging] needs `sample_rate_hz` (such as 1) or `sample_period_s` (such as 60 for 1-minute data)"
        )),
    };
    let n = f64::from(interval_s) * rate;
    if !(rate.is_finite() && rate > 0.0) || (n - n.round()).abs() > 1e-9 * n.max(1.0) || n < 1.0 {
        bail!(at.err(
            rate_span,
            &format!("`sample_rate_hz` {rate} (or 1 / `sample_period_s`) times `interval_s` {interval_s} must be a whole number of samples")
        ));
    }
    if rate > 1000.0 {
        bail!(at.err(
            rate_span,
            &format!("`sample_rate_hz` {rate}: at most 1000 (timestamps are whole milliseconds)")
        ));
    }
    if n.round() > f64::from(qc_core::MAX_SAMPLES_PER_INTERVAL) {
        bail!(at.err(
            rate_span,
            &format!(
                "{n} samples per interval: at most {}",
                qc_core::MAX_SAMPLES_PER_INTERVAL
            )
        ));
    }
    let samples_per_interval = n.round() as u32;

    let mut missing_values = [None; MAX_SENTINELS];
    match &logging.missing_values {
        None => {
            missing_values[0] = Some(-999.0);
            missing_values[1] = Some(-9999.0);
        }
        Some(list) => {
            if list.get_ref().len() > MAX_SENTINELS {
                bail!(at.err(
                    list.span(),
                    &format!("`missing_values`: at most {MAX_SENTINELS} codes")
                ));
            }
            for (slot, v) in missing_values.iter_mut().zip(list.get_ref()) {
                if !v.is_finite() {
                    bail!(at.err(list.span(), "`missing_values` must be finite numbers"));
                }
                *slot = Some(*v);
            }
        }
    }
    let station = StationConfig {
        interval_s,
        samples_per_interval,
        missing_values,
    };

    if raw.channel.is_empty() {
        bail!(
            "{}: no [[channel]] tables: the station needs at least one channel",
            path.display()
        );
    }
    if raw.channel.len() > MAX_CHANNELS {
        bail!(
            "{}: {} channels: at most {MAX_CHANNELS} are supported",
            path.display(),
            raw.channel.len()
        );
    }
    // Ids first, so that speed_channel can name a later channel.
    let mut ids: Vec<&str> = Vec::with_capacity(raw.channel.len());
    for ch in &raw.channel {
        let id = ch.get_ref().id.get_ref().as_str();
        let span = ch.get_ref().id.span();
        if id.is_empty()
            || !id
                .bytes()
                .all(|b| b.is_ascii_alphanumeric() || b"_-.".contains(&b))
        {
            bail!(at.err(
                span,
                &format!("channel id {id:?}: use letters, digits, '_', '-' or '.'")
            ));
        }
        if id == "time" {
            bail!(at.err(span, "channel id \"time\" is taken by the time column"));
        }
        if ids.contains(&id) {
            bail!(at.err(span, &format!("channel id {id:?} appears twice")));
        }
        ids.push(id);
    }
    let kinds: Vec<RawKind> = raw
        .channel
        .iter()
        .map(|c| *c.get_ref().kind.get_ref())
        .collect();
    let mut channels = Vec::with_capacity(raw.channel.len());
    for ch in &raw.channel {
        channels.push(build_channel(&at, ch, rate, &ids, &kinds)?);
    }
    let sample_period_ms = (1000.0 / rate).round() as i64;
    let sources: Vec<RawSource<'_>> = raw
        .channel
        .iter()
        .zip(&channels)
        .map(|(ch, spec)| {
            let c = ch.get_ref();
            RawSource {
                column: c.column.as_ref(),
                source_unit: c.source_unit.as_ref(),
                quality: c.quality.as_ref(),
                unit: c.unit.as_deref(),
                kind: spec.kind,
                id: c.id.get_ref(),
                span: ch.span(),
            }
        })
        .collect();
    let table = table::build(
        raw.input.as_ref(),
        &sources,
        sample_period_ms,
        &|span, msg| at.err(span, &msg),
        &|span| at.line(&span),
    )?;
    let logger_table = logtable::build(
        raw.logger_table.as_ref(),
        raw.conventions.as_ref(),
        &channels,
        i64::from(interval_s) * 1000,
        &|span, msg| at.err(span, &msg),
        &|span| at.line(&span),
    )?;
    let events = match raw.campaign.as_ref().and_then(|c| c.events.as_ref()) {
        None => None,
        Some(e) => {
            if e.get_ref().trim().is_empty() {
                bail!(at.err(
                    e.span(),
                    "[campaign] `events`: a file name, relative to the station file, such as \"events.csv\""
                ));
            }
            let base = path.parent().unwrap_or_else(|| Path::new(""));
            Some((base.join(e.get_ref()), at.line(&e.span())))
        }
    };
    let exclusions_file = match raw.campaign.as_ref().and_then(|c| c.exclusions.as_ref()) {
        Some(x) if x.get_ref().trim().is_empty() => bail!(at.err(
            x.span(),
            "`exclusions` is empty: name the exclusions file, relative to this station file"
        )),
        Some(x) => Some(
            path.parent()
                .unwrap_or(Path::new(""))
                .join(x.get_ref().as_str()),
        ),
        None => None,
    };
    let sensors = match raw.campaign.as_ref().and_then(|c| c.sensors.as_ref()) {
        Some(name) => {
            if name.get_ref().is_empty() {
                bail!(at.err(name.span(), "`sensors`: the sensor history's file name"));
            }
            let dir = path.parent().unwrap_or(Path::new(""));
            let file = dir.join(name.get_ref());
            if !file.is_file() {
                bail!(at.err(
                    name.span(),
                    &format!(
                        "`sensors`: {} is not a file (the path is relative to the station file)",
                        file.display()
                    )
                ));
            }
            Some(std::sync::Arc::new(crate::sensors::load(&file, &channels)?))
        }
        None => None,
    };
    let file = StationFile {
        path: path.to_path_buf(),
        events,
        name: raw.station.and_then(|s| s.name),
        sample_rate_hz: rate,
        sample_period_ms,
        table,
        station,
        channels,
        logger_table,
        exclusions_file,
        exclusions: crate::exclusions::Exclusions::default(),
        sensors,
    };
    // Let the core validate everything it checks, once, here.
    file.layout::<MAX_CHANNELS>()?;
    file.epochs::<MAX_CHANNELS>()?;
    Ok(file)
}

struct Locator<'a> {
    path: &'a Path,
    text: &'a str,
}

impl Locator<'_> {
    fn line(&self, span: &Range<usize>) -> usize {
        crate::limits::line_at(self.text.as_bytes(), span.start)
    }

    fn err(&self, span: Range<usize>, msg: &str) -> anyhow::Error {
        anyhow!("{}:{}: {msg}", self.path.display(), self.line(&span))
    }
}

fn kind_name(k: RawKind) -> &'static str {
    match k {
        RawKind::Speed => "speed",
        RawKind::Direction => "direction",
        RawKind::Scalar => "scalar",
    }
}

fn build_channel(
    at: &Locator<'_>,
    spanned: &Spanned<RawChannel>,
    rate: f64,
    ids: &[&str],
    kinds: &[RawKind],
) -> Result<ChannelSpec> {
    let raw = spanned.get_ref();
    let id = raw.id.get_ref();
    let rk = *raw.kind.get_ref();
    let err = |span: Range<usize>, msg: String| at.err(span, &format!("channel {id:?}: {msg}"));
    let only = |key: &str, span: Option<Range<usize>>, allowed: bool, what: &str| -> Result<()> {
        match span {
            Some(s) if !allowed => Err(err(
                s,
                format!(
                    "`{key}` applies to {what} channels only, not {}",
                    kind_name(rk)
                ),
            )),
            _ => Ok(()),
        }
    };
    let is_speed = matches!(rk, RawKind::Speed);
    let is_dir = matches!(rk, RawKind::Direction);
    only(
        "gust_window_s",
        raw.gust_window_s.as_ref().map(Spanned::span),
        is_speed,
        "speed",
    )?;
    only(
        "offset_deg",
        raw.offset_deg.as_ref().map(Spanned::span),
        is_dir,
        "direction",
    )?;
    only(
        "speed_channel",
        raw.speed_channel.as_ref().map(Spanned::span),
        is_dir,
        "direction",
    )?;
    if let (Some(r), Some(_)) = (&raw.resolution, &raw.slope) {
        return Err(err(
            r.span(),
            "give `resolution` for values or `slope` (and `offset`) for raw counts, not both"
                .into(),
        ));
    }
    if let (Some(o), None) = (&raw.offset, &raw.slope) {
        return Err(err(
            o.span(),
            "`offset` is a calibration offset and needs `slope`".into(),
        ));
    }
    if is_dir {
        if let Some(r) = &raw.resolution {
            return Err(err(
                r.span(),
                "direction values are kept to 0.01 degree; `resolution` applies to speed and scalar (use `slope` for raw counts)".into(),
            ));
        }
    }
    let num = |key: &str, v: &Spanned<f64>| -> Result<f64> {
        let x = *v.get_ref();
        if x.is_finite() {
            Ok(x)
        } else {
            Err(err(v.span(), format!("`{key}` must be a finite number")))
        }
    };
    let calibration = match &raw.slope {
        Some(s) => {
            let slope = num("slope", s)?;
            let offset = raw.offset.as_ref().map(|o| num("offset", o)).transpose()?;
            Some((slope, offset.unwrap_or(0.0)))
        }
        None => None,
    };
    let table = spanned.span();
    let (kind, mut core) = match rk {
        RawKind::Speed | RawKind::Scalar => {
            let step = match (&raw.resolution, calibration) {
                (Some(r), _) => num("resolution", r)?,
                (None, Some((slope, _))) => slope,
                (None, None) => {
                    return Err(err(
                        table,
                        format!(
                            "`resolution` is required for {} channels (or `slope` for raw counts)",
                            kind_name(rk)
                        ),
                    ))
                }
            };
            if is_speed {
                (Kind::Speed, ChannelConfig::speed(step))
            } else {
                (Kind::Scalar, ChannelConfig::scalar(step))
            }
        }
        RawKind::Direction => (Kind::Direction, ChannelConfig::direction()),
    };
    if let Some((slope, offset)) = calibration {
        core = core.with_calibration(slope, offset);
    }
    if let Some(r) = &raw.range {
        let [lo, hi] = *r.get_ref();
        if !(lo.is_finite() && hi.is_finite() && lo <= hi) {
            return Err(err(
                r.span(),
                "`range` must be [low, high] with finite low <= high".into(),
            ));
        }
        core = core.with_range(lo, hi);
    }
    if is_speed {
        let secs = match &raw.gust_window_s {
            Some(g) => num("gust_window_s", g)?,
            None => DEFAULT_GUST_S,
        };
        let w = secs * rate;
        // No gust: asked for (0), or the default 3-second window is shorter
        // than one sample (a 3-second gust cannot come from 1-minute means).
        let none = secs == 0.0 || (raw.gust_window_s.is_none() && w < 1.0);
        let span = raw
            .gust_window_s
            .as_ref()
            .map_or(table.clone(), Spanned::span);
        if none {
            core = core.with_gust_window(0);
        } else if w.is_nan() || w < 1.0 || (w - w.round()).abs() > 1e-9 * w {
            return Err(err(
                span,
                format!("gust window {secs} s at {rate} Hz must be a whole number of samples, at least 1 (or 0: no gust)"),
            ));
        } else if w.round() > GUST_CAPACITY as f64 {
            return Err(err(
                span,
                format!(
                    "gust window of {} samples: at most {GUST_CAPACITY} are supported",
                    w.round()
                ),
            ));
        } else {
            core = core.with_gust_window(w.round() as u16);
        }
    }
    if let Some(o) = &raw.offset_deg {
        core = core.with_mounting_offset(num("offset_deg", o)?);
    }
    if let Some(s) = &raw.speed_channel {
        let name = s.get_ref().as_str();
        let Some(i) = ids.iter().position(|x| *x == name) else {
            return Err(err(
                s.span(),
                format!("`speed_channel` names {name:?}, which is not a channel id"),
            ));
        };
        if !matches!(kinds[i], RawKind::Speed) {
            return Err(err(
                s.span(),
                format!("`speed_channel` names {name:?}, which is not a speed channel"),
            ));
        }
        core = core.with_speed_channel(i as u8);
    }
    if let Some(h) = &raw.height_m {
        num("height_m", h)?;
    }
    // Screening settings: the core's defaults for the kind (`Screen::for_kind`),
    // already in `core`, overridden by the `[channel.screen]` table.
    if let Some(sc) = &raw.screen {
        let own = ids
            .iter()
            .position(|x| *x == id.as_str())
            .unwrap_or(usize::MAX);
        core = core.with_screen(build_screen(sc, core.screen, rk, (ids, kinds, own), &err)?);
    }
    Ok(ChannelSpec {
        id: id.clone(),
        kind,
        unit: raw.unit.clone(),
        height_m: raw.height_m.as_ref().map(|h| *h.get_ref()),
        decode: if calibration.is_some() {
            Decode::Counts
        } else {
            Decode::Value
        },
        core,
        line: at.line(&table),
    })
}

/// Applies a `[channel.screen]` table over the defaults `base`.
fn build_screen(
    spanned: &Spanned<RawScreen>,
    base: Screen,
    rk: RawKind,
    (ids, kinds, own): (&[&str], &[RawKind], usize),
    err: &dyn Fn(Range<usize>, String) -> anyhow::Error,
) -> Result<Screen> {
    let raw = spanned.get_ref();
    let mut s = base;
    let num = |key: &str, v: &Spanned<f64>| -> Result<f64> {
        let x = *v.get_ref();
        if x.is_finite() && x >= 0.0 {
            Ok(x)
        } else {
            Err(err(
                v.span(),
                format!("`screen.{key}` must be a finite number >= 0"),
            ))
        }
    };
    let pair = |key: &str, v: &Spanned<[f64; 2]>| -> Result<(f64, f64)> {
        let [lo, hi] = *v.get_ref();
        if lo.is_finite() && hi.is_finite() && lo <= hi {
            Ok((lo, hi))
        } else {
            Err(err(
                v.span(),
                format!("`screen.{key}` must be [low, high] with finite low <= high"),
            ))
        }
    };
    let channel = |key: &str, name: &str, span: Range<usize>, want: RawKind| -> Result<u8> {
        match ids.iter().position(|x| *x == name) {
            Some(i) if i == own && matches!(key, "partner" | "above") => Err(err(
                span,
                format!(
                    "`screen.{key}` names {name:?}, the channel itself: name another speed channel (partner: the redundant anemometer; above: the next higher one)"
                ),
            )),
            Some(i) if std::mem::discriminant(&kinds[i]) == std::mem::discriminant(&want) => {
                Ok(i as u8)
            }
            Some(_) => Err(err(
                span,
                format!(
                    "`screen.{key}` names {name:?}, which is not a {} channel",
                    kind_name(want)
                ),
            )),
            None => Err(err(
                span,
                format!("`screen.{key}` names {name:?}, which is not a channel id"),
            )),
        }
    };
    if let Some(v) = &raw.step_limit {
        s.step_limit = Some(num("step_limit", v)?);
    }
    if let Some(v) = &raw.mean_range {
        s.mean_range = Some(pair("mean_range", v)?);
    }
    if let Some(v) = &raw.sd_range {
        s.sd_range = Some(pair("sd_range", v)?);
    }
    if let Some(v) = &raw.gust_max {
        s.gust_max = Some(num("gust_max", v)?);
    }
    if let Some(v) = &raw.min_recovery {
        let m = *v.get_ref();
        if !(0.0..=1.0).contains(&m) {
            return Err(err(
                v.span(),
                "`screen.min_recovery` is a fraction from 0 to 1".into(),
            ));
        }
        s.min_recovery = Some(m);
    }
    if let Some(v) = &raw.flat_span_s {
        s.flat_span_s = Some(*v.get_ref());
    }
    if let Some(v) = &raw.flat_tolerance {
        s.flat_tolerance = num("flat_tolerance", v)?;
    }
    if let Some(v) = &raw.pair_mean_diff {
        s.pair_mean_diff = num("pair_mean_diff", v)?;
    }
    if let Some(v) = &raw.pair_max_diff {
        s.pair_max_diff = num("pair_max_diff", v)?;
    }
    if let Some(v) = &raw.shear_tolerance {
        s.shear_tolerance = num("shear_tolerance", v)?;
    }
    let speed_only = |key: &str, span: Range<usize>| -> Result<()> {
        if matches!(rk, RawKind::Speed) {
            Ok(())
        } else {
            Err(err(
                span,
                format!("`screen.{key}` applies to speed channels only"),
            ))
        }
    };
    if let Some(v) = &raw.partner {
        speed_only("partner", v.span())?;
        s.partner = Some(channel("partner", v.get_ref(), v.span(), RawKind::Speed)?);
    }
    if let Some(v) = &raw.above {
        speed_only("above", v.span())?;
        s.above = Some(channel("above", v.get_ref(), v.span(), RawKind::Speed)?);
    }
    if let Some(v) = &raw.icing {
        if matches!(rk, RawKind::Scalar) {
            return Err(err(
                v.span(),
                "`screen.icing` applies to speed and direction channels".into(),
            ));
        }
        let ice = v.get_ref();
        let mut i = Icing::new(
            channel(
                "icing.temperature",
                &ice.temperature,
                v.span(),
                RawKind::Scalar,
            )?,
            channel("icing.humidity", &ice.humidity, v.span(), RawKind::Scalar)?,
        );
        if let Some(t) = ice.max_temperature {
            i.max_temperature = t;
        }
        if let Some(h) = ice.min_humidity {
            i.min_humidity = h;
        }
        s.icing = Some(i);
    }
    if let Some(list) = &raw.off {
        for name in list.get_ref() {
            match name.as_str() {
                "spike" => s.step_limit = None,
                // `range`: the name of earlier versions.
                "implausible" | "range" => {
                    s.mean_range = None;
                    s.sd_range = None;
                    s.gust_max = None;
                }
                "low_recovery" => s.min_recovery = None,
                "flatline" => s.flat_span_s = None,
                "icing" => s.icing = None,
                "pair_mismatch" => s.partner = None,
                "shear" => s.above = None,
                other => {
                    return Err(err(
                        list.span(),
                        format!("`screen.off`: {other:?} is not a test that can be switched off (spike, implausible, low_recovery, flatline, icing, pair_mismatch, shear)"),
                    ))
                }
            }
        }
    }
    Ok(s)
}

impl StationFile {
    /// The core layout for `C >= channels.len()` slots, unused slots padded with
    /// `ChannelConfig::scalar(1.0)` (fed `Reading::Missing`, never printed).
    pub fn layout<const C: usize>(&self) -> Result<Layout<C>> {
        if self.channels.len() > C {
            bail!("{} channels do not fit {C} slots", self.channels.len());
        }
        let cfgs: [ChannelConfig; C] = core::array::from_fn(|i| {
            self.channels
                .get(i)
                .map_or(ChannelConfig::scalar(1.0), |c| c.core)
        });
        Layout::new::<GUST_CAPACITY>(self.station, &cfgs).map_err(|e| self.config_error(e))
    }

    /// The layouts of the sensor history's periods ([`crate::sensors::Epochs`]),
    /// `None` without a history.
    pub fn epochs<const C: usize>(&self) -> Result<Option<crate::sensors::Epochs<C>>> {
        let Some(h) = &self.sensors else {
            return Ok(None);
        };
        if self.channels.len() > C {
            bail!("{} channels do not fit {C} slots", self.channels.len());
        }
        let cfgs: [ChannelConfig; C] = core::array::from_fn(|i| {
            self.channels
                .get(i)
                .map_or(ChannelConfig::scalar(1.0), |c| c.core)
        });
        crate::sensors::Epochs::new(h, self.station, &cfgs).map(Some)
    }

    fn config_error(&self, e: ConfigError) -> anyhow::Error {
        match e {
            ConfigError::Channel { index, problem } => {
                match self.channels.get(usize::from(index)) {
                    Some(ch) => anyhow!(
                        "{}:{}: channel {:?}: {problem}",
                        self.path.display(),
                        ch.line,
                        ch.id
                    ),
                    None => anyhow!("{}: {e}", self.path.display()),
                }
            }
            other => anyhow!("{}: {other}", self.path.display()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const GOOD: &str = r#"
[logging]
sample_rate_hz = 1

[station]
name = "Test"

[[channel]]
id = "ws"
kind = "speed"
unit = "m/s"
height_m = 80
resolution = 0.01

[[channel]]
id = "wd"
kind = "direction"
offset_deg = 5
speed_channel = "ws"

[[channel]]
id = "raw"
kind = "scalar"
slope = 0.5
offset = 1
"#;

    fn parse_str(s: &str) -> Result<StationFile> {
        parse(Path::new("st.toml"), s)
    }

    #[test]
    fn good_file() {
        let f = parse_str(GOOD).unwrap();
        assert_eq!(f.station.interval_s, 600);
        assert_eq!(f.station.samples_per_interval, 600);
        assert_eq!(
            f.station.missing_values,
            [Some(-999.0), Some(-9999.0), None, None]
        );
        assert_eq!(f.channels.len(), 3);
        assert_eq!(f.channels[0].core.gust_window, 3);
        assert_eq!(f.channels[1].core.speed_channel, Some(0));
        assert_eq!(f.channels[1].core.mounting_offset_deg, 5.0);
        assert_eq!(f.channels[2].decode, Decode::Counts);
        assert_eq!(f.channels[1].line, 15);
        assert_eq!(f.name.as_deref(), Some("Test"));
    }

    #[test]
    fn screen_table_overrides_defaults() {
        let text = GOOD.replace(
            "resolution = 0.01\n",
            "resolution = 0.01\n\n[channel.screen]\nstep_limit = 4\nmean_range = [0.5, 20]\noff = [\"flatline\"]\nicing = { temperature = \"raw\", humidity = \"raw\", max_temperature = 1 }\n",
        );
        let f = parse_str(&text).unwrap();
        let s = f.channels[0].core.screen;
        assert_eq!(s.step_limit, Some(4.0));
        assert_eq!(s.mean_range, Some((0.5, 20.0)));
        assert_eq!(s.flat_span_s, None);
        // Untouched keys keep the core's defaults for a speed channel.
        assert_eq!(s.sd_range, Screen::for_kind(Kind::Speed).sd_range);
        let ice = s.icing.unwrap();
        assert_eq!(
            (
                ice.temperature,
                ice.humidity,
                ice.max_temperature,
                ice.min_humidity
            ),
            (2, 2, 1.0, 85.0)
        );
        // Channels without a table keep every default.
        assert_eq!(f.channels[1].core.screen, Screen::for_kind(Kind::Direction));
    }

    #[test]
    fn screen_errors_name_key_and_line() {
        let with = |extra: &str| {
            let text = GOOD.replace(
                "resolution = 0.01\n",
                &format!("resolution = 0.01\n\n[channel.screen]\n{extra}\n"),
            );
            parse_str(&text)
                .err()
                .map(|e| format!("{e:#}"))
                .unwrap_or_default()
        };
        let e = with("colour = 1");
        assert!(e.contains("colour") && e.contains("st.toml"), "{e}");
        let e = with("partner = \"wd\"");
        assert!(
            e.contains("not a speed channel") && e.contains("st.toml:16:"),
            "{e}"
        );
        let e = with("partner = \"nope\"");
        assert!(e.contains("not a channel id"), "{e}");
        // A channel compared with itself: the pair and shear tests could never fire.
        for key in ["partner", "above"] {
            let e = with(&format!("{key} = \"ws\""));
            assert!(
                e.contains("the channel itself") && e.contains("st.toml:16:"),
                "{e}"
            );
        }
        let e = with("min_recovery = 1.5");
        assert!(e.contains("fraction"), "{e}");
        let e = with("off = [\"clock\"]");
        assert!(e.contains("cannot") || e.contains("not a test"), "{e}");
        let e = with("mean_range = [5, 1]");
        assert!(e.contains("low <= high"), "{e}");
    }

    #[test]
    fn errors_name_key_and_line() {
        let cases: &[(&str, &str, &str)] = &[
            // (replace, with, expected in message)
            ("unit = \"m/s\"", "unit = \"m/s\"\ncolour = 1", "colour"),
            ("unit = \"m/s\"", "unit = \"m/s\"\ncolour = 1", "line 12"),
            (
                "resolution = 0.01",
                "resolution = 0.01\ngust_window_s = 2.5",
                "st.toml:14: channel \"ws\": gust window 2.5 s",
            ),
            (
                "resolution = 0.01",
                "",
                "st.toml:8: channel \"ws\": `resolution` is required",
            ),
            (
                "offset_deg = 5",
                "offset_deg = 5\nresolution = 1",
                "st.toml:19:",
            ),
            (
                "speed_channel = \"ws\"",
                "speed_channel = \"raw\"",
                "not a speed channel",
            ),
            (
                "speed_channel = \"ws\"",
                "speed_channel = \"nope\"",
                "not a channel id",
            ),
            (
                "sample_rate_hz = 1",
                "sample_rate_hz = 0.0007",
                "st.toml:3: `sample_rate_hz` 0.0007",
            ),
            (
                "sample_rate_hz = 1",
                "sample_rate_hz = 1\ninterval_s = 7",
                "divide 86400",
            ),
            (
                "sample_rate_hz = 1",
                "sample_rate_hz = 2000",
                "st.toml:3: `sample_rate_hz` 2000: at most 1000",
            ),
            (
                "offset_deg = 5",
                "offset_deg = 400",
                "mounting offset must be within -360 to 360 degrees",
            ),
            (
                "sample_rate_hz = 1",
                "sample_rate_hz = 1\nmissing_values = [1, 2, 3, 4, 5]",
                "at most 4",
            ),
            ("id = \"raw\"", "id = \"ws\"", "appears twice"),
            ("id = \"raw\"", "id = \"a,b\"", "letters, digits"),
            ("kind = \"scalar\"", "kind = \"vector\"", "vector"),
            (
                "resolution = 0.01",
                "resolution = 0.01\ngust_window_s = 100",
                "at most 64",
            ),
            (
                "resolution = 0.01",
                "resolution = 0.01\nrange = [5, 1]",
                "low <= high",
            ),
            (
                "resolution = 0.01",
                "resolution = -1",
                "st.toml:8: channel \"ws\": resolution",
            ),
        ];
        for (from, to, want) in cases {
            let text = GOOD.replacen(from, to, 1);
            let msg = format!("{:#}", parse_str(&text).unwrap_err());
            assert!(msg.contains(want), "{to}: {msg}");
        }
    }
}
