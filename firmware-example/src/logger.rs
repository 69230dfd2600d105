//! A logger: samples in, one frame (`qc_core::wire`) per channel for every
//! interval it closes out. Two kinds, one [`Logger`] generic over what it runs
//! ([`Core`]): a [`RecordLogger`] runs a `qc_core::Station` and writes record
//! frames (finished, screened statistics); a [`StateLogger`] runs only the
//! station's sampling half, a `qc_core::Sampler`, and writes state frames
//! (each channel's exact interval state), which `tenmin decode --config`
//! finishes on the PC into the same records, bit for bit. Both kinds of frame
//! are stamped with the channel count and the configuration's fingerprint, so
//! that `tenmin decode` refuses a station file that is not the logger's.
//!
//! This one file is compiled into the firmware (`firmware_example::logger`), into
//! the host example `qc-core/examples/replay_frames.rs` and into the host test
//! `host-cli/tests/firmware_io.rs` (both by `#[path]`), so the logger and the PC
//! write their record logs with the same code.
//!
//! A station may use fewer channels than the logger's capacity `C`: the slots
//! after them hold `ChannelConfig::scalar(1.0)`, are fed `Reading::Missing`, and
//! write no frames.
//!
//! # Memory
//!
//! The station holds its layout by reference. A logger with a fixed
//! configuration validates its layout at compile time into a `static` (in
//! flash: `crate::scenario::LAYOUT`); one that reads its configuration at run
//! time builds it once into a [`LayoutSlot`]. The station's running state (about
//! 2 KiB for 8 channels) lives in a [`LoggerSlot`], meant for a `static`: on a
//! 16 KiB part the stack is the scarce part of RAM, and static RAM is counted by
//! the linker. Frames are written while the station hands out the closed
//! interval, so no copy of it is kept. `tools/stack_frames.py` lists the stack
//! frames; the replay runs with the stack below the statics
//! (`memory/microbit.x`), so an overflow faults instead of corrupting them.

use qc_core::wire::{self, ConfigStamp, RecordFrame, StateFrame, FRAME_LEN};
use qc_core::{Ended, Event, Layout, Pushed, Reading, Sampler, Station, Timestamp};

/// A station whose layout lives elsewhere (in flash, or in a [`LayoutSlot`]).
pub type LayoutStation<'a, const C: usize, const G: usize> = Station<C, G, &'a Layout<C>>;

/// A sampler whose layout lives elsewhere: the sampling half of a station, for
/// a logger that leaves finishing to a PC.
pub type LayoutSampler<'a, const C: usize, const G: usize> = Sampler<C, G, &'a Layout<C>>;

/// Storage for a layout built at run time, meant for a `static` (all zero
/// bytes until filled, so it lands in `.bss`; `#[repr(u64)]` makes the empty
/// variant zero bytes and leaves no padding between the tag and the layout).
#[repr(u64)]
#[derive(Clone, Debug)]
#[allow(clippy::large_enum_variant)] // the point: one slot, filled once
pub enum LayoutSlot<const C: usize> {
    /// Nothing yet.
    Empty,
    /// A validated layout.
    Full(Layout<C>),
}

impl<const C: usize> Default for LayoutSlot<C> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const C: usize> LayoutSlot<C> {
    /// An empty slot.
    pub const fn new() -> Self {
        LayoutSlot::Empty
    }

    /// Fills the slot with a layout that `build` validates in place (with
    /// `Layout::rebuild`, so that no second layout is on the stack), or
    /// returns `build`'s error (the slot is then empty). [`LayoutSlot::get`]
    /// hands it out.
    pub fn fill<E>(
        &mut self,
        build: impl FnOnce(&mut Layout<C>) -> Result<(), E>,
    ) -> Result<(), E> {
        self.clear_to_placeholder();
        let result = match self {
            LayoutSlot::Full(layout) => build(layout),
            LayoutSlot::Empty => Ok(()),
        };
        if result.is_err() {
            *self = LayoutSlot::Empty;
        }
        result
    }

