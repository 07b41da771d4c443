//! The test settings: everything a verdict depends on besides the stage and the transistor, with
//! one set of defaults for every front end, and the settings digest.
//!
//! A board's verdict follows from the stage (its parts, tolerances and supply tolerance, see
//! below), the transistor profile and a [`TestSettings`]: the test ambient (the station's, not the
//! design's operating range), the meter's accuracy and the measuring inputs attached while the
//! nodes are read. `biasjig check`, `limits`, `batch`, the station and the console take the
//! defaults from here, so the same stage gets the same windows everywhere.
//!
//! The supply tolerance is the tolerance of the stage's supply part (`Stage::vcc.tol`, pushed
//! with `set vcc V TOL`, in a design file `parts.vcc_tol`); its default is
//! [`DEFAULT_SUPPLY_TOL`]. A measured supply outside it is never a pass.
//!//! **Settings digest** ([`digest`], in `digest.rs`): SHA-256 over the canonical encoding of the
//! stage, the profile and the test settings; any change of anything the verdict depends on
//! changes it.

mod digest;

pub use digest::{digest, Canonical, Digest, Encode};

use crate::device::Profile;
use crate::limits::Meter;
use crate::solve::{NodeLoads, OperatingPoint};
use crate::spread::Variation;

/// Default test ambient, °C (the range defaults to it alone).
pub const DEFAULT_TEMP_C: f64 = 25.0;
/// Default supply tolerance, fraction: a bench or jig supply set to within 5 % (common
/// practice); a measured supply outside it is not judged.
pub const DEFAULT_SUPPLY_TOL: f64 = 0.05;
/// Default resistor tolerance, fraction (E24 parts are 5 %, common practice).
pub const DEFAULT_TOL: f64 = 0.05;
/// Default capacitor tolerance, fraction (E6 parts are 20 %, common practice).
pub const DEFAULT_CAP_TOL: f64 = 0.20;
/// The transistor every front end starts from: the core's generic small-signal profile (hFE 200
/// with no spread unless one is given: the lowest and highest hFE default to the typical; VBE
/// 0.65 V at 1 mA).
pub fn default_profile() -> Profile {
    Profile::default()
}
/// Lowest and highest test ambient accepted, °C.
pub const TEMP_RANGE_C: (f64, f64) = (-55.0, 150.0);
/// Lowest and highest measuring-input resistance accepted, Ω.
pub const INPUT_R_RANGE: (f64, f64) = (1e3, 1e12);
/// Largest meter gain error accepted, fraction of the reading.
pub const METER_GAIN_MAX: f64 = 0.2;
/// Largest meter offset accepted, V.
pub const METER_OFFSET_MAX: f64 = 1.0;
/// Largest jig divider tolerance accepted, fraction.
pub const DIVIDER_TOL_MAX: f64 = 0.1;
/// A supply tolerance above this is unusual (a warning, not a refusal), fraction.
pub const UNUSUAL_SUPPLY_TOL: f64 = 0.10;
/// A resistor tolerance above this is unusual (a warning, not a refusal), fraction.
pub const UNUSUAL_TOL: f64 = 0.10;

/// How the measuring inputs are attached while the nodes are read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum InputMode {
    /// Every input stays connected while the nodes are read (a jig's input dividers).
    #[default]
    Together,
    /// One node is read at a time (a hand-held meter).
    One,
}

impl InputMode {
    /// The machine name: "together" or "one".
    pub fn name(self) -> &'static str {
        match self {
            Self::Together => "together",
            Self::One => "one",
        }
    }

    /// From the machine name (case-insensitive).
    pub fn parse(text: &str) -> Option<Self> {
        if text.eq_ignore_ascii_case("together") {
            Some(Self::Together)
        } else if text.eq_ignore_ascii_case("one") {
            Some(Self::One)
        } else {
            None
        }
    }
}

/// A node read by the measuring inputs (the supply is read too, but an input on the supply rail
/// does not change the stage).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ReadNode {
    /// The base.
    Base,
    /// The collector.
    Collector,
    /// The emitter.
    Emitter,
}

