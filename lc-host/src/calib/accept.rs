//! Acceptance: every limit of the plan against one unit's fit. Each failed
//! limit is a typed [`Finding`]: which limit (and its plan key), the
//! measured value, the bound, the physical unit, and where; its text is made
//! from those fields, so a report can lay them out as it likes.

use super::plan::Plan;
use super::unit::UnitFit;
use crate::riglog::UnitLog;
use serde::{Deserialize, Serialize};

/// The acceptance limits a unit can fail.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum Limit {
    /// More bad rig rows than tolerated.
    BadRows,
    /// Fewer usable rig steps than required.
    MinSteps,
    /// Rest frequency outside its window.
    RestFrequency,
    /// Quality factor outside its window (or not measurable).
    Q,
    /// Sensitivity below its minimum (or not measurable).
    Sensitivity,
    /// Largest residual through the firmware path above its maximum.
    MaxResidual,
    /// Written curve's interpolation error above its maximum.
    MaxCurveError,
    /// Drift coefficient outside its window.
    Drift,
    /// Drift coefficient's standard error above its maximum (or not
    /// measurable).
    DriftSigma,
    /// Rig steps against the curve's direction.
    Monotonic,
    /// The calibrated range spans too few output steps.
    RangeSteps,
}

impl Limit {
    /// The plan key that sets this limit.
    pub fn key(self) -> &'static str {
        match self {
            Limit::BadRows => "limits.max_bad_rows",
            Limit::MinSteps => "limits.min_steps",
            Limit::RestFrequency => "limits.rest_frequency_hz",
            Limit::Q => "limits.q",
            Limit::Sensitivity => "limits.sensitivity",
            Limit::MaxResidual => "limits.max_residual_um",
            Limit::MaxCurveError => "limits.max_curve_error_um",
            Limit::Drift => "limits.drift_ppm_per_k",
            Limit::DriftSigma => "limits.max_drift_sigma_ppm_per_k",
            Limit::Monotonic => "limits.monotonic",
            Limit::RangeSteps => "limits.min_range_steps",
        }
    }
}

/// Physical unit of a finding's values.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[non_exhaustive]
pub enum PhysicalUnit {
    /// Hertz.
    #[serde(rename = "Hz")]
    Hertz,
    /// Micrometres.
    #[serde(rename = "µm")]
    Micrometre,
    /// Millimetres.
    #[serde(rename = "mm")]
    Millimetre,
    /// Parts per million per kelvin.
    #[serde(rename = "ppm/K")]
    PpmPerKelvin,
    /// Parts per million of shift per millimetre.
    #[serde(rename = "ppm/mm")]
    PpmPerMillimetre,
    /// A count (rows, steps, output steps), or the quality factor.
    #[serde(rename = "")]
    Count,
}

impl PhysicalUnit {
    /// The unit's symbol ("" for a count).
    pub fn symbol(self) -> &'static str {
        match self {
            PhysicalUnit::Hertz => "Hz",
            PhysicalUnit::Micrometre => "µm",
            PhysicalUnit::Millimetre => "mm",
            PhysicalUnit::PpmPerKelvin => "ppm/K",
            PhysicalUnit::PpmPerMillimetre => "ppm/mm",
            PhysicalUnit::Count => "",
        }
    }
}

/// Where on the rig a finding was measured.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct RigPoint {
    /// Rig log line.
    pub line: u64,
    /// The rig's reference value, mm.
    pub target_mm: f64,
    /// Temperature, °C.
    pub temp_c: f64,
}

/// One failed acceptance limit.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Finding {
    /// Which limit.
    pub limit: Limit,
    /// The measured value, in `unit`; `None` when the quantity could not be
    /// measured for this unit (then the limit fails).
    pub measured: Option<f64>,
    /// Lower bound, in `unit`.
    pub min: Option<f64>,
    /// Upper bound, in `unit`.
    pub max: Option<f64>,
    /// Physical unit of `measured`, `min` and `max`.
    pub unit: PhysicalUnit,
    /// The worst rig point, where one applies.
    pub at: Option<RigPoint>,
}

