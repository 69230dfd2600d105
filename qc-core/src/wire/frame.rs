//! What record and state frames share: the 128-byte frame, its sync marker,
//! the fields at the same places in both (version, kind or form, channel,
//! sequence, interval start, counts, spikes, CRC), and [`WireError`].

use core::fmt;

use crate::channel::{Kind, Tally};
use crate::crc::crc32;
use crate::time::Timestamp;

/// Why bytes were not a good frame or header.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum WireError {
    /// The bytes do not start with the sync marker or magic.
    BadMagic,
    /// The stored CRC-32 does not match the bytes.
    BadCrc,
    /// A format version this code does not read.
    UnsupportedVersion(u8),
    /// A reserved field is not 0.
    Reserved,
    /// A kind code other than 0, 1, 2.
    BadKind(u8),
    /// An absent-reason code above 6.
    BadAbsent(u8),
    /// Flag bits that name no flag.
    UnknownFlags(u16),
    /// A reading tag other than 0, 1, 2, 3.
    BadTag(u8),
    /// A sample file header with 0 channels.
    NoChannels,
    /// A sample file header whose length field does not match its channel count.
    HeaderLength {
        /// The channel count in the header.
        channels: u8,
        /// The header length in the header, bytes.
        len: u16,
    },
    /// A station with more channels than the reader (or the format) holds.
    TooManyChannels {
        /// Channels the reader holds.
        capacity: usize,
        /// Channels in the station.
        found: usize,
    },
    /// A channel configuration refers to a channel the station does not have
    /// (speed link, screening partner or above, icing channels).
    ChannelIndex {
        /// The index referred to.
        index: u8,
        /// Channels in the station.
        channels: u8,
    },
    /// The input ends inside a header or frame.
    Truncated,
    /// The output buffer is shorter than the frame.
    BufferTooSmall {
        /// Bytes the frame needs.
        needed: usize,
    },
}

impl fmt::Display for WireError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            WireError::BadMagic => f.write_str("sync marker or magic not found"),
            WireError::BadCrc => f.write_str("CRC-32 mismatch"),
            WireError::UnsupportedVersion(v) => write!(f, "unsupported format version {v}"),
            WireError::Reserved => f.write_str("reserved field is not 0"),
            WireError::BadKind(k) => write!(f, "unknown channel kind code {k}"),
            WireError::BadAbsent(a) => write!(f, "unknown absent-reason code {a}"),
            WireError::UnknownFlags(b) => write!(f, "unknown flag bits {b:#06x}"),
            WireError::BadTag(t) => write!(f, "unknown reading tag {t}"),
            WireError::NoChannels => f.write_str("the station has no channels"),
            WireError::HeaderLength { channels, len } => write!(
                f,
                "header length {len} does not match its {channels} channels"
            ),
            WireError::TooManyChannels { capacity, found } => write!(
                f,
                "the station has {found} channels, at most {capacity} fit"
            ),
            WireError::ChannelIndex { index, channels } => write!(
                f,
                "a channel refers to channel {index}, but the station has {channels} channels"
            ),
            WireError::Truncated => f.write_str("input ends inside a frame"),
            WireError::BufferTooSmall { needed } => {
                write!(f, "output buffer too small, frame needs {needed} bytes")
            }
        }
    }
}

impl core::error::Error for WireError {}

/// Length of one record frame, bytes.
pub const FRAME_LEN: usize = 128;

/// The sync marker that starts every record frame (chosen to be neither erased
/// flash `FF` nor zeroed memory, and not ASCII).
pub const SYNC: [u8; 4] = [0xD3, 0x7A, 0x1C, 0x5E];

pub(super) const O_VERSION: usize = 4;
pub(super) const O_KIND: usize = 5;
pub(super) const O_CHANNEL: usize = 6;
pub(super) const O_RESERVED_A: usize = 7;
pub(super) const O_SEQUENCE: usize = 8;
pub(super) const O_START: usize = 12;
pub(super) const O_POSSIBLE: usize = 20;
pub(super) const O_VALID: usize = 24;
pub(super) const O_MISSING: usize = 28;
pub(super) const O_OUT_OF_RANGE: usize = 32;
pub(super) const O_REJECTED: usize = 36;
pub(super) const O_SPIKES: usize = 40;
pub(super) const O_FLAGS: usize = 44;
pub(super) const O_ABSENT: usize = 46;
pub(super) const O_RESERVED_B: usize = 51;
pub(super) const O_STATS: usize = 52;
pub(super) const O_CRC: usize = 124;

