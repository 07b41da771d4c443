//! Pass windows of the DC nodes: the meter's error widens them, they move with the measured
//! supply, the supply's tolerance does not enter (it is measured), PNP windows are signed, and a
//! bad meter or supply is refused.

use biasjig_core::limits::{derived_ic, limits, LimitsError, Meter};
use biasjig_core::spread::{worst_case, Method, Node};
use biasjig_core::stage::Polarity;

use biasjig_testkit::fixtures::{demo_profile, demo_stage, demo_variation as demo_var};

const DC: [Node; 6] = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];

#[test]
fn limits_widen_with_the_meter_and_move_with_the_supply() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let ideal = limits(&s, &p, &v, &Meter::IDEAL, 12.0).unwrap();
    let good = limits(&s, &p, &v, &Meter::default(), 12.0).unwrap();
    let poor = Meter {
        gain_error: 0.02,
        offset: 0.02,
        divider_tol: 0.01,
    };
    let poor = limits(&s, &p, &v, &poor, 12.0).unwrap();
    for n in DC {
        let (a, b, c) = (
            ideal.window(n).unwrap(),
            good.window(n).unwrap(),
            poor.window(n).unwrap(),
        );
        assert!(c.low < b.low && b.low < a.low, "{n:?}");
        assert!(a.high < b.high && b.high < c.high, "{n:?}");
    }
    // VB widens by the meter's error at each edge (a share of the reading plus an offset).
    let e = Meter::default();
    assert!((good.vb.high - (ideal.vb.high + e.error(ideal.vb.high))).abs() < 1e-12);
    // VBE is a difference of two readings: both errors add (wider than either reading alone).
    assert!(good.vbe.width() - ideal.vbe.width() > 2.0 * 2.0 * e.offset);
    // A board on an 11.8 V bench supply: the windows move down with the supply.
    let low = limits(&s, &p, &v, &Meter::default(), 11.8).unwrap();
    assert_eq!(low.vcc, 11.8);
    assert!(low.vb.low < good.vb.low && low.vb.high < good.vb.high);
    assert!(low.vc.low < good.vc.low && low.vc.high < good.vc.high);
    assert!(low.ic.high < good.ic.high);
    // The bare windows at 12 V equal the worst case of the same nodes (supply tolerance zero).
    let wc = worst_case(&s, &p, &v, Method::Exhaustive).unwrap();
    assert!(
        (ideal.vb.low - wc.nodes.vb.min).abs() < 1e-12
            && (ideal.vb.high - wc.nodes.vb.max).abs() < 1e-12
    );
    assert!((ideal.vce.low - wc.nodes.vce.min).abs() < 1e-12);
}

#[test]
fn limits_ignore_the_supply_tolerance_because_it_is_measured() {
    let (mut s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let a = limits(&s, &p, &v, &Meter::default(), 12.0).unwrap();
    s.vcc.tol = 0.1;
    let b = limits(&s, &p, &v, &Meter::default(), 12.0).unwrap();
    assert_eq!(a, b);
}

#[test]
fn limits_of_a_pnp_stage_are_signed() {
    let mut s = demo_stage();
    s.polarity = Polarity::Pnp;
    std::mem::swap(&mut s.r1, &mut s.r2);
    let (p, v) = (demo_profile(), demo_var());
    let lim = limits(&s, &p, &v, &Meter::default(), 12.0).unwrap();
    assert!(lim.vbe.high < 0.0 && lim.vce.high < 0.0);
    assert!(lim.ic.low > 0.0);
    assert!((derived_ic(&s, 12.0, 4.7) - 1e-3).abs() < 1e-15);
}

#[test]
fn bad_meter_and_supply_are_refused() {
    let (s, p, v) = (demo_stage(), demo_profile(), demo_var());
    let bad = Meter {
        gain_error: -0.1,
        ..Meter::default()
    };
    assert_eq!(
        limits(&s, &p, &v, &bad, 12.0).unwrap_err(),
        LimitsError::Meter
    );
    assert_eq!(
        limits(&s, &p, &v, &Meter::default(), f64::NAN).unwrap_err(),
        LimitsError::Supply
    );
}
