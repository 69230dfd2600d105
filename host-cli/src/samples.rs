//! Samples CSV: reading field files into core readings and pushing them.
//!
//! Header `time,<channel ids...>`, columns in any order, every channel of the
//! station file exactly once. Times are RFC 3339 or epoch seconds
//! ([`crate::timefmt::parse_time`]); a missing reading is an empty field, `NaN`,
//! or one of the station's missing-value codes (the core counts the last two).
//! Several files replay as one record, in the order given.
//!
//! The hot path reads each file in large pieces that end at a record
//! terminator ([`crate::reader::FileReader`], shared with the parallel
//! replay), splits records at `\n`/`\r` and fields at `,`
//! ([`Records`]), and parses times and numbers from bytes ([`Parser`]) with
//! exact fast paths: nothing is allocated per row unless the row is bad. The
//! splitting is the CSV dialect of the `csv` crate's defaults for text without
//! quotes (blank lines skipped; `\r`, `\n` and `\r\n` end a record); from the
//! first block holding a `"` on, the rest of that file is read by the `csv`
//! crate itself, so quoted fields keep working.

use std::fmt;
use std::io::{self, IsTerminal, Read};
use std::path::{Path, PathBuf};
use std::sync::Arc;

use anyhow::{anyhow, bail, Result};
use csv::ByteRecord;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use qc_core::{Pushed, Reading, Timestamp};

use crate::config::{Decode, StationFile};
use crate::engine::Engine;
use crate::exclusions::Exclusions;
use crate::limits;
use crate::localtime::{Memo, Quick, TimeProblem, ZoneCache};
use crate::provenance::{DigestHandle, FileDigest, HashOn};
use crate::reader::{FileReader, Head, Piece};
use crate::table::{Column, Delimiter, Table};
use crate::timefmt::{parse_time, Rfc3339, TimeError};
use crate::units::Convert;

/// Default `--max-gap-days`.
pub const DEFAULT_MAX_GAP_DAYS: u32 = 366;

/// Default bytes per chunk of parallel replay.
pub const DEFAULT_CHUNK_SIZE: usize = 1 << 20;

/// Bytes per piece of the sequential replay.
const BLOCK: usize = 256 << 10;

/// How to read samples.
#[derive(Clone, Copy, Debug)]
pub struct Options {
    /// Count bad rows and go on instead of stopping at the first.
    pub skip_bad_rows: bool,
    /// Show a progress bar on stderr (only when it is a terminal and the input is large).
    pub progress: bool,
    /// Worker threads; 1 replays on the calling thread alone (the files
    /// read ahead on a helper).
    pub jobs: usize,
    /// Bytes of samples per chunk handed to a worker (parallel replay).
    pub chunk_size: usize,
    /// A forward time jump between consecutive accepted samples larger than
    /// this many days is an error.
    pub max_gap_days: u32,
    /// Data rows that give no records (every one bad and skipped) are not an
    /// error.
    pub allow_no_records: bool,
    /// Compute each samples file's SHA-256 from the bytes read, for the
    /// provenance file ([`InputStats::digests`]).
    pub digests: bool,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            skip_bad_rows: false,
            progress: false,
            jobs: 1,
            chunk_size: DEFAULT_CHUNK_SIZE,
            max_gap_days: DEFAULT_MAX_GAP_DAYS,
            allow_no_records: false,
            digests: false,
        }
    }
}

impl Options {
    /// `max_gap_days` in milliseconds.
    pub fn max_gap_ms(&self) -> i64 {
        i64::from(self.max_gap_days) * 86_400_000
    }
}

/// Why a row was bad.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BadKind {
    /// Too few or too many fields (a truncated line, a stray comma).
    FieldCount,
    /// The time field could not be read.
    Time,
    /// A reading could not be read as a number (or integer counts).
    Value,
    /// A field is not valid UTF-8.
    Encoding,
    /// Not bad: a row of another station, left out by `[input] filter`.
    Filtered,
}

/// Bad rows by kind.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct BadCounts {
    /// Wrong number of fields.
    pub field_count: u64,
    /// Unreadable time.
    pub time: u64,
    /// Unreadable reading.
    pub value: u64,
    /// Not UTF-8.
    pub encoding: u64,
    /// Rows of other stations left out by `[input] filter` (not bad, counted
    /// here so that every row is accounted for).
    pub filtered: u64,
}

impl BadCounts {
    /// All bad rows (rows of other stations are not bad).
    pub fn total(&self) -> u64 {
        self.field_count + self.time + self.value + self.encoding
    }

    fn add(&mut self, k: BadKind) {
        match k {
            BadKind::FieldCount => self.field_count += 1,
            BadKind::Time => self.time += 1,
            BadKind::Value => self.value += 1,
            BadKind::Encoding => self.encoding += 1,
            BadKind::Filtered => self.filtered += 1,
        }
    }

    fn merge(&mut self, o: &BadCounts) {
        self.field_count += o.field_count;
        self.time += o.time;
        self.value += o.value;
        self.encoding += o.encoding;
        self.filtered += o.filtered;
    }
}

/// What was read from the samples files.
#[derive(Clone, Debug, Default)]
pub struct InputStats {
    /// Files read.
    pub files: usize,
    /// Data rows read (headers not counted).
    pub rows: u64,
    /// Bad rows skipped (only with `--skip-bad-rows`).
    pub bad: BadCounts,
    /// The first few bad-row messages.
    pub examples: Vec<String>,
    /// Empty files skipped (only with `--skip-bad-rows`).
    pub empty_files: Vec<PathBuf>,
    /// With [`Options::digests`]: each file's SHA-256 and size, of the bytes
    /// read as stored (a file read in part has none).
    pub digests: Vec<(PathBuf, FileDigest)>,
}

impl InputStats {
    /// Adds the rows, bad rows and examples of `later`, read after these.
    pub fn merge_rows(&mut self, later: InputStats) {
        self.rows += later.rows;
        self.bad.merge(&later.bad);
        for e in later.examples {
            if self.examples.len() < EXAMPLES {
                self.examples.push(e);
            }
        }
    }

    /// Counts a bad row at `path:line`: an error without `--skip-bad-rows`.
    pub fn bad_row(&mut self, opts: &Options, path: &Path, line: u64, bad: BadRow) -> Result<()> {
        if bad.0.kind == BadKind::Filtered {
            self.bad.add(BadKind::Filtered);
            return Ok(());
        }
        if !opts.skip_bad_rows {
            bail!("{}:{line}: {bad}", path.display());
        }
        self.bad.add(bad.0.kind);
        if self.examples.len() < EXAMPLES {
            self.examples
                .push(format!("{}:{line}: {bad}", path.display()));
        }
        Ok(())
    }

    /// An empty file: skipped with `--skip-bad-rows`, else an error.
    pub fn empty_file(&mut self, opts: &Options, path: &Path) -> Result<()> {
        if opts.skip_bad_rows {
            self.empty_files.push(path.to_path_buf());
            return Ok(());
        }
        bail!(
            "{}:1: empty file: expected a header line `time,<channel ids>`",
            path.display()
        );
    }
}

/// How many bad-row messages to keep for the summary.
pub const EXAMPLES: usize = 5;

/// A row that could not be read, and why (boxed: rows are read in a hot loop
/// that should move only a small `Result`).
#[derive(Debug)]
pub struct BadRow(Box<Bad>);

#[derive(Debug)]
struct Bad {
    kind: BadKind,
    /// Column index (0-based) and its name.
    column: Option<(usize, String)>,
    msg: String,
}

impl BadRow {
    /// A row of another station ([`BadKind::Filtered`]).
    pub fn other_station() -> BadRow {
        BadRow::new(BadKind::Filtered, None, String::new())
    }

    /// Whether it is a row of another station, not a bad row: it touches
    /// nothing but the counts ([`InputStats::bad_row`]).
    pub fn is_other_station(&self) -> bool {
        self.0.kind == BadKind::Filtered
    }

    /// Whether the time could not be read.
    pub fn is_time(&self) -> bool {
        self.0.kind == BadKind::Time
    }

    #[cold]
    fn new(kind: BadKind, column: Option<(usize, String)>, msg: String) -> Self {
        BadRow(Box::new(Bad { kind, column, msg }))
    }
}

impl fmt::Display for BadRow {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let BadRow(b) = self;
        if let Some((i, name)) = &b.column {
            write!(f, "field {} ({name}): ", i + 1)?;
        }
        f.write_str(&b.msg)
    }
}

/// `Some($body)` with the constant `$N` set to `$n`, for 1 to 12 (the widths
/// of [`Parser::parse_straight`]), `None` for any other `$n`.
macro_rules! by_width {
    ($n:expr, $N:ident => $body:expr) => {
        by_width!(@ $n, $N, $body, 1 2 3 4 5 6 7 8 9 10 11 12)
    };
    (@ $n:expr, $N:ident, $body:expr, $($k:literal)*) => {
        match $n {
            $($k => {
                const $N: usize = $k;
                Some($body)
            })*
            _ => None,
        }
    };
}

/// What each column of a file holds.
#[derive(Clone, Copy, Debug)]
pub enum Col {
    /// The time.
    Time,
    /// Channel `.0` in station-file order, read as values.
    Value(usize),
    /// Channel `.0` in station-file order, read as integer counts.
    Counts(usize),
}

/// An error unless the forward jump from `last` (the last accepted sample) to
/// `t` is at most `opts.max_gap_days`. Times the core rejects (unsupported
/// years, not after `last`) are never an error here.
pub fn check_jump(
    opts: &Options,
    last: Option<Timestamp>,
    t: Timestamp,
    path: &Path,
    line: u64,
) -> Result<()> {
    let Some(last) = last else { return Ok(()) };
    let dt = t.millis().saturating_sub(last.millis());
    if t.is_supported() && dt > opts.max_gap_ms() {
        bail!(
            "{}:{line}: the time jumps forward {:.1} days, from {} (the last accepted sample) to {}: \
             more than --max-gap-days {} allows; check the logger clock, or raise --max-gap-days",
            path.display(),
            dt as f64 / 86_400_000.0,
            Rfc3339(last),
            Rfc3339(t),
            opts.max_gap_days
        );
    }
    Ok(())
}

/// Reads `files` in order and pushes every good row into `engine`, on the
/// calling thread.
pub fn feed(
    files: &[PathBuf],
    cfg: &StationFile,
    opts: Options,
    engine: &mut dyn Engine,
) -> Result<InputStats> {
    let progress = Progress::new(files, &opts);
    let mut seq = Sequential {
        cfg,
        opts,
        engine,
        stats: InputStats::default(),
        readings: vec![Reading::Missing; cfg.channels.len()],
        commas: Vec::with_capacity(64),
        last: None,
        block: Block::new(cfg.channels.len()),
    };
    let mut done_bytes = 0u64;
    for path in files {
        progress.file(path, done_bytes);
        seq.file(path, &progress, done_bytes)?;
        done_bytes += file_len(path);
        seq.stats.files += 1;
    }
    progress.finish();
    seq.engine.close()?;
    Ok(seq.stats)
}

/// The size of `path` in bytes (0 if unknown).
pub fn file_len(path: &Path) -> u64 {
    std::fs::metadata(path).map(|m| m.len()).unwrap_or(0)
}

/// The progress bar on stderr: only on a terminal and for inputs over 8 MiB.
pub struct Progress(Option<ProgressBar>);

impl Progress {
    /// A bar for `files`, or none.
    pub fn new(files: &[PathBuf], opts: &Options) -> Self {
        let total_bytes: u64 = files.iter().map(|p| file_len(p)).sum();
        if !(opts.progress && io::stderr().is_terminal() && total_bytes > 8 << 20) {
            return Progress(None);
        }
        let bar = ProgressBar::with_draw_target(Some(total_bytes), ProgressDrawTarget::stderr());
        if let Ok(style) =
            ProgressStyle::with_template("{bar:40} {bytes}/{total_bytes} ({eta} left) {msg}")
        {
            bar.set_style(style);
        }
        Progress(Some(bar))
    }

    /// Starting `path`, after `done` bytes.
    pub fn file(&self, path: &Path, done: u64) {
        if let Some(bar) = &self.0 {
            bar.set_message(path.display().to_string());
            bar.set_position(done);
        }
    }

    /// `done` bytes read.
    pub fn at(&self, done: u64) {
        if let Some(bar) = &self.0 {
            bar.set_position(done);
        }
    }

    /// Removes the bar.
    pub fn finish(&self) {
        if let Some(bar) = &self.0 {
            bar.finish_and_clear();
        }
    }
}

/// The sequential replay: every row into one engine.
struct Sequential<'a> {
    cfg: &'a StationFile,
    opts: Options,
    engine: &'a mut dyn Engine,
    stats: InputStats,
    readings: Vec<Reading>,
    /// Comma offsets of the current record.
    commas: Vec<u32>,
    /// The last accepted sample time.
    last: Option<Timestamp>,
    /// Good rows read but not pushed yet.
    block: Block,
}

/// Rows per block of the block path ([`Block`]).
pub const BLOCK_ROWS: usize = 128;

/// Good rows read but not pushed yet, by channel column, so that runs of
/// them go into the core channel by channel ([`qc_core::Station::push_run`]).
/// Rows are added as read, one after the other ([`Block::add`]), and moved
/// into the columns at once ([`Block::columns`]) before they are pushed.
#[derive(Debug)]
pub struct Block {
    /// Each row's time and line.
    pub times: Vec<Timestamp>,
    pub lines: Vec<u64>,
    /// Per channel (station-file order), one reading per row, filled only
    /// by [`Block::columns`]: every reader must call it before it reads
    /// these (or [`Block::row`]).
    pub cols: Vec<Vec<Reading>>,
    /// Room for the readings of [`BLOCK_ROWS`] rows, row after row, one per
    /// channel: the first `filled` rows are those added since
    /// [`Block::columns`]; the rest hold readings of earlier rows, written
    /// over in place ([`Block::slot`]).
    rows: Vec<Reading>,
    filled: usize,
}

impl Block {
    /// An empty block for `n` channels.
    pub fn new(n: usize) -> Self {
        Block {
            times: Vec::with_capacity(BLOCK_ROWS),
            lines: Vec::with_capacity(BLOCK_ROWS),
            cols: (0..n).map(|_| Vec::with_capacity(BLOCK_ROWS)).collect(),
            rows: vec![Reading::Missing; n * BLOCK_ROWS],
            filled: 0,
        }
    }

    /// The next row's readings, one per channel, to be written in place and
    /// added with [`Block::commit`]: a reader that writes every channel of a
    /// row (tenmin's own CSV) reads it straight into the block. Until then
    /// it holds an earlier row's readings.
    #[inline(always)]
    pub fn slot(&mut self) -> &mut [Reading] {
        let n = self.cols.len();
        let at = self.filled * n;
        if self.rows.len() < at + n {
            // More rows than [`BLOCK_ROWS`] before a flush.
            self.rows.resize(at + n, Reading::Missing);
        }
        &mut self.rows[at..at + n]
    }

    /// Adds the row written into [`Block::slot`], with its time and line.
    #[inline(always)]
    pub fn commit(&mut self, t: Timestamp, line: u64) {
        self.times.push(t);
        self.lines.push(line);
        self.filled += 1;
    }

    /// Reads plain rows from `recs` straight into the block
    /// ([`Records::next_plain`], exclusions applied; for a parser that
    /// [`Parser::fills_rows`]) until it is full, the records end or a row is
    /// not plain, which is left in `recs` for [`Records::next_odd_row`]. A
    /// straight file's rows go by [`Block::fill_straight`], and a row that
    /// loop leaves by the column plan ([`Parser::parse_planned`]; after two
    /// such rows running, the rest of the block). A row of another station
    /// (`[input] filter`) is passed over and counted in `bad.filtered`.
    /// Returns the rows read: those added and other stations'. Out of line,
    /// with the row loop's state in locals: the replay's usual loop, shared
    /// by `--jobs 1` and the workers of `--jobs 2`.
    #[inline(never)]
    pub fn fill(
        &mut self,
        recs: &mut Records<'_>,
        parser: &mut Parser,
        excl: &Exclusions,
        bad: &mut BadCounts,
    ) -> u64 {
        let mut added = 0;
        if let Some(counts) = parser.straight {
            loop {
                let p = &*parser;
                let Some(n) =
                    by_width!(p.channels(), N => self.fill_straight::<N>(recs, p, excl, counts))
                else {
                    break;
                };
                added += n;
                if self.is_full() {
                    return added;
                }
                // The row the straight loop left (a `NaN`, say), by the
                // column plan; any other row is the caller's. (The own CSV
                // has no filter: no row of another station comes here.)
                let slot = self.slot();
                let Some(Plain::Row(line, t)) = recs.next_plain_by(parser, slot, false) else {
                    return added;
                };
                excl.apply(t, slot);
                self.commit(t, line);
                added += 1;
                if n == 0 {
                    // Two rows running that the straight loop left (a
                    // channel that reads `NaN` for weeks): the rest of the
                    // block by the column plan.
                    break;
                }
            }
        }
        let mut other = 0;
        while !self.is_full() {
            let slot = self.slot();
            match recs.next_plain_by(parser, slot, false) {
                Some(Plain::Row(line, t)) => {
                    excl.apply(t, slot);
                    self.commit(t, line);
                    added += 1;
                }
                Some(Plain::Other(_)) => other += 1,
                Some(Plain::Odd) | None => break,
            }
        }
        bad.filtered += other;
        added + other
    }

    /// [`Block::fill`] for a straight file of `N` channels
    /// ([`Parser::parse_straight`]): each width its own loop, the row's parse
    /// inlined.
    fn fill_straight<const N: usize>(
        &mut self,
        recs: &mut Records<'_>,
        parser: &Parser,
        excl: &Exclusions,
        counts: u64,
    ) -> u64 {
        let mut added = 0;
        while !self.is_full() {
            let Some(i) = recs.skip_blank() else {
                break;
            };
            let Some(slot) = self.slot().first_chunk_mut::<N>() else {
                break;
            };
            let Some((t, end)) = parser.parse_straight::<N>(recs.buf, i, slot, counts) else {
                recs.pos = i;
                break;
            };
            let line = recs.end_row(end);
            excl.apply(t, slot);
            self.commit(t, line);
            added += 1;
        }
        added
    }

    /// Adds a row: its time, line and one reading per channel (missing ones
    /// where `readings` is shorter).
    #[inline(always)]
    pub fn add(&mut self, t: Timestamp, line: u64, readings: &[Reading]) {
        let slot = self.slot();
        match readings.get(..slot.len()) {
            Some(r) => slot.copy_from_slice(r),
            None => {
                let (given, rest) = slot.split_at_mut(readings.len());
                given.copy_from_slice(readings);
                rest.fill(Reading::Missing);
            }
        }
        self.commit(t, line);
    }

    /// Moves the rows added into the columns (each column's readings in one
    /// pass over the rows).
    pub fn columns(&mut self) {
        let added = self.filled * self.cols.len();
        if added > 0 {
            transpose(&self.rows[..added], &mut self.cols);
        }
        self.filled = 0;
    }

    /// Whether it holds [`BLOCK_ROWS`] rows.
    #[inline]
    pub fn is_full(&self) -> bool {
        self.times.len() >= BLOCK_ROWS
    }

    /// Row `i`'s readings into `readings`.
    pub fn row(&self, i: usize, readings: &mut [Reading]) {
        for (r, col) in readings.iter_mut().zip(&self.cols) {
            if let Some(x) = col.get(i) {
                *r = *x;
            }
        }
    }

    /// Pushes its rows into `engine` and empties it: runs of steady rows
    /// channel by channel ([`Engine::push_run`]), the others one by one
    /// ([`Engine::push`], after [`check_jump`]), as pushing each row alone
    /// would. `last` is the last accepted sample time, kept up to date;
    /// `readings` is a row's scratch space (one per channel). Every reader
    /// of blocks (text, sequential; Parquet and Arrow) flushes through here.
    pub fn push_into(
        &mut self,
        engine: &mut dyn Engine,
        last: &mut Option<Timestamp>,
        readings: &mut [Reading],
        opts: &Options,
        path: &Path,
    ) -> Result<()> {
        self.columns();
        let n = self.times.len();
        let max_gap = opts.max_gap_ms();
        let mut i = 0;
        while i < n {
            let m = steady_prefix(&self.times[i..], *last, max_gap);
            if m > 0 {
                let k = engine.push_run(&self.times[i..i + m], &self.cols, i);
                if k > 0 {
                    *last = Some(self.times[i + k - 1]);
                    i += k;
                    continue;
                }
            }
            let (t, line) = (self.times[i], self.lines[i]);
            self.row(i, readings);
            check_jump(opts, *last, t, path, line)?;
            if engine.push(t, readings)? == Pushed::Accepted {
                *last = Some(t);
            }
            i += 1;
        }
        self.clear();
        Ok(())
    }

    /// Empties it.
    pub fn clear(&mut self) {
        self.times.clear();
        self.lines.clear();
        self.filled = 0;
        for col in &mut self.cols {
            col.clear();
        }
    }
}

/// Appends the readings of `rows` (row after row, `cols.len()` a row; a
/// last partial row is left out) to `cols`, column by column. For 1 to 16
/// channels the row width is a constant of the loop ([`transpose_n`]), so
/// that each column is a plain strided copy without bounds tests.
pub fn transpose(rows: &[Reading], cols: &mut [Vec<Reading>]) {
    macro_rules! widths {
        ($($n:literal)*) => {
            match cols.len() {
                0 => {}
                $($n => transpose_n::<$n>(rows, cols),)*
                n => {
                    for (c, col) in cols.iter_mut().enumerate() {
                        col.extend(rows.chunks_exact(n).map(|r| r[c]));
                    }
                }
            }
        };
    }
    widths!(1 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16);
}

/// [`transpose`] for `N` columns.
#[inline]
fn transpose_n<const N: usize>(rows: &[Reading], cols: &mut [Vec<Reading>]) {
    // Chunks of a constant length: the index needs no test at run time.
    let rows = rows.chunks_exact(N);
    for (c, col) in cols.iter_mut().take(N).enumerate() {
        col.extend(rows.clone().map(|r| r[c]));
    }
}

/// How many of `times` (from the start) would each be accepted after `last`
/// and the one before, without a jump over `max_gap_ms`: those may go into
/// the core as a run with no check of their own ([`check_jump`] passes each).
pub fn steady_prefix(times: &[Timestamp], last: Option<Timestamp>, max_gap_ms: i64) -> usize {
    let Some(last) = last else { return 0 };
    let mut prev = last.millis();
    let mut n = 0;
    for t in times {
        let ms = t.millis();
        if ms <= prev || ms - prev > max_gap_ms {
            break;
        }
        prev = ms;
        n += 1;
    }
    n
}

impl Sequential<'_> {
    fn file(&mut self, path: &Path, progress: &Progress, done_bytes: u64) -> Result<()> {
        // The file read (and decompressed) on a read-ahead thread and hashed
        // on a helper fed by it: this thread only replays.
        let hash = self.opts.digests.then_some(HashOn::Helper);
        let mut reader = FileReader::open_hashed(path, self.cfg, hash)?.read_ahead();
        let digest = reader.digest();
        self.pieces(&mut reader, path, progress, done_bytes)?;
        drop(reader);
        if let Some(d) = digest.and_then(DigestHandle::finish) {
            self.stats.digests.push((path.to_path_buf(), d));
        }
        Ok(())
    }

    fn pieces(
        &mut self,
        reader: &mut FileReader<'_>,
        path: &Path,
        progress: &Progress,
        done_bytes: u64,
    ) -> Result<()> {
        let mut parser: Option<Parser> = None;
        while let Some(piece) = reader.next_piece(BLOCK)? {
            match piece {
                Piece::Rows {
                    line,
                    end,
                    bytes,
                    parser: header,
                } => {
                    let p = parser.get_or_insert_with(|| (*header).clone());
                    // Plain rows are read straight into the block; any
                    // other row comes here one by one.
                    let fills = p.fills_rows();
                    let mut recs = Records::new(&bytes, line);
                    loop {
                        let next = if fills {
                            let (excl, bad) = (&self.cfg.exclusions, &mut self.stats.bad);
                            self.stats.rows += self.block.fill(&mut recs, p, excl, bad);
                            if self.block.is_full() {
                                self.flush(path)?;
                                continue;
                            }
                            // A row the one-pass readers left.
                            recs.next_odd_row(p, &mut self.readings, &mut self.commas)
                        } else {
                            recs.next_row(p, &mut self.readings, &mut self.commas)
                        };
                        let Some((ln, parsed)) = next else {
                            break;
                        };
                        match parsed {
                            Ok(t) => {
                                self.stats.rows += 1;
                                self.cfg.exclusions.apply(t, &mut self.readings);
                                self.block.add(t, ln, &self.readings);
                                if self.block.is_full() {
                                    self.flush(path)?;
                                }
                            }
                            // Another station's row touches only the counts:
                            // the block goes on.
                            Err(e) if e.is_other_station() => self.row(path, ln, Err(e))?,
                            Err(_) => {
                                self.flush(path)?;
                                self.row(path, ln, parsed)?;
                            }
                        }
                    }
                    self.flush(path)?;
                    reader.recycle(bytes);
                    progress.at(done_bytes + end);
                }
                Piece::Tail {
                    line,
                    rest,
                    mut head,
                } => {
                    let cfg = self.cfg;
                    return csv_rows(path, rest, line, cfg, &mut head, |p, line, rec| {
                        match p.parse_record(rec, &mut self.readings) {
                            Some(parsed) => self.row(path, line, parsed),
                            None => Ok(()),
                        }
                    })
                    .and_then(|seen| self.empty_unless(seen, path));
                }
            }
        }
        self.empty_unless(reader.saw_header(), path)
    }

    fn empty_unless(&mut self, seen_header: bool, path: &Path) -> Result<()> {
        if seen_header {
            Ok(())
        } else {
            self.stats.empty_file(&self.opts, path)
        }
    }

    /// Pushes the rows of the block ([`Block::push_into`]).
    fn flush(&mut self, path: &Path) -> Result<()> {
        self.block.push_into(
            &mut *self.engine,
            &mut self.last,
            &mut self.readings,
            &self.opts,
            path,
        )
    }

    #[inline]
    fn row(&mut self, path: &Path, line: u64, parsed: Result<Timestamp, BadRow>) -> Result<()> {
        self.stats.rows += 1;
        match parsed {
            Ok(t) => {
                check_jump(&self.opts, self.last, t, path, line)?;
                self.cfg.exclusions.apply(t, &mut self.readings);
                if self.engine.push(t, &self.readings)? == Pushed::Accepted {
                    self.last = Some(t);
                }
                Ok(())
            }
            Err(bad) => self.stats.bad_row(&self.opts, path, line, bad),
        }
    }
}

