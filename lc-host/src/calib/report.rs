//! The lot report's plots: histograms of the lot's distributions with the
//! plan's limits, and each unit's curve, residuals and drift model. The
//! HTML pages around them are [`crate::report`]'s.
//!
//! Only what applies is drawn: a lot without ring counts gets no Q
//! histogram, one without a sensitivity figure no sensitivity histogram.
//! Lengths are shown in µm or mm (never "100.00000000000001 µm"), and a
//! shift beyond ±10 % is shown as a ratio, not in ppm.

use super::lot::{LotReport, UnitOutcome};
use super::plan::{Kind, Plan, Range};
use crate::svg::{Histogram, Quantity, XyPlot};

/// A label for one raw output unit of a step in metres: "µm", "0.1 mm",
/// "5 µm". The step is written with at most six significant digits, in the
/// largest of m, mm, µm, nm where it is at least 0.1.
pub fn unit_label(step_m: f64) -> String {
    let table = [(1.0, "m"), (1e-3, "mm"), (1e-6, "µm"), (1e-9, "nm")];
    for (base, name) in table {
        let k = significant(step_m / base, 6);
        if k >= 0.1 || base == 1e-9 {
            return if k == 1.0 {
                name.to_string()
            } else {
                format!("{k} {name}")
            };
        }
    }
    format!("{step_m} m")
}

/// `v` rounded to `digits` significant digits (so `Display` prints no
/// binary noise).
pub(crate) fn significant(v: f64, digits: usize) -> f64 {
    format!("{v:.*e}", digits.saturating_sub(1))
        .parse()
        .unwrap_or(v)
}

/// How output values (raw units of `output_step_m`) are shown: µm for
/// steps below 0.1 mm, mm from there.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LengthUnit {
    /// Display units per raw output unit.
    pub per_output: f64,
    /// The display unit's symbol.
    pub symbol: &'static str,
}

impl LengthUnit {
    /// A length in µm in this display unit.
    pub fn from_um(&self, um: f64) -> f64 {
        if self.symbol == "mm" {
            um * 1e-3
        } else {
            um
        }
    }

    /// The display unit of a plan.
    pub fn of(plan: &Plan) -> Self {
        let step = plan.product.output_step_m;
        if step < 1e-4 * (1.0 - 1e-9) {
            LengthUnit {
                per_output: significant(step / 1e-6, 12),
                symbol: "µm",
            }
        } else {
            LengthUnit {
                per_output: significant(step / 1e-3, 12),
                symbol: "mm",
            }
        }
    }
}

/// The name of the reference value of a plan's product.
pub fn reference_name(plan: &Plan) -> &'static str {
    match plan.product.kind {
        Kind::Proximity => "plate gap",
        Kind::Level => "level",
        Kind::Metal => "reference value",
    }
}

/// A lot plot: file name, caption, SVG.
#[derive(Clone, Debug, PartialEq)]
pub struct Plot {
    /// File name (no folder).
    pub file: String,
    /// What it shows, for the page around it.
    pub caption: String,
    /// The SVG document.
    pub svg: String,
}

fn scaled(r: Option<Range>, k: f64) -> (Option<f64>, Option<f64>) {
    (
        r.and_then(|r| r.min).map(|v| v * k),
        r.and_then(|r| r.max).map(|v| v * k),
    )
}

