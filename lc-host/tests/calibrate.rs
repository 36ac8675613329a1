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
    let run = |json: bool, extra: &[&str]| {
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
            .arg(dir.join("rep"))
            .args(extra);
        if json {
            c.arg("--json");
        }
        c.output().unwrap()
    };
    let out = run(true, &[]);
    // Some units failed acceptance: exit status 1.
    assert_eq!(
        out.status.code(),
        Some(1),
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
    assert!(
        reasons("T1-0010").contains("rest frequency"),
        "{}",
        reasons("T1-0010")
    );
    assert!(
        reasons("T1-0012").contains("field `ticks`"),
        "{}",
        reasons("T1-0012")
    );

    // Every passing unit: an image file, equal to the record's, that
    // parses, names its unit and carries the rest period ratio fitted from
    // its rig log (so the rig's rest point reads as zero shift).
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
        let full = store.attempt(&p.serial, Some(p.attempt)).unwrap().unwrap();
        let rest_ratio = full.params["rest_ratio"].as_f64().unwrap();
        assert!(
            (cal.rest.to_f64() / rest_ratio - 1.0).abs() < 1e-9,
            "{}: image rest {} vs fitted {rest_ratio}",
            p.serial,
            cal.rest.to_f64()
        );
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

    let first = store.attempt("T1-0001", Some(1)).unwrap().unwrap();
    // The same rig log against the same plan again: nothing is judged
    // again, and the run says so (issue 14, defect 7).
    let again = run(false, &[]);
    assert_eq!(again.status.code(), Some(1));
    assert!(
        String::from_utf8_lossy(&again.stderr).contains("12 units were already recorded"),
        "{}",
        String::from_utf8_lossy(&again.stderr)
    );
    assert_eq!(store.attempts(&Filter::default()).unwrap().len(), 12);
    // Re-calibrating on purpose adds attempts, keeps the first ones.
    assert_eq!(run(false, &["--reattempt"]).status.code(), Some(1));
    let all = store
        .attempts(&Filter::default().serial("T1-0001"))
        .unwrap();
    let mut numbers: Vec<u32> = all.iter().map(|a| a.attempt).collect();
    numbers.sort_unstable();
    assert_eq!(numbers, [1, 2]);
    assert_eq!(store.attempt("T1-0001", Some(1)).unwrap().unwrap(), first);

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

/// xorshift64 for kill times.
struct Rng(u64);

impl Rng {
    fn below(&mut self, n: u64) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0 % n.max(1)
    }
}

fn calibrate_cmd(rig: &Path, db: &str, images: &Path, extra: &[&str]) -> Command {
    let mut c = lc_host();
    c.arg("calibrate")
        .arg(rig)
        .arg("--plan")
        .arg(plan())
        .args(["--lot", "T1", "--db", db, "--images"])
        .arg(images)
        // One calibration time for every run, so that a resumed lot's
        // images can equal a clean run's byte for byte.
        .args(["--time", "1764547200"])
        .args(extra)
        .stdout(Stdio::null())
        .stderr(Stdio::piped());
    c
}

/// What a lot left behind, for comparing runs: per serial its attempts'
/// (number, result, reasons, fitted parameters, residuals), and the image
/// files (name → bytes).
type Outcome = (
    std::collections::BTreeMap<String, Vec<(u32, String, String, String)>>,
    std::collections::BTreeMap<String, Vec<u8>>,
);

/// Checks that the database holds only whole attempts and that every image
/// file on disk equals its unit's latest record; returns the outcome.
fn check_lot(db: &str, images: &Path) -> Outcome {
    let store = Store::open(db).unwrap();
    let mut records = std::collections::BTreeMap::new();
    for a in store.attempts(&Filter::default()).unwrap() {
        // Reading the full record checks JSON and image integrity.
        let full = store.attempt(&a.serial, Some(a.attempt)).unwrap().unwrap();
        assert_eq!(full.image.is_some(), full.result == AttemptResult::Pass);
        if let Some(img) = &full.image {
            Calibration::parse(img).unwrap();
        }
        assert!(full.trace.is_some(), "{}: no traceability", a.serial);
        records
            .entry(a.serial.clone())
            .or_insert_with(Vec::new)
            .push((
                a.attempt,
                a.result.as_str().to_string(),
                serde_json::to_string(&full.reasons).unwrap(),
                format!("{} {}", full.params, full.residuals),
            ));
    }
    for (serial, list) in &mut records {
        list.sort();
        let numbers: Vec<u32> = list.iter().map(|a| a.0).collect();
        let want: Vec<u32> = (1..=u32::try_from(numbers.len()).unwrap()).collect();
        assert_eq!(numbers, want, "{serial}: attempts not numbered 1..n");
    }
    let mut files = std::collections::BTreeMap::new();
    for entry in std::fs::read_dir(images).into_iter().flatten() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if name.ends_with(".tmp") {
            files.insert(name, Vec::new());
            continue;
        }
        let bytes = std::fs::read(&path).unwrap();
        let cal = Calibration::parse(&bytes).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(
            store.image(cal.serial.as_str(), None).unwrap().as_deref(),
            Some(bytes.as_slice()),
            "{name} is not its unit's latest image"
        );
        files.insert(name, bytes);
    }
    (records, files)
}

