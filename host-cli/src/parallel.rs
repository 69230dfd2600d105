//! Parallel replay: the samples cut into chunks at record boundaries, each
//! chunk replayed by a worker thread through its own `qc_core::Station`, the
//! pieces joined on the calling thread in time order.
//!
//! The result is the sequential replay's, bit for bit:
//! - Intervals are independent except for screening and recovery. A worker's
//!   first interval may continue the previous chunk's last one: the two pieces
//!   are joined with [`IntervalAcc::merge`], exact by the core's contract.
//! - Every closed interval has its flags cleared and is screened again here, in
//!   time order, with one [`Screener`] ([`Layout::screen`]); recovery is
//!   rebuilt from those records and from the gaps ([`Recovery::add_interval`],
//!   [`Recovery::add_gap`]), as `Station::close` and `Station::push` do.
//! - A worker knows nothing of earlier chunks, so it reports the rows it
//!   rejected before its first accepted sample (unsupported times) apart, and
//!   where that sample is. They are counted in the open interval here, as the
//!   station would; a gap up to the chunk's first interval becomes rows.
//! - If the chunk's first accepted sample is not after the last sample
//!   accepted before the chunk (a duplicate or backward time at the boundary),
//!   the worker's result is thrown away and the chunk is replayed again here,
//!   knowing that time: rows are rejected, by the core's rules, until one is
//!   after it ("floor"), and the rest follows as before.
//! - A file holding `"` is read by the `csv` crate from the first chunk with a
//!   quote on, here, in order.
//!
//! Memory is bounded whatever the length of the input: the chunks read and
//! not yet joined share one pool of buffers ([`Pool`]) of about
//! `IN_FLIGHT_BYTES` (5 MiB: five chunks of the default 1 MiB; at least
//! two per worker and one being read), so the reader waits rather than runs
//! ahead; the queues are bounded too, and workers send closed intervals in
//! small batches.

use crate::exclusions::Exclusions;
use std::io::Read;
use std::mem;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};
use std::sync::Arc;

use anyhow::{anyhow, bail, Result};
use qc_core::screen::passes;
use qc_core::{
    Event, Gap, IntervalAcc, Layout, PushTotals, Pushed, Reading, Recovery, Screener, Station,
    Timestamp, Totals,
};

use crate::config::{StationFile, MAX_CHANNELS};
use crate::engine::{Out, Sink, G};
use crate::provenance::{DigestHandle, HashOn};
use crate::reader::{Chunk, FileReader, Head, Piece, Pool};
use crate::samples::{
    check_jump, csv_rows, file_len, steady_prefix, BadRow, Block, InputStats, Options, Parser,
    Progress, Records,
};
use crate::sensors::Epochs;

/// Closed intervals per message from a worker.
const BATCH: usize = 16;

/// Messages a worker may have sent and the calling thread not yet taken: a
/// worker runs this far (about two 1 MiB chunks of 1 Hz rows) into its next
/// chunk while the joiner waits on the other worker's. With 4, `--jobs 2`
/// took 1.04 to 1.08 times as long on 2 cores (host-cli/PERF.md, "CI's step
/// times, and `--jobs 2`'s queues").
const WORKER_QUEUE: usize = 8;

/// Bytes of samples in flight at most (read and not yet joined), as chunks
/// of `--chunk-size` (five of the default 1 MiB); but never fewer chunks
/// than two per worker and one being read, so that every worker has its
/// next chunk queued.
const IN_FLIGHT_BYTES: usize = 5 << 20;

/// The chunks in flight at most for `jobs` workers and chunks of `size`:
/// [`IN_FLIGHT_BYTES`] of them, but never fewer than two per worker and one
/// being read.
fn chunks_in_flight(jobs: usize, size: usize) -> usize {
    (IN_FLIGHT_BYTES / size.max(1)).max(2 * jobs + 1)
}

/// Replays `files` with `opts.jobs` workers; returns what was read, the
/// station's push totals and each channel's recovery since start.
pub fn replay(
    cfg: &StationFile,
    files: &[PathBuf],
    opts: Options,
    sink: &mut dyn Sink,
) -> Result<(InputStats, PushTotals, Vec<Totals>)> {
    match cfg.channels.len() {
        0 => bail!("{}: no channels", cfg.path.display()),
        1..=4 => run::<4>(cfg, files, opts, sink),
        5..=8 => run::<8>(cfg, files, opts, sink),
        9..=16 => run::<16>(cfg, files, opts, sink),
        17..=MAX_CHANNELS => run::<32>(cfg, files, opts, sink),
        n => bail!("{n} channels: at most {MAX_CHANNELS} are supported"),
    }
}

