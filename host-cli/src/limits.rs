//! Limits that keep memory bounded on any input, however malformed.
//!
//! Every reader holds at most one record (a line, or a quoted CSV record) at a
//! time besides its fixed buffers, and a record is at most
//! [`MAX_RECORD_BYTES`] long: a file of one endless line, or of NUL bytes, is
//! refused at that length with its file and line instead of filling memory.
//! A station file is read whole, and is at most [`MAX_STATION_BYTES`]. The
//! limits are far above any real file: a 1 Hz row of 32 channels is under
//! 1 KiB, a station file of 32 channels with every key under 16 KiB.

use std::collections::VecDeque;
use std::error::Error;
use std::fmt;
use std::fs::File;
use std::io::{self, Read};
use std::path::Path;

use anyhow::{anyhow, Context, Result};

/// The longest record (line) any reader accepts, in bytes.
pub const MAX_RECORD_BYTES: usize = 1 << 20;

/// The largest station file, in bytes.
pub const MAX_STATION_BYTES: u64 = 1 << 20;

/// The error a reader meets at a record longer than [`MAX_RECORD_BYTES`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct LongRecord;

impl fmt::Display for LongRecord {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "a record (line) longer than {MAX_RECORD_BYTES} bytes: not a text table of this kind, \
             a line end missing, or a quote never closed"
        )
    }
}

impl Error for LongRecord {}

impl LongRecord {
    /// As an I/O error, for readers that return `io::Result`.
    pub fn io() -> io::Error {
        io::Error::new(io::ErrorKind::InvalidData, LongRecord)
    }

    /// Whether `e` is this error, directly or inside a `csv` error.
    pub fn is(e: &(dyn Error + 'static)) -> bool {
        let mut cur = Some(e);
        while let Some(e) = cur {
            if e.downcast_ref::<LongRecord>().is_some() {
                return true;
            }
            if let Some(io) = e.downcast_ref::<io::Error>() {
                if io.get_ref().is_some_and(|i| i.is::<LongRecord>()) {
                    return true;
                }
            }
            if let Some(csv::ErrorKind::Io(io)) = e.downcast_ref::<csv::Error>().map(|c| c.kind()) {
                if io.get_ref().is_some_and(|i| i.is::<LongRecord>()) {
                    return true;
                }
            }
            cur = e.source();
        }
        false
    }
}

/// An I/O error of reading `path`, with the line of the record being read
/// when it is a [`LongRecord`].
pub fn read_error(e: io::Error, path: &Path, line: u64) -> anyhow::Error {
    if LongRecord::is(&e) {
        anyhow!("{}:{line}: {LongRecord}", path.display())
    } else {
        anyhow::Error::new(e).context(format!("cannot read {}", path.display()))
    }
}

/// A `csv` error of reading `path`, where the next record starts on `line`;
/// `None` unless it is a [`LongRecord`].
pub fn csv_long_record(e: &csv::Error, path: &Path, line: u64) -> Option<anyhow::Error> {
    LongRecord::is(e).then(|| anyhow!("{}:{line}: {LongRecord}", path.display()))
}

/// A reader for the `csv` crate that fails with [`LongRecord`] once more than
/// [`MAX_RECORD_BYTES`] were read past the end of the last record: re-armed at
/// every record by [`read_csv`]. The `csv` reader and this one buffer a few KiB
/// ahead, so a record never holds more than the limit plus those buffers.
///
/// It also hands every `\r\n` on as `\n`: the `csv` crate ends a record at the
/// `\r` and starts the next at the `\n`, before it counts that line, so the
/// line numbers of its records would lag one behind after CRLF line ends (`\r`
/// and `\n` end records either way; a lone `\r` is kept, and ends a line as
/// a `\n` does: [`crate::reader::count_line_ends`]).
#[derive(Debug)]
pub struct Capped<R> {
    inner: R,
    /// Bytes read from `inner` and not handed on yet: `buf[pos..len]`.
    buf: Box<[u8]>,
    pos: usize,
    len: usize,
    eof: bool,
    /// The record being read may not reach this offset.
    until: u64,
    /// Bytes handed on so far.
    out: u64,
    /// The offsets of the line ends handed on at or after `kept`, and the
    /// line ends before `kept`.
    ends: VecDeque<u64>,
    kept: u64,
    lines_before: u64,
}

impl<R> Capped<R> {
    /// `inner`, whose first record starts at its first byte.
    pub fn new(inner: R) -> Self {
        Capped {
            inner,
            buf: vec![0; 8 << 10].into_boxed_slice(),
            pos: 0,
            len: 0,
            eof: false,
            until: MAX_RECORD_BYTES as u64,
            out: 0,
            ends: VecDeque::new(),
            kept: 0,
            lines_before: 0,
        }
    }

