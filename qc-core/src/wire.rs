//! Binary frames: the crash-safe interval record log, and sample files for replay.
//!
//! Two formats, both little-endian, both protected by CRC-32 ([`crc32`]):
//!
//! - **Record log**: append-only, fixed-size frames of [`FRAME_LEN`] bytes, one
//!   per finished interval of one channel ([`RecordFrame`]), for flash or an SD
//!   card. [`encode_record`] writes one frame into a caller's buffer; [`scan`]
//!   walks a log, resynchronises on the sync marker after damage, and reports
//!   good frames, damaged spans, a torn tail and erased flash ([`Span`]).
//! - **Sample file**: a header and variable-length sample frames, each one
//!   timestamped sample of every channel ([`encode_sample`], [`decode_sample`],
//!   [`SampleReader`]). The host writes them; a logger under test replays them.
//!
//! ```
//! use qc_core::wire::{self, RecordFrame, Span, FRAME_LEN};
//! use qc_core::{ChannelConfig, Event, Layout, Reading, Station, StationConfig, Timestamp};
//!
//! let layout = Layout::new::<3>(StationConfig::ten_minute_1hz(), [ChannelConfig::speed(0.1)])?;
//! let mut station: Station<1, 3> = Station::new(layout);
//! let mut log = Vec::new();
//! let mut on_event = |event: Event<'_, 1, 3>| {
//!     if let Event::Closed(acc) = event {
//!         let frame = RecordFrame {
//!             sequence: (log.len() / FRAME_LEN) as u32,
//!             interval_start: layout.interval_start(acc.index()),
//!             channel: 0,
//!             record: layout.finish(acc, 0).unwrap(),
//!         };
//!         let mut bytes = [0u8; FRAME_LEN];
//!         wire::encode_record(&frame, &mut bytes);
//!         log.extend_from_slice(&bytes);
//!     }
//! };
//! for i in 0..1200 {
//!     let t = Timestamp::from_millis(1_700_000_400_000 + i * 1000);
//!     station.push(t, &[Reading::Value(5.0)], &mut on_event);
//! }
//! station.close(&mut on_event);
//! assert_eq!(log.len(), 2 * FRAME_LEN);
//! // Power failed while the second frame was written: only its first 90 bytes
//! // reached the card. The first frame still reads, the rest is reported torn.
//! let spans: Vec<Span> = wire::scan(&log[..FRAME_LEN + 90]).collect();
//! assert!(matches!(spans[0], Span::Frame { offset: 0, frame } if frame.record.tally.valid == 600));
//! assert_eq!(spans[1], Span::Torn { offset: FRAME_LEN, len: 90 });
//! # Ok::<(), qc_core::ConfigError>(())
//! ```
//!
//! # Record frame layout
//!
//! Every frame is [`FRAME_LEN`] = 128 bytes, so frames never straddle a flash
//! page of 256, 512 or 4096 bytes when the log starts on a page boundary.
//!
//! | offset | bytes | field |
//! |---:|---:|---|
//! | 0 | 4 | sync marker [`SYNC`] = `D3 7A 1C 5E` |
//! | 4 | 1 | format version, [`RECORD_VERSION`] = 1 |
//! | 5 | 1 | kind: 0 speed, 1 direction, 2 scalar |
//! | 6 | 1 | channel index in the station |
//! | 7 | 1 | reserved, 0 |
//! | 8 | 4 | sequence number, u32 (the writer counts frames; wraps) |
//! | 12 | 8 | interval start, i64 ms since 1970-01-01T00:00Z |
//! | 20 | 4 | samples possible at the nominal rate, u32 |
//! | 24 | 4 | valid samples, u32 |
//! | 28 | 4 | missing samples, u32 |
//! | 32 | 4 | out-of-range samples, u32 |
//! | 36 | 4 | samples rejected for their timestamp, u32 |
//! | 40 | 4 | spikes, u32 |
//! | 44 | 2 | flag bits, u16 (bit `n` is the [`Flag`] with discriminant `n`) |
//! | 46 | 5 | absent-reason codes of the 9 statistics, one 4-bit code each: statistic `i` in byte `46 + i / 2`, low nibble for even `i`; the tenth nibble is 0 |
//! | 51 | 1 | reserved, 0 |
//! | 52 | 72 | the 9 statistics, each an IEEE-754 `f64` bit pattern (0 when absent), in [`STAT_ORDER`] order: mean, sd, min, max, gust, ti, resultant length, resultant speed, resultant direction |
//! | 124 | 4 | CRC-32 of bytes 0 to 123 |
//!
//! Absent-reason codes: 0 the value is present; 1 not applicable; 2 no valid
//! samples; 3 no full gust window; 4 vectors cancel; 5 no speed/direction
//! pairs; 6 zero mean ([`Absent`]).
//!
//! A frame is good when its sync marker and CRC match and every field is in its
//! domain (known version, kind, absent codes and flags; reserved bits 0). A good
//! frame decodes to exactly the [`RecordFrame`] that was encoded, bit for bit.
//! Gaps (intervals without any sample) write no frames: a reader finds them as
//! missing interval starts.
//!
//! # Crash safety
//!
//! The writer only appends. If power fails during a write, at most the frame
//! being written is lost: the frames before it are complete, and after a restart
//! the writer appends after the torn bytes; [`scan`] reports the torn bytes as one
//! damaged span and resynchronises on the next sync marker. CRC-32 detects every
//! error of 1 to 3 bits, and every burst of up to 32 bits, in a frame of this
//! size (a property of the IEEE 802.3 polynomial, from memory), so a damaged
//! frame is reported, not decoded wrongly. Never-written flash (all `0xFF`) is
//! reported as [`Span::Erased`], not as damage.
//!
//! # Sample file layout
//!
//! A header of [`SAMPLE_HEADER_LEN`] = 8 bytes, then one frame per sample:
//!
//! | offset | bytes | field |
//! |---:|---:|---|
//! | 0 | 4 | magic [`SAMPLE_MAGIC`] = ASCII `TMSF` |
//! | 4 | 1 | format version, [`SAMPLE_VERSION`] = 1 |
//! | 5 | 1 | channel count `C`, 1 to 255 |
//! | 6 | 2 | reserved, 0 |
//!
//! | part | bytes | field |
//! |---|---:|---|
//! | time | 8 | sample time, i64 ms since 1970-01-01T00:00Z |
//! | reading, once per channel | 1 | tag: 0 missing, 1 value, 2 counts |
//! | | 8 or 4 or 0 | value: `f64` bit pattern (tag 1); counts: `i32` (tag 2); nothing (tag 0) |
//! | check | 4 | CRC-32 of the frame's bytes before it |
//!
//! A sample frame is 12 to [`sample_frame_max_len`]`(C)` = `12 + 9 C` bytes.
//!
//! # Panics
//!
//! None: every function here returns a value or an error for any input bytes.
//! Nothing allocates.

