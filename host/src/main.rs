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

/// The subcommands, each named once: its help line, its variant and its module under `cmd/`
/// (a `Cmd` with `run`). Makes the `Command` enum and its `run`.
macro_rules! commands {
    ($($(#[$help:meta])* $name:ident($module:ident),)*) => {
        #[derive(Subcommand, Debug)]
        #[allow(clippy::large_enum_variant)] // parsed once per run
        enum Command {
            $($(#[$help])* $name(cmd::$module::Cmd),)*
        }

        impl Command {
            /// Run the command chosen.
            fn run(&self, g: &Global) -> CmdResult {
                match self {
                    $(Self::$name(c) => c.run(g),)*
                }
            }
        }
    };
}

commands! {
    /// Exact operating point, hand estimate, gain, impedances, swing, low corner and power
    Analyze(analyze),
    /// From a requirement to ranked part lists of standard values
    Design(design),
    /// Worst case and Monte Carlo spread of the operating point
    Spread(spread),
    /// Pass windows per node for the test station
    Limits(limits),
    /// Judge one board's measured node voltages and name the likely faulty part
    Check(check),
    /// Check many boards from a CSV file of readings
    Batch(batch),
    /// Yield, capability and control charts per design, from a results store or board logs
    Report(report),
    /// Load board logs into a results store, skipping records already there
    Import(import),
    /// Record what was actually wrong with a failed board (the rework loop)
    Repair(repair),
    /// The line console, in this process or on the instrument over a serial port
    Console(console),
    /// The test technician's loop: push the design, check each board, log it
    Station(station),
    /// List serial ports
    Ports(ports),
    /// Run the whole job on the built-in demo scenario
    Demo(demo),
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
    cli.command.run(&cli.global)
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
