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
//!    diagnosis with the same meter, ambient and inputs ([`crate::diagnose::diagnose`]).

use crate::check::{self, Implausible, Verdict};
use crate::device::Profile;
use crate::diagnose::{DiagnoseError, Diagnosis};
use crate::limits::{self, Limits, LimitsError, Window};
use crate::settings::{SettingsError, TestSettings};
use crate::signaltest::{self, SignalTestError, ToneReading, ToneWindow, MAX_TONES};
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
    solve(stage, profile, nominal_conditions(profile, settings)).map(|op| op.region)
}

/// Typical hFE at the middle of the test ambient, nothing attached.
fn nominal_conditions(profile: &Profile, settings: &TestSettings) -> Conditions {
    Conditions::typical(profile).at(0.5 * (settings.temp_min_c + settings.temp_max_c))
}

/// The operating region of the stage at its nominal point while it is read through the
/// measuring inputs (`together`: one solve with every input attached; `one`: the first reading
/// of base, collector, emitter taken outside the forward-active region, else active). Inputs of
/// low resistance on a high-impedance divider can saturate a stage (a PNP's base pulled towards
/// ground) or cut it off although [`nominal_region`], with nothing attached, is active: the
/// windows then describe a stage the inputs have moved off its bias, and few faults show.
pub fn nominal_region_through(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
) -> Result<Region, SolveError> {
    region_through(
        stage,
        profile,
        nominal_conditions(profile, settings),
        &settings.inputs,
    )
}

