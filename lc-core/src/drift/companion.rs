//! The companion channel: ratiometric cancellation of what both coils see.

use crate::counting::CountPair;
use crate::counting::Gating;
use crate::ratio::period_ratio;
use crate::shift::{RestPoint, Shift, ShiftConverter, ShiftError};
use core::fmt;

/// Why a companion reading failed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum CompanionError {
    /// The two channels were not gated over the same number of sensor
    /// cycles (the ratio needs equal gates).
    GateMismatch,
    /// The combined shift failed (zero count or out of range).
    Shift(ShiftError),
}

impl fmt::Display for CompanionError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            CompanionError::GateMismatch => {
                f.write_str("main and companion channels were gated over different cycle counts")
            }
            CompanionError::Shift(e) => write!(f, "companion shift: {e}"),
        }
    }
}

impl core::error::Error for CompanionError {}

/// A companion coil (or electrode) that sees the temperature but not the
/// target, read with the same reciprocal gate of N sensor cycles as the main
/// channel.
///
/// With main ticks t and companion ticks t′ over the same N cycles, and the
/// rest points p_rest and p′_rest, the ratiometric shift is
///
/// 1 + s_c = ((t/t′) / (p_rest/p′_rest))²,
///
/// which cancels any drift that scales both period ratios alike. This is
/// exactly a shift of the count pair {t′, t} against the rest ratio
/// ρ = p_rest/p′_rest, so it reuses [`ShiftConverter`]'s division path:
/// one division per reading, the same bound (docs/numerics.md), no second
/// implementation.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Companion {
    ratio: ShiftConverter,
}

impl Companion {
    /// From the main channel's and the companion's rest points; the ratio
    /// ρ = p_rest/p′_rest must lie in 2^-8 ..= 2^20 like any rest point.
    pub fn new(main_rest: RestPoint, companion_rest: RestPoint) -> Result<Self, ShiftError> {
        // ρ in Q20.44 from the two Q20.44 values: (a · 2^44) / b, exact
        // rational rounded once (construction time only).
        let a = main_rest.ratio().raw_q44();
        let b = companion_rest.ratio().raw_q44();
        let rho = crate::fixed::round_div_u128(u128::from(a) << 44, u128::from(b))
            .ok_or(ShiftError::BadRestPoint)?;
        let rho = u64::try_from(rho).map_err(|_| ShiftError::BadRestPoint)?;
        let rest = RestPoint::from_ratio(crate::ratio::PeriodRatio::from_raw_q44(rho))?;
        Ok(Self {
            ratio: ShiftConverter::new(rest, Gating::Reciprocal, None)?,
        })
    }

    /// From the two channels' rest count pairs (host and tests).
    pub fn from_counts(
        main_rest: CountPair,
        companion_rest: CountPair,
    ) -> Result<Self, ShiftError> {
        let main =
            RestPoint::from_ratio(period_ratio(main_rest).map_err(|_| ShiftError::BadRestPoint)?)?;
        let comp = RestPoint::from_ratio(
            period_ratio(companion_rest).map_err(|_| ShiftError::BadRestPoint)?,
        )?;
        Self::new(main, comp)
    }

    /// The rest ratio ρ = p_rest/p′_rest.
    pub fn rest_ratio(&self) -> RestPoint {
        self.ratio.rest()
    }

    /// The ratiometric shift of one main reading and the companion reading
    /// taken beside it.
    pub fn shift(&self, main: CountPair, companion: CountPair) -> Result<Shift, CompanionError> {
        if main.cycles != companion.cycles {
            return Err(CompanionError::GateMismatch);
        }
        // The ratio's converter has no gate: its general path.
        self.ratio
            .shift_general(CountPair::new(companion.ticks, main.ticks))
            .map_err(CompanionError::Shift)
    }

    /// `f64` twin: ((t/t′)/ρ)² − 1 with the same ρ.
    pub fn shift_f64(&self, main: CountPair, companion: CountPair) -> f64 {
        let r = f64::from(main.ticks) / f64::from(companion.ticks) / self.ratio.rest().to_f64();
        r * r - 1.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn a_common_drift_cancels() {
        let comp =
            Companion::from_counts(CountPair::new(4096, 19_275), CountPair::new(4096, 21_000))
                .unwrap();
        // Both channels 0.1 % slower (temperature), main also 1 % faster from
        // a target: only the target remains.
        let main = CountPair::new(4096, (19_275.0f64 * 1.001 * 0.99).round() as u32);
        let side = CountPair::new(4096, (21_000.0f64 * 1.001).round() as u32);
        let s = comp.shift(main, side).unwrap().to_f64();
        let expect = 0.99f64.powi(2) - 1.0;
        // Count rounding limits agreement to a few 1e-5.
        assert!((s - expect).abs() < 1e-4, "{s}");
        assert!((s - comp.shift_f64(main, side)).abs() <= 1.04 * 2f64.powi(-30));
        assert_eq!(
            comp.shift(main, CountPair::new(2048, 10_500)),
            Err(CompanionError::GateMismatch)
        );
        assert_eq!(
            comp.shift(CountPair::new(4096, 0), side),
            Err(CompanionError::Shift(ShiftError::ZeroCount))
        );
    }

    proptest! {
        /// Within the shift stage's bound of the f64 twin.
        #[test]
        fn within_bound(rest_main in 1_000u32..1_000_000, rest_comp in 1_000u32..1_000_000, n in 1u32..65_536, k in 0.35f64..2.8) {
            let Ok(c) = Companion::from_counts(CountPair::new(n, rest_main), CountPair::new(n, rest_comp)) else { return Ok(()) };
            let main = CountPair::new(n, (f64::from(rest_main) * k).round().max(1.0) as u32);
            let side = CountPair::new(n, rest_comp);
            if let Ok(s) = c.shift(main, side) {
                let f = c.shift_f64(main, side);
                prop_assert!((s.to_f64() - f).abs() <= (1.0 + f) * 1.04 * 2f64.powi(-30) + 2f64.powi(-40));
            }
        }
    }
}
