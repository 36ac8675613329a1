//! The example firmwares of `examples/unit-firmware` against their memory
//! budgets (issue 13), on the emulated Cortex-M0 (QEMU `microbit`,
//! `thumbv6m-none-eabi`, opt-level "s", LTO: that crate's release profile).
//!
//! | firmware | image (`lc-host calibrate`) | flash | RAM |
//! |---|---|---:|---:|
//! | `proximity` | 32-node cubic curve | 8 KiB | 1 KiB |
//! | `level` | reference electrode, 24-node curve, 64-node cubic volume table | 10 KiB | 1.5 KiB |
//! | `metal` | ring-down | 6 KiB | 512 B |
//!
//! How each figure is measured:
//!
//! - **flash**: the loaded sections of the ELF: `.vector_table`, `.text`,
//!   `.rodata`, `.data` (its initial values) and `.gnu.sgstubs`. The
//!   calibration image sits in a section of its own, `.calibration` (its
//!   own flash page, `examples/unit-firmware/build.rs`), so it is not
//!   counted; [`measure`] checks that section holds exactly the image.
//! - **static RAM**: `.data` + `.bss` + `.uninit`.
//! - **peak stack**: cortex-m-rt's `paint-stack` fills the stack with a
//!   pattern in the reset handler, before `main`; after its last reading
//!   the firmware finds the lowest word written and prints `stack <bytes>`
//!   (start-up, validation and reader construction included).
//! - **RAM** = static RAM + peak stack.
//!
//! Each firmware is built twice: with 64 KiB of RAM (`LC_UNIT_RAM_BYTES`),
//! so that it runs and reports its figures even over budget, and with its
//! budget (the default layout: the RAM region is the budget, the stack at
//! the bottom below the statics, so an overflow faults at once).
//!
//! The tests:
//!
//! - [`footprint_and_readings`]: prints the figures; in the 64 KiB layout each firmware's
//!   printed readings equal, byte for byte, the same reader's on the host
//!   (same image bytes, same inputs, the same line format: the two files
//!   `report.rs` and `script.rs` are compiled here too);
//! - [`over_budget_runs_fail_loudly`]: in the budget layout a firmware
//!   either prints exactly the host's readings or fails (a fault, a
//!   non-zero exit): never wrong readings from an overrun stack;
//! - [`images_are_fresh`]: the committed images are what `lc-host
//!   simulate` + `lc-host calibrate` make (`LC_WRITE_IMAGES=1` rewrites
//!   them; `examples/unit-firmware/run.sh images` does the same with the
//!   CLI);
//! - [`within_budget`]: flash and RAM within budget and a clean run in the
//!   budget layout (the RAM region set to the budget: 1 KiB, 1.5 KiB,
//!   512 B), all three; it fails above the budgets (docs/performance.md,
//!   "Footprint of the unit firmwares").
//!
//! `cargo test --test firmware_budget footprint -- --nocapture` prints
//! the figures (scripts/check.sh does, after the test suite). Size and stack are deterministic for a pinned toolchain:
//! these are budget checks, not timings.

#[path = "../lc-core/capi/tests/support/readings.rs"]
mod readings;
#[path = "../examples/unit-firmware/src/report.rs"]
#[allow(dead_code)]
mod report;
#[path = "../examples/unit-firmware/src/script.rs"]
mod script;

use std::env;
use std::ffi::OsString;
use std::fmt::Write as _;
use std::fs;
use std::io::{Cursor, Read};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::OnceLock;
use std::thread;
use std::time::{Duration, Instant};

use lc_core::image::{ImageBuf, ReaderKind};
use lc_core::reader::Input;

const TRIPLE: &str = "thumbv6m-none-eabi";
const QEMU: &str = "qemu-system-arm";
/// RAM of the measuring build, and the emulated SRAM it runs in.
const MEASURE_RAM: u32 = 65_536;
const TIMEOUT: Duration = Duration::from_secs(60);

/// One example firmware and its budget.
struct Example {
    bin: &'static str,
    image: &'static str,
    kind: ReaderKind,
    inputs: &'static [Input],
    flash_budget: u64,
    ram_budget: u64,
}