    /// Not inlined: whatever temporary the compiler makes for the placeholder
    /// is gone from the stack before the layout is validated.
    #[inline(never)]
    fn clear_to_placeholder(&mut self) {
        *self = LayoutSlot::Full(Layout::PLACEHOLDER);
    }

    /// The layout, once filled.
    pub const fn get(&self) -> Option<&Layout<C>> {
        match self {
            LayoutSlot::Full(layout) => Some(layout),
            LayoutSlot::Empty => None,
        }
    }
}

/// Storage for a logger's running state, meant for a `static` (all zero bytes
/// until started, so it lands in `.bss`; `#[repr(u64)]` as for
/// [`LayoutSlot`]). One slot serves a logger that can run either way; a logger
/// that only ever sends states uses a [`SamplerSlot`] (half the RAM).
#[repr(u64)]
#[derive(Clone, Debug)]
#[allow(clippy::large_enum_variant)]
pub enum LoggerSlot<'a, const C: usize, const G: usize> {
    /// Not started.
    Empty,
    /// A running station (a [`RecordLogger`]).
    Full(LayoutStation<'a, C, G>),
    /// A running sampler (a [`StateLogger`]).
    States(LayoutSampler<'a, C, G>),
}

impl<const C: usize, const G: usize> Default for LoggerSlot<'_, C, G> {
    fn default() -> Self {
        Self::new()
    }
}

impl<'a, const C: usize, const G: usize> LoggerSlot<'a, C, G> {
    /// An empty slot.
    pub const fn new() -> Self {
        LoggerSlot::Empty
    }

    /// Starts a new record logger of `layout` in the slot (replacing any
    /// earlier one), writing frames for every channel, stamped with
    /// `layout.fingerprint()` (see [`Logger::with_active`],
    /// [`Logger::with_fingerprint`]); frame sequence numbers start at 0. `None` only
    /// if the slot could not be filled (which does not happen).
    pub fn start(&mut self, layout: &'a Layout<C>) -> Option<RecordLogger<'_, 'a, C, G>> {
        put_station(self, layout);
        match self {
            LoggerSlot::Full(station) => Some(Logger::new(station, layout)),
            LoggerSlot::Empty | LoggerSlot::States(_) => None,
        }
    }

    /// Starts a new state logger of `layout` in the slot (replacing any
    /// earlier logger), as [`SamplerSlot::start`] does.
    pub fn start_states(&mut self, layout: &'a Layout<C>) -> Option<StateLogger<'_, 'a, C, G>> {
        put_states(self, layout);
        match self {
            LoggerSlot::States(sampler) => Some(Logger::new(sampler, layout)),
            LoggerSlot::Empty | LoggerSlot::Full(_) => None,
        }
    }
}

/// Not inlined: whatever temporary the compiler makes for the new station
/// takes stack only while this runs, not in the caller's frame.
#[inline(never)]
fn put_station<'a, const C: usize, const G: usize>(
    slot: &mut LoggerSlot<'a, C, G>,
    layout: &'a Layout<C>,
) {
    *slot = LoggerSlot::Full(Station::new(layout));
}

/// Not inlined, as [`put_station`].
#[inline(never)]
fn put_states<'a, const C: usize, const G: usize>(
    slot: &mut LoggerSlot<'a, C, G>,
    layout: &'a Layout<C>,
) {
    *slot = LoggerSlot::States(Sampler::new(layout));
}

/// Storage for a state logger's sampler, meant for a `static` (as
/// [`LoggerSlot`], 1 KiB for 8 channels instead of 2).
#[repr(u64)]
#[derive(Clone, Debug)]
#[allow(clippy::large_enum_variant)]
pub enum SamplerSlot<'a, const C: usize, const G: usize> {
    /// Not started.
    Empty,
    /// A running sampler.
    Full(LayoutSampler<'a, C, G>),
}

impl<const C: usize, const G: usize> Default for SamplerSlot<'_, C, G> {
    fn default() -> Self {
        Self::new()
    }
}

