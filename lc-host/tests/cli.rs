//! The `lc-host` binary end to end: demo log, bad input, atomic output.

use std::ffi::OsStr;
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

/// An image of an older format, what `inspect` must say of it, and what
/// else `--rewrite` needs to write exactly the committed format-3 image
/// of that unit (the firmware example's `demo-proximity-32.lcim`).
struct OldImage {
    format: u8,
    path: &'static str,
    says: &'static [&'static str],
    rewrite_args: &'static [&'static str],
}

/// Format 1 holds neither time nor plan: the rewrite is given both.
/// Format 2 holds both: `inspect` shows its time, `--rewrite` alone does.
const OLD_IMAGES: [OldImage; 2] = [
    OldImage {
        format: 1,
        path: "tests/data/demo-01-0007.format1.lcim",
        says: &["format 1", "--rewrite OUT"],
        rewrite_args: &[
            "--time",
            "1764547200",
            "--plan",
            "examples/data/demo-plan.toml",
        ],
    },
    OldImage {
        format: 2,
        path: "tests/data/demo-01-0007.format2.lcim",
        says: &["format 2", "1764547200", "--rewrite OUT"],
        rewrite_args: &[],
    },
];

/// Runs `lc-host inspect` with `args` in the repository's root (no
/// SOURCE_DATE_EPOCH: times come from the image or `--time`); its
/// standard output, after checking that it succeeded.
fn inspect(case: &str, args: &[&OsStr]) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let out = lc_host()
        .arg("inspect")
        .args(args)
        .current_dir(root)
        .env_remove("SOURCE_DATE_EPOCH")
        .output()
        .expect("run");
    assert!(
        out.status.success(),
        "{case}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// An image of format 1 or 2: `inspect` reads it and says how to rewrite
/// it, and `--rewrite` (with what that format lacks) writes exactly the
/// committed format-3 image, which inspects as format 3 with its time.
#[test]
fn inspect_reads_old_formats_and_rewrites_them() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let committed =
        std::fs::read(root.join("examples/firmware/data/demo-proximity-32.lcim")).expect("read");
    for old in OLD_IMAGES {
        let case = format!("format {} ({})", old.format, old.path);
        let image = root.join(old.path);
        let text = inspect(&case, &[image.as_os_str()]);
        for said in old.says {
            assert!(text.contains(said), "{case}: no {said:?} in\n{text}");
        }
        let dir = scratch(&format!("rewrite-{}", old.format));
        let new = dir.join("unit.lcim");
        let mut args = vec![image.as_os_str(), OsStr::new("--rewrite"), new.as_os_str()];
        args.extend(old.rewrite_args.iter().map(OsStr::new));
        inspect(&case, &args);
        let rewritten = std::fs::read(&new).expect("rewritten image");
        assert!(rewritten == committed, "{case}: not the committed image");
        let text = inspect(&case, &[new.as_os_str()]);
        assert!(
            text.contains("format 3") && text.contains("1764547200"),
            "{case}: the rewritten image inspects as\n{text}"
        );
        let _ = std::fs::remove_dir_all(dir);
    }
}
