//! The encounter model: the mean rate of odor hits at the robot's position r for a source at
//! r0, in two dimensions, as used by infotaxis (Vergassola, Villermaux & Shraiman, Nature 445,
//! 406-409, 2007; written here from memory of the paper):
//!
//! R(r | r0) = R / ln(lambda / a) * exp(s V / (2 D)) * K0(|r - r0| / lambda),
//! lambda = sqrt(D tau / (1 + V^2 tau / (4 D))),
//!
//! with D the effective diffusivity [m^2/s], tau the lifetime of the odor patches [s], R the
//! source's emission rate [1/s], a the detector radius [m], V the mean wind speed [m/s] and
//! s = (r - r0) . u the robot's distance downwind of the source along the wind direction u (the
//! paper's wind blows along -y, so s = y0 - y there).
//!
//! Ours, not the paper's: distances below `a` count as `a` (the formula describes a detector
//! outside the source), and ln(lambda / a) is floored at ln 2 so that the rate stays positive
//! when strong wind shrinks lambda towards `a`.

use crate::params::ModelParams;

/// The floor of ln(lambda / a).
pub const MIN_LOG_RATIO: f64 = std::f64::consts::LN_2;

/// The model for one update: everything that does not depend on the cell.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Kernel {
    /// ln of the expected hits in the update at unit exp and K0 factors: ln(dt R / ln(lambda/a)).
    pub ln_scale: f64,
    /// V / (2 D) [1/m], the weight of the downwind distance.
    pub beta: f64,
    /// 1 / lambda [1/m].
    pub inv_lambda: f64,
    /// lambda [m].
    pub lambda: f64,
    /// Detector radius a [m] (shorter distances count as a).
    pub min_distance: f64,
    /// Unit vector the air goes to (odom); (1, 0) when the wind is still.
    pub downwind: [f64; 2],
}

impl Kernel {
    /// The model for wind `wind` [m/s, odom, pointing where the air goes to] over `dt` [s].
    pub fn new(m: &ModelParams, wind: [f64; 2], dt: f64) -> Kernel {
        let (d, tau) = (m.diffusivity, m.lifetime);
        let v = wind[0].hypot(wind[1]);
        let downwind = if v > 0.0 { [wind[0] / v, wind[1] / v] } else { [1.0, 0.0] };
        let lambda = (d * tau / (1.0 + v * v * tau / (4.0 * d))).sqrt();
        let log_ratio = (lambda / m.detector_radius).ln().max(MIN_LOG_RATIO);
        Kernel {
            ln_scale: (dt * m.emission_rate / log_ratio).ln(),
            beta: v / (2.0 * d),
            inv_lambda: 1.0 / lambda,
            lambda,
            min_distance: m.detector_radius,
            downwind,
        }
    }

    /// ln of the expected hits over the update for the robot displaced by (dx, dy) = r - r0
    /// from the source, with ln K0 from `ln_k0`.
    #[inline]
    pub fn ln_mean_hits(&self, dx: f64, dy: f64, ln_k0: impl Fn(f64) -> f64) -> f64 {
        let d = (dx * dx + dy * dy).sqrt().max(self.min_distance);
        let s = dx * self.downwind[0] + dy * self.downwind[1];
        self.ln_scale + self.beta * s + ln_k0(d * self.inv_lambda)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn model() -> ModelParams {
        ModelParams { diffusivity: 0.2, lifetime: 20.0, emission_rate: 4.0, detector_radius: 0.05 }
    }

    #[test]
    fn lambda_and_weights_follow_the_formula() {
        let k = Kernel::new(&model(), [0.0, -0.8], 0.5);
        // lambda = sqrt(0.2 * 20 / (1 + 0.64 * 20 / 0.8)) = sqrt(4 / 17).
        assert!((k.lambda - (4.0f64 / 17.0).sqrt()).abs() < 1e-15);
        assert!((k.beta - 2.0).abs() < 1e-15);
        assert_eq!(k.downwind, [0.0, -1.0]);
        let expected = (0.5 * 4.0 / ((4.0f64 / 17.0).sqrt() / 0.05).ln()).ln();
        assert!((k.ln_scale - expected).abs() < 1e-14);
    }

    #[test]
    fn more_hits_downwind_than_upwind_at_the_same_distance() {
        let k = Kernel::new(&model(), [1.0, 0.0], 1.0);
        let down = k.ln_mean_hits(2.0, 0.0, crate::k0::ln_k0);
        let up = k.ln_mean_hits(-2.0, 0.0, crate::k0::ln_k0);
        assert!((down - up - 2.0 * 2.0 * k.beta).abs() < 1e-12);
    }

    #[test]
    fn the_log_ratio_floor_keeps_the_rate_positive_in_strong_wind() {
        let k = Kernel::new(&model(), [30.0, 0.0], 1.0);
        assert!(k.lambda < 2.0 * 0.05);
        assert!((k.ln_scale - (4.0 / MIN_LOG_RATIO).ln()).abs() < 1e-14);
    }
}
