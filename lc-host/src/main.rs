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
    Verify(cmd::verify::Args),
    Budget(cmd::budget::Args),
    Coil(cmd::coil::Args),
    Probe(cmd::probe::Args),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Demo(a) => cmd::demo::run(a),
        Command::Simulate(a) => cmd::simulate::run(a),
        // Its own exit statuses (all passed, some failed, configuration, I/O).
        Command::Calibrate(a) => return cmd::calibrate::run(a),
        Command::Units(a) => cmd::units::run(a),
        Command::Counts(a) => cmd::counts::run(a),
        Command::Convert(a) => cmd::convert::run(a),
        Command::Inspect(a) => cmd::inspect::run(a),
        Command::Verify(a) => cmd::verify::run(a),
        Command::Budget(a) => cmd::budget::run(a),
        Command::Coil(a) => cmd::coil::run(a),
        Command::Probe(a) => cmd::probe::run(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::FAILURE
        }
    }
}
