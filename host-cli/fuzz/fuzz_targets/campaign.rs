//! Fuzz target: the campaign's side files (sensor history, exclusions, events) through replay, verify and report.
//! The body and what it asserts: `host_cli::fuzzing::campaign`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::campaign(data));
