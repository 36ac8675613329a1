//! Field logs: one CSV row per gate, as logged from a unit in the field.
//!
//! Format (docs/formats.md): a header row, then one row per reading.
//! Required columns `cycles` and `ticks` (unsigned 32-bit counts); optional
//! `time_s` (seconds, decimal), `channel` (0–255) and `temp_c` (degrees
//! Celsius, decimal). Column order is free; unknown columns are ignored.
//! Empty optional fields are allowed. Lines are counted from 1 (the header).

use std::fmt;
use std::io::Read;
use std::path::{Path, PathBuf};

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

/// Where a field log went wrong: file, line, field and what to do.
#[derive(Debug, thiserror::Error)]
pub enum LogError {
    /// The file could not be read.
    #[error("{file}: cannot read: {source}")]
    Io {
        /// File name.
        file: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A required column is missing from the header.
    #[error("{file}: line 1: header has no `{column}` column; a field log needs `cycles` and `ticks` (see docs/formats.md)")]
    MissingColumn {
        /// File name.
        file: PathBuf,
        /// The missing column.
        column: &'static str,
    },
    /// A field does not parse.
    #[error("{file}: line {line}: field `{field}`: {problem} (found {found:?})")]
    BadField {
        /// File name.
        file: PathBuf,
        /// Line number (header = 1).
        line: u64,
        /// Column name.
        field: &'static str,
        /// The text found.
        found: String,
        /// What is wrong and what is expected.
        problem: &'static str,
    },
    /// The CSV structure is broken (for example an unterminated quote).
    #[error("{file}: line {line}: malformed CSV: {message}")]
    Csv {
        /// File name.
        file: PathBuf,
        /// Line number.
        line: u64,
        /// The parser's message.
        message: String,
    },
}

#[derive(Clone, Copy)]
struct Columns {
    time_s: Option<usize>,
    channel: Option<usize>,
    cycles: usize,
    ticks: usize,
    temp_c: Option<usize>,
}

/// Streaming reader of field-log rows; memory stays constant whatever the
/// log's length.
pub struct FieldLogReader<R: Read> {
    file: PathBuf,
    records: csv::StringRecordsIntoIter<R>,
    columns: Columns,
}

impl<R: Read> fmt::Debug for FieldLogReader<R> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("FieldLogReader")
            .field("file", &self.file)
            .finish_non_exhaustive()
    }
}

impl<R: Read> FieldLogReader<R> {
    /// Reads the header of `input`; `file` names it in messages (`-` for
    /// standard input).
    pub fn new(input: R, file: &Path) -> Result<Self, LogError> {
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .trim(csv::Trim::All)
            .flexible(true)
            .comment(Some(b'#'))
            .from_reader(input);
        let file = file.to_path_buf();
        let headers = reader.headers().map_err(|e| csv_error(&file, &e))?.clone();
        let find = |name: &str| headers.iter().position(|h| h.eq_ignore_ascii_case(name));
        let required = |name: &'static str| {
            find(name).ok_or(LogError::MissingColumn {
                file: file.clone(),
                column: name,
            })
        };
        let columns = Columns {
            time_s: find("time_s"),
            channel: find("channel"),
            cycles: required("cycles")?,
            ticks: required("ticks")?,
            temp_c: find("temp_c"),
        };
        Ok(Self {
            file,
            records: reader.into_records(),
            columns,
        })
    }

    fn parse(&self, rec: &csv::StringRecord) -> Result<FieldRow, LogError> {
        let line = rec.position().map_or(0, |p| p.line());
        let c = self.columns;
        let get = |i: usize| rec.get(i).unwrap_or("");
        let bad = |field: &'static str, found: &str, problem: &'static str| LogError::BadField {
            file: self.file.clone(),
            line,
            field,
            found: found.to_string(),
            problem,
        };
        let count = |i: usize, field: &'static str| {
            let s = get(i);
            s.parse::<u32>()
                .map_err(|_| bad(field, s, "expected a whole count from 0 to 4294967295"))
        };
        let real = |i: Option<usize>, field: &'static str| -> Result<Option<f64>, LogError> {
            match i.map(get) {
                None | Some("") => Ok(None),
                Some(s) => match s.parse::<f64>() {
                    Ok(v) if v.is_finite() => Ok(Some(v)),
                    _ => Err(bad(field, s, "expected a finite decimal number")),
                },
            }
        };
        let channel = match c.channel.map(get) {
            None | Some("") => None,
            Some(s) => Some(
                s.parse::<u8>()
                    .map_err(|_| bad("channel", s, "expected a channel number from 0 to 255"))?,
            ),
        };
        Ok(FieldRow {
            line,
            time_s: real(c.time_s, "time_s")?,
            channel,
            cycles: count(c.cycles, "cycles")?,
            ticks: count(c.ticks, "ticks")?,
            temp_c: real(c.temp_c, "temp_c")?,
        })
    }
}

fn csv_error(file: &Path, e: &csv::Error) -> LogError {
    let line = e.position().map_or(0, |p| p.line());
    LogError::Csv {
        file: file.to_path_buf(),
        line,
        message: e.to_string(),
    }
}

impl<R: Read> Iterator for FieldLogReader<R> {
    type Item = Result<FieldRow, LogError>;

    fn next(&mut self) -> Option<Self::Item> {
        let rec = self.records.next()?;
        Some(match rec {
            Ok(rec) => self.parse(&rec),
            Err(e) => match e.kind() {
                csv::ErrorKind::Io(_) => Err(LogError::Io {
                    file: self.file.clone(),
                    source: std::io::Error::other(e.to_string()),
                }),
                _ => Err(csv_error(&self.file, &e)),
            },
        })
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
