//! `biasjig analyze`: the exact operating point beside the hand estimate, midband gain,
//! impedances, swing, low corner, power and warnings of one stage.

use biasjig_core::judge::{input_loading, readings_through, region_through, INPUT_LOADING_LIMIT};
use biasjig_core::predict::predict;
use biasjig_core::solve::{Conditions, Region};
use serde_json::json;

use crate::Global;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::stage_args::{InputArgs, StageArgs};
use biasjig::{json, text};

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
        // The inputs may move an active stage off its bias while it is read.
        let moved = match inputs.r {
            Some(_) if p.op.region == Region::Active => {
                region_through(&r.stage, &r.profile, cond, &inputs)
                    .ok()
                    .filter(|g| *g != Region::Active)
            }
            _ => None,
        };
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
                if let Some(w) = obj.get_mut("warnings").and_then(|w| w.as_array_mut()) {
                    if loading.is_some() {
                        w.push(json!("divider_loaded_by_inputs"));
                    }
                    if let Some(g) = moved {
                        w.push(json!(format!("inputs_move_the_stage_to_{}", g.name())));
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
                "biasjig: warning: the {} measuring inputs load the base divider: its Thévenin \
                 resistance R1 ‖ R2 = {} is {:.1} % of theirs (more than 1 %), so they move VB \
                 while it is read; the windows and the diagnosis model them, but each input's \
                 own tolerance then moves VB too. Use inputs of at least {} (100 × R1 ‖ R2) or \
                 buffered ones",
                text::eng(rin, "Ω"),
                text::eng(r1 * r2 / (r1 + r2), "Ω"),
                100.0 * k,
                text::eng(100.0 * r1 * r2 / (r1 + r2), "Ω")
            );
        }
        if let (Some(g), Some(rin)) = (moved, inputs.r) {
            eprintln!(
                "biasjig: warning: read through the {} measuring inputs ({}) the stage is in {}, \
                 not active: the readings no longer show its bias",
                text::eng(rin, "Ω"),
                inputs.mode.name(),
                g.name()
            );
        }
        Ok(EXIT_OK)
    }
}
