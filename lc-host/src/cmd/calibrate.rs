//! `lc-host calibrate`: a lot's rig log to images, unit records and a report.

use super::open_input;
use anyhow::{Context, Result};
use lc_host::calib::lot::{calibrate_lot, LotReport};
use lc_host::calib::plan::Plan;
use lc_host::calib::report::{write_lot_plots, write_unit_plot};
use lc_host::riglog::RigLogReader;
use lc_host::store::Store;
use std::io::{BufRead, IsTerminal};
use std::path::{Path, PathBuf};

/// Calibrate a production lot from its rig log
///
/// For each unit in the rig log (docs/formats.md): fits the rest point, the temperature
/// drift model (least squares, with uncertainty) and a smooth monotone curve
/// (docs/calibration.md), reads every rig step back through the firmware's own arithmetic,
/// and judges the unit against the plan's acceptance limits. Every attempt, pass or fail,
/// becomes a unit record in the database (one transaction per unit: an interrupted run
/// loses nothing it committed); each passing unit's calibration image is written to the
/// images folder. Prints the lot's yield and distributions; --report writes SVG plots.
///
/// Not a safety-rated component: a calibrated unit is no safety function by itself.
///
/// Example (a simulated demo lot):
///
///   lc-host simulate rig --lot DEMO-01 --units 24 -o rig.csv
///   lc-host calibrate rig.csv --plan examples/data/demo-plan.toml --lot DEMO-01 \
///     --images images --report report
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
    /// Unit-record database (SQLite; created if missing)
    #[arg(long, default_value = "units.db")]
    db: PathBuf,
    /// Folder for the passing units' calibration images
    #[arg(long, default_value = "images")]
    images: PathBuf,
    /// Folder for the SVG report (lot histograms, unit curves)
    #[arg(long)]
    report: Option<PathBuf>,
    /// Most unit curve plots in the report (failed units first)
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

fn print_report(r: &LotReport) {
    println!(
        "lot {}: {} units, {} passed, {} failed, yield {:.1} %",
        r.lot,
        r.units,
        r.passed,
        r.failed,
        100.0 * r.yield_fraction
    );
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
    row("largest residual (units)", &r.max_residual, 1.0);
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

pub fn run(a: Args) -> Result<()> {
    let mut plan = Plan::load(&a.plan)?;
    plan.calibrated_at = lc_host::calib::plan::calibration_time(a.time);
    let mut store = Store::open(&a.db)?;
    std::fs::create_dir_all(&a.images)
        .with_context(|| format!("cannot create the images folder {}", a.images.display()))?;
    let reader = RigLogReader::new(open_input(&a.rig_log, "rig log")?, &a.rig_log)?;
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
    let unit_dir = a.report.as_ref().map(|d| d.join("units"));
    let mut plotted_fail = 0usize;
    let mut plotted = 0usize;
    let mut plot_error = None;
    let report = calibrate_lot(reader, &a.lot, &plan, &mut store, Some(&a.images), |out| {
        bar.inc(1);
        bar.set_message(format!(
            "{} {}",
            out.serial,
            if out.passed { "pass" } else { "fail" }
        ));
        if let Some(dir) = &unit_dir {
            // Failed units first: keep room for them within the cap.
            let room_for_passes = a.max_unit_plots.saturating_sub(a.max_unit_plots / 2);
            let take = if out.passed {
                plotted - plotted_fail < room_for_passes
            } else {
                plotted < a.max_unit_plots
            };
            if take && plotted < a.max_unit_plots {
                match write_unit_plot(dir, out, &plan) {
                    Ok(Some(_)) => {
                        plotted += 1;
                        plotted_fail += usize::from(!out.passed);
                    }
                    Ok(None) => {}
                    Err(e) => plot_error = Some(e),
                }
            }
        }
    })?;
    bar.finish_and_clear();
    if let Some(e) = plot_error {
        eprintln!("warning: some unit plots could not be written: {e}");
    }
    if let Some(dir) = &a.report {
        let files = write_lot_plots(dir, &report, &plan)
            .with_context(|| format!("cannot write the report into {}", dir.display()))?;
        eprintln!(
            "report: {} lot plots and {plotted} unit plots in {}",
            files.len(),
            dir.display()
        );
    }
    if a.json {
        println!("{}", serde_json::to_string_pretty(&report)?);
    } else {
        print_report(&report);
        println!(
            "records in {}, images in {}",
            a.db.display(),
            a.images.display()
        );
    }
    Ok(())
}
