//! Field logs to readings through a unit's calibration image, exactly as
//! the firmware computes them: every row goes through lc-core's `Reader`.

use crate::csvout::{
    push_fixed, push_int, push_int_opt, push_scaled, push_scaled_f64, push_shortest_opt,
};
use crate::fieldlog::{FieldLogReader, FieldRow, Measurement};
use crate::stream::{stream_log, OnBadRow, RowClass, RunError, Summary, Threads};
use lc_core::counting::CountPair;
use lc_core::image::{Calibration, OutputUnit, ReaderKind};
use lc_core::reader::{
    Input, LevelReader, MetalClass, ProximityReader, Reader, ReaderError, Reading, Status,
};
use lc_core::temperature::CentiCelsius;
use std::collections::BTreeMap;
use std::io::{Read, Write};

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

/// A stable name for a reading's status, as written in CSV: the project's
/// one vocabulary ([`crate::status::status_word`]).
pub fn status_name(s: Status) -> &'static str {
    crate::status::status_word(s)
}

/// A metal class's name, as written in CSV.
pub fn class_name(c: MetalClass) -> &'static str {
    match c {
        MetalClass::None => "none",
        MetalClass::Ferrous => "ferrous",
        MetalClass::NonFerrous => "non_ferrous",
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

/// The `f64` twin of a reader, for the reference value: the reader of the
/// image's own kind (metal has none: its class is a decision, not a
/// value).
#[derive(Debug)]
enum F64Twin {
    Proximity(ProximityReader<'static>),
    Level(LevelReader<'static>),
    None,
}

/// What a row needs besides the stateful reader: the calibration, the
/// gate for logged frequencies, and the `f64` reference reader. Shared by
/// the formatting threads.
#[derive(Debug)]
struct Twin {
    calibration: Calibration,
    f64_twin: F64Twin,
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
            _ => match &self.f64_twin {
                F64Twin::Proximity(p) => Some(p.read_f64(&self.input_of(row))),
                F64Twin::Level(l) => Some(l.read_f64(&self.input_of(row)).0),
                F64Twin::None => None,
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
            let f64_twin = match calibration.kind {
                ReaderKind::Proximity => ProximityReader::new(&image).map(F64Twin::Proximity),
                ReaderKind::Level => LevelReader::new(&image).map(F64Twin::Level),
                ReaderKind::Metal => Ok(F64Twin::None),
            }
            .map_err(|error| SetupError::Reader { channel, error })?;
            conv.twins.push(Twin {
                f64_twin,
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

/// What an output column of [`convert_log`] holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Field {
    /// The reading (gap, level) in its unit: raw · 10^exp.
    Value(i8),
    /// A level's volume in its unit: raw · 10^exp.
    Volume(i8),
    /// The drift-compensated shift the curve was read at, ppm.
    ShiftPpm,
    /// The probe / reference-electrode ratio the curve was read at.
    Ratio,
    /// The metal class's name.
    Class,
    /// The metal reader's ring-count drop.
    RingDrop,
    /// Metal: shift − baseline, ppm.
    DeltaPpm,
    /// The `f64` reference of the value, in its unit.
    ValueF64(i8),
    /// The value minus its `f64` reference, in its unit.
    Diff(i8),
}

/// The suffix of a column holding values in `unit`.
fn unit_suffix(unit: OutputUnit) -> &'static str {
    match unit {
        OutputUnit::None => "",
        OutputUnit::Metre => "_m",
        OutputUnit::Litre => "_l",
        OutputUnit::Percent => "_percent",
    }
}

/// The columns an image's readings fill, named for what they hold.
fn product_columns(cal: &Calibration, with_f64: bool) -> Vec<(String, Field)> {
    let exp = cal.output.decimal_exponent;
    let value = |name: &str| format!("{name}{}", unit_suffix(cal.output.unit));
    let with_twin = |mut cols: Vec<(String, Field)>, name: String| {
        if with_f64 {
            cols.push((format!("{name}_f64"), Field::ValueF64(exp)));
            cols.push((format!("{name}_diff"), Field::Diff(exp)));
        }
        cols
    };
    match cal.kind {
        ReaderKind::Proximity => {
            let name = value("gap");
            with_twin(
                vec![
                    (name.clone(), Field::Value(exp)),
                    ("shift_ppm".to_string(), Field::ShiftPpm),
                ],
                name,
            )
        }
        ReaderKind::Level => {
            let name = value("level");
            let mut cols = vec![(name.clone(), Field::Value(exp))];
            if let Some((_, scale)) = cal.volume {
                cols.push((
                    format!("volume{}", unit_suffix(scale.unit)),
                    Field::Volume(scale.decimal_exponent),
                ));
            }
            cols.push(match cal.companion_rest {
                Some(_) => ("ratio".to_string(), Field::Ratio),
                None => ("shift_ppm".to_string(), Field::ShiftPpm),
            });
            with_twin(cols, name)
        }
        ReaderKind::Metal => vec![
            ("class".to_string(), Field::Class),
            ("ring_drop".to_string(), Field::RingDrop),
            ("delta_ppm".to_string(), Field::DeltaPpm),
        ],
    }
}

/// The columns every row of [`convert_log`] starts with.
pub const FIRST_COLUMNS: &str = "line,time_s,channel,status";

/// A comment line's text with nothing a CSV reader could take for a field
/// separator or a quote (a serial may hold any printable character).
fn comment_text(text: &str) -> String {
    text.chars()
        .map(|c| {
            if matches!(c, ',' | ';' | '\t' | '"') {
                '_'
            } else {
                c
            }
        })
        .collect()
}

/// The output layout of one run: the union of the images' columns, and for
/// each image which of them its rows fill.
struct Layout {
    /// Column names after [`FIRST_COLUMNS`], then the kept input columns.
    names: Vec<String>,
    /// Per image: one entry per column of `names` (product columns only).
    fields: Vec<Vec<Option<Field>>>,
}

impl Layout {
    fn new(conv: &Converter, with_f64: bool) -> Self {
        let per_image: Vec<Vec<(String, Field)>> = conv
            .twins
            .iter()
            .map(|t| product_columns(&t.calibration, with_f64))
            .collect();
        // In image order: the default image first, then by channel.
        let mut order: Vec<usize> = conv.default.into_iter().collect();
        order.extend(conv.by_channel.values().copied());
        let mut names: Vec<String> = Vec::new();
        for &k in &order {
            for (name, _) in &per_image[k] {
                if !names.contains(name) {
                    names.push(name.clone());
                }
            }
        }
        let fields = per_image
            .iter()
            .map(|cols| {
                names
                    .iter()
                    .map(|n| cols.iter().find(|(c, _)| c == n).map(|&(_, f)| f))
                    .collect()
            })
            .collect();
        Self { names, fields }
    }
}

/// The header of [`convert_log`]: a comment line per image naming the unit
/// and its reader (no commas, semicolons, tabs or quotes: a plain CSV reader
/// skipping `#` lines sees only the header and rows), then the column
/// names. `kept`: the input columns passed through, by name.
pub fn header_text(conv: &Converter, with_f64: bool, kept: &[String]) -> String {
    let reader_words = |cal: &Calibration| match (cal.kind, cal.companion_rest, cal.volume) {
        (ReaderKind::Proximity, None, _) => "proximity reader".to_string(),
        (ReaderKind::Proximity, Some(_), _) => "proximity reader with companion coil".to_string(),
        (ReaderKind::Level, r, v) => format!(
            "level reader{}{}",
            if r.is_some() {
                " with reference electrode"
            } else {
                ""
            },
            match (r, v) {
                (_, None) => "",
                (Some(_), Some(_)) => " and volume table",
                (None, Some(_)) => " with volume table",
            }
        ),
        (ReaderKind::Metal, None, _) => "metal reader".to_string(),
        (ReaderKind::Metal, Some(_), _) => "metal reader with companion coil".to_string(),
    };
    let line = |prefix: String, cal: &Calibration| {
        comment_text(&format!(
            "# lc-host convert: {prefix}unit {}: {}\n",
            cal.serial.as_str(),
            reader_words(cal)
        ))
    };
    let mut text = String::new();
    if let Some(k) = conv.default {
        let prefix = if conv.by_channel.is_empty() {
            String::new()
        } else {
            "other channels: ".to_string()
        };
        text += &line(prefix, &conv.twins[k].calibration);
    }
    for (ch, &k) in &conv.by_channel {
        text += &line(format!("channel {ch}: "), &conv.twins[k].calibration);
    }
    text += FIRST_COLUMNS;
    let layout = Layout::new(conv, with_f64);
    for name in layout.names.iter().chain(kept) {
        text.push(',');
        text += name;
    }
    text
}

/// Appends field `i` (from 0) of a logged CSV line as it was written
/// (quotes included, so it stays one field); nothing when the line has
/// fewer fields.
fn push_raw_field(out: &mut Vec<u8>, line: &[u8], i: usize) {
    let (mut field, mut start, mut quoted) = (0, 0, false);
    for (k, &b) in line.iter().enumerate() {
        match b {
            b'"' => quoted = !quoted,
            b',' if !quoted => {
                if field == i {
                    out.extend_from_slice(&line[start..k]);
                    return;
                }
                field += 1;
                start = k + 1;
            }
            _ => {}
        }
    }
    if field == i {
        out.extend_from_slice(&line[start..]);
    }
}

/// Streams a field log through the converter into CSV: a comment line per
/// image, the header, and one row per reading with the columns of its
/// image's product (docs/formats.md, "Readings"); with `with_f64`, the
/// `f64` reference value and fixed − reference too. `observe` sees every
/// converted row in input order (for plots; `value_f64` only with
/// `with_f64`); `progress` gets the input line every 65 536 rows. Rows are
/// parsed and formatted on one thread per core (at most
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
    out: W,
    conv: &mut Converter,
    on_bad_row: OnBadRow,
    with_f64: bool,
    threads: Threads,
    progress: impl FnMut(u64),
    observe: impl FnMut(&Converted),
) -> Result<Summary, RunError> {
    convert_log_keeping(
        reader, out, conv, on_bad_row, with_f64, false, threads, progress, observe,
    )
}

/// [`convert_log_threads`], and with `keep_columns` the input's columns
/// that are not field-log columns passed through after the output's own,
/// as logged ([`FieldLogReader::unknown_columns`]).
#[allow(clippy::too_many_arguments)]
pub fn convert_log_keeping<R: Read, W: Write>(
    reader: FieldLogReader<R>,
    out: W,
    conv: &mut Converter,
    on_bad_row: OnBadRow,
    with_f64: bool,
    keep_columns: bool,
    threads: Threads,
    progress: impl FnMut(u64),
    mut observe: impl FnMut(&Converted),
) -> Result<Summary, RunError> {
    let kept: Vec<(usize, String)> = if keep_columns {
        reader.unknown_columns().to_vec()
    } else {
        Vec::new()
    };
    let kept_names: Vec<String> = kept.iter().map(|(_, n)| n.clone()).collect();
    let header = header_text(conv, with_f64, &kept_names);
    let layout = Layout::new(conv, with_f64);
    let Converter {
        twins,
        readers,
        by_channel,
        default,
        live,
    } = conv;
    let (twins, readers, by_channel, default) = (&*twins, &*readers, &*by_channel, *default);
    let fields = &layout.fields;
    let kept = &kept;
    stream_log(
        reader,
        out,
        &header,
        on_bad_row,
        threads,
        !kept.is_empty(),
        |row| {
            let k = image_of(by_channel, default, row.channel)?;
            let unit = live[slot(row.channel)].get_or_insert_with(|| Box::new(readers[k].clone()));
            Some((unit.read(&twins[k].input_of(row)), None::<f64>, k))
        },
        |row, state: &mut Option<(Reading, Option<f64>, usize)>, raw, out| {
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
            if with_f64 {
                *value_f64 = twin.reference(row, r);
            }
            let q40 = r.curve_input_q40();
            for field in &fields[*k] {
                out.push(b',');
                let Some(field) = field else { continue };
                if fault {
                    continue;
                }
                match *field {
                    Field::Value(exp) => push_scaled(out, i64::from(r.output()), exp),
                    Field::Volume(exp) => {
                        if let Some(v) = r.secondary() {
                            push_scaled(out, i64::from(v), exp);
                        }
                    }
                    Field::ShiftPpm | Field::DeltaPpm => push_fixed(
                        out,
                        lc_core::shift::Shift::from_raw_q40(q40).to_ppm_f64(),
                        6,
                    ),
                    // Q23.40 to its value: 12 decimals hold every bit.
                    Field::Ratio => push_fixed(out, q40 as f64 / 1_099_511_627_776.0, 12),
                    Field::Class => {
                        if let Reading::Metal(m) = r {
                            out.extend_from_slice(class_name(m.class).as_bytes());
                        }
                    }
                    Field::RingDrop => push_int_opt(out, r.secondary()),
                    Field::ValueF64(exp) => {
                        if let Some(v) = *value_f64 {
                            push_scaled_f64(out, v, exp, 4);
                        }
                    }
                    Field::Diff(exp) => {
                        if let Some(v) = *value_f64 {
                            push_scaled_f64(out, f64::from(r.output()) - v, exp, 4);
                        }
                    }
                }
            }
            for (i, _) in kept {
                out.push(b',');
                push_raw_field(out, raw, *i);
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
        assert!(
            text.starts_with(
                "# lc-host convert: unit DEMO-01-0007: proximity reader\n\
                 line,time_s,channel,status,gap_m,shift_ppm,gap_m_f64,gap_m_diff\n"
            ),
            "{text}"
        );
        assert!(text.contains(",fault_no_oscillation,") && text.contains(",fault_no_reference,"));
    }

    /// raw·10^exp as an exact decimal, by integer division (independent of
    /// `csvout`).
    fn scaled(raw: i64, exp: i8) -> String {
        if exp >= 0 {
            return if raw == 0 {
                "0".into()
            } else {
                format!("{raw}{}", "0".repeat(exp as usize))
            };
        }
        let p = 10u64.pow(u32::from(exp.unsigned_abs()));
        let a = raw.unsigned_abs();
        format!(
            "{}{}.{:0w$}",
            if raw < 0 { "-" } else { "" },
            a / p,
            a % p,
            w = usize::from(exp.unsigned_abs())
        )
    }

    /// The straightforward conversion: the row iterator, one row at a time
    /// through `Converter::convert`, every field through `std::fmt`, the
    /// columns written out per product. The parallel path must give
    /// exactly these bytes.
    fn reference_output(cal: Calibration, log: &[u8], with_f64: bool) -> (Vec<u8>, Summary) {
        let reader = FieldLogReader::new(log, Path::new("log.csv")).unwrap();
        let mut conv = Converter::new(cal).unwrap();
        let mut out = Vec::new();
        let mut summary = Summary::default();
        let exp = cal.output.decimal_exponent;
        let f64_text = |v: f64| {
            format!(
                "{:.*}",
                4 + usize::from(exp.unsigned_abs()),
                v / 10f64.powi(-i32::from(exp))
            )
        };
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
                "{},{},{},{}",
                row.line,
                row.time_s.map_or(String::new(), |t| t.to_string()),
                row.channel.map_or(String::new(), |c| c.to_string()),
                status_name(r.status()),
            )
            .unwrap();
            let x = lc_core::shift::Shift::from_raw_q40(r.curve_input_q40());
            let mut fields: Vec<String> = Vec::new();
            let blank = |v: String| if fault { String::new() } else { v };
            match r {
                Reading::Proximity(p) => {
                    fields.push(blank(scaled(i64::from(p.gap), exp)));
                    fields.push(blank(format!("{:.6}", x.to_ppm_f64())));
                }
                Reading::Level(l) => {
                    fields.push(blank(scaled(i64::from(l.level), exp)));
                    if let Some((_, vs)) = cal.volume {
                        fields.push(blank(l.volume.map_or(String::new(), |v| {
                            scaled(i64::from(v), vs.decimal_exponent)
                        })));
                    }
                    fields.push(blank(match cal.companion_rest {
                        Some(_) => format!("{:.12}", x.raw_q40() as f64 / 1_099_511_627_776.0),
                        None => format!("{:.6}", x.to_ppm_f64()),
                    }));
                }
                Reading::Metal(m) => {
                    fields.push(blank(class_name(m.class).to_string()));
                    fields.push(blank(m.ring_drop.map_or(String::new(), |d| d.to_string())));
                    fields.push(blank(format!("{:.6}", x.to_ppm_f64())));
                }
            }
            if with_f64 && cal.kind != ReaderKind::Metal {
                fields.push(c.value_f64.map_or(String::new(), f64_text));
                fields.push(
                    c.value_f64
                        .map_or(String::new(), |v| f64_text(f64::from(r.output()) - v)),
                );
            }
            for f in fields {
                write!(out, ",{f}").unwrap();
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

    fn image_file(rel: &str) -> Calibration {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join(rel);
        Calibration::parse(&std::fs::read(path).unwrap()).unwrap()
    }

    /// A level log of the tank probe TANK-01-0001 (the demo scenario's
    /// simulator): levels 0 … 380 mm at 20 … 60 °C, probe and reference
    /// electrode counted over 4 096 cycles at 48 MHz, with an extra column.
    fn level_log() -> String {
        let unit = crate::sim::level::level_units("TANK-01", 1, 1)
            .pop()
            .unwrap();
        let g = crate::sim::level::LevelGeometry::DEMO;
        let ticks = |f: f64| (4096.0 * 48e6 / f).round() as u32;
        let mut log = String::from("time_s,cycles,ticks,comp_cycles,comp_ticks,temp_c,operator\n");
        for i in 0..200u32 {
            let h = 0.38 * f64::from(i) / 199.0;
            let t = 20.0 + 40.0 * f64::from(i % 7) / 6.0;
            let (fp, fr) = unit.frequencies(h, t, &g);
            log += &format!("{i},4096,{},4096,{},{t},\"a, b\"\n", ticks(fp), ticks(fr));
        }
        log
    }

    fn converted(cal: Calibration, log: &str, with_f64: bool) -> (String, Vec<Converted>) {
        let reader = FieldLogReader::new(log.as_bytes(), Path::new("l.csv")).unwrap();
        let mut conv = Converter::new(cal).unwrap();
        let mut out = Vec::new();
        let mut rows = Vec::new();
        convert_log_threads(
            reader,
            &mut out,
            &mut conv,
            OnBadRow::Stop,
            with_f64,
            Threads::new(2).unwrap(),
            |_| {},
            |c| rows.push(*c),
        )
        .unwrap();
        (String::from_utf8(out).unwrap(), rows)
    }

    /// Issue 19, item 2: `--float` took a proximity twin for any image
    /// with a curve (`value_f64` 300 on every level row). The level
    /// image `lc-host calibrate` makes (examples/unit-firmware/data) gets
    /// the level reader's twin: within a unit of the fixed value on every
    /// row, and the level itself within 2 mm of the simulated one.
    #[test]
    fn float_reference_of_a_level_image_is_the_level_twin() {
        let cal = image_file("examples/unit-firmware/data/level.lcim");
        let (text, rows) = converted(cal, &level_log(), true);
        assert!(
            text.contains(
                "\nline,time_s,channel,status,level_m,volume_l,ratio,level_m_f64,level_m_diff\n"
            ),
            "{text}"
        );
        let mut seen = std::collections::BTreeSet::new();
        for (i, c) in rows.iter().enumerate() {
            let Some(v) = c.value_f64 else {
                // An empty tank: the reference electrode is dry.
                assert!(matches!(c.reading.status(), Status::SensorFault(_)) && i < 10);
                continue;
            };
            let fixed = f64::from(c.reading.output());
            assert!((fixed - v).abs() <= 1.0, "line {}: {fixed} vs {v}", c.line);
            let h_mm = 380.0 * i as f64 / 199.0;
            if c.reading.status() == Status::Ok {
                assert!((fixed / 10.0 - h_mm).abs() < 2.0, "{fixed} at {h_mm} mm");
            }
            seen.insert(v.round() as i64);
        }
        assert!(seen.len() > 150, "the reference follows the level");
        // The columns hold what they say: metres, litres, the ratio.
        let row: Vec<&str> = text.lines().nth(102).unwrap().split(',').collect();
        let level: f64 = row[4].parse().unwrap();
        assert!((level - 0.19).abs() < 0.002, "{row:?}");
        assert!(row[4].len() == "0.1900".len(), "{row:?}");
        let litres: f64 = row[5].parse().unwrap();
        assert!((40.0..90.0).contains(&litres), "{row:?}");
        let ratio: f64 = row[6].parse().unwrap();
        assert!((1.0..20.0).contains(&ratio), "{row:?}");
    }

    /// Issue 19, item 6: the output reads with a plain CSV reader once
    /// comment lines are skipped (no separator or quote in them), every row
    /// as wide as the header; a metal image writes class names; unknown
    /// input columns pass through with `keep_columns`.
    #[test]
    fn output_reads_with_any_csv_reader() {
        let metal = image_file("examples/unit-firmware/data/metal.lcim");
        let level = image_file("examples/unit-firmware/data/level.lcim");
        let prox = image_file("examples/unit-firmware/data/proximity.lcim");
        let check = |text: &str| {
            for l in text.lines().filter(|l| l.starts_with('#')) {
                assert!(!l.contains([',', ';', '\t', '"']), "{l}");
            }
            let body: String = text
                .lines()
                .filter(|l| !l.starts_with('#'))
                .map(|l| format!("{l}\n"))
                .collect();
            let mut csv = csv::Reader::from_reader(body.as_bytes());
            let width = csv.headers().unwrap().len();
            let mut n = 0;
            for rec in csv.records() {
                assert_eq!(rec.unwrap().len(), width);
                n += 1;
            }
            n
        };
        // Metal: a target passing over the demo coil, with ring counts.
        let gate = metal.gate().unwrap();
        let rest = metal.rest.to_f64();
        let mut log = String::from("cycles,ticks,ring_count,temp_c\n");
        for i in 0..300u32 {
            let (s, ring) = if (100..140).contains(&i) {
                (0.01, 10)
            } else if (200..240).contains(&i) {
                (-0.01, 10)
            } else {
                (0.0, 14)
            };
            let ticks = (f64::from(gate) * rest * (1.0f64 + s).sqrt()).round();
            log += &format!("{gate},{ticks},{ring},25\n");
        }
        let (text, _) = converted(metal, &log, true);
        assert_eq!(check(&text), 300);
        assert!(
            text.contains("\nline,time_s,channel,status,class,ring_drop,delta_ppm\n"),
            "{text}"
        );
        for class in [",ok,ferrous,", ",ok,non_ferrous,", ",no_target,none,"] {
            assert!(text.contains(class), "{class}: {text}");
        }
        // Level with its extra column kept, and a mixed two-channel log.
        let log = level_log();
        let reader = FieldLogReader::new(log.as_bytes(), Path::new("l.csv")).unwrap();
        let mut conv = Converter::new(level).unwrap();
        let mut out = Vec::new();
        convert_log_keeping(
            reader,
            &mut out,
            &mut conv,
            OnBadRow::Stop,
            false,
            true,
            Threads::new(3).unwrap(),
            |_| {},
            |_| {},
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        assert_eq!(check(&text), 200);
        assert!(text.contains("\nline,time_s,channel,status,level_m,volume_l,ratio,operator\n"));
        assert!(
            text.lines().nth(3).unwrap().ends_with(",\"a, b\""),
            "{text}"
        );
        let mixed = "channel,cycles,ticks\n0,16384,139542\n1,16384,139542\n";
        let reader = FieldLogReader::new(mixed.as_bytes(), Path::new("m.csv")).unwrap();
        let mut conv = Converter::per_channel(Some(prox), &[(1, metal)]).unwrap();
        let mut out = Vec::new();
        convert_log(
            reader,
            &mut out,
            &mut conv,
            OnBadRow::Stop,
            true,
            |_| {},
            |_| {},
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        assert_eq!(check(&text), 2, "{text}");
        assert!(text.contains("line,time_s,channel,status,gap_m,shift_ppm,gap_m_f64,gap_m_diff,class,ring_drop,delta_ppm\n"), "{text}");
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
