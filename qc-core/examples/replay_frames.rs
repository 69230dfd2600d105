//! Host side of the firmware replay check, for the fixed scenario station.
//!
//! ```text
//! cargo run -p qc-core --example replay_frames -- generate DAY.tmsf
//! cargo run -p qc-core --example replay_frames -- replay DAY.tmsf HOST.log
//! cargo run -p qc-core --example replay_frames -- check DAY.tmsf FIRMWARE.log
//! ```
//!
//! - `generate` writes one invented day (2024-01-15, UTC) of 1 Hz samples of the
//!   scenario's 8-channel station as a sample file ([`qc_core::wire`], with the
//!   station configuration in its header): wind with a daily cycle and gusts, a
//!   vane swinging through north, a cold humid morning with a frozen vane,
//!   missing readings, missing-value codes, out-of-range readings, a spike, a
//!   45-minute logger outage, a duplicate and a backward timestamp.
//!   Deterministic: the same bytes every run.
//! - `replay` runs any sample file (this one, or one from `tenmin export`)
//!   through the firmware's replay loop on the host and writes the record log.
//! - `check` does the same in memory and compares the result bit for bit with a
//!   record log written by the firmware. Prints `OK` and exits 0 when they are
//!   identical; otherwise prints each difference and exits 1 (2 on a usage or
//!   file error).
//!
//! The station, the replay loop and the record-writing code are the firmware's
//! own (`firmware-example/src/{scenario,logger,replay}.rs`, included below), so
//! the two cannot drift. Records of a station from a station file are checked
//! with `tenmin decode` and `tenmin verify` instead (`firmware-example/run-checks.sh`).

use std::fs;
use std::process::ExitCode;

use qc_core::wire::{
    self, encode_sample, encode_sample_header, sample_frame_max_len, sample_header_len,
    RecordFrame, Span, FRAME_LEN,
};
use qc_core::{Reading, Stat, Timestamp};

#[allow(dead_code)]
#[path = "../../firmware-example/src/logger.rs"]
mod logger;
#[allow(dead_code, unexpected_cfgs)]
#[path = "../../firmware-example/src/replay.rs"]
mod replay;
#[allow(dead_code)]
#[path = "../../firmware-example/src/scenario.rs"]
mod scenario;

use scenario::CHANNELS;

/// 2024-01-15T00:00:00Z, ms.
const DAY_START: i64 = 1_705_276_800_000;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let result = match args.as_slice() {
        ["generate", out] => generate(out).map(|()| ExitCode::SUCCESS),
        ["replay", samples, out] => replay_to_file(samples, out).map(|()| ExitCode::SUCCESS),
        ["check", samples, log] => check(samples, log),
        _ => Err(
            "usage: replay_frames generate OUT.tmsf | replay SAMPLES.tmsf OUT.log | \
                  check SAMPLES.tmsf FIRMWARE.log"
                .to_string(),
        ),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("replay_frames: {e}");
            ExitCode::from(2)
        }
    }
}

/// A small deterministic generator (xorshift64*, Vigna 2016), so the day is
/// the same on every machine.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }

    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Roughly normal, mean 0, sd 1 (sum of 4 uniforms, scaled).
    fn normal(&mut self) -> f64 {
        ((0..4).map(|_| self.unit()).sum::<f64>() - 2.0) * 3f64.sqrt()
    }
}

/// Rounds to `step` (sensors report at their resolution).
fn at(v: f64, step: f64) -> f64 {
    (v / step).round() * step
}

