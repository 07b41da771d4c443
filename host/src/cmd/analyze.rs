//! `biasjig analyze`: the exact operating point beside the hand estimate, midband gain,
//! impedances, swing, low corner, power and warnings of one stage.

use biasjig_core::judge::{input_loading, readings_through, INPUT_LOADING_LIMIT};
use biasjig_core::predict::predict;
use biasjig_core::solve::Conditions;
use serde_json::json;

use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::stage_args::{InputArgs, StageArgs};
use crate::{json, text, Global};

/// `biasjig analyze`: give the stage by flags or `--design FILE`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    #[command(flatten)]
    inputs: InputArgs,
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let r = self.stage.resolve_with(Some(&self.inputs), None)?;
        let cond = Conditions {
            temp_c: r.temp_c,
            ..Conditions::typical(&r.profile)
        };
        let p = predict(&r.stage, &r.profile, cond)
            .map_err(|e| CliError::usage(format!("stage: {e}")))?;
        let inputs = r.settings.inputs;
        // What the measuring inputs read, and whether they load the divider noticeably.
        let read = match inputs.r {
            Some(_) => Some(
                readings_through(&r.stage, &r.profile, cond, &inputs)
                    .map_err(|e| CliError::usage(format!("stage with the inputs: {e}")))?,
            ),
            None => None,
        };
        let loading = input_loading(&r.stage, &inputs).filter(|k| *k > INPUT_LOADING_LIMIT);
        if g.json {
            let mut doc = json::prediction(&p);
            if let Some(obj) = doc.as_object_mut() {
                if let Some(rd) = read {
                    obj.insert(
                        "readings".into(),
                        json!({"vb": json::num(rd.vb), "ve": json::num(rd.ve), "vc": json::num(rd.vc),
                               "inputs": {"r": json::opt(inputs.r), "mode": inputs.mode.name()}}),
                    );
                }
                if loading.is_some() {
                    if let Some(w) = obj.get_mut("warnings").and_then(|w| w.as_array_mut()) {
                        w.push(json!("divider_loaded_by_inputs"));
                    }
                }
            }
            json::print(&doc);
        } else {
            outln!("Parts");
            out!("{}", text::parts(&r.stage));
            out!("{}", text::prediction(&r.stage, &p, r.temp_c));
            if let (Some(rd), Some(rin)) = (read, inputs.r) {
                outln!(
                    "Read through {} inputs ({}): VB {}, VE {}, VC {} (bare: {}, {}, {})",
                    text::eng(rin, "Ω"),
                    inputs.mode.name(),
                    text::eng4(rd.vb, "V"),
                    text::eng4(rd.ve, "V"),
                    text::eng4(rd.vc, "V"),
                    text::eng4(p.op.vb, "V"),
                    text::eng4(p.op.ve, "V"),
                    text::eng4(p.op.vc, "V")
                );
            }
        }
        if let (Some(k), Some(rin)) = (loading, inputs.r) {
            let r1 = r.stage.r1.value;
            let r2 = r.stage.r2.value;
            eprintln!(
                "biasjig: warning: the divider's Thévenin resistance R1 ‖ R2 = {} is {:.1} % of the \
                 {} measuring inputs: they pull VB by about that fraction; the windows and the \
                 diagnosis model them, but each input's own tolerance then moves VB too. Use \
                 inputs of at least {} (100 × R1 ‖ R2) or buffered ones",
                text::eng(r1 * r2 / (r1 + r2), "Ω"),
                100.0 * k,
                text::eng(rin, "Ω"),
                text::eng(100.0 * r1 * r2 / (r1 + r2), "Ω")
            );
        }
        Ok(EXIT_OK)
    }
}
