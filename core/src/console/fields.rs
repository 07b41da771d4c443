//! Reading one argument: values in the engineering grammar of [`crate::units`], temperatures,
//! percentages, counts and part names, each refused with the field, the text and what is
//! allowed.

use super::parse::{ParseError, DEFAULT_SAMPLES, MAX_SAMPLES};
use super::Code;
#[cfg(feature = "synthesis")]
use crate::series::Series;
use crate::settings::InputMode;
use crate::stage::{Capacitor, Polarity, Resistor};
use crate::units::{self, Unit};

pub(super) const VALUE_FORMS: &str = "a value such as 4700, 4.7k, 4k7, 470R, 100n or 2.2e-3";

pub(super) fn err<'a>(
    code: Code,
    field: &'a str,
    value: &'a str,
    allowed: &'static str,
) -> ParseError<'a> {
    ParseError {
        code,
        field,
        value,
        allowed,
    }
}

pub(super) fn value<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
    units::parse_value(text).map_err(|_| err(Code::Value, field, text, VALUE_FORMS))
}

/// The refusal of `text` as a value of `field`: the units it allows when it had another's,
/// else the forms of a value.
fn value_error<'a>(field: &'a str, text: &'a str, e: units::ValueError) -> ParseError<'a> {
    match e {
        units::ValueError::WrongUnit(u) => err(Code::Value, field, text, u.allowed()),
        _ => err(Code::Value, field, text, VALUE_FORMS),
    }
}

/// A non-negative value of a field of `unit` (its own unit letters may follow, no other's): a
/// [`signed_in`] value, a negative one refused with the forms of a value.
pub(super) fn value_in<'a>(
    field: &'a str,
    text: &'a str,
    unit: Unit,
) -> Result<f64, ParseError<'a>> {
    match signed_in(field, text, unit)? {
        v if v < 0.0 => Err(err(Code::Value, field, text, VALUE_FORMS)),
        v => Ok(v),
    }
}

/// A value of a field of `unit`, or `none`.
pub(super) fn optional_in<'a>(
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
pub(super) fn signed_in<'a>(
    field: &'a str,
    text: &'a str,
    unit: Unit,
) -> Result<f64, ParseError<'a>> {
    units::parse_signed_in(text, unit).map_err(|e| value_error(field, text, e))
}

/// A temperature in °C: a number that may be negative, `°C` or `C` may follow; no other unit.
pub(super) fn celsius<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
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

pub(super) fn percent<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
    units::parse_percent(text)
        .map(|p| p / 100.0)
        .map_err(|_| err(Code::Value, field, text, "a percentage such as 5 or 5%"))
}

pub(super) fn signed_percent<'a>(field: &'a str, text: &'a str) -> Result<f64, ParseError<'a>> {
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

pub(super) fn count<'a>(field: &'a str, text: Option<&'a str>) -> Result<u16, ParseError<'a>> {
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

pub(super) fn resistor(name: &str) -> Option<Resistor> {
    Resistor::ALL
        .into_iter()
        .find(|r| r.name().eq_ignore_ascii_case(name))
}

pub(super) fn capacitor(name: &str) -> Option<Capacitor> {
    [
        ("cin", Capacitor::Cin),
        ("cout", Capacitor::Cout),
        ("ce", Capacitor::Ce),
    ]
    .into_iter()
    .find(|(n, _)| n.eq_ignore_ascii_case(name))
    .map(|(_, c)| c)
}

/// A reader of a number of a field: [`celsius`], [`percent`] or [`signed_percent`].
pub(super) type Number = for<'a> fn(&'a str, &'a str) -> Result<f64, ParseError<'a>>;

/// How the value of one named field of `set` or `requirement` is read, and the change of type
/// `T` it makes (a row of their name tables).
pub(super) enum Field<T> {
    /// A value of the unit, not negative.
    Value(Unit, fn(f64) -> T),
    /// A value of the unit, or `none`.
    Optional(Unit, fn(Option<f64>) -> T),
    /// A number read by the function (a temperature in °C, a percentage as a fraction).
    Number(Number, fn(f64) -> T),
    /// `npn` or `pnp`.
    Polarity(fn(Polarity) -> T),
    /// A series name, `E3` to `E192`.
    #[cfg(feature = "synthesis")]
    Series(fn(Series) -> T),
    /// `together` or `one`.
    Inputs(fn(InputMode) -> T),
}

impl<T> Field<T> {
    /// The change of the field `name` to the text `v`, refused with the field, the text and what
    /// is allowed.
    pub(super) fn read<'a>(&self, name: &'a str, v: &'a str) -> Result<T, ParseError<'a>> {
        let refused = |allowed| err(Code::Value, name, v, allowed);
        Ok(match *self {
            Field::Value(unit, make) => make(value_in(name, v, unit)?),
            Field::Optional(unit, make) => make(optional_in(name, v, unit)?),
            Field::Number(number, make) => make(number(name, v)?),
            Field::Polarity(make) => make(if v.eq_ignore_ascii_case("npn") {
                Polarity::Npn
            } else if v.eq_ignore_ascii_case("pnp") {
                Polarity::Pnp
            } else {
                return Err(refused("npn or pnp"));
            }),
            #[cfg(feature = "synthesis")]
            Field::Series(make) => {
                make(Series::parse(v).map_err(|_| refused("E3 E6 E12 E24 E48 E96 or E192"))?)
            }
            Field::Inputs(make) => make(InputMode::parse(v).ok_or(refused("together or one"))?),
        })
    }
}

/// The row of `name` (case-insensitive) in a table of named fields.
pub(super) fn field<'t, T>(table: &'t [(&str, Field<T>)], name: &str) -> Option<&'t Field<T>> {
    table
        .iter()
        .find(|(n, _)| n.eq_ignore_ascii_case(name))
        .map(|(_, f)| f)
}
