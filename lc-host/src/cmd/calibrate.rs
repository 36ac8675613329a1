//! `lc-host calibrate`: a lot's rig log to images, unit records and a report.

use anyhow::{Context, Result};
use lc_host::calib::lot::{
    run_lot, LotError, LotReport, LotRun, Traceability, DEFAULT_GROUP_UNITS,
};
use lc_host::calib::plan::{Plan, PlanError};
use lc_host::csvin::InputError;
use lc_host::report::{results::ResultsWriter, rows::Traceability as ReportTrace, ReportWriter};
use lc_host::riglog::RigLogReader;
use lc_host::store::{Store, StoreError};
use std::collections::HashSet;
use std::io::{BufRead, IsTerminal};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// Calibrate a production lot from its rig log
///
/// For each unit in the rig log (docs/formats.md): fits the rest point, the temperature
/// drift model (least squares, with uncertainty) and a smooth monotone curve
/// (docs/calibration.md), reads every rig step back through the firmware's own arithmetic,
/// and judges the unit against the plan's acceptance limits (stated in physical units).
/// --report writes the lot report: an offline index.html (summary, limits, failures by
/// reason, histograms, one row per unit) and a printable certificate page per unit, with
/// SVG plots, and results.jsonl: one JSON object per unit attempt with its typed
/// acceptance findings (limit code, measured value, bounds, unit) for a manufacturing
/// execution system (docs/formats.md, "Unit results"). --results FILE writes that file
/// alone, or to another place.
/// Every attempt, pass or fail, becomes a unit record in the database with its
/// traceability: the plan's text and SHA-256, the rig log's name and SHA-256, station,
/// operator, tool version and UTC time. Units are committed in groups (one transaction per
/// group; a group is fitted only after the one before it is committed): an interrupted run
/// loses at most the one group not yet committed (--group-units units), never part of a unit.
///
/// The images folder always equals the latest verdicts: a passing unit's image is written,
/// a failing unit's old image is removed; an image that cannot be written fails the unit.
/// Image files are named after the serial, with characters other than letters, digits,
/// `-`, `_` and `.` written as %XX (S-01/0001 → S-01%2F0001.lcim).
///
/// Re-running the same rig log against the same plan does not judge its units again: it
/// says so, brings their image files to their latest records and calibrates only the units
/// not yet recorded (after an interruption, the rest of the lot). --reattempt judges them
/// again (new attempts). --serial / --serials-from select units.
///
/// Exit status:
///   0  every unit passed (and its image is in the images folder)
///   1  some units failed acceptance (their reasons are printed)
///   2  configuration or input error: plan, rig log, options (nothing was judged)
///   3  I/O failure: database, images folder (some verdicts may be recorded; re-run)
///
/// Not a safety-rated component: a calibrated unit is no safety function by itself.
///
/// Example (a simulated demo lot):
///
///   lc-host simulate rig --lot DEMO-01 --units 24 -o rig.csv
///   lc-host calibrate rig.csv --plan examples/data/demo-plan.toml --lot DEMO-01 \
///     --images images --report report --station EOL-2 --operator jm
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Rig log to read, or `-` for standard input
    rig_log: PathBuf,
    /// Calibration plan and acceptance limits (TOML; see examples/data/demo-plan.toml)
    #[arg(long)]
    plan: PathBuf,
    /// Lot name recorded with every unit
    #[arg(long)]
    lot: String,
    /// Unit-record database: an SQLite file (created if missing) or a postgres:// / postgresql:// URL
    #[arg(long, default_value = "units.db")]
    db: PathBuf,
    /// Folder for the passing units' calibration images (kept equal to the latest verdicts)
    #[arg(long, default_value = "images")]
    images: PathBuf,
    /// Calibrate only this serial (repeatable)
    #[arg(long = "serial", value_name = "SERIAL")]
    serials: Vec<String>,
    /// Calibrate only the serials listed in this file (one per line; `#` comments)
    #[arg(long, value_name = "FILE")]
    serials_from: Option<PathBuf>,
    /// Judge again units already recorded from this rig log against this plan
    #[arg(long)]
    reattempt: bool,
    /// Station identifier recorded with every attempt [default: $LC_STATION, else empty]
    #[arg(long)]
    station: Option<String>,
    /// Operator identifier recorded with every attempt [default: $LC_OPERATOR, else empty]
    #[arg(long)]
    operator: Option<String>,
    /// Units per database transaction (a kill loses at most the one group not yet committed)
    #[arg(long, default_value_t = DEFAULT_GROUP_UNITS as u32, value_parser = clap::value_parser!(u32).range(1..=100_000))]
    group_units: u32,
    /// Folder for the lot report (index.html, a page per unit, SVG plots)
    #[arg(long)]
    report: Option<PathBuf>,
    /// Write the per-unit results (JSON Lines, one object per unit attempt) to FILE
    #[arg(long, value_name = "FILE")]
    results: Option<PathBuf>,
    /// Most units whose plots the report draws (failed units first); every unit gets its page
    #[arg(long, default_value_t = 100)]
    max_unit_plots: usize,
    /// Print the lot report as JSON on standard output
    #[arg(long)]
    json: bool,
    /// Calibration time recorded in every image, UTC Unix seconds (default:
    /// SOURCE_DATE_EPOCH when set, else now)
    #[arg(long)]
    time: Option<i64>,
}

