//! Cup anemometers with pulse outputs.
//!
//! A cup anemometer gives pulses at a rate proportional to wind speed. The board
//! counts them in hardware (a timer in counter mode, or a pulse counter
//! peripheral) and the logger takes the count once per sample period. The count
//! goes to the core as raw [`Reading::Counts`]; the channel's calibration turns
//! counts into m/s (`value = offset + slope * counts`), so the per-sample path
//! stays integer-only (cheap on a core without an FPU).

use qc_core::{ChannelConfig, Reading};

/// A hardware pulse counter: ours, since embedded-hal 1.0 has no counter trait.
pub trait PulseCounter {
    /// What can go wrong reading the counter.
    type Error: core::fmt::Debug;

    /// Pulses counted since the previous call. The implementation reads and
    /// restarts the count without losing a pulse in between (for example by
    /// reading a free-running counter and keeping the previous value).
    fn take_count(&mut self) -> Result<u32, Self::Error>;
}

/// A free-running 16- or 32-bit hardware counter turned into a [`PulseCounter`]
/// by differencing: `read` returns the counter's current value.
#[derive(Debug)]
pub struct Differencing<F> {
    read: F,
    last: u32,
    mask: u32,
}

impl<F: FnMut() -> u32> Differencing<F> {
    /// A counter `bits` wide (1 to 32), read by `read`.
    pub fn new(mut read: F, bits: u32) -> Self {
        let mask = if bits >= 32 {
            u32::MAX
        } else {
            (1u32 << bits.max(1)) - 1
        };
        let last = read() & mask;
        Differencing { read, last, mask }
    }
}

impl<F: FnMut() -> u32> PulseCounter for Differencing<F> {
    type Error = core::convert::Infallible;

    fn take_count(&mut self) -> Result<u32, Self::Error> {
        let now = (self.read)() & self.mask;
        let n = now.wrapping_sub(self.last) & self.mask;
        self.last = now;
        Ok(n)
    }
}

/// A cup anemometer on a pulse counter.
#[derive(Debug)]
pub struct CupAnemometer<P> {
    counter: P,
}

impl<P: PulseCounter> CupAnemometer<P> {
    /// Takes the counter.
    pub const fn new(counter: P) -> Self {
        CupAnemometer { counter }
    }

    /// The pulses of the sample period just ended, as raw counts.
    pub fn sample(&mut self) -> Result<Reading, P::Error> {
        let n = self.counter.take_count()?;
        Ok(Reading::Counts(i32::try_from(n).unwrap_or(i32::MAX)))
    }

    /// Gives the counter back.
    pub fn release(self) -> P {
        self.counter
    }

    /// A speed channel for this anemometer sampled every `period_ms`, with a
    /// calibration `speed = offset + slope_per_hz * frequency` (m/s, Hz): per
    /// count in one period the slope is `slope_per_hz * 1000 / period_ms`.
    pub fn channel_config(slope_per_hz: f64, offset: f64, period_ms: u32) -> ChannelConfig {
        let per_count = slope_per_hz * 1000.0 / f64::from(period_ms.max(1));
        ChannelConfig::speed(1.0).with_calibration(per_count, offset)
    }
}
