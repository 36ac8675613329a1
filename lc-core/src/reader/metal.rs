//! Metal detection: baseline, detection, classification.

use core::mem::MaybeUninit;

use super::{metal_detector, Front, Input, MetalClass, ReaderError, SensorFault, Status};
use crate::detector::{Detector, Presence};
use crate::filter::{biased_shift_ema, shift_domain, u16_ema};
use crate::image::{Image, ReaderKind};
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
///   [`Ema<Shift>`](crate::filter::Ema): 17 fraction bits below the
///   shift's LSB, shifts clamped to −32 ≤ s < 32, far beyond any reading),
///   learned while no target is present and frozen while one is; a target
///   that stays present for `relearn_readings` readings becomes the new
///   background (the baseline jumps to the current shift).
/// - **Detection**: |shift − baseline| against the enter and leave
///   thresholds with debounce ([`Detector`]).
/// - **Classification**: the sign of shift − baseline when the target
///   entered: L up (positive) is ferrous, L down non-ferrous.
/// - **Ring-down**: when the calibration sets `ring_drop` and the unit
///   reports ring counts, the count learned with the baseline minus the
///   current count is the loss signal (the ring count's own average,
///   [`Ema<u16>`](crate::filter::Ema)). Both metal classes add loss, so a
///   reading counts towards detection only when its shift is beyond the
///   threshold *and* the ring count has dropped by at least `ring_drop`: a
///   shift without loss (drift, a dielectric, a hand) is not metal.
///
/// The reading ([`MetalReading`]) is the class, the ring drop and the
/// shift minus the baseline; the status is [`Status::NoTarget`] while
/// nothing is present. It holds no curve: it needs nothing from the image
/// after start-up.
///
/// RAM: the front (fault window, shift converter, drift model and its
/// cache, plausibility state), the two averages' states, the detector
/// (thresholds in Q23.40, 32 bits each, debounce counts and state), and the three
/// parameters read per reading (k, `ring_drop`, `relearn_readings`):
/// 144 bytes on a 32-bit target without the `companion` feature, 176 with
/// it (the crate docs, "Memory").
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
// In declaration order, the front last: the state `track` updates lies in
// the first 128 bytes, where Thumb-1's word loads and stores reach it
// with an immediate offset.
#[repr(C)]
pub struct MetalReader {
    /// The shift baseline's state plus 2^16 (`filter::biased_shift_ema`:
    /// the output is `baseline >> 17`); [`UNLEARNED`] before the first
    /// sample and after a relearn (a state is at least −2^62 + 2^16).
    baseline: i64,
    /// Thresholds in Q23.40, below 2^32 (`MetalParams::PPB_LIMIT`).
    detector: Detector<u32>,
    /// The ring count's average, its `Ema<u16>` state (ring count ·
    /// 2^16); [`RING_UNLEARNED`] before the first ring count learned (a
    /// state is at most 2^32 − 2^16).
    ring_baseline: u32,
    /// Readings present in a row, up to `relearn` (saturating).
    present_for: u32,
    /// `relearn_readings` of the image.
    relearn: u32,
    /// `ring_drop` of the image.
    ring_drop: u16,
    /// `baseline_k` of the image minus one, in 0..=15 (so that the
    /// compiler sees k in 1..=16 and its shifts need no masks).
    k_minus_1: u8,
    class: MetalClass,
    pub(super) front: Front,
}

/// [`MetalReader::baseline`] before the first sample.
const UNLEARNED: i64 = i64::MIN;
/// Whether a baseline state is [`UNLEARNED`], from its high word alone:
/// a learned state is at least −2^62 + 2^16, its high word at least −2^30.
#[inline(always)]
fn unlearned(baseline: i64) -> bool {
    (baseline >> 32) as i32 == i32::MIN
}

/// `Front::shift` of a unit with a companion coil (the ratiometric
/// shift). Out of line: the rare configuration, kept off the common
/// path's registers.
#[cold]
#[inline(never)]
fn companion_shift(f: &mut Front, input: &Input) -> Result<Shift, SensorFault> {
    f.shift(input)
}

/// [`MetalReader::ring_baseline`] before the first ring count.
const RING_UNLEARNED: u32 = u32::MAX;

impl MetalReader {
    /// The reader of a metal image ([`ReaderError::WrongKind`] for another
    /// kind). Cost: the thresholds to Q23.40 (a few multiplies, no
    /// division), no validation. RAM: 144 bytes on a 32-bit target, 176 with the
    /// `companion` feature (the crate docs, "Memory"); stack: the same,
    /// once.
    pub fn new(image: &Image<'_>) -> Result<Self, ReaderError> {
        Self::build(image, |reader| reader)
    }

