//! From a stage requirement to ranked, buildable part lists of standard values.
//!
//! The design runs in three steps, all without allocation:
//!
//! 1. **First pass** ([`first_pass`]): the hand method practitioners learn, corrected. At a chosen
//!    collector current the Q-point is centred on the AC load line (equal room toward saturation
//!    and cutoff), the gain uses the loaded collector resistance RC‖RL, the source divider
//!    RS : Zin and re = VT/IE; RE1 (unbypassed) sets the gain while RE1 + RE2 sets VE for DC
//!    stability; the divider's Thévenin resistance is chosen from the hFE spread (judged at hFE
//!    minimum) so that IC moves only a few percent across hFE min..max; VBB includes the base
//!    current through R1‖R2 and the profile's VBE at the design current. The values are exact,
//!    not yet standard.
//! 2. **Search**: the first pass is run at up to [`MAX_LEVELS`] collector currents of a fixed
//!    E6 ladder (10 µA to 100 mA, the lowest that the hand method says can work, never above the
//!    budget). Around each, neighbouring series values of every resistor are enumerated in two
//!    bounded phases (RC and RE1 for the gain, then R1, R2 and RE2 for the bias) and every
//!    combination is re-analysed with the exact engine ([`solve`](crate::solve::solve),
//!    the gain of [`midband`](crate::signal::midband)): gain, swing, IC at hFE min and max and at both ends
//!    of the ambient range, supply draw and dissipation make up a [`score`](Candidate::score)
//!    (lower is better). The best [`MAX_CANDIDATES`] distinct part sets that meet every
//!    requirement are kept, best first; the result is deterministic for the same input.
//! 3. **Capacitors**: for each kept candidate the resistances seen by CIN, COUT and CE come from
//!    the engine's short-circuit time-constant computation (as in
//!    [`low_corner`](crate::lowfreq::low_corner)); the capacitor
//!    series values with the smallest total capacitance whose pole sum stays at or below
//!    [`F_LOW_MARGIN`] × the required low corner are chosen (CE dominates by itself because it
//!    sees the smallest resistance).
//!
//! A requirement that cannot be met gives a [`DesignError`] that names the requirement and what
//! would work, with numbers; a poor design is never returned silently.
//!
//! The ladder may step over the least current that works; that current (plus 5 %) is then
//! searched as one more level. A polish step revisits RC and RE1 (±1 step) around the best four
//! part sets with their own bias resistors. Levels depend on the requirement alone and are cut
//! off at the budget, so a larger budget only adds part sets: the best score never gets worse.
//!
//! **Held over the spread** ([`Hold::WorstCase`]): every requirement must hold at every corner of
//! the resistor tolerance, hFE min..max and the ambient range. The search then ranks part sets by
//! a cheap bound of their worst case (the hFE and ambient ends solved, each resistor's effect at
//! +tol added in the unfavourable direction: five more solves per competitive set) and its margins
//! (gain window centred, swing and IC budget with room); the best [`MAX_CANDIDATES`] are confirmed
//! with the exact engine at every corner ([`held`](fn@held), up to 129 solves each, the capacitors chosen
//! for their low tolerance) and ranked by the exact worst case. When the closest set's gain range
//! fits the window but off centre, a second search aims the nominal gain to centre it. A
//! requirement that no set holds is refused as [`DesignError::NotHeld`] with the closest set's
//! figures. [`Hold::Nominal`] is the first round's design at the nominal point.
//!
//! Cost: a nominal E24 design is about 1 400 exact solves (1.4 Newton iterations each) and 6.5 M
//! instructions on x86-64 (demo scenario); held at every corner, 7.7 M (the `design` bench); the
//! dearest of our ±10 % sweep (a refusal after the re-centred search) about 16.2 M.
//!
//! The files: `requirement` (what a stage must do, its checks), `error` (why no design, with
//! numbers and what would work), `first_pass` (the corrected hand method and the ladder of
//! currents), `score` (the exact analysis of one part set and its score), `search` (the levels,
//! the two phases, the polish, the finalists), `capacitors`, and `held` (the exact corners),
//! `distortion` and `warnings`.

#![expect(
    clippy::neg_cmp_op_on_partial_ord,
    reason = "NaN-safe checks: a figure that is NaN must count as failing"
)]

mod capacitors;
pub mod distortion;
mod error;
mod first_pass;
pub mod held;
mod requirement;
mod score;
mod search;
pub mod warnings;

pub use error::{DesignError, NamedError, Naming, Setting};
pub use first_pass::{first_pass, FirstPassMiss, Ideal};
pub use held::{held, Held};
pub use requirement::{Check, Requirement, RequirementError};
pub use search::{design, design_into};

