//! The seeded Monte Carlo run: deviates, the sample loop, the yield against a requirement.

use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::acnet::MidbandFixed;
use crate::device::Profile;
use crate::solve::{OperatingPoint, Region};
use crate::stage::{Part, Stage};

use super::factors::{evaluate_in, Box8, Draw};
use super::stats::Stats;
use super::worst::WorstCase;
use super::{validate, Distribution, Node, Nodes, Sample, SpreadError, Variation};

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
        let mut vary = |p: Part| {
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
    let run = Run {
        stage,
        profile,
        var,
        settings,
        b: &b,
        fixed: fixed.as_ref(),
        bounds: &bounds,
    };
    let finite_samples = if judge_low {
        run_samples::<true>(&run, &mut mc, &mut progress, &mut on_sample)
    } else {
        let n = run_samples::<false>(&run, &mut mc, &mut progress, &mut on_sample);
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

/// What the sample loop reads: the stage and its variation, the settings, the factor box, the
/// fixed part of the midband network (when the gain is computed) and the requirement's bounds.
#[derive(Clone, Copy)]
struct Run<'a> {
    stage: &'a Stage,
    profile: &'a Profile,
    var: &'a Variation,
    settings: &'a McSettings,
    b: &'a Box8,
    fixed: Option<&'a MidbandFixed>,
    bounds: &'a Bounds,
}

/// The sample loop of [`monte_carlo_observed`], once with the low corner sampled (`LOW`) and
/// once without, so that a run without it does exactly the work it did before. Returns the
/// samples whose every value was finite.
fn run_samples<const LOW: bool>(
    run: &Run<'_>,
    mc: &mut MonteCarlo,
    progress: &mut impl FnMut(u32, u32),
    on_sample: &mut impl FnMut(&Sample),
) -> u32 {
    let Run {
        stage,
        profile,
        var,
        settings,
        b,
        fixed,
        bounds,
    } = *run;
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
            |s: &Stage, op: &OperatingPoint| {
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
