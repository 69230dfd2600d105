//! The declared input layout of a station's samples files: the station file's
//! `[input]` table and each channel's `column`, `source_unit` and `quality`
//! keys, checked into a [`Table`] that the one samples reader
//! ([`crate::reader`], [`crate::samples::Parser`]) follows.
//!
//! Without `[input]` the layout is tenmin's own samples CSV (a header
//! `time,<channel ids>`), read by the fast path. See CONTRACT.md, "Input
//! layout", for every key with an example.

use std::ops::Range;

use serde::Deserialize;
use toml::Spanned;

use crate::localtime::{self, Form, Format, Label, Pick, TimeSpec, Zone};
use crate::units::{Convert, Quantity, Unit};

/// Longest text of a missing-value, quality or filter code.
const MAX_CODE: usize = 64;

/// `[input]` as written.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawInput {
    delimiter: Option<Spanned<String>>,
    skip_lines: Option<Spanned<u32>>,
    header: Option<bool>,
    units_line: Option<bool>,
    comment: Option<Spanned<String>>,
    decimal: Option<Spanned<String>>,
    missing: Option<Spanned<Vec<String>>>,
    filter: Option<Spanned<RawFilter>>,
    time: Option<Spanned<RawTime>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFilter {
    column: RawColumn,
    value: String,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTime {
    column: Option<Spanned<RawColumn>>,
    columns: Option<Spanned<Vec<RawColumn>>>,
    format: Option<Spanned<String>>,
    epoch: Option<Spanned<String>>,
    zone: Option<Spanned<String>>,
    label: Option<Spanned<String>>,
    skipped: Option<Spanned<String>>,
    repeated: Option<Spanned<String>>,
}

/// A column by header name or by 1-based position, as written.
#[derive(Clone, Deserialize)]
#[serde(untagged)]
pub(crate) enum RawColumn {
    Position(i64),
    Name(String),
}

/// A channel's `quality` key as written.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawQuality {
    column: RawColumn,
    good: Vec<String>,
}

/// A channel's source keys as written.
pub(crate) struct RawSource<'a> {
    pub column: Option<&'a Spanned<RawColumn>>,
    pub source_unit: Option<&'a Spanned<String>>,
    pub quality: Option<&'a Spanned<RawQuality>>,
    /// The channel's own `unit` key.
    pub unit: Option<&'a str>,
    /// Speed, direction or scalar.
    pub kind: qc_core::Kind,
    /// The channel's id.
    pub id: &'a str,
    /// Where its `[[channel]]` table is.
    pub span: Range<usize>,
}

/// A column of a file.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Column {
    /// The column whose header field is this text (surrounding spaces ignored).
    Name(String),
    /// The column at this 0-based index.
    Index(usize),
}

impl Column {
    /// As written in the station file, for messages.
    pub fn describe(&self) -> String {
        match self {
            Column::Name(n) => format!("{n:?}"),
            Column::Index(i) => format!("{}", i + 1),
        }
    }
}

/// How fields are separated.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Delimiter {
    /// One byte: `,` `;` or a tab.
    Byte(u8),
    /// Runs of spaces and tabs (leading and trailing ones ignored).
    Whitespace,
}

/// Rows of one station of several: keep those whose `column` holds `value`.
#[derive(Clone, Debug)]
pub struct Filter {
    /// The column.
    pub column: Column,
    /// The station file's line of the key.
    pub line: usize,
    /// The text kept (surrounding spaces ignored).
    pub value: Vec<u8>,
}

/// A channel's quality column and the codes that mean good.
#[derive(Clone, Debug)]
pub struct Quality {
    /// The column.
    pub column: Column,
    /// The station file's line of the key.
    pub line: usize,
    /// The good codes (surrounding spaces ignored).
    pub good: Vec<Vec<u8>>,
}

/// Where a channel's samples come from.
#[derive(Clone, Debug)]
pub struct Source {
    /// The column.
    pub column: Column,
    /// The station file's line of its `column` key (of the channel's table
    /// when the column is the channel id).
    pub line: usize,
    /// The conversion of the file's unit to the channel's, if they differ.
    pub convert: Option<Convert>,
    /// A quality column beside the value.
    pub quality: Option<Quality>,
}

