//! Gust: the largest running mean over `w` consecutive valid samples.
//!
//! A missing, out-of-range or screened sample, or a gap in time, breaks the run:
//! a window never spans a break. The window length `w` (in samples, `1..=G`) is
//! passed to every call rather than stored, so the state is only what a window
//! needs. Sums are exact integers; the largest window *sum* is kept, and divided
//! by `w` only when the interval is finished.
//!
//! For exact split-and-merge, a piece also keeps its first `w - 1` samples (the
//! head of its leading run): windows that straddle the join of two pieces are
//! then found exactly when the pieces are merged.
//!
//! Window sums are `i32` (cheap on a 32-bit logger core): the sum of any `w`
//! samples must fit, which [`crate::Layout`] guarantees for speed channels (it
//! refuses a range whose quanta times the gust window could exceed `i32`).
//! Used directly with larger samples, the sums wrap (never a panic).

/// Running-window state for one interval (or one piece of an interval).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Gust<const G: usize> {
    best: i32,
    window: i32,
    tail: [i32; G],
    head: [i32; G],
    run: u16,
    pos: u8,
    head_len: u8,
    flags: u8,
}

const HAS_BEST: u8 = 1;
/// A break was seen (the head is complete); a piece has seen something when
/// `run > 0` or this flag is set (`run` only returns to 0 by a break).
const BROKEN: u8 = 2;

impl<const G: usize> Default for Gust<G> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const G: usize> Gust<G> {
    const CHECK: () = assert!(G > 0 && G <= 255, "gust capacity must be 1..=255 samples");

    /// An empty window.
    pub const fn new() -> Self {
        #[allow(clippy::let_unit_value)]
        let () = Self::CHECK;
        Gust {
            best: 0,
            window: 0,
            tail: [0; G],
            head: [0; G],
            run: 0,
            pos: 0,
            head_len: 0,
            flags: 0,
        }
    }

    /// A window that holds only its largest sum (what finishing needs): the
    /// state a PC rebuilds from a logger's interval state. Not for merging.
    pub(crate) const fn with_best(best: Option<i32>) -> Self {
        let mut g = Self::new();
        if let Some(b) = best {
            g.best = b;
            g.flags = HAS_BEST;
        }
        g
    }

    /// [`Gust::best_sum`] as it is kept.
    pub(crate) const fn best(&self) -> Option<i32> {
        if self.flags & HAS_BEST != 0 {
            Some(self.best)
        } else {
            None
        }
    }

    /// The largest window sum seen, if any run reached `w` samples.
    pub const fn best_sum(&self) -> Option<i64> {
        if self.flags & HAS_BEST != 0 {
            Some(self.best as i64)
        } else {
            None
        }
    }

    /// Whether any sample or break was pushed.
    const fn seen(&self) -> bool {
        self.run > 0 || self.flags & BROKEN != 0
    }

    #[inline]
    fn offer(&mut self, sum: i32) {
        if self.flags & HAS_BEST == 0 || sum > self.best {
            self.best = sum;
            self.flags |= HAS_BEST;
        }
    }

    /// Adds one valid sample. `w` must be in `1..=G` (the caller validated it).
    #[inline]
    pub fn push(&mut self, q: i32, w: usize) {
        let run = usize::from(self.run);
        let pos = usize::from(self.pos);
        let full = run >= w;
        let mut window = self.window;
        if let Some(slot) = self.tail.get_mut(pos) {
            if full {
                window = window.wrapping_sub(*slot);
            }
            *slot = q;
        }
        window = window.wrapping_add(q);
        self.window = window;
        self.pos = if pos + 1 >= w { 0 } else { pos as u8 + 1 };
        if !full {
            // Still filling the window (the run counts up to `w` and then
            // stays: nothing needs more). While the piece is unbroken, its run
            // is its first samples: the head keeps the first `w - 1`.
            if self.flags & BROKEN == 0 && run + 1 < w {
                if let Some(slot) = self.head.get_mut(run) {
                    *slot = q;
                }
                self.head_len = (run + 1) as u8;
            }
            self.run = (run + 1) as u16;
            if run + 1 < w {
                return;
            }
        }
        self.offer(window);
    }

