//! Fuzz target: samples CSV through `tenmin replay` (one thread and two, strict and `--skip-bad-rows`).
//! The body and what it asserts: `host_cli::fuzzing::samples`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::samples(data));
