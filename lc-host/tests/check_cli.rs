//! Issue 19 on the command line: `counts` like `convert` (header warnings,
//! never over its input), `inspect`'s trailing bytes, `convert --float`
//! for every reader, and output any CSV reader takes.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn lc_host(args: &[&std::ffi::OsStr]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .args(args)
        .output()
        .expect("run")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("lc-host-check-{}-{name}", std::process::id()));
    std::fs::remove_dir_all(&dir).ok();
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

fn repo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join(rel)
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn counts(log: &Path, out: &Path) -> Output {
    lc_host(&[
        "counts".as_ref(),
        log.as_os_str(),
        "--reference-hz".as_ref(),
        "48M".as_ref(),
        "--rest".as_ref(),
        "16384:139542".as_ref(),
        "-o".as_ref(),
        out.as_os_str(),
    ])
}

/// Issue 19, item 5: `counts` wrote over its own input with exit 0, and
/// said nothing about unknown columns.
#[test]
fn counts_refuses_its_input_as_output_and_warns_about_columns() {
    let dir = scratch("counts");
    let log = dir.join("log.csv");
    std::fs::write(&log, "cycles,ticks,temp\n16384,139542,25\n").unwrap();
    let o = counts(&log, &log);
    assert!(!o.status.success(), "{}", stderr(&o));
    assert!(stderr(&o).contains("log.csv"), "{}", stderr(&o));
    assert_eq!(
        std::fs::read_to_string(&log).unwrap(),
        "cycles,ticks,temp\n16384,139542,25\n",
        "the input is untouched"
    );
    let out = dir.join("out.csv");
    let o = counts(&log, &out);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("warning:") && stderr(&o).contains("`temp_c`"),
        "{}",
        stderr(&o)
    );
    std::fs::remove_dir_all(&dir).ok();
}

fn inspect(image: &Path) -> Output {
    lc_host(&["inspect".as_ref(), image.as_os_str()])
}

/// Issue 19, item 4: two images concatenated read as one valid image.
/// Erased flash after an image is reported as such and accepted.
#[test]
fn inspect_reports_bytes_after_the_image() {
    let dir = scratch("inspect");
    // Images from `lc-host calibrate` (examples/unit-firmware/run.sh images).
    let a = std::fs::read(repo("examples/unit-firmware/data/proximity.lcim")).unwrap();
    let b = std::fs::read(repo("examples/unit-firmware/data/metal.lcim")).unwrap();
    let plain = dir.join("plain.lcim");
    std::fs::write(&plain, &a).unwrap();
    let o = inspect(&plain);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!String::from_utf8_lossy(&o.stdout).contains("erased"));

    let two = dir.join("two.lcim");
    std::fs::write(&two, [a.as_slice(), b.as_slice()].concat()).unwrap();
    let o = inspect(&two);
    assert!(!o.status.success(), "two images read as one");
    assert!(
        stderr(&o).contains(&format!(
            "{} bytes follow the image's stated length",
            b.len()
        )),
        "{}",
        stderr(&o)
    );
    assert!(!String::from_utf8_lossy(&o.stdout).contains("valid"));

    let page = dir.join("page.lcim");
    let mut padded = a.clone();
    let page_len = a.len().next_multiple_of(1024) + 1024;
    padded.resize(page_len, 0xFF);
    std::fs::write(&page, &padded).unwrap();
    let o = inspect(&page);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        String::from_utf8_lossy(&o.stdout).contains(&format!(
            "{} bytes of erased flash (0xFF)",
            page_len - a.len()
        )),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    // One byte that is not erased flash is data.
    padded[a.len() + 100] = 0;
    std::fs::write(&page, &padded).unwrap();
    assert!(!inspect(&page).status.success());
    std::fs::remove_dir_all(&dir).ok();
}

/// Issue 19, item 6: `convert`'s output read by Python's `csv` module
/// (comment lines filtered out, as its documentation suggests for
/// commented files) and, where installed, by pandas with `comment="#"`:
/// every row as wide as the header. Skipped without `python3`.
#[test]
fn python_reads_convert_output() {
    let Ok(probe) = Command::new("python3").arg("--version").output() else {
        eprintln!("python3 not found: skipped");
        return;
    };
    if !probe.status.success() {
        eprintln!("python3 not usable: skipped");
        return;
    }
    let dir = scratch("python");
    let out = dir.join("readings.csv");
    let o = lc_host(&[
        "convert".as_ref(),
        repo("examples/data/demo-counts.csv").as_os_str(),
        "--image".as_ref(),
        repo("examples/unit-firmware/data/proximity.lcim").as_os_str(),
        "--float".as_ref(),
        "-o".as_ref(),
        out.as_os_str(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let script = r##"
import csv, sys
with open(sys.argv[1], newline="") as f:
    rows = list(csv.reader(line for line in f if not line.startswith("#")))
header, body = rows[0], rows[1:]
assert header[:5] == ["line", "time_s", "channel", "status", "gap_m"], header
assert all(len(r) == len(header) for r in body), "ragged rows"
assert any(r[3].startswith("fault_") for r in body)
float(next(r for r in body if r[3] == "ok")[4])
try:
    import pandas
except ImportError:
    print(len(body))
    sys.exit(0)
df = pandas.read_csv(sys.argv[1], comment="#")
assert list(df.columns) == header and len(df) == len(body)
print(len(body))
"##;
    let py = Command::new("python3")
        .arg("-c")
        .arg(script)
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        py.status.success(),
        "{}{}",
        String::from_utf8_lossy(&py.stdout),
        String::from_utf8_lossy(&py.stderr)
    );
    assert_eq!(String::from_utf8_lossy(&py.stdout).trim(), "201");
    std::fs::remove_dir_all(&dir).ok();
}
