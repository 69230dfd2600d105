//! Provenance: beside every records file, report and decoded log a small JSON
//! file, `<output>.provenance.json`, names what produced it, so that an auditor
//! can confirm which files and settings gave a result (`tenmin verify
//! --provenance`).
//!
//! ```json
//! {
//!   "format": "tenmin-provenance/1",
//!   "tool": { "name": "tenmin", "version": "0.1.0" },
//!   "core": { "name": "qc-core", "version": "0.1.0" },
//!   "command": ["tenmin", "replay", "-c", "station.toml", "day1.csv", "-o", "records.csv"],
//!   "working_dir": "/home/ana/campaign",
//!   "config_fingerprint": "0x1a2b3c4d",
//!   "inputs": [
//!     { "role": "station", "path": "station.toml", "size": 812, "sha256": "9f86d0..." },
//!     { "role": "exclusions", "path": "exclusions.csv", "size": 301, "sha256": "..." },
//!     { "role": "samples", "path": "day1.csv", "size": 3456789, "sha256": "..." }
//!   ],
//!   "output": { "path": "records.csv", "size": 123456, "sha256": "..." }
//! }
//! ```
//!
//! - Paths are as the command saw them: relative ones are relative to
//!   `working_dir`, the folder the command ran in. `verify --provenance`
//!   looks for a relative path there, and else relative to the provenance
//!   file's own folder (a campaign folder moved whole).
//! - `inputs`: the station file, every side file it names
//!   ([`StationFile::side_files`]), then the samples files or the logger's log,
//!   in command-line order. `sha256` is lowercase hex of the file's bytes as
//!   read (a `.gz` file's compressed bytes), `size` its length in bytes.
//! - `config_fingerprint`: `qc_core::config_fingerprint` of the station file,
//!   the value a logger's frames carry.
//! - `output`: the file written, hashed by reading it back from the file
//!   (by a helper thread reading each piece back once written and comparing
//!   it with what was written, [`crate::output::write_to_digest`]); a
//!   report's output is its `report.html`.
//! - The provenance file is written after the output, atomically
//!   (`output.rs`). An output to stdout gets none: there is no file to put it
//!   beside (say `-o FILE` to have one).
//! - A samples file's digest comes from the bytes the replay read
//!   ([`Hashing`], in the reader's one pass); a file read only in part gets
//!   none, and is then read again ([`write()`]). Every other input is read
//!   again here; the output's digest is its read-back's (above).

use std::fs::File;
use std::io::{self, Read};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{channel, sync_channel, Receiver, SyncSender};
use std::sync::{Arc, OnceLock};
use std::thread::JoinHandle;

use anyhow::{anyhow, bail, Context, Result};
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::config::StationFile;
use crate::reader::Chunk;

/// The format name this code writes and reads.
pub const FORMAT: &str = "tenmin-provenance/1";

/// Largest provenance file read, bytes.
const MAX_BYTES: u64 = 1 << 20;

/// A program and its version.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Program {
    /// Crate name.
    pub name: String,
    /// Crate version.
    pub version: String,
}

/// One file, hashed.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FileHash {
    /// What the file is: `station`, `exclusions` (a side file's key),
    /// `samples`, `log`; absent for the output.
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub role: Option<String>,
    /// The path as the command saw it.
    pub path: String,
    /// Bytes.
    pub size: u64,
    /// SHA-256, lowercase hex.
    pub sha256: String,
}

/// A provenance file.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Provenance {
    /// [`FORMAT`].
    pub format: String,
    /// The `tenmin` command.
    pub tool: Program,
    /// The statistics core.
    pub core: Program,
    /// The command line, program name first.
    pub command: Vec<String>,
    /// The folder the command ran in.
    pub working_dir: String,
    /// `qc_core::config_fingerprint` of the station file, `0x` and 8 hex digits.
    pub config_fingerprint: String,
    /// Every input.
    pub inputs: Vec<FileHash>,
    /// The output.
    pub output: FileHash,
}

/// The provenance file of `output`: `<output>.provenance.json`.
pub fn path_for(output: &Path) -> PathBuf {
    let mut s = output.as_os_str().to_owned();
    s.push(".provenance.json");
    PathBuf::from(s)
}

/// SHA-256 (lowercase hex) and size of the file at `path`, read in pieces.
pub fn hash_file(path: &Path) -> Result<(String, u64)> {
    let f = File::open(path).with_context(|| format!("{}: cannot read", path.display()))?;
    hash_read(path, f)
}

