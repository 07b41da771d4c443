//! The one judging path: from a stage, its transistor, the test settings and a board's readings
//! to the windows, the verdict and the diagnosis. `biasjig check`, `batch`, the station and the
//! console's `check`/`test` all call [`judge`]; `biasjig limits` and the console's `limits`
//! publish [`windows`], the very windows [`judge`] applies at the same supply.
//!
//! In order:
//! 1. the test settings are checked ([`TestSettings::validate`]);
//! 2. the measured supply must lie in the supply window (the stage's nominal ± its supply
//!    tolerance, [`supply_window`]): outside it the board is not judged ([`JudgeError::Supply`]);
//! 3. the stage must be forward active at its nominal point ([`nominal_region`]): a stage that
//!    does not work gets no windows ([`JudgeError::NotActive`]);
//! 4. readings that cannot come from a powered, correctly probed board are refused
//!    ([`check::plausible`]);
//! 5. the windows at the measured supply over the test ambient with the measuring inputs
//!    attached ([`limits::limits`]), the verdict ([`check::check`]) and, for a failed board, the
//!    diagnosis with the same meter, ambient and inputs ([`diagnose::diagnose`]).

use crate::check::{self, Implausible, Verdict};
use crate::device::Profile;
use crate::diagnose::{self, DiagnoseError, Diagnosis};
use crate::limits::{self, Limits, LimitsError, Window};
use crate::settings::{SettingsError, TestSettings};
use crate::solve::{solve, Conditions, Region, SolveError};
use crate::spread::Variation;
use crate::stage::{Readings, Stage, StageError};

/// The supply window: the stage's nominal supply ± its supply tolerance (`Stage::vcc.tol`), V.
/// A measured supply outside it is never a pass.
pub fn supply_window(stage: &Stage) -> Window {
    let v = stage.vcc.value;
    let t = stage.vcc.tol;
    Window {
        low: v * (1.0 - t),
        high: v * (1.0 + t),
    }
}

/// The operating region of the stage at its nominal point: nominal parts and supply, typical
/// hFE, the middle of the test ambient, nothing attached.
pub fn nominal_region(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
) -> Result<Region, SolveError> {
    let temp = 0.5 * (settings.temp_min_c + settings.temp_max_c);
    solve(stage, profile, Conditions::typical(profile).at(temp)).map(|op| op.region)
}

/// What the measuring inputs read at the stage's nodes under `cond` (its loads are replaced by
/// the inputs'): one solve with every input attached (`together`), or one per node with only
/// its own (`one`). The supply reading is the stage's supply.
pub fn readings_through(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    inputs: &crate::settings::Inputs,
) -> Result<Readings, SolveError> {
    use crate::settings::ReadNode;
    let (vb, ve, vc) = match inputs.common_loads() {
        Some(loads) => {
            let op = solve(stage, profile, cond.loaded(loads))?;
            (op.vb, op.ve, op.vc)
        }
        None => {
            let at = |n: ReadNode| solve(stage, profile, cond.loaded(inputs.loads_reading(n)));
            (
                at(ReadNode::Base)?.vb,
                at(ReadNode::Emitter)?.ve,
                at(ReadNode::Collector)?.vc,
            )
        }
    };
    Ok(Readings {
        vcc: stage.vcc.value,
        vb,
        ve,
        vc,
    })
}

/// Above this ratio of the divider's Thévenin resistance (R1 ‖ R2) to the measuring-input
/// resistance, the inputs pull the base noticeably (about the ratio itself, as a fraction of
/// the base's distance from the rail it is pulled to): 1 % (common practice: a meter at least a
/// hundred times the source resistance).
pub const INPUT_LOADING_LIMIT: f64 = 0.01;

/// The ratio of the divider's Thévenin resistance R1 ‖ R2 to the input resistance, when inputs
/// are modelled (see [`INPUT_LOADING_LIMIT`]).
pub fn input_loading(stage: &Stage, inputs: &crate::settings::Inputs) -> Option<f64> {
    let rin = inputs.r?;
    let (r1, r2) = (stage.r1.value, stage.r2.value);
    let rth = r1 * r2 / (r1 + r2);
    Some(rth / rin)
}

/// The windows a board is judged against at one measured supply.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Windows {
    /// The supply window (not widened by the meter: a supply read outside it is refused), V.
    pub supply: Window,
    /// The node windows at the measured supply.
    pub limits: Limits,
}

/// Why a board was not judged, or no windows could be given.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum JudgeError {
    /// A test setting is out of range.
    Settings(SettingsError),
    /// The stage or transistor is out of range.
    Stage(StageError),
    /// The measured supply lies outside the supply window: the board is not judged.
    Supply {
        /// The measured supply, V.
        measured: f64,
        /// The supply window, V.
        window: Window,
    },
    /// The stage is not forward active at its nominal point: it gets no windows.
    NotActive(Region),
    /// The readings cannot come from a powered, correctly probed board.
    Implausible(Implausible),
    /// The windows could not be computed.
    Limits(LimitsError),
    /// The diagnosis could not be made.
    Diagnose(DiagnoseError),
    /// The nominal point could not be solved.
    Solve(SolveError),
}

