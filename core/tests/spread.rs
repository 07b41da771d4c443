//! Spread and limits: worst case against Monte Carlo, convergence, reproducibility, the law of
//! propagation of uncertainty, sensitivity shares, and the derived IC window (the other pass
//! windows: limits.rs).

use biasjig_core::device::Profile;
use biasjig_core::limits::{derived_ic, limits, Meter};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::{
    centre, monte_carlo, monte_carlo_observed, sensitivity, spread, variance_factor, worst_case,
    Distribution, Factor, McSettings, Method, MonteCarlo, Node, Requirement, Sample, SpreadError,
    Variation, WorstCase,
};
use biasjig_core::stage::{Part, Polarity, Resistor, Stage};
use proptest::prelude::*;

use biasjig_testkit::fixtures::{
    demo_profile, demo_stage, demo_variation as demo_var, npn, with_resistor_tol, with_signal,
};

const DC: [Node; 6] = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];

fn settings(runs: u32, seed: u64) -> McSettings {
    McSettings {
        runs,
        seed,
        ..McSettings::default()
    }
}

/// The demo's Monte Carlo (`runs` samples from `seed`) with `on_sample` called on each.
fn demo_observed(
    wc: &WorstCase,
    runs: u32,
    seed: u64,
    on_sample: impl FnMut(&Sample),
) -> MonteCarlo {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    monte_carlo_observed(&s, &p, &v, wc, &settings(runs, seed), |_, _| {}, on_sample).unwrap()
}

#[test]
fn worst_case_brackets_demo_monte_carlo_and_centre() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    assert!(wc.exhaustive);
    assert_eq!(wc.factors, 7);
    assert_eq!(wc.solves, 129);
    let c = centre(&s, &p, &v).unwrap();
    let mut outside = 0u32;
    let mc = demo_observed(&wc, 2000, 7, |smp| {
        for n in DC {
            if !wc.nodes.get(n).brackets(*smp.values.get(n), 1e-9, 1e-15) {
                outside += 1;
            }
        }
    });
    assert_eq!(outside, 0);
    assert_eq!(mc.failed, 0);
    for n in Node::ALL {
        let r = wc.nodes.get(n);
        assert!(r.brackets(*c.values.get(n), 0.0, 0.0), "{n:?}");
        assert!(r.min < r.max, "{n:?}");
    }
    // The histogram of every node holds every sample.
    for n in DC {
        let st = mc.nodes.get(n);
        assert_eq!(st.histogram.count(), 2000);
        assert_eq!(st.histogram.below + st.histogram.above, 0, "{n:?}");
    }
}

#[test]
fn vertex_method_finds_the_exhaustive_extremes() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let ex = worst_case(&s, &p, &v, Method::Exhaustive).unwrap();
    let vx = worst_case(&s, &p, &v, Method::Vertex).unwrap();
    assert!(!vx.exhaustive);
    for n in DC {
        let (a, b) = (ex.nodes.get(n), vx.nodes.get(n));
        let scale = a.max.abs().max(a.min.abs());
        assert!((a.min - b.min).abs() <= 1e-9 * scale, "{n:?} {a:?} {b:?}");
        assert!((a.max - b.max).abs() <= 1e-9 * scale, "{n:?} {a:?} {b:?}");
    }
    // The vertex method may never report wider than the truth (it only solves real corners).
    for n in Node::ALL {
        let (a, b) = (ex.nodes.get(n), vx.nodes.get(n));
        assert!(b.min >= a.min - 1e-12 && b.max <= a.max + 1e-12, "{n:?}");
    }
    // A budget below the corner count switches Auto to the vertex method.
    let auto = worst_case(&s, &p, &v, Method::Auto { max_corners: 64 }).unwrap();
    assert!(!auto.exhaustive);
}

