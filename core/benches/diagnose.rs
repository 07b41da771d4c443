//! Cost of one diagnosis: a fixed set of invented boards (good and faulty), diagnosed once each.
//!
//! Deterministic instruction counts, not time: `scripts/instructions.sh diagnose` (callgrind;
//! the convention of that script: `--counts` names N1 N2 and the unit, a bare count N runs N
//! diagnoses cycling over the boards). The goal: one diagnosis within about 5 M instructions.

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::diagnose::diagnose;
use biasjig_core::limits::Meter;
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{DeviceFault, Fault, Part, Polarity, Readings, Resistor, Stage};

fn main() {
    // An invented 15 V NPN stage.
    let stage = Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(15.0, 0.0),
        r1: Part::new(68e3, 0.05),
        r2: Part::new(15e3, 0.05),
        rc: Part::new(3.9e3, 0.05),
        re1: Part::new(220.0, 0.05),
        re2: Part::new(820.0, 0.05),
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    };
    let profile = Profile {
        beta_min: 120.0,
        beta_typ: 210.0,
        beta_max: 360.0,
        is_25: is_from_vbe(0.66),
        ..Profile::default()
    };
    let faults = [
        None,
        Some(Fault::Open(Resistor::R1)),
        Some(Fault::Value(Resistor::Rc, 39e3)),
        Some(Fault::Short(Resistor::Re1)),
        Some(Fault::Device(DeviceFault::BcShort)),
        Some(Fault::Value(Resistor::R2, 7.5e3)),
    ];
    let args: Vec<String> = std::env::args().collect();
    if args.iter().any(|a| a == "--counts") {
        println!("6 30 diagnosis");
        return;
    }
    let n: usize = args
        .get(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(faults.len());
    let meter = Meter::default();
    let var = Variation::at(25.0);
    let mut total = 0u32;
    for f in faults.iter().cycle().take(n).copied() {
        let (s, dev) = match f {
            Some(Fault::Device(d)) => (stage, Some(d)),
            Some(f) => (stage.with_fault(f), None),
            None => (stage, None),
        };
        let cond = Conditions {
            temp_c: 25.0,
            beta_25: 250.0,
            fault: dev,
            loads: Default::default(),
        };
        let Ok(op) = solve(&s, &profile, cond) else {
            continue;
        };
        let r = Readings {
            vcc: 15.0,
            vb: op.vb,
            ve: op.ve,
            vc: op.vc,
        };
        if let Ok(d) = diagnose(&stage, &profile, std::hint::black_box(&r), &meter, &var) {
            total += d.solves;
            let best = d.best().map(|h| (h.suspect.part(), h.suspect.mode()));
            if n <= faults.len() {
                println!("{f:?}: best {best:?}, {} solves", d.solves);
            }
        }
    }
    println!("{n} diagnoses, {total} solves");
}
