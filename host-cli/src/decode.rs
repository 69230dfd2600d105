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
//!   written, bit for bit.
//!
//! Both kinds of frame carry the logger's channel count and the fingerprint
//! of its configuration (`qc_core::config_fingerprint`; record frames from
//! format version 2), which must equal those of the station file: a frame of
//! another configuration is bad input (exit 2), so a station file with a
//! channel more, or with channels of other settings in another order, is
//! refused instead of labelling rows wrongly. Record frames of version 1
//! carry no fingerprint: they are still read, with a warning that the
//! station file cannot be checked.
//!
//! The log is scanned with the core's scanner (`qc_core::wire::scan`), which
//! resynchronises on the sync marker after damage. Rows are written by the
//! CLI's own records writer ([`crate::records::write_row`]) in the replay's
//! column layout. Frames must match the station file (channel index, kind or
//! fingerprint, channel count, interval alignment, samples per interval) and
//! hold counts a station can make (`qc_core::StationConfig::check_tally`, the
//! channels of one interval holding the same samples): a frame that does not
//! is bad input (exit 2).
//!
//! # Putting frames in order
//!
//! Good frames pass three stages, each with a bounded buffer:
//!
//! 1. **Sequence order.** The writer numbers its frames (a wrapping `u32`).
//!    Of the next [`REORDER_WINDOW`] frames, the one whose sequence number
//!    follows the last one's is taken first: frames written out of order (two
//!    swapped) are put back and reported as out of order, not as lost.
//! 2. **Sequence numbers.** Distances are taken modulo 2^32, so a log that
//!    starts near 2^32 or wraps through 0 loses nothing. A jump forward is
//!    frames lost; a jump back (more than half of 2^32 forward) is a restart.
//!    A first sequence number other than 0 is reported, not counted as lost.
//! 3. **Time line.** Frames must come in time order (interval, then channel).
//!    A frame that is not after the one before it either contradicts frames
//!    held back a little ([`horizon`] frames, [`HORIZON_INTERVALS`] intervals'
//!    worth, are held before they are written), or is behind them all. Of two time lines that disagree, the
//!    one that more frames follow is kept: a run of frames whose interval
//!    start jumps away and back while their sequence numbers run on (a clock
//!    glitch, CRC good) is left out and reported as a glitch, and every good
//!    frame around it is kept. Frames behind what has been written (a log
//!    written twice, a clock set back) are left out and reported.
//!
//! A logger writes no frames for intervals without samples; the replay writes
//! them as rows with empty statistics. Such intervals are written here (an
//! empty `IntervalAcc::new(&layout, k)` finished by the core; in a state log
//! also counted by the finisher as a `Gap`) only between two frames that
//! agree on sequence and time: consecutive sequence numbers, nothing left out
//! between them, the later one confirmed by a frame of a later interval after
//! it and the earlier one by a frame of an earlier interval before it.
//! Anywhere else (frames lost, a restart, a glitch left out between, or a jump
//! after the log's first interval or before its last that no frame confirms)
//! whether they held samples is unknown: they are neither written nor finished, and
//! `tenmin verify` lists their rows as missing.
//!
//! In a state log, an interval some of whose states were lost (frames lost or
//! damaged) is still finished, the lost channels left empty, and written
//! without rows for them; its cross-channel screening flags (pair, shear,
//! icing) then treat the lost channels as having no samples, and their
//! flat-line runs start again. Each such interval is reported.
//!
//! Exit codes: 0 when the log was read, damage or not (problems are reported
//! on stderr); with `--strict`, 1 when anything was damaged, torn, lost, out
//! of order, glitched, left out or unchecked (version-1 frames), or an
//! interval of a state log incomplete; 2 on bad input (unreadable file,
//! frames that do not match the station file, counts no station makes, a log
//! mixing both kinds of frame).

use std::collections::VecDeque;
use std::fmt::Write as _;
use std::io::{self, Read, Write};
use std::path::Path;
use std::process::ExitCode;

