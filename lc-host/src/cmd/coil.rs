//! `lc-host coil`: inductance, resistance, Q, tank capacitor and target
//! pull of a planar spiral or a solenoid.

use super::{length, radius_or_diameter, si};
use anyhow::{bail, Context, Result};
use lc_host::coil::design::{design, to_text, DesignInput, TankRequest, TargetRequest, Winding};
use lc_host::coil::eseries::ESeries;
use lc_host::coil::spiral::{Shape, Spiral};
use lc_host::coil::target::{Plate, ALUMINIUM_CONDUCTIVITY_S_PER_M, COPPER_CONDUCTIVITY_S_PER_M};

/// Design a sensing coil: inductance by every method, copper loss and Q, the tank capacitor,
/// and what a metal plate at a gap does to it
///
/// Inductance of a planar spiral (square, hexagonal, octagonal, circular) by the three
/// expressions of Mohan et al. (1999): modified Wheeler, current sheet and monomial; of a
/// single-layer solenoid by Wheeler (1928) and the exact Lorenz/Nagaoka current sheet; and of
/// either by a filament model (each turn a circular loop, Maxwell's mutual inductance between
/// every pair, Grover's GMD for the self terms), which also gives the coupling between layers
/// of a multi-layer spiral. Then the DC and AC resistance of the copper (IACS, 0.00393/K, skin
/// effect only: no proximity effect, so Q is an upper bound), the capacitor that tunes the
/// tank to --target-frequency rounded to an IEC 60063 E series, and with --gap the change of
/// L, the added eddy-current loss and the new tank frequency next to a flat metal plate
/// (image method for a perfect conductor; layered-conductor model for a real metal).
///
/// Lengths need a unit: 20mm, 300um (or 300µm), 1.6mm, 0.5in, 12mil. Frequencies,
/// capacitances and conductivities take SI prefixes: 5.6M, 10p, 35M. Methods, sources and
/// validity: docs/coil.md. A design estimate, not a measurement: check the built coil.
///
/// Example (the demo proximity coil: 20 mm two-layer square spiral, about 7.25 µH):
///
///   lc-host coil spiral --shape square --turns 11 --outer 20mm --width 0.3mm \
///     --spacing 0.3mm --layers 2 --layer-spacing 1.6mm --temperature 25 \
///     --target-frequency 5.6M --parasitic 10p --series E24 --gap 1mm
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(subcommand)]
    what: What,
}

#[derive(clap::Subcommand)]
enum What {
    /// A planar spiral on one or more copper layers
    ///
    /// Turns go inwards from the outer diameter: d_in = d_out − 2·n·w − 2·(n−1)·s. For the
    /// polygons, diameters are across flats. Layers are identical, in series and aiding,
    /// --layer-spacing apart; layer 1 faces the target.
    #[command(verbatim_doc_comment)]
    Spiral {
        /// Outline: square, hexagonal, octagonal or circular
        #[arg(long, value_parser = clap::value_parser!(Shape))]
        shape: Shape,
        /// Turns per layer
        #[arg(long)]
        turns: u32,
        /// Outer diameter d_out (across flats), e.g. 20mm
        #[arg(long, visible_alias = "outer-diameter", value_parser = length, required_unless_present = "outer_radius", conflicts_with = "outer_radius")]
        outer: Option<f64>,
        /// Outer radius (half of d_out), instead of --outer
        #[arg(long, value_parser = length)]
        outer_radius: Option<f64>,
        /// Trace width w, e.g. 0.3mm
        #[arg(long, value_parser = length)]
        width: f64,
        /// Spacing s between turns, e.g. 0.3mm
        #[arg(long, value_parser = length)]
        spacing: f64,
        /// Copper thickness (35um is the common "1 oz" figure)
        #[arg(long, value_parser = length, default_value = "35um")]
        copper: f64,
        /// Copper layers carrying the spiral
        #[arg(long, default_value_t = 1)]
        layers: u32,
        /// Distance between neighbouring layers (needed with --layers 2 or more), e.g. 1.6mm
        #[arg(long, value_parser = length)]
        layer_spacing: Option<f64>,
        #[command(flatten)]
        common: Common,
    },
    /// A single-layer solenoid (air core)
    ///
    /// Give --wire for the filament model, the resistance and a target.
    #[command(verbatim_doc_comment)]
    Solenoid {
        /// Coil radius, to the wire's centre, e.g. 12.5mm
        #[arg(long, value_parser = length, required_unless_present = "diameter", conflicts_with = "diameter")]
        radius: Option<f64>,
        /// Coil diameter, to the wire's centre (instead of --radius), e.g. 25mm
        #[arg(long, value_parser = length)]
        diameter: Option<f64>,
        /// Winding length, e.g. 24mm
        #[arg(long, value_parser = length)]
        length: f64,
        /// Turns
        #[arg(long)]
        turns: u32,
        /// Wire diameter (copper), e.g. 1mm
        #[arg(long, value_parser = length)]
        wire: Option<f64>,
        #[command(flatten)]
        common: Common,
    },
}

