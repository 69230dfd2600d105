//! Sample files: a header with the whole station configuration, then one
//! frame per timestamped sample (module docs of [`crate::wire`], "Sample
//! file layout").

use core::fmt;

use super::frame::{kind_code, kind_of, WireError};
use crate::channel::{ChannelConfig, Reading, Scale};
use crate::channel::{Icing, Screen};
use crate::crc::crc32;
#[cfg(doc)]
use crate::crc::Crc32;
use crate::limits::MAX_SENTINELS;
use crate::station::StationConfig;
use crate::time::Timestamp;

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
    use crate::channel::Kind;
    use crate::crc::Crc32;
    use crate::station::Layout;
    use proptest::prelude::*;
    use std::vec::Vec;

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
