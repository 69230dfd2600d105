//! `tenmin export`: samples files to a binary sample file (`qc_core::wire`)
//! that a logger under test replays, or to Parquet or Arrow samples
//! ([`crate::columnar`], by the output's extension).
//!
//! The rows are read by the replay's own samples readers
//! ([`crate::samples::feed`]; Parquet and Arrow by [`crate::columnar::feed`]):
//! the same columns, times, missing readings, errors and `--skip-bad-rows`.
//! Every row that reads is written as one sample frame holding the readings
//! exactly as the CLI hands them to the core (`Reading::Value` for values,
//! `Reading::Counts` for raw counts, `Reading::Missing` for empty fields),
//! duplicates and backward times included: the logger's station rejects and
//! counts them as the replay's does. The rows also go through a station of
//! the core, as in a replay, so that the time-jump check (`--max-gap-days`)
//! and the counts in the summary are the replay's.
//!
//! The file starts with a header holding the station file's configuration
//! (interval, samples per interval, missing-value codes, every channel's
//! configuration and screening settings), so that the logger builds the same
//! station as the replay.

use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{anyhow, Result};
use qc_core::wire::{encode_sample, encode_sample_header, sample_frame_max_len, sample_header_len};
use qc_core::{ChannelConfig, ChannelRecord, PushTotals, Pushed, Reading, Timestamp, Totals};

use crate::config::{self, StationFile};
use crate::engine::{self, Engine, Sink};
use crate::samples::{InputStats, Options};

/// What an export wrote.
#[derive(Clone, Debug)]
pub struct Exported {
    /// What the samples files held.
    pub input: InputStats,
    /// The rows by outcome in the core's station, as a replay counts them.
    pub pushed: PushTotals,
    /// Sample frames written (rows that read, accepted or not).
    pub frames: u64,
    /// Bytes written, header included.
    pub bytes: u64,
}

/// Discards records: the export runs the core's station for its decisions
/// and counts only.
struct Discard;

impl Sink for Discard {
    fn interval(&mut self, _: Timestamp, _: Timestamp, _: &[ChannelRecord]) -> Result<()> {
        Ok(())
    }
}

/// An engine that writes each sample as a frame and passes it on to the
/// core's station.
struct Exporter<'a, W: Write> {
    core: Box<dyn Engine + 'a>,
    out: W,
    buf: Vec<u8>,
    frames: u64,
    bytes: u64,
}

impl<W: Write> Engine for Exporter<'_, W> {
    fn push(&mut self, t: Timestamp, readings: &[Reading]) -> Result<Pushed> {
        let n = encode_sample(t, readings, &mut self.buf)
            .map_err(|e| anyhow!("encoding a sample frame: {e}"))?;
        self.out.write_all(self.buf.get(..n).unwrap_or(&[]))?;
        self.frames += 1;
        self.bytes += n as u64;
        self.core.push(t, readings)
    }

    fn close(&mut self) -> Result<()> {
        self.core.close()
    }

    fn totals(&self) -> PushTotals {
        self.core.totals()
    }

    fn recovery(&self) -> Vec<Totals> {
        self.core.recovery()
    }
}

/// The sample file header of `cfg`.
pub fn header(cfg: &StationFile) -> Result<Vec<u8>> {
    let channels: Vec<ChannelConfig> = cfg.channels.iter().map(|c| c.core).collect();
    let mut out = vec![0u8; sample_header_len(channels.len())];
    encode_sample_header(&cfg.station, &channels, &mut out).map_err(|e| {
        anyhow!(
            "{}: cannot write a sample file header: {e}",
            cfg.path.display()
        )
    })?;
    Ok(out)
}

/// Writes the samples of `files` to `out` as a sample file for `cfg`.
pub fn export(
    cfg: &StationFile,
    files: &[PathBuf],
    opts: Options,
    out: &mut dyn Write,
) -> Result<Exported> {
    let head = header(cfg)?;
    out.write_all(&head)?;
    let mut discard = Discard;
    let mut exporter = Exporter {
        core: engine::new(cfg, &mut discard)?,
        out,
        buf: vec![0u8; sample_frame_max_len(cfg.channels.len())],
        frames: 0,
        bytes: head.len() as u64,
    };
    let input = crate::columnar::feed_any(files, cfg, Options { jobs: 1, ..opts }, &mut exporter)?;
    crate::replay::nothing_unless_allowed(&input, exporter.frames, "samples", files, opts)?;
    Ok(Exported {
        input,
        pushed: exporter.totals(),
        frames: exporter.frames,
        bytes: exporter.bytes,
    })
}

