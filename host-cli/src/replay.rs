//! Replay: samples files through the core into a sink.

use std::path::PathBuf;

use anyhow::Result;

use crate::config::StationFile;
use crate::engine::{self, Sink};
use crate::samples::{self, Options};
use crate::summary::Summary;

/// A sink that counts the rows it passes on.
struct Counting<'a> {
    inner: &'a mut dyn Sink,
    channels: u64,
    rows: u64,
}

impl Sink for Counting<'_> {
    fn interval(
        &mut self,
        start: qc_core::Timestamp,
        end: qc_core::Timestamp,
        records: &[qc_core::ChannelRecord],
    ) -> Result<()> {
        self.rows += self.channels.min(records.len() as u64);
        self.inner.interval(start, end, records)
    }
}

/// Replays `files` in order through a station built from `cfg`, handing every
/// interval's records to `sink`; returns the counts.
pub fn replay(
    cfg: &StationFile,
    files: &[PathBuf],
    opts: Options,
    sink: &mut dyn Sink,
) -> Result<Summary> {
    let mut counting = Counting {
        inner: sink,
        channels: cfg.channels.len() as u64,
        rows: 0,
    };
    let (input, pushed, recovery) = {
        let mut engine = engine::new(cfg, &mut counting)?;
        let input = samples::feed(files, cfg, opts, engine.as_mut())?;
        (input, engine.totals(), engine.recovery())
    };
    Ok(Summary {
        input,
        pushed,
        recovery,
        record_rows: counting.rows,
    })
}
