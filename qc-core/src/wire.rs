//! Binary frames: the crash-safe interval record log, and sample files for replay.
//!
//! Two formats, both little-endian, both protected by CRC-32 ([`crc32`]):
//!
//! - **Record log**: append-only, fixed-size frames of [`FRAME_LEN`] bytes, one
//!   per finished interval of one channel ([`RecordFrame`]), for flash or an SD
//!   card. [`encode_record`] writes one frame into a caller's buffer; [`scan`]
//!   walks a log, resynchronises on the sync marker after damage, and reports
//!   good frames, damaged spans, a torn tail and erased flash ([`Span`]).
//!   A log may hold **state frames** instead ([`StateFrame`], [`encode_state`],
//!   [`decode_state`]): the same size, sync marker and CRC, one per interval
//!   of one channel, carrying the channel's exact integer end state for a PC
//!   to finish (a logger that runs only a [`Sampler`](crate::Sampler));
//!   [`scan`] reports them as [`Span::State`].
//! - **Sample file**: a header holding the whole station configuration
//!   ([`encode_sample_header`], [`decode_sample_header`]), then variable-length
//!   sample frames, each one timestamped sample of every channel
//!   ([`encode_sample`], [`decode_sample`], [`SampleReader`]). The host writes
//!   them; a logger under test builds its station from the header and replays
//!   the samples.
//!
//! ```
//! use qc_core::wire::{self, ConfigStamp, RecordFrame, Span, FRAME_LEN};
//! use qc_core::{ChannelConfig, Event, Layout, Reading, Station, StationConfig, Timestamp};
//!
//! let layout = Layout::new::<3>(StationConfig::ten_minute_1hz(), &[ChannelConfig::speed(0.1)])?;
//! let mut station: Station<1, 3> = Station::new(layout);
//! let mut log = Vec::new();
//! let mut on_event = |event: Event<'_, 1, 3>| {
//!     if let Event::Closed(acc, _) = event {
//!         let frame = RecordFrame {
//!             sequence: (log.len() / FRAME_LEN) as u32,
//!             interval_start: layout.interval_start(acc.index()),
//!             channel: 0,
//!             config: Some(ConfigStamp { channels: 1, fingerprint: layout.fingerprint() }),
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
//! Version 3 ([`RECORD_VERSION`]), what this code writes:
//!
//! | offset | bytes | field |
//! |---:|---:|---|
//! | 0 | 4 | sync marker [`SYNC`] = `D3 7A 1C 5E` |
//! | 4 | 1 | format version, [`RECORD_VERSION`] = 3 |
//! | 5 | 1 | kind: 0 speed, 1 direction, 2 scalar |
//! | 6 | 1 | channel index in the station |
//! | 7 | 1 | channels in the logger's station ([`ConfigStamp`]) |
//! | 8 | 4 | sequence number, u32 (the writer counts frames; wraps) |
//! | 12 | 8 | interval start, i64 ms since 1970-01-01T00:00Z |
//! | 20 | 4 | fingerprint of the logger's configuration, u32 ([`crate::config_fingerprint`]) |
//! | 24 | 4 | valid samples, u32 |
//! | 28 | 4 | missing samples, u32 |
//! | 32 | 4 | out-of-range samples, u32 |
//! | 36 | 4 | samples rejected for their timestamp, u32 |
//! | 40 | 4 | spikes, u32 |
//! | 44 | 2 | flag bits, u16 (bit `n` is the [`Flag`] with discriminant `n`) |
//! | 46 | 2 | reserved, 0 |
//! | 48 | 4 | samples possible at the nominal rate, u32 |
//! | 52 | 40 | mean, sd, min, max, gust: each an IEEE-754 `f64` bit pattern; an absent statistic is the NaN pattern [`ABSENT_MARK`] `7FFA B5E0 0000 00cc` with its absent-reason code `cc` in the low byte |
//! | 92 | 4 | readings their source marked bad ([`Tally::flagged`]), u32 |
//! | 96 | 4 | reserved, 0 |
//! | 100 | 24 | resultant length, resultant speed, resultant direction, as the statistics at 52 |
//! | 124 | 4 | CRC-32 of bytes 0 to 123 |
//!
//! Turbulence intensity is not stored: the reader computes it from the
//! frame's own mean and sd as [`Layout::finish`](crate::Layout::finish) does
//! (speed: `sd / mean` when both are values and the mean is above 0, absent
//! for a zero mean when it is not; absent for the mean's reason when the mean
//! is absent, for the sd's when only the sd is; not applicable on other
//! kinds), one IEEE division, the same bits on every target.
//!
//! Version 2 ([`RECORD_VERSION_2`]), still read, holds the turbulence
//! intensity at 92 as the other statistics (the 9 statistics in
//! [`STAT_ORDER`] order from 52) and no flagged count (read as 0).
//! The channel count and fingerprint sit where a state frame holds them, so
//! that a reader refuses the frames of a logger built with another
//! configuration, whichever kind of log it reads.
//!
//! Version 1 ([`RECORD_VERSION_1`]), still read (and written for a frame
//! without a configuration stamp), carries no configuration and no flagged
//! count (read as 0): byte 7 is reserved (0), the samples possible are at
//! byte 20, and the absent-reason codes are nibbles at 46: statistic `i` in
//! byte `46 + i / 2`, low nibble for even `i`, the tenth nibble 0, with byte
//! 51 reserved (0) and an absent statistic's 8 bytes 0. Everything else is as
//! in version 2.
//!
//! Absent-reason codes: 0 the value is present (version 1 only); 1 not
//! applicable; 2 no valid samples; 3 no full gust window; 4 vectors cancel;
//! 5 no speed/direction pairs; 6 zero mean ([`Absent`]).
//!
//! A frame is good when its sync marker and CRC match and every field is in its
//! domain (known version, kind, absent codes and flags; reserved bits 0). A good
//! frame decodes to exactly the [`RecordFrame`] that was encoded, bit for bit,
//! when that record came from a finish (version 3 recomputes `ti`, version 1
//! has no flagged count; a statistic whose value is the absent mark itself is
//! not in the domain: a [`Stat`] is never NaN). The counts are not checked here: whether they fit
//! the station is for a reader that knows it ([`crate::Layout::check_tally`]).
//! Gaps (intervals without any sample) write no frames: a reader finds them as
//! missing interval starts.
//!
//! # State frame layout
//!
//! Also [`FRAME_LEN`] = 128 bytes, with the record frame's sync marker,
//! channel, sequence number, interval start, counts and CRC at the same
//! places; the version byte [`STATE_VERSION`] = `0x81` tells the two apart.
//!
//! | offset | bytes | field |
//! |---:|---:|---|
//! | 0 | 4 | sync marker [`SYNC`] |
//! | 4 | 1 | format version, [`STATE_VERSION`] = `0x81` |
//! | 5 | 1 | form: 0 speed, 1 direction, 2 direction with a linked speed, 3 scalar ([`StateForm`]) |
//! | 6 | 1 | channel index in the station |
//! | 7 | 1 | channels in the station |
//! | 8 | 4 | sequence number, u32 |
//! | 12 | 8 | interval start, i64 ms since 1970-01-01T00:00Z |
//! | 20 | 4 | fingerprint of the logger's configuration, u32 ([`crate::config_fingerprint`]) |
//! | 24 | 16 | valid, missing, out-of-range and rejected samples, u32 each |
//! | 40 | 4 | spikes, u32 |
//! | 44 | 1 | 1 when a speed channel's gust window filled at least once, else 0 |
//! | 45 | 3 | reserved, 0 |
//! | 48 | 68 | the sums, by form (below); unused bytes 0 |
//! | 116 | 4 | readings their source marked bad ([`Tally::flagged`]), u32 |
//! | 120 | 4 | readings excluded by decision ([`Tally::excluded`]), u32 |
//! | 124 | 4 | CRC-32 of bytes 0 to 123 |
//!
//! Frames written before the flagged count have 0 at 116, and frames written
//! before the excluded count 0 at 120 (unused bytes were 0), so they read as
//! no flagged and no excluded readings. A logger never excludes (exclusions
//! are a decision made afterwards, on a PC), so its frames carry 0 there; the
//! field lets a state travel whole between PC tools. The rejected count at 36 is the
//! interval's: the same in every channel's frame of one interval.
//!
//! Speed and scalar: at 48 the sum of squares of the quanta (i128 as two
//! u64, low first), at 64 their sum (i64), at 72 the least and at 76 the
//! greatest quantum (i32; `i32::MAX` and `i32::MIN` when none was valid), at
//! 80 the largest gust window sum (i32, speed only, when byte 44 is 1).
//! Direction: at 48 and 56 the sums of the Q30 sines and cosines (i64). With a
//! linked speed also at 64 and 80 the speed-weighted sums of sines and
//! cosines (i128 each, two u64, low first), at 96 and 104 the unweighted sums
//! over the pairs (i64), at 112 the number of pairs (u32).
//!
//! A PC puts each state back with [`crate::IntervalAcc::set_state`] and
//! finishes the intervals in time order with one [`crate::Finisher`] (gaps
//! with [`crate::Finisher::gap`]): the records are those the logger's own
//! [`crate::Station`] would have made, bit for bit.
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
//! A header that carries the whole station configuration, so that a logger
//! can build its [`Layout`](crate::Layout) from the file, then one frame per
//! sample. The header is [`sample_header_len`]`(C)` = `56 + 160 C + 4` bytes
//! for `C` channels: a station part, one part per channel, and a CRC-32.
//!
//! Station part ([`STATION_PART_LEN`] = 56 bytes, [`decode_station_part`]):
//!
//! | offset | bytes | field |
//! |---:|---:|---|
//! | 0 | 4 | magic [`SAMPLE_MAGIC`] = ASCII `TMSF` |
//! | 4 | 1 | format version, [`SAMPLE_VERSION`] = 2 |
//! | 5 | 1 | channel count `C`, 1 to 255 |
//! | 6 | 2 | header length, u16, = `56 + 160 C + 4` (a check on `C`) |
//! | 8 | 4 | interval, s, u32 ([`StationConfig::interval_s`]) |
//! | 12 | 4 | samples per interval, u32 |
//! | 16 | 1 | missing-value slots in use: bit `i` for slot `i` (bits 4-7 are 0) |
//! | 17 | 7 | reserved, 0 |
//! | 24 | 32 | the 4 missing-value codes, `f64` bit patterns, 0 for a slot not in use |
//!
//! Channel part, once per channel ([`CHANNEL_PART_LEN`] = 160 bytes,
//! [`decode_channel_part`]); the fields of [`ChannelConfig`] and its [`Screen`]:
//!
//! | offset | bytes | field |
//! |---:|---:|---|
//! | 0 | 1 | kind: 0 speed, 1 direction, 2 scalar |
//! | 1 | 1 | reserved, 0 |
//! | 2 | 2 | options present, u16: bit 0 `speed_channel`, 1 `step_limit`, 2 `mean_range`, 3 `sd_range`, 4 `gust_max`, 5 `min_recovery`, 6 `flat_span_s`, 7 `partner`, 8 `above`, 9 `icing`; bits 10-15 are 0 |
//! | 4 | 2 | gust window, samples, u16 |
//! | 6 | 1 | `speed_channel` index |
//! | 7 | 1 | `screen.partner` index |
//! | 8 | 1 | `screen.above` index |
//! | 9 | 2 | `screen.icing` temperature and humidity channel indices |
//! | 11 | 1 | reserved, 0 |
//! | 12 | 4 | `screen.flat_span_s`, u32 |
//! | 16 | 144 | 18 `f64` bit patterns: scale offset, scale step, range low, range high, mounting offset, `step_limit`, `mean_range` low and high, `sd_range` low and high, `gust_max`, `min_recovery`, `flat_tolerance`, `pair_mean_diff`, `pair_max_diff`, `shear_tolerance`, icing `max_temperature`, icing `min_humidity` |
//!
//! The fields of an option that is not present are 0, so a configuration has
//! exactly one encoding; channel indices must name a channel of the file.
//! Values are carried bit for bit; [`Layout::new`](crate::Layout::new) checks
//! them. The header ends with the CRC-32 of all its bytes before it
//! ([`HEADER_CRC_LEN`] = 4). A single flipped bit anywhere in the header is
//! always refused: in the channel count or length field by their mismatch,
//! elsewhere by the CRC. A reader with little RAM reads the parts one at a
//! time and checks the CRC with [`Crc32`]; [`decode_sample_header`] reads a
//! header held whole.
//!
//! Sample frame:
//!
//! | part | bytes | field |
//! |---|---:|---|
//! | time | 8 | sample time, i64 ms since 1970-01-01T00:00Z |
//! | reading, once per channel | 1 | tag: 0 missing, 1 value, 2 counts, 3 flagged by its source ([`Reading::Flagged`]), 4 excluded by decision ([`Reading::Excluded`]) |
//! | | 8 or 4 or 0 | value: `f64` bit pattern (tag 1); counts: `i32` (tag 2); nothing (tags 0, 3 and 4) |
//! | check | 4 | CRC-32 of the frame's bytes before it |
//!
//! A sample frame is 12 to [`sample_frame_max_len`]`(C)` = `12 + 9 C` bytes.
//!
//! # Panics
//!
//! None: every function here returns a value or an error for any input bytes.
//! Nothing allocates.

use core::fmt;

