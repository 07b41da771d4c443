//! Spread of the operating point: worst case, seeded Monte Carlo, sensitivity.
//!
//! What varies (the *factors*): every bias resistor within its tolerance (from the stage), the
//! supply within its tolerance (from the stage), hFE between the profile's minimum and maximum,
//! and the ambient within the range of a [`Variation`]. Every evaluation is one exact solve of
//! [`solve::solve`](crate::solve::solve), the same engine as everywhere else.
//!
//! - **Worst case** ([`worst_case`]): the extremes over the corners of the factor box. With few
//!   factors every corner is solved (at most 2⁸ = 256); otherwise (or when asked) the vertex
//!   method picks, per node and direction, the corner given by the signs of the sensitivities and
//!   confirms it by solving it and its neighbours (one factor flipped) until no neighbour is more
//!   extreme. The centre point is included, so the range always brackets the nominal point.
//! - **Monte Carlo** ([`monte_carlo`]): seeded Xoshiro256++ (`seed_from_u64`), uniform `f64`
//!   from the top 53 bits, normal deviates by Box-Muller with `libm`, so the same seed gives the
//!   same numbers on every platform. Streaming statistics (Welford mean and variance, min, max,
//!   a fixed-bin histogram over the worst-case range with quantiles from it) with no allocation.
//!   With a low-corner requirement and capacitors, each sample also draws CIN, COUT and CE
//!   within their tolerances (three deviates after the sample's factors) and judges the low
//!   corner by the sum of their poles at the sample's operating point: the figure the design's
//!   `held` uses (`lowfreq::pole_sum`), not a second model.
//! - **Sensitivity** ([`sensitivity`]): one factor at a time from the centre to each end of its
//!   range; the half-range effect `d` and the variance it contributes (`d²/3` for a uniform
//!   factor) give each factor's share of each node's variance, ranked.
//!
//! Nodes: VB, VE, VC, VBE, VCE, IC (V and A, signed as in the operating point), the midband gain
//! v(load)/v(source EMF) (signed) and the symmetrical swing at the load (V peak-to-peak).

use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::acnet::MidbandFixed;
use crate::device::{Profile, ProfileError};
use crate::settings::{Inputs, ReadNode};
use crate::signal::swing;
use crate::solve::{solve, Conditions, Region, SolveError};
use crate::stage::{Resistor, Stage, StageError};

/// How a part's value is distributed within its tolerance in the Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Distribution {
    /// Uniform within ± tolerance.
    Uniform,
    /// Normal with the tolerance at `sigmas` standard deviations, truncated at the tolerance.
    Normal {
        /// How many standard deviations the tolerance spans (3 is common).
        sigmas: f64,
    },
}

/// What varies: the parts within their tolerances (from the stage), hFE within the profile's
/// spread, the ambient within a range, and the supply within its tolerance (from the stage).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Variation {
    /// Lowest ambient, °C.
    pub temp_min_c: f64,
    /// Highest ambient, °C.
    pub temp_max_c: f64,
    /// Distribution of the part values in Monte Carlo.
    pub distribution: Distribution,
    /// The measuring inputs attached while the nodes are read: every node value is what they
    /// read ([`Inputs::IDEAL`]: the bare stage).
    pub inputs: Inputs,
}

impl Variation {
    /// Parts and hFE vary; the ambient stays at `temp_c`.
    pub fn at(temp_c: f64) -> Self {
        Self {
            temp_min_c: temp_c,
            temp_max_c: temp_c,
            distribution: Distribution::Uniform,
            inputs: Inputs::IDEAL,
        }
    }

    /// The same variation with the nodes read through `inputs`.
    pub fn read_through(self, inputs: Inputs) -> Self {
        Self { inputs, ..self }
    }

    /// Parts and hFE vary; the ambient spans `temp_min_c` to `temp_max_c`, °C.
    pub fn between(temp_min_c: f64, temp_max_c: f64) -> Self {
        Self {
            temp_min_c,
            temp_max_c,
            distribution: Distribution::Uniform,
            inputs: Inputs::IDEAL,
        }
    }

    /// The middle of the ambient range, °C.
    pub fn temp_centre_c(&self) -> f64 {
        0.5 * (self.temp_min_c + self.temp_max_c)
    }

    /// Check the range (finite, min <= max, within -55 °C to 150 °C) and the distribution.
    pub fn validate(&self) -> Result<(), SpreadError> {
        let ok = |t: f64| t.is_finite() && (-55.0..=150.0).contains(&t);
        if !(ok(self.temp_min_c) && ok(self.temp_max_c) && self.temp_min_c <= self.temp_max_c) {
            return Err(SpreadError::TempRange);
        }
        if let Distribution::Normal { sigmas } = self.distribution {
            if !(sigmas.is_finite() && (0.5..=10.0).contains(&sigmas)) {
                return Err(SpreadError::Sigmas);
            }
        }
        Ok(())
    }
}

/// Why a spread could not be computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SpreadError {
    /// A stage field is out of range.
    Stage(StageError),
    /// A profile field is out of range.
    Profile(ProfileError),
    /// The ambient range must be finite, min <= max, within -55 °C to 150 °C.
    TempRange,
    /// The normal distribution's sigmas must be between 0.5 and 10.
    Sigmas,
    /// A corner or the centre of the factor box has no operating point.
    Solve(SolveError),
}

impl core::fmt::Display for SpreadError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::Stage(e) => write!(f, "stage: {e}"),
            Self::Profile(e) => write!(f, "transistor: {e}"),
            Self::TempRange => f.write_str(
                "temperature range: min and max must lie between -55 °C and 150 °C with min <= max",
            ),
            Self::Sigmas => f.write_str("normal distribution: sigmas must be between 0.5 and 10"),
            Self::Solve(e) => write!(f, "a corner of the spread: {e}"),
        }
    }
}

impl From<SolveError> for SpreadError {
    fn from(e: SolveError) -> Self {
        Self::Solve(e)
    }
}

/// A quantity the spread reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Node {
    /// Base voltage, V.
    Vb,
    /// Emitter voltage, V.
    Ve,
    /// Collector voltage, V.
    Vc,
    /// VB − VE, V (signed).
    Vbe,
    /// VC − VE, V (signed).
    Vce,
    /// Collector current, A.
    Ic,
    /// Midband gain v(load)/v(source EMF), signed.
    Gain,
    /// Largest undistorted symmetrical swing at the load, V peak-to-peak.
    Swing,
}

impl Node {
    /// Every node, in report order.
    pub const ALL: [Node; 8] = [
        Self::Vb,
        Self::Ve,
        Self::Vc,
        Self::Vbe,
        Self::Vce,
        Self::Ic,
        Self::Gain,
        Self::Swing,
    ];

