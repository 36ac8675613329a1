//! Plausibility of a reading's inputs: what the fault window cannot see
//! in a single count pair.
//!
//! Every reader runs these checks after the fault window and the shift
//! (a window fault names the cause first), each with its own status:
//!
//! | check | status | state |
//! |---|---|---|
//! | the same count pair [`FrozenCounter::limit`] times in a row | [`SensorFault::Frozen`] | last pair, run length, limit: 10 bytes |
//! | a temperature outside the drift model's [`TEMPERATURE_DOMAIN`] | [`SensorFault::TemperatureOutOfDomain`] | — |
//! | no temperature, the image having a drift model | [`SensorFault::TemperatureMissing`] | one flag |
//! | level with a reference electrode: its shift below [`MIN_REFERENCE_SHIFT_Q40`], or a ratio out of the curve's reach ([`in_reach`]) | [`SensorFault::ReferenceLow`] | — |
//! | proximity, level without a reference electrode: a shift out of the curve's reach ([`in_reach`]) | [`SensorFault::OutOfReach`] | — |
//!
//! - **Frozen counter.** A healthy reciprocal counter dithers: its ticks
//!   over a gate carry the phase left over from the gate before, and the
//!   counter's jitter adds to it, so the same pair returns only while the
//!   input stands still *and* its ratio sits on a whole tick. A counter (or
//!   a capture register, or a firmware buffer) that stops updating returns
//!   the same pair for ever. The check counts how many readings in a row
//!   had the pair of the reading before; from the `limit`-th identical
//!   pair on, each reading is [`SensorFault::Frozen`] until the pair
//!   changes. The default limit, [`DEFAULT_FROZEN_LIMIT`] = 255 (the most
//!   a one-byte run counter holds), is 25.5 s at ten readings a second,
//!   and long enough that a quiet counter in front of a still target does
//!   not trip it by chance: even a pair that repeats with probability 0.9
//!   (a ratio centred on a whole tick, 0.3 ticks of jitter) makes a run of
//!   255 with probability 0.9^254 ≈ 2·10⁻¹². A unit whose counter can be
//!   quieter than that (a still target and a jitter-free clock) needs a
//!   larger limit than a byte holds, or the check off:
//!   [`Reader::set_frozen_limit`](super::Reader::set_frozen_limit) (0 turns
//!   it off; the image format has no field for it). The first `limit − 1`
//!   readings of a freeze cannot be told from a still input: they read
//!   normally. Rows the fault window rejects (or whose shift cannot be
//!   formed) neither count nor break a run.
//! - **Temperature domain.** The drift model is declared over −100 °C ..=
//!   +300 °C ([`TEMPERATURE_DOMAIN`]); a temperature outside (an NTC
//!   converter that does not refuse an open or shorted sensor, a logger's
//!   sentinel such as −273.15, a bit error) was clamped to the domain and
//!   gave a wrongly compensated reading. A reader whose image has no drift
//!   model ignores the temperature and checks nothing.
//! - **Missing temperature.** An image *has a drift model* when either
//!   coefficient is non-zero (b1 ≠ 0 or b2 ≠ 0, i.e. not
//!   [`TemperatureModel::NONE`](crate::drift::TemperatureModel::NONE)'s
//!   correction): its readings are only right compensated, so a reading
//!   without a temperature (the NTC converter refused an open or shorted
//!   sensor) is [`SensorFault::TemperatureMissing`], not an uncompensated
//!   value.
//! - **Reference electrode too small to divide by** (level with a
//!   reference electrode). The level is the ratio q = s_probe /
//!   s_reference. A reference shift not positive is
//!   [`SensorFault::Reference`] (dry). A positive shift below
//!   [`MIN_REFERENCE_SHIFT_Q40`] (2^-8, 0.39 %) is
//!   [`SensorFault::ReferenceLow`]: one count's step of shift (about 2^-16
//!   for ~2^17 ticks a gate) is then more than 0.4 % of the divisor. A
//!   ratio the curve cannot reach is also [`SensorFault::ReferenceLow`]: a
//!   probe covered to the top gives at most the full tank's ratio, so a
//!   ratio beyond the calibrated span by more than the span's own width
//!   ([`in_reach`]) means the divisor has lost at least half its
//!   wetted shift: a nearly dry electrode, which read `above_range` at a
//!   full tank. A ratio between the end of the span and that reach
//!   (overfill, a coated probe, or an electrode drying by less than half)
//!   reads below or above range as before.
//! - **Out of reach.** A shift beyond the curve's calibrated span by more
//!   than the span's own width is no reading of this sensor: a proximity
//!   target changes L·C by tens of percent, not by a factor, and a level
//!   probe cannot be wetter than full. It is what a channel swap (another
//!   unit's counts under this channel), a wrong image or a replaced coil
//!   gives, and it read `no_target` or `above_range` before. Readings
//!   between the span's end and that reach (a target touching the coil,
//!   drift at rest) read below or above range (or no target) as before.
//!
//! Cost per reading (Cortex-M0): the frozen check is two word compares
//! and, on a new pair, three stores (on a repeated one a saturating byte
//! increment and a compare); the temperature checks a flag test and two
//! compares (without a drift model none, and no drift correction); the
//! reference floor one 64-bit compare; the reach check runs only on a
//! shift or ratio already out of the curve's range (two node reads from
//! flash and a few compares). RAM: 11 bytes of [`FrozenCounter`] and flag
//! in each reader's front (the crate docs, "Memory", give the readers'
//! sizes); measured figures in docs/faults.md.
//!
//! **Not a safety-rated component.** These checks catch the faults listed,
//! not every fault; where a reading protects people or machines, the
//! safety function must follow the applicable functional-safety
//! standards, local codes and a qualified engineer's review.

