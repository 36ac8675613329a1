//! Writes one memory layout per firmware (`memory.x`, which cortex-m-rt's
//! `link.x` includes) into `OUT_DIR/<bin>/` and points each binary's
//! linker there.
//!
//! The layout is the product's part, shrunk to the firmware's RAM budget,
//! with the stack **below** the statics (the layout `flip-link` makes):
//!
//! ```text
//! 0x2000_0000                      _stack_start           RAM budget
//! | stack, grows down towards here | .data .bss (statics) |
//! ```
//!
//! A stack overflow runs below 0x2000_0000, where nothing is mapped: the
//! core faults at once instead of silently overwriting the statics. The
//! statics get `STATIC_BYTES` at the top; the stack gets the rest.
//!
//! The calibration image has flash pages of its own (`CALIBRATION`, the
//! last 4 KiB of a 32 KiB part), so the end-of-line rig can write it
//! without touching the program, and so the program's own size is
//! measured without it.
//!
//! `LC_UNIT_RAM_BYTES=N` overrides the RAM budget of every binary (the
//! budget test measures with 64 KiB first, so that a firmware over budget
//! still runs and reports its figures).

use std::{env, fs, path::PathBuf};

/// The binaries and their RAM budgets (bytes), issue 13's targets.
const BINS: [(&str, u32); 3] = [("proximity", 1024), ("level", 1536), ("metal", 512)];

/// RAM set aside for the statics, at the top of the budget (a multiple of
/// 8: the stack's alignment). None: the examples keep everything in
/// `main`'s frame and the runtime has no statics, so the stack gets the
/// whole budget, as the budget test counts it (static RAM + peak stack).
/// A firmware that gains a static fails to link ("section '.bss' will not
/// fit in region 'RAM'"): set aside what it needs here.
const STATIC_BYTES: u32 = 0;

fn main() {
    let target = env::var("TARGET").unwrap_or_default();
    assert!(
        target.starts_with("thumbv6m") || target.starts_with("thumbv7"),
        "build for a Cortex-M target: --target thumbv6m-none-eabi (QEMU microbit)"
    );
    let override_ram: Option<u32> = env::var("LC_UNIT_RAM_BYTES")
        .ok()
        .map(|v| v.parse().expect("LC_UNIT_RAM_BYTES is a number of bytes"));
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    for (bin, budget) in BINS {
        let ram = override_ram.unwrap_or(budget);
        assert!(
            ram % 8 == 0 && ram > STATIC_BYTES,
            "RAM of {bin}: a multiple of 8 above {STATIC_BYTES} bytes"
        );
        let stack = ram - STATIC_BYTES;
        let dir = out.join(bin);
        fs::create_dir_all(&dir).expect("create the layout folder");
        fs::write(dir.join("memory.x"), layout(bin, ram, stack)).expect("write memory.x");
        println!("cargo:rustc-link-arg-bin={bin}=-L{}", dir.display());
    }
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-env-changed=LC_UNIT_RAM_BYTES");
}

fn layout(bin: &str, ram: u32, stack: u32) -> String {
    format!(
        "/* {bin}: written by build.rs. A 32 KiB flash part: program in the
   first 28 KiB, calibration image in the last 4 KiB. {ram} bytes of RAM:
   the stack ({stack} bytes) at the bottom, the statics above it. */
MEMORY
{{
  FLASH       : ORIGIN = 0x00000000, LENGTH = 28K
  CALIBRATION : ORIGIN = 0x00007000, LENGTH = 4K
  RAM         : ORIGIN = 0x20000000 + {stack}, LENGTH = {statics}
}}

/* The stack starts below the statics and grows down to the start of
   SRAM; below it nothing is mapped, so an overflow faults. */
_stack_start = ORIGIN(RAM);
_stack_end = 0x20000000;

/* The calibration image: the `.calibration` section at the start of its
   pages (the rig writes them; see src/bin/*.rs). */
SECTIONS
{{
  .calibration ORIGIN(CALIBRATION) :
  {{
    KEEP(*(.calibration .calibration.*));
  }} > CALIBRATION
}} INSERT AFTER .rodata;
",
        statics = ram - stack
    )
}
