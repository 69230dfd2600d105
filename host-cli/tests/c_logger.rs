//! The C logger of `firmware-example/c/` on the host, without QEMU: built
//! with the system's C compiler (`cc`) against the C interface's static
//! library (`qc-core/capi`, built by cargo for this test), it replays a day
//! of the `tenmin demo` station (`tenmin export` of its samples) as a record
//! logger and as a state logger. Its logs must be byte for byte the logs of
//! the Rust firmware's replay loop (`firmware-example/src/replay.rs`, compiled
//! here by `#[path]`) on the same file, and `tenmin decode` + `tenmin verify`
//! must find every field identical to the PC's replay of the samples.
//! `firmware-example/c/check.sh` does the same under QEMU on Cortex-M0 and
//! Cortex-M4F.

// The firmware's files name their optional `defmt` feature, which this crate
// does not have (a module-level `allow` does not reach `cfg_attr`).
#![allow(unexpected_cfgs)]

use std::path::{Path, PathBuf};
use std::process::Command;

#[allow(dead_code)]
#[path = "../../firmware-example/src/logger.rs"]
mod logger;
#[allow(dead_code)]
#[path = "../../firmware-example/src/replay.rs"]
mod replay;
#[allow(dead_code)]
#[path = "../../firmware-example/src/scenario.rs"]
mod scenario;

mod common;
use common::{tenmin, text};

/// The host static library cargo built for this test (the newest
/// `libtenmin_qc-*.a` beside the test binary).
fn static_lib() -> PathBuf {
    let exe = std::env::current_exe().expect("test binary path");
    let deps = exe.parent().expect("deps folder");
    std::fs::read_dir(deps)
        .expect("read deps")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            let name = p.file_name().and_then(|n| n.to_str()).unwrap_or("");
            name.starts_with("libtenmin_qc-") && name.ends_with(".a")
        })
        .max_by_key(|p| p.metadata().and_then(|m| m.modified()).ok())
        .expect("cargo builds libtenmin_qc.a for qc-capi (crate-type staticlib)")
}

/// Compiles a C program of `firmware-example/c/` (`sources`, with `defines`)
/// with `cc` into `dir/name`.
fn build_c(dir: &Path, name: &str, defines: &[&str], sources: &[&str]) -> PathBuf {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let c = root.join("firmware-example/c");
    let exe = dir.join(name);
    let out = Command::new("cc")
        .args(["-std=c99", "-O1", "-Wall", "-Wextra", "-Werror", "-I"])
        .arg(root.join("qc-core/capi/include"))
        .args(defines)
        .args(sources.iter().map(|s| c.join(s)))
        .arg(static_lib())
        // --gc-sections: only what the C logger calls is linked (with the
        // workspace's `--all-features`, qc-core's defmt code is in the library,
        // and it needs a defmt logger the C program does not have).
        .args(["-Wl,--gc-sections", "-lpthread", "-ldl", "-lm", "-o"])
        .arg(&exe)
        .output()
        .expect("run cc (the system's C compiler)");
    assert!(
        out.status.success(),
        "cc failed:\n{}{}",
        text(&out.stdout),
        text(&out.stderr)
    );
    exe
}

/// Compiles the C logger with `cc` into `dir`.
fn build_c_logger(dir: &Path) -> PathBuf {
    build_c(dir, "c-logger", &[], &["logger.c", "stations.c"])
}

#[test]
fn the_stored_layout_images_are_fresh() {
    // image.c builds the example stations with the library and writes their
    // images; the committed stored_layouts.c must be its output.
    let dir = tempfile::tempdir().unwrap();
    let exe = build_c(dir.path(), "image", &[], &["image.c", "stations.c"]);
    let o = Command::new(&exe).output().expect("run image");
    assert!(o.status.success(), "image: {}", text(&o.stderr));
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../firmware-example/c/stored_layouts.c");
    let committed = std::fs::read(&path).unwrap();
    assert!(
        committed == o.stdout,
        "firmware-example/c/stored_layouts.c is stale: regenerate it as image.c says"
    );
}

