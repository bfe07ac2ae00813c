//! Distance to the source from the bout features.
//!
//! Model (log-linear): `ln(d / 1 m) = intercept + rate_coef * bout_rate
//! [+ amplitude_coef * ln(bout_amplitude)] [+ wind_coef * ln(U / 1 m/s)]`, U the mean true
//! wind speed over the window (bouts are carried by the air, so their rate at one distance
//! grows with the wind: the covariate keeps that from reading as distance). Bout rate falls with distance (the 2016 bout
//! work found bout frequency to predict source distance in a wind tunnel), so `rate_coef` is
//! negative; with no bouts the model gives `exp(intercept)`, the distance where contact fades.
//! The logarithm keeps distances positive and makes the residuals multiplicative, as the
//! scatter of plume statistics is.
//!
//! Uncertainty: `var(ln d) = residual_std^2 + rate_coef^2 var(rate)`, with the counting error
//! of the rate itself: bouts counted over a pooled valid time T are Poisson, so
//! `var(rate) = rate / T` (N ~ Poisson(lambda T), rate = N / T); `distance_sigma = d
//! sqrt(var(ln d))`, first-order propagation through `exp`.

use crate::params::DistanceParams;

/// (distance [m], distance_sigma [m]) for the given features (`valid`: the pooled valid time
/// the rate was counted over [s]; `wind_speed`: mean true wind speed [m/s], when known); NaN
/// when the model is not calibrated or an input it uses is unavailable (NaN rate or no valid
/// time; no positive amplitude or wind speed when they are used).
pub fn estimate(p: &DistanceParams, bout_rate: f64, bout_amplitude: f64, valid: f64, wind_speed: Option<f64>) -> (f64, f64) {
    if !p.calibrated || !bout_rate.is_finite() || !(valid > 0.0) {
        return (f64::NAN, f64::NAN);
    }
    let mut ln_d = p.intercept + p.rate_coef * bout_rate;
    if p.use_amplitude {
        if !(bout_amplitude.is_finite() && bout_amplitude > 0.0) {
            return (f64::NAN, f64::NAN);
        }
        ln_d += p.amplitude_coef * bout_amplitude.ln();
    }
    if p.use_wind {
        match wind_speed {
            Some(u) if u.is_finite() && u > 0.0 => ln_d += p.wind_coef * u.ln(),
            _ => return (f64::NAN, f64::NAN),
        }
    }
    let d = ln_d.exp();
    let var_ln = p.residual_std * p.residual_std + p.rate_coef * p.rate_coef * bout_rate.max(0.0) / valid;
    if d.is_finite() { (d, d * var_ln.sqrt()) } else { (f64::NAN, f64::NAN) }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn uncalibrated_is_nan_and_the_model_is_log_linear() {
        let mut p = DistanceParams::default();
        assert!(estimate(&p, 1.0, 1.0, 20.0, None).0.is_nan());
        p = DistanceParams { calibrated: true, intercept: 2.0f64.ln(), rate_coef: -0.5, residual_std: 0.1, ..p };
        // 40 bouts in 20 s: rate 2 Hz, var(rate) = 2 / 20 = 0.1 Hz^2 (Poisson), so
        // var(ln d) = 0.1^2 + 0.25 * 0.1 = 0.035.
        let (d, s) = estimate(&p, 2.0, f64::NAN, 20.0, None);
        assert_relative_eq!(d, 2.0 * (-1.0f64).exp(), max_relative = 1e-15);
        assert_relative_eq!(s, 0.035f64.sqrt() * d, max_relative = 1e-15);
        assert_relative_eq!(estimate(&p, 0.0, f64::NAN, 20.0, None).0, 2.0, max_relative = 1e-15);
        assert_relative_eq!(estimate(&p, 0.0, f64::NAN, 20.0, None).1, 0.2, max_relative = 1e-15);
        assert!(estimate(&p, 2.0, f64::NAN, 0.0, None).0.is_nan(), "no valid time");
        p.use_amplitude = true;
        p.amplitude_coef = -1.0;
        assert!(estimate(&p, 2.0, f64::NAN, 20.0, None).0.is_nan(), "amplitude needed");
        assert_relative_eq!(estimate(&p, 2.0, 4.0, 20.0, None).0, 2.0 * (-1.0f64).exp() / 4.0, max_relative = 1e-15);
        p.use_wind = true;
        p.wind_coef = -1.0;
        assert!(estimate(&p, 2.0, 4.0, 20.0, None).0.is_nan(), "wind needed");
        assert_relative_eq!(estimate(&p, 2.0, 4.0, 20.0, Some(0.5)).0, 2.0 * (-1.0f64).exp() / 4.0 / 0.5, max_relative = 1e-15);
    }

    /// Monte Carlo check of the counting term: windows of Poisson bout counts (rate 1.5 Hz,
    /// 30 s) through the model; the spread of ln d matches rate_coef * sqrt(rate / T).
    #[test]
    fn counting_error_matches_poisson_draws() {
        use rand::{Rng, SeedableRng};
        let p = DistanceParams { calibrated: true, intercept: 1.0, rate_coef: -0.8, ..DistanceParams::default() };
        let (lambda, t) = (1.5, 30.0);
        let mut rng = rand::rngs::StdRng::seed_from_u64(7);
        let draws: Vec<f64> = (0..20_000)
            .map(|_| {
                // Poisson(lambda t) as the number of unit-rate exponential gaps within lambda t.
                let (mut n, mut acc) = (0u32, 0.0);
                loop {
                    acc += -(1.0 - rng.random::<f64>()).ln();
                    if acc > lambda * t {
                        break;
                    }
                    n += 1;
                }
                estimate(&p, f64::from(n) / t, f64::NAN, t, None).0.ln()
            })
            .collect();
        let m = draws.iter().sum::<f64>() / draws.len() as f64;
        let sd = (draws.iter().map(|x| (x - m).powi(2)).sum::<f64>() / draws.len() as f64).sqrt();
        let (_, sigma) = estimate(&p, lambda, f64::NAN, t, None);
        let d = estimate(&p, lambda, f64::NAN, t, None).0;
        assert_relative_eq!(sd, sigma / d, max_relative = 0.03);
    }
}
