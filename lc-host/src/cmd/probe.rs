//! `lc-host probe`: a coaxial level probe's capacitance and what it does to
//! the tank.

use super::{count_u32, length, radius_or_diameter, si};
use anyhow::{bail, Result};
use lc_core::geometry::CoaxialProbe;
use lc_host::liquid;

/// Size a coaxial level probe: capacitance against level, and the tank's frequency and shift
///
/// C(h) = C'_gas·(H − h) + C'_liquid·h with C' = 2π·ε0·εr / ln(b/a) (end effects neglected;
/// docs/coil.md). The liquid's permittivity: water by Malmberg & Maryott (1956) at the given
/// temperature, or a CRC Handbook value at 20 °C (ethanol, glycerol, ethylene-glycol,
/// n-hexadecane for diesel, …; `--liquid list`). With the tank's L and C, the resonant
/// frequency and the shift s = ΔC/C at each level: what the firmware will see.
///
/// Example (the demo coolant tank's probe):
///
///   lc-host probe --length 400mm --inner 5mm --outer 20mm --liquid water --temperature 25 \
///     --tank-l 22u --tank-c 1n --parasitic 15p
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Active length of the probe (e.g. 400mm)
    #[arg(long, value_parser = length)]
    length: f64,
    /// Outer radius of the inner conductor (e.g. 5mm)
    #[arg(long, visible_alias = "inner-radius", value_parser = length, required_unless_present = "inner_diameter", conflicts_with = "inner_diameter")]
    inner: Option<f64>,
    /// Outer diameter of the inner conductor, instead of --inner
    #[arg(long, value_parser = length)]
    inner_diameter: Option<f64>,
    /// Inner radius of the outer tube (e.g. 20mm)
    #[arg(long, visible_alias = "outer-radius", value_parser = length, required_unless_present = "outer_diameter", conflicts_with = "outer_diameter")]
    outer: Option<f64>,
    /// Inner diameter of the outer tube, instead of --outer
    #[arg(long, value_parser = length)]
    outer_diameter: Option<f64>,
    /// The liquid (`list` shows the known names)
    #[arg(long, default_value = "water")]
    liquid: String,
    /// Liquid temperature, °C (water: 0 to 100 °C, the range of its formula)
    #[arg(
        long,
        alias = "temp",
        default_value_t = 25.0,
        allow_hyphen_values = true
    )]
    temperature: f64,
    /// Tank inductance, H (with --tank-c: frequencies and shifts)
    #[arg(long, value_parser = si)]
    tank_l: Option<f64>,
    /// Tank capacitor, F
    #[arg(long, value_parser = si)]
    tank_c: Option<f64>,
    /// Parasitic capacitance in parallel, F
    #[arg(long, value_parser = si, default_value = "0")]
    parasitic: f64,
    /// Levels in the table, evenly from empty to full (1 to 10000)
    #[arg(long, default_value_t = 10, value_parser = count_u32::<1, 10_000>)]
    steps: u32,
    /// Print JSON instead of a table
    #[arg(long)]
    json: bool,
}

pub fn run(a: Args) -> Result<()> {
    if a.liquid == "list" {
        for n in liquid::names() {
            println!("{n}");
        }
        return Ok(());
    }
    let eps = liquid::permittivity(&a.liquid, a.temperature)?;
    if !eps.temperature_model && (a.temperature - 20.0).abs() > 5.0 {
        eprintln!(
            "warning: {}'s permittivity is the CRC Handbook value at 20 °C; it has no temperature model, so at {} °C the real value differs",
            a.liquid, a.temperature
        );
    }
    let inner = radius_or_diameter(a.inner, a.inner_diameter, "inner conductor")?;
    let outer = radius_or_diameter(a.outer, a.outer_diameter, "outer tube")?;
    if !(outer > inner && a.length > 0.0) {
        bail!("need the outer tube wider than the inner conductor, and a positive --length");
    }
    let probe = CoaxialProbe {
        length_m: a.length,
        inner_radius_m: inner,
        outer_radius_m: outer,
    };
    let tank = a.tank_l.zip(a.tank_c);
    let rows: Vec<serde_json::Value> = (0..=a.steps)
        .map(|i| {
            let h = a.length * f64::from(i) / f64::from(a.steps);
            let c = probe.immersed_capacitance_f(h, eps.value, 1.0);
            let (f, s) = match tank {
                Some((l, ct)) => {
                    let c0 = ct + a.parasitic + probe.immersed_capacitance_f(0.0, eps.value, 1.0);
                    let f = lc_core::tank::resonant_frequency_hz(l, ct + a.parasitic + c);
                    (Some(f), Some((ct + a.parasitic + c) / c0 - 1.0))
                }
                None => (None, None),
            };
            serde_json::json!({"level_m": h, "probe_f": c, "frequency_hz": f, "shift": s})
        })
        .collect();
    if a.json {
        let v = serde_json::json!({"liquid": a.liquid, "permittivity": eps, "rows": rows});
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "coaxial probe {:.1} mm long, a = {:.2} mm, b = {:.2} mm; {} εr = {:.3} ({}{})",
        a.length * 1e3,
        inner * 1e3,
        outer * 1e3,
        a.liquid,
        eps.value,
        eps.source,
        if eps.temperature_model {
            format!(", {} °C", a.temperature)
        } else {
            ", no temperature model".to_string()
        }
    );
    println!(
        "  {:>10} {:>12} {:>14} {:>12}",
        "level (mm)", "probe (pF)", "tank f (kHz)", "shift (ppm)"
    );
    for r in rows {
        let g = |k: &str| r[k].as_f64();
        println!(
            "  {:>10.1} {:>12.3} {:>14} {:>12}",
            g("level_m").unwrap_or(0.0) * 1e3,
            g("probe_f").unwrap_or(0.0) * 1e12,
            g("frequency_hz").map_or("-".into(), |f| format!("{:.3}", f / 1e3)),
            g("shift").map_or("-".into(), |s| format!("{:.0}", s * 1e6)),
        );
    }
    Ok(())
}
