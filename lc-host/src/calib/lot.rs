//! A whole lot: every unit fitted, judged, recorded (one transaction each)
//! and, when it passes, its image written; plus the lot's statistics.
//!
//! Order of effects per unit: the database record is committed first (it
//! holds the image bytes), then the image file is written atomically. A run
//! killed at any moment leaves only complete records, and no image file
//! without its record; an image whose file was not written yet can be
//! exported from the database (`lc-host units export`).

use super::accept::judge;
use super::plan::Plan;
use super::unit::{fit_unit, UnitFit};
use crate::atomic::write_bytes;
use crate::riglog::{RigLogReader, UnitLog};
use crate::store::{AttemptResult, NewAttempt, Store, StoreError};
use lc_core::image::{CRC32, MAX_IMAGE_LEN};
use std::io::Read;
use std::path::{Path, PathBuf};

/// One unit's outcome.
#[derive(Debug)]
pub struct UnitOutcome {
    /// Serial as logged.
    pub serial: String,
    /// Whether it passed.
    pub passed: bool,
    /// Every reason it failed (empty when it passed).
    pub reasons: Vec<String>,
    /// The fit, when one was possible.
    pub fit: Option<UnitFit>,
    /// The attempt number recorded, or why it could not be recorded.
    pub recorded: Result<u32, String>,
    /// The image file written, for a passing unit.
    pub image_path: Option<PathBuf>,
}

/// Summary statistics of one quantity over a lot's fitted units.
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize)]
pub struct Stats {
    /// Units with a value.
    pub count: usize,
    /// Smallest.
    pub min: Option<f64>,
    /// Largest.
    pub max: Option<f64>,
    /// Mean.
    pub mean: Option<f64>,
    /// Sample standard deviation.
    pub sd: Option<f64>,
    /// The values, in unit order (for histograms).
    #[serde(skip)]
    pub values: Vec<f64>,
}

impl Stats {
    fn push(&mut self, v: Option<f64>) {
        if let Some(v) = v.filter(|v| v.is_finite()) {
            self.values.push(v);
        }
    }

    fn finish(&mut self) {
        let n = self.values.len();
        self.count = n;
        if n == 0 {
            return;
        }
        let mean = self.values.iter().sum::<f64>() / n as f64;
        self.mean = Some(mean);
        self.min = self.values.iter().copied().reduce(f64::min);
        self.max = self.values.iter().copied().reduce(f64::max);
        self.sd = (n > 1).then(|| {
            (self.values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
        });
    }
}

/// A lot's report.
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize)]
pub struct LotReport {
    /// Lot name.
    pub lot: String,
    /// Units seen.
    pub units: usize,
    /// Units passed.
    pub passed: usize,
    /// Units failed.
    pub failed: usize,
    /// Units that could not be recorded in the database.
    pub unrecorded: usize,
    /// passed / units.
    pub yield_fraction: f64,
    /// Rest frequency, Hz.
    pub rest_frequency_hz: Stats,
    /// Quality factor.
    pub q: Stats,
    /// Sensitivity, shift per mm at the plan's point.
    pub sensitivity_per_mm: Stats,
    /// Largest |residual| per unit, output units.
    pub max_residual: Stats,
    /// Drift coefficient b1, ppm/K.
    pub drift_ppm_per_k: Stats,
    /// Per unit: serial, pass, reasons.
    pub units_list: Vec<UnitLine>,
}

/// One line of the lot report.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct UnitLine {
    /// Serial.
    pub serial: String,
    /// Passed.
    pub passed: bool,
    /// Attempt number recorded.
    pub attempt: Option<u32>,
    /// Reasons.
    pub reasons: Vec<String>,
}

