//! The commands: each maps a parsed line to core calls and the results to data lines.
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use core::fmt;
use core::fmt::Write as _;

use embedded_io::Write;

use super::jig::{Channel, ChannelCal, Clock, Jig, JigError, Slot, Store, RECORD_LEN};
use super::parse::{CalibrateStep, Command, MeterSetting, Mode, Setting, SET_NAMES};
use super::record::{self, Settings};
use super::reply::{Fail, Outcome, Reply, Text};
use super::{Code, Console, Source, PIN_FREE_TRIES};
use crate::device::is_from_vbe;
#[cfg(feature = "analysis")]
use crate::predict::predict;
#[cfg(feature = "spread")]
use crate::series::{colour_bands, BandCount};
#[cfg(feature = "analysis")]
use crate::solve::Conditions;
use crate::stage::{Capacitor, Part, Polarity, Readings, Resistor};
#[cfg(feature = "spread")]
use crate::units::{capacitor_code, resistor_code};
use crate::units::{Eng, Fixed, Full};

/// Conversions averaged for one calibration point.
const CAL_SAMPLES: u16 = 64;

/// The commands with their usage and a line of help, in the order `help` lists them.
pub const COMMANDS: [(&str, &str, &str); 32] = [
    ("help", "help [COMMAND]", "this list, or one command"),
    (
        "identify",
        "identify | *IDN?",
        "maker,model,serial,firmware",
    ),
    (
        "*rst",
        "*RST",
        "stage, transistor, meter, readings back to the defaults",
    ),
    ("stage", "stage", "show the stage"),
    (
        "set",
        "set NAME VALUE [TOL%]",
        "change one part or figure (help set)",
    ),
    ("profile", "profile", "show the transistor"),
    (
        "parts",
        "parts [4|5]",
        "part values, codes and colour bands",
    ),
    (
        "predict",
        "predict",
        "operating point, estimate, gain, corner, power",
    ),
    ("hash", "hash", "design hash of the stage and transistor"),
    (
        "digest",
        "digest",
        "settings digest: stage, transistor, test ambient, meter and inputs",
    ),
    (
        "requirement",
        "requirement [NAME VALUE]",
        "show or set the requirement",
    ),
    (
        "design",
        "design",
        "candidate part lists for the requirement",
    ),
    ("pick", "pick N", "take candidate N as the stage"),
    (
        "spread",
        "spread [RUNS] [SEED]",
        "worst case and Monte Carlo spread (runs 1..2000)",
    ),
    (
        "limits",
        "limits",
        "pass windows per node at the nominal supply",
    ),
    (
        "meter",
        "meter [gain P% | offset V | divider P%]",
        "meter and jig accuracy",
    ),
    (
        "measure",
        "measure [SAMPLES]",
        "read the nodes with the jig (1..1024 averaged)",
    ),
    (
        "check",
        "check VCC VB VE VC",
        "judge typed readings; the likely fault when it fails",
    ),
    ("test", "test [SAMPLES]", "measure, then check"),
    (
        "diagnose",
        "diagnose",
        "likely faults of the last board, again",
    ),
    ("readings", "readings", "show the last readings"),
    (
        "calibrate",
        "calibrate [CH low V | CH high V | gain F KNOWN | reset]",
        "jig calibration: two points per channel, the signal path against a known gain",
    ),
    (
        "inject",
        "inject PART MODE | none (PART also cin cout ce)",
        "emulated jig: make the board faulty",
    ),
    ("lock", "lock PIN", "lock editing of the stage and limits"),
    ("unlock", "unlock PIN", "unlock editing"),
    (
        "echo",
        "echo on|off",
        "echo typed characters (for terminals)",
    ),
    (
        "mode",
        "mode [machine|human]",
        "key=value data lines in SI units, or text",
    ),
    ("save", "save", "keep the settings and calibration"),
    (
        "keep",
        "keep NAME",
        "keep the stage and settings on the unit as NAME",
    ),
    ("designs", "designs", "list the designs kept on the unit"),
    (
        "choose",
        "choose NAME",
        "a kept design becomes the stage (also at power-up)",
    ),
    ("forget", "forget NAME", "remove a kept design"),
];

/// The safety cautions shown by `help`.
pub const SAFETY: [&str; 4] = [
    "Safety: de-energise the board before changing probes or parts.",
    "Keep jig inputs within their rated range.",
    "No mains-connected circuits without isolation.",
    "Local codes and licensed practice take precedence.",
];

/// A number in SI base units for machine data lines: plain decimal from 1e-3 to 1e6, otherwise
/// exponent form; `none` for a missing or non-finite value. Parses back exactly.
pub struct Num(pub f64);

impl fmt::Display for Num {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = self.0;
        if !v.is_finite() {
            f.write_str("none")
        } else if v == 0.0 {
            f.write_str("0")
        } else {
            Full(v).fmt(f)
        }
    }
}

/// A name in capitals.
pub(super) struct Upper<'a>(pub(super) &'a str);

impl fmt::Display for Upper<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for c in self.0.chars() {
            fmt::Write::write_char(f, c.to_ascii_uppercase())?;
        }
        Ok(())
    }
}

/// An optional number for machine data lines.
pub(super) struct Opt(pub(super) Option<f64>);

impl fmt::Display for Opt {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            Some(v) => Num(v).fmt(f),
            None => f.write_str("none"),
        }
    }
}

/// A value with unit for people, or `none`.
pub(super) struct Human(pub(super) Option<f64>, pub(super) &'static str);

impl fmt::Display for Human {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            Some(v) => Eng::new(v, self.1).fmt(f),
            None => f.write_str("none"),
        }
    }
}

/// A tolerance (fraction) as a percentage for people.
pub(super) struct Pct(pub(super) f64);

impl fmt::Display for Pct {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} %", Num(self.0 * 100.0))
    }
}

fn cap_name(c: Capacitor) -> &'static str {
    match c {
        Capacitor::Cin => "CIN",
        Capacitor::Cout => "COUT",
        Capacitor::Ce => "CE",
    }
}

