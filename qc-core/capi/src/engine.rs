//! The safe half of the interface: what lives in the caller's memory, and the
//! loggers that run there, generic over the shape (channel capacity `C`, gust
//! capacity `G`). `lib.rs` turns the caller's pointers into references to
//! these types; nothing here is `unsafe`.

use core::mem::MaybeUninit;

use qc_core::wire::{self, ConfigStamp, RecordFrame, StateFrame, FRAME_LEN};
use qc_core::{
    config_fingerprint, ChannelConfig, Ended, Event, ImageError, Layout, Reading, Recovery,
    Sampler, Station, Timestamp,
};

use crate::status::tm_status;
use crate::types::{self, tm_channel_settings, tm_push_result, tm_reading, tm_station_settings};

/// Marks memory that holds a built layout ("TMLY").
pub(crate) const LAYOUT_MAGIC: u32 = 0x594C_4D54;
/// Marks memory that holds a started logger ("TMLG").
pub(crate) const LOGGER_MAGIC: u32 = 0x474C_4D54;

/// A layout in the caller's memory: the shape it was validated for, the
/// channels in use, their fingerprint, and the core's layout (channels past
/// `active` are unused `scalar(1.0)` slots, fed missing readings).
#[repr(C)]
pub(crate) struct LayoutMem<const C: usize> {
    pub head: LayoutHead,
    pub layout: Layout<C>,
}

/// The start of a layout block, the same for every shape.
#[repr(C)]
#[derive(Clone, Copy, Debug)]
pub(crate) struct LayoutHead {
    pub magic: u32,
    pub capacity: u8,
    pub gust: u8,
    pub active: u8,
    pub fingerprint: u32,
}

impl LayoutHead {
    /// Whether the block holds a layout built for the shape `C`, `G`.
    pub fn is_ready(&self, c: usize, g: usize) -> bool {
        self.magic == LAYOUT_MAGIC && usize::from(self.capacity) == c && usize::from(self.gust) == g
    }
}

impl<const C: usize> LayoutMem<C> {
    /// The head of an empty layout block (not yet valid: `magic` is 0); its
    /// layout is [`Layout::placeholder`] before a build, and may be none
    /// before or after a failed load ([`load_image`]).
    pub const EMPTY_HEAD: LayoutHead = LayoutHead {
        magic: 0,
        capacity: 0,
        gust: 0,
        active: 0,
        fingerprint: 0,
    };

    /// Validates the station into `self`, in place. On an error the block
    /// stays unusable (`magic` 0), and the channel the error names (or 255)
    /// is returned beside it.
    #[inline(never)]
    pub fn build<const G: usize>(
        &mut self,
        station: &tm_station_settings,
        channels: &[tm_channel_settings],
    ) -> Result<(), (tm_status, u8)> {
        self.head.magic = 0;
        if channels.is_empty() || channels.len() > C || C > 255 || G > 255 {
            return Err((tm_status::TM_CONFIG_CAPACITY, 255));
        }
        let station = types::station(station).map_err(|s| (s, 255))?;
        let mut configs = [ChannelConfig::scalar(1.0); C];
        for (i, (slot, c)) in configs.iter_mut().zip(channels).enumerate() {
            *slot = types::channel(c).map_err(|s| (s, i as u8))?;
        }
        let used = configs.get(..channels.len()).unwrap_or(&[]);
        let fingerprint = config_fingerprint(&station, used);
        self.layout
            .rebuild_no_reset::<G>(station, &configs)
            .map_err(types::config_error)?;
        self.head = LayoutHead {
            magic: LAYOUT_MAGIC,
            capacity: C as u8,
            gust: G as u8,
            active: channels.len() as u8,
            fingerprint,
        };
        Ok(())
    }
}

/// Start of a layout image ("TMCI"), before the core's image.
const IMAGE_MAGIC: [u8; 4] = *b"TMCI";
/// Version of this interface's part of a layout image.
const IMAGE_VERSION: u8 = 1;
/// Bytes of this interface's head of a layout image: the magic, the
/// version, the channels in use, two zero bytes, the fingerprint of the
/// channels in use (what the frames carry).
pub(crate) const IMAGE_HEAD: usize = 12;

