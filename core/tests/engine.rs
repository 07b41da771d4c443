//! The operating-point engine against the outside world: physical constants, textbook worked
//! examples of voltage-divider bias, the closed-form Lambert-W solution of the bias loop, and
//! properties every correct solution has.

use biasjig_core::device::Profile;
use biasjig_core::estimate::estimate;
use biasjig_core::predict::predict;
use biasjig_core::solve::{solve, solve_from, Conditions, OperatingPoint, Region};
use biasjig_core::stage::{DeviceFault, Fault, Polarity, Resistor, Stage};
use biasjig_core::thermal_voltage;
use biasjig_testkit::fixtures as kit;
use proptest::prelude::*;

fn npn(vcc: f64, r1: f64, r2: f64, rc: f64, re1: f64, re2: f64) -> Stage {
    kit::npn(vcc, [r1, r2, rc, re1, re2])
}

fn profile(beta: f64, vbe_1ma: f64) -> Profile {
    kit::fixed_profile(beta, vbe_1ma)
}

fn close(a: f64, b: f64, rel: f64, abs: f64) -> bool {
    (a - b).abs() <= abs.max(rel * b.abs())
}

#[test]
fn thermal_voltage_from_exact_constants() {
    // SI Brochure, 9th edition (BIPM 2019): k = 1.380 649e-23 J/K and e = 1.602 176 634e-19 C
    // exactly, so kT/q at 298.15 K is 25.6926 mV (to the digits shown).
    let vt = thermal_voltage(25.0);
    assert!((vt - 0.025_692_6).abs() < 5e-8, "{vt}");
    // Common practice: about 26 mV at room temperature.
    assert!((0.0255..0.0260).contains(&vt));
}

/// A textbook example: inputs, the book's approximate (stiff divider) figures and its exact
/// (Thévenin, with base current) figures.
struct Book {
    source: &'static str,
    vcc: f64,
    r1: f64,
    r2: f64,
    rc: f64,
    re: f64,
    beta: f64,
    approx_vb: f64,
    approx_ve: f64,
    approx_ic: f64,
    exact_ic: Option<f64>,
    exact_vce: Option<f64>,
}

const BOOKS: [Book; 3] = [
    Book {
        // Boylestad & Nashelsky, Electronic Devices and Circuit Theory, 11th ed., Examples 4.7
        // (exact analysis) and 4.8 (approximate analysis), from memory.
        source: "Boylestad & Nashelsky 11th ed. Ex. 4.7/4.8",
        vcc: 22.0,
        r1: 39e3,
        r2: 3.9e3,
        rc: 10e3,
        re: 1.5e3,
        beta: 140.0,
        approx_vb: 2.0,
        approx_ve: 1.3,
        approx_ic: 0.867e-3,
        exact_ic: Some(0.85e-3),
        exact_vce: Some(12.22),
    },
    Book {
        // Boylestad & Nashelsky, Electronic Devices and Circuit Theory, 11th ed., Example 4.10
        // (a divider that is not stiff: beta·RE < 10·R2), from memory.
        source: "Boylestad & Nashelsky 11th ed. Ex. 4.10",
        vcc: 18.0,
        r1: 82e3,
        r2: 22e3,
        rc: 5.6e3,
        re: 1.2e3,
        beta: 50.0,
        approx_vb: 3.81,
        approx_ve: 3.11,
        approx_ic: 2.59e-3,
        exact_ic: Some(1.98e-3),
        exact_vce: Some(4.54),
    },
    Book {
        // Floyd, Electronic Devices (conventional current version), 9th ed., the
        // voltage-divider bias example of chapter 5 with VCC = 10 V, from memory: VB = 3.59 V,
        // VE = 2.89 V, IE = 5.16 mA with the stiff-divider approximation.
        source: "Floyd, Electronic Devices 9th ed., ch. 5 voltage-divider example",
        vcc: 10.0,
        r1: 10e3,
        r2: 5.6e3,
        rc: 1e3,
        re: 560.0,
        beta: 100.0,
        approx_vb: 3.59,
        approx_ve: 2.89,
        approx_ic: 5.16e-3,
        exact_ic: None,
        exact_vce: None,
    },
];

