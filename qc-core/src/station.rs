//! The station: a fixed set of channels sampled together, cut into UTC-aligned
//! intervals.
//!
//! [`Layout`] is the validated configuration. [`Station`] takes timestamped
//! samples, keeps one open [`IntervalAcc`], and hands each closed interval (and
//! each run of intervals with no samples, as one [`Gap`]) to a callback.
//! [`IntervalAcc::merge`] joins pieces of one interval accumulated apart, with the
//! same result, bit for bit, as accumulating them in one pass.
//!
//! Time rules:
//! - Interval `k` covers `[k * interval, (k + 1) * interval)` milliseconds since the
//!   epoch; since the interval divides a day, boundaries fall on whole multiples
//!   of the interval since each UTC midnight.
//! - A sample whose timestamp is not after the last accepted one is rejected
//!   (duplicate or backward) and counted, never merged.
//! - A sample in a later interval closes the open one; intervals in between are
//!   reported as one [`Gap`] in constant time, however long.
//! - Consecutive accepted samples more than 1.5 nominal periods apart break the
//!   gust runs of every channel.
//!
//! Nothing here panics, whatever the input.

use crate::channel::{Channel, ChannelAcc, ChannelConfig, ChannelRecord, Kind, Reading, Slot};
use crate::cmath;
use crate::error::{ChannelProblem, ConfigError};
use crate::flags::Flags;
use crate::recovery::Recovery;
use crate::screen::{interval_flags, passes, Screener};
use crate::time::{Month, Timestamp};
use core::borrow::Borrow;

/// "No time yet" in a millisecond field: below every supported timestamp.
const NONE_MS: i64 = i64::MIN;

/// Most missing-value codes a station may have.
pub const MAX_SENTINELS: usize = 4;

/// Most samples per interval (2^24: 10-minute intervals at up to 27 kHz; and
/// never more than one per millisecond of the interval).
pub const MAX_SAMPLES_PER_INTERVAL: u32 = 1 << 24;

/// Station-wide settings.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StationConfig {
    /// Interval length in seconds; must divide 86,400. 600 for 10-minute statistics.
    pub interval_s: u32,
    /// Samples per interval at the nominal rate (600 for 1 Hz and 10 minutes).
    pub samples_per_interval: u32,
    /// Missing-value codes (for example -999 and -9999), compared exactly.
    pub missing_values: [Option<f64>; MAX_SENTINELS],
}

impl StationConfig {
    /// 10-minute intervals at 1 Hz with missing-value codes -999 and -9999.
    pub const fn ten_minute_1hz() -> Self {
        StationConfig {
            interval_s: 600,
            samples_per_interval: 600,
            missing_values: [Some(-999.0), Some(-9999.0), None, None],
        }
    }
}

/// The station's missing-value codes, as values and as counts.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Sentinels {
    values: [f64; MAX_SENTINELS],
    counts: [i32; MAX_SENTINELS],
    n_values: u8,
    n_counts: u8,
}

impl Sentinels {
    /// No codes.
    const NONE: Sentinels = Sentinels {
        values: [0.0; MAX_SENTINELS],
        counts: [0; MAX_SENTINELS],
        n_values: 0,
        n_counts: 0,
    };

    pub(crate) const fn new(codes: &[Option<f64>; MAX_SENTINELS]) -> Result<Self, ConfigError> {
        let mut s = Sentinels::NONE;
        let mut i = 0;
        while i < MAX_SENTINELS {
            if let Some(v) = codes[i] {
                if v.is_nan() {
                    return Err(ConfigError::Sentinels);
                }
                s.values[s.n_values as usize] = v;
                s.n_values += 1;
                if cmath::trunc(v) == v && v >= i32::MIN as f64 && v <= i32::MAX as f64 {
                    s.counts[s.n_counts as usize] = v as i32;
                    s.n_counts += 1;
                }
            }
            i += 1;
        }
        Ok(s)
    }

