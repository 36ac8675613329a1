//! The calibration plan: what the product is and what a good unit looks
//! like. A TOML file, documented in docs/calibration.md, with a commented
//! example in `examples/data/demo-plan.toml`.

use serde::Deserialize;
use std::path::{Path, PathBuf};

/// Which reader the calibrated units run.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Kind {
    /// Inductive proximity.
    Proximity,
    /// Capacitive level.
    Level,
    /// Metal detection.
    Metal,
}

/// The product and how to calibrate it.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Product {
    /// Reader kind.
    pub kind: Kind,
    /// Reference clock of the counter, Hz.
    pub reference_hz: u32,
    /// Reciprocal gate length in sensor cycles (0: none).
    #[serde(default)]
    pub gate_cycles: u32,
    /// Plausible sensor band [min, max], Hz.
    pub band_hz: [u32; 2],
    /// Fewest sensor cycles per gate.
    #[serde(default = "default_min_cycles")]
    pub min_cycles: u32,
    /// The rest point's and the drift model's reference temperature, °C.
    #[serde(default = "default_reference_temp")]
    pub reference_temp_c: f64,
    /// Output resolution: one raw output unit in metres (1e-6: micrometres).
    #[serde(default = "default_output_m")]
    pub output_step_m: f64,
    /// Curve nodes written into the image (2–64).
    #[serde(default = "default_nodes")]
    pub curve_nodes: usize,
    /// Interior knots of the monotone fit.
    #[serde(default = "default_knots")]
    pub fit_knots: usize,
}

fn default_min_cycles() -> u32 {
    64
}
fn default_reference_temp() -> f64 {
    25.0
}
fn default_output_m() -> f64 {
    1e-6
}
fn default_nodes() -> usize {
    24
}
fn default_knots() -> usize {
    6
}

/// Ring-down thresholds of the rig, as fractions of the first peak.
#[derive(Clone, Copy, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Ringdown {
    /// Upper threshold.
    pub upper: f64,
    /// Lower threshold.
    pub lower: f64,
}

/// Metal reader parameters written into the image.
#[derive(Clone, Copy, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Metal {
    /// Enter threshold, ppm of shift.
    pub enter_ppm: f64,
    /// Leave threshold, ppm of shift.
    pub leave_ppm: f64,
    /// Readings beyond enter before "present".
    pub enter_samples: u16,
    /// Readings below leave before "absent".
    pub leave_samples: u16,
    /// Baseline EMA weight exponent (2^-k).
    pub baseline_k: u8,
    /// Ring-count drop that confirms a lossy target (0: none).
    #[serde(default)]
    pub ring_drop: u16,
    /// Readings present before the baseline is re-learned (0: never).
    #[serde(default)]
    pub relearn_readings: u32,
}

/// The tank a level product measures, for its level → volume table.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Tank {
    /// horizontal_cylinder, vertical_cylinder, rectangular or strapping.
    pub shape: TankKind,
    /// Strapping table (CSV, docs/formats.md) for shape = "strapping", a
    /// path relative to the plan file.
    pub table: Option<PathBuf>,
    /// The strapping table's rows, read when the plan is parsed.
    #[serde(skip)]
    pub strapping: Option<crate::volume::StrappingTable>,
    /// Diameter, m (cylinders).
    pub diameter_m: Option<f64>,
    /// Length, m (horizontal cylinder).
    pub length_m: Option<f64>,
    /// Height, m (vertical cylinder, rectangular).
    pub height_m: Option<f64>,
    /// Base area, m² (rectangular).
    pub base_area_m2: Option<f64>,
    /// One raw volume unit, m³ (1e-6: millilitres).
    #[serde(default = "default_volume_step")]
    pub volume_step_m3: f64,
    /// Table nodes (2–64).
    #[serde(default = "default_nodes")]
    pub nodes: usize,
}

fn default_volume_step() -> f64 {
    1e-6
}

/// Tank shapes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TankKind {
    /// A cylinder lying on its side.
    HorizontalCylinder,
    /// An upright cylinder.
    VerticalCylinder,
    /// Any constant cross-section.
    Rectangular,
    /// A strapping table (level → volume rows) from a CSV file.
    Strapping,
}

