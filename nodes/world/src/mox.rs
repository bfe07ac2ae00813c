//! Metal-oxide (MOX) gas sensor model producing a resistance [ohm].
//!
//! Contract:
//! - static response: the smooth power law Rs/R0 = (1 + C/C0)^(-beta), the form that joins
//!   clean air (Rs = R0 at C = 0) to the straight line of slope -beta in log Rs vs log C
//!   above C0 (power law of Clifford and Tuma, Sensors and Actuators 3, 1982-83; the
//!   "1 +" form as commonly used for the whole range, from memory). C0 [g/m^3] is the
//!   concentration where the response has grown by 2^beta.
//! - unit spread (per sensor, seeded, [`MoxParams::draw_unit`]): R0 and both time constants
//!   log-normal around their nominal values, beta normal; magnitudes are common practice
//!   for uncalibrated units of one type (datasheets quote R0 over a range of several times).
//! - baseline: R0(t) = R0 exp(drift t + d(t)), drift drawn per unit ~ N(0, drift_per_hour /
//!   3600 s), d a slow coloured noise standing for temperature and humidity (std
//!   `disturbance_std`, correlation time `disturbance_time`; magnitudes from memory: a few
//!   percent of R0 over minutes).
//! - dynamics on the response r = R0/Rs (relative conductance, >= 1): asymmetric first
//!   order, dr/dt = (r_target - r) / tau with tau = tau_rise while r_target > r and
//!   tau_decay otherwise ("double first-order" model, Sensors 12(10):13664-13680, 2012);
//!   integrated exactly for a concentration held constant over each step.
//! - readout: load-resistor divider V = Vc RL / (Rs + RL), additive Gaussian voltage noise,
//!   ADC quantisation to `adc_bits` over [0, Vc], then Rs = (Vc / V - 1) RL (common practice,
//!   manufacturers' application notes). Codes are clamped to [1, 2^bits - 1] so the
//!   resistance stays finite and positive.

use crate::noise::ColouredNoise;
use rand::Rng;
use rand_distr::StandardNormal;

/// MOX sensor parameters (scenario key `sensors.mox`; defaults in brackets).
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct MoxParams {
    /// Clean-air resistance R0 [ohm], > 0. [default 50000]
    pub r0: f64,
    /// Threshold / reference concentration C0 [g/m^3], > 0. [default 1e-4]
    pub c0: f64,
    /// Power-law exponent beta (> 0, typically 0.3-0.8). [default 0.5]
    pub beta: f64,
    /// Time constant while the response rises [s], > 0. [default 1.8]
    pub tau_rise: f64,
    /// Time constant while the response decays [s], > 0. [default 11.1]
    pub tau_decay: f64,
    /// Load resistor RL [ohm], > 0. [default 10000]
    pub load_resistance: f64,
    /// Circuit supply voltage Vc [V], > 0. [default 5]
    pub supply_voltage: f64,
    /// ADC resolution [bits]; 0 disables quantisation. [default 12]
    pub adc_bits: u32,
    /// Standard deviation of the additive noise on the load voltage [V]. [default 0.002]
    pub noise_std: f64,
    /// Relative (log) standard deviation of R0 between units. [default 0.15]
    pub r0_spread: f64,
    /// Relative standard deviation of beta between units. [default 0.1]
    pub beta_spread: f64,
    /// Relative (log) standard deviation of the time constants between units. [default 0.15]
    pub tau_spread: f64,
    /// Standard deviation of the baseline drift rate between units [1/h] (0.02: a unit
    /// drifts by about 2 % of R0 per hour). [default 0.02]
    pub drift_per_hour: f64,
    /// Standard deviation of the slow temperature/humidity disturbance of ln R0. [default 0.02]
    pub disturbance_std: f64,
    /// Correlation time of that disturbance [s], > 0. [default 120]
    pub disturbance_time: f64,
    /// Time constant of the fast sensor type, rise and decay [s], > 0. [default 0.1]
    pub fast_tau: f64,
}

