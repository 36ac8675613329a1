//! Tank geometry: level → volume, and the capacitance of a coaxial level
//! probe.
//!
//! Two halves:
//!
//! - **Design time, `f64`** (host, or firmware set-up in soft float): tank
//!   volume against level for an upright cylinder, a rectangular tank and a
//!   horizontal cylinder (with the inverse, volume → level), and the
//!   capacitance of a coaxial probe, dry, wet and partially immersed.
//! - **Firmware, integer**: a [`VolumeTable`] turns a level (an `i32` in the
//!   reader's output units) into a volume (an `i32` in the table's units)
//!   through a monotone [`Curve`]. A table comes either from a geometry,
//!   sampled on the host by [`VolumeTable::sample`], or from a strapping table
//!   (level → volume pairs of a tank calibration certificate) by
//!   [`VolumeTable::from_strapping`].
//!
//! All `f64` quantities are SI: metre (m), square metre (m²), cubic metre
//! (m³), farad (F). The unit is part of each name. Math goes through
//! [`libm`], so the module builds without `std`.
//!
//! # Invalid inputs
//!
//! No function panics. The `f64` functions evaluate their formula without
//! validating the tank's dimensions: zero, negative, NaN or infinite
//! dimensions give whatever IEEE 754 arithmetic gives. A **level** outside
//! the tank is clamped to it (below the bottom: empty; above the top: full)
//! and a **volume** outside 0…full is clamped the same way; a NaN level or
//! volume gives NaN. [`VolumeTable::sample`] validates everything and
//! returns a [`TableError`].
//!
//! # Sources
//!
//! - Horizontal cylinder (circular segment): A(h) = R²·acos((R − h)/R) −
//!   (R − h)·√(2Rh − h²), V = A·L for 0 ≤ h ≤ 2R (CRC Concise Encyclopedia
//!   of Mathematics, "Cylindrical segment"; published, quoted;
//!   docs/references.md, Horizontal tank cases). Upright cylinder V = πR²h and
//!   prism V = A·h: standard.
//! - Coaxial capacitor C = 2π·ε0·εr·ℓ / ln(b/a) (standard, published, quoted;
//!   docs/references.md, Coaxial capacitor cases); the partially immersed probe
//!   as two such capacitors in parallel, C(h) = C′_gas·(H − h) + C′_liquid·h
//!   (docs/references.md, Coaxial capacitor cases, case 7d). ε0 =
//!   8.8541878128×10⁻¹² F/m (CODATA 2018, the value the reference list uses
//!   throughout): [`VACUUM_PERMITTIVITY_F_PER_M`].
//!
//! # Level → volume table on the firmware
//!
//! [`Curve`] maps a [`Shift`] (Q23.40) to an `i32`. A [`VolumeTable`] holds a
//! curve whose x axis is the **level**, carried as the raw Q23.40 value
//! `level · 2^32` ([`level_to_shift`]; as a shift that reads `level / 256`).
//! Every `i32` level fits (|level · 2^32| ≤ 2^63), and with this scale the
//! curve's node derivatives in "output units per unit shift, Q16" are exactly
//! the table's derivatives dV/dlevel in **volume units per level unit,
//! Q24**, up to 2^39 units per level unit. (With the level as the raw value
//! itself, the derivative would have to stay below 2^7 units per level
//! unit.) Per reading: [`VolumeTable::volume`] is one [`Curve::eval`]: a
//! binary search, then one multiply (linear) or four (cubic), no division.
//!
//! ## Error of a sampled horizontal-cylinder table
//!
//! [`VolumeTable::sample`] places the nodes of a horizontal cylinder at
//! cosine (Chebyshev–Lobatto) spacing, level_i = top · sin²(π·i / (2(n − 1))),
//! rounded to whole level units, and uses the monotone cubic with the
//! Fritsch–Butland derivatives of [`pchip_derivatives`]. Why cosine: the
//! piecewise cubic's local error goes as w³·|V‴| on a segment of width w, and
//! here V′ ∝ √(h(2R − h)), so |V‴| ∝ (h(2R − h))^(−3/2); equal error per
//! segment asks for a node density ∝ |V‴|^(1/3) ∝ (h(2R − h))^(−1/2), which is
//! the cosine spacing: dense at the bottom and the top, where A(h) ∝ h^1.5.
//!
//! Measured over a dense grid (100 000 points) against the exact formula, as
//! a fraction of the full volume, for the curve's `f64` twin with exact node
//! values (the interpolation error alone; test
//! `sampled_table_error_is_as_documented`):
//!
//! | nodes | cosine spacing | uniform spacing (for comparison) |
//! |---|---|---|
//! | 16 | 1.72e-4 | 1.77e-3 |
//! | 32 | 2.05e-5 | 5.89e-4 |
//! | 64 | 2.47e-6 | 2.02e-4 |
//!
//! That is about 0.62/(n − 1)³. Linear interpolation at the same nodes is
//! far worse (1.72e-3, 4.07e-4, 9.89e-5): use the cubic for this shape.
//!
//! The fixed-point table works on whole level units: its node levels are
//! the cosine levels rounded (and nudged apart where the span is short),
//! its node volumes are rounded to whole volume units, the derivatives come
//! from the rounded nodes, and its output is rounded. With `top` the level of
//! the full tank in level units, the table stays within
//!
//! |V_table(level) − V(level)| ≤ ([`horizontal_cylinder_table_bound`]) ·
//! V_full + 2 volume units, the bound being 0.66/(n − 1)³ + 0.012/top,
//!
//! at every level, for every n from 2 to 64, level span and volume scale
//! (property test `sampled_table_within_stated_bound`). The first term is the
//! interpolation error above, with a margin (16 nodes: 1.96e-4, 32 nodes:
//! 2.21e-5, 64 nodes: 2.64e-6 of the full volume). The second is the
//! rounding of the node levels, measured at most 0.011·V_full/top for any
//! n and span: about 1 % of the volume of one level unit at mid-depth, so it
//! only shows when the span is short. The last covers the rounding of the
//! node volumes, its effect on the derivatives, and of the output: measured
//! at most 1.41 units in a development sweep of 40 000 random tables. The
//! cubic's 16-bit Hermite parameter adds at most 2^-16 of a segment's step
//! and end slopes ([`Curve::error_bound`]; about 1.4e-6·V_full in the
//! widest, mid-depth segment of 64 nodes), which the first term's margin
//! takes where segments are wide: the property test holds the whole bound
//! over 5 000 random tables per run (100 000 in a development run), and
//! the dense grid below is measured with it. For
//! the tank of docs/references.md, Horizontal tank cases, 12c (R = 1 m, L = 4
//! m), level in 0.1 mm (top = 20 000), volume in mL (V_full = 12 566 371 mL),
//! measured at every one of the 20 001 levels (test
//! `published_tank_table_dense_grid`):
//!
//! | nodes | measured max error | stated bound |
//! |---|---|---|
//! | 16 | 2165 mL (1.72e-4 of full) | 2467 mL |
//! | 32 | 262 mL (2.08e-5) | 288 mL |
//! | 64 | 33.6 mL (2.67e-6) | 42.7 mL |
//!
//! An upright cylinder or a rectangular tank is linear in the level: nodes
//! are evenly spaced and the only error is the rounding (≤ 1 unit, plus the
//! curve's own 2^-28 term).
//!
//! # Example
//!
//! ```
//! use lc_core::curve::{CurveStatus, Interpolation};
//! use lc_core::geometry::{self, TankShape, VolumeTable};
//!
//! // A horizontal tank, R = 1 m, L = 4 m, filled to a quarter of its depth.
//! let v_m3 = geometry::horizontal_cylinder_volume_m3(1.0, 4.0, 0.5);
//! assert!((v_m3 - 2.456_739).abs() < 5e-7);
//! assert!((geometry::horizontal_cylinder_level_m(1.0, 4.0, v_m3) - 0.5).abs() < 1e-12);
//!
//! // Host: sample it into 64 nodes, level in 0.1 mm, volume in litres.
//! let shape = TankShape::HorizontalCylinder { radius_m: 1.0, length_m: 4.0 };
//! let table = VolumeTable::sample(&shape, 10_000.0, 1_000.0, 64, Interpolation::MonotoneCubic)
//!     .unwrap();
//! // Firmware: the reader says 5000 (0.5 m); the table says 2457 L.
//! let v = table.volume(5_000);
//! assert_eq!((v.value, v.status), (2_457, CurveStatus::InRange));
//!
//! // A coaxial probe, a = 5 mm, b = 20 mm, 1 m long, half in water (εr 80.1).
//! let probe = geometry::CoaxialProbe { length_m: 1.0, inner_radius_m: 0.005, outer_radius_m: 0.020 };
//! let c_f = probe.immersed_capacitance_f(0.5, 80.1, 1.0);
//! assert!((c_f * 1e12 - 1627.286).abs() < 5e-4);
//! assert!((probe.level_m(c_f, 80.1, 1.0) - 0.5).abs() < 1e-12);
//! ```

use crate::curve::MAX_NODES;
use crate::curve::{pchip_derivatives, Curve, CurveError, CurveValue, Interpolation, Node};
use crate::shift::Shift;
use core::f64::consts::PI;
use core::fmt;

/// Vacuum permittivity ε0 = 8.8541878128×10⁻¹² F/m (CODATA 2018; the value
/// every check uses: docs/references.md, How sure each value is).
pub const VACUUM_PERMITTIVITY_F_PER_M: f64 = 8.854_187_812_8e-12;