/// [`hash_file`] of a file a provenance file names, whose recorded size is
/// `size`: only a regular file is opened (a device or FIFO named there would
/// be read without end, or wait for a writer), and at most `size + 1` bytes
/// are read (a file grown since differs whatever its digest).
fn hash_recorded(path: &Path, size: u64) -> Result<(String, u64)> {
    let meta =
        std::fs::metadata(path).with_context(|| format!("{}: cannot read", path.display()))?;
    if !meta.is_file() {
        bail!(
            "{}: not a regular file (a folder, device or FIFO): not read",
            path.display()
        );
    }
    let f = File::open(path).with_context(|| format!("{}: cannot read", path.display()))?;
    hash_read(path, f.take(size.saturating_add(1)))
}

/// SHA-256 (lowercase hex) and size of what `f` reads (`path` for messages).
fn hash_read(path: &Path, mut f: impl Read) -> Result<(String, u64)> {
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    let mut size = 0u64;
    loop {
        let n = f
            .read(&mut buf)
            .with_context(|| format!("{}: cannot read", path.display()))?;
        if n == 0 {
            break;
        }
        size += n as u64;
        h.update(&buf[..n]);
    }
    Ok((hex(h), size))
}

fn hex(h: Sha256) -> String {
    h.finalize().iter().map(|b| format!("{b:02x}")).collect()
}

/// A file's SHA-256 (lowercase hex) and size in bytes, computed from the
/// bytes read while it was read ([`Hashing`]).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct FileDigest {
    /// SHA-256, lowercase hex.
    pub sha256: String,
    /// Bytes.
    pub size: u64,
}

/// Where a [`Hashing`] reader computes its SHA-256.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum HashOn {
    /// On the reading thread, as each read returns.
    Inline,
    /// On a helper thread fed with the bytes read (a plain file's chunks
    /// shared, see [`crate::reader::FileReader::open_hashed`]), so that the
    /// reading thread is not held up: both replays.
    Helper,
}

/// Bytes per buffer handed to the helper thread.
const FEED_BYTES: usize = 256 << 10;
/// Buffers in use at once (one filled, the others queued or hashed): the
/// helper's memory is at most this many [`FEED_BYTES`].
const FEED_BUFFERS: usize = 3;

/// What the reading side hands the helper thread.
enum Feed {
    /// Bytes copied for it; the buffer is handed back.
    Bytes(Vec<u8>),
    /// A piece's own bytes, shared (no copy); dropped once hashed, so that
    /// the buffer returns to its reader's pool.
    Shared(Chunk),
    /// The end of the file was read: finish the digest.
    End,
}

/// The feeding end of a hash helper thread: bytes go to it in file order,
/// copied ([`Feeder::copy`]) or shared ([`Feeder::share`]); the digest is
/// given once [`Feeder::end`] was sent. Dropped before that, it gives none.
pub struct Feeder {
    tx: SyncSender<Feed>,
    back: Receiver<Vec<u8>>,
    /// The buffer being filled by [`Feeder::copy`].
    cur: Vec<u8>,
    /// Buffers made so far (at most [`FEED_BUFFERS`]).
    made: usize,
    /// Set when the end was sent.
    ended: Arc<AtomicBool>,
}

impl Feeder {
    /// Starts a hash thread; its digest comes through the handle.
    pub fn spawn() -> (Feeder, DigestHandle) {
        let (tx, rx) = sync_channel::<Feed>(FEED_BUFFERS - 1);
        let (back_tx, back) = channel::<Vec<u8>>();
        let result = Arc::new(OnceLock::new());
        let ended = Arc::new(AtomicBool::new(false));
        let out = Arc::clone(&result);
        let thread = std::thread::spawn(move || {
            let mut h = Sha256::new();
            let mut size = 0u64;
            for feed in rx {
                match feed {
                    Feed::Bytes(mut b) => {
                        h.update(&b);
                        size += b.len() as u64;
                        b.clear();
                        let _ = back_tx.send(b);
                    }
                    Feed::Shared(c) => {
                        h.update(&c);
                        size += c.len() as u64;
                    }
                    Feed::End => {
                        let _ = out.set(FileDigest {
                            sha256: hex(h),
                            size,
                        });
                        return;
                    }
                }
            }
            // The reader was dropped before the end: no digest.
        });
        let feeder = Feeder {
            tx,
            back,
            cur: Vec::new(),
            made: 0,
            ended: Arc::clone(&ended),
        };
        let handle = DigestHandle {
            ended,
            result,
            helper: Some(thread),
        };
        (feeder, handle)
    }

