//! The vocabulary the job layers share: what varies ([`Variation`], [`Distribution`]), the
//! quantities a stage is judged by ([`Node`], one value each in [`Nodes`]), a [`Range`] of one
//! quantity, and why a spread over the variation could not be computed ([`SpreadError`]).
//!
//! Used by `spread`, `limits`, `signaltest`, `check`, `judge`, `diagnose`, `settings` and the
//! console; `spread` re-exports every item under its old path.

use crate::device::ProfileError;
use crate::settings::Inputs;
use crate::solve::SolveError;
use crate::stage::StageError;

/// How a part's value is distributed within its tolerance in the Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Distribution {
    /// Uniform within ± tolerance.
    Uniform,
    /// Normal with the tolerance at `sigmas` standard deviations, truncated at the tolerance.
    Normal {
        /// How many standard deviations the tolerance spans (3 is common).
        sigmas: f64,
    },
}

/// What varies: the parts within their tolerances (from the stage), hFE within the profile's
/// spread, the ambient within a range, and the supply within its tolerance (from the stage).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Variation {
    /// Lowest ambient, °C.
    pub temp_min_c: f64,
    /// Highest ambient, °C.
    pub temp_max_c: f64,
    /// Distribution of the part values in Monte Carlo.
    pub distribution: Distribution,
    /// The measuring inputs attached while the nodes are read: every node value is what they
    /// read ([`Inputs::IDEAL`]: the bare stage).
    pub inputs: Inputs,
}

impl Variation {
    /// Parts and hFE vary; the ambient stays at `temp_c`.
    pub fn at(temp_c: f64) -> Self {
        Self {
            temp_min_c: temp_c,
            temp_max_c: temp_c,
            distribution: Distribution::Uniform,
            inputs: Inputs::IDEAL,
        }
    }

    /// The same variation with the nodes read through `inputs`.
    pub fn read_through(self, inputs: Inputs) -> Self {
        Self { inputs, ..self }
    }

    /// Parts and hFE vary; the ambient spans `temp_min_c` to `temp_max_c`, °C.
    pub fn between(temp_min_c: f64, temp_max_c: f64) -> Self {
        Self {
            temp_min_c,
            temp_max_c,
            distribution: Distribution::Uniform,
            inputs: Inputs::IDEAL,
        }
    }

    /// The middle of the ambient range, °C.
    pub fn temp_centre_c(&self) -> f64 {
        0.5 * (self.temp_min_c + self.temp_max_c)
    }

    /// Check the range (finite, min <= max, within -55 °C to 150 °C) and the distribution.
    pub fn validate(&self) -> Result<(), SpreadError> {
        let ok = |t: f64| t.is_finite() && (-55.0..=150.0).contains(&t);
        if !(ok(self.temp_min_c) && ok(self.temp_max_c) && self.temp_min_c <= self.temp_max_c) {
            return Err(SpreadError::TempRange);
        }
        if let Distribution::Normal { sigmas } = self.distribution {
            if !(sigmas.is_finite() && (0.5..=10.0).contains(&sigmas)) {
                return Err(SpreadError::Sigmas);
            }
        }
        Ok(())
    }
}

/// Why a spread could not be computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SpreadError {
    /// A stage field is out of range.
    Stage(StageError),
    /// A profile field is out of range.
    Profile(ProfileError),
    /// The ambient range must be finite, min <= max, within -55 °C to 150 °C.
    TempRange,
    /// The normal distribution's sigmas must be between 0.5 and 10.
    Sigmas,
    /// A corner or the centre of the factor box has no operating point.
    Solve(SolveError),
}

impl core::fmt::Display for SpreadError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::Stage(e) => write!(f, "stage: {e}"),
            Self::Profile(e) => write!(f, "transistor: {e}"),
            Self::TempRange => f.write_str(
                "temperature range: min and max must lie between -55 °C and 150 °C with min <= max",
            ),
            Self::Sigmas => f.write_str("normal distribution: sigmas must be between 0.5 and 10"),
            Self::Solve(e) => write!(f, "a corner of the spread: {e}"),
        }
    }
}

error_from!(SpreadError { SolveError => Solve });

