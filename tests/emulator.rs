//! The firmware example on emulated Cortex-M cores, against the host.
//!
//! Builds `examples/firmware` for the Cortex-M0 (`thumbv6m-none-eabi`, QEMU
//! `microbit`) and the Cortex-M4F (`thumbv7em-none-eabihf`, QEMU
//! `mps2-an386`), runs it under `qemu-system-arm` and checks:
//!
//! - the `pipeline` binary prints exactly what the very same source files
//!   (`examples/firmware/src/pipeline.rs`, the stage table, and
//!   `examples/firmware/src/readout.rs`, calibration image bytes to
//!   readings; both included below) print on the host, byte for byte:
//!   lc-core gives bit-identical results on all three;
//! - the `panic_proof` binary links with `panic-never` as its panic handler
//!   (the link fails if any panic path of lc-core's firmware path is
//!   reachable), and its digests of every result equal the host's (the
//!   scanner, multiplexers and NTC conversions of
//!   `examples/firmware/src/scan.rs` included); the same with overflow
//!   checks on (`release-checked` profile);
//! - the `faults` binary (`examples/firmware/src/faults.rs`: a sample of
//!   the fault campaign's rows, docs/faults.md) prints exactly the statuses
//!   the same file gives on the host;
//! - the `cost` binary runs to the end, and its `f32` versions of the
//!   readers agree with the fixed readers.
//!
//! Without `qemu-system-arm` or the two Rust targets each test prints
//! `*** SKIPPED <test>: <why>` to the terminal (past the harness's output
//! capture) and passes, unless the environment variable `CI` is set: then
//! they fail, since CI must run them.

#[path = "../examples/firmware/src/faults.rs"]
mod faults;
#[path = "../examples/firmware/src/pipeline.rs"]
mod pipeline;
#[path = "../examples/firmware/src/readout.rs"]
mod readout;
#[path = "../examples/firmware/src/scan.rs"]
mod scan;

use std::env;
use std::ffi::OsString;
use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::thread;
use std::time::{Duration, Instant};

const QEMU: &str = "qemu-system-arm";
const INSTALL_QEMU: &str = "apt-get install qemu-system-arm";
/// An emulator run that takes longer than this is killed.
const TIMEOUT: Duration = Duration::from_secs(60);

/// An emulated core: its Rust target and QEMU machine.
struct Core {
    triple: &'static str,
    qemu_machine: &'static [&'static str],
}

/// The microbit with its own 16 KiB of SRAM: the pipeline and the
/// panic-never proof run in it. The measuring harness (`cost`) gets 64 KiB
/// ([`HARNESS_SRAM`], examples/firmware/memory/microbit.x).
const M0: Core = Core {
    triple: "thumbv6m-none-eabi",
    qemu_machine: &["-machine", "microbit", "-cpu", "cortex-m0"],
};

/// QEMU arguments that enlarge the microbit's SRAM to 64 KiB, for the
/// measuring harnesses, whose stack starts there (examples/firmware/build.rs).
const HARNESS_SRAM: &[&str] = &["-global", "nrf51-soc.sram-size=65536"];

const M4F: Core = Core {
    triple: "thumbv7em-none-eabihf",
    qemu_machine: &["-machine", "mps2-an386", "-cpu", "cortex-m4"],
};

fn firmware_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/firmware")
}

/// `<target dir>/firmware`: beside this test's own build, but a directory
/// of its own, so the two cargo processes never wait for each other's lock.
fn firmware_target_dir() -> PathBuf {
    let tmp = Path::new(env!("CARGO_TARGET_TMPDIR"));
    tmp.parent().unwrap_or(tmp).join("firmware")
}

fn on_ci() -> bool {
    env::var("CI").is_ok_and(|v| !v.is_empty() && v != "false" && v != "0")
}