#[test]
fn textbook_voltage_divider_examples() {
    for b in &BOOKS {
        let stage = npn(b.vcc, b.r1, b.r2, b.rc, 0.0, b.re);
        // The books take VBE = 0.7 V; our profile gives 0.7 V at 1 mA, and the exact solve then
        // moves VBE by VT·ln(IC/1 mA), a few millivolts at these currents.
        let p = profile(b.beta, 0.7);
        let est = estimate(&stage, &p);
        assert!(
            close(est.vb, b.approx_vb, 0.005, 0.005),
            "{}: VB {}",
            b.source,
            est.vb
        );
        assert!(
            close(est.ve, b.approx_ve, 0.005, 0.005),
            "{}: VE {}",
            b.source,
            est.ve
        );
        assert!(
            close(est.ic, b.approx_ic, 0.005, 1e-6),
            "{}: IC {}",
            b.source,
            est.ic
        );
        let op = solve(&stage, &p, Conditions::typical(&p)).unwrap();
        assert_eq!(op.region, Region::Active, "{}", b.source);
        assert!((op.vbe - 0.7).abs() < 0.05, "{}: VBE {}", b.source, op.vbe);
        if let Some(ic) = b.exact_ic {
            // The book's exact analysis keeps VBE at 0.7 V: within 2 % of IC.
            assert!(
                close(op.ic, ic, 0.02, 0.0),
                "{}: IC {} vs {}",
                b.source,
                op.ic,
                ic
            );
        }
        if let Some(vce) = b.exact_vce {
            // The book also takes IC = IE for VCE: within 0.1 V.
            assert!(
                (op.vce - vce).abs() < 0.1,
                "{}: VCE {} vs {}",
                b.source,
                op.vce,
                vce
            );
        }
        // The exact solve always sits below the stiff-divider figure: base current loads the
        // divider (common practice).
        assert!(op.vb < est.vb, "{}", b.source);
    }
}

#[test]
fn bias_loop_matches_lambert_w_closed_form() {
    // A diode with series resistance has the closed form I = (VT/R)·W((IS'·R/VT)·exp(V/VT))
    // (Lambert W function, principal branch; e.g. Banwell & Jayakumar, Electronics Letters 36,
    // 2000, from memory). In forward-active operation the base loop of the stage is exactly such
    // a diode: VTH = VBE + IE·(RE + RTH/(hFE+1)), IE = IS·(1 + 1/hFE)·exp(VBE/VT).
    let cases = [
        (12.0, 47e3, 10e3, 2.2e3, 1e3, 150.0, 25.0),
        (5.0, 22e3, 6.8e3, 1e3, 330.0, 80.0, -20.0),
        (24.0, 150e3, 12e3, 10e3, 2.7e3, 300.0, 85.0),
        (9.0, 100e3, 47e3, 3.3e3, 4.7e3, 40.0, 60.0),
    ];
    for (vcc, r1, r2, rc, re, beta, temp) in cases {
        let stage = npn(vcc, r1, r2, rc, 0.0, re);
        let p = Profile {
            beta_tc: 0.0,
            ..profile(beta, 0.66)
        };
        let op = solve(&stage, &p, Conditions::typical(&p).at(temp)).unwrap();
        assert_eq!(op.region, Region::Active);
        let vt = thermal_voltage(temp);
        let is = p.is_at(temp);
        let vth = vcc * r2 / (r1 + r2);
        let rth = r1 * r2 / (r1 + r2);
        let req = re + rth / (beta + 1.0);
        let is_e = is * (1.0 + 1.0 / beta);
        // With VBC far below zero the collector junction leaks IS/βR out of the base; writing
        // J = IE + IS/β, IB = J/(hFE+1) − K and VBE = VT·ln(J/IS') puts the loop in the form above.
        let k = is / beta + is / p.beta_rev - is / (beta * (beta + 1.0));
        let vth_j = vth + k * rth + is / beta * req;
        let arg = is_e * req / vt * (vth_j / vt).exp();
        let ie = vt / req * lambert_w::lambert_w0(arg) - is / beta;
        assert!(
            close(op.ie, ie, 1e-8, 0.0),
            "IE {} vs closed form {}",
            op.ie,
            ie
        );
    }
}

#[test]
fn every_fault_solves_to_finite_node_voltages() {
    let stage = npn(15.0, 68e3, 15e3, 4.7e3, 220.0, 1.5e3);
    let p = profile(180.0, 0.65);
    for f in DeviceFault::ALL {
        let cond = Conditions {
            fault: Some(f),
            ..Conditions::typical(&p)
        };
        let op = solve(&stage, &p, cond).unwrap();
        assert!(
            op.vb.is_finite() && op.ve.is_finite() && op.vc.is_finite(),
            "{f:?}"
        );
    }
    for r in Resistor::ALL {
        for fault in [
            Fault::Open(r),
            Fault::Short(r),
            Fault::Value(r, stage.resistor(r) * 10.0),
        ] {
            let op = solve(&stage.with_fault(fault), &p, Conditions::typical(&p)).unwrap();
            assert!(
                op.vb.is_finite() && op.ve.is_finite() && op.vc.is_finite(),
                "{fault:?}"
            );
        }
    }
}

