//! Fuzz target: a field file of a declared layout (`[input]`), its layout picked by the first byte.
//! The body and what it asserts: `host_cli::fuzzing::layouts`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::layouts(data));
