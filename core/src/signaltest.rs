//! The signal test: the jig drives a small tone through RS and reads |v(load)/v(source EMF)| at
//! one or more test frequencies. This module gives the gain's spread at those frequencies (worst
//! case and Monte Carlo over the resistor and capacitor tolerances, hFE and the ambient), the pass
//! window of each reading guard-banded by the accuracy of the signal measurement, and, when no
//! frequency is given, proposes two: one in the midband and one where faulty capacitors are told
//! apart best.
//!
//! The worst case solves the operating point at every corner of the DC factor box (as the DC
//! windows do) and, at each, evaluates the response ([`crate::response`]) at the two extreme
//! corners of the capacitor tolerances (the gain grows with every capacitor): 2⁷ + 1 solves and
//! two small-signal solves per corner and frequency.

use heapless::Vec;
use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::device::Profile;
use crate::response::{self, CapState, Caps};
use crate::solve::{solve, Conditions, OperatingPoint};
use crate::spread::{each_corner_solved, SpreadError, Variation};
use crate::stage::{Capacitor, Stage};

/// Test frequencies in one test at most.
pub const MAX_TONES: usize = 4;
/// Lowest test frequency accepted, Hz.
pub const F_MIN: f64 = 0.1;
/// Highest test frequency accepted, Hz (the model has no high-frequency poles: above some
/// 100 kHz a real stage's own capacitances matter).
pub const F_MAX: f64 = 100e3;

/// The accuracy of one gain reading of the signal test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SignalMeter {
    /// Error as a fraction of the gain read (0.02 = 2 %): the calibration of the two signal
    /// inputs against each other.
    pub gain_error: f64,
    /// Error floor in gain units (V/V): noise and the residue of other tones in the block.
    pub floor: f64,
}

default_is_const!(SignalMeter);

impl SignalMeter {
    /// 2 % of the reading plus 0.02 V/V.
    pub const DEFAULT: SignalMeter = SignalMeter {
        gain_error: 0.02,
        floor: 0.02,
    };

    /// Check the fields: gain error between 0 and 50 %, floor between 0 and 10 V/V.
    pub fn validate(&self) -> Result<(), SignalTestError> {
        let ok = self.gain_error.is_finite()
            && (0.0..=0.5).contains(&self.gain_error)
            && self.floor.is_finite()
            && (0.0..=10.0).contains(&self.floor);
        if ok {
            Ok(())
        } else {
            Err(SignalTestError::Meter)
        }
    }

    /// The largest error of a gain reading `g` (V/V).
    pub fn error(&self, g: f64) -> f64 {
        self.gain_error * libm::fabs(g) + self.floor
    }
}

/// One gain reading: |v(load)/v(source EMF)| at a test frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneReading {
    /// Test frequency, Hz.
    pub f: f64,
    /// Measured gain magnitude, V/V (0: no signal at the load).
    pub gain: f64,
}

/// Up to [`MAX_TONES`] gain readings, in the order given (a small `Copy` list).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneSet {
    items: [ToneReading; MAX_TONES],
    len: u8,
}

impl Default for ToneSet {
    fn default() -> Self {
        Self::new()
    }
}

impl ToneSet {
    /// No readings.
    pub const fn new() -> Self {
        Self {
            items: [ToneReading { f: 0.0, gain: 0.0 }; MAX_TONES],
            len: 0,
        }
    }

    /// Add a reading; gives it back when the set is full.
    pub fn push(&mut self, r: ToneReading) -> Result<(), ToneReading> {
        match self.items.get_mut(usize::from(self.len)) {
            Some(slot) => {
                *slot = r;
                self.len += 1;
                Ok(())
            }
            None => Err(r),
        }
    }

    /// The readings.
    pub fn as_slice(&self) -> &[ToneReading] {
        self.items.get(..usize::from(self.len)).unwrap_or(&[])
    }

    /// Whether there is no reading.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }
}

/// The pass window of one test frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneWindow {
    /// Test frequency, Hz.
    pub f: f64,
    /// Lowest passing gain, V/V.
    pub low: f64,
    /// Highest passing gain, V/V.
    pub high: f64,
    /// Gain of the nominal board, V/V.
    pub nominal: f64,
    /// Smallest gain over the worst case (before the guard band), V/V.
    pub min: f64,
    /// Largest gain over the worst case (before the guard band), V/V.
    pub max: f64,
}

impl ToneWindow {
    /// The reading lies inside the window (edges included).
    pub fn contains(&self, g: f64) -> bool {
        g >= self.low && g <= self.high
    }
}