/// FNV-1a 64-bit hash of `bytes` (the one in [`crate::fnv`], kept under this path too).
pub use crate::fnv::fnv1a64;

use crate::signal::Clip;
use crate::solve::OperatingPoint;
use crate::stage::Stage;

/// Most candidates a design returns.
pub const MAX_CANDIDATES: usize = 8;
/// Most collector-current levels the search visits.
pub const MAX_LEVELS: usize = 7;
/// The gain is met when |gain| is within this fraction of the requirement (the default of
/// [`Requirement::new`]; [`Requirement::gain_tol`] sets it).
pub const GAIN_TOLERANCE: f64 = 0.05;

/// Where the requirements must hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Hold {
    /// At every corner of the resistor tolerance, hFE min..max and the ambient range (checked
    /// with the exact engine at every corner: see [`held`](fn@held)).
    WorstCase,
    /// At the nominal point only (typical hFE, nominal parts, nominal ambient).
    Nominal,
}

impl Hold {
    /// The machine name: "worst-case" or "nominal".
    pub fn name(self) -> &'static str {
        match self {
            Self::WorstCase => "worst-case",
            Self::Nominal => "nominal",
        }
    }

    /// The mode named `text` ("worst-case" or "nominal").
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "worst-case" => Some(Self::WorstCase),
            "nominal" => Some(Self::Nominal),
            _ => None,
        }
    }
}
/// The IC drift across hFE min..max that is met (fraction of the lowest IC).
pub const DRIFT_LIMIT: f64 = 0.15;
/// The pole sum the capacitors are chosen for, as a fraction of the required low corner.
pub const F_LOW_MARGIN: f64 = 0.95;
/// Low corner used for the capacitors when the requirement gives none, Hz (common practice:
/// the lower edge of the audio band).
pub const DEFAULT_F_LOW: f64 = 20.0;
/// Largest capacitor the design chooses, F.
pub const C_MAX: f64 = 10e-3;
/// Smallest resistor the design chooses, Ω.
pub const R_MIN: f64 = 1.0;
/// Largest resistor the design chooses, Ω.
pub const R_MAX: f64 = 1e6;
/// Lowest collector current of the ladder, A.
pub const IC_LADDER_MIN: f64 = 10e-6;
/// Highest collector current of the ladder, A.
pub const IC_LADDER_MAX: f64 = 100e-3;

/// How far a candidate is from each requirement (at nominal unless said).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Margins {
    /// |gain|/required − 1 (signed fraction).
    pub gain_error: f64,
    /// Swing / required swing (infinite when no swing is required).
    pub swing_ratio: f64,
    /// IC / budget.
    pub ic_ratio: f64,
    /// IC drift across hFE min..max at the nominal ambient: (max − min)/min.
    pub drift_beta: f64,
    /// IC drift across the ambient range at typical hFE: (max − min)/min.
    pub drift_temp: f64,
    /// Low corner (pole sum) / required low corner.
    pub f_low_ratio: f64,
    /// Transistor dissipation at the highest ambient / its rating there.
    pub power_ratio: f64,
}

/// One buildable design, re-analysed with the exact engine.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Candidate {
    /// The stage with standard parts (resistor and capacitor tolerances of the requirement).
    pub stage: Stage,
    /// Exact operating point at nominal (typical hFE, nominal ambient).
    pub op: OperatingPoint,
    /// v(load)/v(source EMF), signed.
    pub gain: f64,
    /// Largest undistorted peak-to-peak swing at the load, V.
    pub swing_pp: f64,
    /// Which side clips first.
    pub clips: Clip,
    /// Low corner: sum of the three poles (short-circuit time constants), Hz.
    pub f_low: f64,
    /// Current drawn from the supply at nominal, A.
    pub supply_current: f64,
    /// Transistor dissipation at nominal, W.
    pub transistor_power: f64,
    /// Lowest and highest IC over hFE min..max and the ambient range, A.
    pub ic_range: (f64, f64),
    /// Margins to each requirement.
    pub margins: Margins,
    /// Score: a weighted sum of penalties, lower is better.
    pub score: f64,
    /// The collector current the first pass aimed at, A.
    pub level: f64,
    /// What the part set holds at every corner of the spread (exact engine), when the design
    /// asked for [`Hold::WorstCase`]; see [`held`](fn@held) for the nominal mode.
    pub held: Option<Held>,
}

/// The result of a design: candidates best first.
pub type Candidates = heapless::Vec<Candidate, MAX_CANDIDATES>;

fn par(a: f64, b: f64) -> f64 {
    a * b / (a + b)
}