    /// The machine name: "vb", "ve", "vc", "vbe", "vce", "ic", "gain", "swing".
    pub fn name(self) -> &'static str {
        match self {
            Self::Vb => "vb",
            Self::Ve => "ve",
            Self::Vc => "vc",
            Self::Vbe => "vbe",
            Self::Vce => "vce",
            Self::Ic => "ic",
            Self::Gain => "gain",
            Self::Swing => "swing",
        }
    }

    /// The trade's name: "VB", ..., "gain", "swing".
    pub fn label(self) -> &'static str {
        match self {
            Self::Vb => "VB",
            Self::Ve => "VE",
            Self::Vc => "VC",
            Self::Vbe => "VBE",
            Self::Vce => "VCE",
            Self::Ic => "IC",
            Self::Gain => "gain",
            Self::Swing => "swing",
        }
    }

    /// The SI unit symbol ("V", "A", or "" for the gain).
    pub fn unit(self) -> &'static str {
        match self {
            Self::Ic => "A",
            Self::Gain => "",
            _ => "V",
        }
    }
}

/// One value of type `T` per [`Node`].
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Nodes<T> {
    /// Base voltage.
    pub vb: T,
    /// Emitter voltage.
    pub ve: T,
    /// Collector voltage.
    pub vc: T,
    /// VB − VE.
    pub vbe: T,
    /// VC − VE.
    pub vce: T,
    /// Collector current.
    pub ic: T,
    /// Midband gain.
    pub gain: T,
    /// Output swing.
    pub swing: T,
}

impl<T> Nodes<T> {
    /// Every node filled from `f`.
    pub fn from_fn(mut f: impl FnMut(Node) -> T) -> Self {
        Self {
            vb: f(Node::Vb),
            ve: f(Node::Ve),
            vc: f(Node::Vc),
            vbe: f(Node::Vbe),
            vce: f(Node::Vce),
            ic: f(Node::Ic),
            gain: f(Node::Gain),
            swing: f(Node::Swing),
        }
    }

    /// The value of one node.
    pub fn get(&self, n: Node) -> &T {
        match n {
            Node::Vb => &self.vb,
            Node::Ve => &self.ve,
            Node::Vc => &self.vc,
            Node::Vbe => &self.vbe,
            Node::Vce => &self.vce,
            Node::Ic => &self.ic,
            Node::Gain => &self.gain,
            Node::Swing => &self.swing,
        }
    }

    /// Mutable access to one node's value.
    pub fn get_mut(&mut self, n: Node) -> &mut T {
        match n {
            Node::Vb => &mut self.vb,
            Node::Ve => &mut self.ve,
            Node::Vc => &mut self.vc,
            Node::Vbe => &mut self.vbe,
            Node::Vce => &mut self.vce,
            Node::Ic => &mut self.ic,
            Node::Gain => &mut self.gain,
            Node::Swing => &mut self.swing,
        }
    }
}

/// Something that varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Factor {
    /// A resistor within its tolerance.
    Resistor(Resistor),
    /// hFE between the profile's minimum and maximum.
    Beta,
    /// The ambient across the range.
    Temp,
    /// The supply within its tolerance.
    Supply,
}

impl Factor {
    /// Every factor, in report order.
    pub const ALL: [Factor; 8] = [
        Self::Resistor(Resistor::R1),
        Self::Resistor(Resistor::R2),
        Self::Resistor(Resistor::Rc),
        Self::Resistor(Resistor::Re1),
        Self::Resistor(Resistor::Re2),
        Self::Beta,
        Self::Temp,
        Self::Supply,
    ];

    /// The name as printed: "R1", ..., "hFE", "ambient", "VCC".
    pub fn name(self) -> &'static str {
        match self {
            Self::Resistor(r) => r.name(),
            Self::Beta => "hFE",
            Self::Temp => "ambient",
            Self::Supply => "VCC",
        }
    }
}

/// Number of factors.
pub const FACTORS: usize = 8;

/// One evaluation: the node values and whether the transistor is forward active.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// The node values (gain 0 when it was not computed or the network is singular).
    pub values: Nodes<f64>,
    /// The operating region.
    pub region: Region,
    /// The low corner by the sum of the capacitors' poles (short-circuit time constants), with
    /// the capacitors as drawn, Hz; 0 when it was not computed (no low-corner requirement or
    /// no capacitors).
    pub f_low: f64,
}

/// A point of the factor box in physical terms.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Draw {
    /// Resistor values, Ω, in [`Resistor::ALL`] order.
    r: [f64; 5],
    /// Supply, V.
    vcc: f64,
    /// hFE at 25 °C.
    beta_25: f64,
    /// Ambient, °C.
    temp_c: f64,
}

/// The low and high end of each factor.
#[derive(Debug, Clone, Copy)]
struct Box8 {
    lo: [f64; FACTORS],
    hi: [f64; FACTORS],
    centre: [f64; FACTORS],
}

impl Box8 {
    fn new(stage: &Stage, profile: &Profile, var: &Variation) -> Self {
        let mut lo = [0.0; FACTORS];
        let mut hi = [0.0; FACTORS];
        let mut centre = [0.0; FACTORS];
        for (k, f) in Factor::ALL.iter().enumerate() {
            let (l, c, h) = match f {
                Factor::Resistor(r) => {
                    let p = stage.part(*r);
                    (p.value * (1.0 - p.tol), p.value, p.value * (1.0 + p.tol))
                }
                Factor::Beta => (profile.beta_min, profile.beta_typ, profile.beta_max),
                Factor::Temp => (var.temp_min_c, var.temp_centre_c(), var.temp_max_c),
                Factor::Supply => {
                    let p = stage.vcc;
                    (p.value * (1.0 - p.tol), p.value, p.value * (1.0 + p.tol))
                }
            };
            if let (Some(a), Some(b), Some(m)) = (lo.get_mut(k), hi.get_mut(k), centre.get_mut(k)) {
                *a = l;
                *b = h;
                *m = c;
            }
        }
        Self { lo, hi, centre }
    }

    /// Whether factor `k` varies at all.
    fn active(&self, k: usize) -> bool {
        matches!((self.lo.get(k), self.hi.get(k)), (Some(l), Some(h)) if l != h)
    }

    /// The point with factor k at `lo` where bit k of `high` is clear, `hi` where set, except
    /// factors listed in `at_centre` (bit set: centre).
    fn corner(&self, high: u16, at_centre: u16) -> [f64; FACTORS] {
        core::array::from_fn(|k| {
            let bit = 1u16 << k;
            let pick = if at_centre & bit != 0 {
                self.centre.get(k)
            } else if high & bit != 0 {
                self.hi.get(k)
            } else {
                self.lo.get(k)
            };
            pick.copied().unwrap_or(0.0)
        })
    }
}

