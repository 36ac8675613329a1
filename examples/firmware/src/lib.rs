//! Support for the firmware example binaries: the shared stage table
//! ([`pipeline`]), the whole readout from calibration image to reading
//! ([`readout`]), the scanner, multiplexers and NTC conversions
//! ([`scan`]), a sample of the fault campaign's rows ([`faults`]), host
//! output over semihosting, exit, and the panic handler.
//!
//! Runs on QEMU's `microbit` (Cortex-M0, `thumbv6m-none-eabi`) and
//! `mps2-an386` (Cortex-M4F, `thumbv7em-none-eabihf`) machines; see
//! `run.sh` and `docs/performance.md`.
#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod faults;
pub mod pipeline;
pub mod readout;
pub mod scan;
pub mod sizes;

use cortex_m_semihosting::{debug, hio};

/// The host's standard output over semihosting, if the host provides one.
pub fn stdout() -> Option<hio::HostStream> {
    hio::hstdout().ok()
}

/// Ends the program: the emulator exits with status 0 for `success`, 1
/// otherwise. Without a semihosting host, spins.
pub fn exit(success: bool) -> ! {
    debug::exit(if success {
        debug::EXIT_SUCCESS
    } else {
        debug::EXIT_FAILURE
    });
    loop {
        cortex_m::asm::wfi();
    }
}

/// Reports the panic on the host's standard output and exits the emulator
/// with a failure status. The `panic-never` feature replaces this handler
/// with one that fails to link when any panic path is reachable.
#[cfg(not(feature = "panic-never"))]
#[panic_handler]
fn panic(info: &core::panic::PanicInfo) -> ! {
    use core::fmt::Write;
    if let Some(mut out) = stdout() {
        let _ = writeln!(out, "panic: {info}");
    }
    exit(false)
}
