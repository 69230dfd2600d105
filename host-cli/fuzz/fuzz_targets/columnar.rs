//! Fuzz target: a Parquet or Arrow IPC file (picked by the first byte) as samples and as records.
//! The body and what it asserts: `host_cli::fuzzing::columnar`. A panic inside the decoding
//! crates that tenmin catches (an error naming the file) is not a crash here either.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(
    init: host_cli::fuzzing::let_guarded_panics_unwind(),
    |data: &[u8]| host_cli::fuzzing::columnar(data)
);