fn lower(name: &str) -> Text {
    let mut t = Text::default();
    for ch in name.chars() {
        let _ = t.0.push(ch.to_ascii_lowercase());
    }
    t
}

/// The refusal of a design-search command by a unit built without them (core feature
/// `synthesis`, left out of the instrument's budget build).
#[cfg(not(feature = "synthesis"))]
fn no_synthesis(command: &str) -> Fail {
    Fail::new(
        Code::NotSupported,
        format_args!(
            "{command}: this unit does not search for designs (left out to fit its flash): run \
             biasjig design on a PC and send the stage (biasjig station does)"
        ),
    )
}

/// The refusal of a command a unit was built without (a core feature left out of the
/// instrument's budget build): what it does not do and where to do it instead.
#[cfg(any(
    not(feature = "spread"),
    not(feature = "kept-designs"),
    not(feature = "signal-test")
))]
fn not_here(command: &str, what: &str, instead: &str) -> Fail {
    Fail::new(
        Code::NotSupported,
        format_args!(
            "{command}: this unit does not {what} (left out to fit its flash): {instead}, or use \
             the full image"
        ),
    )
}

/// The refusal of the kept-design commands (core feature `kept-designs`).
#[cfg(not(feature = "kept-designs"))]
fn no_kept(command: &str) -> Fail {
    not_here(
        command,
        "keep designs by name",
        "keep designs on a PC (biasjig station sends the stage)",
    )
}

