//! The clap flag groups of the stage, the transistor, the meter, the measuring inputs and the
//! ambients, as the machine interface names them.

use std::path::PathBuf;

use biasjig_core::settings::InputMode;

use crate::values;

/// Transistor profile flags.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct ProfileArgs {
    /// Typical hFE at 25 °C [default: 200]
    #[arg(long, value_parser = values::number, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta: Option<f64>,
    /// Lowest hFE at 25 °C [default: --beta]
    #[arg(long = "beta-min", value_parser = values::number, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_min: Option<f64>,
    /// Highest hFE at 25 °C [default: --beta]
    #[arg(long = "beta-max", value_parser = values::number, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_max: Option<f64>,
    /// Reverse (inverse-active) hFE [default: 1]
    #[arg(long = "beta-rev", value_parser = values::number, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_rev: Option<f64>,
    /// hFE temperature coefficient, percent per °C [default: 0.5]
    #[arg(long = "beta-tc", value_parser = values::signed_percent, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_tc: Option<f64>,
    /// Junction saturation current at 25 °C, A [default: from --vbe]
    #[arg(long = "is", value_parser = values::amps, allow_hyphen_values = true, help_heading = "Transistor")]
    pub is: Option<f64>,
    /// VBE at IC = 1 mA and 25 °C, V [default: 0.65]
    #[arg(long, value_parser = values::volts, allow_hyphen_values = true, help_heading = "Transistor")]
    pub vbe: Option<f64>,
    /// Early voltage, V [default: none, infinite]
    #[arg(long, value_parser = values::volts, allow_hyphen_values = true, help_heading = "Transistor")]
    pub early: Option<f64>,
    /// VCE(sat) used for the output swing, V [default: 0.2]
    #[arg(long = "vce-sat", value_parser = values::volts, allow_hyphen_values = true, help_heading = "Transistor")]
    pub vce_sat: Option<f64>,
    /// Power rating at 25 °C, W [default: 0.3]
    #[arg(long = "power-rating", value_parser = values::watts, allow_hyphen_values = true, help_heading = "Transistor")]
    pub power_rating: Option<f64>,
    /// Junction temperature where the derated power reaches zero, °C [default: 150]
    #[arg(long = "tj-max", value_parser = values::celsius, help_heading = "Transistor")]
    pub tj_max: Option<f64>,
}

/// The stage flags, or a design file.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct StageArgs {
    /// Design file written by `biasjig design -o FILE`
    #[arg(long, value_name = "FILE", help_heading = "Stage")]
    pub design: Option<PathBuf>,
    /// Supply, V
    #[arg(long, value_parser = values::volts, allow_hyphen_values = true, help_heading = "Stage")]
    pub vcc: Option<f64>,
    /// Supply to base, Ω
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub r1: Option<f64>,
    /// Base to ground, Ω
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub r2: Option<f64>,
    /// Collector resistor, Ω
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub rc: Option<f64>,
    /// Emitter resistor, not bypassed, Ω [default: 0]
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub re1: Option<f64>,
    /// Emitter resistor, bypassed by CE, Ω [default: 0]
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub re2: Option<f64>,
    /// Load, AC-coupled through COUT, Ω [default: none, open]
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub rl: Option<f64>,
    /// Source resistance, Ω [default: 0]
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Stage")]
    pub rs: Option<f64>,
    /// Input coupling capacitor, F [default: ideal]
    #[arg(long, value_parser = values::farads, allow_hyphen_values = true, help_heading = "Stage")]
    pub cin: Option<f64>,
    /// Output coupling capacitor, F [default: ideal]
    #[arg(long, value_parser = values::farads, allow_hyphen_values = true, help_heading = "Stage")]
    pub cout: Option<f64>,
    /// Emitter bypass capacitor, F [default: ideal]
    #[arg(long, value_parser = values::farads, allow_hyphen_values = true, help_heading = "Stage")]
    pub ce: Option<f64>,
    /// Resistor tolerance, percent [default: 5]
    #[arg(long, value_parser = values::percent, allow_hyphen_values = true, help_heading = "Stage")]
    pub tol: Option<f64>,
    /// Capacitor tolerance, percent [default: 20]
    #[arg(long = "cap-tol", value_parser = values::percent, allow_hyphen_values = true, help_heading = "Stage")]
    pub cap_tol: Option<f64>,
    /// Supply tolerance, percent: a measured supply outside nominal ± this is not judged [default: 5]
    #[arg(long = "vcc-tol", value_parser = values::percent, allow_hyphen_values = true, help_heading = "Stage")]
    pub vcc_tol: Option<f64>,
    /// Ambient temperature, °C [default: 25]
    #[arg(long, value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Stage")]
    pub temp: Option<f64>,
    /// PNP stage: emitter side to the supply, collector side to ground
    #[arg(long, help_heading = "Stage")]
    pub pnp: bool,
    #[command(flatten)]
    /// Transistor profile.
    pub profile: ProfileArgs,
}

