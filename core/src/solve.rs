//! The exact DC operating point.
//!
//! The transistor is the transport form of the Ebers-Moll model (with an optional forward Early
//! effect on the transport current), so forward-active, saturation, cutoff and inverse operation
//! come out of one set of equations:
//!
//! ```text
//! IT  = IS·(exp(VBE/VT) − exp(VBC/VT))·(1 − VBC/VA)
//! IBE = IS/βF·(exp(VBE/VT) − 1)      IBC = IS/βR·(exp(VBC/VT) − 1)
//! IC  = IT − IBC      IB = IBE + IBC      IE = IC + IB
//! ```
//!
//! The bias network seen from each transistor terminal is a Thévenin source (R1 ‖ R2 from the
//! divider at the base, RC from the supply at the collector, RE1 + RE2 to ground at the emitter),
//! or nothing at all when a part is open. The unknowns are the two junction voltages; each
//! driven terminal contributes a loop equation, each floating terminal the condition that its
//! current is zero. Newton's method with junction-voltage limiting solves the two equations from
//! the hand estimate in a few iterations; if it does not settle, the supply is ramped up from zero
//! (source stepping). A PNP stage is solved as the mirrored NPN stage.
//!
//! Shorts inside the transistor are 0.1 mΩ; a resistor short is exactly zero ohms.

use crate::device::Profile;
use crate::stage::{DeviceFault, Polarity, Stage};
use crate::thermal_voltage;
use core::ops::{Add, AddAssign, Div, Mul, Neg, Sub, SubAssign};

/// The number type the solver runs in: `f64` for every caller ([`solve`], [`solve_from`]), `f32`
/// for the diagnosis's predictions ([`solve_from_single`]), where the Cortex-M4F's FPU does the
/// arithmetic in hardware (`f64` is a software routine there). The set-up (temperature laws,
/// the Thévenin networks) is computed in `f64` and rounded once; Newton's method, the junction
/// exponentials and the meter's node voltages run in `T`; the answer is given in `f64`. For
/// `f64` every operation is the one of the plain solver, in the same order.
trait Real:
    Copy
    + PartialOrd
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
    + AddAssign
    + SubAssign
{
    const ZERO: Self;
    const ONE: Self;
    /// Newton step below which a junction voltage counts as settled, V (see [`SETTLED_V`]).
    const SETTLED_V: Self;
    /// Largest junction current (IS·exp(V/VT)) of an answer, A: beyond it the answer is not
    /// given in this type (see [`SINGLE_CURRENT_LIMIT`]).
    const CURRENT_LIMIT: f64;
    /// Whether the current of a floating terminal is given as its exact zero rather than as
    /// evaluated at the settled point (see [`exact_free_currents`]).
    const EXACT_FREE: bool;
    /// `x` rounded to this type.
    fn of(x: f64) -> Self;
    /// The value in `f64` (exact).
    fn wide(self) -> f64;
    fn exp(self) -> Self;
    fn ln(self) -> Self;
    fn abs(self) -> Self;
    fn finite(self) -> bool;
    /// A network rounded to this type.
    fn net(n: Net<f64>) -> Net<Self>;
    /// Transistor parameters rounded to this type.
    fn junction(j: Junction<f64>) -> Junction<Self>;
}

impl Real for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    const SETTLED_V: Self = SETTLED_V;
    const CURRENT_LIMIT: f64 = f64::INFINITY;
    const EXACT_FREE: bool = false;
    fn of(x: f64) -> Self {
        x
    }
    fn wide(self) -> f64 {
        self
    }
    fn exp(self) -> Self {
        libm::exp(self)
    }
    fn ln(self) -> Self {
        libm::log(self)
    }
    fn abs(self) -> Self {
        libm::fabs(self)
    }
    fn finite(self) -> bool {
        f64::is_finite(self)
    }
    fn net(n: Net<f64>) -> Net<Self> {
        n
    }
    fn junction(j: Junction<f64>) -> Junction<Self> {
        j
    }
}

impl Real for f32 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    const SETTLED_V: Self = SETTLED_V_SINGLE;
    const CURRENT_LIMIT: f64 = SINGLE_CURRENT_LIMIT;
    const EXACT_FREE: bool = true;
    #[expect(
        clippy::cast_possible_truncation,
        reason = "single precision on purpose"
    )]
    fn of(x: f64) -> Self {
        x as f32
    }
    fn wide(self) -> f64 {
        f64::from(self)
    }
    fn exp(self) -> Self {
        libm::expf(self)
    }
    fn ln(self) -> Self {
        libm::logf(self)
    }
    fn abs(self) -> Self {
        libm::fabsf(self)
    }
    fn finite(self) -> bool {
        f32::is_finite(self)
    }
    fn net(n: Net<f64>) -> Net<Self> {
        n.narrow()
    }
    fn junction(j: Junction<f64>) -> Junction<Self> {
        j.narrow()
    }
}

/// Conductance of a short inside the transistor, S.
const SHORT_CONDUCTANCE: f64 = 1e4;
/// Leakage conductance across each junction that keeps the equations regular where a terminal
/// floats (its equation is then a current, which can be flat in deep reverse bias), S. With every
/// terminal driven the loop equations are regular on their own and no leakage is added.
const JUNCTION_GMIN: f64 = 1e-15;
/// Exponent above which the junction exponential continues as a straight line.
const EXP_LINEAR_ABOVE: f64 = 80.0;
/// Newton iterations allowed for one attempt.
const MAX_ITERATIONS: u16 = 80;
/// Steps of the supply ramp in the fallback.
const RAMP_STEPS: u16 = 16;
/// Newton step below which a junction voltage counts as settled, V. Convergence is quadratic
/// (the remaining error is about step²/(2·VT)), so after a 1 µV step it is below 2e-11 V.
const SETTLED_V: f64 = 1e-6;
/// [`SETTLED_V`] in single precision, V. A node voltage near 16 V is known in `f32` to within
/// 1 µV (its unit in the last place is 0.95 µV), so a loop equation's residual carries about a
/// microvolt of rounding and a Newton step of 1 µV can be that noise alone: the test would then
/// never pass. 10 µV is above the noise of any node up to 64 V (ulp 3.8 µV); by the quadratic
/// convergence the error left after a 10 µV step is below 2e-9 V, still far below the `f32`
/// resolution of the junction voltage (60 nV at 0.65 V).
const SETTLED_V_SINGLE: f32 = 1e-5;
/// Largest junction current of a single-precision answer, A. A junction forward biased far
/// beyond any small-signal part (straight across the supply, when a short leaves no resistor in
/// its loop) carries amperes up to 10²³ A on the model's exponential; the collector current is
/// then a small difference of such currents, which `f32` (24 bits) cannot resolve. Such a point
/// is solved in `f64` instead.
const SINGLE_CURRENT_LIMIT: f64 = 1.0;

