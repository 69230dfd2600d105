//! A logger: a `qc_core::Station` that writes one record-log frame
//! (`qc_core::wire`) per channel for every interval it closes.
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

use qc_core::wire::{self, RecordFrame, StateFrame, FRAME_LEN};
use qc_core::{Ended, Event, Layout, Pushed, Reading, Sampler, Station, Timestamp};

/// A station whose layout lives elsewhere (in flash, or in a [`LayoutSlot`]).
pub type LayoutStation<'a, const C: usize, const G: usize> = Station<C, G, &'a Layout<C>>;

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

/// Storage for a logger's station, meant for a `static` (all zero bytes until
/// started, so it lands in `.bss`; `#[repr(u64)]` as for [`LayoutSlot`]).
#[repr(u64)]
#[derive(Clone, Debug)]
#[allow(clippy::large_enum_variant)]
pub enum LoggerSlot<'a, const C: usize, const G: usize> {
    /// Not started.
    Empty,
    /// A running station.
    Full(LayoutStation<'a, C, G>),
    /// A running sampler, for a state logger ([`LoggerSlot::start_states`]):
    /// one slot serves a logger that can run either way.
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

    /// Starts a new logger of `layout` in the slot (replacing any earlier
    /// one), writing frames for every channel (see [`Logger::with_active`]);
    /// frame sequence numbers start at 0. `None` only if the slot could not be
    /// filled (which does not happen).
    pub fn start(&mut self, layout: &'a Layout<C>) -> Option<Logger<'_, 'a, C, G>> {
        put_station(self, layout);
        match self {
            LoggerSlot::Full(station) => Some(Logger {
                station,
                layout,
                active: C.min(255) as u8,
                sequence: 0,
            }),
            LoggerSlot::Empty | LoggerSlot::States(_) => None,
        }
    }

    /// Starts a new state logger of `layout` in the slot (replacing any
    /// earlier logger), as [`SamplerSlot::start`] does.
    pub fn start_states(&mut self, layout: &'a Layout<C>) -> Option<StateLogger<'_, 'a, C, G>> {
        put_states(self, layout);
        match self {
            LoggerSlot::States(sampler) => Some(StateLogger {
                sampler,
                active: C.min(255) as u8,
                fingerprint: layout.fingerprint(),
                sequence: 0,
            }),
            LoggerSlot::Empty | LoggerSlot::Full(_) => None,
        }
    }
}

/// Not inlined, as [`put_station`].
#[inline(never)]
fn put_states<'a, const C: usize, const G: usize>(
    slot: &mut LoggerSlot<'a, C, G>,
    layout: &'a Layout<C>,
) {
    *slot = LoggerSlot::States(Sampler::new(layout));
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

/// A running logger: a station in a [`LoggerSlot`], its layout and the frame
/// counter.
#[derive(Debug)]
pub struct Logger<'s, 'a, const C: usize, const G: usize> {
    station: &'s mut LayoutStation<'a, C, G>,
    layout: &'a Layout<C>,
    /// Frames are written for channels `0..active`.
    active: u8,
    sequence: u32,
}

impl<'a, const C: usize, const G: usize> Logger<'_, 'a, C, G> {
    /// Writes frames only for the first `active` channels (at most `C`): a
    /// station of fewer channels than the logger's capacity.
    pub fn with_active(mut self, active: usize) -> Self {
        self.active = active.min(C).min(255) as u8;
        self
    }

    /// The station.
    pub fn station(&self) -> &LayoutStation<'a, C, G> {
        self.station
    }

    /// Channels that write frames.
    pub const fn active(&self) -> usize {
        self.active as usize
    }

    /// Frames written so far.
    pub const fn frames(&self) -> u32 {
        self.sequence
    }

    /// Adds one sample; every interval it closes goes to `write` as frames, in
    /// channel order, while the station hands it out. Stops writing at the
    /// first error of `write` and returns it.
    ///
    /// Not inlined, so that its temporaries take stack only while it runs.
    #[inline(never)]
    pub fn push<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        let mut frames = Frames {
            layout: self.layout,
            out: Out {
                active: self.active,
                sequence: &mut self.sequence,
                result: Ok(()),
            },
        };
        let pushed = self
            .station
            .push(t, readings, |event| frames.event(event, write));
        frames.out.result.map(|()| pushed)
    }

    /// Closes the open interval (end of data) and writes its frames.
    #[inline(never)]
    pub fn close<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        let mut frames = Frames {
            layout: self.layout,
            out: Out {
                active: self.active,
                sequence: &mut self.sequence,
                result: Ok(()),
            },
        };
        self.station.close(|event| frames.event(event, write));
        frames.out.result
    }
}

/// The frame writer of one push: what the station's callback needs, borrowed
/// apart from the station.
struct Frames<'f, 'a, const C: usize, E> {
    layout: &'a Layout<C>,
    out: Out<'f, E>,
}

/// Where the frames of one push go: the channels that write frames, the frame
/// counter, and the first error of the writer.
struct Out<'f, E> {
    active: u8,
    sequence: &'f mut u32,
    result: Result<(), E>,
}

impl<E> Out<'_, E> {
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
        for channel in 0..usize::from(self.active) {
            encode(channel, *self.sequence, &mut frame);
            self.result = write(&frame);
            if self.result.is_err() {
                return;
            }
            *self.sequence = self.sequence.wrapping_add(1);
        }
    }
}

