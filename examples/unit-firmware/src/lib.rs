//! What the example firmwares share: output to the host over semihosting,
//! the exit, the panic handler, the peak-stack report, and the two files
//! the host test compiles too ([`report`]: one line per reading;
//! [`script`]: the inputs the firmwares read).
//!
//! The firmwares themselves are `src/bin/proximity.rs`, `level.rs` and
//! `metal.rs`: start there. In a product, replace [`Host`] with your UART
//! or RTT logger and the panic handler with `panic-halt` or a reset; keep
//! the memory layout of `build.rs` (stack below the statics, so an
//! overflow faults instead of corrupting them).
#![no_std]
#![deny(unsafe_code)]
#![deny(missing_docs)]

pub mod report;
pub mod script;

use cortex_m_semihosting::{debug, syscall};

/// The host's standard output over semihosting (the emulator's, or a
/// debug probe's): the handle the host gave when it opened it.
#[derive(Clone, Copy)]
pub struct Host(usize);

impl Host {
    /// Opens the host's standard output (`:tt` opened for writing).
    #[allow(unsafe_code)]
    pub fn open() -> Self {
        const NAME: &[u8] = b":tt\0";
        // SAFETY: semihosting's OPEN reads the name's bytes (its length
        // without the NUL); nothing else is touched.
        Self(unsafe { syscall!(OPEN, NAME.as_ptr(), 4, NAME.len() - 1) })
    }

    /// Writes `bytes`. A write the host refuses (or one to a handle whose
    /// open failed) ends the program with a failure status. Semihosting
    /// needs a debugger or the emulator: without one, its `bkpt` faults
    /// (a product replaces `Host`). Kept out of line: a line of output is
    /// a dozen writes, each a call of a few bytes instead of this body
    /// inlined.
    #[inline(never)]
    #[allow(unsafe_code)]
    pub fn write(self, bytes: &[u8]) {
        // SAFETY: semihosting's WRITE reads `bytes`; it returns the number
        // of bytes it did not write.
        if unsafe { syscall!(WRITE, self.0, bytes.as_ptr(), bytes.len()) } != 0 {
            exit(false)
        }
    }

    /// Writes `why` and ends the program with a failure status.
    pub fn fail(self, why: &[u8]) -> ! {
        self.write(why);
        exit(false)
    }

    /// Writes the peak stack (`stack <bytes>`, see [`stack_peak_bytes`])
    /// and ends the program with a success status.
    pub fn finish(mut self) -> ! {
        report::decimal(&mut self, b"stack ", false, stack_peak_bytes());
        self.write(b"\n");
        exit(true)
    }
}

impl report::Sink for Host {
    fn put(&mut self, bytes: &[u8]) {
        self.write(bytes);
    }
}

/// Ends the program: the emulator exits with status 0 for `success`, 1
/// otherwise. On a board without a debugger attached, sleeps forever.
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

/// The deepest the stack has been since reset, in bytes, start-up
/// included.
///
/// cortex-m-rt's `paint-stack` feature fills the stack region
/// (`_stack_end` … `_stack_start`, build.rs) with 0xCCCC_CCCC before
/// `main`. Whatever the program pushed has overwritten the paint: the
/// first unpainted word from the bottom marks the high-water mark. (A
/// pushed word that happens to equal the paint would hide up to the words
/// below it; the figure is then low by at most that much.)
#[allow(unsafe_code)]
pub fn stack_peak_bytes() -> u32 {
    extern "C" {
        static _stack_start: u32;
        static _stack_end: u32;
    }
    // SAFETY: the two symbols are addresses the linker script defines; only
    // their addresses are taken. The words between them are the stack
    // region, which is mapped RAM; reading them (volatile, so the reads are
    // not elided) changes nothing.
    unsafe {
        let top = core::ptr::addr_of!(_stack_start) as usize;
        let mut at = core::ptr::addr_of!(_stack_end) as usize;
        while at < top && core::ptr::read_volatile(at as *const u32) == 0xCCCC_CCCC {
            at += 4;
        }
        u32::try_from(top - at).unwrap_or(u32::MAX)
    }
}

/// A panic ends the program with a failure status (the emulator's exit
/// code 1). lc-core's reading path has no reachable panic (the
/// `panic-never` proof of `examples/firmware`); a product would use
/// `panic-halt` or reset here.
#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    exit(false)
}

/// Bytes at a 4-byte aligned address: a calibration image as
/// `lc_core::image::Image::new` reads it in place (by words).
#[repr(C, align(4))]
pub struct Aligned<T>(pub T);
