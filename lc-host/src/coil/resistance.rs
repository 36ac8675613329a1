//! Copper resistance: resistivity and its temperature coefficient, skin
//! depth, DC and AC resistance of a trace or wire, and the coil's Q.
//!
//! # Copper (docs/references.md, Copper)
//!
//! International Annealed Copper Standard (IEC 60028:1925; NBS Handbook 100,
//! "Copper Wire Tables", 1966): ρ20 = 1/58 Ω·mm²/m = 1.7241×10⁻⁸ Ω·m (σ =
//! 58.0 MS/m, 100 % IACS) (published, quoted), α20 = 0.00393 K⁻¹ (from memory:
//! NBS Handbook 100 §1.1b; docs/references.md, IEC 60028 and NBS Handbook 100):
//!
//! R(T) = R20·(1 + α20·(T − 20 °C)).
//!
//! This is the annealed-copper model; pure copper (CRC: 1.678×10⁻⁸ Ω·m at
//! 20 °C) has a higher α, and IEC 60228's cable correction 250/(230 + t) is
//! a different model. Do not mix them (docs/references.md, Copper, Traps, item
//! 11). PCB copper: "1 oz" is 34.3 µm by weight (305 g/m² at 8.89 g/cm³), 35 µm
//! in common practice.
//!
//! # Skin depth
//!
//! δ = √(ρ/(π·f·µ0·µr)) (standard): 66.09 µm at 1 MHz for IACS copper,
//! 65.20 µm for pure copper (docs/references.md, Copper).
//!
//! # AC resistance: a first-order model
//!
//! The current is taken as uniform in the band within δ of the conductor's
//! surface and zero inside it:
//!
//! * rectangle w × t: A_eff = w·t − (w − 2δ)₊·(t − 2δ)₊, so A_eff = w·t
//!   (R_ac = R_dc) while w ≤ 2δ or t ≤ 2δ;
//! * round wire of radius a: A_eff = π·(a² − (a − δ)₊²).
//!
//! It is continuous, exact at DC and right in the limit δ ≪ w, t for an
//! isolated conductor. It is an approximation: the real current density
//! falls off as e^(−x/δ), it crowds to the edges of a thin wide trace
//! (edge effect) even when t < 2δ, and in a coil the neighbouring turns
//! push it further to one side (**proximity effect, ignored here**). In a
//! closely wound spiral the proximity effect usually dominates, so R_ac is
//! a lower bound and Q = ωL/R_ac an upper bound. Common practice; the
//! model is ours as written.

use super::MU0_H_PER_M;
use std::f64::consts::PI;

/// IACS resistivity at 20 °C, 1/58 Ω·mm²/m = 1.7241×10⁻⁸ Ω·m (IEC 60028;
/// NBS Handbook 100; docs/references.md, Copper; published, quoted).
pub const IACS_RESISTIVITY_20C_OHM_M: f64 = 1.0 / 58.0e6;

/// IACS temperature coefficient at 20 °C, 0.00393 K⁻¹ (NBS Handbook 100
/// §1.1b; docs/references.md, Copper; from memory).
pub const IACS_TEMPERATURE_COEFFICIENT_PER_K: f64 = 0.00393;

/// The reference temperature of the IACS values, 20 °C.
pub const IACS_REFERENCE_TEMPERATURE_C: f64 = 20.0;

/// R(T)/R20 = 1 + 0.00393·(T − 20) for IACS copper.
pub fn copper_resistance_ratio(temperature_c: f64) -> f64 {
    1.0 + IACS_TEMPERATURE_COEFFICIENT_PER_K * (temperature_c - IACS_REFERENCE_TEMPERATURE_C)
}

/// IACS copper resistivity at `temperature_c`, Ω·m.
pub fn copper_resistivity_ohm_m(temperature_c: f64) -> f64 {
    IACS_RESISTIVITY_20C_OHM_M * copper_resistance_ratio(temperature_c)
}

