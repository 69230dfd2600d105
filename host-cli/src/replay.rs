//! Replay: samples files through the core into a sink, on one thread or on
//! several ([`crate::parallel`]); both give the same records and counts.

use std::path::PathBuf;

use anyhow::{bail, Result};

use crate::config::StationFile;
use crate::engine::{self, Sink};
use crate::outages::{self, Outages};
use crate::parallel;
use crate::reader::Compression;
use crate::samples::{self, InputStats, Options};
use crate::summary::Summary;

/// The default `--jobs` for `files`: the available cores, less one when a
/// file is compressed, at least 1 and at most 2 ([`jobs_for`]).
pub fn default_jobs(files: &[PathBuf]) -> usize {
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    jobs_for(cores, files)
}

/// The replaying threads for `files` on `cores` cores: a compressed file
/// (`.gz`, `.zst`) keeps its reader thread busy decompressing, so that
/// thread takes a core of its own. On 2 cores a `.zst` or `.gz` replayed
/// faster with one replaying thread than with two (host-cli/PERF.md,
/// "Compressed files on two cores"); a plain file's reader only reads and
/// hashes, and two threads replay it faster.
pub fn jobs_for(cores: usize, files: &[PathBuf]) -> usize {
    let compressed = files
        .iter()
        .any(|f| Compression::of(f) != Compression::None);
    cores.saturating_sub(usize::from(compressed)).clamp(1, 2)
}

/// A sink that counts the rows it passes on.
pub struct Counting<'a> {
    inner: &'a mut dyn Sink,
    channels: u64,
    /// Rows passed on.
    pub rows: u64,
    /// The outages of the intervals passed on (built on the first interval).
    pub outages: Option<Outages>,
}

impl<'a> Counting<'a> {
    /// Counts the rows of `channels` channels passed to `inner`.
    pub fn new(inner: &'a mut dyn Sink, channels: usize) -> Self {
        Counting {
            inner,
            channels: channels as u64,
            rows: 0,
            outages: None,
        }
    }
}

impl Sink for Counting<'_> {
    fn interval(
        &mut self,
        start: qc_core::Timestamp,
        end: qc_core::Timestamp,
        records: &[qc_core::ChannelRecord],
    ) -> Result<()> {
        self.rows += self.channels.min(records.len() as u64);
        let o = self
            .outages
            .get_or_insert_with(|| Outages::new(records.len(), end.millis() - start.millis()));
        let causes: Vec<_> = records
            .iter()
            .map(|r| {
                (
                    outages::cause_of(
                        qc_core::screen::passes(r),
                        r.tally.valid,
                        r.tally.excluded,
                        r.flags,
                    ),
                    r.flags,
                )
            })
            .collect();
        o.interval(start.millis(), &causes);
        self.inner.interval(start, end, records)
    }

    fn wants_alternatives(&self) -> bool {
        self.inner.wants_alternatives()
    }

    fn alternatives(
        &mut self,
        start: qc_core::Timestamp,
        alternatives: &[qc_core::conventions::Alternatives],
    ) -> Result<()> {
        self.inner.alternatives(start, alternatives)
    }
}

/// Replays `files` in order through a station built from `cfg`, handing every
/// interval's records to `sink`; returns the counts. With `opts.jobs > 1` the
/// files are cut into chunks replayed on worker threads and joined exactly.
pub fn replay(
    cfg: &StationFile,
    files: &[PathBuf],
    opts: Options,
    sink: &mut dyn Sink,
) -> Result<Summary> {
    let mut counting = Counting::new(sink, cfg.channels.len());
    // Parquet and Arrow samples: one thread (crate::columnar).
    let columnar = crate::columnar::all_columnar(files)?;
    let (input, pushed, recovery) = if opts.jobs > 1 && !columnar {
        parallel::replay(cfg, files, opts, &mut counting)?
    } else {
        let mut engine = engine::new(cfg, &mut counting)?;
        let input = if columnar {
            crate::columnar::feed(files, cfg, opts, engine.as_mut())?
        } else {
            samples::feed(files, cfg, opts, engine.as_mut())?
        };
        (input, engine.totals(), engine.recovery())
    };
    let summary = Summary {
        input,
        pushed,
        recovery,
        record_rows: counting.rows,
        outages: counting
            .outages
            .take()
            .map(Outages::finish)
            .unwrap_or_default(),
    };
    no_records_unless_allowed(&summary, files, opts)?;
    Ok(summary)
}

/// Data rows that gave no records at all (every one bad, and skipped) are an
/// error unless `--allow-no-records` says they may be: an empty records file
/// from a non-empty input is never a silent success.
fn no_records_unless_allowed(s: &Summary, files: &[PathBuf], opts: Options) -> Result<()> {
    nothing_unless_allowed(&s.input, s.record_rows, "records", files, opts)
}

/// Data rows read (`input`) that gave nothing (`made`, the `what` written:
/// records, samples) are an error unless `--allow-no-records`: the rule of
/// [`no_records_unless_allowed`], for `tenmin export` too.
pub fn nothing_unless_allowed(
    input: &InputStats,
    made: u64,
    what: &str,
    files: &[PathBuf],
    opts: Options,
) -> Result<()> {
    if input.rows == 0 || made > 0 || opts.allow_no_records {
        return Ok(());
    }
    let names: Vec<String> = files.iter().map(|f| f.display().to_string()).collect();
    bail!(
        "{}: {} data row(s) read, no {what}: every row was bad or of another station (skipped: {} wrong field count, {} bad time, {} bad value, {} not UTF-8; {} left out by [input] filter); add --allow-no-records to accept an empty result",
        names.join(", "),
        input.rows,
        input.bad.field_count,
        input.bad.time,
        input.bad.value,
        input.bad.encoding,
        input.bad.filtered
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_compressed_file_leaves_its_reader_a_core() {
        let files = |names: &[&str]| -> Vec<PathBuf> { names.iter().map(PathBuf::from).collect() };
        let plain = files(&["a.csv", "b.CSV"]);
        let mixed = files(&["a.csv", "b.csv.zst"]);
        let gz = files(&["a.csv.GZ"]);
        for (cores, files, want) in [
            (1, &plain, 1),
            (2, &plain, 2),
            (8, &plain, 2),
            (1, &mixed, 1),
            (2, &mixed, 1),
            (3, &mixed, 2),
            (2, &gz, 1),
            (4, &gz, 2),
        ] {
            assert_eq!(jobs_for(cores, files), want, "{cores} cores, {files:?}");
        }
    }
}
