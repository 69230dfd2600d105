//! The `tenmin` binary: everything lives in the `host_cli` library, so that tests,
//! fuzz targets and other front ends reach the same readers and writers.

#![forbid(unsafe_code)]

fn main() -> std::process::ExitCode {
    host_cli::main()
}
