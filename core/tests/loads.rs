//! Resistances attached from the nodes to ground (measuring inputs, a jig's source and load
//! resistors) against a reference written here: each loaded node is replaced by its Thévenin
//! equivalent in the real circuit (the textbook reduction of two resistors to two rails, "from
//! memory"), and the transistor between the three Thévenin sources is solved by nodal analysis
//! with the same transport-form Ebers-Moll equations (CONTRACT.md), in the stage's own polarity
//! (no mirrored frame), by a plain damped Newton's method on the three node voltages.

use biasjig_core::device::Profile;
use biasjig_core::solve::{solve, Conditions, NodeLoads, OperatingPoint, Region};
use biasjig_core::stage::{Fault, Polarity, Resistor, Stage};
use biasjig_core::thermal_voltage;
use biasjig_testkit::fixtures::{fixed_profile, stage};
use proptest::prelude::*;

fn profile(beta: f64) -> Profile {
    fixed_profile(beta, 0.65)
}

/// A node's Thévenin equivalent as a Norton conductance and open-circuit voltage (conductance
/// 0 for a node nothing drives).
#[derive(Debug, Clone, Copy)]
struct Thevenin {
    g: f64,
    v: f64,
}

/// The Thévenin equivalent of resistors `r` (Ω, infinite for open, 0 for a short) to rails `v`.
fn thevenin(branches: &[(f64, f64)]) -> Thevenin {
    // A short to a rail fixes the node: a very large conductance stands for it.
    let g_of = |r: f64| {
        if r == 0.0 {
            1e9
        } else if r.is_finite() {
            1.0 / r
        } else {
            0.0
        }
    };
    let g: f64 = branches.iter().map(|(r, _)| g_of(*r)).sum();
    let i: f64 = branches.iter().map(|(r, v)| g_of(*r) * v).sum();
    Thevenin {
        g,
        v: if g > 0.0 { i / g } else { 0.0 },
    }
}

/// The Thévenin equivalents of the base, collector and emitter nodes of the real circuit with
/// `loads` to ground.
fn thevenin_nodes(s: &Stage, loads: NodeLoads) -> [Thevenin; 3] {
    let vcc = s.vcc.value;
    let l = |r: Option<f64>| r.unwrap_or(f64::INFINITY);
    let re = s.re1.value + s.re2.value;
    let (rc_rail, re_rail) = match s.polarity {
        Polarity::Npn => (vcc, 0.0),
        Polarity::Pnp => (0.0, vcc),
    };
    [
        thevenin(&[(s.r1.value, vcc), (s.r2.value, 0.0), (l(loads.base), 0.0)]),
        thevenin(&[(s.rc.value, rc_rail), (l(loads.collector), 0.0)]),
        thevenin(&[(re, re_rail), (l(loads.emitter), 0.0)]),
    ]
}