/// A chunk for a worker.
struct Job {
    file: usize,
    /// Line of the chunk's first byte.
    line: u64,
    bytes: Chunk,
    parser: Arc<Parser>,
}

/// What the calling thread does next, in input order.
enum Item {
    /// The next chunk, replayed by worker `worker`; `end` is the file offset
    /// after it.
    Chunk {
        worker: usize,
        file: usize,
        line: u64,
        end: u64,
        bytes: Chunk,
        parser: Arc<Parser>,
    },
    /// The rest of a file holding quotes, read here, from line `line`.
    Tail {
        file: usize,
        line: u64,
        rest: Box<dyn Read + Send>,
        head: Head,
    },
    /// A file with no record at all.
    Empty { file: usize },
    /// A file read to its end (its digest given once its tail, if any, is
    /// read too).
    FileDone { digest: Option<DigestHandle> },
    /// Reading stopped here (a header problem or an I/O error).
    Error(anyhow::Error),
}

/// What a chunk's station handed out, in time order.
enum Ev<const C: usize> {
    Closed(Box<IntervalAcc<C, G>>),
    Gap(Gap),
}

/// From a chunk's replay to the joiner.
enum Msg<const C: usize> {
    /// The chunk's first accepted sample, on `line`, after `lead` rejected ones.
    Start {
        first: Timestamp,
        line: u64,
        lead: PushTotals,
    },
    /// Closed intervals and gaps.
    Events(Vec<Ev<C>>),
    /// The chunk is done.
    End(Box<End<C>>),
}

struct End<const C: usize> {
    /// Rejected rows of a chunk that accepted none.
    lead: PushTotals,
    /// The interval open at the chunk's end.
    open: Option<IntervalAcc<C, G>>,
    /// The last accepted sample.
    last: Option<Timestamp>,
    /// Push totals from the first accepted sample on.
    totals: PushTotals,
    stats: InputStats,
    /// The row error that stopped the chunk, if any.
    error: Option<anyhow::Error>,
}

/// Why a chunk's replay stopped early.
enum Halt {
    /// A bad row (without `--skip-bad-rows`), a time jump or a read error:
    /// reported after the intervals before it.
    Row(anyhow::Error),
    /// The receiver is gone or refused a message.
    Send(anyhow::Error),
}

impl From<anyhow::Error> for Halt {
    fn from(e: anyhow::Error) -> Self {
        Halt::Row(e)
    }
}

type Emit<'a, const C: usize> = dyn FnMut(Msg<C>) -> Result<()> + 'a;

/// One chunk's replay through a fresh station.
struct Run<'a, const C: usize> {
    layout: &'a Layout<C>,
    /// Readings excluded by decision, marked before each push.
    excl: &'a Exclusions,
    /// With a sensor history: the layout in force at each sample's time.
    epochs: Option<Arc<Epochs<C>>>,
    cursor: usize,
    opts: Options,
    /// The last sample accepted before the chunk, when known.
    floor: Option<Timestamp>,
    /// Until the first accepted sample: the core's verdict on each row.
    probe: Option<Box<Station<C, G>>>,
    station: Option<Box<Station<C, G>>>,
    last: Option<Timestamp>,
    events: Vec<Ev<C>>,
    stats: InputStats,
    readings: [Reading; C],
    /// Good rows read after the first accepted one, not pushed yet (the
    /// configured channels only: the unused slots' readings are `pad`).
    block: Block,
    /// The readings of the unused channel slots in a run: all missing.
    pad: Vec<Reading>,
}

