//! A whole lot: every unit fitted and judged, the verdicts recorded in
//! groups (one transaction per group), the images folder brought to the
//! latest verdicts, and the lot's statistics.
//!
//! Order of effects per group of units: the group's attempts are committed
//! in one transaction first (the records hold the image bytes), then each
//! passing unit's image file is written atomically and each failing unit's
//! image file is removed. The next group is fitted on a fitter thread
//! meanwhile (a pipeline one group deep). A run killed at any moment loses
//! at most the attempts not yet committed (the group being committed or
//! read and the one being fitted), never part of one, and leaves
//! no image file that disagrees with a committed record except those of the
//! last committed group; a re-run of the same rig log against the same plan
//! skips the units already recorded, brings their image files to their
//! latest records, and calibrates the rest ([`LotRun::reattempt`] judges
//! them again instead).
//!
//! The images folder holds exactly one file per unit whose latest attempt
//! passed, named by [`image_file_name`], an injective encoding of the
//! serial.

use super::accept::{judge, Finding};
use super::plan::Plan;
use super::unit::{fit_unit, UnitFit};
use crate::riglog::{RigLogReader, UnitLog};
use crate::store::{hex, AttemptResult, NewAttempt, Store, StoreError, Trace};
use lc_core::image::{CRC32, MAX_IMAGE_LEN};
use std::collections::{HashMap, HashSet};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant, SystemTime};

/// Units per transaction (at most): a kill loses at most this many units'
/// work, and a commit costs about as much as a few units' fits.
pub const DEFAULT_GROUP_UNITS: usize = 256;

/// Longest a judged unit waits for its group's commit (a slow rig log
/// still commits often).
pub const GROUP_WAIT: Duration = Duration::from_millis(500);

/// Where a lot's attempts come from, recorded with each of them, and what
/// the calibration image carries of it (its time and the plan's identity).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Traceability {
    /// The plan file's full text.
    pub plan_text: String,
    /// SHA-256 of the plan text's bytes.
    pub plan_sha256: [u8; 32],
    /// The rig log's file name as given (`-` for standard input).
    pub rig_file: String,
    /// SHA-256 of the rig log's bytes.
    pub rig_sha256: [u8; 32],
    /// Station identifier (may be empty).
    pub station: String,
    /// Operator identifier (may be empty).
    pub operator: String,
}

impl Traceability {
    /// The traceability of a run: hashes the plan text and the rig log's
    /// bytes.
    pub fn new(
        plan_text: &str,
        rig_file: &str,
        rig_bytes: &[u8],
        station: &str,
        operator: &str,
    ) -> Self {
        use sha2::Digest;
        Traceability {
            plan_text: plan_text.to_owned(),
            plan_sha256: sha2::Sha256::digest(plan_text.as_bytes()).into(),
            rig_file: rig_file.to_owned(),
            rig_sha256: sha2::Sha256::digest(rig_bytes).into(),
            station: station.to_owned(),
            operator: operator.to_owned(),
        }
    }

    /// The plan's short identity for a calibration image: the first 8
    /// bytes of its SHA-256.
    pub fn plan_id(&self) -> [u8; 8] {
        let mut id = [0; 8];
        id.copy_from_slice(&self.plan_sha256[..8]);
        id
    }

    /// The plan's SHA-256 as 64 lower-case hex digits (as stored).
    pub fn plan_sha256_hex(&self) -> String {
        hex(&self.plan_sha256)
    }

    /// The rig log's SHA-256 as 64 lower-case hex digits (as stored).
    pub fn rig_sha256_hex(&self) -> String {
        hex(&self.rig_sha256)
    }

    fn trace(&self) -> Trace {
        Trace {
            plan_sha256: self.plan_sha256_hex(),
            rig_file: self.rig_file.clone(),
            rig_sha256: self.rig_sha256_hex(),
            station: self.station.clone(),
            operator: self.operator.clone(),
        }
    }
}

/// Seconds since 1970-01-01T00:00:00Z of `t` (0 before it): the
/// calibration time a unit's image carries.
pub fn unix_seconds(t: SystemTime) -> u64 {
    t.duration_since(SystemTime::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs())
}

