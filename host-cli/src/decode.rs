//! `tenmin decode`: a logger's record log (`qc_core::wire` record frames) to
//! records CSV, with damaged and torn spans reported by byte offset.
//!
//! The log is scanned with the core's scanner (`qc_core::wire::scan`), which
//! resynchronises on the sync marker after damage. Every good frame becomes a
//! row, written by the CLI's own records writer ([`crate::records::write_row`]) in
//! the replay's column layout. Frames must match the station file (channel
//! index, kind, interval alignment, samples per interval): a frame that does
//! not is bad input (exit 2), most likely the log of another station.
//!
//! A logger writes no frames for intervals without samples; the replay writes
//! them as rows with empty statistics. Between the first and the last frame,
//! such intervals are written here the way the replay writes them (an empty
//! `IntervalAcc::new(&layout, k)` finished by the core), so that `tenmin
//! verify` against the replay passes. The frames' sequence numbers tell a gap
//! from lost frames: when frames are missing between two good ones (their
//! sequence numbers are not consecutive), the intervals with no frame between
//! them are not written, since whether they held samples is unknown; rows of
//! lost frames are simply absent, and `tenmin verify` lists them as missing.
//!
//! Exit codes: 0 when the log was read, damage or not (problems are reported
//! on stderr); with `--strict`, 1 when anything was damaged, torn, lost or
//! out of order; 2 on bad input (unreadable file, frames that do not match the
//! station file).

use std::fmt::Write as _;
use std::io::{self, BufWriter, Write};
use std::path::Path;
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use qc_core::wire::{self, RecordFrame, Span, FRAME_LEN};
use qc_core::{IntervalAcc, Layout};

use crate::config::{self, StationFile, MAX_CHANNELS};
use crate::engine::G;
use crate::records::{write_header, write_row};
use crate::timefmt::Rfc3339;

