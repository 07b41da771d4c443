//! Warnings a designer needs about a part set: what the numbers alone do not say.

use core::fmt;

use crate::solve::OperatingPoint;
use crate::stage::{Capacitor, Polarity, Resistor, Stage};
use crate::units::{Eng, Fixed};

/// RE1 below this multiple of re = VT/IE lets the junction set a large part of the gain
/// (common practice: RE1 at least a few times re for a gain set by resistors).
pub const RE1_PER_RE: f64 = 4.0;
/// Divider Thévenin resistance above which leakage and the measuring inputs matter, Ω
/// (a 10 MΩ meter input on VB then reads 1 % low; ICBO of 0.1 µA shifts VB by 10 mV).
pub const DIVIDER_HIGH: f64 = 100e3;
/// Resistors at or above this value are flagged (leakage, surface contamination), Ω.
pub const RESISTOR_HIGH: f64 = 1e6;
/// Capacitors from this value up are taken to be electrolytic (polarised), F
/// (common practice: film and ceramic parts below 1 µF).
pub const ELECTROLYTIC_FROM: f64 = 1e-6;
/// Most warnings of one part set.
pub const MAX_WARNINGS: usize = 10;
// Every warning fits: one for the junction, one for the divider, one per resistor and one per
// capacitor.
const _: () = assert!(MAX_WARNINGS == 2 + Resistor::ALL.len() + Capacitor::ALL.len());

/// Which capacitor (the stage's own designators).
pub use crate::stage::Capacitor as Cap;

/// One warning.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum Warning {
    /// RE1 is small against re: the junction sets part of the gain.
    JunctionSetsGain {
        /// RE1, Ω.
        re1: f64,
        /// re = VT/IE at nominal, Ω.
        re: f64,
    },
    /// The divider's Thévenin resistance is high.
    DividerHigh {
        /// R1 ‖ R2, Ω.
        rth: f64,
    },
    /// A resistor of 1 MΩ or more.
    ResistorHigh {
        /// Which resistor ("R1", ...).
        part: &'static str,
        /// Its value, Ω.
        value: f64,
    },
    /// A capacitor's voltage rating, from the DC voltage across it.
    CapRating {
        /// Which capacitor.
        cap: Cap,
        /// DC voltage across it at nominal, V (magnitude).
        volts: f64,
        /// The least common rating with 1.5× headroom, V.
        rating: f64,
        /// Electrolytic (polarised): which end is positive, in words.
        positive: Option<&'static str>,
    },
}

/// The smallest common capacitor rating at least 1.5 × `volts`, V (common practice).
pub fn cap_rating(volts: f64) -> f64 {
    [6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 63.0, 100.0, 250.0]
        .into_iter()
        .find(|&v| v >= 1.5 * volts)
        .unwrap_or(450.0)
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Self::JunctionSetsGain { re1, re } => write!(
                f,
                "RE1 {} is under {} x re ({}): the junction's own resistance sets {} % of \
                 the gain; it drifts with temperature (re = VT/IE) and distorts",
                Eng::new(re1, "Ω"),
                Fixed(RE1_PER_RE, 0),
                Eng::new(re, "Ω"),
                Fixed(100.0 * re / (re + re1), 0)
            ),
            Self::DividerHigh { rth } => write!(
                f,
                "divider R1 || R2 = {}: leakage (ICBO) and the measuring inputs shift VB \
                 (a 10 MΩ input reads about {} % low)",
                Eng::new(rth, "Ω"),
                Fixed(100.0 * rth / (rth + 10e6), 1)
            ),
            Self::ResistorHigh { part, value } => write!(
                f,
                "{part} {} is 1 MΩ or more: leakage and surface contamination matter; keep \
                 the board clean and coated",
                Eng::new(value, "Ω")
            ),
            Self::CapRating {
                cap,
                volts,
                rating,
                positive,
            } => {
                write!(
                    f,
                    "{}: {} DC across it: rated {} or more",
                    cap.name(),
                    Eng::new(volts, "V"),
                    Eng::new(rating, "V")
                )?;
                match positive {
                    Some(p) => write!(f, "; electrolytic: + to {p}"),
                    None => Ok(()),
                }
            }
        }
    }
}

/// The warnings of `stage` at its nominal operating point `op`.
pub fn warnings(stage: &Stage, op: &OperatingPoint) -> heapless::Vec<Warning, MAX_WARNINGS> {
    let mut w = heapless::Vec::new();
    let re = if op.y.y21 > 0.0 {
        1.0 / op.y.y21
    } else {
        f64::INFINITY
    };
    let re1 = stage.re1.value;
    if re.is_finite() && re1 < RE1_PER_RE * re {
        let _ = w.push(Warning::JunctionSetsGain { re1, re });
    }
    let (r1, r2) = (stage.r1.value, stage.r2.value);
    let rth = r1 * r2 / (r1 + r2);
    if rth > DIVIDER_HIGH {
        let _ = w.push(Warning::DividerHigh { rth });
    }
    for (part, p) in [
        ("R1", stage.r1),
        ("R2", stage.r2),
        ("RC", stage.rc),
        ("RE1", stage.re1),
        ("RE2", stage.re2),
    ] {
        if p.value >= RESISTOR_HIGH {
            let _ = w.push(Warning::ResistorHigh {
                part,
                value: p.value,
            });
        }
    }
    let vcc = stage.vcc.value;
    let npn = stage.polarity == Polarity::Npn;
    // Voltage at the RE1/RE2 junction: IE·RE2 from the emitter-side rail.
    let ie = op.ic + op.ib;
    let v_re2 = libm::fabs(ie * stage.re2.value);
    let caps = [
        // CIN: the source side sits at 0 V, the base side at VB (both polarities).
        (
            Cap::Cin,
            stage.cin,
            libm::fabs(op.vb),
            "the base side (the source end at 0 V DC)",
        ),
        // COUT: the load side at 0 V, the collector side at VC.
        (
            Cap::Cout,
            stage.cout,
            libm::fabs(op.vc),
            "the collector side (the load end at 0 V DC)",
        ),
        // CE across RE2: NPN from the RE1/RE2 junction to ground, PNP from the supply.
        (
            Cap::Ce,
            stage.ce,
            v_re2,
            if npn {
                "the emitter side (RE1/RE2 junction; the other end to ground)"
            } else {
                "the supply side (the other end to the RE1/RE2 junction)"
            },
        ),
    ];
    for (cap, part, volts, plus) in caps {
        if let Some(p) = part {
            let volts = volts.min(vcc);
            let _ = w.push(Warning::CapRating {
                cap,
                volts,
                rating: cap_rating(volts),
                positive: (p.value >= ELECTROLYTIC_FROM).then_some(plus),
            });
        }
    }
    w
}
