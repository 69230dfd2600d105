//! Invariants of `qc-core`, checked with proptest through the public API
//! (`Layout`, `IntervalAcc`, `Station`, `Reading::{Value, Counts, Missing}`,
//! missing-value codes, NaN).
//!
//! Case counts are set so that the whole file runs in a few seconds in a debug
//! build; raise them locally with `PROPTEST_CASES=...` for a longer search.

use proptest::collection::vec;
use proptest::prelude::*;
use qc_core::{
    ChannelConfig, Event, IntervalAcc, Layout, Reading, Stat, Station, StationConfig, Timestamp,
};
use tenmin_tests::reference;
use tenmin_tests::support::{
    four_channels, mean_direction_band_deg, order_free_stats, reading, same_record, sigma_band_deg,
    stat_bits, ten_minutes, utc, value, CD_PER_DEG, G, LINKED, SCALAR, SCALAR_PER_UNIT, SPEED,
    SPEED_PER_UNIT, TABLE_VECTOR_ERROR, VANE,
};

const INTERVAL_MS: i64 = 600_000;

/// Readings of all four channels at one instant.
type Row = [Reading; 4];

/// Valid quanta of a channel of [`four_channels`].
fn valid_q(ch: usize) -> BoxedStrategy<i64> {
    match ch {
        SPEED => (0i64..=7_500).boxed(),
        // 36,000 centidegrees is 360 degrees, in range, and the same as north.
        LINKED | VANE => (0i64..=36_000).boxed(),
        _ => (-500i64..=600).boxed(),
    }
}

fn per_unit(ch: usize) -> f64 {
    match ch {
        SPEED => SPEED_PER_UNIT,
        LINKED | VANE => CD_PER_DEG,
        _ => SCALAR_PER_UNIT,
    }
}

/// Readings outside a channel's range, as values and as counts.
fn out_of_range(ch: usize) -> BoxedStrategy<Reading> {
    let (lo, hi, k_lo, k_hi) = match ch {
        SPEED => (0.0, 75.0, 0, 7_500),
        LINKED | VANE => (0.0, 360.0, 0, 36_000),
        _ => (-50.0, 60.0, -500, 600),
    };
    prop_oneof![
        (hi + 0.001..hi + 500.0).prop_map(Reading::Value),
        (lo - 500.0..lo - 0.001).prop_map(Reading::Value),
        (k_hi + 1..k_hi + 100_000).prop_map(Reading::Counts),
        (k_lo - 100_000..k_lo).prop_map(Reading::Counts),
    ]
    .boxed()
}

/// One channel's reading: mostly valid (as a value or as counts), sometimes
/// missing (absent, NaN, a missing-value code as value or counts), out of
/// range, flagged bad by its source, or excluded by decision.
fn channel_reading(ch: usize) -> BoxedStrategy<Reading> {
    let pu = per_unit(ch);
    prop_oneof![
        24 => (valid_q(ch), any::<bool>()).prop_map(move |(q, c)| reading(q, pu, c)),
        1 => Just(Reading::Missing),
        1 => Just(Reading::Value(f64::NAN)),
        1 => prop_oneof![Just(-999.0), Just(-9999.0)].prop_map(Reading::Value),
        1 => prop_oneof![Just(-999), Just(-9999)].prop_map(Reading::Counts),
        2 => out_of_range(ch),
        2 => Just(Reading::Flagged),
        2 => Just(Reading::Excluded),
    ]
    .boxed()
}

fn row() -> impl Strategy<Value = Row> {
    (
        channel_reading(0),
        channel_reading(1),
        channel_reading(2),
        channel_reading(3),
    )
        .prop_map(|(a, b, c, d)| [a, b, c, d])
}

/// Time steps between samples at a nominal 1 Hz: mostly 1 s, some jitter,
/// some gaps (more than 1.5 s) that break gust runs.
fn step_ms() -> impl Strategy<Value = i64> {
    prop_oneof![
        20 => Just(1_000i64),
        4 => 1i64..=1_500,
        2 => 1_501i64..=40_000,
    ]
}

