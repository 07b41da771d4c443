//! Fitting and the search over hypotheses: the screen of every hypothesis at typical hFE under
//! the crude error model, then the full fit (the part value and hFE under the full error model)
//! of those the screen cannot rule out.

use heapless::Vec;

use super::covariance::{covariance, crude_inverse, Sym};
use super::model::{Ctx, Tweak};
use super::search::{minimise, refine, REFINE_STEPS};
use super::{
    Hypothesis, ResistorMode, Suspect, CAPACITY, DIM, GAIN_SLOTS, SCREEN_KEEP, SCREEN_MARGIN,
    VALUE_RANGE,
};
use crate::stage::Stage;

/// Screen every hypothesis of `dictionary` and give the full fit to those the screen cannot
/// rule out, into `ranked` (in dictionary order; scores and groups not yet given). A hypothesis
/// the screen ruled out keeps its coarse fit, its χ² raised to [`SCREEN_MARGIN`] above the best
/// fully fitted one.
pub(super) fn fit_all(
    ctx: &mut Ctx<'_>,
    dictionary: &[Suspect],
    ranked: &mut Vec<Hypothesis, CAPACITY>,
) {
    // 1. The screen: every hypothesis at typical hFE (value faults at the points of a coarse
    //    grid) under the crude error model.
    let crude = crude_inverse(ctx);
    // The screen's findings wait in the result's own slots (see `hold`), in dictionary order.
    let mut screened = [f64::INFINITY; CAPACITY];
    for &suspect in dictionary {
        if let Some(c) = screen(ctx, &crude, suspect) {
            if let Some(slot) = screened.get_mut(ranked.len()) {
                *slot = c.chi2;
            }
            let _ = ranked.push(hold(suspect, &c));
        }
    }
    let count = ranked.len();
    let screened = screened.get(..count).unwrap_or(&[]);
    let best_coarse = screened
        .iter()
        .fold(f64::INFINITY, |m, &c| if c < m { c } else { m });
    // 2. The full fit for every hypothesis the screen cannot rule out: the best SCREEN_KEEP and
    //    any within SCREEN_MARGIN of the best. The rest keep their coarse fit.
    let mut rough = 0u64;
    let mut floor = f64::INFINITY;
    for i in 0..count {
        let Some(h) = ranked.get(i) else { break };
        let (suspect, c) = (h.suspect, held(h));
        let better = screened.iter().filter(|&&o| o < c.chi2).count();
        let full = if better < SCREEN_KEEP || c.chi2 <= best_coarse + SCREEN_MARGIN {
            fit(ctx, &crude, suspect, c)
        } else {
            None
        };
        let (chi2, estimate, beta, predicted) = full.unwrap_or_else(|| {
            rough |= 1 << i;
            let estimate = value_interval(&ctx.stage, suspect).map(|_| value_of(c.lv));
            (c.chi2, estimate, ctx.profile.beta_typ, c.y)
        });
        if rough & (1 << i) == 0 && chi2 < floor {
            floor = chi2;
        }
        let Some(slot) = ranked.get_mut(i) else { break };
        *slot = Hypothesis {
            suspect,
            score: 0.0,
            chi2: if chi2.is_finite() { chi2 } else { f64::MAX },
            estimate,
            beta,
            predicted: [predicted[0], predicted[1], predicted[2]],
            gains: core::array::from_fn(|k| predicted.get(3 + k).copied().unwrap_or(0.0) as f32),
            group: 0,
        };
    }
    // All the screen tells of a hypothesis it ruled out: it misfits by SCREEN_MARGIN more than
    // the best fully fitted one, at least.
    floor += SCREEN_MARGIN;
    for (k, h) in ranked.iter_mut().enumerate() {
        if rough & (1 << k) != 0 && h.chi2 < floor {
            h.chi2 = floor;
        }
    }
}

/// The log-value search interval of a `low`/`high` fit, or `None` for other suspects.
/// A part value or hFE from its logarithm, in the precision of the diagnosis's solves
/// ([`crate::solve::Single`]: `f32` on the default builds): the searches resolve log(value) to
/// 1e-3, far coarser than `f32`'s 1e-7, and an `f64` exponential is a software routine of some
/// thousand instructions on the instrument.
fn value_of(log_value: f64) -> f64 {
    crate::solve::exp_single(log_value)
}

/// The logarithm of a part value or hFE for the searches (see [`value_of`]).
fn log_of(value: f64) -> f64 {
    crate::solve::ln_single(value)
}

