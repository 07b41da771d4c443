//! The exact analysis of one resistor set: its figures, what it misses, and its score (lower
//! is better), with the worst case estimated from sensitivities when it is asked for.

use crate::device::Profile;
use crate::power::{power, RESISTOR_POWER_LIMIT};
use crate::signal::{source_gain, swing, Clip};
use crate::solve::{solve, Conditions, OperatingPoint, Region};
use crate::stage::{Part, Stage};

use super::{Check, Hold, Margins, Requirement, DRIFT_LIMIT};

/// A stage from resistor values and capacitors.
pub(super) fn build(req: &Requirement, r: [f64; 5], caps: [Option<f64>; 3]) -> Stage {
    let part = |v: f64| Part::new(v, req.tol);
    let [r1, r2, rc, re1, re2] = r;
    let cap = |c: Option<f64>| c.map(|c| Part::new(c, req.cap_tol));
    let [cin, cout, ce] = caps;
    Stage {
        polarity: req.polarity,
        vcc: Part::new(req.vcc, 0.0),
        r1: part(r1),
        r2: part(r2),
        rc: part(rc),
        re1: part(re1),
        re2: part(re2),
        rl: req.rl,
        rs: req.rs,
        cin: cap(cin),
        cout: cap(cout),
        ce: cap(ce),
    }
}

/// The search's record of one part set.
#[derive(Debug, Clone, Copy)]
pub(super) struct Eval {
    pub(super) r: [f64; 5],
    pub(super) op: OperatingPoint,
    pub(super) gain: f64,
    pub(super) swing: f64,
    pub(super) clips: Clip,
    pub(super) supply: f64,
    pub(super) ptr: f64,
    pub(super) ic_range: (f64, f64),
    pub(super) margins: Margins,
    pub(super) score: f64,
    /// Every requirement met (the low corner is checked later).
    pub(super) meets: bool,
    /// The first requirement missed, with its required and achieved values.
    pub(super) miss: Option<(Check, f64, f64)>,
    pub(super) level: f64,
    /// The score without the worst-case terms ([`Hold::WorstCase`]).
    pub(super) base: f64,
    /// The worst case was estimated (every nominal requirement met, analysed in full).
    pub(super) estimated: bool,
}

/// The worst case estimated from sensitivities: the hFE and ambient ends solved, each
/// resistor's effect at +tol added in the unfavourable direction (a linear bound).
#[derive(Debug, Clone, Copy)]
struct Estimate {
    gain_lo: f64,
    gain_hi: f64,
    swing_lo: f64,
    ic_hi: f64,
    active: bool,
}

/// The score's worst-case terms for held (or estimated) figures, and whether they hold with
/// `slack` (fraction) to spare or less.
pub(super) fn worst_terms(
    req: &Requirement,
    gain_lo: f64,
    gain_hi: f64,
    swing_lo: f64,
    ic_hi: f64,
    slack: f64,
) -> (f64, Option<(Check, f64, f64)>) {
    let lo = req.gain * (1.0 - req.gain_tol);
    let hi = req.gain * (1.0 + req.gain_tol);
    let m_gain = (gain_lo / lo - 1.0).min(1.0 - gain_hi / hi);
    let centre = 0.5 * (gain_lo + gain_hi) / req.gain - 1.0;
    let m_ic = 1.0 - ic_hi / req.ic_max;
    let mut score = weight::WC_GAIN * pos(0.03 - m_gain)
        + weight::WC_CENTRE * libm::fabs(centre)
        + weight::WC_IC * pos(0.03 - m_ic);
    let mut miss = None;
    if !(m_gain >= -slack) {
        miss = Some(if gain_lo < lo {
            (Check::Gain, lo, gain_lo)
        } else {
            (Check::Gain, hi, gain_hi)
        });
    }
    if req.swing_pp > 0.0 {
        let m_sw = swing_lo / req.swing_pp - 1.0;
        score += weight::SWING_SHORT * pos(0.05 - m_sw) + weight::SWING_SOFT * pos(0.3 - m_sw);
        if !(m_sw >= -slack) && miss.is_none() {
            miss = Some((Check::Swing, req.swing_pp, swing_lo));
        }
    } else {
        // No swing asked: still room to swing at the worst corner (forward active there).
        score += weight::SWING_SOFT * pos(0.3 - swing_lo / req.vcc);
        if !(swing_lo > 0.0) && miss.is_none() {
            miss = Some((Check::Region, 0.0, 0.0));
        }
    }
    if !(m_ic >= -slack) && miss.is_none() {
        miss = Some((Check::Current, req.ic_max, ic_hi));
    }
    (score, miss)
}

