//! The sensor history (`[campaign] sensors = "FILE"` in the station file):
//! dated entries per channel, each in force from its `from` instant until the
//! channel's next entry (or its own `to`), carrying the sensor's model and
//! serial, its calibration certificate, the transfer function programmed in
//! the logger for that period and, for a vane, the mounting offset.
//!
//! ```toml
//! [[entry]]
//! id = "ws80a-1"                       # unique in the file; records name it
//! channel = "ws80a"                    # a channel id of the station file
//! from = "2025-01-20T00:00:00Z"        # RFC 3339; in force from this instant
//! # to = "2025-06-01T00:00:00Z"        # optional end; else the next entry's from
//! model = "cup anemometer"             # informational: model, serial, note
//! serial = "A-1042"
//! logger = { slope = 0.0462, offset = 0.21 }  # transfer function in the logger
//! certificate = { id = "C-7731", date = "2024-11-02", slope = 0.04581, offset = 0.2214, uncertainty = 0.05 }
//!
//! [[entry]]
//! id = "wd78-1"
//! channel = "wd78"
//! from = "2025-01-20T00:00:00Z"
//! offset_deg = 4                       # vane mounting offset for the period
//! ```
//!
//! What the core does with an entry: [`qc_core::Recal`] (re-scaling of logged
//! values, in a stated order of operations, when the logger's transfer
//! function is not the certificate's; a logger programmed with the sensor's
//! own certificate logs calibrated values, taken as they are) and the
//! mounting offset of a direction channel. Everything else is kept for people reading the file.
//! The station uses one [`qc_core::Layout`] per period in which the same
//! entries are in force ([`Epochs`]); every such layout has the station's
//! frame ([`qc_core::Layout::frame`]): quanta, ranges, gust windows and
//! screening stay the station file's, so the intervals of one channel add up
//! whatever entry classified their samples.

use std::collections::HashSet;
use std::fmt::Write as _;
use std::ops::Range;
use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Result};
use qc_core::{ChannelConfig, Flag, Kind, Layout, Reading, Recal, Station, Timestamp};
use serde::Deserialize;
use toml::Spanned;

