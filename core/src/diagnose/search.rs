//! The one-dimensional searches of the fits: successive parabolic interpolation from three
//! points ([`refine`]) and a grid with golden-section refinement ([`minimise`]).

use heapless::Vec;

/// Resolution of the 1-D searches in log(value) and log(hFE): 0.1 %, finer than the readings
/// can tell apart (the meter error is some tenths of a percent of a reading, and a node moves
/// by no more than the part value or hFE behind it).
const SEARCH_RESOLUTION: f64 = 1e-3;
/// Evaluations of the parabolic refinement after a three-point start.
pub(super) const REFINE_STEPS: u16 = 4;
/// Points [`refine`] holds at most: the three it starts from and one per step.
const REFINE_POINTS: usize = 8;
// The fits' refinement never runs out of room (a longer one stops when the points are full).
const _: () = assert!(3 + REFINE_STEPS as usize <= REFINE_POINTS);

/// Index of the smallest f among the points (the first on a tie; 0 when none is below infinity).
fn best_index(pts: &[(f64, f64)]) -> usize {
    let mut best = (0, f64::INFINITY);
    for (k, p) in pts.iter().enumerate() {
        if p.1 < best.1 {
            best = (k, p.1);
        }
    }
    best.0
}

/// Successive parabolic interpolation from three points in increasing x, for at most `steps`
/// evaluations of `f`. While the best point has a neighbour on either side, the vertex of the
/// parabola through the three is evaluated if it falls inside their bracket (else the golden
/// point of the larger half); when the best point is an end, the vertex is evaluated only if it
/// falls between the end and its neighbour (otherwise the end is the minimum). It stops once
/// the next point would come within [`SEARCH_RESOLUTION`] of a known one. The search never
/// leaves the span of the three points. Returns the best (x, f(x)) seen.
pub(super) fn refine(
    f: &mut dyn FnMut(f64) -> f64,
    start: [(f64, f64); 3],
    steps: u16,
) -> (f64, f64) {
    const GOLDEN: f64 = 0.381_966_011_250_105_1;
    let mut pts: Vec<(f64, f64), REFINE_POINTS> = Vec::new();
    for p in start {
        let _ = pts.push(p);
    }
    for _ in 0..steps {
        let n = pts.len();
        let k = best_index(&pts);
        // The best point and its neighbours, or the three at the end where it lies.
        let m = k.clamp(1, n.saturating_sub(2).max(1));
        let (Some(&(x0, f0)), Some(&(x1, f1)), Some(&(x2, f2))) =
            (pts.get(m - 1), pts.get(m), pts.get(m + 1))
        else {
            break;
        };
        if !(f0.is_finite() && f1.is_finite() && f2.is_finite()) {
            break;
        }
        let (d0, d2) = (x1 - x0, x1 - x2);
        let num = d0 * d0 * (f1 - f2) - d2 * d2 * (f1 - f0);
        let den = d0 * (f1 - f2) - d2 * (f1 - f0);
        let vertex = (den != 0.0).then(|| x1 - 0.5 * num / den);
        // Where the minimum is: between the neighbours of an inner best, or between an end and
        // its neighbour.
        let (a, b) = if k == m {
            (x0, x2)
        } else if k < m {
            (x0, x1)
        } else {
            (x1, x2)
        };
        let inside = |u: f64| u > a && u < b;
        let u = match vertex {
            Some(u) if inside(u) => u,
            _ if k != m => break,
            _ => {
                if x1 - x0 > x2 - x1 {
                    x1 - GOLDEN * (x1 - x0)
                } else {
                    x1 + GOLDEN * (x2 - x1)
                }
            }
        };
        if !(u.is_finite() && pts.iter().all(|p| libm::fabs(p.0 - u) >= SEARCH_RESOLUTION)) {
            break;
        }
        let fu = f(u);
        let at = pts.iter().position(|p| p.0 > u).unwrap_or(n);
        if pts.insert(at, (u, fu)).is_err() {
            break;
        }
    }
    pts.get(best_index(&pts)).copied().unwrap_or(start[1])
}

/// Minimise `f` on [lo, hi]: a grid of `grid` points, then golden-section refinement of the best
/// bracket for `refine` steps. Returns (x, f(x)).
pub(super) fn minimise(
    f: &mut dyn FnMut(f64) -> f64,
    lo: f64,
    hi: f64,
    grid: u16,
    refine: u16,
) -> (f64, f64) {
    if hi.is_nan() || lo.is_nan() || hi <= lo || grid < 2 {
        let m = 0.5 * (lo + hi);
        return (m, f(m));
    }
    let step = (hi - lo) / f64::from(grid - 1);
    let mut best = (lo, f64::INFINITY);
    let mut best_k = 0u16;
    for k in 0..grid {
        let x = lo + step * f64::from(k);
        let fx = f(x);
        if fx < best.1 {
            best = (x, fx);
            best_k = k;
        }
    }
    let mut a = if best_k > 0 { best.0 - step } else { best.0 };
    let mut b = if best_k + 1 < grid {
        best.0 + step
    } else {
        best.0
    };
    const INV_PHI: f64 = 0.618_033_988_749_894_8;
    let mut x1 = b - INV_PHI * (b - a);
    let mut x2 = a + INV_PHI * (b - a);
    let mut f1 = if refine > 0 { f(x1) } else { f64::INFINITY };
    let mut f2 = if refine > 1 { f(x2) } else { f64::INFINITY };
    for _ in 2..refine {
        if f1 < f2 {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - INV_PHI * (b - a);
            f1 = f(x1);
        } else {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + INV_PHI * (b - a);
            f2 = f(x2);
        }
    }
    for (x, fx) in [(x1, f1), (x2, f2)] {
        if fx < best.1 {
            best = (x, fx);
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parabolic_refinement_finds_a_minimum_in_few_steps() {
        let mut n = 0;
        let mut f = |x: f64| {
            n += 1;
            (x - 0.37) * (x - 0.37) * (1.0 + 0.1 * x) + 2.0
        };
        let start = [-1.0, 0.2, 1.0].map(|x| (x, f(x)));
        let (x, fx) = refine(&mut f, start, REFINE_STEPS);
        assert!((x - 0.37).abs() < 2e-3, "{x}");
        assert!((fx - 2.0).abs() < 1e-5);
        assert!(n <= 3 + usize::from(REFINE_STEPS), "{n}");
        // A minimum at an end of the span: the end.
        let (x, _) = refine(
            &mut |x| x,
            [(0.0, 0.0), (0.5, 0.5), (1.0, 1.0)],
            REFINE_STEPS,
        );
        assert_eq!(x, 0.0);
        let (x, _) = refine(
            &mut |x| -x * x,
            [(0.0, 0.0), (0.5, -0.25), (1.0, -1.0)],
            REFINE_STEPS,
        );
        assert_eq!(x, 1.0);
    }

    #[test]
    fn golden_section_finds_a_parabola_minimum() {
        let (x, fx) = minimise(&mut |x| (x - 1.37) * (x - 1.37) + 2.0, -5.0, 5.0, 9, 25);
        assert!((x - 1.37).abs() < 1e-3, "{x}");
        assert!((fx - 2.0).abs() < 1e-6);
        // At the interval's edge.
        let (x, _) = minimise(&mut |x| x, 0.0, 1.0, 5, 10);
        assert!(x < 0.05, "{x}");
    }
}