impl<'a, const C: usize> Run<'a, C> {
    /// A chunk's replay of the first `n` channels of `layout` (the others
    /// are padding, always missing).
    fn new(
        (layout, n): (&'a Layout<C>, usize),
        excl: &'a Exclusions,
        epochs: Option<Arc<Epochs<C>>>,
        opts: Options,
        floor: Option<Timestamp>,
    ) -> Self {
        Run {
            layout,
            excl,
            epochs,
            cursor: 0,
            opts,
            floor,
            probe: None,
            station: None,
            last: None,
            events: Vec::new(),
            stats: InputStats::default(),
            readings: [Reading::Missing; C],
            block: Block::new(n.min(C)),
            pad: Vec::new(),
        }
    }

    /// The rejections of the probe: rows before the first accepted one.
    fn lead(&self) -> PushTotals {
        self.probe.as_ref().map_or_else(PushTotals::default, |p| {
            let t = p.totals();
            PushTotals {
                duplicate: t.duplicate,
                backward: t.backward,
                closed_interval: t.closed_interval,
                unsupported_time: t.unsupported_time,
                ..PushTotals::default()
            }
        })
    }

    /// One row, its readings in `self.readings`.
    fn row(
        &mut self,
        path: &Path,
        line: u64,
        parsed: Result<Timestamp, BadRow>,
        send: &mut Emit<'_, C>,
    ) -> Result<(), Halt> {
        self.stats.rows += 1;
        let t = match parsed {
            Ok(t) => t,
            Err(bad) => return Ok(self.stats.bad_row(&self.opts, path, line, bad)?),
        };
        self.excl.apply(t, &mut self.readings);
        if self.station.is_some() {
            return self.push(path, line, t, send);
        }
        let (layout, floor) = (self.layout, self.floor);
        let probe = self.probe.get_or_insert_with(|| {
            let mut p = Box::new(Station::new(*layout));
            if let Some(f) = floor {
                p.push(f, &[Reading::Missing; C], |_| {});
            }
            p
        });
        if probe.push(t, &self.readings, |_| {}) != Pushed::Accepted {
            return Ok(());
        }
        let lead = self.lead();
        let mut st = Box::new(Station::new(*layout));
        match &self.epochs {
            None => st.push(t, &self.readings, |_| {}),
            Some(ep) => st
                .push_with(ep.at(t, &mut self.cursor), t, &self.readings, |_| {})
                .map_err(anyhow::Error::from)?,
        };
        self.station = Some(st);
        self.probe = None;
        self.last = Some(t);
        send(Msg::Start {
            first: t,
            line,
            lead,
        })
        .map_err(Halt::Send)
    }

    /// One row (its readings in `self.readings`) into the station, once the
    /// chunk has accepted a sample.
    fn push(
        &mut self,
        path: &Path,
        line: u64,
        t: Timestamp,
        send: &mut Emit<'_, C>,
    ) -> Result<(), Halt> {
        let Some(st) = self.station.as_mut() else {
            return Ok(());
        };
        check_jump(&self.opts, self.last, t, path, line)?;
        let events = &mut self.events;
        let emit = |e: Event<'_, C, G>| {
            events.push(match e {
                Event::Closed(acc, _) => Ev::Closed(Box::new(*acc)),
                Event::Gap(g) => Ev::Gap(g),
            })
        };
        let pushed = match &self.epochs {
            None => st.push(t, &self.readings, emit),
            Some(ep) => st
                .push_with(ep.at(t, &mut self.cursor), t, &self.readings, emit)
                .map_err(anyhow::Error::from)?,
        };
        if pushed == Pushed::Accepted {
            self.last = Some(t);
        }
        if self.events.len() >= BATCH {
            send(Msg::Events(mem::take(&mut self.events))).map_err(Halt::Send)?;
        }
        Ok(())
    }

    /// Pushes the rows of the block: runs of steady rows channel by channel,
    /// the others one by one ([`Run::push`]), as each would go alone.
    fn flush(&mut self, path: &Path, send: &mut Emit<'_, C>) -> Result<(), Halt> {
        self.block.columns();
        let n = self.block.times.len();
        if self.pad.len() < n {
            self.pad.resize(n, Reading::Missing);
        }
        let max_gap = self.opts.max_gap_ms();
        let mut i = 0;
        while i < n {
            let b = &self.block;
            let m = steady_prefix(&b.times[i..], self.last, max_gap);
            if let (true, Some(st)) = (m > 0, self.station.as_mut()) {
                let pad = &self.pad[i..];
                let cols: [&[Reading]; C] = std::array::from_fn(|c| match b.cols.get(c) {
                    Some(col) => col.get(i..).unwrap_or_default(),
                    None => pad,
                });
                let times = &b.times[i..i + m];
                let k = match &self.epochs {
                    None => st.push_run(times, &cols),
                    // With a sensor history: the entry in force, up to the next.
                    Some(ep) => ep.push_run(st, &mut self.cursor, times, &cols),
                };
                if k > 0 {
                    self.last = Some(b.times[i + k - 1]);
                    i += k;
                    continue;
                }
            }
            let (t, line) = (b.times[i], b.lines[i]);
            // The configured channels; the unused slots stay missing (the
            // parser and the exclusions write configured channels only).
            b.row(i, &mut self.readings);
            self.push(path, line, t, send)?;
            i += 1;
        }
        self.block.clear();
        Ok(())
    }

