//! Robot kinematics: differential drive (vx, wz) and holonomic (vx, vy, wz) bases with
//! velocity and acceleration limits, exact pose integration for a constant body twist
//! over a step, and stop-on-collision against the arena.
//!
//! Contract: `step(dt)` first moves the actual twist towards the commanded one within the
//! acceleration limits (clamped to the velocity limits), then integrates the pose exactly
//! for that constant twist. If the footprint disc would collide, the robot is moved to the
//! last free point along the step (bisection), its twist is set to zero and, if it was not
//! already blocked, the collision counter is incremented.

use crate::arena::Arena;
use crate::geometry::{rotate, wrap_angle, Pose2, Twist2};

/// Kind of drive (scenario key `robot.type`: `diff_drive` or `holonomic`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DriveKind {
    /// Differential drive: commands (vx, wz); vy is forced to zero.
    DiffDrive,
    /// Holonomic (omnidirectional) base: commands (vx, vy, wz).
    Holonomic,
}

/// Velocity and acceleration limits, all > 0 (scenario key `robot.limits`; defaults in
/// brackets).
#[derive(Debug, Clone, Copy, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct RobotLimits {
    /// Maximum planar speed |(vx, vy)| [m/s] [default 0.5].
    pub max_linear_speed: f64,
    /// Maximum |wz| [rad/s] [default 1.5].
    pub max_angular_speed: f64,
    /// Maximum planar acceleration |d(vx, vy)/dt| [m/s^2] [default 1].
    pub max_linear_accel: f64,
    /// Maximum |d wz/dt| [rad/s^2] [default 3].
    pub max_angular_accel: f64,
}

impl Default for RobotLimits {
    fn default() -> Self {
        Self {
            max_linear_speed: 0.5,
            max_angular_speed: 1.5,
            max_linear_accel: 1.0,
            max_angular_accel: 3.0,
        }
    }
}

/// Bisection iterations used to find the contact point of a blocked step.
const CONTACT_ITERATIONS: usize = 12;

/// Pose after moving for `dt` [s] with the constant body twist `tw`, in closed form:
/// displacement = dt sinc(wz dt / 2) R(yaw + wz dt / 2) (vx, vy).
pub fn integrate_pose(pose: &Pose2, tw: &Twist2, dt: f64) -> Pose2 {
    let half = 0.5 * tw.wz * dt;
    let sinc = if half.abs() < 1e-6 {
        1.0 - half * half / 6.0
    } else {
        half.sin() / half
    };
    let d = rotate([tw.vx * dt * sinc, tw.vy * dt * sinc], pose.yaw + half);
    Pose2::new(
        pose.x + d[0],
        pose.y + d[1],
        wrap_angle(pose.yaw + tw.wz * dt),
    )
}

/// A simulated mobile base.
#[derive(Debug, Clone)]
pub struct Robot {
    kind: DriveKind,
    limits: RobotLimits,
    radius: f64,
    pose: Pose2,
    twist: Twist2,
    command: Twist2,
    collisions: u32,
    blocked: bool,
    distance: f64,
}

impl Robot {
    /// A robot at rest at `pose`, footprint a disc of `radius` [m].
    pub fn new(kind: DriveKind, limits: RobotLimits, radius: f64, pose: Pose2) -> Self {
        Self {
            kind,
            limits,
            radius,
            pose,
            twist: Twist2::default(),
            command: Twist2::default(),
            collisions: 0,
            blocked: false,
            distance: 0.0,
        }
    }

    /// Sets the commanded body twist (held until the next command). A differential drive
    /// ignores `vy`.
    pub fn set_command(&mut self, cmd: Twist2) {
        self.command = cmd;
    }

    /// Commanded twist in force.
    pub fn command(&self) -> Twist2 {
        self.command
    }

    /// World pose of base_link.
    pub fn pose(&self) -> Pose2 {
        self.pose
    }

    /// Actual body twist (base_link) [m/s, m/s, rad/s].
    pub fn twist(&self) -> Twist2 {
        self.twist
    }

    /// Footprint radius [m].
    pub fn radius(&self) -> f64 {
        self.radius
    }

    /// Drive kind.
    pub fn kind(&self) -> DriveKind {
        self.kind
    }

    /// Number of collisions so far (a blocked robot pushing on counts once).
    pub fn collisions(&self) -> u32 {
        self.collisions
    }