    /// Copies `bytes` into buffers for the helper; false if it is gone.
    pub fn copy(&mut self, mut bytes: &[u8]) -> bool {
        while !bytes.is_empty() {
            if self.cur.capacity() == 0 && !self.next_buffer() {
                return false;
            }
            let take = (FEED_BYTES - self.cur.len()).min(bytes.len());
            self.cur.extend_from_slice(&bytes[..take]);
            bytes = &bytes[take..];
            if self.cur.len() == FEED_BYTES && !self.send_cur() {
                return false;
            }
        }
        true
    }

    /// Hands `chunk` itself to the helper, after the bytes copied before
    /// it; false if the helper is gone.
    pub fn share(&mut self, chunk: Chunk) -> bool {
        if !self.cur.is_empty() && !self.send_cur() {
            return false;
        }
        chunk.is_empty() || self.tx.send(Feed::Shared(chunk)).is_ok()
    }

    /// The end of the file: the digest of everything fed is finished.
    pub fn end(mut self) -> bool {
        let ok = (self.cur.is_empty() || self.send_cur()) && self.tx.send(Feed::End).is_ok();
        if ok {
            self.ended.store(true, Ordering::Release);
        }
        ok
    }

    /// Takes a buffer to copy into: one handed back, a new one while fewer
    /// than [`FEED_BUFFERS`] exist, else waits for one.
    fn next_buffer(&mut self) -> bool {
        self.cur = match self.back.try_recv() {
            Ok(b) => b,
            Err(_) if self.made < FEED_BUFFERS => {
                self.made += 1;
                Vec::with_capacity(FEED_BYTES)
            }
            Err(_) => match self.back.recv() {
                Ok(b) => b,
                Err(_) => return false,
            },
        };
        true
    }

    /// Sends the buffer being filled; false if the helper is gone.
    fn send_cur(&mut self) -> bool {
        let full = std::mem::take(&mut self.cur);
        self.tx.send(Feed::Bytes(full)).is_ok()
    }
}

enum Hasher {
    Inline(Box<Sha256>),
    Helper(Feeder),
}

/// A reader that hashes every byte read through it, in order, and gives the
/// digest once the end is read ([`DigestHandle::finish`]). A read error, or
/// being dropped before the end, gives no digest: never a digest of part of
/// a file.
pub struct Hashing<R> {
    inner: R,
    /// `None` once the end was read or reading failed.
    hasher: Option<Hasher>,
    size: u64,
    /// Set when the end was read and the digest handed on.
    ended: Arc<AtomicBool>,
    result: Arc<OnceLock<FileDigest>>,
}

/// The digest of a [`Hashing`] reader, once it read its end.
pub struct DigestHandle {
    ended: Arc<AtomicBool>,
    result: Arc<OnceLock<FileDigest>>,
    helper: Option<JoinHandle<()>>,
}

impl DigestHandle {
    /// The digest of every byte read, if the reader read to the end (else
    /// `None`: the file was read in part, or reading failed).
    pub fn finish(self) -> Option<FileDigest> {
        if !self.ended.load(Ordering::Acquire) {
            // The helper stops when the reader is dropped.
            return None;
        }
        if let Some(h) = self.helper {
            // The end was sent: the helper is finishing.
            h.join().ok()?;
        }
        self.result.get().cloned()
    }
}

impl<R: Read> Hashing<R> {
    /// Hashes what is read from `inner`, `on` the reading thread or a helper.
    pub fn new(inner: R, on: HashOn) -> (Self, DigestHandle) {
        let ended = Arc::new(AtomicBool::new(false));
        let result = Arc::new(OnceLock::new());
        let (hasher, handle) = match on {
            HashOn::Inline => {
                let handle = DigestHandle {
                    ended: Arc::clone(&ended),
                    result: Arc::clone(&result),
                    helper: None,
                };
                (Hasher::Inline(Box::default()), handle)
            }
            HashOn::Helper => {
                let (feeder, handle) = Feeder::spawn();
                (Hasher::Helper(feeder), handle)
            }
        };
        let me = Hashing {
            inner,
            hasher: Some(hasher),
            size: 0,
            ended,
            result,
        };
        (me, handle)
    }

