//! Fault isolation: which single fault best explains a board's readings.
//!
//! Every hypothesis of the single-fault dictionary (each resistor `open`, `short`, `low`, `high`;
//! the transistor `be_open`, `bc_open`, `be_short`, `bc_short`, `ce_short`, `reversed`; and the
//! good board) is solved with the exact engine at the measured supply. What is unknown is
//! fitted: hFE within the profile's spread and, for `low`/`high`, the part's actual value
//! (searched in log(value) outside the tolerance band on the side the mode names).
//!
//! The match is scored with an error model that knows the parts and the meter: the readings
//! (VB, VE, VC) of a board with the hypothesised fault scatter around the prediction because
//! the other parts lie anywhere within their tolerances (uniform), the ambient anywhere in its
//! range, the supply reading and each node reading carry the meter error (uniform within its
//! bound) and a little probe noise. The scatter is linearised at the hypothesis into a 3×3
//! covariance C (one extra solve per part), and the misfit is the Mahalanobis distance
//! χ² = rᵀ·C⁻¹·r of the residual r. Fitting a part's value costs [`FIT_PENALTY`] on χ², so
//! a plain open or short wins over a `high`/`low` fit that says the same thing. The score is
//! the relative likelihood exp(−χ²/2), normalised over all hypotheses.
//!
//! Hypotheses whose fitted predictions agree at every node within the meter error are grouped
//! as equivalent (their DC signatures cannot be told apart, as with RE1 open and RE2 open).
//! When even the best hypothesis misfits by more than [`UNEXPLAINED_CHI2`], the diagnosis says
//! that no single fault explains the readings, and still ranks the nearest ones.
//!
//! A screen comes first: every hypothesis at typical hFE (a `low`/`high` one on a coarse grid of
//! its value, with two golden-section steps around the best point) under a crude diagonal error
//! model. Only the best [`SCREEN_KEEP`]
//! and any within [`SCREEN_MARGIN`] of the best get the full fit; the others keep their coarse
//! fit, ranked no better than [`SCREEN_MARGIN`] above the best fully fitted χ².
//!
//! Cost: about 185 operating-point solves (at most about 255), each started from the last one
//! ([`solve_from`]: about 2 Newton iterations each).

use heapless::Vec;

use crate::check::reading_error;
use crate::device::Profile;
use crate::limits::Meter;
use crate::settings::Inputs;
use crate::settings::ReadNode;
use crate::solve::{solve_from, Conditions, NodeLoads, OperatingPoint, Start};
use crate::spread::Variation;
use crate::stage::{DeviceFault, Fault, Readings, Resistor, Stage};

/// Hypotheses in one diagnosis at most: the good board, 5 resistors × 4 modes, 6 transistor faults.
pub const CAPACITY: usize = 27;
/// χ² added for a fitted part value (`low`/`high`), so that a fit never beats a plain fault
/// that explains the readings as well.
pub const FIT_PENALTY: f64 = 3.0;
/// Above this χ² of the best hypothesis, no single fault explains the readings.
pub const UNEXPLAINED_CHI2: f64 = 30.0;
/// How far a `low` or `high` value is searched from the nominal: a factor each way (two decades:
/// beyond that a technician treats the part as open or shorted).
pub const VALUE_RANGE: f64 = 100.0;
/// Probe and reading noise assumed on top of the meter's error bound, V (standard deviation).
pub const PROBE_NOISE_V: f64 = 0.002;
/// Extra standard deviation of a node left floating by the fault (nothing but the meter holds
/// it), V: what a real meter reads there depends on its input resistance.
pub const FLOATING_NODE_V: f64 = 0.2;

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
}

impl Suspect {
    /// The part's machine name: "R1", "R2", "RC", "RE1", "RE2", "Q" (or "none" for a good board).
    pub fn part(self) -> &'static str {
        match self {
            Self::Good => "none",
            Self::Resistor(r, _) => r.name(),
            Self::Device(_) => "Q",
        }
    }

    /// The mode's machine name ("open", ..., "be_open", ...; "none" for a good board).
    pub fn mode(self) -> &'static str {
        match self {
            Self::Good => "none",
            Self::Resistor(_, m) => m.name(),
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
    /// The part's fitted actual value for `low`/`high`, Ω.
    pub estimate: Option<f64>,
    /// The fitted hFE at 25 °C.
    pub beta: f64,
    /// VB, VE, VC predicted at the fit, V.
    pub predicted: [f64; 3],
    /// Equivalence group: hypotheses with the same number cannot be told apart by DC readings.
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

/// Why no diagnosis could be made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum DiagnoseError {
    /// A reading is not finite.
    Readings,
    /// Not one hypothesis could be solved (the stage or profile is not valid).
    NothingSolved,
}

