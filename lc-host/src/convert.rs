//! Field logs to readings through a unit's calibration image, exactly as
//! the firmware computes them: every row goes through lc-core's `Reader`.

use crate::fieldlog::{FieldLogReader, FieldRow, Measurement};
use crate::stream::{fixed, opt, stream_log, OnBadRow, RowClass, RunError, Summary};
use lc_core::counting::{CountPair, FaultError};
use lc_core::image::Calibration;
use lc_core::reader::{
    Input, LevelReader, ProximityReader, Reader, ReaderError, Reading, SensorFault, Status,
};
use lc_core::shift::ShiftError;
use lc_core::temperature::CentiCelsius;
use std::io::{Read, Write};

/// A stable name for a reading's status, as written in CSV.
pub fn status_name(s: Status) -> &'static str {
    match s {
        Status::Ok => "ok",
        Status::BelowRange => "below_range",
        Status::AboveRange => "above_range",
        Status::NoTarget => "no_target",
        Status::SensorFault(f) => match f {
            SensorFault::Counts(e) | SensorFault::Companion(Some(e)) => match e {
                FaultError::NoOscillation => "fault_no_oscillation",
                FaultError::NoReference => "fault_no_reference",
                FaultError::TooFewCycles => "fault_too_few_cycles",
                FaultError::FrequencyTooLow => "fault_frequency_too_low",
                FaultError::FrequencyTooHigh => "fault_frequency_too_high",
            },
            SensorFault::Companion(None) => "fault_companion_missing",
            SensorFault::Shift(ShiftError::OutOfRange) => "fault_shift_out_of_range",
            SensorFault::Shift(_) => "fault_shift",
            SensorFault::Ratio(_) => "fault_companion_ratio",
            SensorFault::Reference => "fault_reference_dry",
        },
    }
}

/// One converted row, for plots and verification.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Converted {
    /// Input line.
    pub line: u64,
    /// Time stamp, if logged.
    pub time_s: Option<f64>,
    /// The firmware's reading.
    pub reading: Reading,
    /// The f64 reference value, when the reader has a twin and the row is
    /// not a fault.
    pub value_f64: Option<f64>,
}

/// Why a converter could not be built.
#[derive(Debug, thiserror::Error)]
pub enum ConverterError {
    /// The calibration does not form a valid image.
    #[error("the calibration does not form a valid image: {0}")]
    Image(lc_core::image::ImageError),
    /// The image does not form a reader.
    #[error("the image does not form a reader: {0}")]
    Reader(ReaderError),
}

/// The converter: a calibration and the reader built from it.
#[derive(Debug)]
pub struct Converter {
    calibration: Calibration,
    reader: Reader<'static>,
    proximity: Option<ProximityReader<'static>>,
    level: Option<LevelReader<'static>>,
    frequency_gate: u32,
}

impl Converter {
    /// A converter for a calibration.
    pub fn new(calibration: Calibration) -> Result<Self, ConverterError> {
        let image = crate::host_image(&calibration).map_err(ConverterError::Image)?;
        Ok(Self {
            reader: Reader::new(&image).map_err(ConverterError::Reader)?,
            proximity: ProximityReader::new(&image).ok(),
            level: LevelReader::new(&image).ok(),
            frequency_gate: calibration.gate().unwrap_or(16_384),
            calibration,
        })
    }

    /// The calibration.
    pub fn calibration(&self) -> &Calibration {
        &self.calibration
    }

    /// The count pair a row stands for. A logged frequency becomes the pair
    /// a reciprocal gate of the image's length would have counted (ticks
    /// rounded to the nearest whole tick).
    pub fn pair_of(&self, row: &FieldRow) -> CountPair {
        match row.measurement {
            Measurement::Counts(p) => p,
            Measurement::FrequencyHz(f) if f > 0.0 => {
                let ticks =
                    (f64::from(self.frequency_gate) * f64::from(self.calibration.reference_hz) / f)
                        .round();
                CountPair::new(
                    self.frequency_gate,
                    if ticks <= f64::from(u32::MAX) {
                        ticks as u32
                    } else {
                        u32::MAX
                    },
                )
            }
            Measurement::FrequencyHz(_) => CountPair::new(0, 0),
        }
    }

