//! Seeded sweep of simulated boards through the DC check, the signal test's windows and the
//! diagnosis on DC and gain readings together: random in-tolerance resistors and capacitors, hFE
//! within its spread, a random supply, one fault or none (capacitor faults weighted up), a few
//! millivolts of DC reading noise and half a percent of gain noise. The two test frequencies are
//! the ones `signaltest::propose` gives.
//!
//! Run with `cargo test --release -p biasjig-core --test signal_sweep -- --nocapture` to see the
//! confusion table.

// The judging path with gains exists in builds with the signal test only.
#![cfg(feature = "signal-test")]

use biasjig_core::device::Profile;
use biasjig_core::diagnose::{Hypothesis, ResistorMode, Suspect};
use biasjig_core::judge::{judge_with_signal, JudgeError};
use biasjig_core::response::{magnitude_at, CapState, Caps};
use biasjig_core::settings::TestSettings;
use biasjig_core::signaltest::{proposal_low_corner, propose, ToneReading};
use biasjig_core::solve::{solve, Conditions, NodeLoads};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{Capacitor, Fault, Readings, Resistor, Stage};
use biasjig_testkit::fixtures::{readings, signal_designs as designs};
use biasjig_testkit::rng::Rng;
use biasjig_testkit::sweep::{
    all_faults, draw_fault, in_tolerance, leaves_a_window, print_detail, with_noise, Tally,
};

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
    Some((readings(&op), gains))
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
    all_faults(s, rng)
        .into_iter()
        .map(|(suspect, f)| (suspect, BoardFault::Engine(f)))
        .collect()
}

#[test]
fn seeded_sweep_with_capacitor_faults() {
    let settings = TestSettings::DEFAULT;
    let signal = settings.signal;
    let var = Variation::at(25.0);
    let mut rng = Rng::new(0x5EED_70E5_0001);
    let mut t = Tally::default();
    let boards: usize = std::env::var("SWEEP_BOARDS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(250);
    for (name, design, prof) in designs() {
        let prop = propose(&design, &prof, &var, &signal).unwrap();
        let tones = [prop.midband, prop.poles];
        println!(
            "{name}: tones {} Hz (midband, gain {:.2}) and {} Hz (separation {:.2}); f_low {:.2} Hz",
            prop.midband,
            prop.midband_gain,
            prop.poles,
            prop.separation,
            proposal_low_corner(&design, &prof, &var).unwrap().unwrap_or(0.0)
        );
        for _ in 0..boards {
            let mut board = in_tolerance(&design, 0.05, &mut rng);
            for c in [&mut board.cin, &mut board.cout, &mut board.ce] {
                let p = c.as_mut().unwrap();
                p.value *= 1.0 + p.tol * rng.range(-1.0, 1.0);
            }
            let beta = rng.range(prof.beta_min, prof.beta_max);
            let fault = draw_fault(&mut rng, |rng| faults(&board, rng));
            let (clean, gains) = readings_of(&board, &prof, beta, fault.map(|f| f.1), &tones)
                .unwrap_or_else(|| panic!("{name}: the engine could not solve {fault:?}"));
            let noise = 0.004;
            let r = with_noise(&clean, noise, &mut rng);
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
                t.good += 1;
                t.good_pass += u32::from(pass);
                if !pass && std::env::var_os("SWEEP_DETAIL").is_some() {
                    println!("good fails: {r:?} {read:?}");
                }
                continue;
            };
            t.row(truth).boards += 1;
            // Refused as implausible (no judgement): a detected fault without a diagnosis.
            let Some(j) = j else {
                t.row(truth).detectable += 1;
                t.detectable += 1;
                t.detectable_fail += 1;
                continue;
            };
            // Detectable: the noise-free readings leave a window by more than twice the noise.
            let dc_out = leaves_a_window(&clean, &j.windows.limits, 2.0 * noise);
            let ac_out = j
                .tones
                .iter()
                .zip(&gains)
                .any(|(t, g)| (t.window.low - g).max(g - t.window.high) > 0.01 * g + 0.004);
            if !(dc_out || ac_out) {
                continue;
            }
            t.row(truth).detectable += 1;
            t.detectable += 1;
            t.detectable_fail += u32::from(!pass);
            if pass {
                continue;
            }
            t.row(truth).failed += 1;
            let d = j.diagnosis.expect("a failed board is diagnosed");
            if !t.rank(name, truth, &d) {
                let g = |h: &Hypothesis| format!("g {:?}", h.gains);
                print_detail(name, truth, &fault, &d, g, &format!("read {r:?} {gains:?}"));
            }
        }
    }
    let [good_rate, detected_rate, first_rate, top3_rate] = t.report(true);
    assert!(t.good >= 50 && t.detectable >= 200);
    assert!(good_rate >= 95.0);
    assert!(detected_rate >= 95.0);
    assert!(first_rate >= 85.0);
    assert!(top3_rate >= 95.0);
}
