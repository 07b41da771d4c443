//! Command-line value parsers built on the core's value grammar: plain numbers, exponents,
//! SI prefixes and IEC 60062 codes; percentages as `5` or `5%`.

use biasjig_core::units;

fn explain(e: units::ValueError) -> String {
    let what = e.to_string();
    if what.contains("expected") || matches!(e, units::ValueError::WrongUnit(_)) {
        what
    } else {
        format!("{what}; allowed: a number such as 4700, 4.7e3, 4.7k, 4k7, 470R, R47, 100n, 2.2M or 10u")
    }
}

/// A non-negative value (parts, supply).
pub fn value(text: &str) -> Result<f64, String> {
    units::parse_value(text).map_err(explain)
}

/// Parsers of a value in one unit: the unit's letters may follow the value, another unit's are
/// refused.
macro_rules! in_unit {
    ($($(#[$doc:meta])* $name:ident => $unit:ident, $parse:ident;)*) => {
        $(
            $(#[$doc])*
            pub fn $name(text: &str) -> Result<f64, String> {
                units::$parse(text, units::Unit::$unit).map_err(explain)
            }
        )*
    };
}

in_unit! {
    /// A resistance, Ω (`4k7`, `4.7kΩ`, `4.7kohm`; another unit is refused).
    ohms => Ohm, parse_value_in;
    /// A capacitance, F (`10u`, `10uF`).
    farads => Farad, parse_value_in;
    /// A voltage that is not negative, V (`12`, `12V`).
    volts => Volt, parse_value_in;
    /// A measured voltage, V, that may be negative (`-1.2m`, `-1.2mV`).
    signed_volts => Volt, parse_signed_in;
    /// A current, A (`2m`, `2mA`).
    amps => Ampere, parse_value_in;
    /// A frequency, Hz (`1k`, `1kHz`).
    hertz => Hertz, parse_value_in;
    /// A power, W (`300m`, `300mW`).
    watts => Watt, parse_value_in;
    /// A plain number without unit letters (hFE).
    number => Number, parse_value_in;
}

/// A percentage, returned as a fraction (5 or 5% -> 0.05).
pub fn percent(text: &str) -> Result<f64, String> {
    units::parse_percent(text)
        .map(|p| p / 100.0)
        .map_err(|e| match e {
            // (The core's word for a malformed value offers resistor codes: not for a percentage.)
            units::ValueError::Malformed => {
                "not a percentage; allowed: a percentage such as 5 or 5%".to_string()
            }
            e => format!("{e}; allowed: a percentage such as 5 or 5%"),
        })
}

/// A percentage that may be negative (temperature coefficients), returned as a fraction.
pub fn signed_percent(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let t = t.strip_suffix('%').unwrap_or(t).trim_end();
    if !plain_number(t) {
        return Err("not a percentage; allowed: a percentage such as 0.5 or -0.2%".into());
    }
    units::parse_signed(t)
        .map(|p| p / 100.0)
        .map_err(|e| format!("{e}; allowed: a percentage such as 0.5 or -0.2%"))
}

/// Only a sign, digits, a decimal point and an exponent: no prefix, no unit letters (a
/// temperature or a percentage has no SI prefix, and `25K` or `25V` must not pass for 25 °C).
fn plain_number(t: &str) -> bool {
    !t.is_empty()
        && t.bytes()
            .all(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.' | b'e' | b'E'))
}

/// A temperature in °C (may be negative).
pub fn celsius(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let t = t
        .strip_suffix("°C")
        .or_else(|| t.strip_suffix('C'))
        .unwrap_or(t)
        .trim_end();
    if !plain_number(t) {
        return Err(
            "not a temperature in °C (no prefix or other unit: 25K is not kelvin here); allowed: \
             a number such as 25, -10 or 25°C"
                .into(),
        );
    }
    units::parse_signed(t)
        .map_err(|e| format!("{e}; allowed: a temperature in °C such as 25 or -10"))
}
