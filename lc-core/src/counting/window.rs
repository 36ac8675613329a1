//! The fault window: which count pairs are plausible readings at all.

use super::CountPair;
use crate::derived::mul_wide as wide;
use crate::fixed::div_rem_u64_u32;
use core::fmt;

/// Why a count pair is not a plausible reading.
///
/// Each variant names the failure a field engineer would look for: a dead
/// oscillator (open or shorted coil), a dead reference, a gate closed too
/// early, or a frequency the tank cannot produce.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum FaultError {
    /// No sensor cycle in the gate: the oscillator does not run.
    NoOscillation,
    /// No reference tick in the gate: the reference clock does not run or
    /// the gate never opened.
    NoReference,
    /// Fewer sensor cycles than the window's minimum.
    TooFewCycles,
    /// Frequency below the window's lower limit.
    FrequencyTooLow,
    /// Frequency above the window's upper limit.
    FrequencyTooHigh,
}

impl fmt::Display for FaultError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            FaultError::NoOscillation => "no sensor cycles counted: oscillator not running",
            FaultError::NoReference => "no reference ticks counted: reference clock or gate fault",
            FaultError::TooFewCycles => "too few sensor cycles in the gate",
            FaultError::FrequencyTooLow => "sensor frequency below the plausible band",
            FaultError::FrequencyTooHigh => "sensor frequency above the plausible band",
        })
    }
}

impl core::error::Error for FaultError {}

/// Why a fault window could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum WindowError {
    /// The reference frequency is zero.
    ZeroReference,
    /// The lower frequency limit exceeds the upper one.
    EmptyBand,
}

impl fmt::Display for WindowError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            WindowError::ZeroReference => "reference frequency must not be zero",
            WindowError::EmptyBand => "lower frequency limit exceeds the upper limit",
        })
    }
}

impl core::error::Error for WindowError {}

/// Plausibility limits for a count pair: a frequency band in hertz and a
/// minimum number of sensor cycles.
///
/// The check costs four 32 × 32-bit multiplies and no division: f = f_ref ·
/// cycles / ticks lies in [min, max] exactly when
/// `min · ticks ≤ f_ref · cycles ≤ max · ticks`, compared in 64 bits
/// (products of two `u32` cannot overflow). The band edges are inclusive.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FaultWindow {
    reference_hz: u32,
    min_hz: u32,
    max_hz: u32,
    min_cycles: u32,
}

/// The reference tick counts a [`FaultWindow`] accepts for readings of
/// exactly one gate length ([`FaultWindow::accepted_ticks`]), inclusive.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct AcceptedTicks {
    /// The gate, sensor cycles.
    pub gate_cycles: u32,
    /// Fewest ticks (the highest plausible frequency).
    pub min_ticks: u32,
    /// Most ticks (the lowest plausible frequency).
    pub max_ticks: u32,
}

impl AcceptedTicks {
    /// Whether `pair` has exactly the gate's cycles and its ticks inside
    /// the accepted range, so that the window passes it. `false` says
    /// nothing: the pair needs the full check.
    #[inline(always)]
    pub fn contains(&self, pair: CountPair) -> bool {
        pair.cycles == self.gate_cycles
            && pair.ticks >= self.min_ticks
            && pair.ticks <= self.max_ticks
    }
}

impl FaultWindow {
    /// A window [`FaultWindow::new`] accepted before (a validated image's
    /// fields), built without the checks.
    pub(crate) const fn from_checked(
        reference_hz: u32,
        min_hz: u32,
        max_hz: u32,
        min_cycles: u32,
    ) -> Self {
        Self {
            reference_hz,
            min_hz,
            max_hz,
            min_cycles,
        }
    }

    /// A window for a reference clock of `reference_hz`, a plausible sensor
    /// band `min_hz..=max_hz` and at least `min_cycles` sensor cycles per gate.
    pub const fn new(
        reference_hz: u32,
        min_hz: u32,
        max_hz: u32,
        min_cycles: u32,
    ) -> Result<Self, WindowError> {
        if reference_hz == 0 {
            return Err(WindowError::ZeroReference);
        }
        if min_hz > max_hz {
            return Err(WindowError::EmptyBand);
        }
        Ok(Self {
            reference_hz,
            min_hz,
            max_hz,
            min_cycles,
        })
    }

