//! Text to value: plain numbers, SI prefixes, IEC 60062 codes, the unit of a field.

use core::fmt;

use super::decimal::decimal_to_f64;
use super::in_range;

/// Why a text is not an engineering value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ValueError {
    /// The text is empty or only whitespace.
    Empty,
    /// The text is not a number, an SI-prefixed number or an IEC 60062 code.
    Malformed,
    /// The text is `nan` or `inf`, or the number overflows to infinity.
    NotFinite,
    /// The value is negative where only values >= 0 are allowed.
    Negative,
    /// The magnitude is above 1e15 or non-zero below 1e-15.
    OutOfRange,
    /// The unit letters do not fit the field (`3.3mA` for a resistor).
    WrongUnit(Unit),
}

/// The unit of a field, for values that may carry it (`4.7kΩ`, `10uF`, `12V`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Unit {
    /// Ω: `Ω`, `ohm` or `ohms` may follow.
    Ohm,
    /// F.
    Farad,
    /// V.
    Volt,
    /// A.
    Ampere,
    /// Hz.
    Hertz,
    /// W.
    Watt,
    /// A plain number (hFE, a count): no unit letters.
    Number,
}

impl Unit {
    /// What may follow the number (and its prefix) for this field.
    pub fn allowed(self) -> &'static str {
        match self {
            Self::Ohm => "Ω, ohm or ohms (or no unit)",
            Self::Farad => "F (or no unit)",
            Self::Volt => "V (or no unit)",
            Self::Ampere => "A (or no unit)",
            Self::Hertz => "Hz (or no unit)",
            Self::Watt => "W (or no unit)",
            Self::Number => "no unit",
        }
    }

    /// Whether `u` (the unit text after the number and prefix) names this unit.
    fn names(self, u: &str) -> bool {
        match self {
            Self::Ohm => {
                matches!(u, "\u{03A9}" | "\u{2126}")
                    || u.eq_ignore_ascii_case("ohm")
                    || u.eq_ignore_ascii_case("ohms")
            }
            Self::Farad => u == "F",
            Self::Volt => u == "V",
            Self::Ampere => u == "A",
            Self::Hertz => u == "Hz",
            Self::Watt => u == "W",
            Self::Number => false,
        }
    }
}

impl fmt::Display for ValueError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ValueError::Empty => "no value given",
            ValueError::Malformed => {
                "not a value: expected a number such as 4700, 4.7k, 4.2e-05 or a code such as 4k7, R47"
            }
            ValueError::NotFinite => "value is not a finite number",
            ValueError::Negative => "value must not be negative",
            ValueError::OutOfRange => "value magnitude must be 0 or between 1e-15 and 1e15",
            ValueError::WrongUnit(u) => return write!(f, "unit does not fit: allowed {}", u.allowed()),
        })
    }
}

/// Parse a value that may be negative (`-0.0012`, `-1.2m`, `4k7`); result in the SI base unit.
pub fn parse_signed(text: &str) -> Result<f64, ValueError> {
    parse_general(text, true)
}

/// Parse a non-negative value (`4700`, `4.7k`, `4k7`, `100nF`); result in the SI base unit.
/// Negative input gives [`ValueError::Negative`].
pub fn parse_value(text: &str) -> Result<f64, ValueError> {
    let v = parse_signed(text)?;
    if v < 0.0 {
        Err(ValueError::Negative)
    } else {
        Ok(v)
    }
}

/// Every unit text the parsers know, longest first (so that `ohms` is found before `s`).
const UNIT_TEXTS: [&str; 9] = [
    "ohms", "ohm", "Hz", "\u{03A9}", "\u{2126}", "F", "V", "A", "W",
];

/// The unit text at the end of `t`, if any (case-insensitive for `ohm`/`ohms`).
fn trailing_unit(t: &str) -> Option<&str> {
    UNIT_TEXTS.iter().copied().find(|u| {
        t.len() > u.len()
            && t.get(t.len() - u.len()..)
                .is_some_and(|end| names_unit(end, u))
    })
}

/// Whether `s` is the unit text `u` (`ohm` and `ohms` in any case, the others exactly).
fn names_unit(s: &str, u: &str) -> bool {
    if u.starts_with('o') {
        s.eq_ignore_ascii_case(u)
    } else {
        s == u
    }
}

/// Parse a value that may be negative for a field of `unit`: the field's own unit may follow
/// (`4.7kΩ`, `4k7ohm`, `10uF`, `12V`); another unit's letters are refused
/// ([`ValueError::WrongUnit`]: `3.3mA` for a resistor, `12A` for a supply).
pub fn parse_signed_in(text: &str, unit: Unit) -> Result<f64, ValueError> {
    let t = text.trim();
    if let Some(u) = trailing_unit(t) {
        if !unit.names(u) {
            return Err(ValueError::WrongUnit(unit));
        }
    }
    parse_signed(t)
}

/// [`parse_signed_in`] for a value that must not be negative.
pub fn parse_value_in(text: &str, unit: Unit) -> Result<f64, ValueError> {
    let v = parse_signed_in(text, unit)?;
    if v < 0.0 {
        Err(ValueError::Negative)
    } else {
        Ok(v)
    }
}

