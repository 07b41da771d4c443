//! `biasjig check`: judge one board's measured node voltages through the core's one judging
//! path ([`biasjig_core::judge::judge`]) and, when it fails, name the likely faulty part.
//!
//! Exit 0 pass, 1 fail. A supply outside the supply window (nominal ± supply tolerance) and
//! readings that cannot come from a powered, correctly probed board (a node above the supply or
//! below ground, every node equal) are refused: the board is not judged, exit 2 with what to
//! fix; with `--log` the refusal is logged too. A stage that is not forward active at its
//! nominal point gets no windows (exit 2).

use std::path::PathBuf;

use biasjig_core::device::Profile;
use biasjig_core::diagnose::{Diagnosis, Hypothesis};
use biasjig_core::explain::{listing, FaultWords, Listed};
use biasjig_core::judge::{self, JudgeError, Judgement, Windows};
use biasjig_core::limits::Window;
use biasjig_core::settings::{Digest, TestSettings};
use biasjig_core::signaltest::{self, ToneReading};
use biasjig_core::stage::{Readings, Stage};
use serde_json::{json, Value};

use crate::board::{from_outcome, Recorder, RunInfo};
use crate::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK};
use crate::stage_args::{InputArgs, Resolved, StageArgs, TestArgs};
use crate::store::TraceArgs;
use crate::{json, text, values, Global};

/// How many fault hypotheses a result lists at most.
pub const LISTED_FAULTS: usize = 6;

/// `biasjig check`: the stage by flags or `--design FILE`; `--vcc` is the supply as measured.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    /// Nominal supply of a stage given by flags, V (its window is this ± --vcc-tol)
    /// [default: the measured --vcc; with --design: the file's]
    #[arg(long = "vcc-nominal", value_name = "V", value_parser = values::volts, help_heading = "Stage")]
    vcc_nominal: Option<f64>,
    /// Measured base voltage, V
    #[arg(long, value_parser = values::signed_volts, allow_hyphen_values = true, help_heading = "Readings")]
    vb: f64,
    /// Measured emitter voltage, V
    #[arg(long, value_parser = values::signed_volts, allow_hyphen_values = true, help_heading = "Readings")]
    ve: f64,
    /// Measured collector voltage, V
    #[arg(long, value_parser = values::signed_volts, allow_hyphen_values = true, help_heading = "Readings")]
    vc: f64,
    /// Signal test: the gain magnitude G = |v(load)/v(source EMF)| read at F Hz, as F:G
    /// (repeatable, at most 4; e.g. --ac 1k:14.2 --ac 20:9.8)
    #[arg(long = "ac", value_name = "F:G", value_parser = tone_reading, help_heading = "Readings")]
    ac: Vec<ToneReading>,
    /// Board serial number, for the log
    #[arg(long, help_heading = "Readings")]
    serial: Option<String>,
    /// Append a record of this board to FILE (JSON Lines)
    #[arg(long, value_name = "FILE", help_heading = "Readings")]
    log: Option<PathBuf>,
    #[command(flatten)]
    test: TestArgs,
    #[command(flatten)]
    inputs: InputArgs,
    #[command(flatten)]
    trace: TraceArgs,
}

/// Parse one `--ac F:G`: F in Hz (value grammar), G the gain magnitude (plain number).
pub fn tone_reading(text: &str) -> Result<ToneReading, String> {
    let allowed = "allowed: F:G with F a frequency of 0.1 Hz to 100 kHz (e.g. 1k or 20) and G a \
                   gain magnitude of 0 to 100000 (e.g. 14.2)";
    let (f, g) = text
        .split_once(':')
        .ok_or_else(|| format!("{text:?}: {allowed}"))?;
    let f = values::value(f.trim().trim_end_matches("Hz"))
        .map_err(|e| format!("{text:?}: frequency: {e}; {allowed}"))?;
    let g: f64 = g
        .trim()
        .parse()
        .map_err(|_| format!("{text:?}: gain {g:?} is not a plain number; {allowed}"))?;
    let r = ToneReading { f, gain: g };
    signaltest::validate_reading(&r).map_err(|e| format!("{text:?}: {e}; {allowed}"))?;
    Ok(r)
}