fn draw_of(x: &[f64; FACTORS]) -> Draw {
    let [r1, r2, rc, re1, re2, beta_25, temp_c, vcc] = *x;
    Draw {
        r: [r1, r2, rc, re1, re2],
        vcc,
        beta_25,
        temp_c,
    }
}

/// The stage and conditions of one draw (no measuring inputs attached).
fn apply(stage: &Stage, d: &Draw) -> (Stage, Conditions) {
    let mut s = *stage;
    let [r1, r2, rc, re1, re2] = d.r;
    s.r1.value = r1;
    s.r2.value = r2;
    s.rc.value = rc;
    s.re1.value = re1;
    s.re2.value = re2;
    s.vcc.value = d.vcc;
    (
        s,
        Conditions {
            temp_c: d.temp_c,
            beta_25: d.beta_25,
            fault: None,
            loads: crate::solve::NodeLoads::NONE,
        },
    )
}

/// Midband gain v(load)/v(source EMF) of `stage` at `op` (the midband network in closed form),
/// or 0 when the network is singular. (Inline: the closed form keeps a dozen numbers, not the
/// general solve's 6×6 complex matrix, so it adds little to an evaluation's frame.)
fn gain_of(fixed: &MidbandFixed, stage: &Stage, op: &crate::solve::OperatingPoint) -> f64 {
    fixed.gain(stage, &op.y).unwrap_or(0.0)
}

/// Evaluate one draw as read through `inputs`: one exact solve (three when each node is read
/// with only its own input attached), the swing, and the gain when `signal` (both at the
/// operating point with every input attached, or with the base's alone).
fn evaluate(
    stage: &Stage,
    profile: &Profile,
    d: &Draw,
    signal: bool,
    inputs: &Inputs,
) -> Result<Sample, SolveError> {
    let fixed = signal.then(|| MidbandFixed::new(stage));
    evaluate_with(stage, profile, d, fixed.as_ref(), inputs)
}

/// [`evaluate`] with the fixed part of the midband network worked out once (RS and RL do not
/// vary): the gain when `signal` is given.
fn evaluate_with(
    stage: &Stage,
    profile: &Profile,
    d: &Draw,
    signal: Option<&MidbandFixed>,
    inputs: &Inputs,
) -> Result<Sample, SolveError> {
    let mut s = *stage;
    evaluate_in(&mut s, profile, d, signal, inputs, |_, _| 0.0)
}

/// [`evaluate_with`] on a working copy of the stage (only the drawn values are written: the
/// Monte Carlo's hot loop keeps one copy instead of copying the stage per sample).
///
/// `low(stage, op)` gives the sample's low corner, Hz (a closure returning 0 when it is not
/// judged, which the compiler removes).
fn evaluate_in(
    s: &mut Stage,
    profile: &Profile,
    d: &Draw,
    signal: Option<&MidbandFixed>,
    inputs: &Inputs,
    low: impl Fn(&Stage, &crate::solve::OperatingPoint) -> f64,
) -> Result<Sample, SolveError> {
    let [r1, r2, rc, re1, re2] = d.r;
    s.r1.value = r1;
    s.r2.value = r2;
    s.rc.value = rc;
    s.re1.value = re1;
    s.re2.value = re2;
    s.vcc.value = d.vcc;
    let cond = Conditions {
        temp_c: d.temp_c,
        beta_25: d.beta_25,
        fault: None,
        loads: crate::solve::NodeLoads::NONE,
    };
    let s = &*s;
    // The sample from the operating point and the emitter and collector as read (each branch
    // builds it in place: no copy of the operating point).
    let sample = |op: &crate::solve::OperatingPoint, ve: f64, vc: f64| {
        let (sw, _) = swing(s, profile, op);
        let gain = signal.map_or(0.0, |f| gain_of(f, s, op));
        Sample {
            values: Nodes {
                vb: op.vb,
                ve,
                vc,
                vbe: op.vb - ve,
                vce: vc - ve,
                ic: op.ic,
                gain,
                swing: sw,
            },
            region: op.region,
            f_low: low(s, op),
        }
    };
    match inputs.common_loads() {
        Some(loads) => {
            let op = solve(s, profile, cond.loaded(loads))?;
            Ok(sample(&op, op.ve, op.vc))
        }
        None => {
            let (op, ve, vc) = one_at_a_time(s, profile, cond, inputs)?;
            Ok(sample(&op, ve, vc))
        }
    }
}

/// Each node read with only its own input attached: the operating point with the base's, and the
/// emitter and collector voltages with theirs. (Out of line, so that its three solves do not
/// enlarge every evaluation's stack frame on the instrument.)
#[inline(never)]
fn one_at_a_time(
    s: &Stage,
    profile: &Profile,
    cond: Conditions,
    inputs: &Inputs,
) -> Result<(crate::solve::OperatingPoint, f64, f64), SolveError> {
    let at = |n: ReadNode| solve(s, profile, cond.loaded(inputs.loads_reading(n)));
    let op = at(ReadNode::Base)?;
    Ok((op, at(ReadNode::Emitter)?.ve, at(ReadNode::Collector)?.vc))
}

fn validate(stage: &Stage, profile: &Profile, var: &Variation) -> Result<(), SpreadError> {
    stage.validate().map_err(SpreadError::Stage)?;
    profile.validate().map_err(SpreadError::Profile)?;
    var.validate()
}

/// The operating point at the centre of the factor box: nominal parts and supply, typical hFE,
/// the middle of the ambient range.
pub fn centre(stage: &Stage, profile: &Profile, var: &Variation) -> Result<Sample, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    Ok(evaluate(
        stage,
        profile,
        &draw_of(&b.centre),
        true,
        &var.inputs,
    )?)
}

/// A range of one quantity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    /// Lowest value.
    pub min: f64,
    /// Highest value.
    pub max: f64,
}

impl Range {
    /// An empty range (min = +∞, max = −∞) that any value widens.
    pub const EMPTY: Range = Range {
        min: f64::INFINITY,
        max: f64::NEG_INFINITY,
    };

    /// Widen the range to include `v` (non-finite values are ignored).
    pub fn include(&mut self, v: f64) {
        if v.is_finite() {
            if v < self.min {
                self.min = v;
            }
            if v > self.max {
                self.max = v;
            }
        }
    }

    /// The value lies inside the range, with a relative slack `rel` of the larger magnitude
    /// plus an absolute slack `abs`.
    pub fn brackets(&self, v: f64, rel: f64, abs: f64) -> bool {
        let m = libm::fmax(libm::fabs(self.min), libm::fabs(self.max));
        let slack = rel * m + abs;
        v >= self.min - slack && v <= self.max + slack
    }
}

impl Default for Range {
    fn default() -> Self {
        Self::EMPTY
    }
}

/// How the worst case picks its corners.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Every corner when there are at most `max_corners` of them, else the vertex method.
    Auto {
        /// Largest number of corners solved exhaustively.
        max_corners: u16,
    },
    /// Every corner.
    Exhaustive,
    /// Corners from the signs of the sensitivities, confirmed by solving their neighbours.
    Vertex,
}