impl core::fmt::Display for DiagnoseError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::Readings => "a reading is not a number",
            Self::NothingSolved => "no hypothesis could be solved: check the stage and transistor",
        })
    }
}

/// A symmetric 3×3 matrix (xx, yy, zz, xy, xz, yz).
#[derive(Debug, Clone, Copy, Default)]
struct Sym3 {
    a: f64,
    b: f64,
    c: f64,
    d: f64,
    e: f64,
    f: f64,
}

impl Sym3 {
    fn diag(v: [f64; 3]) -> Self {
        let [a, b, c] = v;
        Self {
            a,
            b,
            c,
            ..Self::default()
        }
    }

    /// Add the outer product s·sᵀ.
    fn add_outer(&mut self, s: [f64; 3]) {
        let [x, y, z] = s;
        self.a += x * x;
        self.b += y * y;
        self.c += z * z;
        self.d += x * y;
        self.e += x * z;
        self.f += y * z;
    }

    /// The inverse (the matrix is positive definite by construction), or a diagonal fallback.
    fn inverse(&self) -> Self {
        let Self { a, b, c, d, e, f } = *self;
        let ca = b * c - f * f;
        let cb = a * c - e * e;
        let cc = a * b - d * d;
        let cd = e * f - d * c;
        let ce = d * f - b * e;
        let cf = d * e - a * f;
        let det = a * ca + d * cd + e * ce;
        if det > 0.0 && det.is_finite() {
            Self {
                a: ca / det,
                b: cb / det,
                c: cc / det,
                d: cd / det,
                e: ce / det,
                f: cf / det,
            }
        } else {
            Self::diag([1.0 / a, 1.0 / b, 1.0 / c])
        }
    }

    /// rᵀ·M·r.
    fn quad(&self, r: [f64; 3]) -> f64 {
        let [x, y, z] = r;
        self.a * x * x
            + self.b * y * y
            + self.c * z * z
            + 2.0 * (self.d * x * y + self.e * x * z + self.f * y * z)
    }
}

/// The fixed parts of one diagnosis.
struct Ctx<'a> {
    stage: Stage,
    profile: &'a Profile,
    temp_c: f64,
    measured: [f64; 3],
    /// The measuring inputs attached while the nodes are read.
    inputs: Inputs,
    solves: u32,
    /// The last solution, where the next solve starts (successive solves differ a little).
    start: Option<Start>,
}

/// A change to the board for a sensitivity solve.
#[derive(Clone, Copy)]
enum Tweak {
    None,
    Scale(Resistor, f64),
    Temp(f64),
    Supply(f64),
}

impl Ctx<'_> {
    /// VB, VE, VC for `suspect` with the part value `value` (low/high) and hFE `beta`.
    fn predict(
        &mut self,
        suspect: Suspect,
        value: f64,
        beta: f64,
        tweak: Tweak,
    ) -> Option<[f64; 3]> {
        let mut stage = self.stage;
        let mut temp_c = self.temp_c;
        match tweak {
            Tweak::None => {}
            Tweak::Scale(r, k) => stage.part_mut(r).value *= k,
            Tweak::Temp(t) => temp_c = t,
            Tweak::Supply(v) => stage.vcc.value = v,
        }
        let (stage, fault) = match suspect {
            Suspect::Good => (stage, None),
            Suspect::Resistor(r, ResistorMode::Open) => (stage.with_fault(Fault::Open(r)), None),
            Suspect::Resistor(r, ResistorMode::Short) => (stage.with_fault(Fault::Short(r)), None),
            Suspect::Resistor(r, _) => (stage.with_fault(Fault::Value(r, value)), None),
            Suspect::Device(d) => (stage, Some(d)),
        };
        let cond = Conditions {
            temp_c,
            beta_25: beta,
            fault,
            loads: NodeLoads::NONE,
        };
        match self.inputs.common_loads() {
            Some(loads) => {
                let op = self.solve(&stage, cond.loaded(loads))?;
                Some([op.vb, op.ve, op.vc])
            }
            None => self.one_at_a_time(&stage, cond),
        }
    }

    /// Each node read with only its own input attached: one solve per node. (Out of line: its
    /// solves stay out of `predict`'s frame on the instrument.)
    #[inline(never)]
    fn one_at_a_time(&mut self, stage: &Stage, cond: Conditions) -> Option<[f64; 3]> {
        let mut at = |n: ReadNode| {
            let loads = self.inputs.loads_reading(n);
            self.solve(stage, cond.loaded(loads))
        };
        let vb = at(ReadNode::Base)?.vb;
        let ve = at(ReadNode::Emitter)?.ve;
        let vc = at(ReadNode::Collector)?.vc;
        Some([vb, ve, vc])
    }

    /// One solve, started from the last one.
    #[inline(always)]
    fn solve(&mut self, stage: &Stage, cond: Conditions) -> Option<OperatingPoint> {
        self.solves = self.solves.saturating_add(1);
        let (op, next) = solve_from(stage, self.profile, cond, self.start.as_ref()).ok()?;
        self.start = Some(next);
        Some(op)
    }

    fn chi2(&self, inv: &Sym3, y: Option<[f64; 3]>) -> f64 {
        match y {
            Some(y) => {
                let [a, b, c] = self.measured;
                let [p, q, r] = y;
                inv.quad([a - p, b - q, c - r])
            }
            None => f64::INFINITY,
        }
    }
}

