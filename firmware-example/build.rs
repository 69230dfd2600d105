//! Puts the memory map of the target's QEMU board where cortex-m-rt's `link.x`
//! looks for `memory.x`.
use std::{env, fs, path::PathBuf};

fn main() {
    let target = env::var("TARGET").unwrap_or_default();
    let map = match target.as_str() {
        "thumbv6m-none-eabi" => Some("memory/microbit.x"),
        "thumbv7em-none-eabihf" => Some("memory/mps2-an386.x"),
        _ => None,
    };
    if let Some(map) = map {
        let out = PathBuf::from(env::var("OUT_DIR").expect("cargo sets OUT_DIR"));
        fs::copy(map, out.join("memory.x")).expect("copy memory map");
        println!("cargo:rustc-link-search={}", out.display());
        println!("cargo:rerun-if-changed={map}");
    }
    println!("cargo:rerun-if-changed=build.rs");
}
