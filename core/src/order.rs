//! Ordering of the short lists the core ranks (hypotheses, sensitivity shares).
//!
//! One small stable insertion sort serves them all: the lists hold a few dozen entries at most, and
//! the standard library's general sorts cost several kilobytes of flash on the instrument.

use core::cmp::Ordering;

/// Sort `v` stably by `cmp` (insertion sort: for short lists only, O(n²) comparisons).
pub(crate) fn sort_by<T>(v: &mut [T], mut cmp: impl FnMut(&T, &T) -> Ordering) {
    for i in 1..v.len() {
        let mut j = i;
        while j > 0 {
            let out_of_order = match (v.get(j - 1), v.get(j)) {
                (Some(a), Some(b)) => cmp(a, b) == Ordering::Greater,
                _ => false,
            };
            if !out_of_order {
                break;
            }
            v.swap(j - 1, j);
            j -= 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        /// Same order as the standard stable sort, ties kept in input order.
        #[test]
        fn matches_the_standard_stable_sort(mut v in proptest::collection::vec((0u8..8, any::<u16>()), 0..60)) {
            let mut expected = v.clone();
            expected.sort_by_key(|a| a.0);
            sort_by(&mut v, |a, b| a.0.cmp(&b.0));
            prop_assert_eq!(v, expected);
        }
    }
}