/// The meter flags shared by `limits`, `check` and `batch` (defaults: the core's meter).
#[derive(clap::Args, Debug, Clone, Default)]
pub struct MeterArgs {
    /// Meter gain error, percent of the reading, 0 to 20 [default: 0.5]
    #[arg(long, value_name = "P", value_parser = values::percent, help_heading = "Meter")]
    pub meter: Option<f64>,
    /// Meter offset error, V, 0 to 1 [default: 5m]
    #[arg(long = "meter-offset", value_name = "V", value_parser = values::volts, help_heading = "Meter")]
    pub meter_offset: Option<f64>,
    /// Tolerance of the jig's input divider, percent, 0 to 10 [default: 0.1]
    #[arg(long = "divider-tol", value_name = "P", value_parser = values::percent, help_heading = "Meter")]
    pub divider_tol: Option<f64>,
    /// Signal test: error of a gain reading, percent of the reading, 0 to 50 [default: 2]
    #[arg(long = "signal-error", value_name = "P", value_parser = values::percent, help_heading = "Meter")]
    pub signal_error: Option<f64>,
    /// Signal test: error floor of a gain reading, V/V, 0 to 10 [default: 0.02]
    #[arg(long = "signal-floor", value_name = "G", value_parser = values::value, help_heading = "Meter")]
    pub signal_floor: Option<f64>,
}

/// The measuring-input flags (analyze, spread, limits, check, batch).
#[derive(clap::Args, Debug, Clone, Default)]
pub struct InputArgs {
    /// Input resistance of the measuring inputs from each node read to ground, Ω [default: none, an ideal meter]
    #[arg(long = "input-r", value_name = "R", value_parser = values::ohms, help_heading = "Measuring inputs")]
    pub input_r: Option<f64>,
    /// together: every input stays connected while the nodes are read (a jig); one: one node at a time (a hand-held meter) [default: together]
    #[arg(long, value_name = "HOW", value_parser = input_mode, help_heading = "Measuring inputs")]
    pub inputs: Option<InputMode>,
}

fn input_mode(text: &str) -> Result<InputMode, String> {
    InputMode::parse(text.trim()).ok_or_else(|| format!("{text:?}: allowed: together or one"))
}

/// The station's test ambient (`limits`, `check`, `batch`).
#[derive(clap::Args, Debug, Clone, Default)]
pub struct TestArgs {
    /// Lowest test ambient, °C [default: --temp, or the design file's test ambient, or 25]
    #[arg(long = "temp-min", value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Test ambient")]
    pub temp_min: Option<f64>,
    /// Highest test ambient, °C [default: --temp, or the design file's test ambient, or 25]
    #[arg(long = "temp-max", value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Test ambient")]
    pub temp_max: Option<f64>,
    #[command(flatten)]
    /// The meter.
    pub meter: MeterArgs,
}

/// The test settings' flags of the commands that judge boards (`limits`, `check`, `batch`,
/// `station`): the test ambient and the meter, then the measuring inputs.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct SettingsArgs {
    #[command(flatten)]
    /// The test ambient and the meter.
    pub test: TestArgs,
    #[command(flatten)]
    /// The measuring inputs.
    pub inputs: InputArgs,
}

/// The ambient range flags of `spread`.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct TempRange {
    /// Lowest ambient, °C [default: --temp]
    #[arg(long = "temp-min", value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Spread")]
    pub temp_min: Option<f64>,
    /// Highest ambient, °C [default: --temp]
    #[arg(long = "temp-max", value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Spread")]
    pub temp_max: Option<f64>,
}
