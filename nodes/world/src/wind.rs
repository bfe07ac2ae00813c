//! Meandering wind: a uniform mean wind whose direction and speed wander as coloured
//! noise (white noise through a first-order low-pass).
//!
//! Contract: the field is uniform in space and varies in time; `velocity(p, t)` gives the
//! air velocity [m/s] in the world (ENU `odom`) frame, pointing where the air goes to.
//! The meander is generated on a fixed internal time grid (`MEANDER_DT`) and linearly
//! interpolated, so a seeded field is the same whatever step size the caller uses.

use crate::noise::ColouredNoise;
use rand_chacha::ChaCha8Rng;

/// Time step of the internal meander grid [s].
pub const MEANDER_DT: f64 = 0.05;

/// Parameters of the wind: mean vector plus meander.
#[derive(Debug, Clone, PartialEq)]
pub struct WindParams {
    /// Mean wind speed [m/s], >= 0.
    pub speed: f64,
    /// Mean direction the air moves to [rad], counter-clockwise from world +x.
    pub direction: f64,
    /// Stationary standard deviation of the direction meander [rad].
    pub direction_std: f64,
    /// Stationary standard deviation of the speed fluctuation [m/s].
    pub speed_std: f64,
    /// Correlation time of both meander processes [s] (0 disables the meander).
    pub correlation_time: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Knot {
    t: f64,
    direction: f64,
    speed: f64,
}

/// The wind field state (seeded, advanced in time by [`WindField::advance_to`]).
#[derive(Debug, Clone)]
pub struct WindField {
    params: WindParams,
    rng: ChaCha8Rng,
    dir_noise: ColouredNoise,
    speed_noise: ColouredNoise,
    prev: Knot,
    next: Knot,
}

impl WindField {
    /// Creates the field at time 0 with its meander drawn from `rng`.
    pub fn new(params: WindParams, mut rng: ChaCha8Rng) -> Self {
        let dir_noise = ColouredNoise::new(params.direction_std, params.correlation_time, &mut rng);
        let speed_noise = ColouredNoise::new(params.speed_std, params.correlation_time, &mut rng);
        let mut field = Self {
            prev: Knot {
                t: 0.0,
                direction: params.direction,
                speed: params.speed,
            },
            next: Knot {
                t: 0.0,
                direction: params.direction,
                speed: params.speed,
            },
            params,
            rng,
            dir_noise,
            speed_noise,
        };
        field.prev = field.knot(0.0);
        field.next = field.prev;
        field.advance_to(MEANDER_DT);
        field
    }

    fn knot(&self, t: f64) -> Knot {
        Knot {
            t,
            direction: self.params.direction + self.dir_noise.value(),
            speed: (self.params.speed + self.speed_noise.value()).max(0.0),
        }
    }

    /// Parameters the field was built with.
    pub fn params(&self) -> &WindParams {
        &self.params
    }

    /// Mean wind vector [m/s] in the world frame (no meander).
    pub fn mean_velocity(&self) -> [f64; 2] {
        let (s, c) = self.params.direction.sin_cos();
        [self.params.speed * c, self.params.speed * s]
    }

    /// Generates the meander up to at least time `t` [s]. Times before the previous call's
    /// window are no longer available (queries clamp to the window).
    pub fn advance_to(&mut self, t: f64) {
        while self.next.t < t {
            self.dir_noise.advance(MEANDER_DT, &mut self.rng);
            self.speed_noise.advance(MEANDER_DT, &mut self.rng);
            self.prev = self.next;
            let t_next = self.prev.t + MEANDER_DT;
            self.next = self.knot(t_next);
        }
    }

    /// Air velocity [m/s] at world point `p` [m] and time `t` [s], world frame, pointing
    /// where the air goes to. The field is uniform, so `p` does not change the value; `t`
    /// is clamped to the window generated so far (call [`WindField::advance_to`] first).
    pub fn velocity(&self, _p: [f64; 3], t: f64) -> [f64; 2] {
        let span = self.next.t - self.prev.t;
        let w = if span > 0.0 {
            ((t - self.prev.t) / span).clamp(0.0, 1.0)
        } else {
            1.0
        };
        let dir = self.prev.direction + w * (self.next.direction - self.prev.direction);
        let speed = self.prev.speed + w * (self.next.speed - self.prev.speed);
        let (s, c) = dir.sin_cos();
        [speed * c, speed * s]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use rand::SeedableRng;

    fn params(std: f64) -> WindParams {
        WindParams {
            speed: 1.0,
            direction: 0.5,
            direction_std: std,
            speed_std: 0.1 * std,
            correlation_time: 3.0,
        }
    }

    #[test]
    fn no_meander_gives_mean_wind() {
        let mut w = WindField::new(params(0.0), ChaCha8Rng::seed_from_u64(1));
        w.advance_to(10.0);
        let v = w.velocity([0.0; 3], 10.0);
        assert_abs_diff_eq!(v[0], 0.5f64.cos(), epsilon = 1e-12);
        assert_abs_diff_eq!(v[1], 0.5f64.sin(), epsilon = 1e-12);
    }

    #[test]
    fn same_seed_same_wind_whatever_the_step() {
        let mut a = WindField::new(params(0.3), ChaCha8Rng::seed_from_u64(9));
        let mut b = WindField::new(params(0.3), ChaCha8Rng::seed_from_u64(9));
        let mut t = 0.0;
        while t < 20.0 {
            t += 0.01;
            a.advance_to(t);
        }
        b.advance_to(t);
        assert_eq!(a.velocity([0.0; 3], t), b.velocity([0.0; 3], t));
    }

    #[test]
    fn meander_has_requested_spread() {
        let mut w = WindField::new(params(0.3), ChaCha8Rng::seed_from_u64(3));
        let mut dirs = Vec::new();
        for k in 1..40_000 {
            let t = k as f64 * 0.5;
            w.advance_to(t);
            let v = w.velocity([0.0; 3], t);
            dirs.push(v[1].atan2(v[0]) - 0.5);
        }
        let n = dirs.len() as f64;
        let mean = dirs.iter().sum::<f64>() / n;
        let std = (dirs.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / n).sqrt();
        assert!((std - 0.3).abs() < 0.03, "direction std {std}");
    }
}
