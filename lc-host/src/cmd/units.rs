//! `lc-host units`: list, show and export unit records.

use anyhow::{bail, Context, Result};
use lc_host::atomic::write_bytes;
use lc_host::export;
use lc_host::store::{AttemptResult, Filter, Order, Store, StoreError};
use std::path::{Path, PathBuf};

/// List, show and export unit records from the calibration database
///
/// Every calibration attempt of every unit is a record: result, reasons, fitted parameters,
/// residuals, raw rig points and, for a pass, the calibration image (docs/database.md).
///
/// Examples:
///
///   lc-host units list --lot DEMO-01 --failed
///   lc-host units show DEMO-01-0005
///   lc-host units export DEMO-01-0007 -o DEMO-01-0007.lcim
///   lc-host units export DEMO-01-0007 -o cal.hex --address 0x0800F800 --page-size 2048
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
pub struct Args {
    /// Unit-record database: an SQLite file or a postgres:// / postgresql:// URL (opened read-only)
    #[arg(long, default_value = "units.db", global = true)]
    db: PathBuf,
    #[command(subcommand)]
    action: Action,
}

#[derive(clap::Subcommand)]
enum Action {
    /// One line per attempt (latest attempt of each unit with --latest), or per lot with --lots
    List {
        /// Only this lot
        #[arg(long)]
        lot: Option<String>,
        /// Only passed attempts
        #[arg(long, conflicts_with = "failed")]
        passed: bool,
        /// Only failed attempts
        #[arg(long)]
        failed: bool,
        /// Only each unit's latest attempt
        #[arg(long)]
        latest: bool,
        /// Lot summaries instead of attempts
        #[arg(long)]
        lots: bool,
        /// JSON instead of a table
        #[arg(long)]
        json: bool,
    },
    /// A unit's whole trail: every attempt with its plan hash, rig log name and hash,
    /// station, operator, tool version and time, the plans' texts, and one attempt in full
    /// (the latest unless --attempt)
    Show {
        /// Unit serial
        serial: String,
        /// Attempt number
        #[arg(long)]
        attempt: Option<u32>,
    },
    /// Write the calibration image of an attempt to a file: raw, padded to a flash page,
    /// Intel HEX at an address, or a C header
    Export {
        /// Unit serial
        serial: String,
        /// Attempt number (default: the latest)
        #[arg(long)]
        attempt: Option<u32>,
        /// Output file
        #[arg(short, long)]
        output: PathBuf,
        #[command(flatten)]
        flash: FlashArgs,
    },
}

/// How `units export` writes an image (docs/image-format.md, "Flash pages").
#[derive(clap::Args)]
struct FlashArgs {
    /// raw: the image's bytes; bin: padded to a whole flash page; hex: Intel HEX at --address,
    /// padded; c: a C header with the padded bytes. Default: from the output's extension
    /// (.hex, .h, .bin), else raw
    #[arg(long, value_enum)]
    format: Option<Format>,
    /// Flash address of the image's first byte (hex with 0x), for Intel HEX and the C header
    #[arg(long, default_value = "0", value_parser = number::<u32>)]
    address: u32,
    /// Flash page size in bytes: bin, hex and c are padded to a multiple of it
    #[arg(long, default_value = "1", value_parser = number::<u32>)]
    page_size: u32,
    /// Value of an erased flash byte, used for the padding
    #[arg(long, default_value = "0xFF", value_parser = number::<u8>)]
    erased: u8,
    /// C array name (default: lc_cal_ and the serial)
    #[arg(long)]
    symbol: Option<String>,
}

#[derive(Clone, Copy, clap::ValueEnum)]
enum Format {
    Raw,
    Bin,
    Hex,
    C,
}

fn number<T: TryFrom<u64>>(s: &str) -> Result<T, String> {
    let v = export::parse_number(s)?;
    T::try_from(v).map_err(|_| format!("{s} is too large here"))
}

impl FlashArgs {
    /// The bytes to write for `image` of `serial` into `output`.
    fn render(&self, image: &[u8], serial: &str, attempt: u32, output: &Path) -> Result<Vec<u8>> {
        let ext = output.extension().and_then(|e| e.to_str()).unwrap_or("");
        let format = self.format.unwrap_or(match ext {
            "hex" | "ihex" => Format::Hex,
            "h" => Format::C,
            "bin" => Format::Bin,
            _ => Format::Raw,
        });
        let layout = export::FlashLayout {
            address: self.address,
            page_size: self.page_size,
            erased: self.erased,
        };
        Ok(match format {
            Format::Raw => image.to_vec(),
            Format::Bin => export::padded(image, &layout)?,
            Format::Hex => export::intel_hex(image, &layout)?.into_bytes(),
            Format::C => {
                let symbol = self
                    .symbol
                    .clone()
                    .unwrap_or_else(|| export::symbol_for(serial));
                let about = format!("unit {serial}, attempt {attempt}");
                export::c_header(image, &layout, &symbol, &about)?.into_bytes()
            }
        })
    }
}

