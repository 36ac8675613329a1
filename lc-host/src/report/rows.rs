//! The adapter between a unit's calibration result and the pages: one
//! row per acceptance limit of the plan with its code, the measured value,
//! the bound and the physical unit, and the traceability rows. The pages
//! are made from these rows only, so a richer result (typed acceptance
//! results, a recorded trail) changes this file alone.

use crate::calib::lot::UnitOutcome;
use crate::calib::plan::{Plan, Range};
use crate::calib::report::{significant, LengthUnit};
use crate::calib::unit::UnitFit;
use std::path::Path;

/// One acceptance limit as the pages show it.
#[derive(Clone, Debug, PartialEq)]
pub struct ResultRow {
    /// A stable code for the limit (machine-readable: `rest_frequency`,
    /// `q`, `sensitivity`, `max_residual`, `curve_error`, `drift_b1`,
    /// `drift_sigma`, `monotonic`, `min_steps`, `bad_rows`), or `other`
    /// for a reason no limit names (a fit that failed, counts the fault
    /// window rejected).
    pub code: &'static str,
    /// What is checked, in words (or the reason, for `other`).
    pub text: String,
    /// The unit's value, in `unit`, when known.
    pub measured: Option<f64>,
    /// The bound in `unit`, as text ("5.3 … 5.95", "≤ 8").
    pub bound: String,
    /// The physical unit of `measured` and `bound` (empty for a count or a
    /// pure number).
    pub unit: String,
    /// Whether the unit meets it: `None` when it was not measured.
    pub passed: Option<bool>,
}

/// A bound as text: nine significant digits at most, so a scaled limit
/// shows no binary noise (5.95 MHz, not 5.949999999999999).
fn b(v: f64) -> f64 {
    significant(v, 9)
}

fn range_text(r: Range, k: f64) -> String {
    Range {
        min: r.min.map(|v| b(v * k)),
        max: r.max.map(|v| b(v * k)),
    }
    .describe()
}

fn row(code: &'static str, text: impl Into<String>, bound: String, unit: &str) -> ResultRow {
    ResultRow {
        code,
        text: text.into(),
        measured: None,
        bound,
        unit: unit.to_string(),
        passed: None,
    }
}

