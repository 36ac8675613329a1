//! The resistive divider between the ADC and the NTC: code → resistance.

use super::ln::{ln_ratio_q37, LN_FRAC_BITS};
use super::{ConfigError, TemperatureError};
use core::num::NonZeroU32;

/// Where the NTC sits in the divider. The ADC is ratiometric: its reference
/// is the divider's supply.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum NtcPosition {
    /// Series resistor from the reference to the ADC node, NTC from the node
    /// to ground: V/V_ref = R/(R + R_s), so R/R_s = c/(N − c). The code
    /// falls as the temperature rises.
    LowSide,
    /// NTC from the reference to the ADC node, series resistor from the node
    /// to ground: V/V_ref = R_s/(R + R_s), so R/R_s = (N − c)/c. The code
    /// rises with the temperature.
    HighSide,
}

/// A ratiometric NTC divider read by an ADC of 8 to 24 bits.
///
/// Code c of an n-bit ADC stands for the voltage ratio c/N with N = 2^n
/// (the ideal transfer function; common practice). Averaged or oversampled
/// readings are fine: a sum of 16 samples of a 12-bit ADC is a 16-bit code.
///
/// Valid codes are 1 ..= N − 2. Code 0 and the full-scale code N − 1 mean
/// the NTC is shorted or open (which one depends on [`NtcPosition`]); codes
/// from N up are [`TemperatureError::CodeOutOfRange`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Divider {
    adc_bits: u32,
    series_ohm: u32,
    position: NtcPosition,
}

impl Divider {
    /// Smallest supported ADC resolution, bits.
    pub const MIN_ADC_BITS: u32 = 8;
    /// Largest supported ADC resolution, bits.
    pub const MAX_ADC_BITS: u32 = 24;

    /// A divider with an `adc_bits` ADC (8..=24), a fixed series resistor of
    /// `series_ohm` (at least 1 Ω) and the NTC at `position`.
    pub const fn new(
        adc_bits: u32,
        series_ohm: u32,
        position: NtcPosition,
    ) -> Result<Self, ConfigError> {
        if adc_bits < Self::MIN_ADC_BITS || adc_bits > Self::MAX_ADC_BITS {
            return Err(ConfigError::BadAdcBits);
        }
        if series_ohm == 0 {
            return Err(ConfigError::BadSeriesResistance);
        }
        Ok(Self {
            adc_bits,
            series_ohm,
            position,
        })
    }

    /// ADC resolution, bits.
    #[inline]
    pub const fn adc_bits(&self) -> u32 {
        self.adc_bits
    }

    /// The series resistor, ohms.
    #[inline]
    pub const fn series_ohm(&self) -> u32 {
        self.series_ohm
    }

    /// Where the NTC sits.
    #[inline]
    pub const fn position(&self) -> NtcPosition {
        self.position
    }

    /// N = 2^bits: the code that would stand for the full reference. The
    /// largest code an ADC returns is N − 1.
    #[inline]
    pub const fn full_scale(&self) -> u32 {
        // adc_bits is 8..=24 (`new` checks it): the shift is in range.
        1u32.wrapping_shl(self.adc_bits)
    }

    /// Checks a code and returns (numerator, denominator) of R/R_s as two
    /// non-zero integers: (c, N − c) low side, (N − c, c) high side.
    #[inline]
    pub(crate) fn operands(&self, code: u32) -> Result<(NonZeroU32, NonZeroU32), TemperatureError> {
        let n = self.full_scale();
        let low = matches!(self.position, NtcPosition::LowSide);
        if code >= n {
            return Err(TemperatureError::CodeOutOfRange);
        }
        // Code 0: R = 0 (low side) or ∞ (high side); full scale the reverse.
        if code == 0 {
            return Err(if low {
                TemperatureError::SensorShorted
            } else {
                TemperatureError::SensorOpen
            });
        }
        if code == n - 1 {
            return Err(if low {
                TemperatureError::SensorOpen
            } else {
                TemperatureError::SensorShorted
            });
        }
        match (NonZeroU32::new(code), NonZeroU32::new(n - code)) {
            (Some(c), Some(r)) => Ok(if low { (c, r) } else { (r, c) }),
            // Not reached: 0 < code < n.
            _ => Err(TemperatureError::CodeOutOfRange),
        }
    }

    /// ln(R/R_s), the NTC's resistance over the series resistor, in fixed
    /// point ([`LnRatio`], Q.37), from two integer logarithms and no
    /// division: ln c − ln(N − c) (low side) or its negative (high side).
    /// Error at most 3.3 · 2^-32 ≈ 7.7e-10 (two [`ln_q37`](super::ln_q37)
    /// budgets).
    pub fn ln_ratio(&self, code: u32) -> Result<LnRatio, TemperatureError> {
        let (a, b) = self.operands(code)?;
        Ok(LnRatio(ln_ratio_q37(a, b)))
    }

    /// `f64` twin of [`Divider::ln_ratio`] before the logarithm: R/R_s =
    /// c/(N − c) (low side) or (N − c)/c (high side), same code checks.
    pub fn resistance_ratio_f64(&self, code: u32) -> Result<f64, TemperatureError> {
        let (a, b) = self.operands(code)?;
        Ok(f64::from(a.get()) / f64::from(b.get()))
    }

