//! A synthetic recording of our own for the bearing decoder's tests: odor filaments sweep a
//! sensor array as plane fronts from a known bearing, each sensor's signal is a sum of pulses
//! plus white noise at a given signal-to-noise ratio, and a test-local encoder (first-order
//! low-pass with time constant `smoothing`, then a Schmitt trigger) turns each signal into
//! rising/falling events with interpolated stamps (the shape of the event encoder's output).
//! Seeded, so every run is the same.
//!
//! Model (ours, for testing only): filament k arrives at the array centre at T_k (Poisson at
//! `filament_rate`, at least `min_gap` apart) from direction theta + N(0, meander) and reaches
//! sensor i at T_k + p_i . s_k, s_k = -u(theta_k) / U (docs/references.md "Bilateral
//! direction"); its pulse at sensor i is A_k (1 + N(0, amp_jitter)) g(t - t_ik), with the
//! alpha function g(t) = (t / tau) exp(1 - t / tau) (peak 1 at t = tau). Noise sigma is
//! 1 / snr (the mean pulse height is 1).

#![allow(dead_code)]

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp, Normal};
use sillage_core::msg::{ChemSample, Header, OdorEvent, OdorEventArray, Time, Vector3, Vector3Stamped};
use sillage_core::Nanos;

/// One synthetic recording's settings.
#[derive(Debug, Clone)]
pub struct Scenario {
    /// Truth: direction the odor comes from [rad], base_link.
    pub bearing: f64,
    /// Sensor positions [m] (x, y), base_link.
    pub sensors: Vec<(f64, f64)>,
    /// Air speed [m/s].
    pub wind_speed: f64,
    /// Pulse height over noise sigma.
    pub snr: f64,
    /// Recording length [s].
    pub duration: f64,
    /// Mean filament rate [Hz].
    pub filament_rate: f64,
    /// Least time between filaments [s].
    pub min_gap: f64,
    /// Spread of each filament's direction about the truth [rad].
    pub meander: f64,
    /// Relative spread of a filament's height between sensors.
    pub amp_jitter: f64,
    /// Pulse time constant [s].
    pub tau: f64,
    /// Sampling rate [Hz].
    pub fs: f64,
    /// Schmitt thresholds (rise above `hi`, fall below `lo`) [signal units].
    pub hi: f64,
    /// Lower Schmitt threshold.
    pub lo: f64,
    /// Time constant of the encoder's low-pass [s] (0 = none).
    pub smoothing: f64,
    /// Whether to emit the raw signals on `chem` too (for the amplitude cue).
    pub chem: bool,
    /// Seed.
    pub seed: u64,
}

impl Scenario {
    /// A left/right pair at `spacing`, 0.5 m/s wind, 1.5 filaments/s, 3 deg meander.
    pub fn pair(bearing: f64, spacing: f64, snr: f64, seed: u64) -> Scenario {
        Scenario {
            bearing,
            sensors: vec![(0.0, spacing / 2.0), (0.0, -spacing / 2.0)],
            wind_speed: 0.5,
            snr,
            duration: 20.0,
            filament_rate: 1.5,
            min_gap: 0.3,
            meander: 3f64.to_radians(),
            amp_jitter: 0.1,
            tau: 0.1,
            fs: 100.0,
            hi: 0.3,
            lo: 0.15,
            smoothing: 0.03,
            chem: false,
            seed,
        }
    }
}

/// One input message for the decoder, at its delivery time [ns].
#[derive(Debug, Clone)]
pub enum Input {
    /// On `odor_events`.
    Events(Nanos, OdorEventArray),
    /// On `wind`.
    Wind(Nanos, Vector3Stamped),
    /// On `chem` (raw signal, RELATIVE).
    Chem(Nanos, ChemSample),
}

