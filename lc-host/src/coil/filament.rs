//! Coaxial circular filaments: Maxwell's mutual inductance, the
//! self-inductance of a thin loop from its geometric mean distance, and
//! coils modelled as sets of coaxial loops.
//!
//! # Maxwell's formula (Treatise on Electricity and Magnetism, 1873, Art. 701; DLMF §19.34)
//!
//! Two coaxial circles of radii a and b, a distance d apart along the axis:
//!
//! M = µ0·√(ab)·[(2/k − k)·K(k) − (2/k)·E(k)],  k² = 4ab/((a + b)² + d²)
//!
//! with K and E of **modulus k**. The code evaluates the equivalent
//! M = µ0·√(ab)·(2/k)·[(1 − m/2)·K(m) − E(m)] at the **parameter m = k²**,
//! with the bracket from the AGM without cancellation
//! ([`CompleteIntegrals::maxwell`]) and m₁ = 1 − m = ((a − b)² + d²)/((a +
//! b)² + d²) formed directly, so the result keeps full relative precision
//! both far apart (m → 0) and close together (m → 1). The same M is
//! Neumann's integral (µ0/4π)·ab·∫₀^{2π} cos φ dφ / √(a² + b² + d² −
//! 2ab·cos φ), which the tests integrate numerically as an independent
//! check. (Written with µ0/4π the prefactor is wrong: the outer integral
//! over the second loop contributes another 2π, so it is µ0/2;
//! docs/references.md, Traps, item 13.)
//!
//! # Self-inductance from the geometric mean distance (Grover 1946)
//!
//! A loop of radius r whose conductor has a cross-section with geometric
//! mean distance g (GMD, g ≪ r) has L = µ0·r·(ln(8r/g) − 2): the mutual
//! inductance of two filaments g apart, to leading order. For a round wire
//! of radius ρ, g = ρ·e^(−1/4) and the formula becomes the familiar
//! µ0·r·(ln(8r/ρ) − 7/4). For a rectangle w × t, g ≈ 0.2235·(w + t)
//! (Grover, *Inductance Calculations*, 1946; docs/references.md, Grover 1946).
//!
//! # Coils as loops
//!
//! [`FilamentCoil`] sums the self terms of its loops and Maxwell's mutual
//! terms between every pair. It assumes all loops carry the same current
//! in the same sense (turns and layers in series, aiding), ignores the
//! leads, the pitch of a spiral or helix, and the current's distribution
//! across each conductor beyond its GMD (no skin or proximity effect).

use super::elliptic::{complete_integrals_with_complement, CompleteIntegrals};
use super::{positive, CoilError, MU0_H_PER_M};

/// Mutual inductance of two coaxial circular filaments of radii `a_m` and
/// `b_m` whose planes are `d_m` apart, in H (Maxwell 1873, Art. 701).
///
/// Symmetric in a and b, even in d, positive, and largest at d = 0. Infinite
/// for coincident loops (a = b, d = 0). NaN unless a and b are finite and
/// above zero and d is finite.
pub fn mutual_inductance_coaxial_h(a_m: f64, b_m: f64, d_m: f64) -> f64 {
    if !(a_m.is_finite() && a_m > 0.0 && b_m.is_finite() && b_m > 0.0 && d_m.is_finite()) {
        return f64::NAN;
    }
    let d_sq = d_m * d_m;
    let sum = a_m + b_m;
    let diff = a_m - b_m;
    let s = sum * sum + d_sq;
    let m = 4.0 * a_m * b_m / s;
    let m1 = (diff * diff + d_sq) / s;
    let CompleteIntegrals { maxwell, .. } = complete_integrals_with_complement(m.min(1.0), m1);
    MU0_H_PER_M * (a_m * b_m).sqrt() * 2.0 / m.sqrt() * maxwell
}

/// Self-inductance of a thin circular loop of radius `radius_m` whose
/// conductor cross-section has geometric mean distance `gmd_m`:
/// L = µ0·r·(ln(8r/g) − 2), in H (Grover 1946; valid for g ≪ r).
///
/// Not validated: g ≥ r gives a meaningless (even negative) value.
pub fn loop_self_inductance_h(radius_m: f64, gmd_m: f64) -> f64 {
    MU0_H_PER_M * radius_m * ((8.0 * radius_m / gmd_m).ln() - 2.0)
}

/// Geometric mean distance of a rectangular cross-section w × t from
/// itself, g ≈ 0.2235·(w + t), in m (Grover, *Inductance Calculations*,
/// 1946; docs/references.md, Grover 1946). Grover's approximation; exact for a
/// square within about 0.1 % (from memory).
pub fn gmd_rectangle_m(width_m: f64, thickness_m: f64) -> f64 {
    0.2235 * (width_m + thickness_m)
}

