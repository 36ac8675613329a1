//! Readers: the whole per-reading pipeline of one product, composed from the
//! stages, from a count pair to a typed reading with its status.
//!
//! ```text
//! count pair ─► fault window ─► shift (or companion ratio) ─► drift model
//!            ─► curve (read in place from the image) ─► reading + status
//! ```
//!
//! - [`ProximityReader`]: shift → gap ([`ProximityReading`]);
//! - [`LevelReader`]: shift, or the ratio of probe and reference-electrode
//!   shifts, → level, and optionally → volume ([`LevelReading`]); its
//!   type parameter ([`Electrodes`]) fixes the arrangement of electrodes
//!   at build time when the firmware is for one ([`WithReference`],
//!   [`ProbeOnly`]), so the other's reading path is not linked;
//! - [`MetalReader`]: baseline tracking, detection with hysteresis and
//!   debounce, and classification ferrous / non-ferrous, confirmed by the
//!   ring-down ([`MetalReading`]).
//!
//! Every reader also checks its inputs' plausibility (`reader/plausible.rs`,
//! docs/faults.md): a frozen counter, a temperature outside the drift
//! model's domain or missing although the image has a drift model, a
//! reference electrode too small to divide by, a shift out of the curve's
//! reach; each is a [`SensorFault`] of its own.
//!
//! Each is built from a validated [`Image`] and checks its kind; it holds
//! only what changes at run time (drift cache, baselines, detector) and
//! the few constants derived at start-up, and borrows its curves from the
//! image's bytes. [`Reader`] is any of them, for a firmware that learns the
//! kind from the image; it costs the largest reader's RAM, and in flash the
//! readers whose cargo features are enabled (`proximity`, `level`,
//! `metal`).
//!
//! **Not a safety-rated component.** Where a reading protects people or
//! machines, the safety function must follow the applicable
//! functional-safety standards, local codes and a qualified engineer's
//! review.
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::image::Image;
//! use lc_core::reader::{Input, Reader, Reading, Status};
//!
//! static IMAGE: &[u8] =
//!     lc_core::include_image!("../../../examples/firmware/data/demo-proximity.lcim");
//! let image = Image::new(IMAGE).unwrap();
//! let mut reader = Reader::new(&image).unwrap();
//! let Reading::Proximity(r) = reader.read(&Input::counts(CountPair::new(16_384, 123_700))) else {
//!     panic!("a proximity image")
//! };
//! assert_eq!(r.status, Status::Ok);
//! assert!((1_000..=2_500).contains(&r.gap)); // micrometres
//! // A stalled oscillator is a sensor fault, never a reading.
//! let r = reader.read(&Input::counts(CountPair::new(0, 123_700)));
//! assert!(matches!(r.status(), Status::SensorFault(_)));
//! ```

#[cfg(feature = "level")]
mod level;
#[cfg(feature = "metal")]
mod metal;
mod plausible;
#[cfg(feature = "proximity")]
mod proximity;

#[cfg(feature = "level")]
pub use level::{
    AnyElectrodes, Electrodes, LevelAxis, LevelReader, LevelReading, ProbeOnly, ProbeRatio,
    WithReference,
};
#[cfg(feature = "metal")]
pub use metal::{MetalReader, MetalReading};
pub use plausible::{in_reach, FrozenCounter, DEFAULT_FROZEN_LIMIT, MIN_REFERENCE_SHIFT_Q40};
#[cfg(feature = "proximity")]
pub use proximity::{ProximityReader, ProximityReading};

use crate::counting::{AcceptedTicks, CountPair, FaultError, FaultWindow};
use crate::derived::mul_wide;
use crate::detector::{DetectorConfig, Polarity};
use crate::drift::{Companion, CompanionError, DriftFactor, TemperatureModel};
#[cfg(any(feature = "proximity", feature = "level", feature = "metal"))]
use crate::image::Image;
use crate::image::{MetalParams, ReaderKind};

/// What `Reader` and `Reading` need: at least one reader.
macro_rules! any_reader {
    ($($item:item)*) => {
        $(
            #[cfg(any(feature = "proximity", feature = "level", feature = "metal"))]
            $item
        )*
    };
}
use crate::shift::{Shift, ShiftConverter, ShiftError};
use crate::temperature::CentiCelsius;
use core::fmt;

/// What one reading needs: the count pair, and what the unit may add.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Input {
    /// The sensor channel's count pair.
    pub pair: CountPair,
    /// The companion coil's (or reference electrode's) count pair, read
    /// with the same gate, when the unit has one.
    pub companion: Option<CountPair>,
    /// Temperature, for the drift model.
    pub temperature: Option<CentiCelsius>,
    /// Ring count of a ring-down after the gate (metal detection).
    pub ring_count: Option<u16>,
}

impl Input {
    /// Just a count pair.
    pub const fn counts(pair: CountPair) -> Self {
        Self {
            pair,
            companion: None,
            temperature: None,
            ring_count: None,
        }
    }
}

/// Why a reading has no trustworthy value.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum SensorFault {
    /// The sensor channel's count pair failed the fault window.
    Counts(FaultError),
    /// The companion channel's count pair failed the fault window, or is
    /// missing although the calibration needs it.
    Companion(Option<FaultError>),
    /// The shift could not be formed.
    Shift(ShiftError),
    /// The companion ratio could not be formed.
    Ratio(CompanionError),
    /// The level reference electrode shows no liquid (its shift is not
    /// positive), so the level ratio is undefined.
    Reference,
    /// The same count pair [`FrozenCounter::limit`] times in a row: a
    /// counter or capture that stopped updating (plausibility checks:
    /// `reader/plausible.rs`).
    Frozen,
    /// A temperature outside the drift model's
    /// [`TEMPERATURE_DOMAIN`](crate::drift::TEMPERATURE_DOMAIN), the image
    /// having a drift model.
    TemperatureOutOfDomain,
    /// No temperature, the image having a drift model (a non-zero
    /// coefficient).
    TemperatureMissing,
    /// The level reference electrode's shift is positive but too small to
    /// divide by ([`MIN_REFERENCE_SHIFT_Q40`]), or the ratio lies beyond
    /// the curve's reach ([`in_reach`]): a nearly dry electrode.
    ReferenceLow,
    /// The shift lies beyond the curve's span by more than the span's
    /// width ([`in_reach`]): not this sensor's counts (a channel swap, a
    /// wrong image).
    OutOfReach,
}

