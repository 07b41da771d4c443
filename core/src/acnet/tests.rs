//! The solvers of the small-signal network against each other and against exact solutions.
use super::*;
use crate::stage::Part;

fn rnd(seed: &mut u64) -> f64 {
    *seed ^= *seed << 13;
    *seed ^= *seed >> 7;
    *seed ^= *seed << 17;
    (*seed >> 11) as f64 / (1u64 << 53) as f64
}

/// A value from `lo` up over four decades, uniform in log.
fn decades(lo: f64, seed: &mut u64) -> f64 {
    lo * libm::pow(10.0, 4.0 * rnd(seed))
}

/// A transistor two-port of a forward-active device, each entry over four decades.
fn draw_admittance(sd: &mut u64) -> Admittance {
    Admittance {
        y11: decades(1e-6, sd),
        y12: -decades(1e-12, sd),
        y21: decades(1e-4, sd),
        y22: decades(1e-8, sd),
    }
}

/// The real elimination gives bit for bit the real parts of the complex one (and zero
/// imaginary parts) for networks with no capacitor at a finite frequency: stages spread over
/// four decades of each resistor, every real set-up, with and without source and load.
#[test]
fn real_elimination_equals_the_complex_one_bit_for_bit() {
    let mut seed = 0x2545_f491_4f6c_dd1du64;
    let sd = &mut seed;
    let mut checked = 0;
    for _ in 0..300 {
        let r = decades;
        let stage = Stage {
            r1: Part::new(r(1e3, sd), 0.05),
            r2: Part::new(r(1e2, sd), 0.05),
            rc: Part::new(r(1e2, sd), 0.05),
            re1: Part::new(if rnd(sd) < 0.2 { 0.0 } else { r(1.0, sd) }, 0.05),
            re2: Part::new(r(10.0, sd), 0.05),
            rl: if rnd(sd) < 0.8 {
                Some(r(1e2, sd))
            } else {
                None
            },
            rs: if rnd(sd) < 0.2 { 0.0 } else { r(10.0, sd) },
            ..crate::console::default_stage()
        };
        let y = draw_admittance(sd);
        let caps = [Cap::Short, Cap::Open];
        for cin in caps {
            for cout in caps {
                for ce in caps {
                    for inject in [
                        source_emf(&stage),
                        injection(IN, GROUND),
                        injection(OUT, GROUND),
                    ] {
                        let setup = Setup {
                            cin,
                            cout,
                            ce,
                            with_source: rnd(sd) < 0.7,
                            with_load: rnd(sd) < 0.7,
                            inject,
                        };
                        let a = solve_in::<Re>(&stage, &y, &setup);
                        let b = solve_in::<C>(&stage, &y, &setup);
                        match (a, b) {
                            (Some(a), Some(b)) => {
                                for (x, z) in a.iter().zip(&b) {
                                    assert!(
                                        x.re.to_bits() == z.re.to_bits()
                                            || (x.re == 0.0 && z.re == 0.0),
                                        "{x} against {z}"
                                    );
                                    assert_eq!(x.im, 0.0);
                                    assert_eq!(z.im, 0.0, "the complex path stays real");
                                }
                                checked += 1;
                            }
                            (None, None) => {}
                            (a, b) => panic!("one path solved, the other not: {a:?} {b:?}"),
                        }
                    }
                }
            }
        }
    }
    assert!(checked > 5000, "{checked}");
}