/// `x` limited to `lo..=hi`; NaN stays NaN. Unlike `f64::clamp` it never
/// panics (bounds that are NaN or crossed just pass through the comparisons).
fn clamp_f64(x: f64, lo: f64, hi: f64) -> f64 {
    if x < lo {
        lo
    } else if x > hi {
        hi
    } else {
        x
    }
}

// ---------------------------------------------------------------------------
// Upright cylinder and rectangular tank
// ---------------------------------------------------------------------------

/// Volume of an upright cylinder filled to `level_m`: V = π·R²·h, in m³.
///
/// Standard (docs/references.md, Horizontal tank cases: "a vertical tank is V =
/// πR²h"). The level is clamped below at 0 (there is no top here: the caller
/// knows the height).
pub fn vertical_cylinder_volume_m3(radius_m: f64, level_m: f64) -> f64 {
    PI * radius_m * radius_m * clamp_f64(level_m, 0.0, f64::INFINITY)
}

/// Volume of a tank with a constant horizontal cross-section of
/// `base_area_m2` (a rectangular tank: length × width) filled to `level_m`:
/// V = A·h, in m³. Standard. The level is clamped below at 0.
pub fn rectangular_tank_volume_m3(base_area_m2: f64, level_m: f64) -> f64 {
    base_area_m2 * clamp_f64(level_m, 0.0, f64::INFINITY)
}

// ---------------------------------------------------------------------------
// Horizontal cylinder
// ---------------------------------------------------------------------------

/// θ − sin θ for 0 ≤ θ ≤ π, to full relative precision: the Taylor series
/// θ³/3! − θ⁵/5! + … below θ = 1 (ten terms: the next is below 2^-60 of the
/// sum), the direct difference above (relative error ≤ 6ε/θ² ≤ 6ε there).
fn theta_minus_sin(theta: f64) -> f64 {
    if theta < 1.0 {
        let t2 = theta * theta;
        let mut term = theta * t2 / 6.0;
        let mut sum = 0.0;
        let mut k = 3.0;
        for _ in 0..10 {
            sum += term;
            term *= -t2 / ((k + 1.0) * (k + 2.0));
            k += 2.0;
        }
        sum
    } else {
        theta - libm::sin(theta)
    }
}

/// Fill fraction V/V_full of a horizontal cylinder filled to the depth
/// fraction `depth_fraction` = h/(2R), clamped to 0…1 (NaN gives NaN).
///
/// The circular-segment formula of docs/references.md, Horizontal tank cases,
/// A(h) = R²·acos((R − h)/R) − (R − h)·√(2Rh − h²), evaluated in the equivalent
/// form A = (R²/2)·(θ − sin θ) with θ = 2·acos(1 − h/R) = 4·asin(√(h/2R)), for
/// h ≤ R, and A(h) = πR² − A(2R − h) above. The literal form loses relative
/// precision near the bottom (both of its terms grow as √h and cancel to
/// h^1.5); this one keeps it at every depth. Independent of R and L.
pub fn horizontal_cylinder_fill_fraction(depth_fraction: f64) -> f64 {
    let x = clamp_f64(depth_fraction, 0.0, 1.0);
    if x > 0.5 {
        // 1 − x is exact for 0.5 ≤ x ≤ 1 (Sterbenz).
        return 1.0 - lower_fill_fraction(1.0 - x);
    }
    lower_fill_fraction(x)
}

/// Fill fraction for 0 ≤ x ≤ 0.5 (or NaN). Limited to ½, which it can
/// exceed by an ulp at x = ½ (θ rounds to just above π): so the two halves
/// meet monotonically and f(½) = ½ exactly.
fn lower_fill_fraction(x: f64) -> f64 {
    let theta = 4.0 * libm::asin(libm::sqrt(x));
    clamp_f64(theta_minus_sin(theta) / (2.0 * PI), 0.0, 0.5)
}

/// Depth fraction h/(2R) of a horizontal cylinder holding the fill fraction
/// `fill_fraction` = V/V_full, clamped to 0…1 (NaN gives NaN): the inverse
/// of [`horizontal_cylinder_fill_fraction`].
///
/// Bisection on 0…½ (the upper half by symmetry, x(q) = 1 − x(1 − q)), run
/// until the bracket is two neighbouring `f64` values: at most 1100 steps
/// (about 60 for any fraction above 1e-15), so the result is the depth
/// fraction to within one unit in the last place of the bracket, with no
/// convergence condition that could fail.
pub fn horizontal_cylinder_depth_fraction(fill_fraction: f64) -> f64 {
    if fill_fraction.is_nan() {
        return f64::NAN;
    }
    let q = clamp_f64(fill_fraction, 0.0, 1.0);
    if q > 0.5 {
        // 1 − q is exact for 0.5 ≤ q ≤ 1.
        return 1.0 - lower_depth_fraction(1.0 - q);
    }
    lower_depth_fraction(q)
}

/// Inverse of `lower_fill_fraction` for 0 ≤ q ≤ 0.5.
fn lower_depth_fraction(q: f64) -> f64 {
    let (mut lo, mut hi) = (0.0f64, 0.5f64);
    if q <= 0.0 {
        return 0.0;
    }
    if q >= 0.5 {
        return 0.5;
    }
    // f(lo) < q ≤ f(hi). Each step halves the bracket; from 0.5 down to the
    // smallest subnormal takes at most 1075 steps.
    for _ in 0..1100 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if lower_fill_fraction(mid) < q {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    // The closer of the two ends.
    if q - lower_fill_fraction(lo) <= lower_fill_fraction(hi) - q {
        lo
    } else {
        hi
    }
}

/// Cross-section A(h) of the liquid in a horizontal cylinder of radius
/// `radius_m` filled to `level_m` (a circular segment), in m²:
/// A(h) = R²·acos((R − h)/R) − (R − h)·√(2Rh − h²) for 0 ≤ h ≤ 2R
/// (docs/references.md, Horizontal tank cases; evaluated as in
/// [`horizontal_cylinder_fill_fraction`]). The level is clamped to 0…2R.
pub fn circular_segment_area_m2(radius_m: f64, level_m: f64) -> f64 {
    PI * radius_m * radius_m * horizontal_cylinder_fill_fraction(level_m / (2.0 * radius_m))
}

/// Volume of a horizontal cylinder (flat ends) of radius `radius_m` and
/// length `length_m` filled to `level_m`: V = A(h)·L, in m³, with A(h) of
/// [`circular_segment_area_m2`]. The level is clamped to 0…2R: below the
/// bottom the tank is empty, above the top full (πR²L).
pub fn horizontal_cylinder_volume_m3(radius_m: f64, length_m: f64, level_m: f64) -> f64 {
    circular_segment_area_m2(radius_m, level_m) * length_m
}

/// Level of a horizontal cylinder holding `volume_m3`: the inverse of
/// [`horizontal_cylinder_volume_m3`], in m. The volume is clamped to
/// 0…πR²L. Bisection with a bounded number of steps
/// ([`horizontal_cylinder_depth_fraction`]): never fails to return.
pub fn horizontal_cylinder_level_m(radius_m: f64, length_m: f64, volume_m3: f64) -> f64 {
    let full_m3 = PI * radius_m * radius_m * length_m;
    2.0 * radius_m * horizontal_cylinder_depth_fraction(volume_m3 / full_m3)
}

// ---------------------------------------------------------------------------
// Tank shapes
// ---------------------------------------------------------------------------

/// A tank's shape and size, with the level measured from its lowest point.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum TankShape {
    /// Upright cylinder: V = πR²h for 0 ≤ h ≤ height.
    VerticalCylinder {
        /// Inner radius, m.
        radius_m: f64,
        /// Height of the wall (the top level), m.
        height_m: f64,
    },
    /// Rectangular tank (any constant cross-section): V = A·h for
    /// 0 ≤ h ≤ height.
    Rectangular {
        /// Inner base area (length × width), m².
        base_area_m2: f64,
        /// Height of the wall (the top level), m.
        height_m: f64,
    },
    /// Horizontal cylinder with flat ends: V = A(h)·L for 0 ≤ h ≤ 2R.
    HorizontalCylinder {
        /// Inner radius, m.
        radius_m: f64,
        /// Inner length, m.
        length_m: f64,
    },
}

/// How sampled nodes are spread over the level span.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Spacing {
    Uniform,
    Cosine,
}

impl TankShape {
    /// The top level (full tank), m.
    pub fn height_m(&self) -> f64 {
        match *self {
            TankShape::VerticalCylinder { height_m, .. } => height_m,
            TankShape::Rectangular { height_m, .. } => height_m,
            TankShape::HorizontalCylinder { radius_m, .. } => 2.0 * radius_m,
        }
    }

    /// Volume of the full tank, m³.
    pub fn full_volume_m3(&self) -> f64 {
        match *self {
            TankShape::VerticalCylinder { radius_m, height_m } => {
                vertical_cylinder_volume_m3(radius_m, height_m)
            }
            TankShape::Rectangular {
                base_area_m2,
                height_m,
            } => rectangular_tank_volume_m3(base_area_m2, height_m),
            TankShape::HorizontalCylinder { radius_m, length_m } => {
                PI * radius_m * radius_m * length_m
            }
        }
    }

