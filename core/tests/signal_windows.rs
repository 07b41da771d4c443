//! The signal test's windows: the worst case over the corners bounds every in-tolerance board of
//! a seeded Monte Carlo (checked, not assumed), the guard band is the signal meter's error, and
//! the proposed frequencies do what they say. Invented stages (ours).

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::response::{magnitude_at, Caps};
use biasjig_core::signaltest::{monte_carlo, proposal_low_corner, propose, windows, SignalMeter};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::Variation;
use biasjig_core::stage::Stage;
use biasjig_testkit::fixtures::signal_designs;

/// The signal designs of the sweep with the supply at 5 % and VBE 0.65 V at 1 mA on both.
fn stages() -> Vec<(Stage, Profile)> {
    signal_designs()
        .into_iter()
        .map(|(_, mut s, mut p)| {
            s.vcc.tol = 0.05;
            p.is_25 = is_from_vbe(0.65);
            (s, p)
        })
        .collect()
}

#[test]
fn the_worst_case_bounds_the_monte_carlo() {
    let var = Variation::between(-10.0, 55.0);
    let ideal = SignalMeter {
        gain_error: 0.0,
        floor: 0.0,
    };
    for (s, p) in stages() {
        let freqs = [5.0, 30.0, 150.0, 2000.0];
        let wc = windows(&s, &p, &var, &ideal, s.vcc.value, &freqs).unwrap();
        let (mc, runs) = monte_carlo(&s, &p, &var, s.vcc.value, &freqs, 3000, 11).unwrap();
        assert_eq!(runs, 3000);
        for (w, m) in wc.iter().zip(&mc) {
            assert!(
                w.min <= m.min * (1.0 + 1e-9) && m.max <= w.max * (1.0 + 1e-9),
                "{w:?} {m:?}"
            );
            assert!(w.min < w.nominal && w.nominal < w.max);
            // With an ideal signal meter the window is the bare worst case.
            assert_eq!((w.low, w.high), (w.min, w.max));
            // The Monte Carlo spreads inside it, not at a point.
            assert!(
                m.std > 0.0 && m.max - m.min > 0.2 * (w.max - w.min),
                "{w:?} {m:?}"
            );
        }
        // The guard band is the signal meter's error at each edge.
        let meter = SignalMeter::default();
        let guarded = windows(&s, &p, &var, &meter, s.vcc.value, &freqs).unwrap();
        for (g, w) in guarded.iter().zip(&wc) {
            assert!((g.high - (w.max + meter.error(w.max))).abs() < 1e-12);
            assert!((g.low - (w.min - meter.error(w.min)).max(0.0)).abs() < 1e-12);
        }
    }
}

#[test]
fn proposed_frequencies_do_what_they_say() {
    let var = Variation::at(25.0);
    for (s, p) in stages() {
        let prop = propose(&s, &p, &var, &SignalMeter::default()).unwrap();
        let op = solve(&s, &p, Conditions::typical(&p)).unwrap();
        let caps = Caps::nominal(&s);
        let at = |f: f64| magnitude_at(&s, &op, &caps, f);
        // Midband: within 1 % of the midband gain; the poles tone below it.
        assert!(at(prop.midband) >= 0.99 * prop.midband_gain, "{prop:?}");
        assert!(
            prop.poles < prop.midband && prop.separation > 0.3,
            "{prop:?}"
        );
        let f_low = proposal_low_corner(&s, &p, &var).unwrap().unwrap_or(0.0);
        assert!(f_low > 0.0 && f_low < prop.midband);
    }
}
