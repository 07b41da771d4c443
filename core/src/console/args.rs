//! Reading each command's arguments into a [`Command`]: one reader per row of
//! [`super::table::COMMANDS`], and the readers of `set`, `requirement` and `inject`.

use super::fields::{
    capacitor, celsius, count, err, field, optional_in, percent, resistor, signed_in,
    signed_percent, value, value_in, Field,
};
use super::jig::Channel;
use super::parse::{
    offset_in, tones, CalibrateStep, Command, MeterSetting, Mode, Name, ParseError, Pin, Setting,
    DEFAULT_RUNS, DEFAULT_SEED, MAX_RUNS, SET_NAMES,
};
#[cfg(feature = "synthesis")]
use super::parse::{ReqSetting, REQUIREMENT_NAMES};
use super::Code;
use crate::response::CapState;
use crate::series::BandCount;
use crate::stage::{DeviceFault, Fault, Readings};
use crate::units::Unit;

/// The words of one line: the command word as typed, the words after it, and the whole line.
#[derive(Clone, Copy)]
pub(super) struct Args<'s, 'l> {
    /// The command word as typed (error messages name it so).
    pub word: &'l str,
    /// The words after it.
    pub list: &'s [&'l str],
    /// The whole line (the gain readings of `check` are read from it).
    pub line: &'l str,
}

/// A row's argument reader.
pub(super) type Read = for<'s, 'l> fn(Args<'s, 'l>) -> Result<Command<'l>, ParseError<'l>>;

/// A command without arguments: `c`, or `USAGE` when any are given.
pub(super) fn bare<'l>(a: Args<'_, 'l>, c: Command<'l>) -> Result<Command<'l>, ParseError<'l>> {
    if a.list.is_empty() {
        Ok(c)
    } else {
        Err(err(Code::Usage, a.word, "", "takes no arguments"))
    }
}

/// `help [COMMAND]`.
pub(super) fn help<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [] => Ok(Command::Help(None)),
        [topic] => Ok(Command::Help(Some(topic))),
        _ => Err(err(Code::Usage, a.word, "", "help [COMMAND]")),
    }
}

/// `parts [4|5]`.
pub(super) fn parts<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [] => Ok(Command::Parts(BandCount::Four)),
        [b] if *b == "5" => Ok(Command::Parts(BandCount::Five)),
        [b] if *b == "4" => Ok(Command::Parts(BandCount::Four)),
        [b, ..] => Err(err(Code::Value, a.word, b, "parts [4|5] (colour bands)")),
    }
}

/// `requirement [NAME VALUE]`.
pub(super) fn requirement<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [] => Ok(Command::Requirement(None)),
        #[cfg(feature = "synthesis")]
        [n, v] => Ok(Command::Requirement(Some(requirement_field(n, v)?))),
        // Refused whole by a unit without the design search; its values are not read.
        #[cfg(not(feature = "synthesis"))]
        [_, _] => Ok(Command::Requirement(None)),
        _ => Err(err(Code::Usage, a.word, "", "requirement [NAME VALUE]")),
    }
}

/// `pick N`.
pub(super) fn pick<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [n] => match n.parse::<u8>() {
            Ok(k) if k >= 1 => Ok(Command::Pick(k)),
            _ => Err(err(Code::Value, a.word, n, "a candidate number from 1")),
        },
        _ => Err(err(Code::Usage, a.word, "", "pick N")),
    }
}

/// `spread [RUNS] [SEED]`.
pub(super) fn spread<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    let runs = match a.list.first() {
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
    let seed = match a.list.get(1) {
        None => DEFAULT_SEED,
        Some(t) => t
            .parse::<u64>()
            .map_err(|_| err(Code::Value, "seed", t, "a whole number from 0"))?,
    };
    if a.list.len() > 2 {
        return Err(err(Code::Usage, a.word, "", "spread [RUNS] [SEED]"));
    }
    Ok(Command::Spread(runs, seed))
}

/// `meter [gain P% | offset V | divider P%]`.
pub(super) fn meter<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [] => Ok(Command::Meter(None)),
        [k, v] if k.eq_ignore_ascii_case("gain") => Ok(Command::Meter(Some(MeterSetting::Gain(
            percent("gain", v)?,
        )))),
        [k, v] if k.eq_ignore_ascii_case("offset") => Ok(Command::Meter(Some(
            MeterSetting::Offset(value("offset", v)?),
        ))),
        [k, v] if k.eq_ignore_ascii_case("divider") => Ok(Command::Meter(Some(
            MeterSetting::Divider(percent("divider", v)?),
        ))),
        _ => Err(err(
            Code::Usage,
            a.word,
            "",
            "meter [gain P% | offset V | divider P%]",
        )),
    }
}

/// The samples of `measure [SAMPLES]` and `test [SAMPLES]`.
pub(super) fn samples<'l>(a: Args<'_, 'l>) -> Result<u16, ParseError<'l>> {
    if a.list.len() > 1 {
        return Err(err(
            Code::Usage,
            a.word,
            "",
            "at most one argument: SAMPLES",
        ));
    }
    count("samples", a.list.first().copied())
}