impl Default for Method {
    /// Exhaustive up to 512 corners (every case with the eight factors here).
    fn default() -> Self {
        Self::Auto { max_corners: 512 }
    }
}

/// The worst case of every node.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WorstCase {
    /// Range of each node over the corners solved (and the centre).
    pub nodes: Nodes<Range>,
    /// Number of solves it took.
    pub solves: u32,
    /// Whether every corner was solved (`false`: vertex method).
    pub exhaustive: bool,
    /// Number of factors that vary.
    pub factors: u8,
}

/// Largest number of passes of the vertex method's neighbour search per node and direction.
const VERTEX_PASSES: u8 = 3;

/// The worst case of every node over the corners of the factor box (see the module notes).
pub fn worst_case(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    method: Method,
) -> Result<WorstCase, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    worst_case_in(stage, profile, &b, method, true, &var.inputs)
}

fn active_mask(b: &Box8) -> u16 {
    (0..FACTORS)
        .filter(|k| b.active(*k))
        .fold(0u16, |m, k| m | (1 << k))
}

/// Enumerate the subsets of `mask` (every corner over the active factors).
fn for_each_corner(
    mask: u16,
    mut f: impl FnMut(u16) -> Result<(), SpreadError>,
) -> Result<(), SpreadError> {
    let mut sub: u16 = 0;
    loop {
        f(sub)?;
        if sub == mask {
            return Ok(());
        }
        sub = (sub.wrapping_sub(mask)) & mask;
    }
}

fn worst_case_in(
    stage: &Stage,
    profile: &Profile,
    b: &Box8,
    method: Method,
    signal: bool,
    inputs: &Inputs,
) -> Result<WorstCase, SpreadError> {
    let mask = active_mask(b);
    let n = mask.count_ones();
    let corners = 1u32 << n;
    let exhaustive = match method {
        Method::Exhaustive => true,
        Method::Vertex => false,
        Method::Auto { max_corners } => corners <= u32::from(max_corners),
    };
    let mut nodes: Nodes<Range> = Nodes::default();
    let mut solves = 0u32;
    let mut record = |s: &Sample, solves: &mut u32| {
        *solves += 1;
        for node in Node::ALL {
            nodes.get_mut(node).include(*s.values.get(node));
        }
    };
    let centre = evaluate(stage, profile, &draw_of(&b.centre), signal, inputs)?;
    record(&centre, &mut solves);
    if exhaustive {
        for_each_corner(mask, |c| {
            let s = evaluate(stage, profile, &draw_of(&b.corner(c, 0)), signal, inputs)?;
            record(&s, &mut solves);
            Ok(())
        })?;
    } else {
        // Signs of the half-range effects, one factor at a time from the centre.
        let mut up: Nodes<u16> = Nodes::default();
        for k in (0..FACTORS).filter(|k| mask & (1 << k) != 0) {
            let others = !(1u16 << k);
            let lo = evaluate(
                stage,
                profile,
                &draw_of(&b.corner(0, others)),
                signal,
                inputs,
            )?;
            let hi = evaluate(
                stage,
                profile,
                &draw_of(&b.corner(1 << k, others)),
                signal,
                inputs,
            )?;
            record(&lo, &mut solves);
            record(&hi, &mut solves);
            for node in Node::ALL {
                if hi.values.get(node) > lo.values.get(node) {
                    *up.get_mut(node) |= 1 << k;
                }
            }
        }
        for node in Node::ALL {
            for want_max in [false, true] {
                let start = if want_max {
                    *up.get(node)
                } else {
                    mask & !*up.get(node)
                };
                let value = |s: &Sample| {
                    let v = *s.values.get(node);
                    if want_max {
                        v
                    } else {
                        -v
                    }
                };
                let mut best_corner = start;
                let first = evaluate(
                    stage,
                    profile,
                    &draw_of(&b.corner(start, 0)),
                    signal,
                    inputs,
                )?;
                record(&first, &mut solves);
                let mut best = value(&first);
                for _ in 0..VERTEX_PASSES {
                    let mut improved = false;
                    for k in (0..FACTORS).filter(|k| mask & (1 << k) != 0) {
                        let c = best_corner ^ (1 << k);
                        let s =
                            evaluate(stage, profile, &draw_of(&b.corner(c, 0)), signal, inputs)?;
                        record(&s, &mut solves);
                        if value(&s) > best {
                            best = value(&s);
                            best_corner = c;
                            improved = true;
                        }
                    }
                    if !improved {
                        break;
                    }
                }
            }
        }
    }
    Ok(WorstCase {
        nodes,
        solves,
        exhaustive,
        factors: n as u8,
    })
}

/// Every corner of the factor box with the supply fixed at `vcc` (V, tolerance zero), DC only:
/// `f(sample)` for each. Returns the number of solves.
pub(crate) fn each_corner_at_supply(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    vcc: f64,
    mut f: impl FnMut(&Sample),
) -> Result<u32, SpreadError> {
    let mut s = *stage;
    s.vcc.value = vcc;
    s.vcc.tol = 0.0;
    validate(&s, profile, var)?;
    let b = Box8::new(&s, profile, var);
    let mut solves = 0u32;
    let centre = evaluate(&s, profile, &draw_of(&b.centre), false, &var.inputs)?;
    f(&centre);
    solves += 1;
    for_each_corner(active_mask(&b), |c| {
        let sample = evaluate(&s, profile, &draw_of(&b.corner(c, 0)), false, &var.inputs)?;
        f(&sample);
        solves += 1;
        Ok(())
    })?;
    Ok(solves)
}

/// Every corner of the factor box with the supply fixed at `vcc` (V, tolerance zero), and the
/// centre first: `f(drawn stage, conditions, operating point)` for each. Returns the number of
/// solves.
pub(crate) fn each_corner_solved(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    vcc: f64,
    mut f: impl FnMut(&Stage, &Conditions, &crate::solve::OperatingPoint),
) -> Result<u32, SpreadError> {
    let mut s = *stage;
    s.vcc.value = vcc;
    s.vcc.tol = 0.0;
    validate(&s, profile, var)?;
    let b = Box8::new(&s, profile, var);
    let mut solves = 0u32;
    let mut one = |x: &[f64; FACTORS]| -> Result<(), SpreadError> {
        let (drawn, cond) = apply(&s, &draw_of(x));
        let op = solve(&drawn, profile, cond)?;
        f(&drawn, &cond, &op);
        solves += 1;
        Ok(())
    };
    one(&b.centre)?;
    for_each_corner(active_mask(&b), |c| one(&b.corner(c, 0)))?;
    Ok(solves)
}

/// Number of histogram bins.
pub const BINS: usize = 40;

