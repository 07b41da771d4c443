//! `biasjig limits`: placeholder until its issue is built.

use crate::error::{CliError, CmdResult};
use crate::Global;

/// `biasjig limits`.
#[derive(clap::Args, Debug)]
pub struct Cmd {}

impl Cmd {
    /// Run the command.
    pub fn run(&self, _g: &Global) -> CmdResult {
        Err(CliError::usage("limits: not available in this build yet"))
    }
}