/// Resolution of the 1-D searches in log(value) and log(hFE): 0.1 %, finer than the readings
/// can tell apart (the meter error is some tenths of a percent of a reading, and a node moves
/// by no more than the part value or hFE behind it).
const SEARCH_RESOLUTION: f64 = 1e-3;
/// Evaluations of the parabolic refinement after a three-point start.
const REFINE_STEPS: u16 = 4;

/// Index of the smallest f among the points (the first on a tie; 0 when none is below infinity).
fn best_index(pts: &[(f64, f64)]) -> usize {
    let mut best = (0, f64::INFINITY);
    for (k, p) in pts.iter().enumerate() {
        if p.1 < best.1 {
            best = (k, p.1);
        }
    }
    best.0
}

/// Successive parabolic interpolation from three points in increasing x, for at most `steps`
/// evaluations of `f`. While the best point has a neighbour on either side, the vertex of the
/// parabola through the three is evaluated if it falls inside their bracket (else the golden
/// point of the larger half); when the best point is an end, the vertex is evaluated only if it
/// falls between the end and its neighbour (otherwise the end is the minimum). It stops once
/// the next point would come within [`SEARCH_RESOLUTION`] of a known one. The search never
/// leaves the span of the three points. Returns the best (x, f(x)) seen.
fn refine(f: &mut dyn FnMut(f64) -> f64, start: [(f64, f64); 3], steps: u16) -> (f64, f64) {
    const GOLDEN: f64 = 0.381_966_011_250_105_1;
    let mut pts: Vec<(f64, f64), 8> = Vec::new();
    for p in start {
        let _ = pts.push(p);
    }
    for _ in 0..steps {
        let n = pts.len();
        let k = best_index(&pts);
        // The best point and its neighbours, or the three at the end where it lies.
        let m = k.clamp(1, n.saturating_sub(2).max(1));
        let (Some(&(x0, f0)), Some(&(x1, f1)), Some(&(x2, f2))) =
            (pts.get(m - 1), pts.get(m), pts.get(m + 1))
        else {
            break;
        };
        if !(f0.is_finite() && f1.is_finite() && f2.is_finite()) {
            break;
        }
        let (d0, d2) = (x1 - x0, x1 - x2);
        let num = d0 * d0 * (f1 - f2) - d2 * d2 * (f1 - f0);
        let den = d0 * (f1 - f2) - d2 * (f1 - f0);
        let vertex = (den != 0.0).then(|| x1 - 0.5 * num / den);
        // Where the minimum is: between the neighbours of an inner best, or between an end and
        // its neighbour.
        let (a, b) = if k == m {
            (x0, x2)
        } else if k < m {
            (x0, x1)
        } else {
            (x1, x2)
        };
        let inside = |u: f64| u > a && u < b;
        let u = match vertex {
            Some(u) if inside(u) => u,
            _ if k != m => break,
            _ => {
                if x1 - x0 > x2 - x1 {
                    x1 - GOLDEN * (x1 - x0)
                } else {
                    x1 + GOLDEN * (x2 - x1)
                }
            }
        };
        if !(u.is_finite() && pts.iter().all(|p| libm::fabs(p.0 - u) >= SEARCH_RESOLUTION)) {
            break;
        }
        let fu = f(u);
        let at = pts.iter().position(|p| p.0 > u).unwrap_or(n);
        if pts.insert(at, (u, fu)).is_err() {
            break;
        }
    }
    pts.get(best_index(&pts)).copied().unwrap_or(start[1])
}

