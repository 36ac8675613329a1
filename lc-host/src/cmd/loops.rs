//! `lc-host loops`: mutual inductance of two coaxial circular loops.

use super::{length, radius_or_diameter};
use anyhow::{bail, Result};
use lc_host::coil::filament::mutual_inductance_coaxial_h;
use lc_host::coil::MU0_H_PER_M;
use lc_host::quantity::eng;
use std::f64::consts::PI;

/// Mutual inductance of two coaxial circular loops (Maxwell's formula)
///
/// M = µ0·√(ab)·[(2/k − k)·K(k) − (2/k)·E(k)], k² = 4ab/((a + b)² + d²), for loops of radii
/// a and b whose planes are d apart on a common axis (Maxwell 1873, Art. 701). Also prints
/// the far-field approximation µ0·π·a²·b²/(2·(a² + d²)^{3/2}), good when the smaller loop
/// is far away. Multiply by the turns of each coil for two thin coils. Each loop's size is
/// a radius or a diameter; lengths need a unit (20mm, 0.5in). Sources and check values:
/// docs/references.md, Coaxial loops.
///
/// Example (two 20 mm loops 5 mm apart; 11.13 nH):
///
///   lc-host loops --diameter-1 20mm --diameter-2 20mm --distance 5mm
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
#[command(group(clap::ArgGroup::new("first").required(true).args(["radius_1", "diameter_1"])))]
#[command(group(clap::ArgGroup::new("second").required(true).args(["radius_2", "diameter_2"])))]
pub struct Args {
    /// Radius of the first loop, e.g. 10mm
    #[arg(long, value_parser = length)]
    radius_1: Option<f64>,
    /// Diameter of the first loop (instead of --radius-1)
    #[arg(long, value_parser = length)]
    diameter_1: Option<f64>,
    /// Radius of the second loop
    #[arg(long, value_parser = length)]
    radius_2: Option<f64>,
    /// Diameter of the second loop (instead of --radius-2)
    #[arg(long, value_parser = length)]
    diameter_2: Option<f64>,
    /// Distance between the loops' planes along the axis (0 for concentric loops)
    #[arg(long, value_parser = length, allow_hyphen_values = true)]
    distance: f64,
    /// Print JSON instead of text
    #[arg(long)]
    json: bool,
}

pub fn run(a: Args) -> Result<()> {
    let r1 = radius_or_diameter(a.radius_1, a.diameter_1, "first loop")?;
    let r2 = radius_or_diameter(a.radius_2, a.diameter_2, "second loop")?;
    let d = a.distance;
    if !d.is_finite() {
        bail!("--distance must be finite");
    }
    if r1 == r2 && d == 0.0 {
        bail!("the loops coincide (same radius, --distance 0): their mutual inductance is infinite; give a distance or the wire's size via `lc-host coil`");
    }
    let m = mutual_inductance_coaxial_h(r1, r2, d);
    let modulus = (4.0 * r1 * r2 / ((r1 + r2).powi(2) + d * d)).sqrt();
    let (small, big) = if r1 <= r2 { (r1, r2) } else { (r2, r1) };
    let far = MU0_H_PER_M * PI * small * small * big * big / (2.0 * (big * big + d * d).powf(1.5));
    if a.json {
        let v = serde_json::json!({
            "radius_1_m": r1,
            "radius_2_m": r2,
            "distance_m": d,
            "mutual_inductance_h": m,
            "modulus_k": modulus,
            "far_field_h": far,
        });
        println!("{}", serde_json::to_string_pretty(&v)?);
    } else {
        println!(
            "coaxial loops: radii {} and {}, {} apart",
            eng(r1, "m"),
            eng(r2, "m"),
            eng(d.abs(), "m")
        );
        println!("  mutual inductance M     {}", eng(m, "H"));
        println!("  modulus k               {modulus:.6}");
        println!(
            "  far-field approximation {} ({:+.2} % from M)",
            eng(far, "H"),
            (far / m - 1.0) * 100.0
        );
    }
    Ok(())
}
