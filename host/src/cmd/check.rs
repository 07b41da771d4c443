//! `biasjig check`: judge one board's measured node voltages against the design's limits at the
//! measured supply and, when it fails, name the likely faulty part.
//!
//! Exit 0 pass, 1 fail. Readings that cannot come from a powered, correctly probed board
//! (supply outside its window, a node above the supply or below ground, every node equal) are
//! refused as bad input: exit 2 with what to fix; with `--log` the refusal is logged too.

use std::path::PathBuf;

use biasjig_core::check::{check, Implausible, Verdict};
use biasjig_core::device::Profile;
use biasjig_core::diagnose::{diagnose, Diagnosis, Hypothesis, Suspect};
use biasjig_core::explain::{FaultWords, SeparatingStep};
use biasjig_core::limits::{self, Limits, Meter};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{Readings, Stage};
use serde_json::{json, Value};

use crate::board::{from_outcome, Recorder, RunInfo};
use crate::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK};
use crate::stage_args::{Resolved, StageArgs};
use crate::store::TraceArgs;
use crate::{json, text, values, Global};

/// How many fault hypotheses a result lists at most.
pub const LISTED_FAULTS: usize = 6;

/// The meter flags shared by `check` and `batch`.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct MeterArgs {
    /// Meter gain error, percent of the reading [default: 0.5]
    #[arg(long, value_parser = values::percent, help_heading = "Meter")]
    pub meter: Option<f64>,
    /// Meter offset error, V [default: 0.005]
    #[arg(long = "meter-offset", value_parser = values::value, help_heading = "Meter")]
    pub meter_offset: Option<f64>,
}

impl MeterArgs {
    /// The meter described by the flags.
    pub fn meter(&self) -> Meter {
        let d = Meter::default();
        Meter {
            gain_error: self.meter.unwrap_or(d.gain_error),
            offset: self.meter_offset.unwrap_or(d.offset),
            divider_tol: d.divider_tol,
        }
    }
}

/// `biasjig check`: the stage by flags or `--design FILE`; `--vcc` is the supply as measured.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    /// Measured base voltage, V
    #[arg(long, value_parser = values::signed, allow_hyphen_values = true, help_heading = "Readings")]
    vb: f64,
    /// Measured emitter voltage, V
    #[arg(long, value_parser = values::signed, allow_hyphen_values = true, help_heading = "Readings")]
    ve: f64,
    /// Measured collector voltage, V
    #[arg(long, value_parser = values::signed, allow_hyphen_values = true, help_heading = "Readings")]
    vc: f64,
    /// Board serial number, for the log
    #[arg(long, help_heading = "Readings")]
    serial: Option<String>,
    /// Append a record of this board to FILE (JSON Lines)
    #[arg(long, value_name = "FILE", help_heading = "Readings")]
    log: Option<PathBuf>,
    #[command(flatten)]
    meter: MeterArgs,
    #[command(flatten)]
    trace: TraceArgs,
}

/// A design ready for the station: stage, profile, ambient range, identity.
#[derive(Debug, Clone)]
pub struct Station {
    /// The design (nominal supply).
    pub stage: Stage,
    /// The transistor.
    pub profile: Profile,
    /// Ambient range.
    pub var: Variation,
    /// The meter.
    pub meter: Meter,
    /// Design identifier.
    pub id: String,
    /// Design hash.
    pub hash: String,
}

impl Station {
    /// From resolved stage flags or a design file.
    pub fn new(r: &Resolved, meter: Meter) -> Self {
        let (id, hash, var) = match &r.doc {
            // The design's ambient range, unless --temp moved the ambient.
            Some(d) if d.temp_c == r.temp_c && d.temp_max > d.temp_min => {
                let var = Variation {
                    temp_min_c: d.temp_min,
                    temp_max_c: d.temp_max,
                    ..Variation::at(r.temp_c)
                };
                (d.id.clone(), d.hash.clone(), var)
            }
            Some(d) => (d.id.clone(), d.hash.clone(), Variation::at(r.temp_c)),
            None => (
                "flags".to_string(),
                stage_hash(&r.stage, &r.profile),
                Variation::at(r.temp_c),
            ),
        };
        Self {
            stage: r.stage,
            profile: r.profile,
            var,
            meter,
            id,
            hash,
        }
    }
}

/// The design hash of the stage and profile (the one of design files and the instrument), hex.
pub fn stage_hash(stage: &Stage, profile: &Profile) -> String {
    crate::designfile::hash(stage, profile)
}

