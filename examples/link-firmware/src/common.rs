//! What the link firmware and its cost program share: a line of text for
//! semihosting, the exit through semihosting, and the panic handler (a
//! failed exit).

use cortex_m_semihosting::debug;

/// A line of text for semihosting (formatted with `write!`; what does not
/// fit is a `core::fmt::Error` and leaves the line as it was).
pub(crate) struct Line {
    buf: [u8; 128],
    len: usize,
}

impl Line {
    pub(crate) fn new() -> Self {
        Self {
            buf: [0; 128],
            len: 0,
        }
    }

    /// The text written so far.
    pub(crate) fn as_bytes(&self) -> &[u8] {
        self.buf.get(..self.len).unwrap_or(&[])
    }
}

impl core::fmt::Write for Line {
    fn write_str(&mut self, s: &str) -> core::fmt::Result {
        let end = self.len + s.len();
        self.buf
            .get_mut(self.len..end)
            .ok_or(core::fmt::Error)?
            .copy_from_slice(s.as_bytes());
        self.len = end;
        Ok(())
    }
}

/// Ends the program: QEMU exits with success or failure.
pub(crate) fn exit(ok: bool) -> ! {
    debug::exit(if ok {
        debug::EXIT_SUCCESS
    } else {
        debug::EXIT_FAILURE
    });
    loop {
        cortex_m::asm::wfi();
    }
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    exit(false)
}