    /// Breaks the run: the next window starts afresh.
    #[inline]
    pub fn break_run(&mut self) {
        self.flags |= BROKEN;
        self.run = 0;
        self.window = 0;
        self.pos = 0;
    }

    /// Runs `f` with the window's state as a [`Column`]: its scalars in
    /// locals (registers, in a loop), written back when `f` returns. For the
    /// host's block path, which pushes a column of one channel at once; the
    /// logger's per-sample path keeps [`Gust::push`], which stores only what
    /// changed.
    #[inline(always)]
    pub(crate) fn with_column<R>(
        &mut self,
        w: usize,
        f: impl FnOnce(&mut Column<'_, G>) -> R,
    ) -> R {
        let Gust {
            best,
            window,
            tail,
            head,
            run,
            pos,
            head_len,
            flags,
        } = self;
        let mut c = Column {
            tail,
            head,
            best: *best,
            window: *window,
            run: usize::from(*run),
            pos: usize::from(*pos),
            head_len: *head_len,
            flags: *flags,
            w,
        };
        let r = f(&mut c);
        *best = c.best;
        *window = c.window;
        // `run` and `pos` are at most `w <= G <= 255` (as `Gust::push` keeps them).
        *run = c.run as u16;
        *pos = c.pos as u8;
        *head_len = c.head_len;
        *flags = c.flags;
        r
    }

    /// The last `k <= min(run, w)` samples of the current run, oldest first,
    /// written to `out[..k]`.
    fn tail_in_order(&self, w: usize, k: usize, out: &mut [i32; G]) {
        let len = usize::from(self.run).min(w);
        // Oldest sample of the stored run is at `pos` when the ring is full.
        let first = if usize::from(self.run) >= w {
            usize::from(self.pos)
        } else {
            0
        };
        for (i, slot) in out.iter_mut().take(k).enumerate() {
            let idx = (first + (len - k) + i) % w;
            *slot = self.tail[idx];
        }
    }

    /// Merges `later`, the state of the samples that follow this piece in time.
    /// `joined` says whether the two pieces are contiguous (no break between).
    pub fn merge(&mut self, later: &Self, w: usize, joined: bool) {
        if !later.seen() {
            return;
        }
        if !self.seen() {
            *self = *later;
            return;
        }
        // Windows straddling the join: the last w-1 of this run, then later's head.
        if joined && self.run > 0 && later.head_len > 0 && w > 1 {
            let mut own = [0i32; G];
            let a = usize::from(self.run).min(w - 1);
            self.tail_in_order(w, a, &mut own);
            let b = usize::from(later.head_len);
            for from_self in 1..=a {
                let from_later = w - from_self;
                if from_later > b {
                    continue;
                }
                let s = own[a - from_self..a]
                    .iter()
                    .chain(later.head[..from_later].iter())
                    .fold(0i32, |acc, &v| acc.wrapping_add(v));
                self.offer(s);
            }
        }
        if later.flags & HAS_BEST != 0 {
            self.offer(later.best);
        }

        // The head grows only while this piece is one unbroken run.
        if self.flags & BROKEN == 0 {
            if joined {
                for &q in &later.head[..usize::from(later.head_len)] {
                    if usize::from(self.head_len) + 1 >= w {
                        break;
                    }
                    self.head[usize::from(self.head_len)] = q;
                    self.head_len += 1;
                }
            }
            if !joined || later.flags & BROKEN != 0 {
                self.flags |= BROKEN;
            }
        }

        // The trailing run.
        if joined && later.flags & BROKEN == 0 {
            let total = self.run.saturating_add(later.run);
            let keep = usize::from(total).min(w);
            let from_later = usize::from(later.run).min(keep);
            let from_self = keep - from_later;
            let mut seq = [0i32; G];
            let mut own = [0i32; G];
            self.tail_in_order(w, from_self, &mut own);
            seq[..from_self].copy_from_slice(&own[..from_self]);
            let mut lat = [0i32; G];
            later.tail_in_order(w, from_later, &mut lat);
            seq[from_self..keep].copy_from_slice(&lat[..from_later]);
            self.tail = [0; G];
            self.tail[..keep].copy_from_slice(&seq[..keep]);
            self.window = seq[..keep].iter().fold(0i32, |acc, &v| acc.wrapping_add(v));
            self.pos = if keep >= w { 0 } else { keep as u8 };
            self.run = total.min(w as u16);
        } else {
            self.tail = later.tail;
            self.window = later.window;
            self.pos = later.pos;
            self.run = later.run;
        }
    }
}

/// A [`Gust`] opened for a loop over a column ([`Gust::with_column`]): the
/// same steps as [`Gust::push`] and [`Gust::break_run`], line for line, on
/// the scalars held in locals (`run` and `pos` as `usize`).
pub(crate) struct Column<'a, const G: usize> {
    tail: &'a mut [i32; G],
    head: &'a mut [i32; G],
    best: i32,
    window: i32,
    run: usize,
    pos: usize,
    head_len: u8,
    flags: u8,
    w: usize,
}