/// `check VCC VB VE VC [F:G ...]`.
pub(super) fn check<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [vcc, vb, ve, vc, rest @ ..] => {
            // The gain readings stay text here (a short command value on the stack); they
            // are checked now and read again by the command.
            let tail = match rest.first() {
                Some(w) => a.line.get(offset_in(a.line, w)..).unwrap_or(""),
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
            a.word,
            "",
            "check VCC VB VE VC [F:G ...] (volts; gain G at F Hz)",
        )),
    }
}

/// `calibrate [CH low V | CH high V | gain F KNOWN | reset]`.
pub(super) fn calibrate<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    let usage = "calibrate | calibrate CH low V | calibrate CH high V | calibrate gain F \
KNOWN | calibrate reset (CH vcc vb ve vc; F in Hz, KNOWN the reference's gain)";
    match a.list {
        [] => Ok(Command::Calibrate(CalibrateStep::Show)),
        [r] if r.eq_ignore_ascii_case("reset") => Ok(Command::Calibrate(CalibrateStep::Reset)),
        [g, f, known] if g.eq_ignore_ascii_case("gain") => {
            let hz = value_in("frequency", f, Unit::Hertz)?;
            let k = value_in("known", known, Unit::Number)?;
            if !(0.1..=100e3).contains(&hz) {
                return Err(err(Code::Range, "frequency", f, "0.1 Hz to 100 kHz"));
            }
            if !(1e-3..=1e5).contains(&k) {
                return Err(err(
                    Code::Range,
                    "known",
                    known,
                    "a gain of 0.001 to 100000",
                ));
            }
            Ok(Command::Calibrate(CalibrateStep::Gain(hz, k)))
        }
        [ch, point, v] => {
            let c = Channel::parse(ch).ok_or(err(Code::Value, "channel", ch, "vcc vb ve vc"))?;
            let volts = signed_in(point, v, Unit::Volt)?;
            if point.eq_ignore_ascii_case("low") {
                Ok(Command::Calibrate(CalibrateStep::Low(c, volts)))
            } else if point.eq_ignore_ascii_case("high") {
                Ok(Command::Calibrate(CalibrateStep::High(c, volts)))
            } else {
                Err(err(Code::Value, "point", point, "low or high"))
            }
        }
        _ => Err(err(Code::Usage, a.word, "", usage)),
    }
}

/// `inject PART MODE | none`, a capacitor's state or a fault.
pub(super) fn inject<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    if let [part, mode] = a.list {
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
    fault(a.list).map(Command::Inject)
}

/// The one argument of a command, read by `parse` (refused as `field`, with what is allowed);
/// `usage` when there is not exactly one.
fn one<'l, T>(
    a: Args<'_, 'l>,
    parse: fn(&str) -> Option<T>,
    field: &'l str,
    allowed: &'static str,
    usage: &'static str,
) -> Result<T, ParseError<'l>> {
    match a.list {
        [w] => parse(w).ok_or(err(Code::Value, field, w, allowed)),
        _ => Err(err(Code::Usage, a.word, "", usage)),
    }
}

/// The PIN of `lock PIN` and `unlock PIN` (a wrong PIN is not echoed).
pub(super) fn pin<'l>(a: Args<'_, 'l>) -> Result<Pin, ParseError<'l>> {
    one(
        a,
        Pin::parse,
        "pin",
        "4 to 8 digits",
        "lock PIN | unlock PIN (4 to 8 digits)",
    )
    .map_err(|e| ParseError { value: "", ..e })
}

/// `echo on|off`.
pub(super) fn echo<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [v] if v.eq_ignore_ascii_case("on") => Ok(Command::Echo(true)),
        [v] if v.eq_ignore_ascii_case("off") => Ok(Command::Echo(false)),
        _ => Err(err(Code::Usage, a.word, "", "echo on | echo off")),
    }
}

/// `mode [machine|human]`.
pub(super) fn mode<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    match a.list {
        [] => Ok(Command::Mode(None)),
        [v] if v.eq_ignore_ascii_case("machine") => Ok(Command::Mode(Some(Mode::Machine))),
        [v] if v.eq_ignore_ascii_case("human") => Ok(Command::Mode(Some(Mode::Human))),
        _ => Err(err(Code::Usage, a.word, "", "mode machine | mode human")),
    }
}

/// The NAME of `keep`, `choose` and `forget`.
pub(super) fn name<'l>(a: Args<'_, 'l>) -> Result<Name, ParseError<'l>> {
    one(
        a,
        Name::parse,
        "name",
        "1 to 16 letters, digits, - _ or .",
        "keep NAME | choose NAME | forget NAME",
    )
}

