//! Differential test: the streaming, integer `qc-core` against the plain
//! two-pass `f64` reference (`tenmin_tests::reference`), on random realistic
//! wind series: random-walk speeds with dropouts and bad readings, vane values
//! that cross north again and again, a thermometer, jittered 1 Hz sampling with
//! time gaps, several 10-minute intervals per series, fed through a `Station`.
//!
//! Each tolerance is written beside its assertion with the reason for it. The
//! two sides differ in how they compute, not in what: the core sums integer
//! quanta exactly and rounds once at the end; the reference adds `f64` values
//! and rounds at every step; the core's unit vectors come from Q30 tables
//! within 2^-29 of the true `(sin, cos)` (checked below over the whole
//! 0.01-degree grid), the reference's from `f64::sin_cos`.

use proptest::prelude::*;
use qc_core::angle::{sin_cos_cd, ONE_Q30};
use qc_core::{Absent, ChannelRecord, Event, Reading, Stat, Station, Timestamp};
use tenmin_tests::reference::{self, Cadence};
use tenmin_tests::support::{
    four_channels, mean_direction_band_deg, reading, sigma_band_deg, ten_minutes, value, SplitMix,
    CD_PER_DEG, G, LINKED, SCALAR, SCALAR_PER_UNIT, SPEED, SPEED_PER_UNIT, TABLE_VECTOR_ERROR,
    VANE,
};

const INTERVAL_MS: i64 = 600_000;
const CADENCE: Cadence = Cadence {
    interval_ms: INTERVAL_MS,
    samples_per_interval: 600,
};

/// What a generated reading really is, for the reference.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Truth {
    /// A valid value in engineering units.
    Valid(f64),
    Missing,
    OutOfRange,
}

/// One generated sample: time, the readings fed to the core, their truth.
struct Sample {
    t: i64,
    readings: [Reading; 4],
    truth: [Truth; 4],
}

/// Turns quanta into a reading (value or counts), or spoils it now and then:
/// missing (absent, NaN, a missing-value code) or out of range.
fn observe(
    rng: &mut SplitMix,
    q: i64,
    per_unit: f64,
    dropout: bool,
    bad_hi: f64,
) -> (Reading, Truth) {
    if dropout || rng.chance(0.015) {
        let r = match rng.range(0, 3) {
            0 => Reading::Missing,
            1 => Reading::Value(f64::NAN),
            2 => Reading::Value(-9999.0),
            _ => Reading::Counts(-999),
        };
        return (r, Truth::Missing);
    }
    if rng.chance(0.004) {
        let r = if rng.chance(0.5) {
            Reading::Value(bad_hi + rng.unit() * 100.0 + 0.01)
        } else {
            Reading::Counts((bad_hi * per_unit) as i32 + 1 + rng.range(0, 1000) as i32)
        };
        return (r, Truth::OutOfRange);
    }
    (
        reading(q, per_unit, rng.chance(0.5)),
        Truth::Valid(q as f64 / per_unit),
    )
}

