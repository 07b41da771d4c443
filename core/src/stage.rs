//! The stage: a common-emitter amplifier with voltage-divider bias, its parts and its faults.
//!
//! ```text
//!  NPN                          PNP (emitter side to the supply)
//!  VCC ──┬──────┐               VCC ──┬──────┐
//!        R1     RC                    R1     RE2 ‖ CE
//!        │      ├── COUT ── RL        │      RE1
//!  RS─CIN┤──── B C                RS─CIN┤──── B E
//!        │       E                    │       C
//!        R2     RE1                   R2     ├── COUT ── RL
//!        │      RE2 ‖ CE              │      RC
//!  GND ──┴──────┘               GND ──┴──────┘
//! ```
//! R1 always runs from the supply to the base and R2 from the base to ground. RE1 is the
//! unbypassed emitter resistor, RE2 the one bypassed by CE. RL and RS are AC-coupled.

/// The transistor type, and with it the orientation of the stage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Polarity {
    /// NPN: collector side to the supply, emitter side to ground.
    Npn,
    /// PNP: emitter side to the supply, collector side to ground.
    Pnp,
}

/// A resistor of the stage, by its place.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Resistor {
    /// Supply to base.
    R1,
    /// Base to ground.
    R2,
    /// Collector resistor.
    Rc,
    /// Emitter resistor, not bypassed.
    Re1,
    /// Emitter resistor, bypassed by CE.
    Re2,
}

impl Resistor {
    /// Every bias resistor, in drawing order.
    pub const ALL: [Resistor; 5] = [Self::R1, Self::R2, Self::Rc, Self::Re1, Self::Re2];

    /// The reference designator as printed on a board: "R1", "R2", "RC", "RE1", "RE2".
    pub fn name(self) -> &'static str {
        match self {
            Self::R1 => "R1",
            Self::R2 => "R2",
            Self::Rc => "RC",
            Self::Re1 => "RE1",
            Self::Re2 => "RE2",
        }
    }
}

/// A capacitor of the stage, by its place.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Capacitor {
    /// Input coupling.
    Cin,
    /// Output coupling.
    Cout,
    /// Emitter bypass across RE2.
    Ce,
}

impl Capacitor {
    /// Every capacitor, in drawing order.
    pub const ALL: [Capacitor; 3] = [Self::Cin, Self::Cout, Self::Ce];

    /// The reference designator: "CIN", "COUT", "CE".
    pub fn name(self) -> &'static str {
        match self {
            Self::Cin => "CIN",
            Self::Cout => "COUT",
            Self::Ce => "CE",
        }
    }
}

/// A part value with its tolerance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Part {
    /// Nominal value (Ω or F).
    pub value: f64,
    /// Tolerance as a fraction (0.05 = 5 %).
    pub tol: f64,
}

impl Part {
    /// A part of `value` with tolerance `tol` (fraction).
    pub const fn new(value: f64, tol: f64) -> Self {
        Self { value, tol }
    }
}

/// A transistor fault: what can be wrong with Q on an assembled board.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DeviceFault {
    /// Base-emitter junction (or emitter lead) open.
    BeOpen,
    /// Base-collector junction (or collector lead) open.
    BcOpen,
    /// Base shorted to emitter.
    BeShort,
    /// Base shorted to collector.
    BcShort,
    /// Collector shorted to emitter.
    CeShort,
    /// Collector and emitter swapped.
    Reversed,
}

impl DeviceFault {
    /// Every transistor fault.
    pub const ALL: [DeviceFault; 6] = [
        Self::BeOpen,
        Self::BcOpen,
        Self::BeShort,
        Self::BcShort,
        Self::CeShort,
        Self::Reversed,
    ];

    /// The machine name of the mode: "be_open", ...
    pub fn name(self) -> &'static str {
        match self {
            Self::BeOpen => "be_open",
            Self::BcOpen => "bc_open",
            Self::BeShort => "be_short",
            Self::BcShort => "bc_short",
            Self::CeShort => "ce_short",
            Self::Reversed => "reversed",
        }
    }
}

/// A single fault injected into a stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Fault {
    /// A resistor open (not fitted, cracked, dry joint).
    Open(Resistor),
    /// A resistor shorted (solder bridge).
    Short(Resistor),
    /// A resistor of a wrong value, Ω (for example a decade slip).
    Value(Resistor, f64),
    /// A transistor fault.
    Device(DeviceFault),
}

/// The supply and parts of a stage (all values nominal).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stage {
    /// NPN or PNP.
    pub polarity: Polarity,
    /// Supply voltage, V (positive for both polarities).
    pub vcc: Part,
    /// Supply to base, Ω.
    pub r1: Part,
    /// Base to ground, Ω.
    pub r2: Part,
    /// Collector resistor, Ω.
    pub rc: Part,
    /// Emitter resistor not bypassed, Ω (0 for none).
    pub re1: Part,
    /// Emitter resistor bypassed by CE, Ω (0 for none).
    pub re2: Part,
    /// Load, Ω, AC-coupled through COUT; `None` for no load.
    pub rl: Option<f64>,
    /// Source resistance, Ω.
    pub rs: f64,
    /// Input coupling capacitor, F; `None` for ideal (a short at signal frequencies).
    pub cin: Option<Part>,
    /// Output coupling capacitor, F; `None` for ideal.
    pub cout: Option<Part>,
    /// Emitter bypass capacitor, F; `None` for ideal.
    pub ce: Option<Part>,
}

