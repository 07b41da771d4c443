//! Faults in plain words for the technician, and for faults that share their readings the
//! cheapest way to tell them apart with the board in circuit: one wording for the command line,
//! the station and the instrument's console.
//!
//! A group is named on its first line together with the separating action; the lines under it
//! say what each result of that action means. The actions rest on two facts of in-circuit
//! measurement (common practice): parallel paths through other parts can only lower an ohmmeter
//! reading, never raise it, and a transistor junction in such a path conducts one way only, so
//! the reading is taken with the meter leads both ways round and the higher one counts. Hence a
//! part suspected low or shorted is cleared when it reads its value, and a part suspected high or
//! open is convicted when it reads above its band. The one parallel part that is not blocked by
//! a junction is CE across RE2: a shorted CE makes RE2 read about 0 Ω in circuit, and a shorted
//! (or leaky) CE gives the same DC readings as a shorted (or low) RE2, so CE is named with those
//! faults and lifted before RE2 is measured.

use core::fmt;

use heapless::Vec;

use crate::diagnose::{Diagnosis, Hypothesis, ResistorMode, Suspect};
use crate::stage::{Capacitor, DeviceFault, Resistor, Stage};
use crate::units::{Eng, Fixed};

/// Faults named in one group at most (further members are left out of the words, never out of
/// the diagnosis).
pub const GROUP_MAX: usize = 12;

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
enum Way {
    /// Only low or shorted: a reading within its band clears it.
    Low,
    /// Only high or open: a reading above its band convicts it.
    High,
    /// Both.
    Both,
}

