//! Field logs to readings through a unit's calibration image, exactly as
//! the firmware computes them: every row goes through lc-core's `Reader`.

use crate::csvout::{push_fixed, push_fixed_opt, push_int, push_int_opt, push_shortest_opt};
use crate::fieldlog::{FieldLogReader, FieldRow, Measurement};
use crate::stream::{stream_log, OnBadRow, RowClass, RunError, Summary, Threads};
use lc_core::counting::{CountPair, FaultError};
use lc_core::image::Calibration;
use lc_core::reader::{
    Input, LevelReader, ProximityReader, Reader, ReaderError, Reading, SensorFault, Status,
};
use lc_core::shift::ShiftError;
use lc_core::temperature::CentiCelsius;
use std::collections::BTreeMap;
use std::io::{Read, Write};

/// The status word of a frozen counter, in `convert` and `counts` alike.
pub const FAULT_FROZEN: &str = "fault_counter_frozen";

/// A logged temperature as the reader's input: a value beyond the `i32`
/// range of hundredths of a degree, or not a number, becomes the nearest
/// end of that range, so that the reader flags it as outside the drift
/// model's domain instead of reading without a temperature.
pub fn temperature_input(temp_c: f64) -> CentiCelsius {
    CentiCelsius::from_f64(temp_c).unwrap_or(if temp_c > 0.0 {
        CentiCelsius(i32::MAX)
    } else {
        CentiCelsius(i32::MIN)
    })
}

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
            SensorFault::ReferenceLow => "fault_reference_low",
            SensorFault::OutOfReach => "fault_out_of_reach",
            SensorFault::Frozen => FAULT_FROZEN,
            SensorFault::TemperatureOutOfDomain => "fault_temperature_out_of_domain",
            SensorFault::TemperatureMissing => "fault_temperature_missing",
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
    /// not a fault ([`Converter::convert`], and [`convert_log`] with
    /// `with_f64`).
    pub value_f64: Option<f64>,
}

/// The converter: calibration images and one reader per channel built
/// from them. Every channel keeps its own reader, so a stateful reader
/// (metal: baseline, detector) sees only its own channel's rows, in order,
/// as on a unit with one reader per channel.
#[derive(Debug)]
pub struct Converter {
    twins: Vec<Twin>,
    /// A reader built from each image, cloned for each channel.
    readers: Vec<Reader<'static>>,
    /// Channel → image, where given.
    by_channel: BTreeMap<u8, usize>,
    /// The image of every other channel, if any.
    default: Option<usize>,
    /// The live readers, by channel slot ([`slot`]).
    live: Vec<Option<Box<Reader<'static>>>>,
}

/// Channel slots: 0–255, and one for rows without a channel.
const SLOTS: usize = 257;

fn slot(channel: Option<u8>) -> usize {
    channel.map_or(SLOTS - 1, usize::from)
}

/// Why a per-channel converter could not be built.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum SetupError {
    /// No image at all.
    #[error("no calibration image: give --image, or --channel-image CH=IMAGE per channel")]
    NoImage,
    /// A channel is mapped twice.
    #[error("channel {0} is given two images; give one per channel")]
    Twice(u8),
    /// A calibration does not form a valid image.
    #[error("{}: not a valid image: {error}", channel.map_or("the image".to_string(), |c| format!("the image of channel {c}")))]
    Image {
        /// The channel (`None`: the default image).
        channel: Option<u8>,
        /// Why.
        error: lc_core::image::ImageError,
    },
    /// An image builds no reader.
    #[error("{}: {error}", channel.map_or("the image".to_string(), |c| format!("the image of channel {c}")))]
    Reader {
        /// The channel (`None`: the default image).
        channel: Option<u8>,
        /// Why.
        error: ReaderError,
    },
}

/// What a row needs besides the stateful reader: the calibration, the
/// gate for logged frequencies, and the `f64` reference readers. Shared by
/// the formatting threads.
#[derive(Debug)]
struct Twin {
    calibration: Calibration,
    proximity: Option<ProximityReader<'static>>,
    level: Option<LevelReader<'static>>,
    frequency_gate: u32,
}

