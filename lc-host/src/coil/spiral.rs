//! Planar spiral inductors: geometry, the three expressions of Mohan et al.
//! (1999), and the filament model.
//!
//! Source: S. S. Mohan, M. del Mar Hershenson, S. P. Boyd, T. H. Lee,
//! "Simple accurate expressions for planar spiral inductances", *IEEE J.
//! Solid-State Circuits* 34(10):1419–1424, Oct 1999: Table I (modified
//! Wheeler), Table II (current sheet), Table III (data-fitted monomial);
//! coefficients as given in docs/references.md, Spiral cases (published,
//! quoted).
//!
//! # Geometry
//!
//! n turns of trace width w and spacing s, outer diameter d_out; for the
//! polygons the diameters are measured across flats, for the circle they
//! are diameters. The inner diameter follows from the others (geometry,
//! not part of the paper; docs/references.md, Spiral cases):
//!
//! d_in = d_out − 2·n·w − 2·(n − 1)·s,  d_avg = (d_out + d_in)/2,
//! fill ratio ρ = (d_out − d_in)/(d_out + d_in).
//!
//! # The expressions
//!
//! | expression | formula | shapes |
//! |---|---|---|
//! | modified Wheeler | L = K1·µ0·n²·d_avg/(1 + K2·ρ) | square, hexagonal, octagonal (**no circle row in Table I**) |
//! | current sheet | L = (µ0·n²·d_avg·c1/2)·[ln(c2/ρ) + c3·ρ + c4·ρ²] | all four |
//! | monomial | L\[nH\] = β·d_out^α1·w^α2·d_avg^α3·n^α4·s^α5, lengths in **µm** | square, hexagonal, octagonal |
//!
//! Mohan et al. report typical errors of 2–3 % against field solvers and
//! measurements for their RF-IC layouts (published, quoted). They are
//! fitted expressions: near full fill (ρ above about 0.7, or spacing much
//! wider than the trace) they can even fall when a turn is added, which a
//! real coil cannot do. The modified-Wheeler circle coefficients that
//! circulate in code (2.23/3.45, 2.46/2.04) are not Mohan's and are refused
//! here (docs/references.md, Traps, item 5).
//!
//! # The filament model
//!
//! Each turn becomes a circular loop on the turn's centreline
//! ([`crate::coil::filament`]). A circular turn keeps its radius. A polygon
//! turn of centreline size a (across flats) becomes a circle of radius
//! √(r_P·r_A), the geometric mean of the circle with the same perimeter
//! (r_P = N·a·tan(π/N)/(2π); the self-inductance goes with the perimeter)
//! and the circle with the same area (r_A = (a/2)·√(N·tan(π/N)/π); the far
//! field and the flux linkage go with the area). This equivalence is our
//! own choice; on the coils of docs/references.md, Spiral cases and on the demo
//! coil it lands within 3 % of the current-sheet expression (the tests hold it
//! to that), while equal perimeter alone is 5–8 % high and equal area alone
//! 6–8 % low for squares. Layers are stacked copies of the turns, connected
//! in series and aiding.

use super::filament::{gmd_rectangle_m, FilamentCoil};
use super::{positive, CoilError, MU0_H_PER_M};
use std::f64::consts::PI;
use std::str::FromStr;

/// The outline of a planar spiral.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Shape {
    /// Four sides.
    Square,
    /// Six sides.
    Hexagonal,
    /// Eight sides.
    Octagonal,
    /// Circular turns.
    Circular,
}

impl Shape {
    /// All four shapes.
    pub const ALL: [Shape; 4] = [
        Shape::Square,
        Shape::Hexagonal,
        Shape::Octagonal,
        Shape::Circular,
    ];