impl core::fmt::Display for JudgeError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        use crate::units::Fixed;
        match self {
            Self::Settings(e) => write!(f, "{e}"),
            Self::Stage(e) => write!(f, "stage: {e}"),
            Self::Supply { measured, window } => write!(
                f,
                "the supply reads {} V, outside its window {} V to {} V (nominal ± supply \
                 tolerance): the board is not judged; set the supply and test again",
                Fixed(*measured, 3),
                Fixed(window.low, 3),
                Fixed(window.high, 3)
            ),
            Self::NotActive(r) => write!(
                f,
                "the stage is not forward active at its nominal point (region: {}): it gets no \
                 windows; change the bias parts",
                r.name()
            ),
            Self::Implausible(e) => write!(f, "readings refused: {e}"),
            Self::Limits(e) => write!(f, "limits: {e}"),
            Self::Diagnose(e) => write!(f, "diagnosis: {e}"),
            Self::Solve(e) => write!(f, "nominal point: {e}"),
        }
    }
}

/// The variation the windows and the diagnosis cover: the test ambient, read through the inputs.
pub fn variation(settings: &TestSettings) -> Variation {
    settings.variation()
}

/// The stage is valid, its settings are, and it is forward active at its nominal point.
fn usable(stage: &Stage, profile: &Profile, settings: &TestSettings) -> Result<(), JudgeError> {
    settings.validate().map_err(JudgeError::Settings)?;
    stage.validate().map_err(JudgeError::Stage)?;
    profile.validate().map_err(|e| {
        JudgeError::Limits(LimitsError::Spread(crate::spread::SpreadError::Profile(e)))
    })?;
    match nominal_region(stage, profile, settings).map_err(JudgeError::Solve)? {
        Region::Active => Ok(()),
        r => Err(JudgeError::NotActive(r)),
    }
}

/// The windows [`judge`] applies to a board whose supply reads `vcc` (V). `biasjig limits`
/// publishes these (at the nominal supply unless told `--at-vcc`).
pub fn windows(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    vcc: f64,
) -> Result<Windows, JudgeError> {
    usable(stage, profile, settings)?;
    let limits = limits::limits(stage, profile, &variation(settings), &settings.meter, vcc)
        .map_err(JudgeError::Limits)?;
    Ok(Windows {
        supply: supply_window(stage),
        limits,
    })
}

/// One judged board.
#[derive(Debug, Clone, PartialEq)]
pub struct Judgement {
    /// The windows applied.
    pub windows: Windows,
    /// The verdict per node and overall, with the derived quantities.
    pub verdict: Verdict,
    /// The ranked faults when the board failed.
    pub diagnosis: Option<Diagnosis>,
}

/// Judge one board (see the module notes for the order of the steps).
pub fn judge(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
) -> Result<Judgement, JudgeError> {
    let (windows, verdict) = verdict(stage, profile, settings, readings)?;
    let diagnosis = if verdict.pass {
        None
    } else {
        Some(diagnosis(stage, profile, settings, readings).map_err(JudgeError::Diagnose)?)
    };
    Ok(Judgement {
        windows,
        verdict,
        diagnosis,
    })
}

/// Steps 1 to 5 of [`judge`] without the diagnosis: the windows and the verdict. A small
/// instrument calls this and then [`diagnosis`] for a failed board, keeping the diagnosis (a
/// few KB) where it is stored instead of moving it through a [`Judgement`].
#[inline(never)]
pub fn verdict(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
) -> Result<(Windows, Verdict), JudgeError> {
    settings.validate().map_err(JudgeError::Settings)?;
    let r = readings;
    if ![r.vcc, r.vb, r.ve, r.vc].iter().all(|v| v.is_finite()) {
        return Err(JudgeError::Implausible(Implausible::NotFinite));
    }
    let supply = supply_window(stage);
    if !supply.contains(r.vcc) {
        return Err(JudgeError::Supply {
            measured: r.vcc,
            window: supply,
        });
    }
    usable(stage, profile, settings)?;
    let meter = &settings.meter;
    check::plausible(stage, meter, r).map_err(JudgeError::Implausible)?;
    let limits = limits::limits(stage, profile, &variation(settings), meter, r.vcc)
        .map_err(JudgeError::Limits)?;
    let verdict = check::check_through(stage, &limits, meter, &settings.inputs, r)
        .map_err(JudgeError::Implausible)?;
    Ok((Windows { supply, limits }, verdict))
}

/// [`diagnosis`] written into `out`: the instrument keeps it in its session state, never on its
/// stack.
#[inline(never)]
pub fn diagnosis_into(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
    out: &mut Diagnosis,
) -> Result<(), DiagnoseError> {
    diagnose::diagnose_into(
        stage,
        profile,
        readings,
        &settings.meter,
        &variation(settings),
        out,
    )
}

/// The diagnosis of [`judge`] for a failed board: with the same meter, test ambient and inputs.
/// (Its error is the diagnosis's own, so that the result, a few KB, is written once in place; not
/// inlined, so that the diagnosis's working storage is not part of its caller's frame while the
/// windows are computed.)
#[inline(never)]
pub fn diagnosis(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
) -> Result<Diagnosis, DiagnoseError> {
    diagnose::diagnose(
        stage,
        profile,
        readings,
        &settings.meter,
        &variation(settings),
    )
}
