//! From a line of text to a [`Command`]: words separated by spaces, the command word first
//! (case-insensitive), values in the engineering grammar of [`crate::units`].

use super::jig::Channel;
use super::Code;
use crate::response::CapState;
use crate::series::{BandCount, Series};
use crate::settings::InputMode;
use crate::signaltest::ToneReading;
use crate::stage::{Capacitor, DeviceFault, Fault, Polarity, Readings, Resistor};
use crate::units::{self, Unit};

/// Most words on one line.
pub const MAX_WORDS: usize = 8;
/// Default number of conversions averaged by `measure` and `test`.
pub const DEFAULT_SAMPLES: u16 = 16;
/// Most conversions averaged by `measure` and `test`.
pub const MAX_SAMPLES: u16 = 1024;
/// Default number of Monte Carlo runs of `spread`.
pub const DEFAULT_RUNS: u32 = 500;
/// Most Monte Carlo runs of `spread` (bounded so that one reply stays within about a second on
/// the instrument).
pub const MAX_RUNS: u32 = 2000;
/// Default seed of `spread`.
pub const DEFAULT_SEED: u64 = 1;

/// Shortest and longest PIN, digits.
pub const PIN_DIGITS: core::ops::RangeInclusive<usize> = 4..=8;

/// One change made by `set`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Setting {
    /// Supply, V, with an optional tolerance (fraction).
    Vcc(f64, Option<f64>),
    /// A bias resistor, Ω, with an optional tolerance (fraction).
    Resistor(Resistor, f64, Option<f64>),
    /// Tolerance of every bias resistor (fraction).
    Tolerance(f64),
    /// Load, Ω (`None`: no load).
    Load(Option<f64>),
    /// Source resistance, Ω.
    Source(f64),
    /// A capacitor, F (`None`: ideal), with an optional tolerance (fraction).
    Capacitor(Capacitor, Option<f64>, Option<f64>),
    /// NPN or PNP.
    Polarity(Polarity),
    /// Ambient, °C (the range collapses to it).
    Temp(f64),
    /// Lowest ambient of the range, °C.
    TempMin(f64),
    /// Highest ambient of the range, °C.
    TempMax(f64),
    /// hFE at 25 °C: min, typ and max all set to it.
    Beta(f64),
    /// Lowest hFE at 25 °C.
    BetaMin(f64),
    /// Highest hFE at 25 °C.
    BetaMax(f64),
    /// Reverse hFE.
    BetaRev(f64),
    /// hFE temperature coefficient, fraction per °C.
    BetaTc(f64),
    /// VBE at 1 mA and 25 °C, V (sets IS).
    Vbe(f64),
    /// IS at 25 °C, A.
    Is(f64),
    /// Early voltage, V (`None`: infinite).
    Early(Option<f64>),
    /// VCE(sat), V.
    VceSat(f64),
    /// Power rating at 25 °C, W.
    PowerRating(f64),
    /// Junction temperature where the derated power reaches zero, °C.
    TjMax(f64),
    /// Input resistance of the measuring inputs from each node read to ground, Ω (`None`: an
    /// ideal meter).
    InputR(Option<f64>),
    /// How the measuring inputs are attached.
    Inputs(InputMode),
}

/// One change made by `requirement NAME VALUE`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ReqSetting {
    /// NPN or PNP.
    Polarity(Polarity),
    /// Supply, V.
    Vcc(f64),
    /// Gain magnitude v(load)/v(source EMF).
    Gain(f64),
    /// Load, Ω (`None`: no load).
    Load(Option<f64>),
    /// Source resistance, Ω.
    Source(f64),
    /// Collector-current budget, A.
    IcMax(f64),
    /// Least undistorted peak-to-peak swing at the load, V.
    Swing(f64),
    /// Highest low corner, Hz (`None`: the design's default).
    FLow(Option<f64>),
    /// Nominal ambient, °C.
    Temp(f64),
    /// Lowest ambient, °C.
    TempMin(f64),
    /// Highest ambient, °C.
    TempMax(f64),
    /// Resistor series.
    Series(Series),
    /// Resistor tolerance, fraction.
    Tol(f64),
    /// Capacitor series.
    CapSeries(Series),
    /// Capacitor tolerance, fraction.
    CapTol(f64),
}

