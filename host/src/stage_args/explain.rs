//! Core errors explained naming the flag and the value as given ([`FlagError`], exit 2), and
//! the range checks of the flags that the core does not check itself.

use std::fmt::Display;

use biasjig_core::device::{Profile, ProfileError};
use biasjig_core::settings::{SettingsError, TestSettings};
use biasjig_core::spread::{SpreadError, Variation};
use biasjig_core::stage::{Capacitor, Resistor, Stage, StageError};
use thiserror::Error;

use super::flags::TempRange;
use crate::designfile::DesignFileError;

/// Why the flags (or the design file they name) do not give a stage the engine can take.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum FlagError {
    /// A flag's value is outside what is allowed.
    #[error("{flag}: {value}: {allowed}")]
    Value {
        /// The flag (or flags, `--beta-min/--beta/--beta-max`).
        flag: &'static str,
        /// The value as the engine holds it (percent for the percentage flags).
        value: String,
        /// What is allowed.
        allowed: String,
    },
    /// A flag the stage needs is not given.
    #[error("{flag}: missing: give it (a value such as 4k7), or --design FILE")]
    Missing {
        /// The flag.
        flag: &'static str,
    },
    /// `--is` and `--vbe` were both given.
    #[error("--is and --vbe: give one of them, not both")]
    IsAndVbe,
    /// The stage is refused for a reason no single flag names.
    #[error("stage: {0}")]
    Stage(StageError),
    /// The transistor is refused for a reason no single flag names.
    #[error("transistor: {0}")]
    Profile(ProfileError),
    /// The test settings are refused for a reason no single flag names.
    #[error("{0}")]
    Settings(SettingsError),
    /// The spread is refused for what a flag gives.
    #[error("{flag}: {why}")]
    Spread {
        /// The flag.
        flag: &'static str,
        /// Why.
        why: SpreadError,
    },
    /// The spread is refused for a reason no single flag names.
    #[error("{0}")]
    SpreadOther(SpreadError),
    /// The design file could not be read.
    #[error(transparent)]
    DesignFile(#[from] DesignFileError),
}

impl FlagError {
    /// A flag with a bad value: "`flag`: `value`: `allowed`".
    pub fn value(flag: &'static str, value: impl Display, allowed: impl Display) -> Self {
        Self::Value {
            flag,
            value: value.to_string(),
            allowed: allowed.to_string(),
        }
    }
}

/// Explain a test-settings error naming the flag.
pub fn settings_error(s: &TestSettings, e: SettingsError) -> FlagError {
    match e {
        SettingsError::Ambient => FlagError::value(
            "--temp-min/--temp-max",
            format!("{}/{}", s.temp_min_c, s.temp_max_c),
            e,
        ),
        SettingsError::MeterGain => FlagError::value("--meter", 100.0 * s.meter.gain_error, e),
        SettingsError::MeterOffset => FlagError::value("--meter-offset", s.meter.offset, e),
        SettingsError::DividerTol => {
            FlagError::value("--divider-tol", 100.0 * s.meter.divider_tol, e)
        }
        SettingsError::InputR => FlagError::value("--input-r", s.inputs.r.unwrap_or(f64::NAN), e),
        SettingsError::Signal => FlagError::value(
            "--signal-error/--signal-floor",
            format!("{}/{}", 100.0 * s.signal.gain_error, s.signal.floor),
            e,
        ),
        _ => FlagError::Settings(e),
    }
}

fn flag_of(r: Resistor) -> &'static str {
    match r {
        Resistor::R1 => "--r1",
        Resistor::R2 => "--r2",
        Resistor::Rc => "--rc",
        Resistor::Re1 => "--re1",
        Resistor::Re2 => "--re2",
    }
}

/// Explain a stage error naming the flag and the value.
pub fn stage_error(stage: &Stage, e: StageError) -> FlagError {
    match e {
        StageError::Supply => {
            FlagError::value("--vcc", stage.vcc.value, "must be between 0.5 V and 1000 V")
        }
        StageError::Resistor(r) => FlagError::value(flag_of(r), stage.resistor(r), e),
        StageError::Load => FlagError::value("--rl", stage.rl.unwrap_or(f64::NAN), e),
        StageError::Source => FlagError::value("--rs", stage.rs, e),
        StageError::Capacitor(c) => {
            let (flag, v) = match c {
                Capacitor::Cin => ("--cin", stage.cin),
                Capacitor::Cout => ("--cout", stage.cout),
                Capacitor::Ce => ("--ce", stage.ce),
            };
            FlagError::value(
                flag,
                v.map_or(f64::NAN, |p| p.value),
                "must be positive and below 1 F",
            )
        }
        StageError::Tolerance => tolerance_error(stage),
        _ => FlagError::Stage(e),
    }
}

