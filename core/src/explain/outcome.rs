//! The separating measurements in words: the group's action for its first line ([`Action`])
//! and what each result means ([`Outcome`]), one line each under it.

use core::fmt;

use super::group::{Group, Member, Step, Way};
use crate::diagnose::{ResistorMode, Suspect};
use crate::stage::{Capacitor, Resistor, Stage};
use crate::units::Eng;

/// The members `keep` takes, as a list: "R1 open, R1 too high or R2 too low".
pub(super) fn write_names(
    f: &mut fmt::Formatter<'_>,
    members: &[Member],
    keep: fn(&Member) -> bool,
) -> fmt::Result {
    let n = members.iter().filter(|m| keep(m)).count();
    for (k, m) in members.iter().filter(|m| keep(m)).enumerate() {
        let sep = match k {
            0 => "",
            _ if k + 1 == n => " or ",
            _ => ", ",
        };
        write!(f, "{sep}{m}")?;
    }
    Ok(())
}

pub(super) fn any(_: &Member) -> bool {
    true
}

pub(super) fn is_ce(m: &Member) -> bool {
    matches!(
        m,
        Member::CeShorted | Member::CeLeaky | Member::Fault(Suspect::Capacitor(Capacitor::Ce, _))
    )
}

pub(super) fn cap_open(m: &Member) -> bool {
    matches!(m, Member::Fault(Suspect::Capacitor(_, ResistorMode::Open)))
}

pub(super) fn cap_small(m: &Member) -> bool {
    matches!(m, Member::Fault(Suspect::Capacitor(_, ResistorMode::Low)))
}

pub(super) fn cap_other(m: &Member) -> bool {
    matches!(
        m,
        Member::Fault(Suspect::Capacitor(
            _,
            ResistorMode::Short | ResistorMode::High
        ))
    )
}

pub(super) fn not_ce(m: &Member) -> bool {
    !is_ce(m)
}

/// The separating action of a group, for its first line.
#[derive(Debug, Clone, Copy)]
pub struct Action<'a> {
    pub(super) group: &'a Group,
}

impl fmt::Display for Action<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let steps = &self.group.steps;
        let plain = match steps.as_slice() {
            [Step::Measure(r, _)] => Some(r.name()),
            [Step::DiodeTest] => Some("Q"),
            _ => None,
        };
        match plain {
            Some("Q") => {
                return f.write_str("either way Q is at fault: power off and diode-test it")
            }
            Some(part) => {
                return write!(f, "either way {part} is at fault: power off and measure it")
            }
            None => {}
        }
        // The first measurement; the lines under it say what comes next.
        let Some(first) = steps.first() else {
            return Ok(());
        };
        write!(f, "power off, {}", StepWords(*first))?;
        if matches!(first, Step::Measure(..) | Step::LiftCe) {
            f.write_str(" (take the higher of both lead directions)")?;
        }
        Ok(())
    }
}

/// One separating measurement in words: "in circuit measure R2".
#[derive(Debug, Clone, Copy)]
struct StepWords(Step);

impl fmt::Display for StepWords {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.0 {
            Step::Measure(r, _) => write!(f, "in circuit measure {}", r.name()),
            Step::DiodeTest => f.write_str("diode-test Q in circuit"),
            Step::LiftCe => f.write_str("lift one end of CE and measure RE2"),
            Step::Capacitance(c) => {
                write!(
                    f,
                    "lift one end of {} and measure its capacitance",
                    c.name()
                )
            }
        }
    }
}

/// What one result of a separating measurement means.
#[derive(Debug, Clone, Copy)]
pub struct Outcome<'a> {
    pub(super) group: &'a Group,
    pub(super) stage: &'a Stage,
    /// Which step of the group's.
    pub(super) k: usize,
}

impl fmt::Display for Outcome<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        self.result(f)?;
        let steps = &self.group.steps;
        let n = steps.len();
        match steps.get(self.k + 1) {
            Some(s) if !(self.group.last_free() && self.k + 2 == n) => {
                write!(f, "; otherwise {}", StepWords(*s))
            }
            _ => Ok(()),
        }
    }
}

impl Outcome<'_> {
    fn result(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let steps = &self.group.steps;
        let Some(&step) = steps.get(self.k) else {
            return Ok(());
        };
        let settled = self.group.settled_by(step);
        if self.group.last_free() && self.k + 1 == steps.len() {
            f.write_str("otherwise: ")?;
            return write_names(f, &settled, any);
        }
        match step {
            Step::Measure(r, way) => {
                let p = self.stage.part(r);
                let (word, edge) = match way {
                    Way::Low => ("below", p.value * (1.0 - p.tol)),
                    Way::High => ("above", p.value * (1.0 + p.tol)),
                    Way::Both => ("off", p.value),
                };
                write!(f, "{} {word} {}: ", r.name(), Eng::new(edge, "Ω"))?;
            }
            Step::DiodeTest => f.write_str("a junction open, shorted or the wrong way round: ")?,
            Step::LiftCe => {
                let p = self.stage.part(Resistor::Re2);
                write!(
                    f,
                    "RE2 at least {} with CE lifted: ",
                    Eng::new(p.value * (1.0 - p.tol), "Ω")
                )?;
                write_names(f, &settled, is_ce)?;
                f.write_str("; still below: ")?;
                write_names(f, &settled, not_ce)?;
                return f.write_str(" (or a bridge across it)");
            }
            Step::Capacitance(c) => return cap_result(f, self.stage, c, &settled),
        }
        write_names(f, &settled, any)
    }
}

/// What a capacitance reading of `c` (one end lifted) means for the members it settles: an
/// open capacitor reads next to nothing, a too small one below its band, a shorted one reads as
/// a short on the ohms range (a too large one above its band).
fn cap_result(
    f: &mut fmt::Formatter<'_>,
    stage: &Stage,
    c: Capacitor,
    settled: &[Member],
) -> fmt::Result {
    let name = c.name();
    let mut first = true;
    let mut sep = |f: &mut fmt::Formatter<'_>| -> fmt::Result {
        let s = if first { "" } else { "; " };
        first = false;
        f.write_str(s)
    };
    if settled.iter().any(cap_open) {
        sep(f)?;
        write!(f, "{name} reads next to nothing: ")?;
        write_names(f, settled, cap_open)?;
    }
    if settled.iter().any(cap_small) {
        sep(f)?;
        match stage.capacitor(c) {
            Some(p) => write!(
                f,
                "{name} below {}: ",
                Eng::new(p.value * (1.0 - p.tol), "F")
            )?,
            None => write!(f, "{name} below its value: ")?,
        }
        write_names(f, settled, cap_small)?;
    }
    if settled.iter().any(cap_other) {
        sep(f)?;
        write!(f, "{name} shorted on the ohms range or above its band: ")?;
        write_names(f, settled, cap_other)?;
    }
    Ok(())
}