fn value_interval(stage: &Stage, suspect: Suspect) -> Option<(f64, f64)> {
    // One interval for resistors and capacitors (a capacitor's value is fitted only with gain
    // readings).
    let (p, m) = match suspect {
        Suspect::Resistor(r, m @ (ResistorMode::Low | ResistorMode::High)) => (stage.part(r), m),
        Suspect::Capacitor(c, m @ (ResistorMode::Low | ResistorMode::High))
            if cfg!(feature = "signal-test") =>
        {
            (stage.capacitor(c)?, m)
        }
        _ => return None,
    };
    let ln = log_of(p.value);
    let span = log_of(VALUE_RANGE);
    // Just outside the tolerance band, on the side the mode names.
    if m == ResistorMode::Low {
        Some((ln - span, log_of(1.0 - p.tol) + ln))
    } else {
        Some((log_of(1.0 + p.tol) + ln, ln + span))
    }
}

/// The best fit of a hypothesis under the full error model so far.
#[derive(Clone, Copy)]
struct Top {
    chi2: f64,
    value: f64,
    beta: f64,
    y: [f64; DIM],
}

impl Top {
    /// Keep (`value`, `beta`) with its prediction `y` if it fits better; gives its χ².
    fn offer(
        &mut self,
        ctx: &Ctx<'_>,
        inv: &Sym,
        value: f64,
        beta: f64,
        y: Option<[f64; DIM]>,
    ) -> f64 {
        let chi2 = ctx.chi2(inv, y);
        if let Some(y) = y {
            if chi2 < self.chi2 {
                *self = Self {
                    chi2,
                    value,
                    beta,
                    y,
                };
            }
        }
        chi2
    }
}

/// Fit one hypothesis; returns (χ², value, beta, prediction).
fn fit(
    ctx: &mut Ctx<'_>,
    crude: &Sym,
    suspect: Suspect,
    coarse: Coarse,
) -> Option<(f64, Option<f64>, f64, [f64; DIM])> {
    let p = ctx.profile;
    let (lb_lo, lb_hi) = (log_of(p.beta_min), log_of(p.beta_max));
    let beta_typ = p.beta_typ;
    let lb_typ = log_of(beta_typ);
    let beta_fits = lb_hi > lb_lo + 1e-9;
    let interval = value_interval(&ctx.stage, suspect);
    // 1. Locate the part value with the crude error model at typical hFE, one step of the
    //    screen's grid either way of its find (golden section: the crude misfit is not smooth
    //    enough in the value for parabolic steps to find it as well).
    let mut at_typ = coarse;
    if let Some((lo, hi)) = interval {
        let step = (hi - lo) / f64::from(SCREEN_GRID - 1);
        let a = if coarse.lv - step > lo {
            coarse.lv - step
        } else {
            lo
        };
        let b = if coarse.lv + step < hi {
            coarse.lv + step
        } else {
            hi
        };
        if let Some(c) = locate(ctx, crude, suspect, (a, b), LOCATE_GRID, 10) {
            at_typ = c;
        }
    }
    // 2. The full error model at that point (its prediction is the crude fit's).
    let value = value_of(at_typ.lv);
    let y0 = at_typ.y;
    let inv = covariance(ctx, suspect, value, beta_typ, y0).inverse();
    let mut top = Top {
        chi2: f64::INFINITY,
        value,
        beta: beta_typ,
        y: y0,
    };
    let c_typ = top.offer(ctx, &inv, value, beta_typ, Some(y0));
    // 3. hFE within its spread (from its ends and the typical value), then the value again
    //    around the first find, one grid step either way.
    if beta_fits {
        let mut at = |lb: f64| {
            let b = value_of(lb);
            let y = ctx.predict(suspect, value, b, Tweak::None);
            top.offer(ctx, &inv, value, b, y)
        };
        let (lo, hi) = (at(lb_lo), at(lb_hi));
        if lb_typ > lb_lo && lb_typ < lb_hi {
            refine(
                &mut at,
                [(lb_lo, lo), (lb_typ, c_typ), (lb_hi, hi)],
                REFINE_STEPS,
            );
        } else {
            let lb_mid = 0.5 * (lb_lo + lb_hi);
            let mid = at(lb_mid);
            refine(
                &mut at,
                [(lb_lo, lo), (lb_mid, mid), (lb_hi, hi)],
                REFINE_STEPS,
            );
        }
    }
    if let Some((lo, hi)) = interval {
        let (lv0, beta, c0) = (log_of(top.value), top.beta, top.chi2);
        let step = (hi - lo) / 12.0;
        let a = if lv0 - step > lo { lv0 - step } else { lo };
        let b = if lv0 + step < hi { lv0 + step } else { hi };
        let mut at = |lv: f64| {
            let v = value_of(lv);
            let y = ctx.predict(suspect, v, beta, Tweak::None);
            top.offer(ctx, &inv, v, beta, y)
        };
        if a < lv0 && lv0 < b {
            let (fa, fb) = (at(a), at(b));
            refine(&mut at, [(a, fa), (lv0, c0), (b, fb)], REFINE_STEPS);
        } else {
            minimise(&mut at, a, b, 3, 10);
        }
    }
    if !top.chi2.is_finite() {
        // Nothing fitted under the full model (every solve failed but the first): the first.
        top.chi2 = c_typ;
    }
    Some((top.chi2, interval.map(|_| top.value), top.beta, top.y))
}

