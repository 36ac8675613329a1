//! Acceptance: every limit of the plan against one unit's fit. [`checks`]
//! measures every limit the plan sets ([`limits`]) and says whether it
//! holds; the failed ones are the unit's typed [`Finding`]s ([`judge`]):
//! which limit (and its plan key), the measured value, the bound, the
//! physical unit, and where. Their text is made from those fields, so a
//! report can lay them out as it likes.

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
    /// Every limit, in the order [`checks`] lists them.
    pub const ALL: [Limit; 11] = [
        Limit::BadRows,
        Limit::MinSteps,
        Limit::RestFrequency,
        Limit::Q,
        Limit::Sensitivity,
        Limit::MaxResidual,
        Limit::MaxCurveError,
        Limit::Drift,
        Limit::DriftSigma,
        Limit::Monotonic,
        Limit::RangeSteps,
    ];

    /// The limit's code: its serde name (`max_residual`, `drift`, …), the
    /// one vocabulary of the reports and the results file.
    pub fn code(self) -> &'static str {
        match self {
            Limit::BadRows => "bad_rows",
            Limit::MinSteps => "min_steps",
            Limit::RestFrequency => "rest_frequency",
            Limit::Q => "q",
            Limit::Sensitivity => "sensitivity",
            Limit::MaxResidual => "max_residual",
            Limit::MaxCurveError => "max_curve_error",
            Limit::Drift => "drift",
            Limit::DriftSigma => "drift_sigma",
            Limit::Monotonic => "monotonic",
            Limit::RangeSteps => "range_steps",
        }
    }

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

fn bound(limit: Limit, min: Option<f64>, max: Option<f64>, unit: PhysicalUnit) -> Finding {
    Finding {
        limit,
        measured: None,
        min,
        max,
        unit,
        at: None,
    }
}

/// Every limit the plan sets, with its bounds in its physical unit and no
/// measured value, in the order [`checks`] and [`judge`] list them.
pub fn limits(plan: &Plan) -> Vec<Finding> {
    use PhysicalUnit::*;
    let l = &plan.limits;
    let mut out = vec![bound(
        Limit::BadRows,
        None,
        Some(l.max_bad_rows as f64),
        Count,
    )];
    if let Some(n) = l.min_steps {
        out.push(bound(Limit::MinSteps, Some(n as f64), None, Count));
    }
    if let Some(r) = l.rest_frequency_hz {
        out.push(bound(Limit::RestFrequency, r.min, r.max, Hertz));
    }
    if let Some(r) = l.q {
        out.push(bound(Limit::Q, r.min, r.max, Count));
    }
    if let Some(s) = l.sensitivity {
        out.push(bound(
            Limit::Sensitivity,
            Some(s.min_per_mm * 1e6),
            None,
            PpmPerMillimetre,
        ));
    }
    if let Some(max) = l.max_residual_um {
        out.push(bound(Limit::MaxResidual, None, Some(max), Micrometre));
    }
    if let Some(max) = l.max_curve_error_um {
        out.push(bound(Limit::MaxCurveError, None, Some(max), Micrometre));
    }
    if let Some(r) = l.drift_ppm_per_k {
        out.push(bound(Limit::Drift, r.min, r.max, PpmPerKelvin));
    }
    if let Some(max) = l.max_drift_sigma_ppm_per_k {
        out.push(bound(Limit::DriftSigma, None, Some(max), PpmPerKelvin));
    }
    if l.monotonic {
        out.push(bound(Limit::Monotonic, None, Some(0.0), Count));
    }
    out.push(bound(
        Limit::RangeSteps,
        Some(f64::from(l.min_range_steps)),
        None,
        Count,
    ));
    out
}

/// One limit of the plan measured on one unit.
#[derive(Clone, Debug, PartialEq)]
pub struct Check {
    /// The limit, the unit's value (`None`: not measurable, or not known
    /// to the caller), the bound, the physical unit and the worst rig point,
    /// as a [`Finding`] carries them.
    pub value: Finding,
    /// Whether the unit meets the limit.
    pub passed: bool,
}