impl<'a, const C: usize, const G: usize> SamplerSlot<'a, C, G> {
    /// An empty slot.
    pub const fn new() -> Self {
        SamplerSlot::Empty
    }

    /// Starts a new state logger of `layout` in the slot, writing state frames
    /// for every channel, stamped with `layout.fingerprint()` (see
    /// [`Logger::with_active`], [`Logger::with_fingerprint`]); sequence
    /// numbers start at 0. `None` only if the slot could not be filled (which
    /// does not happen).
    pub fn start(&mut self, layout: &'a Layout<C>) -> Option<StateLogger<'_, 'a, C, G>> {
        put_sampler(self, layout);
        match self {
            SamplerSlot::Full(sampler) => Some(Logger::new(sampler, layout)),
            SamplerSlot::Empty => None,
        }
    }
}

/// Not inlined, as [`put_station`].
#[inline(never)]
fn put_sampler<'a, const C: usize, const G: usize>(
    slot: &mut SamplerSlot<'a, C, G>,
    layout: &'a Layout<C>,
) {
    *slot = SamplerSlot::Full(Sampler::new(layout));
}

/// What a [`Logger`] runs: a station (record frames) or a sampler (state
/// frames).
pub trait Core<const C: usize> {
    /// Adds one sample; the frames of the intervals it closes go through `out`.
    fn push_frames<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        out: &mut Out<'_, '_, C, E>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Pushed;
    /// Closes the open interval (end of data); its frames go through `out`.
    fn close_frames<E>(
        &mut self,
        out: &mut Out<'_, '_, C, E>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    );
}

impl<const C: usize, const G: usize> Core<C> for LayoutStation<'_, C, G> {
    #[inline]
    fn push_frames<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        out: &mut Out<'_, '_, C, E>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Pushed {
        self.push(t, readings, |event| out.records(event, write))
    }
    fn close_frames<E>(
        &mut self,
        out: &mut Out<'_, '_, C, E>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) {
        self.close(|event| out.records(event, write));
    }
}

impl<const C: usize, const G: usize> Core<C> for LayoutSampler<'_, C, G> {
    #[inline]
    fn push_frames<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        out: &mut Out<'_, '_, C, E>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Pushed {
        self.push(t, readings, |ended| out.states(ended, write))
    }
    fn close_frames<E>(
        &mut self,
        out: &mut Out<'_, '_, C, E>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) {
        self.close(|ended| out.states(ended, write));
    }
}

/// A running logger: what it runs (`K`, in a slot), its layout, and the frame
/// counter.
#[derive(Debug)]
pub struct Logger<'s, 'a, const C: usize, K> {
    core: &'s mut K,
    meta: Meta<'a, C>,
}

/// What the frames need besides the interval: passed to the callback as one
/// pointer (the per-sample path sets up nothing more).
#[derive(Debug)]
struct Meta<'a, const C: usize> {
    layout: &'a Layout<C>,
    /// Frames are written for channels `0..active`.
    active: u8,
    /// Stamped on every frame, with `active`.
    fingerprint: u32,
    sequence: u32,
}

/// A logger that finishes on board and writes record frames.
pub type RecordLogger<'s, 'a, const C: usize, const G: usize> =
    Logger<'s, 'a, C, LayoutStation<'a, C, G>>;

/// A logger that samples only and writes state frames for a PC to finish.
pub type StateLogger<'s, 'a, const C: usize, const G: usize> =
    Logger<'s, 'a, C, LayoutSampler<'a, C, G>>;

impl<'s, 'a, const C: usize, K: Core<C>> Logger<'s, 'a, C, K> {
    /// A logger of `core`, whose layout is `layout`, writing frames for every
    /// channel, stamped with `layout.fingerprint()`.
    fn new(core: &'s mut K, layout: &'a Layout<C>) -> Self {
        Logger {
            core,
            meta: Meta {
                layout,
                active: C.min(255) as u8,
                fingerprint: layout.fingerprint(),
                sequence: 0,
            },
        }
    }

    /// Writes frames only for the first `active` channels (at most `C`): a
    /// station of fewer channels than the logger's capacity.
    pub fn with_active(mut self, active: usize) -> Self {
        self.meta.active = active.min(C).min(255) as u8;
        self
    }

