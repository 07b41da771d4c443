//! The low-frequency response: the pole of each capacitor (short-circuit time constants) and
//! the exact −3 dB low corner of the whole stage.
//!
//! Each capacitor's pole is 1/(2π·R·C) with R the resistance it sees while the other two are
//! shorts (the short-circuit time-constant method); their sum estimates the corner. The exact
//! corner is where |v(load)/v(source)| has fallen to 1/√2 of its midband value, found by bisection
//! in log frequency on the small-signal network with all three capacitors at their real values.

use core::f64::consts::PI;

use crate::acnet::{self, Cap, Setup, B, IN, NODE_C, OUT, X};
use crate::solve::OperatingPoint;
use crate::stage::Stage;

/// Lowest frequency searched, Hz.
const F_MIN: f64 = 1e-6;
/// Highest frequency searched (far above any corner of an audio-band stage), Hz.
const F_MAX: f64 = 1e9;
/// Bisection steps on log frequency (relative resolution far below 1e-6).
const BISECTIONS: u32 = 60;

/// The low-frequency figures of a stage.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LowCorner {
    /// Exact −3 dB low corner, Hz; `None` when every capacitor is ideal (or no corner exists).
    pub f_low: Option<f64>,
    /// Pole of CIN, Hz (`None`: ideal capacitor).
    pub f_cin: Option<f64>,
    /// Pole of COUT, Hz (`None`: ideal capacitor or no load).
    pub f_cout: Option<f64>,
    /// Pole of CE, Hz (`None`: ideal capacitor or no bypassed resistor).
    pub f_ce: Option<f64>,
    /// Sum of the three poles: the short-circuit time-constant estimate of the corner, Hz.
    pub f_estimate: Option<f64>,
}

/// Resistance seen by one capacitor (0 CIN, 1 COUT, 2 CE; removed), the other two shorted and
/// the source at rest, Ω.
pub(crate) fn seen_by(stage: &Stage, op: &OperatingPoint, which: usize) -> Option<f64> {
    let mut setup = Setup::midband();
    let (a, b) = match which {
        0 => {
            setup.cin = Cap::Open;
            (IN, B)
        }
        1 => {
            setup.cout = Cap::Open;
            (NODE_C, OUT)
        }
        _ => {
            setup.ce = Cap::Open;
            (X, acnet::GROUND)
        }
    };
    setup.inject = acnet::injection(a, b);
    let v = acnet::solve(stage, &op.y, &setup)?;
    let r = (acnet::at(&v, a) - acnet::at(&v, b)).re;
    (r.is_finite() && r > 0.0).then_some(r)
}

/// The pole 1/(2π·R·C) of a capacitor seeing `r`, Hz (`None` for no capacitor, or an open).
pub(crate) fn pole(r: Option<f64>, c: Option<f64>) -> Option<f64> {
    match (r, c) {
        (Some(r), Some(c)) if r < 1e11 => Some(1.0 / (2.0 * PI * r * c)),
        _ => None,
    }
}

/// The short-circuit time-constant estimate of the low corner of `stage` at `op` with its
/// capacitors at their values as given: the sum of the poles of CIN, COUT (only with a load)
/// and CE (only with a bypassed RE2), Hz; 0 when there are none. The one figure the design's
/// `held` and the spread's Monte Carlo judge the low corner by.
pub(crate) fn pole_sum(stage: &Stage, op: &OperatingPoint) -> f64 {
    let caps = [
        stage.cin.map(|p| p.value),
        stage.cout.map(|p| p.value),
        stage.ce.map(|p| p.value),
    ];
    let mut sum = 0.0;
    for (which, c) in caps.iter().enumerate() {
        let present = match which {
            1 => stage.rl.is_some(),
            2 => stage.re2.value > 0.0,
            _ => true,
        };
        if present && c.is_some() {
            sum += pole(seen_by(stage, op, which), *c).unwrap_or(0.0);
        }
    }
    sum
}

/// |v(load)/v(source)| at `f` Hz (`None`: all capacitors shorted).
fn gain_at(stage: &Stage, op: &OperatingPoint, f: Option<f64>) -> Option<f64> {
    let cap = f.map_or(Cap::Short, Cap::At);
    let setup = Setup {
        cin: cap,
        cout: cap,
        ce: cap,
        inject: acnet::source_emf(stage),
        ..Setup::midband()
    };
    acnet::solve(stage, &op.y, &setup).map(|v| libm::sqrt(acnet::at(&v, OUT).norm_sqr()))
}

/// The low-frequency figures of `stage` at `op`.
pub fn low_corner(stage: &Stage, op: &OperatingPoint) -> LowCorner {
    let f_cin = pole(seen_by(stage, op, 0), stage.cin.map(|p| p.value));
    let f_cout = if stage.rl.is_some() {
        pole(seen_by(stage, op, 1), stage.cout.map(|p| p.value))
    } else {
        None
    };
    let f_ce = if stage.re2.value > 0.0 {
        pole(seen_by(stage, op, 2), stage.ce.map(|p| p.value))
    } else {
        None
    };
    let poles = [f_cin, f_cout, f_ce];
    let f_estimate = if poles.iter().any(Option::is_some) {
        Some(poles.iter().flatten().sum())
    } else {
        None
    };
    let f_low = if f_estimate.is_some() {
        exact_corner(stage, op)
    } else {
        None
    };
    LowCorner {
        f_low,
        f_cin,
        f_cout,
        f_ce,
        f_estimate,
    }
}

/// Bisection in log frequency for |H(f)| = |H(midband)|/√2.
fn exact_corner(stage: &Stage, op: &OperatingPoint) -> Option<f64> {
    let mid = gain_at(stage, op, None)?;
    if mid.is_nan() || mid <= 0.0 {
        return None;
    }
    let target = mid / core::f64::consts::SQRT_2;
    let (mut lo, mut hi) = (libm::log(F_MIN), libm::log(F_MAX));
    if gain_at(stage, op, Some(F_MIN))? >= target || gain_at(stage, op, Some(F_MAX))? < target {
        return None;
    }
    for _ in 0..BISECTIONS {
        let m = 0.5 * (lo + hi);
        if gain_at(stage, op, Some(libm::exp(m)))? < target {
            lo = m;
        } else {
            hi = m;
        }
    }
    Some(libm::exp(0.5 * (lo + hi)))
}
