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

use std::io::{self, Read, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{anyhow, Result};
use qc_core::wire::{
    decode_sample, encode_sample, encode_sample_header, sample_frame_max_len, sample_header_len,
    SampleDecode,
};
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
            "wrote {} ({} bytes: a header with the configuration of {} channels from {}, then {} sample frames; read back)",
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
    read_back(&a.output, &header(&cfg)?, cfg.channels.len(), done.frames)?;
    if !a.quiet {
        let _ = done.write(&mut io::stderr().lock(), &cfg, &a.output);
    }
    Ok(ExitCode::SUCCESS)
}

/// Reads the sample file `path` just written back, a piece at a time (memory
/// bounded whatever its size): it must start with `head` and hold `frames`
/// good sample frames of `channels` readings each, and nothing after them.
/// A device or a pipe written in place is not read.
pub fn read_back(path: &Path, head: &[u8], channels: usize, frames: u64) -> Result<()> {
    if !std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
        return Ok(());
    }
    let at = |what: String| anyhow!("{}: read back after writing, {what}", path.display());
    let mut f = std::fs::File::open(path).map_err(|e| at(format!("cannot open: {e}")))?;
    let mut got = vec![0u8; head.len()];
    f.read_exact(&mut got)
        .map_err(|e| at(format!("cannot read the header: {e}")))?;
    if got != head {
        return Err(at("the header differs from the one written".into()));
    }
    let mut readings = vec![Reading::Missing; channels];
    let mut buf = Vec::with_capacity(2 * READ_BACK_CHUNK);
    let mut chunk = vec![0u8; READ_BACK_CHUNK];
    let mut offset = head.len() as u64;
    let mut read = 0u64;
    loop {
        let n = f
            .read(&mut chunk)
            .map_err(|e| at(format!("cannot read at byte {offset}: {e}")))?;
        buf.extend_from_slice(&chunk[..n]);
        let mut used = 0;
        loop {
            match decode_sample(&buf[used..], &mut readings) {
                SampleDecode::Sample { len, .. } => {
                    used += len;
                    read += 1;
                }
                SampleDecode::Incomplete => break,
                SampleDecode::Invalid(e) => {
                    return Err(at(format!("byte {}: {e}", offset + used as u64)))
                }
            }
        }
        offset += used as u64;
        buf.drain(..used);
        if n == 0 {
            if !buf.is_empty() {
                return Err(at(format!("byte {offset}: a frame cut short")));
            }
            break;
        }
    }
    if read != frames {
        return Err(at(format!("{read} sample frames, {frames} written")));
    }
    Ok(())
}

/// Bytes read at a time by [`read_back`].
const READ_BACK_CHUNK: usize = 1 << 16;

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

#[cfg(test)]
mod tests {
    use super::*;

    /// A sample file of 3,000 rows of two channels (about 90 KB: frames
    /// across [`READ_BACK_CHUNK`] boundaries), written by [`export`]; its
    /// header and frame count.
    fn written(dir: &Path) -> (PathBuf, Vec<u8>, u64) {
        let station = dir.join("st.toml");
        std::fs::write(
            &station,
            "[logging]\ninterval_s = 600\nsample_rate_hz = 1\n\n\
             [[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.01\n\n\
             [[channel]]\nid = \"t\"\nkind = \"scalar\"\nresolution = 0.1\n",
        )
        .unwrap();
        let mut csv = String::from("time,ws,t\n");
        for i in 0..3000i64 {
            let t = if i % 7 == 3 {
                String::new()
            } else {
                format!("{}.5", i % 13)
            };
            csv.push_str(&format!(
                "{},{}.{:02},{t}\n",
                1_737_331_200 + i,
                4 + i % 9,
                i % 100
            ));
        }
        let samples = dir.join("s.csv");
        std::fs::write(&samples, csv).unwrap();
        let cfg = config::load(&station).unwrap();
        let mut out = Vec::new();
        let done = export(&cfg, &[samples], Options::default(), &mut out).unwrap();
        let path = dir.join("s.tmsf");
        std::fs::write(&path, &out).unwrap();
        (path, header(&cfg).unwrap(), done.frames)
    }

    #[test]
    fn a_sample_file_reads_back_as_written_or_the_fault_is_named() {
        let dir = tempfile::tempdir().unwrap();
        let (path, head, frames) = written(dir.path());
        assert_eq!(frames, 3000);
        let bytes = std::fs::read(&path).unwrap();
        assert!(bytes.len() > 65_536);
        read_back(&path, &head, 2, frames).unwrap();
        let fails = |bytes: &[u8], frames: u64, want: &str| {
            std::fs::write(&path, bytes).unwrap();
            let e = format!("{:#}", read_back(&path, &head, 2, frames).unwrap_err());
            assert!(
                e.contains("s.tmsf: read back after writing") && e.contains(want),
                "{want}: {e}"
            );
        };
        // One bit of a frame past the first 64 KiB: its CRC fails there.
        let mut flipped = bytes.clone();
        flipped[70_001] ^= 0x10;
        fails(&flipped, frames, "byte ");
        // Cut inside the last frame.
        fails(&bytes[..bytes.len() - 3], frames, "a frame cut short");
        // Another header.
        let mut other = bytes.clone();
        other[head.len() - 5] ^= 1;
        fails(&other, frames, "the header differs");
        // Fewer frames than written (the last one dropped whole: row 2,999,
        // its `t` missing: 8 bytes of time, 9 and 1 of readings, 4 of CRC),
        // and more.
        let last = bytes.len() - 22;
        fails(&bytes[..last], frames, "2999 sample frames, 3000 written");
        fails(&bytes, frames - 1, "3000 sample frames, 2999 written");
        // A file shorter than its header.
        fails(&bytes[..10], frames, "cannot read the header");
    }
}
