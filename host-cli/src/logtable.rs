//! Another logger's own interval table: its layout (`[logger_table]`, the
//! keys of `[input]`) and, per channel, which column holds which statistic in
//! which convention (`[conventions.<channel id>]`). Read with the one samples
//! reader ([`crate::reader`], [`crate::samples::Parser`]): the table is a
//! declared layout whose "channels" are its statistic columns.
//!
//! ```toml
//! [logger_table]
//! [logger_table.time]
//! column = "time_end"
//! format = "%Y-%m-%d %H:%M:%S"
//! zone = "+01:00"
//! label = "end"
//!
//! [conventions.ws80a]
//! mean = { column = "ws80a_mean", decimals = 2 }
//! sd = { column = "ws80a_sd", decimals = 3, divisor = "n-1" }
//! gust = { column = "ws80a_gust", decimals = 2, of = "sample" }
//! ```
//!
//! See CONTRACT.md, "Checking another logger's table".

use std::collections::BTreeMap;
use std::ops::Range;
use std::path::Path;

use anyhow::{anyhow, bail, Result};
use qc_core::conventions::{
    DirectionMean, Divisor, Largest, North, Rounding, Spread, Statistic, MAX_DECIMALS,
};
use qc_core::{ChannelConfig, Kind, Reading, Timestamp};
use serde::Deserialize;
use toml::Spanned;

use crate::config::{ChannelSpec, Decode, StationFile};
use crate::reader::{FileReader, Piece};
use crate::samples::{csv_rows, Records};
use crate::table::{self, Column, RawColumn, RawInput, RawSource, Table};

/// `[conventions.<id>]` as written.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawConventions {
    mean: Option<Spanned<RawStat>>,
    sd: Option<Spanned<RawStat>>,
    min: Option<Spanned<RawStat>>,
    max: Option<Spanned<RawStat>>,
    gust: Option<Spanned<RawStat>>,
    rounding: Option<Spanned<String>>,
    min_samples: Option<Spanned<u32>>,
}

/// One statistic's column and convention as written.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawStat {
    column: Spanned<RawColumn>,
    decimals: Option<Spanned<u8>>,
    divisor: Option<Spanned<String>>,
    of: Option<Spanned<String>>,
    method: Option<Spanned<String>>,
    north: Option<Spanned<String>>,
}

/// What a column holds, by its key in `[conventions.<id>]`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Key {
    /// `mean`: arithmetic mean, or the mean direction.
    Mean,
    /// `sd`: standard deviation, or the spread of direction.
    Sd,
    /// `min`.
    Min,
    /// `max`.
    Max,
    /// `gust`.
    Gust,
}

impl Key {
    /// The key as written.
    pub fn name(self) -> &'static str {
        match self {
            Key::Mean => "mean",
            Key::Sd => "sd",
            Key::Min => "min",
            Key::Max => "max",
            Key::Gust => "gust",
        }
    }

    /// The conventions a column of this key can follow on a channel of `kind`,
    /// as statistics and as their station-file text.
    pub fn choices(self, kind: Kind) -> Vec<(Statistic, &'static str)> {
        match (kind, self) {
            (Kind::Direction, Key::Mean) => vec![
                (
                    Statistic::Direction(DirectionMean::UnitVector),
                    "method = \"unit_vector\"",
                ),
                (
                    Statistic::Direction(DirectionMean::SpeedWeighted),
                    "method = \"speed_weighted\"",
                ),
            ],
            (Kind::Direction, Key::Sd) => vec![
                (
                    Statistic::Spread(Spread::Yamartino),
                    "method = \"yamartino\"",
                ),
                (Statistic::Spread(Spread::Circular), "method = \"circular\""),
                (Statistic::Spread(Spread::Angular), "method = \"angular\""),
            ],
            (Kind::Direction, _) => Vec::new(),
            (_, Key::Mean) => vec![(Statistic::Mean, "")],
            (_, Key::Sd) => vec![
                (Statistic::Sd(Divisor::N), "divisor = \"n\""),
                (Statistic::Sd(Divisor::NMinus1), "divisor = \"n-1\""),
            ],
            (_, Key::Min) => vec![(Statistic::Min, "of = \"sample\"")],
            (Kind::Speed, Key::Max | Key::Gust) => vec![
                (Statistic::Max(Largest::Sample), "of = \"sample\""),
                (
                    Statistic::Max(Largest::RunningMean),
                    "of = \"running_mean\"",
                ),
            ],
            (_, Key::Max) => vec![(Statistic::Max(Largest::Sample), "of = \"sample\"")],
            (_, Key::Gust) => Vec::new(),
        }
    }
}

