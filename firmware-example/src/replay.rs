//! The replay loop: reads a sample file (`qc_core::wire`, as `tenmin export`
//! writes it) in small chunks, builds the station from the file's header, feeds
//! every sample to a [`Logger`], and writes the record (or state) frames it
//! produces.
//!
//! The logger holds up to [`CAPACITY`] channels with gust windows of up to
//! [`GUST_CAPACITY`] samples. A station of fewer channels is padded with
//! `ChannelConfig::scalar(1.0)` slots, fed `Reading::Missing`, that write no
//! frames; a station that does not fit is refused with a [`ReplayError`] that
//! says why, before any sample is read.
//!
//! The file source and the frame sink are traits, so the same loop runs on the
//! firmware (semihosting files) and on the host (byte slices, in the tests of
//! this crate and in `host-cli/tests/firmware_io.rs`, which compiles this file).

use core::fmt;

use qc_core::wire::{
    decode_channel_part, decode_sample, decode_station_part, sample_frame_max_len, Crc32,
    SampleDecode, WireError, CHANNEL_PART_LEN, FRAME_LEN, HEADER_CRC_LEN, STATION_PART_LEN,
};
use qc_core::{
    config_fingerprint, ChannelConfig, ConfigError, Kind, Layout, Pushed, Reading, StationConfig,
};

use crate::logger::{Core, LayoutSlot, Logger, LoggerSlot, RecordLogger};

/// Most channels the replay logger holds.
pub const CAPACITY: usize = 8;
/// Longest gust window, in samples, the replay logger holds (3 s at 4 Hz).
pub const GUST_CAPACITY: usize = 12;

/// The replay logger.
pub type ReplayLogger<'s, 'a> = RecordLogger<'s, 'a, CAPACITY, GUST_CAPACITY>;
/// Static storage for the replay logger's station (running state).
pub type ReplaySlot<'a> = LoggerSlot<'a, CAPACITY, GUST_CAPACITY>;
/// Static storage for the layout the replay logger builds from the file header.
pub type ReplayLayoutSlot = LayoutSlot<CAPACITY>;

/// Bytes read from the sample file at a time (must hold the longest frame and
/// each part of the header).
pub const CHUNK: usize = 256;
const _: () = assert!(
    CHUNK >= sample_frame_max_len(CAPACITY)
        && CHUNK >= STATION_PART_LEN
        && CHUNK >= CHANNEL_PART_LEN
);

/// Something to read a sample file from.
pub trait Source {
    /// What can go wrong reading.
    type Error;
    /// Reads up to `buf.len()` bytes; 0 at the end of the file.
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, Self::Error>;
}

/// Something to append record frames to.
pub trait Sink {
    /// What can go wrong writing.
    type Error;
    /// Appends one frame.
    fn write_frame(&mut self, frame: &[u8; FRAME_LEN]) -> Result<(), Self::Error>;
}

/// Why a replay stopped.
#[derive(Debug)]
pub enum ReplayError<R, W> {
    /// Reading the sample file failed.
    Read(R),
    /// Writing a frame failed.
    Write(W),
    /// The sample file is not good at byte `offset`.
    Samples {
        /// Byte offset of the header part or frame at fault.
        offset: usize,
        /// What is wrong there.
        error: WireError,
    },
    /// The file's station has more channels than [`CAPACITY`].
    Capacity {
        /// Channels in the file's station.
        channels: u8,
    },
    /// A speed channel's gust window is longer than [`GUST_CAPACITY`].
    GustWindow {
        /// Channel index.
        channel: u8,
        /// Its gust window, samples.
        window: u16,
    },
    /// The core refused the file's station configuration.
    Layout(ConfigError),
}

impl<R: fmt::Debug, W: fmt::Debug> fmt::Display for ReplayError<R, W> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReplayError::Read(e) => write!(f, "reading the sample file: {e:?}"),
            ReplayError::Write(e) => write!(f, "writing the record log: {e:?}"),
            ReplayError::Samples { offset, error } => {
                write!(f, "sample file, byte {offset}: {error}")
            }
            ReplayError::Capacity { channels } => write!(
                f,
                "the sample file's station has {channels} channels; this logger holds at most {CAPACITY}"
            ),
            ReplayError::GustWindow { channel, window } => write!(
                f,
                "the sample file's channel {channel} has a gust window of {window} samples; this logger holds at most {GUST_CAPACITY}"
            ),
            ReplayError::Layout(e) => {
                write!(f, "the sample file's station configuration is refused: {e}")
            }
        }
    }
}