/// The pass windows at the measured supply (worst case over the parts, hFE and the ambient
/// range, guard-banded for the meter).
pub fn board_limits(st: &Station, vcc: f64) -> Result<Limits, CliError> {
    limits::limits(&st.stage, &st.profile, &st.var, &st.meter, vcc)
        .map_err(|e| CliError::usage(format!("limits: {e}")))
}

/// The result of checking one board.
#[derive(Debug, Clone)]
pub enum Outcome {
    /// Judged: the verdict, and a diagnosis when it failed.
    Judged(Box<Verdict>, Option<Box<Diagnosis>>),
    /// Refused before judgement.
    Refused(Implausible),
}

impl Outcome {
    /// "pass", "fail" or "refused".
    pub fn word(&self) -> &'static str {
        match self {
            Self::Judged(v, _) if v.pass => "pass",
            Self::Judged(..) => "fail",
            Self::Refused(_) => "refused",
        }
    }
}

/// Check one board (and diagnose it when it fails).
pub fn evaluate(st: &Station, r: &Readings) -> Result<Outcome, CliError> {
    if let Err(why) = biasjig_core::check::plausible(&st.stage, &st.meter, r) {
        return Ok(Outcome::Refused(why));
    }
    let limits = board_limits(st, r.vcc)?;
    let verdict = match check(&st.stage, &limits, &st.meter, r) {
        Ok(v) => v,
        Err(why) => return Ok(Outcome::Refused(why)),
    };
    if verdict.pass {
        return Ok(Outcome::Judged(Box::new(verdict), None));
    }
    let d = diagnose(&st.stage, &st.profile, r, &st.meter, &st.var)
        .map_err(|e| CliError::usage(format!("diagnosis: {e}")))?;
    Ok(Outcome::Judged(Box::new(verdict), Some(Box::new(d))))
}

/// The listed faults of a diagnosis: best first, the good-board hypothesis left out.
pub fn listed(d: &Diagnosis) -> Vec<&Hypothesis> {
    d.faults().take(LISTED_FAULTS).collect()
}

/// The machine-interface document of a checked board.
pub fn outcome_json(o: &Outcome) -> Value {
    match o {
        Outcome::Refused(why) => json!({"verdict": "refused", "reason": why.to_string()}),
        Outcome::Judged(v, d) => {
            let mut nodes = serde_json::Map::new();
            for n in &v.nodes {
                nodes.insert(
                    n.node.name().to_string(),
                    json!({"measured": json::num(n.measured), "low": json::num(n.low),
                           "high": json::num(n.high), "ok": n.ok}),
                );
            }
            let dv = &v.derived;
            let faults: Vec<Value> = d.as_ref().map_or(Vec::new(), |d| {
                listed(d)
                    .into_iter()
                    .map(|h| {
                        let eq: Vec<Value> = d
                            .equivalents(h)
                            .filter(|e| e.suspect.is_fault())
                            .map(|e| json!({"part": e.suspect.part(), "mode": e.suspect.mode()}))
                            .collect();
                        json!({"part": h.suspect.part(), "mode": h.suspect.mode(),
                               "score": json::num(h.score), "estimate": json::opt(h.estimate),
                               "equivalent": eq})
                    })
                    .collect()
            });
            let mut doc = json!({
                "verdict": if v.pass { "pass" } else { "fail" },
                "nodes": nodes,
                "derived": {"ic": json::num(dv.ic), "ib": json::num(dv.ib), "ie": json::opt(dv.ie),
                            "vbe": json::num(dv.vbe), "vce": json::num(dv.vce),
                            "beta": json::opt(dv.beta), "region": dv.region.name()},
                "faults": faults,
            });
            if let (Some(d), Some(obj)) = (d, doc.as_object_mut()) {
                obj.insert("explained".to_string(), json!(d.explained));
            }
            doc
        }
    }
}

const BIG_PASS: &str = "\
  ####    ###    ####   ####
  #   #  #   #  #      #
  ####   #####   ###    ###
  #      #   #      #      #
  #      #   #  ####   ####";

const BIG_FAIL: &str = "\
  #####   ###   #####  #
  #      #   #    #    #
  ####   #####    #    #
  #      #   #    #    #
  #      #   #  #####  #####";

/// A fault in plain words (the core's wording, shared with the instrument's console).
pub fn describe(stage: &Stage, h: &Hypothesis) -> String {
    FaultWords {
        stage,
        hypothesis: h,
    }
    .to_string()
}

