//! Streaming a field log through a per-row conversion into CSV, in constant
//! memory: the driver shared by `counts` and `convert`.

use crate::fieldlog::{FieldLogReader, FieldRow, LogError};
use std::io::{Read, Write};

/// What to do with a row that does not parse.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OnBadRow {
    /// Stop at the first bad row with its error.
    Stop,
    /// Skip it, count it, and report it in the summary.
    Skip,
}

/// Totals of one conversion run.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Summary {
    /// Rows converted (any status).
    pub rows: u64,
    /// Rows with status `ok`.
    pub ok: u64,
    /// Rows with a value outside the calibrated range, or no target.
    pub out_of_range: u64,
    /// Rows without a value: sensor faults.
    pub faults: u64,
    /// Rows that did not parse and were skipped.
    pub skipped: u64,
    /// The first skipped row's message, for the summary line.
    pub first_skip: Option<String>,
}

/// Errors of a conversion run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// A bad input row, with `--on-bad-row stop`.
    #[error(transparent)]
    Log(#[from] LogError),
    /// `counts` needs count pairs; the log has frequencies.
    #[error("line {line}: this log has frequencies, not count pairs; use `lc-host convert` with a calibration image")]
    NeedsCounts {
        /// Line.
        line: u64,
    },
    /// Writing the output failed.
    #[error("cannot write output: {0}")]
    Write(#[from] std::io::Error),
}

/// An optional value as a CSV field ("" for `None`).
pub fn opt<T: std::fmt::Display>(v: Option<T>) -> String {
    v.map_or_else(String::new, |v| v.to_string())
}

/// An optional decimal with a fixed number of decimals.
pub fn fixed(v: Option<f64>, decimals: usize) -> String {
    v.map_or_else(String::new, |v| format!("{v:.decimals$}"))
}

/// How a converted row came out.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RowClass {
    /// A good value.
    Ok,
    /// A value, clamped to the calibrated range, or no target.
    OutOfRange,
    /// No value: a sensor fault.
    Fault,
}

/// Streams `reader` into `out`: writes `header`, then for each row calls
/// `row_fn`, which writes the row's fields (without the newline) and says
/// how the row came out. `progress` gets the input line every
/// 65 536 rows. Bad rows stop or are skipped as `on_bad_row` says.
pub fn stream_log<R: Read, W: Write>(
    reader: FieldLogReader<R>,
    mut out: W,
    header: &str,
    on_bad_row: OnBadRow,
    mut progress: impl FnMut(u64),
    mut row_fn: impl FnMut(&FieldRow, &mut W) -> Result<RowClass, RunError>,
) -> Result<Summary, RunError> {
    let mut summary = Summary::default();
    writeln!(out, "{header}")?;
    for item in reader {
        let row = match item {
            Ok(r) => r,
            Err(e) if on_bad_row == OnBadRow::Skip => {
                summary.skipped += 1;
                summary.first_skip.get_or_insert_with(|| e.to_string());
                continue;
            }
            Err(e) => return Err(e.into()),
        };
        let class = row_fn(&row, &mut out)?;
        writeln!(out)?;
        summary.rows += 1;
        match class {
            RowClass::Ok => summary.ok += 1,
            RowClass::OutOfRange => summary.out_of_range += 1,
            RowClass::Fault => summary.faults += 1,
        }
        if summary.rows % 65_536 == 0 {
            progress(row.line);
        }
    }
    out.flush()?;
    Ok(summary)
}
