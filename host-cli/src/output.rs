//! Where results go: every file a command writes, and stdout, go through here.
//!
//! - A regular file, or a name not yet taken, is replaced atomically: the bytes
//!   go to a temporary file in the same folder, which is flushed, synced to the
//!   disk (`sync_all`) and renamed over the final name. Until then the old file
//!   stays as it was; an error (or a panic) removes the temporary file, so a
//!   failed run leaves neither a truncated output nor a stray temporary file.
//! - A symbolic link is followed: its target is replaced that way and the link
//!   stays a link.
//! - A special file (a character device such as `/dev/null` or a terminal, a
//!   FIFO) is written directly: it cannot be replaced by a regular file.
//! - An existing folder is refused before anything is written.
//! - stdout is written directly.
//! - A file is read back as it is written ([`ReadBack`], on a helper thread):
//!   it must hold the bytes written (each piece's CRC-32) and no more, or the
//!   command fails naming the piece that differs and the old file stays.
//!
//! Every write error (a full device, an error when the last bytes are flushed
//! or synced) names the output, "stdout" for stdout, and is kept: the command
//! reports it as it was, whatever the code writing the bytes made of it. The
//! kind of the error is kept too, so that a closed pipe still ends the command
//! quietly (`lib.rs`, `is_broken_pipe`).
//!
//! No output may be one of the command's inputs ([`refuse_inputs`]): files are
//! compared by device and inode (after following links, so `./x`, a symbolic
//! link and a hard link to an input are all caught), or by canonical path where
//! there are no inodes.

use std::fs::{self, File, OpenOptions};
use std::io::{self, BufWriter, Read, Write};
use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, SyncSender};
use std::thread::JoinHandle;

use sha2::{Digest, Sha256};

use crate::provenance::FileDigest;

use anyhow::{bail, Context, Result};

/// Symbolic links followed at most, as most systems do (`ELOOP` after 40).
const MAX_LINKS: usize = 40;