const EXAMPLES: [Example; 3] = [
    Example {
        bin: "proximity",
        image: "proximity.lcim",
        kind: ReaderKind::Proximity,
        inputs: &script::PROXIMITY,
        flash_budget: 8 * 1024,
        ram_budget: 1024,
    },
    Example {
        bin: "level",
        image: "level.lcim",
        kind: ReaderKind::Level,
        inputs: &script::LEVEL,
        flash_budget: 10 * 1024,
        ram_budget: 1536,
    },
    Example {
        bin: "metal",
        image: "metal.lcim",
        kind: ReaderKind::Metal,
        inputs: &script::METAL,
        flash_budget: 6 * 1024,
        ram_budget: 512,
    },
];

fn crate_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/unit-firmware")
}

fn image_bytes(ex: &Example) -> Vec<u8> {
    let path = crate_dir().join("data").join(ex.image);
    fs::read(&path).unwrap_or_else(|e| panic!("read {}: {e}", path.display()))
}

// ---------------------------------------------------------------------
// The host's side: the same reader on the same bytes and inputs.

/// What the firmware prints before its stack line.
fn host_output(ex: &Example) -> String {
    let bytes = image_bytes(ex);
    let buf = ImageBuf::from_bytes(&bytes).expect("the committed image fits");
    let image = buf.image().expect("the committed image is valid");
    assert_eq!(image.kind(), ex.kind, "{}: image kind", ex.image);
    format!("boot\n{}", readings::reading_lines(&image, ex.inputs))
}

// ---------------------------------------------------------------------
// Prerequisites, build, emulator.

fn on_ci() -> bool {
    env::var("CI").is_ok_and(|v| !v.is_empty() && v != "false" && v != "0")
}

/// `true` to go on; a missing tool skips the test (fails it on CI).
fn prerequisites() -> bool {
    let mut missing = Vec::new();
    if Command::new(QEMU).arg("--version").output().is_err() {
        missing.push(format!(
            "{QEMU} is not installed (apt-get install qemu-system-arm)"
        ));
    }
    let rustc = env::var_os("RUSTC").unwrap_or_else(|| OsString::from("rustc"));
    let sysroot = Command::new(rustc)
        .args(["--print", "sysroot"])
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_owned())
        .unwrap_or_default();
    if !Path::new(&sysroot)
        .join("lib/rustlib")
        .join(TRIPLE)
        .join("lib")
        .is_dir()
    {
        missing.push(format!(
            "Rust target {TRIPLE} not installed (rustup target add {TRIPLE})"
        ));
    }
    if missing.is_empty() {
        return true;
    }
    let reason = missing.join("; ");
    assert!(
        !on_ci(),
        "CI is set, so the budget tests must run: {reason}"
    );
    eprintln!("skipped: {reason}");
    false
}

/// `<target dir>/unit-firmware`, a target directory of its own.
fn target_dir() -> PathBuf {
    let tmp = Path::new(env!("CARGO_TARGET_TMPDIR"));
    tmp.parent().unwrap_or(tmp).join("unit-firmware")
}

/// The two builds, made once per test run, one after the other (they
/// share a target directory, and the layout is chosen by an environment
/// variable read by the build script).
struct Builds {
    /// 64 KiB of RAM: runs whatever the firmware needs.
    measure: PathBuf,
    /// The default layout: each firmware's RAM budget.
    budget: PathBuf,
}

fn builds() -> &'static Builds {
    static BUILDS: OnceLock<Builds> = OnceLock::new();
    BUILDS.get_or_init(|| Builds {
        measure: build_all(Some(MEASURE_RAM), "measure"),
        budget: build_all(None, "budget"),
    })
}

