//! Seeded sweep of simulated boards through check and diagnose: random in-tolerance parts, hFE
//! within its spread, a random supply, one fault or none, and a few millivolts of reading noise.
//!
//! Run with `cargo test -p biasjig-core --test diagnose_sweep -- --nocapture` to see the
//! confusion table.

use std::collections::BTreeMap;

use biasjig_core::check::check;
use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::diagnose::{diagnose, Diagnosis, ResistorMode, Suspect};
use biasjig_core::limits::{limits, Meter, Window};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{DeviceFault, Fault, Part, Polarity, Readings, Resistor, Stage};

/// A small seeded generator (SplitMix64), the same numbers on every platform.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
    fn pick<T: Copy>(&mut self, v: &[T]) -> T {
        v[(self.next() % v.len() as u64) as usize]
    }
}

fn stage(polarity: Polarity, vcc: f64, r: [f64; 5]) -> Stage {
    Stage {
        polarity,
        vcc: Part::new(vcc, 0.0),
        r1: Part::new(r[0], 0.05),
        r2: Part::new(r[1], 0.05),
        rc: Part::new(r[2], 0.05),
        re1: Part::new(r[3], 0.05),
        re2: Part::new(r[4], 0.05),
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    }
}

fn profile(min: f64, typ: f64, max: f64, vbe: f64) -> Profile {
    Profile {
        beta_min: min,
        beta_typ: typ,
        beta_max: max,
        is_25: is_from_vbe(vbe),
        ..Profile::default()
    }
}

/// Invented test designs (not from any book): two NPN, two PNP, one without RE1.
fn designs() -> Vec<(&'static str, Stage, Profile)> {
    vec![
        (
            "npn15",
            stage(Polarity::Npn, 15.0, [68e3, 15e3, 3.9e3, 220.0, 820.0]),
            profile(120.0, 210.0, 360.0, 0.66),
        ),
        (
            "pnp9",
            stage(Polarity::Pnp, 9.0, [12e3, 47e3, 2.7e3, 150.0, 820.0]),
            profile(100.0, 180.0, 300.0, 0.64),
        ),
        (
            "npn24",
            stage(Polarity::Npn, 24.0, [150e3, 18e3, 10e3, 0.0, 1.5e3]),
            profile(80.0, 150.0, 250.0, 0.68),
        ),
        (
            "pnp5",
            stage(Polarity::Pnp, 5.0, [10e3, 18e3, 1e3, 47.0, 470.0]),
            profile(150.0, 250.0, 450.0, 0.62),
        ),
    ]
}

fn readings_of(s: &Stage, p: &Profile, beta: f64, fault: Option<Fault>) -> Option<Readings> {
    let (st, dev) = match fault {
        Some(Fault::Device(d)) => (*s, Some(d)),
        Some(f) => (s.with_fault(f), None),
        None => (*s, None),
    };
    let op = solve(
        &st,
        p,
        Conditions {
            temp_c: 25.0,
            beta_25: beta,
            fault: dev,
            loads: Default::default(),
        },
    )
    .ok()?;
    Some(Readings {
        vcc: op.vcc,
        vb: op.vb,
        ve: op.ve,
        vc: op.vc,
    })
}

fn all_faults(s: &Stage, rng: &mut Rng) -> Vec<(Suspect, Fault)> {
    let mut v = Vec::new();
    for r in Resistor::ALL {
        let nominal = s.resistor(r);
        if nominal == 0.0 {
            continue;
        }
        v.push((Suspect::Resistor(r, ResistorMode::Open), Fault::Open(r)));
        v.push((Suspect::Resistor(r, ResistorMode::Short), Fault::Short(r)));
        let low = rng.pick(&[0.1, 0.5, 0.3, 0.01, 0.2]);
        v.push((
            Suspect::Resistor(r, ResistorMode::Low),
            Fault::Value(r, nominal * low),
        ));
        let high = rng.pick(&[10.0, 2.0, 3.0, 100.0, 5.0]);
        v.push((
            Suspect::Resistor(r, ResistorMode::High),
            Fault::Value(r, nominal * high),
        ));
    }
    for d in DeviceFault::ALL {
        v.push((Suspect::Device(d), Fault::Device(d)));
    }
    v
}

fn in_group(d: &Diagnosis, rank: usize, truth: Suspect) -> bool {
    let faults: Vec<_> = d.faults().collect();
    match faults.get(rank) {
        Some(h) => h.suspect == truth || d.equivalents(h).any(|e| e.suspect == truth),
        None => false,
    }
}

#[derive(Default)]
struct Row {
    boards: u32,
    failed: u32,
    first: u32,
    top3: u32,
    wrong: BTreeMap<String, u32>,
}