/// Minimise `f` on [lo, hi]: a grid of `grid` points, then golden-section refinement of the best
/// bracket for `refine` steps. Returns (x, f(x)).
fn minimise(f: &mut dyn FnMut(f64) -> f64, lo: f64, hi: f64, grid: u16, refine: u16) -> (f64, f64) {
    if hi.is_nan() || lo.is_nan() || hi <= lo || grid < 2 {
        let m = 0.5 * (lo + hi);
        return (m, f(m));
    }
    let step = (hi - lo) / f64::from(grid - 1);
    let mut best = (lo, f64::INFINITY);
    let mut best_k = 0u16;
    for k in 0..grid {
        let x = lo + step * f64::from(k);
        let fx = f(x);
        if fx < best.1 {
            best = (x, fx);
            best_k = k;
        }
    }
    let mut a = if best_k > 0 { best.0 - step } else { best.0 };
    let mut b = if best_k + 1 < grid {
        best.0 + step
    } else {
        best.0
    };
    const INV_PHI: f64 = 0.618_033_988_749_894_8;
    let mut x1 = b - INV_PHI * (b - a);
    let mut x2 = a + INV_PHI * (b - a);
    let mut f1 = if refine > 0 { f(x1) } else { f64::INFINITY };
    let mut f2 = if refine > 1 { f(x2) } else { f64::INFINITY };
    for _ in 2..refine {
        if f1 < f2 {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - INV_PHI * (b - a);
            f1 = f(x1);
        } else {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + INV_PHI * (b - a);
            f2 = f(x2);
        }
    }
    for (x, fx) in [(x1, f1), (x2, f2)] {
        if fx < best.1 {
            best = (x, fx);
        }
    }
    best
}

/// The log-value search interval of a `low`/`high` fit, or `None` for other suspects.
fn value_interval(stage: &Stage, suspect: Suspect) -> Option<(f64, f64)> {
    match suspect {
        Suspect::Resistor(r, m @ (ResistorMode::Low | ResistorMode::High)) => {
            let p = stage.part(r);
            let ln = libm::log(p.value);
            let span = libm::log(VALUE_RANGE);
            // Just outside the tolerance band, on the side the mode names.
            if m == ResistorMode::Low {
                Some((ln - span, libm::log(1.0 - p.tol) + ln))
            } else {
                Some((libm::log(1.0 + p.tol) + ln, ln + span))
            }
        }
        _ => None,
    }
}

/// The node left floating by a fault (measured through nothing but the meter): VB, VE, VC.
fn floating(suspect: Suspect) -> [bool; 3] {
    match suspect {
        Suspect::Resistor(Resistor::Re1 | Resistor::Re2, ResistorMode::Open) => {
            [false, true, false]
        }
        Suspect::Resistor(Resistor::Rc, ResistorMode::Open) => [false, false, true],
        _ => [false; 3],
    }
}

