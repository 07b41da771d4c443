//! `biasjig limits`: pass windows per node for the test station, from the worst case over the
//! tolerances, hFE and the ambient, at the nominal (or a given measured) supply, widened by the
//! meter's reading error.

use std::fmt::Write as _;

use biasjig_core::limits::{limits, Limits, LimitsError, Meter};
use biasjig_core::spread::{centre, Node, Sample, Variation};
use serde_json::{json, Map, Value};

use crate::cmd::spread::{spread_error, TempRange};
use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::stage_args::StageArgs;
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
    temps: TempRange,
    /// Meter accuracy, percent of the reading
    #[arg(long, value_name = "P", default_value = "0.5", value_parser = values::percent, help_heading = "Meter")]
    meter: f64,
    /// Meter offset error, V
    #[arg(long = "meter-offset", value_name = "V", default_value = "5m", value_parser = values::value, help_heading = "Meter")]
    meter_offset: f64,
    /// Tolerance of the jig's input divider, percent
    #[arg(long = "divider-tol", value_name = "P", default_value = "0.1", value_parser = values::percent, help_heading = "Meter")]
    divider_tol: f64,
    /// Supply the windows hold for (as measured on the board), V [default: the stage's --vcc]
    #[arg(long = "at-vcc", value_name = "V", value_parser = values::value, help_heading = "Meter")]
    at_vcc: Option<f64>,
    /// Also write the windows as CSV for other testers: test, low, high, unit, design hash, settings hash
    #[arg(long, value_name = "FILE")]
    csv: Option<std::path::PathBuf>,
}

/// Explain a limits error naming the flag.
pub fn limits_error(e: LimitsError, vcc: f64) -> CliError {
    match e {
        LimitsError::Meter => CliError::usage(format!("--meter/--meter-offset/--divider-tol: {e}")),
        LimitsError::Supply => CliError::field("--at-vcc", vcc, "must be between 0.5 V and 1000 V"),
        LimitsError::Spread(s) => spread_error(s),
        _ => CliError::usage(format!("{e}")),
    }
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let r = self.stage.resolve()?;
        let var = self.temps.variation(r.temp_c)?;
        let meter = Meter {
            gain_error: self.meter,
            offset: self.meter_offset,
            divider_tol: self.divider_tol,
        };
        let vcc = self.at_vcc.unwrap_or(r.stage.vcc.value);
        let lim =
            limits(&r.stage, &r.profile, &var, &meter, vcc).map_err(|e| limits_error(e, vcc))?;
        let mut at = r.stage;
        at.vcc.value = vcc;
        let nominal = centre(&at, &r.profile, &Variation::at(r.temp_c)).map_err(spread_error)?;
        if let Some(path) = &self.csv {
            let st = crate::cmd::check::Station {
                stage: r.stage,
                profile: r.profile,
                var,
                meter,
                id: String::new(),
                hash: r.doc.as_ref().map_or_else(
                    || crate::cmd::check::stage_hash(&r.stage, &r.profile),
                    |d| d.hash.clone(),
                ),
            };
            crate::board::write_limits_csv(path, &lim, &st)?;
        }
        if g.json {
            json::print(&to_json(&lim, &meter, &var));
        } else {
            out!("{}", report(&lim, &meter, &var, &nominal, &r.stage));
        }
        Ok(EXIT_OK)
    }
}

/// `{NODE: {"low","high"}}` for vb, ve, vc, vce, vbe, ic, plus the supply, meter and ambient.
pub fn to_json(lim: &Limits, meter: &Meter, var: &Variation) -> Value {
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
        "meter".into(),
        json!({"gain_error": json::num(meter.gain_error), "offset": json::num(meter.offset), "divider_tol": json::num(meter.divider_tol)}),
    );
    m.insert(
        "temperature".into(),
        json!({"min": json::num(var.temp_min_c), "max": json::num(var.temp_max_c)}),
    );
    Value::Object(m)
}

/// The human report: one row per node with low, nominal and high.
pub fn report(
    lim: &Limits,
    meter: &Meter,
    var: &Variation,
    nominal: &Sample,
    stage: &biasjig_core::stage::Stage,
) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Pass windows at {} supply, ambient {}, meter {} % of reading + {} (divider {} %)",
        eng4(lim.vcc, "V"),
        crate::text::ambient(var.temp_min_c, var.temp_max_c),
        100.0 * meter.gain_error,
        eng4(meter.offset, "V"),
        100.0 * meter.divider_tol
    );
    let _ = writeln!(
        s,
        "  {:<5} {:>11} {:>11} {:>11}",
        "", "low", "nominal", "high"
    );
    for n in NODES {
        if let Some(w) = lim.window(n) {
            let nom = match n {
                Node::Ic => biasjig_core::limits::derived_ic(stage, lim.vcc, nominal.values.vc),
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
