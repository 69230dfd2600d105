//! The one way a samples file is read, shared by the sequential and the
//! parallel replay (and so by `verify` and `export`).
//!
//! A [`FileReader`] cuts a file into [`Piece`]s in file order:
//! - [`Piece::Rows`]: a chunk of whole records (ending just after a record
//!   terminator, `\n` or `\r`, or at the end of the file) without quotes, from
//!   a known line on, with the [`Parser`] that reads them (built from the
//!   file's header). Chunks are independent: any thread may read one.
//! - [`Piece::Tail`]: the rest of a file from the first chunk holding a `"`
//!   on, to be read in order by the `csv` crate ([`csv_rows`](crate::samples::csv_rows)), so quoted
//!   fields keep working.
//!
//! The header is read here, once, on the thread that reads the file; the rows
//! of every piece are read by [`Records::next_row`] or [`csv_rows`](crate::samples::csv_rows), wherever
//! the caller runs them. Records are capped at
//! [`MAX_RECORD_BYTES`], so a chunk is at
//! most its size plus one record.
//!
//! The sequential replay reads ahead ([`FileReader::read_ahead`]): a helper
//! thread reads, decompresses and cuts the chunks (and feeds the hash
//! thread) one chunk ahead, and the replaying thread only parses and
//! replays. The pieces, their order, the tail and the errors are the same
//! either way (test: `reading_ahead_gives_the_same_pieces`).

use std::fs::File;
use std::io::{self, Cursor, Read};
use std::ops::Deref;
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{self, Receiver};
use std::sync::{Arc, Condvar, Mutex, PoisonError};
use std::thread::JoinHandle;

use anyhow::{Context, Result};

use crate::config::StationFile;
use crate::limits::{self, LongRecord, MAX_RECORD_BYTES};
use crate::provenance::{DigestHandle, Feeder, HashOn, Hashing};
use crate::samples::{split_fields, BadRow, Parser, Records};
use crate::table::{Delimiter, Table};

/// A piece of a samples file, in file order.
pub enum Piece {
    /// Records without quotes, the first on `line`; `end` is the file offset
    /// after them.
    Rows {
        /// Line of the first byte of `bytes`.
        line: u64,
        /// File offset after the chunk.
        end: u64,
        /// Whole records.
        bytes: Chunk,
        /// Reads the records (the file's header).
        parser: Arc<Parser>,
    },
    /// The rest of the file, from line `line`, holding quotes: read in order
    /// with [`csv_rows`](crate::samples::csv_rows), going on from where `head` stands.
    Tail {
        /// Line of the first byte of `rest`.
        line: u64,
        /// The bytes from the start of the chunk with the first quote on.
        rest: Box<dyn Read + Send>,
        /// The file's preamble read so far (and its parser once read).
        head: Head,
    },
}

/// Buffers for the pieces of a [`FileReader`], at most `max` at once: a
/// piece's buffer comes back here when the last holder of its [`Chunk`]
/// drops it (the replay, a worker, the hash thread), and the reader waits for
/// one when all are out. So the bytes in flight are bounded by `max` times the
/// piece size (more only for a record longer than a piece), however far the
/// reader could run ahead, and no buffer is allocated, zeroed or faulted in
/// twice.
#[derive(Clone)]
pub struct Pool(Arc<PoolInner>);

struct PoolInner {
    /// Buffers free, and how many exist.
    free: Mutex<(Vec<Vec<u8>>, usize)>,
    back: Condvar,
    max: usize,
}

impl Pool {
    /// A pool of at most `max` buffers (at least 1).
    pub fn new(max: usize) -> Pool {
        Pool(Arc::new(PoolInner {
            free: Mutex::new((Vec::new(), 0)),
            back: Condvar::new(),
            max: max.max(1),
        }))
    }

    /// A free buffer, a new one while fewer than `max` exist, else the next
    /// one handed back.
    fn take(&self) -> Vec<u8> {
        let mut g = self.0.free.lock().unwrap_or_else(PoisonError::into_inner);
        loop {
            if let Some(b) = g.0.pop() {
                return b;
            }
            if g.1 < self.0.max {
                g.1 += 1;
                return Vec::new();
            }
            g = self.0.back.wait(g).unwrap_or_else(PoisonError::into_inner);
        }
    }

    fn give(&self, b: Vec<u8>) {
        let mut g = self.0.free.lock().unwrap_or_else(PoisonError::into_inner);
        g.0.push(b);
        drop(g);
        self.0.back.notify_one();
    }
}

/// The bytes of a piece, shared read-only by whoever reads them (the
/// replay, a worker, the hash thread: cloning shares, never copies), and
/// handed back to the reader's [`Pool`] when the last holder drops them.
#[derive(Clone)]
pub struct Chunk(Arc<Lease>);

struct Lease {
    bytes: Vec<u8>,
    home: Option<Pool>,
}

impl Drop for Lease {
    fn drop(&mut self) {
        if let Some(pool) = self.home.take() {
            pool.give(std::mem::take(&mut self.bytes));
        }
    }
}

impl Chunk {
    fn new(bytes: Vec<u8>, home: Option<Pool>) -> Chunk {
        Chunk(Arc::new(Lease { bytes, home }))
    }
}

impl From<Vec<u8>> for Chunk {
    /// Bytes of no pool.
    fn from(bytes: Vec<u8>) -> Chunk {
        Chunk::new(bytes, None)
    }
}

impl Deref for Chunk {
    type Target = [u8];
    fn deref(&self) -> &[u8] {
        &self.0.bytes
    }
}

impl AsRef<[u8]> for Chunk {
    fn as_ref(&self) -> &[u8] {
        &self.0.bytes
    }
}

/// Buffers of a [`FileReader`] by default: one being read, one or two being
/// hashed (`--jobs 1` with a provenance file, [`HashOn::Helper`]).
const POOL_BUFFERS: usize = 3;

/// Buffers of a [`FileReader`] that reads ahead ([`FileReader::read_ahead`]):
/// one being replayed, one queued, one being filled, and one more while the
/// hash thread still holds a chunk.
const AHEAD_BUFFERS: usize = 4;

