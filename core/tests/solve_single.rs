//! The single-precision operating point ([`solve_from_single`], the diagnosis's predictions on
//! the instrument) against the double-precision one: our own f64 solver ([`solve_from`]) is the
//! reference. Over random stages (resistors over decades, both polarities, every transistor
//! fault, each resistor open, shorted and a decade off, the measuring inputs' loads, -40 to
//! 85 °C, hFE over its spread, warm starts chained as the diagnosis chains them), the single
//! solve must converge wherever the double one does and agree with it far inside the meter's
//! error. The single-precision instance is built with the signal test (the budget build solves
//! in `f64` throughout).
#![cfg(feature = "signal-test")]

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::limits::Meter;
use biasjig_core::solve::{
    solve_from, solve_from_single, Conditions, NodeLoads, OperatingPoint, Start, StartSingle,
};
use biasjig_core::stage::{DeviceFault, Fault, Part, Polarity, Resistor, Stage};

/// Largest difference of a node voltage allowed, as a fraction of the default meter's error at
/// that reading ([`Meter::DEFAULT`]: 0.6 % of the reading plus 5 mV): a hundredth, so 50 µV at
/// 0 V and 0.17 mV at 12 V. Single precision resolves a junction voltage to 60 nV, which moves a
/// junction current by 2·10⁻⁶ of itself; where the stage's current is the small difference of
/// larger device currents (a floating emitter held by a 1 MΩ input) that is some ten microvolts
/// to a few tenths of a millivolt at a node.
const NODE_TOLERANCE_OF_METER: f64 = 1e-2;
/// Largest difference of a small-signal admittance allowed, relative to the largest admittance
/// of its row (y11 and y12; y21 and y22): an entry that is the difference of larger terms
/// (gm of a transistor with a floating collector, about zero) is resolved to its row's scale.
/// The gains built on them are read with a 2 % error.
const ADMITTANCE_TOLERANCE: f64 = 1e-4;

/// A xorshift generator: the same cases on every run.
struct Rng(u64);