pub(super) fn put<const N: usize>(out: &mut [u8; FRAME_LEN], at: usize, bytes: [u8; N]) {
    if let Some(dst) = out.get_mut(at..at + N) {
        dst.copy_from_slice(&bytes);
    }
}

pub(super) fn get<const N: usize>(b: &[u8; FRAME_LEN], at: usize) -> [u8; N] {
    let mut v = [0u8; N];
    if let Some(src) = b.get(at..at + N) {
        v.copy_from_slice(src);
    }
    v
}

pub(super) fn get_u32(b: &[u8; FRAME_LEN], at: usize) -> u32 {
    u32::from_le_bytes(get(b, at))
}

/// Checks a frame's sync marker, CRC and version (one of `versions`).
pub(super) fn check_frame(b: &[u8; FRAME_LEN], versions: &[u8]) -> Result<(), WireError> {
    if get::<4>(b, 0) != SYNC {
        return Err(WireError::BadMagic);
    }
    if crc32(&b[..O_CRC]) != get_u32(b, O_CRC) {
        return Err(WireError::BadCrc);
    }
    if !versions.contains(&b[O_VERSION]) {
        return Err(WireError::UnsupportedVersion(b[O_VERSION]));
    }
    Ok(())
}

/// Clears `out` and writes the fields both kinds of frame hold at the same
/// places: sync marker, version, kind or form (byte 5), `(sequence, interval
/// start, channel)`, the sample counts and the spike count.
pub(super) fn start_frame(
    out: &mut [u8; FRAME_LEN],
    version: u8,
    kind: u8,
    (sequence, start, channel): (u32, Timestamp, u8),
    tally: &Tally,
    spikes: u32,
) {
    out.fill(0);
    put(out, 0, SYNC);
    out[O_VERSION] = version;
    out[O_KIND] = kind;
    out[O_CHANNEL] = channel;
    put(out, O_SEQUENCE, sequence.to_le_bytes());
    put(out, O_START, start.millis().to_le_bytes());
    put_tally(out, tally);
    put(out, O_SPIKES, spikes.to_le_bytes());
}

/// Writes the CRC-32 of a frame's bytes before it.
pub(super) fn seal(out: &mut [u8; FRAME_LEN]) {
    let crc = crc32(&out[..O_CRC]);
    put(out, O_CRC, crc.to_le_bytes());
}

/// The sample counts, at the same place in both kinds of frame.
pub(super) fn put_tally(out: &mut [u8; FRAME_LEN], t: &Tally) {
    put(out, O_VALID, t.valid.to_le_bytes());
    put(out, O_MISSING, t.missing.to_le_bytes());
    put(out, O_OUT_OF_RANGE, t.out_of_range.to_le_bytes());
    put(out, O_REJECTED, t.rejected.to_le_bytes());
}

pub(super) fn get_tally(b: &[u8; FRAME_LEN]) -> Tally {
    Tally {
        valid: get_u32(b, O_VALID),
        missing: get_u32(b, O_MISSING),
        out_of_range: get_u32(b, O_OUT_OF_RANGE),
        rejected: get_u32(b, O_REJECTED),
        flagged: 0,
        excluded: 0,
    }
}

/// The kind byte of a record frame and of a sample file's channel part.
pub(super) const fn kind_code(k: Kind) -> u8 {
    match k {
        Kind::Speed => 0,
        Kind::Direction => 1,
        Kind::Scalar => 2,
    }
}

pub(super) const fn kind_of(code: u8) -> Option<Kind> {
    match code {
        0 => Some(Kind::Speed),
        1 => Some(Kind::Direction),
        2 => Some(Kind::Scalar),
        _ => None,
    }
}
