//! The end-of-line station around `lc-host calibrate`: the images folder
//! equals the latest verdicts, exit statuses, unit selection and re-runs,
//! traceability, and a read-only database (issue 14's defects, each named
//! in its test).

use lc_core::image::Calibration;
use lc_host::store::{AttemptResult, Filter, Store};
use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn lc_host() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_lc-host"));
    c.env_remove("LC_STATION").env_remove("LC_OPERATOR");
    c
}

fn demo_plan() -> String {
    std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-plan.toml"),
    )
    .unwrap()
}

struct Scratch(PathBuf);

impl Scratch {
    fn new(name: &str) -> Scratch {
        let dir = std::env::temp_dir().join(format!("lc-station-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        Scratch(dir)
    }
    fn path(&self, name: &str) -> PathBuf {
        self.0.join(name)
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn simulate(dir: &Scratch, units: usize, extra: &[&str]) -> PathBuf {
    let rig = dir.path("rig.csv");
    let st = lc_host()
        .args([
            "simulate",
            "rig",
            "--lot",
            "T1",
            "--units",
            &units.to_string(),
        ])
        .args(["--seed", "5", "-o"])
        .arg(&rig)
        .args(extra)
        .status()
        .unwrap();
    assert!(st.success());
    rig
}

fn calibrate(dir: &Scratch, rig: &Path, plan: &Path, extra: &[&str]) -> Output {
    lc_host()
        .arg("calibrate")
        .arg(rig)
        .arg("--plan")
        .arg(plan)
        .args(["--lot", "T1", "--db"])
        .arg(dir.path("u.db"))
        .arg("--images")
        .arg(dir.path("img"))
        .args(extra)
        .output()
        .unwrap()
}

fn text(o: &Output) -> String {
    format!(
        "status {:?}\nstdout:\n{}\nstderr:\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// The images folder holds exactly one file per unit whose latest attempt
/// passed, equal to that attempt's image, and nothing else.
fn assert_images_equal_latest_passes(db: &Path, images: &Path) -> usize {
    let store = Store::open(db).unwrap();
    let latest = store.attempts(&Filter::default().latest_only()).unwrap();
    let want: BTreeSet<String> = latest
        .iter()
        .filter(|a| a.result == AttemptResult::Pass)
        .map(|a| lc_host::calib::lot::image_file_name(&a.serial))
        .collect();
    let have: BTreeSet<String> = std::fs::read_dir(images)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    assert_eq!(have, want, "images folder against the latest passes");
    for a in latest.iter().filter(|a| a.result == AttemptResult::Pass) {
        let file =
            std::fs::read(images.join(lc_host::calib::lot::image_file_name(&a.serial))).unwrap();
        assert_eq!(Some(file.clone()), store.image(&a.serial, None).unwrap());
        Calibration::parse(&file).unwrap();
    }
    want.len()
}

/// Issue 14's station scenario, and defect 1 (a unit that failed its
/// re-calibration kept its old passing image): calibrate a lot, tighten the
/// plan and re-run; the images folder holds exactly the latest passes, the
/// exit status says "some failed", and `units show` of a unit that passed
/// and then failed shows both attempts with their plan hashes.
#[test]
fn station_scenario_tightened_plan_removes_rejected_images() {
    let dir = Scratch::new("scenario");
    let rig = simulate(&dir, 12, &["--bad-every", "5"]);
    let plan = dir.path("plan.toml");
    std::fs::write(&plan, demo_plan()).unwrap();
    let first = calibrate(
        &dir,
        &rig,
        &plan,
        &["--station", "EOL-2", "--operator", "jm"],
    );
    assert_eq!(first.status.code(), Some(1), "{}", text(&first));
    assert_eq!(
        assert_images_equal_latest_passes(&dir.path("u.db"), &dir.path("img")),
        10
    );

    // Tighten the rest-frequency window so that some passing units fail.
    let store = Store::open(dir.path("u.db")).unwrap();
    let mut rest: Vec<(f64, String)> = store
        .attempts(&Filter::default().result(AttemptResult::Pass))
        .unwrap()
        .iter()
        .map(|a| {
            let r = store.attempt(&a.serial, None).unwrap().unwrap();
            (
                r.params["rest_frequency_hz"].as_f64().unwrap(),
                a.serial.clone(),
            )
        })
        .collect();
    rest.sort_by(|a, b| a.0.total_cmp(&b.0));
    let limit = rest[rest.len() / 2].0;
    let tightened = demo_plan().replace("max = 5.95e6", &format!("max = {limit}"));
    assert_ne!(tightened, demo_plan());
    std::fs::write(&plan, tightened).unwrap();
    let second = calibrate(&dir, &rig, &plan, &[]);
    assert_eq!(second.status.code(), Some(1), "{}", text(&second));
    let passes = assert_images_equal_latest_passes(&dir.path("u.db"), &dir.path("img"));
    assert!(passes < 10 && passes > 0, "{passes}\n{}", text(&second));

    // A unit that passed first and failed now: both attempts, two plans.
    let (_, rejected) = rest.last().unwrap();
    let latest = store.attempt(rejected, None).unwrap().unwrap();
    assert_eq!((latest.attempt, latest.result), (2, AttemptResult::Fail));
    assert!(!dir.path("img").join(format!("{rejected}.lcim")).exists());
    let show = lc_host()
        .args(["units", "show", rejected, "--db"])
        .arg(dir.path("u.db"))
        .output()
        .unwrap();
    assert!(show.status.success(), "{}", text(&show));
    let v: serde_json::Value = serde_json::from_slice(&show.stdout).unwrap();
    let attempts = v["attempts"].as_array().unwrap();
    assert_eq!(attempts.len(), 2);
    assert_eq!(attempts[0]["result"], "pass");
    assert_eq!(attempts[1]["result"], "fail");
    let h0 = attempts[0]["trace"]["plan_sha256"].as_str().unwrap();
    let h1 = attempts[1]["trace"]["plan_sha256"].as_str().unwrap();
    assert!(h0.len() == 64 && h1.len() == 64 && h0 != h1, "{h0} {h1}");
    assert_eq!(attempts[0]["trace"]["station"], "EOL-2");
    assert_eq!(attempts[0]["trace"]["operator"], "jm");
    assert_eq!(attempts[0]["trace"]["rig_file"], rig.display().to_string());
    assert_eq!(
        attempts[0]["trace"]["rig_sha256"],
        attempts[1]["trace"]["rig_sha256"]
    );
    assert!(attempts[0]["tool_version"]
        .as_str()
        .unwrap()
        .starts_with("lc-host "));
    assert!(v["plans"][h0].as_str().unwrap().contains("max = 5.95e6"));
    assert!(v["plans"][h1]
        .as_str()
        .unwrap()
        .contains(&format!("max = {limit}")));
    let reason = attempts[1]["reasons"][0].as_str().unwrap();
    assert!(
        reason.contains("rest frequency") && reason.contains(" MHz"),
        "{reason}"
    );
}

/// Defect 2: an image that could not be written was invisible ("2425
/// passed", exit 0). Now its unit fails in the text summary and in JSON,
/// and the run is an I/O failure (exit 3).
#[test]
fn an_unwritable_image_fails_its_unit() {
    let dir = Scratch::new("unwritable");
    let rig = simulate(&dir, 3, &[]);
    let plan = dir.path("plan.toml");
    std::fs::write(&plan, demo_plan()).unwrap();
    // A directory where T1-0002's image must go: no rename can replace it
    // (even for root).
    std::fs::create_dir_all(dir.path("img/T1-0002.lcim/x")).unwrap();
    let out = calibrate(&dir, &rig, &plan, &[]);
    assert_eq!(out.status.code(), Some(3), "{}", text(&out));
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(stdout.contains("2 passed, 1 failed"), "{}", text(&out));
    assert!(
        stdout.contains("T1-0002: image file ") && stdout.contains("T1-0002.lcim not written"),
        "{}",
        text(&out)
    );
    let json = calibrate(&dir, &rig, &plan, &["--json"]);
    assert_eq!(json.status.code(), Some(3), "{}", text(&json));
    let v: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    assert_eq!(
        (v["passed"].as_u64(), v["image_failures"].as_u64()),
        (Some(2), Some(1))
    );
    let unit = v["units_list"]
        .as_array()
        .unwrap()
        .iter()
        .find(|u| u["serial"] == "T1-0002")
        .unwrap();
    assert_eq!(unit["passed"], false);
    assert!(
        unit["reasons"]
            .to_string()
            .contains("T1-0002.lcim not written"),
        "{unit}"
    );
    // Once the folder is fixed, a re-run writes the image without judging
    // the unit again.
    std::fs::remove_dir_all(dir.path("img/T1-0002.lcim")).unwrap();
    let fixed = calibrate(&dir, &rig, &plan, &[]);
    assert_eq!(fixed.status.code(), Some(0), "{}", text(&fixed));
    assert_eq!(
        assert_images_equal_latest_passes(&dir.path("u.db"), &dir.path("img")),
        3
    );
    let store = Store::open(dir.path("u.db")).unwrap();
    assert_eq!(store.attempts(&Filter::default()).unwrap().len(), 3);
}

/// Defect 5: rig targets in µm labelled mm (here: mm labelled µm) gave a
/// passing, useless image with nodes 0 … 1. Now the unit fails with a hint.
#[test]
fn a_target_unit_mix_up_fails_with_a_hint() {
    let dir = Scratch::new("mixup");
    let rig = simulate(&dir, 2, &[]);
    let log = std::fs::read_to_string(&rig)
        .unwrap()
        .replace(",mm,", ",um,");
    std::fs::write(&rig, log).unwrap();
    let plan = dir.path("plan.toml");
    std::fs::write(&plan, demo_plan()).unwrap();
    let out = calibrate(&dir, &rig, &plan, &["--json"]);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for u in v["units_list"].as_array().unwrap() {
        assert_eq!(u["passed"], false);
        let f = u["findings"]
            .as_array()
            .unwrap()
            .iter()
            .find(|f| f["limit"] == "range_steps")
            .unwrap_or_else(|| panic!("{u}"));
        assert!(f["measured"].as_f64().unwrap() < 100.0);
        assert!(u["reasons"].to_string().contains("unit mix-up"), "{u}");
    }
    assert_eq!(std::fs::read_dir(dir.path("img")).unwrap().count(), 0);
}

/// Defects 4 and 6 at the command line: a NaN limit and an impossible
/// volume table are configuration errors (exit 2) naming the key, before
/// any unit is judged.
#[test]
fn plan_errors_exit_with_status_2() {
    let dir = Scratch::new("config");
    let rig = simulate(&dir, 2, &[]);
    let plan = dir.path("plan.toml");
    std::fs::write(
        &plan,
        demo_plan().replace("max_residual_um = 8.0", "max_residual_um = nan"),
    )
    .unwrap();
    let out = calibrate(&dir, &rig, &plan, &[]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    assert!(
        String::from_utf8_lossy(&out.stderr).contains("limits.max_residual_um"),
        "{}",
        text(&out)
    );
    assert!(
        !dir.path("u.db").exists(),
        "nothing judged, no database made"
    );
    let missing = calibrate(&dir, &dir.path("nope.csv"), &plan, &[]);
    assert_eq!(missing.status.code(), Some(2), "{}", text(&missing));
}

/// Defect 7: one unit could only be re-calibrated by grepping its rows
/// into standard input, and re-running a rig log silently added an attempt
/// for every unit. Now `--serial` / `--serials-from` select units, and a
/// re-run names what it did not judge again.
#[test]
fn serial_selection_and_reattempt() {
    let dir = Scratch::new("select");
    let rig = simulate(&dir, 6, &[]);
    let plan = dir.path("plan.toml");
    std::fs::write(&plan, demo_plan()).unwrap();
    let one = calibrate(&dir, &rig, &plan, &["--serial", "T1-0003", "--json"]);
    assert_eq!(one.status.code(), Some(0), "{}", text(&one));
    let v: serde_json::Value = serde_json::from_slice(&one.stdout).unwrap();
    assert_eq!(
        (v["units"].as_u64(), v["not_selected"].as_u64()),
        (Some(1), Some(5))
    );
    let list = dir.path("serials.txt");
    std::fs::write(&list, "# re-work\nT1-0003\n\nT1-0005\n").unwrap();
    let two = calibrate(
        &dir,
        &rig,
        &plan,
        &["--serials-from", list.to_str().unwrap(), "--json"],
    );
    assert_eq!(two.status.code(), Some(0), "{}", text(&two));
    let v: serde_json::Value = serde_json::from_slice(&two.stdout).unwrap();
    assert_eq!(
        (v["judged"].as_u64(), v["already_recorded"].as_u64()),
        (Some(1), Some(1))
    );
    let again = calibrate(&dir, &rig, &plan, &["--serial", "T1-0003", "--reattempt"]);
    assert_eq!(again.status.code(), Some(0), "{}", text(&again));
    let store = Store::open(dir.path("u.db")).unwrap();
    let n = |s: &str| store.attempts(&Filter::default().serial(s)).unwrap().len();
    assert_eq!((n("T1-0003"), n("T1-0005"), n("T1-0001")), (2, 1, 0));
    let absent = calibrate(&dir, &rig, &plan, &["--serial", "T9-9999"]);
    assert_eq!(absent.status.code(), Some(2), "{}", text(&absent));
    assert!(String::from_utf8_lossy(&absent.stderr).contains("T9-9999"));
    // Standard input records its name as `-` and hashes the same bytes.
    let stdin = lc_host()
        .args(["calibrate", "-", "--lot", "T1", "--plan"])
        .arg(&plan)
        .arg("--db")
        .arg(dir.path("u.db"))
        .arg("--images")
        .arg(dir.path("img"))
        .stdin(std::fs::File::open(&rig).unwrap())
        .output()
        .unwrap();
    assert_eq!(stdin.status.code(), Some(0), "{}", text(&stdin));
    assert!(
        String::from_utf8_lossy(&stdin.stderr).contains("2 units were already recorded"),
        "{}",
        text(&stdin)
    );
    assert_eq!(n("T1-0001"), 1);
}

/// Defect 11: a read-only database could not be listed or exported (the
/// write-ahead-log switch on open). `units` opens it read-only and writes
/// nothing beside it.
#[test]
fn a_read_only_database_lists_and_exports() {
    let dir = Scratch::new("readonly");
    let rig = simulate(&dir, 2, &[]);
    let plan = dir.path("plan.toml");
    std::fs::write(&plan, demo_plan()).unwrap();
    assert_eq!(calibrate(&dir, &rig, &plan, &[]).status.code(), Some(0));
    let ro = dir.path("ro");
    std::fs::create_dir_all(&ro).unwrap();
    std::fs::copy(dir.path("u.db"), ro.join("u.db")).unwrap();
    let before = std::fs::read(ro.join("u.db")).unwrap();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(ro.join("u.db"), std::fs::Permissions::from_mode(0o444)).unwrap();
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o555)).unwrap();
    let out_dir = dir.path("out");
    std::fs::create_dir_all(&out_dir).unwrap();
    std::fs::set_permissions(&out_dir, std::fs::Permissions::from_mode(0o777)).unwrap();
    // Root may write anywhere: run the reader as an unprivileged user then,
    // so the permissions bite as they do for an operator.
    let as_user = |c: &mut Command| {
        use std::os::unix::fs::MetadataExt;
        use std::os::unix::process::CommandExt;
        if std::fs::metadata(&out_dir).unwrap().uid() == 0 {
            c.uid(65_534).gid(65_534);
        }
    };
    let mut list = lc_host();
    list.args(["units", "list", "--db"]).arg(ro.join("u.db"));
    as_user(&mut list);
    let list = list.output().unwrap();
    let mut export = lc_host();
    export
        .args(["units", "export", "T1-0001", "--db"])
        .arg(ro.join("u.db"))
        .arg("-o")
        .arg(out_dir.join("x.lcim"));
    as_user(&mut export);
    let export = export.output().unwrap();
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o755)).unwrap();
    assert!(list.status.success(), "{}", text(&list));
    assert!(String::from_utf8_lossy(&list.stdout).contains("T1-0002"));
    assert!(export.status.success(), "{}", text(&export));
    Calibration::parse(&std::fs::read(out_dir.join("x.lcim")).unwrap()).unwrap();
    // Nothing written: same bytes, no -wal or -shm made.
    assert_eq!(std::fs::read(ro.join("u.db")).unwrap(), before);
    let names: Vec<_> = std::fs::read_dir(&ro)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(names, ["u.db"]);
}

/// A fresh schema on the test PostgreSQL server (`LC_TEST_POSTGRES_URL`),
/// dropped on drop; `None` (a loud skip) on a developer machine without a
/// server, a failure under CI=true.
pub struct PgSchema {
    admin: String,
    schema: String,
    /// URL whose search path is the schema.
    pub url: String,
}

impl PgSchema {
    pub fn new(tag: &str) -> Option<PgSchema> {
        let admin = match std::env::var("LC_TEST_POSTGRES_URL") {
            Ok(u) if !u.is_empty() => u,
            _ if std::env::var("CI").is_ok_and(|v| v == "true") => {
                panic!("LC_TEST_POSTGRES_URL is not set (CI=true): start scripts/pg-test-server.sh")
            }
            _ => {
                eprintln!("SKIPPED on PostgreSQL: LC_TEST_POSTGRES_URL is not set");
                return None;
            }
        };
        let schema = format!("lc_it_{tag}_{}", std::process::id());
        let mut c = postgres::Client::connect(&admin, postgres::NoTls).unwrap();
        c.batch_execute(&format!(
            "DROP SCHEMA IF EXISTS {schema} CASCADE; CREATE SCHEMA {schema}"
        ))
        .unwrap();
        let sep = if admin.contains('?') { '&' } else { '?' };
        let url = format!("{admin}{sep}options=-csearch_path%3D{schema}");
        Some(PgSchema { admin, schema, url })
    }
}

impl Drop for PgSchema {
    fn drop(&mut self) {
        if let Ok(mut c) = postgres::Client::connect(&self.admin, postgres::NoTls) {
            let _ = c.batch_execute(&format!("DROP SCHEMA {} CASCADE", self.schema));
        }
    }
}

/// Eight station processes calibrate one lot into one PostgreSQL database
/// and one images folder at the same time, every unit judged by every
/// station (`--reattempt`): no attempt lost or duplicated, each unit's
/// attempts numbered 1 … 8 without gaps, and the images folder equal to the
/// latest verdicts.
#[test]
fn eight_stations_write_one_lot_into_postgresql() {
    let Some(pg) = PgSchema::new("eight") else {
        return;
    };
    let dir = Scratch::new("eight");
    let units = 60;
    let rig = simulate(&dir, units, &["--bad-every", "4"]);
    let plan = dir.path("plan.toml");
    std::fs::write(&plan, demo_plan()).unwrap();
    // Create the schema once, so the stations race on the lot, not on it.
    drop(Store::open(&pg.url).unwrap());
    let stations: Vec<_> = (0..8)
        .map(|i| {
            lc_host()
                .arg("calibrate")
                .arg(&rig)
                .arg("--plan")
                .arg(&plan)
                .args(["--lot", "T1", "--db", &pg.url, "--images"])
                .arg(dir.path("img"))
                .args([
                    "--reattempt",
                    "--group-units",
                    "7",
                    "--station",
                    &format!("S{i}"),
                ])
                .stdout(std::process::Stdio::null())
                .stderr(std::process::Stdio::piped())
                .spawn()
                .unwrap()
        })
        .collect();
    for s in stations {
        let out = s.wait_with_output().unwrap();
        assert_eq!(
            out.status.code(),
            Some(1),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let store = Store::open(&pg.url).unwrap();
    let all = store
        .attempts(&Filter::default().order(lc_host::store::Order::BySerial))
        .unwrap();
    assert_eq!(all.len(), 8 * units, "attempts lost or duplicated");
    let mut per_serial: std::collections::BTreeMap<&str, Vec<u32>> = Default::default();
    let mut stations: std::collections::BTreeMap<&str, BTreeSet<String>> = Default::default();
    for a in &all {
        per_serial.entry(&a.serial).or_default().push(a.attempt);
        stations
            .entry(&a.serial)
            .or_default()
            .insert(a.trace.as_ref().unwrap().station.clone());
    }
    assert_eq!(per_serial.len(), units);
    for (serial, numbers) in &per_serial {
        assert_eq!(numbers, &(1..=8).collect::<Vec<u32>>(), "{serial}");
        assert_eq!(stations[serial].len(), 8, "{serial}: every station once");
    }
    let lots = store.lots().unwrap();
    assert_eq!(
        (lots[0].units, lots[0].attempts),
        (units as u64, 8 * units as u64)
    );
    assert_images_equal_latest_passes(Path::new(&pg.url), &dir.path("img"));
}
