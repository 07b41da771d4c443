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
//! with the exact engine at every corner ([`held`], up to 129 solves each, the capacitors chosen
//! for their low tolerance) and ranked by the exact worst case. When the closest set's gain range
//! fits the window but off centre, a second search aims the nominal gain to centre it. A
//! requirement that no set holds is refused as [`DesignError::NotHeld`] with the closest set's
//! figures. [`Hold::Nominal`] is the first round's design at the nominal point.
//!
//! Cost: a nominal E24 design is about 1 400 exact solves (1.4 Newton iterations each) and 6.5 M
//! instructions on x86-64 (demo scenario); held at every corner, 7.7 M (the `design` bench); the
//! dearest of our ±10 % sweep (a refusal after the re-centred search) about 16.2 M.

#![expect(
    clippy::neg_cmp_op_on_partial_ord,
    reason = "NaN-safe checks: a figure that is NaN must count as failing"
)]

pub mod distortion;
pub mod held;
pub mod warnings;

pub use held::{held, Held};

use core::f64::consts::PI;
use core::fmt;

use crate::device::{Profile, ProfileError};
use crate::lowfreq;
use crate::power::{power, RESISTOR_POWER_LIMIT};
use crate::series::Series;
use crate::signal::{source_gain, swing, Clip};
use crate::solve::{solve, Conditions, OperatingPoint, Region};
use crate::stage::{Part, Polarity, Resistor, Stage};
use crate::thermal_voltage;
use crate::units::{Eng, Fixed, Full};

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
    /// with the exact engine at every corner: see [`held`]).
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

/// What a stage must do.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Requirement {
    /// NPN or PNP.
    pub polarity: Polarity,
    /// Supply, V.
    pub vcc: f64,
    /// Magnitude of the midband gain v(load)/v(source EMF).
    pub gain: f64,
    /// Load, Ω, AC-coupled; `None` for no load.
    pub rl: Option<f64>,
    /// Source resistance, Ω.
    pub rs: f64,
    /// Collector-current budget at nominal, A.
    pub ic_max: f64,
    /// Least undistorted peak-to-peak swing at the load, V (0: no requirement).
    pub swing_pp: f64,
    /// Highest allowed low corner, Hz (sum of the three poles); `None`: [`DEFAULT_F_LOW`].
    pub f_low: Option<f64>,
    /// Nominal ambient, °C.
    pub temp: f64,
    /// Lowest ambient, °C.
    pub temp_min: f64,
    /// Highest ambient, °C.
    pub temp_max: f64,
    /// Resistor series (every resistor unless overridden in `part_series`).
    pub series: Series,
    /// Series per resistor (R1, R2, RC, RE1, RE2), overriding `series` where given.
    pub part_series: [Option<Series>; 5],
    /// Resistor tolerance, fraction.
    pub tol: f64,
    /// Capacitor series.
    pub cap_series: Series,
    /// Capacitor tolerance, fraction.
    pub cap_tol: f64,
    /// Where the requirements must hold.
    pub hold: Hold,
    /// Allowed deviation of |gain| from `gain`, fraction (at every corner with
    /// [`Hold::WorstCase`], at nominal with [`Hold::Nominal`]).
    pub gain_tol: f64,
}

impl Requirement {
    /// A requirement for an NPN stage on `vcc` volts with gain magnitude `gain`: no load, ideal
    /// source, 2 mA budget, no swing requirement, 20 Hz, 25 °C (range 25 to 25 °C), E24 5 %
    /// resistors, E6 20 % capacitors; held at nominal with the gain within [`GAIN_TOLERANCE`]
    /// (the command line asks for [`Hold::WorstCase`] and 10 %).
    pub fn new(vcc: f64, gain: f64) -> Self {
        Self {
            polarity: Polarity::Npn,
            vcc,
            gain,
            rl: None,
            rs: 0.0,
            ic_max: 2e-3,
            swing_pp: 0.0,
            f_low: None,
            temp: 25.0,
            temp_min: 25.0,
            temp_max: 25.0,
            series: Series::E24,
            part_series: [None; 5],
            tol: 0.05,
            cap_series: Series::E6,
            cap_tol: 0.20,
            hold: Hold::Nominal,
            gain_tol: GAIN_TOLERANCE,
        }
    }

    /// The series of one resistor.
    pub fn series_of(&self, r: Resistor) -> Series {
        self.part_series
            .get(index(r))
            .copied()
            .flatten()
            .unwrap_or(self.series)
    }

    /// The low corner the capacitors are chosen for, Hz.
    pub fn f_low_or_default(&self) -> f64 {
        self.f_low.unwrap_or(DEFAULT_F_LOW)
    }

    /// Check every field.
    pub fn validate(&self) -> Result<(), RequirementError> {
        let fin = |x: f64| x.is_finite();
        if !(fin(self.vcc) && (1.0..=1000.0).contains(&self.vcc)) {
            return Err(RequirementError::Supply);
        }
        if !(fin(self.gain) && (0.1..=1000.0).contains(&self.gain)) {
            return Err(RequirementError::Gain);
        }
        if let Some(rl) = self.rl {
            if !(fin(rl) && (1.0..=1e9).contains(&rl)) {
                return Err(RequirementError::Load);
            }
        }
        if !(fin(self.rs) && (0.0..=1e9).contains(&self.rs)) {
            return Err(RequirementError::Source);
        }
        if !(fin(self.ic_max) && self.ic_max > 0.0 && self.ic_max <= 1.0) {
            return Err(RequirementError::CurrentBudget);
        }
        if !(fin(self.swing_pp) && self.swing_pp >= 0.0 && self.swing_pp < self.vcc) {
            return Err(RequirementError::Swing);
        }
        if let Some(f) = self.f_low {
            if !(fin(f) && f > 0.0 && f <= 1e6) {
                return Err(RequirementError::LowCorner);
            }
        }
        let t_ok = |t: f64| fin(t) && (-55.0..=150.0).contains(&t);
        if !t_ok(self.temp) {
            return Err(RequirementError::Temperature);
        }
        if !(t_ok(self.temp_min)
            && t_ok(self.temp_max)
            && self.temp_min <= self.temp
            && self.temp <= self.temp_max)
        {
            return Err(RequirementError::TemperatureRange);
        }
        if !(fin(self.tol) && (0.0..=0.5).contains(&self.tol)) {
            return Err(RequirementError::Tolerance);
        }
        if !(fin(self.cap_tol) && (0.0..=0.5).contains(&self.cap_tol)) {
            return Err(RequirementError::CapacitorTolerance);
        }
        if !(fin(self.gain_tol) && self.gain_tol > 0.0 && self.gain_tol <= 0.5) {
            return Err(RequirementError::GainTolerance);
        }
        Ok(())
    }
}

/// A requirement field out of range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum RequirementError {
    /// The supply must be between 1 V and 1000 V.
    Supply,
    /// The gain magnitude must be between 0.1 and 1000.
    Gain,
    /// The load must be between 1 Ω and 1 GΩ.
    Load,
    /// The source resistance must be between 0 and 1 GΩ.
    Source,
    /// The collector-current budget must be above 0 and at most 1 A.
    CurrentBudget,
    /// The swing must be zero or positive and below the supply.
    Swing,
    /// The low corner must be above 0 Hz and at most 1 MHz.
    LowCorner,
    /// The nominal ambient must be between -55 °C and 150 °C.
    Temperature,
    /// The ambient range must lie within -55 °C to 150 °C with min <= nominal <= max.
    TemperatureRange,
    /// The resistor tolerance must be between 0 and 50 %.
    Tolerance,
    /// The capacitor tolerance must be between 0 and 50 %.
    CapacitorTolerance,
    /// The gain tolerance must be above 0 and at most 50 %.
    GainTolerance,
}

impl RequirementError {
    /// The requirement's field name as the command line spells it ("vcc", "gain", ...).
    pub fn field(self) -> &'static str {
        match self {
            Self::Supply => "vcc",
            Self::Gain => "gain",
            Self::Load => "rl",
            Self::Source => "rs",
            Self::CurrentBudget => "ic-max",
            Self::Swing => "swing",
            Self::LowCorner => "f-low",
            Self::Temperature => "temp",
            Self::TemperatureRange => "temp-min/temp-max",
            Self::Tolerance => "tol",
            Self::CapacitorTolerance => "cap-tol",
            Self::GainTolerance => "gain-tol",
        }
    }
}

