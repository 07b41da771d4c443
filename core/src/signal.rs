//! Midband small-signal figures: gain from the source EMF to the load, stage gain, input and output
//! impedance, and the largest undistorted symmetrical swing at the load.
//!
//! Midband means every capacitor is a short: RE2 is bypassed, RE1 is not, RL hangs on the
//! collector and the source drives the base through RS. The transistor is its small-signal
//! two-port taken from the junction model at the operating point (gm, rπ, ro and the tiny
//! feedback term all follow from the same Ebers-Moll equations that set the bias).

#[cfg(test)]
use crate::acnet::B;
use crate::acnet::{self, Setup, IN, OUT};
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
/// network is singular. The midband network in closed form (real arithmetic, the same network
/// and the same numbers to rounding as the general small-signal solve; about 150 instructions
/// instead of about 4 000: this is the gain of every Monte Carlo sample and design corner).
pub(crate) fn source_gain(stage: &Stage, y: &crate::solve::Admittance) -> Option<(f64, f64)> {
    acnet::midband_source(stage, y)
}

/// [`source_gain`] by the general 6-node complex solve (the reference the closed form is
/// tested against).
#[cfg(test)]
pub(crate) fn source_gain_general(
    stage: &Stage,
    y: &crate::solve::Admittance,
) -> Option<(f64, f64)> {
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
    // The real part of the voltage at `node` with 1 A injected there: its impedance, Ω.
    let driven = |node, with_source, with_load| {
        let setup = Setup {
            with_source,
            with_load,
            inject: acnet::injection(node, acnet::GROUND),
            ..Setup::midband()
        };
        let v = acnet::solve(stage, y, &setup).ok_or(SignalError::Singular)?;
        Ok(acnet::at(&v, node).re)
    };
    // Input impedance: no source. Output impedance: source at rest behind RS, no load.
    let zin = driven(IN, false, true)?;
    let zout = driven(OUT, true, false)?;
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

#[cfg(test)]
mod tests {
    use proptest::prelude::*;

    use super::{source_gain, source_gain_general};
    use crate::device::{is_from_vbe, Profile};
    use crate::solve::{solve, Conditions};
    use crate::stage::{Part, Polarity, Resistor, Stage};

    /// Agreement to 1e-4 relative, or 1 nV per volt of EMF near zero: the general solve
    /// carries the 1 MS shorts through a 6×6 elimination beside conductances of 1 µS and less
    /// (the 1 MS less the 1 MS leaves the small one with about 1e-10 S of rounding), and loses
    /// up to about 1e-5 there at the far ends of these ranges (about 1e-9 in usual stages);
    /// the closed form combines the shorts in series first and loses nothing there.
    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-4 * a.abs().max(b.abs()) + 1e-9
    }

    /// A stage on `vcc` volts with R1, R2, RC, RE1, RE2 of `r` (Ω, 5 %), load `rl`, source
    /// `rs`, and CIN, CE of `caps` (no COUT).
    fn stage(
        polarity: Polarity,
        vcc: f64,
        r: [f64; 5],
        rl: Option<f64>,
        rs: f64,
        [cin, ce]: [Option<Part>; 2],
    ) -> Stage {
        let mut stage = Stage {
            polarity,
            vcc: Part::new(vcc, 0.0),
            rl,
            rs,
            cin,
            cout: None,
            ce,
            ..crate::console::default_stage()
        };
        for (which, value) in Resistor::ALL.into_iter().zip(r) {
            *stage.part_mut(which) = Part::new(value, 0.05);
        }
        stage
    }

    /// The closed form against the same 6-node network solved in 50-digit arithmetic (mpmath's
    /// `lu_solve`, the stamps of `acnet::solve` written out; run once, the result copied here):
    /// it agrees to 1e-15, where the general 6×6 complex solve in f64 gives −13.51406539800790
    /// (1.8e-8 off: the 1 MS shorts beside 0.2 mS conductances).
    #[test]
    fn closed_form_against_a_50_digit_solve() {
        let stage = stage(
            Polarity::Npn,
            12.0,
            [47e3, 10e3, 4.7e3, 220.0, 1e3],
            Some(15e3),
            600.0,
            [None, None],
        );
        let y = crate::solve::Admittance {
            y11: 2.4669602053497956e-4,
            y12: 0.0,
            y21: 4.4405283696296316e-2,
            y22: 0.0,
        };
        let (g, _) = source_gain(&stage, &y).unwrap();
        let want = -13.514065151056794;
        assert!((g - want).abs() <= 1e-15 * want.abs(), "{g}");
    }

    proptest! {
        /// The closed form of the midband network equals the general 6-node solve of the same
        /// network to rounding, with and without load, source, RE1, RE2 and Early effect.
        #[test]
        fn closed_form_matches_general_solve(
            pnp in any::<bool>(),
            vcc in 5.0f64..30.0,
            r1 in 10e3f64..1e6,
            r2 in 2e3f64..200e3,
            rc in 500.0f64..50e3,
            re1 in prop_oneof![Just(0.0), 1.0f64..5e3],
            re2 in prop_oneof![Just(0.0), 100.0f64..20e3],
            rl in prop_oneof![Just(None), (1e3f64..1e6).prop_map(Some)],
            rs in prop_oneof![Just(0.0), 10.0f64..50e3],
            early in prop_oneof![Just(None), (20.0f64..200.0).prop_map(Some)],
            beta in 30.0f64..500.0,
            temp in -40.0f64..85.0,
        ) {
            let polarity = if pnp { Polarity::Pnp } else { Polarity::Npn };
            let caps = [Some(Part::new(10e-6, 0.2)), Some(Part::new(100e-6, 0.2))];
            let stage = stage(polarity, vcc, [r1, r2, rc, re1, re2], rl, rs, caps);
            let profile = Profile { beta_typ: beta, beta_min: beta, beta_max: beta, early,
                is_25: is_from_vbe(0.65), ..Profile::default() };
            let cond = Conditions { temp_c: temp, ..Conditions::typical(&profile) };
            let Ok(op) = solve(&stage, &profile, cond) else { return Ok(()); };
            let fast = source_gain(&stage, &op.y);
            let slow = source_gain_general(&stage, &op.y);
            match (fast, slow) {
                (Some((g, vb)), Some((g2, vb2))) => {
                    prop_assert!(close(g, g2), "gain {g} vs {g2}");
                    prop_assert!(close(vb, vb2), "vb {vb} vs {vb2}");
                }
                (None, None) => {}
                (a, b) => prop_assert!(false, "closed form {a:?}, general {b:?}"),
            }
        }
    }
}