/// The invented day, in the order the logger would see it.
fn day() -> Vec<(i64, [Reading; CHANNELS])> {
    use scenario::*;
    let mut rng = Rng(0x5EED_F7E4);
    let mut out = Vec::with_capacity(86_500);
    let mut gust = 0.0f64;
    for s in 0..86_400i64 {
        let t = DAY_START + s * 1000;
        let h = s as f64 / 3600.0;
        // A 45-minute logger outage, 02:13:00 to 02:57:59: no samples at all.
        if (7_980..10_680).contains(&s) {
            continue;
        }
        // Wind: a daily cycle, slow gust events and turbulence.
        gust = 0.97 * gust + 0.25 * rng.normal();
        let mean = 7.0 + 3.0 * ((h - 15.0) / 24.0 * std::f64::consts::TAU).cos();
        let u = (mean + gust + 0.6 * rng.normal()).max(0.0);
        let counts = |u: f64| ((u - CUP_OFFSET) / CUP_SLOPE).round().max(0.0) as i32;
        let mut a = Reading::Counts(counts(u));
        // 14:00-15:00 anemometer B reads 12 % low (a failing bearing).
        let b_factor = if (14.0..15.0).contains(&h) { 0.88 } else { 1.0 };
        let mut b = Reading::Counts(counts(u * b_factor + 0.05 * rng.normal()));
        let mut low = Reading::Value(at(0.92 * u + 0.1 * rng.normal(), 0.01).max(0.0));
        // Direction: veering from 300 through north to 40 degrees, with
        // turbulence; frozen 04:00-05:30 (icing) at 317.2 degrees.
        let dir = if (4.0..5.5).contains(&h) {
            317.2
        } else {
            (300.0 + 100.0 * h / 24.0 + 12.0 * rng.normal()).rem_euclid(360.0)
        };
        let vane_counts = (dir / 360.0 * f64::from(VANE_FULL_SCALE)).round() as i32;
        let mut vane = Reading::Counts(vane_counts);
        let temp = 3.0 + 5.0 * ((h - 14.0) / 24.0 * std::f64::consts::TAU).cos()
            - if (3.5..6.0).contains(&h) { 4.0 } else { 0.0 };
        let mut temperature = Reading::Value(at(temp + 0.05 * rng.normal(), 0.01));
        let rh = (92.0 - 12.0 * ((h - 14.0) / 24.0 * std::f64::consts::TAU).cos()).min(99.0);
        let mut humidity = Reading::Value(at(rh + 0.3 * rng.normal(), 0.1));
        let pressure = Reading::Value(at(1_008.0 + 4.0 * h / 24.0 + 0.05 * rng.normal(), 0.1));
        let solar = if (8.0..16.0).contains(&h) { 1.2 } else { 0.0 };
        let mut battery = Reading::Value(at(12.4 + solar - 0.01 * h, 0.001));

        // Missing readings (about 0.5 %) and missing-value codes.
        if rng.unit() < 0.005 {
            low = Reading::Missing;
        }
        if rng.unit() < 0.002 {
            temperature = Reading::Value(-999.0);
        }
        if s % 5_000 == 17 {
            b = Reading::Counts(-9999);
            battery = Reading::Value(-9999.0);
        }
        if s % 7_200 == 3_600 {
            humidity = Reading::Value(f64::NAN);
        }
        // Out of range: humidity above 100 %, a vane count past full scale, a
        // lower anemometer reading of 80 m/s.
        if (20_000..20_040).contains(&s) {
            humidity = Reading::Value(103.5);
        }
        if s == 30_001 {
            vane = Reading::Counts(VANE_FULL_SCALE + 500);
        }
        if s == 45_678 {
            low = Reading::Value(80.0);
        }
        // A one-sample spike on anemometer A (+14 m/s).
        if s == 50_005 {
            if let Reading::Counts(k) = a {
                a = Reading::Counts(k + 286);
            }
        }
        out.push((
            t,
            [a, b, low, vane, temperature, humidity, pressure, battery],
        ));
        // A duplicate timestamp at 09:00:00 and a sample 3 s backward at 11:00:05.
        if s == 32_400 {
            out.push((t, [Reading::Counts(1); CHANNELS]));
        }
        if s == 39_605 {
            out.push((t - 3_000, [Reading::Missing; CHANNELS]));
        }
    }
    out
}

fn generate(path: &str) -> Result<(), String> {
    let samples = day();
    let mut file = vec![0u8; sample_header_len(CHANNELS)];
    encode_sample_header(&scenario::station(), &scenario::channels(), &mut file)
        .map_err(|e| format!("encoding the header: {e}"))?;
    let mut buf = [0u8; sample_frame_max_len(CHANNELS)];
    for (t, r) in &samples {
        let n = encode_sample(Timestamp::from_millis(*t), r, &mut buf)
            .map_err(|e| format!("encoding the sample at {t} ms: {e}"))?;
        file.extend_from_slice(&buf[..n]);
    }
    fs::write(path, &file).map_err(|e| format!("{path}: {e}"))?;
    println!(
        "generate: {} samples, {} bytes to {path}",
        samples.len(),
        file.len()
    );
    Ok(())
}

/// A sample file held in memory, read the way the firmware reads its file.
struct Bytes<'a>(&'a [u8]);

impl replay::Source for Bytes<'_> {
    type Error = std::convert::Infallible;
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, Self::Error> {
        let n = buf.len().min(self.0.len());
        buf[..n].copy_from_slice(&self.0[..n]);
        self.0 = &self.0[n..];
        Ok(n)
    }
}

/// The record log in memory.
struct Log(Vec<u8>);

impl replay::Sink for Log {
    type Error = std::convert::Infallible;
    fn write_frame(&mut self, frame: &[u8; FRAME_LEN]) -> Result<(), Self::Error> {
        self.0.extend_from_slice(frame);
        Ok(())
    }
}