    /// True while the last step ended against a wall or obstacle.
    pub fn is_blocked(&self) -> bool {
        self.blocked
    }

    /// Path length travelled so far [m] (chord of each step).
    pub fn distance_travelled(&self) -> f64 {
        self.distance
    }

    /// The twist reached after `dt` [s] towards `cmd` within the limits.
    fn limited_twist(&self, dt: f64) -> Twist2 {
        let l = &self.limits;
        let mut target = self.command;
        if self.kind == DriveKind::DiffDrive {
            target.vy = 0.0;
        }
        let speed = target.vx.hypot(target.vy);
        if speed > l.max_linear_speed {
            let k = l.max_linear_speed / speed;
            target.vx *= k;
            target.vy *= k;
        }
        target.wz = target.wz.clamp(-l.max_angular_speed, l.max_angular_speed);
        let (dvx, dvy) = (target.vx - self.twist.vx, target.vy - self.twist.vy);
        let dv = dvx.hypot(dvy);
        let k = if dv > l.max_linear_accel * dt {
            l.max_linear_accel * dt / dv
        } else {
            1.0
        };
        let dw =
            (target.wz - self.twist.wz).clamp(-l.max_angular_accel * dt, l.max_angular_accel * dt);
        Twist2::new(
            self.twist.vx + k * dvx,
            self.twist.vy + k * dvy,
            self.twist.wz + dw,
        )
    }