    /// Reference clock frequency in hertz.
    #[inline]
    pub const fn reference_hz(&self) -> u32 {
        self.reference_hz
    }

    /// Lower edge of the plausible band in hertz (inclusive).
    #[inline]
    pub const fn min_hz(&self) -> u32 {
        self.min_hz
    }

    /// Upper edge of the plausible band in hertz (inclusive).
    #[inline]
    pub const fn max_hz(&self) -> u32 {
        self.max_hz
    }

    /// Minimum sensor cycles per gate.
    #[inline]
    pub const fn min_cycles(&self) -> u32 {
        self.min_cycles
    }

    /// For readings of exactly `gate_cycles` sensor cycles (a configured
    /// reciprocal gate), the reference tick counts the window accepts:
    /// with them, such a reading is checked by two comparisons
    /// ([`FaultWindow::check_at_gate`]). `None` when no tick count passes.
    /// One 64-bit division each way: compute it once, at start-up.
    pub fn accepted_ticks(&self, gate_cycles: u32) -> Option<AcceptedTicks> {
        if gate_cycles == 0 || gate_cycles < self.min_cycles || self.max_hz == 0 {
            return None;
        }
        let scaled = wide(self.reference_hz, gate_cycles);
        // f ≤ max ⇔ ticks ≥ f_ref·cycles/max; f ≥ min ⇔ ticks ≤ f_ref·cycles/min.
        // (max_hz ≥ 1 above; a quotient rounded up is below 2^64, since
        // there is a remainder only for max_hz ≥ 2.)
        let lo = quotient(scaled, self.max_hz, true).max(1);
        let hi = quotient(scaled, self.min_hz, false);
        let lo = u32::try_from(lo).ok()?;
        let hi = u32::try_from(hi).unwrap_or(u32::MAX);
        (lo <= hi).then_some(AcceptedTicks {
            gate_cycles,
            min_ticks: lo,
            max_ticks: hi,
        })
    }

    /// [`FaultWindow::check`] with the window's [`AcceptedTicks`] at a
    /// gate: a pair of exactly that many cycles inside them passes with two
    /// comparisons, any other pair gets the full check. Accepts and
    /// rejects exactly what `check` does. Returns nothing on success (the
    /// caller has the pair): inlined into a reader, a pair inside the band
    /// then stays in registers instead of coming back through a `Result`
    /// in memory.
    #[inline(always)]
    pub fn check_at_gate(
        &self,
        pair: CountPair,
        accepted: &AcceptedTicks,
    ) -> Result<(), FaultError> {
        if accepted.contains(pair) {
            return Ok(());
        }
        self.check(pair).map(|_| ())
    }

    /// The pair itself when it is plausible; the first failed check
    /// otherwise, in the order of the [`FaultError`] variants.
    ///
    /// Out of line: the readers take it only off their gate's accepted
    /// ticks, and inlined it costs their fast paths registers.
    #[inline(never)]
    pub fn check(&self, pair: CountPair) -> Result<CountPair, FaultError> {
        if pair.cycles == 0 {
            return Err(FaultError::NoOscillation);
        }
        if pair.ticks == 0 {
            return Err(FaultError::NoReference);
        }
        if pair.cycles < self.min_cycles {
            return Err(FaultError::TooFewCycles);
        }
        // On ARMv6-M the products through one out-of-line copy: the
        // readers take this check only off their gate's accepted ticks,
        // and three inlined products cost about 100 bytes of flash there.
        let scaled = wide(self.reference_hz, pair.cycles);
        if scaled < wide(self.min_hz, pair.ticks) {
            return Err(FaultError::FrequencyTooLow);
        }
        if scaled > wide(self.max_hz, pair.ticks) {
            return Err(FaultError::FrequencyTooHigh);
        }
        Ok(pair)
    }
}

