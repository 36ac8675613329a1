//! `lc-host ntc`: fit an NTC law to calibration points, convert a
//! resistance or an ADC code to a temperature.

use super::si;
use anyhow::{bail, Result};
use lc_core::temperature::{CalibrationPoint, NtcPosition};
use lc_host::ntc::{convert_code, convert_resistance, fit, AdcDivider, Law};
use lc_host::quantity::eng;

/// NTC thermistors: fit a law to calibration points, convert a resistance or an ADC code
///
/// `fit` takes two points (the Beta model) or three (Steinhart–Hart, Steinhart & Hart 1968)
/// as TEMP:OHMS and prints the law, its Steinhart–Hart coefficients and how it reproduces
/// the points. `convert` takes a law and a resistance, or an ADC code with its divider, and
/// prints the temperature in f64 and, for a code, the firmware's reading through lc-core's
/// fixed-point converter. Check values: docs/references.md, NTC cases.
///
/// Examples:
///
///   lc-host ntc fit --point 0:32650 --point 25:10k --point 50:3600
///   lc-host ntc convert --beta 3950 --r25 10k --code 21845 --adc-bits 16 --series 10k
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    #[command(subcommand)]
    what: What,
}

#[derive(clap::Subcommand)]
enum What {
    /// Fit Beta (two points) or Steinhart–Hart (three points)
    ///
    /// Example: lc-host ntc fit --point 0:32650 --point 50:3600
    Fit {
        /// A calibration point TEMP:OHMS (°C and Ω; SI prefixes: 25:10k); two or three
        #[arg(long = "point", value_parser = point, allow_hyphen_values = true, required = true)]
        points: Vec<CalibrationPoint>,
        /// Print JSON instead of text
        #[arg(long)]
        json: bool,
    },
    /// Temperature from a resistance, or from an ADC code and its divider
    ///
    /// Example: lc-host ntc convert --steinhart-hart 1.1315e-3,2.3375e-4,8.898e-8 --resistance 5k
    #[command(group(clap::ArgGroup::new("law").required(true).args(["beta", "steinhart_hart"])))]
    #[command(group(clap::ArgGroup::new("input").required(true).args(["resistance", "code"])))]
    Convert {
        /// Beta constant, K (with --r25)
        #[arg(long, requires = "r25")]
        beta: Option<f64>,
        /// Resistance at 25 °C, Ω (with --beta), e.g. 10k
        #[arg(long, value_parser = si)]
        r25: Option<f64>,
        /// Steinhart–Hart A,B,C (1/K)
        #[arg(long, value_delimiter = ',', allow_hyphen_values = true)]
        steinhart_hart: Option<Vec<f64>>,
        /// The NTC's resistance, Ω, e.g. 4.7k
        #[arg(long, value_parser = si)]
        resistance: Option<f64>,
        /// An ADC code (needs --adc-bits and --series)
        #[arg(long, requires_all = ["adc_bits", "series"])]
        code: Option<u32>,
        /// ADC resolution, bits (8–24)
        #[arg(long)]
        adc_bits: Option<u32>,
        /// Series resistor of the divider, Ω (whole ohms), e.g. 10k
        #[arg(long, value_parser = si)]
        series: Option<f64>,
        /// Where the NTC sits: low (node to ground; the code falls as it warms) or high
        #[arg(long, default_value = "low", value_parser = ["low", "high"])]
        ntc: String,
        /// Print JSON instead of text
        #[arg(long)]
        json: bool,
    },
}

/// `TEMP:OHMS`, e.g. `25:10k` or `-20:105.4k`.
fn point(s: &str) -> Result<CalibrationPoint, String> {
    let (t, r) = s
        .split_once(':')
        .ok_or_else(|| format!("{s:?}: expected TEMP:OHMS, for example 25:10k"))?;
    let t: f64 = t
        .trim()
        .parse()
        .ok()
        .filter(|v: &f64| v.is_finite())
        .ok_or_else(|| format!("{t:?} is not a temperature in °C"))?;
    let r = lc_host::quantity::parse_si(r).map_err(|e| e.to_string())?;
    Ok(CalibrationPoint::new(t, r))
}

fn law_text(law: &Law) -> String {
    match *law {
        Law::Beta { r25_ohm, beta_k } => {
            format!("Beta: R25 = {}, B = {beta_k:.2} K", eng(r25_ohm, "Ω"))
        }
        Law::SteinhartHart { a, b, c } => {
            format!("Steinhart–Hart: A = {a:.10e}, B = {b:.10e}, C = {c:.10e}")
        }
    }
}

pub fn run(a: Args) -> Result<()> {
    match a.what {
        What::Fit { points, json } => {
            let f = fit(&points)?;
            if json {
                println!("{}", serde_json::to_string_pretty(&f)?);
                return Ok(());
            }
            println!("{}", law_text(&f.law));
            if let Law::Beta { .. } = f.law {
                let [sa, sb, sc] = f.steinhart_hart;
                println!("  as Steinhart–Hart: A = {sa:.10e}, B = {sb:.10e}, C = {sc:.10e}");
            }
            println!("  {:>10} {:>14} {:>12}", "T (°C)", "R (Ω)", "law (°C)");
            for p in &f.points {
                println!(
                    "  {:>10.3} {:>14.3} {:>12.6}",
                    p.temp_c, p.r_ohm, p.law_temp_c
                );
            }
        }
        What::Convert {
            beta,
            r25,
            steinhart_hart,
            resistance,
            code,
            adc_bits,
            series,
            ntc,
            json,
        } => {
            let law = match (beta, r25, steinhart_hart.as_deref()) {
                (Some(beta_k), Some(r25_ohm), None) => Law::Beta { r25_ohm, beta_k },
                (None, None, Some(&[a, b, c])) => Law::SteinhartHart { a, b, c },
                _ => bail!("give the law as --beta B --r25 OHMS or as --steinhart-hart A,B,C (three numbers)"),
            };
            let conv = match (resistance, code) {
                (Some(r), None) => convert_resistance(&law, r)?,
                (None, Some(code)) => {
                    let series = series.unwrap_or(0.0);
                    if !(series >= 1.0 && series.fract() == 0.0 && series <= f64::from(u32::MAX)) {
                        bail!("--series {series}: the firmware's divider takes a whole number of ohms from 1 to 4294967295");
                    }
                    let divider = AdcDivider {
                        adc_bits: adc_bits.unwrap_or(0),
                        // Exact: a whole number within u32, checked above.
                        series_ohm: series as u32,
                        position: if ntc == "high" {
                            NtcPosition::HighSide
                        } else {
                            NtcPosition::LowSide
                        },
                    };
                    convert_code(&law, divider, code)?
                }
                _ => bail!("give --resistance OHMS or --code N"),
            };
            if json {
                let v = serde_json::json!({"law": law, "conversion": conv});
                println!("{}", serde_json::to_string_pretty(&v)?);
                return Ok(());
            }
            println!("{}", law_text(&law));
            if let Some(code) = conv.code {
                println!("  ADC code                {code}");
            }
            println!(
                "  resistance              {}",
                eng(conv.resistance_ohm, "Ω")
            );
            println!("  temperature (f64)       {:.4} °C", conv.temperature_c);
            if let (Some(fw), Some(step), Some(name)) = (
                conv.firmware_temperature_c,
                conv.step_per_code_k,
                conv.firmware_converter,
            ) {
                println!("  firmware reading        {fw:.2} °C (lc-core {name})");
                println!("  one ADC code there      {step:.4} K");
            }
        }
    }
    Ok(())
}