use core::fmt;

use crate::channel::{Absent, ChannelRecord, Kind, Reading, Stat, Tally};
#[cfg(doc)]
use crate::flags::Flag;
use crate::flags::Flags;
use crate::time::Timestamp;

// ---------------------------------------------------------------------------
// CRC-32

/// CRC-32 nibble table for the reflected IEEE 802.3 polynomial 0xEDB88320.
const CRC_TABLE: [u32; 16] = {
    let mut table = [0u32; 16];
    let mut i = 0;
    while i < 16 {
        let mut c = i as u32;
        let mut k = 0;
        while k < 4 {
            c = if c & 1 != 0 {
                (c >> 1) ^ 0xEDB8_8320
            } else {
                c >> 1
            };
            k += 1;
        }
        table[i] = c;
        i += 1;
    }
    table
};

/// CRC-32 (IEEE 802.3, reflected polynomial 0xEDB88320, initial value and final
/// XOR all ones): the CRC of zlib, PNG and Ethernet, catalogued as
/// CRC-32/ISO-HDLC. Uses a 16-entry table (64 bytes of flash), two lookups a byte.
pub fn crc32(data: &[u8]) -> u32 {
    let mut c = !0u32;
    for &b in data {
        c ^= u32::from(b);
        c = (c >> 4) ^ CRC_TABLE[(c & 0xF) as usize];
        c = (c >> 4) ^ CRC_TABLE[(c & 0xF) as usize];
    }
    !c
}

// ---------------------------------------------------------------------------
// Errors

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
    /// A reading tag other than 0, 1, 2.
    BadTag(u8),
    /// A sample file header with 0 channels, or a different count than expected.
    ChannelCount {
        /// The count the reader was built for.
        expected: u8,
        /// The count in the header.
        found: u8,
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
            WireError::ChannelCount { expected, found } => {
                write!(f, "channel count {found}, expected {expected}")
            }
            WireError::Truncated => f.write_str("input ends inside a frame"),
            WireError::BufferTooSmall { needed } => {
                write!(f, "output buffer too small, frame needs {needed} bytes")
            }
        }
    }
}

impl core::error::Error for WireError {}

// ---------------------------------------------------------------------------
// Record frames

/// Length of one record frame, bytes.
pub const FRAME_LEN: usize = 128;

/// The sync marker that starts every record frame (chosen to be neither erased
/// flash `FF` nor zeroed memory, and not ASCII).
pub const SYNC: [u8; 4] = [0xD3, 0x7A, 0x1C, 0x5E];

/// The record frame format version this code writes and reads.
pub const RECORD_VERSION: u8 = 1;

/// Statistics of a [`ChannelRecord`] in frame order.
pub const STAT_ORDER: [&str; 9] = [
    "mean",
    "sd",
    "min",
    "max",
    "gust",
    "ti",
    "resultant_length",
    "resultant_speed",
    "resultant_direction",
];

const O_VERSION: usize = 4;
const O_KIND: usize = 5;
const O_CHANNEL: usize = 6;
const O_RESERVED_A: usize = 7;
const O_SEQUENCE: usize = 8;
const O_START: usize = 12;
const O_POSSIBLE: usize = 20;
const O_VALID: usize = 24;
const O_MISSING: usize = 28;
const O_OUT_OF_RANGE: usize = 32;
const O_REJECTED: usize = 36;
const O_SPIKES: usize = 40;
const O_FLAGS: usize = 44;
const O_ABSENT: usize = 46;
const O_RESERVED_B: usize = 51;
const O_STATS: usize = 52;
const O_CRC: usize = 124;

/// One finished interval of one channel, as the record log holds it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RecordFrame {
    /// The writer's frame counter (wraps at 2^32).
    pub sequence: u32,
    /// Start of the interval.
    pub interval_start: Timestamp,
    /// Channel index in the station.
    pub channel: u8,
    /// The channel's finished statistics.
    pub record: ChannelRecord,
}

fn stats_of(r: &ChannelRecord) -> [Stat; 9] {
    [
        r.mean,
        r.sd,
        r.min,
        r.max,
        r.gust,
        r.ti,
        r.resultant_length,
        r.resultant_speed,
        r.resultant_direction,
    ]
}

const fn kind_code(k: Kind) -> u8 {
    match k {
        Kind::Speed => 0,
        Kind::Direction => 1,
        Kind::Scalar => 2,
    }
}

const fn kind_of(code: u8) -> Option<Kind> {
    match code {
        0 => Some(Kind::Speed),
        1 => Some(Kind::Direction),
        2 => Some(Kind::Scalar),
        _ => None,
    }
}

const fn absent_code(a: Absent) -> u8 {
    match a {
        Absent::NotApplicable => 1,
        Absent::NoValidSamples => 2,
        Absent::NoFullWindow => 3,
        Absent::VectorsCancel => 4,
        Absent::NoPairs => 5,
        Absent::ZeroMean => 6,
    }
}

