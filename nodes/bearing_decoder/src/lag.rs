//! Lag estimation between two onset trains: binned event-train cross-correlation, smoothed,
//! for the coarse lag, then one-to-one matched onsets with median/MAD outlier rejection for the
//! fine lag and its spread.
//!
//! Contract:
//! - Lags are `t_b - t_a` [s]: positive when train `a` leads.
//! - Binning: onset `t` [ns] falls in bin `floor(t / bin)` (a fixed grid from the epoch, so the
//!   bins do not move with the window). The correlogram is
//!   `C[k] = sum_n A[n] B[n + k]` for `|k| <= k_max`, with `A`, `B` the onset counts per bin:
//!   what `scipy.signal.correlate(B, A, mode="full")` with `correlation_lags(len(B), len(A))`
//!   gives, computed sparsely from the onset pairs. Onset lags scatter over many bins (timing
//!   noise, meander), so the correlogram is smoothed with the triangular kernel
//!   `K[j] = w + 1 - |j|`, `|j| <= w` (w: the matching tolerance in bins; zeros beyond
//!   `|k| = k_max`), i.e. `scipy.signal.convolve(C, K, mode="same")`: its peak is the lag that
//!   gathers the most onset pairs within the tolerance. The coarse lag is the first maximum of
//!   the smoothed correlogram in ascending lag order (numpy's `argmax` tie rule).
//! - Matching: each onset of `a` takes the nearest unused onset of `b` within `tolerance` of
//!   `t_a + coarse`, in time order. Matched lags farther than `mad_k` robust standard
//!   deviations (1.4826 MAD, at least one bin) from their median are outliers; the estimate is
//!   the mean of the inliers.
//!
//! Nothing allocates once the scratch buffers have grown to the window's size.

use sillage_core::Nanos;

/// Settings of one lag estimate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LagSettings {
    /// Correlogram bin width [ns] (> 0).
    pub bin: Nanos,
    /// Largest lag searched [bins]: the physically plausible window.
    pub k_max: i64,
    /// Half-width of the triangular smoothing kernel [bins] (>= 0).
    pub kernel: i64,
    /// Half-width of the matching window around the coarse lag [ns].
    pub tolerance: Nanos,
    /// Outlier threshold in robust standard deviations.
    pub mad_k: f64,
}

/// The lag between two trains.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LagEstimate {
    /// Fine lag `t_b - t_a` [s]: mean of the inlier matched lags.
    pub lag: f64,
    /// Coarse lag from the correlogram peak [s] (a whole number of bins).
    pub coarse: f64,
    /// Height of the smoothed correlogram peak [kernel-weighted onset pairs].
    pub peak: u32,
    /// Onset pairs matched around the coarse lag.
    pub matched: usize,
    /// Matched pairs kept after outlier rejection.
    pub inliers: usize,
    /// Sample standard deviation of the inlier lags [s] (0 for one inlier).
    pub spread: f64,
}

impl LagEstimate {
    /// Fraction of matched pairs that are inliers (0..1).
    pub fn inlier_fraction(&self) -> f64 {
        if self.matched == 0 {
            0.0
        } else {
            self.inliers as f64 / self.matched as f64
        }
    }
}

/// The bin of stamp `t` [ns] for bin width `bin` [ns].
#[inline]
pub fn bin_of(t: Nanos, bin: Nanos) -> i64 {
    t.div_euclid(bin)
}

/// Fills `counts` (length `2 k_max + 1`, index `k + k_max`) with the binned cross-correlation
/// of the sorted trains `a` and `b` [ns].
pub fn correlate(a: &[Nanos], b: &[Nanos], bin: Nanos, k_max: i64, counts: &mut Vec<u32>) {
    let k_max = k_max.max(0);
    counts.clear();
    counts.resize((2 * k_max + 1) as usize, 0);
    let mut lo = 0;
    for &ta in a {
        let ia = bin_of(ta, bin);
        while lo < b.len() && bin_of(b[lo], bin) < ia - k_max {
            lo += 1;
        }
        for &tb in &b[lo..] {
            let k = bin_of(tb, bin) - ia;
            if k > k_max {
                break;
            }
            counts[(k + k_max) as usize] += 1;
        }
    }
}