/// A samples file read piece by piece.
pub struct FileReader<'a> {
    path: &'a Path,
    cfg: &'a StationFile,
    /// Where the chunks come from: cut here, or by the read-ahead thread.
    src: Source,
    /// Whether the chunks are to be cut on a read-ahead thread (started at
    /// the first chunk).
    ahead: bool,
    /// Line of the first byte not handed out yet.
    line: u64,
    /// The preamble: lines skipped, the header, the units line.
    head: Head,
    /// The parser of the rows, once the preamble is read.
    parser: Option<Arc<Parser>>,
    /// The digest of the file's bytes as stored, when asked for.
    digest: Option<DigestHandle>,
}

/// The file cut into chunks of whole records ([`Cutter::chunk`]): on the
/// thread of the [`FileReader`], or on its read-ahead thread.
struct Cutter {
    /// The bytes not read yet (`None` after a tail was handed out).
    file: Option<Box<dyn Read + Send>>,
    /// The partial record after the last chunk.
    carry: Vec<u8>,
    /// File offset of `carry`.
    offset: u64,
    eof: bool,
    /// The pieces' buffers.
    pool: Pool,
    /// The hash thread fed with each chunk as cut (a plain file hashed on
    /// a helper: the chunks are the file's bytes in order, shared, not
    /// copied); `None` once the end was handed on, or after an error.
    ring: Option<Feeder>,
    /// The layout's CSV delimiter: chunks whose quotes are simple are
    /// handed on without them ([`unquoted`]).
    delim: Option<u8>,
}

/// A chunk as [`Cutter::chunk`] gives it: its file offset, its bytes and
/// what the cutter found in them.
type Cut = io::Result<Option<(u64, Chunk, Scan)>>;

/// What [`Cutter::cut`] finds in a chunk's bytes while they are fresh from
/// the read, on the cutting thread (with `--jobs 1`, the read-ahead thread,
/// so that the replaying thread does not pass over every byte twice more;
/// host-cli/PERF.md, "Scans on the cutting thread").
#[derive(Clone, Copy, Debug)]
struct Scan {
    /// Its line ends ([`count_line_ends`]).
    newlines: u64,
    /// Whether it holds a `"` (then the `csv` crate reads on from it).
    quote: bool,
    /// Its length in the file (before any quotes were taken out).
    bytes: u64,
}

impl Scan {
    fn of(b: &[u8]) -> Scan {
        Scan {
            newlines: count_line_ends(b),
            quote: memchr::memchr(b'"', b).is_some(),
            bytes: b.len() as u64,
        }
    }
}

enum Source {
    /// Cut on the reader's thread.
    Here(Cutter),
    /// Cut on a read-ahead thread, which hands the [`Cutter`] back when it
    /// ends ([`Ahead::finish`]).
    Ahead(Ahead),
    /// Only while the read-ahead thread is being stopped.
    Moving,
}

/// A read-ahead thread: it reads (and decompresses) the file, cuts it into
/// chunks and feeds the hash thread, one chunk ahead of the replay, so the
/// replaying thread does no reading of its own. The chunks and their errors
/// arrive in file order, exactly as [`Cutter::chunk`] gives them.
struct Ahead {
    rx: Receiver<Cut>,
    /// Asks the thread to stop after the chunk it is cutting.
    stop: Arc<AtomicBool>,
    /// `None` once joined.
    thread: Option<JoinHandle<Cutter>>,
}

impl Ahead {
    /// Starts the thread on `cutter`, cutting chunks of `size` bytes.
    fn start(mut cutter: Cutter, size: usize) -> io::Result<Ahead> {
        // One chunk queued: the thread runs at most one chunk (and the one
        // it is filling) ahead of the replay.
        let (tx, rx) = mpsc::sync_channel(1);
        let stop = Arc::new(AtomicBool::new(false));
        let halt = stop.clone();
        let thread = std::thread::Builder::new()
            .name("tenmin-read".into())
            .spawn(move || {
                while !halt.load(Ordering::Acquire) {
                    let cut = cutter.chunk(size);
                    let last = !matches!(cut, Ok(Some(_)));
                    if tx.send(cut).is_err() || last {
                        break;
                    }
                }
                cutter
            })?;
        Ok(Ahead {
            rx,
            stop,
            thread: Some(thread),
        })
    }

    /// Stops the thread and takes its [`Cutter`] back, with the bytes of
    /// the chunks it had cut and not handed out (in order, to be read
    /// before the cutter's carry) and the first error among them.
    fn finish(&mut self) -> (Option<Cutter>, Vec<u8>, Option<io::Error>) {
        self.stop.store(true, Ordering::Release);
        let mut pending = Vec::new();
        let mut error = None;
        // Receiving drops the chunks, so a thread waiting for a buffer gets
        // one, cuts it, sends it and sees the stop.
        for cut in self.rx.iter() {
            match cut {
                Ok(Some((_, c, _))) => {
                    if error.is_none() {
                        pending.extend_from_slice(&c);
                    }
                }
                Ok(None) => {}
                Err(e) => {
                    error.get_or_insert(e);
                }
            }
        }
        let cutter = self.thread.take().and_then(|t| t.join().ok());
        (cutter, pending, error)
    }
}

impl Drop for Ahead {
    /// A reader dropped before the end (an error in a row, a replay
    /// stopped) stops its thread and waits for it: no thread outlives its
    /// file.
    fn drop(&mut self) {
        if self.thread.is_some() {
            self.finish();
        }
    }
}

