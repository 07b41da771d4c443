//! `biasjig limits`: the pass windows the station applies, from the core's one judging path
//! ([`biasjig_core::judge::windows`]): the worst case over the tolerances, hFE and the test
//! ambient at the nominal (or a given measured) supply, with the measuring inputs attached,
//! widened by the meter's reading error; and the supply window. `limits --at-vcc V` gives
//! exactly the windows `check --vcc V` applies.

use std::fmt::Write as _;

use biasjig_core::judge::Windows;
use biasjig_core::settings::TestSettings;
use biasjig_core::spread::{centre, Node, Sample, Variation};
use serde_json::{json, Map, Value};

use crate::cmd::check::{board_windows, overrides_json, settings_json, settings_text, Station};
use crate::cmd::spread::spread_error;
use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::stage_args::{InputArgs, StageArgs, TestArgs};
use crate::text::eng4;
use crate::{json, values, Global};

/// The nodes that have windows, in report order.
pub const NODES: [Node; 6] = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];

/// `biasjig limits`: give the stage by flags or `--design FILE`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    #[command(flatten)]
    test: TestArgs,
    #[command(flatten)]
    inputs: InputArgs,
    /// Supply the windows hold for (as measured on the board), V [default: the stage's --vcc]
    #[arg(long = "at-vcc", value_name = "V", value_parser = values::volts, help_heading = "Meter")]
    at_vcc: Option<f64>,
    /// Also write the windows as CSV for other testers: test, low, high, unit, design hash, settings hash
    #[arg(long, value_name = "FILE")]
    csv: Option<std::path::PathBuf>,
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let r = self
            .stage
            .resolve_with(Some(&self.inputs), Some(&self.test))?;
        let st = Station::new(&r);
        let vcc = self.at_vcc.unwrap_or(r.stage.vcc.value);
        if !(0.5..=1000.0).contains(&vcc) {
            return Err(CliError::field(
                "--at-vcc",
                vcc,
                "must be between 0.5 V and 1000 V",
            ));
        }
        let w = board_windows(&st, vcc)?;
        let mut at = r.stage;
        at.vcc.value = vcc;
        let t = &r.settings;
        let nominal = centre(
            &at,
            &r.profile,
            &Variation::at(0.5 * (t.temp_min_c + t.temp_max_c)).read_through(t.inputs),
        )
        .map_err(spread_error)?;
        if let Some(path) = &self.csv {
            crate::board::write_limits_csv(path, &w, &st)?;
        }
        if g.json {
            let mut doc = to_json(&w, t);
            if let Some(obj) = doc.as_object_mut() {
                obj.insert("digest".into(), json!(st.digest.to_string()));
                obj.insert("overrides".into(), overrides_json(&st));
            }
            json::print(&doc);
        } else {
            out!("{}", report(&w, t, &nominal, &r.stage));
        }
        Ok(EXIT_OK)
    }
}

/// `{NODE: {"low","high"}}` for vb, ve, vc, vce, vbe, ic, plus the supply the windows hold for,
/// the supply window, and the ambient, meter and inputs they assume.
pub fn to_json(w: &Windows, t: &TestSettings) -> Value {
    let lim = &w.limits;
    let mut m = Map::new();
    for n in NODES {
        if let Some(w) = lim.window(n) {
            m.insert(
                n.name().into(),
                json!({"low": json::num(w.low), "high": json::num(w.high)}),
            );
        }
    }
    m.insert("vcc".into(), json::num(lim.vcc));
    m.insert(
        "supply".into(),
        json!({"low": json::num(w.supply.low), "high": json::num(w.supply.high)}),
    );
    let meter = &t.meter;
    m.insert(
        "meter".into(),
        json!({"gain_error": json::num(meter.gain_error), "offset": json::num(meter.offset), "divider_tol": json::num(meter.divider_tol)}),
    );
    m.insert(
        "temperature".into(),
        json!({"min": json::num(t.temp_min_c), "max": json::num(t.temp_max_c)}),
    );
    m.insert(
        "inputs".into(),
        json!({"r": json::opt(t.inputs.r), "mode": t.inputs.mode.name()}),
    );
    m.insert("settings".into(), settings_json(t));
    Value::Object(m)
}

/// The human report: the assumptions, the supply window, one row per node with low, nominal
/// and high.
pub fn report(
    w: &Windows,
    t: &TestSettings,
    nominal: &Sample,
    stage: &biasjig_core::stage::Stage,
) -> String {
    let lim = &w.limits;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Pass windows at {} supply; {}",
        eng4(lim.vcc, "V"),
        settings_text(t)
    );
    let _ = writeln!(
        s,
        "  {:<5} {:>11} {:>11} {:>11}   (outside it a board is not judged)",
        "VCC",
        eng4(w.supply.low, "V"),
        eng4(stage.vcc.value, "V"),
        eng4(w.supply.high, "V")
    );
    let _ = writeln!(
        s,
        "  {:<5} {:>11} {:>11} {:>11}",
        "", "low", "nominal", "high"
    );
    for n in NODES {
        if let Some(w) = lim.window(n) {
            let nom = match n {
                Node::Ic => biasjig_core::limits::derived_ic_through(
                    stage,
                    &t.inputs,
                    lim.vcc,
                    nominal.values.vc,
                ),
                _ => *nominal.values.get(n),
            };
            let _ = writeln!(
                s,
                "  {:<5} {:>11} {:>11} {:>11}",
                n.label(),
                eng4(w.low, n.unit()),
                eng4(nom, n.unit()),
                eng4(w.high, n.unit())
            );
        }
    }
    let _ = writeln!(
        s,
        "  (IC is derived from the readings as the tester does: through the nominal RC)"
    );
    s
}
