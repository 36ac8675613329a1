//! Prints the lc-core pipeline table (`lc_firmware::pipeline::run`) over
//! semihosting and exits: status 0 when every line was written.
#![no_std]
#![no_main]

use cortex_m_rt::entry;
use lc_firmware::{exit, pipeline, stdout};

#[entry]
fn main() -> ! {
    let ok = match stdout() {
        Some(mut out) => pipeline::run(&mut out).is_ok(),
        None => false,
    };
    exit(ok)
}
