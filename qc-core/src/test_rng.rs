//! Reproducible test inputs for the unit tests (compiled for tests only).

/// SplitMix64 (public domain).
pub(crate) struct Rng(pub(crate) u64);

impl Rng {
    pub(crate) fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A value with a random number (0 to 64) of significant bits.
    pub(crate) fn wide(&mut self) -> u64 {
        let k = self.next() % 65;
        if k == 0 {
            0
        } else {
            self.next() >> (64 - k)
        }
    }

    /// A value in [0, 1).
    pub(crate) fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}