/// Geometric mean distance of a round wire of diameter `diameter_m` from
/// itself, g = (d/2)·e^(−1/4), in m (Grover 1946; standard).
pub fn gmd_round_wire_m(diameter_m: f64) -> f64 {
    0.5 * diameter_m * (-0.25f64).exp()
}

/// One circular filament: its radius and its axial position.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Loop {
    /// Radius, m.
    pub radius_m: f64,
    /// Axial position, m. For a coil facing a target, larger z is farther
    /// from it (see [`crate::coil::target`]).
    pub z_m: f64,
}

/// A coil as coaxial circular loops in series, all with the same conductor
/// cross-section (GMD).
#[derive(Clone, Debug, PartialEq)]
pub struct FilamentCoil {
    loops: Vec<Loop>,
    gmd_m: f64,
}

impl FilamentCoil {
    /// A coil from its loops and the GMD of its conductor. Every radius
    /// must be finite and above the GMD, every z finite, and no two loops
    /// may coincide.
    pub fn new(loops: Vec<Loop>, gmd_m: f64) -> Result<Self, CoilError> {
        positive("conductor GMD", gmd_m)?;
        if loops.is_empty() {
            return Err(CoilError::OutOfRange {
                what: "number of loops",
                value: 0.0,
                range: "at least one loop",
            });
        }
        for l in &loops {
            positive("loop radius", l.radius_m)?;
            if l.radius_m <= gmd_m {
                return Err(CoilError::OutOfRange {
                    what: "loop radius",
                    value: l.radius_m,
                    range: "radius above the conductor's GMD (a thin loop)",
                });
            }
            if !l.z_m.is_finite() {
                return Err(CoilError::OutOfRange {
                    what: "loop axial position",
                    value: l.z_m,
                    range: "finite",
                });
            }
        }
        for (i, a) in loops.iter().enumerate() {
            if loops[i + 1..].iter().any(|b| b == a) {
                return Err(CoilError::OutOfRange {
                    what: "loop radius (two loops coincide)",
                    value: a.radius_m,
                    range: "distinct loops",
                });
            }
        }
        Ok(FilamentCoil { loops, gmd_m })
    }

    /// Loops of the given radii repeated on `layers` layers `layer_spacing_m`
    /// apart (layer 0 at z = 0, the others at larger z), for planar
    /// spirals. Every layer's turns circulate in the same sense.
    pub fn stacked(
        radii_m: &[f64],
        layers: u32,
        layer_spacing_m: f64,
        gmd_m: f64,
    ) -> Result<Self, CoilError> {
        if layers > 1 {
            positive("layer spacing", layer_spacing_m)?;
        }
        let loops = (0..layers.max(1))
            .flat_map(|layer| {
                let z_m = f64::from(layer) * layer_spacing_m;
                radii_m.iter().map(move |&radius_m| Loop { radius_m, z_m })
            })
            .collect();
        FilamentCoil::new(loops, gmd_m)
    }

    /// `turns` loops of radius `radius_m` at the pitch ℓ/N, centred on
    /// z = 0, for a single-layer solenoid of winding length ℓ.
    pub fn solenoid(
        radius_m: f64,
        length_m: f64,
        turns: u32,
        gmd_m: f64,
    ) -> Result<Self, CoilError> {
        positive("winding length", length_m)?;
        let n = f64::from(turns);
        let pitch = length_m / n;
        let loops = (0..turns)
            .map(|i| Loop {
                radius_m,
                z_m: (f64::from(i) - 0.5 * (n - 1.0)) * pitch,
            })
            .collect();
        FilamentCoil::new(loops, gmd_m)
    }

    /// The loops.
    pub fn loops(&self) -> &[Loop] {
        &self.loops
    }

    /// The conductor's GMD, m.
    pub fn gmd_m(&self) -> f64 {
        self.gmd_m
    }

    /// Inductance: Σ self terms + Σ over ordered pairs i ≠ j of M(rᵢ, rⱼ,
    /// |zᵢ − zⱼ|), in H.
    pub fn inductance_h(&self) -> f64 {
        let mut l = 0.0;
        for (i, a) in self.loops.iter().enumerate() {
            l += loop_self_inductance_h(a.radius_m, self.gmd_m);
            for b in &self.loops[i + 1..] {
                l += 2.0 * mutual_inductance_coaxial_h(a.radius_m, b.radius_m, a.z_m - b.z_m);
            }
        }
        l
    }