/// Reads the rest of a file with the `csv` crate (text with quotes), from a
/// record boundary on line `line`, going on with the preamble from where
/// `head` stands; calls `row` for every data record with its line. Returns
/// whether a header (or data) was seen (false: the file held no record).
pub fn csv_rows<E: From<anyhow::Error>>(
    path: &Path,
    rest: impl Read,
    line: u64,
    cfg: &StationFile,
    head: &mut Head,
    mut row: impl FnMut(&mut Parser, u64, &ByteRecord) -> Result<(), E>,
) -> Result<bool, E> {
    let delimiter = cfg.table.csv_delimiter().unwrap_or(b',');
    let mut rdr = limits::csv_reader_with(rest, delimiter);
    let mut rec = ByteRecord::new();
    // Lines are counted from 1 at `rest`, which starts on line `line`.
    let mut next = line;
    loop {
        let got = limits::read_csv(&mut rdr, &mut rec).map_err(|e| {
            limits::csv_long_record(&e, path, next).unwrap_or_else(|| {
                anyhow::Error::new(e).context(format!("cannot read {}", path.display()))
            })
        })?;
        let Some(at) = got.map(|l| line - 1 + l) else {
            return Ok(head.seen());
        };
        next = at + 1;
        if head.ready().is_some() {
            head.check_first_record(path, cfg, at, &rec)?;
            if let Some(p) = head.ready_mut() {
                row(p, at, &rec)?;
            }
            continue;
        }
        let comment = rec.get(0).is_some_and(|f| cfg.table.is_comment(f));
        if head.feed(path, cfg, at, comment, rec.iter())? {
            head.check_first_record(path, cfg, at, &rec)?;
            if let Some(p) = head.ready_mut() {
                row(p, at, &rec)?;
            }
        }
    }
}

/// Whether the byte at `at` of `buf` ends a line, as a text editor counts
/// them: a `\n`, or a `\r` not followed by a `\n` (an old Mac line end; the
/// `\r` of a `\r\n` does not, its `\n` does). A `\r` at the end of `buf`
/// is one: a chunk never ends between a `\r` and its `\n`
/// ([`crate::reader::count_line_ends`], the same rule).
#[inline(always)]
fn ends_line(buf: &[u8], at: usize) -> bool {
    match buf.get(at) {
        Some(b'\n') => true,
        Some(b'\r') => buf.get(at + 1) != Some(&b'\n'),
        _ => false,
    }
}

/// A record as the one-pass readers leave it ([`Records::next_plain`]).
enum Plain {
    /// Read: its line and time.
    Row(u64, Timestamp),
    /// A row of another station (`[input] filter`), passed over: its line.
    Other(u64),
    /// Neither: left unread for the general way.
    Odd,
}

/// The records of a block of text without quotes: split at `\n` and `\r`,
/// blank ones skipped, each with the line it starts on.
pub struct Records<'a> {
    buf: &'a [u8],
    pos: usize,
    line: u64,
}

impl<'a> Records<'a> {
    /// The records of `buf`, whose first byte is on line `line`.
    pub fn new(buf: &'a [u8], line: u64) -> Self {
        Records { buf, pos: 0, line }
    }

    /// The line of the first byte not read yet.
    pub fn line(&self) -> u64 {
        self.line
    }

    /// The offset of the first byte not read yet.
    pub fn pos(&self) -> usize {
        self.pos
    }

    /// The next record read by `parser` into `readings`: its line and its time
    /// or why it is bad. Plain rows are read in one pass
    /// ([`Parser::parse_plain`]); anything else is split first and read field
    /// by field ([`Parser::parse`]), with the same result. Always inlined:
    /// the row loops of [`feed`] and of the workers of `--jobs 2` (and of
    /// the loggers' tables) then run the same inlined parse.
    #[inline(always)]
    pub fn next_row(
        &mut self,
        parser: &mut Parser,
        readings: &mut [Reading],
        commas: &mut Vec<u32>,
    ) -> Option<(u64, Result<Timestamp, BadRow>)> {
        if parser.declared.is_some() {
            return self.next_declared_row(parser, readings, commas);
        }
        match self.next_plain(parser, readings)? {
            Plain::Row(line, t) => Some((line, Ok(t))),
            Plain::Other(line) => Some((line, Err(BadRow::other_station()))),
            Plain::Odd => self.next_odd_row(parser, readings, commas),
        }
    }

    /// The next record if it is plain (the own CSV: [`Parser::parse_plain`];
    /// a declared layout: [`Declared::one_pass`]), read into `readings`, or
    /// a row of another station; [`Plain::Odd`] when it is neither (left
    /// unread, for [`Records::next_row`]); `None` at the end.
    #[inline(always)]
    fn next_plain(&mut self, parser: &mut Parser, readings: &mut [Reading]) -> Option<Plain> {
        self.next_plain_by(parser, readings, true)
    }

    /// [`Records::next_plain`]; with `straight` false the own CSV's row is
    /// read by its column plan alone ([`Parser::parse_planned`]: a row the
    /// straight loop has left).
    #[inline(always)]
    fn next_plain_by(
        &mut self,
        parser: &mut Parser,
        readings: &mut [Reading],
        straight: bool,
    ) -> Option<Plain> {
        let buf = self.buf;
        let i = self.skip_blank()?;
        let row = match parser.declared.as_deref_mut() {
            None if straight => parser.parse_plain(buf, i, readings),
            None => parser.parse_planned(buf, i, readings),
            Some(d) => d.one_pass(buf, i, readings),
        };
        let Some((t, end)) = row else {
            if let Some(end) = parser.declared.as_deref_mut().and_then(|d| d.other.take()) {
                return Some(Plain::Other(self.end_row(end)));
            }
            self.pos = i;
            return Some(Plain::Odd);
        };
        Some(Plain::Row(self.end_row(end), t))
    }

    /// Moves past a row read up to `end` (its terminator, or the end of the
    /// buffer); returns the row's line.
    #[inline(always)]
    fn end_row(&mut self, end: usize) -> u64 {
        let line = self.line;
        self.line += u64::from(ends_line(self.buf, end));
        self.pos = end + usize::from(end < self.buf.len());
        line
    }

    /// The next record read the general way, split first and read field by
    /// field: for the row [`Block::fill`] stopped at, which the one-pass
    /// readers have left already. The same result as [`Records::next_row`].
    #[inline(never)]
    pub fn next_odd_row(
        &mut self,
        parser: &mut Parser,
        readings: &mut [Reading],
        commas: &mut Vec<u32>,
    ) -> Option<(u64, Result<Timestamp, BadRow>)> {
        if parser.declared.is_some() {
            return self.next_declared_general(parser, readings, commas);
        }
        let (line, rec) = self.next_split(commas)?;
        Some((line, parser.parse(rec, commas, readings)))
    }

    /// [`Records::next_row`] of a declared layout: out of line, so that the
    /// own CSV's loop stays small.
    #[inline(never)]
    fn next_declared_row(
        &mut self,
        parser: &mut Parser,
        readings: &mut [Reading],
        delims: &mut Vec<u32>,
    ) -> Option<(u64, Result<Timestamp, BadRow>)> {
        if let (Some(d), Some(i)) = (parser.declared.as_deref_mut(), self.skip_blank()) {
            if let Some((t, end)) = d.one_pass(self.buf, i, readings) {
                return Some((self.end_row(end), Ok(t)));
            }
            if let Some(end) = d.other.take() {
                return Some((self.end_row(end), Err(BadRow::other_station())));
            }
            // The general way reads the row from its start: the line ends
            // before it are counted already.
            self.pos = i;
        }
        self.next_declared_general(parser, readings, delims)
    }

    /// The next record of a declared layout read the general way.
    fn next_declared_general(
        &mut self,
        parser: &mut Parser,
        readings: &mut [Reading],
        delims: &mut Vec<u32>,
    ) -> Option<(u64, Result<Timestamp, BadRow>)> {
        let delim = parser.declared_delimiter()?;
        loop {
            let (line, rec) = match delim {
                Some(b) => self.next_delimited(b, delims)?,
                None => self.next()?,
            };
            if let Some(parsed) = parser.parse_declared(rec, delims, readings) {
                return Some((line, parsed));
            }
        }
    }

    /// Skips line terminators (blank records), counting lines; the offset of
    /// the next record's first byte, or `None` at the end of the buffer.
    #[inline]
    fn skip_blank(&mut self) -> Option<usize> {
        let mut i = self.pos;
        loop {
            match self.buf.get(i) {
                None => {
                    self.pos = i;
                    return None;
                }
                Some(b'\n') => self.line += 1,
                Some(b'\r') => self.line += u64::from(ends_line(self.buf, i)),
                Some(_) => return Some(i),
            }
            i += 1;
        }
    }

    /// The next record and its line, with the offsets of its commas in
    /// `commas`: the same records as [`Records::next`], in one pass.
    #[inline]
    pub fn next_split(&mut self, commas: &mut Vec<u32>) -> Option<(u64, &'a [u8])> {
        let buf = self.buf;
        let start = self.skip_blank()?;
        let rest = &buf[start..];
        let (rec, term) = match memchr::memchr2(b'\n', b'\r', rest) {
            Some(p) => (&rest[..p], Some(rest[p])),
            None => (rest, None),
        };
        find_commas(rec, commas);
        let line = self.line;
        self.line += u64::from(ends_line(buf, start + rec.len()));
        self.pos = start + rec.len() + usize::from(term.is_some());
        Some((line, rec))
    }

    /// The next record and its line, with the offsets of its `delim` bytes
    /// in `at`, found in the same pass as its end, eight bytes at a time:
    /// the same records as [`Records::next`].
    #[inline]
    pub fn next_delimited(&mut self, delim: u8, at: &mut Vec<u32>) -> Option<(u64, &'a [u8])> {
        const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
        let zero_bytes = |x: u64| !(((x & LOW7).wrapping_add(LOW7)) | x | LOW7);
        let (d, nl, cr) = (
            u64::from_le_bytes([delim; 8]),
            u64::from_le_bytes([b'\n'; 8]),
            u64::from_le_bytes([b'\r'; 8]),
        );
        let buf = self.buf;
        let start = self.skip_blank()?;
        let rest = &buf[start..];
        at.clear();
        let mut end = rest.len();
        let mut words = rest.chunks_exact(8);
        let mut base = 0u32;
        'words: for w in &mut words {
            let x = u64::from_le_bytes(w.try_into().unwrap_or([0; 8]));
            let mut hits = zero_bytes(x ^ d);
            let ends = zero_bytes(x ^ nl) | zero_bytes(x ^ cr);
            if ends != 0 {
                // Only the delimiters before the record's end.
                let stop = ends.trailing_zeros() / 8;
                hits &= (1u64 << (stop * 8)).wrapping_sub(1);
                while hits != 0 {
                    at.push(base + hits.trailing_zeros() / 8);
                    hits &= hits - 1;
                }
                end = (base + stop) as usize;
                break 'words;
            }
            while hits != 0 {
                at.push(base + hits.trailing_zeros() / 8);
                hits &= hits - 1;
            }
            base += 8;
        }
        if end == rest.len() {
            for (i, &c) in words.remainder().iter().enumerate() {
                if c == b'\n' || c == b'\r' {
                    end = base as usize + i;
                    break;
                }
                if c == delim {
                    at.push(base + i as u32);
                }
            }
        }
        let rec = &rest[..end];
        let term = rest.get(end).copied();
        let line = self.line;
        self.line += u64::from(ends_line(buf, start + end));
        self.pos = start + end + usize::from(term.is_some());
        Some((line, rec))
    }

    /// The next record and its line.
    #[inline]
    #[allow(clippy::should_implement_trait)]
    pub fn next(&mut self) -> Option<(u64, &'a [u8])> {
        loop {
            let rest = self.buf.get(self.pos..)?;
            if rest.is_empty() {
                return None;
            }
            let (rec, term) = match memchr::memchr2(b'\n', b'\r', rest) {
                Some(p) => (&rest[..p], Some(rest[p])),
                None => (rest, None),
            };
            let line = self.line;
            self.line += u64::from(ends_line(self.buf, self.pos + rec.len()));
            self.pos += rec.len() + usize::from(term.is_some());
            if !rec.is_empty() {
                return Some((line, rec));
            }
        }
    }
}

/// The offsets of the commas of `rec` into `commas`, eight bytes at a time
/// (the exact zero-byte test of S. E. Anderson's "Bit Twiddling Hacks",
/// "Determine if a word has a zero byte", without its false positives).
#[inline]
fn find_commas(rec: &[u8], commas: &mut Vec<u32>) {
    find_byte(rec, b',', commas);
}

/// The offsets of the bytes `b` in `rec` into `out`, eight bytes at a time
/// (as [`find_commas`]).
#[inline]
fn find_byte(rec: &[u8], b: u8, out: &mut Vec<u32>) {
    const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    let pattern = u64::from_le_bytes([b; 8]);
    out.clear();
    let mut words = rec.chunks_exact(8);
    let mut base = 0u32;
    for w in &mut words {
        let x = u64::from_le_bytes(w.try_into().unwrap_or([0; 8])) ^ pattern;
        // High bit of each byte set where x has a zero byte (a match).
        let mut hits = !(((x & LOW7).wrapping_add(LOW7)) | x | LOW7);
        while hits != 0 {
            out.push(base + hits.trailing_zeros() / 8);
            hits &= hits - 1;
        }
        base += 8;
    }
    for (i, &c) in words.remainder().iter().enumerate() {
        if c == b {
            out.push(base + i as u32);
        }
    }
}

/// The fields of a record without quotes.
pub fn split_fields(rec: &[u8]) -> impl Iterator<Item = &[u8]> {
    rec.split(|b| *b == b',')
}

/// Reads data rows of one file: its header's column map and a time cache.
#[derive(Clone, Debug)]
pub struct Parser {
    cols: Vec<Col>,
    /// When `cols` are the time and then every channel in station-file
    /// order (the own CSV as tenmin writes it): bit `c` set for channel `c`
    /// read as counts ([`Parser::parse_straight`]).
    straight: Option<u64>,
    /// Channel ids in station-file order, for messages.
    ids: Vec<String>,
    time: TimeCache,
    /// A declared layout (`[input]`), read by [`Declared`]; `None` for
    /// tenmin's own samples CSV.
    declared: Option<Box<Declared>>,
}

impl Parser {
    /// A parser for the header `fields` on `path:line` (none for a declared
    /// layout without a header); header problems are errors naming the field
    /// and, for a declared layout, the station file's key.
    pub fn new<'f>(
        path: &Path,
        line: u64,
        fields: impl Iterator<Item = &'f [u8]>,
        cfg: &StationFile,
    ) -> Result<Self> {
        let ids: Vec<String> = cfg.channels.iter().map(|c| c.id.clone()).collect();
        if cfg.table.own {
            let cols = header(path, line, fields, cfg)?;
            return Ok(Parser {
                straight: straight_columns(&cols),
                cols,
                ids,
                time: TimeCache::default(),
                declared: None,
            });
        }
        Ok(Parser {
            cols: Vec::new(),
            straight: None,
            declared: Some(Box::new(Declared::new(path, line, fields, cfg)?)),
            ids,
            time: TimeCache::default(),
        })
    }

    /// Whether [`Block::fill`] reads this file's rows: tenmin's own CSV, or
    /// a declared layout read in one pass ([`Declared::one_pass`]) whose
    /// plan writes every channel of a row.
    pub fn fills_rows(&self) -> bool {
        match self.declared.as_deref() {
            None => true,
            Some(d) => d.plan.as_deref().is_some_and(|plan| {
                let written = plan
                    .iter()
                    .filter(|s| matches!(s, Step::Value(_) | Step::Counts(_)))
                    .count();
                written == self.ids.len()
            }),
        }
    }

    /// The channels of a straight file ([`Parser::straight`]): its columns
    /// after the time.
    #[inline(always)]
    fn channels(&self) -> usize {
        self.cols.len().saturating_sub(1)
    }

    /// The header's field names of a declared layout (empty without a
    /// header, and for tenmin's own CSV).
    pub fn header_names(&self) -> &[String] {
        self.declared.as_deref().map_or(&[], |d| &d.names)
    }

    /// For a declared layout (no comma fast path): `Some` with its one-byte
    /// delimiter, or `Some(None)` for whitespace; `None` for the own CSV.
    #[inline]
    pub fn declared_delimiter(&self) -> Option<Option<u8>> {
        self.declared.as_deref().map(|d| d.table.csv_delimiter())
    }

    /// Reads one record of a declared layout, whose one-byte delimiters are at
    /// `delims` (found with the record's end, [`Records::next_delimited`];
    /// unused for whitespace): `None` for a comment line.
    pub fn parse_declared(
        &mut self,
        rec: &[u8],
        delims: &[u32],
        readings: &mut [Reading],
    ) -> Option<Result<Timestamp, BadRow>> {
        let d = self.declared.as_deref_mut()?;
        if d.table.is_comment(rec) {
            return None;
        }
        let r = match d.table.delimiter {
            Delimiter::Byte(_) => d.row(&Delimited(rec, delims), readings, &self.ids),
            Delimiter::Whitespace => {
                let mut spans = std::mem::take(&mut d.spans);
                split_whitespace(rec, &mut spans);
                let r = d.row(&Line(rec, &spans), readings, &self.ids);
                d.spans = spans;
                r
            }
        };
        Some(r)
    }

    /// Reads a plain record starting at `buf[start]` in one pass: every field
    /// a plain decimal or integer (or empty), the time a cached RFC 3339 hour
    /// or integer epoch seconds ([`TimeCache::parse_plain`]), the right number
    /// of fields. Returns the time and the offset of the record's end (its
    /// terminator, or the end of `buf`); `None` for any other record, which
    /// [`Parser::parse`] then reads (`readings` may be partly written).
    /// Out of line: in the row loops of [`feed`] and of the workers it spills
    /// fewer of its values than inlined (host-cli/PERF.md, "parse2").
    #[inline(never)]
    pub fn parse_plain(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
    ) -> Option<(Timestamp, usize)> {
        if let Some(counts) = self.straight {
            // `readings` may have room for more channels than the file: the
            // workers' rows are as wide as their layout.
            let row = by_width!(self.channels(), N => {
                self.parse_straight::<N>(buf, start, readings.first_chunk_mut::<N>()?, counts)
            });
            if let Some(row) = row {
                return row;
            }
        }
        self.parse_planned(buf, start, readings)
    }

    /// [`Parser::parse_plain`] by the column plan, field by field (a
    /// reordered header, or a straight row that holds `NaN`).
    #[inline(never)]
    fn parse_planned(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
    ) -> Option<(Timestamp, usize)> {
        let mut p = start;
        let mut time = None;
        for (i, col) in self.cols.iter().enumerate() {
            if i > 0 {
                if buf.get(p) != Some(&b',') {
                    return None;
                }
                p += 1;
            }
            let rest = buf.get(p..)?;
            match *col {
                Col::Time => {
                    let (t, n) = self.time.parse_plain(rest)?;
                    time = Some(t);
                    p += n;
                }
                Col::Value(c) => {
                    let (v, n) = plain_f64_nan(rest, b'.', b',')?;
                    *readings.get_mut(c)? = v;
                    p += n;
                }
                Col::Counts(c) => {
                    let (k, n) = plain_i32_nan(rest, b',')?;
                    *readings.get_mut(c)? = k;
                    p += n;
                }
            }
        }
        match buf.get(p) {
            None | Some(b'\n' | b'\r') => Some((time?, p)),
            Some(_) => None,
        }
    }

    /// [`Parser::parse_plain`] of a row whose columns are the time and then
    /// the `N` channels in station-file order (bit `c` of `counts` set for
    /// channel `c` read as counts): the field loop unrolled, each reading
    /// stored in its place with no column plan read.
    #[inline(always)]
    fn parse_straight<const N: usize>(
        &self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading; N],
        counts: u64,
    ) -> Option<(Timestamp, usize)> {
        let (t, n) = self.time.parse_plain(buf.get(start..)?)?;
        let mut p = start + n;
        for (c, r) in readings.iter_mut().enumerate() {
            if buf.get(p) != Some(&b',') {
                return None;
            }
            p += 1;
            let rest = buf.get(p..)?;
            let (v, n) = if counts >> c & 1 == 0 {
                plain_f64(rest)?
            } else {
                plain_i32(rest)?
            };
            *r = v;
            p += n;
        }
        match buf.get(p) {
            None | Some(b'\n' | b'\r') => Some((t, p)),
            Some(_) => None,
        }
    }

    /// Reads a record without quotes into `readings` (one per channel, in
    /// station-file order); returns its time. `commas` are the offsets of its
    /// commas ([`Records::next_split`]).
    #[inline]
    pub fn parse(
        &mut self,
        rec: &[u8],
        commas: &[u32],
        readings: &mut [Reading],
    ) -> Result<Timestamp, BadRow> {
        let mut start = 0usize;
        let fields = (0..=commas.len()).map(|i| {
            let end = commas.get(i).map_or(rec.len(), |&c| c as usize);
            let f = rec.get(start..end).unwrap_or_default();
            start = end + 1;
            f
        });
        self.fields(commas.len() + 1, fields, readings)
    }

    /// Reads a record of the `csv` crate (`None`: a comment line).
    pub fn parse_record(
        &mut self,
        rec: &ByteRecord,
        readings: &mut [Reading],
    ) -> Option<Result<Timestamp, BadRow>> {
        if let Some(d) = self.declared.as_deref_mut() {
            if rec.get(0).is_some_and(|f| d.table.is_comment(f)) {
                return None;
            }
            return Some(d.row(rec, readings, &self.ids));
        }
        Some(self.fields(rec.len(), rec.iter(), readings))
    }

    #[inline]
    fn fields<'f>(
        &mut self,
        n: usize,
        fields: impl Iterator<Item = &'f [u8]>,
        readings: &mut [Reading],
    ) -> Result<Timestamp, BadRow> {
        let cols = &self.cols;
        if n != cols.len() {
            return Err(BadRow::new(
                BadKind::FieldCount,
                None,
                format!(
                    "expected {} fields (time and {} channels), found {n}",
                    cols.len(),
                    cols.len() - 1,
                ),
            ));
        }
        let mut time = None;
        for (i, (field, col)) in fields.zip(cols).enumerate() {
            match *col {
                Col::Time => match self.time.parse(field) {
                    Ok(t) => time = Some(t),
                    Err(e) => return Err(time_error(i, e, field)),
                },
                Col::Value(c) => match parse_reading(field, Decode::Value) {
                    Ok(r) => readings[c] = r,
                    Err(kind) => {
                        return Err(value_error(i, &self.ids[c], kind, Decode::Value, field))
                    }
                },
                Col::Counts(c) => match parse_reading(field, Decode::Counts) {
                    Ok(r) => readings[c] = r,
                    Err(kind) => {
                        return Err(value_error(i, &self.ids[c], kind, Decode::Counts, field))
                    }
                },
            }
        }
        // The header guarantees one time column.
        time.ok_or_else(|| BadRow::new(BadKind::Time, None, "no time".into()))
    }
}

/// The fields of one record, by index.
trait Fields {
    fn count(&self) -> usize;
    fn field(&self, i: usize) -> &[u8];
}

/// A record and the spans of its fields.
struct Line<'a>(&'a [u8], &'a [(u32, u32)]);

impl Fields for Line<'_> {
    fn count(&self) -> usize {
        self.1.len()
    }
    fn field(&self, i: usize) -> &[u8] {
        self.1
            .get(i)
            .and_then(|&(a, b)| self.0.get(a as usize..b as usize))
            .unwrap_or_default()
    }
}

/// A record and the offsets of its one-byte delimiters.
struct Delimited<'a>(&'a [u8], &'a [u32]);

impl Fields for Delimited<'_> {
    #[inline]
    fn count(&self) -> usize {
        self.1.len() + 1
    }
    #[inline]
    fn field(&self, i: usize) -> &[u8] {
        let start = match i {
            0 => 0,
            _ => self.1.get(i - 1).map_or(usize::MAX, |&p| p as usize + 1),
        };
        let end = self.1.get(i).map_or(self.0.len(), |&p| p as usize);
        self.0.get(start..end).unwrap_or_default()
    }
}

impl Fields for ByteRecord {
    fn count(&self) -> usize {
        self.len()
    }
    fn field(&self, i: usize) -> &[u8] {
        self.get(i).unwrap_or_default()
    }
}

