//! The session's starting values: the demo scenario's stage, transistor, settings and
//! requirement (what `*RST` restores).

use super::record::Settings;
use crate::design::Requirement;
use crate::device::Profile;
use crate::series::Series;
use crate::settings::TestSettings;
use crate::stage::{Part, Polarity, Stage};

/// The starting stage: the demo scenario's pump-monitor preamp (invented): 12 V, RL 15 kΩ,
/// RS 600 Ω, E24 5 % resistors, E6 20 % capacitors.
pub fn default_stage() -> Stage {
    let r = |v| Part::new(v, 0.05);
    let c = |v| Some(Part::new(v, 0.20));
    Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(12.0, crate::settings::DEFAULT_SUPPLY_TOL),
        r1: r(47e3),
        r2: r(10e3),
        rc: r(4.7e3),
        re1: r(220.0),
        re2: r(820.0),
        rl: Some(15e3),
        rs: 600.0,
        cin: c(10e-6),
        cout: c(10e-6),
        ce: c(470e-6),
    }
}

/// The starting transistor: the one every front end starts from
/// ([`crate::settings::default_profile`]: hFE 200 with no spread until one is set, VBE 0.65 V at
/// 1 mA, VCE(sat) 0.2 V, 300 mW at 25 °C), so that the same stage gets the same windows here as
/// on the command line.
pub fn default_profile() -> Profile {
    crate::settings::default_profile()
}

/// The default settings (after `*RST`).
pub fn default_settings() -> Settings {
    Settings {
        stage: default_stage(),
        profile: default_profile(),
        temp_c: crate::settings::DEFAULT_TEMP_C,
        temp_min_c: TestSettings::DEFAULT.temp_min_c,
        temp_max_c: TestSettings::DEFAULT.temp_max_c,
        meter: TestSettings::DEFAULT.meter,
        inputs: TestSettings::DEFAULT.inputs,
        pin: None,
        pin_failures: 0,
        design: None,
    }
}

/// The starting requirement: the demo scenario (invented): 12 V, gain magnitude 15 into
/// 15 kΩ from 600 Ω, low corner at most 5 Hz, 2 mA budget, ambient -10 to 55 °C, E24 5 %
/// resistors, E6 20 % capacitors.
pub fn default_requirement() -> Requirement {
    Requirement {
        rl: Some(15e3),
        rs: 600.0,
        ic_max: 2e-3,
        f_low: Some(5.0),
        temp: 25.0,
        temp_min: -10.0,
        temp_max: 55.0,
        series: Series::E24,
        tol: 0.05,
        cap_series: Series::E6,
        cap_tol: 0.20,
        ..Requirement::new(12.0, 15.0)
    }
}
