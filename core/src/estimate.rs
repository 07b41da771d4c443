//! The hand estimate practitioners compare with: a stiff divider (no base current), a fixed VBE
//! (the profile's VBE at 1 mA and 25 °C) and IC = IE.
//!
//! Where the emitter has no resistor the stiff-divider method has no answer, so the base current
//! is then taken from the Thévenin divider with the typical hFE. A collector voltage that would fall
//! below VE + VCE(sat) is held there (the hand method's saturated case); a divider voltage below VBE
//! gives IC = 0.

use crate::device::Profile;
use crate::stage::{Polarity, Stage};

/// The hand estimate of the DC operating point (ground-referenced node voltages, signed VCE).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// Base voltage, V.
    pub vb: f64,
    /// Emitter voltage, V.
    pub ve: f64,
    /// Collector voltage, V.
    pub vc: f64,
    /// Collector current (= emitter current), A.
    pub ic: f64,
    /// VC − VE, V.
    pub vce: f64,
}

/// The hand estimate of `stage` with the fixed VBE and typical hFE of `profile`.
pub fn estimate(stage: &Stage, profile: &Profile) -> Estimate {
    let vcc = stage.vcc.value;
    let (r_top, r_bottom) = match stage.polarity {
        Polarity::Npn => (stage.r1.value, stage.r2.value),
        Polarity::Pnp => (stage.r2.value, stage.r1.value),
    };
    let vbe = profile.vbe_1ma();
    let rc = stage.rc.value;
    let re = stage.re_total();
    let vth = vcc * r_bottom / (r_top + r_bottom);
    let (vb, ie) = if re > 0.0 {
        (vth, (vth - vbe) / re)
    } else {
        let rth = r_top * r_bottom / (r_top + r_bottom);
        let ib = (vth - vbe) / rth;
        (vth - ib * rth, ib * (profile.beta_typ + 1.0))
    };
    let (vb, ve, ie) = if ie > 0.0 {
        (vb, ie * re, ie)
    } else {
        (vth, 0.0, 0.0)
    };
    let mut ic = ie;
    let mut vc = vcc - ic * rc;
    let floor = ve + profile.vce_sat;
    if vc < floor && ic > 0.0 {
        vc = floor;
        ic = (vcc - vc) / rc;
    }
    let (vb, ve, vc) = match stage.polarity {
        Polarity::Npn => (vb, ve, vc),
        Polarity::Pnp => (vcc - vb, vcc - ve, vcc - vc),
    };
    Estimate {
        vb,
        ve,
        vc,
        ic,
        vce: vc - ve,
    }
}
