//! Wind in the odom frame: the anemometer's vector (base_link, pointing where the air goes to)
//! is rotated by the odometry yaw, optionally corrected for the robot's own motion, and
//! low-pass filtered in odom (so the robot turning does not smear it).
//!
//! Contract: `upwind()` is the odom heading the air comes from, `atan2(-w_y, -w_x)`, or `None`
//! while the filtered speed is below `wind.min_speed`; `last_upwind()` keeps the last reliable
//! one. A reading in base_link that arrives before any odometry cannot be rotated and is
//! skipped (the odom watchdog halts the robot meanwhile). Relative and true wind have the one
//! meaning of [`sillage_air`]: with `wind.relative` a base_link reading is the air relative to
//! the moving anemometer, and the anemometer's velocity (odometry twist plus yaw rate times
//! the lever arm `wind.anemometer_x/y`) is added back; a reading in odom is true wind as it is.

use crate::geometry::Vec2;
use crate::inputs::{OdomObs, WindObs};
use crate::params::WindParams;
use sillage_core::time::secs;
use sillage_core::Nanos;

/// The wind estimate.
#[derive(Debug, Clone)]
pub struct WindEstimator {
    p: WindParams,
    filtered: Option<Vec2>,
    last_t: Option<Nanos>,
    last_upwind: Option<f64>,
}

/// The wind as strategies see it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindView {
    /// Heading the air comes from [rad, odom], `None` when too weak.
    pub upwind: Option<f64>,
    /// The last reliable upwind heading [rad, odom].
    pub last_upwind: Option<f64>,
    /// Filtered speed [m/s].
    pub speed: f64,
}

impl WindEstimator {
    /// No wind known yet.
    pub fn new(p: WindParams) -> Self {
        WindEstimator { p, filtered: None, last_t: None, last_upwind: None }
    }

    /// Replaces the parameters, keeping the estimate.
    pub fn set_params(&mut self, p: WindParams) {
        self.p = p;
    }

    /// A reading at `now` with the latest odometry; returns false when it could not be used.
    pub fn on_wind(&mut self, now: Nanos, w: WindObs, odom: Option<&OdomObs>) -> bool {
        let air = if w.in_odom {
            w.air
        } else {
            let Some(o) = odom else { return false };
            let motion = sillage_air::Motion { velocity: [o.velocity.x, o.velocity.y], omega: o.yaw_rate };
            let Ok(t) = self.p.air().true_wind_base([w.air.x, w.air.y], Some(&motion)) else { return false };
            o.pose.to_odom(Vec2::new(t.base[0], t.base[1]))
        };
        let next = match (self.filtered, self.last_t) {
            (Some(f), Some(t)) if self.p.filter_tau > 0.0 => {
                let dt = secs(now.saturating_sub(t)).max(0.0);
                let alpha = 1.0 - (-dt / self.p.filter_tau).exp();
                f + (air - f) * alpha
            }
            _ => air,
        };
        if !next.is_finite() {
            return false;
        }
        self.filtered = Some(next);
        self.last_t = Some(now);
        if let Some(u) = self.upwind() {
            self.last_upwind = Some(u);
        }
        true
    }

    /// Heading the air comes from [rad, odom], `None` if unknown or too weak.
    pub fn upwind(&self) -> Option<f64> {
        let f = self.filtered?;
        self.p.air().upwind([f.x, f.y])
    }

    /// The view for strategies.
    pub fn view(&self) -> WindView {
        WindView { upwind: self.upwind(), last_upwind: self.last_upwind, speed: self.filtered.map(|f| f.norm()).unwrap_or(0.0) }
    }

    /// Forgets the estimate (clock jump).
    pub fn reset(&mut self) {
        *self = WindEstimator::new(self.p.clone());
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::Pose2;
    use approx::assert_abs_diff_eq;
    use sillage_core::time::SECOND;
    use std::f64::consts::PI;

    fn odom(yaw: f64, v: Vec2) -> OdomObs {
        OdomObs { pose: Pose2 { position: Vec2::ZERO, yaw }, velocity: v, yaw_rate: 0.0 }
    }

    #[test]
    fn base_link_wind_is_rotated_into_odom() {
        let p = WindParams { filter_tau: 0.0, relative: false, ..Default::default() };
        let mut w = WindEstimator::new(p);
        // Robot facing +y (yaw pi/2); air moving toward the robot's left (+y body) goes to -x in
        // odom, so it comes from +x: upwind heading 0.
        assert!(w.on_wind(0, WindObs { air: Vec2::new(0.0, 1.0), in_odom: false }, Some(&odom(PI / 2.0, Vec2::ZERO))));
        assert_abs_diff_eq!(w.upwind().expect("wind"), 0.0, epsilon = 1e-12);
        assert!(!w.on_wind(0, WindObs { air: Vec2::new(1.0, 0.0), in_odom: false }, None), "no odom: cannot rotate");
    }

    #[test]
    fn relative_wind_gets_the_robot_velocity_back_and_the_filter_is_first_order() {
        let mut w = WindEstimator::new(WindParams { filter_tau: 1.0, ..Default::default() });
        // Driving forward at 0.5 m/s in still air reads 0.5 m/s toward -x (see the simulator's
        // anemometer contract): corrected, the wind is zero.
        assert!(w.on_wind(0, WindObs { air: Vec2::new(-0.5, 0.0), in_odom: false }, Some(&odom(0.0, Vec2::new(0.5, 0.0)))));
        assert_eq!(w.upwind(), None);
        // A step to 1 m/s toward -x: after one time constant the filter reached 1 - 1/e.
        assert!(w.on_wind(SECOND, WindObs { air: Vec2::new(-1.0, 0.0), in_odom: true }, None));
        assert_abs_diff_eq!(w.view().speed, 1.0 - (-1.0f64).exp(), epsilon = 1e-12);
        assert_abs_diff_eq!(w.upwind().expect("wind"), 0.0, epsilon = 1e-12);
    }

    #[test]
    fn odom_frame_wind_is_true_wind_and_the_lever_arm_counts() {
        let p = WindParams { filter_tau: 0.0, anemometer_x: 0.5, ..Default::default() };
        let mut w = WindEstimator::new(p);
        // An odom-frame reading is already over the ground: driving does not change it.
        assert!(w.on_wind(0, WindObs { air: Vec2::new(-1.0, 0.0), in_odom: true }, Some(&odom(0.0, Vec2::new(0.8, 0.0)))));
        assert_abs_diff_eq!(w.view().speed, 1.0, epsilon = 1e-12);
        // Turning in place at 1 rad/s in still air, an anemometer 0.5 m ahead moves at 0.5 m/s
        // to the left (v = omega x r, rigid-body kinematics) and reads 0.5 m/s to the right.
        let mut turning = odom(0.0, Vec2::ZERO);
        turning.yaw_rate = 1.0;
        assert!(w.on_wind(1, WindObs { air: Vec2::new(0.0, -0.5), in_odom: false }, Some(&turning)));
        assert_abs_diff_eq!(w.view().speed, 0.0, epsilon = 1e-12);
        assert_eq!(w.upwind(), None, "still air has no direction");
    }
}
