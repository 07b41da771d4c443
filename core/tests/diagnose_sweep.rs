//! Seeded sweep of simulated boards through check and diagnose: random in-tolerance parts, hFE
//! within its spread, a random supply, one fault or none, and a few millivolts of reading noise.
//!
//! Run with `cargo test -p biasjig-core --test diagnose_sweep -- --nocapture` to see the
//! confusion table.

use biasjig_core::check::check;
use biasjig_core::diagnose::{diagnose, Hypothesis};
use biasjig_core::limits::{limits, Meter};
use biasjig_core::spread::Variation;
use biasjig_testkit::fixtures::{dc_designs as designs, readings_of};
use biasjig_testkit::rng::Rng;
use biasjig_testkit::sweep::{
    all_faults, draw_fault, in_tolerance, leaves_a_window, pct, print_detail, with_noise, Tally,
};

#[test]
fn seeded_sweep_of_good_and_faulty_boards() {
    let meter = Meter::default();
    let var = Variation::at(25.0);
    let mut rng = Rng::new(0x5EED_B1A5_0001);
    let mut t = Tally::default();
    let (mut faulty, mut faulty_fail) = (0u32, 0u32);
    let (mut solves_max, mut unexplained_true) = (0u32, 0u32);
    const BOARDS_PER_DESIGN: usize = 300;
    for (name, design, prof) in designs() {
        for _ in 0..BOARDS_PER_DESIGN {
            // A board: every resistor anywhere in its tolerance, hFE anywhere in the spread,
            // the supply within ±10 % of nominal.
            let board = in_tolerance(&design, 0.1, &mut rng);
            let beta = rng.range(prof.beta_min, prof.beta_max);
            let fault = draw_fault(&mut rng, |rng| all_faults(&board, rng));
            let Some(clean) = readings_of(&board, &prof, beta, fault.map(|f| f.1)) else {
                panic!("{name}: the engine could not solve {fault:?}");
            };
            let noise = 0.004;
            let r = with_noise(&clean, noise, &mut rng);
            let limits = limits(&design, &prof, &var, &meter, r.vcc).unwrap();
            let Ok(verdict) = check(&design, &limits, &meter, &r) else {
                // Plausibility refusals are counted as failures of detection below.
                if let Some((truth, _)) = fault {
                    t.row(truth).boards += 1;
                    faulty += 1;
                    t.detectable += 1;
                }
                continue;
            };
            let Some((truth, _)) = fault else {
                t.good += 1;
                t.good_pass += u32::from(verdict.pass);
                continue;
            };
            faulty += 1;
            faulty_fail += u32::from(!verdict.pass);
            // Detectable: the noise-free readings fail the limits by more than the noise.
            let clean_fail = leaves_a_window(&clean, &limits, 2.0 * noise);
            t.row(truth).boards += 1;
            if !clean_fail {
                continue;
            }
            t.detectable += 1;
            t.detectable_fail += u32::from(!verdict.pass);
            if verdict.pass {
                continue;
            }
            t.row(truth).failed += 1;
            let d = diagnose(&design, &prof, &r, &meter, &var).unwrap();
            solves_max = solves_max.max(d.solves);
            unexplained_true += u32::from(!d.explained);
            if !t.rank(name, truth, &d) {
                let predicted = |h: &Hypothesis| format!("{:?}", h.predicted);
                print_detail(name, truth, &fault, &d, predicted, &format!("r {r:?}"));
            }
        }
    }
    let [good_rate, detected_rate, first_rate, top3_rate] = t.report(false);
    println!(
        "faulty boards fail {faulty_fail}/{faulty} ({:.1} %); 'no single fault' on \
         {unexplained_true}; most solves in one diagnosis {solves_max}",
        pct(faulty_fail, faulty),
    );
    assert!(t.good + faulty >= 1000);
    assert!(good_rate >= 99.0);
    assert!(detected_rate >= 99.0);
    assert!(first_rate >= 95.0);
    assert!(top3_rate >= 99.0);
}
