//! Faults in plain words for the technician, and the measurement that tells equivalent faults
//! apart: one wording for the command line and the instrument's console.

use core::fmt;

use crate::diagnose::{Hypothesis, ResistorMode, Suspect};
use crate::stage::{Capacitor, DeviceFault, Resistor, Stage};
use crate::units::Eng;

/// A fault in plain words for the technician: "RC reads like 47 kΩ instead of 4.7 kΩ: a decade
/// slip".
#[derive(Debug, Clone, Copy)]
pub struct FaultWords<'a> {
    /// The stage as designed (for the nominal values).
    pub stage: &'a Stage,
    /// The fault.
    pub hypothesis: &'a Hypothesis,
}

impl fmt::Display for FaultWords<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let h = self.hypothesis;
        match h.suspect {
            Suspect::Good => {
                f.write_str("the readings are close to a good board: re-probe and measure again")
            }
            Suspect::Resistor(r, mode) => {
                let nominal = self.stage.resistor(r);
                let name = r.name();
                match (mode, h.estimate) {
                    (ResistorMode::Open, _) => {
                        write!(f, "{name} open (missing, cracked or a dry joint)")
                    }
                    (ResistorMode::Short, _) => {
                        write!(f, "{name} shorted (a solder bridge or a wrong part)")
                    }
                    (_, Some(est)) => {
                        let ratio = est / nominal;
                        let why = if (0.08..0.125).contains(&ratio) || (8.0..12.5).contains(&ratio)
                        {
                            ": a decade slip"
                        } else if (0.4..0.6).contains(&ratio) {
                            ": about half its value"
                        } else if (1.7..2.4).contains(&ratio) {
                            ": about twice its value"
                        } else {
                            ""
                        };
                        write!(
                            f,
                            "{name} reads like {} instead of {}{why}",
                            Eng::new(est, "Ω"),
                            Eng::new(nominal, "Ω")
                        )
                    }
                    (ResistorMode::Low, None) => write!(f, "{name} too low"),
                    (ResistorMode::High, None) => write!(f, "{name} too high"),
                }
            }
            Suspect::Capacitor(c, mode) => {
                let name = c.name();
                match (mode, h.estimate, self.stage.capacitor(c)) {
                    (ResistorMode::Open, _, _) => write!(
                        f,
                        "{name} open (missing, a dry joint or a broken lead): {}",
                        match c {
                            Capacitor::Ce => "the emitter is not bypassed",
                            _ => "no signal passes",
                        }
                    ),
                    (ResistorMode::Short, _, _) => write!(
                        f,
                        "{name} shorted (a solder bridge or a broken-down capacitor)"
                    ),
                    (_, Some(est), Some(p)) => write!(
                        f,
                        "{name} acts like {} instead of {}",
                        Eng::new(est, "F"),
                        Eng::new(p.value, "F")
                    ),
                    (ResistorMode::High, ..) => write!(f, "{name} too large"),
                    _ => write!(f, "{name} too small"),
                }
            }
            Suspect::Device(d) => f.write_str(match d {
                DeviceFault::BeOpen => "Q: base-emitter junction or emitter lead open",
                DeviceFault::BcOpen => "Q: base-collector junction or collector lead open",
                DeviceFault::BeShort => "Q: base shorted to emitter",
                DeviceFault::BcShort => "Q: base shorted to collector",
                DeviceFault::CeShort => "Q: collector shorted to emitter",
                DeviceFault::Reversed => {
                    "Q fitted the wrong way round (collector and emitter swapped)"
                }
            }),
        }
    }
}

/// The next measurement that tells a group of equivalent faults apart: "power off, measure RE1
/// and RE2".
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SeparatingStep {
    parts: heapless::Vec<Resistor, 5>,
    caps: heapless::Vec<Capacitor, 3>,
    transistor: bool,
}

impl SeparatingStep {
    /// The step for the faults `group` (resistors in first-seen order).
    pub fn of(group: impl IntoIterator<Item = Suspect>) -> Self {
        let mut parts: heapless::Vec<Resistor, 5> = heapless::Vec::new();
        let mut caps: heapless::Vec<Capacitor, 3> = heapless::Vec::new();
        let mut transistor = false;
        for s in group {
            match s {
                Suspect::Resistor(r, _) if !parts.contains(&r) => {
                    let _ = parts.push(r);
                }
                Suspect::Capacitor(c, _) if !caps.contains(&c) => {
                    let _ = caps.push(c);
                }
                Suspect::Device(_) => transistor = true,
                _ => {}
            }
        }
        Self {
            parts,
            caps,
            transistor,
        }
    }
}

impl fmt::Display for SeparatingStep {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("power off")?;
        let n = self.parts.len();
        for (k, r) in self.parts.iter().enumerate() {
            let sep = match k {
                0 => ", measure ",
                _ if k + 1 == n => " and ",
                _ => ", ",
            };
            write!(f, "{sep}{}", r.name())?;
        }
        let n = self.caps.len();
        for (k, c) in self.caps.iter().enumerate() {
            let sep = match k {
                0 if self.parts.is_empty() => ", lift ",
                0 => "; lift ",
                _ if k + 1 == n => " and ",
                _ => ", ",
            };
            write!(f, "{sep}{}", c.name())?;
        }
        if n > 0 {
            f.write_str(if n == 1 {
                " and measure its capacitance"
            } else {
                " and measure their capacitance"
            })?;
        }
        if self.transistor {
            f.write_str(", check Q's junctions with a diode test and its orientation")?;
        }
        Ok(())
    }
}