/// Bytes of the layout image of shape `C` at most: this interface's head,
/// the core's image (`Layout::to_image`, at most `Layout::IMAGE_LEN`), and a
/// CRC-32 of all before it.
pub(crate) const fn image_len<const C: usize>() -> usize {
    IMAGE_HEAD + Layout::<C>::IMAGE_LEN + 4
}

impl<const C: usize> LayoutMem<C> {
    /// Writes the layout image of this built layout of gust capacity `G`
    /// into the start of `out`; returns its length.
    pub fn to_image<const G: usize>(&self, out: &mut [u8]) -> Result<usize, tm_status> {
        let len = image_len::<C>();
        let out = out.get_mut(..len).ok_or(tm_status::TM_ERR_SIZE)?;
        let (head, rest) = out.split_at_mut(IMAGE_HEAD);
        let [f0, f1, f2, f3] = self.head.fingerprint.to_le_bytes();
        let [m0, m1, m2, m3] = IMAGE_MAGIC;
        head.copy_from_slice(&[
            m0,
            m1,
            m2,
            m3,
            IMAGE_VERSION,
            self.head.active,
            0,
            0,
            f0,
            f1,
            f2,
            f3,
        ]);
        let core = self
            .layout
            .to_image::<G>(rest)
            .map_err(|_| tm_status::TM_ERR_SIZE)?;
        // The core's image is as long as its options make it (at most
        // `Layout::IMAGE_LEN`): the CRC follows it.
        let len = IMAGE_HEAD + core + 4;
        let (body, crc) = out
            .get_mut(..len)
            .and_then(|o| o.split_last_chunk_mut::<4>())
            .ok_or(tm_status::TM_ERR_SIZE)?;
        *crc = wire::crc32(body).to_le_bytes();
        Ok(len)
    }
}

/// Reads a layout image of shape `C`, `G` into a layout block: its head
/// `head` (already the empty head, `magic` 0) and its layout `slot`, which
/// holds no layout yet ([`Layout::load_image_into`] writes one: cleared
/// memory, no placeholder layout); no validation of the station runs. On an
/// error the block stays unusable (`magic` 0; `slot` may still hold no
/// layout: nothing reads the layout of a block without the mark).
#[inline(never)]
pub fn load_image<const C: usize, const G: usize>(
    head: &mut LayoutHead,
    slot: &mut MaybeUninit<Layout<C>>,
    image: &[u8],
) -> Result<(), tm_status> {
    let Some((body, crc)) = image.split_last_chunk::<4>() else {
        return Err(tm_status::TM_ERR_IMAGE);
    };
    let Some((h, core)) = body.split_first_chunk::<IMAGE_HEAD>() else {
        return Err(tm_status::TM_ERR_IMAGE);
    };
    let [m0, m1, m2, m3, version, active, _, _, f0, f1, f2, f3] = *h;
    if [m0, m1, m2, m3] != IMAGE_MAGIC || version != IMAGE_VERSION {
        return Err(tm_status::TM_ERR_IMAGE);
    }
    // The core checks its own part (format, shape, length, CRC) too;
    // this CRC covers the head.
    match Layout::<C>::load_image_into::<G>(slot, core) {
        Ok(_) => {}
        Err(ImageError::Shape) => return Err(tm_status::TM_ERR_IMAGE_SHAPE),
        Err(ImageError::Crc) => return Err(tm_status::TM_ERR_IMAGE_CRC),
        Err(_) => return Err(tm_status::TM_ERR_IMAGE),
    }
    if wire::crc32(body) != u32::from_le_bytes(*crc) {
        return Err(tm_status::TM_ERR_IMAGE_CRC);
    }
    if active == 0 || usize::from(active) > C {
        return Err(tm_status::TM_ERR_IMAGE);
    }
    *head = LayoutHead {
        magic: LAYOUT_MAGIC,
        capacity: C as u8,
        gust: G as u8,
        active,
        fingerprint: u32::from_le_bytes([f0, f1, f2, f3]),
    };
    Ok(())
}

/// What a logger's frames carry besides the interval, and the frame counter.
#[repr(C)]
#[derive(Clone, Copy, Debug)]
pub(crate) struct Meta {
    /// Channels that write frames (the layout's channels in use).
    pub active: u8,
    /// Stamped on every frame.
    pub fingerprint: u32,
    /// The next frame's sequence number (wraps).
    pub sequence: u32,
}

