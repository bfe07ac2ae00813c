//! A synthetic plume-contact generator for the tests (our own model, not a plume simulator):
//! filaments arrive as a Poisson process whose rate falls with distance, each a short square
//! pulse of concentration whose strength falls with distance too, seen through a MOX sensor:
//! power-law steady state `Rs/R0 = (1 + C/C_ref)^(-beta)` and an asymmetric first-order
//! response of the conductance (tau_rise while the steady state is above the state, tau_decay
//! otherwise; the "double first-order" model and the power law as summarised in
//! docs/references.md, MOX sensors; the time constants are the values quoted there as
//! unverified and only shape the test signal), plus multiplicative noise. Seeded, so
//! deterministic.

#![allow(dead_code)]

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp, LogNormal, Normal};

/// The generator's parameters.
#[derive(Debug, Clone, Copy)]
pub struct Train {
    /// Filament rate at the source [Hz].
    pub rate0: f64,
    /// Distance over which the filament rate falls by e [m].
    pub rate_length: f64,
    /// Median filament concentration at the source [ppm].
    pub conc0: f64,
    /// Distance over which the concentration falls by e [m].
    pub conc_length: f64,
    /// Clean air at the start [s].
    pub clean: f64,
    /// Sample period [s].
    pub dt: f64,
    /// Clean-air resistance [ohm].
    pub r0: f64,
    /// Rise / decay time constants of the conductance [s].
    pub tau_rise: f64,
    pub tau_decay: f64,
    /// Std of the multiplicative noise on the resistance.
    pub noise: f64,
}

impl Default for Train {
    fn default() -> Self {
        Train {
            rate0: 1.2,
            rate_length: 2.0,
            conc0: 20.0,
            conc_length: 3.0,
            clean: 8.0,
            dt: 0.01,
            r0: 50e3,
            tau_rise: 1.8,
            tau_decay: 11.1,
            noise: 0.002,
        }
    }
}

impl Train {
    /// True filament rate at `distance` [Hz].
    pub fn rate(&self, distance: f64) -> f64 {
        self.rate0 * (-distance / self.rate_length).exp()
    }

    /// Resistance samples [ohm] at `distance` for `duration` seconds, and the number of
    /// filaments that arrived.
    pub fn resistance(&self, distance: f64, duration: f64, seed: u64) -> (Vec<f64>, usize) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let n = (duration / self.dt).round() as usize;
        let mut conc = vec![0.0; n];
        let gap = Exp::new(self.rate(distance)).expect("rate > 0");
        let strength = LogNormal::new((self.conc0 * (-distance / self.conc_length).exp()).ln(), 0.5).expect("lognormal");
        let mut t = self.clean + gap.sample(&mut rng);
        let mut filaments = 0;
        while t < duration {
            let width = rng.random_range(0.05..0.25);
            let c = strength.sample(&mut rng);
            let (a, b) = ((t / self.dt) as usize, (((t + width) / self.dt) as usize).min(n));
            conc[a.min(n)..b].iter_mut().for_each(|v| *v += c);
            filaments += 1;
            t += gap.sample(&mut rng);
        }
        let noise = Normal::new(0.0, self.noise).expect("normal");
        let g0 = 1.0 / self.r0;
        let mut g = g0;
        let out = conc
            .iter()
            .map(|&c| {
                let g_ss = g0 * (1.0 + c).powf(0.5); // C_ref = 1 ppm, beta = 0.5
                let tau = if g_ss > g { self.tau_rise } else { self.tau_decay };
                g += (g_ss - g) * (1.0 - (-self.dt / tau).exp());
                (1.0 / g) * noise.sample(&mut rng).exp()
            })
            .collect();
        (out, filaments)
    }
}