impl<const G: usize> Column<'_, G> {
    /// [`Gust::push`].
    #[inline(always)]
    pub(crate) fn push(&mut self, q: i32) {
        let w = self.w;
        let run = self.run;
        let pos = self.pos;
        let full = run >= w;
        let mut window = self.window;
        if let Some(slot) = self.tail.get_mut(pos) {
            if full {
                window = window.wrapping_sub(*slot);
            }
            *slot = q;
        }
        window = window.wrapping_add(q);
        self.window = window;
        self.pos = if pos + 1 >= w { 0 } else { pos + 1 };
        if !full {
            if self.flags & BROKEN == 0 && run + 1 < w {
                if let Some(slot) = self.head.get_mut(run) {
                    *slot = q;
                }
                self.head_len = (run + 1) as u8;
            }
            self.run = run + 1;
            if run + 1 < w {
                return;
            }
        }
        if self.flags & HAS_BEST == 0 || window > self.best {
            self.best = window;
            self.flags |= HAS_BEST;
        }
    }

    /// Whether the window is full and holds a best sum: then
    /// [`Column::push`] is [`Steady::push`].
    #[inline(always)]
    pub(crate) fn is_steady(&self) -> bool {
        self.run >= self.w && self.flags & HAS_BEST != 0
    }

    /// The steady window's state ([`Column::is_steady`]) apart, with its
    /// samples: for a loop of [`Steady::push`] in a function of its own,
    /// where the few values it keeps stay in registers. Written back with
    /// [`Column::set_steady`].
    #[inline(always)]
    pub(crate) fn steady(&mut self) -> (Steady, &mut [i32; G]) {
        let st = Steady {
            window: self.window,
            pos: self.pos,
            best: self.best,
            w: self.w,
        };
        (st, self.tail)
    }

    /// Takes back the state of [`Column::steady`].
    #[inline(always)]
    pub(crate) fn set_steady(&mut self, st: Steady) {
        self.window = st.window;
        self.pos = st.pos;
        self.best = st.best;
    }

    /// [`Gust::break_run`].
    #[inline(always)]
    pub(crate) fn break_run(&mut self) {
        self.flags |= BROKEN;
        self.run = 0;
        self.window = 0;
        self.pos = 0;
    }
}

/// A full window with a best sum ([`Column::steady`]).
#[derive(Clone, Copy)]
pub(crate) struct Steady {
    window: i32,
    pos: usize,
    best: i32,
    w: usize,
}

