//! Inductive proximity: shift → gap.

use core::mem::MaybeUninit;

use super::{Front, Input, ReaderError, SensorFault, Status};
use crate::curve::{CurveRef, CurveStatus};
use crate::image::{Image, ReaderKind};
use crate::shift::Shift;

/// A proximity reading.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ProximityReading {
    /// The gap in the image's output units (raw; scale in the image),
    /// clamped to the curve's ends; 0 on a sensor fault.
    pub gap: i32,
    /// The shift the gap came from, after drift compensation.
    pub shift: Shift,
    /// Status.
    pub status: Status,
}

impl ProximityReading {
    const fn fault(f: SensorFault) -> Self {
        Self {
            gap: 0,
            shift: Shift::ZERO,
            status: Status::SensorFault(f),
        }
    }
}

/// Shift → gap through the unit's curve, read in place from the image.
///
/// Beyond the farthest calibrated gap the status is [`Status::NoTarget`]
/// (nothing within range), closer than the nearest it is
/// [`Status::BelowRange`]; the gap is clamped to the table's end.
///
/// End-to-end bound against [`ProximityReader::read_f64`] (same image):
/// 0.5 output units (the rounding) + the curve's segment term + |dy/ds|
/// times the shift and drift bounds (docs/numerics.md).
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ProximityReader<'a> {
    pub(super) front: Front,
    curve: CurveRef<'a>,
}

impl<'a> ProximityReader<'a> {
    /// The reader of a proximity image ([`ReaderError::WrongKind`] for
    /// another kind). Cost: its front (fault window, converter, drift
    /// model, the fault window's tick band at the gate) built from the
    /// image's fields, no validation (done by [`Image::new`] or
    /// [`Image::new_proximity`]): under 2 000 Cortex-M0 instructions. RAM:
    /// 168 bytes on a 32-bit target, whatever the curve's node count (the
    /// crate docs, "Memory"); stack: the same, once.
    pub fn new(image: &Image<'a>) -> Result<Self, ReaderError> {
        Self::build(image, |reader| reader)
    }

    /// [`ProximityReader::new`] built in place, in storage the caller
    /// provides (a static, a C API's opaque storage): the kind is checked
    /// first, then the reader is written straight into `slot`, so no
    /// `Result<Self, _>` and no second copy of the reader is made. Returns
    /// the reader in `slot`; on [`ReaderError::WrongKind`] `slot` is left
    /// as it was (uninitialised). Cost: as [`ProximityReader::new`]. RAM:
    /// `slot` (168 bytes on a 32-bit target, the crate docs, "Memory");
    /// stack: the front's builders only (no reader-sized temporary).
    pub fn init<'s>(
        slot: &'s mut MaybeUninit<Self>,
        image: &Image<'a>,
    ) -> Result<&'s mut Self, ReaderError> {
        Self::build(image, |reader| slot.write(reader))
    }

    /// The one field list of [`ProximityReader::new`] and
    /// [`ProximityReader::init`]: the kind checked, then the reader built
    /// and handed to `put` (returned as it is, or written into a slot).
    /// Inlined into both, so each writes the fields straight to where the
    /// reader lives.
    #[inline(always)]
    fn build<R>(image: &Image<'a>, put: impl FnOnce(Self) -> R) -> Result<R, ReaderError> {
        match (image.kind(), image.curve()) {
            (ReaderKind::Proximity, Some(curve)) => Ok(put(Self {
                front: image.front(),
                curve,
            })),
            (kind, _) => Err(ReaderError::WrongKind(kind)),
        }
    }

    /// The curve, as the image holds it.
    pub fn curve(&self) -> CurveRef<'a> {
        self.curve
    }

    /// One reading.
    #[inline(never)]
    pub fn read(&mut self, input: &Input) -> ProximityReading {
        let s = match self.front.shift(input) {
            Ok(s) => s,
            Err(f) => return ProximityReading::fault(f),
        };
        let v = self.curve.eval(s);
        if !self.curve.within_reach(s.raw_q40(), v.status) {
            return ProximityReading::fault(SensorFault::OutOfReach);
        }
        // The far end of the table is the high one when the values rise.
        let status = match (v.status, self.curve.is_rising()) {
            (CurveStatus::InRange, _) => Status::Ok,
            (CurveStatus::AboveRange, true) | (CurveStatus::BelowRange, false) => Status::NoTarget,
            _ => Status::BelowRange,
        };
        ProximityReading {
            gap: v.value,
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
