//! `tenmin._tenmin`: the Python extension module. Thin: every statistic comes
//! from `qc-core`, every file is read and every record written by `host_cli`.
//!
//! # Exact chunk states
//!
//! A chunk of samples becomes a [`State`]: its intervals in time order. The
//! first and the last interval of a chunk may continue in the chunks next to
//! it, so they are kept open as their samples (the core's interval state holds
//! a gust window and a spike chain that its state frames leave out, so the
//! samples are what travels); every interval in between is complete and is
//! kept as its records, finished by the core ([`Layout::finish_all`]) with its
//! own flags only, in the core's record frames ([`wire::encode_record`],
//! 128 bytes a channel). Merging two states of consecutive chunks joins the
//! open interval at the seam when both hold the same one, and finishes every
//! interval that is no longer at an end. Finishing screens every interval in
//! time order with one [`Screener`] (the cross-interval history is
//! sequential, so it runs once, at the end, as `host_cli::parallel` does) and
//! writes the rows of empty intervals between them as the station does.
//!
//! Any split of a time-ordered sample sequence, merged in any tree order,
//! thus gives the one-pass records bit for bit: each complete interval is
//! accumulated from all its samples by one station, and screening sees the
//! same records in the same order. With a sensor history, each sample is
//! classified by the entry in force at its time (`Station::push_with`, the
//! layouts of `host_cli::sensors::Epochs`), as the command's engine does;
//! the station file's own layout finishes every interval.
//!
//! # Frames
//!
//! Frames come in through the Arrow C stream interface
//! (`ArrowArrayStreamReader::from_pyarrow_bound`, arrow's own FFI import:
//! the buffers are shared with pyarrow, not copied) and are read by
//! `host_cli::columnar`, the code that reads Parquet and Arrow samples files
//! for the command: the same types, the same messages.

#![forbid(unsafe_code)]
// pyo3 0.22's `create_exception!` tests a `gil-refs` cfg of its own.
#![allow(unexpected_cfgs)]
// ... and its `#[pyfunction]` expansion converts a `PyErr` into itself.
#![allow(clippy::useless_conversion)]

use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Result};
use arrow::array::RecordBatch;
use arrow::ffi_stream::ArrowArrayStreamReader;
use arrow::pyarrow::FromPyArrow;
use host_cli::columnar;
use host_cli::config::{self, StationFile, MAX_CHANNELS};
use host_cli::engine::{Sink, G};
use host_cli::records::Writer;
use host_cli::samples::Options;
use host_cli::sensors::Epochs;
use pyo3::create_exception;
use pyo3::prelude::*;
use pyo3::types::PyBytes;
use qc_core::wire::{self, ConfigStamp, RecordFrame, FRAME_LEN};
use qc_core::{ChannelRecord, Event, IntervalAcc, Layout, Reading, Screener, Station, Timestamp};

create_exception!(
    _tenmin,
    TenminError,
    pyo3::exceptions::PyException,
    "An error of tenmin: the CLI's message (file, line, field) in args[0], its exit code (2) in args[1]."
);

/// The CLI's exit code for an error.
const EXIT_ERROR: u8 = 2;

fn py_err(e: anyhow::Error) -> PyErr {
    TenminError::new_err((format!("{e:#}"), EXIT_ERROR))
}

/// The station file from a path or from TOML text (named `name` in messages).
fn station(path: Option<&str>, text: Option<&str>) -> Result<StationFile> {
    match (path, text) {
        (Some(p), None) => config::load(Path::new(p)),
        (p, Some(t)) => {
            let mut cfg = config::parse(Path::new(p.unwrap_or("<station TOML>")), t)?;
            // As `config::load`: the exclusions file the station file names.
            if let Some(x) = &cfg.exclusions_file {
                let ids: Vec<&str> = cfg.channels.iter().map(|c| c.id.as_str()).collect();
                cfg.exclusions = host_cli::exclusions::Exclusions::load(x, &ids)?;
            }
            Ok(cfg)
        }
        (None, None) => bail!("no station file given"),
    }
}

fn ids(cfg: &StationFile) -> Vec<String> {
    cfg.channels.iter().map(|c| c.id.clone()).collect()
}

