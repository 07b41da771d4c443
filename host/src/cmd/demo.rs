//! `biasjig demo`: the whole job on the built-in demo scenario (a vibration-sensor preamp for
//! pump monitoring; invented figures).

use crate::error::{CmdResult, EXIT_OK};
use crate::Global;

/// `biasjig demo`.
#[derive(clap::Args, Debug)]
pub struct Cmd {}

impl Cmd {
    /// Run the command.
    pub fn run(&self, _g: &Global) -> CmdResult {
        Ok(EXIT_OK)
    }
}