/// The covariance of the readings around the prediction of `suspect` at (`value`, `beta`), from
/// the other parts' tolerances, the ambient range, the supply reading's error, the meter and noise.
fn covariance(
    ctx: &mut Ctx<'_>,
    meter: &Meter,
    var: &Variation,
    suspect: Suspect,
    value: f64,
    beta: f64,
    y0: [f64; 3],
) -> Sym3 {
    const INV_SQRT3: f64 = 0.577_350_269_189_625_8;
    // A node a fault leaves floating is held by the measuring input where one is modelled (the
    // prediction then includes it); only an ideal meter's reading of it is uncertain.
    let float = if ctx.inputs.is_ideal() {
        floating(suspect)
    } else {
        [false; 3]
    };
    let mut diag = [0.0; 3];
    for ((d, m), fl) in diag.iter_mut().zip(ctx.measured).zip(float) {
        let s = reading_error(meter, m) * INV_SQRT3;
        let extra = if fl { FLOATING_NODE_V } else { 0.0 };
        *d = s * s + PROBE_NOISE_V * PROBE_NOISE_V + extra * extra;
    }
    let mut cov = Sym3::diag(diag);
    let fitted = match suspect {
        Suspect::Resistor(r, _) => Some(r),
        _ => None,
    };
    let mut add = |ctx: &mut Ctx<'_>, tweak: Tweak, k: f64| {
        if let Some(y) = ctx.predict(suspect, value, beta, tweak) {
            let [a, b, c] = y;
            let [p, q, r] = y0;
            cov.add_outer([(a - p) * k, (b - q) * k, (c - r) * k]);
        }
    };
    for r in Resistor::ALL {
        let p = ctx.stage.part(r);
        if Some(r) == fitted || p.value.is_nan() || p.value <= 0.0 || p.tol.is_nan() || p.tol <= 0.0
        {
            continue;
        }
        // A step to the tolerance edge; a uniform spread has σ = tol/√3.
        add(ctx, Tweak::Scale(r, 1.0 + p.tol), INV_SQRT3);
    }
    if var.temp_max_c > var.temp_min_c {
        // Half the range as the step; a uniform spread over the range has σ = half/√3.
        add(ctx, Tweak::Temp(var.temp_max_c), INV_SQRT3);
    }
    let vcc = ctx.stage.vcc.value;
    let err = reading_error(meter, vcc);
    add(ctx, Tweak::Supply(vcc + err), INV_SQRT3);
    cov
}

/// A crude diagonal error model used to locate a part value before the full one is built.
fn crude_inverse(ctx: &Ctx<'_>, meter: &Meter) -> Sym3 {
    let vcc = ctx.stage.vcc.value;
    let mut d = [0.0; 3];
    for (d, m) in d.iter_mut().zip(ctx.measured) {
        let s = reading_error(meter, m) + 0.03 * libm::fabs(m) + 0.01 * vcc;
        *d = 1.0 / (s * s);
    }
    Sym3::diag(d)
}

/// The best fit of a hypothesis under the full error model so far.
#[derive(Clone, Copy)]
struct Top {
    chi2: f64,
    value: f64,
    beta: f64,
    y: [f64; 3],
}

impl Top {
    /// Keep (`value`, `beta`) with its prediction `y` if it fits better; gives its χ².
    fn offer(
        &mut self,
        ctx: &Ctx<'_>,
        inv: &Sym3,
        value: f64,
        beta: f64,
        y: Option<[f64; 3]>,
    ) -> f64 {
        let chi2 = ctx.chi2(inv, y);
        if let Some(y) = y {
            if chi2 < self.chi2 {
                *self = Self {
                    chi2,
                    value,
                    beta,
                    y,
                };
            }
        }
        chi2
    }
}