/// Fills `out` with `counts` smoothed by the triangular kernel of half-width `w` [bins]
/// (zero padding at the ends; the output has the length of `counts`).
pub fn smooth(counts: &[u32], w: i64, out: &mut Vec<u32>) {
    smooth_with(counts, w, &mut Vec::new(), out);
}

/// [`smooth`] in O(n) with a caller-owned prefix-sum buffer: moving the kernel one bin right
/// adds the box `(k, k + w + 1]` and removes the box `[k - w, k]`.
pub fn smooth_with(counts: &[u32], w: i64, prefix: &mut Vec<u64>, out: &mut Vec<u32>) {
    let w = w.max(0) as usize;
    let n = counts.len();
    out.clear();
    if n == 0 {
        return;
    }
    prefix.clear();
    prefix.push(0);
    let mut acc = 0u64;
    for &c in counts {
        acc += u64::from(c);
        prefix.push(acc);
    }
    let box_sum = |lo: usize, hi: usize| prefix[hi.min(n)] - prefix[lo.min(n)]; // sum of [lo, hi)
    let mut s: u64 = counts.iter().take(w + 1).enumerate().map(|(i, &c)| (w + 1 - i) as u64 * u64::from(c)).sum();
    out.push(s as u32);
    for k in 0..n - 1 {
        s = s + box_sum(k + 1, k + w + 2) - box_sum(k.saturating_sub(w), k + 1);
        out.push(s as u32);
    }
}

/// The first maximum of a correlogram as (lag [bins], count); `None` when it is all zero.
pub fn peak(counts: &[u32], k_max: i64) -> Option<(i64, u32)> {
    let mut best: Option<(i64, u32)> = None;
    for (i, &c) in counts.iter().enumerate() {
        if c > 0 && best.is_none_or(|(_, b)| c > b) {
            best = Some((i as i64 - k_max, c));
        }
    }
    best
}

/// Appends to `out` the lags [s] of onsets of `b` matched one-to-one to onsets of `a` around
/// `a + center` within `tolerance` [ns]; both trains sorted.
pub fn match_onsets(a: &[Nanos], b: &[Nanos], center: Nanos, tolerance: Nanos, out: &mut Vec<f64>) {
    let mut j = 0;
    for &ta in a {
        let target = ta.saturating_add(center);
        while j < b.len() && b[j] < target.saturating_sub(tolerance) {
            j += 1;
        }
        let mut best: Option<(usize, Nanos)> = None;
        for (k, &tb) in b.iter().enumerate().skip(j) {
            if tb > target.saturating_add(tolerance) {
                break;
            }
            let d = (tb - target).abs();
            if best.is_none_or(|(_, bd)| d < bd) {
                best = Some((k, d));
            }
        }
        if let Some((k, _)) = best {
            out.push((b[k] - ta) as f64 * 1e-9);
            j = k + 1;
        }
    }
}

