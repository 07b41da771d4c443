//! Designs that hold over the spread: every requirement re-checked here with the exact engine at
//! every corner of the resistor tolerance, hFE min..max and the ambient range (the test's own
//! corner walk, not the design's), refusals that name the requirement, and the first pass beside
//! two published hand procedures.

mod hand_method;

use biasjig_core::design::{
    design, first_pass, held, Check, DesignError, Hold, Requirement, MAX_CANDIDATES,
};
use biasjig_core::device::Profile;
use biasjig_core::stage::{Polarity, Stage};
use biasjig_testkit::corners::corners as kit_corners;
use biasjig_testkit::corners::{design_with_more_budget, names_a_requirement};
use biasjig_testkit::fixtures::{demo_profile, npn};
use hand_method::classic;
use proptest::prelude::*;

/// What a stage does over every corner, by the test's own walk: (least |gain|, largest |gain|,
/// least swing, largest IC, forward active everywhere).
fn corners(req: &Requirement, p: &Profile, stage: &Stage) -> (f64, f64, f64, f64, bool) {
    let c = kit_corners(req, p, stage);
    (c.gain_min, c.gain_max, c.swing_min, c.ic_max, c.active)
}

fn profile() -> Profile {
    // A generic small-signal transistor (invented): hFE 100 to 300.
    demo_profile()
}

