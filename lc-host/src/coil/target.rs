//! A coil facing a flat metal target: how much L falls (conductor) or
//! rises (permeable metal), and how much loss the eddy currents add.
//!
//! # Geometry
//!
//! The target is an infinite flat plate parallel to the coil's loops; the
//! **gap** g is the distance from the plate's surface to the nearest loop.
//! A loop at axial position z sits g + (z − z_min) from the plate, so a
//! stacked spiral's layer 0 (z = 0) faces the plate. Loops are those of a
//! [`FilamentCoil`].
//!
//! # Image method (Maxwell): exact for the two ideal plates
//!
//! * **Perfect conductor** (σ → ∞, or any good conductor far above the
//!   frequency where δ matters): the field outside equals that of the coil
//!   plus a mirror coil behind the surface carrying the opposite current.
//!   With M_img = Σ over all loop pairs (a, b) of M(r_a, r_b, 2g + z′_a + z′_b)
//!   (z′ = z − z_min; Maxwell's formula, [`crate::coil::filament`]):
//!   L(g) = L∞ − M_img.
//! * **Permeable, non-conducting half-space** (a ferrite, or iron at DC):
//!   the mirror carries (µr − 1)/(µr + 1) of the current, same sense:
//!   L(g) = L∞ + (µr − 1)/(µr + 1)·M_img, which raises L.
//!
//! # Real metal: the layered-conductor model (Dodd & Deeds 1968)
//!
//! A plate of conductivity σ, permeability µr and thickness T (or a
//! half-space) at angular frequency ω reflects each spatial-frequency
//! component α of the coil's field with its own coefficient R(α). Writing
//! S(α) = Σ_a r_a·J1(α·r_a)·e^(−α·z′_a), the coil's impedance changes by
//!
//! ΔZ = jω·µ0·π·∫₀^∞ R(α)·e^(−2αg)·S(α)² dα,
//!
//! with α1 = √(α² + jω·µ0·µr·σ), β = α1/µr, q = e^(−2α1·T):
//!
//! R(α) = (α − β)(α + β)(1 − q) / ((α + β)² − (α − β)²·q)  (half-space: q = 0, R = (α − β)/(α + β)).
//!
//! This is the axisymmetric eddy-current solution of C. V. Dodd and W. E.
//! Deeds, "Analytical solutions to eddy-current probe-coil problems", *J.
//! Appl. Phys.* 39(6):2829–2838 (1968) (from memory for the paper's form);
//! R(α) above was re-derived here from the boundary conditions (A and
//! (1/µ)·∂A/∂z continuous) and the tests pin it to its limits: R = −1 gives
//! the perfect mirror exactly (checked against Maxwell's formula to 1e-9),
//! σ = 0 gives (µr − 1)/(µr + 1), T → ∞ gives the half-space, T → 0 gives
//! nothing, a thin sheet gives −jωµ0σT/(2α + jωµ0σT), and the added
//! resistance is never negative. From ΔZ: ΔL = Re(ΔZ/(jω)) and ΔR =
//! Re(ΔZ). Displacement current is neglected (quasi-static), the plate is
//! infinite, flat and uniform, and the coil is the filament model.
//!
//! A rule of thumb falls out for a good conductor (δ ≪ 1/α for the α that
//! matter, i.e. δ ≪ coil radius and gap): R ≈ −e^(−α·δ·(1 − j)), so the plate
//! acts as a **perfect mirror δ/2 below its surface**, and the added loss is
//! ΔR ≈ (ω·δ/2)·|dM_img/dg|. (Computed: first-order expansion of R(α); the
//! tests check both against the full model.)
//!
//! A conductive ferrous plate (steel) does both: at low frequency the
//! permeability wins and L rises; at high frequency the eddy currents win
//! and L falls. The model covers it with σ and µr together (µr taken as a
//! constant: no saturation or hysteresis).

use super::bessel::bessel_j1;
use super::filament::{mutual_inductance_coaxial_h, FilamentCoil};
use super::quadrature::gauss_legendre;
use super::{positive, CoilError, MU0_H_PER_M};
use std::f64::consts::PI;

