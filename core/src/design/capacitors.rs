//! The coupling and bypass capacitors of a part set: the least total capacitance whose pole sum
//! meets the low corner.

use core::f64::consts::PI;

use crate::lowfreq;
use crate::solve::OperatingPoint;
use crate::stage::{Part, Stage};

use super::{DesignError, Requirement, C_MAX, F_LOW_MARGIN};

/// The poles of CIN, COUT and CE (each of value `c`, F) by the short-circuit time-constant
/// method, Hz: the resistance each one sees with the other two shorted and the source at rest,
/// from the same small-signal network and in the same way as
/// [`low_corner`](crate::lowfreq::low_corner) gives `f_cin`, `f_cout` and `f_ce` (bit for bit),
/// without its search for the exact corner (some sixty more solves the choice does not use).
fn probe_poles(stage: &Stage, op: &OperatingPoint, c: f64) -> [Option<f64>; 3] {
    let pole = |which: usize| lowfreq::pole(lowfreq::seen_by(stage, op, which), Some(c));
    [
        pole(0),
        if stage.rl.is_some() { pole(1) } else { None },
        if stage.re2.value > 0.0 { pole(2) } else { None },
    ]
}

/// Capacitors for a candidate: the set with the least total capacitance whose pole sum is at or
/// below `F_LOW_MARGIN` × the required low corner. Returns (CIN, COUT, CE, pole sum).
#[inline]
pub(super) fn capacitors(
    req: &Requirement,
    stage: &Stage,
    op: &OperatingPoint,
    scale: f64,
) -> Result<([Option<f64>; 3], f64), DesignError> {
    // Probe with 1 µF parts: each pole is 1/(2π·R·1 µF), which gives the resistance R it sees.
    const PROBE: f64 = 1e-6;
    let mut probe = *stage;
    probe.cin = Some(Part::new(PROBE, 0.0));
    probe.cout = stage.rl.map(|_| Part::new(PROBE, 0.0));
    probe.ce = (stage.re2.value > 0.0).then_some(Part::new(PROBE, 0.0));
    let [f_cin, f_cout, f_ce] = probe_poles(&probe, op, PROBE);
    let seen = |f: Option<f64>| f.map(|f| 1.0 / (2.0 * PI * f * PROBE));
    let (r_in, r_out, r_e) = (seen(f_cin), seen(f_cout), seen(f_ce));
    let f_target = F_LOW_MARGIN * req.f_low_or_default() * scale;
    let series = req.cap_series;
    let pole = |r: Option<f64>, c: f64| r.map_or(0.0, |r| 1.0 / (2.0 * PI * r * c));
    // Candidate values for a coupling capacitor: from the least that alone meets the target up.
    let options = |r: Option<f64>| -> heapless::Vec<Option<f64>, 7> {
        let mut v = heapless::Vec::new();
        match r {
            None => {
                let _ = v.push(None);
            }
            Some(r) => {
                let least = 1.0 / (2.0 * PI * r * f_target);
                let mut c = series.next_up(least);
                while let Some(x) = c {
                    if x > C_MAX * (1.0 + 1e-9) || v.is_full() {
                        break;
                    }
                    let _ = v.push(Some(x));
                    c = series.next_up(x);
                }
            }
        }
        v
    };
    let mut best: Option<([Option<f64>; 3], f64, f64)> = None;
    let mut needs = 0.0_f64;
    for cin in options(r_in) {
        for cout in options(r_out) {
            let used = cin.map_or(0.0, |c| pole(r_in, c)) + cout.map_or(0.0, |c| pole(r_out, c));
            let left = f_target - used;
            if !(left > 0.0) {
                continue;
            }
            let ce = match r_e {
                None => None,
                Some(r) => {
                    let least = 1.0 / (2.0 * PI * r * left);
                    match series.ceil(least) {
                        Some(c) if c <= C_MAX * (1.0 + 1e-9) => Some(c),
                        _ => {
                            needs = if needs > 0.0 { needs.min(least) } else { least };
                            continue;
                        }
                    }
                }
            };
            let total = cin.unwrap_or(0.0) + cout.unwrap_or(0.0) + ce.unwrap_or(0.0);
            let f = used + ce.map_or(0.0, |c| pole(r_e, c));
            if best.is_none_or(|b| total < b.1 * (1.0 - 1e-9)) {
                best = Some(([cin, cout, ce], total, f));
            }
        }
    }
    match best {
        // With no load given, COUT still blocks the DC toward whatever follows; it sets no pole
        // here, so it takes CIN's value (a member of the series like every part).
        Some(([cin, None, ce], _, f)) if stage.rl.is_none() => Ok(([cin, cin, ce], f)),
        Some((caps, _, f)) => Ok((caps, f)),
        None => Err(DesignError::LowCorner {
            f_low: req.f_low_or_default(),
            needs: if needs > 0.0 { needs } else { C_MAX * 10.0 },
        }),
    }
}
