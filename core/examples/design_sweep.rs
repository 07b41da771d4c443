//! A sweep of requirements of our own through the worst-case design, each designed part set
//! re-checked by its own corner walk (every corner of ±tol resistors, hFE min/max and the
//! ambient range, solved with the engine): how many are designed, how many refused and why,
//! and how many designed ones hold at every corner.
//!
//! `cargo run --release -p biasjig-core --example design_sweep`

use biasjig_core::design::{design, DesignError, Hold, Requirement};
use biasjig_core::device::Profile;
use biasjig_core::stage::{Polarity, Stage};
use biasjig_testkit::corners::corners;
use biasjig_testkit::fixtures::demo_profile;

/// Whether `stage` holds `req` at every corner, by the corner walk of the tests.
fn holds(req: &Requirement, p: &Profile, stage: &Stage) -> bool {
    corners(req, p, stage).hold(req)
}

fn main() {
    let p = demo_profile();
    let (mut n, mut designed, mut held_ok) = (0, 0, 0);
    let mut refused: std::collections::BTreeMap<String, u32> = Default::default();
    let mut by_tol: std::collections::BTreeMap<u32, (u32, u32)> = Default::default();
    for pnp in [false, true] {
        for vcc in [9.0, 12.0, 15.0, 24.0] {
            for gain in [6.0, 10.0, 15.0, 20.0, 30.0] {
                for tol in [0.10, 0.12, 0.15] {
                    for rl in [10e3, 47e3] {
                        for swing in [0.0, 0.2] {
                            let mut r = Requirement::new(vcc, gain);
                            r.polarity = if pnp { Polarity::Pnp } else { Polarity::Npn };
                            r.hold = Hold::WorstCase;
                            r.gain_tol = tol;
                            r.rl = Some(rl);
                            r.rs = 600.0;
                            r.ic_max = 2e-3;
                            r.swing_pp = swing * vcc;
                            r.temp_min = -10.0;
                            r.temp_max = 55.0;
                            n += 1;
                            let t = by_tol.entry((tol * 100.0).round() as u32).or_default();
                            t.0 += 1;
                            match design(&r, &p) {
                                Ok(c) => {
                                    t.1 += 1;
                                    designed += 1;
                                    if holds(&r, &p, &c[0].stage) {
                                        held_ok += 1;
                                    } else {
                                        println!("DOES NOT HOLD: {r:?}");
                                    }
                                }
                                Err(e) => {
                                    if let DesignError::NotHeld {
                                        gain_range: (lo, hi),
                                        ..
                                    } = e
                                    {
                                        if std::env::var("SWEEP_VERBOSE").is_ok() {
                                            println!("refused {pnp} {vcc} {gain} {tol} {rl} {swing}: {:.1} {:.1} % ({e})", (lo / gain - 1.0) * 100.0, (hi / gain - 1.0) * 100.0);
                                        }
                                    }
                                    let key = match e {
                                        DesignError::NotHeld { check, .. } => {
                                            format!("not held: {}", check.name())
                                        }
                                        other => other
                                            .to_string()
                                            .split(':')
                                            .next()
                                            .unwrap_or("")
                                            .to_string(),
                                    };
                                    *refused.entry(key).or_default() += 1;
                                }
                            }
                        }
                    }
                }
            }
        }
    }
    println!("requirements {n}: designed {designed} (best candidate holds at every corner by its own walk: {held_ok}), refused {}", n - designed);
    for (t, (all, ok)) in by_tol {
        println!("  gain tolerance ±{t} %: designed {ok} of {all}");
    }
    for (k, v) in refused {
        println!("  refused, {k}: {v}");
    }
}