/// Conductivity of aluminium at 20 °C, 3.5×10⁷ S/m (ρ = 2.82×10⁻⁸ Ω·m;
/// the resistivity table of the Wikipedia article "Electrical resistivity
/// and conductivity", citing Serway, *Principles of Physics*; docs/references.md,
/// Serway; published, quoted). Alloys are lower (wrought alloys roughly 40–60 % IACS, 23–35 MS/m
/// from memory); give the real σ of the plate when it matters.
pub const ALUMINIUM_CONDUCTIVITY_S_PER_M: f64 = 3.5e7;

/// Conductivity of IACS annealed copper, 58.0 MS/m (docs/references.md,
/// Copper).
pub const COPPER_CONDUCTIVITY_S_PER_M: f64 = 58.0e6;

/// A flat metal target.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Plate {
    /// Conductivity σ, S/m (0 for a non-conducting permeable material).
    pub conductivity_s_per_m: f64,
    /// Relative permeability µr (1 for non-ferrous metals).
    pub relative_permeability: f64,
    /// Thickness, m; `None` for a half-space (thick compared with δ).
    pub thickness_m: Option<f64>,
}

impl Plate {
    /// A thick aluminium plate ([`ALUMINIUM_CONDUCTIVITY_S_PER_M`], µr = 1).
    pub fn aluminium() -> Plate {
        Plate {
            conductivity_s_per_m: ALUMINIUM_CONDUCTIVITY_S_PER_M,
            relative_permeability: 1.0,
            thickness_m: None,
        }
    }

    /// Checks σ ≥ 0, µr ≥ 1 (finite) and a thickness above zero.
    pub fn check(&self) -> Result<(), CoilError> {
        if !(self.conductivity_s_per_m.is_finite() && self.conductivity_s_per_m >= 0.0) {
            return Err(CoilError::OutOfRange {
                what: "plate conductivity",
                value: self.conductivity_s_per_m,
                range: "finite, zero or above (S/m)",
            });
        }
        if !(self.relative_permeability.is_finite() && self.relative_permeability >= 1.0) {
            return Err(CoilError::OutOfRange {
                what: "plate relative permeability",
                value: self.relative_permeability,
                range: "finite, 1 or above",
            });
        }
        if let Some(t) = self.thickness_m {
            positive("plate thickness", t)?;
        }
        Ok(())
    }

    /// Skin depth in the plate at `frequency_hz`, m (+∞ when σ = 0 or f = 0).
    pub fn skin_depth_m(&self, frequency_hz: f64) -> f64 {
        let k_sq = 2.0
            * PI
            * frequency_hz
            * MU0_H_PER_M
            * self.relative_permeability
            * self.conductivity_s_per_m;
        (2.0 / k_sq).sqrt()
    }
}

/// The mutual inductance between the coil and its mirror image in a plane
/// `gap_m` from the nearest loop: M_img = Σ_{a,b} M(r_a, r_b, 2g + z′_a +
/// z′_b), in H. NaN unless the gap is finite and above zero.
pub fn mirror_mutual_inductance_h(coil: &FilamentCoil, gap_m: f64) -> f64 {
    if !(gap_m.is_finite() && gap_m > 0.0) {
        return f64::NAN;
    }
    let z_min = nearest_z(coil);
    let loops = coil.loops();
    let mut m = 0.0;
    for (i, a) in loops.iter().enumerate() {
        let za = a.z_m - z_min;
        m += mutual_inductance_coaxial_h(a.radius_m, a.radius_m, 2.0 * gap_m + 2.0 * za);
        for b in &loops[i + 1..] {
            let zb = b.z_m - z_min;
            m += 2.0 * mutual_inductance_coaxial_h(a.radius_m, b.radius_m, 2.0 * gap_m + za + zb);
        }
    }
    m
}

/// L(g) − L∞ next to a perfect conductor: −M_img, in H (negative).
pub fn perfect_conductor_change_h(coil: &FilamentCoil, gap_m: f64) -> f64 {
    -mirror_mutual_inductance_h(coil, gap_m)
}

/// L(g) − L∞ next to a non-conducting permeable half-space:
/// +(µr − 1)/(µr + 1)·M_img, in H (positive for µr > 1).
pub fn permeable_half_space_change_h(
    coil: &FilamentCoil,
    gap_m: f64,
    relative_permeability: f64,
) -> f64 {
    let mu = relative_permeability;
    (mu - 1.0) / (mu + 1.0) * mirror_mutual_inductance_h(coil, gap_m)
}

