//! The stage as given on the command line: `--design FILE`, or the stage flags of the machine
//! interface (a flag given beside `--design` overrides the file's value).

use std::path::PathBuf;

use biasjig_core::device::{is_from_vbe, Profile, ProfileError};
use biasjig_core::stage::{Capacitor, Part, Polarity, Resistor, Stage, StageError};

use crate::designfile::{self, DesignDoc};
use crate::error::CliError;
use crate::values;

/// Default resistor tolerance (E24 parts are 5 %, common practice).
pub const DEFAULT_TOL: f64 = 0.05;
/// Default capacitor tolerance (E6 parts are 20 %, common practice).
pub const DEFAULT_CAP_TOL: f64 = 0.20;

/// Transistor profile flags.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct ProfileArgs {
    /// Typical hFE at 25 °C [default: 200]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta: Option<f64>,
    /// Lowest hFE at 25 °C [default: --beta]
    #[arg(long = "beta-min", value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_min: Option<f64>,
    /// Highest hFE at 25 °C [default: --beta]
    #[arg(long = "beta-max", value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_max: Option<f64>,
    /// Reverse (inverse-active) hFE [default: 1]
    #[arg(long = "beta-rev", value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_rev: Option<f64>,
    /// hFE temperature coefficient, percent per °C [default: 0.5]
    #[arg(long = "beta-tc", value_parser = values::signed_percent, allow_hyphen_values = true, help_heading = "Transistor")]
    pub beta_tc: Option<f64>,
    /// Junction saturation current at 25 °C, A [default: from --vbe]
    #[arg(long = "is", value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub is: Option<f64>,
    /// VBE at IC = 1 mA and 25 °C, V [default: 0.65]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub vbe: Option<f64>,
    /// Early voltage, V [default: none, infinite]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub early: Option<f64>,
    /// VCE(sat) used for the output swing, V [default: 0.2]
    #[arg(long = "vce-sat", value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
    pub vce_sat: Option<f64>,
    /// Power rating at 25 °C, W [default: 0.3]
    #[arg(long = "power-rating", value_parser = values::value, allow_hyphen_values = true, help_heading = "Transistor")]
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
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub vcc: Option<f64>,
    /// Supply to base, Ω
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub r1: Option<f64>,
    /// Base to ground, Ω
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub r2: Option<f64>,
    /// Collector resistor, Ω
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub rc: Option<f64>,
    /// Emitter resistor, not bypassed, Ω [default: 0]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub re1: Option<f64>,
    /// Emitter resistor, bypassed by CE, Ω [default: 0]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub re2: Option<f64>,
    /// Load, AC-coupled through COUT, Ω [default: none, open]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub rl: Option<f64>,
    /// Source resistance, Ω [default: 0]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub rs: Option<f64>,
    /// Input coupling capacitor, F [default: ideal]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub cin: Option<f64>,
    /// Output coupling capacitor, F [default: ideal]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub cout: Option<f64>,
    /// Emitter bypass capacitor, F [default: ideal]
    #[arg(long, value_parser = values::value, allow_hyphen_values = true, help_heading = "Stage")]
    pub ce: Option<f64>,
    /// Resistor tolerance, percent [default: 5]
    #[arg(long, value_parser = values::percent, allow_hyphen_values = true, help_heading = "Stage")]
    pub tol: Option<f64>,
    /// Capacitor tolerance, percent [default: 20]
    #[arg(long = "cap-tol", value_parser = values::percent, allow_hyphen_values = true, help_heading = "Stage")]
    pub cap_tol: Option<f64>,
    /// Supply tolerance, percent [default: 0]
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
    /// Ambient temperature, °C.
    pub temp_c: f64,
    /// The design file it came from, if any.
    pub doc: Option<DesignDoc>,
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
        _ => CliError::usage(format!("stage: {e}")),
    }
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

/// The default profile of the machine interface: hFE 200, VBE 0.65 V at 1 mA.
pub fn default_profile() -> Profile {
    Profile::default()
}

impl StageArgs {
    /// Build the stage from the design file and/or flags, validated.
    pub fn resolve(&self) -> Result<Resolved, CliError> {
        let doc = match &self.design {
            Some(path) => Some(designfile::load(path)?),
            None => None,
        };
        let tol = self.tol;
        let cap_tol = self.cap_tol.unwrap_or(DEFAULT_CAP_TOL);
        let (mut stage, base_profile, base_temp) = match &doc {
            Some(d) => (d.stage, d.profile, d.temp_c),
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
                    vcc: Part::new(need(self.vcc, "--vcc")?, self.vcc_tol.unwrap_or(0.0)),
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
                (stage, default_profile(), 25.0)
            }
        };
        if doc.is_some() {
            self.override_file(&mut stage, tol, cap_tol);
        }
        stage.validate().map_err(|e| stage_error(&stage, e))?;
        let profile = self.profile.apply(base_profile)?;
        let temp_c = self.temp.unwrap_or(base_temp);
        check_temp("--temp", temp_c)?;
        Ok(Resolved {
            stage,
            profile,
            temp_c,
            doc,
        })
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
