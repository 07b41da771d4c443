//! Fault isolation: which single fault best explains a board's readings.
//!
//! Every hypothesis of the single-fault dictionary (each resistor `open`, `short`, `low`, `high`;
//! the transistor `be_open`, `bc_open`, `be_short`, `bc_short`, `ce_short`, `reversed`; and the
//! good board) is solved with the exact engine at the measured supply. What is unknown is
//! fitted: hFE within the profile's spread and, for `low`/`high`, the part's actual value
//! (searched in log(value) outside the tolerance band on the side the mode names).
//!
//! The match is scored with an error model that knows the parts and the meter: the readings
//! (VB, VE, VC) of a board with the hypothesised fault scatter around the prediction because
//! the other parts lie anywhere within their tolerances (uniform), the ambient anywhere in its
//! range, the supply reading and each node reading carry the meter error (uniform within its
//! bound) and a little probe noise. The scatter is linearised at the hypothesis into a 3×3
//! covariance C (one extra solve per part), and the misfit is the Mahalanobis distance
//! χ² = rᵀ·C⁻¹·r of the residual r. Fitting a part's value costs [`FIT_PENALTY`] on χ², so
//! a plain open or short wins over a `high`/`low` fit that says the same thing. The score is
//! the relative likelihood exp(−χ²/2), normalised over all hypotheses.
//!
//! Hypotheses whose fitted predictions agree at every node within the meter error are grouped
//! as equivalent (their DC signatures cannot be told apart, as with RE1 open and RE2 open).
//! When even the best hypothesis misfits by more than [`UNEXPLAINED_CHI2`], the diagnosis says
//! that no single fault explains the readings, and still ranks the nearest ones.
//!
//! A screen comes first: every hypothesis at typical hFE (a `low`/`high` one on a coarse grid of
//! its value, with two golden-section steps around the best point) under a crude diagonal error
//! model. Only the best [`SCREEN_KEEP`]
//! and any within [`SCREEN_MARGIN`] of the best get the full fit; the others keep their coarse
//! fit, ranked no better than [`SCREEN_MARGIN`] above the best fully fitted χ².
//!
//! Cost: about 185 operating-point solves (at most about 255), each started from the last one
//! ([`solve_from_single`](crate::solve::solve_from_single): about 2 Newton iterations each, in
//! single precision).
//!
//! The files by job: `hypothesis` the dictionary and the result types, `model` the board
//! under a hypothesis (the readings predicted by the exact engine), `covariance` the error
//! model, `search` the one-dimensional searches, `fit` the screen and the fits, `rank` the
//! scores, the groups and the separating tone.

mod covariance;
mod fit;
mod hypothesis;
mod model;
mod rank;
mod search;

pub use hypothesis::{Diagnosis, Hypothesis, ResistorMode, Suspect};
#[cfg(feature = "signal-test")]
pub use rank::separating_tone;

use crate::device::Profile;
use crate::limits::Meter;
use crate::settings::TestSettings;
use crate::signaltest::{SignalMeter, ToneReading, MAX_TONES};
use crate::spread::Variation;
use crate::stage::{Readings, Stage};
use model::Ctx;

/// Hypotheses in one diagnosis at most: the good board, 5 resistors × 4 modes, 6 transistor
/// faults, 3 capacitors × 4 modes.
pub const CAPACITY: usize = if cfg!(feature = "signal-test") {
    39
} else {
    // Without the signal test a capacitor can only be `short` (seen at DC).
    30
};
/// Gain readings in one diagnosis at most (none without the signal test).
pub const GAIN_SLOTS: usize = if cfg!(feature = "signal-test") {
    MAX_TONES
} else {
    0
};
/// Readings in one diagnosis at most: VB, VE, VC and the gain at each test frequency.
const DIM: usize = 3 + GAIN_SLOTS;
/// Noise of a gain reading on top of the signal meter's error bound, V/V (standard deviation).
pub const GAIN_NOISE: f64 = 0.005;
/// χ² added for a fitted part value (`low`/`high`), so that a fit never beats a plain fault
/// that explains the readings as well.
pub const FIT_PENALTY: f64 = 3.0;
/// Above this χ² of the best hypothesis, no single fault explains the readings.
pub const UNEXPLAINED_CHI2: f64 = 30.0;
/// How far a `low` or `high` value is searched from the nominal: a factor each way (two decades:
/// beyond that a technician treats the part as open or shorted).
pub const VALUE_RANGE: f64 = 100.0;
/// Probe and reading noise assumed on top of the meter's error bound, V (standard deviation).
pub const PROBE_NOISE_V: f64 = 0.002;
/// Extra standard deviation of a node left floating by the fault (nothing but the meter holds
/// it), V: what a real meter reads there depends on its input resistance.
pub const FLOATING_NODE_V: f64 = 0.2;
/// Hypotheses always given the full fit after the screen, at least.
pub const SCREEN_KEEP: usize = 4;
/// Coarse χ² (crude error model) within which of the best coarse one a hypothesis gets the full fit.
pub const SCREEN_MARGIN: f64 = 5.0;

