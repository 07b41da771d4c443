//! The single-fault dictionary: what may be wrong ([`Suspect`]), one ranked hypothesis with its
//! fit ([`Hypothesis`]) and the ranked list ([`Diagnosis`]).

use heapless::Vec;

use super::{CAPACITY, GAIN_SLOTS};
use crate::stage::{Capacitor, DeviceFault, Resistor, Stage};

/// How a resistor is wrong.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ResistorMode {
    /// Not connected (infinite resistance).
    Open,
    /// Shorted (zero ohms).
    Short,
    /// Below its tolerance band.
    Low,
    /// Above its tolerance band.
    High,
}

impl ResistorMode {
    /// The machine name: "open", "short", "low", "high".
    pub fn name(self) -> &'static str {
        match self {
            Self::Open => "open",
            Self::Short => "short",
            Self::Low => "low",
            Self::High => "high",
        }
    }

    /// Every mode.
    pub const ALL: [ResistorMode; 4] = [Self::Open, Self::Short, Self::Low, Self::High];
}

/// One hypothesis of the dictionary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Suspect {
    /// No fault: a good board.
    Good,
    /// A resistor fault.
    Resistor(Resistor, ResistorMode),
    /// A transistor fault.
    Device(DeviceFault),
    /// A capacitor fault (the modes mean the same as for a resistor; a value in F).
    Capacitor(Capacitor, ResistorMode),
}

impl Suspect {
    /// The part's machine name: "R1", "R2", "RC", "RE1", "RE2", "Q", "CIN", "COUT", "CE" (or
    /// "none" for a good board).
    pub fn part(self) -> &'static str {
        match self {
            Self::Good => "none",
            Self::Resistor(r, _) => r.name(),
            Self::Device(_) => "Q",
            Self::Capacitor(c, _) => c.name(),
        }
    }

    /// The mode's machine name ("open", ..., "be_open", ...; "none" for a good board).
    pub fn mode(self) -> &'static str {
        match self {
            Self::Good => "none",
            Self::Resistor(_, m) | Self::Capacitor(_, m) => m.name(),
            Self::Device(d) => d.name(),
        }
    }

    /// A fault (not the good board).
    pub fn is_fault(self) -> bool {
        !matches!(self, Self::Good)
    }
}

/// One ranked hypothesis with its fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hypothesis {
    /// What is supposed wrong.
    pub suspect: Suspect,
    /// Likelihood-like score, 0..1, normalised over all hypotheses of the diagnosis.
    pub score: f64,
    /// Misfit χ² of the best fit (without the fit penalty).
    pub chi2: f64,
    /// The part's fitted actual value for `low`/`high`, Ω (a capacitor's in F).
    pub estimate: Option<f64>,
    /// The fitted hFE at 25 °C.
    pub beta: f64,
    /// VB, VE, VC predicted at the fit, V.
    pub predicted: [f64; 3],
    /// The gain at each test frequency predicted at the fit, V/V (in the readings' order; 0
    /// beyond them). Single precision is ample beside a gain reading's error of some percent,
    /// and keeps a diagnosis small on the instrument's stack.
    pub gains: [f32; GAIN_SLOTS],
    /// Equivalence group: hypotheses with the same number cannot be told apart by the readings
    /// given (DC and signal).
    pub group: u8,
}

/// A ranked list of hypotheses, best first, equivalent ones adjacent.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnosis {
    /// Every hypothesis that could be solved, best first (groups kept together).
    pub ranked: Vec<Hypothesis, CAPACITY>,
    /// `false` when even the best hypothesis misfits: no single fault explains the readings.
    pub explained: bool,
    /// Operating-point solves spent.
    pub solves: u32,
}

impl Diagnosis {
    /// An empty diagnosis (nothing ranked, not explained, no solves), for
    /// [`diagnose_into`](super::diagnose_into) to fill.
    pub const fn new() -> Self {
        Self {
            ranked: Vec::new(),
            explained: false,
            solves: 0,
        }
    }

    /// The best hypothesis.
    pub fn best(&self) -> Option<&Hypothesis> {
        self.ranked.first()
    }

    /// The fault hypotheses (the good board left out), best first.
    pub fn faults(&self) -> impl Iterator<Item = &Hypothesis> {
        self.ranked.iter().filter(|h| h.suspect.is_fault())
    }

    /// The other hypotheses of `h`'s equivalence group.
    pub fn equivalents<'a>(&'a self, h: &'a Hypothesis) -> impl Iterator<Item = &'a Hypothesis> {
        self.ranked
            .iter()
            .filter(move |o| o.group == h.group && o.suspect != h.suspect)
    }

    /// The rank (0-based) of a suspect, if it was solved.
    pub fn rank_of(&self, s: Suspect) -> Option<usize> {
        self.ranked.iter().position(|h| h.suspect == s)
    }
}

impl Default for Diagnosis {
    /// [`Diagnosis::new`].
    fn default() -> Self {
        Self::new()
    }
}

/// Every hypothesis of the dictionary for this stage (resistors of zero ohms are not fitted and
/// are left out). Capacitors that the stage has (not ideal) add their `short` (it shows at DC in
/// the test set-up), and with signal readings (`signal`) also `open`, `low` and `high`; CE only
/// where RE2 is fitted.
pub(super) fn dictionary(stage: &Stage, signal: bool) -> Vec<Suspect, CAPACITY> {
    let mut v: Vec<Suspect, CAPACITY> = Vec::new();
    let _ = v.push(Suspect::Good);
    for r in Resistor::ALL {
        if stage.part(r).value > 0.0 {
            for m in ResistorMode::ALL {
                let _ = v.push(Suspect::Resistor(r, m));
            }
        }
    }
    for d in DeviceFault::ALL {
        let _ = v.push(Suspect::Device(d));
    }
    for c in Capacitor::ALL {
        if stage.capacitor(c).is_none() || (c == Capacitor::Ce && stage.re2.value <= 0.0) {
            continue;
        }
        for m in ResistorMode::ALL {
            if signal || m == ResistorMode::Short {
                let _ = v.push(Suspect::Capacitor(c, m));
            }
        }
    }
    v
}

// The dictionary fills its list exactly: the good board, every resistor's modes, every
// transistor fault, and every capacitor's modes (only `short` without the signal test).
const _: () = assert!(
    CAPACITY
        == 1 + Resistor::ALL.len() * ResistorMode::ALL.len()
            + DeviceFault::ALL.len()
            + Capacitor::ALL.len()
                * if cfg!(feature = "signal-test") {
                    ResistorMode::ALL.len()
                } else {
                    1
                }
);