impl Tank {
    /// Checks the shape's keys and, for a strapping table, reads it (a path
    /// relative to `plan_file`'s folder).
    pub fn resolve(&mut self, plan_file: &Path) -> Result<(), String> {
        if self.shape != TankKind::Strapping {
            if self.table.is_some() {
                return Err("tank.table is only for shape = \"strapping\"".into());
            }
            return self.shape().map(|_| ());
        }
        let rel = self
            .table
            .as_ref()
            .ok_or("shape = \"strapping\" needs tank.table, the strapping table's CSV file")?;
        let path = plan_file.parent().unwrap_or(Path::new("")).join(rel);
        let t = crate::volume::StrappingTable::load(&path).map_err(|e| e.to_string())?;
        if t.len() > lc_core::curve::MAX_NODES {
            return Err(format!(
                "{}: {} rows; the calibration image holds at most {} (thin the table)",
                path.display(),
                t.len(),
                lc_core::curve::MAX_NODES
            ));
        }
        self.strapping = Some(t);
        Ok(())
    }

    /// The level → volume table for the image: sampled from the shape
    /// (`nodes` nodes), or the strapping table's rows; levels in
    /// `level_units_per_m` units per metre, volumes in `volume_step_m3`
    /// units. Monotone cubic (Fritsch–Butland tangents).
    pub fn volume_table(
        &self,
        level_units_per_m: f64,
    ) -> Result<lc_core::geometry::VolumeTable, String> {
        use lc_core::curve::Interpolation;
        use lc_core::geometry::{LevelVolume, VolumeTable};
        let Some(table) = &self.strapping else {
            return VolumeTable::sample(
                &self.shape()?,
                level_units_per_m,
                1.0 / self.volume_step_m3,
                self.nodes,
                Interpolation::MonotoneCubic,
            )
            .map_err(|e| e.to_string());
        };
        let unit = |v: f64, what: &str| {
            let r = v.round();
            if r.abs() < 2_147_483_647.0 {
                // Exact: a whole number within i32.
                Ok(r as i32)
            } else {
                Err(format!(
                    "strapping table: {what} {v} output units does not fit the image"
                ))
            }
        };
        let rows = table
            .rows()
            .map(|(l, v)| {
                Ok(LevelVolume::new(
                    unit(l * level_units_per_m, "level")?,
                    unit(v / self.volume_step_m3, "volume")?,
                ))
            })
            .collect::<Result<Vec<_>, String>>()?;
        VolumeTable::from_strapping(&rows, Interpolation::MonotoneCubic).map_err(|e| {
            format!("strapping table: {e} (two rows closer than one output step of level, or a volume step too coarse?)")
        })
    }

    /// The geometry, or what is missing.
    pub fn shape(&self) -> Result<lc_core::geometry::TankShape, String> {
        use lc_core::geometry::TankShape;
        let need = |v: Option<f64>, key: &str| {
            v.filter(|x| *x > 0.0).ok_or(format!(
                "tank.{key} must be given and positive for this shape"
            ))
        };
        Ok(match self.shape {
            TankKind::HorizontalCylinder => TankShape::HorizontalCylinder {
                radius_m: need(self.diameter_m, "diameter_m")? / 2.0,
                length_m: need(self.length_m, "length_m")?,
            },
            TankKind::VerticalCylinder => TankShape::VerticalCylinder {
                radius_m: need(self.diameter_m, "diameter_m")? / 2.0,
                height_m: need(self.height_m, "height_m")?,
            },
            TankKind::Rectangular => TankShape::Rectangular {
                base_area_m2: need(self.base_area_m2, "base_area_m2")?,
                height_m: need(self.height_m, "height_m")?,
            },
            TankKind::Strapping => return Err("a strapping table has no closed-form shape".into()),
        })
    }
}

/// A closed interval; either end may be omitted.
#[derive(Clone, Copy, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Range {
    /// Lower limit.
    pub min: Option<f64>,
    /// Upper limit.
    pub max: Option<f64>,
}

impl Range {
    /// Whether v lies inside.
    pub fn contains(&self, v: f64) -> bool {
        self.min.is_none_or(|m| v >= m) && self.max.is_none_or(|m| v <= m)
    }

    /// "min … max" for messages.
    pub fn describe(&self) -> String {
        match (self.min, self.max) {
            (Some(a), Some(b)) => format!("{a} … {b}"),
            (Some(a), None) => format!("≥ {a}"),
            (None, Some(b)) => format!("≤ {b}"),
            (None, None) => "any".to_string(),
        }
    }
}

/// Sensitivity limit: |ds/dx| at a reference value.
#[derive(Clone, Copy, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sensitivity {
    /// Where, in millimetres of the reference value.
    pub at_mm: f64,
    /// Least |ds/dx|, shift per millimetre.
    pub min_per_mm: f64,
}

