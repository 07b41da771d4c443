//! From a line of text to a [`Command`]: words separated by spaces, the command word first
//! (case-insensitive), values in the engineering grammar of [`crate::units`].

use super::args::Args;
use super::fields::{err, value};
use super::jig::Channel;
use super::Code;
use crate::response::CapState;
use crate::series::{BandCount, Series};
use crate::settings::InputMode;
use crate::signaltest::ToneReading;
use crate::stage::{Capacitor, Fault, Polarity, Readings, Resistor};

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
    /// Correct the signal path: the jig reads the gain at `f` Hz through a reference of known
    /// gain `known` (V/V) fitted in the board's place, and keeps the correction.
    Gain(f64, f64),
    /// Forget the calibration of every channel and of the signal path.
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
pub(super) fn offset_in(line: &str, word: &str) -> usize {
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

/// The names `set` accepts, for the help text and error messages.
pub const SET_NAMES: &str = "vcc r1 r2 rc re1 re2 tol rl rs cin cout ce polarity temp temp-min \
temp-max beta beta-min beta-max beta-rev beta-tc vbe is early vce-sat power-rating tj-max input-r \
inputs";
/// Parse one line (without its line end): the command word is looked up in
/// [`super::table::COMMANDS`], whose row reads the arguments.
pub fn parse(line: &str) -> Result<Command<'_>, ParseError<'_>> {
    let mut words: heapless::Vec<&str, MAX_WORDS> = heapless::Vec::new();
    for w in line.split(' ').filter(|w| !w.is_empty()) {
        if words.push(w).is_err() {
            return Err(err(Code::Usage, "line", "", "at most 8 words"));
        }
    }
    let Some((&word, list)) = words.split_first() else {
        return Ok(Command::Nothing);
    };
    if word.starts_with('#') {
        return Ok(Command::Nothing);
    }
    match super::table::find(word) {
        Some(spec) => spec.read(Args { word, list, line }),
        None => Err(err(Code::Unknown, "command", word, "see help")),
    }
}
