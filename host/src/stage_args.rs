//! The stage as given on the command line: `--design FILE`, or the stage flags of the machine
//! interface (a flag given beside `--design` overrides the file's value).

use std::path::PathBuf;

use biasjig_core::device::{is_from_vbe, Profile, ProfileError};
use biasjig_core::limits::Meter;
use biasjig_core::settings::{self, InputMode, Inputs, SettingsError, TestSettings};
use biasjig_core::stage::{Capacitor, Part, Polarity, Resistor, Stage, StageError};

use crate::designfile::{self, DesignDoc};
use crate::error::CliError;
use crate::values;

/// Default resistor tolerance (the core's one definition).
pub const DEFAULT_TOL: f64 = settings::DEFAULT_TOL;
/// Default capacitor tolerance (the core's one definition).
pub const DEFAULT_CAP_TOL: f64 = settings::DEFAULT_CAP_TOL;

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

/// A stage ready for the engine.
#[derive(Debug, Clone)]
pub struct Resolved {
    /// The stage.
    pub stage: Stage,
    /// The transistor.
    pub profile: Profile,
    /// Nominal ambient, °C (analyze, spread: the one temperature of a single solve).
    pub temp_c: f64,
    /// The test settings the verdict depends on besides the stage and profile.
    pub settings: TestSettings,
    /// Flags given beside `--design` that change what the file states (flag, value as given):
    /// recorded with every board they judge.
    pub overrides: Vec<(String, f64)>,
    /// The design file it came from, if any.
    pub doc: Option<DesignDoc>,
}

