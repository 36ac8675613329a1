//! Count pairs to frequency, period ratio, shift and quantisation step,
//! through `lc-core`'s own fixed-point path (the firmware's arithmetic),
//! with the `f64` reference beside it on request.

use crate::fieldlog::{FieldLogReader, FieldRow};
use crate::stream::{fixed, opt, stream_log, RowClass, Threads};
pub use crate::stream::{OnBadRow, RunError, Summary};
use lc_core::counting::{CountPair, FaultError, FaultWindow, Gating};
use lc_core::ratio::{frequency, period_ratio};
use lc_core::reader::FrozenCounter;
use lc_core::shift::{RestPoint, ShiftConverter, ShiftError};
use std::io::{Read, Write};

/// Why a conversion setup was refused.
#[derive(Debug, thiserror::Error, PartialEq, Eq)]
pub enum ConfigError {
    /// The reference frequency is zero.
    #[error("reference frequency must be at least 1 Hz")]
    ZeroReference,
    /// The rest point is unusable.
    #[error("rest point {0}: {1}; give the unit's no-target counts as CYCLES:TICKS")]
    RestPoint(CountPair, ShiftError),
}

/// Status of one converted row.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RowStatus {
    /// A plausible reading.
    Ok,
    /// Rejected by the fault window.
    Fault(FaultError),
    /// The shift could not be represented.
    Shift(ShiftError),
    /// The same count pair [`lc_core::reader::DEFAULT_FROZEN_LIMIT`] times
    /// in a row on one channel: a frozen counter, flagged as the unit's
    /// reader flags it ([`lc_core::reader::FrozenCounter`]).
    Frozen,
}

impl RowStatus {
    /// A short, stable name for logs and CSV: the words `convert` writes
    /// for the same conditions ([`crate::status`]).
    pub fn name(&self) -> &'static str {
        match self {
            RowStatus::Ok => "ok",
            RowStatus::Fault(e) => crate::status::fault_word(*e),
            RowStatus::Shift(e) => crate::status::shift_word(*e),
            RowStatus::Frozen => crate::status::FAULT_FROZEN,
        }
    }
}

/// One converted count pair. Values are `None` where the status forbids
/// them.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CountsRow {
    /// The input pair.
    pub pair: CountPair,
    /// Fault-window and conversion status.
    pub status: RowStatus,
    /// Frequency in hertz (from the Q32.32 value).
    pub frequency_hz: Option<f64>,
    /// Period ratio, ticks per cycle (from the Q20.44 value).
    pub period_ratio: Option<f64>,
    /// Raw Q23.40 shift, bit-exact with the firmware.
    pub shift_q40: Option<i64>,
    /// Shift in parts per million.
    pub shift_ppm: Option<f64>,
    /// Quantisation step of the shift, parts per million.
    pub step_ppm: Option<f64>,
    /// `f64` reference shift in ppm.
    pub shift_ppm_f64: Option<f64>,
}

/// What to convert with: reference clock, rest point, gate and fault window.
#[derive(Clone, Copy, Debug)]
pub struct CountsConfig {
    reference_hz: u32,
    converter: ShiftConverter,
    window: FaultWindow,
}

impl CountsConfig {
    /// Reference clock in hertz, the unit's rest point as a count pair, an
    /// optional reciprocal gate length in sensor cycles, and an optional
    /// fault window (by default: any frequency, at least one cycle).
    pub fn new(
        reference_hz: u32,
        rest: CountPair,
        gate_cycles: Option<u32>,
        window: Option<FaultWindow>,
    ) -> Result<Self, ConfigError> {
        let default_window = FaultWindow::new(reference_hz, 0, u32::MAX, 1)
            .map_err(|_| ConfigError::ZeroReference)?;
        let rest_point =
            RestPoint::from_counts(rest).map_err(|e| ConfigError::RestPoint(rest, e))?;
        let converter = ShiftConverter::new(rest_point, Gating::Reciprocal, gate_cycles)
            .map_err(|e| ConfigError::RestPoint(rest, e))?;
        Ok(Self {
            reference_hz,
            converter,
            window: window.unwrap_or(default_window),
        })
    }

    /// Whether `pair` passes the fault window and forms a shift (the rows
    /// the frozen-counter check counts).
    pub fn passes(&self, pair: CountPair) -> bool {
        self.window.check(pair).is_ok() && self.converter.shift(pair).is_ok()
    }

    /// Converts one pair exactly as the firmware does.
    pub fn convert(&self, pair: CountPair) -> CountsRow {
        let mut row = CountsRow {
            pair,
            status: RowStatus::Ok,
            frequency_hz: None,
            period_ratio: None,
            shift_q40: None,
            shift_ppm: None,
            step_ppm: None,
            shift_ppm_f64: None,
        };
        if let Err(e) = self.window.check(pair) {
            row.status = RowStatus::Fault(e);
            return row;
        }
        row.frequency_hz = frequency(pair, self.reference_hz)
            .ok()
            .map(|f| f.to_hz_f64());
        row.period_ratio = period_ratio(pair).ok().map(|p| p.to_f64());
        row.shift_ppm_f64 = Some(self.converter.shift_f64(pair) * 1e6);
        match self.converter.convert(pair) {
            Ok(r) => {
                row.shift_q40 = Some(r.shift().raw_q40());
                row.shift_ppm = Some(r.shift().to_ppm_f64());
                row.step_ppm = Some(r.quantisation_step().to_ppm_f64());
            }
            Err(e) => row.status = RowStatus::Shift(e),
        }
        row
    }
}