    /// [`MetalReader::new`] built in place, in storage the caller provides
    /// (a static, a C API's opaque storage): the kind is checked first,
    /// then the reader is written straight into `slot`, so no `Result<Self, _>`
    /// and no second copy of the reader is made. Returns the reader in
    /// `slot`; on an error `slot` is left as it was (uninitialised). Cost:
    /// as [`MetalReader::new`]. RAM: `slot` (144 bytes on a 32-bit target,
    /// 176 with the `companion` feature; the crate docs, "Memory"); stack:
    /// no reader-sized temporary.
    pub fn init<'s>(
        slot: &'s mut MaybeUninit<Self>,
        image: &Image<'_>,
    ) -> Result<&'s mut Self, ReaderError> {
        Self::build(image, |reader| slot.write(reader))
    }

    /// The one field list of [`MetalReader::new`] and
    /// [`MetalReader::init`]: the kind checked, then the reader built and
    /// handed to `put` (returned as it is, or written into a slot). Inlined
    /// into both, so each writes the fields straight to where the reader
    /// lives.
    #[inline(always)]
    fn build<R>(image: &Image<'_>, put: impl FnOnce(Self) -> R) -> Result<R, ReaderError> {
        let params = match (image.kind(), image.metal()) {
            (ReaderKind::Metal, Some(p)) => p,
            (kind, _) => return Err(ReaderError::WrongKind(kind)),
        };
        Ok(put(Self {
            front: image.front(),
            baseline: UNLEARNED,
            // The image's validation checked the parameters
            // (`metal_builds`): the thresholds ordered, the debounce counts
            // and k in range.
            detector: Detector::new_unchecked(metal_detector(&params)),
            ring_baseline: RING_UNLEARNED,
            present_for: 0,
            relearn: params.relearn_readings,
            ring_drop: params.ring_drop,
            k_minus_1: params.baseline_k.wrapping_sub(1),
            class: MetalClass::None,
        }))
    }

    /// Whether a target is present.
    pub fn presence(&self) -> Presence {
        self.detector.presence()
    }

    /// One reading; updates the baseline and the detector.
    #[inline(never)]
    pub fn read(&mut self, input: &Input) -> MetalReading {
        match self.front_shift(input) {
            // In the baseline's domain (|s| < 32, far beyond any reading),
            // so that the difference below is exact.
            Ok(s) => self.track(shift_domain(s.raw_q40()), input.ring_count),
            Err(f) => MetalReading::fault(f),
        }
    }

    /// `Front::shift` without the configured gate's shortcut: a pair
    /// inside the gate's accepted ticks by the gate's general normalisation
    /// (`ShiftConverter::gate_general`), any other through the window's
    /// full check and `ShiftConverter::shift_general`; the drift
    /// correction by the out-of-line `DriftFactor::apply_saturated`. The
    /// same results (the shortcut gives what the general path gives, and
    /// the saturating form what the plain one gives), about 450 bytes less
    /// flash on a Cortex-M0 for about 35 more instructions a reading (a
    /// metal detector's part has the least flash of the three).
    #[inline(always)]
    fn front_shift(&mut self, input: &Input) -> Result<Shift, SensorFault> {
        let f = &mut self.front;
        if f.companion().is_some() {
            // A companion coil (the `companion` feature only; without it
            // this folds away): the front's ratiometric path.
            return companion_shift(f, input);
        }
        let pair = input.pair;
        // A pair inside the gate's accepted ticks passes the window and is
        // on the gate: its shift straight from the gate's reciprocal. Any
        // other pair: the window's full check, and then the division path.
        // A pair the window passes off the accepted ticks is off the gate
        // (they are the window's ticks at the image's gate, which is the
        // converter's; with no accepted ticks no pair of the gate's cycles
        // passes), with non-zero counts: the path `shift` takes for it.
        let s = match &f.accepted {
            Some(a) if a.contains(pair) => f.converter.gate_general(pair.ticks),
            _ => {
                f.window.check(pair).map_err(SensorFault::Counts)?;
                f.converter.shift_by_division(pair.ticks, pair.cycles)
            }
        }
        .map_err(SensorFault::Shift)?;
        Ok(match f.plausible.check(pair, input.temperature)? {
            Some(t) => f.factor(t).apply_saturated(s),
            None => s,
        })
    }

    /// Baselines, detection and classification of the shift `s` (raw
    /// Q23.40, in the baseline's domain).
    #[inline(always)]
    fn track(&mut self, s: i64, ring_count: Option<u16>) -> MetalReading {
        if unlearned(self.baseline) {
            // The first reading (after start or a relearn) is the
            // background: both averages start with it (the ring count's is
            // unlearned too then). The reading below then has a zero delta
            // and ring drop, and leaves everything as it found it: the
            // detector absent with no run (a zero signal is below the enter
            // threshold, which is at least `ppb_to_q40(1)`), the class none,
            // the present count zero, and the averages where they start (a
            // learning step from a first sample changes nothing).
            self.baseline = biased_shift_ema::init(s);
            if let Some(rc) = ring_count {
                self.ring_baseline = u16_ema::init(rc);
            }
        }
        // k − 1 ≤ 15 (validation): the mask changes nothing.
        let k = u32::from(self.k_minus_1 & 15) + 1;
        // Both within ±2^45: exact, cannot wrap.
        let delta = s.wrapping_sub(biased_shift_ema::output(self.baseline));
        let (ring_drop, dropped) = match ring_count {
            Some(rc) if self.ring_baseline != RING_UNLEARNED => {
                let d = i32::from(u16_ema::output(self.ring_baseline)) - i32::from(rc);
                (Some(d), d >= i32::from(self.ring_drop))
            }
            _ => (None, false),
        };
        let signal = if dropped || self.ring_drop == 0 {
            delta.unsigned_abs()
        } else {
            0
        };
        // The detector is rising (`metal_detector`).
        let event = self.detector.update_rising_wide(signal);
        if self.detector.is_present() {
            if event.is_some() {
                self.class = if delta > 0 {
                    MetalClass::Ferrous
                } else {
                    MetalClass::NonFerrous
                };
            }
            self.present_for = self.present_for.saturating_add(1);
            if self.relearn > 0 && self.present_for >= self.relearn {
                // The target has become the background.
                self.baseline = UNLEARNED;
                self.ring_baseline = RING_UNLEARNED;
                self.detector.reset();
                self.present_for = 0;
                self.class = MetalClass::None;
            }
        } else {
            self.present_for = 0;
            self.class = MetalClass::None;
            self.baseline = biased_shift_ema::step(self.baseline, s, k);
            if let Some(rc) = ring_count {
                self.ring_baseline = if self.ring_baseline == RING_UNLEARNED {
                    u16_ema::init(rc)
                } else {
                    u16_ema::step(self.ring_baseline, rc, k)
                };
            }
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

#[cfg(all(test, feature = "design"))]
mod tests {
    use super::*;
    use crate::counting::CountPair;
    use crate::detector::{DetectorConfig, Polarity};
    use crate::filter::Ema;
    use crate::image::tests_support::demo_proximity;
    use crate::image::{Calibration, MetalParams};
    use crate::reader::{ppb_to_q40, Front};
    use proptest::prelude::*;

    /// The reader as it was first written, from the public filters and
    /// detector (`Ema<Shift>`, `Ema<u16>`, `Detector<u64>`) and their
    /// outputs kept as they change: the reference the compact reader
    /// must equal reading for reading.
    struct Reference {
        front: Front,
        params: MetalParams,
        baseline: Ema<Shift>,
        ring_baseline: Ema<u16>,
        base: i64,
        ring_base: Option<u16>,
        learned: bool,
        detector: Detector<u64>,
        class: MetalClass,
        present_for: u32,
    }

    impl Reference {
        fn new(front: Front, params: MetalParams) -> Self {
            let k = u32::from(params.baseline_k);
            Self {
                front,
                params,
                baseline: Ema::new(k).unwrap(),
                ring_baseline: Ema::new(k).unwrap(),
                base: 0,
                ring_base: None,
                learned: false,
                detector: Detector::new(DetectorConfig {
                    polarity: Polarity::Rising,
                    enter_threshold: u64::from(ppb_to_q40(params.enter_ppb)),
                    leave_threshold: u64::from(ppb_to_q40(params.leave_ppb)),
                    enter_samples: params.enter_samples,
                    leave_samples: params.leave_samples,
                })
                .unwrap(),
                class: MetalClass::None,
                present_for: 0,
            }
        }

        fn learn(&mut self, s: Shift, ring_count: Option<u16>) {
            self.base = self.baseline.update(s).raw_q40();
            if let Some(rc) = ring_count {
                self.ring_base = Some(self.ring_baseline.update(rc));
            }
        }

        fn read(&mut self, input: &Input) -> MetalReading {
            let s = match self.front.shift(input) {
                Ok(s) => Shift::from_raw_q40(shift_domain(s.raw_q40())),
                Err(f) => return MetalReading::fault(f),
            };
            if !self.learned {
                self.learn(s, input.ring_count);
                self.learned = true;
            }
            let delta = s.raw_q40() - self.base;
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
                if self.params.relearn_readings > 0
                    && self.present_for >= self.params.relearn_readings
                {
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

    fn image(cal: &Calibration) -> Image<'static> {
        let buf = Box::leak(Box::new(cal.to_image_buf().unwrap()));
        buf.image().unwrap()
    }

    fn params() -> impl Strategy<Value = MetalParams> {
        (
            1u32..3_000_000,
            1u32..100,
            1u16..5,
            1u16..5,
            1u8..=16,
            prop_oneof![Just(0u16), 1u16..8],
            prop_oneof![Just(0u32), 1u32..40],
        )
            .prop_map(
                |(enter, gap_pct, n_in, n_out, k, ring_drop, relearn)| MetalParams {
                    enter_ppb: enter,
                    leave_ppb: enter - (enter / 100 * gap_pct).clamp(1, enter),
                    enter_samples: n_in,
                    leave_samples: n_out,
                    baseline_k: k,
                    ring_drop,
                    relearn_readings: relearn,
                },
            )
    }

    /// One reading's input: ticks near the demo rest point (shifts within
    /// about ±3e-3) on the gate or off it, now and then a stalled counter
    /// (a fault) or a wild pair; a ring count or none.
    fn input() -> impl Strategy<Value = Input> {
        (
            prop_oneof![
                8 => (-200i32..200).prop_map(|d| CountPair::new(16_384, 139_542u32.wrapping_add_signed(d))),
                // Off the gate, inside the window: the division path.
                2 => (-200i32..200, prop_oneof![Just(8_192u32), Just(16_383), Just(16_385), Just(20_000)])
                    .prop_map(|(d, c)| CountPair::new(c, ((139_542u64 * u64::from(c) / 16_384) as u32).wrapping_add_signed(d))),
                1 => (0u32..3, any::<u32>()).prop_map(|(c, t)| CountPair::new(c, t)),
            ],
            prop_oneof![
                4 => (10u16..30).prop_map(Some),
                1 => Just(None),
                1 => any::<u16>().prop_map(Some),
            ],
        )
            .prop_map(|(pair, ring_count)| Input {
                ring_count,
                ..Input::counts(pair)
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2_000))]

        /// The compact reader equals the reference, reading for reading
        /// (class, ring drop, delta, status and presence), over arbitrary
        /// parameters and inputs with targets coming and going, faults,
        /// missing ring counts and relearns.
        #[test]
        fn equals_the_reference(params in params(), inputs in prop::collection::vec(input(), 1..300), steps in prop::collection::vec(-2_000i32..2_000, 0..6), companion: bool, comp in prop::collection::vec(prop_oneof![8 => (-50i32..50).prop_map(Some), 1 => Just(None)], 300)) {
            let mut cal = demo_proximity().unwrap();
            cal.kind = ReaderKind::Metal;
            cal.curve = None;
            cal.metal = Some(params);
            // A companion coil now and then (the reader's ratiometric
            // path), its pairs near its rest point or missing.
            if companion {
                cal.companion_rest = Some(
                    crate::shift::RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap(),
                );
            }
            let mut reader = MetalReader::new(&image(&cal)).unwrap();
            let mut reference = Reference::new(reader.front, params);
            // Targets: a few step changes of the ticks over stretches of
            // the sequence.
            let stretch = inputs.len() / (steps.len() + 1) + 1;
            for (i, input) in inputs.iter().enumerate() {
                let offset = steps.get(i / stretch).copied().unwrap_or(0);
                let mut input = *input;
                if input.pair.cycles == 16_384 {
                    input.pair.ticks = input.pair.ticks.wrapping_add_signed(offset);
                }
                if companion {
                    input.companion = comp[i].map(|d| CountPair::new(16_384, 150_000u32.wrapping_add_signed(d)));
                }
                let got = reader.read(&input);
                let want = reference.read(&input);
                prop_assert_eq!(got, want, "reading {}", i);
                prop_assert_eq!(reader.presence(), reference.detector.presence(), "reading {}", i);
            }
        }
    }
}
