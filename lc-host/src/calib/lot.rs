//! A whole lot: every unit fitted and judged, the verdicts recorded in
//! groups (one transaction per group), the images folder brought to the
//! latest verdicts, and the lot's statistics.
//!
//! Order of effects per group of units: the group is fitted and judged
//! (on every core), its attempts are committed in one transaction (the
//! records hold the image bytes), then each passing unit's image file is
//! written whole or not at all and each failing unit's image file is
//! removed, under the database's write lock. The image files of one group
//! are written while the next group is fitted, and a reader thread reads
//! the rig log at most one group ahead; no unit is judged before the group
//! ahead of it is committed.
//! So a run killed at any moment loses at most the units of the one group
//! not yet committed (at most [`LotRun::group_units`]), never part of one,
//! and leaves no image file that disagrees with a committed record except
//! those of the last committed group; a re-run of the same rig log against
//! the same plan skips the units already recorded, brings their image
//! files to their latest records, and calibrates the rest
//! ([`LotRun::reattempt`] judges them again instead).
//!
//! The images folder holds exactly one file per unit whose latest attempt
//! passed, named by [`image_file_name`], an injective encoding of the
//! serial.

use super::accept::{judge, Finding};
use super::plan::Plan;
use super::unit::{fit_unit, UnitFit};
use crate::riglog::{RigLogReader, UnitLog};
use crate::store::{hex, AttemptResult, AttemptText, Store, StoreError, Trace};
use lc_core::image::{CRC32, MAX_IMAGE_LEN};
use std::collections::{HashMap, HashSet};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant, SystemTime};

/// Units per transaction (at most): a kill loses at most this many units'
/// work (the group not yet committed), and a commit costs about as much as
/// a few units' fits.
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

/// The record of one unit: parameters, residuals and raw rig points,
/// their JSON texts written straight from the fit and the rig rows
/// ([`texts`]).
fn record_of(
    unit: &UnitLog,
    lot: &str,
    fit: Option<&UnitFit>,
    passed: bool,
    reasons: &[String],
    image: Option<Vec<u8>>,
    trace: Option<Trace>,
) -> AttemptText {
    let (params, residuals) = match fit {
        Some(f) => (texts::params(f), texts::residuals(&f.residuals)),
        None => ("{}".to_string(), "[]".to_string()),
    };
    let image_crc = image.as_deref().map(|b| CRC32.checksum(b));
    AttemptText {
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
        rig_points: texts::rig_points(unit),
        image,
        image_crc,
        trace,
    }
}

/// The JSON texts of a unit's record, written straight from the fit and
/// the rig rows without building `serde_json::Value`s: the same bytes as
/// a `Value` gives (objects with their keys in byte order, numbers as
/// `serde_json` writes them, `null` for a number that is not finite), so
/// that records do not depend on the path. The test
/// `texts_equal_the_value_path` holds them to that.
mod texts {
    use super::{UnitFit, UnitLog};
    use crate::calib::unit::Residual;
    use serde::Serialize;

