//! The technician's listing of likely faults ([`listing`]), the listed fault ([`Listed`]) and the
//! faults a machine line names ([`suspect_of`]).

use core::fmt;

use heapless::Vec;

use super::{FaultWords, Group, GROUP_MAX};
use crate::diagnose::{Diagnosis, Hypothesis, ResistorMode, Suspect};
use crate::stage::{Capacitor, DeviceFault, Resistor, Stage};
use crate::units::{Eng, Fixed};

/// The last line of a listing whose actions measure resistors in circuit: what such a reading
/// proves (other parts of the board, such as loads on the supply rail, lie in parallel).
pub const IN_CIRCUIT: &str = "In circuit, parallel parts only lower a reading: above the band is \
sure; confirm a reading below it, or an 'otherwise', with one end lifted";

/// One listed fault: from a diagnosis, or from a machine `fault=` line.
#[derive(Debug, Clone, PartialEq)]
pub struct Listed {
    /// The fault.
    pub suspect: Suspect,
    /// The part's likely actual value for `low`/`high`, Ω.
    pub estimate: Option<f64>,
    /// Its score, 0..1.
    pub score: f64,
    /// The other faults with the same readings.
    pub same: Vec<Suspect, GROUP_MAX>,
    /// A further tone whose gain reading tells the group apart, Hz (the signal test's
    /// separating tone), if any.
    pub tone: Option<f64>,
}

impl Listed {
    /// A ranked hypothesis of `d` with its equivalents.
    pub fn of(d: &Diagnosis, h: &Hypothesis) -> Self {
        let mut same: Vec<Suspect, GROUP_MAX> = Vec::new();
        for e in d.equivalents(h).filter(|e| e.suspect.is_fault()) {
            let _ = same.push(e.suspect);
        }
        Self {
            suspect: h.suspect,
            estimate: h.estimate,
            score: h.score,
            same,
            tone: None,
        }
    }

    /// The same, with the further tone that tells its group apart, Hz.
    pub fn with_tone(mut self, tone: Option<f64>) -> Self {
        self.tone = tone;
        self
    }
}

/// The technician's listing of likely faults, one call of `line` per line (no line end; at
/// most about 190 bytes each): a heading, then per fault or group of faults with the same
/// readings a numbered first line (the group named with its separating action), the meaning of
/// each result indented under it, and for a fitted value the closest fit. Members of a group
/// listed later are not listed again; the group's percentage is the sum of its listed members.
pub fn listing(
    stage: &Stage,
    explained: bool,
    items: &[Listed],
    line: &mut dyn FnMut(fmt::Arguments<'_>),
) {
    if explained {
        line(format_args!("Likely faults:"));
    } else {
        line(format_args!(
            "No single fault explains these readings (two faults, or a wrong transistor type?). \
             Nearest:"
        ));
    }
    let mut number = 0u32;
    let mut in_circuit = false;
    for (k, it) in items.iter().enumerate() {
        let earlier = items.get(..k).unwrap_or(&[]);
        // Groups are symmetric: a later member is in the earlier one's list.
        let named = earlier.iter().any(|e| e.same.contains(&it.suspect));
        if !cfg!(feature = "fault-detail") {
            // The budget instrument: each fault in words (a shorted or low RE2 names CE and
            // says to lift it), and the other members of a group named once.
            line(format_args!(
                "{}. {} ({} %)",
                k + 1,
                FaultWords {
                    stage,
                    suspect: it.suspect,
                    estimate: it.estimate,
                },
                Fixed(100.0 * it.score, 0)
            ));
            if !named && !it.same.is_empty() {
                line(format_args!(
                    "   same readings as {}",
                    MachineNames(&it.same)
                ));
            }
            continue;
        }
        if named {
            continue;
        }
        number += 1;
        let group = Group::of(core::iter::once(it.suspect).chain(it.same.iter().copied()));
        let score: f64 = it.score
            + items
                .iter()
                .skip(k + 1)
                .filter(|o| it.same.contains(&o.suspect))
                .map(|o| o.score)
                .sum::<f64>();
        let pct = Fixed(100.0 * score, 0);
        let words = FaultWords {
            stage,
            suspect: it.suspect,
            estimate: it.estimate,
        };
        if !group.is_shared() {
            line(format_args!("{number}. {words} ({pct} %)"));
            continue;
        }
        line(format_args!(
            "{number}. {group}: same readings ({pct} %); {}",
            group.action()
        ));
        if !cfg!(feature = "fault-detail") {
            continue;
        }
        in_circuit |= group.measures_in_circuit();
        for o in group.outcomes(stage) {
            line(format_args!("   {o}"));
        }
        if let Some(f) = it.tone {
            line(format_args!(
                "   a gain reading at {} tells them apart too",
                Eng::new(f, "Hz")
            ));
        }
        if it.estimate.is_some() {
            line(format_args!("   closest fit: {words}"));
        }
    }
    if in_circuit {
        line(format_args!("{IN_CIRCUIT}"));
    }
}

/// Faults by their machine names: "R1 open, R2 short".
struct MachineNames<'a>(&'a [Suspect]);

impl fmt::Display for MachineNames<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (k, s) in self.0.iter().enumerate() {
            let sep = if k == 0 { "" } else { ", " };
            write!(f, "{sep}{} {}", s.part(), s.mode())?;
        }
        Ok(())
    }
}

/// The fault a machine line names: part `R1 R2 RC RE1 RE2 CIN COUT CE Q`, mode
/// `open short low high` or `be_open bc_open be_short bc_short ce_short reversed` (case as
/// sent).
pub fn suspect_of(part: &str, mode: &str) -> Option<Suspect> {
    if part == "Q" {
        return DeviceFault::ALL
            .into_iter()
            .find(|d| d.name() == mode)
            .map(Suspect::Device);
    }
    let m = ResistorMode::ALL.into_iter().find(|m| m.name() == mode)?;
    if let Some(c) = Capacitor::ALL.into_iter().find(|c| c.name() == part) {
        return Some(Suspect::Capacitor(c, m));
    }
    let r = Resistor::ALL.into_iter().find(|r| r.name() == part)?;
    Some(Suspect::Resistor(r, m))
}
