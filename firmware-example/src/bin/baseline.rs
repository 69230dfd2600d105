//! Flash baseline for the budgets: the replay board's file handling (open
//! files named on the semihosting command line, read in chunks, append to the
//! output, print a summary, exit) without qc-core. The replay binary's flash
//! minus this one's is qc-core's share plus the small replay glue.

#![no_std]
#![no_main]

use core::ffi::CStr;

use cortex_m_rt::entry;
use semihosting::experimental::env;
use semihosting::fs::File;
use semihosting::io::{Read, Write};
use semihosting::{eprintln, println, process};

fn c_path<'a>(arg: &str, buf: &'a mut [u8; 256]) -> Option<&'a CStr> {
    let bytes = arg.as_bytes();
    buf.get_mut(..bytes.len())?.copy_from_slice(bytes);
    *buf.get_mut(bytes.len())? = 0;
    CStr::from_bytes_until_nul(buf).ok()
}

#[entry]
fn main() -> ! {
    let mut in_buf = [0u8; 256];
    let mut out_buf = [0u8; 256];
    let (mut input, mut output) = (c"replay-day.tmsf", c"baseline.out");
    if let Ok(args) = env::args::<512>() {
        let mut args = (&args).skip(1);
        if let Some(Some(p)) = args
            .next()
            .map(|a| a.ok().and_then(|a| c_path(a, &mut in_buf)))
        {
            input = p;
        }
        if let Some(Some(p)) = args
            .next()
            .map(|a| a.ok().and_then(|a| c_path(a, &mut out_buf)))
        {
            output = p;
        }
    }
    let (Ok(mut src), Ok(mut dst)) = (File::open(input), File::create(output)) else {
        eprintln!("baseline: cannot open {input:?} or {output:?}");
        process::exit(1)
    };
    let mut buf = [0u8; 512];
    let mut total = 0u64;
    loop {
        match src.read(&mut buf) {
            Ok(0) => break,
            Ok(n) => {
                total += n as u64;
                if dst.write_all(&buf[..n]).is_err() {
                    process::exit(1)
                }
            }
            Err(e) => {
                eprintln!("baseline: {e:?}");
                process::exit(1)
            }
        }
    }
    println!("baseline: {} bytes copied", total);
    process::exit(0)
}
