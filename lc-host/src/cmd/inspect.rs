//! `lc-host inspect`: decode, validate and print a calibration image.

use super::load_image;
use anyhow::Context;
use anyhow::{bail, Result};
use lc_core::image::{Calibration, ReaderKind, Table, CRC32};
use std::path::PathBuf;

/// Decode, validate and print a calibration image
///
/// Checks the image exactly as the firmware does (length, magic, version, CRC-32, every
/// field and every curve segment's stored constants; docs/image-format.md) and prints what
/// it holds: format, reader, serial, calibration time and plan, counter set-up, rest point,
/// drift model, output scale, curve nodes, volume table, metal parameters. A broken image
/// is reported with the check that failed; the exit code is then 1. Bytes after the
/// image's stated length are reported: erased flash (0xFF, a flash page read back whole) is
/// ignored; anything else (two images concatenated) is an error, since the file is then
/// not one image.
///
/// Images of the older formats are read too: format 1 (written before the per-segment
/// constants) and format 2 (without the reciprocals' exponents); the firmware refuses
/// them. `--rewrite OUT` writes the same calibration in the current format (3), with the
/// calibration time from `--time` (else SOURCE_DATE_EPOCH, else the image's own: 0,
/// unknown, for format 1) and the plan identity from `--plan` (else the image's own).
///
/// Examples:
///
///   lc-host inspect out/images/DEMO-01-0007.lcim
///   lc-host inspect old.lcim --rewrite new.lcim --plan plan.toml --time 1764547200
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// The image file
    image: PathBuf,
    /// Print JSON instead of text
    #[arg(long)]
    json: bool,
    /// Write the calibration in the current format (3) to this file
    #[arg(long, value_name = "OUT")]
    rewrite: Option<PathBuf>,
    /// With --rewrite: the calibration time to record, UTC Unix seconds
    #[arg(long, requires = "rewrite")]
    time: Option<i64>,
    /// With --rewrite: the plan file whose identity (SHA-256 of its text) to record
    #[arg(long, requires = "rewrite")]
    plan: Option<PathBuf>,
}