/// A design ready for the station: stage, profile, test settings, identity.
#[derive(Debug, Clone)]
pub struct Station {
    /// The design (nominal supply).
    pub stage: Stage,
    /// The transistor.
    pub profile: Profile,
    /// The test settings (test ambient, meter, measuring inputs).
    pub settings: TestSettings,
    /// Design identifier.
    pub id: String,
    /// Design hash (the instrument's, of the parts and transistor).
    pub hash: String,
    /// The design file's digest, when the stage came from one.
    pub file_digest: Option<String>,
    /// The settings digest of what judges the boards.
    pub digest: Digest,
    /// Flags given beside `--design` that change what the file states.
    pub overrides: Vec<(String, f64)>,
}

impl Station {
    /// From a resolved stage (flags or a design file with its test settings).
    pub fn new(r: &Resolved) -> Self {
        let (id, hash, file_digest) = match &r.doc {
            Some(d) => (d.id.clone(), d.hash.clone(), Some(d.digest.clone())),
            None => ("flags".to_string(), stage_hash(&r.stage, &r.profile), None),
        };
        if !r.overrides.is_empty() {
            let list: Vec<String> = r
                .overrides
                .iter()
                .map(|(f, v)| match override_value(f, *v) {
                    Value::String(w) => format!("{f} {w}"),
                    Value::Bool(_) => f.clone(),
                    other => format!("{f} {other}"),
                })
                .collect();
            eprintln!(
                "biasjig: warning: flags override the design file ({}); recorded with every \
                 board, settings digest {}",
                list.join(", "),
                r.digest()
            );
        }
        Self {
            stage: r.stage,
            profile: r.profile,
            settings: r.settings,
            id,
            hash,
            file_digest,
            digest: r.digest(),
            overrides: r.overrides.clone(),
        }
    }
}

/// The design hash of the stage and profile (the one of design files and the instrument), hex.
pub fn stage_hash(stage: &Stage, profile: &Profile) -> String {
    crate::designfile::hash(stage, profile)
}

/// A core judging error that is not a board's refusal, as bad input naming the flags.
pub fn judge_error(e: JudgeError) -> CliError {
    match e {
        JudgeError::NotActive(_) => CliError::usage(format!("stage: {e}")),
        JudgeError::Settings(_) => CliError::usage(format!("test settings: {e}")),
        _ => CliError::usage(e.to_string()),
    }
}

/// The windows the station applies at the measured supply (the core's [`judge::windows`]).
pub fn board_windows(st: &Station, vcc: f64) -> Result<Windows, CliError> {
    judge::windows(&st.stage, &st.profile, &st.settings, vcc).map_err(judge_error)
}

/// A warning about what the windows rest on: a machine word for `--json` (`warnings`) and a
/// sentence for people (stderr).
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    /// Machine word, such as `inputs_move_the_stage_to_saturation`.
    pub code: String,
    /// The sentence for a person.
    pub text: String,
}

/// When the measuring inputs move the stage out of the forward-active region at its nominal
/// point (the stage itself is active: [`judge::nominal_region`]), the windows describe a stage the
/// jig has pulled off its bias: say so, and what would do better.
pub fn inputs_region_warning(st: &Station) -> Option<Warning> {
    use biasjig_core::solve::Region;
    let rin = st.settings.inputs.r?;
    let bare = judge::nominal_region(&st.stage, &st.profile, &st.settings).ok()?;
    let region = judge::nominal_region_through(&st.stage, &st.profile, &st.settings).ok()?;
    if bare != Region::Active || region == Region::Active {
        return None;
    }
    let (r1, r2) = (st.stage.r1.value, st.stage.r2.value);
    let rth = r1 * r2 / (r1 + r2);
    Some(Warning {
        code: format!("inputs_move_the_stage_to_{}", region.name()),
        text: format!(
            "the {} measuring inputs ({}) put the stage in {} while it is read (without them it \
             is active): the windows hold for a board read that way, but a good board and \
             several faults then read alike. Use inputs of at least {} (100 × R1 ‖ R2) or \
             buffered ones",
            text::eng(rin, "Ω"),
            st.settings.inputs.mode.name(),
            region.name(),
            text::eng(100.0 * rth, "Ω")
        ),
    })
}

/// The result of checking one board.
#[derive(Debug, Clone)]
pub enum Outcome {
    /// Judged: the windows, the verdict, and a diagnosis when it failed.
    Judged(Box<Judgement>),
    /// Not judged: the supply outside its window, or readings that cannot be right.
    Refused(JudgeError),
}

impl Outcome {
    /// "pass", "fail" or "refused".
    pub fn word(&self) -> &'static str {
        match self {
            Self::Judged(j) if j.verdict.pass => "pass",
            Self::Judged(..) => "fail",
            Self::Refused(_) => "refused",
        }
    }
}