fn num(v: f64) -> String {
    if v == 0.0 || (1e-3..1e7).contains(&v.abs()) {
        let s = format!("{v:.4}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_string()
    } else {
        format!("{v:.4e}")
    }
}

impl std::fmt::Display for Finding {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let u = self.unit.symbol();
        let hz = self.unit == PhysicalUnit::Hertz;
        let q = |v: f64| match v.abs() {
            a if hz && a >= 1e6 => format!("{} MHz", num(v / 1e6)),
            a if hz && a >= 1e3 => format!("{} kHz", num(v / 1e3)),
            _ if u.is_empty() => num(v),
            _ => format!("{} {u}", num(v)),
        };
        let name = match self.limit {
            Limit::BadRows => "bad rig rows",
            Limit::MinSteps => "usable rig steps",
            Limit::RestFrequency => "rest frequency",
            Limit::Q => "Q",
            Limit::Sensitivity => "sensitivity",
            Limit::MaxResidual => "largest residual",
            Limit::MaxCurveError => "curve interpolation error",
            Limit::Drift => "drift coefficient",
            Limit::DriftSigma => "drift coefficient uncertainty",
            Limit::Monotonic => "rig steps against the curve's direction",
            Limit::RangeSteps => "calibrated range",
        };
        match self.measured {
            None => write!(
                f,
                "{name} limit set ({}) but it cannot be measured for this unit",
                self.limit.key()
            )?,
            Some(v) => {
                let what = if self.limit == Limit::RangeSteps {
                    format!("{name} spans {} output steps", num(v))
                } else {
                    format!("{name} {}", q(v))
                };
                match (self.min, self.max) {
                    (Some(a), Some(b)) => write!(f, "{what} outside {} … {}", q(a), q(b))?,
                    (Some(a), None) => write!(f, "{what} below the minimum {}", q(a))?,
                    (None, Some(b)) => write!(f, "{what} exceeds {}", q(b))?,
                    (None, None) => write!(f, "{what}")?,
                }
                write!(f, " ({})", self.limit.key())?;
            }
        }
        if let Some(p) = self.at {
            write!(
                f,
                " at line {}, target {} mm, {:.1} °C",
                p.line,
                num(p.target_mm),
                p.temp_c
            )?;
        }
        match self.limit {
            Limit::MaxCurveError => f.write_str("; raise product.curve_nodes")?,
            Limit::RangeSteps => f.write_str(
                "; a unit mix-up? check that the rig's target values are in the unit its target_unit column says (µm logged as mm gives a range 1000 times too small), and product.output_step_m",
            )?,
            Limit::Q if self.measured.is_none() => {
                f.write_str(": no ring counts at rest, or no [ringdown] thresholds")?
            }
            _ => {}
        }
        Ok(())
    }
}

fn finding(
    limit: Limit,
    measured: Option<f64>,
    min: Option<f64>,
    max: Option<f64>,
    unit: PhysicalUnit,
) -> Finding {
    Finding {
        limit,
        measured,
        min,
        max,
        unit,
        at: None,
    }
}