impl Exported {
    /// The summary on stderr: rows read and where they went, and the file.
    pub fn write(&self, w: &mut dyn Write, cfg: &StationFile, path: &Path) -> io::Result<()> {
        self.write_counts(w)?;
        writeln!(
            w,
            "wrote {} ({} bytes: a header with the configuration of {} channels from {}, then {} sample frames)",
            path.display(),
            self.bytes,
            cfg.channels.len(),
            cfg.path.display(),
            self.frames
        )
    }

    /// The summary's lines on the rows read and where they went.
    pub fn write_counts(&self, w: &mut dyn Write) -> io::Result<()> {
        let p = &self.pushed;
        let b = &self.input.bad;
        writeln!(
            w,
            "rows read: {} from {} file(s) = {} sample frames + {} bad rows; of the frames the station accepts {} and rejects {} (duplicate {}, backward {}, closed interval {}, unsupported time {}), as a replay counts them",
            self.input.rows,
            self.input.files,
            self.frames,
            b.total(),
            p.accepted,
            p.pushed() - p.accepted,
            p.duplicate,
            p.backward,
            p.closed_interval,
            p.unsupported_time,
        )?;
        crate::summary::write_skipped(w, &self.input)
    }
}

/// `tenmin export`: reads the station file and the samples, writes the
/// sample file ([`crate::output`]: replaced atomically, never over an input),
/// and prints the summary on stderr unless `--quiet`.
pub fn run(a: &crate::ExportArgs) -> Result<ExitCode> {
    crate::output::refuse_inputs(
        &a.output,
        &crate::inputs(&a.config, "samples file", &a.samples),
    )?;
    let mut cfg = config::load(&a.config)?;
    // The sample file is a logger's input: a logger knows no exclusions (they
    // are decided afterwards, on a PC), so the readings go as the file has them.
    cfg.exclusions = Default::default();
    if let Some(h) = cfg.sensors.as_deref().filter(|h| h.converts()) {
        anyhow::bail!(
            "{}: the sensor history {} sets re-scalings or mounting offsets, and a sample file carries one configuration: a logger holds only the entry in force, so export the samples of one period with a station file giving that entry alone",
            a.config.display(),
            h.path.display()
        );
    }
    let opts = Options {
        skip_bad_rows: a.skip_bad_rows,
        progress: true,
        max_gap_days: a.max_gap_days,
        allow_no_records: a.allow_no_records,
        ..Options::default()
    };
    let format = crate::columnar::Format::of_path(&a.output);
    if format != crate::columnar::Format::Csv {
        return export_columnar(a, &cfg, opts, format);
    }
    let done = crate::output::write_to(Some(&a.output), "the sample file", |w| {
        export(&cfg, &a.samples, opts, w)
    })?;
    if !a.quiet {
        let _ = done.write(&mut io::stderr().lock(), &cfg, &a.output);
    }
    Ok(ExitCode::SUCCESS)
}

/// `tenmin export -o FILE.parquet` (or `.arrow`): the rows as columnar
/// samples ([`crate::columnar`]), read back after writing.
fn export_columnar(
    a: &crate::ExportArgs,
    cfg: &StationFile,
    opts: Options,
    format: crate::columnar::Format,
) -> Result<ExitCode> {
    let (done, written) = crate::output::write_to(Some(&a.output), "the samples", |w| {
        let mut discard = Discard;
        let core = engine::new(cfg, &mut discard)?;
        let mut out = crate::columnar::SamplesOut::new(core, cfg, w, format)?;
        let input =
            crate::columnar::feed_any(&a.samples, cfg, Options { jobs: 1, ..opts }, &mut out)?;
        let written = out.finish()?;
        crate::replay::nothing_unless_allowed(&input, written.rows, "samples", &a.samples, opts)?;
        let done = Exported {
            input,
            pushed: out.totals(),
            frames: written.rows,
            bytes: 0,
        };
        Ok((done, written))
    })?;
    crate::columnar::check_samples(&a.output, cfg, &written)?;
    if !a.quiet {
        let w = &mut io::stderr().lock();
        let _ = done.write_counts(w);
        let _ = writeln!(
            w,
            "wrote {} ({} samples: {} rows of time and {} channels, read back)",
            a.output.display(),
            format.name(),
            written.rows,
            cfg.channels.len()
        );
    }
    Ok(ExitCode::SUCCESS)
}
