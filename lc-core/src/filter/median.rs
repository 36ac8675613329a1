//! Running median of the last `N` samples.

use core::mem::swap;

/// The median of the last `N` samples, `N` odd.
///
/// A median rejects spikes: one wild reading in a window of three (two in a
/// window of five) never reaches the output, and a step passes through
/// undistorted, delayed by (N − 1)/2 samples. The output is always one of
/// the inputs, so there is no rounding and no error bound to state: the
/// result is exact, for any `T: Copy + Ord` (`i32`, `i64`,
/// [`Shift`](crate::shift::Shift), …).
///
/// **Window length.** `N` must be odd (so the median of a full window is
/// its middle sample). An even `N`, or `N = 0`, is a compile-time error
/// when [`Median::new`] is instantiated (a const assertion; it shows in
/// `cargo build` and `cargo test`, not in `cargo check`, which does not
/// instantiate generic code):
///
/// ```compile_fail
/// let m = lc_core::filter::Median::<i32, 4>::new();
/// ```
///
/// **Before the window is full** the output is the median of the samples
/// pushed so far; for an even count it is the **lower median** (the smaller
/// of the two middle samples), so the output is still one of the inputs and
/// needs no arithmetic: after one sample that sample, after two the smaller.
///
/// **Cost.** Two arrays of `N` samples: the samples in arrival order (a
/// ring buffer) and the same samples sorted. A push replaces the oldest
/// sample in the sorted window: two binary searches (at most
/// 2·⌈log2 N⌉ comparisons) and moves of the samples between the old and
/// the new value's place, at most N − 1. No heap, no division, no panic.
///
/// ```
/// use lc_core::filter::Median;
///
/// let mut m = Median::<i32, 5>::new();
/// assert_eq!(m.median(), None);
/// assert_eq!(m.push(10), 10);
/// assert_eq!(m.push(30), 10); // lower median of {10, 30}
/// assert_eq!(m.push(20), 20);
/// assert_eq!(m.push(i32::MAX), 20); // lower median of {10, 20, 30, MAX}
/// assert_eq!(m.push(25), 25); // full: {10, 20, 25, 30, MAX}
/// assert_eq!(m.push(26), 26); // 10 left the window
/// assert!(m.is_full());
/// ```
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Median<T, const N: usize> {
    /// Samples in arrival order; when full, `ring[head]` is the oldest.
    ring: [T; N],
    /// `sorted[..len]` holds the same samples, ascending.
    sorted: [T; N],
    /// Next slot of `ring` to write; always below `N` (or 0).
    head: usize,
    /// Samples held, at most `N`.
    len: usize,
}

impl<T: Copy + Ord + Default, const N: usize> Median<T, N> {
    /// The window length `N`.
    pub const WINDOW: usize = N;

    /// An empty filter. Fails to compile for an even `N` or `N = 0`.
    #[inline]
    pub fn new() -> Self {
        const { assert!(N % 2 == 1, "Median window length N must be odd") };
        Self {
            ring: [T::default(); N],
            sorted: [T::default(); N],
            head: 0,
            len: 0,
        }
    }

    /// Adds a sample, dropping the oldest once `N` are held, and returns the
    /// median of the window (the lower median of an even count before the
    /// window is full).
    pub fn push(&mut self, x: T) -> T {
        if self.len < N {
            // Warm-up: append; the sorted prefix grows by one.
            if let Some(slot) = self.ring.get_mut(self.len) {
                *slot = x;
            }
            if let Some(window) = self.sorted.get_mut(..=self.len) {
                insert_sorted(window, x);
            }
            self.len = self.len.wrapping_add(1); // < N before: ≤ N, no wrap
            self.head = if self.len == N { 0 } else { self.len };
        } else if let Some(slot) = self.ring.get_mut(self.head) {
            let old = *slot;
            *slot = x;
            replace_sorted(&mut self.sorted, old, x);
            self.head = self.head.wrapping_add(1); // head < N before: no wrap
            if self.head == N {
                self.head = 0;
            }
        }
        // len ≥ 1 here, so the median exists; `x` is never returned.
        self.median().unwrap_or(x)
    }