#[test]
fn worst_case_matches_hand_corners_of_the_divider() {
    // Independent check with the solver itself: VB is highest with R1 low, R2 high, hFE high
    // (less base current), and the solve at exactly that corner must be the reported maximum
    // (to solver precision).
    let (s, p) = (demo_stage(), demo_profile());
    let v = Variation::at(25.0);
    let wc = worst_case(&s, &p, &v, Method::Exhaustive).unwrap();
    let mut hi = s;
    hi.r1.value *= 0.95;
    hi.r2.value *= 1.05;
    let high_beta = Conditions {
        beta_25: 300.0,
        ..Conditions::typical(&p)
    };
    let op = solve(&hi, &p, high_beta).unwrap();
    // RE high lowers IE and so IB: the maximum is at least this corner's VB.
    assert!(wc.nodes.vb.max >= op.vb - 1e-12);
    assert!(wc.nodes.vb.max <= op.vb * 1.01);
}

#[test]
fn monte_carlo_mean_converges_to_nominal_as_tolerances_shrink() {
    let p0 = demo_profile();
    let v = Variation::at(25.0);
    let mut last = f64::INFINITY;
    for tol in [0.05, 0.005, 0.0005] {
        let mut s = demo_stage();
        for r in Resistor::ALL {
            s.part_mut(r).tol = tol;
        }
        // hFE spread shrinks with the same ratio around the typical value.
        let rel = tol / 0.05;
        let p = Profile {
            beta_min: p0.beta_typ * (1.0 - 0.4 * rel),
            beta_max: p0.beta_typ * (1.0 + 0.4 * rel),
            ..p0
        };
        let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
        let mc = monte_carlo(&s, &p, &v, &wc, &settings(1000, 3), |_, _| {}).unwrap();
        let nom = solve(&s, &p, Conditions::typical(&p)).unwrap();
        let worst_rel = DC
            .iter()
            .map(|n| {
                let want = match n {
                    Node::Vb => nom.vb,
                    Node::Ve => nom.ve,
                    Node::Vc => nom.vc,
                    Node::Vbe => nom.vbe,
                    Node::Vce => nom.vce,
                    _ => nom.ic,
                };
                ((mc.nodes.get(*n).mean - want) / want).abs()
            })
            .fold(0.0, f64::max);
        // Within 3 % of nominal at 5 %, and shrinking with the tolerance.
        assert!(worst_rel < 0.03, "tol {tol}: {worst_rel}");
        assert!(worst_rel < last, "tol {tol}: {worst_rel} not below {last}");
        last = worst_rel;
    }
    assert!(last < 2e-4, "{last}");
}

#[test]
fn same_seed_same_numbers_other_seed_others() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let a = spread(&s, &p, &v, &settings(500, 42), |_, _| {}).unwrap();
    let b = spread(&s, &p, &v, &settings(500, 42), |_, _| {}).unwrap();
    let c = spread(&s, &p, &v, &settings(500, 43), |_, _| {}).unwrap();
    assert_eq!(a, b);
    for n in Node::ALL {
        assert_ne!(
            a.monte_carlo.nodes.get(n).mean,
            c.monte_carlo.nodes.get(n).mean,
            "{n:?}"
        );
    }
}

#[test]
fn seeded_run_matches_its_regression_pin() {
    // A regression pin: figures copied from our own output of one seeded run. A change of the
    // generator, the deviates or the solver on any platform shows here. (Regenerate deliberately only when the engine changes.)
    // The gain mean moved from -13.5634475313286 to -13.56344531549726 (1.6e-7) when the
    // midband gain became the closed form of the same network: the closed form is the exact
    // one (checked against a 50-digit solve in `signal`'s tests), the 6×6 elimination lost
    // about 1e-8 per sample to the 1 MS shorts.
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let mc = monte_carlo(&s, &p, &v, &wc, &settings(200, 2024), |_, _| {}).unwrap();
    let got = [
        mc.nodes.vb.mean,
        mc.nodes.vc.mean,
        mc.nodes.ic.std(),
        mc.nodes.vce.range.min,
        mc.nodes.gain.mean,
    ];
    let want = SNAPSHOT;
    for (g, w) in got.iter().zip(want) {
        assert!((g - w).abs() <= 1e-12 * w.abs(), "got {got:?}");
    }
}

const SNAPSHOT: [f64; 5] = [
    2.05263721476073,
    6.645967984578561,
    6.722686631438305e-5,
    4.313113467675024,
    -13.56344531549726,
];

