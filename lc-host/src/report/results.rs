//! Per-unit results for a manufacturing execution system: JSON Lines, one
//! object per unit attempt, with the typed acceptance findings (limit code,
//! plan key, measured value, bounds, physical unit, rig point) and the
//! traceability of the run. The fields are documented in `docs/formats.md`
//! ("Unit results").
//!
//! The lines are kept in memory (a few hundred bytes per unit) and the file
//! is written whole at [`ResultsWriter::finish`], so a reader never sees a
//! half-written file.

use super::rows::{other_reasons, Traceability};
use super::ReportError;
use crate::atomic::write_bytes;
use crate::calib::accept::{Finding, Limit, PhysicalUnit, RigPoint};
use crate::calib::lot::{Disposition, UnitOutcome};
use serde::Serialize;
use std::path::{Path, PathBuf};

/// The image a passed unit got.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ImageRef {
    /// The image's file name (no folder).
    pub file: String,
    /// Its length in bytes.
    pub bytes: u64,
    /// CRC-32 of the whole file (the image's own CRC), eight hex digits.
    pub crc32: String,
}

impl ImageRef {
    /// The image file at `path`: name, length and CRC-32 of its bytes;
    /// `None` when it cannot be read.
    pub fn of(path: &Path) -> Option<Self> {
        let bytes = std::fs::read(path).ok()?;
        Some(ImageRef {
            file: path.file_name()?.to_string_lossy().into_owned(),
            bytes: bytes.len() as u64,
            crc32: format!("{:08x}", lc_core::image::CRC32.checksum(&bytes)),
        })
    }
}

/// One failed limit as the results file carries it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FindingLine {
    /// The limit's code ([`Limit::code`]).
    pub code: Limit,
    /// The plan key that sets it.
    pub plan_key: &'static str,
    /// The measured value, in `unit` (`null`: not measurable).
    pub measured: Option<f64>,
    /// Lower bound, in `unit`.
    pub min: Option<f64>,
    /// Upper bound, in `unit`.
    pub max: Option<f64>,
    /// Physical unit symbol ("" for a count).
    pub unit: PhysicalUnit,
    /// The worst rig point, where one applies.
    pub at: Option<RigPoint>,
    /// The finding in words: the unit's recorded reason.
    pub text: String,
}

impl From<&Finding> for FindingLine {
    fn from(f: &Finding) -> Self {
        FindingLine {
            code: f.limit,
            plan_key: f.limit.key(),
            measured: f.measured.filter(|v| v.is_finite()),
            min: f.min,
            max: f.max,
            unit: f.unit,
            at: f.at,
            text: f.to_string(),
        }
    }
}

/// One unit attempt: a line of `results.jsonl`.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ResultLine {
    /// Lot.
    pub lot: String,
    /// Serial as logged.
    pub serial: String,
    /// Attempt number recorded (the latest, when already recorded);
    /// `null` when it could not be recorded.
    pub attempt: Option<u32>,
    /// `judged` in this run, `already_recorded`, or `unrecorded`.
    pub disposition: Disposition,
    /// `pass` or `fail`.
    pub verdict: &'static str,
    /// The image, for a passed unit.
    pub image: Option<ImageRef>,
    /// The failed acceptance limits.
    pub findings: Vec<FindingLine>,
    /// Reasons no limit names (see [`other_reasons`]).
    pub other_reasons: Vec<String>,
    /// SHA-256 of the calibration plan's bytes, hex.
    pub plan_sha256: Option<String>,
    /// SHA-256 of the rig log's bytes, hex.
    pub rig_sha256: Option<String>,
    /// Test station.
    pub station: Option<String>,
    /// Operator.
    pub operator: Option<String>,
    /// Tool name and version.
    pub tool: String,
    /// When the line was made, UTC, RFC 3339 (`2026-12-03T09:25:42Z`).
    pub time_utc: String,
}

impl ResultLine {
    /// The line of one unit's outcome; `image` as [`ImageRef::of`] read it.
    pub fn of(out: &UnitOutcome, lot: &str, trace: &Traceability, image: Option<ImageRef>) -> Self {
        ResultLine {
            lot: lot.to_string(),
            serial: out.serial.clone(),
            attempt: out.recorded.as_ref().ok().copied(),
            disposition: out.disposition,
            verdict: if out.passed { "pass" } else { "fail" },
            image: if out.passed { image } else { None },
            findings: out.findings.iter().map(FindingLine::from).collect(),
            other_reasons: other_reasons(out).into_iter().map(String::from).collect(),
            plan_sha256: trace.plan.as_ref().and_then(|p| p.1.clone()),
            rig_sha256: trace
                .rig_log
                .as_ref()
                .and_then(|r| r.1.as_ref().map(|f| f.1.clone())),
            station: trace.station.clone(),
            operator: trace.operator.clone(),
            tool: trace.tool.clone(),
            time_utc: super::utc_rfc3339_now(),
        }
    }
}

/// Collects one [`ResultLine`] per unit and writes them as JSON Lines.
pub struct ResultsWriter {
    path: PathBuf,
    lot: String,
    trace: Traceability,
    text: String,
}

impl ResultsWriter {
    /// Results of lot `lot` to be written to `path` at [`Self::finish`].
    pub fn new(path: &Path, lot: &str, trace: Traceability) -> Self {
        ResultsWriter {
            path: path.to_path_buf(),
            lot: lot.to_string(),
            trace,
            text: String::new(),
        }
    }

    /// Adds one unit's line, reading its image file (if any) for the
    /// name, length and CRC-32.
    pub fn add(&mut self, out: &UnitOutcome) {
        let image = out.image_path.as_deref().and_then(ImageRef::of);
        self.add_with_image(out, image);
    }

    /// Adds one unit's line with its image as [`ImageRef::of`] read it.
    pub fn add_with_image(&mut self, out: &UnitOutcome, image: Option<ImageRef>) {
        let line = ResultLine::of(out, &self.lot, &self.trace, image);
        // Only strings, numbers (non-finite ones become null), options and
        // lists: serialising cannot fail.
        if let Ok(json) = serde_json::to_string(&line) {
            self.text.push_str(&json);
            self.text.push('\n');
        }
    }

    /// Writes the file, whole or not at all; returns its path.
    pub fn finish(self) -> Result<PathBuf, ReportError> {
        write_bytes(&self.path, self.text.as_bytes()).map_err(|e| ReportError::Io {
            path: self.path.clone(),
            source: std::io::Error::other(e.to_string()),
        })?;
        Ok(self.path)
    }
}
