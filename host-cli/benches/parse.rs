//! The row-parsing hot path of `tenmin replay` against the core's push, on one
//! generated day of 1 Hz samples from a demo-like station (6 channels): how
//! many MB/s of CSV the reader alone, the core alone, and both together
//! manage on one thread. `cargo bench -p host-cli --bench parse`.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use qc_core::{ChannelRecord, Reading, Timestamp};

use host_cli::engine::Sink;
use host_cli::samples::{Parser, Records};
use host_cli::{config, engine, samples};

const STATION: &str = r#"
[logging]
sample_rate_hz = 1

[[channel]]
id = "ws80a"
kind = "speed"
resolution = 0.01

[channel.screen]
partner = "ws80b"
icing = { temperature = "t76", humidity = "rh76" }

[[channel]]
id = "ws80b"
kind = "speed"
resolution = 0.01

[[channel]]
id = "ws60"
kind = "speed"
resolution = 0.01

[[channel]]
id = "wd78"
kind = "direction"
slope = 0.1
offset_deg = 4
speed_channel = "ws80a"

[[channel]]
id = "t76"
kind = "scalar"
range = [-40, 50]
resolution = 0.1

[[channel]]
id = "rh76"
kind = "scalar"
range = [0, 100]
resolution = 0.1
"#;

/// One day of rows, 2025-01-20 (1737331200 s, POSIX time), with a few empty fields.
fn day() -> Vec<u8> {
    let mut x = 1u64;
    let mut rnd = |n: u64| {
        x = x
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (x >> 33) % n
    };
    let mut out = String::from("time,ws80a,ws80b,ws60,wd78,t76,rh76\n");
    for s in 0..86_400u64 {
        let ws = 300 + rnd(900);
        let ws2 = if rnd(30) == 0 {
            String::new()
        } else {
            format!("{:.2}", (ws + rnd(20)) as f64 / 100.0)
        };
        out.push_str(&format!(
            "2025-01-20T{:02}:{:02}:{:02}Z,{:.2},{ws2},{:.2},{},{:.1},{:.1}\n",
            s / 3600,
            s / 60 % 60,
            s % 60,
            ws as f64 / 100.0,
            (ws - 40 + rnd(30)) as f64 / 100.0,
            rnd(3600),
            (rnd(200) as f64 - 50.0) / 10.0,
            (600 + rnd(400)) as f64 / 10.0,
        ));
    }
    out.into_bytes()
}

struct Null;

impl Sink for Null {
    fn interval(&mut self, _: Timestamp, _: Timestamp, r: &[ChannelRecord]) -> anyhow::Result<()> {
        black_box(r);
        Ok(())
    }
}

fn bench(c: &mut Criterion) {
    let cfg = config::parse(Path::new("station.toml"), STATION).unwrap();
    let bytes = day();
    let n = cfg.channels.len();
    let mut recs = Records::new(&bytes, 1);
    let (hl, h) = recs.next().unwrap();
    let parser = Parser::new(Path::new("day.csv"), hl, samples::split_fields(h), &cfg).unwrap();
    let body = &bytes[recs.pos()..];

    // Every row parsed once, for the core alone.
    let mut rows: Vec<(Timestamp, Vec<Reading>)> = Vec::new();
    {
        let (mut p, mut readings, mut commas) =
            (parser.clone(), vec![Reading::Missing; n], Vec::new());
        let mut recs = Records::new(body, 2);
        while let Some((_, t)) = recs.next_row(&mut p, &mut readings, &mut commas) {
            rows.push((t.unwrap(), readings.clone()));
        }
    }

    let mut g = c.benchmark_group("one day, 1 Hz, 6 channels");
    g.throughput(Throughput::Bytes(body.len() as u64));
    g.sample_size(20);
    g.bench_function("parse rows", |b| {
        b.iter(|| {
            let (mut p, mut readings, mut commas) =
                (parser.clone(), vec![Reading::Missing; n], Vec::new());
            let mut recs = Records::new(body, 2);
            let mut sum = 0i64;
            while let Some((_, t)) = recs.next_row(&mut p, &mut readings, &mut commas) {
                sum = sum.wrapping_add(t.map_or(0, |t| t.millis()));
                black_box(&readings);
            }
            sum
        })
    });
    g.bench_function("core push (rows parsed beforehand)", |b| {
        b.iter(|| {
            let mut sink = Null;
            let mut station = engine::new(&cfg, &mut sink).unwrap();
            for (t, r) in &rows {
                station.push(*t, r).unwrap();
            }
            station.close().unwrap();
        })
    });
    g.bench_function("parse and push", |b| {
        b.iter(|| {
            let mut sink = Null;
            let mut station = engine::new(&cfg, &mut sink).unwrap();
            let (mut p, mut readings, mut commas) =
                (parser.clone(), vec![Reading::Missing; n], Vec::new());
            let mut recs = Records::new(body, 2);
            while let Some((_, t)) = recs.next_row(&mut p, &mut readings, &mut commas) {
                station.push(t.unwrap(), &readings).unwrap();
            }
            station.close().unwrap();
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