/// The coil's response to a plate at one frequency.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct PlateResponse {
    /// L(g) − L∞, H (negative: the plate lowers L).
    pub inductance_change_h: f64,
    /// Resistance the eddy currents add in series with the coil, Ω (≥ 0).
    pub resistance_change_ohm: f64,
    /// The same change for a perfect conductor at the same gap, H.
    pub perfect_conductor_change_h: f64,
    /// inductance_change / perfect_conductor_change: 1 for a perfect mirror,
    /// below 1 for a real metal, negative for a ferrous plate that raises L.
    pub mirror_fraction: f64,
}

/// The coil's response to `plate` at `gap_m` and `frequency_hz` by the
/// layered-conductor model (module doc).
///
/// Errors on an invalid plate, a gap or frequency not finite and above
/// zero (f = 0 is allowed for a permeable plate: the magnetostatic
/// limit), and a gap so small against the coil that the integral would
/// take more than 250 000 panels (below about 1e-4 × the coil radius).
pub fn plate_response(
    coil: &FilamentCoil,
    plate: &Plate,
    gap_m: f64,
    frequency_hz: f64,
) -> Result<PlateResponse, CoilError> {
    plate.check()?;
    positive("gap", gap_m)?;
    if !(frequency_hz.is_finite() && frequency_hz >= 0.0) {
        return Err(CoilError::OutOfRange {
            what: "frequency",
            value: frequency_hz,
            range: "finite, zero or above (Hz)",
        });
    }
    let omega = 2.0 * PI * frequency_hz;
    let k_sq = omega * MU0_H_PER_M * plate.relative_permeability * plate.conductivity_s_per_m;
    // A plate thicker than 20 skin depths reflects like a half-space
    // (e^(−2·Re(α1)·T) ≤ e^(−40)).
    let thickness = plate
        .thickness_m
        .filter(|&t| k_sq == 0.0 || t * (0.5 * k_sq).sqrt() < 20.0);
    let mu = plate.relative_permeability;
    let reflect = |alpha: f64| reflection(alpha, k_sq, mu, thickness);
    let mut scales = vec![];
    if k_sq > 0.0 {
        scales.push(k_sq.sqrt());
    }
    if let Some(t) = thickness {
        scales.push(1.0 / t);
    }
    let dl = spectral_integral(coil, gap_m, &scales, reflect)?;
    let perfect = perfect_conductor_change_h(coil, gap_m);
    let inductance_change_h = dl.re;
    Ok(PlateResponse {
        inductance_change_h,
        resistance_change_ohm: -omega * dl.im,
        perfect_conductor_change_h: perfect,
        mirror_fraction: inductance_change_h / perfect,
    })
}

/// The good-conductor rule of thumb: a perfect mirror δ/2 below the
/// surface, L(g) − L∞ ≈ −M_img(g + δ/2), in H (module doc).
pub fn good_conductor_change_h(coil: &FilamentCoil, gap_m: f64, skin_depth_m: f64) -> f64 {
    perfect_conductor_change_h(coil, gap_m + 0.5 * skin_depth_m)
}

/// The reflection coefficient R(α) of the plate (module doc), with k² =
/// ω·µ0·µr·σ and `thickness` `None` for a half-space.
fn reflection(alpha: f64, k_sq: f64, mu_r: f64, thickness: Option<f64>) -> Complex {
    let a = Complex::real(alpha);
    let alpha1 = Complex {
        re: alpha * alpha,
        im: k_sq,
    }
    .sqrt();
    let beta = alpha1.scale(1.0 / mu_r);
    let minus = a.sub(beta);
    let plus = a.add(beta);
    match thickness {
        None => minus.div(plus),
        Some(t) => {
            let q = alpha1.scale(-2.0 * t).exp();
            let one_minus_q = Complex::real(1.0).sub(q);
            let num = minus.mul(plus).mul(one_minus_q);
            let den = plus.mul(plus).sub(minus.mul(minus).mul(q));
            num.div(den)
        }
    }
}

/// z of the loop nearest the plate.
fn nearest_z(coil: &FilamentCoil) -> f64 {
    coil.loops()
        .iter()
        .map(|l| l.z_m)
        .fold(f64::INFINITY, f64::min)
}

