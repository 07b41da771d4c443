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
#[cfg(feature = "signal-test")]
use crate::response;
use crate::response::{CapState, Caps};
use crate::settings::Inputs;
use crate::settings::ReadNode;
use crate::signaltest::{SignalMeter, ToneReading, MAX_TONES};
use crate::solve::{solve_from, Conditions, NodeLoads, OperatingPoint, Start};
use crate::spread::Variation;
use crate::stage::{Capacitor, DeviceFault, Fault, Readings, Resistor, Stage};

/// Hypotheses in one diagnosis at most: the good board, 5 resistors × 4 modes, 6 transistor
/// faults, 3 capacitors × 4 modes.
pub const CAPACITY: usize = if cfg!(feature = "signal-test") {
    39
} else {
    // Without the signal test a capacitor can only be `short` (seen at DC).
    30
};
/// Gain readings in one diagnosis at most (none without the signal test).
pub const GAIN_SLOTS: usize = if cfg!(feature = "signal-test") {
    MAX_TONES
} else {
    0
};
/// Readings in one diagnosis at most: VB, VE, VC and the gain at each test frequency.
const DIM: usize = 3 + GAIN_SLOTS;
/// Noise of a gain reading on top of the signal meter's error bound, V/V (standard deviation).
pub const GAIN_NOISE: f64 = 0.005;
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
    /// A reading is not finite (or a test frequency or gain is out of range).
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

/// A symmetric matrix over the first `n` of [`DIM`] readings (the rest unused).
#[derive(Debug, Clone, Copy)]
struct Sym {
    m: [[f64; DIM]; DIM],
    n: usize,
}

#[expect(
    clippy::indexing_slicing,
    clippy::needless_range_loop,
    reason = "fixed DIM×DIM arrays indexed by loop counters below n <= DIM (row and column)"
)]
impl Sym {
    fn diag(v: [f64; DIM], n: usize) -> Self {
        let mut m = [[0.0; DIM]; DIM];
        for k in 0..n.min(DIM) {
            m[k][k] = v[k];
        }
        Self { m, n: n.min(DIM) }
    }

    /// Add the outer product s·sᵀ.
    fn add_outer(&mut self, s: [f64; DIM]) {
        for i in 0..self.n {
            for j in 0..self.n {
                self.m[i][j] += s[i] * s[j];
            }
        }
    }

    /// The inverse (the matrix is positive definite by construction) by Gauss-Jordan with
    /// partial pivoting, or the inverse of the diagonal when it is singular.
    fn inverse(&self) -> Self {
        let n = self.n;
        let mut a = self.m;
        let mut inv = [[0.0; DIM]; DIM];
        for k in 0..n {
            inv[k][k] = 1.0;
        }
        let mut ok = true;
        for col in 0..n {
            let mut p = col;
            for row in col + 1..n {
                if libm::fabs(a[row][col]) > libm::fabs(a[p][col]) {
                    p = row;
                }
            }
            let piv = a[p][col];
            if !(piv.is_finite() && libm::fabs(piv) > 0.0) {
                ok = false;
                break;
            }
            a.swap(col, p);
            inv.swap(col, p);
            let r = 1.0 / piv;
            for j in 0..n {
                a[col][j] *= r;
                inv[col][j] *= r;
            }
            for row in 0..n {
                if row != col {
                    let f = a[row][col];
                    if f != 0.0 {
                        for j in 0..n {
                            a[row][j] -= f * a[col][j];
                            inv[row][j] -= f * inv[col][j];
                        }
                    }
                }
            }
        }
        if ok && inv.iter().flatten().all(|v| v.is_finite()) {
            Self { m: inv, n }
        } else {
            let mut d = [0.0; DIM];
            for k in 0..n {
                d[k] = 1.0 / self.m[k][k];
            }
            Self::diag(d, n)
        }
    }

    /// rᵀ·M·r.
    fn quad(&self, r: [f64; DIM]) -> f64 {
        let mut q = 0.0;
        for i in 0..self.n {
            for j in 0..self.n {
                q += r[i] * self.m[i][j] * r[j];
            }
        }
        q
    }
}

