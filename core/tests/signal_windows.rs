//! The signal test's windows: the worst case over the corners bounds every in-tolerance board of
//! a seeded Monte Carlo (checked, not assumed), the guard band is the signal meter's error, and
//! the proposed frequencies do what they say. Invented stages (ours).

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::response::{magnitude_at, Caps};
use biasjig_core::signaltest::{monte_carlo, propose, windows, SignalMeter};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{Part, Polarity, Stage};

fn stages() -> Vec<(Stage, Profile)> {
    let p = |min: f64, typ: f64, max: f64| Profile {
        beta_min: min,
        beta_typ: typ,
        beta_max: max,
        is_25: is_from_vbe(0.65),
        ..Profile::default()
    };
    let s = |pol, vcc: f64, r: [f64; 5], rl: f64, rs: f64, c: [f64; 3]| Stage {
        polarity: pol,
        vcc: Part::new(vcc, 0.05),
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
    };
    vec![
        (
            s(
                Polarity::Npn,
                12.0,
                [47e3, 10e3, 4.7e3, 220.0, 820.0],
                15e3,
                600.0,
                [4.7e-6, 2.2e-6, 47e-6],
            ),
            p(100.0, 180.0, 300.0),
        ),
        (
            s(
                Polarity::Pnp,
                9.0,
                [12e3, 47e3, 2.7e3, 150.0, 820.0],
                10e3,
                1e3,
                [2.2e-6, 1e-6, 100e-6],
            ),
            p(120.0, 200.0, 350.0),
        ),
    ]
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
        assert!(prop.f_low > 0.0 && prop.f_low < prop.midband);
    }
}
