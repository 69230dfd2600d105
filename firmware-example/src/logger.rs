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
//! The logger's state (the station, about 5 KiB for 8 channels, and a copy of
//! the interval last closed) lives in a [`LoggerSlot`], meant for a `static`:
//! on a 16 KiB part the stack is the scarce part of RAM, and static RAM is
//! counted by the linker. Rust builds a value on the stack before it moves it
//! into a static, so [`LoggerSlot::start_with`] takes care that the big
//! temporaries (the layout, 2.4 KiB, and the station) are never on the stack
//! together; copies of a closed interval go into the slot, not the stack.
//! `tools/stack_frames.py` lists the frames; the replay runs with the stack
//! below the statics (`memory/microbit.x`), so an overflow faults instead of
//! corrupting them.

use qc_core::wire::{self, RecordFrame, FRAME_LEN};
use qc_core::{Event, IntervalAcc, Layout, Pushed, Reading, Station, Timestamp};

/// The station of a slot: its layout first, then the station built from it.
/// `#[repr(u64)]` makes the empty variant all zero bytes, and leaves no
/// padding between the tag and a variant's fields (with padding there, the
/// compiler copies a variant through a temporary).
#[repr(u64)]
#[derive(Clone, Debug)]
#[allow(clippy::large_enum_variant)] // the point: one slot, filled once
enum StationSlot<const C: usize, const G: usize> {
    Empty,
    Staged(Layout<C>),
    Full(Station<C, G>),
}

/// Room for a copy of the interval the last push closed, until its frames are
/// written. (`#[repr(u64)]` for the same reasons as [`StationSlot`]; an
/// `Option` of it may use a niche, so that `None` is not all zero bytes.)
#[repr(u64)]
#[derive(Clone, Copy, Debug)]
#[allow(clippy::large_enum_variant)]
enum Closed<const C: usize, const G: usize> {
    Empty,
    Room(IntervalAcc<C, G>),
}

/// Storage for a logger of capacity `C` channels and `G` gust samples, meant
/// for a `static` (all zero bytes until started, so it lands in `.bss`).
#[derive(Clone, Debug)]
pub struct LoggerSlot<const C: usize, const G: usize> {
    station: StationSlot<C, G>,
    closed: Closed<C, G>,
}

impl<const C: usize, const G: usize> Default for LoggerSlot<C, G> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const C: usize, const G: usize> LoggerSlot<C, G> {
    /// An empty slot.
    pub const fn new() -> Self {
        LoggerSlot {
            station: StationSlot::Empty,
            closed: Closed::Empty,
        }
    }

    /// Starts a new logger in the slot (replacing any earlier one) with the
    /// layout `layout` makes, writing frames for every channel (see
    /// [`Logger::with_active`]); frame sequence numbers start at 0. Returns
    /// the error of `layout`, or `Ok(None)` if the slot could not be filled
    /// (which does not happen).
    ///
    /// `layout` should build the layout in its return place (end with the
    /// call of `Layout::new`, not convert its result). The work is done in
    /// steps that are not inlined, so that their temporaries never share the
    /// stack: the layout is made (on the stack) and stored in the slot; the
    /// station is built from the stored layout (on the stack, then copied into
    /// the slot); the room for closed intervals is made last.
    pub fn start_with<E>(
        &mut self,
        layout: impl FnOnce() -> Result<Layout<C>, E>,
    ) -> Result<Option<Logger<'_, C, G>>, E> {
        self.stage(layout)?;
        self.build_station();
        self.build_room();
        let LoggerSlot { station, closed } = self;
        Ok(match (station, closed) {
            (StationSlot::Full(station), Closed::Room(closed)) => Some(Logger {
                station,
                closed,
                pending: false,
                active: C.min(255) as u8,
                sequence: 0,
            }),
            _ => None,
        })
    }

    #[inline(never)]
    fn stage<E>(&mut self, layout: impl FnOnce() -> Result<Layout<C>, E>) -> Result<(), E> {
        // Bound by reference: a move out of the result would be one more
        // 2.4 KiB copy on the stack.
        let made = layout();
        match made {
            Ok(ref layout) => {
                self.station = StationSlot::Staged(*layout);
                Ok(())
            }
            Err(e) => Err(e),
        }
    }

    #[inline(never)]
    fn build_station(&mut self) {
        if let StationSlot::Staged(layout) = &self.station {
            self.station = new_slot(layout);
        }
    }

    #[inline(never)]
    fn build_room(&mut self) {
        if let StationSlot::Full(station) = &self.station {
            self.closed = new_room(station.layout());
        }
    }
}

