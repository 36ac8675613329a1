//! `lc-host volume`: a tank's volume at a level, from its shape or from a
//! strapping table.

use super::{length, open_input, radius_or_diameter};
use anyhow::{bail, Result};
use lc_core::geometry::TankShape;
use lc_host::volume::{StrappingTable, Tank};
use std::path::PathBuf;

/// Tank volume at a level: a horizontal or vertical cylinder, a rectangular tank, or a
/// strapping table
///
/// Horizontal cylinder: the circular segment A(h) = R²·acos((R − h)/R) − (R − h)·√(2Rh − h²)
/// times the length; vertical cylinder V = πR²h; rectangular V = width·depth·h. A strapping
/// table (CSV: level_m|level_cm|level_mm and volume_m3|volume_l|volume_ml columns; see
/// docs/formats.md) is interpolated with the monotone cubic of Fritsch & Butland (1984), the
/// one the firmware's volume table uses; levels outside it are errors. Give levels with
/// --level (repeatable) or a table of --steps even levels over the whole tank. Check values:
/// docs/references.md, Horizontal tank cases.
///
/// Examples (the demo coolant tank; a certificate's table):
///
///   lc-host volume --shape horizontal-cylinder --diameter 400mm --length 1m --level 50mm
///   lc-host volume tank-strapping.csv --steps 10
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// A strapping table (CSV), instead of --shape; `-` reads standard input
    #[arg(conflicts_with = "shape")]
    strapping: Option<PathBuf>,
    /// Tank shape: horizontal-cylinder, vertical-cylinder or rectangular
    #[arg(long, value_parser = ["horizontal-cylinder", "vertical-cylinder", "rectangular"])]
    shape: Option<String>,
    /// Cylinder radius
    #[arg(long, value_parser = length, conflicts_with = "diameter")]
    radius: Option<f64>,
    /// Cylinder diameter (instead of --radius), e.g. 400mm
    #[arg(long, value_parser = length)]
    diameter: Option<f64>,
    /// Length of a horizontal cylinder, e.g. 1m
    #[arg(long, value_parser = length)]
    length: Option<f64>,
    /// Height of a vertical cylinder or rectangular tank
    #[arg(long, value_parser = length)]
    height: Option<f64>,
    /// Inner width of a rectangular tank
    #[arg(long, value_parser = length)]
    width: Option<f64>,
    /// Inner depth (front to back) of a rectangular tank
    #[arg(long, value_parser = length)]
    depth: Option<f64>,
    /// Level above the tank's lowest point, e.g. 50mm (repeatable)
    #[arg(long, value_parser = length)]
    level: Vec<f64>,
    /// Without --level: this many even steps from empty to full (1–10000)
    #[arg(long, default_value_t = 10, value_parser = clap::value_parser!(u32).range(1..=10_000))]
    steps: u32,
    /// Print JSON instead of a table
    #[arg(long)]
    json: bool,
}

fn tank(a: &Args) -> Result<Tank> {
    if let Some(path) = &a.strapping {
        let input = open_input(path, "strapping table")?;
        return Ok(Tank::Strapping(StrappingTable::read(input, path)?));
    }
    let need = |v: Option<f64>, flag: &str| -> Result<f64> {
        match v {
            Some(x) if x.is_finite() && x > 0.0 => Ok(x),
            Some(_) => bail!("{flag} must be above zero"),
            None => bail!("this shape needs {flag}"),
        }
    };
    let shape = match a.shape.as_deref() {
        Some("horizontal-cylinder") => TankShape::HorizontalCylinder {
            radius_m: radius_or_diameter(a.radius, a.diameter, "cylinder")?,
            length_m: need(a.length, "--length")?,
        },
        Some("vertical-cylinder") => TankShape::VerticalCylinder {
            radius_m: radius_or_diameter(a.radius, a.diameter, "cylinder")?,
            height_m: need(a.height, "--height")?,
        },
        Some(_) => TankShape::Rectangular {
            base_area_m2: need(a.width, "--width")? * need(a.depth, "--depth")?,
            height_m: need(a.height, "--height")?,
        },
        None => bail!("give a strapping table (CSV file) or --shape"),
    };
    Ok(Tank::Shape(shape))
}

pub fn run(a: Args) -> Result<()> {
    let tank = tank(&a)?;
    let (lo, hi) = tank.span_m();
    let levels: Vec<f64> = if a.level.is_empty() {
        (0..=a.steps)
            .map(|i| lo + (hi - lo) * f64::from(i) / f64::from(a.steps))
            .collect()
    } else {
        a.level.clone()
    };
    let full = tank.volume_m3(hi)? - tank.volume_m3(lo)?;
    let mut rows = Vec::with_capacity(levels.len());
    for &h in &levels {
        let v = tank.volume_m3(h)?;
        rows.push(serde_json::json!({
            "level_m": h,
            "volume_m3": v,
            "volume_l": v * 1e3,
            "fill_fraction": if full > 0.0 { (v - tank.volume_m3(lo)?) / full } else { 0.0 },
        }));
    }
    if a.json {
        let source = match &tank {
            Tank::Shape(TankShape::HorizontalCylinder { radius_m, length_m }) => serde_json::json!(
                {"shape": "horizontal-cylinder", "radius_m": radius_m, "length_m": length_m}
            ),
            Tank::Shape(TankShape::VerticalCylinder { radius_m, height_m }) => serde_json::json!(
                {"shape": "vertical-cylinder", "radius_m": radius_m, "height_m": height_m}
            ),
            Tank::Shape(TankShape::Rectangular {
                base_area_m2,
                height_m,
            }) => serde_json::json!(
                {"shape": "rectangular", "base_area_m2": base_area_m2, "height_m": height_m}
            ),
            Tank::Strapping(t) => serde_json::json!({"shape": "strapping", "rows": t.len()}),
        };
        let v = serde_json::json!({"tank": source, "full_volume_m3": full, "rows": rows});
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    match &tank {
        Tank::Shape(_) => println!(
            "{}: {:.1} mm high, {:.3} L full",
            a.shape.as_deref().unwrap_or("tank"),
            hi * 1e3,
            full * 1e3
        ),
        Tank::Strapping(t) => println!(
            "strapping table, {} rows, {:.1} … {:.1} mm, {:.3} L over its span",
            t.len(),
            lo * 1e3,
            hi * 1e3,
            full * 1e3
        ),
    }
    println!(
        "  {:>12} {:>14} {:>8}",
        "level (mm)", "volume (L)", "fill (%)"
    );
    for r in rows {
        let g = |k: &str| r[k].as_f64().unwrap_or(f64::NAN);
        println!(
            "  {:>12.2} {:>14.4} {:>8.3}",
            g("level_m") * 1e3,
            g("volume_l"),
            g("fill_fraction") * 100.0
        );
    }
    Ok(())
}
