//! The signal test on the jig: a small tone driven through RS into the board's input, the
//! source and the load sampled together at a fixed rate, and the amplitude of each at the tone
//! by the Goertzel algorithm in single precision (the FPU's `f32`; [`biasjig_core::goertzel`]).
//!
//! The STM32F411 has no DAC: a timer toggles the tone output as a square wave of the test
//! frequency, which reaches the source end of RS through an attenuator (README, wiring). Its
//! harmonics do not matter: both channels are measured at the fundamental only, so the gain is
//! |v(load)|/|v(source)| at the test frequency. The sampling timer runs at `P·f` for `P`
//! samples per period, and the tone timer's period is exactly `P` sampling periods (both from
//! one clock), so a block of whole periods holds no leakage. The first [`SETTLE_PERIODS`]
//! periods are not used: the coupling capacitors settle.
//!
//! The emulated jig ([`EmulatedTone`]) synthesises the two inputs' ADC codes from the engine's
//! complex response of its drawn board (`response::gain_at` at the fundamental and the odd
//! harmonics of the square wave) and runs them through the same [`measure_gain`].
use biasjig_core::goertzel::Goertzel;
use biasjig_core::response::{gain_at, Caps, Gain};
use biasjig_core::solve::OperatingPoint;
use biasjig_core::stage::Stage;

use crate::board::Noise;

/// Periods of the tone measured in one block.
pub const BLOCK_PERIODS: u32 = 4;
/// Periods of the tone let pass before the block (the coupling capacitors settle).
pub const SETTLE_PERIODS: u32 = 6;
/// Fastest sampling rate of the two signal inputs, Hz.
pub const MAX_RATE_HZ: f32 = 64_000.0;
/// Fewest and most samples per period of the tone.
pub const SAMPLES_PER_PERIOD: (u32, u32) = (64, 1024);
/// Peak amplitude of the square wave at the source end of RS, V: small enough that the stage
/// stays linear (some tens of millivolts at the base).
pub const DRIVE_PEAK_V: f32 = 0.02;
/// The signal inputs' converter: full-scale code and reference, V (inputs biased at half the
/// reference).
pub const SIGNAL_FULL_SCALE: u16 = 4095;
/// Reference of the signal inputs, V.
pub const SIGNAL_VREF: f32 = 3.3;
/// Smallest source amplitude accepted, V (below it the tone output is not connected).
pub const MIN_SOURCE_V: f32 = 0.002;

/// Drives the tone and samples the two signal inputs.
pub trait ToneDriver {
    /// Start a square wave near `f_hz` on the tone output and sampling at `samples_per_period`
    /// times its frequency; returns the frequency actually set, Hz.
    fn start(&mut self, f_hz: f32, samples_per_period: u32) -> f32;
    /// Stop the tone (the output rests at its mid level).
    fn stop(&mut self);
    /// Wait for the next sampling instant and convert the source and the load inputs, codes.
    fn sample_pair(&mut self) -> (u16, u16);
}

/// Calibration of the signal path: the load input's gain relative to the source input's,
/// measured with both inputs on the tone output (`load_over_source` = 1 for matched inputs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SignalCal {
    /// Amplitude the load input reads per unit the source input reads, for the same signal.
    pub load_over_source: f32,
}

impl Default for SignalCal {
    fn default() -> Self {
        Self {
            load_over_source: 1.0,
        }
    }
}

/// Why a gain could not be read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ToneError {
    /// The source input sees no tone (tone output or source probe not connected).
    NoDrive,
    /// A signal input reached the end of its range (the load signal is too large).
    Clipped,
    /// The frequency is outside what the timers can make.
    Frequency,
}

/// Samples per period for a tone of `f_hz`: as many as the fastest rate allows, within
/// [`SAMPLES_PER_PERIOD`].
pub fn samples_per_period(f_hz: f32) -> u32 {
    let (lo, hi) = SAMPLES_PER_PERIOD;
    if f_hz.is_nan() || f_hz <= 0.0 {
        return lo;
    }
    let p = (MAX_RATE_HZ / f_hz) as u32;
    p.clamp(lo, hi)
}

