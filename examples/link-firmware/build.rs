//! Writes the memory layout (`memory.x`, which cortex-m-rt's `link.x`
//! includes) into `OUT_DIR` and points the linker there. The layout is
//! that of examples/unit-firmware: the stack at the bottom of RAM, below
//! the statics, so an overflow faults instead of corrupting them; the
//! micro:bit's nRF51 has 256 KiB of flash and 16 KiB of RAM, of which this
//! example takes 4 KiB.

use std::{env, fs, path::PathBuf};

/// RAM of the example (bytes) and the statics' share at its top.
const RAM: u32 = 4096;
const STATIC_BYTES: u32 = 256;

fn main() {
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    let stack = RAM - STATIC_BYTES;
    fs::write(
        out.join("memory.x"),
        format!(
            "/* written by build.rs: {RAM} bytes of RAM, the stack ({stack} bytes)
   at the bottom, the statics above it. */
MEMORY
{{
  FLASH : ORIGIN = 0x00000000, LENGTH = 256K
  RAM   : ORIGIN = 0x20000000 + {stack}, LENGTH = {STATIC_BYTES}
}}
_stack_start = ORIGIN(RAM);
_stack_end = 0x20000000;
"
        ),
    )
    .expect("write memory.x");
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed=build.rs");
}