    /// The line (from 1) of the first byte that is not a line end at or after
    /// offset `start` of what was handed on: a record's line, where the `csv`
    /// crate says it starts (before the blank lines it skipped). Forgets the
    /// line ends before `start`: call it for records in order.
    pub fn line_at(&mut self, start: u64) -> u64 {
        while let Some(&at) = self.ends.front() {
            if at >= start {
                break;
            }
            self.lines_before += 1;
            self.ends.pop_front();
        }
        self.kept = start;
        // The line ends right at `start`, one byte each: blank lines the
        // `csv` crate skipped before the record.
        let blank = (start..)
            .zip(&self.ends)
            .take_while(|(next, at)| *at == next)
            .count();
        self.lines_before + 1 + blank as u64
    }
}

impl<R: Read> Capped<R> {
    /// Reads more after `buf[pos..len]`, which moves to the front.
    fn fill(&mut self) -> io::Result<()> {
        self.buf.copy_within(self.pos..self.len, 0);
        self.len -= self.pos;
        self.pos = 0;
        // Offsets are of the bytes handed on (after `\r\n` became `\n`): those
        // handed on, and those buffered here, at most as many.
        let ahead = self.out + (self.len - self.pos) as u64;
        let room = self.until.saturating_sub(ahead);
        if room == 0 {
            return Err(LongRecord::io());
        }
        let n = (self.buf.len() - self.len).min(usize::try_from(room).unwrap_or(usize::MAX));
        loop {
            match self.inner.read(&mut self.buf[self.len..self.len + n]) {
                Ok(got) => {
                    self.eof = got == 0;
                    self.len += got;
                    return Ok(());
                }
                Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                Err(e) => return Err(e),
            }
        }
    }
}

impl<R: Read> Read for Capped<R> {
    fn read(&mut self, out: &mut [u8]) -> io::Result<usize> {
        if out.is_empty() {
            return Ok(0);
        }
        // Have at least two bytes (or all that is left), so that a `\r` can
        // be seen with the byte after it.
        while self.len - self.pos < 2 && !self.eof {
            self.fill()?;
        }
        let mut w = 0;
        while w < out.len() && self.pos < self.len {
            let c = self.buf[self.pos];
            if c == b'\r' && self.pos + 1 == self.len && !self.eof {
                // The byte after it is not read yet: hand it on next time.
                break;
            }
            self.pos += 1;
            if c == b'\r' && self.buf.get(self.pos) == Some(&b'\n') && self.pos < self.len {
                continue;
            }
            if c == b'\n' || c == b'\r' {
                // Each ends a line: the `\r` of a `\r\n` was left out above,
                // so this `\r` is an old Mac line end.
                self.ends.push_back(self.out);
            }
            out[w] = c;
            w += 1;
            self.out += 1;
        }
        Ok(w)
    }
}

/// A `csv` reader over `inner` whose records are capped.
pub fn csv_reader<R: Read>(inner: R) -> csv::Reader<Capped<R>> {
    csv_reader_with(inner, b',')
}

/// A `csv` reader of fields separated by `delimiter` whose records are capped.
pub fn csv_reader_with<R: Read>(inner: R, delimiter: u8) -> csv::Reader<Capped<R>> {
    csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(Capped::new(inner))
}

/// Reads the next record of a capped reader: its line (from 1), or `None` at
/// the end; allows the record after it [`MAX_RECORD_BYTES`] again.
pub fn read_csv<R: Read>(
    rdr: &mut csv::Reader<Capped<R>>,
    rec: &mut csv::ByteRecord,
) -> csv::Result<Option<u64>> {
    if !rdr.read_byte_record(rec)? {
        return Ok(None);
    }
    Ok(Some(next_record(rdr, rec.position())))
}

/// For callers that read records themselves (`StringRecord`s): the line of
/// the record just read at `position`, and the next record allowed
/// [`MAX_RECORD_BYTES`] again. Call it once per record, in order.
pub fn next_record<R: Read>(
    rdr: &mut csv::Reader<Capped<R>>,
    position: Option<&csv::Position>,
) -> u64 {
    // The `csv` crate's own line numbers lag behind after blank lines and
    // quoted fields, so tenmin counts them itself.
    let start = position.map_or(0, csv::Position::byte);
    let line = rdr.get_mut().line_at(start);
    let at = rdr.position().byte();
    rdr.get_mut().until = at + MAX_RECORD_BYTES as u64;
    line
}

/// Reads a station file whole: at most [`MAX_STATION_BYTES`], so that an
/// endless source (a device, a pipe) is refused instead of filling memory.
pub fn read_station_file(path: &Path) -> Result<Vec<u8>> {
    let file =
        File::open(path).with_context(|| format!("cannot read station file {}", path.display()))?;
    let mut bytes = Vec::new();
    file.take(MAX_STATION_BYTES + 1)
        .read_to_end(&mut bytes)
        .with_context(|| format!("cannot read station file {}", path.display()))?;
    if bytes.len() as u64 > MAX_STATION_BYTES {
        return Err(anyhow!(
            "{}: larger than {MAX_STATION_BYTES} bytes: not a station file (a station file of 32 channels with every key is under 16 KiB)",
            path.display()
        ));
    }
    Ok(bytes)
}

/// The 1-based line of byte `offset` of `text` (a `\n` ends a line; an
/// offset past the end is the last line).
pub fn line_at(text: &[u8], offset: usize) -> usize {
    1 + text[..offset.min(text.len())]
        .iter()
        .filter(|b| **b == b'\n')
        .count()
}

/// A whole file read from `path` as text, or an error naming the file and the
/// line of its first byte that is not UTF-8.
pub fn utf8_text(path: &Path, bytes: Vec<u8>) -> Result<String> {
    String::from_utf8(bytes).map_err(|e| {
        let line = line_at(e.as_bytes(), e.utf8_error().valid_up_to());
        anyhow!("{}:{line}: not valid UTF-8", path.display())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_records_keep_their_lines_after_crlf_and_blank_lines() {
        // Lines as a text editor counts them (a `\n`, a `\r\n` and a lone
        // `\r` each end a line), as the block reader counts.
        let text = b"h,1\r\na,\"2\"\r\n\r\nb,3\rc,4\r\n\nd,5\r";
        // One byte at a time too, so that a `\r` at the end of a read is held.
        for step in [1usize, 2, 3, 1 << 20] {
            struct Trickle<'a>(&'a [u8], usize);
            impl Read for Trickle<'_> {
                fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
                    let n = self.1.min(buf.len()).min(self.0.len());
                    buf[..n].copy_from_slice(&self.0[..n]);
                    self.0 = &self.0[n..];
                    Ok(n)
                }
            }
            let mut rdr = csv_reader(Trickle(text, step));
            let mut rec = csv::ByteRecord::new();
            let mut got = Vec::new();
            while let Some(line) = read_csv(&mut rdr, &mut rec).unwrap() {
                got.push((String::from_utf8_lossy(&rec[0]).into_owned(), line));
            }
            let want: Vec<(String, u64)> = [("h", 1), ("a", 2), ("b", 4), ("c", 5), ("d", 7)]
                .iter()
                .map(|(s, l)| ((*s).to_string(), *l))
                .collect();
            assert_eq!(got, want, "step {step}");
        }
    }

