//! The source posterior as the arbiter uses it: a mean and a planar covariance (from the
//! `source_posterior` input, PoseWithCovarianceStamped in odom), optional.
//!
//! Contract:
//! - a posterior is accepted when its mean is finite and its planar covariance (x, y block of
//!   the row-major 6x6 pose covariance) is finite, symmetric within 1e-9 relative, and
//!   positive semi-definite; anything else is refused with the field named;
//! - it is used only while younger than `declare.posterior.max_age` and with
//!   `cues.use_posterior`;
//! - [`Posterior::mass_within`] is a lower bound of the probability that the source lies
//!   within `r` of the mean under the Gaussian approximation: the circular Gaussian of the
//!   largest eigenvalue `l` puts `1 - exp(-r^2 / (2 l))` in that disc (Rayleigh distribution
//!   CDF), and a Gaussian whose covariance is smaller (in the Loewner order) puts more there
//!   (Anderson's theorem on symmetric unimodal densities, from memory);
//! - the declaration by this rule: the mass within `declare.posterior.radius` is at least
//!   `declare.posterior.min_mass`, the robot is within `declare.posterior.near` of the mean,
//!   and it has had at least one contact; the estimate is the mean.

use crate::geometry::Vec2;
use crate::params::PosteriorDeclareParams;
use sillage_core::time::nanos;
use sillage_core::Nanos;

/// A source posterior.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Posterior {
    /// Arrival time [ns].
    pub at: Nanos,
    /// Mean [m, odom].
    pub mean: Vec2,
    /// Covariance `[xx, xy, yy]` [m^2].
    pub cov: [f64; 3],
}

/// Why a posterior was refused.
#[derive(Debug, Clone, PartialEq)]
pub struct Refused {
    /// The field.
    pub field: &'static str,
    /// Why.
    pub reason: String,
}

impl Posterior {
    /// Checks and builds a posterior from a mean and the row-major 6x6 pose covariance.
    pub fn from_parts(at: Nanos, x: f64, y: f64, cov6: &[f64; 36]) -> Result<Posterior, Refused> {
        if !(x.is_finite() && y.is_finite()) {
            return Err(Refused { field: "pose.pose.position", reason: format!("({x}, {y}) is not finite") });
        }
        let (xx, xy, yx, yy) = (cov6[0], cov6[1], cov6[6], cov6[7]);
        if ![xx, xy, yx, yy].iter().all(|v| v.is_finite()) {
            return Err(Refused { field: "pose.covariance", reason: "the x/y block is not finite".into() });
        }
        let scale = xx.abs().max(yy.abs()).max(f64::MIN_POSITIVE);
        if (xy - yx).abs() > 1e-9 * scale {
            return Err(Refused { field: "pose.covariance", reason: format!("not symmetric: [0][1] = {xy}, [1][0] = {yx}") });
        }
        let p = Posterior { at, mean: Vec2::new(x, y), cov: [xx, xy, yy] };
        if xx < 0.0 || yy < 0.0 || p.eigen_max() < 0.0 || xx * yy - xy * xy < -1e-12 * scale * scale {
            return Err(Refused { field: "pose.covariance", reason: format!("not positive semi-definite: xx {xx}, xy {xy}, yy {yy}") });
        }
        Ok(p)
    }

    /// The largest eigenvalue of the planar covariance [m^2].
    pub fn eigen_max(&self) -> f64 {
        let [a, b, c] = self.cov;
        let half_tr = 0.5 * (a + c);
        let d = (0.25 * (a - c) * (a - c) + b * b).sqrt();
        half_tr + d
    }

    /// Lower bound of the mass within `r` [m] of the mean (see the module contract).
    pub fn mass_within(&self, r: f64) -> f64 {
        let l = self.eigen_max();
        if l <= 0.0 {
            return 1.0;
        }
        1.0 - (-r * r / (2.0 * l)).exp()
    }

    /// Whether it is fresh at `now`.
    pub fn fresh(&self, now: Nanos, p: &PosteriorDeclareParams) -> bool {
        now.saturating_sub(self.at) <= nanos(p.max_age)
    }

