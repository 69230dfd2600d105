//! CRC-32 (IEEE 802.3): the check of every frame and header in [`crate::wire`],
//! and of a station's configuration fingerprint.
//!
//! A primitive: imports nothing from the crate.

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

#[cfg(test)]
mod tests {
    use super::*;
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
}