/// The names `requirement NAME VALUE` accepts.
pub const REQUIREMENT_NAMES: &str =
    "polarity vcc gain rl rs ic-max swing f-low temp temp-min temp-max series tol cap-series cap-tol";

#[cfg(feature = "synthesis")]
fn requirement<'a>(name: &'a str, v: &'a str) -> Result<ReqSetting, ParseError<'a>> {
    let n = |s: &str| name.eq_ignore_ascii_case(s);
    let celsius = |v: &'a str| celsius(name, v);
    let series = |v: &'a str| {
        Series::parse(v).map_err(|_| err(Code::Value, name, v, "E3 E6 E12 E24 E48 E96 or E192"))
    };
    Ok(if n("polarity") {
        ReqSetting::Polarity(if v.eq_ignore_ascii_case("npn") {
            Polarity::Npn
        } else if v.eq_ignore_ascii_case("pnp") {
            Polarity::Pnp
        } else {
            return Err(err(Code::Value, name, v, "npn or pnp"));
        })
    } else if n("vcc") {
        ReqSetting::Vcc(value_in(name, v, Unit::Volt)?)
    } else if n("gain") {
        ReqSetting::Gain(value_in(name, v, Unit::Number)?)
    } else if n("rl") {
        ReqSetting::Load(optional_in(name, v, Unit::Ohm)?)
    } else if n("rs") {
        ReqSetting::Source(value_in(name, v, Unit::Ohm)?)
    } else if n("ic-max") {
        ReqSetting::IcMax(value_in(name, v, Unit::Ampere)?)
    } else if n("swing") {
        ReqSetting::Swing(value_in(name, v, Unit::Volt)?)
    } else if n("f-low") {
        ReqSetting::FLow(optional_in(name, v, Unit::Hertz)?)
    } else if n("temp") {
        ReqSetting::Temp(celsius(v)?)
    } else if n("temp-min") {
        ReqSetting::TempMin(celsius(v)?)
    } else if n("temp-max") {
        ReqSetting::TempMax(celsius(v)?)
    } else if n("series") {
        ReqSetting::Series(series(v)?)
    } else if n("tol") {
        ReqSetting::Tol(percent(name, v)?)
    } else if n("cap-series") {
        ReqSetting::CapSeries(series(v)?)
    } else if n("cap-tol") {
        ReqSetting::CapTol(percent(name, v)?)
    } else {
        return Err(err(Code::Value, "requirement", name, REQUIREMENT_NAMES));
    })
}

/// One change made by `meter`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MeterSetting {
    /// Gain error (fraction of the reading).
    Gain(f64),
    /// Offset error, V.
    Offset(f64),
    /// Jig input divider tolerance (fraction).
    Divider(f64),
}

/// What `calibrate` is asked to do.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CalibrateStep {
    /// Show the calibration.
    Show,
    /// Record the low point: `volts` are applied to the channel now.
    Low(Channel, f64),
    /// Record the high point and, with the low point, compute and keep the calibration.
    High(Channel, f64),
    /// Forget the calibration of every channel.
    Reset,
}

/// A PIN: 4 to 8 decimal digits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Pin {
    /// The digits as ASCII.
    pub digits: [u8; 8],
    /// How many digits.
    pub len: u8,
}

impl Pin {
    /// The PIN of a text of 4 to 8 digits.
    pub fn parse(text: &str) -> Option<Pin> {
        let b = text.as_bytes();
        if !PIN_DIGITS.contains(&b.len()) || !b.iter().all(u8::is_ascii_digit) {
            return None;
        }
        let mut pin = Pin {
            digits: [0; 8],
            len: 0,
        };
        for (slot, d) in pin.digits.iter_mut().zip(b) {
            *slot = *d;
            pin.len += 1;
        }
        Some(pin)
    }
}

/// Longest name of a kept design, bytes.
pub const NAME_MAX: usize = 16;

