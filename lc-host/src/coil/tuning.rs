//! The tank capacitor for a target frequency, rounded to a preferred value.
//!
//! With the coil's inductance L and the parasitic capacitance C_p across
//! the tank (pins, traces, the oscillator's input), the capacitor that
//! resonates at the target f0 is C = 1/((2π·f0)²·L) − C_p. It is rounded to
//! the nearest value of an E series by log distance
//! ([`crate::coil::eseries::nearest`]) and the frequency with the rounded
//! capacitor is reported. The resonance laws are `lc_core::tank`'s
//! (undamped f0), not a second copy.

use super::eseries::{nearest, ESeries};
use super::{positive, CoilError};
use lc_core::tank::{capacitance_for_frequency_f, resonant_frequency_with_parasitic_hz};

/// A tuned tank.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Tuning {
    /// Requested frequency, Hz.
    pub target_hz: f64,
    /// Coil inductance used, H.
    pub inductance_h: f64,
    /// Parasitic capacitance in parallel, F.
    pub parasitic_f: f64,
    /// The capacitor that hits the target exactly, F.
    pub exact_capacitor_f: f64,
    /// The series it is rounded to.
    pub series: ESeries,
    /// The preferred capacitor, F.
    pub capacitor_f: f64,
    /// Undamped resonant frequency with the preferred capacitor, Hz.
    pub frequency_hz: f64,
    /// (frequency − target)/target.
    pub frequency_error: f64,
}

/// The tank capacitor for `target_hz` with inductance `inductance_h` and
/// `parasitic_f` in parallel, rounded to `series`.
///
/// Errors when an input is not finite and positive (the parasitic may be
/// zero) or when the parasitic capacitance alone already puts the
/// resonance below the target.
pub fn tune(
    inductance_h: f64,
    parasitic_f: f64,
    target_hz: f64,
    series: ESeries,
) -> Result<Tuning, CoilError> {
    positive("inductance", inductance_h)?;
    positive("target frequency", target_hz)?;
    if !(parasitic_f.is_finite() && parasitic_f >= 0.0) {
        return Err(CoilError::OutOfRange {
            what: "parasitic capacitance",
            value: parasitic_f,
            range: "finite, zero or above",
        });
    }
    let total = capacitance_for_frequency_f(target_hz, inductance_h);
    let exact = total - parasitic_f;
    let Some(capacitor_f) = (exact > 0.0).then(|| nearest(series, exact)).flatten() else {
        return Err(CoilError::TargetAboveParasiticResonance {
            target_hz,
            max_hz: resonant_frequency_with_parasitic_hz(inductance_h, 0.0, parasitic_f),
        });
    };
    let frequency_hz = resonant_frequency_with_parasitic_hz(inductance_h, capacitor_f, parasitic_f);
    Ok(Tuning {
        target_hz,
        inductance_h,
        parasitic_f,
        exact_capacitor_f: exact,
        series,
        capacitor_f,
        frequency_hz,
        frequency_error: frequency_hz / target_hz - 1.0,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_tank() {
        // docs/references.md, LC tank cases, 1e (computed): L = 10 µH, C = 1 nF
        // → f0 = 1 591 549.43 Hz. Asking for that frequency gives back 1 nF
        // (E12).
        let t = tune(10e-6, 0.0, 1_591_549.43, ESeries::E12).unwrap();
        assert!((t.exact_capacitor_f - 1e-9).abs() < 1e-17);
        assert_eq!(t.capacitor_f, 1e-9);
        assert!(t.frequency_error.abs() < 1e-8);
        // With 10 pF parasitic the exact capacitor is 990 pF; E12 still
        // rounds to 1 nF and the frequency falls by the factor √(1000/1010).
        let t = tune(10e-6, 10e-12, 1_591_549.43, ESeries::E12).unwrap();
        assert!((t.exact_capacitor_f - 990e-12).abs() < 1e-17);
        assert_eq!(t.capacitor_f, 1e-9);
        let expect = 1_591_549.43 * (1000.0f64 / 1010.0).sqrt();
        assert!((t.frequency_hz - expect).abs() < 1e-2);
    }

    #[test]
    fn refusals() {
        // 7.25 µH with 1 nF parasitic resonates at 1.87 MHz: 5 MHz is out of reach.
        match tune(7.25e-6, 1e-9, 5e6, ESeries::E24) {
            Err(CoilError::TargetAboveParasiticResonance { max_hz, .. }) => {
                assert!(
                    (max_hz - 1.0 / (2.0 * std::f64::consts::PI * (7.25e-15f64).sqrt())).abs()
                        < 1.0
                )
            }
            other => panic!("{other:?}"),
        }
        assert!(tune(0.0, 0.0, 1e6, ESeries::E24).is_err());
        assert!(tune(1e-6, -1e-12, 1e6, ESeries::E24).is_err());
        assert!(tune(1e-6, 0.0, f64::NAN, ESeries::E24).is_err());
    }
}