/// Extra resistances from the stage's nodes to ground while it is solved, Ω: whatever is
/// attached to the board while it is read (the measuring inputs, the jig's source and load
/// resistors where a coupling capacitor is shorted). Each is ground-referenced in the real
/// circuit, for a PNP stage too; `None` is nothing attached.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct NodeLoads {
    /// From the base node to ground, Ω.
    pub base: Option<f64>,
    /// From the collector node to ground, Ω.
    pub collector: Option<f64>,
    /// From the emitter node to ground, Ω.
    pub emitter: Option<f64>,
}

impl NodeLoads {
    /// Nothing attached: an ideal meter.
    pub const NONE: Self = Self {
        base: None,
        collector: None,
        emitter: None,
    };

    /// The same resistance `r` (Ω) from each of the three nodes to ground, or nothing for `None`.
    pub const fn each(r: Option<f64>) -> Self {
        Self {
            base: r,
            collector: r,
            emitter: r,
        }
    }

    /// Nothing attached at any node.
    pub fn is_none(&self) -> bool {
        self.base.is_none() && self.collector.is_none() && self.emitter.is_none()
    }

    /// Every given load is positive (a resistance, not a short) and not NaN; an infinite one is
    /// the same as none.
    pub fn is_valid(&self) -> bool {
        [self.base, self.collector, self.emitter]
            .iter()
            .flatten()
            .all(|r| *r > 0.0)
    }
}

/// Temperature, transistor gain, any transistor fault and what is attached to the nodes for one
/// solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conditions {
    /// Ambient (and junction) temperature, °C.
    pub temp_c: f64,
    /// Forward hFE of this transistor at 25 °C (the temperature law is applied).
    pub beta_25: f64,
    /// A transistor fault, or `None` for a good part.
    pub fault: Option<DeviceFault>,
    /// Resistances from the nodes to ground while the board is read ([`NodeLoads::NONE`]: none).
    pub loads: NodeLoads,
}

impl Conditions {
    /// Typical hFE at 25 °C, no fault, nothing attached.
    pub fn typical(profile: &Profile) -> Self {
        Self {
            temp_c: 25.0,
            beta_25: profile.beta_typ,
            fault: None,
            loads: NodeLoads::NONE,
        }
    }

    /// The same conditions at another ambient temperature, °C.
    pub fn at(self, temp_c: f64) -> Self {
        Self { temp_c, ..self }
    }

    /// The same conditions with `loads` attached to the nodes.
    pub fn loaded(self, loads: NodeLoads) -> Self {
        Self { loads, ..self }
    }
}

/// The operating region of the transistor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Region {
    /// Forward active: IC close to hFE·IB.
    Active,
    /// Saturated: both junctions forward biased, IC well below hFE·IB.
    Saturation,
    /// Cut off: a negligible collector current.
    Cutoff,
}

impl Region {
    /// The machine name: "active", "saturation" or "cutoff".
    pub fn name(self) -> &'static str {
        match self {
            Self::Active => "active",
            Self::Saturation => "saturation",
            Self::Cutoff => "cutoff",
        }
    }
}

/// Why no operating point could be given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SolveError {
    /// Newton's method did not settle, even with the supply ramp.
    NoConvergence,
    /// R1 and R2 both shorted: the supply is shorted through the divider.
    SupplyShorted,
    /// An input was not finite, so no finite answer exists.
    NonFinite,
}

impl core::fmt::Display for SolveError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::NoConvergence => "the operating point did not converge",
            Self::SupplyShorted => "R1 and R2 both shorted: the supply is shorted",
            Self::NonFinite => "an input value is not finite",
        })
    }
}

/// Small-signal admittances of the transistor at the operating point (NPN frame), S:
/// `ib = y11·vbe + y12·vce`, `ic = y21·vbe + y22·vce`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Admittance {
    /// dIB/dVBE at constant VCE (1/rπ).
    pub y11: f64,
    /// dIB/dVCE at constant VBE.
    pub y12: f64,
    /// dIC/dVBE at constant VCE (gm).
    pub y21: f64,
    /// dIC/dVCE at constant VBE (1/ro).
    pub y22: f64,
}

/// The DC operating point of a stage.
///
/// Node voltages are ground-referenced; `vbe` and `vce` are signed (negative for PNP). Currents
/// are positive in the direction of normal operation (into base and collector of an NPN, out of
/// base and collector of a PNP).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OperatingPoint {
    /// Supply, V.
    pub vcc: f64,
    /// Base voltage, V.
    pub vb: f64,
    /// Emitter voltage, V.
    pub ve: f64,
    /// Collector voltage, V.
    pub vc: f64,
    /// VB − VE, V.
    pub vbe: f64,
    /// VC − VE, V.
    pub vce: f64,
    /// Base current, A.
    pub ib: f64,
    /// Collector current, A.
    pub ic: f64,
    /// Emitter current, A.
    pub ie: f64,
    /// Operating region.
    pub region: Region,
    /// Thermal voltage at the temperature, V.
    pub vt: f64,
    /// Forward hFE at the temperature.
    pub beta: f64,
    /// Small-signal admittances.
    pub y: Admittance,
    /// Newton iterations used (all attempts).
    pub iterations: u16,
}

/// Transistor parameters at one temperature.
#[derive(Debug, Clone, Copy)]
struct Junction<T> {
    vt: T,
    /// 1/VT.
    inv_vt: T,
    is: T,
    /// IS/βF.
    is_bf: T,
    /// IS/βR.
    is_br: T,
    /// 1/VA (0 for no Early effect).
    inv_va: T,
    /// Leakage conductance across each junction, S.
    gmin: T,
    fault: Option<DeviceFault>,
}

impl Junction<f64> {
    /// The same parameters rounded to `T`.
    fn narrow<T: Real>(self) -> Junction<T> {
        Junction {
            vt: T::of(self.vt),
            inv_vt: T::of(self.inv_vt),
            is: T::of(self.is),
            is_bf: T::of(self.is_bf),
            is_br: T::of(self.is_br),
            inv_va: T::of(self.inv_va),
            gmin: T::of(self.gmin),
            fault: self.fault,
        }
    }
}

/// The bias network as seen from one transistor terminal.
#[derive(Debug, Clone, Copy)]
enum Net<T> {
    /// A Thévenin source: open-circuit voltage, V, and resistance, Ω (may be 0).
    Driven { vth: T, r: T },
    /// Nothing connected.
    Free,
}

impl Net<f64> {
    /// The same network rounded to `T`.
    fn narrow<T: Real>(self) -> Net<T> {
        match self {
            Net::Driven { vth, r } => Net::Driven {
                vth: T::of(vth),
                r: T::of(r),
            },
            Net::Free => Net::Free,
        }
    }
}

/// Terminal currents into the device (base, collector) and their derivatives with respect to
/// the junction voltages (VBE, VBC).
#[derive(Debug, Clone, Copy)]
struct Currents<T> {
    ib: T,
    ic: T,
    dib: [T; 2],
    dic: [T; 2],
}

/// Exponent below which exp(x) is below 1e-21: next to 1 (in `exp − 1`) it vanishes in f64.
const EXP_NEGLIGIBLE_BELOW: f64 = -48.0;

