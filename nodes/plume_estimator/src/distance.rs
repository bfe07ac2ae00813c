//! Distance to the source from the bout features.
//!
//! Model (log-linear): `ln(d / 1 m) = intercept + rate_coef * bout_rate
//! [+ amplitude_coef * ln(bout_amplitude)]`. Bout rate falls with distance (the 2016 bout
//! work found bout frequency to predict source distance in a wind tunnel), so `rate_coef` is
//! negative; with no bouts the model gives `exp(intercept)`, the distance where contact fades.
//! The logarithm keeps distances positive and makes the residuals multiplicative, as the
//! scatter of plume statistics is. `distance_sigma = d * residual_std`: the calibration
//! residual std in ln units propagated to first order.

use crate::params::DistanceParams;

/// (distance [m], distance_sigma [m]) for the given features; NaN when the model is not
/// calibrated or an input it uses is unavailable (NaN rate; no positive amplitude when the
/// amplitude is used).
pub fn estimate(p: &DistanceParams, bout_rate: f64, bout_amplitude: f64) -> (f64, f64) {
    if !p.calibrated || !bout_rate.is_finite() {
        return (f64::NAN, f64::NAN);
    }
    let mut ln_d = p.intercept + p.rate_coef * bout_rate;
    if p.use_amplitude {
        if !(bout_amplitude.is_finite() && bout_amplitude > 0.0) {
            return (f64::NAN, f64::NAN);
        }
        ln_d += p.amplitude_coef * bout_amplitude.ln();
    }
    let d = ln_d.exp();
    if d.is_finite() { (d, d * p.residual_std) } else { (f64::NAN, f64::NAN) }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn uncalibrated_is_nan_and_the_model_is_log_linear() {
        let mut p = DistanceParams::default();
        assert!(estimate(&p, 1.0, 1.0).0.is_nan());
        p = DistanceParams { calibrated: true, intercept: 2.0f64.ln(), rate_coef: -0.5, residual_std: 0.1, ..p };
        let (d, s) = estimate(&p, 2.0, f64::NAN);
        assert_relative_eq!(d, 2.0 * (-1.0f64).exp(), max_relative = 1e-15);
        assert_relative_eq!(s, 0.1 * d, max_relative = 1e-15);
        assert_relative_eq!(estimate(&p, 0.0, f64::NAN).0, 2.0, max_relative = 1e-15);
        p.use_amplitude = true;
        p.amplitude_coef = -1.0;
        assert!(estimate(&p, 2.0, f64::NAN).0.is_nan(), "amplitude needed");
        assert_relative_eq!(estimate(&p, 2.0, 4.0).0, 2.0 * (-1.0f64).exp() / 4.0, max_relative = 1e-15);
    }
}
