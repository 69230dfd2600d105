//! The station's fixed limits, which configuration checks and error messages
//! share.
//!
//! A primitive: imports nothing from the crate.

/// Most missing-value codes a station may have.
pub const MAX_SENTINELS: usize = 4;

/// Most samples per interval (2^24: 10-minute intervals at up to 27 kHz; and
/// never more than one per millisecond of the interval).
pub const MAX_SAMPLES_PER_INTERVAL: u32 = 1 << 24;
