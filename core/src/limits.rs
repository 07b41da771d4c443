//! Pass windows per node for the test station, from the spread, guard-banded for the meter and
//! evaluated at the measured supply.
//!
//! (Types fixed here; the computation is built by the spread-and-limits issue.)

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

impl Default for Meter {
    /// A 0.5 % + 5 mV meter behind a 0.1 % divider.
    fn default() -> Self {
        Self {
            gain_error: 0.005,
            offset: 0.005,
            divider_tol: 0.001,
        }
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