    /// The declaration by this rule for a robot at `at` with `hits` contacts so far.
    pub fn ready(&self, at: Vec2, hits: u64, p: &PosteriorDeclareParams) -> Option<(Vec2, String)> {
        let mass = self.mass_within(p.radius);
        let dist = at.distance(self.mean);
        (p.enabled && hits > 0 && mass >= p.min_mass && dist <= p.near).then(|| {
            (
                self.mean,
                format!(
                    "source declared: posterior mass {mass:.2} >= {:.2} within {:.2} m of ({:.2}, {:.2}), robot {dist:.2} m from it",
                    p.min_mass, p.radius, self.mean.x, self.mean.y
                ),
            )
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    fn cov(xx: f64, xy: f64, yy: f64) -> [f64; 36] {
        let mut c = [0.0; 36];
        c[0] = xx;
        c[1] = xy;
        c[6] = xy;
        c[7] = yy;
        c
    }

    #[test]
    fn mass_is_the_rayleigh_cdf_of_the_largest_axis() {
        // Isotropic sigma = 0.5 m: P(r < sigma) = 1 - exp(-1/2) = 0.3935 (Rayleigh CDF).
        let p = Posterior::from_parts(0, 1.0, 2.0, &cov(0.25, 0.0, 0.25)).expect("valid");
        assert_abs_diff_eq!(p.mass_within(0.5), 1.0 - (-0.5f64).exp(), epsilon = 1e-12);
        // A rotated ellipse with axes 0.09 and 0.01 m^2: the largest eigenvalue is 0.09.
        let (l1, l2, t) = (0.09, 0.01, 0.7f64);
        let (c, s) = (t.cos(), t.sin());
        let e = Posterior::from_parts(0, 0.0, 0.0, &cov(l1 * c * c + l2 * s * s, (l1 - l2) * c * s, l1 * s * s + l2 * c * c)).expect("valid");
        assert_abs_diff_eq!(e.eigen_max(), l1, epsilon = 1e-12);
        // Monte Carlo of the ellipse in its own axes: the true mass within 0.3 m is above the bound.
        let n = 200_000u32;
        let mut inside = 0u32;
        let mut state = 0x2545_f491_4f6c_dd1du64;
        let mut uniform = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        for _ in 0..n {
            let (u1, u2) = (uniform().max(1e-300), uniform());
            let g = (-2.0 * u1.ln()).sqrt();
            let (a, b) = (g * (std::f64::consts::TAU * u2).cos(), g * (std::f64::consts::TAU * u2).sin());
            if (l1 * a * a + l2 * b * b) < 0.09 {
                inside += 1;
            }
        }
        let mc = f64::from(inside) / f64::from(n);
        assert!(mc > e.mass_within(0.3) + 0.05, "bound {} vs Monte Carlo {mc}", e.mass_within(0.3));
    }

    #[test]
    fn bad_posteriors_are_refused_with_the_field_named() {
        let refused = |r: Result<Posterior, Refused>| match r {
            Err(e) => e,
            Ok(p) => panic!("accepted {p:?}"),
        };
        assert_eq!(refused(Posterior::from_parts(0, f64::NAN, 0.0, &cov(1.0, 0.0, 1.0))).field, "pose.pose.position");
        let mut asym = cov(1.0, 0.2, 1.0);
        asym[6] = -0.2;
        assert!(refused(Posterior::from_parts(0, 0.0, 0.0, &asym)).reason.contains("symmetric"));
        assert!(refused(Posterior::from_parts(0, 0.0, 0.0, &cov(1.0, 2.0, 1.0))).reason.contains("semi-definite"));
        assert!(Posterior::from_parts(0, 0.0, 0.0, &cov(f64::INFINITY, 0.0, 1.0)).is_err());
    }

    #[test]
    fn declaration_needs_mass_nearness_and_a_contact() {
        let p = PosteriorDeclareParams { enabled: true, ..Default::default() };
        let tight = Posterior::from_parts(0, 3.0, 6.0, &cov(0.01, 0.0, 0.01)).expect("valid");
        assert!(tight.ready(Vec2::new(3.5, 6.0), 1, &p).is_some());
        assert!(tight.ready(Vec2::new(3.5, 6.0), 0, &p).is_none(), "no contact yet");
        assert!(tight.ready(Vec2::new(5.0, 6.0), 1, &p).is_none(), "robot too far");
        let wide = Posterior::from_parts(0, 3.0, 6.0, &cov(1.0, 0.0, 1.0)).expect("valid");
        assert!(wide.ready(Vec2::new(3.0, 6.0), 5, &p).is_none(), "mass 0.12 within 0.5 m");
        assert!(!tight.fresh(nanos(5.1), &p) && tight.fresh(nanos(5.0), &p));
    }
}