/// What every logger does, whatever its shape: the entry points reach the
/// logger in the caller's memory through this trait, so only the shapes a
/// program starts are linked into it.
pub(crate) trait Engine {
    /// Adds one sample (the caller has checked that `readings` holds one
    /// reading per active channel and `out` a frame per active channel;
    /// this checks their kinds); the frames of an interval it closes go to
    /// `out`, what it did to `result` (all zero before). Called only with the
    /// logger's own type (`Self: Sized`: not in the table of the other
    /// methods), so that it is inlined into its caller, `push_logger`.
    fn push(
        &mut self,
        meta: &mut Meta,
        t: Timestamp,
        readings: &[tm_reading],
        out: &mut [u8],
        result: &mut tm_push_result,
    ) -> Result<(), tm_status>
    where
        Self: Sized;
    /// Closes the open interval (end of data); its frames go to `out`.
    fn close(&mut self, meta: &mut Meta, out: &mut [u8]) -> tm_push_result;
    /// The running recovery of a channel (record loggers).
    fn recovery(&self, channel: usize) -> Result<Recovery, tm_status>;
    /// Samples pushed, by outcome.
    fn totals(&self) -> qc_core::PushTotals;
}

/// The caller's readings as the core's row of `C`, their kinds checked
/// (their count, one per active channel, and the room for frames are the
/// caller's checks: `push_logger`). A station that fills its shape
/// (`n == C`, the usual case) hands the caller's row to the core as it is
/// ([`crate::core_row`]: no conversion, no copy): `Ok(Some(row))`. One of
/// fewer channels gets `Ok(None)`, and its caller a copy from [`padded`].
#[inline(always)]
fn row<const C: usize>(src: &[tm_reading]) -> Result<Option<&[Reading; C]>, tm_status> {
    match <&[tm_reading; C]>::try_from(src) {
        Ok(full) => crate::core_row(full)
            .map(Some)
            .ok_or(tm_status::TM_ERR_READING),
        Err(_) => Ok(None),
    }
}

/// Runs `f` on the caller's readings as the core's row of `C` ([`row`]: as
/// they are when the station fills its shape; else a copy padded with
/// missing readings), after checking their kinds. The push of either kind
/// of logger.
#[inline(always)]
fn with_row<const C: usize>(
    src: &[tm_reading],
    f: impl FnOnce(&[Reading; C]),
) -> Result<(), tm_status> {
    let pad;
    f(match row::<C>(src)? {
        Some(full) => full,
        None => {
            pad = padded::<C>(src)?;
            &pad
        }
    });
    Ok(())
}

/// The readings of a station with fewer channels than its shape, the slots
/// after them missing (out of line: the rare case).
#[inline(never)]
fn padded<const C: usize>(src: &[tm_reading]) -> Result<[Reading; C], tm_status> {
    let mut out = [Reading::Missing; C];
    for (slot, r) in out.iter_mut().zip(src) {
        *slot = types::reading(r).ok_or(tm_status::TM_ERR_READING)?;
    }
    Ok(out)
}

/// Checks that `out` holds a frame per channel.
fn room(meta: &Meta, out: &[u8]) -> Result<(), tm_status> {
    if out.len() < usize::from(meta.active) * FRAME_LEN {
        return Err(tm_status::TM_ERR_SIZE);
    }
    Ok(())
}

/// Writes one frame per active channel into `out`, each filled by
/// `encode(channel, sequence, frame)`; returns how many. Each is encoded in
/// a frame of this function's (on the stack, word-aligned) and then copied
/// to the caller's buffer: encoded there directly, at an alignment the
/// compiler cannot know, every multi-byte field would be stored a byte at a
/// time (on a Cortex-M0, 700 B more code in the state frames' encoding).
fn frames(
    meta: &mut Meta,
    out: &mut [u8],
    mut encode: impl FnMut(usize, u32, &mut [u8; FRAME_LEN]),
) -> u32 {
    let mut n = 0;
    let mut frame = [0u8; FRAME_LEN];
    for (channel, chunk) in out
        .chunks_exact_mut(FRAME_LEN)
        .take(usize::from(meta.active))
        .enumerate()
    {
        encode(channel, meta.sequence, &mut frame);
        chunk.copy_from_slice(&frame);
        meta.sequence = meta.sequence.wrapping_add(1);
        n += 1;
    }
    n
}