/// Parse a percentage such as `5`, `5%`, `0.5 %` or `1e-1` into the percent number (5.0 for `5%`).
/// Only plain numbers are accepted (no prefixes or codes); negative input gives
/// [`ValueError::Negative`].
pub fn parse_percent(text: &str) -> Result<f64, ValueError> {
    let t = text.trim();
    if t.is_empty() {
        return Err(ValueError::Empty);
    }
    let body = match t.strip_suffix('%') {
        Some(rest) => rest.strip_suffix(' ').unwrap_or(rest),
        None => t,
    };
    if body.trim().is_empty() || body.len() != body.trim_end().len() {
        return Err(ValueError::Malformed);
    }
    let v = parse_general(body, false)?;
    if v < 0.0 {
        Err(ValueError::Negative)
    } else {
        Ok(v)
    }
}

/// Shared parser. `rich` allows prefixes, units and codes; otherwise plain numbers only.
fn parse_general(text: &str, rich: bool) -> Result<f64, ValueError> {
    let t = text.trim();
    if t.is_empty() {
        return Err(ValueError::Empty);
    }
    let (negative, body) = if let Some(rest) = t.strip_prefix('-') {
        (true, rest)
    } else if let Some(rest) = t.strip_prefix('+') {
        (false, rest)
    } else {
        (false, t)
    };
    if ["nan", "inf", "infinity"]
        .iter()
        .any(|w| body.eq_ignore_ascii_case(w))
    {
        return Err(ValueError::NotFinite);
    }
    let magnitude = parse_magnitude(body, rich)?;
    if magnitude == 0.0 {
        return Ok(0.0);
    }
    Ok(if negative { -magnitude } else { magnitude })
}

/// Split off the leading ASCII digits of `s`.
fn split_digits(s: &str) -> (&str, &str) {
    let n = s.bytes().take_while(u8::is_ascii_digit).count();
    s.split_at_checked(n).unwrap_or((s, ""))
}

/// An SI prefix or IEC 60062 code letter at the start of `s`: its power of ten and the rest.
/// `R` (the code letter for ×1) is included only when `with_r`.
fn leading_letter(s: &str, with_r: bool) -> Option<(i64, &str)> {
    let c = s.chars().next()?;
    let exp = match c {
        'f' => -15,
        'p' => -12,
        'n' => -9,
        'u' | '\u{00B5}' | '\u{03BC}' => -6,
        'm' => -3,
        'k' | 'K' => 3,
        'M' => 6,
        'G' => 9,
        'T' => 12,
        'R' if with_r => 0,
        _ => return None,
    };
    Some((exp, s.get(c.len_utf8()..).unwrap_or("")))
}

/// Whether `s` is empty or one of the ignored unit names.
fn is_unit_or_empty(s: &str) -> bool {
    s.is_empty() || UNIT_TEXTS.iter().any(|u| names_unit(s, u))
}

/// Parse the unsigned body of a value.
fn parse_magnitude(body: &str, rich: bool) -> Result<f64, ValueError> {
    let (int, mut rest) = split_digits(body);
    let mut frac = "";
    let mut had_point = false;
    if let Some(r) = rest.strip_prefix('.') {
        had_point = true;
        let (f, r2) = split_digits(r);
        frac = f;
        rest = r2;
    }
    let has_digits = !int.is_empty() || !frac.is_empty();
    if had_point && !has_digits {
        return Err(ValueError::Malformed);
    }
    let mut exp: i64 = 0;
    let mut had_exp = false;
    if has_digits {
        if let Some(r) = rest.strip_prefix(['e', 'E']) {
            let (exp_negative, r) = if let Some(x) = r.strip_prefix('-') {
                (true, x)
            } else {
                (false, r.strip_prefix('+').unwrap_or(r))
            };
            let (digits, r) = split_digits(r);
            if digits.is_empty() {
                return Err(ValueError::Malformed);
            }
            let e = digits.bytes().fold(0i64, |acc, b| {
                (acc * 10 + i64::from(b - b'0')).min(1_000_000)
            });
            exp = if exp_negative { -e } else { e };
            had_exp = true;
            rest = r;
        }
    }
    if !rich {
        if !has_digits || !rest.is_empty() {
            return Err(ValueError::Malformed);
        }
        return finish(int, frac, exp);
    }
    // IEC 60062 code: digits, letter, digits (the letter is the decimal point).
    if let Some((letter_exp, after_letter)) = leading_letter(rest, true) {
        let (tail, after) = split_digits(after_letter);
        let is_r = rest.starts_with('R');
        if !tail.is_empty() || is_r {
            if had_point || had_exp || (int.is_empty() && tail.is_empty()) {
                return Err(ValueError::Malformed);
            }
            if !is_unit_or_empty(after) {
                return Err(ValueError::Malformed);
            }
            return finish(int, tail, letter_exp);
        }
    }
    if !has_digits {
        return Err(ValueError::Malformed);
    }
    // Number, optional single space, optional prefix, optional unit.
    let mut s = rest;
    let mut spaced = false;
    if let Some(r) = s.strip_prefix(' ') {
        s = r;
        spaced = true;
    }
    let (prefix_exp, unit) = leading_letter(s, false).unwrap_or((0, s));
    if !is_unit_or_empty(unit) || (spaced && s.is_empty()) {
        return Err(ValueError::Malformed);
    }
    finish(int, frac, exp.saturating_add(prefix_exp))
}

