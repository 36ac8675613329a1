//! `lc-host simulate`: rig logs (and field logs) from the physics model.

use super::with_output;
use anyhow::Result;
use lc_host::sim::rig::{write_rig_log, LotSpec};
use std::path::PathBuf;

/// Simulate rig logs of a production lot from the project's physics model
///
/// Every unit gets its own coil, capacitor, parasitics, temperature coefficients, coupling
/// to the target and quality factor (manufacturing spread), and the rig steps a plate
/// through its gaps at each temperature; counts are quantised to whole ticks with jitter.
/// Seeded: the same seed gives the same log. Faults on request: cracked capacitors
/// (--bad-every) and corrupted rows (--corrupt-every), to see the acceptance work.
///
/// Example (the demo lot of DESIGN §8):
///
///   lc-host simulate rig --lot DEMO-01 --units 24 --seed 1 -o rig.csv
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(subcommand)]
    what: What,
}

#[derive(clap::Subcommand)]
enum What {
    /// A rig log of a lot of proximity units
    Rig {
        /// Lot name (serials are LOT-0001, …)
        #[arg(long, default_value = "DEMO-01")]
        lot: String,
        /// Units in the lot
        #[arg(long, default_value_t = 24)]
        units: usize,
        /// Seed
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Give every n-th unit a cracked capacitor (0: none)
        #[arg(long, default_value_t = 0)]
        bad_every: usize,
        /// Corrupt one row of every n-th unit (0: none)
        #[arg(long, default_value_t = 0)]
        corrupt_every: usize,
        /// Output file (standard output when absent or `-`)
        #[arg(short, long)]
        output: Option<PathBuf>,
    },
}

pub fn run(a: Args) -> Result<()> {
    match a.what {
        What::Rig {
            lot,
            units,
            seed,
            bad_every,
            corrupt_every,
            output,
        } => {
            let mut spec = LotSpec::demo(&lot, units, seed);
            spec.bad_capacitor_every = bad_every;
            spec.corrupt_row_every = corrupt_every;
            with_output(output.as_deref(), |w| Ok(write_rig_log(&spec, w)?))?;
        }
    }
    Ok(())
}
