//! `tenmin decode`: a logger's log (`qc_core::wire` frames) to records CSV,
//! with damaged and torn spans reported by byte offset. The log is read a
//! megabyte at a time ([`crate::logscan`]: the same spans as the core's
//! scanner over the whole log), so memory does not grow with it (a 300 MB SD
//! card image, mostly erased flash, decodes in under 6 MB).
//!
//! A log holds one of two kinds of frame, and its first good frame decides
//! which; a good frame of the other kind later in the log is bad input:
//!
//! - **Record log**: one record frame per channel per interval, the
//!   statistics the logger finished itself. Every good frame becomes a row.
//! - **State log**: one state frame per channel per interval, the channel's
//!   exact integer end state, written by a logger that leaves finishing to
//!   the PC (a `qc_core::Sampler` alone). The states of each interval are put
//!   back into an interval (`IntervalAcc::set_state`) and finished and
//!   screened here, in time order, by one `qc_core::Finisher` kept across the
//!   whole log: the rows are those the logger's own station would have
//!   written, bit for bit. Every state frame carries the fingerprint of the
//!   logger's configuration (`qc_core::config_fingerprint`), which must equal
//!   that of the station file: a state log can only be finished with the
//!   station file its logger was built with. A frame of another fingerprint
//!   is bad input (exit 2), as is a state that does not fit its channel.
//!
//! The log is scanned with the core's scanner (`qc_core::wire::scan`), which
//! resynchronises on the sync marker after damage. Rows are written by the
//! CLI's own records writer ([`crate::records::write_row`]) in the replay's
//! column layout. Frames must match the station file (channel index, kind or
//! fingerprint, channel count, interval alignment, samples per interval): a
//! frame that does not is bad input (exit 2), most likely the log of another
//! station.
//!
//! A logger writes no frames for intervals without samples; the replay writes
//! them as rows with empty statistics. Between the first and the last frame,
//! such intervals are written here the way the replay writes them (an empty
//! `IntervalAcc::new(&layout, k)` finished by the core; in a state log they
//! are also counted by the finisher as a `Gap`), so that `tenmin verify`
//! against the replay passes. The frames' sequence numbers tell a gap from
//! lost frames: when frames are missing between two good ones (their sequence
//! numbers are not consecutive), the intervals with no frame between them are
//! neither written nor finished, since whether they held samples is unknown;
//! rows of lost frames are simply absent, and `tenmin verify` lists them as
//! missing.
//!
//! In a state log, an interval some of whose states were lost (frames lost or
//! damaged) is still finished, the lost channels left empty, and written
//! without rows for them; its cross-channel screening flags (pair, shear,
//! icing) then treat the lost channels as having no samples, and their
//! flat-line runs start again. Each such interval is reported.
//!
//! Exit codes: 0 when the log was read, damage or not (problems are reported
//! on stderr); with `--strict`, 1 when anything was damaged, torn, lost or
//! out of order, or an interval of a state log incomplete; 2 on bad input
//! (unreadable file, frames that do not match the station file, a log mixing
//! both kinds of frame).

use std::fmt::Write as _;
use std::io::{self, Read, Write};
use std::path::Path;
use std::process::ExitCode;

use anyhow::{anyhow, bail, Context, Result};
use qc_core::wire::{RecordFrame, Span, StateFrame, FRAME_LEN};
use qc_core::{
    config_fingerprint, ChannelConfig, Finisher, Gap, IntervalAcc, Layout, StateForm, Timestamp,
};

use crate::config::{self, StationFile, MAX_CHANNELS};
use crate::engine::G;
use crate::records::{write_header, write_row};
use crate::timefmt::Rfc3339;

/// What a decode found.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Decoded {
    /// Whether the log is a state log (its first good frame is a state frame).
    pub states: bool,
    /// Good frames: record frames (each a row) or state frames (each one
    /// channel's state in one interval).
    pub frames: u64,
    /// Rows written (frames or finished states, and empty intervals).
    pub rows: u64,
    /// Intervals written as empty rows (no frames, none lost around them).
    pub empty_intervals: u64,
    /// Rows written for them.
    pub empty_rows: u64,
    /// State log: intervals with states finished here, incomplete ones
    /// included (empty intervals not).
    pub finished_intervals: u64,
    /// State log: intervals finished without the states of some channels.
    pub incomplete_intervals: u64,
    /// Damaged spans, torn tail included.
    pub damaged_spans: u64,
    /// Bytes in damaged spans.
    pub damaged_bytes: u64,
    /// Bytes of erased flash.
    pub erased_bytes: u64,
    /// Frames lost, from gaps in the sequence numbers (at least this many).
    pub lost_frames: u64,
    /// Places where the sequence numbers start again lower (a new logging
    /// session written to the same log?).
    pub sequence_breaks: u64,
    /// Intervals not written because frames were lost around them.
    pub unknown_intervals: u64,
    /// Good frames skipped: not after the frame before them.
    pub out_of_order: u64,
    /// Problems, one line each, for stderr.
    pub problems: Vec<String>,
}