/// The next measurement that separates a group of equivalent faults.
pub fn separate(group: &[Suspect]) -> String {
    SeparatingStep::of(group.iter().copied()).to_string()
}

/// The human report of a checked board.
pub fn outcome_text(st: &Station, serial: Option<&str>, o: &Outcome) -> String {
    let mut out = String::new();
    let head = match serial {
        Some(s) => format!("board {s} · design {}", st.id),
        None => format!("design {}", st.id),
    };
    match o {
        Outcome::Refused(why) => {
            out.push_str(&format!("READINGS REFUSED ({head})\n{why}\n"));
        }
        Outcome::Judged(v, d) => {
            out.push_str(if v.pass { BIG_PASS } else { BIG_FAIL });
            out.push_str(&format!("\n\n{head}\n"));
            let failing: Vec<_> = v.failing().collect();
            if !failing.is_empty() {
                out.push_str("Out of window:\n");
                for n in failing {
                    let u = n.node.unit();
                    out.push_str(&format!(
                        "  {:<4} {:>10}   window {} .. {}\n",
                        n.node.label(),
                        text::eng4(n.measured, u),
                        text::eng4(n.low, u),
                        text::eng4(n.high, u)
                    ));
                }
            }
            let dv = &v.derived;
            let beta = dv.beta.map_or("-".to_string(), |b| format!("{b:.0}"));
            out.push_str(&format!(
                "IC {}, IB {}, hFE {beta}, VBE {}, VCE {}, {}\n",
                text::eng(dv.ic, "A"),
                text::eng(dv.ib, "A"),
                text::eng(dv.vbe, "V"),
                text::eng(dv.vce, "V"),
                dv.region.name()
            ));
            if let Some(d) = d {
                if !d.explained {
                    out.push_str(
                        "No single fault explains these readings (two faults, or a wrong \
                         transistor type?). Nearest:\n",
                    );
                } else {
                    out.push_str("Likely faults:\n");
                }
                let mut seen: Vec<u8> = Vec::new();
                for (k, h) in listed(d).into_iter().enumerate() {
                    out.push_str(&format!(
                        "  {}. {} ({:.0} %)\n",
                        k + 1,
                        describe(&st.stage, h),
                        100.0 * h.score
                    ));
                    let eq: Vec<Suspect> = d
                        .equivalents(h)
                        .filter(|e| e.suspect.is_fault())
                        .map(|e| e.suspect)
                        .collect();
                    if !eq.is_empty() && !seen.contains(&h.group) {
                        seen.push(h.group);
                        let names: Vec<String> = eq
                            .iter()
                            .map(|s| format!("{} {}", s.part(), s.mode()))
                            .collect();
                        let mut all = eq.clone();
                        all.push(h.suspect);
                        out.push_str(&format!(
                            "     same readings as {}: to tell them apart, {}\n",
                            names.join(", "),
                            separate(&all)
                        ));
                    }
                }
            }
        }
    }
    out
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let Some(measured_vcc) = self.stage.vcc else {
            return Err(CliError::usage(
                "--vcc: missing: give the supply as measured on the board",
            ));
        };
        // With a design file, the file's supply is the nominal and --vcc the measured one.
        let mut args = self.stage.clone();
        if args.design.is_some() {
            args.vcc = None;
        }
        let resolved = args.resolve()?;
        let st = Station::new(&resolved, self.meter.meter());
        let r = Readings {
            vcc: measured_vcc,
            vb: self.vb,
            ve: self.ve,
            vc: self.vc,
        };
        let o = evaluate(&st, &r)?;
        let mut rec = Recorder::open(self.log.as_deref(), &self.trace, false)?;
        if !rec.is_empty() {
            let serial = self.serial.as_deref().ok_or_else(|| {
                CliError::usage("--serial: missing: a record names its board by serial number")
            })?;
            let run = RunInfo::new(&st, &self.trace, "check");
            rec.write(&mut from_outcome(&st, &run, serial, &r, &o, None, None)?)?;
        }
        match &o {
            Outcome::Refused(why) => Err(CliError::usage(format!(
                "readings refused (vcc {} V, vb {} V, ve {} V, vc {} V): {why}",
                r.vcc, r.vb, r.ve, r.vc
            ))),
            Outcome::Judged(v, _) => {
                if g.json {
                    json::print(&outcome_json(&o));
                } else {
                    out!("{}", outcome_text(&st, self.serial.as_deref(), &o));
                }
                Ok(if v.pass { EXIT_OK } else { EXIT_FAIL })
            }
        }
    }
}