/// Read |v(load)/v(source)| at `f_hz`: start the tone, let it settle, then Goertzel both
/// inputs over [`BLOCK_PERIODS`] whole periods. The result is corrected by `cal`.
pub fn measure_gain<D: ToneDriver>(
    d: &mut D,
    f_hz: f32,
    cal: &SignalCal,
) -> Result<f32, ToneError> {
    if !(f_hz.is_finite() && f_hz > 0.0 && f_hz <= MAX_RATE_HZ / SAMPLES_PER_PERIOD.0 as f32) {
        return Err(ToneError::Frequency);
    }
    let p = samples_per_period(f_hz);
    let f = d.start(f_hz, p);
    let rate = f * p as f32;
    // Settle; the mean of the last settling period is each input's rest level, taken off the
    // samples so that the filter (a resonator near DC for slow tones) carries no large offset
    // in single precision.
    let (mut mean_a, mut mean_b) = (0u32, 0u32);
    for k in 0..SETTLE_PERIODS * p {
        let (a, b) = d.sample_pair();
        if k >= (SETTLE_PERIODS - 1) * p {
            mean_a += u32::from(a);
            mean_b += u32::from(b);
        }
    }
    let rest_a = mean_a as f32 / p as f32;
    let rest_b = mean_b as f32 / p as f32;
    let mut src = Goertzel::new(f, rate);
    let mut load = Goertzel::new(f, rate);
    let volts = SIGNAL_VREF / f32::from(SIGNAL_FULL_SCALE);
    let mut clipped = false;
    for _ in 0..BLOCK_PERIODS * p {
        let (a, b) = d.sample_pair();
        clipped |= a == 0 || b == 0 || a >= SIGNAL_FULL_SCALE || b >= SIGNAL_FULL_SCALE;
        src.push((f32::from(a) - rest_a) * volts);
        load.push((f32::from(b) - rest_b) * volts);
    }
    d.stop();
    if clipped {
        return Err(ToneError::Clipped);
    }
    let a_src = src.tone().amplitude;
    if a_src < MIN_SOURCE_V {
        return Err(ToneError::NoDrive);
    }
    let k = if cal.load_over_source > 0.0 {
        cal.load_over_source
    } else {
        1.0
    };
    Ok(load.tone().amplitude / (a_src * k))
}

/// Odd harmonics of the square wave synthesised by the emulated jig (1, 3, 5, 7).
const HARMONICS: usize = 4;

/// The emulated jig's tone: the source and load samples of its drawn board, from the engine's
/// complex response, with a little noise and ±1 code of dither.
pub struct EmulatedTone {
    /// Complex gain at each odd harmonic k = 1, 3, 5, 7 (`None` before `start`).
    gains: [Gain; HARMONICS],
    stage: Stage,
    caps: Caps,
    op: OperatingPoint,
    /// Radians per sample of the fundamental.
    w: f32,
    /// The fundamental's phasor e^(jθ) at the next sample (cos, sin), advanced by `step`.
    phasor: (f32, f32),
    /// e^(jω): one sample's rotation.
    step: (f32, f32),
    n: u32,
    noise: Noise,
    /// Gain error of the load input against the source input (what calibration removes).
    pub load_input_gain: f32,
    /// The clock that times the synthesis apart from the instrument's work
    /// ([`crate::cost::standing_in`]).
    pub clock: fn() -> u32,
    /// Sample pairs synthesised ahead, as a converter's DMA buffer holds them, and the next one
    /// to hand out: the synthesis is timed once a buffer, not once a sample.
    ahead: [(u16, u16); AHEAD],
    next: usize,
}

/// Sample pairs synthesised at a time.
const AHEAD: usize = 32;

impl EmulatedTone {
    /// The tone of the board `stage` (as the signal sees it) with capacitors `caps` at `op`.
    pub fn new(stage: Stage, caps: Caps, op: OperatingPoint, noise: Noise) -> Self {
        Self {
            gains: [Gain::default(); HARMONICS],
            stage,
            caps,
            op,
            w: 0.0,
            phasor: (1.0, 0.0),
            step: (1.0, 0.0),
            n: 0,
            noise,
            load_input_gain: 1.0,
            clock: crate::cost::no_clock,
            ahead: [(0, 0); AHEAD],
            next: AHEAD,
        }
    }

    fn code(&mut self, v: f32) -> u16 {
        let dither = (self.noise.next_u32() % 3) as f32 - 1.0;
        let c = (v + 0.5 * SIGNAL_VREF) / SIGNAL_VREF * f32::from(SIGNAL_FULL_SCALE) + dither;
        c.clamp(0.0, f32::from(SIGNAL_FULL_SCALE)) as u16
    }
}

/// The synthesis itself (the hardware's stand-in: timed apart by [`ToneDriver`]'s methods).
impl EmulatedTone {
    fn synth_start(&mut self, f_hz: f32, samples_per_period: u32) -> f32 {
        for (k, g) in self.gains.iter_mut().enumerate() {
            let h = (2 * k + 1) as f64;
            *g =
                gain_at(&self.stage, &self.op, &self.caps, f64::from(f_hz) * h).unwrap_or_default();
        }
        self.w = 2.0 * core::f32::consts::PI / samples_per_period as f32;
        self.step = (libm::cosf(self.w), libm::sinf(self.w));
        self.phasor = (libm::cosf(0.5 * self.w), libm::sinf(0.5 * self.w));
        self.n = 0;
        f_hz
    }