use super::SensorFault;
use crate::counting::CountPair;
use crate::curve::CurveRef;
use crate::drift::{TemperatureModel, TEMPERATURE_DOMAIN};
use crate::temperature::CentiCelsius;

/// The frozen-counter limit of a new reader: the 255th identical count
/// pair in a row is a fault.
pub const DEFAULT_FROZEN_LIMIT: u8 = 255;

/// The smallest reference-electrode shift a level reader divides by,
/// Q23.40: 2^-8 (0.39 %).
pub const MIN_REFERENCE_SHIFT_Q40: i64 = 1 << 32;

/// The run of identical count pairs: the frozen-counter check, usable on
/// its own (a host converting counts without a reader).
///
/// ```
/// use lc_core::counting::CountPair;
/// use lc_core::reader::FrozenCounter;
///
/// let mut f = FrozenCounter::new(3);
/// let p = CountPair::new(16_384, 139_542);
/// assert_eq!([f.observe(p), f.observe(p), f.observe(p)], [false, false, true]);
/// assert!(!f.observe(CountPair::new(16_384, 139_543)));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FrozenCounter {
    last: CountPair,
    /// Readings in a row with `last`, saturating at 255 (0 before the
    /// first).
    run: u8,
    limit: u8,
}

impl Default for FrozenCounter {
    fn default() -> Self {
        Self::new(DEFAULT_FROZEN_LIMIT)
    }
}

impl FrozenCounter {
    /// A check that flags the `limit`-th identical pair in a row and every
    /// one after it; `limit` 0 or 1 turns the check off (a single reading
    /// is never frozen).
    pub const fn new(limit: u8) -> Self {
        Self {
            last: CountPair::new(0, 0),
            run: 0,
            limit,
        }
    }

    /// The limit.
    pub const fn limit(&self) -> u8 {
        self.limit
    }

