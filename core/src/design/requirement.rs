//! What a stage must do ([`Requirement`]), its fields' ranges, and the checks the design makes.

use core::fmt;

use crate::series::Series;
use crate::stage::{Polarity, Resistor};

use super::{Hold, DEFAULT_F_LOW, GAIN_TOLERANCE};

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
    /// IC drift across hFE min..max at most [`DRIFT_LIMIT`](super::DRIFT_LIMIT).
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

pub(super) fn index(r: Resistor) -> usize {
    match r {
        Resistor::R1 => 0,
        Resistor::R2 => 1,
        Resistor::Rc => 2,
        Resistor::Re1 => 3,
        Resistor::Re2 => 4,
    }
}