/// A fixed-bin histogram over a range set before the first value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Histogram {
    /// Lower edge of the first bin.
    pub lo: f64,
    /// Upper edge of the last bin.
    pub hi: f64,
    /// Counts per bin.
    pub bins: [u32; BINS],
    /// Values below `lo`.
    pub below: u32,
    /// Values above `hi`.
    pub above: u32,
    /// Bins per unit of the value: `BINS / (hi − lo)`.
    scale: f64,
}

impl Histogram {
    /// An empty histogram over `lo` to `hi` (swapped if given the other way, widened if empty).
    pub fn new(lo: f64, hi: f64) -> Self {
        let (mut lo, mut hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
        if !(lo.is_finite() && hi.is_finite()) {
            lo = 0.0;
            hi = 1.0;
        }
        if hi - lo <= 1e-12 * libm::fmax(libm::fabs(lo), libm::fabs(hi)) + 1e-300 {
            let pad = 1e-9 * libm::fmax(libm::fabs(lo), 1e-12);
            lo -= pad;
            hi += pad;
        }
        Self {
            lo,
            hi,
            bins: [0; BINS],
            below: 0,
            above: 0,
            scale: BINS as f64 / (hi - lo),
        }
    }

    /// Width of one bin.
    pub fn width(&self) -> f64 {
        (self.hi - self.lo) / BINS as f64
    }

    /// Count one value (a bin counts at most `u32::MAX` values: one run's worth).
    pub fn add(&mut self, v: f64) {
        let pos = (v - self.lo) * self.scale;
        if pos >= 0.0 {
            // At or above the low edge: the bin by truncation (a position past the last bin, or
            // too large for u32, finds no bin). A plain increment (this is the Monte Carlo's hot
            // loop): a run's count is a u32, so no bin of one run can pass u32::MAX.
            if let Some(b) = self.bins.get_mut(pos as u32 as usize) {
                *b = b.wrapping_add(1);
            } else if v <= self.hi {
                // v == hi (or within rounding of it): the last bin is closed.
                if let Some(b) = self.bins.last_mut() {
                    *b = b.saturating_add(1);
                }
            } else {
                self.above = self.above.saturating_add(1);
            }
        } else if v < self.lo {
            self.below = self.below.saturating_add(1);
        } else {
            // NaN.
            self.above = self.above.saturating_add(1);
        }
    }

    /// Total count, including values outside the range.
    pub fn count(&self) -> u32 {
        self.bins
            .iter()
            .fold(self.below.saturating_add(self.above), |a, b| {
                a.saturating_add(*b)
            })
    }

    /// The `p`-quantile (0 to 1), linear within its bin; `None` when empty or when it falls
    /// among the values outside the range.
    pub fn quantile(&self, p: f64) -> Option<f64> {
        let n = self.count();
        if n == 0 || !(0.0..=1.0).contains(&p) {
            return None;
        }
        let target = p * f64::from(n);
        let mut seen = f64::from(self.below);
        if target < seen {
            return None;
        }
        let w = self.width();
        for (k, c) in self.bins.iter().enumerate() {
            let c = f64::from(*c);
            if c > 0.0 && target <= seen + c {
                let frac = (target - seen) / c;
                return Some(self.lo + w * (k as f64 + frac));
            }
            seen += c;
        }
        if self.above == 0 {
            Some(self.hi)
        } else {
            None
        }
    }
}

/// Streaming statistics of one quantity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stats {
    /// Number of values.
    pub count: u32,
    /// Running mean.
    pub mean: f64,
    /// Running sum of squared deviations (Welford).
    m2: f64,
    /// Lowest and highest value.
    pub range: Range,
    /// Histogram over the worst-case range.
    pub histogram: Histogram,
    /// The value the sums of [`Stats::add_sum`] are taken about (the histogram's centre).
    shift: f64,
    /// Sum of (value − shift).
    s1: f64,
    /// Sum of (value − shift)².
    s2: f64,
}

impl Stats {
    /// Empty statistics with a histogram over `lo` to `hi`.
    pub fn new(lo: f64, hi: f64) -> Self {
        Self {
            count: 0,
            mean: 0.0,
            m2: 0.0,
            range: Range::EMPTY,
            histogram: Histogram::new(lo, hi),
            shift: 0.5 * (lo + hi),
            s1: 0.0,
            s2: 0.0,
        }
    }

    /// Add one value to shifted sums instead of the running mean (non-finite values are
    /// ignored): no division per value, for the Monte Carlo's hot loop; [`Stats::finish_sums`]
    /// sets `mean` and the deviation afterwards. The sums are taken about the histogram's centre,
    /// so nothing cancels for values inside the worst-case range.
    #[inline]
    pub fn add_sum(&mut self, v: f64) {
        if v.is_finite() {
            self.count = self.count.saturating_add(1);
            self.add_uncounted(v);
        }
    }

    /// [`Stats::add_sum`] of a value known to be finite, without counting it: the Monte Carlo
    /// counts its finite samples once and adds them with [`Stats::count_more`].
    #[inline(always)]
    fn add_uncounted(&mut self, v: f64) {
        let d = v - self.shift;
        self.s1 += d;
        self.s2 += d * d;
        if v < self.range.min {
            self.range.min = v;
        }
        if v > self.range.max {
            self.range.max = v;
        }
        self.histogram.add(v);
    }

    /// Count `n` more values (added with `add_uncounted`).
    fn count_more(&mut self, n: u32) {
        self.count = self.count.saturating_add(n);
    }

    /// The mean and the sum of squared deviations from the sums of [`Stats::add_sum`].
    pub fn finish_sums(&mut self) {
        if self.count == 0 {
            return;
        }
        let n = f64::from(self.count);
        let m = self.s1 / n;
        self.mean = self.shift + m;
        self.m2 = libm::fmax(0.0, self.s2 - m * self.s1);
    }

    /// Add one value (non-finite values are ignored).
    #[inline]
    pub fn add(&mut self, v: f64) {
        if !v.is_finite() {
            return;
        }
        self.count = self.count.saturating_add(1);
        let d = v - self.mean;
        self.mean += d / f64::from(self.count);
        self.m2 += d * (v - self.mean);
        if v < self.range.min {
            self.range.min = v;
        }
        if v > self.range.max {
            self.range.max = v;
        }
        self.histogram.add(v);
    }

    /// Sample standard deviation (n − 1), 0 for fewer than two values.
    pub fn std(&self) -> f64 {
        if self.count < 2 {
            0.0
        } else {
            libm::sqrt(self.m2 / f64::from(self.count - 1))
        }
    }

    /// The `p`-quantile from the histogram (see [`Histogram::quantile`]), clamped to min and max.
    pub fn quantile(&self, p: f64) -> Option<f64> {
        let q = self.histogram.quantile(p)?;
        Some(libm::fmin(libm::fmax(q, self.range.min), self.range.max))
    }
}