/// Runs `run` with the station file (`station_path` or `station_toml`)
/// without holding the GIL, and hands the bytes it makes to Python: the
/// one setup of the functions returning bytes.
fn bytes_with_station<'py>(
    py: Python<'py>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
    run: impl FnOnce(&StationFile) -> Result<Vec<u8>> + Send,
) -> PyResult<Bound<'py, PyBytes>> {
    let out = py
        .allow_threads(|| run(&station(station_path, station_toml)?))
        .map_err(py_err)?;
    Ok(PyBytes::new_bound(py, &out))
}

/// The replay's options for `replay_files` and `verify_files`: `jobs`
/// threads (at least one), no progress line, the rest as the command's
/// defaults.
fn options(jobs: usize) -> Options {
    Options {
        jobs: jobs.max(1),
        progress: false,
        ..Options::default()
    }
}

/// Replays samples files (any layout the station file declares) as `tenmin
/// replay` does; returns the records CSV.
#[pyfunction]
#[pyo3(signature = (paths, station_path=None, station_toml=None, jobs=1, skip_bad_rows=false, allow_no_records=false))]
fn replay_files<'py>(
    py: Python<'py>,
    paths: Vec<PathBuf>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
    jobs: usize,
    skip_bad_rows: bool,
    allow_no_records: bool,
) -> PyResult<Bound<'py, PyBytes>> {
    bytes_with_station(py, station_path, station_toml, |cfg| {
        let mut w = Writer::new(Vec::new(), ids(cfg))?.with_sensors(cfg.sensors.clone());
        let opts = Options {
            skip_bad_rows,
            allow_no_records,
            ..options(jobs)
        };
        host_cli::replay::replay(cfg, &paths, opts, &mut w)?;
        Ok(w.finish()?)
    })
}

/// An interval open at a chunk's end: its samples, in time order.
#[derive(Clone, Debug)]
struct Piece<const C: usize> {
    index: i64,
    samples: Vec<(i64, [Reading; C])>,
}

/// One interval of a state.
#[derive(Clone, Debug)]
enum Item<const C: usize> {
    /// At an end of the chunk: may continue next door.
    Open(Piece<C>),
    /// Complete: its records with their own flags (not yet screened).
    Done(i64, Box<[ChannelRecord; C]>),
}

/// The exact state of a chunk (or of consecutive chunks merged).
#[derive(Clone, Debug, Default)]
struct State<const C: usize> {
    items: Vec<Item<C>>,
}

/// A station file's layout, and with a sensor history the layout in force
/// at each time (`host_cli::sensors::Epochs`, as the command's engine uses).
struct Ctx<const C: usize> {
    layout: Layout<C>,
    epochs: Option<Epochs<C>>,
}

impl<const C: usize> Ctx<C> {
    fn of(cfg: &StationFile) -> Result<Self> {
        Ok(Ctx {
            layout: cfg.layout::<C>()?,
            epochs: cfg.epochs::<C>()?,
        })
    }
}

/// The records of one complete interval, from all its samples (each
/// classified by the sensor-history entry in force at its time, as `tenmin
/// replay` does), with the flags of its own tests only.
fn finish_piece<const C: usize>(ctx: &Ctx<C>, p: &Piece<C>) -> Result<[ChannelRecord; C]> {
    let layout = &ctx.layout;
    let mut st = Box::new(Station::<C, G>::new(*layout));
    let mut acc: Option<IntervalAcc<C, G>> = None;
    let mut keep = |e: Event<'_, C, G>| {
        if let Event::Closed(a, _) = e {
            acc = Some(*a);
        }
    };
    let mut cursor = 0;
    for (t, r) in &p.samples {
        let ts = Timestamp::from_millis(*t);
        match &ctx.epochs {
            None => {
                st.push(ts, r, &mut keep);
            }
            Some(e) => {
                let entry = e.at(ts, &mut cursor);
                st.push_with(entry, ts, r, &mut keep)
                    .map_err(|e| anyhow!("interval {}: {e:?}", p.index))?;
            }
        }
    }
    st.close(&mut keep);
    let mut acc = acc.ok_or_else(|| anyhow!("interval {}: no samples accepted", p.index))?;
    acc.clear_flags();
    Ok(layout.finish_all(&acc))
}