/// exp(x) continued as a straight line above `EXP_LINEAR_ABOVE`, and 0 far below zero (a
/// reverse-biased junction, where computing it would change no result).
fn exp_limited<T: Real>(x: T) -> T {
    if x < T::of(EXP_NEGLIGIBLE_BELOW) {
        T::ZERO
    } else if x > T::of(EXP_LINEAR_ABOVE) {
        T::of(EXP_LINEAR_ABOVE).exp() * (T::ONE + x - T::of(EXP_LINEAR_ABOVE))
    } else {
        x.exp()
    }
}

fn exp_slope<T: Real>(x: T, value: T) -> T {
    if x > T::of(EXP_LINEAR_ABOVE) {
        T::of(EXP_LINEAR_ABOVE).exp()
    } else {
        value
    }
}

impl<T: Real> Junction<T> {
    /// Ebers-Moll currents of the device in its own frame (a = VBE, c = VBC).
    fn em(&self, a: T, c: T) -> Currents<T> {
        let xa = a * self.inv_vt;
        let xc = c * self.inv_vt;
        let ea = exp_limited(xa);
        let ec = exp_limited(xc);
        let sa = exp_slope(xa, ea) * self.inv_vt;
        let sc = exp_slope(xc, ec) * self.inv_vt;
        // Early factor on the transport current, held above zero far into reverse operation.
        let (q, dq) = {
            let q = T::ONE - c * self.inv_va;
            if q > T::of(0.05) {
                (q, -self.inv_va)
            } else {
                (T::of(0.05), T::ZERO)
            }
        };
        let it = self.is * (ea - ec) * q;
        let dit_a = self.is * sa * q;
        let dit_c = -self.is * sc * q + self.is * (ea - ec) * dq;
        let ibe = self.is_bf * (ea - T::ONE) + self.gmin * a;
        let ibc = self.is_br * (ec - T::ONE) + self.gmin * c;
        let dibe = self.is_bf * sa + self.gmin;
        let dibc = self.is_br * sc + self.gmin;
        Currents {
            ib: ibe + ibc,
            ic: it - ibc,
            dib: [dibe, dibc],
            dic: [dit_a, dit_c - dibc],
        }
    }

    /// Terminal currents at the stage's nodes for junction voltages x = (VBE, VBC) between the
    /// stage's base, emitter and collector nodes, with the fault applied.
    fn currents(&self, x: [T; 2]) -> Currents<T> {
        let [vbe, vbc] = x;
        match self.fault {
            Some(DeviceFault::Reversed) => {
                // The device's collector sits on the emitter node and its emitter on the
                // collector node: its own VBE is our VBC and the other way round.
                let d = self.em(vbc, vbe);
                // Into our collector node flows minus the device's emitter current.
                let ic = -(d.ib + d.ic);
                let dic_own = [-(d.dib[0] + d.dic[0]), -(d.dib[1] + d.dic[1])];
                Currents {
                    ib: d.ib,
                    ic,
                    dib: [d.dib[1], d.dib[0]],
                    dic: [dic_own[1], dic_own[0]],
                }
            }
            Some(DeviceFault::BeShort) => {
                let mut d = self.em(vbe, vbc);
                d.ib += T::of(SHORT_CONDUCTANCE) * vbe;
                d.dib[0] += T::of(SHORT_CONDUCTANCE);
                d
            }
            Some(DeviceFault::BcShort) => {
                let mut d = self.em(vbe, vbc);
                d.ib += T::of(SHORT_CONDUCTANCE) * vbc;
                d.dib[1] += T::of(SHORT_CONDUCTANCE);
                d.ic -= T::of(SHORT_CONDUCTANCE) * vbc;
                d.dic[1] -= T::of(SHORT_CONDUCTANCE);
                d
            }
            Some(DeviceFault::CeShort) => {
                let mut d = self.em(vbe, vbc);
                d.ic += T::of(SHORT_CONDUCTANCE) * (vbe - vbc);
                d.dic[0] += T::of(SHORT_CONDUCTANCE);
                d.dic[1] -= T::of(SHORT_CONDUCTANCE);
                d
            }
            _ => self.em(vbe, vbc),
        }
    }

    /// The critical voltage of the junction-limiting rule, V.
    fn vcrit(&self) -> T {
        self.vt * (self.vt / (T::of(core::f64::consts::SQRT_2) * self.is)).ln()
    }
}

/// Limit a junction-voltage update so the exponential cannot run away (the classic rule of
/// circuit solvers: above the critical voltage, steps grow only logarithmically).
fn limit_junction<T: Real>(new: T, old: T, vt: T, j: &Junction<T>) -> (T, bool) {
    // The critical voltage is always positive, so a step that ends at or below zero is free.
    if new <= T::ZERO || (new - old).abs() <= T::of(2.0) * vt {
        return (new, false);
    }
    let vcrit = j.vcrit();
    if new > vcrit {
        if old > T::ZERO {
            let arg = T::ONE + (new - old) / vt;
            if arg > T::ZERO {
                (old + vt * arg.ln(), true)
            } else {
                (vcrit, true)
            }
        } else {
            (vt * (new / vt).ln(), true)
        }
    } else {
        (new, false)
    }
}

/// The network, the junction and the fault arrangement of one solve, in the NPN frame.
#[derive(Debug, Clone, Copy)]
struct Problem<T> {
    vcc: T,
    base: Net<T>,
    coll: Net<T>,
    emit: Net<T>,
    /// Which device terminals see nothing (a floating node or an open lead): base, collector, emitter.
    free: [bool; 3],
    /// The two equations for this arrangement.
    equations: [Equation<T>; 2],
    j: Junction<T>,
}

/// One equation: residual and its gradient with respect to (VBE, VBC).
type Row<T> = (T, [T; 2]);

/// Terminals of the transistor.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Terminal {
    Base,
    Collector,
    Emitter,
}

/// One of the two equations the junction voltages must satisfy.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Equation<T> {
    /// A floating terminal carries no current.
    NoCurrent(Terminal),
    /// Kirchhoff's voltage law between two driven terminals: V(from) − V(to) equals the
    /// junction drop `coef · (VBE, VBC)`.
    Loop(Terminal, Terminal, [T; 2]),
}

/// The two equations for a set of floating terminals (base, collector, emitter).
fn pick_equations<T: Real>(free: [bool; 3]) -> [Equation<T>; 2] {
    use Terminal::{Base, Collector, Emitter};
    let (one, zero) = (T::ONE, T::ZERO);
    if free == [false; 3] {
        return [
            Equation::Loop(Base, Emitter, [one, zero]),
            Equation::Loop(Base, Collector, [zero, one]),
        ];
    }
    let terminals = [Base, Collector, Emitter];
    let loops = [
        Equation::Loop(Base, Emitter, [one, zero]),
        Equation::Loop(Base, Collector, [zero, one]),
        Equation::Loop(Collector, Emitter, [one, -one]),
    ];
    let is_free = |t: Terminal| match t {
        Base => free[0],
        Collector => free[1],
        Emitter => free[2],
    };
    let mut chosen = terminals
        .iter()
        .filter(|t| is_free(**t))
        .map(|t| Equation::NoCurrent(*t))
        .chain(loops.iter().copied().filter(|e| match e {
            Equation::Loop(a, b, _) => !is_free(*a) && !is_free(*b),
            Equation::NoCurrent(_) => false,
        }));
    let first = chosen.next().unwrap_or(Equation::NoCurrent(Base));
    let second = chosen.next().unwrap_or(Equation::NoCurrent(Collector));
    [first, second]
}