impl Resolved {
    /// The settings digest of what is in force (stage, transistor, test settings).
    pub fn digest(&self) -> settings::Digest {
        settings::digest(&self.stage, &self.profile, &self.settings)
    }
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

/// Explain a test-settings error naming the flag.
pub fn settings_error(s: &TestSettings, e: SettingsError) -> CliError {
    match e {
        SettingsError::Ambient => CliError::field(
            "--temp-min/--temp-max",
            format!("{}/{}", s.temp_min_c, s.temp_max_c),
            e,
        ),
        SettingsError::MeterGain => CliError::field("--meter", 100.0 * s.meter.gain_error, e),
        SettingsError::MeterOffset => CliError::field("--meter-offset", s.meter.offset, e),
        SettingsError::DividerTol => {
            CliError::field("--divider-tol", 100.0 * s.meter.divider_tol, e)
        }
        SettingsError::InputR => CliError::field("--input-r", s.inputs.r.unwrap_or(f64::NAN), e),
        SettingsError::Signal => CliError::field(
            "--signal-error/--signal-floor",
            format!("{}/{}", 100.0 * s.signal.gain_error, s.signal.floor),
            e,
        ),
        _ => CliError::usage(e.to_string()),
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
pub fn stage_error(stage: &Stage, e: StageError) -> CliError {
    match e {
        StageError::Supply => {
            CliError::field("--vcc", stage.vcc.value, "must be between 0.5 V and 1000 V")
        }
        StageError::Resistor(r) => CliError::field(flag_of(r), stage.resistor(r), e),
        StageError::Load => CliError::field("--rl", stage.rl.unwrap_or(f64::NAN), e),
        StageError::Source => CliError::field("--rs", stage.rs, e),
        StageError::Capacitor(c) => {
            let (flag, v) = match c {
                Capacitor::Cin => ("--cin", stage.cin),
                Capacitor::Cout => ("--cout", stage.cout),
                Capacitor::Ce => ("--ce", stage.ce),
            };
            CliError::field(
                flag,
                v.map_or(f64::NAN, |p| p.value),
                "must be positive and below 1 F",
            )
        }
        StageError::Tolerance => tolerance_error(stage),
        _ => CliError::usage(format!("stage: {e}")),
    }
}

/// Name the tolerance flag and its value (percent) for a tolerance outside 0 to 50 %.
fn tolerance_error(stage: &Stage) -> CliError {
    let bad = |t: f64| !(t.is_finite() && (0.0..=0.5).contains(&t));
    let allowed = "tolerance: allowed 0 to 50 %";
    if bad(stage.vcc.tol) {
        return CliError::field("--vcc-tol", 100.0 * stage.vcc.tol, allowed);
    }
    if let Some(r) = Resistor::ALL.into_iter().find(|r| bad(stage.part(*r).tol)) {
        return CliError::field("--tol", 100.0 * stage.part(r).tol, allowed);
    }
    if let Some(c) = [stage.cin, stage.cout, stage.ce]
        .into_iter()
        .flatten()
        .find(|c| bad(c.tol))
    {
        return CliError::field("--cap-tol", 100.0 * c.tol, allowed);
    }
    CliError::usage(format!("stage: {}", StageError::Tolerance))
}

/// Explain a profile error naming the flags and values.
pub fn profile_error(p: &Profile, e: ProfileError) -> CliError {
    match e {
        ProfileError::BetaSpread => CliError::field(
            "--beta-min/--beta/--beta-max",
            format!("{}/{}/{}", p.beta_min, p.beta_typ, p.beta_max),
            e,
        ),
        ProfileError::BetaReverse => CliError::field("--beta-rev", p.beta_rev, e),
        ProfileError::BetaTempco => CliError::field("--beta-tc", p.beta_tc * 100.0, e),
        ProfileError::SaturationCurrent => CliError::field("--is/--vbe", p.is_25, e),
        ProfileError::EarlyVoltage => CliError::field("--early", p.early.unwrap_or(f64::NAN), e),
        ProfileError::VceSat => CliError::field("--vce-sat", p.vce_sat, e),
        ProfileError::PowerRating => CliError::field(
            "--power-rating/--tj-max",
            format!("{}/{}", p.power_25, p.tj_max),
            e,
        ),
        _ => CliError::usage(format!("transistor: {e}")),
    }
}

impl ProfileArgs {
    /// Apply the flags given over `base`.
    pub fn apply(&self, mut p: Profile) -> Result<Profile, CliError> {
        if let Some(b) = self.beta {
            p.beta_typ = b;
            p.beta_min = self.beta_min.unwrap_or(b);
            p.beta_max = self.beta_max.unwrap_or(b);
        }
        if let Some(b) = self.beta_min {
            p.beta_min = b;
        }
        if let Some(b) = self.beta_max {
            p.beta_max = b;
        }
        if self.beta.is_none() && (self.beta_min.is_some() || self.beta_max.is_some()) {
            // Keep the typical value inside a spread given alone.
            if p.beta_typ < p.beta_min || p.beta_typ > p.beta_max {
                p.beta_typ = (p.beta_min * p.beta_max).sqrt();
            }
        }
        if let Some(b) = self.beta_rev {
            p.beta_rev = b;
        }
        if let Some(tc) = self.beta_tc {
            p.beta_tc = tc;
        }
        match (self.is, self.vbe) {
            (Some(_), Some(_)) => {
                return Err(CliError::usage(
                    "--is and --vbe: give one of them, not both",
                ))
            }
            (Some(is), None) => p.is_25 = is,
            (None, Some(vbe)) => {
                if !(0.2..=1.2).contains(&vbe) {
                    return Err(CliError::field(
                        "--vbe",
                        vbe,
                        "must be between 0.2 V and 1.2 V",
                    ));
                }
                p.is_25 = is_from_vbe(vbe);
            }
            (None, None) => {}
        }
        if let Some(va) = self.early {
            p.early = Some(va);
        }
        if let Some(v) = self.vce_sat {
            p.vce_sat = v;
        }
        if let Some(w) = self.power_rating {
            p.power_25 = w;
        }
        if let Some(t) = self.tj_max {
            p.tj_max = t;
        }
        p.validate().map_err(|e| profile_error(&p, e))?;
        Ok(p)
    }
}

/// The default profile of the machine interface (the core's one definition): hFE 200 with no
/// spread, VBE 0.65 V at 1 mA.
pub fn default_profile() -> Profile {
    settings::default_profile()
}

impl StageArgs {
    /// Build the stage from the design file and/or flags, validated, with the test settings:
    /// the file's (or the defaults), `--temp` as the test ambient, then the command's
    /// measuring-input and test flags.
    pub fn resolve_with(
        &self,
        inputs: Option<&InputArgs>,
        test: Option<&TestArgs>,
    ) -> Result<Resolved, CliError> {
        let doc = match &self.design {
            Some(path) => Some(designfile::load(path)?),
            None => None,
        };
        let tol = self.tol;
        let cap_tol = self.cap_tol.unwrap_or(DEFAULT_CAP_TOL);
        // Checked even when no capacitor is given (they are ideal then), so that a tolerance
        // that cannot be is never taken silently.
        if !(0.0..=0.5).contains(&cap_tol) {
            return Err(CliError::field(
                "--cap-tol",
                100.0 * cap_tol,
                "tolerance: allowed 0 to 50 %",
            ));
        }
        let (mut stage, base_profile, base_temp, base_settings) = match &doc {
            Some(d) => (d.stage, d.profile, d.temp_c, d.test),
            None => {
                let need = |v: Option<f64>, flag: &str| {
                    v.ok_or_else(|| {
                        CliError::usage(format!(
                            "{flag}: missing: give it (a value such as 4k7), or --design FILE"
                        ))
                    })
                };
                let t = tol.unwrap_or(DEFAULT_TOL);
                let stage = Stage {
                    polarity: if self.pnp {
                        Polarity::Pnp
                    } else {
                        Polarity::Npn
                    },
                    vcc: Part::new(
                        need(self.vcc, "--vcc")?,
                        self.vcc_tol.unwrap_or(settings::DEFAULT_SUPPLY_TOL),
                    ),
                    r1: Part::new(need(self.r1, "--r1")?, t),
                    r2: Part::new(need(self.r2, "--r2")?, t),
                    rc: Part::new(need(self.rc, "--rc")?, t),
                    re1: Part::new(self.re1.unwrap_or(0.0), t),
                    re2: Part::new(self.re2.unwrap_or(0.0), t),
                    rl: self.rl,
                    rs: self.rs.unwrap_or(0.0),
                    cin: self.cin.map(|c| Part::new(c, cap_tol)),
                    cout: self.cout.map(|c| Part::new(c, cap_tol)),
                    ce: self.ce.map(|c| Part::new(c, cap_tol)),
                };
                (
                    stage,
                    default_profile(),
                    settings::DEFAULT_TEMP_C,
                    TestSettings::DEFAULT,
                )
            }
        };
        let mut overrides = Vec::new();
        if doc.is_some() {
            self.override_file(&mut stage, tol, cap_tol);
            self.list_overrides(inputs, test, &mut overrides);
        }
        stage.validate().map_err(|e| stage_error(&stage, e))?;
        let profile = self.profile.apply(base_profile)?;
        let temp_c = self.temp.unwrap_or(base_temp);
        check_temp("--temp", temp_c)?;
        let mut ts = base_settings;
        if let Some(t) = self.temp {
            ts.temp_min_c = t;
            ts.temp_max_c = t;
        }
        if let Some(t) = test {
            if let Some(lo) = t.temp_min {
                check_temp("--temp-min", lo)?;
                ts.temp_min_c = lo;
            }
            if let Some(hi) = t.temp_max {
                check_temp("--temp-max", hi)?;
                ts.temp_max_c = hi;
            }
            let m = &t.meter;
            ts.meter = Meter {
                gain_error: m.meter.unwrap_or(ts.meter.gain_error),
                offset: m.meter_offset.unwrap_or(ts.meter.offset),
                divider_tol: m.divider_tol.unwrap_or(ts.meter.divider_tol),
            };
            ts.signal = biasjig_core::signaltest::SignalMeter {
                gain_error: m.signal_error.unwrap_or(ts.signal.gain_error),
                floor: m.signal_floor.unwrap_or(ts.signal.floor),
            };
        }
        if let Some(i) = inputs {
            ts.inputs = Inputs {
                r: i.input_r.or(ts.inputs.r),
                mode: i.inputs.unwrap_or(ts.inputs.mode),
            };
        }
        ts.validate().map_err(|e| settings_error(&ts, e))?;
        Ok(Resolved {
            stage,
            profile,
            temp_c,
            settings: ts,
            overrides,
            doc,
        })
    }

    /// Every flag given beside `--design` that changes what the file states, with its value.
    fn list_overrides(
        &self,
        inputs: Option<&InputArgs>,
        test: Option<&TestArgs>,
        out: &mut Vec<(String, f64)>,
    ) {
        let p = &self.profile;
        let mut add = |flag: &str, v: Option<f64>| {
            if let Some(v) = v {
                out.push((flag.to_string(), v));
            }
        };
        add("--vcc", self.vcc);
        add("--r1", self.r1);
        add("--r2", self.r2);
        add("--rc", self.rc);
        add("--re1", self.re1);
        add("--re2", self.re2);
        add("--rl", self.rl);
        add("--rs", self.rs);
        add("--cin", self.cin);
        add("--cout", self.cout);
        add("--ce", self.ce);
        add("--tol", self.tol.map(|t| 100.0 * t));
        add("--cap-tol", self.cap_tol.map(|t| 100.0 * t));
        add("--vcc-tol", self.vcc_tol.map(|t| 100.0 * t));
        add("--temp", self.temp);
        add("--pnp", self.pnp.then_some(1.0));
        add("--beta", p.beta);
        add("--beta-min", p.beta_min);
        add("--beta-max", p.beta_max);
        add("--beta-rev", p.beta_rev);
        add("--beta-tc", p.beta_tc.map(|t| 100.0 * t));
        add("--is", p.is);
        add("--vbe", p.vbe);
        add("--early", p.early);
        add("--vce-sat", p.vce_sat);
        add("--power-rating", p.power_rating);
        add("--tj-max", p.tj_max);
        if let Some(t) = test {
            add("--temp-min", t.temp_min);
            add("--temp-max", t.temp_max);
            add("--meter", t.meter.meter.map(|g| 100.0 * g));
            add("--meter-offset", t.meter.meter_offset);
            add("--divider-tol", t.meter.divider_tol.map(|d| 100.0 * d));
            add("--signal-error", t.meter.signal_error.map(|d| 100.0 * d));
            add("--signal-floor", t.meter.signal_floor);
        }
        if let Some(i) = inputs {
            add("--input-r", i.input_r);
            add(
                "--inputs",
                i.inputs.map(|m| match m {
                    InputMode::Together => 0.0,
                    InputMode::One => 1.0,
                }),
            );
        }
    }

    fn override_file(&self, stage: &mut Stage, tol: Option<f64>, cap_tol: f64) {
        if let Some(v) = self.vcc {
            stage.vcc.value = v;
        }
        if let Some(t) = self.vcc_tol {
            stage.vcc.tol = t;
        }
        for (flag, r) in [
            (self.r1, Resistor::R1),
            (self.r2, Resistor::R2),
            (self.rc, Resistor::Rc),
            (self.re1, Resistor::Re1),
            (self.re2, Resistor::Re2),
        ] {
            if let Some(v) = flag {
                stage.part_mut(r).value = v;
            }
            if let Some(t) = tol {
                stage.part_mut(r).tol = t;
            }
        }
        if self.rl.is_some() {
            stage.rl = self.rl;
        }
        if let Some(rs) = self.rs {
            stage.rs = rs;
        }
        for (flag, slot) in [
            (self.cin, &mut stage.cin),
            (self.cout, &mut stage.cout),
            (self.ce, &mut stage.ce),
        ] {
            if let Some(c) = flag {
                *slot = Some(Part::new(c, cap_tol));
            } else if let (Some(t), Some(p)) = (self.cap_tol, slot.as_mut()) {
                // --cap-tol alone sets the tolerance of the file's capacitors (as --tol does
                // the resistors'), so that it is never listed as an override and not taken.
                p.tol = t;
            }
        }
        if self.pnp {
            stage.polarity = Polarity::Pnp;
        }
    }
}

/// Ambient temperatures the engine accepts, °C.
pub const TEMP_RANGE: std::ops::RangeInclusive<f64> = -55.0..=150.0;

/// Check a temperature flag.
pub fn check_temp(flag: &str, t: f64) -> Result<(), CliError> {
    if TEMP_RANGE.contains(&t) {
        Ok(())
    } else {
        Err(CliError::field(
            flag,
            t,
            "must be between -55 °C and 150 °C",
        ))
    }
}
