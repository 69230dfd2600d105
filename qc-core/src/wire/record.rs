//! Record frames: one finished interval of one channel (module docs of
//! [`crate::wire`], "Record frame layout").

use super::frame::*;
#[cfg(doc)]
use crate::channel::Tally;
use crate::channel::{Absent, ChannelRecord, Kind, Stat};
use crate::flags::Flags;
use crate::time::Timestamp;

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

#[cfg(test)]
pub(super) mod tests {
    use super::*;
    use crate::channel::{ChannelConfig, Reading, Tally};
    use crate::crc::crc32;
    use crate::flags::{Flag, Flags};
    use crate::station::StationConfig;
    use crate::station::{Event, Layout, Station};
    use crate::wire::{scan, Span};
    use proptest::prelude::*;
    use std::vec::Vec;

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
    pub(in crate::wire) fn varied_frames() -> Vec<RecordFrame> {
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

    pub(in crate::wire) fn encode(f: &RecordFrame) -> [u8; FRAME_LEN] {
        let mut b = [0u8; FRAME_LEN];
        encode_record(f, &mut b);
        b
    }

    /// Bit-exact equality (f64 `==` would equate 0.0 and -0.0).
    pub(in crate::wire) fn same(a: &RecordFrame, b: &RecordFrame) -> bool {
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

    pub(in crate::wire) fn reseal_frame(mut b: [u8; FRAME_LEN]) -> [u8; FRAME_LEN] {
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

    proptest! {
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
}