/// Current into one device terminal and its gradient.
fn terminal_current<T: Real>(cur: &Currents<T>, t: Terminal) -> Row<T> {
    match t {
        Terminal::Base => (cur.ib, cur.dib),
        Terminal::Collector => (cur.ic, cur.dic),
        Terminal::Emitter => (
            -(cur.ib + cur.ic),
            [-(cur.dib[0] + cur.dic[0]), -(cur.dib[1] + cur.dic[1])],
        ),
    }
}

/// Voltage of a driven terminal (0 for a floating one) and its gradient.
fn terminal_voltage<T: Real>(
    p: &Problem<T>,
    vcc_scale: T,
    cur: &Currents<T>,
    t: Terminal,
) -> Row<T> {
    let net = match t {
        Terminal::Base => p.base,
        Terminal::Collector => p.coll,
        Terminal::Emitter => p.emit,
    };
    match net {
        Net::Driven { vth, r } => {
            let (i, g) = terminal_current(cur, t);
            (vth * vcc_scale - r * i, [-r * g[0], -r * g[1]])
        }
        Net::Free => (T::ZERO, [T::ZERO; 2]),
    }
}

/// Residuals and Jacobian of the two equations at x.
fn equations<T: Real>(p: &Problem<T>, vcc_scale: T, x: [T; 2]) -> ([Row<T>; 2], Currents<T>) {
    let cur = p.j.currents(x);
    // The usual arrangement, every terminal driven, written out: it is most of the work.
    if let Some([(vb0, rb), (vc0, rc), (ve0, re)]) = p.all_driven() {
        let ie = cur.ib + cur.ic;
        let die = [cur.dib[0] + cur.dic[0], cur.dib[1] + cur.dic[1]];
        let vb = vb0 * vcc_scale - rb * cur.ib;
        let vc = vc0 * vcc_scale - rc * cur.ic;
        // The emitter's Thévenin voltage is 0 unless a load to the other rail is attached (a PNP
        // stage's emitter node with a measuring input to ground, in the mirrored frame).
        let ve = ve0 * vcc_scale + re * ie;
        let r0 = (
            vb - ve - x[0],
            [
                -rb * cur.dib[0] - re * die[0] - T::ONE,
                -rb * cur.dib[1] - re * die[1],
            ],
        );
        let r1 = (
            vb - vc - x[1],
            [
                -rb * cur.dib[0] + rc * cur.dic[0],
                -rb * cur.dib[1] + rc * cur.dic[1] - T::ONE,
            ],
        );
        return ([r0, r1], cur);
    }
    let row = |e: Equation<T>| match e {
        Equation::NoCurrent(t) => terminal_current(&cur, t),
        Equation::Loop(a, b, c) => {
            let (va, ga) = terminal_voltage(p, vcc_scale, &cur, a);
            let (vb, gb) = terminal_voltage(p, vcc_scale, &cur, b);
            (
                va - vb - (c[0] * x[0] + c[1] * x[1]),
                [ga[0] - gb[0] - c[0], ga[1] - gb[1] - c[1]],
            )
        }
    };
    let [e0, e1] = p.equations;
    ([row(e0), row(e1)], cur)
}

/// The currents and slopes at the settled point `new`, reached by the step `d` from `old` where
/// they were `cur`. For a good transistor with every terminal driven they follow to first order
/// (no exponential): the currents by the slopes; the base-emitter slopes, being exponentials of
/// VBE, by (1 + dVBE/VT); the collector-junction slopes the same way when its step was small, or,
/// when it stayed reverse biased, through the Early factor alone (its exponential is then below
/// e^-15 of the emitter's). Otherwise they are evaluated afresh.
fn settled_currents<T: Real>(
    p: &Problem<T>,
    cur: &Currents<T>,
    d: [T; 2],
    old: [T; 2],
    new: [T; 2],
) -> Currents<T> {
    if p.j.fault.is_some() || p.free != [false; 3] {
        return p.j.currents(new);
    }
    let [d0, d1] = d;
    let step = |v: T, g: [T; 2]| v + g[0] * d0 + g[1] * d1;
    let k0 = T::ONE + d0 * p.j.inv_vt;
    let (dib1, dic0, dic1) = if d1.abs() <= T::SETTLED_V {
        let k1 = T::ONE + d1 * p.j.inv_vt;
        (cur.dib[1] * k1, cur.dic[0] * k0, cur.dic[1] * k1)
    } else {
        let q = |c: T| {
            let q = T::ONE - c * p.j.inv_va;
            if q > T::of(0.05) {
                q
            } else {
                T::of(0.05)
            }
        };
        let early = q(new[1]) / q(old[1]);
        (cur.dib[1], cur.dic[0] * k0 * early, cur.dic[1] * k0)
    };
    Currents {
        ib: step(cur.ib, cur.dib),
        ic: step(cur.ic, cur.dic),
        dib: [cur.dib[0] * k0, dib1],
        dic: [dic0, dic1],
    }
}

/// Junction voltage below the other junction's beyond which a junction counts as reverse
/// biased for the convergence test, V: its exponential is then below e^-15 of the other's.
const REVERSE_MARGIN_V: f64 = 0.4;
/// Largest step of a reverse-biased junction that the convergence test accepts, V.
const REVERSE_STEP_V: f64 = 0.1;

/// One junction voltage has settled after a Newton step `d` from `old` to `new` (the other
/// junction went from `other_old` to `other_new`): the step is below `SETTLED_V`, or the junction
/// stayed reverse biased, where its equations are linear so that the step was exact.
fn settled<T: Real>(d: T, new: T, old: T, other_new: T, other_old: T) -> bool {
    let d = d.abs();
    d <= T::SETTLED_V
        || (d <= T::of(REVERSE_STEP_V)
            && new < other_new - T::of(REVERSE_MARGIN_V)
            && old < other_old - T::of(REVERSE_MARGIN_V))
}