#[test]
fn normal_deviates_are_reproducible_and_inside_the_tolerance() {
    let (s, p) = (demo_stage(), demo_profile());
    let v = Variation {
        distribution: Distribution::Normal { sigmas: 3.0 },
        ..Variation::at(25.0)
    };
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let a = monte_carlo(&s, &p, &v, &wc, &settings(800, 9), |_, _| {}).unwrap();
    let b = monte_carlo(&s, &p, &v, &wc, &settings(800, 9), |_, _| {}).unwrap();
    assert_eq!(a, b);
    for n in DC {
        let st = a.nodes.get(n);
        assert!(wc.nodes.get(n).brackets(st.range.min, 1e-9, 0.0));
        assert!(wc.nodes.get(n).brackets(st.range.max, 1e-9, 0.0));
    }
    // Normal parts at 3 sigma spread less than uniform parts within the same tolerance.
    let vu = Variation::at(25.0);
    let u = monte_carlo(&s, &p, &vu, &wc, &settings(800, 9), |_, _| {}).unwrap();
    assert!(a.nodes.vb.std() < u.nodes.vb.std());
}

/// A stage whose VB is close to linear in R1 and R2: hFE so high that the base current is
/// negligible, other parts exact.
fn divider_stage(tol: f64) -> (Stage, Profile) {
    let mut s = with_resistor_tol(npn(10.0, [33e3, 12e3, 3.3e3, 0.0, 1.5e3]), 0.0);
    s.r1.tol = tol;
    s.r2.tol = tol;
    let p = Profile {
        beta_min: 1e6,
        beta_typ: 1e6,
        beta_max: 1e6,
        ..Profile::default()
    };
    (s, p)
}

#[test]
fn std_follows_the_law_of_propagation_for_uniform_tolerances() {
    // GUM, JCGM 100:2008, 5.1.2 (law of propagation of uncertainty): u² = Σ (∂f/∂xᵢ·u(xᵢ))²;
    // 4.3.7: a quantity uniform within ±a has variance a²/3. For VB = VCC·R2/(R1+R2):
    // R1·∂VB/∂R1 = −VCC·R1·R2/(R1+R2)², R2·∂VB/∂R2 = +VCC·R1·R2/(R1+R2)²; each part's half-range
    // is t times that, so σ² = 2·(VCC·R1·R2/(R1+R2)²·t)²/3.
    let t = 0.01;
    let (s, p) = divider_stage(t);
    let v = Variation::at(25.0);
    let (r1, r2, vcc) = (s.r1.value, s.r2.value, s.vcc.value);
    let si = vcc * r1 * r2 / ((r1 + r2) * (r1 + r2));
    let sigma = (2.0 * (si * t) * (si * t) / 3.0).sqrt();
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let mc = monte_carlo(&s, &p, &v, &wc, &settings(20_000, 11), |_, _| {}).unwrap();
    let got = mc.nodes.vb.std();
    // 20 000 samples: the standard error of a standard deviation is about σ/√(2N), 0.5 %.
    assert!(
        ((got - sigma) / sigma).abs() < 0.03,
        "MC {got}, formula {sigma}"
    );
    // The sensitivity's propagated σ is the same formula from the solver's own effects.
    let sens = sensitivity(&s, &p, &v).unwrap();
    assert!(
        ((sens.std.vb - sigma) / sigma).abs() < 0.01,
        "{} vs {sigma}",
        sens.std.vb
    );
    // Two equal and opposite effects: R1 and R2 share VB's variance half and half.
    let shares = &sens.nodes.vb;
    assert!((shares[0].share - 0.5).abs() < 0.01 && (shares[1].share - 0.5).abs() < 0.01);
}

