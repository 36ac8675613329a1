//! `lc-host budget`: resolution and temperature budget of a readout set-up.

use super::{count_u32, load_image, si};
use anyhow::{anyhow, bail, Result};
use lc_host::budget::{budget, class1_tempco_ppm_per_k, to_text, BudgetInput, Gating};
use std::path::PathBuf;

/// Size the readout: what one count is worth, what temperature costs, which gate you need
///
/// From the reference clock, the gate and the tank (L, C and their tolerances, the
/// capacitor's EIA class-1 code, parasitics) over a temperature range: the resonant
/// frequency, counts per gate, the quantisation step as frequency and as shift (= ΔL/L =
/// ΔC/C), the reference clock's tolerance as a shift error, the temperature drift before
/// and after per-unit compensation, and the gate that reaches a requested resolution.
/// With --image, the resolution and temperature errors at each curve node in output
/// units. Values take SI prefixes: 7.25u, 100p, 48M; tolerances take %.
///
/// Example (the demo proximity sensor):
///
///   lc-host budget --reference-hz 48M --gate-cycles 16384 --inductance 7.25u \
///     --capacitance 100p --parasitic 10p --dielectric C0G --temp-range -20:85
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Reference clock, Hz
    #[arg(long, value_parser = si)]
    reference_hz: f64,
    /// Reference clock tolerance over the temperature range, ppm
    #[arg(long, default_value_t = 0.0)]
    reference_ppm: f64,
    /// Reciprocal gate: whole sensor cycles per reading (1 to 4294967295; 16k accepted)
    #[arg(long, conflicts_with = "gate_time", value_parser = count_u32::<1, { u32::MAX }>)]
    gate_cycles: Option<u32>,
    /// Gate time in seconds (reciprocal: rounded to whole cycles; with --direct: fixed)
    #[arg(long, value_parser = si)]
    gate_time: Option<f64>,
    /// Direct gating: fixed gate time, count sensor cycles
    #[arg(long, requires = "gate_time")]
    direct: bool,
    /// Coil inductance, H
    #[arg(long, value_parser = si)]
    inductance: f64,
    /// Inductance tolerance (0.02 or 2%)
    #[arg(long, value_parser = fraction, default_value = "0")]
    inductance_tol: f64,
    /// Coil inductance temperature coefficient, ppm/K
    #[arg(long, default_value_t = 0.0)]
    inductance_tempco_ppm: f64,
    /// Tank capacitor, F
    #[arg(long, value_parser = si)]
    capacitance: f64,
    /// Capacitor tolerance (0.01 or 1%)
    #[arg(long, value_parser = fraction, default_value = "0")]
    capacitance_tol: f64,
    /// Parasitic capacitance in parallel, F
    #[arg(long, value_parser = si, default_value = "0")]
    parasitic: f64,
    /// Capacitor dielectric, an EIA class-1 code such as C0G, U2J, P2H
    #[arg(long, default_value = "C0G")]
    dielectric: String,
    /// Temperature range MIN:MAX, °C
    #[arg(long, default_value = "-20:85", value_parser = range, allow_hyphen_values = true)]
    temp_range: (f64, f64),
    /// Reference temperature, °C
    #[arg(long, default_value_t = 25.0)]
    reference_temp: f64,
    /// Calibration temperatures, °C, comma-separated
    #[arg(long, default_value = "25,60", value_delimiter = ',')]
    cal_temps: Vec<f64>,
    /// A calibration image, for per-node resolution in output units
    #[arg(long)]
    image: Option<PathBuf>,
    /// Shift resolution to reach, ppm: prints the gate needed
    #[arg(long)]
    resolution_ppm: Option<f64>,
    /// Print JSON instead of a table
    #[arg(long)]
    json: bool,
}