/// Builds the three firmwares and copies them into `<target>/<variant>/`.
fn build_all(ram: Option<u32>, variant: &str) -> PathBuf {
    let dir = crate_dir();
    let target = target_dir();
    let cargo = env::var_os("CARGO").unwrap_or_else(|| OsString::from("cargo"));
    let mut cmd = Command::new(cargo);
    // Cargo reads the crate's .cargo/config.toml (`-Tlink.x`) only when
    // run from its directory; RUSTFLAGS would replace those flags.
    cmd.current_dir(&dir)
        .env("CARGO_TARGET_DIR", &target)
        .env_remove("RUSTFLAGS")
        .env_remove("CARGO_ENCODED_RUSTFLAGS")
        .env_remove("CARGO_BUILD_RUSTFLAGS")
        .args(["build", "--release", "--target", TRIPLE, "--bins"])
        .arg("--manifest-path")
        .arg(dir.join("Cargo.toml"));
    match ram {
        Some(n) => cmd.env("LC_UNIT_RAM_BYTES", n.to_string()),
        None => cmd.env_remove("LC_UNIT_RAM_BYTES"),
    };
    let out = cmd.output().expect("run cargo");
    assert!(
        out.status.success(),
        "building examples/unit-firmware ({variant}) failed:\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let dest = target.join(variant);
    fs::create_dir_all(&dest).expect("create the copy folder");
    for ex in &EXAMPLES {
        let elf = target.join(TRIPLE).join("release").join(ex.bin);
        fs::copy(&elf, dest.join(ex.bin)).unwrap_or_else(|e| panic!("copy {}: {e}", elf.display()));
    }
    dest
}

/// An emulator run: exit status (None: killed, lock-up or timeout),
/// standard output and standard error.
struct Run {
    status: Option<i32>,
    stdout: String,
    stderr: String,
}

fn emulate(elf: &Path, sram: Option<u32>) -> Run {
    let mut cmd = Command::new(QEMU);
    cmd.args(["-machine", "microbit", "-cpu", "cortex-m0"]);
    if let Some(bytes) = sram {
        cmd.args(["-global", &format!("nrf51-soc.sram-size={bytes}")]);
    }
    let mut child = cmd
        .args(["-display", "none", "-monitor", "none", "-serial", "null"])
        .args(["-semihosting-config", "enable=on,target=native", "-kernel"])
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
            String::from_utf8_lossy(&bytes).into_owned()
        })
    };
    let stdout = drain(Box::new(child.stdout.take().expect("piped stdout")));
    let stderr = drain(Box::new(child.stderr.take().expect("piped stderr")));
    let deadline = Instant::now() + TIMEOUT;
    let status = loop {
        if let Some(s) = child.try_wait().expect("wait for the emulator") {
            break s.code();
        }
        if Instant::now() >= deadline {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        thread::sleep(Duration::from_millis(20));
    };
    Run {
        status,
        stdout: stdout.join().expect("stdout reader"),
        stderr: stderr.join().expect("stderr reader"),
    }
}

// ---------------------------------------------------------------------
// ELF sections.

/// Name and size of every section of a 32-bit little-endian ELF file.
fn sections(elf: &[u8]) -> Vec<(String, u64)> {
    let u16_at = |at: usize| u16::from_le_bytes([elf[at], elf[at + 1]]) as usize;
    let u32_at = |at: usize| u32::from_le_bytes(elf[at..at + 4].try_into().unwrap()) as usize;
    assert_eq!(&elf[..5], b"\x7fELF\x01", "a 32-bit ELF file");
    let (shoff, shentsize, shnum, shstrndx) =
        (u32_at(0x20), u16_at(0x2E), u16_at(0x30), u16_at(0x32));
    let header = |i: usize| shoff + i * shentsize;
    let names = u32_at(header(shstrndx) + 0x10);
    (0..shnum)
        .map(|i| {
            let h = header(i);
            let name_at = names + u32_at(h);
            let end = elf[name_at..].iter().position(|&b| b == 0).unwrap();
            let name = String::from_utf8_lossy(&elf[name_at..name_at + end]).into_owned();
            (name, u32_at(h + 0x14) as u64)
        })
        .collect()
}

/// One firmware's figures.
#[derive(Debug)]
struct Figures {
    flash: u64,
    image: u64,
    statics: u64,
    stack: u64,
}

impl Figures {
    fn ram(&self) -> u64 {
        self.statics + self.stack
    }
}