    fn synth_pair(&mut self) -> (u16, u16) {
        // Square wave ±A = Σ over odd k of (4A/(πk))·sin(kθ); the load is each harmonic through
        // the board's complex gain. Sampled half a sample after the edges. The phasor e^(jθ)
        // advances by one rotation a sample (renormalised each period), and e^(jhθ) is its
        // power: no sine or cosine per sample.
        let (c1, s1) = self.phasor;
        self.n = self.n.wrapping_add(1);
        let (cw, sw) = self.step;
        let mut next = (c1 * cw - s1 * sw, c1 * sw + s1 * cw);
        if self.n.is_multiple_of(1024) {
            let r = libm::sqrtf(next.0 * next.0 + next.1 * next.1);
            next = (next.0 / r, next.1 / r);
        }
        self.phasor = next;
        let src = if s1 >= 0.0 {
            DRIVE_PEAK_V
        } else {
            -DRIVE_PEAK_V
        };
        // e^(j2θ), to step from one odd harmonic to the next.
        let (c2, s2) = (c1 * c1 - s1 * s1, 2.0 * c1 * s1);
        let (mut ch, mut sh) = (c1, s1);
        let mut load = 0.0f32;
        for (k, g) in self.gains.iter().enumerate() {
            let h = (2 * k + 1) as f32;
            let a = 4.0 * DRIVE_PEAK_V / (core::f32::consts::PI * h);
            // a·Im((re + j·im)·e^(j·hθ)) = a·(re·sin hθ + im·cos hθ)
            load += a * (g.re as f32 * sh + g.im as f32 * ch);
            (ch, sh) = (ch * c2 - sh * s2, ch * s2 + sh * c2);
        }
        let n1 = 0.0005 * self.noise.unit();
        let n2 = 0.0005 * self.noise.unit();
        let a = self.code(src + n1);
        let b = self.code(load * self.load_input_gain + n2);
        (a, b)
    }
}

impl ToneDriver for EmulatedTone {
    fn start(&mut self, f_hz: f32, samples_per_period: u32) -> f32 {
        self.next = AHEAD;
        crate::cost::standing_in(self.clock, || self.synth_start(f_hz, samples_per_period))
    }

    fn stop(&mut self) {}

    fn sample_pair(&mut self) -> (u16, u16) {
        if self.next >= AHEAD {
            crate::cost::standing_in(self.clock, || {
                for k in 0..AHEAD {
                    let pair = self.synth_pair();
                    if let Some(slot) = self.ahead.get_mut(k) {
                        *slot = pair;
                    }
                }
            });
            self.next = 0;
        }
        let pair = self.ahead.get(self.next).copied().unwrap_or((0, 0));
        self.next += 1;
        pair
    }
}

/// The gain of the emulated board at `f_hz` through the jig's signal path (synthesised samples,
/// Goertzel), V/V.
pub fn emulated_gain(
    stage: Stage,
    caps: Caps,
    op: OperatingPoint,
    noise: Noise,
    f_hz: f64,
    cal: &SignalCal,
) -> Result<f64, ToneError> {
    let mut t = EmulatedTone::new(stage, caps, op, noise);
    measure_gain(&mut t, f_hz as f32, cal).map(f64::from)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::board::BoardModel;
    use biasjig_core::response::{magnitude_at, CapState};
    use biasjig_core::stage::Capacitor;

    #[test]
    fn the_emulated_jig_reads_the_engine_gain() {
        let mut b = BoardModel::new(4);
        let (s, caps, op) = b.solved().unwrap();
        for f in [5.0, 20.0, 150.0, 1000.0] {
            let want = magnitude_at(&s, &op, &caps, f);
            let got = emulated_gain(s, caps, op, Noise::new(3), f, &SignalCal::default()).unwrap();
            assert!(
                (got - want).abs() < 0.01 * want + 0.01,
                "{f} Hz: {got} vs {want}"
            );
        }
        // CE open: the gain drops to the unbypassed one.
        b.set_cap_fault(Some((Capacitor::Ce, CapState::Open)));
        let (s, caps, op) = b.solved().unwrap();
        let want = magnitude_at(&s, &op, &caps, 150.0);
        let got = emulated_gain(s, caps, op, Noise::new(3), 150.0, &SignalCal::default()).unwrap();
        assert!(
            want < 5.0 && (got - want).abs() < 0.02 * want + 0.01,
            "{got} vs {want}"
        );
    }

    #[test]
    fn calibration_removes_the_input_mismatch() {
        let mut b = BoardModel::new(4);
        let (s, caps, op) = b.solved().unwrap();
        let want = magnitude_at(&s, &op, &caps, 150.0);
        let mut t = EmulatedTone::new(s, caps, op, Noise::new(9));
        t.load_input_gain = 0.9;
        let raw = measure_gain(&mut t, 150.0, &SignalCal::default()).unwrap();
        assert!((f64::from(raw) / want - 0.9).abs() < 0.01, "{raw} {want}");
        let cal = SignalCal {
            load_over_source: 0.9,
        };
        let got = measure_gain(&mut t, 150.0, &cal).unwrap();
        assert!((f64::from(got) / want - 1.0).abs() < 0.01, "{got} {want}");
    }

    #[test]
    fn an_open_source_is_refused() {
        struct Dead;
        impl ToneDriver for Dead {
            fn start(&mut self, f: f32, _: u32) -> f32 {
                f
            }
            fn stop(&mut self) {}
            fn sample_pair(&mut self) -> (u16, u16) {
                (2048, 2048)
            }
        }
        assert_eq!(
            measure_gain(&mut Dead, 100.0, &SignalCal::default()),
            Err(ToneError::NoDrive)
        );
        assert_eq!(
            measure_gain(&mut Dead, 0.0, &SignalCal::default()),
            Err(ToneError::Frequency)
        );
    }
}
