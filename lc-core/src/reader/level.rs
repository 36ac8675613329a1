//! Capacitive level: shift (or the probe / reference ratio) → level → volume.

use core::marker::PhantomData;
use core::mem::MaybeUninit;

use super::{Front, Input, ReaderError, SensorFault, Status};
use crate::counting::CountPair;
use crate::curve::{CurveRef, CurveStatus};
use crate::fixed::div_q40_by_positive;
use crate::image::{Image, ReaderKind};
use crate::shift::{Shift, ShiftConverter};
use crate::temperature::CentiCelsius;

/// The probe / reference-electrode ratio q = s_probe / s_reference, Q23.40
/// (dimensionless).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ProbeRatio(i64);

impl ProbeRatio {
    /// From the raw Q23.40 value.
    pub const fn from_raw_q40(raw: i64) -> Self {
        Self(raw)
    }

    /// The raw Q23.40 value.
    pub const fn raw_q40(self) -> i64 {
        self.0
    }

    /// As `f64`.
    pub fn to_f64(self) -> f64 {
        self.0 as f64 / 1_099_511_627_776.0
    }
}

/// What the level curve was evaluated at.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum LevelAxis {
    /// The probe's drift-compensated shift (no reference electrode).
    Shift(Shift),
    /// The probe / reference ratio (with a reference electrode).
    Ratio(ProbeRatio),
}

impl LevelAxis {
    /// The raw Q23.40 value, shift or ratio.
    pub const fn raw_q40(self) -> i64 {
        match self {
            LevelAxis::Shift(s) => s.raw_q40(),
            LevelAxis::Ratio(q) => q.raw_q40(),
        }
    }
}

/// A level reading.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LevelReading {
    /// The level in the image's output units (raw; scale in the image),
    /// clamped to the curve's ends; 0 on a sensor fault.
    pub level: i32,
    /// The volume at that level in the volume table's units, when the
    /// image has a volume table (and the reading no sensor fault).
    pub volume: Option<i32>,
    /// What the curve was evaluated at.
    pub axis: LevelAxis,
    /// Status.
    pub status: Status,
}

/// The electrodes of the level units a reader is built for: a type
/// parameter of [`LevelReader`], so a firmware for one kind of hardware
/// links the reading path of that kind only.
///
/// - [`AnyElectrodes`] (the default): whichever the image says; both
///   paths are linked.
/// - [`WithReference`]: a probe and a reference electrode (the level from
///   the ratio of their shifts); the probe-only path is left out.
/// - [`ProbeOnly`]: a probe without a reference electrode (the level from
///   the probe's drift-compensated shift); the ratio path is left out.
///
/// A reader for one arrangement refuses an image of the other with
/// [`ReaderError::WrongElectrodes`]. Implemented by these three types only.
pub trait Electrodes: Copy + sealed::Sealed {
    /// `Some(true)`: with a reference electrode; `Some(false)`: the probe
    /// only; `None`: either, as the image says.
    #[doc(hidden)]
    const REFERENCE: Option<bool>;
}

mod sealed {
    pub trait Sealed {}
    impl Sealed for super::AnyElectrodes {}
    impl Sealed for super::WithReference {}
    impl Sealed for super::ProbeOnly {}
}

/// [`Electrodes`]: a level unit with or without a reference electrode, as
/// its image says (the default of [`LevelReader`]; links both reading
/// paths).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct AnyElectrodes;

/// [`Electrodes`]: a level unit with a probe and a reference electrode
/// (the image has the reference electrode's rest point); links the ratio
/// path only.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct WithReference;

/// [`Electrodes`]: a level unit with a probe and no reference electrode;
/// links the probe's drift-compensated shift path only.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ProbeOnly;

impl Electrodes for AnyElectrodes {
    const REFERENCE: Option<bool> = None;
}

impl Electrodes for WithReference {
    const REFERENCE: Option<bool> = Some(true);
}

impl Electrodes for ProbeOnly {
    const REFERENCE: Option<bool> = Some(false);
}