/// Newton's method from `x`; returns the settled point with the device currents there, or `None`.
fn newton<T: Real>(
    p: &Problem<T>,
    vcc_scale: T,
    mut x: [T; 2],
    iterations: &mut u16,
) -> Option<([T; 2], Currents<T>)> {
    let vt = p.j.vt;
    for _ in 0..MAX_ITERATIONS {
        *iterations = iterations.saturating_add(1);
        let ([(f0, [a, b]), (f1, [c, d])], cur) = equations(p, vcc_scale, x);
        let det = a * d - b * c;
        if !(det.finite() && det != T::ZERO) {
            return None;
        }
        let d0 = -(f0 * d - f1 * b) / det;
        let d1 = -(a * f1 - c * f0) / det;
        if !(d0.finite() && d1.finite()) {
            return None;
        }
        let (n0, l0) = limit_junction(x[0] + d0, x[0], vt, &p.j);
        let (n1, l1) = limit_junction(x[1] + d1, x[1], vt, &p.j);
        x = [n0, n1];
        let old = [x[0] - d0, x[1] - d1];
        if !l0
            && !l1
            && settled(d0, x[0], old[0], x[1], old[1])
            && settled(d1, x[1], old[1], x[0], old[0])
        {
            let settled = settled_currents(p, &cur, [d0, d1], old, x);
            return Some((x, settled));
        }
    }
    None
}

/// Thévenin source of a resistor to a rail, or nothing if it is open.
fn to_rail(v: f64, r: f64) -> Net<f64> {
    if r.is_finite() {
        Net::Driven { vth: v, r }
    } else {
        Net::Free
    }
}

/// The divider R1 (to `v_top`) and R2 (to 0 V) as seen from the base.
fn divider(v_top: f64, r_top: f64, r_bottom: f64) -> Result<Net<f64>, SolveError> {
    if r_top == 0.0 && r_bottom == 0.0 {
        return Err(SolveError::SupplyShorted);
    }
    if r_top == 0.0 {
        return Ok(Net::Driven { vth: v_top, r: 0.0 });
    }
    if r_bottom == 0.0 {
        return Ok(Net::Driven { vth: 0.0, r: 0.0 });
    }
    let g_top = if r_top.is_finite() { 1.0 / r_top } else { 0.0 };
    let g_bottom = if r_bottom.is_finite() {
        1.0 / r_bottom
    } else {
        0.0
    };
    let g = g_top + g_bottom;
    if g > 0.0 {
        Ok(Net::Driven {
            vth: v_top * g_top / g,
            r: 1.0 / g,
        })
    } else {
        Ok(Net::Free)
    }
}

/// Two resistors in parallel, Ω (either may be 0 or infinite).
fn parallel(a: f64, b: f64) -> f64 {
    if a == 0.0 || b == 0.0 {
        0.0
    } else if !a.is_finite() {
        b
    } else if !b.is_finite() {
        a
    } else {
        a * b / (a + b)
    }
}

/// The networks seen from the base, the collector and the emitter.
type Nets = (Net<f64>, Net<f64>, Net<f64>);

/// The three networks (NPN frame) with the resistances `loads` from the nodes to ground of the
/// real circuit. In the mirrored frame of a PNP stage the real ground is the rail at `vcc`, so a
/// load there pulls its node towards `vcc`: the emitter network then has a Thévenin voltage
/// above 0 V. An open part with a load at its node leaves the node driven through the load.
fn loaded_nets(
    polarity: Polarity,
    vcc: f64,
    r1: f64,
    r2: f64,
    rc: f64,
    re: f64,
    loads: NodeLoads,
) -> Result<Nets, SolveError> {
    let load = |r: Option<f64>| r.unwrap_or(f64::INFINITY);
    // R2 runs from the base to ground in the real circuit, like the base's load.
    let r2 = parallel(r2, load(loads.base));
    let (lc, le) = (load(loads.collector), load(loads.emitter));
    match polarity {
        Polarity::Npn => Ok((
            divider(vcc, r1, r2)?,
            // RC to the supply, the load to ground.
            two_rails(vcc, rc, lc),
            // RE and the load both to ground.
            to_rail(0.0, parallel(re, le)),
        )),
        Polarity::Pnp => Ok((
            // Mirrored: R2 (with the load) goes to the rail at `vcc`, R1 to 0 V.
            divider(vcc, r2, r1)?,
            // RC and the load both to the real ground, the mirrored rail at `vcc`.
            to_rail(vcc, parallel(rc, lc)),
            // RE to the real supply (mirrored 0 V), the load to the real ground (mirrored `vcc`).
            two_rails(vcc, le, re),
        )),
    }
}

/// A node with `r_top` to the rail at `v_top` and `r_bottom` to 0 V as a Thévenin source; never
/// both zero here (a load is positive), and open when both are open.
fn two_rails(v_top: f64, r_top: f64, r_bottom: f64) -> Net<f64> {
    if r_top == 0.0 {
        Net::Driven { vth: v_top, r: 0.0 }
    } else if r_bottom == 0.0 {
        Net::Driven { vth: 0.0, r: 0.0 }
    } else if !r_bottom.is_finite() {
        to_rail(v_top, r_top)
    } else if !r_top.is_finite() {
        Net::Driven {
            vth: 0.0,
            r: r_bottom,
        }
    } else {
        Net::Driven {
            vth: v_top * r_bottom / (r_top + r_bottom),
            r: r_top * r_bottom / (r_top + r_bottom),
        }
    }
}

/// Positive and finite (false for NaN).
fn positive_finite<T: Real>(x: T) -> bool {
    x > T::ZERO && x < T::of(f64::INFINITY)
}

/// VBE assumed for the very first current estimate, V: low on purpose, so that a
/// low-current stage is not mistaken for a cut-off one; the refinements remove the error.
const VBE_START: f64 = 0.55;
/// Fixed-point refinements of VBE after the first logarithm.
const FIRST_GUESS_REFINEMENTS: u32 = 2;

/// ln(r) for a ratio near 1 by its Taylor series (error below 2e-7 within 10 %), else `log`.
fn ln_ratio<T: Real>(r: T) -> T {
    let x = r - T::ONE;
    if x.abs() <= T::of(0.1) {
        x * (T::ONE
            - x * (T::of(0.5) - x * (T::of(1.0 / 3.0) - x * (T::of(0.25) - T::of(0.2) * x))))
    } else {
        r.ln()
    }
}