/// What a replay did.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ReplaySummary {
    /// Channels in the file's station.
    pub channels: u8,
    /// Samples read.
    pub samples: u64,
    /// Samples the station accepted.
    pub accepted: u64,
    /// Samples rejected for their timestamps.
    pub rejected: u64,
    /// Record frames written.
    pub frames: u32,
}

/// The sample file, read through a buffer of [`CHUNK`] bytes.
struct Input<'s, S: Source> {
    source: &'s mut S,
    buf: [u8; CHUNK],
    /// First unread byte in `buf`.
    start: usize,
    /// Bytes in `buf`.
    filled: usize,
    /// File offset of `buf[start]`.
    offset: usize,
    eof: bool,
}

impl<'s, S: Source> Input<'s, S> {
    fn new(source: &'s mut S) -> Self {
        Input {
            source,
            buf: [0u8; CHUNK],
            start: 0,
            filled: 0,
            offset: 0,
            eof: false,
        }
    }

    fn pending(&self) -> &[u8] {
        self.buf.get(self.start..self.filled).unwrap_or(&[])
    }

    /// Moves what is left to the front and reads more behind it.
    fn read_more(&mut self) -> Result<(), S::Error> {
        self.buf.copy_within(self.start..self.filled, 0);
        self.filled -= self.start;
        self.start = 0;
        let n = self
            .source
            .read(self.buf.get_mut(self.filled..).unwrap_or(&mut []))?;
        self.eof = n == 0;
        self.filled += n.min(CHUNK - self.filled);
        Ok(())
    }

    /// Reads until `n` (at most [`CHUNK`]) bytes are pending; false if the
    /// file ends first.
    fn fill(&mut self, n: usize) -> Result<bool, S::Error> {
        while self.pending().len() < n && !self.eof {
            self.read_more()?;
        }
        Ok(self.pending().len() >= n)
    }

    fn consume(&mut self, n: usize) {
        let n = n.min(self.filled - self.start);
        self.start += n;
        self.offset += n;
    }
}

/// Reads `n` header bytes into the CRC and hands them to `decode`.
fn header_part<S: Source, W, T>(
    input: &mut Input<'_, S>,
    crc: &mut Crc32,
    n: usize,
    decode: impl FnOnce(&[u8]) -> Result<T, WireError>,
) -> Result<T, ReplayError<S::Error, W>> {
    let offset = input.offset;
    let bad = |error| ReplayError::Samples { offset, error };
    if !input.fill(n).map_err(ReplayError::Read)? {
        return Err(bad(WireError::Truncated));
    }
    let bytes = input.pending().get(..n).unwrap_or(&[]);
    crc.update(bytes);
    let value = decode(bytes).map_err(bad)?;
    input.consume(n);
    Ok(value)
}

/// Reads the header a part at a time into `configs`; returns the station
/// settings and the file's channel count. Checks the CRC, then that the
/// station fits this logger.
#[inline(never)]
fn read_header<S: Source, W>(
    input: &mut Input<'_, S>,
    configs: &mut [ChannelConfig; CAPACITY],
) -> Result<(StationConfig, u8), ReplayError<S::Error, W>> {
    let mut crc = Crc32::new();
    let part = header_part(input, &mut crc, STATION_PART_LEN, decode_station_part)?;
    let count = part.channels;
    for i in 0..usize::from(count) {
        let cfg = header_part(input, &mut crc, CHANNEL_PART_LEN, |b| {
            decode_channel_part(b, count)
        })?;
        if let Some(slot) = configs.get_mut(i) {
            *slot = cfg;
        }
    }
    let offset = input.offset;
    let stored = header_part(input, &mut Crc32::new(), HEADER_CRC_LEN, |b| {
        b.try_into()
            .map(u32::from_le_bytes)
            .map_err(|_| WireError::Truncated)
    })?;
    if stored != crc.value() {
        return Err(ReplayError::Samples {
            offset,
            error: WireError::BadCrc,
        });
    }
    if usize::from(count) > CAPACITY {
        return Err(ReplayError::Capacity { channels: count });
    }
    for (i, c) in configs.iter().enumerate() {
        if c.kind == Kind::Speed && usize::from(c.gust_window) > GUST_CAPACITY {
            return Err(ReplayError::GustWindow {
                channel: i as u8,
                window: c.gust_window,
            });
        }
    }
    Ok((part.station, count))
}