/// The spans of the fields of `rec` separated by runs of spaces and tabs
/// (leading and trailing ones ignored) into `spans`. Eight bytes at a time:
/// the bytes where a field starts or ends are those whose kind (space or
/// tab, or not) differs from the byte before's (before the record: a space),
/// found for a whole word at once (the exact zero-byte test, as
/// [`find_byte`]), so that the loop takes no branch per byte.
fn split_whitespace(rec: &[u8], spans: &mut Vec<(u32, u32)>) {
    const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    let zero_bytes = |x: u64| !(((x & LOW7).wrapping_add(LOW7)) | x | LOW7);
    let (space, tab) = (
        u64::from_le_bytes([b' '; 8]),
        u64::from_le_bytes([b'\t'; 8]),
    );
    spans.clear();
    // The start of the field open, if one is.
    let mut open: Option<u32> = None;
    let mut toggle = |at: u32, spans: &mut Vec<(u32, u32)>| match open.take() {
        Some(start) => spans.push((start, at)),
        None => open = Some(at),
    };
    // The high bit of the byte before the word's first: set for a space.
    let mut before = 0x80u64;
    let mut words = rec.chunks_exact(8);
    let mut base = 0u32;
    for w in &mut words {
        let x = u64::from_le_bytes(w.try_into().unwrap_or([0; 8]));
        let blank = zero_bytes(x ^ space) | zero_bytes(x ^ tab);
        let mut changes = blank ^ ((blank << 8) | before);
        while changes != 0 {
            toggle(base + changes.trailing_zeros() / 8, spans);
            changes &= changes - 1;
        }
        before = blank >> 56;
        base += 8;
    }
    let mut blank_before = before != 0;
    for (i, &c) in words.remainder().iter().enumerate() {
        let blank = matches!(c, b' ' | b'\t');
        if blank != blank_before {
            toggle(base + i as u32, spans);
        }
        blank_before = blank;
    }
    if let Some(start) = open {
        spans.push((start, rec.len() as u32));
    }
}

/// The plan of [`Declared::one_pass`] for a layout, if it can be read so:
/// one-byte delimiter, up to [`TIME_PARTS`] time columns, each field read
/// once.
/// Missing-value texts are compared in the pass, quality codes read in it
/// ([`Step::Quality`]), a filter's column too ([`Step::Filter`]: a row of
/// another station is counted, not read further), and units converted after
/// it ([`Declared::converted`]).
fn one_pass_plan(
    table: &Table,
    time: &[usize],
    chan: &[(usize, Decode, Option<usize>, bool)],
    filter: Option<usize>,
    fields: usize,
) -> Option<Vec<Step>> {
    if matches!(table.delimiter, Delimiter::Byte(b'\n' | b'\r' | b'"')) {
        return None;
    }
    if time.len() > TIME_PARTS {
        return None;
    }
    let mut plan = vec![Step::Skip; fields];
    let mut put = |i: usize, step: Step| match plan.get_mut(i) {
        Some(s @ Step::Skip) => {
            *s = step;
            Some(())
        }
        _ => None,
    };
    match time {
        [t] => put(*t, Step::Time)?,
        _ => {
            for (k, &t) in time.iter().enumerate() {
                put(t, Step::TimePart(k))?;
            }
        }
    }
    if let Some(f) = filter {
        put(f, Step::Filter)?;
    }
    for (c, &(i, decode, q, _)) in chan.iter().enumerate() {
        if let Some(q) = q {
            put(q, Step::Quality(c))?;
        }
        put(
            i,
            match decode {
                Decode::Value => Step::Value(c),
                Decode::Counts => Step::Counts(c),
            },
        )?;
    }
    Some(plan)
}

/// Whether `field` is one of the layout's missing-value texts (`codes`, each
/// of at least one byte), as it stands.
#[inline(always)]
fn is_code(field: &[u8], codes: &[Vec<u8>]) -> bool {
    // The lengths and first bytes first: a number is seldom a code.
    codes
        .iter()
        .any(|m| m.len() == field.len() && m.first() == field.first() && m[..] == *field)
}

/// A layout without missing-value texts, for [`coded`].
const NO_CODES: u8 = 0;
/// Missing-value texts none of which the one-pass readers read as a number
/// other than `NaN` (`NAN`, `NA`, `---`, `null` ...), for [`coded`]: only a
/// field read as `NaN`, or not read, may be one of them.
const TEXT_CODES: u8 = 1;
/// Missing-value texts some of which read as numbers (`-9999`), for
/// [`coded`]: every field of a text's length is compared with them.
const NUMBER_CODES: u8 = 2;

/// How the one-pass readers of a layout with the missing-value texts `codes`
/// test its fields ([`coded`]): [`NO_CODES`], [`TEXT_CODES`] or
/// [`NUMBER_CODES`], by reading each text (then `delim`) as a value with the
/// separator `sep` and as counts, as those readers read a field.
fn codes_kind(codes: &[Vec<u8>], sep: u8, delim: u8) -> u8 {
    let number = |c: &Vec<u8>| {
        let mut f = c.clone();
        f.push(delim);
        let value = matches!(plain_f64_nan(&f, sep, delim),
            Some((Reading::Value(v), n)) if n == c.len() && !v.is_nan());
        let count =
            matches!(plain_i32_nan(&f, delim), Some((Reading::Counts(_), n)) if n == c.len());
        value || count
    };
    match codes {
        [] => NO_CODES,
        _ if codes.iter().any(number) => NUMBER_CODES,
        _ => TEXT_CODES,
    }
}

/// The reading of the field at the start of `b` and its length as the
/// general way reads it with the missing-value texts `codes` (`CODES` of
/// [`codes_kind`]; `lens` their [`code_lengths`]): counts when `count`, else a
/// value with the separator `sep`. A field that is one of `codes` is missing,
/// whether it reads as a number or not; `None` leaves the row to the general
/// way.
#[inline(always)]
fn coded<const CODES: u8>(
    b: &[u8],
    count: bool,
    sep: u8,
    delim: u8,
    codes: &[Vec<u8>],
    lens: u64,
    out: &mut Reading,
) -> Option<usize> {
    // Each way stores its reading itself: a reading chosen from several
    // ways and then stored was put together on the stack and read back
    // whole, which stalled the loop (host-cli/PERF.md, "Missing-value texts
    // out of the numbers' way").
    let read = match CODES {
        NO_CODES => read_or_nan(b, count, sep, delim),
        // A field read as a number other than `NaN` is none of the texts:
        // only the reading of `NaN` compares them, out of the numbers' way; a
        // count read as missing (`NaN`) is missing either way.
        TEXT_CODES => match count {
            false => plain_f64_in::<true>(b, sep, delim, codes),
            true => plain_i32_nan(b, delim),
        },
        _ => match read_or_nan(b, count, sep, delim) {
            // A field of no text's length is none of them: one test a field.
            Some((r, n)) if lens >> n.min(63) & 1 == 0 || !is_code(&b[..n], codes) => Some((r, n)),
            _ => None,
        },
    };
    match read {
        Some((r, n)) => {
            *out = r;
            Some(n)
        }
        None if CODES == NO_CODES => None,
        None => missing_code_into(b, delim, codes, out),
    }
}

/// [`missing_code`] into `out`; the field's length.
#[cold]
#[inline(never)]
fn missing_code_into(b: &[u8], delim: u8, codes: &[Vec<u8>], out: &mut Reading) -> Option<usize> {
    let (r, n) = missing_code(b, delim, codes)?;
    *out = r;
    Some(n)
}

/// [`coded`] for a field of a whitespace layout ([`Declared::one_pass_blank`]):
/// `kind` is the layout's [`codes_kind`], the delimiter a space (a tab ends a
/// number as any other byte that is not its own; a text code followed by a
/// tab goes the general way).
#[inline(always)]
fn number_or_code(
    b: &[u8],
    count: bool,
    sep: u8,
    codes: &[Vec<u8>],
    lens: u64,
    kind: u8,
    out: &mut Reading,
) -> Option<usize> {
    match kind {
        NO_CODES => coded::<NO_CODES>(b, count, sep, b' ', codes, lens, out),
        TEXT_CODES => coded::<TEXT_CODES>(b, count, sep, b' ', codes, lens, out),
        _ => coded::<NUMBER_CODES>(b, count, sep, b' ', codes, lens, out),
    }
}

/// [`plain_f64_nan`] (with `sep` and `delim`) of the field at the start of
/// `b`, or [`plain_i32_nan`] when `count`.
#[inline(always)]
fn read_or_nan(b: &[u8], count: bool, sep: u8, delim: u8) -> Option<(Reading, usize)> {
    match count {
        false => plain_f64_nan(b, sep, delim),
        true => plain_i32_nan(b, delim),
    }
}

/// The lengths of `codes` for [`coded`]: bit `k` set when one of them is `k`
/// bytes long (bit 63: 63 bytes or more).
fn code_lengths(codes: &[Vec<u8>]) -> u64 {
    codes.iter().fold(0, |m, c| m | 1 << c.len().min(63))
}

/// A missing reading and its field's length when the field at the start of
/// `b` is one of `codes`, for [`Declared::one_pass`]; `None` otherwise (the
/// row goes the general way).
#[cold]
fn missing_code(b: &[u8], delim: u8, codes: &[Vec<u8>]) -> Option<(Reading, usize)> {
    let n = field_len(b, delim);
    is_code(&b[..n], codes).then_some((Reading::Missing, n))
}

/// The length of the field at the start of `b`: up to the first `delim`, `\n`
/// or `\r` (or the end of `b`), eight bytes at a time (as [`find_byte`]).
#[inline]
fn field_len(b: &[u8], delim: u8) -> usize {
    const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    let zero_bytes = |x: u64| !(((x & LOW7).wrapping_add(LOW7)) | x | LOW7);
    let (d, nl, cr) = (
        u64::from_le_bytes([delim; 8]),
        u64::from_le_bytes([b'\n'; 8]),
        u64::from_le_bytes([b'\r'; 8]),
    );
    let mut words = b.chunks_exact(8);
    let mut base = 0usize;
    for w in &mut words {
        let x = u64::from_le_bytes(w.try_into().unwrap_or([0; 8]));
        let hits = zero_bytes(x ^ d) | zero_bytes(x ^ nl) | zero_bytes(x ^ cr);
        if hits != 0 {
            return base + (hits.trailing_zeros() / 8) as usize;
        }
        base += 8;
    }
    base + words
        .remainder()
        .iter()
        .position(|&c| c == delim || c == b'\n' || c == b'\r')
        .unwrap_or(words.remainder().len())
}

/// A file of a declared layout (`[input]`): where each field goes.
#[derive(Clone, Debug)]
pub struct Declared {
    table: Arc<Table>,
    /// Fields a row must have: exactly (with a header) or at least.
    fields: usize,
    exact: bool,
    /// The time columns' field indices, in the order they are joined.
    time: Vec<usize>,
    /// Per channel: the field index, how it is read, its quality field.
    chan: Vec<(usize, Decode, Option<usize>, bool)>,
    filter: Option<usize>,
    /// Names of the fields (header, or "column N"), for messages.
    names: Vec<String>,
    /// Scratch: field spans (whitespace), and the joined time.
    spans: Vec<(u32, u32)>,
    tbuf: Vec<u8>,
    /// What the last row's time leaves to read the next faster.
    clock: Clock,
    /// A row read in one pass ([`Declared::one_pass`]): what each field
    /// holds, up to the last one read; `None` when the layout needs more
    /// (more than [`TIME_PARTS`] time columns, a column read twice, a line
    /// end or a quote as the delimiter).
    plan: Option<Vec<Step>>,
    /// Set by [`Declared::one_pass`] when it leaves a row of another station
    /// (`[input] filter`) that the general way counts as such (the right
    /// number of fields): the offset of its end. Taken at once by the
    /// caller ([`Records::next_plain_by`], [`Records::next_declared_row`]).
    other: Option<usize>,
    /// The channels whose values [`Declared::one_pass`] converts after the
    /// row is read (another unit in the file than the channel's), with their
    /// conversions.
    converted: Vec<(usize, Convert)>,
    /// A plan that is the time and then every channel in station-file order
    /// (bit `c` set for channel `c` read as counts): read by
    /// [`Declared::one_pass_straight`], a loop per width.
    straight: Option<u64>,
    /// The time columns that start a straight plan, when there are several
    /// ([`Step::TimePart`] in their order); 0: one time column.
    straight_parts: usize,
    /// The channels of a straight plan whose reading is followed by its
    /// quality code (bit `c` for channel `c`, [`Step::Quality`]).
    straight_quality: u64,
    /// Whether a straight plan starts with the filter's column
    /// ([`Step::Filter`]) before the time.
    straight_filter: bool,
    /// The lengths of the missing-value texts ([`code_lengths`]).
    code_lens: u64,
    /// How the one-pass readers test for them ([`codes_kind`]).
    codes: u8,
}

/// The last row's time and the zone's span, to read the next faster.
#[derive(Clone, Debug, Default)]
struct Clock {
    memo: Memo,
    zone: ZoneCache,
    /// The memo's hour folded for [`Declared::one_pass`] ([`Quick`]): set
    /// after each time that `memo` and `zone` did not read.
    quick: Quick,
}

impl Clock {
    /// The time field at the start of `rest` for [`Declared::one_pass`]: by
    /// `quick` (the memo's hour), else by the memo and the zone's span, else
    /// parsed whole (and `quick` set again); its length. `None`: a time the
    /// general way reads (or refuses).
    #[inline(always)]
    fn field(&mut self, table: &Table, rest: &[u8], delim: u8) -> Option<(Timestamp, usize)> {
        if let Some(read) = self.quick.read(rest, delim) {
            return Some(read);
        }
        let n = field_len(rest, delim);
        let text = &rest[..n];
        let (memo, zone) = (&mut self.memo, &mut self.zone);
        let t = match table.time.parse_memo(text, memo, zone) {
            Some(t) => t,
            None => {
                let t = table.time.parse_with(text, memo, zone).ok();
                self.quick = table.time.quick(memo, zone, delim);
                t?
            }
        };
        Some((t, n))
    }

    /// The time of a text (a whitespace layout's time column): by the memo
    /// and the zone's span, else parsed whole, as the general way parses
    /// it. `None`: a time the general way reads (or refuses).
    #[inline]
    fn joined(&mut self, table: &Table, text: &[u8]) -> Option<Timestamp> {
        let (memo, zone) = (&mut self.memo, &mut self.zone);
        table
            .time
            .parse_memo(text, memo, zone)
            .or_else(|| table.time.parse_with(text, memo, zone).ok())
    }

    /// The time of the `k` time columns at `buf[start]`, one after the
    /// other ([`Declared::straight_parts`]), as [`Declared::one_pass_in`]
    /// reads them ([`Clock::parts`]), and the length of their fields.
    #[inline]
    fn fields(
        &mut self,
        table: &Table,
        buf: &[u8],
        start: usize,
        k: usize,
        delim: u8,
    ) -> Option<(Timestamp, usize)> {
        let mut parts = [(0usize, 0usize); TIME_PARTS];
        let mut p = start;
        for (j, part) in parts.iter_mut().take(k).enumerate() {
            if j > 0 {
                if buf.get(p) != Some(&delim) {
                    return None;
                }
                p += 1;
            }
            let n = field_len(buf.get(p..)?, delim);
            *part = (p, p + n);
            p += n;
        }
        let t = self.parts(table, buf, parts.get(..k)?)?;
        Some((t, p - start))
    }

    /// The time of several time columns ([`Step::TimePart`], their spans in
    /// `buf` in the layout's order), their texts joined as the general way
    /// joins them (spaces trimmed, one space between) in a word of the
    /// stack: by `quick` (the memo's hour), else by the memo and the zone's
    /// span, else parsed whole (and `quick` set again). `None`: a time the
    /// general way reads (or refuses), or a joined text of more than 47
    /// bytes (left to it too).
    #[inline]
    fn parts(&mut self, table: &Table, buf: &[u8], parts: &[(usize, usize)]) -> Option<Timestamp> {
        // The joined text, then line ends: [`Quick::read`] reads 32 bytes
        // and wants the time ended.
        let mut w = [b'\n'; 48];
        let mut len = 0;
        for (k, &(a, b)) in parts.iter().enumerate() {
            let part = buf.get(a..b)?.trim_ascii();
            if k > 0 {
                *w.get_mut(len)? = b' ';
                len += 1;
            }
            w.get_mut(len..len + part.len())?.copy_from_slice(part);
            len += part.len();
        }
        if len >= w.len() {
            return None;
        }
        if let Some((t, n)) = self.quick.read(&w, b'\n') {
            if n == len {
                return Some(t);
            }
        }
        let text = &w[..len];
        let (memo, zone) = (&mut self.memo, &mut self.zone);
        match table.time.parse_memo(text, memo, zone) {
            Some(t) => Some(t),
            None => {
                let t = table.time.parse_with(text, memo, zone).ok();
                self.quick = table.time.quick(memo, zone, b'\n');
                t
            }
        }
    }
}

/// Time columns a row read in one pass may have ([`Step::TimePart`]); a
/// layout with more is read the general way.
const TIME_PARTS: usize = 8;

/// Whether the row `rest` starts may be a comment of `table` (or starts with
/// spaces, with comments declared): the one-pass readers leave it to the
/// general way.
#[inline(always)]
fn may_be_comment(table: &Table, rest: &[u8]) -> bool {
    match (&table.comment, rest.first()) {
        (Some(c), Some(&first)) => {
            c.first().is_none_or(|&c0| c0 == first) || first.is_ascii_whitespace()
        }
        _ => false,
    }
}

/// The plan's channel bits for [`Declared::one_pass_straight`], its time
/// columns ([`Declared::straight_parts`]) and its quality columns
/// ([`Declared::straight_quality`]): `Some` when `plan` is the time (one
/// column, or several in their order) and then channels `0..n` in order
/// ([`straight_columns`]), each perhaps followed by its quality code, at most
/// 12 of them (the widths of [`by_width!`]).
fn straight_plan(plan: Option<&[Step]>) -> Option<(u64, usize, u64, bool)> {
    let plan = plan?;
    // The filter's column first (a shared table's station), then the rest.
    let (filter, plan) = match plan.split_first() {
        Some((Step::Filter, rest)) => (true, rest),
        _ => (false, plan),
    };
    // Several time columns first, in their order: read as one.
    let parts = plan
        .iter()
        .enumerate()
        .take_while(|&(k, s)| *s == Step::TimePart(k))
        .count();
    let (parts, plan) = match parts {
        0 => (0, plan),
        1 => return None,
        k => (k, plan.get(k - 1..)?),
    };
    // A channel's quality code right after its reading.
    let mut quality = 0u64;
    let mut cols = Vec::with_capacity(plan.len());
    for (i, step) in plan.iter().enumerate() {
        cols.push(match *step {
            Step::TimePart(_) if i == 0 && parts > 0 => Col::Time,
            Step::Time => Col::Time,
            Step::Value(c) => Col::Value(c),
            Step::Counts(c) => Col::Counts(c),
            Step::Quality(c)
                if c < 64
                    && matches!(cols.last(), Some(&(Col::Value(v) | Col::Counts(v))) if v == c) =>
            {
                quality |= 1 << c;
                continue;
            }
            Step::Skip | Step::Quality(_) | Step::TimePart(_) | Step::Filter => return None,
        });
    }
    if cols.len() > 13 {
        return None;
    }
    Some((straight_columns(&cols)?, parts, quality, filter))
}

/// What one field of a row read in one pass holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Step {
    Time,
    /// Time column `k` of several, joined in their order with one space
    /// between their texts (spaces trimmed), as the general way joins them.
    TimePart(usize),
    Value(usize),
    Counts(usize),
    /// The quality code of channel `c`: a code not among the channel's good
    /// ones flags its reading, whatever the reading ([`is_good`]).
    Quality(usize),
    /// The column of `[input] filter`: a row whose text there (surrounding
    /// spaces ignored) is not the filter's value is another station's
    /// ([`Declared::other`]).
    Filter,
    Skip,
}

/// Flags the readings of the channels set in `flagged` (bit `c` for channel
/// `c`: its quality code is bad), whatever they read; `None` if one is out of
/// `readings`.
#[inline(always)]
fn flag(readings: &mut [Reading], mut flagged: u64) -> Option<()> {
    while flagged != 0 {
        *readings.get_mut(flagged.trailing_zeros() as usize)? = Reading::Flagged;
        flagged &= flagged - 1;
    }
    Some(())
}

/// Whether `field` (surrounding spaces ignored) is the text that `table`'s
/// `[input] filter` keeps, as the general way compares it
/// ([`Declared::row`]); any row is kept without a filter.
#[inline]
fn kept(table: &Table, field: &[u8]) -> bool {
    table
        .filter
        .as_ref()
        .is_none_or(|f| field.trim_ascii() == f.value.as_slice())
}

/// For [`other_end`] in a delimited layout: the field after the delimiter
/// that starts `b`, with it; `None` when no delimiter starts `b`.
#[inline]
fn delimited_field(b: &[u8], delim: u8) -> Option<(usize, bool)> {
    (b.first() == Some(&delim)).then(|| (1 + field_len(&b[1..], delim), true))
}

/// The end of a row of another station whose first `seen` fields end at
/// `buf[p]`, if it has the fields the general way asks of a row (`fields`,
/// exactly or at least), which then counts it as another station's
/// ([`Declared::row`]): `next` gives the length of what starts its slice,
/// a field with what comes before it (delimiter or blanks; `true`) or
/// trailing blanks (`false`), `None` at the row's end; `None` for a row of
/// another number of fields or one that does not end at a line end or the
/// end of `buf`.
#[inline(never)]
fn other_end(
    buf: &[u8],
    mut p: usize,
    mut seen: usize,
    fields: usize,
    exact: bool,
    next: impl Fn(&[u8]) -> Option<(usize, bool)>,
) -> Option<usize> {
    while let Some((n, field)) = next(buf.get(p..)?) {
        p += n;
        seen += usize::from(field);
    }
    let ends = matches!(buf.get(p), None | Some(b'\n' | b'\r'));
    let count = if exact {
        seen == fields
    } else {
        seen >= fields
    };
    (ends && count).then_some(p)
}

/// Whether `code` (surrounding spaces ignored) is one of the good codes of
/// the quality column of `table`'s channel `c`, as the general way compares
/// them ([`Declared::row`]).
#[inline]
fn is_good(table: &Table, c: usize, code: &[u8]) -> bool {
    let code = code.trim_ascii();
    table
        .sources
        .get(c)
        .and_then(|s| s.quality.as_ref())
        .is_some_and(|q| q.good.iter().any(|g| g[..] == *code))
}

