//! The transistor profile and its temperature laws.
//!
//! A [`Profile`] describes a bipolar transistor by the figures a data sheet gives: hFE spread at
//! 25 °C, its temperature coefficient, the junction saturation current (or VBE at 1 mA), reverse
//! hFE, an optional Early voltage, VCE(sat) and the power rating with its derating.
//!
//! Temperature laws (as fixed by the machine interface):
//! - IS(T) = IS(T0)·(T/T0)³·exp((q·Eg/k)·(1/T0 − 1/T)), T0 = 298.15 K, Eg = 1.11 eV (silicon);
//! - hFE(T) = hFE(25 °C)·(1 + tc·(T − 25 °C)).

use crate::{thermal_voltage, BOLTZMANN, ELEMENTARY_CHARGE, ZERO_CELSIUS_K};

/// Reference temperature of the profile figures, °C.
pub const REFERENCE_TEMP_C: f64 = 25.0;
/// Band-gap energy of silicon used in the IS(T) law, eV.
pub const SILICON_BANDGAP_EV: f64 = 1.11;
/// The collector current at which a profile's VBE figure is given, A.
pub const VBE_REFERENCE_CURRENT: f64 = 1e-3;
/// The smallest hFE the temperature law may reach (it would go negative far below 25 °C).
const BETA_FLOOR: f64 = 0.1;

/// A profile field that is out of range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ProfileError {
    /// hFE min, typ and max must be finite, positive and in order min <= typ <= max.
    BetaSpread,
    /// Reverse hFE must be finite and positive.
    BetaReverse,
    /// The hFE temperature coefficient must be finite and between -5 and +5 %/°C.
    BetaTempco,
    /// IS must be finite and between 1e-20 A and 1e-6 A.
    SaturationCurrent,
    /// VBE at 1 mA must be between 0.2 V and 1.2 V.
    VbeReference,
    /// The Early voltage must be finite and at least 1 V (or absent).
    EarlyVoltage,
    /// VCE(sat) must be between 0 V and 2 V.
    VceSat,
    /// The power rating must be finite and positive, the maximum junction temperature above 25 °C.
    PowerRating,
}

impl core::fmt::Display for ProfileError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::BetaSpread => {
                "hFE: min, typ and max must be positive and in order min <= typ <= max"
            }
            Self::BetaReverse => "reverse hFE must be positive",
            Self::BetaTempco => "hFE temperature coefficient must be between -5 and +5 %/°C",
            Self::SaturationCurrent => "IS must be between 1e-20 A and 1e-6 A",
            Self::VbeReference => "VBE at 1 mA must be between 0.2 V and 1.2 V",
            Self::EarlyVoltage => "Early voltage must be at least 1 V",
            Self::VceSat => "VCE(sat) must be between 0 V and 2 V",
            Self::PowerRating => {
                "power rating must be positive and the maximum junction temperature above 25 °C"
            }
        })
    }
}

/// A bipolar transistor described by data-sheet figures. Polarity belongs to the [`Stage`](crate::stage::Stage).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Profile {
    /// Lowest forward hFE at 25 °C.
    pub beta_min: f64,
    /// Typical forward hFE at 25 °C.
    pub beta_typ: f64,
    /// Highest forward hFE at 25 °C.
    pub beta_max: f64,
    /// Reverse (inverse-active) hFE.
    pub beta_rev: f64,
    /// hFE temperature coefficient, fraction per °C (0.005 = 0.5 %/°C).
    pub beta_tc: f64,
    /// Junction saturation current at 25 °C, A.
    pub is_25: f64,
    /// Forward Early voltage, V; `None` for none (infinite).
    pub early: Option<f64>,
    /// Collector-emitter saturation voltage used for the output swing, V.
    pub vce_sat: f64,
    /// Power rating at 25 °C ambient, W.
    pub power_25: f64,
    /// Junction temperature at which the derated power reaches zero, °C (linear derating above 25 °C).
    pub tj_max: f64,
}

impl Default for Profile {
    /// A generic small-signal transistor: hFE 200, VBE 0.65 V at 1 mA, VCE(sat) 0.2 V, 300 mW,
    /// derated linearly to zero at 150 °C, no Early effect.
    fn default() -> Self {
        Self {
            beta_min: 200.0,
            beta_typ: 200.0,
            beta_max: 200.0,
            beta_rev: 1.0,
            beta_tc: 0.005,
            is_25: is_from_vbe(0.65),
            early: None,
            vce_sat: 0.2,
            power_25: 0.3,
            tj_max: 150.0,
        }
    }
}

/// The saturation current at 25 °C that gives `vbe` volts at IC = 1 mA with VBC = 0, A.
///
/// `exp − 1` and `ln(1 + x)` are written out: in the profile's range (VBE from 0.2 V, so
/// VBE/VT above 7) they lose nothing against `expm1`/`log1p`, whose code the instrument saves.
pub fn is_from_vbe(vbe: f64) -> f64 {
    let vt = thermal_voltage(REFERENCE_TEMP_C);
    VBE_REFERENCE_CURRENT / (libm::exp(vbe / vt) - 1.0)
}