/// Every limit the plan sets (as [`limits`] lists them), measured on one
/// unit's fit. `bad_rows` is the number of bad rig rows of the unit; `None`
/// when the caller does not know it: that check then has no measured value
/// and counts as passed (the unit's recorded findings say otherwise).
pub fn checks(fit: &UnitFit, bad_rows: Option<usize>, plan: &Plan) -> Vec<Check> {
    let l = &plan.limits;
    let step_um = plan.product.output_step_m * 1e6;
    let range = |b: &Finding| crate::calib::plan::Range {
        min: b.min,
        max: b.max,
    };
    limits(plan)
        .into_iter()
        .map(|mut value| {
            let passed = match value.limit {
                Limit::BadRows => {
                    value.measured = bad_rows.map(|n| n as f64);
                    bad_rows.is_none_or(|n| n <= l.max_bad_rows)
                }
                Limit::MinSteps => {
                    value.measured = Some(fit.steps as f64);
                    l.min_steps.is_none_or(|n| fit.steps >= n)
                }
                Limit::RestFrequency => {
                    value.measured = Some(fit.rest_frequency_hz);
                    range(&value).contains(fit.rest_frequency_hz)
                }
                Limit::Q => {
                    value.measured = fit.q.map(|q| q.0);
                    value.measured.is_some_and(|q| range(&value).contains(q))
                }
                Limit::Sensitivity => {
                    value.measured = fit.sensitivity_per_mm.map(|v| v * 1e6);
                    match (fit.sensitivity_per_mm, l.sensitivity) {
                        (Some(v), Some(s)) => v >= s.min_per_mm,
                        (Some(_), None) => true,
                        (None, _) => false,
                    }
                }
                Limit::MaxResidual => {
                    value.measured = fit.max_residual_um();
                    let worst = fit
                        .residuals
                        .iter()
                        .max_by(|a, b| a.residual_fixed.abs().total_cmp(&b.residual_fixed.abs()));
                    value.at = worst.map(|w| RigPoint {
                        line: w.line,
                        target_mm: w.target * step_um * 1e-3,
                        temp_c: w.temp_c,
                    });
                    !matches!((value.measured, value.max), (Some(r), Some(max)) if r > max)
                }
                Limit::MaxCurveError => {
                    value.measured = fit.curve_error.map(|e| e * step_um);
                    !matches!((value.measured, value.max), (Some(e), Some(max)) if e > max)
                }
                Limit::Drift => {
                    let b1 = fit.drift.b1_per_k * 1e6;
                    value.measured = Some(b1);
                    range(&value).contains(b1)
                }
                Limit::DriftSigma => {
                    value.measured = fit.drift.sigma_b1_per_k.map(|s| s * 1e6);
                    match (value.measured, value.max) {
                        (Some(s), Some(max)) => s <= max,
                        (Some(_), None) => true,
                        (None, _) => fit.drift.points > 0,
                    }
                }
                Limit::Monotonic => {
                    value.measured = Some(fit.monotone_violations as f64);
                    fit.monotone_violations == 0
                }
                Limit::RangeSteps => {
                    value.measured = fit.range_steps();
                    !matches!(value.measured, Some(span) if span < f64::from(l.min_range_steps))
                }
            };
            Check { value, passed }
        })
        .collect()
}

/// The limits a unit fails (empty: it passes them all): the failed
/// [`checks`]. The bad rows' own messages are not findings: the caller
/// lists them as reasons.
pub fn judge(fit: &UnitFit, unit: &UnitLog, plan: &Plan) -> Vec<Finding> {
    checks(fit, Some(unit.errors.len()), plan)
        .into_iter()
        .filter(|c| !c.passed)
        .map(|c| c.value)
        .collect()
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

    proptest::proptest! {
        /// A finding read back from its JSON (as a results file carries
        /// it) has the same text: the reasons can be rebuilt from the
        /// typed fields alone. The text names the plan key, and the
        /// measured value when there is one.
        #[test]
        fn text_survives_the_json_round_trip(
            li in 0usize..11,
            ui in 0usize..6,
            measured in proptest::option::of(-1e9f64..1e9),
            min in proptest::option::of(-1e9f64..1e9),
            max in proptest::option::of(-1e9f64..1e9),
            at in proptest::option::of((0u64..1_000_000, -1e3f64..1e3, -60f64..200.0)),
        ) {
            let units = [
                PhysicalUnit::Hertz,
                PhysicalUnit::Micrometre,
                PhysicalUnit::Millimetre,
                PhysicalUnit::PpmPerKelvin,
                PhysicalUnit::PpmPerMillimetre,
                PhysicalUnit::Count,
            ];
            let f = Finding {
                limit: Limit::ALL[li],
                measured,
                min,
                max,
                unit: units[ui],
                at: at.map(|(line, target_mm, temp_c)| RigPoint { line, target_mm, temp_c }),
            };
            let back: Finding = serde_json::from_str(&serde_json::to_string(&f).unwrap()).unwrap();
            proptest::prop_assert_eq!(back.to_string(), f.to_string());
            proptest::prop_assert!(f.to_string().contains(f.limit.key()));
        }
    }

    /// One vocabulary: a limit's code is its serde name, codes and plan
    /// keys are distinct, and every key names the `[limits]` table.
    #[test]
    fn codes_are_the_serde_names() {
        let mut codes = std::collections::HashSet::new();
        let mut keys = std::collections::HashSet::new();
        for l in Limit::ALL {
            assert_eq!(
                serde_json::to_string(&l).unwrap(),
                format!("\"{}\"", l.code())
            );
            assert!(l.key().starts_with("limits."), "{}", l.key());
            assert!(codes.insert(l.code()) && keys.insert(l.key()));
        }
    }

    /// The plan's limits in the order of the checks, bounds in physical
    /// units (sensitivity in ppm/mm), always the bad-rows and range limits.
    #[test]
    fn limits_of_the_demo_plan() {
        let plan = Plan::parse(crate::demo::PLAN, std::path::Path::new("demo-plan.toml")).unwrap();
        let l = limits(&plan);
        assert_eq!(l.first().map(|f| f.limit), Some(Limit::BadRows));
        assert_eq!(l.last().map(|f| f.limit), Some(Limit::RangeSteps));
        assert!(l.iter().all(|f| f.measured.is_none() && f.at.is_none()));
        let order: Vec<usize> = l
            .iter()
            .map(|f| Limit::ALL.iter().position(|a| *a == f.limit).unwrap())
            .collect();
        assert!(order.windows(2).all(|w| w[0] < w[1]), "{order:?}");
        let s = l.iter().find(|f| f.limit == Limit::Sensitivity).unwrap();
        assert_eq!(s.unit, PhysicalUnit::PpmPerMillimetre);
        assert!(s.min.is_some_and(|v| v > 1.0), "{s:?}");
    }
}
