//! `biasjig console`: the console engine on stdin/stdout, or the same session carried to the
//! instrument over a serial port.

use std::io::{BufRead, Write};
use std::time::{Duration, Instant};

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::{Clock, Console, Identity, SessionError};
use embedded_io_adapters::std::FromStd;

use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::link::{Link, LinkError, Port, SerialLink};
use crate::Global;

/// `biasjig console [--port PATH [--baud N]]`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Serial port of the instrument (without it the console runs in this process)
    #[arg(long, value_name = "PATH")]
    pub port: Option<String>,
    /// Baud rate of the serial port
    #[arg(long, default_value_t = 115_200, requires = "port")]
    pub baud: u32,
    /// Seconds allowed to synchronise with the instrument after opening the port
    #[arg(long = "sync-timeout", default_value_t = crate::link::SYNC_TIMEOUT.as_secs_f64(), value_name = "S")]
    pub sync_timeout: f64,
}

/// Milliseconds since the program started.
pub struct StdClock(pub Instant);

impl Default for StdClock {
    fn default() -> Self {
        Self(Instant::now())
    }
}

impl Clock for StdClock {
    fn now_ms(&mut self) -> u64 {
        u64::try_from(self.0.elapsed().as_millis()).unwrap_or(u64::MAX)
    }
}

/// The console engine of this process: no jig (readings are typed with `check`), settings in memory.
pub type LocalConsole = Console<NoJig, MemoryStore, StdClock>;

/// A console engine for this process.
pub fn local_console() -> LocalConsole {
    Console::new(
        Identity::new("console", env!("CARGO_PKG_VERSION")),
        NoJig,
        MemoryStore::default(),
        StdClock::default(),
    )
}

/// A link failure as the exit-3 error.
pub fn link_error(e: LinkError) -> CliError {
    CliError::link(e.to_string())
}

/// Check a synchronisation budget in seconds.
pub fn sync_budget(s: f64) -> Result<Duration, CliError> {
    if s.is_finite() && (0.1..=600.0).contains(&s) {
        Ok(Duration::from_secs_f64(s))
    } else {
        Err(CliError::field(
            "--sync-timeout",
            s,
            "allowed 0.1 to 600 seconds",
        ))
    }
}

/// Carry lines from `input` to the instrument and its replies to `out`, until the end of input.
pub fn relay<P: Port>(
    link: &mut Link<P>,
    input: impl BufRead,
    out: &mut impl Write,
) -> Result<(), CliError> {
    for line in input.lines() {
        let line = line.map_err(|e| CliError::usage(format!("stdin: {e}")))?;
        let line = line.trim_end_matches('\r');
        let reply = link.command(line).map_err(link_error)?;
        for l in reply.data.iter().chain([&reply.status]) {
            writeln!(out, "{l}").map_err(|e| CliError::link(format!("stdout: {e}")))?;
        }
        out.flush()
            .map_err(|e| CliError::link(format!("stdout: {e}")))?;
    }
    Ok(())
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, _g: &Global) -> CmdResult {
        let budget = sync_budget(self.sync_timeout)?;
        match &self.port {
            None => {
                let mut c = local_console();
                let stdin = std::io::stdin();
                let stdout = std::io::stdout();
                let mut input = FromStd::new(stdin.lock());
                let mut out = FromStd::new(stdout.lock());
                match c.run(&mut input, &mut out) {
                    Ok(()) => Ok(EXIT_OK),
                    Err(SessionError::Read(e)) => Err(CliError::usage(format!("stdin: {e}"))),
                    Err(SessionError::Write(e)) => Err(CliError::link(format!("stdout: {e:?}"))),
                }
            }
            Some(path) => {
                let port = SerialLink::open(path, self.baud).map_err(link_error)?;
                let mut link = Link::new(port);
                let id = link.sync(budget).map_err(link_error)?;
                eprintln!("connected: {id}");
                let stdin = std::io::stdin();
                relay(&mut link, stdin.lock(), &mut std::io::stdout().lock())?;
                Ok(EXIT_OK)
            }
        }
    }
}