use crate::channel::{
    Absent, ChannelConfig, ChannelRecord, ChannelState, Kind, Reading, Scale, Stat, StateForm,
    Tally,
};
#[cfg(doc)]
use crate::flags::Flag;
use crate::flags::Flags;
use crate::moments::Wide;
use crate::screen::{Icing, Screen};
use crate::station::{StationConfig, MAX_SENTINELS};
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
/// [`Crc32`] computes the same piece by piece.
pub fn crc32(data: &[u8]) -> u32 {
    let mut c = Crc32::new();
    c.update(data);
    c.value()
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

// ---------------------------------------------------------------------------
// Record frames

/// Length of one record frame, bytes.
pub const FRAME_LEN: usize = 128;

/// The sync marker that starts every record frame (chosen to be neither erased
/// flash `FF` nor zeroed memory, and not ASCII).
pub const SYNC: [u8; 4] = [0xD3, 0x7A, 0x1C, 0x5E];

/// The record frame format version this code writes: version 3, stamped with
/// the logger's configuration ([`ConfigStamp`]) and carrying the flagged
/// count in place of the turbulence intensity, which the reader computes.
/// Versions 1 and 2 ([`RECORD_VERSION_1`], [`RECORD_VERSION_2`]) are still read.
pub const RECORD_VERSION: u8 = 3;

/// The second record frame format: stamped, with the turbulence intensity
/// stored and no flagged count. Still read (flagged 0).
pub const RECORD_VERSION_2: u8 = 2;

/// The first record frame format, without a configuration stamp: still read
/// (and written for a [`RecordFrame`] whose `config` is `None`), but a reader
/// cannot tell whether its station file is the logger's.
pub const RECORD_VERSION_1: u8 = 1;

/// How a version-2 record frame marks an absent statistic in its 8-byte
/// slot: this NaN bit pattern with the absent-reason code in the low byte (a
/// statistic is never NaN, [`Stat`]).
pub const ABSENT_MARK: u64 = 0x7FFA_B5E0_0000_0000;

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
// Version 2: channel count and fingerprint where state frames hold them,
// the samples possible after the flags, absent statistics marked in place.
const V2_CHANNELS: usize = 7;
const V2_FINGERPRINT: usize = 20;
const V2_RESERVED: usize = 46;
const V2_POSSIBLE: usize = 48;
// Version 3: the flagged count and 4 reserved bytes in the slot of `ti`.
const TI_INDEX: usize = 5;
const V3_FLAGGED: usize = O_STATS + 8 * TI_INDEX;
const V3_RESERVED: usize = V3_FLAGGED + 4;

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
    /// The configuration of the logger that wrote the frame: `Some` in a
    /// frame of version 2 or 3 (version 3 is what [`encode_record`] writes
    /// when it is `Some`), `None` in a version-1 frame, which carries none.
    pub config: Option<ConfigStamp>,
    /// The channel's finished statistics.
    pub record: ChannelRecord,
}

/// What a frame says about the configuration of the logger that wrote it, so
/// that a reader can refuse a station file that is not the logger's. Record
/// frames of version 2 and state frames carry it at the same places.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ConfigStamp {
    /// Channels in the logger's station.
    pub channels: u8,
    /// [`Layout::fingerprint`](crate::Layout::fingerprint) of the logger's
    /// configuration ([`crate::config_fingerprint`] of the channels in use).
    pub fingerprint: u32,
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

