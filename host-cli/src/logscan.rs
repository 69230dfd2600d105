//! A logger's log read in pieces: the spans `qc_core::wire::scan` finds in the
//! whole log, without holding the whole log in memory (an SD card image can be
//! gigabytes, most of it erased flash).
//!
//! The core's scanner works on one slice. Here the log is read `chunk` bytes
//! at a time; spans that end before the end of what has been read are final
//! (a frame, or damage followed by a frame). A span that reaches the end of
//! what has been read may still grow, so its start is kept and scanned again
//! with more bytes, except for its part that cannot hold the start of a frame
//! any more (all but its last `FRAME_LEN - 1` bytes, which the scanner has
//! tried at every offset): that part is passed on at once, so memory stays
//! at `chunk + FRAME_LEN` bytes however long the damage. Adjacent pieces of
//! damage are joined again before they are reported, with the core's rules
//! (erased when every byte is `FF`, torn when at the very end and shorter
//! than a frame), so the spans are exactly those of `wire::scan` of the whole
//! log.

use std::io::{self, Read};

use qc_core::wire::{self, Span, FRAME_LEN};

/// A run of bytes with no good frame, not reported yet.
#[derive(Clone, Copy)]
struct Pending {
    offset: usize,
    len: usize,
    erased: bool,
}

/// Reads `input` to its end, `chunk` bytes at a time (at least one frame),
/// and hands every span to `f` in order, with offsets in the whole log.
/// Returns the log's length. Stops at the first error of `f` or of reading.
pub fn scan_reader<E: From<io::Error>>(
    mut input: impl Read,
    chunk: usize,
    mut f: impl FnMut(Span) -> Result<(), E>,
) -> Result<usize, E> {
    let chunk = chunk.max(FRAME_LEN);
    let mut buf: Vec<u8> = Vec::with_capacity(chunk + FRAME_LEN);
    // Offset in the log of `buf[0]`.
    let mut base = 0usize;
    let mut pending: Option<Pending> = None;
    loop {
        let eof = fill(&mut input, &mut buf, chunk)?;
        let mut consumed = 0;
        for span in wire::scan(&buf) {
            match span {
                Span::Frame { offset, .. } | Span::State { offset, .. } => {
                    flush(&mut pending, false, &mut f)?;
                    f(moved(span, base))?;
                    consumed = offset + FRAME_LEN;
                }
                Span::Damaged { offset, len }
                | Span::Torn { offset, len }
                | Span::Erased { offset, len } => {
                    let end = offset + len;
                    // Final if a frame follows it here, or if the log ends.
                    let keep = if end < buf.len() || eof {
                        end
                    } else {
                        // No good frame starts before `safe`: the scanner
                        // tried every offset that has a whole frame after it.
                        buf.len().saturating_sub(FRAME_LEN - 1).max(offset)
                    };
                    if keep > offset {
                        let piece = buf.get(offset..keep).unwrap_or(&[]);
                        join(&mut pending, base + offset, piece);
                    }
                    consumed = keep;
                    if keep < end {
                        break;
                    }
                }
            }
        }
        buf.drain(..consumed.min(buf.len()));
        base += consumed;
        if eof {
            // Everything is final at the end (the scanner consumed it all).
            let total = base + buf.len();
            flush(&mut pending, true, &mut f)?;
            return Ok(total);
        }
    }
}

/// A good frame's span with its offset moved `base` bytes on (offsets in
/// the buffer become offsets in the log).
fn moved(span: Span, base: usize) -> Span {
    match span {
        Span::Frame { offset, frame } => Span::Frame {
            offset: base + offset,
            frame,
        },
        Span::State { offset, frame } => Span::State {
            offset: base + offset,
            frame,
        },
        other => other,
    }
}

/// Reads until `buf` holds `chunk` bytes or the input ends; whether it ended.
fn fill(input: &mut impl Read, buf: &mut Vec<u8>, chunk: usize) -> io::Result<bool> {
    let want = chunk.saturating_sub(buf.len());
    if want == 0 {
        return Ok(false);
    }
    let start = buf.len();
    buf.resize(start + want, 0);
    let mut got = 0;
    while got < want {
        match input.read(&mut buf[start + got..]) {
            Ok(0) => {
                buf.truncate(start + got);
                return Ok(true);
            }
            Ok(n) => got += n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => {
                buf.truncate(start + got);
                return Err(e);
            }
        }
    }
    Ok(false)
}

/// Adds the bytes `piece` at `offset` to the pending run of damage.
fn join(pending: &mut Option<Pending>, offset: usize, piece: &[u8]) {
    let erased = piece.iter().all(|&b| b == 0xFF);
    match pending {
        Some(p) if p.offset + p.len == offset => {
            p.len += piece.len();
            p.erased &= erased;
        }
        _ => {
            *pending = Some(Pending {
                offset,
                len: piece.len(),
                erased,
            })
        }
    }
}

