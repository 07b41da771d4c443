//! The stage's complex frequency response v(load)/v(source EMF) at any frequency, for a good
//! stage or one with a faulty capacitor.
//!
//! It is the same small-signal network as the midband figures ([`crate::signal`]): RS, CIN,
//! R1 ‖ R2, the transistor's two-port at its exact operating point, RE1, RE2 ‖ CE, RC, COUT and
//! RL. Only the capacitors change: each is its admittance j·2π·f·C at the frequency, an open, or
//! a short. Far above the capacitors' poles the response is the midband gain (the model has no
//! high-frequency poles). A faulty transistor or resistor enters through the operating point and
//! the stage it was solved for.
//!
//! Cost: one complex 6×6 elimination per frequency (some 250 `f64` multiply-adds).

use crate::acnet::{self, Cap};
use crate::solve::OperatingPoint;
use crate::stage::{Capacitor, Stage};

/// What is fitted in one capacitor's place.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CapState {
    /// A capacitor of this value, F.
    Fitted(f64),
    /// Nothing (not fitted, cracked, dry joint).
    Open,
    /// A short (solder bridge, broken-down dielectric), or an ideal capacitor.
    Short,
}

/// The three capacitors of one board.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Caps {
    /// Input coupling.
    pub cin: CapState,
    /// Output coupling.
    pub cout: CapState,
    /// Emitter bypass.
    pub ce: CapState,
}

impl Caps {
    /// The stage's own capacitors at their nominal values (an ideal one is a short).
    pub fn nominal(stage: &Stage) -> Self {
        let of = |p: Option<crate::stage::Part>| {
            p.map_or(CapState::Short, |p| CapState::Fitted(p.value))
        };
        Self {
            cin: of(stage.cin),
            cout: of(stage.cout),
            ce: of(stage.ce),
        }
    }

    fields_by! {
        /// The state of one capacitor.
        fn get(&self) -> CapState;
        /// Mutable access to one capacitor's state.
        fn get_mut;
        Capacitor { Cin: cin, Cout: cout, Ce: ce }
    }

    /// The same capacitors with one of them changed.
    pub fn with(mut self, which: Capacitor, state: CapState) -> Self {
        *self.get_mut(which) = state;
        self
    }
}

/// A complex gain, v(load)/v(source EMF).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Gain {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl Gain {
    /// The magnitude |v(load)/v(source EMF)|.
    pub fn magnitude(&self) -> f64 {
        libm::hypot(self.re, self.im)
    }

    /// The phase, rad (−π..π).
    pub fn phase(&self) -> f64 {
        libm::atan2(self.im, self.re)
    }
}

/// The gain v(load)/v(source EMF) at `f_hz` of `stage` (the stage the operating point `op` was
/// solved for) with the capacitors `caps`; `None` when the network is singular or `f_hz` is
/// not a positive finite frequency.
pub fn gain_at(stage: &Stage, op: &OperatingPoint, caps: &Caps, f_hz: f64) -> Option<Gain> {
    let (s, [cin, cout, ce]) = network(stage, caps, f_hz)?;
    let v = acnet::source_to_load(&s, &op.y, cin, cout, ce)?;
    Some(Gain { re: v.re, im: v.im })
}

/// The stage with each fitted capacitor's value and the capacitors' states at `f_hz` (CIN, COUT,
/// CE); `None` for a frequency that is not positive and finite.
fn network(stage: &Stage, caps: &Caps, f_hz: f64) -> Option<(Stage, [Cap; 3])> {
    if !(f_hz.is_finite() && f_hz > 0.0) {
        return None;
    }
    let mut s = *stage;
    let state = |c: CapState, slot: &mut Option<crate::stage::Part>| match c {
        CapState::Fitted(v) => {
            *slot = Some(crate::stage::Part::new(v, 0.0));
            Cap::At(f_hz)
        }
        CapState::Open => Cap::Open,
        CapState::Short => Cap::Short,
    };
    let cin = state(caps.cin, &mut s.cin);
    let cout = state(caps.cout, &mut s.cout);
    let ce = state(caps.ce, &mut s.ce);
    Some((s, [cin, cout, ce]))
}

/// |v(load)/v(source EMF)| at `f_hz` (0 where the network is singular: no signal reaches the
/// load), formed in single precision as [`gain_at`] is.
pub fn magnitude_at(stage: &Stage, op: &OperatingPoint, caps: &Caps, f_hz: f64) -> f64 {
    network(stage, caps, f_hz).map_or(0.0, |(s, [cin, cout, ce])| {
        acnet::source_to_load_magnitude(&s, &op.y, cin, cout, ce)
    })
}