impl fmt::Display for RequirementError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Self::Supply => "the supply must be between 1 V and 1000 V",
            Self::Gain => "the gain magnitude must be between 0.1 and 1000",
            Self::Load => "the load must be between 1 Ω and 1 GΩ",
            Self::Source => "the source resistance must be between 0 Ω and 1 GΩ",
            Self::CurrentBudget => "the collector-current budget must be above 0 A and at most 1 A",
            Self::Swing => "the swing must be zero or positive and below the supply",
            Self::LowCorner => "the low corner must be above 0 Hz and at most 1 MHz",
            Self::Temperature => "the nominal ambient must be between -55 °C and 150 °C",
            Self::TemperatureRange => {
                "the ambient range must lie within -55 °C to 150 °C with min <= nominal <= max"
            }
            Self::Tolerance => "the resistor tolerance must be between 0 and 50 %",
            Self::CapacitorTolerance => "the capacitor tolerance must be between 0 and 50 %",
            Self::GainTolerance => "the gain tolerance must be above 0 and at most 50 %",
        })
    }
}

/// A requirement the design checks, for messages and margins.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Check {
    /// The gain magnitude within [`Requirement::gain_tol`].
    Gain,
    /// The swing at least the requirement.
    Swing,
    /// IC at nominal within the budget.
    Current,
    /// IC drift across hFE min..max at most [`DRIFT_LIMIT`].
    Drift,
    /// The low corner (pole sum) at most the requirement.
    LowCorner,
    /// Transistor dissipation within its rating at the highest ambient.
    Dissipation,
    /// The transistor in its active region at nominal.
    Region,
}

impl Check {
    /// The requirement's name in plain words.
    pub fn name(self) -> &'static str {
        match self {
            Self::Gain => "gain",
            Self::Swing => "swing",
            Self::Current => "current budget",
            Self::Drift => "IC drift over hFE",
            Self::LowCorner => "low corner",
            Self::Dissipation => "transistor dissipation",
            Self::Region => "active region",
        }
    }
}

/// Why no design could be given. Each variant names the requirement and what would work.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum DesignError {
    /// A requirement field is out of range.
    Invalid(RequirementError),
    /// The transistor profile is out of range.
    Profile(ProfileError),
    /// The gain needs more collector current than the budget allows.
    GainNeedsCurrent {
        /// Required gain magnitude.
        gain: f64,
        /// Load, Ω (`None`: no load).
        rl: Option<f64>,
        /// Least collector current that reaches the gain, A.
        needs_ic: f64,
        /// The budget, A.
        budget: f64,
    },
    /// The swing into the load needs more collector current than the budget allows.
    SwingNeedsCurrent {
        /// Required swing, V peak-to-peak.
        swing: f64,
        /// Load, Ω (`None`: no load).
        rl: Option<f64>,
        /// Least collector current that gives the swing, A.
        needs_ic: f64,
        /// The budget, A.
        budget: f64,
    },
    /// The gain cannot be reached with this supply, source, load and transistor at any current.
    GainOutOfReach {
        /// Required gain magnitude.
        gain: f64,
        /// The highest gain the hand method finds, magnitude.
        best: f64,
    },
    /// The swing cannot be reached from this supply at any current.
    SwingOutOfReach {
        /// Required swing, V peak-to-peak.
        swing: f64,
        /// The largest swing the hand method finds, V peak-to-peak.
        best: f64,
        /// A supply that would give the swing (estimate), V.
        needs_vcc: f64,
    },
    /// Gain and swing are each reachable, but not together in one stage.
    GainAndSwing {
        /// Required gain magnitude.
        gain: f64,
        /// Required swing, V peak-to-peak.
        swing: f64,
    },
    /// The current needed would overheat the transistor at the highest ambient.
    Dissipation {
        /// Least collector current needed, A.
        needs_ic: f64,
        /// The transistor's dissipation at that current (estimate), W.
        power: f64,
        /// Its rating at the highest ambient, W.
        rating: f64,
    },
    /// The low corner needs a capacitor larger than [`C_MAX`].
    LowCorner {
        /// Required low corner, Hz.
        f_low: f64,
        /// The capacitance that would be needed, F.
        needs: f64,
    },
    /// No part set holds every requirement at every corner of the spread ([`Hold::WorstCase`]);
    /// the figures are the exact engine's at the corners of the closest part set.
    NotHeld {
        /// The requirement held worst.
        check: Check,
        /// Its required value (the end of the gain window, V, A or Hz).
        required: f64,
        /// What the closest part set holds at its worst corner, same unit.
        held: f64,
        /// Required gain magnitude.
        gain: f64,
        /// Gain tolerance asked for, fraction.
        gain_tol: f64,
        /// Least and largest |gain| of the closest part set over the corners.
        gain_range: (f64, f64),
    },
    /// The search found no part set that meets every requirement; the closest one misses this.
    Shortfall {
        /// The requirement missed.
        check: Check,
        /// Required value (gain magnitude, V, A, fraction, Hz or W).
        required: f64,
        /// What the closest part set achieves, same unit.
        achieved: f64,
    },
}

/// A printable engineering value.
fn e(value: f64, unit: &'static str) -> Eng {
    Eng::new(value, unit)
}

struct Load(Option<f64>);

impl fmt::Display for Load {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            Some(rl) => write!(f, "into {}", e(rl, "Ω")),
            None => f.write_str("with no load"),
        }
    }
}