/// DC resistance of a conductor of uniform cross-section, R = ρ·ℓ/A, Ω.
pub fn dc_resistance_ohm(resistivity_ohm_m: f64, length_m: f64, area_m2: f64) -> f64 {
    resistivity_ohm_m * length_m / area_m2
}

/// Skin depth δ = √(ρ/(π·f·µ0·µr)), m. +∞ at f = 0.
pub fn skin_depth_m(resistivity_ohm_m: f64, frequency_hz: f64, relative_permeability: f64) -> f64 {
    (resistivity_ohm_m / (PI * frequency_hz * MU0_H_PER_M * relative_permeability)).sqrt()
}

/// Effective area of a w × t rectangle carrying current within
/// `skin_depth_m` of its surface: w·t − (w − 2δ)₊·(t − 2δ)₊, m² (see the
/// module doc for what this leaves out).
pub fn rectangle_effective_area_m2(width_m: f64, thickness_m: f64, skin_depth_m: f64) -> f64 {
    let core_w = (width_m - 2.0 * skin_depth_m).max(0.0);
    let core_t = (thickness_m - 2.0 * skin_depth_m).max(0.0);
    width_m * thickness_m - core_w * core_t
}

/// Effective area of a round wire of diameter `diameter_m` carrying
/// current within `skin_depth_m` of its surface: π·(a² − (a − δ)₊²), m².
pub fn round_wire_effective_area_m2(diameter_m: f64, skin_depth_m: f64) -> f64 {
    let a = 0.5 * diameter_m;
    let core = (a - skin_depth_m).max(0.0);
    PI * (a * a - core * core)
}

/// AC resistance of a rectangular trace (first-order skin model, no
/// proximity effect), Ω.
pub fn rectangle_ac_resistance_ohm(
    resistivity_ohm_m: f64,
    length_m: f64,
    width_m: f64,
    thickness_m: f64,
    frequency_hz: f64,
) -> f64 {
    let delta = skin_depth_m(resistivity_ohm_m, frequency_hz, 1.0);
    dc_resistance_ohm(
        resistivity_ohm_m,
        length_m,
        rectangle_effective_area_m2(width_m, thickness_m, delta),
    )
}

/// AC resistance of a round wire (first-order skin model, no proximity
/// effect), Ω.
pub fn round_wire_ac_resistance_ohm(
    resistivity_ohm_m: f64,
    length_m: f64,
    diameter_m: f64,
    frequency_hz: f64,
) -> f64 {
    let delta = skin_depth_m(resistivity_ohm_m, frequency_hz, 1.0);
    dc_resistance_ohm(
        resistivity_ohm_m,
        length_m,
        round_wire_effective_area_m2(diameter_m, delta),
    )
}