impl Twin {
    fn pair_of(&self, row: &FieldRow) -> CountPair {
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

    fn input_of(&self, row: &FieldRow) -> Input {
        Input {
            pair: self.pair_of(row),
            companion: row.companion,
            temperature: row.temp_c.map(temperature_input),
            ring_count: row.ring_count,
        }
    }

    /// The f64 reference value of a reading that is not a fault.
    fn reference(&self, row: &FieldRow, reading: &Reading) -> Option<f64> {
        match reading.status() {
            Status::SensorFault(_) => None,
            _ => match (&self.proximity, &self.level) {
                (Some(p), _) => Some(p.read_f64(&self.input_of(row))),
                (_, Some(l)) => Some(l.read_f64(&self.input_of(row)).0),
                _ => None,
            },
        }
    }
}

impl Converter {
    /// A converter with one image for every channel (each channel still
    /// has its own reader).
    pub fn new(calibration: Calibration) -> Result<Self, SetupError> {
        Self::per_channel(Some(calibration), &[])
    }

    /// A converter with an image per channel (`channels`), and `default`
    /// for every channel not listed. Without a default, a row of an
    /// unlisted channel is an error naming it ([`RunError::NoImage`]).
    pub fn per_channel(
        default: Option<Calibration>,
        channels: &[(u8, Calibration)],
    ) -> Result<Self, SetupError> {
        let mut conv = Self {
            twins: Vec::new(),
            readers: Vec::new(),
            by_channel: BTreeMap::new(),
            default: None,
            live: (0..SLOTS).map(|_| None).collect(),
        };
        let images = default
            .map(|c| (None, c))
            .into_iter()
            .chain(channels.iter().map(|&(ch, c)| (Some(ch), c)));
        for (channel, calibration) in images {
            let image = crate::host_image(&calibration)
                .map_err(|error| SetupError::Image { channel, error })?;
            let reader =
                Reader::new(&image).map_err(|error| SetupError::Reader { channel, error })?;
            let k = conv.twins.len();
            conv.readers.push(reader);
            conv.twins.push(Twin {
                proximity: ProximityReader::new(&image).ok(),
                level: LevelReader::new(&image).ok(),
                frequency_gate: calibration.gate().unwrap_or(16_384),
                calibration,
            });
            match channel {
                None => conv.default = Some(k),
                Some(ch) => {
                    if conv.by_channel.insert(ch, k).is_some() {
                        return Err(SetupError::Twice(ch));
                    }
                }
            }
        }
        if conv.twins.is_empty() {
            return Err(SetupError::NoImage);
        }
        Ok(conv)
    }

    /// The calibration of every channel without its own image, or else the
    /// first channel's.
    pub fn calibration(&self) -> &Calibration {
        &self.twins[self.default.unwrap_or(0)].calibration
    }

    /// The image (index) of a channel.
    fn image_of(&self, channel: Option<u8>) -> Option<usize> {
        image_of(&self.by_channel, self.default, channel)
    }

    /// The count pair a row stands for. A logged frequency becomes the pair
    /// a reciprocal gate of the image's length would have counted (ticks
    /// rounded to the nearest whole tick).
    pub fn pair_of(&self, row: &FieldRow) -> CountPair {
        self.twins[self.image_of(row.channel).unwrap_or(0)].pair_of(row)
    }

    /// Converts one row through its channel's reader (stateful for metal
    /// readers, as on the unit), with the f64 reference value; `None` when
    /// the channel has no image.
    pub fn try_convert(&mut self, row: &FieldRow) -> Option<Converted> {
        let k = self.image_of(row.channel)?;
        let twin = &self.twins[k];
        let readers = &self.readers;
        let reader =
            self.live[slot(row.channel)].get_or_insert_with(|| Box::new(readers[k].clone()));
        let reading = reader.read(&twin.input_of(row));
        Some(Converted {
            line: row.line,
            time_s: row.time_s,
            reading,
            value_f64: twin.reference(row, &reading),
        })
    }

