//! A stable insertion sort for the engine's few short lists (a scenario object's keys, the
//! photon transfer points of a series), in place of the standard library's sorts: each of
//! those is several kilobytes of wasm per element type (about 17 KB for the three the page's
//! wasm held, measured with twiggy), for lists of at most a few hundred items, where the
//! quadratic worst case costs microseconds.

use core::cmp::Ordering;

/// Sort `v` by `cmp`, keeping equal items in their order (as `slice::sort_by` does).
///
/// ```
/// let mut v = [(3, 'a'), (1, 'b'), (3, 'c'), (2, 'd'), (1, 'e')];
/// engine::small_sort::sort_by(&mut v, |a, b| a.0.cmp(&b.0));
/// assert_eq!(v, [(1, 'b'), (1, 'e'), (2, 'd'), (3, 'a'), (3, 'c')]); // as slice::sort_by gives
/// ```
pub fn sort_by<T, F: FnMut(&T, &T) -> Ordering>(v: &mut [T], mut cmp: F) {
    for i in 1..v.len() {
        let mut j = i;
        // Move item i left past every greater item before it.
        while j > 0 {
            let (Some(a), Some(b)) = (v.get(j - 1), v.get(j)) else {
                break;
            };
            if cmp(a, b) != Ordering::Greater {
                break;
            }
            v.swap(j - 1, j);
            j -= 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::sort_by;

    /// Against the standard library's stable sort (the reference), on lists with many ties.
    #[test]
    fn agrees_with_the_stable_sort() {
        let mut seed = 7u32;
        for n in [0usize, 1, 2, 3, 10, 100, 257] {
            let v: Vec<(u32, usize)> = (0..n)
                .map(|i| {
                    seed = seed.wrapping_mul(1_103_515_245).wrapping_add(12345);
                    ((seed >> 16) % 7, i)
                })
                .collect();
            let mut ours = v.clone();
            let mut std_sorted = v;
            sort_by(&mut ours, |a, b| a.0.cmp(&b.0));
            std_sorted.sort_by_key(|a| a.0);
            assert_eq!(ours, std_sorted, "n = {n}");
        }
    }
}