/// Fit one hypothesis; returns (χ², value, beta, prediction).
fn fit(
    ctx: &mut Ctx<'_>,
    meter: &Meter,
    var: &Variation,
    crude: &Sym3,
    suspect: Suspect,
    coarse: Coarse,
) -> Option<(f64, Option<f64>, f64, [f64; 3])> {
    let p = ctx.profile;
    let (lb_lo, lb_hi) = (libm::log(p.beta_min), libm::log(p.beta_max));
    let beta_typ = p.beta_typ;
    let lb_typ = libm::log(beta_typ);
    let beta_fits = lb_hi > lb_lo + 1e-9;
    let interval = coarse.span;
    // 1. Locate the part value with the crude error model at typical hFE, one step of the
    //    screen's grid either way of its find (golden section: the crude misfit is not smooth
    //    enough in the value for parabolic steps to find it as well).
    let mut at_typ = coarse;
    if let Some((lo, hi)) = interval {
        let step = (hi - lo) / f64::from(SCREEN_GRID - 1);
        let a = if coarse.lv - step > lo {
            coarse.lv - step
        } else {
            lo
        };
        let b = if coarse.lv + step < hi {
            coarse.lv + step
        } else {
            hi
        };
        if let Some(c) = locate(ctx, crude, suspect, interval, (a, b), LOCATE_GRID, 10) {
            at_typ = c;
        }
    }
    // 2. The full error model at that point (its prediction is the crude fit's).
    let value = libm::exp(at_typ.lv);
    let y0 = at_typ.y;
    let inv = covariance(ctx, meter, var, suspect, value, beta_typ, y0).inverse();
    let mut top = Top {
        chi2: f64::INFINITY,
        value,
        beta: beta_typ,
        y: y0,
    };
    let c_typ = top.offer(ctx, &inv, value, beta_typ, Some(y0));
    // 3. hFE within its spread (from its ends and the typical value), then the value again
    //    around the first find, one grid step either way.
    if beta_fits {
        let mut at = |lb: f64| {
            let b = libm::exp(lb);
            let y = ctx.predict(suspect, value, b, Tweak::None);
            top.offer(ctx, &inv, value, b, y)
        };
        let (lo, hi) = (at(lb_lo), at(lb_hi));
        if lb_typ > lb_lo && lb_typ < lb_hi {
            refine(
                &mut at,
                [(lb_lo, lo), (lb_typ, c_typ), (lb_hi, hi)],
                REFINE_STEPS,
            );
        } else {
            let lb_mid = 0.5 * (lb_lo + lb_hi);
            let mid = at(lb_mid);
            refine(
                &mut at,
                [(lb_lo, lo), (lb_mid, mid), (lb_hi, hi)],
                REFINE_STEPS,
            );
        }
    }
    if let Some((lo, hi)) = interval {
        let (lv0, beta, c0) = (libm::log(top.value), top.beta, top.chi2);
        let step = (hi - lo) / 12.0;
        let a = if lv0 - step > lo { lv0 - step } else { lo };
        let b = if lv0 + step < hi { lv0 + step } else { hi };
        let mut at = |lv: f64| {
            let v = libm::exp(lv);
            let y = ctx.predict(suspect, v, beta, Tweak::None);
            top.offer(ctx, &inv, v, beta, y)
        };
        if a < lv0 && lv0 < b {
            let (fa, fb) = (at(a), at(b));
            refine(&mut at, [(a, fa), (lv0, c0), (b, fb)], REFINE_STEPS);
        } else {
            minimise(&mut at, a, b, 3, 10);
        }
    }
    if !top.chi2.is_finite() {
        // Nothing fitted under the full model (every solve failed but the first): the first.
        top.chi2 = c_typ;
    }
    Some((top.chi2, interval.map(|_| top.value), top.beta, top.y))
}

/// Hypotheses always given the full fit after the screen, at least.
pub const SCREEN_KEEP: usize = 4;
/// Coarse χ² (crude error model) within which of the best coarse one a hypothesis gets the full fit.
pub const SCREEN_MARGIN: f64 = 5.0;
/// Points of the screen's grid in log(value) for `low`/`high`.
const SCREEN_GRID: u16 = 7;
/// Golden-section steps of the screen after its grid.
const SCREEN_STEPS: u16 = 2;
/// Points of the grid that locates a part value around the screen's find.
const LOCATE_GRID: u16 = 5;

/// A crude fit of a hypothesis at typical hFE: its χ² under the crude error model, the search
/// interval of log(value) (low/high) and the log(value) found, the prediction there.
#[derive(Clone, Copy)]
struct Coarse {
    chi2: f64,
    span: Option<(f64, f64)>,
    lv: f64,
    y: [f64; 3],
}

/// The crude fit of `suspect` at typical hFE over [lo, hi] of log(value) (`grid` points, then
/// `steps` of golden section; without a value to fit, one solve).
fn locate(
    ctx: &mut Ctx<'_>,
    crude: &Sym3,
    suspect: Suspect,
    span: Option<(f64, f64)>,
    (lo, hi): (f64, f64),
    grid: u16,
    steps: u16,
) -> Option<Coarse> {
    let beta = ctx.profile.beta_typ;
    let mut best: Option<Coarse> = None;
    minimise(
        &mut |lv| {
            let y = ctx.predict(suspect, libm::exp(lv), beta, Tweak::None);
            let chi2 = ctx.chi2(crude, y);
            if let Some(y) = y {
                if best.is_none_or(|b| chi2 < b.chi2) {
                    best = Some(Coarse { chi2, span, lv, y });
                }
            }
            chi2
        },
        lo,
        hi,
        grid,
        steps,
    );
    best
}

/// The screen of one hypothesis: typical hFE, a value fault at the points of a coarse grid and
/// [`SCREEN_STEPS`] golden-section steps around the best of them.
fn screen(ctx: &mut Ctx<'_>, crude: &Sym3, suspect: Suspect) -> Option<Coarse> {
    let span = value_interval(&ctx.stage, suspect);
    locate(
        ctx,
        crude,
        suspect,
        span,
        span.unwrap_or((0.0, 0.0)),
        SCREEN_GRID,
        SCREEN_STEPS,
    )
}