/// The figures of `ex` from its measuring build and run; also checks its
/// readings against the host's.
fn measure(ex: &Example) -> Figures {
    let elf_path = builds().measure.join(ex.bin);
    let elf = fs::read(&elf_path).expect("read the ELF");
    let secs = sections(&elf);
    let size = |names: &[&str]| -> u64 {
        secs.iter()
            .filter(|(n, _)| names.contains(&n.as_str()))
            .map(|(_, s)| s)
            .sum()
    };
    let image = size(&[".calibration"]);
    assert_eq!(
        image,
        image_bytes(ex).len() as u64,
        "{}: the .calibration section holds exactly the image",
        ex.bin
    );
    let run = emulate(&elf_path, Some(MEASURE_RAM));
    assert_eq!(
        run.status,
        Some(0),
        "{} ({} KiB RAM) failed:\n{}{}",
        ex.bin,
        MEASURE_RAM / 1024,
        run.stdout,
        run.stderr
    );
    let (readings, stack) = split_stack_line(&run.stdout)
        .unwrap_or_else(|| panic!("{}: no stack line in\n{}", ex.bin, run.stdout));
    assert_eq!(
        readings,
        host_output(ex),
        "{}: the firmware's readings differ from the host's",
        ex.bin
    );
    Figures {
        flash: size(&[".vector_table", ".text", ".rodata", ".data", ".gnu.sgstubs"]),
        image,
        statics: size(&[".data", ".bss", ".uninit"]),
        stack,
    }
}

/// The output before `stack <n>` and n.
fn split_stack_line(out: &str) -> Option<(String, u64)> {
    let at = out.rfind("stack ")?;
    let n = out[at + 6..].trim().parse().ok()?;
    Some((out[..at].to_owned(), n))
}

fn table(rows: &[(&Example, Figures)]) -> String {
    let mut t =
        String::from("firmware     flash (budget)      image  static  peak stack  RAM (budget)\n");
    for (ex, f) in rows {
        let _ = writeln!(
            t,
            "{:<10} {:>6} B ({:>5} B)  {:>6} B  {:>4} B  {:>8} B  {:>5} B ({:>4} B)",
            ex.bin,
            f.flash,
            ex.flash_budget,
            f.image,
            f.statics,
            f.stack,
            f.ram(),
            ex.ram_budget
        );
    }
    t
}

// ---------------------------------------------------------------------
// Tests.

/// Each firmware's readings equal the host's, and its figures are printed
/// (`-- --nocapture`).
#[test]
fn footprint_and_readings() {
    if !prerequisites() {
        return;
    }
    let rows: Vec<_> = EXAMPLES.iter().map(|ex| (ex, measure(ex))).collect();
    println!("{}", table(&rows));
}

/// In its budget layout a firmware prints exactly the host's readings, or
/// fails loudly (stack overflow: a fault and a lock-up, or a non-zero
/// exit). Never a silent overrun: the stack sits below the statics.
#[test]
fn over_budget_runs_fail_loudly() {
    if !prerequisites() {
        return;
    }
    for ex in &EXAMPLES {
        let run = emulate(&builds().budget.join(ex.bin), None);
        let expected = host_output(ex);
        match (run.status, split_stack_line(&run.stdout)) {
            (Some(0), Some((readings, stack))) => {
                assert_eq!(readings, expected, "{}: budget layout", ex.bin);
                assert!(stack > 0, "{}: the stack was measured", ex.bin);
            }
            (Some(0), None) => panic!("{}: exit 0 without its stack line", ex.bin),
            _ => {
                // Whatever was printed before the fault is a prefix of the
                // host's output: no wrong reading.
                assert!(
                    expected.starts_with(&run.stdout),
                    "{}: wrong output before the fault:\n{}",
                    ex.bin,
                    run.stdout
                );
            }
        }
    }
}

