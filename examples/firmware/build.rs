//! Puts the memory layout of the emulated board that matches the target
//! where cortex-m-rt's `link.x` finds it (as `memory.x` in `OUT_DIR`).

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
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    fs::copy(layout, out.join("memory.x")).expect("copy the memory layout");
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed={layout}");
    println!("cargo:rerun-if-changed=build.rs");
}
