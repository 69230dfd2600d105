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

// Layers inside `wire`, each importing only from those before it: `frame`
// (the 128-byte frame both kinds share, and `WireError`), `record`, `state`,
// `scan` (both kinds in a log), `sample` (sample files; `WireError` only).
#[cfg(doc)]
use crate::channel::{Absent, ChannelConfig, Reading, Stat, StateForm, Tally};
#[cfg(doc)]
use crate::flags::Flag;
#[cfg(doc)]
use crate::screen::Screen;
#[cfg(doc)]
use crate::station::StationConfig;

mod frame;
mod record;
mod sample;
mod scan;
mod state;

pub use crate::crc::{crc32, Crc32};
pub use frame::{WireError, FRAME_LEN, SYNC};
pub use record::{
    decode_record, encode_record, ConfigStamp, RecordFrame, ABSENT_MARK, RECORD_VERSION,
    RECORD_VERSION_1, RECORD_VERSION_2, STAT_ORDER,
};
pub use sample::{
    decode_channel_part, decode_sample, decode_sample_header, decode_station_part, encode_sample,
    encode_sample_header, sample_frame_max_len, sample_header_len, SampleDecode, SampleError,
    SampleHeader, SampleReader, StationPart, CHANNEL_PART_LEN, HEADER_CRC_LEN, SAMPLE_MAGIC,
    SAMPLE_VERSION, STATION_PART_LEN,
};
pub use scan::{scan, ScanSummary, Scanner, Span};
pub use state::{decode_state, encode_state, StateFrame, STATE_VERSION};
