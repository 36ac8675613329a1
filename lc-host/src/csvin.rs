//! Shared CSV input: the reader settings of every file format we read, and
//! errors that name the file, line and field and say what is expected.
//!
//! Formats (docs/formats.md): a header row; lines starting with `#` are
//! comments; fields are trimmed; column names match without regard to case;
//! columns may come in any order. Line numbers count every line of the
//! file from 1. [`CsvInput`] reads with the `csv` crate (rig logs);
//! [`LineSplitter`] cuts one line at a time without copies (field logs,
//! where speed matters).

use std::io::Read;
use std::path::{Path, PathBuf};

/// Where an input file went wrong: file, line, field and what to do.
#[derive(Debug, thiserror::Error)]
pub enum InputError {
    /// The file could not be read.
    #[error("{file}: cannot read: {source}")]
    Io {
        /// File name.
        file: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A required column is missing from the header.
    #[error("{file}: line 1: header has no `{column}` column; {hint}")]
    MissingColumn {
        /// File name.
        file: PathBuf,
        /// The missing column.
        column: &'static str,
        /// Which columns the format needs (and where it is documented).
        hint: &'static str,
    },
    /// The header cannot be used as it is.
    #[error("{file}: line {line}: {message}")]
    Header {
        /// File name.
        file: PathBuf,
        /// The header's line.
        line: u64,
        /// What is wrong and what to do.
        message: String,
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

impl InputError {
    /// The line the error refers to, when it refers to one.
    pub fn line(&self) -> Option<u64> {
        match self {
            InputError::BadField { line, .. }
            | InputError::Csv { line, .. }
            | InputError::Header { line, .. } => Some(*line),
            _ => None,
        }
    }
}

/// A CSV file being read row by row, with its header resolved.
pub struct CsvInput<R: Read> {
    file: PathBuf,
    headers: csv::StringRecord,
    records: csv::StringRecordsIntoIter<R>,
}

impl<R: Read> std::fmt::Debug for CsvInput<R> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CsvInput")
            .field("file", &self.file)
            .finish_non_exhaustive()
    }
}

impl<R: Read> CsvInput<R> {
    /// Reads the header of `input`; `file` names it in messages.
    pub fn new(input: R, file: &Path) -> Result<Self, InputError> {
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .trim(csv::Trim::All)
            .flexible(true)
            .comment(Some(b'#'))
            .from_reader(input);
        let file = file.to_path_buf();
        let headers = reader.headers().map_err(|e| csv_error(&file, &e))?.clone();
        Ok(Self {
            file,
            headers,
            records: reader.into_records(),
        })
    }

    /// The file name used in messages.
    pub fn file(&self) -> &Path {
        &self.file
    }

    /// Index of an optional column.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers
            .iter()
            .position(|h| h.eq_ignore_ascii_case(name))
    }

    /// Index of a required column, or the error that explains the format.
    pub fn require(&self, name: &'static str, hint: &'static str) -> Result<usize, InputError> {
        self.column(name).ok_or_else(|| InputError::MissingColumn {
            file: self.file.clone(),
            column: name,
            hint,
        })
    }

    /// The next row, or `None` at the end of the file.
    pub fn next_row(&mut self) -> Option<Result<Row<'_>, InputError>> {
        let rec = self.records.next()?;
        Some(match rec {
            Ok(record) => Ok(Row {
                file: &self.file,
                line: record.position().map_or(0, |p| p.line()),
                fields: RowFields::Record(record),
            }),
            Err(e) => match e.kind() {
                csv::ErrorKind::Io(_) => Err(InputError::Io {
                    file: self.file.clone(),
                    source: std::io::Error::other(e.to_string()),
                }),
                _ => Err(csv_error(&self.file, &e)),
            },
        })
    }
}

/// One CSV row with typed, error-naming accessors.
#[derive(Debug)]
pub struct Row<'a> {
    file: &'a Path,
    line: u64,
    fields: RowFields<'a>,
}

/// Where a row's fields are: a record of the `csv` crate, or one line cut
/// by a [`LineSplitter`].
#[derive(Debug)]
enum RowFields<'a> {
    Record(csv::StringRecord),
    Line(&'a str, &'a LineSplitter),
}