/// The measuring inputs: their resistance from each node read to ground and how they are attached.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Inputs {
    /// Input resistance from each node read to ground, Ω (`None`: an ideal meter).
    pub r: Option<f64>,
    /// Together or one at a time.
    pub mode: InputMode,
}

impl Inputs {
    /// An ideal meter: nothing attached.
    pub const IDEAL: Inputs = Inputs {
        r: None,
        mode: InputMode::Together,
    };

    /// Nothing is attached (no resistance given).
    pub fn is_ideal(&self) -> bool {
        self.r.is_none()
    }

    /// The loads on the stage while `node` is read: every input with `together`, only the
    /// node's own with `one`.
    pub fn loads_reading(&self, node: ReadNode) -> NodeLoads {
        match self.mode {
            InputMode::Together => NodeLoads::each(self.r),
            InputMode::One => match node {
                ReadNode::Base => NodeLoads {
                    base: self.r,
                    ..NodeLoads::NONE
                },
                ReadNode::Collector => NodeLoads {
                    collector: self.r,
                    ..NodeLoads::NONE
                },
                ReadNode::Emitter => NodeLoads {
                    emitter: self.r,
                    ..NodeLoads::NONE
                },
            },
        }
    }

    /// The one set of loads under which every node is read, when there is one (no inputs, or
    /// `together`); `None` when each node is read under its own loads (`one` with a resistance).
    pub fn common_loads(&self) -> Option<NodeLoads> {
        match (self.r, self.mode) {
            (None, _) => Some(NodeLoads::NONE),
            (Some(_), InputMode::Together) => Some(NodeLoads::each(self.r)),
            (Some(_), InputMode::One) => None,
        }
    }

    /// The stage as its nodes are read through these inputs: `solve` under the one set of loads
    /// of every reading ([`Inputs::common_loads`]), or once per node with only that node's input
    /// attached (base, emitter, collector, in that order). Gives the operating point of the first
    /// solve (the base's reading) and VE and VC as read, V.
    pub fn read_through<E>(
        &self,
        mut solve: impl FnMut(NodeLoads) -> Result<OperatingPoint, E>,
    ) -> Result<(OperatingPoint, f64, f64), E> {
        match self.common_loads() {
            Some(loads) => {
                let op = solve(loads)?;
                Ok((op, op.ve, op.vc))
            }
            None => {
                let op = solve(self.loads_reading(ReadNode::Base))?;
                let ve = solve(self.loads_reading(ReadNode::Emitter))?.ve;
                let vc = solve(self.loads_reading(ReadNode::Collector))?.vc;
                Ok((op, ve, vc))
            }
        }
    }
}

/// Everything a verdict depends on besides the stage and the transistor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TestSettings {
    /// Lowest test ambient, °C.
    pub temp_min_c: f64,
    /// Highest test ambient, °C.
    pub temp_max_c: f64,
    /// The meter's accuracy and the jig's input divider tolerance.
    pub meter: Meter,
    /// The measuring inputs.
    pub inputs: Inputs,
    /// The accuracy of a gain reading of the signal test.
    pub signal: crate::signaltest::SignalMeter,
}

default_is_const!(TestSettings);

/// A test setting out of range; each names what is allowed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SettingsError {
    /// The test ambient must lie between -55 °C and 150 °C with min <= max.
    Ambient,
    /// Meter gain error: 0 to 20 % of the reading.
    MeterGain,
    /// Meter offset: 0 V to 1 V.
    MeterOffset,
    /// Divider tolerance: 0 to 10 %.
    DividerTol,
    /// Input resistance: 1 kΩ to 1 TΩ (or none).
    InputR,
    /// Signal meter: gain error 0 to 50 %, floor 0 to 10 V/V.
    Signal,
}