    /// Volume at `level_m`, m³; the level is clamped to 0…[`height_m`](Self::height_m).
    pub fn volume_m3(&self, level_m: f64) -> f64 {
        let h = clamp_f64(level_m, 0.0, self.height_m());
        match *self {
            TankShape::VerticalCylinder { radius_m, .. } => {
                vertical_cylinder_volume_m3(radius_m, h)
            }
            TankShape::Rectangular { base_area_m2, .. } => {
                rectangular_tank_volume_m3(base_area_m2, h)
            }
            TankShape::HorizontalCylinder { radius_m, length_m } => {
                horizontal_cylinder_volume_m3(radius_m, length_m, h)
            }
        }
    }

    /// Level holding `volume_m3`, m; the volume is clamped to
    /// 0…[`full_volume_m3`](Self::full_volume_m3). Closed form for the
    /// upright shapes, bounded bisection for the horizontal cylinder.
    pub fn level_m(&self, volume_m3: f64) -> f64 {
        let v = clamp_f64(volume_m3, 0.0, self.full_volume_m3());
        match *self {
            TankShape::VerticalCylinder { radius_m, .. } => v / (PI * radius_m * radius_m),
            TankShape::Rectangular { base_area_m2, .. } => v / base_area_m2,
            TankShape::HorizontalCylinder { radius_m, length_m } => {
                horizontal_cylinder_level_m(radius_m, length_m, v)
            }
        }
    }

    /// `true` when every dimension is finite and above zero (and the full
    /// volume is finite).
    pub fn is_valid(&self) -> bool {
        let ok = |x: f64| x.is_finite() && x > 0.0;
        let dims = match *self {
            TankShape::VerticalCylinder { radius_m, height_m } => ok(radius_m) && ok(height_m),
            TankShape::Rectangular {
                base_area_m2,
                height_m,
            } => ok(base_area_m2) && ok(height_m),
            TankShape::HorizontalCylinder { radius_m, length_m } => ok(radius_m) && ok(length_m),
        };
        dims && ok(self.height_m()) && ok(self.full_volume_m3())
    }

    /// Node spacing that keeps the interpolation error small: cosine for the
    /// horizontal cylinder (see the module docs), even for the linear shapes.
    fn spacing(&self) -> Spacing {
        match self {
            TankShape::HorizontalCylinder { .. } => Spacing::Cosine,
            _ => Spacing::Uniform,
        }
    }
}

// ---------------------------------------------------------------------------
// Coaxial level probe
// ---------------------------------------------------------------------------

/// Capacitance per unit length of a coaxial capacitor, inner radius a, outer
/// radius b, filled with a dielectric of relative permittivity εr:
/// C′ = 2π·ε0·εr / ln(b/a), in F/m. Standard (published, quoted)
/// (docs/references.md, Coaxial capacitor cases), with ε0 =
/// [`VACUUM_PERMITTIVITY_F_PER_M`].
pub fn coaxial_capacitance_per_metre_f_per_m(
    inner_radius_m: f64,
    outer_radius_m: f64,
    relative_permittivity: f64,
) -> f64 {
    2.0 * PI * VACUUM_PERMITTIVITY_F_PER_M * relative_permittivity
        / libm::log(outer_radius_m / inner_radius_m)
}

/// Capacitance of a coaxial capacitor of length ℓ: C = 2π·ε0·εr·ℓ / ln(b/a),
/// in F (docs/references.md, Coaxial capacitor cases; end effects neglected).
pub fn coaxial_capacitance_f(
    length_m: f64,
    inner_radius_m: f64,
    outer_radius_m: f64,
    relative_permittivity: f64,
) -> f64 {
    coaxial_capacitance_per_metre_f_per_m(inner_radius_m, outer_radius_m, relative_permittivity)
        * length_m
}

/// A coaxial level probe: a rod of radius a inside a tube of radius b,
/// standing upright, its lower end at level 0.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CoaxialProbe {
    /// Active length H, m.
    pub length_m: f64,
    /// Outer radius a of the inner conductor, m.
    pub inner_radius_m: f64,
    /// Inner radius b of the outer conductor, m.
    pub outer_radius_m: f64,
}

impl CoaxialProbe {
    /// Capacitance per metre filled with relative permittivity εr, F/m.
    pub fn capacitance_per_metre_f_per_m(&self, relative_permittivity: f64) -> f64 {
        coaxial_capacitance_per_metre_f_per_m(
            self.inner_radius_m,
            self.outer_radius_m,
            relative_permittivity,
        )
    }

    /// Capacitance filled over its whole length with relative permittivity
    /// εr, F.
    pub fn capacitance_f(&self, relative_permittivity: f64) -> f64 {
        self.capacitance_per_metre_f_per_m(relative_permittivity) * self.length_m
    }

    /// Capacitance with liquid up to `level_m` and gas (vapour, air) above:
    /// two coaxial capacitors in parallel, C(h) = C′_gas·(H − h) +
    /// C′_liquid·h (docs/references.md, Coaxial capacitor cases, case 7d), in
    /// F. The level is clamped to 0…H. Air is εr ≈ 1.0006 (common practice);
    /// the reference checks use 1.0.
    pub fn immersed_capacitance_f(
        &self,
        level_m: f64,
        liquid_permittivity: f64,
        gas_permittivity: f64,
    ) -> f64 {
        let h = clamp_f64(level_m, 0.0, self.length_m);
        self.capacitance_per_metre_f_per_m(gas_permittivity) * (self.length_m - h)
            + self.capacitance_per_metre_f_per_m(liquid_permittivity) * h
    }

    /// Level from a measured probe capacitance: the inverse of
    /// [`immersed_capacitance_f`](Self::immersed_capacitance_f),
    /// h = (C − C′_gas·H) / (C′_liquid − C′_gas), in m, clamped to 0…H.
    /// Equal permittivities give NaN: the level is then not observable.
    pub fn level_m(
        &self,
        capacitance_f: f64,
        liquid_permittivity: f64,
        gas_permittivity: f64,
    ) -> f64 {
        let gas = self.capacitance_per_metre_f_per_m(gas_permittivity);
        let contrast = self.capacitance_per_metre_f_per_m(liquid_permittivity) - gas;
        if contrast == 0.0 {
            return f64::NAN;
        }
        let h = (capacitance_f - gas * self.length_m) / contrast;
        clamp_f64(h, 0.0, self.length_m)
    }
}

// ---------------------------------------------------------------------------
// Firmware: level → volume table
// ---------------------------------------------------------------------------

/// Fractional bits of the level on a [`VolumeTable`]'s curve axis: the level
/// `l` (output units) is the raw Q23.40 shift `l · 2^32`.
pub const LEVEL_FRAC_BITS: u32 = 32;

/// The curve axis value of a level: `Shift::from_raw_q40(level · 2^32)`.
/// Exact for every `i32` (|level · 2^32| ≤ 2^63).
#[inline]
pub const fn level_to_shift(level: i32) -> Shift {
    // i32 → i64 widening is exact; the product stays within i64 (−2^63 for
    // i32::MIN, below 2^63 − 2^32 for i32::MAX), so the shift loses no bit.
    Shift::from_raw_q40((level as i64) << LEVEL_FRAC_BITS)
}

/// The level on a curve axis value, rounded down to a whole level unit
/// (exact for values from [`level_to_shift`]).
#[inline]
pub const fn shift_to_level(s: Shift) -> i32 {
    // An arithmetic shift by 32 of an i64 lies in i32's range: exact.
    (s.raw_q40() >> LEVEL_FRAC_BITS) as i32
}

/// One row of a level → volume table (a strapping table row, or a node of a
/// sampled one), both in the reader's output units.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LevelVolume {
    /// Level, output units.
    pub level: i32,
    /// Volume at that level, output units.
    pub volume: i32,
}

impl LevelVolume {
    /// A row.
    pub const fn new(level: i32, volume: i32) -> Self {
        Self { level, volume }
    }
}

/// Why a table could not be sampled from a geometry.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum TableError {
    /// A tank dimension is zero, negative, NaN or infinite.
    BadGeometry,
    /// A scale (level units per metre, volume units per m³) is zero,
    /// negative, NaN or infinite.
    BadScale,
    /// The tank's height is below one level unit or above `i32::MAX` units.
    LevelOutOfRange,
    /// The full volume exceeds `i32::MAX` volume units.
    VolumeOutOfRange,
    /// The curve refused the nodes (node count, or a segment too steep for
    /// the fixed-point path: use more nodes or coarser volume units).
    Curve(CurveError),
}

impl From<CurveError> for TableError {
    fn from(e: CurveError) -> Self {
        TableError::Curve(e)
    }
}

impl fmt::Display for TableError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            TableError::BadGeometry => f.write_str("tank dimensions must be finite and above zero"),
            TableError::BadScale => f.write_str("table scales must be finite and above zero"),
            TableError::LevelOutOfRange => {
                f.write_str("tank height must be 1 to 2^31 - 1 level units")
            }
            TableError::VolumeOutOfRange => {
                f.write_str("full volume exceeds 2^31 - 1 volume units")
            }
            TableError::Curve(e) => write!(f, "volume table: {e}"),
        }
    }
}

impl core::error::Error for TableError {
    fn source(&self) -> Option<&(dyn core::error::Error + 'static)> {
        match self {
            TableError::Curve(e) => Some(e),
            _ => None,
        }
    }
}

/// Error bound of a horizontal-cylinder table sampled by
/// [`VolumeTable::sample`] (monotone cubic) with `nodes` nodes and its top
/// level at `top_level` units, as a fraction of the full volume:
/// 0.66/(n − 1)³ + 0.012/top (see the module docs). The table's output is
/// within this fraction of the full volume, plus 2 volume units, of the
/// exact volume at every level. Pass the table's [`VolumeTable::len`] (it may
/// be below the count asked for when the span is short). `nodes` below 2
/// counts as 2, `top_level` below 1 as 1.
pub fn horizontal_cylinder_table_bound(nodes: usize, top_level: i32) -> f64 {
    // usize → f64 is exact below 2^53; larger counts only shrink the bound.
    let segments = nodes.max(2) as f64 - 1.0;
    0.66 / (segments * segments * segments) + 0.012 / f64::from(top_level.max(1))
}

