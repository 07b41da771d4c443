//! A group of faults with the same readings ([`Group`]) and the separating measurements that
//! tell its members apart with the board in circuit, in the order a technician takes them.

use core::fmt;

use heapless::Vec;

use super::outcome::{any, write_names, Action, Outcome};
use super::GROUP_MAX;
use crate::diagnose::{ResistorMode, Suspect};
use crate::stage::{Capacitor, DeviceFault, Resistor, Stage};

/// One member of a group: a fault of the diagnosis, or the bypass capacitor CE, which the DC
/// diagnosis cannot tell from RE2.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Member {
    /// A fault of the single-fault dictionary.
    Fault(Suspect),
    /// CE shorted: the same DC readings as RE2 shorted.
    CeShorted,
    /// CE leaky (a partial short): the same DC readings as RE2 too low.
    CeLeaky,
}

impl Member {
    fn mode_words(m: ResistorMode) -> &'static str {
        match m {
            ResistorMode::Open => "open",
            ResistorMode::Short => "shorted",
            ResistorMode::Low => "too low",
            ResistorMode::High => "too high",
        }
    }
}

impl fmt::Display for Member {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::CeShorted => f.write_str("CE shorted"),
            Self::CeLeaky => f.write_str("CE leaky"),
            Self::Fault(Suspect::Good) => f.write_str("a good board"),
            Self::Fault(Suspect::Resistor(r, m)) => {
                write!(f, "{} {}", r.name(), Self::mode_words(*m))
            }
            Self::Fault(Suspect::Capacitor(c, m)) => {
                let words = match m {
                    ResistorMode::Open => "open",
                    ResistorMode::Short => "shorted",
                    ResistorMode::Low => "too small",
                    ResistorMode::High => "too large",
                };
                write!(f, "{} {words}", c.name())
            }
            Self::Fault(Suspect::Device(d)) => f.write_str(match d {
                DeviceFault::BeOpen => "Q base-emitter open",
                DeviceFault::BcOpen => "Q base-collector open",
                DeviceFault::BeShort => "Q base-emitter shorted",
                DeviceFault::BcShort => "Q base-collector shorted",
                DeviceFault::CeShort => "Q collector-emitter shorted",
                DeviceFault::Reversed => "Q reversed",
            }),
        }
    }
}

/// Which way a part's suspected faults go.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Way {
    /// Only low or shorted: a reading within its band clears it.
    Low,
    /// Only high or open: a reading above its band convicts it.
    High,
    /// Both.
    Both,
}

/// One separating measurement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Step {
    /// Measure this resistor in circuit.
    Measure(Resistor, Way),
    /// Diode-test the transistor in circuit.
    DiodeTest,
    /// Lift one end of CE and measure RE2.
    LiftCe,
    /// Lift one end of this capacitor and measure its capacitance.
    Capacitance(Capacitor),
}

/// Faults with the same readings, and how to tell them apart with the board in circuit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Group {
    pub(super) members: Vec<Member, GROUP_MAX>,
    /// The separating measurements, in order.
    pub(super) steps: Vec<Step, 8>,
}