impl fmt::Display for DesignError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Self::Invalid(r) => write!(f, "{}: {r}", r.field()),
            Self::Profile(p) => write!(f, "transistor: {p}"),
            Self::GainNeedsCurrent {
                gain,
                rl,
                needs_ic,
                budget,
            } => write!(
                f,
                "gain: {} {} needs IC >= {}; the budget is {}: raise the budget (--ic-max) \
                 or lower the gain",
                Full(gain),
                Load(rl),
                e(needs_ic, "A"),
                e(budget, "A")
            ),
            Self::SwingNeedsCurrent {
                swing,
                rl,
                needs_ic,
                budget,
            } => write!(
                f,
                "swing: {} peak-to-peak {} needs IC >= {}; the budget is {}: raise the budget \
                 (--ic-max), raise the load or lower the swing",
                e(swing, "V"),
                Load(rl),
                e(needs_ic, "A"),
                e(budget, "A")
            ),
            Self::GainOutOfReach { gain, best } => write!(
                f,
                "gain: {} is out of reach with this supply, source, load and transistor; \
                 about {} is the most: lower the gain, lower RS or raise RL",
                Full(gain),
                Fixed(best, 1)
            ),
            Self::SwingOutOfReach {
                swing,
                best,
                needs_vcc,
            } => write!(
                f,
                "swing: {} peak-to-peak is out of reach; about {} is the most from this supply: \
                 lower the swing or raise the supply to about {}",
                e(swing, "V"),
                e(best, "V"),
                e(needs_vcc, "V")
            ),
            Self::GainAndSwing { gain, swing } => write!(
                f,
                "gain and swing: gain {} and a swing of {} peak-to-peak are each reachable \
                 but not together: lower one of them or raise the supply",
                Full(gain),
                e(swing, "V")
            ),
            Self::Dissipation {
                needs_ic,
                power,
                rating,
            } => write!(
                f,
                "dissipation: the stage needs IC >= {}, about {} in the transistor, over its \
                 {} rating at the highest ambient: lower the gain or swing, or use a larger \
                 transistor (--power-rating)",
                e(needs_ic, "A"),
                e(power, "W"),
                e(rating, "W")
            ),
            Self::LowCorner { f_low, needs } => write!(
                f,
                "f-low: a low corner of {} needs a capacitor of about {}, more than the {} \
                 allowed: raise the low corner",
                e(f_low, "Hz"),
                e(needs, "F"),
                e(C_MAX, "F")
            ),
            Self::NotHeld {
                check,
                required,
                held,
                gain,
                gain_tol,
                gain_range: (g_lo, g_hi),
            } => match check {
                Check::Gain => {
                    let need = (1.0 - g_lo / gain).max(g_hi / gain - 1.0);
                    write!(
                        f,
                        "gain: {} within ±{} % does not hold over the spread: the closest part \
                         set gives |gain| {} to {} over the corners of the resistor tolerance, \
                         hFE and the ambient (±{} %): allow --gain-tol {}, use tighter \
                         resistors (--series E96 --tol 1), or design for --hold nominal",
                        Full(gain),
                        Fixed(gain_tol * 100.0, 1),
                        Fixed(g_lo, 2),
                        Fixed(g_hi, 2),
                        Fixed(need * 100.0, 1),
                        Fixed(libm::ceil(need * 100.0 + 0.05), 0)
                    )
                }
                Check::Swing => write!(
                    f,
                    "swing: {} peak-to-peak does not hold at every corner of the spread: the \
                     closest part set keeps {}: lower --swing to {}, raise the supply or the \
                     budget, or design for --hold nominal",
                    e(required, "V"),
                    e(held, "V"),
                    e(held, "V")
                ),
                Check::Current => write!(
                    f,
                    "ic-max: the closest part set that holds the rest draws up to {} at the \
                     worst corner of the spread, over the {} budget: raise --ic-max to {}, \
                     or design for --hold nominal",
                    e(held, "A"),
                    e(required, "A"),
                    e(held, "A")
                ),
                Check::LowCorner => write!(
                    f,
                    "f-low: with the capacitors at their low tolerance the closest part set's \
                     low corner reaches {}, over {}: raise --f-low to {}",
                    e(held, "Hz"),
                    e(required, "Hz"),
                    e(held, "Hz")
                ),
                _ => f.write_str(
                    "bias: the closest part set leaves the active region at a corner of the \
                     spread: narrow the hFE spread or the ambient range, lower the swing, or \
                     design for --hold nominal",
                ),
            },
            Self::Shortfall {
                check,
                required,
                achieved,
            } => match check {
                Check::Gain => write!(
                    f,
                    "gain: no standard-value part set reaches {} within the gain tolerance; \
                     the closest gives {}: try a finer series (--series E48), a wider \
                     tolerance (--gain-tol) or another gain",
                    Full(required),
                    Fixed(achieved, 2)
                ),
                Check::Swing => write!(
                    f,
                    "swing: no part set reaches {} peak-to-peak; the closest gives {}: lower \
                     the swing or raise the budget or supply",
                    e(required, "V"),
                    e(achieved, "V")
                ),
                Check::Current => write!(
                    f,
                    "ic-max: no part set stays within {}; the closest draws {}: raise the budget",
                    e(required, "A"),
                    e(achieved, "A")
                ),
                Check::Drift => write!(
                    f,
                    "hFE spread: no part set keeps IC within {} % across hFE min..max; the \
                     closest moves {} %: narrow the hFE spread or raise the budget",
                    Fixed(required * 100.0, 0),
                    Fixed(achieved * 100.0, 1)
                ),
                Check::LowCorner => write!(
                    f,
                    "f-low: no capacitor set reaches {}; the closest gives {}: raise the low \
                     corner",
                    e(required, "Hz"),
                    e(achieved, "Hz")
                ),
                Check::Dissipation => write!(
                    f,
                    "dissipation: every part set puts more than the {} rating into the \
                     transistor (closest {}): use a larger transistor or lower the supply",
                    e(required, "W"),
                    e(achieved, "W")
                ),
                Check::Region => f.write_str(
                    "bias: no part set keeps the transistor in its active region: check the \
                     supply and the requirement",
                ),
            },
        }
    }
}

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
    /// asked for [`Hold::WorstCase`]; see [`held`] for the nominal mode.
    pub held: Option<Held>,
}

/// The result of a design: candidates best first.
pub type Candidates = heapless::Vec<Candidate, MAX_CANDIDATES>;

/// The first pass at one collector current: exact (not yet standard) values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ideal {
    /// Design collector current, A.
    pub ic: f64,
    /// Supply to base, Ω.
    pub r1: f64,
    /// Base to ground, Ω.
    pub r2: f64,
    /// Collector resistor, Ω.
    pub rc: f64,
    /// Unbypassed emitter resistor, Ω.
    pub re1: f64,
    /// Bypassed emitter resistor, Ω.
    pub re2: f64,
    /// Emitter voltage aimed at, V (magnitude, from the emitter-side rail).
    pub ve: f64,
    /// Divider Thévenin voltage, V (from the emitter-side rail).
    pub vbb: f64,
    /// Quiescent VCE, V (magnitude).
    pub vce: f64,
    /// Expected gain magnitude from the source EMF.
    pub gain: f64,
    /// Expected swing at the load, V peak-to-peak.
    pub swing_pp: f64,
    /// Expected input impedance (without RS), Ω.
    pub zin: f64,
}

/// Why the first pass has no answer at a current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FirstPassMiss {
    /// The gain is out of reach at this current (RE1 would be below [`R_MIN`]); the most there.
    Gain(f64),
    /// The swing is out of reach at this current; the most there, V.
    Swing(f64),
    /// The bias does not fit the supply, or values fall outside [`R_MIN`]..[`R_MAX`].
    Bias,
    /// The transistor would dissipate more than 80 % of its rating at the highest ambient; W.
    Dissipation(f64),
}

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
/// current ignored), R1 = R2·(VCC − VB)/VB. Kept to compare the corrected first pass with.
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

fn index(r: Resistor) -> usize {
    match r {
        Resistor::R1 => 0,
        Resistor::R2 => 1,
        Resistor::Rc => 2,
        Resistor::Re1 => 3,
        Resistor::Re2 => 4,
    }
}

fn par(a: f64, b: f64) -> f64 {
    a * b / (a + b)
}

/// The emitter voltage the first pass aims at, V: a tenth of the supply (common practice), or
/// more where the ambient range needs it (VBE moves about 2.1 mV/°C; keep that below a tenth of
/// VE), at most a fifth of the supply; `low` asks for the least (6 % of the supply, 0.3 V).
fn ve_target(req: &Requirement, low: bool) -> f64 {
    let vcc = req.vcc;
    if low {
        return (0.06 * vcc).max(0.3).min(0.2 * vcc);
    }
    let span = req.temp_max - req.temp_min;
    (0.1 * vcc).max(0.0021 * span / 0.1).min(0.2 * vcc)
}

/// Thévenin resistance of the divider per ohm of emitter resistance that keeps IC within
/// `drift` across hFE min..max, never above the common-practice 0.1·hFE(min).
fn stiffness(profile: &Profile, drift: f64) -> f64 {
    let (bmin, bmax) = (profile.beta_min + 1.0, profile.beta_max + 1.0);
    let rule = 0.1 * profile.beta_min;
    let den = 1.0 / bmin - (1.0 + drift) / bmax;
    if den > 0.0 {
        (drift / den).min(rule)
    } else {
        rule
    }
}

/// The corrected hand method at collector current `ic` (see the module text). `low_ve` aims the
/// emitter voltage at its least instead of its usual value.
pub fn first_pass(
    req: &Requirement,
    profile: &Profile,
    ic: f64,
    low_ve: bool,
) -> Result<Ideal, FirstPassMiss> {
    pass(req, profile, ic, low_ve, true, true)
}