/// Random requirements in the range the product is for: NPN and PNP, 9 to 24 V, gains 6 to 30,
/// tolerances 10 to 15 %, a load, a budget, an ambient range, sometimes a swing.
fn requirement() -> impl Strategy<Value = Requirement> {
    (
        any::<bool>(),
        9.0..24.0f64,
        6.0..30.0f64,
        10.0..15.0f64,
        10e3..100e3f64,
        0.0..1e3f64,
        0.3e-3..5e-3f64,
        prop::option::weighted(0.5, 0.1..0.3f64),
        -20.0..25.0f64,
        25.0..60.0f64,
    )
        .prop_map(|(pnp, vcc, gain, tol, rl, rs, ic, sw, tmin, tmax)| {
            let mut r = Requirement::new(vcc, gain);
            r.polarity = if pnp { Polarity::Pnp } else { Polarity::Npn };
            r.hold = Hold::WorstCase;
            r.gain_tol = tol / 100.0;
            r.rl = Some(rl);
            r.rs = rs;
            r.ic_max = ic;
            r.swing_pp = sw.map_or(0.0, |f| f * vcc);
            r.temp_min = tmin;
            r.temp_max = tmax;
            r
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    /// The best candidate holds every requirement at every corner, by the test's own corner
    /// walk with the engine; a refusal names a requirement.
    #[test]
    fn the_best_candidate_holds_at_every_corner(req in requirement()) {
        let p = profile();
        match design(&req, &p) {
            Ok(c) => {
                let best = &c[0];
                let (g_lo, g_hi, sw, ic, active) = corners(&req, &p, &best.stage);
                prop_assert!(active, "leaves the active region at a corner");
                prop_assert!(g_lo >= req.gain * (1.0 - req.gain_tol) * (1.0 - 1e-9), "{g_lo}");
                prop_assert!(g_hi <= req.gain * (1.0 + req.gain_tol) * (1.0 + 1e-9), "{g_hi}");
                prop_assert!(sw >= req.swing_pp * (1.0 - 1e-9), "{sw} < {}", req.swing_pp);
                prop_assert!(ic <= req.ic_max * (1.0 + 1e-9), "{ic}");
                // The design's own account agrees with the walk.
                let h = best.held.unwrap();
                prop_assert!((h.gain_min - g_lo).abs() <= 1e-9 * g_lo);
                prop_assert!((h.ic_max - ic).abs() <= 1e-9 * ic);
            }
            Err(e) => prop_assert!(names_a_requirement(&e.to_string()), "{}", e),
        }
    }

    /// A larger budget never turns a designable requirement into a refusal, and what it designs
    /// still holds every requirement at every corner (the test's own corner walk).
    ///
    /// Not asserted: that the best candidate's score (worst case and margins together) never
    /// rises with the budget. The search aims its currents at the budget, so it does not
    /// guarantee that; a counterexample found by this test (NPN 12.45 V, gain 9.39 into 54.1 kΩ
    /// from 769 Ω, swing 2.45 V, 300 µA, ±13.6 %) scores 2.66 at 300 µA and 2.75 at 3.7 times
    /// the budget, both held at every corner.
    #[test]
    fn more_budget_keeps_a_requirement_designable_and_held(req in requirement(), more in 1.0..4.0f64) {
        let p = profile();
        if let Some((_, wider, b)) = design_with_more_budget(&req, &p, more) {
            prop_assert!(b.is_ok(), "{:?}", b);
            let b = b.unwrap();
            let (g_lo, g_hi, sw, ic, active) = corners(&wider, &p, &b[0].stage);
            prop_assert!(active, "leaves the active region at a corner");
            prop_assert!(g_lo >= wider.gain * (1.0 - wider.gain_tol) * (1.0 - 1e-9), "{g_lo}");
            prop_assert!(g_hi <= wider.gain * (1.0 + wider.gain_tol) * (1.0 + 1e-9), "{g_hi}");
            prop_assert!(sw >= wider.swing_pp * (1.0 - 1e-9), "{sw}");
            prop_assert!(ic <= wider.ic_max * (1.0 + 1e-9), "{ic}");
        }
    }
}

#[test]
fn supply_24v_gain_10_at_300ua_into_47k_is_designed_and_held() {
    // Refused in the first round ("gain 10 into 47 kΩ needs IC >= 328 µA") although a hand
    // design builds it at about 250 µA: the first pass now stiffens a divider whose R1 would
    // pass 1 MΩ instead of giving up at that current.
    let mut req = Requirement::new(24.0, 10.0);
    req.rl = Some(47e3);
    req.ic_max = 300e-6;
    req.gain_tol = 0.10;
    let p = Profile::default();
    for hold in [Hold::Nominal, Hold::WorstCase] {
        req.hold = hold;
        let c = design(&req, &p).unwrap_or_else(|e| panic!("{hold:?}: {e}"));
        let best = &c[0];
        assert!(best.op.ic <= 300e-6);
        assert!((best.gain.abs() / 10.0 - 1.0).abs() <= 0.10);
        let (g_lo, g_hi, _, ic, active) = corners(&req, &p, &best.stage);
        if hold == Hold::WorstCase {
            assert!(active && ic <= 300e-6 && g_lo >= 9.0 && g_hi <= 11.0);
        }
    }
}

#[test]
fn gain_within_one_percent_with_5_percent_parts_is_refused_naming_the_gain() {
    let mut req = Requirement::new(12.0, 10.0);
    req.rl = Some(22e3);
    req.hold = Hold::WorstCase;
    req.gain_tol = 0.01;
    let e = design(&req, &profile()).unwrap_err();
    match e {
        DesignError::NotHeld {
            check: Check::Gain,
            gain_range: (lo, hi),
            ..
        } => {
            // The figures are the engine's at the corners of a real part set: far outside ±1 %.
            assert!(lo < 9.9 && hi > 10.1, "{lo} {hi}");
        }
        other => panic!("{other}"),
    }
    let msg = e.to_string();
    assert!(
        msg.starts_with("gain:") && msg.contains("gain_tol"),
        "{msg}"
    );
}

#[test]
fn nominal_hold_is_the_first_rounds_design() {
    // With the nominal hold the candidates carry no held figures and are the first round's
    // search; the held figures are still available for the report.
    let mut req = Requirement::new(12.0, 15.0);
    req.rl = Some(15e3);
    req.rs = 600.0;
    req.temp_min = -10.0;
    req.temp_max = 55.0;
    let p = profile();
    let c = design(&req, &p).unwrap();
    assert!(c.len() <= MAX_CANDIDATES && c[0].held.is_none());
    let h = held(&req, &p, &c[0].stage);
    assert!(h.corners >= 128);
    assert!(h.gain_min < c[0].gain.abs() && h.gain_max > c[0].gain.abs());
}

/// The first pass at the textbook's own conditions: VCC, IC, a fixed hFE, VBE at the design
/// current; no load, no source, 25 °C.
fn textbook(vcc: f64, ic: f64, beta: f64, vbe: f64, gain: f64) -> (Requirement, Profile) {
    let vt = biasjig_core::thermal_voltage(25.0);
    let p = Profile {
        beta_min: beta,
        beta_typ: beta,
        beta_max: beta,
        is_25: ic / (vbe / vt).exp(),
        ..Profile::default()
    };
    let mut req = Requirement::new(vcc, gain);
    req.ic_max = 2.0 * ic;
    (req, p)
}

#[test]
fn first_pass_reproduces_boylestad_divider_bias_design() {
    // Boylestad & Nashelsky, Electronic Devices and Circuit Theory, 11th ed., section 4.x
    // "Design operations", voltage-divider bias design example (from memory): VCC = 20 V,
    // ICQ = 10 mA, beta = 80, VE = VCC/10 = 2 V, VBE = 0.7 V; RE = 200 Ω, VB = 2.7 V, and the
    // divider sized from beta·RE/10 = 1.6 kΩ.
    let (req, p) = textbook(20.0, 10e-3, 80.0, 0.7, 5.0);
    let f = first_pass(&req, &p, 10e-3, false).unwrap();
    let alpha = 80.0 / 81.0;
    // The same emitter voltage and emitter resistance (VE/IE, so RE = 200 Ω·α).
    assert!((f.ve - 2.0).abs() < 1e-9, "{}", f.ve);
    assert!(((f.re1 + f.re2) / (200.0 * alpha) - 1.0).abs() < 1e-9);
    // The same divider stiffness, applied to R1 ‖ R2 (the book applies it to R2 alone).
    let rth = f.r1 * f.r2 / (f.r1 + f.r2);
    assert!((rth / (0.1 * 80.0 * (f.re1 + f.re2)) - 1.0).abs() < 1e-9);
    // Differs as expected: VBB carries the base current through R1 ‖ R2 (10 mA/80 × 1.58 kΩ,
    // about 0.2 V above the book's 2.7 V), so the exact engine lands on 10 mA.
    assert!((f.vbb - 2.7 - 10e-3 / 80.0 * rth).abs() < 0.01, "{}", f.vbb);
}

#[test]
fn first_pass_reproduces_malvino_emitter_voltage_rule_and_held_design_is_stiffer() {
    // Malvino & Bates, Electronic Principles, 8th ed., voltage-divider bias design guidelines
    // (from memory): VE = 0.1·VCC, RE = VE/IE, and a stiff divider R1 ‖ R2 <= 0.1·beta·RE.
    // With VCC = 10 V, IC = 10 mA, beta = 100: VE = 1 V, RE = 100 Ω, R1 ‖ R2 <= 1 kΩ.
    let (mut req, mut p) = textbook(10.0, 10e-3, 100.0, 0.7, 20.0);
    let f = first_pass(&req, &p, 10e-3, false).unwrap();
    assert!((f.ve - 1.0).abs() < 1e-9);
    let re = f.re1 + f.re2;
    assert!((re / (100.0 * 100.0 / 101.0) - 1.0).abs() < 1e-9);
    let rth = f.r1 * f.r2 / (f.r1 + f.r2);
    assert!(rth <= 0.1 * 100.0 * re * (1.0 + 1e-9));
    // The held design differs from the hand procedure as expected. Over hFE 50..300 (a real
    // part's spread), 0 to 50 °C and 5 % resistors, the guideline's own design (R2 = 0.1·beta·RE
    // at the typical beta, base current ignored) runs from 6.6 mA to 12.1 mA: over a 12 mA
    // budget at one corner. The held design keeps IC within the budget at every corner, with a
    // narrower IC spread.
    p.beta_min = 50.0;
    p.beta_max = 300.0;
    req.temp_min = 0.0;
    req.temp_max = 50.0;
    req.gain_tol = 0.15;
    req.ic_max = 12e-3;
    let book = classic(10.0, 10e-3, 5.0, 0.1, 0.7, 100.0, 0.1);
    let book_stage = npn(10.0, [book.r1, book.r2, book.rc, 0.0, book.re]);
    let by_book = held(&req, &p, &book_stage);
    assert!(by_book.ic_max > 12e-3, "{by_book:?}");
    req.hold = Hold::WorstCase;
    let c = design(&req, &p).unwrap_or_else(|e| panic!("{e}"));
    let h = c[0].held.unwrap();
    assert!(h.ic_max <= 12e-3 && h.active, "{h:?}");
    assert!(
        h.ic_max / h.ic_min < by_book.ic_max / by_book.ic_min,
        "{h:?} {by_book:?}"
    );
}
