//! The two first-order stages of the cascade: the first difference and the exponential moving
//! average (EMA).

use super::{check_dt, PlumeError};

/// `y[n] = (x[n] - x[n-1]) / dt`: the backward-difference derivative [input units / s]
/// (`scipy.signal.lfilter([1/dt, -1/dt], [1], x)`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Difference {
    inv_dt: f64,
    prev: f64,
}

impl Difference {
    /// A differentiator for sample period `dt` [s].
    pub fn new(dt: f64) -> Result<Difference, PlumeError> {
        check_dt(dt)?;
        Ok(Difference { inv_dt: 1.0 / dt, prev: 0.0 })
    }

    /// Filters one sample.
    #[inline]
    pub fn step(&mut self, x: f64) -> f64 {
        let y = (x - self.prev) * self.inv_dt;
        self.prev = x;
        y
    }

    /// Steady state of a constant input `x0` (output 0).
    pub fn prime(&mut self, x0: f64) {
        self.prev = x0;
    }
}

/// EMA weight for half-life `half_life` [s] at sample period `dt` [s]:
/// `alpha = 1 - 2^(-dt / half_life)`, so the weight of a sample halves every `half_life`.
pub fn ema_alpha(half_life: f64, dt: f64) -> Result<f64, PlumeError> {
    check_dt(dt)?;
    if !(half_life.is_finite() && half_life > 0.0) {
        return Err(PlumeError::Time { what: "EMA half-life", value: half_life });
    }
    Ok(1.0 - (-dt / half_life).exp2())
}

/// `y[n] = y[n-1] + alpha (x[n] - y[n-1])`, the first-order IIR
/// `scipy.signal.lfilter([alpha], [1, alpha - 1], x)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ema {
    alpha: f64,
    y: f64,
}

impl Ema {
    /// An EMA with half-life `half_life` [s] at sample period `dt` [s].
    pub fn new(half_life: f64, dt: f64) -> Result<Ema, PlumeError> {
        Ok(Ema { alpha: ema_alpha(half_life, dt)?, y: 0.0 })
    }

    /// The weight of the newest sample.
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// Filters one sample.
    #[inline]
    pub fn step(&mut self, x: f64) -> f64 {
        self.y += self.alpha * (x - self.y);
        self.y
    }

    /// Steady state of a constant input `x0`.
    pub fn prime(&mut self, x0: f64) {
        self.y = x0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn ema_alpha_check_value() {
        // docs/references.md (Bouts): dt = 0.01 s, hl = 0.3 s gives alpha = 0.02284.
        assert_relative_eq!(ema_alpha(0.3, 0.01).expect("alpha"), 0.02284, epsilon = 5e-6);
        // Half-life by definition: after hl / dt steps a step response has covered half the way.
        let mut e = Ema::new(0.3, 0.01).expect("ema");
        let mut y = 0.0;
        for _ in 0..30 {
            y = e.step(1.0);
        }
        assert_relative_eq!(y, 0.5, max_relative = 1e-12);
        assert!(Ema::new(0.0, 0.01).is_err());
    }

    #[test]
    fn difference_of_a_ramp() {
        let mut d = Difference::new(0.02).expect("diff");
        d.prime(1.0);
        assert_eq!(d.step(1.0), 0.0);
        assert_relative_eq!(d.step(1.1), 5.0, max_relative = 1e-12);
    }
}