/// A quantity the spread reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Node {
    /// Base voltage, V.
    Vb,
    /// Emitter voltage, V.
    Ve,
    /// Collector voltage, V.
    Vc,
    /// VB − VE, V (signed).
    Vbe,
    /// VC − VE, V (signed).
    Vce,
    /// Collector current, A.
    Ic,
    /// Midband gain v(load)/v(source EMF), signed.
    Gain,
    /// Largest undistorted symmetrical swing at the load, V peak-to-peak.
    Swing,
}

impl Node {
    /// Every node, in report order.
    pub const ALL: [Node; 8] = [
        Self::Vb,
        Self::Ve,
        Self::Vc,
        Self::Vbe,
        Self::Vce,
        Self::Ic,
        Self::Gain,
        Self::Swing,
    ];

    /// The machine name: "vb", "ve", "vc", "vbe", "vce", "ic", "gain", "swing".
    pub fn name(self) -> &'static str {
        match self {
            Self::Vb => "vb",
            Self::Ve => "ve",
            Self::Vc => "vc",
            Self::Vbe => "vbe",
            Self::Vce => "vce",
            Self::Ic => "ic",
            Self::Gain => "gain",
            Self::Swing => "swing",
        }
    }

    /// The trade's name: "VB", ..., "gain", "swing".
    pub fn label(self) -> &'static str {
        match self {
            Self::Vb => "VB",
            Self::Ve => "VE",
            Self::Vc => "VC",
            Self::Vbe => "VBE",
            Self::Vce => "VCE",
            Self::Ic => "IC",
            Self::Gain => "gain",
            Self::Swing => "swing",
        }
    }

    /// The SI unit symbol ("V", "A", or "" for the gain).
    pub fn unit(self) -> &'static str {
        match self {
            Self::Ic => "A",
            Self::Gain => "",
            _ => "V",
        }
    }
}

/// One value of type `T` per [`Node`].
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Nodes<T> {
    /// Base voltage.
    pub vb: T,
    /// Emitter voltage.
    pub ve: T,
    /// Collector voltage.
    pub vc: T,
    /// VB − VE.
    pub vbe: T,
    /// VC − VE.
    pub vce: T,
    /// Collector current.
    pub ic: T,
    /// Midband gain.
    pub gain: T,
    /// Output swing.
    pub swing: T,
}

impl<T> Nodes<T> {
    /// Every node filled from `f`.
    pub fn from_fn(mut f: impl FnMut(Node) -> T) -> Self {
        Self {
            vb: f(Node::Vb),
            ve: f(Node::Ve),
            vc: f(Node::Vc),
            vbe: f(Node::Vbe),
            vce: f(Node::Vce),
            ic: f(Node::Ic),
            gain: f(Node::Gain),
            swing: f(Node::Swing),
        }
    }

    fields_by! {
        /// The value of one node.
        fn get(&self) -> &T;
        /// Mutable access to one node's value.
        fn get_mut;
        Node { Vb: vb, Ve: ve, Vc: vc, Vbe: vbe, Vce: vce, Ic: ic, Gain: gain, Swing: swing }
    }
}

/// A range of one quantity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    /// Lowest value.
    pub min: f64,
    /// Highest value.
    pub max: f64,
}

impl Range {
    /// An empty range (min = +∞, max = −∞) that any value widens.
    pub const EMPTY: Range = Range {
        min: f64::INFINITY,
        max: f64::NEG_INFINITY,
    };

    /// Widen the range to include `v` (non-finite values are ignored).
    pub fn include(&mut self, v: f64) {
        if v.is_finite() {
            if v < self.min {
                self.min = v;
            }
            if v > self.max {
                self.max = v;
            }
        }
    }

    /// The value lies inside the range, with a relative slack `rel` of the larger magnitude
    /// plus an absolute slack `abs`.
    pub fn brackets(&self, v: f64, rel: f64, abs: f64) -> bool {
        let m = libm::fmax(libm::fabs(self.min), libm::fabs(self.max));
        let slack = rel * m + abs;
        v >= self.min - slack && v <= self.max + slack
    }
}

impl Default for Range {
    fn default() -> Self {
        Self::EMPTY
    }
}