impl Steady {
    /// [`Column::push`] (and [`Gust::push`]) of a full window with a best
    /// sum: the branches that decides taken (the oldest sample leaves the
    /// window, the run and the head stay, the sum is offered), so the window
    /// stays full.
    #[inline(always)]
    pub(crate) fn push<const G: usize>(&mut self, tail: &mut [i32; G], q: i32) {
        let pos = self.pos;
        let mut window = self.window;
        if let Some(slot) = tail.get_mut(pos) {
            window = window.wrapping_sub(*slot);
            *slot = q;
        }
        window = window.wrapping_add(q);
        self.window = window;
        self.pos = if pos + 1 >= self.w { 0 } else { pos + 1 };
        if window > self.best {
            self.best = window;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Plain reference: the largest sum of `w` consecutive valid samples.
    fn reference(samples: &[Option<i32>], w: usize) -> Option<i64> {
        let mut best = None;
        for start in 0..samples.len() {
            if start + w > samples.len() {
                break;
            }
            let win = &samples[start..start + w];
            if win.iter().all(Option::is_some) {
                let s: i64 = win.iter().map(|v| i64::from(v.unwrap())).sum();
                best = Some(best.map_or(s, |b: i64| b.max(s)));
            }
        }
        best
    }

    fn feed<const G: usize>(g: &mut Gust<G>, samples: &[Option<i32>], w: usize) {
        for s in samples {
            match s {
                Some(q) => g.push(*q, w),
                None => g.break_run(),
            }
        }
    }

    #[test]
    fn matches_reference_and_every_split() {
        let cases: &[&[Option<i32>]] = &[
            &[Some(1), Some(5), Some(2), Some(9), Some(1)],
            &[
                Some(3),
                None,
                Some(7),
                Some(7),
                None,
                Some(1),
                Some(2),
                Some(3),
                Some(4),
            ],
            &[None, None, Some(10)],
            &[
                Some(-4),
                Some(-2),
                Some(-8),
                None,
                Some(-1),
                Some(-1),
                Some(-1),
            ],
            &[
                Some(100),
                Some(0),
                Some(0),
                Some(0),
                Some(50),
                Some(50),
                Some(50),
                None,
            ],
        ];
        for samples in cases {
            for w in 1..=4 {
                let mut whole = Gust::<4>::new();
                feed(&mut whole, samples, w);
                assert_eq!(whole.best_sum(), reference(samples, w), "{samples:?} w {w}");
                for cut in 0..=samples.len() {
                    let mut a = Gust::<4>::new();
                    let mut b = Gust::<4>::new();
                    feed(&mut a, &samples[..cut], w);
                    feed(&mut b, &samples[cut..], w);
                    a.merge(&b, w, true);
                    assert_eq!(
                        a.best_sum(),
                        whole.best_sum(),
                        "{samples:?} w {w} cut {cut}"
                    );
                    // The merged state must keep working as if never split.
                    let mut a2 = a;
                    let mut whole2 = whole;
                    for q in [7, 8, 9, 10] {
                        a2.push(q, w);
                        whole2.push(q, w);
                    }
                    assert_eq!(
                        a2.best_sum(),
                        whole2.best_sum(),
                        "{samples:?} w {w} cut {cut} +"
                    );
                }
            }
        }
    }

    #[test]
    fn column_steps_are_push_and_break() {
        // A column's steps (and the steady step when the window is steady,
        // taken or not at random) leave the state `Gust::push` and
        // `Gust::break_run` of each leave, piece after piece.
        let mut rng = crate::test_rng::Rng(21);
        for round in 0..3_000 {
            let w = 1 + (rng.next() % 6) as usize;
            let mut one = Gust::<6>::new();
            let mut col = Gust::<6>::new();
            for piece in 0..(1 + rng.next() % 5) {
                let n = rng.next() % 40;
                let xs: std::vec::Vec<Option<i32>> = (0..n)
                    .map(|_| match rng.next() % 9 {
                        0 => None,
                        1 => Some(rng.next() as i32),
                        _ => Some((rng.next() % 2001) as i32 - 1000),
                    })
                    .collect();
                feed(&mut one, &xs, w);
                col.with_column(w, |c| {
                    for x in &xs {
                        match x {
                            Some(q) if c.is_steady() && rng.next() % 2 == 0 => {
                                let (mut st, tail) = c.steady();
                                st.push(tail, *q);
                                c.set_steady(st);
                            }
                            Some(q) => c.push(*q),
                            None => c.break_run(),
                        }
                    }
                });
                assert_eq!(one, col, "round {round} piece {piece} w {w}");
            }
        }
    }

    #[test]
    fn a_gap_between_pieces_breaks_the_window() {
        let mut a = Gust::<3>::new();
        let mut b = Gust::<3>::new();
        feed(&mut a, &[Some(10), Some(10)], 3);
        feed(&mut b, &[Some(10), Some(1), Some(1)], 3);
        a.merge(&b, 3, false);
        assert_eq!(a.best_sum(), Some(12));
    }

    #[test]
    fn no_full_window_means_no_gust() {
        let mut g = Gust::<3>::new();
        feed(&mut g, &[Some(1), Some(2), None, Some(3)], 3);
        assert_eq!(g.best_sum(), None);
    }
}