/// Why the signal test's figures could not be given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SignalTestError {
    /// A test frequency must be between 0.1 Hz and 100 kHz.
    Frequency,
    /// A gain reading must be finite and between 0 and 100 000 V/V.
    Gain,
    /// At most [`MAX_TONES`] test frequencies.
    TooMany,
    /// The signal meter's gain error must be between 0 and 50 %, its floor between 0 and 10 V/V.
    Meter,
    /// The stage has no load: the signal test reads the gain at RL.
    NoLoad,
    /// The stage, profile or ambient range is out of range, or a corner has no operating point.
    Spread(SpreadError),
    /// The nominal board is not forward active, or its network is singular.
    NotActive,
    /// This build leaves the signal test out (the core feature `signal-test`).
    NotBuilt,
}

impl core::fmt::Display for SignalTestError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::Frequency => f.write_str("test frequency: must be between 0.1 Hz and 100 kHz"),
            Self::Gain => f.write_str("gain reading: must be between 0 and 100000 V/V"),
            Self::TooMany => write!(f, "at most {MAX_TONES} test frequencies"),
            Self::Meter => f.write_str(
                "signal meter: gain error must be between 0 and 50 %, floor between 0 and 10 V/V",
            ),
            Self::NoLoad => f.write_str("the signal test needs the load RL (the gain is read at it)"),
            Self::Spread(e) => write!(f, "{e}"),
            Self::NotActive => f.write_str("the nominal board is not forward active"),
            Self::NotBuilt => f.write_str(
                "this build has no signal test (left out to fit its flash): run biasjig check --ac on a PC",
            ),
        }
    }
}

error_from!(SignalTestError { SpreadError => Spread });

/// Check one test frequency, Hz.
pub fn validate_frequency(f: f64) -> Result<(), SignalTestError> {
    if f.is_finite() && (F_MIN..=F_MAX).contains(&f) {
        Ok(())
    } else {
        Err(SignalTestError::Frequency)
    }
}

/// Check one reading.
pub fn validate_reading(r: &ToneReading) -> Result<(), SignalTestError> {
    validate_frequency(r.f)?;
    if r.gain.is_finite() && (0.0..=1e5).contains(&r.gain) {
        Ok(())
    } else {
        Err(SignalTestError::Gain)
    }
}

/// The capacitors whose tolerance varies (a mask over [`Capacitor::ALL`]).
fn cap_mask(stage: &Stage) -> u8 {
    let mut m = 0u8;
    for (k, c) in Capacitor::ALL.iter().enumerate() {
        if stage.capacitor(*c).is_some_and(|p| p.tol > 0.0) {
            m |= 1 << k;
        }
    }
    m
}

/// The capacitors at a corner of their tolerances (bit k of `high` set: the high end).
fn cap_corner(stage: &Stage, mask: u8, high: u8) -> Caps {
    let mut caps = Caps::nominal(stage);
    for (k, c) in Capacitor::ALL.iter().enumerate() {
        if mask & (1 << k) == 0 {
            continue;
        }
        if let Some(p) = stage.capacitor(*c) {
            let v = if high & (1 << k) != 0 {
                p.value * (1.0 + p.tol)
            } else {
                p.value * (1.0 - p.tol)
            };
            caps = caps.with(*c, CapState::Fitted(v));
        }
    }
    caps
}

/// The gain at `f` at the two extreme corners of the capacitor tolerances for one drawn stage
/// and its operating point (every capacitor at its low end, then at its high end): `f(gain)` for
/// each. |v(load)/v(source)| grows with each capacitor at every frequency (a larger coupling
/// capacitor passes more, a larger bypass capacitor bypasses more), so these two bound the
/// other corners; `tests/signal_windows.rs` checks the bound against a Monte Carlo.
fn each_cap_corner(stage: &Stage, op: &OperatingPoint, freq: f64, mut f: impl FnMut(f64)) {
    let mask = cap_mask(stage);
    for sub in [0, mask] {
        f(response::magnitude_at(
            stage,
            op,
            &cap_corner(stage, mask, sub),
            freq,
        ));
        if mask == 0 {
            return;
        }
    }
}

fn check_inputs(stage: &Stage, freqs: &[f64]) -> Result<(), SignalTestError> {
    if freqs.len() > MAX_TONES {
        return Err(SignalTestError::TooMany);
    }
    if stage.rl.is_none() {
        return Err(SignalTestError::NoLoad);
    }
    for f in freqs {
        validate_frequency(*f)?;
    }
    Ok(())
}