#[test]
fn fault_signatures_are_physical() {
    let stage = npn(12.0, 47e3, 10e3, 3.3e3, 0.0, 1e3);
    let p = profile(200.0, 0.65);
    let run = |fault: Option<DeviceFault>, f: Option<Fault>| {
        let s = f.map_or(stage, |f| stage.with_fault(f));
        solve(
            &s,
            &p,
            Conditions {
                fault,
                ..Conditions::typical(&p)
            },
        )
        .unwrap()
    };
    // Emitter lead open: no current, the divider unloaded, the collector at the supply.
    let op = run(Some(DeviceFault::BeOpen), None);
    assert!(
        (op.vb - 12.0 * 10.0 / 57.0).abs() < 1e-3
            && op.ve.abs() < 1e-6
            && (op.vc - 12.0).abs() < 1e-6
    );
    // Collector-emitter short: VC = VE.
    let op = run(Some(DeviceFault::CeShort), None);
    assert!((op.vc - op.ve).abs() < 1e-3);
    // Base-emitter short: VB = VE, cut off.
    let op = run(Some(DeviceFault::BeShort), None);
    assert!((op.vb - op.ve).abs() < 1e-3 && (op.vc - 12.0).abs() < 1e-3);
    // RE2 open (the only emitter resistor): no emitter current, collector at the supply.
    let op = run(None, Some(Fault::Open(Resistor::Re2)));
    assert!((op.vc - 12.0).abs() < 1e-3);
    // R2 shorted: base at ground, cut off.
    let op = run(None, Some(Fault::Short(Resistor::R2)));
    assert!(op.vb.abs() < 1e-9 && op.region == Region::Cutoff);
    // Reversed: inverse-active with reverse hFE 1 draws far less collector current.
    let good = run(None, None);
    let op = run(Some(DeviceFault::Reversed), None);
    assert!(op.ic < 0.5 * good.ic);
}

#[test]
fn saturation_and_cutoff_are_recognised() {
    let p = profile(200.0, 0.65);
    // Huge RC: the collector bottoms out.
    let solved = |s: Stage| solve(&s, &p, Conditions::typical(&p)).unwrap();
    let op = solved(npn(12.0, 47e3, 10e3, 100e3, 0.0, 1e3));
    assert_eq!(op.region, Region::Saturation);
    assert!(op.vce < 0.15 && op.vce > 0.0, "{}", op.vce);
    // Base divider below VBE.
    let op = solved(npn(12.0, 470e3, 10e3, 3.3e3, 0.0, 1e3));
    assert_eq!(op.region, Region::Cutoff);
}

#[test]
fn prediction_of_a_loaded_stage() {
    // Gain of a stage with RE1 unbypassed: about -(RC‖RL)/(re + RE1) from the base, and the
    // source divider RS/(RS + Zin) in front (common practice).
    let mut stage = npn(12.0, 56e3, 12e3, 3.3e3, 180.0, 820.0);
    stage.rl = Some(15e3);
    stage.rs = 600.0;
    let p = profile(200.0, 0.65);
    let pr = predict(&stage, &p, Conditions::typical(&p)).unwrap();
    let m = pr.midband.unwrap();
    let re = pr.op.vt / pr.op.ie;
    let rcl = 3.3e3 * 15e3 / 18.3e3;
    let alpha = 200.0 / 201.0;
    let hand = -alpha * rcl / (re + 180.0);
    assert!(
        close(m.gain_stage, hand, 0.01, 0.0),
        "{} vs {}",
        m.gain_stage,
        hand
    );
    let rb = 56e3 * 12e3 / 68e3;
    let rin_base = 201.0 * (re + 180.0);
    let zin = rb * rin_base / (rb + rin_base);
    assert!(close(m.zin, zin, 0.01, 0.0), "{} vs {}", m.zin, zin);
    assert!(close(
        m.gain,
        m.gain_stage * m.zin / (m.zin + 600.0),
        1e-5,
        0.0
    ));
    assert!(close(m.zout, 3.3e3, 1e-3, 0.0));
}