impl<const C: usize> State<C> {
    fn first_time(&self) -> Option<i64> {
        match self.items.first() {
            Some(Item::Open(p)) => p.samples.first().map(|s| s.0),
            _ => None,
        }
    }

    fn last_time(&self) -> Option<i64> {
        match self.items.last() {
            Some(Item::Open(p)) => p.samples.last().map(|s| s.0),
            _ => None,
        }
    }

    /// Finishes every open interval that is not at an end.
    fn settle(&mut self, ctx: &Ctx<C>) -> Result<()> {
        let n = self.items.len();
        for i in 1..n.saturating_sub(1) {
            if let Item::Open(p) = &self.items[i] {
                let recs = finish_piece(ctx, p)?;
                self.items[i] = Item::Done(p.index, Box::new(recs));
            }
        }
        Ok(())
    }

    /// The state of samples at `times` (ms, strictly increasing).
    fn chunk(ctx: &Ctx<C>, times: &[i64], readings: &[[Reading; C]]) -> Result<Self> {
        let layout = &ctx.layout;
        let mut items: Vec<Item<C>> = Vec::new();
        let mut prev: Option<i64> = None;
        for (k, (&t, r)) in times.iter().zip(readings).enumerate() {
            let ts = Timestamp::from_millis(t);
            if !ts.is_supported() {
                bail!("sample {k}: time {t} ms is outside the supported range (years 0 to 9999)");
            }
            if prev.is_some_and(|p| t <= p) {
                bail!("sample {k}: time {t} ms is not after the sample before it: samples given as arrays must be in strictly increasing time order (the samples-file readers count duplicates and backward times instead)");
            }
            // A jump longer than a replay allows is the replay's error (its
            // words, the frame's line), not a run of empty intervals.
            host_cli::samples::check_jump(
                &Options::default(),
                prev.map(Timestamp::from_millis),
                ts,
                Path::new(FRAME),
                k as u64 + 1,
            )?;
            prev = Some(t);
            let index = layout.interval_of(ts);
            match items.last_mut() {
                Some(Item::Open(p)) if p.index == index => p.samples.push((t, *r)),
                _ => items.push(Item::Open(Piece {
                    index,
                    samples: vec![(t, *r)],
                })),
            }
        }
        let mut s = State { items };
        s.settle(ctx)?;
        Ok(s)
    }

    /// `self` followed by `later`, whose samples all come after.
    fn merge(mut self, ctx: &Ctx<C>, later: Self) -> Result<Self> {
        if let (Some(a), Some(b)) = (self.last_time(), later.first_time()) {
            if b <= a {
                bail!("states out of order: the later state starts at {b} ms, not after the earlier one's last sample at {a} ms");
            }
            let opts = Options::default();
            if b - a > opts.max_gap_ms() {
                bail!(
                    "states: the time jumps forward {:.1} days, from {} (the earlier state's last sample) to {} (the later state's first): more than --max-gap-days {} allows; check the logger clock",
                    (b - a) as f64 / 86_400_000.0,
                    host_cli::timefmt::Rfc3339(Timestamp::from_millis(a)),
                    host_cli::timefmt::Rfc3339(Timestamp::from_millis(b)),
                    opts.max_gap_days
                );
            }
        }
        let mut rest = later.items.into_iter();
        if let Some(first) = rest.next() {
            match (self.items.last_mut(), first) {
                (Some(Item::Open(a)), Item::Open(b)) if a.index == b.index => {
                    a.samples.extend(b.samples)
                }
                (_, first) => self.items.push(first),
            }
        }
        self.items.extend(rest);
        self.settle(ctx)?;
        Ok(self)
    }