impl Decoded {
    /// Whether anything was damaged, torn, lost or out of order, or an
    /// interval of a state log is incomplete.
    pub fn damaged(&self) -> bool {
        self.damaged_spans > 0
            || self.lost_frames > 0
            || self.sequence_breaks > 0
            || self.out_of_order > 0
            || self.incomplete_intervals > 0
    }

    /// The summary on stderr.
    pub fn write(&self, w: &mut dyn Write, log: &Path) -> io::Result<()> {
        for p in &self.problems {
            writeln!(w, "decode: {}: {p}", log.display())?;
        }
        if self.states {
            write!(
                w,
                "decode: {}: state log: {} good state frames, {} intervals finished here ({} of them incomplete), ",
                log.display(),
                self.frames,
                self.finished_intervals,
                self.incomplete_intervals,
            )?;
        } else {
            write!(
                w,
                "decode: {}: {} good frames, ",
                log.display(),
                self.frames
            )?;
        }
        writeln!(
            w,
            "{} rows written ({} of them for {} intervals with no samples); \
             {} damaged spans ({} bytes), {} frames lost, {} sequence restarts, {} frames out of order, \
             {} bytes of erased flash",
            self.rows,
            self.empty_rows,
            self.empty_intervals,
            self.damaged_spans,
            self.damaged_bytes,
            self.lost_frames,
            self.sequence_breaks,
            self.out_of_order,
            self.erased_bytes
        )
    }
}

/// Decodes the log `log` (record or state frames) of the station `cfg` into
/// records CSV on `out`. `path` names the log in messages.
pub fn decode<W: Write>(
    cfg: &StationFile,
    log: impl Read,
    path: &Path,
    out: &mut W,
    max_gap_days: u32,
) -> Result<Decoded> {
    let g = max_gap_days;
    match cfg.channels.len() {
        0 => bail!("{}: no channels", cfg.path.display()),
        1..=4 => decode_with::<4, W>(cfg, log, path, out, g),
        5..=8 => decode_with::<8, W>(cfg, log, path, out, g),
        9..=16 => decode_with::<16, W>(cfg, log, path, out, g),
        17..=MAX_CHANNELS => decode_with::<32, W>(cfg, log, path, out, g),
        n => bail!("{n} channels: at most {MAX_CHANNELS} are supported"),
    }
}

/// Bytes of the log read at a time.
const READ_CHUNK: usize = 1 << 20;

fn decode_with<const C: usize, W: Write>(
    cfg: &StationFile,
    log: impl Read,
    path: &Path,
    out: &mut W,
    max_gap_days: u32,
) -> Result<Decoded> {
    let layout: Layout<C> = cfg.layout::<C>()?;
    let cores: Vec<ChannelConfig> = cfg.channels.iter().map(|c| c.core).collect();
    write_header(out)?;
    let mut d = Decoder {
        cfg,
        path,
        ids: cfg.channels.iter().map(|c| c.id.as_str()).collect(),
        fingerprint: config_fingerprint(&cfg.station, &cores),
        layout,
        out,
        d: Decoded::default(),
        first: None,
        prev: None,
        finisher: Finisher::new(),
        open: None,
        max_gap_days,
    };
    // Read a piece at a time: memory does not grow with the log.
    crate::logscan::scan_reader(log, READ_CHUNK, |span| d.span(span))
        .with_context(|| format!("cannot read {}", path.display()))?;
    d.close_open()?;
    Ok(d.d)
}

/// A good frame of either kind.
enum Good {
    Record(RecordFrame),
    State(StateFrame),
}

impl Good {
    fn kind(&self) -> &'static str {
        match self {
            Good::Record(_) => "record",
            Good::State(_) => "state",
        }
    }
}

/// The last good frame taken.
#[derive(Clone, Copy)]
struct Prev {
    index: i64,
    channel: u8,
    sequence: u32,
    offset: usize,
}