/// Acceptance limits. Every limit is optional; a unit passes when every
/// given limit holds.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Limits {
    /// Rest frequency window, Hz.
    pub rest_frequency_hz: Option<Range>,
    /// Quality factor window (needs ring counts and `[ringdown]`).
    pub q: Option<Range>,
    /// Sensitivity at a reference value.
    pub sensitivity: Option<Sensitivity>,
    /// Largest |residual| at a rig point through the firmware's own
    /// (fixed-point) path, µm (of gap, or of level).
    pub max_residual_um: Option<f64>,
    /// Largest interpolation error of the written curve against the fit,
    /// µm.
    pub max_curve_error_um: Option<f64>,
    /// Fewest output steps the calibrated range must span (largest curve
    /// node value less the smallest), default 100: a range of a few steps
    /// means the rig's targets were in another unit than logged.
    #[serde(default = "default_min_range_steps")]
    pub min_range_steps: u32,
    /// Former key, in output units: refused with the new key's name.
    #[serde(default)]
    pub max_residual: Option<toml::Value>,
    /// Former key, in output units: refused with the new key's name.
    #[serde(default)]
    pub max_curve_error: Option<toml::Value>,
    /// First-order drift coefficient window, ppm per kelvin.
    pub drift_ppm_per_k: Option<Range>,
    /// Largest standard error of the drift coefficient, ppm per kelvin.
    pub max_drift_sigma_ppm_per_k: Option<f64>,
    /// Require the rig points' shifts to be monotone in the reference
    /// value (beyond three quantisation steps of noise).
    #[serde(default)]
    pub monotonic: bool,
    /// Fewest good rig steps.
    pub min_steps: Option<usize>,
    /// Most bad rows tolerated (default 0).
    #[serde(default)]
    pub max_bad_rows: usize,
}

fn default_min_range_steps() -> u32 {
    100
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            rest_frequency_hz: None,
            q: None,
            sensitivity: None,
            max_residual_um: None,
            max_curve_error_um: None,
            min_range_steps: default_min_range_steps(),
            max_residual: None,
            max_curve_error: None,
            drift_ppm_per_k: None,
            max_drift_sigma_ppm_per_k: None,
            monotonic: false,
            min_steps: None,
            max_bad_rows: 0,
        }
    }
}

/// The whole plan file.
#[derive(Clone, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Plan {
    /// The product.
    pub product: Product,
    /// Ring-down thresholds, when the rig records ring counts.
    pub ringdown: Option<Ringdown>,
    /// Metal parameters (metal kind).
    pub metal: Option<Metal>,
    /// The tank (level kind, optional): adds a volume table to the image.
    pub tank: Option<Tank>,
    /// Acceptance limits.
    #[serde(default)]
    pub limits: Limits,
    /// The plan's identity, written into every image: the first 8 bytes of
    /// the SHA-256 of the plan file's text (set by [`Plan::parse`]).
    #[serde(skip)]
    pub id: lc_core::image::PlanId,
    /// The calibration time written into every image, UTC, Unix seconds:
    /// set by the caller (`lc-host calibrate --time`, else
    /// `SOURCE_DATE_EPOCH`, else the clock); 0 until then.
    #[serde(skip)]
    pub calibrated_at: i64,
}

/// The calibration time to write into images, UTC, Unix seconds: `explicit`
/// when given, else the `SOURCE_DATE_EPOCH` environment variable (for
/// reproducible images), else the system clock (0 if it is before 1970).
pub fn calibration_time(explicit: Option<i64>) -> i64 {
    explicit
        .or_else(|| {
            std::env::var("SOURCE_DATE_EPOCH")
                .ok()
                .and_then(|v| v.trim().parse().ok())
        })
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .ok()
                .and_then(|d| i64::try_from(d.as_secs()).ok())
                .unwrap_or(0)
        })
}

/// The identity of a plan's text: the first 8 bytes of its SHA-256.
pub fn plan_id(text: &str) -> lc_core::image::PlanId {
    use sha2::Digest;
    let digest = sha2::Sha256::digest(text.as_bytes());
    let mut id = [0u8; 8];
    id.copy_from_slice(&digest[..8]);
    lc_core::image::PlanId(id)
}

