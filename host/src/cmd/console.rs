//! `biasjig console`: the console engine on stdin/stdout, or the same session carried to the
//! instrument over a serial port.

use biasjig_core::console::SessionError;
use embedded_io_adapters::std::FromStd;

use crate::Global;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::link::relay::relay;
use biasjig::link::{sync_budget, Link, SerialLink};
use biasjig::local::local_console;

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
    #[arg(long = "sync-timeout", default_value_t = biasjig::link::SYNC_TIMEOUT.as_secs_f64(), value_name = "S")]
    pub sync_timeout: f64,
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
                let port = SerialLink::open(path, self.baud)?;
                let mut link = Link::new(port);
                let id = link.sync(budget)?;
                eprintln!("connected: {id}");
                let stdin = std::io::stdin();
                relay(&mut link, stdin.lock(), &mut std::io::stdout().lock())?;
                Ok(EXIT_OK)
            }
        }
    }
}