/// The pass windows of the gain at each of `freqs` (Hz) at the measured supply `vcc` (V): the
/// worst case over the resistor, capacitor and hFE corners and the ambient range of `var`,
/// widened by the error of `meter`.
pub fn windows(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    meter: &SignalMeter,
    vcc: f64,
    freqs: &[f64],
) -> Result<Vec<ToneWindow, MAX_TONES>, SignalTestError> {
    meter.validate()?;
    check_inputs(stage, freqs)?;
    let mut out: Vec<ToneWindow, MAX_TONES> = Vec::new();
    for f in freqs {
        let w = ToneWindow {
            f: *f,
            low: 0.0,
            high: 0.0,
            nominal: f64::NAN,
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
        };
        out.push(w).map_err(|_| SignalTestError::TooMany)?;
    }
    let mut first = true;
    each_corner_solved(stage, profile, var, vcc, |s, _, op| {
        for w in out.iter_mut() {
            if first {
                w.nominal = response::magnitude_at(s, op, &Caps::nominal(s), w.f);
            }
            each_cap_corner(s, op, w.f, |g| {
                w.min = libm::fmin(w.min, g);
                w.max = libm::fmax(w.max, g);
            });
        }
        first = false;
    })?;
    for w in out.iter_mut() {
        w.low = libm::fmax(0.0, w.min - meter.error(w.min));
        w.high = w.max + meter.error(w.max);
    }
    Ok(out)
}

/// Judge gain readings against their windows: `ok` per reading, in order (a reading without a
/// window of its frequency fails).
pub fn judge(windows: &[ToneWindow], readings: &[ToneReading]) -> Vec<bool, MAX_TONES> {
    let mut out: Vec<bool, MAX_TONES> = Vec::new();
    for r in readings {
        let ok = windows
            .iter()
            .find(|w| w.f == r.f)
            .is_some_and(|w| w.contains(r.gain));
        let _ = out.push(ok);
    }
    out
}

/// Mean, standard deviation and range of the gain at one frequency over a Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToneStats {
    /// Test frequency, Hz.
    pub f: f64,
    /// Mean gain, V/V.
    pub mean: f64,
    /// Standard deviation, V/V.
    pub std: f64,
    /// Smallest gain drawn, V/V.
    pub min: f64,
    /// Largest gain drawn, V/V.
    pub max: f64,
}

/// A seeded Monte Carlo of the gain at `freqs` (Hz) at supply `vcc` (V): every resistor and
/// capacitor uniform within its tolerance, hFE uniform between the profile's minimum and maximum,
/// the ambient uniform over `var`'s range. Draws that have no operating point are skipped; the
/// second value is the number of runs used.
pub fn monte_carlo(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    vcc: f64,
    freqs: &[f64],
    runs: u32,
    seed: u64,
) -> Result<(Vec<ToneStats, MAX_TONES>, u32), SignalTestError> {
    check_inputs(stage, freqs)?;
    stage
        .validate()
        .map_err(|e| SpreadError::Stage(e).into_signal())?;
    profile
        .validate()
        .map_err(|e| SpreadError::Profile(e).into_signal())?;
    var.validate()?;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut unit = move || (rng.next_u64() >> 11) as f64 * (1.0 / 9_007_199_254_740_992.0);
    let mut sums: [(f64, f64, f64, f64); MAX_TONES] =
        [(0.0, 0.0, f64::INFINITY, f64::NEG_INFINITY); MAX_TONES];
    let mut used = 0u32;
    for _ in 0..runs {
        let mut s = *stage;
        s.vcc.value = vcc;
        let mut vary = |p: &mut crate::stage::Part| p.value *= 1.0 + p.tol * (2.0 * unit() - 1.0);
        vary(&mut s.r1);
        vary(&mut s.r2);
        vary(&mut s.rc);
        vary(&mut s.re1);
        vary(&mut s.re2);
        for c in [&mut s.cin, &mut s.cout, &mut s.ce] {
            if let Some(p) = c.as_mut() {
                vary(p);
            }
        }
        let beta = profile.beta_min + (profile.beta_max - profile.beta_min) * unit();
        let temp = var.temp_min_c + (var.temp_max_c - var.temp_min_c) * unit();
        let cond = Conditions {
            temp_c: temp,
            beta_25: beta,
            fault: None,
            loads: Default::default(),
        };
        let Ok(op) = solve(&s, profile, cond) else {
            continue;
        };
        used += 1;
        for (f, acc) in freqs.iter().zip(sums.iter_mut()) {
            let g = response::magnitude_at(&s, &op, &Caps::nominal(&s), *f);
            acc.0 += g;
            acc.1 += g * g;
            acc.2 = libm::fmin(acc.2, g);
            acc.3 = libm::fmax(acc.3, g);
        }
    }
    let mut out: Vec<ToneStats, MAX_TONES> = Vec::new();
    let n = f64::from(used.max(1));
    for (f, acc) in freqs.iter().zip(sums.iter()) {
        let mean = acc.0 / n;
        let var = libm::fmax(0.0, acc.1 / n - mean * mean);
        let _ = out.push(ToneStats {
            f: *f,
            mean,
            std: libm::sqrt(var),
            min: acc.2,
            max: acc.3,
        });
    }
    Ok((out, used))
}

trait IntoSignal {
    fn into_signal(self) -> SignalTestError;
}

