//! Dissipation of the transistor and the resistors, and the supply current.

use crate::device::Profile;
use crate::solve::OperatingPoint;
use crate::stage::{Polarity, Resistor, Stage};

/// Resistor dissipation above which a part needs more than a common 0.25 W size (common practice).
pub const RESISTOR_POWER_LIMIT: f64 = 0.25;

/// Power figures of a stage at its operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Power {
    /// Transistor dissipation IC·VCE + IB·VBE, W.
    pub transistor: f64,
    /// The transistor's permitted dissipation at the ambient, W.
    pub rating: f64,
    /// Dissipation of R1, R2, RC, RE1, RE2 in that order, W.
    pub resistors: [f64; 5],
    /// Current drawn from the supply, A.
    pub supply_current: f64,
}

impl Power {
    /// Dissipation of one resistor, W.
    pub fn resistor(&self, which: Resistor) -> f64 {
        let i = match which {
            Resistor::R1 => 0,
            Resistor::R2 => 1,
            Resistor::Rc => 2,
            Resistor::Re1 => 3,
            Resistor::Re2 => 4,
        };
        self.resistors.get(i).copied().unwrap_or(0.0)
    }

    /// The transistor dissipates more than its derated rating.
    pub fn over_rating(&self) -> bool {
        self.transistor > self.rating
    }
}

/// I²R with open (infinite) and shorted (zero) resistors handled, W.
fn dissipation(volts: f64, ohms: f64) -> f64 {
    if ohms > 0.0 && ohms.is_finite() {
        volts * volts / ohms
    } else {
        0.0
    }
}

/// Power figures at the operating point `op`, with the rating derated to `temp_c`.
pub fn power(stage: &Stage, profile: &Profile, op: &OperatingPoint, temp_c: f64) -> Power {
    let vcc = op.vcc;
    let sign = match stage.polarity {
        Polarity::Npn => 1.0,
        Polarity::Pnp => -1.0,
    };
    let transistor = op.ib * op.vbe * sign + op.ic * op.vce * sign;
    // Voltage across RC: from the supply for NPN, to ground for PNP.
    let v_rc = match stage.polarity {
        Polarity::Npn => vcc - op.vc,
        Polarity::Pnp => op.vc,
    };
    let ie = op.ie;
    let resistors = [
        dissipation(vcc - op.vb, stage.r1.value),
        dissipation(op.vb, stage.r2.value),
        dissipation(v_rc, stage.rc.value),
        ie * ie * stage.re1.value,
        ie * ie * stage.re2.value,
    ];
    let through = |v: f64, r: f64| if r > 0.0 && r.is_finite() { v / r } else { 0.0 };
    // Supply current: the divider's upper leg plus the collector (NPN) or emitter (PNP) leg.
    // A shorted R1 carries what R2 and the base take (KCL at the base).
    let divider = if stage.r1.value > 0.0 {
        through(vcc - op.vb, stage.r1.value)
    } else {
        through(op.vb, stage.r2.value) + sign * op.ib
    };
    let supply_current = match stage.polarity {
        Polarity::Npn => divider + op.ic,
        Polarity::Pnp => divider + op.ie,
    };
    Power {
        transistor,
        rating: profile.power_rating_at(temp_c),
        resistors,
        supply_current,
    }
}