/// The reduced gain in double precision equals the 6×6 elimination's v(OUT) within 10⁻³
/// relative plus 10⁻⁴ V/V, and the single-precision one the double within a thousandth of
/// the default gain meter's error (2 % plus 0.02 V/V)
/// (far below a gain meter's resolution; the elimination loses digits to the 1 MS shorts,
/// most where the emitter is left with nothing but a short to a floating node: see the exact
/// cases below) on
/// stages spread over four decades of each resistor, every capacitor short, open, or at a
/// frequency from 0.1 Hz to 100 kHz, with zero-ohm RE1 and RS, with and without a load; and
/// both find the same networks singular.
#[test]
fn reduced_gain_equals_the_elimination() {
    let mut seed = 0x9e37_79b9_7f4a_7c15u64;
    let sd = &mut seed;
    let mut checked = 0;
    let mut worst = 0.0f64;
    let mut single_worst = 0.0f64;
    for _ in 0..400 {
        let r = decades;
        let cap = |sd: &mut u64| Some(Part::new(1e-7 * libm::pow(10.0, 4.0 * rnd(sd)), 0.2));
        let stage = Stage {
            r1: Part::new(r(1e3, sd), 0.05),
            r2: Part::new(r(1e2, sd), 0.05),
            rc: Part::new(r(1e2, sd), 0.05),
            re1: Part::new(if rnd(sd) < 0.2 { 0.0 } else { r(1.0, sd) }, 0.05),
            re2: Part::new(
                if rnd(sd) < 0.1 {
                    f64::INFINITY
                } else {
                    r(10.0, sd)
                },
                0.05,
            ),
            rl: if rnd(sd) < 0.8 {
                Some(r(1e2, sd))
            } else {
                None
            },
            rs: if rnd(sd) < 0.2 { 0.0 } else { r(10.0, sd) },
            cin: cap(sd),
            cout: cap(sd),
            ce: cap(sd),
            ..crate::console::default_stage()
        };
        let y = draw_admittance(sd);
        let f = 0.1 * libm::pow(10.0, 6.0 * rnd(sd));
        let states = [Cap::Short, Cap::Open, Cap::At(f)];
        for cin in states {
            for cout in states {
                for ce in states {
                    let setup = Setup {
                        cin,
                        cout,
                        ce,
                        inject: source_emf(&stage),
                        ..Setup::midband()
                    };
                    let full = solve(&stage, &y, &setup).map(|v| at(&v, OUT));
                    let reduced = reduced::<f64>(&stage, &y, cin, cout, ce);
                    let single = source_to_load(&stage, &y, cin, cout, ce);
                    if let (Some(d), Some(s)) = (reduced, single) {
                        // In parts of the default gain meter's error.
                        let meter = 0.02 * d.norm() + 0.02;
                        single_worst = single_worst.max((d - s).norm() / meter);
                        assert!(
                            (d - s).norm() <= 1e-3 * meter,
                            "single {s} against double {d}"
                        );
                        let m = source_to_load_magnitude(&stage, &y, cin, cout, ce);
                        assert!(
                            (m - d.norm()).abs() <= 1e-3 * meter,
                            "single |{m}| against double {d}"
                        );
                    }
                    match (full, reduced) {
                        (Some(a), Some(b)) => {
                            let scale = a.norm().max(1e-12);
                            let rel = (a - b).norm() / scale;
                            worst = worst.max(rel);
                            assert!(
                                (a - b).norm() <= 1e-3 * scale + 1e-4,
                                "{a} against {b} ({cin:?} {cout:?} {ce:?}) {stage:?} {y:?}"
                            );
                            checked += 1;
                        }
                        (None, None) => {}
                        (a, b) => panic!("one path solved, the other not: {a:?} {b:?}"),
                    }
                }
            }
        }
    }
    assert!(checked > 9000, "{checked}");
    println!(
        "{checked} networks, largest relative difference {worst:e}; single against double, at most {single_worst:e} of the meter's error"
    );
}

/// Two midband networks where the 6×6 elimination and the reduced form differ (by 5·10⁻⁷
/// and 2.5·10⁻⁵ relative): the reduced form agrees to 13 digits with the exact solution of
/// the same 6-node network, computed in exact rational arithmetic from the same f64 inputs
/// (an independent Gaussian elimination over Python's `fractions.Fraction`, run once by
/// hand; its results are the constants here).
#[test]
fn reduced_gain_matches_an_exact_rational_solve() {
    let cases = [
        (
            [
                2749011.034645803,
                3777.5076578645767,
                8362.79587208829,
                0.0,
                2292.760382511804,
            ],
            251785.00843146822,
            1750.179053062501,
            [
                1.6622217664947464e-6,
                -7.810446366649556e-10,
                0.121715625570974,
                6.789647749980508e-8,
            ],
            -670.6274936167883,
        ),
        (
            [
                644370.6092950356,
                142.69269489037094,
                94095.36599276839,
                6887.671046055461,
                27.309442121338723,
            ],
            512653.731502118,
            10661.688027772827,
            [
                0.0002680875320196135,
                -4.817455682111422e-12,
                0.09538087710107435,
                6.0648381721595725e-5,
            ],
            -0.14834306457218932,
        ),
    ];
    for ([r1, r2, rc, re1, re2], rl, rs, [y11, y12, y21, y22], exact) in cases {
        let stage = Stage {
            r1: Part::new(r1, 0.05),
            r2: Part::new(r2, 0.05),
            rc: Part::new(rc, 0.05),
            re1: Part::new(re1, 0.05),
            re2: Part::new(re2, 0.05),
            rl: Some(rl),
            rs,
            ..crate::console::default_stage()
        };
        let y = Admittance { y11, y12, y21, y22 };
        let v = reduced::<f64>(&stage, &y, Cap::Short, Cap::Short, Cap::Short).unwrap();
        assert!(
            (v.re - exact).abs() <= 1e-13 * exact.abs(),
            "{v} against {exact}"
        );
        assert_eq!(v.im, 0.0);
    }
}
