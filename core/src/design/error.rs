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
    /// No part set holds every requirement at every corner of the spread ([`Hold::WorstCase`](super::Hold::WorstCase));
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

/// A setting a refusal advises changing: a field of the [`Requirement`](super::Requirement) or
/// of the transistor [`Profile`](crate::device::Profile).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Setting {
    /// The collector-current budget, `Requirement::ic_max`.
    IcMax,
    /// The least swing, `Requirement::swing_pp`.
    SwingPp,
    /// The highest low corner, `Requirement::f_low`.
    FLow,
    /// The gain tolerance, `Requirement::gain_tol` (a fraction).
    GainTol,
    /// The resistor series, `Requirement::series`.
    Series,
    /// The resistor tolerance, `Requirement::tol` (a fraction).
    Tol,
    /// Where the requirements must hold, `Requirement::hold`.
    Hold,
    /// The transistor's power rating at 25 °C, `Profile::power_25`.
    PowerRating,
}

impl Setting {
    /// The field's name in the core's types: "ic_max", "swing_pp", "f_low", "gain_tol",
    /// "series", "tol", "hold" or "power_25".
    pub fn field(self) -> &'static str {
        match self {
            Self::IcMax => "ic_max",
            Self::SwingPp => "swing_pp",
            Self::FLow => "f_low",
            Self::GainTol => "gain_tol",
            Self::Series => "series",
            Self::Tol => "tol",
            Self::Hold => "hold",
            Self::PowerRating => "power_25",
        }
    }
}

/// How a front end names the settings a refusal advises changing (a command line its flags,
/// the console its keys).
#[derive(Debug, Clone, Copy)]
pub struct Naming {
    /// The name of each setting.
    pub name: fn(Setting) -> &'static str,
    /// Tolerances as percent numbers (`11` for 0.11) instead of fractions.
    pub percent: bool,
}

impl Naming {
    /// The core's own naming ([`DesignError`]'s `Display`): the fields' names, tolerances as
    /// fractions.
    pub const FIELDS: Naming = Naming {
        name: Setting::field,
        percent: false,
    };
}

/// A setting's name, and its value when given: `ic_max`, `gain_tol 0.11`, `hold nominal`.
struct Named {
    naming: Naming,
    setting: Setting,
    /// The value, when the advice gives one.
    value: Option<Value>,
}

/// The value an advice gives a setting.
#[derive(Clone, Copy)]
enum Value {
    /// A tolerance in percent (printed as a fraction unless the naming asks for percent).
    Percent(f64),
    /// A word: a series or a mode.
    Word(&'static str),
}

impl fmt::Display for Named {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str((self.naming.name)(self.setting))?;
        match self.value {
            None => Ok(()),
            Some(Value::Word(w)) => write!(f, " {w}"),
            Some(Value::Percent(p)) if self.naming.percent => write!(f, " {}", Full(p)),
            Some(Value::Percent(p)) => write!(f, " {}", Full(p / 100.0)),
        }
    }
}

/// A [`DesignError`] printed with a front end's names of the settings ([`DesignError::named`]).
#[derive(Debug, Clone, Copy)]
pub struct NamedError<'a> {
    error: &'a DesignError,
    naming: Naming,
}

impl DesignError {
    /// The message with the settings it advises named by `naming` (`Display` uses
    /// [`Naming::FIELDS`]).
    pub fn named(&self, naming: Naming) -> NamedError<'_> {
        NamedError {
            error: self,
            naming,
        }
    }
}

impl fmt::Display for DesignError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        self.named(Naming::FIELDS).fmt(f)
    }
}

