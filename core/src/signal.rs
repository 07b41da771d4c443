//! Midband small-signal figures: gain from the source EMF to the load, stage gain, input and output
//! impedance, and the largest undistorted symmetrical swing at the load.
//!
//! Midband means every capacitor is a short: RE2 is bypassed, RE1 is not, RL hangs on the
//! collector and the source drives the base through RS. The transistor is its small-signal
//! two-port taken from the junction model at the operating point (gm, rπ, ro and the tiny
//! feedback term all follow from the same Ebers-Moll equations that set the bias).

use crate::acnet::{self, Setup, B, IN, OUT};
use crate::device::Profile;
use crate::solve::{OperatingPoint, Region};
use crate::stage::{Polarity, Stage};

/// Which side of the output swing limits first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Clip {
    /// The transistor saturates first (output bottoms out at VCE(sat)).
    Saturation,
    /// The transistor cuts off first (collector current reaches zero).
    Cutoff,
}

impl Clip {
    /// The machine name: "saturation" or "cutoff".
    pub fn name(self) -> &'static str {
        match self {
            Self::Saturation => "saturation",
            Self::Cutoff => "cutoff",
        }
    }
}

/// Midband figures of a stage at its operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Midband {
    /// v(load)/v(source EMF), signed (negative: inverting).
    pub gain: f64,
    /// v(load)/v(base), signed.
    pub gain_stage: f64,
    /// Input impedance seen by the source, without RS, Ω.
    pub zin: f64,
    /// Output impedance seen by the load, without RL, Ω.
    pub zout: f64,
    /// Largest undistorted symmetrical peak-to-peak voltage at the load, V.
    pub swing_pp: f64,
    /// Which side limits the swing.
    pub clips: Clip,
    /// Transconductance gm, S.
    pub gm: f64,
    /// Base input resistance rπ, Ω.
    pub rpi: f64,
    /// Output resistance ro, Ω (infinite without Early effect).
    pub ro: f64,
}

/// Why the midband figures could not be computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SignalError {
    /// The small-signal network is singular (no path for the signal).
    Singular,
}

impl core::fmt::Display for SignalError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str("the small-signal network is singular")
    }
}

/// v(load)/v(source EMF) at midband, signed, and v(base) for the same source; `None` when the
/// network is singular.
pub(crate) fn source_gain(stage: &Stage, y: &crate::solve::Admittance) -> Option<(f64, f64)> {
    let setup = Setup {
        inject: acnet::source_emf(stage),
        ..Setup::midband()
    };
    let v = acnet::solve(stage, y, &setup)?;
    Some((acnet::at(&v, OUT).re, acnet::at(&v, B).re))
}

/// Midband figures of `stage` at `op`.
pub fn midband(
    stage: &Stage,
    profile: &Profile,
    op: &OperatingPoint,
) -> Result<Midband, SignalError> {
    let y = &op.y;
    // Gain: a 1 V source EMF behind RS.
    let (gain, vb) = source_gain(stage, y).ok_or(SignalError::Singular)?;
    let gain_stage = if vb != 0.0 { gain / vb } else { 0.0 };
    // Input impedance: no source, 1 A into the input.
    let zin_setup = Setup {
        with_source: false,
        inject: acnet::injection(IN, acnet::GROUND),
        ..Setup::midband()
    };
    let zin = acnet::at(
        &acnet::solve(stage, y, &zin_setup).ok_or(SignalError::Singular)?,
        IN,
    )
    .re;
    // Output impedance: source at rest behind RS, no load, 1 A into the output.
    let zout_setup = Setup {
        with_load: false,
        inject: acnet::injection(OUT, acnet::GROUND),
        ..Setup::midband()
    };
    let zout = acnet::at(
        &acnet::solve(stage, y, &zout_setup).ok_or(SignalError::Singular)?,
        OUT,
    )
    .re;
    let (swing_pp, clips) = swing(stage, profile, op);
    let inv = |g: f64| if g > 0.0 { 1.0 / g } else { f64::INFINITY };
    Ok(Midband {
        gain,
        gain_stage,
        zin,
        zout,
        swing_pp,
        clips,
        gm: y.y21,
        rpi: inv(y.y11),
        ro: inv(y.y22),
    })
}

/// The largest undistorted symmetrical peak-to-peak swing at the load and the side that clips.
///
/// On the AC load line a rise of the collector current by Δi lowers VCE by Δi·(RC‖RL + RE1) and
/// moves the load by Δi·(RC‖RL): toward saturation the room is VCEQ − VCE(sat), toward cutoff
/// the collector current can fall by ICQ.
pub fn swing(stage: &Stage, profile: &Profile, op: &OperatingPoint) -> (f64, Clip) {
    if op.region != Region::Active {
        let side = if op.region == Region::Cutoff {
            Clip::Cutoff
        } else {
            Clip::Saturation
        };
        return (0.0, side);
    }
    let r_ac = match stage.rl {
        Some(rl) => acnet::parallel(stage.rc.value, rl),
        None => stage.rc.value,
    };
    let vce = match stage.polarity {
        Polarity::Npn => op.vce,
        Polarity::Pnp => -op.vce,
    };
    let room = vce - profile.vce_sat;
    let to_sat = if room > 0.0 {
        room * r_ac / (r_ac + stage.re1.value)
    } else {
        0.0
    };
    let to_cut = op.ic * r_ac;
    if to_sat <= to_cut {
        (2.0 * to_sat, Clip::Saturation)
    } else {
        (2.0 * to_cut, Clip::Cutoff)
    }
}
