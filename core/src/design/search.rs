//! The search: the levels of the ladder, the two phases around each first pass, the polish,
//! and the finalists with their capacitors (and, held over the spread, their exact corners).

use crate::device::Profile;
use crate::series::Series;
use crate::stage::Resistor;
use crate::thermal_voltage;

use super::capacitors::capacitors;
use super::first_pass::{first_pass, ladder, least_current, out_of_reach};
use super::score::{build, evaluate, weight, worst_terms, Eval};
use super::{
    held, par, Candidate, Candidates, Check, DesignError, FirstPassMiss, Held, Hold, Ideal,
    Requirement, MAX_CANDIDATES, MAX_LEVELS, R_MAX, R_MIN,
};

/// A part set kept by the search: what ranks it and what re-analyses it (the full record is
/// rebuilt only for the part sets that are kept to the end, to keep the search's working set
/// small on a target with little stack).
#[derive(Debug, Clone, Copy)]
struct Kept {
    r: [f64; 5],
    level: f64,
    score: f64,
}

/// The best part sets found so far, best first, distinct.
struct Best {
    list: heapless::Vec<Kept, MAX_CANDIDATES>,
    /// The closest part set that misses a requirement: its score and what it misses.
    closest_miss: Option<(f64, (Check, f64, f64))>,
    /// The closest part sets that meet every requirement at nominal but miss the estimated
    /// worst case, best first ([`Hold::WorstCase`]: the exact corners judge them when no kept
    /// set holds).
    near: heapless::Vec<Kept, NEAR>,
}

/// How many near misses of the worst-case estimate are kept.
const NEAR: usize = 4;

impl Best {
    /// The score a new set must beat to enter the list.
    fn bound(&self) -> f64 {
        if self.list.is_full() {
            self.list.last().map_or(f64::INFINITY, |e| e.score)
        } else {
            f64::INFINITY
        }
    }

    /// Analyse the resistor set `r` in full (unless it cannot beat the list) and offer it.
    fn consider(
        &mut self,
        req: &Requirement,
        real: &Requirement,
        profile: &Profile,
        r: [f64; 5],
        level: f64,
    ) {
        if let Some(ev) = evaluate(req, real, profile, r, level, self.bound(), true) {
            self.offer(&ev);
        }
    }

    fn offer(&mut self, ev: &Eval) {
        if !ev.meets && ev.estimated {
            rank_into(self.near.as_mut_view(), ev);
        }
        if !ev.meets {
            if let Some(miss) = ev.miss {
                if self.closest_miss.is_none_or(|c| ev.score < c.0) {
                    self.closest_miss = Some((ev.score, miss));
                }
            }
            return;
        }
        rank_into(self.list.as_mut_view(), ev);
    }
}

/// Put the part set of `ev` into `list` (best first, distinct, at most its capacity) at its
/// rank: not when it is there already or ranks below every set of a full list; the last set
/// drops out of a full list.
fn rank_into(list: &mut heapless::vec::VecView<Kept>, ev: &Eval) {
    if list.iter().any(|e| e.r == ev.r) {
        return;
    }
    let at = list
        .iter()
        .position(|e| ev.score < e.score)
        .unwrap_or(list.len());
    if at >= list.capacity() {
        return;
    }
    if list.is_full() {
        list.pop();
    }
    // Cannot fail: there is room after the pop.
    let _ = list.insert(
        at,
        Kept {
            r: ev.r,
            level: ev.level,
            score: ev.score,
        },
    );
}

/// Most steps [`around`] takes either side of a value.
const AROUND_STEPS: u8 = 2;
/// Most neighbours [`around`] gives: the nearest member and every step either side.
const AROUND: usize = 5;
const _: () = assert!(AROUND == 2 * AROUND_STEPS as usize + 1);

/// The neighbours of a value in a series: `steps` (at most [`AROUND_STEPS`]) positions either
/// side of the nearest member, within the resistor range.
fn around(series: Series, x: f64, steps: u8) -> heapless::Vec<f64, AROUND> {
    let steps = steps.min(AROUND_STEPS);
    let keep = |v: &f64| (R_MIN..=R_MAX).contains(v);
    let mut out = heapless::Vec::new();
    for v in series.around(x, steps, steps).filter(keep) {
        let _ = out.push(v);
    }
    out
}

