//! Second-harmonic distortion at a given output swing, from the exact engine.
//!
//! At midband the capacitors hold their DC charge while the signal swings: CIN holds VB (less
//! the source's DC, 0), COUT holds VC, CE holds the emitter end of RE2 at its DC voltage. The
//! stage the transistor sees during the swing is then itself a DC stage: the base is driven by
//! the divider's Thévenin source in parallel with (VB + v) behind RS, the collector by RC to the
//! supply in parallel with RL to VC, the emitter by RE1 to the fixed voltage at RE2. That stage
//! is solved exactly ([`solve`]) at the drive's two peaks +a and −a, with `a` found (a few
//! secant steps) so that the output's peak-to-peak is the required swing. With the output
//! excursions y₊ and y₋ from the quiescent value, a transfer y = a₁x + a₂x² gives
//! y₊ + y₋ = 2a₂a² and y₊ − y₋ = 2a₁a, so the second harmonic relative to the fundamental is
//! (y₊ + y₋) / (2·(y₊ − y₋)) (the three-point method of harmonic analysis).
//!
//! Cost: about ten exact solves.

use crate::device::Profile;
use crate::signal::source_gain;
use crate::solve::{solve, Conditions, Region};
use crate::stage::{Part, Polarity, Stage};

/// A candidate above this second harmonic at the required swing is flagged (5 %).
pub const HD2_LIMIT: f64 = 0.05;

/// The distortion estimate at one output swing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Distortion {
    /// Second harmonic relative to the fundamental (fraction).
    pub hd2: f64,
    /// The output peak-to-peak it was taken at, V.
    pub swing_pp: f64,
    /// The transistor leaves its active region at a peak of that swing.
    pub clips: bool,
}

/// The second-harmonic estimate of `stage` at ambient `temp_c` (typical hFE) for an output
/// swing of `swing_pp` volts peak-to-peak at the load; `None` when the stage has no active
/// operating point or no signal path.
pub fn second_harmonic(
    stage: &Stage,
    profile: &Profile,
    temp_c: f64,
    swing_pp: f64,
) -> Option<Distortion> {
    let cond = Conditions {
        temp_c,
        beta_25: profile.beta_typ,
        fault: None,
        loads: crate::solve::NodeLoads::NONE,
    };
    let op = solve(stage, profile, cond).ok()?;
    if op.region != Region::Active || !(swing_pp > 0.0) {
        return None;
    }
    let (gain, _) = source_gain(stage, &op.y)?;
    // Work in the NPN frame: voltages from the emitter-side rail (a PNP stage mirrored about
    // its supply, its R1 then the lower resistor of the divider).
    let vcc = stage.vcc.value;
    let (m, upper, lower) = match stage.polarity {
        Polarity::Npn => (1.0, stage.r1.value, stage.r2.value),
        Polarity::Pnp => (-1.0, stage.r2.value, stage.r1.value),
    };
    let frame = |v: f64| if m > 0.0 { v } else { vcc - v };
    let (vb, ve, vc) = (frame(op.vb), frame(op.ve), frame(op.vc));
    let (re1, re2) = (stage.re1.value, stage.re2.value);
    let vx = if re1 + re2 > 0.0 {
        ve * re2 / (re1 + re2)
    } else {
        0.0
    };
    let par = |a: f64, b: f64| a * b / (a + b);
    let rth = par(upper, lower);
    let vbb = vcc * lower / (upper + lower);
    let (rc_eq, vc_th) = match stage.rl {
        Some(rl) => {
            let r = par(stage.rc.value, rl);
            (r, (vcc / stage.rc.value + vc / rl) * r)
        }
        None => (stage.rc.value, vcc),
    };
    let rs = stage.rs;
    // The equivalent stage for a drive of `v` volts of source EMF; its voltages are from VX.
    let equivalent = |v: f64| -> Option<Stage> {
        let (rb, vb_th) = if rs > 0.0 {
            let rb = par(rth, rs);
            (rb, (vbb / rth + (vb + v) / rs) * rb)
        } else {
            (1e-3, vb + v)
        };
        let supply = vc_th - vx;
        let vbb_eq = vb_th - vx;
        if !(supply > 0.0 && vbb_eq > 0.0 && vbb_eq < supply) {
            return None;
        }
        let part = |x: f64| Part::new(x, 0.0);
        Some(Stage {
            polarity: Polarity::Npn,
            vcc: part(supply),
            r1: part(rb * supply / vbb_eq),
            r2: part(rb * supply / (supply - vbb_eq)),
            rc: part(rc_eq),
            re1: part(re1),
            re2: part(0.0),
            rl: None,
            rs: 0.0,
            cin: None,
            cout: None,
            ce: None,
        })
    };
    // Collector voltage (NPN frame) and whether active, for a drive of `v`.
    let out = |v: f64| -> Option<(f64, bool)> {
        let s = equivalent(v)?;
        let o = solve(&s, profile, cond).ok()?;
        Some((o.vc + vx, o.region == Region::Active))
    };
    let (y0, _) = out(0.0)?;
    let mut a = 0.5 * swing_pp / libm::fabs(gain).max(1e-9);
    let mut result = None;
    for _ in 0..6 {
        let (yp, ap) = out(a)?;
        let (yn, an) = out(-a)?;
        let (dp, dn) = (yp - y0, yn - y0);
        let pp = libm::fabs(dp - dn);
        if !(pp > 0.0) {
            return None;
        }
        result = Some(Distortion {
            hd2: libm::fabs(dp + dn) / (2.0 * pp),
            swing_pp: pp,
            clips: !(ap && an),
        });
        if libm::fabs(pp / swing_pp - 1.0) < 1e-3 {
            break;
        }
        a *= swing_pp / pp;
    }
    result
}
