//! `lc-host verify`: the image's fixed-point path against its f64 twin.

use super::{count_u64, count_usize, load_image};
use anyhow::{bail, Result};
use lc_host::verify::{to_text, verify, Firmware, VerifyOptions};
use std::io::IsTerminal;
use std::path::PathBuf;

/// Sweep an image's whole input domain: fixed point against f64, stage by stage
///
/// Feeds a dense grid plus random points, at least ten million readings by default, on all
/// cores, through the fixed-point path of the reader the image builds and its f64 twin,
/// stage by stage and end to end, over that reader's own input domain: proximity and
/// level without a reference electrode from the shift (shift, drift model, curve);
/// level with a reference electrode from the probe / reference ratio and the reference
/// electrode's shift (both shifts, the drift model's offset, curve); metal from the shift
/// minus a baseline learned at rest (shift, drift model, delta, and the detected class
/// against the one the f64 delta gives). Temperatures -40 to 125 °C. Prints maximum and
/// RMS error, relative to the counter's quantisation step and to the bound lc-core
/// documents, and where the worst case occurs. Exits with 1 when any stage exceeds its
/// bound or compares no readings.
///
/// Example:
///
///   lc-host verify out/images/DEMO-01-0007.lcim
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// The calibration image
    #[arg(value_name = "IMAGE")]
    image: PathBuf,
    /// Random points in addition to the grid (0 to 10^10; 10M accepted)
    #[arg(long, default_value_t = 10_000_000, value_parser = count_u64::<0, 10_000_000_000>)]
    points: u64,
    /// Seed of the random points
    #[arg(long, default_value_t = 0x5EED)]
    seed: u64,
    /// Worker threads, 1 to 1024 (default: all cores)
    #[arg(long, value_parser = count_usize::<1, 1024>)]
    threads: Option<usize>,
    /// Print JSON instead of a table
    #[arg(long)]
    json: bool,
}

pub fn run(a: Args) -> Result<()> {
    let cal = load_image(&a.image)?;
    let mut opts = VerifyOptions {
        random_points: a.points,
        seed: a.seed,
        ..VerifyOptions::default()
    };
    if let Some(t) = a.threads {
        opts.threads = t.max(1);
    }
    let total = u64::from(opts.grid.0) * u64::from(opts.grid.1) + opts.random_points;
    let bar = if std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new(total);
        b.set_style(
            indicatif::ProgressStyle::with_template(
                "{bar:40} {pos}/{len} readings ({per_sec}, eta {eta})",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        b
    } else {
        indicatif::ProgressBar::hidden()
    };
    let report = verify(&cal, &opts, &Firmware, &|n| bar.set_position(n))
        .map_err(|e| anyhow::anyhow!("{}: {e}", a.image.display()))?;
    bar.finish_and_clear();
    if a.json {
        println!("{}", serde_json::to_string_pretty(&report)?);
    } else {
        print!("{}", to_text(&report));
    }
    if !report.complete() {
        bail!(
            "{}: a stage compared no readings (every reading faulted); check the image's fault window and rest points with `lc-host inspect`",
            a.image.display()
        );
    }
    if !report.passed() {
        bail!(
            "{}: a fixed-point stage exceeded its stated error bound",
            a.image.display()
        );
    }
    Ok(())
}