impl Default for MoxParams {
    fn default() -> Self {
        Self {
            r0: 50_000.0,
            c0: 1e-4,
            beta: 0.5,
            tau_rise: 1.8,
            tau_decay: 11.1,
            load_resistance: 10_000.0,
            supply_voltage: 5.0,
            adc_bits: 12,
            noise_std: 0.002,
            r0_spread: 0.15,
            beta_spread: 0.1,
            tau_spread: 0.15,
            drift_per_hour: 0.02,
            disturbance_std: 0.02,
            disturbance_time: 120.0,
            fast_tau: 0.1,
        }
    }
}

impl MoxParams {
    /// Equilibrium response r = R0/Rs = (1 + C/C0)^beta to a constant concentration `c`
    /// [g/m^3] (negative values count as clean air).
    pub fn target_response(&self, c: f64) -> f64 {
        (1.0 + c.max(0.0) / self.c0).powf(self.beta)
    }

    /// The same parameters without unit spread, drift or disturbance (an ideal unit).
    pub fn ideal(&self) -> Self {
        Self {
            r0_spread: 0.0,
            beta_spread: 0.0,
            tau_spread: 0.0,
            drift_per_hour: 0.0,
            disturbance_std: 0.0,
            ..self.clone()
        }
    }

    /// One unit drawn around these nominal values: R0 exp(s_r n1), beta (1 + s_b n2) (at
    /// least 0.05), both taus exp(s_t n3) (one draw: a unit is slow or fast as a whole), and
    /// its drift rate [1/s]; the spreads of the result are zero.
    pub fn draw_unit<R: Rng + ?Sized>(&self, rng: &mut R) -> (Self, f64) {
        let mut n = || rng.sample::<f64, _>(StandardNormal);
        let (n1, n2, n3, n4) = (n(), n(), n(), n());
        let unit = Self {
            r0: self.r0 * (self.r0_spread * n1).exp(),
            beta: (self.beta * (1.0 + self.beta_spread * n2)).max(0.05),
            tau_rise: self.tau_rise * (self.tau_spread * n3).exp(),
            tau_decay: self.tau_decay * (self.tau_spread * n3).exp(),
            r0_spread: 0.0,
            beta_spread: 0.0,
            tau_spread: 0.0,
            ..self.clone()
        };
        (unit, self.drift_per_hour / 3600.0 * n4)
    }

    /// Equilibrium (noise-free) resistance [ohm] for a constant concentration `c` [g/m^3].
    pub fn steady_resistance(&self, c: f64) -> f64 {
        self.r0 / self.target_response(c)
    }
}

/// State of one MOX sensor.
#[derive(Debug, Clone, PartialEq)]
pub struct MoxSensor {
    params: MoxParams,
    response: f64,
    /// Baseline drift rate [1/s].
    drift: f64,
    /// Slow disturbance of ln R0.
    disturbance: ColouredNoise,
    /// Time since the start [s].
    age: f64,
}

impl MoxSensor {
    /// A sensor equilibrated in clean air (Rs = R0), without drift or disturbance (the
    /// spread fields of `params` are ignored: draw a unit with [`MoxParams::draw_unit`]).
    pub fn new(params: MoxParams) -> Self {
        Self {
            params,
            response: 1.0,
            drift: 0.0,
            disturbance: ColouredNoise::zero(),
            age: 0.0,
        }
    }

    /// A drawn unit with its drift rate [1/s] and its disturbance started from `rng`.
    pub fn unit<R: Rng + ?Sized>(params: MoxParams, drift: f64, rng: &mut R) -> Self {
        let disturbance = ColouredNoise::new(params.disturbance_std, params.disturbance_time, rng);
        Self {
            params,
            response: 1.0,
            drift,
            disturbance,
            age: 0.0,
        }
    }

    /// Advances the slow baseline processes (drift and disturbance) by `dt` [s].
    pub fn advance_baseline<R: Rng + ?Sized>(&mut self, dt: f64, rng: &mut R) {
        self.age += dt.max(0.0);
        self.disturbance.advance(dt, rng);
    }

    /// Clean-air resistance of the unit now [ohm] (nominal R0 with drift and disturbance).
    pub fn baseline(&self) -> f64 {
        self.params.r0 * (self.drift * self.age + self.disturbance.value()).exp()
    }

    /// Parameters.
    pub fn params(&self) -> &MoxParams {
        &self.params
    }

    /// Current response r = R0/Rs (dimensionless, >= 1).
    pub fn response(&self) -> f64 {
        self.response
    }