#[test]
fn truncated_normal_variance_factor() {
    // Truncated normal at ±k standard deviations (standard statistics, e.g. Johnson, Kotz and
    // Balakrishnan, Continuous Univariate Distributions, vol. 1, 2nd ed., ch. 13, from memory):
    // Var = σ²(1 − 2kφ(k)/(2Φ(k) − 1)); at k = 3 that is 0.9733·σ², so 0.9733/9 of t².
    let f = variance_factor(Distribution::Normal { sigmas: 3.0 });
    assert!((f - 0.973_33 / 9.0).abs() < 1e-4, "{f}");
    assert!((variance_factor(Distribution::Uniform) - 1.0 / 3.0).abs() < 1e-15);
    // The Monte Carlo agrees: VB of the divider stage with normal parts.
    let t = 0.01;
    let (s, p) = divider_stage(t);
    let v = Variation {
        distribution: Distribution::Normal { sigmas: 3.0 },
        ..Variation::at(25.0)
    };
    let sens = sensitivity(&s, &p, &v).unwrap();
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let mc = monte_carlo(&s, &p, &v, &wc, &settings(20_000, 5), |_, _| {}).unwrap();
    let got = mc.nodes.vb.std();
    assert!(
        ((got - sens.std.vb) / sens.std.vb).abs() < 0.03,
        "{got} vs {}",
        sens.std.vb
    );
}

#[test]
fn sensitivity_shares_sum_to_one_and_are_ranked() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let sens = sensitivity(&s, &p, &v).unwrap();
    for n in Node::ALL {
        let shares = sens.nodes.get(n);
        let sum: f64 = shares.iter().map(|x| x.share).sum();
        assert!((sum - 1.0).abs() < 1e-9, "{n:?} {sum}");
        assert!(shares.windows(2).all(|w| w[0].share >= w[1].share), "{n:?}");
    }
    // VB is set by the divider: R1 and R2 lead. IC of a stiff divider stage barely depends on hFE
    // while VBE's spread is the ambient's (about −2 mV/°C, common practice).
    let vb = &sens.nodes.vb;
    let top2 = [vb[0].factor, vb[1].factor];
    assert!(
        top2.contains(&Factor::Resistor(Resistor::R1))
            && top2.contains(&Factor::Resistor(Resistor::R2))
    );
    assert_eq!(sens.nodes.vbe[0].factor, Factor::Temp);
    // VBE's effect of the ambient: half of 65 °C at about −2 mV/°C.
    let d = sens.nodes.vbe[0].effect;
    assert!((-0.085..-0.05).contains(&d), "{d}");
    // The supply has no tolerance here: no share.
    assert!(sens
        .nodes
        .vb
        .iter()
        .all(|x| x.factor != Factor::Supply || x.share == 0.0));
}

#[test]
fn progress_reports_to_the_end() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let mut calls = Vec::new();
    let _ = monte_carlo(&s, &p, &v, &wc, &settings(600, 1), |d, t| {
        calls.push((d, t))
    })
    .unwrap();
    assert_eq!(calls, vec![(256, 600), (512, 600), (600, 600)]);
}

#[test]
fn yield_against_a_requirement() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let loose = McSettings {
        requirement: Requirement {
            gain_min: Some(1.0),
            ..Requirement::default()
        },
        ..settings(400, 1)
    };
    let mc = monte_carlo(&s, &p, &v, &wc, &loose, |_, _| {}).unwrap();
    assert_eq!(mc.passed, 400);
    assert!((mc.yield_fraction() - 1.0).abs() < 1e-15);
    // A gain window around the median passes about half.
    let median = mc.nodes.gain.quantile(0.5).unwrap().abs();
    let half = McSettings {
        requirement: Requirement {
            gain_min: Some(median),
            ..Requirement::default()
        },
        ..settings(400, 1)
    };
    let mc2 = monte_carlo(&s, &p, &v, &wc, &half, |_, _| {}).unwrap();
    assert!(
        (0.35..0.65).contains(&mc2.yield_fraction()),
        "{}",
        mc2.yield_fraction()
    );
    let none = McSettings {
        requirement: Requirement {
            ic_max: Some(wc.nodes.ic.min * 0.5),
            ..Requirement::default()
        },
        ..settings(100, 1)
    };
    assert_eq!(
        monte_carlo(&s, &p, &v, &wc, &none, |_, _| {})
            .unwrap()
            .passed,
        0
    );
}

