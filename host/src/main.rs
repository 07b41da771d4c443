//! `biasjig`: design, spread, test limits, board check and fault isolation for discrete
//! common-emitter stages, locally or through the jig instrument over a serial line.
//!
//! Every command is a thin front end: it parses arguments into core types, calls the core and
//! the `biasjig` library and prints the result (human text, or exactly one JSON document with
//! `--json`). One file per subcommand under `cmd/`.

use std::process::ExitCode;

use clap::{Parser, Subcommand};

use biasjig::error::{CliError, CmdResult};

#[macro_use]
extern crate biasjig;

mod cmd;

/// Options every command takes.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct Global {
    /// Print exactly one JSON document on stdout (SI base units); messages go to stderr
    #[arg(long, global = true)]
    pub json: bool,
}

/// Design, spread, limits, board check and fault isolation for common-emitter gain stages.
#[derive(Parser, Debug)]
#[command(name = "biasjig", version, about, long_about = None, propagate_version = true)]
#[command(after_help = SAFETY)]
struct Cli {
    #[command(flatten)]
    global: Global,
    #[command(subcommand)]
    command: Command,
}

/// Safety note printed under the help.
const SAFETY: &str =
    "Safety: de-energise the board before changing probes or parts; keep jig inputs \
within their rated range; never connect mains-powered circuits without isolation. Local codes and \
licensed practice take precedence.";

#[derive(Subcommand, Debug)]
#[allow(clippy::large_enum_variant)] // parsed once per run
enum Command {
    /// Exact operating point, hand estimate, gain, impedances, swing, low corner and power
    Analyze(cmd::analyze::Cmd),
    /// From a requirement to ranked part lists of standard values
    Design(cmd::design::Cmd),
    /// Worst case and Monte Carlo spread of the operating point
    Spread(cmd::spread::Cmd),
    /// Pass windows per node for the test station
    Limits(cmd::limits::Cmd),
    /// Judge one board's measured node voltages and name the likely faulty part
    Check(cmd::check::Cmd),
    /// Check many boards from a CSV file of readings
    Batch(cmd::batch::Cmd),
    /// Yield, capability and control charts per design, from a results store or board logs
    Report(cmd::report::Cmd),
    /// Load board logs into a results store, skipping records already there
    Import(cmd::import::Cmd),
    /// Record what was actually wrong with a failed board (the rework loop)
    Repair(cmd::repair::Cmd),
    /// The line console, in this process or on the instrument over a serial port
    Console(cmd::console::Cmd),
    /// The test technician's loop: push the design, check each board, log it
    Station(cmd::station::Cmd),
    /// List serial ports
    Ports(cmd::ports::Cmd),
    /// Run the whole job on the built-in demo scenario
    Demo(cmd::demo::Cmd),
}

/// Run one command line (the program name first) as the binary would, for commands that run
/// others (the demo).
pub(crate) fn run_args<I, T>(args: I) -> CmdResult
where
    I: IntoIterator<Item = T>,
    T: Into<std::ffi::OsString> + Clone,
{
    let cli = Cli::try_parse_from(args).map_err(|e| CliError::usage(e.to_string()))?;
    dispatch(&cli)
}

fn dispatch(cli: &Cli) -> CmdResult {
    let g = &cli.global;
    match &cli.command {
        Command::Analyze(c) => c.run(g),
        Command::Design(c) => c.run(g),
        Command::Spread(c) => c.run(g),
        Command::Limits(c) => c.run(g),
        Command::Check(c) => c.run(g),
        Command::Batch(c) => c.run(g),
        Command::Report(c) => c.run(g),
        Command::Import(c) => c.run(g),
        Command::Repair(c) => c.run(g),
        Command::Console(c) => c.run(g),
        Command::Station(c) => c.run(g),
        Command::Ports(c) => c.run(g),
        Command::Demo(c) => c.run(g),
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match dispatch(&cli) {
        Ok(code) => ExitCode::from(code),
        Err(e) => {
            eprintln!("biasjig: error: {e}");
            ExitCode::from(e.code)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn command_line_is_consistent() {
        Cli::command().debug_assert();
    }
}