/// VBE at IC = 1 mA and 25 °C for a saturation current `is_25`, V.
pub fn vbe_from_is(is_25: f64) -> f64 {
    let vt = thermal_voltage(REFERENCE_TEMP_C);
    vt * libm::log(1.0 + VBE_REFERENCE_CURRENT / is_25)
}

impl Profile {
    /// Check every field; the engine may assume a validated profile.
    pub fn validate(&self) -> Result<(), ProfileError> {
        let ok = |x: f64| x.is_finite() && x > 0.0;
        if !(ok(self.beta_min) && ok(self.beta_typ) && ok(self.beta_max))
            || self.beta_min > self.beta_typ
            || self.beta_typ > self.beta_max
        {
            return Err(ProfileError::BetaSpread);
        }
        if !ok(self.beta_rev) {
            return Err(ProfileError::BetaReverse);
        }
        if !(self.beta_tc.is_finite() && self.beta_tc.abs() <= 0.05) {
            return Err(ProfileError::BetaTempco);
        }
        if !(self.is_25.is_finite() && (1e-20..=1e-6).contains(&self.is_25)) {
            return Err(ProfileError::SaturationCurrent);
        }
        if let Some(va) = self.early {
            if !(va.is_finite() && va >= 1.0) {
                return Err(ProfileError::EarlyVoltage);
            }
        }
        if !(self.vce_sat.is_finite() && (0.0..=2.0).contains(&self.vce_sat)) {
            return Err(ProfileError::VceSat);
        }
        if !(ok(self.power_25) && self.tj_max.is_finite() && self.tj_max > REFERENCE_TEMP_C) {
            return Err(ProfileError::PowerRating);
        }
        Ok(())
    }

    /// VBE at IC = 1 mA and 25 °C, V.
    pub fn vbe_1ma(&self) -> f64 {
        vbe_from_is(self.is_25)
    }

    /// Saturation current at ambient `temp_c`, A.
    pub fn is_at(&self, temp_c: f64) -> f64 {
        let t0 = REFERENCE_TEMP_C + ZERO_CELSIUS_K;
        let t = temp_c + ZERO_CELSIUS_K;
        let ratio = t / t0;
        let eg_over_k = ELEMENTARY_CHARGE * SILICON_BANDGAP_EV / BOLTZMANN;
        self.is_25 * ratio * ratio * ratio * libm::exp(eg_over_k * (1.0 / t0 - 1.0 / t))
    }

    /// Forward hFE at `temp_c` for a device whose hFE at 25 °C is `beta_25`.
    pub fn beta_at(&self, beta_25: f64, temp_c: f64) -> f64 {
        let b = beta_25 * (1.0 + self.beta_tc * (temp_c - REFERENCE_TEMP_C));
        if b > BETA_FLOOR {
            b
        } else {
            BETA_FLOOR
        }
    }

    /// Permitted dissipation at ambient `temp_c`, W: full rating up to 25 °C, then linear to zero
    /// at the maximum junction temperature.
    pub fn power_rating_at(&self, temp_c: f64) -> f64 {
        if temp_c <= REFERENCE_TEMP_C {
            return self.power_25;
        }
        let span = self.tj_max - REFERENCE_TEMP_C;
        let left = (self.tj_max - temp_c) / span;
        if left > 0.0 {
            self.power_25 * left
        } else {
            0.0
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vbe_round_trip() {
        let is = is_from_vbe(0.65);
        assert!((vbe_from_is(is) - 0.65).abs() < 1e-12);
    }

    #[test]
    fn is_doubles_about_every_five_degrees() {
        // Common practice: IS roughly doubles every 5 °C near room temperature (from memory:
        // "IS increases about 15 %/°C"). The law above gives about 14-16 %/°C.
        let p = Profile::default();
        let r = p.is_at(26.0) / p.is_at(25.0);
        assert!((1.13..1.18).contains(&r), "{r}");
        assert!((p.is_at(25.0) - p.is_25).abs() < 1e-30);
    }

    #[test]
    fn vbe_falls_about_two_millivolts_per_degree() {
        // Common practice: VBE falls about 2 mV/°C at constant current.
        let p = Profile::default();
        let vbe = |t: f64| thermal_voltage(t) * libm::log(1e-3 / p.is_at(t));
        let slope = (vbe(35.0) - vbe(15.0)) / 20.0;
        assert!((-2.4e-3..-1.6e-3).contains(&slope), "{slope}");
    }

    #[test]
    fn derating_is_linear() {
        let p = Profile::default();
        assert_eq!(p.power_rating_at(20.0), 0.3);
        assert!((p.power_rating_at(87.5) - 0.15).abs() < 1e-12);
        assert_eq!(p.power_rating_at(160.0), 0.0);
    }
}
