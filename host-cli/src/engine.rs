//! The station engine: a `qc_core::Station` of the right size behind a small
//! object-safe interface, so the rest of the CLI does not carry const generics.
//!
//! The core's `Station<C, G>` has its channel count `C` and gust capacity `G`
//! fixed at compile time. The engine picks `C` from {4, 8, 16, 32} at run time
//! (`G` is [`GUST_CAPACITY`]) and pads unused channel slots with
//! `ChannelConfig::scalar(1.0)`, fed `Reading::Missing` and never reported.

use anyhow::{bail, Result};
use qc_core::conventions::Alternatives;
use qc_core::{
    ChannelRecord, Event, Gap, IntervalAcc, Layout, PushTotals, Pushed, Reading, Station,
    Timestamp, Totals,
};

use crate::config::{StationFile, GUST_CAPACITY, MAX_CHANNELS};
use crate::sensors::Epochs;

/// The gust-window capacity of every station the CLI builds.
pub const G: usize = GUST_CAPACITY;

/// Receives the records of every interval, in time order.
pub trait Sink {
    /// One interval `[start, end)`: one record per configured channel, in
    /// station-file order.
    fn interval(
        &mut self,
        start: Timestamp,
        end: Timestamp,
        records: &[ChannelRecord],
    ) -> Result<()>;

    /// Whether the sink wants every interval's alternatives
    /// ([`Sink::alternatives`]); false by default (they cost a little).
    fn wants_alternatives(&self) -> bool {
        false
    }

    /// The alternatives of interval `start`, one per configured channel in
    /// station-file order, from its exact state (`qc_core::conventions`):
    /// handed just before [`Sink::interval`] of the same interval.
    fn alternatives(&mut self, _start: Timestamp, _alternatives: &[Alternatives]) -> Result<()> {
        Ok(())
    }
}

/// A station fed one sample at a time.
pub trait Engine {
    /// Pushes one sample; `readings` holds one reading per configured channel.
    /// Intervals it closes (and gaps it ends) go to the sink first.
    fn push(&mut self, t: Timestamp, readings: &[Reading]) -> Result<Pushed>;
    /// Pushes the leading rows of a block that are each simply the next
    /// sample of the open interval, channel by channel (`columns[c]` holds
    /// channel `c`'s readings, one per time), and returns how many: every one
    /// accepted, nothing emitted ([`qc_core::Station::push_run`]). The row
    /// after them, if any, goes through [`Engine::push`]. `from` is the
    /// first row of `columns` to read. By default none: every row one by one.
    fn push_run(&mut self, times: &[Timestamp], columns: &[Vec<Reading>], from: usize) -> usize {
        let _ = (times, columns, from);
        0
    }
    /// End of data: closes the open interval.
    fn close(&mut self) -> Result<()>;
    /// Samples pushed, by outcome.
    fn totals(&self) -> PushTotals;
    /// Recovery since start of each configured channel.
    fn recovery(&self) -> Vec<Totals>;
}

