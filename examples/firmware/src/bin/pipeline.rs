//! Prints the lc-core stage table (`lc_firmware::pipeline::run`) and the
//! readout table (`lc_firmware::readout::run`: calibration image to
//! readings) over semihosting and exits: status 0 when every line was
//! written.
#![no_std]
#![no_main]

use cortex_m_rt::entry;
use lc_firmware::{exit, pipeline, readout, stdout};

#[entry]
fn main() -> ! {
    let ok = match stdout() {
        Some(mut out) => pipeline::run(&mut out).is_ok() && readout::run(&mut out).is_ok(),
        None => false,
    };
    exit(ok)
}
