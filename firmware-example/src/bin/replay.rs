//! Replay board: reads a sample file from the host through semihosting (as
//! `tenmin export` writes it), builds the station from the file's header, runs
//! every sample through a [`Logger`](firmware_example::logger::Logger)
//! (qc-core's `Station`), and appends the record-log frames to an output file.
//!
//! Paths come from the semihosting command line (`replay SAMPLES LOG [states]`,
//! set by QEMU's `-semihosting-config ...,arg=replay,arg=SAMPLES,arg=LOG`), or
//! default to `replay-day.tmsf` and `replay-day.log` in QEMU's working
//! directory. With a third argument `states`, the board runs a state logger
//! instead (qc-core's `Sampler`: one state frame per channel and interval, for
//! `tenmin decode --config` to finish on the PC). Exit
//! status 0 on success, 1 on any error, printed to the host's stderr (a station
//! that does not fit this logger, a damaged or truncated file, a file error).

#![no_std]
#![no_main]

use core::ffi::CStr;

use cortex_m_rt::entry;
use firmware_example::replay::{replay, replay_states, ReplayLayoutSlot, ReplaySlot, Sink, Source};
use qc_core::wire::FRAME_LEN;
use semihosting::experimental::env;
use semihosting::fs::File;
use semihosting::io::{self, Read, Write};
use semihosting::{eprintln, println, process};

struct HostFile(File);

impl Source for HostFile {
    type Error = io::Error;
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, io::Error> {
        self.0.read(buf)
    }
}

impl Sink for HostFile {
    type Error = io::Error;
    fn write_frame(&mut self, frame: &[u8; FRAME_LEN]) -> Result<(), io::Error> {
        self.0.write_all(frame)
    }
}

/// A path argument as a C string in `buf` (paths up to 255 bytes).
fn c_path<'a>(arg: &str, buf: &'a mut [u8; 256]) -> Option<&'a CStr> {
    let bytes = arg.as_bytes();
    buf.get_mut(..bytes.len())?.copy_from_slice(bytes);
    *buf.get_mut(bytes.len())? = 0;
    CStr::from_bytes_until_nul(buf).ok()
}

/// Opens the files named on the command line (or the defaults).
#[inline(never)]
fn open_files() -> Result<(HostFile, HostFile, bool), ()> {
    let mut in_buf = [0u8; 256];
    let mut out_buf = [0u8; 256];
    let (mut input, mut output) = (c"replay-day.tmsf", c"replay-day.log");
    let mut states = false;
    if let Ok(args) = env::args::<512>() {
        let mut args = (&args).skip(1);
        if let Some(Ok(a)) = args.next() {
            input = c_path(a, &mut in_buf)
                .ok_or_else(|| eprintln!("replay: sample file path longer than 255 bytes"))?;
        }
        if let Some(Ok(a)) = args.next() {
            output = c_path(a, &mut out_buf)
                .ok_or_else(|| eprintln!("replay: log file path longer than 255 bytes"))?;
        }
        match args.next() {
            Some(Ok("states")) => states = true,
            None => {}
            Some(_) => {
                eprintln!("replay: the third argument can only be `states`");
                return Err(());
            }
        }
    }
    let source = File::open(input)
        .map(HostFile)
        .map_err(|e| eprintln!("replay: cannot open {input:?}: {e:?}"))?;
    let sink = File::create(output)
        .map(HostFile)
        .map_err(|e| eprintln!("replay: cannot create {output:?}: {e:?}"))?;
    Ok((source, sink, states))
}

#[entry]
fn main() -> ! {
    // cortex-m-rt turns these into `&'static mut` owned by `main`: the layout
    // read from the file (2.4 KiB) and the logger's running state (2.6 KiB)
    // live in static memory, not on the 16 KiB part's stack.
    static mut LAYOUT: ReplayLayoutSlot = ReplayLayoutSlot::new();
    static mut LOGGER: ReplaySlot<'static> = ReplaySlot::new();
    let Ok((mut source, mut sink, states)) = open_files() else {
        process::exit(1)
    };
    let how = if states { replay_states } else { replay };
    match how(
        &mut source,
        &mut sink,
        LAYOUT,
        core::hint::black_box(LOGGER),
    ) {
        Ok(s) => {
            println!(
                "replay: {} channels, {} samples ({} accepted, {} rejected), {} {} frames",
                s.channels,
                s.samples,
                s.accepted,
                s.rejected,
                s.frames,
                if states { "state" } else { "record" }
            );
            process::exit(0)
        }
        Err(e) => {
            eprintln!("replay: {e}");
            process::exit(1)
        }
    }
}