/// A reading's status.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Status {
    /// A value inside the calibrated range.
    Ok,
    /// Below the calibrated range; the value is clamped to its end.
    BelowRange,
    /// Above the calibrated range; the value is clamped to its end.
    AboveRange,
    /// Nothing in range: proximity beyond the farthest calibrated gap;
    /// metal: no target present.
    NoTarget,
    /// No trustworthy value; the value is 0.
    SensorFault(SensorFault),
}

/// What kind of metal a detection is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum MetalClass {
    /// No target.
    None = 0,
    /// L rose: a ferromagnetic target (permeability).
    Ferrous = 1,
    /// L fell: a non-ferrous conductor (eddy currents).
    NonFerrous = 2,
}

any_reader! {
/// Any reader's reading: the reading type of the image's kind.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Reading {
    /// A proximity reading.
    #[cfg(feature = "proximity")]
    Proximity(ProximityReading),
    /// A level reading.
    #[cfg(feature = "level")]
    Level(LevelReading),
    /// A metal reading.
    #[cfg(feature = "metal")]
    Metal(MetalReading),
}

impl Reading {
    /// The reading's status.
    pub fn status(&self) -> Status {
        match self {
            #[cfg(feature = "proximity")]
            Reading::Proximity(r) => r.status,
            #[cfg(feature = "level")]
            Reading::Level(r) => r.status,
            #[cfg(feature = "metal")]
            Reading::Metal(r) => r.status,
        }
    }

    /// The primary output as the raw integer of the image's output scale,
    /// for logs whose one value column holds any kind: the gap, the level,
    /// or the metal class's code ([`MetalClass`] as `u8`).
    pub fn output(&self) -> i32 {
        match self {
            #[cfg(feature = "proximity")]
            Reading::Proximity(r) => r.gap,
            #[cfg(feature = "level")]
            Reading::Level(r) => r.level,
            #[cfg(feature = "metal")]
            Reading::Metal(r) => r.class as i32,
        }
    }

    /// The second output, for the same logs: the level's volume, or the
    /// metal reading's ring-count drop.
    pub fn secondary(&self) -> Option<i32> {
        match self {
            #[cfg(feature = "proximity")]
            Reading::Proximity(_) => None,
            #[cfg(feature = "level")]
            Reading::Level(r) => r.volume,
            #[cfg(feature = "metal")]
            Reading::Metal(r) => r.ring_drop,
        }
    }

    /// The raw Q23.40 value the curve was evaluated at: the shift after
    /// drift compensation (level with a reference electrode: the probe /
    /// reference ratio; metal: the shift minus the baseline).
    pub fn curve_input_q40(&self) -> i64 {
        match self {
            #[cfg(feature = "proximity")]
            Reading::Proximity(r) => r.shift.raw_q40(),
            #[cfg(feature = "level")]
            Reading::Level(r) => r.axis.raw_q40(),
            #[cfg(feature = "metal")]
            Reading::Metal(r) => r.delta.raw_q40(),
        }
    }
}

}

/// Why a reader could not be built from an image.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ReaderError {
    /// The image is of another kind than this reader's (the image's kind).
    WrongKind(ReaderKind),
    /// This build leaves out the reader of the image's kind (its cargo
    /// feature is off).
    NotBuilt(ReaderKind),
    /// A level reader built for one arrangement of electrodes
    /// (`LevelReader::with_electrodes`) and a level image of the other:
    /// the image's unit has a reference electrode (`true`) or has none
    /// (`false`).
    WrongElectrodes {
        /// Whether the image's unit has a reference electrode.
        image_has_reference: bool,
    },
}

impl fmt::Display for ReaderError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReaderError::WrongKind(k) => write!(f, "the image is for a {k:?} reader"),
            ReaderError::NotBuilt(k) => {
                write!(f, "this build leaves out the {k:?} reader (cargo feature)")
            }
            ReaderError::WrongElectrodes {
                image_has_reference,
            } => {
                let (image, reader) = match image_has_reference {
                    true => ("has a reference electrode", "a probe only"),
                    false => ("has no reference electrode", "a reference electrode"),
                };
                write!(
                    f,
                    "the image's level unit {image}; this reader is built for {reader}"
                )
            }
        }
    }
}

impl core::error::Error for ReaderError {}

/// The front of every reader: fault window, shift or companion ratio, and
/// the temperature model. Derived once, at image validation.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(crate) struct Front {
    window: FaultWindow,
    converter: ShiftConverter,
    /// Without the `companion` feature the field is left out (a
    /// validated image has no companion coil then): 32 bytes less per
    /// reader on a 32-bit target.
    #[cfg(feature = "companion")]
    companion: Option<Companion>,
    drift: TemperatureModel,
    /// The tick counts the window accepts at the gate, for the
    /// two-comparison check.
    accepted: Option<AcceptedTicks>,
    /// The drift correction at the last temperature seen: temperature
    /// moves far more slowly than readings come.
    drift_cache: Option<(CentiCelsius, DriftFactor)>,
    /// The plausibility checks' state (`reader/plausible.rs`).
    pub(crate) plausible: plausible::Plausible,
}

impl Front {
    #[inline(always)]
    pub(crate) fn new(
        window: FaultWindow,
        converter: ShiftConverter,
        companion: Option<Companion>,
        drift: TemperatureModel,
        accepted: Option<AcceptedTicks>,
    ) -> Self {
        #[cfg(not(feature = "companion"))]
        let _ = companion; // always None: validation refused a companion coil
        Self {
            window,
            converter,
            #[cfg(feature = "companion")]
            companion,
            drift,
            accepted,
            drift_cache: None,
            plausible: plausible::Plausible::new(&drift),
        }
    }

    pub(crate) fn drift(&self) -> TemperatureModel {
        self.drift
    }

    /// The companion coil, when the unit has one.
    #[inline(always)]
    fn companion(&self) -> Option<Companion> {
        #[cfg(feature = "companion")]
        return self.companion;
        #[cfg(not(feature = "companion"))]
        None
    }

    /// The fault window's check, through the accepted ticks when the pair
    /// has the gate's cycle count.
    #[inline(always)]
    fn check(&self, pair: CountPair) -> Result<(), FaultError> {
        match &self.accepted {
            Some(a) => self.window.check_at_gate(pair, a),
            None => self.window.check(pair).map(|_| ()),
        }
    }

