//! From a strategy's motion intent to a velocity command in base_link (before the guard).
//!
//! Contract (REP 103: x forward, y left, angular.z > 0 turns left):
//! - `Motion::Stop`: zero.
//! - `Motion::Heading`: a differential drive turns with `wz = heading_gain * e` (e the
//!   heading error, wrapped) and drives forward with `speed * cos(pi/2 * e / align_angle)`
//!   while `|e| < align_angle`, else turns in place; it never uses `linear.y`. A holonomic
//!   base translates straight along the heading (`linear.x`, `linear.y` from rotating the
//!   odom direction into base_link) and turns toward `face` (or the heading).
//! - `Motion::Body`: the given body twist (the guard still zeroes `linear.y` on a
//!   differential drive).

use crate::geometry::{wrap_angle, Pose2, Vec2};
use crate::params::{BaseKind, DriveParams};
use sillage_core::msg::{Header, Twist, TwistStamped, Vector3};
use sillage_core::Nanos;

/// A planar velocity command in base_link.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Cmd {
    /// Forward speed [m/s].
    pub vx: f64,
    /// Leftward speed [m/s] (holonomic bases only).
    pub vy: f64,
    /// Yaw rate [rad/s], counter-clockwise positive.
    pub wz: f64,
}

impl Cmd {
    /// All zero.
    pub const ZERO: Cmd = Cmd { vx: 0.0, vy: 0.0, wz: 0.0 };

    /// Every component finite.
    pub fn is_finite(&self) -> bool {
        self.vx.is_finite() && self.vy.is_finite() && self.wz.is_finite()
    }

    /// As a Twist.
    pub fn twist(&self) -> Twist {
        Twist { linear: Vector3 { x: self.vx, y: self.vy, z: 0.0 }, angular: Vector3 { x: 0.0, y: 0.0, z: self.wz } }
    }

    /// As a TwistStamped at `now` in `frame`.
    pub fn stamped(&self, now: Nanos, frame: &str) -> TwistStamped {
        TwistStamped { header: Header::new(now, frame), twist: self.twist() }
    }
}

/// What a strategy wants the robot to do.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Motion {
    /// Stand still.
    Stop,
    /// Move along an odom heading.
    Heading {
        /// Direction of travel [rad, odom].
        heading: f64,
        /// Speed [m/s].
        speed: f64,
        /// Holonomic bases: the yaw to face while moving [rad, odom] (`None`: the heading).
        face: Option<f64>,
    },
    /// A body twist, as is.
    Body(Cmd),
}

impl Motion {
    /// Move along `heading` [rad, odom] at `speed` [m/s], facing the way of travel.
    pub fn heading(heading: f64, speed: f64) -> Motion {
        Motion::Heading { heading, speed, face: None }
    }

    /// Go toward `target` [m, odom] from `from` at `speed`.
    pub fn toward(from: Vec2, target: Vec2, speed: f64) -> Motion {
        Motion::heading((target - from).angle(), speed)
    }

    /// The heading target for `search_state` [rad, odom] (NaN when there is none).
    pub fn heading_target(&self) -> f64 {
        match self {
            Motion::Heading { heading, .. } => wrap_angle(*heading),
            _ => f64::NAN,
        }
    }
}

/// The heading controller.
#[derive(Debug, Clone)]
pub struct Drive {
    /// Gains.
    pub p: DriveParams,
    /// Base kind.
    pub base: BaseKind,
}

impl Drive {
    /// The command for `motion` at `pose` (finite for finite inputs; the guard cleans the rest).
    pub fn command(&self, motion: &Motion, pose: &Pose2) -> Cmd {
        match *motion {
            Motion::Stop => Cmd::ZERO,
            Motion::Body(c) => c,
            Motion::Heading { heading, speed, face } => {
                let err = wrap_angle(heading - pose.yaw);
                match self.base {
                    BaseKind::DiffDrive => {
                        let align = self.p.align_angle;
                        let k = if err.abs() < align { (std::f64::consts::FRAC_PI_2 * err / align).cos() } else { 0.0 };
                        Cmd { vx: speed * k, vy: 0.0, wz: self.p.heading_gain * err }
                    }
                    BaseKind::Holonomic => {
                        let v = pose.to_body(Vec2::from_angle(heading) * speed);
                        let face_err = wrap_angle(face.unwrap_or(heading) - pose.yaw);
                        Cmd { vx: v.x, vy: v.y, wz: self.p.heading_gain * face_err }
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use std::f64::consts::FRAC_PI_2;

    #[test]
    fn diff_drive_turns_left_for_a_heading_on_the_left() {
        let d = Drive { p: DriveParams::default(), base: BaseKind::DiffDrive };
        let pose = Pose2::default();
        // REP 103: a target heading to the left (positive) needs angular.z > 0.
        let c = d.command(&Motion::heading(0.4, 0.2), &pose);
        assert!(c.wz > 0.0 && c.vx > 0.0 && c.vy == 0.0);
        assert_abs_diff_eq!(c.vx, 0.2 * (FRAC_PI_2 * 0.4 / 0.8).cos(), epsilon = 1e-12);
        let c = d.command(&Motion::heading(-2.0, 0.2), &pose);
        assert!(c.wz < 0.0 && c.vx == 0.0, "beyond align_angle: turn in place");
    }

    #[test]
    fn holonomic_translates_sideways_and_faces_as_told() {
        let d = Drive { p: DriveParams::default(), base: BaseKind::Holonomic };
        let pose = Pose2 { position: Vec2::ZERO, yaw: FRAC_PI_2 };
        // Facing +y, moving toward -x in odom = to the robot's left (+y body).
        let c = d.command(&Motion::Heading { heading: std::f64::consts::PI, speed: 0.3, face: Some(FRAC_PI_2) }, &pose);
        assert_abs_diff_eq!(c.vx, 0.0, epsilon = 1e-12);
        assert_abs_diff_eq!(c.vy, 0.3, epsilon = 1e-12);
        assert_abs_diff_eq!(c.wz, 0.0, epsilon = 1e-12);
    }
}
