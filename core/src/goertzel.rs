//! The amplitude and phase of one tone in a block of samples: the Goertzel algorithm in single
//! precision (the Cortex-M4F's FPU does `f32` in hardware; `f64` would be software).
//!
//! For samples `x[0..N)` taken at `rate` Hz, the filter `s[n] = x[n] + 2·cos(ω)·s[n−1] − s[n−2]`
//! with ω = 2π·f/rate leaves the discrete Fourier sum `X(ω) = Σ x[n]·e^(−jωn)` as
//! `X = e^(−jω(N−1))·(s[N−1] − e^(−jω)·s[N−2])`. For a whole number of periods in the block the
//! sine's peak amplitude is 2·|X|/N, exactly, and a constant offset contributes nothing; choose
//! the block with [`whole_periods`].
//!
//! Cost: one multiply and two adds per sample, two `cosf`/`sinf` per block.

/// A running Goertzel filter for one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Goertzel {
    /// ω, rad per sample.
    w: f32,
    /// 2·cos(ω).
    coeff: f32,
    s1: f32,
    s2: f32,
    n: u32,
}

/// The tone found in a block: its peak amplitude (in the samples' unit) and phase, rad, of a
/// cosine referred to the first sample.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Tone {
    /// Peak amplitude.
    pub amplitude: f32,
    /// Phase of A·cos(ωn + φ), rad.
    pub phase: f32,
}

impl Goertzel {
    /// A filter for `f_hz` at the sampling rate `rate_hz` (both positive; ω is taken modulo 2π).
    pub fn new(f_hz: f32, rate_hz: f32) -> Self {
        let w = if rate_hz > 0.0 {
            2.0 * core::f32::consts::PI * f_hz / rate_hz
        } else {
            0.0
        };
        Self {
            w,
            coeff: 2.0 * libm::cosf(w),
            s1: 0.0,
            s2: 0.0,
            n: 0,
        }
    }

    /// Feed one sample.
    #[inline]
    pub fn push(&mut self, x: f32) {
        let s = x + self.coeff * self.s1 - self.s2;
        self.s2 = self.s1;
        self.s1 = s;
        self.n = self.n.saturating_add(1);
    }

    /// Feed a block of samples.
    pub fn feed(&mut self, xs: &[f32]) {
        for &x in xs {
            self.push(x);
        }
    }

    /// Samples fed so far.
    pub fn count(&self) -> u32 {
        self.n
    }

    /// The tone in the samples fed so far (zero amplitude before any sample).
    pub fn tone(&self) -> Tone {
        if self.n == 0 {
            return Tone::default();
        }
        let (sw, cw) = (libm::sinf(self.w), libm::cosf(self.w));
        // y = s[N−1] − e^(−jω)·s[N−2]
        let yr = self.s1 - cw * self.s2;
        let yi = sw * self.s2;
        // X = e^(−jω(N−1))·y
        let t = self.w * (self.n - 1) as f32;
        let (st, ct) = (libm::sinf(t), libm::cosf(t));
        let xr = ct * yr + st * yi;
        let xi = ct * yi - st * yr;
        let n = self.n as f32;
        Tone {
            amplitude: 2.0 * libm::sqrtf(xr * xr + xi * xi) / n,
            phase: libm::atan2f(xi, xr),
        }
    }
}

/// The largest number of samples at most `max` that holds a whole number of periods of `f_hz`
/// sampled at `rate_hz` to within a thousandth of a period, or `max` when none does (a block
/// at a rate that is a multiple of the tone's frequency always does).
pub fn whole_periods(f_hz: f32, rate_hz: f32, max: u32) -> u32 {
    if !(f_hz > 0.0 && rate_hz > 0.0) {
        return max;
    }
    let per_sample = f_hz / rate_hz;
    let mut n = max;
    while n > 0 {
        let periods = per_sample * n as f32;
        if periods >= 1.0 && libm::fabsf(periods - libm::roundf(periods)) < 1e-3 {
            return n;
        }
        n -= 1;
    }
    max
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small seeded generator for the noise.
    fn noise(state: &mut u64) -> f32 {
        *state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1);
        ((*state >> 40) as f32 / (1u64 << 24) as f32) - 0.5
    }

    #[test]
    fn amplitude_and_phase_of_a_noisy_sine() {
        // A synthesised cosine of known amplitude and phase, an offset and uniform noise:
        // the Discrete Fourier sum of a whole number of periods recovers A and φ (the DFT's
        // definition; the noise adds about σ·√(2/N) to the amplitude).
        let (rate, f, a, phi, offset) = (10_000.0f32, 250.0f32, 0.37f32, 0.9f32, 1.65f32);
        let n = whole_periods(f, rate, 4000);
        assert_eq!(n % 40, 0, "{n}");
        let mut g = Goertzel::new(f, rate);
        let mut st = 7u64;
        for k in 0..n {
            let t = k as f32 / rate;
            let x = offset
                + a * libm::cosf(2.0 * core::f32::consts::PI * f * t + phi)
                + 0.02 * noise(&mut st);
            g.push(x);
        }
        let tone = g.tone();
        assert!((tone.amplitude - a).abs() < 2e-3, "{tone:?}");
        assert!((tone.phase - phi).abs() < 1e-2, "{tone:?}");
    }

    #[test]
    fn another_frequency_is_rejected() {
        let (rate, n) = (8_000.0f32, 800u32);
        let mut g = Goertzel::new(100.0, rate);
        for k in 0..n {
            let t = k as f32 / rate;
            g.push(libm::sinf(2.0 * core::f32::consts::PI * 300.0 * t));
        }
        assert!(g.tone().amplitude < 1e-3, "{:?}", g.tone());
    }
}