/// How a lot is run at a station.
#[derive(Clone, Debug)]
pub struct LotRun<'a> {
    /// Lot name recorded with every unit.
    pub lot: &'a str,
    /// The images folder, kept equal to the latest verdicts.
    pub images: Option<&'a Path>,
    /// Only these serials (all when `None`).
    pub serials: Option<&'a HashSet<String>>,
    /// Judge units again that already have an attempt from this rig log
    /// against this plan (default: skip them, bringing their image files
    /// to their latest records).
    pub reattempt: bool,
    /// Units per transaction (at least 1).
    pub group_units: usize,
    /// Plan, rig log, station and operator (`None`: not recorded, and no
    /// unit is skipped as already recorded).
    pub trace: Option<&'a Traceability>,
}

impl<'a> LotRun<'a> {
    /// Every unit, default group size, no traceability.
    pub fn new(lot: &'a str, images: Option<&'a Path>) -> Self {
        LotRun {
            lot,
            images,
            serials: None,
            reattempt: false,
            group_units: DEFAULT_GROUP_UNITS,
            trace: None,
        }
    }
}

/// What happened to one unit of the rig log in this run.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Disposition {
    /// Judged in this run and recorded.
    Judged,
    /// Already recorded from this rig log against this plan: not judged
    /// again; its latest record stands.
    AlreadyRecorded,
    /// Judged, but the record could not be made (its reasons say why).
    Unrecorded,
}