    /// Ends the chunk after the rows read (and `error`, if it stopped early).
    fn end(mut self, error: Option<anyhow::Error>, send: &mut Emit<'_, C>) -> Result<()> {
        if !self.events.is_empty() {
            send(Msg::Events(mem::take(&mut self.events)))?;
        }
        let (open, totals) = match &self.station {
            Some(st) => (st.open().copied(), *st.totals()),
            None => (None, PushTotals::default()),
        };
        send(Msg::End(Box::new(End {
            lead: self.lead(),
            open,
            last: self.last,
            totals,
            stats: mem::take(&mut self.stats),
            error,
        })))
    }

    /// Replays the records of `bytes` (text without quotes) from line `line`.
    /// Errors only when `send` fails; row errors travel in the end message.
    fn chunk(
        mut self,
        parser: &mut Parser,
        bytes: &[u8],
        line: u64,
        path: &Path,
        send: &mut Emit<'_, C>,
    ) -> Result<()> {
        let mut recs = Records::new(bytes, line);
        let mut commas = Vec::with_capacity(64);
        // Plain rows go straight into the block, wherever rows go to the
        // block at all (as in the match below).
        let fills = parser.fills_rows();
        let mut rows = || -> Result<(), Halt> {
            loop {
                let next = if fills && self.station.is_some() {
                    let bad = &mut self.stats.bad;
                    self.stats.rows += self.block.fill(&mut recs, parser, self.excl, bad);
                    if self.block.is_full() {
                        self.flush(path, send)?;
                        continue;
                    }
                    // A row the one-pass readers left.
                    recs.next_odd_row(parser, &mut self.readings, &mut commas)
                } else {
                    recs.next_row(parser, &mut self.readings, &mut commas)
                };
                let Some((ln, parsed)) = next else {
                    break;
                };
                match parsed {
                    Ok(t) if self.station.is_some() => {
                        self.stats.rows += 1;
                        self.excl.apply(t, &mut self.readings);
                        self.block.add(t, ln, &self.readings);
                        if self.block.is_full() {
                            self.flush(path, send)?;
                        }
                    }
                    // Another station's row touches only the counts: the
                    // block goes on.
                    Err(e) if e.is_other_station() => self.row(path, ln, Err(e), send)?,
                    _ => {
                        self.flush(path, send)?;
                        self.row(path, ln, parsed, send)?;
                    }
                }
            }
            self.flush(path, send)
        };
        match rows() {
            Ok(()) => self.end(None, send),
            Err(Halt::Row(e)) => self.end(Some(e), send),
            Err(Halt::Send(e)) => Err(e),
        }
    }
}

/// Whether a message finished the chunk, or asks for it again.
enum Flow {
    Go,
    Done,
    Redo,
}

/// Joins the chunks' pieces in time order and hands the records out.
struct Joiner<'s, const C: usize> {
    layout: Layout<C>,
    excl: &'s Exclusions,
    epochs: Option<Arc<Epochs<C>>>,
    opts: Options,
    screener: Screener<C>,
    recovery: [Recovery; C],
    totals: PushTotals,
    /// The interval open after the chunks joined so far.
    open: Option<IntervalAcc<C, G>>,
    /// The last accepted sample so far.
    last: Option<Timestamp>,
    /// The next piece holds the current chunk's first accepted sample.
    join: bool,
    out: Out<'s, C>,
    stats: InputStats,
    /// Configured channels (the first `n` of `layout`).
    n: usize,
}

