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

/// [`sort_by`] for lists of large items (a ranked hypothesis is about a hundred bytes): the
/// places, a byte each, are sorted and each item is then moved once, along the cycles of that
/// permutation, instead of being swapped past its neighbours. Lists of more than `N` (or 255)
/// items are sorted by [`sort_by`].
pub(crate) fn sort_moving_once<T: Copy, const N: usize>(
    v: &mut [T],
    mut cmp: impl FnMut(&T, &T) -> Ordering,
) {
    if v.len() > N || v.len() > usize::from(u8::MAX) {
        return sort_by(v, cmp);
    }
    let mut order: heapless::Vec<u8, N> =
        (0..v.len()).filter_map(|i| u8::try_from(i).ok()).collect();
    sort_by(&mut order, |a, b| {
        match (v.get(usize::from(*a)), v.get(usize::from(*b))) {
            (Some(x), Some(y)) => cmp(x, y),
            _ => Ordering::Equal,
        }
    });
    // Place k takes the item at `order[k]`; a place already filled is marked by `order[k] == k`.
    for start in 0..order.len() {
        if order.get(start).copied().map(usize::from) == Some(start) {
            continue;
        }
        let Some(held) = v.get(start).copied() else {
            break;
        };
        let mut k = start;
        loop {
            let Some(from) = order.get(k).copied().map(usize::from) else {
                return;
            };
            if let Some(o) = order.get_mut(k) {
                *o = u8::try_from(k).unwrap_or(u8::MAX);
            }
            let moved = if from == start {
                held
            } else {
                v.get(from).copied().unwrap_or(held)
            };
            if let Some(slot) = v.get_mut(k) {
                *slot = moved;
            }
            if from == start {
                break;
            }
            k = from;
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

        /// Moving each item once gives the same order as the plain stable sort, ties kept in
        /// input order, up to its capacity and past it.
        #[test]
        fn moving_once_matches_the_stable_sort(v in proptest::collection::vec((0u8..8, any::<u16>()), 0..60)) {
            let mut expected = v.clone();
            expected.sort_by_key(|a| a.0);
            let mut got = v.clone();
            sort_moving_once::<_, 40>(&mut got, |a, b| a.0.cmp(&b.0));
            prop_assert_eq!(got, expected);
        }
    }
}