    /// [`crate::calib::unit::DriftFit`], keys in byte order.
    #[derive(Serialize)]
    struct Drift<'a> {
        b1_per_k: f64,
        b2_per_k2: f64,
        points: usize,
        reference_c: f64,
        sigma_b1_per_k: Option<f64>,
        sigma_b2_per_k2: Option<f64>,
        temperatures: &'a [f64],
    }

    /// [`UnitFit`] without its residuals, keys in byte order.
    #[derive(Serialize)]
    struct Params<'a> {
        companion_rest_ratio: Option<f64>,
        curve_error: Option<f64>,
        drift: Drift<'a>,
        monotone_violations: usize,
        nodes: &'a [(f64, i32)],
        output_step_m: f64,
        q: Option<(f64, f64, f64)>,
        rest_frequency_hz: f64,
        rest_ratio: f64,
        sensitivity_per_mm: Option<f64>,
        serial: &'a str,
        steps: usize,
    }

    /// [`Residual`], keys in byte order.
    #[derive(Serialize)]
    struct Res {
        line: u64,
        residual_f64: f64,
        residual_fixed: f64,
        shift_ppm: f64,
        target: f64,
        temp_c: f64,
        value_f64: f64,
        value_fixed: i32,
    }

    /// One rig row ([`crate::riglog::RigRow::to_json`]), keys in byte
    /// order.
    #[derive(Serialize)]
    struct Row {
        comp_cycles: Option<u32>,
        comp_ticks: Option<u32>,
        cycles: u32,
        line: u64,
        ring_count: Option<u16>,
        step: u32,
        target_m: Option<f64>,
        temp_c: f64,
        ticks: u32,
    }

    /// A bad rig row.
    #[derive(Serialize)]
    struct Bad<'a> {
        error: &'a str,
    }

    fn text(buf: Vec<u8>) -> String {
        // serde_json writes UTF-8 only.
        String::from_utf8(buf)
            .unwrap_or_else(|e| String::from_utf8_lossy(e.as_bytes()).into_owned())
    }

    fn write(buf: &mut Vec<u8>, v: &impl Serialize) {
        // Writing into a Vec fails only for a map key that is not a
        // string, which these types have none of.
        let _ = serde_json::to_writer(&mut *buf, v);
    }

    /// The fit's parameters: a JSON object.
    pub(super) fn params(f: &UnitFit) -> String {
        let d = &f.drift;
        let mut buf = Vec::with_capacity(1024);
        write(
            &mut buf,
            &Params {
                companion_rest_ratio: f.companion_rest_ratio,
                curve_error: f.curve_error,
                drift: Drift {
                    b1_per_k: d.b1_per_k,
                    b2_per_k2: d.b2_per_k2,
                    points: d.points,
                    reference_c: d.reference_c,
                    sigma_b1_per_k: d.sigma_b1_per_k,
                    sigma_b2_per_k2: d.sigma_b2_per_k2,
                    temperatures: &d.temperatures,
                },
                monotone_violations: f.monotone_violations,
                nodes: &f.nodes,
                output_step_m: f.output_step_m,
                q: f.q,
                rest_frequency_hz: f.rest_frequency_hz,
                rest_ratio: f.rest_ratio,
                sensitivity_per_mm: f.sensitivity_per_mm,
                serial: &f.serial,
                steps: f.steps,
            },
        );
        text(buf)
    }

    /// The fit's residuals: a JSON array.
    pub(super) fn residuals(rs: &[Residual]) -> String {
        let mut buf = Vec::with_capacity(192 * rs.len() + 2);
        buf.push(b'[');
        for (i, r) in rs.iter().enumerate() {
            if i > 0 {
                buf.push(b',');
            }
            write(
                &mut buf,
                &Res {
                    line: r.line,
                    residual_f64: r.residual_f64,
                    residual_fixed: r.residual_fixed,
                    shift_ppm: r.shift_ppm,
                    target: r.target,
                    temp_c: r.temp_c,
                    value_f64: r.value_f64,
                    value_fixed: r.value_fixed,
                },
            );
        }
        buf.push(b']');
        text(buf)
    }

    /// The unit's rig rows, then its bad rows' errors: a JSON array.
    pub(super) fn rig_points(unit: &UnitLog) -> String {
        let mut buf = Vec::with_capacity(160 * (unit.rows.len() + unit.errors.len()) + 2);
        buf.push(b'[');
        let mut first = true;
        let mut sep = |buf: &mut Vec<u8>| {
            if !std::mem::take(&mut first) {
                buf.push(b',');
            }
        };
        for r in &unit.rows {
            sep(&mut buf);
            write(
                &mut buf,
                &Row {
                    comp_cycles: r.companion.map(|c| c.cycles),
                    comp_ticks: r.companion.map(|c| c.ticks),
                    cycles: r.pair.cycles,
                    line: r.line,
                    ring_count: r.ring_count,
                    step: r.step,
                    target_m: r.target_m,
                    temp_c: r.temp_c,
                    ticks: r.pair.ticks,
                },
            );
        }
        for e in &unit.errors {
            sep(&mut buf);
            write(
                &mut buf,
                &Bad {
                    error: &e.to_string(),
                },
            );
        }
        buf.push(b']');
        text(buf)
    }
}