impl<const C: usize> Joiner<'_, C> {
    fn handle(&mut self, msg: Msg<C>, path: &Path) -> Result<Flow> {
        match msg {
            Msg::Start { first, line, lead } => {
                if self.last.is_some_and(|l| first <= l) {
                    return Ok(Flow::Redo);
                }
                self.lead(&lead);
                check_jump(&self.opts, self.last, first, path, line)?;
                self.join = true;
                Ok(Flow::Go)
            }
            Msg::Events(events) => {
                for ev in events {
                    match ev {
                        Ev::Closed(acc) => {
                            let mut acc = self.joined(*acc)?;
                            self.close(&mut acc)?;
                        }
                        Ev::Gap(gap) => self.gap(gap)?,
                    }
                }
                Ok(Flow::Go)
            }
            Msg::End(end) => {
                let End {
                    lead,
                    open,
                    last,
                    totals,
                    stats,
                    error,
                } = *end;
                self.lead(&lead);
                if let Some(acc) = open {
                    let acc = self.joined(acc)?;
                    self.open = Some(acc);
                }
                if last.is_some() {
                    self.last = last;
                }
                let t = &mut self.totals;
                t.accepted += totals.accepted;
                t.duplicate += totals.duplicate;
                t.backward += totals.backward;
                t.closed_interval += totals.closed_interval;
                t.unsupported_time += totals.unsupported_time;
                t.unplaced += totals.unplaced;
                self.stats.merge_rows(stats);
                match error {
                    Some(e) => Err(e),
                    None => Ok(Flow::Done),
                }
            }
        }
    }

    /// Counts rows rejected before a chunk's first accepted sample, in the
    /// open interval as the station would (or as unplaced).
    fn lead(&mut self, lead: &PushTotals) {
        let t = &mut self.totals;
        t.duplicate += lead.duplicate;
        t.backward += lead.backward;
        t.closed_interval += lead.closed_interval;
        t.unsupported_time += lead.unsupported_time;
        let n = lead.pushed() - lead.accepted;
        match &mut self.open {
            Some(acc) => (0..n).for_each(|_| acc.reject()),
            None => t.unplaced += n,
        }
    }

    /// The first piece of a chunk joined to the open interval: merged if it
    /// is the same interval, else the open one is closed and the intervals in
    /// between are a gap.
    fn joined(&mut self, piece: IntervalAcc<C, G>) -> Result<IntervalAcc<C, G>> {
        if !mem::take(&mut self.join) {
            return Ok(piece);
        }
        match self.open.take() {
            Some(mut open) if open.index() == piece.index() => {
                open.merge(&self.layout, &piece);
                Ok(open)
            }
            Some(mut open) => {
                self.close(&mut open)?;
                let next = open.index().saturating_add(1);
                if piece.index() > next {
                    self.gap(Gap {
                        first: next,
                        count: piece.index().abs_diff(next),
                    })?;
                }
                Ok(piece)
            }
            None => Ok(piece),
        }
    }

    /// Screens a complete interval in time order, counts its recovery and
    /// writes it (as `Station::close` does).
    fn close(&mut self, acc: &mut IntervalAcc<C, G>) -> Result<()> {
        acc.clear_flags();
        let start = self.layout.interval_start(acc.index());
        let records = self.layout.screen(&mut self.screener, acc);
        let possible = self.layout.samples_per_interval();
        for (r, rec) in self.recovery.iter_mut().zip(records.iter()) {
            r.add_interval(start, possible, &rec.tally, passes(rec));
        }
        self.out.interval(acc)
    }

    /// Intervals with no samples (as `Station::push` reports them).
    fn gap(&mut self, gap: Gap) -> Result<()> {
        let start = self.layout.interval_start(gap.first);
        for r in &mut self.recovery {
            r.add_gap(
                start,
                gap.count,
                self.layout.interval_ms(),
                self.layout.samples_per_interval(),
            );
        }
        self.out.gap(gap)
    }

    /// A chunk replayed here, knowing the last accepted sample before it.
    fn redo(&mut self, parser: &Parser, bytes: &[u8], line: u64, path: &Path) -> Result<()> {
        let layout = self.layout;
        let run = Run::new(
            (&layout, self.n),
            self.excl,
            self.epochs.clone(),
            self.opts,
            self.last,
        );
        let mut parser = parser.clone();
        run.chunk(&mut parser, bytes, line, path, &mut |m| self.here(m, path))
    }

    /// The rest of a file with quotes, read here by the `csv` crate.
    fn tail(
        &mut self,
        cfg: &StationFile,
        path: &Path,
        rest: Box<dyn Read + Send>,
        line: u64,
        mut head: Head,
    ) -> Result<()> {
        let layout = self.layout;
        let mut run = Run::new(
            (&layout, self.n),
            self.excl,
            self.epochs.clone(),
            self.opts,
            self.last,
        );
        let mut halt = None;
        let seen = {
            let mut send = |m| self.here(m, path);
            let read = csv_rows(path, rest, line, cfg, &mut head, |p, ln, rec| {
                match p.parse_record(rec, &mut run.readings) {
                    Some(parsed) => run.row(path, ln, parsed, &mut send),
                    None => Ok(()),
                }
            });
            match read {
                Ok(seen) => {
                    run.end(None, &mut send)?;
                    seen
                }
                Err(Halt::Row(e)) => {
                    run.end(Some(e), &mut send)?;
                    true
                }
                Err(Halt::Send(e)) => {
                    halt = Some(e);
                    true
                }
            }
        };
        if let Some(e) = halt {
            return Err(e);
        }
        if !seen {
            self.stats.empty_file(&self.opts, path)?;
        }
        Ok(())
    }

    /// A message of a chunk replayed on this thread (never a redo: it knows
    /// the floor).
    fn here(&mut self, msg: Msg<C>, path: &Path) -> Result<()> {
        match self.handle(msg, path)? {
            Flow::Go | Flow::Done => Ok(()),
            Flow::Redo => Err(anyhow!(
                "{}: internal error: a chunk replayed after its floor started before it",
                path.display()
            )),
        }
    }

    /// Closes the last interval (end of data).
    fn finish(&mut self) -> Result<()> {
        if let Some(mut acc) = self.open.take() {
            self.close(&mut acc)?;
        }
        Ok(())
    }
}