/// Runs a C logger `exe` in `dir` on `demo.tmsf` into `log` (state frames
/// with `states`); the log's bytes.
fn run_logger(exe: &Path, dir: &Path, log: &str, states: bool) -> Vec<u8> {
    let mut cmd = Command::new(exe);
    cmd.current_dir(dir).args(["demo.tmsf", log]);
    if states {
        cmd.arg("states");
    }
    let o = cmd.output().expect("run the C logger");
    assert!(
        o.status.success(),
        "C logger ({log}): {}{}",
        text(&o.stdout),
        text(&o.stderr)
    );
    let bytes = std::fs::read(dir.join(log)).unwrap();
    assert!(
        bytes.len() > 100 * 128,
        "C logger ({log}) wrote {} bytes",
        bytes.len()
    );
    bytes
}

/// The Rust firmware's replay of `samples` (record or state frames).
fn rust_log(samples: &[u8], states: bool) -> Vec<u8> {
    struct Bytes<'a>(&'a [u8]);
    impl replay::Source for Bytes<'_> {
        type Error = ();
        fn read(&mut self, buf: &mut [u8]) -> Result<usize, ()> {
            let n = buf.len().min(self.0.len());
            buf[..n].copy_from_slice(&self.0[..n]);
            self.0 = &self.0[n..];
            Ok(n)
        }
    }
    struct Log(Vec<u8>);
    impl replay::Sink for Log {
        type Error = ();
        fn write_frame(&mut self, f: &[u8; qc_core::wire::FRAME_LEN]) -> Result<(), ()> {
            self.0.extend_from_slice(f);
            Ok(())
        }
    }
    let mut layouts = Box::new(replay::ReplayLayoutSlot::new());
    let mut slot = Box::new(replay::ReplaySlot::new());
    let mut log = Log(Vec::new());
    let how = if states {
        replay::replay_states
    } else {
        replay::replay
    };
    how(&mut Bytes(samples), &mut log, &mut layouts, &mut slot).expect("rust replay");
    log.0
}

#[test]
fn c_logger_writes_the_rust_loggers_bytes_and_verifies() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = tenmin(&["demo", "--days", "1", "--out", "demo"], d);
    assert!(o.status.success(), "tenmin demo: {}", text(&o.stderr));
    let mut samples: Vec<String> = std::fs::read_dir(d.join("demo"))
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with("samples-") && n.ends_with(".csv"))
        .map(|n| format!("demo/{n}"))
        .collect();
    samples.sort();
    assert!(!samples.is_empty(), "tenmin demo wrote no samples");
    let mut export = vec!["export", "-q", "--config", "demo/station.toml"];
    export.extend(samples.iter().map(String::as_str));
    export.extend(["-o", "demo.tmsf"]);
    let o = tenmin(&export, d);
    assert!(o.status.success(), "tenmin export: {}", text(&o.stderr));
    let tmsf = std::fs::read(d.join("demo.tmsf")).unwrap();

    let exe = build_c_logger(d);
    let stored = build_c(
        d,
        "c-logger-stored",
        &["-DSTORED_LAYOUT"],
        &["logger.c", "stations.c", "stored_layouts.c"],
    );
    for (states, name) in [(false, "records"), (true, "states")] {
        let log = format!("c-{name}.log");
        let c_log = run_logger(&exe, d, &log, states);
        // Two paths through the core (the C interface, the Rust firmware's
        // logger) on the same samples: the same bytes.
        assert!(
            c_log == rust_log(&tmsf, states),
            "the C logger's {name} log differs from the Rust firmware's"
        );
        // The logger on its layout's stored image (validated on the PC by
        // image.c, only checked and loaded by the logger): the same bytes.
        let stored_log = format!("c-stored-{name}.log");
        let stored_bytes = run_logger(&stored, d, &stored_log, states);
        assert!(
            stored_bytes == c_log,
            "the C logger's {name} log on its stored layout differs from its log on the layout built at run time"
        );
        // The PC's replay of the samples is the reference for every field.
        let csv = format!("c-{name}.csv");
        let o = tenmin(
            &[
                "decode",
                "--strict",
                "-q",
                "--config",
                "demo/station.toml",
                &log,
                "-o",
                &csv,
            ],
            d,
        );
        assert!(
            o.status.success(),
            "tenmin decode ({name}): {}",
            text(&o.stderr)
        );
        let mut verify = vec!["verify", "-q", "--config", "demo/station.toml", "--samples"];
        verify.extend(samples.iter().map(String::as_str));
        verify.extend(["--records", &csv]);
        let o = tenmin(&verify, d);
        assert!(
            o.status.success(),
            "tenmin verify ({name}): {}{}",
            text(&o.stdout),
            text(&o.stderr)
        );
    }
}