use anyhow::{anyhow, bail, Context, Result};
use qc_core::wire::{ConfigStamp, RecordFrame, Span, StateFrame, FRAME_LEN};
use qc_core::{
    config_fingerprint, ChannelConfig, Finisher, Gap, IntervalAcc, Layout, StateError, StateForm,
    Tally, Timestamp,
};

use crate::config::{self, StationFile, MAX_CHANNELS};
use crate::engine::G;
use crate::records::{write_header, write_row};
use crate::timefmt::Rfc3339;

/// Frames looked at ahead for the one whose sequence number comes next.
pub const REORDER_WINDOW: usize = 64;

/// Frames held back before they are written, so that a glitch of up to this
/// many frames can still be taken back: [`HORIZON_INTERVALS`] intervals of
/// `channels` channels, and at least 32 frames.
pub const fn horizon(channels: usize) -> usize {
    let h = HORIZON_INTERVALS * channels;
    if h < 32 {
        32
    } else {
        h
    }
}

/// Intervals of frames held back before they are written (4 hours of
/// 10-minute intervals): the longest clock glitch taken back.
pub const HORIZON_INTERVALS: usize = 24;

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
    /// The sequence number of the first good frame, when it is not 0 (the
    /// frames before it lost, or the log cut).
    pub first_sequence: Option<u32>,
    /// Places where the sequence numbers start again lower (a new logging
    /// session written to the same log?).
    pub sequence_breaks: u64,
    /// Intervals not written because frames were lost or left out around
    /// them, or a jump at the end of the log was not confirmed.
    pub unknown_intervals: u64,
    /// Good frames found after frames with later sequence numbers, put back
    /// in sequence order (and kept).
    pub out_of_order: u64,
    /// Good frames left out because the frames around them contradict their
    /// interval start (a clock glitch).
    pub glitched: u64,
    /// Good frames left out because they repeat the frame before them or are
    /// not after the frames already written (a log written twice, a clock
    /// set back).
    pub behind: u64,
    /// Good record frames of format version 1, which carry no configuration
    /// fingerprint.
    pub unstamped: u64,
    /// Problems, one line each, for stderr.
    pub problems: Vec<String>,
}

impl Decoded {
    /// Whether anything was damaged, torn, lost, out of order, glitched, left
    /// out or unchecked, or an interval of a state log is incomplete.
    pub fn damaged(&self) -> bool {
        self.damaged_spans > 0
            || self.lost_frames > 0
            || self.first_sequence.is_some()
            || self.sequence_breaks > 0
            || self.unknown_intervals > 0
            || self.out_of_order > 0
            || self.glitched > 0
            || self.behind > 0
            || self.unstamped > 0
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
             {} damaged spans ({} bytes), {} frames lost, {} sequence restarts, \
             {} frames out of order (put back in order), {} frames with a glitched time (left out), \
             {} frames repeated or behind the log (left out), {} intervals unknown, \
             {} frames without a configuration fingerprint, {} bytes of erased flash",
            self.rows,
            self.empty_rows,
            self.empty_intervals,
            self.damaged_spans,
            self.damaged_bytes,
            self.lost_frames,
            self.sequence_breaks,
            self.out_of_order,
            self.glitched,
            self.behind,
            self.unknown_intervals,
            self.unstamped,
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
        epochs: cfg.epochs::<C>()?,
        horizon: horizon(cfg.channels.len()),
        layout,
        out,
        d: Decoded::default(),
        first: None,
        window: VecDeque::new(),
        last_seq: None,
        pending: VecDeque::new(),
        alt: None,
        behind_run: None,
        carry: false,
        prev: None,
        first_interval: None,
        interval_tally: None,
        finisher: Finisher::new(),
        open: None,
        max_gap_days,
    };
    // Read a piece at a time: memory does not grow with the log.
    crate::logscan::scan_reader(log, READ_CHUNK, |span| d.span(span))
        .with_context(|| format!("cannot read {}", path.display()))?;
    d.finish()?;
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