    /// The shift of `pair` by `conv` (a converter of this front's gate)
    /// through the fault window, `window` naming a window fault: a pair of
    /// the gate's cycles inside its accepted ticks takes two comparisons
    /// and the converter's gate path with nothing checked twice; any other
    /// pair the full check and the general path, inline (`COLD` false) or
    /// in a cold routine of their own that the common path never reaches
    /// (`COLD` true: the level reader's choice, where only the band and
    /// the gate's shortcut are inlined into the reading, for each
    /// channel; a pair in the band that the shortcut does not take goes
    /// through the cold routine too, whose window check passes it). Same
    /// results either way, and as the check and
    /// [`ShiftConverter::shift`].
    #[inline(always)]
    pub(crate) fn checked_shift<const COLD: bool>(
        &self,
        conv: &ShiftConverter,
        pair: CountPair,
        window: impl FnOnce(FaultError) -> SensorFault,
    ) -> Result<Shift, SensorFault> {
        // A pair inside the accepted ticks has the gate's cycles (the
        // band's gate and the converter's are the image's one gate): the
        // shortcut, inlined (its one copy per call). Any other pair: the
        // full check and the general path (off the accepted ticks no pair
        // of the gate's cycles passes the window, and the shortcut gives
        // what the general path gives).
        if let Some(a) = &self.accepted {
            if a.contains(pair) {
                if let Some(s) = conv.gate_shortcut(pair.ticks) {
                    return Ok(s);
                }
                if !COLD {
                    return conv.shift_general(pair).map_err(SensorFault::Shift);
                }
            }
        }
        if COLD {
            // A pair in the band passes the window: the cold routine's
            // check changes nothing for it.
            return self.checked_shift_cold(conv, pair, window);
        }
        self.window.check(pair).map_err(window)?;
        conv.shift_general(pair).map_err(SensorFault::Shift)
    }

    /// [`Front::checked_shift`]'s cold routine: the full window
    /// check, then the general shift.
    #[cold]
    #[inline(never)]
    fn checked_shift_cold(
        &self,
        conv: &ShiftConverter,
        pair: CountPair,
        window: impl FnOnce(FaultError) -> SensorFault,
    ) -> Result<Shift, SensorFault> {
        self.window.check(pair).map_err(window)?;
        conv.shift_general(pair).map_err(SensorFault::Shift)
    }

    /// The sensor channel's shift, through the fault window, without the
    /// drift model (for a reader without a companion coil).
    #[inline(always)]
    pub(crate) fn raw_shift(&self, pair: CountPair) -> Result<Shift, SensorFault> {
        self.checked_shift::<false>(&self.converter, pair, SensorFault::Counts)
    }

    /// The drift correction at `t`, from the cache when `t` is unchanged;
    /// `t` passed the plausibility check (inside the drift model's domain,
    /// or the image has no drift model).
    pub(crate) fn factor(&mut self, t: CentiCelsius) -> DriftFactor {
        match self.drift_cache {
            Some((last, f)) if last == t => f,
            _ => {
                let f = self.drift.factor_in_domain(t);
                self.drift_cache = Some((t, f));
                f
            }
        }
    }

    /// The drift-compensated shift of the sensor channel (ratiometric when
    /// a companion coil is configured). Inlined into each reader's `read`,
    /// so the result stays in registers on the per-reading path.
    #[inline(always)]
    pub(crate) fn shift(&mut self, input: &Input) -> Result<Shift, SensorFault> {
        let pair = input.pair;
        let s = match self.companion() {
            Some(c) => {
                self.check(pair).map_err(SensorFault::Counts)?;
                let comp = input.companion.ok_or(SensorFault::Companion(None))?;
                self.check(comp)
                    .map_err(|e| SensorFault::Companion(Some(e)))?;
                c.shift(pair, comp).map_err(SensorFault::Ratio)?
            }
            None => self.raw_shift(pair)?,
        };
        Ok(match self.plausible.check(pair, input.temperature)? {
            Some(t) => self.factor(t).apply(s),
            None => s,
        })
    }

    /// `f64` twin of [`Front::shift`] (assumes the fault window passes).
    pub(crate) fn shift_f64(&self, input: &Input) -> f64 {
        let s = match (self.companion(), input.companion) {
            (Some(c), Some(comp)) => c.shift_f64(input.pair, comp),
            _ => self.converter.shift_f64(input.pair),
        };
        match input.temperature {
            Some(t) => self.drift.compensate_f64(s, t.to_f64()),
            None => s,
        }
    }
}

/// Parts per billion of shift to Q23.40 (start-up only), for `ppb` below
/// [`MetalParams::PPB_LIMIT`] (validation): ppb · 2^40 / 10^9 = ppb ·
/// 2^52 / 5^9 · 2^-21, by one 32 × 32 → 64-bit multiply (`derived::mul_wide`,
/// on ARMv6-M the firmware's one out-of-line copy) with M = ⌊2^52 / 5^9⌋
/// = 2 305 843 009, rounded half up. M is short of 2^52 / 5^9 by less than
/// 0.214, so the result is the correctly rounded quotient or one below it
/// (one unit of Q23.40 is 0.91 ppb), strictly increasing in `ppb` (each
/// ppb adds about 1 099.5), and below 2^32 − 1 000 under the limit. Host
/// and firmware share this conversion, so their detectors agree bit for
/// bit.
pub(crate) fn ppb_to_q40(ppb: u32) -> u32 {
    const M: u32 = 2_305_843_009;
    // ppb · M < 2^22 · 2^32: the sum cannot wrap, and the quotient by
    // 2^21 is below 2^32 under the limit (wrapping outside it, where
    // validation has refused the image).
    (mul_wide(ppb, M).wrapping_add(1 << 20) >> 21) as u32
}

/// The metal reader's detector configuration from its parameters.
pub(crate) fn metal_detector(p: &MetalParams) -> DetectorConfig<u32> {
    DetectorConfig {
        polarity: Polarity::Rising,
        enter_threshold: ppb_to_q40(p.enter_ppb),
        leave_threshold: ppb_to_q40(p.leave_ppb),
        enter_samples: p.enter_samples,
        leave_samples: p.leave_samples,
    }
}

/// Whether the metal reader accepts these parameters (image validation:
/// an image that validates builds its reader): its detector's
/// configuration validates and k is in 1..=16, and the enter threshold is
/// below [`MetalParams::PPB_LIMIT`] (both thresholds then fit the
/// detector's `u32`). Without the conversion: [`ppb_to_q40`] is strictly
/// increasing (it scales by 2^40/10^9 > 1 before rounding), so the
/// thresholds in Q23.40 are ordered exactly when the ppb values are
/// (`MetalReader::new` relies on this check).
pub(crate) fn metal_builds(p: &MetalParams) -> bool {
    p.leave_ppb < p.enter_ppb
        && p.enter_ppb < MetalParams::PPB_LIMIT
        && p.enter_samples > 0
        && p.leave_samples > 0
        && (1..=16).contains(&p.baseline_k)
}