/// µ0·π·∫₀^∞ R(α)·e^(−2αg)·S(α)² dα by composite 16-point Gauss–Legendre.
///
/// Panels are at most π/(2·r_max) wide (the oscillation of J1(α·r)·J1(α·r′)
/// has period ≥ π/r_max) and 1/g (the decay); `scales` are further α-scales
/// of R (√(ωµσ), 1/T) resolved with panels a quarter of the scale wide up
/// to 8× the scale. The range ends at α = 20/g, where e^(−2αg) = e^(−40).
fn spectral_integral(
    coil: &FilamentCoil,
    gap_m: f64,
    scales: &[f64],
    reflect: impl Fn(f64) -> Complex,
) -> Result<Complex, CoilError> {
    const MAX_PANELS: f64 = 250_000.0;
    let z_min = nearest_z(coil);
    let loops: Vec<(f64, f64)> = coil
        .loops()
        .iter()
        .map(|l| (l.radius_m, l.z_m - z_min))
        .collect();
    let r_max = loops.iter().map(|l| l.0).fold(0.0, f64::max);
    let alpha_max = 20.0 / gap_m;
    let h = (0.5 * PI / r_max).min(1.0 / gap_m);
    // Breakpoints: fine panels near 0 for each scale, then width h.
    let mut segments: Vec<(f64, f64, f64)> = vec![]; // (from, to, panel width)
    let mut start = 0.0;
    let mut fine: Vec<f64> = scales
        .iter()
        .copied()
        .filter(|s| s.is_finite() && *s > 0.0)
        .collect();
    fine.sort_by(f64::total_cmp);
    for s in fine {
        let end = (8.0 * s).min(alpha_max);
        if end > start {
            segments.push((start, end, (0.25 * s).min(h)));
            start = end;
        }
    }
    if alpha_max > start {
        segments.push((start, alpha_max, h));
    }
    let panels: f64 = segments.iter().map(|(a, b, w)| ((b - a) / w).ceil()).sum();
    if panels.is_nan() || panels > MAX_PANELS {
        return Err(CoilError::OutOfRange {
            what: "gap",
            value: gap_m,
            range: "above about 1e-4 × the coil's radius (the integral would need too many panels)",
        });
    }
    let rule = gauss_legendre(16);
    let mut sum = Complex::real(0.0);
    for (a, b, w) in segments {
        // (b − a)/w ≤ MAX_PANELS, checked above, so the count fits a u32.
        let n = ((b - a) / w).ceil().max(1.0) as u32;
        let width = (b - a) / f64::from(n);
        for p in 0..n {
            let mid = a + (f64::from(p) + 0.5) * width;
            for &(x, wt) in &rule {
                let alpha = mid + 0.5 * width * x;
                let s: f64 = loops
                    .iter()
                    .map(|&(r, z)| r * bessel_j1(alpha * r) * (-alpha * z).exp())
                    .sum();
                let weight = 0.5 * width * wt * (-2.0 * alpha * gap_m).exp() * s * s;
                sum = sum.add(reflect(alpha).scale(weight));
            }
        }
    }
    Ok(sum.scale(MU0_H_PER_M * PI))
}

/// A minimal complex number for R(α).
#[derive(Clone, Copy, Debug, PartialEq)]
struct Complex {
    re: f64,
    im: f64,
}