/// Weights of the score (dimensionless penalty per unit of each figure).
pub(super) mod weight {
    /// Per unit of relative gain error.
    pub const GAIN: f64 = 100.0;
    /// Per unit of relative gain error beyond 2 %.
    pub const GAIN_STEEP: f64 = 1000.0;
    /// Per unit of swing shortfall below 1.05 × the requirement.
    pub const SWING_SHORT: f64 = 200.0;
    /// Per unit of swing below 1.3 × the requirement (soft preference for margin).
    pub const SWING_SOFT: f64 = 4.0;
    /// Per unit of IC drift over hFE.
    pub const DRIFT: f64 = 20.0;
    /// Per unit of IC drift over hFE beyond 10 %.
    pub const DRIFT_STEEP: f64 = 500.0;
    /// Per unit of IC drift over the ambient range.
    pub const DRIFT_TEMP: f64 = 10.0;
    /// Per unit of IC drift over the ambient range beyond 12 %.
    pub const DRIFT_TEMP_STEEP: f64 = 100.0;
    /// Per watt drawn from the supply.
    pub const SUPPLY: f64 = 20.0;
    /// Per unit of transistor dissipation ratio beyond one half.
    pub const HEAT: f64 = 10.0;
    /// Per unit of re/(re + RE1): a gain set by the resistors, not by the junction.
    pub const JUNCTION: f64 = 1.0;
    /// Per unit of IC over 97 % of the budget.
    pub const NEAR_BUDGET: f64 = 300.0;
    /// Per unit of the hottest resistor's share of 0.25 W beyond one half.
    pub const RESISTOR_HEAT: f64 = 2.0;
    /// A requirement missed.
    pub const MISS: f64 = 1e4;
    /// Per unit of worst-case gain margin below 3 % of the window.
    pub const WC_GAIN: f64 = 300.0;
    /// Per unit of the worst-case gain range's centre away from the requirement.
    pub const WC_CENTRE: f64 = 100.0;
    /// Per unit of worst-case IC margin below 3 % of the budget.
    pub const WC_IC: f64 = 300.0;
}

pub(super) fn pos(x: f64) -> f64 {
    if x > 0.0 {
        x
    } else {
        0.0
    }
}

/// The midband figures the search ranks by.
struct Mid {
    /// v(load)/v(source EMF), signed.
    gain: f64,
    /// Largest undistorted peak-to-peak swing at the load, V.
    swing_pp: f64,
    /// Which side clips first.
    clips: Clip,
}