/// What a board must meet to count toward the yield; `None` fields are not checked. A board
/// counts only when its transistor is forward active.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Requirement {
    /// Least gain magnitude |v(load)/v(source EMF)|.
    pub gain_min: Option<f64>,
    /// Largest gain magnitude.
    pub gain_max: Option<f64>,
    /// Least swing at the load, V peak-to-peak.
    pub swing_min: Option<f64>,
    /// Largest collector current, A.
    pub ic_max: Option<f64>,
    /// Highest low corner, Hz: the sum of the capacitors' poles with CIN, COUT and CE drawn
    /// within their tolerances (judged only when the stage has capacitors).
    pub f_low_max: Option<f64>,
}

impl Requirement {
    /// Whether the gain is needed to judge a sample.
    pub fn needs_gain(&self) -> bool {
        self.gain_min.is_some() || self.gain_max.is_some()
    }

    /// Whether a sample meets the requirement.
    pub fn met(&self, s: &Sample) -> bool {
        self.each(s).all()
    }

    /// Which requirements a sample meets, one by one (a requirement not given is met).
    #[inline]
    pub fn each(&self, s: &Sample) -> MetEach {
        let g = libm::fabs(s.values.gain);
        MetEach {
            active: s.region == Region::Active,
            gain: self.gain_min.is_none_or(|m| g >= m) && self.gain_max.is_none_or(|m| g <= m),
            swing: self.swing_min.is_none_or(|m| s.values.swing >= m),
            ic: self.ic_max.is_none_or(|m| s.values.ic <= m),
            low_corner: self.f_low_max.is_none_or(|m| s.f_low <= m),
        }
    }
}

/// A requirement as plain bounds (a requirement not given is an infinite bound): the same
/// judgement as [`Requirement::each`] for finite values, without the branches of the options.
#[derive(Debug, Clone, Copy)]
struct Bounds {
    gain_min: f64,
    gain_max: f64,
    swing_min: f64,
    ic_max: f64,
    f_low_max: f64,
}

impl Bounds {
    fn of(r: &Requirement) -> Self {
        Self {
            gain_min: r.gain_min.unwrap_or(f64::NEG_INFINITY),
            gain_max: r.gain_max.unwrap_or(f64::INFINITY),
            swing_min: r.swing_min.unwrap_or(f64::NEG_INFINITY),
            ic_max: r.ic_max.unwrap_or(f64::INFINITY),
            f_low_max: r.f_low_max.unwrap_or(f64::INFINITY),
        }
    }

    #[inline(always)]
    fn each(&self, s: &Sample) -> MetEach {
        let g = libm::fabs(s.values.gain);
        MetEach {
            active: s.region == Region::Active,
            gain: (g >= self.gain_min) & (g <= self.gain_max),
            swing: s.values.swing >= self.swing_min,
            ic: s.values.ic <= self.ic_max,
            // Judged by the Monte Carlo loop itself, only when the low corner is sampled.
            low_corner: true,
        }
    }
}

/// Which requirements one sample meets.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MetEach {
    /// Forward active.
    pub active: bool,
    /// |gain| within the window.
    pub gain: bool,
    /// Swing at least the least asked.
    pub swing: bool,
    /// IC within the budget.
    pub ic: bool,
    /// Low corner at most the highest allowed.
    pub low_corner: bool,
}

impl MetEach {
    /// Every requirement met.
    pub fn all(&self) -> bool {
        self.active && self.gain && self.swing && self.ic && self.low_corner
    }
}

/// Samples that met each requirement on its own.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct PassedEach {
    /// Forward active.
    pub active: u32,
    /// |gain| within the window.
    pub gain: u32,
    /// Swing at least the least asked.
    pub swing: u32,
    /// IC within the budget.
    pub ic: u32,
    /// Low corner at most the highest allowed.
    pub low_corner: u32,
}

/// Monte Carlo settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct McSettings {
    /// Number of samples.
    pub runs: u32,
    /// Seed of the generator.
    pub seed: u64,
    /// Compute the midband gain of each sample (one small-signal solve more per sample; forced
    /// on when the requirement checks the gain).
    pub signal: bool,
    /// The requirement for the yield.
    pub requirement: Requirement,
}

impl Default for McSettings {
    /// 1000 runs, seed 1, with the gain, no requirement.
    fn default() -> Self {
        Self {
            runs: 1000,
            seed: 1,
            signal: true,
            requirement: Requirement::default(),
        }
    }
}

/// The result of a Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MonteCarlo {
    /// Samples asked for.
    pub runs: u32,
    /// Samples that had no operating point (left out of the statistics).
    pub failed: u32,
    /// Samples that met the requirement.
    pub passed: u32,
    /// Samples that met each requirement on its own.
    pub passed_each: PassedEach,
    /// Samples with the transistor forward active.
    pub active: u32,
    /// Whether the gain statistics were computed.
    pub signal: bool,
    /// Statistics per node.
    pub nodes: Nodes<Stats>,
}

impl MonteCarlo {
    /// Fraction of the runs that met the requirement (0 to 1), 0 for no runs.
    pub fn yield_fraction(&self) -> f64 {
        if self.runs == 0 {
            0.0
        } else {
            f64::from(self.passed) / f64::from(self.runs)
        }
    }
}

/// The seeded generator and the deviates the Monte Carlo draws.
struct Deviates {
    rng: Xoshiro256PlusPlus,
}

/// 2⁻⁵³.
const TWO_POW_M53: f64 = 1.0 / 9_007_199_254_740_992.0;
/// Tries of the truncated normal before it clamps.
const NORMAL_TRIES: u8 = 32;
/// Tries of the polar method before it gives up (each fails with probability 1 − π/4).
const POLAR_TRIES: u8 = 64;

impl Deviates {
    fn new(seed: u64) -> Self {
        Self {
            rng: Xoshiro256PlusPlus::seed_from_u64(seed),
        }
    }

    /// Uniform on [0, 1) from the top 53 bits.
    fn unit(&mut self) -> f64 {
        (self.rng.next_u64() >> 11) as f64 * TWO_POW_M53
    }

    /// Uniform on [-1, 1): the top 53 bits times 2⁻⁵², less one (exactly 2·unit − 1).
    #[inline(always)]
    fn symmetric(&mut self) -> f64 {
        (self.rng.next_u64() >> 11) as f64 * (2.0 * TWO_POW_M53) - 1.0
    }

    /// Standard normal by the polar form of Box-Muller (Marsaglia): a point uniform in the unit
    /// disc, no trigonometry; the second normal of the pair is not used. A point is accepted with
    /// probability π/4, so `POLAR_TRIES` rejections in a row (odds below 1e-40) give 0.
    fn normal(&mut self) -> f64 {
        for _ in 0..POLAR_TRIES {
            let x = self.symmetric();
            let y = self.symmetric();
            let s = x * x + y * y;
            if s > 0.0 && s < 1.0 {
                return x * libm::sqrt(-2.0 * libm::log(s) / s);
            }
        }
        0.0
    }

