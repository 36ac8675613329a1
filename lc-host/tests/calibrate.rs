//! `lc-host calibrate` end to end on simulated lots: images, unit records,
//! reasons, re-calibration, and a run killed in the middle of a lot.

use lc_core::image::Calibration;
use lc_host::store::{AttemptResult, Filter, Store};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn lc_host() -> Command {
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
}

fn plan() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-plan.toml")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("lc-calibrate-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn simulate(dir: &Path, units: usize, extra: &[&str]) -> PathBuf {
    let rig = dir.join("rig.csv");
    let st = lc_host()
        .args([
            "simulate",
            "rig",
            "--lot",
            "T1",
            "--units",
            &units.to_string(),
            "--seed",
            "5",
            "-o",
        ])
        .arg(&rig)
        .args(extra)
        .status()
        .unwrap();
    assert!(st.success());
    rig
}

#[test]
fn a_lot_calibrates_into_images_and_records() {
    let dir = scratch("lot");
    let rig = simulate(&dir, 12, &["--bad-every", "5", "--corrupt-every", "6"]);
    let run = |json: bool| {
        let mut c = lc_host();
        c.arg("calibrate")
            .arg(&rig)
            .arg("--plan")
            .arg(plan())
            .args(["--lot", "T1"])
            .arg("--db")
            .arg(dir.join("u.db"))
            .arg("--images")
            .arg(dir.join("img"))
            .arg("--report")
            .arg(dir.join("rep"));
        if json {
            c.arg("--json");
        }
        c.output().unwrap()
    };
    let out = run(true);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report["units"], 12);
    // Units 5 and 10: cracked capacitor; 6 and 12: a corrupted row.
    assert_eq!(report["passed"], 8);
    assert_eq!(report["failed"], 4);
    let failed: Vec<&serde_json::Value> = report["units_list"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|u| u["passed"] == false)
        .collect();
    let reasons = |serial: &str| {
        failed.iter().find(|u| u["serial"] == serial).unwrap()["reasons"].to_string()
    };
    assert!(
        reasons("T1-0005").contains("rest frequency"),
        "{}",
        reasons("T1-0005")
    );
    assert!(
        reasons("T1-0006").contains("field `ticks`"),
        "{}",
        reasons("T1-0006")
    );

    // Every passing unit: an image file, equal to the record's, that
    // parses and reads its own rig rest point as zero shift.
    let store = Store::open(dir.join("u.db")).unwrap();
    let passes = store
        .attempts(&Filter::default().result(AttemptResult::Pass))
        .unwrap();
    assert_eq!(passes.len(), 8);
    for p in &passes {
        let file = std::fs::read(dir.join("img").join(format!("{}.lcim", p.serial))).unwrap();
        assert_eq!(Some(file.clone()), store.image(&p.serial, None).unwrap());
        let cal = Calibration::parse(&file).unwrap();
        assert_eq!(cal.serial.as_str(), p.serial);
    }
    for f in store
        .attempts(&Filter::default().result(AttemptResult::Fail))
        .unwrap()
    {
        assert!(!dir.join("img").join(format!("{}.lcim", f.serial)).exists());
    }
    assert!(
        dir.join("rep/index.html").exists()
            && dir.join("rep/plots/rest-frequency.svg").exists()
            && dir.join("rep/units/T1-0001.html").exists()
            && dir.join("rep/units/T1-0001-curve.svg").exists()
    );

    // Re-calibrating adds attempts, keeps the first ones.
    assert!(run(false).status.success());
    let all = store
        .attempts(&Filter::default().serial("T1-0001"))
        .unwrap();
    assert_eq!(all.iter().map(|a| a.attempt).collect::<Vec<_>>().len(), 2);

    // units show / export.
    let show = lc_host()
        .args(["units", "show", "T1-0005", "--db"])
        .arg(dir.join("u.db"))
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&show.stdout).contains("rest frequency"));
    let exported = dir.join("x.lcim");
    let ex = lc_host()
        .args(["units", "export", "T1-0001", "--db"])
        .arg(dir.join("u.db"))
        .arg("-o")
        .arg(&exported)
        .output()
        .unwrap();
    assert!(
        ex.status.success(),
        "{}",
        String::from_utf8_lossy(&ex.stderr)
    );
    assert!(Calibration::parse(&std::fs::read(&exported).unwrap()).is_ok());
    let ex = lc_host()
        .args(["units", "export", "T1-0005", "--db"])
        .arg(dir.join("u.db"))
        .arg("-o")
        .arg(dir.join("y.lcim"))
        .output()
        .unwrap();
    assert!(!ex.status.success() && String::from_utf8_lossy(&ex.stderr).contains("no image"));
    std::fs::remove_dir_all(&dir).ok();
}

/// SIGKILL in the middle of a lot: the database holds only complete
/// attempts, and every image file on disk is complete and recorded.
#[test]
fn a_killed_lot_leaves_a_consistent_database() {
    let dir = scratch("kill");
    let rig = simulate(&dir, 4_000, &[]);
    let db = dir.join("u.db");
    let mut child = lc_host()
        .arg("calibrate")
        .arg(&rig)
        .arg("--plan")
        .arg(plan())
        .args(["--lot", "T1"])
        .arg("--db")
        .arg(&db)
        .arg("--images")
        .arg(dir.join("img"))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let start = Instant::now();
    let mut seen = 0;
    while start.elapsed() < Duration::from_secs(60) {
        std::thread::sleep(Duration::from_millis(20));
        if let Ok(s) = Store::open(&db) {
            seen = s.attempts(&Filter::default()).map_or(0, |a| a.len());
            if seen >= 200 {
                break;
            }
        }
    }
    child.kill().unwrap(); // SIGKILL on Unix
    let status = child.wait().unwrap();
    assert!(
        seen >= 200 && !status.success(),
        "the lot finished before the kill (seen {seen})"
    );
    let store = Store::open(&db).unwrap();
    let attempts = store.attempts(&Filter::default()).unwrap();
    assert!(
        attempts.len() >= seen && attempts.len() < 4_000,
        "{}",
        attempts.len()
    );
    for a in &attempts {
        // Reading the full record checks JSON and image integrity.
        let full = store.attempt(&a.serial, Some(a.attempt)).unwrap().unwrap();
        assert_eq!(full.image.is_some(), full.result == AttemptResult::Pass);
        if let Some(img) = full.image {
            Calibration::parse(&img).unwrap();
        }
    }
    for entry in std::fs::read_dir(dir.join("img")).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "lcim") {
            let bytes = std::fs::read(&path).unwrap();
            let cal =
                Calibration::parse(&bytes).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
            assert_eq!(
                store.image(cal.serial.as_str(), None).unwrap(),
                Some(bytes),
                "{}",
                path.display()
            );
        }
    }
    std::fs::remove_dir_all(&dir).ok();
}