// The constructors below are not inlined: each builds its value in its
// return place, so that a value is built on the stack at most once before it
// is copied into the slot.

#[inline(never)]
fn new_room<const C: usize, const G: usize>(layout: &Layout<C>) -> Closed<C, G> {
    Closed::Room(IntervalAcc::new(layout, 0))
}

#[inline(never)]
fn new_slot<const C: usize, const G: usize>(layout: &Layout<C>) -> StationSlot<C, G> {
    StationSlot::Full(new_station(layout))
}

#[inline(never)]
fn new_station<const C: usize, const G: usize>(layout: &Layout<C>) -> Station<C, G> {
    Station::new(*layout)
}

/// A running logger: a station in a [`LoggerSlot`] and the frame counter.
#[derive(Debug)]
pub struct Logger<'a, const C: usize, const G: usize> {
    station: &'a mut Station<C, G>,
    /// A copy of the interval the last push closed ...
    closed: &'a mut IntervalAcc<C, G>,
    /// ... if its frames are still to be written.
    pending: bool,
    /// Frames are written for channels `0..active`.
    active: u8,
    sequence: u32,
}

impl<const C: usize, const G: usize> Logger<'_, C, G> {
    /// Writes frames only for the first `active` channels (at most `C`): a
    /// station of fewer channels than the logger's capacity.
    pub fn with_active(mut self, active: usize) -> Self {
        self.active = active.min(C).min(255) as u8;
        self
    }

    /// The station.
    pub fn station(&self) -> &Station<C, G> {
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
    /// channel order. Stops writing at the first error of `write` and returns it.
    ///
    /// Not inlined, so that its temporaries take stack only while it runs.
    #[inline(never)]
    pub fn push<E>(
        &mut self,
        t: Timestamp,
        readings: &[Reading; C],
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<Pushed, E> {
        // A push closes at most one interval. It is copied out of the callback
        // and finished after the push, when the layout can be borrowed again.
        let (closed, pending) = (&mut *self.closed, &mut self.pending);
        let pushed = self.station.push(t, readings, |event| {
            if let Event::Closed(acc) = event {
                *closed = *acc;
                *pending = true;
            }
        });
        self.write_closed(write)?;
        Ok(pushed)
    }

    /// Closes the open interval (end of data) and writes its frames.
    #[inline(never)]
    pub fn close<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        let (closed, pending) = (&mut *self.closed, &mut self.pending);
        self.station.close(|event| {
            if let Event::Closed(acc) = event {
                *closed = *acc;
                *pending = true;
            }
        });
        self.write_closed(write)
    }

    /// Writes one frame per active channel of the interval just closed, if
    /// any. Intervals with no sample at all (gaps) write no frames.
    #[inline(never)]
    fn write_closed<E>(
        &mut self,
        write: &mut impl FnMut(&[u8; FRAME_LEN]) -> Result<(), E>,
    ) -> Result<(), E> {
        if !self.pending {
            return Ok(());
        }
        self.pending = false;
        let acc = &*self.closed;
        let layout = self.station.layout();
        let mut frame = [0u8; FRAME_LEN];
        let mut result = Ok(());
        for channel in 0..self.active() {
            if let Some(record) = layout.finish(acc, channel) {
                let f = RecordFrame {
                    sequence: self.sequence,
                    interval_start: layout.interval_start(acc.index()),
                    channel: channel as u8,
                    record,
                };
                wire::encode_record(&f, &mut frame);
                result = write(&frame);
                if result.is_err() {
                    break;
                }
                self.sequence = self.sequence.wrapping_add(1);
            }
        }
        result
    }
}