const fn absent_of(code: u8) -> Option<Absent> {
    match code {
        1 => Some(Absent::NotApplicable),
        2 => Some(Absent::NoValidSamples),
        3 => Some(Absent::NoFullWindow),
        4 => Some(Absent::VectorsCancel),
        5 => Some(Absent::NoPairs),
        6 => Some(Absent::ZeroMean),
        _ => None,
    }
}

fn put<const N: usize>(out: &mut [u8; FRAME_LEN], at: usize, bytes: [u8; N]) {
    if let Some(dst) = out.get_mut(at..at + N) {
        dst.copy_from_slice(&bytes);
    }
}

fn get<const N: usize>(b: &[u8; FRAME_LEN], at: usize) -> [u8; N] {
    let mut v = [0u8; N];
    if let Some(src) = b.get(at..at + N) {
        v.copy_from_slice(src);
    }
    v
}

fn get_u32(b: &[u8; FRAME_LEN], at: usize) -> u32 {
    u32::from_le_bytes(get(b, at))
}

/// Writes `frame` into `out` as one record frame (layout in the module docs).
pub fn encode_record(frame: &RecordFrame, out: &mut [u8; FRAME_LEN]) {
    let r = &frame.record;
    out.fill(0);
    put(out, 0, SYNC);
    out[O_VERSION] = RECORD_VERSION;
    out[O_KIND] = kind_code(r.kind);
    out[O_CHANNEL] = frame.channel;
    put(out, O_SEQUENCE, frame.sequence.to_le_bytes());
    put(out, O_START, frame.interval_start.millis().to_le_bytes());
    put(out, O_POSSIBLE, r.n_possible.to_le_bytes());
    put(out, O_VALID, r.tally.valid.to_le_bytes());
    put(out, O_MISSING, r.tally.missing.to_le_bytes());
    put(out, O_OUT_OF_RANGE, r.tally.out_of_range.to_le_bytes());
    put(out, O_REJECTED, r.tally.rejected.to_le_bytes());
    put(out, O_SPIKES, r.spikes.to_le_bytes());
    put(out, O_FLAGS, r.flags.bits().to_le_bytes());
    let mut absent = [0u8; 5];
    for (i, s) in stats_of(r).iter().enumerate() {
        let (code, bits) = match *s {
            Stat::Value(v) => (0, v.to_bits()),
            Stat::Absent(a) => (absent_code(a), 0),
        };
        if let Some(slot) = absent.get_mut(i / 2) {
            *slot |= code << (4 * (i % 2));
        }
        put(out, O_STATS + 8 * i, bits.to_le_bytes());
    }
    put(out, O_ABSENT, absent);
    let crc = crc32(&out[..O_CRC]);
    put(out, O_CRC, crc.to_le_bytes());
}

/// Reads one record frame, checking its sync marker, CRC and every field.
pub fn decode_record(b: &[u8; FRAME_LEN]) -> Result<RecordFrame, WireError> {
    if get::<4>(b, 0) != SYNC {
        return Err(WireError::BadMagic);
    }
    if crc32(&b[..O_CRC]) != get_u32(b, O_CRC) {
        return Err(WireError::BadCrc);
    }
    if b[O_VERSION] != RECORD_VERSION {
        return Err(WireError::UnsupportedVersion(b[O_VERSION]));
    }
    let kind = kind_of(b[O_KIND]).ok_or(WireError::BadKind(b[O_KIND]))?;
    let absent: [u8; 5] = get(b, O_ABSENT);
    if b[O_RESERVED_A] != 0 || b[O_RESERVED_B] != 0 || absent[4] >> 4 != 0 {
        return Err(WireError::Reserved);
    }
    let flag_bits = u16::from_le_bytes(get(b, O_FLAGS));
    let flags = Flags::from_bits(flag_bits);
    if flags.bits() != flag_bits {
        return Err(WireError::UnknownFlags(flag_bits));
    }
    let mut stats = [Stat::Absent(Absent::NotApplicable); 9];
    for (i, s) in stats.iter_mut().enumerate() {
        let code = absent.get(i / 2).map_or(0, |a| (a >> (4 * (i % 2))) & 0xF);
        let bits = u64::from_le_bytes(get(b, O_STATS + 8 * i));
        *s = if code == 0 {
            Stat::Value(f64::from_bits(bits))
        } else {
            let a = absent_of(code).ok_or(WireError::BadAbsent(code))?;
            if bits != 0 {
                return Err(WireError::Reserved);
            }
            Stat::Absent(a)
        };
    }
    let [mean, sd, min, max, gust, ti, resultant_length, resultant_speed, resultant_direction] =
        stats;
    Ok(RecordFrame {
        sequence: get_u32(b, O_SEQUENCE),
        interval_start: Timestamp::from_millis(i64::from_le_bytes(get(b, O_START))),
        channel: b[O_CHANNEL],
        record: ChannelRecord {
            kind,
            n_possible: get_u32(b, O_POSSIBLE),
            tally: Tally {
                valid: get_u32(b, O_VALID),
                missing: get_u32(b, O_MISSING),
                out_of_range: get_u32(b, O_OUT_OF_RANGE),
                rejected: get_u32(b, O_REJECTED),
            },
            mean,
            sd,
            min,
            max,
            gust,
            ti,
            resultant_length,
            resultant_speed,
            resultant_direction,
            spikes: get_u32(b, O_SPIKES),
            flags,
        },
    })
}

/// What [`Scanner`] found at a place in a log.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Span {
    /// A good frame at byte `offset`.
    Frame {
        /// Byte offset of the frame in the log.
        offset: usize,
        /// The decoded frame.
        frame: RecordFrame,
    },
    /// `len` bytes from `offset` that hold no good frame, followed by a good frame.
    Damaged {
        /// Byte offset of the span.
        offset: usize,
        /// Length of the span, bytes.
        len: usize,
    },
    /// Bytes at the end of the log, shorter than a frame and holding no good
    /// frame: usually an append cut short by a reset or power loss.
    Torn {
        /// Byte offset of the span.
        offset: usize,
        /// Length of the span, bytes.
        len: usize,
    },
    /// A span of only `0xFF` bytes (never-written flash), not counted as damage.
    Erased {
        /// Byte offset of the span.
        offset: usize,
        /// Length of the span, bytes.
        len: usize,
    },
}