    /// Counts `pair`; `true` when it makes a run of at least `limit`.
    #[inline(always)]
    pub fn observe(&mut self, pair: CountPair) -> bool {
        // The ticks first: a gated counter's cycles are the gate on every
        // reading, its ticks what changes.
        if pair.ticks != self.last.ticks || pair.cycles != self.last.cycles {
            // A run of one is never frozen (a limit of 0 or 1 is off): the
            // common path stores the pair and returns, no compare of the
            // limit.
            self.last = pair;
            self.run = 1;
            return false;
        }
        self.run = self.run.saturating_add(1);
        self.limit > 1 && self.run >= self.limit
    }
}

/// The plausibility state of a reader's front: the frozen-counter run and
/// whether the image has a drift model.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(crate) struct Plausible {
    pub(crate) frozen: FrozenCounter,
    /// b1 ≠ 0 or b2 ≠ 0: a temperature is required, and checked.
    needs_temperature: bool,
}

impl Plausible {
    pub(crate) fn new(drift: &TemperatureModel) -> Self {
        Self {
            frozen: FrozenCounter::default(),
            needs_temperature: drift.b1_raw() != 0 || drift.b2_raw() != 0,
        }
    }

    /// After the fault window and the shift (so that rows the window
    /// rejects neither count nor break a run, and nothing stays live across
    /// the shift): the frozen check of `pair`, then the temperature.
    /// Returns the temperature to compensate with: `None` when the image
    /// has no drift model (its correction is none at every temperature),
    /// otherwise the temperature, inside the domain.
    #[inline(always)]
    pub(crate) fn check(
        &mut self,
        pair: CountPair,
        t: Option<CentiCelsius>,
    ) -> Result<Option<CentiCelsius>, SensorFault> {
        if self.frozen.observe(pair) {
            return Err(SensorFault::Frozen);
        }
        if !self.needs_temperature {
            // No drift model: its correction is none at any temperature,
            // so there is nothing to compensate (and nothing to check).
            return Ok(None);
        }
        let (lo, hi) = TEMPERATURE_DOMAIN;
        match t {
            None => Err(SensorFault::TemperatureMissing),
            // One subtraction and one unsigned compare: outside lo..=hi.
            Some(c) if c.0.wrapping_sub(lo.0) as u32 > hi.0.wrapping_sub(lo.0) as u32 => {
                Err(SensorFault::TemperatureOutOfDomain)
            }
            Some(c) => Ok(Some(c)),
        }
    }
}

/// The reference floor: `r` (the reference shift, Q.40, positive) is
/// large enough to divide by.
#[inline(always)]
pub(crate) fn reference_divisible(r: i64) -> bool {
    r >= MIN_REFERENCE_SHIFT_Q40
}

/// Whether the curve input `q` (a shift or a ratio, Q.40) lies within the
/// curve's calibrated span extended by the span's width at each end:
/// [x₀ − w, xₙ + w] with w = xₙ − x₀. For a level ratio beyond it the
/// reference electrode has lost at least half its shift (for a curve
/// starting at q = 0, empty: q > 2·xₙ); for a shift, the counts are not
/// this sensor's. The readers run the same check inlined, on a reading
/// already out of the curve's range (only the end it passed is compared,
/// on unsigned distances; property-tested equal to this function).
#[inline(never)]
pub fn in_reach(q: i64, curve: &CurveRef<'_>) -> bool {
    let n = curve.len();
    let (Some(first), Some(last)) = (curve.node(0), curve.node(n.wrapping_sub(1))) else {
        return true;
    };
    let (a, b) = (first.shift.raw_q40(), last.shift.raw_q40());
    let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
    let w = hi.saturating_sub(lo);
    q >= lo.saturating_sub(w) && q <= hi.saturating_add(w)
}