impl Complex {
    fn real(re: f64) -> Complex {
        Complex { re, im: 0.0 }
    }
    fn add(self, o: Complex) -> Complex {
        Complex {
            re: self.re + o.re,
            im: self.im + o.im,
        }
    }
    fn sub(self, o: Complex) -> Complex {
        Complex {
            re: self.re - o.re,
            im: self.im - o.im,
        }
    }
    fn mul(self, o: Complex) -> Complex {
        Complex {
            re: self.re * o.re - self.im * o.im,
            im: self.re * o.im + self.im * o.re,
        }
    }
    fn scale(self, s: f64) -> Complex {
        Complex {
            re: self.re * s,
            im: self.im * s,
        }
    }
    fn div(self, o: Complex) -> Complex {
        let d = o.re * o.re + o.im * o.im;
        Complex {
            re: (self.re * o.re + self.im * o.im) / d,
            im: (self.im * o.re - self.re * o.im) / d,
        }
    }
    /// Principal square root (real part ≥ 0).
    fn sqrt(self) -> Complex {
        let r = self.re.hypot(self.im);
        let re = (0.5 * (r + self.re)).sqrt();
        let im = (0.5 * (r - self.re)).sqrt();
        Complex {
            re,
            im: if self.im < 0.0 { -im } else { im },
        }
    }
    fn exp(self) -> Complex {
        let m = self.re.exp();
        Complex {
            re: m * self.im.cos(),
            im: m * self.im.sin(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::coil::filament::Loop;
    use crate::coil::resistance::skin_depth_m;
    use crate::coil::spiral::{Shape, Spiral};
    use proptest::prelude::*;

    /// The demo coil of docs/coil.md: 20 mm square, 11 turns, w = s = 0.3
    /// mm, 35 µm copper, two layers 1.6 mm apart.
    fn demo() -> FilamentCoil {
        Spiral::new(Shape::Square, 11, 20e-3, 0.3e-3, 0.3e-3)
            .unwrap()
            .filament_coil(2, 1.6e-3, 35e-6)
            .unwrap()
    }

    fn ring(r: f64) -> FilamentCoil {
        FilamentCoil::new(
            vec![Loop {
                radius_m: r,
                z_m: 0.0,
            }],
            1e-5,
        )
        .unwrap()
    }

    #[test]
    fn spectral_integral_reproduces_the_mirror() {
        // R = −1: the integral must equal Maxwell's image sum (an
        // independent check of J1, the quadrature and the formula
        // M = µ0·π·a·b·∫ J1(αa)·J1(αb)·e^(−αz) dα).
        let coil = demo();
        for gap in [0.2e-3, 0.5e-3, 1e-3, 2e-3, 4e-3, 8e-3, 30e-3] {
            let s = spectral_integral(&coil, gap, &[], |_| Complex::real(-1.0)).unwrap();
            let m = perfect_conductor_change_h(&coil, gap);
            assert!(((s.re - m) / m).abs() < 1e-9, "gap {gap}: {} vs {m}", s.re);
            assert_eq!(s.im, 0.0);
        }
    }

    #[test]
    fn image_method_sanity() {
        let coil = demo();
        let l_inf = coil.inductance_h();
        let mut last = f64::NEG_INFINITY;
        for gap_mm in [0.25, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0, 64.0, 1000.0] {
            let dl = perfect_conductor_change_h(&coil, gap_mm * 1e-3);
            // Lowers L, never below zero total, rising monotonically with the gap.
            assert!(dl < 0.0 && l_inf + dl > 0.0);
            assert!(dl > last, "{gap_mm}");
            last = dl;
        }
        // → L∞ as the gap grows.
        assert!(perfect_conductor_change_h(&coil, 1.0).abs() < 1e-6 * l_inf);
        // Far field, one loop: M_img = M(r, r, 2g) → µ0·π·r⁴/(2·(r² + 4g²)^{3/2})
        // (docs/references.md, Coaxial loops, with b = r), i.e. ∝ g⁻³; the
        // error is O((r/2g)²).
        let r = 5e-3;
        let one = ring(r);
        for g in [0.1, 1.0] {
            let far = MU0_H_PER_M * PI * r.powi(4) / (2.0 * (r * r + 4.0 * g * g).powf(1.5));
            let err = (mirror_mutual_inductance_h(&one, g) / far - 1.0).abs();
            assert!(err < 2.0 * (r / (2.0 * g)).powi(2), "g {g}: {err}");
        }
        // The order of the loops does not matter, and the coil's placement
        // along the axis does not matter (only the gap to the nearest loop).
        let mut loops = coil.loops().to_vec();
        loops.reverse();
        for l in &mut loops {
            l.z_m += 0.123;
        }
        let moved = FilamentCoil::new(loops, coil.gmd_m()).unwrap();
        let (a, b) = (
            mirror_mutual_inductance_h(&coil, 1e-3),
            mirror_mutual_inductance_h(&moved, 1e-3),
        );
        assert!(((a - b) / a).abs() < 1e-13);
        assert!(mirror_mutual_inductance_h(&coil, 0.0).is_nan());
    }

    #[test]
    fn perfect_conductor_and_ideal_permeable_limits() {
        let coil = demo();
        let gap = 1e-3;
        let perfect = perfect_conductor_change_h(&coil, gap);
        // Very high conductivity at high frequency → the mirror (δ ≈ 0.5 µm
        // so the plane sits 0.25 µm deeper: 0.03 % at a 1 mm gap).
        let plate = Plate {
            conductivity_s_per_m: 1e12,
            relative_permeability: 1.0,
            thickness_m: None,
        };
        let r = plate_response(&coil, &plate, gap, 1e6).unwrap();
        assert!(
            (r.mirror_fraction - 1.0).abs() < 1e-3,
            "{}",
            r.mirror_fraction
        );
        // σ = 0, µr = 100: the (µr − 1)/(µr + 1) mirror, exactly.
        let ferrite = Plate {
            conductivity_s_per_m: 0.0,
            relative_permeability: 100.0,
            thickness_m: None,
        };
        let r = plate_response(&coil, &ferrite, gap, 1e6).unwrap();
        let expect = permeable_half_space_change_h(&coil, gap, 100.0);
        assert!(expect > 0.0);
        assert!(((r.inductance_change_h - expect) / expect).abs() < 1e-9);
        assert_eq!(r.resistance_change_ohm, 0.0);
        assert!((expect / -perfect - 99.0 / 101.0).abs() < 1e-12);
        // Non-conducting, µr = 1: nothing.
        let air = Plate {
            conductivity_s_per_m: 0.0,
            relative_permeability: 1.0,
            thickness_m: None,
        };
        assert_eq!(
            plate_response(&coil, &air, gap, 1e6)
                .unwrap()
                .inductance_change_h,
            0.0
        );
    }

    #[test]
    fn aluminium_plate_good_conductor_rule() {
        // Demo tank frequency, about 5.6 MHz: δ(Al) ≈ 36 µm ≪ gap, radius.
        let coil = demo();
        let f = 5.6e6;
        let plate = Plate::aluminium();
        let delta = plate.skin_depth_m(f);
        assert!((delta - skin_depth_m(1.0 / ALUMINIUM_CONDUCTIVITY_S_PER_M, f, 1.0)).abs() < 1e-15);
        for gap in [0.5e-3, 1e-3, 2e-3, 4e-3, 8e-3] {
            let r = plate_response(&coil, &plate, gap, f).unwrap();
            // A real metal reflects a little less than a perfect one.
            assert!(
                r.mirror_fraction < 1.0 && r.mirror_fraction > 0.95,
                "{}",
                r.mirror_fraction
            );
            // The mirror δ/2 below the surface: within 0.02 % (measured ≤ 3.3e-5).
            let rule = good_conductor_change_h(&coil, gap, delta);
            assert!(
                (r.inductance_change_h / rule - 1.0).abs() < 2e-3,
                "gap {gap}"
            );
            // Loss: ΔR ≈ (ω·δ/2)·|dM_img/dg| within 2 %.
            let h = 1e-7;
            let slope = (mirror_mutual_inductance_h(&coil, gap + h)
                - mirror_mutual_inductance_h(&coil, gap - h))
                / (2.0 * h);
            let dr = 2.0 * PI * f * delta / 2.0 * slope.abs();
            assert!(
                (r.resistance_change_ohm / dr - 1.0).abs() < 0.02,
                "gap {gap}: {} vs {dr}",
                r.resistance_change_ohm
            );
        }
    }

    #[test]
    fn thickness_limits_and_thin_sheet() {
        let coil = demo();
        let gap = 1e-3;
        let f = 1e5; // δ(Al) ≈ 270 µm
        let half = plate_response(&coil, &Plate::aluminium(), gap, f).unwrap();
        let thick = Plate {
            thickness_m: Some(10e-3),
            ..Plate::aluminium()
        };
        let r = plate_response(&coil, &thick, gap, f).unwrap();
        assert!(
            ((r.inductance_change_h - half.inductance_change_h) / half.inductance_change_h).abs()
                < 1e-9
        );
        // A plate a few δ thick is close to the half-space but not equal.
        let three = Plate {
            thickness_m: Some(3.0 * Plate::aluminium().skin_depth_m(f)),
            ..Plate::aluminium()
        };
        let r3 = plate_response(&coil, &three, gap, f).unwrap();
        assert!((r3.inductance_change_h / half.inductance_change_h - 1.0).abs() < 0.02);
        // Foil: vanishing thickness, vanishing effect.
        let foil = Plate {
            thickness_m: Some(1e-9),
            ..Plate::aluminium()
        };
        let rf = plate_response(&coil, &foil, gap, f).unwrap();
        assert!(rf.inductance_change_h.abs() < 1e-4 * half.inductance_change_h.abs());
        // Thin sheet (T = δ/100): R = −jωµ0σT/(2α + jωµ0σT) (the
        // T → 0 limit of R(α), derived here).
        let t = Plate::aluminium().skin_depth_m(f) / 100.0;
        let sheet = Plate {
            thickness_m: Some(t),
            ..Plate::aluminium()
        };
        let r = plate_response(&coil, &sheet, gap, f).unwrap();
        let kt = 2.0 * PI * f * MU0_H_PER_M * ALUMINIUM_CONDUCTIVITY_S_PER_M * t;
        let thin = spectral_integral(&coil, gap, &[kt], |alpha| {
            let j = Complex { re: 0.0, im: kt };
            j.scale(-1.0).div(Complex::real(2.0 * alpha).add(j))
        })
        .unwrap();
        assert!(
            (r.inductance_change_h / thin.re - 1.0).abs() < 0.02,
            "{} vs {}",
            r.inductance_change_h,
            thin.re
        );
        let dr_thin = -2.0 * PI * f * thin.im;
        assert!((r.resistance_change_ohm / dr_thin - 1.0).abs() < 0.02);
    }

    #[test]
    fn steel_turns_from_raising_to_lowering_l() {
        // σ = 5 MS/m, µr = 100 (a generic carbon steel; numbers chosen for
        // the test, not a material datum): L rises at 10 Hz, falls at 10 MHz.
        let coil = demo();
        let steel = Plate {
            conductivity_s_per_m: 5e6,
            relative_permeability: 100.0,
            thickness_m: None,
        };
        let low = plate_response(&coil, &steel, 1e-3, 10.0).unwrap();
        let high = plate_response(&coil, &steel, 1e-3, 10e6).unwrap();
        assert!(low.inductance_change_h > 0.0);
        assert!(high.inductance_change_h < 0.0);
        assert!(low.resistance_change_ohm >= 0.0 && high.resistance_change_ohm > 0.0);
        // The magnetostatic limit at f = 0 is the permeable mirror.
        let dc = plate_response(&coil, &steel, 1e-3, 0.0).unwrap();
        let expect = permeable_half_space_change_h(&coil, 1e-3, 100.0);
        assert!((dc.inductance_change_h / expect - 1.0).abs() < 1e-9);
    }

    #[test]
    fn refusals() {
        let coil = demo();
        let bad = Plate {
            conductivity_s_per_m: -1.0,
            ..Plate::aluminium()
        };
        assert!(plate_response(&coil, &bad, 1e-3, 1e6).is_err());
        let bad = Plate {
            relative_permeability: 0.5,
            ..Plate::aluminium()
        };
        assert!(plate_response(&coil, &bad, 1e-3, 1e6).is_err());
        let bad = Plate {
            thickness_m: Some(0.0),
            ..Plate::aluminium()
        };
        assert!(plate_response(&coil, &bad, 1e-3, 1e6).is_err());
        assert!(plate_response(&coil, &Plate::aluminium(), 0.0, 1e6).is_err());
        assert!(plate_response(&coil, &Plate::aluminium(), 1e-3, f64::NAN).is_err());
        assert!(plate_response(&coil, &Plate::aluminium(), 1e-9, 1e6).is_err());
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(24))]
        /// Passive and bounded: a non-ferrous plate lowers L by less than a
        /// perfect mirror and adds loss; closer means a larger effect.
        #[test]
        fn non_ferrous_plate_is_passive(
            r_mm in 2.0f64..20.0,
            gap_rel in 0.02f64..2.0,
            sigma in 1e6f64..6e7,
            f in 1e3f64..1e7,
            t_rel in prop::option::of(0.01f64..10.0),
        ) {
            let r = r_mm * 1e-3;
            let coil = FilamentCoil::new(
                vec![Loop { radius_m: r, z_m: 0.0 }, Loop { radius_m: 0.6 * r, z_m: 0.0 }],
                1e-5,
            ).unwrap();
            let mut plate = Plate { conductivity_s_per_m: sigma, relative_permeability: 1.0, thickness_m: None };
            plate.thickness_m = t_rel.map(|t| t * plate.skin_depth_m(f));
            let gap = gap_rel * r;
            let a = plate_response(&coil, &plate, gap, f).unwrap();
            prop_assert!(a.inductance_change_h < 0.0);
            prop_assert!(a.mirror_fraction > 0.0 && a.mirror_fraction < 1.0 + 1e-9);
            prop_assert!(a.resistance_change_ohm > 0.0);
            let b = plate_response(&coil, &plate, gap * 1.5, f).unwrap();
            prop_assert!(b.inductance_change_h > a.inductance_change_h);
        }
    }
}