/// Check one board through the one judging path (and diagnose it when it fails), with its gain
/// readings `tones` (the signal test; none for a DC test).
pub fn evaluate(st: &Station, r: &Readings, tones: &[ToneReading]) -> Result<Outcome, CliError> {
    match judge::judge_with_signal(&st.stage, &st.profile, &st.settings, r, tones) {
        Ok(j) => Ok(Outcome::Judged(Box::new(j))),
        Err(e @ (JudgeError::Supply { .. } | JudgeError::Implausible(_))) => {
            Ok(Outcome::Refused(e))
        }
        Err(e) => Err(judge_error(e)),
    }
}

/// The listed faults of a diagnosis: best first, the good-board hypothesis left out.
pub fn listed(d: &Diagnosis) -> Vec<&Hypothesis> {
    d.faults().take(LISTED_FAULTS).collect()
}

/// The test settings as JSON (SI units): test ambient, meter, measuring inputs.
pub fn settings_json(t: &TestSettings) -> Value {
    json!({
        "temp_min": json::num(t.temp_min_c),
        "temp_max": json::num(t.temp_max_c),
        "meter": {"gain_error": json::num(t.meter.gain_error), "offset": json::num(t.meter.offset),
                  "divider_tol": json::num(t.meter.divider_tol)},
        "inputs": {"r": json::opt(t.inputs.r), "mode": t.inputs.mode.name()},
    })
}

fn supply_json(measured: f64, w: &Window) -> Value {
    json!({"measured": json::num(measured), "low": json::num(w.low), "high": json::num(w.high),
           "ok": w.contains(measured)})
}

/// The machine-interface document of a checked board (`measured` is the supply as read).
pub fn outcome_json(o: &Outcome, measured_vcc: f64) -> Value {
    match o {
        Outcome::Refused(why) => {
            let mut doc = json!({"verdict": "refused", "reason": why.to_string()});
            if let (JudgeError::Supply { measured, window }, Some(obj)) = (why, doc.as_object_mut())
            {
                obj.insert("supply".into(), supply_json(*measured, window));
            }
            doc
        }
        Outcome::Judged(j) => {
            let v = &j.verdict;
            let d = &j.diagnosis;
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
                "supply": supply_json(measured_vcc, &j.windows.supply),
                "nodes": nodes,
                "derived": {"ic": json::num(dv.ic), "ib": json::num(dv.ib), "ie": json::opt(dv.ie),
                            "vbe": json::num(dv.vbe), "vce": json::num(dv.vce),
                            "beta": json::opt(dv.beta), "region": dv.region.name()},
                "faults": faults,
            });
            if let (Some(d), Some(obj)) = (d, doc.as_object_mut()) {
                obj.insert("explained".to_string(), json!(d.explained));
            }
            if let (false, Some(obj)) = (j.tones.is_empty(), doc.as_object_mut()) {
                obj.insert("ac".to_string(), ac_json(j));
            }
            doc
        }
    }
}

/// One override as JSON: a number in SI units (percent for the percentage flags), `--inputs`
/// by its word and a switch such as `--pnp` as `true` (they are kept as numbers inside).
fn override_value(flag: &str, v: f64) -> Value {
    match flag {
        "--inputs" => json!(if v == 0.0 { "together" } else { "one" }),
        "--pnp" => json!(true),
        _ => json::num(v),
    }
}

/// The test frequency whose gain reading tells `h` and its equivalents apart, if any (only
/// when a capacitor is among them: the gain is what a capacitor changes).
pub fn separating_tone(st: &Station, vcc: f64, d: &Diagnosis, h: &Hypothesis) -> Option<f64> {
    let mut group: Vec<Hypothesis> = vec![*h];
    group.extend(d.equivalents(h).filter(|e| e.suspect.is_fault()).copied());
    if group.len() < 2
        || !group
            .iter()
            .any(|g| matches!(g.suspect, biasjig_core::diagnose::Suspect::Capacitor(..)))
    {
        return None;
    }
    biasjig_core::diagnose::separating_tone(
        &st.stage,
        &st.profile,
        vcc,
        &st.settings.signal,
        &judge::variation(&st.settings),
        &group,
    )
}