/// The name of a design kept on the unit: 1 to [`NAME_MAX`] letters, digits, `-`, `_` or `.`
/// (ASCII). Names compare without regard to case.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Name {
    /// The name's bytes (ASCII), zero after `len`.
    pub bytes: [u8; NAME_MAX],
    /// How many bytes.
    pub len: u8,
}

impl Name {
    /// The name of a text, if it is one (see [`Name`]).
    pub fn parse(text: &str) -> Option<Name> {
        let b = text.as_bytes();
        if b.is_empty()
            || b.len() > NAME_MAX
            || !b
                .iter()
                .all(|c| c.is_ascii_alphanumeric() || matches!(c, b'-' | b'_' | b'.'))
        {
            return None;
        }
        let mut name = Name::default();
        for (slot, c) in name.bytes.iter_mut().zip(b) {
            *slot = *c;
            name.len += 1;
        }
        Some(name)
    }

    /// The name as text.
    pub fn as_str(&self) -> &str {
        self.bytes
            .get(..usize::from(self.len))
            .and_then(|b| core::str::from_utf8(b).ok())
            .unwrap_or("")
    }

    /// The same name, ignoring case.
    pub fn same(&self, other: &Name) -> bool {
        self.as_str().eq_ignore_ascii_case(other.as_str())
    }
}

impl core::fmt::Display for Name {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Data-line style.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mode {
    /// Text for a person, values with SI prefixes.
    Human,
    /// `key=value` pairs in SI base units, for a program.
    Machine,
}

/// A parsed input line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Command<'a> {
    /// An empty line or a comment (`# ...`): answered `ok` (used to synchronise).
    Nothing,
    /// `help [COMMAND]`.
    Help(Option<&'a str>),
    /// `identify` or `*IDN?`.
    Identify,
    /// `*RST`: settings back to the defaults.
    Reset,
    /// `stage`: show the stage.
    Stage,
    /// `set NAME VALUE [TOL]`.
    Set(Setting),
    /// `profile`: show the transistor.
    Profile,
    /// `parts`: values, codes and colour bands.
    Parts(BandCount),
    /// `predict`: operating point and the rest.
    Predict,
    /// `hash`: the design hash.
    Hash,
    /// `digest`: the settings digest (stage, transistor, test ambient, meter, inputs).
    Digest,
    /// `requirement [NAME VALUE]`.
    Requirement(Option<ReqSetting>),
    /// `design`.
    Design,
    /// `pick N` (1-based).
    Pick(u8),
    /// `spread [RUNS] [SEED]`: Monte Carlo runs and seed.
    Spread(u32, u64),
    /// `limits`.
    Limits,
    /// `meter [gain P | offset V | divider P]`.
    Meter(Option<MeterSetting>),
    /// `measure [SAMPLES]`.
    Measure(u16),
    /// `check VCC VB VE VC [F:G ...]`: DC readings, and the gain readings as typed (read them
    /// with [`tones`]).
    Check(Readings, &'a str),
    /// `test [SAMPLES]`: measure and check.
    Test(u16),
    /// `diagnose`: the likely faults of the last readings.
    Diagnose,
    /// `readings`: the last readings.
    Readings,
    /// `calibrate ...`.
    Calibrate(CalibrateStep),
    /// `inject FAULT | none` (emulated jigs).
    Inject(Option<Fault>),
    /// `inject CIN|COUT|CE open|short|VALUE` (emulated jigs).
    InjectCapacitor(Capacitor, CapState),
    /// `lock PIN`.
    Lock(Pin),
    /// `unlock PIN`.
    Unlock(Pin),
    /// `echo on|off`.
    Echo(bool),
    /// `mode machine|human` (no argument: show).
    Mode(Option<Mode>),
    /// `save`: keep the settings in the store.
    Save,
    /// `keep NAME`: keep the stage and its settings on the unit as a named design.
    Keep(Name),
    /// `designs`: list the kept designs.
    Designs,
    /// `choose NAME`: a kept design becomes the stage (and the one the unit starts with).
    Choose(Name),
    /// `forget NAME`: remove a kept design.
    Forget(Name),
}

/// Gain readings typed with `check`: |v(load)/v(source EMF)| at a test frequency each.
pub type Tones = crate::signaltest::ToneSet;

/// The byte offset of `word` (a slice of `line`) in `line`.
fn offset_in(line: &str, word: &str) -> usize {
    (word.as_ptr() as usize).saturating_sub(line.as_ptr() as usize)
}

/// The gain readings `F:G ...` of a `check` line (F in Hz, G the gain magnitude), at most
/// [`crate::signaltest::MAX_TONES`].
pub fn tones(text: &str) -> Result<Tones, ParseError<'_>> {
    let mut out = Tones::new();
    // Without the signal test no gain reading is taken (the command says so).
    if !cfg!(feature = "signal-test") {
        return match text.split_ascii_whitespace().next() {
            Some(t) => Err(err(
                Code::Usage,
                "ac",
                t,
                "no gain readings in this build (biasjig check --ac)",
            )),
            None => Ok(out),
        };
    }
    for t in text.split_ascii_whitespace() {
        let allowed = "F:G (test frequency in Hz, gain magnitude)";
        let (f, g) = t
            .split_once(':')
            .ok_or(err(Code::Value, "ac", t, allowed))?;
        let reading = ToneReading {
            f: value("ac", f)?,
            gain: value("ac", g)?,
        };
        if crate::signaltest::validate_reading(&reading).is_err() {
            return Err(err(
                Code::Range,
                "ac",
                t,
                "F 0.1 Hz to 100 kHz, G 0 to 100000",
            ));
        }
        out.push(reading)
            .map_err(|_| err(Code::Usage, "ac", t, "at most 4 gain readings"))?;
    }
    Ok(out)
}

/// Why a line is not a command: a code, the field, the offending text and what is allowed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ParseError<'a> {
    /// Error code of the status line.
    pub code: Code,
    /// The command or field concerned.
    pub field: &'a str,
    /// The offending text (may be empty).
    pub value: &'a str,
    /// What is allowed.
    pub allowed: &'static str,
}