impl Group {
    /// The group of `faults` (best first; the good board is left out). A shorted or low RE2
    /// brings CE shorted or leaky in with it.
    pub fn of(faults: impl IntoIterator<Item = Suspect>) -> Self {
        let mut members: Vec<Member, GROUP_MAX> = Vec::new();
        let (mut shorted, mut leaky) = (false, false);
        for s in faults {
            if !s.is_fault() || members.contains(&Member::Fault(s)) {
                continue;
            }
            let _ = members.push(Member::Fault(s));
            if let Suspect::Resistor(Resistor::Re2, m) = s {
                shorted |= m == ResistorMode::Short;
                leaky |= m == ResistorMode::Low;
            }
        }
        // A real CE short of the signal test stands in for the implied one.
        let ce_short = Member::Fault(Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short));
        if shorted && !members.contains(&ce_short) {
            let _ = members.push(Member::CeShorted);
        }
        if leaky {
            let _ = members.push(Member::CeLeaky);
        }
        let mut g = Self {
            members,
            steps: Vec::new(),
        };
        g.steps = g.plan();
        g
    }

    /// Its separating action measures a resistor in circuit (see [`IN_CIRCUIT`](super::IN_CIRCUIT)).
    pub fn measures_in_circuit(&self) -> bool {
        self.steps.len() > 1 && self.steps.iter().any(|s| matches!(s, Step::Measure(..)))
    }

    /// More than one fault reads alike: the technician must tell them apart.
    pub fn is_shared(&self) -> bool {
        self.members.len() > 1
    }

    /// The members, best first (CE after the faults of the diagnosis).
    pub fn members(&self) -> &[Member] {
        &self.members
    }

    /// CE is in the group shorted or leaky, beside a shorted or low RE2: lifting CE and
    /// measuring RE2 settles both.
    pub(super) fn has_ce(&self) -> bool {
        let re2 = self.members.iter().any(|m| {
            matches!(
                m,
                Member::Fault(Suspect::Resistor(
                    Resistor::Re2,
                    ResistorMode::Short | ResistorMode::Low
                ))
            )
        });
        self.members.iter().any(|m| {
            matches!(m, Member::CeShorted | Member::CeLeaky)
                || (re2
                    && *m == Member::Fault(Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short)))
        })
    }

    fn way(&self, r: Resistor) -> Way {
        let (mut low, mut high) = (false, false);
        for m in &self.members {
            if let Member::Fault(Suspect::Resistor(p, mode)) = m {
                if *p == r {
                    match mode {
                        ResistorMode::Low | ResistorMode::Short => low = true,
                        ResistorMode::High | ResistorMode::Open => high = true,
                    }
                }
            }
        }
        match (low, high) {
            (true, false) => Way::Low,
            (false, true) => Way::High,
            _ => Way::Both,
        }
    }

    /// The measurements in order: parts suspected low first (a reading at its value clears
    /// them), then the others, then the transistor, then CE lifted (solder work) last.
    fn plan(&self) -> Vec<Step, 8> {
        let mut v: Vec<Step, 8> = Vec::new();
        let ce = self.has_ce();
        let mut device = false;
        for want in [Way::Low, Way::High, Way::Both] {
            for (k, m) in self.members.iter().enumerate() {
                match m {
                    Member::Fault(Suspect::Resistor(r, _)) => {
                        let first =
                            !self.members.iter().take(k).any(
                                |o| matches!(o, Member::Fault(Suspect::Resistor(p, _)) if p == r),
                            );
                        if first && !(ce && *r == Resistor::Re2) && self.way(*r) == want {
                            let _ = v.push(Step::Measure(*r, want));
                        }
                    }
                    Member::Fault(Suspect::Device(_)) => device = true,
                    _ => {}
                }
            }
        }
        if device {
            let _ = v.push(Step::DiodeTest);
        }
        // Capacitors in drawing order; a shorted CE is settled by lifting it for RE2.
        for c in Capacitor::ALL {
            let any = self.members.iter().any(|m| match m {
                Member::Fault(Suspect::Capacitor(p, mode)) => {
                    *p == c && !(ce && c == Capacitor::Ce && *mode == ResistorMode::Short)
                }
                _ => false,
            });
            if any {
                let _ = v.push(Step::Capacitance(c));
            }
        }
        if ce {
            let _ = v.push(Step::LiftCe);
        }
        v
    }

    /// The members a step settles.
    pub(super) fn settled_by(&self, step: Step) -> Vec<Member, GROUP_MAX> {
        self.members
            .iter()
            .copied()
            .filter(|m| match (step, m) {
                (Step::Measure(r, _), Member::Fault(Suspect::Resistor(p, _))) => *p == r,
                (Step::DiodeTest, Member::Fault(Suspect::Device(_))) => true,
                (Step::LiftCe, Member::Fault(Suspect::Resistor(Resistor::Re2, _))) => true,
                (Step::LiftCe, Member::CeShorted | Member::CeLeaky) => true,
                (
                    Step::LiftCe,
                    Member::Fault(Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short)),
                ) => true,
                (Step::Capacitance(c), Member::Fault(Suspect::Capacitor(p, mode))) => {
                    *p == c
                        && !(c == Capacitor::Ce && *mode == ResistorMode::Short && self.has_ce())
                }
                _ => false,
            })
            .collect()
    }

    /// The separating action for the first line: "power off, lift one end of CE and measure
    /// RE2 (take the higher of both lead directions)"; the lines under it give the next ones.
    pub fn action(&self) -> Action<'_> {
        Action { group: self }
    }

    /// What each result of the action means, one line each (without indentation): "RE1 above
    /// 231 Ω: RE1 open", ..., "otherwise: RE2 open".
    pub fn outcomes<'a>(&'a self, stage: &'a Stage) -> impl Iterator<Item = Outcome<'a>> + 'a {
        // One part either way: nothing to tell apart.
        let n = match self.steps.as_slice() {
            [Step::Measure(..) | Step::DiodeTest] => 0,
            s => s.len(),
        };
        (0..n).map(move |k| Outcome {
            group: self,
            stage,
            k,
        })
    }

    /// The last plain step needs no measurement: it is what remains.
    pub(super) fn last_free(&self) -> bool {
        matches!(self.steps.last(), Some(Step::Measure(..) | Step::DiodeTest))
    }
}

impl fmt::Display for Group {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write_names(f, &self.members, any)
    }
}