/// Node voltages (VB, VC, VE) of the transistor between the three Thévenin sources, by nodal
/// analysis: the current each source delivers into a node equals the current into the device
/// terminal there.
fn reference(s: &Stage, p: &Profile, loads: NodeLoads, temp: f64) -> [f64; 3] {
    let th = thevenin_nodes(s, loads);
    let sign = match s.polarity {
        Polarity::Npn => 1.0,
        Polarity::Pnp => -1.0,
    };
    let vt = thermal_voltage(temp);
    let is = p.is_at(temp);
    let bf = p.beta_at(p.beta_typ, temp);
    let br = p.beta_rev;
    let gmin = 1e-12;
    // Device terminal currents into (B, C, E) and their Jacobian with respect to (VB, VC, VE).
    let device = |v: [f64; 3]| {
        let a = sign * (v[0] - v[2]);
        let c = sign * (v[0] - v[1]);
        // exp continued as a straight line far above any settled junction voltage (x > 40, about
        // 1 V), so that a far start cannot overflow; the derivative below follows it.
        let lin = |x: f64| {
            if x > 40.0 {
                (40.0f64).exp() * (1.0 + x - 40.0)
            } else {
                x.exp()
            }
        };
        let slope = |x: f64| (x.min(40.0)).exp();
        let (ea, ec) = (lin(a / vt), lin(c / vt));
        let it = is * (ea - ec);
        let ibe = is / bf * (ea - 1.0) + gmin * a;
        let ibc = is / br * (ec - 1.0) + gmin * c;
        let ib = sign * (ibe + ibc);
        let ic = sign * (it - ibc);
        // Derivatives of the own-frame currents with respect to a and c.
        let (dea, dec) = (slope(a / vt) / vt, slope(c / vt) / vt);
        let dibe = is / bf * dea + gmin;
        let dibc = is / br * dec + gmin;
        let dib = [dibe, dibc]; // d/da, d/dc
        let dic = [is * dea, -is * dec - dibc];
        // a = sign(VB − VE), c = sign(VB − VC): chain rule (sign² = 1).
        let jac = |d: [f64; 2]| [d[0] + d[1], -d[1], -d[0]];
        let jb = jac(dib);
        let jc = jac(dic);
        let je = [-(jb[0] + jc[0]), -(jb[1] + jc[1]), -(jb[2] + jc[2])];
        ([ib, ic, -(ib + ic)], [jb, jc, je])
    };
    let mut v = [th[0].v, th[1].v, th[0].v - sign * 0.6];
    for _ in 0..2000 {
        let (i, j) = device(v);
        // Residual: g·(vth − v) − i = 0 at each node, plus a tiny leak to ground for regularity.
        let f: [f64; 3] = core::array::from_fn(|k| th[k].g * (th[k].v - v[k]) - i[k] - gmin * v[k]);
        let m: [[f64; 3]; 3] = core::array::from_fn(|r| {
            core::array::from_fn(|c| -j[r][c] - if r == c { th[r].g + gmin } else { 0.0 })
        });
        let d = solve3(m, f.map(|x| -x));
        let step = d.iter().fold(0.0f64, |a, x| a.max(x.abs()));
        let k = if step > 0.05 { 0.05 / step } else { 1.0 };
        for (vk, dk) in v.iter_mut().zip(d) {
            *vk += k * dk;
        }
        if step < 1e-12 {
            break;
        }
    }
    v
}