/// Counts of what a [`Scanner`] has reported so far.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ScanSummary {
    /// Good frames.
    pub frames: u64,
    /// Damaged spans (including a torn tail).
    pub damaged_spans: u64,
    /// Bytes in damaged spans (including a torn tail).
    pub damaged_bytes: u64,
    /// Bytes of erased flash.
    pub erased_bytes: u64,
}

/// Walks a record log; see [`scan`].
#[derive(Clone, Debug)]
pub struct Scanner<'a> {
    log: &'a [u8],
    pos: usize,
    summary: ScanSummary,
}

/// An iterator over the [`Span`]s of a record log, in order, covering every
/// byte exactly once. It never allocates and never panics.
pub fn scan(log: &[u8]) -> Scanner<'_> {
    Scanner {
        log,
        pos: 0,
        summary: ScanSummary::default(),
    }
}

impl<'a> Scanner<'a> {
    /// What has been reported so far (all of the log once the iterator is done).
    pub const fn summary(&self) -> ScanSummary {
        self.summary
    }

    /// The good frame at `at`, if there is one.
    fn frame_at(&self, at: usize) -> Option<RecordFrame> {
        let bytes = self.log.get(at..at.checked_add(FRAME_LEN)?)?;
        let b: &[u8; FRAME_LEN] = bytes.try_into().ok()?;
        decode_record(b).ok()
    }
}

impl Iterator for Scanner<'_> {
    type Item = Span;

    fn next(&mut self) -> Option<Span> {
        let start = self.pos;
        if start >= self.log.len() {
            return None;
        }
        if let Some(frame) = self.frame_at(start) {
            self.pos = start + FRAME_LEN;
            self.summary.frames += 1;
            return Some(Span::Frame {
                offset: start,
                frame,
            });
        }
        // Resynchronise: the next offset where a good frame starts, or the end.
        let mut next = start + 1;
        while next < self.log.len() {
            if self.log.get(next) == Some(&SYNC[0]) && self.frame_at(next).is_some() {
                break;
            }
            next += 1;
        }
        let next = next.min(self.log.len());
        let len = next - start;
        self.pos = next;
        let bytes = self.log.get(start..next).unwrap_or(&[]);
        if bytes.iter().all(|&b| b == 0xFF) {
            self.summary.erased_bytes += len as u64;
            return Some(Span::Erased { offset: start, len });
        }
        self.summary.damaged_spans += 1;
        self.summary.damaged_bytes += len as u64;
        if next == self.log.len() && len < FRAME_LEN {
            Some(Span::Torn { offset: start, len })
        } else {
            Some(Span::Damaged { offset: start, len })
        }
    }
}

// ---------------------------------------------------------------------------
// Sample files

/// Magic at the start of a sample file.
pub const SAMPLE_MAGIC: [u8; 4] = *b"TMSF";

/// The sample file format version this code writes and reads.
pub const SAMPLE_VERSION: u8 = 1;

/// Length of the sample file header, bytes.
pub const SAMPLE_HEADER_LEN: usize = 8;

const TAG_MISSING: u8 = 0;
const TAG_VALUE: u8 = 1;
const TAG_COUNTS: u8 = 2;

/// The longest sample frame of `channels` channels (every reading a value).
pub const fn sample_frame_max_len(channels: usize) -> usize {
    12 + 9 * channels
}

/// Writes a sample file header for `channels` channels.
pub fn encode_sample_header(channels: u8, out: &mut [u8; SAMPLE_HEADER_LEN]) {
    *out = [0; SAMPLE_HEADER_LEN];
    out[..4].copy_from_slice(&SAMPLE_MAGIC);
    out[4] = SAMPLE_VERSION;
    out[5] = channels;
}

/// Reads a sample file header and returns its channel count.
pub fn decode_sample_header(bytes: &[u8]) -> Result<u8, WireError> {
    let h: &[u8; SAMPLE_HEADER_LEN] = bytes
        .get(..SAMPLE_HEADER_LEN)
        .and_then(|h| h.try_into().ok())
        .ok_or(WireError::Truncated)?;
    if h[..4] != SAMPLE_MAGIC {
        return Err(WireError::BadMagic);
    }
    if h[4] != SAMPLE_VERSION {
        return Err(WireError::UnsupportedVersion(h[4]));
    }
    if h[6] != 0 || h[7] != 0 {
        return Err(WireError::Reserved);
    }
    if h[5] == 0 {
        return Err(WireError::ChannelCount {
            expected: 1,
            found: 0,
        });
    }
    Ok(h[5])
}

/// Writes one sample frame (`t` and one reading per channel) at the start of
/// `out`, and returns its length.
pub fn encode_sample(
    t: Timestamp,
    readings: &[Reading],
    out: &mut [u8],
) -> Result<usize, WireError> {
    let needed = 12
        + readings
            .iter()
            .map(|r| match r {
                Reading::Value(_) => 9,
                Reading::Counts(_) => 5,
                Reading::Missing => 1,
            })
            .sum::<usize>();
    let Some(buf) = out.get_mut(..needed) else {
        return Err(WireError::BufferTooSmall { needed });
    };
    let mut w = Writer { buf, at: 0 };
    w.put(&t.millis().to_le_bytes());
    for r in readings {
        match *r {
            Reading::Value(v) => {
                w.put(&[TAG_VALUE]);
                w.put(&v.to_bits().to_le_bytes());
            }
            Reading::Counts(k) => {
                w.put(&[TAG_COUNTS]);
                w.put(&k.to_le_bytes());
            }
            Reading::Missing => w.put(&[TAG_MISSING]),
        }
    }
    let crc = crc32(w.buf.get(..w.at).unwrap_or(&[]));
    w.put(&crc.to_le_bytes());
    Ok(needed)
}

struct Writer<'a> {
    buf: &'a mut [u8],
    at: usize,
}