/// Starting point from the hand method: forward active with the divider loaded by IB. One
/// logarithm sets VBE from a first current estimate; each refinement then moves VBE by
/// VT·ln(IE'/IE) as the current estimate improves (the error shrinks by VT/(VTH − VBE), about
/// fifty-fold, per refinement), so Newton usually starts within a microvolt.
fn first_guess<T: Real>(p: &Problem<T>) -> [T; 2] {
    let vt = p.j.vt;
    let beta = p.j.is / p.j.is_bf;
    let alpha = beta / (beta + T::ONE);
    let cut_off = |vthb: T| {
        // Cut off (or no emitter path): the divider voltage stands across the junction.
        let vbe = vt * (T::of(1e-3) / p.j.is).ln();
        let v = if vthb < vbe { vthb } else { vbe };
        [v, v - p.vcc]
    };
    let (vthb, rb) = match p.base {
        Net::Driven { vth, r } => (vth, r),
        Net::Free => return [T::of(0.3), -p.vcc * T::of(0.5)],
    };
    let (vthe, re) = match p.emit {
        Net::Driven { vth, r } => (vth, r),
        Net::Free => (T::ZERO, T::of(f64::INFINITY)),
    };
    let (vthc, rc) = match p.coll {
        Net::Driven { vth, r } => (vth, r),
        Net::Free => (p.vcc, T::ZERO),
    };
    // The drive of the base-emitter loop: the divider's voltage above the emitter's Thévenin
    // voltage (0 V unless a load is attached at the emitter of a PNP stage).
    let vthb = vthb - vthe;
    let req = re + rb / (beta + T::ONE);
    let mut ie = (vthb - T::of(VBE_START)) / req;
    if !positive_finite(ie) {
        return cut_off(vthb);
    }
    let mut vbe = vt * (ie * alpha / p.j.is + T::ONE).ln();
    for _ in 0..FIRST_GUESS_REFINEMENTS {
        let next = (vthb - vbe) / req;
        if !positive_finite(next) {
            return cut_off(vthb);
        }
        vbe += vt * ln_ratio(next / ie);
        ie = next;
    }
    let ic = ie * alpha;
    let vb = vthb + vthe - rb * ie / (beta + T::ONE);
    let vc = vthc - ic * rc;
    let vbc = vb - vc;
    // Saturated: put VCE at about 0.1 V.
    if vbc > vbe - T::of(0.1) {
        [vbe, vbe - T::of(0.1)]
    } else {
        [vbe, vbc]
    }
}

impl<T: Copy> Problem<T> {
    /// Every terminal driven and a good transistor: the case the hand method's start is made for.
    fn is_regular(&self) -> bool {
        self.free == [false; 3] && self.j.fault.is_none()
    }

    /// The Thévenin sources (open-circuit voltage, V; resistance, Ω) at the base, collector and
    /// emitter when every terminal is driven and none floats: the usual arrangement, which the
    /// equations and the meter's node voltages write out in full.
    #[inline(always)]
    fn all_driven(&self) -> Option<[(T, T); 3]> {
        match (self.base, self.coll, self.emit, self.free) {
            (
                Net::Driven { vth: vb, r: rb },
                Net::Driven { vth: vc, r: rc },
                Net::Driven { vth: ve, r: re },
                [false, false, false],
            ) => Some([(vb, rb), (vc, rc), (ve, re)]),
            _ => None,
        }
    }
}

/// On a regular problem ([`Problem::is_regular`]), the hand method's start is as good as a warm
/// start where it says forward active (Newton then settles in one or two iterations); elsewhere
/// (saturation, a floating terminal, a transistor fault) it is only a rough start.
fn guess_is_close<T: Real>(x: [T; 2]) -> bool {
    x[1] < x[0] - T::of(0.2)
}

/// Solve the DC operating point of `stage` with `profile` under `cond`.
///
/// The stage and profile are assumed validated ([`Stage::validate`], [`Profile::validate`]); an
/// unvalidated input still never panics and never yields a non-finite number.
pub fn solve(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
) -> Result<OperatingPoint, SolveError> {
    solve_from(stage, profile, cond, None).map(|(op, _)| op)
}

/// Where a warm-started solve begins: the solver's own unknowns at an earlier solution (the two
/// junction voltages, NPN frame, V, in the solver's number type `T`: `f64` for [`solve_from`],
/// `f32` for [`solve_from_single`]) and the saturation current it used. Obtained from
/// [`solve_from`] or [`solve_from_single`]; opaque, so that only a real solution can seed a
/// solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Start<T = f64> {
    /// VBE and VBC between the stage's base, emitter and collector nodes (NPN frame), V.
    x: [T; 2],
    /// The ambient at which `is` was computed, °C.
    temp_c: f64,
    /// The profile's IS at 25 °C from which `is` was computed, A.
    is_25: f64,
    /// IS at `temp_c`, A.
    is: f64,
    /// The rest of the transistor's figures at `temp_c`, kept so that the next solve at the same
    /// ambient and hFE need not compute them again (each `f64` division is a software routine
    /// on the instrument).
    law: Law,
}

/// The transistor's figures a solve derives from the ambient and hFE (see [`Start`]).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Law {
    vt: f64,
    inv_vt: f64,
    /// The hFE at 25 °C, the profile's temperature coefficient and reverse hFE they came from.
    beta_25: f64,
    beta_tc: f64,
    beta_rev: f64,
    beta: f64,
    is_bf: f64,
    is_br: f64,
}

/// e^x in [`Single`] precision (the searches of a diagnosis that runs its solves there).
pub(crate) fn exp_single(x: f64) -> f64 {
    // Named through the trait: a method call on the concrete `f32` could find the standard
    // library's own `exp`, which rounds differently from the solver's.
    Real::wide(Real::exp(Single::of(x)))
}

/// ln x in [`Single`] precision (see [`exp_single`]).
pub(crate) fn ln_single(x: f64) -> f64 {
    Real::wide(Real::ln(Single::of(x)))
}

/// Where a [`solve_from_single`] begins: an earlier single-precision solution.
pub type StartSingle = Start<Single>;

/// What a warm-started solve gives ([`solve_from`] with `T` = `f64`, [`solve_from_single`]
/// with [`Single`]): the operating point and the [`Start`] of the next solve, or why there is
/// none.
pub type WarmSolve<T = f64> = Result<(OperatingPoint, Start<T>), SolveError>;

/// The number type of [`solve_from_single`]: `f32` where the signal test is built (the default
/// images and the PC), `f64` in the budget build (see there).
#[cfg(feature = "signal-test")]
pub type Single = f32;
/// The number type of [`solve_from_single`]: `f64` in the budget build without the signal test.
#[cfg(not(feature = "signal-test"))]
pub type Single = f64;

/// [`solve`], with Newton's method started from an earlier solution `start` of a similar problem
/// (the same stage with a part value, hFE, temperature or supply a little different, or another
/// fault): a sequence of such solves, as in a fit, then needs a few iterations each instead of
/// many where the hand estimate is a poor start (saturation, a floating terminal, a transistor
/// fault). Where the hand estimate is close (forward active, every terminal driven, a good
/// transistor) it is used instead. The convergence test and the fallbacks (the hand estimate,
/// then the supply ramp) are those of [`solve`], so the answer is the same operating point within
/// the convergence criterion. Also gives the start for the next solve.
pub fn solve_from(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    start: Option<&Start>,
) -> WarmSolve {
    solve_in::<f64>(stage, profile, cond, start)
}