/// The limits a unit fails (empty: it passes them all). The bad rows'
/// own messages are not findings: the caller lists them as reasons.
pub fn judge(fit: &UnitFit, unit: &UnitLog, plan: &Plan) -> Vec<Finding> {
    use PhysicalUnit::*;
    let l = &plan.limits;
    let step_um = plan.product.output_step_m * 1e6;
    let mut out = Vec::new();
    if unit.errors.len() > l.max_bad_rows {
        out.push(finding(
            Limit::BadRows,
            Some(unit.errors.len() as f64),
            None,
            Some(l.max_bad_rows as f64),
            Count,
        ));
    }
    if let Some(n) = l.min_steps {
        if fit.steps < n {
            out.push(finding(
                Limit::MinSteps,
                Some(fit.steps as f64),
                Some(n as f64),
                None,
                Count,
            ));
        }
    }
    if let Some(r) = l.rest_frequency_hz {
        if !r.contains(fit.rest_frequency_hz) {
            out.push(finding(
                Limit::RestFrequency,
                Some(fit.rest_frequency_hz),
                r.min,
                r.max,
                Hertz,
            ));
        }
    }
    if let Some(r) = l.q {
        match fit.q {
            Some((q, _, _)) if !r.contains(q) => {
                out.push(finding(Limit::Q, Some(q), r.min, r.max, Count))
            }
            Some(_) => {}
            None => out.push(finding(Limit::Q, None, r.min, r.max, Count)),
        }
    }
    if let Some(sens) = l.sensitivity {
        let min = Some(sens.min_per_mm * 1e6);
        match fit.sensitivity_per_mm {
            Some(v) if v < sens.min_per_mm => {
                let mut f = finding(
                    Limit::Sensitivity,
                    Some(v * 1e6),
                    min,
                    None,
                    PpmPerMillimetre,
                );
                f.at = None;
                out.push(f);
            }
            Some(_) => {}
            None => out.push(finding(
                Limit::Sensitivity,
                None,
                min,
                None,
                PpmPerMillimetre,
            )),
        }
    }
    if let Some(max) = l.max_residual_um {
        if let Some(r) = fit.max_residual_um() {
            if r > max {
                let worst = fit
                    .residuals
                    .iter()
                    .max_by(|a, b| a.residual_fixed.abs().total_cmp(&b.residual_fixed.abs()));
                let mut f = finding(Limit::MaxResidual, Some(r), None, Some(max), Micrometre);
                f.at = worst.map(|w| RigPoint {
                    line: w.line,
                    target_mm: w.target * step_um * 1e-3,
                    temp_c: w.temp_c,
                });
                out.push(f);
            }
        }
    }
    if let (Some(max), Some(e)) = (l.max_curve_error_um, fit.curve_error) {
        let e = e * step_um;
        if e > max {
            out.push(finding(
                Limit::MaxCurveError,
                Some(e),
                None,
                Some(max),
                Micrometre,
            ));
        }
    }
    if let Some(r) = l.drift_ppm_per_k {
        let b1 = fit.drift.b1_per_k * 1e6;
        if !r.contains(b1) {
            out.push(finding(Limit::Drift, Some(b1), r.min, r.max, PpmPerKelvin));
        }
    }
    if let Some(max) = l.max_drift_sigma_ppm_per_k {
        match fit.drift.sigma_b1_per_k {
            Some(s) if s * 1e6 > max => out.push(finding(
                Limit::DriftSigma,
                Some(s * 1e6),
                None,
                Some(max),
                PpmPerKelvin,
            )),
            Some(_) => {}
            None if fit.drift.points > 0 => {}
            None => out.push(finding(
                Limit::DriftSigma,
                None,
                None,
                Some(max),
                PpmPerKelvin,
            )),
        }
    }
    if l.monotonic && fit.monotone_violations > 0 {
        out.push(finding(
            Limit::Monotonic,
            Some(fit.monotone_violations as f64),
            None,
            Some(0.0),
            Count,
        ));
    }
    if let Some(span) = fit.range_steps() {
        if span < l.min_range_steps as f64 {
            out.push(finding(
                Limit::RangeSteps,
                Some(span),
                Some(l.min_range_steps as f64),
                None,
                Count,
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn findings_read_in_physical_units_and_round_trip() {
        let f = Finding {
            limit: Limit::MaxResidual,
            measured: Some(330.0),
            min: None,
            max: Some(50.0),
            unit: PhysicalUnit::Micrometre,
            at: Some(RigPoint {
                line: 12,
                target_mm: 3.0,
                temp_c: 25.0,
            }),
        };
        assert_eq!(
            f.to_string(),
            "largest residual 330 µm exceeds 50 µm (limits.max_residual_um) at line 12, target 3 mm, 25.0 °C"
        );
        let json = serde_json::to_string(&f).unwrap();
        assert!(
            json.contains("\"unit\":\"µm\"") && json.contains("\"limit\":\"max_residual\""),
            "{json}"
        );
        assert_eq!(serde_json::from_str::<Finding>(&json).unwrap(), f);
    }
}
