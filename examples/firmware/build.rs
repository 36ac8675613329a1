//! Puts the memory layout of the emulated board that matches the target
//! where cortex-m-rt's `link.x` finds it (as `memory.x` in `OUT_DIR`).
//!
//! `LC_FIRMWARE_STACK_BYTES=N` (used by `run.sh stack`) moves the stack to
//! the bottom of RAM, N bytes deep, so that a deeper stack faults. On the
//! M0 the measuring harnesses (`cost`, `profile`) get their stack at the
//! top of a 64 KiB SRAM (see memory/microbit.x).

use std::{env, fs, path::PathBuf};

fn main() {
    let target = env::var("TARGET").unwrap_or_default();
    let layout = match target.as_str() {
        "thumbv6m-none-eabi" => "memory/microbit.x",
        "thumbv7em-none-eabihf" => "memory/mps2-an386.x",
        other => panic!(
            "no memory layout for target `{other}`: build with \
             --target thumbv6m-none-eabi (QEMU microbit, Cortex-M0) or \
             --target thumbv7em-none-eabihf (QEMU mps2-an386, Cortex-M4F)"
        ),
    };
    let mut memory = fs::read_to_string(layout).expect("read the memory layout");
    if let Ok(bytes) = env::var("LC_FIRMWARE_STACK_BYTES") {
        let bytes: u32 = bytes
            .parse()
            .expect("LC_FIRMWARE_STACK_BYTES is a number of bytes");
        memory.push_str(&format!("_stack_start = ORIGIN(RAM) + {bytes};\n"));
    }
    if target == "thumbv6m-none-eabi" {
        // The measuring harnesses hold a reader and its f32 twin per path:
        // more than the board's 16 KiB. Their stack starts at the top of a
        // 64 KiB SRAM, which run.sh and tests/emulator.rs emulate for them.
        for bin in ["cost", "profile"] {
            println!("cargo:rustc-link-arg-bin={bin}=--defsym=_stack_start=0x20010000");
        }
    }
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    fs::write(out.join("memory.x"), memory).expect("write memory.x");
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed={layout}");
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-env-changed=LC_FIRMWARE_STACK_BYTES");
}