/// What a tolerance flag allows.
pub(crate) const TOLERANCE_ALLOWED: &str = "tolerance: allowed 0 to 50 %";

/// Name the tolerance flag and its value (percent) for a tolerance outside 0 to 50 %.
fn tolerance_error(stage: &Stage) -> FlagError {
    let bad = |t: f64| !(t.is_finite() && (0.0..=0.5).contains(&t));
    if bad(stage.vcc.tol) {
        return FlagError::value("--vcc-tol", 100.0 * stage.vcc.tol, TOLERANCE_ALLOWED);
    }
    if let Some(r) = Resistor::ALL.into_iter().find(|r| bad(stage.part(*r).tol)) {
        return FlagError::value("--tol", 100.0 * stage.part(r).tol, TOLERANCE_ALLOWED);
    }
    if let Some(c) = [stage.cin, stage.cout, stage.ce]
        .into_iter()
        .flatten()
        .find(|c| bad(c.tol))
    {
        return FlagError::value("--cap-tol", 100.0 * c.tol, TOLERANCE_ALLOWED);
    }
    FlagError::Stage(StageError::Tolerance)
}

/// Explain a profile error naming the flags and values.
pub fn profile_error(p: &Profile, e: ProfileError) -> FlagError {
    match e {
        ProfileError::BetaSpread => FlagError::value(
            "--beta-min/--beta/--beta-max",
            format!("{}/{}/{}", p.beta_min, p.beta_typ, p.beta_max),
            e,
        ),
        ProfileError::BetaReverse => FlagError::value("--beta-rev", p.beta_rev, e),
        ProfileError::BetaTempco => FlagError::value("--beta-tc", p.beta_tc * 100.0, e),
        ProfileError::SaturationCurrent => FlagError::value("--is/--vbe", p.is_25, e),
        ProfileError::EarlyVoltage => FlagError::value("--early", p.early.unwrap_or(f64::NAN), e),
        ProfileError::VceSat => FlagError::value("--vce-sat", p.vce_sat, e),
        ProfileError::PowerRating => FlagError::value(
            "--power-rating/--tj-max",
            format!("{}/{}", p.power_25, p.tj_max),
            e,
        ),
        _ => FlagError::Profile(e),
    }
}

/// Explain a spread error naming the flag.
pub fn spread_error(e: SpreadError) -> FlagError {
    match e {
        SpreadError::TempRange => FlagError::Spread {
            flag: "--temp-min/--temp-max",
            why: e,
        },
        SpreadError::Sigmas => FlagError::Spread {
            flag: "--normal",
            why: e,
        },
        _ => FlagError::SpreadOther(e),
    }
}

/// Ambient temperatures the engine accepts, °C.
pub const TEMP_RANGE: std::ops::RangeInclusive<f64> = -55.0..=150.0;

/// Check a temperature flag.
pub fn check_temp(flag: &'static str, t: f64) -> Result<(), FlagError> {
    if TEMP_RANGE.contains(&t) {
        Ok(())
    } else {
        Err(FlagError::value(
            flag,
            t,
            "must be between -55 °C and 150 °C",
        ))
    }
}

impl TempRange {
    /// The ambient range, each end defaulting to `temp_c`, checked.
    pub fn variation(&self, temp_c: f64) -> Result<Variation, FlagError> {
        let lo = self.temp_min.unwrap_or(temp_c);
        let hi = self.temp_max.unwrap_or(temp_c);
        check_temp("--temp-min", lo)?;
        check_temp("--temp-max", hi)?;
        if lo > hi {
            return Err(FlagError::value(
                "--temp-min/--temp-max",
                format!("{lo}/{hi}"),
                "the lowest ambient must not be above the highest",
            ));
        }
        Ok(Variation::between(lo, hi))
    }
}
