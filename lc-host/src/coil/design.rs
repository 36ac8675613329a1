//! One coil, every applicable method: the report behind `lc-host coil`.
//!
//! [`design`] takes a winding (planar spiral or single-layer solenoid) and
//! optional operating conditions, and returns a [`CoilReport`]: the
//! inductance by each published expression and by the filament model,
//! copper resistance and Q, the tank capacitor rounded to an E series, and
//! the pull of a metal plate at a gap. [`to_text`] renders it as the
//! command's table; the report also serialises to JSON.
//!
//! # Which inductance is "the" inductance
//!
//! * Planar: Mohan's current-sheet expression (it covers all four shapes).
//!   For several layers it is multiplied by the filament model's **layer
//!   factor** L_fil(all layers)/L_fil(one layer), which carries the
//!   mutual inductance between layers (series, aiding). Every other
//!   expression gets the same factor, so they can be compared.
//! * Solenoid: the exact current sheet (Lorenz/Nagaoka).
//!
//! The plate model's ΔL is computed on the filament model and added to
//! that design value; the plate's response is evaluated at the unloaded
//! operating frequency.

use super::eseries::ESeries;
use super::filament::{gmd_round_wire_m, FilamentCoil};
use super::resistance::{
    copper_resistance_ratio, copper_resistivity_ohm_m, dc_resistance_ohm, quality_factor,
    rectangle_effective_area_m2, round_wire_effective_area_m2, skin_depth_m,
    IACS_RESISTIVITY_20C_OHM_M,
};
use super::solenoid::{lorenz_h, nagaoka_coefficient, wheeler_h, wheeler_si_h};
use super::spiral::{current_sheet_h, modified_wheeler_h, monomial_h, Shape, Spiral};
use super::target::{perfect_conductor_change_h, plate_response, Plate, PlateResponse};
use super::tuning::{tune, Tuning};
use super::{positive, CoilError};
use lc_core::tank::resonant_frequency_with_parasitic_hz;
use std::f64::consts::PI;
use std::fmt::Write as _;

/// The winding to evaluate.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Winding {
    /// A planar spiral, possibly on several layers.
    Planar {
        /// Outline and turns (the same on every layer).
        spiral: Spiral,
        /// Copper layers, in series, aiding.
        layers: u32,
        /// Distance between neighbouring layers' copper, m.
        layer_spacing_m: f64,
        /// Copper thickness, m.
        copper_thickness_m: f64,
    },
    /// A single-layer solenoid.
    Solenoid {
        /// Coil radius (to the wire's centre), m.
        radius_m: f64,
        /// Winding length, m.
        length_m: f64,
        /// Turns.
        turns: u32,
        /// Wire diameter, m (for the filament model and the resistance).
        wire_diameter_m: Option<f64>,
    },
}

/// A tank to tune.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TankRequest {
    /// Target frequency, Hz.
    pub target_hz: f64,
    /// Parasitic capacitance across the tank, F.
    pub parasitic_f: f64,
    /// E series to round the capacitor to.
    pub series: ESeries,
}

/// A plate to face.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TargetRequest {
    /// Gap from the plate to the nearest turn, m.
    pub gap_m: f64,
    /// The plate.
    pub plate: Plate,
    /// A name for the plate in the report ("aluminium", "custom").
    pub name: &'static str,
}

/// Everything [`design`] needs.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DesignInput {
    /// The winding.
    pub winding: Winding,
    /// Copper temperature, °C.
    pub temperature_c: f64,
    /// Operating frequency, Hz; when absent, the tuned tank's frequency.
    pub frequency_hz: Option<f64>,
    /// Tank to tune.
    pub tank: Option<TankRequest>,
    /// Plate to face.
    pub target: Option<TargetRequest>,
}