    /// Whether `v` is a missing-value code.
    #[inline]
    pub fn matches_value(&self, v: f64) -> bool {
        self.values[..usize::from(self.n_values)].contains(&v)
    }

    /// The codes as values.
    pub const fn values(&self) -> &[f64] {
        self.values.split_at(self.n_values as usize).0
    }

    /// The codes that are whole numbers within `i32`, as counts.
    pub const fn counts(&self) -> &[i32] {
        self.counts.split_at(self.n_counts as usize).0
    }

    /// Whether raw counts `k` equal a missing-value code.
    #[inline]
    pub fn matches_counts(&self, k: i32) -> bool {
        self.counts[..usize::from(self.n_counts)].contains(&k)
    }
}

/// Whether channel `idx` (if any) exists among `channels` and is of `kind`.
const fn link_is(channels: &[ChannelConfig], idx: Option<u8>, kind: Kind) -> bool {
    match idx {
        None => true,
        Some(j) => {
            let j = j as usize;
            j < channels.len() && channels[j].kind as u8 == kind as u8
        }
    }
}

/// A validated station configuration for `C` channels.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Layout<const C: usize> {
    interval_ms: i64,
    samples: u32,
    /// Largest step between samples that is not a gap, ms.
    max_step_ms: i64,
    sentinels: Sentinels,
    channels: [Channel; C],
}

