//! Pass windows per node for the test station, from the spread, guard-banded for the meter and
//! evaluated at the measured supply.
//!
//! [`limits`] solves every corner of the factor box (resistor tolerances, hFE minimum and
//! maximum, the ambient range) at the supply as measured on the board (its tolerance is zero: it
//! is known), and widens each node's range by the reading error of the meter: at each corner a
//! node read directly may be off by `(gain_error + divider_tol)·|reading| + offset`; VBE and VCE
//! are differences of two readings, so both readings' errors add. The IC window is a window on
//! the collector current a tester derives from the readings ([`derived_ic`], nominal RC), taken
//! at every corner so that RC's own tolerance lies inside it, widened by the errors of the
//! readings it is derived from.

use crate::device::Profile;
use crate::settings::Inputs;
use crate::solve::SolveError;
use crate::spread::{each_corner_at_supply, Node, SpreadError, Variation};
use crate::stage::{Polarity, Stage};

/// The measuring instrument's accuracy and the jig's input divider tolerance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Meter {
    /// Gain error as a fraction of the reading (0.005 = 0.5 %).
    pub gain_error: f64,
    /// Fixed offset error, V.
    pub offset: f64,
    /// Tolerance of the jig's input divider as a fraction (adds to the gain error).
    pub divider_tol: f64,
}

default_is_const!(Meter);

impl Meter {
    /// The default of every front end: a 0.5 % + 5 mV meter behind a 0.1 % divider.
    pub const DEFAULT: Meter = Meter {
        gain_error: 0.005,
        offset: 0.005,
        divider_tol: 0.001,
    };

    /// A perfect meter (no error): the windows are the bare spread.
    pub const IDEAL: Meter = Meter {
        gain_error: 0.0,
        offset: 0.0,
        divider_tol: 0.0,
    };

    /// Check the fields: gain error and divider tolerance between 0 and 50 %, offset between
    /// 0 V and 10 V.
    pub fn validate(&self) -> Result<(), LimitsError> {
        let frac = |x: f64| x.is_finite() && (0.0..=0.5).contains(&x);
        if frac(self.gain_error)
            && frac(self.divider_tol)
            && self.offset.is_finite()
            && (0.0..=10.0).contains(&self.offset)
        {
            Ok(())
        } else {
            Err(LimitsError::Meter)
        }
    }

    /// The largest error of one reading `v`, V.
    pub fn error(&self, v: f64) -> f64 {
        (self.gain_error + self.divider_tol) * libm::fabs(v) + self.offset
    }
}

/// A pass window, in the node's unit (V or A).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Window {
    /// Lowest passing value.
    pub low: f64,
    /// Highest passing value.
    pub high: f64,
}

impl Window {
    /// The value lies inside the window (edges included).
    pub fn contains(&self, v: f64) -> bool {
        v >= self.low && v <= self.high
    }

    /// An empty window that [`Window::widen`] grows.
    const EMPTY: Window = Window {
        low: f64::INFINITY,
        high: f64::NEG_INFINITY,
    };

    /// Grow the window to hold `v ± err`.
    fn widen(&mut self, v: f64, err: f64) {
        if v.is_finite() && err.is_finite() {
            self.low = libm::fmin(self.low, v - err);
            self.high = libm::fmax(self.high, v + err);
        }
    }

    /// Width, high − low.
    pub fn width(&self) -> f64 {
        self.high - self.low
    }
}

/// Pass windows of one design at one supply.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    /// The supply the windows hold for, V.
    pub vcc: f64,
    /// Base voltage window, V.
    pub vb: Window,
    /// Emitter voltage window, V.
    pub ve: Window,
    /// Collector voltage window, V.
    pub vc: Window,
    /// VCE window (signed: negative for PNP), V.
    pub vce: Window,
    /// VBE window (signed: negative for PNP), V.
    pub vbe: Window,
    /// Collector current window, A.
    pub ic: Window,
}

impl Limits {
    /// The window of a node (`None` for gain and swing, which have no window).
    pub fn window(&self, n: Node) -> Option<Window> {
        match n {
            Node::Vb => Some(self.vb),
            Node::Ve => Some(self.ve),
            Node::Vc => Some(self.vc),
            Node::Vbe => Some(self.vbe),
            Node::Vce => Some(self.vce),
            Node::Ic => Some(self.ic),
            Node::Gain | Node::Swing => None,
        }
    }
}

