//! `lc-host inspect`: decode, validate and print a calibration image.

use super::load_image;
use anyhow::Result;
use lc_core::image::{Calibration, ReaderKind, Table, CRC32};
use std::path::PathBuf;

/// Decode, validate and print a calibration image
///
/// Checks the image exactly as the firmware does (length, magic, version, CRC-32, every
/// field; docs/image-format.md) and prints what it holds: reader, serial, counter set-up,
/// rest point, drift model, output scale, curve nodes, volume table, metal parameters.
/// A broken image is reported with the check that failed; the exit code is then 1.
///
/// Example:
///
///   lc-host inspect out/images/DEMO-01-0007.lcim
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// The image file
    image: PathBuf,
    /// Print JSON instead of text
    #[arg(long)]
    json: bool,
}

fn table_json(t: &Table) -> serde_json::Value {
    serde_json::json!({
        "interpolation": if t.is_cubic() { "monotone_cubic" } else { "linear" },
        "nodes": t.nodes().iter().map(|n| serde_json::json!({"shift": n.shift.to_f64(), "shift_q40": n.shift.raw_q40(), "value": n.value})).collect::<Vec<_>>(),
        "derivatives_q16": t.derivatives_q16(),
    })
}

/// The reader kind as a word ("proximity", "level", "metal").
fn kind_name(kind: ReaderKind) -> &'static str {
    match kind {
        ReaderKind::Proximity => "proximity",
        ReaderKind::Level => "level",
        ReaderKind::Metal => "metal",
    }
}

/// The calibration as JSON.
pub fn to_json(cal: &Calibration, crc: u32, len: usize) -> serde_json::Value {
    let (b1, b2) = cal.drift.coefficients_f64();
    serde_json::json!({
        "kind": kind_name(cal.kind),
        "serial": cal.serial.as_str(),
        "length_bytes": len,
        "crc32": format!("{crc:08X}"),
        "reference_hz": cal.reference_hz,
        "gate_cycles": cal.gate_cycles,
        "window": {"min_hz": cal.window.min_hz(), "max_hz": cal.window.max_hz(), "min_cycles": cal.window.min_cycles()},
        "rest_ratio": cal.rest.to_f64(),
        "rest_frequency_hz": f64::from(cal.reference_hz) / cal.rest.to_f64(),
        "companion_rest_ratio": cal.companion_rest.map(|r| r.to_f64()),
        "drift": {"reference_c": cal.drift.reference().to_f64(), "b1_ppm_per_k": b1 * 1e6, "b2_ppm_per_k2": b2 * 1e6},
        "output": {"unit": cal.output.unit.symbol(), "decimal_exponent": cal.output.decimal_exponent},
        "curve": cal.curve.as_ref().map(table_json),
        "volume": cal.volume.as_ref().map(|(t, s)| serde_json::json!({"table": table_json(t), "unit": s.unit.symbol(), "decimal_exponent": s.decimal_exponent})),
        "metal": cal.metal.map(|m| serde_json::json!({
            "enter_ppm": f64::from(m.enter_ppb) / 1e3, "leave_ppm": f64::from(m.leave_ppb) / 1e3,
            "enter_samples": m.enter_samples, "leave_samples": m.leave_samples, "baseline_k": m.baseline_k,
            "ring_drop": m.ring_drop, "relearn_readings": m.relearn_readings})),
    })
}

/// The calibration as readable text.
pub fn to_text(cal: &Calibration, crc: u32, len: usize) -> String {
    let (b1, b2) = cal.drift.coefficients_f64();
    let mut s = String::new();
    let unit = |exp: i8, u: &str| format!("1e{exp} {u}");
    s += &format!("calibration image, format 1, {len} bytes, CRC-32 {crc:08X}: valid\n");
    s += &format!("  reader        {}\n", kind_name(cal.kind));
    s += &format!("  serial        {}\n", cal.serial.as_str());
    s += &format!(
        "  reference     {} Hz, gate {} cycles\n",
        cal.reference_hz, cal.gate_cycles
    );
    s += &format!(
        "  fault window  {} … {} Hz, at least {} cycles\n",
        cal.window.min_hz(),
        cal.window.max_hz(),
        cal.window.min_cycles()
    );
    s += &format!(
        "  rest point    {:.9} ticks/cycle ({:.1} Hz)\n",
        cal.rest.to_f64(),
        f64::from(cal.reference_hz) / cal.rest.to_f64()
    );
    if let Some(c) = cal.companion_rest {
        s += &format!("  companion     {:.9} ticks/cycle at rest\n", c.to_f64());
    }
    s += &format!(
        "  drift model   reference {}, b1 {:+.3} ppm/K, b2 {:+.5} ppm/K²\n",
        cal.drift.reference(),
        b1 * 1e6,
        b2 * 1e6
    );
    if cal.kind != ReaderKind::Metal {
        s += &format!(
            "  output        {}\n",
            unit(cal.output.decimal_exponent, cal.output.unit.symbol())
        );
    }
    if let Some(t) = &cal.curve {
        s += &format!(
            "  curve         {} nodes, {}\n      shift (ppm)        value\n",
            t.nodes().len(),
            if t.is_cubic() {
                "monotone cubic"
            } else {
                "linear"
            }
        );
        for n in t.nodes() {
            s += &format!("  {:>18.3} {:>12}\n", n.shift.to_ppm_f64(), n.value);
        }
    }
    if let Some((t, sc)) = &cal.volume {
        s += &format!(
            "  volume table  {} nodes, volume in {}\n",
            t.nodes().len(),
            unit(sc.decimal_exponent, sc.unit.symbol())
        );
        for n in t.nodes() {
            s += &format!(
                "  {:>18} {:>12}\n",
                lc_core::geometry::shift_to_level(n.shift),
                n.value
            );
        }
    }
    if let Some(m) = cal.metal {
        s += &format!(
            "  metal         enter {} ppm / leave {} ppm, debounce {}/{}, baseline 2^-{}, ring drop {}, relearn after {} readings\n",
            f64::from(m.enter_ppb) / 1e3,
            f64::from(m.leave_ppb) / 1e3,
            m.enter_samples,
            m.leave_samples,
            m.baseline_k,
            m.ring_drop,
            m.relearn_readings
        );
    }
    s
}

pub fn run(a: Args) -> Result<()> {
    let cal = load_image(&a.image)?;
    let bytes = std::fs::read(&a.image)?;
    let len = cal.encoded_len();
    let crc = CRC32.checksum(bytes.get(..len.saturating_sub(4)).unwrap_or(&[]));
    if a.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&to_json(&cal, crc, len))?
        );
    } else {
        print!("{}", to_text(&cal, crc, len));
    }
    Ok(())
}