/// Reports the pending run of damage, if any, as the core's scanner would:
/// erased if every byte is `FF`, torn if it ends the log (`at_end`) and is
/// shorter than a frame, else damaged.
fn flush<E>(
    pending: &mut Option<Pending>,
    at_end: bool,
    f: &mut impl FnMut(Span) -> Result<(), E>,
) -> Result<(), E> {
    let Some(p) = pending.take() else {
        return Ok(());
    };
    let (offset, len) = (p.offset, p.len);
    f(if p.erased {
        Span::Erased { offset, len }
    } else if at_end && len < FRAME_LEN {
        Span::Torn { offset, len }
    } else {
        Span::Damaged { offset, len }
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use qc_core::wire::{encode_record, ConfigStamp, RecordFrame};
    use qc_core::{ChannelConfig, Event, Layout, Reading, Station, StationConfig, Timestamp};

    /// A record log of `n` frames of a one-channel station (values from the
    /// core, so that every frame is good).
    fn frames(n: usize) -> Vec<u8> {
        let layout = Layout::new::<3>(
            StationConfig::ten_minute_1hz(),
            &[ChannelConfig::speed(0.1)],
        )
        .unwrap();
        let mut st: Station<1, 3> = Station::new(layout);
        let mut log = Vec::new();
        let mut k = 0u32;
        let mut keep = |e: Event<'_, 1, 3>| {
            if let Event::Closed(acc, records) = e {
                let mut b = [0u8; FRAME_LEN];
                let f = RecordFrame {
                    sequence: k,
                    interval_start: layout.interval_start(acc.index()),
                    channel: 0,
                    config: Some(ConfigStamp {
                        channels: 1,
                        fingerprint: layout.fingerprint(),
                    }),
                    record: records[0],
                };
                encode_record(&f, &mut b);
                log.extend_from_slice(&b);
                k += 1;
            }
        };
        for i in 0..(n as i64 * 60) {
            let t = Timestamp::from_millis(1_700_000_400_000 + i * 10_000);
            st.push(t, &[Reading::Value(5.0 + (i % 7) as f64)], &mut keep);
        }
        st.close(&mut keep);
        log
    }

    /// A reader that hands out at most `step` bytes a call.
    struct Trickle<'a> {
        bytes: &'a [u8],
        step: usize,
    }

    impl Read for Trickle<'_> {
        fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
            let n = self.step.min(buf.len()).min(self.bytes.len());
            buf[..n].copy_from_slice(&self.bytes[..n]);
            self.bytes = &self.bytes[n..];
            Ok(n)
        }
    }

    fn chunked(log: &[u8], chunk: usize, step: usize) -> Vec<Span> {
        let mut spans = Vec::new();
        let total = scan_reader::<io::Error>(Trickle { bytes: log, step }, chunk, |s| {
            spans.push(s);
            Ok(())
        })
        .unwrap();
        assert_eq!(total, log.len());
        spans
    }

    /// Logs with every kind of span: good frames, garbage between them, torn
    /// frames, erased flash (also inside damage and at the end), a long
    /// damaged run, a log that ends torn.
    fn logs() -> Vec<Vec<u8>> {
        let good = frames(12);
        let f = |i: usize| good[i * FRAME_LEN..(i + 1) * FRAME_LEN].to_vec();
        let mut out = vec![
            Vec::new(),
            good.clone(),
            good[..FRAME_LEN * 3 + 50].to_vec(),
        ];
        let mut a = f(0);
        a.extend_from_slice(&[0x55; 9]);
        a.extend(f(1));
        a.extend(&f(2)[..70]);
        a.extend(f(3));
        a.extend(std::iter::repeat_n(0xFF, 700));
        a.extend(f(4));
        a.extend(std::iter::repeat_n(0xFF, 300));
        a.extend_from_slice(&[1, 2, 3]);
        a.extend(std::iter::repeat_n(0xFF, 40));
        a.extend(f(5));
        a.extend((0..1500u32).map(|i| (i * 37 % 251) as u8));
        a.extend(f(6));
        a.extend(f(7));
        a.extend(std::iter::repeat_n(0xFF, 1000));
        out.push(a.clone());
        a.extend(&f(8)[..100]);
        out.push(a.clone());
        let mut b = f(9);
        b[17] ^= 4;
        b.extend(f(10));
        b.extend(&f(11)[..FRAME_LEN - 1]);
        out.push(b);
        out
    }

    #[test]
    fn the_spans_are_those_of_the_whole_log() {
        for (i, log) in logs().iter().enumerate() {
            let whole: Vec<Span> = wire::scan(log).collect();
            for chunk in [1, 128, 129, 200, 255, 256, 300, 1000, 4096, 1 << 20] {
                for step in [1, 7, 128, 4096] {
                    assert_eq!(
                        chunked(log, chunk, step),
                        whole,
                        "log {i}, chunk {chunk}, step {step}"
                    );
                }
            }
        }
    }

    #[test]
    fn memory_stays_bounded_in_long_damage() {
        // 1 MB of erased flash after two frames: one erased span, read 4 KiB
        // at a time.
        let mut log = frames(2);
        log.extend(std::iter::repeat_n(0xFF, 1 << 20));
        let spans = chunked(&log, 4096, 4096);
        assert_eq!(
            spans.last(),
            Some(&Span::Erased {
                offset: 2 * FRAME_LEN,
                len: 1 << 20
            })
        );
        assert_eq!(spans.len(), 3);
    }

    #[test]
    fn read_errors_and_callback_errors_stop_the_scan() {
        struct Broken;
        impl Read for Broken {
            fn read(&mut self, _: &mut [u8]) -> io::Result<usize> {
                Err(io::Error::other("disk gone"))
            }
        }
        let r = scan_reader::<io::Error>(Broken, 4096, |_| Ok(()));
        assert_eq!(r.unwrap_err().to_string(), "disk gone");
        let log = frames(3);
        let mut seen = 0;
        let r = scan_reader::<io::Error>(log.as_slice(), 4096, |_| {
            seen += 1;
            if seen == 2 {
                Err(io::Error::other("stop"))
            } else {
                Ok(())
            }
        });
        assert!(r.is_err());
        assert_eq!(seen, 2);
    }
}
