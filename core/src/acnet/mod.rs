//! The small-signal network of the stage: one nodal solver behind the midband figures and the
//! low-frequency response.
//!
//! Nodes: `IN` (after RS, before CIN), `B`, `E`, `X` (between RE1 and RE2), `C`, `OUT` (after
//! COUT, across RL); ground is the reference. The transistor is its admittance two-port at the
//! operating point. A capacitor is a short (a 1 MS conductance), open, or its admittance at a
//! frequency; so is a zero-ohm resistor a 1 MS conductance. The supply is AC ground.

use num_complex::Complex64 as C;

use crate::solve::Admittance;
use crate::stage::Stage;

/// Node indices.
pub(crate) const IN: usize = 0;
pub(crate) const B: usize = 1;
pub(crate) const E: usize = 2;
pub(crate) const X: usize = 3;
pub(crate) const NODE_C: usize = 4;
pub(crate) const OUT: usize = 5;
const N: usize = 6;

/// A conductance standing for a short, S.
const SHORT: f64 = 1e6;
/// A conductance to ground that keeps an otherwise floating node defined, S.
const LEAK: f64 = 1e-12;

/// How a capacitor appears in one solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Cap {
    /// A short at signal frequencies.
    Short,
    /// Removed.
    Open,
    /// Its admittance at a frequency, Hz.
    At(f64),
}

/// One small-signal solve: capacitor states, whether RS (with the source) and RL are in place,
/// and the currents injected into the nodes, A.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Setup {
    pub cin: Cap,
    pub cout: Cap,
    pub ce: Cap,
    /// RS from IN to ground (the source's own resistance); without it the input floats.
    pub with_source: bool,
    /// RL from OUT to ground.
    pub with_load: bool,
    /// Current injected into each node, A.
    pub inject: [C; N],
}

impl Setup {
    /// All capacitors shorted, RS and RL in place, nothing injected.
    pub fn midband() -> Self {
        Self {
            cin: Cap::Short,
            cout: Cap::Short,
            ce: Cap::Short,
            with_source: true,
            with_load: true,
            inject: [C::new(0.0, 0.0); N],
        }
    }
}

fn conductance(ohms: f64) -> f64 {
    if ohms <= 0.0 {
        SHORT
    } else if ohms.is_finite() {
        1.0 / ohms
    } else {
        0.0
    }
}

fn cap_admittance(state: Cap, farads: Option<f64>) -> C {
    match (state, farads) {
        (Cap::Short, _) | (Cap::At(_), None) => C::new(SHORT, 0.0),
        (Cap::Open, _) => C::new(0.0, 0.0),
        (Cap::At(f), Some(c)) => C::new(0.0, 2.0 * core::f64::consts::PI * f * c),
    }
}

/// The source's Norton conductance: RS, or a short for an ideal source, S.
pub(crate) fn source_conductance(stage: &Stage) -> f64 {
    conductance(stage.rs)
}

/// The voltage of node `k` in a solution (0 for a node outside the network, such as ground).
pub(crate) fn at(v: &[C; N], k: usize) -> C {
    v.get(k).copied().unwrap_or(C::new(0.0, 0.0))
}

/// 1 A injected into node `into` and taken out of node `out_of` (ground when it is outside the
/// network).
pub(crate) fn injection(into: usize, out_of: usize) -> [C; N] {
    let mut inject = [C::new(0.0, 0.0); N];
    if let Some(s) = inject.get_mut(into) {
        *s += C::new(1.0, 0.0);
    }
    if let Some(s) = inject.get_mut(out_of) {
        *s -= C::new(1.0, 0.0);
    }
    inject
}

/// A 1 V source EMF behind RS, as its Norton current into `IN`.
pub(crate) fn source_emf(stage: &Stage) -> [C; N] {
    let mut inject = [C::new(0.0, 0.0); N];
    if let Some(s) = inject.get_mut(IN) {
        *s = C::new(source_conductance(stage), 0.0);
    }
    inject
}

