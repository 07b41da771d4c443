//! The classic textbook hand procedure of voltage-divider bias, which the tests compare the
//! design's corrected first pass with. No production code uses it (it moved here from
//! `biasjig_core::design`).
#![allow(dead_code, reason = "each test file uses its own part of this module")]

/// The classic textbook result of voltage-divider bias design (no corrections).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Classic {
    /// Collector resistor, Ω.
    pub rc: f64,
    /// Emitter resistor, Ω.
    pub re: f64,
    /// Base to ground, Ω.
    pub r2: f64,
    /// Supply to base, Ω.
    pub r1: f64,
    /// Base voltage, V.
    pub vb: f64,
}

/// The classic hand procedure of voltage-divider bias: VE = `ve_fraction`·VCC, RE = VE/IC,
/// RC = (VCC − VCE − VE)/IC, VB = VE + VBE, R2 = `stiffness`·hFE·RE (stiff divider, base
/// current ignored), R1 = R2·(VCC − VB)/VB.
pub fn classic(
    vcc: f64,
    ic: f64,
    vce: f64,
    ve_fraction: f64,
    vbe: f64,
    beta: f64,
    stiffness: f64,
) -> Classic {
    let ve = ve_fraction * vcc;
    let re = ve / ic;
    let rc = (vcc - vce - ve) / ic;
    let vb = ve + vbe;
    let r2 = stiffness * beta * re;
    let r1 = r2 * (vcc - vb) / vb;
    Classic { rc, re, r2, r1, vb }
}

/// The Q-point current the classic hand method centres on the AC load line, A:
/// ICQ = VCC/(RAC + RDC) with RAC = RC‖RL + RE1 and RDC = RC + RE1 + RE2.
pub fn centred_ic(vcc: f64, rc: f64, rl: Option<f64>, re1: f64, re2: f64) -> f64 {
    let rp = rl.map_or(rc, |rl| rc * rl / (rc + rl));
    vcc / (rp + re1 + rc + re1 + re2)
}
