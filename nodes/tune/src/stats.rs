//! Statistics over a point's cases, with 95 % intervals (the Wilson interval and the quantile
//! rule are the simulator summary's own, so `sillage sim` and `sillage tune` agree).
//!
//! - Rates: Wilson score interval (Wilson, J. Am. Stat. Assoc. 22:209-212, 1927): with
//!   p = k/n, centre (p + z^2/2n) / (1 + z^2/n), half-width z sqrt(p(1-p)/n + z^2/4n^2) / (1 + z^2/n).
//! - Medians and means: bootstrap percentile interval (Efron and Tibshirani, An Introduction
//!   to the Bootstrap, 1993, ch. 13), with resamples drawn from ChaCha8 seeded by the caller,
//!   so an interval is a pure function of the values and the seed.
//! - Quantiles interpolate between order statistics (Hyndman and Fan type 7, numpy's default).

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

pub use sillage_sim::summary::{quantile, wilson, Z95};

/// Bootstrap resamples per interval.
pub const RESAMPLES: usize = 2000;

/// Median of ascending `sorted`.
pub fn median(sorted: &[f64]) -> Option<f64> {
    quantile(sorted, 0.5)
}

/// Mean of `v`; `None` when empty.
pub fn mean(v: &[f64]) -> Option<f64> {
    (!v.is_empty()).then(|| v.iter().sum::<f64>() / v.len() as f64)
}

/// Bootstrap 95 % percentile interval of `stat` over `values` (ascending order is passed to
/// `stat`); `None` when `values` is empty.
pub fn bootstrap(values: &[f64], stat: fn(&[f64]) -> Option<f64>, seed: u64) -> Option<(f64, f64)> {
    if values.is_empty() {
        return None;
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut sample = vec![0.0; values.len()];
    let mut stats = Vec::with_capacity(RESAMPLES);
    for _ in 0..RESAMPLES {
        for s in sample.iter_mut() {
            *s = values[rng.random_range(0..values.len())];
        }
        sample.sort_by(f64::total_cmp);
        stats.extend(stat(&sample));
    }
    stats.sort_by(f64::total_cmp);
    Some((quantile(&stats, 0.025)?, quantile(&stats, 0.975)?))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantiles_follow_numpy_type_7() {
        // numpy.quantile([1, 2, 3, 4], [0.25, 0.5]) = [1.75, 2.5] (numpy default 'linear').
        let v = [1.0, 2.0, 3.0, 4.0];
        assert_eq!((quantile(&v, 0.25), median(&v)), (Some(1.75), Some(2.5)));
        assert_eq!(mean(&v), Some(2.5));
    }

    #[test]
    fn bootstrap_brackets_the_statistic_and_is_seeded() {
        let v: Vec<f64> = (0..40).map(|i| f64::from(i % 10)).collect();
        let (lo, hi) = bootstrap(&v, mean, 7).unwrap_or((f64::NAN, f64::NAN));
        // Mean 4.5, sd 2.87, n = 40: the normal-theory interval is 4.5 +- 0.89 (common practice).
        assert!(lo < 4.5 && hi > 4.5 && (hi - lo - 1.78).abs() < 0.35, "{lo} {hi}");
        assert_eq!(bootstrap(&v, mean, 7), Some((lo, hi)));
        assert_eq!(bootstrap(&[], median, 7), None);
    }
}