/// Ground as a node index for [`injection`].
pub(crate) const GROUND: usize = usize::MAX;

/// The arithmetic the elimination needs, for complex admittances and for real ones.
trait Scalar:
    Copy
    + core::ops::AddAssign
    + core::ops::SubAssign
    + core::ops::Mul<Output = Self>
    + core::ops::Sub<Output = Self>
{
    fn real(x: f64) -> Self;
    fn from_complex(z: C) -> Self;
    fn to_complex(self) -> C;
    /// |x|², as `Complex64::norm_sqr`.
    fn norm_sqr(self) -> f64;
    /// x / y with the operations `Complex64`'s division makes.
    fn div(self, y: Self) -> Self;
    fn is_finite(self) -> bool;
}

impl Scalar for C {
    fn real(x: f64) -> Self {
        C::new(x, 0.0)
    }
    fn from_complex(z: C) -> Self {
        z
    }
    fn to_complex(self) -> C {
        self
    }
    fn norm_sqr(self) -> f64 {
        C::norm_sqr(&self)
    }
    fn div(self, y: Self) -> Self {
        self / y
    }
    fn is_finite(self) -> bool {
        self.re.is_finite() && self.im.is_finite()
    }
}

/// A real admittance or voltage: the complex number with a zero imaginary part, computed with
/// the operations `Complex64` makes on its real part when the imaginary parts are zero
/// (re·re − 0·0 for a product, (a·c + 0·0)/(c·c + 0·0) for a quotient), so that a network with no
/// capacitor at a finite frequency gives bit for bit the real parts the complex elimination
/// gives, with a fraction of the arithmetic (each f64 operation is a software routine on the
/// Cortex-M4F).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Re(f64);

impl core::ops::AddAssign for Re {
    fn add_assign(&mut self, o: Self) {
        self.0 += o.0;
    }
}
impl core::ops::SubAssign for Re {
    fn sub_assign(&mut self, o: Self) {
        self.0 -= o.0;
    }
}
impl core::ops::Mul for Re {
    type Output = Self;
    fn mul(self, o: Self) -> Self {
        Re(self.0 * o.0)
    }
}
impl core::ops::Sub for Re {
    type Output = Self;
    fn sub(self, o: Self) -> Self {
        Re(self.0 - o.0)
    }
}

impl Scalar for Re {
    fn real(x: f64) -> Self {
        Re(x)
    }
    fn from_complex(z: C) -> Self {
        Re(z.re)
    }
    fn to_complex(self) -> C {
        C::new(self.0, 0.0)
    }
    fn norm_sqr(self) -> f64 {
        self.0 * self.0
    }
    fn div(self, y: Self) -> Self {
        Re((self.0 * y.0) / (y.0 * y.0))
    }
    fn is_finite(self) -> bool {
        self.0.is_finite()
    }
}

/// Node voltages of the network for `setup`, or `None` if it is singular. With every
/// capacitor a short or open (midband, DC paths) the network is real and is solved in real
/// arithmetic, giving the same numbers (see [`Re`]).
pub(crate) fn solve(stage: &Stage, y: &Admittance, setup: &Setup) -> Option<[C; N]> {
    let real = ![setup.cin, setup.cout, setup.ce]
        .iter()
        .any(|c| matches!(c, Cap::At(_)))
        && setup.inject.iter().all(|z| z.im == 0.0);
    if real {
        solve_in::<Re>(stage, y, setup)
    } else {
        solve_in::<C>(stage, y, setup)
    }
}