/// [`solve_from`] in single precision: the same model, network and method, with Newton's method,
/// the junction exponentials and the node voltages in `f32` (the set-up in `f64`, rounded once),
/// and the answer widened to `f64`. For the diagnosis's predictions on the instrument, whose FPU
/// does `f32` in hardware and `f64` in software routines. Against [`solve_from`] (tested over
/// random stages, faults, loads, temperatures and hFE in `tests/solve_single.rs`): node voltages
/// within a hundredth of the default meter's error at the reading (mostly within a few
/// microvolts; at worst some tenths of a millivolt where the stage's current is the difference
/// of larger device currents), admittances within 1e-4 of their row, and an answer wherever
/// [`solve_from`] gives one. Every other caller keeps [`solve_from`].
///
/// The budget build for parts with 128 KiB of flash (no signal test) has no room for a second
/// instance of the solver (about 6.5 KB with `expf` and `logf`): there this is [`solve_from`]
/// itself ([`Single`] is `f64`), so its diagnosis stays in `f64`.
pub fn solve_from_single(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    start: Option<&StartSingle>,
) -> WarmSolve<Single> {
    if !cfg!(feature = "signal-test") {
        return solve_in::<Single>(stage, profile, cond, start);
    }
    // Three transistor faults leave the stage's collector current the small difference of much
    // larger currents, which `f32` cannot resolve; they are solved in `f64`. A collector-emitter
    // short holds VCE = VBE − VBC at the short's few nanovolts, the difference of two unknowns
    // near 0.65 V whose `f32` resolution is 60 nV (the short's 10⁴ S times that is 0.6 mA); a
    // base-collector short carries the base drive through the short, against the transport
    // current; a reversed transistor works inversely, its collector-node current the sum of the
    // device's opposing base and collector currents.
    if matches!(
        cond.fault,
        Some(DeviceFault::CeShort | DeviceFault::BcShort | DeviceFault::Reversed)
    ) {
        return solve_double_for_single(stage, profile, cond, start);
    }
    match solve_in::<Single>(stage, profile, cond, start) {
        Ok((op, next)) if within_supply(&op) => Ok((op, next)),
        // Where the junction currents are far beyond any part's (a junction straight across
        // the supply, with amperes to 10²³ A on the exponential's straight continuation), the
        // collector current is the difference of two such currents and lost in `f32`: a node
        // then lands outside the supply, which no passive network with one supply can do.
        // Solved in `f64`, as is a stage that did not converge.
        _ => solve_double_for_single(stage, profile, cond, start),
    }
}

/// Every node voltage within the supply rails, give or take a thousandth of the supply: true of
/// every operating point of the stage (the transistor, the resistors and the loads are passive),
/// so a node outside says the `f32` arithmetic lost the answer.
fn within_supply(op: &OperatingPoint) -> bool {
    let margin = 1e-3 * op.vcc;
    [op.vb, op.ve, op.vc]
        .iter()
        .all(|v| *v >= -margin && *v <= op.vcc + margin)
}

/// [`solve_from`] for a caller of [`solve_from_single`]: the start widened, the next one rounded.
fn solve_double_for_single(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    start: Option<&StartSingle>,
) -> WarmSolve<Single> {
    let start = start.map(|s| Start {
        x: s.x.map(Real::wide),
        temp_c: s.temp_c,
        is_25: s.is_25,
        is: s.is,
        law: s.law,
    });
    let (op, next) = solve_in::<f64>(stage, profile, cond, start.as_ref())?;
    let next = Start {
        x: next.x.map(Single::of),
        temp_c: next.temp_c,
        is_25: next.is_25,
        is: next.is,
        law: next.law,
    };
    Ok((op, next))
}

/// [`solve_from`] in the number type `T`.
fn solve_in<T: Real>(
    stage: &Stage,
    profile: &Profile,
    cond: Conditions,
    start: Option<&Start<T>>,
) -> WarmSolve<T> {
    let vcc = stage.vcc.value;
    let (r_top, r_bottom) = match stage.polarity {
        // In the mirrored NPN frame of a PNP stage, R1 (supply side) takes the place of R2.
        Polarity::Npn => (stage.r1.value, stage.r2.value),
        Polarity::Pnp => (stage.r2.value, stage.r1.value),
    };
    let rc = stage.rc.value;
    let re = stage.re_total();
    let temp = cond.temp_c;
    // The same temperature law for the same figures gives the same IS, VT and hFE, bit for bit:
    // they are taken from the start when its figures are the same.
    let same_ambient = start.filter(|s| {
        s.temp_c.to_bits() == temp.to_bits() && s.is_25.to_bits() == profile.is_25.to_bits()
    });
    let is = same_ambient.map_or_else(|| profile.is_at(temp), |s| s.is);
    let law = match same_ambient.map(|s| s.law) {
        Some(l)
            if l.beta_25.to_bits() == cond.beta_25.to_bits()
                && l.beta_tc.to_bits() == profile.beta_tc.to_bits()
                && l.beta_rev.to_bits() == profile.beta_rev.to_bits() =>
        {
            l
        }
        _ => {
            let vt = thermal_voltage(temp);
            let beta = profile.beta_at(cond.beta_25, temp);
            Law {
                vt,
                inv_vt: 1.0 / vt,
                beta_25: cond.beta_25,
                beta_tc: profile.beta_tc,
                beta_rev: profile.beta_rev,
                beta,
                is_bf: is / beta,
                is_br: is / profile.beta_rev,
            }
        }
    };
    let (vt, beta) = (law.vt, law.beta);
    let j = Junction {
        vt,
        inv_vt: law.inv_vt,
        is,
        is_bf: law.is_bf,
        is_br: law.is_br,
        inv_va: profile.early.map_or(0.0, |va| 1.0 / va),
        gmin: 0.0,
        fault: cond.fault,
    };
    let (base, coll, emit) = if cond.loads.is_none() {
        (
            divider(vcc, r_top, r_bottom)?,
            to_rail(vcc, rc),
            to_rail(0.0, re),
        )
    } else {
        loaded_nets(
            stage.polarity,
            vcc,
            stage.r1.value,
            stage.r2.value,
            rc,
            re,
            cond.loads,
        )?
    };
    let free = [
        matches!(base, Net::Free),
        matches!(coll, Net::Free) || cond.fault == Some(DeviceFault::BcOpen),
        matches!(emit, Net::Free) || cond.fault == Some(DeviceFault::BeOpen),
    ];
    let j = if free == [false; 3] {
        j
    } else {
        Junction {
            gmin: JUNCTION_GMIN,
            ..j
        }
    };
    let p = Problem {
        vcc: T::of(vcc),
        base: T::net(base),
        coll: T::net(coll),
        emit: T::net(emit),
        free,
        equations: pick_equations(free),
        j: T::junction(j),
    };
    // A NaN or an infinity anywhere makes the sum non-finite.
    if !((vcc + vt + is + beta).is_finite() && is > 0.0) {
        return Err(SolveError::NonFinite);
    }
    let mut iterations = 0u16;
    // The hand estimate only where it may serve: it costs a logarithm.
    let regular = p.is_regular();
    let x0 = (regular || start.is_none()).then(|| first_guess(&p));
    let warm = start
        .map(|s| s.x)
        .filter(|x| x[0].finite() && x[1].finite())
        .filter(|_| !(regular && x0.is_some_and(guess_is_close)));
    let from_warm = warm.and_then(|x| newton(&p, T::ONE, x, &mut iterations));
    let settled = match from_warm {
        Some(settled) => Some(settled),
        None => newton(
            &p,
            T::ONE,
            x0.unwrap_or_else(|| first_guess(&p)),
            &mut iterations,
        ),
    };
    let (x, cur) = match settled {
        Some(settled) => settled,
        None => ramp(&p, &mut iterations)?,
    };
    if T::CURRENT_LIMIT < f64::INFINITY {
        // IS·exp(V/VT) above the limit at either junction: V/VT above ln(limit/IS).
        let most = (T::of(T::CURRENT_LIMIT) / p.j.is).ln();
        if x[0] * p.j.inv_vt > most || x[1] * p.j.inv_vt > most {
            return Err(SolveError::NoConvergence);
        }
    }
    let next = Start {
        x,
        temp_c: temp,
        is_25: profile.is_25,
        is,
        law,
    };
    let cur = if T::EXACT_FREE {
        exact_free_currents(cur, free)
    } else {
        cur
    };
    let node = meter_nodes(&p, x, &cur);
    finish(stage, vcc, vt, node, &cur, beta, iterations).map(|op| (op, next))
}