impl Cutter {
    /// The next chunk of about `size` bytes (more if a record is longer, up
    /// to the limit) and its file offset; `None` at the end of the file.
    /// The chunks are the file's (decompressed) bytes, in order, each once.
    fn chunk(&mut self, size: usize) -> Cut {
        let r = self.cut(size);
        match (&r, self.ring.as_mut()) {
            (_, None) => {}
            (Ok(Some((_, c, _))), Some(feeder)) => {
                if !feeder.share(c.clone()) {
                    // The hash thread is gone: no digest.
                    self.ring = None;
                }
            }
            (Ok(None), Some(_)) => {
                if self.file.is_some() {
                    if let Some(feeder) = self.ring.take() {
                        feeder.end();
                    }
                }
            }
            // Never a digest of part of a file.
            (Err(_), Some(_)) => self.ring = None,
        }
        // Hashed as stored; replayed without simple quotes, by the block
        // reader, instead of by the `csv` crate from here on.
        // The copy takes a buffer of the pool, so that its bound holds.
        match (r, self.delim) {
            (Ok(Some((offset, c, scan))), Some(d)) if scan.quote => {
                let mut out = self.pool.take();
                if unquoted(&c, d, &mut out) {
                    let scan = Scan {
                        quote: false,
                        ..scan
                    };
                    Ok(Some((
                        offset,
                        Chunk::new(out, Some(self.pool.clone())),
                        scan,
                    )))
                } else {
                    self.pool.give(out);
                    Ok(Some((offset, c, scan)))
                }
            }
            (r, _) => r,
        }
    }

    fn cut(&mut self, size: usize) -> Cut {
        let Some(file) = self.file.as_mut() else {
            return Ok(None);
        };
        // A piece's buffer handed back to the pool is filled again: no
        // fresh allocation, zeroing or page faults per piece; reads go
        // straight into it, as large as it is.
        let mut buf = self.pool.take();
        let room = size.max(self.carry.len() * 2).max(64);
        if buf.len() < room {
            buf.resize(room, 0);
        }
        let mut filled = self.carry.len();
        buf[..filled].copy_from_slice(&self.carry);
        self.carry.clear();
        let offset = self.offset;
        loop {
            while !self.eof && filled < buf.len() {
                match file.read(&mut buf[filled..]) {
                    Ok(0) => self.eof = true,
                    Ok(n) => filled += n,
                    Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                    Err(e) => return Err(e),
                }
            }
            // A chunk ends after its last line end; not after a `\r` whose
            // next byte is not read yet (a `\n` there makes the two one line
            // end, and a chunk's lines are counted alone: `count_line_ends`).
            let last = match memchr::memrchr2(b'\n', b'\r', &buf[..filled]) {
                Some(p) if buf[p] == b'\r' && p + 1 == filled && !self.eof => {
                    memchr::memrchr2(b'\n', b'\r', &buf[..p])
                }
                last => last,
            };
            if let Some(p) = last {
                self.carry.extend_from_slice(&buf[p + 1..filled]);
                filled = p + 1;
            } else if !self.eof {
                // A record longer than the chunk: read on, up to the limit.
                if filled > MAX_RECORD_BYTES {
                    return Err(LongRecord::io());
                }
                buf.resize(2 * buf.len(), 0);
                continue;
            }
            buf.truncate(filled);
            self.offset = offset + filled as u64;
            if filled == 0 {
                self.pool.give(buf);
                return Ok(None);
            }
            let scan = Scan::of(&buf);
            return Ok(Some((
                offset,
                Chunk::new(buf, Some(self.pool.clone())),
                scan,
            )));
        }
    }
}

impl<'a> FileReader<'a> {
    /// Opens `path`, a samples file of the station `cfg`: read as it is, or
    /// decompressed as a stream when it ends in `.gz` or `.zst`.
    pub fn open(path: &'a Path, cfg: &'a StationFile) -> Result<Self> {
        Self::open_hashed(path, cfg, None)
    }

    /// [`FileReader::open`], and with `hash` also the SHA-256 of the file's
    /// bytes as stored (a compressed file's compressed bytes), computed from
    /// the bytes read ([`Hashing`]): taken with [`FileReader::digest`] once
    /// the file was read.
    ///
    /// A plain file hashed on a helper ([`HashOn::Helper`]) is hashed from
    /// the pieces' own buffers: each chunk cut is handed to the hash thread
    /// as it is (a [`Chunk`] shared, no copy) and its buffer comes back to
    /// the pool once hashed and read. A compressed file is hashed below its
    /// decompressor ([`Hashing`]).
    pub fn open_hashed(path: &'a Path, cfg: &'a StationFile, hash: Option<HashOn>) -> Result<Self> {
        let (file, digest, ring) =
            if hash == Some(HashOn::Helper) && Compression::of(path) == Compression::None {
                let file: Box<dyn Read + Send> = Box::new(
                    File::open(path).with_context(|| format!("cannot open {}", path.display()))?,
                );
                let (feeder, handle) = Feeder::spawn();
                (file, Some(handle), Some(feeder))
            } else {
                let (file, digest) = open_maybe_compressed_hashed(path, hash)?;
                (file, digest, None)
            };
        Ok(FileReader {
            path,
            cfg,
            src: Source::Here(Cutter {
                file: Some(file),
                carry: Vec::new(),
                offset: 0,
                eof: false,
                pool: Pool::new(POOL_BUFFERS),
                ring,
                delim: cfg.table.csv_delimiter(),
            }),
            ahead: false,
            line: 1,
            head: Head::default(),
            parser: None,
            digest,
        })
    }

    /// Takes the pieces' buffers from `pool` (shared by the files of a
    /// parallel replay, so that its bound holds across them).
    pub fn with_pool(mut self, pool: Pool) -> Self {
        if let Source::Here(c) = &mut self.src {
            c.pool = pool;
        }
        self
    }

    /// Reads the file on a read-ahead thread, started at the first piece:
    /// it reads, decompresses and cuts the chunks (and feeds the hash
    /// thread) while this thread replays the one before. The pieces, their
    /// order and their errors are the same as without it.
    pub fn read_ahead(mut self) -> Self {
        if let Source::Here(c) = &mut self.src {
            c.pool = Pool::new(AHEAD_BUFFERS);
            self.ahead = true;
        }
        self
    }

    /// The handle of the file's digest (with [`FileReader::open_hashed`]),
    /// once. It gives the digest once every byte was read: by this reader,
    /// or by whoever read the [`Piece::Tail`] to its end.
    pub fn digest(&mut self) -> Option<DigestHandle> {
        self.digest.take()
    }