/// Errors that stop a lot (a unit's own problems never do).
#[derive(Debug, thiserror::Error)]
pub enum LotError {
    /// The database failed (not a unit's fault).
    #[error(transparent)]
    Store(#[from] StoreError),
    /// The rig log ended with a read error.
    #[error(transparent)]
    Input(#[from] crate::csvin::InputError),
}

/// A serial as a file-name stem: letters, digits, `-`, `_` and `.` kept,
/// anything else `_` (serials may hold any printable character).
pub fn file_stem(serial: &str) -> String {
    serial
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || "-_.".contains(c) {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The record of one unit: parameters, residuals and raw rig points.
fn record_of(
    unit: &UnitLog,
    lot: &str,
    fit: Option<&UnitFit>,
    passed: bool,
    reasons: &[String],
    image: Option<Vec<u8>>,
) -> NewAttempt {
    let params = fit.map_or_else(
        || serde_json::json!({}),
        |f| {
            let mut v = serde_json::to_value(f).unwrap_or_else(|_| serde_json::json!({}));
            if let Some(o) = v.as_object_mut() {
                o.remove("residuals");
            }
            v
        },
    );
    let residuals = fit.map_or_else(
        || serde_json::json!([]),
        |f| serde_json::to_value(&f.residuals).unwrap_or_else(|_| serde_json::json!([])),
    );
    let mut rig: Vec<serde_json::Value> = unit.rows.iter().map(|r| r.to_json()).collect();
    rig.extend(
        unit.errors
            .iter()
            .map(|e| serde_json::json!({"error": e.to_string()})),
    );
    let image_crc = image.as_deref().map(|b| CRC32.checksum(b));
    NewAttempt {
        serial: unit.serial.clone(),
        lot: lot.to_string(),
        result: if passed {
            AttemptResult::Pass
        } else {
            AttemptResult::Fail
        },
        reasons: reasons.to_vec(),
        params,
        residuals,
        rig_points: serde_json::Value::Array(rig),
        image,
        image_crc,
    }
}

/// Calibrates one unit: fit, judge, record, write.
pub fn calibrate_unit(
    unit: &UnitLog,
    lot: &str,
    plan: &Plan,
    store: &mut Store,
    images: Option<&Path>,
) -> Result<UnitOutcome, LotError> {
    let (fit, mut reasons) = match fit_unit(unit, plan) {
        Ok((fit, reasons)) => (Some(fit), reasons),
        Err(reasons) => (None, reasons),
    };
    if let Some(f) = &fit {
        reasons.extend(judge(f, unit, plan));
    } else if !unit.errors.is_empty() {
        reasons.extend(unit.errors.iter().map(ToString::to_string));
    }
    let image = match (&fit, reasons.is_empty()) {
        (
            Some(UnitFit {
                calibration: Some(cal),
                ..
            }),
            true,
        ) => {
            let mut buf = [0u8; MAX_IMAGE_LEN];
            match cal.encode(&mut buf) {
                Ok(n) => Some(buf[..n].to_vec()),
                Err(e) => {
                    reasons.push(format!("calibration image could not be encoded: {e}"));
                    None
                }
            }
        }
        (
            Some(UnitFit {
                calibration: None, ..
            }),
            true,
        ) => {
            reasons.push("no calibration could be built".to_string());
            None
        }
        _ => None,
    };
    let passed = image.is_some() && reasons.is_empty();
    let attempt = record_of(unit, lot, fit.as_ref(), passed, &reasons, image.clone());
    let recorded = match store.record(&attempt) {
        Ok(r) => Ok(r.attempt),
        Err(StoreError::InvalidAttempt { problem, .. }) => Err(problem),
        Err(e) => return Err(e.into()),
    };
    let mut image_path = None;
    if let (Some(dir), Some(bytes), Ok(_)) = (images, &image, &recorded) {
        let path = dir.join(format!("{}.lcim", file_stem(&unit.serial)));
        match write_bytes(&path, bytes) {
            Ok(()) => image_path = Some(path),
            Err(e) => reasons.push(format!(
                "image recorded in the database, but its file could not be written: {e}"
            )),
        }
    }
    Ok(UnitOutcome {
        serial: unit.serial.clone(),
        passed: passed && recorded.is_ok(),
        reasons,
        fit,
        recorded,
        image_path,
    })
}

/// Calibrates every unit of a rig log. `on_unit` sees each outcome (for a
/// progress bar and plots) before it is summarised.
pub fn calibrate_lot<R: Read>(
    mut reader: RigLogReader<R>,
    lot: &str,
    plan: &Plan,
    store: &mut Store,
    images: Option<&Path>,
    mut on_unit: impl FnMut(&UnitOutcome),
) -> Result<LotReport, LotError> {
    let mut report = LotReport {
        lot: lot.to_string(),
        ..LotReport::default()
    };
    for unit in reader.by_ref() {
        let out = calibrate_unit(&unit, lot, plan, store, images)?;
        on_unit(&out);
        report.units += 1;
        if out.passed {
            report.passed += 1;
        } else {
            report.failed += 1;
        }
        if out.recorded.is_err() {
            report.unrecorded += 1;
        }
        if let Some(f) = &out.fit {
            report.rest_frequency_hz.push(Some(f.rest_frequency_hz));
            report.q.push(f.q.map(|q| q.0));
            report.sensitivity_per_mm.push(f.sensitivity_per_mm);
            report.max_residual.push(f.max_residual());
            report.drift_ppm_per_k.push(Some(f.drift.b1_per_k * 1e6));
        }
        let mut reasons = out.reasons.clone();
        if let Err(e) = &out.recorded {
            reasons.push(format!("not recorded: {e}"));
        }
        report.units_list.push(UnitLine {
            serial: out.serial.clone(),
            passed: out.passed,
            attempt: out.recorded.as_ref().ok().copied(),
            reasons,
        });
    }
    if let Some(e) = reader.take_file_error() {
        return Err(e.into());
    }
    for s in [
        &mut report.rest_frequency_hz,
        &mut report.q,
        &mut report.sensitivity_per_mm,
        &mut report.max_residual,
        &mut report.drift_ppm_per_k,
    ] {
        s.finish();
    }
    report.yield_fraction = if report.units > 0 {
        report.passed as f64 / report.units as f64
    } else {
        0.0
    };
    Ok(report)
}