fn fraction(s: &str) -> Result<f64, String> {
    match s.trim().strip_suffix('%') {
        Some(p) => p
            .trim()
            .parse::<f64>()
            .map(|v| v / 100.0)
            .map_err(|_| format!("{s:?} is not a percentage")),
        None => s
            .trim()
            .parse::<f64>()
            .map_err(|_| format!("{s:?} is not a fraction such as 0.02 or 2%")),
    }
}

fn range(s: &str) -> Result<(f64, f64), String> {
    let (a, b) = s
        .split_once(':')
        .ok_or("expected MIN:MAX, for example -20:85")?;
    let a: f64 = a
        .trim()
        .parse()
        .map_err(|_| format!("{a:?} is not a temperature"))?;
    let b: f64 = b
        .trim()
        .parse()
        .map_err(|_| format!("{b:?} is not a temperature"))?;
    if a > b {
        return Err(format!("{a} is above {b}"));
    }
    Ok((a, b))
}

pub fn run(a: Args) -> Result<()> {
    let tempco = class1_tempco_ppm_per_k(&a.dielectric)
        .ok_or_else(|| anyhow!("--dielectric {:?}: not an EIA class-1 code (letter, digit, tolerance letter: C0G, U2J, P2H, …)", a.dielectric))?;
    if a.inductance <= 0.0 || a.capacitance <= 0.0 || a.reference_hz <= 0.0 {
        bail!("--inductance, --capacitance and --reference-hz must be positive");
    }
    if a.parasitic < 0.0 {
        bail!("--parasitic must not be negative");
    }
    if let Some(t) = a.gate_time {
        if !(t > 0.0 && t.is_finite()) {
            bail!("--gate-time must be above zero, for example 1m (one millisecond)");
        }
    }
    let f = lc_core::tank::resonant_frequency_with_parasitic_hz(
        a.inductance,
        a.capacitance,
        a.parasitic,
    );
    let (gating, gate) = match (a.gate_cycles, a.gate_time, a.direct) {
        (Some(n), _, _) => (Gating::Reciprocal, f64::from(n)),
        (None, Some(t), true) => (Gating::Direct, t),
        (None, Some(t), false) => (Gating::Reciprocal, (t * f).round().max(1.0)),
        (None, None, _) => {
            bail!("give the gate: --gate-cycles N (reciprocal) or --gate-time S [--direct]")
        }
    };
    let curve = match &a.image {
        Some(p) => {
            let cal = load_image(p)?;
            cal.curve.map(|t| *t.curve()).map(|c| {
                (
                    c,
                    format!(
                        "1e{} {}",
                        cal.output.decimal_exponent,
                        cal.output.unit.symbol()
                    ),
                )
            })
        }
        None => None,
    };
    let input = BudgetInput {
        reference_hz: a.reference_hz,
        reference_ppm: a.reference_ppm,
        gating,
        gate,
        inductance_h: (a.inductance, a.inductance_tol),
        capacitance_f: (a.capacitance, a.capacitance_tol),
        parasitic_f: a.parasitic,
        capacitor_tempco_ppm: tempco,
        inductance_tempco_ppm: a.inductance_tempco_ppm,
        temperature_c: (a.temp_range.0, a.temp_range.1, a.reference_temp),
        calibration_temps_c: a.cal_temps.clone(),
        target_resolution: a.resolution_ppm.map(|p| p * 1e-6),
    };
    let report = budget(&input, curve.as_ref().map(|c| &c.0));
    if a.json {
        println!("{}", serde_json::to_string_pretty(&report)?);
    } else {
        println!(
            "readout budget ({} capacitor, {} … {} °C):",
            a.dielectric, a.temp_range.0, a.temp_range.1
        );
        print!(
            "{}",
            to_text(
                &report,
                curve.as_ref().map_or("output units", |c| c.1.as_str())
            )
        );
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fractions_and_ranges() {
        assert_eq!(fraction("2%"), Ok(0.02));
        assert_eq!(range("-20:85"), Ok((-20.0, 85.0)));
    }
}
