//! Ranking and grouping: the fitted hypotheses scored by their relative likelihood and ordered,
//! those that the readings cannot tell apart grouped, and the further test frequency that would
//! tell a group apart.

use heapless::Vec;

#[cfg(feature = "signal-test")]
use super::model::{Ctx, Tweak};
use super::{Hypothesis, CAPACITY, DIM, FIT_PENALTY, UNEXPLAINED_CHI2};
#[cfg(feature = "signal-test")]
use crate::device::Profile;
use crate::settings::TestSettings;
#[cfg(feature = "signal-test")]
use crate::signaltest::SignalMeter;
#[cfg(feature = "signal-test")]
use crate::spread::Variation;
#[cfg(feature = "signal-test")]
use crate::stage::Stage;

/// The misfit a hypothesis is ranked by: χ² and, for a fitted part value, [`FIT_PENALTY`].
fn penalised(h: &Hypothesis) -> f64 {
    h.chi2
        + if h.estimate.is_some() {
            FIT_PENALTY
        } else {
            0.0
        }
}

/// Differences of misfit (χ²) below which two hypotheses rank as equal: a likelihood ratio of
/// 1.0005, far below what the readings can tell, and above the rounding of single-precision
/// predictions.
const RANK_RESOLUTION: f64 = 1e-3;

/// Order `ranked` by penalised misfit and give each its score, the relative likelihood
/// exp(−χ²/2) normalised over all. Returns whether the best explains the readings (its χ² is
/// within [`UNEXPLAINED_CHI2`]).
pub(super) fn rank(ranked: &mut [Hypothesis]) -> bool {
    // Misfits within RANK_RESOLUTION of each other keep the dictionary's order (the sort is
    // stable): which of two hypotheses that predict the same readings comes first must not hang
    // on the last bits of their predictions.
    // The step of each misfit is kept in `score` while the list is sorted (the score is set
    // below), so that each is computed once.
    for h in ranked.iter_mut() {
        h.score = libm::round(penalised(h) * (1.0 / RANK_RESOLUTION));
    }
    sort_by_score(ranked);
    let best = ranked.first().map_or(0.0, penalised);
    let explained = ranked.first().is_some_and(|h| h.chi2 <= UNEXPLAINED_CHI2);
    let mut total = 0.0;
    for h in ranked.iter_mut() {
        h.score = libm::exp(-0.5 * (penalised(h) - best));
        total += h.score;
    }
    for h in ranked.iter_mut() {
        h.score /= total;
    }
    explained
}

/// Order `ranked` by `score`, stably, each hypothesis moved once.
fn sort_by_score(ranked: &mut [Hypothesis]) {
    crate::order::sort_moving_once::<_, CAPACITY>(ranked, |a, b| a.score.total_cmp(&b.score));
}

/// How far two predictions of each reading may lie apart and still be the same: the meter's
/// error at the measured value (VB, VE, VC), the signal meter's for a gain.
pub(super) fn tolerances(settings: &TestSettings, measured: &[f64; DIM]) -> [f64; DIM] {
    core::array::from_fn(|k| {
        let v = measured.get(k).copied().unwrap_or(0.0);
        if k < 3 {
            settings.meter.error(v)
        } else {
            settings.signal.error(v)
        }
    })
}