fn kcl_residuals(s: &Stage, op: &OperatingPoint) -> [f64; 3] {
    let (r1, r2, rc, re) = (s.r1.value, s.r2.value, s.rc.value, s.re_total());
    match s.polarity {
        Polarity::Npn => [
            (s.vcc.value - op.vb) / r1 - op.vb / r2 - op.ib,
            (s.vcc.value - op.vc) / rc - op.ic,
            if re > 0.0 { op.ve / re - op.ie } else { 0.0 },
        ],
        Polarity::Pnp => [
            (s.vcc.value - op.vb) / r1 - op.vb / r2 + op.ib,
            op.vc / rc - op.ic,
            if re > 0.0 {
                (s.vcc.value - op.ve) / re - op.ie
            } else {
                0.0
            },
        ],
    }
}

prop_compose! {
    /// Any stage: supply 3 to 30 V; R1, R2 1 kΩ to 1 MΩ; RC 100 Ω to 100 kΩ; RE1 0 or 10 Ω to
    /// 2 kΩ, RE2 0 or 10 Ω to 10 kΩ; NPN or PNP.
    fn any_stage()(
        (vcc, r1, r2, rc) in (3.0f64..30.0, 1e3f64..1e6, 1e3f64..1e6, 100.0f64..100e3),
        (re1, re2) in (prop_oneof![Just(0.0), 10.0f64..2e3], prop_oneof![Just(0.0), 10.0f64..10e3]),
        pnp in any::<bool>(),
    ) -> Stage {
        let mut s = npn(vcc, r1, r2, rc, re1, re2);
        if pnp { s.polarity = Polarity::Pnp; }
        s
    }
}