/// The exit statuses of `lc-host calibrate` (documented in --help and
/// docs/calibration.md).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Exit {
    /// Every unit passed.
    AllPassed = 0,
    /// Some units failed acceptance.
    SomeFailed = 1,
    /// Plan, rig log or options are wrong.
    Config = 2,
    /// Database or images folder failed.
    Io = 3,
}

/// Counts the units of a rig log file (consecutive serial blocks) for the
/// progress bar; `None` for standard input.
fn count_units(path: &Path) -> Option<u64> {
    if path.as_os_str() == "-" {
        return None;
    }
    let f = std::io::BufReader::new(std::fs::File::open(path).ok()?);
    let mut last = String::new();
    let mut n = 0;
    for line in f
        .lines()
        .map_while(Result::ok)
        .skip_while(|l| l.starts_with('#'))
        .skip(1)
    {
        let serial = line.split(',').next().unwrap_or("").trim().to_string();
        if !line.starts_with('#') && serial != last {
            n += 1;
            last = serial;
        }
    }
    Some(n)
}

fn print_report(r: &LotReport, t: &Traceability) {
    println!(
        "lot {}: {} units, {} passed, {} failed, yield {:.1} %",
        r.lot,
        r.units,
        r.passed,
        r.failed,
        100.0 * r.yield_fraction
    );
    println!(
        "  judged now {}, already recorded from this rig log and plan {}, not selected {}",
        r.judged, r.already_recorded, r.not_selected
    );
    println!(
        "  plan {} (sha256 {}), rig log {} (sha256 {}), station {:?}, operator {:?}",
        t.plan_sha256_hex().get(..16).unwrap_or(""),
        t.plan_sha256_hex(),
        t.rig_file,
        t.rig_sha256_hex(),
        t.station,
        t.operator
    );
    if r.image_failures > 0 {
        println!(
            "  {} units' image files could not be written or removed (I/O failure; see their reasons)",
            r.image_failures
        );
    }
    if r.temporaries_removed > 0 {
        println!(
            "  removed {} leftover temporary files from the images folder",
            r.temporaries_removed
        );
    }
    if r.unrecorded > 0 {
        println!(
            "  {} units could not be recorded (see their reasons)",
            r.unrecorded
        );
    }
    println!(
        "  {:<26} {:>8} {:>14} {:>14} {:>14} {:>12}",
        "quantity", "units", "min", "mean", "max", "sd"
    );
    let row = |name: &str, s: &lc_host::calib::lot::Stats, k: f64| {
        let f = |v: Option<f64>| v.map_or("-".to_string(), |v| format!("{:.4}", v * k));
        println!(
            "  {name:<26} {:>8} {:>14} {:>14} {:>14} {:>12}",
            s.count,
            f(s.min),
            f(s.mean),
            f(s.max),
            f(s.sd)
        );
    };
    row("rest frequency (MHz)", &r.rest_frequency_hz, 1e-6);
    row("Q", &r.q, 1.0);
    row("sensitivity (ppm/mm)", &r.sensitivity_per_mm, 1e6);
    row("largest residual (µm)", &r.max_residual_um, 1.0);
    row("drift b1 (ppm/K)", &r.drift_ppm_per_k, 1.0);
    let failed: Vec<_> = r.units_list.iter().filter(|u| !u.passed).collect();
    if !failed.is_empty() {
        println!("failed units:");
        for u in failed {
            println!(
                "  {}: {}",
                u.serial,
                u.reasons.first().map_or("", String::as_str)
            );
            for more in u.reasons.iter().skip(1).take(4) {
                println!("  {:width$}  {more}", "", width = u.serial.len());
            }
            if u.reasons.len() > 5 {
                println!(
                    "  {:width$}  … and {} more (lc-host units show {})",
                    "",
                    u.reasons.len() - 5,
                    u.serial,
                    width = u.serial.len()
                );
            }
        }
    }
}