    /// A relative deviation in [-1, 1] (times the tolerance gives the part's deviation).
    #[inline]
    fn deviation(&mut self, dist: Distribution) -> f64 {
        match dist {
            Distribution::Uniform => self.symmetric(),
            Distribution::Normal { sigmas } => {
                let mut z = 0.0;
                for _ in 0..NORMAL_TRIES {
                    z = self.normal();
                    if libm::fabs(z) <= sigmas {
                        return z / sigmas;
                    }
                }
                libm::fmax(-1.0, libm::fmin(1.0, z / sigmas))
            }
        }
    }

    /// The capacitors of one sample within their tolerances, written into `s`: three deviates,
    /// always drawn in the order CIN, COUT, CE (one for a capacitor not fitted too), after the
    /// sample's factors. Only drawn when the low corner is judged, so that a run without a
    /// low-corner requirement draws the same numbers as before.
    fn caps(&mut self, s: &mut Stage, stage: &Stage, dist: Distribution) {
        let slots = [
            (&mut s.cin, stage.cin),
            (&mut s.cout, stage.cout),
            (&mut s.ce, stage.ce),
        ];
        for (slot, nominal) in slots {
            let d = self.deviation(dist);
            if let (Some(c), Some(p)) = (slot.as_mut(), nominal) {
                c.value = p.value * (1.0 + p.tol * d);
            }
        }
    }

    /// One draw of every factor, always in the same order (R1, R2, RC, RE1, RE2, VCC, hFE, ambient).
    fn draw(&mut self, stage: &Stage, b: &Box8, dist: Distribution) -> Draw {
        let uniform = dist == Distribution::Uniform;
        let mut vary = |p: crate::stage::Part| {
            let d = if uniform {
                self.symmetric()
            } else {
                self.deviation(dist)
            };
            p.value * (1.0 + p.tol * d)
        };
        let r = [
            vary(stage.r1),
            vary(stage.r2),
            vary(stage.rc),
            vary(stage.re1),
            vary(stage.re2),
        ];
        // The same deviate as `deviation(dist)` (uniform: `symmetric`), without the call.
        let dv = if uniform {
            self.symmetric()
        } else {
            self.deviation(dist)
        };
        let vcc = stage.vcc.value * (1.0 + stage.vcc.tol * dv);
        let between = |d: &mut Self, k: usize| {
            let lo = b.lo.get(k).copied().unwrap_or(0.0);
            let hi = b.hi.get(k).copied().unwrap_or(0.0);
            lo + (hi - lo) * d.unit()
        };
        let beta_25 = between(self, 5);
        let temp_c = between(self, 6);
        Draw {
            r,
            vcc,
            beta_25,
            temp_c,
        }
    }
}

/// How often the Monte Carlo reports progress, samples.
const PROGRESS_EVERY: u32 = 256;

/// A seeded Monte Carlo run (see the module notes); `progress(done, total)` is called every
/// 256 samples and at the end. The histograms span the worst-case range `wc` (widened by 5 % of
/// its span on each side).
pub fn monte_carlo(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    wc: &WorstCase,
    settings: &McSettings,
    progress: impl FnMut(u32, u32),
) -> Result<MonteCarlo, SpreadError> {
    monte_carlo_observed(stage, profile, var, wc, settings, progress, |_| {})
}

/// [`monte_carlo`] that also hands every sample to `on_sample` (for example for a Q-point cloud).
pub fn monte_carlo_observed(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    wc: &WorstCase,
    settings: &McSettings,
    mut progress: impl FnMut(u32, u32),
    mut on_sample: impl FnMut(&Sample),
) -> Result<MonteCarlo, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    let signal = settings.signal || settings.requirement.needs_gain();
    let nodes = Nodes::from_fn(|n| {
        let r = wc.nodes.get(n);
        let pad = 0.05 * (r.max - r.min);
        Stats::new(r.min - pad, r.max + pad)
    });
    let mut mc = MonteCarlo {
        runs: settings.runs,
        failed: 0,
        passed: 0,
        passed_each: PassedEach::default(),
        active: 0,
        signal,
        nodes,
    };
    let fixed = signal.then(|| MidbandFixed::new(stage));
    let bounds = Bounds::of(&settings.requirement);
    // The low corner is judged per sample only when asked and there are capacitors (three
    // more deviates and three small-signal solves a sample); otherwise the loop is unchanged.
    let judge_low = settings.requirement.f_low_max.is_some()
        && (stage.cin.is_some() || stage.cout.is_some() || stage.ce.is_some());
    let finite_samples = if judge_low {
        run_samples::<true>(
            stage,
            profile,
            var,
            settings,
            &b,
            fixed.as_ref(),
            &bounds,
            &mut mc,
            &mut progress,
            &mut on_sample,
        )
    } else {
        let n = run_samples::<false>(
            stage,
            profile,
            var,
            settings,
            &b,
            fixed.as_ref(),
            &bounds,
            &mut mc,
            &mut progress,
            &mut on_sample,
        );
        // Not required (or no capacitors): every evaluated sample meets it.
        mc.passed_each.low_corner = settings.runs - mc.failed;
        n
    };
    for n in Node::ALL {
        let st = mc.nodes.get_mut(n);
        if signal || n != Node::Gain {
            st.count_more(finite_samples);
        }
        st.finish_sums();
    }
    Ok(mc)
}

