//! Acceptance: every limit of the plan against one unit's fit; each failed
//! limit becomes a reason naming the value and the limit.

use super::plan::Plan;
use super::unit::UnitFit;
use crate::riglog::UnitLog;

fn si(v: f64, unit: &str) -> String {
    let (scaled, prefix) = match v.abs() {
        a if a >= 1e6 => (v / 1e6, "M"),
        a if a >= 1e3 => (v / 1e3, "k"),
        _ => (v, ""),
    };
    format!("{scaled:.4} {prefix}{unit}")
}

/// The reasons a unit fails the plan's limits (empty: it passes them).
pub fn judge(fit: &UnitFit, unit: &UnitLog, plan: &Plan) -> Vec<String> {
    let l = &plan.limits;
    let mut out = Vec::new();
    if unit.errors.len() > l.max_bad_rows {
        out.push(format!(
            "{} bad rig rows (limit {})",
            unit.errors.len(),
            l.max_bad_rows
        ));
        out.extend(unit.errors.iter().map(ToString::to_string));
    }
    if let Some(n) = l.min_steps {
        if fit.steps < n {
            out.push(format!(
                "{} usable rig steps, fewer than the {n} required",
                fit.steps
            ));
        }
    }
    if let Some(r) = l.rest_frequency_hz {
        if !r.contains(fit.rest_frequency_hz) {
            let lim = |v: Option<f64>| v.map_or("…".to_string(), |v| si(v, "Hz"));
            out.push(format!(
                "rest frequency {} outside {} … {}",
                si(fit.rest_frequency_hz, "Hz"),
                lim(r.min),
                lim(r.max)
            ));
        }
    }
    if let Some(r) = l.q {
        match fit.q {
            Some((q, _, _)) if !r.contains(q) => {
                out.push(format!("Q {q:.1} outside {}", r.describe()))
            }
            Some(_) => {}
            None => out.push(
                "Q limit set but no ring counts at rest (or no [ringdown] thresholds)".to_string(),
            ),
        }
    }
    if let Some(sens) = l.sensitivity {
        match fit.sensitivity_per_mm {
            Some(v) if v < sens.min_per_mm => out.push(format!(
                "sensitivity {v:.3e} per mm at {} mm below the minimum {:.3e}",
                sens.at_mm, sens.min_per_mm
            )),
            Some(_) => {}
            None => out.push("sensitivity limit set but no curve was fitted".to_string()),
        }
    }
    if let Some(max) = l.max_residual {
        if let Some(r) = fit.max_residual() {
            if r > max {
                let worst = fit
                    .residuals
                    .iter()
                    .max_by(|a, b| a.residual_fixed.abs().total_cmp(&b.residual_fixed.abs()));
                let at = worst.map_or(String::new(), |w| {
                    format!(
                        " (line {}, target {:.1}, {:.1} °C)",
                        w.line, w.target, w.temp_c
                    )
                });
                out.push(format!(
                    "largest residual {r:.2} output units exceeds {max}{at}"
                ));
            }
        }
    }
    if let (Some(max), Some(e)) = (l.max_curve_error, fit.curve_error) {
        if e > max {
            out.push(format!("curve interpolation error {e:.3} output units exceeds {max}; raise product.curve_nodes"));
        }
    }
    if let Some(r) = l.drift_ppm_per_k {
        let b1 = fit.drift.b1_per_k * 1e6;
        if !r.contains(b1) {
            out.push(format!(
                "drift coefficient {b1:.2} ppm/K outside {} ppm/K",
                r.describe()
            ));
        }
    }
    if let Some(max) = l.max_drift_sigma_ppm_per_k {
        match fit.drift.sigma_b1_per_k {
            Some(s) if s * 1e6 > max => out.push(format!("drift coefficient uncertainty {:.2} ppm/K exceeds {max}", s * 1e6)),
            Some(_) => {}
            None if fit.drift.points > 0 => {}
            None => out.push("drift uncertainty limit set but the rig has no steps away from the reference temperature".to_string()),
        }
    }
    if l.monotonic && fit.monotone_violations > 0 {
        out.push(format!(
            "{} rig steps run against the curve's direction beyond three quantisation steps",
            fit.monotone_violations
        ));
    }
    out
}