impl<const C: usize> Layout<C> {
    /// Validates a station. `G` is the gust-window capacity, in samples, of the
    /// [`Station`] or [`IntervalAcc`] that will use the layout.
    ///
    /// A `const fn`: a logger with a fixed configuration can validate it at
    /// compile time and keep the layout in flash,
    ///
    /// ```
    /// use qc_core::{ChannelConfig, Layout, StationConfig};
    /// static LAYOUT: Layout<2> = match Layout::new::<3>(
    ///     StationConfig::ten_minute_1hz(),
    ///     &[ChannelConfig::speed(0.01), ChannelConfig::direction()],
    /// ) {
    ///     Ok(layout) => layout,
    ///     Err(_) => panic!("invalid station"),
    /// };
    /// assert_eq!(LAYOUT.interval_ms(), 600_000);
    /// ```
    pub const fn new<const G: usize>(
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<Self, ConfigError> {
        let mut layout = Self::PLACEHOLDER;
        match layout.validate::<G>(station, channels) {
            Ok(()) => Ok(layout),
            Err(e) => Err(e),
        }
    }

    /// A stand-in for [`Layout::rebuild`] to fill: ten-minute intervals of 600
    /// samples and placeholder channels that take no reading as valid.
    pub const PLACEHOLDER: Self = Layout {
        interval_ms: 600_000,
        samples: 600,
        max_step_ms: 1_500,
        sentinels: Sentinels::NONE,
        channels: [Channel::placeholder(); C],
    };

    /// [`Layout::new`] in place: validates the station into `self`, without a
    /// second layout on the stack (2.4 KiB for 8 channels, on a logger whose
    /// stack is a few KiB). On an error `self` is [`Layout::PLACEHOLDER`].
    pub const fn rebuild<const G: usize>(
        &mut self,
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<(), ConfigError> {
        match self.validate::<G>(station, channels) {
            Ok(()) => Ok(()),
            Err(e) => {
                *self = Self::PLACEHOLDER;
                Err(e)
            }
        }
    }

    /// The work of [`Layout::new`] and [`Layout::rebuild`]: writes the
    /// validated station into `self` (partly, on an error).
    const fn validate<const G: usize>(
        &mut self,
        station: StationConfig,
        channels: &[ChannelConfig; C],
    ) -> Result<(), ConfigError> {
        if C > 255 {
            return Err(ConfigError::TooManyChannels);
        }
        if station.interval_s == 0 || 86_400 % station.interval_s != 0 {
            return Err(ConfigError::Interval);
        }
        let n = station.samples_per_interval;
        // Timestamps are whole milliseconds, so at most one sample per ms.
        if n == 0 || n > MAX_SAMPLES_PER_INTERVAL || n as u64 > station.interval_s as u64 * 1000 {
            return Err(ConfigError::SampleCount);
        }
        let sentinels = match Sentinels::new(&station.missing_values) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let mut i = 0;
        while i < C {
            let index = i as u8;
            let cfg = &channels[i];
            self.channels[i] = match Channel::new(*cfg, G) {
                Ok(ch) => ch,
                Err(problem) => return Err(ConfigError::Channel { index, problem }),
            };
            self.channels[i].note_codes(&sentinels);
            let sc = &cfg.screen;
            let icing_ok = match sc.icing {
                Some(ice) => {
                    link_is(channels, Some(ice.temperature), Kind::Scalar)
                        && link_is(channels, Some(ice.humidity), Kind::Scalar)
                }
                None => true,
            };
            if !(link_is(channels, sc.partner, Kind::Speed)
                && link_is(channels, sc.above, Kind::Speed)
                && icing_ok)
            {
                return Err(ConfigError::Channel {
                    index,
                    problem: ChannelProblem::ScreenLink,
                });
            }
            if cfg.speed_channel.is_some()
                && !(link_is(channels, cfg.speed_channel, Kind::Speed)
                    && matches!(cfg.kind, Kind::Direction))
            {
                return Err(ConfigError::Channel {
                    index,
                    problem: ChannelProblem::SpeedLink,
                });
            }
            i += 1;
        }
        let interval_ms = station.interval_s as i64 * 1000;
        self.interval_ms = interval_ms;
        self.samples = n;
        self.max_step_ms = 3 * interval_ms / (2 * n as i64);
        self.sentinels = sentinels;
        Ok(())
    }

    /// Interval length, ms.
    pub const fn interval_ms(&self) -> i64 {
        self.interval_ms
    }

    /// Samples per interval at the nominal rate.
    pub const fn samples_per_interval(&self) -> u32 {
        self.samples
    }

    /// The channels.
    pub const fn channels(&self) -> &[Channel; C] {
        &self.channels
    }

    /// The index of the interval holding `t`.
    pub const fn interval_of(&self, t: Timestamp) -> i64 {
        t.millis().div_euclid(self.interval_ms)
    }

    /// The start of interval `index`.
    pub const fn interval_start(&self, index: i64) -> Timestamp {
        Timestamp::from_millis(index.saturating_mul(self.interval_ms))
    }

    /// Whether two consecutive accepted samples `dt` ms apart leave a gap.
    pub const fn is_gap(&self, dt: i64) -> bool {
        dt > self.max_step_ms
    }

    /// Finished statistics of channel `ch` of `acc`, with its screening flags;
    /// `None` if `ch >= C`.
    ///
    /// The flags of the channel's own interval tests are always set; flags that
    /// need other channels or earlier intervals (flat-line, pair mismatch, shear,
    /// icing) are set once the interval has been screened ([`Layout::screen`]),
    /// which [`Station`] does before it hands an interval out.
    pub fn finish<const G: usize>(
        &self,
        acc: &IntervalAcc<C, G>,
        ch: usize,
    ) -> Option<ChannelRecord> {
        let channel = self.channels.get(ch)?;
        let speed = channel
            .config()
            .speed_channel
            .and_then(|s| self.channels.get(usize::from(s)));
        let slot = acc.slots.get(ch)?;
        let mut r = slot.acc.finish(channel, self.samples, speed);
        r.spikes = slot.spikes.count();
        r.flags = Flags::from_bits(
            interval_flags(&r, &channel.config().screen, r.spikes).bits() | acc.flags[ch].bits(),
        );
        Some(r)
    }

    /// Finished records of every channel of `acc`.
    pub fn finish_all<const G: usize>(&self, acc: &IntervalAcc<C, G>) -> [ChannelRecord; C] {
        core::array::from_fn(|i| {
            // `i < C`, so `finish` always has a record; the fallback is never used.
            self.finish(acc, i).unwrap_or_else(|| {
                acc.slots[i]
                    .acc
                    .finish(&self.channels[i], self.samples, None)
            })
        })
    }

    /// Runs the cross-interval and cross-channel tests on a complete interval
    /// and stores their flags in it. Intervals must be screened in time order
    /// with one `screener`; returns the finished, flagged records.
    pub fn screen<const G: usize>(
        &self,
        screener: &mut Screener<C>,
        acc: &mut IntervalAcc<C, G>,
    ) -> [ChannelRecord; C] {
        let mut records = self.finish_all(acc);
        screener.screen(acc.index, self.interval_ms, &self.channels, &mut records);
        for (f, r) in acc.flags.iter_mut().zip(records.iter()) {
            *f = r.flags;
        }
        records
    }
}

/// The accumulated state of one interval (or one piece of it).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct IntervalAcc<const C: usize, const G: usize> {
    index: i64,
    /// First and last accepted sample times, ms; [`NONE_MS`] before any.
    first: i64,
    last: i64,
    slots: [Slot<G>; C],
    flags: [Flags; C],
}

impl<const C: usize, const G: usize> IntervalAcc<C, G> {
    /// An empty interval `index` of `layout`.
    pub fn new(layout: &Layout<C>, index: i64) -> Self {
        IntervalAcc {
            index,
            first: NONE_MS,
            last: NONE_MS,
            slots: core::array::from_fn(|i| Slot::new(&layout.channels[i])),
            flags: [Flags::EMPTY; C],
        }
    }