impl Writer<'_> {
    fn put(&mut self, bytes: &[u8]) {
        if let Some(dst) = self.buf.get_mut(self.at..self.at + bytes.len()) {
            dst.copy_from_slice(bytes);
        }
        self.at += bytes.len();
    }
}

struct Reader<'a> {
    buf: &'a [u8],
    at: usize,
}

impl Reader<'_> {
    fn take<const N: usize>(&mut self) -> Option<[u8; N]> {
        let src = self.buf.get(self.at..self.at.checked_add(N)?)?;
        self.at += N;
        src.try_into().ok()
    }
}

/// What [`decode_sample`] found at the start of its input.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum SampleDecode<const C: usize> {
    /// A good sample frame of `len` bytes.
    Sample {
        /// Sample time.
        time: Timestamp,
        /// One reading per channel.
        readings: [Reading; C],
        /// Frame length, bytes.
        len: usize,
    },
    /// The input ends inside the frame: give it more bytes (or, at the end of
    /// the file, the file is truncated).
    Incomplete,
    /// The frame is not good.
    Invalid(WireError),
}

/// Reads one sample frame of `C` channels from the start of `input`.
pub fn decode_sample<const C: usize>(input: &[u8]) -> SampleDecode<C> {
    let mut r = Reader { buf: input, at: 0 };
    let Some(time) = r.take::<8>() else {
        return SampleDecode::Incomplete;
    };
    let mut readings = [Reading::Missing; C];
    for slot in readings.iter_mut() {
        let Some([tag]) = r.take::<1>() else {
            return SampleDecode::Incomplete;
        };
        *slot = match tag {
            TAG_MISSING => Reading::Missing,
            TAG_VALUE => match r.take::<8>() {
                Some(v) => Reading::Value(f64::from_bits(u64::from_le_bytes(v))),
                None => return SampleDecode::Incomplete,
            },
            TAG_COUNTS => match r.take::<4>() {
                Some(k) => Reading::Counts(i32::from_le_bytes(k)),
                None => return SampleDecode::Incomplete,
            },
            other => return SampleDecode::Invalid(WireError::BadTag(other)),
        };
    }
    let body = r.at;
    let Some(crc) = r.take::<4>() else {
        return SampleDecode::Incomplete;
    };
    if crc32(input.get(..body).unwrap_or(&[])) != u32::from_le_bytes(crc) {
        return SampleDecode::Invalid(WireError::BadCrc);
    }
    SampleDecode::Sample {
        time: Timestamp::from_millis(i64::from_le_bytes(time)),
        readings,
        len: r.at,
    }
}

/// A problem at a place in a sample file.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SampleError {
    /// Byte offset, from the start of the file, of the header or frame at fault.
    pub offset: usize,
    /// What is wrong there.
    pub error: WireError,
}

impl fmt::Display for SampleError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "byte {}: {}", self.offset, self.error)
    }
}

impl core::error::Error for SampleError {}

/// Reads a whole sample file held in memory: the header, then each sample.
/// Yields `Err` once, at the first bad frame, and then stops.
#[derive(Clone, Debug)]
pub struct SampleReader<'a, const C: usize> {
    file: &'a [u8],
    pos: usize,
    failed: bool,
}

impl<'a, const C: usize> SampleReader<'a, C> {
    /// Checks the header of `file` (it must declare `C` channels).
    pub fn new(file: &'a [u8]) -> Result<Self, SampleError> {
        let at0 = |error| SampleError { offset: 0, error };
        let found = decode_sample_header(file).map_err(at0)?;
        if usize::from(found) != C {
            return Err(at0(WireError::ChannelCount {
                expected: u8::try_from(C).unwrap_or(u8::MAX),
                found,
            }));
        }
        Ok(SampleReader {
            file,
            pos: SAMPLE_HEADER_LEN,
            failed: false,
        })
    }

    /// Byte offset of the next frame.
    pub const fn position(&self) -> usize {
        self.pos
    }
}

