//! The lot report's plots: histograms of the lot's distributions with the
//! plan's limits, and each unit's curve with its rig points and residuals.

use super::lot::{LotReport, UnitOutcome};
use super::plan::Plan;
use crate::atomic::write_bytes;
use crate::svg::{CurvePlot, Histogram, Quantity};
use std::path::{Path, PathBuf};

/// Writes the lot histograms into `dir` (created if missing); returns the
/// files written.
pub fn write_lot_plots(
    dir: &Path,
    report: &LotReport,
    plan: &Plan,
) -> std::io::Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir)?;
    let l = &plan.limits;
    let lim = |r: Option<crate::calib::plan::Range>, k: f64| {
        (
            r.and_then(|r| r.min).map(|v| v * k),
            r.and_then(|r| r.max).map(|v| v * k),
        )
    };
    let plots = [
        (
            "rest-frequency.svg",
            Histogram::new(
                format!("Lot {}: rest frequency", report.lot),
                Quantity::new("rest frequency", "MHz"),
                report.rest_frequency_hz.values.iter().map(|v| v / 1e6),
            )
            .limits(
                lim(l.rest_frequency_hz, 1e-6).0,
                lim(l.rest_frequency_hz, 1e-6).1,
            ),
        ),
        (
            "q.svg",
            Histogram::new(
                format!("Lot {}: quality factor at rest", report.lot),
                Quantity::new("Q", ""),
                report.q.values.iter().copied(),
            )
            .limits(lim(l.q, 1.0).0, lim(l.q, 1.0).1),
        ),
        (
            "sensitivity.svg",
            Histogram::new(
                format!("Lot {}: sensitivity", report.lot),
                Quantity::new("|ds/dx|", "ppm per mm"),
                report.sensitivity_per_mm.values.iter().map(|v| v * 1e6),
            )
            .limits(l.sensitivity.map(|s| s.min_per_mm * 1e6), None),
        ),
        (
            "max-residual.svg",
            Histogram::new(
                format!(
                    "Lot {}: largest residual per unit (firmware path)",
                    report.lot
                ),
                Quantity::new("|residual|", "µm"),
                report.max_residual_um.values.iter().copied(),
            )
            .limits(None, l.max_residual_um),
        ),
        (
            "drift.svg",
            Histogram::new(
                format!("Lot {}: drift coefficient b1", report.lot),
                Quantity::new("b1", "ppm/K"),
                report.drift_ppm_per_k.values.iter().copied(),
            )
            .limits(lim(l.drift_ppm_per_k, 1.0).0, lim(l.drift_ppm_per_k, 1.0).1),
        ),
    ];
    let mut written = Vec::new();
    for (name, h) in plots {
        let path = dir.join(name);
        write_bytes(&path, h.render().as_bytes()).map_err(std::io::Error::other)?;
        written.push(path);
    }
    Ok(written)
}

/// A label for one raw output unit of a step in metres ("µm", "0.1 mm").
pub fn unit_label(step_m: f64) -> String {
    let table = [(1e-9, "nm"), (1e-6, "µm"), (1e-3, "mm"), (1.0, "m")];
    for (base, name) in table.iter().rev() {
        let k = step_m / base;
        if k >= 0.999_999 {
            return if (k - 1.0).abs() < 1e-6 {
                (*name).to_string()
            } else {
                format!("{} {name}", k)
            };
        }
    }
    format!("{step_m} m")
}

/// Writes one unit's curve plot into `dir`.
pub fn write_unit_plot(
    dir: &Path,
    out: &UnitOutcome,
    plan: &Plan,
) -> std::io::Result<Option<PathBuf>> {
    let Some(fit) = &out.fit else { return Ok(None) };
    if fit.nodes.is_empty() {
        return Ok(None);
    }
    std::fs::create_dir_all(dir)?;
    let step_mm = plan.product.output_step_m * 1e3;
    let curve: Vec<(f64, f64)> = fit
        .nodes
        .iter()
        .map(|&(s, y)| (f64::from(y) * step_mm, s * 1e6))
        .collect();
    let rig: Vec<(f64, f64)> = fit
        .residuals
        .iter()
        .map(|r| (r.target * step_mm, r.shift_ppm))
        .collect();
    let res: Vec<(f64, f64)> = fit
        .residuals
        .iter()
        .map(|r| (r.target * step_mm, r.residual_fixed * step_mm * 1e3))
        .collect();
    let verdict = if out.passed { "pass" } else { "FAIL" };
    let plot = CurvePlot::new(
        format!("{} ({verdict}): calibration curve", out.serial),
        Quantity::new("reference value", "mm"),
        Quantity::new("shift", "ppm"),
    )
    .line("curve written to the image", curve)
    .points("rig steps (compensated)", rig)
    .residuals(
        Quantity::new("residual", "µm"),
        res,
        plan.limits.max_residual_um,
    );
    let path = dir.join(format!("{}.svg", super::lot::file_stem(&out.serial)));
    write_bytes(&path, plot.render().as_bytes()).map_err(std::io::Error::other)?;
    Ok(Some(path))
}
