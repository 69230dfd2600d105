//! The replay loop: reads a sample file in small chunks, feeds every sample to
//! the scenario [`Logger`], and writes the record frames it produces.
//!
//! The file source and the frame sink are traits, so the same loop runs on the
//! firmware (semihosting files) and in host tests (byte slices).

use core::fmt;

use qc_core::wire::{decode_sample, decode_sample_header, SampleDecode, WireError, FRAME_LEN};
use qc_core::wire::{sample_frame_max_len, SAMPLE_HEADER_LEN};
use qc_core::Pushed;

use crate::scenario::{Logger, LoggerSlot, CHANNELS};

/// Bytes read from the sample file at a time (must hold the longest frame).
pub const CHUNK: usize = 512;
const _: () = assert!(CHUNK >= sample_frame_max_len(CHANNELS) && CHUNK >= SAMPLE_HEADER_LEN);

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
    /// The scenario layout was refused (a bug in the scenario).
    Layout,
    /// Reading the sample file failed.
    Read(R),
    /// Writing a frame failed.
    Write(W),
    /// The sample file is not good at byte `offset`.
    Samples {
        /// Byte offset of the header or frame at fault.
        offset: usize,
        /// What is wrong there.
        error: WireError,
    },
}

impl<R: fmt::Debug, W: fmt::Debug> fmt::Display for ReplayError<R, W> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReplayError::Layout => f.write_str("scenario layout refused"),
            ReplayError::Read(e) => write!(f, "reading the sample file: {e:?}"),
            ReplayError::Write(e) => write!(f, "writing the record log: {e:?}"),
            ReplayError::Samples { offset, error } => {
                write!(f, "sample file, byte {offset}: {error}")
            }
        }
    }
}

/// What a replay did.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ReplaySummary {
    /// Samples read.
    pub samples: u64,
    /// Samples the station accepted.
    pub accepted: u64,
    /// Samples rejected for their timestamps.
    pub rejected: u64,
    /// Record frames written.
    pub frames: u32,
}