    /// A stand-in before the first interval (channels of no kind yet); a
    /// [`Station`] resets it for the first interval it opens.
    const fn placeholder() -> Self {
        IntervalAcc {
            index: 0,
            first: NONE_MS,
            last: NONE_MS,
            slots: [Slot::EMPTY; C],
            flags: [Flags::EMPTY; C],
        }
    }

    /// The interval's index (interval number since the epoch).
    pub const fn index(&self) -> i64 {
        self.index
    }

    /// First and last accepted sample times, if any sample was accepted.
    pub const fn span(&self) -> Option<(Timestamp, Timestamp)> {
        if self.first == NONE_MS {
            None
        } else {
            Some((
                Timestamp::from_millis(self.first),
                Timestamp::from_millis(self.last),
            ))
        }
    }

    /// The per-channel states, in channel order.
    pub fn channels(&self) -> impl ExactSizeIterator<Item = &ChannelAcc<G>> + '_ {
        self.slots.iter().map(|s| &s.acc)
    }

    /// The state of channel `ch`, if `ch < C`.
    pub fn channel(&self, ch: usize) -> Option<&ChannelAcc<G>> {
        self.slots.get(ch).map(|s| &s.acc)
    }

    /// Adds one accepted sample at `t` (the caller keeps `t` increasing and within
    /// this interval; [`Station::push`] does).
    pub fn push(&mut self, layout: &Layout<C>, t: Timestamp, readings: &[Reading; C]) {
        let ms = t.millis();
        let broken = if self.last == NONE_MS {
            self.first = ms;
            false
        } else {
            // Supported times are far from the i64 limits: no overflow.
            layout.is_gap(ms.wrapping_sub(self.last))
        };
        self.last = ms;
        if broken {
            for slot in &mut self.slots {
                slot.break_run();
            }
        }
        let sentinels = &layout.sentinels;
        // One pass over the channels (a Cortex-M0 pays for every extra load and
        // store); a direction linked to a speed classifies that speed's reading
        // again rather than keeping every channel's class in an array.
        for ((slot, ch), reading) in self
            .slots
            .iter_mut()
            .zip(layout.channels.iter())
            .zip(readings.iter())
        {
            let speed = || {
                let s = usize::from(ch.config().speed_channel?);
                match (layout.channels.get(s), readings.get(s)) {
                    (Some(sc), Some(sr)) => Some(sc.classify(*sr, sentinels)),
                    _ => None,
                }
            };
            slot.push_reading(ch, reading, sentinels, speed);
        }
    }

