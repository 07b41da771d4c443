//! The factor box: what varies and between which ends, one point of it ([`Draw`]) and one
//! evaluation of a point with the exact engine.

use crate::acnet::MidbandFixed;
use crate::device::Profile;
use crate::settings::{Inputs, ReadNode};
use crate::signal::swing;
use crate::solve::{solve, Conditions, NodeLoads, OperatingPoint, SolveError};
use crate::stage::{Resistor, Stage};

use super::{Nodes, Sample, Variation};

/// Something that varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Factor {
    /// A resistor within its tolerance.
    Resistor(Resistor),
    /// hFE between the profile's minimum and maximum.
    Beta,
    /// The ambient across the range.
    Temp,
    /// The supply within its tolerance.
    Supply,
}

impl Factor {
    /// Every factor, in report order.
    pub const ALL: [Factor; 8] = [
        Self::Resistor(Resistor::R1),
        Self::Resistor(Resistor::R2),
        Self::Resistor(Resistor::Rc),
        Self::Resistor(Resistor::Re1),
        Self::Resistor(Resistor::Re2),
        Self::Beta,
        Self::Temp,
        Self::Supply,
    ];

    /// The name as printed: "R1", ..., "hFE", "ambient", "VCC".
    pub fn name(self) -> &'static str {
        match self {
            Self::Resistor(r) => r.name(),
            Self::Beta => "hFE",
            Self::Temp => "ambient",
            Self::Supply => "VCC",
        }
    }
}

/// Number of factors.
pub const FACTORS: usize = 8;
// Every factor has its slot, and a corner of the box is a bit mask of the factors in a `u16`.
const _: () = assert!(Factor::ALL.len() == FACTORS && FACTORS <= u16::BITS as usize);

/// A point of the factor box in physical terms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Draw {
    /// Resistor values, Ω, in [`Resistor::ALL`] order.
    pub(super) r: [f64; 5],
    /// Supply, V.
    pub(super) vcc: f64,
    /// hFE at 25 °C.
    pub(super) beta_25: f64,
    /// Ambient, °C.
    pub(super) temp_c: f64,
}

/// The low and high end of each factor.
#[derive(Debug, Clone, Copy)]
pub(super) struct Box8 {
    pub(super) lo: [f64; FACTORS],
    pub(super) hi: [f64; FACTORS],
    pub(super) centre: [f64; FACTORS],
}

impl Box8 {
    pub(super) fn new(stage: &Stage, profile: &Profile, var: &Variation) -> Self {
        let mut lo = [0.0; FACTORS];
        let mut hi = [0.0; FACTORS];
        let mut centre = [0.0; FACTORS];
        for (k, f) in Factor::ALL.iter().enumerate() {
            let (l, c, h) = match f {
                Factor::Resistor(r) => {
                    let p = stage.part(*r);
                    (p.value * (1.0 - p.tol), p.value, p.value * (1.0 + p.tol))
                }
                Factor::Beta => (profile.beta_min, profile.beta_typ, profile.beta_max),
                Factor::Temp => (var.temp_min_c, var.temp_centre_c(), var.temp_max_c),
                Factor::Supply => {
                    let p = stage.vcc;
                    (p.value * (1.0 - p.tol), p.value, p.value * (1.0 + p.tol))
                }
            };
            if let (Some(a), Some(b), Some(m)) = (lo.get_mut(k), hi.get_mut(k), centre.get_mut(k)) {
                *a = l;
                *b = h;
                *m = c;
            }
        }
        Self { lo, hi, centre }
    }

    /// Whether factor `k` varies at all.
    pub(super) fn active(&self, k: usize) -> bool {
        matches!((self.lo.get(k), self.hi.get(k)), (Some(l), Some(h)) if l != h)
    }

    /// The point with factor k at `lo` where bit k of `high` is clear, `hi` where set, except
    /// factors listed in `at_centre` (bit set: centre).
    pub(super) fn corner(&self, high: u16, at_centre: u16) -> [f64; FACTORS] {
        core::array::from_fn(|k| {
            let bit = 1u16 << k;
            let pick = if at_centre & bit != 0 {
                self.centre.get(k)
            } else if high & bit != 0 {
                self.hi.get(k)
            } else {
                self.lo.get(k)
            };
            pick.copied().unwrap_or(0.0)
        })
    }
}

pub(super) fn draw_of(x: &[f64; FACTORS]) -> Draw {
    let [r1, r2, rc, re1, re2, beta_25, temp_c, vcc] = *x;
    Draw {
        r: [r1, r2, rc, re1, re2],
        vcc,
        beta_25,
        temp_c,
    }
}

/// The stage and conditions of one draw (no measuring inputs attached).
pub(super) fn apply(stage: &Stage, d: &Draw) -> (Stage, Conditions) {
    let mut s = *stage;
    put(&mut s, d);
    (s, conditions(d))
}