    /// Converts one row (stateful for metal readers, as on the unit).
    pub fn convert(&mut self, row: &FieldRow) -> Converted {
        let input = Input {
            pair: self.pair_of(row),
            companion: row.companion,
            temperature: row.temp_c.and_then(CentiCelsius::from_f64),
            ring_count: row.ring_count,
        };
        let reading = self.reader.read(&input);
        let value_f64 = match reading.status() {
            Status::SensorFault(_) => None,
            _ => match (&self.proximity, &self.level) {
                (Some(p), _) => Some(p.read_f64(&input)),
                (_, Some(l)) => Some(l.read_f64(&input).0),
                _ => None,
            },
        };
        Converted {
            line: row.line,
            time_s: row.time_s,
            reading,
            value_f64,
        }
    }
}

/// The CSV header of [`convert_log`].
pub const OUTPUT_HEADER: &str = "line,time_s,channel,status,value,secondary,shift_ppm";

/// Streams a field log through the converter into CSV. The first line is a
/// comment naming the unit and the value's unit; with `with_f64`, two
/// columns more: the f64 reference value and fixed − reference. `observe`
/// sees every converted row (for plots); `progress` gets the input line
/// every 65 536 rows.
pub fn convert_log<R: Read, W: Write>(
    reader: FieldLogReader<R>,
    mut out: W,
    conv: &mut Converter,
    on_bad_row: OnBadRow,
    with_f64: bool,
    progress: impl FnMut(u64),
    mut observe: impl FnMut(&Converted),
) -> Result<Summary, RunError> {
    let cal = conv.calibration;
    writeln!(
        out,
        "# lc-host convert: unit {}, value in 1e{} {}{}",
        cal.serial.as_str(),
        cal.output.decimal_exponent,
        cal.output.unit.symbol(),
        cal.volume.map_or(String::new(), |(_, s)| format!(
            ", secondary (volume) in 1e{} {}",
            s.decimal_exponent,
            s.unit.symbol()
        ))
    )?;
    let header = if with_f64 {
        format!("{OUTPUT_HEADER},value_f64,diff")
    } else {
        OUTPUT_HEADER.to_string()
    };
    stream_log(reader, out, &header, on_bad_row, progress, |row, out| {
        let c = conv.convert(row);
        let r = c.reading;
        let fault = matches!(r.status(), Status::SensorFault(_));
        write!(
            out,
            "{},{},{},{},{},{},{}",
            row.line,
            opt(row.time_s),
            opt(row.channel),
            status_name(r.status()),
            if fault {
                String::new()
            } else {
                r.output().to_string()
            },
            opt(r.secondary()),
            if fault {
                String::new()
            } else {
                format!(
                    "{:.6}",
                    lc_core::shift::Shift::from_raw_q40(r.curve_input_q40()).to_ppm_f64()
                )
            },
        )?;
        if with_f64 {
            let diff = c.value_f64.map(|v| f64::from(r.output()) - v);
            write!(out, ",{},{}", fixed(c.value_f64, 4), fixed(diff, 4))?;
        }
        observe(&c);
        Ok(match r.status() {
            Status::Ok => RowClass::Ok,
            Status::SensorFault(_) => RowClass::Fault,
            _ => RowClass::OutOfRange,
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::testdata::demo_proximity;
    use std::path::Path;

    #[test]
    fn demo_log_through_the_demo_image() {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-counts.csv");
        let log = std::fs::read(&path).unwrap();
        let reader = FieldLogReader::new(log.as_slice(), &path).unwrap();
        let mut conv = Converter::new(demo_proximity().unwrap()).unwrap();
        let mut out = Vec::new();
        let mut seen = 0;
        let s = convert_log(
            reader,
            &mut out,
            &mut conv,
            OnBadRow::Stop,
            true,
            |_| {},
            |_| seen += 1,
        )
        .unwrap();
        assert_eq!((s.rows, seen), (201, 201));
        let text = String::from_utf8(out).unwrap();
        assert!(text.starts_with("# lc-host convert: unit DEMO-01-0007, value in 1e-6 m\nline,"));
        assert!(text.contains(",fault_no_oscillation,") && text.contains(",fault_no_reference,"));
    }

    #[test]
    fn frequency_rows_become_gate_counts() {
        let conv = Converter::new(demo_proximity().unwrap()).unwrap();
        let row = FieldRow {
            line: 2,
            time_s: None,
            channel: None,
            measurement: Measurement::FrequencyHz(5_635_789.8),
            temp_c: None,
            ring_count: None,
            companion: None,
        };
        // 16 384 cycles at 48 MHz: the demo rest point's ticks.
        assert_eq!(conv.pair_of(&row), CountPair::new(16_384, 139_542));
        let dead = FieldRow {
            measurement: Measurement::FrequencyHz(0.0),
            ..row
        };
        assert_eq!(conv.pair_of(&dead), CountPair::new(0, 0));
    }
}