/// An interval index (around the years 2008 to 2027) and up to `max` samples in
/// it, with strictly increasing times inside the interval.
fn interval_samples(max: usize) -> impl Strategy<Value = (i64, Vec<(i64, Row)>)> {
    (
        2_000_000i64..3_000_000,
        0i64..5_000,
        vec((step_ms(), row()), 1..=max),
    )
        .prop_map(|(index, start, steps)| {
            let mut t = index * INTERVAL_MS + start;
            let end = (index + 1) * INTERVAL_MS;
            let mut out = Vec::with_capacity(steps.len());
            for (i, (dt, r)) in steps.into_iter().enumerate() {
                if i > 0 {
                    t += dt;
                }
                if t >= end {
                    break;
                }
                out.push((t, r));
            }
            (index, out)
        })
}

fn accumulate(layout: &Layout<4>, index: i64, samples: &[(i64, Row)]) -> IntervalAcc<4, G> {
    let mut acc = IntervalAcc::new(layout, index);
    for (t, r) in samples {
        acc.push(layout, Timestamp::from_millis(*t), r);
    }
    acc
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    /// Permuting the readings over a fixed sorted list of times within one
    /// interval leaves every statistic but the gust bit-identical, and the
    /// tallies equal. The gust is defined by sample order (the largest mean of
    /// `w` *consecutive* samples), so it may change; so may the screening that
    /// looks at consecutive samples (spikes), so flags are not compared here.
    #[test]
    fn permutation_changes_nothing_but_the_gust(
        (index, times, readings, shuffled) in interval_samples(600).prop_flat_map(|(index, s)| {
            let times: Vec<i64> = s.iter().map(|x| x.0).collect();
            let readings: Vec<Row> = s.iter().map(|x| x.1).collect();
            (Just(index), Just(times), Just(readings.clone()), Just(readings).prop_shuffle())
        }),
        w in 1u16..=4,
    ) {
        let layout = four_channels(ten_minutes(600), w);
        let a: Vec<(i64, Row)> = times.iter().copied().zip(readings).collect();
        let b: Vec<(i64, Row)> = times.iter().copied().zip(shuffled).collect();
        let (acc_a, acc_b) = (accumulate(&layout, index, &a), accumulate(&layout, index, &b));
        for ch in 0..4 {
            let (ra, rb) = (layout.finish(&acc_a, ch).unwrap(), layout.finish(&acc_b, ch).unwrap());
            prop_assert_eq!(order_free_stats(&ra), order_free_stats(&rb), "channel {}", ch);
            prop_assert_eq!(ra.tally, rb.tally, "channel {}", ch);
        }
    }

    /// Cutting one interval's samples into 1 to 6 pieces at random points (empty
    /// pieces allowed), accumulating each piece in its own `IntervalAcc` and
    /// merging them in time order gives the same finished records, every field
    /// bit for bit (gust and flags included), as one pass. Missing and
    /// out-of-range samples and time gaps fall anywhere, so gust runs break
    /// across cuts. Sometimes the last piece is pushed onto the merged state
    /// instead, which must go on exactly as if it had never been split.
    #[test]
    fn split_and_merge_is_bit_identical(
        (index, samples) in interval_samples(600),
        cuts in vec(0usize..=600, 0..=5),
        w in 1u16..=4,
        continue_last in any::<bool>(),
    ) {
        let layout = four_channels(ten_minutes(600), w);
        let whole = accumulate(&layout, index, &samples);
        let mut bounds: Vec<usize> = cuts.into_iter().map(|c| c.min(samples.len())).collect();
        bounds.push(0);
        bounds.push(samples.len());
        bounds.sort_unstable();
        let pieces: Vec<&[(i64, Row)]> = bounds.windows(2).map(|b| &samples[b[0]..b[1]]).collect();
        let mut merged = IntervalAcc::<4, G>::new(&layout, index);
        for (i, piece) in pieces.iter().enumerate() {
            if continue_last && i == pieces.len() - 1 {
                for (t, r) in piece.iter() {
                    merged.push(&layout, Timestamp::from_millis(*t), r);
                }
            } else {
                merged.merge(&layout, &accumulate(&layout, index, piece));
            }
        }
        prop_assert_eq!(merged.span(), whole.span());
        for ch in 0..4 {
            let (m, o) = (layout.finish(&merged, ch).unwrap(), layout.finish(&whole, ch).unwrap());
            if let Err(e) = same_record(&m, &o) {
                return Err(TestCaseError::fail(format!("channel {ch}, pieces at {bounds:?}: {e}")));
            }
        }
    }

    /// Bounds every record must keep: min <= mean <= max and min <= gust <= max
    /// (speed, scalar); 0 <= sd <= (max - min) / 2 (Popoviciu's inequality on
    /// variances, from memory); directions in [0, 360), 0 <= mean resultant
    /// length <= 1, 0 <= sigma-theta <= pi/sqrt(3) rad (Yamartino's estimator at
    /// eps = 1). Never NaN.
    #[test]
    fn statistics_stay_in_their_bounds(
        (index, samples) in interval_samples(600),
        w in 1u16..=4,
    ) {
        let layout = four_channels(ten_minutes(600), w);
        let acc = accumulate(&layout, index, &samples);
        for ch in 0..4 {
            let r = layout.finish(&acc, ch).unwrap();
            for s in [r.mean, r.sd, r.min, r.max, r.gust, r.ti, r.resultant_length,
                      r.resultant_speed, r.resultant_direction] {
                if let Stat::Value(v) = s {
                    prop_assert!(v.is_finite(), "channel {ch}: {r:?}");
                }
            }
            match ch {
                SPEED | SCALAR => {
                    let Stat::Value(mean) = r.mean else { continue };
                    let (lo, hi, sd) = (value(r.min, "min"), value(r.max, "max"), value(r.sd, "sd"));
                    prop_assert!(lo <= mean && mean <= hi, "{r:?}");
                    prop_assert!(sd >= 0.0 && sd <= (hi - lo) / 2.0 * (1.0 + 1e-12), "{r:?}");
                    if let Stat::Value(g) = r.gust {
                        prop_assert!(lo <= g && g <= hi, "{r:?}");
                    }
                }
                _ => {
                    let max_sigma = (std::f64::consts::PI / 3f64.sqrt()).to_degrees();
                    if let Stat::Value(m) = r.mean {
                        prop_assert!((0.0..360.0).contains(&m), "{r:?}");
                    }
                    if let Stat::Value(sd) = r.sd {
                        prop_assert!((0.0..=max_sigma + 1e-9).contains(&sd), "{r:?}");
                        let len = value(r.resultant_length, "resultant length");
                        prop_assert!((0.0..=1.0).contains(&len), "{r:?}");
                    }
                    if let Stat::Value(d) = r.resultant_direction {
                        prop_assert!((0.0..360.0).contains(&d), "{r:?}");
                    }
                }
            }
        }
    }

    /// Constant input: speed and scalar sd exactly 0.0 (the variance numerator
    /// is formed exactly in integers) and mean, min, max, gust the same bits;
    /// sigma-theta within 1e-5 degrees of 0 and never NaN (CHECK-VALUES: constant
    /// directions, derived from the Yamartino formula); the mean direction is the
    /// direction itself. Invalid readings between them change nothing.
    #[test]
    fn constant_input_has_no_spread(
        q_speed in 0i64..=7_500,
        cd in 0i64..36_000,
        q_scalar in -500i64..=600,
        pattern in vec((any::<bool>(), 0u8..12), 1..=600),
        w in 1u16..=4,
    ) {
        let layout = four_channels(ten_minutes(600), w);
        let mut acc = IntervalAcc::<4, G>::new(&layout, 2_800_000);
        for (i, (as_counts, invalid)) in pattern.iter().enumerate() {
            let mut r = [
                reading(q_speed, SPEED_PER_UNIT, *as_counts),
                reading(cd, CD_PER_DEG, !*as_counts),
                reading(cd, CD_PER_DEG, *as_counts),
                reading(q_scalar, SCALAR_PER_UNIT, !*as_counts),
            ];
            if *invalid == 0 {
                r[i % 4] = Reading::Value(f64::NAN);
            }
            acc.push(&layout, Timestamp::from_millis(2_800_000 * INTERVAL_MS + i as i64 * 1000), &r);
        }
        for ch in [SPEED, SCALAR] {
            let r = layout.finish(&acc, ch).unwrap();
            if r.tally.valid == 0 {
                continue;
            }
            prop_assert_eq!(stat_bits(r.sd), Ok(0.0f64.to_bits()), "{:?}", r);
            prop_assert_eq!(stat_bits(r.min), stat_bits(r.mean));
            prop_assert_eq!(stat_bits(r.max), stat_bits(r.mean));
            if let Stat::Value(g) = r.gust {
                prop_assert_eq!(g.to_bits(), value(r.mean, "mean").to_bits());
            }
        }
        for ch in [LINKED, VANE] {
            let r = layout.finish(&acc, ch).unwrap();
            if r.tally.valid == 0 {
                continue;
            }
            let sigma = value(r.sd, "sigma-theta");
            prop_assert!(!sigma.is_nan() && sigma.abs() <= 1e-5, "sigma {sigma} for constant {cd} cd");
            let mean = value(r.mean, "mean direction");
            prop_assert!(reference::angle_between_deg(mean, cd as f64 / 100.0) <= 1e-6, "{mean} vs {cd} cd");
        }
    }

    /// Rotating every direction by a whole number of centidegrees rotates the
    /// unit-vector mean by the same angle (mod 360) and leaves sigma-theta as it
    /// was, each to 1e-6 degrees. The core's unit vectors come from Q30 tables
    /// within 2^-29 of the true ones, so where the mean resultant length R is
    /// small (vectors nearly cancel) or sigma-theta is near 0, that rounding
    /// alone can move the results by more than 1e-6 degrees; there the tolerance
    /// is the band the rounding allows (`support::mean_direction_band_deg`,
    /// `support::sigma_band_deg`), which is below 1e-6 degrees for most cases.
    #[test]
    fn rotation_rotates_the_mean_and_keeps_sigma(
        // Spreads from none to the whole circle, weighted toward the spreads
        // where the table rounding cannot reach 1e-6 degrees.
        dirs in (
            0i64..36_000,
            prop_oneof![3 => 300i64..=7_000, 1 => 0i64..=18_000],
            1usize..=300,
        ).prop_flat_map(|(c, half, n)| {
            vec(-half..=half, n).prop_map(move |o| {
                o.into_iter().map(|d| (c + d).rem_euclid(36_000)).collect::<Vec<i64>>()
            })
        }),
        rot in 1i64..36_000,
        as_counts in any::<bool>(),
    ) {
        let n = dirs.len() as u32;
        let (a, b) = (direction_record(&dirs, 0, n, as_counts), direction_record(&dirs, rot, n, !as_counts));
        let degs: Vec<f64> = dirs.iter().map(|&d| d as f64 / 100.0).collect();
        let truth = reference::direction_stats(&degs).unwrap();
        let r = truth.resultant_length;
        let mean_tol = 1e-6f64.max(2.0 * mean_direction_band_deg(r, TABLE_VECTOR_ERROR));
        let sigma_tol = 1e-6f64.max(sigma_band_deg(r, TABLE_VECTOR_ERROR));
        let (sa, sb) = (value(a.sd, "sigma"), value(b.sd, "sigma rotated"));
        prop_assert!((sa - sb).abs() <= sigma_tol, "sigma {sa} vs {sb} (tol {sigma_tol}, R {r})");
        match (a.mean, b.mean) {
            (Stat::Value(ma), Stat::Value(mb)) => {
                let expected = reference::normalise_deg(ma + rot as f64 / 100.0);
                let d = reference::angle_between_deg(mb, expected);
                prop_assert!(d <= mean_tol, "mean {ma} rotated by {rot} cd gave {mb} (tol {mean_tol}, R {r})");
            }
            // Vectors that cancel (R below 1e-6 in the core) have no mean; rounding
            // may put a rotated copy on either side of that threshold.
            _ => prop_assert!(r <= 1e-6 + 2.0 * TABLE_VECTOR_ERROR, "R {r}: {:?} vs {:?}", a.mean, b.mean),
        }
    }

    /// Quarter turns are exact in the core's tables (sin and cos swap and change
    /// sign), so sigma-theta and the mean resultant length keep their bits and
    /// the mean turns by 90, 180 or 270 degrees up to the last bits of atan2.
    #[test]
    fn quarter_turns_are_exact(
        dirs in vec(0i64..36_000, 1..=200),
        quarter in 1i64..=3,
    ) {
        let n = dirs.len() as u32;
        let (a, b) = (direction_record(&dirs, 0, n, false), direction_record(&dirs, quarter * 9_000, n, true));
        prop_assert_eq!(stat_bits(a.sd), stat_bits(b.sd));
        prop_assert_eq!(stat_bits(a.resultant_length), stat_bits(b.resultant_length));
        match (a.mean, b.mean) {
            (Stat::Value(ma), Stat::Value(mb)) => {
                let expected = reference::normalise_deg(ma + 90.0 * quarter as f64);
                prop_assert!(reference::angle_between_deg(mb, expected) <= 1e-9, "{ma} -> {mb}");
            }
            (ma, mb) => prop_assert_eq!(ma, mb),
        }
    }
}