/// A level → volume table for the firmware: a monotone (non-decreasing)
/// [`Curve`] whose axis is the level (see [`level_to_shift`]).
///
/// Build it on the host ([`sample`](Self::sample),
/// [`from_strapping`](Self::from_strapping)) or from a curve loaded from a
/// calibration image ([`from_curve`](Self::from_curve)); evaluate it per
/// reading with [`volume`](Self::volume).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct VolumeTable {
    /// When every node lies on a whole level ([`Curve::on_whole_levels`]),
    /// [`volume`](Self::volume) searches and interpolates in 32-bit words.
    curve: Curve,
}

/// Whole-unit rounding of a finite `f64` known to lie in `i32`'s range.
fn round_to_i32(x: f64) -> Option<i32> {
    let r = libm::round(x);
    if r.is_finite() && r >= f64::from(i32::MIN) && r <= f64::from(i32::MAX) {
        // In range and integral: the cast is exact.
        Some(r as i32)
    } else {
        None
    }
}

/// Node derivatives dV/dlevel (volume units per level unit) in Q24, the
/// curve's derivative format on the level axis.
fn derivatives_q24(points: &[LevelVolume]) -> Result<[i64; MAX_NODES], CurveError> {
    let n = points.len();
    let mut x = [0.0; MAX_NODES];
    let mut y = [0.0; MAX_NODES];
    for (i, p) in points.iter().enumerate().take(MAX_NODES) {
        x[i] = f64::from(p.level);
        y[i] = f64::from(p.volume);
    }
    let d = pchip_derivatives(x.get(..n).unwrap_or(&[]), y.get(..n).unwrap_or(&[]))
        .ok_or(CurveError::ShiftsNotIncreasing)?;
    let mut q = [0i64; MAX_NODES];
    for (qi, di) in q.iter_mut().zip(d.iter()).take(n) {
        let r = libm::round(di * 16_777_216.0);
        // |dV/dlevel| < 2^34 for i32 data (secants below 2^32, the
        // Fritsch–Butland means at most 3× a secant): well inside i64.
        if !(r.is_finite() && r.abs() < 9.0e18) {
            return Err(CurveError::SegmentTooSteep);
        }
        *qi = r as i64; // in range and integral: exact
    }
    Ok(q)
}

impl VolumeTable {
    /// Wrap a curve whose axis is the level ([`level_to_shift`]) and whose
    /// values are volumes: for a curve loaded from a calibration image.
    /// Refuses a falling curve ([`CurveError::NotMonotone`]).
    pub fn from_curve(curve: Curve) -> Result<Self, CurveError> {
        Self::check_rising(&curve)?;
        Ok(Self::of(curve))
    }

    /// The table of a checked curve.
    fn of(curve: Curve) -> Self {
        Self { curve }
    }

    fn check_rising(curve: &Curve) -> Result<(), CurveError> {
        if curve.is_empty() {
            Err(CurveError::TooFewNodes)
        } else if curve.is_rising() {
            Ok(())
        } else {
            Err(CurveError::NotMonotone)
        }
    }

    /// A table from strapping rows (level → volume, as from a tank
    /// calibration certificate), 2 to [`MAX_NODES`] rows. Levels must be
    /// strictly increasing ([`CurveError::ShiftsNotIncreasing`]) and volumes
    /// non-decreasing ([`CurveError::NotMonotone`]). With
    /// [`Interpolation::MonotoneCubic`] the node derivatives are the
    /// Fritsch–Butland ones of [`pchip_derivatives`] (computed here in
    /// `f64`: a host or set-up step).
    pub fn from_strapping(
        points: &[LevelVolume],
        interpolation: Interpolation,
    ) -> Result<Self, CurveError> {
        if points.len() < 2 {
            return Err(CurveError::TooFewNodes);
        }
        if points.len() > MAX_NODES {
            return Err(CurveError::TooManyNodes);
        }
        let mut nodes = [Node::default(); MAX_NODES];
        for (i, p) in points.iter().enumerate() {
            if let Some(prev) = i.checked_sub(1).and_then(|j| points.get(j)) {
                if p.level <= prev.level {
                    return Err(CurveError::ShiftsNotIncreasing);
                }
                if p.volume < prev.volume {
                    return Err(CurveError::NotMonotone);
                }
            }
            if let Some(slot) = nodes.get_mut(i) {
                *slot = Node::new(level_to_shift(p.level), p.volume);
            }
        }
        let nodes = nodes.get(..points.len()).unwrap_or(&[]);
        let curve = match interpolation {
            Interpolation::Linear => Curve::linear(nodes)?,
            Interpolation::MonotoneCubic => {
                let d = derivatives_q24(points)?;
                Curve::monotone_cubic(nodes, d.get(..points.len()).unwrap_or(&[]))?
            }
        };
        Ok(Self::of(curve))
    }

    /// Sample a tank shape into a table of at most `nodes` nodes (2 to
    /// [`MAX_NODES`]), on the host.
    ///
    /// - Level unit: `level_units_per_m` output units per metre, from the
    ///   tank's lowest point (level 0) to its top, round(height ·
    ///   level_units_per_m).
    /// - Volume unit: `volume_units_per_m3` output units per m³ (e.g. 1000
    ///   for litres); node volumes are rounded to nearest.
    /// - Node levels are whole level units: cosine spacing for a horizontal
    ///   cylinder, even spacing otherwise, rounded, and nudged apart where
    ///   rounding made two equal. When the tank spans fewer than `nodes`
    ///   level units every level is a node (the table is then exact at every
    ///   level up to the rounding of the volume).
    /// - `interpolation`: [`Interpolation::MonotoneCubic`] with
    ///   [`pchip_derivatives`] for a horizontal cylinder (error bound in the
    ///   module docs and [`horizontal_cylinder_table_bound`]); linear is exact
    ///   to the rounding for the upright shapes.
    /// - Size: the cubic path takes segments below 2^21 volume units (and
    ///   tangent terms likewise), the linear one below 2^30; beyond that
    ///   [`CurveError::SegmentTooSteep`]. For a horizontal cylinder with
    ///   cosine nodes that is a full volume up to about 2^20·(n − 1) units:
    ///   15.7 million with 16 nodes, 66 million with 64 (measured).
    pub fn sample(
        shape: &TankShape,
        level_units_per_m: f64,
        volume_units_per_m3: f64,
        nodes: usize,
        interpolation: Interpolation,
    ) -> Result<Self, TableError> {
        if !shape.is_valid() {
            return Err(TableError::BadGeometry);
        }
        let scale_ok = |k: f64| k.is_finite() && k > 0.0;
        if !(scale_ok(level_units_per_m) && scale_ok(volume_units_per_m3)) {
            return Err(TableError::BadScale);
        }
        if nodes < 2 {
            return Err(CurveError::TooFewNodes.into());
        }
        if nodes > MAX_NODES {
            return Err(CurveError::TooManyNodes.into());
        }
        let top = match round_to_i32(shape.height_m() * level_units_per_m) {
            Some(t) if t >= 1 => t,
            _ => return Err(TableError::LevelOutOfRange),
        };
        let full = shape.full_volume_m3() * volume_units_per_m3;
        if !(full.is_finite() && full <= f64::from(i32::MAX)) {
            return Err(TableError::VolumeOutOfRange);
        }
        // Node count: at most one node per level unit. top ≥ 1, so n ≥ 2;
        // the i32 → i64/u64 conversions below are widenings.
        let n = match usize::try_from(top) {
            Ok(t) => nodes.min(t.saturating_add(1)),
            Err(_) => nodes,
        };
        let last = n - 1; // n ≥ 2
        let spacing = shape.spacing();
        let mut levels = [0i64; MAX_NODES];
        let top_f = f64::from(top);
        // Exact conversion: last ≤ 63.
        let last_f = last as f64;
        for (i, l) in levels.iter_mut().enumerate().take(n) {
            let u = i as f64 / last_f; // i ≤ 63: exact
            let x = match spacing {
                Spacing::Uniform => u,
                Spacing::Cosine => {
                    let s = libm::sin(0.5 * PI * u);
                    s * s
                }
            };
            // 0 ≤ x ≤ 1 (to rounding), so the level lies in 0..=top.
            *l = i64::from(round_to_i32(clamp_f64(x, 0.0, 1.0) * top_f).unwrap_or(0));
        }
        // Ends exact; then strictly increasing: push duplicates up, then pull
        // the ones pushed past the top back down. With top ≥ n − 1 the result
        // satisfies 0 ≤ level_i ≤ top and level_i < level_{i+1}.
        levels[0] = 0;
        for i in 1..n {
            if levels[i] <= levels[i - 1] {
                levels[i] = levels[i - 1] + 1;
            }
        }
        levels[last] = i64::from(top);
        for i in (0..last).rev() {
            if levels[i] >= levels[i + 1] {
                levels[i] = levels[i + 1] - 1;
            }
        }
        let mut points = [LevelVolume::default(); MAX_NODES];
        for (p, &l) in points.iter_mut().zip(levels.iter()).take(n) {
            let level = i32::try_from(l).map_err(|_| TableError::LevelOutOfRange)?;
            let v = shape.volume_m3(f64::from(level) / level_units_per_m) * volume_units_per_m3;
            let volume = round_to_i32(v).ok_or(TableError::VolumeOutOfRange)?;
            *p = LevelVolume::new(level, volume);
        }
        Ok(Self::from_strapping(
            points.get(..n).unwrap_or(&[]),
            interpolation,
        )?)
    }

