//! Field logs: one CSV row per gate, as logged from a unit in the field.
//!
//! Format (docs/formats.md): a header row, then one row per reading.
//! Required columns `cycles` and `ticks` (unsigned 32-bit counts); optional
//! `time_s` (seconds, decimal), `channel` (0–255) and `temp_c` (degrees
//! Celsius, decimal). Column order is free; unknown columns are ignored.
//! Empty optional fields are allowed. Lines are counted from 1 (the header).

pub use crate::csvin::InputError as LogError;
use crate::csvin::{CsvInput, Row};
use std::io::Read;
use std::path::Path;

/// One parsed field-log row.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FieldRow {
    /// Line number in the file (the header is line 1).
    pub line: u64,
    /// Time stamp in seconds, if logged.
    pub time_s: Option<f64>,
    /// Sensor channel, if logged.
    pub channel: Option<u8>,
    /// Sensor cycles in the gate.
    pub cycles: u32,
    /// Reference ticks in the gate.
    pub ticks: u32,
    /// Temperature in degrees Celsius, if logged.
    pub temp_c: Option<f64>,
}

#[derive(Clone, Copy, Debug)]
struct Columns {
    time_s: Option<usize>,
    channel: Option<usize>,
    cycles: usize,
    ticks: usize,
    temp_c: Option<usize>,
}

/// Streaming reader of field-log rows; memory stays constant whatever the
/// log's length.
#[derive(Debug)]
pub struct FieldLogReader<R: Read> {
    input: CsvInput<R>,
    columns: Columns,
}

const HINT: &str = "a field log needs `cycles` and `ticks` (see docs/formats.md)";

impl<R: Read> FieldLogReader<R> {
    /// Reads the header of `input`; `file` names it in messages (`-` for
    /// standard input).
    pub fn new(input: R, file: &Path) -> Result<Self, LogError> {
        let input = CsvInput::new(input, file)?;
        let columns = Columns {
            time_s: input.column("time_s"),
            channel: input.column("channel"),
            cycles: input.require("cycles", HINT)?,
            ticks: input.require("ticks", HINT)?,
            temp_c: input.column("temp_c"),
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
    Ok(FieldRow {
        line: row.line(),
        time_s: row.real_opt(c.time_s, "time_s")?,
        channel,
        cycles: row.count(c.cycles, "cycles")?,
        ticks: row.count(c.ticks, "ticks")?,
        temp_c: row.real_opt(c.temp_c, "temp_c")?,
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
        assert_eq!((first.line, first.cycles, first.ticks), (2, 4096, 19_275));
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
                prop_assert_eq!((r.cycles, r.ticks, r.channel, r.temp_c), (*c, *t, Some(*ch), Some(*temp)));
            }
        }
    }
}
