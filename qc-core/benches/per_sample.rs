//! Per-sample and per-interval cost of `qc-core` on the host.
//!
//! Run:
//!
//! ```text
//! cargo bench -p qc-core --bench per_sample
//! # quicker, less precise:
//! cargo bench -p qc-core --bench per_sample -- --warm-up-time 1 --measurement-time 2
//! ```
//!
//! The station has one channel of each kind: speed (0.01 m/s, 3-sample gust),
//! a direction linked to it (speed-weighted resultant), a direction alone and a
//! scalar (0.1). Readings are a realistic 1 Hz series (speeds around 8 m/s,
//! directions crossing north, a few missing values), as engineering values
//! (`Reading::Value`) or as raw counts (`Reading::Counts`).
//!
//! - `push/station/*`: one `Station::push` of all four channels at 1 Hz, with
//!   the close of every 600th sample's interval included (amortised).
//! - `push/interval/*`: one `IntervalAcc::push` inside an open interval (no
//!   interval ever closes): the steady-state per-sample cost.
//! - `finish/*`: finishing one channel of a full 600-sample interval
//!   (`Layout::finish`: the only floating point, `sqrt`, `atan2`, `asin`).
//! - `close/station`: `Station::close` of a full interval (finishing and
//!   screening all four channels, updating recovery, handing it out).
//!
//! These are host numbers; on a Cortex-M0 without an FPU, `Reading::Value` adds
//! a software division and rounding per sample and `finish` a few software
//! `f64` operations (see the crate docs).

use std::hint::black_box;
use std::time::{Duration, Instant};

use criterion::{criterion_group, criterion_main, BatchSize, Criterion};
use qc_core::{ChannelConfig, IntervalAcc, Layout, Reading, Station, StationConfig, Timestamp};

const C: usize = 4;
const G: usize = 3;
/// Interval 2,833,333: 2023-11-14T22:10Z, on a 10-minute boundary.
const INDEX: i64 = 2_833_333;
const T0: i64 = INDEX * 600_000;

fn layout() -> Layout<C> {
    Layout::new::<G>(
        StationConfig::ten_minute_1hz(),
        &[
            ChannelConfig::speed(0.01),
            ChannelConfig::direction().with_speed_channel(0),
            ChannelConfig::direction(),
            ChannelConfig::scalar(0.1).with_range(-50.0, 60.0),
        ],
    )
    .expect("valid layout")
}

/// 600 rows of a 1 Hz series, as counts; `as_values` turns them into
/// engineering values.
fn rows(as_values: bool) -> Vec<[Reading; C]> {
    let mut state = 0x2545_F491_4F6C_DD1Du64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let (mut speed, mut dir, mut temp) = (800i32, 35_000i32, 125i32);
    (0..600)
        .map(|i| {
            speed = (speed + (next() * 60.0) as i32 - 30).clamp(0, 4_000);
            dir = (dir + (next() * 1_200.0) as i32 - 600).rem_euclid(36_000);
            temp = (temp + (next() * 3.0) as i32 - 1).clamp(-500, 600);
            let counts = [speed, dir, (dir + 150) % 36_000, temp];
            core::array::from_fn(|ch| {
                if i % 97 == ch as i32 {
                    Reading::Missing
                } else if as_values {
                    let per_unit = [100.0, 100.0, 100.0, 10.0][ch];
                    Reading::Value(f64::from(counts[ch]) / per_unit)
                } else {
                    Reading::Counts(counts[ch])
                }
            })
        })
        .collect()
}

fn full_interval(layout: &Layout<C>, rows: &[[Reading; C]]) -> IntervalAcc<C, G> {
    let mut acc = IntervalAcc::new(layout, INDEX);
    for (i, r) in rows.iter().enumerate() {
        acc.push(layout, Timestamp::from_millis(T0 + i as i64 * 1000), r);
    }
    acc
}

fn push(c: &mut Criterion) {
    let layout = layout();
    let mut group = c.benchmark_group("push");
    for (name, as_values) in [("value", true), ("counts", false)] {
        let rows = rows(as_values);
        group.bench_function(format!("station/{name}"), |b| {
            let mut station: Station<C, G> = Station::new(layout);
            let mut i = 0usize;
            b.iter(|| {
                let t = Timestamp::from_millis(T0 + i as i64 * 1000);
                let pushed = station.push(t, &rows[i % rows.len()], |e| {
                    black_box(e);
                });
                i += 1;
                black_box(pushed)
            });
        });
        group.bench_function(format!("interval/{name}"), |b| {
            b.iter_custom(|iters| {
                let mut acc = IntervalAcc::<C, G>::new(&layout, INDEX);
                let mut total = Duration::ZERO;
                let mut done = 0u64;
                while done < iters {
                    let n = (iters - done).min(rows.len() as u64) as usize;
                    let start = Instant::now();
                    for (j, r) in rows[..n].iter().enumerate() {
                        acc.push(&layout, Timestamp::from_millis(T0 + j as i64 * 1000), r);
                    }
                    total += start.elapsed();
                    black_box(&acc);
                    acc = IntervalAcc::new(&layout, INDEX);
                    done += n as u64;
                }
                total
            });
        });
    }
    group.finish();
}

fn finish(c: &mut Criterion) {
    let layout = layout();
    let acc = full_interval(&layout, &rows(true));
    let mut group = c.benchmark_group("finish");
    for (ch, name) in ["speed", "linked_direction", "direction", "scalar"]
        .into_iter()
        .enumerate()
    {
        group.bench_function(name, |b| {
            b.iter(|| black_box(layout.finish(black_box(&acc), ch)));
        });
    }
    group.finish();

    // A station holding one full open interval, closed afresh each iteration.
    let mut station: Station<C, G> = Station::new(layout);
    for (i, r) in rows(true).iter().enumerate() {
        station.push(Timestamp::from_millis(T0 + i as i64 * 1000), r, |_| {});
    }
    c.bench_function("close/station", |b| {
        b.iter_batched(
            || station.clone(),
            |mut s| {
                s.close(|e| {
                    black_box(e);
                });
                s
            },
            BatchSize::SmallInput,
        );
    });
}

criterion_group!(benches, push, finish);
criterion_main!(benches);
