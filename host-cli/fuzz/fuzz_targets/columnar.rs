//! Fuzz target: a Parquet or Arrow IPC file (picked by the first byte) as samples and as records.
//! The body and what it asserts: `host_cli::fuzzing::columnar`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::columnar(data));