/// A checked input layout.
#[derive(Clone, Debug)]
pub struct Table {
    /// Whether this is tenmin's own samples CSV (no `[input]`).
    pub own: bool,
    /// The field separator.
    pub delimiter: Delimiter,
    /// Lines before the header (or the first data line).
    pub skip_lines: u64,
    /// Whether a header line names the columns.
    pub header: bool,
    /// Whether a line of units follows the header.
    pub units_line: bool,
    /// Lines starting with this are comments, anywhere.
    pub comment: Option<Vec<u8>>,
    /// Numbers use a decimal comma.
    pub decimal_comma: bool,
    /// Field texts that mean "no reading" (besides empty and NaN).
    pub missing: Vec<Vec<u8>>,
    /// Keep only rows of one station.
    pub filter: Option<Filter>,
    /// The time columns, joined by one space before reading.
    pub time_columns: Vec<Column>,
    /// The station file's line of the time columns' key (0: the default).
    pub time_line: usize,
    /// How the time is read.
    pub time: TimeSpec,
    /// Per channel, in station-file order.
    pub sources: Vec<Source>,
    /// The station file's table declaring the layout, for messages:
    /// `input` (or `logger_table` for another logger's table).
    pub section: &'static str,
}

impl Table {
    /// tenmin's own samples CSV for channels `ids`.
    pub fn own(ids: &[&str], period_ms: i64) -> Table {
        Table {
            own: true,
            delimiter: Delimiter::Byte(b','),
            skip_lines: 0,
            header: true,
            units_line: false,
            comment: None,
            decimal_comma: false,
            missing: Vec::new(),
            filter: None,
            time_columns: vec![Column::Name("time".into())],
            time_line: 0,
            time: TimeSpec {
                form: Form::Auto,
                zone: Zone::Utc,
                label: Label::Start,
                period_ms,
                skipped: Pick::Refuse,
                repeated: Pick::Refuse,
            },
            sources: ids
                .iter()
                .map(|id| Source {
                    column: Column::Name((*id).to_string()),
                    line: 0,
                    convert: None,
                    quality: None,
                })
                .collect(),
            section: "input",
        }
    }

    /// Whether a record is a comment line.
    #[inline]
    pub fn is_comment(&self, rec: &[u8]) -> bool {
        self.comment
            .as_deref()
            .is_some_and(|c| rec.trim_ascii_start().starts_with(c))
    }

    /// Whether quotes may be read with the `csv` crate (a one-byte delimiter).
    pub fn csv_delimiter(&self) -> Option<u8> {
        match self.delimiter {
            Delimiter::Byte(b) => Some(b),
            Delimiter::Whitespace => None,
        }
    }
}

