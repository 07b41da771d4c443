//! `biasjig batch`: placeholder until its issue is built.

use crate::error::{CliError, CmdResult};
use crate::Global;

/// `biasjig batch`.
#[derive(clap::Args, Debug)]
pub struct Cmd {}

impl Cmd {
    /// Run the command.
    pub fn run(&self, _g: &Global) -> CmdResult {
        Err(CliError::usage("batch: not available in this build yet"))
    }
}