/// Runs the command and prints any error; returns the exit status.
pub fn run(a: Args) -> ExitCode {
    match run_inner(a) {
        Ok(code) => ExitCode::from(code as u8),
        Err((code, e)) => {
            eprintln!("error: {e:#}");
            ExitCode::from(code as u8)
        }
    }
}

/// Which exit status an error means.
fn classify(e: anyhow::Error) -> (Exit, anyhow::Error) {
    let code = if let Some(s) = e.downcast_ref::<StoreError>() {
        match s {
            StoreError::NotADatabase { .. }
            | StoreError::ForeignDatabase { .. }
            | StoreError::NewerSchema { .. } => Exit::Config,
            _ => Exit::Io,
        }
    } else if let Some(l) = e.downcast_ref::<LotError>() {
        match l {
            LotError::Store(_) | LotError::Images { .. } => Exit::Io,
            LotError::Input(InputError::Io { .. }) => Exit::Io,
            LotError::Input(_) => Exit::Config,
        }
    } else if e.downcast_ref::<PlanError>().is_some() || e.downcast_ref::<InputError>().is_some() {
        Exit::Config
    } else {
        Exit::Io
    };
    (code, e)
}

/// The serial selection: `--serial` values and the lines of
/// `--serials-from` (blank lines and `#` comments skipped).
fn selection(a: &Args) -> Result<Option<HashSet<String>>, (Exit, anyhow::Error)> {
    let mut set: HashSet<String> = a.serials.iter().cloned().collect();
    if let Some(path) = &a.serials_from {
        let text = std::fs::read_to_string(path).map_err(|e| {
            (
                Exit::Config,
                anyhow::anyhow!("cannot read the serial list {}: {e}", path.display()),
            )
        })?;
        for line in text.lines() {
            let s = line.trim();
            if !s.is_empty() && !s.starts_with('#') {
                set.insert(s.to_string());
            }
        }
        if set.is_empty() {
            return Err((
                Exit::Config,
                anyhow::anyhow!(
                    "the serial list {} names no serial: one serial per line",
                    path.display()
                ),
            ));
        }
    }
    Ok((!set.is_empty()).then_some(set))
}

/// The rig log's bytes for hashing: streamed from a file, or all of
/// standard input (kept to be read afterwards).
fn rig_sha(path: &Path) -> Result<([u8; 32], Option<Vec<u8>>)> {
    use sha2::Digest;
    let mut h = sha2::Sha256::new();
    if path.as_os_str() == "-" {
        let mut all = Vec::new();
        std::io::Read::read_to_end(&mut std::io::stdin().lock(), &mut all)
            .context("cannot read the rig log from standard input")?;
        h.update(&all);
        return Ok((h.finalize().into(), Some(all)));
    }
    let mut f = std::fs::File::open(path)
        .with_context(|| format!("cannot open rig log {}", path.display()))?;
    std::io::copy(&mut f, &mut h)
        .with_context(|| format!("cannot read rig log {}", path.display()))?;
    Ok((h.finalize().into(), None))
}

fn env_or(opt: &Option<String>, var: &str) -> String {
    opt.clone()
        .or_else(|| std::env::var(var).ok())
        .unwrap_or_default()
}