impl core::fmt::Display for ParseError<'_> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        if self.value.is_empty() {
            write!(f, "{}: {}", self.field, self.allowed)
        } else {
            write!(f, "{}: {}: {}", self.field, self.value, self.allowed)
        }
    }
}

const VALUE_FORMS: &str = "a value such as 4700, 4.7k, 4k7, 470R, 100n or 2.2e-3";

fn err<'a>(code: Code, field: &'a str, value: &'a str, allowed: &'static str) -> ParseError<'a> {
    ParseError {
        code,
        field,
        value,
        allowed,
    }
}

fn value<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
    units::parse_value(text).map_err(|_| err(Code::Value, field, text, VALUE_FORMS))
}

/// A non-negative value of a field of `unit` (its own unit letters may follow, no other's).
fn value_in<'a>(field: &'a str, text: &'a str, unit: Unit) -> Result<f64, ParseError<'a>> {
    units::parse_value_in(text, unit).map_err(|e| match e {
        units::ValueError::WrongUnit(u) => err(Code::Value, field, text, u.allowed()),
        _ => err(Code::Value, field, text, VALUE_FORMS),
    })
}

/// A value of a field of `unit`, or `none`.
fn optional_in<'a>(
    field: &'a str,
    text: &'a str,
    unit: Unit,
) -> Result<Option<f64>, ParseError<'a>> {
    if text.eq_ignore_ascii_case("none") {
        Ok(None)
    } else {
        value_in(field, text, unit).map(Some)
    }
}

/// A value that may be negative, of a field of `unit` (its own unit letters may follow, another
/// unit's are refused: `1.67mA` is no reading in volts).
fn signed_in<'a>(field: &'a str, text: &'a str, unit: Unit) -> Result<f64, ParseError<'a>> {
    units::parse_signed_in(text, unit).map_err(|e| match e {
        units::ValueError::WrongUnit(u) => err(Code::Value, field, text, u.allowed()),
        _ => err(Code::Value, field, text, VALUE_FORMS),
    })
}

