//! Records and samples as Parquet or Arrow IPC (columnar files).
//!
//! **Which files.** A file is columnar by its extension: `.parquet` or `.pq`
//! is Parquet, `.arrow`, `.ipc`, `.feather` or `.arrows` Arrow IPC (file or
//! stream format, told apart by the file's first bytes); any other name is
//! text as before. `tenmin replay --format` chooses the records' format
//! whatever the name ([`Format`]).
//!
//! **Records.** The columns of the records CSV ([`records::COLUMNS`]), same
//! names, same order, one row per CSV row. Each row is rendered as the CSV
//! row first ([`records::write_row`], the one place records are formatted)
//! and its fields are stored typed: `start`, `end` as
//! `timestamp[ms, tz=UTC]`; `channel`, `flags`, `sensor_entries` as UTF-8
//! text (never null: empty where the CSV field is); the `n_*` counts as
//! `int64`; every statistic as `float64`, null where the CSV field is empty
//! (absent). The CSV prints a statistic as the shortest decimal that parses
//! back to the same `f64` bits, so the stored `float64` is the bit pattern
//! the text parses to, and printing it back gives the CSV text again. After
//! writing, the file is read back and rendered as CSV rows
//! ([`records_to_csv`]): their SHA-256 must equal that of the rows written,
//! or the command fails.
//!
//! **Samples** (replay, verify and export read them; export writes them):
//! a column `time` and one column per channel id, nothing else (as the
//! samples CSV's header). `time`: a timestamp of any unit (a naive one is
//! UTC, as a samples CSV time without an offset), `date64`, integer epoch
//! seconds, `float64` epoch seconds (rounded to the millisecond), or text in
//! the CSV's time forms. A value channel: any float or integer type, null =
//! missing (the CSV's empty field), NaN and missing-value codes as in the
//! CSV. A raw-counts channel: an integer type, or a float holding a whole
//! number (NaN and null missing). A cell that does not read is a bad row
//! (`FILE: row N (column C): ...`, rows counted from 1), counted with
//! `--skip-bad-rows` as in the CSV. Columnar samples are replayed on one
//! thread (`--jobs` does not apply: there is no text to parse in parallel);
//! samples files of one command are all columnar or all text. A station
//! file's `[input]` layout describes text files and is refused here.
//!
//! Export writes the rows it reads as columnar samples in those columns:
//! `time` as `timestamp[ms, tz=UTC]`, a value channel as `float64`, a
//! raw-counts channel as `int32`, a missing reading as null. It is read back
//! after writing and compared row by row (SHA-256 of the times and readings).

use std::cell::Cell;
use std::fs::File;
use std::io::{self, BufReader, Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use anyhow::{anyhow, bail, Context, Result};
use arrow_array::builder::{
    Float64Builder, Int32Builder, Int64Builder, StringBuilder, TimestampMillisecondBuilder,
};
use arrow_array::cast::AsArray;
use arrow_array::types::{
    Date64Type, Float32Type, Float64Type, Int16Type, Int32Type, Int64Type, Int8Type,
    TimestampMicrosecondType, TimestampMillisecondType, TimestampNanosecondType,
    TimestampSecondType, UInt16Type, UInt32Type, UInt64Type, UInt8Type,
};
use arrow_array::{Array, ArrayRef, RecordBatch, RecordBatchReader};
use arrow_schema::{DataType, Field, Schema, SchemaRef, TimeUnit};
use qc_core::{ChannelRecord, Pushed, Reading, Timestamp};
use sha2::{Digest, Sha256};

use crate::config::{Decode, StationFile};
use crate::engine::{Engine, Sink};
use crate::records::{self, Type};
use crate::samples::{self, Block, InputStats, Options};
use crate::sensors::History;
use crate::timefmt::{parse_time, parse_time_any, Rfc3339, TimeError, SAMPLES_END, SAMPLES_FROM};

/// A file format of records (`--format`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Text: the records CSV.
    Csv,
    /// Apache Parquet (zstd-compressed columns).
    Parquet,
    /// Arrow IPC file format (uncompressed).
    Arrow,
}

impl Format {
    /// The format a file's name says: by its extension, case ignored.
    pub fn of_path(path: &Path) -> Format {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase);
        match ext.as_deref() {
            Some("parquet" | "pq") => Format::Parquet,
            Some("arrow" | "ipc" | "feather" | "arrows") => Format::Arrow,
            _ => Format::Csv,
        }
    }

    /// `--format` when given, else the output's extension, else CSV.
    pub fn choose(flag: Option<Format>, output: Option<&Path>) -> Format {
        flag.or_else(|| output.map(Format::of_path))
            .unwrap_or(Format::Csv)
    }

    /// The format's name in messages.
    pub fn name(self) -> &'static str {
        match self {
            Format::Csv => "CSV",
            Format::Parquet => "Parquet",
            Format::Arrow => "Arrow IPC",
        }
    }
}

/// Whether `path` names a columnar file (Parquet or Arrow IPC).
pub fn is_columnar(path: &Path) -> bool {
    Format::of_path(path) != Format::Csv
}

/// Whether `files` are columnar: all of them or none (else an error).
pub fn all_columnar(files: &[PathBuf]) -> Result<bool> {
    let n = files.iter().filter(|f| is_columnar(f)).count();
    if n > 0 && n < files.len() {
        let names: Vec<String> = files.iter().map(|f| f.display().to_string()).collect();
        bail!(
            "{}: samples files of one command are all text or all Parquet/Arrow (by extension), not a mix; convert one kind (tenmin export -o FILE.parquet)",
            names.join(", ")
        );
    }
    Ok(n > 0)
}

// ---------------------------------------------------------------- records

/// Rows per record batch written (and read).
const BATCH_ROWS: usize = 8192;

/// Batches of a samples file decoded ahead of the replay and waiting for it
/// ([`Columnar::file`]): with the one being decoded and the one replayed, at
/// most four batches of [`BATCH_ROWS`] rows in memory.
const AHEAD_BATCHES: usize = 2;

/// The records' Arrow schema ([`records::COLUMNS`] typed).
pub fn records_schema() -> SchemaRef {
    let fields: Vec<Field> = records::COLUMNS
        .iter()
        .map(|c| match c.ty {
            Type::Time => Field::new(
                c.name,
                DataType::Timestamp(TimeUnit::Millisecond, Some("UTC".into())),
                false,
            ),
            Type::Text | Type::Flags => Field::new(c.name, DataType::Utf8, false),
            Type::Count => Field::new(c.name, DataType::Int64, false),
            Type::Number => Field::new(c.name, DataType::Float64, true),
        })
        .collect();
    Arc::new(Schema::new(fields))
}

enum Builder {
    Time(TimestampMillisecondBuilder),
    Text(StringBuilder),
    Count(Int64Builder),
    Number(Float64Builder),
}

/// The records' columns being built from CSV rows.
struct RecordColumns {
    schema: SchemaRef,
    cols: Vec<Builder>,
    rows: usize,
}

impl RecordColumns {
    fn new() -> Self {
        let cols = records::COLUMNS
            .iter()
            .map(|c| match c.ty {
                Type::Time => {
                    Builder::Time(TimestampMillisecondBuilder::new().with_timezone("UTC"))
                }
                Type::Text | Type::Flags => Builder::Text(StringBuilder::new()),
                Type::Count => Builder::Count(Int64Builder::new()),
                Type::Number => Builder::Number(Float64Builder::new()),
            })
            .collect();
        RecordColumns {
            schema: records_schema(),
            cols,
            rows: 0,
        }
    }

    /// Adds one records CSV row (without its line end).
    fn push(&mut self, line: &str) -> Result<()> {
        let mut fields = line.split(',');
        for (col, spec) in self.cols.iter_mut().zip(records::COLUMNS.iter()) {
            let f = fields.next().unwrap_or_default();
            let bad = || anyhow!("records column {}: cannot store {f:?}", spec.name);
            match col {
                Builder::Time(b) => {
                    let t = parse_time_any(f.as_bytes()).map_err(|_| bad())?;
                    b.append_value(t.millis());
                }
                Builder::Text(b) => b.append_value(f),
                Builder::Count(b) => b.append_value(f.parse::<i64>().map_err(|_| bad())?),
                Builder::Number(b) if f.is_empty() => b.append_null(),
                Builder::Number(b) => b.append_value(f.parse::<f64>().map_err(|_| bad())?),
            }
        }
        if fields.next().is_some() {
            bail!("a records row with more fields than columns: {line:?}");
        }
        self.rows += 1;
        Ok(())
    }

    fn batch(&mut self) -> Result<RecordBatch> {
        let arrays: Vec<ArrayRef> = self
            .cols
            .iter_mut()
            .map(|c| -> ArrayRef {
                match c {
                    Builder::Time(b) => Arc::new(b.finish()),
                    Builder::Text(b) => Arc::new(b.finish()),
                    Builder::Count(b) => Arc::new(b.finish()),
                    Builder::Number(b) => Arc::new(b.finish()),
                }
            })
            .collect();
        self.rows = 0;
        Ok(RecordBatch::try_new(self.schema.clone(), arrays)?)
    }
}

