//! The demo scenario (docs/references.md, Demo scenario) end to end, in one
//! folder: a lot of 24 proximity units simulated, calibrated and reported; one
//! unit's image inspected; that unit logged on a warming press, converted
//! exactly as its firmware would, verified and budgeted; eight tank level
//! probes and a metal detector calibrated; every image made verified.
//! Everything comes from the project's own simulator; nothing is downloaded.

use crate::budget::{budget, class1_tempco_ppm_per_k, to_text as budget_text, BudgetInput, Gating};
use crate::calib::lot::calibrate_lot;
use crate::calib::plan::Plan;
use crate::convert::{convert_log, Converter};
use crate::fieldlog::FieldLogReader;
use crate::report::{rows::Traceability, ReportWriter};
use crate::riglog::RigLogReader;
use crate::sim::field::{write_field_log, Fault, FaultKind, FieldSpec};
use crate::sim::rig::{units, write_rig_log, LotSpec};
use crate::store::Store;
use crate::stream::OnBadRow;
use crate::svg::{Quantity, TracePlot};
use crate::verify::{to_text as verify_text, verify, Firmware, VerifyOptions};
use std::io::Write;
use std::path::Path;

/// Why the demo stopped: the step and the underlying error.
#[derive(Debug, thiserror::Error)]
pub enum DemoError {
    /// A file or folder of the demo could not be written or read.
    #[error("demo: {path}: {source}")]
    File {
        /// The file or folder.
        path: std::path::PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// Writing the narration failed.
    #[error("demo: cannot write the narration: {0}")]
    Say(#[from] std::io::Error),
    /// A bundled plan did not parse (a bug: the plans are tested).
    #[error(transparent)]
    Plan(#[from] crate::calib::plan::PlanError),
    /// The unit records database.
    #[error(transparent)]
    Store(#[from] crate::store::StoreError),
    /// The lot's calibration.
    #[error(transparent)]
    Lot(#[from] crate::calib::lot::LotError),
    /// A simulated log did not read back.
    #[error(transparent)]
    Input(#[from] crate::csvin::InputError),
    /// The lot report could not be written.
    #[error(transparent)]
    Report(#[from] crate::report::ReportError),
    /// A step of the demo failed; the message names the step.
    #[error("demo: {step}: {message}")]
    Step {
        /// Which step.
        step: &'static str,
        /// What went wrong.
        message: String,
    },
}

impl DemoError {
    fn step(step: &'static str, e: impl std::fmt::Display) -> Self {
        DemoError::Step {
            step,
            message: e.to_string(),
        }
    }
}

fn file(path: &Path) -> impl FnOnce(std::io::Error) -> DemoError + '_ {
    move |source| DemoError::File {
        path: path.to_path_buf(),
        source,
    }
}

type Result<T> = std::result::Result<T, DemoError>;

/// The demo's calibration plan (the same as examples/data/demo-plan.toml).
pub const PLAN: &str = include_str!("../../examples/data/demo-plan.toml");

/// The level scenario's plan (examples/data/demo-level-plan.toml).
pub const LEVEL_PLAN: &str = include_str!("../../examples/data/demo-level-plan.toml");

/// The metal detector's plan: the demo coil as a metal detector
/// (examples/unit-firmware/data/metal-plan.toml).
pub const METAL_PLAN: &str = include_str!("../../examples/unit-firmware/data/metal-plan.toml");

/// The sweep each image of a lot gets in the demo: a 200 × 17 grid and
/// 20 000 random points (`lc-host verify` sweeps 10^7 and more).
fn lot_sweep() -> VerifyOptions {
    VerifyOptions {
        random_points: 20_000,
        grid: (200, 17),
        ..VerifyOptions::default()
    }
}

/// Verifies every image of `lot` in `images`, one line each; returns
/// (passed, verified).
fn verify_lot(images: &Path, lot: &str, say: &mut dyn Write) -> Result<(usize, usize)> {
    let mut paths: Vec<std::path::PathBuf> = std::fs::read_dir(images)
        .map_err(file(images))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.extension().is_some_and(|x| x == "lcim")
                && p.file_name()
                    .and_then(|n| n.to_str())
                    .is_some_and(|n| n.starts_with(&format!("{lot}-")))
        })
        .collect();
    paths.sort();
    let mut passed = 0;
    for path in &paths {
        let bytes = std::fs::read(path).map_err(file(path))?;
        let cal = lc_core::image::Calibration::parse(&bytes)
            .map_err(|e| DemoError::step("verify", format!("{}: {e}", path.display())))?;
        let r = verify(&cal, &lot_sweep(), &Firmware, &|_| {})
            .map_err(|e| DemoError::step("verify", format!("{}: {e}", path.display())))?;
        let worst = r
            .stages
            .iter()
            .max_by(|a, b| a.max_error_per_bound.total_cmp(&b.max_error_per_bound));
        passed += usize::from(r.passed());
        writeln!(
            say,
            "   {:<14} {:<31} {:>6} readings, worst {} at {:.3} of its bound: {}",
            r.serial,
            r.product,
            r.readings,
            worst.map_or("-", |s| s.stage),
            worst.map_or(0.0, |s| s.max_error_per_bound),
            if r.passed() { "pass" } else { "FAIL" }
        )?;
    }
    Ok((passed, paths.len()))
}

/// Runs the demo into `out`, narrating on `say`.
pub fn run(out: &Path, say: &mut dyn Write) -> Result<()> {
    std::fs::create_dir_all(out).map_err(file(out))?;
    let mut plan = Plan::parse(PLAN, Path::new("demo-plan.toml"))?;
    plan.calibrated_at = crate::calib::plan::calibration_time(None);
    writeln!(
        say,
        "LC sensor toolkit demo: lot DEMO-01 of 24 proximity sensors (simulated), in {}",
        out.display()
    )?;
    writeln!(say, "Not a safety-rated component: readings that protect people or machines need a safety function built to the applicable standards.\n")?;

    // 1. Simulate the lot's rig log.
    let mut spec = LotSpec::demo("DEMO-01", 24, 1);
    spec.bad_capacitor_every = 12;
    let rig = out.join("rig.csv");
    crate::atomic::write_atomically(&rig, |w| write_rig_log(&spec, w))
        .map_err(|e| DemoError::step("rig log", e))?;
    writeln!(
        say,
        "1. Rig log: each unit stepped through a plate 0.5 → 8 mm at 25 °C and 60 °C: {}",
        rig.display()
    )?;
    writeln!(say, "   (unit DEMO-01-0012 and DEMO-01-0024 got a cracked capacitor, to show the acceptance limits at work)")?;

    // 2. Calibrate.
    let db = out.join("units.db");
    let _ = std::fs::remove_file(&db);
    let _ = std::fs::remove_file(out.join("units.db-wal"));
    let _ = std::fs::remove_file(out.join("units.db-shm"));
    let mut store = Store::open(&db)?;
    let images = out.join("images");
    std::fs::create_dir_all(&images).map_err(file(&images))?;
    let report_dir = out.join("report");
    let trace = Traceability::now()
        .with_plan_text(
            "demo-plan.toml (built in; examples/data/demo-plan.toml)",
            PLAN,
        )
        .with_rig_log(&rig);
    let mut html = ReportWriter::new(&report_dir, "DEMO-01", &plan, trace, 48)?;
    let mut page_error = None;
    let reader = RigLogReader::new(std::fs::File::open(&rig).map_err(file(&rig))?, &rig)?;
    let lot = calibrate_lot(reader, "DEMO-01", &plan, &mut store, Some(&images), |o| {
        if let Err(e) = html.add(o) {
            page_error.get_or_insert(e);
        }
    })?;
    if let Some(e) = page_error {
        return Err(e.into());
    }
    writeln!(
        say,
        "2. Calibrated: {} of {} units pass (yield {:.0} %); images in {}, records in {}, plots in {}",
        lot.passed,
        lot.units,
        lot.yield_fraction * 100.0,
        images.display(),
        db.display(),
        report_dir.display()
    )?;
    for u in lot.units_list.iter().filter(|u| !u.passed) {
        writeln!(
            say,
            "   {} fails: {}",
            u.serial,
            u.reasons.first().map_or("", String::as_str)
        )?;
    }
    if let (Some(lo), Some(hi)) = (lot.rest_frequency_hz.min, lot.rest_frequency_hz.max) {
        writeln!(
            say,
            "   rest frequencies {:.4} … {:.4} MHz; largest residual through the firmware path {:.0} µm",
            lo / 1e6,
            hi / 1e6,
            lot.max_residual_um.max.unwrap_or(f64::NAN)
        )?;
    }

    // 3. Inspect one image.
    let image_path = images.join("DEMO-01-0007.lcim");
    let bytes = std::fs::read(&image_path).map_err(file(&image_path))?;
    let cal = lc_core::image::Calibration::parse(&bytes)
        .map_err(|e| DemoError::step("image", format!("{}: {e}", image_path.display())))?;
    let (b1, _) = cal.drift.coefficients_f64();
    writeln!(
        say,
        "3. Image of DEMO-01-0007: {} bytes, CRC valid; rest {:.1} Hz, drift {:+.2} ppm/K, {} curve nodes",
        bytes.len(),
        f64::from(cal.reference_hz) / cal.rest.to_f64(),
        b1 * 1e6,
        cal.curve.map_or(0, |t| t.nodes().len())
    )?;

    // 4. Field log: two hours on a press that warms by 20 °C.
    let unit = units(&LotSpec::demo("DEMO-01", 7, 1))
        .pop()
        .ok_or_else(|| DemoError::step("demo unit", "not in the lot"))?;
    let mut field = FieldSpec::demo(unit, 8);
    field.faults = vec![
        Fault {
            kind: FaultKind::OpenCoil,
            at_s: 1_800.0,
            duration_s: 2.0,
        },
        Fault {
            kind: FaultKind::Dropouts,
            at_s: 3_600.0,
            duration_s: 60.0,
        },
        Fault {
            kind: FaultKind::StuckCounter,
            at_s: 5_400.0,
            duration_s: 1.0,
        },
    ];
    let field_path = out.join("field.csv");
    let rows = crate::atomic::write_atomically(&field_path, |w| write_field_log(&field, w))
        .map_err(|e| DemoError::step("field log", e))?;
    writeln!(say, "4. Field log: {rows} readings over 2 h on a press warming 25 → 45 °C, with an open coil, dropouts and a stuck counter injected: {}", field_path.display())?;

    // 5. Convert exactly as the firmware does.
    let mut conv = Converter::new(cal).map_err(|e| DemoError::step("converter", e))?;
    let readings = out.join("readings.csv");
    let mut trace: Vec<(f64, f64)> = Vec::new();
    let mut mid_stroke: Vec<(f64, f64)> = Vec::new();
    let mut faults = Vec::new();
    let mut worst_diff: f64 = 0.0;
    let reader = FieldLogReader::new(
        std::fs::File::open(&field_path).map_err(file(&field_path))?,
        &field_path,
    )?;
    let summary = crate::atomic::write_atomically(&readings, |w| {
        convert_log(
            reader,
            w,
            &mut conv,
            OnBadRow::Stop,
            true,
            |_| {},
            |c| {
                let t = c.time_s.unwrap_or(0.0);
                if matches!(c.reading.status(), lc_core::reader::Status::SensorFault(_)) {
                    faults.push(t);
                } else {
                    trace.push((t, f64::from(c.reading.output())));
                    // A quarter into each 2 s stroke the plate is at 4.25 mm.
                    if (t.rem_euclid(2.0) - 0.5).abs() < 1e-6 {
                        mid_stroke.push((t, f64::from(c.reading.output())));
                    }
                }
                if let Some(v) = c.value_f64 {
                    worst_diff = worst_diff.max((f64::from(c.reading.output()) - v).abs());
                }
            },
        )
    })
    .map_err(|e| DemoError::step("conversion", e))?;
    let plot = TracePlot::new(
        "DEMO-01-0007 on the press: two hours warming 25 → 45 °C",
        Quantity::new("gap", "µm"),
        "firmware reading",
        trace,
    )
    .faults(faults.iter().copied());
    html.figure(
        "trace.svg",
        "DEMO-01-0007 logged on the press for two hours (field.csv through its image); \
         vertical lines: readings flagged as sensor faults (open coil at 1 800 s, dropouts from 3 600 s, stuck counter at 5 400 s)",
        &plot.render(),
    )?;
    let plot = TracePlot::new(
        "DEMO-01-0007: the reading at mid-stroke (plate at 4.25 mm) while the press warms",
        Quantity::new("gap", "µm"),
        "firmware reading a quarter into each stroke",
        mid_stroke,
    )
    .faults(faults);
    html.figure(
        "mid-stroke.svg",
        "The same log, one reading per stroke where the plate is at 4.25 mm: the drift model holds the reading while the press warms by 20 °C",
        &plot.render(),
    )?;
    let index = html.finish(&lot)?;
    writeln!(
        say,
        "5. Converted with the firmware's own arithmetic: {} ok, {} out of range or no target, {} sensor faults flagged; fixed vs f64 at most {:.3} µm: {}",
        summary.ok,
        summary.out_of_range,
        summary.faults,
        worst_diff,
        readings.display()
    )?;

    // 6. Verify the image's fixed-point path.
    let opts = VerifyOptions {
        random_points: 1_000_000,
        ..VerifyOptions::default()
    };
    let report =
        verify(&cal, &opts, &Firmware, &|_| {}).map_err(|e| DemoError::step("verify", e))?;
    writeln!(say, "6. Verified the image over its whole domain (grid plus 10^6 random points; `lc-host verify` runs 10^7):")?;
    for line in verify_text(&report).lines() {
        writeln!(say, "   {line}")?;
    }
    writeln!(
        say,
        "   and every image of the lot (a grid and 20 000 random points each):"
    )?;
    let mut verified = verify_lot(&images, "DEMO-01", say)?;
    verified.0 += usize::from(report.passed());
    verified.1 += 1;

    // 7. Budget the readout.
    let tempco = class1_tempco_ppm_per_k("C0G")
        .ok_or_else(|| DemoError::step("budget", "C0G is not a class-1 code"))?;
    let input = BudgetInput {
        reference_hz: 48e6,
        reference_ppm: 20.0,
        gating: Gating::Reciprocal,
        gate: 16_384.0,
        inductance_h: (7.25e-6, 0.015),
        capacitance_f: (100e-12, 0.01),
        parasitic_f: 10e-12,
        capacitor_tempco_ppm: tempco,
        inductance_tempco_ppm: 25.0,
        temperature_c: (-20.0, 85.0, 25.0),
        calibration_temps_c: vec![25.0, 60.0],
        target_resolution: None,
    };
    let curve = cal.curve.map(|t| *t.curve());
    let b = budget(&input, curve.as_ref());
    writeln!(
        say,
        "7. Readout budget of the demo sensor (48 MHz reference, 16 384-cycle gate, C0G):"
    )?;
    for line in budget_text(&b, "µm").lines() {
        writeln!(say, "   {line}")?;
    }
    // 8. The second scenario: the coolant tank's level probes.
    let mut level_plan = Plan::parse(LEVEL_PLAN, Path::new("demo-level-plan.toml"))?;
    level_plan.calibrated_at = plan.calibrated_at;
    let level_rig = out.join("level-rig.csv");
    crate::atomic::write_atomically(&level_rig, |w| {
        crate::sim::level::write_level_rig_log("TANK-01", 8, 1, w)
    })
    .map_err(|e| DemoError::step("level rig log", e))?;
    let reader = RigLogReader::new(
        std::fs::File::open(&level_rig).map_err(file(&level_rig))?,
        &level_rig,
    )?;
    let tank_dir = out.join("report-tank");
    let trace = Traceability::now()
        .with_plan_text(
            "demo-level-plan.toml (built in; examples/data/demo-level-plan.toml)",
            LEVEL_PLAN,
        )
        .with_rig_log(&level_rig);
    let mut tank_html = ReportWriter::new(&tank_dir, "TANK-01", &level_plan, trace, 16)?;
    let level_lot = calibrate_lot(
        reader,
        "TANK-01",
        &level_plan,
        &mut store,
        Some(&images),
        |o| {
            if let Err(e) = tank_html.add(o) {
                page_error.get_or_insert(e);
            }
        },
    )?;
    if let Some(e) = page_error {
        return Err(e.into());
    }
    let tank_index = tank_html.finish(&level_lot)?;
    writeln!(
        say,
        "8. Coolant tank (horizontal cylinder, 400 mm): {} of {} level probes calibrated at 25 °C and 50 °C, each with its reference electrode and the tank's volume table",
        level_lot.passed, level_lot.units
    )?;
    let unit = crate::sim::level::level_units("TANK-01", 3, 1)
        .pop()
        .ok_or_else(|| DemoError::step("level unit", "not in the lot"))?;
    let level_path = images.join("TANK-01-0003.lcim");
    let level_image = std::fs::read(&level_path).map_err(file(&level_path))?;
    let level_cal = lc_core::image::Calibration::parse(&level_image)
        .map_err(|e| DemoError::step("level image", e))?;
    let level_image =
        crate::host_image(&level_cal).map_err(|e| DemoError::step("level image", e))?;
    let mut level_reader = lc_core::reader::LevelReader::new(&level_image)
        .map_err(|e| DemoError::step("level reader", e))?;
    let g = crate::sim::level::LevelGeometry::DEMO;
    let truth_l = |h: f64| {
        lc_core::geometry::horizontal_cylinder_volume_m3(g.diameter_m / 2.0, g.length_m, h) * 1e3
    };
    for (h, t) in [(0.1, 20.0), (0.2, 45.0), (0.35, 70.0)] {
        let (fp, fr) = unit.frequencies(h, t, &g);
        let pair =
            |f: f64| lc_core::counting::CountPair::new(4096, (4096.0 * 48e6 / f).round() as u32);
        let r = level_reader.read(&lc_core::reader::Input {
            pair: pair(fp),
            companion: Some(pair(fr)),
            temperature: lc_core::temperature::CentiCelsius::from_f64(t),
            ring_count: None,
        });
        writeln!(
            say,
            "   TANK-01-0003 at {:.0} mm, {t:.0} °C (water εr {:.1}): reads {:.1} mm, {:.2} L (true {:.2} L), {}",
            h * 1e3,
            crate::sim::level::water_permittivity(t),
            f64::from(r.level) / 10.0,
            f64::from(r.volume.unwrap_or(0)) / 1e3,
            truth_l(h),
            crate::convert::status_name(r.status)
        )?;
    }
    writeln!(say, "   report: {}", tank_index.display())?;
    writeln!(say, "   each probe's image verified (ratio, reference electrode's shift and temperature swept):")?;
    let (p, n) = verify_lot(&images, "TANK-01", say)?;
    verified = (verified.0 + p, verified.1 + n);

    // 9. The same coil as a metal detector.
    let mut metal_plan = Plan::parse(METAL_PLAN, Path::new("metal-plan.toml"))?;
    metal_plan.calibrated_at = plan.calibrated_at;
    let metal_rig = out.join("metal-rig.csv");
    crate::atomic::write_atomically(&metal_rig, |w| {
        write_rig_log(&LotSpec::demo("METAL-01", 1, 1), w)
    })
    .map_err(|e| DemoError::step("metal rig log", e))?;
    let reader = RigLogReader::new(
        std::fs::File::open(&metal_rig).map_err(file(&metal_rig))?,
        &metal_rig,
    )?;
    let metal_lot = calibrate_lot(
        reader,
        "METAL-01",
        &metal_plan,
        &mut store,
        Some(&images),
        |_| {},
    )?;
    writeln!(
        say,
        "9. The demo coil as a metal detector (ring-down confirms the loss): {} of {} unit calibrated; its image verified (shift − baseline and the detected class swept):",
        metal_lot.passed, metal_lot.units
    )?;
    let (p, n) = verify_lot(&images, "METAL-01", say)?;
    verified = (verified.0 + p, verified.1 + n);
    writeln!(
        say,
        "   {} of {} images verified within every stage's bound",
        verified.0, verified.1
    )?;
    writeln!(
        say,
        "\nDone. Open {} in a browser: the lot's yield, limits, failures by reason, histograms, the press trace, and a certificate page per unit.",
        index.display()
    )?;
    if verified.0 != verified.1 {
        return Err(DemoError::step(
            "verify",
            format!(
                "{} of {} images exceeded a stated bound (listed above)",
                verified.1 - verified.0,
                verified.1
            ),
        ));
    }
    Ok(())
}