#[test]
fn quantiles_from_the_histogram() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let mc = monte_carlo(&s, &p, &v, &wc, &settings(4000, 17), |_, _| {}).unwrap();
    let st = &mc.nodes.vc;
    let (q05, q50, q95) = (
        st.quantile(0.05).unwrap(),
        st.quantile(0.5).unwrap(),
        st.quantile(0.95).unwrap(),
    );
    assert!(st.range.min <= q05 && q05 < q50 && q50 < q95 && q95 <= st.range.max);
    // Within two bin widths of the mean for a nearly symmetric node.
    assert!((q50 - st.mean).abs() < 2.0 * st.histogram.width() + 0.1 * st.std());
}

#[test]
fn bad_variation_is_refused() {
    let (s, p) = (demo_stage(), demo_profile());
    let bad = Variation::between(40.0, 10.0);
    assert_eq!(
        worst_case(&s, &p, &bad, Method::default()).unwrap_err(),
        SpreadError::TempRange
    );
    let bad = Variation {
        distribution: Distribution::Normal { sigmas: 0.0 },
        ..Variation::at(25.0)
    };
    assert_eq!(sensitivity(&s, &p, &bad).unwrap_err(), SpreadError::Sigmas);
    let mut st = s;
    st.r1.value = -1.0;
    assert!(matches!(
        centre(&st, &p, &Variation::at(25.0)),
        Err(SpreadError::Stage(_))
    ));
}

#[test]
fn derived_ic_window_holds_every_board_at_that_supply() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let lim = limits(&s, &p, &v, &Meter::IDEAL, 12.0).unwrap();
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let mut outside = 0;
    let _ = demo_observed(&wc, 1000, 4, |smp| {
        let ic = derived_ic(&s, 12.0, smp.values.vc);
        if !(ic >= lim.ic.low - 1e-15 && ic <= lim.ic.high + 1e-15) {
            outside += 1;
        }
        if !(lim.vb.contains(smp.values.vb) && lim.vce.contains(smp.values.vce)) {
            outside += 1;
        }
    });
    assert_eq!(outside, 0);
    // RC's tolerance is inside the derived IC window: wider than the true IC's own spread.
    assert!(lim.ic.width() > wc.nodes.ic.max - wc.nodes.ic.min);
    // Derived IC by hand: (VCC − VC)/RC nominal.
    assert!((derived_ic(&s, 12.0, 7.3) - 4.7 / 4.7e3).abs() < 1e-15);
}

/// A random stage biased somewhere sensible: divider to about a fifth of the supply, IC 0.2 to
/// 5 mA, VC near the middle, NPN or PNP.
fn arb_stage() -> impl Strategy<Value = (Stage, Profile, Variation)> {
    (
        5.0f64..30.0,
        0.12f64..0.3,
        0.2e-3f64..5e-3,
        0.3f64..0.6,
        0.0f64..0.5,
        0.01f64..0.1,
        any::<bool>(),
        (50.0f64..150.0, 1.0f64..3.0),
        (-20.0f64..25.0, 0.0f64..50.0),
    )
        // A divider below VBE (0.6 V: 12 % of a 5 V supply) makes RE negative: not a stage.
        .prop_filter("VB above VBE", |(vcc, vb_frac, ..)| vcc * vb_frac > 0.75)
        .prop_map(
            |(vcc, vb_frac, ic, vc_frac, re1_frac, tol, pnp, (bmin, bratio), (t0, dt))| {
                let vb = vcc * vb_frac;
                let re = (vb - 0.65) / ic;
                let rc = vcc * vc_frac / ic;
                let r2 = 10.0 * re * 10.0;
                let r1 = r2 * (vcc - vb) / vb;
                let (r1, r2) = if pnp { (r2, r1) } else { (r1, r2) };
                let stage = Stage {
                    polarity: if pnp { Polarity::Pnp } else { Polarity::Npn },
                    vcc: Part::new(vcc, tol * 0.5),
                    r1: Part::new(r1, tol),
                    r2: Part::new(r2, tol),
                    rc: Part::new(rc, tol),
                    re1: Part::new(re * re1_frac, tol),
                    re2: Part::new(re * (1.0 - re1_frac), tol),
                    rl: Some(rc * 3.0),
                    rs: 100.0,
                    cin: None,
                    cout: None,
                    ce: None,
                };
                let profile = Profile {
                    beta_min: bmin,
                    beta_typ: bmin * bratio.sqrt(),
                    beta_max: bmin * bratio,
                    ..Profile::default()
                };
                (stage, profile, Variation::between(t0, t0 + dt))
            },
        )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn worst_case_brackets_every_monte_carlo_sample((s, p, v) in arb_stage(), seed in any::<u64>()) {
        let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
        let mut outside = Vec::new();
        let st = McSettings { runs: 100, seed, signal: false, requirement: Requirement::default() };
        let _ = monte_carlo_observed(&s, &p, &v, &wc, &st, |_, _| {}, |smp| {
            for n in DC {
                let x = *smp.values.get(n);
                if !wc.nodes.get(n).brackets(x, 1e-9, 1e-15) {
                    outside.push((n, x));
                }
            }
        })
        .unwrap();
        prop_assert!(outside.is_empty(), "{:?} outside {:?}", outside.first(), wc.nodes);
    }
}