/// Every hypothesis of the dictionary for this stage (resistors of zero ohms are not fitted and
/// are left out).
fn dictionary(stage: &Stage) -> Vec<Suspect, CAPACITY> {
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
    v
}

/// Rank the single-fault hypotheses against a board's readings.
///
/// `stage` is the design (nominal parts and tolerances; its supply is replaced by the measured
/// one), `var` gives the ambient range and the measuring inputs attached while the nodes were
/// read (every hypothesis is solved with them), `meter` the accuracy of the readings.
pub fn diagnose(
    stage: &Stage,
    profile: &Profile,
    readings: &Readings,
    meter: &Meter,
    var: &Variation,
) -> Result<Diagnosis, DiagnoseError> {
    let mut d = Diagnosis {
        ranked: Vec::new(),
        explained: false,
        solves: 0,
    };
    diagnose_into(stage, profile, readings, meter, var, &mut d)?;
    Ok(d)
}

/// [`diagnose`] written into `out` (a few KB): an instrument keeps the result where it is stored
/// instead of moving it through its stack. On an error `out` holds nothing useful.
pub fn diagnose_into(
    stage: &Stage,
    profile: &Profile,
    readings: &Readings,
    meter: &Meter,
    var: &Variation,
    out: &mut Diagnosis,
) -> Result<(), DiagnoseError> {
    out.ranked.clear();
    out.explained = false;
    out.solves = 0;
    let m = [readings.vb, readings.ve, readings.vc];
    if !(m.iter().all(|v| v.is_finite()) && readings.vcc.is_finite()) {
        return Err(DiagnoseError::Readings);
    }
    let mut at_supply = *stage;
    at_supply.vcc.value = readings.vcc;
    let mut ctx = Ctx {
        stage: at_supply,
        profile,
        temp_c: 0.5 * (var.temp_min_c + var.temp_max_c),
        measured: m,
        inputs: var.inputs,
        solves: 0,
        start: None,
    };
    // 1. The screen: every hypothesis at typical hFE (value faults at the points of a coarse
    //    grid) under the crude error model.
    let crude = crude_inverse(&ctx, meter);
    let mut coarse: Vec<(Suspect, Coarse), CAPACITY> = Vec::new();
    for suspect in dictionary(stage) {
        if let Some(c) = screen(&mut ctx, &crude, suspect) {
            let _ = coarse.push((suspect, c));
        }
    }
    let best_coarse = coarse.iter().fold(
        f64::INFINITY,
        |m, c| if c.1.chi2 < m { c.1.chi2 } else { m },
    );
    // 2. The full fit for every hypothesis the screen cannot rule out: the best SCREEN_KEEP and
    //    any within SCREEN_MARGIN of the best. The rest keep their coarse fit.
    let ranked = &mut out.ranked;
    let mut rough = 0u32;
    let mut floor = f64::INFINITY;
    for &(suspect, c) in &coarse {
        let better = coarse.iter().filter(|o| o.1.chi2 < c.chi2).count();
        let full = if better < SCREEN_KEEP || c.chi2 <= best_coarse + SCREEN_MARGIN {
            fit(&mut ctx, meter, var, &crude, suspect, c)
        } else {
            None
        };
        let (chi2, estimate, beta, predicted) = full.unwrap_or_else(|| {
            rough |= 1 << ranked.len();
            let estimate = c.span.map(|_| libm::exp(c.lv));
            (c.chi2, estimate, profile.beta_typ, c.y)
        });
        if rough & (1 << ranked.len()) == 0 && chi2 < floor {
            floor = chi2;
        }
        let _ = ranked.push(Hypothesis {
            suspect,
            score: 0.0,
            chi2: if chi2.is_finite() { chi2 } else { f64::MAX },
            estimate,
            beta,
            predicted,
            group: 0,
        });
    }
    // All the screen tells of a hypothesis it ruled out: it misfits by SCREEN_MARGIN more than
    // the best fully fitted one, at least.
    floor += SCREEN_MARGIN;
    for (k, h) in ranked.iter_mut().enumerate() {
        if rough & (1 << k) != 0 && h.chi2 < floor {
            h.chi2 = floor;
        }
    }
    if ranked.is_empty() {
        return Err(DiagnoseError::NothingSolved);
    }
    let penalised = |h: &Hypothesis| {
        h.chi2
            + if h.estimate.is_some() {
                FIT_PENALTY
            } else {
                0.0
            }
    };
    crate::order::sort_by(ranked, |a, b| penalised(a).total_cmp(&penalised(b)));
    let best = ranked.first().map_or(0.0, penalised);
    let explained = ranked.first().is_some_and(|h| h.chi2 <= UNEXPLAINED_CHI2);
    let mut total = 0.0;
    for h in ranked.iter_mut() {
        h.score = libm::exp(-0.5 * (penalised(h) - best));
        total += h.score;
    }
    for h in ranked.iter_mut() {
        h.score /= total;
    }
    // Group: each joins the first earlier leader it cannot be told apart from.
    let tol: [f64; 3] =
        core::array::from_fn(|k| m.get(k).map_or(0.0, |v| reading_error(meter, *v)));
    let mut leaders: Vec<([f64; 3], u8), CAPACITY> = Vec::new();
    for h in ranked.iter_mut() {
        let same = |p: &[f64; 3]| {
            p.iter()
                .zip(h.predicted)
                .zip(tol)
                .all(|((a, b), t)| libm::fabs(a - b) <= t)
        };
        match leaders.iter().find(|(p, _)| same(p)) {
            Some((_, g)) => h.group = *g,
            None => {
                let g = u8::try_from(leaders.len()).unwrap_or(u8::MAX);
                h.group = g;
                let _ = leaders.push((h.predicted, g));
            }
        }
    }
    // Keep each group together, in the order of its best member, best first within a group.
    crate::order::sort_by(ranked, |a, b| {
        a.group
            .cmp(&b.group)
            .then(penalised(a).total_cmp(&penalised(b)))
    });
    out.explained = explained;
    out.solves = ctx.solves;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverse_of_a_symmetric_matrix() {
        let mut m = Sym3::diag([2.0, 3.0, 4.0]);
        m.add_outer([1.0, 0.5, -0.25]);
        let inv = m.inverse();
        // M·M⁻¹ = I, checked through quadratic forms: (x)ᵀ M⁻¹ (M x) = xᵀ x.
        let x = [0.3, -1.2, 0.7];
        let mx = [
            m.a * x[0] + m.d * x[1] + m.e * x[2],
            m.d * x[0] + m.b * x[1] + m.f * x[2],
            m.e * x[0] + m.f * x[1] + m.c * x[2],
        ];
        let back = [
            inv.a * mx[0] + inv.d * mx[1] + inv.e * mx[2],
            inv.d * mx[0] + inv.b * mx[1] + inv.f * mx[2],
            inv.e * mx[0] + inv.f * mx[1] + inv.c * mx[2],
        ];
        for (a, b) in back.iter().zip(x) {
            assert!((a - b).abs() < 1e-12, "{back:?}");
        }
    }

    #[test]
    fn parabolic_refinement_finds_a_minimum_in_few_steps() {
        let mut n = 0;
        let mut f = |x: f64| {
            n += 1;
            (x - 0.37) * (x - 0.37) * (1.0 + 0.1 * x) + 2.0
        };
        let start = [-1.0, 0.2, 1.0].map(|x| (x, f(x)));
        let (x, fx) = refine(&mut f, start, REFINE_STEPS);
        assert!((x - 0.37).abs() < 2e-3, "{x}");
        assert!((fx - 2.0).abs() < 1e-5);
        assert!(n <= 3 + usize::from(REFINE_STEPS), "{n}");
        // A minimum at an end of the span: the end.
        let (x, _) = refine(
            &mut |x| x,
            [(0.0, 0.0), (0.5, 0.5), (1.0, 1.0)],
            REFINE_STEPS,
        );
        assert_eq!(x, 0.0);
        let (x, _) = refine(
            &mut |x| -x * x,
            [(0.0, 0.0), (0.5, -0.25), (1.0, -1.0)],
            REFINE_STEPS,
        );
        assert_eq!(x, 1.0);
    }

    #[test]
    fn golden_section_finds_a_parabola_minimum() {
        let (x, fx) = minimise(&mut |x| (x - 1.37) * (x - 1.37) + 2.0, -5.0, 5.0, 9, 25);
        assert!((x - 1.37).abs() < 1e-3, "{x}");
        assert!((fx - 2.0).abs() < 1e-6);
        // At the interval's edge.
        let (x, _) = minimise(&mut |x| x, 0.0, 1.0, 5, 10);
        assert!(x < 0.05, "{x}");
    }
}