/// The median of `v` (mean of the two middle values for an even length), which it reorders
/// (O(n) selection); `None` when empty.
pub fn median_reordering(v: &mut [f64]) -> Option<f64> {
    let n = v.len();
    if n == 0 {
        return None;
    }
    let (lower, mid, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    let mid = *mid;
    if n % 2 == 1 {
        return Some(mid);
    }
    let below = lower.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    Some(0.5 * (below + mid))
}

/// Reusable lag estimator (owns its scratch buffers).
#[derive(Debug, Clone, Default)]
pub struct LagEstimator {
    counts: Vec<u32>,
    smoothed: Vec<u32>,
    prefix: Vec<u64>,
    lags: Vec<f64>,
    devs: Vec<f64>,
}

impl LagEstimator {
    /// An estimator with empty buffers.
    pub fn new() -> LagEstimator {
        LagEstimator::default()
    }

    /// The correlogram of the last [`LagEstimator::estimate`] call (index `k + k_max`).
    pub fn counts(&self) -> &[u32] {
        &self.counts
    }

    /// The smoothed correlogram of the last [`LagEstimator::estimate`] call.
    pub fn smoothed(&self) -> &[u32] {
        &self.smoothed
    }

    /// Estimates the lag `t_b - t_a` of the sorted onset trains `a`, `b` [ns]; `None` when no
    /// pair of onsets lies within the lag window.
    pub fn estimate(&mut self, a: &[Nanos], b: &[Nanos], s: &LagSettings) -> Option<LagEstimate> {
        let bin = s.bin.max(1);
        correlate(a, b, bin, s.k_max, &mut self.counts);
        smooth_with(&self.counts, s.kernel, &mut self.prefix, &mut self.smoothed);
        let (k, peak_count) = peak(&self.smoothed, s.k_max.max(0))?;
        let center = k * bin;
        self.lags.clear();
        match_onsets(a, b, center, s.tolerance.max(0), &mut self.lags);
        let matched = self.lags.len();
        let med = median_reordering(&mut self.lags)?;
        self.devs.clear();
        self.devs.extend(self.lags.iter().map(|x| (x - med).abs()));
        let mad = median_reordering(&mut self.devs).unwrap_or(0.0);
        let threshold = (s.mad_k * 1.4826 * mad).max(bin as f64 * 1e-9);
        let (mut n, mut sum, mut sum2) = (0usize, 0.0, 0.0);
        for &x in self.lags.iter().filter(|x| (*x - med).abs() <= threshold) {
            n += 1;
            sum += x;
            sum2 += x * x;
        }
        let mean = sum / n as f64; // n >= 1: the median itself is within the threshold
        let spread = if n > 1 { ((sum2 - n as f64 * mean * mean).max(0.0) / (n - 1) as f64).sqrt() } else { 0.0 };
        Some(LagEstimate {
            lag: mean,
            coarse: center as f64 * 1e-9,
            peak: peak_count,
            matched,
            inliers: n,
            spread,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const MS: Nanos = 1_000_000;

    #[test]
    fn correlogram_counts_pairs_by_bin_difference() {
        // a at bins 1, 5; b at bins 3, 7: differences 2, 6, -2, 2 -> C[2] = 2, C[-2] = 1.
        let (a, b) = ([10 * MS, 50 * MS], [30 * MS, 70 * MS]);
        let mut c = Vec::new();
        correlate(&a, &b, 10 * MS, 3, &mut c);
        assert_eq!(c, vec![0, 1, 0, 0, 0, 2, 0]);
        assert_eq!(peak(&c, 3), Some((2, 2)));
        assert_eq!(peak(&[0, 0, 0], 1), None);
        assert_eq!(peak(&[0, 3, 0, 3, 1], 2), Some((-1, 3)), "first maximum wins ties");
        let mut s = Vec::new();
        smooth(&[0, 1, 0, 0, 2, 0, 0], 2, &mut s);
        assert_eq!(s, vec![2, 3, 4, 5, 6, 4, 2]);
    }

    #[test]
    fn matched_lags_reject_an_outlier() {
        // Right lags left by 120 ms, jitter +-2 ms, plus one spurious right onset at +160 ms.
        let a: Vec<Nanos> = (0..10).map(|k| k * 700 * MS).collect();
        let mut b: Vec<Nanos> = a.iter().enumerate().map(|(k, t)| t + 120 * MS + (k as i64 % 3 - 1) * 2 * MS).collect();
        b[4] = a[4] + 160 * MS;
        let s = LagSettings { bin: 5 * MS, k_max: 60, kernel: 12, tolerance: 60 * MS, mad_k: 3.0 };
        let e = LagEstimator::new().estimate(&a, &b, &s).expect("estimate");
        assert_eq!(e.matched, 10);
        assert_eq!(e.inliers, 9, "{e:?}");
        assert!((e.lag - 0.120).abs() < 1e-3, "{e:?}");
        assert!((e.coarse - 0.120).abs() <= 0.005 + 1e-12, "{e:?}");
        assert!(e.spread < 3e-3);
    }

    #[test]
    fn nothing_in_the_window_gives_none() {
        let s = LagSettings { bin: 5 * MS, k_max: 10, kernel: 4, tolerance: 20 * MS, mad_k: 3.0 };
        assert_eq!(LagEstimator::new().estimate(&[0], &[SECOND_NS], &s), None);
        assert_eq!(LagEstimator::new().estimate(&[], &[0], &s), None);
    }
    const SECOND_NS: Nanos = 1_000_000_000;

    /// The sparse correlogram equals the dense definition sum_n A[n] B[n+k].
    fn dense(a: &[Nanos], b: &[Nanos], bin: Nanos, k_max: i64) -> Vec<u32> {
        let lo = a.iter().chain(b).map(|&t| bin_of(t, bin)).min().unwrap_or(0);
        let hi = a.iter().chain(b).map(|&t| bin_of(t, bin)).max().unwrap_or(0);
        let n = (hi - lo + 1) as usize;
        let (mut aa, mut bb) = (vec![0u32; n], vec![0u32; n]);
        a.iter().for_each(|&t| aa[(bin_of(t, bin) - lo) as usize] += 1);
        b.iter().for_each(|&t| bb[(bin_of(t, bin) - lo) as usize] += 1);
        (-k_max..=k_max)
            .map(|k| (0..n as i64).filter(|&i| i + k >= 0 && i + k < n as i64).map(|i| aa[i as usize] * bb[(i + k) as usize]).sum())
            .collect()
    }

    proptest! {
        #[test]
        fn sparse_correlogram_matches_dense(
            mut a in proptest::collection::vec(-5_000i64..5_000, 0..30),
            mut b in proptest::collection::vec(-5_000i64..5_000, 0..30),
            bin in 1i64..50, k_max in 0i64..40,
        ) {
            a.sort_unstable();
            b.sort_unstable();
            let mut c = Vec::new();
            correlate(&a, &b, bin, k_max, &mut c);
            prop_assert_eq!(c, dense(&a, &b, bin, k_max));
        }

        #[test]
        fn median_by_selection_equals_the_sorted_median(mut v in proptest::collection::vec(-1e3f64..1e3, 1..50)) {
            let mut sorted = v.clone();
            sorted.sort_by(f64::total_cmp);
            let n = sorted.len();
            let want = if n % 2 == 1 { sorted[n / 2] } else { 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]) };
            prop_assert_eq!(median_reordering(&mut v), Some(want));
        }

        #[test]
        fn fast_smoothing_equals_the_kernel_sum(counts in proptest::collection::vec(0u32..5, 0..60), w in 0i64..12) {
            let mut fast = Vec::new();
            smooth(&counts, w, &mut fast);
            let n = counts.len() as i64;
            let direct: Vec<u32> = (0..n)
                .map(|k| (-w..=w).filter(|j| (0..n).contains(&(k + j))).map(|j| counts[(k + j) as usize] * (w + 1 - j.abs()) as u32).sum())
                .collect();
            prop_assert_eq!(fast, direct);
        }

        #[test]
        fn a_pure_shift_is_recovered_exactly(shift in -200i64..200, n in 2usize..20) {
            let a: Vec<Nanos> = (0..n as i64).map(|k| k * 997 * MS + 13 * MS).collect();
            let b: Vec<Nanos> = a.iter().map(|t| t + shift * MS).collect();
            let s = LagSettings { bin: 5 * MS, k_max: 50, kernel: 6, tolerance: 30 * MS, mad_k: 3.0 };
            let e = LagEstimator::new().estimate(&a, &b, &s).expect("in window");
            prop_assert!((e.lag - shift as f64 * 1e-3).abs() < 1e-9);
            prop_assert_eq!(e.inliers, n);
        }
    }
}