/// The geometry, echoed and derived.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum Geometry {
    /// A planar spiral.
    Planar {
        /// Outline.
        shape: Shape,
        /// Turns per layer.
        turns: u32,
        /// Layers.
        layers: u32,
        /// Layer spacing, m.
        layer_spacing_m: f64,
        /// Outer diameter, m.
        outer_diameter_m: f64,
        /// Inner diameter, m.
        inner_diameter_m: f64,
        /// Average diameter, m.
        average_diameter_m: f64,
        /// Fill ratio.
        fill_ratio: f64,
        /// Trace width, m.
        width_m: f64,
        /// Spacing, m.
        spacing_m: f64,
        /// Copper thickness, m.
        copper_thickness_m: f64,
        /// Trace length over all layers (concentric turns, no leads), m.
        trace_length_m: f64,
    },
    /// A single-layer solenoid.
    Solenoid {
        /// Radius, m.
        radius_m: f64,
        /// Winding length, m.
        length_m: f64,
        /// Turns.
        turns: u32,
        /// Wire diameter, m.
        wire_diameter_m: Option<f64>,
        /// Wire length in the winding (N·2πr, no leads), m.
        wire_length_m: f64,
        /// Nagaoka's coefficient K_N.
        nagaoka_coefficient: f64,
    },
}

/// One method's inductance.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Estimate {
    /// Method.
    pub method: &'static str,
    /// Source.
    pub source: &'static str,
    /// Inductance of the whole coil, H.
    pub inductance_h: f64,
    /// One layer alone, H (multi-layer planar coils only).
    pub single_layer_h: Option<f64>,
}

/// Copper resistance and Q.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct ResistanceReport {
    /// Conductor length, m.
    pub length_m: f64,
    /// DC resistance at 20 °C, Ω.
    pub dc_20c_ohm: f64,
    /// Copper temperature, °C.
    pub temperature_c: f64,
    /// DC resistance at that temperature, Ω.
    pub dc_ohm: f64,
    /// Operating frequency, Hz, if known.
    pub frequency_hz: Option<f64>,
    /// Skin depth in the copper there, m.
    pub skin_depth_m: Option<f64>,
    /// AC resistance (skin effect only, no proximity effect), Ω.
    pub ac_ohm: Option<f64>,
    /// Q = ωL/R_ac with the design inductance (an upper bound).
    pub quality_factor: Option<f64>,
}

/// The plate at the gap.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct TargetReport {
    /// Plate name.
    pub name: &'static str,
    /// The plate.
    pub plate: Plate,
    /// Gap, m.
    pub gap_m: f64,
    /// L change next to a perfect conductor (image method), H.
    pub perfect_conductor_change_h: f64,
    /// The plate's response at the operating frequency, if known (or at
    /// f = 0 for a non-conducting plate).
    pub response: Option<PlateResponse>,
    /// Frequency the response was evaluated at, Hz.
    pub frequency_hz: Option<f64>,
    /// Design inductance plus the plate's ΔL (or the mirror's when there is
    /// no response), H.
    pub inductance_h: f64,
    /// Q at the gap: ωL/(R_ac + ΔR).
    pub quality_factor: Option<f64>,
    /// Tank frequency at the gap with the preferred capacitor, Hz.
    pub tank_frequency_hz: Option<f64>,
    /// Relative frequency change against the tank without the plate.
    pub tank_frequency_change: Option<f64>,
}

/// The full report.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct CoilReport {
    /// Geometry.
    pub geometry: Geometry,
    /// Inductance by each method.
    pub estimates: Vec<Estimate>,
    /// The filament model's layer factor (multi-layer planar coils).
    pub layer_factor: Option<f64>,
    /// The inductance used for Q, the tank and the target, H.
    pub design_inductance_h: f64,
    /// Which estimate that is.
    pub design_method: &'static str,
    /// Resistance and Q (absent for a solenoid without a wire diameter).
    pub resistance: Option<ResistanceReport>,
    /// The tuned tank.
    pub tank: Option<Tuning>,
    /// The plate at the gap.
    pub target: Option<TargetReport>,
    /// What the numbers leave out.
    pub notes: Vec<String>,
}

const MOHAN_I: &str = "Mohan et al. 1999, Table I";
const MOHAN_II: &str = "Mohan et al. 1999, Table II";
const MOHAN_III: &str = "Mohan et al. 1999, Table III";
const FILAMENT: &str = "Maxwell 1873; Grover 1946 GMD";