impl<'a> Row<'a> {
    /// A row of one line of `file` already cut by `fields`.
    pub fn from_line(file: &'a Path, line: u64, text: &'a str, fields: &'a LineSplitter) -> Self {
        Self {
            file,
            line,
            fields: RowFields::Line(text, fields),
        }
    }

    /// The row's line number.
    pub fn line(&self) -> u64 {
        self.line
    }

    /// The number of fields.
    pub fn len(&self) -> usize {
        match &self.fields {
            RowFields::Record(r) => r.len(),
            RowFields::Line(_, f) => f.len(),
        }
    }

    /// Whether the row has no field.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The text of column `i`, trimmed ("" when the row is short).
    pub fn text(&self, i: usize) -> &str {
        match &self.fields {
            RowFields::Record(r) => r.get(i).unwrap_or(""),
            RowFields::Line(text, f) => f.get(text, i).unwrap_or(""),
        }
    }

    /// An error about `field` of this row.
    pub fn error(&self, field: &'static str, found: &str, problem: &'static str) -> InputError {
        InputError::BadField {
            file: self.file.to_path_buf(),
            line: self.line,
            field,
            found: found.to_string(),
            problem,
        }
    }

    /// A required `u32` count.
    pub fn count(&self, i: usize, field: &'static str) -> Result<u32, InputError> {
        let s = self.text(i);
        s.parse()
            .map_err(|_| self.error(field, s, "expected a whole count from 0 to 4294967295"))
    }

    /// An optional `u32` count (empty or absent column: `None`).
    pub fn count_opt(
        &self,
        i: Option<usize>,
        field: &'static str,
    ) -> Result<Option<u32>, InputError> {
        match i.map(|i| self.text(i)) {
            None | Some("") => Ok(None),
            Some(_) => i.map(|i| self.count(i, field)).transpose(),
        }
    }

    /// A required finite decimal.
    pub fn real(&self, i: usize, field: &'static str) -> Result<f64, InputError> {
        let s = self.text(i);
        match s.parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(v),
            _ => Err(self.error(field, s, "expected a finite decimal number")),
        }
    }

    /// An optional finite decimal.
    pub fn real_opt(
        &self,
        i: Option<usize>,
        field: &'static str,
    ) -> Result<Option<f64>, InputError> {
        match i.map(|i| self.text(i)) {
            None | Some("") => Ok(None),
            Some(_) => i.map(|i| self.real(i, field)).transpose(),
        }
    }
}

impl Row<'_> {
    /// An optional ring count (0–65 535).
    pub fn ring_count_opt(&self, i: Option<usize>) -> Result<Option<u16>, InputError> {
        match self.count_opt(i, "ring_count")? {
            Some(v) => u16::try_from(v).map(Some).map_err(|_| {
                self.error(
                    "ring_count",
                    &v.to_string(),
                    "expected a ring count from 0 to 65535",
                )
            }),
            None => Ok(None),
        }
    }

    /// The companion channel's optional count pair: both columns or
    /// neither.
    pub fn companion_opt(
        &self,
        cycles: Option<usize>,
        ticks: Option<usize>,
    ) -> Result<Option<lc_core::counting::CountPair>, InputError> {
        match (
            self.count_opt(cycles, "comp_cycles")?,
            self.count_opt(ticks, "comp_ticks")?,
        ) {
            (Some(c), Some(t)) => Ok(Some(lc_core::counting::CountPair::new(c, t))),
            (None, None) => Ok(None),
            (Some(_), None) => Err(self.error(
                "comp_ticks",
                "",
                "comp_cycles is given, so comp_ticks is needed too",
            )),
            (None, Some(_)) => Err(self.error(
                "comp_cycles",
                "",
                "comp_ticks is given, so comp_cycles is needed too",
            )),
        }
    }
}

fn csv_error(file: &Path, e: &csv::Error) -> InputError {
    InputError::Csv {
        file: file.to_path_buf(),
        line: e.position().map_or(0, |p| p.line()),
        message: e.to_string(),
    }
}