/// The search around one first pass.
fn search_level(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    ideal: &Ideal,
    best: &mut Best,
) {
    let s = |r: Resistor| req.series_of(r);
    let near = |r: Resistor, x: f64| s(r).nearest(x).unwrap_or(x);
    let (r1n, r2n, re2n) = (
        near(Resistor::R1, ideal.r1),
        near(Resistor::R2, ideal.r2),
        near(Resistor::Re2, ideal.re2),
    );
    // Phase 1: the gain pair (RC, RE1) with the nominal divider and RE2.
    // Ratios of two E-series members are as coarse as the series, so for each RC within two
    // steps RE1 is taken next to the value that gives the gain with that RC.
    let mut pairs: heapless::Vec<(f64, f64, f64), 2> = heapless::Vec::new();
    let vt = thermal_voltage(req.temp);
    let beta = profile.beta_at(profile.beta_typ, req.temp);
    let alpha = beta / (beta + 1.0);
    let re = vt * alpha / ideal.ic;
    let k = if req.rs > 0.0 {
        ideal.zin / (ideal.zin + req.rs)
    } else {
        1.0
    };
    for rc in around(s(Resistor::Rc), ideal.rc, 2) {
        let rp = req.rl.map_or(rc, |rl| par(rc, rl));
        let re1_exact = (k * alpha * rp / req.gain - re).max(R_MIN);
        for re1 in around(s(Resistor::Re1), re1_exact, 1) {
            let Some(ev) = evaluate(
                req,
                real,
                profile,
                [r1n, r2n, rc, re1, re2n],
                ideal.ic,
                0.0,
                false,
            ) else {
                continue;
            };
            // Rank by the score without the drift terms.
            let sc = ev.score - if ev.miss.is_none() { weight::MISS } else { 0.0 };
            let at = pairs.iter().position(|p| sc < p.2).unwrap_or(pairs.len());
            if at < 2 {
                if pairs.is_full() {
                    pairs.pop();
                }
                let _ = pairs.insert(at, (rc, re1, sc));
            }
        }
    }
    // Phase 2: the bias (R1, R2, RE2) around each pair, fully analysed.
    let r1s = around(s(Resistor::R1), ideal.r1, 1);
    let r2s = around(s(Resistor::R2), ideal.r2, 1);
    let re2s = around(s(Resistor::Re2), ideal.re2, 1);
    for &(rc, re1, _) in pairs.iter() {
        for &r1 in r1s.iter() {
            for &r2 in r2s.iter() {
                for &re2 in re2s.iter() {
                    best.consider(req, real, profile, [r1, r2, rc, re1, re2], ideal.ic);
                }
            }
        }
    }
}

/// How many of the best part sets the polish step revisits.
const POLISH: usize = 4;

/// Polish: around the best few part sets, every neighbour pair of RC and RE1 with their own
/// bias resistors (the gain pair was chosen at the nominal divider, the bias may shift it).
fn polish(req: &Requirement, real: &Requirement, profile: &Profile, best: &mut Best) {
    let seeds: heapless::Vec<Kept, POLISH> = best.list.iter().take(POLISH).copied().collect();
    for seed in seeds.iter() {
        let [r1, r2, rc0, re10, re2] = seed.r;
        let rcs = around(req.series_of(Resistor::Rc), rc0, 1);
        let re1s = around(req.series_of(Resistor::Re1), re10, 1);
        for &rc in rcs.iter() {
            for &re1 in re1s.iter() {
                if rc == rc0 && re1 == re10 {
                    continue;
                }
                best.consider(req, real, profile, [r1, r2, rc, re1, re2], seed.level);
            }
        }
    }
}

/// Design a stage for `req` with transistor `profile`: candidates best first, every one meeting
/// every requirement at nominal, or the reason none can.
pub fn design(req: &Requirement, profile: &Profile) -> Result<Candidates, DesignError> {
    let mut out = Candidates::new();
    design_into(req, profile, &mut out)?;
    Ok(out)
}

/// [`design`] writing the candidates into `out` in place (no copy of the list on the stack, for
/// small targets): `out` holds the candidates best first on success and is empty on error.
pub fn design_into(
    req: &Requirement,
    profile: &Profile,
    out: &mut Candidates,
) -> Result<(), DesignError> {
    out.clear();
    req.validate().map_err(DesignError::Invalid)?;
    profile.validate().map_err(DesignError::Profile)?;
    let first = search(req, req, profile, MAX_CANDIDATES, out);
    // With the worst case asked, a gain window that is narrow enough but off centre: once more,
    // aiming the nominal gain so that the corners' range centres on the requirement.
    match first {
        Err(DesignError::NotHeld {
            check: Check::Gain,
            gain_range: (lo, hi),
            ..
        }) if req.hold == Hold::WorstCase
            && lo > 0.0
            && hi - lo <= 2.0 * req.gain_tol * req.gain * RECENTRE_WIDTH =>
        {
            let mut aimed = *req;
            aimed.gain = req.gain * 2.0 * req.gain / (lo + hi);
            if aimed.validate().is_ok()
                && search(&aimed, req, profile, RECENTRED_FINALISTS, out).is_ok()
            {
                return Ok(());
            }
            out.clear();
            first
        }
        other => other,
    }
}

