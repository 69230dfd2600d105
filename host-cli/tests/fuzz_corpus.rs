//! Replays the committed fuzz corpus (`host-cli/fuzz/corpus/<target>/`) through
//! the fuzz targets' bodies (`host_cli::fuzzing`) on stable Rust, so that an
//! input that once crashed a reader (kept in the corpus when it was fixed)
//! keeps being checked by `cargo test`. `host-cli/fuzz/run.sh` runs the
//! fuzzers themselves.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::PathBuf;

use host_cli::fuzzing;

fn corpus(target: &str) -> Vec<PathBuf> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("fuzz/corpus")
        .join(target);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("read the corpus folder").path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    files
}

/// Runs every input of `target`'s corpus through `body`; fails naming every
/// input that panicked. At least `min` inputs must be there (a corpus that
/// went missing would otherwise pass).
fn replay(target: &str, min: usize, body: fn(&[u8])) {
    let files = corpus(target);
    assert!(
        files.len() >= min,
        "{target}: {} corpus inputs, expected at least {min}",
        files.len()
    );
    let mut failed = Vec::new();
    for f in &files {
        let data = std::fs::read(f).expect("read a corpus input");
        if catch_unwind(AssertUnwindSafe(|| body(&data))).is_err() {
            failed.push(f.display().to_string());
        }
    }
    assert!(
        failed.is_empty(),
        "{target}: {} of {} inputs failed:\n{}",
        failed.len(),
        files.len(),
        failed.join("\n")
    );
}

#[test]
fn samples_corpus() {
    replay("samples", 40, fuzzing::samples);
}

#[test]
fn layouts_corpus() {
    replay("layouts", 20, fuzzing::layouts);
}

#[test]
fn columnar_corpus() {
    replay("columnar", 8, fuzzing::columnar);
}

#[test]
fn draft_corpus() {
    replay("draft", 10, fuzzing::draft);
}

#[test]
fn station_corpus() {
    replay("station", 40, fuzzing::station);
}

#[test]
fn records_corpus() {
    replay("records", 40, fuzzing::records);
}

#[test]
fn frames_corpus() {
    replay("frames", 40, fuzzing::frames);
}

#[test]
fn logscan_corpus() {
    replay("logscan", 40, fuzzing::logscan);
}

#[test]
fn campaign_corpus() {
    replay("campaign", 7, fuzzing::campaign);
}

#[test]
fn table_corpus() {
    replay("table", 3, fuzzing::table);
}

#[test]
fn image_corpus() {
    replay("image", 8, fuzzing::image);
}

/// The image seeds reach past the checks: each whole image loads as the
/// target's shape (four channels, gust capacity 3) and one cut a byte short
/// is refused; each sample file's station is validated for the example
/// firmware's size, so the corpus above runs stored layouts.
#[test]
fn image_seeds_load_and_cut_ones_do_not() {
    let (mut whole, mut files) = (0, 0);
    for p in corpus("image") {
        let name = p.file_name().unwrap().to_string_lossy().into_owned();
        if !name.starts_with("seed-") {
            continue;
        }
        let data = std::fs::read(&p).unwrap();
        if name.ends_with(".tmsf") {
            let reader = qc_core::wire::SampleReader::<8>::new(&data).unwrap();
            let h = *reader.header();
            assert!(
                qc_core::Layout::<8>::new::<12>(h.station, &h.channels).is_ok(),
                "{name}"
            );
            files += 1;
            continue;
        }
        let mut layout = qc_core::Layout::<4>::placeholder();
        let loaded = layout.load_image::<3>(&data);
        if name.ends_with("-cut.bin") {
            assert!(loaded.is_err(), "{name}");
        } else {
            assert_eq!(loaded, Ok(()), "{name}");
            whole += 1;
        }
    }
    assert_eq!((whole, files), (3, 2));
}
