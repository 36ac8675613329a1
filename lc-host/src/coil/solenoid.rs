//! Single-layer solenoid: Wheeler's 1928 formula and the exact current-sheet
//! (Lorenz) inductance with Nagaoka's coefficient.
//!
//! # Wheeler (1928)
//!
//! H. A. Wheeler, "Simple inductance formulas for radio coils", *Proc. IRE*
//! 16(10):1398–1400, Oct 1928 (docs/references.md, Wheeler 1928):
//!
//! | form | formula | units |
//! |---|---|---|
//! | inch (published) | L = r²N²/(9r + 10ℓ) | r, ℓ in inches; L in µH |
//! | mm | L = r²N²/(228.6r + 254ℓ) | r, ℓ in mm; L in µH (the inch form converted) |
//! | SI | L = µ0·π·r²·N²/(ℓ + 0.9r) | SI; **1.0028 × the inch form** |
//!
//! The published constant drops the factor 4π²·0.0254 = 1.00275 that the SI
//! derivation carries (docs/references.md, Wheeler 1928 and Traps, item 9;
//! published, quoted). We do not "fix" it: [`wheeler_h`] reproduces the
//! published µH values and [`wheeler_si_h`] is the SI form, 0.28 % higher.
//! Wheeler claimed about 1 % for ℓ > 0.8r (from memory); against the exact
//! Lorenz value the inch form is within 0.6 % over ℓ ≥ 0.8r (tests).
//!
//! # Lorenz / Nagaoka (exact for a uniform current sheet)
//!
//! L = µ0·π·r²·N²/ℓ · K_N with, for k² = d²/(d² + ℓ²), k′ = ℓ/√(d² + ℓ²)
//! (d = 2r):
//!
//! K_N = (4/(3π·k′))·[(k′²/k²)·(K(k) − E(k)) + E(k) − k]
//!
//! where K(k), E(k) are written with the **modulus k**; this code calls
//! [`crate::coil::elliptic`] with the parameter m = k² and m₁ = k′², and
//! takes K − E from the AGM without cancellation, so long coils (k → 0)
//! keep full precision. Grover (*Inductance Calculations*, 1946, Table 36)
//! tabulates K_N against ℓ/d. The current sheet ignores the wire's
//! diameter and pitch (Rosa's corrections); the filament model of
//! [`crate::coil::filament::FilamentCoil::solenoid`] includes them to first
//! order through the wire's GMD.

use super::elliptic::complete_integrals_with_complement;
use super::MU0_H_PER_M;
use std::f64::consts::PI;

/// The factor 4π²·0.0254 = 1.00275 between Wheeler's SI form and his
/// published inch form (docs/references.md, Solenoid cases).
pub const WHEELER_SI_OVER_INCH: f64 = 4.0 * PI * PI * 0.0254;

/// Wheeler 1928, the published inch form: L\[µH\] = r²N²/(9r + 10ℓ), r and ℓ
/// in inches.
pub fn wheeler_inch_uh(radius_in: f64, length_in: f64, turns: f64) -> f64 {
    radius_in * radius_in * turns * turns / (9.0 * radius_in + 10.0 * length_in)
}

/// Wheeler 1928 in mm: L\[µH\] = r²N²/(228.6r + 254ℓ), r and ℓ in mm (the
/// inch form, converted; same value).
pub fn wheeler_mm_uh(radius_mm: f64, length_mm: f64, turns: f64) -> f64 {
    radius_mm * radius_mm * turns * turns / (228.6 * radius_mm + 254.0 * length_mm)
}

/// Wheeler 1928, the published inch form evaluated from SI inputs, in H
/// (reproduces the published µH values).
pub fn wheeler_h(radius_m: f64, length_m: f64, turns: f64) -> f64 {
    wheeler_inch_uh(radius_m / 0.0254, length_m / 0.0254, turns) * 1e-6
}

/// Wheeler's SI form L = µ0·π·r²·N²/(ℓ + 0.9r), in H: 1.0028 × [`wheeler_h`].
pub fn wheeler_si_h(radius_m: f64, length_m: f64, turns: f64) -> f64 {
    MU0_H_PER_M * PI * radius_m * radius_m * turns * turns / (length_m + 0.9 * radius_m)
}