/// Group the ranked hypotheses whose predictions of the first `n` readings agree within `tol`:
/// each joins the first earlier leader it cannot be told apart from. Then keep each group
/// together, in the order of its best member, best first within a group.
pub(super) fn group(ranked: &mut [Hypothesis], tol: &[f64; DIM], n: usize) {
    // Leaders by their place in `ranked` (no copies of their predictions on the stack).
    let readings_of = |h: &Hypothesis, k: usize| match k {
        0..=2 => h.predicted.get(k).copied().unwrap_or(0.0),
        _ => h.gains.get(k - 3).map_or(0.0, |g| f64::from(*g)),
    };
    let mut leaders: Vec<(u8, u8), CAPACITY> = Vec::new();
    for i in 0..ranked.len() {
        let Some(h) = ranked.get(i) else { break };
        let same = |p: &Hypothesis| {
            tol.iter()
                .enumerate()
                .take(n)
                .all(|(k, t)| libm::fabs(readings_of(p, k) - readings_of(h, k)) <= *t)
        };
        let found = leaders
            .iter()
            .find(|(at, _)| ranked.get(usize::from(*at)).is_some_and(same))
            .map(|(_, g)| *g);
        let g = match found {
            Some(g) => g,
            None => {
                let g = u8::try_from(leaders.len()).unwrap_or(u8::MAX);
                let _ = leaders.push((u8::try_from(i).unwrap_or(u8::MAX), g));
                g
            }
        };
        if let Some(h) = ranked.get_mut(i) {
            h.group = g;
        }
    }
    // Keep each group together, in the order of its best member, best first within a group.
    crate::order::sort_moving_once::<_, CAPACITY>(ranked, |a, b| {
        a.group
            .cmp(&b.group)
            .then(penalised(a).total_cmp(&penalised(b)))
    });
}

/// The test frequency, Hz, at which the gains predicted for the hypotheses `group` (their fits as
/// the diagnosis left them) differ most, in units of the signal meter's error: the further
/// reading that would tell them apart. `None` when no frequency separates every pair by more than
/// twice the error (two open coupling capacitors: lift a part instead), or for fewer than two.
/// `stage` is the design, `vcc` the measured supply, V.
#[cfg(feature = "signal-test")]
pub fn separating_tone(
    stage: &Stage,
    profile: &Profile,
    vcc: f64,
    signal: &SignalMeter,
    var: &Variation,
    group: &[Hypothesis],
) -> Option<f64> {
    if group.len() < 2 {
        return None;
    }
    let settings = TestSettings {
        signal: *signal,
        ..TestSettings::for_variation(var)
    };
    let mut ctx = Ctx::new(stage, profile, vcc, &settings);
    ctx.n = 4;
    let mut best: Option<(f64, f64)> = None;
    for f in crate::signaltest::candidates() {
        if let Some(t) = ctx.tones.first_mut() {
            *t = f;
        }
        let mut g: Vec<f64, 8> = Vec::new();
        for h in group.iter().take(8) {
            let value = h.estimate.unwrap_or(0.0);
            let y = ctx.predict(h.suspect, value, h.beta, Tweak::None)?;
            let _ = g.push(y.get(3).copied().unwrap_or(0.0));
        }
        let mut sep = f64::INFINITY;
        for (i, a) in g.iter().enumerate() {
            for b in g.iter().skip(i + 1) {
                let err = signal.error(*a) + signal.error(*b);
                sep = libm::fmin(sep, libm::fabs(a - b) / err);
            }
        }
        if sep > 2.0 && best.is_none_or(|(_, s)| sep > s) {
            best = Some((f, sep));
        }
    }
    best.map(|(f, _)| f)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnose::Suspect;

    /// The permutation moves every hypothesis to where a stable sort by score puts it: keys with
    /// ties, in every order of a seeded draw.
    #[test]
    fn sort_by_score_is_the_stable_sort() {
        let mut seed = 0x1234_5678_9abc_def1u64;
        for n in 0..=CAPACITY {
            for _ in 0..20 {
                let list: Vec<Hypothesis, CAPACITY> = (0..n)
                    .map(|i| {
                        seed ^= seed << 13;
                        seed ^= seed >> 7;
                        seed ^= seed << 17;
                        Hypothesis {
                            suspect: Suspect::Good,
                            score: (seed % 7) as f64,
                            chi2: i as f64,
                            estimate: None,
                            beta: 0.0,
                            predicted: [0.0; 3],
                            gains: Default::default(),
                            group: 0,
                        }
                    })
                    .collect();
                let mut want = list.clone();
                crate::order::sort_by(&mut want, |a, b| a.score.total_cmp(&b.score));
                let mut got = list.clone();
                sort_by_score(&mut got);
                assert_eq!(got, want, "{n} hypotheses");
            }
        }
    }
}