/// Checks a frame's sync marker, CRC and version (one of `versions`).
fn check_frame(b: &[u8; FRAME_LEN], versions: &[u8]) -> Result<(), WireError> {
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
fn start_frame(
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
fn seal(out: &mut [u8; FRAME_LEN]) {
    let crc = crc32(&out[..O_CRC]);
    put(out, O_CRC, crc.to_le_bytes());
}

/// The sample counts, at the same place in both kinds of frame.
fn put_tally(out: &mut [u8; FRAME_LEN], t: &Tally) {
    put(out, O_VALID, t.valid.to_le_bytes());
    put(out, O_MISSING, t.missing.to_le_bytes());
    put(out, O_OUT_OF_RANGE, t.out_of_range.to_le_bytes());
    put(out, O_REJECTED, t.rejected.to_le_bytes());
}

fn get_tally(b: &[u8; FRAME_LEN]) -> Tally {
    Tally {
        valid: get_u32(b, O_VALID),
        missing: get_u32(b, O_MISSING),
        out_of_range: get_u32(b, O_OUT_OF_RANGE),
        rejected: get_u32(b, O_REJECTED),
        flagged: 0,
        excluded: 0,
    }
}

/// The turbulence intensity of a speed record with `mean` and `sd`, as
/// [`Layout::finish`](crate::Layout::finish) makes it; not applicable on
/// other kinds.
fn ti_of(kind: Kind, mean: Stat, sd: Stat) -> Stat {
    match (kind, mean, sd) {
        (Kind::Speed, Stat::Value(m), Stat::Value(sd)) => {
            if m > 0.0 {
                Stat::Value(sd / m)
            } else {
                Stat::Absent(Absent::ZeroMean)
            }
        }
        (Kind::Speed, Stat::Absent(a), _) | (Kind::Speed, _, Stat::Absent(a)) => Stat::Absent(a),
        _ => Stat::Absent(Absent::NotApplicable),
    }
}

/// Writes `frame` into `out` as one record frame (layout in the module docs):
/// version 3 when `frame.config` is `Some`, else version 1 (which has no
/// room for the flagged count: a version-1 frame reads back with flagged 0).
///
/// No version stores [`Tally::excluded`]: a logger never excludes readings
/// (exclusions are decided afterwards, on a PC), so a record frame reads back
/// with excluded 0.
///
/// A version-3 frame does not store the turbulence intensity: the reader
/// computes it from the mean and sd, so a record decodes as written when its
/// `ti` is the one [`Layout::finish`](crate::Layout::finish) made.
pub fn encode_record(frame: &RecordFrame, out: &mut [u8; FRAME_LEN]) {
    let r = &frame.record;
    let head = (frame.sequence, frame.interval_start, frame.channel);
    let version = match frame.config {
        Some(_) => RECORD_VERSION,
        None => RECORD_VERSION_1,
    };
    start_frame(out, version, kind_code(r.kind), head, &r.tally, r.spikes);
    put(out, O_FLAGS, r.flags.bits().to_le_bytes());
    let stats = stats_of(r);
    if let Some(stamp) = frame.config {
        out[V2_CHANNELS] = stamp.channels;
        put(out, V2_FINGERPRINT, stamp.fingerprint.to_le_bytes());
        put(out, V2_POSSIBLE, r.n_possible.to_le_bytes());
        for (i, s) in stats.iter().enumerate() {
            let bits = match *s {
                Stat::Value(v) => v.to_bits(),
                Stat::Absent(a) => ABSENT_MARK | u64::from(absent_code(a)),
            };
            put(out, O_STATS + 8 * i, bits.to_le_bytes());
        }
        put(out, V3_FLAGGED, r.tally.flagged.to_le_bytes());
        put(out, V3_RESERVED, 0u32.to_le_bytes());
    } else {
        put(out, O_POSSIBLE, r.n_possible.to_le_bytes());
        let mut absent = [0u8; 5];
        for (i, s) in stats.iter().enumerate() {
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
    }
    seal(out);
}

/// Reads one record frame of any version, checking its sync marker, CRC
/// and every field.
pub fn decode_record(b: &[u8; FRAME_LEN]) -> Result<RecordFrame, WireError> {
    check_frame(b, &[RECORD_VERSION_1, RECORD_VERSION_2, RECORD_VERSION])?;
    let kind = kind_of(b[O_KIND]).ok_or(WireError::BadKind(b[O_KIND]))?;
    let flag_bits = u16::from_le_bytes(get(b, O_FLAGS));
    let flags = Flags::from_bits(flag_bits);
    if flags.bits() != flag_bits {
        return Err(WireError::UnknownFlags(flag_bits));
    }
    let mut stats = [Stat::Absent(Absent::NotApplicable); 9];
    let mut tally = get_tally(b);
    let version = b[O_VERSION];
    let (config, n_possible) = if version != RECORD_VERSION_1 {
        if get::<2>(b, V2_RESERVED) != [0, 0] {
            return Err(WireError::Reserved);
        }
        let v3 = version == RECORD_VERSION;
        if v3 {
            tally.flagged = get_u32(b, V3_FLAGGED);
            if get_u32(b, V3_RESERVED) != 0 {
                return Err(WireError::Reserved);
            }
        }
        for (i, s) in stats.iter_mut().enumerate() {
            if v3 && i == TI_INDEX {
                continue;
            }
            let bits = u64::from_le_bytes(get(b, O_STATS + 8 * i));
            *s = if bits & !0xFF == ABSENT_MARK {
                let code = (bits & 0xFF) as u8;
                Stat::Absent(absent_of(code).ok_or(WireError::BadAbsent(code))?)
            } else {
                Stat::Value(f64::from_bits(bits))
            };
        }
        let stamp = ConfigStamp {
            channels: b[V2_CHANNELS],
            fingerprint: get_u32(b, V2_FINGERPRINT),
        };
        if v3 {
            let [mean, sd, ..] = stats;
            stats[TI_INDEX] = ti_of(kind, mean, sd);
        }
        (Some(stamp), get_u32(b, V2_POSSIBLE))
    } else {
        let absent: [u8; 5] = get(b, O_ABSENT);
        if b[O_RESERVED_A] != 0 || b[O_RESERVED_B] != 0 || absent[4] >> 4 != 0 {
            return Err(WireError::Reserved);
        }
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
        (None, get_u32(b, O_POSSIBLE))
    };
    let [mean, sd, min, max, gust, ti, resultant_length, resultant_speed, resultant_direction] =
        stats;
    Ok(RecordFrame {
        sequence: get_u32(b, O_SEQUENCE),
        interval_start: Timestamp::from_millis(i64::from_le_bytes(get(b, O_START))),
        channel: b[O_CHANNEL],
        config,
        record: ChannelRecord {
            kind,
            n_possible,
            tally,
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

// ---------------------------------------------------------------------------
// State frames

/// The state frame format version this code writes and reads (the high bit
/// tells a state frame from a record frame, whose version is
/// [`RECORD_VERSION`]).
pub const STATE_VERSION: u8 = 0x81;

const T_FORM: usize = O_KIND;
const T_CHANNELS: usize = 7;
const T_FINGERPRINT: usize = 20;
const T_GUST_PRESENT: usize = 44;
const T_RESERVED: usize = 45;
const T_PAYLOAD: usize = 48;
const T_FLAGGED: usize = 116;
const T_EXCLUDED: usize = 120;

/// One channel's exact end state in one interval, as a logger that leaves
/// finishing to a PC writes it (module docs, "State frame layout").
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StateFrame {
    /// The writer's frame counter (wraps at 2^32).
    pub sequence: u32,
    /// Start of the interval.
    pub interval_start: Timestamp,
    /// Channel index in the station.
    pub channel: u8,
    /// Channels in the station.
    pub channels: u8,
    /// [`Layout::fingerprint`](crate::Layout::fingerprint) of the logger's
    /// configuration.
    pub fingerprint: u32,
    /// The channel's state ([`crate::IntervalAcc::state`]).
    pub state: ChannelState,
}

impl StateFrame {
    /// The configuration stamp the frame carries (as a version-2 record
    /// frame carries it).
    pub const fn config(&self) -> ConfigStamp {
        ConfigStamp {
            channels: self.channels,
            fingerprint: self.fingerprint,
        }
    }
}

const fn form_code(f: StateForm) -> u8 {
    match f {
        StateForm::Speed => 0,
        StateForm::Direction => 1,
        StateForm::LinkedDirection => 2,
        StateForm::Scalar => 3,
    }
}

const fn form_of(code: u8) -> Option<StateForm> {
    match code {
        0 => Some(StateForm::Speed),
        1 => Some(StateForm::Direction),
        2 => Some(StateForm::LinkedDirection),
        3 => Some(StateForm::Scalar),
        _ => None,
    }
}

fn put_wide(out: &mut [u8; FRAME_LEN], at: usize, w: Wide) {
    put(out, at, w.lo.to_le_bytes());
    put(out, at + 8, w.hi.to_le_bytes());
}

fn get_wide(b: &[u8; FRAME_LEN], at: usize) -> Wide {
    Wide {
        lo: u64::from_le_bytes(get(b, at)),
        hi: u64::from_le_bytes(get(b, at + 8)),
    }
}

/// Writes `frame` into `out` as one state frame (layout in the module docs).
pub fn encode_state(frame: &StateFrame, out: &mut [u8; FRAME_LEN]) {
    let s = &frame.state;
    let head = (frame.sequence, frame.interval_start, frame.channel);
    start_frame(
        out,
        STATE_VERSION,
        form_code(s.form),
        head,
        &s.tally,
        s.spikes,
    );
    out[T_CHANNELS] = frame.channels;
    put(out, T_FINGERPRINT, frame.fingerprint.to_le_bytes());
    put(out, T_FLAGGED, s.tally.flagged.to_le_bytes());
    put(out, T_EXCLUDED, s.tally.excluded.to_le_bytes());
    let p = T_PAYLOAD;
    match s.form {
        StateForm::Speed | StateForm::Scalar => {
            let m = &s.moments;
            put_wide(out, p, m.sum_sq);
            put(out, p + 16, m.sum.to_le_bytes());
            put(out, p + 24, m.min.to_le_bytes());
            put(out, p + 28, m.max.to_le_bytes());
            if let Some(best) = s.gust_best {
                out[T_GUST_PRESENT] = 1;
                put(out, p + 32, best.to_le_bytes());
            }
        }
        StateForm::Direction | StateForm::LinkedDirection => {
            put(out, p, s.sums.sin.to_le_bytes());
            put(out, p + 8, s.sums.cos.to_le_bytes());
            if s.form == StateForm::LinkedDirection {
                let r = &s.resultant;
                put_wide(out, p + 16, r.q_sin);
                put_wide(out, p + 32, r.q_cos);
                put(out, p + 48, r.sin.to_le_bytes());
                put(out, p + 56, r.cos.to_le_bytes());
                put(out, p + 64, r.n.to_le_bytes());
            }
        }
    }
    seal(out);
}

/// Reads one state frame, checking its sync marker, CRC and every field
/// (unused bytes must be 0, a gust only on a speed channel).
pub fn decode_state(b: &[u8; FRAME_LEN]) -> Result<StateFrame, WireError> {
    check_frame(b, &[STATE_VERSION])?;
    let form = form_of(b[T_FORM]).ok_or(WireError::BadKind(b[T_FORM]))?;
    let mut s = ChannelState::empty(form);
    s.tally = get_tally(b);
    s.tally.flagged = get_u32(b, T_FLAGGED);
    s.tally.excluded = get_u32(b, T_EXCLUDED);
    s.spikes = get_u32(b, O_SPIKES);
    let p = T_PAYLOAD;
    let gust = b[T_GUST_PRESENT];
    let used = match form {
        StateForm::Speed | StateForm::Scalar => {
            s.moments.sum_sq = get_wide(b, p);
            s.moments.sum = i64::from_le_bytes(get(b, p + 16));
            s.moments.min = i32::from_le_bytes(get(b, p + 24));
            s.moments.max = i32::from_le_bytes(get(b, p + 28));
            match (form, gust) {
                (StateForm::Speed, 1) => {
                    s.gust_best = Some(i32::from_le_bytes(get(b, p + 32)));
                    36
                }
                (_, 0) => 32,
                _ => return Err(WireError::Reserved),
            }
        }
        StateForm::Direction | StateForm::LinkedDirection => {
            s.sums.sin = i64::from_le_bytes(get(b, p));
            s.sums.cos = i64::from_le_bytes(get(b, p + 8));
            if gust != 0 {
                return Err(WireError::Reserved);
            }
            if form == StateForm::LinkedDirection {
                s.resultant.q_sin = get_wide(b, p + 16);
                s.resultant.q_cos = get_wide(b, p + 32);
                s.resultant.sin = i64::from_le_bytes(get(b, p + 48));
                s.resultant.cos = i64::from_le_bytes(get(b, p + 56));
                s.resultant.n = get_u32(b, p + 64);
                68
            } else {
                16
            }
        }
    };
    let unused = b.get(p + used..T_FLAGGED).unwrap_or(&[]);
    let reserved = b.get(T_RESERVED..T_PAYLOAD).unwrap_or(&[]);
    let tail = b.get(T_EXCLUDED + 4..O_CRC).unwrap_or(&[]);
    if unused.iter().chain(reserved).chain(tail).any(|&x| x != 0) {
        return Err(WireError::Reserved);
    }
    Ok(StateFrame {
        sequence: get_u32(b, O_SEQUENCE),
        interval_start: Timestamp::from_millis(i64::from_le_bytes(get(b, O_START))),
        channel: b[O_CHANNEL],
        channels: b[T_CHANNELS],
        fingerprint: get_u32(b, T_FINGERPRINT),
        state: s,
    })
}

/// What [`Scanner`] found at a place in a log.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Span {
    /// A good record frame at byte `offset`.
    Frame {
        /// Byte offset of the frame in the log.
        offset: usize,
        /// The decoded frame.
        frame: RecordFrame,
    },
    /// A good state frame at byte `offset`.
    State {
        /// Byte offset of the frame in the log.
        offset: usize,
        /// The decoded frame.
        frame: StateFrame,
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

    /// The good frame (record or state) at `at`, if there is one.
    fn frame_at(&self, at: usize) -> Option<Span> {
        let bytes = self.log.get(at..at.checked_add(FRAME_LEN)?)?;
        let b: &[u8; FRAME_LEN] = bytes.try_into().ok()?;
        if b[O_VERSION] == STATE_VERSION {
            decode_state(b)
                .ok()
                .map(|frame| Span::State { offset: at, frame })
        } else {
            decode_record(b)
                .ok()
                .map(|frame| Span::Frame { offset: at, frame })
        }
    }
}

impl Iterator for Scanner<'_> {
    type Item = Span;

    fn next(&mut self) -> Option<Span> {
        let start = self.pos;
        if start >= self.log.len() {
            return None;
        }
        if let Some(span) = self.frame_at(start) {
            self.pos = start + FRAME_LEN;
            self.summary.frames += 1;
            return Some(span);
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

/// The sample file format version this code writes and reads (version 1, a
/// header with the channel count only, is no longer read).
pub const SAMPLE_VERSION: u8 = 2;

/// Length of the station part at the start of a sample file header, bytes.
pub const STATION_PART_LEN: usize = 56;

/// Length of one channel's part of a sample file header, bytes.
pub const CHANNEL_PART_LEN: usize = 160;

/// Length of the CRC-32 that ends a sample file header, bytes.
pub const HEADER_CRC_LEN: usize = 4;

/// Length of the sample file header of a station of `channels` channels.
/// (Saturates at `usize::MAX` instead of overflowing.)
pub const fn sample_header_len(channels: usize) -> usize {
    STATION_PART_LEN
        .saturating_add(CHANNEL_PART_LEN.saturating_mul(channels))
        .saturating_add(HEADER_CRC_LEN)
}

const TAG_MISSING: u8 = 0;
const TAG_VALUE: u8 = 1;
const TAG_COUNTS: u8 = 2;
const TAG_FLAGGED: u8 = 3;
const TAG_EXCLUDED: u8 = 4;

// Station part offsets.
const S_VERSION: usize = 4;
const S_COUNT: usize = 5;
const S_LEN: usize = 6;
const S_INTERVAL: usize = 8;
const S_SAMPLES: usize = 12;
const S_MISSING_USED: usize = 16;
const S_RESERVED: usize = 17;
const S_MISSING: usize = 24;

// Channel part offsets.
const C_KIND: usize = 0;
const C_RESERVED_A: usize = 1;
const C_PRESENT: usize = 2;
const C_GUST: usize = 4;
const C_SPEED: usize = 6;
const C_PARTNER: usize = 7;
const C_ABOVE: usize = 8;
const C_ICE_T: usize = 9;
const C_ICE_H: usize = 10;
const C_RESERVED_B: usize = 11;
const C_FLAT_SPAN: usize = 12;
const C_REALS: usize = 16;

// Bits of the channel part's "present" field: which `Option`s are `Some`.
const P_SPEED_CHANNEL: u16 = 1 << 0;
const P_STEP_LIMIT: u16 = 1 << 1;
const P_MEAN_RANGE: u16 = 1 << 2;
const P_SD_RANGE: u16 = 1 << 3;
const P_GUST_MAX: u16 = 1 << 4;
const P_MIN_RECOVERY: u16 = 1 << 5;
const P_FLAT_SPAN: u16 = 1 << 6;
const P_PARTNER: u16 = 1 << 7;
const P_ABOVE: u16 = 1 << 8;
const P_ICING: u16 = 1 << 9;
const P_ALL: u16 = (1 << 10) - 1;

// Slots of the channel part's 18 `f64`s.
const R_SCALE_OFFSET: usize = 0;
const R_SCALE_STEP: usize = 1;
const R_RANGE_LO: usize = 2;
const R_RANGE_HI: usize = 3;
const R_MOUNTING: usize = 4;
const R_STEP_LIMIT: usize = 5;
const R_MEAN_LO: usize = 6;
const R_MEAN_HI: usize = 7;
const R_SD_LO: usize = 8;
const R_SD_HI: usize = 9;
const R_GUST_MAX: usize = 10;
const R_MIN_RECOVERY: usize = 11;
const R_FLAT_TOLERANCE: usize = 12;
const R_PAIR_MEAN: usize = 13;
const R_PAIR_MAX: usize = 14;
const R_SHEAR: usize = 15;
const R_ICE_T: usize = 16;
const R_ICE_H: usize = 17;
const REALS: usize = 18;

/// CRC-32 computed piece by piece: the same value as [`crc32`] of the pieces
/// joined.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Crc32 {
    state: u32,
}

impl Default for Crc32 {
    fn default() -> Self {
        Self::new()
    }
}

impl Crc32 {
    /// The CRC of no bytes so far.
    pub const fn new() -> Self {
        Crc32 { state: !0 }
    }

    /// Adds `data`.
    pub fn update(&mut self, data: &[u8]) {
        let mut c = self.state;
        for &b in data {
            c ^= u32::from(b);
            c = (c >> 4) ^ CRC_TABLE[(c & 0xF) as usize];
            c = (c >> 4) ^ CRC_TABLE[(c & 0xF) as usize];
        }
        self.state = c;
    }

    /// Adds the 8 little-endian bytes of `v`; a `const fn`, for
    /// [`Layout::fingerprint`](crate::Layout::fingerprint) at compile time.
    pub(crate) const fn word(self, v: u64) -> Self {
        let mut c = self.state;
        let mut i = 0;
        while i < 8 {
            c ^= (v >> (8 * i)) as u8 as u32;
            c = (c >> 4) ^ CRC_TABLE[(c & 0xF) as usize];
            c = (c >> 4) ^ CRC_TABLE[(c & 0xF) as usize];
            i += 1;
        }
        Crc32 { state: c }
    }

    /// The CRC-32 of everything added.
    pub const fn value(&self) -> u32 {
        !self.state
    }

    /// Goes on from a CRC-32 `value` of earlier bytes (what [`Crc32::value`]
    /// gave): adding more bytes gives the CRC of all of them, as zlib's
    /// `crc32(value, ...)` does. `resume(0)` is [`Crc32::new`].
    pub const fn resume(value: u32) -> Self {
        Crc32 { state: !value }
    }
}

/// Bounds-checked little-endian access to a byte slice: out-of-range reads
/// give zeros, out-of-range writes are dropped (callers check lengths first).
struct Bytes<'a>(&'a [u8]);

impl Bytes<'_> {
    fn get<const N: usize>(&self, at: usize) -> [u8; N] {
        let mut v = [0u8; N];
        if let Some(src) = at.checked_add(N).and_then(|end| self.0.get(at..end)) {
            v.copy_from_slice(src);
        }
        v
    }
    fn u8(&self, at: usize) -> u8 {
        self.0.get(at).copied().unwrap_or(0)
    }
    fn u16(&self, at: usize) -> u16 {
        u16::from_le_bytes(self.get(at))
    }
    fn u32(&self, at: usize) -> u32 {
        u32::from_le_bytes(self.get(at))
    }
    fn u64(&self, at: usize) -> u64 {
        u64::from_le_bytes(self.get(at))
    }
}

fn put_at(out: &mut [u8], at: usize, bytes: &[u8]) {
    if let Some(dst) = at
        .checked_add(bytes.len())
        .and_then(|end| out.get_mut(at..end))
    {
        dst.copy_from_slice(bytes);
    }
}

/// The station part of a sample file header: what [`decode_station_part`] reads.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StationPart {
    /// Channels in the file, 1 to 255: this many channel parts follow, and
    /// every sample frame holds this many readings.
    pub channels: u8,
    /// The station-wide settings.
    pub station: StationConfig,
}

impl StationPart {
    /// Length of the whole header this part starts, bytes.
    pub const fn header_len(&self) -> usize {
        sample_header_len(self.channels as usize)
    }
}

/// Magic, version, channel count and header length of a station part.
fn header_prefix(b: &Bytes<'_>) -> Result<u8, WireError> {
    if b.get::<4>(0) != SAMPLE_MAGIC {
        return Err(WireError::BadMagic);
    }
    let version = b.u8(S_VERSION);
    if version != SAMPLE_VERSION {
        return Err(WireError::UnsupportedVersion(version));
    }
    let channels = b.u8(S_COUNT);
    if channels == 0 {
        return Err(WireError::NoChannels);
    }
    let len = b.u16(S_LEN);
    if usize::from(len) != sample_header_len(usize::from(channels)) {
        return Err(WireError::HeaderLength { channels, len });
    }
    Ok(channels)
}

/// Reads the station part from the first [`STATION_PART_LEN`] bytes of a
/// sample file (magic, version, channel count, header length, station
/// settings). The header's CRC covers this part too: check it (as
/// [`decode_sample_header`] does, or with [`Crc32`] when reading in pieces)
/// before using what was read.
pub fn decode_station_part(bytes: &[u8]) -> Result<StationPart, WireError> {
    let b = Bytes(bytes.get(..STATION_PART_LEN).ok_or(WireError::Truncated)?);
    let channels = header_prefix(&b)?;
    let used = b.u8(S_MISSING_USED);
    if used >> MAX_SENTINELS != 0 || b.get::<7>(S_RESERVED) != [0; 7] {
        return Err(WireError::Reserved);
    }
    let mut missing_values = [None; MAX_SENTINELS];
    for (i, slot) in missing_values.iter_mut().enumerate() {
        let bits = b.u64(S_MISSING + 8 * i);
        if used & (1 << i) != 0 {
            *slot = Some(f64::from_bits(bits));
        } else if bits != 0 {
            return Err(WireError::Reserved);
        }
    }
    Ok(StationPart {
        channels,
        station: StationConfig {
            interval_s: b.u32(S_INTERVAL),
            samples_per_interval: b.u32(S_SAMPLES),
            missing_values,
        },
    })
}

fn encode_station_part(station: &StationConfig, channels: u8, out: &mut [u8]) {
    let len = sample_header_len(usize::from(channels)) as u16;
    put_at(out, 0, &SAMPLE_MAGIC);
    put_at(out, S_VERSION, &[SAMPLE_VERSION, channels]);
    put_at(out, S_LEN, &len.to_le_bytes());
    put_at(out, S_INTERVAL, &station.interval_s.to_le_bytes());
    put_at(out, S_SAMPLES, &station.samples_per_interval.to_le_bytes());
    let mut used = 0u8;
    for (i, v) in station.missing_values.iter().enumerate() {
        if let Some(v) = v {
            used |= 1 << i;
            put_at(out, S_MISSING + 8 * i, &v.to_bits().to_le_bytes());
        }
    }
    put_at(out, S_MISSING_USED, &[used]);
}

/// The channel indices a configuration refers to (speed link, screening
/// partner and above, icing channels), for range checks.
fn links(cfg: &ChannelConfig) -> [Option<u8>; 5] {
    let s = &cfg.screen;
    [
        cfg.speed_channel,
        s.partner,
        s.above,
        s.icing.map(|i| i.temperature),
        s.icing.map(|i| i.humidity),
    ]
}

fn check_links(cfg: &ChannelConfig, channels: u8) -> Result<(), WireError> {
    match links(cfg).into_iter().flatten().find(|&i| i >= channels) {
        Some(index) => Err(WireError::ChannelIndex { index, channels }),
        None => Ok(()),
    }
}

fn encode_channel_part(cfg: &ChannelConfig, out: &mut [u8]) {
    let s = &cfg.screen;
    let mut present = 0u16;
    let mut reals = [0u64; REALS];
    let mut real = |slot: usize, v: f64| {
        if let Some(r) = reals.get_mut(slot) {
            *r = v.to_bits();
        }
    };
    real(R_SCALE_OFFSET, cfg.scale.offset);
    real(R_SCALE_STEP, cfg.scale.step);
    real(R_RANGE_LO, cfg.range.0);
    real(R_RANGE_HI, cfg.range.1);
    real(R_MOUNTING, cfg.mounting_offset_deg);
    real(R_FLAT_TOLERANCE, s.flat_tolerance);
    real(R_PAIR_MEAN, s.pair_mean_diff);
    real(R_PAIR_MAX, s.pair_max_diff);
    real(R_SHEAR, s.shear_tolerance);
    if let Some(v) = s.step_limit {
        present |= P_STEP_LIMIT;
        real(R_STEP_LIMIT, v);
    }
    if let Some((lo, hi)) = s.mean_range {
        present |= P_MEAN_RANGE;
        real(R_MEAN_LO, lo);
        real(R_MEAN_HI, hi);
    }
    if let Some((lo, hi)) = s.sd_range {
        present |= P_SD_RANGE;
        real(R_SD_LO, lo);
        real(R_SD_HI, hi);
    }
    if let Some(v) = s.gust_max {
        present |= P_GUST_MAX;
        real(R_GUST_MAX, v);
    }
    if let Some(v) = s.min_recovery {
        present |= P_MIN_RECOVERY;
        real(R_MIN_RECOVERY, v);
    }
    if let Some(ice) = s.icing {
        present |= P_ICING;
        real(R_ICE_T, ice.max_temperature);
        real(R_ICE_H, ice.min_humidity);
        put_at(out, C_ICE_T, &[ice.temperature, ice.humidity]);
    }
    if let Some(i) = cfg.speed_channel {
        present |= P_SPEED_CHANNEL;
        put_at(out, C_SPEED, &[i]);
    }
    if let Some(i) = s.partner {
        present |= P_PARTNER;
        put_at(out, C_PARTNER, &[i]);
    }
    if let Some(i) = s.above {
        present |= P_ABOVE;
        put_at(out, C_ABOVE, &[i]);
    }
    if let Some(span) = s.flat_span_s {
        present |= P_FLAT_SPAN;
        put_at(out, C_FLAT_SPAN, &span.to_le_bytes());
    }
    put_at(out, C_KIND, &[kind_code(cfg.kind)]);
    put_at(out, C_PRESENT, &present.to_le_bytes());
    put_at(out, C_GUST, &cfg.gust_window.to_le_bytes());
    for (i, r) in reals.iter().enumerate() {
        put_at(out, C_REALS + 8 * i, &r.to_le_bytes());
    }
}

/// Reads one channel's part ([`CHANNEL_PART_LEN`] bytes) of a sample file
/// header whose station has `channels` channels. Every field is checked
/// against its domain (kind code, reserved bytes 0, fields of absent options
/// 0, channel indices below `channels`); the values themselves are checked
/// by [`Layout::new`](crate::Layout::new).
pub fn decode_channel_part(bytes: &[u8], channels: u8) -> Result<ChannelConfig, WireError> {
    let b = Bytes(bytes.get(..CHANNEL_PART_LEN).ok_or(WireError::Truncated)?);
    let code = b.u8(C_KIND);
    let kind = kind_of(code).ok_or(WireError::BadKind(code))?;
    let present = b.u16(C_PRESENT);
    if b.u8(C_RESERVED_A) != 0 || b.u8(C_RESERVED_B) != 0 || present & !P_ALL != 0 {
        return Err(WireError::Reserved);
    }
    let has = |bit: u16| present & bit != 0;
    let real = |slot: usize| f64::from_bits(b.u64(C_REALS + 8 * slot));
    // The bytes of every absent option must be 0, so that one configuration
    // has exactly one encoding.
    let unused_zero = [
        (P_SPEED_CHANNEL, u64::from(b.u8(C_SPEED))),
        (P_PARTNER, u64::from(b.u8(C_PARTNER))),
        (P_ABOVE, u64::from(b.u8(C_ABOVE))),
        (P_ICING, u64::from(b.u16(C_ICE_T))),
        (
            P_ICING,
            b.u64(C_REALS + 8 * R_ICE_T) | b.u64(C_REALS + 8 * R_ICE_H),
        ),
        (P_FLAT_SPAN, u64::from(b.u32(C_FLAT_SPAN))),
        (P_STEP_LIMIT, b.u64(C_REALS + 8 * R_STEP_LIMIT)),
        (
            P_MEAN_RANGE,
            b.u64(C_REALS + 8 * R_MEAN_LO) | b.u64(C_REALS + 8 * R_MEAN_HI),
        ),
        (
            P_SD_RANGE,
            b.u64(C_REALS + 8 * R_SD_LO) | b.u64(C_REALS + 8 * R_SD_HI),
        ),
        (P_GUST_MAX, b.u64(C_REALS + 8 * R_GUST_MAX)),
        (P_MIN_RECOVERY, b.u64(C_REALS + 8 * R_MIN_RECOVERY)),
    ]
    .iter()
    .all(|&(bit, v)| has(bit) || v == 0);
    if !unused_zero {
        return Err(WireError::Reserved);
    }
    let index = |bit: u16, at: usize| has(bit).then(|| b.u8(at));
    // Struct literals naming every field: a field added to these types stops
    // this from compiling until the format carries it.
    let cfg = ChannelConfig {
        kind,
        scale: Scale {
            offset: real(R_SCALE_OFFSET),
            step: real(R_SCALE_STEP),
        },
        range: (real(R_RANGE_LO), real(R_RANGE_HI)),
        gust_window: b.u16(C_GUST),
        mounting_offset_deg: real(R_MOUNTING),
        speed_channel: index(P_SPEED_CHANNEL, C_SPEED),
        // Sample frames carry no re-calibration: a logger under test replays
        // values as its transfer function gives them (`tenmin export`
        // refuses a station whose sensor history re-scales).
        recal: None,
        screen: Screen {
            step_limit: has(P_STEP_LIMIT).then(|| real(R_STEP_LIMIT)),
            mean_range: has(P_MEAN_RANGE).then(|| (real(R_MEAN_LO), real(R_MEAN_HI))),
            sd_range: has(P_SD_RANGE).then(|| (real(R_SD_LO), real(R_SD_HI))),
            gust_max: has(P_GUST_MAX).then(|| real(R_GUST_MAX)),
            min_recovery: has(P_MIN_RECOVERY).then(|| real(R_MIN_RECOVERY)),
            flat_span_s: has(P_FLAT_SPAN).then(|| b.u32(C_FLAT_SPAN)),
            flat_tolerance: real(R_FLAT_TOLERANCE),
            partner: index(P_PARTNER, C_PARTNER),
            pair_mean_diff: real(R_PAIR_MEAN),
            pair_max_diff: real(R_PAIR_MAX),
            above: index(P_ABOVE, C_ABOVE),
            shear_tolerance: real(R_SHEAR),
            icing: has(P_ICING).then(|| Icing {
                temperature: b.u8(C_ICE_T),
                humidity: b.u8(C_ICE_H),
                max_temperature: real(R_ICE_T),
                min_humidity: real(R_ICE_H),
            }),
        },
    };
    check_links(&cfg, channels)?;
    Ok(cfg)
}

/// Writes the header of a sample file for a station of `station` settings and
/// `channels` at the start of `out`, and returns its length
/// ([`sample_header_len`]`(channels.len())`).
///
/// Refuses (and writes nothing) what [`decode_sample_header`] would refuse: no
/// channels, more than 255, or a channel index (speed link, partner, above,
/// icing) that names no channel. Values are carried bit for bit and not
/// checked here; [`Layout::new`](crate::Layout::new) checks them.
pub fn encode_sample_header(
    station: &StationConfig,
    channels: &[ChannelConfig],
    out: &mut [u8],
) -> Result<usize, WireError> {
    let count = match u8::try_from(channels.len()) {
        Ok(0) => return Err(WireError::NoChannels),
        Ok(n) => n,
        Err(_) => {
            return Err(WireError::TooManyChannels {
                capacity: 255,
                found: channels.len(),
            })
        }
    };
    for cfg in channels {
        check_links(cfg, count)?;
    }
    let needed = sample_header_len(channels.len());
    let Some(out) = out.get_mut(..needed) else {
        return Err(WireError::BufferTooSmall { needed });
    };
    out.fill(0);
    encode_station_part(station, count, out);
    for (i, cfg) in channels.iter().enumerate() {
        let at = STATION_PART_LEN + CHANNEL_PART_LEN * i;
        if let Some(part) = out.get_mut(at..at + CHANNEL_PART_LEN) {
            encode_channel_part(cfg, part);
        }
    }
    let body = needed - HEADER_CRC_LEN;
    let crc = crc32(out.get(..body).unwrap_or(&[]));
    put_at(out, body, &crc.to_le_bytes());
    Ok(needed)
}

/// A decoded sample file header, for a reader holding up to `C` channels.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SampleHeader<const C: usize> {
    /// The station-wide settings.
    pub station: StationConfig,
    /// The channels: the first [`SampleHeader::count`] from the file, the rest
    /// `ChannelConfig::scalar(1.0)`, to be fed [`Reading::Missing`].
    pub channels: [ChannelConfig; C],
    count: u8,
}

impl<const C: usize> SampleHeader<C> {
    /// Channels in the file.
    pub const fn count(&self) -> usize {
        self.count as usize
    }

    /// The file's channels.
    pub fn configs(&self) -> &[ChannelConfig] {
        self.channels.get(..self.count()).unwrap_or(&[])
    }

    /// Length of the header in the file, bytes.
    pub const fn encoded_len(&self) -> usize {
        sample_header_len(self.count as usize)
    }
}

/// Reads and checks a whole sample file header at the start of `bytes`, for a
/// reader of at most `C` channels (a station of fewer channels is padded with
/// `ChannelConfig::scalar(1.0)`).
///
/// Checks in this order: length of the station part, magic, version, channel
/// count and header length, length of the whole header, CRC, then every
/// field's domain, and last whether the channels fit `C`
/// ([`WireError::TooManyChannels`]).
pub fn decode_sample_header<const C: usize>(bytes: &[u8]) -> Result<SampleHeader<C>, WireError> {
    let head = bytes.get(..STATION_PART_LEN).ok_or(WireError::Truncated)?;
    let count = header_prefix(&Bytes(head))?;
    let len = sample_header_len(usize::from(count));
    let header = bytes.get(..len).ok_or(WireError::Truncated)?;
    let body = header.get(..len - HEADER_CRC_LEN).unwrap_or(&[]);
    if crc32(body) != Bytes(header).u32(len - HEADER_CRC_LEN) {
        return Err(WireError::BadCrc);
    }
    let part = decode_station_part(body)?;
    let mut channels = [ChannelConfig::scalar(1.0); C];
    for i in 0..usize::from(count) {
        let at = STATION_PART_LEN + CHANNEL_PART_LEN * i;
        let cfg = decode_channel_part(body.get(at..).unwrap_or(&[]), count)?;
        if let Some(slot) = channels.get_mut(i) {
            *slot = cfg;
        }
    }
    if usize::from(count) > C {
        return Err(WireError::TooManyChannels {
            capacity: C,
            found: usize::from(count),
        });
    }
    Ok(SampleHeader {
        station: part.station,
        channels,
        count,
    })
}

/// The longest sample frame of `channels` channels (every reading a value).
pub const fn sample_frame_max_len(channels: usize) -> usize {
    12 + 9 * channels
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
                Reading::Missing | Reading::Flagged | Reading::Excluded => 1,
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
            Reading::Flagged => w.put(&[TAG_FLAGGED]),
            Reading::Excluded => w.put(&[TAG_EXCLUDED]),
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
        put_at(self.buf, self.at, bytes);
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
pub enum SampleDecode {
    /// A good sample frame of `len` bytes; the readings are in the caller's slice.
    Sample {
        /// Sample time.
        time: Timestamp,
        /// Frame length, bytes.
        len: usize,
    },
    /// The input ends inside the frame: give it more bytes (or, at the end of
    /// the file, the file is truncated).
    Incomplete,
    /// The frame is not good.
    Invalid(WireError),
}

/// Reads one sample frame from the start of `input`, with one reading for
/// each slot of `readings` (as many as the file's channel count). Unless it
/// returns [`SampleDecode::Sample`], the contents of `readings` are
/// unspecified.
pub fn decode_sample(input: &[u8], readings: &mut [Reading]) -> SampleDecode {
    let mut r = Reader { buf: input, at: 0 };
    let Some(time) = r.take::<8>() else {
        return SampleDecode::Incomplete;
    };
    for slot in readings.iter_mut() {
        let Some([tag]) = r.take::<1>() else {
            return SampleDecode::Incomplete;
        };
        *slot = match tag {
            TAG_MISSING => Reading::Missing,
            TAG_FLAGGED => Reading::Flagged,
            TAG_EXCLUDED => Reading::Excluded,
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
        if self.offset == 0 {
            write!(f, "header: {}", self.error)
        } else {
            write!(f, "byte {}: {}", self.offset, self.error)
        }
    }
}

impl core::error::Error for SampleError {}

/// Reads a whole sample file held in memory: the header, then each sample.
/// Yields `Err` once, at the first bad frame, and then stops.
#[derive(Clone, Debug)]
pub struct SampleReader<'a, const C: usize> {
    file: &'a [u8],
    header: SampleHeader<C>,
    pos: usize,
    failed: bool,
}

impl<'a, const C: usize> SampleReader<'a, C> {
    /// Checks the header of `file` (its station must have at most `C` channels).
    pub fn new(file: &'a [u8]) -> Result<Self, SampleError> {
        let header =
            decode_sample_header::<C>(file).map_err(|error| SampleError { offset: 0, error })?;
        Ok(SampleReader {
            file,
            pos: header.encoded_len(),
            header,
            failed: false,
        })
    }

    /// The file's header.
    pub const fn header(&self) -> &SampleHeader<C> {
        &self.header
    }

    /// Byte offset of the next frame.
    pub const fn position(&self) -> usize {
        self.pos
    }
}

impl<const C: usize> Iterator for SampleReader<'_, C> {
    /// A sample: its time and `C` readings, [`Reading::Missing`] after the
    /// file's channels.
    type Item = Result<(Timestamp, [Reading; C]), SampleError>;

    fn next(&mut self) -> Option<Self::Item> {
        let rest = self.file.get(self.pos..).unwrap_or(&[]);
        if self.failed || rest.is_empty() {
            return None;
        }
        let offset = self.pos;
        let mut readings = [Reading::Missing; C];
        let n = self.header.count().min(C);
        let error = match decode_sample(rest, readings.get_mut(..n).unwrap_or(&mut [])) {
            SampleDecode::Sample { time, len } => {
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
    use crate::{Event, Layout, Station};
    use proptest::prelude::*;
    use std::vec::Vec;

    #[test]
    fn crc32_check_values() {
        // CRC-32/ISO-HDLC check value (CRC of ASCII "123456789"): 0xCBF43926,
        // from the catalogue of parametrised CRC algorithms (CRC RevEng,
        // "CRC-32/ISO-HDLC" entry: poly 0x04C11DB7 reflected, init and xorout
        // 0xFFFFFFFF, check 0xCBF43926).
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        // A running CRC, as zlib's crc32(crc, buf, len) continues one (zlib
        // manual, crc32()): Python 3.11.7 zlib.crc32(b"The quick brown fox ")
        // == 0x88b075e2, and zlib.crc32(b"jumps over the lazy dog",
        // 0x88b075e2) == 0x414fa339 (run for this check).
        let mut c = Crc32::resume(0x88B0_75E2);
        c.update(b"jumps over the lazy dog");
        assert_eq!(c.value(), 0x414F_A339);
        assert_eq!(Crc32::resume(0), Crc32::new());
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
                flagged: seed.wrapping_mul(5) ^ 0x3C,
                excluded: 0,
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
                let config = (a % 3 != 2).then_some(ConfigStamp {
                    channels: (seed >> 16) as u8,
                    fingerprint: seed.rotate_left(13),
                });
                let mut record = record(kind, stats, seed & 0x1FF);
                if config.is_some() {
                    // Version 3 stores no ti: a record as a finish makes it.
                    record.ti = finished_ti(kind, record.mean, record.sd);
                } else {
                    // Version 1 has no room for the flagged count.
                    record.tally.flagged = 0;
                }
                out.push(RecordFrame {
                    sequence: seed,
                    interval_start: Timestamp::from_millis(
                        1_700_000_400_000 + 600_000 * (a as i64) - (k as i64) * 86_400_000_000,
                    ),
                    channel: (seed >> 24) as u8,
                    config,
                    record,
                });
            }
        }
        out
    }

    /// The turbulence intensity a finish gives a record of `kind` with
    /// `mean` and `sd` (the rule of `ChannelAcc::finish` and
    /// `ChannelRecord::empty`, written out again here).
    fn finished_ti(kind: Kind, mean: Stat, sd: Stat) -> Stat {
        if kind != Kind::Speed {
            return Stat::Absent(Absent::NotApplicable);
        }
        match (mean, sd) {
            (Stat::Absent(why), _) => Stat::Absent(why),
            (_, Stat::Absent(why)) => Stat::Absent(why),
            (Stat::Value(m), Stat::Value(s)) if m > 0.0 => Stat::Value(s / m),
            _ => Stat::Absent(Absent::ZeroMean),
        }
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
        // Every absent reason and odd value appears in every slot (ti, which
        // version 3 computes, in version-1 frames: absent reasons only where
        // the rotation puts them there).
        for slot in 0..9 {
            for a in ALL_ABSENT {
                assert!(
                    slot == TI_INDEX
                        || frames
                            .iter()
                            .any(|f| stats_of(&f.record)[slot] == Stat::Absent(a)),
                    "slot {slot} {a:?}"
                );
            }
        }
        // Flagged counts other than 0 travel in version 3.
        assert!(frames
            .iter()
            .any(|f| f.config.is_some() && f.record.tally.flagged != 0));
    }

    #[test]
    fn record_round_trip_station_records() {
        // Real records of every kind from a station run.
        let layout = Layout::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[
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
                if let Event::Closed(acc, _) = e {
                    for c in 0..4 {
                        frames.push(RecordFrame {
                            sequence: frames.len() as u32,
                            interval_start: layout.interval_start(acc.index()),
                            channel: c as u8,
                            config: Some(ConfigStamp {
                                channels: 4,
                                fingerprint: layout.fingerprint(),
                            }),
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
                Span::State { .. } => panic!("a state frame in a record log"),
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

    fn reseal_frame(mut b: [u8; FRAME_LEN]) -> [u8; FRAME_LEN] {
        let crc = crc32(&b[..O_CRC]);
        b[O_CRC..].copy_from_slice(&crc.to_le_bytes());
        b
    }

    #[test]
    fn out_of_domain_fields_with_good_crc_are_refused() {
        // Version 1 (varied_frames()[2] has no stamp).
        let f = varied_frames()[2];
        assert_eq!(f.config, None);
        assert_eq!(encode(&f)[O_VERSION], 1);
        let cases: [(usize, u8, WireError); 6] = [
            (O_VERSION, 4, WireError::UnsupportedVersion(4)),
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
            assert_eq!(decode_record(&reseal_frame(b)), Err(want), "offset {at}");
        }
        // An absent-reason code of 7.
        let mut b = encode(&f);
        b[O_ABSENT] = (b[O_ABSENT] & 0xF0) | 7;
        assert_eq!(
            decode_record(&reseal_frame(b)),
            Err(WireError::BadAbsent(7))
        );
        // Version 3.
        let f = varied_frames()[0];
        assert!(f.config.is_some());
        assert_eq!(encode(&f)[O_VERSION], 3);
        for (at, v, want) in [
            (O_VERSION, 0, WireError::UnsupportedVersion(0)),
            (O_KIND, 7, WireError::BadKind(7)),
            (V2_RESERVED, 1, WireError::Reserved),
            (V2_RESERVED + 1, 0x80, WireError::Reserved),
            (V3_RESERVED, 1, WireError::Reserved),
            (V3_RESERVED + 3, 0x80, WireError::Reserved),
        ] {
            let mut b = encode(&f);
            b[at] = v;
            assert_eq!(decode_record(&reseal_frame(b)), Err(want), "offset {at}");
        }
        // The absent mark with a code that names no reason, in any slot (in
        // version 2 also in the slot of ti, which version 3 does not store).
        for (version, slot) in (0..9).map(|s| (3, s)).chain([(2, TI_INDEX)]) {
            for code in [0u8, 7, 0xFF] {
                let mut b = encode(&f);
                b[O_VERSION] = version;
                put(
                    &mut b,
                    O_STATS + 8 * slot,
                    (ABSENT_MARK | u64::from(code)).to_le_bytes(),
                );
                let want = if version == 3 && slot == TI_INDEX {
                    // The flagged count's reserved half is not 0.
                    WireError::Reserved
                } else {
                    WireError::BadAbsent(code)
                };
                assert_eq!(
                    decode_record(&reseal_frame(b)),
                    Err(want),
                    "version {version} slot {slot}"
                );
            }
        }
    }

    #[test]
    fn record_frame_version_3_bytes() {
        // The layout in the module docs, byte by byte, for a frame written
        // here: every field at its documented place.
        let record = ChannelRecord {
            n_possible: 600,
            tally: Tally {
                valid: 590,
                missing: 7,
                out_of_range: 2,
                rejected: 1,
                flagged: 0x0A0B_0C0D,
                excluded: 0,
            },
            mean: Stat::Value(8.25),
            gust: Stat::Absent(Absent::NoFullWindow),
            spikes: 3,
            ..ChannelRecord::empty(Kind::Speed, 600, Tally::default())
        };
        let f = RecordFrame {
            sequence: 0x0102_0304,
            interval_start: Timestamp::from_millis(1_737_331_200_000),
            channel: 4,
            config: Some(ConfigStamp {
                channels: 5,
                fingerprint: 0xDEAD_BEEF,
            }),
            record,
        };
        let b = encode(&f);
        assert_eq!(b[..4], [0xD3, 0x7A, 0x1C, 0x5E]);
        assert_eq!(b[4..8], [3, 0, 4, 5]);
        assert_eq!(b[8..12], [4, 3, 2, 1]);
        assert_eq!(b[12..20], 1_737_331_200_000i64.to_le_bytes());
        assert_eq!(b[20..24], [0xEF, 0xBE, 0xAD, 0xDE]);
        assert_eq!(b[24..28], 590u32.to_le_bytes());
        assert_eq!(b[28..32], 7u32.to_le_bytes());
        assert_eq!(b[32..36], 2u32.to_le_bytes());
        assert_eq!(b[36..40], 1u32.to_le_bytes());
        assert_eq!(b[40..44], 3u32.to_le_bytes());
        assert_eq!(b[44..48], [0, 0, 0, 0]);
        assert_eq!(b[48..52], 600u32.to_le_bytes());
        assert_eq!(b[52..60], 8.25f64.to_bits().to_le_bytes());
        // sd: no valid samples (code 2); gust: no full window (code 3); the
        // resultants: not applicable (code 1).
        assert_eq!(b[60..68], [2, 0, 0, 0, 0xE0, 0xB5, 0xFA, 0x7F]);
        assert_eq!(b[84..92], [3, 0, 0, 0, 0xE0, 0xB5, 0xFA, 0x7F]);
        // ti's slot: the flagged count and 4 reserved bytes.
        assert_eq!(b[92..100], [0x0D, 0x0C, 0x0B, 0x0A, 0, 0, 0, 0]);
        assert_eq!(b[116..124], [1, 0, 0, 0, 0xE0, 0xB5, 0xFA, 0x7F]);
        assert_eq!(b[124..], crc32(&b[..124]).to_le_bytes());
        let back = decode_record(&b).unwrap();
        // sd is absent (no valid samples), so ti is absent for that reason.
        assert_eq!(back.record.ti, Stat::Absent(Absent::NoValidSamples));
        assert!(same(&f, &back));
        // With an sd, ti is sd / mean (2.0625 / 8.25 = 0.25 exactly).
        let with_sd = RecordFrame {
            record: ChannelRecord {
                sd: Stat::Value(2.0625),
                ..record
            },
            ..f
        };
        let back = decode_record(&encode(&with_sd)).unwrap();
        assert_eq!(back.record.ti, Stat::Value(0.25));
        // A zero mean: ti absent as zero mean; other kinds: not applicable.
        for (kind, mean, want) in [
            (Kind::Speed, 0.0, Absent::ZeroMean),
            (Kind::Scalar, 8.25, Absent::NotApplicable),
            (Kind::Direction, 8.25, Absent::NotApplicable),
        ] {
            let g = RecordFrame {
                record: ChannelRecord {
                    kind,
                    mean: Stat::Value(mean),
                    ..with_sd.record
                },
                ..f
            };
            let back = decode_record(&encode(&g)).unwrap();
            assert_eq!(back.record.ti, Stat::Absent(want), "{kind:?}");
        }
        // The same frame written as version 2 (ti stored at 92, no flagged
        // count): byte 4 and the slot of ti, by hand, still reads, flagged 0.
        let mut v2 = encode(&with_sd);
        v2[4] = 2;
        v2[92..100].copy_from_slice(&0.75f64.to_bits().to_le_bytes());
        let back = decode_record(&reseal_frame(v2)).unwrap();
        assert_eq!(back.record.ti, Stat::Value(0.75));
        assert_eq!(back.record.tally.flagged, 0);
        assert_eq!(
            back.record.tally,
            Tally {
                flagged: 0,
                ..record.tally
            }
        );
        // The same frame without a stamp is version 1, and reads back so
        // (without the flagged count, which it has no room for).
        let old = RecordFrame {
            config: None,
            record: ChannelRecord {
                tally: Tally {
                    flagged: 0,
                    ..record.tally
                },
                ..record
            },
            ..f
        };
        let b = encode(&old);
        assert_eq!(b[4..8], [1, 0, 4, 0]);
        assert_eq!(b[20..24], 600u32.to_le_bytes());
        // Statistic 1 (sd) absent, code 2 in the high nibble of byte 46.
        assert_eq!(b[46] >> 4, 2);
        assert_eq!(b[60..68], [0; 8]);
        assert!(same(&old, &decode_record(&b).unwrap()));
    }

    #[test]
    fn version_1_frames_written_before_the_stamp_still_read() {
        // A version-1 frame as the first format wrote it, byte by byte from
        // its layout (module docs), not by this code's encoder.
        let mut b = [0u8; FRAME_LEN];
        b[..4].copy_from_slice(&SYNC);
        b[4] = 1; // version
        b[5] = 2; // scalar
        b[6] = 3; // channel
        b[8..12].copy_from_slice(&7u32.to_le_bytes());
        b[12..20].copy_from_slice(&1_737_331_800_000i64.to_le_bytes());
        b[20..24].copy_from_slice(&600u32.to_le_bytes());
        b[24..28].copy_from_slice(&600u32.to_le_bytes());
        // mean and sd present; min, max present; gust, ti, resultants not
        // applicable (code 1): nibbles 0,0 | 0,0 | 1,1 | 1,1 | 1,0.
        b[46..51].copy_from_slice(&[0x00, 0x00, 0x11, 0x11, 0x01]);
        for (i, v) in [12.5f64, 0.25, 12.0, 13.0].iter().enumerate() {
            b[52 + 8 * i..60 + 8 * i].copy_from_slice(&v.to_bits().to_le_bytes());
        }
        let b = reseal_frame(b);
        let f = decode_record(&b).unwrap();
        assert_eq!(f.config, None);
        assert_eq!((f.sequence, f.channel), (7, 3));
        assert_eq!(f.record.kind, Kind::Scalar);
        assert_eq!((f.record.n_possible, f.record.tally.valid), (600, 600));
        assert_eq!(f.record.max, Stat::Value(13.0));
        assert_eq!(f.record.gust, Stat::Absent(Absent::NotApplicable));
        // And the scanner finds it as a record frame.
        assert!(matches!(scan(&b).next(), Some(Span::Frame { offset: 0, frame }) if frame == f));
    }

    /// A station of every form, with cross-channel screening: 0 top
    /// anemometer (partner 1, icing from 5 and 6), 1 its partner, 2 lower
    /// anemometer (below 0), 3 vane linked to 0, 4 vane alone, 5 temperature,
    /// 6 humidity; 0.1 Hz (60 samples an interval).
    fn all_forms() -> Layout<7> {
        let mut cfg = StationConfig::ten_minute_1hz();
        cfg.samples_per_interval = 60;
        cfg.missing_values[0] = Some(-999.0);
        let mut top = Screen::for_kind(Kind::Speed);
        top.partner = Some(1);
        top.icing = Some(Icing::new(5, 6));
        top.flat_span_s = Some(1200);
        // Steps of the random speeds reach 5 m/s: spikes on every channel.
        top.step_limit = Some(2.0);
        let mut low = Screen::for_kind(Kind::Speed);
        low.above = Some(0);
        low.step_limit = Some(3.0);
        Layout::new::<4>(
            cfg,
            &[
                ChannelConfig::speed(0.01).with_screen(top),
                ChannelConfig::speed(0.01).with_gust_window(4),
                ChannelConfig::speed(0.01).with_screen(low),
                ChannelConfig::direction().with_speed_channel(0),
                ChannelConfig::direction().with_mounting_offset(-12.5),
                ChannelConfig::scalar(0.01).with_range(-60.0, 60.0),
                ChannelConfig::scalar(0.1).with_range(0.0, 100.0),
            ],
        )
        .unwrap()
    }

    /// Readings of every sort (values, counts, missing, codes, out of range)
    /// at times with gaps, duplicates, steps back and empty intervals.
    fn mixed_input(seed: u64, intervals: i64) -> Vec<(Timestamp, [Reading; 7])> {
        let mut rng = crate::test_rng::Rng(seed);
        let mut out = Vec::new();
        let mut t = T_STATE0;
        while t < T_STATE0 + intervals * 600_000 {
            let roll = rng.next() % 1000;
            t += match roll {
                0..=4 => 600_000 * (1 + (rng.next() % 3) as i64),
                5..=9 => 25_000,
                10..=14 => 0,
                15..=17 => -20_000,
                _ => 10_000,
            };
            let mut r = [Reading::Missing; 7];
            for (c, slot) in r.iter_mut().enumerate() {
                let u = rng.unit();
                let x = rng.next() % 100;
                *slot = match (c, x) {
                    (_, 0..=2) => Reading::Missing,
                    (_, 3) => Reading::Value(-999.0),
                    (_, 4) => Reading::Value(1e6),
                    (_, 5) => Reading::Flagged,
                    (_, 6) => Reading::Excluded,
                    (0..=2, 7..=50) => Reading::Counts((800.0 + 400.0 * u) as i32),
                    (0..=2, _) => Reading::Value(6.0 + 5.0 * u),
                    (3 | 4, 7..=50) => Reading::Counts((u * 36_000.0) as i32),
                    (3 | 4, _) => Reading::Value(250.0 + 60.0 * u),
                    (5, _) => Reading::Value(-2.0 + 4.0 * u),
                    _ => Reading::Value(80.0 + 20.0 * u),
                };
            }
            out.push((Timestamp::from_millis(t), r));
        }
        out
    }

    const T_STATE0: i64 = 1_700_000_400_000;

    #[test]
    fn state_frames_finish_as_the_station_does() {
        let layout = all_forms();
        // spikes, gusts, resultants, flags, flagged readings, rejected samples
        let mut seen = [0u32; 6];
        // Version-3 record frames: with the flagged count.
        let stamp = Some(ConfigStamp {
            channels: 7,
            fingerprint: layout.fingerprint(),
        });
        for seed in 1..=6 {
            let input = mixed_input(seed, 40);
            // The station on the logger.
            let mut station: Station<7, 4> = Station::new(layout);
            let mut want = Vec::new();
            let mut keep = |e: Event<'_, 7, 4>| {
                if let Event::Closed(acc, records) = e {
                    for (c, rec) in records.iter().enumerate() {
                        seen[0] += rec.spikes;
                        seen[1] += u32::from(matches!(rec.gust, Stat::Value(_)));
                        seen[2] += u32::from(matches!(rec.resultant_speed, Stat::Value(_)));
                        seen[3] += u32::from(!rec.flags.is_empty());
                        seen[4] += rec.tally.flagged;
                        seen[5] += rec.tally.rejected;
                        want.push(encode(&RecordFrame {
                            sequence: 0,
                            interval_start: layout.interval_start(acc.index()),
                            channel: c as u8,
                            config: stamp,
                            record: *rec,
                        }));
                    }
                }
            };
            for (t, r) in &input {
                station.push(*t, r, &mut keep);
            }
            station.close(&mut keep);
            // A logger that sends states; the log it writes.
            let mut sampler: crate::Sampler<7, 4> = crate::Sampler::new(layout);
            let mut log = Vec::new();
            let mut seq = 0u32;
            let mut send = |e: crate::Ended<'_, 7, 4>| {
                if let crate::Ended::Interval(l, acc) = e {
                    for c in 0..7 {
                        let mut b = [0u8; FRAME_LEN];
                        let frame = StateFrame {
                            sequence: seq,
                            interval_start: l.interval_start(acc.index()),
                            channel: c as u8,
                            channels: 7,
                            fingerprint: l.fingerprint(),
                            state: acc.state(c).unwrap(),
                        };
                        encode_state(&frame, &mut b);
                        assert_eq!(decode_state(&b), Ok(frame));
                        log.extend_from_slice(&b);
                        seq += 1;
                    }
                }
            };
            for (t, r) in &input {
                sampler.push(*t, r, &mut send);
            }
            sampler.close(&mut send);
            assert_eq!(sampler.totals(), station.totals());
            // The PC: scan, put the states back, finish in order, gaps between.
            let mut finisher: crate::Finisher<7> = crate::Finisher::new();
            let mut got = Vec::new();
            let mut acc: crate::IntervalAcc<7, 4> = crate::IntervalAcc::new(&layout, 0);
            let mut next: Option<i64> = None;
            for span in scan(&log) {
                let Span::State { frame, .. } = span else {
                    panic!("not a state frame: {span:?}");
                };
                assert_eq!(frame.fingerprint, layout.fingerprint());
                let k = layout.interval_of(frame.interval_start);
                if frame.channel == 0 {
                    if let Some(n) = next {
                        if k > n {
                            let gap = crate::Gap {
                                first: n,
                                count: (k - n) as u64,
                            };
                            finisher.gap(&layout, gap);
                        }
                    }
                    acc = crate::IntervalAcc::new(&layout, k);
                }
                let c = usize::from(frame.channel);
                acc.set_state(&layout, c, &frame.state).unwrap();
                if c == 6 {
                    let records = finisher.interval(&layout, &mut acc);
                    for (c, rec) in records.iter().enumerate() {
                        got.push(encode(&RecordFrame {
                            sequence: 0,
                            interval_start: frame.interval_start,
                            channel: c as u8,
                            config: stamp,
                            record: *rec,
                        }));
                    }
                    next = Some(k + 1);
                }
            }
            assert!(!want.is_empty());
            assert_eq!(got.len(), want.len(), "seed {seed}");
            for (i, (g, w)) in got.iter().zip(&want).enumerate() {
                assert!(
                    g == w,
                    "seed {seed}, record {i}: {:?} != {:?}",
                    decode_record(g),
                    decode_record(w)
                );
            }
            assert_eq!(finisher.recovery(), station.recovery(), "seed {seed}");
        }
        // The input exercises what the states carry.
        assert!(seen.iter().all(|&n| n > 0), "{seen:?}");
    }

    #[test]
    fn state_frames_carry_the_flagged_count_at_116_and_old_frames_read_as_0() {
        let layout = all_forms();
        let mut acc: crate::IntervalAcc<7, 4> = crate::IntervalAcc::new(&layout, 0);
        let mut r = [Reading::Value(5.0); 7];
        r[3] = Reading::Value(90.0);
        r[4] = Reading::Value(90.0);
        for i in 0..10 {
            // Every channel flagged in 3 of the 10 samples.
            let row = if i % 3 == 0 && i > 0 {
                [Reading::Flagged; 7]
            } else {
                r
            };
            acc.push(&layout, Timestamp::from_millis(i * 1000), &row);
        }
        acc.reject();
        for c in 0..7 {
            let frame = StateFrame {
                sequence: 9,
                interval_start: Timestamp::from_millis(0),
                channel: c as u8,
                channels: 7,
                fingerprint: layout.fingerprint(),
                state: acc.state(c).unwrap(),
            };
            assert_eq!(frame.state.tally().flagged, 3);
            assert_eq!(frame.state.tally().rejected, 1);
            let mut b = [0u8; FRAME_LEN];
            encode_state(&frame, &mut b);
            assert_eq!(b[116..120], [3, 0, 0, 0], "channel {c}");
            assert_eq!(b[120..124], [0; 4]);
            assert_eq!(decode_state(&b), Ok(frame));
            // A frame written before the count (0 at 116) reads as none flagged.
            let mut old = b;
            old[116] = 0;
            let back = decode_state(&reseal_frame(old)).unwrap();
            assert_eq!(back.state.tally().flagged, 0);
            assert_eq!(back.state.tally().valid, frame.state.tally().valid);
            // The excluded count follows at 120 (u32, little-endian); a
            // logger's frames carry 0 there, so they read as none excluded.
            let mut ex = b;
            ex[121] = 1;
            let back = decode_state(&reseal_frame(ex)).unwrap();
            assert_eq!(back.state.tally().excluded, 256);
            assert_eq!(back.state.tally().flagged, 3);
        }
    }

    #[test]
    fn state_frame_damage_is_refused() {
        let layout = all_forms();
        let mut sampler: crate::Sampler<7, 4> = crate::Sampler::new(layout);
        let mut frames = Vec::new();
        let mut send = |e: crate::Ended<'_, 7, 4>| {
            if let crate::Ended::Interval(l, acc) = e {
                for c in 0..7 {
                    let mut b = [0u8; FRAME_LEN];
                    encode_state(
                        &StateFrame {
                            sequence: 9,
                            interval_start: l.interval_start(acc.index()),
                            channel: c as u8,
                            channels: 7,
                            fingerprint: l.fingerprint(),
                            state: acc.state(c).unwrap(),
                        },
                        &mut b,
                    );
                    frames.push(b);
                }
            }
        };
        for (t, r) in mixed_input(11, 2) {
            sampler.push(t, &r, &mut send);
        }
        sampler.close(&mut send);
        assert!(frames.len() >= 7);
        for b in &frames[..7] {
            // Every single bit flip is refused (CRC-32 finds all 1-bit errors).
            for bit in 0..FRAME_LEN * 8 {
                let mut d = *b;
                d[bit / 8] ^= 1 << (bit % 8);
                assert!(decode_state(&d).is_err(), "bit {bit}");
            }
            // A field out of its domain with a good CRC is refused too.
            assert!(decode_state(b).is_ok());
            for at in [T_FORM, T_RESERVED, 47] {
                let mut d = *b;
                d[at] = if at == T_FORM { 9 } else { 1 };
                let crc = crc32(&d[..O_CRC]);
                d[O_CRC..].copy_from_slice(&crc.to_le_bytes());
                assert!(decode_state(&d).is_err(), "byte {at}");
            }
        }
        // A state of the wrong form is refused by the interval.
        let s = decode_state(&frames[0]).unwrap().state;
        let mut acc: crate::IntervalAcc<7, 4> = crate::IntervalAcc::new(&layout, 0);
        assert_eq!(
            acc.set_state(&layout, 3, &s),
            Err(crate::StateError::WrongForm)
        );
        assert_eq!(
            acc.set_state(&layout, 7, &s),
            Err(crate::StateError::NoSuchChannel)
        );
        assert_eq!(acc.set_state(&layout, 0, &s), Ok(()));
    }

    #[test]
    fn state_log_cut_at_every_byte_offset_loses_only_the_cut_frame() {
        // The state frames of two intervals of every form, then a torn write
        // at every byte offset, and appends resumed after it.
        let layout = all_forms();
        let mut sampler: crate::Sampler<7, 4> = crate::Sampler::new(layout);
        let mut frames = Vec::new();
        let mut send = |e: crate::Ended<'_, 7, 4>| {
            if let crate::Ended::Interval(l, acc) = e {
                for c in 0..7 {
                    frames.push(StateFrame {
                        sequence: frames.len() as u32,
                        interval_start: l.interval_start(acc.index()),
                        channel: c as u8,
                        channels: 7,
                        fingerprint: l.fingerprint(),
                        state: acc.state(c).unwrap(),
                    });
                }
            }
        };
        for (t, r) in mixed_input(5, 2) {
            sampler.push(t, &r, &mut send);
        }
        sampler.close(&mut send);
        let log: Vec<u8> = frames
            .iter()
            .flat_map(|f| {
                let mut b = [0u8; FRAME_LEN];
                encode_state(f, &mut b);
                b
            })
            .collect();
        let states = |bytes: &[u8]| -> (Vec<StateFrame>, Vec<Span>) {
            let (mut good, mut other) = (Vec::new(), Vec::new());
            for span in scan(bytes) {
                match span {
                    Span::State { frame, .. } => good.push(frame),
                    s => other.push(s),
                }
            }
            (good, other)
        };
        for cut in 0..=log.len() {
            let whole = cut / FRAME_LEN;
            let (good, other) = states(&log[..cut]);
            assert_eq!(good, frames[..whole], "cut {cut}");
            let torn = Span::Torn {
                offset: whole * FRAME_LEN,
                len: cut % FRAME_LEN,
            };
            assert_eq!(
                other,
                if cut % FRAME_LEN == 0 {
                    vec![]
                } else {
                    vec![torn]
                },
                "cut {cut}"
            );
            // Power came back: the writer appends the rest after the torn bytes.
            if cut % FRAME_LEN != 0 && whole + 1 < frames.len() {
                let mut resumed = log[..cut].to_vec();
                resumed.extend_from_slice(&log[(whole + 1) * FRAME_LEN..]);
                let (good, other) = states(&resumed);
                let mut want = frames.clone();
                want.remove(whole);
                assert_eq!(good, want, "cut {cut}, resumed");
                assert_eq!(other.len(), 1, "cut {cut}, resumed");
            }
        }
    }

    #[test]
    fn fingerprint_tells_configurations_apart() {
        let a = all_forms();
        assert_eq!(a.fingerprint(), all_forms().fingerprint());
        let mut cfg = StationConfig::ten_minute_1hz();
        cfg.samples_per_interval = 60;
        let one = |c: ChannelConfig| Layout::<1>::new::<4>(cfg, &[c]).unwrap().fingerprint();
        let base = one(ChannelConfig::speed(0.01));
        let mut s = Screen::for_kind(Kind::Speed);
        s.gust_max = Some(70.0);
        for other in [
            ChannelConfig::speed(0.1),
            ChannelConfig::speed(0.01).with_calibration(0.01, 0.2),
            ChannelConfig::speed(0.01).with_range(0.0, 60.0),
            ChannelConfig::speed(0.01).with_gust_window(2),
            ChannelConfig::speed(0.01).with_screen(s),
            ChannelConfig::scalar(0.01),
        ] {
            assert_ne!(one(other), base, "{other:?}");
        }
        cfg.samples_per_interval = 600;
        let l = Layout::<1>::new::<4>(cfg, &[ChannelConfig::speed(0.01)]).unwrap();
        assert_ne!(l.fingerprint(), base);
    }

    #[test]
    fn a_record_frame_tells_its_logger_configuration() {
        // The stamp a logger puts in its record frames tells a station of a
        // channel more, and one with two channels of different settings in
        // the other order, from its own.
        let cfg = StationConfig::ten_minute_1hz();
        let (a, b, t) = (
            ChannelConfig::speed(0.01),
            ChannelConfig::speed(0.1),
            ChannelConfig::scalar(0.1),
        );
        let stamp = |chans: &[ChannelConfig]| ConfigStamp {
            channels: chans.len() as u8,
            fingerprint: crate::config_fingerprint(&cfg, chans),
        };
        let logger = stamp(&[a, b, t]);
        let frame = RecordFrame {
            sequence: 1,
            interval_start: Timestamp::from_millis(1_737_331_200_000),
            channel: 0,
            config: Some(logger),
            record: ChannelRecord::empty(Kind::Speed, 600, Tally::default()),
        };
        let read = decode_record(&encode(&frame)).unwrap().config.unwrap();
        assert_eq!(read, logger);
        // The same station file: the same stamp (and the layout's own).
        let layout = Layout::<3>::new::<3>(cfg, &[a, b, t]).unwrap();
        assert_eq!(read.fingerprint, layout.fingerprint());
        for other in [stamp(&[a, b, t, t]), stamp(&[b, a, t]), stamp(&[a, b])] {
            assert_ne!(read, other, "{other:?}");
        }
        assert_ne!(stamp(&[b, a, t]).fingerprint, read.fingerprint);
    }

    fn readings_strategy() -> impl Strategy<Value = Vec<Reading>> {
        let one = prop_oneof![
            any::<u64>().prop_map(|b| Reading::Value(f64::from_bits(b))),
            any::<i32>().prop_map(Reading::Counts),
            Just(Reading::Missing),
            Just(Reading::Flagged),
            Just(Reading::Excluded),
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
            let mut readings = [Reading::Missing; 3];
            match decode_sample(&buf[..n], &mut readings) {
                SampleDecode::Sample { time, len } => {
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
                prop_assert_eq!(decode_sample(&buf[..cut], &mut readings), SampleDecode::Incomplete);
            }
        }

        #[test]
        fn record_round_trip_arbitrary_bits(bits in proptest::array::uniform9(any::<u64>()), seq in any::<u32>(), t in any::<i64>()) {
            let stats = bits.map(|b| Stat::Value(f64::from_bits(b)));
            let f = RecordFrame {
                sequence: seq,
                interval_start: Timestamp::from_millis(t),
                channel: (seq % 256) as u8,
                config: Some(ConfigStamp { channels: 3, fingerprint: seq ^ 0x5A5A }),
                record: record(Kind::Scalar, stats, seq % 512),
            };
            // The absent mark itself is not a value a statistic can hold.
            prop_assume!(bits.iter().all(|b| b & !0xFF != ABSENT_MARK));
            // Version 3 stores no ti: on a scalar channel it reads back not
            // applicable (1 below); version 1 carries it, and no flagged count.
            let mut without_ti = bits;
            without_ti[TI_INDEX] = 1;
            for (config, want, flagged) in [
                (f.config, without_ti, f.record.tally.flagged),
                (None, bits, 0),
            ] {
                let f = RecordFrame { config, ..f };
                let back = decode_record(&encode(&f)).unwrap();
                prop_assert_eq!(back.config, config);
                prop_assert_eq!(
                    stats_of(&back.record).map(|s| match s { Stat::Value(v) => v.to_bits(), Stat::Absent(_) => 1 }),
                    want
                );
                prop_assert_eq!(back.record.tally, Tally { flagged, ..f.record.tally });
            }
        }
    }

    // -- Sample file headers ------------------------------------------------

    /// Every `Option` of a channel configuration set (`Some`) or not.
    fn cfg_with_options(base: ChannelConfig, present: u16) -> ChannelConfig {
        let mut c = base;
        let s = &mut c.screen;
        let on = |bit: u16| present & bit != 0;
        c.speed_channel = on(P_SPEED_CHANNEL).then_some(1);
        s.step_limit = on(P_STEP_LIMIT).then_some(7.5);
        s.mean_range = on(P_MEAN_RANGE).then_some((-0.0, 21.25));
        s.sd_range = on(P_SD_RANGE).then_some((0.125, 3.0));
        s.gust_max = on(P_GUST_MAX).then_some(f64::INFINITY);
        s.min_recovery = on(P_MIN_RECOVERY).then_some(0.0);
        s.flat_span_s = on(P_FLAT_SPAN).then_some(0);
        s.partner = on(P_PARTNER).then_some(0);
        s.above = on(P_ABOVE).then_some(2);
        s.icing = on(P_ICING).then_some(Icing {
            temperature: 2,
            humidity: 0,
            max_temperature: -1.5,
            min_humidity: 0.0,
        });
        c
    }

    fn header_bytes(station: &StationConfig, channels: &[ChannelConfig]) -> Vec<u8> {
        let mut out = vec![0u8; sample_header_len(channels.len())];
        let n = encode_sample_header(station, channels, &mut out).unwrap();
        assert_eq!(n, out.len());
        out
    }

    fn reseal(mut h: Vec<u8>) -> Vec<u8> {
        let body = h.len() - HEADER_CRC_LEN;
        let crc = crc32(&h[..body]);
        h[body..].copy_from_slice(&crc.to_le_bytes());
        h
    }

    /// Three channels of every kind with the given option states.
    fn three(present: u16) -> [ChannelConfig; 3] {
        [
            cfg_with_options(ChannelConfig::speed(0.01).with_gust_window(12), present),
            cfg_with_options(
                ChannelConfig::direction()
                    .with_calibration(0.1, -0.5)
                    .with_mounting_offset(-4.25),
                present,
            ),
            cfg_with_options(ChannelConfig::scalar(0.1).with_range(-40.0, 60.0), present),
        ]
    }

    #[test]
    fn header_round_trip_every_option_state() {
        // All options absent, all present, each alone, each alone absent; with
        // every pattern of missing-value slots in use.
        let mut states = vec![0u16, P_ALL];
        for bit in 0..10 {
            states.push(1 << bit);
            states.push(P_ALL & !(1 << bit));
        }
        for (k, &present) in states.iter().enumerate() {
            let mut station = StationConfig::ten_minute_1hz();
            for (i, slot) in station.missing_values.iter_mut().enumerate() {
                *slot = ((k >> i) & 1 == 1).then_some(-999.0 - i as f64);
            }
            station.interval_s = 60 * (k as u32 + 1);
            station.samples_per_interval = 7 * (k as u32 + 1);
            let channels = three(present);
            let bytes = header_bytes(&station, &channels);
            assert_eq!(bytes.len(), 56 + 3 * 160 + 4);
            let h = decode_sample_header::<3>(&bytes).unwrap();
            assert_eq!(h.station, station, "state {present:#x}");
            assert_eq!(h.configs(), &channels[..], "state {present:#x}");
            assert_eq!(h.count(), 3);
            assert_eq!(h.encoded_len(), bytes.len());
            // A larger reader pads with unit scalars.
            let h8 = decode_sample_header::<8>(&bytes).unwrap();
            assert_eq!(h8.configs(), &channels[..]);
            assert!(h8.channels[3..]
                .iter()
                .all(|c| *c == ChannelConfig::scalar(1.0)));
            // Read in pieces, as a logger with little RAM does.
            let mut crc = Crc32::new();
            crc.update(&bytes[..STATION_PART_LEN]);
            let part = decode_station_part(&bytes).unwrap();
            assert_eq!((part.channels, part.station), (3, station));
            assert_eq!(part.header_len(), bytes.len());
            for (i, want) in channels.iter().enumerate() {
                let at = STATION_PART_LEN + CHANNEL_PART_LEN * i;
                let piece = &bytes[at..at + CHANNEL_PART_LEN];
                crc.update(piece);
                assert_eq!(decode_channel_part(piece, 3).unwrap(), *want);
            }
            let end = bytes.len() - HEADER_CRC_LEN;
            assert_eq!(crc.value().to_le_bytes(), bytes[end..]);
        }
    }

    #[test]
    fn header_keeps_the_layout() {
        // The decoded configuration builds the same validated layout as the
        // original: a station with links, calibrations and screening set.
        let mut top = Screen::for_kind(Kind::Speed);
        top.partner = Some(1);
        top.icing = Some(Icing::new(4, 5));
        let mut low = Screen::for_kind(Kind::Speed);
        low.above = Some(0);
        low.step_limit = None;
        let channels = [
            ChannelConfig::speed(1.0)
                .with_calibration(0.049, 0.25)
                .with_screen(top),
            ChannelConfig::speed(0.01),
            ChannelConfig::speed(0.01)
                .with_screen(low)
                .with_gust_window(12),
            ChannelConfig::direction()
                .with_calibration(360.0 / 26_400.0, 0.0)
                .with_speed_channel(0)
                .with_mounting_offset(4.0),
            ChannelConfig::scalar(0.01).with_range(-40.0, 60.0),
            ChannelConfig::scalar(0.1).with_range(0.0, 100.0),
        ];
        let station = StationConfig::ten_minute_1hz();
        let h = decode_sample_header::<6>(&header_bytes(&station, &channels)).unwrap();
        let a = Layout::new::<12>(station, &channels).unwrap();
        let b = Layout::new::<12>(h.station, &h.channels).unwrap();
        assert_eq!(a, b);
    }

    #[test]
    fn header_every_truncation_and_bit_flip_is_refused() {
        let mut station = StationConfig::ten_minute_1hz();
        station.missing_values[3] = Some(f64::MIN_POSITIVE);
        for present in [0, P_ALL, 0x155] {
            let bytes = header_bytes(&station, &three(present));
            for cut in 0..bytes.len() {
                assert_eq!(
                    decode_sample_header::<3>(&bytes[..cut]).unwrap_err(),
                    WireError::Truncated,
                    "cut {cut}"
                );
            }
            // In a file with samples after the header, too.
            let mut file = bytes.clone();
            file.extend_from_slice(&[0x5A; 200]);
            for bit in 0..bytes.len() * 8 {
                let mut bad = file.clone();
                bad[bit / 8] ^= 1 << (bit % 8);
                assert!(
                    decode_sample_header::<8>(&bad).is_err(),
                    "bit {bit} of {present:#x}"
                );
                assert!(SampleReader::<8>::new(&bad).is_err(), "bit {bit}");
            }
        }
    }

    #[test]
    fn header_out_of_domain_fields_are_refused() {
        let station = StationConfig::ten_minute_1hz();
        let good = header_bytes(&station, &three(0));
        let ch = |i: usize, at: usize| STATION_PART_LEN + CHANNEL_PART_LEN * i + at;
        let real = |i: usize, slot: usize| ch(i, C_REALS + 8 * slot);
        let cases: Vec<(usize, u8, WireError)> = vec![
            (S_RESERVED + 3, 1, WireError::Reserved),
            (S_MISSING_USED, 0x13, WireError::Reserved),
            // Slot 2 is not in use but holds a value.
            (S_MISSING + 16, 1, WireError::Reserved),
            (ch(1, C_KIND), 3, WireError::BadKind(3)),
            (ch(0, C_RESERVED_A), 1, WireError::Reserved),
            (ch(2, C_RESERVED_B), 0x80, WireError::Reserved),
            (ch(0, C_PRESENT + 1), 0x04, WireError::Reserved),
            // Fields of absent options that are not 0.
            (ch(0, C_SPEED), 1, WireError::Reserved),
            (ch(0, C_PARTNER), 1, WireError::Reserved),
            (ch(0, C_ABOVE), 1, WireError::Reserved),
            (ch(0, C_ICE_H), 1, WireError::Reserved),
            (ch(0, C_FLAT_SPAN + 3), 1, WireError::Reserved),
            (real(1, R_STEP_LIMIT), 1, WireError::Reserved),
            (real(1, R_MEAN_HI), 1, WireError::Reserved),
            (real(1, R_SD_LO), 1, WireError::Reserved),
            (real(1, R_GUST_MAX), 1, WireError::Reserved),
            (real(1, R_MIN_RECOVERY), 1, WireError::Reserved),
            (real(2, R_ICE_T), 1, WireError::Reserved),
        ];
        for (at, v, want) in &cases {
            let mut b = good.clone();
            b[*at] = *v;
            assert_eq!(
                decode_sample_header::<3>(&reseal(b)).unwrap_err(),
                *want,
                "offset {at}"
            );
        }
        // A present link past the last channel.
        let mut b = good.clone();
        b[ch(1, C_PRESENT)] = P_SPEED_CHANNEL as u8;
        b[ch(1, C_SPEED)] = 3;
        assert_eq!(
            decode_sample_header::<3>(&reseal(b)).unwrap_err(),
            WireError::ChannelIndex {
                index: 3,
                channels: 3
            }
        );
        // Magic, version, count and length are checked before the CRC.
        let mut b = good.clone();
        b[0] = b'X';
        assert_eq!(decode_sample_header::<3>(&b), Err(WireError::BadMagic));
        let mut b = good.clone();
        b[S_VERSION] = 1;
        assert_eq!(
            decode_sample_header::<3>(&b),
            Err(WireError::UnsupportedVersion(1))
        );
        let mut b = good.clone();
        b[S_COUNT] = 0;
        assert_eq!(decode_sample_header::<3>(&b), Err(WireError::NoChannels));
        let mut b = good.clone();
        b[S_COUNT] = 2;
        assert_eq!(
            decode_sample_header::<3>(&b),
            Err(WireError::HeaderLength {
                channels: 2,
                len: 540
            })
        );
        // A station larger than the reader.
        assert_eq!(
            decode_sample_header::<2>(&good),
            Err(WireError::TooManyChannels {
                capacity: 2,
                found: 3
            })
        );
        // The encoder refuses what the decoder would.
        let mut out = vec![0u8; 4096];
        assert_eq!(
            encode_sample_header(&station, &[], &mut out),
            Err(WireError::NoChannels)
        );
        let many = vec![ChannelConfig::scalar(1.0); 256];
        assert_eq!(
            encode_sample_header(&station, &many, &mut out),
            Err(WireError::TooManyChannels {
                capacity: 255,
                found: 256
            })
        );
        let mut linked = three(0);
        linked[1].screen.icing = Some(Icing::new(2, 9));
        assert_eq!(
            encode_sample_header(&station, &linked, &mut out),
            Err(WireError::ChannelIndex {
                index: 9,
                channels: 3
            })
        );
        assert_eq!(
            encode_sample_header(&station, &three(0), &mut out[..539]),
            Err(WireError::BufferTooSmall { needed: 540 })
        );
        // 255 channels fit the length field.
        let most = vec![ChannelConfig::scalar(0.5); 255];
        let bytes = header_bytes(&station, &most);
        assert_eq!(decode_sample_header::<255>(&bytes).unwrap().count(), 255);
    }

    #[test]
    fn crc32_in_pieces() {
        let data = b"123456789";
        for split in 0..=data.len() {
            let mut c = Crc32::default();
            c.update(&data[..split]);
            c.update(&data[split..]);
            assert_eq!(c.value(), 0xCBF4_3926, "split {split}");
        }
    }

    fn f64_strategy() -> impl Strategy<Value = f64> {
        prop_oneof![
            any::<u64>().prop_map(f64::from_bits),
            (-1e3f64..1e3),
            Just(0.0),
        ]
    }

    fn range_strategy() -> impl Strategy<Value = (f64, f64)> {
        (f64_strategy(), f64_strategy())
    }

    fn screen_strategy(channels: u8) -> impl Strategy<Value = Screen> {
        let idx = move || proptest::option::of(0..channels);
        (
            (
                proptest::option::of(f64_strategy()),
                proptest::option::of(range_strategy()),
                proptest::option::of(range_strategy()),
                proptest::option::of(f64_strategy()),
                proptest::option::of(f64_strategy()),
                proptest::option::of(any::<u32>()),
                f64_strategy(),
            ),
            (
                idx(),
                f64_strategy(),
                f64_strategy(),
                idx(),
                f64_strategy(),
                proptest::option::of((0..channels, 0..channels, f64_strategy(), f64_strategy())),
            ),
        )
            .prop_map(|(a, b)| Screen {
                step_limit: a.0,
                mean_range: a.1,
                sd_range: a.2,
                gust_max: a.3,
                min_recovery: a.4,
                flat_span_s: a.5,
                flat_tolerance: a.6,
                partner: b.0,
                pair_mean_diff: b.1,
                pair_max_diff: b.2,
                above: b.3,
                shear_tolerance: b.4,
                icing: b.5.map(|(t, h, mt, mh)| Icing {
                    temperature: t,
                    humidity: h,
                    max_temperature: mt,
                    min_humidity: mh,
                }),
            })
    }

    fn channel_strategy(channels: u8) -> impl Strategy<Value = ChannelConfig> {
        (
            prop_oneof![Just(Kind::Speed), Just(Kind::Direction), Just(Kind::Scalar)],
            (f64_strategy(), f64_strategy()),
            range_strategy(),
            any::<u16>(),
            f64_strategy(),
            proptest::option::of(0..channels),
            screen_strategy(channels),
        )
            .prop_map(
                |(kind, (offset, step), range, gust_window, mount, speed, screen)| ChannelConfig {
                    kind,
                    scale: Scale { offset, step },
                    range,
                    gust_window,
                    mounting_offset_deg: mount,
                    speed_channel: speed,
                    screen,
                    recal: None,
                },
            )
    }

    fn station_strategy() -> impl Strategy<Value = StationConfig> {
        (
            any::<u32>(),
            any::<u32>(),
            proptest::array::uniform4(proptest::option::of(f64_strategy())),
        )
            .prop_map(|(i, n, m)| StationConfig {
                interval_s: i,
                samples_per_interval: n,
                missing_values: m,
            })
    }

    proptest! {
        #[test]
        fn header_decoders_take_any_bytes(
            bytes in proptest::collection::vec(any::<u8>(), 0..1200),
            count in 0u8..=255,
        ) {
            // Arbitrary bytes, and the same behind a valid prefix with any
            // channel count and its length: an error or a header, never a panic.
            let _ = decode_sample_header::<4>(&bytes);
            let _ = decode_station_part(&bytes);
            let _ = decode_channel_part(&bytes, count);
            let mut framed = bytes.clone();
            if framed.len() >= 8 {
                framed[..4].copy_from_slice(&SAMPLE_MAGIC);
                framed[4] = SAMPLE_VERSION;
                framed[5] = count;
                let len = sample_header_len(usize::from(count)) as u16;
                framed[6..8].copy_from_slice(&len.to_le_bytes());
            }
            let _ = decode_sample_header::<4>(&framed);
            if let Ok(reader) = SampleReader::<4>::new(&framed) {
                for sample in reader {
                    let _ = sample;
                }
            }
        }

        #[test]
        fn header_round_trip_arbitrary(
            station in station_strategy(),
            channels in proptest::collection::vec(channel_strategy(5), 5),
        ) {
            let bytes = header_bytes(&station, &channels);
            let h = decode_sample_header::<5>(&bytes).unwrap();
            // Bit for bit: the decoded configuration encodes to the same bytes
            // (every field has its own bytes), and equals the original when no
            // value is NaN (NaN != NaN).
            prop_assert_eq!(header_bytes(&h.station, h.configs()), bytes);
            if station == station {
                prop_assert_eq!(h.station, station);
            }
            for (a, b) in h.configs().iter().zip(&channels) {
                if b == b {
                    prop_assert_eq!(a, b);
                }
            }
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
        let mut file = header_bytes(&StationConfig::ten_minute_1hz(), &three(0));
        let h = file.len();
        let mut buf = [0u8; sample_frame_max_len(3)];
        for (t, r) in &samples {
            let n = encode_sample(Timestamp::from_millis(*t), r, &mut buf).unwrap();
            file.extend_from_slice(&buf[..n]);
        }
        let reader = SampleReader::<3>::new(&file).unwrap();
        assert_eq!(reader.position(), h);
        assert_eq!(reader.header().configs(), &three(0)[..]);
        let back: Vec<_> = reader.collect::<Result<_, _>>().unwrap();
        assert_eq!(back.len(), samples.len());
        for ((t, r), (bt, br)) in samples.iter().zip(&back) {
            assert_eq!(*t, bt.millis());
            assert!(r.iter().zip(br).all(|(a, b)| same_reading(a, b)));
        }
        // A larger reader pads the readings with Missing.
        let wide: Vec<_> = SampleReader::<5>::new(&file)
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap();
        assert_eq!(wide.len(), 3);
        assert!(wide
            .iter()
            .all(|(_, r)| r[3] == Reading::Missing && r[4] == Reading::Missing));
        assert!(same_reading(&wide[0].1[0], &Reading::Value(1.5)));
        // A smaller one refuses the header.
        assert_eq!(
            SampleReader::<2>::new(&file).unwrap_err(),
            SampleError {
                offset: 0,
                error: WireError::TooManyChannels {
                    capacity: 2,
                    found: 3
                }
            }
        );
        // A flipped bit in the second frame: the first reads, then one error with its offset.
        let second = h + 8 + 9 + 5 + 1 + 4;
        let mut bad = file.clone();
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