/// How many of the re-centred search's best part sets go to the exact corners (its cost stays
/// within the design's budget of instructions).
const RECENTRED_FINALISTS: usize = 4;

/// A second, re-centred search is tried when the closest part set's gain range is at most this
/// multiple of the window's width.
const RECENTRE_WIDTH: f64 = 1.0;

/// The search for `real`, aiming the nominal gain at `req.gain` (the same requirement, or one
/// with its gain moved to centre the corners' range on `real`'s window).
fn search(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    finalists: usize,
    out: &mut Candidates,
) -> Result<(), DesignError> {
    out.clear();
    // Which ladder currents the hand method can work at (independent of the budget).
    let mut levels: heapless::Vec<(f64, Ideal), MAX_LEVELS> = heapless::Vec::new();
    let mut last_miss: Option<(f64, FirstPassMiss)> = None;
    let mut first_ok: Option<f64> = None;
    let mut heat: Option<(f64, f64)> = None;
    for i in ladder() {
        if levels.is_full() || (first_ok.is_some() && i > req.ic_max) {
            break;
        }
        let pass =
            first_pass(req, profile, i, false).or_else(|_| first_pass(req, profile, i, true));
        match pass {
            Ok(ideal) => {
                first_ok.get_or_insert(i);
                if i <= req.ic_max * (1.0 + 1e-9) {
                    let _ = levels.push((i, ideal));
                }
            }
            Err(miss) => {
                if first_ok.is_none() {
                    last_miss = Some((i, miss));
                }
                if let FirstPassMiss::Dissipation(p) = miss {
                    heat.get_or_insert((i, p));
                }
            }
        }
    }
    let Some(first) = first_ok else {
        if let Some((i, p)) = heat {
            return Err(DesignError::Dissipation {
                needs_ic: i,
                power: p,
                rating: profile.power_rating_at(req.temp_max),
            });
        }
        return Err(out_of_reach(req, profile));
    };
    // The least working current itself (5 % above it) where the ladder steps over it: it
    // depends on the requirement alone, so a larger budget still only adds levels.
    let threshold = last_miss.and_then(|(lo, _)| {
        let t = 1.05 * least_current(req, profile, lo, first);
        let ideal =
            first_pass(req, profile, t, false).or_else(|_| first_pass(req, profile, t, true));
        (t < 0.97 * first && t <= req.ic_max)
            .then_some(())
            .and(ideal.ok())
    });
    if levels.is_empty() && threshold.is_none() {
        let lo = last_miss.map_or(first / 1.5, |(i, _)| i);
        // With the same 5 % margin the threshold level gets.
        let needs_ic = (1.05 * least_current(req, profile, lo, first)).min(first);
        return Err(match last_miss {
            Some((_, FirstPassMiss::Swing(_))) => DesignError::SwingNeedsCurrent {
                swing: req.swing_pp,
                rl: req.rl,
                needs_ic,
                budget: req.ic_max,
            },
            _ => DesignError::GainNeedsCurrent {
                gain: req.gain,
                rl: req.rl,
                needs_ic,
                budget: req.ic_max,
            },
        });
    }
    let mut best = Best {
        list: heapless::Vec::new(),
        closest_miss: None,
        near: heapless::Vec::new(),
    };
    for ideal in threshold.iter().chain(levels.iter().map(|(_, i)| i)) {
        search_level(req, real, profile, ideal, &mut best);
    }
    polish(req, real, profile, &mut best);
    let worst = req.hold == Hold::WorstCase;
    if best.list.is_empty() && (!worst || best.near.is_empty()) {
        let (check, required, achieved) = best
            .closest_miss
            .map_or((Check::Region, 0.0, 0.0), |(_, m)| m);
        return Err(DesignError::Shortfall {
            check,
            required,
            achieved,
        });
    }
    let mut finals = Finals {
        out,
        closest: None,
        low_err: None,
    };
    finals.judge(req, real, profile, best.list.iter().take(finalists));
    if worst && finals.out.is_empty() && finalists == MAX_CANDIDATES {
        // No kept set holds: the near misses of the estimate, judged at the exact corners.
        finals.judge(req, real, profile, best.near.iter());
    }
    let Finals {
        out,
        closest,
        low_err,
    } = finals;
    if !out.is_empty() {
        return Ok(());
    }
    if let Some((_, h)) = closest {
        if let Some((check, required, held)) = h.binding(real) {
            return Err(DesignError::NotHeld {
                check,
                required,
                held,
                gain: real.gain,
                gain_tol: real.gain_tol,
                gain_range: (h.gain_min, h.gain_max),
            });
        }
    }
    Err(low_err.unwrap_or(DesignError::Shortfall {
        check: Check::LowCorner,
        required: req.f_low_or_default(),
        achieved: f64::INFINITY,
    }))
}