/// An engine for `cfg` that hands records to `sink`.
pub fn new<'s>(cfg: &StationFile, sink: &'s mut dyn Sink) -> Result<Box<dyn Engine + 's>> {
    Ok(match cfg.channels.len() {
        0 => bail!("{}: no channels", cfg.path.display()),
        1..=4 => Box::new(Fixed::<'s, 4>::new(cfg, sink)?),
        5..=8 => Box::new(Fixed::<'s, 8>::new(cfg, sink)?),
        9..=16 => Box::new(Fixed::<'s, 16>::new(cfg, sink)?),
        17..=MAX_CHANNELS => Box::new(Fixed::<'s, 32>::new(cfg, sink)?),
        n => bail!("{n} channels: at most {MAX_CHANNELS} are supported"),
    })
}

struct Fixed<'s, const C: usize> {
    station: Box<Station<C, G>>,
    /// With a sensor history: the layout in force at each sample's time.
    epochs: Option<Epochs<C>>,
    cursor: usize,
    out: Out<'s, C>,
    readings: [Reading; C],
    n: usize,
    /// The readings of the unused channel slots in a run: all missing.
    pad: Vec<Reading>,
}

/// Hands intervals to a sink as records: what the emit callback needs,
/// borrowed apart from the station. The parallel replay emits through it too.
pub struct Out<'s, const C: usize> {
    layout: Layout<C>,
    n: usize,
    sink: &'s mut dyn Sink,
    records: Vec<ChannelRecord>,
    error: Option<anyhow::Error>,
}

impl<'s, const C: usize> Fixed<'s, C> {
    fn new(cfg: &StationFile, sink: &'s mut dyn Sink) -> Result<Self> {
        let layout = cfg.layout::<C>()?;
        let n = cfg.channels.len();
        Ok(Fixed {
            station: Box::new(Station::new(layout)),
            epochs: cfg.epochs::<C>()?,
            cursor: 0,
            out: Out::new(layout, n, sink),
            readings: [Reading::Missing; C],
            n,
            pad: Vec::new(),
        })
    }
}

impl<'s, const C: usize> Out<'s, C> {
    /// Records of the first `n` channels of `layout` go to `sink`.
    pub fn new(layout: Layout<C>, n: usize, sink: &'s mut dyn Sink) -> Self {
        Out {
            layout,
            n,
            sink,
            records: Vec::with_capacity(n),
            error: None,
        }
    }

    fn emit(&mut self, event: Event<'_, C, G>) {
        if self.error.is_some() {
            return;
        }
        let result = match event {
            Event::Closed(acc, records) => self
                .alternatives(acc)
                .and_then(|()| self.records(acc.index(), &records[..self.n])),
            Event::Gap(gap) => self.gap(gap),
        };
        if let Err(e) = result {
            self.error = Some(e);
        }
    }

    /// The rows of a run of intervals with no samples.
    pub fn gap(&mut self, gap: Gap) -> Result<()> {
        for i in 0..gap.count {
            // An interval with no samples: an empty accumulator, finished
            // by the core like any other.
            let k = gap.first.saturating_add(i as i64);
            let acc = IntervalAcc::<C, G>::new(&self.layout, k);
            self.interval(&acc)?;
        }
        Ok(())
    }

    /// The interval's alternatives, when the sink wants them.
    fn alternatives(&mut self, acc: &IntervalAcc<C, G>) -> Result<()> {
        if !self.sink.wants_alternatives() {
            return Ok(());
        }
        let layout = &self.layout;
        let alts: Vec<Alternatives> = (0..self.n)
            .filter_map(|i| Alternatives::of(layout, i, &acc.state(i)?))
            .collect();
        self.sink
            .alternatives(layout.interval_start(acc.index()), &alts)
    }

    /// The rows of a closed, screened interval.
    pub fn interval(&mut self, acc: &IntervalAcc<C, G>) -> Result<()> {
        self.alternatives(acc)?;
        self.records.clear();
        let layout = &self.layout;
        self.records
            .extend((0..self.n).filter_map(|i| layout.finish(acc, i)));
        let start = layout.interval_start(acc.index());
        let end = layout.interval_start(acc.index().saturating_add(1));
        self.sink.interval(start, end, &self.records)
    }

    /// The rows of interval `index`, from the records the station handed out.
    fn records(&mut self, index: i64, records: &[ChannelRecord]) -> Result<()> {
        let start = self.layout.interval_start(index);
        let end = self.layout.interval_start(index.saturating_add(1));
        self.sink.interval(start, end, records)
    }

    fn check(&mut self) -> Result<()> {
        match self.error.take() {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}

impl<const C: usize> Engine for Fixed<'_, C> {
    fn push(&mut self, t: Timestamp, readings: &[Reading]) -> Result<Pushed> {
        let n = self.n.min(readings.len());
        self.readings[..n].copy_from_slice(&readings[..n]);
        let out = &mut self.out;
        let pushed = match &mut self.epochs {
            None => self.station.push(t, &self.readings, |e| out.emit(e)),
            Some(epochs) => {
                let entry = epochs.at(t, &mut self.cursor);
                self.station
                    .push_with(entry, t, &self.readings, |e| out.emit(e))?
            }
        };
        self.out.check()?;
        Ok(pushed)
    }

    fn push_run(&mut self, times: &[Timestamp], columns: &[Vec<Reading>], from: usize) -> usize {
        if self.pad.len() < times.len() {
            self.pad.resize(times.len(), Reading::Missing);
        }
        let pad = &self.pad[..];
        let cols: [&[Reading]; C] = std::array::from_fn(|c| match columns.get(c) {
            Some(col) if c < self.n => col.get(from..).unwrap_or_default(),
            _ => pad,
        });
        match &self.epochs {
            None => self.station.push_run(times, &cols),
            // With a sensor history: the entry in force, up to the next.
            Some(ep) => ep.push_run(&mut self.station, &mut self.cursor, times, &cols),
        }
    }

    fn close(&mut self) -> Result<()> {
        let out = &mut self.out;
        self.station.close(|e| out.emit(e));
        self.out.check()
    }

    fn totals(&self) -> PushTotals {
        *self.station.totals()
    }

    fn recovery(&self) -> Vec<Totals> {
        self.station.recovery()[..self.n]
            .iter()
            .map(|r| r.since_start())
            .collect()
    }
}