/// `kills` random SIGKILLs during one lot, each followed by a re-run of
/// the same command: after a last, undisturbed re-run the database and the
/// images folder equal those of a clean run (one attempt per unit, the
/// same verdicts, fits and image files), and no temporary file is left.
/// Between kills the database holds only whole attempts and every image
/// file equals its unit's latest record. Returns the kills that landed
/// while the lot was still running.
pub fn kill_and_resume(
    db: &str,
    clean_db: &str,
    dir: &Path,
    units: usize,
    kills: usize,
    seed: u64,
) -> usize {
    let rig = simulate(dir, units, &["--bad-every", "7"]);
    // Small groups: many commit boundaries for the kills to fall between.
    let group = ["--group-units", "16"];
    let start = Instant::now();
    let clean = calibrate_cmd(&rig, clean_db, &dir.join("clean-img"), &group)
        .output()
        .unwrap();
    let clean_secs = start.elapsed().as_secs_f64();
    assert_eq!(
        clean.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&clean.stderr)
    );
    let want = check_lot(clean_db, &dir.join("clean-img"));
    assert_eq!(want.0.len(), units);

    let images = dir.join("img");
    let mut rng = Rng(seed | 1);
    // Each run gets a random share of about two hundredths of the lot's
    // time (and its start-up) before its kill.
    let span_ms = (clean_secs * 1e3 * 2.0 / kills.max(1) as f64) as u64 + 40;
    let mut landed = 0;
    for k in 0..kills {
        let mut child = calibrate_cmd(&rig, db, &images, &group).spawn().unwrap();
        std::thread::sleep(Duration::from_millis(rng.below(span_ms)));
        let finished = child.try_wait().unwrap().is_some();
        child.kill().ok(); // SIGKILL on Unix
        let status = child.wait().unwrap();
        if !finished && !status.success() && status.code().is_none() {
            landed += 1;
        }
        let (records, _) = check_lot(db, &images);
        assert!(
            records.values().all(|a| a.len() == 1),
            "kill {k}: a unit was judged twice"
        );
    }
    let last = calibrate_cmd(&rig, db, &images, &group).output().unwrap();
    assert_eq!(
        last.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&last.stderr)
    );
    let got = check_lot(db, &images);
    assert_eq!(got.0, want.0, "database differs from a clean run's");
    assert_eq!(
        got.1, want.1,
        "images differ from a clean run's (or a temporary file was left)"
    );
    eprintln!(
        "kill test: {kills} kills ({landed} during the run) of a {units}-unit lot; clean run {clean_secs:.1} s; final state equal to the clean run's"
    );
    landed
}

/// A lot's records and image files do not depend on how its units are
/// grouped into transactions (and so on the fitting pipeline): one unit
/// per transaction, a small odd group and the default give the same
/// attempts (verdicts, reasons, fits, residuals, rig points) and the same
/// image bytes.
#[test]
fn group_size_changes_no_record_or_image() {
    let dir = scratch("groups");
    let rig = simulate(&dir, 600, &["--bad-every", "7"]);
    let mut outcomes = Vec::new();
    for (name, extra) in [
        ("one", &["--group-units", "1"][..]),
        ("seven", &["--group-units", "7"][..]),
        ("default", &[][..]),
    ] {
        let db = dir.join(format!("{name}.db"));
        let images = dir.join(format!("{name}-img"));
        let out = calibrate_cmd(&rig, db.to_str().unwrap(), &images, extra)
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(1),
            "{name}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let lot = check_lot(db.to_str().unwrap(), &images);
        let store = Store::open(db.to_str().unwrap()).unwrap();
        let rig_points: Vec<String> = lot
            .0
            .keys()
            .map(|s| {
                store
                    .attempt(s, Some(1))
                    .unwrap()
                    .unwrap()
                    .rig_points
                    .to_string()
            })
            .collect();
        outcomes.push((name, lot, rig_points));
    }
    let (_, first, first_rig) = &outcomes[0];
    assert_eq!(first.0.len(), 600);
    assert!(
        first.1.len() > 100 && first.1.len() < 600,
        "{}",
        first.1.len()
    );
    for (name, lot, rig) in &outcomes[1..] {
        assert_eq!(
            lot.0, first.0,
            "{name}: records differ from one unit per transaction"
        );
        assert_eq!(lot.1, first.1, "{name}: image files differ");
        assert_eq!(rig, first_rig, "{name}: rig points differ");
    }
    std::fs::remove_dir_all(&dir).ok();
}

