//! `lc-host units export` round trips: the Intel HEX read back with the
//! `ihex` crate, the page-padded binary, and the C header compiled by the
//! system C compiler all give the image's bytes at its address, then
//! erased bytes to the page's end; and the firmware's parser accepts the
//! padded page as the image (docs/image-format.md, "Flash pages").
//!
//! Without a C compiler the C part is skipped with a note on a developer
//! machine and fails under `CI=true`.

use lc_core::image::Calibration;
use std::path::{Path, PathBuf};
use std::process::Command;

fn lc_host() -> Command {
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
}

fn ok(c: &mut Command) -> std::process::Output {
    let out = c.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// A database with one calibrated unit, E-0001; returns its path.
fn calibrated(dir: &Path) -> PathBuf {
    let rig = dir.join("rig.csv");
    let plan = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-plan.toml");
    ok(lc_host()
        .args([
            "simulate", "rig", "--lot", "E", "--units", "1", "--seed", "3", "-o",
        ])
        .arg(&rig));
    let db = dir.join("u.db");
    ok(lc_host()
        .arg("calibrate")
        .arg(&rig)
        .arg("--plan")
        .arg(plan)
        .args(["--lot", "E", "--db"])
        .arg(&db)
        .arg("--images")
        .arg(dir.join("img")));
    db
}

fn export(db: &Path, out: &Path, extra: &[&str]) -> Vec<u8> {
    ok(lc_host()
        .args(["units", "export", "E-0001", "--db"])
        .arg(db)
        .arg("-o")
        .arg(out)
        .args(extra));
    std::fs::read(out).unwrap()
}

const ADDRESS: u32 = 0x0800_F800;
const PAGE: usize = 1024;

#[test]
fn flash_exports_round_trip() {
    let dir = std::env::temp_dir().join(format!("lc-export-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let db = calibrated(&dir);
    let image = export(&db, &dir.join("e.lcim"), &[]);
    let cal = Calibration::parse(&image).unwrap();
    let flash = ["--address", "0x0800F800", "--page-size", "1024"];

    // The padded page: the image, then 0xFF to the page's end; the parser
    // reads the same calibration from it.
    let page = export(&db, &dir.join("e.bin"), &flash);
    assert_eq!(page.len(), image.len().div_ceil(PAGE) * PAGE);
    assert!(
        page.len() > image.len(),
        "the test image should need padding"
    );
    assert_eq!(&page[..image.len()], &image[..]);
    assert!(page[image.len()..].iter().all(|b| *b == 0xFF));
    assert_eq!(Calibration::parse(&page), Ok(cal));

    // Intel HEX, read back record by record into a memory map.
    let hex = String::from_utf8(export(&db, &dir.join("e.hex"), &flash)).unwrap();
    let mut memory = std::collections::BTreeMap::new();
    let mut upper = 0u32;
    let mut eof = false;
    for record in ihex::Reader::new(&hex) {
        match record.unwrap() {
            ihex::Record::ExtendedLinearAddress(h) => upper = u32::from(h) << 16,
            ihex::Record::Data { offset, value } => {
                for (i, b) in value.into_iter().enumerate() {
                    let at = upper + u32::from(offset) + u32::try_from(i).unwrap();
                    assert!(memory.insert(at, b).is_none(), "0x{at:08X} written twice");
                }
            }
            ihex::Record::EndOfFile => eof = true,
            other => panic!("unexpected record {other:?}"),
        }
    }
    assert!(eof);
    let first = *memory.keys().next().unwrap();
    assert_eq!(first, ADDRESS);
    let read: Vec<u8> = memory.values().copied().collect();
    assert_eq!(
        memory.keys().last().copied(),
        Some(ADDRESS + u32::try_from(read.len() - 1).unwrap())
    );
    assert_eq!(read, page);

    // The C header, compiled and run: it prints its array.
    let header = export(&db, &dir.join("e.h"), &flash);
    let header = String::from_utf8(header).unwrap();
    assert!(header.contains(&format!("#define LC_CAL_E_0001_LEN {}u", image.len())));
    assert!(header.contains("#define LC_CAL_E_0001_ADDRESS 0x0800F800u"));
    let cc = std::env::var_os("CC").unwrap_or_else(|| "cc".into());
    if Command::new(&cc).arg("--version").output().is_err() {
        assert!(
            std::env::var_os("CI").is_none(),
            "no C compiler (CI=true): apt-get install gcc"
        );
        eprintln!("skipped the C header: no C compiler (apt-get install gcc)");
        std::fs::remove_dir_all(&dir).ok();
        return;
    }
    std::fs::write(
        dir.join("main.c"),
        "#include <stdio.h>\n#include \"e.h\"\n\
         int main(void) {\n\
           if (sizeof lc_cal_e_0001 % 1024 != 0 || LC_CAL_E_0001_LEN > sizeof lc_cal_e_0001) return 2;\n\
           return fwrite(lc_cal_e_0001, 1, sizeof lc_cal_e_0001, stdout) == sizeof lc_cal_e_0001 ? 0 : 1;\n\
         }\n",
    )
    .unwrap();
    let exe = dir.join("print-image");
    ok(Command::new(&cc)
        .args(["-std=c99", "-Wall", "-Wextra", "-Werror", "-o"])
        .arg(&exe)
        .arg(dir.join("main.c")));
    let printed = ok(&mut Command::new(&exe)).stdout;
    assert_eq!(printed, page);
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_bad_layout_is_refused_with_a_hint() {
    let dir = std::env::temp_dir().join(format!("lc-export-bad-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let db = calibrated(&dir);
    for (args, hint) in [
        (&["--page-size", "0"][..], "--page-size"),
        (
            &["--address", "0xFFFFFF00", "--page-size", "4096"][..],
            "--address",
        ),
        (&["--address", "0x1_0000_0000"][..], "too large"),
        (&["--format", "c", "--symbol", "9lives"][..], "C identifier"),
    ] {
        let out = lc_host()
            .args(["units", "export", "E-0001", "--db"])
            .arg(&db)
            .arg("-o")
            .arg(dir.join("x.hex"))
            .args(args)
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            !out.status.success() && err.contains(hint),
            "{args:?}: {err}"
        );
        assert!(!dir.join("x.hex").exists(), "nothing half-written");
    }
    std::fs::remove_dir_all(&dir).ok();
}