#[expect(
    clippy::indexing_slicing,
    reason = "fixed 6x6 arrays indexed by node constants and loop counters below 6"
)]
fn solve_in<T: Scalar>(stage: &Stage, y: &Admittance, setup: &Setup) -> Option<[C; N]> {
    let zero = T::real(0.0);
    let mut m = [[zero; N]; N];
    let mut rhs = setup.inject.map(T::from_complex);
    let mut between = |a: usize, b: usize, g: T| {
        m[a][a] += g;
        m[b][b] += g;
        m[a][b] -= g;
        m[b][a] -= g;
    };
    let cap = |state, farads| T::from_complex(cap_admittance(state, farads));
    between(IN, B, cap(setup.cin, stage.cin.map(|p| p.value)));
    between(E, X, T::real(conductance(stage.re1.value)));
    between(NODE_C, OUT, cap(setup.cout, stage.cout.map(|p| p.value)));
    let mut to_ground = |a: usize, g: T| m[a][a] += g;
    let rb = parallel(stage.r1.value, stage.r2.value);
    to_ground(
        IN,
        T::real(if setup.with_source {
            source_conductance(stage)
        } else {
            0.0
        }),
    );
    to_ground(IN, T::real(LEAK));
    to_ground(B, T::real(conductance(rb)));
    to_ground(X, T::real(conductance(stage.re2.value)));
    to_ground(X, cap(setup.ce, stage.ce.map(|p| p.value)));
    to_ground(NODE_C, T::real(conductance(stage.rc.value)));
    let rl = if setup.with_load {
        stage.rl.map_or(0.0, conductance)
    } else {
        0.0
    };
    to_ground(OUT, T::real(rl + LEAK));
    // Transistor two-port: ib = y11·vbe + y12·vce into B, ic = y21·vbe + y22·vce into C.
    let (y11, y12, y21, y22) = (y.y11, y.y12, y.y21, y.y22);
    let stamp: [(usize, usize, f64); 9] = [
        (B, B, y11),
        (B, E, -(y11 + y12)),
        (B, NODE_C, y12),
        (NODE_C, B, y21),
        (NODE_C, E, -(y21 + y22)),
        (NODE_C, NODE_C, y22),
        (E, B, -(y11 + y21)),
        (E, E, y11 + y12 + y21 + y22),
        (E, NODE_C, -(y12 + y22)),
    ];
    for (r, c, g) in stamp {
        m[r][c] += T::real(g);
    }
    // Gaussian elimination with partial pivoting.
    for col in 0..N {
        let mut pivot = col;
        for row in col + 1..N {
            if m[row][col].norm_sqr() > m[pivot][col].norm_sqr() {
                pivot = row;
            }
        }
        let mag = m[pivot][col].norm_sqr();
        if mag.is_nan() || mag <= 0.0 {
            return None;
        }
        m.swap(col, pivot);
        rhs.swap(col, pivot);
        for row in col + 1..N {
            let factor = m[row][col].div(m[col][col]);
            let pivot_row = m[col];
            for (dst, src) in m[row].iter_mut().zip(pivot_row.iter()).skip(col) {
                *dst -= factor * *src;
            }
            let v = rhs[col];
            rhs[row] -= factor * v;
        }
    }
    let mut v = [zero; N];
    for row in (0..N).rev() {
        let mut acc = rhs[row];
        for k in row + 1..N {
            acc -= m[row][k] * v[k];
        }
        v[row] = acc.div(m[row][row]);
    }
    if v.iter().all(|z| z.is_finite()) {
        Some(v.map(T::to_complex))
    } else {
        None
    }
}

/// The parts of the midband network that do not change while the bias resistors, hFE and the
/// ambient vary: the source side seen at B and the load side seen at C (see [`midband_source`]).
#[derive(Debug, Clone, Copy)]
pub(crate) struct MidbandFixed {
    /// The source's Norton current into B for a 1 V EMF, A.
    i_b: f64,
    /// The source's conductance seen at B (RS and the leak in series with CIN's short), S.
    g_b_in: f64,
    /// COUT's short in series with RL and the leak, from C to ground, S.
    g_c_out: f64,
    /// v(OUT)/v(C).
    out_ratio: f64,
}

