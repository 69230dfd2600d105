//! The page headers of a Parquet file's column chunks, read before the
//! `parquet` crate decodes them, so that a damaged file cannot make it reserve
//! unbounded memory.
//!
//! The `parquet` crate sizes a page's decompression buffer by the page
//! header's `uncompressed_page_size` (up to 2 GiB) and reads the header's byte
//! strings (statistics) into buffers of the length they declare (up to 4
//! GiB), before it reads what follows: a file of a few KiB made `tenmin` use
//! 1.7 GB (found by the fuzz target `columnar`). Here each header is decoded
//! from a bounded window of the file by a reader of the Thrift compact
//! protocol that only skips what it does not need (the format of the Apache
//! Thrift specification, "Thrift Compact protocol encoding"), and every page
//! must lie inside its column chunk and decompress to at most [`MAX_PAGE`]
//! bytes. The metadata in the footer, which the `parquet` crate reads from a
//! buffer bounded by the file's size, is checked by the caller
//! ([`crate::columnar`]).

use std::fs::File;
use std::io::{Read, Seek, SeekFrom};

/// The largest page tenmin decodes, decompressed: writers cut pages at about
/// 1 MiB (common practice; from memory, the default data page size of the
/// Parquet writers of Apache Arrow's C++ and Rust libraries; tenmin's own
/// pages are about 1 MiB, host-cli/PERF.md), dictionary pages as well.
pub const MAX_PAGE: u64 = 64 << 20;

/// The longest page header read: a page header holds a few integers and, at
/// most, a page's minimum and maximum statistics.
const MAX_HEADER: usize = 64 << 10;

/// Nesting of Thrift structs and lists accepted in a page header (it uses 3).
const MAX_DEPTH: u32 = 16;

/// Checks the pages of the column chunk at `start`, `len` bytes long (inside
/// the file: the caller checked), in `f`: each page header decodes within
/// [`MAX_HEADER`] bytes, its page lies inside the chunk, and it decompresses to
/// at most [`MAX_PAGE`] bytes. `Err` says what is wrong and where.
pub fn check_chunk(f: &mut File, start: u64, len: u64) -> Result<(), String> {
    let end = start + len;
    let mut pos = start;
    let mut window = Vec::new();
    while pos < end {
        let want = usize::try_from((end - pos).min(MAX_HEADER as u64)).unwrap_or(MAX_HEADER);
        window.resize(want, 0);
        f.seek(SeekFrom::Start(pos))
            .and_then(|_| f.read_exact(&mut window))
            .map_err(|e| format!("cannot read the page header at byte {pos}: {e}"))?;
        let (header_len, sizes) = page_sizes(&window)
            .ok_or_else(|| format!("a page header at byte {pos} that does not read"))?;
        let (Ok(uncompressed), Ok(compressed)) = (u64::try_from(sizes.0), u64::try_from(sizes.1))
        else {
            return Err(format!("a page at byte {pos} with a negative size"));
        };
        if uncompressed > MAX_PAGE {
            return Err(format!(
                "a page at byte {pos} of {uncompressed} bytes decompressed, over the {MAX_PAGE} tenmin reads"
            ));
        }
        let next = pos + header_len as u64 + compressed;
        if next > end {
            return Err(format!(
                "a page at byte {pos} of {compressed} bytes, past its column chunk's end (byte {end})"
            ));
        }
        pos = next;
    }
    Ok(())
}

/// A page header at the start of `b`: its length and its
/// `uncompressed_page_size` and `compressed_page_size` (fields 2 and 3 of
/// the Parquet format's `PageHeader`). `None` when it does not decode within
/// `b` or lacks either size.
fn page_sizes(b: &[u8]) -> Option<(usize, (i32, i32))> {
    let mut r = Compact { b, pos: 0 };
    let (mut uncompressed, mut compressed) = (None, None);
    let mut last_id = 0i16;
    loop {
        let (id, ty) = r.field_header(&mut last_id)?;
        match (id, ty) {
            (_, STOP) => break,
            (2, I32) => uncompressed = Some(r.i32()?),
            (3, I32) => compressed = Some(r.i32()?),
            _ => r.skip(ty, 0)?,
        }
    }
    Some((r.pos, (uncompressed?, compressed?)))
}

const STOP: u8 = 0;
const TRUE: u8 = 1;
const FALSE: u8 = 2;
const BYTE: u8 = 3;
const I16: u8 = 4;
const I32: u8 = 5;
const I64: u8 = 6;
const DOUBLE: u8 = 7;
const BINARY: u8 = 8;
const LIST: u8 = 9;
const SET: u8 = 10;
const MAP: u8 = 11;
const STRUCT: u8 = 12;