impl Declared {
    fn new<'f>(
        path: &Path,
        line: u64,
        header: impl Iterator<Item = &'f [u8]>,
        cfg: &StationFile,
    ) -> Result<Self> {
        let table = Arc::new(cfg.table.clone());
        let station = cfg.path.display();
        let names: Vec<String> = if table.header {
            header
                .enumerate()
                .map(|(i, raw)| {
                    let raw = if i == 0 {
                        raw.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(raw)
                    } else {
                        raw
                    };
                    let raw = raw.trim_ascii();
                    let raw = raw
                        .strip_prefix(b"\"")
                        .and_then(|r| r.strip_suffix(b"\""))
                        .unwrap_or(raw);
                    String::from_utf8_lossy(raw).trim().to_string()
                })
                .collect()
        } else {
            Vec::new()
        };
        // `key` is the station file's key, `at` its line there (0: a default).
        let find = |c: &Column, key: &str, at: usize| -> Result<usize> {
            let whose = match at {
                0 => format!("{key} of {station} (by default)"),
                _ => format!("{key} at {station}:{at}"),
            };
            match c {
                Column::Index(i) => {
                    if table.header && *i >= names.len() {
                        bail!(
                            "{}:{line}: the header has {} columns; {whose} names column {} (positions count from 1)",
                            path.display(),
                            names.len(),
                            i + 1
                        );
                    }
                    Ok(*i)
                }
                Column::Name(n) => names.iter().position(|h| h == n).ok_or_else(|| {
                    anyhow!(
                        "{}:{line}: no column {n:?} in the header, which {whose} names; the header has {}",
                        path.display(),
                        names.iter().map(|h| format!("{h:?}")).collect::<Vec<_>>().join(", ")
                    )
                }),
            }
        };
        let time = table
            .time_columns
            .iter()
            .map(|c| {
                let key = format!("the time column of [{}.time]", table.section);
                find(c, &key, table.time_line)
            })
            .collect::<Result<Vec<_>>>()?;
        let mut chan = Vec::with_capacity(cfg.channels.len());
        for (spec, src) in cfg.channels.iter().zip(&table.sources) {
            let key = format!("`column` of channel {:?}", spec.id);
            let col = find(&src.column, &key, src.line)?;
            let q = match &src.quality {
                Some(q) => Some(find(
                    &q.column,
                    &format!("`quality` of channel {:?}", spec.id),
                    q.line,
                )?),
                None => None,
            };
            // Plain: no missing-value texts, no quality column, no unit to
            // convert: a plain number is the reading as it stands.
            let plain = table.missing.is_empty() && q.is_none() && src.convert.is_none();
            chan.push((col, spec.decode, q, plain));
        }
        let filter = match &table.filter {
            Some(f) => Some(find(
                &f.column,
                &format!("`filter` of [{}]", table.section),
                f.line,
            )?),
            None => None,
        };
        let highest = time
            .iter()
            .chain(chan.iter().map(|c| &c.0))
            .chain(chan.iter().filter_map(|c| c.2.as_ref()))
            .chain(filter.iter())
            .max()
            .copied()
            .unwrap_or(0);
        let (fields, exact) = if table.header {
            (names.len(), true)
        } else {
            (highest + 1, false)
        };
        let plan = one_pass_plan(&table, &time, &chan, filter, fields);
        let (straight, straight_parts, straight_quality, straight_filter) =
            match straight_plan(plan.as_deref()) {
                Some((counts, parts, quality, filter)) => (Some(counts), parts, quality, filter),
                None => (None, 0, 0, false),
            };
        // The general way converts values only: counts stay as read.
        let converted = (table.sources.iter().zip(&chan).enumerate())
            .filter_map(|(c, (src, &(_, decode, ..)))| {
                src.convert
                    .filter(|_| decode == Decode::Value)
                    .map(|conv| (c, conv))
            })
            .collect();
        // The one-pass readers' separator and delimiter (a layout split at
        // whitespace is never read in one pass).
        let sep = if table.decimal_comma { b',' } else { b'.' };
        let delim = match table.delimiter {
            Delimiter::Byte(d) => d,
            Delimiter::Whitespace => b' ',
        };
        Ok(Declared {
            table,
            fields,
            exact,
            time,
            chan,
            filter,
            names,
            spans: Vec::with_capacity(64),
            tbuf: Vec::with_capacity(64),
            clock: Clock::default(),
            plan,
            other: None,
            converted,
            straight,
            straight_parts,
            straight_quality,
            straight_filter,
            code_lens: code_lengths(&cfg.table.missing),
            codes: codes_kind(&cfg.table.missing, sep, delim),
        })
    }

    /// Reads a row starting at `buf[start]` in one pass, as
    /// [`Parser::parse_plain`] reads the own CSV: fields left to right while
    /// the delimiters are found, every channel's field a plain number or
    /// empty, the time through the memo of the last row. Returns the time and
    /// the offset of the row's end (its terminator, or the end of `buf`);
    /// `None` for any other row (a comment, spaces, a bad field, the wrong
    /// number of fields), which [`Declared::row`] then reads (`readings` may
    /// be partly written): the same result. A row that the general way would
    /// count as another station's (`[input] filter`) is passed over: `None`,
    /// with its end in [`Declared::other`].
    #[inline]
    fn one_pass(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
    ) -> Option<(Timestamp, usize)> {
        let row = self.one_pass_any(buf, start, readings);
        if row.is_none() && self.other.is_none() && self.filter.is_some() {
            // Left before its filter's column was compared (a bad value of
            // another station, the column after the channels).
            self.other = self.other_station(buf, start);
        }
        row
    }

    /// The end of the row at `buf[start]` if the general way counts it as
    /// another station's ([`Declared::row`]): not a comment, the right
    /// number of fields, and not the text of the filter in its column.
    #[inline(never)]
    fn other_station(&self, buf: &[u8], start: usize) -> Option<usize> {
        let col = self.filter?;
        let table = &*self.table;
        if may_be_comment(table, buf.get(start..)?) {
            return None;
        }
        match table.delimiter {
            Delimiter::Byte(delim) => {
                let mut p = start;
                for _ in 0..col {
                    p += field_len(buf.get(p..)?, delim);
                    if buf.get(p) != Some(&delim) {
                        return None;
                    }
                    p += 1;
                }
                let n = field_len(buf.get(p..)?, delim);
                if kept(table, &buf[p..p + n]) {
                    return None;
                }
                other_end(buf, p + n, col + 1, self.fields, self.exact, |b| {
                    delimited_field(b, delim)
                })
            }
            Delimiter::Whitespace => {
                let next = |b: &[u8]| {
                    let k = b.iter().take_while(|c| matches!(c, b' ' | b'\t')).count();
                    let f = b[k..]
                        .iter()
                        .position(|c| matches!(c, b' ' | b'\t' | b'\n' | b'\r'))
                        .unwrap_or(b.len() - k);
                    (k > 0 || f > 0).then_some((k + f, f > 0))
                };
                // The fields before the filter's, its own, then the rest.
                let mut p = start;
                let mut seen = 0;
                while seen <= col {
                    let (n, field) = next(buf.get(p..)?)?;
                    if field {
                        seen += 1;
                    }
                    p += n;
                }
                // Its field: back from `p` to a blank or the row's start
                // (not into the row before it).
                let n = buf[start..p]
                    .iter()
                    .rev()
                    .take_while(|c| !matches!(c, b' ' | b'\t'))
                    .count();
                if kept(table, &buf[p - n..p]) {
                    return None;
                }
                other_end(buf, p, col + 1, self.fields, self.exact, next)
            }
        }
    }

    /// [`Declared::one_pass`] before the rows of other stations.
    #[inline(always)]
    fn one_pass_any(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
    ) -> Option<(Timestamp, usize)> {
        let Delimiter::Byte(delim) = self.table.delimiter else {
            let row = self.one_pass_blank(buf, start, readings);
            if row.is_some() {
                self.convert(readings);
            }
            return row;
        };
        // The usual delimiters and separators as constants (a copy of the
        // loop each, two registers free for it), the others as read.
        // A layout with missing-value texts compares each field with them:
        // a loop of its own, so that the others' stays as short.
        let comma = self.table.decimal_comma;
        let sep = if comma { b',' } else { b'.' };
        let codes = self.codes;
        if let Some(counts) = self.straight {
            let row = match (codes, delim, comma) {
                (NO_CODES, b';', true) => {
                    self.straight_in::<NO_CODES>(buf, start, readings, counts, b';', b',')
                }
                (NO_CODES, b',', false) => {
                    self.straight_in::<NO_CODES>(buf, start, readings, counts, b',', b'.')
                }
                (NO_CODES, ..) => {
                    self.straight_in::<NO_CODES>(buf, start, readings, counts, delim, sep)
                }
                (TEXT_CODES, b';', true) => {
                    self.straight_in::<TEXT_CODES>(buf, start, readings, counts, b';', b',')
                }
                (TEXT_CODES, ..) => {
                    self.straight_in::<TEXT_CODES>(buf, start, readings, counts, delim, sep)
                }
                _ => self.straight_in::<NUMBER_CODES>(buf, start, readings, counts, delim, sep),
            };
            if let Some(row) = row {
                if row.is_some() {
                    self.convert(readings);
                }
                return row;
            }
        }
        if codes != NO_CODES || !self.converted.is_empty() {
            let row = match (codes, delim, comma) {
                (NO_CODES, ..) => self.one_pass_in::<NO_CODES>(buf, start, readings, delim, sep),
                (TEXT_CODES, b';', true) => {
                    self.one_pass_in::<TEXT_CODES>(buf, start, readings, b';', b',')
                }
                (TEXT_CODES, b',', false) => {
                    self.one_pass_in::<TEXT_CODES>(buf, start, readings, b',', b'.')
                }
                (TEXT_CODES, ..) => {
                    self.one_pass_in::<TEXT_CODES>(buf, start, readings, delim, sep)
                }
                _ => self.one_pass_in::<NUMBER_CODES>(buf, start, readings, delim, sep),
            };
            if row.is_some() {
                self.convert(readings);
            }
            return row;
        }
        match (delim, comma) {
            (b';', true) => self.one_pass_in::<NO_CODES>(buf, start, readings, b';', b','),
            (b',', false) => self.one_pass_in::<NO_CODES>(buf, start, readings, b',', b'.'),
            (b';', false) => self.one_pass_in::<NO_CODES>(buf, start, readings, b';', b'.'),
            (b'\t', false) => self.one_pass_in::<NO_CODES>(buf, start, readings, b'\t', b'.'),
            (b'\t', true) => self.one_pass_in::<NO_CODES>(buf, start, readings, b'\t', b','),
            _ => self.one_pass_in::<NO_CODES>(buf, start, readings, delim, sep),
        }
    }

    /// [`Declared::one_pass`] of a whitespace layout: the plan's fields
    /// separated by runs of spaces and tabs (leading and trailing ones
    /// ignored), as [`split_whitespace`] splits them, every field read as
    /// [`Declared::one_pass_in`] reads it (a time column through the memo and
    /// the zone's span, [`Clock::joined`]). `None` for any other row.
    fn one_pass_blank(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
    ) -> Option<(Timestamp, usize)> {
        let blank = |c: &u8| matches!(c, b' ' | b'\t');
        // A field's length: up to a space, a tab or a line end.
        let field = |b: &[u8]| {
            b.iter()
                .position(|c| matches!(c, b' ' | b'\t' | b'\n' | b'\r'))
                .unwrap_or(b.len())
        };
        let plan = self.plan.as_deref()?;
        let table = &*self.table;
        if may_be_comment(table, buf.get(start..)?) {
            return None;
        }
        let sep = if table.decimal_comma { b',' } else { b'.' };
        let (codes, lens) = (&table.missing[..], self.code_lens);
        let mut p = start;
        let mut time = None;
        let mut flagged = 0u64;
        let mut parts = [(0usize, 0usize); TIME_PARTS];
        for (i, step) in plan.iter().enumerate() {
            let from = p;
            while buf.get(p).is_some_and(blank) {
                p += 1;
            }
            if i > 0 && p == from {
                return None;
            }
            let rest = buf.get(p..)?;
            if matches!(rest.first(), None | Some(b'\n' | b'\r')) {
                // Fewer fields than the plan: the general way says so.
                return None;
            }
            let n = match *step {
                Step::Time => {
                    let n = field(rest);
                    time = Some(self.clock.joined(table, &rest[..n])?);
                    n
                }
                Step::TimePart(k) => {
                    let n = field(rest);
                    *parts.get_mut(k)? = (p, p + n);
                    n
                }
                // The numbers stop at the first byte that is not theirs; a
                // space or tab as the delimiter (a field is never empty).
                Step::Value(c) => {
                    let out = readings.get_mut(c)?;
                    number_or_code(rest, false, sep, codes, lens, self.codes, out)?
                }
                Step::Counts(c) => {
                    let out = readings.get_mut(c)?;
                    number_or_code(rest, true, sep, codes, lens, self.codes, out)?
                }
                Step::Quality(c) => {
                    let n = field(rest);
                    if !is_good(table, c, &rest[..n]) {
                        flagged |= 1 << c;
                    }
                    n
                }
                Step::Filter => {
                    let n = field(rest);
                    if !kept(table, &rest[..n]) {
                        // The fields after it: each a run of blanks, then
                        // one of other bytes (trailing blanks are no field).
                        self.other = other_end(buf, p + n, i + 1, self.fields, self.exact, |b| {
                            let k = b.iter().take_while(|c| blank(c)).count();
                            let f = field(&b[k..]);
                            (k > 0).then_some((k + f, f > 0))
                        });
                        return None;
                    }
                    n
                }
                Step::Skip => field(rest),
            };
            p += n;
            if !matches!(buf.get(p), None | Some(b' ' | b'\t' | b'\n' | b'\r')) {
                return None;
            }
        }
        while buf.get(p).is_some_and(blank) {
            p += 1;
        }
        if !self.exact && !matches!(buf.get(p), None | Some(b'\n' | b'\r')) {
            // At least the fields read: the rest of the row is not read.
            p += field_len(buf.get(p..)?, b'\n');
        }
        if !matches!(buf.get(p), None | Some(b'\n' | b'\r')) {
            return None;
        }
        flag(readings, flagged)?;
        if time.is_none() {
            let parts = parts.get(..self.time.len())?;
            time = self.clock.parts(table, buf, parts);
        }
        Some((time?, p))
    }

    /// Values in another unit than their channel's, converted as the general
    /// way converts them (after a row is read in one pass).
    #[inline(always)]
    fn convert(&self, readings: &mut [Reading]) {
        for &(c, conv) in &self.converted {
            if let Some(Reading::Value(x)) = readings.get_mut(c) {
                *x = conv.apply(*x);
            }
        }
    }

    /// [`Declared::one_pass`] with `delim` as the delimiter and `sep` as the
    /// decimal separator (the table's); `CODES`: how its missing-value texts
    /// are tested ([`codes_kind`]).
    #[inline(always)]
    fn one_pass_in<const CODES: u8>(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
        delim: u8,
        sep: u8,
    ) -> Option<(Timestamp, usize)> {
        let plan = self.plan.as_deref()?;
        let table = &*self.table;
        let (codes, lens) = (&table.missing[..], self.code_lens);
        if may_be_comment(table, buf.get(start..)?) {
            return None;
        }
        let mut p = start;
        let mut time = None;
        // Channels (below `MAX_CHANNELS`, 32) whose quality code is bad.
        let mut flagged = 0u64;
        // The spans of the time columns, when there are several.
        let mut parts = [(0usize, 0usize); TIME_PARTS];
        for (i, step) in plan.iter().enumerate() {
            if i > 0 {
                if buf.get(p) != Some(&delim) {
                    return None;
                }
                p += 1;
            }
            let rest = buf.get(p..)?;
            match *step {
                Step::Time => {
                    let (t, n) = self.clock.field(table, rest, delim)?;
                    time = Some(t);
                    p += n;
                }
                Step::Value(c) => {
                    let out = readings.get_mut(c)?;
                    p += coded::<CODES>(rest, false, sep, delim, codes, lens, out)?;
                }
                Step::Counts(c) => {
                    let out = readings.get_mut(c)?;
                    p += coded::<CODES>(rest, true, sep, delim, codes, lens, out)?;
                }
                Step::TimePart(k) => {
                    let n = field_len(rest, delim);
                    *parts.get_mut(k)? = (p, p + n);
                    p += n;
                }
                Step::Quality(c) => {
                    let n = field_len(rest, delim);
                    if !is_good(table, c, &rest[..n]) {
                        flagged |= 1 << c;
                    }
                    p += n;
                }
                Step::Filter => {
                    let n = field_len(rest, delim);
                    if !kept(table, &rest[..n]) {
                        self.other = other_end(buf, p + n, i + 1, self.fields, self.exact, |b| {
                            delimited_field(b, delim)
                        });
                        return None;
                    }
                    p += n;
                }
                Step::Skip => p += field_len(rest, delim),
            }
        }
        if !self.exact && buf.get(p) == Some(&delim) {
            // At least the fields read: the rest of the row is not read.
            p += field_len(buf.get(p..)?, b'\n');
        }
        match buf.get(p) {
            None | Some(b'\n' | b'\r') => {
                // Readings whose code is bad are flagged, whatever they read.
                flag(readings, flagged)?;
                if time.is_none() {
                    let parts = parts.get(..self.time.len())?;
                    time = self.clock.parts(table, buf, parts);
                }
                Some((time?, p))
            }
            Some(_) => None,
        }
    }

    /// [`Declared::one_pass`] of a straight plan ([`Declared::straight`]):
    /// `Some(row)` as [`Declared::one_pass_in`] reads it (`CODES` of
    /// [`codes_kind`]), `None` when `readings` is not as wide as the plan.
    #[inline(always)]
    fn straight_in<const CODES: u8>(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading],
        counts: u64,
        delim: u8,
        sep: u8,
    ) -> Option<Option<(Timestamp, usize)>> {
        let n = self.chan.len();
        by_width!(n, N => {
            let slot = readings.first_chunk_mut::<N>()?;
            // Quality codes in a copy of the loop of their own, so that the
            // others' stays as short.
            match self.straight_quality {
                0 => self.one_pass_straight::<N, CODES, false>(buf, start, slot, counts, delim, sep),
                _ => self.one_pass_straight::<N, CODES, true>(buf, start, slot, counts, delim, sep),
            }
        })
    }

    /// [`Declared::one_pass_in`] of a row whose fields are the time and then
    /// the `N` channels in order: the field loop unrolled, no plan read, as
    /// [`Parser::parse_straight`] reads the own CSV. The same result.
    #[inline(always)]
    fn one_pass_straight<const N: usize, const CODES: u8, const QUALITY: bool>(
        &mut self,
        buf: &[u8],
        start: usize,
        readings: &mut [Reading; N],
        counts: u64,
        delim: u8,
        sep: u8,
    ) -> Option<(Timestamp, usize)> {
        let table = &*self.table;
        let (codes, lens) = (&table.missing[..], self.code_lens);
        if may_be_comment(table, buf.get(start..)?) {
            return None;
        }
        let mut start = start;
        if self.straight_filter {
            // The filter's column first: another station's row is passed
            // over as `one_pass_in` passes it over.
            let rest = buf.get(start..)?;
            let n = field_len(rest, delim);
            if !kept(table, &rest[..n]) {
                self.other = other_end(buf, start + n, 1, self.fields, self.exact, |b| {
                    delimited_field(b, delim)
                });
                return None;
            }
            if buf.get(start + n) != Some(&delim) {
                return None;
            }
            start += n + 1;
        }
        let rest = buf.get(start..)?;
        let (t, n) = match self.straight_parts {
            0 => self.clock.field(table, rest, delim)?,
            k => self.clock.fields(table, buf, start, k, delim)?,
        };
        let mut p = start + n;
        let mut flagged = 0u64;
        for (c, r) in readings.iter_mut().enumerate() {
            if buf.get(p) != Some(&delim) {
                return None;
            }
            p += 1;
            let rest = buf.get(p..)?;
            let count = counts >> c & 1 == 1;
            p += coded::<CODES>(rest, count, sep, delim, codes, lens, r)?;
            if QUALITY && self.straight_quality >> c & 1 == 1 {
                if buf.get(p) != Some(&delim) {
                    return None;
                }
                p += 1;
                let rest = buf.get(p..)?;
                let n = field_len(rest, delim);
                if !is_good(table, c, &rest[..n]) {
                    flagged |= 1 << c;
                }
                p += n;
            }
        }
        if !self.exact && buf.get(p) == Some(&delim) {
            p += field_len(buf.get(p..)?, b'\n');
        }
        match buf.get(p) {
            None | Some(b'\n' | b'\r') => {
                // Readings whose code is bad are flagged, whatever they read.
                if QUALITY {
                    flag(readings, flagged)?;
                }
                Some((t, p))
            }
            Some(_) => None,
        }
    }

    fn name(&self, i: usize) -> String {
        self.names
            .get(i)
            .cloned()
            .unwrap_or_else(|| format!("column {}", i + 1))
    }

    /// Reads one row's fields into `readings`; its time, or why it is bad
    /// (or [`BadKind::Filtered`] for a row of another station).
    fn row(
        &mut self,
        f: &impl Fields,
        readings: &mut [Reading],
        ids: &[String],
    ) -> Result<Timestamp, BadRow> {
        let n = f.count();
        if (self.exact && n != self.fields) || n < self.fields {
            let what = if self.exact { "" } else { "at least " };
            return Err(BadRow::new(
                BadKind::FieldCount,
                None,
                format!(
                    "expected {what}{} fields as the station file's [{}] declares, found {n}",
                    self.fields, self.table.section
                ),
            ));
        }
        let table = &*self.table;
        if let (Some(i), Some(flt)) = (self.filter, &table.filter) {
            if f.field(i).trim_ascii() != flt.value.as_slice() {
                return Err(BadRow::other_station());
            }
        }
        let text: &[u8] = if let [i] = self.time[..] {
            f.field(i)
        } else {
            self.tbuf.clear();
            for (k, &i) in self.time.iter().enumerate() {
                if k > 0 {
                    self.tbuf.push(b' ');
                }
                self.tbuf.extend_from_slice(f.field(i).trim_ascii());
            }
            &self.tbuf
        };
        let t = match table
            .time
            .parse_with(text, &mut self.clock.memo, &mut self.clock.zone)
        {
            Ok(t) => t,
            Err(e) => {
                let i = self.time[0];
                let kind = if e == TimeProblem::Parse(TimeError::Encoding) {
                    BadKind::Encoding
                } else {
                    BadKind::Time
                };
                return Err(BadRow::new(
                    kind,
                    Some((i, self.name(i))),
                    format!("{e}, found {}", shown(text)),
                ));
            }
        };
        let sep = if table.decimal_comma { b',' } else { b'.' };
        // With no missing-value texts, a plain number is a reading as it is.
        let no_codes = table.missing.is_empty();
        for (c, &(i, decode, q, plain)) in self.chan.iter().enumerate() {
            // A plain number as it stands (no spaces to trim, no code to
            // compare, nothing to convert) goes straight in.
            if plain {
                let raw = f.field(i);
                match decode {
                    Decode::Value => {
                        if let Some(v) = fast_f64_sep(raw, sep) {
                            readings[c] = Reading::Value(v);
                            continue;
                        }
                    }
                    Decode::Counts => {
                        if let Some(k) = fast_i32(raw) {
                            readings[c] = Reading::Counts(k);
                            continue;
                        }
                    }
                }
            }
            let src = &table.sources[c];
            // A quality code not among the good ones: the source marked the
            // reading bad, whatever its value (counted as flagged, never read).
            if let (Some(qi), Some(quality)) = (q, &src.quality) {
                let code = f.field(qi).trim_ascii();
                if !quality.good.iter().any(|g| g.as_slice() == code) {
                    readings[c] = Reading::Flagged;
                    continue;
                }
            }
            let raw = f.field(i);
            let fast = match decode {
                Decode::Value => fast_f64_sep(raw, sep).map(Reading::Value),
                Decode::Counts => fast_i32(raw).map(Reading::Counts),
            };
            let reading = match fast {
                Some(r) if no_codes => r,
                _ => {
                    let field = raw.trim_ascii();
                    if field.is_empty() || table.missing.iter().any(|m| m == field) {
                        Reading::Missing
                    } else if let Some(r) = fast {
                        r
                    } else if table.decimal_comma && field.contains(&b',') {
                        let mut buf = [0u8; 64];
                        let Some(b) = buf.get_mut(..field.len()) else {
                            return Err(value_error(i, &ids[c], BadKind::Value, decode, field));
                        };
                        for (o, &x) in b.iter_mut().zip(field) {
                            *o = if x == b',' { b'.' } else { x };
                        }
                        parse_reading(b, decode)
                            .map_err(|k| value_error(i, &ids[c], k, decode, field))?
                    } else {
                        parse_reading(field, decode)
                            .map_err(|k| value_error(i, &ids[c], k, decode, field))?
                    }
                }
            };
            let reading = match (reading, src.convert) {
                (Reading::Value(v), Some(conv)) => Reading::Value(conv.apply(v)),
                (r, _) => r,
            };
            readings[c] = reading;
        }
        Ok(t)
    }
}

#[cold]
fn time_error(i: usize, e: TimeError, field: &[u8]) -> BadRow {
    let kind = if e == TimeError::Encoding {
        BadKind::Encoding
    } else {
        BadKind::Time
    };
    BadRow::new(
        kind,
        Some((i, "time".into())),
        format!("{e}, found {}", shown(field)),
    )
}

#[cold]
fn value_error(i: usize, id: &str, kind: BadKind, decode: Decode, field: &[u8]) -> BadRow {
    let msg = match (kind, decode) {
        (BadKind::Encoding, _) => format!("not valid UTF-8: {}", shown(field)),
        (_, Decode::Value) => format!(
            "expected a number, NaN or an empty field, found {}",
            shown(field)
        ),
        (_, Decode::Counts) => format!(
            "expected integer counts (a 32-bit integer), NaN or an empty field, found {}",
            shown(field)
        ),
    };
    BadRow::new(kind, Some((i, id.to_string())), msg)
}

fn header<'f>(
    path: &Path,
    line: u64,
    fields: impl Iterator<Item = &'f [u8]>,
    cfg: &StationFile,
) -> Result<Vec<Col>> {
    let at = |msg: String| anyhow!("{}:{line}: {msg}", path.display());
    let mut cols = Vec::new();
    let mut seen = vec![false; cfg.channels.len()];
    let mut time_seen = false;
    for (i, raw) in fields.enumerate() {
        let raw = if i == 0 {
            raw.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(raw)
        } else {
            raw
        };
        let name = std::str::from_utf8(raw.trim_ascii())
            .map_err(|_| at(format!("header field {}: not valid UTF-8", i + 1)))?;
        if name == "time" {
            if time_seen {
                return Err(at(format!(
                    "header field {}: column \"time\" appears twice",
                    i + 1
                )));
            }
            time_seen = true;
            cols.push(Col::Time);
            continue;
        }
        let Some(c) = cfg.channels.iter().position(|c| c.id == name) else {
            let ids: Vec<&str> = cfg.channels.iter().map(|c| c.id.as_str()).collect();
            return Err(at(format!(
                "header field {}: unknown column {name:?}: not a channel of {} (expected \"time\" and {})",
                i + 1,
                cfg.path.display(),
                ids.join(", ")
            )));
        };
        if seen[c] {
            return Err(at(format!(
                "header field {}: column {name:?} appears twice",
                i + 1
            )));
        }
        seen[c] = true;
        cols.push(match cfg.channels[c].decode {
            Decode::Value => Col::Value(c),
            Decode::Counts => Col::Counts(c),
        });
    }
    if !time_seen {
        return Err(at(
            "header: no \"time\" column (expected `time,<channel ids>`)".into(),
        ));
    }
    let missing: Vec<&str> = cfg
        .channels
        .iter()
        .zip(&seen)
        .filter(|(_, s)| !**s)
        .map(|(c, _)| c.id.as_str())
        .collect();
    if !missing.is_empty() {
        return Err(at(format!(
            "header: no column for channel {} of {}",
            missing.join(", "),
            cfg.path.display()
        )));
    }
    Ok(cols)
}

/// [`Parser::straight`] of `cols`: the counts mask when they are the time
/// and then every channel in station-file order (1 to 64 channels).
fn straight_columns(cols: &[Col]) -> Option<u64> {
    let (Col::Time, chans) = cols.split_first()? else {
        return None;
    };
    if chans.is_empty() || chans.len() > 64 {
        return None;
    }
    let mut counts = 0u64;
    for (i, col) in chans.iter().enumerate() {
        match *col {
            Col::Value(c) if c == i => {}
            Col::Counts(c) if c == i => counts |= 1 << i,
            _ => return None,
        }
    }
    Some(counts)
}

fn shown(b: &[u8]) -> String {
    let s = String::from_utf8_lossy(b);
    if s.chars().count() > 40 {
        format!("{:?}...", s.chars().take(40).collect::<String>())
    } else {
        format!("{s:?}")
    }
}

/// Sample times with a cache of the last RFC 3339 date and hour.
///
/// Consecutive samples share `YYYY-MM-DDTHH` and their zone; for a
/// `YYYY-MM-DDTHH:MM:SS[.fff]ZONE` whose first 13 bytes and zone (`Z` or
/// `±HH:MM`) equal the cached ones, the time is the cached hour plus minutes,
/// seconds and milliseconds, exactly what [`parse_time`] computes (civil time
/// is affine in them within an hour, and the offset is fixed). Plain integer epoch seconds are read directly. Everything else
/// goes to [`parse_time`].
#[derive(Clone, Debug, Default)]
pub struct TimeCache {
    prefix: [u8; 13],
    /// What follows the seconds (and their fraction) in the cached hour's
    /// times: `Z` (`zone_len` 1; `z` reads alike) or an offset `±HH:MM` (6).
    zone: [u8; 6],
    zone_len: u8,
    /// Milliseconds of `prefix` in `zone` at minute 0, second 0; `None` when
    /// empty.
    hour_ms: Option<i64>,
}

