//! Inductive proximity: shift → gap.

use super::{Front, Input, Reader, ReaderError, Reading, Status};
use crate::curve::{Curve, CurveStatus};
use crate::image::Calibration;

/// Shift → gap through the unit's curve.
///
/// Beyond the farthest calibrated gap the status is [`Status::NoTarget`]
/// (nothing within range), closer than the nearest it is
/// [`Status::BelowRange`]; the value is clamped to the table's end.
///
/// End-to-end bound against [`ProximityReader::read_f64`] (same
/// calibration): 0.5 output units (the rounding) + the curve's segment term
/// + |dy/ds| times the shift and drift bounds (docs/numerics.md).
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ProximityReader {
    front: Front,
    curve: Curve,
}

impl ProximityReader {
    /// From a calibration with a curve.
    pub fn new(cal: &Calibration) -> Result<Self, ReaderError> {
        let mut r = Self::from_parts(Self::parts(cal)?);
        r.fill(cal)?;
        Ok(r)
    }

    /// What the reader needs besides its curve (small values only):
    /// [`Reader::from_calibration`] builds the reader inside the enum from
    /// these and then fills the curve in place, so no 2 KB temporary lands
    /// on the stack.
    pub(super) fn parts(cal: &Calibration) -> Result<Front, ReaderError> {
        let table = cal.curve.as_ref().ok_or(ReaderError::Incomplete)?;
        if table.nodes().is_empty() {
            return Err(ReaderError::Incomplete);
        }
        Front::new(cal, true)
    }

    /// The reader from its parts, its curve empty until [`Self::fill`].
    #[inline(always)]
    pub(super) fn from_parts(front: Front) -> Self {
        Self {
            front,
            curve: Curve::PLACEHOLDER,
        }
    }

    /// Builds the curve of `cal` in place.
    pub(super) fn fill(&mut self, cal: &Calibration) -> Result<(), ReaderError> {
        let table = cal.curve.as_ref().ok_or(ReaderError::Incomplete)?;
        table
            .build_curve(&mut self.curve)
            .map_err(ReaderError::Curve)
    }

    /// One reading.
    #[inline(never)]
    pub fn read(&mut self, input: &Input) -> Reading {
        let s = match self.front.shift(input) {
            Ok(s) => s,
            Err(f) => return Reading::fault(f),
        };
        let v = self.curve.eval(s);
        // The far end of the table is the high one when the values rise.
        let status = match (v.status, self.curve.is_rising()) {
            (CurveStatus::InRange, _) => Status::Ok,
            (CurveStatus::AboveRange, true) | (CurveStatus::BelowRange, false) => Status::NoTarget,
            _ => Status::BelowRange,
        };
        Reading {
            value: v.value,
            secondary: None,
            shift: s,
            status,
        }
    }

    /// `f64` twin: the gap in output units, unrounded (assumes the fault
    /// window passes).
    pub fn read_f64(&self, input: &Input) -> f64 {
        self.curve.eval_f64(self.front.shift_f64(input))
    }
}

impl From<ProximityReader> for Reader {
    fn from(r: ProximityReader) -> Self {
        Reader::Proximity(r)
    }
}