/// Build the value `int.frac × 10^exp` with one correctly rounded conversion, then range-check it.
fn finish(int: &str, frac: &str, exp: i64) -> Result<f64, ValueError> {
    const MAX_DIGITS: usize = 40;
    const _: () = assert!(MAX_DIGITS <= 64);
    let mut buf: heapless::String<64> = heapless::String::new();
    let mut significant = false;
    let mut taken = 0usize;
    let mut dropped = 0i64;
    for b in int.bytes().chain(frac.bytes()) {
        if !significant && b == b'0' {
            continue;
        }
        significant = true;
        if taken < MAX_DIGITS {
            if buf.push(char::from(b)).is_err() {
                return Err(ValueError::Malformed);
            }
            taken += 1;
        } else {
            dropped += 1;
        }
    }
    if !significant {
        return Ok(0.0);
    }
    let frac_len = i64::try_from(frac.len()).unwrap_or(i64::MAX);
    let total = exp
        .saturating_sub(frac_len)
        .saturating_add(dropped)
        .clamp(-1_000_000, 1_000_000);
    let v = decimal_to_f64(buf.as_bytes(), total);
    if !v.is_finite() {
        return Err(ValueError::NotFinite);
    }
    if v == 0.0 || !in_range(v) {
        return Err(ValueError::OutOfRange);
    }
    Ok(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_fields_own_unit_is_accepted_and_another_refused() {
        // Issue 11: `--rc 3.3mA` was read as 3.3 mΩ, `--cin 10uV` and `--vcc 12A` accepted.
        for (text, unit) in [
            ("3.3mA", Unit::Ohm),
            ("10uV", Unit::Farad),
            ("12A", Unit::Volt),
            ("200V", Unit::Number),
        ] {
            assert_eq!(
                parse_value_in(text, unit),
                Err(ValueError::WrongUnit(unit)),
                "{text}"
            );
        }
        for t in [
            "4k7", "4.7kΩ", "4.7kohm", "4k7ohms", "4.7 kΩ", "4.7k", "4700",
        ] {
            assert_eq!(parse_value_in(t, Unit::Ohm), Ok(4700.0), "{t}");
        }
        assert_eq!(parse_value_in("10uF", Unit::Farad), Ok(10e-6));
        assert_eq!(parse_value_in("12V", Unit::Volt), Ok(12.0));
        assert_eq!(parse_value_in("2mA", Unit::Ampere), Ok(2e-3));
        assert_eq!(parse_value_in("1kHz", Unit::Hertz), Ok(1e3));
        assert_eq!(parse_signed_in("-1.2mV", Unit::Volt), Ok(-1.2e-3));
        assert!(ValueError::WrongUnit(Unit::Ohm).to_string().contains("ohm"));
    }

    #[test]
    fn parse_basic_forms() {
        // IEC 60062 value codes, from memory; SI prefixes per SI brochure.
        assert_eq!(parse_value("4k7"), Ok(4700.0));
        assert_eq!(parse_value("R47"), Ok(0.47));
        assert_eq!(parse_value("470R"), Ok(470.0));
        assert_eq!(parse_value("4n7"), Ok(4.7e-9));
        assert_eq!(parse_value("4.7k"), Ok(4700.0));
        assert_eq!(parse_value("100nF"), Ok(1e-7));
        assert_eq!(parse_value("10 µF"), Ok(1e-5));
        assert_eq!(parse_signed("-1.2m"), Ok(-1.2e-3));
        assert_eq!(parse_value("-1"), Err(ValueError::Negative));
        assert_eq!(parse_value("4k7k"), Err(ValueError::Malformed));
        assert_eq!(parse_value("1e-400"), Err(ValueError::OutOfRange));
        assert_eq!(parse_percent("0.5 %"), Ok(0.5));
    }

    /// SI prefixes femto and tera (SI Brochure, 9th edition, from memory): `--is 10fA` is an
    /// example of docs/interface.md and was refused as not a value.
    #[test]
    fn femto_and_tera() {
        assert_eq!(parse_value("10f"), Ok(1e-14));
        assert_eq!(parse_value_in("10fA", Unit::Ampere), Ok(1e-14));
        assert_eq!(parse_value("4f7"), Ok(4.7e-15));
        assert_eq!(parse_value_in("1T", Unit::Ohm), Ok(1e12));
        assert_eq!(parse_value_in("1TΩ", Unit::Ohm), Ok(1e12));
        // `F` stays the farad, and a value below 1e-15 stays out of range.
        assert_eq!(parse_value_in("10F", Unit::Farad), Ok(10.0));
        assert_eq!(parse_value("0.5f"), Err(ValueError::OutOfRange));
        assert_eq!(
            parse_value_in("10fV", Unit::Ampere),
            Err(ValueError::WrongUnit(Unit::Ampere))
        );
    }
}
