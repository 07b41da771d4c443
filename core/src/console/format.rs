//! The one formatting module of the console: how a value prints for a program (machine mode:
//! SI base units, shortest round-trip decimals) and for a person (human mode: SI prefixes,
//! units, percentages), and the field writer that prints each item of a data line once and lets
//! the mode choose the layout.

use core::fmt;

use super::reply::Text;
use crate::stage::Capacitor;
use crate::units::{Eng, Full};

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

pub(super) fn cap_name(c: Capacitor) -> &'static str {
    match c {
        Capacitor::Cin => "CIN",
        Capacitor::Cout => "COUT",
        Capacitor::Ce => "CE",
    }
}

pub(super) fn lower(name: &str) -> Text {
    let mut t = Text::default();
    for ch in name.chars() {
        let _ = t.0.push(ch.to_ascii_lowercase());
    }
    t
}
