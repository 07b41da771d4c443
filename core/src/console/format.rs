//! The one formatting module of the console: how a value prints for a program (machine mode:
//! SI base units, shortest round-trip decimals) and for a person (human mode: SI prefixes,
//! units, percentages), and the field writer that prints each item of a data line once and lets
//! the mode choose the layout.

use core::fmt;
use core::fmt::Write as _;

use super::reply::{Reply, Text};
use crate::stage::{Capacitor, Polarity};
use crate::units::{Eng, Fixed, Full};

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

/// A polarity's word in data lines: `npn` or `pnp`.
pub(super) fn polarity_name(p: Polarity) -> &'static str {
    match p {
        Polarity::Npn => "npn",
        Polarity::Pnp => "pnp",
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

/// How one value of a data line prints: for a program (machine mode) and for a person.
#[derive(Clone, Copy)]
pub(super) enum Val<'a> {
    /// A quantity in its SI base unit: [`Num`] for a program, engineering notation with the
    /// unit (`4.7 kΩ`) for a person.
    Si(f64, &'static str),
    /// A quantity or nothing: [`Opt`] for a program, [`Human`] for a person (`none` either way
    /// when absent).
    OptSi(Option<f64>, &'static str),
    /// A number that prints as [`Num`] for both.
    Num(f64),
    /// A number: [`Num`] for a program, with this many decimals for a person.
    Fixed(f64, u8),
    /// A number or nothing: [`Opt`] for a program, with this many decimals or `-` for a person.
    OptFixed(Option<f64>, u8),
    /// A fraction: [`Num`] for a program, a percentage ([`Pct`]) for a person.
    Pct(f64),
    /// A word, the same for both.
    Word(&'a str),
    /// A word as given for a program, in capitals for a person.
    Upper(&'a str),
    /// A word for a program and another for a person.
    Words(&'a str, &'a str),
    /// Anything printable, for a person only (a program's line leaves it out).
    Label(&'a dyn fmt::Display),
    /// A part value: [`Num`] for a program, its code (`4k7`) for a person.
    #[cfg_attr(
        not(feature = "synthesis"),
        expect(dead_code, reason = "the design search's candidates are its only use")
    )]
    Code(f64, &'a str),
    /// A design hash, 16 hex digits for both.
    Hash(u64),
    /// Anything printable, the same for both.
    Shown(&'a dyn fmt::Display),
    /// Yes or no: `1` or `0` for a program; for a person the first text for yes, the second
    /// for no.
    Flag(bool, &'static str, &'static str),
    /// The end of a program's line: the fields after it start the next one.
    Break,
}

impl Val<'_> {
    fn machine(&self, t: &mut Text) {
        let _ = match *self {
            Val::Si(v, _) | Val::Num(v) | Val::Fixed(v, _) | Val::Pct(v) | Val::Code(v, _) => {
                write!(t, "{}", Num(v))
            }
            Val::OptSi(v, _) | Val::OptFixed(v, _) => write!(t, "{}", Opt(v)),
            Val::Word(w) | Val::Upper(w) | Val::Words(w, _) => t.write_str(w),
            Val::Hash(h) => write!(t, "{h:016x}"),
            Val::Shown(s) => write!(t, "{s}"),
            Val::Flag(on, _, _) => write!(t, "{}", u8::from(on)),
            Val::Label(_) | Val::Break => Ok(()),
        };
    }

    /// For a person, left-aligned in `w` characters where the value's own printing pads.
    fn human(&self, t: &mut Text, w: usize) {
        let _ = match *self {
            Val::Si(v, u) => write!(t, "{:<w$}", Eng::new(v, u)),
            Val::OptSi(v, u) => write!(t, "{:<w$}", Human(v, u)),
            Val::Num(v) => write!(t, "{:<w$}", Num(v)),
            Val::Fixed(v, d) => write!(t, "{:<w$}", Fixed(v, d)),
            Val::OptFixed(Some(v), d) => write!(t, "{:<w$}", Fixed(v, d)),
            Val::OptFixed(None, _) => write!(t, "{:<w$}", "-"),
            Val::Pct(v) => write!(t, "{:<w$}", Pct(v)),
            Val::Word(s) | Val::Words(_, s) | Val::Code(_, s) => write!(t, "{s:<w$}"),
            Val::Upper(s) => write!(t, "{:<w$}", Upper(s)),
            Val::Hash(h) => write!(t, "{h:016x}"),
            Val::Shown(s) | Val::Label(s) => write!(t, "{s:<w$}"),
            Val::Flag(on, yes, no) => t.write_str(if on { yes } else { no }),
            Val::Break => Ok(()),
        };
    }
}

/// One item of a data line: its key for a program (empty: the value stands alone, a line's
/// leading word) and its value.
pub(super) type Field<'a> = (&'a str, Val<'a>);

/// The field writer: each item of a reply given once, laid out by the mode. For a program the
/// fields in order as `key=value` separated by spaces, a new line at each [`Val::Break`]; for a
/// person the template `human`, where `{N}` is field N, `{N:W}` field N in W characters and a
/// line feed starts a new line (an empty template: no line for a person).
pub(super) fn lay_out(
    fields: &[Field<'_>],
    human: &str,
    machine: bool,
    emit: &mut dyn FnMut(&Text),
) {
    let mut t = Text::default();
    if machine {
        for (key, val) in fields {
            if let Val::Break = val {
                emit(&t);
                t = Text::default();
                continue;
            }
            if let Val::Label(_) = val {
                continue;
            }
            if !t.as_str().is_empty() {
                let _ = t.write_str(" ");
            }
            if !key.is_empty() {
                let _ = write!(t, "{key}=");
            }
            val.machine(&mut t);
        }
        emit(&t);
        return;
    }
    if human.is_empty() {
        return;
    }
    for line in human.split('\n') {
        let mut rest = line;
        while let Some((text, after)) = rest.split_once('{') {
            let _ = t.write_str(text);
            let (spec, tail) = after.split_once('}').unwrap_or((after, ""));
            let (n, w) = spec.split_once(':').unwrap_or((spec, "0"));
            let val = n
                .parse::<usize>()
                .ok()
                .and_then(|n| fields.get(n))
                .map(|(_, v)| *v);
            if let Some(v) = val {
                v.human(&mut t, w.parse().unwrap_or(0));
            }
            rest = tail;
        }
        let _ = t.write_str(rest);
        emit(&t);
        t = Text::default();
    }
}

impl<W: embedded_io::Write> Reply<'_, W> {
    /// Data lines of `fields` laid out by the mode ([`lay_out`]).
    pub(super) fn fields(&mut self, fields: &[Field<'_>], human: &str) {
        let machine = self.machine();
        lay_out(fields, human, machine, &mut |t| {
            if t.was_cut() {
                self.mark_cut();
            }
            self.data(format_args!("{}", t.as_str()));
        });
    }
}

#[cfg(test)]
mod tests {
    use super::{lay_out, Val};
    use std::string::String;
    use std::vec::Vec;

    fn lines(machine: bool, human: &str) -> Vec<String> {
        let fields = [
            ("", Val::Word("ac")),
            ("f", Val::Si(1500.0, "Hz")),
            ("", Val::Label(&"RL")),
            ("ok", Val::Flag(false, "", "   OUT")),
            ("", Val::Break),
            ("rl", Val::OptSi(None, "Ω")),
            ("tol", Val::Pct(0.05)),
        ];
        let mut out = Vec::new();
        lay_out(&fields, human, machine, &mut |t| {
            out.push(t.as_str().into())
        });
        out
    }

    /// Each field given once: a program gets `key=value` in SI base units with a line per
    /// break and no person-only text; a person gets the template, fields by index, padded.
    #[test]
    fn one_field_list_two_layouts() {
        assert_eq!(lines(true, "x"), ["ac f=1500 ok=0", "rl=none tol=0.05"]);
        assert_eq!(
            lines(false, "{2:4}|at {1:9}|{3}\n{5} ±{6}"),
            ["RL  |at 1.5 kHz  |   OUT", "none ±5 %"]
        );
        assert!(lines(false, "").is_empty());
    }
}