/// The recording: time-ordered inputs.
pub fn record(s: &Scenario) -> Vec<Input> {
    let mut rng = ChaCha8Rng::seed_from_u64(s.seed);
    let gaps = Exp::new(s.filament_rate).expect("rate > 0");
    let dir = Normal::new(0.0, s.meander.max(1e-12)).expect("sigma > 0");
    let unit = Normal::new(0.0, 1.0).expect("sigma > 0");
    // Filaments: (arrival at the centre, direction, height per sensor).
    let mut filaments: Vec<(f64, f64, Vec<f64>)> = Vec::new();
    let mut t = 0.2;
    loop {
        t += s.min_gap + gaps.sample(&mut rng);
        if t > s.duration {
            break;
        }
        let theta = s.bearing + dir.sample(&mut rng);
        let height: f64 = rng.random_range(0.7..1.3);
        let heights = s.sensors.iter().map(|_| height * (1.0 + s.amp_jitter * unit.sample(&mut rng))).collect();
        filaments.push((t, theta, heights));
    }
    let n = (s.duration * s.fs) as usize;
    let noise = 1.0 / s.snr;
    let mut high = vec![false; s.sensors.len()];
    let mut prev = vec![0.0f64; s.sensors.len()];
    let mut filtered = vec![0.0f64; s.sensors.len()];
    let alpha = if s.smoothing > 0.0 { 1.0 - (-1.0 / (s.fs * s.smoothing)).exp() } else { 1.0 };
    let mut out = Vec::new();
    let names: Vec<String> = (0..s.sensors.len()).map(|i| format!("s{i}")).collect();
    for k in 0..n {
        let tk = k as f64 / s.fs;
        let stamp = (tk * 1e9).round() as Nanos;
        let mut events = Vec::new();
        let mut values = Vec::with_capacity(s.sensors.len());
        for (i, &(px, py)) in s.sensors.iter().enumerate() {
            let mut x = noise * unit.sample(&mut rng);
            for (t0, theta, h) in &filaments {
                let delay = -(px * theta.cos() + py * theta.sin()) / s.wind_speed;
                let dt = tk - (t0 + delay);
                if dt > 0.0 && dt < 12.0 * s.tau {
                    x += h[i] * (dt / s.tau) * (1.0 - dt / s.tau).exp();
                }
            }
            values.push(x);
            filtered[i] += alpha * (x - filtered[i]);
            let x = filtered[i];
            let crossing = |level: f64| {
                let frac = (level - prev[i]) / (x - prev[i]);
                Time::from_nanos(((tk - (1.0 - frac) / s.fs) * 1e9).round() as Nanos)
            };
            if k > 0 && !high[i] && x > s.hi && prev[i] <= s.hi {
                events.push(OdorEvent { stamp: crossing(s.hi), channel: i as u16, polarity: 1, level: s.hi });
                high[i] = true;
            } else if k > 0 && high[i] && x < s.lo && prev[i] >= s.lo {
                events.push(OdorEvent { stamp: crossing(s.lo), channel: i as u16, polarity: -1, level: s.lo });
                high[i] = false;
            }
            prev[i] = x;
        }
        if s.chem {
            out.push(Input::Chem(
                stamp,
                ChemSample { header: Header::new(stamp, "chem"), channels: names.clone(), values, quantity: ChemSample::RELATIVE },
            ));
        }
        if !events.is_empty() {
            out.push(Input::Events(stamp, OdorEventArray { header: Header::new(stamp, ""), events }));
        }
        if k % 10 == 0 {
            let w = -s.wind_speed;
            let vector = Vector3 { x: w * s.bearing.cos(), y: w * s.bearing.sin(), z: 0.0 };
            out.push(Input::Wind(stamp, Vector3Stamped { header: Header::new(stamp, "base_link"), vector }));
        }
    }
    out
}

/// Sensor names of a scenario (`s0`, `s1`, ...), as in its chem samples.
pub fn names(s: &Scenario) -> Vec<String> {
    (0..s.sensors.len()).map(|i| format!("s{i}")).collect()
}

/// Median and 90th percentile (nearest rank) of `v`.
pub fn median_p90(v: &mut [f64]) -> (f64, f64) {
    v.sort_by(f64::total_cmp);
    let rank = |q: f64| v[((q * v.len() as f64).ceil() as usize).clamp(1, v.len()) - 1];
    (rank(0.5), rank(0.9))
}
