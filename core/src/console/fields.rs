//! Reading one argument: values in the engineering grammar of [`crate::units`], temperatures,
//! percentages, counts and part names, each refused with the field, the text and what is
//! allowed.

use super::parse::{ParseError, DEFAULT_SAMPLES, MAX_SAMPLES};
use super::Code;
use crate::stage::{Capacitor, Resistor};
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

/// A non-negative value of a field of `unit` (its own unit letters may follow, no other's).
pub(super) fn value_in<'a>(
    field: &'a str,
    text: &'a str,
    unit: Unit,
) -> Result<f64, ParseError<'a>> {
    units::parse_value_in(text, unit).map_err(|e| value_error(field, text, e))
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
