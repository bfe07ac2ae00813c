//! First-order smoothing factors `alpha = 1 - exp(-dt / tau)` with a one-entry cache: sensor
//! boards sample at a fixed period, so after the first sample the exponential is not computed
//! again (this keeps the per-sample path cheap).

use sillage_core::Nanos;

/// `1 - exp(-dt / tau)` for a fixed `tau`, cached for the last `dt`.
#[derive(Debug, Clone, PartialEq)]
pub struct Decay {
    tau: f64,
    dt: Nanos,
    alpha: f64,
}

impl Decay {
    /// A factor for time constant `tau` [s]; `tau <= 0` means "follow at once" (alpha = 1).
    pub fn new(tau: f64) -> Decay {
        Decay { tau, dt: 0, alpha: if tau > 0.0 { 0.0 } else { 1.0 } }
    }

    /// The smoothing factor for a step of `dt` [ns] (0 for `dt <= 0`).
    #[inline]
    pub fn alpha(&mut self, dt: Nanos) -> f64 {
        if self.tau <= 0.0 {
            return 1.0;
        }
        if dt <= 0 {
            return 0.0;
        }
        if dt != self.dt {
            self.dt = dt;
            self.alpha = -(-(dt as f64) * 1e-9 / self.tau).exp_m1();
        }
        self.alpha
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn alpha_matches_the_closed_form() {
        // One time constant: 1 - 1/e (definition of the first-order lag, common practice).
        let mut d = Decay::new(2.0);
        assert!((d.alpha(2_000_000_000) - (1.0 - (-1.0f64).exp())).abs() < 1e-15);
        assert!((d.alpha(10_000_000) - (1.0 - (-0.005f64).exp())).abs() < 1e-15);
        assert_eq!(d.alpha(0), 0.0);
        assert_eq!(d.alpha(-5), 0.0);
        assert_eq!(Decay::new(0.0).alpha(1), 1.0);
    }
}
