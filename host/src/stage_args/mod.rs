//! The stage as given on the command line: `--design FILE`, or the stage flags of the machine
//! interface (a flag given beside `--design` overrides the file's value).

//!
//! [`flags`] holds the clap flag groups, [`explain`] the errors that name the flag and the value.

pub mod explain;
pub mod flags;

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::limits::Meter;
use biasjig_core::settings::{self, InputMode, Inputs, TestSettings};
use biasjig_core::stage::{Part, Polarity, Resistor, Stage};
use serde_json::{json, Map, Value};

use crate::designfile::{self, DesignDoc};
use explain::TOLERANCE_ALLOWED;
pub use explain::{
    check_temp, profile_error, settings_error, spread_error, stage_error, FlagError, TEMP_RANGE,
};
pub use flags::{InputArgs, MeterArgs, ProfileArgs, SettingsArgs, StageArgs, TempRange, TestArgs};

/// Default resistor tolerance (the core's one definition).
pub const DEFAULT_TOL: f64 = settings::DEFAULT_TOL;
/// Default capacitor tolerance (the core's one definition).
pub const DEFAULT_CAP_TOL: f64 = settings::DEFAULT_CAP_TOL;

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

impl ProfileArgs {
    /// Apply the flags given over `base`.
    pub fn apply(&self, mut p: Profile) -> Result<Profile, FlagError> {
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
            (Some(_), Some(_)) => return Err(FlagError::IsAndVbe),
            (Some(is), None) => p.is_25 = is,
            (None, Some(vbe)) => {
                if !(0.2..=1.2).contains(&vbe) {
                    return Err(FlagError::value(
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

/// The test-ambient, meter (with `signal`, the signal-test meter's too) and measuring-input
/// flags given, in this order, to `add` as (flag, value as given: percentages in percent,
/// `--inputs` 0 together, 1 one).
fn list_test_flags(
    test: Option<&TestArgs>,
    inputs: Option<&InputArgs>,
    signal: bool,
    add: &mut impl FnMut(&str, Option<f64>),
) {
    if let Some(t) = test {
        add("--temp-min", t.temp_min);
        add("--temp-max", t.temp_max);
        add("--meter", t.meter.meter.map(|g| 100.0 * g));
        add("--meter-offset", t.meter.meter_offset);
        add("--divider-tol", t.meter.divider_tol.map(|d| 100.0 * d));
        if signal {
            add("--signal-error", t.meter.signal_error.map(|d| 100.0 * d));
            add("--signal-floor", t.meter.signal_floor);
        }
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

/// The test settings a station pushes: `base` (the design file's) changed by the flags
/// (`temp`: `--temp`), and the flags that changed them as JSON, flag -> value as given (the
/// `overrides` of each station record; percentages in percent, `--inputs` 0 together, 1 one).
pub fn station_settings(
    base: TestSettings,
    temp: Option<f64>,
    flags: &SettingsArgs,
) -> Result<(TestSettings, Value), FlagError> {
    let (test, inputs) = (&flags.test, &flags.inputs);
    let mut ts = base;
    let mut over = Map::new();
    let mut add = |flag: &str, v: Option<f64>| {
        if let Some(v) = v {
            over.insert(flag.to_owned(), json!(v));
        }
    };
    if let Some(t) = temp {
        ts.temp_min_c = t;
        ts.temp_max_c = t;
    }
    add("--temp", temp);
    let t = test;
    ts.temp_min_c = t.temp_min.unwrap_or(ts.temp_min_c);
    ts.temp_max_c = t.temp_max.unwrap_or(ts.temp_max_c);
    ts.meter.gain_error = t.meter.meter.unwrap_or(ts.meter.gain_error);
    ts.meter.offset = t.meter.meter_offset.unwrap_or(ts.meter.offset);
    ts.meter.divider_tol = t.meter.divider_tol.unwrap_or(ts.meter.divider_tol);
    ts.inputs.r = inputs.input_r.or(ts.inputs.r);
    ts.inputs.mode = inputs.inputs.unwrap_or(ts.inputs.mode);
    // The station pushes no signal-test meter: its flags are not listed.
    list_test_flags(Some(test), Some(inputs), false, &mut add);
    ts.validate().map_err(|e| settings_error(&ts, e))?;
    Ok((ts, Value::Object(over)))
}

impl StageArgs {
    /// [`resolve_with`](Self::resolve_with) the test settings' flags of a command that judges
    /// boards.
    pub fn resolve_for_test(&self, flags: &SettingsArgs) -> Result<Resolved, FlagError> {
        self.resolve_with(Some(&flags.inputs), Some(&flags.test))
    }

    /// Build the stage from the design file and/or flags, validated, with the test settings:
    /// the file's (or the defaults), `--temp` as the test ambient, then the command's
    /// measuring-input and test flags.
    pub fn resolve_with(
        &self,
        inputs: Option<&InputArgs>,
        test: Option<&TestArgs>,
    ) -> Result<Resolved, FlagError> {
        let doc = match &self.design {
            Some(path) => Some(designfile::load(path)?),
            None => None,
        };
        let tol = self.tol;
        let cap_tol = self.cap_tol.unwrap_or(DEFAULT_CAP_TOL);
        // Checked even when no capacitor is given (they are ideal then), so that a tolerance
        // that cannot be is never taken silently.
        if !(0.0..=0.5).contains(&cap_tol) {
            return Err(FlagError::value(
                "--cap-tol",
                100.0 * cap_tol,
                TOLERANCE_ALLOWED,
            ));
        }
        let (mut stage, base_profile, base_temp, base_settings) = match &doc {
            Some(d) => (d.stage, d.profile, d.temp_c, d.test),
            None => {
                let need =
                    |v: Option<f64>, flag: &'static str| v.ok_or(FlagError::Missing { flag });
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
        list_test_flags(test, inputs, true, &mut add);
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
