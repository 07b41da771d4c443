//! Everything the engine predicts for one stage in one call: the exact operating point, the hand
//! estimate, midband figures, the low corner, power, and warnings a practitioner would raise.

use crate::device::Profile;
use crate::estimate::{estimate, Estimate};
use crate::lowfreq::{low_corner, LowCorner};
use crate::power::{power, Power, RESISTOR_POWER_LIMIT};
use crate::signal::{midband, Midband};
use crate::solve::{solve, Conditions, OperatingPoint, Region, SolveError};
use crate::stage::{Polarity, Resistor, Stage};

/// Things a practitioner would point out about a stage. Each is `true` when it applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Warnings {
    /// The divider is not stiff: R1‖R2 is more than 0.1·hFE(min)·(RE1+RE2) (common practice).
    pub divider_not_stiff: bool,
    /// The transistor is saturated.
    pub saturated: bool,
    /// The transistor is cut off.
    pub cut_off: bool,
    /// The transistor dissipates more than its derated rating.
    pub over_rating: bool,
    /// A resistor dissipates more than 0.25 W (common practice for small parts).
    pub resistor_hot: [bool; 5],
    /// No emitter resistor: the bias depends directly on hFE and VBE.
    pub no_emitter_resistor: bool,
    /// VCE is within 1 V of VCE(sat) or of the supply: little room for the signal.
    pub q_point_off_centre: bool,
}

impl Warnings {
    /// Any warning at all.
    pub fn any(&self) -> bool {
        self.divider_not_stiff
            || self.saturated
            || self.cut_off
            || self.over_rating
            || self.resistor_hot.iter().any(|h| *h)
            || self.no_emitter_resistor
            || self.q_point_off_centre
    }
}

/// The full prediction for a stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Prediction {
    /// Exact operating point.
    pub op: OperatingPoint,
    /// Hand estimate.
    pub estimate: Estimate,
    /// Midband figures (`None` when the small-signal network is singular).
    pub midband: Option<Midband>,
    /// Low-frequency figures.
    pub low: LowCorner,
    /// Power figures.
    pub power: Power,
    /// Warnings.
    pub warnings: Warnings,
}

/// Predict everything for `stage` with `profile` under `cond`.
pub fn predict(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
) -> Result<Prediction, SolveError> {
    let op = solve(stage, profile, cond)?;
    let mid = midband(stage, profile, &op).ok();
    let low = low_corner(stage, &op);
    let pw = power(stage, profile, &op, cond.temp_c);
    let rth = {
        let (a, b) = (stage.r1.value, stage.r2.value);
        a * b / (a + b)
    };
    let re = stage.re_total();
    let vce = match stage.polarity {
        Polarity::Npn => op.vce,
        Polarity::Pnp => -op.vce,
    };
    let mut resistor_hot = [false; 5];
    for (hot, r) in resistor_hot.iter_mut().zip(Resistor::ALL) {
        *hot = pw.resistor(r) > RESISTOR_POWER_LIMIT;
    }
    let warnings = Warnings {
        divider_not_stiff: re > 0.0 && rth > 0.1 * profile.beta_min * re,
        saturated: op.region == Region::Saturation,
        cut_off: op.region == Region::Cutoff,
        over_rating: pw.over_rating(),
        resistor_hot,
        no_emitter_resistor: re == 0.0,
        q_point_off_centre: op.region == Region::Active
            && (vce < profile.vce_sat + 1.0 || vce > op.vcc - 1.0),
    };
    Ok(Prediction {
        op,
        estimate: estimate(stage, profile),
        midband: mid,
        low,
        power: pw,
        warnings,
    })
}