/// The identity of an existing file: device and inode on unix.
#[derive(Clone, Debug, PartialEq, Eq)]
struct FileId(#[cfg(unix)] (u64, u64), #[cfg(not(unix))] PathBuf);

/// The identity of the file `path` names (links followed), with its metadata;
/// `None` when there is no such file.
fn identity(path: &Path) -> Option<(FileId, fs::Metadata)> {
    let meta = fs::metadata(path).ok()?;
    #[cfg(unix)]
    let id = {
        use std::os::unix::fs::MetadataExt;
        FileId((meta.dev(), meta.ino()))
    };
    #[cfg(not(unix))]
    let id = FileId(fs::canonicalize(path).ok()?);
    Some((id, meta))
}

/// Fails when `output` is the same file as one of `inputs` (each `(what,
/// path)`, `what` saying what the input is: "samples file", "station file").
/// Only an existing regular file can be an input replaced by mistake: a name
/// not yet taken, a device or a FIFO is no input's data.
pub fn refuse_inputs(output: &Path, inputs: &[(&str, &Path)]) -> Result<()> {
    let Some((out, meta)) = identity(output) else {
        return Ok(());
    };
    if !meta.is_file() {
        return Ok(());
    }
    for (what, input) in inputs {
        if identity(input).is_some_and(|(id, _)| id == out) {
            let other = if output == *input {
                ""
            } else {
                " (the same file by another name)"
            };
            bail!(
                "cannot write {}: it is the {what} {}{other}, an input of this command; \
                 an output never replaces an input, choose another output",
                output.display(),
                input.display()
            );
        }
    }
    Ok(())
}

/// The file a name finally stands for: symbolic links followed, also when the
/// last one points to a name not yet taken.
fn resolve_links(path: &Path) -> Result<PathBuf> {
    let mut p = path.to_path_buf();
    for _ in 0..MAX_LINKS {
        match fs::symlink_metadata(&p) {
            Ok(m) if m.file_type().is_symlink() => {
                let target = fs::read_link(&p)
                    .with_context(|| format!("cannot read the link {}", p.display()))?;
                p = match p.parent() {
                    Some(dir) if target.is_relative() => dir.join(target),
                    _ => target,
                };
            }
            _ => return Ok(p),
        }
    }
    bail!(
        "{}: more than {MAX_LINKS} symbolic links in a row",
        path.display()
    )
}

/// A temporary file next to `target`, removed when dropped unless renamed
/// over `target` first.
struct Temp {
    path: PathBuf,
    target: PathBuf,
    done: bool,
}

impl Drop for Temp {
    fn drop(&mut self) {
        if !self.done {
            let _ = fs::remove_file(&self.path);
        }
    }
}

impl Temp {
    /// Creates the temporary file for `target`, making its folder if missing.
    fn create(target: &Path) -> Result<(Temp, File)> {
        let dir = match target.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        // A missing folder of the output is made, as `-o DIR/records.csv`
        // reads (what is already there is never changed).
        if !dir.exists() {
            fs::create_dir_all(&dir).with_context(|| {
                format!(
                    "cannot write {}: cannot create the folder {}",
                    target.display(),
                    dir.display()
                )
            })?;
        }
        let name = target.file_name().unwrap_or(target.as_os_str());
        let pid = std::process::id();
        let mut last = None;
        for n in 0..100u32 {
            let mut tmp = std::ffi::OsString::from(".");
            tmp.push(name);
            tmp.push(format!(".tenmin-{pid}-{n}.partial"));
            let path = dir.join(tmp);
            match OpenOptions::new().write(true).create_new(true).open(&path) {
                Ok(file) => {
                    let temp = Temp {
                        path,
                        target: target.to_path_buf(),
                        done: false,
                    };
                    return Ok((temp, file));
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists => last = Some(e),
                Err(e) => {
                    return Err(e).with_context(|| {
                        format!(
                            "cannot write {}: cannot create a temporary file in {}",
                            target.display(),
                            dir.display()
                        )
                    })
                }
            }
        }
        Err(last.unwrap_or_else(|| io::Error::other("no free name"))).with_context(|| {
            format!(
                "cannot write {}: cannot create a temporary file in {}",
                target.display(),
                dir.display()
            )
        })
    }
}

/// Bytes in a piece of an output compared on its own when read back.
const READ_BACK_PIECE: usize = 64 << 10;

/// Pieces written and not yet read back, at most: the writer waits beyond
/// (64 MiB behind; the notes themselves take 16 bytes each).
const READ_BACK_QUEUE: usize = 1024;

/// What the writing side tells the read-back thread.
#[derive(Clone, Copy, Debug)]
enum Note {
    /// The next `len` bytes, after all those told before, were written,
    /// with this CRC-32 (IEEE 802.3).
    Piece { len: usize, crc: u32 },
    /// The file is complete (flushed and synced): nothing follows.
    Final,
}

/// A file read back while it is written: the writer takes the CRC-32 of
/// every piece of [`READ_BACK_PIECE`] bytes it writes and tells a helper
/// thread, which reads the same piece from the file through its own handle,
/// compares its CRC-32 and hashes it (SHA-256). The file must hold the bytes
/// written, no other and no more: [`ReadBack::finish`] says which piece
/// does not. The digest is of the bytes as read from the file. The writer's
/// thread pays a CRC-32 (a few GB/s), never a copy; memory is one piece.
///
/// What is read comes through the file system (its cache, most of the
/// time), not necessarily from the disk's surface: this catches a file
/// changed, cut or grown by anything else while it is written, and a file
/// system that gives back other than it was given.
struct ReadBack {
    tx: SyncSender<Note>,
    thread: JoinHandle<Result<FileDigest, String>>,
    /// The piece being written: its CRC so far and its length.
    crc: crc32fast::Hasher,
    len: usize,
}

impl ReadBack {
    /// Starts reading `path` (the temporary file, just created) back.
    fn start(path: &Path) -> io::Result<ReadBack> {
        let f = File::open(path)?;
        let (tx, rx) = sync_channel::<Note>(READ_BACK_QUEUE);
        let thread = std::thread::spawn(move || compare_read_back(f, || rx.recv().ok()));
        Ok(ReadBack {
            tx,
            thread,
            crc: crc32fast::Hasher::new(),
            len: 0,
        })
    }

    /// Takes the bytes `written` (just written to the file) into the
    /// pieces' CRCs, telling the thread of each piece complete.
    fn wrote(&mut self, mut written: &[u8]) {
        while !written.is_empty() {
            let n = written.len().min(READ_BACK_PIECE - self.len);
            self.crc.update(&written[..n]);
            self.len += n;
            written = &written[n..];
            if self.len == READ_BACK_PIECE {
                self.tell();
            }
        }
    }

    /// Tells the thread of the piece written so far, and starts the next.
    fn tell(&mut self) {
        let crc = std::mem::replace(&mut self.crc, crc32fast::Hasher::new());
        let note = Note::Piece {
            len: self.len,
            crc: crc.finalize(),
        };
        self.len = 0;
        // A thread that stopped has found a difference already; `finish`
        // reports it.
        let _ = self.tx.send(note);
    }

    /// The digest of the complete file, read back; where it holds other than
    /// the bytes written, what differs.
    fn finish(mut self) -> Result<FileDigest, String> {
        if self.len > 0 {
            self.tell();
        }
        let _ = self.tx.send(Note::Final);
        drop(self.tx);
        self.thread
            .join()
            .unwrap_or_else(|_| Err("reading it back stopped".to_string()))
    }
}

/// Reads `file` from its start, comparing it piece by piece with the notes
/// `next` gives (`None` when the writer stopped without finishing); after
/// [`Note::Final`] the file must end. Gives the SHA-256 and size of the
/// bytes read, or where the file differs from the bytes written.
fn compare_read_back(
    mut file: impl Read,
    mut next: impl FnMut() -> Option<Note>,
) -> Result<FileDigest, String> {
    let mut h = Sha256::new();
    let mut piece = vec![0u8; READ_BACK_PIECE];
    let mut size = 0u64;
    loop {
        let (len, crc) = match next() {
            Some(Note::Piece { len, crc }) => (len.min(READ_BACK_PIECE), crc),
            Some(Note::Final) => break,
            None => return Err("the output was left unfinished".to_string()),
        };
        let got = read_full(&mut file, &mut piece[..len])
            .map_err(|e| format!("cannot read it at byte {size}: {e}"))?;
        if got < len {
            return Err(format!(
                "it ends at byte {}, where {} bytes were written",
                size + got as u64,
                size + len as u64
            ));
        }
        if crc32fast::hash(&piece[..len]) != crc {
            return Err(format!(
                "bytes {size} to {} are not those written (their CRC-32 differs)",
                size + len as u64 - 1
            ));
        }
        h.update(&piece[..len]);
        size += len as u64;
    }
    let more = read_full(&mut file, &mut piece[..1])
        .map_err(|e| format!("cannot read it at byte {size}: {e}"))?;
    if more > 0 {
        return Err(format!("it holds more than the {size} bytes written"));
    }
    Ok(FileDigest {
        sha256: h.finalize().iter().map(|b| format!("{b:02x}")).collect(),
        size,
    })
}

/// Reads into `buf` until it is full or the file ends; the bytes read.
fn read_full(r: &mut impl Read, buf: &mut [u8]) -> io::Result<usize> {
    let mut got = 0;
    while got < buf.len() {
        match r.read(&mut buf[got..]) {
            Ok(0) => break,
            Ok(n) => got += n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(got)
}

/// Where the bytes go.
enum Dest {
    /// A temporary file renamed over its target on success, read back as
    /// it is written.
    Replace(File, ReadBack),
    /// A special file written in place.
    Special(File),
    /// The process's stdout.
    Stdout(io::StdoutLock<'static>),
}

impl Write for Dest {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        match self {
            Dest::Replace(f, back) => {
                let n = f.write(buf)?;
                back.wrote(&buf[..n]);
                Ok(n)
            }
            Dest::Special(f) => f.write(buf),
            Dest::Stdout(s) => s.write(buf),
        }
    }

    fn flush(&mut self) -> io::Result<()> {
        match self {
            Dest::Replace(f, _) | Dest::Special(f) => f.flush(),
            Dest::Stdout(s) => s.flush(),
        }
    }
}

/// One output of a command: a file (replaced atomically, or a special file
/// written in place) or stdout. Buffered; [`Output::finish`] completes it.
/// Dropped without `finish`, a file output leaves the old file as it was.
pub struct Output {
    /// What is written ("records", "the sample file"), for messages.
    what: &'static str,
    /// The output's name in messages: its path, or "stdout".
    name: String,
    buf: BufWriter<Dest>,
    temp: Option<Temp>,
    /// The first write error, as reported.
    error: Option<io::Error>,
}

impl Output {
    /// An output to the file `path`, for `what` ("records", "the sample
    /// file"); nothing is written to `path` itself before [`Output::finish`]
    /// unless it is a special file.
    pub fn file(path: &Path, what: &'static str) -> Result<Output> {
        let name = path.display().to_string();
        let dest = match fs::metadata(path) {
            Ok(m) if m.is_dir() => bail!(
                "{name}: is a folder; the output here is a file to write {what} to, \
                 give the file's name"
            ),
            Ok(m) if !m.is_file() => {
                let f = OpenOptions::new()
                    .write(true)
                    .open(path)
                    .with_context(|| format!("cannot write {what} to {name}"))?;
                (Dest::Special(f), None)
            }
            Ok(_) => Self::replace(path, what)?,
            Err(e) if e.kind() == io::ErrorKind::NotFound => Self::replace(path, what)?,
            Err(e) => return Err(e).with_context(|| format!("cannot write {what} to {name}")),
        };
        Ok(Output {
            what,
            name,
            buf: BufWriter::with_capacity(1 << 16, dest.0),
            temp: dest.1,
            error: None,
        })
    }

    fn replace(path: &Path, what: &'static str) -> Result<(Dest, Option<Temp>)> {
        let target = resolve_links(path)
            .with_context(|| format!("cannot write {what} to {}", path.display()))?;
        let (temp, file) = Temp::create(&target)?;
        // Opened for reading before the permissions of the file replaced
        // (which may not allow reading) are given to it.
        let back = ReadBack::start(&temp.path).with_context(|| {
            format!(
                "cannot write {what} to {}: cannot read back {}",
                path.display(),
                temp.path.display()
            )
        })?;
        // Keep the permissions of the file replaced.
        if let Ok(m) = fs::metadata(&target) {
            let _ = file.set_permissions(m.permissions());
        }
        Ok((Dest::Replace(file, back), Some(temp)))
    }

    /// An output to stdout, for `what`.
    pub fn stdout(what: &'static str) -> Output {
        Output {
            what,
            name: "stdout".to_string(),
            buf: BufWriter::with_capacity(1 << 16, Dest::Stdout(io::stdout().lock())),
            temp: None,
            error: None,
        }
    }

    /// An output to `path`, or to stdout when `None`.
    pub fn open(path: Option<&Path>, what: &'static str) -> Result<Output> {
        match path {
            Some(p) => Output::file(p, what),
            None => Ok(Output::stdout(what)),
        }
    }

    /// A write error naming the output; the first one is kept.
    fn failed(&mut self, e: io::Error) -> io::Error {
        let msg = format!("cannot write {} to {}: {e}", self.what, self.name);
        if self.error.is_none() {
            self.error = Some(io::Error::new(e.kind(), msg.clone()));
        }
        io::Error::new(e.kind(), msg)
    }

    /// The first write error, if any.
    pub fn take_error(&mut self) -> Option<io::Error> {
        self.error.take()
    }

    /// Completes the output: flushes it; a file replaced is synced to the
    /// disk and renamed over its final name.
    pub fn finish(self) -> Result<()> {
        self.finish_read_back().map(drop)
    }

    /// [`Output::finish`], and the SHA-256 and size of the complete file as
    /// read back ([`ReadBack`]); `None` for stdout or a special file, which
    /// are not read back. A file that reads back other than written is an
    /// error naming the piece that differs, and is not renamed over its
    /// final name (an old file there stays as it was).
    pub fn finish_read_back(mut self) -> Result<Option<FileDigest>> {
        self.flush()?;
        if let Some(e) = self.error.take() {
            return Err(e.into());
        }
        let Output {
            what,
            name,
            buf,
            temp,
            ..
        } = self;
        let dest = buf.into_inner().map_err(|e| {
            let e = e.into_error();
            anyhow::Error::from(io::Error::new(
                e.kind(),
                format!("cannot write {what} to {name}: {e}"),
            ))
        })?;
        match dest {
            Dest::Replace(file, back) => {
                file.sync_all().map_err(|e| {
                    io::Error::new(e.kind(), format!("cannot write {what} to {name}: {e}"))
                })?;
                drop(file);
                let digest = back.finish().map_err(|m| {
                    anyhow::anyhow!(
                        "cannot write {what} to {name}: it reads back other than written: {m}"
                    )
                })?;
                if let Some(mut temp) = temp {
                    fs::rename(&temp.path, &temp.target).with_context(|| {
                        format!(
                            "cannot write {what} to {name}: cannot rename {} to {}",
                            temp.path.display(),
                            temp.target.display()
                        )
                    })?;
                    temp.done = true;
                    sync_folder(&temp.target);
                }
                return Ok(Some(digest));
            }
            Dest::Special(_) | Dest::Stdout(_) => {}
        }
        Ok(None)
    }
}

/// Makes a rename in the folder of `path` durable, where the system allows
/// (best effort: the data are already synced).
fn sync_folder(path: &Path) {
    #[cfg(unix)]
    {
        let dir = match path.parent() {
            Some(d) if !d.as_os_str().is_empty() => d,
            _ => Path::new("."),
        };
        if let Ok(d) = File::open(dir) {
            let _ = d.sync_all();
        }
    }
    #[cfg(not(unix))]
    let _ = path;
}

impl Write for Output {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.buf.write(buf).map_err(|e| self.failed(e))
    }

    fn write_all(&mut self, buf: &[u8]) -> io::Result<()> {
        self.buf.write_all(buf).map_err(|e| self.failed(e))
    }

    fn flush(&mut self) -> io::Result<()> {
        self.buf.flush().map_err(|e| self.failed(e))
    }
}

/// Runs `f` writing `what` into `path` (stdout when `None`) and completes the
/// output when `f` succeeds. When `f` fails, a file output is left as it was
/// and the error is the first write error if there was one (it names the
/// output), else `f`'s.
pub fn write_to<T>(
    path: Option<&Path>,
    what: &'static str,
    f: impl FnOnce(&mut Output) -> Result<T>,
) -> Result<T> {
    let mut out = Output::open(path, what)?;
    match f(&mut out) {
        Ok(v) => {
            out.finish()?;
            Ok(v)
        }
        Err(e) => Err(out.take_error().map_or(e, anyhow::Error::from)),
    }
}

/// [`write_to`], also giving a file output's SHA-256 and size as read back
/// ([`ReadBack`]; `None` for stdout or a special file).
pub fn write_to_digest<T>(
    path: Option<&Path>,
    what: &'static str,
    f: impl FnOnce(&mut Output) -> Result<T>,
) -> Result<(T, Option<FileDigest>)> {
    let mut out = Output::open(path, what)?;
    match f(&mut out) {
        Ok(v) => {
            let d = out.finish_read_back()?;
            Ok((v, d))
        }
        Err(e) => Err(out.take_error().map_or(e, anyhow::Error::from)),
    }
}

/// Writes `bytes` as the whole of the file `path` (see [`Output`]).
pub fn write_file(path: &Path, what: &'static str, bytes: &[u8]) -> Result<()> {
    write_to(Some(path), what, |w| Ok(w.write_all(bytes)?))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_failed_write_leaves_the_old_file_and_no_temporary_file() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        fs::write(&p, "old\n").unwrap();
        let r: Result<()> = write_to(Some(&p), "records", |w| {
            w.write_all(b"new, half")?;
            bail!("input broke")
        });
        assert_eq!(r.unwrap_err().to_string(), "input broke");
        assert_eq!(fs::read_to_string(&p).unwrap(), "old\n");
        let names: Vec<_> = fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(names.len(), 1, "{names:?}");
    }

    /// A file read back as it is written: its digest is `sha256sum`'s
    /// (coreutils, FIPS 180-4 SHA-256, a program apart from this crate) for
    /// empty files, files shorter than one read-back piece, and files of
    /// many pieces written in uneven pieces and in one write larger than
    /// the buffer; an output dropped unfinished leaves the old file.
    #[test]
    fn a_file_read_back_while_written_has_sha256sums_digest() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        let step = READ_BACK_PIECE;
        for (len, parts) in [
            (0, 1),
            (1, 1),
            (step - 1, 7),
            (step, 7),
            (3 * step + 12_345, 7),
            (20 * step + 3, 1),
        ] {
            let data: Vec<u8> = (0..len).map(|i| (i * 7 % 251) as u8).collect();
            let ((), d) = write_to_digest(Some(&p), "records", |w| {
                for piece in data.chunks(1 + len / parts) {
                    w.write_all(piece)?;
                }
                Ok(())
            })
            .unwrap();
            let out = std::process::Command::new("sha256sum")
                .arg(&p)
                .output()
                .unwrap();
            let want = String::from_utf8(out.stdout).unwrap()[..64].to_string();
            let d = d.unwrap();
            assert_eq!((d.sha256.as_str(), d.size), (want.as_str(), len as u64));
            assert_eq!(fs::read(&p).unwrap(), data);
        }
        fs::write(&p, "old\n").unwrap();
        let mut out = Output::file(&p, "records").unwrap();
        out.write_all(&vec![b'x'; 2 * step]).unwrap();
        drop(out);
        assert_eq!(fs::read_to_string(&p).unwrap(), "old\n");
        // stdout is not read back.
        let ((), d) = write_to_digest(None, "records", |_| Ok(())).unwrap();
        assert_eq!(d, None);
    }

    /// The comparison itself, on a file that differs from the pieces
    /// written: a changed byte (in the first piece, in a later one, the
    /// last byte of the last, shorter piece), a file cut short, a file
    /// longer than written, and a writer that stopped without finishing
    /// are each found and named; the same bytes give the SHA-256 of the
    /// `sha2` crate over the whole.
    #[test]
    fn a_file_that_reads_back_other_than_written_is_named_at_the_piece_that_differs() {
        let written: Vec<u8> = (0..3 * READ_BACK_PIECE + 100)
            .map(|i| (i * 13 % 256) as u8)
            .collect();
        let check = |file: &[u8], finished: bool| {
            let mut notes = written
                .chunks(READ_BACK_PIECE)
                .map(|p| Note::Piece {
                    len: p.len(),
                    crc: crc32fast::hash(p),
                })
                .collect::<Vec<_>>()
                .into_iter();
            let mut ended = false;
            let next = move || match notes.next() {
                Some(n) => Some(n),
                None if finished && !ended => {
                    ended = true;
                    Some(Note::Final)
                }
                None => None,
            };
            compare_read_back(file, next)
        };
        let same = check(&written, true).unwrap();
        assert_eq!(same.size, written.len() as u64);
        assert_eq!(
            same.sha256,
            Sha256::digest(&written)
                .iter()
                .map(|b| format!("{b:02x}"))
                .collect::<String>()
        );
        for at in [0, 5, READ_BACK_PIECE + 17, written.len() - 1] {
            let mut f = written.clone();
            f[at] ^= 0x20;
            let start = at / READ_BACK_PIECE * READ_BACK_PIECE;
            let end = (start + READ_BACK_PIECE).min(written.len()) - 1;
            assert_eq!(
                check(&f, true).unwrap_err(),
                format!("bytes {start} to {end} are not those written (their CRC-32 differs)")
            );
        }
        let e = check(&written[..READ_BACK_PIECE + 9], true).unwrap_err();
        assert_eq!(
            e,
            format!(
                "it ends at byte {}, where {} bytes were written",
                READ_BACK_PIECE + 9,
                2 * READ_BACK_PIECE
            )
        );
        let mut longer = written.clone();
        longer.push(b'\n');
        let e = check(&longer, true).unwrap_err();
        assert_eq!(
            e,
            format!("it holds more than the {} bytes written", written.len())
        );
        assert_eq!(
            check(&written, false).unwrap_err(),
            "the output was left unfinished"
        );
    }

    /// Through [`Output`]: bytes added to the temporary file by something
    /// else after the command wrote its own make the command fail, naming
    /// the output, and the old file stays with no temporary file left.
    #[test]
    fn an_output_that_grew_behind_the_command_is_refused_and_the_old_file_stays() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        fs::write(&p, "old\n").unwrap();
        let mut out = Output::file(&p, "records").unwrap();
        out.write_all(b"time,value\n").unwrap();
        out.flush().unwrap();
        let temp = out.temp.as_ref().unwrap().path.clone();
        OpenOptions::new()
            .append(true)
            .open(&temp)
            .unwrap()
            .write_all(b"extra\n")
            .unwrap();
        let e = out.finish().unwrap_err().to_string();
        assert_eq!(
            e,
            format!(
                "cannot write records to {}: it reads back other than written: \
                 it holds more than the 11 bytes written",
                p.display()
            )
        );
        assert_eq!(fs::read_to_string(&p).unwrap(), "old\n");
        let names: Vec<_> = fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(names.len(), 1, "{names:?}");
    }

    #[test]
    fn links_resolve_relative_to_their_folder() {
        let dir = tempfile::tempdir().unwrap();
        let sub = dir.path().join("sub");
        fs::create_dir(&sub).unwrap();
        #[cfg(unix)]
        {
            std::os::unix::fs::symlink("real.csv", sub.join("link.csv")).unwrap();
            assert_eq!(
                resolve_links(&sub.join("link.csv")).unwrap(),
                sub.join("real.csv")
            );
        }
        assert_eq!(resolve_links(&sub.join("x")).unwrap(), sub.join("x"));
    }
}
