//! Gating modes and the gate that produces a count pair.

use super::CountPair;
use core::fmt;

/// How the gate was closed, and so which count carries the ±1 quantisation.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Gating {
    /// Whole sensor cycles are exact; reference ticks are quantised (±1
    /// tick). Relative resolution 1/ticks, independent of the sensor.
    Reciprocal,
    /// A fixed number of reference ticks is exact; sensor cycles are
    /// quantised (±1 cycle). Relative resolution 1/cycles.
    Direct,
}

impl Gating {
    /// The count that carries the ±1 quantisation in `pair`.
    #[inline]
    pub const fn quantised_count(self, pair: CountPair) -> u32 {
        match self {
            Gating::Reciprocal => pair.ticks,
            Gating::Direct => pair.cycles,
        }
    }
}

/// A gate configuration: the gating mode and its fixed, exact count.
///
/// Firmware configures the gate once (for example 4096 sensor cycles) and
/// then turns each measured count into a [`CountPair`] with [`Gate::pair`].
/// A power-of-two number of sensor cycles is the cheapest choice on a
/// Cortex-M0; any configured count keeps the shift path free of division
/// (see [`crate::shift::ShiftConverter`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Gate {
    gating: Gating,
    fixed: u32,
}

/// Why a gate configuration was refused.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum GateError {
    /// The fixed count of a gate must be at least 1.
    ZeroLength,
}

impl fmt::Display for GateError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            GateError::ZeroLength => f.write_str("a gate must span at least one count"),
        }
    }
}

impl core::error::Error for GateError {}

impl Gate {
    /// Reciprocal gate spanning `cycles` whole sensor cycles.
    pub const fn reciprocal(cycles: u32) -> Result<Self, GateError> {
        if cycles == 0 {
            return Err(GateError::ZeroLength);
        }
        Ok(Self {
            gating: Gating::Reciprocal,
            fixed: cycles,
        })
    }

    /// Direct gate spanning `ticks` reference ticks.
    pub const fn direct(ticks: u32) -> Result<Self, GateError> {
        if ticks == 0 {
            return Err(GateError::ZeroLength);
        }
        Ok(Self {
            gating: Gating::Direct,
            fixed: ticks,
        })
    }

    /// The gating mode.
    #[inline]
    pub const fn gating(&self) -> Gating {
        self.gating
    }

    /// The fixed (exact) count: sensor cycles for a reciprocal gate,
    /// reference ticks for a direct one.
    #[inline]
    pub const fn fixed_count(&self) -> u32 {
        self.fixed
    }

    /// The configured number of sensor cycles, for a reciprocal gate.
    #[inline]
    pub const fn cycles(&self) -> Option<u32> {
        match self.gating {
            Gating::Reciprocal => Some(self.fixed),
            Gating::Direct => None,
        }
    }

    /// The count pair of one gate, from the measured (quantised) count:
    /// reference ticks for a reciprocal gate, sensor cycles for a direct one.
    #[inline]
    pub const fn pair(&self, measured: u32) -> CountPair {
        match self.gating {
            Gating::Reciprocal => CountPair::new(self.fixed, measured),
            Gating::Direct => CountPair::new(measured, self.fixed),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gates_fill_in_their_fixed_count() {
        let r = Gate::reciprocal(1024).unwrap();
        assert_eq!(r.pair(160_123), CountPair::new(1024, 160_123));
        assert_eq!(r.cycles(), Some(1024));
        assert_eq!(Gating::Reciprocal.quantised_count(r.pair(7)), 7);
        let d = Gate::direct(16_000).unwrap();
        assert_eq!(d.pair(1_000), CountPair::new(1_000, 16_000));
        assert_eq!(d.cycles(), None);
        assert_eq!(Gating::Direct.quantised_count(d.pair(7)), 7);
    }

    #[test]
    fn empty_gates_are_refused() {
        assert_eq!(Gate::reciprocal(0), Err(GateError::ZeroLength));
        assert_eq!(Gate::direct(0), Err(GateError::ZeroLength));
    }
}
