//! Puts the memory layout of the emulated board that matches the target
//! where cortex-m-rt's `link.x` finds it (as `memory.x`).
//!
//! On the M0 (`memory/microbit.x`) each binary gets a layout of its own, in
//! `OUT_DIR/<bin>/memory.x`: the stack at the bottom of SRAM, below the
//! statics (the last `STATIC_BYTES`), so an overflow faults instead of
//! corrupting them. The pipeline, the fault sample and the panic-never
//! proof have the board's 16 KiB; the measuring harnesses (`cost`, `profile`) a 64 KiB
//! SRAM, which run.sh and tests/emulator.rs emulate for them.
//!
//! `LC_FIRMWARE_STACK_BYTES=N` (used by `run.sh stack`) makes the stack
//! just N bytes deep, so that a deeper stack faults.

use std::{env, fs, path::PathBuf};

/// The M0 binaries and their SRAM, bytes.
const M0_BINS: [(&str, u32); 5] = [
    ("pipeline", 16 * 1024),
    ("faults", 16 * 1024),
    ("panic_proof", 16 * 1024),
    ("cost", 64 * 1024),
    ("profile", 64 * 1024),
];

/// SRAM kept for the statics, above the stack (a multiple of 8: the
/// stack's alignment). The binaries have none today (docs/performance.md).
const STATIC_BYTES: u32 = 256;

fn main() {
    let target = env::var("TARGET").unwrap_or_default();
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    let stack_override: Option<u32> = env::var("LC_FIRMWARE_STACK_BYTES").ok().map(|v| {
        v.parse()
            .expect("LC_FIRMWARE_STACK_BYTES is a number of bytes")
    });
    match target.as_str() {
        "thumbv6m-none-eabi" => {
            let template = fs::read_to_string("memory/microbit.x").expect("read the memory layout");
            for (bin, sram) in M0_BINS {
                let stack = stack_override.unwrap_or(sram - STATIC_BYTES);
                assert!(
                    stack % 8 == 0 && stack < sram,
                    "the stack of {bin} ({stack} bytes) is a multiple of 8 below its {sram} bytes of SRAM"
                );
                let memory = template
                    .replace("STACK_BYTES", &stack.to_string())
                    .replace("SRAM_BYTES", &sram.to_string());
                let dir = out.join(bin);
                fs::create_dir_all(&dir).expect("create the layout folder");
                fs::write(dir.join("memory.x"), memory).expect("write memory.x");
                println!("cargo:rustc-link-arg-bin={bin}=-L{}", dir.display());
            }
            println!("cargo:rerun-if-changed=memory/microbit.x");
        }
        "thumbv7em-none-eabihf" => {
            // QEMU mps2-an386 (Cortex-M4F): 4 MiB of RAM, stack at its top.
            let memory = fs::read_to_string("memory/mps2-an386.x").expect("read the memory layout");
            fs::write(out.join("memory.x"), memory).expect("write memory.x");
            println!("cargo:rustc-link-search={}", out.display());
            println!("cargo:rerun-if-changed=memory/mps2-an386.x");
        }
        other => panic!(
            "no memory layout for target `{other}`: build with \
             --target thumbv6m-none-eabi (QEMU microbit, Cortex-M0) or \
             --target thumbv7em-none-eabihf (QEMU mps2-an386, Cortex-M4F)"
        ),
    }
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-env-changed=LC_FIRMWARE_STACK_BYTES");
}
