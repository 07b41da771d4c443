//! `biasjig limits`: the pass windows the station applies, from the core's one judging path
//! ([`biasjig_core::judge::windows`]): the worst case over the tolerances, hFE and the test
//! ambient at the nominal (or a given measured) supply, with the measuring inputs attached,
//! widened by the meter's reading error; and the supply window. `limits --at-vcc V` gives
//! exactly the windows `check --vcc V` applies.

use std::fmt::Write as _;

use biasjig_core::judge::{self, Windows};
use biasjig_core::settings::{InputMode, TestSettings};
use biasjig_core::signaltest::{self, Proposal, ToneWindow, MAX_TONES};
use biasjig_core::spread::{centre, Node, Sample, Variation};
use serde_json::{json, Map, Value};

use crate::Global;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::stage_args::{spread_error, SettingsArgs, StageArgs};
use biasjig::text::eng4;
use biasjig::verdict::json::{overrides_json, settings_json};
use biasjig::verdict::text::settings_text;
use biasjig::verdict::{board_windows, inputs_region_warning, Station, Warning};
use biasjig::{json, values};

/// The nodes that have windows, in report order.
pub const NODES: [Node; 6] = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];

/// `biasjig limits`: give the stage by flags or `--design FILE`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    #[command(flatten)]
    settings: SettingsArgs,
    /// Supply the windows hold for (as measured on the board), V [default: the stage's --vcc]
    #[arg(long = "at-vcc", value_name = "V", value_parser = values::volts, help_heading = "Meter")]
    at_vcc: Option<f64>,
    /// Signal test: a test frequency, Hz (repeatable, at most 4); adds the gain window at each.
    /// Without it, two frequencies are proposed (when the stage has RL and capacitors)
    #[arg(long = "ac-f", value_name = "F", value_parser = values::value, help_heading = "Signal test")]
    ac_f: Vec<f64>,
    /// Also write the windows as CSV for other testers: test, low, high, unit, design hash, settings hash
    #[arg(long, value_name = "FILE")]
    csv: Option<std::path::PathBuf>,
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let r = self.stage.resolve_for_test(&self.settings)?;
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
        let mut warnings = Vec::new();
        if !w.supply.contains(vcc) {
            // The node windows are the ones `check --vcc V` would apply to a stage of that
            // nominal; against this stage's nominal and supply tolerance, check refuses the board.
            warnings.push(Warning {
                code: "supply_outside_window".into(),
                text: format!(
                    "--at-vcc {}: outside the supply window {} to {} (nominal ± supply \
                     tolerance): `check` does not judge a board whose supply reads that",
                    eng4(vcc, "V"),
                    eng4(w.supply.low, "V"),
                    eng4(w.supply.high, "V")
                ),
            });
        }
        warnings.extend(inputs_region_warning(&st));
        for wn in &warnings {
            eprintln!("biasjig: warning: {}", wn.text);
        }
        let mut at = r.stage;
        at.vcc.value = vcc;
        let t = &r.settings;
        let nominal = centre(
            &at,
            &r.profile,
            &Variation::at(0.5 * (t.temp_min_c + t.temp_max_c)).read_through(t.inputs),
        )
        .map_err(spread_error)?;
        // The signal test: the windows at the given frequencies, or two proposed ones.
        let tones = if self.ac_f.is_empty() {
            None
        } else {
            if self.ac_f.len() > MAX_TONES {
                return Err(CliError::field(
                    "--ac-f",
                    self.ac_f.len(),
                    format!("at most {MAX_TONES} test frequencies"),
                ));
            }
            for f in &self.ac_f {
                signaltest::validate_frequency(*f).map_err(|e| CliError::field("--ac-f", f, e))?;
            }
            Some(
                judge::tone_windows(&r.stage, &r.profile, t, vcc, &self.ac_f)
                    .map_err(|e| CliError::usage(format!("--ac-f: {e}")))?,
            )
        };
        let proposal = match (&tones, r.stage.rl) {
            (None, Some(_)) => {
                let var = judge::variation(t);
                signaltest::propose(&r.stage, &r.profile, &var, &t.signal)
                    .ok()
                    .map(|p| {
                        let f_low = signaltest::proposal_low_corner(&r.stage, &r.profile, &var);
                        (p, f_low.ok().flatten().unwrap_or(0.0))
                    })
            }
            _ => None,
        };
        if let Some(path) = &self.csv {
            biasjig::board::write_limits_csv(path, &w, &st)?;
        }
        if g.json {
            let mut doc = to_json(&w, t);
            if let Some(obj) = doc.as_object_mut() {
                obj.insert("digest".into(), json!(st.digest.to_string()));
                obj.insert("overrides".into(), overrides_json(&st));
                obj.insert(
                    "warnings".into(),
                    json!(warnings.iter().map(|w| w.code.as_str()).collect::<Vec<_>>()),
                );
                if let Some(tw) = &tones {
                    obj.insert("ac".into(), ac_windows_json(tw));
                }
                if let Some((p, f_low)) = &proposal {
                    obj.insert("ac_proposed".into(), proposal_json(p, *f_low));
                }
            }
            json::print(&doc);
        } else {
            let mut s = report(&w, t, &nominal, &r.stage);
            if let Some(tw) = &tones {
                s.push_str(&ac_windows_text(tw, t));
            }
            if let Some((p, f_low)) = &proposal {
                s.push_str(&proposal_text(p, *f_low));
            }
            out!("{}", s);
        }
        Ok(EXIT_OK)
    }
}