/// Add `"separating_f"` (Hz, or null) to each listed fault with equivalents.
fn add_separation(st: &Station, vcc: f64, o: &Outcome, doc: &mut Value) {
    let Outcome::Judged(j) = o else { return };
    let Some(d) = &j.diagnosis else { return };
    let Some(faults) = doc.get_mut("faults").and_then(|f| f.as_array_mut()) else {
        return;
    };
    for (h, f) in listed(d).into_iter().zip(faults.iter_mut()) {
        if d.equivalents(h).any(|e| e.suspect.is_fault()) {
            if let Some(obj) = f.as_object_mut() {
                obj.insert(
                    "separating_f".into(),
                    json::opt(separating_tone(st, vcc, d, h)),
                );
            }
        }
    }
}

/// The judged gain readings: `[{"f","measured","low","high","ok"}]` in the order given.
pub fn ac_json(j: &Judgement) -> Value {
    Value::Array(
        j.tones
            .iter()
            .map(|t| {
                json!({"f": json::num(t.reading.f), "measured": json::num(t.reading.gain),
                       "low": json::num(t.window.low), "high": json::num(t.window.high),
                       "ok": t.ok})
            })
            .collect(),
    )
}

/// The overrides in force as JSON: flag -> value as given.
pub fn overrides_json(st: &Station) -> Value {
    let mut m = serde_json::Map::new();
    for (flag, v) in &st.overrides {
        m.insert(flag.clone(), override_value(flag, *v));
    }
    Value::Object(m)
}

/// What judged the boards: the settings, the settings digest and the overrides.
fn add_provenance(st: &Station, doc: &mut Value) {
    if let Some(obj) = doc.as_object_mut() {
        obj.insert("settings".into(), settings_json(&st.settings));
        obj.insert("digest".into(), json!(st.digest.to_string()));
        obj.insert("overrides".into(), overrides_json(st));
    }
}

// (`concat!` keeps the first row's indent: a `\` line continuation would strip it and shear
// the letters.)
const BIG_PASS: &str = concat!(
    "  ####    ###    ####   ####\n",
    "  #   #  #   #  #      #\n",
    "  ####   #####   ###    ###\n",
    "  #      #   #      #      #\n",
    "  #      #   #  ####   ####"
);

const BIG_FAIL: &str = concat!(
    "  #####   ###   #####  #\n",
    "  #      #   #    #    #\n",
    "  ####   #####    #    #\n",
    "  #      #   #    #    #\n",
    "  #      #   #  #####  #####"
);

/// A fault in plain words (the core's wording, shared with the instrument's console).
pub fn describe(stage: &Stage, h: &Hypothesis) -> String {
    FaultWords::of(stage, h).to_string()
}

/// One line of the test settings for a person: ambient, meter, inputs.
pub fn settings_text(t: &TestSettings) -> String {
    let inputs = match t.inputs.r {
        Some(r) => format!(
            "inputs {} to ground, {}",
            text::eng(r, "Ω"),
            t.inputs.mode.name()
        ),
        None => "an ideal meter (no inputs modelled)".to_string(),
    };
    format!(
        "ambient {}, meter {} % of reading + {} (divider {} %), {inputs}",
        text::ambient(t.temp_min_c, t.temp_max_c),
        100.0 * t.meter.gain_error,
        text::eng4(t.meter.offset, "V"),
        100.0 * t.meter.divider_tol
    )
}