/// Level from a capacitive probe in parallel with the tank capacitor.
///
/// - Without a reference electrode the curve maps the probe's shift to the
///   level (a two-point calibration, empty and full, is a two-node curve).
/// - With a reference electrode (the image's companion channel: a short
///   electrode that is always submerged), the curve maps the ratio
///   q = s_probe / s_reference to the level. Both shifts grow in proportion
///   to the liquid's permittivity minus one, so q, and the level, do not
///   move when the permittivity drifts with temperature or composition.
///   One division per reading (a reciprocal and a product, relative error
///   ≤ 2^-27).
///   The temperature model, when given a temperature, applies to both, in
///   its offset form: the ratio of the compensated shifts is
///   (s − h)/(r − h) with h = 1/(1 + g) − 1 computed once per temperature
///   ([`DriftFactor::offset`](crate::drift::DriftFactor::offset)), so a
///   reading subtracts h from each shift instead of compensating each.
/// - With a volume table, the level is also turned into a volume (vertical
///   tank: linear; horizontal cylinder or strapping table: the table).
///
/// Below the empty end and above the full end the level is clamped and the
/// status says which.
///
/// `E` fixes the electrodes when the firmware is built ([`Electrodes`]):
/// [`LevelReader::new`] builds the default, for either arrangement;
/// [`LevelReader::with_electrodes`] a reader for one, which links that
/// arrangement's reading path only (a level firmware for a unit with a
/// reference electrode: about 570 bytes of flash less).
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LevelReader<'a, E: Electrodes = AnyElectrodes> {
    pub(super) front: Front,
    /// The reference electrode's converter (its fault window and
    /// temperature model are the probe's).
    reference: Option<ShiftConverter>,
    curve: CurveRef<'a>,
    volume: Option<CurveRef<'a>>,
    /// The drift model's offset form at the last temperature seen (ratio
    /// path): h = 1/(1 + g) − 1.
    offset_cache: Option<(CentiCelsius, i64)>,
    electrodes: PhantomData<E>,
}

impl<'a> LevelReader<'a> {
    /// The reader of a level image, with or without a reference electrode
    /// ([`ReaderError::WrongKind`] for another kind). Cost: its front and
    /// converters built from the image's fields, no validation. RAM: 248
    /// bytes on a 32-bit target, whatever the tables' node counts (the
    /// crate docs, "Memory"); stack: the same, once.
    pub fn new(image: &Image<'a>) -> Result<Self, ReaderError> {
        Self::with_electrodes(image, AnyElectrodes)
    }

    /// [`LevelReader::new`] built in place, in storage the caller provides
    /// (a static, a C API's opaque storage): the kind is checked first,
    /// then the reader is written straight into `slot`, so no
    /// `Result<Self, _>` and no second copy of the reader is made. Returns
    /// the reader in `slot`; on [`ReaderError::WrongKind`] `slot` is left
    /// as it was (uninitialised). Cost: as [`LevelReader::new`]. RAM:
    /// `slot` (248 bytes on a 32-bit target, the crate docs, "Memory");
    /// stack: the front's builders only (no reader-sized temporary).
    pub fn init<'s>(
        slot: &'s mut MaybeUninit<Self>,
        image: &Image<'a>,
    ) -> Result<&'s mut Self, ReaderError> {
        Self::init_with_electrodes(slot, image, AnyElectrodes)
    }
}

impl<'a, E: Electrodes> LevelReader<'a, E> {
    /// The reader of a level image for the units with `electrodes`
    /// ([`WithReference`], [`ProbeOnly`]; [`AnyElectrodes`] is
    /// [`LevelReader::new`]): [`ReaderError::WrongKind`] for another kind,
    /// [`ReaderError::WrongElectrodes`] for a level image of the other
    /// arrangement. It reads as [`LevelReader::new`]'s reader of the same
    /// image, bit for bit. Cost, RAM and stack: as [`LevelReader::new`].
    pub fn with_electrodes(image: &Image<'a>, electrodes: E) -> Result<Self, ReaderError> {
        Self::build(image, electrodes, |reader| reader)
    }