/// One unit's outcome.
#[derive(Debug)]
pub struct UnitOutcome {
    /// Serial as logged.
    pub serial: String,
    /// Whether its latest verdict is a pass and its image file (if an
    /// images folder is kept) was written.
    pub passed: bool,
    /// Every reason it failed (empty when it passed).
    pub reasons: Vec<String>,
    /// The failed acceptance limits, typed (a subset of `reasons`).
    pub findings: Vec<Finding>,
    /// The fit, when one was possible in this run.
    pub fit: Option<UnitFit>,
    /// The attempt number recorded (or, when already recorded, the latest
    /// one), or why it could not be recorded.
    pub recorded: Result<u32, String>,
    /// Judged now, or already recorded.
    pub disposition: Disposition,
    /// The image file written, for a passing unit.
    pub image_path: Option<PathBuf>,
    /// The images folder could not be brought to this unit's verdict (an
    /// image not written or a stale one not removed): an I/O failure.
    pub image_error: Option<String>,
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
    /// Units of the rig log in this run (selected ones), judged or
    /// already recorded.
    pub units: usize,
    /// Units whose latest verdict is a pass with its image in place.
    pub passed: usize,
    /// Units whose latest verdict is a fail, or whose image could not be
    /// written.
    pub failed: usize,
    /// Units judged in this run.
    pub judged: usize,
    /// Units skipped because this rig log was already judged against this
    /// plan for them (their latest records count).
    pub already_recorded: usize,
    /// Units of the rig log left out by the serial selection.
    pub not_selected: usize,
    /// Selected serials that the rig log does not contain.
    pub missing_serials: Vec<String>,
    /// Units that could not be recorded in the database.
    pub unrecorded: usize,
    /// Units whose image file could not be written or removed (I/O).
    pub image_failures: usize,
    /// Leftover temporary files removed from the images folder.
    pub temporaries_removed: usize,
    /// passed / units.
    pub yield_fraction: f64,
    /// Rest frequency, Hz.
    pub rest_frequency_hz: Stats,
    /// Quality factor.
    pub q: Stats,
    /// Sensitivity, shift per mm at the plan's point.
    pub sensitivity_per_mm: Stats,
    /// Largest |residual| per unit, µm.
    pub max_residual_um: Stats,
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
    /// Passed (latest verdict a pass, image in place).
    pub passed: bool,
    /// Judged now or already recorded.
    pub disposition: Disposition,
    /// Attempt number recorded (the latest, when already recorded).
    pub attempt: Option<u32>,
    /// Reasons.
    pub reasons: Vec<String>,
    /// The failed acceptance limits, typed.
    pub findings: Vec<Finding>,
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
    /// The images folder cannot be read.
    #[error("images folder {folder}: {source}; check that it exists and that you may write to it")]
    Images {
        /// Folder.
        folder: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
}

/// The image file name of a serial: `SERIAL.lcim` with every byte other
/// than ASCII letters, digits, `-` and `_` (and `.` not in first place)
/// written as `%XX` (upper-case hex), so two serials never share a file:
/// `S-01/0001` → `S-01%2F0001.lcim`, `S-01_0001` → `S-01_0001.lcim`.
/// File systems that ignore case still merge serials that differ only in
/// case; [`calibrate_lot`] refuses the second of such a pair.
pub fn image_file_name(serial: &str) -> String {
    let mut out = String::with_capacity(serial.len() + 5);
    for (i, b) in serial.bytes().enumerate() {
        if b.is_ascii_alphanumeric() || b == b'-' || b == b'_' || (b == b'.' && i > 0) {
            out.push(char::from(b));
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out.push_str(".lcim");
    out
}

/// A serial as a file-name stem for plots: [`image_file_name`] without
/// its extension (injective too).
pub fn file_stem(serial: &str) -> String {
    let mut name = image_file_name(serial);
    name.truncate(name.len() - ".lcim".len());
    name
}

/// Removes temporary files that an interrupted writer left in `dir`
/// (`.NAME.PID.tmp`, the atomic writer's pattern) whose process is gone:
/// [`crate::atomic::remove_stale_temporaries`] for every name.
///
/// # Errors
/// The folder cannot be listed.
pub fn remove_stale_temporaries(dir: &Path) -> std::io::Result<usize> {
    crate::atomic::remove_stale_temporaries(dir, None)
}

/// The record of one unit: parameters, residuals and raw rig points.
fn record_of(
    unit: &UnitLog,
    lot: &str,
    fit: Option<&UnitFit>,
    passed: bool,
    reasons: &[String],
    image: Option<Vec<u8>>,
    trace: Option<Trace>,
) -> NewAttempt {
    // One serialisation of the fit: its residuals move out of the params
    // object into their own column.
    let (params, residuals) = match fit.map(serde_json::to_value) {
        Some(Ok(mut v)) => {
            let residuals = v
                .as_object_mut()
                .and_then(|o| o.remove("residuals"))
                .unwrap_or_else(|| serde_json::json!([]));
            (v, residuals)
        }
        _ => (serde_json::json!({}), serde_json::json!([])),
    };
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
        trace,
    }
}

/// An empty attempt, left where a judged unit's attempt was moved out.
fn placeholder() -> NewAttempt {
    NewAttempt {
        serial: String::new(),
        lot: String::new(),
        result: AttemptResult::Fail,
        reasons: Vec::new(),
        params: serde_json::Value::Null,
        residuals: serde_json::Value::Null,
        rig_points: serde_json::Value::Null,
        image: None,
        image_crc: None,
        trace: None,
    }
}

/// One unit judged, not yet recorded.
struct Judged {
    serial: String,
    fit: Option<UnitFit>,
    reasons: Vec<String>,
    findings: Vec<Finding>,
    attempt: NewAttempt,
}

/// Fits and judges one unit, and builds its image when it passes.
fn judge_unit(
    unit: &UnitLog,
    lot: &str,
    plan: &Plan,
    trace: Option<&Traceability>,
    name_clash: Option<&str>,
) -> Judged {
    let (fit, mut reasons) = match fit_unit(unit, plan) {
        Ok((fit, reasons)) => (Some(fit), reasons),
        Err(reasons) => (None, reasons),
    };
    let mut findings = Vec::new();
    if let Some(f) = &fit {
        findings = judge(f, unit, plan);
        reasons.extend(findings.iter().map(ToString::to_string));
        if unit.errors.len() > plan.limits.max_bad_rows {
            reasons.extend(unit.errors.iter().map(ToString::to_string));
        }
    } else if !unit.errors.is_empty() {
        reasons.extend(unit.errors.iter().map(ToString::to_string));
    }
    if let Some(other) = name_clash {
        reasons.push(format!(
            "serial differs from {other:?}, calibrated earlier in this run, only in letter case: \
             their image files would be one file on a case-insensitive file system; give the units distinct serials"
        ));
    }
    // The unit's calibration time; with the image format that carries it,
    // this and `trace.plan_id()` go into the image (one encode call).
    let _calibrated_at_s = unix_seconds(SystemTime::now());
    let _plan_id = trace.map(Traceability::plan_id);
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
    let attempt = record_of(
        unit,
        lot,
        fit.as_ref(),
        passed,
        &reasons,
        image,
        trace.map(Traceability::trace),
    );
    Judged {
        serial: unit.serial.clone(),
        fit,
        reasons,
        findings,
        attempt,
    }
}

/// Writes an image file atomically (a temporary `.NAME.PID.tmp` beside it,
/// renamed over it) without waiting for the disk: a killed process leaves
/// the old file or the new one, never part of one; the calibration image is
/// in the database already, which is the record (a power cut may lose the
/// file's last contents, and the next run over that unit, or `lc-host
/// units export`, writes it again). One `fsync` per image was what made a
/// station wait on the disk per unit.
fn write_image(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    let dir = path.parent().unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map_or_else(|| "image".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let written = std::fs::File::create(&tmp)
        .and_then(|mut f| f.write_all(bytes))
        .and_then(|()| std::fs::rename(&tmp, path));
    if written.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    written
}

/// Brings one unit's image file to its verdict: writes `image`, or
/// removes a stale file when there is none. Skips the write when the file
/// already holds exactly these bytes.
fn sync_image(dir: &Path, serial: &str, image: Option<&[u8]>) -> Result<Option<PathBuf>, String> {
    let path = dir.join(image_file_name(serial));
    match image {
        Some(bytes) => {
            if std::fs::read(&path).is_ok_and(|old| old == bytes) {
                return Ok(Some(path));
            }
            write_image(&path, bytes)
                .map(|()| Some(path.clone()))
                .map_err(|e| format!("image file {} not written: {e}; the passing record is in the database (lc-host units export {serial})", path.display()))
        }
        None => match std::fs::remove_file(&path) {
            Ok(()) => Ok(None),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
            Err(e) => Err(format!(
                "a stale image file {} of an earlier pass could not be removed: {e}; delete it by hand before flashing",
                path.display()
            )),
        },
    }
}

/// Calibrates every unit of a rig log with default settings (every unit,
/// no traceability): see [`run_lot`].
///
/// # Errors
/// As [`run_lot`].
pub fn calibrate_lot<R: Read>(
    reader: RigLogReader<R>,
    lot: &str,
    plan: &Plan,
    store: &mut Store,
    images: Option<&Path>,
    on_unit: impl FnMut(&UnitOutcome),
) -> Result<LotReport, LotError> {
    run_lot(reader, &LotRun::new(lot, images), plan, store, on_unit)
}

/// Fits a group of units, on every core: units are independent.
fn judge_group(
    units: &[UnitLog],
    lot: &str,
    plan: &Plan,
    trace: Option<&Traceability>,
    clashes: &[Option<String>],
) -> Vec<Judged> {
    let threads = std::thread::available_parallelism()
        .map_or(1, usize::from)
        .min(units.len().max(1));
    if threads <= 1 {
        return units
            .iter()
            .zip(clashes)
            .map(|(u, c)| judge_unit(u, lot, plan, trace, c.as_deref()))
            .collect();
    }
    let chunk = units.len().div_ceil(threads);
    std::thread::scope(|s| {
        let handles: Vec<_> = units
            .chunks(chunk)
            .zip(clashes.chunks(chunk))
            .map(|(us, cs)| {
                s.spawn(move || {
                    us.iter()
                        .zip(cs)
                        .map(|(u, c)| judge_unit(u, lot, plan, trace, c.as_deref()))
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| match h.join() {
                Ok(v) => v,
                Err(p) => std::panic::resume_unwind(p),
            })
            .collect()
    })
}

/// Calibrates the units of a rig log as a station does: selects units,
/// skips those already recorded from this rig log against this plan
/// (unless [`LotRun::reattempt`]), fits and judges the rest in groups,
/// commits each group in one transaction, then brings the images folder
/// to the verdicts. `on_unit` sees each outcome (for a progress bar and
/// plots) before it is summarised.
///
/// # Errors
/// [`LotError`] for the database, the rig log's file and the images
/// folder; a unit's own problems are its reasons, never an error.
pub fn run_lot<R: Read>(
    mut reader: RigLogReader<R>,
    run: &LotRun<'_>,
    plan: &Plan,
    store: &mut Store,
    mut on_unit: impl FnMut(&UnitOutcome),
) -> Result<LotReport, LotError> {
    let mut report = LotReport {
        lot: run.lot.to_string(),
        ..LotReport::default()
    };
    if let Some(dir) = run.images {
        report.temporaries_removed =
            remove_stale_temporaries(dir).map_err(|source| LotError::Images {
                folder: dir.to_path_buf(),
                source,
            })?;
    }
    let already = match (run.trace, run.reattempt) {
        (Some(t), false) => store.recorded_from(&t.rig_sha256_hex(), &t.plan_sha256_hex())?,
        _ => HashMap::new(),
    };
    let mut seen_selected: HashSet<String> = HashSet::new();
    // Lower-cased image names of this run's units, for the case clash.
    let mut folded: HashMap<String, String> = HashMap::new();
    let group_units = run.group_units.max(1);
    let mut pending: Vec<UnitLog> = Vec::with_capacity(group_units);
    let mut pending_clash: Vec<Option<String>> = Vec::with_capacity(group_units);
    let mut first_pending = Instant::now();

    // A pipeline: a fitter thread fits and judges group N+1 (on every
    // core) while this thread commits group N and files its images. A
    // group leaves the pipeline in order; a kill loses only groups not yet
    // committed, never part of one.
    std::thread::scope(|s| -> Result<(), LotError> {
        let (job_tx, job_rx) = std::sync::mpsc::sync_channel::<Job>(1);
        let (done_tx, done_rx) = std::sync::mpsc::channel::<Vec<Judged>>();
        let (lot, trace) = (run.lot, run.trace);
        let fitter = s.spawn(move || {
            for (units, clashes) in job_rx {
                if done_tx
                    .send(judge_group(&units, lot, plan, trace, &clashes))
                    .is_err()
                {
                    break;
                }
            }
        });
        let mut pipe = Pipe {
            jobs: Some(job_tx),
            done: done_rx,
            fitter: Some(fitter),
            in_flight: std::collections::VecDeque::new(),
        };
        for unit in reader.by_ref() {
            // A judged group waits at most GROUP_WAIT for its commit.
            if pipe
                .in_flight
                .front()
                .is_some_and(|t| t.elapsed() >= GROUP_WAIT)
            {
                pipe.drain(0, run, store, &mut report, &mut on_unit)?;
            }
            if let Some(sel) = run.serials {
                if !sel.contains(&unit.serial) {
                    report.not_selected += 1;
                    continue;
                }
                seen_selected.insert(unit.serial.clone());
            }
            if let Some(&attempt) = already.get(&unit.serial) {
                // Outcomes in rig-log order: earlier units first.
                pipe.submit(&mut pending, &mut pending_clash)?;
                pipe.drain(0, run, store, &mut report, &mut on_unit)?;
                let out = already_recorded(store, run.images, &unit.serial, attempt)?;
                on_unit(&out);
                summarise(&mut report, out);
                continue;
            }
            let name = image_file_name(&unit.serial);
            let clash = match folded.get(&name.to_lowercase()) {
                Some(other) if *other != unit.serial => Some(other.clone()),
                Some(_) => None,
                None => {
                    folded.insert(name.to_lowercase(), unit.serial.clone());
                    None
                }
            };
            if pending.is_empty() {
                first_pending = Instant::now();
            }
            pending.push(unit);
            pending_clash.push(clash);
            let full = pending.len() >= group_units;
            if full || first_pending.elapsed() >= GROUP_WAIT {
                pipe.submit(&mut pending, &mut pending_clash)?;
                // Full groups: commit the previous one while this one is
                // fitted; a group cut short by time: commit it now.
                pipe.drain(usize::from(full), run, store, &mut report, &mut on_unit)?;
            }
        }
        pipe.submit(&mut pending, &mut pending_clash)?;
        pipe.drain(0, run, store, &mut report, &mut on_unit)?;
        pipe.finish();
        Ok(())
    })?;
    if let Some(e) = reader.take_file_error() {
        return Err(e.into());
    }
    if let Some(sel) = run.serials {
        let mut missing: Vec<String> = sel.difference(&seen_selected).cloned().collect();
        missing.sort();
        report.missing_serials = missing;
    }
    for s in [
        &mut report.rest_frequency_hz,
        &mut report.q,
        &mut report.sensitivity_per_mm,
        &mut report.max_residual_um,
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

/// A group of units and their case clashes, to be fitted and judged.
type Job = (Vec<UnitLog>, Vec<Option<String>>);

/// The fitting side of [`run_lot`]'s pipeline: groups submitted, in order.
struct Pipe<'s> {
    jobs: Option<std::sync::mpsc::SyncSender<Job>>,
    done: std::sync::mpsc::Receiver<Vec<Judged>>,
    fitter: Option<std::thread::ScopedJoinHandle<'s, ()>>,
    /// When each group not yet received was submitted, oldest first.
    in_flight: std::collections::VecDeque<Instant>,
}

impl Pipe<'_> {
    /// Hands the pending units (if any) to the fitter.
    fn submit(
        &mut self,
        pending: &mut Vec<UnitLog>,
        clashes: &mut Vec<Option<String>>,
    ) -> Result<(), LotError> {
        if pending.is_empty() {
            return Ok(());
        }
        let job = (std::mem::take(pending), std::mem::take(clashes));
        if self.jobs.as_ref().is_some_and(|j| j.send(job).is_ok()) {
            self.in_flight.push_back(Instant::now());
        } else {
            self.fitter_failed();
        }
        Ok(())
    }

    /// Records and files judged groups, oldest first, until at most
    /// `keep` are left in flight.
    fn drain(
        &mut self,
        keep: usize,
        run: &LotRun<'_>,
        store: &mut Store,
        report: &mut LotReport,
        on_unit: &mut impl FnMut(&UnitOutcome),
    ) -> Result<(), LotError> {
        while self.in_flight.len() > keep {
            let Ok(judged) = self.done.recv() else {
                self.fitter_failed();
                return Ok(());
            };
            self.in_flight.pop_front();
            record_group(judged, run, store, report, on_unit)?;
        }
        Ok(())
    }

    /// Ends the fitter (every group drained).
    fn finish(mut self) {
        self.jobs = None;
        if let Some(h) = self.fitter.take() {
            if let Err(p) = h.join() {
                std::panic::resume_unwind(p);
            }
        }
    }

    /// The fitter stopped without being asked to: its panic goes on here.
    fn fitter_failed(&mut self) {
        self.jobs = None;
        if let Some(h) = self.fitter.take() {
            if let Err(p) = h.join() {
                std::panic::resume_unwind(p);
            }
        }
        unreachable!("the fitter thread ends only when its jobs channel closes");
    }
}

/// Records (one transaction) and files a judged group of units.
fn record_group(
    judged: Vec<Judged>,
    run: &LotRun<'_>,
    store: &mut Store,
    report: &mut LotReport,
    on_unit: &mut impl FnMut(&UnitOutcome),
) -> Result<(), LotError> {
    let (attempts, judged): (Vec<NewAttempt>, Vec<Judged>) = judged
        .into_iter()
        .map(|mut j| {
            let a = std::mem::replace(&mut j.attempt, placeholder());
            (a, j)
        })
        .unzip();
    let results = store.record_batch(&attempts)?;
    // The image files follow each unit's latest record (another station
    // may have recorded a later attempt), read under the write lock.
    let synced: Vec<Option<Result<Option<PathBuf>, String>>> = match run.images {
        None => judged.iter().map(|_| None).collect(),
        Some(dir) => store.exclusive(|s| {
            judged
                .iter()
                .zip(&results)
                .map(|(j, rec): (&Judged, _)| {
                    rec.is_ok().then(|| match s.image(&j.serial, None) {
                        Ok(latest) => sync_image(dir, &j.serial, latest.as_deref()),
                        Err(e) => Err(format!("image file not brought to the latest record: {e}")),
                    })
                })
                .collect()
        })?,
    };
    for (((j, rec), sync), attempt) in judged.into_iter().zip(results).zip(synced).zip(&attempts) {
        let recorded = match rec {
            Ok(r) => Ok(r.attempt),
            Err(StoreError::InvalidAttempt { problem, .. }) => Err(problem),
            Err(e) => return Err(e.into()),
        };
        let mut out = UnitOutcome {
            passed: attempt.result == AttemptResult::Pass && recorded.is_ok(),
            disposition: if recorded.is_ok() {
                Disposition::Judged
            } else {
                Disposition::Unrecorded
            },
            serial: j.serial,
            reasons: j.reasons,
            findings: j.findings,
            fit: j.fit,
            recorded,
            image_path: None,
            image_error: None,
        };
        match sync {
            Some(Ok(p)) => out.image_path = p,
            Some(Err(e)) => {
                out.passed = false;
                out.reasons.push(e.clone());
                out.image_error = Some(e);
            }
            None => {}
        }
        on_unit(&out);
        summarise(report, out);
    }
    Ok(())
}

/// A unit already recorded from this rig log against this plan: its
/// latest record (of any run) stands, and its image file follows it.
fn already_recorded(
    store: &mut Store,
    images: Option<&Path>,
    serial: &str,
    attempt_from_log: u32,
) -> Result<UnitOutcome, LotError> {
    let latest = store.exclusive(|s| -> Result<_, LotError> {
        let latest = s.attempt(serial, None)?;
        let sync = images.map(|dir| {
            sync_image(
                dir,
                serial,
                latest.as_ref().and_then(|r| r.image.as_deref()),
            )
        });
        Ok((latest, sync))
    })??;
    let (latest, sync) = latest;
    let (attempt, image, reasons) = match &latest {
        Some(r) => (r.attempt, r.image.as_deref(), r.reasons.clone()),
        None => (attempt_from_log, None, Vec::new()),
    };
    let mut out = UnitOutcome {
        serial: serial.to_string(),
        passed: image.is_some(),
        reasons,
        findings: Vec::new(),
        fit: None,
        recorded: Ok(attempt),
        disposition: Disposition::AlreadyRecorded,
        image_path: None,
        image_error: None,
    };
    match sync {
        Some(Ok(p)) => out.image_path = p,
        Some(Err(e)) => {
            out.passed = false;
            out.reasons.push(e.clone());
            out.image_error = Some(e);
        }
        None => {}
    }
    Ok(out)
}

fn summarise(report: &mut LotReport, out: UnitOutcome) {
    report.units += 1;
    if out.passed {
        report.passed += 1;
    } else {
        report.failed += 1;
    }
    match out.disposition {
        Disposition::Judged => report.judged += 1,
        Disposition::AlreadyRecorded => report.already_recorded += 1,
        Disposition::Unrecorded => {
            report.judged += 1;
            report.unrecorded += 1;
        }
    }
    if out.image_error.is_some() {
        report.image_failures += 1;
    }
    if let Some(f) = &out.fit {
        report.rest_frequency_hz.push(Some(f.rest_frequency_hz));
        report.q.push(f.q.map(|q| q.0));
        report.sensitivity_per_mm.push(f.sensitivity_per_mm);
        report.max_residual_um.push(f.max_residual_um());
        report.drift_ppm_per_k.push(Some(f.drift.b1_per_k * 1e6));
    }
    let mut reasons = out.reasons;
    if let Err(e) = &out.recorded {
        reasons.push(format!("not recorded: {e}"));
    }
    report.units_list.push(UnitLine {
        serial: out.serial,
        passed: out.passed,
        disposition: out.disposition,
        attempt: out.recorded.as_ref().ok().copied(),
        reasons,
        findings: out.findings,
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Issue 14, defect 3: `S-01/0001` and `S-01_0001` had one file.
    #[test]
    fn image_names_never_collide() {
        let serials = [
            "S-01/0001",
            "S-01_0001",
            "S-01%2F0001",
            ".x",
            "%2Ex",
            "a.b",
            "A:B",
        ];
        let names: HashSet<String> = serials.iter().map(|s| image_file_name(s)).collect();
        assert_eq!(names.len(), serials.len(), "{names:?}");
        assert_eq!(image_file_name("T1-0001"), "T1-0001.lcim");
        assert_eq!(image_file_name("S-01/0001"), "S-01%2F0001.lcim");
        assert!(names.iter().all(|n| !n.starts_with('.')));
    }

    proptest::proptest! {
        /// Any two printable serials get two file names, each a plain
        /// file name (no separator, no leading dot).
        #[test]
        fn image_file_name_is_injective(a in "[!-~]{1,16}", b in "[!-~]{1,16}") {
            proptest::prop_assume!(a != b);
            proptest::prop_assert_ne!(image_file_name(&a), image_file_name(&b));
            let n = image_file_name(&a);
            proptest::prop_assert!(!n.contains('/') && !n.contains('\\') && !n.starts_with('.'));
        }
    }

    /// Issue 14, defect 9: leftover `.NAME.PID.tmp` files of dead writers
    /// are removed, a live writer's (ours) is kept, other files are kept.
    #[test]
    fn stale_temporaries_are_removed() {
        let dir = std::env::temp_dir().join(format!("lc-lot-tmp-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let dead = ".A1.lcim.4194999.tmp"; // above Linux's default pid_max
        let ours = format!(".A2.lcim.{}.tmp", std::process::id());
        for n in [dead, ours.as_str(), "A3.lcim", ".hidden"] {
            std::fs::write(dir.join(n), b"x").unwrap();
        }
        let removed = remove_stale_temporaries(&dir).unwrap();
        if Path::new("/proc/self").exists() {
            assert_eq!(removed, 1);
            assert!(!dir.join(dead).exists());
        }
        for n in [ours.as_str(), "A3.lcim", ".hidden"] {
            assert!(dir.join(n).exists(), "{n}");
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