/// Why a plan was refused.
#[derive(Debug, thiserror::Error)]
pub enum PlanError {
    /// The file could not be read.
    #[error("{file}: cannot read: {source}")]
    Io {
        /// File.
        file: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
    /// TOML syntax or an unknown / mistyped key (the message names it).
    #[error("{file}: {message}")]
    Syntax {
        /// File.
        file: PathBuf,
        /// The parser's message, with line and column.
        message: String,
    },
    /// A value is out of its range; the message says what to do.
    #[error("{file}: `{key}`: {problem}")]
    Value {
        /// File.
        file: PathBuf,
        /// The key.
        key: &'static str,
        /// What is wrong.
        problem: String,
    },
}

impl Plan {
    /// Reads and checks a plan file.
    pub fn load(path: &Path) -> Result<Self, PlanError> {
        let text = std::fs::read_to_string(path).map_err(|source| PlanError::Io {
            file: path.to_path_buf(),
            source,
        })?;
        Self::parse(&text, path)
    }

    /// Parses and checks plan text; `file` names it in messages.
    pub fn parse(text: &str, file: &Path) -> Result<Self, PlanError> {
        let mut plan: Plan = toml::from_str(text).map_err(|e| PlanError::Syntax {
            file: file.to_path_buf(),
            message: e.to_string(),
        })?;
        plan.id = plan_id(text);
        let bad = |key: &'static str, problem: String| {
            Err(PlanError::Value {
                file: file.to_path_buf(),
                key,
                problem,
            })
        };
        let p = &plan.product;
        if p.reference_hz == 0 {
            return bad("product.reference_hz", "must be at least 1 Hz".into());
        }
        if p.band_hz[0] > p.band_hz[1] {
            return bad(
                "product.band_hz",
                format!(
                    "lower edge {} Hz is above upper edge {} Hz",
                    p.band_hz[0], p.band_hz[1]
                ),
            );
        }
        if !(2..=lc_core::curve::MAX_NODES).contains(&p.curve_nodes) {
            return bad(
                "product.curve_nodes",
                format!("{} is outside 2 … 64", p.curve_nodes),
            );
        }
        if !(1..=20).contains(&p.fit_knots) {
            return bad(
                "product.fit_knots",
                format!("{} is outside 1 … 20", p.fit_knots),
            );
        }
        if !(p.output_step_m > 0.0 && p.output_step_m <= 1.0) {
            return bad(
                "product.output_step_m",
                format!("{} is not a positive step up to 1 m", p.output_step_m),
            );
        }
        if !(-100.0..=300.0).contains(&p.reference_temp_c) {
            return bad(
                "product.reference_temp_c",
                "must lie in -100 … 300 °C".into(),
            );
        }
        if let Some(r) = plan.ringdown {
            if !(r.upper > r.lower && r.lower > 0.0) {
                return bad(
                    "ringdown",
                    format!("need upper > lower > 0, got {} and {}", r.upper, r.lower),
                );
            }
        }
        match (p.kind, &plan.metal) {
            (Kind::Metal, None) => {
                return bad("metal", "a metal product needs a [metal] table".into())
            }
            (Kind::Metal, Some(m)) if !(m.enter_ppm > m.leave_ppm && m.leave_ppm >= 0.0) => {
                return bad(
                    "metal.enter_ppm",
                    "enter must exceed leave, and leave be 0 or more".into(),
                )
            }
            (Kind::Metal, Some(m))
                if (m.enter_ppm * 1e3).round()
                    >= f64::from(lc_core::image::MetalParams::PPB_LIMIT) =>
            {
                return bad(
                    "metal.enter_ppm",
                    format!(
                        "{} ppm is too large: a metal image holds thresholds below {} ppm \
                         (0.390625 % of shift); lower enter_ppm",
                        m.enter_ppm,
                        f64::from(lc_core::image::MetalParams::PPB_LIMIT) / 1e3
                    ),
                )
            }
            (Kind::Metal, Some(m)) if !(1..=16).contains(&m.baseline_k) => {
                return bad(
                    "metal.baseline_k",
                    format!("{} is outside 1 … 16", m.baseline_k),
                )
            }
            (Kind::Metal, Some(m)) if m.enter_samples == 0 || m.leave_samples == 0 => {
                return bad(
                    "metal.enter_samples",
                    "debounce counts must be at least 1".into(),
                )
            }
            (Kind::Proximity | Kind::Level, Some(_)) => {
                return bad("metal", "only a metal product takes a [metal] table".into())
            }
            _ => {}
        }
        check_limits(&plan.limits, p.output_step_m).map_err(|(key, problem)| PlanError::Value {
            file: file.to_path_buf(),
            key,
            problem,
        })?;
        if let Some(t) = plan.tank.as_mut() {
            if p.kind != Kind::Level {
                return bad("tank", "only a level product takes a [tank] table".into());
            }
            if let Err(e) = t.resolve(file) {
                return bad("tank", e);
            }
            if !(2..=lc_core::curve::MAX_NODES).contains(&t.nodes)
                || t.volume_step_m3.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater)
            {
                return bad(
                    "tank.nodes",
                    "nodes must be 2 … 64 and volume_step_m3 positive".into(),
                );
            }
            // The table is the same for every unit: a table the image
            // cannot hold is the plan's fault, not 100 % failed units.
            if let Err(e) = super::unit::volume_table(t, p.output_step_m) {
                return bad(
                    "tank.volume_step_m3",
                    format!(
                        "the tank's level → volume table cannot be written into an image ({e}); \
                         make tank.volume_step_m3 larger (a coarser volume unit, e.g. 1e-5 m³ = 10 mL), \
                         product.output_step_m smaller, or tank.nodes larger"
                    ),
                );
            }
        }
        Ok(plan)
    }
}