    /// The median of the window, or `None` before the first sample. For an
    /// even count (only before the window is full) the lower median.
    #[inline]
    pub fn median(&self) -> Option<T> {
        // (len − 1)/2: the middle of an odd count, the lower middle of an
        // even one. A shift, not a division.
        let mid = self.len.checked_sub(1)? >> 1;
        self.sorted.get(mid).copied()
    }

    /// Samples held: 0 to `N`.
    #[inline]
    pub const fn len(&self) -> usize {
        self.len
    }

    /// No sample held yet.
    #[inline]
    pub const fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// The window holds `N` samples.
    #[inline]
    pub const fn is_full(&self) -> bool {
        self.len == N
    }

    /// Forgets all samples (after a fault, a channel switch, a new rest
    /// point).
    #[inline]
    pub fn clear(&mut self) {
        self.len = 0;
        self.head = 0;
    }
}

impl<T: Copy + Ord + Default, const N: usize> Default for Median<T, N> {
    fn default() -> Self {
        Self::new()
    }
}

/// Inserts `x` into `window`, whose all but last slot are sorted ascending;
/// the last slot is free room. Afterwards all of `window` is sorted.
fn insert_sorted<T: Copy + Ord>(window: &mut [T], x: T) {
    let filled = window.len().saturating_sub(1);
    let at = window
        .get(..filled)
        .map_or(0, |s| s.partition_point(|&v| v <= x));
    // Shift window[at..] right by one, x into window[at].
    let mut carry = x;
    if let Some(tail) = window.get_mut(at..) {
        for slot in tail {
            swap(slot, &mut carry);
        }
    }
}

