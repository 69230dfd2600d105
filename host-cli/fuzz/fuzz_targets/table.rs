//! Fuzz target: another logger's table and its declarations through `tenmin verify` and `--infer`.
//! The body and what it asserts: `host_cli::fuzzing::table`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::table(data));