/// One declared column of the table.
#[derive(Clone, Debug)]
pub struct StatColumn {
    /// The channel (index in the station file's channels).
    pub channel: usize,
    /// Its key.
    pub key: Key,
    /// The column as declared.
    pub column: Column,
    /// The convention declared (or the default).
    pub stat: Statistic,
    /// Decimals written, if declared.
    pub decimals: Option<u8>,
    /// How north is written (direction means).
    pub north: North,
    /// The channel's rounding rule.
    pub rounding: Rounding,
    /// Fewer valid samples than this: the logger leaves the field empty.
    pub min_samples: u32,
    /// The station file's line of the declaration.
    pub line: usize,
}

impl StatColumn {
    /// The column as named in messages.
    pub fn describe(&self) -> String {
        match &self.column {
            Column::Name(n) => format!("column {n:?}"),
            Column::Index(i) => format!("column {}", i + 1),
        }
    }
}

/// A checked `[logger_table]` with its `[conventions]`.
#[derive(Clone, Debug)]
pub struct LoggerTable {
    /// The table's layout: one row per interval, a source per statistic column.
    pub layout: Table,
    /// The statistic columns, in the order of [`Table::sources`].
    pub columns: Vec<StatColumn>,
}

/// Builds the table's declaration; `None` without `[logger_table]`.
pub(crate) fn build(
    input: Option<&Spanned<RawInput>>,
    conventions: Option<&Spanned<BTreeMap<String, Spanned<RawConventions>>>>,
    channels: &[ChannelSpec],
    interval_ms: i64,
    err: &dyn Fn(Range<usize>, String) -> anyhow::Error,
    line_of: &dyn Fn(Range<usize>) -> usize,
) -> Result<Option<LoggerTable>> {
    let (input, conventions) = match (input, conventions) {
        (None, None) => return Ok(None),
        (Some(i), None) => {
            return Err(err(
                i.span(),
                "[logger_table] needs [conventions.<channel id>] tables saying which column holds which statistic (see CONTRACT.md, \"Checking another logger's table\")".into(),
            ))
        }
        (None, Some(c)) => {
            return Err(err(
                c.span(),
                "[conventions] describe a logger's table: add [logger_table] with its layout (the keys of [input])".into(),
            ))
        }
        (Some(i), Some(c)) => (i, c),
    };
    let mut columns = Vec::new();
    for (id, conv) in conventions.get_ref() {
        let Some(ch) = channels.iter().position(|c| &c.id == id) else {
            return Err(err(
                conv.span(),
                format!(
                    "[conventions.{id}]: no channel {id:?} in this station file (channels: {})",
                    channels
                        .iter()
                        .map(|c| c.id.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            ));
        };
        let kind = channels[ch].kind;
        let c = conv.get_ref();
        let rounding = match &c.rounding {
            None => Rounding::Unknown,
            Some(r) => match r.get_ref().as_str() {
                "half_even" => Rounding::HalfEven,
                "half_away" => Rounding::HalfAway,
                "truncate" => Rounding::Truncate,
                "unknown" => Rounding::Unknown,
                other => {
                    return Err(err(
                        r.span(),
                        format!("`rounding` {other:?}: use \"half_even\", \"half_away\", \"truncate\" or \"unknown\""),
                    ))
                }
            },
        };
        let min_samples = c.min_samples.as_ref().map_or(1, |m| *m.get_ref()).max(1);
        let keys = [
            (Key::Mean, &c.mean),
            (Key::Sd, &c.sd),
            (Key::Min, &c.min),
            (Key::Max, &c.max),
            (Key::Gust, &c.gust),
        ];
        for (key, raw) in keys {
            let Some(raw) = raw else { continue };
            let r = raw.get_ref();
            let at = |span: Range<usize>, msg: String| {
                err(span, format!("[conventions.{id}] {}: {msg}", key.name()))
            };
            let choices = key.choices(kind);
            if choices.is_empty() {
                return Err(at(
                    raw.span(),
                    format!(
                        "a {} channel has no `{}` in a logger table",
                        kind_name(kind),
                        key.name()
                    ),
                ));
            }
            let mut stat = choices[0].0;
            let pick = |v: &Spanned<String>, name: &str, options: &[(&str, Statistic)]| {
                options
                    .iter()
                    .find(|(t, _)| *t == v.get_ref().as_str())
                    .map(|(_, s)| *s)
                    .ok_or_else(|| {
                        at(
                            v.span(),
                            format!(
                                "`{name}` {:?}: use {}",
                                v.get_ref(),
                                options
                                    .iter()
                                    .map(|(t, _)| format!("{t:?}"))
                                    .collect::<Vec<_>>()
                                    .join(" or ")
                            ),
                        )
                    })
            };
            let not_here = |v: Option<&Spanned<String>>, name: &str| -> Result<()> {
                match v {
                    Some(v) => Err(at(v.span(), format!("`{name}` does not apply here"))),
                    None => Ok(()),
                }
            };
            match (kind, key) {
                (Kind::Direction, Key::Mean) => {
                    if let Some(m) = &r.method {
                        stat = pick(
                            m,
                            "method",
                            &[
                                (
                                    "unit_vector",
                                    Statistic::Direction(DirectionMean::UnitVector),
                                ),
                                (
                                    "speed_weighted",
                                    Statistic::Direction(DirectionMean::SpeedWeighted),
                                ),
                            ],
                        )?;
                    }
                    if stat == Statistic::Direction(DirectionMean::SpeedWeighted)
                        && channels[ch].core.speed_channel.is_none()
                    {
                        return Err(at(
                            raw.span(),
                            "a speed-weighted mean needs the channel's `speed_channel`".into(),
                        ));
                    }
                    not_here(r.divisor.as_ref(), "divisor")?;
                    not_here(r.of.as_ref(), "of")?;
                }
                (Kind::Direction, _) => {
                    if let Some(m) = &r.method {
                        stat = pick(
                            m,
                            "method",
                            &[
                                ("yamartino", Statistic::Spread(Spread::Yamartino)),
                                ("circular", Statistic::Spread(Spread::Circular)),
                                ("angular", Statistic::Spread(Spread::Angular)),
                            ],
                        )?;
                    }
                    not_here(r.divisor.as_ref(), "divisor")?;
                    not_here(r.of.as_ref(), "of")?;
                    not_here(r.north.as_ref(), "north")?;
                }
                (_, Key::Sd) => {
                    if let Some(d) = &r.divisor {
                        stat = pick(
                            d,
                            "divisor",
                            &[
                                ("n", Statistic::Sd(Divisor::N)),
                                ("n-1", Statistic::Sd(Divisor::NMinus1)),
                            ],
                        )?;
                    }
                    not_here(r.of.as_ref(), "of")?;
                }
                (_, Key::Min) => {
                    if let Some(o) = &r.of {
                        if o.get_ref() == "running_mean" {
                            return Err(at(o.span(), "the smallest running mean cannot be computed: the core's interval state holds the largest gust-window sum only (use \"sample\")".into()));
                        }
                        stat = pick(o, "of", &[("sample", Statistic::Min)])?;
                    }
                    not_here(r.divisor.as_ref(), "divisor")?;
                }
                (_, Key::Max | Key::Gust) => {
                    if let Some(o) = &r.of {
                        let mut options = vec![("sample", Statistic::Max(Largest::Sample))];
                        if kind == Kind::Speed {
                            options.push(("running_mean", Statistic::Max(Largest::RunningMean)));
                        }
                        stat = pick(o, "of", &options)?;
                    }
                    if stat == Statistic::Max(Largest::RunningMean)
                        && channels[ch].core.gust_window == 0
                    {
                        return Err(at(
                            raw.span(),
                            "a running mean needs the channel's gust window (`gust_window_s`)"
                                .into(),
                        ));
                    }
                    not_here(r.divisor.as_ref(), "divisor")?;
                }
                (_, Key::Mean) => {
                    not_here(r.divisor.as_ref(), "divisor")?;
                    not_here(r.of.as_ref(), "of")?;
                }
            }
            if !matches!((kind, key), (Kind::Direction, _)) {
                not_here(r.method.as_ref(), "method")?;
            }
            if !matches!((kind, key), (Kind::Direction, Key::Mean)) {
                not_here(r.north.as_ref(), "north")?;
            }
            let north = match &r.north {
                None => North::Zero,
                Some(n) => match n.get_ref().as_str() {
                    "0" => North::Zero,
                    "360" => North::Full,
                    other => {
                        return Err(at(
                            n.span(),
                            format!("`north` {other:?}: use \"0\" or \"360\""),
                        ))
                    }
                },
            };
            let decimals = match &r.decimals {
                Some(d) if *d.get_ref() > MAX_DECIMALS => {
                    return Err(at(
                        d.span(),
                        format!("`decimals` {}: 0 to {MAX_DECIMALS}", d.get_ref()),
                    ))
                }
                Some(d) => Some(*d.get_ref()),
                None => None,
            };
            columns.push((
                StatColumn {
                    channel: ch,
                    key,
                    column: Column::Index(0),
                    stat,
                    decimals,
                    north,
                    rounding,
                    min_samples,
                    line: line_of(raw.span()),
                },
                &r.column,
            ));
        }
    }
    // In station-file channel order (the map is sorted by id).
    columns.sort_by_key(|(c, _)| c.channel);
    if columns.is_empty() {
        return Err(err(
            conventions.span(),
            "[conventions]: declare at least one column (such as mean = { column = \"ws80a_mean\", decimals = 2 })".into(),
        ));
    }
    // The table as a declared layout whose sources are the statistic columns.
    let ids: Vec<String> = columns
        .iter()
        .map(|(c, _)| format!("{}.{}", channels[c.channel].id, c.key.name()))
        .collect();
    let sources: Vec<RawSource<'_>> = columns
        .iter()
        .zip(&ids)
        .map(|((_, col), id)| RawSource {
            column: Some(*col),
            source_unit: None,
            quality: None,
            unit: None,
            kind: Kind::Scalar,
            id,
            span: col.span(),
        })
        .collect();
    let mut layout = table::build(Some(input), &sources, interval_ms, err, line_of)?;
    layout.section = "logger_table";
    let columns = columns
        .into_iter()
        .zip(&layout.sources)
        .map(|((mut c, _), s)| {
            c.column = s.column.clone();
            c
        })
        .collect();
    Ok(Some(LoggerTable { layout, columns }))
}

fn kind_name(k: Kind) -> &'static str {
    match k {
        Kind::Speed => "speed",
        Kind::Direction => "direction",
        Kind::Scalar => "scalar",
    }
}

/// One row of the table.
#[derive(Clone, Debug)]
pub struct Row {
    /// Its line in the file.
    pub line: u64,
    /// Per declared column: the number, or `None` for an empty field.
    pub values: Vec<Option<f64>>,
}

/// The table's rows by interval index, each on the interval grid, once.
pub struct Rows {
    /// Rows by interval index.
    pub by_interval: BTreeMap<i64, Row>,
    /// Header columns no declaration names (not checked).
    pub undeclared: Vec<String>,
}

/// Reads the logger's table `path` as `cfg` declares it (`cfg.logger_table`
/// must be set). Any problem (a declared column missing, a field that is not
/// a number, a time off the interval grid or repeated) is an error naming the
/// file, the line and the column.
pub fn read(cfg: &StationFile, path: &Path) -> Result<Rows> {
    let Some(lt) = &cfg.logger_table else {
        bail!("{}: no [logger_table]", cfg.path.display());
    };
    // The table as a station of its own: its columns are the channels.
    let mut tcfg = cfg.clone();
    tcfg.table = lt.layout.clone();
    tcfg.channels = lt
        .layout
        .sources
        .iter()
        .zip(&lt.columns)
        .map(|(_, c)| {
            let mut spec = cfg.channels[c.channel].clone();
            spec.id = format!("{}.{}", spec.id, c.key.name());
            spec.kind = Kind::Scalar;
            spec.decode = Decode::Value;
            spec.core = ChannelConfig::scalar(1.0);
            spec.line = c.line;
            spec
        })
        .collect();
    let interval_ms = cfg.station.interval_s as i64 * 1000;
    let n = tcfg.channels.len();
    let mut rows = Rows {
        by_interval: BTreeMap::new(),
        undeclared: Vec::new(),
    };
    let mut readings = vec![Reading::Missing; n];
    let mut at = Vec::new();
    let mut row = |line: u64,
                   parsed: Result<Timestamp, crate::samples::BadRow>,
                   readings: &[Reading]|
     -> Result<()> {
        let t = parsed.map_err(|bad| anyhow!("{}:{line}: {bad}", path.display()))?;
        let ms = t.millis();
        let time_col = describe_time(&lt.layout);
        if ms.rem_euclid(interval_ms) != 0 {
            bail!(
                "{}:{line}: {time_col}: the interval it labels starts at {}, not on the {} s interval grid (check `label` and `zone` in [logger_table.time])",
                path.display(),
                crate::timefmt::Rfc3339(t),
                cfg.station.interval_s
            );
        }
        let k = ms.div_euclid(interval_ms);
        let values = readings
            .iter()
            .map(|r| match r {
                Reading::Value(v) if v.is_finite() => Some(*v),
                _ => None,
            })
            .collect();
        if let Some(first) = rows.by_interval.get(&k) {
            bail!(
                "{}:{line}: {time_col}: the interval starting {} has a row already (line {})",
                path.display(),
                crate::timefmt::Rfc3339(t),
                first.line
            );
        }
        rows.by_interval.insert(k, Row { line, values });
        Ok(())
    };
    let mut reader = FileReader::open(path, &tcfg)?;
    let mut header = None;
    while let Some(piece) = reader.next_piece(1 << 20)? {
        match piece {
            Piece::Rows {
                line,
                bytes,
                parser,
                ..
            } => {
                let mut p = (*parser).clone();
                if header.is_none() {
                    header = Some(p.header_names().to_vec());
                }
                let mut recs = Records::new(&bytes, line);
                while let Some((ln, parsed)) = recs.next_row(&mut p, &mut readings, &mut at) {
                    row(ln, parsed, &readings)?;
                }
            }
            Piece::Tail {
                line,
                rest,
                mut head,
            } => {
                csv_rows(path, rest, line, &tcfg, &mut head, |p, ln, rec| {
                    if header.is_none() {
                        header = Some(p.header_names().to_vec());
                    }
                    match p.parse_record(rec, &mut readings) {
                        Some(parsed) => row(ln, parsed, &readings),
                        None => Ok(()),
                    }
                })?;
                break;
            }
        }
    }
    if rows.by_interval.is_empty() {
        bail!("{}: no data rows in the logger's table", path.display());
    }
    // Header columns nothing declares.
    let named: Vec<&str> = lt
        .layout
        .sources
        .iter()
        .map(|s| &s.column)
        .chain(lt.layout.time_columns.iter())
        .filter_map(|c| match c {
            Column::Name(n) => Some(n.as_str()),
            Column::Index(_) => None,
        })
        .collect();
    if named.len() == lt.layout.sources.len() + lt.layout.time_columns.len() {
        rows.undeclared = header
            .unwrap_or_default()
            .into_iter()
            .filter(|h| !named.contains(&h.as_str()))
            .collect();
    }
    Ok(rows)
}

fn describe_time(t: &Table) -> String {
    let cols: Vec<String> = t.time_columns.iter().map(Column::describe).collect();
    format!("time column {}", cols.join(" + "))
}
