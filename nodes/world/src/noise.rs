//! Coloured noise: white Gaussian noise through a first-order low-pass filter
//! (an Ornstein-Uhlenbeck process), discretised exactly so that its statistics do not
//! depend on the step size.

use rand::Rng;
use rand_distr::StandardNormal;

/// A zero-mean first-order low-pass-filtered Gaussian process with stationary standard
/// deviation `std` and correlation time `tau` [s]: autocorrelation std^2 exp(-|lag|/tau).
#[derive(Debug, Clone, PartialEq)]
pub struct ColouredNoise {
    std: f64,
    tau: f64,
    value: f64,
}

impl ColouredNoise {
    /// Creates the process with its initial value drawn from the stationary distribution.
    /// `std` (any unit) and `tau` [s] must be non-negative; `tau = 0` or `std = 0` gives a
    /// process that stays at zero.
    pub fn new<R: Rng + ?Sized>(std: f64, tau: f64, rng: &mut R) -> Self {
        let value = if std > 0.0 && tau > 0.0 {
            std * rng.sample::<f64, _>(StandardNormal)
        } else {
            0.0
        };
        Self { std, tau, value }
    }

    /// The process that stays at zero.
    pub fn zero() -> Self {
        Self {
            std: 0.0,
            tau: 0.0,
            value: 0.0,
        }
    }

    /// Current value.
    pub fn value(&self) -> f64 {
        self.value
    }

    /// Advances the process by `dt` [s] with the exact update
    /// x' = a x + std sqrt(1 - a^2) n, a = exp(-dt / tau), n ~ N(0, 1).
    pub fn advance<R: Rng + ?Sized>(&mut self, dt: f64, rng: &mut R) -> f64 {
        if self.std > 0.0 && self.tau > 0.0 && dt > 0.0 {
            let a = (-dt / self.tau).exp();
            let n: f64 = rng.sample(StandardNormal);
            self.value = a * self.value + self.std * (1.0 - a * a).sqrt() * n;
        }
        self.value
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    /// Stationary variance and lag-tau autocorrelation exp(-1) of the OU process
    /// (standard result for a first-order low-pass of white noise; common practice).
    #[test]
    fn stationary_std_and_correlation() {
        let mut rng = ChaCha8Rng::seed_from_u64(7);
        let (std, tau, dt) = (0.3, 2.0, 0.1);
        let mut p = ColouredNoise::new(std, tau, &mut rng);
        let lag = (tau / dt).round() as usize;
        let n = 400_000;
        let mut xs = Vec::with_capacity(n);
        for _ in 0..n {
            xs.push(p.advance(dt, &mut rng));
        }
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        let cov = xs
            .windows(lag + 1)
            .map(|w| (w[0] - mean) * (w[lag] - mean))
            .sum::<f64>()
            / (n - lag) as f64;
        assert!(
            (var.sqrt() - std).abs() < 0.02 * std / 0.3 + 0.01,
            "std {}",
            var.sqrt()
        );
        let rho = cov / var;
        assert!((rho - (-1.0f64).exp()).abs() < 0.03, "rho(tau) = {rho}");
        assert!(mean.abs() < 0.03, "mean {mean}");
    }

    #[test]
    fn zero_std_stays_zero() {
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let mut p = ColouredNoise::new(0.0, 1.0, &mut rng);
        for _ in 0..10 {
            assert_eq!(p.advance(0.1, &mut rng), 0.0);
        }
    }
}
