//! Capacitive level: shift (or the probe / reference ratio) → level → volume.

use super::{Front, Input, Reader, ReaderError, Reading, SensorFault, Status};
use crate::counting::{FaultWindow, Gating};
use crate::curve::{Curve, CurveStatus};
use crate::drift::TemperatureModel;
use crate::fixed::div_q40;
use crate::geometry::VolumeTable;
use crate::image::Calibration;
use crate::shift::{Shift, ShiftConverter};

/// Level from a capacitive probe in parallel with the tank capacitor.
///
/// - Without a reference electrode the curve maps the probe's shift to the
///   level (a two-point calibration, empty and full, is a two-node curve).
/// - With a reference electrode (the calibration's companion channel: a
///   short electrode that is always submerged), the curve maps the ratio
///   q = s_probe / s_reference to the level. Both shifts grow in proportion
///   to the liquid's permittivity minus one, so q, and the level, do not
///   move when the permittivity drifts with temperature or composition.
///   One division per reading (`fixed::div_q40`, relative error ≤ 3·2^-32).
///   The temperature model, when given a temperature, applies to both.
/// - With a volume table, the level is also turned into a volume (vertical
///   tank: linear; horizontal cylinder or strapping table: the table).
///
/// Below the empty end and above the full end the value is clamped and the
/// status says which.
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LevelReader {
    front: Front,
    reference: Option<(ShiftConverter, FaultWindow, TemperatureModel)>,
    curve: Curve,
    volume: Option<VolumeTable>,
}

impl LevelReader {
    /// From a calibration with a curve (and optionally a reference
    /// electrode and a volume table).
    pub fn new(cal: &Calibration) -> Result<Self, ReaderError> {
        let curve = cal
            .curve
            .ok_or(ReaderError::Incomplete)?
            .curve()
            .map_err(ReaderError::Curve)?;
        let volume = match cal.volume {
            Some((t, _)) => Some(
                t.curve()
                    .and_then(VolumeTable::from_curve)
                    .map_err(ReaderError::Curve)?,
            ),
            None => None,
        };
        let gate = cal.gate();
        let reference = match cal.companion_rest {
            Some(rest) => Some((
                ShiftConverter::new(rest, Gating::Reciprocal, gate).map_err(ReaderError::Shift)?,
                cal.window,
                cal.drift,
            )),
            None => None,
        };
        Ok(Self {
            front: Front::new(cal, false)?,
            reference,
            curve,
            volume,
        })
    }

    fn curve_input(&mut self, input: &Input) -> Result<Shift, SensorFault> {
        let s = self.front.shift(input)?;
        let Some((conv, window, drift)) = &self.reference else {
            return Ok(s);
        };
        let pair = input.companion.ok_or(SensorFault::Companion(None))?;
        let pair = window
            .check(pair)
            .map_err(|e| SensorFault::Companion(Some(e)))?;
        let r = conv.shift(pair).map_err(SensorFault::Shift)?;
        let r = match input.temperature {
            Some(t) => drift.compensate(r, t),
            None => r,
        };
        if r.raw_q40() <= 0 {
            return Err(SensorFault::Reference);
        }
        div_q40(s.raw_q40(), r.raw_q40())
            .map(Shift::from_raw_q40)
            .ok_or(SensorFault::Reference)
    }

    /// One reading: the level, and the volume as `secondary` when the
    /// calibration has a volume table.
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
            (Some((conv, _, drift)), Some(pair)) => {
                let r = conv.shift_f64(pair);
                let r = match input.temperature {
                    Some(t) => drift.compensate_f64(r, t.to_f64()),
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