    /// Hands a piece's bytes back, to be filled with a later piece (its
    /// whole capacity is reused; only what lies past its length is zeroed).
    /// Dropping the [`Chunk`] does the same: its buffer returns to the pool
    /// once its last holder drops it.
    pub fn recycle(&mut self, bytes: Chunk) {
        drop(bytes);
    }

    /// Whether the file held a header, or data rows for a layout without
    /// one (false at the end: an empty file).
    pub fn saw_header(&self) -> bool {
        self.parser.is_some() || self.head.parser.is_some()
    }

    /// The next piece of about `size` bytes; `None` at the end of the file
    /// (and after a [`Piece::Tail`]). A header problem, a record longer than
    /// the limit or an I/O error is an error naming the file and line.
    pub fn next_piece(&mut self, size: usize) -> Result<Option<Piece>> {
        loop {
            let Some((offset, block, scan)) = self
                .chunk(size)
                .map_err(|e| limits::read_error(e, self.path, self.line))?
            else {
                return Ok(None);
            };
            let line = self.line;
            let quotes = self.cfg.table.csv_delimiter().is_some();
            if quotes && scan.quote {
                // The rest of the file after this chunk: the chunks the
                // read-ahead thread cut already (hashed as cut), then the
                // partial record and the bytes not read yet.
                let (path, at) = (self.path, self.line);
                let (cutter, pending) = self.here().map_err(|e| limits::read_error(e, path, at))?;
                let file = cutter.file.take().unwrap_or_else(|| Box::new(io::empty()));
                let after = Cursor::new(std::mem::take(&mut cutter.carry)).chain(file);
                // The chunks were hashed as cut; what follows is hashed as
                // the tail reads it, by the same thread, in order.
                let after: Box<dyn Read + Send> = match cutter.ring.take() {
                    Some(feeder) => Box::new(Hashing::with_feeder(after, feeder)),
                    None => Box::new(after),
                };
                // The csv crate drops a UTF-8 BOM at the start of what it
                // reads, taking it for the file's. Past the file's start a
                // BOM is data, as the block reader reads it: the csv crate
                // first reads a line end of its own (a blank line, skipped),
                // on the line before.
                let (lead, line) = match offset {
                    0 => (&b""[..], line),
                    _ => (&b"\n"[..], line.saturating_sub(1)),
                };
                let rest = Cursor::new(lead)
                    .chain(Cursor::new(block))
                    .chain(Cursor::new(pending))
                    .chain(after);
                return Ok(Some(Piece::Tail {
                    line,
                    rest: Box::new(rest),
                    head: std::mem::take(&mut self.head),
                }));
            }
            let end = offset + scan.bytes;
            let (body, body_line, newlines) = match &self.parser {
                Some(p) => {
                    if !self.head.first_row_checked {
                        self.head.first_row_checked =
                            first_row_time(self.path, self.cfg, p, &block, line)?;
                    }
                    (block, line, scan.newlines)
                }
                None => {
                    let table = &self.cfg.table;
                    let mut recs = Records::new(&block, line);
                    let mut start = None;
                    loop {
                        let (pos, at) = (recs.pos(), recs.line());
                        let Some((ln, rec)) = recs.next() else { break };
                        let data = self.head.feed(
                            self.path,
                            self.cfg,
                            ln,
                            table.is_comment(rec),
                            split_header(table, rec),
                        )?;
                        if data {
                            start = Some((pos, at));
                            break;
                        }
                        if self.head.ready().is_some() {
                            start = Some((recs.pos(), recs.line()));
                            break;
                        }
                    }
                    match (start, self.head.ready()) {
                        (Some((pos, at)), Some(p)) => {
                            let body = Chunk::from(block[pos..].to_vec());
                            let checked = first_row_time(self.path, self.cfg, p, &body, at)?;
                            self.parser = Some(Arc::new(p.clone()));
                            self.head.first_row_checked = checked;
                            let newlines = count_line_ends(&body);
                            (body, at, newlines)
                        }
                        _ => {
                            self.line = recs.line();
                            continue;
                        }
                    }
                }
            };
            self.line = body_line + newlines;
            let Some(parser) = self.parser.clone() else {
                continue;
            };
            if body.is_empty() {
                continue;
            }
            return Ok(Some(Piece::Rows {
                line: body_line,
                end,
                bytes: body,
                parser,
            }));
        }
    }

    /// The next chunk ([`Cutter::chunk`]): cut here, or received from the
    /// read-ahead thread (started here at the first chunk). Once that thread
    /// has given the end or an error, its cutter comes back here.
    fn chunk(&mut self, size: usize) -> Cut {
        if self.ahead {
            self.ahead = false;
            if let Source::Here(c) = std::mem::replace(&mut self.src, Source::Moving) {
                // A thread that cannot start is an error (the cutter is
                // gone with it: the reader gives no more pieces).
                self.src = Source::Ahead(Ahead::start(c, size)?);
            }
        }
        let cut = match &mut self.src {
            Source::Here(c) => return c.chunk(size),
            Source::Ahead(a) => a.rx.recv(),
            Source::Moving => return Ok(None),
        };
        match cut {
            Ok(cut @ Ok(Some(_))) => cut,
            Ok(last) => {
                // The end or an error: the thread has stopped.
                self.here()?;
                last
            }
            Err(_) => Err(io::Error::other("the read-ahead thread stopped")),
        }
    }

    /// The cutter back on this thread (the read-ahead thread stopped), with
    /// the bytes it had cut and not handed out, to be read before its carry.
    fn here(&mut self) -> io::Result<(&mut Cutter, Vec<u8>)> {
        let mut pending = Vec::new();
        if let Source::Ahead(a) = &mut self.src {
            let (cutter, bytes, error) = a.finish();
            let Some(cutter) = cutter else {
                return Err(io::Error::other("the read-ahead thread stopped"));
            };
            self.src = Source::Here(cutter);
            if let Some(e) = error {
                return Err(e);
            }
            pending = bytes;
        }
        match &mut self.src {
            Source::Here(c) => Ok((c, pending)),
            _ => Err(io::Error::other("the read-ahead thread stopped")),
        }
    }
}

