//! Field logs: one CSV row per gate, as logged from a unit in the field.
//!
//! Format (docs/formats.md): a header row, then one row per reading. Either
//! the count pair, columns `cycles` and `ticks` (unsigned 32-bit counts),
//! or a measured frequency, column `frequency_hz`. Optional: `time_s`
//! (seconds), `channel` (0–255), `temp_c` (°C), `ring_count`, and the
//! companion channel's `comp_cycles` and `comp_ticks`. Column order is
//! free; unknown columns are ignored; empty optional fields are allowed.
//! Lines are counted from 1 (the header).

pub use crate::csvin::InputError as LogError;
use crate::csvin::{CsvInput, Row};
use lc_core::counting::CountPair;
use std::io::Read;
use std::path::Path;

/// What a row measured.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Measurement {
    /// A count pair.
    Counts(CountPair),
    /// A frequency in hertz (from another instrument or a log that kept
    /// only frequencies).
    FrequencyHz(f64),
}

/// One parsed field-log row.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FieldRow {
    /// Line number in the file (the header is line 1).
    pub line: u64,
    /// Time stamp in seconds, if logged.
    pub time_s: Option<f64>,
    /// Sensor channel, if logged.
    pub channel: Option<u8>,
    /// The measurement.
    pub measurement: Measurement,
    /// Temperature in degrees Celsius, if logged.
    pub temp_c: Option<f64>,
    /// Ring count, if logged.
    pub ring_count: Option<u16>,
    /// The companion channel's count pair, if logged.
    pub companion: Option<CountPair>,
}

impl FieldRow {
    /// The count pair, when the row logged one.
    pub fn pair(&self) -> Option<CountPair> {
        match self.measurement {
            Measurement::Counts(p) => Some(p),
            Measurement::FrequencyHz(_) => None,
        }
    }
}

#[derive(Clone, Copy, Debug)]
enum Source {
    Counts { cycles: usize, ticks: usize },
    Frequency(usize),
}

#[derive(Clone, Copy, Debug)]
struct Columns {
    time_s: Option<usize>,
    channel: Option<usize>,
    source: Source,
    temp_c: Option<usize>,
    ring_count: Option<usize>,
    comp_cycles: Option<usize>,
    comp_ticks: Option<usize>,
}

/// Streaming reader of field-log rows; memory stays constant whatever the
/// log's length.
#[derive(Debug)]
pub struct FieldLogReader<R: Read> {
    input: CsvInput<R>,
    columns: Columns,
}

const HINT: &str =
    "a field log needs `cycles` and `ticks`, or `frequency_hz` (see docs/formats.md)";

impl<R: Read> FieldLogReader<R> {
    /// Reads the header of `input`; `file` names it in messages (`-` for
    /// standard input).
    pub fn new(input: R, file: &Path) -> Result<Self, LogError> {
        let input = CsvInput::new(input, file)?;
        let source = match (input.column("frequency_hz"), input.column("cycles")) {
            (Some(f), None) => Source::Frequency(f),
            _ => Source::Counts {
                cycles: input.require("cycles", HINT)?,
                ticks: input.require("ticks", HINT)?,
            },
        };
        let columns = Columns {
            time_s: input.column("time_s"),
            channel: input.column("channel"),
            source,
            temp_c: input.column("temp_c"),
            ring_count: input.column("ring_count"),
            comp_cycles: input.column("comp_cycles"),
            comp_ticks: input.column("comp_ticks"),
        };
        Ok(Self { input, columns })
    }
}

fn parse(row: &Row<'_>, c: Columns) -> Result<FieldRow, LogError> {
    let channel = match c.channel.map(|i| row.text(i)) {
        None | Some("") => None,
        Some(s) => Some(
            s.parse::<u8>()
                .map_err(|_| row.error("channel", s, "expected a channel number from 0 to 255"))?,
        ),
    };
    let measurement = match c.source {
        Source::Counts { cycles, ticks } => Measurement::Counts(CountPair::new(
            row.count(cycles, "cycles")?,
            row.count(ticks, "ticks")?,
        )),
        Source::Frequency(i) => {
            let f = row.real(i, "frequency_hz")?;
            if f < 0.0 {
                return Err(row.error(
                    "frequency_hz",
                    row.text(i),
                    "expected a frequency of 0 Hz or more",
                ));
            }
            Measurement::FrequencyHz(f)
        }
    };
    let ring_count = row.ring_count_opt(c.ring_count)?;
    let companion = row.companion_opt(c.comp_cycles, c.comp_ticks)?;
    Ok(FieldRow {
        line: row.line(),
        time_s: row.real_opt(c.time_s, "time_s")?,
        channel,
        measurement,
        temp_c: row.real_opt(c.temp_c, "temp_c")?,
        ring_count,
        companion,
    })
}