/// Replaces one sample equal to `old` in the ascending `window` by `x`,
/// keeping it ascending. `old` must be present (it is: it left the ring).
fn replace_sorted<T: Copy + Ord>(window: &mut [T], old: T, x: T) {
    // The first sample equal to `old` (equal samples are interchangeable).
    let p = window.partition_point(|&v| v < old);
    let mut carry = x;
    if x >= old {
        // Samples after p below x move down one; x lands at q.
        let q = p + window
            .get(p + 1..)
            .map_or(0, |s| s.partition_point(|&v| v < x));
        if let Some(span) = window.get_mut(p..=q) {
            for slot in span.iter_mut().rev() {
                swap(slot, &mut carry);
            }
        }
    } else {
        // Samples before p above x move up one; x lands at q.
        let q = window
            .get(..p)
            .map_or(0, |s| s.partition_point(|&v| v <= x));
        if let Some(span) = window.get_mut(q..=p) {
            for slot in span {
                swap(slot, &mut carry);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::shift::Shift;
    use proptest::prelude::*;

    /// Reference: sort the last `n` samples in a `Vec`, lower median.
    fn reference(history: &[i64], n: usize) -> i64 {
        let start = history.len().saturating_sub(n);
        let mut w = history[start..].to_vec();
        w.sort_unstable();
        w[(w.len() - 1) / 2]
    }

    fn check_against_reference<const N: usize>(xs: &[i64]) -> Result<(), TestCaseError> {
        let mut m = Median::<i64, N>::new();
        for (i, &x) in xs.iter().enumerate() {
            let got = m.push(x);
            prop_assert_eq!(
                got,
                reference(&xs[..=i], N),
                "N {} after {} samples",
                N,
                i + 1
            );
            prop_assert_eq!(m.median(), Some(got));
            prop_assert_eq!(m.len(), (i + 1).min(N));
            // The sorted window really is the sorted last N samples.
            let start = (i + 1).saturating_sub(N);
            let mut w = xs[start..=i].to_vec();
            w.sort_unstable();
            prop_assert_eq!(&m.sorted[..m.len()], &w[..]);
        }
        Ok(())
    }

    #[test]
    fn empty_and_one_sample() {
        let mut m = Median::<i32, 3>::new();
        assert!(m.is_empty());
        assert_eq!(m.median(), None);
        assert_eq!(m.push(-7), -7);
        assert_eq!(m.median(), Some(-7));
        assert_eq!(m.len(), 1);
        assert!(!m.is_full());
        assert_eq!(Median::<i32, 3>::WINDOW, 3);
    }

    #[test]
    fn window_of_one_is_identity() {
        let mut m = Median::<i32, 1>::new();
        for x in [5, i32::MIN, i32::MAX, 0, 0, -1] {
            assert_eq!(m.push(x), x);
            assert!(m.is_full());
        }
    }

    #[test]
    fn saturated_inputs() {
        let mut m = Median::<i32, 3>::new();
        assert_eq!(m.push(i32::MAX), i32::MAX);
        assert_eq!(m.push(i32::MIN), i32::MIN); // lower median
        assert_eq!(m.push(i32::MAX), i32::MAX);
        assert_eq!(m.push(i32::MIN), i32::MIN);
        assert_eq!(m.push(i32::MIN), i32::MIN);
        assert_eq!(m.push(i32::MAX), i32::MIN);
        assert_eq!(m.push(i32::MAX), i32::MAX);
    }

    #[test]
    fn spikes_are_rejected_and_steps_delayed() {
        let mut m = Median::<i32, 5>::new();
        for _ in 0..5 {
            m.push(100);
        }
        // Two spikes in a window of five never show.
        assert_eq!(m.push(9_000), 100);
        assert_eq!(m.push(-9_000), 100);
        for _ in 0..3 {
            assert_eq!(m.push(100), 100); // flush the spikes out
        }
        // A step shows after (N − 1)/2 + 1 = 3 samples at the new level.
        let out: Vec<i32> = (0..5).map(|_| m.push(200)).collect();
        assert_eq!(out, [100, 100, 200, 200, 200]);
    }

    #[test]
    fn clear_restarts_warm_up() {
        let mut m = Median::<i32, 3>::new();
        for x in [1, 2, 3, 4] {
            m.push(x);
        }
        m.clear();
        assert_eq!(m.median(), None);
        assert_eq!(m.push(50), 50);
        assert_eq!(m.push(40), 40);
        assert_eq!(m.push(60), 50);
        assert_eq!(m.push(10), 40); // 50 (the first after clear) left
    }

    #[test]
    fn shifts_and_duplicates() {
        let mut m = Median::<Shift, 3>::default();
        let s = |v: i64| Shift::from_raw_q40(v);
        for v in [3, 3, 3, 1, 1, 3, 2] {
            m.push(s(v));
        }
        // The last three are 1, 3, 2.
        assert_eq!(m.median(), Some(s(2)));
        m.push(s(3));
        assert_eq!(m.median(), Some(s(3))); // {3, 2, 3}
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2_000))]

        /// The running median equals the reference (sorted `Vec`, lower
        /// median while warming up) after every sample, for several window
        /// lengths, on arbitrary sequences with many duplicates and on
        /// arbitrary full-range values.
        #[test]
        fn median_equals_reference(
            small in prop::collection::vec(-4i64..=4, 0..60),
            wide in prop::collection::vec(any::<i64>(), 0..60),
        ) {
            for xs in [&small, &wide] {
                check_against_reference::<1>(xs)?;
                check_against_reference::<3>(xs)?;
                check_against_reference::<5>(xs)?;
                check_against_reference::<7>(xs)?;
                check_against_reference::<15>(xs)?;
            }
        }

        /// i32 at the type's limits: never a panic, and the output is one of
        /// the window's samples.
        #[test]
        fn median_i32_never_panics(xs in prop::collection::vec(
            prop_oneof![Just(i32::MIN), Just(i32::MAX), any::<i32>()], 0..40)) {
            let mut m = Median::<i32, 9>::new();
            for (i, &x) in xs.iter().enumerate() {
                let y = m.push(x);
                let start = (i + 1).saturating_sub(9);
                prop_assert!(xs[start..=i].contains(&y));
            }
        }
    }
}
