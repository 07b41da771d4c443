//! What a part set holds over the spread: every requirement checked with the exact engine at
//! every corner of the resistor tolerance, hFE min..max and the ambient range.
//!
//! A corner is one combination of each varying factor at an end of its range: each resistor at
//! −tol or +tol (a 0 Ω resistor or one without tolerance does not vary), hFE at the profile's
//! minimum or maximum, the ambient at the requirement's lowest or highest. With all seven
//! varying that is 2⁷ = 128 exact solves, each followed by the midband gain (closed form) and the
//! swing; the nominal point is included. The low corner is checked with every capacitor at the
//! low end of its tolerance (a smaller capacitor raises its pole) at the nominal point and at
//! the corners of the least and the most IC (the CE pole follows the transconductance); each
//! of those is three small-signal solves.
//!
//! Cost: about 3 000 instructions a corner on x86-64, 0.4 M for 128 corners.

use crate::device::Profile;
use crate::lowfreq;
use crate::signal::{source_gain, swing};
use crate::solve::{solve, Conditions, OperatingPoint, Region};
use crate::stage::{Part, Resistor, Stage};

use super::{Check, Requirement};

/// The figures a part set holds over every corner (magnitudes; SI units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Held {
    /// Least |gain| v(load)/v(source EMF) over the corners.
    pub gain_min: f64,
    /// Largest |gain| over the corners.
    pub gain_max: f64,
    /// Least symmetrical peak-to-peak swing at the load over the corners, V.
    pub swing_pp_min: f64,
    /// Largest IC over the corners, A.
    pub ic_max: f64,
    /// Least IC over the corners, A.
    pub ic_min: f64,
    /// The transistor forward active at every corner (an operating point found at each).
    pub active: bool,
    /// Highest low corner (sum of the poles) with the capacitors at the low end of their
    /// tolerance, Hz; 0 when the stage has no capacitors.
    pub f_low_max: f64,
    /// Corners solved (the nominal point included).
    pub corners: u32,
}

impl Held {
    /// The requirement held worst, with its required and held values, or `None` when every
    /// requirement holds. The gain window is `req.gain`·(1 ± `req.gain_tol`).
    pub fn binding(&self, req: &Requirement) -> Option<(Check, f64, f64)> {
        if !self.active {
            return Some((Check::Region, 0.0, 0.0));
        }
        let lo = req.gain * (1.0 - req.gain_tol);
        let hi = req.gain * (1.0 + req.gain_tol);
        // Relative shortfall of each requirement (positive: missed).
        let mut worst: Option<(f64, (Check, f64, f64))> = None;
        let mut see = |short: f64, what: (Check, f64, f64)| {
            if short > 0.0 && worst.is_none_or(|w| short > w.0) {
                worst = Some((short, what));
            }
        };
        see(1.0 - self.gain_min / lo, (Check::Gain, lo, self.gain_min));
        see(self.gain_max / hi - 1.0, (Check::Gain, hi, self.gain_max));
        if req.swing_pp > 0.0 {
            see(
                1.0 - self.swing_pp_min / req.swing_pp,
                (Check::Swing, req.swing_pp, self.swing_pp_min),
            );
        }
        see(
            self.ic_max / req.ic_max - 1.0,
            (Check::Current, req.ic_max, self.ic_max),
        );
        let f_req = req.f_low_or_default();
        if self.f_low_max > 0.0 {
            see(
                self.f_low_max / f_req - 1.0,
                (Check::LowCorner, f_req, self.f_low_max),
            );
        }
        // NaN figures count as missed.
        if !(self.gain_min.is_finite() && self.gain_max.is_finite() && self.ic_max.is_finite()) {
            return Some((Check::Region, 0.0, 0.0));
        }
        worst.map(|w| w.1)
    }

    /// The least relative margin to any requirement (negative: missed by that fraction).
    pub fn margin(&self, req: &Requirement) -> f64 {
        if !self.active {
            return -1.0;
        }
        let lo = req.gain * (1.0 - req.gain_tol);
        let hi = req.gain * (1.0 + req.gain_tol);
        let mut m = (self.gain_min / lo - 1.0).min(1.0 - self.gain_max / hi);
        if req.swing_pp > 0.0 {
            m = m.min(self.swing_pp_min / req.swing_pp - 1.0);
        }
        m = m.min(1.0 - self.ic_max / req.ic_max);
        if self.f_low_max > 0.0 {
            m = m.min(1.0 - self.f_low_max / req.f_low_or_default());
        }
        if m.is_nan() {
            -1.0
        } else {
            m
        }
    }
}

/// One factor that varies over the corners.
#[derive(Debug, Clone, Copy)]
enum Factor {
    /// A resistor by index (R1, R2, RC, RE1, RE2).
    Resistor(usize),
    /// hFE at 25 °C.
    Beta,
    /// The ambient.
    Temp,
}

