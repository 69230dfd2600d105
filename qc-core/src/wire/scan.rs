//! The log scanner: walks a log of record and state frames, resynchronises
//! after damage, and reports what it found.

use super::frame::*;
use super::record::{decode_record, RecordFrame};
use super::state::{decode_state, StateFrame, STATE_VERSION};

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

#[cfg(test)]
mod tests {
    use super::super::record::tests::{encode, same, varied_frames};
    use super::*;
    use std::vec::Vec;

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
}
