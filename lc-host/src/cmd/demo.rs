//! `lc-host demo`: the whole job on the demo scenario.

use anyhow::Result;
use std::path::PathBuf;

/// Run the demo scenario end to end: simulate, calibrate, inspect, convert, verify, budget
///
/// A lot of 24 simulated proximity sensors (a 20 mm PCB coil, 100 pF, an aluminium plate
/// at 0.5 – 8 mm) is stepped on a simulated rig at 25 °C and 60 °C and calibrated; one
/// unit's image is inspected; that unit is logged for two hours on a warming press with
/// faults injected, and the log is converted exactly as its firmware would; the image is
/// verified over its whole domain and the readout is budgeted. Then eight level probes of a
/// coolant tank and the same coil as a metal detector are calibrated. Every image made is
/// verified (fixed point against f64, each reader's own path); the demo fails if any
/// exceeds a bound. Everything lands in the output folder: rig and field logs, images, the
/// unit database, readings, SVG plots.
///
/// Example:
///
///   lc-host demo demo-out
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Output folder (created if missing; its demo files are replaced)
    #[arg(default_value = "demo-out")]
    out: PathBuf,
}

pub fn run(a: Args) -> Result<()> {
    let mut stdout = std::io::stdout().lock();
    Ok(lc_host::demo::run(&a.out, &mut stdout)?)
}
