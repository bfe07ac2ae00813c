//! Planar poses, body twists and frame transforms (REP 103: x forward, y left, yaw
//! counter-clockwise positive; the world frame is the ENU `odom` frame).

/// A planar pose in the world (`odom`) frame.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Pose2 {
    /// Position x [m].
    pub x: f64,
    /// Position y [m].
    pub y: f64,
    /// Heading [rad], counter-clockwise from +x.
    pub yaw: f64,
}

impl Pose2 {
    /// A pose from its parts: position [m] and yaw [rad].
    pub const fn new(x: f64, y: f64, yaw: f64) -> Self {
        Self { x, y, yaw }
    }

    /// Maps a point given in the body frame (`base_link`) to the world frame [m].
    /// The z coordinate is unchanged (the robot moves on the ground plane).
    pub fn body_to_world(&self, p: [f64; 3]) -> [f64; 3] {
        let [wx, wy] = rotate([p[0], p[1]], self.yaw);
        [self.x + wx, self.y + wy, p[2]]
    }
}

/// A body-frame velocity (`base_link`): what odometry reports as twist.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Twist2 {
    /// Forward velocity [m/s].
    pub vx: f64,
    /// Leftward velocity [m/s] (zero for a differential drive).
    pub vy: f64,
    /// Yaw rate [rad/s], counter-clockwise positive.
    pub wz: f64,
}

impl Twist2 {
    /// A twist from its parts [m/s, m/s, rad/s].
    pub const fn new(vx: f64, vy: f64, wz: f64) -> Self {
        Self { vx, vy, wz }
    }
}

/// Rotates a planar vector counter-clockwise by `angle` [rad].
pub fn rotate(v: [f64; 2], angle: f64) -> [f64; 2] {
    let (s, c) = angle.sin_cos();
    [c * v[0] - s * v[1], s * v[0] + c * v[1]]
}

/// Wraps an angle to (-pi, pi] [rad].
pub fn wrap_angle(a: f64) -> f64 {
    let tau = std::f64::consts::TAU;
    let w = a.rem_euclid(tau);
    if w > std::f64::consts::PI {
        w - tau
    } else {
        w
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use std::f64::consts::{FRAC_PI_2, PI};

    #[test]
    fn body_point_maps_with_rotation() {
        // A robot at (1, 2) facing +y: a point 1 m ahead in base_link is at (1, 3).
        let pose = Pose2::new(1.0, 2.0, FRAC_PI_2);
        let w = pose.body_to_world([1.0, 0.0, 0.3]);
        assert_abs_diff_eq!(w[0], 1.0, epsilon = 1e-12);
        assert_abs_diff_eq!(w[1], 3.0, epsilon = 1e-12);
        assert_abs_diff_eq!(w[2], 0.3, epsilon = 1e-12);
    }

    #[test]
    fn wrap_angle_range() {
        assert_abs_diff_eq!(wrap_angle(3.0 * PI), PI, epsilon = 1e-12);
        assert_abs_diff_eq!(wrap_angle(-3.0 * PI / 2.0), PI / 2.0, epsilon = 1e-12);
        assert_abs_diff_eq!(wrap_angle(0.25), 0.25, epsilon = 1e-15);
    }
}