/// The record frames of a closed interval (gaps write none).
#[inline(never)]
fn records<const C: usize, const G: usize>(
    layout: &Layout<C>,
    meta: &mut Meta,
    out: &mut [u8],
    result: &mut tm_push_result,
    event: Event<'_, C, G>,
) {
    let Event::Closed(acc, recs) = event else {
        return;
    };
    let interval_start = layout.interval_start(acc.index());
    let stamp = ConfigStamp {
        channels: meta.active,
        fingerprint: meta.fingerprint,
    };
    result.interval_start_ms = interval_start.millis();
    result.frames = frames(meta, out, |channel, sequence, frame| {
        if let Some(record) = recs.get(channel) {
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

/// The state frames of a closed interval (gaps write none).
#[inline(never)]
fn states<const C: usize, const G: usize>(
    meta: &mut Meta,
    out: &mut [u8],
    result: &mut tm_push_result,
    ended: Ended<'_, C, G>,
) {
    let Ended::Interval(layout, acc) = ended else {
        return;
    };
    let interval_start = layout.interval_start(acc.index());
    result.interval_start_ms = interval_start.millis();
    let (channels, fingerprint) = (meta.active, meta.fingerprint);
    result.frames = frames(meta, out, |channel, sequence, frame| {
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

/// A logger in the caller's memory, after its header: its layout (in the
/// caller's layout block) and what it runs, a [`Station`] (record logger) or
/// a [`Sampler`] (state logger).
#[repr(C)]
pub(crate) struct Body<const C: usize, K> {
    pub layout: &'static Layout<C>,
    pub core: K,
}

/// A record logger: the whole station (finishes, screens and counts the
/// running recovery on board).
pub(crate) type RecordBody<const C: usize, const G: usize> =
    Body<C, Station<C, G, &'static Layout<C>>>;
/// A state logger: the station's sampling half.
pub(crate) type StateBody<const C: usize, const G: usize> =
    Body<C, Sampler<C, G, &'static Layout<C>>>;

impl<const C: usize, const G: usize> Engine for RecordBody<C, G> {
    #[inline]
    fn push(
        &mut self,
        meta: &mut Meta,
        t: Timestamp,
        src: &[tm_reading],
        out: &mut [u8],
        result: &mut tm_push_result,
    ) -> Result<(), tm_status> {
        let layout = self.layout;
        with_row::<C>(src, |readings| {
            let pushed = self
                .core
                .push(t, readings, |e| records(layout, meta, out, result, e));
            result.outcome = types::outcome(pushed);
        })
    }

    fn close(&mut self, meta: &mut Meta, out: &mut [u8]) -> tm_push_result {
        let layout = self.layout;
        let mut result = tm_push_result::default();
        if room(meta, out).is_ok() {
            self.core
                .close(|e| records(layout, meta, out, &mut result, e));
        }
        result
    }

    fn recovery(&self, channel: usize) -> Result<Recovery, tm_status> {
        self.core
            .recovery()
            .get(channel)
            .copied()
            .ok_or(tm_status::TM_ERR_CHANNEL)
    }

    fn totals(&self) -> qc_core::PushTotals {
        *self.core.totals()
    }
}

impl<const C: usize, const G: usize> Engine for StateBody<C, G> {
    #[inline]
    fn push(
        &mut self,
        meta: &mut Meta,
        t: Timestamp,
        src: &[tm_reading],
        out: &mut [u8],
        result: &mut tm_push_result,
    ) -> Result<(), tm_status> {
        with_row::<C>(src, |readings| {
            let pushed = self
                .core
                .push(t, readings, |e| states(meta, out, result, e));
            result.outcome = types::outcome(pushed);
        })
    }

    fn close(&mut self, meta: &mut Meta, out: &mut [u8]) -> tm_push_result {
        let mut result = tm_push_result::default();
        if room(meta, out).is_ok() {
            self.core.close(|e| states(meta, out, &mut result, e));
        }
        result
    }

    fn recovery(&self, _channel: usize) -> Result<Recovery, tm_status> {
        Err(tm_status::TM_ERR_NO_RECOVERY)
    }

    fn totals(&self) -> qc_core::PushTotals {
        *self.core.totals()
    }
}
