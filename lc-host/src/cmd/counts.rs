//! `lc-host counts`: count pairs to frequency, period ratio and shift.

use super::{count_u32, hz_band, hz_u32, open_input, parse_pair, spinner, with_output};
use anyhow::{anyhow, bail, Context, Result};
use lc_core::counting::{CountPair, FaultWindow};
use lc_host::counts::{convert_log, CountsConfig, OnBadRow};
use lc_host::fieldlog::FieldLogReader;
use std::path::PathBuf;

/// Convert raw count pairs into frequency, period ratio, shift and resolution
///
/// Reads a field log (CSV with `cycles` and `ticks` columns, optional `time_s`, `channel`,
/// `temp_c`; see docs/formats.md) and writes one CSV row per gate: status from the fault
/// window, frequency in Hz, period ratio (ticks per cycle), the shift s = (p/p_rest)^2 - 1
/// as the firmware's raw Q23.40 integer and in ppm, and the counter's quantisation step in
/// ppm (what one count is worth at that reading). Use it before a unit is calibrated; with
/// a calibration image, `lc-host convert` gives the reading itself.
///
/// Example (the bundled demo log of a proximity sensor):
///
///   lc-host counts examples/data/demo-counts.csv --reference-hz 48M \
///     --rest 16384:139542 --gate-cycles 16384 --band 1M:20M
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Field log to read, or `-` for standard input
    input: PathBuf,
    /// Output CSV; standard output when absent or `-`. A file is written
    /// whole or not at all (temporary file, then rename)
    #[arg(short, long)]
    output: Option<PathBuf>,
    /// Reference clock of the counter, in hertz (SI prefixes: 48M)
    #[arg(long, value_name = "HZ", value_parser = hz_u32)]
    reference_hz: u32,
    /// The unit's rest point (no target, reference temperature) as the
    /// count pair CYCLES:TICKS measured there
    #[arg(long, value_name = "CYCLES:TICKS", value_parser = |s: &str| parse_pair::<u32>(s, "16384:139542").map(|(c, t)| CountPair::new(c, t)))]
    rest: CountPair,
    /// Length of the reciprocal gate in sensor cycles. Pairs with exactly
    /// this many cycles take the firmware's division-free path; others the
    /// one-division path. Both give the same shift within the stated bound
    #[arg(long, value_name = "CYCLES", value_parser = count_u32::<1, { u32::MAX }>)]
    gate_cycles: Option<u32>,
    /// Plausible sensor band MIN_HZ:MAX_HZ (SI prefixes: 1M:20M); pairs
    /// outside are reported as faults (fault_frequency_too_low /
    /// fault_frequency_too_high), not converted
    #[arg(long, value_name = "MIN_HZ:MAX_HZ", value_parser = hz_band)]
    band: Option<(u32, u32)>,
    /// Fewest sensor cycles a gate may hold (too_few_cycles below)
    #[arg(long, value_name = "CYCLES", default_value_t = 1, value_parser = count_u32::<0, { u32::MAX }>)]
    min_cycles: u32,
    /// What to do with a row that does not parse
    #[arg(long, value_enum, default_value_t = BadRow::Stop)]
    on_bad_row: BadRow,
    /// Add the f64 reference shift and the difference fixed - f64 (ppm)
    #[arg(long)]
    float: bool,
}

/// What to do with a bad row.
#[derive(Clone, Copy, clap::ValueEnum)]
pub enum BadRow {
    /// Stop with the row's file, line and field
    Stop,
    /// Skip it and count it in the summary
    Skip,
}

impl From<BadRow> for OnBadRow {
    fn from(b: BadRow) -> Self {
        match b {
            BadRow::Stop => OnBadRow::Stop,
            BadRow::Skip => OnBadRow::Skip,
        }
    }
}

/// Prints the run's totals and fails when nothing could be read.
pub fn report(summary: &lc_host::stream::Summary, input: &std::path::Path) -> Result<()> {
    eprintln!(
        "{} rows: {} ok, {} out of range or no target, {} sensor faults, {} skipped",
        summary.rows, summary.ok, summary.out_of_range, summary.faults, summary.skipped
    );
    if let Some(first) = &summary.first_skip {
        eprintln!("first skipped row: {first}");
    }
    if summary.rows == 0 && summary.skipped > 0 {
        bail!("no row of {} could be read", input.display());
    }
    Ok(())
}

pub fn run(a: Args) -> Result<()> {
    let (lo, hi) = a.band.unwrap_or((0, u32::MAX));
    if lo > hi {
        bail!("--band: lower edge {lo} Hz is above upper edge {hi} Hz");
    }
    let window = FaultWindow::new(a.reference_hz, lo, hi, a.min_cycles)
        .map_err(|e| anyhow!("--reference-hz / --band: {e}"))?;
    let cfg = CountsConfig::new(a.reference_hz, a.rest, a.gate_cycles, Some(window))
        .context("--rest / --reference-hz")?;
    if let Some(out) = &a.output {
        lc_host::atomic::refuse_same_file(&a.input, out)?;
    }
    let reader = FieldLogReader::new(open_input(&a.input, "field log")?, &a.input)?;
    for w in reader.warnings() {
        eprintln!("warning: {w}");
    }
    let bar = spinner("{spinner} {pos} lines ({per_sec}) {elapsed}");
    let summary = with_output(a.output.as_deref(), |w| {
        Ok(convert_log(
            reader,
            w,
            &cfg,
            a.on_bad_row.into(),
            a.float,
            |line| bar.set_position(line),
        )?)
    })?;
    bar.finish_and_clear();
    report(&summary, &a.input)
}
