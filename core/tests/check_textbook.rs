//! Boards built to textbook worked examples, read as the book's exact analysis predicts, must
//! pass the check against limits from the spread, and the derived quantities must match the
//! book's figures.

use biasjig_core::check::check;
use biasjig_core::device::Profile;
use biasjig_core::limits::{limits, Meter};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{Readings, Stage};
use biasjig_testkit::fixtures::{npn, profile as spread_profile};

/// The book's board: NPN, no RE1, 5 % parts.
fn stage(vcc: f64, r1: f64, r2: f64, rc: f64, re: f64) -> Stage {
    npn(vcc, [r1, r2, rc, 0.0, re])
}

fn profile(beta: f64) -> Profile {
    // The books take VBE = 0.7 V; hFE is given as one figure, taken here with a ±20 % spread.
    spread_profile(beta * 0.8, beta, beta * 1.2, 0.7)
}

/// (source, stage, book readings VB, VE, VC from its exact analysis, book IC).
fn boards() -> [(&'static str, Stage, Profile, [f64; 3], f64); 2] {
    [
        (
            // Boylestad & Nashelsky, Electronic Devices and Circuit Theory, 11th ed., Example 4.7
            // (from memory): ETh = 2 V, RTh = 3.55 kΩ, IB = 6.05 µA, IC = 0.85 mA, VCE = 12.22 V;
            // so VB = ETh − IB·RTh = 1.98 V, VE = VB − 0.7 V = 1.28 V, VC = 22 V − IC·RC = 13.5 V.
            "Boylestad & Nashelsky 11th ed. Ex. 4.7",
            stage(22.0, 39e3, 3.9e3, 10e3, 1.5e3),
            profile(140.0),
            [1.98, 1.28, 13.5],
            0.85e-3,
        ),
        (
            // Boylestad & Nashelsky, 11th ed., Example 4.10 (from memory): ETh = 3.81 V,
            // RTh = 17.35 kΩ, IB = 39.6 µA, IC = 1.98 mA; VB = 3.12 V, VE = 2.42 V,
            // VC = 18 V − 1.98 mA·5.6 kΩ = 6.91 V.
            "Boylestad & Nashelsky 11th ed. Ex. 4.10",
            stage(18.0, 82e3, 22e3, 5.6e3, 1.2e3),
            profile(50.0),
            [3.12, 2.42, 6.91],
            1.98e-3,
        ),
    ]
}

#[test]
fn textbook_boards_pass_and_derive_the_book_current() {
    let meter = Meter::default();
    for (source, s, p, [vb, ve, vc], ic) in boards() {
        let lim = limits(&s, &p, &Variation::at(25.0), &meter, s.vcc.value).unwrap();
        let r = Readings {
            vcc: s.vcc.value,
            vb,
            ve,
            vc,
        };
        let v = check(&s, &lim, &meter, &r).unwrap();
        assert!(v.pass, "{source}: {v:?}");
        // IC from the collector drop through the nominal RC: the book's figure to its rounding.
        assert!(
            (v.derived.ic - ic).abs() < 0.02 * ic,
            "{source}: IC {}",
            v.derived.ic
        );
        assert!(
            (v.derived.vbe - 0.7).abs() < 0.011,
            "{source}: VBE {}",
            v.derived.vbe
        );
    }
}

#[test]
fn textbook_board_with_a_wrong_collector_resistor_fails() {
    // The Example 4.7 board with RC a decade high: the collector current cannot flow, the
    // collector sits near the emitter (saturation) and the check fails on VC and VCE.
    let meter = Meter::default();
    let (_, s, p, [vb, ve, _], _) = boards()[0];
    let lim = limits(&s, &p, &Variation::at(25.0), &meter, s.vcc.value).unwrap();
    let r = Readings {
        vcc: 22.0,
        vb,
        ve,
        vc: ve + 0.1,
    };
    let v = check(&s, &lim, &meter, &r).unwrap();
    assert!(!v.pass);
}