/// A declared layout whose time format cannot read the file's first data
/// row cannot be right: refused before any sample is read (even with
/// `--skip-bad-rows`), naming the station file's key and line. Returns
/// whether `body` held the first data row (or there is nothing to check:
/// tenmin's own CSV); false when it held none (comments only, or nothing),
/// so that the next chunk is checked. The `csv` crate's tail checks its
/// records alike ([`Head::check_first_record`]).
fn first_row_time(
    path: &Path,
    cfg: &StationFile,
    parser: &Parser,
    body: &[u8],
    line: u64,
) -> Result<bool> {
    let Some(delim) = parser.declared_delimiter() else {
        return Ok(true);
    };
    let mut p = parser.clone();
    let mut recs = Records::new(body, line);
    let mut at = Vec::new();
    let mut readings = vec![qc_core::Reading::Missing; cfg.channels.len()];
    loop {
        let Some((ln, rec)) = (match delim {
            Some(b) => recs.next_delimited(b, &mut at),
            None => recs.next(),
        }) else {
            return Ok(false);
        };
        if let Some(checked) =
            first_row_verdict(path, cfg, ln, p.parse_declared(rec, &at, &mut readings))?
        {
            return Ok(checked);
        }
    }
}

/// What a record read by a layout's parser says of the first data row:
/// `None` for a comment (the next record is the first data row), an error
/// when its time does not read, else `Some(true)` (rows of other stations,
/// or other problems: the rows' own business).
fn first_row_verdict(
    path: &Path,
    cfg: &StationFile,
    line: u64,
    read: Option<Result<qc_core::Timestamp, BadRow>>,
) -> Result<Option<bool>> {
    match read {
        None => Ok(None),
        Some(Err(bad)) if bad.is_time() => {
            let key = match cfg.table.time_line {
                0 => format!("the time of {} (by default)", cfg.path.display()),
                n => format!("[{}.time] at {}:{n}", cfg.table.section, cfg.path.display()),
            };
            anyhow::bail!(
                "{}:{line}: {bad}: {key} cannot read the first data row, so the layout cannot be right (check `format`, `epoch`, `columns`, `zone` and `label`)",
                path.display()
            );
        }
        Some(_) => Ok(Some(true)),
    }
}

/// How a file is compressed, from its name.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Compression {
    /// Not compressed.
    None,
    /// gzip (`.gz`), one member or several.
    Gzip,
    /// Zstandard (`.zst`).
    Zstd,
}

impl Compression {
    /// From the file name's extension.
    pub fn of(path: &Path) -> Compression {
        match path.extension().and_then(|e| e.to_str()) {
            Some(e) if e.eq_ignore_ascii_case("gz") => Compression::Gzip,
            Some(e) if e.eq_ignore_ascii_case("zst") => Compression::Zstd,
            _ => Compression::None,
        }
    }
}

/// `path` as a stream of its (decompressed) bytes. Decompression keeps a
/// fixed window (gzip 32 KiB; Zstandard its frame's window, at most 128 MiB
/// by the format's decoder default, 8 MiB for files written at the usual
/// levels), so memory stays constant whatever the file's length.
pub fn open_maybe_compressed(path: &Path) -> Result<Box<dyn Read + Send>> {
    Ok(open_maybe_compressed_hashed(path, None)?.0)
}

/// [`open_maybe_compressed`], and with `hash` the handle of the SHA-256 of
/// the file's bytes as stored, hashed as they are read ([`Hashing`]).
pub fn open_maybe_compressed_hashed(
    path: &Path,
    hash: Option<HashOn>,
) -> Result<(Box<dyn Read + Send>, Option<DigestHandle>)> {
    let file = File::open(path).with_context(|| format!("cannot open {}", path.display()))?;
    match hash {
        None => Ok((decompressed(path, file)?, None)),
        Some(on) => {
            let (file, handle) = Hashing::new(file, on);
            Ok((decompressed(path, file)?, Some(handle)))
        }
    }
}

/// The bytes of `file` (named `path`), decompressed by its name.
fn decompressed<R: Read + Send + 'static>(path: &Path, file: R) -> Result<Box<dyn Read + Send>> {
    let compression = Compression::of(path);
    if compression == Compression::None {
        return Ok(Box::new(file));
    }
    let file = io::BufReader::with_capacity(256 << 10, file);
    Ok(match compression {
        Compression::None | Compression::Gzip => {
            Box::new(flate2::bufread::MultiGzDecoder::new(file))
        }
        Compression::Zstd => {
            let mut d = zstd::stream::read::Decoder::with_buffer(file)
                .with_context(|| format!("cannot read {} as Zstandard", path.display()))?;
            // At most an 8 MiB window (2^23): the levels `zstd` writes by
            // default stay below it; a file asking for more is refused.
            d.window_log_max(23)
                .with_context(|| format!("cannot read {} as Zstandard", path.display()))?;
            Box::new(d)
        }
    })
}

/// The fields of a header record of `table`'s layout.
fn split_header<'r>(table: &Table, rec: &'r [u8]) -> Box<dyn Iterator<Item = &'r [u8]> + 'r> {
    match table.delimiter {
        Delimiter::Byte(b',') => Box::new(split_fields(rec)),
        Delimiter::Byte(d) => Box::new(rec.split(move |c| *c == d)),
        Delimiter::Whitespace => Box::new(
            rec.split(|c| *c == b' ' || *c == b'\t')
                .filter(|f| !f.is_empty()),
        ),
    }
}

/// How far the preamble of a file is read: the lines to skip, comment lines,
/// the header and the units line (see [`Table`]). One state, fed by the
/// block reader and by the `csv` crate's tail alike.
#[derive(Clone, Debug, Default)]
pub struct Head {
    parser: Option<Parser>,
    units_pending: bool,
    /// Whether the first data row's time was checked ([`first_row_time`],
    /// [`Head::check_first_record`]): the chunk that ends the preamble may
    /// hold no data row (it ends there, or comments follow), and the rest
    /// of the file may go to the `csv` crate before one.
    first_row_checked: bool,
}