fn run<const C: usize>(
    cfg: &StationFile,
    files: &[PathBuf],
    opts: Options,
    sink: &mut dyn Sink,
) -> Result<(InputStats, PushTotals, Vec<Totals>)> {
    let layout = cfg.layout::<C>()?;
    let epochs = cfg.epochs::<C>()?.map(Arc::new);
    let n = cfg.channels.len();
    let jobs = opts.jobs.max(1);
    let progress = Progress::new(files, &opts);
    let mut joiner = Joiner {
        layout,
        excl: &cfg.exclusions,
        epochs: epochs.clone(),
        opts,
        screener: Screener::new(),
        recovery: [Recovery::new(); C],
        totals: PushTotals::default(),
        open: None,
        last: None,
        join: false,
        out: Out::new(layout, n, sink),
        stats: InputStats::default(),
        n,
    };
    std::thread::scope(|s| -> Result<()> {
        let (order_tx, order_rx) = sync_channel::<Item>(3 * jobs + 2);
        let mut to_workers = Vec::with_capacity(jobs);
        let mut from_workers = Vec::with_capacity(jobs);
        for _ in 0..jobs {
            let (job_tx, job_rx) = sync_channel::<Job>(2);
            let (msg_tx, msg_rx) = sync_channel::<Msg<C>>(WORKER_QUEUE);
            let layout = &layout;
            let excl = &cfg.exclusions;
            let epochs = epochs.clone();
            s.spawn(move || worker((layout, n), excl, epochs, files, opts, job_rx, msg_tx));
            to_workers.push(job_tx);
            from_workers.push(msg_rx);
        }
        s.spawn(move || reader(files, cfg, opts, to_workers, order_tx));

        let stopped = || anyhow!("a replay thread stopped");
        let mut file = 0usize;
        let mut done = 0u64;
        if let Some(first) = files.first() {
            progress.file(first, 0);
        }
        for item in order_rx.iter() {
            match item {
                Item::Chunk {
                    worker,
                    file: f,
                    line,
                    end,
                    bytes,
                    parser,
                } => {
                    let path = &files[f];
                    let rx = &from_workers[worker];
                    loop {
                        let msg = rx.recv().map_err(|_| stopped())?;
                        match joiner.handle(msg, path)? {
                            Flow::Go => {}
                            Flow::Done => break,
                            Flow::Redo => {
                                while !matches!(rx.recv().map_err(|_| stopped())?, Msg::End(_)) {}
                                joiner.redo(&parser, &bytes, line, path)?;
                                break;
                            }
                        }
                    }
                    progress.at(done + end);
                }
                Item::Tail {
                    file: f,
                    line,
                    rest,
                    head,
                } => joiner.tail(cfg, &files[f], rest, line, head)?,
                Item::Empty { file: f } => joiner.stats.empty_file(&opts, &files[f])?,
                Item::FileDone { digest } => {
                    if let Some(d) = digest.and_then(DigestHandle::finish) {
                        joiner.stats.digests.push((files[file].clone(), d));
                    }
                    done += file_len(&files[file]);
                    file += 1;
                    joiner.stats.files += 1;
                    if let Some(next) = files.get(file) {
                        progress.file(next, done);
                    }
                }
                Item::Error(e) => return Err(e),
            }
        }
        Ok(())
    })?;
    progress.finish();
    joiner.finish()?;
    let recovery = joiner.recovery[..n]
        .iter()
        .map(|r| r.since_start())
        .collect();
    Ok((joiner.stats, joiner.totals, recovery))
}

