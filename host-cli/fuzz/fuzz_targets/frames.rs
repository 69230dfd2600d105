//! Fuzz target: `qc_core::wire` record and state frames, and a sample file replayed through a core station.
//! The body and what it asserts: `host_cli::fuzzing::frames`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::frames(data));