    /// Stamps frames (record and state) with `fingerprint`: for a station of fewer
    /// channels than the logger's capacity, `qc_core::config_fingerprint` of
    /// the channels in use (what a PC computes from that station).
    pub fn with_fingerprint(mut self, fingerprint: u32) -> Self {
        self.meta.fingerprint = fingerprint;
        self
    }

    /// What the logger runs: its station or sampler.
    pub fn core(&self) -> &K {
        self.core
    }

    /// Channels that write frames.
    pub const fn active(&self) -> usize {
        self.meta.active as usize
    }

    /// Frames written so far.
    pub const fn frames(&self) -> u32 {
        self.meta.sequence
    }

    /// Adds one sample; every interval it closes goes to `write` as frames, in
    /// channel order, while the station or sampler hands it out. Stops writing
    /// at the first error of `write` and returns it.
    ///
    /// Not inlined, so that its temporaries take stack only while it runs.
    #[inline(never)]
    pub fn push<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        let mut out = Out {
            meta: &mut self.meta,
            result: Ok(()),
        };
        let pushed = self.core.push_frames(t, readings, &mut out, write);
        out.result.map(|()| pushed)
    }

    /// Closes the open interval (end of data) and writes its frames.
    #[inline(never)]
    pub fn close<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        let mut out = Out {
            meta: &mut self.meta,
            result: Ok(()),
        };
        self.core.close_frames(&mut out, write);
        out.result
    }
}

/// The frame writer of one push: what the station's or sampler's callback
/// needs, borrowed apart from it.
#[derive(Debug)]
pub struct Out<'f, 'a, const C: usize, E> {
    meta: &'f mut Meta<'a, C>,
    result: Result<(), E>,
}

impl<const C: usize, E> Out<'_, '_, C, E> {
    /// Writes one frame per active channel, each filled by `encode(channel,
    /// sequence, frame)`, counting them; after an error, nothing more.
    fn frames(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
        mut encode: impl FnMut(usize, u32, &mut [u8; FRAME_LEN]),
    ) {
        if self.result.is_err() {
            return;
        }
        let mut frame = [0u8; FRAME_LEN];
        for channel in 0..usize::from(self.meta.active) {
            encode(channel, self.meta.sequence, &mut frame);
            self.result = write(&frame);
            if self.result.is_err() {
                return;
            }
            self.meta.sequence = self.meta.sequence.wrapping_add(1);
        }
    }

    /// The record frames of a closed interval. Gaps (intervals with no sample
    /// at all) write no frames.
    #[inline(never)]
    fn records<const G: usize>(
        &mut self,
        event: Event<'_, C, G>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) {
        let Event::Closed(acc, records) = event else {
            return;
        };
        let interval_start = self.meta.layout.interval_start(acc.index());
        let stamp = ConfigStamp {
            channels: self.meta.active,
            fingerprint: self.meta.fingerprint,
        };
        self.frames(write, |channel, sequence, frame| {
            if let Some(record) = records.get(channel) {
                let f = RecordFrame {
                    sequence,
                    interval_start,
                    channel: channel as u8,
                    config: Some(stamp),
                    record: *record,
                };
                wire::encode_record(&f, frame);
            }
        });
    }

    /// The state frames of a closed interval. Gaps write no frames.
    #[inline(never)]
    fn states<const G: usize>(
        &mut self,
        ended: Ended<'_, C, G>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) {
        let Ended::Interval(_, acc) = ended else {
            return;
        };
        let interval_start = self.meta.layout.interval_start(acc.index());
        let (channels, fingerprint) = (self.meta.active, self.meta.fingerprint);
        self.frames(write, |channel, sequence, frame| {
            if let Some(state) = acc.state(channel) {
                let f = StateFrame {
                    sequence,
                    interval_start,
                    channel: channel as u8,
                    channels,
                    fingerprint,
                    state,
                };
                wire::encode_state(&f, frame);
            }
        });
    }
}