/// The record of one direction channel fed `dirs` (centidegrees) rotated by
/// `rot` centidegrees, one sample a second, `n` samples per interval.
fn direction_record(dirs: &[i64], rot: i64, n: u32, as_counts: bool) -> qc_core::ChannelRecord {
    let layout = Layout::new::<1>(ten_minutes(n), &[ChannelConfig::direction()]).unwrap();
    let mut acc = IntervalAcc::<1, 1>::new(&layout, 0);
    for (i, d) in dirs.iter().enumerate() {
        let r = reading((d + rot).rem_euclid(36_000), CD_PER_DEG, as_counts);
        acc.push(&layout, Timestamp::from_millis(i as i64 * 1000), &[r]);
    }
    layout.finish(&acc, 0).unwrap()
}

/// One step of the accounting test's feed.
#[derive(Clone, Debug)]
enum Op {
    /// A sample `ms` after the current time, which it becomes.
    Forward(i64),
    /// A sample at the current time again.
    Duplicate,
    /// A sample `ms` before the current time (the current time stays).
    Backward(i64),
    /// A sample at an instant outside the years 0000 to 9999.
    Unsupported(i64),
    /// A timer tick `ms` after the current time (the current time stays).
    Tick(i64),
    /// End of data: close the open interval (samples may follow).
    Close,
}