fn jig_fail(e: JigError) -> Fail {
    match e {
        JigError::NotSupported => Fail::new(
            Code::NotSupported,
            format_args!("{e}: this unit has no jig; type the readings with check VCC VB VE VC"),
        ),
        _ => Fail::new(Code::Jig, format_args!("{e}")),
    }
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    pub(super) fn editable(&self) -> Result<(), Fail> {
        if self.is_locked() {
            Err(Fail::new(
                Code::Locked,
                format_args!("locked: unlock PIN to change this"),
            ))
        } else {
            Ok(())
        }
    }

    #[inline(never)]
    pub(super) fn save_settings(&mut self) -> Result<(), Fail> {
        let mut rec = [0u8; RECORD_LEN];
        self.settings.encode(&mut rec);
        self.store
            .save(Slot::Settings, &rec)
            .map_err(|e| Fail::new(Code::Store, format_args!("settings not kept: {e}")))
    }

    #[inline(never)]
    fn save_calibration(&mut self) -> Result<(), Fail> {
        let mut rec = [0u8; RECORD_LEN];
        record::encode_calibration(&self.calibration, &mut rec);
        self.store
            .save(Slot::Calibration, &rec)
            .map_err(|e| Fail::new(Code::Store, format_args!("calibration not kept: {e}")))
    }

    /// Run one parsed command.
    pub(super) fn exec<W: Write>(&mut self, cmd: Command<'_>, r: &mut Reply<'_, W>) -> Outcome {
        match cmd {
            Command::Nothing => Ok(None),
            Command::Help(topic) => help(topic, r),
            Command::Identify => {
                let id = &self.identity;
                r.raw(format_args!(
                    "{},{},{},{}",
                    id.maker, id.model, id.serial, id.firmware
                ));
                Ok(None)
            }
            Command::Reset => self.reset(),
            Command::Stage => {
                self.show_stage(r);
                Ok(None)
            }
            Command::Set(s) => {
                self.editable()?;
                self.set(s)?;
                self.last = None;
                self.settings.design = None;
                self.warn_setting(r);
                Ok(None)
            }
            Command::Profile => {
                self.show_profile(r);
                Ok(None)
            }
            #[cfg(feature = "spread")]
            Command::Parts(count) => {
                self.show_parts(count, r);
                Ok(None)
            }
            #[cfg(not(feature = "spread"))]
            Command::Parts(_) => Err(not_here(
                "parts",
                "list the parts here",
                "see the parts on a PC (biasjig design lists them)",
            )),
            #[cfg(feature = "analysis")]
            Command::Predict => self.predict(r),
            #[cfg(not(feature = "analysis"))]
            Command::Predict => Err(Fail::new(
                Code::NotSupported,
                format_args!(
                    "predict: this unit does not analyse the stage (left out to fit its flash): \
                     run biasjig analyze on a PC; limits, check and test work here"
                ),
            )),
            Command::Hash => {
                let h = self.design_hash();
                if r.machine() {
                    r.data(format_args!("hash={h:016x}"));
                } else {
                    r.data(format_args!("design hash {h:016x}"));
                }
                Ok(None)
            }
            Command::Digest => {
                let st = &self.settings;
                let d = crate::settings::digest(&st.stage, &st.profile, &st.test_settings());
                if r.machine() {
                    r.data(format_args!("digest={d}"));
                } else {
                    r.data(format_args!("settings digest {d}"));
                }
                Ok(None)
            }
            #[cfg(not(feature = "synthesis"))]
            Command::Requirement(_) => Err(no_synthesis("requirement")),
            #[cfg(not(feature = "synthesis"))]
            Command::Design => Err(no_synthesis("design")),
            #[cfg(not(feature = "synthesis"))]
            Command::Pick(_) => Err(no_synthesis("pick")),
            #[cfg(feature = "synthesis")]
            Command::Requirement(None) => {
                self.show_requirement(r);
                Ok(None)
            }
            #[cfg(feature = "synthesis")]
            Command::Requirement(Some(set)) => {
                self.editable()?;
                self.set_requirement(set)
            }
            #[cfg(feature = "synthesis")]
            Command::Design => {
                self.editable()?;
                self.design(r)
            }
            #[cfg(feature = "synthesis")]
            Command::Pick(n) => {
                self.editable()?;
                self.pick(n)
            }
            #[cfg(feature = "spread")]
            Command::Spread(runs, seed) => self.spread(runs, seed, r),
            #[cfg(not(feature = "spread"))]
            Command::Spread(..) => Err(not_here(
                "spread",
                "compute the spread",
                "run biasjig spread on a PC",
            )),
            Command::Limits => self.show_limits(r),
            Command::Meter(None) => {
                self.show_meter(r);
                Ok(None)
            }
            Command::Meter(Some(m)) => {
                self.editable()?;
                self.set_meter(m)?;
                self.last = None;
                self.settings.design = None;
                Ok(None)
            }
            Command::Measure(n) => self.cmd_measure(n, r),
            Command::Check(rd, text) => {
                // Checked by the parser already.
                let tones = super::parse::tones(text).unwrap_or_default();
                self.cmd_judge(rd, &tones, Source::Typed, r)
            }
            Command::Test(n) => self.cmd_test(n, r),
            Command::Diagnose => self.diagnose(r),
            Command::Readings => match self.readings {
                Some((rd, src)) => {
                    show_readings(&rd, src, r);
                    Ok(None)
                }
                None => Err(Fail::new(
                    Code::NoReadings,
                    format_args!("no readings yet: measure, or check VCC VB VE VC"),
                )),
            },
            Command::Calibrate(step) => self.calibrate(step, r),
            Command::Inject(f) => {
                self.jig.inject(f).map_err(jig_fail)?;
                Ok(None)
            }
            Command::InjectCapacitor(c, state) => {
                self.jig.inject_capacitor(c, state).map_err(jig_fail)?;
                Ok(None)
            }
            Command::Lock(pin) => self.lock(pin),
            Command::Unlock(pin) => self.unlock(pin),
            Command::Echo(on) => {
                self.echo = on;
                Ok(None)
            }
            Command::Mode(None) => {
                let m = match self.mode {
                    Mode::Human => "human",
                    Mode::Machine => "machine",
                };
                if r.machine() {
                    r.data(format_args!("mode={m}"));
                } else {
                    r.data(format_args!("mode {m}"));
                }
                Ok(None)
            }
            Command::Mode(Some(m)) => {
                self.mode = m;
                Ok(None)
            }
            Command::Save => {
                self.save_settings()?;
                self.save_calibration()?;
                Ok(None)
            }
            #[cfg(feature = "kept-designs")]
            Command::Keep(name) => self.keep(name),
            #[cfg(feature = "kept-designs")]
            Command::Designs => self.list_designs(r),
            #[cfg(feature = "kept-designs")]
            Command::Choose(name) => self.choose(name),
            #[cfg(feature = "kept-designs")]
            Command::Forget(name) => self.forget(name),
            #[cfg(not(feature = "kept-designs"))]
            Command::Keep(_) => Err(no_kept("keep")),
            #[cfg(not(feature = "kept-designs"))]
            Command::Designs => Err(no_kept("designs")),
            #[cfg(not(feature = "kept-designs"))]
            Command::Choose(_) => Err(no_kept("choose")),
            #[cfg(not(feature = "kept-designs"))]
            Command::Forget(_) => Err(no_kept("forget")),
        }
    }

    #[inline(never)]
    fn reset(&mut self) -> Outcome {
        self.editable()?;
        self.settings = Self::defaults_for(&self.jig);
        self.readings = None;
        self.last = None;
        self.requirement = super::default_requirement();
        self.candidates.clear();
        self.cal_low = [None; 4];
        Ok(None)
    }

    #[inline(never)]
    fn lock(&mut self, pin: super::parse::Pin) -> Outcome {
        if self.is_locked() {
            return Err(Fail::new(Code::Locked, format_args!("already locked")));
        }
        self.settings.pin = Some(pin);
        self.settings.pin_failures = 0;
        match self.save_settings() {
            Ok(()) => Ok(Some(Text::of(format_args!("locked")))),
            Err(_) => Ok(Some(Text::of(format_args!(
                "locked until power-off (not kept)"
            )))),
        }
    }

    #[inline(never)]
    fn cmd_measure<W: Write>(&mut self, n: u16, r: &mut Reply<'_, W>) -> Outcome {
        let rd = self.measure(n)?;
        show_readings(&rd, Source::Measured, r);
        Ok(None)
    }

    #[inline(never)]
    fn cmd_judge<W: Write>(
        &mut self,
        rd: Readings,
        tones: &super::parse::Tones,
        src: Source,
        r: &mut Reply<'_, W>,
    ) -> Outcome {
        self.judge(rd, tones, src)?;
        self.show_check(r);
        Ok(None)
    }

    /// `test`: the DC nodes first, then the gain at the two test frequencies the signal test
    /// proposes for the design (when the stage has a load and the jig can drive a tone).
    #[inline(never)]
    fn cmd_test<W: Write>(&mut self, n: u16, r: &mut Reply<'_, W>) -> Outcome {
        let rd = self.measure(n)?;
        #[cfg_attr(not(feature = "signal-test"), expect(unused_mut))]
        let mut tones = super::parse::Tones::new();
        #[cfg(feature = "signal-test")]
        if self.settings.stage.rl.is_some() {
            let st = &self.settings;
            if let Ok(p) = crate::signaltest::propose(
                &st.stage,
                &st.profile,
                &st.variation(),
                &st.test_settings().signal,
            ) {
                for f in [p.midband, p.poles] {
                    match self.jig.gain(f) {
                        Ok(gain) => {
                            let _ = tones.push(crate::signaltest::ToneReading { f, gain });
                        }
                        Err(JigError::NotSupported) => break,
                        Err(e) => return Err(jig_fail(e)),
                    }
                }
            }
        }
        self.cmd_judge(rd, &tones, Source::Measured, r)
    }

    #[inline(never)]
    fn set(&mut self, s: Setting) -> Outcome {
        let mut next: Settings = self.settings;
        let st = &mut next.stage;
        let pr = &mut next.profile;
        let with_tol = |p: &mut Part, v: f64, tol: Option<f64>| {
            p.value = v;
            if let Some(t) = tol {
                p.tol = t;
            }
        };
        match s {
            Setting::Vcc(v, tol) => with_tol(&mut st.vcc, v, tol),
            Setting::Resistor(which, v, tol) => with_tol(st.part_mut(which), v, tol),
            Setting::Tolerance(t) => {
                for which in Resistor::ALL {
                    st.part_mut(which).tol = t;
                }
            }
            Setting::Load(v) => st.rl = v,
            Setting::Source(v) => st.rs = v,
            Setting::Capacitor(which, v, tol) => {
                let slot = match which {
                    Capacitor::Cin => &mut st.cin,
                    Capacitor::Cout => &mut st.cout,
                    Capacitor::Ce => &mut st.ce,
                };
                let old_tol = slot.map_or(0.20, |p| p.tol);
                *slot = v.map(|v| Part::new(v, tol.unwrap_or(old_tol)));
            }
            Setting::Polarity(p) => st.polarity = p,
            Setting::Temp(t) | Setting::TempMin(t) | Setting::TempMax(t)
                if !(t.is_finite() && (-55.0..=150.0).contains(&t)) =>
            {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("temp: {}: allowed -55 to 150 °C", Num(t)),
                ));
            }
            Setting::Temp(t) => {
                next.temp_c = t;
                next.temp_min_c = t;
                next.temp_max_c = t;
            }
            Setting::TempMin(t) if t > next.temp_c => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!(
                        "temp-min: {}: must be at most the ambient {} °C",
                        Num(t),
                        Num(next.temp_c)
                    ),
                ));
            }
            Setting::TempMax(t) if t < next.temp_c => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!(
                        "temp-max: {}: must be at least the ambient {} °C",
                        Num(t),
                        Num(next.temp_c)
                    ),
                ));
            }
            Setting::TempMin(t) => next.temp_min_c = t,
            Setting::TempMax(t) => next.temp_max_c = t,
            Setting::Beta(b) => {
                pr.beta_min = b;
                pr.beta_typ = b;
                pr.beta_max = b;
            }
            Setting::BetaMin(b) => pr.beta_min = b,
            Setting::BetaMax(b) => pr.beta_max = b,
            Setting::BetaRev(b) => pr.beta_rev = b,
            Setting::BetaTc(t) => pr.beta_tc = t,
            Setting::Vbe(v) => {
                if !(0.2..=1.2).contains(&v) {
                    return Err(Fail::new(
                        Code::Range,
                        format_args!("vbe: {}: allowed 0.2 V to 1.2 V", Num(v)),
                    ));
                }
                pr.is_25 = is_from_vbe(v);
            }
            Setting::Is(v) => pr.is_25 = v,
            Setting::Early(v) => pr.early = v,
            Setting::VceSat(v) => pr.vce_sat = v,
            Setting::PowerRating(v) => pr.power_25 = v,
            Setting::TjMax(v) => pr.tj_max = v,
            Setting::InputR(v) => next.inputs.r = v,
            Setting::Inputs(m) => next.inputs.mode = m,
        }
        next.stage
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        next.profile
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        next.test_settings()
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        self.settings = next;
        Ok(None)
    }

    /// After `set`: a warning line when the stage is not forward active at its nominal point
    /// (it then gets no windows) or a tolerance is unusual.
    #[inline(never)]
    fn warn_setting<W: Write>(&self, r: &mut Reply<'_, W>) {
        use crate::settings::{UNUSUAL_SUPPLY_TOL, UNUSUAL_TOL};
        let st = &self.settings;
        match crate::judge::nominal_region(&st.stage, &st.profile, &st.test_settings()) {
            Ok(crate::solve::Region::Active) => {}
            Ok(region) => {
                if r.machine() {
                    r.data(format_args!("warning=not_active region={}", region.name()));
                } else {
                    r.data(format_args!(
                        "warning: the stage is not forward active at its nominal point (region: \
                         {}): limits, check and test refuse it until the bias is changed",
                        region.name()
                    ));
                }
            }
            Err(e) => r.data(format_args!(
                "warning: the nominal point does not solve: {e}"
            )),
        }
        let supply = st.stage.vcc.tol;
        if supply > UNUSUAL_SUPPLY_TOL || supply == 0.0 {
            if r.machine() {
                r.data(format_args!(
                    "warning=unusual_tolerance part=VCC tol={}",
                    Num(supply)
                ));
            } else {
                r.data(format_args!(
                    "warning: supply tolerance {} is unusual (a bench supply is set to within a \
                     few %; 0 % refuses any supply not exactly nominal)",
                    Pct(supply)
                ));
            }
        }
        for which in Resistor::ALL {
            let t = st.stage.part(which).tol;
            if t > UNUSUAL_TOL {
                if r.machine() {
                    r.data(format_args!(
                        "warning=unusual_tolerance part={} tol={}",
                        which.name(),
                        Num(t)
                    ));
                } else {
                    r.data(format_args!(
                        "warning: {} tolerance {} is unusual for a bias resistor (1 % to 10 %)",
                        which.name(),
                        Pct(t)
                    ));
                }
            }
        }
    }

    #[inline(never)]
    fn set_meter(&mut self, m: MeterSetting) -> Outcome {
        use crate::settings::{DIVIDER_TOL_MAX, METER_GAIN_MAX, METER_OFFSET_MAX};
        let meter = &mut self.settings.meter;
        match m {
            MeterSetting::Gain(g) if g <= METER_GAIN_MAX => meter.gain_error = g,
            MeterSetting::Offset(v) if v <= METER_OFFSET_MAX => meter.offset = v,
            MeterSetting::Divider(d) if d <= DIVIDER_TOL_MAX => meter.divider_tol = d,
            MeterSetting::Gain(g) => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("gain: {}: allowed 0 to 20 %", Pct(g)),
                ))
            }
            MeterSetting::Offset(v) => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("offset: {}: allowed 0 to 1 V", Num(v)),
                ))
            }
            MeterSetting::Divider(d) => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("divider: {}: allowed 0 to 10 %", Pct(d)),
                ))
            }
        }
        Ok(None)
    }

    #[inline(never)]
    pub(super) fn measure(&mut self, samples: u16) -> Result<Readings, Fail> {
        let rd = self.jig.measure(samples).map_err(jig_fail)?;
        if ![rd.vcc, rd.vb, rd.ve, rd.vc].iter().all(|v| v.is_finite()) {
            return Err(Fail::new(
                Code::Jig,
                format_args!("the jig gave a reading that is not a number"),
            ));
        }
        self.readings = Some((rd, Source::Measured));
        Ok(rd)
    }

    #[inline(never)]
    fn unlock(&mut self, pin: super::parse::Pin) -> Outcome {
        let Some(stored) = self.settings.pin else {
            return Ok(Some(Text::of(format_args!("not locked"))));
        };
        let now = self.clock.now_ms();
        if now < self.retry_at_ms {
            let wait = (self.retry_at_ms - now).div_ceil(1000);
            return Err(Fail::new(
                Code::Wait,
                format_args!("too many wrong PINs: wait {wait} s"),
            ));
        }
        if stored == pin {
            self.settings.pin = None;
            self.settings.pin_failures = 0;
            self.retry_at_ms = 0;
            let _ = self.save_settings();
            return Ok(Some(Text::of(format_args!("unlocked"))));
        }
        self.settings.pin_failures = self.settings.pin_failures.saturating_add(1);
        let n = self.settings.pin_failures;
        let _ = self.save_settings();
        if n >= PIN_FREE_TRIES {
            let delay = self.backoff_ms();
            self.retry_at_ms = now.saturating_add(delay);
            Err(Fail::new(
                Code::Pin,
                format_args!(
                    "wrong PIN ({n} in a row): next try in {} s",
                    delay.div_ceil(1000)
                ),
            ))
        } else {
            Err(Fail::new(
                Code::Pin,
                format_args!("wrong PIN ({n} in a row)"),
            ))
        }
    }

    #[inline(never)]
    fn calibrate<W: Write>(&mut self, step: CalibrateStep, r: &mut Reply<'_, W>) -> Outcome {
        match step {
            CalibrateStep::Show => {
                for c in Channel::ALL {
                    let k = self.calibration.get(c);
                    let pending = self.cal_low.get(c.index()).copied().flatten().is_some();
                    if r.machine() {
                        r.data(format_args!(
                            "channel={} gain={} offset={} low_taken={}",
                            c.name(),
                            Num(k.gain),
                            Num(k.offset),
                            u8::from(pending)
                        ));
                    } else {
                        r.data(format_args!(
                            "{:<4} gain {}  offset {}{}",
                            c.name(),
                            Fixed(k.gain, 6),
                            Eng::new(k.offset, "V"),
                            if pending { "  (low point taken)" } else { "" }
                        ));
                    }
                }
                if r.machine() {
                    r.data(format_args!(
                        "signal load_over_source={}",
                        Num(self.calibration.signal)
                    ));
                } else {
                    r.data(format_args!(
                        "signal path: load input reads {} of the source input",
                        Fixed(self.calibration.signal, 6)
                    ));
                }
                Ok(None)
            }
            #[cfg(feature = "signal-test")]
            CalibrateStep::Gain(f, known) => self.calibrate_gain(f, known, r),
            #[cfg(not(feature = "signal-test"))]
            CalibrateStep::Gain(..) => Err(not_here(
                "calibrate gain",
                "read gains",
                "the DC channels calibrate here",
            )),
            CalibrateStep::Low(c, volts) => {
                self.editable()?;
                let raw = self.jig.raw(c, CAL_SAMPLES).map_err(jig_fail)?;
                if let Some(slot) = self.cal_low.get_mut(c.index()) {
                    *slot = Some((volts, raw));
                }
                Ok(Some(Text::of(format_args!(
                    "low point of {} taken; apply the high voltage, then calibrate {} high V",
                    c.name(),
                    c.name()
                ))))
            }
            CalibrateStep::High(c, volts) => {
                self.editable()?;
                let Some((low, raw_low)) = self.cal_low.get(c.index()).copied().flatten() else {
                    return Err(Fail::new(
                        Code::Usage,
                        format_args!("calibrate {} low V first", c.name()),
                    ));
                };
                let raw_high = self.jig.raw(c, CAL_SAMPLES).map_err(jig_fail)?;
                let k =
                    ChannelCal::from_points(low, raw_low, volts, raw_high).ok_or_else(|| {
                        Fail::new(
                            Code::Value,
                            format_args!(
                            "{}: points must be at least 0.1 V apart and give a gain of 0.5 to 2",
                            c.name()
                        ),
                        )
                    })?;
                self.calibration.set(c, k);
                if let Some(slot) = self.cal_low.get_mut(c.index()) {
                    *slot = None;
                }
                self.jig
                    .set_calibration(&self.calibration)
                    .map_err(jig_fail)?;
                self.save_calibration()?;
                if r.machine() {
                    r.data(format_args!(
                        "channel={} gain={} offset={}",
                        c.name(),
                        Num(k.gain),
                        Num(k.offset)
                    ));
                } else {
                    r.data(format_args!(
                        "{} gain {}  offset {}",
                        c.name(),
                        Fixed(k.gain, 6),
                        Eng::new(k.offset, "V")
                    ));
                }
                Ok(None)
            }
            CalibrateStep::Reset => {
                self.editable()?;
                self.calibration = super::Calibration::default();
                self.cal_low = [None; 4];
                self.jig
                    .set_calibration(&self.calibration)
                    .map_err(jig_fail)?;
                self.save_calibration()?;
                Ok(None)
            }
        }
    }

    /// `calibrate gain F KNOWN`: read the gain of the reference fitted in the board's place and
    /// keep the signal path's correction that makes it read `known`.
    #[inline(never)]
    #[cfg(feature = "signal-test")]
    fn calibrate_gain<W: Write>(&mut self, f: f64, known: f64, r: &mut Reply<'_, W>) -> Outcome {
        self.editable()?;
        let measured = self.jig.gain(f).map_err(jig_fail)?;
        let k = self
            .calibration
            .signal_from(measured, known)
            .ok_or_else(|| {
                Fail::new(
                    Code::Value,
                    format_args!(
                        "gain: read {} through a reference of {}: the correction must be 0.5 to 2 \
                     (is the reference fitted?)",
                        Fixed(measured, 4),
                        Fixed(known, 4)
                    ),
                )
            })?;
        let mut cal = self.calibration;
        cal.signal = k;
        self.jig.set_calibration(&cal).map_err(jig_fail)?;
        self.calibration = cal;
        self.save_calibration()?;
        if r.machine() {
            r.data(format_args!("signal load_over_source={}", Num(k)));
        } else {
            r.data(format_args!(
                "signal path: load input reads {} of the source input",
                Fixed(k, 6)
            ));
        }
        Ok(None)
    }

    #[inline(never)]
    fn show_stage<W: Write>(&self, r: &mut Reply<'_, W>) {
        let s = &self.settings.stage;
        let pol = match s.polarity {
            Polarity::Npn => "npn",
            Polarity::Pnp => "pnp",
        };
        let caps = [
            (Capacitor::Cin, s.cin),
            (Capacitor::Cout, s.cout),
            (Capacitor::Ce, s.ce),
        ];
        if r.machine() {
            r.data(format_args!(
                "polarity={pol} vcc={} vcc_tol={} temp={} temp_min={} temp_max={}",
                Num(s.vcc.value),
                Num(s.vcc.tol),
                Num(self.settings.temp_c),
                Num(self.settings.temp_min_c),
                Num(self.settings.temp_max_c)
            ));
            for which in Resistor::ALL {
                let p = s.part(which);
                let n = lower(which.name());
                r.data(format_args!(
                    "{0}={1} {0}_tol={2}",
                    n.as_str(),
                    Num(p.value),
                    Num(p.tol)
                ));
            }
            r.data(format_args!("rl={} rs={}", Opt(s.rl), Num(s.rs)));
            for (c, p) in caps {
                let n = lower(cap_name(c));
                r.data(format_args!(
                    "{0}={1} {0}_tol={2}",
                    n.as_str(),
                    Opt(p.map(|p| p.value)),
                    Opt(p.map(|p| p.tol))
                ));
            }
            r.data(format_args!(
                "locked={} hash={:016x} design={}",
                u8::from(self.is_locked()),
                self.design_hash(),
                self.settings.design.as_ref().map_or("none", |n| n.as_str())
            ));
        } else {
            r.data(format_args!(
                "{}  VCC {} ±{}  ambient {} °C (range {} to {} °C)",
                if s.polarity == Polarity::Npn {
                    "NPN"
                } else {
                    "PNP"
                },
                Eng::new(s.vcc.value, "V"),
                Pct(s.vcc.tol),
                Num(self.settings.temp_c),
                Num(self.settings.temp_min_c),
                Num(self.settings.temp_max_c)
            ));
            for which in Resistor::ALL {
                let p = s.part(which);
                r.data(format_args!(
                    "{:<4} {} ±{}",
                    which.name(),
                    Eng::new(p.value, "Ω"),
                    Pct(p.tol)
                ));
            }
            r.data(format_args!("RL   {}", Human(s.rl, "Ω")));
            r.data(format_args!("RS   {}", Eng::new(s.rs, "Ω")));
            for (c, p) in caps {
                match p {
                    Some(p) => r.data(format_args!(
                        "{:<4} {} ±{}",
                        cap_name(c),
                        Eng::new(p.value, "F"),
                        Pct(p.tol)
                    )),
                    None => r.data(format_args!("{:<4} ideal", cap_name(c))),
                }
            }
            r.data(format_args!(
                "{}  design hash {:016x}  kept as {}",
                if self.is_locked() {
                    "locked"
                } else {
                    "unlocked"
                },
                self.design_hash(),
                self.settings.design.as_ref().map_or("-", |n| n.as_str())
            ));
        }
    }

    #[inline(never)]
    fn show_profile<W: Write>(&self, r: &mut Reply<'_, W>) {
        let p = &self.settings.profile;
        if r.machine() {
            r.data(format_args!(
                "beta_min={} beta_typ={} beta_max={} beta_rev={} beta_tc={}",
                Num(p.beta_min),
                Num(p.beta_typ),
                Num(p.beta_max),
                Num(p.beta_rev),
                Num(p.beta_tc)
            ));
            r.data(format_args!(
                "is={} vbe={} early={} vce_sat={} power_rating={} tj_max={}",
                Num(p.is_25),
                Num(p.vbe_1ma()),
                Opt(p.early),
                Num(p.vce_sat),
                Num(p.power_25),
                Num(p.tj_max)
            ));
        } else {
            r.data(format_args!(
                "hFE {} / {} / {} (min/typ/max at 25 °C), reverse {}, tc {} per °C",
                Num(p.beta_min),
                Num(p.beta_typ),
                Num(p.beta_max),
                Num(p.beta_rev),
                Pct(p.beta_tc)
            ));
            r.data(format_args!(
                "IS {} (VBE {} at 1 mA), Early {}",
                Eng::new(p.is_25, "A"),
                Eng::new(p.vbe_1ma(), "V"),
                Human(p.early, "V")
            ));
            r.data(format_args!(
                "VCE(sat) {}, rating {} at 25 °C, to zero at {} °C",
                Eng::new(p.vce_sat, "V"),
                Eng::new(p.power_25, "W"),
                Num(p.tj_max)
            ));
        }
    }

    #[cfg(feature = "spread")]
    #[inline(never)]
    fn show_parts<W: Write>(&self, count: BandCount, r: &mut Reply<'_, W>) {
        let s = &self.settings.stage;
        for which in Resistor::ALL {
            let p = s.part(which);
            let mut bands = Text::default();
            let why = match colour_bands(p.value, p.tol, count) {
                Ok(b) => {
                    let sep = if r.machine() { "," } else { " " };
                    for (i, c) in b.iter().enumerate() {
                        let _ = fmt::Write::write_fmt(
                            &mut bands,
                            format_args!("{}{}", if i == 0 { "" } else { sep }, c.name()),
                        );
                    }
                    None
                }
                Err(e) => {
                    let _ = fmt::Write::write_str(&mut bands, "none");
                    Some(e)
                }
            };
            if r.machine() {
                r.data(format_args!(
                    "part={} value={} tol={} code={} bands={}",
                    which.name(),
                    Num(p.value),
                    Num(p.tol),
                    resistor_code(p.value),
                    bands.as_str()
                ));
            } else {
                match why {
                    None => r.data(format_args!(
                        "{:<4} {:<6} ±{:<6} {}",
                        which.name(),
                        resistor_code(p.value),
                        Pct(p.tol),
                        bands.as_str()
                    )),
                    Some(e) => r.data(format_args!(
                        "{:<4} {:<6} ±{:<6} no bands: {e}",
                        which.name(),
                        resistor_code(p.value),
                        Pct(p.tol)
                    )),
                }
            }
        }
        for (c, p) in [
            (Capacitor::Cin, s.cin),
            (Capacitor::Cout, s.cout),
            (Capacitor::Ce, s.ce),
        ] {
            match (p, r.machine()) {
                (Some(p), true) => r.data(format_args!(
                    "part={} value={} tol={} code={}",
                    cap_name(c),
                    Num(p.value),
                    Num(p.tol),
                    capacitor_code(p.value)
                )),
                (None, true) => r.data(format_args!("part={} value=none", cap_name(c))),
                (Some(p), false) => r.data(format_args!(
                    "{:<4} {:<6} ±{}",
                    cap_name(c),
                    capacitor_code(p.value),
                    Pct(p.tol)
                )),
                (None, false) => r.data(format_args!("{:<4} ideal", cap_name(c))),
            }
        }
    }

    #[inline(never)]
    fn show_limits<W: Write>(&self, r: &mut Reply<'_, W>) -> Outcome {
        let st = &self.settings;
        let ts = st.test_settings();
        let w = crate::judge::windows(&st.stage, &st.profile, &ts, st.stage.vcc.value)
            .map_err(super::judge::judge_fail)?;
        let l = w.limits;
        let rows = [
            ("vb", l.vb, "V"),
            ("ve", l.ve, "V"),
            ("vc", l.vc, "V"),
            ("vce", l.vce, "V"),
            ("vbe", l.vbe, "V"),
            ("ic", l.ic, "A"),
        ];
        for (name, w, unit) in rows {
            if r.machine() {
                r.data(format_args!(
                    "node={name} low={} high={}",
                    Num(w.low),
                    Num(w.high)
                ));
            } else {
                r.data(format_args!(
                    "{:<4} {} to {}",
                    Upper(name),
                    Eng::new(w.low, unit),
                    Eng::new(w.high, unit)
                ));
            }
        }
        if r.machine() {
            r.data(format_args!(
                "node=supply low={} high={}",
                Num(w.supply.low),
                Num(w.supply.high)
            ));
            r.data(format_args!("vcc={}", Num(l.vcc)));
            r.data(format_args!(
                "ambient min={} max={} input_r={} inputs={}",
                Num(ts.temp_min_c),
                Num(ts.temp_max_c),
                Opt(ts.inputs.r),
                ts.inputs.mode.name()
            ));
        } else {
            r.data(format_args!(
                "VCC  {} to {} (supply window: outside it a board is not judged)",
                Eng::new(w.supply.low, "V"),
                Eng::new(w.supply.high, "V")
            ));
            r.data(format_args!("at VCC {}", Eng::new(l.vcc, "V")));
            let mut inputs = Text::default();
            match ts.inputs.r {
                Some(rin) => {
                    let _ = write!(
                        inputs,
                        "inputs {} to ground, {}",
                        Eng::new(rin, "Ω"),
                        ts.inputs.mode.name()
                    );
                }
                None => {
                    let _ = inputs.write_str("an ideal meter (no inputs modelled)");
                }
            }
            r.data(format_args!(
                "ambient {} to {} °C; {}",
                Num(ts.temp_min_c),
                Num(ts.temp_max_c),
                inputs.as_str()
            ));
        }
        Ok(None)
    }

    #[inline(never)]
    fn show_meter<W: Write>(&self, r: &mut Reply<'_, W>) {
        let m = &self.settings.meter;
        let i = &self.settings.inputs;
        if r.machine() {
            r.data(format_args!(
                "gain={} offset={} divider={} input_r={} inputs={}",
                Num(m.gain_error),
                Num(m.offset),
                Num(m.divider_tol),
                Opt(i.r),
                i.mode.name()
            ));
        } else {
            r.data(format_args!(
                "meter ±{} of reading ±{}, jig divider ±{}",
                Pct(m.gain_error),
                Eng::new(m.offset, "V"),
                Pct(m.divider_tol)
            ));
            match i.r {
                Some(rin) => r.data(format_args!(
                    "measuring inputs {} from each node to ground, {}",
                    Eng::new(rin, "Ω"),
                    i.mode.name()
                )),
                None => r.data(format_args!("measuring inputs: ideal (none modelled)")),
            }
        }
    }

    #[cfg(feature = "analysis")]
    #[inline(never)]
    fn predict<W: Write>(&self, r: &mut Reply<'_, W>) -> Outcome {
        let st = &self.settings;
        let cond = Conditions {
            temp_c: st.temp_c,
            ..Conditions::typical(&st.profile)
        };
        let p = predict(&st.stage, &st.profile, cond)
            .map_err(|e| Fail::new(Code::Solve, format_args!("{e}")))?;
        let op = &p.op;
        let e = &p.estimate;
        let w = &p.warnings;
        let warnings: [(bool, &str); 6] = [
            (w.divider_not_stiff, "divider_not_stiff"),
            (w.saturated, "saturated"),
            (w.cut_off, "cut_off"),
            (w.over_rating, "over_rating"),
            (w.no_emitter_resistor, "no_emitter_resistor"),
            (w.q_point_off_centre, "q_point_off_centre"),
        ];
        let mut list = Text::default();
        for (name, _) in warnings.iter().filter(|(on, _)| *on).map(|(_, n)| (n, ())) {
            let sep = if list.as_str().is_empty() { "" } else { "," };
            let _ = fmt::Write::write_fmt(&mut list, format_args!("{sep}{name}"));
        }
        for (hot, which) in w.resistor_hot.iter().zip(Resistor::ALL) {
            if *hot {
                let sep = if list.as_str().is_empty() { "" } else { "," };
                let _ = fmt::Write::write_fmt(
                    &mut list,
                    format_args!("{sep}hot_{}", lower(which.name()).as_str()),
                );
            }
        }
        if r.machine() {
            r.data(format_args!(
                "vb={} ve={} vc={} vbe={} vce={}",
                Num(op.vb),
                Num(op.ve),
                Num(op.vc),
                Num(op.vbe),
                Num(op.vce),
            ));
            r.data(format_args!(
                "ic={} ib={} ie={} region={}",
                Num(op.ic),
                Num(op.ib),
                Num(op.ie),
                op.region.name()
            ));
            r.data(format_args!(
                "est_vb={} est_ve={} est_vc={} est_ic={} est_vce={}",
                Num(e.vb),
                Num(e.ve),
                Num(e.vc),
                Num(e.ic),
                Num(e.vce)
            ));
            match &p.midband {
                Some(m) => {
                    r.data(format_args!(
                        "gain={} gain_stage={} zin={} zout={}",
                        Num(m.gain),
                        Num(m.gain_stage),
                        Num(m.zin),
                        Num(m.zout),
                    ));
                    r.data(format_args!(
                        "swing_pp={} clips={} f_low={}",
                        Num(m.swing_pp),
                        m.clips.name(),
                        Opt(p.low.f_low)
                    ));
                }
                None => r.data(format_args!("gain=none f_low={}", Opt(p.low.f_low))),
            }
            r.data(format_args!(
                "transistor={} rating={} supply_current={}",
                Num(p.power.transistor),
                Num(p.power.rating),
                Num(p.power.supply_current)
            ));
            r.data(format_args!(
                "warnings={}",
                if list.as_str().is_empty() {
                    "none"
                } else {
                    list.as_str()
                }
            ));
        } else {
            r.data(format_args!(
                "Q-point  VB {}  VE {}  VC {}  ({})",
                Eng::new(op.vb, "V"),
                Eng::new(op.ve, "V"),
                Eng::new(op.vc, "V"),
                op.region.name()
            ));
            r.data(format_args!(
                "         VBE {}  VCE {}  IC {}  IB {}",
                Eng::new(op.vbe, "V"),
                Eng::new(op.vce, "V"),
                Eng::new(op.ic, "A"),
                Eng::new(op.ib, "A")
            ));
            r.data(format_args!(
                "estimate VB {}  VE {}  VC {}  IC {}",
                Eng::new(e.vb, "V"),
                Eng::new(e.ve, "V"),
                Eng::new(e.vc, "V"),
                Eng::new(e.ic, "A")
            ));
            if let Some(m) = &p.midband {
                r.data(format_args!(
                    "gain {} (stage {})  zin {}  zout {}",
                    Fixed(m.gain, 3),
                    Fixed(m.gain_stage, 3),
                    Eng::new(m.zin, "Ω"),
                    Eng::new(m.zout, "Ω")
                ));
                r.data(format_args!(
                    "swing {} peak-to-peak, {} clips first",
                    Eng::new(m.swing_pp, "V"),
                    m.clips.name()
                ));
            }
            r.data(format_args!("low corner {}", Human(p.low.f_low, "Hz")));
            r.data(format_args!(
                "power Q {} of {} rated, supply current {}",
                Eng::new(p.power.transistor, "W"),
                Eng::new(p.power.rating, "W"),
                Eng::new(p.power.supply_current, "A")
            ));
            if !list.as_str().is_empty() {
                r.data(format_args!("warnings: {}", list.as_str()));
            }
        }
        Ok(None)
    }
}