/// The interval of a state log whose states are arriving.
struct Open<const C: usize> {
    acc: Box<IntervalAcc<C, G>>,
    /// Which channels' states arrived.
    arrived: Vec<bool>,
}

/// The decoding of one log.
struct Decoder<'a, const C: usize, W: Write> {
    cfg: &'a StationFile,
    path: &'a Path,
    ids: Vec<&'a str>,
    /// `config_fingerprint` of the station file (its real channels).
    fingerprint: u32,
    layout: Layout<C>,
    out: &'a mut W,
    /// Longest run of empty intervals written, days (`--max-gap-days`).
    max_gap_days: u32,
    d: Decoded,
    /// Whether the log holds state frames, and the offset of its first good
    /// frame.
    first: Option<(bool, usize)>,
    prev: Option<Prev>,
    /// State log: finishes the intervals, in time order.
    finisher: Finisher<C>,
    /// State log: the interval whose states are arriving.
    open: Option<Open<C>>,
}

impl<const C: usize, W: Write> Decoder<'_, C, W> {
    /// Takes one span of the scan.
    fn span(&mut self, span: Span) -> Result<()> {
        let (offset, good) = match span {
            Span::Frame { offset, frame } => (offset, Good::Record(frame)),
            Span::State { offset, frame } => (offset, Good::State(frame)),
            Span::Damaged { offset, len } => {
                self.d.damaged_spans += 1;
                self.d.damaged_bytes += len as u64;
                self.d.problems.push(format!(
                    "bytes {offset} to {} ({len} bytes): damaged (no good frame there); skipped",
                    offset + len
                ));
                return Ok(());
            }
            Span::Torn { offset, len } => {
                self.d.damaged_spans += 1;
                self.d.damaged_bytes += len as u64;
                self.d.problems.push(format!(
                    "bytes {offset} to {} ({len} bytes): torn tail (an append cut short, shorter than a {FRAME_LEN}-byte frame); skipped",
                    offset + len
                ));
                return Ok(());
            }
            Span::Erased { len, .. } => {
                self.d.erased_bytes += len as u64;
                return Ok(());
            }
        };
        let states = matches!(good, Good::State(_));
        match self.first {
            None => {
                self.first = Some((states, offset));
                self.d.states = states;
            }
            Some((s, at)) if s != states => {
                let first = if s { "state" } else { "record" };
                bail!(
                    "{}: byte {offset}: a {} frame in a {first} log (its first good frame, at byte {at}, is a {first} frame); a log holds frames of one kind only",
                    self.path.display(),
                    good.kind(),
                );
            }
            Some(_) => {}
        }
        let (k, channel, sequence) = match &good {
            Good::Record(f) => (self.check_record(f, offset)?, f.channel, f.sequence),
            Good::State(f) => (self.check_state(f, offset)?, f.channel, f.sequence),
        };
        if !self.in_order(offset, k, channel) {
            return Ok(());
        }
        let before = self.follow(offset, k, channel, sequence);
        if states && self.open.as_ref().is_some_and(|o| o.acc.index() != k) {
            self.close_open()?;
        }
        if let Some((p, broken)) = before {
            self.between(p, k, broken)?;
        }
        self.d.frames += 1;
        match good {
            Good::Record(f) => {
                let r = f.record;
                self.row(k, usize::from(channel), &r)?;
            }
            Good::State(f) => self.state(&f, k, offset)?,
        }
        Ok(())
    }

    /// One row of interval `k`, channel `ch`.
    fn row(&mut self, k: i64, ch: usize, record: &qc_core::ChannelRecord) -> Result<()> {
        if let Some(id) = self.ids.get(ch) {
            let start = self.layout.interval_start(k);
            let end = self.layout.interval_start(k.saturating_add(1));
            write_row(self.out, start, end, id, record)?;
            self.d.rows += 1;
        }
        Ok(())
    }

    /// Whether a good frame of interval `k`, channel `ch` comes after the
    /// frame before it; reports it when not.
    fn in_order(&mut self, offset: usize, k: i64, ch: u8) -> bool {
        let Some(p) = self.prev else {
            return true;
        };
        if (k, ch) > (p.index, p.channel) {
            return true;
        }
        self.d.out_of_order += 1;
        self.d.problems.push(format!(
            "byte {offset}: frame of {} channel {} is not after the frame before it (byte {}); skipped",
            Rfc3339(self.layout.interval_start(k)),
            self.ids.get(usize::from(ch)).unwrap_or(&"?"),
            p.offset
        ));
        false
    }

    /// Checks the sequence number of a good frame in order against the one
    /// before it, reporting lost frames and restarts, and takes it as the
    /// last frame. Returns the frame before it and whether frames were lost
    /// or the sequence started again between them.
    fn follow(&mut self, offset: usize, k: i64, ch: u8, sequence: u32) -> Option<(Prev, bool)> {
        let d = &mut self.d;
        let prev = self.prev.replace(Prev {
            index: k,
            channel: ch,
            sequence,
            offset,
        });
        let Some(p) = prev else {
            if sequence != 0 {
                d.lost_frames += u64::from(sequence);
                d.problems.push(format!(
                    "byte {offset}: the first good frame has sequence number {sequence}: the frames before it are lost (or the log does not start where the logger started)",
                ));
            }
            return None;
        };
        let lost = sequence.wrapping_sub(p.sequence).wrapping_sub(1);
        // Sequence numbers wrap after 2^32 frames; a jump of more than half of
        // that is a restart, not a loss.
        if lost > u32::MAX / 2 {
            d.sequence_breaks += 1;
            d.problems.push(format!(
                "byte {offset}: the sequence number goes back from {} to {sequence} (a new logging session in the same log?)",
                p.sequence
            ));
        } else if lost != 0 {
            d.lost_frames += u64::from(lost);
            let (first, last) = (p.sequence.wrapping_add(1), sequence.wrapping_sub(1));
            let which = if lost == 1 {
                format!("1 frame lost (sequence number {first})")
            } else {
                format!("{lost} frames lost (sequence numbers {first} to {last})")
            };
            d.problems.push(format!(
                "bytes {} to {offset}: {which}",
                p.offset + FRAME_LEN
            ));
        }
        Some((p, lost != 0))
    }

    /// The intervals between the frame before (`p`) and interval `k`: written
    /// as empty when no frame was lost between (`broken` false: the logger
    /// wrote none, so they held no samples), else only reported.
    fn between(&mut self, p: Prev, k: i64, broken: bool) -> Result<()> {
        let (first, count) = (p.index + 1, k.saturating_sub(p.index).saturating_sub(1));
        if count <= 0 {
            return Ok(());
        }
        if !broken {
            let days = count as f64 * self.layout.interval_ms() as f64 / 86_400_000.0;
            if days > f64::from(self.max_gap_days) {
                bail!(
                    "{}: after the frame at byte {}: the frames jump forward {days:.1} days, from {} to {}, with no frame lost between: \
                     more than --max-gap-days {} allows; check the logger clock, or raise --max-gap-days",
                    self.path.display(),
                    p.offset,
                    Rfc3339(self.layout.interval_start(p.index)),
                    Rfc3339(self.layout.interval_start(k)),
                    self.max_gap_days
                );
            }
            return self.empty(first, k);
        }
        self.d.unknown_intervals += count as u64;
        let screening = if self.d.states {
            ", none finished (flat-line runs start again after them)"
        } else {
            ""
        };
        self.d.problems.push(format!(
            "{} to {}: {count} intervals without frames where frames were lost; no rows written for them{screening}",
            Rfc3339(self.layout.interval_start(first)),
            Rfc3339(self.layout.interval_start(k))
        ));
        Ok(())
    }

    /// Intervals `first..end`, which held no samples: rows as the replay
    /// writes them (an empty interval finished by the core, unscreened), and
    /// in a state log one gap for the finisher.
    fn empty(&mut self, first: i64, end: i64) -> Result<()> {
        if self.d.states {
            let gap = Gap {
                first,
                count: end.saturating_sub(first) as u64,
            };
            self.finisher.gap(&self.layout, gap);
        }
        for k in first..end {
            let acc = IntervalAcc::<C, G>::new(&self.layout, k);
            for c in 0..self.ids.len() {
                if let Some(r) = self.layout.finish(&acc, c) {
                    self.row(k, c, &r)?;
                    self.d.empty_rows += 1;
                }
            }
            self.d.empty_intervals += 1;
        }
        Ok(())
    }

    /// Puts the state of a good state frame of interval `k` into the open
    /// interval (opening it first); finishes it after its last channel.
    fn state(&mut self, f: &StateFrame, k: i64, offset: usize) -> Result<()> {
        let ch = usize::from(f.channel);
        let n = self.ids.len();
        let open = self.open.get_or_insert_with(|| Open {
            acc: Box::new(IntervalAcc::new(&self.layout, k)),
            arrived: vec![false; n],
        });
        if let Err(e) = open.acc.set_state(&self.layout, ch, &f.state) {
            let why = match self.cfg.channels.get(ch) {
                Some(c) => format!(
                    "channel {ch} ({}) takes a {:?} state, the frame holds a {:?} state",
                    c.id,
                    StateForm::of(&c.core),
                    f.state.form()
                ),
                None => format!("channel {ch}: {e}"),
            };
            return Err(self.mismatch(offset, &why));
        }
        if let Some(a) = open.arrived.get_mut(ch) {
            *a = true;
        }
        if ch + 1 == n {
            self.close_open()?;
        }
        Ok(())
    }

    /// Finishes the open interval of a state log, if any, and writes the rows
    /// of the channels whose states arrived.
    fn close_open(&mut self) -> Result<()> {
        let Some(mut open) = self.open.take() else {
            return Ok(());
        };
        let records = self.finisher.interval(&self.layout, &mut open.acc);
        let k = open.acc.index();
        for (c, (record, arrived)) in records.iter().zip(&open.arrived).enumerate() {
            if *arrived {
                self.row(k, c, record)?;
            }
        }
        self.d.finished_intervals += 1;
        let lost: Vec<&str> = self
            .ids
            .iter()
            .zip(&open.arrived)
            .filter(|(_, a)| !**a)
            .map(|(id, _)| *id)
            .collect();
        if !lost.is_empty() {
            self.d.incomplete_intervals += 1;
            self.d.problems.push(format!(
                "{}: the states of {} did not arrive (frames lost or damaged): interval finished without them, no rows for them; its cross-channel screening flags (pair, shear, icing) treat them as having no samples, and their flat-line runs start again",
                Rfc3339(self.layout.interval_start(k)),
                lost.join(", ")
            ));
        }
        Ok(())
    }

    /// Bad input: a frame that does not fit the station file.
    fn mismatch(&self, offset: usize, why: &str) -> anyhow::Error {
        anyhow!(
            "{}: byte {offset}: the frame does not match {}: {why} (is this the log of another station?)",
            self.path.display(),
            self.cfg.path.display()
        )
    }

    /// The interval index of a frame's interval start, or why it is not on
    /// an interval boundary.
    fn interval(&self, t: Timestamp) -> Result<i64, String> {
        if !t.is_supported() {
            return Err(format!(
                "interval start {} ms since 1970 is outside the supported years",
                t.millis()
            ));
        }
        let k = self.layout.interval_of(t);
        if self.layout.interval_start(k) == t {
            Ok(k)
        } else {
            Err(format!(
                "interval start {} is not on a {} s boundary",
                Rfc3339(t),
                self.layout.interval_ms() / 1000
            ))
        }
    }

    /// The interval index of a good record frame, after checking it belongs
    /// to the station file.
    fn check_record(&self, f: &RecordFrame, offset: usize) -> Result<i64> {
        let mut why = String::new();
        match self.cfg.channels.get(usize::from(f.channel)) {
            None => {
                let _ = write!(
                    why,
                    "channel index {}, but the station has {} channels",
                    f.channel,
                    self.cfg.channels.len()
                );
            }
            Some(c) if c.kind != f.record.kind => {
                let _ = write!(
                    why,
                    "channel {} ({}) is a {:?} channel, the frame holds {:?} statistics",
                    f.channel, c.id, c.kind, f.record.kind
                );
            }
            Some(_) => {}
        }
        if !why.is_empty() {
            return Err(self.mismatch(offset, &why));
        }
        let k = self
            .interval(f.interval_start)
            .map_err(|why| self.mismatch(offset, &why))?;
        if f.record.n_possible != self.layout.samples_per_interval() {
            let why = format!(
                "{} samples possible per interval, the station has {}",
                f.record.n_possible,
                self.layout.samples_per_interval()
            );
            return Err(self.mismatch(offset, &why));
        }
        Ok(k)
    }

    /// The interval index of a good state frame, after checking it comes from
    /// a logger built with the station file.
    fn check_state(&self, f: &StateFrame, offset: usize) -> Result<i64> {
        let n = self.cfg.channels.len();
        if usize::from(f.channels) != n {
            let why = format!(
                "the logger's station has {} channels, the station file {n}",
                f.channels
            );
            return Err(self.mismatch(offset, &why));
        }
        if usize::from(f.channel) >= n {
            let why = format!(
                "channel index {}, but the station has {n} channels",
                f.channel
            );
            return Err(self.mismatch(offset, &why));
        }
        if f.fingerprint != self.fingerprint {
            bail!(
                "{}: byte {offset}: state frame of another station configuration (fingerprint {:#010x}, the station file's is {:#010x}): a state log can only be finished with the station file its logger was built with, and {} is not that file",
                self.path.display(),
                f.fingerprint,
                self.fingerprint,
                self.cfg.path.display()
            );
        }
        self.interval(f.interval_start)
            .map_err(|why| self.mismatch(offset, &why))
    }
}