#[derive(clap::Args)]
struct Common {
    /// Copper temperature, °C (the IACS values are at 20 °C)
    #[arg(long, default_value_t = 20.0, allow_hyphen_values = true)]
    temperature: f64,
    /// Operating frequency for skin depth, Q and the plate, Hz (default: the tuned tank's)
    #[arg(long, value_parser = si)]
    frequency: Option<f64>,
    /// Tune the tank to this frequency, Hz: prints the capacitor and the frequency it gives
    #[arg(long, value_parser = si)]
    target_frequency: Option<f64>,
    /// Parasitic capacitance across the tank, F
    #[arg(long, value_parser = si, default_value = "0")]
    parasitic: f64,
    /// E series for the capacitor: E3, E6, E12, E24, E48, E96
    #[arg(long, value_parser = clap::value_parser!(ESeries), default_value = "E24")]
    series: ESeries,
    /// Gap from a flat metal plate to the nearest turn, e.g. 1mm
    #[arg(long, value_parser = length)]
    gap: Option<f64>,
    /// Plate metal: aluminium (35 MS/m) or copper (58 MS/m, IACS)
    #[arg(long, default_value = "aluminium")]
    plate: String,
    /// Plate conductivity, S/m (overrides --plate), e.g. 25M
    #[arg(long, value_parser = si)]
    plate_sigma: Option<f64>,
    /// Plate relative permeability (1 for non-ferrous; above 1 for steel or ferrite)
    #[arg(long, default_value_t = 1.0)]
    plate_mu_r: f64,
    /// Plate thickness (default: thick, a half-space)
    #[arg(long, value_parser = length)]
    plate_thickness: Option<f64>,
    /// Print JSON instead of a table
    #[arg(long)]
    json: bool,
}

pub fn run(a: Args) -> Result<()> {
    let (winding, common) = match a.what {
        What::Spiral {
            shape,
            turns,
            outer,
            outer_radius,
            width,
            spacing,
            copper,
            layers,
            layer_spacing,
            common,
        } => {
            let outer = 2.0 * radius_or_diameter(outer_radius, outer, "spiral's outer size")?;
            let spiral = Spiral::new(shape, turns, outer, width, spacing)
                .context("--shape/--turns/--outer/--width/--spacing")?;
            let layer_spacing_m = match (layers, layer_spacing) {
                (0, _) => bail!("--layers must be 1 or more"),
                (1, s) => s.unwrap_or(0.0),
                (_, Some(s)) => s,
                (_, None) => bail!(
                    "--layers {layers} needs --layer-spacing, the distance between neighbouring copper layers (e.g. 1.6mm for a two-layer 1.6 mm board)"
                ),
            };
            (
                Winding::Planar {
                    spiral,
                    layers,
                    layer_spacing_m,
                    copper_thickness_m: copper,
                },
                common,
            )
        }
        What::Solenoid {
            radius,
            diameter,
            length,
            turns,
            wire,
            common,
        } => (
            Winding::Solenoid {
                radius_m: radius_or_diameter(radius, diameter, "coil")?,
                length_m: length,
                turns,
                wire_diameter_m: wire,
            },
            common,
        ),
    };
    let c = common;
    let target = match c.gap {
        Some(gap_m) => {
            let (name, sigma) = match (c.plate_sigma, c.plate.trim().to_ascii_lowercase().as_str()) {
                (Some(s), _) => ("given σ", s),
                (None, "aluminium" | "aluminum") => ("aluminium", ALUMINIUM_CONDUCTIVITY_S_PER_M),
                (None, "copper") => ("copper", COPPER_CONDUCTIVITY_S_PER_M),
                (None, other) => bail!(
                    "--plate {other:?}: known plates are aluminium and copper; for another metal give --plate-sigma (S/m) and --plate-mu-r"
                ),
            };
            Some(TargetRequest {
                gap_m,
                plate: Plate {
                    conductivity_s_per_m: sigma,
                    relative_permeability: c.plate_mu_r,
                    thickness_m: c.plate_thickness,
                },
                name,
            })
        }
        None => None,
    };
    let input = DesignInput {
        winding,
        temperature_c: c.temperature,
        frequency_hz: c.frequency,
        tank: c.target_frequency.map(|target_hz| TankRequest {
            target_hz,
            parasitic_f: c.parasitic,
            series: c.series,
        }),
        target,
    };
    let report = design(&input)?;
    if c.json {
        println!("{}", serde_json::to_string_pretty(&report)?);
    } else {
        print!("{}", to_text(&report));
    }
    Ok(())
}