    /// Empties the accumulator in place for interval `index` of `layout`, as
    /// [`IntervalAcc::new`] would make it.
    pub fn reset(&mut self, layout: &Layout<C>, index: i64) {
        self.index = index;
        self.first = NONE_MS;
        self.last = NONE_MS;
        for (slot, ch) in self.slots.iter_mut().zip(layout.channels.iter()) {
            *slot = Slot::new(ch);
        }
        self.flags = [Flags::EMPTY; C];
    }

    /// Clears the flags set by [`Layout::screen`] (a piece screened on its own
    /// must be screened again once complete, in time order).
    pub fn clear_flags(&mut self) {
        self.flags = [Flags::EMPTY; C];
    }

    /// Counts one sample rejected for its timestamp, on every channel.
    pub fn reject(&mut self) {
        for s in &mut self.slots {
            s.acc.reject();
        }
    }

    /// Merges `later`, a piece of the same interval whose samples all follow this
    /// piece's. Gust windows and spikes straddling the join are found exactly.
    ///
    /// Screening flags from other channels and earlier intervals are cleared:
    /// screen the merged interval again ([`Layout::screen`]), in time order with
    /// the other intervals, to get them back.
    pub fn merge(&mut self, layout: &Layout<C>, later: &Self) {
        let joined = self.last == NONE_MS
            || later.first == NONE_MS
            || !layout.is_gap(later.first.saturating_sub(self.last));
        for ((a, b), ch) in self
            .slots
            .iter_mut()
            .zip(later.slots.iter())
            .zip(layout.channels.iter())
        {
            a.acc.merge(&b.acc, ch.window(), joined);
            let circular = ch.config().kind == crate::Kind::Direction;
            a.spikes.merge(&b.spikes, ch.spike_lim(), circular, joined);
        }
        self.clear_flags();
        if self.first == NONE_MS {
            self.first = later.first;
        }
        if later.last != NONE_MS {
            self.last = later.last;
        }
    }
}

/// Why a sample was rejected for its timestamp.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Reject {
    /// The same timestamp as the last accepted sample.
    Duplicate,
    /// Earlier than the last accepted sample.
    Backward,
    /// In an interval already closed by [`Station::close`] or [`Station::tick`].
    ClosedInterval,
    /// Outside the years 0000 to 9999.
    UnsupportedTime,
}

/// What [`Station::push`] did with a sample.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Pushed {
    /// Accepted into the open interval (each reading counted valid, missing or
    /// out of range by its channel).
    Accepted,
    /// Rejected for its timestamp, and counted.
    Rejected(Reject),
}

/// Intervals in a row with no samples at all.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Gap {
    /// Index of the first empty interval.
    pub first: i64,
    /// How many empty intervals.
    pub count: u64,
}

/// What a station hands to its callback.
#[derive(Debug)]
pub enum Event<'a, const C: usize, const G: usize> {
    /// An interval closed: its state (to merge, or to finish again) and the
    /// finished records of its channels, screened and flagged (what
    /// [`Layout::finish`] gives once the station has screened the interval).
    Closed(&'a IntervalAcc<C, G>, &'a [ChannelRecord; C]),
    /// Intervals that held no samples; each counts as possible and lost.
    Gap(Gap),
}

/// Sample counts of a station by outcome, since start (one per `push`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PushTotals {
    /// Accepted samples.
    pub accepted: u64,
    /// Rejected: same timestamp as the last accepted.
    pub duplicate: u64,
    /// Rejected: earlier than the last accepted.
    pub backward: u64,
    /// Rejected: in an interval already closed.
    pub closed_interval: u64,
    /// Rejected: outside the supported years.
    pub unsupported_time: u64,
    /// Of the rejected, those that arrived while no interval was open, so that
    /// no interval record counts them.
    pub unplaced: u64,
}