/// A realistic random series of `len` samples starting somewhere inside an
/// interval, so the first and last intervals are partial.
fn series(seed: u64, len: usize) -> Vec<Sample> {
    let mut rng = SplitMix(seed);
    let mut t = rng.range(2_000_000, 3_000_000) * INTERVAL_MS + rng.range(0, INTERVAL_MS - 1);
    let mut speed = rng.unit() * 15.0;
    let mut dir = 340.0 + rng.unit() * 40.0; // start near north
    let mut temp = -10.0 + rng.unit() * 40.0;
    let mut dropout = [0u32; 4];
    let mut out = Vec::with_capacity(len);
    for i in 0..len {
        if i > 0 {
            t += if rng.chance(0.01) {
                rng.range(1_501, 120_000) // a logger pause: a gap that breaks gust runs
            } else if rng.chance(0.05) {
                rng.range(600, 1_500) // clock jitter, not a gap
            } else {
                1_000
            };
        }
        // Speed: a random walk (sum of uniforms is near-normal), reflected at 0.
        let step: f64 = (0..4).map(|_| rng.unit() - 0.5).sum::<f64>() * 0.6;
        speed = (speed + step).abs().min(40.0);
        // Direction: a random walk with occasional large swings, wrapping at north.
        let swing = if rng.chance(0.02) { 60.0 } else { 6.0 };
        dir = (dir + (rng.unit() - 0.5) * swing).rem_euclid(360.0);
        temp = (temp + (rng.unit() - 0.5) * 0.2).clamp(-49.0, 59.0);
        for d in &mut dropout {
            if *d > 0 {
                *d -= 1;
            } else if rng.chance(0.002) {
                *d = rng.range(3, 40) as u32;
            }
        }
        let q_speed = (speed * SPEED_PER_UNIT).round() as i64;
        let cd = (dir * CD_PER_DEG).round() as i64 % 36_000;
        // The second vane reads the same wind a little differently.
        let cd2 = (cd + rng.range(-300, 300)).rem_euclid(36_000);
        let q_temp = (temp * SCALAR_PER_UNIT).round() as i64;
        let (r0, t0) = observe(&mut rng, q_speed, SPEED_PER_UNIT, dropout[0] > 0, 75.0);
        let (r1, t1) = observe(&mut rng, cd, CD_PER_DEG, dropout[1] > 0, 360.0);
        let (r2, t2) = observe(&mut rng, cd2, CD_PER_DEG, dropout[2] > 0, 360.0);
        let (r3, t3) = observe(&mut rng, q_temp, SCALAR_PER_UNIT, dropout[3] > 0, 60.0);
        out.push(Sample {
            t,
            readings: [r0, r1, r2, r3],
            truth: [t0, t1, t2, t3],
        });
    }
    out
}