/// Nagaoka's coefficient K_N for a solenoid of radius `radius_m` and
/// length `length_m` (dimensionless, 0 < K_N < 1; → 1 for a long coil).
/// NaN unless both are finite and above zero.
pub fn nagaoka_coefficient(radius_m: f64, length_m: f64) -> f64 {
    if !(radius_m.is_finite() && radius_m > 0.0 && length_m.is_finite() && length_m > 0.0) {
        return f64::NAN;
    }
    let d = 2.0 * radius_m;
    let h = d * d + length_m * length_m;
    let m = d * d / h; // k²
    let m1 = length_m * length_m / h; // k′²
    let k = m.sqrt();
    let k1 = m1.sqrt();
    let ce = complete_integrals_with_complement(m, m1);
    4.0 / (3.0 * PI * k1) * ((m1 / m) * ce.k_minus_e + ce.e - k)
}

/// Exact current-sheet inductance (Lorenz; Nagaoka's form)
/// L = µ0·π·r²·N²/ℓ·K_N, in H.
pub fn lorenz_h(radius_m: f64, length_m: f64, turns: f64) -> f64 {
    MU0_H_PER_M * PI * radius_m * radius_m * turns * turns / length_m
        * nagaoka_coefficient(radius_m, length_m)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::coil::filament::{gmd_round_wire_m, FilamentCoil};
    use proptest::prelude::*;

    const INCH: f64 = 0.0254;

    /// Wheeler worked examples, docs/references.md, Solenoid cases: Wheeler
    /// values (computed) from the 1928 formula, compared at 1e-9 against their
    /// exact fractions where there is one and at the printed 4 decimals
    /// otherwise; Lorenz values (computed; printed to 4 decimals in µH).
    #[test]
    fn worked_examples() {
        // r = 1 in, ℓ = 2 in, N = 20: 400/29 = 13.7931 µH; Lorenz 13.8063 µH.
        let w = wheeler_inch_uh(1.0, 2.0, 20.0);
        assert!((w - 400.0 / 29.0).abs() < 1e-9 * w);
        assert!((w - 13.7931).abs() < 5e-5);
        assert!((wheeler_h(INCH, 2.0 * INCH, 20.0) * 1e6 - w).abs() < 1e-9 * w);
        assert!((lorenz_h(INCH, 2.0 * INCH, 20.0) * 1e6 - 13.8063).abs() < 5e-5);
        // d = 0.75 in, ℓ = 1.5 in, 48 turns (ARRL Handbook example, from
        // memory): 324/18.375 = 17.6327 µH; Lorenz 17.7204 µH.
        let w = wheeler_inch_uh(0.375, 1.5, 48.0);
        assert!((w - 324.0 / 18.375).abs() < 1e-9 * w);
        assert!((w - 17.6327).abs() < 5e-5);
        assert!((lorenz_h(0.375 * INCH, 1.5 * INCH, 48.0) * 1e6 - 17.7204).abs() < 5e-5);
        // r = 12.5 mm, ℓ = 24 mm, N = 20 (mm form): 6.9805 µH; Lorenz 6.9854 µH.
        let w = wheeler_mm_uh(12.5, 24.0, 20.0);
        assert!((w - 6.9805).abs() < 5e-5);
        assert!((wheeler_h(12.5e-3, 24e-3, 20.0) * 1e6 - w).abs() < 1e-9 * w);
        assert!((lorenz_h(12.5e-3, 24e-3, 20.0) * 1e6 - 6.9854).abs() < 5e-5);
        // r = ℓ = 1 in, N = 10 (outside Wheeler's range): 5.2632 / 5.2696 µH.
        assert!((wheeler_inch_uh(1.0, 1.0, 10.0) - 100.0 / 19.0).abs() < 1e-12);
        assert!((lorenz_h(INCH, INCH, 10.0) * 1e6 - 5.2696).abs() < 5e-5);
    }

    /// The SI form is 1.0028 × the published inch form (docs/references.md,
    /// Solenoid cases, Traps, item 9); the mm form equals the inch form.
    #[test]
    fn wheeler_forms() {
        assert!((WHEELER_SI_OVER_INCH - 1.0028).abs() < 5e-5);
        for (r, l, n) in [(0.01, 0.02, 30.0), (0.005, 0.05, 100.0), (0.02, 0.016, 7.0)] {
            let ratio = wheeler_si_h(r, l, n) / wheeler_h(r, l, n);
            assert!((ratio - WHEELER_SI_OVER_INCH).abs() < 1e-12);
            let mm = wheeler_mm_uh(r * 1e3, l * 1e3, n) * 1e-6;
            assert!((mm / wheeler_h(r, l, n) - 1.0).abs() < 1e-12);
        }
    }

    /// docs/references.md, Nagaoka coefficient: K_N at seven d/ℓ from 0.1
    /// to 10, against values computed by `scripts/reference-values.py`
    /// (mpmath 1.3 at 50 digits, Lorenz's closed form and, independently,
    /// the double integral of Maxwell's loop formula over the winding; the
    /// two agree to 1e-20), held to 1e-12 relative; and against the
    /// four-decimal table (Nagaoka 1909 as reprinted by Grover 1946, Table
    /// 36; from memory) to half a unit of its last digit.
    #[test]
    fn nagaoka_against_independent_values() {
        let cases = [
            (0.1, 0.958_807_124_203_722_9, 0.9588),
            (0.2, 0.920_092_670_827_776_5, 0.9201),
            (0.5, 0.818_135_751_934_703_1, 0.8181),
            (1.0, 0.688_422_607_320_376_7, 0.6884),
            (2.0, 0.525_510_024_251_927_5, 0.5255),
            (5.0, 0.319_825_467_781_858_4, 0.3198),
            (10.0, 0.203_323_517_521_913_26, 0.2033),
        ];
        for (d_over_l, exact, table) in cases {
            // Radius 1 mm and 1 m: the coefficient depends on d/ℓ alone.
            for r in [1e-3, 1.0] {
                let kn = nagaoka_coefficient(r, 2.0 * r / d_over_l);
                assert!(
                    (kn / exact - 1.0).abs() < 1e-12,
                    "d/ℓ = {d_over_l}, r = {r}: {kn} vs {exact}"
                );
                assert!(
                    (kn - table).abs() <= 5e-5,
                    "d/ℓ = {d_over_l}: {kn} vs table {table}"
                );
            }
        }
    }

    #[test]
    fn nagaoka_limits() {
        // Long coil: K_N = 1 − 4d/(3πℓ) + O((d/ℓ)²) (standard asymptote);
        // at ℓ = 500 d the first correction suffices to 1e-6.
        let kn = nagaoka_coefficient(1.0, 1000.0);
        assert!((kn - (1.0 - 8.0 / (3.0 * PI * 1000.0))).abs() < 1e-6);
        assert!((nagaoka_coefficient(1.0, 1e8) - 1.0).abs() < 1e-8);
        // Short coil: K_N → 0.
        assert!(nagaoka_coefficient(1.0, 1e-6) < 1e-4);
        assert!(nagaoka_coefficient(0.0, 1.0).is_nan());
        assert!(nagaoka_coefficient(1.0, f64::INFINITY).is_nan());
    }

    #[test]
    fn filament_solenoid_near_current_sheet() {
        // r = 12.5 mm, ℓ = 24 mm, 20 turns of 1.0 mm wire at 1.2 mm pitch:
        // the loop model (with the wire's GMD) is 0.970 × Lorenz (computed);
        // the 3 % is Rosa's correction for round, spaced wire, which the
        // current sheet leaves out. Held to 4 %.
        let coil = FilamentCoil::solenoid(12.5e-3, 24e-3, 20, gmd_round_wire_m(1.0e-3)).unwrap();
        let fil = coil.inductance_h();
        let lor = lorenz_h(12.5e-3, 24e-3, 20.0);
        assert!((fil / lor - 0.970).abs() < 0.001, "{}", fil / lor);
        assert!((fil / lor - 1.0).abs() < 0.04);
    }

    proptest! {
        /// Wheeler (inch form) vs Lorenz within 1 % for ℓ ≥ 0.8r
        /// (docs/references.md, Solenoid cases; measured over ℓ/r = 0.8 … 10⁴:
        /// −0.59 % … +0.06 %).
        #[test]
        fn wheeler_within_one_percent(r in 1e-3f64..0.1, l_over_r in 0.8f64..1000.0, n in 1.0f64..1000.0) {
            let l = r * l_over_r;
            let ratio = wheeler_h(r, l, n) / lorenz_h(r, l, n);
            prop_assert!((ratio - 1.0).abs() < 0.01, "ℓ/r = {l_over_r}: {ratio}");
        }

        #[test]
        fn nagaoka_between_zero_and_one_and_rising(r in 1e-3f64..1.0, l_over_r in 1e-3f64..1e4) {
            let kn = nagaoka_coefficient(r, r * l_over_r);
            prop_assert!(kn > 0.0 && kn < 1.0);
            prop_assert!(nagaoka_coefficient(r, r * l_over_r * 1.01) > kn);
        }
    }
}
