//! Seeded sweep of simulated boards through the DC check, the signal test's windows and the
//! diagnosis on DC and gain readings together: random in-tolerance resistors and capacitors, hFE
//! within its spread, a random supply, one fault or none (capacitor faults weighted up), a few
//! millivolts of DC reading noise and half a percent of gain noise. The two test frequencies are
//! the ones `signaltest::propose` gives.
//!
//! Run with `cargo test --release -p biasjig-core --test signal_sweep -- --nocapture` to see the
//! confusion table.

use std::collections::BTreeMap;

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::diagnose::{Diagnosis, ResistorMode, Suspect};
use biasjig_core::judge::{judge_with_signal, JudgeError};
use biasjig_core::limits::Window;
use biasjig_core::response::{magnitude_at, CapState, Caps};
use biasjig_core::settings::TestSettings;
use biasjig_core::signaltest::{propose, ToneReading};
use biasjig_core::solve::{solve, Conditions, NodeLoads};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{
    Capacitor, DeviceFault, Fault, Part, Polarity, Readings, Resistor, Stage,
};

/// SplitMix64, the same numbers on every platform.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
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

#[allow(clippy::too_many_arguments)]
fn stage(polarity: Polarity, vcc: f64, r: [f64; 5], rl: f64, rs: f64, c: [f64; 3]) -> Stage {
    Stage {
        polarity,
        vcc: Part::new(vcc, 0.1),
        r1: Part::new(r[0], 0.05),
        r2: Part::new(r[1], 0.05),
        rc: Part::new(r[2], 0.05),
        re1: Part::new(r[3], 0.05),
        re2: Part::new(r[4], 0.05),
        rl: Some(rl),
        rs,
        cin: Some(Part::new(c[0], 0.2)),
        cout: Some(Part::new(c[1], 0.2)),
        ce: Some(Part::new(c[2], 0.2)),
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

/// Invented test designs (not from any book).
fn designs() -> Vec<(&'static str, Stage, Profile)> {
    vec![
        (
            "npn12",
            stage(
                Polarity::Npn,
                12.0,
                [47e3, 10e3, 4.7e3, 220.0, 820.0],
                15e3,
                600.0,
                [4.7e-6, 2.2e-6, 47e-6],
            ),
            profile(100.0, 180.0, 300.0, 0.65),
        ),
        (
            "pnp9",
            stage(
                Polarity::Pnp,
                9.0,
                [12e3, 47e3, 2.7e3, 150.0, 820.0],
                10e3,
                1e3,
                [2.2e-6, 1e-6, 100e-6],
            ),
            profile(120.0, 200.0, 350.0, 0.64),
        ),
    ]
}

/// A board's fault: a resistor or transistor fault (the engine's), or a capacitor's state.
#[derive(Clone, Copy, Debug)]
enum BoardFault {
    Engine(Fault),
    Cap(Capacitor, CapState),
}

/// DC readings (the test set-up: RS on the input, RL on the output) and the gains at `tones`.
fn readings_of(
    s: &Stage,
    p: &Profile,
    beta: f64,
    fault: Option<BoardFault>,
    tones: &[f64],
) -> Option<(Readings, Vec<f64>)> {
    let mut caps = Caps::nominal(s);
    let (ac, dev) = match fault {
        Some(BoardFault::Engine(Fault::Device(d))) => (*s, Some(d)),
        Some(BoardFault::Engine(f)) => (s.with_fault(f), None),
        Some(BoardFault::Cap(c, st)) => {
            caps = caps.with(c, st);
            (*s, None)
        }
        None => (*s, None),
    };
    // The DC test set-up: RS on the input and RL on the output stay connected.
    let mut loads = NodeLoads::NONE;
    let dc = match fault {
        Some(BoardFault::Cap(Capacitor::Ce, CapState::Short)) => {
            ac.with_fault(Fault::Short(Resistor::Re2))
        }
        Some(BoardFault::Cap(Capacitor::Cin, CapState::Short)) => {
            loads.base = Some(ac.rs);
            ac
        }
        Some(BoardFault::Cap(Capacitor::Cout, CapState::Short)) => {
            loads.collector = ac.rl;
            ac
        }
        _ => ac,
    };
    let op = solve(
        &dc,
        p,
        Conditions {
            temp_c: 25.0,
            beta_25: beta,
            fault: dev,
            loads,
        },
    )
    .ok()?;
    let gains = tones
        .iter()
        .map(|f| magnitude_at(&ac, &op, &caps, *f))
        .collect();
    Some((
        Readings {
            vcc: op.vcc,
            vb: op.vb,
            ve: op.ve,
            vc: op.vc,
        },
        gains,
    ))
}

fn faults(s: &Stage, rng: &mut Rng) -> Vec<(Suspect, BoardFault)> {
    let mut v = Vec::new();
    if rng.unit() < 0.5 {
        for c in Capacitor::ALL {
            let nominal = s.capacitor(c).unwrap().value;
            v.push((
                Suspect::Capacitor(c, ResistorMode::Open),
                BoardFault::Cap(c, CapState::Open),
            ));
            v.push((
                Suspect::Capacitor(c, ResistorMode::Short),
                BoardFault::Cap(c, CapState::Short),
            ));
            let low = rng.pick(&[0.1, 0.05, 0.2, 0.3, 0.01]);
            v.push((
                Suspect::Capacitor(c, ResistorMode::Low),
                BoardFault::Cap(c, CapState::Fitted(nominal * low)),
            ));
            let high = rng.pick(&[3.0, 5.0, 10.0]);
            v.push((
                Suspect::Capacitor(c, ResistorMode::High),
                BoardFault::Cap(c, CapState::Fitted(nominal * high)),
            ));
        }
        return v;
    }
    for r in Resistor::ALL {
        let nominal = s.resistor(r);
        v.push((
            Suspect::Resistor(r, ResistorMode::Open),
            BoardFault::Engine(Fault::Open(r)),
        ));
        v.push((
            Suspect::Resistor(r, ResistorMode::Short),
            BoardFault::Engine(Fault::Short(r)),
        ));
        let low = rng.pick(&[0.1, 0.5, 0.3, 0.01, 0.2]);
        v.push((
            Suspect::Resistor(r, ResistorMode::Low),
            BoardFault::Engine(Fault::Value(r, nominal * low)),
        ));
        let high = rng.pick(&[10.0, 2.0, 3.0, 100.0, 5.0]);
        v.push((
            Suspect::Resistor(r, ResistorMode::High),
            BoardFault::Engine(Fault::Value(r, nominal * high)),
        ));
    }
    for d in DeviceFault::ALL {
        v.push((Suspect::Device(d), BoardFault::Engine(Fault::Device(d))));
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

fn label(s: Suspect) -> String {
    format!("{} {}", s.part(), s.mode())
}

#[derive(Default)]
struct Row {
    boards: u32,
    detectable: u32,
    failed: u32,
    first: u32,
    top3: u32,
    wrong: BTreeMap<String, u32>,
}

#[test]
fn seeded_sweep_with_capacitor_faults() {
    let settings = TestSettings::DEFAULT;
    let signal = settings.signal;
    let var = Variation::at(25.0);
    let mut rng = Rng(0x5EED_70E5_0001);
    let mut table: BTreeMap<String, Row> = BTreeMap::new();
    let (mut good, mut good_pass) = (0u32, 0u32);
    let (mut detectable, mut detectable_fail) = (0u32, 0u32);
    let (mut ranked, mut first, mut top3) = (0u32, 0u32, 0u32);
    let mut solves_all = 0u64;
    let boards: usize = std::env::var("SWEEP_BOARDS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(250);
    for (name, design, prof) in designs() {
        let prop = propose(&design, &prof, &var, &signal).unwrap();
        let tones = [prop.midband, prop.poles];
        println!(
            "{name}: tones {} Hz (midband, gain {:.2}) and {} Hz (separation {:.2}); f_low {:.2} Hz",
            prop.midband, prop.midband_gain, prop.poles, prop.separation, prop.f_low
        );
        for _ in 0..boards {
            let mut board = design;
            board.vcc.value = design.vcc.value * rng.range(0.95, 1.05);
            for r in Resistor::ALL {
                let p = board.part_mut(r);
                p.value *= 1.0 + p.tol * rng.range(-1.0, 1.0);
            }
            for c in [&mut board.cin, &mut board.cout, &mut board.ce] {
                let p = c.as_mut().unwrap();
                p.value *= 1.0 + p.tol * rng.range(-1.0, 1.0);
            }
            let beta = rng.range(prof.beta_min, prof.beta_max);
            let fault = if rng.unit() < 0.2 {
                None
            } else {
                let list = faults(&board, &mut rng);
                Some(rng.pick(&list))
            };
            let (clean, gains) = readings_of(&board, &prof, beta, fault.map(|f| f.1), &tones)
                .unwrap_or_else(|| panic!("{name}: the engine could not solve {fault:?}"));
            let noise = 0.004;
            let r = Readings {
                vcc: clean.vcc + rng.range(-noise, noise),
                vb: clean.vb + rng.range(-noise, noise),
                ve: clean.ve + rng.range(-noise, noise),
                vc: clean.vc + rng.range(-noise, noise),
            };
            let read: Vec<ToneReading> = tones
                .iter()
                .zip(&gains)
                .map(|(f, g)| ToneReading {
                    f: *f,
                    gain: (g * (1.0 + rng.range(-0.005, 0.005)) + rng.range(-0.002, 0.002))
                        .max(0.0),
                })
                .collect();
            // The one judging path: windows, verdict and diagnosis, DC and signal together.
            let judged = judge_with_signal(&design, &prof, &settings, &r, &read);
            let j = match judged {
                Ok(j) => Some(j),
                Err(JudgeError::Implausible(_)) => None,
                Err(e) => panic!("{name}: {e}"),
            };
            let pass = j.as_ref().is_some_and(|j| j.verdict.pass);
            let Some((truth, _)) = fault else {
                good += 1;
                good_pass += u32::from(pass);
                if !pass && std::env::var_os("SWEEP_DETAIL").is_some() {
                    println!("good fails: {r:?} {read:?}");
                }
                continue;
            };
            let row = table.entry(label(truth)).or_default();
            row.boards += 1;
            // Refused as implausible (no judgement): a detected fault without a diagnosis.
            let Some(j) = j else {
                row.detectable += 1;
                detectable += 1;
                detectable_fail += 1;
                continue;
            };
            // Detectable: the noise-free readings leave a window by more than twice the noise.
            let lim = &j.windows.limits;
            let margin = |v: f64, w: Window| (w.low - v).max(v - w.high);
            let dc_out = [
                margin(clean.vb, lim.vb),
                margin(clean.ve, lim.ve),
                margin(clean.vc, lim.vc),
            ]
            .iter()
            .any(|m| *m > 2.0 * noise);
            let ac_out = j
                .tones
                .iter()
                .zip(&gains)
                .any(|(t, g)| (t.window.low - g).max(g - t.window.high) > 0.01 * g + 0.004);
            if !(dc_out || ac_out) {
                continue;
            }
            row.detectable += 1;
            detectable += 1;
            detectable_fail += u32::from(!pass);
            if pass {
                continue;
            }
            row.failed += 1;
            let d = j.diagnosis.expect("a failed board is diagnosed");
            solves_all += u64::from(d.solves);
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
                        "{name} truth {} {:?} -> chi2 {:?} est {:?} g {:?} | pick {:?} chi2 {:?} est {:?} g {:?} | read {:?} {:?}",
                        label(truth),
                        fault.map(|f| f.1),
                        t.map(|h| h.chi2),
                        t.and_then(|h| h.estimate),
                        t.map(|h| h.gains),
                        b.map(|h| label(h.suspect)),
                        b.map(|h| h.chi2),
                        b.and_then(|h| h.estimate),
                        b.map(|h| h.gains),
                        r,
                        gains,
                    );
                }
            }
        }
    }
    println!("\nconfusion table (true fault: boards, detectable, failed, first, top 3, wrong first picks)");
    for (k, row) in &table {
        let wrong: Vec<_> = row.wrong.iter().map(|(k, n)| format!("{k}×{n}")).collect();
        println!(
            "{k:<14} {:>4} {:>4} {:>4} {:>4} {:>4}  {}",
            row.boards,
            row.detectable,
            row.failed,
            row.first,
            row.top3,
            wrong.join(" ")
        );
    }
    let pct = |a: u32, b: u32| 100.0 * f64::from(a) / f64::from(b.max(1));
    println!(
        "good boards pass {good_pass}/{good} ({:.1} %); detectable faults fail \
         {detectable_fail}/{detectable} ({:.1} %)",
        pct(good_pass, good),
        pct(detectable_fail, detectable)
    );
    println!(
        "true fault first or in its group {first}/{ranked} ({:.1} %), within three {top3}/{ranked} \
         ({:.1} %); {:.0} solves per diagnosis on average",
        pct(first, ranked),
        pct(top3, ranked),
        solves_all as f64 / f64::from(ranked.max(1))
    );
    assert!(good >= 50 && detectable >= 200);
    assert!(pct(good_pass, good) >= 95.0);
    assert!(pct(detectable_fail, detectable) >= 95.0);
    assert!(pct(first, ranked) >= 85.0);
    assert!(pct(top3, ranked) >= 95.0);
}
