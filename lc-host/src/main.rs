//! The `lc-host` command-line tool. Argument parsing lives here; the work is
//! done by the `lc_host` library, which never sees these types.

use anyhow::{bail, Context, Result};
use clap::{Parser, Subcommand, ValueEnum};
use lc_core::counting::{CountPair, FaultWindow};
use lc_host::counts::{convert_log, CountsConfig, OnBadRow};
use lc_host::fieldlog::FieldLogReader;
use std::io::{BufReader, BufWriter, IsTerminal, Read, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "lc-host",
    version,
    about = "PC tools for resonant LC sensors: turn logged counts into readings exactly as the firmware does",
    long_about = "PC tools for resonant LC sensors (inductive proximity, capacitive level, metal detection).\n\n\
        Every number comes from lc-core's fixed-point path, the same code the firmware runs, so a \
        reading on the PC is bit-for-bit the reading on the unit.\n\n\
        Not a safety-rated component: where a reading protects people or machines, follow the \
        applicable functional-safety standards, local codes and a qualified engineer's review."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Convert raw count pairs into frequency, period ratio, shift and resolution
    ///
    /// Reads a field log (CSV with `cycles` and `ticks` columns, optional `time_s`, `channel`,
    /// `temp_c`; see docs/formats.md) and writes one CSV row per gate: status from the fault
    /// window, frequency in Hz, period ratio (ticks per cycle), the shift s = (p/p_rest)^2 - 1
    /// as the firmware's raw Q23.40 integer and in ppm, and the counter's quantisation step in
    /// ppm (what one count is worth at that reading).
    ///
    /// Example (the bundled demo log of a proximity sensor):
    ///
    ///   lc-host counts examples/data/demo-counts.csv --reference-hz 48000000 \
    ///     --rest 16384:139542 --gate-cycles 16384 --band 1000000:20000000
    #[command(verbatim_doc_comment)]
    Counts(CountsArgs),
}

#[derive(clap::Args)]
struct CountsArgs {
    /// Field log to read, or `-` for standard input
    input: PathBuf,
    /// Output CSV; standard output when absent or `-`. A file is written
    /// whole or not at all (temporary file, then rename)
    #[arg(short, long)]
    output: Option<PathBuf>,
    /// Reference clock of the counter, in hertz
    #[arg(long, value_name = "HZ")]
    reference_hz: u32,
    /// The unit's rest point (no target, reference temperature) as the
    /// count pair CYCLES:TICKS measured there
    #[arg(long, value_name = "CYCLES:TICKS", value_parser = parse_pair)]
    rest: CountPair,
    /// Length of the reciprocal gate in sensor cycles. Pairs with exactly
    /// this many cycles take the firmware's division-free path; others the
    /// one-division path. Both give the same shift within the stated bound
    #[arg(long, value_name = "CYCLES")]
    gate_cycles: Option<u32>,
    /// Plausible sensor band MIN_HZ:MAX_HZ; pairs outside are reported as
    /// faults (frequency_too_low / frequency_too_high), not converted
    #[arg(long, value_name = "MIN_HZ:MAX_HZ", value_parser = parse_band)]
    band: Option<(u32, u32)>,
    /// Fewest sensor cycles a gate may hold (too_few_cycles below)
    #[arg(long, value_name = "CYCLES", default_value_t = 1)]
    min_cycles: u32,
    /// What to do with a row that does not parse
    #[arg(long, value_enum, default_value_t = BadRow::Stop)]
    on_bad_row: BadRow,
    /// Add the f64 reference shift and the difference fixed - f64 (ppm)
    #[arg(long)]
    float: bool,
}

#[derive(Clone, Copy, ValueEnum)]
enum BadRow {
    /// Stop with the row's file, line and field
    Stop,
    /// Skip it and count it in the summary
    Skip,
}

