//! Simulated planar laser scanner (the data of a `sensor_msgs/LaserScan`).
//!
//! Contract: rays are cast in the scanner frame (mounted on `base_link` at `mount`),
//! angles from `angle_min` counter-clockwise in steps of `angle_increment`; ranges beyond
//! `range_max` are reported as +inf and below `range_min` as -inf (REP 117 convention).

use crate::arena::Arena;
use crate::geometry::Pose2;
use rand::Rng;
use rand_distr::StandardNormal;

/// Scanner parameters (scenario key `laser`; defaults in brackets).
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct LaserParams {
    /// First ray angle [rad] in the scanner frame. [default -pi]
    pub angle_min: f64,
    /// Last ray angle [rad]. [default pi - 1 deg]
    pub angle_max: f64,
    /// Angle between rays [rad], > 0. [default 1 deg]
    pub angle_increment: f64,
    /// Shortest valid range [m]. [default 0.1]
    pub range_min: f64,
    /// Longest valid range [m]. [default 12]
    pub range_max: f64,
    /// Standard deviation of additive range noise [m] (0 for none). [default 0.01]
    pub noise_std: f64,
    /// Scanner pose in `base_link`: x, y [m], yaw [rad]. [default 0]
    pub mount: [f64; 3],
    /// Scans per second [Hz] [default 10].
    pub sample_rate: f64,
}

impl Default for LaserParams {
    fn default() -> Self {
        let deg = std::f64::consts::PI / 180.0;
        Self {
            angle_min: -180.0 * deg,
            angle_max: 179.0 * deg,
            angle_increment: deg,
            range_min: 0.1,
            range_max: 12.0,
            noise_std: 0.01,
            mount: [0.0; 3],
            sample_rate: 10.0,
        }
    }
}

impl LaserParams {
    /// Number of rays: round((angle_max - angle_min) / angle_increment) + 1.
    pub fn ray_count(&self) -> usize {
        ((self.angle_max - self.angle_min) / self.angle_increment)
            .round()
            .max(0.0) as usize
            + 1
    }
}

/// One scan: the fields of `sensor_msgs/LaserScan` that the simulator fills.
#[derive(Debug, Clone, PartialEq)]
pub struct LaserScan {
    /// Scan time [ns].
    pub stamp_ns: u64,
    /// First ray angle [rad].
    pub angle_min: f64,
    /// Last ray angle [rad].
    pub angle_max: f64,
    /// Angle between rays [rad].
    pub angle_increment: f64,
    /// Shortest valid range [m].
    pub range_min: f64,
    /// Longest valid range [m].
    pub range_max: f64,
    /// One range per ray [m] (+inf: no return within range_max; -inf: below range_min).
    pub ranges: Vec<f32>,
}

/// Casts every ray of a scan from `robot` (world pose of base_link).
pub fn scan<R: Rng + ?Sized>(
    params: &LaserParams,
    arena: &Arena,
    robot: &Pose2,
    stamp_ns: u64,
    rng: &mut R,
) -> LaserScan {
    let origin = robot.body_to_world([params.mount[0], params.mount[1], 0.0]);
    let base = robot.yaw + params.mount[2];
    let ranges = (0..params.ray_count())
        .map(|i| {
            let a = base + params.angle_min + i as f64 * params.angle_increment;
            let mut r = arena.ray_cast([origin[0], origin[1]], a);
            if params.noise_std > 0.0 {
                r += params.noise_std * rng.sample::<f64, _>(StandardNormal);
            }
            if r > params.range_max {
                f32::INFINITY
            } else if r < params.range_min {
                f32::NEG_INFINITY
            } else {
                r as f32
            }
        })
        .collect();
    LaserScan {
        stamp_ns,
        angle_min: params.angle_min,
        angle_max: params.angle_max,
        angle_increment: params.angle_increment,
        range_min: params.range_min,
        range_max: params.range_max,
        ranges,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::arena::Aabb;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use std::f64::consts::{FRAC_PI_2, PI};

    #[test]
    fn scan_in_a_square_room() {
        // 4 m x 4 m room, robot in the centre facing +y, scanner 0.1 m ahead.
        let arena = Arena {
            bounds: Aabb::new(0.0, 0.0, 4.0, 4.0),
            obstacles: vec![],
        };
        let params = LaserParams {
            angle_min: -PI / 2.0,
            angle_max: PI / 2.0,
            angle_increment: PI / 4.0,
            range_min: 0.05,
            range_max: 1.95,
            noise_std: 0.0,
            mount: [0.1, 0.0, 0.0],
            sample_rate: 10.0,
        };
        let mut rng = ChaCha8Rng::seed_from_u64(0);
        let s = scan(
            &params,
            &arena,
            &Pose2::new(2.0, 2.0, FRAC_PI_2),
            5,
            &mut rng,
        );
        assert_eq!(s.ranges.len(), 5);
        // Scanner at (2, 2.1). Rays (world): 0 (+x) 2.0 -> +inf (beyond 1.95);
        // 45 deg: min((4-2)/c, (4-2.1)/s) = 1.9 sqrt 2 -> +inf; +y: 1.9;
        // 135 deg: 1.9 sqrt 2 -> +inf; -x: 2.0 -> +inf.
        assert_eq!(s.ranges[0], f32::INFINITY);
        assert_eq!(s.ranges[1], f32::INFINITY);
        assert!((s.ranges[2] - 1.9).abs() < 1e-6);
        assert_eq!(s.ranges[3], f32::INFINITY);
        assert_eq!(s.ranges[4], f32::INFINITY);
        assert_eq!(s.stamp_ns, 5);
    }

    #[test]
    fn scan_sees_a_box_and_near_returns() {
        let arena = Arena {
            bounds: Aabb::new(0.0, 0.0, 10.0, 10.0),
            obstacles: vec![
                Aabb::new(3.0, 4.0, 4.0, 6.0),
                Aabb::new(1.0, 5.01, 2.0, 6.0),
            ],
        };
        let params = LaserParams {
            angle_min: 0.0,
            angle_max: FRAC_PI_2,
            angle_increment: FRAC_PI_2,
            range_min: 0.1,
            range_max: 20.0,
            noise_std: 0.0,
            mount: [0.0; 3],
            sample_rate: 10.0,
        };
        let mut rng = ChaCha8Rng::seed_from_u64(0);
        let s = scan(&params, &arena, &Pose2::new(1.5, 5.0, 0.0), 0, &mut rng);
        assert!((s.ranges[0] - 1.5).abs() < 1e-6, "box face at x = 3");
        assert_eq!(
            s.ranges[1],
            f32::NEG_INFINITY,
            "box 0.01 m away is below range_min"
        );
    }
}