    /// Hashes what is read from `inner` on `feeder`'s thread, after what it
    /// was fed already; its handle gives the digest once `inner`'s end is
    /// read.
    pub fn with_feeder(inner: R, feeder: Feeder) -> Self {
        Hashing {
            inner,
            hasher: Some(Hasher::Helper(feeder)),
            size: 0,
            ended: Arc::new(AtomicBool::new(false)),
            result: Arc::new(OnceLock::new()),
        }
    }

    fn end(&mut self) {
        match self.hasher.take() {
            None => {}
            Some(Hasher::Inline(h)) => {
                let d = FileDigest {
                    sha256: hex(*h),
                    size: self.size,
                };
                if self.result.set(d).is_ok() {
                    self.ended.store(true, Ordering::Release);
                }
            }
            Some(Hasher::Helper(feeder)) => {
                feeder.end();
            }
        }
    }
}

impl<R: Read> Read for Hashing<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = match self.inner.read(buf) {
            Ok(n) => n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => return Err(e),
            Err(e) => {
                // Never a digest of part of the file.
                self.hasher = None;
                return Err(e);
            }
        };
        if n == 0 && !buf.is_empty() {
            self.end();
            return Ok(0);
        }
        let fed = match &mut self.hasher {
            None => true,
            Some(Hasher::Inline(h)) => {
                h.update(&buf[..n]);
                self.size += n as u64;
                true
            }
            Some(Hasher::Helper(feeder)) => feeder.copy(&buf[..n]),
        };
        if !fed {
            // The helper is gone: no digest.
            self.hasher = None;
        }
        Ok(n)
    }
}

fn file_hash(role: Option<&str>, path: &Path) -> Result<FileHash> {
    let (sha256, size) = hash_file(path)?;
    Ok(FileHash {
        role: role.map(str::to_string),
        path: path.to_string_lossy().into_owned(),
        size,
        sha256,
    })
}

/// The inputs of a command reading `cfg` and `files` (each of `role`): the
/// station file, its side files, then the files.
pub fn inputs<'a>(
    cfg: &StationFile,
    role: &'a str,
    files: impl IntoIterator<Item = &'a Path>,
) -> Vec<(String, PathBuf)> {
    let mut v = vec![("station".to_string(), cfg.path.clone())];
    v.extend(
        cfg.side_files()
            .into_iter()
            .map(|(k, p)| (k.to_string(), p)),
    );
    v.extend(
        files
            .into_iter()
            .map(|p| (role.to_string(), p.to_path_buf())),
    );
    v
}

/// Writes `<output>.provenance.json` for `output`, just written by a command
/// on `cfg` with `inputs` ([`inputs`]). The digest of an input comes from
/// `known` (digests computed while the command read it, [`Hashing`]) where
/// its path is there, the output's from `read_back` (the digest of the
/// complete output as read back while it was written,
/// [`crate::output::write_to_digest`]) where given; the others are read
/// again here.
pub fn write(
    output: &Path,
    cfg: &StationFile,
    inputs: &[(String, PathBuf)],
    known: &[(PathBuf, FileDigest)],
    read_back: Option<FileDigest>,
) -> Result<()> {
    // A device or a pipe has no folder to put a file beside.
    if !std::fs::metadata(output).is_ok_and(|m| m.is_file()) {
        return Ok(());
    }
    let cores: Vec<qc_core::ChannelConfig> = cfg.channels.iter().map(|c| c.core).collect();
    let fp = qc_core::config_fingerprint(&cfg.station, &cores);
    let prov = Provenance {
        format: FORMAT.to_string(),
        tool: Program {
            name: "tenmin".to_string(),
            version: env!("CARGO_PKG_VERSION").to_string(),
        },
        core: Program {
            name: "qc-core".to_string(),
            version: qc_core::VERSION.to_string(),
        },
        command: std::env::args_os()
            .map(|a| a.to_string_lossy().into_owned())
            .collect(),
        working_dir: std::env::current_dir()
            .map(|d| d.to_string_lossy().into_owned())
            .unwrap_or_default(),
        config_fingerprint: format!("0x{fp:08x}"),
        inputs: inputs
            .iter()
            .map(|(role, p)| match known.iter().find(|(k, _)| k == p) {
                Some((_, d)) => Ok(FileHash {
                    role: Some(role.clone()),
                    path: p.to_string_lossy().into_owned(),
                    size: d.size,
                    sha256: d.sha256.clone(),
                }),
                None => file_hash(Some(role), p),
            })
            .collect::<Result<_>>()?,
        output: match read_back {
            Some(d) => FileHash {
                role: None,
                path: output.to_string_lossy().into_owned(),
                size: d.size,
                sha256: d.sha256,
            },
            None => file_hash(None, output)?,
        },
    };
    let mut json = serde_json::to_string_pretty(&prov)?;
    json.push('\n');
    let at = path_for(output);
    crate::output::write_file(&at, "the provenance", json.as_bytes())?;
    // Read back what was written.
    let back = read(&at)?;
    if back != prov {
        bail!("{}: reads back other than written", at.display());
    }
    Ok(())
}