#[inline(never)]
pub(super) fn show_readings<W: Write>(rd: &Readings, src: Source, r: &mut Reply<'_, W>) {
    let src = match src {
        Source::Measured => "measured",
        Source::Typed => "typed",
    };
    if r.machine() {
        r.data(format_args!(
            "vcc={} vb={} ve={} vc={} source={src}",
            Num(rd.vcc),
            Num(rd.vb),
            Num(rd.ve),
            Num(rd.vc)
        ));
    } else {
        r.data(format_args!(
            "VCC {}  VB {}  VE {}  VC {}  ({src})",
            Eng::new(rd.vcc, "V"),
            Eng::new(rd.vb, "V"),
            Eng::new(rd.ve, "V"),
            Eng::new(rd.vc, "V")
        ));
    }
}

#[inline(never)]
fn help<W: Write>(topic: Option<&str>, r: &mut Reply<'_, W>) -> Outcome {
    match topic {
        None => {
            r.data(format_args!("Commands (words are case-insensitive):"));
            for (_, usage, what) in COMMANDS {
                r.data(format_args!("{usage:<40} {what}"));
            }
            for s in SAFETY {
                r.data(format_args!("{s}"));
            }
            Ok(None)
        }
        Some(t) if t.eq_ignore_ascii_case("set") => {
            r.data(format_args!("set NAME VALUE [TOL%]; NAME one of:"));
            r.data(format_args!("{SET_NAMES}"));
            r.data(format_args!(
                "rl, cin, cout, ce, early take `none`; beta sets min, typ and max"
            ));
            Ok(None)
        }
        Some(t) => {
            let found = COMMANDS.iter().find(|(name, _, _)| {
                name.eq_ignore_ascii_case(t)
                    || (t.eq_ignore_ascii_case("*idn?") && *name == "identify")
            });
            match found {
                Some((_, usage, what)) => {
                    r.data(format_args!("{usage:<40} {what}"));
                    Ok(None)
                }
                None => Err(Fail::new(
                    Code::Unknown,
                    format_args!("help: {t}: no such command"),
                )),
            }
        }
    }
}