/// Why no limits could be given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum LimitsError {
    /// The meter's gain error and divider tolerance must be between 0 and 50 %, the offset
    /// between 0 V and 10 V.
    Meter,
    /// The supply must be finite and between 0.5 V and 1000 V.
    Supply,
    /// The stage, profile or variation is out of range, or a corner has no operating point.
    Spread(SpreadError),
}

impl core::fmt::Display for LimitsError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::Meter => f.write_str(
                "meter: gain error and divider tolerance must be between 0 and 50 %, offset between 0 V and 10 V",
            ),
            Self::Supply => f.write_str("supply: must be between 0.5 V and 1000 V"),
            Self::Spread(e) => write!(f, "{e}"),
        }
    }
}

error_from!(LimitsError { SpreadError => Spread });

impl From<SolveError> for LimitsError {
    fn from(e: SolveError) -> Self {
        Self::Spread(SpreadError::Solve(e))
    }
}

/// The collector current a tester derives from the readings, A: (VCC − VC)/RC for NPN, VC/RC for
/// PNP, with the nominal RC of `stage` (`vcc` and `vc` in V, ground-referenced).
pub fn derived_ic(stage: &Stage, vcc: f64, vc: f64) -> f64 {
    derived_ic_through(stage, &Inputs::IDEAL, vcc, vc)
}

/// [`derived_ic`] when the collector is read through a measuring input of `inputs`: the input's
/// own current VC/R (it flows through RC too for NPN, beside it for PNP) is taken out.
pub fn derived_ic_through(stage: &Stage, inputs: &Inputs, vcc: f64, vc: f64) -> f64 {
    let rc = stage.rc.value;
    let bare = match stage.polarity {
        Polarity::Npn => (vcc - vc) / rc,
        Polarity::Pnp => vc / rc,
    };
    match (inputs.r, stage.polarity) {
        (None, _) => bare,
        (Some(rin), Polarity::Npn) => bare - vc / rin,
        (Some(rin), Polarity::Pnp) => bare + vc / rin,
    }
}

/// The largest error of [`derived_ic_through`] from the readings' errors, A.
fn derived_ic_error(stage: &Stage, meter: &Meter, inputs: &Inputs, vcc: f64, vc: f64) -> f64 {
    let rc = stage.rc.value;
    let bare = match stage.polarity {
        Polarity::Npn => (meter.error(vcc) + meter.error(vc)) / rc,
        Polarity::Pnp => meter.error(vc) / rc,
    };
    match inputs.r {
        None => bare,
        Some(rin) => bare + meter.error(vc) / rin,
    }
}

/// Pass windows for `stage` at the measured supply `vcc` (V): the worst case over every corner
/// of the resistor tolerances, hFE and the ambient range of `var`, widened by the reading errors
/// of `meter` (see the module notes). About 2⁷ + 1 solves.
pub fn limits(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    meter: &Meter,
    vcc: f64,
) -> Result<Limits, LimitsError> {
    meter.validate()?;
    if !(vcc.is_finite() && (0.5..=1000.0).contains(&vcc)) {
        return Err(LimitsError::Supply);
    }
    let mut w = [Window::EMPTY; 6];
    let [vb, ve, vc, vbe, vce, ic] = &mut w;
    each_corner_at_supply(stage, profile, var, vcc, |s| {
        let v = &s.values;
        vb.widen(v.vb, meter.error(v.vb));
        ve.widen(v.ve, meter.error(v.ve));
        vc.widen(v.vc, meter.error(v.vc));
        vbe.widen(v.vbe, meter.error(v.vb) + meter.error(v.ve));
        vce.widen(v.vce, meter.error(v.vc) + meter.error(v.ve));
        ic.widen(
            derived_ic_through(stage, &var.inputs, vcc, v.vc),
            derived_ic_error(stage, meter, &var.inputs, vcc, v.vc),
        );
    })?;
    let [vb, ve, vc, vbe, vce, ic] = w;
    Ok(Limits {
        vcc,
        vb,
        ve,
        vc,
        vce,
        vbe,
        ic,
    })
}