    /// [`LevelReader::with_electrodes`] built in place (as
    /// [`LevelReader::init`]): on an error `slot` is left as it was.
    pub fn init_with_electrodes<'s>(
        slot: &'s mut MaybeUninit<Self>,
        image: &Image<'a>,
        electrodes: E,
    ) -> Result<&'s mut Self, ReaderError> {
        Self::build(image, electrodes, |reader| slot.write(reader))
    }

    /// The one field list of [`LevelReader::with_electrodes`] and
    /// [`LevelReader::init_with_electrodes`]: the arrangement and the kind
    /// checked, then the reader built and handed to `put` (returned as it
    /// is, or written into a slot). Inlined into both, so each writes the
    /// fields straight to where the reader lives.
    #[inline(always)]
    fn build<R>(
        image: &Image<'a>,
        electrodes: E,
        put: impl FnOnce(Self) -> R,
    ) -> Result<R, ReaderError> {
        Self::check(image, electrodes)?;
        match (image.kind(), image.curve()) {
            (ReaderKind::Level, Some(curve)) => Ok(put(Self {
                front: image.front(),
                reference: Self::reference(image),
                curve,
                volume: image.volume_table(),
                offset_cache: None,
                electrodes: PhantomData,
            })),
            (kind, _) => Err(ReaderError::WrongKind(kind)),
        }
    }

    /// The arrangement check of a level image (for `E` other than
    /// [`AnyElectrodes`]; an image of another kind is left to the kind
    /// check).
    #[inline(always)]
    fn check(image: &Image<'a>, _: E) -> Result<(), ReaderError> {
        let Some(want) = E::REFERENCE else {
            return Ok(());
        };
        let has_reference = image.companion_rest().is_some();
        if image.kind() == ReaderKind::Level && want != has_reference {
            return Err(ReaderError::WrongElectrodes {
                image_has_reference: has_reference,
            });
        }
        Ok(())
    }

    /// The reference electrode's converter (never built for
    /// [`ProbeOnly`]).
    #[inline(always)]
    fn reference(image: &Image<'a>) -> Option<ShiftConverter> {
        match E::REFERENCE {
            Some(false) => None,
            _ => image.reference(),
        }
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
        // `t` passed the plausibility check: inside the model's domain.
        let h = self.front.drift().factor_in_domain(t).offset().raw_q40();
        self.offset_cache = Some((t, h));
        h
    }

    /// The level curve's input: the probe's drift-compensated shift, or
    /// with a reference electrode the ratio of both channels' shifts.
    /// Both channels go through [`channel_shift`].
    #[inline(always)]
    fn curve_input(&mut self, input: &Input) -> Result<LevelAxis, SensorFault> {
        let s = channel_shift(&self.front, &self.front.converter, input.pair)?;
        // `E` decides at compile time: a reader for one arrangement links
        // that path only (a `WithReference` reader always has the
        // converter: `with_electrodes` refused an image without one).
        let reference = match (E::REFERENCE, &self.reference) {
            (Some(false), _) => None,
            (Some(true), None) => return Err(SensorFault::Reference),
            (_, reference) => reference.as_ref(),
        };
        let Some(conv) = reference else {
            // `Front::shift` without a companion coil (a level image has
            // none): the plausibility checks, then the drift correction.
            return Ok(LevelAxis::Shift(
                match self.front.plausible.check(input.pair, input.temperature)? {
                    Some(t) => self.front.factor(t).apply(s),
                    None => s,
                },
            ));
        };
        // The reference electrode shares the probe's fault window, gate and
        // temperature model: its check goes through the same accepted ticks.
        let pair = input.companion.ok_or(SensorFault::Companion(None))?;
        let r = channel_shift(&self.front, conv, pair).map_err(|f| match f {
            SensorFault::Counts(e) => SensorFault::Companion(Some(e)),
            f => f,
        })?;
        // Both compensated: ((1+s)(1+g) − 1)/((1+r)(1+g) − 1) = (s − h)/(r − h)
        // with h = 1/(1 + g) − 1 (`DriftFactor::offset`). Shifts lie below
        // 2^62 (Q.40 of r² < 2^22) and |h| ≤ 2^40: no overflow.
        let (s, r) = (s.raw_q40(), r.raw_q40());
        let (s, r) = match self.front.plausible.check(input.pair, input.temperature)? {
            Some(t) => {
                let h = self.offset(t);
                (s.wrapping_sub(h), r.wrapping_sub(h))
            }
            None => (s, r),
        };
        // One compare on the way through: dry (not positive) or too small.
        if !super::plausible::reference_divisible(r) {
            return Err(if r <= 0 {
                SensorFault::Reference
            } else {
                SensorFault::ReferenceLow
            });
        }
        div_q40_by_positive(s, r.unsigned_abs())
            .map(|q| LevelAxis::Ratio(ProbeRatio(q)))
            .ok_or(SensorFault::Reference)
    }

    /// One reading: the level, and the volume when the image has a volume
    /// table. The level curve and the volume table go through one
    /// out-of-line copy of [`CurveRef::eval`], the volume table at the
    /// level's point of its axis (level · 2^32: the same value and status
    /// as [`CurveRef::eval_whole`]).
    #[inline(never)]
    pub fn read(&mut self, input: &Input) -> LevelReading {
        // One exit for readings and faults alike: a fault's fields are
        // values merged into the one store of the reading, not a separate
        // run of zero stores (which the compiler turns into a call of
        // `memset`, 158 bytes of library code on ARMv6-M).
        let (level, volume, axis, status) = match self.evaluate(input) {
            Ok(reading) => reading,
            Err(f) => (
                0,
                None,
                LevelAxis::Shift(Shift::ZERO),
                Status::SensorFault(f),
            ),
        };
        LevelReading {
            level,
            volume,
            axis,
            status,
        }
    }

    /// The reading's fields, or the sensor fault.
    #[inline(always)]
    fn evaluate(
        &mut self,
        input: &Input,
    ) -> Result<(i32, Option<i32>, LevelAxis, Status), SensorFault> {
        let axis = self.curve_input(input)?;
        let v = self.curve.eval_shared(axis.raw_q40());
        if !self.curve.within_reach(axis.raw_q40(), v.status) {
            return Err(match axis {
                LevelAxis::Ratio(_) => SensorFault::ReferenceLow,
                LevelAxis::Shift(_) => SensorFault::OutOfReach,
            });
        }
        let status = match v.status {
            CurveStatus::InRange => Status::Ok,
            CurveStatus::BelowRange => Status::BelowRange,
            CurveStatus::AboveRange => Status::AboveRange,
        };
        let volume = self
            .volume
            .as_ref()
            .map(|vol| vol.eval_shared(i64::from(v.value) << 32).value);
        Ok((v.value, volume, axis, status))
    }

    /// `f64` twin: (level, volume) in output units, unrounded (assumes the
    /// fault window passes).
    pub fn read_f64(&self, input: &Input) -> (f64, Option<f64>) {
        let s = self.front.shift_f64(input);
        let x = match (&self.reference, input.companion) {
            (Some(conv), Some(pair)) => {
                let r = conv.shift_f64(pair);
                let r = match input.temperature {
                    Some(t) => self.front.drift().compensate_f64(r, t.to_f64()),
                    None => r,
                };
                s / r
            }
            _ => s,
        };
        let level = self.curve.eval_f64(x);
        // The volume table's axis is level · 2^32 in Q23.40: level / 256.
        let volume = self.volume.as_ref().map(|v| v.eval_f64(level / 256.0));
        (level, volume)
    }
}

/// One channel's shift through the front's fault window (a window fault
/// is [`SensorFault::Counts`]): the probe's with the front's converter, the
/// reference electrode's with its own. [`Front::checked_shift`] with its
/// cold split: inlined into the reading is only a pair in the gate's tick
/// band through the gate's shortcut (two compares and the shortcut);
/// anything else (the full window check, the general path) is one cold
/// routine shared by both channels. Measured on the Cortex-M0: 33 fewer
/// instructions a level reading than one out-of-line copy of the whole
/// check for both channels, for 176 bytes of flash.
#[inline(always)]
fn channel_shift(
    front: &Front,
    conv: &ShiftConverter,
    pair: CountPair,
) -> Result<Shift, SensorFault> {
    front.checked_shift::<true>(conv, pair, SensorFault::Counts)
}
