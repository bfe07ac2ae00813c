//! Clean-air noise of the smoothed derivative, learned once per channel.
//!
//! Over the first `learn_time` of a channel (in grid samples) the smoothed derivative is
//! stored in a buffer allocated when the channel is created; when it is full the noise is the
//! robust standard deviation `1.4826 * median(|e - median(e)|)` (the median absolute deviation
//! scaled to a Gaussian's sigma, common practice), which a few early filaments do not inflate
//! much. A signal quantised so finely that the MAD is 0 falls back to the plain standard
//! deviation. The estimate is then frozen.

/// Scale from the median absolute deviation to the standard deviation of a Gaussian.
pub const MAD_TO_SIGMA: f64 = 1.482_602_218_505_602;

/// One channel's learner.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseLearner {
    buf: Vec<f64>,
    len: usize,
    sigma: Option<f64>,
}

impl NoiseLearner {
    /// A learner over `samples` grid samples (at least 2).
    pub fn new(samples: usize) -> NoiseLearner {
        NoiseLearner { buf: vec![0.0; samples.max(2)], len: 0, sigma: None }
    }

    /// The learned noise [signal units / s], once learning is over.
    pub fn sigma(&self) -> Option<f64> {
        self.sigma
    }

    /// Fraction of the learning done (0..=1).
    pub fn progress(&self) -> f64 {
        if self.sigma.is_some() { 1.0 } else { self.len as f64 / self.buf.len() as f64 }
    }

    /// Adds one smoothed-derivative sample; returns the noise when this sample completed the
    /// learning.
    #[inline]
    pub fn push(&mut self, e: f64) -> Option<f64> {
        if self.sigma.is_some() {
            return None;
        }
        self.buf[self.len] = e;
        self.len += 1;
        if self.len < self.buf.len() {
            return None;
        }
        let s = robust_sigma(&mut self.buf);
        self.sigma = Some(s);
        Some(s)
    }
}

/// Robust sigma of `v` (reorders `v`; no allocation).
pub fn robust_sigma(v: &mut [f64]) -> f64 {
    let n = v.len();
    let mean = v.iter().sum::<f64>() / n as f64;
    let sd = (v.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n as f64).sqrt();
    let med = median(v);
    v.iter_mut().for_each(|x| *x = (*x - med).abs());
    let mad = median(v);
    if mad > 0.0 { MAD_TO_SIGMA * mad } else { sd }
}

/// Median (mean of the two middle values for even lengths); reorders `v`.
fn median(v: &mut [f64]) -> f64 {
    let n = v.len();
    let mid = n / 2;
    let (_, &mut hi, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    if n % 2 == 1 {
        hi
    } else {
        let lo = v[..mid].iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (lo + hi)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn robust_sigma_of_known_sets() {
        // 1..=9: median 5, absolute deviations 0,1,1,2,2,3,3,4,4 -> MAD 2.
        let mut v: Vec<f64> = (1..=9).map(f64::from).collect();
        assert_relative_eq!(robust_sigma(&mut v), 2.0 * MAD_TO_SIGMA, epsilon = 1e-12);
        // An outlier barely moves it.
        let mut w: Vec<f64> = (1..=9).map(f64::from).chain([1e6]).collect();
        assert!(robust_sigma(&mut w) < 4.0 * MAD_TO_SIGMA);
        // MAD 0 falls back to the standard deviation: [0]*9 + [10]: mean 1, sd 3.
        let mut q = [0.0; 9].into_iter().chain([10.0]).collect::<Vec<_>>();
        assert_relative_eq!(robust_sigma(&mut q), 3.0, epsilon = 1e-12);
    }

    #[test]
    fn learner_finishes_once() {
        let mut l = NoiseLearner::new(4);
        assert_eq!(l.push(1.0), None);
        assert_eq!(l.push(2.0), None);
        assert_eq!(l.push(3.0), None);
        // 1, 2, 3, 4: median 2.5, deviations .5 .5 1.5 1.5 -> MAD 1.
        assert_relative_eq!(l.push(4.0).expect("done"), MAD_TO_SIGMA, epsilon = 1e-12);
        assert_eq!(l.push(5.0), None);
        assert_eq!(l.progress(), 1.0);
    }
}