impl<const C: usize> Iterator for SampleReader<'_, C> {
    type Item = Result<(Timestamp, [Reading; C]), SampleError>;

    fn next(&mut self) -> Option<Self::Item> {
        let rest = self.file.get(self.pos..).unwrap_or(&[]);
        if self.failed || rest.is_empty() {
            return None;
        }
        let offset = self.pos;
        let error = match decode_sample::<C>(rest) {
            SampleDecode::Sample {
                time,
                readings,
                len,
            } => {
                self.pos += len;
                return Some(Ok((time, readings)));
            }
            SampleDecode::Incomplete => WireError::Truncated,
            SampleDecode::Invalid(e) => e,
        };
        self.failed = true;
        Some(Err(SampleError { offset, error }))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::flags::Flag;
    use crate::{ChannelConfig, Event, Layout, Station, StationConfig};
    use proptest::prelude::*;
    use std::vec::Vec;

    #[test]
    fn crc32_check_values() {
        // CRC-32/ISO-HDLC check value (CRC of ASCII "123456789"): 0xCBF43926,
        // from the catalogue of parametrised CRC algorithms (CRC RevEng,
        // "CRC-32/ISO-HDLC" entry: poly 0x04C11DB7 reflected, init and xorout
        // 0xFFFFFFFF, check 0xCBF43926).
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        // Python 3.11.7 zlib.crc32 (zlib's CRC-32 is the same algorithm):
        // zlib.crc32(b"The quick brown fox jumps over the lazy dog") == 0x414fa339,
        // zlib.crc32(bytes(range(256))) == 0x29058c73, zlib.crc32(b"") == 0.
        assert_eq!(
            crc32(b"The quick brown fox jumps over the lazy dog"),
            0x414F_A339
        );
        let all: Vec<u8> = (0..=255u8).collect();
        assert_eq!(crc32(&all), 0x2905_8C73);
        assert_eq!(crc32(b""), 0);
    }

    const ALL_ABSENT: [Absent; 6] = [
        Absent::NotApplicable,
        Absent::NoValidSamples,
        Absent::NoFullWindow,
        Absent::VectorsCancel,
        Absent::NoPairs,
        Absent::ZeroMean,
    ];

    const ODD_VALUES: [f64; 8] = [
        0.0,
        -0.0,
        1.0 / 3.0,
        -273.15,
        f64::MIN_POSITIVE,
        5e-324,
        f64::MAX,
        f64::INFINITY,
    ];

    fn record(kind: Kind, stats: [Stat; 9], seed: u32) -> ChannelRecord {
        let [mean, sd, min, max, gust, ti, resultant_length, resultant_speed, resultant_direction] =
            stats;
        let mut flags = Flags::EMPTY;
        for f in Flag::ALL {
            if (seed >> (f as u8)) & 1 == 1 {
                flags.insert(f);
            }
        }
        ChannelRecord {
            kind,
            n_possible: 600 + seed,
            tally: Tally {
                valid: seed,
                missing: seed.wrapping_mul(3),
                out_of_range: u32::MAX - seed,
                rejected: seed ^ 0xA5A5,
            },
            mean,
            sd,
            min,
            max,
            gust,
            ti,
            resultant_length,
            resultant_speed,
            resultant_direction,
            spikes: seed.rotate_left(7),
            flags,
        }
    }

    /// Records that between them use every absent reason in every statistic
    /// slot, and odd values in every slot, of every kind.
    fn varied_frames() -> Vec<RecordFrame> {
        let kinds = [Kind::Speed, Kind::Direction, Kind::Scalar];
        let mut out = Vec::new();
        let mut seed = 0u32;
        for (k, kind) in kinds.into_iter().enumerate() {
            for a in 0..ALL_ABSENT.len() + ODD_VALUES.len() {
                let stats: [Stat; 9] = core::array::from_fn(|i| {
                    let j = (a + i) % (ALL_ABSENT.len() + ODD_VALUES.len());
                    match ALL_ABSENT.get(j) {
                        Some(abs) => Stat::Absent(*abs),
                        None => Stat::Value(ODD_VALUES[j - ALL_ABSENT.len()]),
                    }
                });
                seed = seed.wrapping_mul(2_654_435_761).wrapping_add(97);
                out.push(RecordFrame {
                    sequence: seed,
                    interval_start: Timestamp::from_millis(
                        1_700_000_400_000 + 600_000 * (a as i64) - (k as i64) * 86_400_000_000,
                    ),
                    channel: (seed >> 24) as u8,
                    record: record(kind, stats, seed & 0x1FF),
                });
            }
        }
        out
    }

    fn encode(f: &RecordFrame) -> [u8; FRAME_LEN] {
        let mut b = [0u8; FRAME_LEN];
        encode_record(f, &mut b);
        b
    }

    /// Bit-exact equality (f64 `==` would equate 0.0 and -0.0).
    fn same(a: &RecordFrame, b: &RecordFrame) -> bool {
        let bits = |r: &ChannelRecord| {
            stats_of(r).map(|s| match s {
                Stat::Value(v) => (0u8, v.to_bits()),
                Stat::Absent(x) => (absent_code(x), 0),
            })
        };
        a == b && bits(&a.record) == bits(&b.record)
    }

    #[test]
    fn record_round_trip_every_stat_variant() {
        let frames = varied_frames();
        for (i, f) in frames.iter().enumerate() {
            let b = encode(f);
            assert_eq!(b.len(), FRAME_LEN);
            let back = decode_record(&b).unwrap();
            assert!(same(f, &back), "frame {i}: {f:?} != {back:?}");
        }
        // Every absent reason and odd value appears in every slot.
        for slot in 0..9 {
            for a in ALL_ABSENT {
                assert!(frames
                    .iter()
                    .any(|f| stats_of(&f.record)[slot] == Stat::Absent(a)));
            }
        }
    }

    #[test]
    fn record_round_trip_station_records() {
        // Real records of every kind from a station run.
        let layout = Layout::new::<3>(
            StationConfig::ten_minute_1hz(),
            [
                ChannelConfig::speed(0.01),
                ChannelConfig::direction().with_speed_channel(0),
                ChannelConfig::direction(),
                ChannelConfig::scalar(0.1),
            ],
        )
        .unwrap();
        let mut station: Station<4, 3> = Station::new(layout);
        let mut frames = Vec::new();
        for i in 0..1900i64 {
            let t = Timestamp::from_millis(1_700_000_400_000 + i * 1000);
            let sp = if i > 700 && i < 900 {
                Reading::Missing
            } else {
                Reading::Value(3.0 + (i % 7) as f64)
            };
            let rd = [
                sp,
                Reading::Value((i * 37 % 360) as f64),
                Reading::Counts(-999),
                Reading::Value(12.5),
            ];
            station.push(t, &rd, |e| {
                if let Event::Closed(acc) = e {
                    for c in 0..4 {
                        frames.push(RecordFrame {
                            sequence: frames.len() as u32,
                            interval_start: layout.interval_start(acc.index()),
                            channel: c as u8,
                            record: layout.finish(acc, c).unwrap(),
                        });
                    }
                }
            });
        }
        assert_eq!(frames.len(), 12);
        for f in &frames {
            assert!(same(f, &decode_record(&encode(f)).unwrap()));
        }
    }

    fn log_of(frames: &[RecordFrame]) -> Vec<u8> {
        frames.iter().flat_map(encode).collect()
    }

    fn decoded(log: &[u8]) -> (Vec<RecordFrame>, Vec<Span>) {
        let mut good = Vec::new();
        let mut other = Vec::new();
        let mut covered = 0;
        for s in scan(log) {
            match s {
                Span::Frame { offset, frame } => {
                    assert_eq!(offset, covered);
                    covered += FRAME_LEN;
                    good.push(frame);
                }
                Span::Damaged { offset, len }
                | Span::Torn { offset, len }
                | Span::Erased { offset, len } => {
                    assert_eq!(offset, covered);
                    assert!(len > 0);
                    covered += len;
                    other.push(s);
                }
            }
        }
        assert_eq!(covered, log.len(), "spans cover every byte once");
        (good, other)
    }

    fn assert_same_list(got: &[RecordFrame], want: &[RecordFrame]) {
        assert_eq!(got.len(), want.len());
        for (g, w) in got.iter().zip(want) {
            assert!(same(g, w), "{g:?} != {w:?}");
        }
    }

    #[test]
    fn torn_tail_at_every_byte_offset() {
        let frames: Vec<_> = varied_frames().into_iter().take(5).collect();
        let log = log_of(&frames);
        for cut in 0..=log.len() {
            let (good, other) = decoded(&log[..cut]);
            let whole = cut / FRAME_LEN;
            assert_same_list(&good, &frames[..whole]);
            if cut % FRAME_LEN == 0 {
                assert!(other.is_empty(), "cut {cut}");
            } else {
                assert_eq!(
                    other,
                    [Span::Torn {
                        offset: whole * FRAME_LEN,
                        len: cut % FRAME_LEN
                    }],
                    "cut {cut}"
                );
            }
        }
    }

    #[test]
    fn torn_write_then_resumed_appends_at_every_byte_offset() {
        // Frame 2 is cut after `j` bytes (power loss); after the restart the
        // writer appends frames 3 and 4 after the torn bytes.
        let frames: Vec<_> = varied_frames().into_iter().take(5).collect();
        let enc: Vec<_> = frames.iter().map(encode).collect();
        for j in 1..FRAME_LEN {
            for tail in [0x00u8, 0xFF] {
                // The torn frame as written, and as flash would hold it (rest erased).
                let mut torn = enc[2].to_vec();
                torn.truncate(j);
                let mut log: Vec<u8> = enc[..2].concat();
                log.extend_from_slice(&torn);
                if tail == 0xFF {
                    log.extend(core::iter::repeat_n(0xFF, FRAME_LEN - j));
                }
                log.extend(enc[3..].concat());
                let (good, other) = decoded(&log);
                let want = [frames[0], frames[1], frames[3], frames[4]];
                assert_same_list(&good, &want);
                assert_eq!(other.len(), 1, "j {j}");
                let damaged = FRAME_LEN * usize::from(tail == 0xFF) + j * usize::from(tail == 0x00);
                assert_eq!(
                    other[0],
                    Span::Damaged {
                        offset: 2 * FRAME_LEN,
                        len: damaged
                    },
                    "j {j}"
                );
            }
        }
    }

    #[test]
    fn every_single_bit_flip_loses_only_that_frame() {
        let frames: Vec<_> = varied_frames().into_iter().take(5).collect();
        let log = log_of(&frames);
        let want = [frames[0], frames[1], frames[3], frames[4]];
        for bit in 0..FRAME_LEN * 8 {
            let mut bad = log.clone();
            bad[2 * FRAME_LEN + bit / 8] ^= 1 << (bit % 8);
            let (good, other) = decoded(&bad);
            assert_same_list(&good, &want);
            assert_eq!(
                other,
                [Span::Damaged {
                    offset: 2 * FRAME_LEN,
                    len: FRAME_LEN
                }],
                "bit {bit}"
            );
            // The damaged frame alone is refused, never misread.
            let one: &[u8; FRAME_LEN] = bad[2 * FRAME_LEN..3 * FRAME_LEN].try_into().unwrap();
            assert!(decode_record(one).is_err(), "bit {bit}");
        }
    }

    #[test]
    fn garbage_between_frames_and_erased_tail() {
        let frames: Vec<_> = varied_frames().into_iter().take(4).collect();
        let enc: Vec<_> = frames.iter().map(encode).collect();
        let mut log = Vec::new();
        // Garbage that contains sync markers and partial frames.
        log.extend_from_slice(&[1, 2, 3]);
        log.extend_from_slice(&SYNC);
        log.extend_from_slice(&enc[0]);
        log.extend_from_slice(&enc[1][..40]);
        log.extend_from_slice(&enc[1]);
        log.extend_from_slice(&SYNC);
        log.extend_from_slice(&enc[2]);
        log.extend_from_slice(&enc[3]);
        log.extend(core::iter::repeat_n(0xFF, 300));
        let mut scanner = scan(&log);
        let spans: Vec<Span> = scanner.by_ref().collect();
        let (good, _) = decoded(&log);
        assert_same_list(&good, &frames);
        assert_eq!(spans[0], Span::Damaged { offset: 0, len: 7 });
        assert_eq!(
            spans[2],
            Span::Damaged {
                offset: 7 + FRAME_LEN,
                len: 40
            }
        );
        assert_eq!(
            spans[4],
            Span::Damaged {
                offset: 7 + 2 * FRAME_LEN + 40,
                len: 4
            }
        );
        assert_eq!(
            spans.last(),
            Some(&Span::Erased {
                offset: log.len() - 300,
                len: 300
            })
        );
        let s = scanner.summary();
        assert_eq!(s.frames, 4);
        assert_eq!(
            (s.damaged_spans, s.damaged_bytes, s.erased_bytes),
            (3, 51, 300)
        );
    }

    #[test]
    fn out_of_domain_fields_with_good_crc_are_refused() {
        let f = varied_frames()[0];
        let reseal = |mut b: [u8; FRAME_LEN]| {
            let crc = crc32(&b[..O_CRC]);
            b[O_CRC..].copy_from_slice(&crc.to_le_bytes());
            b
        };
        let cases: [(usize, u8, WireError); 6] = [
            (O_VERSION, 2, WireError::UnsupportedVersion(2)),
            (O_KIND, 3, WireError::BadKind(3)),
            (O_RESERVED_A, 1, WireError::Reserved),
            (O_RESERVED_B, 1, WireError::Reserved),
            (
                O_ABSENT + 4,
                0x10 | (encode(&f)[O_ABSENT + 4] & 0xF),
                WireError::Reserved,
            ),
            (
                O_FLAGS + 1,
                0x80,
                WireError::UnknownFlags(0x8000 | u16::from(encode(&f)[O_FLAGS])),
            ),
        ];
        for (at, v, want) in cases {
            let mut b = encode(&f);
            b[at] = v;
            assert_eq!(decode_record(&reseal(b)), Err(want), "offset {at}");
        }
        // An absent-reason code of 7.
        let mut b = encode(&f);
        b[O_ABSENT] = (b[O_ABSENT] & 0xF0) | 7;
        assert_eq!(decode_record(&reseal(b)), Err(WireError::BadAbsent(7)));
    }

    fn readings_strategy() -> impl Strategy<Value = Vec<Reading>> {
        let one = prop_oneof![
            any::<u64>().prop_map(|b| Reading::Value(f64::from_bits(b))),
            any::<i32>().prop_map(Reading::Counts),
            Just(Reading::Missing),
        ];
        proptest::collection::vec(one, 3..=3)
    }

    fn same_reading(a: &Reading, b: &Reading) -> bool {
        match (a, b) {
            (Reading::Value(x), Reading::Value(y)) => x.to_bits() == y.to_bits(),
            _ => a == b,
        }
    }

    proptest! {
        #[test]
        fn sample_round_trip(t in any::<i64>(), r in readings_strategy()) {
            let mut buf = [0u8; sample_frame_max_len(3)];
            let n = encode_sample(Timestamp::from_millis(t), &r, &mut buf).unwrap();
            match decode_sample::<3>(&buf[..n]) {
                SampleDecode::Sample { time, readings, len } => {
                    prop_assert_eq!(time.millis(), t);
                    prop_assert_eq!(len, n);
                    for (a, b) in r.iter().zip(readings.iter()) {
                        prop_assert!(same_reading(a, b));
                    }
                }
                other => prop_assert!(false, "{:?}", other),
            }
            // Every prefix is incomplete, never a wrong sample.
            for cut in 0..n {
                prop_assert_eq!(decode_sample::<3>(&buf[..cut]), SampleDecode::Incomplete);
            }
        }

        #[test]
        fn record_round_trip_arbitrary_bits(bits in proptest::array::uniform9(any::<u64>()), seq in any::<u32>(), t in any::<i64>()) {
            let stats = bits.map(|b| Stat::Value(f64::from_bits(b)));
            let f = RecordFrame {
                sequence: seq,
                interval_start: Timestamp::from_millis(t),
                channel: (seq % 256) as u8,
                record: record(Kind::Scalar, stats, seq % 512),
            };
            let back = decode_record(&encode(&f)).unwrap();
            prop_assert_eq!(
                stats_of(&back.record).map(|s| match s { Stat::Value(v) => v.to_bits(), Stat::Absent(_) => 1 }),
                bits
            );
        }
    }

    #[test]
    fn sample_file_round_trip_and_errors() {
        let samples: Vec<(i64, [Reading; 3])> = vec![
            (
                0,
                [Reading::Value(1.5), Reading::Counts(-999), Reading::Missing],
            ),
            (
                1000,
                [
                    Reading::Value(f64::NAN),
                    Reading::Counts(i32::MIN),
                    Reading::Value(-0.0),
                ],
            ),
            (-5, [Reading::Missing, Reading::Missing, Reading::Missing]),
        ];
        let mut file = vec![0u8; SAMPLE_HEADER_LEN];
        encode_sample_header(3, (&mut file[..]).try_into().unwrap());
        let mut buf = [0u8; sample_frame_max_len(3)];
        for (t, r) in &samples {
            let n = encode_sample(Timestamp::from_millis(*t), r, &mut buf).unwrap();
            file.extend_from_slice(&buf[..n]);
        }
        let back: Vec<_> = SampleReader::<3>::new(&file)
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap();
        assert_eq!(back.len(), samples.len());
        for ((t, r), (bt, br)) in samples.iter().zip(&back) {
            assert_eq!(*t, bt.millis());
            assert!(r.iter().zip(br).all(|(a, b)| same_reading(a, b)));
        }
        // Wrong channel count, bad magic, bad version, truncated header.
        assert_eq!(
            SampleReader::<4>::new(&file).unwrap_err().error,
            WireError::ChannelCount {
                expected: 4,
                found: 3
            }
        );
        let mut bad = file.clone();
        bad[0] = b'X';
        assert_eq!(
            SampleReader::<3>::new(&bad).unwrap_err().error,
            WireError::BadMagic
        );
        bad = file.clone();
        bad[4] = 9;
        assert_eq!(
            SampleReader::<3>::new(&bad).unwrap_err().error,
            WireError::UnsupportedVersion(9)
        );
        assert_eq!(
            SampleReader::<3>::new(&file[..5]).unwrap_err().error,
            WireError::Truncated
        );
        // A flipped bit in the second frame: the first reads, then one error with its offset.
        let second = SAMPLE_HEADER_LEN + 8 + 9 + 5 + 1 + 4;
        bad = file.clone();
        bad[second + 3] ^= 0x10;
        let got: Vec<_> = SampleReader::<3>::new(&bad).unwrap().collect();
        assert_eq!(got.len(), 2);
        assert!(got[0].is_ok());
        assert_eq!(
            got[1],
            Err(SampleError {
                offset: second,
                error: WireError::BadCrc
            })
        );
        // A bad tag, and a file cut inside its last frame.
        bad = file.clone();
        bad[second + 8] = 7;
        assert_eq!(
            SampleReader::<3>::new(&bad).unwrap().nth(1),
            Some(Err(SampleError {
                offset: second,
                error: WireError::BadTag(7)
            }))
        );
        let cut: Vec<_> = SampleReader::<3>::new(&file[..file.len() - 1])
            .unwrap()
            .collect();
        assert_eq!(cut.last().unwrap().unwrap_err().error, WireError::Truncated);
        // Too small an output buffer is refused.
        assert_eq!(
            encode_sample(Timestamp::from_millis(0), &samples[0].1, &mut buf[..10]),
            Err(WireError::BufferTooSmall {
                needed: 12 + 9 + 5 + 1
            })
        );
    }
}