/// A `Write + Send` buffer the Parquet writer fills and [`RecordsOut`]
/// empties into the output after each batch (the outputs are not `Send`).
#[derive(Clone, Default)]
struct Shared(Arc<Mutex<Vec<u8>>>);

impl Shared {
    fn drain_into(&self, out: &mut dyn Write) -> io::Result<()> {
        let mut v = self
            .0
            .lock()
            .map_err(|_| io::Error::other("a writer thread failed"))?;
        out.write_all(&v)?;
        v.clear();
        Ok(())
    }
}

impl Write for Shared {
    fn write(&mut self, b: &[u8]) -> io::Result<usize> {
        self.0
            .lock()
            .map_err(|_| io::Error::other("a writer thread failed"))?
            .extend_from_slice(b);
        Ok(b.len())
    }
    fn flush(&mut self) -> io::Result<()> {
        Ok(())
    }
}

enum Target<'w> {
    Parquet(
        Box<parquet::arrow::ArrowWriter<Shared>>,
        Shared,
        &'w mut dyn Write,
    ),
    Arrow(arrow_ipc::writer::FileWriter<&'w mut dyn Write>),
}

impl<'w> Target<'w> {
    fn new(out: &'w mut dyn Write, format: Format, schema: &SchemaRef) -> Result<Self> {
        Ok(match format {
            Format::Parquet => {
                use parquet::basic::{Compression, ZstdLevel};
                let props = parquet::file::properties::WriterProperties::builder()
                    .set_compression(Compression::ZSTD(ZstdLevel::default()))
                    .set_max_row_group_size(1 << 17)
                    .set_created_by(format!("tenmin {}", env!("CARGO_PKG_VERSION")))
                    .build();
                let buf = Shared::default();
                let w =
                    parquet::arrow::ArrowWriter::try_new(buf.clone(), schema.clone(), Some(props))?;
                Target::Parquet(Box::new(w), buf, out)
            }
            Format::Arrow => Target::Arrow(arrow_ipc::writer::FileWriter::try_new(out, schema)?),
            Format::Csv => bail!("CSV is written by the text writers"),
        })
    }

    fn write(&mut self, batch: &RecordBatch) -> Result<()> {
        match self {
            Target::Parquet(w, buf, out) => {
                w.write(batch)?;
                buf.drain_into(*out)?;
            }
            Target::Arrow(w) => w.write(batch)?,
        }
        Ok(())
    }

    fn close(self) -> Result<()> {
        match self {
            Target::Parquet(w, buf, out) => {
                w.close()?;
                buf.drain_into(out)?;
                out.flush()?;
            }
            Target::Arrow(mut w) => {
                w.finish()?;
                w.get_mut().flush()?;
            }
        }
        Ok(())
    }
}

/// What a columnar records output wrote: rows and the SHA-256 of their
/// records CSV rendering (data rows, each with its `\n`).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Written {
    /// Data rows.
    pub rows: u64,
    /// SHA-256 of the rows as records CSV.
    pub sha256: [u8; 32],
}

/// A sink writing records as Parquet or Arrow IPC to `out`.
pub struct RecordsOut<'w> {
    ids: Vec<String>,
    sensors: Option<Arc<History>>,
    target: Target<'w>,
    cols: RecordColumns,
    line: Vec<u8>,
    hash: Sha256,
    rows: u64,
}

impl<'w> RecordsOut<'w> {
    /// A writer of `format` (Parquet or Arrow) for channels `ids`, marked with
    /// the sensor history `sensors` as the CSV writer marks them.
    pub fn new(
        out: &'w mut dyn Write,
        format: Format,
        ids: Vec<String>,
        sensors: Option<Arc<History>>,
    ) -> Result<Self> {
        let target = Target::new(out, format, &records_schema())?;
        Ok(RecordsOut {
            ids,
            sensors,
            target,
            cols: RecordColumns::new(),
            line: Vec::with_capacity(256),
            hash: Sha256::new(),
            rows: 0,
        })
    }

    fn write_batch(&mut self) -> Result<()> {
        if self.cols.rows == 0 {
            return Ok(());
        }
        let batch = self.cols.batch()?;
        self.target.write(&batch)
    }

    /// Writes the last rows and the file's footer.
    pub fn finish(mut self) -> Result<Written> {
        self.write_batch()?;
        self.target.close()?;
        Ok(Written {
            rows: self.rows,
            sha256: self.hash.finalize().into(),
        })
    }
}

impl Sink for RecordsOut<'_> {
    fn interval(
        &mut self,
        start: Timestamp,
        end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()> {
        for (ch, (id, r)) in self.ids.iter().zip(records).enumerate() {
            self.line.clear();
            records::write_row(
                &mut self.line,
                start,
                end,
                (id, ch),
                r,
                self.sensors.as_deref(),
            )?;
            self.hash.update(&self.line);
            let text = std::str::from_utf8(&self.line)?;
            self.cols.push(text.trim_end_matches('\n'))?;
            self.rows += 1;
        }
        if self.cols.rows >= BATCH_ROWS {
            self.write_batch()?;
        }
        Ok(())
    }
}

/// The record batches of a columnar file, with its schema: the decoding
/// crates' code run [`guarded`], opening and each batch.
fn open_batches(path: &Path) -> Result<Box<dyn RecordBatchReader + Send>> {
    let inner = guarded(path, || open_unguarded(path))?;
    Ok(Box::new(Guarded {
        inner: Some(inner),
        path: path.to_path_buf(),
    }))
}

fn open_unguarded(path: &Path) -> Result<Box<dyn RecordBatchReader + Send>> {
    let at = || format!("{}: cannot read", path.display());
    let mut f = File::open(path).with_context(at)?;
    let size = f.metadata().with_context(at)?.len();
    Ok(match Format::of_path(path) {
        Format::Parquet => {
            let b = parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder::try_new(f)
                .map_err(|e| anyhow!("{}: not a Parquet file: {e}", path.display()))?;
            parquet_lengths(path, b.metadata(), size)?;
            Box::new(b.with_batch_size(BATCH_ROWS).build()?)
        }
        _ => {
            let mut magic = [0u8; 6];
            let n = f.read(&mut magic).with_context(at)?;
            let file = n == 6 && &magic == b"ARROW1";
            ipc_lengths(path, &mut f, size, file)?;
            f.seek(SeekFrom::Start(0)).with_context(at)?;
            if file {
                Box::new(
                    arrow_ipc::reader::FileReader::try_new(BufReader::new(f), None)
                        .map_err(|e| anyhow!("{}: not an Arrow IPC file: {e}", path.display()))?,
                )
            } else {
                Box::new(
                    arrow_ipc::reader::StreamReader::try_new(BufReader::new(f), None).map_err(
                        |e| anyhow!("{}: not an Arrow IPC file or stream: {e}", path.display()),
                    )?,
                )
            }
        }
    })
}

/// Every column chunk of a Parquet file's metadata within the file, and its
/// pages within it, each at most [`crate::pagescan::MAX_PAGE`] bytes
/// decompressed ([`crate::pagescan::check_chunk`]): the `parquet` crate
/// reserves a chunk's bytes, and a page's, as the file declares them before
/// reading them, so a damaged length would ask for any amount of memory (and
/// a negative one panics in it).
fn parquet_lengths(
    path: &Path,
    meta: &parquet::file::metadata::ParquetMetaData,
    size: u64,
) -> Result<()> {
    let mut f = File::open(path).with_context(|| format!("{}: cannot read", path.display()))?;
    for (g, group) in meta.row_groups().iter().enumerate() {
        for col in group.columns() {
            let start = col
                .dictionary_page_offset()
                .unwrap_or(col.data_page_offset());
            let len = col.compressed_size();
            let end = u64::try_from(start)
                .ok()
                .zip(u64::try_from(len).ok())
                .and_then(|(a, b)| a.checked_add(b));
            if end.is_none_or(|e| e > size) {
                bail!(
                    "{}: damaged: row group {g}, column {}: {len} bytes from byte {start}, past the file's end ({size} bytes)",
                    path.display(),
                    col.column_path()
                );
            }
            crate::pagescan::check_chunk(&mut f, start as u64, len as u64).map_err(|why| {
                anyhow!(
                    "{}: damaged: row group {g}, column {}: {why}",
                    path.display(),
                    col.column_path()
                )
            })?;
        }
    }
    Ok(())
}

/// The metadata of one Arrow IPC message, at most this long: a schema or a
/// batch's description takes a few KiB even for hundreds of columns.
const MAX_IPC_METADATA: u64 = 16 << 20;