use crate::config::{ChannelSpec, Decode, GUST_CAPACITY};
use crate::timefmt::{parse_time, Rfc3339};

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawHistory {
    #[serde(default)]
    entry: Vec<Spanned<RawEntry>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawEntry {
    id: Spanned<String>,
    channel: Spanned<String>,
    from: Spanned<toml::Value>,
    to: Option<Spanned<toml::Value>>,
    model: Option<String>,
    serial: Option<String>,
    note: Option<String>,
    logger: Option<Spanned<RawTransfer>>,
    certificate: Option<Spanned<RawCertificate>>,
    offset_deg: Option<Spanned<f64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTransfer {
    slope: f64,
    offset: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCertificate {
    id: Option<String>,
    date: Option<Spanned<String>>,
    slope: Option<Spanned<f64>>,
    offset: Option<Spanned<f64>>,
    uncertainty: Option<Spanned<f64>>,
}

/// A calibration certificate as the history gives it.
#[derive(Clone, Debug, PartialEq)]
pub struct Certificate {
    /// Its number or name.
    pub id: Option<String>,
    /// Date of the calibration, `YYYY-MM-DD`.
    pub date: Option<String>,
    /// Slope and offset (speed and scalar channels).
    pub slope_offset: Option<(f64, f64)>,
    /// The certificate's own uncertainty, as written (informational).
    pub uncertainty: Option<f64>,
}

/// One entry of a channel's history, checked.
#[derive(Clone, Debug, PartialEq)]
pub struct Entry {
    /// The entry's id, unique in the file (records name it).
    pub id: String,
    /// In force from this instant, ms since the epoch.
    pub from: i64,
    /// In force until this instant (exclusive), ms: its own `to`, else the
    /// next entry's `from`; `i64::MAX` for the last.
    pub until: i64,
    /// Informational: model, serial, note.
    pub model: Option<String>,
    /// Serial number.
    pub serial: Option<String>,
    /// Free text.
    pub note: Option<String>,
    /// The certificate.
    pub certificate: Option<Certificate>,
    /// The logger's transfer function (slope, offset).
    pub logger: Option<(f64, f64)>,
    /// Vane mounting offset, degrees.
    pub offset_deg: Option<f64>,
    /// The re-scaling the core applies, when logger and certificate give one.
    pub recal: Option<Recal>,
    /// Line of the `[[entry]]` table.
    pub line: usize,
}

/// A checked sensor history: per channel of the station, its entries in time
/// order.
#[derive(Clone, Debug, PartialEq)]
pub struct History {
    /// The file it was read from.
    pub path: PathBuf,
    /// Entries per channel, in station-file channel order.
    pub channels: Vec<Vec<Entry>>,
}

struct At<'a> {
    path: &'a Path,
    text: &'a str,
}

impl At<'_> {
    fn line(&self, span: &Range<usize>) -> usize {
        crate::limits::line_at(self.text.as_bytes(), span.start)
    }

    fn err(&self, span: &Range<usize>, key: &str, msg: &str) -> anyhow::Error {
        anyhow!(
            "{}:{}: `{key}`: {msg}",
            self.path.display(),
            self.line(span)
        )
    }
}

/// Reads the history `path` for `channels`, capped as a station file is.
pub fn load(path: &Path, channels: &[ChannelSpec]) -> Result<History> {
    let bytes =
        crate::limits::read_station_file(path).map_err(|e| anyhow!("sensor history: {e:#}"))?;
    let text = String::from_utf8(bytes)
        .map_err(|_| anyhow!("{}: the sensor history is not valid UTF-8", path.display()))?;
    parse(path, &text, channels)
}

fn instant(at: &At<'_>, key: &str, v: &Spanned<toml::Value>) -> Result<i64> {
    let text = match v.get_ref() {
        toml::Value::String(s) => s.clone(),
        toml::Value::Datetime(d) => d.to_string(),
        _ => {
            return Err(at.err(
                &v.span(),
                key,
                "an RFC 3339 time with its offset, such as \"2025-03-14T10:20:00Z\"",
            ))
        }
    };
    parse_time(text.as_bytes())
        .map(Timestamp::millis)
        .map_err(|e| at.err(&v.span(), key, &format!("{text:?}: {e}")))
}

/// Checks a history given as text; `path` is used in messages.
pub fn parse(path: &Path, text: &str, channels: &[ChannelSpec]) -> Result<History> {
    let raw: RawHistory = toml::from_str(text).map_err(|e| {
        anyhow!(
            "{}: sensor history: {}",
            path.display(),
            e.to_string().trim_end()
        )
    })?;
    let at = At { path, text };
    let mut per: Vec<Vec<Entry>> = vec![Vec::new(); channels.len()];
    let mut ids: HashSet<String> = HashSet::new();
    for e in &raw.entry {
        let r = e.get_ref();
        let line = at.line(&e.span());
        let id = r.id.get_ref();
        if id.is_empty() || id.contains([',', '|', '"', '\n', '\r']) {
            return Err(at.err(
                &r.id.span(),
                "id",
                "a non-empty name without commas, '|', quotes or line ends",
            ));
        }
        if !ids.insert(id.clone()) {
            return Err(at.err(
                &r.id.span(),
                "id",
                &format!("{id:?} names two entries: ids are unique in the file"),
            ));
        }
        let name = r.channel.get_ref();
        let Some(ch) = channels.iter().position(|c| &c.id == name) else {
            let known: Vec<&str> = channels.iter().map(|c| c.id.as_str()).collect();
            return Err(at.err(
                &r.channel.span(),
                "channel",
                &format!(
                    "{name:?} is not a channel of the station file (channels: {})",
                    known.join(", ")
                ),
            ));
        };
        let spec = &channels[ch];
        let from = instant(&at, "from", &r.from)?;
        let to = r.to.as_ref().map(|t| instant(&at, "to", t)).transpose()?;
        if let (Some(t), Some(span)) = (to, r.to.as_ref()) {
            if t <= from {
                return Err(at.err(&span.span(), "to", "must be after the entry's `from`"));
            }
        }
        if let Some(prev) = per[ch].last_mut() {
            if from <= prev.from {
                return Err(at.err(
                    &r.from.span(),
                    "from",
                    &format!(
                        "{} goes back in time: channel {name:?}'s entry {:?} (line {}) is in force from {}; a channel's entries are listed in time order",
                        Rfc3339(Timestamp::from_millis(from)),
                        prev.id,
                        prev.line,
                        Rfc3339(Timestamp::from_millis(prev.from))
                    ),
                ));
            }
            if prev.until != i64::MAX && prev.until > from {
                return Err(at.err(
                    &r.from.span(),
                    "from",
                    &format!(
                        "{} overlaps channel {name:?}'s entry {:?} (line {}), in force until {}",
                        Rfc3339(Timestamp::from_millis(from)),
                        prev.id,
                        prev.line,
                        Rfc3339(Timestamp::from_millis(prev.until))
                    ),
                ));
            }
            if prev.until == i64::MAX {
                prev.until = from;
            }
        }
        let is_dir = spec.kind == Kind::Direction;
        if let Some(o) = &r.offset_deg {
            if !is_dir {
                return Err(at.err(
                    &o.span(),
                    "offset_deg",
                    &format!(
                        "a mounting offset applies to direction channels; {name:?} is not one"
                    ),
                ));
            }
            let v = *o.get_ref();
            if !(v.is_finite() && v.abs() <= 360.0) {
                return Err(at.err(&o.span(), "offset_deg", "from -360 to 360 degrees"));
            }
        }
        let certificate = match &r.certificate {
            None => None,
            Some(c) => Some(certificate(&at, c)?),
        };
        let cert_scale = certificate.as_ref().and_then(|c| c.slope_offset);
        let logger = r.logger.as_ref().map(|l| {
            let t = l.get_ref();
            (t.slope, t.offset, l.span())
        });
        if is_dir && (logger.is_some() || cert_scale.is_some()) {
            let (key, span) = match (&r.logger, &r.certificate) {
                (Some(l), _) => ("logger", l.span()),
                (None, Some(c)) => ("certificate", c.span()),
                (None, None) => ("logger", e.span()),
            };
            return Err(at.err(
                &span,
                key,
                "a vane is not re-scaled: its entry gives `offset_deg` (a certificate's id and date may be given, without slope and offset)",
            ));
        }
        let recal = match (logger.clone(), cert_scale) {
            (None, None) => None,
            (Some((_, _, span)), None) => {
                return Err(at.err(
                    &span,
                    "logger",
                    "re-scaling needs the certificate's slope and offset too: `certificate = { id = ..., slope = ..., offset = ... }`",
                ))
            }
            (None, Some(_)) => {
                let span = r.certificate.as_ref().map(Spanned::span).unwrap_or_default();
                return Err(at.err(
                    &span,
                    "certificate",
                    "re-scaling to the certificate needs the transfer function programmed in the logger: `logger = { slope = ..., offset = ... }`",
                ));
            }
            // The logger was programmed with this sensor's own certificate:
            // the values are logged calibrated, nothing to re-scale.
            (Some((ls, lo, span)), Some((cs, co))) if ls == cs && lo == co => {
                if !(ls.is_finite() && ls > 0.0 && lo.is_finite()) {
                    return Err(at.err(
                        &span,
                        "logger",
                        "the slope must be finite and positive, the offset finite",
                    ));
                }
                None
            }
            (Some((ls, lo, span)), Some((cs, co))) => {
                if spec.decode == Decode::Counts {
                    return Err(at.err(
                        &span,
                        "logger",
                        &format!("channel {name:?} reads raw counts, converted by the station file's `slope` and `offset`: re-scaling applies to channels recorded as values (`resolution`)"),
                    ));
                }
                let rc = Recal {
                    logger_slope: ls,
                    logger_offset: lo,
                    cert_slope: cs,
                    cert_offset: co,
                };
                if !rc.is_valid() {
                    return Err(at.err(
                        &span,
                        "logger",
                        "slopes must be finite and positive, offsets finite (logger and certificate)",
                    ));
                }
                Some(rc)
            }
        };
        per[ch].push(Entry {
            id: id.clone(),
            from,
            until: to.unwrap_or(i64::MAX),
            model: r.model.clone(),
            serial: r.serial.clone(),
            note: r.note.clone(),
            certificate,
            logger: logger.map(|(s, o, _)| (s, o)),
            offset_deg: r.offset_deg.as_ref().map(|o| *o.get_ref()),
            recal,
            line,
        });
    }
    Ok(History {
        path: path.to_path_buf(),
        channels: per,
    })
}

fn certificate(at: &At<'_>, c: &Spanned<RawCertificate>) -> Result<Certificate> {
    let r = c.get_ref();
    if let Some(d) = &r.date {
        let ok =
            jiff::civil::Date::strptime("%Y-%m-%d", d.get_ref()).is_ok() && d.get_ref().len() == 10;
        if !ok {
            return Err(at.err(
                &d.span(),
                "certificate.date",
                &format!("{:?}: a date written YYYY-MM-DD", d.get_ref()),
            ));
        }
    }
    let slope_offset = match (&r.slope, &r.offset) {
        (None, None) => None,
        (Some(s), Some(o)) => Some((*s.get_ref(), *o.get_ref())),
        (Some(s), None) => {
            return Err(at.err(
                &s.span(),
                "certificate.offset",
                "a certificate's slope needs its offset (0 if it gives none)",
            ))
        }
        (None, Some(o)) => {
            return Err(at.err(
                &o.span(),
                "certificate.slope",
                "a certificate's offset needs its slope",
            ))
        }
    };
    if let Some(u) = &r.uncertainty {
        if !(u.get_ref().is_finite() && *u.get_ref() >= 0.0) {
            return Err(at.err(
                &u.span(),
                "certificate.uncertainty",
                "a finite number >= 0, as the certificate states it",
            ));
        }
    }
    Ok(Certificate {
        id: r.id.clone(),
        date: r.date.as_ref().map(|d| d.get_ref().clone()),
        slope_offset,
        uncertainty: r.uncertainty.as_ref().map(|u| *u.get_ref()),
    })
}

impl History {
    /// The entry of channel `ch` in force at `t` (ms), if any.
    pub fn in_force(&self, ch: usize, t: i64) -> Option<&Entry> {
        self.channels
            .get(ch)?
            .iter()
            .find(|e| e.from <= t && t < e.until)
    }

    /// Whether the entry of channel `ch` in force changes inside `(start, end)`
    /// (an entry starting or ending strictly inside the interval).
    pub fn changes_within(&self, ch: usize, start: i64, end: i64) -> bool {
        self.channels.get(ch).is_some_and(|es| {
            es.iter()
                .any(|e| (start < e.from && e.from < end) || (start < e.until && e.until < end))
        })
    }

    /// Appends to `out` the ids of channel `ch`'s entries in force during
    /// `[start, end)`, joined with `|` (nothing when none is).
    pub fn write_in_force(&self, out: &mut String, ch: usize, start: i64, end: i64) {
        let Some(es) = self.channels.get(ch) else {
            return;
        };
        let mut first = true;
        for e in es.iter().filter(|e| e.from < end && start < e.until) {
            if !first {
                out.push('|');
            }
            first = false;
            let _ = write!(out, "{}", e.id);
        }
    }

    /// The records' mark of channel `ch` for `[start, end)`: the flags with
    /// `sensor_change` added when the entry changed inside the interval, and
    /// the ids of the entries in force.
    pub fn mark(
        &self,
        ch: usize,
        start: Timestamp,
        end: Timestamp,
        flags: qc_core::Flags,
        ids: &mut String,
    ) -> qc_core::Flags {
        ids.clear();
        self.write_in_force(ids, ch, start.millis(), end.millis());
        let mut f = flags;
        if self.changes_within(ch, start.millis(), end.millis()) {
            f.insert(Flag::SensorChange);
        }
        f
    }

    /// Whether any entry changes how values are converted (a re-scaling or a
    /// mounting offset): a sample file carries one configuration, so `tenmin
    /// export` refuses such a station.
    pub fn converts(&self) -> bool {
        self.channels
            .iter()
            .flatten()
            .any(|e| e.recal.is_some() || e.offset_deg.is_some())
    }

    /// The instants at which some channel's entry in force changes, sorted.
    fn boundaries(&self) -> Vec<i64> {
        let mut b: Vec<i64> = self
            .channels
            .iter()
            .flatten()
            .flat_map(|e| [e.from, e.until])
            .filter(|t| *t != i64::MAX)
            .collect();
        b.sort_unstable();
        b.dedup();
        b
    }

    /// The core configuration of channel `ch` at `t`: the station file's,
    /// with the mounting offset and re-scaling of the entry in force.
    fn config_at(&self, ch: usize, base: ChannelConfig, t: i64) -> ChannelConfig {
        let mut c = base;
        if let Some(e) = self.in_force(ch, t) {
            c.recal = e.recal;
            if let Some(o) = e.offset_deg {
                c.mounting_offset_deg = o;
            }
        }
        c
    }
}

/// The layouts of a station with a sensor history: one per period in which
/// the same entries are in force, all of the station's frame.
pub struct Epochs<const C: usize> {
    /// Start of each period, ms; the first is `i64::MIN` (before any entry:
    /// the station file as it is).
    starts: Vec<i64>,
    layouts: Vec<Layout<C>>,
    /// Fingerprint of each period's configuration over the station's real
    /// channels (what a logger of those channels stamps in its frames).
    prints: Vec<u32>,
}

impl<const C: usize> Epochs<C> {
    /// The periods of `history` over the station's channel configurations
    /// `base` (padded to `C`), validated by the core.
    pub fn new(
        history: &History,
        station: qc_core::StationConfig,
        base: &[ChannelConfig; C],
    ) -> Result<Self> {
        let mut starts = vec![i64::MIN];
        starts.extend(history.boundaries());
        let mut layouts = Vec::with_capacity(starts.len());
        let mut prints = Vec::with_capacity(starts.len());
        let n = history.channels.len().min(C);
        for &s in &starts {
            let cfgs: [ChannelConfig; C] = core::array::from_fn(|i| {
                if i < history.channels.len() {
                    history.config_at(i, base[i], s)
                } else {
                    base[i]
                }
            });
            let layout = Layout::new::<GUST_CAPACITY>(station, &cfgs).map_err(|e| {
                let line = match e {
                    qc_core::ConfigError::Channel { index, .. } => history
                        .in_force(usize::from(index), s)
                        .map_or(0, |en| en.line),
                    _ => 0,
                };
                anyhow!("{}:{line}: {e}", history.path.display())
            })?;
            layouts.push(layout);
            prints.push(qc_core::config_fingerprint(&station, &cfgs[..n]));
        }
        if let Some(first) = layouts.first() {
            if layouts.iter().any(|l| l.frame() != first.frame()) {
                bail!(
                    "{}: an entry changes more than mounting offsets and re-scaling",
                    history.path.display()
                );
            }
        }
        Ok(Epochs {
            starts,
            layouts,
            prints,
        })
    }

    /// The layout in force at `t`; `cursor` keeps the period of the last
    /// lookup (samples come in time order), 0 to start.
    pub fn at(&self, t: Timestamp, cursor: &mut usize) -> &Layout<C> {
        let ms = t.millis();
        let c = (*cursor).min(self.starts.len() - 1);
        let here = self.starts[c] <= ms && self.starts.get(c + 1).is_none_or(|n| ms < *n);
        *cursor = if here {
            c
        } else {
            // The last period starting at or before `ms` (the first starts at i64::MIN).
            self.starts.partition_point(|s| *s <= ms).saturating_sub(1)
        };
        &self.layouts[*cursor]
    }

    /// The layout in force at the first of `times` ([`Epochs::at`]) and how
    /// many of them, from the first, lie before the next period starts: a run
    /// that one layout classifies ([`qc_core::Station::push_run_with`]).
    /// `None` for no times.
    fn run(&self, times: &[Timestamp], cursor: &mut usize) -> Option<(&Layout<C>, usize)> {
        let layout = self.at(*times.first()?, cursor);
        let n = match self.starts.get(*cursor + 1) {
            None => times.len(),
            Some(&next) => times
                .iter()
                .position(|t| t.millis() >= next)
                .unwrap_or(times.len()),
        };
        Some((layout, n))
    }

    /// Pushes the run `times` (`columns`) into `station` as
    /// [`qc_core::Station::push_run`] does, its readings classified by the
    /// entry in force at its first time, up to where the next one comes into
    /// force ([`Epochs::run`]); returns how many it took. An entry of another
    /// frame takes none: the rows then go one by one, and `push_with` says why.
    pub fn push_run<const G: usize>(
        &self,
        station: &mut Station<C, G>,
        cursor: &mut usize,
        times: &[Timestamp],
        columns: &[&[Reading]; C],
    ) -> usize {
        match self.run(times, cursor) {
            Some((entry, n)) => {
                let times = times.get(..n).unwrap_or_default();
                station.push_run_with(entry, times, columns).unwrap_or(0)
            }
            None => 0,
        }
    }

    /// The fingerprint (over the station's real channels) of the layout in
    /// force at `t`: what a logger holding that entry stamps in its frames.
    pub fn fingerprint_at(&self, t: Timestamp) -> u32 {
        let mut cursor = 0;
        self.at(t, &mut cursor);
        self.prints[cursor]
    }

    /// The fingerprints of the layouts in force during the interval
    /// `[start, end)` (ms) or at its end: a logger holding the entry in force
    /// stamps its frames with one of them (it writes an interval's frames when
    /// the next interval starts, possibly under a new entry).
    pub fn fingerprints(&self, start: i64, end: i64) -> Vec<u32> {
        (0..self.starts.len())
            .filter(|&i| {
                let until = self.starts.get(i + 1).copied().unwrap_or(i64::MAX);
                self.starts[i] <= end && start < until
            })
            .map(|i| self.prints[i])
            .collect()
    }
}
