//! `lc-host simulate`: rig logs (and field logs) from the physics model.

use super::{count_usize, with_output};
use anyhow::anyhow;
use anyhow::Result;
use lc_host::sim::field::{write_field_log, Fault, FaultKind, FieldSpec};
use lc_host::sim::rig::{units, write_rig_log, LotSpec};
use std::path::PathBuf;

/// Simulate rig logs of a production lot, and field logs of a unit, from the physics model
///
/// Every unit gets its own coil, capacitor, parasitics, temperature coefficients, coupling
/// to the target and quality factor (manufacturing spread), and the rig steps a plate
/// through its gaps at each temperature; counts are quantised to whole ticks with jitter.
/// Seeded: the same seed gives the same log. Faults on request: cracked capacitors
/// (--bad-every) and corrupted rows (--corrupt-every), to see the acceptance work.
///
/// Example (the demo lot, docs/references.md, Demo scenario):
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
        /// Units in the lot (1 to 1000000)
        #[arg(long, default_value_t = 24, value_parser = count_usize::<1, 1_000_000>)]
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
    /// A rig log of a lot of capacitive level probes (the coolant tank)
    LevelRig {
        /// Lot name
        #[arg(long, default_value = "TANK-01")]
        lot: String,
        /// Units in the lot (1 to 1000000)
        #[arg(long, default_value_t = 8, value_parser = count_usize::<1, 1_000_000>)]
        units: usize,
        /// Seed
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Output file (standard output when absent or `-`)
        #[arg(short, long)]
        output: Option<PathBuf>,
    },
    /// A field log of one unit of a simulated lot on a machine
    ///
    /// The unit is the same simulated unit as in `simulate rig` with the same lot, seed and
    /// unit number, so its calibration image from `lc-host calibrate` converts this log.
    Field {
        /// Lot name
        #[arg(long, default_value = "DEMO-01")]
        lot: String,
        /// Seed of the lot
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Unit number in the lot (1 = LOT-0001)
        #[arg(long, default_value_t = 7)]
        unit: usize,
        /// Log length, seconds
        #[arg(long, default_value_t = 7200.0)]
        duration: f64,
        /// Readings logged per second
        #[arg(long, default_value_t = 10.0)]
        rate: f64,
        /// Machine cycle period, seconds
        #[arg(long, default_value_t = 2.0)]
        cycle: f64,
        /// Temperature rise over the log, kelvin (warm-up time constant 40 min)
        #[arg(long, default_value_t = 20.0)]
        warm_up: f64,
        /// Inject a fault: KIND@START+DURATION in seconds; KIND is open, short, stuck or dropout
        /// (repeatable), for example --fault open@600+2
        #[arg(long, value_parser = parse_fault)]
        fault: Vec<Fault>,
        /// Output file (standard output when absent or `-`)
        #[arg(short, long)]
        output: Option<PathBuf>,
    },
}

fn parse_fault(s: &str) -> Result<Fault, String> {
    let (kind, rest) = s
        .split_once('@')
        .ok_or("expected KIND@START+DURATION, for example open@600+2")?;
    let kind = FaultKind::parse(kind)
        .ok_or_else(|| format!("{kind:?} is not a fault: open, short, stuck or dropout"))?;
    let (at, dur) = rest
        .split_once('+')
        .ok_or("expected START+DURATION in seconds after '@'")?;
    let at_s: f64 = at
        .parse()
        .map_err(|_| format!("{at:?} is not a time in seconds"))?;
    let duration_s: f64 = dur
        .parse()
        .map_err(|_| format!("{dur:?} is not a duration in seconds"))?;
    Ok(Fault {
        kind,
        at_s,
        duration_s,
    })
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
        What::LevelRig {
            lot,
            units,
            seed,
            output,
        } => {
            with_output(output.as_deref(), |w| {
                Ok(lc_host::sim::level::write_level_rig_log(
                    &lot, units, seed, w,
                )?)
            })?;
        }
        What::Field {
            lot,
            seed,
            unit,
            duration,
            rate,
            cycle,
            warm_up,
            fault,
            output,
        } => {
            let model = units(&LotSpec::demo(&lot, unit, seed))
                .pop()
                .filter(|_| unit >= 1)
                .ok_or_else(|| anyhow!("--unit must be 1 or more"))?;
            let mut spec = FieldSpec::demo(model, seed.wrapping_add(unit as u64));
            spec.duration_s = duration;
            spec.log_rate_hz = rate;
            spec.cycle_s = cycle;
            spec.temperature.1 = warm_up;
            spec.faults = fault;
            let rows = with_output(output.as_deref(), |w| Ok(write_field_log(&spec, w)?))?;
            eprintln!("{rows} readings of unit {}", spec.unit.serial);
        }
    }
    Ok(())
}