/// Evaluates a coil (module doc).
pub fn design(input: &DesignInput) -> Result<CoilReport, CoilError> {
    if !input.temperature_c.is_finite() || input.temperature_c <= -234.0 {
        return Err(CoilError::OutOfRange {
            what: "copper temperature (°C)",
            value: input.temperature_c,
            range: "above −234 °C, where the linear copper model still gives a positive resistance",
        });
    }
    if let Some(f) = input.frequency_hz {
        positive("operating frequency", f)?;
    }
    let mut notes = vec![];
    let (geometry, estimates, layer_factor, design_l, design_method, filament, conductor) =
        match input.winding {
            Winding::Planar {
                spiral,
                layers,
                layer_spacing_m,
                copper_thickness_m,
            } => {
                let one = spiral.filament_coil(1, 0.0, copper_thickness_m)?;
                let all = spiral.filament_coil(layers, layer_spacing_m, copper_thickness_m)?;
                let l_one = one.inductance_h();
                let l_all = all.inductance_h();
                let factor = l_all / l_one;
                let multi = layers > 1;
                let est = |method, source, single: f64| Estimate {
                    method,
                    source,
                    inductance_h: single * factor,
                    single_layer_h: multi.then_some(single),
                };
                let mut estimates = vec![];
                match modified_wheeler_h(&spiral) {
                    Ok(l) => estimates.push(est("modified Wheeler", MOHAN_I, l)),
                    Err(_) => notes.push(
                        "modified Wheeler and the monomial have no circle coefficients (Mohan et al. 1999, Tables I and III)"
                            .to_string(),
                    ),
                }
                let cs = current_sheet_h(&spiral);
                estimates.push(est("current sheet", MOHAN_II, cs));
                if let Ok(l) = monomial_h(&spiral) {
                    estimates.push(est("monomial", MOHAN_III, l));
                }
                estimates.push(Estimate {
                    method: "filament model",
                    source: FILAMENT,
                    inductance_h: l_all,
                    single_layer_h: multi.then_some(l_one),
                });
                if spiral.shape() != Shape::Circular {
                    notes.push(format!(
                        "filament model: each {} turn as a circle of radius √(r_perimeter·r_area) (our equivalence; docs/coil.md)",
                        spiral.shape()
                    ));
                }
                if multi {
                    notes.push(
                        "several layers: every expression × the filament model's layer factor (layers in series, aiding)"
                            .to_string(),
                    );
                }
                if spiral.fill_ratio() > 0.7 {
                    notes.push(format!(
                        "fill ratio {:.2} > 0.7: Mohan's fitted expressions lose accuracy near full fill; trust the filament model more",
                        spiral.fill_ratio()
                    ));
                }
                let length = spiral.trace_length_m() * f64::from(layers);
                let geometry = Geometry::Planar {
                    shape: spiral.shape(),
                    turns: spiral.turns(),
                    layers,
                    layer_spacing_m,
                    outer_diameter_m: spiral.outer_diameter_m(),
                    inner_diameter_m: spiral.inner_diameter_m(),
                    average_diameter_m: spiral.average_diameter_m(),
                    fill_ratio: spiral.fill_ratio(),
                    width_m: spiral.width_m(),
                    spacing_m: spiral.spacing_m(),
                    copper_thickness_m,
                    trace_length_m: length,
                };
                (
                    geometry,
                    estimates,
                    multi.then_some(factor),
                    cs * factor,
                    if multi {
                        "current sheet × layer factor"
                    } else {
                        "current sheet"
                    },
                    Some(all),
                    Some(Conductor::Rectangle {
                        length_m: length,
                        width_m: spiral.width_m(),
                        thickness_m: copper_thickness_m,
                    }),
                )
            }
            Winding::Solenoid {
                radius_m,
                length_m,
                turns,
                wire_diameter_m,
            } => {
                positive("solenoid radius", radius_m)?;
                positive("winding length", length_m)?;
                if turns == 0 {
                    return Err(CoilError::OutOfRange {
                        what: "number of turns",
                        value: 0.0,
                        range: "at least 1",
                    });
                }
                let n = f64::from(turns);
                let lorenz = lorenz_h(radius_m, length_m, n);
                let one = |method, source, l| Estimate {
                    method,
                    source,
                    inductance_h: l,
                    single_layer_h: None,
                };
                let mut estimates = vec![
                    one(
                        "Wheeler (published constant)",
                        "Wheeler 1928",
                        wheeler_h(radius_m, length_m, n),
                    ),
                    one(
                        "Wheeler, SI form (×1.0028)",
                        "Wheeler 1928",
                        wheeler_si_h(radius_m, length_m, n),
                    ),
                    one(
                        "Lorenz / Nagaoka current sheet",
                        "Nagaoka K_N; Grover 1946",
                        lorenz,
                    ),
                ];
                if length_m < 0.8 * radius_m {
                    notes.push(
                        "ℓ < 0.8·r: outside the range Wheeler stated for his formula".to_string(),
                    );
                }
                let filament = match wire_diameter_m {
                    Some(d) => {
                        positive("wire diameter", d)?;
                        if d > length_m / n {
                            return Err(CoilError::OutOfRange {
                                what: "wire diameter (m)",
                                value: d,
                                range: "at most the pitch ℓ/N (the turns would overlap)",
                            });
                        }
                        let coil =
                            FilamentCoil::solenoid(radius_m, length_m, turns, gmd_round_wire_m(d))?;
                        estimates.push(one("filament model", FILAMENT, coil.inductance_h()));
                        Some(coil)
                    }
                    None => {
                        notes.push("give the wire diameter for the filament model, the resistance and a target".to_string());
                        None
                    }
                };
                let wire_length = n * 2.0 * PI * radius_m;
                (
                    Geometry::Solenoid {
                        radius_m,
                        length_m,
                        turns,
                        wire_diameter_m,
                        wire_length_m: wire_length,
                        nagaoka_coefficient: nagaoka_coefficient(radius_m, length_m),
                    },
                    estimates,
                    None,
                    lorenz,
                    "Lorenz / Nagaoka current sheet",
                    filament,
                    wire_diameter_m.map(|d| Conductor::Round {
                        length_m: wire_length,
                        diameter_m: d,
                    }),
                )
            }
        };

    let tank = match input.tank {
        Some(t) => Some(tune(design_l, t.parasitic_f, t.target_hz, t.series)?),
        None => None,
    };
    let frequency = input.frequency_hz.or(tank.map(|t| t.frequency_hz));

    let resistance = conductor.map(|c| {
        let (length_m, area_m2) = c.dc();
        let dc20 = dc_resistance_ohm(IACS_RESISTIVITY_20C_OHM_M, length_m, area_m2);
        let rho = copper_resistivity_ohm_m(input.temperature_c);
        let delta = frequency.map(|f| skin_depth_m(rho, f, 1.0));
        let ac = delta.map(|d| dc_resistance_ohm(rho, length_m, c.effective_area_m2(d)));
        ResistanceReport {
            length_m,
            dc_20c_ohm: dc20,
            temperature_c: input.temperature_c,
            dc_ohm: dc20 * copper_resistance_ratio(input.temperature_c),
            frequency_hz: frequency,
            skin_depth_m: delta,
            ac_ohm: ac,
            quality_factor: frequency
                .zip(ac)
                .map(|(f, r)| quality_factor(design_l, r, f)),
        }
    });
    if resistance.as_ref().is_some_and(|r| r.ac_ohm.is_some()) {
        notes.push(
            "R_ac: skin effect only (current within δ of the surface); the proximity effect of neighbouring turns is ignored, so R_ac is low and Q high"
                .to_string(),
        );
    }

    let target = match (input.target, &filament) {
        (Some(t), Some(coil)) => {
            positive("gap", t.gap_m)?;
            let perfect = perfect_conductor_change_h(coil, t.gap_m);
            let f_eval = if t.plate.conductivity_s_per_m == 0.0 {
                Some(frequency.unwrap_or(0.0))
            } else {
                frequency
            };
            let response = match f_eval {
                Some(f) => Some(plate_response(coil, &t.plate, t.gap_m, f)?),
                None => {
                    notes.push(
                        "give --frequency or --target-frequency for the plate's eddy-current model; only the perfect mirror is shown"
                            .to_string(),
                    );
                    None
                }
            };
            let dl = response.map_or(perfect, |r| r.inductance_change_h);
            let l_gap = design_l + dl;
            let q = match (&resistance, response, frequency) {
                (
                    Some(ResistanceReport {
                        ac_ohm: Some(r), ..
                    }),
                    Some(resp),
                    Some(f),
                ) => Some(quality_factor(l_gap, r + resp.resistance_change_ohm, f)),
                _ => None,
            };
            let tank_f = tank.map(|tu| {
                resonant_frequency_with_parasitic_hz(l_gap, tu.capacitor_f, tu.parasitic_f)
            });
            Some(TargetReport {
                name: t.name,
                plate: t.plate,
                gap_m: t.gap_m,
                perfect_conductor_change_h: perfect,
                response,
                frequency_hz: f_eval.filter(|_| response.is_some()),
                inductance_h: l_gap,
                quality_factor: q,
                tank_frequency_hz: tank_f,
                tank_frequency_change: tank_f.zip(tank).map(|(f, tu)| f / tu.frequency_hz - 1.0),
            })
        }
        (Some(_), None) => {
            notes.push("a target needs the filament model: give the wire diameter".to_string());
            None
        }
        (None, _) => None,
    };

    Ok(CoilReport {
        geometry,
        estimates,
        layer_factor,
        design_inductance_h: design_l,
        design_method,
        resistance,
        tank,
        target,
        notes,
    })
}