    /// Lower-case name: square, hexagonal, octagonal, circular.
    pub fn name(self) -> &'static str {
        match self {
            Shape::Square => "square",
            Shape::Hexagonal => "hexagonal",
            Shape::Octagonal => "octagonal",
            Shape::Circular => "circular",
        }
    }

    /// Number of sides; `None` for the circle.
    pub fn sides(self) -> Option<u32> {
        match self {
            Shape::Square => Some(4),
            Shape::Hexagonal => Some(6),
            Shape::Octagonal => Some(8),
            Shape::Circular => None,
        }
    }

    /// N·tan(π/N) for a regular N-gon (π for the circle): perimeter =
    /// this × size across flats, area = this × size²/4.
    fn outline_factor(self) -> f64 {
        match self.sides() {
            Some(n) => f64::from(n) * (PI / f64::from(n)).tan(),
            None => PI,
        }
    }

    /// Perimeter of the outline of size `across_flats_m` (diameter for the
    /// circle), m.
    pub fn perimeter_m(self, across_flats_m: f64) -> f64 {
        self.outline_factor() * across_flats_m
    }

    /// Area enclosed by the outline of size `across_flats_m`, m².
    pub fn area_m2(self, across_flats_m: f64) -> f64 {
        0.25 * self.outline_factor() * across_flats_m * across_flats_m
    }

    /// Radius of the circle that stands for one turn in the filament model:
    /// the geometric mean of the equal-perimeter and equal-area radii (see
    /// the module doc); a/2 for the circle, m.
    pub fn equivalent_radius_m(self, across_flats_m: f64) -> f64 {
        let f = self.outline_factor();
        let r_perimeter = f * across_flats_m / (2.0 * PI);
        let r_area = 0.5 * across_flats_m * (f / PI).sqrt();
        (r_perimeter * r_area).sqrt()
    }
}

impl std::fmt::Display for Shape {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Shape {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "square" | "sq" => Ok(Shape::Square),
            "hexagonal" | "hexagon" | "hex" => Ok(Shape::Hexagonal),
            "octagonal" | "octagon" | "oct" => Ok(Shape::Octagonal),
            "circular" | "circle" | "round" => Ok(Shape::Circular),
            _ => Err(format!(
                "{s:?} is not a spiral shape: square, hexagonal, octagonal or circular"
            )),
        }
    }
}

/// Modified-Wheeler coefficients (K1, K2), Mohan et al. 1999 Table I
/// (docs/references.md, Spiral cases; published, quoted). `None` for the
/// circle: Table I has no circle row.
pub fn modified_wheeler_coefficients(shape: Shape) -> Option<(f64, f64)> {
    match shape {
        Shape::Square => Some((2.34, 2.75)),
        Shape::Hexagonal => Some((2.33, 3.82)),
        Shape::Octagonal => Some((2.25, 3.55)),
        Shape::Circular => None,
    }
}

/// Current-sheet coefficients [c1, c2, c3, c4], Mohan et al. 1999 Table II
/// (docs/references.md, Spiral cases; published, quoted).
pub fn current_sheet_coefficients(shape: Shape) -> [f64; 4] {
    match shape {
        Shape::Square => [1.27, 2.07, 0.18, 0.13],
        Shape::Hexagonal => [1.09, 2.23, 0.00, 0.17],
        Shape::Octagonal => [1.07, 2.29, 0.00, 0.19],
        Shape::Circular => [1.00, 2.46, 0.00, 0.20],
    }
}

/// Monomial coefficients [β, α1, α2, α3, α4, α5], Mohan et al. 1999 Table
/// III (docs/references.md, Spiral cases; published, quoted); lengths in µm,
/// result in nH. `None` for the circle.
pub fn monomial_coefficients(shape: Shape) -> Option<[f64; 6]> {
    match shape {
        Shape::Square => Some([1.62e-3, -1.21, -0.147, 2.40, 1.78, -0.030]),
        Shape::Hexagonal => Some([1.28e-3, -1.24, -0.174, 2.47, 1.77, -0.049]),
        Shape::Octagonal => Some([1.33e-3, -1.21, -0.163, 2.43, 1.75, -0.049]),
        Shape::Circular => None,
    }
}

/// Modified Wheeler, normalised: L/(µ0·n²·d_avg) = K1/(1 + K2·ρ) at fill
/// ratio `fill_ratio`. `None` for the circle.
pub fn modified_wheeler_normalised(shape: Shape, fill_ratio: f64) -> Option<f64> {
    modified_wheeler_coefficients(shape).map(|(k1, k2)| k1 / (1.0 + k2 * fill_ratio))
}