/// The first pass; `check_gain` false holds RE1 at its least instead of failing, `check_swing`
/// false accepts any swing (both for telling which requirement is out of reach).
fn pass(
    req: &Requirement,
    profile: &Profile,
    ic: f64,
    low_ve: bool,
    check_gain: bool,
    check_swing: bool,
) -> Result<Ideal, FirstPassMiss> {
    let vt = thermal_voltage(req.temp);
    let beta = profile.beta_at(profile.beta_typ, req.temp);
    let alpha = beta / (beta + 1.0);
    let ie = ic / alpha;
    let re = vt / ie;
    let vbe = vt * libm::log(ic / profile.is_at(req.temp) + 1.0);
    let vcc = req.vcc;
    let u = stiffness(profile, 0.05);
    let mut ve = ve_target(req, low_ve);
    let mut k = 1.0;
    let mut out = None;
    for _ in 0..4 {
        // Centre the Q-point: VCE − VCE(sat) = IC·(Rp + RE1) with RE1 = k·α·Rp/A − re.
        let v_room = vcc - ve - profile.vce_sat;
        if !(v_room > 0.0) {
            return Err(FirstPassMiss::Bias);
        }
        let m = 1.0 + k * alpha / req.gain;
        let w = v_room / ic + re;
        let rc = match req.rl {
            Some(rl) => {
                let b = rl * (1.0 + m) - w;
                0.5 * (-b + libm::sqrt(b * b + 4.0 * w * rl))
            }
            None => w / (1.0 + m),
        };
        let rp = req.rl.map_or(rc, |rl| par(rc, rl));
        let re1 = k * alpha * rp / req.gain - re;
        let swing = 2.0 * ic * rp;
        if re1 < R_MIN && check_gain {
            // The most gain here: RE1 at its least.
            return Err(FirstPassMiss::Gain(k * alpha * rp / (re + R_MIN)));
        }
        let re1 = re1.max(R_MIN);
        let re_total = ve / ie;
        let re2 = (re_total - re1).max(0.25 * re1).max(R_MIN);
        let re_total = re1 + re2;
        ve = ie * re_total;
        let mut rth = u * re_total;
        let mut vbb = vbe + ve + rth * ic / beta;
        // A divider resistor above R_MAX (a small current from a high supply): a stiffer
        // divider, which only steadies the bias more, brings it within range. (Refusing here
        // instead refused a 24 V, 300 µA stage that the standard values build.)
        for _ in 0..3 {
            let big = (rth * vcc / vbb).max(rth * vcc / (vcc - vbb));
            if !(big > R_MAX) {
                break;
            }
            rth *= 0.995 * R_MAX / big;
            vbb = vbe + ve + rth * ic / beta;
        }
        if !(vbb < 0.95 * vcc) {
            return Err(FirstPassMiss::Bias);
        }
        let r1 = rth * vcc / vbb;
        let r2 = rth * vcc / (vcc - vbb);
        let zin = par(rth, (beta + 1.0) * (re + re1));
        k = if req.rs > 0.0 {
            zin / (zin + req.rs)
        } else {
            1.0
        };
        let vce = vcc - ic * rc - ve;
        let gain = k * alpha * rp / (re + re1);
        // R1 runs from the supply to the base: on the collector side for NPN, on the emitter
        // side for PNP.
        let (r1, r2) = match req.polarity {
            Polarity::Npn => (r1, r2),
            Polarity::Pnp => (r2, r1),
        };
        out = Some((
            Ideal {
                ic,
                r1,
                r2,
                rc,
                re1,
                re2,
                ve,
                vbb,
                vce,
                gain,
                swing_pp: swing,
                zin,
            },
            swing,
        ));
    }
    let (ideal, swing) = out.ok_or(FirstPassMiss::Bias)?;
    // The gain error left by the last update of k (a few percent at most) is the search's job.
    if swing < req.swing_pp && check_swing {
        return Err(FirstPassMiss::Swing(swing));
    }
    let values = [ideal.r1, ideal.r2, ideal.rc, ideal.re1, ideal.re2];
    if !values
        .iter()
        .all(|v| v.is_finite() && (R_MIN..=R_MAX).contains(v))
    {
        return Err(FirstPassMiss::Bias);
    }
    let p = ic * ideal.vce;
    if p > 0.8 * profile.power_rating_at(req.temp_max) {
        return Err(FirstPassMiss::Dissipation(p));
    }
    Ok(ideal)
}

/// The collector currents of the ladder: E6 values from [`IC_LADDER_MIN`] to [`IC_LADDER_MAX`].
fn ladder() -> impl Iterator<Item = f64> {
    (0..31)
        .filter_map(|k| Series::E6.step(IC_LADDER_MIN, k))
        .filter(|&i| i <= IC_LADDER_MAX * (1.0 + 1e-9))
}

/// A stage from resistor values and capacitors.
fn build(req: &Requirement, r: [f64; 5], caps: [Option<f64>; 3]) -> Stage {
    let part = |v: f64| Part::new(v, req.tol);
    let [r1, r2, rc, re1, re2] = r;
    let cap = |c: Option<f64>| c.map(|c| Part::new(c, req.cap_tol));
    let [cin, cout, ce] = caps;
    Stage {
        polarity: req.polarity,
        vcc: Part::new(req.vcc, 0.0),
        r1: part(r1),
        r2: part(r2),
        rc: part(rc),
        re1: part(re1),
        re2: part(re2),
        rl: req.rl,
        rs: req.rs,
        cin: cap(cin),
        cout: cap(cout),
        ce: cap(ce),
    }
}

/// The search's record of one part set.
#[derive(Debug, Clone, Copy)]
struct Eval {
    r: [f64; 5],
    op: OperatingPoint,
    gain: f64,
    swing: f64,
    clips: Clip,
    supply: f64,
    ptr: f64,
    ic_range: (f64, f64),
    margins: Margins,
    score: f64,
    /// Every requirement met (the low corner is checked later).
    meets: bool,
    /// The first requirement missed, with its required and achieved values.
    miss: Option<(Check, f64, f64)>,
    level: f64,
    /// The score without the worst-case terms ([`Hold::WorstCase`]).
    base: f64,
    /// The worst case was estimated (every nominal requirement met, analysed in full).
    estimated: bool,
}

/// The worst case estimated from sensitivities: the hFE and ambient ends solved, each
/// resistor's effect at +tol added in the unfavourable direction (a linear bound).
#[derive(Debug, Clone, Copy)]
struct Estimate {
    gain_lo: f64,
    gain_hi: f64,
    swing_lo: f64,
    ic_hi: f64,
    active: bool,
}

/// The score's worst-case terms for held (or estimated) figures, and whether they hold with
/// `slack` (fraction) to spare or less.
fn worst_terms(
    req: &Requirement,
    gain_lo: f64,
    gain_hi: f64,
    swing_lo: f64,
    ic_hi: f64,
    slack: f64,
) -> (f64, Option<(Check, f64, f64)>) {
    let lo = req.gain * (1.0 - req.gain_tol);
    let hi = req.gain * (1.0 + req.gain_tol);
    let m_gain = (gain_lo / lo - 1.0).min(1.0 - gain_hi / hi);
    let centre = 0.5 * (gain_lo + gain_hi) / req.gain - 1.0;
    let m_ic = 1.0 - ic_hi / req.ic_max;
    let mut score = weight::WC_GAIN * pos(0.03 - m_gain)
        + weight::WC_CENTRE * libm::fabs(centre)
        + weight::WC_IC * pos(0.03 - m_ic);
    let mut miss = None;
    if !(m_gain >= -slack) {
        miss = Some(if gain_lo < lo {
            (Check::Gain, lo, gain_lo)
        } else {
            (Check::Gain, hi, gain_hi)
        });
    }
    if req.swing_pp > 0.0 {
        let m_sw = swing_lo / req.swing_pp - 1.0;
        score += weight::SWING_SHORT * pos(0.05 - m_sw) + weight::SWING_SOFT * pos(0.3 - m_sw);
        if !(m_sw >= -slack) && miss.is_none() {
            miss = Some((Check::Swing, req.swing_pp, swing_lo));
        }
    } else {
        // No swing asked: still room to swing at the worst corner (forward active there).
        score += weight::SWING_SOFT * pos(0.3 - swing_lo / req.vcc);
        if !(swing_lo > 0.0) && miss.is_none() {
            miss = Some((Check::Region, 0.0, 0.0));
        }
    }
    if !(m_ic >= -slack) && miss.is_none() {
        miss = Some((Check::Current, req.ic_max, ic_hi));
    }
    (score, miss)
}

/// Weights of the score (dimensionless penalty per unit of each figure).
mod weight {
    /// Per unit of relative gain error.
    pub const GAIN: f64 = 100.0;
    /// Per unit of relative gain error beyond 2 %.
    pub const GAIN_STEEP: f64 = 1000.0;
    /// Per unit of swing shortfall below 1.05 × the requirement.
    pub const SWING_SHORT: f64 = 200.0;
    /// Per unit of swing below 1.3 × the requirement (soft preference for margin).
    pub const SWING_SOFT: f64 = 4.0;
    /// Per unit of IC drift over hFE.
    pub const DRIFT: f64 = 20.0;
    /// Per unit of IC drift over hFE beyond 10 %.
    pub const DRIFT_STEEP: f64 = 500.0;
    /// Per unit of IC drift over the ambient range.
    pub const DRIFT_TEMP: f64 = 10.0;
    /// Per unit of IC drift over the ambient range beyond 12 %.
    pub const DRIFT_TEMP_STEEP: f64 = 100.0;
    /// Per watt drawn from the supply.
    pub const SUPPLY: f64 = 20.0;
    /// Per unit of transistor dissipation ratio beyond one half.
    pub const HEAT: f64 = 10.0;
    /// Per unit of re/(re + RE1): a gain set by the resistors, not by the junction.
    pub const JUNCTION: f64 = 1.0;
    /// Per unit of IC over 97 % of the budget.
    pub const NEAR_BUDGET: f64 = 300.0;
    /// Per unit of the hottest resistor's share of 0.25 W beyond one half.
    pub const RESISTOR_HEAT: f64 = 2.0;
    /// A requirement missed.
    pub const MISS: f64 = 1e4;
    /// Per unit of worst-case gain margin below 3 % of the window.
    pub const WC_GAIN: f64 = 300.0;
    /// Per unit of the worst-case gain range's centre away from the requirement.
    pub const WC_CENTRE: f64 = 100.0;
    /// Per unit of worst-case IC margin below 3 % of the budget.
    pub const WC_IC: f64 = 300.0;
}