/// Reads a provenance file.
pub fn read(path: &Path) -> Result<Provenance> {
    let f = File::open(path)
        .with_context(|| format!("{}: cannot read the provenance file", path.display()))?;
    let mut bytes = Vec::new();
    f.take(MAX_BYTES + 1)
        .read_to_end(&mut bytes)
        .with_context(|| format!("{}: cannot read the provenance file", path.display()))?;
    if bytes.len() as u64 > MAX_BYTES {
        bail!(
            "{}: larger than {MAX_BYTES} bytes: not a provenance file",
            path.display()
        );
    }
    let p: Provenance = serde_json::from_slice(&bytes).map_err(|e| {
        anyhow!(
            "{}:{}: not a provenance file: {e}",
            path.display(),
            e.line()
        )
    })?;
    if p.format != FORMAT {
        bail!(
            "{}: format {:?}: this build reads {FORMAT:?}",
            path.display(),
            p.format
        );
    }
    Ok(p)
}

/// What [`check`] found.
#[derive(Debug, Default)]
pub struct Check {
    /// Files that match: `(what, path)`.
    pub same: Vec<(String, PathBuf)>,
    /// Files that changed or are gone, with why.
    pub changed: Vec<(String, PathBuf, String)>,
}

/// Where a path named in the provenance file `prov_path` is now: relative to
/// its `working_dir` if there, else relative to the provenance file's folder.
fn locate(p: &Provenance, prov_path: &Path, named: &str) -> PathBuf {
    let named = Path::new(named);
    if named.is_absolute() {
        return named.to_path_buf();
    }
    let from_wd = Path::new(&p.working_dir).join(named);
    if from_wd.exists() {
        return from_wd;
    }
    let beside = prov_path.parent().unwrap_or(Path::new("")).join(named);
    if beside.exists() {
        return beside;
    }
    // The output's provenance file sits beside it: its own name there.
    from_wd
}