/// The conductor, for resistance.
#[derive(Clone, Copy)]
enum Conductor {
    Rectangle {
        length_m: f64,
        width_m: f64,
        thickness_m: f64,
    },
    Round {
        length_m: f64,
        diameter_m: f64,
    },
}

impl Conductor {
    /// (length, DC cross-section).
    fn dc(self) -> (f64, f64) {
        match self {
            Conductor::Rectangle {
                length_m,
                width_m,
                thickness_m,
            } => (length_m, width_m * thickness_m),
            Conductor::Round {
                length_m,
                diameter_m,
            } => (length_m, 0.25 * PI * diameter_m * diameter_m),
        }
    }

    fn effective_area_m2(self, skin_depth_m: f64) -> f64 {
        match self {
            Conductor::Rectangle {
                width_m,
                thickness_m,
                ..
            } => rectangle_effective_area_m2(width_m, thickness_m, skin_depth_m),
            Conductor::Round { diameter_m, .. } => {
                round_wire_effective_area_m2(diameter_m, skin_depth_m)
            }
        }
    }
}

/// A value with an engineering prefix and 4 significant digits: "7.246 µH"
/// (the one formatter of [`crate::quantity`]).
pub use crate::quantity::eng;

/// A length in mm (µm below 0.1 mm, m from 1 m).
fn mm(v: f64) -> String {
    if v.abs() < 1e-4 {
        format!("{:.1} µm", v * 1e6)
    } else if v.abs() >= 1.0 {
        format!("{v:.4} m")
    } else {
        format!("{:.3} mm", v * 1e3)
    }
}