/// Validates the station into `layout`, in place. Not inlined: the core's
/// temporaries take stack only while it runs.
#[inline(never)]
fn build_layout(
    layout: &mut Layout<CAPACITY>,
    station: StationConfig,
    configs: &[ChannelConfig; CAPACITY],
) -> Result<(), ConfigError> {
    layout.rebuild::<GUST_CAPACITY>(station, configs)
}

/// Reads the header and validates its station into `layout` (this is the
/// closure of `LayoutSlot::fill`). Header problems go to `header`, with a
/// stand-in layout error that is never shown. Not inlined: the channel
/// configurations (1.8 KiB) take stack only while it runs.
#[inline(never)]
fn header_layout<S: Source, W>(
    layout: &mut Layout<CAPACITY>,
    input: &mut Input<'_, S>,
    header: &mut Result<(u8, u32), ReplayError<S::Error, W>>,
) -> Result<(), ConfigError> {
    let mut configs = [ChannelConfig::scalar(1.0); CAPACITY];
    match read_header(input, &mut configs) {
        Ok((station, count)) => {
            let used = configs.get(..usize::from(count)).unwrap_or(&[]);
            *header = Ok((count, config_fingerprint(&station, used)));
            build_layout(layout, station, &configs)
        }
        Err(e) => {
            *header = Err(e);
            Err(ConfigError::Interval)
        }
    }
}

/// Reads the header and builds the layout of its station in `layouts`;
/// returns it, the file's channel count and the fingerprint of its channels.
#[inline(never)]
fn start<'a, S: Source, W>(
    input: &mut Input<'_, S>,
    layouts: &'a mut ReplayLayoutSlot,
) -> Result<(&'a Layout<CAPACITY>, u8, u32), ReplayError<S::Error, W>> {
    let mut header = Ok((0, 0));
    let built = layouts.fill(|layout| header_layout(layout, input, &mut header));
    let (count, fingerprint) = header?;
    built.map_err(ReplayError::Layout)?;
    let layouts: &'a ReplayLayoutSlot = layouts;
    // `fill` filled the slot whenever the layout is good.
    let layout = layouts
        .get()
        .ok_or(ReplayError::Capacity { channels: count })?;
    Ok((layout, count, fingerprint))
}

/// Replays the whole sample file from `source` into `sink` as record frames
/// (a [`Logger`], the station on the logger), with the layout of the file's
/// station built in `layouts` and the logger's state in `slot` (the caller
/// chooses where they live: on a 16 KiB part, in static memory rather than
/// on the stack).
pub fn replay<'a, S: Source, K: Sink>(
    source: &mut S,
    sink: &mut K,
    layouts: &'a mut ReplayLayoutSlot,
    slot: &mut ReplaySlot<'a>,
) -> Result<ReplaySummary, ReplayError<S::Error, K::Error>> {
    replay_as(source, sink, layouts, slot, false)
}

/// [`replay`] writing state frames (a [`crate::logger::StateLogger`]: the
/// logger samples, a PC finishes with `tenmin decode --config`), stamped with
/// the fingerprint of the file's channels.
pub fn replay_states<'a, S: Source, K: Sink>(
    source: &mut S,
    sink: &mut K,
    layouts: &'a mut ReplayLayoutSlot,
    slot: &mut ReplaySlot<'a>,
) -> Result<ReplaySummary, ReplayError<S::Error, K::Error>> {
    replay_as(source, sink, layouts, slot, true)
}

/// [`replay`] or, with `states`, [`replay_states`].
#[inline(never)]
fn replay_as<'a, S: Source, K: Sink>(
    source: &mut S,
    sink: &mut K,
    layouts: &'a mut ReplayLayoutSlot,
    slot: &mut ReplaySlot<'a>,
    states: bool,
) -> Result<ReplaySummary, ReplayError<S::Error, K::Error>> {
    let mut input = Input::new(source);
    let (layout, count, fingerprint) = start(&mut input, layouts)?;
    let full = ReplayError::Capacity { channels: count };
    let n = usize::from(count);
    if states {
        let logger = slot.start_states(layout).ok_or(full)?;
        let logger = logger.with_active(n).with_fingerprint(fingerprint);
        run(input, sink, logger, count)
    } else {
        let logger = slot.start(layout).ok_or(full)?;
        let logger = logger.with_active(n).with_fingerprint(fingerprint);
        run(input, sink, logger, count)
    }
}

