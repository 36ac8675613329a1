//! The adapter between a unit's calibration result and the pages: one
//! row per acceptance limit of the plan with its code, the measured value,
//! the bound and the physical unit, and the traceability rows. The rows
//! are made from the station's typed results ([`crate::calib::accept`]):
//! the plan's limits and their measured values from
//! [`accept::checks`], the verdict of each from the unit's recorded
//! [`Finding`]s, so the pages never judge a unit themselves.

use crate::calib::accept::{self, Finding, Limit, PhysicalUnit, RigPoint};
use crate::calib::lot::UnitOutcome;
use crate::calib::plan::{Plan, Range};
use crate::calib::report::{significant, LengthUnit};
use std::collections::HashSet;
use std::path::Path;

/// The code of a reason no limit names (a fit that failed, counts the
/// fault window rejected, a record or image that could not be written).
pub const OTHER: &str = "other";

/// One acceptance limit as the pages show it.
#[derive(Clone, Debug, PartialEq)]
pub struct ResultRow {
    /// The limit's code ([`Limit::code`]: `rest_frequency`, `q`,
    /// `max_residual`, `drift`, …), or [`OTHER`] for a reason no limit
    /// names.
    pub code: &'static str,
    /// The plan key that sets the limit (empty for [`OTHER`]).
    pub plan_key: &'static str,
    /// What is checked, in words (or the reason, for [`OTHER`]).
    pub text: String,
    /// For a failed limit, the finding's text (its `Display`): the same
    /// words the unit's recorded reasons hold.
    pub finding: Option<String>,
    /// The unit's value, in `unit`, when known.
    pub measured: Option<f64>,
    /// The bound in `unit`, as text ("5.3 … 5.95", "≤ 8").
    pub bound: String,
    /// The unit of `measured` and `bound` as shown: the finding's physical
    /// unit, frequencies in MHz and lengths in the plan's display unit
    /// (empty for a count or a pure number).
    pub unit: String,
    /// Whether the unit meets it: `None` when not known (a failed unit
    /// not judged in this run).
    pub passed: Option<bool>,
    /// The worst rig point, where one applies.
    pub at: Option<RigPoint>,
}

/// A bound as text: nine significant digits at most, so a scaled limit
/// shows no binary noise (5.95 MHz, not 5.949999999999999).
fn b(v: f64) -> f64 {
    significant(v, 9)
}

/// What a limit checks, in words.
fn describe(limit: Limit, plan: &Plan) -> String {
    match limit {
        Limit::BadRows => "bad rig rows".into(),
        Limit::MinSteps => "usable rig steps".into(),
        Limit::RestFrequency => {
            format!("rest frequency at {} °C", plan.product.reference_temp_c)
        }
        Limit::Q => "quality factor at rest (ring count)".into(),
        Limit::Sensitivity => match plan.limits.sensitivity {
            Some(s) => format!("sensitivity |ds/dx| at {} mm", s.at_mm),
            None => "sensitivity |ds/dx|".into(),
        },
        Limit::MaxResidual => "largest |residual| through the firmware's arithmetic".into(),
        Limit::MaxCurveError => "interpolation error of the written curve".into(),
        Limit::Drift => "first-order drift coefficient b1".into(),
        Limit::DriftSigma => "standard error of b1".into(),
        Limit::Monotonic => {
            "rig steps against the curve's direction (beyond three quantisation steps)".into()
        }
        Limit::RangeSteps => "calibrated range, in output steps".into(),
    }
}

/// A finding's values as a row: frequencies in MHz, lengths in the plan's
/// display unit, everything else in the finding's own unit.
fn row(plan: &Plan, v: &Finding, passed: Option<bool>, finding: Option<String>) -> ResultRow {
    let (k, unit) = match v.unit {
        PhysicalUnit::Hertz => (1e-6, "MHz"),
        PhysicalUnit::Micrometre => {
            let len = LengthUnit::of(plan);
            (len.from_um(1.0), len.symbol)
        }
        u => (1.0, u.symbol()),
    };
    ResultRow {
        code: v.limit.code(),
        plan_key: v.limit.key(),
        text: describe(v.limit, plan),
        finding,
        measured: v.measured.filter(|m| m.is_finite()).map(|m| m * k),
        bound: Range {
            min: v.min.map(|x| b(x * k)),
            max: v.max.map(|x| b(x * k)),
        }
        .describe(),
        unit: unit.to_string(),
        passed,
        at: v.at,
    }
}