#[test]
fn seeded_sweep_of_good_and_faulty_boards() {
    let meter = Meter::default();
    let var = Variation::at(25.0);
    let mut rng = Rng(0x5EED_B1A5_0001);
    let mut table: BTreeMap<String, Row> = BTreeMap::new();
    let (mut good, mut good_pass) = (0u32, 0u32);
    let (mut faulty, mut faulty_fail, mut detectable, mut detectable_fail) =
        (0u32, 0u32, 0u32, 0u32);
    let (mut ranked, mut first, mut top3) = (0u32, 0u32, 0u32);
    let (mut solves_max, mut solves_all, mut unexplained_true) = (0u32, 0u64, 0u32);
    const BOARDS_PER_DESIGN: usize = 300;
    for (name, design, prof) in designs() {
        for _ in 0..BOARDS_PER_DESIGN {
            // A board: every resistor anywhere in its tolerance, hFE anywhere in the spread,
            // the supply within ±10 % of nominal.
            let mut board = design;
            board.vcc.value = design.vcc.value * rng.range(0.9, 1.1);
            for r in Resistor::ALL {
                let p = board.part_mut(r);
                p.value *= 1.0 + p.tol * rng.range(-1.0, 1.0);
            }
            let beta = rng.range(prof.beta_min, prof.beta_max);
            let fault = if rng.unit() < 0.2 {
                None
            } else {
                let list = all_faults(&board, &mut rng);
                Some(rng.pick(&list))
            };
            let Some(clean) = readings_of(&board, &prof, beta, fault.map(|f| f.1)) else {
                panic!("{name}: the engine could not solve {fault:?}");
            };
            let noise = 0.004;
            let r = Readings {
                vcc: clean.vcc + rng.range(-noise, noise),
                vb: clean.vb + rng.range(-noise, noise),
                ve: clean.ve + rng.range(-noise, noise),
                vc: clean.vc + rng.range(-noise, noise),
            };
            let limits = limits(&design, &prof, &var, &meter, r.vcc).unwrap();
            let Ok(verdict) = check(&design, &limits, &meter, &r) else {
                // Plausibility refusals are counted as failures of detection below.
                if let Some((truth, _)) = fault {
                    let row = table.entry(label(truth)).or_default();
                    row.boards += 1;
                    faulty += 1;
                    detectable += 1;
                }
                continue;
            };
            let Some((truth, _)) = fault else {
                good += 1;
                good_pass += u32::from(verdict.pass);
                continue;
            };
            faulty += 1;
            faulty_fail += u32::from(!verdict.pass);
            // Detectable: the noise-free readings fail the limits by more than the noise.
            let margin = |v: f64, w: Window| (w.low - v).max(v - w.high);
            let clean_fail = [
                margin(clean.vb, limits.vb),
                margin(clean.ve, limits.ve),
                margin(clean.vc, limits.vc),
            ]
            .iter()
            .any(|m| *m > 2.0 * noise);
            let row = table.entry(label(truth)).or_default();
            row.boards += 1;
            if !clean_fail {
                continue;
            }
            detectable += 1;
            detectable_fail += u32::from(!verdict.pass);
            if verdict.pass {
                continue;
            }
            row.failed += 1;
            let d = diagnose(&design, &prof, &r, &meter, &var).unwrap();
            solves_max = solves_max.max(d.solves);
            solves_all += u64::from(d.solves);
            unexplained_true += u32::from(!d.explained);
            ranked += 1;
            let is_first = in_group(&d, 0, truth);
            let is_top3 = (0..3).any(|k| in_group(&d, k, truth));
            first += u32::from(is_first);
            top3 += u32::from(is_top3);
            row.first += u32::from(is_first);
            row.top3 += u32::from(is_top3);
            if !is_first {
                let pick = d
                    .faults()
                    .next()
                    .map_or("none".to_string(), |h| label(h.suspect));
                *row.wrong.entry(format!("{name}:{pick}")).or_default() += 1;
                if std::env::var_os("SWEEP_DETAIL").is_some() {
                    let t = d.ranked.iter().find(|h| h.suspect == truth);
                    let b = d.faults().next();
                    println!(
                        "{name} truth {} {:?} -> chi2 {:?} est {:?} | pick {:?} chi2 {:?} est {:?} | r {r:?} t {:?} b {:?}",
                        label(truth),
                        fault.map(|f| f.1),
                        t.map(|h| h.chi2),
                        t.and_then(|h| h.estimate),
                        b.map(|h| label(h.suspect)),
                        b.map(|h| h.chi2),
                        b.and_then(|h| h.estimate),
                        t.map(|h| h.predicted),
                        b.map(|h| h.predicted),
                    );
                }
            }
        }
    }
    println!("\nconfusion table (true fault: boards, failed, first, top 3, wrong first picks)");
    for (k, row) in &table {
        let wrong: Vec<_> = row.wrong.iter().map(|(k, n)| format!("{k}×{n}")).collect();
        println!(
            "{k:<14} {:>4} {:>4} {:>4} {:>4}  {}",
            row.boards,
            row.failed,
            row.first,
            row.top3,
            wrong.join(" ")
        );
    }
    let pct = |a: u32, b: u32| 100.0 * f64::from(a) / f64::from(b.max(1));
    println!(
        "good boards pass {good_pass}/{good} ({:.1} %); faulty boards fail {faulty_fail}/{faulty} \
         ({:.1} %); detectable faults fail {detectable_fail}/{detectable} ({:.1} %)",
        pct(good_pass, good),
        pct(faulty_fail, faulty),
        pct(detectable_fail, detectable)
    );
    println!(
        "true fault first {first}/{ranked} ({:.1} %), within three {top3}/{ranked} ({:.1} %); \
         'no single fault' on {unexplained_true}; most solves in one diagnosis {solves_max}, \
         {:.0} on average",
        pct(first, ranked),
        pct(top3, ranked),
        solves_all as f64 / f64::from(ranked.max(1))
    );
    assert!(good + faulty >= 1000);
    assert!(pct(good_pass, good) >= 99.0);
    assert!(pct(detectable_fail, detectable) >= 99.0);
    assert!(pct(first, ranked) >= 95.0);
    assert!(pct(top3, ranked) >= 99.0);
}

fn label(s: Suspect) -> String {
    format!("{} {}", s.part(), s.mode())
}