/// The CSV header written by [`convert_log`].
pub const OUTPUT_HEADER: &str =
    "line,time_s,channel,cycles,ticks,status,frequency_hz,period_ratio,shift_q40,shift_ppm,step_ppm";

/// Streams a field log through [`CountsConfig::convert`] into CSV. With
/// `with_f64`, two columns more: the `f64` reference shift and the
/// difference fixed − reference, both in ppm. `progress` is called with the
/// number of input lines read so far, every 65 536 rows.
pub fn convert_log<R: Read, W: Write>(
    reader: FieldLogReader<R>,
    out: W,
    cfg: &CountsConfig,
    on_bad_row: OnBadRow,
    with_f64: bool,
    progress: impl FnMut(u64),
) -> Result<Summary, RunError> {
    let header = if with_f64 {
        format!("{OUTPUT_HEADER},shift_ppm_f64,diff_ppm")
    } else {
        OUTPUT_HEADER.to_string()
    };
    // The frozen-counter run of each channel, in input order, as each
    // channel's reader on the unit keeps it.
    let mut runs: Vec<FrozenCounter> = vec![FrozenCounter::default(); 257];
    // Only pairs that pass the window and form a shift count, as in the
    // reader.
    let in_order = move |row: &FieldRow| match row.pair() {
        Some(pair) if cfg.passes(pair) => runs[row.channel.map_or(256, usize::from)].observe(pair),
        _ => false,
    };
    let format = |row: &FieldRow, frozen: &mut bool, _: &[u8], out: &mut Vec<u8>| {
        let Some(pair) = row.pair() else {
            return Err(RunError::NeedsCounts { line: row.line });
        };
        let mut c = cfg.convert(pair);
        // After the window and the shift, as the reader checks it.
        if *frozen && c.status == RowStatus::Ok {
            c.status = RowStatus::Frozen;
        }
        write!(
            out,
            "{},{},{},{},{},{},{},{},{},{},{}",
            row.line,
            opt(row.time_s),
            opt(row.channel),
            pair.cycles,
            pair.ticks,
            c.status.name(),
            fixed(c.frequency_hz, 6),
            fixed(c.period_ratio, 12),
            opt(c.shift_q40),
            fixed(c.shift_ppm, 6),
            fixed(c.step_ppm, 6),
        )?;
        if with_f64 {
            let diff = c.shift_ppm.zip(c.shift_ppm_f64).map(|(a, b)| a - b);
            write!(
                out,
                ",{},{}",
                fixed(c.shift_ppm_f64, 6),
                opt(diff.map(|d| format!("{d:.3e}")))
            )?;
        }
        Ok(match c.status {
            RowStatus::Ok => RowClass::Ok,
            RowStatus::Fault(_) | RowStatus::Shift(_) | RowStatus::Frozen => RowClass::Fault,
        })
    };
    stream_log(
        reader,
        out,
        &header,
        on_bad_row,
        Threads::default(),
        false,
        in_order,
        format,
        progress,
        |_, _| {},
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::Path;

    fn cfg() -> CountsConfig {
        let window = FaultWindow::new(16_000_000, 1_000_000, 8_000_000, 64).unwrap();
        CountsConfig::new(
            16_000_000,
            CountPair::new(4096, 19_275),
            Some(4096),
            Some(window),
        )
        .unwrap()
    }

    #[test]
    fn converts_with_the_firmware_path() {
        let c = cfg();
        let row = c.convert(CountPair::new(4096, 19_275));
        assert_eq!((row.status, row.shift_q40), (RowStatus::Ok, Some(0)));
        let row = c.convert(CountPair::new(0, 19_275));
        assert_eq!(row.status.name(), "fault_no_oscillation");
        assert_eq!(row.shift_q40, None);
        let row = c.convert(CountPair::new(4096, 19_180));
        let s = row.shift_ppm.unwrap();
        assert!((s - row.shift_ppm_f64.unwrap()).abs() < 1e-3);
        assert!((s - ((19_180.0f64 / 19_275.0).powi(2) - 1.0) * 1e6).abs() < 1e-3);
    }

    #[test]
    fn bad_rows_stop_or_are_skipped() {
        let text = "cycles,ticks\n4096,19275\n4096,x\n4096,19180\n";
        let reader = FieldLogReader::new(text.as_bytes(), Path::new("f.csv")).unwrap();
        let err =
            convert_log(reader, Vec::new(), &cfg(), OnBadRow::Stop, false, |_| {}).unwrap_err();
        assert!(
            err.to_string().contains("f.csv: line 3: field `ticks`"),
            "{err}"
        );
        let reader = FieldLogReader::new(text.as_bytes(), Path::new("f.csv")).unwrap();
        let mut out = Vec::new();
        let s = convert_log(reader, &mut out, &cfg(), OnBadRow::Skip, true, |_| {}).unwrap();
        assert_eq!((s.rows, s.ok, s.skipped), (2, 2, 1));
        let text = String::from_utf8(out).unwrap();
        assert_eq!(text.lines().count(), 3);
        assert!(text
            .lines()
            .next()
            .unwrap()
            .ends_with("shift_ppm_f64,diff_ppm"));
    }

    #[test]
    fn bad_rest_point_is_explained() {
        let e = CountsConfig::new(16_000_000, CountPair::new(0, 1), None, None).unwrap_err();
        assert!(e.to_string().contains("CYCLES:TICKS"));
        assert_eq!(
            CountsConfig::new(0, CountPair::new(1, 1), None, None).unwrap_err(),
            ConfigError::ZeroReference
        );
    }
}