impl fmt::Display for NamedError<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let naming = self.naming;
        let name = |setting: Setting| Named {
            naming,
            setting,
            value: None,
        };
        let with = |setting: Setting, value: Value| Named {
            naming,
            setting,
            value: Some(value),
        };
        let hold_nominal = with(Setting::Hold, Value::Word("nominal"));
        match *self.error {
            DesignError::Invalid(r) => write!(f, "{}: {r}", r.field()),
            DesignError::Profile(p) => write!(f, "transistor: {p}"),
            DesignError::GainNeedsCurrent {
                gain,
                rl,
                needs_ic,
                budget,
            } => write!(
                f,
                "gain: {} {} needs IC >= {}; the budget is {}: raise the budget ({}) \
                 or lower the gain",
                Full(gain),
                Load(rl),
                e(needs_ic, "A"),
                e(budget, "A"),
                name(Setting::IcMax)
            ),
            DesignError::SwingNeedsCurrent {
                swing,
                rl,
                needs_ic,
                budget,
            } => write!(
                f,
                "swing: {} peak-to-peak {} needs IC >= {}; the budget is {}: raise the budget \
                 ({}), raise the load or lower the swing",
                e(swing, "V"),
                Load(rl),
                e(needs_ic, "A"),
                e(budget, "A"),
                name(Setting::IcMax)
            ),
            DesignError::GainOutOfReach { gain, best } => write!(
                f,
                "gain: {} is out of reach with this supply, source, load and transistor; \
                 about {} is the most: lower the gain, lower RS or raise RL",
                Full(gain),
                Fixed(best, 1)
            ),
            DesignError::SwingOutOfReach {
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
            DesignError::GainAndSwing { gain, swing } => write!(
                f,
                "gain and swing: gain {} and a swing of {} peak-to-peak are each reachable \
                 but not together: lower one of them or raise the supply",
                Full(gain),
                e(swing, "V")
            ),
            DesignError::Dissipation {
                needs_ic,
                power,
                rating,
            } => write!(
                f,
                "dissipation: the stage needs IC >= {}, about {} in the transistor, over its \
                 {} rating at the highest ambient: lower the gain or swing, or use a larger \
                 transistor ({})",
                e(needs_ic, "A"),
                e(power, "W"),
                e(rating, "W"),
                name(Setting::PowerRating)
            ),
            DesignError::LowCorner { f_low, needs } => write!(
                f,
                "f-low: a low corner of {} needs a capacitor of about {}, more than the {} \
                 allowed: raise the low corner",
                e(f_low, "Hz"),
                e(needs, "F"),
                e(C_MAX, "F")
            ),
            DesignError::NotHeld {
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
                         hFE and the ambient (±{} %): allow {}, use tighter \
                         resistors ({} {}), or design for {}",
                        Full(gain),
                        Fixed(gain_tol * 100.0, 1),
                        Fixed(g_lo, 2),
                        Fixed(g_hi, 2),
                        Fixed(need * 100.0, 1),
                        with(
                            Setting::GainTol,
                            Value::Percent(libm::ceil(need * 100.0 + 0.05))
                        ),
                        with(Setting::Series, Value::Word("E96")),
                        with(Setting::Tol, Value::Percent(1.0)),
                        hold_nominal
                    )
                }
                Check::Swing => write!(
                    f,
                    "swing: {} peak-to-peak does not hold at every corner of the spread: the \
                     closest part set keeps {}: lower {} to {}, raise the supply or the \
                     budget, or design for {}",
                    e(required, "V"),
                    e(held, "V"),
                    name(Setting::SwingPp),
                    e(held, "V"),
                    hold_nominal
                ),
                Check::Current => write!(
                    f,
                    "ic-max: the closest part set that holds the rest draws up to {} at the \
                     worst corner of the spread, over the {} budget: raise {} to {}, \
                     or design for {}",
                    e(held, "A"),
                    e(required, "A"),
                    name(Setting::IcMax),
                    e(held, "A"),
                    hold_nominal
                ),
                Check::LowCorner => write!(
                    f,
                    "f-low: with the capacitors at their low tolerance the closest part set's \
                     low corner reaches {}, over {}: raise {} to {}",
                    e(held, "Hz"),
                    e(required, "Hz"),
                    name(Setting::FLow),
                    e(held, "Hz")
                ),
                _ => write!(
                    f,
                    "bias: the closest part set leaves the active region at a corner of the \
                     spread: narrow the hFE spread or the ambient range, lower the swing, or \
                     design for {hold_nominal}",
                ),
            },
            DesignError::Shortfall {
                check,
                required,
                achieved,
            } => match check {
                Check::Gain => write!(
                    f,
                    "gain: no standard-value part set reaches {} within the gain tolerance; \
                     the closest gives {}: try a finer series ({}), a wider \
                     tolerance ({}) or another gain",
                    Full(required),
                    Fixed(achieved, 2),
                    with(Setting::Series, Value::Word("E48")),
                    name(Setting::GainTol)
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

#[cfg(test)]
mod tests {
    use super::*;
    extern crate std;
    use std::string::{String, ToString};

    /// A command line's naming: its flags, tolerances in percent.
    fn flags(s: Setting) -> &'static str {
        match s {
            Setting::IcMax => "--ic-max",
            Setting::SwingPp => "--swing",
            Setting::FLow => "--f-low",
            Setting::GainTol => "--gain-tol",
            Setting::Series => "--series",
            Setting::Tol => "--tol",
            Setting::Hold => "--hold",
            _ => "--power-rating",
        }
    }

    const FLAGS: Naming = Naming {
        name: flags,
        percent: true,
    };

    fn not_held(check: Check, required: f64, held: f64) -> DesignError {
        DesignError::NotHeld {
            check,
            required,
            held,
            gain: 15.0,
            gain_tol: 0.1,
            gain_range: (13.47, 16.54),
        }
    }

    /// Each refusal with the core's names and with a command line's flags: the flags give the
    /// text the command line has always printed (a regression pin of our own messages).
    #[test]
    fn advice_names_fields_in_core_and_flags_on_a_command_line() {
        let cases: [(DesignError, &str, &str); 7] = [
            (
                not_held(Check::Gain, 13.5, 13.47),
                "allow gain_tol 0.11, use tighter resistors (series E96 tol 0.01), or design \
                 for hold nominal",
                "allow --gain-tol 11, use tighter resistors (--series E96 --tol 1), or design \
                 for --hold nominal",
            ),
            (
                not_held(Check::Swing, 3.0, 2.5),
                "lower swing_pp to 2.5 V, raise the supply or the budget, or design for hold \
                 nominal",
                "lower --swing to 2.5 V, raise the supply or the budget, or design for --hold \
                 nominal",
            ),
            (
                not_held(Check::Current, 2e-3, 2.2e-3),
                "raise ic_max to 2.2 mA, or design for hold nominal",
                "raise --ic-max to 2.2 mA, or design for --hold nominal",
            ),
            (
                not_held(Check::LowCorner, 5.0, 5.5),
                "raise f_low to 5.5 Hz",
                "raise --f-low to 5.5 Hz",
            ),
            (
                DesignError::GainNeedsCurrent {
                    gain: 80.0,
                    rl: Some(4700.0),
                    needs_ic: 613e-6,
                    budget: 100e-6,
                },
                "raise the budget (ic_max) or lower the gain",
                "gain: 80 into 4.7 kΩ needs IC >= 613 µA; the budget is 100 µA: raise the \
                 budget (--ic-max) or lower the gain",
            ),
            (
                DesignError::Shortfall {
                    check: Check::Gain,
                    required: 15.0,
                    achieved: 13.0,
                },
                "try a finer series (series E48), a wider tolerance (gain_tol) or another gain",
                "try a finer series (--series E48), a wider tolerance (--gain-tol) or another \
                 gain",
            ),
            (
                DesignError::Dissipation {
                    needs_ic: 0.1,
                    power: 1.0,
                    rating: 0.3,
                },
                "or use a larger transistor (power_25)",
                "or use a larger transistor (--power-rating)",
            ),
        ];
        for (e, core_text, flag_text) in cases {
            let core = e.to_string();
            let cli = e.named(FLAGS).to_string();
            assert!(core.contains(core_text), "{core}");
            assert!(cli.contains(flag_text), "{cli}");
            assert!(!core.contains("--"), "{core}");
        }
        let bias: String = not_held(Check::Region, 0.0, 0.0).named(FLAGS).to_string();
        assert!(bias.ends_with("design for --hold nominal"), "{bias}");
    }
}