/// `n / d` rounded up (`up`) or down, `u64::MAX` for `d` = 0; for
/// `up`, `n / d` rounded up must be below 2^64 (it is for d ≥ 2 or a
/// remainder of 0). Out of line: one copy of the division for both of
/// [`FaultWindow::accepted_ticks`]' bounds.
#[inline(never)]
fn quotient(n: u64, d: u32, up: bool) -> u64 {
    div_rem_u64_u32(n, d).map_or(u64::MAX, |(q, r)| q.wrapping_add(u64::from(up && r != 0)))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn window() -> FaultWindow {
        FaultWindow::new(16_000_000, 100_000, 5_000_000, 64).unwrap()
    }

    #[test]
    fn each_fault_has_its_own_error() {
        let w = window();
        assert_eq!(
            w.check(CountPair::new(0, 1000)),
            Err(FaultError::NoOscillation)
        );
        assert_eq!(
            w.check(CountPair::new(0, 0)),
            Err(FaultError::NoOscillation)
        );
        assert_eq!(
            w.check(CountPair::new(1000, 0)),
            Err(FaultError::NoReference)
        );
        assert_eq!(
            w.check(CountPair::new(10, 100)),
            Err(FaultError::TooFewCycles)
        );
        // 16 MHz · 100 / 160_001 < 10 kHz·10: just below 100 kHz.
        assert_eq!(
            w.check(CountPair::new(100, 16_001)),
            Err(FaultError::FrequencyTooLow)
        );
        assert_eq!(
            w.check(CountPair::new(100, 16_000)),
            Ok(CountPair::new(100, 16_000))
        );
        // 5 MHz exactly is inside; one tick fewer is above.
        assert_eq!(
            w.check(CountPair::new(1000, 3200)),
            Ok(CountPair::new(1000, 3200))
        );
        assert_eq!(
            w.check(CountPair::new(1000, 3199)),
            Err(FaultError::FrequencyTooHigh)
        );
        // Saturated counters never wrap into a false pass.
        assert_eq!(
            w.check(CountPair::new(u32::MAX, 1)),
            Err(FaultError::FrequencyTooHigh)
        );
        assert_eq!(
            w.check(CountPair::new(64, u32::MAX)),
            Err(FaultError::FrequencyTooLow)
        );
    }

    #[test]
    fn construction_errors() {
        assert_eq!(
            FaultWindow::new(0, 1, 2, 0),
            Err(WindowError::ZeroReference)
        );
        assert_eq!(FaultWindow::new(1, 3, 2, 0), Err(WindowError::EmptyBand));
        let w = window();
        assert_eq!(
            (w.reference_hz(), w.min_hz(), w.max_hz(), w.min_cycles()),
            (16_000_000, 100_000, 5_000_000, 64)
        );
    }

    proptest! {
        /// The precomputed tick band accepts exactly what the full check
        /// accepts, for pairs of the gate's cycle count.
        #[test]
        fn tick_band_equals_the_full_check(f_ref in 1u32.., lo in 0u32..50_000_000, span in 0u32..50_000_000, min_cycles in 0u32..5000, cycles in 1u32..100_000, ticks: u32) {
            let w = FaultWindow::new(f_ref, lo, lo.saturating_add(span), min_cycles).unwrap();
            let pair = CountPair::new(cycles, ticks);
            let full = w.check(pair);
            match w.accepted_ticks(cycles) {
                Some(band) => {
                    prop_assert_eq!(w.check_at_gate(pair, &band), full.map(|_| ()));
                    // Any other gate length goes to the full check.
                    let other = CountPair::new(cycles.wrapping_add(1), ticks);
                    prop_assert_eq!(w.check_at_gate(other, &band), w.check(other).map(|_| ()));
                }
                None => prop_assert!(full.is_err()),
            }
        }

        /// The integer check agrees with exact rational arithmetic for every
        /// pair: accepted exactly when the frequency lies in the band.
        #[test]
        fn check_matches_exact_frequency(
            f_ref in 1u32.., lo: u32, hi: u32, min_cycles in 0u32..1000, cycles: u32, ticks: u32,
        ) {
            let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
            let w = FaultWindow::new(f_ref, lo, hi, min_cycles).unwrap();
            let got = w.check(CountPair::new(cycles, ticks));
            let exact_ok = cycles > 0
                && ticks > 0
                && cycles >= min_cycles
                && u128::from(f_ref) * u128::from(cycles) >= u128::from(lo) * u128::from(ticks)
                && u128::from(f_ref) * u128::from(cycles) <= u128::from(hi) * u128::from(ticks);
            prop_assert_eq!(got.is_ok(), exact_ok);
        }
    }
}