    /// Screens every interval in time order and hands the records of the
    /// first `n` channels to `sink`, with rows for empty intervals between.
    fn finish(self, ctx: &Ctx<C>, n: usize, sink: &mut dyn Sink) -> Result<()> {
        let layout = &ctx.layout;
        let mut screener = Screener::<C>::default();
        let mut prev: Option<i64> = None;
        for item in self.items {
            let (index, mut recs) = match item {
                Item::Open(p) => (p.index, finish_piece(ctx, &p)?),
                Item::Done(i, r) => (i, *r),
            };
            if let Some(p) = prev {
                for k in p.saturating_add(1)..index {
                    let acc = IntervalAcc::<C, G>::new(layout, k);
                    let empty = layout.finish_all(&acc);
                    emit(layout, k, &empty[..n], sink)?;
                }
            }
            screener.screen(index, layout.interval_ms(), layout.channels(), &mut recs);
            emit(layout, index, &recs[..n], sink)?;
            prev = Some(index);
        }
        Ok(())
    }

    fn encode(&self, layout: &Layout<C>) -> Vec<u8> {
        let mut out = Vec::new();
        out.extend_from_slice(MAGIC);
        out.push(C as u8);
        out.extend_from_slice(&layout.fingerprint().to_le_bytes());
        out.extend_from_slice(&(self.items.len() as u64).to_le_bytes());
        for item in &self.items {
            match item {
                Item::Open(p) => {
                    out.push(0);
                    out.extend_from_slice(&p.index.to_le_bytes());
                    out.extend_from_slice(&(p.samples.len() as u64).to_le_bytes());
                    for (t, rs) in &p.samples {
                        out.extend_from_slice(&t.to_le_bytes());
                        for r in rs {
                            let (tag, bits) = match *r {
                                Reading::Value(v) => (1u8, v.to_bits()),
                                Reading::Counts(k) => (2, u64::from(k as u32)),
                                Reading::Flagged => (3, 0),
                                Reading::Excluded => (4, 0),
                                _ => (0, 0),
                            };
                            out.push(tag);
                            out.extend_from_slice(&bits.to_le_bytes());
                        }
                    }
                }
                Item::Done(index, recs) => {
                    out.push(1);
                    out.extend_from_slice(&index.to_le_bytes());
                    for (ch, record) in recs.iter().enumerate() {
                        let frame = RecordFrame {
                            sequence: 0,
                            interval_start: layout.interval_start(*index),
                            channel: ch as u8,
                            config: Some(ConfigStamp {
                                channels: C as u8,
                                fingerprint: layout.fingerprint(),
                            }),
                            record: *record,
                        };
                        let mut b = [0u8; FRAME_LEN];
                        wire::encode_record(&frame, &mut b);
                        out.extend_from_slice(&b);
                        // Record frames carry no excluded count (a logger
                        // excludes nothing): it follows each frame.
                        out.extend_from_slice(&record.tally.excluded.to_le_bytes());
                    }
                }
            }
        }
        out
    }

    fn decode(layout: &Layout<C>, bytes: &[u8]) -> Result<Self> {
        let mut r = Bytes(bytes);
        if r.take(MAGIC.len())? != MAGIC {
            bail!("not a tenmin chunk state");
        }
        if usize::from(r.u8()?) != C || r.u32()? != layout.fingerprint() {
            bail!("a chunk state of another station file");
        }
        let count = r.u64()?;
        let mut items = Vec::new();
        for _ in 0..count {
            match r.u8()? {
                0 => {
                    let index = r.i64()?;
                    let n = r.u64()?;
                    let mut samples = Vec::new();
                    for _ in 0..n {
                        let t = r.i64()?;
                        let mut rs = [Reading::Missing; C];
                        for x in &mut rs {
                            let tag = r.u8()?;
                            let bits = r.u64()?;
                            *x = match tag {
                                0 => Reading::Missing,
                                1 => Reading::Value(f64::from_bits(bits)),
                                2 => Reading::Counts(bits as u32 as i32),
                                3 => Reading::Flagged,
                                4 => Reading::Excluded,
                                _ => bail!("chunk state: bad reading tag {tag}"),
                            };
                        }
                        samples.push((t, rs));
                    }
                    items.push(Item::Open(Piece { index, samples }));
                }
                1 => {
                    let index = r.i64()?;
                    let mut recs =
                        Box::new(layout.finish_all(&IntervalAcc::<C, G>::new(layout, index)));
                    for rec in recs.iter_mut() {
                        let b: &[u8; FRAME_LEN] = r.take(FRAME_LEN)?.try_into()?;
                        *rec = wire::decode_record(b)
                            .map_err(|e| anyhow!("chunk state: record frame: {e:?}"))?
                            .record;
                        rec.tally.excluded = r.u32()?;
                    }
                    items.push(Item::Done(index, recs));
                }
                tag => bail!("chunk state: bad item tag {tag}"),
            }
        }
        if !r.0.is_empty() {
            bail!("chunk state: {} bytes after its end", r.0.len());
        }
        let state = State { items };
        state.check(layout)?;
        Ok(state)
    }

