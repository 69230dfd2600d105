//! Helpers shared by the integration tests: run the built `tenmin`, read its output.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The `tenmin` binary cargo built for these tests.
pub const BIN: &str = env!("CARGO_BIN_EXE_tenmin");

/// Runs `tenmin` with `args` in `dir`.
pub fn tenmin(args: &[&str], dir: &Path) -> Output {
    Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run tenmin")
}

/// Output bytes as text.
pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// Writes a fixture file into `dir`.
pub fn write(dir: &Path, name: &str, content: impl AsRef<[u8]>) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, content).unwrap();
    p
}