/// `tenmin decode`.
pub fn run(a: &crate::DecodeArgs) -> Result<ExitCode> {
    if let Some(out) = &a.output {
        crate::output::refuse_inputs(out, &[("station file", &a.config), ("log", &a.log)])?;
    }
    let mut log =
        std::fs::File::open(&a.log).with_context(|| format!("cannot read {}", a.log.display()))?;
    let head = read_head(&mut log).with_context(|| format!("cannot read {}", a.log.display()))?;
    if let Some(what) = not_a_log(&head) {
        bail!("{}: {what}", a.log.display());
    }
    let log = io::Cursor::new(head).chain(log);
    let cfg = config::load(&a.config)?;
    let decoded = crate::output::write_to(a.output.as_deref(), "records", |w| {
        decode(&cfg, log, &a.log, w, a.max_gap_days)
    })?;
    if !a.quiet || decoded.damaged() {
        let _ = decoded.write(&mut io::stderr().lock(), &a.log);
    }
    Ok(if a.strict && decoded.damaged() {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}

/// Bytes looked at to tell a log from the files people mistake for one.
const HEAD_LEN: usize = 4096;

/// The first [`HEAD_LEN`] bytes of `r` (fewer when it ends first).
fn read_head(r: &mut impl Read) -> io::Result<Vec<u8>> {
    let mut head = Vec::with_capacity(HEAD_LEN);
    r.take(HEAD_LEN as u64).read_to_end(&mut head)?;
    Ok(head)
}

/// What the file starting with `head` is, when it is plainly not a logger's
/// log: a sample file (`tenmin export`'s), a samples or records CSV, or some
/// other text (a log is binary frames, each starting with the sync marker,
/// which is not text).
pub fn not_a_log(head: &[u8]) -> Option<String> {
    let [a, b, c, d] = qc_core::wire::SYNC;
    let log = format!(
        "a logger's log is binary frames of {FRAME_LEN} bytes, each starting with the sync marker \
         {a:02X} {b:02X} {c:02X} {d:02X}"
    );
    if head.starts_with(&qc_core::wire::SAMPLE_MAGIC) {
        return Some(format!(
            "this is a sample file (it starts with `TMSF`, as `tenmin export` writes it), not a logger's log: \
             a logger under test replays a sample file, and `tenmin decode` reads the log that logger writes ({log})"
        ));
    }
    let text = head.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(head);
    let is_text = !text.is_empty()
        && match std::str::from_utf8(text) {
            Ok(_) => true,
            // A character cut at the end of the head (not of a short file).
            Err(e) => e.error_len().is_none() && head.len() == HEAD_LEN,
        }
        && !text
            .iter()
            .any(|&b| b < 0x20 && !matches!(b, b'\t' | b'\n' | b'\r'));
    if !is_text {
        return None;
    }
    let first = text.split(|&b| b == b'\n').next().unwrap_or(&[]);
    let first = String::from_utf8_lossy(first);
    let first = first.trim_end_matches('\r').to_ascii_lowercase();
    let cut = |s: &str| s.chars().take(40).collect::<String>();
    Some(
        if first.starts_with("time,") || first.starts_with("\"time\",") {
            format!(
            "this is a samples CSV (its header starts with `{}`), not a logger's log: \
             `tenmin replay` reads samples, `tenmin export` turns them into a sample file for a logger ({log})",
            cut(&first)
        )
        } else if first.starts_with("start,end,") {
            format!(
                "this is a records CSV (its header starts with `{}`), not a logger's log: \
             `tenmin verify --records` and `tenmin report` read records ({log})",
                cut(&first)
            )
        } else {
            format!("this is a text file, not a logger's log ({log})")
        },
    )
}