    fn tally(&self) -> Tally {
        match self {
            Good::Record(f) => f.record.tally,
            Good::State(f) => *f.state.tally(),
        }
    }
}

/// A good frame that fits the station file, on its way through the stages.
struct Item {
    offset: usize,
    /// Interval index.
    k: i64,
    channel: u8,
    sequence: u32,
    /// Whether something lies between this frame and the one before it that
    /// makes the intervals between unknown: frames lost, a restart, frames
    /// left out.
    broken: bool,
    good: Good,
}

impl Item {
    /// Time order: interval, then channel.
    fn key(&self) -> (i64, u8) {
        (self.k, self.channel)
    }
}

/// The last frame written.
#[derive(Clone, Copy)]
struct Prev {
    index: i64,
    channel: u8,
    offset: usize,
}

/// A run of frames that contradicts the last `t_len` frames held back: one
/// of the two is out of line; the longer wins.
struct Alt {
    frames: Vec<Item>,
    t_len: usize,
}

/// Frames behind everything written, not yet reported.
#[derive(Clone, Copy)]
struct Behind {
    count: u64,
    first: usize,
    last: usize,
}

/// Why frames were left out.
#[derive(Clone, Copy, PartialEq, Eq)]
enum LeftOut {
    /// The frames around them agree on another time.
    Glitch,
    /// Not after what came before them.
    Behind,
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
    /// With a sensor history: the layouts of its periods, whose fingerprints
    /// a logger holding the entry in force stamps in its frames.
    epochs: Option<crate::sensors::Epochs<C>>,
    /// Frames held back before they are written.
    horizon: usize,
    layout: Layout<C>,
    out: &'a mut W,
    /// Longest run of empty intervals written, days (`--max-gap-days`).
    max_gap_days: u32,
    d: Decoded,
    /// Whether the log holds state frames, and the offset of its first good
    /// frame.
    first: Option<(bool, usize)>,
    /// Stage 1: frames in log order, looked at for the next sequence number.
    window: VecDeque<Item>,
    /// Stage 2: the sequence number, offset and time key of the last frame
    /// taken.
    last_seq: Option<(u32, usize, (i64, u8))>,
    /// Stage 3: frames in time order, held back before they are written.
    pending: VecDeque<Item>,
    /// Stage 3: a run contradicting the end of `pending`.
    alt: Option<Alt>,
    /// Stage 3: frames behind everything written, not yet reported.
    behind_run: Option<Behind>,
    /// Stage 3: frames were left out: the next frame taken is `broken`.
    carry: bool,
    /// The last frame written.
    prev: Option<Prev>,
    /// The interval of the first frame written.
    first_interval: Option<i64>,
    /// The first tally written in the current interval: (interval, tally,
    /// byte offset, channel).
    interval_tally: Option<(i64, Tally, usize, u8)>,
    /// State log: finishes the intervals, in time order.
    finisher: Finisher<C>,
    /// State log: the interval whose states are arriving.
    open: Option<Open<C>>,
}