/// The signal test's windows: `[{"f","low","high","nominal","min","max"}]` (min and max: the
/// worst case before the guard band).
fn ac_windows_json(tw: &[ToneWindow]) -> Value {
    Value::Array(
        tw.iter()
            .map(|w| {
                json!({"f": json::num(w.f), "low": json::num(w.low), "high": json::num(w.high),
                       "nominal": json::num(w.nominal), "min": json::num(w.min),
                       "max": json::num(w.max)})
            })
            .collect(),
    )
}

fn ac_windows_text(tw: &[ToneWindow], t: &TestSettings) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Signal test: |v(load)/v(source)| windows (signal meter {:.1} % of the reading + {})",
        100.0 * t.signal.gain_error,
        t.signal.floor
    );
    for w in tw {
        let _ = writeln!(
            s,
            "  {:>9} {:>11.3} {:>11.3} {:>11.3}",
            eng4(w.f, "Hz"),
            w.low,
            w.nominal,
            w.high
        );
    }
    s
}

/// The proposed test frequencies and why, with the low corner of the board they were proposed
/// for (Hz).
fn proposal_json(p: &Proposal, f_low: f64) -> Value {
    json!([
        {"f": json::num(p.midband), "use": "midband",
         "why": format!("the nominal gain is within 1 % of the midband gain {:.2} here: a reading checks the gain itself, the resistors and the transistor, and any open capacitor", p.midband_gain)},
        {"f": json::num(p.poles), "use": "poles",
         "why": format!("a capacitor at a tenth of its value is told apart best here from a good board and from the other capacitors at a tenth of theirs (nearest pair {:.2} good-window widths apart); the low corner is {:.3} Hz", p.separation, f_low)},
    ])
}

fn proposal_text(p: &Proposal, f_low: f64) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Signal test: no --ac-f given; proposed test frequencies (give them with --ac-f):"
    );
    let _ = writeln!(
        s,
        "  {:>9}  midband: the gain is within 1 % of its midband value {:.2}; checks the gain and any open capacitor",
        eng4(p.midband, "Hz"),
        p.midband_gain
    );
    let _ = writeln!(
        s,
        "  {:>9}  where a capacitor at a tenth of its value is told apart best (nearest pair {:.2} window widths apart; low corner {})",
        eng4(p.poles, "Hz"),
        p.separation,
        eng4(f_low, "Hz")
    );
    s
}

/// `{NODE: {"low","high"}}` for vb, ve, vc, vce, vbe, ic, plus the supply the windows hold for,
/// the supply window, and the ambient, meter and inputs they assume.
fn to_json(w: &Windows, t: &TestSettings) -> Value {
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
fn report(
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
    if t.inputs.r.is_some() && t.inputs.mode == InputMode::One {
        let _ = writeln!(
            s,
            "  (VBE and VCE are differences of readings taken one node at a time, each node \
             loaded by its own input alone: they are not the transistor's junction voltages)"
        );
    }
    s
}