/// The sample loop of [`monte_carlo_observed`], once with the low corner sampled (`LOW`) and
/// once without, so that a run without it does exactly the work it did before. Returns the
/// samples whose every value was finite.
#[allow(clippy::too_many_arguments)]
fn run_samples<const LOW: bool>(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    settings: &McSettings,
    b: &Box8,
    fixed: Option<&MidbandFixed>,
    bounds: &Bounds,
    mc: &mut MonteCarlo,
    progress: &mut impl FnMut(u32, u32),
    on_sample: &mut impl FnMut(&Sample),
) -> u32 {
    // Samples whose every value was finite (counted once for all the nodes).
    let mut dev = Deviates::new(settings.seed);
    let mut scratch = *stage;
    let signal = fixed.is_some();
    let mut finite_samples: u32 = 0;
    for i in 0..settings.runs {
        let d = dev.draw(stage, b, var.distribution);
        if LOW {
            dev.caps(&mut scratch, stage, var.distribution);
        }
        let evaluated = evaluate_in(
            &mut scratch,
            profile,
            &d,
            fixed,
            &var.inputs,
            |s: &Stage, op: &crate::solve::OperatingPoint| {
                if LOW {
                    crate::lowfreq::pole_sum(s, op)
                } else {
                    0.0
                }
            },
        );
        match evaluated {
            Ok(s) => {
                // Field by field: this is the hot loop of the run. The solver's operating point
                // is finite, the swing and the gain too: one check for all of them.
                let (m, v) = (&mut mc.nodes, &s.values);
                let finite =
                    (v.vb + v.ve + v.vc + v.vbe + v.vce + v.ic + v.swing + v.gain).is_finite();
                if finite {
                    finite_samples += 1;
                    m.vb.add_uncounted(v.vb);
                    m.ve.add_uncounted(v.ve);
                    m.vc.add_uncounted(v.vc);
                    m.vbe.add_uncounted(v.vbe);
                    m.vce.add_uncounted(v.vce);
                    m.ic.add_uncounted(v.ic);
                    m.swing.add_uncounted(v.swing);
                    if signal {
                        m.gain.add_uncounted(v.gain);
                    }
                } else {
                    for n in Node::ALL {
                        if signal || n != Node::Gain {
                            m.get_mut(n).add_sum(*v.get(n));
                        }
                    }
                }
                let mut met = bounds.each(&s);
                if LOW {
                    met.low_corner = s.f_low <= bounds.f_low_max;
                    mc.passed_each.low_corner += u32::from(met.low_corner);
                }
                let each = &mut mc.passed_each;
                each.active += u32::from(met.active);
                each.gain += u32::from(met.gain);
                each.swing += u32::from(met.swing);
                each.ic += u32::from(met.ic);
                mc.active += u32::from(met.active);
                mc.passed += u32::from(met.all());
                on_sample(&s);
            }
            Err(_) => mc.failed += 1,
        }
        let done = i + 1;
        if done % PROGRESS_EVERY == 0 || done == settings.runs {
            progress(done, settings.runs);
        }
    }
    finite_samples
}

/// One factor's part in one node's spread.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Share {
    /// The factor.
    pub factor: Factor,
    /// Half the change of the node from the factor's low end to its high end (node unit, signed).
    pub effect: f64,
    /// Variance the factor contributes (node unit squared).
    pub variance: f64,
    /// Fraction of the node's total variance (0 to 1; the shares of a node sum to 1).
    pub share: f64,
}

/// Each factor's share of each node's variance, ranked largest first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sensitivity {
    /// Per node: the shares of every factor, largest first.
    pub nodes: Nodes<[Share; FACTORS]>,
    /// Per node: the standard deviation by the law of propagation (square root of the summed
    /// variances), node unit.
    pub std: Nodes<f64>,
}

/// Variance of a relative deviation drawn from `dist`, as a fraction of the tolerance squared:
/// 1/3 for uniform; for a normal truncated at k = `sigmas`, (1 − 2kφ(k)/(2Φ(k) − 1))/k².
pub fn variance_factor(dist: Distribution) -> f64 {
    match dist {
        Distribution::Uniform => 1.0 / 3.0,
        Distribution::Normal { sigmas: k } => {
            let phi = libm::exp(-0.5 * k * k) / libm::sqrt(core::f64::consts::TAU);
            let mass = libm::erf(k / core::f64::consts::SQRT_2);
            (1.0 - 2.0 * k * phi / mass) / (k * k)
        }
    }
}

/// Each factor's share of each node's variance: the factor at its low and high end with the
/// others at the centre gives the half-range effect `d`; it contributes `d²·v` with `v` the
/// variance factor of its distribution ([`variance_factor`]; hFE and ambient are uniform).
pub fn sensitivity(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
) -> Result<Sensitivity, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    let mut effects = [Nodes::<f64>::default(); FACTORS];
    let all = (1u16 << FACTORS) - 1;
    for (k, (slot, f)) in effects.iter_mut().zip(Factor::ALL).enumerate() {
        if !b.active(k) {
            continue;
        }
        let others = all & !(1 << k);
        let lo = evaluate(
            stage,
            profile,
            &draw_of(&b.corner(0, others)),
            true,
            &var.inputs,
        )?;
        let hi = evaluate(
            stage,
            profile,
            &draw_of(&b.corner(1 << k, others)),
            true,
            &var.inputs,
        )?;
        let _ = f;
        *slot = Nodes::from_fn(|n| 0.5 * (hi.values.get(n) - lo.values.get(n)));
    }
    let weight = |f: Factor| match f {
        Factor::Resistor(_) | Factor::Supply => variance_factor(var.distribution),
        Factor::Beta | Factor::Temp => 1.0 / 3.0,
    };
    let mut std = Nodes::default();
    let nodes = Nodes::from_fn(|n| {
        let mut shares: [Share; FACTORS] = core::array::from_fn(|k| {
            let f = Factor::ALL.get(k).copied().unwrap_or(Factor::Supply);
            let effect = effects.get(k).map_or(0.0, |e| *e.get(n));
            Share {
                factor: f,
                effect,
                variance: effect * effect * weight(f),
                share: 0.0,
            }
        });
        let total: f64 = shares.iter().map(|s| s.variance).sum();
        for s in shares.iter_mut() {
            s.share = if total > 0.0 { s.variance / total } else { 0.0 };
        }
        crate::order::sort_by(&mut shares, |a, b| {
            b.share
                .partial_cmp(&a.share)
                .unwrap_or(core::cmp::Ordering::Equal)
                .then(a.factor.cmp(&b.factor))
        });
        *std.get_mut(n) = libm::sqrt(total);
        shares
    });
    Ok(Sensitivity { nodes, std })
}

/// Everything the spread reports for one stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// The centre of the factor box (nominal parts, typical hFE, middle of the ambient range).
    pub centre: Sample,
    /// The worst case.
    pub worst: WorstCase,
    /// The Monte Carlo run.
    pub monte_carlo: MonteCarlo,
    /// The sensitivity ranking.
    pub sensitivity: Sensitivity,
}

/// Worst case (method [`Method::default`]), sensitivity and Monte Carlo in one call.
pub fn spread(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    settings: &McSettings,
    progress: impl FnMut(u32, u32),
) -> Result<Spread, SpreadError> {
    spread_observed(stage, profile, var, settings, progress, |_| {})
}

/// [`spread`] that also hands every Monte Carlo sample to `on_sample`.
pub fn spread_observed(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    settings: &McSettings,
    progress: impl FnMut(u32, u32),
    on_sample: impl FnMut(&Sample),
) -> Result<Spread, SpreadError> {
    let centre = centre(stage, profile, var)?;
    let worst = worst_case(stage, profile, var, Method::default())?;
    let sensitivity = sensitivity(stage, profile, var)?;
    let monte_carlo =
        monte_carlo_observed(stage, profile, var, &worst, settings, progress, on_sample)?;
    Ok(Spread {
        centre,
        worst,
        monte_carlo,
        sensitivity,
    })
}