/// The plan's limits as rows without measurements (for the lot page).
pub fn limit_rows(plan: &Plan) -> Vec<ResultRow> {
    accept::limits(plan)
        .iter()
        .map(|v| row(plan, v, None, None))
        .collect()
}

/// The unit's reasons that no finding made: a fit that failed, the bad
/// rows' own messages, counts the fault window rejected, a record or
/// image that could not be written, and every reason of a unit recorded
/// earlier (whose findings this run does not have).
pub fn other_reasons(out: &UnitOutcome) -> Vec<&str> {
    let made: HashSet<String> = out.findings.iter().map(ToString::to_string).collect();
    out.reasons
        .iter()
        .filter(|r| !made.contains(r.as_str()))
        .map(String::as_str)
        .collect()
}

/// One unit's result as rows: every limit of the plan with the unit's
/// value; a limit fails when the unit has a finding for it (the row then
/// carries the finding's value, bound and text) and holds otherwise when
/// the unit was judged (it has a fit) or passed. Then one [`OTHER`] row per
/// reason no finding made ([`other_reasons`]).
pub fn result_rows(out: &UnitOutcome, plan: &Plan) -> Vec<ResultRow> {
    let values: Vec<Finding> = match &out.fit {
        Some(fit) => accept::checks(fit, None, plan)
            .into_iter()
            .map(|c| c.value)
            .collect(),
        None => accept::limits(plan),
    };
    let judged = out.passed || out.fit.is_some();
    let mut rows: Vec<ResultRow> = values
        .iter()
        .map(|v| match out.findings.iter().find(|f| f.limit == v.limit) {
            Some(f) => row(plan, f, Some(false), Some(f.to_string())),
            None => row(plan, v, judged.then_some(true), None),
        })
        .collect();
    // A finding of a limit the plan does not list (none today) still shows.
    for f in &out.findings {
        if !values.iter().any(|v| v.limit == f.limit) {
            rows.push(row(plan, f, Some(false), Some(f.to_string())));
        }
    }
    rows.extend(other_reasons(out).into_iter().map(|reason| ResultRow {
        code: OTHER,
        plan_key: "",
        text: reason.to_string(),
        finding: None,
        measured: None,
        bound: String::new(),
        unit: String::new(),
        passed: Some(false),
        at: None,
    }));
    rows
}

/// What a report records about where a lot's result came from: the same
/// identities the unit records hold (SHA-256 of the plan and the rig log).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Traceability {
    /// The plan file and the SHA-256 of its bytes, hex (`None`: unreadable).
    pub plan: Option<(String, Option<String>)>,
    /// The rig log, and its size in bytes and the SHA-256 of its bytes, hex
    /// (`None`: unreadable).
    pub rig_log: Option<(String, Option<(u64, String)>)>,
    /// The test station, when known.
    pub station: Option<String>,
    /// The operator, when known.
    pub operator: Option<String>,
    /// The tool that made the report (name and version).
    pub tool: String,
    /// When the report was made, UTC.
    pub generated_utc: String,
}

impl Traceability {
    /// This tool's name and version, and the time now.
    pub fn now() -> Self {
        Traceability {
            tool: format!("lc-host {}", env!("CARGO_PKG_VERSION")),
            generated_utc: super::utc_now(),
            ..Traceability::default()
        }
    }

    /// Records the plan file (name and SHA-256 of its bytes; a file that
    /// cannot be read is recorded by name, marked unreadable).
    pub fn with_plan(mut self, path: &Path) -> Self {
        self.plan = Some((path.display().to_string(), sha256_of(path).map(|c| c.1)));
        self
    }