/// A stage whose only spread is its capacitors' (resistors, supply, hFE and ambient fixed), so
/// every sample has the same operating point and the low corner moves with CIN, COUT, CE alone.
/// Invented values.
fn cap_only_stage() -> (Stage, Profile, Variation) {
    let s = with_signal(
        with_resistor_tol(demo_stage(), 0.0),
        15e3,
        600.0,
        [2.2e-6, 1e-6, 22e-6],
    );
    let p = Profile {
        beta_min: 180.0,
        beta_max: 180.0,
        ..demo_profile()
    };
    (s, p, Variation::at(25.0))
}

/// The short-circuit time-constant estimate of the low corner, written out by hand: each
/// capacitor's pole 1/(2π·R·C) with R the resistance it sees while the other two are shorts,
/// summed. Resistances as in Sedra & Smith, Microelectronic Circuits, the CE amplifier's
/// low-frequency response (from memory): R_CIN = RS + R1‖R2‖(rπ + (β+1)·RE1),
/// R_COUT = RC + RL, R_CE = RE2 ‖ (RE1 + (rπ + RS‖R1‖R2)/(β+1)); rπ and β from the operating
/// point's admittances (rπ = 1/y11, β = y21/y11), the output resistance of the transistor
/// left out (it is far above RC here).
fn hand_pole_sum(s: &Stage, rpi: f64, beta: f64, cin: f64, cout: f64, ce: f64) -> f64 {
    let par = |a: f64, b: f64| a * b / (a + b);
    let (r1, r2, rc, re1, re2) = (s.r1.value, s.r2.value, s.rc.value, s.re1.value, s.re2.value);
    let rl = s.rl.unwrap();
    let r_cin = s.rs + par(par(r1, r2), rpi + (beta + 1.0) * re1);
    let r_cout = rc + rl;
    let r_ce = par(re2, re1 + (rpi + par(s.rs, par(r1, r2))) / (beta + 1.0));
    let tau = |r: f64, c: f64| 1.0 / (2.0 * std::f64::consts::PI * r * c);
    tau(r_cin, cin) + tau(r_cout, cout) + tau(r_ce, ce)
}

