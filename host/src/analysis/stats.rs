//! Capability and control-chart arithmetic for the report.
//!
//! - **Referral to the nominal supply.** A board's windows are computed at the supply measured
//!   on that board, so raw readings from boards on different supplies sit against different
//!   windows. Each reading is carried to the nominal supply by its place in its own window:
//!   `x' = L0 + (x − L)·(H0 − L0)/(H − L)`, where `[L, H]` is the window applied to the board
//!   (measured supply) and `[L0, H0]` the window at the nominal supply. Cpk is then taken on
//!   `x'` against `[L0, H0]`.
//! - **Cpk** = min(H0 − mean, mean − L0) / (3·s), s the sample standard deviation (common
//!   practice), over the first test of each board that passed; none below [`MIN_N`] boards.
//! - **Individuals chart**: centre the mean, σ̂ = mean moving range / d2 with d2 = 1.128 for
//!   ranges of two (the control-chart constant, from memory), limits centre ± 3σ̂, and the four
//!   run rules of the Western Electric Company's *Statistical Quality Control Handbook* (1956),
//!   from memory: (1) one point beyond 3σ̂; (2) two of three successive points beyond 2σ̂ on the
//!   same side; (3) four of five successive points beyond 1σ̂ on the same side; (4) eight
//!   successive points on the same side of the centre.

/// The fewest boards for which a Cpk is given (common practice: about 30 for a first estimate
/// of capability; fewer gives an index too uncertain to sign).
pub const MIN_N: usize = 30;

/// d2 for moving ranges of two points (control-chart constant, from memory).
pub const D2: f64 = 1.128;

/// Where the run rules come from.
pub const RULES_SOURCE: &str =
    "Western Electric Company, Statistical Quality Control Handbook (1956), zone rules 1-4";

/// A reading carried to the nominal supply by its place in its own window.
pub fn refer(x: f64, low: f64, high: f64, low0: f64, high0: f64) -> f64 {
    let w = high - low;
    if !(w.is_finite() && w > 0.0) {
        return x;
    }
    low0 + (x - low) * (high0 - low0) / w
}

/// Mean and sample standard deviation (NaN when undefined).
pub fn mean_std(v: &[f64]) -> (f64, f64) {
    if v.is_empty() {
        return (f64::NAN, f64::NAN);
    }
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    if v.len() < 2 {
        return (m, f64::NAN);
    }
    let ss = v.iter().map(|x| (x - m) * (x - m)).sum::<f64>();
    (m, (ss / (n - 1.0)).sqrt())
}

/// Cpk of the values against `[low, high]`; `None` below [`MIN_N`] values or without spread.
pub fn cpk(v: &[f64], low: f64, high: f64) -> Option<f64> {
    if v.len() < MIN_N {
        return None;
    }
    let (m, s) = mean_std(v);
    (s > 0.0 && s.is_finite()).then(|| (high - m).min(m - low) / (3.0 * s))
}

/// An individuals chart and its run-rule signals.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    /// Centre line (mean).
    pub centre: f64,
    /// σ̂ from the mean moving range.
    pub sigma: f64,
    /// Signals: (rule 1..=4, index of the point that completes the pattern).
    pub signals: Vec<(u8, usize)>,
}

impl Chart {
    /// Upper control limit.
    pub fn ucl(&self) -> f64 {
        self.centre + 3.0 * self.sigma
    }

    /// Lower control limit.
    pub fn lcl(&self) -> f64 {
        self.centre - 3.0 * self.sigma
    }

    /// How many signals of each rule (index 0 is rule 1).
    pub fn counts(&self) -> [usize; 4] {
        let mut c = [0; 4];
        for (r, _) in &self.signals {
            if let Some(x) = c.get_mut(usize::from(*r).wrapping_sub(1)) {
                *x += 1;
            }
        }
        c
    }
}

/// The individuals chart of the values in test order; `None` with fewer than two points.
pub fn individuals(v: &[f64]) -> Option<Chart> {
    if v.len() < 2 {
        return None;
    }
    let (centre, _) = mean_std(v);
    let mr = v.windows(2).map(|w| (w[1] - w[0]).abs()).sum::<f64>() / (v.len() - 1) as f64;
    let sigma = mr / D2;
    let mut signals = Vec::new();
    if sigma > 0.0 {
        // Zone of each point: signed distance from the centre in σ̂.
        let z: Vec<f64> = v.iter().map(|x| (x - centre) / sigma).collect();
        for i in 0..z.len() {
            if z[i].abs() > 3.0 {
                signals.push((1, i));
            }
            let beyond = |from: usize, k: f64, side: f64| {
                z[from..=i].iter().filter(|x| *x * side > k).count()
            };
            for side in [1.0, -1.0] {
                if i >= 2 && beyond(i - 2, 2.0, side) >= 2 && z[i] * side > 2.0 {
                    signals.push((2, i));
                }
                if i >= 4 && beyond(i - 4, 1.0, side) >= 4 && z[i] * side > 1.0 {
                    signals.push((3, i));
                }
                if i >= 7 && z[i - 7..=i].iter().all(|x| *x * side > 0.0) {
                    signals.push((4, i));
                }
            }
        }
    }
    Some(Chart {
        centre,
        sigma,
        signals,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn referral_keeps_the_place_in_the_window() {
        // A reading at 25 % of a 2..4 V window lands at 25 % of a 1..3 V window.
        assert_eq!(refer(2.5, 2.0, 4.0, 1.0, 3.0), 1.5);
        assert_eq!(refer(2.0, 2.0, 4.0, 1.0, 3.0), 1.0);
    }

    #[test]
    fn cpk_needs_the_minimum_n() {
        let v: Vec<f64> = (0..MIN_N).map(|k| 2.0 + 0.01 * (k % 5) as f64).collect();
        let (m, s) = mean_std(&v);
        // Cpk = min(USL − mean, mean − LSL)/(3s) (common practice).
        let want = (3.0 - m).min(m - 1.0) / (3.0 * s);
        assert!((cpk(&v, 1.0, 3.0).unwrap() - want).abs() < 1e-12);
        assert_eq!(cpk(&v[1..], 1.0, 3.0), None);
    }

    #[test]
    fn each_run_rule_fires_on_its_pattern() {
        // A steady zig-zag of ±1 around 10 gives mean moving range 2, σ̂ = 2/1.128 = 1.77.
        let base: Vec<f64> = (0..40)
            .map(|k| if k % 2 == 0 { 9.0 } else { 11.0 })
            .collect();
        let quiet = individuals(&base).unwrap();
        assert!(quiet.signals.is_empty(), "{:?}", quiet.signals);
        let mut one = base.clone();
        one[20] = 30.0;
        assert!(individuals(&one).unwrap().signals.contains(&(1, 20)));
        // Points 9..=17 above the centre (11 then eight of 10.5; the mean moves to 10.1): the
        // run of eight completes at 16 and again at 17 (rule 4), and nowhere else.
        let mut run = base.clone();
        for x in &mut run[10..18] {
            *x = 10.5;
        }
        let c = individuals(&run).unwrap();
        assert_eq!(c.signals, [(4, 16), (4, 17)]);
    }
}