    /// Mutual inductance to `other` when `other` is moved `offset_m` along
    /// the axis, in H: Σ over all loop pairs.
    pub fn mutual_inductance_h(&self, other: &FilamentCoil, offset_m: f64) -> f64 {
        let mut m = 0.0;
        for a in &self.loops {
            for b in &other.loops {
                m +=
                    mutual_inductance_coaxial_h(a.radius_m, b.radius_m, a.z_m - (b.z_m + offset_m));
            }
        }
        m
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::coil::quadrature::{composite, gauss_legendre};
    use crate::coil::spiral::{current_sheet_h, Shape, Spiral};
    use proptest::prelude::*;
    use std::f64::consts::PI;

    /// Neumann's double line integral (µ0/4π)·∮∮ dl₁·dl₂/R reduced by
    /// symmetry to (µ0/2)·ab·∫₀^{2π} cos φ /√(a² + b² + d² − 2ab cos φ) dφ,
    /// by composite Gauss–Legendre (independent of the elliptic integrals).
    /// Some write-ups print the prefactor as µ0/4π, dropping the 2π
    /// of the outer integral; with it the result is 2π times too small.
    fn neumann(a: f64, b: f64, d: f64) -> f64 {
        let rule = gauss_legendre(16);
        let r = a * a + b * b + d * d;
        let integral = composite(&rule, 0.0, 2.0 * PI, 128, |phi| {
            phi.cos() / (r - 2.0 * a * b * phi.cos()).sqrt()
        });
        0.5 * MU0_H_PER_M * a * b * integral
    }

    #[test]
    fn maxwell_matches_neumann() {
        for (a, b, d) in [
            (1.0, 1.0, 1.0),
            (0.01, 0.005, 0.002),
            (5e-3, 4.5e-3, 0.0),
            (5e-3, 4.9e-3, 1.6e-3),
            (0.1, 0.02, 0.3),
            (1.0, 0.9, 0.05),
        ] {
            let m = mutual_inductance_coaxial_h(a, b, d);
            let n = neumann(a, b, d);
            assert!(((m - n) / n).abs() < 1e-10, "({a}, {b}, {d}): {m} vs {n}");
        }
    }

    /// docs/references.md, Coaxial loops: M(a, b, d) computed by
    /// `scripts/reference-values.py` (mpmath 1.3 at 50 digits, Maxwell's
    /// closed form with mpmath's `ellipk`/`ellipe`, and Neumann's integral
    /// by mpmath `quad`; the two agree to 1e-30), held to 1e-12 relative.
    /// The cases span close, touching-plane, unequal, far and 10:1 loops,
    /// and two turns of the demo-sized spiral.
    #[test]
    fn maxwell_against_mpmath() {
        let cases = [
            (0.01, 0.01, 0.005, 1.112_610_893_521_964_6e-8),
            (0.01, 0.02, 0.0, 1.097_235_894_694_795_9e-8),
            (0.01, 0.005, 0.01, 1.618_167_841_109_075_9e-9),
            (0.05, 0.05, 0.1, 7.092_996_310_223_702_6e-9),
            (1.0, 0.1, 2.0, 1.761_561_428_968_939_4e-9),
            (0.0049, 0.0045, 0.0016, 7.021_476_069_627_576e-9),
        ];
        for (a, b, d, exact) in cases {
            let m = mutual_inductance_coaxial_h(a, b, d);
            assert!(
                (m / exact - 1.0).abs() < 1e-12,
                "M({a}, {b}, {d}) = {m:e} vs {exact:e}"
            );
        }
    }

    #[test]
    fn far_field_limit() {
        // A small loop b on the axis of loop a sees B = µ0·a²/(2(a² + d²)^{3/2}):
        // M → µ0·π·a²·b²/(2(a² + d²)^{3/2}) as b → 0 (docs/references.md,
        // Coaxial loops).
        let a = 0.01;
        let b = 1e-6;
        for d in [0.0, 0.001, 0.01, 0.1, 1.0, 10.0] {
            let m = mutual_inductance_coaxial_h(a, b, d);
            let far = MU0_H_PER_M * PI * a * a * b * b / (2.0 * (a * a + d * d).powf(1.5));
            assert!(((m - far) / far).abs() < 1e-7, "d={d}: {m} vs {far}");
        }
        // Both small against d: the dipole–dipole law, still exact to full precision
        // (no cancellation in the AGM bracket).
        let m = mutual_inductance_coaxial_h(1e-3, 2e-3, 100.0);
        let far = MU0_H_PER_M * PI * 1e-6 * 4e-6 / (2.0 * 1e6);
        assert!(((m - far) / far).abs() < 1e-9, "{m} vs {far}");
    }

    #[test]
    fn close_loops_approach_the_gmd_formula() {
        // Two equal loops g apart: M → µ0·r·(ln(8r/g) − 2) as g/r → 0 (the
        // definition behind the GMD self-inductance; the next term is
        // O((g/r)²·ln)).
        let r = 1.0;
        for g in [1e-3, 1e-4, 1e-6] {
            let m = mutual_inductance_coaxial_h(r, r, g);
            let l = loop_self_inductance_h(r, g);
            assert!(((m - l) / l).abs() < 10.0 * g * g, "g={g}");
        }
        assert!(mutual_inductance_coaxial_h(1.0, 1.0, 0.0).is_infinite());
        assert!(mutual_inductance_coaxial_h(0.0, 1.0, 0.0).is_nan());
        assert!(mutual_inductance_coaxial_h(1.0, 1.0, f64::NAN).is_nan());
        // Round wire: g = ρ·e^(−1/4) turns the formula into µ0·r·(ln(8r/ρ) − 7/4).
        let (r, rho) = (0.05, 0.5e-3);
        let l = loop_self_inductance_h(r, gmd_round_wire_m(2.0 * rho));
        let classic = MU0_H_PER_M * r * ((8.0 * r / rho).ln() - 1.75);
        assert!(((l - classic) / classic).abs() < 1e-14);
    }

    /// docs/references.md, Spiral cases, ring-model cross-check (computed): the
    /// circular spiral (10 turns, d_out 10 mm, w = s = 0.2 mm, t = 35 µm) as 10
    /// rings r = 4.9, 4.5, …, 1.3 mm with g = 0.2235(w + t) gives 0.56345 µH,
    /// 0.987× the current-sheet value 0.570639 µH (Mohan et al. 1999). A 5 %
    /// tolerance would do; we hold it to 2 %.
    #[test]
    fn references_circle_ring_model() {
        let radii: Vec<f64> = (0..10).map(|i| (4.9 - 0.4 * f64::from(i)) * 1e-3).collect();
        let coil = FilamentCoil::stacked(&radii, 1, 0.0, gmd_rectangle_m(0.2e-3, 35e-6)).unwrap();
        let l = coil.inductance_h();
        assert!(((l - 0.56345e-6) / 0.56345e-6).abs() < 1e-5, "{l}");
        let spiral = Spiral::new(Shape::Circular, 10, 10e-3, 0.2e-3, 0.2e-3).unwrap();
        let cs = current_sheet_h(&spiral);
        let ratio = l / cs;
        assert!((ratio - 0.987).abs() < 5e-4, "ratio {ratio}");
        assert!((ratio - 1.0).abs() < 0.02);
    }

    #[test]
    fn coil_construction_rules() {
        let g = 1e-5;
        assert!(FilamentCoil::new(vec![], g).is_err());
        let a = Loop {
            radius_m: 1e-3,
            z_m: 0.0,
        };
        assert!(FilamentCoil::new(vec![a, a], g).is_err());
        assert!(FilamentCoil::new(
            vec![Loop {
                radius_m: 5e-6,
                z_m: 0.0
            }],
            g
        )
        .is_err());
        assert!(FilamentCoil::stacked(&[1e-3], 2, 0.0, g).is_err());
        let one = FilamentCoil::new(vec![a], g).unwrap();
        assert_eq!(one.inductance_h(), loop_self_inductance_h(1e-3, g));
        // Two layers: L = 2·L1 + 2·M.
        let two = FilamentCoil::stacked(&[1e-3], 2, 1e-3, g).unwrap();
        let m = mutual_inductance_coaxial_h(1e-3, 1e-3, 1e-3);
        assert!((two.inductance_h() - 2.0 * one.inductance_h() - 2.0 * m).abs() < 1e-20);
        assert_eq!(one.mutual_inductance_h(&one, 1e-3), m);
        assert_eq!(one.mutual_inductance_h(&one, -1e-3), m);
    }

    proptest! {
        #[test]
        fn mutual_symmetric_even_positive(
            a in 1e-4f64..1.0,
            b in 1e-4f64..1.0,
            d in -1.0f64..1.0,
        ) {
            prop_assume!(a != b || d != 0.0);
            let m = mutual_inductance_coaxial_h(a, b, d);
            prop_assert!(m > 0.0 && m.is_finite());
            let m_ba = mutual_inductance_coaxial_h(b, a, d);
            prop_assert!(((m - m_ba) / m).abs() < 1e-13);
            prop_assert_eq!(m, mutual_inductance_coaxial_h(a, b, -d));
            // Falls with distance.
            prop_assert!(mutual_inductance_coaxial_h(a, b, d.abs() + 0.01) < m);
        }

        #[test]
        fn maxwell_matches_neumann_random(
            a in 1e-3f64..1.0,
            ratio in 0.05f64..0.95,
            d_rel in 0.01f64..3.0,
        ) {
            let b = a * ratio;
            let d = a * d_rel;
            let m = mutual_inductance_coaxial_h(a, b, d);
            let n = neumann(a, b, d);
            prop_assert!(((m - n) / n).abs() < 1e-9, "{m} vs {n}");
        }
    }
}