/// One separating measurement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Step {
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
    members: Vec<Member, GROUP_MAX>,
    /// The separating measurements, in order.
    steps: Vec<Step, 8>,
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

    /// Its separating action measures a resistor in circuit (see [`IN_CIRCUIT`]).
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
    fn has_ce(&self) -> bool {
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
    fn settled_by(&self, step: Step) -> Vec<Member, GROUP_MAX> {
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
    fn last_free(&self) -> bool {
        matches!(self.steps.last(), Some(Step::Measure(..) | Step::DiodeTest))
    }
}

/// The members `keep` takes, as a list: "R1 open, R1 too high or R2 too low".
fn write_names(
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

fn any(_: &Member) -> bool {
    true
}

fn is_ce(m: &Member) -> bool {
    matches!(
        m,
        Member::CeShorted | Member::CeLeaky | Member::Fault(Suspect::Capacitor(Capacitor::Ce, _))
    )
}

fn cap_open(m: &Member) -> bool {
    matches!(m, Member::Fault(Suspect::Capacitor(_, ResistorMode::Open)))
}

fn cap_small(m: &Member) -> bool {
    matches!(m, Member::Fault(Suspect::Capacitor(_, ResistorMode::Low)))
}

fn cap_other(m: &Member) -> bool {
    matches!(
        m,
        Member::Fault(Suspect::Capacitor(
            _,
            ResistorMode::Short | ResistorMode::High
        ))
    )
}

fn not_ce(m: &Member) -> bool {
    !is_ce(m)
}

impl fmt::Display for Group {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write_names(f, &self.members, any)
    }
}

/// The separating action of a group, for its first line.
#[derive(Debug, Clone, Copy)]
pub struct Action<'a> {
    group: &'a Group,
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
    group: &'a Group,
    stage: &'a Stage,
    /// Which step of the group's.
    k: usize,
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stage::Part;
    use std::string::{String, ToString};
    use std::vec::Vec as StdVec;

    fn stage() -> Stage {
        Stage {
            polarity: crate::stage::Polarity::Npn,
            vcc: Part::new(12.0, 0.05),
            r1: Part::new(56e3, 0.05),
            r2: Part::new(10e3, 0.05),
            rc: Part::new(4.7e3, 0.05),
            re1: Part::new(220.0, 0.05),
            re2: Part::new(820.0, 0.05),
            rl: None,
            rs: 0.0,
            cin: None,
            cout: None,
            ce: None,
        }
    }

    fn r(p: Resistor, m: ResistorMode) -> Suspect {
        Suspect::Resistor(p, m)
    }

    fn lines(items: &[Listed]) -> StdVec<String> {
        let mut v = StdVec::new();
        listing(&stage(), true, items, &mut |a| v.push(a.to_string()));
        v
    }

    #[test]
    #[cfg(feature = "fault-detail")]
    fn a_shorted_re2_names_ce_and_lifts_it() {
        let l = lines(&[Listed {
            suspect: r(Resistor::Re2, ResistorMode::Short),
            estimate: None,
            score: 0.9,
            same: Vec::new(),
            tone: None,
        }]);
        assert!(l[1].starts_with("1. RE2 shorted or CE shorted: same readings (90 %); "));
        assert!(l[1].contains("lift one end of CE and measure RE2"), "{l:?}");
        assert!(l[2].contains("CE shorted") && l[2].contains("still below: RE2 shorted"));
    }

    /// The budget instrument's listing still names CE with a shorted RE2 and says to lift it.
    #[test]
    #[cfg(not(feature = "fault-detail"))]
    fn the_budget_listing_names_ce_with_re2() {
        let l = lines(&[Listed {
            suspect: r(Resistor::Re2, ResistorMode::Short),
            estimate: None,
            score: 0.9,
            same: Vec::new(),
            tone: None,
        }]);
        assert!(l[1].starts_with("1. RE2 shorted"), "{l:?}");
        assert!(
            l[1].contains("CE shorted or leaky") && l[1].contains("lift one end of CE"),
            "{l:?}"
        );
    }

    /// A real CE short (signal test) stands in for the implied one: named once, settled by
    /// lifting CE; coupling capacitors get their own capacitance step, and the separating tone
    /// is said under the group.
    #[test]
    #[cfg(feature = "fault-detail")]
    fn capacitor_members_have_their_own_step() {
        let ce = Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short);
        let g = Group::of([r(Resistor::Re2, ResistorMode::Short), ce]);
        assert_eq!(g.members().len(), 2, "{:?}", g.members());
        assert!(!g.members().contains(&Member::CeShorted));
        assert_eq!(g.to_string(), "RE2 shorted or CE shorted");
        let s = stage();
        let o: StdVec<String> = g.outcomes(&s).map(|o| o.to_string()).collect();
        assert_eq!(o.len(), 1, "{o:?}");
        assert!(
            o[0].contains("with CE lifted: CE shorted; still below: RE2 shorted"),
            "{o:?}"
        );

        let mut same: Vec<Suspect, GROUP_MAX> = Vec::new();
        let _ = same.push(Suspect::Capacitor(Capacitor::Cin, ResistorMode::Low));
        let l = lines(&[Listed {
            suspect: Suspect::Capacitor(Capacitor::Cin, ResistorMode::Open),
            estimate: None,
            score: 0.6,
            same,
            tone: Some(20.0),
        }]);
        assert!(
            l[1].starts_with("1. CIN open or CIN too small: same readings (60 %); power off, lift one end of CIN and measure its capacitance"),
            "{l:?}"
        );
        assert!(
            l[2].contains("CIN reads next to nothing: CIN open"),
            "{l:?}"
        );
        assert!(l[2].contains("CIN too small"), "{l:?}");
        assert!(
            l[3].contains("a gain reading at 20 Hz tells them apart"),
            "{l:?}"
        );
    }

    #[test]
    fn machine_names_parse_back() {
        for s in [
            r(Resistor::Re1, ResistorMode::High),
            Suspect::Device(DeviceFault::CeShort),
            Suspect::Capacitor(Capacitor::Cin, ResistorMode::Open),
            Suspect::Capacitor(Capacitor::Cout, ResistorMode::Low),
            Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short),
        ] {
            assert_eq!(suspect_of(s.part(), s.mode()), Some(s));
        }
        assert_eq!(suspect_of("RX", "open"), None);
    }
}
