//! Cost of one diagnosis: a fixed set of invented boards (good and faulty), diagnosed once each.
//!
//! Deterministic instruction counts, not time: `scripts/instructions.sh diagnose` (callgrind;
//! the convention of that script: `--counts` names N1 N2 and the unit, a bare count N runs N
//! diagnoses cycling over the boards). The goal: one diagnosis within about 5 M instructions.

use biasjig_core::diagnose::diagnose;
use biasjig_core::limits::Meter;
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{DeviceFault, Fault, Resistor};
use biasjig_testkit::fixtures::{dc_designs, faulted, readings};

fn main() {
    // An invented 15 V NPN stage (the first design of the diagnosis sweep).
    let (_, stage, profile) = dc_designs().remove(0);
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
        let (s, dev) = faulted(&stage, f);
        let cond = Conditions {
            beta_25: 250.0,
            fault: dev,
            ..Conditions::typical(&profile)
        };
        let Ok(op) = solve(&s, &profile, cond) else {
            continue;
        };
        let r = readings(&op);
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