fn pos(x: f64) -> f64 {
    if x > 0.0 {
        x
    } else {
        0.0
    }
}

/// The midband figures the search ranks by.
struct Mid {
    /// v(load)/v(source EMF), signed.
    gain: f64,
    /// Largest undistorted peak-to-peak swing at the load, V.
    swing_pp: f64,
    /// Which side clips first.
    clips: Clip,
}

/// Exact analysis of one resistor set; `bound` skips the drift solves of a set that cannot beat
/// it. `None` when the engine finds no operating point or no signal path.
fn evaluate(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    r: [f64; 5],
    level: f64,
    bound: f64,
    with_drift: bool,
) -> Option<Eval> {
    let stage = build(req, r, [None; 3]);
    let cond = Conditions {
        temp_c: req.temp,
        beta_25: profile.beta_typ,
        fault: None,
        loads: Default::default(),
    };
    let op = solve(&stage, profile, cond).ok()?;
    // Of the midband figures the design needs the gain (one small-signal solve: the same one
    // `midband` makes for it, bit for bit) and the swing, not the impedances (two more solves).
    let (gain, _) = source_gain(&stage, &op.y)?;
    let (swing_pp, clips) = swing(&stage, profile, &op);
    let mid = Mid {
        gain,
        swing_pp,
        clips,
    };
    let pw = power(&stage, profile, &op, req.temp);
    let hot_rating = profile.power_rating_at(req.temp_max);
    let gain_error = libm::fabs(mid.gain) / req.gain - 1.0;
    let swing_ratio = if req.swing_pp > 0.0 {
        mid.swing_pp / req.swing_pp
    } else {
        f64::INFINITY
    };
    let ic_ratio = op.ic / req.ic_max;
    let power_ratio = if hot_rating > 0.0 {
        pw.transistor / hot_rating
    } else {
        f64::INFINITY
    };
    let ge = libm::fabs(gain_error);
    let re_junction = if op.y.y21 > 0.0 {
        1.0 / op.y.y21
    } else {
        f64::INFINITY
    };
    let worst = req.hold == Hold::WorstCase;
    // The gain at nominal near the requirement (with the worst case asked, this also centres
    // the spread's gain window); the budget at nominal only when that is what is asked.
    let nominal_terms = weight::GAIN * ge
        + weight::GAIN_STEEP * pos(ge - 0.02)
        + if worst {
            0.0
        } else {
            weight::NEAR_BUDGET * pos(ic_ratio - 0.97)
        };
    let mut score = nominal_terms
        + weight::SUPPLY * pw.supply_current * req.vcc
        + weight::HEAT * pos(power_ratio - 0.5)
        + weight::JUNCTION * re_junction / (re_junction + r[3])
        + weight::RESISTOR_HEAT
            * pos(pw.resistors.iter().fold(0.0_f64, |a, &b| a.max(b)) / RESISTOR_POWER_LIMIT - 0.5);
    if worst {
        // The swing's terms are worst-case ones below.
    } else if req.swing_pp > 0.0 {
        score += weight::SWING_SHORT * pos(1.05 - swing_ratio)
            + weight::SWING_SOFT * pos(1.3 - swing_ratio);
    } else {
        score += weight::SWING_SOFT * pos(0.3 - mid.swing_pp / req.vcc);
    }
    let mut miss = None;
    let mut note = |c: Check, required: f64, achieved: f64, bad: bool| {
        if bad && miss.is_none() {
            miss = Some((c, required, achieved));
        }
    };
    note(Check::Region, 0.0, 0.0, op.region != Region::Active);
    note(
        Check::Gain,
        req.gain,
        libm::fabs(mid.gain),
        !(ge <= req.gain_tol),
    );
    note(
        Check::Swing,
        req.swing_pp,
        mid.swing_pp,
        !(mid.swing_pp >= req.swing_pp),
    );
    note(Check::Current, req.ic_max, op.ic, !(op.ic <= req.ic_max));
    note(
        Check::Dissipation,
        hot_rating,
        pw.transistor,
        !(power_ratio <= 1.0),
    );
    let mut margins = Margins {
        gain_error,
        swing_ratio,
        ic_ratio,
        drift_beta: 0.0,
        drift_temp: 0.0,
        f_low_ratio: 0.0,
        power_ratio,
    };
    let mut ic_range = (op.ic, op.ic);
    // Not analysed for drift (a set that cannot take a place in the list): a miss of its own.
    let skipped = miss.is_none() && !(with_drift && score < bound);
    let nominal_ok = miss.is_none();
    let mut wc_terms = 0.0;
    if miss.is_some() {
        score += weight::MISS;
    } else if !skipped {
        // IC, |gain|, swing and region of `s` at hFE `beta_25` and ambient `temp_c`.
        let point = |s: &Stage, beta_25: f64, temp_c: f64| {
            let o = solve(
                s,
                profile,
                Conditions {
                    temp_c,
                    beta_25,
                    fault: None,
                    loads: Default::default(),
                },
            )
            .ok()?;
            let (g, sw) = if worst {
                let g = source_gain(s, &o.y).map_or(0.0, |(g, _)| libm::fabs(g));
                (g, swing(s, profile, &o).0)
            } else {
                (0.0, 0.0)
            };
            Some((o.ic, g, sw, o.region == Region::Active))
        };
        let p_lo = point(&stage, profile.beta_min, req.temp)?;
        let p_hi = point(&stage, profile.beta_max, req.temp)?;
        let p_cold = point(&stage, profile.beta_typ, req.temp_min)?;
        let p_hot = point(&stage, profile.beta_typ, req.temp_max)?;
        let (lo, hi, cold, hot) = (p_lo.0, p_hi.0, p_cold.0, p_hot.0);
        if worst {
            let g0 = libm::fabs(mid.gain);
            let mut est = Estimate {
                gain_lo: g0,
                gain_hi: g0,
                swing_lo: mid.swing_pp,
                ic_hi: op.ic,
                active: op.region == Region::Active,
            };
            for p in [p_lo, p_hi, p_cold, p_hot] {
                est.ic_hi = est.ic_hi.max(p.0);
                est.gain_lo = est.gain_lo.min(p.1);
                est.gain_hi = est.gain_hi.max(p.1);
                est.swing_lo = est.swing_lo.min(p.2);
                est.active &= p.3;
            }
            // Each resistor at +tol: its effect, taken in the unfavourable direction.
            let (mut d_ic, mut d_g, mut d_sw) = (0.0, 0.0, 0.0);
            for k in 0..5 {
                let mut s = stage;
                let part = match k {
                    0 => &mut s.r1,
                    1 => &mut s.r2,
                    2 => &mut s.rc,
                    3 => &mut s.re1,
                    _ => &mut s.re2,
                };
                if !(part.value > 0.0 && part.tol > 0.0) {
                    continue;
                }
                part.value *= 1.0 + part.tol;
                let p = point(&s, profile.beta_typ, req.temp)?;
                d_ic += libm::fabs(p.0 - op.ic);
                d_g += libm::fabs(p.1 - g0);
                d_sw += libm::fabs(p.2 - mid.swing_pp);
                est.active &= p.3;
            }
            est.ic_hi += d_ic;
            est.gain_lo -= d_g;
            est.gain_hi += d_g;
            est.swing_lo -= d_sw;
            let (terms, wc_miss) = worst_terms(
                real,
                est.gain_lo,
                est.gain_hi,
                est.swing_lo,
                est.ic_hi,
                ESTIMATE_SLACK,
            );
            score += terms;
            wc_terms = terms;
            if !est.active {
                miss = Some((Check::Region, 0.0, 0.0));
                score += weight::MISS;
            } else if let Some(m) = wc_miss {
                miss = Some(m);
                score += weight::MISS;
            }
        }
        let spread = |a: f64, b: f64| {
            if a.min(b) > 0.0 {
                (a.max(b) - a.min(b)) / a.min(b)
            } else {
                f64::INFINITY
            }
        };
        let db = spread(lo, hi);
        let dt = spread(cold.min(op.ic), hot.max(op.ic));
        margins.drift_beta = db;
        margins.drift_temp = dt;
        ic_range = (lo.min(cold).min(op.ic), hi.max(hot).max(op.ic));
        score += weight::DRIFT * db
            + weight::DRIFT_STEEP * pos(db - 0.10)
            + weight::DRIFT_TEMP * dt
            + weight::DRIFT_TEMP_STEEP * pos(dt - 0.12);
        if !(db <= DRIFT_LIMIT) && !worst {
            miss = Some((Check::Drift, DRIFT_LIMIT, db));
            score += weight::MISS;
        }
    }
    if skipped {
        score += weight::MISS;
    }
    let meets = !skipped && miss.is_none();
    Some(Eval {
        r,
        op,
        gain: mid.gain,
        swing: mid.swing_pp,
        clips: mid.clips,
        supply: pw.supply_current,
        ptr: pw.transistor,
        ic_range,
        margins,
        score,
        meets,
        miss,
        level,
        base: score - wc_terms,
        estimated: worst && !skipped && nominal_ok,
    })
}

