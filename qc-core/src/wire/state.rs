//! State frames: one channel's exact end state in one interval, for a PC to
//! finish (module docs of [`crate::wire`], "State frame layout").

use super::frame::*;
use super::record::ConfigStamp;
#[cfg(doc)]
use super::record::RECORD_VERSION;
use crate::channel::{ChannelState, StateForm};
use crate::moments::Wide;
use crate::time::Timestamp;

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

#[cfg(test)]
mod tests {
    use super::super::record::tests::{encode, reseal_frame};
    use super::*;
    use crate::channel::{ChannelConfig, Icing, Kind, Reading, Screen, Stat};
    use crate::crc::crc32;
    use crate::station::StationConfig;
    use crate::station::{Event, Layout, Station};
    use crate::wire::{decode_record, scan, RecordFrame, Span};
    use std::vec::Vec;

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
}
