//! `biasjig analyze`: the exact operating point beside the hand estimate, midband gain,
//! impedances, swing, low corner, power and warnings of one stage.

use biasjig_core::predict::predict;
use biasjig_core::solve::Conditions;

use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::stage_args::StageArgs;
use crate::{json, text, Global};

/// `biasjig analyze`: give the stage by flags or `--design FILE`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let r = self.stage.resolve()?;
        let cond = Conditions {
            temp_c: r.temp_c,
            ..Conditions::typical(&r.profile)
        };
        let p = predict(&r.stage, &r.profile, cond)
            .map_err(|e| CliError::usage(format!("stage: {e}")))?;
        if g.json {
            json::print(&json::prediction(&p));
        } else {
            outln!("Parts");
            out!("{}", text::parts(&r.stage));
            out!("{}", text::prediction(&r.stage, &p, r.temp_c));
        }
        Ok(EXIT_OK)
    }
}