fn worker<const C: usize>(
    (layout, n): (&Layout<C>, usize),
    excl: &Exclusions,
    epochs: Option<Arc<Epochs<C>>>,
    files: &[PathBuf],
    opts: Options,
    jobs: Receiver<Job>,
    out: SyncSender<Msg<C>>,
) {
    let mut send = |m| out.send(m).map_err(|_| anyhow!("closed"));
    for job in jobs {
        let mut parser = (*job.parser).clone();
        let run = Run::new((layout, n), excl, epochs.clone(), opts, None);
        if run
            .chunk(
                &mut parser,
                &job.bytes,
                job.line,
                &files[job.file],
                &mut send,
            )
            .is_err()
        {
            return;
        }
    }
}

/// Reads the files in order into chunks for the workers, and tells the
/// calling thread the order.
fn reader(
    files: &[PathBuf],
    cfg: &StationFile,
    opts: Options,
    workers: Vec<SyncSender<Job>>,
    order: SyncSender<Item>,
) {
    let mut turn = Turn {
        next: 0,
        // One pool for every file: the bound holds across files too.
        pool: Pool::new(chunks_in_flight(workers.len(), opts.chunk_size)),
    };
    for (i, path) in files.iter().enumerate() {
        match read_file(i, path, cfg, &opts, &workers, &order, &mut turn) {
            Ok(digest) => {
                if order.send(Item::FileDone { digest }).is_err() {
                    return;
                }
            }
            Err(e) => {
                // Reading stops at the first problem.
                let _ = order.send(Item::Error(e));
                return;
            }
        }
    }
}

/// Where the reader stands across files: the worker whose turn is next, and
/// the chunks' buffers.
struct Turn {
    next: usize,
    pool: Pool,
}

fn read_file(
    index: usize,
    path: &Path,
    cfg: &StationFile,
    opts: &Options,
    workers: &[SyncSender<Job>],
    order: &SyncSender<Item>,
    turn: &mut Turn,
) -> Result<Option<DigestHandle>> {
    let closed = || anyhow!("closed");
    // The digest on a hash thread of its own, from the chunks themselves
    // (shared, not copied): hashed on this thread, the reading held up the
    // workers on two cores (host-cli/PERF.md, "A sensor history in runs").
    let hash = opts.digests.then_some(HashOn::Helper);
    let mut reader = FileReader::open_hashed(path, cfg, hash)?.with_pool(turn.pool.clone());
    let digest = reader.digest();
    while let Some(piece) = reader.next_piece(opts.chunk_size)? {
        match piece {
            Piece::Tail { line, rest, head } => {
                order
                    .send(Item::Tail {
                        file: index,
                        line,
                        rest,
                        head,
                    })
                    .map_err(|_| closed())?;
                return Ok(digest);
            }
            Piece::Rows {
                line,
                end,
                bytes,
                parser,
            } => {
                let worker = turn.next;
                turn.next = (turn.next + 1) % workers.len();
                workers[worker]
                    .send(Job {
                        file: index,
                        line,
                        bytes: bytes.clone(),
                        parser: Arc::clone(&parser),
                    })
                    .map_err(|_| closed())?;
                order
                    .send(Item::Chunk {
                        worker,
                        file: index,
                        line,
                        end,
                        bytes,
                        parser,
                    })
                    .map_err(|_| closed())?;
            }
        }
    }
    if !reader.saw_header() {
        order
            .send(Item::Empty { file: index })
            .map_err(|_| closed())?;
    }
    Ok(digest)
}
