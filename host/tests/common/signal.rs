//! The signal test's boards: the invented stage [`SIGNAL`] with its DC readings and gains from
//! the engine (operating point and complex response), and `check --ac` of them.

use std::process::Output;

use biasjig_core::device::Profile;
use biasjig_core::response::{magnitude_at, CapState, Caps};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::Capacitor;

use super::bin;
use super::stage::{reading_flags, SIGNAL};

/// The test tones of the signal tests, Hz (a midband tone and one near the low corner).
pub const TONES: [f64; 2] = [1000.0, 5.0];

/// The conditions of every signal board: 25 °C, its transistor's hFE 180.
pub fn conditions(p: &Profile) -> Conditions {
    Conditions {
        beta_25: 180.0,
        ..Conditions::typical(p)
    }
}

/// DC readings and the gains at `freqs` of the nominal board with hFE 180 and one capacitor in
/// the state given (`None`: as designed).
pub fn board(cap: Option<(Capacitor, CapState)>, freqs: &[f64]) -> ([f64; 4], Vec<f64>) {
    let (s, p) = (SIGNAL.stage(), SIGNAL.profile());
    let op = solve(&s, &p, conditions(&p)).expect("the engine solves the board");
    let mut caps = Caps::nominal(&s);
    if let Some((c, st)) = cap {
        caps = caps.with(c, st);
    }
    let gains = freqs
        .iter()
        .map(|f| magnitude_at(&s, &op, &caps, *f))
        .collect();
    ([op.vcc, op.vb, op.ve, op.vc], gains)
}

/// `check` of the signal stage with readings `r`, gain readings `ac` (Hz, gain) and `extra`.
pub fn check(r: [f64; 4], ac: &[(f64, f64)], extra: &[&str]) -> Output {
    let mut c = bin();
    c.arg("check")
        .args(SIGNAL.without_vcc())
        .args(reading_flags(r));
    for (f, g) in ac {
        c.arg("--ac").arg(format!("{f}:{g}"));
    }
    c.args(extra).output().expect("biasjig runs")
}