fn resistor_mut(s: &mut Stage, k: usize) -> Option<&mut Part> {
    match k {
        0 => Some(&mut s.r1),
        1 => Some(&mut s.r2),
        2 => Some(&mut s.rc),
        3 => Some(&mut s.re1),
        4 => Some(&mut s.re2),
        _ => None,
    }
}

/// The stage and conditions at corner `mask` (bit i set: factor i at its high end).
fn corner(
    req: &Requirement,
    profile: &Profile,
    stage: &Stage,
    factors: &[Factor],
    mask: u32,
) -> (Stage, Conditions) {
    let mut s = *stage;
    let mut cond = Conditions {
        temp_c: req.temp,
        beta_25: profile.beta_typ,
        fault: None,
        loads: crate::solve::NodeLoads::NONE,
    };
    for (i, f) in factors.iter().enumerate() {
        let high = mask & (1 << i) != 0;
        match *f {
            Factor::Resistor(k) => {
                if let Some(p) = resistor_mut(&mut s, k) {
                    p.value *= if high { 1.0 + p.tol } else { 1.0 - p.tol };
                }
            }
            Factor::Beta => {
                cond.beta_25 = if high {
                    profile.beta_max
                } else {
                    profile.beta_min
                };
            }
            Factor::Temp => cond.temp_c = if high { req.temp_max } else { req.temp_min },
        }
    }
    (s, cond)
}

/// The pole sum of `stage` at `op` with every capacitor at the low end of its tolerance, Hz
/// (0 when there are none).
fn pole_sum_low(stage: &Stage, op: &OperatingPoint) -> f64 {
    let mut s = *stage;
    for c in [&mut s.cin, &mut s.cout, &mut s.ce].into_iter().flatten() {
        c.value *= 1.0 - c.tol;
    }
    lowfreq::pole_sum(&s, op)
}

/// Most factors of the corners: the five resistors, hFE and the ambient.
const HELD_FACTORS: usize = 7;
const _: () = assert!(HELD_FACTORS == Resistor::ALL.len() + 2);

/// What `stage` (with its capacitors) holds over every corner of `req`'s spread, checked with
/// the exact engine.
pub fn held(req: &Requirement, profile: &Profile, stage: &Stage) -> Held {
    let mut factors: heapless::Vec<Factor, HELD_FACTORS> = heapless::Vec::new();
    for (k, p) in [stage.r1, stage.r2, stage.rc, stage.re1, stage.re2]
        .iter()
        .enumerate()
    {
        if p.value > 0.0 && p.tol > 0.0 {
            let _ = factors.push(Factor::Resistor(k));
        }
    }
    if profile.beta_min < profile.beta_max {
        let _ = factors.push(Factor::Beta);
    }
    if req.temp_min < req.temp_max {
        let _ = factors.push(Factor::Temp);
    }
    let mut h = Held {
        gain_min: f64::INFINITY,
        gain_max: 0.0,
        swing_pp_min: f64::INFINITY,
        ic_max: 0.0,
        ic_min: f64::INFINITY,
        active: true,
        f_low_max: 0.0,
        corners: 0,
    };
    let mut extreme: [Option<(Stage, OperatingPoint)>; 2] = [None, None];
    let mut see = |h: &mut Held, s: &Stage, cond: Conditions| {
        h.corners += 1;
        let Ok(op) = solve(s, profile, cond) else {
            h.active = false;
            return;
        };
        if op.region != Region::Active {
            h.active = false;
        }
        let g = source_gain(s, &op.y).map_or(0.0, |(g, _)| libm::fabs(g));
        h.gain_min = h.gain_min.min(g);
        h.gain_max = h.gain_max.max(g);
        h.swing_pp_min = h.swing_pp_min.min(swing(s, profile, &op).0);
        if op.ic > h.ic_max {
            h.ic_max = op.ic;
            extreme[1] = Some((*s, op));
        }
        if op.ic < h.ic_min {
            h.ic_min = op.ic;
            extreme[0] = Some((*s, op));
        }
    };
    let nominal = Conditions {
        temp_c: req.temp,
        beta_25: profile.beta_typ,
        fault: None,
        loads: crate::solve::NodeLoads::NONE,
    };
    see(&mut h, stage, nominal);
    let n = 1u32 << factors.len();
    for mask in 0..n {
        let (s, cond) = corner(req, profile, stage, &factors, mask);
        see(&mut h, &s, cond);
    }
    if stage.cin.is_some() || stage.cout.is_some() || stage.ce.is_some() {
        if let Ok(op) = solve(stage, profile, nominal) {
            h.f_low_max = pole_sum_low(stage, &op);
        }
        for (s, op) in extreme.iter().flatten() {
            h.f_low_max = h.f_low_max.max(pole_sum_low(s, op));
        }
    }
    h
}
