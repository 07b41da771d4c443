//! The built-in demo scenario (invented figures, the product brief's): a vibration-sensor
//! preamplifier for pump monitoring. The requirement and the transistor as command-line flags,
//! the faults planted in the simulated lot and the simulation of one board, for `biasjig demo`
//! and for tests that run the same scenario.

use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::{DeviceFault, Fault, Readings, Resistor, Stage};
use rand_core::Rng;
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::designfile;

/// The demo requirement as (flag, value) pairs, held at every corner of the spread: the gain
/// within ±12 % (with 5 % resistors, hFE 100 to 300 and -10 to 55 °C, ±10 % is just out of
/// reach: `design` says so and by how much).
pub const REQUIREMENT: [(&str, &str); 13] = [
    ("--vcc", "12"),
    ("--gain", "15"),
    ("--gain-tol", "12"),
    ("--rl", "15k"),
    ("--rs", "600"),
    ("--ic-max", "2m"),
    ("--f-low", "5"),
    ("--temp-min", "-10"),
    ("--temp-max", "55"),
    ("--beta", "180"),
    ("--beta-min", "100"),
    ("--beta-max", "300"),
    ("--series", "E24"),
];

/// The invented transistor profile beyond hFE as (flag, value) pairs: VBE 0.65 V at 1 mA,
/// VCE(sat) 0.2 V, 300 mW.
pub const TRANSISTOR: [(&str, &str); 3] = [
    ("--vbe", "0.65"),
    ("--vce-sat", "0.2"),
    ("--power-rating", "0.3"),
];

/// (flag, value) pairs as the words of a command line, in order.
pub fn words<'a>(pairs: &'a [(&'a str, &'a str)]) -> impl Iterator<Item = &'a str> + 'a {
    pairs.iter().flat_map(|(flag, value)| [*flag, *value])
}

/// Boards of the lot that carry a fault, by position, and the fault.
pub fn planted_fault(index: u32, stage: &Stage) -> Option<(Option<Fault>, Option<DeviceFault>)> {
    match index {
        7 => Some((
            Some(Fault::Value(Resistor::Rc, stage.rc.value * 10.0)),
            None,
        )),
        19 => Some((Some(Fault::Open(Resistor::Re2)), None)),
        31 => Some((None, Some(DeviceFault::BeShort))),
        _ => None,
    }
}

/// Simulate one board: every resistor within its tolerance, hFE within its spread, the station's
/// ambient and supply, optionally a fault; readings with a few millivolts of meter noise.
pub fn board(
    doc: &designfile::DesignDoc,
    rng: &mut Xoshiro256PlusPlus,
    fault: Option<(Option<Fault>, Option<DeviceFault>)>,
) -> Option<Readings> {
    let mut uniform = |lo: f64, hi: f64| {
        let u = (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
        lo + (hi - lo) * u
    };
    let mut s = doc.stage;
    for r in Resistor::ALL {
        let p = s.part_mut(r);
        p.value *= 1.0 + p.tol * uniform(-1.0, 1.0);
    }
    s.vcc.value = uniform(11.8, 12.2);
    let beta = uniform(doc.profile.beta_min, doc.profile.beta_max);
    let temp = uniform(20.0, 30.0);
    let (rf, df) = fault.unwrap_or((None, None));
    if let Some(f) = rf {
        s = s.with_fault(f);
    }
    let cond = Conditions {
        temp_c: temp,
        beta_25: beta,
        fault: df,
        loads: Default::default(),
    };
    let op = solve(&s, &doc.profile, cond).ok()?;
    let mut noisy = |v: f64| v + uniform(-0.003, 0.003);
    Some(Readings {
        vcc: noisy(s.vcc.value),
        vb: noisy(op.vb),
        ve: noisy(op.ve),
        vc: noisy(op.vc),
    })
}