    /// Advances the robot by `dt` [s] in `arena`.
    pub fn step(&mut self, arena: &Arena, dt: f64) {
        let tw = self.limited_twist(dt);
        let next = integrate_pose(&self.pose, &tw, dt);
        if !arena.disc_collides([next.x, next.y], self.radius) {
            self.advance_to(next);
            self.twist = tw;
            self.blocked = false;
            return;
        }
        // Largest free fraction of the step, by bisection (0 is free by invariant).
        let (mut lo, mut hi) = (0.0, 1.0);
        for _ in 0..CONTACT_ITERATIONS {
            let mid = 0.5 * (lo + hi);
            let p = integrate_pose(&self.pose, &tw, mid * dt);
            if arena.disc_collides([p.x, p.y], self.radius) {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        let stop = integrate_pose(&self.pose, &tw, lo * dt);
        self.advance_to(stop);
        self.twist = Twist2::default();
        if !self.blocked {
            self.collisions += 1;
        }
        self.blocked = true;
    }

    fn advance_to(&mut self, next: Pose2) {
        self.distance += (next.x - self.pose.x).hypot(next.y - self.pose.y);
        self.pose = next;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::arena::Aabb;
    use approx::assert_abs_diff_eq;
    use proptest::prelude::*;
    use std::f64::consts::PI;

    fn limits() -> RobotLimits {
        RobotLimits {
            max_linear_speed: 1.0,
            max_angular_speed: 2.0,
            max_linear_accel: 1e9,
            max_angular_accel: 1e9,
        }
    }

    fn open_arena() -> Arena {
        Arena {
            bounds: Aabb::new(-100.0, -100.0, 100.0, 100.0),
            obstacles: vec![],
        }
    }

    /// Closed form of the unicycle for constant (v, w) from the origin facing +x:
    /// x = (v/w) sin(w t), y = (v/w)(1 - cos(w t)), yaw = w t (textbook kinematics).
    #[test]
    fn arc_matches_closed_form() {
        let (v, w) = (0.8, 0.5);
        for &t in &[0.1, 1.0, 3.0, 2.0 * PI] {
            let p = integrate_pose(&Pose2::default(), &Twist2::new(v, 0.0, w), t);
            assert_abs_diff_eq!(p.x, v / w * (w * t).sin(), epsilon = 1e-12);
            assert_abs_diff_eq!(p.y, v / w * (1.0 - (w * t).cos()), epsilon = 1e-12);
            assert_abs_diff_eq!(p.yaw, wrap_angle(w * t), epsilon = 1e-12);
        }
        // Straight line.
        let p = integrate_pose(
            &Pose2::new(1.0, 1.0, PI / 2.0),
            &Twist2::new(2.0, 0.0, 0.0),
            1.5,
        );
        assert_abs_diff_eq!(p.x, 1.0, epsilon = 1e-12);
        assert_abs_diff_eq!(p.y, 4.0, epsilon = 1e-12);
    }

    /// A holonomic base translating sideways while turning traces a circle too: body
    /// velocity (0, vy) with rate w gives centre offset (vy/w) along -x (closed form of the
    /// rotated integral).
    #[test]
    fn holonomic_arc_closed_form() {
        let (vy, w, t) = (0.6, 0.4, 2.5);
        let p = integrate_pose(&Pose2::default(), &Twist2::new(0.0, vy, w), t);
        assert_abs_diff_eq!(p.x, -vy / w * (1.0 - (w * t).cos()), epsilon = 1e-12);
        assert_abs_diff_eq!(p.y, vy / w * (w * t).sin(), epsilon = 1e-12);
    }

    proptest! {
        /// Exact integration composes: n small steps equal one big step for constant twist.
        #[test]
        fn steps_compose(vx in -1.0f64..1.0, vy in -1.0f64..1.0, w in -2.0f64..2.0,
                         yaw in -3.0f64..3.0, n in 1usize..50) {
            let tw = Twist2::new(vx, vy, w);
            let start = Pose2::new(0.3, -0.2, yaw);
            let big = integrate_pose(&start, &tw, 2.0);
            let mut p = start;
            for _ in 0..n { p = integrate_pose(&p, &tw, 2.0 / n as f64); }
            prop_assert!((p.x - big.x).abs() < 1e-9 && (p.y - big.y).abs() < 1e-9);
            prop_assert!(wrap_angle(p.yaw - big.yaw).abs() < 1e-9);
        }
    }

    #[test]
    fn limits_clamp_velocity_and_acceleration() {
        let lim = RobotLimits {
            max_linear_accel: 0.5,
            max_angular_accel: 1.0,
            ..limits()
        };
        let mut r = Robot::new(DriveKind::DiffDrive, lim, 0.2, Pose2::default());
        r.set_command(Twist2::new(3.0, 1.0, -5.0));
        r.step(&open_arena(), 0.1);
        assert_abs_diff_eq!(r.twist().vx, 0.05, epsilon = 1e-12);
        assert_eq!(r.twist().vy, 0.0, "diff drive has no lateral velocity");
        assert_abs_diff_eq!(r.twist().wz, -0.1, epsilon = 1e-12);
        for _ in 0..100 {
            r.step(&open_arena(), 0.1);
        }
        assert_abs_diff_eq!(r.twist().vx, 1.0, epsilon = 1e-12);
        assert_abs_diff_eq!(r.twist().wz, -2.0, epsilon = 1e-12);
    }

    #[test]
    fn holonomic_speed_limit_is_on_the_vector() {
        let mut r = Robot::new(DriveKind::Holonomic, limits(), 0.2, Pose2::default());
        r.set_command(Twist2::new(3.0, 4.0, 0.0));
        r.step(&open_arena(), 0.1);
        assert_abs_diff_eq!(r.twist().vx, 0.6, epsilon = 1e-12);
        assert_abs_diff_eq!(r.twist().vy, 0.8, epsilon = 1e-12);
    }

    #[test]
    fn wall_stops_robot_and_counts_once() {
        let arena = Arena {
            bounds: Aabb::new(0.0, 0.0, 5.0, 5.0),
            obstacles: vec![Aabb::new(3.0, 0.0, 4.0, 5.0)],
        };
        let mut r = Robot::new(
            DriveKind::DiffDrive,
            limits(),
            0.25,
            Pose2::new(1.0, 2.5, 0.0),
        );
        r.set_command(Twist2::new(1.0, 0.0, 0.0));
        for _ in 0..400 {
            r.step(&arena, 0.01);
        }
        // Contact when x + 0.25 = 3: the robot rests just short of it.
        assert!(r.pose().x < 2.75 && r.pose().x > 2.74, "x = {}", r.pose().x);
        assert!(r.is_blocked());
        assert_eq!(r.collisions(), 1);
        assert_eq!(r.twist(), Twist2::default());
        // Back off, then hit the wall behind: a second collision.
        r.set_command(Twist2::new(-1.0, 0.0, 0.0));
        for _ in 0..400 {
            r.step(&arena, 0.01);
        }
        assert_eq!(r.collisions(), 2);
        assert!(r.pose().x > 0.25 && r.pose().x < 0.26);
    }
}