/// A part set kept by the search: what ranks it and what re-analyses it (the full record is
/// rebuilt only for the part sets that are kept to the end, to keep the search's working set
/// small on a target with little stack).
#[derive(Debug, Clone, Copy)]
struct Kept {
    r: [f64; 5],
    level: f64,
    score: f64,
}

/// The best part sets found so far, best first, distinct.
struct Best {
    list: heapless::Vec<Kept, MAX_CANDIDATES>,
    /// The closest part set that misses a requirement: its score and what it misses.
    closest_miss: Option<(f64, (Check, f64, f64))>,
    /// The closest part sets that meet every requirement at nominal but miss the estimated
    /// worst case, best first ([`Hold::WorstCase`]: the exact corners judge them when no kept
    /// set holds).
    near: heapless::Vec<Kept, NEAR>,
}

/// How many near misses of the worst-case estimate are kept.
const NEAR: usize = 4;

impl Best {
    /// The score a new set must beat to enter the list.
    fn bound(&self) -> f64 {
        if self.list.is_full() {
            self.list.last().map_or(f64::INFINITY, |e| e.score)
        } else {
            f64::INFINITY
        }
    }

    fn offer(&mut self, ev: &Eval) {
        if !ev.meets && ev.estimated && !self.near.iter().any(|e| e.r == ev.r) {
            let at = self
                .near
                .iter()
                .position(|e| ev.score < e.score)
                .unwrap_or(self.near.len());
            if at < NEAR {
                if self.near.is_full() {
                    self.near.pop();
                }
                let _ = self.near.insert(
                    at,
                    Kept {
                        r: ev.r,
                        level: ev.level,
                        score: ev.score,
                    },
                );
            }
        }
        if !ev.meets {
            if let Some(miss) = ev.miss {
                if self.closest_miss.is_none_or(|c| ev.score < c.0) {
                    self.closest_miss = Some((ev.score, miss));
                }
            }
            return;
        }
        if self.list.iter().any(|e| e.r == ev.r) {
            return;
        }
        let at = self
            .list
            .iter()
            .position(|e| ev.score < e.score)
            .unwrap_or(self.list.len());
        if at >= MAX_CANDIDATES {
            return;
        }
        if self.list.is_full() {
            self.list.pop();
        }
        // Cannot fail: there is room after the pop.
        let _ = self.list.insert(
            at,
            Kept {
                r: ev.r,
                level: ev.level,
                score: ev.score,
            },
        );
    }
}

/// The neighbours of a value in a series: `steps` (at most 2) positions either side of the
/// nearest member, within the resistor range.
fn around(series: Series, x: f64, steps: u8) -> heapless::Vec<f64, 5> {
    let steps = steps.min(2);
    let keep = |v: &f64| (R_MIN..=R_MAX).contains(v);
    let mut out = heapless::Vec::new();
    for v in series.around(x, steps, steps).filter(keep) {
        let _ = out.push(v);
    }
    out
}

/// The search around one first pass.
fn search_level(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    ideal: &Ideal,
    best: &mut Best,
) {
    let s = |r: Resistor| req.series_of(r);
    let near = |r: Resistor, x: f64| s(r).nearest(x).unwrap_or(x);
    let (r1n, r2n, re2n) = (
        near(Resistor::R1, ideal.r1),
        near(Resistor::R2, ideal.r2),
        near(Resistor::Re2, ideal.re2),
    );
    // Phase 1: the gain pair (RC, RE1) with the nominal divider and RE2.
    // Ratios of two E-series members are as coarse as the series, so for each RC within two
    // steps RE1 is taken next to the value that gives the gain with that RC.
    let mut pairs: heapless::Vec<(f64, f64, f64), 2> = heapless::Vec::new();
    let vt = thermal_voltage(req.temp);
    let beta = profile.beta_at(profile.beta_typ, req.temp);
    let alpha = beta / (beta + 1.0);
    let re = vt * alpha / ideal.ic;
    let k = if req.rs > 0.0 {
        ideal.zin / (ideal.zin + req.rs)
    } else {
        1.0
    };
    for rc in around(s(Resistor::Rc), ideal.rc, 2) {
        let rp = req.rl.map_or(rc, |rl| par(rc, rl));
        let re1_exact = (k * alpha * rp / req.gain - re).max(R_MIN);
        for re1 in around(s(Resistor::Re1), re1_exact, 1) {
            let Some(ev) = evaluate(
                req,
                real,
                profile,
                [r1n, r2n, rc, re1, re2n],
                ideal.ic,
                0.0,
                false,
            ) else {
                continue;
            };
            // Rank by the score without the drift terms.
            let sc = ev.score - if ev.miss.is_none() { weight::MISS } else { 0.0 };
            let at = pairs.iter().position(|p| sc < p.2).unwrap_or(pairs.len());
            if at < 2 {
                if pairs.is_full() {
                    pairs.pop();
                }
                let _ = pairs.insert(at, (rc, re1, sc));
            }
        }
    }
    // Phase 2: the bias (R1, R2, RE2) around each pair, fully analysed.
    let r1s = around(s(Resistor::R1), ideal.r1, 1);
    let r2s = around(s(Resistor::R2), ideal.r2, 1);
    let re2s = around(s(Resistor::Re2), ideal.re2, 1);
    for &(rc, re1, _) in pairs.iter() {
        for &r1 in r1s.iter() {
            for &r2 in r2s.iter() {
                for &re2 in re2s.iter() {
                    if let Some(ev) = evaluate(
                        req,
                        real,
                        profile,
                        [r1, r2, rc, re1, re2],
                        ideal.ic,
                        best.bound(),
                        true,
                    ) {
                        best.offer(&ev);
                    }
                }
            }
        }
    }
}

/// How far (fraction of each requirement) the sensitivity estimate of the worst case may miss
/// and the part set still go on to the exact corners (the estimate is linear).
const ESTIMATE_SLACK: f64 = 0.01;

/// How many of the best part sets the polish step revisits.
const POLISH: usize = 4;

/// Polish: around the best few part sets, every neighbour pair of RC and RE1 with their own
/// bias resistors (the gain pair was chosen at the nominal divider, the bias may shift it).
fn polish(req: &Requirement, real: &Requirement, profile: &Profile, best: &mut Best) {
    let seeds: heapless::Vec<Kept, POLISH> = best.list.iter().take(POLISH).copied().collect();
    for seed in seeds.iter() {
        let [r1, r2, rc0, re10, re2] = seed.r;
        let rcs = around(req.series_of(Resistor::Rc), rc0, 1);
        let re1s = around(req.series_of(Resistor::Re1), re10, 1);
        for &rc in rcs.iter() {
            for &re1 in re1s.iter() {
                if rc == rc0 && re1 == re10 {
                    continue;
                }
                if let Some(ev) = evaluate(
                    req,
                    real,
                    profile,
                    [r1, r2, rc, re1, re2],
                    seed.level,
                    best.bound(),
                    true,
                ) {
                    best.offer(&ev);
                }
            }
        }
    }
}