impl core::fmt::Display for SettingsError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::Ambient => "test ambient: min and max between -55 °C and 150 °C, min <= max",
            Self::MeterGain => "meter gain error: allowed 0 to 20 % of the reading",
            Self::MeterOffset => "meter offset: allowed 0 V to 1 V",
            Self::DividerTol => "divider tolerance: allowed 0 to 10 %",
            Self::InputR => "input resistance: allowed 1 kΩ to 1 TΩ, or none (an ideal meter)",
            Self::Signal => {
                "signal meter: gain error allowed 0 to 50 % of the reading, floor 0 to 10 V/V"
            }
        })
    }
}

impl TestSettings {
    /// The defaults of every front end: 25 °C alone, the default meter (0.5 % of the reading +
    /// 5 mV behind a 0.1 % divider), an ideal meter's inputs (none attached).
    pub const DEFAULT: TestSettings = TestSettings {
        temp_min_c: DEFAULT_TEMP_C,
        temp_max_c: DEFAULT_TEMP_C,
        meter: Meter::DEFAULT,
        inputs: Inputs::IDEAL,
        signal: crate::signaltest::SignalMeter::DEFAULT,
    };

    /// The test settings of the ambient and the measuring inputs of `var`, with the default
    /// meter and signal meter (the other way round from [`TestSettings::variation`]).
    pub fn for_variation(var: &Variation) -> Self {
        Self {
            temp_min_c: var.temp_min_c,
            temp_max_c: var.temp_max_c,
            inputs: var.inputs,
            ..Self::DEFAULT
        }
    }

    /// The test ambient as the spread, limits and diagnosis take it, the nodes read through the
    /// measuring inputs.
    pub fn variation(&self) -> Variation {
        Variation::between(self.temp_min_c, self.temp_max_c).read_through(self.inputs)
    }

    /// Check every field.
    pub fn validate(&self) -> Result<(), SettingsError> {
        let t = |x: f64| x.is_finite() && (TEMP_RANGE_C.0..=TEMP_RANGE_C.1).contains(&x);
        if !(t(self.temp_min_c) && t(self.temp_max_c) && self.temp_min_c <= self.temp_max_c) {
            return Err(SettingsError::Ambient);
        }
        let within = |x: f64, max: f64| x.is_finite() && (0.0..=max).contains(&x);
        if !within(self.meter.gain_error, METER_GAIN_MAX) {
            return Err(SettingsError::MeterGain);
        }
        if !within(self.meter.offset, METER_OFFSET_MAX) {
            return Err(SettingsError::MeterOffset);
        }
        if !within(self.meter.divider_tol, DIVIDER_TOL_MAX) {
            return Err(SettingsError::DividerTol);
        }
        if let Some(r) = self.inputs.r {
            if !(r.is_finite() && (INPUT_R_RANGE.0..=INPUT_R_RANGE.1).contains(&r)) {
                return Err(SettingsError::InputR);
            }
        }
        self.signal.validate().map_err(|_| SettingsError::Signal)?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_are_valid_and_ranges_name_what_is_allowed() {
        assert_eq!(TestSettings::DEFAULT.validate(), Ok(()));
        let bad = TestSettings {
            inputs: Inputs {
                r: Some(10.0),
                mode: InputMode::One,
            },
            ..TestSettings::DEFAULT
        };
        assert_eq!(bad.validate(), Err(SettingsError::InputR));
        let t = TestSettings {
            temp_min_c: 30.0,
            temp_max_c: 20.0,
            ..TestSettings::DEFAULT
        };
        assert_eq!(t.validate(), Err(SettingsError::Ambient));
    }

    #[test]
    fn one_at_a_time_loads_only_the_node_read() {
        let i = Inputs {
            r: Some(1e6),
            mode: InputMode::One,
        };
        assert_eq!(i.common_loads(), None);
        let b = i.loads_reading(ReadNode::Base);
        assert_eq!((b.base, b.collector, b.emitter), (Some(1e6), None, None));
        let t = Inputs {
            mode: InputMode::Together,
            ..i
        };
        assert_eq!(t.common_loads(), Some(NodeLoads::each(Some(1e6))));
        assert_eq!(Inputs::IDEAL.common_loads(), Some(NodeLoads::NONE));
    }
}
