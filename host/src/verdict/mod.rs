//! A board judged on this PC: the design ready for judging ([`Station`]), the one judging path
//! ([`evaluate`], the core's [`judge::judge_with_signal`]) and its result ([`Outcome`]), shared
//! by `check`, `batch`, `limits` and the board records. [`json`] and [`text`] put an outcome into
//! the machine interface and into words.

pub mod json;
pub mod text;

use biasjig_core::device::Profile;
use biasjig_core::diagnose::{Diagnosis, Hypothesis};
use biasjig_core::explain::FaultWords;
use biasjig_core::judge::{self, JudgeError, Judgement, Windows};
use biasjig_core::settings::{Digest, TestSettings};
use biasjig_core::signaltest::ToneReading;
use biasjig_core::spread::Node;
use biasjig_core::stage::{Readings, Stage};
use serde_json::Value;

use thiserror::Error;

use crate::stage_args::Resolved;

/// How many fault hypotheses a result lists at most.
pub const LISTED_FAULTS: usize = 6;

/// The nodes a station judges, in the order they are listed.
pub const NODES: [Node; 6] = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];

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
                .map(|(f, v)| match json::override_value(f, *v) {
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

/// A core judging error that is not a board's refusal: the stage or the settings cannot judge
/// any board (exit 2).
#[derive(Debug, Clone, Copy, Error)]
#[non_exhaustive]
pub enum JudgingError {
    /// The stage is not forward active at its nominal point: it gets no windows.
    #[error("stage: {0}")]
    Stage(JudgeError),
    /// The test settings are refused.
    #[error("test settings: {0}")]
    Settings(JudgeError),
    /// Another refusal of the judging path.
    #[error("{0}")]
    Other(JudgeError),
}

impl From<JudgeError> for JudgingError {
    fn from(e: JudgeError) -> Self {
        match e {
            JudgeError::NotActive(_) => Self::Stage(e),
            JudgeError::Settings(_) => Self::Settings(e),
            _ => Self::Other(e),
        }
    }
}

/// The windows the station applies at the measured supply (the core's [`judge::windows`]).
pub fn board_windows(st: &Station, vcc: f64) -> Result<Windows, JudgingError> {
    Ok(judge::windows(&st.stage, &st.profile, &st.settings, vcc)?)
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
            crate::text::eng(rin, "Ω"),
            st.settings.inputs.mode.name(),
            region.name(),
            crate::text::eng(100.0 * rth, "Ω")
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
pub fn evaluate(
    st: &Station,
    r: &Readings,
    tones: &[ToneReading],
) -> Result<Outcome, JudgingError> {
    match judge::judge_with_signal(&st.stage, &st.profile, &st.settings, r, tones) {
        Ok(j) => Ok(Outcome::Judged(Box::new(j))),
        Err(e @ (JudgeError::Supply { .. } | JudgeError::Implausible(_))) => {
            Ok(Outcome::Refused(e))
        }
        Err(e) => Err(e.into()),
    }
}

/// The listed faults of a diagnosis: best first, the good-board hypothesis left out.
pub fn listed(d: &Diagnosis) -> Vec<&Hypothesis> {
    d.faults().take(LISTED_FAULTS).collect()
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

/// A fault in plain words (the core's wording, shared with the instrument's console).
pub fn describe(stage: &Stage, h: &Hypothesis) -> String {
    FaultWords::of(stage, h).to_string()
}