impl<R: Read> Iterator for FieldLogReader<R> {
    type Item = Result<FieldRow, LogError>;

    fn next(&mut self) -> Option<Self::Item> {
        let columns = self.columns;
        Some(self.input.next_row()?.and_then(|row| parse(&row, columns)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn read(text: &str) -> Result<Vec<Result<FieldRow, LogError>>, LogError> {
        Ok(FieldLogReader::new(text.as_bytes(), Path::new("log.csv"))?.collect())
    }

    #[test]
    fn parses_rows_in_any_column_order() {
        let rows = read("ticks,cycles,time_s,temp_c\n19275,4096,0.5,25.0\n19180,4096,,\n").unwrap();
        let first = rows[0].as_ref().unwrap();
        assert_eq!(
            (first.line, first.pair()),
            (2, Some(CountPair::new(4096, 19_275)))
        );
        assert_eq!(
            (first.time_s, first.temp_c, first.channel),
            (Some(0.5), Some(25.0), None)
        );
        let second = rows[1].as_ref().unwrap();
        assert_eq!((second.line, second.time_s), (3, None));
    }

    #[test]
    fn errors_name_file_line_and_field() {
        let rows = read("cycles,ticks,channel\n4096,19275,1\n4096,-5,1\n4096,1,300\n").unwrap();
        assert!(rows[0].is_ok());
        let e = rows[1].as_ref().unwrap_err().to_string();
        assert!(
            e.contains("log.csv: line 3: field `ticks`") && e.contains("\"-5\""),
            "{e}"
        );
        let e = rows[2].as_ref().unwrap_err().to_string();
        assert!(e.contains("line 4: field `channel`"), "{e}");
        let e = read("cycles,count\n1,2\n").unwrap_err().to_string();
        assert!(e.contains("no `ticks` column"), "{e}");
        let rows = read("time_s,frequency_hz\n0,5635789.8\n1,-3\n").unwrap();
        assert_eq!(
            rows[0].as_ref().unwrap().measurement,
            Measurement::FrequencyHz(5_635_789.8)
        );
        assert!(rows[1]
            .as_ref()
            .unwrap_err()
            .to_string()
            .contains("field `frequency_hz`"));
    }

    proptest! {
        /// Arbitrary text never panics the reader; every row is either a
        /// parsed row or an error that names a line.
        #[test]
        fn arbitrary_text_never_panics(body in "[0-9a-z,\\.\"\\-\n ]{0,200}") {
            let text = format!("cycles,ticks,time_s,channel,temp_c\n{body}");
            if let Ok(rows) = read(&text) {
                for r in rows {
                    match r {
                        Ok(row) => prop_assert!(row.line >= 2),
                        Err(e) => prop_assert!(e.to_string().contains("line")),
                    }
                }
            }
        }

        /// Rows written from values read back to the same values.
        #[test]
        fn round_trip(rows in proptest::collection::vec((any::<u32>(), any::<u32>(), any::<u8>(), -50.0f64..150.0), 0..20)) {
            let mut text = String::from("time_s,channel,cycles,ticks,temp_c\n");
            for (i, (c, t, ch, temp)) in rows.iter().enumerate() {
                text.push_str(&format!("{},{ch},{c},{t},{temp}\n", i as f64 * 0.1));
            }
            let back = read(&text).unwrap();
            prop_assert_eq!(back.len(), rows.len());
            for ((c, t, ch, temp), r) in rows.iter().zip(back) {
                let r = r.unwrap();
                prop_assert_eq!((r.pair(), r.channel, r.temp_c), (Some(CountPair::new(*c, *t)), Some(*ch), Some(*temp)));
            }
        }
    }
}