    /// [`Converter::try_convert`] for a converter with an image for every
    /// channel ([`Converter::new`]); a row of a channel without an image
    /// goes through the first image given.
    pub fn convert(&mut self, row: &FieldRow) -> Converted {
        match self.try_convert(row) {
            Some(c) => c,
            None => {
                let twin = &self.twins[0];
                let readers = &self.readers;
                let reader = self.live[slot(row.channel)]
                    .get_or_insert_with(|| Box::new(readers[0].clone()));
                let reading = reader.read(&twin.input_of(row));
                Converted {
                    line: row.line,
                    time_s: row.time_s,
                    reading,
                    value_f64: twin.reference(row, &reading),
                }
            }
        }
    }
}

fn image_of(
    by_channel: &BTreeMap<u8, usize>,
    default: Option<usize>,
    channel: Option<u8>,
) -> Option<usize> {
    channel
        .and_then(|c| by_channel.get(&c).copied())
        .or(default)
}

/// The CSV header of [`convert_log`].
pub const OUTPUT_HEADER: &str = "line,time_s,channel,status,value,secondary,shift_ppm";

/// Streams a field log through the converter into CSV. The first line is a
/// comment naming the unit and the value's unit; with `with_f64`, two
/// columns more: the f64 reference value and fixed − reference. `observe`
/// sees every converted row in input order (for plots; `value_f64` only
/// with `with_f64`); `progress` gets the input line every 65 536 rows.
/// Rows are parsed and formatted on one thread per core (at most
/// [`crate::stream::MAX_THREADS`]); [`convert_log_threads`] chooses.
pub fn convert_log<R: Read, W: Write>(
    reader: FieldLogReader<R>,
    out: W,
    conv: &mut Converter,
    on_bad_row: OnBadRow,
    with_f64: bool,
    progress: impl FnMut(u64),
    observe: impl FnMut(&Converted),
) -> Result<Summary, RunError> {
    convert_log_threads(
        reader,
        out,
        conv,
        on_bad_row,
        with_f64,
        Threads::default(),
        progress,
        observe,
    )
}

/// [`convert_log`] on `threads` threads: rows are parsed and formatted in
/// parallel blocks; the reader sees them one at a time in input order, as
/// on the unit, and the output keeps the input's order. The output does not
/// depend on the thread count.
#[allow(clippy::too_many_arguments)]
pub fn convert_log_threads<R: Read, W: Write>(
    reader: FieldLogReader<R>,
    mut out: W,
    conv: &mut Converter,
    on_bad_row: OnBadRow,
    with_f64: bool,
    threads: Threads,
    progress: impl FnMut(u64),
    mut observe: impl FnMut(&Converted),
) -> Result<Summary, RunError> {
    let unit_line = |cal: &Calibration| {
        format!(
            "unit {}, value in 1e{} {}{}",
            cal.serial.as_str(),
            cal.output.decimal_exponent,
            cal.output.unit.symbol(),
            cal.volume.map_or(String::new(), |(_, s)| format!(
                ", secondary (volume) in 1e{} {}",
                s.decimal_exponent,
                s.unit.symbol()
            ))
        )
    };
    if let Some(k) = conv.default {
        let prefix = if conv.by_channel.is_empty() {
            ""
        } else {
            "other channels: "
        };
        writeln!(
            out,
            "# lc-host convert: {prefix}{}",
            unit_line(&conv.twins[k].calibration)
        )?;
    }
    for (ch, &k) in &conv.by_channel {
        writeln!(
            out,
            "# lc-host convert: channel {ch}: {}",
            unit_line(&conv.twins[k].calibration)
        )?;
    }
    let header = if with_f64 {
        format!("{OUTPUT_HEADER},value_f64,diff")
    } else {
        OUTPUT_HEADER.to_string()
    };
    let Converter {
        twins,
        readers,
        by_channel,
        default,
        live,
    } = conv;
    let (twins, readers, by_channel, default) = (&*twins, &*readers, &*by_channel, *default);
    stream_log(
        reader,
        out,
        &header,
        on_bad_row,
        threads,
        |row| {
            let k = image_of(by_channel, default, row.channel)?;
            let unit = live[slot(row.channel)].get_or_insert_with(|| Box::new(readers[k].clone()));
            Some((unit.read(&twins[k].input_of(row)), None::<f64>, k))
        },
        |row, state: &mut Option<(Reading, Option<f64>, usize)>, out| {
            let Some((r, value_f64, k)) = state else {
                return Err(RunError::NoImage {
                    line: row.line,
                    channel: row.channel,
                });
            };
            let twin = &twins[*k];
            let fault = matches!(r.status(), Status::SensorFault(_));
            push_int(out, row.line);
            out.push(b',');
            push_shortest_opt(out, row.time_s);
            out.push(b',');
            push_int_opt(out, row.channel);
            out.push(b',');
            out.extend_from_slice(status_name(r.status()).as_bytes());
            out.push(b',');
            if !fault {
                push_int(out, r.output());
            }
            out.push(b',');
            push_int_opt(out, r.secondary());
            out.push(b',');
            if !fault {
                push_fixed(
                    out,
                    lc_core::shift::Shift::from_raw_q40(r.curve_input_q40()).to_ppm_f64(),
                    6,
                );
            }
            if with_f64 {
                *value_f64 = twin.reference(row, r);
                let diff = value_f64.map(|v| f64::from(r.output()) - v);
                out.push(b',');
                push_fixed_opt(out, *value_f64, 4);
                out.push(b',');
                push_fixed_opt(out, diff, 4);
            }
            Ok(match r.status() {
                Status::Ok => RowClass::Ok,
                Status::SensorFault(_) => RowClass::Fault,
                _ => RowClass::OutOfRange,
            })
        },
        progress,
        |row, state| {
            if let Some((reading, value_f64, _)) = *state {
                observe(&Converted {
                    line: row.line,
                    time_s: row.time_s,
                    reading,
                    value_f64,
                })
            }
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::testdata::demo_proximity;
    use std::io::Write;
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

    /// The straightforward conversion: the row iterator, one row at a time
    /// through `Converter::convert`, every field through `std::fmt`. The
    /// parallel path must give exactly these bytes.
    fn reference_output(cal: Calibration, log: &[u8], with_f64: bool) -> (Vec<u8>, Summary) {
        let reader = FieldLogReader::new(log, Path::new("log.csv")).unwrap();
        let mut conv = Converter::new(cal).unwrap();
        let mut out = Vec::new();
        let mut summary = Summary::default();
        let opt = |v: Option<i32>| v.map_or(String::new(), |v| v.to_string());
        let fixed = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v:.4}"));
        for row in reader {
            let row = match row {
                Ok(row) => row,
                Err(e) => {
                    summary.skipped += 1;
                    summary.first_skip.get_or_insert_with(|| e.to_string());
                    continue;
                }
            };
            let c = conv.convert(&row);
            let r = c.reading;
            let fault = matches!(r.status(), Status::SensorFault(_));
            write!(
                out,
                "{},{},{},{},{},{},{}",
                row.line,
                row.time_s.map_or(String::new(), |t| t.to_string()),
                row.channel.map_or(String::new(), |c| c.to_string()),
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
            )
            .unwrap();
            if with_f64 {
                let diff = c.value_f64.map(|v| f64::from(r.output()) - v);
                write!(out, ",{},{}", fixed(c.value_f64), fixed(diff)).unwrap();
            }
            out.push(b'\n');
            summary.rows += 1;
            match r.status() {
                Status::Ok => summary.ok += 1,
                Status::SensorFault(_) => summary.faults += 1,
                _ => summary.out_of_range += 1,
            }
        }
        (out, summary)
    }

    /// A simulated log of the demo unit with every fault the simulator
    /// injects, at least three blocks long, with hand-made lines mixed in:
    /// comments, blank lines, CRLF ends, quoted and padded fields, unusual
    /// number spellings, bad rows, frequencies-free count rows.
    fn hostile_log() -> Vec<u8> {
        use crate::sim::field::{write_field_log, Fault, FaultKind, FieldSpec};
        use crate::sim::rig::{units, LotSpec};
        let unit = units(&LotSpec::demo("DEMO-01", 7, 1)).pop().unwrap();
        let mut spec = FieldSpec::demo(unit, 8);
        spec.duration_s = 6_000.0;
        spec.faults = [
            (FaultKind::OpenCoil, 100.0, 2.0),
            (FaultKind::ShortedCoil, 900.0, 3.0),
            (FaultKind::Dropouts, 1_500.0, 60.0),
            (FaultKind::StuckCounter, 4_000.0, 1.0),
        ]
        .map(|(kind, at_s, duration_s)| Fault {
            kind,
            at_s,
            duration_s,
        })
        .to_vec();
        let mut log = Vec::new();
        write_field_log(&spec, &mut log).unwrap();
        let text = String::from_utf8(log).unwrap();
        let mut out = String::new();
        for (i, line) in text.lines().enumerate() {
            out.push_str(line);
            out.push_str(if i % 7_919 == 5 { "\r\n" } else { "\n" });
            match i % 9_973 {
                100 => out.push_str("# a comment in the middle\n\n"),
                200 => out.push_str(" 12.5 , 3 ,\"16384\", 139542 ,\"25\"\n"),
                300 => out.push_str("1e1,,16384,139000,-0\n+7.25,255,16384,139000,1e-3\n"),
                400 => out.push_str("x,0,16384,139542,25\n1,0,16384,\"13\"\"9\",25\n"),
                500 => out.push_str("0.30000000000000004,0,0,0,\n"),
                _ => {}
            }
        }
        out.into_bytes()
    }

    #[test]
    fn parallel_output_is_byte_identical_to_the_plain_path() {
        let log = hostile_log();
        assert!(log.len() > 10 * 131_072, "{} bytes", log.len());
        for image in ["demo-proximity-tc", "demo-metal", "demo-level"] {
            let path = Path::new(env!("CARGO_MANIFEST_DIR"))
                .join(format!("../examples/firmware/data/{image}.lcim"));
            let bytes = std::fs::read(&path).unwrap();
            let cal = Calibration::parse(&bytes).unwrap();
            for with_f64 in [false, true] {
                let (want, want_summary) = reference_output(cal, &log, with_f64);
                assert!(
                    want_summary.faults > 0 && want_summary.ok > 0 || image != "demo-proximity-tc"
                );
                assert!(want_summary.skipped >= 2);
                for threads in 1..=4 {
                    let reader = FieldLogReader::new(log.as_slice(), Path::new("log.csv")).unwrap();
                    let mut conv = Converter::new(cal).unwrap();
                    let mut out = Vec::new();
                    let mut lines = Vec::new();
                    let summary = convert_log_threads(
                        reader,
                        &mut out,
                        &mut conv,
                        OnBadRow::Skip,
                        with_f64,
                        Threads::new(threads).unwrap(),
                        |_| {},
                        |c| lines.push(c.line),
                    )
                    .unwrap();
                    let body = out.splitn(3, |&b| b == b'\n').nth(2).unwrap();
                    assert!(
                        body == want.as_slice(),
                        "{image}, float {with_f64}, {threads} threads: first difference at byte {}",
                        body.iter()
                            .zip(&want)
                            .position(|(a, b)| a != b)
                            .unwrap_or(body.len().min(want.len()))
                    );
                    assert_eq!(summary, want_summary, "{image} {threads}");
                    assert!(
                        lines.windows(2).all(|w| w[0] < w[1]),
                        "rows observed in order"
                    );
                    assert_eq!(lines.len() as u64, summary.rows);
                }
            }
        }
    }

    #[test]
    fn a_bad_row_stops_the_run_after_the_rows_before_it() {
        let mut log = hostile_log();
        // A bad row far down: several blocks are converted before it.
        let at = log.len() / 2;
        let cut = at + log[at..].iter().position(|&b| b == b'\n').unwrap() + 1;
        log.splice(cut..cut, b"1,0,16384,oops,25\n".iter().copied());
        let bad_line = log[..cut].iter().filter(|&&b| b == b'\n').count() + 1;
        let text = std::str::from_utf8(&log)
            .unwrap()
            .replace("x,0,", "0,0,")
            .replace("\"13\"\"9\"", "139");
        for threads in [1, 3] {
            let reader = FieldLogReader::new(text.as_bytes(), Path::new("log.csv")).unwrap();
            let mut conv = Converter::new(demo_proximity().unwrap()).unwrap();
            let mut seen = 0u64;
            let e = convert_log_threads(
                reader,
                Vec::new(),
                &mut conv,
                OnBadRow::Stop,
                false,
                Threads::new(threads).unwrap(),
                |_| {},
                |_| seen += 1,
            )
            .unwrap_err();
            assert!(
                e.to_string()
                    .contains(&format!("log.csv: line {bad_line}: field `ticks`")),
                "{e}"
            );
            assert!(seen > 25_000, "{seen} rows before the bad one");
        }
    }

    /// Issue 19, item 3: a two-channel metal log went through one stateful
    /// reader. Each channel now converts as if logged alone.
    #[test]
    fn each_channel_has_its_own_reader() {
        let path =
            Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/firmware/data/demo-metal.lcim");
        let cal = Calibration::parse(&std::fs::read(path).unwrap()).unwrap();
        let rest = cal.rest.to_f64();
        let gate = cal.gate().unwrap_or(4096);
        let row = |i: u32, ticks_off: f64| {
            format!(
                "{},{},{}\n",
                i % 2,
                gate,
                (f64::from(gate) * rest * (1.0 + ticks_off)).round()
            )
        };
        // Channel 0 at rest, channel 1 with a target coming and going.
        let mut both = String::from("channel,cycles,ticks\n");
        let mut alone = [
            String::from("channel,cycles,ticks\n"),
            String::from("channel,cycles,ticks\n"),
        ];
        for i in 0..2_000u32 {
            let off = if i % 2 == 0 {
                0.0
            } else if (i / 200) % 2 == 1 {
                -0.02
            } else {
                0.0
            };
            let r = row(i, off);
            both.push_str(&r);
            alone[(i % 2) as usize].push_str(&r);
        }
        let run = |text: &str| {
            let reader = FieldLogReader::new(text.as_bytes(), Path::new("m.csv")).unwrap();
            let mut conv = Converter::new(cal).unwrap();
            let mut readings = Vec::new();
            convert_log_threads(
                reader,
                Vec::new(),
                &mut conv,
                OnBadRow::Stop,
                false,
                Threads::new(2).unwrap(),
                |_| {},
                |c| readings.push(c.reading),
            )
            .unwrap();
            readings
        };
        let mixed = run(&both);
        // One reader for both (the channel column dropped) reads otherwise:
        // the test can fail.
        let one: String = both
            .lines()
            .map(|l| format!("{}\n", &l[l.find(',').unwrap() + 1..]))
            .collect();
        assert_ne!(
            run(&format!("channel,{one}").replacen("channel,cycles", "cycles", 1)),
            mixed
        );
        for (ch, alone) in alone.iter().enumerate() {
            let own: Vec<_> = mixed.iter().skip(ch).step_by(2).copied().collect();
            assert_eq!(own, run(alone), "channel {ch}");
        }
    }

    #[test]
    fn a_channel_without_an_image_is_named() {
        let cal = demo_proximity().unwrap();
        let log = "channel,cycles,ticks\n0,16384,139542\n0,16384,139542\n7,16384,139542\n";
        let reader = FieldLogReader::new(log.as_bytes(), Path::new("c.csv")).unwrap();
        let mut conv = Converter::per_channel(None, &[(0, cal)]).unwrap();
        let mut out = Vec::new();
        let e = convert_log_threads(
            reader,
            &mut out,
            &mut conv,
            OnBadRow::Stop,
            false,
            Threads::new(1).unwrap(),
            |_| {},
            |_| {},
        )
        .unwrap_err();
        assert!(
            e.to_string().contains(
                "line 4: channel 7 has no calibration image: map it with `--channel-image 7=IMAGE`"
            ),
            "{e}"
        );
        let text = String::from_utf8(out).unwrap();
        assert!(
            text.starts_with("# lc-host convert: channel 0: unit DEMO-01-0007"),
            "{text}"
        );
        assert_eq!(text.lines().count(), 4, "the two rows before it: {text}");
        assert_eq!(
            Converter::per_channel(None, &[]).unwrap_err(),
            SetupError::NoImage
        );
        assert_eq!(
            Converter::per_channel(None, &[(1, cal), (1, cal)]).unwrap_err(),
            SetupError::Twice(1)
        );
    }

    #[test]
    fn thread_counts_are_bounded() {
        assert!(Threads::new(0).is_err() && Threads::new(17).is_err());
        assert!(Threads::new(1).is_ok() && Threads::new(16).is_ok());
        assert!(Threads::new(0)
            .unwrap_err()
            .to_string()
            .contains("give 1 to 16"));
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