/// Checks the acceptance limits: every number finite, windows with
/// min ≤ max, maxima not negative. Returns the key and the problem.
fn check_limits(l: &Limits, output_step_m: f64) -> Result<(), (&'static str, String)> {
    let step_um = output_step_m * 1e6;
    if l.max_residual.is_some() {
        return Err((
            "limits.max_residual",
            format!(
                "limits are given in physical units now: write limits.max_residual_um in micrometres \
                 (one output unit of this plan is {step_um} µm, so multiply the old value by {step_um})"
            ),
        ));
    }
    if l.max_curve_error.is_some() {
        return Err((
            "limits.max_curve_error",
            format!(
                "limits are given in physical units now: write limits.max_curve_error_um in micrometres \
                 (one output unit of this plan is {step_um} µm, so multiply the old value by {step_um})"
            ),
        ));
    }
    let finite = |key: &'static str, v: f64| {
        if v.is_finite() {
            Ok(())
        } else {
            Err((
                key,
                format!("{v} is not a finite number: give a number, or leave the limit out"),
            ))
        }
    };
    let not_negative = |key: &'static str, v: Option<f64>| match v {
        Some(v) => {
            finite(key, v)?;
            if v < 0.0 {
                Err((
                    key,
                    format!("{v} is negative: a largest value is 0 or more"),
                ))
            } else {
                Ok(())
            }
        }
        None => Ok(()),
    };
    let range = |key: &'static str, r: Option<Range>| match r {
        Some(r) => {
            if let Some(a) = r.min {
                finite(key, a)?;
            }
            if let Some(b) = r.max {
                finite(key, b)?;
            }
            match (r.min, r.max) {
                (Some(a), Some(b)) if a > b => Err((
                    key,
                    format!("min {a} is above max {b}: no unit could pass; swap them"),
                )),
                _ => Ok(()),
            }
        }
        None => Ok(()),
    };
    range("limits.rest_frequency_hz", l.rest_frequency_hz)?;
    range("limits.q", l.q)?;
    range("limits.drift_ppm_per_k", l.drift_ppm_per_k)?;
    if let Some(s) = l.sensitivity {
        finite("limits.sensitivity.at_mm", s.at_mm)?;
        not_negative("limits.sensitivity.min_per_mm", Some(s.min_per_mm))?;
    }
    not_negative("limits.max_residual_um", l.max_residual_um)?;
    not_negative("limits.max_curve_error_um", l.max_curve_error_um)?;
    not_negative(
        "limits.max_drift_sigma_ppm_per_k",
        l.max_drift_sigma_ppm_per_k,
    )?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    const GOOD: &str = r#"
[product]
kind = "proximity"
reference_hz = 48_000_000
gate_cycles = 16_384
band_hz = [1_000_000, 20_000_000]