/// A reader of the Thrift compact protocol over a slice: every length is
/// checked against what is left of it, nothing is allocated.
struct Compact<'a> {
    b: &'a [u8],
    pos: usize,
}

impl Compact<'_> {
    fn byte(&mut self) -> Option<u8> {
        let c = *self.b.get(self.pos)?;
        self.pos += 1;
        Some(c)
    }

    fn varint(&mut self) -> Option<u64> {
        let mut v = 0u64;
        for shift in (0..64).step_by(7) {
            let c = self.byte()?;
            v |= u64::from(c & 0x7f) << shift;
            if c & 0x80 == 0 {
                return Some(v);
            }
        }
        None
    }

    fn zigzag(&mut self) -> Option<i64> {
        let v = self.varint()?;
        Some((v >> 1) as i64 ^ -((v & 1) as i64))
    }

    fn i32(&mut self) -> Option<i32> {
        i32::try_from(self.zigzag()?).ok()
    }

    fn advance(&mut self, n: u64) -> Option<()> {
        let n = usize::try_from(n).ok()?;
        if n > self.b.len() - self.pos {
            return None;
        }
        self.pos += n;
        Some(())
    }

    /// A struct's next field header: its id (absolute) and type.
    fn field_header(&mut self, last_id: &mut i16) -> Option<(i16, u8)> {
        let c = self.byte()?;
        let ty = c & 0x0f;
        if ty == STOP {
            return Some((0, STOP));
        }
        let delta = i16::from(c >> 4);
        let id = if delta == 0 {
            i16::try_from(self.zigzag()?).ok()?
        } else {
            last_id.checked_add(delta)?
        };
        *last_id = id;
        Some((id, ty))
    }

    /// Passes over an element of a list, set or map: as [`Compact::skip`],
    /// but a boolean element is a byte of its own.
    fn skip_element(&mut self, ty: u8, depth: u32) -> Option<()> {
        if matches!(ty, TRUE | FALSE) {
            self.advance(1)
        } else {
            self.skip(ty, depth)
        }
    }

    /// Passes over a value of type `ty`, nested at most [`MAX_DEPTH`].
    fn skip(&mut self, ty: u8, depth: u32) -> Option<()> {
        if depth > MAX_DEPTH {
            return None;
        }
        match ty {
            TRUE | FALSE => Some(()),
            BYTE => self.advance(1),
            I16 | I32 | I64 => self.varint().map(drop),
            DOUBLE => self.advance(8),
            BINARY => {
                let n = self.varint()?;
                self.advance(n)
            }
            LIST | SET => {
                let c = self.byte()?;
                let elem = c & 0x0f;
                let n = match c >> 4 {
                    15 => self.varint()?,
                    n => u64::from(n),
                };
                for _ in 0..n {
                    self.skip_element(elem, depth + 1)?;
                }
                Some(())
            }
            MAP => {
                let n = self.varint()?;
                if n == 0 {
                    return Some(());
                }
                let kv = self.byte()?;
                for _ in 0..n {
                    self.skip_element(kv >> 4, depth + 1)?;
                    self.skip_element(kv & 0x0f, depth + 1)?;
                }
                Some(())
            }
            STRUCT => {
                let mut last = 0i16;
                loop {
                    let (_, t) = self.field_header(&mut last)?;
                    if t == STOP {
                        return Some(());
                    }
                    self.skip(t, depth + 1)?;
                }
            }
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use parquet::format::{
        DataPageHeader, DataPageHeaderV2, DictionaryPageHeader, Encoding, PageHeader, PageType,
        Statistics,
    };
    use parquet::thrift::TSerializable;
    use thrift::protocol::TCompactOutputProtocol;

    fn encode(h: &PageHeader) -> Vec<u8> {
        let mut out = Vec::new();
        let mut p = TCompactOutputProtocol::new(&mut out);
        h.write_to_out_protocol(&mut p).unwrap();
        drop(p);
        out
    }

    /// Page headers written by the `parquet` crate 53 through the `thrift`
    /// crate 0.17's compact protocol (the writers of real files), with every
    /// kind of page and random statistics: read here to the same sizes and
    /// length, also with bytes after them; cut short or past a window, not
    /// read.
    #[test]
    fn page_headers_read_as_the_parquet_crate_writes_them() {
        let mut x = 0x2545_F491_4F6C_DD1Du64;
        let mut next = move || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for i in 0..2_000 {
            let bytes = |n: u64| (0..n).map(|k| (k * 37 + n) as u8).collect::<Vec<u8>>();
            let stats = (i % 3 != 0).then(|| Statistics {
                max: (i % 2 == 0).then(|| bytes(next() % 40)),
                min: None,
                null_count: Some((next() % 1000) as i64),
                distinct_count: (i % 5 == 0).then_some(7),
                max_value: Some(bytes(next() % 300)),
                min_value: Some(bytes(next() % 3)),
                is_max_value_exact: Some(i % 4 == 0),
                is_min_value_exact: None,
            });
            let (uncompressed, compressed) =
                ((next() % (1 << 31)) as i32, (next() % 100_000) as i32);
            let mut h = PageHeader {
                type_: PageType::DATA_PAGE,
                uncompressed_page_size: uncompressed,
                compressed_page_size: compressed,
                crc: (i % 7 == 0).then_some(-5),
                data_page_header: None,
                index_page_header: None,
                dictionary_page_header: None,
                data_page_header_v2: None,
            };
            match i % 3 {
                0 => {
                    h.data_page_header = Some(DataPageHeader {
                        num_values: (next() % 100_000) as i32,
                        encoding: Encoding::PLAIN,
                        definition_level_encoding: Encoding::RLE,
                        repetition_level_encoding: Encoding::RLE,
                        statistics: stats,
                    })
                }
                1 => {
                    h.type_ = PageType::DATA_PAGE_V2;
                    h.data_page_header_v2 = Some(DataPageHeaderV2 {
                        num_values: 10,
                        num_nulls: 1,
                        num_rows: 10,
                        encoding: Encoding::RLE_DICTIONARY,
                        definition_levels_byte_length: 4,
                        repetition_levels_byte_length: 0,
                        is_compressed: Some(i % 2 == 0),
                        statistics: stats,
                    })
                }
                _ => {
                    h.type_ = PageType::DICTIONARY_PAGE;
                    h.dictionary_page_header = Some(DictionaryPageHeader {
                        num_values: 3,
                        encoding: Encoding::PLAIN,
                        is_sorted: Some(true),
                    })
                }
            }
            let enc = encode(&h);
            let mut with_data = enc.clone();
            with_data.extend(bytes(next() % 50));
            assert_eq!(
                page_sizes(&with_data),
                Some((enc.len(), (uncompressed, compressed))),
                "{h:?}"
            );
            for cut in [0, 1, enc.len() / 2, enc.len() - 1] {
                assert_eq!(page_sizes(&enc[..cut]), None, "{h:?} cut at {cut}");
            }
        }
    }

    /// A column chunk of three pages is read to its end; a page past the
    /// chunk, one that decompresses to more than [`MAX_PAGE`], a negative
    /// size and a header that does not read are each refused, naming the
    /// page's byte.
    #[test]
    fn a_chunks_pages_must_lie_inside_it_and_stay_small() {
        let page = |uncompressed: i32, compressed: i32| {
            let mut b = encode(&PageHeader {
                type_: PageType::DATA_PAGE,
                uncompressed_page_size: uncompressed,
                compressed_page_size: compressed,
                crc: None,
                data_page_header: None,
                index_page_header: None,
                dictionary_page_header: None,
                data_page_header_v2: None,
            });
            b.extend(std::iter::repeat_n(7u8, compressed.max(0) as usize));
            b
        };
        let dir = tempfile::tempdir().unwrap();
        let check = |chunk: &[u8]| {
            let path = dir.path().join("chunk.bin");
            // Ten bytes before the chunk, as a file holds other things.
            let mut file = vec![0u8; 10];
            file.extend_from_slice(chunk);
            std::fs::write(&path, &file).unwrap();
            let mut f = File::open(&path).unwrap();
            check_chunk(&mut f, 10, chunk.len() as u64)
        };
        let good = [page(100, 20), page(5000, 3000), page(0, 0)].concat();
        assert_eq!(check(&good), Ok(()));
        let past = [page(100, 20), page(100, 50)].concat();
        let err = check(&past[..past.len() - 1]).unwrap_err();
        assert!(err.contains("past its column chunk's end"), "{err}");
        let big = MAX_PAGE as i32 + 1;
        let err = check(&page(big, 10)).unwrap_err();
        assert!(
            err.contains("at byte 10 of 67108865 bytes decompressed"),
            "{err}"
        );
        assert_eq!(check(&page(MAX_PAGE as i32, 10)), Ok(()));
        let err = check(&page(-1, 10)).unwrap_err();
        assert!(err.contains("negative size"), "{err}");
        let err = check(&[0x15, 0x00, 0xff, 0xff]).unwrap_err();
        assert!(err.contains("does not read"), "{err}");
    }
}