/// One unit judged, not yet recorded (its fit boxed: a fit with its
/// calibration runs to kilobytes, and judged units move through a few
/// vectors).
struct Judged {
    serial: String,
    fit: Option<Box<UnitFit>>,
    reasons: Vec<String>,
    findings: Vec<Finding>,
    attempt: AttemptText,
}

/// Fits and judges one unit, and builds its image when it passes.
fn judge_unit(
    unit: &UnitLog,
    lot: &str,
    plan: &Plan,
    trace: Option<&Traceability>,
    trace_row: &Option<Trace>,
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
                calibration: Some(_),
                image: Some(bytes),
                ..
            }),
            true,
        ) => Some(bytes.clone()),
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
        trace_row.clone(),
    );
    Judged {
        serial: unit.serial.clone(),
        fit: fit.map(Box::new),
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

/// How [`create_image`] ended.
#[derive(Debug, PartialEq, Eq)]
enum Created {
    /// The file is in place, whole.
    Linked,
    /// A file of that name appeared meanwhile, or the system cannot
    /// create files unnamed: nothing was written.
    NotDone,
}

/// Creates a new image file whole, where no file of that name exists: on
/// Linux the file is created unnamed in the folder (`O_TMPFILE`), written,
/// and only then linked under its name, so a killed process leaves nothing
/// (the kernel frees the unnamed file) and the folder never shows part of
/// an image. It saves the temporary name that [`write_image`] adds and
/// removes (two directory updates per unit). [`Created::NotDone`] where the
/// file system cannot do it or the name is taken.
#[cfg(target_os = "linux")]
fn create_image(path: &Path, bytes: &[u8]) -> std::io::Result<Created> {
    use rustix::fs::{linkat, openat, AtFlags, Mode, OFlags, CWD};
    use rustix::io::Errno;
    use std::io::Write;
    use std::os::fd::AsRawFd;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let fd = match openat(
        CWD,
        dir,
        OFlags::WRONLY | OFlags::TMPFILE | OFlags::CLOEXEC,
        Mode::from_bits_truncate(0o666),
    ) {
        Ok(fd) => fd,
        // No O_TMPFILE on this file system (or kernel).
        Err(Errno::OPNOTSUPP | Errno::ISDIR | Errno::INVAL | Errno::NOENT) => {
            return Ok(Created::NotDone)
        }
        Err(e) => return Err(e.into()),
    };
    let mut file = std::fs::File::from(fd);
    file.write_all(bytes)?;
    let me = format!("/proc/self/fd/{}", file.as_raw_fd());
    match linkat(CWD, me.as_str(), CWD, path, AtFlags::SYMLINK_FOLLOW) {
        Ok(()) => Ok(Created::Linked),
        // The name is taken (another writer), or no /proc to link from.
        Err(Errno::EXIST | Errno::NOENT) => Ok(Created::NotDone),
        Err(e) => Err(e.into()),
    }
}

/// Elsewhere: always [`write_image`].
#[cfg(not(target_os = "linux"))]
fn create_image(_path: &Path, _bytes: &[u8]) -> std::io::Result<Created> {
    Ok(Created::NotDone)
}

/// Brings one unit's image file to its verdict: writes `image`, or
/// removes a stale file when there is none. Skips the write when the file
/// already holds exactly these bytes; a file that is not there yet is
/// created whole ([`create_image`]), one that differs is replaced
/// ([`write_image`]).
fn sync_image(dir: &Path, serial: &str, image: Option<&[u8]>) -> Result<Option<PathBuf>, String> {
    let path = dir.join(image_file_name(serial));
    match image {
        Some(bytes) => {
            let written = match std::fs::read(&path) {
                Ok(old) if old == bytes => return Ok(Some(path)),
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                    create_image(&path, bytes).and_then(|c| match c {
                        Created::Linked => Ok(()),
                        Created::NotDone => write_image(&path, bytes),
                    })
                }
                _ => write_image(&path, bytes),
            };
            written
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
pub fn calibrate_lot<R: Read + Send>(
    reader: RigLogReader<R>,
    lot: &str,
    plan: &Plan,
    store: &mut Store,
    images: Option<&Path>,
    on_unit: impl FnMut(&UnitOutcome),
) -> Result<LotReport, LotError> {
    run_lot(reader, &LotRun::new(lot, images), plan, store, on_unit)
}

/// Fits and judges a group of units on `workers` threads (units are
/// independent; each thread takes the next unit not yet taken), in the
/// group's order. Runs `meanwhile` on the calling thread during the fits.
fn judge_group<T>(
    group: &Group,
    workers: usize,
    lot: &str,
    plan: &Plan,
    trace: Option<&Traceability>,
    meanwhile: impl FnOnce() -> T,
) -> (Vec<Judged>, T) {
    let n = group.units.len();
    let next = std::sync::atomic::AtomicUsize::new(0);
    let trace_row = trace.map(Traceability::trace);
    std::thread::scope(|s| {
        let handles: Vec<_> = (0..workers.min(n))
            .map(|_| {
                let (next, trace_row) = (&next, &trace_row);
                s.spawn(move || {
                    let mut out = Vec::new();
                    loop {
                        let i = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        let Some(unit) = group.units.get(i) else {
                            break;
                        };
                        let clash = group.clashes.get(i).and_then(Option::as_deref);
                        out.push((i, judge_unit(unit, lot, plan, trace, trace_row, clash)));
                    }
                    out
                })
            })
            .collect();
        let other = meanwhile();
        let mut slots: Vec<Option<Judged>> = (0..n).map(|_| None).collect();
        for h in handles {
            match h.join() {
                Ok(v) => {
                    for (i, j) in v {
                        slots[i] = Some(j);
                    }
                }
                Err(p) => std::panic::resume_unwind(p),
            }
        }
        (slots.into_iter().flatten().collect(), other)
    })
}

/// The units read for the next group.
#[derive(Default)]
struct Group {
    /// Units to be judged, in rig-log order.
    units: Vec<UnitLog>,
    /// Per unit, the serial of this run it clashes with in letter case.
    clashes: Vec<Option<String>>,
    /// A unit already recorded (serial, latest attempt) that ends the
    /// group: its outcome follows the group's.
    after: Option<(String, u32)>,
    /// The rig log has ended.
    end: bool,
    /// When the first unit was read.
    first: Option<Instant>,
}

impl Group {
    /// Full, cut short by [`GROUP_WAIT`], ended by an already recorded
    /// unit or by the end of the rig log.
    fn complete(&self, group_units: usize) -> bool {
        self.end
            || self.after.is_some()
            || self.units.len() >= group_units
            || self.first.is_some_and(|t| t.elapsed() >= GROUP_WAIT)
    }
}

/// Reads the rig log's units into groups: the serial selection, the
/// units already recorded, and the letter-case clashes of image names.
struct Intake<'a, R: Read> {
    reader: &'a mut RigLogReader<R>,
    run: &'a LotRun<'a>,
    already: &'a HashMap<String, u32>,
    seen_selected: HashSet<String>,
    /// Lower-cased image names of this run's units, for the case clash.
    folded: HashMap<String, String>,
    not_selected: usize,
    group_units: usize,
}

impl<R: Read> Intake<'_, R> {
    /// Reads the next group's units until it is complete.
    fn fill(&mut self) -> Group {
        let mut g = Group::default();
        while !g.complete(self.group_units) {
            let Some(unit) = self.reader.next() else {
                g.end = true;
                break;
            };
            if let Some(sel) = self.run.serials {
                if !sel.contains(&unit.serial) {
                    self.not_selected += 1;
                    continue;
                }
                self.seen_selected.insert(unit.serial.clone());
            }
            if let Some(&attempt) = self.already.get(&unit.serial) {
                g.after = Some((unit.serial, attempt));
                break;
            }
            let name = image_file_name(&unit.serial).to_lowercase();
            let clash = match self.folded.get(&name) {
                Some(other) if *other != unit.serial => Some(other.clone()),
                Some(_) => None,
                None => {
                    self.folded.insert(name, unit.serial.clone());
                    None
                }
            };
            if g.units.is_empty() {
                g.first = Some(Instant::now());
            }
            g.units.push(unit);
            g.clashes.push(clash);
        }
        g
    }
}

/// Calibrates the units of a rig log as a station does: selects units,
/// skips those already recorded from this rig log against this plan
/// (unless [`LotRun::reattempt`]), fits and judges the rest in groups,
/// commits each group in one transaction, then brings the images folder
/// to the verdicts. `on_unit` sees each outcome (for a progress bar and
/// plots) before it is summarised.
///
/// One group at a time is judged and not yet committed: while a group is
/// fitted (on every core), this thread brings the images folder to the
/// group committed before, and a reader thread reads the rig log's units
/// into groups at most one group ahead; neither judges anything. A kill
/// therefore loses at most the units of one group (the one being fitted or
/// committed), never part of one.
///
/// # Errors
/// [`LotError`] for the database, the rig log's file and the images
/// folder; a unit's own problems are its reasons, never an error.
pub fn run_lot<R: Read + Send>(
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
    // The write-ahead log's checkpoints run while a group is fitted, not
    // in its commit.
    store.defer_checkpoints()?;
    let out = groups(
        &mut reader,
        run,
        plan,
        store,
        &already,
        &mut report,
        &mut on_unit,
    );
    store.resume_checkpoints()?;
    let seen_selected = out?;
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

/// Units committed between two checkpoints of the write-ahead log (a unit
/// takes one or two pages; SQLite's own default is every 1000 pages).
const CHECKPOINT_UNITS: usize = 600;

/// The groups of [`run_lot`]: returns the selected serials seen.
///
/// A reader thread reads the rig log into groups, at most one complete
/// group ahead of the one being fitted (rig rows only: nothing is judged
/// before it is the group in turn), so that parsing runs while this thread
/// commits, when the fitters are idle.
fn groups<R: Read + Send>(
    reader: &mut RigLogReader<R>,
    run: &LotRun<'_>,
    plan: &Plan,
    store: &mut Store,
    already: &HashMap<String, u32>,
    report: &mut LotReport,
    on_unit: &mut impl FnMut(&UnitOutcome),
) -> Result<HashSet<String>, LotError> {
    let workers = std::thread::available_parallelism().map_or(1, usize::from);
    let mut intake = Intake {
        reader,
        run,
        already,
        seen_selected: HashSet::new(),
        folded: HashMap::new(),
        not_selected: 0,
        group_units: run.group_units.max(1),
    };
    std::thread::scope(|s| {
        let (tx, rx) = std::sync::mpsc::sync_channel::<Group>(1);
        let reading = s.spawn(move || {
            loop {
                let g = intake.fill();
                let end = g.end;
                // A closed channel: the lot stopped on an error.
                if tx.send(g).is_err() || end {
                    break;
                }
            }
            (intake.seen_selected, intake.not_selected)
        });
        let out = judge_groups(&rx, workers, run, plan, store, report, on_unit);
        drop(rx);
        let (seen_selected, not_selected) = match reading.join() {
            Ok(v) => v,
            Err(p) => std::panic::resume_unwind(p),
        };
        report.not_selected = not_selected;
        out.map(|()| seen_selected)
    })
}

/// Fits, commits and files the groups that arrive on `groups` (see
/// [`run_lot`] for the order of effects).
fn judge_groups(
    groups: &std::sync::mpsc::Receiver<Group>,
    workers: usize,
    run: &LotRun<'_>,
    plan: &Plan,
    store: &mut Store,
    report: &mut LotReport,
    on_unit: &mut impl FnMut(&UnitOutcome),
) -> Result<(), LotError> {
    let mut since_checkpoint = 0;
    // The group committed last, its image files not yet brought to its
    // records (nor its outcomes reported).
    let mut committed: Option<Committed> = None;
    // A reader that stopped early (it panicked) ends the lot like the end
    // of the rig log; the panic is raised when it is joined.
    while let Ok(mut group) = groups.recv() {
        if group.units.is_empty() && group.after.is_none() {
            break;
        }
        let ended = group.end;
        // While the group is fitted: the previous group's image files and a
        // checkpoint of the write-ahead log (the reader thread reads on).
        let (judged, filed) = judge_group(&group, workers, run.lot, plan, run.trace, || {
            let filed = committed
                .take()
                .map_or(Ok(()), |c| file_group(c, run, store, report, on_unit));
            filed.and_then(|()| {
                if since_checkpoint >= CHECKPOINT_UNITS {
                    since_checkpoint = 0;
                    store.checkpoint()?;
                }
                Ok(())
            })
        });
        filed?;
        if !judged.is_empty() {
            since_checkpoint += judged.len();
            committed = Some(record_group(judged, store)?);
        }
        if let Some((serial, attempt)) = group.after.take() {
            // Outcomes in rig-log order: the group's first.
            if let Some(c) = committed.take() {
                file_group(c, run, store, report, on_unit)?;
            }
            let out = already_recorded(store, run.images, &serial, attempt)?;
            on_unit(&out);
            summarise(report, out);
        }
        if ended {
            break;
        }
    }
    if let Some(c) = committed.take() {
        file_group(c, run, store, report, on_unit)?;
    }
    Ok(())
}

/// A committed group: its attempts (with their images) and where each
/// landed, its image files not yet brought to the records.
struct Committed {
    judged: Vec<Judged>,
    results: Vec<Result<crate::store::Recorded, StoreError>>,
}

/// Records a judged group of units in one transaction.
fn record_group(mut judged: Vec<Judged>, store: &mut Store) -> Result<Committed, LotError> {
    let attempts: Vec<AttemptText> = judged
        .iter_mut()
        .map(|j| std::mem::replace(&mut j.attempt, placeholder()))
        .collect();
    let results = store.record_texts(&attempts)?;
    for (j, a) in judged.iter_mut().zip(attempts) {
        j.attempt = a;
    }
    Ok(Committed { judged, results })
}

/// Brings the image files of a committed group to each unit's latest
/// record and reports the group's outcomes. The latest records are read
/// under the write lock (another station may have recorded a later
/// attempt since the commit): one query for the serials recorded after the
/// group; a unit none recorded since has its own attempt as its latest.
fn file_group(
    c: Committed,
    run: &LotRun<'_>,
    store: &mut Store,
    report: &mut LotReport,
    on_unit: &mut impl FnMut(&UnitOutcome),
) -> Result<(), LotError> {
    let Committed { judged, results } = c;
    let synced: Vec<Option<Result<Option<PathBuf>, String>>> = match run.images {
        None => judged.iter().map(|_| None).collect(),
        Some(dir) => {
            let last_id = results.iter().flatten().map(|r| r.id).max();
            // A serial twice in the group has its later attempt as its
            // latest: read it from the database like a superseded one.
            let mut count: HashMap<&str, usize> = HashMap::new();
            for j in &judged {
                *count.entry(j.serial.as_str()).or_default() += 1;
            }
            store.exclusive(|s| -> Result<_, StoreError> {
                let later: HashSet<String> = match last_id {
                    Some(id) => s.serials_recorded_after(id)?.into_iter().collect(),
                    None => HashSet::new(),
                };
                Ok(judged
                    .iter()
                    .zip(&results)
                    .map(|(j, rec)| {
                        rec.is_ok().then(|| {
                            if later.contains(&j.serial) || count[j.serial.as_str()] > 1 {
                                match s.image(&j.serial, None) {
                                    Ok(latest) => sync_image(dir, &j.serial, latest.as_deref()),
                                    Err(e) => Err(format!(
                                        "image file not brought to the latest record: {e}"
                                    )),
                                }
                            } else {
                                sync_image(dir, &j.serial, j.attempt.image.as_deref())
                            }
                        })
                    })
                    .collect())
            })??
        }
    };
    for ((j, rec), sync) in judged.into_iter().zip(results).zip(synced) {
        let recorded = match rec {
            Ok(r) => Ok(r.attempt),
            Err(StoreError::InvalidAttempt { problem, .. }) => Err(problem),
            Err(e) => return Err(e.into()),
        };
        let mut out = UnitOutcome {
            passed: j.attempt.result == AttemptResult::Pass && recorded.is_ok(),
            disposition: if recorded.is_ok() {
                Disposition::Judged
            } else {
                Disposition::Unrecorded
            },
            serial: j.serial,
            reasons: j.reasons,
            findings: j.findings,
            fit: j.fit.map(|f| *f),
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

/// An empty attempt, left where a judged unit's attempt was moved out.
fn placeholder() -> AttemptText {
    AttemptText {
        serial: String::new(),
        lot: String::new(),
        result: AttemptResult::Fail,
        reasons: Vec::new(),
        params: String::new(),
        residuals: String::new(),
        rig_points: String::new(),
        image: None,
        image_crc: None,
        trace: None,
    }
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

    /// The record texts written straight from the fits equal, byte for
    /// byte, those of the earlier path through `serde_json::Value`
    /// (`to_value` of the fit without its residuals, the residuals, and
    /// `RigRow::to_json` of each row followed by `{"error": …}` for each
    /// bad row), on simulated proximity and level lots with bad units,
    /// corrupted rows and failing fits.
    #[test]
    fn texts_equal_the_value_path() {
        use crate::sim::rig::{write_rig_log, LotSpec};
        let mut spec = LotSpec::demo("TX", 60, 5);
        spec.bad_capacitor_every = 4;
        spec.corrupt_row_every = 7;
        let mut log = Vec::new();
        write_rig_log(&spec, &mut log).unwrap();
        let mut level = Vec::new();
        crate::sim::level::write_level_rig_log("LX", 12, 3, &mut level).unwrap();
        let cases = [(log, crate::demo::PLAN), (level, crate::demo::LEVEL_PLAN)];
        let mut fits = 0;
        for (bytes, plan_text) in cases {
            let plan = Plan::parse(plan_text, Path::new("plan.toml")).unwrap();
            let reader = RigLogReader::new(bytes.as_slice(), Path::new("rig.csv")).unwrap();
            for unit in reader {
                let (params, residuals) = match fit_unit(&unit, &plan) {
                    Ok((f, _)) => {
                        fits += 1;
                        let mut v = serde_json::to_value(&f).unwrap();
                        let r = v.as_object_mut().unwrap().remove("residuals").unwrap();
                        assert_eq!(texts::params(&f), v.to_string(), "{}", unit.serial);
                        assert_eq!(texts::residuals(&f.residuals), r.to_string());
                        (v.to_string(), r.to_string())
                    }
                    Err(_) => ("{}".into(), "[]".into()),
                };
                let mut rig: Vec<serde_json::Value> =
                    unit.rows.iter().map(|r| r.to_json()).collect();
                rig.extend(
                    unit.errors
                        .iter()
                        .map(|e| serde_json::json!({"error": e.to_string()})),
                );
                let want = serde_json::Value::Array(rig).to_string();
                assert_eq!(texts::rig_points(&unit), want, "{}", unit.serial);
                let a = record_of(&unit, "L", None, false, &["r".into()], None, None);
                assert_eq!(a.rig_points, want);
                assert!(!params.is_empty() && !residuals.is_empty());
            }
        }
        assert!(fits > 50, "{fits}");
    }

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