    /// Noise-free sensing resistance [ohm].
    pub fn resistance(&self) -> f64 {
        self.baseline() / self.response
    }

    /// Advances the dynamics by `dt` [s] with concentration `c` [g/m^3] at the sensor.
    pub fn update(&mut self, c: f64, dt: f64) {
        let target = self.params.target_response(c);
        let tau = if target > self.response {
            self.params.tau_rise
        } else {
            self.params.tau_decay
        };
        self.response += (target - self.response) * (1.0 - (-dt / tau).exp());
    }

    /// One reading [ohm] through the load-resistor circuit, with noise and quantisation.
    pub fn read<R: Rng + ?Sized>(&self, rng: &mut R) -> f64 {
        let p = &self.params;
        let rs = self.resistance();
        let mut v = p.supply_voltage * p.load_resistance / (rs + p.load_resistance);
        if p.noise_std > 0.0 {
            v += p.noise_std * rng.sample::<f64, _>(StandardNormal);
        }
        if p.adc_bits > 0 {
            let full = ((1u64 << p.adc_bits.min(52)) - 1) as f64;
            let code = (v / p.supply_voltage * full).round().clamp(1.0, full - 1.0);
            v = code / full * p.supply_voltage;
        } else {
            let eps = p.supply_voltage * 1e-12;
            v = v.clamp(eps, p.supply_voltage - eps);
        }
        (p.supply_voltage / v - 1.0) * p.load_resistance
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    /// Defaults (beta 0.5, tau 1.8 / 11.1 s, R0 50 kohm, RL 10 kohm, 5 V) without noise, ADC,
    /// spread or drift.
    fn params() -> MoxParams {
        MoxParams {
            adc_bits: 0,
            noise_std: 0.0,
            ..MoxParams::default()
        }
        .ideal()
    }

    /// Smooth power law with beta = 0.5: at C >> C0 quadrupling C halves Rs (log-log slope
    /// -beta, Clifford and Tuma, Sensors and Actuators 3, 1982-83); Rs = R0 in clean air and
    /// Rs = R0 / sqrt 2 at C = C0 (the "1 +" form).
    #[test]
    fn power_law() {
        let p = params();
        let r1 = p.steady_resistance(1.0);
        let r4 = p.steady_resistance(4.0);
        assert_relative_eq!(r4 / r1, 0.5, max_relative = 1e-4);
        assert_relative_eq!(p.steady_resistance(0.0), p.r0, max_relative = 1e-12);
        assert_relative_eq!(
            p.steady_resistance(p.c0),
            p.r0 / 2f64.sqrt(),
            max_relative = 1e-12
        );
        let g = |c: f64| 1.0 / p.steady_resistance(c);
        let slope = (g(10.0).ln() - g(1.0).ln()) / 10f64.ln();
        assert_relative_eq!(slope, 0.5, max_relative = 1e-4);
        // Smooth: no knee, the response grows from the first trace of gas.
        assert!(p.steady_resistance(1e-6) < p.r0);
    }

    /// Units drawn from one nominal set differ, each by a few tens of percent at most, and
    /// an ideal set gives back the nominal values.
    #[test]
    fn unit_spread_and_baseline() {
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let nominal = MoxParams::default();
        let units: Vec<(MoxParams, f64)> = (0..400).map(|_| nominal.draw_unit(&mut rng)).collect();
        let r0s: Vec<f64> = units.iter().map(|u| (u.0.r0 / nominal.r0).ln()).collect();
        let sd = (r0s.iter().map(|x| x * x).sum::<f64>() / r0s.len() as f64).sqrt();
        assert!((sd - 0.15).abs() < 0.02, "ln R0 spread {sd}");
        assert!(units.iter().all(|u| u.0.beta >= 0.05 && u.0.tau_rise > 0.0));
        let (ideal, drift) = nominal.ideal().draw_unit(&mut rng);
        assert_eq!(
            (ideal.r0, ideal.beta, ideal.tau_rise, drift),
            (nominal.r0, nominal.beta, nominal.tau_rise, 0.0)
        );
        // Drift: after one hour a unit drawn with rate d sits at R0 exp(d 3600 s).
        let mut s = MoxSensor::unit(ideal.clone(), 1e-5, &mut rng);
        for _ in 0..3600 {
            s.advance_baseline(1.0, &mut rng);
        }
        assert_relative_eq!(
            s.baseline(),
            ideal.r0 * (0.036f64).exp(),
            max_relative = 1e-9
        );
    }

    /// Times at which a step response crosses `levels` (fractions of the final change),
    /// found by linear interpolation between samples.
    fn crossing_times(tau_pick: &str, levels: &[f64]) -> Vec<f64> {
        let p = params();
        let mut s = MoxSensor::new(p.clone());
        let c_high = 1e-2;
        let (start, end) = if tau_pick == "rise" {
            (1.0, p.target_response(c_high))
        } else {
            s.response = p.target_response(c_high);
            (p.target_response(c_high), 1.0)
        };
        let c = if tau_pick == "rise" { c_high } else { 0.0 };
        let dt = 1e-3;
        let mut out = vec![f64::NAN; levels.len()];
        let mut prev = 0.0;
        for k in 1..200_000 {
            s.update(c, dt);
            let frac = (s.response() - start) / (end - start);
            for (o, &l) in out.iter_mut().zip(levels) {
                if o.is_nan() && frac >= l {
                    *o = (k - 1) as f64 * dt + dt * (l - prev) / (frac - prev);
                }
            }
            prev = frac;
        }
        out
    }

    /// First-order step response, analytic: t63 = tau, t90 = tau ln 10, 10-90 % rise =
    /// tau ln 9; tau = 1.8 s gives 4.145 s and 3.955 s (project references, MOX dynamics;
    /// Sensors 12(10):13664-13680, 2012 for the double first-order model).
    #[test]
    fn step_response_times() {
        let levels = [0.1, 1.0 - (-1.0f64).exp(), 0.9];
        let rise = crossing_times("rise", &levels);
        println!(
            "rise: t10 {:.4} s, t63 {:.4} s, t90 {:.4} s, 10-90 {:.4} s",
            rise[0],
            rise[1],
            rise[2],
            rise[2] - rise[0]
        );
        assert!((rise[1] - 1.8).abs() < 1e-3);
        assert!((rise[2] - 4.145).abs() < 1e-3);
        assert!((rise[2] - rise[0] - 3.955).abs() < 1e-3);
        let decay = crossing_times("decay", &levels);
        println!(
            "decay: t63 {:.4} s, t90 {:.4} s (tau_decay 11.1 s)",
            decay[1], decay[2]
        );
        assert!((decay[1] - 11.1).abs() < 1e-3);
        assert!((decay[2] - 11.1 * 10f64.ln()).abs() < 1e-3);
    }

    /// The exact update does not depend on the step size for a held input.
    #[test]
    fn update_is_step_size_independent() {
        let mut a = MoxSensor::new(params());
        let mut b = MoxSensor::new(params());
        a.update(5e-3, 2.0);
        for _ in 0..2000 {
            b.update(5e-3, 1e-3);
        }
        assert_relative_eq!(a.response(), b.response(), max_relative = 1e-9);
    }

    #[test]
    fn readout_round_trip_and_quantisation() {
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let s = MoxSensor::new(params());
        assert_relative_eq!(s.read(&mut rng), 50_000.0, max_relative = 1e-9);
        let q = MoxSensor::new(MoxParams {
            adc_bits: 10,
            ..params()
        });
        let r = q.read(&mut rng);
        // V = 5 * 10k / 60k = 0.8333 V -> code round(0.16667 * 1023) = 171 -> Rs = (1023/171 - 1) 10k.
        assert_relative_eq!(r, (1023.0 / 171.0 - 1.0) * 10_000.0, max_relative = 1e-12);
        let noisy = MoxSensor::new(MoxParams {
            noise_std: 0.01,
            ..params()
        });
        let reads: Vec<f64> = (0..2000).map(|_| noisy.read(&mut rng)).collect();
        let mean = reads.iter().sum::<f64>() / reads.len() as f64;
        // dRs/dV = -Vc RL / V^2 = -72 kohm/V at 0.8333 V: 0.01 V noise -> about 720 ohm std.
        let std =
            (reads.iter().map(|r| (r - mean).powi(2)).sum::<f64>() / reads.len() as f64).sqrt();
        assert!((std - 720.0).abs() < 60.0, "std {std}");
        assert!((mean - 50_000.0).abs() < 60.0, "mean {mean}");
    }
}