fn parse_pair(s: &str) -> Result<CountPair, String> {
    let (c, t) = s
        .split_once(':')
        .ok_or("expected CYCLES:TICKS, for example 16384:139542")?;
    let c = c
        .trim()
        .parse()
        .map_err(|_| format!("cycles {c:?} is not a whole count"))?;
    let t = t
        .trim()
        .parse()
        .map_err(|_| format!("ticks {t:?} is not a whole count"))?;
    Ok(CountPair::new(c, t))
}

fn parse_band(s: &str) -> Result<(u32, u32), String> {
    let (a, b) = s
        .split_once(':')
        .ok_or("expected MIN_HZ:MAX_HZ, for example 1000000:20000000")?;
    let a = a
        .trim()
        .parse()
        .map_err(|_| format!("{a:?} is not a frequency in whole hertz"))?;
    let b = b
        .trim()
        .parse()
        .map_err(|_| format!("{b:?} is not a frequency in whole hertz"))?;
    if a > b {
        return Err(format!("lower edge {a} Hz is above upper edge {b} Hz"));
    }
    Ok((a, b))
}

/// Writes to a temporary file beside `path` and renames it into place on
/// success, so a failed run never leaves a half-written output.
fn write_atomically(path: &Path, body: impl FnOnce(&mut dyn Write) -> Result<()>) -> Result<()> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path.file_name().context("output path has no file name")?;
    let tmp = dir.join(format!(
        ".{}.{}.tmp",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let file = std::fs::File::create(&tmp)
            .with_context(|| format!("cannot create {}", tmp.display()))?;
        let mut w = BufWriter::new(file);
        body(&mut w)?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
            .with_context(|| format!("cannot rename into {}", path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

fn run_counts(a: CountsArgs) -> Result<()> {
    let window = match a.band {
        Some((lo, hi)) => Some(
            FaultWindow::new(a.reference_hz, lo, hi, a.min_cycles)
                .map_err(|e| anyhow::anyhow!("--band: {e}"))?,
        ),
        None if a.min_cycles > 1 => Some(
            FaultWindow::new(a.reference_hz, 0, u32::MAX, a.min_cycles)
                .map_err(|e| anyhow::anyhow!("{e}"))?,
        ),
        None => None,
    };
    let cfg = CountsConfig::new(a.reference_hz, a.rest, a.gate_cycles, window)
        .context("--rest / --reference-hz")?;
    let on_bad = match a.on_bad_row {
        BadRow::Stop => OnBadRow::Stop,
        BadRow::Skip => OnBadRow::Skip,
    };
    let input: Box<dyn Read> = if a.input.as_os_str() == "-" {
        Box::new(std::io::stdin().lock())
    } else {
        Box::new(
            std::fs::File::open(&a.input)
                .with_context(|| format!("cannot open field log {}", a.input.display()))?,
        )
    };
    let reader = FieldLogReader::new(BufReader::with_capacity(1 << 16, input), &a.input)?;
    let bar = if std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new_spinner();
        b.set_style(
            indicatif::ProgressStyle::with_template("{spinner} {pos} lines ({per_sec}) {elapsed}")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_spinner()),
        );
        b
    } else {
        indicatif::ProgressBar::hidden()
    };
    let progress = |line: u64| bar.set_position(line);
    let summary = match a.output.as_deref() {
        Some(p) if p.as_os_str() != "-" => {
            let mut summary = None;
            write_atomically(p, |w| {
                summary = Some(convert_log(reader, w, &cfg, on_bad, a.float, progress)?);
                Ok(())
            })?;
            summary.context("conversion produced no summary")?
        }
        _ => convert_log(
            reader,
            std::io::stdout().lock(),
            &cfg,
            on_bad,
            a.float,
            progress,
        )?,
    };
    bar.finish_and_clear();
    eprintln!(
        "{} rows: {} ok, {} faults, {} skipped",
        summary.rows, summary.ok, summary.faults, summary.skipped
    );
    if let Some(first) = summary.first_skip {
        eprintln!("first skipped row: {first}");
    }
    if summary.rows == 0 && summary.skipped > 0 {
        bail!("no row of {} could be read", a.input.display());
    }
    Ok(())
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Counts(a) => run_counts(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::FAILURE
        }
    }
}
