//! A fault in plain words for the technician: "RC reads like 47 kΩ instead of 4.7 kΩ: a decade
//! slip".

use core::fmt;

use crate::diagnose::{Hypothesis, ResistorMode, Suspect};
use crate::stage::{Capacitor, DeviceFault, Resistor, Stage};
use crate::units::Eng;

/// Said after a shorted or low RE2: a shorted or leaky CE across it gives the same readings, and
/// RE2 reads low in circuit through it.
const CE_NOTE: &str =
    ", or CE shorted or leaky (same readings): lift one end of CE before measuring RE2";

/// A fault in plain words for the technician: "RC reads like 47 kΩ instead of 4.7 kΩ: a decade
/// slip".
#[derive(Debug, Clone, Copy)]
pub struct FaultWords<'a> {
    /// The stage as designed (for the nominal values).
    pub stage: &'a Stage,
    /// The fault.
    pub suspect: Suspect,
    /// The part's likely actual value for `low`/`high`, Ω.
    pub estimate: Option<f64>,
}

impl<'a> FaultWords<'a> {
    /// The words of a ranked hypothesis.
    pub fn of(stage: &'a Stage, h: &Hypothesis) -> Self {
        Self {
            stage,
            suspect: h.suspect,
            estimate: h.estimate,
        }
    }
}

impl fmt::Display for FaultWords<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.suspect {
            Suspect::Good => {
                f.write_str("the readings are close to a good board: re-probe and measure again")
            }
            Suspect::Resistor(r, mode) => {
                let nominal = self.stage.resistor(r);
                let name = r.name();
                match (mode, self.estimate) {
                    (ResistorMode::Open, _) => {
                        write!(f, "{name} open (missing, cracked or a dry joint)")
                    }
                    (ResistorMode::Short, _) => {
                        write!(f, "{name} shorted (a solder bridge or a wrong part)")?;
                        if r == Resistor::Re2 {
                            f.write_str(CE_NOTE)?;
                        }
                        Ok(())
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
                        )?;
                        if r == Resistor::Re2 && mode == ResistorMode::Low {
                            f.write_str(CE_NOTE)?;
                        }
                        Ok(())
                    }
                    (ResistorMode::Low, None) => write!(f, "{name} too low"),
                    (ResistorMode::High, None) => write!(f, "{name} too high"),
                }
            }
            Suspect::Capacitor(c, mode) => {
                let name = c.name();
                match (mode, self.estimate, self.stage.capacitor(c)) {
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