/// The operating region under `cond` while the stage is read through `inputs` (see
/// [`nominal_region_through`]).
pub fn region_through(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    inputs: &crate::settings::Inputs,
) -> Result<Region, SolveError> {
    use crate::settings::ReadNode;
    if let Some(loads) = inputs.common_loads() {
        return solve(stage, profile, cond.loaded(loads)).map(|op| op.region);
    }
    for n in [ReadNode::Base, ReadNode::Collector, ReadNode::Emitter] {
        let r = solve(stage, profile, cond.loaded(inputs.loads_reading(n)))?.region;
        if r != Region::Active {
            return Ok(r);
        }
    }
    Ok(Region::Active)
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
    let (op, ve, vc) = inputs.read_through(|l| solve(stage, profile, cond.loaded(l)))?;
    Ok(Readings {
        vcc: stage.vcc.value,
        vb: op.vb,
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
    /// The signal test's windows could not be given (a frequency or gain out of range, no
    /// load, too many readings).
    Signal(SignalTestError),
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
            Self::Signal(e) => write!(f, "signal test: {e}"),
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
/// publishes these (at the nominal supply unless asked for another).
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

/// The signal test's windows [`judge_with_signal`] applies at the measured supply `vcc` (V) for
/// the test frequencies `freqs` (Hz, at most [`MAX_TONES`]). `biasjig limits --ac-f` publishes
/// these.
pub fn tone_windows(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    vcc: f64,
    freqs: &[f64],
) -> Result<heapless::Vec<ToneWindow, MAX_TONES>, JudgeError> {
    usable(stage, profile, settings)?;
    signaltest::windows(
        stage,
        profile,
        &variation(settings),
        &settings.signal,
        vcc,
        freqs,
    )
    .map_err(JudgeError::Signal)
}

/// One gain reading judged.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneVerdict {
    /// The reading.
    pub reading: ToneReading,
    /// Its window.
    pub window: ToneWindow,
    /// Inside the window.
    pub ok: bool,
}

/// One judged board.
#[derive(Debug, Clone, PartialEq)]
pub struct Judgement {
    /// The windows applied.
    pub windows: Windows,
    /// The verdict per node and overall (failed when a gain reading fails too), with the
    /// derived quantities.
    pub verdict: Verdict,
    /// The ranked faults when the board failed.
    pub diagnosis: Option<Diagnosis>,
    /// The gain readings judged, in the order given.
    pub tones: ToneVerdicts,
}

/// Judge one board by its DC readings (see the module notes for the order of the steps).
pub fn judge(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
) -> Result<Judgement, JudgeError> {
    judge_with_signal(stage, profile, settings, readings, &[])
}

/// Judge one board by its DC readings and its gain readings `tones` (the signal test): each gain
/// against its window ([`tone_windows`]), the verdict failed when any window fails, and the
/// diagnosis on DC and signal readings together ([`crate::diagnose::diagnose_with_signal`]).
pub fn judge_with_signal(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
    tones: &[ToneReading],
) -> Result<Judgement, JudgeError> {
    let (windows, verdict, judged) =
        verdict_with_signal(stage, profile, settings, readings, tones)?;
    let diagnosis = if verdict.pass {
        None
    } else {
        let mut d = Diagnosis::new();
        diagnosis_with_signal_into(stage, profile, settings, readings, tones, &mut d)
            .map_err(JudgeError::Diagnose)?;
        Some(d)
    };
    Ok(Judgement {
        windows,
        verdict,
        diagnosis,
        tones: judged,
    })
}

/// Steps 1 to 5 of [`judge`] without the diagnosis: the windows and the verdict. A small
/// instrument calls this and then [`diagnosis_with_signal_into`] for a failed board, keeping the diagnosis (a
/// few KB) where it is stored instead of moving it through a [`Judgement`].
pub fn verdict(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
) -> Result<(Windows, Verdict), JudgeError> {
    verdict_with_signal(stage, profile, settings, readings, &[]).map(|(w, v, _)| (w, v))
}

/// The gain readings judged against their windows.
pub type ToneVerdicts = heapless::Vec<ToneVerdict, TONE_SLOTS>;

/// Gain readings a judgement holds at most (none without the signal test: a small instrument
/// keeps no room for them).
pub const TONE_SLOTS: usize = if cfg!(feature = "signal-test") {
    MAX_TONES
} else {
    0
};

/// [`verdict`] with gain readings `tones`: each against its window ([`tone_windows`]); the
/// verdict fails when any window fails.
#[inline(never)]
pub fn verdict_with_signal(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
    tones: &[ToneReading],
) -> Result<(Windows, Verdict, ToneVerdicts), JudgeError> {
    settings.validate().map_err(JudgeError::Settings)?;
    if tones.len() > MAX_TONES {
        return Err(JudgeError::Signal(SignalTestError::TooMany));
    }
    for t in tones {
        signaltest::validate_reading(t).map_err(JudgeError::Signal)?;
    }
    let r = readings;
    check::finite(r).map_err(JudgeError::Implausible)?;
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
    let var = variation(settings);
    let limits = limits::limits(stage, profile, &var, meter, r.vcc).map_err(JudgeError::Limits)?;
    #[cfg_attr(not(feature = "signal-test"), expect(unused_mut))]
    let mut verdict = check::check_through(stage, &limits, meter, &settings.inputs, r)
        .map_err(JudgeError::Implausible)?;
    #[cfg_attr(not(feature = "signal-test"), expect(unused_mut))]
    let mut judged = ToneVerdicts::new();
    #[cfg(not(feature = "signal-test"))]
    if !tones.is_empty() {
        return Err(JudgeError::Signal(SignalTestError::NotBuilt));
    }
    #[cfg(feature = "signal-test")]
    if !tones.is_empty() {
        let freqs: heapless::Vec<f64, MAX_TONES> = tones.iter().map(|t| t.f).collect();
        let w = signaltest::windows(stage, profile, &var, &settings.signal, r.vcc, &freqs)
            .map_err(JudgeError::Signal)?;
        for (t, w) in tones.iter().zip(w) {
            let ok = w.contains(t.gain);
            verdict.pass &= ok;
            let _ = judged.push(ToneVerdict {
                reading: *t,
                window: w,
                ok,
            });
        }
    }
    Ok((Windows { supply, limits }, verdict, judged))
}

/// The diagnosis of [`judge`] for a failed board, on DC and gain readings together, with the same
/// meter, test ambient and inputs, written into `out`: the instrument keeps it in its session
/// state, never on its stack (the diagnosis's own entry, [`crate::diagnose::diagnose_into`]).
pub use crate::diagnose::diagnose_into as diagnosis_with_signal_into;
