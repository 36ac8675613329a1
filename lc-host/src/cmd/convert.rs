//! `lc-host convert`: a field log to readings, as the firmware computes them.

use super::counts::{report, BadRow};
use super::{load_image, open_input, spinner, with_output};
use anyhow::{anyhow, Result};
use lc_host::convert::{convert_log_keeping, Converter, SetupError};
use lc_host::fieldlog::FieldLogReader;
use lc_host::stream::{Threads, MAX_THREADS};
use lc_host::svg::{Quantity, TracePlot};
use std::path::PathBuf;

/// Convert a field log into readings through a unit's calibration image
///
/// Every row goes through exactly the code the firmware runs (lc-core's reader: fault
/// window, shift, drift model, curve), so the CSV holds the readings the unit itself would
/// have produced, bit for bit, with their status (ok, below_range, above_range, no_target,
/// or the sensor fault: fault_...). The input is a field log with count pairs (`cycles`,
/// `ticks`) or frequencies (`frequency_hz`), optional `time_s`, `channel`, `temp_c`,
/// `ring_count` and companion counts (`comp_cycles`, `comp_ticks`). The output's columns
/// are named for what they hold, in physical units: `gap_m` and `shift_ppm` (proximity);
/// `level_m`, `volume_l` and `ratio` or `shift_ppm` (level); `class` (none, ferrous,
/// non_ferrous), `ring_drop` and `delta_ppm` (metal). Comment lines (`#`) name each unit
/// and hold no commas. Every column: docs/formats.md. Memory stays bounded (a few MiB per
/// thread) whatever the log's size.
///
/// Example:
///
///   lc-host convert field.csv --image unit.lcim --output readings.csv --float
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Calibration image of the unit that logged the data: of every channel
    /// without its own --channel-image. Each channel has its own reader
    #[arg(long, required_unless_present = "channel_image")]
    image: Option<PathBuf>,
    /// The image of one channel, CH=IMAGE (repeatable), for a log of
    /// several units. A row of a channel without an image (and no --image)
    /// stops the run with its line and channel
    #[arg(long, value_name = "CH=IMAGE", value_parser = parse_channel_image)]
    channel_image: Vec<(u8, PathBuf)>,
    /// Field log to read, or `-` for standard input (`--input FILE` still
    /// works, for older scripts)
    #[arg(value_name = "FIELD_LOG")]
    input: PathBuf,
    /// Output CSV; standard output when absent or `-`. A file is written
    /// whole or not at all
    #[arg(short, long)]
    output: Option<PathBuf>,
    /// Add the f64 reference value and the difference fixed - f64 (proximity
    /// and level; a metal class has no f64 twin)
    #[arg(long)]
    float: bool,
    /// Pass the input's other columns (not field-log columns) through, as
    /// logged, after the output's own
    #[arg(long)]
    keep_columns: bool,
    /// What to do with a row that does not parse
    #[arg(long, value_enum, default_value_t = BadRow::Stop)]
    on_bad_row: BadRow,
    /// Also write an SVG trace of the reading against time (faults marked;
    /// with --float the f64 reference too)
    #[arg(long, value_name = "SVG")]
    plot: Option<PathBuf>,
    /// Worker threads, 1 to 16 (default: one per core). Rows are parsed and
    /// formatted in parallel blocks; the reader sees them in logged order,
    /// and the output is the same for any count
    #[arg(long, value_name = "N", value_parser = parse_threads)]
    threads: Option<Threads>,
}

fn parse_channel_image(s: &str) -> Result<(u8, PathBuf), String> {
    let (ch, path) = s
        .split_once('=')
        .ok_or_else(|| format!("{s:?}: expected CH=IMAGE, for example 1=unit-b.lcim"))?;
    let ch = ch
        .trim()
        .parse()
        .map_err(|_| format!("{ch:?} is not a channel number from 0 to 255"))?;
    Ok((ch, PathBuf::from(path)))
}

fn parse_threads(s: &str) -> Result<Threads, String> {
    let n: usize = s
        .trim()
        .parse()
        .map_err(|_| format!("{s:?} is not a whole number; give 1 to {MAX_THREADS}"))?;
    Threads::new(n).map_err(|e| e.to_string())
}

pub fn run(a: Args) -> Result<()> {
    let images: Vec<&PathBuf> = a
        .image
        .iter()
        .chain(a.channel_image.iter().map(|(_, p)| p))
        .collect();
    for out in [&a.output, &a.plot].into_iter().flatten() {
        lc_host::atomic::refuse_same_file(&a.input, out)?;
        for image in &images {
            lc_host::atomic::refuse_same_file(image, out)?;
        }
    }
    let default = a.image.as_deref().map(load_image).transpose()?;
    let channels = a
        .channel_image
        .iter()
        .map(|(ch, p)| load_image(p).map(|cal| (*ch, cal)))
        .collect::<Result<Vec<_>>>()?;
    let mut conv = Converter::per_channel(default, &channels).map_err(|e| match &e {
        SetupError::Reader { channel, error } => {
            let path = match channel {
                None => a.image.as_deref(),
                Some(ch) => a
                    .channel_image
                    .iter()
                    .find(|(c, _)| c == ch)
                    .map(|(_, p)| p.as_path()),
            };
            anyhow!(
                "{}: {error}",
                path.map_or(String::new(), |p| p.display().to_string())
            )
        }
        _ => anyhow!("{e}"),
    })?;
    let cal = *conv.calibration();
    let reader = FieldLogReader::new(open_input(&a.input, "field log")?, &a.input)?;
    for w in reader.warnings() {
        eprintln!("warning: {w}");
    }
    let bar = spinner("{spinner} {pos} lines ({per_sec}) {elapsed}");
    // The trace keeps a min/max envelope of bounded size, so memory stays
    // constant whatever the log's length.
    let mut trace = a.plot.as_ref().map(|_| Trace::default());
    let summary = with_output(a.output.as_deref(), |w| {
        Ok(convert_log_keeping(
            reader,
            w,
            &mut conv,
            a.on_bad_row.into(),
            a.float,
            a.keep_columns,
            a.threads.unwrap_or_default(),
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