any_reader! {
/// Any reader, built from an image: the one its kind names.
///
/// RAM: the largest enabled reader plus a tag, 256 bytes on a 32-bit
/// target with all three (the crate docs, "Memory"); flash: every enabled
/// reader's code.
#[allow(clippy::large_enum_variant)] // one reader lives in RAM, the largest's size
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
// An explicit tag: `read`'s dispatch is one byte compare, whatever niche
// the readers' fields would offer.
#[repr(u8)]
pub enum Reader<'a> {
    /// Proximity.
    #[cfg(feature = "proximity")]
    Proximity(ProximityReader<'a>),
    /// Level.
    #[cfg(feature = "level")]
    Level(LevelReader<'a>),
    /// Metal.
    #[cfg(feature = "metal")]
    Metal(MetalReader),
    /// Never built: keeps the lifetime when the curve readers are left
    /// out.
    #[doc(hidden)]
    _Image(core::marker::PhantomData<&'a ()>, core::convert::Infallible),
}

impl<'a> Reader<'a> {
    /// The reader the image's kind names ([`ReaderError::NotBuilt`] when
    /// its cargo feature is off). Cost: a copy of the image's derived
    /// constants, no validation (the image is validated). Stack: the
    /// reader's size.
    pub fn new(image: &Image<'a>) -> Result<Self, ReaderError> {
        match image.kind() {
            #[cfg(feature = "proximity")]
            ReaderKind::Proximity => ProximityReader::new(image).map(Reader::Proximity),
            #[cfg(feature = "level")]
            ReaderKind::Level => LevelReader::new(image).map(Reader::Level),
            #[cfg(feature = "metal")]
            ReaderKind::Metal => MetalReader::new(image).map(Reader::Metal),
            #[allow(unreachable_patterns)]
            other => Err(ReaderError::NotBuilt(other)),
        }
    }

    /// The kind of reader.
    pub fn kind(&self) -> ReaderKind {
        match self {
            #[cfg(feature = "proximity")]
            Reader::Proximity(_) => ReaderKind::Proximity,
            #[cfg(feature = "level")]
            Reader::Level(_) => ReaderKind::Level,
            #[cfg(feature = "metal")]
            Reader::Metal(_) => ReaderKind::Metal,
            Reader::_Image(_, never) => match *never {},
        }
    }

    /// Sets the frozen-counter limit: the `limit`-th identical count pair
    /// in a row is [`SensorFault::Frozen`]; 0 turns the check off; a new
    /// reader has [`DEFAULT_FROZEN_LIMIT`] (`reader/plausible.rs`).
    pub fn set_frozen_limit(&mut self, limit: u8) {
        match self {
            #[cfg(feature = "proximity")]
            Reader::Proximity(r) => r.set_frozen_limit(limit),
            #[cfg(feature = "level")]
            Reader::Level(r) => r.set_frozen_limit(limit),
            #[cfg(feature = "metal")]
            Reader::Metal(r) => r.set_frozen_limit(limit),
            Reader::_Image(_, never) => match *never {},
        }
    }

    /// One reading.
    pub fn read(&mut self, input: &Input) -> Reading {
        match self {
            #[cfg(feature = "proximity")]
            Reader::Proximity(r) => Reading::Proximity(r.read(input)),
            #[cfg(feature = "level")]
            Reader::Level(r) => Reading::Level(r.read(input)),
            #[cfg(feature = "metal")]
            Reader::Metal(r) => Reading::Metal(r.read(input)),
            Reader::_Image(_, never) => match *never {},
        }
    }
}
}

#[cfg(all(test, feature = "design"))]
pub(crate) mod tests {
    use super::*;
    use crate::curve::{pchip_derivatives, Node};
    use crate::image::tests_support::demo_proximity;
    use crate::image::{Calibration, Image, OutputScale, OutputUnit, Serial, Table};
    use crate::shift::RestPoint;
    use core::mem::MaybeUninit;
    use proptest::prelude::*;

    proptest! {
        /// `metal_builds` (comparisons of the ppb values) accepts exactly
        /// the parameters whose detector and baseline build (the
        /// thresholds converted to Q23.40 first); near-equal thresholds
        /// too.
        #[test]
        fn metal_builds_equals_building(
            enter_ppb in prop_oneof![0..MetalParams::PPB_LIMIT + 4, any::<u32>()],
            near in -2i64..=2,
            far: u32,
            enter_samples in 0u16..3,
            leave_samples in 0u16..3,
            baseline_k in 0u8..=18,
            use_near: bool,
        ) {
            let leave_ppb = if use_near {
                u32::try_from(i64::from(enter_ppb) + near).unwrap_or(enter_ppb)
            } else {
                far
            };
            let p = MetalParams {
                enter_ppb,
                leave_ppb,
                enter_samples,
                leave_samples,
                baseline_k,
                ring_drop: 0,
                relearn_readings: 0,
            };
            // At or above the limit a threshold would not fit the
            // detector's u32 (the conversion is defined below it only).
            let builds = enter_ppb < MetalParams::PPB_LIMIT
                && leave_ppb < MetalParams::PPB_LIMIT
                && crate::detector::Detector::new(metal_detector(&p)).is_ok()
                && crate::filter::Ema::<Shift>::new(u32::from(p.baseline_k)).is_ok();
            prop_assert_eq!(metal_builds(&p), builds);
        }
    }

    /// `ppb_to_q40` is the correctly rounded ppb · 2^40 / 10^9 (the
    /// 128-bit division, half up) or one below it for every ppb below the
    /// limit, strictly increasing, and the largest is below 2^32.
    #[test]
    fn ppb_to_q40_is_within_one_of_the_rounded_quotient_below_the_limit() {
        let mut last = None;
        for ppb in 0..MetalParams::PPB_LIMIT {
            let wide = crate::fixed::round_div_u128(u128::from(ppb) << 40, 1_000_000_000).unwrap();
            let q = u128::from(ppb_to_q40(ppb));
            assert!(q == wide || q + 1 == wide, "{ppb}: {q} against {wide}");
            assert!(last < Some(q), "{ppb}");
            last = Some(q);
        }
        // The limit is where the quotient would reach 2^32: 2^32 · 10^9 / 2^40.
        assert_eq!(u64::from(MetalParams::PPB_LIMIT) << 40, 1_000_000_000 << 32);
    }

    /// The validated image of a calibration (its buffer leaked: tests
    /// only).
    fn image(cal: &Calibration) -> Image<'static> {
        let buf = Box::leak(Box::new(cal.to_image_buf().unwrap()));
        buf.image().unwrap()
    }

    fn reader(cal: &Calibration) -> Reader<'static> {
        Reader::new(&image(cal)).unwrap()
    }

    /// A proximity reading (panics on another kind: tests only).
    fn prox(r: Reading) -> ProximityReading {
        match r {
            Reading::Proximity(p) => p,
            other => panic!("{other:?}"),
        }
    }

    fn lvl(r: Reading) -> LevelReading {
        match r {
            Reading::Level(p) => p,
            other => panic!("{other:?}"),
        }
    }

    /// Ticks over the demo gate (16 384 cycles, p_rest = 139 542/16 384)
    /// for a shift s: p = p_rest·√(1 + s).
    pub(crate) fn ticks_for(s: f64) -> u32 {
        (139_542.0 * libm::sqrt(1.0 + s)).round() as u32
    }

    pub(crate) fn pair_for(s: f64) -> CountPair {
        CountPair::new(16_384, ticks_for(s))
    }

    #[test]
    fn proximity_statuses() {
        let mut r = reader(&demo_proximity().unwrap());
        // Demo nodes: shift −0.329 → 500 µm … −0.019 → 8 000 µm.
        let mid = prox(r.read(&Input::counts(pair_for(-0.185))));
        assert_eq!(mid.status, Status::Ok);
        assert!((1_000..2_500).contains(&mid.gap), "{mid:?}");
        let far = prox(r.read(&Input::counts(pair_for(-0.001))));
        assert_eq!((far.status, far.gap), (Status::NoTarget, 8_000));
        let near = prox(r.read(&Input::counts(pair_for(-0.5))));
        assert_eq!((near.status, near.gap), (Status::BelowRange, 500));
        let dead = r.read(&Input::counts(CountPair::new(0, 1)));
        assert_eq!(
            dead.status(),
            Status::SensorFault(SensorFault::Counts(FaultError::NoOscillation))
        );
        let wild = r.read(&Input::counts(CountPair::new(16_384, 10)));
        assert_eq!(
            wild.status(),
            Status::SensorFault(SensorFault::Counts(FaultError::FrequencyTooHigh))
        );
        // The typed readers check the kind.
        let img = image(&demo_proximity().unwrap());
        assert_eq!(
            LevelReader::new(&img),
            Err(ReaderError::WrongKind(ReaderKind::Proximity))
        );
        assert_eq!(
            MetalReader::new(&img).map(|_| ()),
            Err(ReaderError::WrongKind(ReaderKind::Proximity))
        );
    }

    #[test]
    fn proximity_with_a_companion_coil_ignores_common_drift() {
        let mut cal = demo_proximity().unwrap();
        cal.companion_rest = Some(RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap());
        let mut r = reader(&cal);
        let target = -0.12;
        for drift in [0.0, 0.002, -0.003] {
            // Temperature scales both L·C products by 1 + drift.
            let main = pair_for((1.0 + target) * (1.0 + drift) - 1.0);
            let comp = CountPair::new(16_384, (150_000.0 * libm::sqrt(1.0 + drift)).round() as u32);
            let read = prox(r.read(&Input {
                companion: Some(comp),
                ..Input::counts(main)
            }));
            assert_eq!(read.status, Status::Ok);
            // Within the counts' own rounding (2/139 542 of shift ≈ 0.02 mm here).
            assert!(
                (read.shift.to_f64() - target).abs() < 3e-5,
                "drift {drift}: {read:?}"
            );
        }
        let missing = r.read(&Input::counts(pair_for(target)));
        assert_eq!(
            missing.status(),
            Status::SensorFault(SensorFault::Companion(None))
        );
    }

    fn level_cal(reference: bool, volume: bool) -> Calibration {
        let mut cal = demo_proximity().unwrap();
        cal.kind = ReaderKind::Level;
        cal.serial = Serial::new("TANK-1").unwrap();
        // Two-point: empty at s = 0 (the rest point), full (1000.0 mm, in
        // 0.1 mm) at s = 0.8 without a reference; at q = 2.5 with one.
        let full_x = if reference { 2.5 } else { 0.8 };
        let nodes = [
            Node::new(Shift::ZERO, 0),
            Node::new(Shift::from_f64(full_x).unwrap(), 10_000),
        ];
        cal.curve = Some(Table::linear(&nodes).unwrap());
        cal.output = OutputScale {
            unit: OutputUnit::Metre,
            decimal_exponent: -4,
        };
        cal.window = FaultWindow::new(48_000_000, 100_000, 20_000_000, 64).unwrap();
        if reference {
            cal.companion_rest =
                Some(RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap());
        }
        if volume {
            // The coolant tank of the demo scenario: a horizontal cylinder
            // of 400 mm diameter, 1 m long; level in 0.1 mm, volume in mL.
            let shape = crate::geometry::TankShape::HorizontalCylinder {
                radius_m: 0.2,
                length_m: 1.0,
            };
            let table = crate::geometry::VolumeTable::sample(
                &shape,
                1e4,
                1e6,
                32,
                crate::curve::Interpolation::MonotoneCubic,
            )
            .unwrap();
            let nodes: Vec<Node> = (0..table.len())
                .map(|i| table.curve().node(i).unwrap())
                .collect();
            let xs: Vec<f64> = nodes.iter().map(|n| n.shift.to_f64()).collect();
            let ys: Vec<f64> = nodes.iter().map(|n| f64::from(n.value)).collect();
            let d = pchip_derivatives(&xs, &ys).unwrap();
            let dq: Vec<i64> = d[..nodes.len()]
                .iter()
                .map(|v| (v * 65_536.0).round() as i64)
                .collect();
            cal.volume = Some((
                Table::cubic(&nodes, &dq).unwrap(),
                OutputScale {
                    unit: OutputUnit::Litre,
                    decimal_exponent: -3,
                },
            ));
        }
        cal
    }

    #[test]
    fn level_two_point_and_volume() {
        let mut r = reader(&level_cal(false, true));
        let half = lvl(r.read(&Input::counts(pair_for(0.4))));
        assert_eq!(half.status, Status::Ok);
        assert!((half.level - 5_000).abs() <= 1, "{half:?}");
        // 500.0 mm is above the 400 mm cylinder: full, 125.66 L.
        let full_l = core::f64::consts::PI * 0.04 * 1e6;
        assert!(
            (f64::from(half.volume.unwrap()) - full_l).abs() < 2.0,
            "{half:?}"
        );
        let quarter = lvl(r.read(&Input::counts(pair_for(0.8 * 0.05))));
        // 50.0 mm in a 400 mm cylinder (h/D = 0.125): docs/references.md, Horizontal tank cases,
        // gives the fraction of volume from the circular segment.
        let h = 0.05f64;
        let a = 0.04 * libm::acos((0.2 - h) / 0.2) - (0.2 - h) * libm::sqrt(0.4 * h - h * h);
        assert!(
            (f64::from(quarter.volume.unwrap()) - a * 1e6).abs() < 0.01 * a * 1e6,
            "{quarter:?}"
        );
        assert_eq!(
            r.read(&Input::counts(pair_for(-0.1))).status(),
            Status::BelowRange
        );
        assert_eq!(
            r.read(&Input::counts(pair_for(0.9))).status(),
            Status::AboveRange
        );
    }

    #[test]
    fn level_reference_electrode_cancels_permittivity() {
        let mut r = reader(&level_cal(true, false));
        // Probe and reference shifts both scale with εr − 1; the level
        // fraction sets the probe's share: q = s_p/s_r = 2.5 · fraction.
        for eps_scale in [1.0, 0.9, 1.15] {
            let s_ref = 0.3 * eps_scale;
            let s_probe = 0.3 * eps_scale * 2.5 * 0.4;
            let comp = CountPair::new(16_384, (150_000.0 * libm::sqrt(1.0 + s_ref)).round() as u32);
            let read = lvl(r.read(&Input {
                companion: Some(comp),
                ..Input::counts(pair_for(s_probe))
            }));
            assert_eq!(read.status, Status::Ok);
            assert!(matches!(read.axis, LevelAxis::Ratio(_)));
            assert!(
                (read.level - 4_000).abs() <= 2,
                "εr scale {eps_scale}: {read:?}"
            );
        }
        let dry = CountPair::new(16_384, 149_990);
        let read = r.read(&Input {
            companion: Some(dry),
            ..Input::counts(pair_for(0.1))
        });
        assert_eq!(read.status(), Status::SensorFault(SensorFault::Reference));
    }

    /// A nearly dry reference electrode at a full tank was `above_range`;
    /// it is a sensor fault of its own (issue 19, item 4).
    #[test]
    fn nearly_dry_reference_at_a_full_tank_is_a_fault() {
        let mut r = reader(&level_cal(true, false));
        // Full tank: the probe at its full shift 0.3·2.5 = 0.75; the
        // reference electrode at 10 % and 0.5 % of its wet shift 0.3.
        for (wet, want) in [
            (1.0, Status::Ok),
            (0.1, Status::SensorFault(SensorFault::ReferenceLow)),
            (0.005, Status::SensorFault(SensorFault::ReferenceLow)),
        ] {
            let comp = CountPair::new(
                16_384,
                (150_000.0 * libm::sqrt(1.0 + 0.3 * wet)).round() as u32,
            );
            let read = r.read(&Input {
                companion: Some(comp),
                ..Input::counts(pair_for(0.74))
            });
            assert_eq!(read.status(), want, "wet {wet}: {read:?}");
        }
    }

    /// The level readers for one arrangement of electrodes: each refuses
    /// a level image of the other arrangement (typed, from `new` and
    /// `init` alike, the slot left as it was), refuses another kind as the
    /// default reader does, and on an image of its own arrangement reads
    /// what the default reader reads, field for field, through readings,
    /// clamps, faults and changes of temperature (a drift model fitted so
    /// that both the probe-only factor and the reference electrode's
    /// offset form are used).
    #[test]
    fn level_readers_for_one_arrangement_read_as_the_default() {
        fn same<E: Electrodes>(img: &Image<'static>, electrodes: E, inputs: &[Input]) -> usize {
            let mut any = LevelReader::new(img).unwrap();
            let mut fixed = LevelReader::with_electrodes(img, electrodes).unwrap();
            let mut slot = MaybeUninit::uninit();
            let placed = LevelReader::init_with_electrodes(&mut slot, img, electrodes).unwrap();
            let mut ok = 0;
            for input in inputs {
                let want = any.read(input);
                assert_eq!(fixed.read(input), want, "{input:?}");
                assert_eq!(placed.read(input), want, "in place: {input:?}");
                ok += usize::from(want.status == Status::Ok);
            }
            ok
        }
        fn refused<E: Electrodes>(img: &Image<'static>, electrodes: E, want: ReaderError) {
            assert_eq!(
                LevelReader::with_electrodes(img, electrodes).map(|_| ()),
                Err(want)
            );
            let mut slot = MaybeUninit::uninit();
            assert_eq!(
                LevelReader::init_with_electrodes(&mut slot, img, electrodes).map(|_| ()),
                Err(want)
            );
        }
        let drift = TemperatureModel::new(CentiCelsius(2_500), 1_099_512, 0).unwrap();
        for reference in [false, true] {
            for volume in [false, true] {
                let mut cal = level_cal(reference, volume);
                cal.drift = drift;
                let img = image(&cal);
                let mut inputs = Vec::new();
                for t in [None, Some(2_500), Some(2_500), Some(4_000), Some(-500)] {
                    for fraction in [-0.1, 0.0, 0.2, 0.4, 0.7, 1.0, 1.2] {
                        // The reference electrode wet (shift 0.3), nearly
                        // dry, or not read.
                        for (wet, read) in [(1.0, true), (0.005, true), (1.0, false)] {
                            let s_ref = 0.3 * wet;
                            let s_probe = if reference {
                                0.3 * 2.5 * fraction
                            } else {
                                0.8 * fraction
                            };
                            let ticks = (150_000.0 * libm::sqrt(1.0 + s_ref)).round() as u32;
                            inputs.push(Input {
                                companion: read.then(|| CountPair::new(16_384, ticks)),
                                temperature: t.map(CentiCelsius),
                                ..Input::counts(pair_for(s_probe))
                            });
                        }
                    }
                }
                inputs.push(Input::counts(CountPair::new(0, 1)));
                let ok = if reference {
                    refused(
                        &img,
                        ProbeOnly,
                        ReaderError::WrongElectrodes {
                            image_has_reference: true,
                        },
                    );
                    same(&img, WithReference, &inputs)
                } else {
                    refused(
                        &img,
                        WithReference,
                        ReaderError::WrongElectrodes {
                            image_has_reference: false,
                        },
                    );
                    same(&img, ProbeOnly, &inputs)
                };
                assert!(
                    ok >= 10,
                    "reference {reference}, volume {volume}: {ok} readings ok"
                );
            }
        }
        // Another kind: the kind's error, as from the default reader.
        let img = image(&demo_proximity().unwrap());
        let kind = ReaderError::WrongKind(ReaderKind::Proximity);
        refused(&img, WithReference, kind);
        refused(&img, ProbeOnly, kind);
        refused(&img, AnyElectrodes, kind);
    }

    fn metal_cal(ring_drop: u16, relearn: u32) -> Calibration {
        let mut cal = demo_proximity().unwrap();
        cal.kind = ReaderKind::Metal;
        cal.curve = None;
        cal.metal = Some(MetalParams {
            enter_ppb: 2_000_000, // 0.2 %
            leave_ppb: 1_000_000,
            enter_samples: 3,
            leave_samples: 2,
            baseline_k: 6,
            ring_drop,
            relearn_readings: relearn,
        });
        cal
    }

    #[test]
    fn metal_detects_classifies_and_relearns() {
        let mut r = MetalReader::new(&image(&metal_cal(2, 50))).unwrap();
        let read = |r: &mut MetalReader, s: f64, ring: u16| {
            r.read(&Input {
                ring_count: Some(ring),
                ..Input::counts(pair_for(s))
            })
        };
        // Learn the background; a slow drift of 1e-4 over 100 readings is
        // tracked, not detected.
        for i in 0..100 {
            let x = read(&mut r, 1e-6 * f64::from(i), 20);
            assert_eq!(x.status, Status::NoTarget);
        }
        // A ferrous object: L up by 1 %, and loss (ring count 20 → 15).
        let mut seen = Vec::new();
        for _ in 0..4 {
            seen.push(read(&mut r, 0.0101, 15));
        }
        assert_eq!(seen[1].status, Status::NoTarget, "debounce: not yet");
        assert_eq!(
            (seen[2].status, seen[2].class),
            (Status::Ok, MetalClass::Ferrous)
        );
        assert_eq!(seen[2].ring_drop, Some(5));
        // Gone: back to the background, two readings to leave.
        assert_eq!(
            read(&mut r, 1e-4, 20).status,
            Status::Ok,
            "debounce on leaving"
        );
        assert_eq!(read(&mut r, 1e-4, 20).status, Status::NoTarget);
        // A non-ferrous object: L down, with loss.
        for _ in 0..2 {
            read(&mut r, -0.01, 16);
        }
        let x = read(&mut r, -0.01, 16);
        assert_eq!((x.status, x.class), (Status::Ok, MetalClass::NonFerrous));
        for _ in 0..3 {
            read(&mut r, 1e-4, 20);
        }
        // A shift without loss (no ring drop) is not metal.
        for _ in 0..10 {
            assert_eq!(read(&mut r, 0.0101, 20).status, Status::NoTarget);
        }
        // A target that stays becomes the background after 50 readings.
        for _ in 0..3 {
            read(&mut r, 1e-4, 20);
        }
        let statuses: Vec<Status> = (0..60).map(|_| read(&mut r, 0.0101, 15).status).collect();
        assert_eq!(statuses[2], Status::Ok);
        assert_eq!(statuses[59], Status::NoTarget);
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(5_000))]

        /// End to end, count pair → gap, against the f64 twin over the
        /// calibrated range and temperatures: within 0.5 µm (the output's
        /// own rounding) plus the slope times the shift and drift bounds.
        #[test]
        fn proximity_end_to_end_bound(s in -0.32f64..-0.03, t in -4_000i32..12_000, with_t: bool) {
            let mut cal = demo_proximity().unwrap();
            cal.drift = crate::drift::TemperatureModel::from_f64(25.0, -3e-5, 2e-8).unwrap();
            let mut r = ProximityReader::new(&image(&cal)).unwrap();
            let input = Input {
                temperature: with_t.then_some(CentiCelsius(t)),
                ..Input::counts(pair_for(s))
            };
            let fixed = r.read(&input);
            if !with_t {
                // An image with a drift model needs a temperature.
                prop_assert_eq!(fixed.status, Status::SensorFault(SensorFault::TemperatureMissing));
                return Ok(());
            }
            prop_assert_eq!(fixed.status, Status::Ok);
            let float = r.read_f64(&input);
            // Largest slope of the demo curve (its last segment).
            let nodes = cal.curve.unwrap();
            let slope = nodes.nodes().windows(2).map(|w| f64::from(w[1].value - w[0].value) / (w[1].shift.to_f64() - w[0].shift.to_f64())).fold(0.0, f64::max);
            let shift_bound = 2.0 * 1.04 * 2f64.powi(-30) + 2f64.powi(-32) + 2f64.powi(-30) * 0.02 + 2f64.powi(-40);
            let bound = 0.5 + slope * shift_bound + 2f64.powi(-28) * 3_500.0;
            prop_assert!((f64::from(fixed.gap) - float).abs() <= bound, "{} vs {} (bound {})", fixed.gap, float, bound);
        }

        /// The fault window and the shift through the tick band's shortcut
        /// equal the full check followed by the general shift, errors
        /// included: pairs at the gate in and around the band, any pair.
        #[test]
        fn checked_shift_equals_check_then_shift(ticks: u32, near in 0u32..400_000, cycles: u32, level: bool) {
            let cal = if level { level_cal(true, false) } else { demo_proximity().unwrap() };
            let front = image(&cal).front();
            let gate = cal.gate().unwrap();
            let a = front.accepted.unwrap();
            let (lo, hi) = (a.min_ticks, a.max_ticks);
            let pairs = [
                CountPair::new(gate, ticks),
                CountPair::new(gate, lo.saturating_sub(200_000).saturating_add(near)),
                CountPair::new(gate, hi.saturating_sub(200_000).saturating_add(near)),
                CountPair::new(cycles, ticks),
            ];
            for pair in pairs {
                let fast = front.checked_shift::<false>(&front.converter, pair, SensorFault::Counts);
                let split = front.checked_shift::<true>(&front.converter, pair, SensorFault::Counts);
                prop_assert_eq!(split, fast, "{:?}", pair);
                let slow = front
                    .window
                    .check(pair)
                    .map_err(SensorFault::Counts)
                    .and_then(|_| front.converter.shift(pair).map_err(SensorFault::Shift));
                prop_assert_eq!(fast, slow, "{:?}", pair);
            }
        }

        /// The plausibility checks through every reader: with a drift
        /// model, a reading is a temperature fault exactly when the
        /// temperature is missing or outside the domain (and the pair
        /// passes the window); without one the temperature is never
        /// checked.
        #[test]
        fn temperature_faults_through_every_reader(t: Option<i32>, near in -4i32..4, which in 0usize..4, drift: bool) {
            let mut cal = match which {
                0 => demo_proximity().unwrap(),
                1 => level_cal(true, false),
                2 => level_cal(false, true),
                _ => metal_cal(2, 10),
            };
            if drift {
                cal.drift = crate::drift::TemperatureModel::from_f64(25.0, -3e-5, 2e-8).unwrap();
            }
            // Also the domain's ends and just beyond.
            let t = t.map(|t| match t % 3 {
                0 => t,
                1 => -10_000 + near,
                _ => 30_000 + near,
            });
            let mut r = reader(&cal);
            let comp = CountPair::new(16_384, (150_000.0 * libm::sqrt(1.3)).round() as u32);
            let input = Input {
                companion: Some(comp),
                temperature: t.map(CentiCelsius),
                ring_count: Some(20),
                ..Input::counts(pair_for(0.1))
            };
            let st = r.read(&input).status();
            let want = match (drift, t) {
                (false, _) => None,
                (true, None) => Some(SensorFault::TemperatureMissing),
                (true, Some(t)) if !(-10_000..=30_000).contains(&t) => Some(SensorFault::TemperatureOutOfDomain),
                _ => None,
            };
            match want {
                Some(f) => prop_assert_eq!(st, Status::SensorFault(f)),
                None => prop_assert!(!matches!(st, Status::SensorFault(_)), "{:?}", st),
            }
        }

        /// The frozen counter through every reader: the limit-th identical
        /// pair in a row and every one after it are `Frozen`, the readings
        /// before are not; a new pair ends it.
        #[test]
        fn frozen_counter_through_every_reader(limit in 0u8..=255, s in -0.2f64..0.5, which in 0usize..4) {
            let cal = match which {
                0 => demo_proximity().unwrap(),
                1 => level_cal(true, false),
                2 => level_cal(false, true),
                _ => metal_cal(2, 10),
            };
            let mut r = reader(&cal);
            r.set_frozen_limit(limit);
            let comp = CountPair::new(16_384, (150_000.0 * libm::sqrt(1.3)).round() as u32);
            let input = Input {
                companion: Some(comp),
                ring_count: Some(20),
                ..Input::counts(pair_for(s))
            };
            for i in 1..=300u32 {
                let frozen = r.read(&input).status() == Status::SensorFault(SensorFault::Frozen);
                prop_assert_eq!(frozen, limit > 1 && i >= u32::from(limit), "reading {}", i);
            }
            let next = Input { pair: CountPair::new(16_384, input.pair.ticks + 1), ..input };
            prop_assert_ne!(r.read(&next).status(), Status::SensorFault(SensorFault::Frozen));
        }

        /// The reference electrode: a shift not positive is `Reference`, a
        /// positive one below the floor `ReferenceLow`; above the floor, a
        /// ratio beyond twice the curve's top (the demo curve spans
        /// 0..=2.5) is `ReferenceLow`, one within reads.
        #[test]
        fn reference_too_small_to_divide_by(s_ref in -0.01f64..0.4, s_probe in 0.0f64..0.8) {
            let mut r = reader(&level_cal(true, false));
            let ticks = (150_000.0 * libm::sqrt(1.0 + s_ref)).round() as u32;
            let comp = CountPair::new(16_384, ticks);
            let st = r.read(&Input { companion: Some(comp), ..Input::counts(pair_for(s_probe)) }).status();
            // The shifts as the reader forms them, from the rounded counts.
            let r_q = (f64::from(ticks) / 150_000.0).powi(2) - 1.0;
            let p_q = (f64::from(pair_for(s_probe).ticks) / 139_542.0).powi(2) - 1.0;
            let floor = 2f64.powi(-8);
            if r_q <= -1e-9 {
                prop_assert_eq!(st, Status::SensorFault(SensorFault::Reference));
            } else if r_q > 1e-9 && r_q < floor * (1.0 - 1e-6) {
                prop_assert_eq!(st, Status::SensorFault(SensorFault::ReferenceLow));
            } else if r_q > floor * (1.0 + 1e-6) {
                let q = p_q / r_q;
                if q > 5.0 * (1.0 + 1e-6) {
                    prop_assert_eq!(st, Status::SensorFault(SensorFault::ReferenceLow));
                } else if q < 5.0 * (1.0 - 1e-6) {
                    prop_assert!(!matches!(st, Status::SensorFault(_)), "{:?} q {}", st, q);
                }
            }
        }

        /// A shift beyond the curve's span by more than its width (the
        /// demo proximity curve spans −0.329..−0.019: reach −0.639..0.291)
        /// is `OutOfReach`; within it the reading has a value.
        #[test]
        fn out_of_reach_shifts(s in -0.75f64..20.0) {
            let mut r = reader(&demo_proximity().unwrap());
            let pair = pair_for(s);
            let st = r.read(&Input::counts(pair)).status();
            let q = (f64::from(pair.ticks) / 139_542.0).powi(2) - 1.0;
            let (lo, hi) = (-0.3292370820418, -0.019099388737231493);
            let (a, b) = (lo - (hi - lo), hi + (hi - lo));
            if q < a - 1e-6 || q > b + 1e-6 {
                // (or the fault window first, for the widest shifts)
                prop_assert!(matches!(st, Status::SensorFault(SensorFault::OutOfReach | SensorFault::Counts(_))), "{:?} at {}", st, q);
            } else if q > a + 1e-6 && q < b - 1e-6 {
                prop_assert!(!matches!(st, Status::SensorFault(_)), "{:?} at {}", st, q);
            }
        }

        /// Arbitrary inputs never panic any reader.
        #[test]
        fn readers_never_panic(cycles: u32, ticks: u32, comp: Option<(u32, u32)>, t: Option<i32>, ring: Option<u16>, which in 0usize..4) {
            let cal = match which {
                0 => demo_proximity().unwrap(),
                1 => level_cal(true, true),
                2 => level_cal(false, true),
                _ => metal_cal(2, 10),
            };
            let mut r = reader(&cal);
            let input = Input {
                pair: CountPair::new(cycles, ticks),
                companion: comp.map(|(c, t)| CountPair::new(c, t)),
                temperature: t.map(CentiCelsius),
                ring_count: ring,
            };
            for _ in 0..3 {
                let _ = r.read(&input);
            }
        }
    }
}
