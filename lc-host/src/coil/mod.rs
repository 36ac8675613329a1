//! Coil design: inductance of planar spirals, solenoids and loops; copper
//! resistance and Q; the tank capacitor; the pull of a metal target.
//!
//! Everything is SI (metre, henry, farad, ohm, hertz, siemens per metre)
//! with the unit in each name, except the few published forms whose units
//! are part of the formula (Wheeler's inch and mm forms, Mohan's monomial
//! in µm and nH), which say so in their names.
//!
//! The modules, from the mathematics up:
//!
//! | module | what it holds | source |
//! |---|---|---|
//! | [`elliptic`] | complete elliptic integrals K(m), E(m) by the AGM, **parameter m = k²** | A&S 1964 §17.6; DLMF §19.8(i) |
//! | [`quadrature`] | Gauss–Legendre nodes and composite rules | standard |
//! | [`bessel`] | the Bessel function J1 (for the target model) | A&S 1964 §9.1, §9.2 |
//! | [`filament`] | coaxial circular loops: Maxwell's mutual inductance, a loop's self-inductance from the GMD, coils as sets of loops | Maxwell 1873 Art. 701; Grover 1946 |
//! | [`spiral`] | planar spirals: geometry, Mohan's three expressions, the filament model | Mohan et al. 1999 |
//! | [`solenoid`] | single-layer solenoid: Wheeler 1928, Lorenz/Nagaoka | Wheeler 1928; Grover 1946 |
//! | [`resistance`] | copper resistivity and temperature, skin depth, DC/AC resistance, Q | IEC 60028 / NBS Handbook 100 |
//! | [`eseries`] | IEC 60063 preferred values and the nearest one | IEC 60063 |
//! | [`tuning`] | the tank capacitor for a target frequency, rounded to a series | `lc_core::tank` |
//! | [`target`] | a coil over a metal plate: image method and the layered-conductor model | Maxwell; Dodd & Deeds 1968 |
//! | [`design`] | one call that evaluates all of the above for a coil, the `lc-host coil` report | — |
//!
//! Check values and their sources are in docs/references.md (Spiral cases,
//! Solenoid cases, Nagaoka coefficient, Coaxial loops, Elliptic integrals,
//! Copper, Preferred numbers) and beside each test; docs/coil.md walks through
//! the methods, their validity and the convention traps (parameter m vs modulus
//! k; Wheeler's dropped 1.0028; E24 is not a rounded geometric series; Mohan's
//! Table I has no circle row).
//!
//! # Example
//!
//! ```
//! use lc_host::coil::spiral::{current_sheet_h, Shape, Spiral};
//! use lc_host::coil::filament::mutual_inductance_coaxial_h;
//!
//! // docs/references.md, Spiral cases (computed): circle, 10 turns,
//! // d_out 10 mm, w = s = 0.2 mm.
//! let coil = Spiral::new(Shape::Circular, 10, 10e-3, 0.2e-3, 0.2e-3).unwrap();
//! let l_h = current_sheet_h(&coil);
//! assert!((l_h - 0.570639e-6).abs() < 1e-12);
//!
//! // Two coaxial loops: the mutual inductance is symmetric in the radii.
//! let m1 = mutual_inductance_coaxial_h(5e-3, 3e-3, 1e-3);
//! let m2 = mutual_inductance_coaxial_h(3e-3, 5e-3, 1e-3);
//! assert!(((m1 - m2) / m1).abs() < 1e-14);
//! ```

pub mod bessel;
pub mod design;
pub mod elliptic;
pub mod eseries;
pub mod filament;
pub mod quadrature;
pub mod resistance;
pub mod solenoid;
pub mod spiral;
pub mod target;
pub mod tuning;

/// Vacuum permeability µ0 = 4π×10⁻⁷ H/m, the pre-2019 exact value.
///
/// docs/references.md, How sure each value is: the CODATA 2018 value differs by
/// 5.4×10⁻¹⁰ relative, negligible for every tolerance here; one constant is
/// used everywhere.
pub const MU0_H_PER_M: f64 = 4.0e-7 * std::f64::consts::PI;

/// What went wrong in a coil calculation. Each message names the quantity
/// and says what to change.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum CoilError {
    /// A dimension or value that must be finite and above zero is not.
    #[error("{what} must be a finite number above zero, got {value}")]
    NotPositive {
        /// The quantity, in words.
        what: &'static str,
        /// The value given.
        value: f64,
    },
    /// A value outside the range a formula or model covers.
    #[error("{what} = {value} is outside the range this model covers ({range})")]
    OutOfRange {
        /// The quantity, in words.
        what: &'static str,
        /// The value given.
        value: f64,
        /// The range covered, in words.
        range: &'static str,
    },
    /// The turns do not fit inside the outer diameter.
    #[error(
        "the turns do not fit: inner diameter d_in = d_out − 2·n·w − 2·(n−1)·s = {:.3} mm \
         is not above zero; use fewer turns, a narrower trace or tighter spacing, or a larger outer diameter",
        .inner_diameter_m * 1e3
    )]
    TurnsDoNotFit {
        /// The inner diameter the geometry gives, m.
        inner_diameter_m: f64,
    },
    /// A published expression has no coefficients for this shape.
    #[error("{expression} has no coefficients for the {shape} shape; use the current-sheet expression or the filament model")]
    ShapeNotCovered {
        /// The expression, with its source.
        expression: &'static str,
        /// The shape asked for.
        shape: &'static str,
    },
    /// The parasitic capacitance alone already tunes the coil below the
    /// target frequency.
    #[error(
        "no capacitor reaches {target_hz} Hz: the coil resonates at {:.0} Hz with the parasitic \
         capacitance alone; lower the target frequency, the inductance or the parasitic capacitance",
        .max_hz
    )]
    TargetAboveParasiticResonance {
        /// Requested frequency, Hz.
        target_hz: f64,
        /// Highest frequency reachable (no tank capacitor), Hz.
        max_hz: f64,
    },
}

/// Checks that `value` is finite and above zero.
pub(crate) fn positive(what: &'static str, value: f64) -> Result<f64, CoilError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(CoilError::NotPositive { what, value })
    }
}
