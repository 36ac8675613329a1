//! Field logs: one CSV row per gate, as logged from a unit in the field.
//!
//! Format (docs/formats.md): a header row, then one row per reading. Either
//! the count pair, columns `cycles` and `ticks` (unsigned 32-bit counts),
//! or a measured frequency, column `frequency_hz`. Optional: `time_s`
//! (seconds), `channel` (0–255), `temp_c` (°C), `ring_count`, and the
//! companion channel's `comp_cycles` and `comp_ticks`. Column order is
//! free; unknown columns are ignored with a warning
//! ([`FieldLogReader::warnings`]); a column named twice, a rig log's header
//! and rows with more or fewer fields than the header are errors; empty
//! optional fields are allowed. Lines are counted from 1.

pub use crate::csvin::InputError as LogError;
use crate::csvin::{LineSplitter, Row, SplitError};
use lc_core::counting::CountPair;
use std::io::Read;
use std::path::{Path, PathBuf};

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

/// Which column holds what: the header of a field log, resolved. Parsing a
/// line needs nothing else, so blocks of lines parse on any thread.
#[derive(Clone, Copy, Debug)]
pub struct Columns {
    time_s: Option<usize>,
    channel: Option<usize>,
    source: Source,
    temp_c: Option<usize>,
    ring_count: Option<usize>,
    comp_cycles: Option<usize>,
    comp_ticks: Option<usize>,
    /// Fields in the header: every row has as many.
    width: usize,
}

/// The columns a field log may have.
pub const COLUMNS: [&str; 9] = [
    "time_s",
    "channel",
    "cycles",
    "ticks",
    "frequency_hz",
    "temp_c",
    "ring_count",
    "comp_cycles",
    "comp_ticks",
];

/// The header's problems: duplicated columns and rig logs are errors;
/// unknown columns are warnings, with the field-log column each may have
/// been meant as.
struct Header {
    warnings: Vec<String>,
    /// (column found, field-log column it looks like) for unknown columns.
    suggestions: Vec<(String, &'static str)>,
}

impl Header {
    fn check(names: &[String], file: &Path, line: u64) -> Result<Self, LogError> {
        let error = |message: String| LogError::Header {
            file: file.to_path_buf(),
            line,
            message,
        };
        let has = |c: &str| names.iter().any(|n| n.eq_ignore_ascii_case(c));
        if has("serial") && has("step") && has("target") {
            return Err(error(
                "this is a rig log (columns `serial`, `step`, `target`), not a field log: \
                 calibrate it with `lc-host calibrate`; convert takes a unit's field log \
                 (see docs/formats.md)"
                    .into(),
            ));
        }
        for (i, a) in names.iter().enumerate() {
            if let Some(j) = names[i + 1..]
                .iter()
                .position(|b| b.eq_ignore_ascii_case(a))
            {
                return Err(error(format!(
                    "column `{a}` appears twice (columns {} and {}): which one holds the data is \
                     ambiguous; rename or remove one",
                    i + 1,
                    i + j + 2
                )));
            }
        }
        let mut warnings = Vec::new();
        let mut suggestions = Vec::new();
        for name in names {
            if COLUMNS.iter().any(|c| c.eq_ignore_ascii_case(name)) {
                continue;
            }
            match meant(name) {
                Some(c) if !has(c) => {
                    warnings.push(format!(
                        "{}: line {line}: column `{name}` is not a field-log column and is ignored; \
                         if it holds `{c}`, name it `{c}`",
                        file.display()
                    ));
                    suggestions.push((name.clone(), c));
                }
                _ => warnings.push(format!(
                    "{}: line {line}: column `{name}` is not a field-log column and is ignored \
                     (columns: {})",
                    file.display(),
                    COLUMNS.join(", ")
                )),
            }
        }
        Ok(Self {
            warnings,
            suggestions,
        })
    }
}

/// The field-log column an unknown name most likely stands for: within two
/// edits, or sharing its first four letters (`temp`, `temperature`).
fn meant(name: &str) -> Option<&'static str> {
    let lower = name.to_ascii_lowercase();
    let prefix =
        |c: &str| lower.len() >= 4 && c.len() >= 4 && lower.as_bytes()[..4] == c.as_bytes()[..4];
    COLUMNS
        .iter()
        .map(|c| (edits(&lower, c), *c))
        .filter(|&(d, c)| d <= 2 || prefix(c))
        .min()
        .map(|(_, c)| c)
}

/// Levenshtein distance.
fn edits(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != *cb)).min(row[j] + 1).min(cur + 1);
            prev = cur;
        }
    }
    row[b.len()]
}

/// Input is read in pieces of this size.
const READ_BYTES: usize = 1 << 17;
/// The longest line accepted: a field-log line is a few dozen bytes, so a
/// longer one means the file is not a field log, and the bound keeps the
/// memory bounded whatever the input.
pub const MAX_LINE_BYTES: usize = 1 << 16;