/// The lot's histograms that apply to it (a quantity no unit has is left
/// out, and named in the second list with the reason).
pub fn lot_plots(report: &LotReport, plan: &Plan) -> (Vec<Plot>, Vec<String>) {
    let l = &plan.limits;
    let len = LengthUnit::of(plan);
    let lot = &report.lot;
    let mut plots = Vec::new();
    let mut omitted = Vec::new();
    let mut add = |file: &str, caption: String, values: &[f64], h: Histogram| {
        if values.is_empty() {
            omitted.push(caption);
        } else {
            plots.push(Plot {
                file: file.to_string(),
                caption,
                svg: h.render(),
            });
        }
    };
    let f = scaled(l.rest_frequency_hz, 1e-6);
    add(
        "rest-frequency.svg",
        "Rest frequency at the reference temperature".into(),
        &report.rest_frequency_hz.values,
        Histogram::new(
            format!("Lot {lot}: rest frequency"),
            Quantity::new("rest frequency", "MHz"),
            report.rest_frequency_hz.values.iter().map(|v| v / 1e6),
        )
        .limits(f.0, f.1),
    );
    let q = scaled(l.q, 1.0);
    add(
        "q.svg",
        "Quality factor at rest (from the ring count; needs ring counts in the rig log)".into(),
        &report.q.values,
        Histogram::new(
            format!("Lot {lot}: quality factor at rest"),
            Quantity::new("Q", "1"),
            report.q.values.iter().copied(),
        )
        .limits(q.0, q.1),
    );
    let at = l
        .sensitivity
        .map_or(String::new(), |s| format!(" at {} mm", s.at_mm));
    add(
        "sensitivity.svg",
        format!("Sensitivity |ds/dx|{at} (needs a sensitivity limit in the plan)"),
        &report.sensitivity_per_mm.values,
        Histogram::new(
            format!("Lot {lot}: sensitivity{at}"),
            Quantity::new("|ds/dx|", "ppm/mm"),
            report.sensitivity_per_mm.values.iter().map(|v| v * 1e6),
        )
        .limits(l.sensitivity.map(|s| s.min_per_mm * 1e6), None),
    );
    add(
        "max-residual.svg",
        "Largest residual per unit, through the firmware's arithmetic".into(),
        &report.max_residual_um.values,
        Histogram::new(
            format!("Lot {lot}: largest residual per unit (firmware path)"),
            Quantity::new("largest |residual|", len.symbol),
            report
                .max_residual_um
                .values
                .iter()
                .map(|&v| len.from_um(v)),
        )
        .limits(None, l.max_residual_um.map(|v| len.from_um(v))),
    );
    let d = scaled(l.drift_ppm_per_k, 1.0);
    add(
        "drift.svg",
        "First-order drift coefficient b1 of the L·C product".into(),
        &report.drift_ppm_per_k.values,
        Histogram::new(
            format!("Lot {lot}: drift coefficient b1"),
            Quantity::new("b1", "ppm/K"),
            report.drift_ppm_per_k.values.iter().copied(),
        )
        .limits(d.0, d.1),
    );
    (plots, omitted)
}

/// "PASS" or "FAIL", the one spelling of a verdict in plots and pages.
pub fn verdict(passed: bool) -> &'static str {
    if passed {
        "PASS"
    } else {
        "FAIL"
    }
}

/// The shift axis of a unit: ppm while every shift is within ±10 %,
/// else the ratio Δ(LC)/(LC)rest itself. Returns the quantity and the
/// factor from a shift in ppm.
fn shift_axis(shifts_ppm: impl Iterator<Item = f64>) -> (Quantity, f64) {
    let largest = shifts_ppm
        .filter(|v| v.is_finite())
        .fold(0.0_f64, |m, v| m.max(v.abs()));
    if largest <= 1e5 {
        (Quantity::new("shift Δ(LC)/(LC)rest", "ppm"), 1.0)
    } else {
        (Quantity::new("shift Δ(LC)/(LC)rest", "ratio"), 1e-6)
    }
}