/// Current sheet, normalised: L/(µ0·n²·d_avg) = (c1/2)·[ln(c2/ρ) + c3·ρ +
/// c4·ρ²] at fill ratio `fill_ratio`.
pub fn current_sheet_normalised(shape: Shape, fill_ratio: f64) -> f64 {
    let [c1, c2, c3, c4] = current_sheet_coefficients(shape);
    let rho = fill_ratio;
    0.5 * c1 * ((c2 / rho).ln() + c3 * rho + c4 * rho * rho)
}

/// Mohan's monomial in its published units: lengths in µm, result in nH.
/// `None` for the circle.
pub fn monomial_nh(
    shape: Shape,
    outer_diameter_um: f64,
    width_um: f64,
    average_diameter_um: f64,
    turns: f64,
    spacing_um: f64,
) -> Option<f64> {
    monomial_coefficients(shape).map(|[beta, a1, a2, a3, a4, a5]| {
        beta * outer_diameter_um.powf(a1)
            * width_um.powf(a2)
            * average_diameter_um.powf(a3)
            * turns.powf(a4)
            * spacing_um.powf(a5)
    })
}

/// d_in = d_out − 2·n·w − 2·(n − 1)·s, in m (may be ≤ 0: the turns do not
/// fit).
pub fn inner_diameter_m(turns: u32, outer_diameter_m: f64, width_m: f64, spacing_m: f64) -> f64 {
    let n = f64::from(turns);
    outer_diameter_m - 2.0 * n * width_m - 2.0 * (n - 1.0) * spacing_m
}

/// A planar spiral whose turns fit: n ≥ 1, every length finite and above
/// zero, d_in > 0.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Spiral {
    shape: Shape,
    turns: u32,
    outer_diameter_m: f64,
    width_m: f64,
    spacing_m: f64,
}

impl Spiral {
    /// Checks and builds a spiral.
    pub fn new(
        shape: Shape,
        turns: u32,
        outer_diameter_m: f64,
        width_m: f64,
        spacing_m: f64,
    ) -> Result<Self, CoilError> {
        if turns == 0 {
            return Err(CoilError::OutOfRange {
                what: "number of turns",
                value: 0.0,
                range: "at least 1",
            });
        }
        positive("outer diameter d_out", outer_diameter_m)?;
        positive("trace width w", width_m)?;
        positive("trace spacing s", spacing_m)?;
        let d_in = inner_diameter_m(turns, outer_diameter_m, width_m, spacing_m);
        if d_in <= 0.0 {
            return Err(CoilError::TurnsDoNotFit {
                inner_diameter_m: d_in,
            });
        }
        Ok(Spiral {
            shape,
            turns,
            outer_diameter_m,
            width_m,
            spacing_m,
        })
    }

    /// Outline.
    pub fn shape(&self) -> Shape {
        self.shape
    }

    /// Number of turns n.
    pub fn turns(&self) -> u32 {
        self.turns
    }

    /// Outer diameter d_out, m.
    pub fn outer_diameter_m(&self) -> f64 {
        self.outer_diameter_m
    }

    /// Trace width w, m.
    pub fn width_m(&self) -> f64 {
        self.width_m
    }

    /// Spacing s between turns, m.
    pub fn spacing_m(&self) -> f64 {
        self.spacing_m
    }

    /// Inner diameter d_in, m.
    pub fn inner_diameter_m(&self) -> f64 {
        inner_diameter_m(
            self.turns,
            self.outer_diameter_m,
            self.width_m,
            self.spacing_m,
        )
    }

    /// Average diameter d_avg = (d_out + d_in)/2, m.
    pub fn average_diameter_m(&self) -> f64 {
        0.5 * (self.outer_diameter_m + self.inner_diameter_m())
    }

    /// Fill ratio ρ = (d_out − d_in)/(d_out + d_in), in (0, 1).
    pub fn fill_ratio(&self) -> f64 {
        let d_in = self.inner_diameter_m();
        (self.outer_diameter_m - d_in) / (self.outer_diameter_m + d_in)
    }