/// Write the drawn resistor values and supply into `s`.
#[inline(always)]
fn put(s: &mut Stage, d: &Draw) {
    let [r1, r2, rc, re1, re2] = d.r;
    s.r1.value = r1;
    s.r2.value = r2;
    s.rc.value = rc;
    s.re1.value = re1;
    s.re2.value = re2;
    s.vcc.value = d.vcc;
}

/// The conditions of one draw: its hFE and ambient, no fault, no measuring inputs.
#[inline(always)]
fn conditions(d: &Draw) -> Conditions {
    Conditions {
        temp_c: d.temp_c,
        beta_25: d.beta_25,
        fault: None,
        loads: NodeLoads::NONE,
    }
}

/// Midband gain v(load)/v(source EMF) of `stage` at `op` (the midband network in closed form),
/// or 0 when the network is singular. (Inline: the closed form keeps a dozen numbers, not the
/// general solve's 6×6 complex matrix, so it adds little to an evaluation's frame.)
pub(super) fn gain_of(fixed: &MidbandFixed, stage: &Stage, op: &OperatingPoint) -> f64 {
    fixed.gain(stage, &op.y).unwrap_or(0.0)
}

/// Evaluate one draw as read through `inputs`: one exact solve (three when each node is read
/// with only its own input attached), the swing, and the gain when `signal` (both at the
/// operating point with every input attached, or with the base's alone).
pub(super) fn evaluate(
    stage: &Stage,
    profile: &Profile,
    d: &Draw,
    signal: bool,
    inputs: &Inputs,
) -> Result<Sample, SolveError> {
    let fixed = signal.then(|| MidbandFixed::new(stage));
    evaluate_with(stage, profile, d, fixed.as_ref(), inputs)
}

/// [`evaluate`] with the fixed part of the midband network worked out once (RS and RL do not
/// vary): the gain when `signal` is given.
pub(super) fn evaluate_with(
    stage: &Stage,
    profile: &Profile,
    d: &Draw,
    signal: Option<&MidbandFixed>,
    inputs: &Inputs,
) -> Result<Sample, SolveError> {
    let mut s = *stage;
    evaluate_in(&mut s, profile, d, signal, inputs, |_, _| 0.0)
}

/// [`evaluate_with`] on a working copy of the stage (only the drawn values are written: the
/// Monte Carlo's hot loop keeps one copy instead of copying the stage per sample).
///
/// `low(stage, op)` gives the sample's low corner, Hz (a closure returning 0 when it is not
/// judged, which the compiler removes).
#[inline]
pub(super) fn evaluate_in(
    s: &mut Stage,
    profile: &Profile,
    d: &Draw,
    signal: Option<&MidbandFixed>,
    inputs: &Inputs,
    low: impl Fn(&Stage, &OperatingPoint) -> f64,
) -> Result<Sample, SolveError> {
    put(s, d);
    let cond = conditions(d);
    let s = &*s;
    // The sample from the operating point and the emitter and collector as read (each branch
    // builds it in place: no copy of the operating point).
    let sample = |op: &OperatingPoint, ve: f64, vc: f64| {
        let (sw, _) = swing(s, profile, op);
        let gain = signal.map_or(0.0, |f| gain_of(f, s, op));
        Sample {
            values: Nodes {
                vb: op.vb,
                ve,
                vc,
                vbe: op.vb - ve,
                vce: vc - ve,
                ic: op.ic,
                gain,
                swing: sw,
            },
            region: op.region,
            f_low: low(s, op),
        }
    };
    match inputs.common_loads() {
        Some(loads) => {
            let op = solve(s, profile, cond.loaded(loads))?;
            Ok(sample(&op, op.ve, op.vc))
        }
        None => {
            let (op, ve, vc) = one_at_a_time(s, profile, cond, inputs)?;
            Ok(sample(&op, ve, vc))
        }
    }
}

/// Factor `k` at its low end and at its high end with every other factor at the centre: the
/// two samples (the half-range effects of one factor at a time).
pub(super) fn ends(
    stage: &Stage,
    profile: &Profile,
    b: &Box8,
    k: usize,
    signal: bool,
    inputs: &Inputs,
) -> Result<(Sample, Sample), SolveError> {
    let others = !(1u16 << k);
    let at = |high: u16| {
        evaluate(
            stage,
            profile,
            &draw_of(&b.corner(high, others)),
            signal,
            inputs,
        )
    };
    Ok((at(0)?, at(1 << k)?))
}

/// Each node read with only its own input attached: the operating point with the base's, and the
/// emitter and collector voltages with theirs. (Out of line, so that its three solves do not
/// enlarge every evaluation's stack frame on the instrument.)
#[inline(never)]
pub(super) fn one_at_a_time(
    s: &Stage,
    profile: &Profile,
    cond: Conditions,
    inputs: &Inputs,
) -> Result<(OperatingPoint, f64, f64), SolveError> {
    let at = |n: ReadNode| solve(s, profile, cond.loaded(inputs.loads_reading(n)));
    let op = at(ReadNode::Base)?;
    Ok((op, at(ReadNode::Emitter)?.ve, at(ReadNode::Collector)?.vc))
}
