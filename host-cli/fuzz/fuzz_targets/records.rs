//! Fuzz target: records CSV through `tenmin report` and `tenmin verify`.
//! The body and what it asserts: `host_cli::fuzzing::records`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::records(data));