impl<const C: usize, W: Write> Decoder<'_, C, W> {
    /// Counts `len` bytes from `offset` skipped as damaged, and says why.
    fn skipped(&mut self, offset: usize, len: usize, why: &str) {
        self.d.damaged_spans += 1;
        self.d.damaged_bytes += len as u64;
        self.d.problems.push(format!(
            "bytes {offset} to {} ({len} bytes): {why}; skipped",
            offset + len
        ));
    }

    /// Takes one span of the scan.
    fn span(&mut self, span: Span) -> Result<()> {
        let (offset, good) = match span {
            Span::Frame { offset, frame } => (offset, Good::Record(frame)),
            Span::State { offset, frame } => (offset, Good::State(frame)),
            Span::Damaged { offset, len } => {
                self.skipped(offset, len, "damaged (no good frame there)");
                return Ok(());
            }
            Span::Torn { offset, len } => {
                self.skipped(
                    offset,
                    len,
                    &format!(
                        "torn tail (an append cut short, shorter than a {FRAME_LEN}-byte frame)"
                    ),
                );
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
        self.check_counts(&good, offset)?;
        self.d.frames += 1;
        self.window.push_back(Item {
            offset,
            k,
            channel,
            sequence,
            broken: false,
            good,
        });
        if self.window.len() > REORDER_WINDOW {
            self.release()?;
        }
        Ok(())
    }

    /// The end of the log: every stage emptied, the open interval closed.
    fn finish(&mut self) -> Result<()> {
        while !self.window.is_empty() {
            self.release()?;
        }
        if let Some(alt) = self.alt.take() {
            self.settle(alt)?;
        }
        self.report_behind(false);
        self.unconfirmed_end();
        while let Some(item) = self.pending.pop_front() {
            self.write(item)?;
        }
        self.close_open()
    }

    // -- Stage 1: sequence order ---------------------------------------------

    /// Takes the frame that comes next from the window: the one whose
    /// sequence number follows the last one's, else the oldest.
    fn release(&mut self) -> Result<()> {
        let next = self.last_seq.map(|(s, _, _)| s.wrapping_add(1));
        // A frame numbered before the next one (repeated, or a new session
        // starting again) goes first: nothing to put before it.
        let head_behind = match (next, self.window.front()) {
            (Some(n), Some(h)) => (h.sequence.wrapping_sub(n) as i32) < 0,
            _ => true,
        };
        let at = next
            .filter(|_| !head_behind)
            .and_then(|n| self.window.iter().position(|f| f.sequence == n))
            .unwrap_or(0);
        let Some(item) = self.window.remove(at) else {
            return Ok(());
        };
        if at > 0 {
            if let Some(head) = self.window.front() {
                self.d.out_of_order += 1;
                self.d.problems.push(format!(
                    "byte {}: the frame with sequence number {} comes after the frame at byte {} (sequence number {}) in the log; put back in sequence order",
                    item.offset, item.sequence, head.offset, head.sequence
                ));
            }
        }
        self.follow(item)
    }

    // -- Stage 2: sequence numbers -------------------------------------------

    /// Checks the sequence number of the next frame against the one before
    /// it (wrapping), reporting lost frames and restarts.
    fn follow(&mut self, mut item: Item) -> Result<()> {
        let (sequence, offset) = (item.sequence, item.offset);
        if let Some((p, p_offset, key)) = self.last_seq {
            if p == sequence && key == item.key() {
                // The same frame written again (a retried write).
                self.d.behind += 1;
                self.d.problems.push(format!(
                    "byte {offset}: the frame with sequence number {sequence} repeats the frame at byte {p_offset} (written twice?); left out"
                ));
                return Ok(());
            }
        }
        let d = &mut self.d;
        match self.last_seq.replace((sequence, offset, item.key())) {
            None => {
                if sequence != 0 {
                    d.first_sequence = Some(sequence);
                    d.problems.push(format!(
                        "byte {offset}: the first good frame has sequence number {sequence}, not 0: the frames before it are lost, or the log does not start where the logger started",
                    ));
                }
            }
            Some((p, p_offset, _)) => {
                let lost = sequence.wrapping_sub(p).wrapping_sub(1);
                // Sequence numbers wrap after 2^32 frames; a jump of more than
                // half of that is a restart, not a loss.
                if lost > u32::MAX / 2 {
                    d.sequence_breaks += 1;
                    item.broken = true;
                    d.problems.push(format!(
                        "byte {offset}: the sequence number goes back from {p} (byte {p_offset}) to {sequence} (a new logging session in the same log, or a frame written again?)",
                    ));
                } else if lost != 0 {
                    d.lost_frames += u64::from(lost);
                    item.broken = true;
                    let (first, last) = (p.wrapping_add(1), sequence.wrapping_sub(1));
                    let which = if lost == 1 {
                        format!("1 frame lost (sequence number {first})")
                    } else {
                        format!("{lost} frames lost (sequence numbers {first} to {last})")
                    };
                    let (a, b) = (p_offset.min(offset), p_offset.max(offset));
                    d.problems
                        .push(format!("bytes {} to {b}: {which}", a + FRAME_LEN));
                }
            }
        }
        self.take(item)
    }

    // -- Stage 3: time line --------------------------------------------------

    /// The key of the last frame held back, or else written.
    fn last_key(&self) -> Option<(i64, u8)> {
        self.pending
            .back()
            .map(Item::key)
            .or(self.prev.map(|p| (p.index, p.channel)))
    }

    /// Takes the next frame in sequence order onto the time line.
    fn take(&mut self, mut z: Item) -> Result<()> {
        if let Some(mut alt) = self.alt.take() {
            let t_last = self.pending.back().map(Item::key);
            let a_last = alt.frames.last().map(Item::key);
            if t_last.is_some_and(|t| z.key() > t) {
                // The frames went on after the held-back ones: the
                // contradicting run was out of line.
                self.left_out(alt.frames, LeftOut::Glitch);
                z.broken = true;
            } else if a_last.is_some_and(|a| z.key() > a) {
                alt.frames.push(z);
                if alt.frames.len() > alt.t_len {
                    // More frames follow the contradicting run than the
                    // held-back ones it contradicts: those were out of line.
                    let keep = self.pending.len().saturating_sub(alt.t_len);
                    let t: Vec<Item> = self.pending.drain(keep..).collect();
                    self.left_out(t, LeftOut::Glitch);
                    self.report_behind(false);
                    for (i, mut f) in alt.frames.into_iter().enumerate() {
                        f.broken |= i == 0;
                        self.hold(f)?;
                    }
                } else {
                    self.alt = Some(alt);
                }
                return Ok(());
            } else {
                // A third time line: settle the two first, then try again.
                self.settle(alt)?;
                return self.take(z);
            }
        }
        match self.last_key() {
            Some(last) if z.key() <= last => {}
            _ => {
                if self.behind_run.is_some() {
                    self.report_behind(true);
                    z.broken = true;
                }
                return self.hold(z);
            }
        }
        let written = self.prev.map(|p| (p.index, p.channel));
        if written.is_some_and(|w| z.key() <= w) || self.pending.is_empty() {
            // Behind what has been written: nothing to take back.
            let b = self.behind_run.get_or_insert(Behind {
                count: 0,
                first: z.offset,
                last: z.offset,
            });
            b.count += 1;
            b.last = z.offset;
            self.carry = true;
            return Ok(());
        }
        let t_len = self
            .pending
            .iter()
            .rev()
            .take_while(|f| f.key() >= z.key())
            .count();
        self.alt = Some(Alt {
            frames: vec![z],
            t_len,
        });
        Ok(())
    }

    /// Holds a frame back (after the last one held), writing the oldest held
    /// beyond the horizon.
    fn hold(&mut self, mut f: Item) -> Result<()> {
        if std::mem::take(&mut self.carry) {
            f.broken = true;
        }
        self.pending.push_back(f);
        while self.pending.len() > self.horizon {
            if let Some(old) = self.pending.pop_front() {
                self.write(old)?;
            }
        }
        Ok(())
    }

    /// Decides between the held-back run and a contradicting one with
    /// nothing more to go on (the end of the log, or a third time line): the
    /// longer is kept; of two as long, the one nearer in time to the frame
    /// before them both.
    fn settle(&mut self, alt: Alt) -> Result<()> {
        let t_len = alt.t_len.min(self.pending.len());
        let keep = self.pending.len() - t_len;
        let drop_t = if alt.frames.len() != t_len {
            alt.frames.len() > t_len
        } else {
            let before = keep
                .checked_sub(1)
                .and_then(|i| self.pending.get(i))
                .map(|f| f.k)
                .or(self.prev.map(|p| p.index));
            let t_first = self.pending.get(keep).map(|f| f.k);
            let a_first = alt.frames.first().map(|f| f.k);
            match (before, t_first, a_first) {
                (Some(b), Some(t), Some(a)) => (a - b).abs() < (t - b).abs(),
                _ => false,
            }
        };
        if drop_t {
            let t: Vec<Item> = self.pending.drain(keep..).collect();
            self.left_out(t, LeftOut::Glitch);
            for (i, mut f) in alt.frames.into_iter().enumerate() {
                f.broken |= i == 0;
                self.hold(f)?;
            }
        } else {
            self.left_out(alt.frames, LeftOut::Behind);
        }
        Ok(())
    }

    /// Reports frames left out, as one run.
    fn left_out(&mut self, run: Vec<Item>, why: LeftOut) {
        let (Some(a), Some(b)) = (run.first(), run.last()) else {
            return;
        };
        let n = run.len();
        let (lo, hi) = run.iter().fold((usize::MAX, 0), |(lo, hi), f| {
            (lo.min(f.offset), hi.max(f.offset))
        });
        let place = if n == 1 {
            format!("byte {lo}: 1 frame")
        } else {
            format!("bytes {lo} to {}: {n} frames", hi + FRAME_LEN)
        };
        let span = if a.k == b.k {
            format!("{}", Rfc3339(self.layout.interval_start(a.k)))
        } else {
            format!(
                "{} to {}",
                Rfc3339(self.layout.interval_start(a.k)),
                Rfc3339(self.layout.interval_start(b.k))
            )
        };
        let seqs = if n == 1 {
            format!("sequence number {}", a.sequence)
        } else {
            format!("sequence numbers {} to {}", a.sequence, b.sequence)
        };
        match why {
            LeftOut::Glitch => {
                self.d.glitched += n as u64;
                self.d.problems.push(format!(
                    "{place} ({seqs}) for {span}, a time the frames around them contradict (a logger clock glitch?); left out"
                ));
            }
            LeftOut::Behind => {
                self.d.behind += n as u64;
                self.d.problems.push(format!(
                    "{place} ({seqs}) for {span}, not after the frames before them (written again, or a clock set back?); left out"
                ));
            }
        }
        self.carry = true;
    }

    /// Reports the frames behind everything written: a glitch if the frames
    /// went on after them (`resumed`) and they were few, else frames behind.
    fn report_behind(&mut self, resumed: bool) {
        let Some(b) = self.behind_run.take() else {
            return;
        };
        let place = if b.count == 1 {
            format!("byte {}: 1 frame", b.first)
        } else {
            format!(
                "bytes {} to {}: {} frames",
                b.first,
                b.last + FRAME_LEN,
                b.count
            )
        };
        if resumed && b.count <= self.horizon as u64 {
            self.d.glitched += b.count;
            self.d.problems.push(format!(
                "{place} with a time before the frames already read, which the frames after them contradict (a logger clock glitch?); left out"
            ));
        } else {
            self.d.behind += b.count;
            self.d.problems.push(format!(
                "{place} not after the frames already read (the log written again, or a clock set back?); left out"
            ));
        }
    }

    /// At the end of the log: if the last interval's frames jumped forward,
    /// no later frame confirms their time, so the intervals before them are
    /// unknown.
    fn unconfirmed_end(&mut self) {
        let Some(last) = self.pending.back().map(|f| f.k) else {
            return;
        };
        let i = self
            .pending
            .iter()
            .rposition(|f| f.k != last)
            .map(|i| i + 1);
        let before = match i {
            Some(i) => self.pending.get(i - 1).map(|f| f.k),
            None => self.prev.map(|p| p.index),
        };
        let i = i.unwrap_or(0);
        let Some(f) = self.pending.get_mut(i) else {
            return;
        };
        if let Some(b) = before {
            if f.k > b + 1 && !f.broken {
                f.broken = true;
                self.d.problems.push(format!(
                    "byte {}: the last frames jump forward from {} to {} with no later frame to confirm the time; the intervals between are not written",
                    f.offset,
                    Rfc3339(self.layout.interval_start(b)),
                    Rfc3339(self.layout.interval_start(f.k))
                ));
            }
        }
    }

    // -- Writing ------------------------------------------------------------

    /// Writes a frame taken in time order: the intervals between it and the
    /// frame before, then its row (record log) or its state (state log).
    fn write(&mut self, item: Item) -> Result<()> {
        let (k, offset) = (item.k, item.offset);
        if self.d.states && self.open.as_ref().is_some_and(|o| o.acc.index() != k) {
            self.close_open()?;
        }
        let before = self.prev.replace(Prev {
            index: k,
            channel: item.channel,
            offset,
        });
        let mut broken = item.broken;
        if let Some(p) = before {
            let first = *self.first_interval.get_or_insert(p.index);
            if p.index == first && k > p.index + 1 && !broken {
                // No frame before the log's first interval confirms its time.
                broken = true;
                self.d.problems.push(format!(
                    "byte {offset}: the frames jump forward from the log's first interval, {}, to {} with no earlier frame to confirm the time of the first; the intervals between are not written",
                    Rfc3339(self.layout.interval_start(p.index)),
                    Rfc3339(self.layout.interval_start(k))
                ));
            }
            if (k, item.channel) <= (p.index, p.channel) {
                // Stage 3 writes in time order only; a safeguard.
                bail!(
                    "{}: byte {offset}: internal error: frames written out of time order",
                    self.path.display()
                );
            }
            self.between(p, k, broken)?;
        }
        self.same_samples(&item)?;
        match item.good {
            Good::Record(f) => {
                let r = f.record;
                self.row(k, usize::from(item.channel), &r)?;
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
            let sensors = self.cfg.sensors.as_deref();
            write_row(self.out, start, end, (id, ch), record, sensors)?;
            self.d.rows += 1;
        }
        Ok(())
    }

    /// Every sample is counted once on every channel: the frames of one
    /// interval must hold the same samples.
    fn same_samples(&mut self, item: &Item) -> Result<()> {
        let t = item.good.tally();
        match self.interval_tally {
            Some((k, first, at, ch)) if k == item.k => {
                if !first.same_samples(&t) {
                    let id = |c: u8| self.ids.get(usize::from(c)).copied().unwrap_or("?");
                    bail!(
                        "{}: byte {}: the frame of {} channel {} counts {} samples held (valid + missing + out of range + flagged + excluded) and {} rejected, but the frame of channel {} of the same interval (byte {at}) counts {} and {}: every sample is counted once on every channel, so these counts cannot come from a station",
                        self.path.display(),
                        item.offset,
                        Rfc3339(self.layout.interval_start(k)),
                        id(item.channel),
                        t.held(),
                        t.rejected,
                        id(ch),
                        first.held(),
                        first.rejected
                    );
                }
            }
            _ => self.interval_tally = Some((item.k, t, item.offset, item.channel)),
        }
        Ok(())
    }

    /// The intervals between the frame before (`p`) and interval `k`: written
    /// as empty when nothing was lost or left out between (`broken` false:
    /// the logger wrote no frames, so they held no samples), else only
    /// reported.
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
            "{} to {}: {count} intervals without frames where frames were lost or left out; no rows written for them{screening}",
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
                Some(c) if e == StateError::WrongForm => format!(
                    "channel {ch} ({}) takes a {:?} state, the frame holds a {:?} state",
                    c.id,
                    StateForm::of(&c.core),
                    f.state.form()
                ),
                Some(c) => format!("channel {ch} ({}): {e}", c.id),
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
                "{}: the states of {} did not arrive (frames lost, damaged or left out): interval finished without them, no rows for them; its cross-channel screening flags (pair, shear, icing) treat them as having no samples, and their flat-line runs start again",
                Rfc3339(self.layout.interval_start(k)),
                lost.join(", ")
            ));
        }
        Ok(())
    }

    // -- Checks against the station file ------------------------------------

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

    /// Checks the configuration a frame carries: channel count, then
    /// fingerprint.
    fn check_stamp(
        &self,
        stamp: ConfigStamp,
        kind: &str,
        offset: usize,
        start: Timestamp,
    ) -> Result<()> {
        let n = self.cfg.channels.len();
        if usize::from(stamp.channels) != n {
            let why = format!(
                "the logger's station has {} channels, the station file {n}",
                stamp.channels
            );
            return Err(self.mismatch(offset, &why));
        }
        if let Some(epochs) = &self.epochs {
            let from = start.millis();
            let to = from.saturating_add(self.layout.interval_ms());
            let allowed = epochs.fingerprints(from, to);
            if allowed.contains(&stamp.fingerprint) {
                return Ok(());
            }
            let list: Vec<String> = allowed.iter().map(|f| format!("{f:#010x}")).collect();
            bail!(
                "{}: byte {offset}: {kind} frame of interval {} with configuration fingerprint {:#010x}, not that of the sensor-history entries in force then ({}): the logger held another entry (a record logger's records are never re-scaled afterwards: replay its samples with the history instead), or {} is not its station file",
                self.path.display(),
                Rfc3339(start),
                stamp.fingerprint,
                list.join(", "),
                self.cfg.path.display()
            );
        }
        if stamp.fingerprint != self.fingerprint {
            bail!(
                "{}: byte {offset}: {kind} frame of another station configuration (fingerprint {:#010x}, the station file's is {:#010x}): a log can only be read with the station file its logger was built with, and {} is not that file (a setting of the statistics or the screening, or the order of the channels, differs)",
                self.path.display(),
                stamp.fingerprint,
                self.fingerprint,
                self.cfg.path.display()
            );
        }
        Ok(())
    }

    /// The counts of one frame: as a station makes them.
    fn check_counts(&self, good: &Good, offset: usize) -> Result<()> {
        let (n_possible, tally) = match good {
            Good::Record(f) => (f.record.n_possible, f.record.tally),
            // A state carries no samples possible: the station file's.
            Good::State(f) => (self.layout.samples_per_interval(), *f.state.tally()),
        };
        if let Err(e) = self.layout.check_tally(n_possible, &tally) {
            if matches!(e, qc_core::TallyError::Possible { .. }) {
                return Err(self.mismatch(offset, &e.to_string()));
            }
            bail!(
                "{}: byte {offset}: the frame's counts cannot come from a station: {e}",
                self.path.display()
            );
        }
        Ok(())
    }

    /// The interval index of a good record frame, after checking it belongs
    /// to the station file.
    fn check_record(&mut self, f: &RecordFrame, offset: usize) -> Result<i64> {
        match f.config {
            Some(stamp) => self.check_stamp(stamp, "record", offset, f.interval_start)?,
            None => {
                if self.d.unstamped == 0 {
                    self.d.problems.push(format!(
                        "byte {offset}: record frames of format version 1 carry no configuration fingerprint: whether {} is the station file of the logger that wrote them cannot be checked (only the channel index, kind and samples per interval are)",
                        self.cfg.path.display()
                    ));
                }
                self.d.unstamped += 1;
            }
        }
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
        self.interval(f.interval_start)
            .map_err(|why| self.mismatch(offset, &why))
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
        self.check_stamp(f.config(), "state", offset, f.interval_start)?;
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
    let (decoded, digest) = crate::output::write_to_digest(a.output.as_deref(), "records", |w| {
        decode(&cfg, log, &a.log, w, a.max_gap_days)
    })?;
    if let Some(out) = &a.output {
        let used = crate::provenance::inputs(&cfg, "log", [a.log.as_path()]);
        crate::provenance::write(out, &cfg, &used, &[], digest)?;
    }
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
