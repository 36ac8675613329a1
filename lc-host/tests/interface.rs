//! One interface across the commands: positional inputs (with the former
//! flags still accepted), one name per option (radius or diameter either
//! way), SI prefixes wherever a quantity is asked, no Rust `Debug` text in
//! what a user reads, out-of-domain inputs refused, count-like options
//! bounded, one number format, and typed errors from the library.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .args(args)
        .current_dir(root())
        .output()
        .unwrap()
}

fn ok(args: &[&str]) -> String {
    let out = run(args);
    assert!(
        out.status.success(),
        "lc-host {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn fails(args: &[&str]) -> String {
    let out = run(args);
    assert!(!out.status.success(), "lc-host {args:?} succeeded");
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(!err.contains("panicked"), "{err}");
    err
}

const IMAGE: &str = "examples/firmware/data/demo-proximity.lcim";
const LOG: &str = "examples/data/demo-counts.csv";

/// Inputs are positional everywhere; `convert --input` and `verify
/// --image`, the former flags, give the same output.
#[test]
fn inputs_are_positional_and_the_former_flags_still_work() {
    let new = ok(&["convert", LOG, "--image", IMAGE]);
    assert!(new.lines().count() > 100);
    assert_eq!(ok(&["convert", "--image", IMAGE, "--input", LOG]), new);
    assert_eq!(
        ok(&["convert", "--image", IMAGE, &format!("--input={LOG}")]),
        new
    );
    let v = ok(&[
        "verify",
        IMAGE,
        "--points",
        "1k",
        "--threads",
        "1",
        "--json",
    ]);
    assert_eq!(
        ok(&[
            "verify",
            "--image",
            IMAGE,
            "--points",
            "1000",
            "--threads",
            "1",
            "--json"
        ]),
        v
    );
    for help in [
        "counts",
        "calibrate",
        "inspect",
        "convert",
        "verify",
        "volume",
    ] {
        let h = ok(&[help, "--help"]);
        let usage = h
            .lines()
            .find(|l| l.starts_with("Usage:"))
            .unwrap()
            .to_string();
        assert!(
            usage.contains(" <") || usage.contains(" ["),
            "{help}: {usage}"
        );
        assert!(!h.contains("--input <"), "{help} still documents --input");
    }
}

/// `--temperature` everywhere (`--temp` still accepted by probe); a round
/// size as radius or diameter, either way the same result.
#[test]
fn option_names_are_consistent() {
    let probe = ["probe", "--length", "400mm", "--liquid", "water", "--json"];
    let a = ok(&[
        &probe[..],
        &["--inner", "5mm", "--outer", "20mm", "--temperature", "40"],
    ]
    .concat());
    let b = ok(&[
        &probe[..],
        &[
            "--inner-diameter",
            "10mm",
            "--outer-radius",
            "20mm",
            "--temp",
            "40",
        ],
    ]
    .concat());
    assert_eq!(a, b);
    let sol = [
        "coil", "solenoid", "--length", "24mm", "--turns", "20", "--json",
    ];
    assert_eq!(
        ok(&[&sol[..], &["--radius", "12.5mm"]].concat()),
        ok(&[&sol[..], &["--diameter", "25mm"]].concat())
    );
    let spi = [
        "coil",
        "spiral",
        "--shape",
        "circular",
        "--turns",
        "10",
        "--width",
        "0.2mm",
        "--spacing",
        "0.2mm",
        "--json",
    ];
    assert_eq!(
        ok(&[&spi[..], &["--outer", "10mm"]].concat()),
        ok(&[&spi[..], &["--outer-radius", "5mm"]].concat())
    );
    let e = fails(&[&sol[..], &["--radius", "12.5mm", "--diameter", "25mm"]].concat());
    assert!(e.contains("cannot be used with"), "{e}");
}

/// SI prefixes for every quantity: `counts --reference-hz 48M --band
/// 1M:20M` is the same as the plain numbers.
#[test]
fn si_prefixes_everywhere() {
    let base = [
        "counts",
        LOG,
        "--rest",
        "16384:139542",
        "--gate-cycles",
        "16384",
    ];
    let plain = ok(&[
        &base[..],
        &["--reference-hz", "48000000", "--band", "1000000:20000000"],
    ]
    .concat());
    let si = ok(&[&base[..], &["--reference-hz", "48M", "--band", "1M:20M"]].concat());
    assert_eq!(plain, si);
    let hz = ok(&[
        "counts",
        LOG,
        "--rest",
        "16384:139542",
        "--reference-hz",
        "48MHz",
        "--gate-cycles",
        "16k",
    ]);
    assert_eq!(hz.lines().count(), plain.lines().count());
    let e = fails(&[&base[..], &["--reference-hz", "48.5"]].concat());
    assert!(e.contains("whole number of hertz"), "{e}");
}

/// No Rust `Debug` text: a count pair prints as CYCLES:TICKS, the gating as
/// a word, enum names not at all.
#[test]
fn no_debug_output_reaches_a_user() {
    let e = fails(&["counts", LOG, "--reference-hz", "48M", "--rest", "0:0"]);
    assert!(e.contains("rest point 0:0"), "{e}");
    assert!(!e.contains("CountPair") && !e.contains('{'), "{e}");
    let b = ok(&[
        "budget",
        "--reference-hz",
        "48M",
        "--gate-cycles",
        "16384",
        "--inductance",
        "7.25u",
        "--capacitance",
        "100p",
        "--parasitic",
        "10p",
    ]);
    assert!(b.contains("reciprocal: 16384 cycles"), "{b}");
    assert!(!b.contains("Reciprocal"), "{b}");
    let v = ok(&[
        "volume",
        "--shape",
        "rectangular",
        "--width",
        "1m",
        "--depth",
        "1m",
        "--height",
        "1m",
        "--json",
    ]);
    assert!(
        v.contains("\"shape\": \"rectangular\"") && !v.contains("Rectangular"),
        "{v}"
    );
}

/// `inspect` names the reader kind as a word in text and JSON.
#[test]
fn inspect_names_the_reader_kind_in_words() {
    let t = ok(&["inspect", "examples/firmware/data/demo-level.lcim"]);
    assert!(t.contains("reader        level"), "{t}");
    assert!(!t.contains("Level\n"), "{t}");
    let j = ok(&[
        "inspect",
        "examples/firmware/data/demo-metal.lcim",
        "--json",
    ]);
    assert!(j.contains("\"kind\": \"metal\""), "{j}");
}

/// Out-of-domain design inputs: water outside 0–100 °C is an error, a CRC
/// liquid far from 20 °C a warning; a level outside a tank an error.
#[test]
fn out_of_domain_inputs_are_refused_or_flagged() {
    let probe = [
        "probe", "--length", "400mm", "--inner", "5mm", "--outer", "20mm",
    ];
    let e = fails(&[&probe[..], &["--liquid", "water", "--temperature", "-10"]].concat());
    assert!(e.contains("0 to 100 °C"), "{e}");
    let out = run(&[&probe[..], &["--liquid", "ethanol", "--temperature", "60"]].concat());
    assert!(out.status.success());
    let warn = String::from_utf8_lossy(&out.stderr);
    assert!(warn.contains("warning") && warn.contains("20 °C"), "{warn}");
    let e = fails(&[
        "volume",
        "--shape",
        "vertical-cylinder",
        "--radius",
        "1m",
        "--height",
        "1m",
        "--level",
        "2m",
    ]);
    assert!(e.contains("outside the tank"), "{e}");
}

/// Count-like options are bounded: no `inf`, no out-of-memory abort.
#[test]
fn count_like_options_are_bounded() {
    let probe = [
        "probe", "--length", "400mm", "--inner", "5mm", "--outer", "20mm",
    ];
    let e = fails(&[&probe[..], &["--steps", "4000000000"]].concat());
    assert!(e.contains("from 1 to 10000"), "{e}");
    let e = fails(&[
        "budget",
        "--reference-hz",
        "48M",
        "--gate-cycles",
        "0",
        "--inductance",
        "7.25u",
        "--capacitance",
        "100p",
    ]);
    assert!(e.contains("from 1 to"), "{e}");
    let e = fails(&[
        "budget",
        "--reference-hz",
        "48M",
        "--gate-time",
        "0",
        "--inductance",
        "7.25u",
        "--capacitance",
        "100p",
    ]);
    assert!(e.contains("--gate-time must be above zero"), "{e}");
    let e = fails(&["verify", IMAGE, "--points", "100000000000"]);
    assert!(e.contains("from 0 to 10000000000"), "{e}");
    let e = fails(&["verify", IMAGE, "--threads", "0"]);
    assert!(e.contains("from 1 to 1024"), "{e}");
    let e = fails(&["simulate", "rig", "--units", "0"]);
    assert!(e.contains("from 1 to 1000000"), "{e}");
    let e = fails(&[
        "volume",
        "--shape",
        "rectangular",
        "--width",
        "1m",
        "--depth",
        "1m",
        "--height",
        "1m",
        "--steps",
        "0",
    ]);
    assert!(e.contains("1..=10000"), "{e}");
}

/// One number format: the budget prints with the library's formatter (four
/// significant digits).
#[test]
fn one_engineering_format() {
    let b = ok(&[
        "budget",
        "--reference-hz",
        "48M",
        "--gate-cycles",
        "16384",
        "--inductance",
        "7.25u",
        "--capacitance",
        "100p",
        "--parasitic",
        "10p",
    ]);
    let f = lc_core::tank::resonant_frequency_with_parasitic_hz(7.25e-6, 100e-12, 10e-12);
    let want = lc_host::quantity::eng(f, "Hz");
    assert!(
        b.contains(&format!("resonant frequency                     {want}")),
        "{want}\n{b}"
    );
}

/// The library's demo returns a typed error naming the path, not an
/// `anyhow` chain.
#[test]
fn the_demo_returns_typed_errors() {
    let e = lc_host::demo::run(Path::new("/dev/null/demo"), &mut Vec::new()).unwrap_err();
    assert!(matches!(e, lc_host::demo::DemoError::File { .. }), "{e:?}");
    assert!(e.to_string().contains("/dev/null/demo"), "{e}");
}