/// Replays a sample file through the firmware's replay loop; returns the record log.
fn replay(path: &str) -> Result<Vec<u8>, String> {
    let bytes = fs::read(path).map_err(|e| format!("{path}: {e}"))?;
    let mut layouts = Box::new(replay::ReplayLayoutSlot::new());
    let mut slot = Box::new(replay::ReplaySlot::new());
    let mut log = Log(Vec::new());
    replay::replay(&mut Bytes(&bytes), &mut log, &mut layouts, &mut slot)
        .map_err(|e| format!("{path}: {e}"))?;
    Ok(log.0)
}

fn replay_to_file(samples: &str, out: &str) -> Result<(), String> {
    let log = replay(samples)?;
    fs::write(out, &log).map_err(|e| format!("{out}: {e}"))?;
    println!("replay: {} frames to {out}", log.len() / FRAME_LEN);
    Ok(())
}

fn frames_of(log: &[u8], path: &str) -> Result<Vec<RecordFrame>, String> {
    let mut frames = Vec::new();
    for span in wire::scan(log) {
        match span {
            Span::Frame { frame, .. } => frames.push(frame),
            Span::State { offset, .. } => {
                return Err(format!(
                    "{path}: a state frame at byte {offset}, not a record"
                ))
            }
            Span::Damaged { offset, len } | Span::Torn { offset, len } => {
                return Err(format!("{path}: {len} damaged bytes at byte {offset}"))
            }
            Span::Erased { offset, len } => {
                return Err(format!("{path}: {len} erased bytes at byte {offset}"))
            }
        }
    }
    Ok(frames)
}

fn stat_bits(s: Stat) -> String {
    match s {
        Stat::Value(v) => format!("{v:?} ({:#018x})", v.to_bits()),
        Stat::Absent(a) => a.name().to_string(),
    }
}

/// The fields in which two frames differ, bit for bit.
fn differences(a: &RecordFrame, b: &RecordFrame) -> Vec<String> {
    let mut d = Vec::new();
    let mut field = |name: &str, x: String, y: String| {
        if x != y {
            d.push(format!("{name}: host {x}, firmware {y}"));
        }
    };
    field("sequence", a.sequence.to_string(), b.sequence.to_string());
    field(
        "interval_start",
        a.interval_start.millis().to_string(),
        b.interval_start.millis().to_string(),
    );
    field("channel", a.channel.to_string(), b.channel.to_string());
    let (r, s) = (&a.record, &b.record);
    field("kind", format!("{:?}", r.kind), format!("{:?}", s.kind));
    field(
        "n_possible",
        r.n_possible.to_string(),
        s.n_possible.to_string(),
    );
    field("tally", format!("{:?}", r.tally), format!("{:?}", s.tally));
    field("spikes", r.spikes.to_string(), s.spikes.to_string());
    field("flags", r.flags.to_string(), s.flags.to_string());
    let stats = |r: &qc_core::ChannelRecord| {
        [
            r.mean,
            r.sd,
            r.min,
            r.max,
            r.gust,
            r.ti,
            r.resultant_length,
            r.resultant_speed,
            r.resultant_direction,
        ]
    };
    for ((name, x), y) in wire::STAT_ORDER.iter().zip(stats(r)).zip(stats(s)) {
        field(name, stat_bits(x), stat_bits(y));
    }
    d
}

fn check(samples: &str, log_path: &str) -> Result<ExitCode, String> {
    let host = replay(samples)?;
    let firmware = fs::read(log_path).map_err(|e| format!("{log_path}: {e}"))?;
    let fw_frames = frames_of(&firmware, log_path)?;
    let host_frames = frames_of(&host, "host replay")?;
    if host == firmware {
        println!(
            "check: OK, {log_path}: {} frames, bit-identical to the host replay of {samples}",
            fw_frames.len()
        );
        return Ok(ExitCode::SUCCESS);
    }
    let mut shown = 0;
    if host_frames.len() != fw_frames.len() {
        println!(
            "check: host wrote {} frames, firmware {}",
            host_frames.len(),
            fw_frames.len()
        );
    }
    for (i, (a, b)) in host_frames.iter().zip(&fw_frames).enumerate() {
        let d = differences(a, b);
        if !d.is_empty() {
            shown += 1;
            if shown <= 20 {
                println!(
                    "check: frame {i} (byte {}), interval {} channel {}:",
                    i * FRAME_LEN,
                    a.interval_start.millis(),
                    a.channel
                );
                for line in d {
                    println!("  {line}");
                }
            }
        }
    }
    println!("check: DIFFERENT, {shown} frames differ ({log_path} vs host replay of {samples})");
    Ok(ExitCode::FAILURE)
}
