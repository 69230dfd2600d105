//! The spike chain: consecutive valid samples of one channel compared with
//! its step limit, exactly mergeable across pieces of an interval.
//!
//! A primitive: imports nothing from the crate.

/// Spike bookkeeping of one channel over one interval (or piece of it):
/// consecutive valid samples are compared; a missing, out-of-range sample or a
/// time gap breaks the chain, as it breaks a gust window.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Spikes {
    count: u32,
    first: i32,
    last: i32,
    flags: u8,
}

const SEEN: u8 = 1;
/// The piece began with a valid sample (no break before it).
const OPENS_VALID: u8 = 2;
/// The last thing seen was a valid sample.
const ENDS_VALID: u8 = 4;

impl Spikes {
    /// Nothing seen.
    pub(crate) const EMPTY: Spikes = Spikes {
        count: 0,
        first: 0,
        last: 0,
        flags: 0,
    };

    /// A chain that holds only its count (what finishing needs): the state a
    /// PC rebuilds from a logger's interval state. Not for merging.
    pub(crate) const fn with_count(count: u32) -> Spikes {
        Spikes {
            count,
            first: 0,
            last: 0,
            flags: 0,
        }
    }

    /// Spikes counted.
    pub const fn count(&self) -> u32 {
        self.count
    }

    /// A valid sample `q` with step limit `limit` (in quanta, or centidegrees
    /// when `circular`).
    #[inline]
    pub(crate) fn push(&mut self, q: i32, limit: u32, circular: bool) {
        self.push_by(q, limit, circular, step);
    }

    /// [`Spikes::push`] with the step computed inline, for the host's block
    /// path (a loop over a column keeps the chain in registers; a call per
    /// sample would spill them). The same code with another step function of
    /// the same body ([`step_inline`]), so the same state by construction.
    #[inline(always)]
    pub(crate) fn push_inline(&mut self, q: i32, limit: u32, circular: bool) {
        self.push_by(q, limit, circular, step_inline);
    }

    /// Whether the last thing seen was a valid sample: then
    /// [`Spikes::push_inline`] is [`Spikes::push_steady`].
    #[inline(always)]
    pub(crate) fn ends_valid(&self) -> bool {
        self.flags & ENDS_VALID != 0
    }

    /// [`Spikes::push_inline`] of a chain going on ([`Spikes::ends_valid`]):
    /// its first branch, the only one taken then (the flags stay).
    #[inline(always)]
    pub(crate) fn push_steady(&mut self, q: i32, limit: u32, circular: bool) {
        if step_inline(self.last, q, circular) > limit {
            self.count = self.count.saturating_add(1);
        }
        self.last = q;
    }

    #[inline(always)]
    fn push_by(&mut self, q: i32, limit: u32, circular: bool, step: fn(i32, i32, bool) -> u32) {
        let f = self.flags;
        if f & ENDS_VALID != 0 {
            // The common case, a chain going on: no store of the flags.
            if step(self.last, q, circular) > limit {
                self.count = self.count.saturating_add(1);
            }
        } else if f & SEEN == 0 {
            self.flags = SEEN | OPENS_VALID | ENDS_VALID;
            self.first = q;
        } else {
            self.flags = f | ENDS_VALID;
        }
        self.last = q;
    }

    /// A break in the chain.
    #[inline]
    pub(crate) fn break_chain(&mut self) {
        self.flags = (self.flags | SEEN) & !ENDS_VALID;
    }

    /// Merges the following piece; `joined` when no gap separates them.
    pub(crate) fn merge(&mut self, later: &Spikes, limit: u32, circular: bool, joined: bool) {
        if later.flags & SEEN == 0 {
            return;
        }
        if self.flags & SEEN == 0 {
            *self = *later;
            return;
        }
        self.count = self.count.saturating_add(later.count);
        if joined
            && self.flags & ENDS_VALID != 0
            && later.flags & OPENS_VALID != 0
            && step(self.last, later.first, circular) > limit
        {
            self.count = self.count.saturating_add(1);
        }
        self.last = later.last;
        self.flags = (self.flags & !ENDS_VALID) | (later.flags & ENDS_VALID);
    }
}

/// The step between two samples: out of line on a logger (the per-sample
/// functions stay small), the same body as [`step_inline`].
fn step(a: i32, b: i32, circular: bool) -> u32 {
    step_inline(a, b, circular)
}

/// `|a - b|`, the shorter way round a turn when `circular`.
#[inline(always)]
fn step_inline(a: i32, b: i32, circular: bool) -> u32 {
    // 32-bit arithmetic (cheap on a logger core): |a - b| always fits a u32.
    let d = a.abs_diff(b);
    if circular {
        // Directions are in 0..36_000, so one turn at most: no division (a
        // Cortex-M0 has none); the remainder keeps any other input in range.
        let d = if d < 36_000 { d } else { d % 36_000 };
        d.min(36_000 - d)
    } else {
        d
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inline_and_steady_pushes_are_push() {
        // `push_inline`, and `push_steady` when the chain goes on, leave the
        // state `push` leaves, straight and round a turn.
        let mut rng = crate::test_rng::Rng(22);
        for circular in [false, true] {
            let (mut a, mut b, mut c) = (Spikes::EMPTY, Spikes::EMPTY, Spikes::EMPTY);
            for i in 0..200_000 {
                let limit = [0, 5, 300, 18_000, u32::MAX][(rng.next() % 5) as usize];
                if rng.next() % 11 == 0 {
                    a.break_chain();
                    b.break_chain();
                    c.break_chain();
                    continue;
                }
                let q = match rng.next() % 4 {
                    0 => rng.next() as i32,
                    _ => (rng.next() % 36_000) as i32,
                };
                a.push(q, limit, circular);
                b.push_inline(q, limit, circular);
                if c.ends_valid() {
                    c.push_steady(q, limit, circular);
                } else {
                    c.push(q, limit, circular);
                }
                assert_eq!(a, b, "{i}");
                assert_eq!(a, c, "{i}");
            }
        }
    }
}