[limits]
rest_frequency_hz = { min = 5.3e6, max = 5.95e6 }
max_residual_um = 15.0
monotonic = true
"#;

    #[test]
    fn parses_with_defaults() {
        let p = Plan::parse(GOOD, Path::new("plan.toml")).unwrap();
        assert_eq!(p.product.kind, Kind::Proximity);
        assert_eq!(p.product.curve_nodes, 24);
        assert_eq!(p.product.reference_temp_c, 25.0);
        assert!(p.limits.rest_frequency_hz.unwrap().contains(5.6e6));
        assert!(!p.limits.rest_frequency_hz.unwrap().contains(6.0e6));
        assert!(p.limits.monotonic);
    }

    #[test]
    fn errors_name_the_key() {
        let e = Plan::parse(
            &GOOD.replace("band_hz = [1_000_000, 20_000_000]", "band_hz = [2, 1]"),
            Path::new("p.toml"),
        )
        .unwrap_err();
        assert!(e.to_string().contains("`product.band_hz`"), "{e}");
        let e =
            Plan::parse(&GOOD.replace("monotonic", "monotone"), Path::new("p.toml")).unwrap_err();
        assert!(
            e.to_string().contains("monotone") && e.to_string().contains("p.toml"),
            "{e}"
        );
        let e = Plan::parse(
            &GOOD.replace("\"proximity\"", "\"metal\""),
            Path::new("p.toml"),
        )
        .unwrap_err();
        assert!(e.to_string().contains("[metal]"), "{e}");
        // An enter threshold the image cannot hold (3906.25 ppm and up).
        let metal = |enter: &str| {
            GOOD.replace("\"proximity\"", "\"metal\"")
                + &format!(
                    "[metal]\nenter_ppm = {enter}\nleave_ppm = 120.0\nenter_samples = 3\n\
                     leave_samples = 5\nbaseline_k = 8\nring_drop = 2\nrelearn_readings = 0\n"
                )
        };
        Plan::parse(&metal("3906.249"), Path::new("p.toml")).unwrap();
        let e = Plan::parse(&metal("3906.25"), Path::new("p.toml")).unwrap_err();
        assert!(e.to_string().contains("`metal.enter_ppm`"), "{e}");
    }

    /// Issue 14, defect 4: NaN limits passed every unit, min > max was
    /// accepted. Each is now a configuration error naming the key.
    #[test]
    fn non_finite_and_inverted_limits_are_refused() {
        let cases = [
            (
                "max_residual_um = 15.0",
                "max_residual_um = nan",
                "limits.max_residual_um",
            ),
            (
                "max_residual_um = 15.0",
                "max_residual_um = inf",
                "limits.max_residual_um",
            ),
            (
                "max_residual_um = 15.0",
                "max_residual_um = -1.0",
                "limits.max_residual_um",
            ),
            (
                "max_residual_um = 15.0",
                "sensitivity = { at_mm = 6.0, min_per_mm = nan }",
                "limits.sensitivity.min_per_mm",
            ),
            (
                "max_residual_um = 15.0",
                "max_drift_sigma_ppm_per_k = nan",
                "limits.max_drift_sigma_ppm_per_k",
            ),
            (
                "min = 5.3e6, max = 5.95e6",
                "min = 5.95e6, max = 5.3e6",
                "limits.rest_frequency_hz",
            ),
            (
                "min = 5.3e6, max = 5.95e6",
                "min = nan, max = 5.3e6",
                "limits.rest_frequency_hz",
            ),
            (
                "max_residual_um = 15.0",
                "max_residual = 15.0",
                "limits.max_residual",
            ),
        ];
        for (from, to, key) in cases {
            let text = GOOD.replace(from, to);
            assert_ne!(text, GOOD);
            let e = Plan::parse(&text, Path::new("p.toml")).unwrap_err();
            assert!(
                matches!(&e, PlanError::Value { key: k, .. } if *k == key),
                "{to}: {e}"
            );
            assert!(e.to_string().contains(key), "{e}");
        }
        // An unknown key in [limits] names itself.
        let e = Plan::parse(
            &GOOD.replace("monotonic = true", "max_residul_um = 3.0"),
            Path::new("p.toml"),
        )
        .unwrap_err();
        assert!(e.to_string().contains("max_residul_um"), "{e}");
    }

    /// Issue 14, defect 6: a volume table too steep for the fixed-point
    /// path failed every unit with exit 0; it is now a plan error naming
    /// the key and what to change.
    #[test]
    fn an_impossible_volume_table_is_a_plan_error() {
        let level = std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-level-plan.toml"),
        )
        .unwrap();
        Plan::parse(&level, Path::new("level.toml")).unwrap();
        let steep = level.replace("volume_step_m3 = 1e-6", "volume_step_m3 = 1e-12");
        assert_ne!(steep, level);
        let e = Plan::parse(&steep, Path::new("level.toml")).unwrap_err();
        assert!(
            matches!(
                &e,
                PlanError::Value {
                    key: "tank.volume_step_m3",
                    ..
                }
            ),
            "{e}"
        );
        assert!(
            e.to_string().contains("make tank.volume_step_m3 larger"),
            "{e}"
        );
    }
}