prop_compose! {
    fn any_profile()(
        beta in 20.0f64..600.0,
        vbe in 0.55f64..0.78,
        beta_rev in 0.1f64..10.0,
        early in prop_oneof![Just(None), (20.0f64..500.0).prop_map(Some)],
    ) -> Profile {
        Profile { beta_rev, early, ..profile(beta, vbe) }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn solve_never_fails_and_kcl_holds(s in any_stage(), p in any_profile(), temp in -40.0f64..125.0) {
        let op = solve(&s, &p, Conditions::typical(&p).at(temp)).unwrap();
        let scale = s.vcc.value / s.r1.value.min(s.r2.value).min(s.rc.value) + op.ie.abs();
        for r in kcl_residuals(&s, &op) {
            prop_assert!(r.abs() <= 1e-9 * scale, "KCL residual {r} at scale {scale}");
        }
        for v in [op.vb, op.ve, op.vc] {
            prop_assert!(v.is_finite() && v > -1e-6 && v < s.vcc.value + 1e-6);
        }
        let vce = if s.polarity == Polarity::Npn { op.vce } else { -op.vce };
        match op.region {
            Region::Active => {
                prop_assert!(vce > 0.05, "active with VCE {vce}");
                prop_assert!(op.ic >= 0.9 * op.beta * op.ib);
            }
            Region::Saturation => prop_assert!(vce < 0.4, "saturated with VCE {vce}"),
            Region::Cutoff => prop_assert!(op.ic < 1e-3 * s.vcc.value / (s.rc.value + s.re_total()) + 1e-9),
        }
    }

    #[test]
    fn any_stage_with_any_fault_solves_to_finite_voltages(s in any_stage(), p in any_profile(), temp in -40.0f64..125.0, k in 0usize..22) {
        let faults: Vec<(Option<DeviceFault>, Option<Fault>)> = DeviceFault::ALL.iter()
            .map(|f| (Some(*f), None))
            .chain(Resistor::ALL.iter().flat_map(|r| [
                (None, Some(Fault::Open(*r))),
                (None, Some(Fault::Short(*r))),
                (None, Some(Fault::Value(*r, s.resistor(*r) * 10.0 + 1.0))),
            ]))
            .collect();
        let (df, rf) = faults[k % faults.len()];
        let stage = rf.map_or(s, |f| s.with_fault(f));
        let op = solve(&stage, &p, Conditions { fault: df, ..Conditions::typical(&p).at(temp) }).unwrap();
        prop_assert!(op.vb.is_finite() && op.ve.is_finite() && op.vc.is_finite() && op.ic.is_finite());
    }

    #[test]
    fn raising_r2_never_lowers_vb(s in any_stage(), p in any_profile(), k in 1.0f64..3.0) {
        let mut s = s;
        s.polarity = Polarity::Npn;
        let a = solve(&s, &p, Conditions::typical(&p)).unwrap();
        let mut t = s;
        t.r2.value *= k;
        let b = solve(&t, &p, Conditions::typical(&p)).unwrap();
        prop_assert!(b.vb >= a.vb - 1e-9, "{} then {}", a.vb, b.vb);
    }

    #[test]
    fn pnp_mirrors_npn(s in any_stage(), p in any_profile(), temp in -20.0f64..85.0) {
        let mut n = s;
        n.polarity = Polarity::Npn;
        let mut m = s;
        m.polarity = Polarity::Pnp;
        // Mirrored: the divider leg on the emitter side swaps places.
        m.r1 = s.r2;
        m.r2 = s.r1;
        let a = solve(&n, &p, Conditions::typical(&p).at(temp)).unwrap();
        let b = solve(&m, &p, Conditions::typical(&p).at(temp)).unwrap();
        let vcc = s.vcc.value;
        prop_assert!((b.vb - (vcc - a.vb)).abs() < 1e-9);
        prop_assert!((b.ve - (vcc - a.ve)).abs() < 1e-9);
        prop_assert!((b.vc - (vcc - a.vc)).abs() < 1e-9);
        prop_assert!((b.vbe + a.vbe).abs() < 1e-9 && (b.vce + a.vce).abs() < 1e-9);
        prop_assert!((b.ic - a.ic).abs() <= 1e-12 * a.ic.abs().max(1e-9));
        prop_assert_eq!(a.region, b.region);
    }
}

/// A warm-started solve (from the solution of a neighbouring problem) reaches the same operating
/// point as a cold one within the convergence criterion, for every fault arrangement and for
/// PNP too; where the hand estimate is a poor start (saturation, a floating terminal, a
/// transistor fault) it needs far fewer Newton iterations.
#[test]
fn warm_start_gives_the_same_point_in_fewer_iterations() {
    let base = npn(15.0, 68e3, 15e3, 3.9e3, 220.0, 820.0);
    let pnp = Stage {
        polarity: Polarity::Pnp,
        ..npn(9.0, 12e3, 47e3, 2.7e3, 150.0, 820.0)
    };
    let p = profile(200.0, 0.66);
    let mut cases: Vec<(Stage, Option<DeviceFault>)> = Vec::new();
    for s in [base, pnp] {
        cases.push((s, None));
        for r in Resistor::ALL {
            let v = s.resistor(r);
            for f in [
                Fault::Open(r),
                Fault::Short(r),
                Fault::Value(r, v * 10.0),
                Fault::Value(r, v / 10.0),
            ] {
                cases.push((s.with_fault(f), None));
            }
        }
        for d in DeviceFault::ALL {
            cases.push((s, Some(d)));
        }
    }
    let (mut cold_iters, mut warm_iters) = (0u32, 0u32);
    for (s, fault) in cases {
        let cond = |beta: f64, temp_c: f64| Conditions {
            temp_c,
            beta_25: beta,
            fault,
            loads: Default::default(),
        };
        // Neighbours: hFE 10 % higher, 10 °C warmer, R2 and RC 5 % higher.
        let mut tweaked = s;
        tweaked.r2.value *= 1.05;
        tweaked.rc.value *= 1.05;
        let neighbours = [
            (s, cond(220.0, 25.0)),
            (s, cond(200.0, 35.0)),
            (tweaked, cond(200.0, 25.0)),
        ];
        let cold = solve(&s, &p, cond(200.0, 25.0)).expect("cold solve");
        for (ns, nc) in neighbours {
            let (_, start) = solve_from(&ns, &p, nc, None).expect("neighbour");
            let (warm, _) = solve_from(&s, &p, cond(200.0, 25.0), Some(&start)).expect("warm");
            // Both end within the criterion (a Newton step below 1 µV) of the same root; the
            // node voltages then agree to a microvolt even where a 0.1 mΩ short inside the
            // transistor multiplies a junction's last error by its conductance.
            for (a, b) in [(warm.vb, cold.vb), (warm.ve, cold.ve), (warm.vc, cold.vc)] {
                assert!((a - b).abs() < 1e-6, "{s:?} {fault:?}: {a} vs {b}");
            }
            assert!(
                close(warm.ic, cold.ic, 1e-6, 1e-12),
                "{fault:?}: {warm:?} {cold:?}"
            );
            assert_eq!(warm.region, cold.region);
            cold_iters += u32::from(cold.iterations);
            warm_iters += u32::from(warm.iterations);
        }
    }
    println!("Newton iterations: warm {warm_iters}, cold {cold_iters}");
    assert!(
        2 * warm_iters < cold_iters,
        "warm {warm_iters} against cold {cold_iters} Newton iterations"
    );
}