    /// Size of each turn's centreline (across flats; diameter for the
    /// circle), outermost first: aᵢ = d_out − w − 2·i·(w + s), m.
    pub fn turn_sizes_m(&self) -> Vec<f64> {
        let pitch = self.width_m + self.spacing_m;
        (0..self.turns)
            .map(|i| self.outer_diameter_m - self.width_m - 2.0 * f64::from(i) * pitch)
            .collect()
    }

    /// Trace length of one layer, m: the sum of the centreline perimeters
    /// of concentric turns. Leads, vias and the step from turn to turn are
    /// not included (for a spiral the error is below one pitch per turn).
    pub fn trace_length_m(&self) -> f64 {
        self.turn_sizes_m()
            .into_iter()
            .map(|a| self.shape.perimeter_m(a))
            .sum()
    }

    /// Radii of the loops that stand for the turns in the filament model,
    /// outermost first, m (see the module doc).
    pub fn equivalent_radii_m(&self) -> Vec<f64> {
        self.turn_sizes_m()
            .into_iter()
            .map(|a| self.shape.equivalent_radius_m(a))
            .collect()
    }

    /// The filament model: the turns as loops with the trace's GMD
    /// (0.2235·(w + t), Grover 1946) on `layers` layers `layer_spacing_m`
    /// apart (layer 0 at z = 0 faces a target; see
    /// [`crate::coil::target`]).
    pub fn filament_coil(
        &self,
        layers: u32,
        layer_spacing_m: f64,
        copper_thickness_m: f64,
    ) -> Result<FilamentCoil, CoilError> {
        positive("copper thickness t", copper_thickness_m)?;
        if layers == 0 {
            return Err(CoilError::OutOfRange {
                what: "number of layers",
                value: 0.0,
                range: "at least 1",
            });
        }
        FilamentCoil::stacked(
            &self.equivalent_radii_m(),
            layers,
            layer_spacing_m,
            gmd_rectangle_m(self.width_m, copper_thickness_m),
        )
    }
}

/// Modified Wheeler (Mohan et al. 1999, Table I): L = K1·µ0·n²·d_avg/(1 +
/// K2·ρ), in H. Refuses the circle (Table I has no circle row).
pub fn modified_wheeler_h(spiral: &Spiral) -> Result<f64, CoilError> {
    let norm = modified_wheeler_normalised(spiral.shape, spiral.fill_ratio()).ok_or(
        CoilError::ShapeNotCovered {
            expression: "the modified Wheeler expression (Mohan et al. 1999, Table I)",
            shape: "circular",
        },
    )?;
    let n = f64::from(spiral.turns);
    Ok(MU0_H_PER_M * n * n * spiral.average_diameter_m() * norm)
}

/// Current-sheet expression (Mohan et al. 1999, Table II): L = (µ0·n²·d_avg·c1/2)·[ln(c2/ρ)
/// + c3·ρ + c4·ρ²], in H. All four shapes.
pub fn current_sheet_h(spiral: &Spiral) -> f64 {
    let n = f64::from(spiral.turns);
    MU0_H_PER_M
        * n
        * n
        * spiral.average_diameter_m()
        * current_sheet_normalised(spiral.shape, spiral.fill_ratio())
}

