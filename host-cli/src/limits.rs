//! Limits that keep memory bounded on any input, however malformed.
//!
//! Every reader holds at most one record (a line, or a quoted CSV record) at a
//! time besides its fixed buffers, and a record is at most
//! [`MAX_RECORD_BYTES`] long: a file of one endless line, or of NUL bytes, is
//! refused at that length with its file and line instead of filling memory.
//! A station file is read whole, and is at most [`MAX_STATION_BYTES`]. The
//! limits are far above any real file: a 1 Hz row of 32 channels is under
//! 1 KiB, a station file of 32 channels with every key under 16 KiB.

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
/// every record by [`read_csv`]. The `csv` reader buffers a few KiB ahead, so
/// a record never holds more than the limit plus that buffer.
#[derive(Debug)]
pub struct Capped<R> {
    inner: R,
    read: u64,
    until: u64,
}

impl<R> Capped<R> {
    /// `inner`, whose first record starts at its first byte.
    pub fn new(inner: R) -> Self {
        Capped {
            inner,
            read: 0,
            until: MAX_RECORD_BYTES as u64,
        }
    }
}

impl<R: Read> Read for Capped<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let room = self.until.saturating_sub(self.read);
        if room == 0 {
            return Err(LongRecord::io());
        }
        let n = buf.len().min(usize::try_from(room).unwrap_or(usize::MAX));
        let got = self.inner.read(&mut buf[..n])?;
        self.read += got as u64;
        Ok(got)
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

/// Reads the next record of a capped reader and allows the one after it
/// [`MAX_RECORD_BYTES`] again.
pub fn read_csv<R: Read>(
    rdr: &mut csv::Reader<Capped<R>>,
    rec: &mut csv::ByteRecord,
) -> csv::Result<bool> {
    let more = rdr.read_byte_record(rec)?;
    rearm(rdr);
    Ok(more)
}

/// Allows the record after the one just read [`MAX_RECORD_BYTES`] again (for
/// callers that read `StringRecord`s themselves).
pub fn rearm<R: Read>(rdr: &mut csv::Reader<Capped<R>>) {
    let at = rdr.position().byte();
    rdr.get_mut().until = at + MAX_RECORD_BYTES as u64;
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

#[cfg(test)]
mod tests {
    use super::*;

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
        while read_csv(&mut rdr, &mut rec).unwrap() {
            assert_eq!(rec[0].len(), ok);
            n += 1;
        }
        assert_eq!(n, 3);

        let mut long = b"a,b\n\"".to_vec();
        long.extend(std::iter::repeat_n(b'y', 3 * MAX_RECORD_BYTES));
        let mut rdr = csv_reader(&long[..]);
        assert!(read_csv(&mut rdr, &mut rec).unwrap());
        let e = read_csv(&mut rdr, &mut rec).unwrap_err();
        assert!(LongRecord::is(&e), "{e}");
        let line = rdr.position().line();
        assert_eq!(line, 2);
        let msg = csv_long_record(&e, Path::new("f.csv"), line).unwrap();
        assert!(msg.to_string().starts_with("f.csv:2: a record"), "{msg}");
    }
}