/// Streaming reader of field-log rows; memory stays constant whatever the
/// log's length. Rows come one by one (the iterator) or as blocks of whole
/// lines ([`FieldLogReader::next_block`]) parsed by [`Columns::parse_block`]
/// on worker threads.
///
/// Lines: `\n` or `\r\n` ends a line; a UTF-8 byte-order mark at the start
/// of the file is skipped; lines starting with `#` are comments; empty
/// lines are skipped; every other line is one record (see
/// [`LineSplitter`] for quotes). A record's line number is the line it is
/// on, counting every line of the file from 1.
#[derive(Debug)]
pub struct FieldLogReader<R: Read> {
    input: R,
    file: PathBuf,
    columns: Columns,
    warnings: Vec<String>,
    /// Header columns that are not field-log columns: (index, name).
    unknown: Vec<(usize, String)>,
    /// Bytes read and not yet handed out: `buf[pos..]`.
    buf: Vec<u8>,
    pos: usize,
    /// Line number of `buf[pos]`.
    line: u64,
    eof: bool,
    splitter: LineSplitter,
}

const HINT: &str =
    "a field log needs `cycles` and `ticks`, or `frequency_hz` (see docs/formats.md)";

impl<R: Read> FieldLogReader<R> {
    /// Reads the header of `input`; `file` names it in messages (`-` for
    /// standard input).
    pub fn new(input: R, file: &Path) -> Result<Self, LogError> {
        let mut reader = Self {
            input,
            file: file.to_path_buf(),
            columns: Columns {
                time_s: None,
                channel: None,
                source: Source::Frequency(0),
                temp_c: None,
                ring_count: None,
                comp_cycles: None,
                comp_ticks: None,
                width: 0,
            },
            warnings: Vec::new(),
            unknown: Vec::new(),
            buf: Vec::with_capacity(READ_BYTES),
            pos: 0,
            line: 1,
            eof: false,
            splitter: LineSplitter::default(),
        };
        reader.fill()?;
        if reader.buf.starts_with(b"\xef\xbb\xbf") {
            reader.pos = 3;
        }
        let mut names: Vec<String> = Vec::new();
        let mut header_line = 1;
        while let Some((line, number)) = reader.next_line()? {
            let Some(text) = record_text(line) else {
                continue;
            };
            let text = std::str::from_utf8(text).map_err(|_| not_utf8(file, number))?;
            let mut splitter = LineSplitter::default();
            splitter
                .split(text)
                .map_err(|e| split_error(file, number, e))?;
            names = (0..splitter.len())
                .map(|i| splitter.get(text, i).unwrap_or("").to_string())
                .collect();
            header_line = number;
            break;
        }
        let header = Header::check(&names, file, header_line)?;
        reader.warnings = header.warnings;
        reader.unknown = names
            .iter()
            .enumerate()
            .filter(|(_, n)| !COLUMNS.iter().any(|c| c.eq_ignore_ascii_case(n)))
            .map(|(i, n)| (i, n.clone()))
            .collect();
        let column = |name: &str| names.iter().position(|h| h.eq_ignore_ascii_case(name));
        let require = |name: &'static str| {
            column(name).ok_or_else(
                || match header.suggestions.iter().find(|(_, k)| *k == name) {
                    Some((found, _)) => LogError::Header {
                        file: file.to_path_buf(),
                        line: header_line,
                        message: format!(
                        "header has no `{name}` column; is `{found}` meant to be `{name}`? {HINT}"
                    ),
                    },
                    None => LogError::MissingColumn {
                        file: file.to_path_buf(),
                        column: name,
                        hint: HINT,
                    },
                },
            )
        };
        let source = match (column("frequency_hz"), column("cycles")) {
            (Some(f), None) => Source::Frequency(f),
            _ => Source::Counts {
                cycles: require("cycles")?,
                ticks: require("ticks")?,
            },
        };
        reader.columns = Columns {
            time_s: column("time_s"),
            channel: column("channel"),
            source,
            temp_c: column("temp_c"),
            ring_count: column("ring_count"),
            comp_cycles: column("comp_cycles"),
            comp_ticks: column("comp_ticks"),
            width: names.len(),
        };
        Ok(reader)
    }

    /// What the header check found worth saying without stopping: columns
    /// that are ignored, with the column they may have been meant as.
    pub fn warnings(&self) -> &[String] {
        &self.warnings
    }

    /// The header's columns that are not field-log columns, with their
    /// index in a row (`convert --keep-columns` passes them through).
    pub fn unknown_columns(&self) -> &[(usize, String)] {
        &self.unknown
    }

    /// The resolved header.
    pub fn columns(&self) -> Columns {
        self.columns
    }

    /// The file name used in messages.
    pub fn file(&self) -> &Path {
        &self.file
    }

    /// Reads more input, keeping `buf[pos..]`.
    fn fill(&mut self) -> Result<(), LogError> {
        if self.pos > 0 {
            self.buf.drain(..self.pos);
            self.pos = 0;
        }
        let have = self.buf.len();
        self.buf.resize(have + READ_BYTES, 0);
        let n = loop {
            match self.input.read(&mut self.buf[have..]) {
                Ok(n) => break n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
                Err(source) => {
                    self.buf.truncate(have);
                    return Err(LogError::Io {
                        file: self.file.clone(),
                        source,
                    });
                }
            }
        };
        self.buf.truncate(have + n);
        self.eof = n == 0;
        Ok(())
    }

    /// The next line (without its `\n`) and its number, or `None` at the
    /// end of the input.
    fn next_line(&mut self) -> Result<Option<(&[u8], u64)>, LogError> {
        Ok(self
            .next_line_range()?
            .map(|(start, end, number)| (&self.buf[start..end], number)))
    }

    /// [`Self::next_line`] as a range of `buf`.
    fn next_line_range(&mut self) -> Result<Option<(usize, usize, u64)>, LogError> {
        loop {
            if let Some(k) = memchr::memchr(b'\n', &self.buf[self.pos..]) {
                let start = self.pos;
                self.pos += k + 1;
                let number = self.line;
                self.line += 1;
                return Ok(Some((start, start + k, number)));
            }
            if self.eof {
                if self.pos == self.buf.len() {
                    return Ok(None);
                }
                let start = self.pos;
                self.pos = self.buf.len();
                let number = self.line;
                self.line += 1;
                return Ok(Some((start, self.buf.len(), number)));
            }
            if self.buf.len() - self.pos > MAX_LINE_BYTES {
                return Err(too_long(&self.file, self.line));
            }
            self.fill()?;
        }
    }

    /// Moves whole lines, at least `min_bytes` of them unless the input
    /// ends first, into `block` (cleared first). Returns the line number of
    /// the block's first line, or `None` when the input is exhausted.
    pub fn next_block(
        &mut self,
        block: &mut Vec<u8>,
        min_bytes: usize,
    ) -> Result<Option<u64>, LogError> {
        block.clear();
        let first = self.line;
        loop {
            let rest = &self.buf[self.pos..];
            let whole = if self.eof {
                rest.len()
            } else {
                memchr::memrchr(b'\n', rest).map_or(0, |k| k + 1)
            };
            if whole == 0 && !self.eof && rest.len() > MAX_LINE_BYTES {
                return Err(too_long(&self.file, self.line));
            }
            let taken = &rest[..whole];
            self.line += memchr::memchr_iter(b'\n', taken).count() as u64;
            block.extend_from_slice(taken);
            self.pos += whole;
            if self.eof || block.len() >= min_bytes {
                break;
            }
            self.fill()?;
        }
        Ok((!block.is_empty()).then_some(first))
    }
}