/// Checks that the output (`output`, or the path the provenance names) and
/// every input named in the provenance file `prov_path` still have their
/// recorded size and SHA-256.
pub fn check(prov_path: &Path, output: Option<&Path>) -> Result<Check> {
    let p = read(prov_path)?;
    let mut c = Check::default();
    let out_path = match output {
        Some(o) => o.to_path_buf(),
        None => locate(&p, prov_path, &p.output.path),
    };
    let files = std::iter::once(("output".to_string(), out_path, &p.output)).chain(
        p.inputs.iter().map(|f| {
            (
                format!("input ({})", f.role.as_deref().unwrap_or("?")),
                locate(&p, prov_path, &f.path),
                f,
            )
        }),
    );
    for (what, path, f) in files {
        match hash_recorded(&path, f.size) {
            Err(e) => c.changed.push((what, path, format!("{e:#}"))),
            Ok((_, size)) if size > f.size => c.changed.push((
                what,
                path,
                format!(
                    "more than {} bytes; the provenance records {} bytes, SHA-256 {}",
                    f.size, f.size, f.sha256
                ),
            )),
            Ok((sha, size)) if sha != f.sha256 || size != f.size => c.changed.push((
                what,
                path,
                format!(
                    "{size} bytes, SHA-256 {sha}; the provenance records {} bytes, SHA-256 {}",
                    f.size, f.sha256
                ),
            )),
            Ok(_) => c.same.push((what, path)),
        }
    }
    Ok(c)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;
    use std::process::Command;

    /// `sha256sum FILE` (coreutils, FIPS 180-4 SHA-256, a program apart
    /// from this crate), lowercase hex.
    fn sha256sum(path: &Path) -> String {
        let out = Command::new("sha256sum").arg(path).output().unwrap();
        assert!(out.status.success());
        String::from_utf8(out.stdout).unwrap()[..64].to_string()
    }

    /// A reader giving `data` in pieces of `step` bytes, then an error
    /// after `fail_at` bytes if set.
    struct Pieces {
        data: Vec<u8>,
        at: usize,
        step: usize,
        fail_at: Option<usize>,
    }

    impl Read for Pieces {
        fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
            if self.fail_at.is_some_and(|f| self.at >= f) {
                return Err(io::Error::other("disk gone"));
            }
            let n = self.step.min(buf.len()).min(self.data.len() - self.at);
            buf[..n].copy_from_slice(&self.data[self.at..self.at + n]);
            self.at += n;
            Ok(n)
        }
    }

    fn bytes(len: usize) -> Vec<u8> {
        let mut x = 0x9E37_79B9_7F4A_7C15u64;
        (0..len)
            .map(|_| {
                x ^= x << 13;
                x ^= x >> 7;
                x ^= x << 17;
                x as u8
            })
            .collect()
    }

    #[test]
    fn a_hashing_reader_gives_the_digest_of_every_byte_read_or_none() {
        let dir = tempfile::tempdir().unwrap();
        // Lengths around the helper's buffers (FEED_BYTES) and the empty file.
        for len in [
            0,
            1,
            63,
            64,
            65,
            FEED_BYTES - 1,
            FEED_BYTES,
            3 * FEED_BYTES + 17,
        ] {
            let data = bytes(len);
            let path = dir.path().join(format!("b{len}"));
            std::fs::write(&path, &data).unwrap();
            let want = FileDigest {
                sha256: sha256sum(&path),
                size: len as u64,
            };
            for on in [HashOn::Inline, HashOn::Helper] {
                for step in [1, 7, 4096, 1 << 20] {
                    if step == 1 && len > 4096 {
                        continue;
                    }
                    let src = Pieces {
                        data: data.clone(),
                        at: 0,
                        step,
                        fail_at: None,
                    };
                    let (mut r, handle) = Hashing::new(src, on);
                    let mut got = Vec::new();
                    r.read_to_end(&mut got).unwrap();
                    assert_eq!(got, data);
                    // Reads after the end change nothing.
                    assert_eq!(r.read(&mut [0u8; 8]).unwrap(), 0);
                    assert_eq!(handle.finish(), Some(want.clone()), "{len} {on:?} {step}");

                    // Read in part, then dropped: no digest.
                    if len > 0 {
                        let src = Pieces {
                            data: data.clone(),
                            at: 0,
                            step,
                            fail_at: None,
                        };
                        let (mut r, handle) = Hashing::new(src, on);
                        let mut part = vec![0u8; len - 1];
                        r.read_exact(&mut part).unwrap();
                        drop(r);
                        assert_eq!(handle.finish(), None, "{len} {on:?} {step}");
                    }

                    // A read error midway, then reads that go on: no digest.
                    let src = Pieces {
                        data: data.clone(),
                        at: 0,
                        step,
                        fail_at: Some(len / 2),
                    };
                    let (mut r, handle) = Hashing::new(src, on);
                    assert!(r.read_to_end(&mut Vec::new()).is_err());
                    r.inner.fail_at = None;
                    let _ = r.read_to_end(&mut Vec::new());
                    drop(r);
                    assert_eq!(handle.finish(), None, "{len} {on:?} {step}");
                }
            }
        }
    }

    #[test]
    fn an_empty_read_buffer_is_not_the_end() {
        let src = Pieces {
            data: b"abc".to_vec(),
            at: 0,
            step: 2,
            fail_at: None,
        };
        let (mut r, handle) = Hashing::new(src, HashOn::Inline);
        assert_eq!(r.read(&mut []).unwrap(), 0);
        let mut got = Vec::new();
        r.read_to_end(&mut got).unwrap();
        // SHA-256("abc"): FIPS 180-4 example (NIST CSRC "SHA256.pdf").
        assert_eq!(
            handle.finish().unwrap().sha256,
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    /// The replay's digests (computed in its one pass, `Options::digests`)
    /// of plain, no-final-newline, quoted (read by the `csv` crate from the
    /// first quote on), `.gz` and `.zst` files, on 1 and 2 threads, against
    /// coreutils `sha256sum`.
    #[test]
    fn the_replay_digests_every_samples_file_as_stored() {
        let dir = tempfile::tempdir().unwrap();
        let station = dir.path().join("station.toml");
        let toml = "[logging]\ninterval_s = 600\nsample_rate_hz = 1\n\n\
                    [[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\n\n\
                    [[channel]]\nid = \"t\"\nkind = \"scalar\"\nresolution = 0.1\n";
        std::fs::write(&station, toml).unwrap();
        let cfg = crate::config::load(&station).unwrap();
        // Three hours at 1 Hz from 2025-01-20T00:00:00Z (1737331200 s):
        // about 280 kB, more than one piece of either replay.
        let mut plain = String::from("time,ws,t\n");
        for i in 0..10_800i64 {
            plain.push_str(&format!(
                "{},{}.{:02},{}.{}\n",
                1_737_331_200 + i,
                3 + i % 9,
                i % 100,
                -5 + i % 20,
                i % 10
            ));
        }
        let p = |name: &str| dir.path().join(name);
        std::fs::write(p("plain.csv"), &plain).unwrap();
        std::fs::write(p("nonl.csv"), plain.trim_end()).unwrap();
        let quoted = plain.replacen(",5.55,", ",\"5.55\",", 1);
        assert_ne!(quoted, plain);
        std::fs::write(p("quoted.csv"), &quoted).unwrap();
        let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
        gz.write_all(plain.as_bytes()).unwrap();
        std::fs::write(p("plain.csv.gz"), gz.finish().unwrap()).unwrap();
        std::fs::write(
            p("plain.csv.zst"),
            zstd::encode_all(plain.as_bytes(), 3).unwrap(),
        )
        .unwrap();

        let want = |path: &Path| FileDigest {
            sha256: sha256sum(path),
            size: std::fs::metadata(path).unwrap().len(),
        };
        let names = [
            "plain.csv",
            "nonl.csv",
            "quoted.csv",
            "plain.csv.gz",
            "plain.csv.zst",
        ];
        for name in names {
            for (jobs, chunk_size) in [(1, 1 << 20), (2, 1 << 20), (2, 4096)] {
                let opts = crate::samples::Options {
                    jobs,
                    chunk_size,
                    digests: true,
                    ..Default::default()
                };
                let mut w =
                    crate::records::Writer::new(Vec::new(), vec!["ws".into(), "t".into()]).unwrap();
                let s = crate::replay::replay(&cfg, &[p(name)], opts, &mut w).unwrap();
                assert_eq!(s.input.rows, 10_800, "{name}");
                assert_eq!(
                    s.input.digests,
                    vec![(p(name), want(&p(name)))],
                    "{name} --jobs {jobs}"
                );
            }
        }
        // Several files, one digest each, in order; none without the option.
        let files: Vec<PathBuf> = ["plain.csv.zst", "quoted.csv"].map(p).to_vec();
        let later: String = plain
            .lines()
            .skip(1)
            .map(|l| {
                let (t, rest) = l.split_once(',').unwrap();
                format!("{},{rest}\n", t.parse::<i64>().unwrap() + 10_800)
            })
            .collect();
        std::fs::write(p("quoted.csv"), format!("time,ws,t\n{later}")).unwrap();
        for jobs in [1, 2] {
            let opts = crate::samples::Options {
                jobs,
                digests: true,
                ..Default::default()
            };
            let mut w =
                crate::records::Writer::new(Vec::new(), vec!["ws".into(), "t".into()]).unwrap();
            let s = crate::replay::replay(&cfg, &files, opts, &mut w).unwrap();
            let got: Vec<_> = s.input.digests.iter().map(|(f, _)| f.clone()).collect();
            assert_eq!(got, files);
            for (f, d) in &s.input.digests {
                assert_eq!(d, &want(f));
            }
            let opts = crate::samples::Options {
                digests: false,
                ..opts
            };
            let mut w =
                crate::records::Writer::new(Vec::new(), vec!["ws".into(), "t".into()]).unwrap();
            let s = crate::replay::replay(&cfg, &files, opts, &mut w).unwrap();
            assert!(s.input.digests.is_empty());
        }
    }
}
