//! Metal detection: baseline, detection, classification.

use core::mem::MaybeUninit;

use super::{metal_detector, Front, Input, MetalClass, ReaderError, SensorFault, Status};
use crate::detector::{Detector, Presence};
use crate::filter::{shift_domain, Ema};
use crate::image::{Image, MetalParams, ReaderKind};
use crate::shift::Shift;

/// A metal reading.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MetalReading {
    /// The class of the target present ([`MetalClass::None`] when none).
    pub class: MetalClass,
    /// The ring-count drop against the learned ring count, when the unit
    /// reports ring counts.
    pub ring_drop: Option<i32>,
    /// The shift minus the baseline.
    pub delta: Shift,
    /// Status: [`Status::NoTarget`] while nothing is present.
    pub status: Status,
}

impl MetalReading {
    const fn fault(f: SensorFault) -> Self {
        Self {
            class: MetalClass::None,
            ring_drop: None,
            delta: Shift::ZERO,
            status: Status::SensorFault(f),
        }
    }
}

/// A metal detector on one coil.
///
/// - **Baseline**: an exponential average of the shift (weight 2^-k,
///   [`Ema<Shift>`](Ema): 17 fraction bits below the shift's LSB, shifts
///   clamped to −32 ≤ s < 32, far beyond any reading), learned while no
///   target is present and frozen while one is; a target that stays
///   present for `relearn_readings` readings becomes the new background
///   (the baseline jumps to the current shift).
/// - **Detection**: |shift − baseline| against the enter and leave
///   thresholds with debounce ([`Detector`]).
/// - **Classification**: the sign of shift − baseline when the target
///   entered: L up (positive) is ferrous, L down non-ferrous.
/// - **Ring-down**: when the calibration sets `ring_drop` and the unit
///   reports ring counts, the count learned with the baseline minus the
///   current count is the loss signal (the ring count's own average,
///   [`Ema<u16>`](Ema)). Both metal classes add loss, so a
///   reading counts towards detection only when its shift is beyond the
///   threshold *and* the ring count has dropped by at least `ring_drop`: a
///   shift without loss (drift, a dielectric, a hand) is not metal.
///
/// The reading ([`MetalReading`]) is the class, the ring drop and the
/// shift minus the baseline; the status is [`Status::NoTarget`] while
/// nothing is present. It holds no curve: it needs nothing from the image
/// after start-up.
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MetalReader {
    pub(super) front: Front,
    params: MetalParams,
    baseline: Ema<Shift>,
    ring_baseline: Ema<u16>,
    /// The two baselines' current outputs (`baseline.value()`, 0 before
    /// the first sample, and `ring_baseline.value()`), kept as they change:
    /// each output is a rounding of a wide state, wanted on every reading.
    base: i64,
    ring_base: Option<u16>,
    learned: bool,
    detector: Detector<u64>,
    class: MetalClass,
    present_for: u32,
}

impl MetalReader {
    /// The reader of a metal image ([`ReaderError::WrongKind`] for another
    /// kind). Cost: two small divisions (the thresholds to Q23.40), no
    /// validation: about 2 700 Cortex-M0 instructions. RAM: 248 bytes on a
    /// 32-bit target (the crate docs, "Memory"); stack: the same, once.
    pub fn new(image: &Image<'_>) -> Result<Self, ReaderError> {
        let params = match (image.kind(), image.metal()) {
            (ReaderKind::Metal, Some(p)) => p,
            (kind, _) => return Err(ReaderError::WrongKind(kind)),
        };
        let k = u32::from(params.baseline_k);
        // The image's validation built these once already (an image that
        // validates builds its reader); the errors cannot occur.
        let not_built = ReaderError::NotBuilt(ReaderKind::Metal);
        Ok(Self {
            front: image.front(),
            params,
            baseline: Ema::new(k).map_err(|_| not_built)?,
            ring_baseline: Ema::new(k).map_err(|_| not_built)?,
            base: 0,
            ring_base: None,
            learned: false,
            detector: Detector::new(metal_detector(&params)).map_err(|_| not_built)?,
            class: MetalClass::None,
            present_for: 0,
        })
    }