/// Replays the whole sample file from `source` into `sink`, with a new
/// [`Logger`] put in `slot` (the caller chooses where the 5 KiB logger lives:
/// on a 16 KiB part, in static memory rather than on the stack).
#[inline(never)]
pub fn replay<S: Source, K: Sink>(
    source: &mut S,
    sink: &mut K,
    slot: &mut LoggerSlot,
) -> Result<ReplaySummary, ReplayError<S::Error, K::Error>> {
    let logger = Logger::start_in(slot).ok_or(ReplayError::Layout)?;
    let mut buf = [0u8; CHUNK];
    let mut filled = 0; // bytes in buf
    let mut start = 0; // first unread byte in buf
    let mut consumed = 0; // file offset of buf[start]
    let mut eof = false;
    let mut header = false;
    let mut summary = ReplaySummary::default();
    let mut write = |f: &[u8; FRAME_LEN]| sink.write_frame(f);
    loop {
        let pending = buf.get(start..filled).unwrap_or(&[]);
        let step = if !header {
            if pending.len() >= SAMPLE_HEADER_LEN || eof {
                match decode_sample_header(pending) {
                    Ok(n) if usize::from(n) == CHANNELS => {
                        header = true;
                        Some(SAMPLE_HEADER_LEN)
                    }
                    Ok(found) => {
                        return Err(ReplayError::Samples {
                            offset: 0,
                            error: WireError::ChannelCount {
                                expected: CHANNELS as u8,
                                found,
                            },
                        })
                    }
                    Err(error) => return Err(ReplayError::Samples { offset: 0, error }),
                }
            } else {
                None
            }
        } else {
            match decode_sample::<CHANNELS>(pending) {
                SampleDecode::Sample {
                    time,
                    readings,
                    len,
                } => {
                    summary.samples += 1;
                    match logger.push(time, &readings, &mut write) {
                        Ok(Pushed::Accepted) => summary.accepted += 1,
                        Ok(Pushed::Rejected(_)) => summary.rejected += 1,
                        Err(e) => return Err(ReplayError::Write(e)),
                    }
                    Some(len)
                }
                SampleDecode::Incomplete if eof && pending.is_empty() => break,
                SampleDecode::Incomplete if eof => {
                    return Err(ReplayError::Samples {
                        offset: consumed,
                        error: WireError::Truncated,
                    })
                }
                SampleDecode::Incomplete => None,
                SampleDecode::Invalid(error) => {
                    return Err(ReplayError::Samples {
                        offset: consumed,
                        error,
                    })
                }
            }
        };
        match step {
            Some(len) => {
                start += len;
                consumed += len;
            }
            None => {
                // Move what is left to the front and read more behind it.
                buf.copy_within(start..filled, 0);
                filled -= start;
                start = 0;
                let n = source
                    .read(buf.get_mut(filled..).unwrap_or(&mut []))
                    .map_err(ReplayError::Read)?;
                eof = n == 0;
                filled += n.min(CHUNK - filled);
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
    use qc_core::wire::{encode_sample, encode_sample_header, scan, Span};
    use qc_core::{Reading, Timestamp};
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

    fn file(samples: usize) -> Vec<u8> {
        let mut out = vec![0u8; SAMPLE_HEADER_LEN];
        encode_sample_header(CHANNELS as u8, (&mut out[..]).try_into().unwrap());
        let t0 = 1_705_276_800_000i64;
        let mut buf = [0u8; sample_frame_max_len(CHANNELS)];
        for i in 0..samples as i64 {
            let r = [
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
            ];
            let n = encode_sample(Timestamp::from_millis(t0 + i * 1000), &r, &mut buf).unwrap();
            out.extend_from_slice(&buf[..n]);
        }
        out
    }

    #[test]
    fn chunked_replay_matches_whole_file_replay() {
        let f = file(1900);
        let mut whole = Vec::new();
        let s = replay(
            &mut Slice {
                bytes: &f,
                chunk: usize::MAX,
            },
            &mut whole,
            &mut LoggerSlot::Empty,
        )
        .unwrap();
        assert_eq!(s.samples, 1900);
        assert_eq!(s.frames as usize, 4 * CHANNELS);
        assert_eq!(whole.len(), 4 * CHANNELS * FRAME_LEN);
        assert!(scan(&whole).all(|s| matches!(s, Span::Frame { .. })));
        for chunk in [1, 7, 84, 85, 333] {
            let mut log = Vec::new();
            replay(
                &mut Slice { bytes: &f, chunk },
                &mut log,
                &mut LoggerSlot::Empty,
            )
            .unwrap();
            assert_eq!(log, whole, "chunk {chunk}");
        }
    }

    #[test]
    fn bad_files_name_the_byte() {
        let f = file(10);
        let mut log = Vec::new();
        let cut = &f[..f.len() - 3];
        match replay(
            &mut Slice {
                bytes: cut,
                chunk: 64,
            },
            &mut log,
            &mut LoggerSlot::Empty,
        ) {
            Err(ReplayError::Samples {
                offset,
                error: WireError::Truncated,
            }) => {
                assert!(offset > SAMPLE_HEADER_LEN && offset < cut.len())
            }
            other => panic!("{other:?}"),
        }
        let mut bad = f.clone();
        bad[SAMPLE_HEADER_LEN + 9] ^= 1;
        assert!(matches!(
            replay(
                &mut Slice {
                    bytes: &bad,
                    chunk: 64
                },
                &mut log,
                &mut LoggerSlot::Empty
            ),
            Err(ReplayError::Samples {
                offset: SAMPLE_HEADER_LEN,
                error: WireError::BadCrc
            })
        ));
        assert!(matches!(
            replay(
                &mut Slice {
                    bytes: &f[..3],
                    chunk: 64
                },
                &mut log,
                &mut LoggerSlot::Empty
            ),
            Err(ReplayError::Samples {
                offset: 0,
                error: WireError::Truncated
            })
        ));
    }
}