    #[test]
    fn a_long_csv_record_is_refused_and_short_ones_pass() {
        // Records just under the cap pass, one at a time; a longer one fails.
        let ok = MAX_RECORD_BYTES - 10;
        let mut text = Vec::new();
        for _ in 0..3 {
            text.extend(std::iter::repeat_n(b'x', ok));
            text.push(b'\n');
        }
        let mut rdr = csv_reader(&text[..]);
        let mut rec = csv::ByteRecord::new();
        let mut n = 0;
        while read_csv(&mut rdr, &mut rec).unwrap().is_some() {
            assert_eq!(rec[0].len(), ok);
            n += 1;
        }
        assert_eq!(n, 3);

        let mut long = b"a,b\n\"".to_vec();
        long.extend(std::iter::repeat_n(b'y', 3 * MAX_RECORD_BYTES));
        let mut rdr = csv_reader(&long[..]);
        assert!(read_csv(&mut rdr, &mut rec).unwrap().is_some());
        let e = read_csv(&mut rdr, &mut rec).unwrap_err();
        assert!(LongRecord::is(&e), "{e}");
        let line = rdr.position().line();
        assert_eq!(line, 2);
        let msg = csv_long_record(&e, Path::new("f.csv"), line).unwrap();
        assert!(msg.to_string().starts_with("f.csv:2: a record"), "{msg}");
    }

    #[test]
    fn lines_of_offsets_and_of_the_first_byte_not_utf8() {
        // By hand: offsets 0..=1 are on line 1, 2..=3 on line 2, 4 and past
        // the end on line 3.
        let text = b"a\nb\nc";
        let lines: Vec<usize> = (0..7).map(|i| line_at(text, i)).collect();
        assert_eq!(lines, [1, 1, 2, 2, 3, 3, 3]);
        let p = Path::new("x.toml");
        assert_eq!(utf8_text(p, b"a\nb".to_vec()).unwrap(), "a\nb");
        // 0xFF is never UTF-8 (RFC 3629, section 1); it stands on line 3.
        let e = utf8_text(p, b"a\n\nb\xff\n".to_vec()).unwrap_err();
        assert_eq!(e.to_string(), "x.toml:3: not valid UTF-8");
    }
}