    /// The volume at `level` (both in output units), rounded to nearest;
    /// clamped to the first or last row outside the table, with the status
    /// saying so. The firmware path: one [`Curve::eval`], no division.
    #[inline]
    pub fn volume(&self, level: i32) -> CurveValue {
        // The 32-bit path when the nodes lie on whole levels (`whole`),
        // the general one otherwise: `eval_whole` picks.
        self.curve.view().eval_whole(level)
    }

    /// `f64` twin of [`volume`](Self::volume): the same curve evaluated in
    /// `f64`, unrounded, at a level that may be fractional.
    pub fn volume_f64(&self, level: f64) -> f64 {
        // level · 2^32 · 2^-40: an exact scaling by a power of two.
        self.curve.eval_f64(level / 256.0)
    }

    /// The underlying curve (level axis per [`level_to_shift`]), e.g. to
    /// write into a calibration image.
    pub fn curve(&self) -> &Curve {
        &self.curve
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.curve.len()
    }

    /// Always false: a table has at least two rows.
    pub fn is_empty(&self) -> bool {
        self.curve.is_empty()
    }

    /// Row `i`, if it exists.
    pub fn row(&self, i: usize) -> Option<LevelVolume> {
        self.curve
            .node(i)
            .map(|n| LevelVolume::new(shift_to_level(n.shift), n.value))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::curve::CurveStatus;
    use proptest::prelude::*;

    /// Compare against a value as printed in docs/references.md: 1e-9 relative
    /// (the formula tolerance of the reference list) plus half a step of the
    /// last printed digit, since the printed value is itself rounded.
    fn assert_printed(actual: f64, printed: f64, half_step: f64, what: &str) {
        let err = (actual - printed).abs();
        assert!(
            err <= 1e-9 * printed.abs() + half_step,
            "{what}: got {actual}, printed {printed}, err {err}"
        );
    }

    /// The circular segment exactly as docs/references.md, Horizontal tank
    /// cases prints it.
    fn literal_segment_area(r: f64, h: f64) -> f64 {
        r * r * ((r - h) / r).acos() - (r - h) * (2.0 * r * h - h * h).sqrt()
    }

    /// Cubic Hermite in f64 with the given node derivatives (test helper).
    fn hermite(x: &[f64], y: &[f64], d: &[f64], q: f64) -> f64 {
        let n = x.len();
        let mut i = 0;
        while i + 2 < n && x[i + 1] <= q {
            i += 1;
        }
        let h = x[i + 1] - x[i];
        let t = (q - x[i]) / h;
        let (t2, t3) = (t * t, t * t * t);
        y[i] * (2.0 * t3 - 3.0 * t2 + 1.0)
            + h * d[i] * (t3 - 2.0 * t2 + t)
            + y[i + 1] * (3.0 * t2 - 2.0 * t3)
            + h * d[i + 1] * (t3 - t2)
    }

    // ---- Published checks, docs/references.md, Horizontal tank cases ----

    /// docs/references.md, Horizontal tank cases, 12b: fill fraction against
    /// depth fraction, for any R and L. The three-decimal percentages are
    /// computed (the list's mpmath/numpy values); the one-decimal table (1.9,
    /// 5.2, 14.2, 19.6, 37.4, 50, 80.4, 94.8) is the source page's (published,
    /// quoted), beside the circular-segment formula of the CRC Concise
    /// Encyclopedia of Mathematics, "Cylindrical segment".
    #[test]
    fn fill_fraction_matches_published_table() {
        for (depth, computed, page) in [
            (0.05, 1.869, 1.9),
            (0.10, 5.204, 5.2),
            (0.20, 14.238, 14.2),
            (0.25, 19.550, 19.6),
            (0.40, 37.353, 37.4),
            (0.50, 50.0, 50.0),
            (0.75, 80.450, 80.4),
            (0.90, 94.796, 94.8),
        ] {
            let pct = 100.0 * horizontal_cylinder_fill_fraction(depth);
            assert_printed(pct, computed, 5e-4, "12b, three decimals");
            assert_printed(pct, page, 0.05, "12b, one decimal");
            // The same through the volume of a tank of any size.
            let v = horizontal_cylinder_volume_m3(0.7, 3.3, depth * 1.4);
            assert_printed(100.0 * v / (PI * 0.49 * 3.3), computed, 5e-4, "12b, volume");
        }
    }

    /// docs/references.md, Horizontal tank cases, 12c, R = 1 m, L = 4 m
    /// (computed).
    #[test]
    #[allow(clippy::approx_constant)] // 6.283185 is the printed value of V(1) = 2π
    fn horizontal_tank_matches_case_12c() {
        let (r, l) = (1.0, 4.0);
        assert_printed(
            circular_segment_area_m2(r, 0.5),
            0.614_185,
            5e-7,
            "12c A(0.5)",
        );
        assert_printed(
            horizontal_cylinder_volume_m3(r, l, 0.5),
            2.456_739,
            5e-7,
            "12c V(0.5)",
        );
        let pct = 100.0 * horizontal_cylinder_volume_m3(r, l, 0.5) / (4.0 * PI);
        assert_printed(pct, 19.5501, 5e-5, "12c 19.5501 %");
        assert_printed(
            horizontal_cylinder_volume_m3(r, l, 1.0),
            6.283_185,
            5e-7,
            "12c V(1)",
        );
        assert!((horizontal_cylinder_volume_m3(r, l, 1.0) - 2.0 * PI).abs() < 1e-14);
        assert_printed(
            horizontal_cylinder_volume_m3(r, l, 1.5),
            10.109_631,
            5e-7,
            "12c V(1.5)",
        );
        assert_printed(
            horizontal_cylinder_volume_m3(r, l, 2.0),
            12.566_371,
            5e-7,
            "12c V(2)",
        );
        assert_eq!(horizontal_cylinder_volume_m3(r, l, 2.0), 4.0 * PI);
        let shape = TankShape::HorizontalCylinder {
            radius_m: r,
            length_m: l,
        };
        assert_printed(shape.volume_m3(0.5), 2.456_739, 5e-7, "12c via TankShape");
        assert_eq!(shape.full_volume_m3(), 4.0 * PI);
        assert_eq!(shape.height_m(), 2.0);
    }

    /// docs/references.md, Horizontal tank cases, 12e: depth fraction for a
    /// fill fraction (computed, bisection).
    #[test]
    fn inverse_matches_case_12e() {
        for (fill, depth) in [
            (0.1, 0.156_476),
            (0.25, 0.298_014),
            (0.5, 0.5),
            (0.75, 0.701_986),
            (0.9, 0.843_524),
        ] {
            assert_printed(horizontal_cylinder_depth_fraction(fill), depth, 5e-7, "12e");
            // In metres, R = 1 m, L = 4 m.
            let h = horizontal_cylinder_level_m(1.0, 4.0, fill * 4.0 * PI);
            assert_printed(h, 2.0 * depth, 1e-6, "12e level");
        }
    }

    /// docs/references.md, Horizontal tank cases properties: V(2R − h) = V_full
    /// − V(h) and V(R) = V_full/2.
    #[test]
    fn symmetry_and_half() {
        let (r, l) = (0.2, 1.3);
        let full = PI * r * r * l;
        assert!((horizontal_cylinder_volume_m3(r, l, r) - full / 2.0).abs() <= 1e-16);
        assert_eq!(horizontal_cylinder_fill_fraction(0.5), 0.5);
        for i in 0..=400 {
            let h = 2.0 * r * f64::from(i) / 400.0;
            let v = horizontal_cylinder_volume_m3(r, l, h);
            let mirror = horizontal_cylinder_volume_m3(r, l, 2.0 * r - h);
            assert!(
                (v + mirror - full).abs() <= 1e-15 * full,
                "h = {h}: {}",
                (v + mirror - full) / full
            );
        }
    }

    /// The stable evaluation agrees with the formula as printed, and keeps
    /// its relative precision near the bottom, where A ≈ (4√2/3)·√R·h^1.5.
    #[test]
    fn stable_form_agrees_with_printed_formula() {
        for r in [0.01, 0.2, 1.0, 7.5] {
            for i in 0..=1000 {
                let h = 2.0 * r * f64::from(i) / 1000.0;
                let a = circular_segment_area_m2(r, h);
                let lit = literal_segment_area(r, h);
                assert!((a - lit).abs() <= 1e-14 * r * r, "R {r} h {h}: {a} {lit}");
            }
            for u in [1e-12, 1e-9, 1e-6] {
                let h = u * r;
                let lead = 4.0 * 2f64.sqrt() / 3.0 * r.sqrt() * h.powf(1.5);
                // Next term of the expansion is −(3/20)·u relative.
                let want = lead * (1.0 - 0.15 * u);
                let got = circular_segment_area_m2(r, h);
                assert!(
                    (got / want - 1.0).abs() < 1e-12,
                    "R {r} u {u}: {got} {want}"
                );
            }
        }
    }

    #[test]
    fn levels_and_volumes_outside_the_tank_clamp() {
        let (r, l) = (1.0, 4.0);
        assert_eq!(horizontal_cylinder_volume_m3(r, l, -0.5), 0.0);
        assert_eq!(horizontal_cylinder_volume_m3(r, l, 3.0), 4.0 * PI);
        assert_eq!(horizontal_cylinder_volume_m3(r, l, f64::INFINITY), 4.0 * PI);
        assert!(horizontal_cylinder_volume_m3(r, l, f64::NAN).is_nan());
        assert_eq!(horizontal_cylinder_level_m(r, l, -1.0), 0.0);
        assert_eq!(horizontal_cylinder_level_m(r, l, 100.0), 2.0);
        assert!(horizontal_cylinder_level_m(r, l, f64::NAN).is_nan());
        assert_eq!(horizontal_cylinder_depth_fraction(0.0), 0.0);
        assert_eq!(horizontal_cylinder_depth_fraction(1.0), 1.0);
        assert_eq!(vertical_cylinder_volume_m3(1.0, -2.0), 0.0);
        assert_eq!(rectangular_tank_volume_m3(3.0, -2.0), 0.0);
        let shape = TankShape::VerticalCylinder {
            radius_m: 0.5,
            height_m: 2.0,
        };
        assert_eq!(shape.volume_m3(5.0), PI * 0.25 * 2.0);
        assert_eq!(shape.level_m(1e9), 2.0);
        assert_eq!(shape.level_m(-1.0), 0.0);
    }

    /// Upright shapes: the formulas V = πR²h and V = A·h (docs/references.md,
    /// Horizontal tank cases: upright cylinder V = πR²h; the prism is common
    /// practice) and their
    /// inverses.
    #[test]
    fn upright_shapes() {
        assert_eq!(vertical_cylinder_volume_m3(1.0, 2.0), 2.0 * PI);
        assert_eq!(rectangular_tank_volume_m3(1.5, 2.0), 3.0);
        let v = TankShape::VerticalCylinder {
            radius_m: 0.3,
            height_m: 1.2,
        };
        let r = TankShape::Rectangular {
            base_area_m2: 0.8,
            height_m: 1.5,
        };
        for s in [v, r] {
            assert!(s.is_valid());
            for i in 0..=10 {
                let h = s.height_m() * f64::from(i) / 10.0;
                assert!((s.level_m(s.volume_m3(h)) - h).abs() < 1e-15);
            }
        }
        assert!(!TankShape::Rectangular {
            base_area_m2: 0.0,
            height_m: 1.0
        }
        .is_valid());
        assert!(!TankShape::HorizontalCylinder {
            radius_m: f64::NAN,
            length_m: 1.0
        }
        .is_valid());
    }

    // ---- Published checks, docs/references.md, Coaxial capacitor cases ----

    /// docs/references.md, Coaxial capacitor cases, 7a: ℓ = 1 m, a = 5 mm, b =
    /// 20 mm; air (εr 1) 40.1304 pF, water (εr 80.1, CRC Handbook 95th ed. 2014
    /// at 293.2 K) 3214.44 pF (computed). C = 2π·ε0·εr·ℓ/ln(b/a) (published,
    /// quoted).
    #[test]
    fn coaxial_matches_case_7a() {
        let c = |er| coaxial_capacitance_f(1.0, 0.005, 0.020, er) * 1e12;
        assert_printed(c(1.0), 40.1304, 5e-5, "7a air");
        assert_printed(c(80.1), 3214.44, 5e-3, "7a water");
        assert_eq!(VACUUM_PERMITTIVITY_F_PER_M, 8.854_187_812_8e-12);
        let per_m = coaxial_capacitance_per_metre_f_per_m(0.005, 0.020, 1.0);
        assert!((per_m * 1e12 - c(1.0)).abs() < 1e-12);
    }

    /// docs/references.md, Coaxial capacitor cases, 7b: Giancoli, *Physics for
    /// Scientists & Engineers*, 4th ed. (2008), ch. 24 problem (III): a 2.0 m
    /// probe, R_in = 4.5 mm, R_out = 5.0 mm, liquid nitrogen K = 1.4, vapour
    /// 1.0. Problem text (published, quoted); answers 1056.04 / 1478.46 pF
    /// (computed; the book's ≈ 1.1 / 1.5 nF is from memory).
    #[test]
    fn coaxial_matches_case_7b() {
        let probe = CoaxialProbe {
            length_m: 2.0,
            inner_radius_m: 0.0045,
            outer_radius_m: 0.0050,
        };
        assert_printed(probe.capacitance_f(1.0) * 1e12, 1056.04, 5e-3, "7b empty");
        assert_printed(probe.capacitance_f(1.4) * 1e12, 1478.46, 5e-3, "7b full");
        assert_printed(
            probe.immersed_capacitance_f(0.0, 1.4, 1.0) * 1e12,
            1056.04,
            5e-3,
            "7b",
        );
        assert_printed(
            probe.immersed_capacitance_f(2.0, 1.4, 1.0) * 1e12,
            1478.46,
            5e-3,
            "7b",
        );
        // Against the book's rounded answers, ±0.5 % as the list suggests
        // (from memory, so only a plausibility check).
        assert!((probe.capacitance_f(1.0) / 1.1e-9 - 1.0).abs() < 0.05);
        assert!((probe.capacitance_f(1.4) / 1.5e-9 - 1.0).abs() < 0.05);
    }

    /// docs/references.md, Coaxial capacitor cases, 7c: H = 1.5 m, R_in = 3.5
    /// mm, R_out = 4.0 mm, oil K = 2.2: full 1374.86 pF, empty 624.94 pF.
    /// Problem published, quoted; answers computed.
    #[test]
    fn coaxial_matches_case_7c() {
        let probe = CoaxialProbe {
            length_m: 1.5,
            inner_radius_m: 0.0035,
            outer_radius_m: 0.0040,
        };
        assert_printed(probe.capacitance_f(2.2) * 1e12, 1374.86, 5e-3, "7c full");
        assert_printed(probe.capacitance_f(1.0) * 1e12, 624.94, 5e-3, "7c empty");
    }

    /// docs/references.md, Coaxial capacitor cases, 7d (computed): the level
    /// probe as two coaxial capacitors in parallel, H = 1 m, a = 5 mm, b = 20
    /// mm, gas εr = 1. εr = 2.046 (n-hexadecane, CRC Handbook, a citable diesel
    /// surrogate) and 80.1 (water at 20 °C, CRC Handbook).
    #[test]
    fn immersed_probe_matches_case_7d() {
        let probe = CoaxialProbe {
            length_m: 1.0,
            inner_radius_m: 0.005,
            outer_radius_m: 0.020,
        };
        for (er, want) in [
            (2.046, [40.130, 50.624, 61.119, 82.107]),
            (80.1, [40.130, 833.708, 1627.286, 3214.442]),
        ] {
            for (h, w) in [0.0, 0.25, 0.5, 1.0].into_iter().zip(want) {
                let c = probe.immersed_capacitance_f(h, er, 1.0);
                assert_printed(c * 1e12, w, 5e-4, "7d");
                // The inverse recovers the level.
                assert!((probe.level_m(c, er, 1.0) - h).abs() < 1e-12);
            }
        }
        // Outside the probe the level clamps.
        assert_eq!(
            probe.immersed_capacitance_f(2.0, 80.1, 1.0),
            probe.capacitance_f(80.1)
        );
        assert_eq!(probe.level_m(1.0, 80.1, 1.0), 1.0);
        assert_eq!(probe.level_m(0.0, 80.1, 1.0), 0.0);
        // No contrast, no level (and no panic).
        assert!(probe.level_m(50e-12, 1.0, 1.0).is_nan());
    }

    // ---- Tables ----------------------------------------------------------

    /// The interpolation-error figures of the module docs: PCHIP on exact
    /// node values at cosine (and, for comparison, uniform) spacing, over a
    /// grid of 100 001 depth fractions, as a fraction of the full volume.
    #[test]
    fn sampled_table_error_is_as_documented() {
        let measure = |n: usize, cosine: bool, cubic: bool| {
            let x: Vec<f64> = (0..n)
                .map(|i| {
                    let u = i as f64 / (n - 1) as f64;
                    if cosine {
                        (0.5 * PI * u).sin().powi(2)
                    } else {
                        u
                    }
                })
                .collect();
            let y: Vec<f64> = x
                .iter()
                .map(|&v| horizontal_cylinder_fill_fraction(v))
                .collect();
            let d = pchip_derivatives(&x, &y).unwrap();
            let mut e = 0.0f64;
            for j in 0..=100_000 {
                let q = f64::from(j) / 100_000.0;
                let v = if cubic {
                    hermite(&x, &y, &d[..n], q)
                } else {
                    let mut i = 0;
                    while i + 2 < n && x[i + 1] <= q {
                        i += 1;
                    }
                    let t = (q - x[i]) / (x[i + 1] - x[i]);
                    y[i] + (y[i + 1] - y[i]) * t
                };
                e = e.max((v - horizontal_cylinder_fill_fraction(q)).abs());
            }
            e
        };
        // (nodes, cosine cubic, uniform cubic, cosine linear) as documented,
        // each to three significant digits.
        for (n, cos_doc, uni_doc, lin_doc) in [
            (16, 1.72e-4, 1.77e-3, 1.72e-3),
            (32, 2.05e-5, 5.89e-4, 4.07e-4),
            (64, 2.47e-6, 2.02e-4, 9.89e-5),
        ] {
            let cos = measure(n, true, true);
            let uni = measure(n, false, true);
            let lin = measure(n, true, false);
            println!("{n} nodes: cosine {cos:.4e}, uniform {uni:.4e}, cosine linear {lin:.4e}");
            for (got, doc) in [(cos, cos_doc), (uni, uni_doc), (lin, lin_doc)] {
                assert!((got / doc - 1.0).abs() < 0.005, "{n}: {got} vs {doc}");
            }
            // The stated bound's first term covers it.
            assert!(cos <= 0.66 / ((n - 1) as f64).powi(3));
        }
    }

    /// The 16-, 32- and 64-node tables of the docs/references.md, Horizontal
    /// tank cases, 12c tank (R = 1 m, L = 4 m), level in 0.1 mm, volume in mL,
    /// against the exact formula at every one of the 20 001 levels.
    #[test]
    fn published_tank_table_dense_grid() {
        let shape = TankShape::HorizontalCylinder {
            radius_m: 1.0,
            length_m: 4.0,
        };
        let full_ml = shape.full_volume_m3() * 1e6;
        for n in [16, 32, 64] {
            let t = VolumeTable::sample(&shape, 1e4, 1e6, n, Interpolation::MonotoneCubic).unwrap();
            assert_eq!(t.len(), n);
            assert_eq!(t.row(0), Some(LevelVolume::new(0, 0)));
            assert_eq!(t.row(n - 1), Some(LevelVolume::new(20_000, 12_566_371)));
            let bound = horizontal_cylinder_table_bound(n, 20_000) * full_ml + 2.0;
            let (mut worst, mut at) = (0.0f64, 0);
            let mut prev = i32::MIN;
            for level in 0..=20_000 {
                let exact = shape.volume_m3(f64::from(level) / 1e4) * 1e6;
                let v = t.volume(level);
                assert_eq!(v.status, CurveStatus::InRange);
                assert!(v.value >= prev, "not monotone at {level}");
                prev = v.value;
                let e = (f64::from(v.value) - exact).abs();
                if e > worst {
                    (worst, at) = (e, level);
                }
            }
            println!(
                "{n} nodes: max error {worst:.2} mL ({:.3e} of full) at level {at}; bound {bound:.2} mL",
                worst / full_ml
            );
            assert!(worst <= bound, "{n}: {worst} > {bound}");
            // The check values of case 12c through the table (±bound).
            for (level, want_ml) in [
                (5_000, 2_456_739.0),
                (10_000, 6_283_185.3),
                (15_000, 10_109_631.0),
            ] {
                let got = f64::from(t.volume(level).value);
                assert!(
                    (got - want_ml).abs() <= bound,
                    "{n} nodes at {level}: {got}"
                );
            }
        }
        // Outside the table: clamped, with the status.
        let t = VolumeTable::sample(&shape, 1e4, 1e6, 64, Interpolation::MonotoneCubic).unwrap();
        let below = t.volume(-1);
        assert_eq!((below.value, below.status), (0, CurveStatus::BelowRange));
        let above = t.volume(i32::MAX);
        assert_eq!(
            (above.value, above.status),
            (12_566_371, CurveStatus::AboveRange)
        );
    }

    /// Upright shapes are linear: two nodes (or any number) reproduce V = A·h
    /// to the rounding, 1 unit.
    #[test]
    fn upright_tables_are_exact_to_rounding() {
        let shape = TankShape::VerticalCylinder {
            radius_m: 0.6,
            height_m: 2.5,
        };
        for (n, interp) in [
            (2, Interpolation::Linear),
            (7, Interpolation::Linear),
            (7, Interpolation::MonotoneCubic),
        ] {
            // Level in mm, volume in 0.1 L.
            let t = VolumeTable::sample(&shape, 1e3, 1e4, n, interp).unwrap();
            for level in 0..=2_500 {
                let exact = shape.volume_m3(f64::from(level) / 1e3) * 1e4;
                let got = f64::from(t.volume(level).value);
                assert!((got - exact).abs() <= 1.01, "{n} {interp:?} {level}");
            }
        }
    }

    /// A short span: every level becomes a node.
    #[test]
    fn short_span_uses_every_level() {
        let shape = TankShape::HorizontalCylinder {
            radius_m: 0.2,
            length_m: 1.0,
        };
        // 400 mm diameter in cm: 40 levels, 41 nodes.
        let t = VolumeTable::sample(&shape, 100.0, 1e3, 64, Interpolation::MonotoneCubic).unwrap();
        assert_eq!(t.len(), 41);
        for level in 0..=40 {
            let row = t.row(usize::try_from(level).unwrap()).unwrap();
            assert_eq!(row.level, level);
            let exact = shape.volume_m3(f64::from(level) / 100.0) * 1e3;
            assert_eq!(row.volume, exact.round() as i32);
            assert_eq!(t.volume(level).value, row.volume);
        }
    }

    #[test]
    fn sampling_refuses_bad_input() {
        let good = TankShape::HorizontalCylinder {
            radius_m: 1.0,
            length_m: 4.0,
        };
        let cubic = Interpolation::MonotoneCubic;
        let bad = TankShape::HorizontalCylinder {
            radius_m: -1.0,
            length_m: 4.0,
        };
        assert_eq!(
            VolumeTable::sample(&bad, 1e3, 1e3, 16, cubic),
            Err(TableError::BadGeometry)
        );
        for (k, v) in [
            (0.0, 1e3),
            (1e3, f64::NAN),
            (f64::INFINITY, 1e3),
            (1e3, -1.0),
        ] {
            assert_eq!(
                VolumeTable::sample(&good, k, v, 16, cubic),
                Err(TableError::BadScale)
            );
        }
        assert_eq!(
            VolumeTable::sample(&good, 0.1, 1e3, 16, cubic),
            Err(TableError::LevelOutOfRange)
        );
        assert_eq!(
            VolumeTable::sample(&good, 2e9, 1e3, 16, cubic),
            Err(TableError::LevelOutOfRange)
        );
        assert_eq!(
            VolumeTable::sample(&good, 1e3, 1e9, 16, cubic),
            Err(TableError::VolumeOutOfRange)
        );
        assert_eq!(
            VolumeTable::sample(&good, 1e3, 1e3, 1, cubic),
            Err(TableError::Curve(CurveError::TooFewNodes))
        );
        assert_eq!(
            VolumeTable::sample(&good, 1e3, 1e3, 65, cubic),
            Err(TableError::Curve(CurveError::TooManyNodes))
        );
        // 1.2e8 mL in 16 nodes: segments above 2^21 units for the cubic.
        assert_eq!(
            VolumeTable::sample(&good, 1e3, 1e7, 16, cubic),
            Err(TableError::Curve(CurveError::SegmentTooSteep))
        );
        // The same with linear segments (up to 2^30 units) is fine.
        assert!(VolumeTable::sample(&good, 1e3, 1e7, 16, Interpolation::Linear).is_ok());
        // Display and source.
        let e = TableError::Curve(CurveError::TooManyNodes);
        assert_eq!(
            e.to_string(),
            "volume table: a curve holds at most 64 nodes"
        );
        assert!(core::error::Error::source(&e).is_some());
        assert!(core::error::Error::source(&TableError::BadScale).is_none());
        for e in [
            TableError::BadGeometry,
            TableError::BadScale,
            TableError::LevelOutOfRange,
            TableError::VolumeOutOfRange,
        ] {
            assert!(!e.to_string().is_empty());
        }
    }

    /// A strapping table, as from a tank calibration certificate (values of
    /// case 12c in litres, level in mm, so that the rows are real volumes).
    #[test]
    fn strapping_table_is_validated() {
        let rows = [
            LevelVolume::new(0, 0),
            LevelVolume::new(500, 2_457),
            LevelVolume::new(1_000, 6_283),
            LevelVolume::new(1_500, 10_110),
            LevelVolume::new(2_000, 12_566),
        ];
        for interp in [Interpolation::Linear, Interpolation::MonotoneCubic] {
            let t = VolumeTable::from_strapping(&rows, interp).unwrap();
            assert_eq!(t.len(), 5);
            assert!(!t.is_empty());
            // Rows on whole levels: the 32-bit path, equal to the general.
            assert!(t.curve().on_whole_levels());
            for level in -1..=2_001 {
                assert_eq!(t.volume(level), t.curve().eval(level_to_shift(level)));
            }
            for r in rows {
                assert_eq!(t.volume(r.level).value, r.volume);
            }
            assert_eq!(t.row(2), Some(rows[2]));
            assert_eq!(t.row(5), None);
            assert_eq!(t.curve().interpolation(), interp);
            // Linear between rows.
            if interp == Interpolation::Linear {
                assert_eq!(t.volume(750).value, (2_457 + 6_283) / 2);
            }
            // The curve round-trips through from_curve.
            assert_eq!(VolumeTable::from_curve(*t.curve()), Ok(t));
        }
        let mut falling = rows;
        falling[3].volume = 6_000;
        assert_eq!(
            VolumeTable::from_strapping(&falling, Interpolation::Linear),
            Err(CurveError::NotMonotone)
        );
        let mut repeated = rows;
        repeated[2].level = 500;
        assert_eq!(
            VolumeTable::from_strapping(&repeated, Interpolation::MonotoneCubic),
            Err(CurveError::ShiftsNotIncreasing)
        );
        // Flat rows (a sump below the outlet, say) are allowed.
        let flat = [
            LevelVolume::new(0, 0),
            LevelVolume::new(10, 0),
            LevelVolume::new(20, 5),
        ];
        assert!(VolumeTable::from_strapping(&flat, Interpolation::MonotoneCubic).is_ok());
        assert_eq!(
            VolumeTable::from_strapping(&rows[..1], Interpolation::Linear),
            Err(CurveError::TooFewNodes)
        );
        let many: Vec<LevelVolume> = (0..65).map(|i| LevelVolume::new(i, i)).collect();
        assert_eq!(
            VolumeTable::from_strapping(&many, Interpolation::Linear),
            Err(CurveError::TooManyNodes)
        );
        assert!(VolumeTable::from_strapping(&many[..64], Interpolation::MonotoneCubic).is_ok());
        // A falling curve is not a volume table.
        let c = Curve::linear(&[
            Node::new(level_to_shift(0), 10),
            Node::new(level_to_shift(10), 0),
        ])
        .unwrap();
        assert_eq!(VolumeTable::from_curve(c), Err(CurveError::NotMonotone));
    }

    #[test]
    fn level_axis_conversions() {
        for l in [i32::MIN, -1, 0, 1, 12_345, i32::MAX] {
            assert_eq!(shift_to_level(level_to_shift(l)), l);
            assert_eq!(level_to_shift(l).raw_q40(), i64::from(l) * (1i64 << 32));
        }
        assert_eq!(level_to_shift(256).to_f64(), 1.0);
    }

    // ---- Properties --------------------------------------------------------

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(5000))]

        /// Volume never falls as the level rises, for any tank.
        #[test]
        fn volume_is_monotone(r in 1e-3f64..100.0, l in 1e-3f64..100.0, a in -0.1f64..1.1, b in -0.1f64..1.1) {
            let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
            let v_lo = horizontal_cylinder_volume_m3(r, l, lo * 2.0 * r);
            let v_hi = horizontal_cylinder_volume_m3(r, l, hi * 2.0 * r);
            prop_assert!(v_lo <= v_hi, "{} {}", v_lo, v_hi);
            prop_assert!(horizontal_cylinder_fill_fraction(lo) <= horizontal_cylinder_fill_fraction(hi));
            prop_assert!((0.0..=1.0).contains(&horizontal_cylinder_fill_fraction(a)));
        }

        /// Inverse round trips, both ways.
        #[test]
        fn inverse_round_trips(r in 1e-3f64..100.0, l in 1e-3f64..100.0, x in 0.0f64..=1.0) {
            let q = horizontal_cylinder_fill_fraction(x);
            prop_assert!((horizontal_cylinder_depth_fraction(q) - x).abs() <= 1e-12, "{}", x);
            prop_assert!((horizontal_cylinder_fill_fraction(horizontal_cylinder_depth_fraction(x)) - x).abs() <= 4e-16);
            let h = x * 2.0 * r;
            let v = horizontal_cylinder_volume_m3(r, l, h);
            prop_assert!((horizontal_cylinder_level_m(r, l, v) - h).abs() <= 1e-12 * r);
        }

        /// The fixed-point table stays within the stated bound of the exact
        /// formula: any node count 2…64, any span of 1 to 10^8 level units,
        /// any full volume from 1 to 10^7 units.
        #[test]
        fn sampled_table_within_stated_bound(
            n in 2usize..=64,
            top_exp in 0.0f64..8.0,
            vol_exp in 0.0f64..7.0,
            qs in proptest::collection::vec(0.0f64..=1.0, 1..40),
            ends in proptest::collection::vec(0i32..300, 1..20),
        ) {
            let top = 10f64.powf(top_exp).round().max(1.0);
            let full = 10f64.powf(vol_exp);
            let shape = TankShape::HorizontalCylinder { radius_m: 0.5, length_m: 2.0 };
            let ls = top / shape.height_m();
            let vs = full / shape.full_volume_m3();
            // Small n with a large volume: segments too steep for the cubic
            // path, the one refusal allowed here.
            let t = match VolumeTable::sample(&shape, ls, vs, n, Interpolation::MonotoneCubic) {
                Ok(t) => t,
                Err(e) => {
                    prop_assert_eq!(e, TableError::Curve(CurveError::SegmentTooSteep));
                    return Ok(());
                }
            };
            let top = top as i32;
            let bound = horizontal_cylinder_table_bound(t.len(), top) * full + 2.0;
            let levels = qs.iter().map(|q| (q * f64::from(top)).round() as i32)
                .chain(ends.iter().map(|&e| e.min(top)))
                .chain(ends.iter().map(|&e| top - e.min(top)));
            for level in levels {
                let exact = shape.volume_m3(f64::from(level) / ls) * vs;
                let got = f64::from(t.volume(level).value);
                prop_assert!((got - exact).abs() <= bound, "n {} top {} level {}: {} vs {} (bound {})", n, top, level, got, exact, bound);
            }
        }

        /// The fixed-point table matches its own f64 twin to the curve's
        /// bound (0.5 units plus 3·2^-9 plus 2^-16 of the segment's step
        /// and end slopes).
        #[test]
        fn table_matches_its_twin(n in 2usize..=64, level in 0i32..=20_000) {
            let shape = TankShape::HorizontalCylinder { radius_m: 1.0, length_m: 4.0 };
            let t = VolumeTable::sample(&shape, 1e4, 1e5, n, Interpolation::MonotoneCubic).unwrap();
            let twin = t.volume_f64(f64::from(level));
            let bound = t.curve().error_bound(level_to_shift(level));
            prop_assert!((f64::from(t.volume(level).value) - twin).abs() <= bound + 1e-9);
        }

        /// A strapping table from random monotone rows: the table passes
        /// through its rows and never falls between them.
        #[test]
        fn strapping_tables_are_monotone(
            steps in proptest::collection::vec((1i32..10_000, 0i32..100_000), 2..=64),
            probes in proptest::collection::vec(any::<u32>(), 1..40),
        ) {
            let mut rows = Vec::new();
            let (mut l, mut v) = (-5_000i32, 0i32);
            for (dl, dv) in steps {
                rows.push(LevelVolume::new(l, v));
                l += dl;
                v += dv;
            }
            let t = VolumeTable::from_strapping(&rows, Interpolation::MonotoneCubic).unwrap();
            for r in &rows {
                prop_assert_eq!(t.volume(r.level).value, r.volume);
            }
            let (lo, hi) = (rows[0].level, rows[rows.len() - 1].level);
            let span = u32::try_from(hi - lo).unwrap() + 1;
            let mut levels: Vec<i32> = probes.iter().map(|p| lo + i32::try_from(p % span).unwrap()).collect();
            levels.sort_unstable();
            let mut prev = i32::MIN;
            for level in levels {
                let v = t.volume(level).value;
                prop_assert!(v >= prev);
                prev = v;
            }
        }

        /// Arbitrary inputs never panic.
        #[test]
        fn arbitrary_inputs_never_panic(
            a in any::<f64>(), b in any::<f64>(), c in any::<f64>(), d in any::<f64>(),
            n in 0usize..70, level in any::<i32>(), cubic in any::<bool>(),
            rows in proptest::collection::vec((any::<i32>(), any::<i32>()), 0..70),
        ) {
            let _ = vertical_cylinder_volume_m3(a, b);
            let _ = rectangular_tank_volume_m3(a, b);
            let _ = horizontal_cylinder_fill_fraction(a);
            let _ = horizontal_cylinder_depth_fraction(a);
            let _ = circular_segment_area_m2(a, b);
            let _ = horizontal_cylinder_volume_m3(a, b, c);
            let _ = horizontal_cylinder_level_m(a, b, c);
            let _ = coaxial_capacitance_f(a, b, c, d);
            let probe = CoaxialProbe { length_m: a, inner_radius_m: b, outer_radius_m: c };
            let _ = probe.immersed_capacitance_f(d, a, b);
            let _ = probe.level_m(d, c, a);
            let _ = horizontal_cylinder_table_bound(n, level);
            let interp = if cubic { Interpolation::MonotoneCubic } else { Interpolation::Linear };
            for shape in [
                TankShape::VerticalCylinder { radius_m: a, height_m: b },
                TankShape::Rectangular { base_area_m2: a, height_m: b },
                TankShape::HorizontalCylinder { radius_m: a, length_m: b },
            ] {
                let _ = shape.volume_m3(c);
                let _ = shape.level_m(d);
                if let Ok(t) = VolumeTable::sample(&shape, c, d, n, interp) {
                    let _ = t.volume(level);
                    let _ = t.volume_f64(f64::from(level));
                }
            }
            let rows: Vec<LevelVolume> = rows.into_iter().map(|(l, v)| LevelVolume::new(l, v)).collect();
            if let Ok(t) = VolumeTable::from_strapping(&rows, interp) {
                let _ = t.volume(level);
            }
        }

        /// Sampling with valid but random parameters never panics, and a
        /// table it returns evaluates any level.
        #[test]
        fn sampling_random_tanks_never_panics(
            r in 1e-3f64..1e3, l in 1e-3f64..1e3, k_exp in -2.0f64..10.0, v_exp in -3.0f64..9.0,
            n in 2usize..=64, level in any::<i32>(), cubic in any::<bool>(),
        ) {
            let interp = if cubic { Interpolation::MonotoneCubic } else { Interpolation::Linear };
            let shape = TankShape::HorizontalCylinder { radius_m: r, length_m: l };
            if let Ok(t) = VolumeTable::sample(&shape, 10f64.powf(k_exp), 10f64.powf(v_exp), n, interp) {
                let v = t.volume(level);
                let first = t.row(0).unwrap();
                let last = t.row(t.len() - 1).unwrap();
                prop_assert!(v.value >= first.volume && v.value <= last.volume);
            }
        }
    }
}