/// `true` to go on. A missing prerequisite skips the test with a message,
/// or fails it on CI.
fn prerequisites(need_qemu: bool) -> bool {
    let mut missing = Vec::new();
    if need_qemu && Command::new(QEMU).arg("--version").output().is_err() {
        missing.push(format!(
            "{QEMU} is not installed (install with `{INSTALL_QEMU}`)"
        ));
    }
    let absent: Vec<&str> = [M0.triple, M4F.triple]
        .into_iter()
        .filter(|t| !target_installed(t))
        .collect();
    if !absent.is_empty() {
        missing.push(format!(
            "Rust target(s) {} not installed (install with `rustup target add {}`)",
            absent.join(", "),
            absent.join(" ")
        ));
    }
    if missing.is_empty() {
        return true;
    }
    let reason = missing.join("; ");
    if on_ci() {
        panic!("CI is set, so the emulator tests must run: {reason}");
    }
    // Straight to the process's stderr, past the test harness's capture,
    // so a skipped run says so in the `cargo test` output even though the
    // test is reported as passing.
    let test = std::thread::current()
        .name()
        .unwrap_or("emulator test")
        .to_string();
    let _ = writeln!(
        std::io::stderr(),
        "\n*** SKIPPED {test}: {reason}. It passes without running; \
         set CI=1 to make this a failure. ***"
    );
    false
}

/// Whether the toolchain's sysroot holds the standard library for `triple`.
fn target_installed(triple: &str) -> bool {
    let rustc = env::var_os("RUSTC").unwrap_or_else(|| OsString::from("rustc"));
    let Ok(out) = Command::new(rustc).args(["--print", "sysroot"]).output() else {
        return false;
    };
    let sysroot = String::from_utf8_lossy(&out.stdout).trim().to_owned();
    Path::new(&sysroot)
        .join("lib/rustlib")
        .join(triple)
        .join("lib")
        .is_dir()
}

/// Builds one firmware binary in release mode and returns the ELF's path.
fn build(core: &Core, bin: &str, features: &[&str]) -> PathBuf {
    build_with(core, bin, features, "release")
}

/// Builds one firmware binary with a cargo profile of the firmware crate
/// (`release`, or `release-checked`: the same with overflow checks).
fn build_with(core: &Core, bin: &str, features: &[&str], profile: &str) -> PathBuf {
    let dir = firmware_dir();
    let target_dir = firmware_target_dir();
    let cargo = env::var_os("CARGO").unwrap_or_else(|| OsString::from("cargo"));
    let mut cmd = Command::new(cargo);
    // Cargo reads examples/firmware/.cargo/config.toml (the `-Tlink.x`
    // linker flags) only when run from that directory. RUSTFLAGS from the
    // environment would replace those flags, so they are dropped.
    cmd.current_dir(&dir)
        .env("CARGO_TARGET_DIR", &target_dir)
        .env_remove("RUSTFLAGS")
        .env_remove("CARGO_ENCODED_RUSTFLAGS")
        .env_remove("CARGO_BUILD_RUSTFLAGS")
        .arg("build")
        .args(["--profile", profile])
        .arg("--manifest-path")
        .arg(dir.join("Cargo.toml"))
        .args(["--target", core.triple, "--bin", bin]);
    if !features.is_empty() {
        cmd.args(["--features", &features.join(",")]);
    }
    let out = cmd
        .output()
        .unwrap_or_else(|e| panic!("cannot run cargo: {e}"));
    assert!(
        out.status.success(),
        "building firmware `{bin}` for {} failed ({}):\n{}",
        core.triple,
        out.status,
        String::from_utf8_lossy(&out.stderr)
    );
    target_dir.join(core.triple).join(profile).join(bin)
}

