//! Streaming statistics of one quantity: Welford mean and variance, range, a fixed-bin
//! histogram with quantiles; no allocation.

use super::Range;

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
    pub(super) fn add_uncounted(&mut self, v: f64) {
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
    pub(super) fn count_more(&mut self, n: u32) {
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