    /// Records the plan as text built into the tool, under `name`.
    pub fn with_plan_text(mut self, name: &str, text: &str) -> Self {
        use sha2::Digest;
        self.plan = Some((
            name.to_string(),
            Some(hex(&sha2::Sha256::digest(text.as_bytes()))),
        ));
        self
    }

    /// Records the rig log (name, size and SHA-256 of its bytes).
    pub fn with_rig_log(mut self, path: &Path) -> Self {
        self.rig_log = Some((path.display().to_string(), sha256_of(path)));
        self
    }

    /// Records the station and operator (empty: not recorded).
    pub fn with_station(mut self, station: &str, operator: &str) -> Self {
        self.station = (!station.is_empty()).then(|| station.to_string());
        self.operator = (!operator.is_empty()).then(|| operator.to_string());
        self
    }

    /// The rows the pages show: (what, value).
    pub fn rows(&self) -> Vec<(&'static str, String)> {
        let mut out = Vec::new();
        if let Some((p, crc)) = &self.plan {
            let what = crc
                .as_ref()
                .map_or("could not be read".to_string(), |c| format!("SHA-256 {c}"));
            out.push(("calibration plan", format!("{p} ({what})")));
        }
        if let Some((p, file)) = &self.rig_log {
            let what = file
                .as_ref()
                .map_or("could not be read".to_string(), |(len, c)| {
                    format!("{len} bytes, SHA-256 {c}")
                });
            out.push(("rig log", format!("{p} ({what})")));
        }
        out.push((
            "test station",
            self.station
                .clone()
                .unwrap_or_else(|| "not recorded".to_string()),
        ));
        out.push((
            "operator",
            self.operator
                .clone()
                .unwrap_or_else(|| "not recorded".to_string()),
        ));
        out.push(("tool", self.tool.clone()));
        out.push(("report generated", self.generated_utc.clone()));
        out
    }
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Size and SHA-256 (hex) of a file's bytes, streamed; `None` when it
/// cannot be read.
fn sha256_of(path: &Path) -> Option<(u64, String)> {
    use sha2::Digest;
    let mut f = std::fs::File::open(path).ok()?;
    let mut h = sha2::Sha256::new();
    let len = std::io::copy(&mut f, &mut h).ok()?;
    Some((len, hex(&h.finalize())))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::Path;

    fn plan(name: &str) -> Plan {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../examples/data")
            .join(name);
        Plan::load(&path).unwrap()
    }

    /// Every limit of the plan is a row, bounds without binary noise, in
    /// the display unit (the level plan's 0.1 mm steps in mm).
    #[test]
    fn limit_rows_name_every_limit() {
        let rows = limit_rows(&plan("demo-plan.toml"));
        let codes: Vec<&str> = rows.iter().map(|r| r.code).collect();
        assert_eq!(
            codes,
            [
                "bad_rows",
                "min_steps",
                "rest_frequency",
                "q",
                "sensitivity",
                "max_residual",
                "max_curve_error",
                "drift",
                "drift_sigma",
                "monotonic",
                "range_steps"
            ]
        );
        let code = |c: &str| rows.iter().find(|r| r.code == c).unwrap();
        assert_eq!(code("rest_frequency").bound, "5.3 … 5.95");
        assert_eq!(code("rest_frequency").unit, "MHz");
        assert_eq!(code("rest_frequency").plan_key, "limits.rest_frequency_hz");
        assert_eq!(
            (
                code("max_residual").bound.as_str(),
                code("max_residual").unit.as_str()
            ),
            ("≤ 8", "µm")
        );
        assert_eq!(code("sensitivity").bound, "≥ 1000");
        assert!(rows
            .iter()
            .all(|r| r.measured.is_none() && r.passed.is_none()));
        let level = limit_rows(&plan("demo-level-plan.toml"));
        let res = level.iter().find(|r| r.code == "max_residual").unwrap();
        assert_eq!((res.bound.as_str(), res.unit.as_str()), ("≤ 1", "mm"));
    }
}