/// Why no diagnosis could be made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum DiagnoseError {
    /// A reading is not finite (or a test frequency or gain is out of range).
    Readings,
    /// Not one hypothesis could be solved (the stage or profile is not valid).
    NothingSolved,
}

impl core::fmt::Display for DiagnoseError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::Readings => "a reading is not a number",
            Self::NothingSolved => "no hypothesis could be solved: check the stage and transistor",
        })
    }
}

/// Rank the single-fault hypotheses against a board's readings.
///
/// `stage` is the design (nominal parts and tolerances; its supply is replaced by the measured
/// one), `var` gives the ambient range and the measuring inputs attached while the nodes were
/// read (every hypothesis is solved with them), `meter` the accuracy of the readings.
pub fn diagnose(
    stage: &Stage,
    profile: &Profile,
    readings: &Readings,
    meter: &Meter,
    var: &Variation,
) -> Result<Diagnosis, DiagnoseError> {
    diagnose_with_signal(
        stage,
        profile,
        readings,
        &[],
        meter,
        &SignalMeter::DEFAULT,
        var,
    )
}

/// Rank the single-fault hypotheses against a board's DC readings and its gain readings
/// `tones` (at most [`MAX_TONES`], each judged with the accuracy `signal`). With gain readings
/// the dictionary adds the capacitors' `open`, `low` and `high`, and hypotheses are grouped as
/// equivalent only when every reading, DC and signal, agrees within its error.
pub fn diagnose_with_signal(
    stage: &Stage,
    profile: &Profile,
    readings: &Readings,
    tones: &[ToneReading],
    meter: &Meter,
    signal: &SignalMeter,
    var: &Variation,
) -> Result<Diagnosis, DiagnoseError> {
    let settings = TestSettings {
        meter: *meter,
        signal: *signal,
        ..TestSettings::for_variation(var)
    };
    let mut d = Diagnosis::new();
    diagnose_into(stage, profile, &settings, readings, tones, &mut d)?;
    Ok(d)
}

/// The diagnosis under the test settings (the ambient, the meter and the signal meter, the
/// measuring inputs), on DC and gain readings together, written into `out` (a few KB): an
/// instrument keeps the result where it is stored instead of moving it through its stack. On an
/// error `out` holds nothing useful. (Not inlined, so that its working storage is not part of
/// its caller's frame.)
#[inline(never)]
pub fn diagnose_into(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
    readings: &Readings,
    tones: &[ToneReading],
    out: &mut Diagnosis,
) -> Result<(), DiagnoseError> {
    out.ranked.clear();
    out.explained = false;
    out.solves = 0;
    if crate::check::finite(readings).is_err()
        || tones.len() > GAIN_SLOTS
        || (cfg!(not(feature = "signal-test")) && !tones.is_empty())
        || tones
            .iter()
            .any(|t| crate::signaltest::validate_reading(t).is_err())
    {
        return Err(DiagnoseError::Readings);
    }
    let n = 3 + tones.len();
    let mut m = [0.0; DIM];
    let mut freqs = [0.0; GAIN_SLOTS];
    for (k, slot) in m.iter_mut().enumerate() {
        *slot = match k {
            0 => readings.vb,
            1 => readings.ve,
            2 => readings.vc,
            _ => tones.get(k - 3).map_or(0.0, |t| t.gain),
        };
    }
    for (slot, t) in freqs.iter_mut().zip(tones) {
        *slot = t.f;
    }
    let mut ctx = Ctx::new(stage, profile, readings.vcc, settings);
    ctx.measured = m;
    ctx.n = n;
    ctx.tones = freqs;
    // 1. The screen: every hypothesis at typical hFE (value faults at the points of a coarse
    //    grid) under the crude error model. 2. The full fit for every hypothesis the screen
    //    cannot rule out: the best SCREEN_KEEP and any within SCREEN_MARGIN of the best. The
    //    screen's findings wait in the result's own slots until the fits replace them.
    let dictionary = hypothesis::dictionary(stage, !tones.is_empty());
    fit::fit_all(&mut ctx, &dictionary, &mut out.ranked);
    if out.ranked.is_empty() {
        return Err(DiagnoseError::NothingSolved);
    }
    // 3. Scores, then the groups of hypotheses the readings cannot tell apart.
    let explained = rank::rank(&mut out.ranked);
    rank::group(&mut out.ranked, &rank::tolerances(settings, &m), n);
    out.explained = explained;
    out.solves = ctx.solves;
    Ok(())
}