/// SIGKILL at random moments of a lot on SQLite, each followed by a
/// re-run: see [`kill_and_resume`]. CI runs `LC_KILLS` kills (default 12);
/// `scripts/kill-test.sh` runs the full 100 on a 2 000-unit lot.
#[test]
fn a_killed_lot_resumes_to_a_clean_runs_state() {
    let kills = std::env::var("LC_KILLS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(12);
    let units = std::env::var("LC_KILL_UNITS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(400);
    let dir = scratch("kill");
    let db = dir.join("u.db");
    let clean = dir.join("clean.db");
    let landed = kill_and_resume(
        db.to_str().unwrap(),
        clean.to_str().unwrap(),
        &dir,
        units,
        kills,
        2024,
    );
    assert!(landed > 0, "no kill landed during the run");
    std::fs::remove_dir_all(&dir).ok();
}

/// The kill test on PostgreSQL: `LC_PG_KILLS` kills (default 5; 20 in
/// `scripts/kill-test.sh`).
#[test]
fn a_killed_lot_on_postgresql_resumes_to_a_clean_runs_state() {
    let admin = match std::env::var("LC_TEST_POSTGRES_URL") {
        Ok(u) if !u.is_empty() => u,
        _ if std::env::var("CI").is_ok_and(|v| v == "true") => {
            panic!("LC_TEST_POSTGRES_URL is not set (CI=true): start scripts/pg-test-server.sh")
        }
        _ => {
            eprintln!("SKIPPED on PostgreSQL: LC_TEST_POSTGRES_URL is not set");
            return;
        }
    };
    let kills = std::env::var("LC_PG_KILLS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(5);
    let units = std::env::var("LC_KILL_UNITS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(200);
    let mut c = postgres::Client::connect(&admin, postgres::NoTls).unwrap();
    let tag = std::process::id();
    let sep = if admin.contains('?') { '&' } else { '?' };
    let url = |schema: &str| format!("{admin}{sep}options=-csearch_path%3D{schema}");
    let (a, b) = (format!("lc_kill_{tag}"), format!("lc_kill_clean_{tag}"));
    c.batch_execute(&format!(
        "DROP SCHEMA IF EXISTS {a} CASCADE; CREATE SCHEMA {a}; DROP SCHEMA IF EXISTS {b} CASCADE; CREATE SCHEMA {b}"
    ))
    .unwrap();
    let dir = scratch("kill-pg");
    let landed = kill_and_resume(&url(&a), &url(&b), &dir, units, kills, 77);
    c.batch_execute(&format!("DROP SCHEMA {a} CASCADE; DROP SCHEMA {b} CASCADE"))
        .unwrap();
    assert!(landed > 0, "no kill landed during the run");
    std::fs::remove_dir_all(&dir).ok();
}

/// The per-unit results for a manufacturing execution system: one JSON
/// line per unit attempt, in the report folder and at `--results`; codes
/// from the one vocabulary of limit codes; a failed unit's findings carry
/// measured value, bound and unit; every finding's text is its `Display`
/// and one of the unit's recorded reasons; a passed unit's image is named
/// with its CRC-32.
#[test]
fn results_file_for_a_manufacturing_execution_system() {
    use lc_host::calib::accept::{Finding, Limit};
    use sha2::Digest;
    let dir = scratch("results");
    let rig = simulate(&dir, 12, &["--bad-every", "5", "--corrupt-every", "6"]);
    let out = lc_host()
        .arg("calibrate")
        .arg(&rig)
        .arg("--plan")
        .arg(plan())
        .args([
            "--lot",
            "T1",
            "--station",
            "EOL-2",
            "--operator",
            "jm",
            "--json",
        ])
        .arg("--db")
        .arg(dir.join("u.db"))
        .arg("--images")
        .arg(dir.join("img"))
        .arg("--report")
        .arg(dir.join("rep"))
        .arg("--results")
        .arg(dir.join("mes.jsonl"))
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let hex = |b: &[u8]| -> String { b.iter().map(|x| format!("{x:02x}")).collect() };
    let plan_sha = hex(&sha2::Sha256::digest(std::fs::read(plan()).unwrap()));
    let rig_sha = hex(&sha2::Sha256::digest(std::fs::read(&rig).unwrap()));
    let codes: Vec<&str> = Limit::ALL.iter().map(|l| l.code()).collect();

    // Table: every unit's findings (typed, from --json) are among its
    // reasons word for word.
    let mut findings_seen = 0;
    for u in report["units_list"].as_array().unwrap() {
        let reasons: Vec<&str> = u["reasons"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r.as_str().unwrap())
            .collect();
        for f in u["findings"].as_array().unwrap() {
            let f: Finding = serde_json::from_value(f.clone()).unwrap();
            assert!(
                reasons.contains(&f.to_string().as_str()),
                "{f} / {reasons:?}"
            );
            findings_seen += 1;
        }
    }
    assert!(findings_seen >= 2, "the cracked capacitors fail a limit");

    for file in [dir.join("rep/results.jsonl"), dir.join("mes.jsonl")] {
        let text = std::fs::read_to_string(&file).unwrap();
        let lines: Vec<serde_json::Value> = text
            .lines()
            .map(|l| serde_json::from_str(l).unwrap())
            .collect();
        assert_eq!(lines.len(), 12, "{}: one line per unit", file.display());
        let mut failed_with_finding = 0;
        for (v, u) in lines.iter().zip(report["units_list"].as_array().unwrap()) {
            assert_eq!(v["serial"], u["serial"]);
            assert_eq!(v["lot"], "T1");
            assert_eq!(v["attempt"], 1);
            assert_eq!(v["plan_sha256"], plan_sha.as_str());
            assert_eq!(v["rig_sha256"], rig_sha.as_str());
            assert_eq!(
                (&v["station"], &v["operator"]),
                (&"EOL-2".into(), &"jm".into())
            );
            assert!(v["tool"].as_str().unwrap().starts_with("lc-host "));
            assert!(v["time_utc"].as_str().unwrap().ends_with('Z'));
            let findings = v["findings"].as_array().unwrap();
            match v["verdict"].as_str().unwrap() {
                "pass" => {
                    assert!(findings.is_empty() && v["other_reasons"] == serde_json::json!([]));
                    let name = v["image"]["file"].as_str().unwrap();
                    let bytes = std::fs::read(dir.join("img").join(name)).unwrap();
                    let crc = lc_core::image::CRC32.checksum(&bytes);
                    assert_eq!(v["image"]["crc32"], format!("{crc:08x}"));
                    assert_eq!(v["image"]["bytes"], bytes.len());
                }
                "fail" => {
                    assert!(v["image"].is_null());
                    assert!(
                        !findings.is_empty() || !v["other_reasons"].as_array().unwrap().is_empty()
                    );
                    failed_with_finding += usize::from(!findings.is_empty());
                    for f in findings {
                        let code = f["code"].as_str().unwrap();
                        assert!(codes.contains(&code), "{code}");
                        assert!(f["plan_key"].as_str().unwrap().starts_with("limits."));
                        assert!(f["measured"].is_f64(), "{f}");
                        assert!(f["min"].is_f64() || f["max"].is_f64(), "{f}");
                        assert!(f["unit"].is_string(), "{f}");
                        // The text is the finding's Display, rebuilt from
                        // the line's own fields.
                        let rebuilt: Finding = serde_json::from_value(serde_json::json!({
                            "limit": f["code"], "measured": f["measured"], "min": f["min"],
                            "max": f["max"], "unit": f["unit"], "at": f["at"],
                        }))
                        .unwrap();
                        assert_eq!(f["text"], rebuilt.to_string());
                    }
                }
                other => panic!("verdict {other}"),
            }
        }
        assert_eq!(failed_with_finding, 4, "all four failed units fail a limit");
    }
    // A corrupted row: the bad_rows limit (the plan tolerates none), with
    // the row's own message as a reason no limit names.
    let text = std::fs::read_to_string(dir.join("mes.jsonl")).unwrap();
    let line6: serde_json::Value = serde_json::from_str(text.lines().nth(5).unwrap()).unwrap();
    assert_eq!(line6["serial"], "T1-0006");
    assert_eq!(line6["findings"][0]["code"], "bad_rows");
    assert_eq!(line6["findings"][0]["measured"], 1.0);
    assert_eq!(line6["findings"][0]["max"], 0.0);
    assert!(
        line6["other_reasons"].to_string().contains("field `ticks`"),
        "{line6}"
    );
    let line5: serde_json::Value = serde_json::from_str(text.lines().nth(4).unwrap()).unwrap();
    assert_eq!(line5["findings"][0]["code"], "rest_frequency");
    assert_eq!(line5["findings"][0]["unit"], "Hz");
    std::fs::remove_dir_all(&dir).ok();
}