/// The human report of a checked board. `supply_judged` is false when no nominal supply was
/// given for a stage by flags (its window is then centred on the measured supply itself).
pub fn outcome_text(
    st: &Station,
    serial: Option<&str>,
    r: &Readings,
    o: &Outcome,
    supply_judged: bool,
) -> String {
    let mut out = String::new();
    let design = if st.file_digest.is_some() {
        format!("design {}", st.id)
    } else {
        "stage given by flags".to_string()
    };
    let head = match serial {
        Some(s) => format!("board {s} · {design}"),
        None => design,
    };
    match o {
        Outcome::Refused(why) => {
            out.push_str(&format!("NOT JUDGED ({head})\n{why}\n"));
        }
        Outcome::Judged(j) => {
            let v = &j.verdict;
            out.push_str(if v.pass { BIG_PASS } else { BIG_FAIL });
            out.push_str(&format!("\n\n{head}\n{}\n", settings_text(&st.settings)));
            let sw = &j.windows.supply;
            if supply_judged {
                out.push_str(&format!(
                    "  {:<4} {:>10}   window {} .. {}\n",
                    "VCC",
                    text::eng4(r.vcc, "V"),
                    text::eng4(sw.low, "V"),
                    text::eng4(sw.high, "V")
                ));
            } else {
                out.push_str(&format!(
                    "  {:<4} {:>10}   not judged: no nominal supply given (--vcc-nominal V)\n",
                    "VCC",
                    text::eng4(r.vcc, "V"),
                ));
            }
            for n in &v.nodes {
                let u = n.node.unit();
                out.push_str(&format!(
                    "  {:<4} {:>10}   window {} .. {}{}\n",
                    n.node.label(),
                    text::eng4(n.measured, u),
                    text::eng4(n.low, u),
                    text::eng4(n.high, u),
                    if n.ok { "" } else { "   OUT" }
                ));
            }
            for t in &j.tones {
                out.push_str(&format!(
                    "  gain at {}: {:.3}   window {:.3} .. {:.3}{}\n",
                    text::eng4(t.reading.f, "Hz"),
                    t.reading.gain,
                    t.window.low,
                    t.window.high,
                    if t.ok { "" } else { "   OUT" }
                ));
            }
            let dv = &v.derived;
            let beta = dv
                .beta
                .map_or("not derived".to_string(), |b| format!("{b:.0}"));
            out.push_str(&format!(
                "IC {}, IB {}, hFE {beta}, VBE {}, VCE {}, {}\n",
                text::eng(dv.ic, "A"),
                text::eng(dv.ib, "A"),
                text::eng(dv.vbe, "V"),
                text::eng(dv.vce, "V"),
                dv.region.name()
            ));
            if let Some(d) = &j.diagnosis {
                let items: Vec<Listed> = listed(d)
                    .into_iter()
                    .map(|h| Listed::of(d, h).with_tone(separating_tone(st, r.vcc, d, h)))
                    .collect();
                listing(&st.stage, d.explained, &items, &mut |a| {
                    let l = a.to_string();
                    let indent = if l.starts_with("Likely") || l.starts_with("No single") {
                        ""
                    } else {
                        "  "
                    };
                    out.push_str(&format!("{indent}{l}\n"));
                });
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
        // With a design file, the file's supply is the nominal and --vcc the measured one; for
        // a stage by flags the nominal is --vcc-nominal, or the measured supply itself.
        let mut args = self.stage.clone();
        if args.design.is_some() {
            if self.vcc_nominal.is_some() {
                return Err(CliError::usage(
                    "--vcc-nominal: the design file states the nominal supply; give it only with \
                     a stage by flags",
                ));
            }
            args.vcc = None;
        } else if let Some(v) = self.vcc_nominal {
            args.vcc = Some(v);
        }
        let resolved = args.resolve_with(Some(&self.inputs), Some(&self.test))?;
        let st = Station::new(&resolved);
        if let Some(w) = inputs_region_warning(&st) {
            eprintln!("biasjig: warning: {}", w.text);
        }
        let r = Readings {
            vcc: measured_vcc,
            vb: self.vb,
            ve: self.ve,
            vc: self.vc,
        };
        if self.trace.store.is_some() && self.serial.is_none() {
            return Err(CliError::usage(
                "--serial: missing: a test in the store names its board by serial number",
            ));
        }
        let o = evaluate(&st, &r, &self.ac)?;
        let mut rec = Recorder::open(self.log.as_deref(), &self.trace, false)?;
        if !rec.is_empty() {
            // Without --serial the log keeps the test, but it is no board record for a report.
            let serial = self.serial.as_deref().unwrap_or("");
            let run = RunInfo::new(&st, &self.trace, "check");
            rec.write(&mut from_outcome(&st, &run, serial, &r, &o, None, None)?)?;
        }
        match &o {
            Outcome::Refused(why) => {
                // The document still says what happened ("refused", the supply window): a
                // station script reads why the board was not judged from stdout too.
                if g.json {
                    let mut doc = outcome_json(&o, r.vcc);
                    add_provenance(&st, &mut doc);
                    json::print(&doc);
                }
                Err(CliError::usage(format!(
                    "not judged (vcc {} V, vb {} V, ve {} V, vc {} V): {why}",
                    r.vcc, r.vb, r.ve, r.vc
                )))
            }
            Outcome::Judged(j) => {
                if g.json {
                    let mut doc = outcome_json(&o, r.vcc);
                    add_provenance(&st, &mut doc);
                    add_separation(&st, r.vcc, &o, &mut doc);
                    json::print(&doc);
                } else {
                    let supply_judged = self.stage.design.is_some() || self.vcc_nominal.is_some();
                    out!(
                        "{}",
                        outcome_text(&st, self.serial.as_deref(), &r, &o, supply_judged)
                    );
                }
                Ok(if j.verdict.pass { EXIT_OK } else { EXIT_FAIL })
            }
        }
    }
}