/// How each field of `requirement NAME VALUE` is read, in the order of [`REQUIREMENT_NAMES`]
/// (a test checks that the two agree).
#[cfg(feature = "synthesis")]
const REQUIREMENT_FIELDS: [(&str, Field<ReqSetting>); 15] = [
    ("polarity", Field::Polarity(ReqSetting::Polarity)),
    ("vcc", Field::Value(Unit::Volt, ReqSetting::Vcc)),
    ("gain", Field::Value(Unit::Number, ReqSetting::Gain)),
    ("rl", Field::Optional(Unit::Ohm, ReqSetting::Load)),
    ("rs", Field::Value(Unit::Ohm, ReqSetting::Source)),
    ("ic-max", Field::Value(Unit::Ampere, ReqSetting::IcMax)),
    ("swing", Field::Value(Unit::Volt, ReqSetting::Swing)),
    ("f-low", Field::Optional(Unit::Hertz, ReqSetting::FLow)),
    ("temp", Field::Number(celsius, ReqSetting::Temp)),
    ("temp-min", Field::Number(celsius, ReqSetting::TempMin)),
    ("temp-max", Field::Number(celsius, ReqSetting::TempMax)),
    ("series", Field::Series(ReqSetting::Series)),
    ("tol", Field::Number(percent, ReqSetting::Tol)),
    ("cap-series", Field::Series(ReqSetting::CapSeries)),
    ("cap-tol", Field::Number(percent, ReqSetting::CapTol)),
];

#[cfg(feature = "synthesis")]
fn requirement_field<'a>(name: &'a str, v: &'a str) -> Result<ReqSetting, ParseError<'a>> {
    field(&REQUIREMENT_FIELDS, name)
        .ok_or(err(Code::Value, "requirement", name, REQUIREMENT_NAMES))?
        .read(name, v)
}

/// The names of `set` that take no tolerance (the resistors, the capacitors and `vcc` do), in
/// the order of [`SET_NAMES`].
const SETTINGS: [(&str, Field<Setting>); 20] = [
    ("tol", Field::Number(percent, Setting::Tolerance)),
    ("rl", Field::Optional(Unit::Ohm, Setting::Load)),
    ("rs", Field::Value(Unit::Ohm, Setting::Source)),
    ("polarity", Field::Polarity(Setting::Polarity)),
    ("temp", Field::Number(celsius, Setting::Temp)),
    ("temp-min", Field::Number(celsius, Setting::TempMin)),
    ("temp-max", Field::Number(celsius, Setting::TempMax)),
    ("beta", Field::Value(Unit::Number, Setting::Beta)),
    ("beta-min", Field::Value(Unit::Number, Setting::BetaMin)),
    ("beta-max", Field::Value(Unit::Number, Setting::BetaMax)),
    ("beta-rev", Field::Value(Unit::Number, Setting::BetaRev)),
    ("beta-tc", Field::Number(signed_percent, Setting::BetaTc)),
    ("vbe", Field::Value(Unit::Volt, Setting::Vbe)),
    ("is", Field::Value(Unit::Ampere, Setting::Is)),
    ("early", Field::Optional(Unit::Volt, Setting::Early)),
    ("vce-sat", Field::Value(Unit::Volt, Setting::VceSat)),
    (
        "power-rating",
        Field::Value(Unit::Watt, Setting::PowerRating),
    ),
    ("tj-max", Field::Number(celsius, Setting::TjMax)),
    ("input-r", Field::Optional(Unit::Ohm, Setting::InputR)),
    ("inputs", Field::Inputs(Setting::Inputs)),
];

/// `set NAME VALUE [TOL%]`.
pub(super) fn set<'l>(a: Args<'_, 'l>) -> Result<Command<'l>, ParseError<'l>> {
    setting(a.list).map(Command::Set)
}

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
    if name.eq_ignore_ascii_case("vcc") {
        return Ok(Setting::Vcc(value_in(name, v, Unit::Volt)?, tol));
    }
    let s = field(&SETTINGS, name)
        .ok_or(err(Code::Value, "set", name, SET_NAMES))?
        .read(name, v)?;
    match tol {
        None => Ok(s),
        Some(_) => Err(err(Code::Usage, name, "", "takes no tolerance")),
    }
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Every name `help set` lists is read by `set` (a row of the table, a resistor, a capacitor
    /// or `vcc`), and every row of the table is listed.
    #[test]
    fn set_names_and_the_field_table_agree() {
        for n in SET_NAMES.split(' ') {
            let read = field(&SETTINGS, n).is_some()
                || resistor(n).is_some()
                || capacitor(n).is_some()
                || n == "vcc";
            assert!(read, "{n} listed but not read");
        }
        for (n, _) in &SETTINGS {
            assert!(
                SET_NAMES.split(' ').any(|w| w == *n),
                "{n} read but not listed"
            );
        }
    }

    /// The names `help requirement` lists are the rows of the requirement's field table, in
    /// its order.
    #[cfg(feature = "synthesis")]
    #[test]
    fn requirement_names_and_the_field_table_agree() {
        let rows: std::vec::Vec<&str> = REQUIREMENT_FIELDS.iter().map(|(n, _)| *n).collect();
        let listed: std::vec::Vec<&str> = REQUIREMENT_NAMES.split(' ').collect();
        assert_eq!(listed, rows);
    }
}
