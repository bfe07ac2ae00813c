//! The running signal range for relative delta: upper and lower envelopes that jump to new
//! extremes at once and relax towards the signal with a time constant.

use crate::decay::Decay;
use sillage_core::Nanos;

/// Upper/lower envelope pair.
#[derive(Debug, Clone, PartialEq)]
pub struct Range {
    decay: Decay,
    hi: f64,
    lo: f64,
    last_t: Option<Nanos>,
}

impl Range {
    /// Envelopes relaxing with time constant `tau` [s].
    pub fn new(tau: f64) -> Range {
        Range { decay: Decay::new(tau), hi: 0.0, lo: 0.0, last_t: None }
    }

    /// Changes the time constant, keeping the envelopes.
    pub fn set_tau(&mut self, tau: f64) {
        self.decay = Decay::new(tau);
    }

    /// Upper minus lower envelope (0 before two distinct samples).
    pub fn width(&self) -> f64 {
        self.hi - self.lo
    }

    /// Takes `x` at `t` [ns].
    #[inline]
    pub fn update(&mut self, t: Nanos, x: f64) {
        match self.last_t {
            None => {
                self.hi = x;
                self.lo = x;
            }
            Some(t0) => {
                let a = self.decay.alpha(t.saturating_sub(t0));
                self.hi = x.max(self.hi + (x - self.hi) * a);
                self.lo = x.min(self.lo + (x - self.lo) * a);
            }
        }
        self.last_t = Some(t);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn envelopes_jump_out_and_relax_in() {
        let mut r = Range::new(10.0);
        r.update(0, 0.0);
        r.update(1_000_000_000, 2.0);
        // hi jumps to 2; lo relaxes towards 2 by alpha = 1 - exp(-1/10).
        let a1 = 1.0 - (-0.1f64).exp();
        assert!((r.width() - (2.0 - 2.0 * a1)).abs() < 1e-12, "{}", r.width());
        // One time constant later at 1.0: both envelopes close on 1 by 1 - 1/e.
        r.update(11_000_000_000, 1.0);
        let e = (-1.0f64).exp();
        let (hi, lo) = (1.0 + (2.0 - 1.0) * e, 1.0 - (1.0 - 2.0 * a1) * e);
        assert!((r.width() - (hi - lo)).abs() < 1e-12, "{} vs {}", r.width(), hi - lo);
    }
}