/// A line's record text: `None` for empty lines and comments; a `\r`
/// before the line break is dropped.
fn record_text(line: &[u8]) -> Option<&[u8]> {
    let line = line.strip_suffix(b"\r").unwrap_or(line);
    (!line.is_empty() && line[0] != b'#').then_some(line)
}

fn not_utf8(file: &Path, line: u64) -> LogError {
    LogError::Csv {
        file: file.to_path_buf(),
        line,
        message: "the line is not UTF-8 text; save the log as UTF-8 or ASCII".into(),
    }
}

fn split_error(file: &Path, line: u64, e: SplitError) -> LogError {
    LogError::Csv {
        file: file.to_path_buf(),
        line,
        message: e.to_string(),
    }
}

fn too_long(file: &Path, line: u64) -> LogError {
    LogError::Csv {
        file: file.to_path_buf(),
        line,
        message: format!(
            "line longer than {} KiB: this is not a field log (see docs/formats.md)",
            MAX_LINE_BYTES >> 10
        ),
    }
}

impl Columns {
    /// Parses one line (without its `\n`) numbered `number`: `None` for an
    /// empty line or a comment.
    pub fn parse_line(
        &self,
        file: &Path,
        line: &[u8],
        number: u64,
        splitter: &mut LineSplitter,
    ) -> Option<Result<FieldRow, LogError>> {
        let text = record_text(line)?;
        Some((|| {
            if text.len() > MAX_LINE_BYTES {
                return Err(too_long(file, number));
            }
            let text = std::str::from_utf8(text).map_err(|_| not_utf8(file, number))?;
            splitter
                .split(text)
                .map_err(|e| split_error(file, number, e))?;
            if splitter.len() != self.width {
                return Err(LogError::Csv {
                    file: file.to_path_buf(),
                    line: number,
                    message: format!(
                        "{} fields where the header has {}: a row has one field per column \
                         (leave a field empty, not out)",
                        splitter.len(),
                        self.width
                    ),
                });
            }
            parse(&Row::from_line(file, number, text, splitter), *self)
        })())
    }