    /// [`MetalReader::new`] built in place, in storage the caller provides
    /// (a static, a C API's opaque storage): the kind is checked and the
    /// fallible parts (the averages, the detector) are built first, then
    /// the reader is written straight into `slot`, so no `Result<Self, _>`
    /// and no second copy of the reader is made. Returns the reader in
    /// `slot`; on an error `slot` is left as it was (uninitialised). Cost:
    /// as [`MetalReader::new`]. RAM: `slot` (248 bytes on a 32-bit target,
    /// the crate docs, "Memory"); stack: the parts built first (under 100
    /// bytes), no reader-sized temporary.
    pub fn init<'s>(
        slot: &'s mut MaybeUninit<Self>,
        image: &Image<'_>,
    ) -> Result<&'s mut Self, ReaderError> {
        let params = match (image.kind(), image.metal()) {
            (ReaderKind::Metal, Some(p)) => p,
            (kind, _) => return Err(ReaderError::WrongKind(kind)),
        };
        let k = u32::from(params.baseline_k);
        // As in `new`: validation built these once already.
        let not_built = ReaderError::NotBuilt(ReaderKind::Metal);
        let baseline = Ema::new(k).map_err(|_| not_built)?;
        let ring_baseline = Ema::new(k).map_err(|_| not_built)?;
        let detector = Detector::new(metal_detector(&params)).map_err(|_| not_built)?;
        Ok(slot.write(Self {
            front: image.front(),
            params,
            baseline,
            ring_baseline,
            base: 0,
            ring_base: None,
            learned: false,
            detector,
            class: MetalClass::None,
            present_for: 0,
        }))
    }

    /// Whether a target is present.
    pub fn presence(&self) -> Presence {
        self.detector.presence()
    }

    /// Feeds the baselines (the ring count's when the unit reports one)
    /// and keeps their outputs.
    #[inline(always)]
    fn learn(&mut self, s: Shift, ring_count: Option<u16>) {
        self.base = self.baseline.update(s).raw_q40();
        if let Some(rc) = ring_count {
            self.ring_base = Some(self.ring_baseline.update(rc));
        }
    }

    /// One reading; updates the baseline and the detector.
    #[inline(never)]
    pub fn read(&mut self, input: &Input) -> MetalReading {
        let s = match self.front.shift(input) {
            // In the baseline's domain (|s| < 32, far beyond any reading),
            // so that the difference below is exact.
            Ok(s) => Shift::from_raw_q40(shift_domain(s.raw_q40())),
            Err(f) => return MetalReading::fault(f),
        };
        if !self.learned {
            self.learn(s, input.ring_count);
            self.learned = true;
        }
        // Both within ±2^45: exact, cannot wrap.
        let delta = s.raw_q40().wrapping_sub(self.base);
        let ring_drop = match (input.ring_count, self.ring_base) {
            (Some(rc), Some(base)) => Some(i32::from(base) - i32::from(rc)),
            _ => None,
        };
        let lossy = self.params.ring_drop == 0
            || ring_drop.is_some_and(|d| d >= i32::from(self.params.ring_drop));
        let signal = if lossy { delta.unsigned_abs() } else { 0 };
        let event = self.detector.update(signal);
        let present = self.detector.presence() == Presence::Present;
        if event.is_some() && present {
            self.class = if delta > 0 {
                MetalClass::Ferrous
            } else {
                MetalClass::NonFerrous
            };
        }
        if present {
            self.present_for = self.present_for.saturating_add(1);
            if self.params.relearn_readings > 0 && self.present_for >= self.params.relearn_readings
            {
                // The target has become the background.
                self.baseline.reset();
                self.ring_baseline.reset();
                self.base = 0;
                self.ring_base = None;
                self.learned = false;
                self.detector.reset();
                self.present_for = 0;
                self.class = MetalClass::None;
            }
        } else {
            self.present_for = 0;
            self.class = MetalClass::None;
            self.learn(s, input.ring_count);
        }
        let status = if self.class == MetalClass::None {
            Status::NoTarget
        } else {
            Status::Ok
        };
        MetalReading {
            class: self.class,
            ring_drop,
            delta: Shift::from_raw_q40(delta),
            status,
        }
    }
}