impl Rng {
    fn unit(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Log-uniform between `lo` and `hi`.
    fn decades(&mut self, lo: f64, hi: f64) -> f64 {
        lo * (hi / lo).powf(self.unit())
    }
    fn pick(&mut self, n: usize) -> usize {
        ((self.unit() * n as f64) as usize).min(n - 1)
    }
}

fn random_stage(rng: &mut Rng) -> Stage {
    let part = |v: f64| Part::new(v, 0.05);
    let re = |rng: &mut Rng| {
        if rng.unit() < 0.2 {
            0.0
        } else {
            rng.decades(10.0, 10e3)
        }
    };
    Stage {
        polarity: if rng.unit() < 0.5 {
            Polarity::Npn
        } else {
            Polarity::Pnp
        },
        vcc: Part::new(rng.decades(1.5, 48.0), 0.0),
        r1: part(rng.decades(1e3, 2e6)),
        r2: part(rng.decades(300.0, 1e6)),
        rc: part(rng.decades(100.0, 200e3)),
        re1: part(re(rng)),
        re2: part(re(rng)),
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    }
}

fn random_profile(rng: &mut Rng) -> Profile {
    let beta_typ = rng.decades(30.0, 600.0);
    Profile {
        beta_min: beta_typ * 0.5,
        beta_typ,
        beta_max: beta_typ * 2.0,
        beta_rev: rng.decades(0.5, 10.0),
        is_25: is_from_vbe(0.55 + 0.2 * rng.unit()),
        early: (rng.unit() < 0.5).then(|| rng.decades(20.0, 300.0)),
        ..Profile::default()
    }
}

/// A fault as the diagnosis poses it: none, a resistor open, shorted or a decade off, or a
/// transistor fault.
fn random_fault(rng: &mut Rng, stage: &Stage) -> (Stage, Option<DeviceFault>) {
    let r = Resistor::ALL[rng.pick(5)];
    match rng.pick(6) {
        0 => (*stage, None),
        1 => (stage.with_fault(Fault::Open(r)), None),
        2 => (stage.with_fault(Fault::Short(r)), None),
        3 => {
            let k = if rng.unit() < 0.5 { 10.0 } else { 0.1 };
            (
                stage.with_fault(Fault::Value(r, stage.resistor(r) * k)),
                None,
            )
        }
        _ => (*stage, Some(DeviceFault::ALL[rng.pick(6)])),
    }
}

/// What is attached while the board is read: nothing, the meter's inputs on every node, one
/// node's input alone, or a shorted coupling capacitor's source or load resistor as well.
fn random_loads(rng: &mut Rng) -> NodeLoads {
    let input = [1e6, 10e6, 11e6][rng.pick(3)];
    match rng.pick(6) {
        0 => NodeLoads::NONE,
        1 => NodeLoads::each(Some(input)),
        2 => NodeLoads {
            base: Some(input),
            ..NodeLoads::NONE
        },
        3 => NodeLoads {
            collector: Some(input),
            ..NodeLoads::NONE
        },
        4 => NodeLoads {
            emitter: Some(input),
            ..NodeLoads::NONE
        },
        _ => NodeLoads {
            base: Some(rng.decades(50.0, 10e3)),
            collector: Some(rng.decades(1e3, 100e3)),
            emitter: Some(input),
        },
    }
}

/// The worst differences seen, and the counts.
#[derive(Default, Debug)]
struct Tally {
    cases: u32,
    both: u32,
    only_double: u32,
    only_single: u32,
    neither: u32,
    worst_node_v: f64,
    worst_node_meter: f64,
    nodes_over_10uv: u32,
    worst_y: f64,
    region_differs: u32,
    /// Cases whose collector voltage is not the double one bit for bit: the single-precision
    /// arithmetic was used (the three transistor faults solved in `f64` are equal).
    not_bit_equal: u32,
}

impl Tally {
    fn compare(&mut self, d: &OperatingPoint, s: &OperatingPoint, what: &str) {
        for (a, b) in [(d.vb, s.vb), (d.ve, s.ve), (d.vc, s.vc)] {
            let diff = (a - b).abs();
            let of_meter = diff / Meter::DEFAULT.error(a);
            self.worst_node_v = self.worst_node_v.max(diff);
            self.worst_node_meter = self.worst_node_meter.max(of_meter);
            if diff > 10e-6 {
                self.nodes_over_10uv += 1;
            }
            assert!(
                of_meter <= NODE_TOLERANCE_OF_METER,
                "{what}: node {b} V against {a} V (off by {diff:e} V)"
            );
        }
        let (yd, ys) = (d.y, s.y);
        let input = yd.y11.abs().max(yd.y12.abs());
        let transfer = yd.y21.abs().max(yd.y22.abs());
        for (a, b, scale) in [
            (yd.y11, ys.y11, input),
            (yd.y12, ys.y12, input),
            (yd.y21, ys.y21, transfer),
            (yd.y22, ys.y22, transfer),
        ] {
            let rel = if a == b { 0.0 } else { (a - b).abs() / scale };
            self.worst_y = self.worst_y.max(rel);
            assert!(
                rel <= ADMITTANCE_TOLERANCE,
                "{what}: admittance {b:e} S against {a:e} S ({rel:e} of its row)"
            );
        }
        if d.region != s.region {
            self.region_differs += 1;
        }
        if d.vc.to_bits() != s.vc.to_bits() {
            self.not_bit_equal += 1;
        }
    }
}

/// Random stages with random faults, loads, temperatures and hFE, each solved cold and then as a
/// chain of warm starts (the diagnosis starts every solve from the last one), in both precisions.
#[test]
fn single_precision_matches_double_within_the_meters_resolution() {
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    let mut t = Tally::default();
    let mut warm_double: Option<Start> = None;
    let mut warm_single: Option<StartSingle> = None;
    for case in 0..4000 {
        // A new stage every 20 cases; in between, other faults of the same one (warm starts).
        if case % 20 == 0 {
            warm_double = None;
            warm_single = None;
        }
        let base = random_stage(&mut rng);
        let profile = random_profile(&mut rng);
        let (stage, fault) = random_fault(&mut rng, &base);
        let cond = Conditions {
            temp_c: -40.0 + 125.0 * rng.unit(),
            beta_25: rng.decades(profile.beta_min, profile.beta_max),
            fault,
            loads: random_loads(&mut rng),
        };
        t.cases += 1;
        let what = format!("case {case}: {stage:?} {cond:?}");
        let d = solve_from(&stage, &profile, cond, warm_double.as_ref());
        let s = solve_from_single(&stage, &profile, cond, warm_single.as_ref());
        match (d, s) {
            (Ok((d, nd)), Ok((s, ns))) => {
                t.both += 1;
                t.compare(&d, &s, &what);
                warm_double = Some(nd);
                warm_single = Some(ns);
            }
            (Ok(_), Err(e)) => {
                t.only_double += 1;
                eprintln!("{what}: single failed ({e})");
            }
            (Err(_), Ok(_)) => t.only_single += 1,
            (Err(_), Err(_)) => t.neither += 1,
        }
    }
    eprintln!("{t:?}");
    assert_eq!(t.only_double, 0, "{t:?}");
    // Nearly every case has an answer, most of them from the single-precision arithmetic: the
    // comparison is not empty.
    assert!(t.both > 3900, "{t:?}");
    assert!(t.not_bit_equal > 3000, "{t:?}");
    assert_eq!(t.region_differs, 0, "{t:?}");
}

/// The transistor faults whose collector current is the difference of larger device currents
/// (collector-emitter and base-collector shorts, a reversed part) are solved in `f64`: the
/// answer is [`solve_from`]'s, bit for bit.
#[test]
fn faults_that_single_precision_cannot_resolve_are_solved_in_double() {
    let mut rng = Rng(0x2545_f491_4f6c_dd1d);
    for _ in 0..300 {
        let stage = random_stage(&mut rng);
        let profile = random_profile(&mut rng);
        for fault in [
            DeviceFault::CeShort,
            DeviceFault::BcShort,
            DeviceFault::Reversed,
        ] {
            let cond = Conditions {
                fault: Some(fault),
                loads: random_loads(&mut rng),
                ..Conditions::typical(&profile)
            };
            let d = solve_from(&stage, &profile, cond, None).map(|(op, _)| op);
            let s = solve_from_single(&stage, &profile, cond, None).map(|(op, _)| op);
            assert_eq!(d, s, "{stage:?} {cond:?}");
        }
    }
}
