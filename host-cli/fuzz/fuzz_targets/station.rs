//! Fuzz target: a station file, the engine it builds and its sample-file header.
//! The body and what it asserts: `host_cli::fuzzing::station`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::station(data));