impl<const C: usize, E> Frames<'_, '_, C, E> {
    /// Writes one frame per active channel of a closed interval (after an
    /// error, nothing more). Gaps (intervals with no sample at all) write no
    /// frames.
    #[inline(never)]
    fn event<const G: usize>(
        &mut self,
        event: Event<'_, C, G>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) {
        let Event::Closed(acc, records) = event else {
            return;
        };
        let interval_start = self.layout.interval_start(acc.index());
        self.out.frames(write, |channel, sequence, frame| {
            if let Some(record) = records.get(channel) {
                let f = RecordFrame {
                    sequence,
                    interval_start,
                    channel: channel as u8,
                    record: *record,
                };
                wire::encode_record(&f, frame);
            }
        });
    }
}

/// A sampler whose layout lives elsewhere: the sampling half of a station, for
/// a logger that leaves finishing to a PC.
pub type LayoutSampler<'a, const C: usize, const G: usize> = Sampler<C, G, &'a Layout<C>>;

/// Storage for a state logger's sampler, meant for a `static` (as
/// [`LoggerSlot`]).
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
    /// [`StateLogger::with_active`]); sequence numbers start at 0. `None` only
    /// if the slot could not be filled (which does not happen).
    pub fn start(&mut self, layout: &'a Layout<C>) -> Option<StateLogger<'_, 'a, C, G>> {
        put_sampler(self, layout);
        match self {
            SamplerSlot::Full(sampler) => Some(StateLogger {
                sampler,
                active: C.min(255) as u8,
                fingerprint: layout.fingerprint(),
                sequence: 0,
            }),
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

/// A running state logger: a sampler in a [`SamplerSlot`] that writes one
/// state frame (`qc_core::wire::encode_state`) per channel for every interval
/// it closes, for a PC to finish (`tenmin decode --config`). Neither
/// finishing nor screening runs here, so their code is not in the firmware.
#[derive(Debug)]
pub struct StateLogger<'s, 'a, const C: usize, const G: usize> {
    sampler: &'s mut LayoutSampler<'a, C, G>,
    /// Frames are written for channels `0..active`.
    active: u8,
    fingerprint: u32,
    sequence: u32,
}

impl<'a, const C: usize, const G: usize> StateLogger<'_, 'a, C, G> {
    /// Writes frames only for the first `active` channels (at most `C`), whose
    /// configuration has the fingerprint `fingerprint`
    /// (`qc_core::config_fingerprint` of those channels): a station of fewer
    /// channels than the logger's capacity.
    pub fn with_active(mut self, active: usize, fingerprint: u32) -> Self {
        self.active = active.min(C).min(255) as u8;
        self.fingerprint = fingerprint;
        self
    }

    /// The sampler.
    pub fn sampler(&self) -> &LayoutSampler<'a, C, G> {
        self.sampler
    }

    /// Frames written so far.
    pub const fn frames(&self) -> u32 {
        self.sequence
    }

    /// Adds one sample; every interval it closes goes to `write` as state
    /// frames, in channel order. Stops writing at the first error of `write`
    /// and returns it.
    #[inline(never)]
    pub fn push<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        let mut frames = StateFrames {
            fingerprint: self.fingerprint,
            out: Out {
                active: self.active,
                sequence: &mut self.sequence,
                result: Ok(()),
            },
        };
        let pushed = self
            .sampler
            .push(t, readings, |ended| frames.ended(ended, write));
        frames.out.result.map(|()| pushed)
    }

    /// Closes the open interval (end of data) and writes its frames.
    #[inline(never)]
    pub fn close<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        let mut frames = StateFrames {
            fingerprint: self.fingerprint,
            out: Out {
                active: self.active,
                sequence: &mut self.sequence,
                result: Ok(()),
            },
        };
        self.sampler.close(|ended| frames.ended(ended, write));
        frames.out.result
    }
}

/// The state frame writer of one push.
struct StateFrames<'f, E> {
    fingerprint: u32,
    out: Out<'f, E>,
}

impl<E> StateFrames<'_, E> {
    /// Writes one state frame per active channel of a closed interval (after
    /// an error, nothing more). Gaps write no frames.
    #[inline(never)]
    fn ended<const C: usize, const G: usize>(
        &mut self,
        ended: Ended<'_, C, G>,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) {
        let Ended::Interval(layout, acc) = ended else {
            return;
        };
        let interval_start = layout.interval_start(acc.index());
        let (channels, fingerprint) = (self.out.active, self.fingerprint);
        self.out.frames(write, |channel, sequence, frame| {
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

/// A logger that writes frames as samples arrive: [`Logger`] (record frames)
/// or [`StateLogger`] (state frames), for a loop that runs either.
pub trait FrameLogger<const C: usize> {
    /// Adds one sample; frames of the intervals it closes go to `write`.
    fn push_sample<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E>;
    /// Closes the open interval (end of data) and writes its frames.
    fn close_all<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E>;
    /// Frames written so far.
    fn frame_count(&self) -> u32;
}

impl<const C: usize, const G: usize> FrameLogger<C> for Logger<'_, '_, C, G> {
    fn push_sample<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        self.push(t, readings, write)
    }
    fn close_all<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        self.close(write)
    }
    fn frame_count(&self) -> u32 {
        self.frames()
    }
}

impl<const C: usize, const G: usize> FrameLogger<C> for StateLogger<'_, '_, C, G> {
    fn push_sample<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        self.push(t, readings, write)
    }
    fn close_all<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        self.close(write)
    }
    fn frame_count(&self) -> u32 {
        self.frames()
    }
}