/// Every length an Arrow IPC file or stream declares fits in it (`size`
/// bytes; `file`: the file format, a footer at the end): each message's
/// metadata and body in turn, and for the file format the footer and the
/// blocks it lists. The `arrow` crate reserves each before reading it, so a
/// damaged length would ask for any amount of memory. Reads only the
/// framing and the metadata (the bodies are passed over); what does not
/// parse is left for the `arrow` crate to report.
fn ipc_lengths(path: &Path, f: &mut File, size: u64, file: bool) -> Result<()> {
    let damaged = |what: String| anyhow!("{}: damaged: {what}", path.display());
    let at = || format!("{}: cannot read", path.display());
    let mut word = [0u8; 4];
    let mut read_word = |f: &mut File, pos: u64| -> Result<Option<i32>> {
        if pos + 4 > size {
            return Ok(None);
        }
        f.seek(SeekFrom::Start(pos)).with_context(at)?;
        f.read_exact(&mut word).with_context(at)?;
        Ok(Some(i32::from_le_bytes(word)))
    };
    let mut meta = Vec::new();
    // The messages, from the start (after the file format's magic and its
    // padding), up to the end-of-stream marker.
    let mut pos = if file { 8 } else { 0 };
    loop {
        let Some(mut len) = read_word(f, pos)? else {
            break;
        };
        pos += 4;
        if len == -1 {
            // The continuation marker: the length follows.
            let Some(l) = read_word(f, pos)? else { break };
            len = l;
            pos += 4;
        }
        if len == 0 {
            break;
        }
        let len = u64::try_from(len).map_err(|_| {
            damaged(format!(
                "a message's metadata length {len} at byte {}",
                pos - 4
            ))
        })?;
        if len > MAX_IPC_METADATA || pos + len > size {
            return Err(damaged(format!(
                "a message's metadata of {len} bytes at byte {pos}, past the file's end ({size} bytes) or over {MAX_IPC_METADATA}"
            )));
        }
        meta.resize(len as usize, 0);
        f.seek(SeekFrom::Start(pos)).with_context(at)?;
        f.read_exact(&mut meta).with_context(at)?;
        pos += len;
        let Ok(message) = arrow_ipc::root_as_message(&meta) else {
            break;
        };
        let body = message.bodyLength();
        match u64::try_from(body).ok().and_then(|b| b.checked_add(pos)) {
            Some(end) if end <= size => pos = end,
            _ => {
                return Err(damaged(format!(
                    "a message's body of {body} bytes at byte {pos}, past the file's end ({size} bytes)"
                )))
            }
        }
    }
    if !file || size < 10 {
        return Ok(());
    }
    let Some(footer_len) = read_word(f, size - 10)? else {
        return Ok(());
    };
    let footer_len = u64::try_from(footer_len).unwrap_or(u64::MAX);
    if footer_len > MAX_IPC_METADATA || footer_len > size - 10 {
        return Err(damaged(format!(
            "a footer of {footer_len} bytes, more than the file holds ({size} bytes) or over {MAX_IPC_METADATA}"
        )));
    }
    meta.resize(footer_len as usize, 0);
    f.seek(SeekFrom::Start(size - 10 - footer_len))
        .with_context(at)?;
    f.read_exact(&mut meta).with_context(at)?;
    let Ok(footer) = arrow_ipc::root_as_footer(&meta) else {
        return Ok(());
    };
    let blocks = footer.recordBatches().into_iter().flatten();
    for b in blocks.chain(footer.dictionaries().into_iter().flatten()) {
        let end = u64::try_from(b.offset())
            .ok()
            .zip(u64::try_from(b.metaDataLength()).ok())
            .zip(u64::try_from(b.bodyLength()).ok())
            .and_then(|((o, m), l)| o.checked_add(m)?.checked_add(l));
        if end.is_none_or(|e| e > size) {
            return Err(damaged(format!(
                "a block of {} + {} bytes at byte {}, past the file's end ({size} bytes)",
                b.metaDataLength(),
                b.bodyLength(),
                b.offset()
            )));
        }
    }
    Ok(())
}

thread_local! {
    /// Whether this thread runs code of the decoding crates ([`guarded`]).
    static DECODING: Cell<bool> = const { Cell::new(false) };
}

/// Whether the calling thread is inside [`guarded`]: a panic there is turned
/// into an error, so `tenmin`'s panic hook need not print it.
pub fn in_guarded_decoding() -> bool {
    DECODING.with(Cell::get)
}

/// Runs `f`, code of the `parquet` and `arrow` crates on a file's bytes,
/// turning a panic in it into an error naming the file: those crates can
/// panic on a damaged file (a Parquet footer whose metadata holds a thrift
/// type their reader does not implement, found by the fuzz target
/// `columnar`), and `tenmin` must not. The error keeps the panic's message.
fn guarded<T>(path: &Path, f: impl FnOnce() -> Result<T>) -> Result<T> {
    caught(path, f).unwrap_or_else(|why| Err(anyhow!("{}: cannot read: {why}", path.display())))
}

/// `f` run with its panic caught ([`guarded`]): `Err` with what to tell of
/// it, the format's reader and the panic's message.
fn caught<T>(path: &Path, f: impl FnOnce() -> T) -> Result<T, String> {
    let was = DECODING.with(|d| d.replace(true));
    let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(f));
    DECODING.with(|d| d.set(was));
    r.map_err(|payload| {
        let msg = payload
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| payload.downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "no message".into());
        format!(
            "the {} reader failed on this file ({msg}): it is damaged, or not a file tenmin can read",
            Format::of_path(path).name()
        )
    })
}

/// A reader of record batches whose every batch is decoded [`guarded`]; after
/// a panic it gives that error and then no more batches.
struct Guarded {
    inner: Option<Box<dyn RecordBatchReader + Send>>,
    path: PathBuf,
}

impl Iterator for Guarded {
    type Item = Result<RecordBatch, arrow_schema::ArrowError>;

    fn next(&mut self) -> Option<Self::Item> {
        let inner = self.inner.as_mut()?;
        match caught(&self.path, || inner.next()) {
            Ok(batch) => batch,
            Err(why) => {
                self.inner = None;
                Some(Err(arrow_schema::ArrowError::ExternalError(why.into())))
            }
        }
    }
}

impl RecordBatchReader for Guarded {
    fn schema(&self) -> SchemaRef {
        match &self.inner {
            Some(r) => r.schema(),
            None => Arc::new(Schema::empty()),
        }
    }
}

/// Writes the rows of a records Parquet/Arrow file as records CSV rows (no
/// header) to `out`; returns how many. The file must have the records'
/// columns and types ([`records_schema`]).
pub fn records_to_csv(path: &Path, out: &mut dyn Write) -> Result<u64> {
    let reader = open_batches(path)?;
    let want = records_schema();
    let got = reader.schema();
    let names = |s: &Schema| -> Vec<String> {
        s.fields()
            .iter()
            .map(|f| format!("{}: {}", f.name(), f.data_type()))
            .collect()
    };
    if names(&got) != names(&want) {
        bail!(
            "{}: not a records file: columns {} (expected {})",
            path.display(),
            names(&got).join(", "),
            names(&want).join(", ")
        );
    }
    let mut rows = 0u64;
    let mut line = String::with_capacity(256);
    for batch in reader {
        let batch = batch.map_err(|e| anyhow!("{}: {e}", path.display()))?;
        for i in 0..batch.num_rows() {
            line.clear();
            for (k, (col, spec)) in batch.columns().iter().zip(&records::COLUMNS).enumerate() {
                use std::fmt::Write as _;
                if k > 0 {
                    line.push(',');
                }
                if col.is_null(i) {
                    continue;
                }
                match spec.ty {
                    Type::Time => {
                        let ms = col.as_primitive::<TimestampMillisecondType>().value(i);
                        write!(line, "{}", Rfc3339(Timestamp::from_millis(ms)))?;
                    }
                    Type::Text | Type::Flags => line.push_str(col.as_string::<i32>().value(i)),
                    Type::Count => write!(line, "{}", col.as_primitive::<Int64Type>().value(i))?,
                    Type::Number => write!(line, "{}", col.as_primitive::<Float64Type>().value(i))?,
                }
            }
            line.push('\n');
            out.write_all(line.as_bytes())?;
            rows += 1;
        }
    }
    Ok(rows)
}

/// A `Write` that only hashes.
struct HashOnly(Sha256);

impl Write for HashOnly {
    fn write(&mut self, b: &[u8]) -> io::Result<usize> {
        self.0.update(b);
        Ok(b.len())
    }
    fn flush(&mut self) -> io::Result<()> {
        Ok(())
    }
}

/// Reads back the records file `path` just written: an error unless its
/// rows render as exactly the CSV rows written (`written`).
pub fn check_records(path: &Path, written: &Written) -> Result<()> {
    let mut h = HashOnly(Sha256::new());
    let rows = records_to_csv(path, &mut h)?;
    let sha: [u8; 32] = h.0.finalize().into();
    if rows != written.rows || sha != written.sha256 {
        bail!(
            "{}: reads back other than written ({rows} rows read, {} written)",
            path.display(),
            written.rows
        );
    }
    Ok(())
}

// ---------------------------------------------------------------- samples

/// Reads samples files of either kind (all columnar or all text) in order
/// and pushes every good row into `engine` on the calling thread: text
/// through [`samples::feed`], columnar through [`feed`].
pub fn feed_any(
    files: &[PathBuf],
    cfg: &StationFile,
    opts: Options,
    engine: &mut dyn Engine,
) -> Result<InputStats> {
    if all_columnar(files)? {
        feed(files, cfg, opts, engine)
    } else {
        samples::feed(files, cfg, opts, engine)
    }
}