    /// What [`State::chunk`] and [`State::merge`] make hold, checked on a
    /// state read from bytes (which may come from anywhere): intervals in
    /// increasing order within the supported years, no more empty intervals
    /// between two than a replay's largest gap allows, and an open
    /// interval's samples in strictly increasing time, each in it.
    fn check(&self, layout: &Layout<C>) -> Result<()> {
        let first = layout.interval_of(Timestamp::MIN);
        let last = layout.interval_of(Timestamp::from_millis(Timestamp::END.millis() - 1));
        let max_gap_ms = Options::default().max_gap_ms();
        let (mut prev, mut prev_t): (Option<i64>, Option<i64>) = (None, None);
        for item in &self.items {
            let index = match item {
                Item::Open(p) => p.index,
                Item::Done(index, _) => *index,
            };
            if !(first..=last).contains(&index) {
                bail!("chunk state: interval {index} is outside the supported years");
            }
            if let Some(p) = prev {
                if index <= p {
                    bail!("chunk state: interval {index} after interval {p}");
                }
                if (index - p - 1).saturating_mul(layout.interval_ms()) > max_gap_ms {
                    bail!("chunk state: {} empty intervals after interval {p}, more than a replay's largest gap (--max-gap-days) allows", index - p - 1);
                }
            }
            prev = Some(index);
            if let Item::Open(p) = item {
                if p.samples.is_empty() {
                    bail!("chunk state: interval {index} open without samples");
                }
                for &(t, _) in &p.samples {
                    let ts = Timestamp::from_millis(t);
                    if !ts.is_supported() || layout.interval_of(ts) != index {
                        bail!("chunk state: a sample at {t} ms in interval {index}, which does not hold it");
                    }
                    if prev_t.is_some_and(|q| t <= q) {
                        bail!(
                            "chunk state: a sample at {t} ms after one at {} ms",
                            prev_t.unwrap_or(t)
                        );
                    }
                    prev_t = Some(t);
                }
            }
        }
        Ok(())
    }
}

const MAGIC: &[u8] = b"TMSTATE2";

/// Reads a state's bytes front to back.
struct Bytes<'a>(&'a [u8]);

impl<'a> Bytes<'a> {
    fn take(&mut self, n: usize) -> Result<&'a [u8]> {
        if self.0.len() < n {
            bail!("chunk state: cut short");
        }
        let (a, b) = self.0.split_at(n);
        self.0 = b;
        Ok(a)
    }
    fn u8(&mut self) -> Result<u8> {
        Ok(self.take(1)?[0])
    }
    fn u32(&mut self) -> Result<u32> {
        Ok(u32::from_le_bytes(self.take(4)?.try_into()?))
    }
    fn u64(&mut self) -> Result<u64> {
        Ok(u64::from_le_bytes(self.take(8)?.try_into()?))
    }
    fn i64(&mut self) -> Result<i64> {
        Ok(i64::from_le_bytes(self.take(8)?.try_into()?))
    }
}

/// The rows of interval `index`.
fn emit<const C: usize>(
    layout: &Layout<C>,
    index: i64,
    records: &[ChannelRecord],
    sink: &mut dyn Sink,
) -> Result<()> {
    let start = layout.interval_start(index);
    let end = layout.interval_start(index.saturating_add(1));
    sink.interval(start, end, records)
}

