//! `lc-host convert` end to end: where its output may go, and its thread
//! count (issue 19, item 7; issue 20).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn convert(args: &[&std::ffi::OsStr]) -> Output {
    let image =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/firmware/data/demo-proximity.lcim");
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .arg("convert")
        .arg("--image")
        .arg(image)
        .args(args)
        .output()
        .expect("run")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("lc-host-convert-{}-{name}", std::process::id()));
    std::fs::remove_dir_all(&dir).ok();
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

fn demo_log_copy(dir: &Path) -> PathBuf {
    let log = dir.join("log.csv");
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-counts.csv"),
        &log,
    )
    .expect("copy");
    log
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn issue_19_the_input_is_refused_as_output_and_kept() {
    let dir = scratch("same");
    let log = demo_log_copy(&dir);
    let before = std::fs::read(&log).unwrap();
    for out in [log.clone(), dir.join(".").join("log.csv")] {
        let run = convert(&[
            "--input".as_ref(),
            log.as_os_str(),
            "-o".as_ref(),
            out.as_os_str(),
        ]);
        assert!(!run.status.success());
        assert!(
            stderr(&run).contains("choose another output"),
            "{}",
            stderr(&run)
        );
        assert_eq!(std::fs::read(&log).unwrap(), before, "the log is intact");
    }
    std::fs::remove_dir_all(dir).ok();
}

#[cfg(unix)]
#[test]
fn issue_19_dev_null_stays_a_device() {
    use std::os::unix::fs::FileTypeExt;
    let dir = scratch("null");
    let log = demo_log_copy(&dir);
    let run = convert(&[
        "--input".as_ref(),
        log.as_os_str(),
        "-o".as_ref(),
        "/dev/null".as_ref(),
    ]);
    assert!(run.status.success(), "{}", stderr(&run));
    let m = std::fs::symlink_metadata("/dev/null").unwrap();
    assert!(m.file_type().is_char_device());
    std::fs::remove_dir_all(dir).ok();
}

#[test]
fn threads_are_bounded_and_do_not_change_the_output() {
    let dir = scratch("threads");
    let log = demo_log_copy(&dir);
    for bad in ["0", "17", "100000", "many"] {
        let run = convert(&[
            "--input".as_ref(),
            log.as_os_str(),
            "--threads".as_ref(),
            bad.as_ref(),
        ]);
        assert!(!run.status.success(), "--threads {bad}");
        assert!(stderr(&run).contains("1 to 16"), "{}", stderr(&run));
    }
    let outputs: Vec<Vec<u8>> = ["1", "2", "5"]
        .iter()
        .map(|n| {
            let run = convert(&[
                "--input".as_ref(),
                log.as_os_str(),
                "--threads".as_ref(),
                n.as_ref(),
            ]);
            assert!(run.status.success(), "{}", stderr(&run));
            run.stdout
        })
        .collect();
    assert!(outputs.windows(2).all(|w| w[0] == w[1]));
    assert_eq!(outputs[0].split(|&b| b == b'\n').count(), 204);
    std::fs::remove_dir_all(dir).ok();
}