/// A stage field that is out of range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum StageError {
    /// The supply must be finite and between 0.5 V and 1000 V.
    Supply,
    /// A resistor must be finite and positive (RE1 and RE2 may be zero), at most 1 TΩ.
    Resistor(Resistor),
    /// The load must be finite and positive.
    Load,
    /// The source resistance must be finite and not negative.
    Source,
    /// A capacitor must be finite and positive.
    Capacitor(Capacitor),
    /// A tolerance must be between 0 and 50 %.
    Tolerance,
}

impl core::fmt::Display for StageError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::Supply => f.write_str("vcc must be between 0.5 V and 1000 V"),
            Self::Resistor(r) => match r {
                Resistor::Re1 | Resistor::Re2 => {
                    write!(f, "{} must be zero or positive, at most 1 TΩ", r.name())
                }
                _ => write!(f, "{} must be positive, at most 1 TΩ", r.name()),
            },
            Self::Load => f.write_str("RL must be positive"),
            Self::Source => f.write_str("RS must be zero or positive"),
            Self::Capacitor(c) => write!(f, "{} must be positive", c.name()),
            Self::Tolerance => f.write_str("tolerance must be between 0 and 50 %"),
        }
    }
}

/// Largest resistor value accepted, Ω.
const R_MAX: f64 = 1e12;

impl Stage {
    /// The nominal value of a resistor, Ω.
    pub fn resistor(&self, which: Resistor) -> f64 {
        self.part(which).value
    }

    /// A capacitor part (`None`: ideal).
    pub fn capacitor(&self, which: Capacitor) -> Option<Part> {
        match which {
            Capacitor::Cin => self.cin,
            Capacitor::Cout => self.cout,
            Capacitor::Ce => self.ce,
        }
    }

    fields_by! {
        /// A resistor part.
        fn part(&self) -> Part;
        /// Mutable access to a resistor part.
        fn part_mut;
        Resistor { R1: r1, R2: r2, Rc: rc, Re1: re1, Re2: re2 }
    }

    /// Total DC emitter resistance RE1 + RE2, Ω.
    pub fn re_total(&self) -> f64 {
        self.re1.value + self.re2.value
    }

    /// Check every field; the engine may assume a validated stage.
    pub fn validate(&self) -> Result<(), StageError> {
        let vcc = self.vcc.value;
        if !(vcc.is_finite() && (0.5..=1000.0).contains(&vcc)) {
            return Err(StageError::Supply);
        }
        let tol_ok = |t: f64| t.is_finite() && (0.0..=0.5).contains(&t);
        if !tol_ok(self.vcc.tol) {
            return Err(StageError::Tolerance);
        }
        for r in Resistor::ALL {
            let p = self.part(r);
            let zero_ok = matches!(r, Resistor::Re1 | Resistor::Re2);
            let v = p.value;
            let ok = v.is_finite() && v <= R_MAX && (v > 0.0 || (zero_ok && v == 0.0));
            if !ok {
                return Err(StageError::Resistor(r));
            }
            if !tol_ok(p.tol) {
                return Err(StageError::Tolerance);
            }
        }
        if let Some(rl) = self.rl {
            if !(rl.is_finite() && rl > 0.0 && rl <= R_MAX) {
                return Err(StageError::Load);
            }
        }
        if !(self.rs.is_finite() && self.rs >= 0.0 && self.rs <= R_MAX) {
            return Err(StageError::Source);
        }
        for (c, which) in [
            (self.cin, Capacitor::Cin),
            (self.cout, Capacitor::Cout),
            (self.ce, Capacitor::Ce),
        ] {
            if let Some(c) = c {
                if !(c.value.is_finite() && c.value > 0.0 && c.value < 1.0) {
                    return Err(StageError::Capacitor(which));
                }
                if !tol_ok(c.tol) {
                    return Err(StageError::Tolerance);
                }
            }
        }
        Ok(())
    }

    /// A copy of the stage with a resistor fault applied (open = infinite, short = zero ohms,
    /// wrong value). Transistor faults are applied by the solver and leave the stage unchanged.
    pub fn with_fault(&self, fault: Fault) -> Stage {
        let mut s = *self;
        match fault {
            Fault::Open(r) => s.part_mut(r).value = f64::INFINITY,
            Fault::Short(r) => s.part_mut(r).value = 0.0,
            Fault::Value(r, v) => s.part_mut(r).value = v,
            Fault::Device(_) => {}
        }
        s
    }
}

/// The DC node voltages read on a board, V, ground-referenced.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Readings {
    /// Supply as measured on the board.
    pub vcc: f64,
    /// Base.
    pub vb: f64,
    /// Emitter.
    pub ve: f64,
    /// Collector.
    pub vc: f64,
}