/// Where `ex` (measured as `f`) misses its budgets: flash, static RAM +
/// peak stack, and a clean run with the host's readings in the budget
/// layout.
fn misses(ex: &Example, f: &Figures) -> Vec<String> {
    let mut over = Vec::new();
    if f.flash > ex.flash_budget {
        over.push(format!(
            "{}: flash {} B > {} B",
            ex.bin, f.flash, ex.flash_budget
        ));
    }
    if f.ram() > ex.ram_budget {
        over.push(format!(
            "{}: RAM {} B (static {} + stack {}) > {} B",
            ex.bin,
            f.ram(),
            f.statics,
            f.stack,
            ex.ram_budget
        ));
    }
    let run = emulate(&builds().budget.join(ex.bin), None);
    let clean = run.status == Some(0)
        && split_stack_line(&run.stdout).is_some_and(|(r, _)| r == host_output(ex));
    if !clean {
        over.push(format!(
            "{}: no clean run in its {} B layout (exit {:?}): {} / {}",
            ex.bin,
            ex.ram_budget,
            run.status,
            run.stdout.lines().last().unwrap_or("no output"),
            run.stderr.lines().next().unwrap_or("")
        ));
    }
    over
}

/// Flash ≤ budget, static RAM + peak stack ≤ budget, and a clean run with
/// the host's readings in the budget layout.
#[test]
fn within_budget() {
    if !prerequisites() {
        return;
    }
    let rows: Vec<_> = EXAMPLES.iter().map(|ex| (ex, measure(ex))).collect();
    let figures = table(&rows);
    println!("{figures}");
    let over: Vec<String> = rows.iter().flat_map(|(ex, f)| misses(ex, f)).collect();
    assert!(
        over.is_empty(),
        "over budget:\n  {}\n{figures}",
        over.join("\n  ")
    );
}

/// The committed images are what `lc-host simulate` and `lc-host
/// calibrate` make from the plans in `examples/unit-firmware/data` (the
/// library functions the CLI calls). `LC_WRITE_IMAGES=1` rewrites them.
#[test]
fn images_are_fresh() {
    use lc_host::calib::lot::calibrate_lot;
    use lc_host::calib::plan::Plan;
    use lc_host::riglog::RigLogReader;
    use lc_host::sim::level::write_level_rig_log;
    use lc_host::sim::rig::{write_rig_log, LotSpec};
    use lc_host::store::Store;

    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let work = Path::new(env!("CARGO_TARGET_TMPDIR")).join("unit-firmware-images");
    let _ = fs::remove_dir_all(&work);
    fs::create_dir_all(&work).expect("work folder");
    let mut rig = Vec::new();
    write_rig_log(&LotSpec::demo("DEMO-01", 1, 1), &mut rig).expect("rig log");
    let mut level_rig = Vec::new();
    write_level_rig_log("TANK-01", 1, 1, &mut level_rig).expect("level rig log");
    let data = crate_dir().join("data");
    let cases = [
        (
            "proximity.lcim",
            &rig,
            root.join("examples/data/demo-plan.toml"),
            "DEMO-01",
            "DEMO-01-0001",
        ),
        (
            "level.lcim",
            &level_rig,
            data.join("level-plan.toml"),
            "TANK-01",
            "TANK-01-0001",
        ),
        (
            "metal.lcim",
            &rig,
            data.join("metal-plan.toml"),
            "DEMO-01",
            "DEMO-01-0001",
        ),
    ];
    let write = env::var_os("LC_WRITE_IMAGES").is_some();
    for (file, log, plan, lot, serial) in cases {
        let plan = Plan::load(&plan).expect("plan");
        let mut store = Store::open(work.join(format!("{file}.db"))).expect("database");
        let images = work.join(file);
        fs::create_dir_all(&images).expect("images folder");
        let reader = RigLogReader::new(Cursor::new(log.clone()), Path::new("rig.csv"))
            .expect("rig log reader");
        let report = calibrate_lot(reader, lot, &plan, &mut store, Some(&images), |_| {})
            .expect("calibrate");
        assert_eq!(report.passed, 1, "{file}: the unit passes");
        let made = fs::read(images.join(format!("{serial}.lcim"))).expect("image written");
        let committed = data.join(file);
        if write {
            fs::write(&committed, &made).expect("write the image");
            continue;
        }
        let on_disk = fs::read(&committed).unwrap_or_default();
        assert!(
            on_disk == made,
            "{} is stale: regenerate with `LC_WRITE_IMAGES=1 cargo test --test \
             firmware_budget images_are_fresh` (or examples/unit-firmware/run.sh images)",
            committed.display()
        );
    }
}
