//! The subcommands, and what they share: inputs, outputs, progress.

pub mod budget;
pub mod calibrate;
pub mod coil;
pub mod convert;
pub mod counts;
pub mod demo;
pub mod inspect;
pub mod listen;
pub mod loops;
pub mod ntc;
pub mod probe;
pub mod simulate;
pub mod units;
pub mod verify;
pub mod volume;

use anyhow::{Context, Result};
use lc_host::atomic::write_atomically;
use std::io::{BufReader, IsTerminal, Read, Write};
use std::path::Path;

/// A quantity with an optional SI prefix and unit (`48M`, `100pF`, `4.7k`):
/// the library's one parser, for clap.
pub fn si(s: &str) -> Result<f64, String> {
    lc_host::quantity::parse_si(s).map_err(|e| e.to_string())
}

/// A length with a unit (`20mm`, `300um`, `0.5in`), for clap.
pub fn length(s: &str) -> Result<f64, String> {
    lc_host::quantity::parse_length(s).map_err(|e| e.to_string())
}

/// A frequency in whole hertz with an optional SI prefix (`48M`, `48MHz`),
/// 1 Hz to 4 294 967 295 Hz.
pub fn hz_u32(s: &str) -> Result<u32, String> {
    let v = lc_host::quantity::parse_si(s).map_err(|e| e.to_string())?;
    if v.fract() != 0.0 || !(1.0..=f64::from(u32::MAX)).contains(&v) {
        return Err(format!(
            "{s:?} is not a whole number of hertz from 1 to 4294967295 (for example 48M)"
        ));
    }
    // Exact: a whole number within u32, checked above.
    Ok(v as u32)
}

/// A band `MIN:MAX` in hertz with SI prefixes (`1M:20M`), MIN ≤ MAX.
pub fn hz_band(s: &str) -> Result<(u32, u32), String> {
    let (a, b) = s
        .split_once(':')
        .ok_or_else(|| format!("{s:?}: expected MIN_HZ:MAX_HZ, for example 1M:20M"))?;
    let (a, b) = (hz_u32(a)?, hz_u32(b)?);
    if a > b {
        return Err(format!("{s:?}: the lower frequency is above the upper"));
    }
    Ok((a, b))
}

/// A whole count from `MIN` to `MAX` (SI prefixes k, M, G accepted), for
/// options that size work or memory.
pub fn count_u32<const MIN: u32, const MAX: u32>(s: &str) -> Result<u32, String> {
    lc_host::quantity::parse_count(s, u64::from(MIN), u64::from(MAX))
        .map_err(|e| e.to_string())
        .and_then(|v| u32::try_from(v).map_err(|e| e.to_string()))
}

/// As [`count_u32`], for `u64` options.
pub fn count_u64<const MIN: u64, const MAX: u64>(s: &str) -> Result<u64, String> {
    lc_host::quantity::parse_count(s, MIN, MAX).map_err(|e| e.to_string())
}

/// As [`count_u32`], for `usize` options.
pub fn count_usize<const MIN: u32, const MAX: u32>(s: &str) -> Result<usize, String> {
    count_u32::<MIN, MAX>(s).and_then(|v| usize::try_from(v).map_err(|e| e.to_string()))
}

/// A radius from `--radius` or, halved, from `--diameter` (exactly one of
/// them; clap's groups enforce it), positive.
pub fn radius_or_diameter(radius: Option<f64>, diameter: Option<f64>, what: &str) -> Result<f64> {
    let r = match (radius, diameter) {
        (Some(r), None) => r,
        (None, Some(d)) => d / 2.0,
        _ => anyhow::bail!("give the {what} as a radius or as a diameter, not both"),
    };
    if !(r.is_finite() && r > 0.0) {
        anyhow::bail!("the {what} must be above zero");
    }
    Ok(r)
}

/// Opens a file, or standard input for `-`.
pub fn open_input(path: &Path, what: &str) -> Result<Box<dyn Read>> {
    Ok(if path.as_os_str() == "-" {
        Box::new(BufReader::with_capacity(1 << 16, std::io::stdin().lock()))
    } else {
        let f = std::fs::File::open(path)
            .with_context(|| format!("cannot open {what} {}", path.display()))?;
        Box::new(BufReader::with_capacity(1 << 16, f))
    })
}

/// Runs `body` on the output: a file written atomically, or standard output
/// when the path is absent or `-`.
pub fn with_output<T>(
    path: Option<&Path>,
    body: impl FnOnce(&mut dyn Write) -> Result<T>,
) -> Result<T> {
    match path {
        Some(p) if p.as_os_str() != "-" => write_atomically(p, |w| body(w).map_err(AnyError))
            .map_err(|e| match e {
                lc_host::atomic::AtomicError::Body(AnyError(inner)) => inner,
                other => anyhow::Error::new(other),
            }),
        _ => {
            let mut out = std::io::BufWriter::with_capacity(1 << 16, std::io::stdout().lock());
            let v = body(&mut out)?;
            out.flush()?;
            Ok(v)
        }
    }
}

/// `anyhow::Error` as a `std::error::Error`, to pass through the atomic
/// writer.
#[derive(Debug)]
pub struct AnyError(pub anyhow::Error);

impl std::fmt::Display for AnyError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:#}", self.0)
    }
}

impl std::error::Error for AnyError {}

/// A spinner with a rate on a terminal, hidden otherwise.
pub fn spinner(template: &str) -> indicatif::ProgressBar {
    if std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new_spinner();
        b.set_style(
            indicatif::ProgressStyle::with_template(template)
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_spinner()),
        );
        b
    } else {
        indicatif::ProgressBar::hidden()
    }
}

/// Parses `A:B` into two values.
pub fn parse_pair<T: std::str::FromStr>(s: &str, example: &str) -> Result<(T, T), String> {
    let (a, b) = s
        .split_once(':')
        .ok_or_else(|| format!("expected two values separated by ':', for example {example}"))?;
    let a = a
        .trim()
        .parse()
        .map_err(|_| format!("{a:?} is not a whole number"))?;
    let b = b
        .trim()
        .parse()
        .map_err(|_| format!("{b:?} is not a whole number"))?;
    Ok((a, b))
}

/// Loads and validates a calibration image file.
pub fn load_image(path: &Path) -> Result<lc_core::image::Calibration> {
    let bytes = std::fs::read(path)
        .with_context(|| format!("cannot read calibration image {}", path.display()))?;
    lc_core::image::Calibration::parse(&bytes).map_err(|e| {
        anyhow::anyhow!(
            "{}: not a valid calibration image: {e} (format: docs/image-format.md; `lc-host units export` writes one from the database)",
            path.display()
        )
    })
}
