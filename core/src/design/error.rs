//! Why no design could be given: each refusal names the requirement, the figures and what
//! would work.

use core::fmt;

use crate::device::ProfileError;
use crate::units::{Eng, Fixed, Full};

use super::{Check, RequirementError, C_MAX};

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