/// Builds the layout. `err(span, msg)` makes an error naming the station
/// file's line; `input` is `[input]` with its span.
pub(crate) fn build(
    input: Option<&Spanned<RawInput>>,
    sources: &[RawSource<'_>],
    period_ms: i64,
    err: &dyn Fn(Range<usize>, String) -> anyhow::Error,
    line_of: &dyn Fn(Range<usize>) -> usize,
) -> anyhow::Result<Table> {
    let ids: Vec<&str> = sources.iter().map(|s| s.id).collect();
    let declared_source = sources
        .iter()
        .find(|s| s.column.is_some() || s.source_unit.is_some() || s.quality.is_some());
    let Some(input) = input else {
        if let Some(s) = declared_source {
            return Err(err(
                s.span.clone(),
                format!(
                    "channel {:?}: `column`, `source_unit` and `quality` describe a declared input layout: add an [input] table (see CONTRACT.md, \"Input layout\")",
                    s.id
                ),
            ));
        }
        return Ok(Table::own(&ids, period_ms));
    };
    let raw = input.get_ref();
    let whole = input.span();
    let mut t = Table::own(&ids, period_ms);
    t.own = false;

    if let Some(d) = &raw.delimiter {
        t.delimiter = match d.get_ref().as_str() {
            "," => Delimiter::Byte(b','),
            ";" => Delimiter::Byte(b';'),
            "\t" | "tab" => Delimiter::Byte(b'\t'),
            "whitespace" => Delimiter::Whitespace,
            other => {
                return Err(err(
                    d.span(),
                    format!("`delimiter` {other:?}: use \",\", \";\", \"tab\" or \"whitespace\""),
                ))
            }
        };
    }
    t.skip_lines = raw
        .skip_lines
        .as_ref()
        .map_or(0, |s| u64::from(*s.get_ref()));
    t.header = raw.header.unwrap_or(true);
    t.units_line = raw.units_line.unwrap_or(false);
    if t.units_line && !t.header {
        return Err(err(
            whole.clone(),
            "`units_line = true` needs `header = true` (the units line follows the header)".into(),
        ));
    }
    if let Some(c) = &raw.comment {
        let text = c.get_ref().trim();
        if text.is_empty() || text.len() > MAX_CODE {
            return Err(err(
                c.span(),
                "`comment` is the text that starts a comment line, such as \"#\"".into(),
            ));
        }
        t.comment = Some(text.as_bytes().to_vec());
    }
    if let Some(d) = &raw.decimal {
        t.decimal_comma = match d.get_ref().as_str() {
            "." => false,
            "," => true,
            other => {
                return Err(err(
                    d.span(),
                    format!("`decimal` {other:?}: use \".\" or \",\""),
                ))
            }
        };
        if t.decimal_comma && t.delimiter == Delimiter::Byte(b',') {
            return Err(err(
                d.span(),
                "`decimal = \",\"` needs another `delimiter` (\";\", \"tab\" or \"whitespace\")"
                    .into(),
            ));
        }
    }
    if let Some(m) = &raw.missing {
        for code in m.get_ref() {
            let c = code.trim();
            if c.is_empty() || c.len() > MAX_CODE {
                return Err(err(m.span(), format!("`missing` code {code:?}: 1 to {MAX_CODE} characters (an empty field is always missing)")));
            }
            t.missing.push(c.as_bytes().to_vec());
        }
    }
    let column = |c: &RawColumn, span: Range<usize>, key: &str| -> anyhow::Result<Column> {
        match c {
            RawColumn::Position(p) if *p >= 1 && *p <= 100_000 => Ok(Column::Index(*p as usize - 1)),
            RawColumn::Position(p) => Err(err(span, format!("`{key}` {p}: positions count from 1"))),
            RawColumn::Name(n) if t.header && !n.trim().is_empty() => Ok(Column::Name(n.trim().to_string())),
            RawColumn::Name(n) if t.header => Err(err(span, format!("`{key}` {n:?}: an empty name"))),
            RawColumn::Name(n) => Err(err(
                span,
                format!("`{key}` {n:?} names a column, but the file has no header (`header = false`): give its position (1 = the first column)"),
            )),
        }
    };
    if let Some(f) = &raw.filter {
        let v = f.get_ref().value.trim();
        if v.is_empty() || v.len() > MAX_CODE {
            return Err(err(
                f.span(),
                "`filter.value`: the text of the rows to keep".into(),
            ));
        }
        t.filter = Some(Filter {
            column: column(&f.get_ref().column, f.span(), "filter.column")?,
            line: line_of(f.span()),
            value: v.as_bytes().to_vec(),
        });
    }

    // The time.
    let time_span = raw.time.as_ref().map_or(whole.clone(), Spanned::span);
    if let Some(time) = &raw.time {
        let rt = time.get_ref();
        t.time_line = match (&rt.column, &rt.columns) {
            (Some(c), _) => line_of(c.span()),
            (None, Some(c)) => line_of(c.span()),
            (None, None) => line_of(time_span.clone()),
        };
        t.time_columns = match (&rt.column, &rt.columns) {
            (Some(_), Some(c)) => {
                return Err(err(
                    c.span(),
                    "give `column` (one) or `columns` (several), not both".into(),
                ))
            }
            (Some(c), None) => vec![column(c.get_ref(), c.span(), "time.column")?],
            (None, Some(cs)) if !cs.get_ref().is_empty() && cs.get_ref().len() <= 8 => cs
                .get_ref()
                .iter()
                .map(|c| column(c, cs.span(), "time.columns"))
                .collect::<anyhow::Result<_>>()?,
            (None, Some(cs)) => {
                return Err(err(cs.span(), "`columns`: 1 to 8 time columns".into()))
            }
            (None, None) if t.header => vec![Column::Name("time".into())],
            (None, None) => return Err(err(
                time_span,
                "[input.time] needs `column` or `columns` (by position: the file has no header)"
                    .into(),
            )),
        };
        t.time.form = match (&rt.format, &rt.epoch) {
            (Some(_), Some(e)) => {
                return Err(err(e.span(), "give `format` or `epoch`, not both".into()))
            }
            (Some(f), None) => Form::Format(
                Format::new(f.get_ref()).map_err(|m| err(f.span(), format!("`format`: {m}")))?,
            ),
            (None, Some(e)) => match e.get_ref().as_str() {
                "s" | "seconds" => Form::EpochSeconds,
                "ms" | "milliseconds" => Form::EpochMillis,
                other => {
                    return Err(err(
                        e.span(),
                        format!("`epoch` {other:?}: use \"s\" or \"ms\""),
                    ))
                }
            },
            (None, None) if t.time_columns.len() == 1 => Form::Auto,
            (None, None) => {
                return Err(err(
                    time_span,
                    "several time columns need a `format`, such as \"%Y %j %{hhmm}\"".into(),
                ))
            }
        };
        if let Some(z) = &rt.zone {
            t.time.zone =
                localtime::zone(z.get_ref()).map_err(|m| err(z.span(), format!("`zone` {m}")))?;
            if !matches!(t.time.form, Form::Format(_)) && !matches!(t.time.zone, Zone::Utc) {
                return Err(err(
                    z.span(),
                    "`zone` applies to times read with a `format` (RFC 3339 carries its own offset; epochs are UTC)".into(),
                ));
            }
        }
        if let Some(l) = &rt.label {
            t.time.label = match l.get_ref().as_str() {
                "start" => Label::Start,
                "end" => Label::End,
                other => {
                    return Err(err(
                        l.span(),
                        format!("`label` {other:?}: use \"start\" or \"end\""),
                    ))
                }
            };
        }
        let pick = |p: &Option<Spanned<String>>, key: &str| -> anyhow::Result<Pick> {
            match p {
                None => Ok(Pick::Refuse),
                Some(s) => match s.get_ref().as_str() {
                    "refuse" => Ok(Pick::Refuse),
                    "earlier" => Ok(Pick::Earlier),
                    "later" => Ok(Pick::Later),
                    other => Err(err(
                        s.span(),
                        format!("`{key}` {other:?}: use \"refuse\", \"earlier\" or \"later\""),
                    )),
                },
            }
        };
        t.time.skipped = pick(&rt.skipped, "skipped")?;
        t.time.repeated = pick(&rt.repeated, "repeated")?;
    } else if !t.header {
        return Err(err(
            whole.clone(),
            "a file without a header needs [input.time] with the time column's position".into(),
        ));
    }

    // The channels.
    for (i, s) in sources.iter().enumerate() {
        let src = &mut t.sources[i];
        src.line = line_of(s.span.clone());
        if let Some(c) = s.column {
            src.column = column(c.get_ref(), c.span(), "column")?;
            src.line = line_of(c.span());
        } else if !t.header {
            return Err(err(
                s.span.clone(),
                format!(
                    "channel {:?}: the file has no header: give the channel's `column` position",
                    s.id
                ),
            ));
        }
        if let Some(u) = s.source_unit {
            let from = Unit::parse(u.get_ref()).ok_or_else(|| {
                err(
                    u.span(),
                    format!(
                        "`source_unit` {:?}: not a unit tenmin converts ({})",
                        u.get_ref(),
                        Unit::all()
                    ),
                )
            })?;
            let to = match (s.unit, s.kind) {
                (Some(text), _) => Unit::parse(text),
                (None, qc_core::Kind::Speed) => Some(Unit::MetrePerSecond),
                _ => None,
            };
            let Some(to) = to else {
                return Err(err(
                    u.span(),
                    format!(
                        "channel {:?}: `source_unit` needs the channel's `unit` to be one tenmin converts to ({})",
                        s.id,
                        Unit::all()
                    ),
                ));
            };
            if s.kind == qc_core::Kind::Direction
                || (s.kind == qc_core::Kind::Speed && to.quantity() != Quantity::Speed)
            {
                return Err(err(
                    u.span(),
                    format!(
                        "channel {:?}: `source_unit` {from} does not fit a {} channel",
                        s.id,
                        kind_name(s.kind)
                    ),
                ));
            }
            let conv = Convert::new(from, to).ok_or_else(|| {
                err(
                    u.span(),
                    format!("channel {:?}: {from} cannot be converted to {to}", s.id),
                )
            })?;
            src.convert = (from != to).then_some(conv);
        }
        if let Some(q) = s.quality {
            let good: Vec<Vec<u8>> = q
                .get_ref()
                .good
                .iter()
                .map(|g| g.trim().as_bytes().to_vec())
                .collect();
            if good.is_empty() || good.iter().any(|g| g.is_empty() || g.len() > MAX_CODE) {
                return Err(err(
                    q.span(),
                    "`quality.good`: the codes that mean good, such as [\"0\"]".into(),
                ));
            }
            src.quality = Some(Quality {
                column: column(&q.get_ref().column, q.span(), "quality.column")?,
                line: line_of(q.span()),
                good,
            });
        }
    }
    Ok(t)
}

fn kind_name(k: qc_core::Kind) -> &'static str {
    match k {
        qc_core::Kind::Speed => "speed",
        qc_core::Kind::Direction => "direction",
        qc_core::Kind::Scalar => "scalar",
    }
}
