//! The host C test (`lc-core/capi/tests/c/host_test.c`), compiled with the system C
//! compiler (`cc`, or `$CC`) against the host static library, under
//! AddressSanitizer and UndefinedBehaviorSanitizer: every entry point
//! with good and bad images, arguments and inputs. Its readings of the
//! scripted inputs (`examples/c-firmware/src/script.c`) must equal, byte
//! for byte, lc-core's readers' on the same image bytes.
//!
//! Without a C compiler the test is skipped (a failure with `CI` set).

mod support;

#[path = "support/readings.rs"]
mod readings;
#[path = "../../../examples/unit-firmware/src/report.rs"]
#[allow(dead_code)]
mod report;
#[path = "../../../examples/unit-firmware/src/script.rs"]
mod script;

use std::env;
use std::ffi::OsString;
use std::fs;
use std::path::PathBuf;
use std::process::Command;

use lc_core::image::ImageBuf;
use lc_core::reader::Input;

fn images() -> [(&'static str, PathBuf); 3] {
    let data = support::workspace().join("examples/unit-firmware/data");
    [
        ("proximity", data.join("proximity.lcim")),
        ("level", data.join("level.lcim")),
        ("metal", data.join("metal.lcim")),
    ]
}

#[test]
fn host_c_test_under_sanitizers() {
    let cc = env::var_os("CC").unwrap_or_else(|| OsString::from("cc"));
    if Command::new(&cc).arg("--version").output().is_err() {
        assert!(
            !support::on_ci(),
            "CI is set: a C compiler is needed (apt-get install gcc)"
        );
        eprintln!("skipped: no C compiler ({cc:?})");
        return;
    }
    let lib = support::build_lib(None);
    let root = support::workspace();
    let here = root.join("lc-core/capi");
    let example = root.join("examples/c-firmware/src");
    let out = support::target_dir().join("host_test");
    let status = Command::new(&cc)
        .args([
            "-std=c11",
            "-g",
            "-O1",
            "-Wall",
            "-Wextra",
            "-Werror",
            "-pedantic",
        ])
        .args(["-fsanitize=address,undefined", "-fno-sanitize-recover=all"])
        .arg("-fno-omit-frame-pointer")
        .arg("-I")
        .arg(here.join("include"))
        .arg("-I")
        .arg(&example)
        .arg(here.join("tests").join("c").join("host_test.c"))
        .arg(example.join("report.c"))
        .arg(example.join("script.c"))
        .arg(&lib)
        // The host library's system libraries (`cargo rustc -- --print
        // native-static-libs`).
        .args(["-lgcc_s", "-lutil", "-lrt", "-lpthread", "-lm", "-ldl"])
        .arg("-o")
        .arg(&out)
        .status()
        .expect("run the C compiler");
    assert!(
        status.success(),
        "compiling lc-core/capi/tests/c/host_test.c failed"
    );
    let imgs = images();
    let run = Command::new(&out)
        .args(imgs.iter().map(|(_, p)| p))
        .env("ASAN_OPTIONS", "detect_leaks=1:abort_on_error=0")
        .env("UBSAN_OPTIONS", "print_stacktrace=1:halt_on_error=1")
        .output()
        .expect("run the host C test");
    let stdout = String::from_utf8_lossy(&run.stdout);
    let stderr = String::from_utf8_lossy(&run.stderr);
    assert!(
        run.status.success(),
        "the host C test failed ({}):\n{stderr}",
        run.status
    );
    assert!(
        !stderr.contains("runtime error") && !stderr.contains("Sanitizer"),
        "a sanitizer reported:\n{stderr}"
    );
    let mut expected = String::new();
    let scripts: [&[Input]; 3] = [&script::PROXIMITY, &script::LEVEL, &script::METAL];
    for ((kind, path), inputs) in imgs.iter().zip(scripts) {
        let bytes = fs::read(path).expect("read the image");
        let buf = ImageBuf::from_bytes(&bytes).expect("the image fits");
        let image = buf.image().expect("a valid image");
        expected.push_str(&format!("== {kind}\n"));
        expected.push_str(&readings::reading_lines(&image, inputs));
    }
    assert_eq!(
        stdout, expected,
        "the C API's readings differ from lc-core's"
    );
}
