//! `lc-host convert`: a field log to readings, as the firmware computes them.

use super::counts::{report, BadRow};
use super::{load_image, open_input, spinner, with_output};
use anyhow::{anyhow, Result};
use lc_host::convert::{convert_log, Converter};
use lc_host::fieldlog::FieldLogReader;
use lc_host::svg::{Quantity, TracePlot};
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
    /// Also write an SVG trace of the reading against time (faults marked;
    /// with --float the f64 reference too)
    #[arg(long, value_name = "SVG")]
    plot: Option<PathBuf>,
}

pub fn run(a: Args) -> Result<()> {
    let cal = load_image(&a.image)?;
    let mut conv = Converter::new(cal).map_err(|e| anyhow!("{}: {e}", a.image.display()))?;
    let reader = FieldLogReader::new(open_input(&a.input, "field log")?, &a.input)?;
    let bar = spinner("{spinner} {pos} lines ({per_sec}) {elapsed}");
    // The trace keeps a min/max envelope of bounded size, so memory stays
    // constant whatever the log's length.
    let mut trace = a.plot.as_ref().map(|_| Trace::default());
    let summary = with_output(a.output.as_deref(), |w| {
        Ok(convert_log(
            reader,
            w,
            &mut conv,
            a.on_bad_row.into(),
            a.float,
            |l| bar.set_position(l),
            |c| {
                if let Some(tr) = trace.as_mut() {
                    tr.push(c);
                }
            },
        )?)
    })?;
    bar.finish_and_clear();
    if let (Some(path), Some(tr)) = (&a.plot, trace) {
        let unit = format!(
            "1e{} {}",
            cal.output.decimal_exponent,
            cal.output.unit.symbol()
        );
        let mut plot = TracePlot::new(
            format!("Unit {}: reading against time", cal.serial.as_str()),
            Quantity::new("reading", unit),
            "firmware reading",
            tr.values.samples(),
        )
        .faults(tr.faults);
        if a.float {
            plot = plot.reference("f64 reference", tr.reference.samples());
        }
        lc_host::atomic::write_bytes(path, plot.render().as_bytes())?;
        eprintln!("plot: {}", path.display());
    }
    report(&summary, &a.input)
}

/// The samples of the trace plot, reduced on the fly.
#[derive(Default)]
struct Trace {
    values: Envelope,
    reference: Envelope,
    faults: Vec<f64>,
}

impl Trace {
    /// Rows without a time stamp use their line number as time.
    fn push(&mut self, c: &lc_host::convert::Converted) {
        let t = c.time_s.unwrap_or(c.line as f64);
        if matches!(c.reading.status(), lc_core::reader::Status::SensorFault(_)) {
            // Fault markers: at most a few thousand are drawn anyway.
            if self.faults.len() < 10_000 {
                self.faults.push(t);
            }
        } else {
            self.values.push(t, f64::from(c.reading.output()));
            if let Some(v) = c.value_f64 {
                self.reference.push(t, v);
            }
        }
    }
}

/// A min/max envelope over time in at most `BUCKETS` buckets: when time
/// runs past the last bucket, neighbouring buckets merge and the width
/// doubles. Keeps every extreme, in bounded memory.
#[derive(Default)]
struct Envelope {
    t0: Option<f64>,
    width: f64,
    buckets: Vec<Option<(f64, f64)>>,
}

const BUCKETS: usize = 4096;

impl Envelope {
    fn push(&mut self, t: f64, v: f64) {
        let t0 = *self.t0.get_or_insert(t);
        if self.width == 0.0 {
            self.width = 1e-3;
        }
        let mut i = ((t - t0) / self.width).max(0.0) as usize;
        while i >= BUCKETS {
            let merged: Vec<Option<(f64, f64)>> = self
                .buckets
                .chunks(2)
                .map(|p| {
                    p.iter()
                        .flatten()
                        .fold(None, |acc: Option<(f64, f64)>, &(lo, hi)| {
                            Some(acc.map_or((lo, hi), |(a, b)| (a.min(lo), b.max(hi))))
                        })
                })
                .collect();
            self.buckets = merged;
            self.width *= 2.0;
            i = ((t - t0) / self.width).max(0.0) as usize;
        }
        if self.buckets.len() <= i {
            self.buckets.resize(i + 1, None);
        }
        let b = &mut self.buckets[i];
        *b = Some(b.map_or((v, v), |(lo, hi)| (lo.min(v), hi.max(v))));
    }

    fn samples(&self) -> Vec<(f64, f64)> {
        let t0 = self.t0.unwrap_or(0.0);
        self.buckets
            .iter()
            .enumerate()
            .filter_map(|(i, b)| b.map(|(lo, hi)| (i, lo, hi)))
            .flat_map(|(i, lo, hi)| {
                let t = t0 + (i as f64 + 0.5) * self.width;
                [(t, lo), (t, hi)]
            })
            .collect()
    }
}
