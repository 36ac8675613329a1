//! The design commands (`loops`, `ntc`, `volume`), run through the binary
//! with `--json`, against the check values in docs/references.md; and a
//! plan whose `[tank]` is a strapping table.

use lc_host::calib::plan::Plan;
use lc_host::calib::unit::fit_unit;
use lc_host::riglog::RigLogReader;
use std::path::{Path, PathBuf};
use std::process::Command;

fn lc_host(args: &[&str]) -> serde_json::Value {
    let out = Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .args(args)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "lc-host {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn lc_host_fails(args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .args(args)
        .output()
        .unwrap();
    assert!(!out.status.success(), "lc-host {args:?} succeeded");
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("lc-host-design-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn close(got: f64, want: f64, rel: f64) -> bool {
    (got - want).abs() <= rel * want.abs()
}

/// docs/references.md, Coaxial loops: M against mpmath at 50 digits
/// (scripts/reference-values.py), 1e-12 relative; radius or diameter.
#[test]
fn loops_match_the_mpmath_values() {
    let cases = [
        (
            "--radius-1",
            "10mm",
            "--radius-2",
            "10mm",
            "5mm",
            1.112_610_893_521_964_6e-8,
        ),
        (
            "--diameter-1",
            "20mm",
            "--radius-2",
            "20mm",
            "0",
            1.097_235_894_694_795_9e-8,
        ),
        (
            "--radius-1",
            "10mm",
            "--diameter-2",
            "10mm",
            "10mm",
            1.618_167_841_109_075_9e-9,
        ),
        (
            "--radius-1",
            "1m",
            "--radius-2",
            "0.1m",
            "2m",
            1.761_561_428_968_939_4e-9,
        ),
    ];
    for (f1, v1, f2, v2, d, want) in cases {
        let j = lc_host(&["loops", f1, v1, f2, v2, "--distance", d, "--json"]);
        let m = j["mutual_inductance_h"].as_f64().unwrap();
        assert!(close(m, want, 1e-12), "{f1} {v1} {f2} {v2} {d}: {m:e}");
    }
    let e = lc_host_fails(&[
        "loops",
        "--radius-1",
        "1m",
        "--radius-2",
        "1m",
        "--distance",
        "0",
    ]);
    assert!(e.contains("coincide"), "{e}");
    let e = lc_host_fails(&[
        "loops",
        "--radius-1",
        "1m",
        "--diameter-1",
        "2m",
        "--radius-2",
        "1m",
        "--distance",
        "1m",
    ]);
    assert!(e.contains("cannot be used with"), "{e}");
}

/// docs/references.md, NTC cases: the three-point fit against mpmath (50
/// digits), the two-point Beta (3892.5 K), and a code through the firmware
/// path (10 kΩ / B 3950, 16-bit, 10 kΩ low side: code 21 845 is 5 kΩ,
/// 41.46 °C).
#[test]
fn ntc_fit_and_convert_match_the_reference_values() {
    let j = lc_host(&[
        "ntc", "fit", "--point", "0:32650", "--point", "25:10k", "--point", "50:3600", "--json",
    ]);
    assert_eq!(j["law"]["model"], "steinhart-hart");
    let sh: Vec<f64> = j["steinhart_hart"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert!(close(sh[0], 1.131_547_537_723_803e-3, 1e-12), "A {}", sh[0]);
    assert!(
        close(sh[1], 2.337_530_598_714_644_3e-4, 1e-12),
        "B {}",
        sh[1]
    );
    assert!(close(sh[2], 8.898_269_200_863_592e-8, 1e-12), "C {}", sh[2]);
    let j = lc_host(&[
        "ntc", "fit", "--point", "0:32650", "--point", "50:3600", "--json",
    ]);
    assert!((j["law"]["beta_k"].as_f64().unwrap() - 3892.5).abs() < 0.05);

    let j = lc_host(&[
        "ntc",
        "convert",
        "--steinhart-hart",
        "1.1315475377238031e-3,2.3375305987146443e-4,8.8982692008635912e-8",
        "--resistance",
        "5k",
        "--json",
    ]);
    let t = j["conversion"]["temperature_c"].as_f64().unwrap();
    assert!((t - 41.568_145_317_696_78).abs() < 1e-9, "{t}");

    let j = lc_host(&[
        "ntc",
        "convert",
        "--beta",
        "3950",
        "--r25",
        "10k",
        "--code",
        "21845",
        "--adc-bits",
        "16",
        "--series",
        "10k",
        "--json",
    ]);
    let c = &j["conversion"];
    assert!((c["resistance_ohm"].as_f64().unwrap() - 5_000.0).abs() < 0.5);
    let t = c["temperature_c"].as_f64().unwrap();
    assert!((t - 41.4602).abs() < 0.01, "{t}");
    let fw = c["firmware_temperature_c"].as_f64().unwrap();
    assert!((fw - t).abs() <= 0.006, "{fw} vs {t}");
    assert_eq!(c["firmware_converter"], "NtcBeta");

    let e = lc_host_fails(&["ntc", "fit", "--point", "25:10k"]);
    assert!(e.contains("give 2 (Beta) or 3"), "{e}");
    let e = lc_host_fails(&[
        "ntc",
        "convert",
        "--beta",
        "3950",
        "--r25",
        "10k",
        "--code",
        "70000",
        "--adc-bits",
        "16",
        "--series",
        "10k",
    ]);
    assert!(e.contains("ADC code 70000"), "{e}");
}

/// docs/references.md, Horizontal tank cases, 12b and 12c: R = 1 m, L = 4 m
/// (computed, 1e-6 m³ as printed); fill fraction at depth fractions 5, 10,
/// 20, 25, 40 % (three decimals, computed; the source page's one-decimal
/// table is published, quoted).
#[test]
fn volume_matches_the_tank_cases() {
    let j = lc_host(&[
        "volume",
        "--shape",
        "horizontal-cylinder",
        "--radius",
        "1m",
        "--length",
        "4m",
        "--level",
        "0.5m",
        "--level",
        "1m",
        "--level",
        "1.5m",
        "--level",
        "2m",
        "--json",
    ]);
    let rows = j["rows"].as_array().unwrap();
    let want = [
        2.456_739,
        2.0 * std::f64::consts::PI,
        10.109_631,
        4.0 * std::f64::consts::PI,
    ];
    for (r, w) in rows.iter().zip(want) {
        let v = r["volume_m3"].as_f64().unwrap();
        assert!((v - w).abs() <= 5e-7, "{r}");
    }
    let depth = [
        (0.05, 1.869),
        (0.10, 5.204),
        (0.20, 14.238),
        (0.25, 19.550),
        (0.40, 37.353),
    ];
    for (f, pct) in depth {
        let level = format!("{}mm", f * 2000.0);
        let j = lc_host(&[
            "volume",
            "--shape",
            "horizontal-cylinder",
            "--diameter",
            "2m",
            "--length",
            "4m",
            "--level",
            &level,
            "--json",
        ]);
        let got = j["rows"][0]["fill_fraction"].as_f64().unwrap() * 100.0;
        assert!((got - pct).abs() <= 5e-4, "{f}: {got}");
    }
    let j = lc_host(&[
        "volume",
        "--shape",
        "vertical-cylinder",
        "--diameter",
        "1m",
        "--height",
        "2m",
        "--level",
        "1m",
        "--json",
    ]);
    let v = j["rows"][0]["volume_m3"].as_f64().unwrap();
    assert!(close(v, std::f64::consts::PI / 4.0, 1e-15), "{v}");
    let e = lc_host_fails(&[
        "volume",
        "--shape",
        "horizontal-cylinder",
        "--diameter",
        "400mm",
        "--length",
        "1m",
        "--level",
        "500mm",
    ]);
    assert!(e.contains("outside the tank"), "{e}");
}

/// A strapping table sampled from the 12c cylinder every 0.1 m reproduces
/// it at the rows and within 0.2 % of the full volume between them; the
/// same table drives a plan's `[tank]` and the calibration image's volume
/// table.
#[test]
fn strapping_table_in_the_command_and_in_a_plan() {
    let dir = scratch("strapping");
    let csv = dir.join("strapping.csv");
    let shape = lc_core::geometry::TankShape::HorizontalCylinder {
        radius_m: 0.2,
        length_m: 1.0,
    };
    let mut text = String::from("# sampled from a 400 mm x 1 m cylinder\nlevel_mm,volume_l\n");
    for i in 0..=16 {
        let h = 0.4 * f64::from(i) / 16.0;
        text.push_str(&format!("{},{}\n", h * 1e3, shape.volume_m3(h) * 1e3));
    }
    std::fs::write(&csv, &text).unwrap();
    let j = lc_host(&["volume", csv.to_str().unwrap(), "--steps", "40", "--json"]);
    for r in j["rows"].as_array().unwrap() {
        let h = r["level_m"].as_f64().unwrap();
        let v = r["volume_m3"].as_f64().unwrap();
        assert!(
            (v - shape.volume_m3(h)).abs() <= 2e-3 * shape.full_volume_m3(),
            "{h}: {v}"
        );
    }
    let e = lc_host_fails(&["volume", csv.to_str().unwrap(), "--level", "401mm"]);
    assert!(e.contains("outside the strapping table"), "{e}");

    // The plan: the demo level plan with the strapping table for its tank.
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-level-plan.toml");
    let plan_text = std::fs::read_to_string(&demo).unwrap();
    let start = plan_text.find("[tank]").unwrap();
    let end = plan_text[start..].find("\n[").unwrap() + start;
    let strapped = format!(
        "{}[tank]\nshape = \"strapping\"\ntable = \"strapping.csv\"\nvolume_step_m3 = 1e-6\n{}",
        &plan_text[..start],
        &plan_text[end..]
    );
    let plan_path = dir.join("plan.toml");
    std::fs::write(&plan_path, strapped).unwrap();
    let plan = Plan::load(&plan_path).unwrap();
    assert_eq!(
        plan.tank
            .as_ref()
            .unwrap()
            .strapping
            .as_ref()
            .unwrap()
            .len(),
        17
    );
    let mut log = Vec::new();
    lc_host::sim::level::write_level_rig_log("S", 1, 3, &mut log).unwrap();
    let unit = RigLogReader::new(log.as_slice(), Path::new("rig.csv"))
        .unwrap()
        .next()
        .unwrap();
    let (fit, reasons) = fit_unit(&unit, &plan).unwrap();
    assert!(reasons.is_empty(), "{reasons:?}");
    let (table, scale) = fit.calibration.unwrap().volume.unwrap();
    assert_eq!((table.nodes().len(), scale.decimal_exponent), (17, -3));
    // Level 0.1 mm units, volume 1 mL units: every row exactly.
    let curve = table.curve();
    for i in 0..=16 {
        let h = 0.4 * f64::from(i) / 16.0;
        let level = (h * 1e4).round() as i32;
        let got = curve.eval(lc_core::geometry::level_to_shift(level)).value;
        let want = (shape.volume_m3(h) * 1e6).round() as i32;
        assert!((got - want).abs() <= 1, "row {i}: {got} vs {want}");
    }

    // Errors name the file and line, and what to do.
    std::fs::write(&csv, "level_mm,volume_l\n0,0\n10,5\n10,6\n").unwrap();
    let e = Plan::load(&plan_path).unwrap_err().to_string();
    assert!(e.contains("strapping.csv: line 4: level not above"), "{e}");
    std::fs::remove_file(&csv).unwrap();
    let e = Plan::load(&plan_path).unwrap_err().to_string();
    assert!(
        e.contains("strapping.csv") && e.contains("cannot read"),
        "{e}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