/// Points of the screen's grid in log(value) for `low`/`high`.
const SCREEN_GRID: u16 = 7;
/// Golden-section steps of the screen after its grid.
const SCREEN_STEPS: u16 = 2;
/// Points of the grid that locates a part value around the screen's find.
const LOCATE_GRID: u16 = 5;

/// A crude fit of a hypothesis at typical hFE: its χ² under the crude error model, the
/// log(value) found (low/high; the search interval is [`value_interval`]'s), the prediction
/// there.
#[derive(Clone, Copy)]
struct Coarse {
    chi2: f64,
    lv: f64,
    y: [f64; DIM],
}

/// A screened hypothesis held in its own slot of the result until its full fit replaces it: the
/// screen's list then needs no storage of its own (about 3 KB with the signal test, which an
/// instrument would otherwise carry on its stack). Every value is kept bit for bit: χ² in
/// `chi2`, log(value) in `beta`, VB, VE, VC in `predicted`, the gains in `score`, `estimate` and
/// (two to an `f64`) the bits of `gains`.
fn hold(suspect: Suspect, c: &Coarse) -> Hypothesis {
    let extra = |k: usize| c.y.get(3 + k).copied().unwrap_or(0.0);
    let mut gains = [0.0f32; GAIN_SLOTS];
    for (k, pair) in gains.chunks_mut(2).enumerate() {
        let bits = extra(2 + k).to_bits();
        if let Some(lo) = pair.get_mut(0) {
            *lo = f32::from_bits(bits as u32);
        }
        if let Some(hi) = pair.get_mut(1) {
            *hi = f32::from_bits((bits >> 32) as u32);
        }
    }
    Hypothesis {
        suspect,
        score: extra(0),
        chi2: c.chi2,
        estimate: Some(extra(1)),
        beta: c.lv,
        predicted: [c.y[0], c.y[1], c.y[2]],
        gains,
        group: 0,
    }
}

/// The screened hypothesis [`hold`] put in `h`.
fn held(h: &Hypothesis) -> Coarse {
    let mut y = [0.0; DIM];
    for (slot, v) in y.iter_mut().zip(h.predicted) {
        *slot = v;
    }
    let pairs = h.gains.chunks(2).map(|p| {
        let lo = p.first().map_or(0, |g| u64::from(g.to_bits()));
        let hi = p.get(1).map_or(0, |g| u64::from(g.to_bits()));
        f64::from_bits(lo | (hi << 32))
    });
    let extra = [h.score, h.estimate.unwrap_or(0.0)]
        .into_iter()
        .chain(pairs);
    for (slot, v) in y.iter_mut().skip(3).zip(extra) {
        *slot = v;
    }
    Coarse {
        chi2: h.chi2,
        lv: h.beta,
        y,
    }
}

// Every gain reading fits in the slots `hold` uses: `score`, `estimate` and a whole pair of
// `gains` for each further two.
const fn gains_fit(slots: usize) -> bool {
    slots % 2 == 0 && slots <= 2 + slots / 2
}
const _: () = assert!(gains_fit(GAIN_SLOTS));

/// The crude fit of `suspect` at typical hFE over [lo, hi] of log(value) (`grid` points, then
/// `steps` of golden section; without a value to fit, one solve).
fn locate(
    ctx: &mut Ctx<'_>,
    crude: &Sym,
    suspect: Suspect,
    (lo, hi): (f64, f64),
    grid: u16,
    steps: u16,
) -> Option<Coarse> {
    let beta = ctx.profile.beta_typ;
    let mut best: Option<Coarse> = None;
    minimise(
        &mut |lv| {
            let y = ctx.predict(suspect, value_of(lv), beta, Tweak::None);
            let chi2 = ctx.chi2(crude, y);
            if let Some(y) = y {
                if best.is_none_or(|b| chi2 < b.chi2) {
                    best = Some(Coarse { chi2, lv, y });
                }
            }
            chi2
        },
        lo,
        hi,
        grid,
        steps,
    );
    best
}

/// The screen of one hypothesis: typical hFE, a value fault at the points of a coarse grid and
/// [`SCREEN_STEPS`] golden-section steps around the best of them.
fn screen(ctx: &mut Ctx<'_>, crude: &Sym, suspect: Suspect) -> Option<Coarse> {
    let span = value_interval(&ctx.stage, suspect);
    locate(
        ctx,
        crude,
        suspect,
        span.unwrap_or((0.0, 0.0)),
        SCREEN_GRID,
        SCREEN_STEPS,
    )
}