pub fn run(a: Args) -> Result<()> {
    if !a.db.to_str().is_some_and(lc_host::store::is_postgres_url) && !a.db.exists() {
        bail!(
            "{}: no unit-record database here; give --db, or run lc-host calibrate first",
            a.db.display()
        );
    }
    // Reading only: a database on a read-only medium or folder works too.
    let store = match Store::open_read_only(&a.db) {
        Err(StoreError::ReadOnlyOldSchema { .. }) => Store::open(&a.db)?,
        other => other?,
    };
    match a.action {
        Action::List {
            lot,
            passed,
            failed,
            latest,
            lots,
            json,
        } => {
            if lots {
                let l = store.lots()?;
                if json {
                    let v: Vec<_> = l.iter().map(|s| serde_json::json!({"lot": s.lot, "units": s.units, "passed": s.passed, "failed": s.failed, "attempts": s.attempts, "yield": s.yield_fraction})).collect();
                    println!("{}", serde_json::to_string_pretty(&v)?);
                } else {
                    println!(
                        "{:<16} {:>7} {:>7} {:>7} {:>9} {:>8}",
                        "lot", "units", "passed", "failed", "attempts", "yield"
                    );
                    for s in l {
                        println!(
                            "{:<16} {:>7} {:>7} {:>7} {:>9} {:>7.1}%",
                            s.lot,
                            s.units,
                            s.passed,
                            s.failed,
                            s.attempts,
                            100.0 * s.yield_fraction.unwrap_or(0.0)
                        );
                    }
                }
                return Ok(());
            }
            let mut f = Filter::default().order(Order::BySerial);
            if let Some(l) = lot {
                f = f.lot(l);
            }
            if passed {
                f = f.result(AttemptResult::Pass);
            }
            if failed {
                f = f.result(AttemptResult::Fail);
            }
            if latest {
                f = f.latest_only();
            }
            let rows = store.attempts(&f)?;
            if json {
                let v: Vec<_> = rows.iter().map(|r| serde_json::json!({"serial": r.serial, "lot": r.lot, "attempt": r.attempt, "calibrated_at": r.calibrated_at, "result": r.result.as_str(), "reasons": r.reasons})).collect();
                println!("{}", serde_json::to_string_pretty(&v)?);
            } else {
                println!(
                    "{:<18} {:<12} {:>7} {:<22} {:<6} first reason",
                    "serial", "lot", "attempt", "calibrated at", "result"
                );
                for r in &rows {
                    println!(
                        "{:<18} {:<12} {:>7} {:<22} {:<6} {}",
                        r.serial,
                        r.lot,
                        r.attempt,
                        r.calibrated_at,
                        r.result.as_str(),
                        r.reasons.first().map_or("", String::as_str)
                    );
                }
                eprintln!("{} attempts", rows.len());
            }
        }
        Action::Show { serial, attempt } => {
            let Some(r) = store.attempt(&serial, attempt)? else {
                bail!(
                    "{}: no record of unit {serial}{}",
                    a.db.display(),
                    attempt.map_or(String::new(), |n| format!(" attempt {n}"))
                );
            };
            let trail =
                store.attempts(&Filter::default().serial(&serial).order(Order::BySerial))?;
            let mut plans = serde_json::Map::new();
            for t in trail.iter().filter_map(|t| t.trace.as_ref()) {
                if !plans.contains_key(&t.plan_sha256) {
                    let text = store.plan_text(&t.plan_sha256)?;
                    plans.insert(t.plan_sha256.clone(), serde_json::json!(text));
                }
            }
            let v = serde_json::json!({
                "serial": r.serial,
                "attempts": trail,
                "plans": plans,
                "shown": {
                    "lot": r.lot, "attempt": r.attempt, "calibrated_at": r.calibrated_at,
                    "result": r.result.as_str(), "reasons": r.reasons, "params": r.params, "residuals": r.residuals,
                    "rig_points": r.rig_points, "image_bytes": r.image.as_ref().map(Vec::len),
                    "image_crc": r.image_crc, "tool_version": r.tool_version, "trace": r.trace,
                },
            });
            println!("{}", serde_json::to_string_pretty(&v)?);
        }
        Action::Export {
            serial,
            attempt,
            output,
            flash,
        } => {
            let Some(r) = store.attempt(&serial, attempt)? else {
                bail!("{}: no record of unit {serial}", a.db.display());
            };
            let Some(image) = r.image else {
                bail!(
                    "unit {serial} attempt {} failed calibration ({}): it has no image",
                    r.attempt,
                    r.reasons.first().map_or("", String::as_str)
                );
            };
            lc_core::image::Calibration::parse(&image)
                .context("the stored image does not parse")?;
            let bytes = flash.render(&image, &serial, r.attempt, &output)?;
            write_bytes(&output, &bytes)?;
            eprintln!(
                "wrote {} ({} bytes for an image of {} bytes, unit {serial} attempt {})",
                output.display(),
                bytes.len(),
                image.len(),
                r.attempt
            );
        }
    }
    Ok(())
}
