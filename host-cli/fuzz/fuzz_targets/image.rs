//! Fuzz target: a layout image (what a logger keeps in flash and the C interface loads), and a station run on it.
//! The body and what it asserts: `host_cli::fuzzing::image`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::image(data));
