//! Slow baseline tracking (drift removal).
//!
//! The baseline follows the transformed signal upwards (towards more gas) with the long time
//! constant `tau_rise` and downwards with the shorter `tau_fall`, so it hugs the clean-air
//! level: an odor transient of height h lasting T moves it by only h (1 - exp(-T / tau_rise))
//! (h = 1, T = 5 s, tau_rise = 300 s: 0.0165), while a fall back to clean air is followed within
//! a few tau_fall. A drift at constant rate r is removed up to a constant residual r tau_rise
//! (rising drift) or r tau_fall (falling drift): the steady-state lag of a first-order filter
//! on a ramp (common practice). With noise the baseline sits near the noise's lower envelope.

use crate::decay::Decay;
use sillage_core::Nanos;

/// Asymmetric first-order baseline.
#[derive(Debug, Clone, PartialEq)]
pub struct Baseline {
    rise: Decay,
    fall: Decay,
    value: Option<f64>,
    last_t: Nanos,
}

impl Baseline {
    /// A baseline with time constants `tau_rise` and `tau_fall` [s] (`tau_fall = 0`: falls at
    /// once to the signal).
    pub fn new(tau_rise: f64, tau_fall: f64) -> Baseline {
        Baseline { rise: Decay::new(tau_rise), fall: Decay::new(tau_fall), value: None, last_t: 0 }
    }

    /// The current baseline (None before the first update).
    pub fn value(&self) -> Option<f64> {
        self.value
    }

    /// Sets the level to `b` at `t` [ns] (to carry a level over a parameter change).
    pub fn seed(&mut self, t: Nanos, b: f64) {
        self.value = Some(b);
        self.last_t = t;
    }

    /// Forgets the level.
    pub fn reset(&mut self) {
        self.value = None;
    }

    /// Updates with `y` at `t` [ns] (`frozen`: keep the level, only advance the clock) and
    /// returns the new baseline.
    #[inline]
    pub fn update(&mut self, t: Nanos, y: f64, frozen: bool) -> f64 {
        let b = match self.value {
            None => y,
            Some(b) if frozen => b,
            Some(b) => {
                let dt = t.saturating_sub(self.last_t);
                let a = if y > b { self.rise.alpha(dt) } else { self.fall.alpha(dt) };
                b + (y - b) * a
            }
        };
        self.value = Some(b);
        self.last_t = t;
        b
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const MS: Nanos = 1_000_000;

    fn run(b: &mut Baseline, t0: Nanos, n: i64, f: impl Fn(f64) -> f64) -> f64 {
        let mut last = 0.0;
        for k in 0..n {
            let t = t0 + k * 10 * MS;
            last = b.update(t, f(t as f64 * 1e-9), false);
        }
        last
    }

    #[test]
    fn a_fast_odor_pulse_barely_moves_the_baseline() {
        let mut b = Baseline::new(300.0, 20.0);
        run(&mut b, 0, 1000, |_| 0.0);
        // 5 s pulse of height 1, sampled at 100 Hz.
        let after = run(&mut b, 10_000 * MS, 500, |_| 1.0);
        let expected = 1.0 - (-5.0f64 / 300.0).exp(); // closed form of the first-order lag
        assert!((after - expected).abs() < 1e-3, "baseline {after}, expected {expected}");
        // Back in clean air it falls with tau_fall: 10000 steps of 10 ms = 5 tau_fall.
        let back = run(&mut b, 15_000 * MS, 10_000, |_| 0.0);
        let want = after * (-100.0f64 / 20.0).exp();
        assert!((back - want).abs() < 1e-9, "{back} vs {want}");
    }

    #[test]
    fn ramp_drift_leaves_a_constant_residual_of_rate_times_tau() {
        let (r, tau) = (0.002, 60.0);
        let mut b = Baseline::new(tau, 5.0);
        // 20 tau of rising drift: the residual y - b tends to r tau.
        let n = (20.0 * tau * 100.0) as i64;
        let last_t = (n - 1) as f64 * 0.01;
        let bl = run(&mut b, 0, n, |t| r * t);
        let residual = r * last_t - bl;
        assert!((residual - r * tau).abs() < 0.01 * r * tau, "residual {residual} vs {}", r * tau);
    }

    #[test]
    fn frozen_and_reset() {
        let mut b = Baseline::new(10.0, 0.0);
        assert_eq!(b.update(0, 2.0, false), 2.0);
        assert_eq!(b.update(MS, 5.0, true), 2.0);
        assert_eq!(b.update(2 * MS, 1.0, false), 1.0, "tau_fall = 0 falls at once");
        b.reset();
        assert_eq!(b.value(), None);
    }
}