impl TimeCache {
    /// The time at the start of `b` if it is a cached RFC 3339 hour
    /// (`YYYY-MM-DDTHH:MM:SS`, a fraction of a second to the millisecond,
    /// the cached zone) or integer epoch seconds, and its length; the caller
    /// checks that a delimiter follows. `None` otherwise.
    #[inline]
    pub fn parse_plain(&self, b: &[u8]) -> Option<(Timestamp, usize)> {
        if let (Some(base), Some(f)) = (self.hour_ms, b.get(..20)) {
            if f[..13] == self.prefix {
                let (ms, n) = self.past_hour(b)?;
                return Some((Timestamp::from_millis(base + ms), n));
            }
        }
        // At most 11 digits (year 5138), inside the supported span: longer
        // numbers take the checked way of `parse_time`.
        let n = b.iter().take(12).take_while(|c| c.is_ascii_digit()).count();
        if n == 0 || n > 11 {
            return None;
        }
        let secs = b[..n]
            .iter()
            .fold(0i64, |s, c| s * 10 + i64::from(c - b'0'));
        Some((Timestamp::from_millis(secs * 1000), n))
    }

    /// The milliseconds past the cached hour of the time at the start of `b`
    /// (its first 13 bytes are the cached ones) and the time's length:
    /// `:MM:SSZ` at once; else `:MM:SS`, a fraction (digits past the third
    /// all `0`) and the cached zone ([`TimeCache::past_hour_slow`]).
    #[inline(always)]
    fn past_hour(&self, b: &[u8]) -> Option<(i64, usize)> {
        if self.zone_len == 1 {
            if let Some(ms) = minute_second_ms(b) {
                return Some((ms, 20));
            }
        }
        self.past_hour_slow(b)
    }

    #[inline(never)]
    fn past_hour_slow(&self, b: &[u8]) -> Option<(i64, usize)> {
        let &[b':', m1, m2, b':', s1, s2] = b.get(13..19)? else {
            return None;
        };
        let d = |c: u8| c.wrapping_sub(b'0');
        let (m1, m2, s1, s2) = (d(m1), d(m2), d(s1), d(s2));
        if !(m1 < 6 && m2 < 10 && s1 < 6 && s2 < 10) {
            return None;
        }
        let mut ms = (i64::from(m1 * 10 + m2) * 60 + i64::from(s1 * 10 + s2)) * 1000;
        let mut i = 19;
        if b.get(i) == Some(&b'.') {
            i += 1;
            let from = i;
            let mut frac = 0i64;
            while let Some(&c) = b.get(i) {
                let x = d(c);
                if x >= 10 {
                    break;
                }
                match i - from {
                    0..=2 => frac = frac * 10 + i64::from(x),
                    // Finer than a millisecond: `parse_time` refuses it.
                    _ if x != 0 => return None,
                    _ => {}
                }
                i += 1;
            }
            let k = i - from;
            if k == 0 {
                return None;
            }
            for _ in k.min(3)..3 {
                frac *= 10;
            }
            ms += frac;
        }
        let zone = self.zone.get(..usize::from(self.zone_len))?;
        let z = b.get(i..i + zone.len())?;
        if z == zone || (zone == b"Z" && z == b"z") {
            Some((ms, i + zone.len()))
        } else {
            None
        }
    }

    /// Parses one time field.
    #[inline]
    pub fn parse(&mut self, f: &[u8]) -> Result<Timestamp, TimeError> {
        if let (Some(base), Some(p)) = (self.hour_ms, f.get(..13)) {
            if *p == self.prefix {
                if let Some((ms, n)) = self.past_hour(f) {
                    if n == f.len() {
                        return Ok(Timestamp::from_millis(base + ms));
                    }
                }
            }
        }
        if !f.is_empty() && f.len() <= 11 && f.iter().all(u8::is_ascii_digit) {
            let secs = f.iter().fold(0i64, |s, c| s * 10 + i64::from(c - b'0'));
            return Ok(Timestamp::from_millis(secs * 1000));
        }
        let t = parse_time(f)?;
        // The hour of an RFC 3339 time, for the times after it: its zone is
        // what follows the seconds and their fraction.
        if let (Some(p), Some(at)) = (f.get(..13), f.get(19..)) {
            let frac = match at.first() {
                Some(b'.') => 1 + at[1..].iter().take_while(|c| c.is_ascii_digit()).count(),
                _ => 0,
            };
            let zone = &at[frac..];
            if matches!(zone.len(), 1 | 6) {
                let mut next = TimeCache {
                    zone_len: zone.len() as u8,
                    ..TimeCache::default()
                };
                next.prefix.copy_from_slice(p);
                next.zone[..zone.len()].copy_from_slice(zone);
                if zone == b"z" {
                    next.zone[0] = b'Z';
                }
                if let Some((ms, n)) = next.past_hour_slow(f) {
                    if n == f.len() {
                        next.hour_ms = Some(t.millis() - ms);
                        *self = next;
                    }
                }
            }
        }
        Ok(t)
    }
}

/// `:MM:SSZ` at bytes 13..20 as milliseconds, if it has that shape with
/// minutes and seconds below 60.
#[inline]
fn minute_second_ms(f: &[u8]) -> Option<i64> {
    let &[b':', m1, m2, b':', s1, s2, b'Z' | b'z'] = f.get(13..20)? else {
        return None;
    };
    let d = |c: u8| c.wrapping_sub(b'0');
    let (m1, m2, s1, s2) = (d(m1), d(m2), d(s1), d(s2));
    if m1 < 6 && m2 < 10 && s1 < 6 && s2 < 10 {
        Some((i64::from(m1 * 10 + m2) * 60 + i64::from(s1 * 10 + s2)) * 1000)
    } else {
        None
    }
}

/// Powers of ten exactly representable in `f64`.
const POW10: [f64; 16] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
];

/// A plain decimal (`[+-]digits[.digits]`, at most 15 digits) read exactly:
/// the digits as an integer below 2^53 divided by an exact power of ten is one
/// correctly rounded IEEE division, the same bits as `str::parse::<f64>`
/// (W. D. Clinger, "How to read floating point numbers accurately", 1990, the
/// fast path). `None` for anything else.
#[inline]
fn fast_f64(b: &[u8]) -> Option<f64> {
    fast_f64_sep(b, b'.')
}

/// [`fast_f64`] with `sep` as the decimal separator (`.` or `,`).
#[inline]
fn fast_f64_sep(b: &[u8], sep: u8) -> Option<f64> {
    let (neg, digits) = match b.first()? {
        b'-' => (true, &b[1..]),
        b'+' => (false, &b[1..]),
        _ => (false, b),
    };
    let mut m = 0u64;
    let mut n = 0usize;
    let mut dot: Option<usize> = None;
    for (i, &c) in digits.iter().enumerate() {
        let d = c.wrapping_sub(b'0');
        if d < 10 {
            m = m * 10 + u64::from(d);
            n += 1;
            if n > 15 {
                return None;
            }
        } else if c == sep && dot.is_none() {
            dot = Some(i);
        } else {
            return None;
        }
    }
    if n == 0 {
        return None;
    }
    let frac = dot.map_or(0, |p| digits.len() - p - 1);
    let v = quotient(m, frac);
    Some(if neg { -v } else { v })
}

/// A plain decimal at the start of `b` ([`fast_f64`]), or an empty field
/// (missing) when a delimiter comes first, and its length; the caller checks
/// that a delimiter follows.
#[inline]
fn plain_f64(b: &[u8]) -> Option<(Reading, usize)> {
    plain_f64_in::<false>(b, b'.', b',', &[])
}

