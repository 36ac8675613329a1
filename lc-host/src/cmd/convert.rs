//! `lc-host convert`: a field log to readings, as the firmware computes them.

use super::counts::{report, BadRow};
use super::{load_image, open_input, spinner, with_output};
use anyhow::{anyhow, Result};
use lc_host::convert::{convert_log, Converter};
use lc_host::fieldlog::FieldLogReader;
use std::path::PathBuf;

/// Convert a field log into readings through a unit's calibration image
///
/// Every row goes through exactly the code the firmware runs (lc-core's reader: fault
/// window, shift, drift model, curve), so the CSV holds the readings the unit itself would
/// have produced, bit for bit, with their status (ok, below_range, above_range, no_target,
/// or the sensor fault). The input is a field log with count pairs (`cycles`, `ticks`) or
/// frequencies (`frequency_hz`), optional `time_s`, `channel`, `temp_c`, `ring_count` and
/// companion counts (docs/formats.md). Memory stays constant whatever the log's size.
///
/// Example:
///
///   lc-host convert --image unit.lcim --input field.csv --output readings.csv --float
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Calibration image of the unit that logged the data
    #[arg(long)]
    image: PathBuf,
    /// Field log to read, or `-` for standard input
    #[arg(long)]
    input: PathBuf,
    /// Output CSV; standard output when absent or `-`. A file is written
    /// whole or not at all
    #[arg(short, long)]
    output: Option<PathBuf>,
    /// Add the f64 reference value and the difference fixed - f64
    #[arg(long)]
    float: bool,
    /// What to do with a row that does not parse
    #[arg(long, value_enum, default_value_t = BadRow::Stop)]
    on_bad_row: BadRow,
}

pub fn run(a: Args) -> Result<()> {
    let cal = load_image(&a.image)?;
    let mut conv = Converter::new(cal).map_err(|e| anyhow!("{}: {e}", a.image.display()))?;
    let reader = FieldLogReader::new(open_input(&a.input, "field log")?, &a.input)?;
    let bar = spinner("{spinner} {pos} lines ({per_sec}) {elapsed}");
    let summary = with_output(a.output.as_deref(), |w| {
        Ok(convert_log(
            reader,
            w,
            &mut conv,
            a.on_bad_row.into(),
            a.float,
            |l| bar.set_position(l),
            |_| {},
        )?)
    })?;
    bar.finish_and_clear();
    report(&summary, &a.input)
}
