//! Capacitive level: shift (or the probe / reference ratio) → level → volume.

use super::{Front, Input, Reader, ReaderError, Reading, SensorFault, Status};
use crate::counting::Gating;
use crate::curve::{Curve, CurveStatus};
use crate::fixed::div_q40_by_positive;
use crate::geometry::VolumeTable;
use crate::image::Calibration;
use crate::shift::{Shift, ShiftConverter};
use crate::temperature::CentiCelsius;

/// Level from a capacitive probe in parallel with the tank capacitor.
///
/// - Without a reference electrode the curve maps the probe's shift to the
///   level (a two-point calibration, empty and full, is a two-node curve).
/// - With a reference electrode (the calibration's companion channel: a
///   short electrode that is always submerged), the curve maps the ratio
///   q = s_probe / s_reference to the level. Both shifts grow in proportion
///   to the liquid's permittivity minus one, so q, and the level, do not
///   move when the permittivity drifts with temperature or composition.
///   One division per reading (`fixed::div_q40`'s: a reciprocal and a
///   product, relative error ≤ 2^-27).
///   The temperature model, when given a temperature, applies to both, in
///   its offset form: the ratio of the compensated shifts is
///   (s − h)/(r − h) with h = 1/(1 + g) − 1 computed once per temperature
///   ([`DriftFactor::offset`](crate::drift::DriftFactor::offset)), so a
///   reading subtracts h from each shift instead of compensating each.
/// - With a volume table, the level is also turned into a volume (vertical
///   tank: linear; horizontal cylinder or strapping table: the table).
///
/// Below the empty end and above the full end the value is clamped and the
/// status says which.
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LevelReader {
    front: Front,
    /// The reference electrode's converter (its fault window and
    /// temperature model are the probe's).
    reference: Option<ShiftConverter>,
    curve: Curve,
    volume: Option<VolumeTable>,
    /// The drift model's offset form at the last temperature seen (ratio
    /// path): h = 1/(1 + g) − 1
    /// ([`DriftFactor::offset`](crate::drift::DriftFactor::offset)).
    offset_cache: Option<(CentiCelsius, i64)>,
}

impl LevelReader {
    /// From a calibration with a curve (and optionally a reference
    /// electrode and a volume table).
    pub fn new(cal: &Calibration) -> Result<Self, ReaderError> {
        let (front, reference) = Self::parts(cal)?;
        let mut r = Self::from_parts(front, reference);
        r.fill(cal)?;
        Ok(r)
    }

    /// What the reader needs besides its curves (small values only):
    /// [`Reader::from_calibration`] builds the reader inside the enum from
    /// these and then fills the curves in place, so no 2 KB temporaries
    /// land on the stack.
    pub(super) fn parts(cal: &Calibration) -> Result<(Front, Option<ShiftConverter>), ReaderError> {
        if cal.curve.is_none() {
            return Err(ReaderError::Incomplete);
        }
        let gate = cal.gate();
        let reference = match cal.companion_rest {
            Some(rest) => Some(
                ShiftConverter::new(rest, Gating::Reciprocal, gate).map_err(ReaderError::Shift)?,
            ),
            None => None,
        };
        Ok((Front::new(cal, false)?, reference))
    }

    /// The reader from its parts, its curves empty until [`Self::fill`].
    #[inline(always)]
    pub(super) fn from_parts(front: Front, reference: Option<ShiftConverter>) -> Self {
        Self {
            front,
            reference,
            curve: Curve::PLACEHOLDER,
            volume: None,
            offset_cache: None,
        }
    }

    /// Builds the level curve and the volume table of `cal` in place.
    pub(super) fn fill(&mut self, cal: &Calibration) -> Result<(), ReaderError> {
        let table = cal.curve.as_ref().ok_or(ReaderError::Incomplete)?;
        table
            .build_curve(&mut self.curve)
            .map_err(ReaderError::Curve)?;
        if let Some((t, _)) = &cal.volume {
            let volume = self.volume.insert(VolumeTable::PLACEHOLDER);
            volume.rebuild(t).map_err(ReaderError::Curve)?;
        }
        Ok(())
    }

    /// The drift model's offset at `t` (Q.40), from the cache when `t` is
    /// unchanged (that check inlined into the reading).
    #[inline(always)]
    fn offset(&mut self, t: CentiCelsius) -> i64 {
        match self.offset_cache {
            Some((last, h)) if last == t => h,
            _ => self.new_offset(t),
        }
    }

    /// The offset at a new temperature, cached.
    #[inline(never)]
    fn new_offset(&mut self, t: CentiCelsius) -> i64 {
        let h = self.front.drift.factor(t).offset().raw_q40();
        self.offset_cache = Some((t, h));
        h
    }

    fn curve_input(&mut self, input: &Input) -> Result<Shift, SensorFault> {
        let Some(conv) = &self.reference else {
            return self.front.shift(input);
        };
        // The reference electrode shares the probe's fault window, gate and
        // temperature model: its check goes through the same tick band.
        let s = self.front.raw_shift(input.pair)?;
        let pair = input.companion.ok_or(SensorFault::Companion(None))?;
        let r = self
            .front
            .checked_shift(conv, pair, |e| SensorFault::Companion(Some(e)))?;
        // Both compensated: ((1+s)(1+g) − 1)/((1+r)(1+g) − 1) = (s − h)/(r − h)
        // with h = 1/(1 + g) − 1 (`DriftFactor::offset`). Shifts lie below
        // 2^62 (Q.40 of r² < 2^22) and |h| ≤ 2^40: no overflow.
        let (s, r) = (s.raw_q40(), r.raw_q40());
        let (s, r) = match input.temperature {
            Some(t) => {
                let h = self.offset(t);
                (s.wrapping_sub(h), r.wrapping_sub(h))
            }
            None => (s, r),
        };
        if r <= 0 {
            return Err(SensorFault::Reference);
        }
        div_q40_by_positive(s, r.unsigned_abs())
            .map(Shift::from_raw_q40)
            .ok_or(SensorFault::Reference)
    }

    /// One reading: the level, and the volume as `secondary` when the
    /// calibration has a volume table.
    #[inline(never)]
    pub fn read(&mut self, input: &Input) -> Reading {
        let x = match self.curve_input(input) {
            Ok(x) => x,
            Err(f) => return Reading::fault(f),
        };
        let v = self.curve.eval(x);
        let status = match v.status {
            CurveStatus::InRange => Status::Ok,
            CurveStatus::BelowRange => Status::BelowRange,
            CurveStatus::AboveRange => Status::AboveRange,
        };
        let secondary = self.volume.as_ref().map(|vol| vol.volume(v.value).value);
        Reading {
            value: v.value,
            secondary,
            shift: x,
            status,
        }
    }

    /// `f64` twin: (level, volume) in output units, unrounded (assumes the
    /// fault window passes).
    pub fn read_f64(&self, input: &Input) -> (f64, Option<f64>) {
        let s = self.front.shift_f64(input);
        let x = match (&self.reference, input.companion) {
            (Some(conv), Some(pair)) => {
                let r = conv.shift_f64(pair);
                let r = match input.temperature {
                    Some(t) => self.front.drift.compensate_f64(r, t.to_f64()),
                    None => r,
                };
                s / r
            }
            _ => s,
        };
        let level = self.curve.eval_f64(x);
        let volume = self.volume.as_ref().map(|v| v.volume_f64(level));
        (level, volume)
    }
}

impl From<LevelReader> for Reader {
    fn from(r: LevelReader) -> Self {
        Reader::Level(r)
    }
}
