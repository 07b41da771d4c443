//! The seeded generator of the tests: SplitMix64 (`rand_xoshiro`), seeded with its state, so
//! that a seed gives the same numbers on every platform and in every test that uses it.

use rand_core::{Rng as _, SeedableRng};
use rand_xoshiro::SplitMix64;

/// SplitMix64 with the draws the tests need.
#[derive(Debug, Clone)]
pub struct Rng(SplitMix64);

impl Rng {
    /// The generator whose state starts at `seed`.
    pub fn new(seed: u64) -> Self {
        Self(SplitMix64::seed_from_u64(seed))
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0.next_u64()
    }

    /// Uniform in [0, 1) (the top 53 bits).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Uniform in [lo, hi).
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }

    /// An index below `n` (n > 0).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n as u64) as usize
    }

    /// One element of `v` (not empty).
    pub fn pick<T: Copy>(&mut self, v: &[T]) -> T {
        v[self.below(v.len())]
    }
}

#[cfg(test)]
mod tests {
    use super::Rng;

    /// The first outputs of splitmix64 from the state 1477776061723855037 (Vigna's reference
    /// `splitmix64.c`, as the tests of `rand_xoshiro` quote them): the same generator the sweeps
    /// were tuned with when each wrote its own copy.
    #[test]
    fn gives_the_reference_sequence() {
        let mut r = Rng::new(1_477_776_061_723_855_037);
        assert_eq!(r.next_u64(), 1_985_237_415_132_408_290);
        assert_eq!(r.next_u64(), 2_979_275_885_539_914_483);
        assert_eq!(r.next_u64(), 13_511_426_838_097_143_398);
    }
}