/// The poles of CIN, COUT and CE (each of value `c`, F) by the short-circuit time-constant
/// method, Hz: the resistance each one sees with the other two shorted and the source at rest,
/// from the same small-signal network and in the same way as
/// [`low_corner`](crate::lowfreq::low_corner) gives `f_cin`, `f_cout` and `f_ce` (bit for bit),
/// without its search for the exact corner (some sixty more solves the choice does not use).
fn probe_poles(stage: &Stage, op: &OperatingPoint, c: f64) -> [Option<f64>; 3] {
    let pole = |which: usize| lowfreq::pole(lowfreq::seen_by(stage, op, which), Some(c));
    [
        pole(0),
        if stage.rl.is_some() { pole(1) } else { None },
        if stage.re2.value > 0.0 { pole(2) } else { None },
    ]
}

/// Capacitors for a candidate: the set with the least total capacitance whose pole sum is at or
/// below `F_LOW_MARGIN` × the required low corner. Returns (CIN, COUT, CE, pole sum).
fn capacitors(
    req: &Requirement,
    stage: &Stage,
    op: &OperatingPoint,
    scale: f64,
) -> Result<([Option<f64>; 3], f64), DesignError> {
    // Probe with 1 µF parts: each pole is 1/(2π·R·1 µF), which gives the resistance R it sees.
    const PROBE: f64 = 1e-6;
    let mut probe = *stage;
    probe.cin = Some(Part::new(PROBE, 0.0));
    probe.cout = stage.rl.map(|_| Part::new(PROBE, 0.0));
    probe.ce = (stage.re2.value > 0.0).then_some(Part::new(PROBE, 0.0));
    let [f_cin, f_cout, f_ce] = probe_poles(&probe, op, PROBE);
    let seen = |f: Option<f64>| f.map(|f| 1.0 / (2.0 * PI * f * PROBE));
    let (r_in, r_out, r_e) = (seen(f_cin), seen(f_cout), seen(f_ce));
    let f_target = F_LOW_MARGIN * req.f_low_or_default() * scale;
    let series = req.cap_series;
    let pole = |r: Option<f64>, c: f64| r.map_or(0.0, |r| 1.0 / (2.0 * PI * r * c));
    // Candidate values for a coupling capacitor: from the least that alone meets the target up.
    let options = |r: Option<f64>| -> heapless::Vec<Option<f64>, 7> {
        let mut v = heapless::Vec::new();
        match r {
            None => {
                let _ = v.push(None);
            }
            Some(r) => {
                let least = 1.0 / (2.0 * PI * r * f_target);
                let mut c = series.next_up(least);
                while let Some(x) = c {
                    if x > C_MAX * (1.0 + 1e-9) || v.is_full() {
                        break;
                    }
                    let _ = v.push(Some(x));
                    c = series.next_up(x);
                }
            }
        }
        v
    };
    let mut best: Option<([Option<f64>; 3], f64, f64)> = None;
    let mut needs = 0.0_f64;
    for cin in options(r_in) {
        for cout in options(r_out) {
            let used = cin.map_or(0.0, |c| pole(r_in, c)) + cout.map_or(0.0, |c| pole(r_out, c));
            let left = f_target - used;
            if !(left > 0.0) {
                continue;
            }
            let ce = match r_e {
                None => None,
                Some(r) => {
                    let least = 1.0 / (2.0 * PI * r * left);
                    match series.ceil(least) {
                        Some(c) if c <= C_MAX * (1.0 + 1e-9) => Some(c),
                        _ => {
                            needs = if needs > 0.0 { needs.min(least) } else { least };
                            continue;
                        }
                    }
                }
            };
            let total = cin.unwrap_or(0.0) + cout.unwrap_or(0.0) + ce.unwrap_or(0.0);
            let f = used + ce.map_or(0.0, |c| pole(r_e, c));
            if best.is_none_or(|b| total < b.1 * (1.0 - 1e-9)) {
                best = Some(([cin, cout, ce], total, f));
            }
        }
    }
    match best {
        // With no load given, COUT still blocks the DC toward whatever follows; it sets no pole
        // here, so it takes CIN's value (a member of the series like every part).
        Some(([cin, None, ce], _, f)) if stage.rl.is_none() => Ok(([cin, cin, ce], f)),
        Some((caps, _, f)) => Ok((caps, f)),
        None => Err(DesignError::LowCorner {
            f_low: req.f_low_or_default(),
            needs: if needs > 0.0 { needs } else { C_MAX * 10.0 },
        }),
    }
}

/// The least collector current between `lo` (fails) and `hi` (works) at which the first pass
/// works, by bisection in log current, A.
fn least_current(req: &Requirement, profile: &Profile, lo: f64, hi: f64) -> f64 {
    let works = |i: f64| {
        first_pass(req, profile, i, false).is_ok() || first_pass(req, profile, i, true).is_ok()
    };
    let (mut a, mut b) = (libm::log(lo), libm::log(hi));
    for _ in 0..24 {
        let m = 0.5 * (a + b);
        if works(libm::exp(m)) {
            b = m;
        } else {
            a = m;
        }
    }
    libm::exp(b)
}

/// Which requirement is out of reach at every current of the ladder: gain alone, swing alone,
/// or the two together.
fn out_of_reach(req: &Requirement, profile: &Profile) -> DesignError {
    let (mut gain_ok, mut swing_ok) = (false, false);
    let (mut best_gain, mut best_swing) = (0.0_f64, 0.0_f64);
    for i in ladder() {
        for low in [false, true] {
            match pass(req, profile, i, low, true, false) {
                Ok(_) => gain_ok = true,
                Err(FirstPassMiss::Gain(g)) => best_gain = best_gain.max(g),
                Err(_) => {}
            }
            match pass(req, profile, i, low, false, true) {
                Ok(_) => swing_ok = true,
                Err(FirstPassMiss::Swing(s)) => best_swing = best_swing.max(s),
                Err(_) => {}
            }
        }
    }
    if !gain_ok {
        DesignError::GainOutOfReach {
            gain: req.gain,
            best: best_gain,
        }
    } else if !swing_ok {
        // The swing grows about in proportion to the supply's headroom.
        let needs_vcc = if best_swing > 0.0 {
            1.1 * req.vcc * req.swing_pp / best_swing
        } else {
            2.0 * req.vcc
        };
        DesignError::SwingOutOfReach {
            swing: req.swing_pp,
            best: best_swing,
            needs_vcc,
        }
    } else {
        DesignError::GainAndSwing {
            gain: req.gain,
            swing: req.swing_pp,
        }
    }
}

/// Design a stage for `req` with transistor `profile`: candidates best first, every one meeting
/// every requirement at nominal, or the reason none can.
pub fn design(req: &Requirement, profile: &Profile) -> Result<Candidates, DesignError> {
    let mut out = Candidates::new();
    design_into(req, profile, &mut out)?;
    Ok(out)
}

/// [`design`] writing the candidates into `out` in place (no copy of the list on the stack, for
/// small targets): `out` holds the candidates best first on success and is empty on error.
pub fn design_into(
    req: &Requirement,
    profile: &Profile,
    out: &mut Candidates,
) -> Result<(), DesignError> {
    out.clear();
    req.validate().map_err(DesignError::Invalid)?;
    profile.validate().map_err(DesignError::Profile)?;
    let first = search(req, req, profile, MAX_CANDIDATES, out);
    // With the worst case asked, a gain window that is narrow enough but off centre: once more,
    // aiming the nominal gain so that the corners' range centres on the requirement.
    match first {
        Err(DesignError::NotHeld {
            check: Check::Gain,
            gain_range: (lo, hi),
            ..
        }) if req.hold == Hold::WorstCase
            && lo > 0.0
            && hi - lo <= 2.0 * req.gain_tol * req.gain * RECENTRE_WIDTH =>
        {
            let mut aimed = *req;
            aimed.gain = req.gain * 2.0 * req.gain / (lo + hi);
            if aimed.validate().is_ok()
                && search(&aimed, req, profile, RECENTRED_FINALISTS, out).is_ok()
            {
                return Ok(());
            }
            out.clear();
            first
        }
        other => other,
    }
}

/// How many of the re-centred search's best part sets go to the exact corners (its cost stays
/// within the design's budget of instructions).
const RECENTRED_FINALISTS: usize = 4;

/// A second, re-centred search is tried when the closest part set's gain range is at most this
/// multiple of the window's width.
const RECENTRE_WIDTH: f64 = 1.0;

