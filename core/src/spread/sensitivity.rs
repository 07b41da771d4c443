//! Each factor's share of each node's variance, one factor at a time.

use crate::device::Profile;
use crate::stage::Stage;

use super::factors::{ends, Box8, Factor, FACTORS};
use super::{validate, Distribution, Nodes, SpreadError, Variation};

/// One factor's part in one node's spread.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Share {
    /// The factor.
    pub factor: Factor,
    /// Half the change of the node from the factor's low end to its high end (node unit, signed).
    pub effect: f64,
    /// Variance the factor contributes (node unit squared).
    pub variance: f64,
    /// Fraction of the node's total variance (0 to 1; the shares of a node sum to 1).
    pub share: f64,
}

/// Each factor's share of each node's variance, ranked largest first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sensitivity {
    /// Per node: the shares of every factor, largest first.
    pub nodes: Nodes<[Share; FACTORS]>,
    /// Per node: the standard deviation by the law of propagation (square root of the summed
    /// variances), node unit.
    pub std: Nodes<f64>,
}

/// Variance of a relative deviation drawn from `dist`, as a fraction of the tolerance squared:
/// 1/3 for uniform; for a normal truncated at k = `sigmas`, (1 − 2kφ(k)/(2Φ(k) − 1))/k².
pub fn variance_factor(dist: Distribution) -> f64 {
    match dist {
        Distribution::Uniform => 1.0 / 3.0,
        Distribution::Normal { sigmas: k } => {
            let phi = libm::exp(-0.5 * k * k) / libm::sqrt(core::f64::consts::TAU);
            let mass = libm::erf(k / core::f64::consts::SQRT_2);
            (1.0 - 2.0 * k * phi / mass) / (k * k)
        }
    }
}

/// Each factor's share of each node's variance: the factor at its low and high end with the
/// others at the centre gives the half-range effect `d`; it contributes `d²·v` with `v` the
/// variance factor of its distribution ([`variance_factor`]; hFE and ambient are uniform).
pub fn sensitivity(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
) -> Result<Sensitivity, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    let mut effects = [Nodes::<f64>::default(); FACTORS];
    for (k, slot) in effects.iter_mut().enumerate() {
        if !b.active(k) {
            continue;
        }
        let (lo, hi) = ends(stage, profile, &b, k, true, &var.inputs)?;
        *slot = Nodes::from_fn(|n| 0.5 * (hi.values.get(n) - lo.values.get(n)));
    }
    let weight = |f: Factor| match f {
        Factor::Resistor(_) | Factor::Supply => variance_factor(var.distribution),
        Factor::Beta | Factor::Temp => 1.0 / 3.0,
    };
    let mut std = Nodes::default();
    let nodes = Nodes::from_fn(|n| {
        let mut shares: [Share; FACTORS] = core::array::from_fn(|k| {
            let f = Factor::ALL.get(k).copied().unwrap_or(Factor::Supply);
            let effect = effects.get(k).map_or(0.0, |e| *e.get(n));
            Share {
                factor: f,
                effect,
                variance: effect * effect * weight(f),
                share: 0.0,
            }
        });
        let total: f64 = shares.iter().map(|s| s.variance).sum();
        for s in shares.iter_mut() {
            s.share = if total > 0.0 { s.variance / total } else { 0.0 };
        }
        crate::order::sort_by(&mut shares, |a, b| {
            b.share
                .partial_cmp(&a.share)
                .unwrap_or(core::cmp::Ordering::Equal)
                .then(a.factor.cmp(&b.factor))
        });
        *std.get_mut(n) = libm::sqrt(total);
        shares
    });
    Ok(Sensitivity { nodes, std })
}