impl MidbandFixed {
    /// The fixed parts of `stage`'s midband network (RS, RL and the shorted capacitors).
    pub(crate) fn new(stage: &Stage) -> Self {
        // Every capacitor is `cap_admittance(Cap::Short, _)`: the short's conductance.
        // Input: RS (+ the leak) to ground at IN, CIN from IN to B, the EMF's Norton current.
        let gs = source_conductance(stage);
        let g_in = gs + LEAK;
        let g_b_in = g_in * SHORT / (g_in + SHORT);
        let i_b = gs * SHORT / (g_in + SHORT);
        // Output: COUT from C to OUT, RL (+ the leak) from OUT to ground.
        let g_out = stage.rl.map_or(0.0, conductance) + LEAK;
        Self {
            i_b,
            g_b_in,
            g_c_out: SHORT * g_out / (SHORT + g_out),
            out_ratio: SHORT / (SHORT + g_out),
        }
    }

    /// v(OUT) and v(B) for a 1 V source EMF, with the bias resistors of `stage` and the
    /// transistor two-port `y` (see [`midband_source`]).
    pub(crate) fn solve(&self, stage: &Stage, y: &Admittance) -> Option<(f64, f64)> {
        let (k, c11, c13) = self.cofactors(stage, y)?;
        let vb = k * c11;
        let v_out = k * c13 * self.out_ratio;
        (v_out.is_finite() && vb.is_finite()).then_some((v_out, vb))
    }

    /// v(OUT) alone for a 1 V source EMF (see [`MidbandFixed::solve`]; the same number).
    #[inline]
    pub(crate) fn gain(&self, stage: &Stage, y: &Admittance) -> Option<f64> {
        let (k, _, c13) = self.cofactors(stage, y)?;
        let v_out = k * c13 * self.out_ratio;
        v_out.is_finite().then_some(v_out)
    }

    /// i_b/det and the first-row cofactors C11 (for v(B)) and C13 (for v(C)) of the 3×3 system.
    #[inline(always)]
    fn cofactors(&self, stage: &Stage, y: &Admittance) -> Option<(f64, f64, f64)> {
        // `conductance` of a value that is not NaN (a validated stage): 0 Ω a short, an open
        // (infinite) resistor 1/∞ = 0, in one branch.
        let g = |ohms: f64| if ohms > 0.0 { 1.0 / ohms } else { SHORT };
        // R1 ‖ R2 as the sum of the two conductances (the same to rounding as the general
        // solve's conductance of the parallel value, without its branches).
        let g_bb = g(stage.r1.value) + g(stage.r2.value) + self.g_b_in;
        // Emitter: RE1 from E to X, RE2 and CE's short from X to ground.
        let g_e1 = g(stage.re1.value);
        let g_x = g(stage.re2.value) + SHORT;
        let g_ee = g_e1 * g_x / (g_e1 + g_x);
        let g_cc = g(stage.rc.value) + self.g_c_out;
        // Nodal equations in vb, ve, vc (ib = y11·vbe + y12·vce, ic = y21·vbe + y22·vce):
        //   B: (g_bb + y11)·vb − (y11 + y12)·ve + y12·vc = i_b
        //   C: y21·vb − (y21 + y22)·ve + (g_cc + y22)·vc = 0
        //   E: −(y11 + y21)·vb + (g_ee + y11 + y12 + y21 + y22)·ve − (y12 + y22)·vc = 0
        let (y11, y12, y21, y22) = (y.y11, y.y12, y.y21, y.y22);
        let (a11, a12, a13) = (g_bb + y11, -(y11 + y12), y12);
        let (a21, a22, a23) = (y21, -(y21 + y22), g_cc + y22);
        let (a31, a32, a33) = (-(y11 + y21), g_ee + y11 + y12 + y21 + y22, -(y12 + y22));
        // Cofactors of the first row; the right-hand side is (i_b, 0, 0).
        let c11 = a22 * a33 - a23 * a32;
        let c12 = a23 * a31 - a21 * a33;
        let c13 = a21 * a32 - a22 * a31;
        let det = a11 * c11 + a12 * c12 + a13 * c13;
        if !(det.is_finite() && det != 0.0) {
            return None;
        }
        Some((self.i_b / det, c11, c13))
    }
}