    /// Parses a block of whole lines from [`FieldLogReader::next_block`]
    /// whose first line is `first_line`, appending rows and errors to
    /// `out` in line order.
    pub fn parse_block(
        &self,
        file: &Path,
        block: &[u8],
        first_line: u64,
        splitter: &mut LineSplitter,
        out: &mut Vec<Result<FieldRow, LogError>>,
    ) {
        let mut number = first_line;
        let mut start = 0;
        while start < block.len() {
            let end = memchr::memchr(b'\n', &block[start..]).map_or(block.len(), |k| start + k);
            if let Some(row) = self.parse_line(file, &block[start..end], number, splitter) {
                out.push(row);
            }
            number += 1;
            start = end + 1;
        }
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
        let mut splitter = std::mem::take(&mut self.splitter);
        let item = loop {
            match self.next_line_range() {
                Err(e) => break Some(Err(e)),
                Ok(None) => break None,
                Ok(Some((start, end, number))) => {
                    let line = &self.buf[start..end];
                    if let Some(row) = columns.parse_line(&self.file, line, number, &mut splitter) {
                        break Some(row);
                    }
                }
            }
        };
        self.splitter = splitter;
        item
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

    /// Issue 19, item 4: header problems were accepted silently.
    #[test]
    fn header_problems_are_errors_or_warnings() {
        let e = read("cycles,ticks,temp_c,TICKS\n1,2,3,4\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 1: column `ticks` appears twice (columns 2 and 4)"),
            "{e}"
        );
        let e = read("cycles,tick\n1,2\n").unwrap_err().to_string();
        assert!(e.contains("is `tick` meant to be `ticks`?"), "{e}");
        let r = FieldLogReader::new(
            "time_s,cycles,ticks,temperature,note\n0,1,2,25,x\n".as_bytes(),
            Path::new("log.csv"),
        )
        .unwrap();
        let w = r.warnings().join("\n");
        assert!(w.contains("column `temperature` is not a field-log column and is ignored; if it holds `temp_c`, name it `temp_c`"), "{w}");
        assert!(w.contains("column `note` is not a field-log column"), "{w}");
        let clean =
            FieldLogReader::new("time_s,cycles,ticks,temp_c\n".as_bytes(), Path::new("l")).unwrap();
        assert!(clean.warnings().is_empty());
    }

    /// Issue 19, item 4: a short row read its missing fields as empty.
    #[test]
    fn rows_have_one_field_per_column() {
        let rows =
            read("time_s,cycles,ticks,temp_c\n0,4096,19275\n0,4096,19275,25,9\n0,4096,19275,\n")
                .unwrap();
        let e = rows[0].as_ref().unwrap_err().to_string();
        assert!(
            e.contains("line 2: malformed CSV: 3 fields where the header has 4"),
            "{e}"
        );
        assert!(rows[1]
            .as_ref()
            .unwrap_err()
            .to_string()
            .contains("5 fields where the header has 4"));
        assert_eq!(rows[2].as_ref().unwrap().temp_c, None);
    }

    /// Issue 19, item 3: a rig log converted without a word.
    #[test]
    fn a_rig_log_is_not_a_field_log() {
        let e = read(
            "serial,step,temp_c,target,target_unit,cycles,ticks\nA-1,1,25,none,mm,16384,139217\n",
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("this is a rig log") && e.contains("lc-host calibrate"),
            "{e}"
        );
    }

    #[test]
    fn lines_comments_quotes_and_line_ends() {
        let text = "\u{feff}# top\ncycles,ticks,note\r\n4096,19275,\"a, \"\"quoted\"\" note\"\r\n\n# mid\n\"4096\" , 19180 ,x\n4096,19000,\"open\n";
        let rows = read(text).unwrap();
        assert_eq!(rows.len(), 3);
        let r: Vec<_> = rows.iter().take(2).map(|r| r.as_ref().unwrap()).collect();
        assert_eq!(
            (r[0].line, r[0].pair()),
            (3, Some(CountPair::new(4096, 19_275)))
        );
        assert_eq!(
            (r[1].line, r[1].pair()),
            (6, Some(CountPair::new(4096, 19_180)))
        );
        let e = rows[2].as_ref().unwrap_err().to_string();
        assert!(
            e.contains("line 7") && e.contains("quoted field is not closed"),
            "{e}"
        );
        let long = format!("cycles,ticks\n{}\n", "1".repeat(MAX_LINE_BYTES + 10));
        let e = read(&long).unwrap().pop().unwrap().unwrap_err().to_string();
        assert!(e.contains("line 2") && e.contains("not a field log"), "{e}");
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