/// A temperature in °C: a number that may be negative, `°C` or `C` may follow; no other unit.
fn celsius<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
    let t = text
        .strip_suffix("°C")
        .or_else(|| text.strip_suffix('C'))
        .unwrap_or(text);
    units::parse_signed_in(t, Unit::Number).map_err(|_| {
        err(
            Code::Value,
            field,
            text,
            "a temperature in °C such as 25, -10 or 55C",
        )
    })
}

fn percent<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
    units::parse_percent(text)
        .map(|p| p / 100.0)
        .map_err(|_| err(Code::Value, field, text, "a percentage such as 5 or 5%"))
}

fn signed_percent<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
    let t = text.strip_suffix('%').unwrap_or(text);
    units::parse_signed(t).map(|p| p / 100.0).map_err(|_| {
        err(
            Code::Value,
            field,
            text,
            "a percentage such as 0.5 or -0.2%",
        )
    })
}

fn count<'a>(field: &'a str, text: Option<&'a str>) -> Result<u16, ParseError<'a>> {
    match text {
        None => Ok(DEFAULT_SAMPLES),
        Some(t) => match t.parse::<u16>() {
            Ok(n) if (1..=MAX_SAMPLES).contains(&n) => Ok(n),
            _ => Err(err(
                Code::Value,
                field,
                t,
                "a whole number of samples from 1 to 1024",
            )),
        },
    }
}

fn resistor(name: &str) -> Option<Resistor> {
    Resistor::ALL
        .into_iter()
        .find(|r| r.name().eq_ignore_ascii_case(name))
}

fn capacitor(name: &str) -> Option<Capacitor> {
    [
        ("cin", Capacitor::Cin),
        ("cout", Capacitor::Cout),
        ("ce", Capacitor::Ce),
    ]
    .into_iter()
    .find(|(n, _)| n.eq_ignore_ascii_case(name))
    .map(|(_, c)| c)
}

/// The names `set` accepts, for the help text and error messages.
pub const SET_NAMES: &str = "vcc r1 r2 rc re1 re2 tol rl rs cin cout ce polarity temp temp-min \
temp-max beta beta-min beta-max beta-rev beta-tc vbe is early vce-sat power-rating tj-max input-r \
inputs";

fn setting<'a>(words: &[&'a str]) -> Result<Setting, ParseError<'a>> {
    let usage = "set NAME VALUE [TOL%], NAME one of the names in `help set`";
    let (name, v, tol) = match words {
        [name, v] => (*name, *v, None),
        [name, v, t] => (*name, *v, Some(*t)),
        _ => return Err(err(Code::Usage, "set", "", usage)),
    };
    let tol = match tol {
        Some(t) => Some(percent(name, t)?),
        None => None,
    };
    let n = |s: &str| name.eq_ignore_ascii_case(s);
    let no_tol = |s: Setting| -> Result<Setting, ParseError<'a>> {
        match tol {
            None => Ok(s),
            Some(_) => Err(err(Code::Usage, name, "", "takes no tolerance")),
        }
    };
    if let Some(r) = resistor(name) {
        return Ok(Setting::Resistor(r, value_in(name, v, Unit::Ohm)?, tol));
    }
    if let Some(c) = capacitor(name) {
        return Ok(Setting::Capacitor(
            c,
            optional_in(name, v, Unit::Farad)?,
            tol,
        ));
    }
    if n("vcc") {
        return Ok(Setting::Vcc(value_in(name, v, Unit::Volt)?, tol));
    }
    let s = if n("tol") {
        Setting::Tolerance(percent(name, v)?)
    } else if n("rl") {
        Setting::Load(optional_in(name, v, Unit::Ohm)?)
    } else if n("rs") {
        Setting::Source(value_in(name, v, Unit::Ohm)?)
    } else if n("polarity") {
        Setting::Polarity(if v.eq_ignore_ascii_case("npn") {
            Polarity::Npn
        } else if v.eq_ignore_ascii_case("pnp") {
            Polarity::Pnp
        } else {
            return Err(err(Code::Value, name, v, "npn or pnp"));
        })
    } else if n("temp") || n("temp-min") || n("temp-max") {
        let t = celsius(name, v)?;
        if n("temp") {
            Setting::Temp(t)
        } else if n("temp-min") {
            Setting::TempMin(t)
        } else {
            Setting::TempMax(t)
        }
    } else if n("beta") {
        Setting::Beta(value_in(name, v, Unit::Number)?)
    } else if n("beta-min") {
        Setting::BetaMin(value_in(name, v, Unit::Number)?)
    } else if n("beta-max") {
        Setting::BetaMax(value_in(name, v, Unit::Number)?)
    } else if n("beta-rev") {
        Setting::BetaRev(value_in(name, v, Unit::Number)?)
    } else if n("beta-tc") {
        Setting::BetaTc(signed_percent(name, v)?)
    } else if n("vbe") {
        Setting::Vbe(value_in(name, v, Unit::Volt)?)
    } else if n("is") {
        Setting::Is(value_in(name, v, Unit::Ampere)?)
    } else if n("early") {
        Setting::Early(optional_in(name, v, Unit::Volt)?)
    } else if n("vce-sat") {
        Setting::VceSat(value_in(name, v, Unit::Volt)?)
    } else if n("power-rating") {
        Setting::PowerRating(value_in(name, v, Unit::Watt)?)
    } else if n("tj-max") {
        Setting::TjMax(celsius(name, v)?)
    } else if n("input-r") {
        Setting::InputR(optional_in(name, v, Unit::Ohm)?)
    } else if n("inputs") {
        Setting::Inputs(InputMode::parse(v).ok_or(err(Code::Value, name, v, "together or one"))?)
    } else {
        return Err(err(Code::Value, "set", name, SET_NAMES));
    };
    no_tol(s)
}