fn op() -> impl Strategy<Value = Op> {
    const YEAR_MS: i64 = 31_556_952_000; // mean Gregorian year
    prop_oneof![
        40 => (1i64..=2_000).prop_map(Op::Forward),
        3 => (1_000_000i64..=2_000_000_000).prop_map(Op::Forward),
        1 => (YEAR_MS..=40 * YEAR_MS).prop_map(Op::Forward),
        3 => Just(Op::Duplicate),
        3 => (1i64..=3_000_000).prop_map(Op::Backward),
        2 => prop_oneof![
            Just(Timestamp::END.millis()),
            Timestamp::END.millis()..i64::MAX,
            Just(Timestamp::MIN.millis() - 1),
            i64::MIN..Timestamp::MIN.millis(),
        ].prop_map(Op::Unsupported),
        2 => (0i64..=3_000_000).prop_map(Op::Tick),
        1 => Just(Op::Close),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 128, ..ProptestConfig::default() })]

    /// Nothing vanishes: for each channel, the samples counted in the emitted
    /// closed intervals (`tally.total()`) plus those rejected while no interval
    /// was open (`totals().unplaced`) equal the samples pushed; every gap adds
    /// exactly `count * samples_per_interval` to the possible samples of the
    /// running recovery; and closed intervals and gaps tile the timeline, each
    /// interval reported once, in order.
    #[test]
    fn every_sample_and_interval_is_accounted_for(
        start in (Timestamp::MIN.millis()..Timestamp::END.millis()),
        ops in vec(op(), 1..400),
        rows in vec(row(), 1..64),
        samples_per_interval in prop_oneof![Just(600u32), 1u32..=1_200],
    ) {
        let layout = four_channels(ten_minutes(samples_per_interval), 3);
        let mut station: Station<4, G> = Station::new(layout);
        let spi = u64::from(samples_per_interval);
        let mut now = start;
        let mut pushed = 0u64;
        let mut counted = [0u64; 4];
        let mut closed_possible = [0u64; 4];
        let mut gap_possible = 0u64;
        let mut next_index: Option<i64> = None;
        let mut tiling: Result<(), String> = Ok(());
        {
            let mut on_event = |e: Event<'_, 4, G>| {
                let (first, count) = match e {
                    Event::Closed(acc, _) => {
                        for (ch, counted) in counted.iter_mut().enumerate() {
                            *counted += acc.tally(ch).unwrap().total();
                            closed_possible[ch] += u64::from(layout.finish(acc, ch).unwrap().n_possible);
                        }
                        (acc.index(), 1u64)
                    }
                    Event::Gap(g) => {
                        gap_possible += g.count * spi;
                        if g.count == 0 {
                            tiling = Err("empty gap".into());
                        }
                        (g.first, g.count)
                    }
                };
                if next_index.is_some_and(|n| n != first) {
                    tiling = Err(format!("interval {first} reported, {next_index:?} expected"));
                }
                next_index = Some(first + count as i64);
            };
            for (i, op) in ops.iter().enumerate() {
                let r = &rows[i % rows.len()];
                let t = match op {
                    Op::Forward(ms) => {
                        now = now.saturating_add(*ms);
                        Some(now)
                    }
                    Op::Duplicate => Some(now),
                    Op::Backward(ms) => Some(now.saturating_sub(*ms)),
                    Op::Unsupported(t) => Some(*t),
                    Op::Tick(ms) => {
                        station.tick(Timestamp::from_millis(now.saturating_add(*ms)), &mut on_event);
                        None
                    }
                    Op::Close => {
                        station.close(&mut on_event);
                        None
                    }
                };
                if let Some(t) = t {
                    station.push(Timestamp::from_millis(t), r, &mut on_event);
                    pushed += 1;
                }
            }
            station.close(&mut on_event);
        }
        tiling.map_err(TestCaseError::fail)?;
        let totals = *station.totals();
        prop_assert_eq!(totals.pushed(), pushed);
        for ch in 0..4 {
            prop_assert_eq!(counted[ch] + totals.unplaced, pushed, "channel {}", ch);
            let rec = station.recovery()[ch].since_start();
            prop_assert_eq!(rec.possible, closed_possible[ch] + gap_possible, "channel {}", ch);
            prop_assert_eq!(
                rec.valid + rec.missing + rec.out_of_range + rec.rejected + rec.flagged + rec.excluded,
                counted[ch]
            );
        }
    }
}