impl Head {
    /// The parser, once the preamble is read.
    pub fn ready(&self) -> Option<&Parser> {
        (!self.units_pending)
            .then_some(self.parser.as_ref())
            .flatten()
    }

    /// The parser, once the preamble is read.
    pub fn ready_mut(&mut self) -> Option<&mut Parser> {
        if self.units_pending {
            return None;
        }
        self.parser.as_mut()
    }

    /// Checks the time of `rec` (on `line`) as [`first_row_time`] checks a
    /// block's, while the first data row is still to be checked: for the
    /// `csv` crate's records ([`csv_rows`](crate::samples::csv_rows)), each
    /// before it is read.
    pub fn check_first_record(
        &mut self,
        path: &Path,
        cfg: &StationFile,
        line: u64,
        rec: &csv::ByteRecord,
    ) -> Result<()> {
        if self.first_row_checked {
            return Ok(());
        }
        let Some(parser) = self.ready() else {
            return Ok(());
        };
        if parser.declared_delimiter().is_none() {
            self.first_row_checked = true;
            return Ok(());
        }
        let mut p = parser.clone();
        let mut readings = vec![qc_core::Reading::Missing; cfg.channels.len()];
        let read = p.parse_record(rec, &mut readings);
        if let Some(checked) = first_row_verdict(path, cfg, line, read)? {
            self.first_row_checked = checked;
        }
        Ok(())
    }

    /// Whether a header (or data, without one) was read.
    pub fn seen(&self) -> bool {
        self.parser.is_some()
    }

    /// Feeds the preamble's next record (`line`, its fields, whether it is a
    /// comment) while not [`Head::ready`]. Returns true when this record is
    /// already data (a layout without a header).
    pub fn feed<'f>(
        &mut self,
        path: &Path,
        cfg: &StationFile,
        line: u64,
        comment: bool,
        fields: impl Iterator<Item = &'f [u8]>,
    ) -> Result<bool> {
        let table = &cfg.table;
        if line <= table.skip_lines || comment {
            return Ok(false);
        }
        if self.units_pending {
            self.units_pending = false;
            return Ok(false);
        }
        if table.header {
            self.parser = Some(Parser::new(path, line, fields, cfg)?);
            self.units_pending = table.units_line;
            return Ok(false);
        }
        self.parser = Some(Parser::new(path, line, std::iter::empty(), cfg)?);
        Ok(true)
    }
}

/// `b` (whole records) without the quotes around its quoted fields, into
/// `out` (cleared first), when every `"` in it opens or closes a whole field
/// that holds no `"`, `delim` or line end: the `csv` crate reads the same
/// fields from either (RFC 4180's quotes only enclose). False for any other
/// `"` (an escaped one, a field with a delimiter or a line end inside, a
/// quote within a field): the `csv` crate reads the file from there.
fn unquoted(b: &[u8], delim: u8, out: &mut Vec<u8>) -> bool {
    out.clear();
    out.reserve(b.len());
    let mut from = 0;
    let ends_field = |c: u8| c == delim || c == b'\n' || c == b'\r';
    let mut quotes = memchr::memchr_iter(b'"', b);
    while let Some(open) = quotes.next() {
        if open > 0 && !ends_field(b[open - 1]) {
            return false;
        }
        let Some(close) = quotes.next() else {
            return false;
        };
        let body = &b[open + 1..close];
        if memchr::memchr3(delim, b'\n', b'\r', body).is_some() {
            return false;
        }
        if b.get(close + 1).is_some_and(|&c| !ends_field(c)) {
            return false;
        }
        // A line that is only `""`: a record of one empty field, not the
        // blank line it would leave.
        let line_start = open == 0 || matches!(b[open - 1], b'\n' | b'\r');
        let line_end = b.get(close + 1).is_none_or(|&c| c == b'\n' || c == b'\r');
        if body.is_empty() && line_start && line_end {
            return false;
        }
        out.extend_from_slice(&b[from..open]);
        out.extend_from_slice(body);
        from = close + 1;
    }
    out.extend_from_slice(&b[from..]);
    true
}

/// The line ends in `b`, as a text editor counts them: each `\n`, and each
/// `\r` not followed by a `\n` (an old Mac line end; a `\r` at the end of `b`
/// is one). `\r\n` is one line end, its `\n`.
pub fn count_line_ends(b: &[u8]) -> u64 {
    let n = count_newlines(b);
    if memchr::memchr(b'\r', b).is_none() {
        return n;
    }
    let lone = memchr::memchr_iter(b'\r', b)
        .filter(|&i| b.get(i + 1) != Some(&b'\n'))
        .count();
    n + lone as u64
}