/// Calls `$f::<C>(args)` with the station size `C` for `$cfg`, as
/// `host_cli::engine` picks it.
macro_rules! by_size {
    ($cfg:expr, $f:ident ( $($a:expr),* )) => {
        match $cfg.channels.len() {
            0 => bail!("{}: no channels", $cfg.path.display()),
            1..=4 => $f::<4>($($a),*),
            5..=8 => $f::<8>($($a),*),
            9..=16 => $f::<16>($($a),*),
            17..=MAX_CHANNELS => $f::<32>($($a),*),
            n => bail!("{n} channels: at most {MAX_CHANNELS} are supported"),
        }
    };
}

/// The batches of a frame handed over through the Arrow C stream interface
/// (`__arrow_c_stream__`: the buffers are shared, not copied), read while
/// holding the GIL (a stream may be a Python generator).
fn batches(data: &Bound<'_, PyAny>) -> PyResult<Vec<RecordBatch>> {
    let reader = ArrowArrayStreamReader::from_pyarrow_bound(data)?;
    reader
        .collect::<Result<Vec<_>, _>>()
        .map_err(|e| TenminError::new_err((format!("frame: {e}"), EXIT_ERROR)))
}

/// The name of frames in messages.
const FRAME: &str = "frame";

fn chunk_c<const C: usize>(cfg: &StationFile, data: &[RecordBatch]) -> Result<Vec<u8>> {
    let ctx = Ctx::<C>::of(cfg)?;
    let mut times: Vec<i64> = Vec::new();
    let mut readings: Vec<[Reading; C]> = Vec::new();
    if let Some(b) = data.first() {
        let (t, chans) = columnar::columns(Path::new(FRAME), &b.schema(), cfg)?;
        columnar::for_each_row(Path::new(FRAME), data, (t, &chans), cfg, |t, rs| {
            let mut r = [Reading::Missing; C];
            r[..rs.len()].copy_from_slice(rs);
            // Readings the station file's exclusions cover, as `tenmin replay` marks them.
            cfg.exclusions.apply(t, &mut r[..rs.len()]);
            times.push(t.millis());
            readings.push(r);
            Ok(())
        })?;
    }
    Ok(State::<C>::chunk(&ctx, &times, &readings)?.encode(&ctx.layout))
}

/// The rows a samples file gives, read as `tenmin replay` reads them (any
/// layout the station file declares, exclusions marked, bad rows and long
/// jumps the replay's errors), kept in order for [`State::chunk`].
struct Rows<const C: usize> {
    times: Vec<i64>,
    readings: Vec<[Reading; C]>,
}

impl<const C: usize> host_cli::engine::Engine for Rows<C> {
    fn push(&mut self, t: Timestamp, readings: &[Reading]) -> Result<qc_core::Pushed> {
        let mut r = [Reading::Missing; C];
        r[..readings.len()].copy_from_slice(readings);
        self.times.push(t.millis());
        self.readings.push(r);
        Ok(qc_core::Pushed::Accepted)
    }
    fn close(&mut self) -> Result<()> {
        Ok(())
    }
    fn totals(&self) -> qc_core::PushTotals {
        qc_core::PushTotals::default()
    }
    fn recovery(&self) -> Vec<qc_core::Totals> {
        Vec::new()
    }
}

fn file_c<const C: usize>(cfg: &StationFile, path: &Path) -> Result<Vec<u8>> {
    let ctx = Ctx::<C>::of(cfg)?;
    let mut rows = Rows::<C> {
        times: Vec::new(),
        readings: Vec::new(),
    };
    columnar::feed_any(&[path.to_path_buf()], cfg, options(1), &mut rows)?;
    let state = State::<C>::chunk(&ctx, &rows.times, &rows.readings)
        .map_err(|e| anyhow!("{}: {e}", path.display()))?;
    Ok(state.encode(&ctx.layout))
}

fn merge_c<const C: usize>(cfg: &StationFile, states: &[Vec<u8>]) -> Result<Vec<u8>> {
    let ctx = Ctx::<C>::of(cfg)?;
    let mut acc = State::<C>::default();
    for s in states {
        acc = acc.merge(&ctx, State::decode(&ctx.layout, s)?)?;
    }
    Ok(acc.encode(&ctx.layout))
}

