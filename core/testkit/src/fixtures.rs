//! Stages and transistors built from their figures, the demo scenario of the project brief
//! (invented) once, the invented test designs of the sweeps, and engine readings of a board.

use biasjig_core::design::Requirement;
use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::solve::{solve, Conditions, OperatingPoint};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{DeviceFault, Fault, Part, Polarity, Readings, Resistor, Stage};

/// A bare stage: supply `vcc` (V, exact), R1, R2, RC, RE1, RE2 (Ω) at 5 % each; no load, no
/// source resistance, no capacitors.
pub fn stage(polarity: Polarity, vcc: f64, r: [f64; 5]) -> Stage {
    let [r1, r2, rc, re1, re2] = r.map(|v| Part::new(v, 0.05));
    Stage {
        polarity,
        vcc: Part::new(vcc, 0.0),
        r1,
        r2,
        rc,
        re1,
        re2,
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    }
}

/// A bare NPN stage (see [`stage`]).
pub fn npn(vcc: f64, r: [f64; 5]) -> Stage {
    stage(Polarity::Npn, vcc, r)
}

/// `s` driven from `rs` (Ω) into the load `rl` (Ω), with CIN, COUT and CE (F) at 20 % each.
pub fn with_signal(s: Stage, rl: f64, rs: f64, caps: [f64; 3]) -> Stage {
    let [cin, cout, ce] = caps.map(|c| Some(Part::new(c, 0.2)));
    Stage {
        rl: Some(rl),
        rs,
        cin,
        cout,
        ce,
        ..s
    }
}

/// `s` with every resistor at tolerance `tol` (fraction).
pub fn with_resistor_tol(mut s: Stage, tol: f64) -> Stage {
    for r in Resistor::ALL {
        s.part_mut(r).tol = tol;
    }
    s
}

/// A transistor: hFE from `min` to `max` around `typ`, VBE `vbe` (V) at 1 mA; the rest the
/// generic defaults of [`Profile::default`].
pub fn profile(min: f64, typ: f64, max: f64, vbe: f64) -> Profile {
    let mut p = Profile::default();
    (p.beta_min, p.beta_typ, p.beta_max) = (min, typ, max);
    p.is_25 = is_from_vbe(vbe);
    p
}

/// A transistor of one hFE, VBE `vbe` (V) at 1 mA.
pub fn fixed_profile(beta: f64, vbe: f64) -> Profile {
    profile(beta, beta, beta, vbe)
}

/// The demo board's stage (the invented vibration-sensor preamp of the brief): 12 V, 15 kΩ
/// load, 600 Ω source, E24 5 % parts, no capacitors.
pub fn demo_stage() -> Stage {
    Stage {
        rl: Some(15e3),
        rs: 600.0,
        ..npn(12.0, [47e3, 10e3, 4.7e3, 220.0, 1e3])
    }
}

/// The demo transistor: hFE 100 to 300 (typical 180), VBE 0.65 V at 1 mA (invented).
pub fn demo_profile() -> Profile {
    profile(100.0, 180.0, 300.0, 0.65)
}

/// The demo ambient range, -10 to 55 °C.
pub fn demo_variation() -> Variation {
    Variation::between(-10.0, 55.0)
}

/// The demo requirement of the brief (invented): 12 V, gain 15 into 15 kΩ from 600 Ω, low
/// corner 5 Hz, 2 mA budget, -10 to 55 °C; the rest the defaults of [`Requirement::new`].
pub fn demo_requirement() -> Requirement {
    let mut req = Requirement::new(12.0, 15.0);
    req.rl = Some(15e3);
    req.rs = 600.0;
    req.ic_max = 2e-3;
    req.f_low = Some(5.0);
    req.temp_min = -10.0;
    req.temp_max = 55.0;
    req
}

/// Invented DC test designs of the sweeps (not from any book): two NPN, two PNP, one without
/// RE1.
pub fn dc_designs() -> Vec<(&'static str, Stage, Profile)> {
    use Polarity::{Npn, Pnp};
    type Row = (&'static str, Polarity, f64, [f64; 5], [f64; 4]);
    // (name, polarity, supply V, [R1, R2, RC, RE1, RE2] Ω, [hFE min, typ, max, VBE V at 1 mA]).
    #[rustfmt::skip]
    let table: [Row; 4] = [
        ("npn15", Npn, 15.0, [68e3, 15e3, 3.9e3, 220.0, 820.0], [120.0, 210.0, 360.0, 0.66]),
        ("pnp9", Pnp, 9.0, [12e3, 47e3, 2.7e3, 150.0, 820.0], [100.0, 180.0, 300.0, 0.64]),
        ("npn24", Npn, 24.0, [150e3, 18e3, 10e3, 0.0, 1.5e3], [80.0, 150.0, 250.0, 0.68]),
        ("pnp5", Pnp, 5.0, [10e3, 18e3, 1e3, 47.0, 470.0], [150.0, 250.0, 450.0, 0.62]),
    ];
    table
        .into_iter()
        .map(|(name, pol, vcc, r, [min, typ, max, vbe])| {
            (name, stage(pol, vcc, r), profile(min, typ, max, vbe))
        })
        .collect()
}

/// Invented test designs with the signal path (not from any book): supply at 10 %, resistors
/// 5 %, capacitors 20 %.
pub fn signal_designs() -> Vec<(&'static str, Stage, Profile)> {
    let supply_10 = |s: Stage| Stage {
        vcc: Part::new(s.vcc.value, 0.1),
        ..s
    };
    vec![
        (
            "npn12",
            supply_10(with_signal(
                npn(12.0, [47e3, 10e3, 4.7e3, 220.0, 820.0]),
                15e3,
                600.0,
                [4.7e-6, 2.2e-6, 47e-6],
            )),
            profile(100.0, 180.0, 300.0, 0.65),
        ),
        (
            "pnp9",
            supply_10(with_signal(
                stage(Polarity::Pnp, 9.0, [12e3, 47e3, 2.7e3, 150.0, 820.0]),
                10e3,
                1e3,
                [2.2e-6, 1e-6, 100e-6],
            )),
            profile(120.0, 200.0, 350.0, 0.64),
        ),
    ]
}

/// Where a fault goes for the engine: a part fault changes the stage, a transistor fault goes
/// into the solve's conditions.
pub fn faulted(s: &Stage, fault: Option<Fault>) -> (Stage, Option<DeviceFault>) {
    match fault {
        Some(Fault::Device(d)) => (*s, Some(d)),
        Some(f) => (s.with_fault(f), None),
        None => (*s, None),
    }
}

/// The node voltages of an operating point as a meter reads them.
pub fn readings(op: &OperatingPoint) -> Readings {
    Readings {
        vcc: op.vcc,
        vb: op.vb,
        ve: op.ve,
        vc: op.vc,
    }
}

/// The engine's readings of `s` with `fault` under `cond` (its own fault replaced), or `None`
/// when the engine finds no operating point.
pub fn readings_under(
    s: &Stage,
    p: &Profile,
    cond: Conditions,
    fault: Option<Fault>,
) -> Option<Readings> {
    let (board, dev) = faulted(s, fault);
    let op = solve(&board, p, Conditions { fault: dev, ..cond }).ok()?;
    Some(readings(&op))
}

/// The engine's readings of `s` with `fault` at 25 °C with hFE `beta`, nothing attached.
pub fn readings_of(s: &Stage, p: &Profile, beta: f64, fault: Option<Fault>) -> Option<Readings> {
    let cond = Conditions {
        beta_25: beta,
        ..Conditions::typical(p)
    };
    readings_under(s, p, cond, fault)
}