/// The frozen-counter limit of each typed reader (as
/// [`Reader::set_frozen_limit`](super::Reader::set_frozen_limit)).
macro_rules! frozen_limit {
    ($($feature:literal [$($g:tt)*] $reader:ty),*) => {
        $(
            #[cfg(feature = $feature)]
            impl<$($g)*> $reader {
                /// Sets the frozen-counter limit: the `limit`-th identical
                /// count pair in a row is [`SensorFault::Frozen`]; 0 turns
                /// the check off; a new reader has [`DEFAULT_FROZEN_LIMIT`].
                pub fn set_frozen_limit(&mut self, limit: u8) {
                    self.front.plausible.frozen = FrozenCounter::new(limit);
                }
            }
        )*
    };
}
frozen_limit!(
    "proximity" [] super::ProximityReader<'_>,
    "level" [E: super::Electrodes] super::LevelReader<'_, E>,
    "metal" [] super::MetalReader
);

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        /// The frozen check against its definition: a reading is frozen
        /// exactly when it and the `limit − 1` readings before it are the
        /// same pair (runs longer than 255 stay frozen).
        #[test]
        fn frozen_is_a_run_of_limit(limit in 0u8..12, seq in prop::collection::vec((0u32..3, 0u32..3), 0..300)) {
            let mut f = FrozenCounter::new(limit);
            let pairs: Vec<CountPair> = seq.iter().map(|&(c, t)| CountPair::new(c, t)).collect();
            for (i, &p) in pairs.iter().enumerate() {
                let got = f.observe(p);
                let run = pairs[..=i].iter().rev().take_while(|&&q| q == p).count();
                let want = limit > 1 && run >= usize::from(limit);
                prop_assert_eq!(got, want, "at {}", i);
            }
        }

        /// A run of any length at the default limit: frozen from the 255th.
        #[test]
        fn default_limit_flags_the_255th(extra in 0usize..600, ticks: u32) {
            let mut f = FrozenCounter::default();
            let p = CountPair::new(16_384, ticks);
            for i in 1..=(254 + extra) {
                prop_assert_eq!(f.observe(p), i >= 255, "{}", i);
            }
        }

        /// The temperature checks: without a drift model nothing; with one,
        /// missing and out-of-domain temperatures are faults, in-domain
        /// ones pass unchanged; frozen comes first.
        #[test]
        fn temperature_checks(t: Option<i32>, b1 in -1000i32..1000, frozen: bool) {
            let drift = TemperatureModel::new(CentiCelsius(2_500), b1, 0).unwrap();
            let mut p = Plausible::new(&drift);
            p.frozen = FrozenCounter::new(2);
            if frozen {
                // The pair's first reading: the second is frozen.
                let _ = p.check(CountPair::new(1, 1), None);
            }
            let got = p.check(CountPair::new(1, 1), t.map(CentiCelsius));
            let want = if frozen {
                Err(SensorFault::Frozen)
            } else if b1 == 0 {
                Ok(None)
            } else {
                match t {
                    None => Err(SensorFault::TemperatureMissing),
                    Some(c) if !(-10_000..=30_000).contains(&c) => Err(SensorFault::TemperatureOutOfDomain),
                    Some(c) => Ok(Some(CentiCelsius(c))),
                }
            };
            prop_assert_eq!(got, want);
        }
    }

    #[test]
    fn domain_ends_are_inside() {
        let drift = TemperatureModel::new(CentiCelsius(2_500), 5, 0).unwrap();
        let mut p = Plausible::new(&drift);
        for (i, (t, ok)) in [
            (-10_001, false),
            (-10_000, true),
            (30_000, true),
            (30_001, false),
            (-27_315, false),
            (i32::MAX, false),
            (i32::MIN, false),
        ]
        .into_iter()
        .enumerate()
        {
            let pair = CountPair::new(1, i as u32);
            assert_eq!(p.check(pair, Some(CentiCelsius(t))).is_ok(), ok, "{t}");
        }
        assert_eq!(
            Plausible::new(&TemperatureModel::NONE)
                .check(CountPair::new(1, 1), Some(CentiCelsius(i32::MAX))),
            Ok(None)
        );
    }
}
