//! Fuzz target: a logger's log: the core's scanner whole and in pieces, and `tenmin decode`.
//! The body and what it asserts: `host_cli::fuzzing::logscan`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| host_cli::fuzzing::logscan(data));
