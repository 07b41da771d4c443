//! The tests' own corner walk of a stage: every corner of the resistors' tolerance, hFE min and
//! max and the ends of the requirement's ambient range, solved with the engine (not the
//! design's own walk, so that it checks the design).

use biasjig_core::design::{design, Candidates, DesignError, Requirement};
use biasjig_core::device::Profile;
use biasjig_core::signal::midband;
use biasjig_core::solve::{solve, Conditions, NodeLoads, Region};
use biasjig_core::stage::Stage;

/// The requirement fields a design refusal starts with.
pub const REQUIREMENT_WORDS: [&str; 7] = [
    "gain",
    "swing",
    "ic-max",
    "hFE",
    "f-low",
    "dissipation",
    "bias",
];

/// Whether a design refusal's message starts by naming a requirement field.
pub fn names_a_requirement(msg: &str) -> bool {
    REQUIREMENT_WORDS.iter().any(|k| msg.starts_with(k))
}

/// The design of `req` and, with the wider requirement itself, the design of `req` with `more`
/// times its current budget: what the tests that a larger budget keeps what a smaller one
/// designs compare. `None` where `req` itself is refused (nothing to compare).
pub fn design_with_more_budget(
    req: &Requirement,
    p: &Profile,
    more: f64,
) -> Option<(Candidates, Requirement, Result<Candidates, DesignError>)> {
    let narrow = design(req, p).ok()?;
    let mut wider = *req;
    wider.ic_max = req.ic_max * more;
    Some((narrow, wider, design(&wider, p)))
}

/// What a stage does over all 128 corners.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Corners {
    /// Least midband gain magnitude.
    pub gain_min: f64,
    /// Largest midband gain magnitude.
    pub gain_max: f64,
    /// Least peak-to-peak swing, V.
    pub swing_min: f64,
    /// Largest collector current, A.
    pub ic_max: f64,
    /// Solved, forward active and with a midband figure at every corner.
    pub active: bool,
}

impl Corners {
    /// Every corner holds `req`: active, the gain within its tolerance, the swing and the
    /// current budget met (each with a relative slack of 1e-9).
    pub fn hold(&self, req: &Requirement) -> bool {
        self.active
            && self.gain_min >= req.gain * (1.0 - req.gain_tol) * (1.0 - 1e-9)
            && self.gain_max <= req.gain * (1.0 + req.gain_tol) * (1.0 + 1e-9)
            && self.swing_min >= req.swing_pp * (1.0 - 1e-9)
            && self.ic_max <= req.ic_max * (1.0 + 1e-9)
    }
}

/// Walk every corner of `stage` under `req`'s ambient range and `p`'s hFE range.
pub fn corners(req: &Requirement, p: &Profile, stage: &Stage) -> Corners {
    let mut out = Corners {
        gain_min: f64::INFINITY,
        gain_max: 0.0,
        swing_min: f64::INFINITY,
        ic_max: 0.0,
        active: true,
    };
    for mask in 0u32..128 {
        let mut s = *stage;
        let bit = |k: u32| mask & (1 << k) != 0;
        for (k, part) in [&mut s.r1, &mut s.r2, &mut s.rc, &mut s.re1, &mut s.re2]
            .into_iter()
            .enumerate()
        {
            part.value *= if bit(k as u32) {
                1.0 + part.tol
            } else {
                1.0 - part.tol
            };
        }
        let cond = Conditions {
            temp_c: if bit(6) { req.temp_max } else { req.temp_min },
            beta_25: if bit(5) { p.beta_max } else { p.beta_min },
            fault: None,
            loads: NodeLoads::NONE,
        };
        let Ok(op) = solve(&s, p, cond) else {
            out.active = false;
            continue;
        };
        out.active &= op.region == Region::Active;
        let Ok(m) = midband(&s, p, &op) else {
            out.active = false;
            continue;
        };
        out.gain_min = out.gain_min.min(m.gain.abs());
        out.gain_max = out.gain_max.max(m.gain.abs());
        out.swing_min = out.swing_min.min(m.swing_pp);
        out.ic_max = out.ic_max.max(op.ic);
    }
    out
}