/// What a samples column holds.
#[derive(Clone, Copy)]
enum Src {
    Time,
    Channel(usize),
}

/// The columns of a samples file: the time column's index and each
/// channel's (station-file order), checked as the CSV header is.
fn plan(path: &Path, schema: &Schema, cfg: &StationFile) -> Result<(usize, Vec<usize>)> {
    if !cfg.table.own {
        bail!(
            "{}: {} declares a text layout ([{}]); Parquet and Arrow samples are read in tenmin's own columns (`time` and the channel ids): leave the layout out, or convert the files with `tenmin export -o FILE.parquet`",
            path.display(),
            cfg.path.display(),
            cfg.table.section
        );
    }
    columns(path, schema, cfg)
}

/// The time column's index and each channel's (station-file order) in
/// `schema`: a column `time` and one per channel id, nothing else, of
/// types that read (see the module docs); `path` names the data in messages.
pub fn columns(path: &Path, schema: &Schema, cfg: &StationFile) -> Result<(usize, Vec<usize>)> {
    let at = |msg: String| anyhow!("{}: {msg}", path.display());
    let mut time = None;
    let mut chans: Vec<Option<usize>> = vec![None; cfg.channels.len()];
    for (i, f) in schema.fields().iter().enumerate() {
        let name = f.name().as_str();
        let src = if name == "time" {
            Src::Time
        } else if let Some(c) = cfg.channels.iter().position(|c| c.id == name) {
            Src::Channel(c)
        } else {
            let ids: Vec<&str> = cfg.channels.iter().map(|c| c.id.as_str()).collect();
            bail!(at(format!(
                "column {} ({name:?}): not a channel of {} (expected \"time\" and {})",
                i + 1,
                cfg.path.display(),
                ids.join(", ")
            )));
        };
        let slot = match src {
            Src::Time => &mut time,
            Src::Channel(c) => &mut chans[c],
        };
        if slot.is_some() {
            bail!(at(format!("column {name:?} appears twice")));
        }
        *slot = Some(i);
        let ty = f.data_type();
        let ok = match src {
            Src::Time => {
                matches!(
                    ty,
                    DataType::Timestamp(..)
                        | DataType::Date64
                        | DataType::Utf8
                        | DataType::LargeUtf8
                        | DataType::Utf8View
                        | DataType::Float64
                ) || ty.is_integer()
            }
            Src::Channel(_) => ty.is_integer() || ty.is_floating() || *ty == DataType::Null,
        };
        if !ok {
            bail!(at(format!(
                "column {name:?}: type {ty} is not {}",
                match src {
                    Src::Time => "a time (a timestamp, date64, epoch seconds or RFC 3339 text)",
                    Src::Channel(_) => "a number (a float or integer type)",
                }
            )));
        }
    }
    let Some(time) = time else {
        bail!(at(
            "no \"time\" column (expected `time` and the channel ids)".into()
        ));
    };
    let missing: Vec<&str> = cfg
        .channels
        .iter()
        .zip(&chans)
        .filter(|(_, s)| s.is_none())
        .map(|(c, _)| c.id.as_str())
        .collect();
    if !missing.is_empty() {
        bail!(at(format!(
            "no column for channel {} of {}",
            missing.join(", "),
            cfg.path.display()
        )));
    }
    Ok((time, chans.into_iter().flatten().collect()))
}

/// Milliseconds since 1970 of `n` in `unit`s, when whole milliseconds.
fn to_ms(n: i64, per_ms: i64, ms_per: i64) -> Result<i64, String> {
    if per_ms > 1 {
        if n % per_ms != 0 {
            return Err(format!(
                "{n} has a part finer than a millisecond (times are read to the millisecond)"
            ));
        }
        Ok(n / per_ms)
    } else {
        n.checked_mul(ms_per)
            .ok_or_else(|| format!("{n} is out of range"))
    }
}

/// Row `i` of a time column as a sample time.
fn time_at(col: &dyn Array, i: usize) -> Result<Timestamp, String> {
    if col.is_null(i) {
        return Err("empty time".into());
    }
    let ms = match col.data_type() {
        DataType::Timestamp(TimeUnit::Second, _) => {
            to_ms(col.as_primitive::<TimestampSecondType>().value(i), 1, 1000)
        }
        DataType::Timestamp(TimeUnit::Millisecond, _) => {
            Ok(col.as_primitive::<TimestampMillisecondType>().value(i))
        }
        DataType::Timestamp(TimeUnit::Microsecond, _) => to_ms(
            col.as_primitive::<TimestampMicrosecondType>().value(i),
            1000,
            1,
        ),
        DataType::Timestamp(TimeUnit::Nanosecond, _) => to_ms(
            col.as_primitive::<TimestampNanosecondType>().value(i),
            1_000_000,
            1,
        ),
        DataType::Date64 => Ok(col.as_primitive::<Date64Type>().value(i)),
        DataType::Float64 => {
            let s = col.as_primitive::<Float64Type>().value(i);
            let ms = (s * 1000.0).round();
            if ms.is_finite() && ms.abs() < 9.0e15 {
                Ok(ms as i64)
            } else {
                Err(format!("{s} is not epoch seconds"))
            }
        }
        DataType::Utf8 | DataType::LargeUtf8 | DataType::Utf8View => {
            let s = match (col.as_string_opt::<i32>(), col.as_string_opt::<i64>()) {
                (Some(a), _) => a.value(i),
                (_, Some(a)) => a.value(i),
                _ => col.as_string_view().value(i),
            };
            return parse_time(s.as_bytes()).map_err(|e| format!("{e}, found {s:?}"));
        }
        _ => int_at(col, i)
            .ok_or_else(|| "not a time".to_string())
            .and_then(|n| {
                i64::try_from(n)
                    .map_err(|_| format!("{n} is out of range"))
                    .and_then(|n| to_ms(n, 1, 1000))
            }),
    }?;
    in_span(ms)
}

/// The sample time `ms` milliseconds since 1970, if within the CSV's span of
/// sample times (timefmt::parse_time).
#[inline]
fn in_span(ms: i64) -> Result<Timestamp, String> {
    let t = Timestamp::from_millis(ms);
    if t >= SAMPLES_FROM && t < SAMPLES_END {
        Ok(t)
    } else {
        Err(format!(
            "{}, found {ms} ms since 1970",
            TimeError::Unsupported
        ))
    }
}

/// Row `i` of an integer column.
fn int_at(col: &dyn Array, i: usize) -> Option<i128> {
    Some(match col.data_type() {
        DataType::Int8 => col.as_primitive::<Int8Type>().value(i).into(),
        DataType::Int16 => col.as_primitive::<Int16Type>().value(i).into(),
        DataType::Int32 => col.as_primitive::<Int32Type>().value(i).into(),
        DataType::Int64 => col.as_primitive::<Int64Type>().value(i).into(),
        DataType::UInt8 => col.as_primitive::<UInt8Type>().value(i).into(),
        DataType::UInt16 => col.as_primitive::<UInt16Type>().value(i).into(),
        DataType::UInt32 => col.as_primitive::<UInt32Type>().value(i).into(),
        DataType::UInt64 => col.as_primitive::<UInt64Type>().value(i).into(),
        _ => return None,
    })
}

/// Row `i` of a channel column as the reading the CSV's field would give.
fn reading_at(col: &dyn Array, i: usize, decode: Decode) -> Result<Reading, String> {
    if col.is_null(i) {
        return Ok(Reading::Missing);
    }
    let v = match col.data_type() {
        DataType::Float64 => col.as_primitive::<Float64Type>().value(i),
        DataType::Float32 => f64::from(col.as_primitive::<Float32Type>().value(i)),
        DataType::Float16 => return Err("float16 is not read; store float32 or float64".into()),
        _ => {
            let n = int_at(col, i).ok_or_else(|| "not a number".to_string())?;
            return from_int(n, decode);
        }
    };
    from_f64(v, decode)
}

/// A time written as text, read through `cache` as [`time_at`] reads it.
#[inline]
fn text_time(cache: &mut samples::TimeCache, s: &str) -> Result<Timestamp, String> {
    cache
        .parse(s.as_bytes())
        .map_err(|e| format!("{e}, found {s:?}"))
}

/// The reading an integer `n` of an integer column gives.
#[inline]
fn from_int(n: i128, decode: Decode) -> Result<Reading, String> {
    match decode {
        Decode::Counts => i32::try_from(n)
            .map(Reading::Counts)
            .map_err(|_| format!("{n} is out of the range of raw counts (32-bit)")),
        Decode::Value => Ok(Reading::Value(n as f64)),
    }
}

/// [`from_int`] of an `int64` cell.
#[inline]
fn from_i64(n: i64, decode: Decode) -> Result<Reading, String> {
    match decode {
        Decode::Counts => match i32::try_from(n) {
            Ok(k) => Ok(Reading::Counts(k)),
            Err(_) => from_int(n.into(), decode),
        },
        Decode::Value => Ok(Reading::Value(n as f64)),
    }
}