/// Quality factor of a coil, Q = ω·L/R = 2π·f·L/R.
pub fn quality_factor(inductance_h: f64, resistance_ohm: f64, frequency_hz: f64) -> f64 {
    2.0 * PI * frequency_hz * inductance_h / resistance_ohm
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// docs/references.md, Copper check cases (computed) for R(T)/R20 = 1 +
    /// 0.00393·(T − 20), printed to 5 decimals: compared at 1e-5.
    #[test]
    fn resistance_ratio_table() {
        let table = [
            (-40.0, 0.76420),
            (0.0, 0.92140),
            (25.0, 1.01965),
            (50.0, 1.11790),
            (85.0, 1.25545),
            (100.0, 1.31440),
            (125.0, 1.41265),
        ];
        for (t, r) in table {
            assert!((copper_resistance_ratio(t) - r).abs() < 1e-5, "{t}");
        }
        assert_eq!(copper_resistance_ratio(20.0), 1.0);
        // ρ20 = 1/58 Ω·mm²/m = 0.017241 Ω·mm²/m (docs/references.md, Copper;
        // published, quoted).
        assert!((IACS_RESISTIVITY_20C_OHM_M * 1e6 - 0.017241).abs() < 5e-7);
        // The "234.5 rule" is the same model to 4 digits: 1/254.5 = 0.003929
        // (docs/references.md, Copper; from memory).
        assert!(((234.5 + 85.0) / 254.5 - copper_resistance_ratio(85.0)).abs() < 1e-4);
    }

    /// docs/references.md, Copper (computed): 1 oz (35 µm) × 0.2 mm × 100 mm at
    /// 20 °C is 0.24631 Ω; the sheet resistance is 0.49261 mΩ/sq.
    #[test]
    fn trace_example() {
        let r = dc_resistance_ohm(IACS_RESISTIVITY_20C_OHM_M, 0.1, 0.2e-3 * 35e-6);
        assert!((r - 0.24631).abs() < 5e-6, "{r}");
        let sheet = IACS_RESISTIVITY_20C_OHM_M / 35e-6;
        assert!((sheet * 1e3 - 0.49261).abs() < 5e-6);
    }

    /// docs/references.md, Copper skin-depth table (computed), printed to 4
    /// digits: compared at half a unit of the last printed digit.
    #[test]
    fn skin_depth_table() {
        let iacs = IACS_RESISTIVITY_20C_OHM_M;
        let pure = 1.678e-8; // CRC Handbook, 20 °C (docs/references.md, Copper; published, quoted)
        let cases = [
            (50.0, 9.346e-3, 9.220e-3, 0.5e-6),
            (60.0, 8.532e-3, 8.417e-3, 0.5e-6),
            (1e3, 2.090e-3, 2.062e-3, 0.5e-6),
            (10e3, 660.9e-6, 652.0e-6, 0.05e-6),
            (100e3, 209.0e-6, 206.2e-6, 0.05e-6),
            (1e6, 66.09e-6, 65.20e-6, 0.005e-6),
            (10e6, 20.90e-6, 20.62e-6, 0.005e-6),
        ];
        for (f, d_iacs, d_pure, tol) in cases {
            assert!((skin_depth_m(iacs, f, 1.0) - d_iacs).abs() <= tol, "{f}");
            assert!((skin_depth_m(pure, f, 1.0) - d_pure).abs() <= tol, "{f}");
        }
        assert!(skin_depth_m(iacs, 0.0, 1.0).is_infinite());
    }

    #[test]
    fn ac_model_limits() {
        let rho = IACS_RESISTIVITY_20C_OHM_M;
        // Thin trace at 1 MHz: t = 35 µm < 2δ = 132 µm, so R_ac = R_dc.
        let rdc = dc_resistance_ohm(rho, 0.1, 0.2e-3 * 35e-6);
        assert_eq!(
            rectangle_ac_resistance_ohm(rho, 0.1, 0.2e-3, 35e-6, 1e6),
            rdc
        );
        // Thick bar at 100 MHz (δ = 6.6 µm): perimeter band 2δ(w + t) − 4δ².
        let (w, t) = (2e-3, 1e-3);
        let d = skin_depth_m(rho, 100e6, 1.0);
        let a = rectangle_effective_area_m2(w, t, d);
        assert!((a - (2.0 * d * (w + t) - 4.0 * d * d)).abs() < 1e-20);
        // Round wire: annulus ≈ π·D·δ for δ ≪ D.
        let dia = 1e-3;
        let a = round_wire_effective_area_m2(dia, d);
        assert!((a - (PI * dia * d - PI * d * d)).abs() < 1e-18);
        assert_eq!(round_wire_effective_area_m2(dia, 1.0), PI * 0.25e-6);
        let q = quality_factor(10e-6, 1.0, 1e6 / (2.0 * PI));
        assert!((q - 10.0).abs() < 1e-12);
    }

    proptest! {
        /// The effective area never exceeds the cross-section, shrinks with
        /// δ, and equals it when δ ≥ min(w, t)/2.
        #[test]
        fn effective_area_bounds(w in 1e-6f64..1e-2, t in 1e-6f64..1e-2, d in 1e-7f64..1e-2) {
            let a = rectangle_effective_area_m2(w, t, d);
            prop_assert!(a > 0.0 && a <= w * t);
            prop_assert!(rectangle_effective_area_m2(w, t, d * 0.9) <= a);
            if 2.0 * d >= w.min(t) {
                prop_assert_eq!(a, w * t);
            }
        }
    }
}
