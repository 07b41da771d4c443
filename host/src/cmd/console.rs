//! `biasjig console`: the console engine on stdin/stdout, or the same session carried to the
//! instrument over a serial port.

use std::io::{Read, Write};
use std::time::{Duration, Instant};

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::line::{Feed, LineBuf, LineError};
use biasjig_core::console::{Clock, Code, Console, Identity, SessionError, LINE_MAX};
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
///
/// The input is cut into lines exactly as the console engine cuts them (CR, LF or CR LF end a
/// line; [`LineBuf`]), so every line the instrument would answer is sent alone and gets its one
/// reply: a CR inside a typed line makes two commands with two replies, never one command whose
/// second reply lands on the next. A line the engine would refuse before reading it (a control
/// byte, bytes that are not UTF-8, longer than [`LINE_MAX`]) is answered here with the engine's
/// own status line and not sent, so the session goes on.
pub fn relay<P: Port>(
    link: &mut Link<P>,
    mut input: impl Read,
    out: &mut impl Write,
) -> Result<(), CliError> {
    let mut lines: LineBuf<LINE_MAX> = LineBuf::new();
    let mut buf = [0u8; 256];
    loop {
        let n = match input.read(&mut buf) {
            Ok(n) => n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(CliError::usage(format!("stdin: {e}"))),
        };
        let Some(chunk) = buf.get(..n).filter(|c| !c.is_empty()) else {
            if let Some(line) = lines.finish().map(|l| l.map(str::to_owned)) {
                relay_line(link, line, out)?;
            }
            return Ok(());
        };
        let mut rest = chunk;
        loop {
            let (event, r) = match lines.feed(rest) {
                Feed::Pending => break,
                Feed::Overfull { rest: r } => (None, r),
                Feed::Line { line, rest: r } => (Some(line.map(str::to_owned)), r),
            };
            match event {
                None => answer(
                    out,
                    &[],
                    &format!(
                        "err {} line longer than {LINE_MAX} bytes; discarded up to its end",
                        Code::TooLong.name()
                    ),
                )?,
                Some(line) => relay_line(link, line, out)?,
            }
            rest = r;
        }
    }
}

/// One framed input line: sent and its reply shown, or refused here as the engine would.
fn relay_line<P: Port>(
    link: &mut Link<P>,
    line: Result<String, LineError>,
    out: &mut impl Write,
) -> Result<(), CliError> {
    match line {
        Ok(text) => {
            let reply = link.command(&text).map_err(link_error)?;
            answer(out, &reply.data, &reply.status)
        }
        Err(e) => {
            let code = match e {
                LineError::Encoding => Code::Encoding,
                _ => Code::Control,
            };
            answer(out, &[], &format!("err {} {e}", code.name()))
        }
    }
}

/// Data lines, then the status line.
fn answer(out: &mut impl Write, data: &[String], status: &str) -> Result<(), CliError> {
    let io = |e: std::io::Error| CliError::link(format!("stdout: {e}"));
    for l in data.iter().map(String::as_str).chain([status]) {
        writeln!(out, "{l}").map_err(io)?;
    }
    out.flush().map_err(io)
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