fn run_inner(a: Args) -> Result<Exit, (Exit, anyhow::Error)> {
    let config = |e: anyhow::Error| (Exit::Config, e);
    let plan_text = std::fs::read_to_string(&a.plan)
        .map_err(|source| PlanError::Io {
            file: a.plan.clone(),
            source,
        })
        .map_err(|e| config(e.into()))?;
    let mut plan = Plan::parse(&plan_text, &a.plan).map_err(|e| config(e.into()))?;
    plan.calibrated_at = lc_host::calib::plan::calibration_time(a.time);
    let serials = selection(&a)?;
    let (rig_sha256, stdin_bytes) = rig_sha(&a.rig_log).map_err(config)?;
    let trace = Traceability {
        plan_sha256: {
            use sha2::Digest;
            sha2::Sha256::digest(plan_text.as_bytes()).into()
        },
        plan_text,
        rig_file: a.rig_log.display().to_string(),
        rig_sha256,
        station: env_or(&a.station, "LC_STATION"),
        operator: env_or(&a.operator, "LC_OPERATOR"),
    };
    let stdin_len = stdin_bytes.as_ref().map(|b| b.len() as u64);
    // Standard input was read whole for its hash; a file is read by the
    // lot's reader thread.
    let input: Box<dyn std::io::Read + Send> = match stdin_bytes {
        Some(bytes) => Box::new(std::io::Cursor::new(bytes)),
        None => Box::new(std::io::BufReader::with_capacity(
            1 << 16,
            std::fs::File::open(&a.rig_log)
                .with_context(|| format!("cannot open rig log {}", a.rig_log.display()))
                .map_err(config)?,
        )),
    };
    let reader = RigLogReader::new(input, &a.rig_log).map_err(|e| config(e.into()))?;
    let mut store = Store::open(&a.db).map_err(|e| classify(e.into()))?;
    store
        .register_plan(&trace.plan_text)
        .map_err(|e| classify(e.into()))?;
    std::fs::create_dir_all(&a.images)
        .with_context(|| format!("cannot create the images folder {}", a.images.display()))
        .map_err(|e| (Exit::Io, e))?;
    let bar = match count_units(&a.rig_log) {
        Some(n) if std::io::stderr().is_terminal() => {
            let b = indicatif::ProgressBar::new(n);
            b.set_style(
                indicatif::ProgressStyle::with_template(
                    "{bar:40} {pos}/{len} units ({per_sec}, eta {eta}) {msg}",
                )
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
            );
            b
        }
        _ => super::spinner("{spinner} {pos} units ({per_sec}) {msg}"),
    };
    let report_trace = {
        let t = ReportTrace::now()
            .with_plan_text(&a.plan.display().to_string(), &trace.plan_text)
            .with_station(&trace.station, &trace.operator);
        if a.rig_log.as_os_str() == "-" {
            let sha: String = trace
                .rig_sha256
                .iter()
                .map(|b| format!("{b:02x}"))
                .collect();
            ReportTrace {
                rig_log: Some(("standard input".into(), stdin_len.map(|n| (n, sha)))),
                ..t
            }
        } else {
            t.with_rig_log(&a.rig_log)
        }
    };
    let mut html = match &a.report {
        Some(dir) => Some(
            ReportWriter::new(dir, &a.lot, &plan, report_trace.clone(), a.max_unit_plots)
                .map_err(|e| (Exit::Io, e.into()))?,
        ),
        None => None,
    };
    let mut results = a
        .results
        .as_ref()
        .map(|path| ResultsWriter::new(path, &a.lot, report_trace));
    let mut page_error = None;
    let run = LotRun {
        lot: &a.lot,
        images: Some(&a.images),
        serials: serials.as_ref(),
        reattempt: a.reattempt,
        group_units: usize::try_from(a.group_units).unwrap_or(DEFAULT_GROUP_UNITS),
        trace: Some(&trace),
    };
    let report = run_lot(reader, &run, &plan, &mut store, |out| {
        bar.inc(1);
        bar.set_message(format!(
            "{} {}",
            out.serial,
            if out.passed { "pass" } else { "fail" }
        ));
        if let Some(Err(e)) = html.as_mut().map(|h| h.add(out)) {
            page_error.get_or_insert(e);
        }
        if let Some(r) = results.as_mut() {
            r.add(out);
        }
    })
    .map_err(|e| classify(e.into()))?;
    bar.finish_and_clear();
    if let Some(e) = page_error {
        return Err((Exit::Io, e.into()));
    }
    if let Some(h) = html {
        let index = h.finish(&report).map_err(|e| (Exit::Io, e.into()))?;
        eprintln!("report: {}", index.display());
    }
    if let Some(r) = results {
        let path = r.finish().map_err(|e| (Exit::Io, e.into()))?;
        eprintln!("results: {}", path.display());
    }
    if a.json {
        let text = serde_json::to_string_pretty(&report).map_err(|e| (Exit::Io, e.into()))?;
        println!("{text}");
    } else {
        print_report(&report, &trace);
        println!(
            "records in {}, images in {}",
            a.db.display(),
            a.images.display()
        );
    }
    if report.already_recorded > 0 {
        eprintln!(
            "note: {} units were already recorded from this rig log against this plan and were not judged again \
             (their latest records stand; their image files follow them); give --reattempt to judge them again",
            report.already_recorded
        );
    }
    if !report.missing_serials.is_empty() {
        eprintln!(
            "error: {} selected serials are not in the rig log: {}",
            report.missing_serials.len(),
            report.missing_serials.join(", ")
        );
        return Ok(Exit::Config);
    }
    Ok(if report.image_failures > 0 || report.unrecorded > 0 {
        Exit::Io
    } else if report.failed > 0 {
        Exit::SomeFailed
    } else {
        Exit::AllPassed
    })
}