/// Checks one closed interval of the core against the reference computed
/// from the samples that fall in it.
fn check_interval(
    records: &[ChannelRecord; 4],
    samples: &[&Sample],
    w: usize,
) -> Result<(), String> {
    let valid = |ch: usize| -> Vec<f64> {
        samples
            .iter()
            .filter_map(|s| match s.truth[ch] {
                Truth::Valid(v) => Some(v),
                _ => None,
            })
            .collect()
    };
    let check = |ok: bool, what: String| if ok { Ok(()) } else { Err(what) };
    for (ch, r) in records.iter().enumerate() {
        let count =
            |t: fn(&Truth) -> bool| samples.iter().filter(|s| t(&s.truth[ch])).count() as u32;
        // Tallies: exact counts.
        check(
            r.tally.valid == count(|t| matches!(t, Truth::Valid(_))),
            format!("ch {ch} valid {:?}", r.tally),
        )?;
        check(
            r.tally.missing == count(|t| *t == Truth::Missing),
            format!("ch {ch} missing {:?}", r.tally),
        )?;
        check(
            r.tally.out_of_range == count(|t| *t == Truth::OutOfRange),
            format!("ch {ch} oor {:?}", r.tally),
        )?;
    }

    for ch in [SPEED, SCALAR] {
        let r = &records[ch];
        let xs = valid(ch);
        let Some(m_ref) = reference::mean(&xs) else {
            check(
                r.mean == Stat::Absent(Absent::NoValidSamples),
                format!("ch {ch}: {r:?}"),
            )?;
            continue;
        };
        let (mean, sd) = (value(r.mean, "mean"), value(r.sd, "sd"));
        let sd_ref = reference::sd_population(&xs).unwrap();
        // Mean: the core divides an exact integer sum once; the reference adds up
        // to 600 rounded f64 terms (relative error below 600 * 2^-53 = 7e-14).
        check(
            (mean - m_ref).abs() <= 1e-12 * m_ref.abs().max(1.0),
            format!("ch {ch} mean {mean} vs {m_ref}"),
        )?;
        // SD: the core forms n*sum(q^2) - sum(q)^2 exactly; the reference's two
        // passes carry the rounding of its mean (about 1e-16 of the values' size)
        // into every deviation, so the error scales with |mean|, not with sd.
        check(
            (sd - sd_ref).abs() <= 1e-12 * (m_ref.abs() + sd_ref),
            format!("ch {ch} sd {sd} vs {sd_ref}"),
        )?;
        // Min and max: both sides hold the same decimal value q / per_unit,
        // correctly rounded: bit for bit.
        check(
            value(r.min, "min").to_bits() == reference::min(&xs).unwrap().to_bits(),
            format!("ch {ch} min"),
        )?;
        check(
            value(r.max, "max").to_bits() == reference::max(&xs).unwrap().to_bits(),
            format!("ch {ch} max"),
        )?;
        if ch == SPEED {
            let timed: Vec<(i64, Option<f64>)> = samples
                .iter()
                .map(|s| match s.truth[ch] {
                    Truth::Valid(v) => (s.t, Some(v)),
                    _ => (s.t, None),
                })
                .collect();
            match (r.gust, reference::gust(&timed, w, CADENCE)) {
                // Gust: an exact window sum divided once, against w rounded f64
                // additions and a division: relative 1e-12 is generous.
                (Stat::Value(g), Some(g_ref)) => check(
                    (g - g_ref).abs() <= 1e-12 * g_ref.max(1.0),
                    format!("gust {g} vs {g_ref} (w {w})"),
                )?,
                (Stat::Absent(Absent::NoFullWindow), None) => {}
                (g, g_ref) => return Err(format!("gust {g:?} vs {g_ref:?} (w {w})")),
            }
            if m_ref > 0.01 {
                // TI = sd / mean: the error of sd (above) divided by the mean.
                let ti = value(r.ti, "ti");
                let tol = 1e-12 * (m_ref.abs() + sd_ref) / m_ref + 1e-15;
                check(
                    (ti - sd_ref / m_ref).abs() <= tol,
                    format!("ti {ti} vs {}", sd_ref / m_ref),
                )?;
            }
        }
    }

    for ch in [LINKED, VANE] {
        let r = &records[ch];
        let dirs = valid(ch);
        let Some(d) = reference::direction_stats(&dirs) else {
            check(
                r.mean == Stat::Absent(Absent::NoValidSamples),
                format!("ch {ch}: {r:?}"),
            )?;
            continue;
        };
        let rl = d.resultant_length;
        // Mean resultant length: the core's mean vector is within 2^-29 of the
        // true one (table bound), the reference's within about 1e-16.
        let len = value(r.resultant_length, "resultant length");
        check(
            (len - rl).abs() <= TABLE_VECTOR_ERROR + 1e-12,
            format!("ch {ch} R {len} vs {rl}"),
        )?;
        // Mean direction: 1e-6 degrees, or the band that a 2^-29 error in the
        // mean vector allows when R is small (asin(delta / (R - delta))).
        let tol = 1e-6f64.max(mean_direction_band_deg(rl, TABLE_VECTOR_ERROR));
        match r.mean {
            Stat::Value(m) => check(
                reference::angle_between_deg(m, d.mean_deg) <= tol,
                format!("ch {ch} mean dir {m} vs {} (R {rl})", d.mean_deg),
            )?,
            other => check(
                rl <= 1e-6 + TABLE_VECTOR_ERROR,
                format!("ch {ch} mean {other:?}, R {rl}"),
            )?,
        }
        // Sigma-theta: 1e-6 degrees, or the band of Yamartino's formula over
        // R +/- 2^-29 (wide only near zero spread and where vectors cancel).
        let sigma = value(r.sd, "sigma");
        let tol = 1e-6f64.max(sigma_band_deg(rl, TABLE_VECTOR_ERROR));
        check(
            (sigma - d.sigma_deg).abs() <= tol,
            format!("ch {ch} sigma {sigma} vs {} (R {rl})", d.sigma_deg),
        )?;
    }

    // Speed-weighted resultant (EPA-454/R-99-005 sec. 6.2.2) over the samples
    // where the linked speed and direction are both valid.
    let pairs: Vec<(f64, f64)> = samples
        .iter()
        .filter_map(|s| match (s.truth[SPEED], s.truth[LINKED]) {
            (Truth::Valid(u), Truth::Valid(d)) => Some((u, d)),
            _ => None,
        })
        .collect();
    let r = &records[LINKED];
    match reference::resultant(&pairs) {
        None => check(
            r.tally.valid == 0 || r.resultant_speed == Stat::Absent(Absent::NoPairs),
            format!("resultant {r:?}"),
        )?,
        Some(v) => {
            // The core's resultant is within mean(u) * 2^-29 of the true vector;
            // as a share of mean(u) it behaves like a mean resultant length.
            let mean_u = pairs.iter().map(|p| p.0).sum::<f64>() / pairs.len() as f64;
            let speed = value(r.resultant_speed, "resultant speed");
            let tol = mean_u * TABLE_VECTOR_ERROR + 1e-12 * mean_u.max(1.0);
            check(
                (speed - v.speed).abs() <= tol,
                format!("resultant speed {speed} vs {}", v.speed),
            )?;
            if mean_u > 0.0 {
                let rho = v.speed / mean_u;
                let tol = 1e-6f64.max(mean_direction_band_deg(rho, TABLE_VECTOR_ERROR));
                match r.resultant_direction {
                    Stat::Value(dir) => check(
                        reference::angle_between_deg(dir, v.direction_deg) <= tol,
                        format!("resultant dir {dir} vs {} (rho {rho})", v.direction_deg),
                    )?,
                    other => check(v.speed <= 1e-6 + tol, format!("resultant dir {other:?}"))?,
                }
            }
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    /// Every closed interval of a random realistic series matches the reference.
    #[test]
    fn core_matches_the_two_pass_reference(
        seed in any::<u64>(),
        len in 700usize..=2_400,
        w in 1u16..=4,
    ) {
        let samples = series(seed, len);
        let layout = four_channels(ten_minutes(600), w);
        let mut station: Station<4, G> = Station::new(layout);
        let mut closed: Vec<(i64, [ChannelRecord; 4])> = Vec::new();
        let mut on_event = |e: Event<'_, 4, G>| {
            if let Event::Closed(acc, _) = e {
                closed.push((acc.index(), std::array::from_fn(|ch| layout.finish(acc, ch).unwrap())));
            }
        };
        for s in &samples {
            station.push(Timestamp::from_millis(s.t), &s.readings, &mut on_event);
        }
        station.close(&mut on_event);
        prop_assert!(closed.len() >= 2);
        for (index, records) in &closed {
            let inside: Vec<&Sample> = samples
                .iter()
                .filter(|s| s.t.div_euclid(INTERVAL_MS) == *index)
                .collect();
            if let Err(e) = check_interval(records, &inside, usize::from(w)) {
                return Err(TestCaseError::fail(format!("seed {seed}, interval {index}: {e}")));
            }
        }
    }
}

/// The premise of the direction tolerances above: every unit vector of the
/// core's Q30 tables, over the whole 0.01-degree grid, lies within 2^-29 of
/// `(sin, cos)` from Rust's `f64` math.
#[test]
fn table_vectors_are_within_the_stated_bound() {
    let mut worst = 0.0f64;
    for cd in 0..36_000 {
        let (s, c) = sin_cos_cd(cd);
        let (ts, tc) = (f64::from(cd) / 100.0).to_radians().sin_cos();
        let e = (s as f64 / ONE_Q30 as f64 - ts).hypot(c as f64 / ONE_Q30 as f64 - tc);
        worst = worst.max(e);
    }
    assert!(worst <= TABLE_VECTOR_ERROR, "worst table error {worst:e}");
}