/// The rows of every limit the plan sets, measured on `fit` when given.
fn rows(plan: &Plan, fit: Option<&UnitFit>) -> Vec<ResultRow> {
    let l = &plan.limits;
    let len = LengthUnit::of(plan);
    let mut out = Vec::new();
    let mut push = |mut r: ResultRow, measured: Option<f64>, ok: &dyn Fn(f64) -> bool| {
        r.measured = measured.filter(|v| v.is_finite());
        r.passed = r.measured.map(ok);
        out.push(r);
    };
    if let Some(r) = l.rest_frequency_hz {
        push(
            row(
                "rest_frequency",
                format!("rest frequency at {} °C", plan.product.reference_temp_c),
                range_text(r, 1e-6),
                "MHz",
            ),
            fit.map(|f| f.rest_frequency_hz * 1e-6),
            &|v| r.contains(v * 1e6),
        );
    }
    if let Some(r) = l.q {
        push(
            row(
                "q",
                "quality factor at rest (ring count)",
                range_text(r, 1.0),
                "",
            ),
            fit.and_then(|f| f.q.map(|q| q.0)),
            &|v| r.contains(v),
        );
    }
    if let Some(s) = l.sensitivity {
        push(
            row(
                "sensitivity",
                format!("sensitivity |ds/dx| at {} mm", s.at_mm),
                format!("≥ {}", b(s.min_per_mm * 1e6)),
                "ppm/mm",
            ),
            fit.and_then(|f| f.sensitivity_per_mm.map(|v| v * 1e6)),
            &|v| v >= s.min_per_mm * 1e6,
        );
    }
    if let Some(m) = l.max_residual_um {
        let m = b(len.from_um(m));
        push(
            row(
                "max_residual",
                "largest |residual| through the firmware's arithmetic",
                format!("≤ {m}"),
                len.symbol,
            ),
            fit.and_then(|f| f.max_residual().map(|v| v * len.per_output)),
            &|v| v <= m,
        );
    }
    if let Some(m) = l.max_curve_error_um {
        let m = b(len.from_um(m));
        push(
            row(
                "curve_error",
                "interpolation error of the written curve",
                format!("≤ {m}"),
                len.symbol,
            ),
            fit.and_then(|f| f.curve_error.map(|v| v * len.per_output)),
            &|v| v <= m,
        );
    }
    if let Some(r) = l.drift_ppm_per_k {
        push(
            row(
                "drift_b1",
                "first-order drift coefficient b1",
                range_text(r, 1.0),
                "ppm/K",
            ),
            fit.map(|f| f.drift.b1_per_k * 1e6),
            &|v| r.contains(v),
        );
    }
    if let Some(m) = l.max_drift_sigma_ppm_per_k {
        push(
            row(
                "drift_sigma",
                "standard error of b1",
                format!("≤ {}", b(m)),
                "ppm/K",
            ),
            fit.and_then(|f| f.drift.sigma_b1_per_k.map(|v| v * 1e6)),
            &|v| v <= m,
        );
    }
    if l.monotonic {
        push(
            row(
                "monotonic",
                "rig steps against the curve's direction (beyond three quantisation steps)",
                "0".into(),
                "",
            ),
            // A count of at most a few hundred steps: exact.
            fit.map(|f| f.monotone_violations as f64),
            &|v| v == 0.0,
        );
    }
    if let Some(n) = l.min_steps {
        push(
            row("min_steps", "usable rig steps", format!("≥ {n}"), ""),
            fit.map(|f| f.steps as f64),
            &|v| v >= n as f64,
        );
    }
    push(
        row(
            "bad_rows",
            "bad rig rows",
            format!("≤ {}", l.max_bad_rows),
            "",
        ),
        None,
        &|_| true,
    );
    out
}

/// The plan's limits as rows without measurements (for the lot page).
pub fn limit_rows(plan: &Plan) -> Vec<ResultRow> {
    rows(plan, None)
}

/// One unit's result as rows: every limit of the plan with the unit's
/// value and whether it holds; then, for a failed unit whose failure no
/// limit row shows, one `other` row per reason. A passing unit meets every
/// limit, including those not measured here (bad rig rows).
pub fn result_rows(out: &UnitOutcome, plan: &Plan) -> Vec<ResultRow> {
    let mut r = rows(plan, out.fit.as_ref());
    if out.passed {
        for row in &mut r {
            row.passed = Some(true);
        }
        return r;
    }
    if !r.iter().any(|row| row.passed == Some(false)) {
        r.extend(out.reasons.iter().map(|reason| ResultRow {
            code: "other",
            text: reason.clone(),
            measured: None,
            bound: String::new(),
            unit: String::new(),
            passed: Some(false),
        }));
    }
    r
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
                "rest_frequency",
                "q",
                "sensitivity",
                "max_residual",
                "curve_error",
                "drift_b1",
                "drift_sigma",
                "monotonic",
                "min_steps",
                "bad_rows"
            ]
        );
        assert_eq!(rows[0].bound, "5.3 … 5.95");
        assert_eq!(
            (rows[3].bound.as_str(), rows[3].unit.as_str()),
            ("≤ 8", "µm")
        );
        assert!(rows
            .iter()
            .all(|r| r.measured.is_none() && r.passed.is_none()));
        let level = limit_rows(&plan("demo-level-plan.toml"));
        let res = level.iter().find(|r| r.code == "max_residual").unwrap();
        assert_eq!((res.bound.as_str(), res.unit.as_str()), ("≤ 1", "mm"));
    }
}
