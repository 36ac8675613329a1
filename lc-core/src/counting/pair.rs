//! The raw count pair of one gate.

/// Sensor cycles and reference ticks counted over one gate.
///
/// This is raw data: any two `u32` values are a `CountPair`. Plausibility is
/// the job of [`FaultWindow`](super::FaultWindow); every conversion also
/// rejects zero counts with a typed error of its own.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CountPair {
    /// Whole sensor oscillator cycles inside the gate.
    pub cycles: u32,
    /// Reference clock ticks inside the gate.
    pub ticks: u32,
}

impl CountPair {
    /// A count pair from sensor cycles and reference ticks.
    #[inline]
    pub const fn new(cycles: u32, ticks: u32) -> Self {
        Self { cycles, ticks }
    }

    /// The larger of the two counts. One count of this size is the finest
    /// possible quantisation step of the pair, whichever way it was gated:
    /// error bounds proven against it hold for both gatings.
    #[inline]
    pub const fn max_count(&self) -> u32 {
        if self.cycles > self.ticks {
            self.cycles
        } else {
            self.ticks
        }
    }
}

/// `CYCLES:TICKS`, the form the command line and the docs use.
impl core::fmt::Display for CountPair {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{}:{}", self.cycles, self.ticks)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn displays_as_cycles_colon_ticks() {
        assert_eq!(
            format!("{}", CountPair::new(16_384, 139_542)),
            "16384:139542"
        );
    }
}