    /// The NTC's resistance in ohms, R = R_s · [`Divider::resistance_ratio_f64`].
    pub fn resistance_ohm_f64(&self, code: u32) -> Result<f64, TemperatureError> {
        Ok(f64::from(self.series_ohm) * self.resistance_ratio_f64(code)?)
    }

    /// The ideal, unrounded code for an NTC resistance `r_ohm` (host
    /// simulator): N·R/(R + R_s) low side, N·R_s/(R + R_s) high side. Round
    /// it (and clamp to 0 ..= N − 1) to get what an ADC would return.
    pub fn code_f64(&self, r_ohm: f64) -> f64 {
        let n = f64::from(self.full_scale());
        let rs = f64::from(self.series_ohm);
        match self.position {
            NtcPosition::LowSide => n * r_ohm / (r_ohm + rs),
            NtcPosition::HighSide => n * rs / (r_ohm + rs),
        }
    }
}

/// ln(R/R_s) in Q.37 (`i64`, LSB 2^-37 ≈ 7.3e-12), as returned by
/// [`Divider::ln_ratio`]. |value| < 17 for any valid code of a 24-bit ADC.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LnRatio(i64);

impl LnRatio {
    /// Fractional bits of the format.
    pub const FRAC_BITS: u32 = LN_FRAC_BITS;

    /// From the raw Q.37 value.
    #[inline]
    pub const fn from_raw_q37(raw: i64) -> Self {
        Self(raw)
    }

    /// The raw Q.37 value.
    #[inline]
    pub const fn raw_q37(self) -> i64 {
        self.0
    }

    /// The logarithm as `f64` (exact: the raw value is below 2^53).
    #[inline]
    pub fn to_f64(self) -> f64 {
        self.0 as f64 / 137_438_953_472.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn configuration_is_checked() {
        assert_eq!(
            Divider::new(7, 10_000, NtcPosition::LowSide),
            Err(ConfigError::BadAdcBits)
        );
        assert_eq!(
            Divider::new(25, 10_000, NtcPosition::LowSide),
            Err(ConfigError::BadAdcBits)
        );
        assert_eq!(
            Divider::new(12, 0, NtcPosition::LowSide),
            Err(ConfigError::BadSeriesResistance)
        );
        let d = Divider::new(24, 1, NtcPosition::HighSide).unwrap();
        assert_eq!(d.full_scale(), 1 << 24);
        assert_eq!((d.adc_bits(), d.series_ohm()), (24, 1));
        assert_eq!(d.position(), NtcPosition::HighSide);
    }

    #[test]
    fn rails_are_open_or_short() {
        let low = Divider::new(10, 10_000, NtcPosition::LowSide).unwrap();
        let high = Divider::new(10, 10_000, NtcPosition::HighSide).unwrap();
        assert_eq!(low.ln_ratio(0), Err(TemperatureError::SensorShorted));
        assert_eq!(low.ln_ratio(1023), Err(TemperatureError::SensorOpen));
        assert_eq!(high.ln_ratio(0), Err(TemperatureError::SensorOpen));
        assert_eq!(high.ln_ratio(1023), Err(TemperatureError::SensorShorted));
        for d in [low, high] {
            assert_eq!(d.ln_ratio(1024), Err(TemperatureError::CodeOutOfRange));
            assert_eq!(d.ln_ratio(u32::MAX), Err(TemperatureError::CodeOutOfRange));
            assert_eq!(d.ln_ratio(512), Ok(LnRatio(0)));
            assert_eq!(d.resistance_ohm_f64(512), Ok(10_000.0));
        }
        // Low side: code 768 of 1024 → R/R_s = 3; high side: 1/3.
        assert_eq!(low.resistance_ratio_f64(768), Ok(3.0));
        assert_eq!(high.resistance_ratio_f64(768), Ok(1.0 / 3.0));
        assert!((low.ln_ratio(768).unwrap().to_f64() - libm::log(3.0)).abs() < 1e-9);
        assert!((high.ln_ratio(768).unwrap().to_f64() + libm::log(3.0)).abs() < 1e-9);
        assert_eq!(low.code_f64(30_000.0), 768.0);
        assert_eq!(high.code_f64(30_000.0), 256.0);
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]

        /// Any code: a typed error or a logarithm within 3.3 · 2^-32 of the
        /// `f64` twin; the forward model round-trips the code.
        #[test]
        fn ln_ratio_matches_f64(bits in 8u32..=24, rs in 1u32.., code: u32, high: bool) {
            let pos = if high { NtcPosition::HighSide } else { NtcPosition::LowSide };
            let d = Divider::new(bits, rs, pos).unwrap();
            let code = if code % 4 == 0 { code } else { code % d.full_scale() };
            match d.ln_ratio(code) {
                Ok(l) => {
                    let ratio = d.resistance_ratio_f64(code).unwrap();
                    prop_assert!((l.to_f64() - libm::log(ratio)).abs() <= 3.3 * 2f64.powi(-32) + 1e-15);
                    let back = d.code_f64(d.resistance_ohm_f64(code).unwrap());
                    prop_assert!((back - f64::from(code)).abs() < 1e-6);
                }
                Err(e) => prop_assert_eq!(Err(e), d.resistance_ratio_f64(code)),
            }
        }
    }
}