#[test]
fn low_corner_yield_agrees_with_an_independent_count_of_the_capacitor_draws() {
    let (s, p, v) = cap_only_stage();
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let op = solve(&s, &p, Conditions::typical(&p)).unwrap();
    let rpi = 1.0 / op.y.y11;
    let beta = op.y.y21 / op.y.y11;
    let nominal = hand_pole_sum(
        &s,
        rpi,
        beta,
        s.cin.unwrap().value,
        s.cout.unwrap().value,
        s.ce.unwrap().value,
    );
    // The engine's estimate at nominal agrees with the hand formula (the transistor's output
    // resistance and the base-width modulation it leaves out move it by parts in 10⁸ here).
    let engine = biasjig_core::lowfreq::low_corner(&s, &op)
        .f_estimate
        .unwrap();
    assert!(
        (engine / nominal - 1.0).abs() < 1e-6,
        "engine {engine} Hz, hand {nominal} Hz"
    );
    // The requirement sits at the nominal corner: the smaller draws of the capacitors miss it.
    let f_max = nominal;
    let (runs, seed) = (4000u32, 11u64);
    let st = McSettings {
        requirement: Requirement {
            f_low_max: Some(f_max),
            ..Requirement::default()
        },
        ..settings(runs, seed)
    };
    let mc = monte_carlo(&s, &p, &v, &wc, &st, |_, _| {}).unwrap();
    let sampled = mc.passed_each.low_corner;
    assert!(sampled > 0 && sampled < runs, "{sampled} of {runs}");
    assert_eq!(mc.passed, sampled, "nothing else is required");

    // The independent count: the same generator (the seed contract of the module notes:
    // Xoshiro256++ from `seed_from_u64`, per sample the eight factors R1, R2, RC, RE1, RE2,
    // VCC, hFE, ambient, then CIN, COUT, CE, each uniform on [-1, 1) from the top 53 bits).
    use rand_core::{Rng, SeedableRng};
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut sym = || (rng.next_u64() >> 11) as f64 * (2.0 / 9_007_199_254_740_992.0) - 1.0;
    let mut counted = 0u32;
    let mut near = 0u32;
    for _ in 0..runs {
        for _ in 0..8 {
            sym();
        }
        let c = [s.cin, s.cout, s.ce].map(|c| {
            let c = c.unwrap();
            c.value * (1.0 + c.tol * sym())
        });
        let f = hand_pole_sum(&s, rpi, beta, c[0], c[1], c[2]);
        counted += u32::from(f <= f_max);
        // Draws within the two models' difference of the limit may fall either way.
        near += u32::from((f / f_max - 1.0).abs() < 1e-6);
    }
    assert!(
        sampled.abs_diff(counted) <= near,
        "sampled {sampled}, counted {counted}, {near} within 1 % of the limit"
    );
    assert!(near <= 2, "{near} draws near the limit");
}

#[test]
fn low_corner_held_at_every_corner_gives_full_yield_and_no_requirement_leaves_the_draws_alone() {
    let (s, p, v) = cap_only_stage();
    let wc = worst_case(&s, &p, &v, Method::default()).unwrap();
    let op = solve(&s, &p, Conditions::typical(&p)).unwrap();
    // Every capacitor at the low end of its tolerance: the highest corner any draw can give.
    let mut low = s;
    for c in [&mut low.cin, &mut low.cout, &mut low.ce] {
        let p = c.as_mut().unwrap();
        p.value *= 1.0 - p.tol;
    }
    let worst = biasjig_core::lowfreq::low_corner(&low, &op)
        .f_estimate
        .unwrap();
    // 500 draws from seed 3 against a low corner of at most `f_max` (Hz).
    let against = |f_max: f64| {
        let st = McSettings {
            requirement: Requirement {
                f_low_max: Some(f_max),
                ..Requirement::default()
            },
            ..settings(500, 3)
        };
        monte_carlo(&s, &p, &v, &wc, &st, |_, _| {}).unwrap()
    };
    let mc = against(worst * 1.001);
    assert_eq!(mc.passed_each.low_corner, 500);
    assert_eq!(mc.passed, 500);
    // Just under the worst corner some draws miss it (the test can fail).
    let mc = against(worst * 0.95);
    assert!(mc.passed_each.low_corner < 500);

    // Without a low-corner requirement the capacitors are not drawn: the demo stage with
    // capacitors gives the same numbers as without them.
    let (d, dp, dv) = (demo_stage(), demo_profile(), demo_var());
    let with_caps = Stage {
        cin: s.cin,
        cout: s.cout,
        ce: s.ce,
        ..d
    };
    let dwc = worst_case(&d, &dp, &dv, Method::default()).unwrap();
    let a = monte_carlo(&d, &dp, &dv, &dwc, &settings(300, 5), |_, _| {}).unwrap();
    let b = monte_carlo(&with_caps, &dp, &dv, &dwc, &settings(300, 5), |_, _| {}).unwrap();
    assert_eq!(a, b);
    assert_eq!(b.passed_each.low_corner, 300);
}
