//! The `lc-host` binary end to end: demo log, bad input, atomic output.

use std::path::{Path, PathBuf};
use std::process::Command;

fn lc_host() -> Command {
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
}

fn demo_log() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-counts.csv")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("lc-host-cli-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

const DEMO_ARGS: [&str; 8] = [
    "--reference-hz",
    "48000000",
    "--rest",
    "16384:139542",
    "--gate-cycles",
    "16384",
    "--band",
    "1000000:20000000",
];

#[test]
fn converts_the_demo_log() {
    let dir = scratch("demo");
    let out = dir.join("readings.csv");
    let run = lc_host()
        .arg("counts")
        .arg(demo_log())
        .args(DEMO_ARGS)
        .arg("-o")
        .arg(&out)
        .output()
        .expect("run");
    assert!(
        run.status.success(),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let stderr = String::from_utf8_lossy(&run.stderr);
    assert!(
        stderr
            .contains("201 rows: 199 ok, 0 out of range or no target, 2 sensor faults, 0 skipped"),
        "{stderr}"
    );
    let text = std::fs::read_to_string(&out).expect("output");
    assert_eq!(text.lines().count(), 202);
    assert!(text.contains(",fault_no_oscillation,") && text.contains(",fault_no_reference,"));
    // No temporary file is left beside the output.
    let leftovers: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(Result::ok)
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty());
    std::fs::remove_dir_all(dir).ok();
}

#[test]
fn a_bad_row_names_file_line_and_field_and_leaves_no_output() {
    let dir = scratch("bad");
    let log = dir.join("log.csv");
    std::fs::write(&log, "cycles,ticks\n16384,139542\n16384,13x542\n").unwrap();
    let out = dir.join("readings.csv");
    let run = lc_host()
        .arg("counts")
        .arg(&log)
        .args(DEMO_ARGS)
        .arg("-o")
        .arg(&out)
        .output()
        .expect("run");
    assert!(!run.status.success());
    let stderr = String::from_utf8_lossy(&run.stderr);
    assert!(
        stderr.contains("log.csv: line 3: field `ticks`") && stderr.contains("13x542"),
        "{stderr}"
    );
    assert!(!out.exists(), "a failed run must not leave an output file");
    assert_eq!(
        std::fs::read_dir(&dir).unwrap().count(),
        1,
        "only the input remains"
    );

    let run = lc_host()
        .arg("counts")
        .arg(&log)
        .args(DEMO_ARGS)
        .args(["--on-bad-row", "skip"])
        .output()
        .expect("run");
    assert!(run.status.success());
    let stderr = String::from_utf8_lossy(&run.stderr);
    assert!(
        stderr.contains("1 rows: 1 ok, 0 out of range or no target, 0 sensor faults, 1 skipped")
            && stderr.contains("line 3"),
        "{stderr}"
    );
    std::fs::remove_dir_all(dir).ok();
}

#[test]
fn usage_errors_teach() {
    let run = lc_host()
        .args([
            "counts",
            "x.csv",
            "--reference-hz",
            "48000000",
            "--rest",
            "16384",
        ])
        .output()
        .expect("run");
    assert!(!run.status.success());
    assert!(String::from_utf8_lossy(&run.stderr).contains("CYCLES:TICKS"));
    let run = lc_host()
        .args([
            "counts",
            "missing.csv",
            "--reference-hz",
            "48000000",
            "--rest",
            "1:8",
        ])
        .output()
        .expect("run");
    assert!(String::from_utf8_lossy(&run.stderr).contains("cannot open field log missing.csv"));
    let run = lc_host().arg("--help").output().expect("run");
    assert!(String::from_utf8_lossy(&run.stdout).contains("Not a safety-rated component"));
}

/// A format-1 image: `inspect` reads it, says how to rewrite it, and
/// `--rewrite` with the plan and the time writes exactly the committed
/// format-3 image of that unit (the firmware example's
/// `demo-proximity-32.lcim`).
#[test]
fn inspect_reads_format_one_and_rewrites_it() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let v1 = root.join("tests/data/demo-01-0007.format1.lcim");
    let out = lc_host().arg("inspect").arg(&v1).output().expect("run");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("format 1"), "{text}");
    assert!(text.contains("--rewrite OUT"), "{text}");
    let dir = scratch("rewrite");
    let new = dir.join("unit.lcim");
    let out = lc_host()
        .arg("inspect")
        .arg(&v1)
        .arg("--rewrite")
        .arg(&new)
        .args(["--time", "1764547200", "--plan"])
        .arg(root.join("examples/data/demo-plan.toml"))
        .output()
        .expect("run");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let committed =
        std::fs::read(root.join("examples/firmware/data/demo-proximity-32.lcim")).expect("read");
    assert_eq!(std::fs::read(&new).expect("rewritten image"), committed);
    // The rewritten image inspects as format 3 with its time and plan.
    let out = lc_host().arg("inspect").arg(&new).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("format 3") && text.contains("1764547200"),
        "{text}"
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// A format-2 image: `inspect` reads it with its time and plan, says how
/// to rewrite it, and `--rewrite` alone writes exactly the committed
/// format-3 image of that unit.
#[test]
fn inspect_reads_format_two_and_rewrites_it() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let v2 = root.join("tests/data/demo-01-0007.format2.lcim");
    let out = lc_host().arg("inspect").arg(&v2).output().expect("run");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("format 2"), "{text}");
    assert!(text.contains("1764547200"), "{text}");
    assert!(text.contains("--rewrite OUT"), "{text}");
    let dir = scratch("rewrite-2");
    let new = dir.join("unit.lcim");
    let out = lc_host()
        .arg("inspect")
        .arg(&v2)
        .arg("--rewrite")
        .arg(&new)
        .env_remove("SOURCE_DATE_EPOCH")
        .output()
        .expect("run");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let committed =
        std::fs::read(root.join("examples/firmware/data/demo-proximity-32.lcim")).expect("read");
    assert_eq!(std::fs::read(&new).expect("rewritten image"), committed);
    let _ = std::fs::remove_dir_all(dir);
}