/// A load `r` (Ω) added in parallel with an existing one.
fn parallel_load(existing: Option<f64>, r: f64) -> Option<f64> {
    Some(existing.map_or(r, |e| crate::acnet::parallel(e, r)))
}

/// The fixed parts of one diagnosis.
struct Ctx<'a> {
    stage: Stage,
    profile: &'a Profile,
    temp_c: f64,
    /// VB, VE, VC and the gain readings, then zeros.
    measured: [f64; DIM],
    /// Readings in use: 3 + the test frequencies.
    n: usize,
    /// The accuracy of a gain reading.
    signal: SignalMeter,
    /// The test frequencies, Hz.
    #[cfg_attr(not(feature = "signal-test"), expect(dead_code))]
    tones: [f64; GAIN_SLOTS],
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
    ScaleCap(Capacitor, f64),
    Temp(f64),
    Supply(f64),
}

impl Ctx<'_> {
    /// VB, VE, VC and the gains at the test frequencies for `suspect` with the part value
    /// `value` (low/high) and hFE `beta`.
    fn predict(
        &mut self,
        suspect: Suspect,
        value: f64,
        beta: f64,
        tweak: Tweak,
    ) -> Option<[f64; DIM]> {
        let mut stage = self.stage;
        let mut temp_c = self.temp_c;
        match tweak {
            Tweak::None => {}
            Tweak::Scale(r, k) => stage.part_mut(r).value *= k,
            Tweak::ScaleCap(c, k) => match c {
                Capacitor::Cin => stage.cin.iter_mut().for_each(|p| p.value *= k),
                Capacitor::Cout => stage.cout.iter_mut().for_each(|p| p.value *= k),
                Capacitor::Ce => stage.ce.iter_mut().for_each(|p| p.value *= k),
            },
            Tweak::Temp(t) => temp_c = t,
            Tweak::Supply(v) => stage.vcc.value = v,
        }
        let mut caps = Caps::nominal(&stage);
        let (ac_stage, fault) = match suspect {
            Suspect::Good => (stage, None),
            Suspect::Resistor(r, ResistorMode::Open) => (stage.with_fault(Fault::Open(r)), None),
            Suspect::Resistor(r, ResistorMode::Short) => (stage.with_fault(Fault::Short(r)), None),
            Suspect::Resistor(r, _) => (stage.with_fault(Fault::Value(r, value)), None),
            Suspect::Device(d) => (stage, Some(d)),
            Suspect::Capacitor(c, m) => {
                *caps.get_mut(c) = match m {
                    ResistorMode::Open => CapState::Open,
                    ResistorMode::Short => CapState::Short,
                    _ => CapState::Fitted(value),
                };
                (stage, None)
            }
        };
        // The DC test set-up: the source's RS stays on the input and RL on the output, so a
        // shorted coupling capacitor loads the base (with RS) or the collector (with RL); a
        // shorted bypass capacitor shorts RE2.
        let mut loads = NodeLoads::NONE;
        let dc_stage = match suspect {
            Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short) => {
                ac_stage.with_fault(Fault::Short(Resistor::Re2))
            }
            Suspect::Capacitor(Capacitor::Cin, ResistorMode::Short) => {
                if ac_stage.rs > 0.0 {
                    loads.base = parallel_load(loads.base, ac_stage.rs);
                    ac_stage
                } else {
                    // An ideal source holds the base at ground.
                    ac_stage.with_fault(Fault::Short(Resistor::R2))
                }
            }
            Suspect::Capacitor(Capacitor::Cout, ResistorMode::Short) => {
                if let Some(rl) = ac_stage.rl {
                    loads.collector = parallel_load(loads.collector, rl);
                }
                ac_stage
            }
            _ => ac_stage,
        };
        let cond = Conditions {
            temp_c,
            beta_25: beta,
            fault,
            loads: NodeLoads::NONE,
        };
        // The measuring inputs' loads, with the fault's own (a shorted coupling capacitor).
        let with = |l: NodeLoads| NodeLoads {
            base: match loads.base {
                Some(r) => parallel_load(l.base, r),
                None => l.base,
            },
            collector: match loads.collector {
                Some(r) => parallel_load(l.collector, r),
                None => l.collector,
            },
            emitter: l.emitter,
        };
        let (vb, ve, vc, op) = match self.inputs.common_loads() {
            Some(l) => {
                let op = self.solve(&dc_stage, cond.loaded(with(l)))?;
                (op.vb, op.ve, op.vc, op)
            }
            None => {
                // Each node read with only its own input attached: one solve per node.
                let mut at = |n: ReadNode| {
                    let l = self.inputs.loads_reading(n);
                    self.solve(&dc_stage, cond.loaded(with(l)))
                };
                let b = at(ReadNode::Base)?;
                let ve = at(ReadNode::Emitter)?.ve;
                let vc = at(ReadNode::Collector)?.vc;
                (b.vb, ve, vc, b)
            }
        };
        let mut y = [0.0; DIM];
        for (slot, v) in y.iter_mut().zip([vb, ve, vc]) {
            *slot = v;
        }
        self.signal_readings(&mut y, &ac_stage, &op, &caps);
        Some(y)
    }

    /// The gains at the test frequencies into `y[3..n]`.
    #[cfg(feature = "signal-test")]
    fn signal_readings(&self, y: &mut [f64; DIM], stage: &Stage, op: &OperatingPoint, caps: &Caps) {
        let tones = self.n.saturating_sub(3);
        for (slot, f) in y.iter_mut().skip(3).zip(self.tones.iter()).take(tones) {
            *slot = response::magnitude_at(stage, op, caps, *f);
        }
    }

    /// Without the signal test there are no gain readings.
    #[cfg(not(feature = "signal-test"))]
    fn signal_readings(&self, _: &mut [f64; DIM], _: &Stage, _: &OperatingPoint, _: &Caps) {}

    /// One solve, started from the last one.
    #[inline(always)]
    fn solve(&mut self, stage: &Stage, cond: Conditions) -> Option<OperatingPoint> {
        self.solves = self.solves.saturating_add(1);
        let (op, next) = solve_from(stage, self.profile, cond, self.start.as_ref()).ok()?;
        self.start = Some(next);
        Some(op)
    }

    fn chi2(&self, inv: &Sym, y: Option<[f64; DIM]>) -> f64 {
        match y {
            Some(y) => inv.quad(core::array::from_fn(|k| {
                self.measured.get(k).copied().unwrap_or(0.0) - y.get(k).copied().unwrap_or(0.0)
            })),
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
    // One interval for resistors and capacitors (a capacitor's value is fitted only with gain
    // readings).
    let (p, m) = match suspect {
        Suspect::Resistor(r, m @ (ResistorMode::Low | ResistorMode::High)) => (stage.part(r), m),
        Suspect::Capacitor(c, m @ (ResistorMode::Low | ResistorMode::High))
            if cfg!(feature = "signal-test") =>
        {
            (stage.capacitor(c)?, m)
        }
        _ => return None,
    };
    let ln = libm::log(p.value);
    let span = libm::log(VALUE_RANGE);
    // Just outside the tolerance band, on the side the mode names.
    if m == ResistorMode::Low {
        Some((ln - span, libm::log(1.0 - p.tol) + ln))
    } else {
        Some((libm::log(1.0 + p.tol) + ln, ln + span))
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
    y0: [f64; DIM],
) -> Sym {
    const INV_SQRT3: f64 = 0.577_350_269_189_625_8;
    // A node a fault leaves floating is held by the measuring input where one is modelled (the
    // prediction then includes it); only an ideal meter's reading of it is uncertain.
    let float = if ctx.inputs.is_ideal() {
        floating(suspect)
    } else {
        [false; 3]
    };
    let mut diag = [0.0; DIM];
    for (k, (d, m)) in diag.iter_mut().zip(ctx.measured).enumerate() {
        if k < 3 || !cfg!(feature = "signal-test") {
            let s = reading_error(meter, m) * INV_SQRT3;
            let extra = if float.get(k).copied().unwrap_or(false) {
                FLOATING_NODE_V
            } else {
                0.0
            };
            *d = s * s + PROBE_NOISE_V * PROBE_NOISE_V + extra * extra;
        } else {
            let s = ctx.signal.error(m) * INV_SQRT3;
            *d = s * s + GAIN_NOISE * GAIN_NOISE;
        }
    }
    let mut cov = Sym::diag(diag, ctx.n);
    let fitted = match suspect {
        Suspect::Resistor(r, _) => Some(r),
        _ => None,
    };
    let mut add = |ctx: &mut Ctx<'_>, tweak: Tweak, k: f64| {
        if let Some(y) = ctx.predict(suspect, value, beta, tweak) {
            cov.add_outer(core::array::from_fn(|i| {
                (y.get(i).copied().unwrap_or(0.0) - y0.get(i).copied().unwrap_or(0.0)) * k
            }));
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
    // Capacitor tolerances move the gain readings only (none without the signal test).
    if cfg!(feature = "signal-test") && ctx.n > 3 {
        for c in Capacitor::ALL {
            let fitted_cap = matches!(suspect, Suspect::Capacitor(x, _) if x == c);
            match ctx.stage.capacitor(c) {
                Some(p) if !fitted_cap && p.tol > 0.0 => {
                    add(ctx, Tweak::ScaleCap(c, 1.0 + p.tol), INV_SQRT3);
                }
                _ => {}
            }
        }
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
fn crude_inverse(ctx: &Ctx<'_>, meter: &Meter) -> Sym {
    let vcc = ctx.stage.vcc.value;
    let mut d = [0.0; DIM];
    for (k, (d, m)) in d.iter_mut().zip(ctx.measured).enumerate() {
        let s = if k < 3 {
            reading_error(meter, m) + 0.03 * libm::fabs(m) + 0.01 * vcc
        } else {
            ctx.signal.error(m) + 0.05 * libm::fabs(m) + 0.02
        };
        *d = 1.0 / (s * s);
    }
    Sym::diag(d, ctx.n)
}

/// The best fit of a hypothesis under the full error model so far.
#[derive(Clone, Copy)]
struct Top {
    chi2: f64,
    value: f64,
    beta: f64,
    y: [f64; DIM],
}

impl Top {
    /// Keep (`value`, `beta`) with its prediction `y` if it fits better; gives its χ².
    fn offer(
        &mut self,
        ctx: &Ctx<'_>,
        inv: &Sym,
        value: f64,
        beta: f64,
        y: Option<[f64; DIM]>,
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
    crude: &Sym,
    suspect: Suspect,
    coarse: Coarse,
) -> Option<(f64, Option<f64>, f64, [f64; DIM])> {
    let p = ctx.profile;
    let (lb_lo, lb_hi) = (libm::log(p.beta_min), libm::log(p.beta_max));
    let beta_typ = p.beta_typ;
    let lb_typ = libm::log(beta_typ);
    let beta_fits = lb_hi > lb_lo + 1e-9;
    let interval = value_interval(&ctx.stage, suspect);
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
        if let Some(c) = locate(ctx, crude, suspect, (a, b), LOCATE_GRID, 10) {
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

/// A crude fit of a hypothesis at typical hFE: its χ² under the crude error model, the
/// log(value) found (low/high; the search interval is [`value_interval`]'s), the prediction
/// there.
#[derive(Clone, Copy)]
struct Coarse {
    chi2: f64,
    lv: f64,
    y: [f64; DIM],
}

/// A screened hypothesis held in its own slot of the result until its full fit replaces it: the
/// screen's list then needs no storage of its own (about 3 KB with the signal test, which an
/// instrument would otherwise carry on its stack). Every value is kept bit for bit: χ² in
/// `chi2`, log(value) in `beta`, VB, VE, VC in `predicted`, the gains in `score`, `estimate` and
/// (two to an `f64`) the bits of `gains`.
fn hold(suspect: Suspect, c: &Coarse) -> Hypothesis {
    let extra = |k: usize| c.y.get(3 + k).copied().unwrap_or(0.0);
    let mut gains = [0.0f32; GAIN_SLOTS];
    for (k, pair) in gains.chunks_mut(2).enumerate() {
        let bits = extra(2 + k).to_bits();
        if let Some(lo) = pair.get_mut(0) {
            *lo = f32::from_bits(bits as u32);
        }
        if let Some(hi) = pair.get_mut(1) {
            *hi = f32::from_bits((bits >> 32) as u32);
        }
    }
    Hypothesis {
        suspect,
        score: extra(0),
        chi2: c.chi2,
        estimate: Some(extra(1)),
        beta: c.lv,
        predicted: [c.y[0], c.y[1], c.y[2]],
        gains,
        group: 0,
    }
}

/// The screened hypothesis [`hold`] put in `h`.
fn held(h: &Hypothesis) -> Coarse {
    let mut y = [0.0; DIM];
    for (slot, v) in y.iter_mut().zip(h.predicted) {
        *slot = v;
    }
    let pairs = h.gains.chunks(2).map(|p| {
        let lo = p.first().map_or(0, |g| u64::from(g.to_bits()));
        let hi = p.get(1).map_or(0, |g| u64::from(g.to_bits()));
        f64::from_bits(lo | (hi << 32))
    });
    let extra = [h.score, h.estimate.unwrap_or(0.0)]
        .into_iter()
        .chain(pairs);
    for (slot, v) in y.iter_mut().skip(3).zip(extra) {
        *slot = v;
    }
    Coarse {
        chi2: h.chi2,
        lv: h.beta,
        y,
    }
}

// Every gain reading fits in the slots `hold` uses: `score`, `estimate` and a whole pair of
// `gains` for each further two.
const fn gains_fit(slots: usize) -> bool {
    slots % 2 == 0 && slots <= 2 + slots / 2
}
const _: () = assert!(gains_fit(GAIN_SLOTS));

/// The crude fit of `suspect` at typical hFE over [lo, hi] of log(value) (`grid` points, then
/// `steps` of golden section; without a value to fit, one solve).
fn locate(
    ctx: &mut Ctx<'_>,
    crude: &Sym,
    suspect: Suspect,
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
                    best = Some(Coarse { chi2, lv, y });
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
fn screen(ctx: &mut Ctx<'_>, crude: &Sym, suspect: Suspect) -> Option<Coarse> {
    let span = value_interval(&ctx.stage, suspect);
    locate(
        ctx,
        crude,
        suspect,
        span.unwrap_or((0.0, 0.0)),
        SCREEN_GRID,
        SCREEN_STEPS,
    )
}

/// Every hypothesis of the dictionary for this stage (resistors of zero ohms are not fitted and
/// are left out). Capacitors that the stage has (not ideal) add their `short` (it shows at DC in
/// the test set-up), and with signal readings (`signal`) also `open`, `low` and `high`; CE only
/// where RE2 is fitted.
fn dictionary(stage: &Stage, signal: bool) -> Vec<Suspect, CAPACITY> {
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
    diagnose_with_signal_into(
        stage,
        profile,
        readings,
        &[],
        meter,
        &SignalMeter::DEFAULT,
        var,
        out,
    )
}

/// Rank the single-fault hypotheses against a board's DC readings and its gain readings
/// `tones` (at most [`MAX_TONES`], each judged with the accuracy `signal`). With gain readings
/// the dictionary adds the capacitors' `open`, `low` and `high`, and hypotheses are grouped as
/// equivalent only when every reading, DC and signal, agrees within its error.
pub fn diagnose_with_signal(
    stage: &Stage,
    profile: &Profile,
    readings: &Readings,
    tones: &[ToneReading],
    meter: &Meter,
    signal: &SignalMeter,
    var: &Variation,
) -> Result<Diagnosis, DiagnoseError> {
    let mut d = Diagnosis {
        ranked: Vec::new(),
        explained: false,
        solves: 0,
    };
    diagnose_with_signal_into(stage, profile, readings, tones, meter, signal, var, &mut d)?;
    Ok(d)
}

/// [`diagnose_with_signal`] written into `out` (a few KB): an instrument keeps the result where
/// it is stored instead of moving it through its stack. On an error `out` holds nothing useful.
#[expect(
    clippy::too_many_arguments,
    reason = "the readings of both kinds and the accuracy of each, as the public entry points"
)]
pub fn diagnose_with_signal_into(
    stage: &Stage,
    profile: &Profile,
    readings: &Readings,
    tones: &[ToneReading],
    meter: &Meter,
    signal: &SignalMeter,
    var: &Variation,
    out: &mut Diagnosis,
) -> Result<(), DiagnoseError> {
    out.ranked.clear();
    out.explained = false;
    out.solves = 0;
    if !(readings.vb.is_finite()
        && readings.ve.is_finite()
        && readings.vc.is_finite()
        && readings.vcc.is_finite())
        || tones.len() > GAIN_SLOTS
        || (cfg!(not(feature = "signal-test")) && !tones.is_empty())
        || tones
            .iter()
            .any(|t| crate::signaltest::validate_reading(t).is_err())
    {
        return Err(DiagnoseError::Readings);
    }
    let n = 3 + tones.len();
    let mut m = [0.0; DIM];
    let mut freqs = [0.0; GAIN_SLOTS];
    for (k, slot) in m.iter_mut().enumerate() {
        *slot = match k {
            0 => readings.vb,
            1 => readings.ve,
            2 => readings.vc,
            _ => tones.get(k - 3).map_or(0.0, |t| t.gain),
        };
    }
    for (slot, t) in freqs.iter_mut().zip(tones) {
        *slot = t.f;
    }
    let mut at_supply = *stage;
    at_supply.vcc.value = readings.vcc;
    let mut ctx = Ctx {
        stage: at_supply,
        profile,
        temp_c: 0.5 * (var.temp_min_c + var.temp_max_c),
        measured: m,
        n,
        tones: freqs,
        signal: *signal,
        inputs: var.inputs,
        solves: 0,
        start: None,
    };
    // 1. The screen: every hypothesis at typical hFE (value faults at the points of a coarse
    //    grid) under the crude error model.
    let crude = crude_inverse(&ctx, meter);
    // The screen's findings wait in the result's own slots (see `hold`), in dictionary order.
    let ranked = &mut out.ranked;
    let mut screened = [f64::INFINITY; CAPACITY];
    for suspect in dictionary(stage, !tones.is_empty()) {
        if let Some(c) = screen(&mut ctx, &crude, suspect) {
            if let Some(slot) = screened.get_mut(ranked.len()) {
                *slot = c.chi2;
            }
            let _ = ranked.push(hold(suspect, &c));
        }
    }
    let count = ranked.len();
    let screened = screened.get(..count).unwrap_or(&[]);
    let best_coarse = screened
        .iter()
        .fold(f64::INFINITY, |m, &c| if c < m { c } else { m });
    // 2. The full fit for every hypothesis the screen cannot rule out: the best SCREEN_KEEP and
    //    any within SCREEN_MARGIN of the best. The rest keep their coarse fit.
    let mut rough = 0u64;
    let mut floor = f64::INFINITY;
    for i in 0..count {
        let Some(h) = ranked.get(i) else { break };
        let (suspect, c) = (h.suspect, held(h));
        let better = screened.iter().filter(|&&o| o < c.chi2).count();
        let full = if better < SCREEN_KEEP || c.chi2 <= best_coarse + SCREEN_MARGIN {
            fit(&mut ctx, meter, var, &crude, suspect, c)
        } else {
            None
        };
        let (chi2, estimate, beta, predicted) = full.unwrap_or_else(|| {
            rough |= 1 << i;
            let estimate = value_interval(&ctx.stage, suspect).map(|_| libm::exp(c.lv));
            (c.chi2, estimate, profile.beta_typ, c.y)
        });
        if rough & (1 << i) == 0 && chi2 < floor {
            floor = chi2;
        }
        let Some(slot) = ranked.get_mut(i) else { break };
        *slot = Hypothesis {
            suspect,
            score: 0.0,
            chi2: if chi2.is_finite() { chi2 } else { f64::MAX },
            estimate,
            beta,
            predicted: [predicted[0], predicted[1], predicted[2]],
            gains: core::array::from_fn(|k| predicted.get(3 + k).copied().unwrap_or(0.0) as f32),
            group: 0,
        };
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
    let tol: [f64; DIM] = core::array::from_fn(|k| {
        let v = m.get(k).copied().unwrap_or(0.0);
        if k < 3 {
            reading_error(meter, v)
        } else {
            signal.error(v)
        }
    });
    // Leaders by their place in `ranked` (no copies of their predictions on the stack).
    let readings_of = |h: &Hypothesis, k: usize| match k {
        0..=2 => h.predicted.get(k).copied().unwrap_or(0.0),
        _ => h.gains.get(k - 3).map_or(0.0, |g| f64::from(*g)),
    };
    let mut leaders: Vec<(u8, u8), CAPACITY> = Vec::new();
    for i in 0..ranked.len() {
        let Some(h) = ranked.get(i) else { break };
        let same = |p: &Hypothesis| {
            tol.iter()
                .enumerate()
                .take(n)
                .all(|(k, t)| libm::fabs(readings_of(p, k) - readings_of(h, k)) <= *t)
        };
        let found = leaders
            .iter()
            .find(|(at, _)| ranked.get(usize::from(*at)).is_some_and(same))
            .map(|(_, g)| *g);
        let g = match found {
            Some(g) => g,
            None => {
                let g = u8::try_from(leaders.len()).unwrap_or(u8::MAX);
                let _ = leaders.push((u8::try_from(i).unwrap_or(u8::MAX), g));
                g
            }
        };
        if let Some(h) = ranked.get_mut(i) {
            h.group = g;
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

/// The test frequency, Hz, at which the gains predicted for the hypotheses `group` (their fits as
/// the diagnosis left them) differ most, in units of the signal meter's error: the further
/// reading that would tell them apart. `None` when no frequency separates every pair by more than
/// twice the error (two open coupling capacitors: lift a part instead), or for fewer than two.
/// `stage` is the design, `vcc` the measured supply, V.
#[cfg(feature = "signal-test")]
pub fn separating_tone(
    stage: &Stage,
    profile: &Profile,
    vcc: f64,
    signal: &SignalMeter,
    var: &Variation,
    group: &[Hypothesis],
) -> Option<f64> {
    if group.len() < 2 {
        return None;
    }
    let mut at_supply = *stage;
    at_supply.vcc.value = vcc;
    let mut ctx = Ctx {
        stage: at_supply,
        profile,
        temp_c: 0.5 * (var.temp_min_c + var.temp_max_c),
        measured: [0.0; DIM],
        n: 4,
        tones: [0.0; MAX_TONES],
        signal: *signal,
        inputs: var.inputs,
        solves: 0,
        start: None,
    };
    let mut best: Option<(f64, f64)> = None;
    for f in crate::signaltest::candidates() {
        if let Some(t) = ctx.tones.first_mut() {
            *t = f;
        }
        let mut g: Vec<f64, 8> = Vec::new();
        for h in group.iter().take(8) {
            let value = h.estimate.unwrap_or(0.0);
            let y = ctx.predict(h.suspect, value, h.beta, Tweak::None)?;
            let _ = g.push(y.get(3).copied().unwrap_or(0.0));
        }
        let mut sep = f64::INFINITY;
        for (i, a) in g.iter().enumerate() {
            for b in g.iter().skip(i + 1) {
                let err = signal.error(*a) + signal.error(*b);
                sep = libm::fmin(sep, libm::fabs(a - b) / err);
            }
        }
        if sep > 2.0 && best.is_none_or(|(_, s)| sep > s) {
            best = Some((f, sep));
        }
    }
    best.map(|(f, _)| f)
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Sym3 {
        a: f64,
        b: f64,
        c: f64,
        d: f64,
        e: f64,
        f: f64,
    }

    #[test]
    fn inverse_of_a_symmetric_matrix() {
        // The three DC readings; the gain slots (none without `signal-test`) stay zero.
        let padded = |v: [f64; 3]| {
            let mut a = [0.0; DIM];
            a[..3].copy_from_slice(&v);
            a
        };
        let mut m = Sym::diag(padded([2.0, 3.0, 4.0]), 3);
        m.add_outer(padded([1.0, 0.5, -0.25]));
        let inv = m.inverse();
        let m = Sym3 {
            a: m.m[0][0],
            b: m.m[1][1],
            c: m.m[2][2],
            d: m.m[0][1],
            e: m.m[0][2],
            f: m.m[1][2],
        };
        let inv = Sym3 {
            a: inv.m[0][0],
            b: inv.m[1][1],
            c: inv.m[2][2],
            d: inv.m[0][1],
            e: inv.m[0][2],
            f: inv.m[1][2],
        };
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