/// Runs an ELF on the emulated core and returns its semihosting output.
/// Fails on a non-zero exit status (a panic exits with 1) or after
/// `TIMEOUT`.
fn emulate(core: &Core, elf: &Path) -> String {
    let harness = core.triple == M0.triple
        && elf
            .file_name()
            .is_some_and(|n| n == "cost" || n == "profile");
    let mut child = Command::new(QEMU)
        .args(core.qemu_machine)
        .args(if harness { HARNESS_SRAM } else { &[] })
        .args(["-display", "none", "-monitor", "none", "-serial", "null"])
        .args(["-semihosting-config", "enable=on,target=native"])
        .args(["-icount", "shift=0", "-kernel"])
        .arg(elf)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap_or_else(|e| panic!("cannot start {QEMU}: {e}"));
    let drain = |mut pipe: Box<dyn Read + Send>| {
        thread::spawn(move || {
            let mut bytes = Vec::new();
            let _ = pipe.read_to_end(&mut bytes);
            bytes
        })
    };
    let stdout = drain(Box::new(child.stdout.take().expect("piped stdout")));
    let stderr = drain(Box::new(child.stderr.take().expect("piped stderr")));
    let deadline = Instant::now() + TIMEOUT;
    let status = loop {
        if let Some(status) = child.try_wait().expect("wait for the emulator") {
            break Some(status);
        }
        if Instant::now() >= deadline {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        thread::sleep(Duration::from_millis(20));
    };
    let stdout = String::from_utf8_lossy(&stdout.join().expect("stdout reader")).into_owned();
    let stderr = String::from_utf8_lossy(&stderr.join().expect("stderr reader")).into_owned();
    let name = elf.display();
    match status {
        None => panic!(
            "{name} on {} did not finish within {} s and was killed\nstdout:\n{stdout}\nstderr:\n{stderr}",
            core.triple,
            TIMEOUT.as_secs()
        ),
        Some(s) if !s.success() => panic!(
            "{name} on {} exited with {s}\nstdout:\n{stdout}\nstderr:\n{stderr}",
            core.triple
        ),
        Some(_) => stdout,
    }
}

/// Equal texts, or a failure that names the first differing line.
fn assert_same_text(expected: &str, got: &str, what: &str) {
    if expected == got {
        return;
    }
    let mut exp = expected.lines();
    let mut act = got.lines();
    for line in 1.. {
        match (exp.next(), act.next()) {
            (Some(e), Some(a)) if e == a => continue,
            (None, None) => break,
            (e, a) => panic!(
                "{what} differs at line {line}:\n host:     {}\n emulated: {}",
                e.unwrap_or("<end of output>"),
                a.unwrap_or("<end of output>")
            ),
        }
    }
    panic!("{what} differs in line endings or trailing text");
}

fn host_pipeline() -> String {
    let mut text = String::new();
    pipeline::run(&mut text).expect("writing to a String cannot fail");
    readout::run(&mut text).expect("writing to a String cannot fail");
    text
}

fn check_pipeline(core: &Core) {
    if !prerequisites(true) {
        return;
    }
    let elf = build(core, "pipeline", &[]);
    let emulated = emulate(core, &elf);
    assert_same_text(
        &host_pipeline(),
        &emulated,
        &format!("pipeline output on {}", core.triple),
    );
}

#[test]
fn host_pipeline_has_one_line_per_case() {
    let text = host_pipeline();
    let lines = text.lines().count();
    let cases = pipeline::UNITS.len()
        + pipeline::ROWS.len()
        + pipeline::CAPTURES.len()
        + pipeline::WIDENERS.len();
    // The readout: the board, one line per image, row and malformed image.
    let readout_cases = 1 + readout::IMAGES.len() + readout::ROWS.len() + readout::MALFORMED.len();
    // A header and an end marker around each table.
    assert_eq!(lines, cases + 2 + readout_cases + 2, "{text}");
    assert!(text.contains("\n# end\n# lc-core readout"), "{text}");
    assert!(text.ends_with("# end readout\n"));
}

/// The readout reaches every status it is meant to show: each malformed
/// image is refused with its own error (one is accepted as stored in a
/// flash page), and every unit gives readings.
#[test]
fn host_readout_covers_its_cases() {
    let mut text = String::new();
    readout::run(&mut text).unwrap();
    for needle in [
        "board ntc=ok chain=ok",
        "-> reader=Proximity",
        "-> reader=Level",
        "-> reader=Metal",
        "error=Truncated",
        "error=BadMagic",
        "error=UnknownVersion",
        "error=LengthMismatch",
        "error=BadCrc",
        "error=OutOfRange(ReaderKind)",
        "error=BadCurve(NotMonotone)",
        "error=BadWindow(EmptyBand)",
        "error=BadDrift(CorrectionTooLarge)",
        "error=BadVolume(BadDerivatives)",
        "error=OutOfRange(Reserved)",
        "same_as_base=true",
        "status=Ok",
        "status=NoTarget",
        "status=BelowRange",
        "status=AboveRange",
        "status=SensorFault(Counts(NoOscillation))",
        "status=SensorFault(Counts(NoReference))",
        "status=SensorFault(Counts(FrequencyTooHigh))",
        "status=SensorFault(Counts(FrequencyTooLow))",
        "status=SensorFault(Counts(TooFewCycles))",
        "status=SensorFault(Companion(None))",
        "status=SensorFault(Companion(Some(NoOscillation)))",
        "status=SensorFault(Companion(Some(FrequencyTooLow)))",
        "status=SensorFault(Reference)",
        "t=SensorShorted",
        "t=SensorOpen",
        "t=CodeOutOfRange",
        "t=OutOfRange",
        "event=Entered",
        "event=Left",
    ] {
        assert!(text.contains(needle), "missing `{needle}` in:\n{text}");
    }
    assert!(!text.contains("no reader"), "{text}");
}

#[test]
fn pipeline_on_cortex_m0_matches_host() {
    check_pipeline(&M0);
}

#[test]
fn pipeline_on_cortex_m4f_matches_host() {
    check_pipeline(&M4F);
}

/// The panic-freedom proof: the build succeeding is the proof. The run then
/// checks that the proof binary computed what the host computes.
#[test]
fn panic_never_proof_links_and_matches_host() {
    if !prerequisites(false) {
        return;
    }
    let expected = expected_digests();
    let elfs = [&M0, &M4F].map(|core| (core, build(core, "panic_proof", &["panic-never"])));
    if !prerequisites(true) {
        return;
    }
    for (core, elf) in elfs {
        assert_same_text(
            &expected,
            &emulate(core, &elf),
            &format!("panic-proof digest on {}", core.triple),
        );
    }
}

/// The panic-freedom proof again, built with overflow checks on (the
/// firmware crate's `release-checked` profile): it links only if no
/// addition, subtraction, multiplication or shift on the proof's paths can
/// overflow unseen, and it computes the same digests.
#[test]
fn panic_never_proof_links_with_overflow_checks() {
    if !prerequisites(false) {
        return;
    }
    let expected = expected_digests();
    let elfs = [&M0, &M4F].map(|core| {
        let elf = build_with(core, "panic_proof", &["panic-never"], "release-checked");
        (core, elf)
    });
    if !prerequisites(true) {
        return;
    }
    for (core, elf) in elfs {
        assert_same_text(
            &expected,
            &emulate(core, &elf),
            &format!("overflow-checked panic-proof digest on {}", core.triple),
        );
    }
}

/// What the panic-never proof prints, computed on the host.
fn expected_digests() -> String {
    format!(
        "digest {:08x}\nreadout {:08x}\nscan {:08x}\n",
        pipeline::digest(
            &pipeline::UNITS,
            &pipeline::ROWS,
            &pipeline::CAPTURES,
            &pipeline::WIDENERS,
        ),
        readout::digest(
            &readout::BOARD,
            &readout::IMAGES,
            &readout::MALFORMED,
            readout::ROWS
        ),
        scan::digest(&scan::LOG, &scan::PIN_BUDGETS, &scan::NTC_CODES),
    )
}

#[test]
fn cost_runs_on_both_cores() {
    if !prerequisites(true) {
        return;
    }
    for core in [&M0, &M4F] {
        let out = emulate(core, &build(core, "cost", &[]));
        assert!(out.contains("instructions per tick"), "{out}");
        assert!(out.contains("fixed shift, configured gate"), "{out}");
        assert!(out.contains("fixed proximity: pair + T -> gap"), "{out}");
        assert!(
            out.contains("f32 level: 2 pairs + T -> level, volume"),
            "{out}"
        );
        // The f32 versions compute what the fixed readers compute.
        assert!(out.contains("max |gap difference| 0 um"), "{out}");
        assert!(out.contains("0 class mismatches"), "{out}");
        assert!(out.ends_with("# end\n"), "{out}");
    }
}

fn host_faults() -> String {
    let mut text = String::new();
    faults::run(&mut text).expect("writing to a String cannot fail");
    text
}

/// The fault sample gives each fault its own status on the host: every
/// injected kind is a sensor fault from its first reading (a frozen
/// counter from the readers' limit), the clean rows and the readings of a
/// freeze before the limit are not, and a unit without a drift model
/// ignores its temperature.
#[test]
fn host_fault_sample_flags_every_kind() {
    let text = host_faults();
    let line = |unit: &str, tag: &str| {
        text.lines()
            .find(|l| l.starts_with(&format!("{unit} {tag} ")))
            .unwrap_or_else(|| panic!("no line {unit} {tag} in:\n{text}"))
            .to_string()
    };
    let limit = lc_core::reader::DEFAULT_FROZEN_LIMIT;
    for (unit, tag, want) in [
        ("demo-proximity-tc", "clean", "first_fault=- status=Ok"),
        (
            "demo-proximity-tc",
            "stuck",
            &*format!("first_fault={limit} status=SensorFault(Frozen)"),
        ),
        (
            "demo-proximity-tc",
            "stuck_onset",
            "first_fault=- status=Ok",
        ),
        (
            "demo-proximity-tc",
            "ntc_open",
            "first_fault=1 status=SensorFault(TemperatureMissing)",
        ),
        (
            "demo-proximity-tc",
            "ntc_short",
            "first_fault=1 status=SensorFault(TemperatureOutOfDomain)",
        ),
        (
            "demo-proximity-tc",
            "temp_spike-273.15",
            "first_fault=1 status=SensorFault(TemperatureOutOfDomain)",
        ),
        (
            "demo-proximity-tc",
            "temp_spike1e7",
            "first_fault=1 status=SensorFault(TemperatureOutOfDomain)",
        ),
        (
            "demo-proximity-tc",
            "temp_domain_end",
            "first_fault=- status=Ok",
        ),
        (
            "demo-proximity-tc",
            "channel_swap-level-counts",
            "first_fault=1 status=SensorFault(OutOfReach)",
        ),
        ("demo-proximity-32", "clean", "first_fault=- status=Ok"),
        (
            "demo-proximity-32",
            "ntc_open",
            "first_fault=1 status=SensorFault(TemperatureMissing)",
        ),
        (
            "demo-proximity-32",
            "stuck",
            &*format!("first_fault={limit} status=SensorFault(Frozen)"),
        ),
        ("demo-level", "clean", "first_fault=- status=Ok"),
        (
            "demo-level",
            "stuck",
            &*format!("first_fault={limit} status=SensorFault(Frozen)"),
        ),
        (
            "demo-level",
            "ntc_open",
            "first_fault=1 status=SensorFault(TemperatureMissing)",
        ),
        (
            "demo-level",
            "temp_spike1000",
            "first_fault=1 status=SensorFault(TemperatureOutOfDomain)",
        ),
        (
            "demo-level",
            "reference_drying-10%",
            "first_fault=1 status=SensorFault(ReferenceLow)",
        ),
        (
            "demo-level",
            "reference_drying-1%",
            "first_fault=1 status=SensorFault(ReferenceLow)",
        ),
        (
            "demo-level",
            "channel_swap-proximity-counts",
            "first_fault=1 status=SensorFault(Counts(FrequencyTooHigh))",
        ),
        (
            "demo-metal",
            "clean-no-drift-model",
            "first_fault=- status=NoTarget",
        ),
        (
            "demo-metal",
            "temp_spike-no-drift-model",
            "first_fault=- status=NoTarget",
        ),
        (
            "demo-metal",
            "stuck",
            &*format!("first_fault={limit} status=SensorFault(Frozen)"),
        ),
    ] {
        let l = line(unit, tag);
        assert!(l.contains(want), "{l}: wanted {want}");
    }
    assert_eq!(text.lines().count(), faults::ROWS.len() + 2, "{text}");
}

fn check_faults(core: &Core) {
    if !prerequisites(true) {
        return;
    }
    let elf = build(core, "faults", &[]);
    assert_same_text(
        &host_faults(),
        &emulate(core, &elf),
        &format!("fault sample on {}", core.triple),
    );
}

/// The fault sample's statuses on the emulated Cortex-M0 equal the host's.
#[test]
fn fault_sample_on_cortex_m0_matches_host() {
    check_faults(&M0);
}

/// The fault sample's statuses on the emulated Cortex-M4F equal the host's.
#[test]
fn fault_sample_on_cortex_m4f_matches_host() {
    check_faults(&M4F);
}