/// Data-fitted monomial (Mohan et al. 1999, Table III), in H (evaluated in
/// the paper's µm and nH). Refuses the circle.
pub fn monomial_h(spiral: &Spiral) -> Result<f64, CoilError> {
    let um = 1e6;
    monomial_nh(
        spiral.shape,
        spiral.outer_diameter_m * um,
        spiral.width_m * um,
        spiral.average_diameter_m() * um,
        f64::from(spiral.turns),
        spiral.spacing_m * um,
    )
    .map(|nh| nh * 1e-9)
    .ok_or(CoilError::ShapeNotCovered {
        expression: "the monomial expression (Mohan et al. 1999, Table III)",
        shape: "circular",
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// docs/references.md, Spiral cases check cases (computed): normalised
    /// L/(µ0·n²·d_avg) at ρ = 0.5, compared at half a unit of the last printed
    /// digit.
    #[test]
    fn normalised_values_at_half_fill() {
        let mw = [
            (Shape::Square, 0.985263158),
            (Shape::Hexagonal, 0.800687285),
            (Shape::Octagonal, 0.810810811),
        ];
        for (shape, v) in mw {
            let got = modified_wheeler_normalised(shape, 0.5).unwrap();
            assert!((got - v).abs() <= 5e-10, "{shape}: {got}");
            // Exact: K1/(1 + K2/2).
            let (k1, k2) = modified_wheeler_coefficients(shape).unwrap();
            assert!(((got - k1 / (1.0 + k2 / 2.0)) / got).abs() < 1e-15);
        }
        assert!(modified_wheeler_normalised(Shape::Circular, 0.5).is_none());
        let cs = [
            (Shape::Square, 0.97992933),
            (Shape::Hexagonal, 0.83801858),
            (Shape::Octagonal, 0.83952146),
            (Shape::Circular, 0.82165427),
        ];
        for (shape, v) in cs {
            let got = current_sheet_normalised(shape, 0.5);
            assert!((got - v).abs() <= 5e-9, "{shape}: {got}");
        }
    }

    /// The concrete coils of docs/references.md, Spiral cases (computed);
    /// printed to six digits in µH, so compared at 5e-7 µH, and each expression
    /// also re-evaluated inline in the test at 1e-9 relative.
    #[test]
    fn concrete_coils() {
        // (shape, n, d_out mm, w = s mm, d_in mm, d_avg mm, ρ, L_mw, L_cs, L_mono µH)
        let cases = [
            (
                Shape::Square,
                10,
                10.0,
                0.2,
                2.4,
                6.2,
                0.612903,
                Some(0.678883),
                0.680885,
                Some(0.698189),
            ),
            (
                Shape::Square,
                5,
                20.0,
                0.5,
                11.0,
                15.5,
                0.290323,
                Some(0.633599),
                0.626934,
                Some(0.673773),
            ),
            (
                Shape::Hexagonal,
                8,
                15.0,
                0.25,
                7.5,
                11.25,
                0.333333,
                Some(0.927332),
                0.946515,
                Some(0.997544),
            ),
            (
                Shape::Octagonal,
                8,
                15.0,
                0.25,
                7.5,
                11.25,
                0.333333,
                Some(0.932406),
                0.943075,
                Some(0.970792),
            ),
            (
                Shape::Circular,
                10,
                10.0,
                0.2,
                2.4,
                6.2,
                0.612903,
                None,
                0.570639,
                None,
            ),
        ];
        for (shape, n, d_out, ws, d_in, d_avg, rho, l_mw, l_cs, l_mono) in cases {
            let sp = Spiral::new(shape, n, d_out * 1e-3, ws * 1e-3, ws * 1e-3).unwrap();
            assert!((sp.inner_diameter_m() * 1e3 - d_in).abs() < 1e-12);
            assert!((sp.average_diameter_m() * 1e3 - d_avg).abs() < 1e-12);
            assert!((sp.fill_ratio() - rho).abs() <= 5e-7);
            let (d_out_m, w, d_avg_m, ro) = (
                d_out * 1e-3,
                ws * 1e-3,
                sp.average_diameter_m(),
                sp.fill_ratio(),
            );
            let nf = f64::from(n);
            let mu0 = 4e-7 * PI;
            let cs = current_sheet_h(&sp);
            assert!((cs * 1e6 - l_cs).abs() <= 5e-7, "{shape} cs {}", cs * 1e6);
            let [c1, c2, c3, c4] = current_sheet_coefficients(shape);
            let own =
                mu0 * nf * nf * d_avg_m * c1 / 2.0 * ((c2 / ro).ln() + c3 * ro + c4 * ro * ro);
            assert!(((cs - own) / own).abs() < 1e-9);
            match (l_mw, l_mono) {
                (Some(l_mw), Some(l_mono)) => {
                    let mw = modified_wheeler_h(&sp).unwrap();
                    assert!((mw * 1e6 - l_mw).abs() <= 5e-7, "{shape} mw {}", mw * 1e6);
                    let (k1, k2) = modified_wheeler_coefficients(shape).unwrap();
                    let own = k1 * mu0 * nf * nf * d_avg_m / (1.0 + k2 * ro);
                    assert!(((mw - own) / own).abs() < 1e-9);
                    let mono = monomial_h(&sp).unwrap();
                    assert!(
                        (mono * 1e6 - l_mono).abs() <= 5e-7,
                        "{shape} mono {}",
                        mono * 1e6
                    );
                    let [b, a1, a2, a3, a4, a5] = monomial_coefficients(shape).unwrap();
                    let um = 1e6;
                    let own = b
                        * (d_out_m * um).powf(a1)
                        * (w * um).powf(a2)
                        * (d_avg_m * um).powf(a3)
                        * nf.powf(a4)
                        * (w * um).powf(a5)
                        * 1e-9;
                    assert!(((mono - own) / own).abs() < 1e-9);
                    // The three expressions agree within 10 %
                    // (docs/references.md, Spiral cases).
                    for (x, y) in [(mw, cs), (mw, mono), (cs, mono)] {
                        assert!((x / y - 1.0).abs() < 0.10, "{shape}: {x} vs {y}");
                    }
                }
                _ => {
                    assert!(matches!(
                        modified_wheeler_h(&sp),
                        Err(CoilError::ShapeNotCovered { .. })
                    ));
                    assert!(matches!(
                        monomial_h(&sp),
                        Err(CoilError::ShapeNotCovered { .. })
                    ));
                }
            }
        }
    }

    /// The filament model (our equivalent circle for polygons) against the
    /// current-sheet expression on the coils of docs/references.md, Spiral
    /// cases and the demo coil: within 3 %.
    #[test]
    fn filament_model_near_current_sheet() {
        let cases = [
            (Shape::Square, 10, 10e-3, 0.2e-3),
            (Shape::Square, 5, 20e-3, 0.5e-3),
            (Shape::Hexagonal, 8, 15e-3, 0.25e-3),
            (Shape::Octagonal, 8, 15e-3, 0.25e-3),
            (Shape::Circular, 10, 10e-3, 0.2e-3),
            (Shape::Square, 11, 20e-3, 0.3e-3),
        ];
        for (shape, n, d_out, ws) in cases {
            let sp = Spiral::new(shape, n, d_out, ws, ws).unwrap();
            let fil = sp.filament_coil(1, 0.0, 35e-6).unwrap().inductance_h();
            let cs = current_sheet_h(&sp);
            assert!((fil / cs - 1.0).abs() < 0.03, "{shape} {n}: {}", fil / cs);
        }
    }

    #[test]
    fn geometry_and_validation() {
        assert!(matches!(
            Spiral::new(Shape::Square, 30, 10e-3, 0.2e-3, 0.2e-3),
            Err(CoilError::TurnsDoNotFit { .. })
        ));
        assert!(Spiral::new(Shape::Square, 0, 10e-3, 0.2e-3, 0.2e-3).is_err());
        assert!(Spiral::new(Shape::Square, 3, 10e-3, 0.0, 0.2e-3).is_err());
        assert!(Spiral::new(Shape::Square, 3, f64::NAN, 0.2e-3, 0.2e-3).is_err());
        let sp = Spiral::new(Shape::Square, 3, 10e-3, 0.2e-3, 0.3e-3).unwrap();
        // Turn centrelines 9.8, 8.8, 7.8 mm; perimeter 4a each.
        let sizes = sp.turn_sizes_m();
        assert!((sizes[0] - 9.8e-3).abs() < 1e-15 && (sizes[2] - 7.8e-3).abs() < 1e-15);
        assert!((sp.trace_length_m() - 4.0 * 26.4e-3).abs() < 1e-14);
        // The innermost centreline sits w/2 outside d_in.
        assert!((sizes[2] - sp.inner_diameter_m() - sp.width_m()).abs() < 1e-15);
        // Outline factors: square 4, circle π, hexagon 2√3, octagon 8(√2 − 1).
        assert!((Shape::Square.perimeter_m(1.0) - 4.0).abs() < 1e-15);
        assert!((Shape::Hexagonal.perimeter_m(1.0) - 2.0 * 3f64.sqrt()).abs() < 1e-15);
        assert!((Shape::Octagonal.perimeter_m(1.0) - 8.0 * (2f64.sqrt() - 1.0)).abs() < 1e-14);
        assert!((Shape::Circular.area_m2(2.0) - PI).abs() < 1e-15);
        assert_eq!(Shape::Circular.equivalent_radius_m(2.0), 1.0);
        for s in Shape::ALL {
            assert_eq!(s.name().parse::<Shape>(), Ok(s));
        }
        assert!("triangle".parse::<Shape>().is_err());
    }

    proptest! {
        /// Positive, and increasing in n where the expressions are meant to
        /// be used: s between 0.2·w and w and a fill ratio up to 0.7 (near
        /// full fill the fitted expressions can fall when a turn is added;
        /// see the module doc).
        #[test]
        fn positive_and_increasing_in_turns(
            shape_i in 0usize..4,
            d_out_mm in 1.0f64..100.0,
            w_rel in 0.001f64..0.05,
            s_over_w in 0.2f64..1.0,
            n in 1u32..40,
        ) {
            let shape = Shape::ALL[shape_i];
            let d_out = d_out_mm * 1e-3;
            let w = w_rel * d_out;
            let s = s_over_w * w;
            let (Ok(a), Ok(b)) = (Spiral::new(shape, n, d_out, w, s), Spiral::new(shape, n + 1, d_out, w, s)) else {
                return Ok(());
            };
            prop_assume!(b.fill_ratio() <= 0.7);
            prop_assert!(current_sheet_h(&a) > 0.0);
            prop_assert!(current_sheet_h(&b) > current_sheet_h(&a));
            if shape != Shape::Circular {
                prop_assert!(modified_wheeler_h(&b).unwrap() > modified_wheeler_h(&a).unwrap());
                prop_assert!(monomial_h(&b).unwrap() > monomial_h(&a).unwrap());
                prop_assert!(modified_wheeler_h(&a).unwrap() > 0.0 && monomial_h(&a).unwrap() > 0.0);
            }
            // The filament model always grows with a turn (every M > 0).
            let fa = a.filament_coil(1, 0.0, 35e-6).unwrap().inductance_h();
            let fb = b.filament_coil(1, 0.0, 35e-6).unwrap().inductance_h();
            prop_assert!(fb > fa && fa > 0.0);
        }

        /// Filament model vs current sheet for random circular spirals (the
        /// circle needs no equivalence), over a fill ratio of 0.2–0.8, w/s
        /// from 0.5 to 2 and 4–30 turns: within 8 %, and within 4 % from
        /// eight turns on. Measured on a grid of the domain (10 outer
        /// diameters, every turn count, 16 w/s, 25 fill ratios): 0.961 to
        /// 1.071, and 0.967 to 1.032 from eight turns; the extremes at four
        /// widely spaced turns near full fill, where a sheet smears the
        /// few currents most.
        #[test]
        fn filament_vs_current_sheet_circular(
            d_out_mm in 5.0f64..50.0,
            n in 4u32..30,
            w_over_s in 0.5f64..2.0,
            fill in 0.2f64..0.8,
        ) {
            // Choose the pitch that gives the fill ratio: d_in = d_out(1 − ρ)/(1 + ρ).
            let d_out = d_out_mm * 1e-3;
            let d_in = d_out * (1.0 - fill) / (1.0 + fill);
            let nf = f64::from(n);
            // d_out − d_in = 2nw + 2(n − 1)s with w = q·s.
            let s = (d_out - d_in) / (2.0 * nf * w_over_s + 2.0 * (nf - 1.0));
            let w = w_over_s * s;
            let sp = Spiral::new(Shape::Circular, n, d_out, w, s).unwrap();
            let fil = sp.filament_coil(1, 0.0, 35e-6).unwrap().inductance_h();
            let cs = current_sheet_h(&sp);
            let tolerance = if n >= 8 { 0.04 } else { 0.08 };
            prop_assert!((fil / cs - 1.0).abs() < tolerance, "ratio {}", fil / cs);
        }
    }
}