/// What a decode found.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Decoded {
    /// Good frames, each a row.
    pub frames: u64,
    /// Rows written (frames and empty intervals).
    pub rows: u64,
    /// Intervals written as empty rows (no frames, none lost around them).
    pub empty_intervals: u64,
    /// Rows written for them.
    pub empty_rows: u64,
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
    /// Whether anything was damaged, torn, lost or out of order.
    pub fn damaged(&self) -> bool {
        self.damaged_spans > 0
            || self.lost_frames > 0
            || self.sequence_breaks > 0
            || self.out_of_order > 0
    }

    /// The summary on stderr.
    pub fn write(&self, w: &mut dyn Write, log: &Path) -> io::Result<()> {
        for p in &self.problems {
            writeln!(w, "decode: {}: {p}", log.display())?;
        }
        writeln!(
            w,
            "decode: {}: {} good frames, {} rows written ({} of them for {} intervals with no samples); \
             {} damaged spans ({} bytes), {} frames lost, {} sequence restarts, {} frames out of order, \
             {} bytes of erased flash",
            log.display(),
            self.frames,
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

/// The last good frame written.
#[derive(Clone, Copy)]
struct Prev {
    index: i64,
    channel: u8,
    sequence: u32,
    offset: usize,
}

/// Decodes the record log `log` of the station `cfg` into records CSV on
/// `out`. `path` names the log in messages.
pub fn decode<W: Write>(
    cfg: &StationFile,
    log: &[u8],
    path: &Path,
    out: &mut W,
) -> Result<Decoded> {
    match cfg.channels.len() {
        0 => bail!("{}: no channels", cfg.path.display()),
        1..=4 => decode_with::<4, W>(cfg, log, path, out),
        5..=8 => decode_with::<8, W>(cfg, log, path, out),
        9..=16 => decode_with::<16, W>(cfg, log, path, out),
        17..=MAX_CHANNELS => decode_with::<32, W>(cfg, log, path, out),
        n => bail!("{n} channels: at most {MAX_CHANNELS} are supported"),
    }
}

fn decode_with<const C: usize, W: Write>(
    cfg: &StationFile,
    log: &[u8],
    path: &Path,
    out: &mut W,
) -> Result<Decoded> {
    let layout: Layout<C> = cfg.layout::<C>()?;
    let ids: Vec<&str> = cfg.channels.iter().map(|c| c.id.as_str()).collect();
    let mut d = Decoded::default();
    write_header(out)?;
    let mut prev: Option<Prev> = None;
    let row = |out: &mut W, k: i64, ch: usize, frame: Option<&RecordFrame>| {
        let start = layout.interval_start(k);
        let end = layout.interval_start(k.saturating_add(1));
        let record = match frame {
            Some(f) => Some(f.record),
            None => layout.finish(&IntervalAcc::<C, G>::new(&layout, k), ch),
        };
        match (record, ids.get(ch)) {
            (Some(r), Some(id)) => write_row(out, start, end, id, &r),
            _ => Ok(()),
        }
    };
    for span in wire::scan(log) {
        let (offset, frame) = match span {
            Span::Frame { offset, frame } => (offset, frame),
            Span::State { offset, .. } => {
                bail!(
                    "{}: byte {offset}: a state frame; this decoder reads record frames only",
                    path.display()
                )
            }
            Span::Damaged { offset, len } => {
                d.damaged_spans += 1;
                d.damaged_bytes += len as u64;
                d.problems.push(format!(
                    "bytes {offset} to {} ({len} bytes): damaged (no good frame there); skipped",
                    offset + len
                ));
                continue;
            }
            Span::Torn { offset, len } => {
                d.damaged_spans += 1;
                d.damaged_bytes += len as u64;
                d.problems.push(format!(
                    "bytes {offset} to {} ({len} bytes): torn tail (an append cut short, shorter than a {FRAME_LEN}-byte frame); skipped",
                    offset + len
                ));
                continue;
            }
            Span::Erased { len, .. } => {
                d.erased_bytes += len as u64;
                continue;
            }
        };
        let k = check(cfg, &layout, &frame, offset, path)?;
        let ch = frame.channel;
        match prev {
            Some(p) if (k, ch) <= (p.index, p.channel) => {
                d.out_of_order += 1;
                d.problems.push(format!(
                    "byte {offset}: frame of {} channel {} is not after the frame before it (byte {}); skipped",
                    Rfc3339(layout.interval_start(k)),
                    ids.get(usize::from(ch)).unwrap_or(&"?"),
                    p.offset
                ));
                continue;
            }
            Some(p) => {
                let lost = frame.sequence.wrapping_sub(p.sequence).wrapping_sub(1);
                // Sequence numbers wrap after 2^32 frames; a jump of more than
                // half of that is a restart, not a loss.
                let restart = lost > u32::MAX / 2;
                if restart {
                    d.sequence_breaks += 1;
                    d.problems.push(format!(
                        "byte {offset}: the sequence number goes back from {} to {} (a new logging session in the same log?)",
                        p.sequence, frame.sequence
                    ));
                } else if lost != 0 {
                    d.lost_frames += u64::from(lost);
                    let (first, last) =
                        (p.sequence.wrapping_add(1), frame.sequence.wrapping_sub(1));
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
                let empty = k.saturating_sub(p.index).saturating_sub(1);
                if empty > 0 {
                    if lost == 0 && !restart {
                        // No frame lost: the logger wrote none, so these
                        // intervals held no samples. Rows as the replay's.
                        for j in p.index + 1..k {
                            for c in 0..ids.len() {
                                row(out, j, c, None)?;
                                d.rows += 1;
                                d.empty_rows += 1;
                            }
                        }
                        d.empty_intervals += empty as u64;
                    } else {
                        d.unknown_intervals += empty as u64;
                        d.problems.push(format!(
                            "{} to {}: {empty} intervals without frames where frames were lost; no rows written for them",
                            Rfc3339(layout.interval_start(p.index + 1)),
                            Rfc3339(layout.interval_start(k))
                        ));
                    }
                }
            }
            None if frame.sequence != 0 => {
                d.lost_frames += u64::from(frame.sequence);
                d.problems.push(format!(
                    "byte {offset}: the first good frame has sequence number {}: the frames before it are lost (or the log does not start where the logger started)",
                    frame.sequence
                ));
            }
            None => {}
        }
        row(out, k, usize::from(ch), Some(&frame))?;
        d.rows += 1;
        d.frames += 1;
        prev = Some(Prev {
            index: k,
            channel: ch,
            sequence: frame.sequence,
            offset,
        });
    }
    Ok(d)
}

/// The interval index of a good frame, after checking it belongs to `cfg`.
fn check<const C: usize>(
    cfg: &StationFile,
    layout: &Layout<C>,
    f: &RecordFrame,
    offset: usize,
    path: &Path,
) -> Result<i64> {
    let t = f.interval_start;
    let mut why = String::new();
    match cfg.channels.get(usize::from(f.channel)) {
        None => {
            let _ = write!(
                why,
                "channel index {}, but the station has {} channels",
                f.channel,
                cfg.channels.len()
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
    let k = layout.interval_of(t);
    if why.is_empty() && layout.interval_start(k) != t {
        let _ = write!(
            why,
            "interval start {} is not on a {} s boundary",
            Rfc3339(t),
            layout.interval_ms() / 1000
        );
    }
    if why.is_empty() && f.record.n_possible != layout.samples_per_interval() {
        let _ = write!(
            why,
            "{} samples possible per interval, the station has {}",
            f.record.n_possible,
            layout.samples_per_interval()
        );
    }
    if !why.is_empty() {
        bail!(
            "{}: byte {offset}: the frame does not match {}: {why} (is this the log of another station?)",
            path.display(),
            cfg.path.display()
        );
    }
    Ok(k)
}

/// `tenmin decode`.
pub fn run(a: &crate::DecodeArgs) -> Result<ExitCode> {
    let cfg = config::load(&a.config)?;
    let log = std::fs::read(&a.log).with_context(|| format!("cannot read {}", a.log.display()))?;
    let decoded = match &a.output {
        Some(path) => crate::write_atomically(path, |w| decode(&cfg, &log, &a.log, w))?,
        None => {
            let stdout = io::stdout();
            let mut w = BufWriter::new(stdout.lock());
            let d = decode(&cfg, &log, &a.log, &mut w)?;
            w.flush()?;
            d
        }
    };
    if !a.quiet || decoded.damaged() {
        let _ = decoded.write(&mut io::stderr().lock(), &a.log);
    }
    Ok(if a.strict && decoded.damaged() {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