/// The search for `real`, aiming the nominal gain at `req.gain` (the same requirement, or one
/// with its gain moved to centre the corners' range on `real`'s window).
fn search(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    finalists: usize,
    out: &mut Candidates,
) -> Result<(), DesignError> {
    out.clear();
    // Which ladder currents the hand method can work at (independent of the budget).
    let mut levels: heapless::Vec<(f64, Ideal), MAX_LEVELS> = heapless::Vec::new();
    let mut last_miss: Option<(f64, FirstPassMiss)> = None;
    let mut first_ok: Option<f64> = None;
    let mut heat: Option<(f64, f64)> = None;
    for i in ladder() {
        if levels.is_full() || (first_ok.is_some() && i > req.ic_max) {
            break;
        }
        let pass =
            first_pass(req, profile, i, false).or_else(|_| first_pass(req, profile, i, true));
        match pass {
            Ok(ideal) => {
                first_ok.get_or_insert(i);
                if i <= req.ic_max * (1.0 + 1e-9) {
                    let _ = levels.push((i, ideal));
                }
            }
            Err(miss) => {
                if first_ok.is_none() {
                    last_miss = Some((i, miss));
                }
                if let FirstPassMiss::Dissipation(p) = miss {
                    heat.get_or_insert((i, p));
                }
            }
        }
    }
    let Some(first) = first_ok else {
        if let Some((i, p)) = heat {
            return Err(DesignError::Dissipation {
                needs_ic: i,
                power: p,
                rating: profile.power_rating_at(req.temp_max),
            });
        }
        return Err(out_of_reach(req, profile));
    };
    // The least working current itself (5 % above it) where the ladder steps over it: it
    // depends on the requirement alone, so a larger budget still only adds levels.
    let threshold = last_miss.and_then(|(lo, _)| {
        let t = 1.05 * least_current(req, profile, lo, first);
        let ideal =
            first_pass(req, profile, t, false).or_else(|_| first_pass(req, profile, t, true));
        (t < 0.97 * first && t <= req.ic_max)
            .then_some(())
            .and(ideal.ok())
    });
    if levels.is_empty() && threshold.is_none() {
        let lo = last_miss.map_or(first / 1.5, |(i, _)| i);
        // With the same 5 % margin the threshold level gets.
        let needs_ic = (1.05 * least_current(req, profile, lo, first)).min(first);
        return Err(match last_miss {
            Some((_, FirstPassMiss::Swing(_))) => DesignError::SwingNeedsCurrent {
                swing: req.swing_pp,
                rl: req.rl,
                needs_ic,
                budget: req.ic_max,
            },
            _ => DesignError::GainNeedsCurrent {
                gain: req.gain,
                rl: req.rl,
                needs_ic,
                budget: req.ic_max,
            },
        });
    }
    let mut best = Best {
        list: heapless::Vec::new(),
        closest_miss: None,
        near: heapless::Vec::new(),
    };
    for ideal in threshold.iter().chain(levels.iter().map(|(_, i)| i)) {
        search_level(req, real, profile, ideal, &mut best);
    }
    polish(req, real, profile, &mut best);
    let worst = req.hold == Hold::WorstCase;
    if best.list.is_empty() && (!worst || best.near.is_empty()) {
        let (check, required, achieved) = best
            .closest_miss
            .map_or((Check::Region, 0.0, 0.0), |(_, m)| m);
        return Err(DesignError::Shortfall {
            check,
            required,
            achieved,
        });
    }
    let mut low_err = None;
    // The closest part set that does not hold: its margin and what it holds.
    let mut closest: Option<(f64, Held)> = None;
    for kept in best.list.iter().take(finalists) {
        match finish(req, real, profile, kept) {
            Ok(Finished::Holds(c)) => push_ranked(out, c),
            Ok(Finished::Misses(h)) => note_closest(real, &mut closest, h),
            Err(e) => {
                low_err.get_or_insert(e);
            }
        }
    }
    if worst && out.is_empty() && finalists == MAX_CANDIDATES {
        // No kept set holds: the near misses of the estimate, judged at the exact corners.
        for kept in best.near.iter() {
            match finish(req, real, profile, kept) {
                Ok(Finished::Holds(c)) => push_ranked(out, c),
                Ok(Finished::Misses(h)) => note_closest(real, &mut closest, h),
                Err(e) => {
                    low_err.get_or_insert(e);
                }
            }
        }
    }
    if !out.is_empty() {
        return Ok(());
    }
    if let Some((_, h)) = closest {
        if let Some((check, required, held)) = h.binding(real) {
            return Err(DesignError::NotHeld {
                check,
                required,
                held,
                gain: real.gain,
                gain_tol: real.gain_tol,
                gain_range: (h.gain_min, h.gain_max),
            });
        }
    }
    Err(low_err.unwrap_or(DesignError::Shortfall {
        check: Check::LowCorner,
        required: req.f_low_or_default(),
        achieved: f64::INFINITY,
    }))
}

/// A kept part set, finished.
#[expect(
    clippy::large_enum_variant,
    reason = "a short-lived return value, moved once into the list; no allocation in core"
)]
enum Finished {
    /// With capacitors, holding every requirement (at every corner with [`Hold::WorstCase`]).
    Holds(Candidate),
    /// With capacitors, missing a requirement at a corner: what it holds.
    Misses(Held),
}

/// Keep `h` when it is the closest to holding so far.
fn note_closest(req: &Requirement, closest: &mut Option<(f64, Held)>, h: Held) {
    let m = h.margin(req);
    if closest.is_none_or(|c| m > c.0) {
        *closest = Some((m, h));
    }
}

/// Insert `c` into `out` by score (lower first; equal scores keep their order).
fn push_ranked(out: &mut Candidates, c: Candidate) {
    let at = out
        .iter()
        .position(|x| c.score < x.score)
        .unwrap_or(out.len());
    if at >= MAX_CANDIDATES {
        return;
    }
    if out.is_full() {
        out.pop();
    }
    let _ = out.insert(at, c);
}

/// How often the capacitors are chosen again for a worst-case low corner that misses.
const CAP_RETRIES: usize = 2;

/// Re-analyse a kept part set, choose its capacitors and (with [`Hold::WorstCase`]) check it at
/// every corner; the score of a held set is its own figures' with the exact worst case.
fn finish(
    req: &Requirement,
    real: &Requirement,
    profile: &Profile,
    kept: &Kept,
) -> Result<Finished, DesignError> {
    let f_req = req.f_low_or_default();
    // The same analysis that ranked the set (deterministic: the same figures, bit for bit).
    let Some(ev) = evaluate(req, real, profile, kept.r, kept.level, f64::INFINITY, true) else {
        return Err(DesignError::Shortfall {
            check: Check::Region,
            required: 0.0,
            achieved: 0.0,
        });
    };
    let bare = build(req, ev.r, [None; 3]);
    let worst = req.hold == Hold::WorstCase;
    // With the worst case asked, the capacitors are chosen for their low tolerance.
    let mut scale = if worst { 1.0 - req.cap_tol } else { 1.0 };
    let mut tries = 0;
    loop {
        let (caps, f) = capacitors(req, &bare, &ev.op, scale)?;
        let stage = build(req, ev.r, caps);
        let h = worst.then(|| held(real, profile, &stage));
        let mut score = ev.score;
        if let Some(h) = h {
            match h.binding(real) {
                Some((Check::LowCorner, _, got)) if tries < CAP_RETRIES && got > 0.0 => {
                    scale *= 0.98 * f_req / got;
                    tries += 1;
                    continue;
                }
                Some(_) => return Ok(Finished::Misses(h)),
                None => {}
            }
            let (terms, _) =
                worst_terms(real, h.gain_min, h.gain_max, h.swing_pp_min, h.ic_max, 0.0);
            score = ev.base + terms;
        }
        let mut margins = ev.margins;
        margins.f_low_ratio = f / f_req;
        return Ok(Finished::Holds(Candidate {
            stage,
            op: ev.op,
            gain: ev.gain,
            swing_pp: ev.swing,
            clips: ev.clips,
            f_low: f,
            supply_current: ev.supply,
            transistor_power: ev.ptr,
            ic_range: ev.ic_range,
            margins,
            score,
            level: ev.level,
            held: h,
        }));
    }
}

/// FNV-1a 64-bit hash of `bytes` (offset basis 0xcbf29ce484222325, prime 0x100000001b3; the
/// public-domain Fowler–Noll–Vo definition), used to compare designs in logs and hand-overs.
pub fn fnv1a64(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325_u64, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}