/// A jump of 1000 years is one gap, reported at once: one `Gap` event whose
/// count is the exact number of 10-minute intervals in between (the Gregorian
/// calendar has 365,243 days from 2000-01-01 to 3000-01-01: 1000 * 365 plus 243
/// leap years, common practice), added to the possible samples in one step.
/// There is no timing assertion (speed is for the benchmark); the second part
/// shows there is no per-interval loop: with 1-second intervals from the year
/// 0000 to 9999 a loop would visit 3.2e11 intervals, far more than the test
/// could ever finish.
#[test]
fn long_jumps_are_one_gap() {
    let layout = four_channels(ten_minutes(600), 3);
    let mut station: Station<4, G> = Station::new(layout);
    let row = [
        Reading::Value(5.0),
        Reading::Value(90.0),
        Reading::Value(90.0),
        Reading::Value(10.0),
    ];
    let mut gaps = Vec::new();
    let mut closed = 0;
    for t in [utc(2000, 1, 1, 0, 0, 0), utc(3000, 1, 1, 0, 0, 0)] {
        station.push(t, &row, |e| match e {
            Event::Gap(g) => gaps.push(g),
            Event::Closed(..) => closed += 1,
        });
    }
    let intervals = 365_243u64 * 144;
    assert_eq!(closed, 1);
    assert_eq!(gaps.len(), 1);
    assert_eq!(gaps[0].count, intervals - 1);
    // The closed first interval plus the gap; the last interval is still open.
    assert_eq!(
        station.recovery()[SPEED].since_start().possible,
        intervals * 600
    );

    let cfg = StationConfig {
        interval_s: 1,
        samples_per_interval: 1,
        ..StationConfig::ten_minute_1hz()
    };
    let layout = Layout::new::<1>(cfg, &[ChannelConfig::scalar(0.1)]).unwrap();
    let mut station: Station<1, 1> = Station::new(layout);
    let mut gaps = Vec::new();
    let (first, last) = (utc(0, 1, 1, 0, 0, 0), utc(9999, 12, 31, 23, 59, 59));
    for t in [first, last] {
        station.push(t, &[Reading::Value(1.0)], |e| {
            if let Event::Gap(g) = e {
                gaps.push(g);
            }
        });
    }
    let seconds = (last.millis() - first.millis()) / 1000;
    assert_eq!(gaps.len(), 1);
    assert_eq!(gaps[0].count, (seconds - 1) as u64);
    assert_eq!(station.recovery()[0].since_start().possible, seconds as u64);
}