fn table_json(t: &Table) -> serde_json::Value {
    let view = t.curve().view();
    serde_json::json!({
        "interpolation": if t.is_cubic() { "monotone_cubic" } else { "linear" },
        "nodes": t.nodes().iter().map(|n| serde_json::json!({"shift": n.shift.to_f64(), "shift_q40": n.shift.raw_q40(), "value": n.value})).collect::<Vec<_>>(),
        "tangent_terms_q8": (0..t.nodes().len().saturating_sub(1)).filter_map(|i| view.tangent_terms_q8(i)).collect::<Vec<_>>(),
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

/// A plan identity as hex.
fn plan_hex(cal: &Calibration) -> String {
    cal.plan_id.0.iter().map(|b| format!("{b:02x}")).collect()
}

/// The calibration as JSON.
pub fn to_json(cal: &Calibration, format: u16, crc: u32, len: usize) -> serde_json::Value {
    let (b1, b2) = cal.drift.coefficients_f64();
    serde_json::json!({
        "format": format,
        "kind": kind_name(cal.kind),
        "calibrated_at": cal.calibrated_at,
        "plan_id": plan_hex(cal),
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
pub fn to_text(cal: &Calibration, format: u16, crc: u32, len: usize) -> String {
    let (b1, b2) = cal.drift.coefficients_f64();
    let mut s = String::new();
    let unit = |exp: i8, u: &str| format!("1e{exp} {u}");
    s += &format!("calibration image, format {format}, {len} bytes, CRC-32 {crc:08X}: valid\n");
    if format < lc_core::image::VERSION {
        s += &format!(
            "  (format {format}: the firmware refuses it; rewrite it in format {} with\n   `lc-host inspect IMAGE --rewrite OUT [--plan PLAN] [--time SECONDS]`)\n",
            lc_core::image::VERSION
        );
    }
    s += &format!("  reader        {}\n", kind_name(cal.kind));
    s += &format!("  serial        {}\n", cal.serial.as_str());
    if format >= lc_core::image::VERSION_2 {
        s += &format!(
            "  calibrated    {} (Unix seconds, UTC), plan {}\n",
            cal.calibrated_at,
            plan_hex(cal)
        );
    }
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
    let loaded = load_image(&a.image);
    let bytes = std::fs::read(&a.image)
        .with_context(|| format!("{}: cannot read the image", a.image.display()))?;
    let format = Calibration::format_version(&bytes).unwrap_or(0);
    let len = usize::from(u16::from_le_bytes([
        bytes.get(6).copied().unwrap_or(0),
        bytes.get(7).copied().unwrap_or(0),
    ]));
    let crc = CRC32.checksum(bytes.get(..len.saturating_sub(4)).unwrap_or(&[]));
    let trailing = Trailing::of(&bytes, len);
    // Bytes after a whole image: lc-core refuses them (unless erased); say
    // what they are when the image before them is sound (validated again
    // only in that case).
    if let Trailing::Data(n) = trailing {
        if bytes
            .get(..len)
            .is_some_and(|b| Calibration::parse(b).is_ok())
        {
            bail!(
            "{}: {n} bytes follow the image's stated length of {len} bytes and are not erased flash (0xFF): the file is not one image (two images concatenated, or other data); cut it to its first {len} bytes, or export the image again with `lc-host units export`",
                a.image.display()
            );
        }
    }
    let cal = loaded?;
    if a.json {
        let mut json = to_json(&cal, format, crc, len);
        json["trailing_erased_bytes"] = serde_json::json!(trailing.erased());
        println!("{}", serde_json::to_string_pretty(&json)?);
    } else {
        print!("{}", to_text(&cal, format, crc, len));
        if let Trailing::Erased(n) = trailing {
            println!(
                "  after it     {n} bytes of erased flash (0xFF) to the end of the file, ignored"
            );
        }
    }
    if let Some(out) = &a.rewrite {
        let mut new = cal;
        if let Some(plan) = &a.plan {
            let text = std::fs::read_to_string(plan)
                .with_context(|| format!("cannot read the plan {}", plan.display()))?;
            new.plan_id = lc_host::calib::plan::plan_id(&text);
        }
        if a.time.is_some() || std::env::var_os("SOURCE_DATE_EPOCH").is_some() {
            new.calibrated_at = lc_host::calib::plan::calibration_time(a.time);
        }
        let written = rewrite(&new, out)?;
        eprintln!(
            "wrote {} ({written} bytes, format {})",
            out.display(),
            lc_core::image::VERSION
        );
    }
    Ok(())
}

/// What follows an image's stated length in its file.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Trailing {
    /// Nothing: the file is the image.
    None,
    /// Erased flash (0xFF bytes), as in a flash page read back whole.
    Erased(usize),
    /// Other bytes: not one image.
    Data(usize),
}

impl Trailing {
    /// What follows the first `len` bytes of `bytes`.
    pub fn of(bytes: &[u8], len: usize) -> Self {
        match bytes.get(len..) {
            None | Some([]) => Trailing::None,
            Some(rest) if rest.iter().all(|&b| b == 0xFF) => Trailing::Erased(rest.len()),
            Some(rest) => Trailing::Data(rest.len()),
        }
    }

    /// The erased bytes after the image (0 when none).
    pub fn erased(self) -> usize {
        match self {
            Trailing::Erased(n) => n,
            _ => 0,
        }
    }
}

/// Writes `cal` as a current-format image to `out` (whole or not at all).
pub fn rewrite(cal: &Calibration, out: &std::path::Path) -> Result<usize> {
    let mut buf = [0u8; lc_core::image::MAX_IMAGE_LEN];
    let n = cal
        .encode(&mut buf)
        .map_err(|e| anyhow::anyhow!("{}: cannot encode the image: {e}", out.display()))?;
    lc_host::atomic::write_bytes(out, &buf[..n])
        .with_context(|| format!("cannot write {}", out.display()))?;
    Ok(n)
}