/// The report as the command's text table.
pub fn to_text(r: &CoilReport) -> String {
    let mut s = String::new();
    let row = |s: &mut String, k: &str, v: String| {
        let _ = writeln!(s, "  {k:<40} {v}");
    };
    match &r.geometry {
        Geometry::Planar {
            shape,
            turns,
            layers,
            layer_spacing_m,
            outer_diameter_m,
            inner_diameter_m,
            average_diameter_m,
            fill_ratio,
            width_m,
            spacing_m,
            copper_thickness_m,
            trace_length_m,
        } => {
            let layer_text = if *layers > 1 {
                format!("{layers} layers {} apart", mm(*layer_spacing_m))
            } else {
                "one layer".to_string()
            };
            let _ = writeln!(
                s,
                "coil: {shape} planar spiral, {turns} turns per layer, {layer_text}"
            );
            row(
                &mut s,
                "outer / inner / average diameter",
                format!(
                    "{} / {} / {}",
                    mm(*outer_diameter_m),
                    mm(*inner_diameter_m),
                    mm(*average_diameter_m)
                ),
            );
            row(
                &mut s,
                "trace width / spacing / copper",
                format!(
                    "{} / {} / {}",
                    mm(*width_m),
                    mm(*spacing_m),
                    mm(*copper_thickness_m)
                ),
            );
            row(
                &mut s,
                "fill ratio (d_out − d_in)/(d_out + d_in)",
                format!("{fill_ratio:.4}"),
            );
            row(&mut s, "trace length, all layers", mm(*trace_length_m));
        }
        Geometry::Solenoid {
            radius_m,
            length_m,
            turns,
            wire_diameter_m,
            wire_length_m,
            nagaoka_coefficient,
        } => {
            let _ = writeln!(s, "coil: single-layer solenoid, {turns} turns");
            row(
                &mut s,
                "radius / winding length",
                format!("{} / {}", mm(*radius_m), mm(*length_m)),
            );
            if let Some(d) = wire_diameter_m {
                row(&mut s, "wire diameter", mm(*d));
            }
            row(&mut s, "wire length in the winding", mm(*wire_length_m));
            row(
                &mut s,
                "Nagaoka coefficient K_N",
                format!("{nagaoka_coefficient:.6}"),
            );
        }
    }
    s.push('\n');
    let multi = r.estimates.iter().any(|e| e.single_layer_h.is_some());
    if multi {
        let _ = writeln!(
            s,
            "  {:<40} {:>11} {:>11}   source",
            "inductance", "one layer", "all layers"
        );
    } else {
        let _ = writeln!(s, "  {:<40} {:>11}   source", "inductance", "");
    }
    for e in &r.estimates {
        match e.single_layer_h {
            Some(one) => {
                let _ = writeln!(
                    s,
                    "  {:<40} {:>11} {:>11}   {}",
                    e.method,
                    eng(one, "H"),
                    eng(e.inductance_h, "H"),
                    e.source
                );
            }
            None => {
                let _ = writeln!(
                    s,
                    "  {:<30} {:>11}   {}",
                    e.method,
                    eng(e.inductance_h, "H"),
                    e.source
                );
            }
        }
    }
    if let Some(f) = r.layer_factor {
        row(&mut s, "layer factor (filament model)", format!("{f:.4}"));
    }
    row(
        &mut s,
        "design value",
        format!("{} ({})", eng(r.design_inductance_h, "H"), r.design_method),
    );
    if let Some(res) = &r.resistance {
        let _ = writeln!(
            s,
            "\n  resistance (IACS copper, ρ20 = 1/58 Ω·mm²/m, α20 = 0.00393/K)"
        );
        row(&mut s, "conductor length", mm(res.length_m));
        if res.temperature_c == 20.0 {
            row(&mut s, "DC at 20 °C", eng(res.dc_ohm, "Ω"));
        } else {
            row(
                &mut s,
                &format!("DC at 20 °C / at {} °C", res.temperature_c),
                format!("{} / {}", eng(res.dc_20c_ohm, "Ω"), eng(res.dc_ohm, "Ω")),
            );
        }
        if let (Some(f), Some(d), Some(ac), Some(q)) = (
            res.frequency_hz,
            res.skin_depth_m,
            res.ac_ohm,
            res.quality_factor,
        ) {
            row(&mut s, &format!("skin depth at {}", eng(f, "Hz")), mm(d));
            row(&mut s, "AC, skin effect only", eng(ac, "Ω"));
            row(&mut s, "Q = ωL/R_ac (upper bound)", format!("{q:.1}"));
        }
    }
    if let Some(t) = &r.tank {
        let _ = writeln!(
            s,
            "\n  tank ({}, parasitic {}, target {})",
            t.series,
            eng(t.parasitic_f, "F"),
            eng(t.target_hz, "Hz")
        );
        row(
            &mut s,
            "capacitor for the target, exact",
            eng(t.exact_capacitor_f, "F"),
        );
        row(
            &mut s,
            &format!("nearest {} value", t.series),
            eng(t.capacitor_f, "F"),
        );
        row(
            &mut s,
            "resonant frequency f0 with it",
            format!(
                "{} ({:+.2} % from the target)",
                eng(t.frequency_hz, "Hz"),
                t.frequency_error * 100.0
            ),
        );
    }
    if let Some(t) = &r.target {
        let thick = match t.plate.thickness_m {
            Some(th) => format!("{} thick", mm(th)),
            None => "thick".to_string(),
        };
        let _ = writeln!(
            s,
            "\n  target: {} plate ({}, σ = {}, µr = {}) at {}",
            t.name,
            thick,
            eng(t.plate.conductivity_s_per_m, "S/m"),
            t.plate.relative_permeability,
            mm(t.gap_m)
        );
        row(
            &mut s,
            "perfect conductor (image method): ΔL",
            eng(t.perfect_conductor_change_h, "H"),
        );
        if let (Some(resp), Some(f)) = (t.response, t.frequency_hz) {
            row(
                &mut s,
                &format!("this plate at {}: ΔL", eng(f, "Hz")),
                format!(
                    "{} ({:.1} % of the mirror)",
                    eng(resp.inductance_change_h, "H"),
                    resp.mirror_fraction * 100.0
                ),
            );
            row(
                &mut s,
                "eddy-current loss ΔR",
                eng(resp.resistance_change_ohm, "Ω"),
            );
        }
        row(
            &mut s,
            "L at the gap",
            format!(
                "{} ({:+.2} %)",
                eng(t.inductance_h, "H"),
                (t.inductance_h / r.design_inductance_h - 1.0) * 100.0
            ),
        );
        if let Some(q) = t.quality_factor {
            row(&mut s, "Q at the gap", format!("{q:.1}"));
        }
        if let (Some(f), Some(df)) = (t.tank_frequency_hz, t.tank_frequency_change) {
            row(
                &mut s,
                "tank f0 at the gap",
                format!("{} ({:+.2} %)", eng(f, "Hz"), df * 100.0),
            );
        }
    }
    if !r.notes.is_empty() {
        s.push('\n');
        for n in &r.notes {
            let _ = writeln!(s, "  note: {n}");
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::coil::target::Plate;

    fn demo_input() -> DesignInput {
        DesignInput {
            winding: Winding::Planar {
                spiral: Spiral::new(Shape::Square, 11, 20e-3, 0.3e-3, 0.3e-3).unwrap(),
                layers: 2,
                layer_spacing_m: 1.6e-3,
                copper_thickness_m: 35e-6,
            },
            temperature_c: 25.0,
            frequency_hz: None,
            tank: Some(TankRequest {
                target_hz: 5.6e6,
                parasitic_f: 10e-12,
                series: ESeries::E24,
            }),
            target: Some(TargetRequest {
                gap_m: 1e-3,
                plate: Plate::aluminium(),
                name: "aluminium",
            }),
        }
    }

    #[test]
    fn demo_coil_report() {
        let r = design(&demo_input()).unwrap();
        // About 7.25 µH (docs/references.md, Demo scenario).
        assert!(
            (r.design_inductance_h - 7.25e-6).abs() < 0.1e-6,
            "{}",
            r.design_inductance_h
        );
        assert_eq!(r.estimates.len(), 4);
        for e in &r.estimates {
            assert!(
                (e.inductance_h / r.design_inductance_h - 1.0).abs() < 0.06,
                "{}",
                e.method
            );
        }
        let t = r.tank.unwrap();
        assert_eq!(t.capacitor_f, 100e-12);
        let res = r.resistance.as_ref().unwrap();
        assert!(res.ac_ohm.unwrap() >= res.dc_ohm && res.quality_factor.unwrap() > 10.0);
        let tg = r.target.as_ref().unwrap();
        assert!(tg.inductance_h < r.design_inductance_h && tg.tank_frequency_change.unwrap() > 0.0);
        let text = to_text(&r);
        assert!(text.contains("current sheet"), "{text}");
        let json = serde_json::to_string(&r).unwrap();
        assert!(json.contains("\"kind\":\"planar\""));
    }

    #[test]
    fn circle_and_solenoid_and_refusals() {
        let mut input = demo_input();
        input.winding = Winding::Planar {
            spiral: Spiral::new(Shape::Circular, 10, 10e-3, 0.2e-3, 0.2e-3).unwrap(),
            layers: 1,
            layer_spacing_m: 0.0,
            copper_thickness_m: 35e-6,
        };
        input.tank = None;
        let r = design(&input).unwrap();
        assert_eq!(r.estimates.len(), 2);
        assert!(r.layer_factor.is_none());
        // No frequency: only the mirror.
        assert!(r.target.as_ref().unwrap().response.is_none());
        input.winding = Winding::Solenoid {
            radius_m: 12.5e-3,
            length_m: 24e-3,
            turns: 20,
            wire_diameter_m: Some(1e-3),
        };
        input.frequency_hz = Some(1e6);
        let r = design(&input).unwrap();
        assert_eq!(r.design_method, "Lorenz / Nagaoka current sheet");
        assert!((r.design_inductance_h * 1e6 - 6.9854).abs() < 5e-5);
        assert!(r.target.unwrap().response.is_some());
        input.winding = Winding::Solenoid {
            radius_m: 12.5e-3,
            length_m: 24e-3,
            turns: 20,
            wire_diameter_m: Some(1.5e-3),
        };
        assert!(design(&input).is_err());
        input.temperature_c = f64::NAN;
        assert!(design(&input).is_err());
    }
}