/// Feeds every sample after the header to `logger` and its frames to `sink`.
fn run<S: Source, K: Sink, R: Core<CAPACITY>>(
    mut input: Input<'_, S>,
    sink: &mut K,
    mut logger: Logger<'_, '_, CAPACITY, R>,
    count: u8,
) -> Result<ReplaySummary, ReplayError<S::Error, K::Error>> {
    let n = usize::from(count);
    let mut summary = ReplaySummary {
        channels: count,
        ..ReplaySummary::default()
    };
    let mut write = |f: &[u8; FRAME_LEN]| sink.write_frame(f);
    // Slots after the file's channels stay missing.
    let mut readings = [Reading::Missing; CAPACITY];
    loop {
        let decoded = decode_sample(input.pending(), readings.get_mut(..n).unwrap_or(&mut []));
        match decoded {
            SampleDecode::Sample { time, len } => {
                summary.samples += 1;
                match logger.push(time, &readings, &mut write) {
                    Ok(Pushed::Accepted) => summary.accepted += 1,
                    Ok(Pushed::Rejected(_)) => summary.rejected += 1,
                    Err(e) => return Err(ReplayError::Write(e)),
                }
                input.consume(len);
            }
            SampleDecode::Incomplete if input.eof && input.pending().is_empty() => break,
            SampleDecode::Incomplete if input.eof => {
                return Err(ReplayError::Samples {
                    offset: input.offset,
                    error: WireError::Truncated,
                })
            }
            SampleDecode::Incomplete => input.read_more().map_err(ReplayError::Read)?,
            SampleDecode::Invalid(error) => {
                return Err(ReplayError::Samples {
                    offset: input.offset,
                    error,
                })
            }
        }
    }
    logger.close(&mut write).map_err(ReplayError::Write)?;
    summary.frames = logger.frames();
    #[cfg(feature = "defmt")]
    defmt::info!("replay done: {}", summary);
    Ok(summary)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario;
    use qc_core::wire::{
        encode_sample, encode_sample_header, sample_header_len, scan, RecordFrame, Span,
    };
    use qc_core::{Event, Station, Timestamp};
    use std::vec::Vec;

    /// A source that hands out at most `chunk` bytes a call.
    struct Slice<'a> {
        bytes: &'a [u8],
        chunk: usize,
    }

    impl Source for Slice<'_> {
        type Error = ();
        fn read(&mut self, buf: &mut [u8]) -> Result<usize, ()> {
            let n = self.chunk.min(buf.len()).min(self.bytes.len());
            buf[..n].copy_from_slice(&self.bytes[..n]);
            self.bytes = &self.bytes[n..];
            Ok(n)
        }
    }

    impl Sink for Vec<u8> {
        type Error = ();
        fn write_frame(&mut self, f: &[u8; FRAME_LEN]) -> Result<(), ()> {
            self.extend_from_slice(f);
            Ok(())
        }
    }

    fn header(station: &StationConfig, channels: &[ChannelConfig]) -> Vec<u8> {
        let mut out = vec![0u8; sample_header_len(channels.len())];
        encode_sample_header(station, channels, &mut out).unwrap();
        out
    }

    fn readings(i: i64) -> [Reading; 8] {
        [
            Reading::Counts(150 + (i % 11) as i32),
            Reading::Counts(148 + (i % 13) as i32),
            if i % 17 == 0 {
                Reading::Missing
            } else {
                Reading::Value(6.0 + (i % 5) as f64 * 0.1)
            },
            Reading::Counts((i * 97 % 26_400) as i32),
            Reading::Value(1.5),
            Reading::Value(f64::NAN),
            Reading::Value(-999.0),
            Reading::Value(12.6),
        ]
    }

    /// A file of the scenario's first `channels` channels (links to later
    /// channels removed) and `samples` samples a second apart.
    fn file(channels: usize, samples: usize) -> (Vec<u8>, Vec<ChannelConfig>) {
        let mut cfgs: Vec<ChannelConfig> = scenario::channels()[..channels].to_vec();
        for c in &mut cfgs {
            let keep = |i: Option<u8>| i.filter(|&i| usize::from(i) < channels);
            c.speed_channel = keep(c.speed_channel);
            c.screen.partner = keep(c.screen.partner);
            c.screen.above = keep(c.screen.above);
            c.screen.icing = c
                .screen
                .icing
                .filter(|ice| usize::from(ice.temperature.max(ice.humidity)) < channels);
        }
        let mut out = header(&scenario::station(), &cfgs);
        let t0 = 1_705_276_800_000i64;
        let mut buf = [0u8; sample_frame_max_len(CAPACITY)];
        for i in 0..samples as i64 {
            let r = readings(i);
            let n = encode_sample(
                Timestamp::from_millis(t0 + i * 1000),
                &r[..channels],
                &mut buf,
            )
            .unwrap();
            out.extend_from_slice(&buf[..n]);
        }
        (out, cfgs)
    }

    fn run(bytes: &[u8], chunk: usize) -> Result<(ReplaySummary, Vec<u8>), ReplayError<(), ()>> {
        let mut log = Vec::new();
        let mut layouts = ReplayLayoutSlot::new();
        let mut slot = ReplaySlot::new();
        let s = replay(
            &mut Slice { bytes, chunk },
            &mut log,
            &mut layouts,
            &mut slot,
        )?;
        Ok((s, log))
    }

    #[test]
    fn chunked_replay_matches_whole_file_replay() {
        let (f, _) = file(8, 1900);
        let (s, whole) = run(&f, usize::MAX).unwrap();
        assert_eq!(s.samples, 1900);
        assert_eq!(s.channels, 8);
        assert_eq!(s.frames as usize, 4 * 8);
        assert_eq!(whole.len(), 4 * 8 * FRAME_LEN);
        assert!(scan(&whole).all(|s| matches!(s, Span::Frame { .. })));
        for chunk in [1, 7, 84, 85, 160, 333] {
            let (_, log) = run(&f, chunk).unwrap();
            assert_eq!(log, whole, "chunk {chunk}");
        }
    }

    #[test]
    fn a_smaller_station_is_padded_and_matches_a_station_of_its_own_size() {
        // Three channels in the 8-channel logger give the same frames as a
        // 3-channel station of qc-core fed the same samples.
        let (f, cfgs) = file(3, 1300);
        let (s, log) = run(&f, 100).unwrap();
        assert_eq!(s.channels, 3);
        let layout =
            Layout::new::<GUST_CAPACITY>(scenario::station(), &[cfgs[0], cfgs[1], cfgs[2]])
                .unwrap();
        let mut st: Station<3, GUST_CAPACITY> = Station::new(layout);
        let mut want = Vec::new();
        let mut on = |e: Event<'_, 3, GUST_CAPACITY>| {
            if let Event::Closed(acc, _) = e {
                for ch in 0..3 {
                    let f = RecordFrame {
                        sequence: (want.len() / FRAME_LEN) as u32,
                        interval_start: layout.interval_start(acc.index()),
                        channel: ch as u8,
                        config: Some(qc_core::wire::ConfigStamp {
                            channels: 3,
                            fingerprint: layout.fingerprint(),
                        }),
                        record: layout.finish(acc, ch).unwrap(),
                    };
                    let mut b = [0u8; FRAME_LEN];
                    qc_core::wire::encode_record(&f, &mut b);
                    want.extend_from_slice(&b);
                }
            }
        };
        for i in 0..1300i64 {
            let r = readings(i);
            st.push(
                Timestamp::from_millis(1_705_276_800_000 + i * 1000),
                &[r[0], r[1], r[2]],
                &mut on,
            );
        }
        st.close(&mut on);
        assert_eq!(want.len(), 3 * 3 * FRAME_LEN);
        assert_eq!(log, want);
    }

    /// A state log finished on the host, as `tenmin decode` does it, and
    /// written as record frames (sequence numbers counted again).
    fn finish_states<const N: usize>(log: &[u8], layout: &Layout<N>) -> Vec<u8> {
        let mut finisher: qc_core::Finisher<N> = qc_core::Finisher::new();
        let mut acc: qc_core::IntervalAcc<N, GUST_CAPACITY> = qc_core::IntervalAcc::new(layout, 0);
        let mut out = Vec::new();
        let mut next = None;
        for span in scan(log) {
            let Span::State { frame, .. } = span else {
                panic!("not a state frame: {span:?}")
            };
            assert_eq!(usize::from(frame.channels), N);
            let k = layout.interval_of(frame.interval_start);
            if frame.channel == 0 {
                if let Some(n) = next.filter(|&n| k > n) {
                    let count = (k - n) as u64;
                    finisher.gap(layout, qc_core::Gap { first: n, count });
                }
                acc = qc_core::IntervalAcc::new(layout, k);
            }
            acc.set_state(layout, usize::from(frame.channel), &frame.state)
                .unwrap();
            if usize::from(frame.channel) == N - 1 {
                for (ch, record) in finisher.interval(layout, &mut acc).iter().enumerate() {
                    let f = RecordFrame {
                        sequence: (out.len() / FRAME_LEN) as u32,
                        interval_start: frame.interval_start,
                        channel: ch as u8,
                        config: Some(frame.config()),
                        record: *record,
                    };
                    let mut b = [0u8; FRAME_LEN];
                    qc_core::wire::encode_record(&f, &mut b);
                    out.extend_from_slice(&b);
                }
                next = Some(k + 1);
            }
        }
        out
    }

    #[test]
    fn state_replay_finished_on_the_host_gives_the_record_replay() {
        // The whole scenario station, and three of its channels padded to 8
        // (the frames carry the fingerprint of the three).
        let (f, cfgs) = file(8, 2500);
        let (_, records) = run(&f, 100).unwrap();
        let mut log = Vec::new();
        let s = replay_states(
            &mut Slice {
                bytes: &f,
                chunk: 77,
            },
            &mut log,
            &mut ReplayLayoutSlot::new(),
            &mut ReplaySlot::new(),
        )
        .unwrap();
        assert_eq!(s.frames as usize, 5 * 8);
        let layout = scenario::layout().unwrap();
        assert!(scan(&log).all(|sp| matches!(sp, Span::State { frame, .. } if frame.fingerprint == layout.fingerprint())));
        assert_eq!(finish_states(&log, &layout), records);
        assert_eq!(cfgs.len(), 8);

        let (f, cfgs) = file(3, 1300);
        let (_, records) = run(&f, 100).unwrap();
        let mut log = Vec::new();
        replay_states(
            &mut Slice {
                bytes: &f,
                chunk: 100,
            },
            &mut log,
            &mut ReplayLayoutSlot::new(),
            &mut ReplaySlot::new(),
        )
        .unwrap();
        let layout =
            Layout::new::<GUST_CAPACITY>(scenario::station(), &[cfgs[0], cfgs[1], cfgs[2]])
                .unwrap();
        let Some(Span::State { frame, .. }) = scan(&log).next() else {
            panic!("no state frame")
        };
        assert_eq!(frame.fingerprint, layout.fingerprint());
        assert_eq!(finish_states(&log, &layout), records);
    }

    #[test]
    fn stations_that_do_not_fit_are_refused_before_any_sample() {
        let station = scenario::station();
        let nine = [ChannelConfig::scalar(0.1); 9];
        assert!(matches!(
            run(&header(&station, &nine), 64),
            Err(ReplayError::Capacity { channels: 9 })
        ));
        let long = [
            ChannelConfig::scalar(0.1),
            ChannelConfig::speed(0.01).with_gust_window(13),
        ];
        let e = run(&header(&station, &long), 64).unwrap_err();
        assert!(matches!(
            e,
            ReplayError::GustWindow {
                channel: 1,
                window: 13
            }
        ));
        assert!(e.to_string().contains("at most 12"), "{e}");
        // The core refuses a zero scale step.
        let bad = [ChannelConfig::scalar(0.0)];
        assert!(matches!(
            run(&header(&station, &bad), 64),
            Err(ReplayError::Layout(ConfigError::Channel { index: 0, .. }))
        ));
    }

    #[test]
    fn bad_files_name_the_byte() {
        let (f, _) = file(8, 10);
        let h = sample_header_len(8);
        let cut = &f[..f.len() - 3];
        match run(cut, 64) {
            Err(ReplayError::Samples {
                offset,
                error: WireError::Truncated,
            }) => assert!(offset > h && offset < cut.len()),
            other => panic!("{other:?}"),
        }
        let mut bad = f.clone();
        bad[h + 9] ^= 1;
        assert!(matches!(
            run(&bad, 64),
            Err(ReplayError::Samples {
                offset,
                error: WireError::BadCrc
            }) if offset == h
        ));
        // A flipped bit in a channel part: refused by the header's CRC.
        let mut bad = f.clone();
        bad[STATION_PART_LEN + 2 * CHANNEL_PART_LEN + 40] ^= 4;
        assert!(matches!(
            run(&bad, 64),
            Err(ReplayError::Samples {
                error: WireError::BadCrc,
                ..
            })
        ));
        for cut in [3, STATION_PART_LEN + 10, h - 1] {
            assert!(
                matches!(
                    run(&f[..cut], 64),
                    Err(ReplayError::Samples {
                        error: WireError::Truncated,
                        ..
                    })
                ),
                "cut {cut}"
            );
        }
        // A header alone is a station with no samples: no frames.
        let (s, log) = run(&f[..h], 64).unwrap();
        assert_eq!((s.samples, log.len()), (0, 0));
    }
}