/// The `\n` bytes in `b`, 64 at a time (a shape the compiler vectorizes).
pub fn count_newlines(b: &[u8]) -> u64 {
    let mut blocks = b.chunks_exact(64);
    let mut n = 0u64;
    for block in &mut blocks {
        n += u64::from(block.iter().map(|&c| u8::from(c == b'\n')).sum::<u8>());
    }
    n + blocks.remainder().iter().filter(|&&c| c == b'\n').count() as u64
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::process::Command;

    /// `sha256sum FILE` (coreutils, FIPS 180-4 SHA-256, a program apart
    /// from this crate), lowercase hex.
    fn sha256sum(path: &Path) -> String {
        let out = Command::new("sha256sum").arg(path).output().unwrap();
        assert!(out.status.success());
        String::from_utf8(out.stdout).unwrap()[..64].to_string()
    }

    fn station(dir: &Path) -> StationFile {
        let p = dir.join("station.toml");
        std::fs::write(
            &p,
            "[logging]\ninterval_s = 600\nsample_rate_hz = 1\n\n\
             [[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\n",
        )
        .unwrap();
        crate::config::load(&p).unwrap()
    }

    /// Reads `path` piece by piece of `size` bytes, each piece dropped
    /// before the next (as the sequential replay does), stopping after
    /// `stop` pieces if given; returns the digest handle's answer.
    fn digest_of(
        path: &Path,
        cfg: &StationFile,
        size: usize,
        stop: Option<usize>,
        ahead: bool,
    ) -> Result<Option<crate::provenance::FileDigest>> {
        let mut r = FileReader::open_hashed(path, cfg, Some(HashOn::Helper))?;
        if ahead {
            r = r.read_ahead();
        }
        let handle = r.digest().unwrap();
        let mut n = 0;
        let read = loop {
            if stop == Some(n) {
                break Ok(());
            }
            match r.next_piece(size) {
                Ok(Some(Piece::Rows { bytes, .. })) => r.recycle(bytes),
                Ok(Some(Piece::Tail { mut rest, .. })) if stop.is_some() => {
                    // The tail read in part, then dropped.
                    break rest.read_exact(&mut [0u8; 100]).map_err(Into::into);
                }
                Ok(Some(Piece::Tail { mut rest, .. })) => {
                    break rest
                        .read_to_end(&mut Vec::new())
                        .map(drop)
                        .map_err(Into::into)
                }
                Ok(None) => break Ok(()),
                Err(e) => break Err(e),
            }
            n += 1;
        };
        drop(r);
        read.map(|()| handle.finish())
    }

    /// The chunks of a plain file, shared with the hash thread as cut (no
    /// copy): the digest is `sha256sum`'s for files ending on a piece's
    /// edge, one byte either side, without a final newline, empty, holding
    /// only a header, or going on in the `csv` crate's tail after a quote;
    /// a reader dropped before the end, or stopped by a record over the
    /// limit (a read error), gives none.
    #[test]
    fn chunks_hashed_as_cut_give_the_files_digest_or_none() {
        let dir = tempfile::tempdir().unwrap();
        let cfg = station(dir.path());
        let row = |i: i64| format!("{},{}.{:02}\n", 1_737_331_200 + i, 3 + i % 9, i % 100);
        let header = "time,ws\n";
        let mut body = String::from(header);
        while body.len() < 70_000 {
            body.push_str(&row(body.len() as i64));
        }
        let size = 4096;
        let mut cases: Vec<(String, String)> = vec![
            ("empty".into(), String::new()),
            ("header".into(), header.into()),
            ("nonl".into(), body.trim_end().into()),
            ("plain".into(), body.clone()),
            ("quoted".into(), body.replacen(",5.", ",\"5.", 1)),
        ];
        // Files ending on a piece's edge, and one byte either side (cut
        // anywhere in a row: a partial last line without a newline).
        let edge = 3 * size;
        for len in [edge - 1, edge, edge + 1] {
            let mut t = String::from(header);
            while t.len() < len {
                t.push_str(&row(t.len() as i64));
            }
            t.truncate(len);
            cases.push((format!("edge{len}"), t));
        }
        for (name, text) in &cases {
            let path = dir.path().join(format!("{name}.csv"));
            std::fs::write(&path, text).unwrap();
            let want = crate::provenance::FileDigest {
                sha256: sha256sum(&path),
                size: text.len() as u64,
            };
            for ahead in [false, true] {
                for piece in [64, size, 1 << 20] {
                    let got = digest_of(&path, &cfg, piece, None, ahead).unwrap();
                    assert_eq!(got, Some(want.clone()), "{name} {piece} {ahead}");
                }
                // Read in part: the read-ahead thread is at most two chunks
                // ahead, so a file of four or more never reaches its end.
                if text.len() > 4 * size {
                    let got = digest_of(&path, &cfg, size, Some(1), ahead).unwrap();
                    assert_eq!(got, None, "{name}: read in part, {ahead}");
                }
            }
        }
        // A record over the limit stops the reading with an error: no digest.
        let path = dir.path().join("long.csv");
        let mut long = body.clone();
        long.push_str(&"9".repeat(3 * MAX_RECORD_BYTES));
        long.push('\n');
        std::fs::write(&path, &long).unwrap();
        for ahead in [false, true] {
            assert!(digest_of(&path, &cfg, size, None, ahead).is_err());
            let mut r = FileReader::open_hashed(&path, &cfg, Some(HashOn::Helper)).unwrap();
            if ahead {
                r = r.read_ahead();
            }
            let handle = r.digest().unwrap();
            while let Ok(Some(_)) = r.next_piece(size) {}
            // Asked again after the error: still none.
            let _ = r.next_piece(size);
            drop(r);
            assert_eq!(handle.finish(), None, "{ahead}");
        }
    }

    /// What a reader gives, piece by piece: rows as (line, end, bytes), a
    /// tail as its line and every byte of it, an error as its text.
    fn pieces_of(path: &Path, cfg: &StationFile, size: usize, ahead: bool) -> Vec<String> {
        let mut r = FileReader::open_hashed(path, cfg, None).unwrap();
        if ahead {
            r = r.read_ahead();
        }
        let mut out = Vec::new();
        loop {
            if ahead && out.len() < 8 {
                // Time for the thread to cut the chunks after this one: a
                // tail then starts with chunks it had cut already.
                std::thread::sleep(std::time::Duration::from_millis(5));
            }
            match r.next_piece(size) {
                Ok(Some(Piece::Rows {
                    line, end, bytes, ..
                })) => out.push(format!("rows {line} {end} {:?}", &*bytes)),
                Ok(Some(Piece::Tail { line, mut rest, .. })) => {
                    let mut b = Vec::new();
                    let read = rest.read_to_end(&mut b);
                    out.push(format!("tail {line} {:?} {}", b, read.is_ok()));
                }
                Ok(None) => break,
                Err(e) => {
                    out.push(format!("error {e:#}"));
                    break;
                }
            }
        }
        out
    }

    /// The read-ahead thread changes where the file is read, not what is
    /// read: the same pieces (lines, offsets, bytes), the same tail of a
    /// file with quotes (whatever the thread had cut already is read again
    /// in order), the same error for a record over the limit; and a reader
    /// dropped after its first piece stops its thread (the test ends).
    #[test]
    fn reading_ahead_gives_the_same_pieces() {
        let dir = tempfile::tempdir().unwrap();
        let cfg = station(dir.path());
        let mut body = String::from("time,ws\n");
        let mut i = 0i64;
        while body.len() < 60_000 {
            body.push_str(&format!("{},{}.{}\r\n", 1_737_331_200 + i, i % 13, i % 10));
            i += 1;
        }
        let mut quoted_late = body.clone();
        quoted_late.push_str("1737400000,\"4.5\"\n1737400001,4.6\n");
        let mut long = body.clone();
        long.push_str(&"7".repeat(MAX_RECORD_BYTES + 10));
        let cases = [
            ("plain", body.clone()),
            ("quoted_early", body.replacen(",5.", ",\"5.", 1)),
            ("quoted_late", quoted_late),
            ("nonl", body.trim_end().to_string()),
            ("long", long),
            ("empty", String::new()),
        ];
        for (name, text) in &cases {
            let path = dir.path().join(format!("{name}.csv"));
            std::fs::write(&path, text).unwrap();
            for size in [64, 1000, 4096, 1 << 20] {
                let here = pieces_of(&path, &cfg, size, false);
                let ahead = pieces_of(&path, &cfg, size, true);
                assert!(!here.is_empty() || text.is_empty(), "{name}");
                assert_eq!(here, ahead, "{name} {size}");
            }
            let mut r = FileReader::open(&path, &cfg).unwrap().read_ahead();
            let _ = r.next_piece(64);
            drop(r);
        }
    }

    /// A pool hands out at most its number of buffers; the next waits until
    /// the last holder of a chunk drops it, and gets that buffer back.
    #[test]
    fn a_pool_bounds_the_buffers_out() {
        let pool = Pool::new(2);
        let a = Chunk::new(pool.take(), Some(pool.clone()));
        let mut b = pool.take();
        b.extend_from_slice(b"kept");
        let b = Chunk::new(b, Some(pool.clone()));
        let shared = b.clone();
        let (tx, rx) = std::sync::mpsc::channel();
        let p = pool.clone();
        let t = std::thread::spawn(move || tx.send(p.take()).unwrap());
        std::thread::sleep(std::time::Duration::from_millis(50));
        assert!(rx.try_recv().is_err(), "a third buffer while two are out");
        drop(b);
        std::thread::sleep(std::time::Duration::from_millis(50));
        assert!(rx.try_recv().is_err(), "a buffer still shared came back");
        drop(shared);
        let got = rx.recv().unwrap();
        assert_eq!(got, b"kept");
        t.join().unwrap();
        drop(a);
        assert_eq!(pool.0.free.lock().unwrap().1, 2);
    }

    #[test]
    fn newlines_counted_in_blocks() {
        for len in [0, 1, 63, 64, 65, 200, 1000] {
            let b: Vec<u8> = (0..len)
                .map(|i| if i % 7 == 0 { b'\n' } else { b'x' })
                .collect();
            let want = b.iter().filter(|&&c| c == b'\n').count() as u64;
            assert_eq!(count_newlines(&b), want, "{len}");
        }
        assert_eq!(count_newlines(&[b'\n'; 64]), 64);
    }

    /// Quotes taken out only where the `csv` crate (1.4.0, an RFC 4180
    /// reader apart from this one: the reference for the dialect) reads the
    /// same records from the text without them: random texts of quoted,
    /// escaped and plain fields, delimiters and line ends.
    #[test]
    fn quotes_taken_out_only_where_the_csv_crate_reads_alike() {
        let records = |b: &[u8]| -> Vec<Vec<Vec<u8>>> {
            csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(b)
                .byte_records()
                .map(|r| r.unwrap().iter().map(<[u8]>::to_vec).collect())
                .collect()
        };
        let mut x = 5u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        // Fields the quotes may be taken from and fields they may not.
        let fields = [
            "a",
            "12",
            "",
            "\"a\"",
            "\"1.5\"",
            "\"\"",
            "\"a,b\"",
            "\"a\"\"b\"",
            "a\"b",
            "\"a\"b",
            "\"a\nb\"",
            "\"",
            " \"a\"",
        ];
        let (mut taken, mut left) = (0, 0);
        for _ in 0..20_000 {
            let mut text = Vec::new();
            for _ in 0..1 + rnd(4) {
                for k in 0..1 + rnd(4) {
                    if k > 0 {
                        text.push(b',');
                    }
                    // Mostly fields that may go.
                    let f = if rnd(8) == 0 { rnd(13) } else { rnd(6) };
                    text.extend_from_slice(fields[f as usize].as_bytes());
                }
                text.extend_from_slice([&b"\n"[..], b"\r\n", b"\r"][rnd(3) as usize]);
            }
            let mut out = Vec::new();
            match unquoted(&text, b',', &mut out).then_some(out) {
                Some(out) => {
                    assert!(!out.contains(&b'"'));
                    assert_eq!(
                        records(&out),
                        records(&text),
                        "{:?}",
                        String::from_utf8_lossy(&text)
                    );
                    taken += usize::from(text.contains(&b'"'));
                }
                None => left += 1,
            }
        }
        assert!(taken > 500 && left > 500, "{taken} {left}");
        for (text, out) in [
            (&b"\"a\",1\n"[..], Some(&b"a,1\n"[..])),
            (b"\"\",\"\"\n", Some(b",\n")),
            (b"\"a,b\",1\n", None),
            (b"\"a\"\"b\"\n", None),
            (b"a\"b\"\n", None),
            (b"\"a\nb\"\n", None),
            (b"\"a\"b\n", None),
            (b"1\n\"\"\n2\n", None),
        ] {
            let mut got = b"left over".to_vec();
            let ok = unquoted(text, b',', &mut got);
            assert_eq!(ok.then_some(got), out.map(<[u8]>::to_vec));
        }
    }

    #[test]
    fn line_ends_counted_as_an_editor_counts_them() {
        for (text, want) in [
            (&b""[..], 0),
            (b"a\nb\n", 2),
            (b"a\r\nb\r\n", 2),
            (b"a\rb\r", 2),
            (b"a\r\r\nb", 2),
            (b"\r\n\r\r\n\n\r", 5),
            (b"a\rb\r\nc\n\nd", 4),
        ] {
            assert_eq!(
                count_line_ends(text),
                want,
                "{:?}",
                String::from_utf8_lossy(text)
            );
        }
    }
}
