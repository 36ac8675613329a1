//! The `lc-host` command-line tool. Argument parsing lives here and in
//! `cmd/`; the work is done by the `lc_host` library, which never sees these
//! types.

mod cmd;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "lc-host",
    version,
    about = "PC tools for resonant LC sensors: turn logged counts into readings exactly as the firmware does",
    long_about = "PC tools for resonant LC sensors (inductive proximity, capacitive level, metal detection).\n\n\
        Every number comes from lc-core's fixed-point path, the same code the firmware runs, so a \
        reading on the PC is bit-for-bit the reading on the unit.\n\n\
        Not a safety-rated component: where a reading protects people or machines, follow the \
        applicable functional-safety standards, local codes and a qualified engineer's review."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    Demo(cmd::demo::Args),
    Simulate(cmd::simulate::Args),
    Calibrate(cmd::calibrate::Args),
    Inspect(cmd::inspect::Args),
    Units(cmd::units::Args),
    Counts(cmd::counts::Args),
    Convert(cmd::convert::Args),
    Listen(cmd::listen::Args),
    Verify(cmd::verify::Args),
    Budget(cmd::budget::Args),
    Coil(cmd::coil::Args),
    Probe(cmd::probe::Args),
    Loops(cmd::loops::Args),
    Ntc(cmd::ntc::Args),
    Volume(cmd::volume::Args),
}

/// Options that became positional arguments, still accepted from older
/// scripts: (subcommand, flag). `lc-host convert --input F` is `lc-host
/// convert F`; `lc-host verify --image I` is `lc-host verify I`.
const FORMER_FLAGS: [(&str, &str); 2] = [("convert", "--input"), ("verify", "--image")];

/// The command line with the former flags of [`FORMER_FLAGS`] turned into
/// the positional argument they became (`--flag VALUE` or `--flag=VALUE`).
fn with_former_flags(args: Vec<std::ffi::OsString>) -> Vec<std::ffi::OsString> {
    let Some(sub) = args.get(1).and_then(|a| a.to_str()) else {
        return args;
    };
    let Some(&(_, flag)) = FORMER_FLAGS.iter().find(|(s, _)| *s == sub) else {
        return args;
    };
    let mut out = Vec::with_capacity(args.len());
    let mut it = args.into_iter();
    while let Some(a) = it.next() {
        match a.to_str() {
            Some(t) if t == flag => {
                if let Some(v) = it.next() {
                    out.push(v);
                }
            }
            Some(t) if t.strip_prefix(flag).is_some_and(|r| r.starts_with('=')) => {
                out.push(t[flag.len() + 1..].into());
            }
            _ => out.push(a),
        }
    }
    out
}

fn main() -> ExitCode {
    let cli = Cli::parse_from(with_former_flags(std::env::args_os().collect()));
    let result = match cli.command {
        Command::Demo(a) => cmd::demo::run(a),
        Command::Simulate(a) => cmd::simulate::run(a),
        // Its own exit statuses (all passed, some failed, configuration, I/O).
        Command::Calibrate(a) => return cmd::calibrate::run(a),
        Command::Units(a) => cmd::units::run(a),
        Command::Counts(a) => cmd::counts::run(a),
        Command::Convert(a) => cmd::convert::run(a),
        Command::Listen(a) => cmd::listen::run_cmd(a),
        Command::Inspect(a) => cmd::inspect::run(a),
        Command::Verify(a) => cmd::verify::run(a),
        Command::Budget(a) => cmd::budget::run(a),
        Command::Coil(a) => cmd::coil::run(a),
        Command::Probe(a) => cmd::probe::run(a),
        Command::Loops(a) => cmd::loops::run(a),
        Command::Ntc(a) => cmd::ntc::run(a),
        Command::Volume(a) => cmd::volume::run(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::FAILURE
        }
    }
}