fn finish_c<const C: usize>(cfg: &StationFile, state: &[u8]) -> Result<Vec<u8>> {
    let ctx = Ctx::<C>::of(cfg)?;
    let s = State::<C>::decode(&ctx.layout, state)?;
    let mut w = Writer::new(Vec::new(), ids(cfg))?.with_sensors(cfg.sensors.clone());
    s.finish(&ctx, cfg.channels.len(), &mut w)?;
    Ok(w.finish()?)
}

/// The exact state of a chunk of samples: a frame with a column `time` and
/// one per channel id (any object with `__arrow_c_stream__`), rows in
/// strictly increasing time.
#[pyfunction]
#[pyo3(signature = (data, station_path=None, station_toml=None))]
fn chunk_state<'py>(
    py: Python<'py>,
    data: &Bound<'py, PyAny>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
) -> PyResult<Bound<'py, PyBytes>> {
    let data = batches(data)?;
    bytes_with_station(py, station_path, station_toml, |cfg| {
        by_size!(cfg, chunk_c(cfg, &data))
    })
}

/// The exact state of a samples file (any layout the station file
/// declares), read by the command's own readers: as [`chunk_state`] of its
/// rows, which must be in strictly increasing time.
#[pyfunction]
#[pyo3(signature = (path, station_path=None, station_toml=None))]
fn file_state<'py>(
    py: Python<'py>,
    path: PathBuf,
    station_path: Option<&str>,
    station_toml: Option<&str>,
) -> PyResult<Bound<'py, PyBytes>> {
    bytes_with_station(py, station_path, station_toml, |cfg| {
        by_size!(cfg, file_c(cfg, &path))
    })
}

/// Replays a frame (as [`chunk_state`] takes it) in one pass through the
/// command's engine, as `tenmin replay` replays a Parquet file; returns the
/// records CSV.
#[pyfunction]
#[pyo3(signature = (data, station_path=None, station_toml=None))]
fn replay_frame<'py>(
    py: Python<'py>,
    data: &Bound<'py, PyAny>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
) -> PyResult<Bound<'py, PyBytes>> {
    let data = batches(data)?;
    bytes_with_station(py, station_path, station_toml, |cfg| {
        let mut w = Writer::new(Vec::new(), ids(cfg))?.with_sensors(cfg.sensors.clone());
        let mut engine = host_cli::engine::new(cfg, &mut w)?;
        let opts = Options::default();
        columnar::feed_batches(Path::new(FRAME), &data, cfg, opts, engine.as_mut(), true)?;
        drop(engine);
        Ok(w.finish()?)
    })
}

/// The report's tables from records files, as `tenmin report` writes them:
/// (name, CSV text) in the report's order.
#[pyfunction]
#[pyo3(signature = (records, station_path=None, station_toml=None, sectors=16, air_density=1.225, reference=None))]
fn report_tables(
    py: Python<'_>,
    records: Vec<PathBuf>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
    sectors: u16,
    air_density: f64,
    reference: Option<String>,
) -> PyResult<Vec<(String, String)>> {
    let run = || -> Result<Vec<(String, String)>> {
        let cfg = station(station_path, station_toml)?;
        if ![8, 12, 16, 36].contains(&sectors) {
            bail!("sectors={sectors}: sectors must be 8, 12, 16 or 36");
        }
        if !(air_density.is_finite() && (0.5..=2.0).contains(&air_density)) {
            bail!("air_density={air_density}: air density must be a number of kg/m^3 between 0.5 and 2.0");
        }
        let a = host_cli::report::ReportArgs {
            config: cfg.path.clone(),
            records,
            output: PathBuf::new(),
            sectors,
            air_density,
            reference,
        };
        Ok(host_cli::report::table_texts(&cfg, &a)?
            .into_iter()
            .map(|(n, t)| (n.to_string(), t))
            .collect())
    };
    py.allow_threads(run).map_err(py_err)
}

/// The states of consecutive chunks, in time order, merged exactly into one.
#[pyfunction]
#[pyo3(signature = (states, station_path=None, station_toml=None))]
fn merge_states<'py>(
    py: Python<'py>,
    states: Vec<Vec<u8>>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
) -> PyResult<Bound<'py, PyBytes>> {
    bytes_with_station(py, station_path, station_toml, |cfg| {
        by_size!(cfg, merge_c(cfg, &states))
    })
}

