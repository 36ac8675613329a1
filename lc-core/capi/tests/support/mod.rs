//! Building the static library for the tests (`lc-core/capi/tests/header.rs`,
//! `lc-core/capi/tests/host_c.rs`, and the root package's `tests/c_firmware.rs`, which
//! includes this file), and reading its storage layout.
#![allow(dead_code)]

use std::env;
use std::ffi::OsString;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Mutex;

use lc_core_capi::lc_layout_t;

/// The Cortex-M targets the library is built for.
pub const M0: &str = "thumbv6m-none-eabi";
pub const M4F: &str = "thumbv7em-none-eabihf";

/// The workspace's root.
pub fn workspace() -> PathBuf {
    let mut dir = Path::new(env!("CARGO_MANIFEST_DIR")).to_path_buf();
    while !dir.join("Cargo.lock").is_file() {
        assert!(
            dir.pop(),
            "no workspace above {}",
            env!("CARGO_MANIFEST_DIR")
        );
    }
    dir
}

/// `<target dir>/capi`: a target directory of its own, so the release
/// profile's overrides below do not rebuild the workspace's.
pub fn target_dir() -> PathBuf {
    let tmp = Path::new(env!("CARGO_TARGET_TMPDIR"));
    tmp.parent().unwrap_or(tmp).join("capi")
}

pub fn on_ci() -> bool {
    env::var("CI").is_ok_and(|v| !v.is_empty() && v != "false" && v != "0")
}

/// Whether the Rust target is installed; a missing one skips the calling
/// test, or fails it on CI.
pub fn have_target(triple: &str) -> bool {
    let rustc = env::var_os("RUSTC").unwrap_or_else(|| OsString::from("rustc"));
    let sysroot = Command::new(rustc)
        .args(["--print", "sysroot"])
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_owned())
        .unwrap_or_default();
    let ok = Path::new(&sysroot)
        .join("lib/rustlib")
        .join(triple)
        .join("lib")
        .is_dir();
    if !ok {
        let why = format!("Rust target {triple} not installed (rustup target add {triple})");
        assert!(!on_ci(), "CI is set, so this test must run: {why}");
        eprintln!("skipped: {why}");
    }
    ok
}

/// Builds `liblc_core_capi.a` for `triple` (the host when `None`) with
/// what a product ships: opt-level "s", LTO over the library and
/// lc-core, one codegen unit, the 64-byte CRC table (the unit firmwares' profile and lc-core
/// features). Returns the library's path.
pub fn build_lib(triple: Option<&str>) -> PathBuf {
    build(triple, None)
}

/// [`build_lib`] with one unit's entry points alone (`--no-default-features
/// --features panic-handler,crc-nibble,<unit>`: `lc_<unit>_reader_open`,
/// `lc_<unit>_read`), what that unit's firmware links; copied to
/// `<target dir>/capi/units/<unit>/liblc_core_capi.a` (the path
/// `examples/c-firmware/build.sh` reads).
pub fn build_unit_lib(triple: &str, unit: &str) -> PathBuf {
    build(Some(triple), Some(unit))
}

fn build(triple: Option<&str>, unit: Option<&str>) -> PathBuf {
    static LOCK: Mutex<()> = Mutex::new(());
    let _guard = LOCK.lock().unwrap_or_else(|e| e.into_inner());
    let cargo = env::var_os("CARGO").unwrap_or_else(|| OsString::from("cargo"));
    let root = workspace();
    let mut cmd = Command::new(cargo);
    cmd.current_dir(&root)
        .env("CARGO_TARGET_DIR", target_dir())
        .env("CARGO_PROFILE_RELEASE_OPT_LEVEL", "s")
        .env("CARGO_PROFILE_RELEASE_LTO", "true")
        .env("CARGO_PROFILE_RELEASE_CODEGEN_UNITS", "1")
        .env_remove("RUSTFLAGS")
        .env_remove("CARGO_ENCODED_RUSTFLAGS")
        .env_remove("CARGO_BUILD_RUSTFLAGS")
        // `cargo rustc --crate-type staticlib`: the package's crate types
        // (staticlib and rlib) would make Cargo leave out LTO; a
        // staticlib alone is built with it, as one optimised unit.
        .args([
            "rustc",
            "--quiet",
            "--release",
            "-p",
            "lc-core-capi",
            "--lib",
            "--crate-type",
            "staticlib",
        ])
        .arg("--manifest-path")
        .arg(root.join("Cargo.toml"));
    // The unit firmwares' CRC table: 960 bytes less flash.
    match unit {
        Some(u) => cmd.args([
            "--no-default-features",
            "--features",
            &format!("panic-handler,crc-nibble,{u}"),
        ]),
        None => cmd.args(["--features", "crc-nibble"]),
    };
    if let Some(t) = triple {
        cmd.args(["--target", t]);
    }
    let out = cmd.output().expect("run cargo");
    assert!(
        out.status.success(),
        "building lc-core-capi for {} failed:\n{}",
        triple.unwrap_or("the host"),
        String::from_utf8_lossy(&out.stderr)
    );
    let mut lib = target_dir();
    if let Some(t) = triple {
        lib.push(t);
    }
    lib.push("release/liblc_core_capi.a");
    assert!(lib.is_file(), "{} was built", lib.display());
    // A unit's library is copied while the lock is held: the next build
    // (other features) writes the same file.
    if let Some(u) = unit {
        let dir = target_dir().join("units").join(u);
        fs::create_dir_all(&dir).expect("create the library folder");
        let copy = dir.join("liblc_core_capi.a");
        fs::copy(&lib, &copy).expect("copy the library");
        return copy;
    }
    lib
}

/// `lc_core_capi_layout` of a built library, found by its magic words
/// ("LCLAYOUT"); every copy must agree.
pub fn layout_of(lib: &Path) -> lc_layout_t {
    let bytes = fs::read(lib).expect("read the library");
    let mut found: Option<[u32; 6]> = None;
    let mut at = 0;
    while let Some(i) = bytes[at..].windows(8).position(|w| w == b"LCLAYOUT") {
        let start = at + i + 8;
        let words: Vec<u32> = bytes[start..start + 24]
            .chunks(4)
            .map(|c| u32::from_le_bytes(c.try_into().unwrap()))
            .collect();
        let words: [u32; 6] = words.try_into().unwrap();
        if let Some(f) = found {
            assert_eq!(f, words, "{}: two layouts differ", lib.display());
        }
        found = Some(words);
        at = start;
    }
    let w = found.unwrap_or_else(|| panic!("{}: no lc_core_capi_layout", lib.display()));
    lc_layout_t {
        magic: [0x414C_434C, 0x5455_4F59],
        storage_align: w[0],
        image_size: w[1],
        proximity_reader_size: w[2],
        level_reader_size: w[3],
        metal_reader_size: w[4],
        reader_size: w[5],
    }
}

/// The 32-bit layout: the same on the Cortex-M0 and Cortex-M4F
/// libraries. `None` (the test skipped) without those Rust targets.
pub fn layout_32() -> Option<lc_layout_t> {
    if !(have_target(M0) && have_target(M4F)) {
        return None;
    }
    let m0 = layout_of(&build_lib(Some(M0)));
    let m4f = layout_of(&build_lib(Some(M4F)));
    assert_eq!(m0, m4f, "the two Cortex-M layouts agree");
    Some(m0)
}