/// Cuts one line of CSV into fields without copying it: byte ranges into
/// the line, and a scratch buffer only for quoted fields with doubled
/// quotes or text after the closing quote. The rules are those of the
/// `csv` crate for a record on one line: a field that starts with `"` is
/// quoted (`""` inside stands for `"`; text after the closing quote is
/// kept), any other quote is an ordinary character, and fields are trimmed
/// of whitespace when read. A quoted field cannot span lines here: such a
/// line is refused, since no column of our formats holds a line break.
#[derive(Debug, Default, Clone)]
pub struct LineSplitter {
    spans: Vec<Span>,
    scratch: String,
}

#[derive(Debug, Clone, Copy)]
struct Span {
    in_scratch: bool,
    start: u32,
    end: u32,
}

/// Why a line could not be cut into fields.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SplitError {
    /// A quoted field is not closed before the end of the line.
    UnclosedQuote,
    /// The line is longer than 4 GiB.
    TooLong,
}

impl std::fmt::Display for SplitError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            SplitError::UnclosedQuote => {
                "a quoted field is not closed on its line (a record must fit on one line)"
            }
            SplitError::TooLong => "the line is longer than 4 GiB",
        })
    }
}

impl LineSplitter {
    /// Cuts `line` (without its line break) into fields.
    pub fn split(&mut self, line: &str) -> Result<(), SplitError> {
        self.spans.clear();
        self.scratch.clear();
        let b = line.as_bytes();
        let pos = |i: usize| u32::try_from(i).map_err(|_| SplitError::TooLong);
        let mut i = 0;
        loop {
            let end = if b.get(i) == Some(&b'"') {
                self.quoted(line, i)?
            } else {
                let end = memchr::memchr(b',', &b[i..]).map_or(b.len(), |k| i + k);
                self.spans.push(Span {
                    in_scratch: false,
                    start: pos(i)?,
                    end: pos(end)?,
                });
                end
            };
            if end >= b.len() {
                return Ok(());
            }
            i = end + 1;
        }
    }

    /// A quoted field starting at `start`; returns the index of the
    /// delimiter (or the line's end) after it.
    fn quoted(&mut self, line: &str, start: usize) -> Result<usize, SplitError> {
        let b = line.as_bytes();
        let pos = |i: usize| u32::try_from(i).map_err(|_| SplitError::TooLong);
        let mut i = start + 1;
        let scratch_start = self.scratch.len();
        let mut plain = true;
        let close = loop {
            let k = memchr::memchr(b'"', &b[i..])
                .map(|k| i + k)
                .ok_or(SplitError::UnclosedQuote)?;
            if b.get(k + 1) == Some(&b'"') {
                plain = false;
                self.scratch.push_str(&line[i..k]);
                self.scratch.push('"');
                i = k + 2;
            } else {
                break k;
            }
        };
        let end = memchr::memchr(b',', &b[close + 1..]).map_or(b.len(), |k| close + 1 + k);
        if plain && end == close + 1 {
            self.spans.push(Span {
                in_scratch: false,
                start: pos(start + 1)?,
                end: pos(close)?,
            });
        } else {
            self.scratch.push_str(&line[i..close]);
            self.scratch.push_str(&line[close + 1..end]);
            self.spans.push(Span {
                in_scratch: true,
                start: pos(scratch_start)?,
                end: pos(self.scratch.len())?,
            });
        }
        Ok(end)
    }

    /// The number of fields of the last line cut.
    pub fn len(&self) -> usize {
        self.spans.len()
    }

    /// Whether the last line cut had no field (never: an empty line is one
    /// empty field).
    pub fn is_empty(&self) -> bool {
        self.spans.is_empty()
    }

    /// Field `i` of `line` (the line last cut), trimmed.
    pub fn get<'a>(&'a self, line: &'a str, i: usize) -> Option<&'a str> {
        let s = self.spans.get(i)?;
        let text = if s.in_scratch { &self.scratch } else { line };
        let field = text.get(s.start as usize..s.end as usize)?;
        // Most fields have nothing to trim: a printable ASCII byte at both
        // ends (anything else may be whitespace, Unicode included).
        let plain = |b: Option<&u8>| b.is_some_and(|&b| b > b' ' && b < 0x7f);
        Some(
            if plain(field.as_bytes().first()) && plain(field.as_bytes().last()) {
                field
            } else {
                field.trim()
            },
        )
    }
}
