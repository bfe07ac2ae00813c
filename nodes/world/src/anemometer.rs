//! Anemometer model: the air velocity relative to the moving sensor, in `base_link`.
//!
//! Contract: with world wind u, robot pose (x, y, yaw) and body twist (vx, vy, wz), the
//! sensor at body offset r moves at v_s = R(yaw) [(vx, vy) + wz x r] (world frame); the
//! reading is R(-yaw) (u - v_s) plus independent Gaussian noise per axis [m/s]; z is 0
//! plus noise (the wind is planar). The vector points where the air goes to, relative to
//! the sensor (a robot driving forward in still air reads a wind towards -x).

use crate::geometry::{rotate, Pose2, Twist2};
use rand::Rng;
use rand_distr::StandardNormal;

/// Anemometer parameters (scenario key `anemometer`; defaults in brackets).
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct AnemometerParams {
    /// Sensor position in base_link [m] [default (0, 0, 0.3)].
    pub position: [f64; 3],
    /// Standard deviation of the additive noise on each axis [m/s] [default 0.02].
    pub noise_std: f64,
    /// Readings per second [Hz] [default 10].
    pub sample_rate: f64,
}

impl Default for AnemometerParams {
    fn default() -> Self {
        Self {
            position: [0.0, 0.0, 0.3],
            noise_std: 0.02,
            sample_rate: 10.0,
        }
    }
}

/// Noise-free relative air velocity [m/s] in base_link.
pub fn relative_air_velocity(
    params: &AnemometerParams,
    wind_world: [f64; 2],
    pose: &Pose2,
    twist: &Twist2,
) -> [f64; 3] {
    let r = params.position;
    // Body-frame velocity of the sensor point: (vx - wz ry, vy + wz rx).
    let v_body = [twist.vx - twist.wz * r[1], twist.vy + twist.wz * r[0]];
    let wind_body = rotate(wind_world, -pose.yaw);
    [wind_body[0] - v_body[0], wind_body[1] - v_body[1], 0.0]
}

/// One noisy reading [m/s] in base_link.
pub fn measure<R: Rng + ?Sized>(
    params: &AnemometerParams,
    wind_world: [f64; 2],
    pose: &Pose2,
    twist: &Twist2,
    rng: &mut R,
) -> [f64; 3] {
    let mut v = relative_air_velocity(params, wind_world, pose, twist);
    if params.noise_std > 0.0 {
        for c in v.iter_mut() {
            *c += params.noise_std * rng.sample::<f64, _>(StandardNormal);
        }
    }
    v
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use std::f64::consts::FRAC_PI_2;

    fn at_origin() -> AnemometerParams {
        AnemometerParams {
            position: [0.0; 3],
            noise_std: 0.0,
            sample_rate: 10.0,
        }
    }

    #[test]
    fn static_robot_reads_wind_in_body_frame() {
        // Wind to +x (world), robot facing +y: in base_link the air goes to -y (to the right).
        let v = relative_air_velocity(
            &at_origin(),
            [1.0, 0.0],
            &Pose2::new(0.0, 0.0, FRAC_PI_2),
            &Twist2::default(),
        );
        assert_abs_diff_eq!(v[0], 0.0, epsilon = 1e-12);
        assert_abs_diff_eq!(v[1], -1.0, epsilon = 1e-12);
    }

    #[test]
    fn driving_into_still_air_reads_head_wind() {
        let v = relative_air_velocity(
            &at_origin(),
            [0.0, 0.0],
            &Pose2::new(3.0, 1.0, 0.7),
            &Twist2::new(0.5, 0.0, 0.0),
        );
        assert_abs_diff_eq!(v[0], -0.5, epsilon = 1e-12);
        assert_abs_diff_eq!(v[1], 0.0, epsilon = 1e-12);
    }

    #[test]
    fn rotation_moves_an_offset_sensor() {
        // Sensor 0.2 m ahead, turning left at 1 rad/s: it moves to +y at 0.2 m/s.
        let p = AnemometerParams {
            position: [0.2, 0.0, 0.3],
            ..at_origin()
        };
        let v = relative_air_velocity(
            &p,
            [0.0, 0.0],
            &Pose2::default(),
            &Twist2::new(0.0, 0.0, 1.0),
        );
        assert_abs_diff_eq!(v[1], -0.2, epsilon = 1e-12);
    }

    #[test]
    fn noise_has_requested_std() {
        use rand::SeedableRng;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(4);
        let p = AnemometerParams {
            noise_std: 0.05,
            ..at_origin()
        };
        let n = 20_000;
        let xs: Vec<f64> = (0..n)
            .map(|_| {
                measure(
                    &p,
                    [1.0, 0.0],
                    &Pose2::default(),
                    &Twist2::default(),
                    &mut rng,
                )[0]
            })
            .collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let std = (xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64).sqrt();
        assert!(
            (mean - 1.0).abs() < 0.002 && (std - 0.05).abs() < 0.002,
            "{mean} {std}"
        );
    }
}
