//! Spread of the operating point: worst case, seeded Monte Carlo, sensitivity.
//!
//! What varies (the *factors*): every bias resistor within its tolerance (from the stage), the
//! supply within its tolerance (from the stage), hFE between the profile's minimum and maximum,
//! and the ambient within the range of a [`Variation`]. Every evaluation is one exact solve of
//! [`solve::solve`](crate::solve::solve), the same engine as everywhere else.
//!
//! - **Worst case** ([`worst_case`]): the extremes over the corners of the factor box. With few
//!   factors every corner is solved (at most 2⁸ = 256); otherwise (or when asked) the vertex
//!   method picks, per node and direction, the corner given by the signs of the sensitivities and
//!   confirms it by solving it and its neighbours (one factor flipped) until no neighbour is more
//!   extreme. The centre point is included, so the range always brackets the nominal point.
//! - **Monte Carlo** ([`monte_carlo`]): seeded Xoshiro256++ (`seed_from_u64`), uniform `f64`
//!   from the top 53 bits, normal deviates by Box-Muller with `libm`, so the same seed gives the
//!   same numbers on every platform. Streaming statistics (Welford mean and variance, min, max,
//!   a fixed-bin histogram over the worst-case range with quantiles from it) with no allocation.
//!   With a low-corner requirement and capacitors, each sample also draws CIN, COUT and CE
//!   within their tolerances (three deviates after the sample's factors) and judges the low
//!   corner by the sum of their poles at the sample's operating point: the figure the design's
//!   `held` uses (`lowfreq::pole_sum`), not a second model.
//! - **Sensitivity** ([`sensitivity`]): one factor at a time from the centre to each end of its
//!   range; the half-range effect `d` and the variance it contributes (`d²/3` for a uniform
//!   factor) give each factor's share of each node's variance, ranked.
//!
//! Nodes: VB, VE, VC, VBE, VCE, IC (V and A, signed as in the operating point), the midband gain
//! v(load)/v(source EMF) (signed) and the symmetrical swing at the load (V peak-to-peak).
//!
//! The files: `factors` (the factor box, one draw, one evaluation), `worst` (the worst case and
//! the corners other layers walk), `stats` (streaming statistics and the histogram),
//! `monte_carlo` (the seeded run and its yield) and `sensitivity` (each factor's share). The
//! vocabulary shared with the other layers ([`Variation`], [`Node`], [`Nodes`], [`Range`],
//! [`SpreadError`]) lives in [`crate::common`].

mod factors;
mod monte_carlo;
mod sensitivity;
mod stats;
mod worst;

pub use crate::common::{Distribution, Node, Nodes, Range, SpreadError, Variation};
pub use factors::{Factor, FACTORS};
pub use monte_carlo::{
    monte_carlo, monte_carlo_observed, McSettings, MetEach, MonteCarlo, PassedEach, Requirement,
};
pub use sensitivity::{sensitivity, variance_factor, Sensitivity, Share};
pub use stats::{Histogram, Stats, BINS};
pub(crate) use worst::{each_corner_at_supply, each_corner_solved};
pub use worst::{worst_case, Method, WorstCase};

use crate::device::Profile;
use crate::solve::Region;
use crate::stage::Stage;
use factors::{draw_of, evaluate, Box8};

/// One evaluation: the node values and whether the transistor is forward active.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// The node values (gain 0 when it was not computed or the network is singular).
    pub values: Nodes<f64>,
    /// The operating region.
    pub region: Region,
    /// The low corner by the sum of the capacitors' poles (short-circuit time constants), with
    /// the capacitors as drawn, Hz; 0 when it was not computed (no low-corner requirement or
    /// no capacitors).
    pub f_low: f64,
}

fn validate(stage: &Stage, profile: &Profile, var: &Variation) -> Result<(), SpreadError> {
    stage.validate().map_err(SpreadError::Stage)?;
    profile.validate().map_err(SpreadError::Profile)?;
    var.validate()
}

/// The operating point at the centre of the factor box: nominal parts and supply, typical hFE,
/// the middle of the ambient range.
pub fn centre(stage: &Stage, profile: &Profile, var: &Variation) -> Result<Sample, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    Ok(evaluate(
        stage,
        profile,
        &draw_of(&b.centre),
        true,
        &var.inputs,
    )?)
}

/// Everything the spread reports for one stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// The centre of the factor box (nominal parts, typical hFE, middle of the ambient range).
    pub centre: Sample,
    /// The worst case.
    pub worst: WorstCase,
    /// The Monte Carlo run.
    pub monte_carlo: MonteCarlo,
    /// The sensitivity ranking.
    pub sensitivity: Sensitivity,
}

/// Worst case (method [`Method::default`]), sensitivity and Monte Carlo in one call.
pub fn spread(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    settings: &McSettings,
    progress: impl FnMut(u32, u32),
) -> Result<Spread, SpreadError> {
    spread_observed(stage, profile, var, settings, progress, |_| {})
}

/// [`spread`] that also hands every Monte Carlo sample to `on_sample`.
pub fn spread_observed(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    settings: &McSettings,
    progress: impl FnMut(u32, u32),
    on_sample: impl FnMut(&Sample),
) -> Result<Spread, SpreadError> {
    let centre = centre(stage, profile, var)?;
    let worst = worst_case(stage, profile, var, Method::default())?;
    let sensitivity = sensitivity(stage, profile, var)?;
    let monte_carlo =
        monte_carlo_observed(stage, profile, var, &worst, settings, progress, on_sample)?;
    Ok(Spread {
        centre,
        worst,
        monte_carlo,
        sensitivity,
    })
}