impl IntoSignal for SpreadError {
    fn into_signal(self) -> SignalTestError {
        SignalTestError::Spread(self)
    }
}

/// Two proposed test frequencies and why. (The low corner of the same nominal board, which a
/// person reads beside them, is [`proposal_low_corner`]: the instrument proposes without it.)
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Proposal {
    /// In the midband: the nominal gain is within 1 % of the midband gain there, and a
    /// capacitor's fault shows only if it is open or far off, Hz.
    pub midband: f64,
    /// Where a capacitor at a tenth of its value is told apart best from a good board and from
    /// each other capacitor at a tenth of its value, Hz.
    pub poles: f64,
    /// The nominal midband gain, V/V.
    pub midband_gain: f64,
    /// At `poles`, the smallest distance between the gains of a good board and the three
    /// capacitors at a tenth of their value, in widths of the good board's window there.
    pub separation: f64,
}

/// Lowest proposed test frequency, Hz: a tone below it takes the jig too long (it measures whole
/// periods after the coupling capacitors settle).
pub const MIN_PROPOSED_HZ: f64 = 5.0;

/// Candidate frequencies per decade for a proposal (an easy set to set up on a generator).
const PER_DECADE: [f64; 6] = [1.0, 1.5, 2.0, 3.0, 5.0, 7.0];

/// The candidate frequencies from 0.1 Hz to 100 kHz in order.
pub(crate) fn candidates() -> impl Iterator<Item = f64> {
    (-1..5).flat_map(|d| {
        let decade = crate::series::pow10(d);
        PER_DECADE.iter().map(move |m| m * decade)
    })
}

/// The nominal board a proposal looks at: typical hFE, the centre of the ambient range; it must
/// be active.
fn proposal_point(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
) -> Result<OperatingPoint, SignalTestError> {
    check_inputs(stage, &[])?;
    stage
        .validate()
        .map_err(|e| SpreadError::Stage(e).into_signal())?;
    var.validate()?;
    let cond = Conditions {
        temp_c: var.temp_centre_c(),
        ..Conditions::typical(profile)
    };
    let op = solve(stage, profile, cond).map_err(|e| SpreadError::Solve(e).into_signal())?;
    if op.region != crate::solve::Region::Active {
        return Err(SignalTestError::NotActive);
    }
    Ok(op)
}

/// The low corner (−3 dB) of the nominal board [`propose`] looks at, Hz; `None` when it has
/// none in reach. Apart from the proposal because it costs more than the proposal itself (a
/// bisection of the full network in double precision, software arithmetic on the instrument),
/// and only a person reading the proposal needs it.
pub fn proposal_low_corner(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
) -> Result<Option<f64>, SignalTestError> {
    let op = proposal_point(stage, profile, var)?;
    Ok(crate::lowfreq::low_corner(stage, &op).f_low)
}

/// Propose two test frequencies for `stage` (see [`Proposal`]).
pub fn propose(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    meter: &SignalMeter,
) -> Result<Proposal, SignalTestError> {
    let op = proposal_point(stage, profile, var)?;
    let nominal = Caps::nominal(stage);
    let mid = response::magnitude_at(stage, &op, &nominal, F_MAX * 10.0);
    if !(mid.is_finite() && mid > 0.0) {
        return Err(SignalTestError::NotActive);
    }
    let mut midband = F_MAX;
    for f in candidates() {
        if response::magnitude_at(stage, &op, &nominal, f) >= 0.99 * mid {
            midband = f;
            break;
        }
    }
    // The gain of a good board and of each capacitor at a tenth of its value.
    let mut best = (midband, f64::NEG_INFINITY);
    for f in candidates().filter(|f| *f < midband && *f >= MIN_PROPOSED_HZ) {
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        each_cap_corner(stage, &op, f, |g| {
            lo = libm::fmin(lo, g);
            hi = libm::fmax(hi, g);
        });
        let width = (hi - lo) + meter.error(hi) + meter.error(lo);
        let mut g: Vec<f64, 4> = Vec::new();
        let _ = g.push(response::magnitude_at(stage, &op, &nominal, f));
        for c in Capacitor::ALL {
            if let Some(p) = stage.capacitor(c) {
                let caps = nominal.with(c, CapState::Fitted(0.1 * p.value));
                let _ = g.push(response::magnitude_at(stage, &op, &caps, f));
            }
        }
        let mut sep = f64::INFINITY;
        for (i, a) in g.iter().enumerate() {
            for b in g.iter().skip(i + 1) {
                sep = libm::fmin(sep, libm::fabs(a - b) / width);
            }
        }
        if g.len() > 1 && sep > best.1 {
            best = (f, sep);
        }
    }
    Ok(Proposal {
        midband,
        poles: best.0,
        midband_gain: mid,
        separation: if best.1.is_finite() { best.1 } else { 0.0 },
    })
}