/// The records CSV of a state holding all the samples.
#[pyfunction]
#[pyo3(signature = (state, station_path=None, station_toml=None))]
fn finish_state<'py>(
    py: Python<'py>,
    state: Vec<u8>,
    station_path: Option<&str>,
    station_toml: Option<&str>,
) -> PyResult<Bound<'py, PyBytes>> {
    bytes_with_station(py, station_path, station_toml, |cfg| {
        by_size!(cfg, finish_c(cfg, &state))
    })
}

/// One difference of `verify`: start, channel, kind, column, replay value,
/// logger value, ULPs apart, and the CLI's line for it.
type Diff = (
    String,
    String,
    &'static str,
    Option<String>,
    Option<String>,
    Option<String>,
    Option<u64>,
    String,
);

/// Replays `paths` and compares with the logger's records file, as `tenmin
/// verify` does: (differences in all, rows compared, replay rows, the first
/// `max_diffs` differences).
#[pyfunction]
#[pyo3(signature = (paths, records, station_path=None, station_toml=None, jobs=1, max_diffs=1000))]
fn verify_files(
    py: Python<'_>,
    paths: Vec<PathBuf>,
    records: PathBuf,
    station_path: Option<&str>,
    station_toml: Option<&str>,
    jobs: usize,
    max_diffs: usize,
) -> PyResult<(u64, u64, u64, Vec<Diff>)> {
    use host_cli::verify::{Comparer, What};
    let run = || -> Result<(u64, u64, u64, Vec<Diff>)> {
        let cfg = station(station_path, station_toml)?;
        let mut cfg = cfg;
        // A logger's records: a logger knows no exclusions (as `tenmin verify`).
        cfg.exclusions = Default::default();
        let mut cmp = Comparer::open(&records, cfg.station, ids(&cfg), max_diffs)?
            .with_sensors(cfg.sensors.clone());
        host_cli::replay::replay(&cfg, &paths, options(jobs), &mut cmp)?;
        let r = cmp.finish()?;
        let shown = r
            .shown
            .iter()
            .map(|d| {
                let line = d.to_string();
                let (kind, column, replay, logger, ulps) = match &d.what {
                    What::Field {
                        column,
                        replay,
                        logger,
                        ulps,
                    } => (
                        "field",
                        Some(column.to_string()),
                        Some(replay.clone()),
                        Some(logger.clone()),
                        *ulps,
                    ),
                    What::MissingRow => ("missing_row", None, None, None, None),
                    What::ExtraRow(_) => ("extra_row", None, None, None, None),
                    What::Column { name, .. } => ("column", Some(name.clone()), None, None, None),
                };
                (
                    d.start.clone(),
                    d.channel.clone(),
                    kind,
                    column,
                    replay,
                    logger,
                    ulps,
                    line,
                )
            })
            .collect();
        Ok((r.total, r.rows_compared, r.replay_rows, shown))
    };
    py.allow_threads(run).map_err(py_err)
}

/// Channel ids of a station file, in file order.
#[pyfunction]
#[pyo3(signature = (station_path=None, station_toml=None))]
fn channel_ids(station_path: Option<&str>, station_toml: Option<&str>) -> PyResult<Vec<String>> {
    let cfg = station(station_path, station_toml).map_err(py_err)?;
    Ok(ids(&cfg))
}

/// The module.
#[pymodule]
fn _tenmin(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("TenminError", m.py().get_type_bound::<TenminError>())?;
    m.add_function(wrap_pyfunction!(replay_files, m)?)?;
    m.add_function(wrap_pyfunction!(chunk_state, m)?)?;
    m.add_function(wrap_pyfunction!(file_state, m)?)?;
    m.add_function(wrap_pyfunction!(replay_frame, m)?)?;
    m.add_function(wrap_pyfunction!(report_tables, m)?)?;
    m.add_function(wrap_pyfunction!(merge_states, m)?)?;
    m.add_function(wrap_pyfunction!(finish_state, m)?)?;
    m.add_function(wrap_pyfunction!(channel_ids, m)?)?;
    m.add_function(wrap_pyfunction!(verify_files, m)?)?;
    Ok(())
}