/// A kept part set, finished.
#[expect(
    clippy::large_enum_variant,
    reason = "a short-lived return value, moved once into the list; no allocation in core"
)]
enum Finished {
    /// With capacitors, holding every requirement (at every corner with [`Hold::WorstCase`]).
    Holds(Candidate),
    /// With capacitors, missing a requirement at a corner: what it holds.
    Misses(Held),
}

/// The finalists judged so far: those that hold (ranked into `out`), the closest that does not,
/// and the first error choosing capacitors.
struct Finals<'a> {
    out: &'a mut Candidates,
    /// The closest part set that does not hold: its margin and what it holds.
    closest: Option<(f64, Held)>,
    low_err: Option<DesignError>,
}

impl Finals<'_> {
    /// Finish each kept part set and sort it in.
    fn judge<'k>(
        &mut self,
        req: &Requirement,
        real: &Requirement,
        profile: &Profile,
        kept: impl Iterator<Item = &'k Kept>,
    ) {
        for kept in kept {
            match finish(req, real, profile, kept) {
                Ok(Finished::Holds(c)) => push_ranked(self.out, c),
                Ok(Finished::Misses(h)) => note_closest(real, &mut self.closest, h),
                Err(e) => {
                    self.low_err.get_or_insert(e);
                }
            }
        }
    }
}

/// Keep `h` when it is the closest to holding so far.
fn note_closest(req: &Requirement, closest: &mut Option<(f64, Held)>, h: Held) {
    let m = h.margin(req);
    if closest.is_none_or(|c| m > c.0) {
        *closest = Some((m, h));
    }
}

/// Insert `c` into `out` by score (lower first; equal scores keep their order).
fn push_ranked(out: &mut Candidates, c: Candidate) {
    let at = out
        .iter()
        .position(|x| c.score < x.score)
        .unwrap_or(out.len());
    if at >= MAX_CANDIDATES {
        return;
    }
    if out.is_full() {
        out.pop();
    }
    let _ = out.insert(at, c);
}

/// How often the capacitors are chosen again for a worst-case low corner that misses.
const CAP_RETRIES: usize = 2;

/// Re-analyse a kept part set, choose its capacitors and (with [`Hold::WorstCase`]) check it at
/// every corner; the score of a held set is its own figures' with the exact worst case.
fn finish(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    kept: &Kept,
) -> Result<Finished, DesignError> {
    let f_req = req.f_low_or_default();
    // The same analysis that ranked the set (deterministic: the same figures, bit for bit).
    let Some(ev) = evaluate(req, real, profile, kept.r, kept.level, f64::INFINITY, true) else {
        return Err(DesignError::Shortfall {
            check: Check::Region,
            required: 0.0,
            achieved: 0.0,
        });
    };
    let bare = build(req, ev.r, [None; 3]);
    let worst = req.hold == Hold::WorstCase;
    // With the worst case asked, the capacitors are chosen for their low tolerance.
    let mut scale = if worst { 1.0 - req.cap_tol } else { 1.0 };
    let mut tries = 0;
    loop {
        let (caps, f) = capacitors(req, &bare, &ev.op, scale)?;
        let stage = build(req, ev.r, caps);
        let h = worst.then(|| held(real, profile, &stage));
        let mut score = ev.score;
        if let Some(h) = h {
            match h.binding(real) {
                Some((Check::LowCorner, _, got)) if tries < CAP_RETRIES && got > 0.0 => {
                    scale *= 0.98 * f_req / got;
                    tries += 1;
                    continue;
                }
                Some(_) => return Ok(Finished::Misses(h)),
                None => {}
            }
            let (terms, _) =
                worst_terms(real, h.gain_min, h.gain_max, h.swing_pp_min, h.ic_max, 0.0);
            score = ev.base + terms;
        }
        let mut margins = ev.margins;
        margins.f_low_ratio = f / f_req;
        return Ok(Finished::Holds(Candidate {
            stage,
            op: ev.op,
            gain: ev.gain,
            swing_pp: ev.swing,
            clips: ev.clips,
            f_low: f,
            supply_current: ev.supply,
            transistor_power: ev.ptr,
            ic_range: ev.ic_range,
            margins,
            score,
            level: ev.level,
            held: h,
        }));
    }
}