/// [`plain_f64`] with `sep` as the decimal separator and `delim` as the
/// field delimiter; with `NAN`, [`plain_f64_nan`], a `NaN` that is one of
/// `codes` (missing-value texts) read as missing.
#[inline(always)]
fn plain_f64_in<const NAN: bool>(
    b: &[u8],
    sep: u8,
    delim: u8,
    codes: &[Vec<u8>],
) -> Option<(Reading, usize)> {
    let (neg, skip) = match b.first() {
        None | Some(b'\n' | b'\r') => return Some((Reading::Missing, 0)),
        Some(&c) if c == delim => return Some((Reading::Missing, 0)),
        Some(b'-') => (true, 1),
        Some(b'+') => (false, 1),
        Some(_) => (false, 0),
    };
    // Digits accumulate with wrapping arithmetic; more than 15 of them are
    // refused after the loops, before `m` is used. The whole digits, then
    // (after one `sep`) the decimals: two loops, each with one test a byte.
    let mut m = 0u64;
    let mut i = skip;
    while let Some(&c) = b.get(i) {
        let d = c.wrapping_sub(b'0');
        if d >= 10 {
            break;
        }
        m = m.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    let whole = i - skip;
    let mut frac = 0;
    if b.get(i) == Some(&sep) {
        i += 1;
        let from = i;
        while let Some(&c) = b.get(i) {
            let d = c.wrapping_sub(b'0');
            if d >= 10 {
                break;
            }
            m = m.wrapping_mul(10).wrapping_add(u64::from(d));
            i += 1;
        }
        frac = i - from;
    }
    let n = whole + frac;
    if n == 0 || n > 15 {
        if NAN
            && i == skip
            && b.get(skip..skip + 3)
                .is_some_and(|w| w.eq_ignore_ascii_case(b"nan"))
        {
            let v = if neg { -f64::NAN } else { f64::NAN };
            let n = skip + 3;
            if is_code(&b[..n], codes) {
                return Some((Reading::Missing, n));
            }
            return Some((Reading::Value(v), n));
        }
        return None;
    }
    let v = quotient(m, frac);
    Some((Reading::Value(if neg { -v } else { v }), i))
}

/// [`plain_f64_in`], or `NaN` in any case after an optional sign (a
/// logger's missing reading): the bits `str::parse::<f64>` gives it, as the
/// general path would. For the column plans of [`Parser::parse_planned`] and
/// [`Declared::one_pass`]; the straight rows' loop ([`Parser::parse_straight`])
/// leaves such a row to them, and runs faster without the test
/// (host-cli/PERF.md, "NaN and missing-value texts in one pass").
#[inline(always)]
fn plain_f64_nan(b: &[u8], sep: u8, delim: u8) -> Option<(Reading, usize)> {
    plain_f64_in::<true>(b, sep, delim, &[])
}

/// [`plain_i32_in`], or unsigned `NaN` in any case: a missing count, as the
/// general path reads it ([`plain_f64_nan`]).
#[inline(always)]
fn plain_i32_nan(b: &[u8], delim: u8) -> Option<(Reading, usize)> {
    plain_i32_in::<true>(b, delim)
}

/// Entries of the quotient tables: plain values below 819.2 (one decimal) and
/// 81.92 (two decimals), the usual ranges of wind, temperature and humidity.
const TABLE: usize = 8192;

/// `i / 10^k` for every `i < TABLE`, divided at compile time: constant
/// evaluation of `f64` division is IEEE 754 correctly rounded, the same bits
/// as the division at run time, which is slow (a long-latency instruction).
const fn quotients(k: usize) -> [f64; TABLE] {
    let mut t = [0.0; TABLE];
    let mut i = 0;
    while i < TABLE {
        t[i] = i as f64 / POW10[k];
        i += 1;
    }
    t
}

static TENTHS: [f64; TABLE] = quotients(1);
static HUNDREDTHS: [f64; TABLE] = quotients(2);

/// `m / 10^frac`, correctly rounded (`m < 2^53`, `frac <= 15`).
#[inline(always)]
fn quotient(m: u64, frac: usize) -> f64 {
    match (frac, usize::try_from(m)) {
        (0, _) => m as f64,
        (1, Ok(i)) if i < TABLE => TENTHS[i],
        (2, Ok(i)) if i < TABLE => HUNDREDTHS[i],
        _ => m as f64 / POW10[frac],
    }
}

/// Integer counts at the start of `b` ([`fast_i32`]), or an empty field, and
/// its length; the caller checks that a delimiter follows.
#[inline]
fn plain_i32(b: &[u8]) -> Option<(Reading, usize)> {
    plain_i32_in::<false>(b, b',')
}

/// [`plain_i32`] with `delim` as the field delimiter; with `NAN`,
/// [`plain_i32_nan`].
#[inline(always)]
fn plain_i32_in<const NAN: bool>(b: &[u8], delim: u8) -> Option<(Reading, usize)> {
    let (neg, skip) = match b.first() {
        None | Some(b'\n' | b'\r') => return Some((Reading::Missing, 0)),
        Some(&c) if c == delim => return Some((Reading::Missing, 0)),
        Some(b'-') => (true, 1),
        Some(b'+') => (false, 1),
        Some(_) => (false, 0),
    };
    let mut k = 0i32;
    let mut i = skip;
    while let Some(&c) = b.get(i) {
        let d = c.wrapping_sub(b'0');
        if d >= 10 {
            break;
        }
        if i - skip == 9 {
            return None;
        }
        k = k * 10 + i32::from(d);
        i += 1;
    }
    if i == skip {
        // The sign, if any, is among the three bytes: only unsigned `NaN`.
        if NAN && b.get(..3).is_some_and(|w| w.eq_ignore_ascii_case(b"nan")) {
            return Some((Reading::Missing, 3));
        }
        return None;
    }
    Some((Reading::Counts(if neg { -k } else { k }), i))
}

/// Integer counts `[+-]digits` of at most 9 digits, read directly.
#[inline]
fn fast_i32(b: &[u8]) -> Option<i32> {
    let (neg, digits) = match b.first()? {
        b'-' => (true, &b[1..]),
        b'+' => (false, &b[1..]),
        _ => (false, b),
    };
    if digits.is_empty() || digits.len() > 9 {
        return None;
    }
    let mut k = 0i32;
    for &c in digits {
        let d = c.wrapping_sub(b'0');
        if d >= 10 {
            return None;
        }
        k = k * 10 + i32::from(d);
    }
    Some(if neg { -k } else { k })
}

/// One reading from its field. Empty is `Missing`; NaN is passed on (values)
/// or `Missing` (counts); missing-value codes are passed on for the core to count.
#[inline]
fn parse_reading(field: &[u8], decode: Decode) -> Result<Reading, BadKind> {
    match decode {
        Decode::Value => {
            if let Some(v) = fast_f64(field) {
                return Ok(Reading::Value(v));
            }
        }
        Decode::Counts => {
            if let Some(k) = fast_i32(field) {
                return Ok(Reading::Counts(k));
            }
        }
    }
    parse_reading_slow(field, decode)
}

#[cold]
fn parse_reading_slow(field: &[u8], decode: Decode) -> Result<Reading, BadKind> {
    let b = field.trim_ascii();
    if b.is_empty() {
        return Ok(Reading::Missing);
    }
    let s = std::str::from_utf8(b).map_err(|_| BadKind::Encoding)?;
    match decode {
        Decode::Value => s
            .parse::<f64>()
            .map(Reading::Value)
            .map_err(|_| BadKind::Value),
        Decode::Counts => match s.parse::<i32>() {
            Ok(k) => Ok(Reading::Counts(k)),
            Err(_) if s.eq_ignore_ascii_case("nan") => Ok(Reading::Missing),
            Err(_) => Err(BadKind::Value),
        },
    }
}

/// A check for the fuzz target `layouts` ([`crate::fuzzing::layouts`]): the
/// one-pass reader of a declared layout ([`Declared::one_pass`]) against the
/// general way ([`Parser::parse_declared`]) on `buf`, data rows without a
/// preamble, each reader a clone of `parser` that sees every record in turn.
/// Where the one pass reads a row, the general way reads the same time and
/// readings, bit for bit, and the row ends where the record does; where it
/// passes a row over as another station's, the general way counts it so.
/// Panics naming the record where they differ. Returns how many records the
/// one pass read, passed over and left to the general way; `None` for a
/// layout whose one pass writes only some channels ([`Parser::fills_rows`])
/// or a `buf` with a quote (the `csv` crate's). For tenmin's own CSV, its
/// straight loop and its column plan against the general way
/// ([`own_against`]).
pub fn one_pass_against_general(parser: &Parser, buf: &[u8]) -> Option<[u64; 3]> {
    one_pass_against(parser, parser, buf)
}

/// [`one_pass_against_general`] with the one pass by a clone of `one` and
/// the general way by a clone of `general`.
fn one_pass_against(one: &Parser, general: &Parser, buf: &[u8]) -> Option<[u64; 3]> {
    let parser = one;
    if buf.contains(&b'"') {
        return None;
    }
    let Some(delim) = parser.declared_delimiter() else {
        return Some(own_against(one, general, buf));
    };
    if !parser.fills_rows() {
        return None;
    }
    let (mut one, mut general) = (one.clone(), general.clone());
    let n = parser.ids.len();
    let (mut r1, mut r2) = (vec![Reading::Missing; n], vec![Reading::Missing; n]);
    let mut delims = Vec::new();
    let mut recs = Records::new(buf, 1);
    let mut counts = [0; 3];
    while let Some(i) = recs.skip_blank() {
        recs.pos = i;
        let (line, rec) = match delim {
            Some(d) => recs.next_delimited(d, &mut delims)?,
            None => {
                delims.clear();
                recs.next()?
            }
        };
        let shown = || format!("line {line}: {:?}", String::from_utf8_lossy(rec));
        let want = general.parse_declared(rec, &delims, &mut r2);
        let dec = one.declared.as_deref_mut()?;
        match dec.one_pass(buf, i, &mut r1) {
            Some((t, end)) => {
                assert_eq!(end, i + rec.len(), "{}: the row's end", shown());
                match &want {
                    Some(Ok(w)) => assert_eq!(t, *w, "{}: the time", shown()),
                    _ => panic!("{}: read in one pass, the general way: {want:?}", shown()),
                }
                assert_eq!(
                    reading_bits(&r1),
                    reading_bits(&r2),
                    "{}: the readings",
                    shown()
                );
                counts[0] += 1;
            }
            None => match dec.other.take() {
                Some(end) => {
                    assert!(
                        matches!(&want, Some(Err(e)) if e.is_other_station()),
                        "{}: passed over as another station's, the general way: {want:?}",
                        shown()
                    );
                    assert_eq!(end, i + rec.len(), "{}: the row's end", shown());
                    counts[1] += 1;
                }
                None => counts[2] += 1,
            },
        }
    }
    Some(counts)
}

/// The bits of readings, to compare them exactly (NaN's sign and payload
/// included).
fn reading_bits(r: &[Reading]) -> Vec<(u8, u64)> {
    r.iter()
        .map(|v| match *v {
            Reading::Value(f) => (0, f.to_bits()),
            Reading::Counts(k) => (1, u64::from(k as u32)),
            Reading::Missing => (2, 0),
            Reading::Flagged => (3, 0),
            Reading::Excluded => (4, 0),
        })
        .collect()
}

/// [`one_pass_against`] for tenmin's own CSV: each record read by the
/// straight loop ([`Parser::parse_plain`]) and by the column plan alone
/// ([`Parser::parse_planned`]) against the general way ([`Parser::parse`],
/// the record split at its commas first). Returns how many records the
/// straight loop read, 0, and how many it left.
fn own_against(one: &Parser, general: &Parser, buf: &[u8]) -> [u64; 3] {
    // The straight loop's parser and the plan's: each reads a row it leaves
    // the general way, as the replay does (which primes its time cache).
    let (mut plan, mut general) = (one.clone(), general.clone());
    let mut one = one.clone();
    let n = one.ids.len();
    let (mut r1, mut r2) = (vec![Reading::Missing; n], vec![Reading::Missing; n]);
    let mut scratch = vec![Reading::Missing; n];
    let mut commas = Vec::new();
    let mut recs = Records::new(buf, 1);
    let mut counts = [0; 3];
    while let Some(i) = recs.skip_blank() {
        recs.pos = i;
        let Some((line, rec)) = recs.next_split(&mut commas) else {
            break;
        };
        let shown = || format!("line {line}: {:?}", String::from_utf8_lossy(rec));
        r2.fill(Reading::Missing);
        let want = general.parse(rec, &commas, &mut r2);
        for straight in [true, false] {
            r1.fill(Reading::Missing);
            let p = if straight { &mut one } else { &mut plan };
            let got = if straight {
                p.parse_plain(buf, i, &mut r1)
            } else {
                p.parse_planned(buf, i, &mut r1)
            };
            let way = if straight { "straight" } else { "by its plan" };
            let Some((t, end)) = got else {
                let _ = p.parse(rec, &commas, &mut scratch);
                counts[2] += u64::from(straight);
                continue;
            };
            assert_eq!(end, i + rec.len(), "{}: the row's end, {way}", shown());
            match &want {
                Ok(w) => assert_eq!(t, *w, "{}: the time, {way}", shown()),
                Err(e) => panic!("{}: read {way}, the general way: {e:?}", shown()),
            }
            assert_eq!(
                reading_bits(&r1),
                reading_bits(&r2),
                "{}: the readings, {way}",
                shown()
            );
            counts[0] += u64::from(straight);
        }
    }
    counts
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn delimiters_found_with_the_record_end_are_those_of_the_record() {
        // Invented bytes: records of delimiters, terminators and other bytes,
        // against `Records::next` and a plain search, for every delimiter.
        let mut next = xorshift(0x9E37_79B9_7F4A_7C15u64);
        for len in [0usize, 1, 7, 8, 9, 15, 16, 17, 63, 64, 65, 300] {
            for _ in 0..40 {
                let buf: Vec<u8> = (0..len)
                    .map(|_| b";,\t\n\rab12 "[(next() % 10) as usize])
                    .collect();
                for delim in [b';', b',', b'\t'] {
                    let (mut a, mut b) = (Records::new(&buf, 1), Records::new(&buf, 1));
                    let mut at = Vec::new();
                    loop {
                        let got = a.next_delimited(delim, &mut at);
                        let want = b.next();
                        assert_eq!(got, want, "{buf:?}");
                        let Some((_, rec)) = want else { break };
                        let plain: Vec<u32> = rec
                            .iter()
                            .enumerate()
                            .filter(|(_, c)| **c == delim)
                            .map(|(i, _)| i as u32)
                            .collect();
                        assert_eq!(at, plain, "{rec:?}");
                        assert_eq!((a.line(), a.pos()), (b.line(), b.pos()));
                    }
                }
            }
        }
    }

    #[test]
    fn readings() {
        let v = |s: &str| parse_reading(s.as_bytes(), Decode::Value);
        let k = |s: &str| parse_reading(s.as_bytes(), Decode::Counts);
        assert_eq!(v("8.25"), Ok(Reading::Value(8.25)));
        assert_eq!(v(" 8.25 "), Ok(Reading::Value(8.25)));
        assert_eq!(v(""), Ok(Reading::Missing));
        assert_eq!(v("-999"), Ok(Reading::Value(-999.0)));
        assert!(matches!(v("NaN"), Ok(Reading::Value(x)) if x.is_nan()));
        assert_eq!(v("8,25"), Err(BadKind::Value));
        assert_eq!(v("abc"), Err(BadKind::Value));
        assert_eq!(
            parse_reading(b"8\xff", Decode::Value),
            Err(BadKind::Encoding)
        );
        assert_eq!(k("1234"), Ok(Reading::Counts(1234)));
        assert_eq!(k("-999"), Ok(Reading::Counts(-999)));
        assert_eq!(k("nan"), Ok(Reading::Missing));
        assert_eq!(k("12.5"), Err(BadKind::Value));
        assert_eq!(k("99999999999"), Err(BadKind::Value));
    }

    /// Every string over a small alphabet up to length 5, and random longer
    /// ones: the fast paths give exactly what the standard library's parsers
    /// give (Rust std `str::parse`, the reference), or step aside.
    #[test]
    fn fast_numbers_agree_with_std_parse() {
        const ALPHA: &[u8] = b"0159.+-e";
        let mut check = |s: &[u8]| {
            let text = std::str::from_utf8(s).unwrap();
            if let Some(v) = fast_f64(s) {
                let want: f64 = text.parse().unwrap_or_else(|_| panic!("{text}"));
                assert_eq!(v.to_bits(), want.to_bits(), "{text}");
            }
            if let Some(k) = fast_i32(s) {
                assert_eq!(Ok(k), text.parse::<i32>(), "{text}");
            }
            let slow = parse_reading_slow(s, Decode::Value);
            let fast = parse_reading(s, Decode::Value);
            match (fast, slow) {
                (Ok(Reading::Value(a)), Ok(Reading::Value(b))) => {
                    assert!(
                        a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan()),
                        "{text}"
                    )
                }
                (a, b) => assert_eq!(a, b, "{text}"),
            }
            assert_eq!(
                parse_reading(s, Decode::Counts),
                parse_reading_slow(s, Decode::Counts),
                "{text}"
            );
        };
        let mut s = Vec::new();
        fn all(s: &mut Vec<u8>, depth: usize, check: &mut dyn FnMut(&[u8])) {
            check(s);
            if depth == 0 {
                return;
            }
            for &c in ALPHA {
                s.push(c);
                all(s, depth - 1, check);
                s.pop();
            }
        }
        all(&mut s, 5, &mut check);
        // Long decimals around the 15-digit limit, from a small LCG.
        let mut x = 0x2545_f491_4f6c_dd1du64;
        for _ in 0..200_000 {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            let digits = 1 + (x >> 60) as usize;
            let mut t = (x >> 8).to_string();
            t.truncate(digits + 1);
            let dot = (x >> 40) as usize % (t.len() + 1);
            t.insert(dot, '.');
            if x & 1 == 1 {
                t.insert(0, '-');
            }
            check(t.as_bytes());
        }
        assert_eq!(fast_f64(b"8.25"), Some(8.25));
        assert_eq!(fast_f64(b"-0"), Some(-0.0));
        assert!(fast_f64(b"-0").unwrap().is_sign_negative());
        assert_eq!(fast_f64(b"1234567890123456"), None);
        // The compile-time quotients are the run-time ones.
        for m in 0..TABLE as u64 + 10 {
            for (frac, p) in POW10.iter().enumerate().take(4) {
                let want = m as f64 / p;
                assert_eq!(quotient(m, frac).to_bits(), want.to_bits(), "{m} {frac}");
            }
        }
    }

    /// The one byte loop [`plain_f64_in`] had before its two loops: the
    /// reference it must agree with.
    fn plain_f64_bytewise(b: &[u8], sep: u8, delim: u8) -> Option<(Reading, usize)> {
        let (neg, skip) = match b.first() {
            None | Some(b'\n' | b'\r') => return Some((Reading::Missing, 0)),
            Some(&c) if c == delim => return Some((Reading::Missing, 0)),
            Some(b'-') => (true, 1),
            Some(b'+') => (false, 1),
            Some(_) => (false, 0),
        };
        let (mut m, mut dot, mut i) = (0u64, usize::MAX, skip);
        while let Some(&c) = b.get(i) {
            if c.is_ascii_digit() {
                m = m.wrapping_mul(10).wrapping_add(u64::from(c - b'0'));
            } else if c == sep && dot == usize::MAX {
                dot = i;
            } else {
                break;
            }
            i += 1;
        }
        let (n, frac) = if dot == usize::MAX {
            (i - skip, 0)
        } else {
            (i - skip - 1, i - dot - 1)
        };
        if n == 0 || n > 15 {
            // Three letters that `str::parse::<f64>` reads as NaN.
            let w = std::str::from_utf8(b.get(..skip + 3)?).ok()?;
            let v = w
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_nan() && dot == usize::MAX)?;
            return Some((Reading::Value(v), skip + 3));
        }
        let v = m as f64 / POW10[frac];
        Some((Reading::Value(if neg { -v } else { v }), i))
    }

    /// The byte loop of [`plain_i32_in`], as [`plain_f64_bytewise`].
    fn plain_i32_bytewise(b: &[u8], delim: u8) -> Option<(Reading, usize)> {
        let (neg, skip) = match b.first() {
            None | Some(b'\n' | b'\r') => return Some((Reading::Missing, 0)),
            Some(&c) if c == delim => return Some((Reading::Missing, 0)),
            Some(b'-') => (true, 1),
            Some(b'+') => (false, 1),
            Some(_) => (false, 0),
        };
        let n = b[skip..].iter().take_while(|c| c.is_ascii_digit()).count();
        if n == 0 && skip == 0 {
            // Three unsigned letters that `str::parse::<f64>` reads as NaN:
            // a missing count.
            let w = std::str::from_utf8(b.get(..3)?).ok()?;
            return w
                .parse::<f64>()
                .is_ok_and(f64::is_nan)
                .then_some((Reading::Missing, 3));
        }
        if n == 0 || n > 9 {
            return None;
        }
        let k: i32 = std::str::from_utf8(&b[skip..skip + n])
            .unwrap()
            .parse()
            .unwrap();
        Some((Reading::Counts(if neg { -k } else { k }), skip + n))
    }

    /// Marsaglia's xorshift64 ("Xorshift RNGs", J. Stat. Softw. 8(14),
    /// 2003), for invented test data: the next of a sequence from `seed`.
    fn xorshift(mut x: u64) -> impl FnMut() -> u64 {
        move || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        }
    }

    /// Invented indices below `n` from a linear congruential sequence
    /// (Knuth's MMIX multiplier) from `seed`.
    fn below(mut x: u64) -> impl FnMut(usize) -> usize {
        move |n| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            ((x >> 33) % n as u64) as usize
        }
    }

    /// [`split_whitespace`] gives the fields that `str::split_ascii_whitespace`
    /// of Rust's standard library gives for spaces and tabs (the other
    /// whitespace bytes made letters first: the layout splits at those two
    /// only), on invented records of every length up to 40 bytes.
    #[test]
    fn fields_split_at_whitespace_as_the_standard_library_splits_them() {
        const ALPHA: &[u8] = b"  \t\t0123456789,.-ab\x0c\xff";
        let mut next = xorshift(0x2545_F491_4F6C_DD1Du64);
        let mut spans = Vec::new();
        for round in 0..200_000 {
            let len = (next() % 41) as usize;
            let rec: Vec<u8> = (0..len)
                .map(|_| ALPHA[(next() % ALPHA.len() as u64) as usize])
                .collect();
            split_whitespace(&rec, &mut spans);
            let got: Vec<&[u8]> = spans
                .iter()
                .map(|&(a, b)| &rec[a as usize..b as usize])
                .collect();
            // Only spaces and tabs split: the form feed and 0xff are letters.
            let text: String = rec
                .iter()
                .map(|&c| match c {
                    b' ' | b'\t' => c as char,
                    c if c.is_ascii_alphanumeric() || b",.-".contains(&c) => c as char,
                    _ => '#',
                })
                .collect();
            let want: Vec<&str> = text.split_ascii_whitespace().collect();
            assert_eq!(got.len(), want.len(), "round {round}: {rec:?}");
            for (g, w) in got.iter().zip(&want) {
                assert_eq!(g.len(), w.len(), "round {round}: {rec:?}");
                for (&a, b) in g.iter().zip(w.bytes()) {
                    let same = a == b || (b == b'#' && !a.is_ascii_alphanumeric());
                    assert!(same, "round {round}: {rec:?}");
                }
            }
        }
    }

    #[test]
    fn plain_numbers_are_those_of_the_one_loop_and_of_std_parse() {
        // Invented fields: random bytes from an alphabet of digits, signs,
        // separators, delimiters, terminators and letters, of every length
        // from 1 to 20, then more bytes; against the byte loop
        // (same value bits, same length) and, for a field that ends at a
        // delimiter, against `str::parse::<f64>` and `str::parse::<i32>`
        // (Rust's standard library: correctly rounded, IEEE 754).
        const ALPHA: &[u8] = b"0123456789012345678901234567890123456789..,,;;+-\n\re ";
        let mut next = xorshift(0x9E37_79B9_7F4A_7C15u64);
        let same =
            |a: Option<(Reading, usize)>, b: Option<(Reading, usize)>, what: &[u8]| match (a, b) {
                (Some((Reading::Value(p), i)), Some((Reading::Value(q), j))) => {
                    assert!(p.to_bits() == q.to_bits() && i == j, "{what:?}")
                }
                (a, b) => assert_eq!(a, b, "{:?}", String::from_utf8_lossy(what)),
            };
        for round in 0..400_000 {
            let len = 1 + (next() % 20) as usize;
            let mut b: Vec<u8> = (0..len)
                .map(|_| ALPHA[(next() % ALPHA.len() as u64) as usize])
                .collect();
            if round % 2 == 0 {
                // A plain number of 1 to 9 digits, maybe signed, with or
                // without one separator, then a delimiter.
                let digits = 1 + (next() % 9) as usize;
                let mut f: Vec<u8> = (0..digits).map(|_| b'0' + (next() % 10) as u8).collect();
                if next() % 3 > 0 {
                    let at = (next() % (digits as u64 + 1)) as usize;
                    f.insert(at, if next() % 2 == 0 { b'.' } else { b',' });
                }
                if next() % 4 == 0 {
                    f.insert(0, if next() % 2 == 0 { b'-' } else { b'+' });
                }
                f.push(b",;\n"[(next() % 3) as usize]);
                f.extend_from_slice(&b);
                b = f;
            } else if round % 4 == 1 {
                // `NaN` in a random case, maybe signed, maybe cut short.
                let (case, keep) = (next(), 1 + (next() % 3) as usize);
                let mut f: Vec<u8> = b"nan"
                    .iter()
                    .enumerate()
                    .map(|(i, &c)| {
                        if case >> i & 1 == 1 {
                            c.to_ascii_uppercase()
                        } else {
                            c
                        }
                    })
                    .take(keep)
                    .collect();
                if next() % 3 == 0 {
                    f.insert(0, b"+-"[(next() % 2) as usize]);
                }
                f.extend_from_slice(&b);
                b = f;
            }
            for (sep, delim) in [(b'.', b','), (b',', b';')] {
                let got = plain_f64_nan(&b, sep, delim);
                same(got, plain_f64_bytewise(&b, sep, delim), &b);
                // Without the `NaN` test: the same, or nothing for a `NaN`.
                let nan = matches!(got, Some((Reading::Value(v), _)) if v.is_nan());
                same(
                    plain_f64_in::<false>(&b, sep, delim, &[]),
                    got.filter(|_| !nan),
                    &b,
                );
                if let Some((Reading::Value(v), i)) = got {
                    if matches!(b.get(i), None | Some(&b'\n' | &b'\r')) || b.get(i) == Some(&delim)
                    {
                        let text: String = String::from_utf8(b[..i].to_vec())
                            .unwrap()
                            .replace(sep as char, ".");
                        let want: f64 = text.parse().unwrap();
                        assert_eq!(v.to_bits(), want.to_bits(), "{text}");
                    }
                }
                let got = plain_i32_nan(&b, delim);
                assert_eq!(got, plain_i32_bytewise(&b, delim), "{b:?}");
                let nan = matches!(got, Some((Reading::Missing, 3)));
                assert_eq!(
                    plain_i32_in::<false>(&b, delim),
                    got.filter(|_| !nan),
                    "{b:?}"
                );
                if let Some((Reading::Counts(k), i)) = got {
                    let text = std::str::from_utf8(&b[..i]).unwrap();
                    assert_eq!(Ok(k), text.parse::<i32>(), "{text}");
                }
            }
        }
        for (f, want) in [
            (&b"5.33,xxxxxxx"[..], Some((Reading::Value(5.33), 4))),
            (b"-0.5\nxxxxxxx", Some((Reading::Value(-0.5), 4))),
            (b"1234567,xxxxx", Some((Reading::Value(1_234_567.0), 7))),
            (b"81.7", Some((Reading::Value(81.7), 4))),
        ] {
            assert_eq!(plain_f64(f), want);
        }
        assert_eq!(
            plain_i32(b"2486,1.4,81.7"),
            Some((Reading::Counts(2486), 4))
        );
    }

    #[test]
    fn rows_added_to_a_block_come_out_by_column() {
        let mut b = Block::new(3);
        let v = |x: f64| Reading::Value(x);
        for i in 0..700u32 {
            let t = Timestamp::from_millis(i64::from(i) * 1000);
            let r = [v(f64::from(i)), Reading::Counts(i as i32), v(-f64::from(i))];
            // Every fifth row with a reading short: the last channel missing.
            let k = if i % 5 == 0 { 2 } else { 3 };
            b.add(t, u64::from(i) + 2, &r[..k]);
            if b.is_full() || i == 699 {
                b.columns();
                let n = b.times.len();
                assert!(b.cols.iter().all(|c| c.len() == n));
                for (j, &t) in b.times.iter().enumerate() {
                    let i = (t.millis() / 1000) as u32;
                    assert_eq!(b.lines[j], u64::from(i) + 2);
                    assert_eq!(b.cols[0][j], v(f64::from(i)));
                    assert_eq!(b.cols[1][j], Reading::Counts(i as i32));
                    let last = if i % 5 == 0 {
                        Reading::Missing
                    } else {
                        v(-f64::from(i))
                    };
                    assert_eq!(b.cols[2][j], last);
                    let mut row = [Reading::Missing; 3];
                    b.row(j, &mut row);
                    assert_eq!(row[2], last);
                }
                b.clear();
            }
        }
    }

    /// Rows written in place ([`Block::slot`], [`Block::commit`], as the
    /// own CSV's reader writes them) and rows added by copy ([`Block::add`])
    /// come out as the rows given, column by column (built here with plain
    /// pushes): mixed, past [`BLOCK_ROWS`] without a flush, with slots that
    /// still hold an earlier block's readings, and with a slot written and
    /// never committed (a bad row) left out.
    #[test]
    fn rows_written_in_place_come_out_as_rows_added() {
        let n = 4;
        let (mut a, mut b) = (Block::new(n), Block::new(n));
        for (round, rows) in [BLOCK_ROWS + 37, 10, BLOCK_ROWS].into_iter().enumerate() {
            let mut want: Vec<Vec<Reading>> = vec![Vec::new(); n];
            let (mut times, mut lines) = (Vec::new(), Vec::new());
            for i in 0..rows {
                let r: Vec<Reading> = (0..n)
                    .map(|c| match (i * 7 + c * 3 + round) % 5 {
                        0 => Reading::Missing,
                        1 => Reading::Value(i as f64 + c as f64 / 10.0),
                        2 => Reading::Counts((i * n + c) as i32),
                        3 => Reading::Excluded,
                        _ => Reading::Flagged,
                    })
                    .collect();
                let t = Timestamp::from_millis((round * 10_000 + i) as i64 * 1000);
                let line = (i + 2) as u64;
                for (col, x) in want.iter_mut().zip(&r) {
                    col.push(*x);
                }
                times.push(t);
                lines.push(line);
                a.add(t, line, &r);
                if i % 3 == 0 {
                    b.add(t, line, &r);
                } else {
                    b.slot().copy_from_slice(&r);
                    b.commit(t, line);
                }
                if i % 11 == 0 {
                    // A bad row: its readings written, the row not added.
                    b.slot().fill(Reading::Value(-1.0));
                }
            }
            for blk in [&mut a, &mut b] {
                blk.columns();
                assert_eq!(blk.times, times, "round {round}");
                assert_eq!(blk.lines, lines, "round {round}");
                assert_eq!(blk.cols, want, "round {round}");
                blk.clear();
            }
        }
    }

    /// Rows read into the block by [`Block::fill`] against the same rows read
    /// one by one ([`Records::next_row`], then [`Block::add`], as the replay
    /// read them before): plain rows with odd ones among them (a number the
    /// plain reader leaves, a bad one, blank lines, CRLF and CR ends, a
    /// comment), an exclusion over one channel of some rows, past several
    /// full blocks. The same blocks (times, lines, columns) and bad rows, in
    /// the same order.
    #[test]
    fn rows_filled_in_are_the_rows_read_one_by_one() {
        // As tenmin writes the file (`Block::fill_straight`), with the
        // channels in another order (the general loop of `Block::fill`), and
        // a declared layout read in one pass (the same loop).
        let own = speed_direction_scalar();
        fill_agrees(&own, [b"time", b"a", b"d", b"t"], Some(true));
        fill_agrees(&own, [b"time", b"d", b"t", b"a"], Some(false));
        let toml = "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = \";\"\n\
            decimal = \",\"\n\n[input.time]\ncolumn = \"Zeit\"\n\
            format = \"%d.%m.%Y %H:%M:%S\"\nzone = \"Europe/Berlin\"\n\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = \"WG\"\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\ncolumn = \"R\"\n\
            [[channel]]\nid = \"t\"\nkind = \"scalar\"\nresolution = 0.1\ncolumn = \"T\"\n";
        let declared = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        fill_agrees(&declared, [b"Zeit", b"T", b"WG", b"R"], None);
        // The time and then the channels in order: `one_pass_straight`.
        let straight: [&[u8]; 4] = [b"Zeit", b"WG", b"R", b"T"];
        let p = Parser::new(Path::new("x"), 1, straight.into_iter(), &declared).unwrap();
        assert_eq!(p.declared.as_ref().and_then(|d| d.straight), Some(0b10));
        let other: [&[u8]; 4] = [b"Zeit", b"T", b"WG", b"R"];
        let p = Parser::new(Path::new("x"), 1, other.into_iter(), &declared).unwrap();
        assert_eq!(p.declared.as_ref().and_then(|d| d.straight), None);
        fill_agrees(&declared, straight, None);
        // With missing-value texts, compared in the one pass (by the plan and
        // by `one_pass_straight`).
        let toml = toml.replace(
            "decimal = \",\"\n",
            "decimal = \",\"\nmissing = [\"NAN\", \"-99,9\"]\n",
        );
        let coded = crate::config::parse(Path::new("s.toml"), &toml).unwrap();
        assert_eq!(coded.table.missing.len(), 2);
        fill_agrees(&coded, [b"Zeit", b"T", b"WG", b"R"], None);
        let p = Parser::new(Path::new("x"), 1, straight.into_iter(), &coded).unwrap();
        assert_eq!(p.declared.as_ref().and_then(|d| d.straight), Some(0b10));
        fill_agrees(&coded, straight, None);
    }

    /// A station of three channels: `a` (a speed, hundredths), `d` (a
    /// direction read as counts of 0.1 degree), `t` (a scalar, tenths).
    fn speed_direction_scalar() -> StationFile {
        let toml = "[logging]\nsample_rate_hz = 1\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\n\
            [[channel]]\nid = \"t\"\nkind = \"scalar\"\nresolution = 0.1\n";
        crate::config::parse(Path::new("s.toml"), toml).unwrap()
    }

    /// [`rows_filled_in_are_the_rows_read_one_by_one`] for one header: the own
    /// CSV (`straight`: whether it is read by `Parser::parse_straight`) or,
    /// with `None`, the declared layout of `cfg` (`;`, decimal commas, local
    /// times in Europe/Berlin; its columns `WG`, `R`, `T`).
    fn fill_agrees(cfg: &StationFile, header: [&[u8]; 4], straight: Option<bool>) {
        let excl = crate::exclusions::parse(
            Path::new("x.csv"),
            "channels,from,to,reason,who,entered\n\
             d,2025-01-20T00:01:00Z,2025-01-20T00:02:30Z,tower work,A. B,2025-01-21\n",
            &["a", "d", "t"],
        )
        .unwrap();
        let (delim, point) = if straight.is_some() {
            (',', '.')
        } else {
            (';', ',')
        };
        let mut text = String::new();
        for i in 0..1_000u32 {
            let t = Timestamp::from_millis(1_737_331_200_000 + i64::from(i) * 1000);
            let a = match i % 97 {
                // A hundred rows running with `NaN` (the straight loop leaves
                // them to the column plan, which then reads on).
                _ if (600..700).contains(&i) => "nan".to_string(),
                5 => format!("1{point}5e0"),
                9 => "x".to_string(),
                // A logger's missing readings (read in one pass), one cut short
                // (a bad row).
                13 | 40 => "NaN".to_string(),
                17 => "-nan".to_string(),
                21 => "NA".to_string(),
                _ => format!("{}{point}{:02}", i % 23, i % 100),
            };
            text += &match straight {
                Some(_) => Rfc3339(t).to_string(),
                None => {
                    // Local time, an hour ahead of UTC in January.
                    let c = Timestamp::from_millis(t.millis() + 3_600_000).civil();
                    let (d, mo, y) = (c.day, c.month, c.year);
                    let (h, mi, se) = (c.hour, c.minute, c.second);
                    format!("{d:02}.{mo:02}.{y:04} {h:02}:{mi:02}:{se:02}")
                }
            };
            for name in &header[1..] {
                text.push(delim);
                text += &match *name {
                    b"a" | b"WG" => a.clone(),
                    b"d" | b"R" if i % 53 == 4 => ["NAN", "nan", "-nan"][i as usize % 3].into(),
                    b"d" | b"R" => format!("{}", 2_000 + i % 1_600),
                    // A missing-value text of the declared layout with codes
                    // (a plain number elsewhere).
                    _ if i % 41 == 3 => format!("-99{point}9"),
                    _ => format!("-{}{point}{}", i % 7, i % 10),
                };
            }
            text += match i % 7 {
                0 => "\r\n",
                1 => "\r",
                _ => "\n",
            };
            if i % 89 == 0 {
                text += "\n";
            }
            if i % 301 == 0 {
                text += "# a comment\n";
            }
        }
        let parser = Parser::new(Path::new("x"), 1, header.into_iter(), cfg).unwrap();
        assert!(parser.fills_rows());
        assert_eq!(parser.straight.map(|_| true), straight.filter(|&s| s));
        // `fill`: by `Block::fill` (else row by row, by `Records::next_row`);
        // `general`: every row the general way alone (`Records::next_odd_row`:
        // split, then field by field, numbers by `str::parse` of Rust 1.95's
        // standard library).
        let read = |fill: bool, general: bool| {
            let (mut p, mut blk) = (parser.clone(), Block::new(3));
            let mut recs = Records::new(text.as_bytes(), 2);
            let (mut r, mut commas) = ([Reading::Missing; 3], Vec::new());
            let (mut events, mut filled) = (Vec::new(), 0);
            let flush = |blk: &mut Block, events: &mut Vec<String>| {
                blk.columns();
                if !blk.times.is_empty() {
                    events.push(format!("{:?} {:?} {:?}", blk.times, blk.lines, blk.cols));
                }
                blk.clear();
            };
            loop {
                let next = if fill {
                    filled += blk.fill(&mut recs, &mut p, &excl, &mut BadCounts::default());
                    if blk.is_full() {
                        flush(&mut blk, &mut events);
                        continue;
                    }
                    recs.next_odd_row(&mut p, &mut r, &mut commas)
                } else if general {
                    recs.next_odd_row(&mut p, &mut r, &mut commas)
                } else {
                    recs.next_row(&mut p, &mut r, &mut commas)
                };
                let Some((ln, parsed)) = next else {
                    break;
                };
                match parsed {
                    Ok(t) => {
                        excl.apply(t, &mut r);
                        blk.add(t, ln, &r);
                        if blk.is_full() {
                            flush(&mut blk, &mut events);
                        }
                    }
                    Err(e) => {
                        flush(&mut blk, &mut events);
                        events.push(format!("line {ln}: {e}"));
                    }
                }
            }
            flush(&mut blk, &mut events);
            (events, filled)
        };
        let (by_fill, filled) = read(true, false);
        let (one_by_one, _) = read(false, false);
        let (general, _) = read(false, true);
        for other in [&one_by_one, &general] {
            for (k, (a, b)) in by_fill.iter().zip(other).enumerate() {
                if a != b {
                    let at = a.bytes().zip(b.bytes()).take_while(|(x, y)| x == y).count();
                    let near = |e: &str| {
                        e.get(at.saturating_sub(60)..(at + 60).min(e.len()))
                            .unwrap_or("")
                            .to_string()
                    };
                    panic!("event {k} differs at byte {at}: {} // {}", near(a), near(b));
                }
            }
            assert_eq!(by_fill.len(), other.len());
        }
        // Lines counted by hand: row 0 on line 2, a blank line and the
        // comment after it (line 4), row 9 (an `x`) on line 2 + 9 + 2: the
        // lone CRs ending rows 1 and 8 end lines, as a text editor counts.
        for line in ["line 4: ", "line 13: "] {
            assert!(by_fill.iter().any(|e| e.starts_with(line)), "{line}");
        }
        // Every row but those the one-pass readers leave was filled in, those
        // with `NaN` too. Left: an exponent, an `x`, an `NA` (rows 5, 9 and 21
        // of every 97: 33 rows, less 603, 684 and 688, which are among the
        // hundred `nan`) and a signed `-nan` as counts (rows 110 + 159 k: 6
        // rows, row 587 among both), the last three kinds bad rows; in the own
        // CSV also the first row, whose time fills the time cache.
        let left = 33 - 3 + 6 - 1 + usize::from(straight.is_some());
        assert_eq!(filled, 1_000 - left as u64, "{straight:?}");
        assert!(by_fill.iter().any(|e| e.contains("Value(NaN)")));
        assert!(by_fill.iter().filter(|e| e.starts_with("line ")).count() >= 10);
        assert!(by_fill.iter().any(|e| e.contains("Excluded")));
    }

    /// The transposition by constant widths against the plain one it
    /// replaced (strided `chunks_exact` per column) on random blocks: every
    /// width 1 to 16 and 17, 18 (the general way), empty blocks, a partial
    /// last row, a full block and columns that already hold readings.
    #[test]
    fn transposition_by_width_matches_the_plain_one() {
        fn plain(rows: &[Reading], cols: &mut [Vec<Reading>]) {
            let n = cols.len();
            if n > 0 && !rows.is_empty() {
                for (c, col) in cols.iter_mut().enumerate() {
                    col.extend(rows.chunks_exact(n).map(|r| r[c]));
                }
            }
        }
        let mut x = 7u64;
        let mut next = move || {
            x = x
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            x >> 33
        };
        for n in 0..=18usize {
            for round in 0..12 {
                let len = match round {
                    0 => 0,
                    1 => BLOCK_ROWS,
                    _ => (next() % 600) as usize,
                };
                let extra = if round % 3 == 2 {
                    (next() % 3) as usize
                } else {
                    0
                };
                let rows: Vec<Reading> = (0..len * n + extra)
                    .map(|_| match next() % 5 {
                        0 => Reading::Value(f64::from_bits(next() << 31 | next())),
                        1 => Reading::Counts(next() as i32),
                        2 => Reading::Missing,
                        3 => Reading::Excluded,
                        _ => Reading::Flagged,
                    })
                    .collect();
                let held = (next() % 3) as usize;
                let start: Vec<Vec<Reading>> = (0..n)
                    .map(|c| vec![Reading::Counts(c as i32); held])
                    .collect();
                let (mut want, mut got) = (start.clone(), start);
                plain(&rows, &mut want);
                transpose(&rows, &mut got);
                assert_eq!(got.len(), n);
                for (g, w) in got.iter().zip(&want) {
                    assert_eq!(g.len(), held + rows.len() / n, "width {n}, {len} rows");
                    // Bit for bit (NaN payloads included).
                    let bits = |r: &Reading| match *r {
                        Reading::Value(v) => (0, v.to_bits()),
                        Reading::Counts(k) => (1, k as u64),
                        Reading::Missing => (2, 0),
                        Reading::Flagged => (3, 0),
                        Reading::Excluded => (4, 0),
                    };
                    assert!(g.iter().map(bits).eq(w.iter().map(bits)), "width {n}");
                }
            }
        }
    }

    #[test]
    fn commas_found_eight_at_a_time_match_a_plain_scan() {
        let mut x = 99u64;
        let mut commas = Vec::new();
        for len in 0..200 {
            for _ in 0..20 {
                let rec: Vec<u8> = (0..len)
                    .map(|_| {
                        x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
                        // Commas, their neighbours in ASCII ('+', '-') and any byte.
                        match x >> 62 {
                            0 => b',',
                            1 => b'-',
                            2 => b'+',
                            _ => (x >> 40) as u8,
                        }
                    })
                    .collect();
                find_commas(&rec, &mut commas);
                let want: Vec<u32> = (0..rec.len() as u32)
                    .filter(|&i| rec[i as usize] == b',')
                    .collect();
                assert_eq!(commas, want, "{rec:?}");
            }
        }
    }

    /// Invented rows of a file, in file order (so that the time cache moves
    /// on as in a replay), each read by the one-pass reader
    /// ([`Parser::parse_plain`], inside a longer buffer as the replay sees
    /// it) and by the field-by-field reader ([`Parser::parse`]): good rows,
    /// numbers of every width from 0 to 17 digits with and without a sign or
    /// a decimal point, leap days, hour and day changes, offsets, fractional
    /// and out-of-range seconds, epoch seconds, comments, spaces, NaN, and
    /// rows with a field too many or too few. Wherever the one-pass reader
    /// takes a row, the other gives the same time and readings, bit for bit
    /// (its numbers are `str::parse`'s: Rust's standard library); rows it
    /// leaves are the general reader's alone.
    #[test]
    fn one_pass_rows_agree_with_the_general_reader_on_invented_files() {
        // The time and then the channels in station-file order (as tenmin
        // writes the file: read by `Parser::parse_straight`), and the
        // channels in another order (read by the loop over the column plan).
        let straight: [&[u8]; 4] = [b"time", b"a", b"d", b"t"];
        let reordered: [&[u8]; 4] = [b"time", b"d", b"a", b"t"];
        one_pass_agrees(straight, true);
        one_pass_agrees(reordered, false);
    }

    fn one_pass_agrees(header: [&[u8]; 4], straight: bool) {
        let cfg = speed_direction_scalar();
        let mut fast = Parser::new(Path::new("x"), 1, header.into_iter(), &cfg).unwrap();
        assert_eq!(fast.straight.is_some(), straight);
        assert!(
            fast.cols.iter().any(|c| matches!(c, Col::Counts(1))),
            "d is read as counts"
        );
        let mut general = fast.clone();
        let mut x = 0x2545_F491_4F6C_DD1Du64;
        let mut rnd = |n: u64| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x % n
        };
        // Times: steps of 1 s to 1 h from just before a leap day's end, a
        // year end and an hour's end, and odd ones.
        let odd = [
            "2024-02-29T23:59:59Z",
            "2025-02-29T00:00:01Z",
            "2024-02-29T23:59:60Z",
            "2025-01-20T00:60:00Z",
            "2025-01-20T00:00:01z",
            "2025-01-20T00:00:01.5Z",
            "2025-01-20T01:00:01+01:00",
            "2025-01-20T00:00:01-00:30",
            "2025-13-01T00:00:00Z",
            "2025-01-20 00:00:01Z",
            "1737331201",
            "17373312010000",
            "-5",
            "",
            " 2025-01-20T00:00:01Z",
        ];
        let starts = [
            "2024-02-29T23:58:00Z",
            "2024-12-31T23:59:00Z",
            "2025-01-20T00:59:30Z",
        ];
        let mut t = parse_time(starts[0].as_bytes()).unwrap().millis();
        let number = |rnd: &mut dyn FnMut(u64) -> u64| -> Vec<u8> {
            match rnd(12) {
                0 => b"".to_vec(),
                1 => [
                    &b"NaN"[..],
                    b" 1.5",
                    b"1e3",
                    b"-",
                    b".",
                    b"1.2.3",
                    b"+7",
                    b"-0.0",
                    b"nan",
                    b"-NAN",
                    b"+nAn",
                    b"NaNa",
                    b"na",
                    b"inf",
                ][rnd(14) as usize]
                    .to_vec(),
                k => {
                    // Mostly the usual 1 to 4 digits; now and then 0 to 17.
                    let n = if k < 4 { rnd(18) } else { 1 + rnd(4) } as usize;
                    let mut f: Vec<u8> = (0..n).map(|_| b'0' + rnd(10) as u8).collect();
                    if rnd(3) > 0 {
                        f.insert(rnd(n as u64 + 1) as usize, b'.');
                    }
                    if rnd(5) == 0 {
                        f.insert(0, if rnd(2) == 0 { b'-' } else { b'+' });
                    }
                    f
                }
            }
        };
        let (mut agreed, mut left, mut commas) = (0, 0, Vec::new());
        for row in 0..60_000 {
            if row % 5_000 == 0 {
                t = parse_time(starts[rnd(3) as usize].as_bytes())
                    .unwrap()
                    .millis();
            }
            t += [1_000, 1_000, 1_000, 7_000, 3_600_000][rnd(5) as usize];
            let mut rec = if rnd(20) == 0 {
                odd[rnd(odd.len() as u64) as usize].as_bytes().to_vec()
            } else {
                Rfc3339(Timestamp::from_millis(t)).to_string().into_bytes()
            };
            let fields = match rnd(40) {
                0 => 2,
                1 => 4,
                _ => 3,
            };
            for _ in 0..fields {
                rec.push(b',');
                rec.extend(number(&mut rnd));
            }
            if rnd(50) == 0 {
                // A stray byte after the last field.
                rec.push(b"x \"e;\t"[rnd(6) as usize]);
            }
            if rnd(200) == 0 {
                rec = b"# a comment, 1, 2, 3".to_vec();
            }
            // The replay's buffer: the row, its end, and more rows after it.
            let term: &[u8] = [&b"\n"[..], b"\r\n", b"\r"][rnd(3) as usize];
            let buf = [&rec[..], term, b"2025-01-20T00:00:02Z,1.5,20,3.5\n"].concat();
            let mut r1 = [Reading::Missing; 3];
            let mut r2 = [Reading::Missing; 3];
            let bits = |r: &[Reading; 3]| {
                r.map(|v| match v {
                    Reading::Value(f) => (0, f.to_bits()),
                    Reading::Counts(k) => (1, k as u64),
                    _ => (2, 0),
                })
            };
            find_commas(&rec, &mut commas);
            let want = general.parse(&rec, &commas, &mut r2);
            let shown = String::from_utf8_lossy(&rec).into_owned();
            match fast.parse_plain(&buf, 0, &mut r1) {
                Some((t1, end)) => {
                    assert_eq!(end, rec.len(), "{shown}");
                    let t2 = want.unwrap_or_else(|e| panic!("{e}: {shown}"));
                    assert_eq!(t1, t2, "{shown}");
                    assert_eq!(bits(&r1), bits(&r2), "{shown}");
                    agreed += 1;
                }
                None => {
                    // As the replay does: the general reader takes the row
                    // (and keeps the time cache in step).
                    let again = fast.parse(&rec, &commas, &mut r1);
                    assert_eq!(again.is_ok(), want.is_ok(), "{shown}");
                    left += 1;
                }
            }
        }
        // Most rows are plain; the odd ones must have reached the general reader.
        assert!(agreed > 10_000 && left > 10_000, "{agreed} {left}");
    }

    /// Random records over an alphabet of digits, signs, dots, spaces,
    /// letters and delimiters: wherever the one-pass reader accepts a record,
    /// the field-by-field reader (std parsers behind it) gives the same time
    /// and the same readings, bit for bit.
    /// A declared layout (semicolons, decimal commas, `dd.mm.yyyy HH:MM:SS`
    /// local time in Europe/Berlin, end labels) read in one pass (with the
    /// folded memo, [`crate::localtime::Quick`]) and the general way, row by
    /// row, on invented rows: local time walked a week either side of both
    /// clock changes of 2025 (dates from memory; the zone database decides)
    /// and over the year's end, by a second to an hour and a half, some steps
    /// backwards; midnight written `24:00:00` of the day before in some rows;
    /// a byte of the row changed, dropped or added in some; empty fields. The
    /// same times and readings bit for bit, wherever the one pass reads a row.
    #[test]
    fn declared_rows_in_one_pass_agree_with_the_general_way_across_clock_changes() {
        let toml = "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = \";\"\n\
            decimal = \",\"\n\n[input.time]\ncolumn = \"Zeit\"\n\
            format = \"%d.%m.%Y %H:%M:%S\"\nzone = \"Europe/Berlin\"\nlabel = \"end\"\n\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = \"WG\"\n\n\
            [[channel]]\nid = \"b\"\nkind = \"scalar\"\nresolution = 1\ncolumn = \"T\"\n";
        let cfg = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        let header: [&[u8]; 3] = [b"Zeit", b"WG", b"T"];
        let mut one = Parser::new(Path::new("x"), 1, header.into_iter(), &cfg).unwrap();
        let mut general = one.clone();
        assert!(one.declared.as_ref().is_some_and(|d| d.plan.is_some()));
        // The time and then the channels in order: `one_pass_straight`.
        assert_eq!(one.declared.as_ref().and_then(|d| d.straight), Some(0));
        let day = |y: i32, month: u8, d: u8| {
            Timestamp::from_civil(qc_core::time::Civil {
                year: y,
                month,
                day: d,
                hour: 0,
                minute: 0,
                second: 0,
                milli: 0,
            })
            .unwrap()
            .millis()
        };
        let steps: [i64; 14] = [1, 1, 1, 1, 1, 1, 2, 59, 600, 1799, 3599, 5400, -1, -3599];
        const ODD: &[u8] = b"0123456789:.;, \nx-";
        let mut x = 7u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        let (mut agreed, mut delims) = (0, Vec::new());
        for start in [day(2025, 3, 23), day(2025, 10, 19), day(2025, 12, 28)] {
            let mut ms = start;
            for _ in 0..2500 {
                ms += steps[rnd(steps.len() as u64) as usize] * 1000;
                let c = Timestamp::from_millis(ms).civil();
                let time = if (c.hour, c.minute, c.second) == (0, 0, 0) && rnd(2) == 0 {
                    let p = Timestamp::from_millis(ms - 86_400_000).civil();
                    format!("{:02}.{:02}.{:04} 24:00:00", p.day, p.month, p.year)
                } else {
                    format!(
                        "{:02}.{:02}.{:04} {:02}:{:02}:{:02}",
                        c.day, c.month, c.year, c.hour, c.minute, c.second
                    )
                };
                let ws = match rnd(20) {
                    0 => String::new(),
                    _ => format!("{},{:02}", rnd(30), rnd(100)),
                };
                let mut row = format!("{time};{ws};{}", rnd(400) as i64 - 50).into_bytes();
                let at = rnd(row.len() as u64) as usize;
                let odd = ODD[rnd(ODD.len() as u64) as usize];
                match rnd(30) {
                    0 => row[at] = odd,
                    1 => {
                        row.remove(at);
                    }
                    2 => row.insert(at, odd),
                    _ => {}
                }
                let buf = [&row[..], b"\n01.01.2025 00:00:00;1,5;2\n"].concat();
                if declared_row_agrees(&mut one, &mut general, &buf, &mut delims).is_some() {
                    agreed += 1;
                }
            }
        }
        assert!(agreed > 5000, "{agreed}");
    }

    /// The first row of `buf` (a declared layout of two channels, `;`)
    /// read the general way by `general` and in one pass by `one`: when the
    /// one pass reads it, the same end, time and readings, bit for bit, and
    /// its readings; `None` when it leaves the row.
    fn declared_row_agrees(
        one: &mut Parser,
        general: &mut Parser,
        buf: &[u8],
        delims: &mut Vec<u32>,
    ) -> Option<[Reading; 2]> {
        declared_row_agrees_at(one, general, buf, delims, Some(b';'))
    }

    /// [`declared_row_agrees`] for a layout delimited by `delim`, or split at
    /// whitespace (`None`).
    fn declared_row_agrees_at(
        one: &mut Parser,
        general: &mut Parser,
        buf: &[u8],
        delims: &mut Vec<u32>,
        delim: Option<u8>,
    ) -> Option<[Reading; 2]> {
        let mut recs = Records::new(buf, 1);
        let (_, rec) = match delim {
            Some(d) => recs.next_delimited(d, delims)?,
            None => {
                delims.clear();
                recs.next()?
            }
        };
        let (mut r1, mut r2) = ([Reading::Missing; 2], [Reading::Missing; 2]);
        let want = general.parse_declared(rec, delims, &mut r2);
        let shown = String::from_utf8_lossy(buf);
        let (t, end) = one.declared.as_deref_mut()?.one_pass(buf, 0, &mut r1)?;
        assert_eq!(end, rec.len(), "{shown:?}");
        match want {
            Some(Ok(w)) => assert_eq!(t, w, "{shown:?}"),
            _ => panic!("{shown:?}: one pass {t:?}, general {want:?}"),
        }
        let bits = |r: &[Reading; 2]| {
            r.map(|v| match v {
                Reading::Value(f) => (0, f.to_bits()),
                Reading::Counts(k) => (1, k as u64),
                Reading::Missing => (2, 0),
                _ => (3, 0),
            })
        };
        assert_eq!(bits(&r1), bits(&r2), "{shown:?}");
        Some(r1)
    }

    /// A declared layout with missing-value texts (`NAN`, `-99,9`, `x`; a
    /// speed read as a value, a direction as counts), read in one pass and
    /// the general way (`str::parse` behind it: the standard library of Rust
    /// 1.95, correctly rounded IEEE 754), row by row, on invented rows whose
    /// fields are numbers, the texts, the texts with a byte more or in
    /// another case, `NaN` in any case and sign, spaces and empty fields:
    /// wherever the one pass reads a row, the same time and readings, bit for
    /// bit; the texts and `NaN` are read in the one pass. Texts one of which
    /// is a number ([`NUMBER_CODES`]) and texts none of which is
    /// ([`TEXT_CODES`]: only `NaN` compared with them). Then with the speed
    /// in km/h (converted as read), with and without the texts. Each with the
    /// columns out of order (the column plan) and in order (the time first:
    /// `one_pass_straight`).
    #[test]
    fn declared_rows_with_missing_texts_in_one_pass_agree_with_the_general_way() {
        let numbers = "missing = [\"NAN\", \"-99,9\", \"x\"]\n";
        let texts = "missing = [\"NAN\", \"---\", \"x\"]\n";
        let kmh = "source_unit = \"km/h\"\n";
        for straight in [false, true] {
            for codes in [numbers, texts] {
                declared_texts_agree(codes, "", straight);
                declared_texts_agree(codes, kmh, straight);
            }
            declared_texts_agree("", kmh, straight);
        }
    }

    /// A declared layout with quality columns (one before its value, one
    /// after; good codes `0` and `G`), read in one pass and the general way
    /// on invented rows whose codes are good, bad, empty or spaced and whose
    /// values are numbers, texts, empty or bad: wherever the one pass reads
    /// a row, the same time and readings, bit for bit (the general way as the
    /// station-file contract states it: a bad code flags the reading whatever
    /// it is). Most rows are read in one pass, flagged readings among them.
    /// Then with the time first and each code right after its reading
    /// (`one_pass_straight` with [`Declared::straight_quality`]), and with one
    /// code after the other channel's reading (the plan again).
    #[test]
    fn declared_rows_with_quality_codes_in_one_pass_agree_with_the_general_way() {
        let toml = "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = \";\"\n\
            decimal = \",\"\nmissing = [\"NAN\", \"x\"]\n\n[input.time]\n\
            column = \"Zeit\"\nformat = \"%d.%m.%Y %H:%M:%S\"\n\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = \"WG\"\n\
            quality = { column = \"Q1\", good = [\"0\", \"G\"] }\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\ncolumn = \"R\"\n\
            quality = { column = \"Q2\", good = [\"0\", \"G\"] }\n";
        let cfg = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        let layouts: [([&str; 5], Option<u64>); 3] = [
            (["Q1", "Zeit", "WG", "R", "Q2"], None),
            (["Zeit", "WG", "Q1", "R", "Q2"], Some(0b11)),
            (["Zeit", "WG", "R", "Q1", "Q2"], None),
        ];
        for (header, quality) in layouts {
            let fields = header.map(str::as_bytes);
            let mut one = Parser::new(Path::new("x"), 1, fields.into_iter(), &cfg).unwrap();
            let mut general = one.clone();
            assert!(one.fills_rows(), "read in one pass");
            let d = one.declared.as_deref().unwrap();
            let straight = d.straight.map(|_| d.straight_quality);
            assert_eq!(straight, quality, "{header:?}");
            quality_codes_agree(&mut one, &mut general, header);
        }
    }

    /// [`declared_rows_with_quality_codes_in_one_pass_agree_with_the_general_way`]
    /// for the columns `header`.
    fn quality_codes_agree(one: &mut Parser, general: &mut Parser, header: [&str; 5]) {
        let values = [
            "12", "3,75", "", "NAN", "x", "-0,5", "2500", "bad", "1,2,3", "nan",
        ];
        let codes = ["0", "G", "", " 0", "0 ", "00", "1", "g", "G0", "9"];
        let mut rnd = below(19);
        let (mut agreed, mut flagged, mut delims) = (0, 0, Vec::new());
        for i in 0..40_000u64 {
            let time = format!(
                "20.01.2025 {:02}:{:02}:{:02}",
                i / 3600 % 24,
                i / 60 % 60,
                i % 60
            );
            let (q1, a, r, q2) = (
                codes[rnd(codes.len())],
                values[rnd(values.len())],
                values[rnd(values.len())],
                codes[rnd(codes.len())],
            );
            let field = |name: &str, good: bool| match name {
                "Q1" if good => "0".to_string(),
                "Q2" if good => "0".to_string(),
                "Zeit" if good => "20.01.2025 00:00:00".to_string(),
                "WG" if good => "1".to_string(),
                "R" if good => "2".to_string(),
                "Q1" => q1.to_string(),
                "Q2" => q2.to_string(),
                "Zeit" => time.clone(),
                "WG" => a.to_string(),
                _ => r.to_string(),
            };
            let row = |good: bool| header.map(|h| field(h, good)).join(";");
            let buf = format!("{}\n{}\n", row(false), row(true));
            if let Some(read) = declared_row_agrees(one, general, buf.as_bytes(), &mut delims) {
                agreed += 1;
                flagged += read.iter().filter(|r| **r == Reading::Flagged).count();
            }
        }
        assert!(
            agreed > 15_000 && flagged > 10_000,
            "{header:?}: {agreed} {flagged}"
        );
    }

    /// A declared layout with its time in two columns, joined in another
    /// order than the file's (`Zeit` then `Datum`), read in one pass and the
    /// general way on invented rows whose time parts are good, spaced, empty
    /// or bad: wherever the one pass reads a row, the same time and readings;
    /// most rows are read in one pass. Then with the two time columns first
    /// in the order they are joined and the channels after them in order
    /// (`one_pass_straight` with [`Declared::straight_parts`]).
    #[test]
    fn declared_rows_with_a_time_in_two_columns_in_one_pass_agree_with_the_general_way() {
        let toml = "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = \";\"\n\
            decimal = \",\"\n\n[input.time]\n\
            columns = [\"Zeit\", \"Datum\"]\nformat = \"%H:%M:%S %d.%m.%Y\"\n\
            zone = \"Europe/Berlin\"\nrepeated = \"earlier\"\n\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = \"WG\"\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\ncolumn = \"R\"\n";
        let cfg = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        let apart: [&[u8]; 4] = [b"Datum", b"WG", b"Zeit", b"R"];
        let first: [&[u8]; 4] = [b"Zeit", b"Datum", b"WG", b"R"];
        for (header, parts) in [(apart, 0), (first, 2)] {
            let mut one = Parser::new(Path::new("x"), 1, header.into_iter(), &cfg).unwrap();
            let mut general = one.clone();
            assert!(one.fills_rows(), "read in one pass");
            let d = one.declared.as_deref().unwrap();
            assert_eq!((d.straight.is_some(), d.straight_parts), (parts > 0, parts));
            two_time_columns_agree(&mut one, &mut general, header[0] == b"Zeit");
        }
    }

    /// [`declared_rows_with_a_time_in_two_columns_in_one_pass_agree_with_the_general_way`]
    /// for the columns `Datum;WG;Zeit;R` or, `first`, `Zeit;Datum;WG;R`.
    fn two_time_columns_agree(one: &mut Parser, general: &mut Parser, first: bool) {
        let days = [
            "26.10.2025",
            "27.10.2025",
            " 26.10.2025",
            "26.10.2025 ",
            "",
            "32.10.2025",
            "x",
        ];
        let values = ["12", "3,75", "", "NAN", "2500", "bad"];
        let mut rnd = below(23);
        let (mut agreed, mut spaced, mut delims) = (0, 0, Vec::new());
        for i in 0..40_000usize {
            // Hours around the night the clocks go back in Berlin (02:00 to
            // 03:00 twice), and now and then one that is not a time.
            let time = match rnd(20) {
                0 => " 25:00:00".to_string(),
                1 => String::new(),
                2..=5 => format!(" {:02}:{:02}:{:02}", 1 + i / 3600 % 3, i / 60 % 60, i % 60),
                _ => format!("{:02}:{:02}:{:02}", 1 + i / 3600 % 3, i / 60 % 60, i % 60),
            };
            let (day, a, r) = (
                days[rnd(days.len())],
                values[rnd(values.len())],
                values[rnd(values.len())],
            );
            let buf = if first {
                format!("{time};{day};{a};{r}\n00:00:00;26.10.2025;1;2\n")
            } else {
                format!("{day};{a};{time};{r}\n26.10.2025;1;00:00:00;2\n")
            };
            if declared_row_agrees(one, general, buf.as_bytes(), &mut delims).is_some() {
                agreed += 1;
                spaced += usize::from(day.trim() != day || time.starts_with(' '));
            }
        }
        // Spaces around a part are trimmed in the pass, as the general way
        // trims them (a row the pass leaves goes the general way, the same
        // readings, only slower).
        assert!(
            agreed > 8_000 && spaced > 2_000,
            "{first}: {agreed} {spaced}"
        );
    }

    /// A whitespace layout without a header (fields by position, the time
    /// in two columns, a quality column, a missing-value text that is a
    /// number), read in one pass and the general way on invented rows with
    /// runs of spaces and tabs before, between and after the fields, too few
    /// and too many fields, and values, codes and times good and bad:
    /// wherever the one pass reads a row, the same time and readings; most
    /// rows are read in one pass.
    #[test]
    fn whitespace_rows_in_one_pass_agree_with_the_general_way() {
        let toml = "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = \"whitespace\"\n\
            header = false\nmissing = [\"-9999.9\", \"NA\"]\n\n[input.time]\n\
            columns = [1, 2]\nformat = \"%Y-%m-%d %H:%M:%S\"\n\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = 3\n\
            quality = { column = 4, good = [\"0\"] }\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\ncolumn = 6\n";
        let cfg = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        let mut one = Parser::new(Path::new("x"), 1, std::iter::empty(), &cfg).unwrap();
        let mut general = one.clone();
        assert!(one.fills_rows(), "read in one pass");
        let gaps = [" ", "  ", "\t", " \t ", ""];
        let values = ["12", "3.75", "-9999.9", "NA", "nan", "x", "-0.5"];
        let counts = ["12", "2500", "-9999.9", "NA", "3.5"];
        let codes = ["0", "1", "00"];
        let mut rnd = below(31);
        let (mut agreed, mut flagged) = (0, 0);
        let mut delims = Vec::new();
        for i in 0..40_000u64 {
            let mut pick = |xs: &[&'static str]| xs[rnd(xs.len())];
            let spacing: Vec<&str> = (0..8).map(|_| pick(&gaps)).collect();
            let time = format!(
                "2025-01-20 {:02}:{:02}:{:02}",
                i / 3600 % 24,
                i / 60 % 60,
                i % 60
            );
            let mut fields = vec![
                time,
                pick(&values).to_string(),
                pick(&codes).to_string(),
                "skip".to_string(),
                pick(&counts).to_string(),
            ];
            match pick(&["fields", "more", "fewer"]) {
                "more" => fields.push("7".into()),
                "fewer" => drop(fields.pop()),
                _ => {}
            }
            let mut row = pick(&gaps).to_string();
            for (k, f) in fields.iter().enumerate() {
                if k > 0 {
                    // Between fields, at least one blank.
                    row += match spacing[k] {
                        "" => " ",
                        g => g,
                    };
                }
                row += f;
            }
            row += pick(&gaps);
            let buf = format!("{row}\n2025-01-20 00:00:00 1 0 s 2\n");
            let Some(read) =
                declared_row_agrees_at(&mut one, &mut general, buf.as_bytes(), &mut delims, None)
            else {
                continue;
            };
            agreed += 1;
            flagged += usize::from(read[0] == Reading::Flagged);
        }
        assert!(agreed > 10_000 && flagged > 3_000, "{agreed} {flagged}");
    }

    /// Layouts with `[input] filter` (the rows of station `M1` kept), read in
    /// one pass and the general way ([`Declared::row`]), row by row, on
    /// invented rows of three stations: the kept one's text with spaces
    /// around it, others (`M2`, `M12`, `m1`, an empty field), bad times and
    /// values, fields missing or more, comments. Wherever the one pass reads
    /// a row, the general way reads the same ([`declared_row_agrees_at`]);
    /// wherever it passes a row over as another station's
    /// ([`Declared::other`]), the general way counts it so and the row ends
    /// there; and it passes over most of them. The filter's column first
    /// (a header: exactly as many fields; read by `one_pass_straight`), after
    /// the channels (no header: at least as many), and in a whitespace
    /// layout.
    #[test]
    fn declared_rows_with_a_filter_in_one_pass_agree_with_the_general_way() {
        let channels = "[[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\n\
            column = \"WG\"\n[[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\n\
            column = \"R\"\n";
        // The delimiter, whether the file has a header, the delimiter byte.
        let layouts = [
            ("\";\"", true, Some(b';')),
            ("\",\"", false, Some(b',')),
            ("\"whitespace\"", false, None),
        ];
        let stations = ["M1", " M1", "M1 ", "M2", "M12", "m1", ""];
        let times = [
            "2025-01-20 10:00:01",
            "2025-01-20 10:00:02",
            "2025-13-20 10:00:03",
            "x",
        ];
        let values = ["5.5", "12", "", "nan", "x", "1e1"];
        let mut rnd = below(47);
        for (delim, has_header, d) in layouts {
            let names: &[&[u8]] = &[b"mast", b"Zeit", b"WG", b"R"];
            let header = if has_header { names } else { &[] };
            let (filter, time) = match header {
                [] => ("5", "columns = [1, 2]"),
                _ => ("\"mast\"", "column = \"Zeit\""),
            };
            let toml = format!(
                "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = {delim}\n\
                header = {}\nfilter = {{ column = {filter}, value = \"M1\" }}\n\n\
                [input.time]\n{time}\nformat = \"%Y-%m-%d %H:%M:%S\"\n\n{}",
                !header.is_empty(),
                if header.is_empty() {
                    channels.replace("\"WG\"", "3").replace("\"R\"", "4")
                } else {
                    channels.to_string()
                },
            );
            let cfg = crate::config::parse(Path::new("s.toml"), &toml)
                .unwrap_or_else(|e| panic!("{toml}: {e:#}"));
            let mut one = Parser::new(Path::new("x"), 1, header.iter().copied(), &cfg).unwrap();
            let mut general = one.clone();
            assert!(one.fills_rows(), "{delim}: read in one pass");
            // The filter's column first, then the time and the channels in
            // order: by `one_pass_straight`.
            let first = one.declared.as_deref().is_some_and(|d| d.straight_filter);
            assert_eq!(first, has_header, "{delim}");
            let (mut read, mut passed, mut others) = (0, 0, 0);
            let mut delims = Vec::new();
            for _ in 0..30_000 {
                let mut pick = |xs: &[&'static str]| xs[rnd(xs.len())];
                let station = pick(&stations);
                let mut fields = match header {
                    // mast; time; WG; R
                    [_, ..] => vec![station, pick(&times), pick(&values), pick(&values)],
                    // time, time, WG, R, mast
                    [] => {
                        let t = pick(&times);
                        let (day, clock) = t.split_once(' ').unwrap_or((t, "00:00:00"));
                        vec![day, clock, pick(&values), pick(&values), station]
                    }
                };
                match pick(&["fields", "fields", "fields", "more", "fewer", "comment"]) {
                    "more" => fields.push("7"),
                    "fewer" => drop(fields.pop()),
                    "comment" => fields[0] = "#M1",
                    _ => {}
                }
                let gap = match d {
                    Some(b) => char::from(b).to_string(),
                    None => pick(&[" ", "  ", "\t"]).to_string(),
                };
                if d.is_none() && fields.iter().any(|f| f.trim().is_empty()) {
                    // Whitespace holds no empty or blank field.
                    continue;
                }
                let row = fields.join(&gap);
                let end = pick(&["\n", "\r\n", "\r"]);
                let buf = format!("{row}{end}2025-01-20 00:00:00 1 0 s 2\n");
                let mut recs = Records::new(buf.as_bytes(), 1);
                let rec_len = match d {
                    Some(b) => recs.next_delimited(b, &mut delims).map(|(_, r)| r.len()),
                    None => {
                        delims.clear();
                        recs.next().map(|(_, r)| r.len())
                    }
                };
                let mut r = [Reading::Missing; 2];
                let want = match d {
                    Some(b) => {
                        let mut recs = Records::new(buf.as_bytes(), 1);
                        let (_, rec) = recs.next_delimited(b, &mut delims).unwrap();
                        general.parse_declared(rec, &delims, &mut r)
                    }
                    None => {
                        let rec = &buf.as_bytes()[..rec_len.unwrap()];
                        general.parse_declared(rec, &[], &mut r)
                    }
                };
                let is_other = matches!(&want, Some(Err(e)) if e.is_other_station());
                others += usize::from(is_other);
                let dec = one.declared.as_deref_mut().unwrap();
                if dec.one_pass(buf.as_bytes(), 0, &mut r).is_some() {
                    assert!(
                        matches!(want, Some(Ok(_))),
                        "{buf:?}: read, general {want:?}"
                    );
                    declared_row_agrees_at(&mut one, &mut general, buf.as_bytes(), &mut delims, d)
                        .unwrap_or_else(|| panic!("{buf:?}"));
                    read += 1;
                } else if let Some(end) = dec.other.take() {
                    assert!(is_other, "{buf:?}: passed over, general {want:?}");
                    assert_eq!(Some(end), rec_len, "{buf:?}");
                    passed += 1;
                }
                assert_eq!(one.declared.as_deref().unwrap().other, None, "taken");
            }
            assert!(read > 500, "{delim}: {read}");
            assert!(
                passed * 10 >= others * 8 && passed > 2_000,
                "{delim}: {passed} of {others}"
            );
        }
    }

    /// A row of the kept station that the one pass leaves (a bad value),
    /// after another row, in a whitespace layout whose filter is the first
    /// column: a bad row, as the general way says, not another station's.
    /// (The filter's field was searched back from its end past the row's
    /// start, into the row before, so such rows were passed over and counted
    /// as other stations'; found by the fuzz target `layouts`.)
    #[test]
    fn a_kept_rows_bad_value_after_another_row_is_a_bad_row() {
        let toml = "[logging]\nsample_rate_hz = 1\n[input]\ndelimiter = \"whitespace\"\n\
            header = false\nfilter = { column = 1, value = \"M1\" }\n[input.time]\n\
            columns = [2, 3]\nformat = \"%Y-%m-%d %H:%M:%S\"\n\
            [[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = 4\n";
        let cfg = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        let parser = Parser::new(Path::new("x"), 1, std::iter::empty(), &cfg).unwrap();
        let buf = b"M1 2025-01-20 10:00:00 5.1\nM1 2025-01-20 10:00:01 5.x\n\
            M2 2025-01-20 10:00:02 5.2\nM1 2025-01-20 10:00:03 5,3\n";
        let mut p = parser.clone();
        let mut recs = Records::new(buf, 1);
        let (mut r, mut delims) = ([Reading::Missing], Vec::new());
        let mut kinds = Vec::new();
        while let Some((line, row)) = recs.next_row(&mut p, &mut r, &mut delims) {
            kinds.push(match row {
                Ok(_) => (line, "read"),
                Err(e) if e.is_other_station() => (line, "other"),
                Err(_) => (line, "bad"),
            });
        }
        assert_eq!(
            kinds,
            [(1, "read"), (2, "bad"), (3, "other"), (4, "bad")],
            "{:?}",
            String::from_utf8_lossy(buf)
        );
        // Read in one pass, passed over, left to the general way.
        assert_eq!(one_pass_against_general(&parser, buf), Some([1, 1, 2]));
    }

    /// The check of the fuzz target `layouts` fires where the one pass and
    /// the general way differ: a reading, a time, a row passed over.
    #[test]
    fn the_one_pass_check_fires_on_a_difference() {
        let parser = |input: &str, zone: &str, unit: &str| {
            let toml = format!(
                "[logging]\nsample_rate_hz = 1\n[input]\nheader = false\n{input}\n\
                [input.time]\ncolumns = [1]\nformat = \"%Y-%m-%d %H:%M:%S\"\nzone = \"{zone}\"\n\
                [[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = 2\n{unit}"
            );
            let cfg = crate::config::parse(Path::new("s.toml"), &toml).unwrap();
            Parser::new(Path::new("x"), 1, std::iter::empty(), &cfg).unwrap()
        };
        let plain = parser("", "UTC", "");
        let buf = b"2025-01-20 10:00:00,5.1\n2025-01-20 10:00:01,5.2\n";
        assert_eq!(one_pass_against(&plain, &plain, buf), Some([2, 0, 0]));
        for (general, what) in [
            (parser("", "UTC", "source_unit = \"km/h\""), "a reading"),
            (parser("", "+01:00", ""), "a time"),
        ] {
            let r = std::panic::catch_unwind(|| one_pass_against(&plain, &general, buf));
            assert!(r.is_err(), "{what} differs");
        }
        let filtered = parser("filter = { column = 3, value = \"M1\" }", "UTC", "");
        let rows = b"2025-01-20 10:00:00,5.1,M2\n";
        assert_eq!(
            one_pass_against(&filtered, &filtered, rows),
            Some([0, 1, 0])
        );
        let r = std::panic::catch_unwind(|| one_pass_against(&filtered, &plain, rows));
        assert!(r.is_err(), "passed over, read the general way");
    }

    /// The fuzz targets' check on tenmin's own CSV: rows read straight and by
    /// the column plan as the general way reads them, and the check fires
    /// where a reading differs (two columns swapped in the general way's
    /// header).
    #[test]
    fn the_own_csv_check_reads_rows_and_fires_on_a_difference() {
        let cfg = crate::config::parse(Path::new("s.toml"), crate::fuzzing::STATION).unwrap();
        let header = |h: &'static str| {
            Parser::new(Path::new("x"), 1, h.split(',').map(str::as_bytes), &cfg).unwrap()
        };
        let own = header("time,ws80a,ws80b,ws60,wd78,t76,rh76");
        let buf = b"2025-01-20T00:00:00Z,5.12,5.2,4.8,2546,1.4,81.6\n\
            2025-01-20T00:00:01Z,5.09,5.19,4.82,2484,1.4,81.8\n\
            2025-01-20T00:00:02Z,,NaN,-999,2517,1.4,81.8\n";
        // The first row primes the cache; `NaN` the straight loop leaves (to
        // the plan, checked too).
        assert_eq!(one_pass_against(&own, &own, buf), Some([1, 0, 2]));
        let swapped = header("time,ws80b,ws80a,ws60,wd78,t76,rh76");
        let r = std::panic::catch_unwind(|| one_pass_against(&own, &swapped, buf));
        assert!(r.is_err(), "a reading differs");
    }

    /// The one-pass readers of every kind of layout (a delimiter with
    /// texts that are numbers or not, quality columns, several time
    /// columns, whitespace, a filter) on invented rows of random bytes, short and
    /// long: no panic, and a row they read ends where a line does.
    #[test]
    fn one_pass_rows_of_random_bytes_never_panic() {
        let channels = "[[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = 3\n\
            quality = { column = 4, good = [\"0\"] }\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\ncolumn = 5\n";
        let layouts = [
            ("\";\"", "[\"NAN\", \"-9\"]"),
            ("\";\"", "[\"NA\"]"),
            ("\",\"", "[]"),
            ("\"whitespace\"", "[\"NA\", \"-9\"]"),
            // With a filter (column 6): rows of other stations passed over.
            ("\";\"\nfilter = { column = 6, value = \"M1\" }", "[]"),
            (
                "\"whitespace\"\nfilter = { column = 6, value = \"M1\" }",
                "[]",
            ),
        ];
        const ALPHA: &[u8] = b"0123456789.,;-+ \t\n\rNAnax:TZ\"\xff";
        let mut next = xorshift(0x6A09_E667_F3BC_C908);
        for (delim, missing) in layouts {
            let toml = format!(
                "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = {delim}\nheader = false\n\
                missing = {missing}\n\n[input.time]\ncolumns = [1, 2]\n\
                format = \"%Y-%m-%d %H:%M:%S\"\n\n{channels}"
            );
            let cfg = crate::config::parse(Path::new("s.toml"), &toml).unwrap();
            let mut p = Parser::new(Path::new("x"), 1, std::iter::empty(), &cfg).unwrap();
            assert!(p.fills_rows(), "{delim}");
            let d = p.declared.as_deref_mut().unwrap();
            let mut readings = [Reading::Missing; 2];
            // A good row of the layout, changed at a few random places, or
            // random bytes.
            let sep = if delim.contains("whitespace") {
                " "
            } else {
                &delim[1..2]
            };
            let filter = delim.contains("filter");
            let good = ["2025-01-20", "00:00:01", "5.5", "0", "270"].join(sep);
            let (kept, other) = if filter {
                (format!("{good}{sep}M1"), format!("{good}{sep}M2"))
            } else {
                (good.clone(), good)
            };
            let mut passed = 0;
            let mut read = 0;
            for k in 0..50_000 {
                let mut row: Vec<u8> = if k % 4 == 0 {
                    let len = (next() % 48) as usize;
                    (0..len)
                        .map(|_| ALPHA[(next() % ALPHA.len() as u64) as usize])
                        .collect()
                } else if k % 2 == 1 {
                    other.as_bytes().to_vec()
                } else {
                    kept.as_bytes().to_vec()
                };
                for _ in 0..next() % 3 {
                    if !row.is_empty() {
                        let at = (next() % row.len() as u64) as usize;
                        row[at] = ALPHA[(next() % ALPHA.len() as u64) as usize];
                    }
                }
                if let Some((_, end)) = d.one_pass(&row, 0, &mut readings) {
                    assert!(
                        matches!(row.get(end), None | Some(b'\n' | b'\r')),
                        "{row:?}"
                    );
                    read += 1;
                }
                if let Some(end) = d.other.take() {
                    assert!(
                        matches!(row.get(end), None | Some(b'\n' | b'\r')),
                        "{row:?}"
                    );
                    passed += 1;
                }
            }
            assert!(read > 5_000, "{delim}: {read}");
            assert!(!filter || passed > 5_000, "{delim}: {passed}");
        }
    }

    #[test]
    fn texts_that_read_as_numbers_are_compared_with_every_number() {
        let kind = |codes: &[&str], sep: u8, delim: u8| {
            let codes: Vec<Vec<u8>> = codes.iter().map(|c| c.as_bytes().to_vec()).collect();
            codes_kind(&codes, sep, delim)
        };
        assert_eq!(kind(&[], b'.', b','), NO_CODES);
        for texts in [
            &["NAN"][..],
            &["NA", "---", "nan", "-NaN"],
            &["9999x"],
            &["1.5"],
        ] {
            assert_eq!(kind(texts, b',', b';'), TEXT_CODES, "{texts:?}");
        }
        // `1.5` is a number where the separator is `.`; `-9999` and `0`
        // everywhere (`0` also as counts).
        for texts in [&["1.5"][..], &["NAN", "-9999"], &["0"], &["+7"]] {
            assert_eq!(kind(texts, b'.', b','), NUMBER_CODES, "{texts:?}");
        }
    }

    fn declared_texts_agree(codes: &str, unit: &str, straight: bool) {
        let toml = format!(
            "[logging]\nsample_rate_hz = 1\n\n[input]\ndelimiter = \";\"\n\
            decimal = \",\"\n{codes}\n[input.time]\n\
            column = \"Zeit\"\nformat = \"%d.%m.%Y %H:%M:%S\"\n\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\ncolumn = \"WG\"\n{unit}\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\ncolumn = \"R\"\n"
        );
        let cfg = crate::config::parse(Path::new("s.toml"), &toml).unwrap();
        assert_eq!(cfg.table.sources[0].convert.is_some(), !unit.is_empty());
        // `row(r, time, a)`: the row of the layout.
        let header: [&[u8]; 3] = if straight {
            [b"Zeit", b"WG", b"R"]
        } else {
            [b"R", b"Zeit", b"WG"]
        };
        let row = |r: &str, t: &str, a: &str| match straight {
            true => format!("{t};{a};{r}"),
            false => format!("{r};{t};{a}"),
        };
        let mut one = Parser::new(Path::new("x"), 1, header.into_iter(), &cfg).unwrap();
        let mut general = one.clone();
        assert!(one.fills_rows(), "read in one pass");
        let d = one.declared.as_deref().unwrap();
        assert_eq!(d.straight.is_some(), straight);
        let kind = match codes {
            "" => NO_CODES,
            _ if codes.contains("-99,9") => NUMBER_CODES,
            _ => TEXT_CODES,
        };
        assert_eq!(d.codes, kind, "{codes}");
        let fields: [&str; 24] = [
            "NAN", "-99,9", "x", "NAN;", "NANx", "nan", "NaN", "-NaN", "+nan", "-99,90", "-99,9 ",
            " x", "xx", "X", "-99", "", "12", "3,75", "-0,5", "NA", "n", "2500", "---", "--",
        ];
        let mut x = 11u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        let (mut agreed, mut missing, mut nan, mut delims) = (0, 0, 0, Vec::new());
        for i in 0..40_000u64 {
            let mut pick = || fields[rnd(fields.len() as u64) as usize];
            let (r, a) = (pick(), pick());
            let time = format!(
                "20.01.2025 {:02}:{:02}:{:02}",
                i / 3600 % 24,
                i / 60 % 60,
                i % 60
            );
            let next = row("1", "20.01.2025 00:00:00", "2") + "\n";
            let buf = [row(r, &time, a).as_bytes(), b"\n", next.as_bytes()].concat();
            if let Some(r1) = declared_row_agrees(&mut one, &mut general, &buf, &mut delims) {
                agreed += 1;
                missing += r1.iter().filter(|v| **v == Reading::Missing).count();
                nan += r1
                    .iter()
                    .filter(|v| matches!(v, Reading::Value(f) if f.is_nan()))
                    .count();
            }
        }
        assert!(agreed > 5_000 && nan > 1_000, "{agreed} {nan}");
        if codes.is_empty() {
            return;
        }
        assert!(missing > 5_000, "{missing}");
        // Each text is read in the one pass, as a value and (those that are
        // not numbers) as counts. (`-99,9` as counts goes the general way: the
        // one pass reads `-99` and stops at the comma.)
        let d = one.declared.as_deref_mut().unwrap();
        let third = if kind == NUMBER_CODES { "-99,9" } else { "---" };
        for (r, a) in [("x", "NAN"), ("NAN", "x"), ("x", third)] {
            let row = row(r, "20.01.2025 00:00:01", a) + "\n";
            let mut got = [Reading::Value(1.0); 2];
            assert!(d.one_pass(row.as_bytes(), 0, &mut got).is_some(), "{row:?}");
            assert_eq!(got, [Reading::Missing; 2], "{row:?}");
        }
    }

    #[test]
    fn one_pass_rows_agree_with_field_by_field_rows() {
        let toml = "[logging]\nsample_rate_hz = 1\n\
            [[channel]]\nid = \"a\"\nkind = \"speed\"\nresolution = 0.01\n\
            [[channel]]\nid = \"b\"\nkind = \"scalar\"\nslope = 0.5\n";
        let cfg = crate::config::parse(Path::new("s.toml"), toml).unwrap();
        let header: [&[u8]; 3] = [b"b", b"time", b"a"];
        let mut plain = Parser::new(Path::new("x"), 1, header.into_iter(), &cfg).unwrap();
        let mut general = plain.clone();
        let times = [
            "2025-01-20T00:00:01Z",
            "2025-01-20T00:59:59Z",
            "2025-01-20T01:00:00Z",
            "2025-01-20T00:61:00Z",
            "1737331201",
            "1737331201.5",
            "2025-01-20T00:00:01+01:00",
            "",
        ];
        const ALPHA: &[u8] = b"0123456789.-+ eN,";
        let mut x = 5u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        let (mut agreed, mut commas) = (0, Vec::new());
        for _ in 0..200_000 {
            let field = |rnd: &mut dyn FnMut(u64) -> u64| -> Vec<u8> {
                (0..rnd(7))
                    .map(|_| ALPHA[rnd(ALPHA.len() as u64) as usize])
                    .collect()
            };
            let mut rec = field(&mut rnd);
            rec.push(b',');
            rec.extend_from_slice(times[rnd(times.len() as u64) as usize].as_bytes());
            rec.push(b',');
            rec.extend(field(&mut rnd));
            let term: &[u8] = [&b"\n"[..], b"\r\n", b""][rnd(3) as usize];
            let buf = [&rec[..], term].concat();
            let mut r1 = [Reading::Missing; 2];
            let mut r2 = [Reading::Missing; 2];
            let bits = |r: &[Reading; 2]| {
                r.map(|v| match v {
                    Reading::Value(f) => (0, f.to_bits()),
                    Reading::Counts(k) => (1, k as u64),
                    _ => (2, 0),
                })
            };
            // The general reader first, so that both see the same time cache.
            find_commas(&rec, &mut commas);
            let want = general.parse(&rec, &commas, &mut r2);
            if let Some((t, end)) = plain.parse_plain(&buf, 0, &mut r1) {
                assert_eq!(end, rec.len(), "{:?}", String::from_utf8_lossy(&rec));
                let want =
                    want.unwrap_or_else(|e| panic!("{e}: {:?}", String::from_utf8_lossy(&rec)));
                assert_eq!(t, want, "{:?}", String::from_utf8_lossy(&rec));
                assert_eq!(bits(&r1), bits(&r2), "{:?}", String::from_utf8_lossy(&rec));
                agreed += 1;
            } else {
                // Keep the caches in step, as the reader does.
                let _ = plain.parse(&rec, &commas, &mut r1);
            }
        }
        assert!(agreed > 1000, "{agreed}");
    }

    #[test]
    fn cached_times_agree_with_parse_time() {
        let mut cache = TimeCache::default();
        let cases = [
            "2025-01-20T00:00:00Z",
            "2025-01-20T00:00:01Z",
            "2025-01-20T00:59:59Z",
            "2025-01-20T00:60:00Z",
            "2025-01-20T00:00:60Z",
            "2025-01-20T00:0a:00Z",
            "2025-01-20T00:00:01z",
            "2025-01-20T00:00:01+",
            "2025-01-20T01:00:00Z",
            "2025-01-20 01:00:05Z",
            "2025-01-20T01:00:05.5Z",
            "2025-01-20T01:00:05+01:00",
            "2024-02-29T23:59:59Z",
            "2025-02-29T23:59:59Z",
            "1737331201",
            "1737331201.5",
            "0",
            "999999999999999",
            "9999999999999999",
            "-5",
            " 1737331201",
        ];
        for _ in 0..2 {
            for s in cases {
                assert_eq!(cache.parse(s.as_bytes()), parse_time(s.as_bytes()), "{s}");
            }
        }
        // Random runs of times in a few hours, each in one of the zones and
        // fractions a logger or a dataframe writes (`Z`, `z`, offsets, none
        // to six digits, some finer than a millisecond), read by the cache
        // (`parse`, and `parse_plain` before a delimiter) in the order given:
        // wherever it reads one, the time `parse_time` gives.
        let zones = ["Z", "z", "+01:00", "-03:30", "+00:00", "+01:0", "Z "];
        let fracs = [
            "", ".5", ".25", ".125", ".000000", ".120000", ".1234", ".", ".0001",
        ];
        let mut x = 9u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        let mut cache = TimeCache::default();
        let mut fast = 0;
        let (mut h, mut sep, mut zone) = (0, 'T', "Z");
        for _ in 0..20_000 {
            // The hour, the separator and the zone change now and then.
            match rnd(24) {
                0 => h = rnd(3),
                1 => sep = if sep == 'T' { ' ' } else { 'T' },
                2 => zone = zones[rnd(zones.len() as u64) as usize],
                _ => {}
            }
            let (m, sec) = (rnd(61), rnd(61));
            let frac = fracs[rnd(fracs.len() as u64) as usize];
            let s = format!("2025-01-20{sep}{h:02}:{m:02}:{sec:02}{frac}{zone}");
            let want = parse_time(s.as_bytes());
            let field = format!("{s},1");
            if let Some((t, n)) = cache.parse_plain(field.as_bytes()) {
                if n == s.len() {
                    assert_eq!(Ok(t), want, "{s}");
                    fast += 1;
                }
            }
            assert_eq!(cache.parse(s.as_bytes()), want, "{s}");
        }
        assert!(fast > 2_000, "{fast}");
    }

    /// The record splitter against the `csv` crate (the reference for the
    /// dialect) on random text without quotes.
    #[test]
    fn records_split_like_the_csv_crate() {
        let mut x = 7u64;
        for _ in 0..3000 {
            let mut text = Vec::new();
            for _ in 0..(x % 40) {
                x = x
                    .wrapping_mul(6_364_136_223_846_793_005)
                    .wrapping_add(1442695040888963407);
                text.push(b"ab,, \n\r\n"[(x >> 61) as usize]);
            }
            let mut rdr = csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(&text[..]);
            let want: Vec<Vec<Vec<u8>>> = rdr
                .byte_records()
                .map(|r| r.unwrap().iter().map(<[u8]>::to_vec).collect())
                .collect();
            let mut got = Vec::new();
            let mut recs = Records::new(&text, 1);
            let mut last_line = 0;
            while let Some((line, rec)) = recs.next() {
                assert!(line >= last_line);
                last_line = line;
                // The line is the one the record starts on: after each `\n`
                // and each `\r` that no `\n` follows.
                let at = rec.as_ptr() as usize - text.as_ptr() as usize;
                let before = (0..at)
                    .filter(|&i| text[i] == b'\n' || (text[i] == b'\r' && text[i + 1] != b'\n'))
                    .count();
                assert_eq!(line, before as u64 + 1);
                got.push(split_fields(rec).map(<[u8]>::to_vec).collect::<Vec<_>>());
            }
            assert_eq!(got, want, "{:?}", String::from_utf8_lossy(&text));
            let mut split = Vec::new();
            let mut recs = Records::new(&text, 1);
            let mut again = Records::new(&text, 1);
            let mut commas = Vec::new();
            while let Some((line, rec)) = recs.next_split(&mut commas) {
                assert_eq!(again.next(), Some((line, rec)));
                let mut start = 0;
                let mut fields = Vec::new();
                for &c in &commas {
                    fields.push(rec[start..c as usize].to_vec());
                    start = c as usize + 1;
                }
                fields.push(rec[start..].to_vec());
                split.push(fields);
            }
            assert_eq!(again.next(), None);
            assert_eq!(split, want);
        }
    }
}