/// The reading a number `v` of a float column gives.
#[inline]
fn from_f64(v: f64, decode: Decode) -> Result<Reading, String> {
    match decode {
        Decode::Value => Ok(Reading::Value(v)),
        Decode::Counts if v.is_nan() => Ok(Reading::Missing),
        Decode::Counts => {
            if v.fract() == 0.0 && v >= f64::from(i32::MIN) && v <= f64::from(i32::MAX) {
                Ok(Reading::Counts(v as i32))
            } else {
                Err(format!("{v} is not whole raw counts"))
            }
        }
    }
}

/// A bad cell: its column, the kind of row it makes, the message.
type BadCell = (String, samples::BadKind, String);

/// Reads every row of `batches` (columns as [`columns`] found them) in
/// order and hands each time and its readings (station-file order) to `f`;
/// a cell that does not read is an error naming `name`, row and column.
pub fn for_each_row(
    name: &Path,
    batches: &[RecordBatch],
    (time, chans): (usize, &[usize]),
    cfg: &StationFile,
    mut f: impl FnMut(Timestamp, &[Reading]) -> Result<()>,
) -> Result<()> {
    let mut readings = vec![Reading::Missing; cfg.channels.len()];
    let mut cache = samples::TimeCache::default();
    let mut row = 0u64;
    for batch in batches {
        let tcol = Cells::of(batch.column(time).as_ref());
        let ccols = cells(batch, chans);
        for i in 0..batch.num_rows() {
            row += 1;
            let t = row_at(cfg, (tcol, &mut cache), &ccols, i, &mut readings)
                .map_err(|(c, _, m)| anyhow!("{}: row {row} (column {c}): {m}", name.display()))?;
            f(t, &readings)?;
        }
    }
    Ok(())
}