/// v(OUT) and v(B) for a 1 V source EMF behind RS with every capacitor a short and RS and RL in
/// place: the network of [`solve`] with [`Setup::midband`] and [`source_emf`], reduced by hand
/// and solved in real arithmetic (no 6×6 complex elimination). The same conductances are used
/// (a shorted capacitor is the same 1 MS, a zero-ohm resistor too, the same leaks), so the
/// result equals [`solve`]'s to rounding: the input side (IN through CIN to B) is a Norton
/// source at B, the emitter branch (RE1 in series with RE2 ‖ CE) one conductance from E to
/// ground, the output side (RC, and COUT in series with RL) one from C to ground; the three
/// nodes B, E, C with the transistor two-port are solved by Cramer's rule. About 150
/// instructions instead of about 4 000; `None` when that 3×3 system is singular.
pub(crate) fn midband_source(stage: &Stage, y: &Admittance) -> Option<(f64, f64)> {
    MidbandFixed::new(stage).solve(stage, y)
}

/// v(OUT) for a 1 V source EMF behind RS with the capacitors `cin`, `cout`, `ce` (each a short,
/// open, or at a frequency), RS and RL in place: the network of [`solve`] with
/// [`Setup { cin, cout, ce, ..Setup::midband() }`](Setup::midband) and [`source_emf`], reduced by
/// hand. The three leaf nodes are folded into their neighbours (IN through CIN into a Norton
/// source at B, X through RE1 into one admittance from E to ground, OUT through COUT into one
/// from C to ground, v(OUT) a fraction of v(C)), and B, E, C with the transistor two-port are
/// solved by Cramer's rule with the cofactors expanded so that no two large terms cancel (see
/// [`reduced`]): about a tenth of the arithmetic of the 6×6 elimination, the same conductances,
/// the same result to rounding (tested against [`solve`] and an exact solve).
///
/// Solved in single precision: the Cortex-M4F's FPU does `f32` in hardware and `f64` in
/// software routines. The result equals the double-precision one within a thousandth of the
/// default gain meter's error ([`crate::signaltest::SignalMeter`]: 2 % plus 0.02 V/V; tested).
/// `None` where [`solve`] finds the network singular (a node with nothing attached).
pub(crate) fn source_to_load(
    stage: &Stage,
    y: &Admittance,
    cin: Cap,
    cout: Cap,
    ce: Cap,
) -> Option<C> {
    let v = reduced::<f32>(stage, y, cin, cout, ce)?;
    let v = C::new(f64::from(v.re), f64::from(v.im));
    (v.re.is_finite() && v.im.is_finite()).then_some(v)
}

/// |[`source_to_load`]|, formed in single precision too; 0 where the network is singular.
pub(crate) fn source_to_load_magnitude(
    stage: &Stage,
    y: &Admittance,
    cin: Cap,
    cout: Cap,
    ce: Cap,
) -> f64 {
    reduced::<f32>(stage, y, cin, cout, ce)
        .map(|v| f64::from(libm::sqrtf(v.norm_sqr())))
        .filter(|m| m.is_finite())
        .unwrap_or(0.0)
}

/// The number type of [`reduced`]: `f32` in use, `f64` to test it against.
trait Real: Copy + PartialOrd + num_traits::Num {
    fn of(x: f64) -> Self;
}

impl Real for f32 {
    #[expect(
        clippy::cast_possible_truncation,
        reason = "single precision on purpose"
    )]
    fn of(x: f64) -> Self {
        x as f32
    }
}

impl Real for f64 {
    fn of(x: f64) -> Self {
        x
    }
}