impl PushTotals {
    /// All samples pushed.
    pub const fn pushed(&self) -> u64 {
        self.accepted
            + self.duplicate
            + self.backward
            + self.closed_interval
            + self.unsupported_time
    }
}

/// A logging station: channels, the open interval, running recovery.
///
/// `C` is the number of channels, `G` the largest gust window in samples. The
/// whole state has a fixed size known at compile time (see the crate docs).
///
/// `L` holds the layout: the station owns it by default; a logger can give a
/// reference instead (`Station<C, G, &'static Layout<C>>`), so that a layout
/// validated at compile time stays in flash and the station's RAM is only its
/// running state.
#[derive(Clone, Debug)]
pub struct Station<const C: usize, const G: usize, L: Borrow<Layout<C>> = Layout<C>> {
    layout: L,
    /// The interval state; kept after an interval closes and reset in place for
    /// the next (no copies of it on the stack of a small logger).
    open: IntervalAcc<C, G>,
    /// Whether `open` holds an open interval.
    live: bool,
    /// Index of the next interval not yet reported; `i64::MIN` before any.
    cursor: i64,
    /// Time of the last accepted sample, ms; [`NONE_MS`] before any.
    last: i64,
    /// End (ms, exclusive) of the open interval; `i64::MIN` when none is open.
    open_end: i64,
    /// The month of the latest closed interval and its span `[from, to)`, ms
    /// (an empty span before the first).
    month: Month,
    month_from: i64,
    month_to: i64,
    recovery: [Recovery; C],
    screener: Screener<C>,
    totals: PushTotals,
}

impl<const C: usize, const G: usize, L: Borrow<Layout<C>>> Station<C, G, L> {
    /// A station with nothing recorded yet.
    pub const fn new(layout: L) -> Self {
        Station {
            layout,
            open: IntervalAcc::placeholder(),
            live: false,
            cursor: i64::MIN,
            last: NONE_MS,
            open_end: i64::MIN,
            month: Month { year: 0, month: 1 },
            month_from: 0,
            month_to: 0,
            recovery: [Recovery::new(); C],
            screener: Screener::new(),
            totals: PushTotals {
                accepted: 0,
                duplicate: 0,
                backward: 0,
                closed_interval: 0,
                unsupported_time: 0,
                unplaced: 0,
            },
        }
    }

    /// The layout.
    pub fn layout(&self) -> &Layout<C> {
        self.layout.borrow()
    }

    /// Running recovery of each channel (updated as intervals close).
    pub const fn recovery(&self) -> &[Recovery; C] {
        &self.recovery
    }

    /// Samples pushed, by outcome.
    pub const fn totals(&self) -> &PushTotals {
        &self.totals
    }

    /// The open interval, if any.
    pub const fn open(&self) -> Option<&IntervalAcc<C, G>> {
        if self.live {
            Some(&self.open)
        } else {
            None
        }
    }