/// Exact analysis of one resistor set; `bound` skips the drift solves of a set that cannot beat
/// it. `None` when the engine finds no operating point or no signal path.
pub(super) fn evaluate(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    r: [f64; 5],
    level: f64,
    bound: f64,
    with_drift: bool,
) -> Option<Eval> {
    let stage = build(req, r, [None; 3]);
    let cond = Conditions {
        temp_c: req.temp,
        beta_25: profile.beta_typ,
        fault: None,
        loads: Default::default(),
    };
    let op = solve(&stage, profile, cond).ok()?;
    // Of the midband figures the design needs the gain (one small-signal solve: the same one
    // `midband` makes for it, bit for bit) and the swing, not the impedances (two more solves).
    let (gain, _) = source_gain(&stage, &op.y)?;
    let (swing_pp, clips) = swing(&stage, profile, &op);
    let mid = Mid {
        gain,
        swing_pp,
        clips,
    };
    let pw = power(&stage, profile, &op, req.temp);
    let hot_rating = profile.power_rating_at(req.temp_max);
    let gain_error = libm::fabs(mid.gain) / req.gain - 1.0;
    let swing_ratio = if req.swing_pp > 0.0 {
        mid.swing_pp / req.swing_pp
    } else {
        f64::INFINITY
    };
    let ic_ratio = op.ic / req.ic_max;
    let power_ratio = if hot_rating > 0.0 {
        pw.transistor / hot_rating
    } else {
        f64::INFINITY
    };
    let ge = libm::fabs(gain_error);
    let re_junction = if op.y.y21 > 0.0 {
        1.0 / op.y.y21
    } else {
        f64::INFINITY
    };
    let worst = req.hold == Hold::WorstCase;
    // The gain at nominal near the requirement (with the worst case asked, this also centres
    // the spread's gain window); the budget at nominal only when that is what is asked.
    let nominal_terms = weight::GAIN * ge
        + weight::GAIN_STEEP * pos(ge - 0.02)
        + if worst {
            0.0
        } else {
            weight::NEAR_BUDGET * pos(ic_ratio - 0.97)
        };
    let mut score = nominal_terms
        + weight::SUPPLY * pw.supply_current * req.vcc
        + weight::HEAT * pos(power_ratio - 0.5)
        + weight::JUNCTION * re_junction / (re_junction + r[3])
        + weight::RESISTOR_HEAT
            * pos(pw.resistors.iter().fold(0.0_f64, |a, &b| a.max(b)) / RESISTOR_POWER_LIMIT - 0.5);
    if worst {
        // The swing's terms are worst-case ones below.
    } else if req.swing_pp > 0.0 {
        score += weight::SWING_SHORT * pos(1.05 - swing_ratio)
            + weight::SWING_SOFT * pos(1.3 - swing_ratio);
    } else {
        score += weight::SWING_SOFT * pos(0.3 - mid.swing_pp / req.vcc);
    }
    let mut miss = None;
    let mut note = |c: Check, required: f64, achieved: f64, bad: bool| {
        if bad && miss.is_none() {
            miss = Some((c, required, achieved));
        }
    };
    note(Check::Region, 0.0, 0.0, op.region != Region::Active);
    note(
        Check::Gain,
        req.gain,
        libm::fabs(mid.gain),
        !(ge <= req.gain_tol),
    );
    note(
        Check::Swing,
        req.swing_pp,
        mid.swing_pp,
        !(mid.swing_pp >= req.swing_pp),
    );
    note(Check::Current, req.ic_max, op.ic, !(op.ic <= req.ic_max));
    note(
        Check::Dissipation,
        hot_rating,
        pw.transistor,
        !(power_ratio <= 1.0),
    );
    let mut margins = Margins {
        gain_error,
        swing_ratio,
        ic_ratio,
        drift_beta: 0.0,
        drift_temp: 0.0,
        f_low_ratio: 0.0,
        power_ratio,
    };
    let mut ic_range = (op.ic, op.ic);
    // Not analysed for drift (a set that cannot take a place in the list): a miss of its own.
    let skipped = miss.is_none() && !(with_drift && score < bound);
    let nominal_ok = miss.is_none();
    let mut wc_terms = 0.0;
    if miss.is_some() {
        score += weight::MISS;
    } else if !skipped {
        // IC, |gain|, swing and region of `s` at hFE `beta_25` and ambient `temp_c`.
        let point = |s: &Stage, beta_25: f64, temp_c: f64| {
            let o = solve(
                s,
                profile,
                Conditions {
                    temp_c,
                    beta_25,
                    fault: None,
                    loads: Default::default(),
                },
            )
            .ok()?;
            let (g, sw) = if worst {
                let g = source_gain(s, &o.y).map_or(0.0, |(g, _)| libm::fabs(g));
                (g, swing(s, profile, &o).0)
            } else {
                (0.0, 0.0)
            };
            Some((o.ic, g, sw, o.region == Region::Active))
        };
        let p_lo = point(&stage, profile.beta_min, req.temp)?;
        let p_hi = point(&stage, profile.beta_max, req.temp)?;
        let p_cold = point(&stage, profile.beta_typ, req.temp_min)?;
        let p_hot = point(&stage, profile.beta_typ, req.temp_max)?;
        let (lo, hi, cold, hot) = (p_lo.0, p_hi.0, p_cold.0, p_hot.0);
        if worst {
            let g0 = libm::fabs(mid.gain);
            let mut est = Estimate {
                gain_lo: g0,
                gain_hi: g0,
                swing_lo: mid.swing_pp,
                ic_hi: op.ic,
                active: op.region == Region::Active,
            };
            for p in [p_lo, p_hi, p_cold, p_hot] {
                est.ic_hi = est.ic_hi.max(p.0);
                est.gain_lo = est.gain_lo.min(p.1);
                est.gain_hi = est.gain_hi.max(p.1);
                est.swing_lo = est.swing_lo.min(p.2);
                est.active &= p.3;
            }
            // Each resistor at +tol: its effect, taken in the unfavourable direction.
            let (mut d_ic, mut d_g, mut d_sw) = (0.0, 0.0, 0.0);
            for k in 0..5 {
                let mut s = stage;
                let part = match k {
                    0 => &mut s.r1,
                    1 => &mut s.r2,
                    2 => &mut s.rc,
                    3 => &mut s.re1,
                    _ => &mut s.re2,
                };
                if !(part.value > 0.0 && part.tol > 0.0) {
                    continue;
                }
                part.value *= 1.0 + part.tol;
                let p = point(&s, profile.beta_typ, req.temp)?;
                d_ic += libm::fabs(p.0 - op.ic);
                d_g += libm::fabs(p.1 - g0);
                d_sw += libm::fabs(p.2 - mid.swing_pp);
                est.active &= p.3;
            }
            est.ic_hi += d_ic;
            est.gain_lo -= d_g;
            est.gain_hi += d_g;
            est.swing_lo -= d_sw;
            let (terms, wc_miss) = worst_terms(
                real,
                est.gain_lo,
                est.gain_hi,
                est.swing_lo,
                est.ic_hi,
                ESTIMATE_SLACK,
            );
            score += terms;
            wc_terms = terms;
            if !est.active {
                miss = Some((Check::Region, 0.0, 0.0));
                score += weight::MISS;
            } else if let Some(m) = wc_miss {
                miss = Some(m);
                score += weight::MISS;
            }
        }
        let spread = |a: f64, b: f64| {
            if a.min(b) > 0.0 {
                (a.max(b) - a.min(b)) / a.min(b)
            } else {
                f64::INFINITY
            }
        };
        let db = spread(lo, hi);
        let dt = spread(cold.min(op.ic), hot.max(op.ic));
        margins.drift_beta = db;
        margins.drift_temp = dt;
        ic_range = (lo.min(cold).min(op.ic), hi.max(hot).max(op.ic));
        score += weight::DRIFT * db
            + weight::DRIFT_STEEP * pos(db - 0.10)
            + weight::DRIFT_TEMP * dt
            + weight::DRIFT_TEMP_STEEP * pos(dt - 0.12);
        if !(db <= DRIFT_LIMIT) && !worst {
            miss = Some((Check::Drift, DRIFT_LIMIT, db));
            score += weight::MISS;
        }
    }
    if skipped {
        score += weight::MISS;
    }
    let meets = !skipped && miss.is_none();
    Some(Eval {
        r,
        op,
        gain: mid.gain,
        swing: mid.swing_pp,
        clips: mid.clips,
        supply: pw.supply_current,
        ptr: pw.transistor,
        ic_range,
        margins,
        score,
        meets,
        miss,
        level,
        base: score - wc_terms,
        estimated: worst && !skipped && nominal_ok,
    })
}

/// How far (fraction of each requirement) the sensitivity estimate of the worst case may miss
/// and the part set still go on to the exact corners (the estimate is linear).
pub(super) const ESTIMATE_SLACK: f64 = 0.01;
