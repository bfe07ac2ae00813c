//! The band-pass chain: conditioned signal in, smoothed derivative out, one grid sample at a
//! time.
//!
//! - `cascade` (the 2016 bout method, "Exploiting plume structure to decode gas source
//!   distance using metal-oxide gas sensors", Sensors and Actuators B 235:636-646, 2016, as
//!   summarised in docs/references.md): low-pass (Gaussian kernel, made causal by a delay of
//!   its radius; or Butterworth), first difference `/ dt`, exponential moving average with
//!   half-life `ema_half_life`. The 2016 work smoothed with a centred (non-causal) kernel
//!   offline; the delayed kernel has the same magnitude response and a pure delay.
//! - `fir` (the 2020 improvement, Sensors and Actuators B 320:128235, 2020): one causal,
//!   linear-phase FIR low-pass differentiator (see [`crate::filters::lowpass_differentiator`]).
//!
//! The chain starts on its first sample with every stage primed by its own first input (the
//! steady state of a constant input), so a non-zero baseline gives no start-up transient.

use crate::filters::{self, butterworth_lowpass, gaussian_kernel, lowpass_differentiator, PlumeError, Difference, Ema, Fir, Sos};
use crate::params::{FilterKind, FilterParams, LowPassKind};

/// The low-pass stage of the cascade.
#[derive(Debug, Clone, PartialEq)]
pub enum LowPass {
    /// Delayed Gaussian kernel.
    Gaussian(Fir),
    /// Butterworth sections.
    Butterworth(Sos),
}

impl LowPass {
    #[inline]
    fn step(&mut self, x: f64) -> f64 {
        match self {
            LowPass::Gaussian(f) => f.step(x),
            LowPass::Butterworth(s) => s.step(x),
        }
    }

    fn prime(&mut self, x0: f64) {
        match self {
            LowPass::Gaussian(f) => f.prime(x0),
            LowPass::Butterworth(s) => s.prime(x0),
        }
    }
}

// Unboxed on purpose: the cascade is stepped per sample, an indirection would cost more than
// the ~200 bytes per channel.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone, PartialEq)]
enum Stages {
    Cascade { lowpass: LowPass, diff: Difference, ema: Ema },
    Fir(Fir),
}

/// One channel's band-pass chain.
#[derive(Debug, Clone, PartialEq)]
pub struct BoutChain {
    stages: Stages,
    started: bool,
    delay: f64,
}

/// Number of FIR low-pass taps for a length [s] at period `dt` [s]: rounded, made odd, >= 3.
pub fn fir_taps(length: f64, dt: f64) -> usize {
    let n = (length / dt).round().clamp(3.0, 1e6) as usize;
    if n % 2 == 0 { n + 1 } else { n }
}

impl BoutChain {
    /// Designs the chain for grid period `dt` [s].
    pub fn design(p: &FilterParams, dt: f64) -> Result<BoutChain, PlumeError> {
        filters::ema_alpha(p.ema_half_life, dt)?;
        let (stages, delay) = match p.kind {
            FilterKind::Cascade => {
                let (lowpass, delay) = match p.lowpass {
                    LowPassKind::Gaussian => {
                        let h = gaussian_kernel(p.gaussian_sigma, dt)?;
                        let delay = (h.len() - 1) as f64 / 2.0;
                        (LowPass::Gaussian(Fir::new(&h)?), delay)
                    }
                    LowPassKind::Butterworth => {
                        let s = butterworth_lowpass(p.butterworth_order, p.butterworth_cutoff, dt)?;
                        let delay = s.dc_group_delay();
                        (LowPass::Butterworth(s), delay)
                    }
                };
                // The difference adds half a sample; the EMA (1 - a) / a samples at DC.
                let ema = Ema::new(p.ema_half_life, dt)?;
                let delay = delay + 0.5 + (1.0 - ema.alpha()) / ema.alpha();
                (Stages::Cascade { lowpass, diff: Difference::new(dt)?, ema }, delay)
            }
            FilterKind::Fir => {
                let h = lowpass_differentiator(fir_taps(p.fir_length, dt), p.fir_cutoff, dt)?;
                let delay = (h.len() - 1) as f64 / 2.0;
                (Stages::Fir(Fir::new(&h)?), delay)
            }
        };
        Ok(BoutChain { stages, started: false, delay: delay * dt })
    }

    /// Delay of the smoothed derivative behind the signal at low frequencies [s] (the group
    /// delay at DC; exact for the linear-phase FIRs).
    pub fn delay(&self) -> f64 {
        self.delay
    }

    /// Forgets the history: the next sample starts the chain again.
    pub fn reset(&mut self) {
        self.started = false;
    }

    /// Whether a sample has started the chain.
    pub fn started(&self) -> bool {
        self.started
    }

    /// Filters one grid sample [signal units]; returns the smoothed derivative
    /// [signal units / s].
    #[inline]
    pub fn step(&mut self, x: f64) -> f64 {
        let first = !self.started;
        self.started = true;
        match &mut self.stages {
            Stages::Cascade { lowpass, diff, ema } => {
                if first {
                    lowpass.prime(x);
                }
                let y = lowpass.step(x);
                if first {
                    diff.prime(y);
                }
                let d = diff.step(y);
                if first {
                    ema.prime(d);
                }
                ema.step(d)
            }
            Stages::Fir(f) => {
                if first {
                    f.prime(x);
                }
                f.step(x)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn params(kind: FilterKind, lowpass: LowPassKind) -> FilterParams {
        FilterParams { kind, lowpass, ..FilterParams::default() }
    }

    #[test]
    fn every_chain_measures_the_slope_of_a_ramp() {
        // A ramp of slope 2 units/s on a baseline of 7: after the transient every chain gives 2
        // (each stage has unit gain at DC for its input, the difference is exact on a ramp).
        for (kind, lp) in [
            (FilterKind::Cascade, LowPassKind::Gaussian),
            (FilterKind::Cascade, LowPassKind::Butterworth),
            (FilterKind::Fir, LowPassKind::Gaussian),
        ] {
            let dt = 0.01;
            let mut c = BoutChain::design(&params(kind, lp), dt).expect("designs");
            assert!(c.step(7.0).abs() < 1e-12, "{kind:?}: no start-up transient");
            let mut y = 0.0;
            for n in 0..3000 {
                let x = 7.0 + if n > 100 { 2.0 * (n - 100) as f64 * dt } else { 0.0 };
                y = c.step(x);
            }
            assert_relative_eq!(y, 2.0, max_relative = 1e-6);
            assert!(c.delay() > 0.0 && c.delay() < 5.0, "{kind:?} delay {}", c.delay());
        }
    }

    #[test]
    fn fir_taps_are_odd() {
        assert_eq!(fir_taps(1.0, 0.01), 101);
        assert_eq!(fir_taps(1.0, 0.02), 51);
        assert_eq!(fir_taps(0.4, 0.1), 5);
        assert_eq!(fir_taps(0.001, 0.1), 3);
    }
}
