//! Fuzz target: a field file through `tenmin draft`, and the draft replaying it when it loads.
//! The body and what it asserts: `host_cli::fuzzing::draft`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::draft(data));