fn fault<'a>(words: &[&'a str]) -> Result<Option<Fault>, ParseError<'a>> {
    let allowed = "none, PART open|short|VALUE (PART r1 r2 rc re1 re2 cin cout ce), or q \
be_open|bc_open|be_short|bc_short|ce_short|reversed";
    match words {
        [w] if w.eq_ignore_ascii_case("none") => Ok(None),
        [part, mode] => {
            if part.eq_ignore_ascii_case("q") {
                return DeviceFault::ALL
                    .into_iter()
                    .find(|d| d.name().eq_ignore_ascii_case(mode))
                    .map(|d| Some(Fault::Device(d)))
                    .ok_or(err(Code::Value, "inject", mode, allowed));
            }
            let r = resistor(part).ok_or(err(Code::Value, "inject", part, allowed))?;
            if mode.eq_ignore_ascii_case("open") {
                Ok(Some(Fault::Open(r)))
            } else if mode.eq_ignore_ascii_case("short") {
                Ok(Some(Fault::Short(r)))
            } else {
                Ok(Some(Fault::Value(r, value(part, mode)?)))
            }
        }
        _ => Err(err(Code::Usage, "inject", "", allowed)),
    }
}

/// Parse one line (without its line end).
pub fn parse(line: &str) -> Result<Command<'_>, ParseError<'_>> {
    let mut words: heapless::Vec<&str, MAX_WORDS> = heapless::Vec::new();
    for w in line.split(' ').filter(|w| !w.is_empty()) {
        if words.push(w).is_err() {
            return Err(err(Code::Usage, "line", "", "at most 8 words"));
        }
    }
    let Some((&word, args)) = words.split_first() else {
        return Ok(Command::Nothing);
    };
    if word.starts_with('#') {
        return Ok(Command::Nothing);
    }
    let is = |s: &str| word.eq_ignore_ascii_case(s);
    let none = |c: Command<'static>| -> Result<Command<'static>, ParseError<'_>> {
        if args.is_empty() {
            Ok(c)
        } else {
            Err(err(Code::Usage, word, "", "takes no arguments"))
        }
    };
    if is("help") {
        return match args {
            [] => Ok(Command::Help(None)),
            [topic] => Ok(Command::Help(Some(topic))),
            _ => Err(err(Code::Usage, word, "", "help [COMMAND]")),
        };
    }
    if is("identify") || is("*idn?") {
        return none(Command::Identify);
    }
    if is("*rst") {
        return none(Command::Reset);
    }
    if is("stage") {
        return none(Command::Stage);
    }
    if is("set") {
        return setting(args).map(Command::Set);
    }
    if is("profile") {
        return none(Command::Profile);
    }
    if is("parts") {
        return match args {
            [] => Ok(Command::Parts(BandCount::Four)),
            [b] if *b == "5" => Ok(Command::Parts(BandCount::Five)),
            [b] if *b == "4" => Ok(Command::Parts(BandCount::Four)),
            [b, ..] => Err(err(Code::Value, word, b, "parts [4|5] (colour bands)")),
        };
    }
    if is("predict") {
        return none(Command::Predict);
    }
    if is("hash") {
        return none(Command::Hash);
    }
    if is("digest") {
        return none(Command::Digest);
    }
    if is("requirement") {
        return match args {
            [] => Ok(Command::Requirement(None)),
            #[cfg(feature = "synthesis")]
            [n, v] => Ok(Command::Requirement(Some(requirement(n, v)?))),
            // Refused whole by a unit without the design search; its values are not read.
            #[cfg(not(feature = "synthesis"))]
            [_, _] => Ok(Command::Requirement(None)),
            _ => Err(err(Code::Usage, word, "", "requirement [NAME VALUE]")),
        };
    }
    if is("design") {
        return none(Command::Design);
    }
    if is("pick") {
        return match args {
            [n] => match n.parse::<u8>() {
                Ok(k) if k >= 1 => Ok(Command::Pick(k)),
                _ => Err(err(Code::Value, word, n, "a candidate number from 1")),
            },
            _ => Err(err(Code::Usage, word, "", "pick N")),
        };
    }
    if is("spread") {
        let runs = match args.first() {
            None => DEFAULT_RUNS,
            Some(t) => match t.parse::<u32>() {
                Ok(n) if (1..=MAX_RUNS).contains(&n) => n,
                _ => {
                    return Err(err(
                        Code::Value,
                        "runs",
                        t,
                        "a whole number of runs from 1 to 2000",
                    ))
                }
            },
        };
        let seed = match args.get(1) {
            None => DEFAULT_SEED,
            Some(t) => t
                .parse::<u64>()
                .map_err(|_| err(Code::Value, "seed", t, "a whole number from 0"))?,
        };
        if args.len() > 2 {
            return Err(err(Code::Usage, word, "", "spread [RUNS] [SEED]"));
        }
        return Ok(Command::Spread(runs, seed));
    }
    if is("limits") {
        return none(Command::Limits);
    }
    if is("meter") {
        return match args {
            [] => Ok(Command::Meter(None)),
            [k, v] if k.eq_ignore_ascii_case("gain") => Ok(Command::Meter(Some(
                MeterSetting::Gain(percent("gain", v)?),
            ))),
            [k, v] if k.eq_ignore_ascii_case("offset") => Ok(Command::Meter(Some(
                MeterSetting::Offset(value("offset", v)?),
            ))),
            [k, v] if k.eq_ignore_ascii_case("divider") => Ok(Command::Meter(Some(
                MeterSetting::Divider(percent("divider", v)?),
            ))),
            _ => Err(err(
                Code::Usage,
                word,
                "",
                "meter [gain P% | offset V | divider P%]",
            )),
        };
    }
    if is("measure") || is("test") {
        if args.len() > 1 {
            return Err(err(Code::Usage, word, "", "at most one argument: SAMPLES"));
        }
        let n = count("samples", args.first().copied())?;
        return Ok(if is("test") {
            Command::Test(n)
        } else {
            Command::Measure(n)
        });
    }
    if is("check") {
        return match args {
            [vcc, vb, ve, vc, rest @ ..] => {
                // The gain readings stay text here (a short command value on the stack); they
                // are checked now and read again by the command.
                let tail = match rest.first() {
                    Some(w) => line.get(offset_in(line, w)..).unwrap_or(""),
                    None => "",
                };
                tones(tail)?;
                Ok(Command::Check(
                    Readings {
                        vcc: signed_in("vcc", vcc, Unit::Volt)?,
                        vb: signed_in("vb", vb, Unit::Volt)?,
                        ve: signed_in("ve", ve, Unit::Volt)?,
                        vc: signed_in("vc", vc, Unit::Volt)?,
                    },
                    tail,
                ))
            }
            _ => Err(err(
                Code::Usage,
                word,
                "",
                "check VCC VB VE VC [F:G ...] (volts; gain G at F Hz)",
            )),
        };
    }
    if is("diagnose") {
        return none(Command::Diagnose);
    }
    if is("readings") {
        return none(Command::Readings);
    }
    if is("calibrate") {
        let usage = "calibrate | calibrate CH low V | calibrate CH high V | calibrate reset \
(CH vcc vb ve vc)";
        return match args {
            [] => Ok(Command::Calibrate(CalibrateStep::Show)),
            [r] if r.eq_ignore_ascii_case("reset") => Ok(Command::Calibrate(CalibrateStep::Reset)),
            [ch, point, v] => {
                let c =
                    Channel::parse(ch).ok_or(err(Code::Value, "channel", ch, "vcc vb ve vc"))?;
                let volts = signed_in(point, v, Unit::Volt)?;
                if point.eq_ignore_ascii_case("low") {
                    Ok(Command::Calibrate(CalibrateStep::Low(c, volts)))
                } else if point.eq_ignore_ascii_case("high") {
                    Ok(Command::Calibrate(CalibrateStep::High(c, volts)))
                } else {
                    Err(err(Code::Value, "point", point, "low or high"))
                }
            }
            _ => Err(err(Code::Usage, word, "", usage)),
        };
    }
    if is("inject") {
        if let [part, mode] = args {
            if let Some(c) = capacitor(part) {
                let state = if mode.eq_ignore_ascii_case("open") {
                    CapState::Open
                } else if mode.eq_ignore_ascii_case("short") {
                    CapState::Short
                } else {
                    CapState::Fitted(value(part, mode)?)
                };
                return Ok(Command::InjectCapacitor(c, state));
            }
        }
        return fault(args).map(Command::Inject);
    }
    if is("lock") || is("unlock") {
        return match args {
            [p] => {
                let pin = Pin::parse(p).ok_or(err(Code::Value, "pin", "", "4 to 8 digits"))?;
                Ok(if is("lock") {
                    Command::Lock(pin)
                } else {
                    Command::Unlock(pin)
                })
            }
            _ => Err(err(
                Code::Usage,
                word,
                "",
                "lock PIN | unlock PIN (4 to 8 digits)",
            )),
        };
    }
    if is("echo") {
        return match args {
            [v] if v.eq_ignore_ascii_case("on") => Ok(Command::Echo(true)),
            [v] if v.eq_ignore_ascii_case("off") => Ok(Command::Echo(false)),
            _ => Err(err(Code::Usage, word, "", "echo on | echo off")),
        };
    }
    if is("mode") {
        return match args {
            [] => Ok(Command::Mode(None)),
            [v] if v.eq_ignore_ascii_case("machine") => Ok(Command::Mode(Some(Mode::Machine))),
            [v] if v.eq_ignore_ascii_case("human") => Ok(Command::Mode(Some(Mode::Human))),
            _ => Err(err(Code::Usage, word, "", "mode machine | mode human")),
        };
    }
    if is("save") {
        return none(Command::Save);
    }
    if is("designs") {
        return none(Command::Designs);
    }
    if is("keep") || is("choose") || is("forget") {
        return match args {
            [n] => {
                let name = Name::parse(n).ok_or(err(
                    Code::Value,
                    "name",
                    n,
                    "1 to 16 letters, digits, - _ or .",
                ))?;
                Ok(if is("keep") {
                    Command::Keep(name)
                } else if is("choose") {
                    Command::Choose(name)
                } else {
                    Command::Forget(name)
                })
            }
            _ => Err(err(
                Code::Usage,
                word,
                "",
                "keep NAME | choose NAME | forget NAME",
            )),
        };
    }
    Err(err(Code::Unknown, "command", word, "see help"))
}