/// Solve a 3×3 linear system by Cramer's rule.
fn solve3(m: [[f64; 3]; 3], b: [f64; 3]) -> [f64; 3] {
    let det = |m: [[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det(m);
    core::array::from_fn(|col| {
        let mut mm = m;
        for r in 0..3 {
            mm[r][col] = b[r];
        }
        det(mm) / d
    })
}

fn solved(s: &Stage, p: &Profile, loads: NodeLoads, temp: f64) -> OperatingPoint {
    solve(
        s,
        p,
        Conditions {
            loads,
            ..Conditions::typical(p).at(temp)
        },
    )
    .expect("the loaded stage solves")
}

fn assert_matches(s: &Stage, p: &Profile, loads: NodeLoads, temp: f64, tol: f64) {
    let op = solved(s, p, loads, temp);
    let [vb, vc, ve] = reference(s, p, loads, temp);
    for (name, got, want) in [("vb", op.vb, vb), ("vc", op.vc, vc), ("ve", op.ve, ve)] {
        assert!(
            (got - want).abs() <= tol,
            "{name}: engine {got} reference {want} ({:?} {s:?} {loads:?})",
            s.polarity
        );
    }
}

/// A high-impedance stage of our own: R1 470 k, R2 100 k, RC 47 k, RE 10 k + 0 at 24 V.
const HIGH_Z: [f64; 5] = [470e3, 100e3, 47e3, 10e3, 0.0];

#[test]
fn a_jig_input_on_every_node_pulls_the_divider_down() {
    let p = profile(200.0);
    for pol in [Polarity::Npn, Polarity::Pnp] {
        let s = stage(pol, 24.0, HIGH_Z);
        let free = solved(&s, &p, NodeLoads::NONE, 25.0);
        let loads = NodeLoads::each(Some(110e3));
        let loaded = solved(&s, &p, loads, 25.0);
        // 110 kΩ beside R2 (100 kΩ) halves the base's bottom leg: the base moves well away
        // from its unloaded value (towards ground for NPN, towards the supply for PNP).
        assert!(
            (loaded.vb - free.vb).abs() > 0.5,
            "{pol:?} {free:?} {loaded:?}"
        );
        assert_matches(&s, &p, loads, 25.0, 2e-6);
    }
}

#[test]
fn nothing_attached_is_bit_identical_to_no_loads_and_infinite_loads_are_none() {
    let p = profile(150.0);
    for pol in [Polarity::Npn, Polarity::Pnp] {
        let s = stage(pol, 12.0, [47e3, 10e3, 4.7e3, 220.0, 820.0]);
        let a = solved(&s, &p, NodeLoads::NONE, 40.0);
        let b = solve(&s, &p, Conditions::typical(&p).at(40.0)).unwrap();
        assert_eq!(a, b);
        let inf = solved(&s, &p, NodeLoads::each(Some(f64::INFINITY)), 40.0);
        assert!((inf.vb - a.vb).abs() < 1e-9 && (inf.vc - a.vc).abs() < 1e-9);
    }
}

#[test]
fn one_node_loaded_at_a_time() {
    let p = profile(250.0);
    for pol in [Polarity::Npn, Polarity::Pnp] {
        let s = stage(pol, 15.0, [220e3, 47e3, 22e3, 1e3, 3.3e3]);
        for loads in [
            NodeLoads {
                base: Some(1e6),
                ..NodeLoads::NONE
            },
            NodeLoads {
                collector: Some(1e6),
                ..NodeLoads::NONE
            },
            NodeLoads {
                emitter: Some(10e3),
                ..NodeLoads::NONE
            },
        ] {
            assert_matches(&s, &p, loads, 25.0, 2e-6);
            assert_matches(&s, &p, loads, -10.0, 2e-6);
            assert_matches(&s, &p, loads, 70.0, 2e-6);
        }
    }
}

#[test]
fn an_input_on_the_base_drives_the_node_an_open_r2_left_floating() {
    let p = profile(200.0);
    let loads = NodeLoads::each(Some(1e6));
    for pol in [Polarity::Npn, Polarity::Pnp] {
        let good = stage(pol, 24.0, HIGH_Z);
        for fault in [
            Fault::Open(Resistor::R2),
            Fault::Open(Resistor::R1),
            Fault::Open(Resistor::Rc),
            Fault::Open(Resistor::Re1),
            Fault::Short(Resistor::Re1),
            Fault::Short(Resistor::Rc),
            Fault::Value(Resistor::R2, 10e3),
        ] {
            let s = good.with_fault(fault);
            assert_matches(&s, &p, loads, 25.0, 1e-5);
        }
    }
}

#[test]
fn an_open_r1_with_the_input_on_the_base_cuts_the_stage_off() {
    // With R1 open the base has only R2 and the input to ground: nothing drives it up.
    let p = profile(200.0);
    let s = stage(Polarity::Npn, 24.0, HIGH_Z).with_fault(Fault::Open(Resistor::R1));
    let op = solved(&s, &p, NodeLoads::each(Some(1e6)), 25.0);
    assert_eq!(op.region, Region::Cutoff);
    assert!(op.vb.abs() < 1e-6 && (op.vc - 24.0 * 1e6 / (1e6 + 47e3)).abs() < 1e-4);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]
    #[test]
    fn any_loaded_stage_matches_the_thevenin_reference(
        pnp in any::<bool>(),
        vcc in 5.0f64..30.0,
        r1 in 10e3f64..1e6,
        ratio in 0.08f64..0.4,
        rc in 1e3f64..100e3,
        re in 100.0f64..10e3,
        beta in 50.0f64..500.0,
        lb in prop::option::of(20e3f64..10e6),
        lc in prop::option::of(20e3f64..10e6),
        le in prop::option::of(20e3f64..10e6),
        temp in -20.0f64..80.0,
    ) {
        let pol = if pnp { Polarity::Pnp } else { Polarity::Npn };
        let s = stage(pol, vcc, [r1, r1 * ratio, rc, re, 0.0]);
        let p = profile(beta);
        let loads = NodeLoads { base: lb, collector: lc, emitter: le };
        let op = solved(&s, &p, loads, temp);
        let [vb, vc, ve] = reference(&s, &p, loads, temp);
        // 10 µV plus 1 ppm: the reference's 1 pS junction and node leaks alone move a node near
        // the supply by a few µV where the node resistance is near 100 kΩ (vc 26.3 V once came
        // out 10.3 µV apart).
        for (name, got, want) in [("vb", op.vb, vb), ("vc", op.vc, vc), ("ve", op.ve, ve)] {
            let tol = 1e-5 + 1e-6 * want.abs();
            prop_assert!((got - want).abs() <= tol, "{} engine {} reference {}", name, got, want);
        }
    }
}