/// One unit's plots: `(kind, caption, svg)` for its curve, residuals and
/// drift model; empty without a fit.
pub fn unit_plots(out: &UnitOutcome, plan: &Plan) -> Vec<(&'static str, String, String)> {
    let Some(fit) = &out.fit else {
        return Vec::new();
    };
    let len = LengthUnit::of(plan);
    let mm = plan.product.output_step_m * 1e3;
    let x = Quantity::new(reference_name(plan), "mm");
    let head = format!("{} ({})", out.serial, verdict(out.passed));
    let mut plots = Vec::new();
    if !fit.nodes.is_empty() || !fit.residuals.is_empty() {
        let (y, k) = shift_axis(
            fit.nodes
                .iter()
                .map(|n| n.0 * 1e6)
                .chain(fit.residuals.iter().map(|r| r.shift_ppm)),
        );
        let curve = XyPlot::new(format!("{head}: calibration curve"), x.clone(), y)
            .line(
                "curve written to the image",
                fit.nodes
                    .iter()
                    .map(|&(s, v)| (f64::from(v) * mm, s * 1e6 * k)),
            )
            .points(
                "rig steps (drift-compensated)",
                fit.residuals
                    .iter()
                    .map(|r| (r.target * mm, r.shift_ppm * k)),
            )
            .note(format!(
                "{} curve nodes · {} rig steps",
                fit.nodes.len(),
                fit.residuals.len()
            ));
        plots.push((
            "curve",
            "Calibration curve: the image's nodes and the rig's steps".to_string(),
            curve.render(),
        ));
    }
    if !fit.residuals.is_empty() {
        let mut temps: Vec<f64> = Vec::new();
        for r in &fit.residuals {
            if !temps.iter().any(|t| (t - r.temp_c).abs() <= 2.0) {
                temps.push(r.temp_c);
            }
        }
        temps.sort_by(f64::total_cmp);
        let mut plot = XyPlot::new(
            format!("{head}: residuals through the firmware path"),
            x.clone(),
            Quantity::new("residual", len.symbol),
        );
        for t in &temps {
            plot = plot.points(
                format!("rig at {t:.0} °C"),
                fit.residuals
                    .iter()
                    .filter(|r| (r.temp_c - t).abs() <= 2.0)
                    .map(|r| (r.target * mm, r.residual_fixed * len.per_output)),
            );
        }
        let worst = fit.max_residual().unwrap_or(0.0) * len.per_output;
        let mut note = format!("largest |residual| {worst:.3} {}", len.symbol);
        if let Some(m) = plan.limits.max_residual_um {
            let m = len.from_um(m);
            let outside = fit
                .residuals
                .iter()
                .filter(|r| r.residual_fixed.abs() * len.per_output > m)
                .count();
            note.push_str(&format!(
                " · {outside} of {} outside ±{} {}",
                fit.residuals.len(),
                significant(m, 6),
                len.symbol
            ));
            plot = plot.limit_lines(
                format!("limit ±{} {}", significant(m, 6), len.symbol),
                [-m, m],
            );
        }
        plots.push((
            "residual",
            "Residuals: the firmware's reading minus the rig's reference, per rig temperature"
                .to_string(),
            plot.note(note).render(),
        ));
    }
    let d = &fit.drift;
    let temps = &d.temperatures;
    if let (Some(lo), Some(hi)) = (
        temps.iter().copied().reduce(f64::min),
        temps.iter().copied().reduce(f64::max),
    ) {
        let (lo, hi) = (lo.min(d.reference_c) - 10.0, hi.max(d.reference_c) + 10.0);
        let g = |t: f64| {
            let dt = t - d.reference_c;
            (d.b1_per_k * dt + d.b2_per_k2 * dt * dt) * 1e6
        };
        let grid: Vec<f64> = (0..=60)
            .map(|i| lo + (hi - lo) * f64::from(i) / 60.0)
            .collect();
        let mut plot = XyPlot::new(
            format!("{head}: drift model at rest"),
            Quantity::new("temperature", "°C"),
            Quantity::new("drift g(T) of L·C", "ppm"),
        )
        .line("fitted drift model", grid.iter().map(|&t| (t, g(t))))
        .points("rig temperatures", temps.iter().map(|&t| (t, g(t))));
        let span = grid
            .iter()
            .map(|&t| g(t))
            .fold(0.0_f64, |m, v| m.max(v.abs()));
        let mut sigma_note = String::new();
        if let Some(s) = d.sigma_b1_per_k {
            let widest = s * (hi - lo) * 1e6;
            sigma_note = format!(", standard error of b1 {:.3} ppm/K", s * 1e6);
            // Drawn only where it can be told from the model line.
            if widest > 0.02 * span {
                let band = |sign: f64| {
                    grid.iter()
                        .map(move |&t| (t, g(t) + sign * s * (t - d.reference_c).abs() * 1e6))
                };
                plot = plot.dashed_pair("± 1 standard error of b1", band(1.0), band(-1.0));
            }
        }
        let note = format!(
            "b1 {:+.2} ppm/K{sigma_note}, b2 {:+.4} ppm/K², reference {:.1} °C, {} {}",
            d.b1_per_k * 1e6,
            d.b2_per_k2 * 1e6,
            d.reference_c,
            d.points,
            if d.points == 1 { "point" } else { "points" }
        );
        plots.push((
            "drift",
            "Drift model: the shift of L·C at rest against temperature".to_string(),
            plot.note(note).render(),
        ));
    }
    plots
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Regression: the level plan's 0.1 mm step was labelled
    /// "100.00000000000001 µm".
    #[test]
    fn unit_labels_have_no_float_noise() {
        assert_eq!(unit_label(1e-6), "µm");
        assert_eq!(unit_label(1e-4), "0.1 mm");
        assert_eq!(unit_label(5e-6), "5 µm");
        assert_eq!(unit_label(1e-3), "mm");
        assert_eq!(unit_label(1e-10), "0.1 nm");
        assert_eq!(unit_label(2.5e-11), "0.025 nm");
    }

    #[test]
    fn large_shifts_are_ratios() {
        let (q, k) = shift_axis([2e7, -3.0].into_iter());
        assert_eq!((q.unit.as_str(), k), ("ratio", 1e-6));
        let (q, k) = shift_axis([-7e5, 1e3].into_iter());
        assert_eq!((q.unit.as_str(), k), ("ratio", 1e-6));
        let (q, k) = shift_axis([-9e4].into_iter());
        assert_eq!((q.unit.as_str(), k), ("ppm", 1.0));
    }
}