/// [`source_to_load`] in the number type `T`.
///
/// With `g_bb`, `g_ee`, `g_cc` the admittances from B, E, C to ground (the folded leaves
/// included), `S = y11 + y12 + y21 + y22` and `D = y12·y21 − y11·y22`, the nodal equations
///   B: (g_bb + y11)·vb − (y11 + y12)·ve + y12·vc = i_b
///   C: y21·vb − (y21 + y22)·ve + (g_cc + y22)·vc = 0
///   E: −(y11 + y21)·vb + (g_ee + S)·ve − (y12 + y22)·vc = 0
/// give vc = i_b·C13/det with
///   C13 = y21·g_ee + D,
///   det = D·(g_bb + g_ee + g_cc) − g_bb·g_cc·(g_ee + S) − y11·g_ee·g_cc − y22·g_bb·g_ee,
/// expanded by hand from the cofactors so that the products of the y's that cancel (the
/// difference of two terms of about y21² that leaves y12·y21 − y11·y22) are never formed: for a
/// transistor in its active region every term of `det` has the same sign.
fn reduced<T: Real>(
    stage: &Stage,
    y: &Admittance,
    cin: Cap,
    cout: Cap,
    ce: Cap,
) -> Option<num_complex::Complex<T>> {
    type Z<T> = num_complex::Complex<T>;
    let real = |x: T| Z::new(x, T::zero());
    // The conductances of [`solve`] (a zero-ohm resistor a short, an open one nothing), formed
    // in `T`: a division in `f64` is a software routine on the instrument.
    let short = T::of(SHORT);
    let g = |ohms: f64| {
        if ohms <= 0.0 {
            short
        } else if ohms.is_finite() {
            T::one() / T::of(ohms)
        } else {
            T::zero()
        }
    };
    let cap = |state: Cap, farads: Option<f64>| match (state, farads) {
        (Cap::Short, _) | (Cap::At(_), None) => real(short),
        (Cap::Open, _) => real(T::zero()),
        (Cap::At(f), Some(c)) => Z::new(
            T::zero(),
            T::of(2.0 * core::f64::consts::PI) * T::of(f) * T::of(c),
        ),
    };
    // A leaf node between `near` (the admittance to its neighbour) and `far` (to ground): the
    // admittance it adds at the neighbour and the fraction of the neighbour's voltage it sits
    // at. A leaf with nothing attached leaves the network singular.
    let fold = |near: Z<T>, far: Z<T>| -> Option<(Z<T>, Z<T>)> {
        let sum = near + far;
        if sum.norm_sqr() > T::zero() {
            Some((near * far / sum, near / sum))
        } else {
            None
        }
    };
    let leak = T::of(LEAK);
    let gs = g(stage.rs);
    let (g_b_in, in_ratio) = fold(cap(cin, stage.cin.map(|p| p.value)), real(gs + leak))?;
    // The Norton current gs into IN reaches B as gs·y_cin/(y_cin + g_in).
    let i_b = in_ratio * real(gs);
    let (g_ee, _) = fold(
        real(g(stage.re1.value)),
        real(g(stage.re2.value)) + cap(ce, stage.ce.map(|p| p.value)),
    )?;
    let g_out = stage.rl.map_or(T::zero(), g) + leak;
    let (g_c_out, out_ratio) = fold(cap(cout, stage.cout.map(|p| p.value)), real(g_out))?;
    // R1 ‖ R2 as the sum of the two conductances.
    let g_bb = real(g(stage.r1.value) + g(stage.r2.value)) + g_b_in;
    let g_cc = real(g(stage.rc.value)) + g_c_out;
    let real = |x: f64| Z::new(T::of(x), T::zero());
    let s = real(y.y11 + y.y12 + y.y21 + y.y22);
    let d = real(y.y12 * y.y21 - y.y11 * y.y22);
    let (y11, y21, y22) = (real(y.y11), real(y.y21), real(y.y22));
    let c13 = y21 * g_ee + d;
    let det =
        d * (g_bb + g_ee + g_cc) - g_bb * g_cc * (g_ee + s) - y11 * g_ee * g_cc - y22 * g_bb * g_ee;
    // A zero or not-a-number determinant: singular.
    (det.norm_sqr() > T::zero()).then(|| i_b * c13 / det * out_ratio)
}

/// Two resistors in parallel, Ω (an open one drops out; a short wins).
pub(crate) fn parallel(a: f64, b: f64) -> f64 {
    if !a.is_finite() {
        b
    } else if !b.is_finite() {
        a
    } else if a + b > 0.0 {
        a * b / (a + b)
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests;