    /// Adds one sample: a time and one reading per channel. Closed intervals and
    /// gaps that this sample ends are handed to `emit` first, in time order.
    pub fn push<F>(&mut self, t: Timestamp, readings: &[Reading; C], mut emit: F) -> Pushed
    where
        F: FnMut(Event<'_, C, G>),
    {
        // Steady state: after the last accepted sample and inside the open
        // interval (`open_end` is `i64::MIN` when none is open), which lies in
        // the supported years, so none of the checks below can reject it.
        let ms = t.millis();
        if !(ms < self.open_end && ms > self.last) {
            if let Err(reason) = self.enter(t, &mut emit) {
                return Pushed::Rejected(reason);
            }
        }
        self.open.push(self.layout.borrow(), t, readings);
        self.last = ms;
        self.totals.accepted += 1;
        Pushed::Accepted
    }

    /// The rare part of [`Station::push`], out of line: checks the time of a
    /// sample that is not simply the next one in the open interval, counts a
    /// rejection, or closes intervals and opens the sample's.
    #[inline(never)]
    fn enter<F: FnMut(Event<'_, C, G>)>(
        &mut self,
        t: Timestamp,
        emit: &mut F,
    ) -> Result<(), Reject> {
        if let Some(reason) = self.check_time(t) {
            match reason {
                Reject::Duplicate => self.totals.duplicate += 1,
                Reject::Backward => self.totals.backward += 1,
                Reject::ClosedInterval => self.totals.closed_interval += 1,
                Reject::UnsupportedTime => self.totals.unsupported_time += 1,
            }
            if self.live {
                self.open.reject();
            } else {
                self.totals.unplaced += 1;
            }
            return Err(reason);
        }
        if t.millis() >= self.open_end {
            let k = self.layout.borrow().interval_of(t);
            self.close(&mut *emit);
            self.gap_to(k, emit);
            self.open.reset(self.layout.borrow(), k);
            self.live = true;
            self.open_end = self.layout.borrow().interval_start(k + 1).millis();
        }
        Ok(())
    }

    fn check_time(&self, t: Timestamp) -> Option<Reject> {
        if !t.is_supported() {
            return Some(Reject::UnsupportedTime);
        }
        let ms = t.millis();
        if ms == self.last {
            return Some(Reject::Duplicate);
        }
        if ms < self.last {
            return Some(Reject::Backward);
        }
        if self.live {
            // After the last accepted sample, which lies in the open interval.
            return None;
        }
        if self.cursor != i64::MIN && self.layout.borrow().interval_of(t) < self.cursor {
            Some(Reject::ClosedInterval)
        } else {
            None
        }
    }

    /// Reports intervals before `k` not yet reported as one gap.
    fn gap_to<F: FnMut(Event<'_, C, G>)>(&mut self, k: i64, emit: &mut F) {
        if self.cursor == i64::MIN {
            self.cursor = k;
        }
        let first = self.cursor;
        if k > first {
            let gap = Gap {
                first,
                count: (k - first) as u64,
            };
            let start = self.layout.borrow().interval_start(first);
            for r in &mut self.recovery {
                r.add_gap(
                    start,
                    gap.count,
                    self.layout.borrow().interval_ms,
                    self.layout.borrow().samples,
                );
            }
            emit(Event::Gap(gap));
        }
        self.cursor = k.max(first);
    }

    /// The calendar month of `t`, from a cache of the current month's span.
    fn month_of(&mut self, t: Timestamp) -> Month {
        if (self.month_from..self.month_to).contains(&t.millis()) {
            return self.month;
        }
        let m = t.month();
        self.month = m;
        self.month_from = m.start().millis();
        self.month_to = m.next().start().millis();
        m
    }

    /// Closes the open interval, if any, and hands it to `emit` (end of data).
    /// Later samples in that interval are rejected as [`Reject::ClosedInterval`].
    pub fn close<F: FnMut(Event<'_, C, G>)>(&mut self, mut emit: F) {
        self.open_end = i64::MIN;
        if !self.live {
            return;
        }
        let index = self.open.index;
        self.live = false;
        let month = self.month_of(self.layout.borrow().interval_start(index));
        self.cursor = index + 1;
        let records = self
            .layout
            .borrow()
            .screen(&mut self.screener, &mut self.open);
        for (r, rec) in self.recovery.iter_mut().zip(records.iter()) {
            r.add_interval_in(month, self.layout.borrow().samples, &rec.tally, passes(rec));
        }
        emit(Event::Closed(&self.open, &records));
    }

    /// Tells the station the time is `now` without a sample (a timer at an
    /// interval boundary): closes the open interval if it has ended, and reports
    /// intervals that have ended with no samples as a gap.
    pub fn tick<F: FnMut(Event<'_, C, G>)>(&mut self, now: Timestamp, mut emit: F) {
        if !now.is_supported() {
            return;
        }
        let k = self.layout.borrow().interval_of(now);
        if self.live && self.open.index < k {
            self.close(&mut emit);
        }
        if !self.live && self.cursor != i64::MIN {
            self.gap_to(k, &mut emit);
        }
    }
}