/// The currents with those of the floating terminals (base, collector, emitter) set to their
/// exact zero. Evaluated at the settled point, such a current is the difference of the device's
/// larger currents (with a floating collector, the transport current less the base-collector
/// junction's): zero within the equations' tolerance, but in `f32` some 10⁻⁷ of those currents,
/// which the emitter resistor would turn into a reading off by a fraction of a millivolt.
fn exact_free_currents<T: Real>(cur: Currents<T>, free: [bool; 3]) -> Currents<T> {
    let (ib, ic) = match free {
        [false, false, false] => (cur.ib, cur.ic),
        [true, false, false] => (T::ZERO, cur.ic),
        [false, true, false] => (cur.ib, T::ZERO),
        [false, false, true] => (cur.ib, -cur.ib),
        _ => (T::ZERO, T::ZERO),
    };
    Currents { ib, ic, ..cur }
}

/// Source stepping: raise the supply from a small fraction to full, each step from the last.
fn ramp<T: Real>(
    p: &Problem<T>,
    iterations: &mut u16,
) -> Result<([T; 2], Currents<T>), SolveError> {
    let mut x = [T::ZERO, T::ZERO];
    let mut last = None;
    for k in 1..=RAMP_STEPS {
        let scale = T::of(f64::from(k)) / T::of(f64::from(RAMP_STEPS));
        match newton(p, scale, x, iterations) {
            Some((next, cur)) => {
                x = next;
                last = Some((next, cur));
            }
            None => return Err(SolveError::NoConvergence),
        }
    }
    last.ok_or(SolveError::NoConvergence)
}

/// Node voltages, currents, region and small-signal admittances at the settled point, from what
/// a meter reads at the nodes (NPN frame, V) and the device currents there.
/// Given in `f64` (widened from `T` where needed).
fn finish<T: Real>(
    stage: &Stage,
    vcc: f64,
    vt: f64,
    node: [T; 3],
    cur: &Currents<T>,
    beta: f64,
    iterations: u16,
) -> Result<OperatingPoint, SolveError> {
    let (ib, ic) = (cur.ib.wide(), cur.ic.wide());
    let ie = ib + ic;
    let region = classify(stage, vcc, ib, ic, beta);
    let [dib0, dib1] = [cur.dib[0].wide(), cur.dib[1].wide()];
    let [dic0, dic1] = [cur.dic[0].wide(), cur.dic[1].wide()];
    let y = Admittance {
        y11: dib0 + dib1,
        y12: -dib1,
        y21: dic0 + dic1,
        y22: -dic1,
    };
    let node = [node[0].wide(), node[1].wide(), node[2].wide()];
    let (vb, vc, ve) = match stage.polarity {
        Polarity::Npn => (node[0], node[1], node[2]),
        Polarity::Pnp => (vcc - node[0], vcc - node[1], vcc - node[2]),
    };
    let op = OperatingPoint {
        vcc,
        vb,
        ve,
        vc,
        vbe: vb - ve,
        vce: vc - ve,
        ib,
        ic,
        ie,
        region,
        vt,
        beta,
        y,
        iterations,
    };
    let finite =
        (op.vb + op.ve + op.vc + op.ib + op.ic + op.y.y11 + op.y.y21 + op.y.y22).is_finite();
    if finite {
        Ok(op)
    } else {
        Err(SolveError::NonFinite)
    }
}

/// What a meter reads at the base, collector and emitter nodes (NPN frame), V.
fn meter_nodes<T: Real>(p: &Problem<T>, x: [T; 2], cur: &Currents<T>) -> [T; 3] {
    if let Some([(vb0, rb), (vc0, rc), (ve0, re)]) = p.all_driven() {
        return [
            vb0 - rb * cur.ib,
            vc0 - rc * cur.ic,
            ve0 + re * (cur.ib + cur.ic),
        ];
    }
    let device_i = [cur.ib, cur.ic, -(cur.ib + cur.ic)];
    let nets = [p.base, p.coll, p.emit];
    // Voltages of the device terminals (NPN frame) where the network fixes them.
    let driven: [Option<T>; 3] =
        core::array::from_fn(|k| match (nets.get(k), p.free.get(k), device_i.get(k)) {
            (Some(Net::Driven { vth, r }), Some(false), Some(i)) => Some(*vth - *r * *i),
            _ => None,
        });
    // Floating terminals follow from a fixed one through the junction voltages.
    // Offsets of each terminal from the base: base 0, collector −VBC, emitter −VBE.
    let offset = [T::ZERO, -x[1], -x[0]];
    let base_v = driven
        .iter()
        .zip(offset)
        .find_map(|(v, o)| v.map(|v| v - o))
        .unwrap_or(x[0]);
    // What a meter reads at each node: the network's own voltage where the transistor lead is
    // open (no current flows), otherwise the terminal voltage.
    let node: [T; 3] = core::array::from_fn(|k| {
        let own = driven.get(k).copied().flatten();
        let off = offset.get(k).copied().unwrap_or(T::ZERO);
        match (own, nets.get(k)) {
            (Some(v), _) => v,
            (None, Some(Net::Driven { vth, .. })) => *vth,
            (None, _) => base_v + off,
        }
    });
    node
}

/// Region from the currents: cut off below a thousandth of the stage's saturation current
/// (VCC/(RC+RE)) or 1 nA, saturated where IC falls below 90 % of hFE·IB.
fn classify(stage: &Stage, vcc: f64, ib: f64, ic: f64, beta: f64) -> Region {
    let path = stage.rc.value + stage.re_total();
    let scale = if path.is_finite() && path > 0.0 {
        vcc / path
    } else {
        0.0
    };
    let floor = if scale * 1e-3 > 1e-9 {
        scale * 1e-3
    } else {
        1e-9
    };
    if ic < floor {
        Region::Cutoff
    } else if ic < 0.9 * beta * ib {
        Region::Saturation
    } else {
        Region::Active
    }
}