/// A column of a batch ready to read row by row: the common types
/// (float64 values, millisecond times) resolved once per batch.
#[derive(Clone, Copy)]
enum Cells<'a> {
    F64(&'a arrow_array::Float64Array),
    I32(&'a arrow_array::Int32Array),
    I64(&'a arrow_array::Int64Array),
    Ms(&'a arrow_array::TimestampMillisecondArray),
    Us(&'a arrow_array::TimestampMicrosecondArray),
    Ns(&'a arrow_array::TimestampNanosecondArray),
    Text(&'a arrow_array::StringArray),
    LargeText(&'a arrow_array::LargeStringArray),
    TextView(&'a arrow_array::StringViewArray),
    Other(&'a dyn Array),
}

impl<'a> Cells<'a> {
    fn of(col: &'a dyn Array) -> Self {
        match col.data_type() {
            DataType::Float64 => Cells::F64(col.as_primitive()),
            DataType::Int32 => Cells::I32(col.as_primitive()),
            DataType::Int64 => Cells::I64(col.as_primitive()),
            DataType::Timestamp(TimeUnit::Millisecond, _) => Cells::Ms(col.as_primitive()),
            DataType::Timestamp(TimeUnit::Microsecond, _) => Cells::Us(col.as_primitive()),
            DataType::Timestamp(TimeUnit::Nanosecond, _) => Cells::Ns(col.as_primitive()),
            DataType::Utf8 => Cells::Text(col.as_string()),
            DataType::LargeUtf8 => Cells::LargeText(col.as_string()),
            DataType::Utf8View => Cells::TextView(col.as_string_view()),
            _ => Cells::Other(col),
        }
    }

    fn array(self) -> &'a dyn Array {
        match self {
            Cells::F64(a) => a,
            Cells::I32(a) => a,
            Cells::I64(a) => a,
            Cells::Ms(a) => a,
            Cells::Us(a) => a,
            Cells::Ns(a) => a,
            Cells::Text(a) => a,
            Cells::LargeText(a) => a,
            Cells::TextView(a) => a,
            Cells::Other(a) => a,
        }
    }
}

/// The columns `chans` of `batch`, ready to read.
fn cells<'a>(batch: &'a RecordBatch, chans: &[usize]) -> Vec<Cells<'a>> {
    chans
        .iter()
        .map(|&k| Cells::of(batch.column(k).as_ref()))
        .collect()
}

/// Reads row `i` into `readings` (station-file order); returns its time.
/// Times as text go through `cache` (the last RFC 3339 hour, as the text
/// reader's [`samples::TimeCache`]: the same times as [`time_at`]).
#[inline]
fn row_at(
    cfg: &StationFile,
    (tcol, cache): (Cells<'_>, &mut samples::TimeCache),
    ccols: &[Cells<'_>],
    i: usize,
    readings: &mut [Reading],
) -> Result<Timestamp, BadCell> {
    let t = match tcol {
        Cells::Ms(a) if !a.is_null(i) => {
            let t = Timestamp::from_millis(a.value(i));
            if t >= SAMPLES_FROM && t < SAMPLES_END {
                Ok(t)
            } else {
                time_at(a, i)
            }
        }
        // pandas' and pyarrow's usual units.
        Cells::Us(a) if !a.is_null(i) => to_ms(a.value(i), 1000, 1).and_then(in_span),
        Cells::Ns(a) if !a.is_null(i) => to_ms(a.value(i), 1_000_000, 1).and_then(in_span),
        Cells::Text(a) if !a.is_null(i) => text_time(cache, a.value(i)),
        Cells::LargeText(a) if !a.is_null(i) => text_time(cache, a.value(i)),
        Cells::TextView(a) if !a.is_null(i) => text_time(cache, a.value(i)),
        c => time_at(c.array(), i),
    }
    .map_err(|m| ("time".to_string(), samples::BadKind::Time, m))?;
    // Each way stores its reading itself: a reading chosen among the ways
    // and then stored was put together on the stack and read back whole, a
    // stall that took most of this loop's time (host-cli/PERF.md, "Parquet
    // cells stored where they are read"). The usual columns inline: the
    // same readings as `reading_at`.
    for ((col, spec), out) in ccols.iter().zip(&cfg.channels).zip(readings.iter_mut()) {
        let bad = |m| (spec.id.clone(), samples::BadKind::Value, m);
        match (*col, spec.decode) {
            (Cells::F64(a), _) if a.is_null(i) => *out = Reading::Missing,
            (Cells::F64(a), Decode::Value) => *out = Reading::Value(a.value(i)),
            (Cells::F64(a), d) => *out = from_f64(a.value(i), d).map_err(bad)?,
            (Cells::I32(a), _) if a.is_null(i) => *out = Reading::Missing,
            (Cells::I32(a), Decode::Counts) => *out = Reading::Counts(a.value(i)),
            (Cells::I32(a), Decode::Value) => *out = Reading::Value(f64::from(a.value(i))),
            (Cells::I64(a), _) if a.is_null(i) => *out = Reading::Missing,
            (Cells::I64(a), Decode::Value) => *out = Reading::Value(a.value(i) as f64),
            (Cells::I64(a), d) => *out = from_i64(a.value(i), d).map_err(bad)?,
            (c, d) => *out = reading_at(c.array(), i, d).map_err(bad)?,
        }
    }
    Ok(t)
}

struct Columnar<'a> {
    cfg: &'a StationFile,
    opts: Options,
    engine: &'a mut dyn Engine,
    stats: InputStats,
    readings: Vec<Reading>,
    last: Option<Timestamp>,
    block: Block,
    /// Rows must come in strictly increasing time ([`feed_batches`]).
    strict_order: bool,
    /// The time of the last row read.
    prev_row: Option<Timestamp>,
}

/// Reads columnar samples `files` in order and pushes every good row into
/// `engine`, on the calling thread, as [`samples::feed`] does with text.
pub fn feed(
    files: &[PathBuf],
    cfg: &StationFile,
    opts: Options,
    engine: &mut dyn Engine,
) -> Result<InputStats> {
    let mut c = Columnar {
        cfg,
        opts,
        engine,
        stats: InputStats::default(),
        readings: vec![Reading::Missing; cfg.channels.len()],
        last: None,
        block: Block::new(cfg.channels.len()),
        strict_order: false,
        prev_row: None,
    };
    for path in files {
        c.file(path)?;
        c.stats.files += 1;
    }
    c.engine.close()?;
    Ok(c.stats)
}

/// Replays record batches in memory (a frame of the Python package) as
/// [`feed`] replays a file's, `name` naming them in messages. With
/// `strict_order`, a row whose time is not after the row before it is an
/// error (the file readers count duplicates and backward times instead).
pub fn feed_batches(
    name: &Path,
    batches: &[RecordBatch],
    cfg: &StationFile,
    opts: Options,
    engine: &mut dyn Engine,
    strict_order: bool,
) -> Result<InputStats> {
    let mut c = Columnar {
        cfg,
        opts,
        engine,
        stats: InputStats::default(),
        readings: vec![Reading::Missing; cfg.channels.len()],
        last: None,
        block: Block::new(cfg.channels.len()),
        strict_order,
        prev_row: None,
    };
    if let Some(b) = batches.first() {
        let plan = columns(name, &b.schema(), cfg)?;
        c.batches(name, plan, batches.iter().cloned().map(Ok))?;
    }
    c.stats.files = 1;
    c.engine.close()?;
    Ok(c.stats)
}

impl Columnar<'_> {
    /// Replays a file's batches, decoded (and decompressed) on a read-ahead
    /// thread while this one replays the batch before: the same batches in
    /// the same order, at most [`AHEAD_BATCHES`] waiting.
    fn file(&mut self, path: &Path) -> Result<()> {
        let reader = open_batches(path)?;
        let plan = plan(path, &reader.schema(), self.cfg)?;
        std::thread::scope(|s| {
            let (tx, rx) = std::sync::mpsc::sync_channel(AHEAD_BATCHES);
            std::thread::Builder::new()
                .name("tenmin-batches".into())
                .spawn_scoped(s, move || {
                    for batch in reader {
                        // Replaying stopped (an error): no more batches.
                        if tx.send(batch).is_err() {
                            return;
                        }
                    }
                })
                .with_context(|| format!("{}: cannot start the reading thread", path.display()))?;
            self.batches(path, plan, rx.into_iter())
        })
    }

    fn batches(
        &mut self,
        path: &Path,
        (time, chans): (usize, Vec<usize>),
        batches: impl Iterator<Item = Result<RecordBatch, arrow_schema::ArrowError>>,
    ) -> Result<()> {
        let mut row = 0u64;
        let mut cache = samples::TimeCache::default();
        for batch in batches {
            let batch = batch.map_err(|e| anyhow!("{}: after row {row}: {e}", path.display()))?;
            let tcol = Cells::of(batch.column(time).as_ref());
            let ccols = cells(&batch, &chans);
            for i in 0..batch.num_rows() {
                row += 1;
                self.stats.rows += 1;
                match row_at(self.cfg, (tcol, &mut cache), &ccols, i, &mut self.readings) {
                    Ok(t) => {
                        if self.strict_order {
                            if self.prev_row.is_some_and(|p| t <= p) {
                                bail!(
                                    "{}: row {row}: time {} is not after the row before it: samples given as a frame must be in strictly increasing time order (the samples-file readers count duplicates and backward times instead)",
                                    path.display(),
                                    Rfc3339(t)
                                );
                            }
                            self.prev_row = Some(t);
                        }
                        self.cfg.exclusions.apply(t, &mut self.readings);
                        self.block.add(t, row, &self.readings);
                        if self.block.is_full() {
                            self.flush(path)?;
                        }
                    }
                    Err((column, kind, msg)) => {
                        self.flush(path)?;
                        self.bad(path, row, column, kind, msg)?;
                    }
                }
            }
        }
        self.flush(path)
    }

    /// A bad row: an error without `--skip-bad-rows`, else counted.
    fn bad(
        &mut self,
        path: &Path,
        row: u64,
        column: String,
        kind: samples::BadKind,
        msg: String,
    ) -> Result<()> {
        let text = format!("{}: row {row} (column {column}): {msg}", path.display());
        if !self.opts.skip_bad_rows {
            bail!(text);
        }
        match kind {
            samples::BadKind::Time => self.stats.bad.time += 1,
            _ => self.stats.bad.value += 1,
        }
        if self.stats.examples.len() < samples::EXAMPLES {
            self.stats.examples.push(text);
        }
        Ok(())
    }

    /// Pushes the rows of the block, as the text reader does
    /// ([`Block::push_into`]).
    fn flush(&mut self, path: &Path) -> Result<()> {
        self.block.push_into(
            &mut *self.engine,
            &mut self.last,
            &mut self.readings,
            &self.opts,
            path,
        )
    }
}

/// Adds a sample to a digest of samples (time, then each reading's kind and
/// bits), as written and as read back.
fn hash_sample(h: &mut Sha256, t: Timestamp, readings: &[Reading]) {
    h.update(t.millis().to_le_bytes());
    for r in readings {
        let (tag, bits) = match *r {
            Reading::Value(v) => (1u8, v.to_bits()),
            Reading::Counts(k) => (2, u64::from(k as u32)),
            Reading::Flagged => (3, 0),
            Reading::Excluded => (4, 0),
            _ => (0, 0),
        };
        h.update([tag]);
        h.update(bits.to_le_bytes());
    }
}

/// The columnar samples' schema of `cfg`: `time` and the channels.
pub fn samples_schema(cfg: &StationFile) -> SchemaRef {
    let mut fields = vec![Field::new(
        "time",
        DataType::Timestamp(TimeUnit::Millisecond, Some("UTC".into())),
        false,
    )];
    fields.extend(cfg.channels.iter().map(|c| {
        let ty = match c.decode {
            Decode::Value => DataType::Float64,
            Decode::Counts => DataType::Int32,
        };
        Field::new(c.id.as_str(), ty, true)
    }));
    Arc::new(Schema::new(fields))
}

enum ValueBuilder {
    Value(Float64Builder),
    Counts(Int32Builder),
}

/// An engine that writes each sample as a columnar row and passes it on to
/// `core` (the export's station, for its counts).
pub struct SamplesOut<'a, 'w> {
    core: Box<dyn Engine + 'a>,
    schema: SchemaRef,
    time: TimestampMillisecondBuilder,
    cols: Vec<ValueBuilder>,
    pending: usize,
    target: Option<Target<'w>>,
    hash: Sha256,
    rows: u64,
}

impl<'a, 'w> SamplesOut<'a, 'w> {
    /// Columnar samples of `cfg` in `format` to `out`, each sample then
    /// pushed into `core`.
    pub fn new(
        core: Box<dyn Engine + 'a>,
        cfg: &StationFile,
        out: &'w mut dyn Write,
        format: Format,
    ) -> Result<Self> {
        let schema = samples_schema(cfg);
        let target = Target::new(out, format, &schema)?;
        Ok(SamplesOut {
            core,
            schema,
            time: TimestampMillisecondBuilder::new().with_timezone("UTC"),
            cols: cfg
                .channels
                .iter()
                .map(|c| match c.decode {
                    Decode::Value => ValueBuilder::Value(Float64Builder::new()),
                    Decode::Counts => ValueBuilder::Counts(Int32Builder::new()),
                })
                .collect(),
            pending: 0,
            target: Some(target),
            hash: Sha256::new(),
            rows: 0,
        })
    }

    fn write_batch(&mut self) -> Result<()> {
        if self.pending == 0 {
            return Ok(());
        }
        let mut arrays: Vec<ArrayRef> = vec![Arc::new(self.time.finish())];
        for c in &mut self.cols {
            arrays.push(match c {
                ValueBuilder::Value(b) => Arc::new(b.finish()),
                ValueBuilder::Counts(b) => Arc::new(b.finish()),
            });
        }
        self.pending = 0;
        let batch = RecordBatch::try_new(self.schema.clone(), arrays)?;
        match &mut self.target {
            Some(t) => t.write(&batch),
            None => bail!("samples written after the end"),
        }
    }

    /// Writes the last rows and the footer: the rows written and their digest.
    pub fn finish(&mut self) -> Result<Written> {
        self.write_batch()?;
        if let Some(t) = self.target.take() {
            t.close()?;
        }
        Ok(Written {
            rows: self.rows,
            sha256: self.hash.clone().finalize().into(),
        })
    }
}

impl Engine for SamplesOut<'_, '_> {
    fn push(&mut self, t: Timestamp, readings: &[Reading]) -> Result<Pushed> {
        self.time.append_value(t.millis());
        for (c, r) in self.cols.iter_mut().zip(readings) {
            match (c, *r) {
                (ValueBuilder::Value(b), Reading::Value(v)) => b.append_value(v),
                (ValueBuilder::Counts(b), Reading::Counts(k)) => b.append_value(k),
                (ValueBuilder::Value(b), Reading::Missing) => b.append_null(),
                (ValueBuilder::Counts(b), Reading::Missing) => b.append_null(),
                (_, r) => bail!(
                    "at {}: a reading {r:?} has no place in Parquet/Arrow samples (a number or null)",
                    Rfc3339(t)
                ),
            }
        }
        hash_sample(&mut self.hash, t, readings);
        self.rows += 1;
        self.pending += 1;
        if self.pending >= BATCH_ROWS {
            self.write_batch()?;
        }
        self.core.push(t, readings)
    }

    fn close(&mut self) -> Result<()> {
        self.core.close()
    }

    fn totals(&self) -> qc_core::PushTotals {
        self.core.totals()
    }

    fn recovery(&self) -> Vec<qc_core::Totals> {
        self.core.recovery()
    }
}

/// Reads back columnar samples `path` just written for `cfg`: an error
/// unless every row reads as written (`written`).
pub fn check_samples(path: &Path, cfg: &StationFile, written: &Written) -> Result<()> {
    let reader = open_batches(path)?;
    let (time, chans) = plan(path, &reader.schema(), cfg)?;
    let mut h = Sha256::new();
    let mut rows = 0u64;
    let mut readings = vec![Reading::Missing; cfg.channels.len()];
    let mut cache = samples::TimeCache::default();
    for batch in reader {
        let batch = batch.map_err(|e| anyhow!("{}: {e}", path.display()))?;
        let ccols = cells(&batch, &chans);
        let tcol = Cells::of(batch.column(time).as_ref());
        for i in 0..batch.num_rows() {
            rows += 1;
            let t = row_at(cfg, (tcol, &mut cache), &ccols, i, &mut readings)
                .map_err(|(c, _, m)| anyhow!("{}: row {rows} (column {c}): {m}", path.display()))?;
            hash_sample(&mut h, t, &readings);
        }
    }
    let sha: [u8; 32] = h.finalize().into();
    if rows != written.rows || sha != written.sha256 {
        bail!(
            "{}: reads back other than written ({rows} rows read, {} written)",
            path.display(),
            written.rows
        );
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{config, demo, records, replay};

    /// The demo's samples of one day (an invented scenario), its station and
    /// the records CSV of a one-thread replay.
    fn demo_day(dir: &Path) -> (StationFile, Vec<PathBuf>, Vec<u8>) {
        demo::run(&dir.join("d"), 1, 7).unwrap();
        let cfg = config::load(&dir.join("d/station.toml")).unwrap();
        let mut files: Vec<PathBuf> = std::fs::read_dir(dir.join("d"))
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.to_string_lossy().contains("samples-"))
            .collect();
        files.sort();
        let csv = replay_csv(&cfg, &files, 1);
        (cfg, files, csv)
    }

    fn ids(cfg: &StationFile) -> Vec<String> {
        cfg.channels.iter().map(|c| c.id.clone()).collect()
    }

    fn replay_csv(cfg: &StationFile, files: &[PathBuf], jobs: usize) -> Vec<u8> {
        let mut w = records::Writer::new(Vec::new(), ids(cfg))
            .unwrap()
            .with_sensors(cfg.sensors.clone());
        let opts = Options {
            jobs,
            ..Options::default()
        };
        replay::replay(cfg, files, opts, &mut w).unwrap();
        w.finish().unwrap()
    }

    fn write_records(cfg: &StationFile, files: &[PathBuf], jobs: usize, out: &Path) {
        let format = Format::of_path(out);
        let written = crate::output::write_to(Some(out), "records", |w| {
            let mut r = RecordsOut::new(w, format, ids(cfg), cfg.sensors.clone())?;
            let opts = Options {
                jobs,
                ..Options::default()
            };
            replay::replay(cfg, files, opts, &mut r)?;
            r.finish()
        })
        .unwrap();
        check_records(out, &written).unwrap();
    }

    #[test]
    fn records_hold_the_csv_values_and_samples_replay_alike() {
        let dir = tempfile::tempdir().unwrap();
        let (cfg, files, csv) = demo_day(dir.path());
        let text = std::str::from_utf8(&csv).unwrap();
        let body: Vec<&str> = text.lines().skip(1).collect();
        for (name, jobs) in [
            ("r.parquet", 1),
            ("r2.parquet", 2),
            ("r.arrow", 1),
            ("r2.arrow", 2),
        ] {
            let out = dir.path().join(name);
            write_records(&cfg, &files, jobs, &out);
            // Back as CSV rows: the CSV's rows, byte for byte.
            let mut back = Vec::new();
            let n = records_to_csv(&out, &mut back).unwrap();
            assert_eq!(n as usize, body.len(), "{name}");
            assert_eq!(
                std::str::from_utf8(&back)
                    .unwrap()
                    .lines()
                    .collect::<Vec<_>>(),
                body,
                "{name}"
            );
        }
        // The Parquet file read with the parquet crate's own reader: every
        // statistic holds the f64 the CSV text parses to (std's `str::parse`,
        // correctly rounded), every count the CSV's integer, absent = null.
        let f = File::open(dir.path().join("r.parquet")).unwrap();
        let reader = parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder::try_new(f)
            .unwrap()
            .build()
            .unwrap();
        let mut row = 0;
        let mut numbers = 0;
        for batch in reader {
            let batch = batch.unwrap();
            for i in 0..batch.num_rows() {
                let fields: Vec<&str> = body[row].split(',').collect();
                for (k, spec) in records::COLUMNS.iter().enumerate() {
                    let col = batch.column(k);
                    match spec.ty {
                        Type::Number if fields[k].is_empty() => assert!(col.is_null(i)),
                        Type::Number => {
                            let v = col.as_primitive::<Float64Type>().value(i);
                            assert_eq!(v.to_bits(), fields[k].parse::<f64>().unwrap().to_bits());
                            numbers += 1;
                        }
                        Type::Count => assert_eq!(
                            col.as_primitive::<Int64Type>().value(i),
                            fields[k].parse::<i64>().unwrap()
                        ),
                        Type::Text | Type::Flags => {
                            assert_eq!(col.as_string::<i32>().value(i), fields[k])
                        }
                        Type::Time => assert_eq!(
                            col.as_primitive::<TimestampMillisecondType>().value(i),
                            parse_time_any(fields[k].as_bytes()).unwrap().millis()
                        ),
                    }
                }
                row += 1;
            }
        }
        assert_eq!(row, body.len());
        assert!(numbers > 1000, "{numbers}");

        // Samples exported as Parquet and Arrow replay to the same records,
        // on one thread and two (exported as `tenmin export` does: without
        // exclusions, which the replay applies).
        let mut plain = cfg.clone();
        plain.exclusions = Default::default();
        for ext in ["parquet", "arrow"] {
            let mut cols = Vec::new();
            for (k, f) in files.iter().enumerate() {
                let out = dir.path().join(format!("s{k}.{ext}"));
                let written = crate::output::write_to(Some(&out), "samples", |w| {
                    let mut discard = NoSink;
                    let core = crate::engine::new(&plain, &mut discard)?;
                    let mut s = SamplesOut::new(core, &plain, w, Format::of_path(&out))?;
                    samples::feed(std::slice::from_ref(f), &plain, Options::default(), &mut s)?;
                    s.finish()
                })
                .unwrap();
                check_samples(&out, &cfg, &written).unwrap();
                cols.push(out);
            }
            assert_eq!(replay_csv(&cfg, &cols, 1), csv, "{ext}");
            assert_eq!(replay_csv(&cfg, &cols, 2), csv, "{ext}");
        }
    }

    /// Samples as an analyst's tool writes them: the times as text (each
    /// of Arrow's three string types) or as micro- and nanosecond timestamps
    /// (pandas' unit, with and without a zone), the values as `float64`, the raw
    /// counts as `int64`, a missing reading as null; in Parquet and Arrow.
    /// They replay to the records of the samples CSV they came from.
    #[test]
    fn samples_with_text_times_and_int64_counts_replay_as_their_csv() {
        use arrow_array::builder::{LargeStringBuilder, StringViewBuilder};
        let dir = tempfile::tempdir().unwrap();
        let (cfg, files, _) = demo_day(dir.path());
        let from_csv = replay_csv(&cfg, &files[..1], 1);
        let text = std::fs::read_to_string(&files[0]).unwrap();
        let mut lines = text.lines();
        let header: Vec<&str> = lines.next().unwrap().split(',').collect();
        let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
        assert_eq!(header[0], "time");
        let mut counts_seen = 0;
        let ms = |r: &Vec<&str>| parse_time_any(r[0].as_bytes()).unwrap().millis();
        for kind in 0..5 {
            let time: ArrayRef = match kind {
                3 => Arc::new(arrow_array::TimestampMicrosecondArray::from_iter_values(
                    rows.iter().map(|r| ms(r) * 1000),
                )),
                4 => Arc::new(
                    arrow_array::TimestampNanosecondArray::from_iter_values(
                        rows.iter().map(|r| ms(r) * 1_000_000),
                    )
                    .with_timezone("UTC"),
                ),
                0 => Arc::new(arrow_array::StringArray::from_iter_values(
                    rows.iter().map(|r| r[0]),
                )),
                1 => {
                    let mut b = LargeStringBuilder::new();
                    rows.iter().for_each(|r| b.append_value(r[0]));
                    Arc::new(b.finish())
                }
                _ => {
                    let mut b = StringViewBuilder::new();
                    rows.iter().for_each(|r| b.append_value(r[0]));
                    Arc::new(b.finish())
                }
            };
            let mut fields = vec![Field::new("time", time.data_type().clone(), false)];
            let mut columns = vec![time];
            for (k, name) in header.iter().enumerate().skip(1) {
                let spec = cfg.channels.iter().find(|c| c.id == *name).unwrap();
                let cell = |r: &Vec<&str>| Some(r[k].to_string()).filter(|f| !f.is_empty());
                let col: ArrayRef = match spec.decode {
                    Decode::Counts => {
                        counts_seen += 1;
                        Arc::new(arrow_array::Int64Array::from_iter(
                            rows.iter()
                                .map(|r| cell(r).map(|f| f.parse::<i64>().unwrap())),
                        ))
                    }
                    Decode::Value => Arc::new(arrow_array::Float64Array::from_iter(
                        rows.iter()
                            .map(|r| cell(r).map(|f| f.parse::<f64>().unwrap())),
                    )),
                };
                fields.push(Field::new(*name, col.data_type().clone(), true));
                columns.push(col);
            }
            let batch = RecordBatch::try_new(Arc::new(Schema::new(fields)), columns).unwrap();
            let pq = dir.path().join(format!("t{kind}.parquet"));
            write_parquet(&pq, &batch);
            let ipc = dir.path().join(format!("t{kind}.arrow"));
            let mut w = arrow_ipc::writer::FileWriter::try_new(
                File::create(&ipc).unwrap(),
                &batch.schema(),
            )
            .unwrap();
            w.write(&batch).unwrap();
            w.finish().unwrap();
            for path in [pq, ipc] {
                assert_eq!(
                    replay_csv(&cfg, std::slice::from_ref(&path), 1),
                    from_csv,
                    "{path:?}"
                );
            }
        }
        assert!(counts_seen > 0, "the demo station has a raw-counts channel");
    }

    struct NoSink;
    impl Sink for NoSink {
        fn interval(&mut self, _: Timestamp, _: Timestamp, _: &[ChannelRecord]) -> Result<()> {
            Ok(())
        }
    }

    /// A two-channel station of invented settings.
    fn station(dir: &Path) -> StationFile {
        let p = dir.join("station.toml");
        std::fs::write(
            &p,
            "[logging]\nsample_rate_hz = 1\n\n[[channel]]\nid = \"ws\"\nkind = \"speed\"\nunit = \"m/s\"\nrange = [0, 75]\nresolution = 0.01\n\n[[channel]]\nid = \"c\"\nkind = \"scalar\"\nunit = \"V\"\nrange = [-100, 100]\nresolution = 0.01\n",
        )
        .unwrap();
        config::load(&p).unwrap()
    }

    fn write_parquet(path: &Path, batch: &RecordBatch) {
        let f = File::create(path).unwrap();
        let mut w = parquet::arrow::ArrowWriter::try_new(f, batch.schema(), None).unwrap();
        w.write(batch).unwrap();
        w.close().unwrap();
    }

    #[test]
    fn bad_cells_name_file_row_and_column_and_skip_counts_them() {
        let dir = tempfile::tempdir().unwrap();
        let cfg = station(dir.path());
        let time = arrow_array::StringArray::from(vec![
            Some("2025-01-20T00:00:00Z"),
            None,
            Some("2025-01-20T00:00:02Z"),
            Some("2025-01-20T00:00:03.0005Z"),
        ]);
        let ws = arrow_array::Float32Array::from(vec![Some(1.5), Some(2.0), None, Some(3.0)]);
        let c = arrow_array::Int64Array::from(vec![Some(1), Some(2), Some(3), Some(4)]);
        let batch = RecordBatch::try_from_iter([
            ("ws", Arc::new(ws) as ArrayRef),
            ("time", Arc::new(time) as ArrayRef),
            ("c", Arc::new(c) as ArrayRef),
        ])
        .unwrap();
        let p = dir.path().join("s.parquet");
        write_parquet(&p, &batch);
        let run = |opts: Options| {
            let mut sink = NoSink;
            let mut e = crate::engine::new(&cfg, &mut sink).unwrap();
            feed(std::slice::from_ref(&p), &cfg, opts, e.as_mut()).map(|st| (st, e.totals()))
        };
        let err = run(Options::default()).unwrap_err().to_string();
        assert_eq!(
            err,
            format!("{}: row 2 (column time): empty time", p.display())
        );
        let (st, totals) = run(Options {
            skip_bad_rows: true,
            ..Options::default()
        })
        .unwrap();
        assert_eq!((st.rows, st.bad.time, st.bad.value), (4, 2, 0));
        assert!(
            st.examples[1].contains("row 4 (column time)"),
            "{:?}",
            st.examples
        );
        assert_eq!(totals.accepted, 2);

        // A column of text for a channel, an unknown column: the file is refused.
        let batch = RecordBatch::try_from_iter([
            (
                "time",
                Arc::new(arrow_array::Int64Array::from(vec![0i64])) as ArrayRef,
            ),
            (
                "ws",
                Arc::new(arrow_array::StringArray::from(vec!["1"])) as ArrayRef,
            ),
            (
                "c",
                Arc::new(arrow_array::Int64Array::from(vec![0i64])) as ArrayRef,
            ),
        ])
        .unwrap();
        write_parquet(&p, &batch);
        let err = run(Options::default()).unwrap_err().to_string();
        assert!(
            err.contains("column \"ws\": type Utf8 is not a number"),
            "{err}"
        );
        let batch = RecordBatch::try_from_iter([
            (
                "time",
                Arc::new(arrow_array::Int64Array::from(vec![0i64])) as ArrayRef,
            ),
            (
                "ws",
                Arc::new(arrow_array::Float64Array::from(vec![1.0])) as ArrayRef,
            ),
            (
                "c",
                Arc::new(arrow_array::Float64Array::from(vec![0.0])) as ArrayRef,
            ),
            (
                "wd",
                Arc::new(arrow_array::Float64Array::from(vec![0.0])) as ArrayRef,
            ),
        ])
        .unwrap();
        write_parquet(&p, &batch);
        let err = run(Options::default()).unwrap_err().to_string();
        assert!(err.contains("column 4 (\"wd\"): not a channel"), "{err}");
    }

    /// The cells `row_at` reads inline (`float64`, `int32`, `int64`, with
    /// nulls, for a value channel and a raw-counts one) give what the generic
    /// `reading_at` gives for the same cell, or fail where it fails, naming
    /// the channel; on invented cells, among them counts out of `i32`'s range,
    /// fractions and `NaN` for raw counts.
    #[test]
    fn cells_read_inline_as_the_generic_reader_reads_them() {
        let toml = "[logging]\nsample_rate_hz = 1\n\
            [[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\n\
            [[channel]]\nid = \"d\"\nkind = \"direction\"\nslope = 0.1\n";
        let cfg = config::parse(Path::new("s.toml"), toml).unwrap();
        let decodes: Vec<Decode> = cfg.channels.iter().map(|c| c.decode).collect();
        assert_eq!(decodes, [Decode::Value, Decode::Counts]);
        let floats = [
            Some(1.25),
            None,
            Some(-0.0),
            Some(f64::NAN),
            Some(3.0),
            Some(2.5e9),
            Some(-7.0),
            Some(0.1),
        ];
        let ints = [
            Some(7i64),
            None,
            Some(-3),
            Some(i64::from(i32::MAX) + 1),
            Some(i64::from(i32::MIN)),
            Some(0),
            Some(123_456),
            None,
        ];
        let n = floats.len();
        let columns: [ArrayRef; 3] = [
            Arc::new(arrow_array::Float64Array::from(floats.to_vec())),
            Arc::new(arrow_array::Int32Array::from(
                ints.iter()
                    .map(|k| k.map(|k| i32::try_from(k).unwrap_or(-1)))
                    .collect::<Vec<_>>(),
            )),
            Arc::new(arrow_array::Int64Array::from(ints.to_vec())),
        ];
        let times = arrow_array::TimestampMillisecondArray::from_iter_values(
            (0..n as i64).map(|i| SAMPLES_FROM.millis() + i * 1000),
        );
        let mut cache = samples::TimeCache::default();
        let (mut agreed, mut refused) = (0, 0);
        for a in &columns {
            for b in &columns {
                let ccols = [Cells::of(a.as_ref()), Cells::of(b.as_ref())];
                for i in 0..n {
                    let mut got = [Reading::Flagged; 2];
                    let read = row_at(&cfg, (Cells::of(&times), &mut cache), &ccols, i, &mut got);
                    let want: Vec<Result<Reading, String>> = [a, b]
                        .iter()
                        .zip(&decodes)
                        .map(|(col, &d)| reading_at(col.as_ref(), i, d))
                        .collect();
                    let label = format!("{:?} {:?} row {i}", a.data_type(), b.data_type());
                    match want.iter().position(Result::is_err) {
                        Some(k) => {
                            let (column, _, msg) = read.unwrap_err();
                            assert_eq!(column, cfg.channels[k].id, "{label}");
                            assert_eq!(Err(msg), want[k], "{label}");
                            refused += 1;
                        }
                        None => {
                            assert!(read.is_ok(), "{label}");
                            for (g, w) in got.iter().zip(&want) {
                                let same = match (g, w) {
                                    (Reading::Value(x), Ok(Reading::Value(y))) => {
                                        x.to_bits() == y.to_bits()
                                    }
                                    (g, Ok(w)) => g == w,
                                    _ => false,
                                };
                                assert!(same, "{label}: {g:?} {w:?}");
                            }
                            agreed += 1;
                        }
                    }
                }
            }
        }
        assert!(agreed > 30 && refused > 10, "{agreed} {refused}");
    }

    #[test]
    fn formats_by_extension_and_no_mix() {
        assert_eq!(Format::of_path(Path::new("a/r.PARQUET")), Format::Parquet);
        assert_eq!(Format::of_path(Path::new("r.feather")), Format::Arrow);
        assert_eq!(Format::of_path(Path::new("r.csv.gz")), Format::Csv);
        assert_eq!(
            Format::choose(Some(Format::Csv), Some(Path::new("r.parquet"))),
            Format::Csv
        );
        assert!(all_columnar(&[PathBuf::from("a.csv"), PathBuf::from("b.parquet")]).is_err());
        assert!(!all_columnar(&[PathBuf::from("a.csv")]).unwrap());
    }
}
