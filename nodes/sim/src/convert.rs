//! Conversions between the world's readings and ROS messages, and of `cmd_vel` into a body
//! twist.
//!
//! Contract: times map as ROS stamp = `epoch + world time` [ns]; the world frame is `odom`
//! (ENU, REP 105) and every body quantity is in `base_link` (REP 103: x forward, y left, yaw
//! counter-clockwise). The wind vector is the air velocity relative to the moving anemometer,
//! pointing where the air goes to (what a robot-mounted anemometer reads). Laser ranges keep
//! the REP 117 special values (+inf: no return, -inf: closer than `range_min`).

use crate::error::SimError;
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos};
use sillage_world::laser::LaserScan as WorldScan;
use sillage_world::{ChemReading, Pose2, Twist2, WindReading};

/// ROS stamp [ns] of a world time [ns] counted from `epoch` [ns].
pub fn stamp(epoch: Nanos, world_ns: u64) -> Nanos {
    epoch.saturating_add(i64::try_from(world_ns).unwrap_or(i64::MAX))
}

/// One chemical sample as `ChemSample` (quantity RESISTANCE [ohm]).
pub fn chem(epoch: Nanos, frame: &str, channels: &[String], r: &ChemReading) -> ChemSample {
    ChemSample {
        header: Header::new(stamp(epoch, r.stamp_ns), frame),
        channels: channels.to_vec(),
        values: r.resistances.clone(),
        quantity: ChemSample::RESISTANCE,
    }
}

/// One anemometer reading as `Vector3Stamped` [m/s] in the body frame.
pub fn wind(epoch: Nanos, frame: &str, w: &WindReading) -> Vector3Stamped {
    Vector3Stamped {
        header: Header::new(stamp(epoch, w.stamp_ns), frame),
        vector: Vector3 { x: w.velocity[0], y: w.velocity[1], z: w.velocity[2] },
    }
}

/// Odometry at `t` [ns]: pose of base_link in odom, body twist in base_link (perfect, so the
/// covariances are zero).
pub fn odom(t: Nanos, odom_frame: &str, base_frame: &str, pose: Pose2, twist: Twist2) -> Odometry {
    Odometry {
        header: Header::new(t, odom_frame),
        child_frame_id: base_frame.to_string(),
        pose: PoseWithCovariance {
            pose: Pose {
                position: Point { x: pose.x, y: pose.y, z: 0.0 },
                orientation: Quaternion::from_yaw(pose.yaw),
            },
            covariance: Covariance::default(),
        },
        twist: TwistWithCovariance {
            twist: Twist {
                linear: Vector3 { x: twist.vx, y: twist.vy, z: 0.0 },
                angular: Vector3 { x: 0.0, y: 0.0, z: twist.wz },
            },
            covariance: Covariance::default(),
        },
    }
}

/// One laser scan as `LaserScan`; `scan_time` is the scan period [s].
pub fn scan(epoch: Nanos, frame: &str, s: &WorldScan, scan_time: f64) -> LaserScan {
    LaserScan {
        header: Header::new(stamp(epoch, s.stamp_ns), frame),
        angle_min: s.angle_min as f32,
        angle_max: s.angle_max as f32,
        angle_increment: s.angle_increment as f32,
        time_increment: 0.0,
        scan_time: scan_time as f32,
        range_min: s.range_min as f32,
        range_max: s.range_max as f32,
        ranges: s.ranges.clone(),
        intensities: Vec::new(),
    }
}

/// `/clock` at `t` [ns].
pub fn clock(t: Nanos) -> Clock {
    Clock { clock: Time::from_nanos(t) }
}

/// The body twist a `cmd_vel` message asks for; a stamped command must be in `base_frame`
/// (or carry an empty frame), and every component must be finite.
pub fn command(msg: &Msg, base_frame: &str) -> Result<Twist2, SimError> {
    let t = match msg {
        Msg::Twist(t) => t,
        Msg::TwistStamped(s) => {
            let f = s.header.frame_id.as_str();
            if !f.is_empty() && f != base_frame {
                return Err(SimError::CommandFrame { frame: f.to_string(), expected: base_frame.to_string() });
            }
            &s.twist
        }
        other => return Err(SimError::CommandType { got: other.type_name() }),
    };
    for (field, v) in [("linear.x", t.linear.x), ("linear.y", t.linear.y), ("angular.z", t.angular.z)] {
        if !v.is_finite() {
            return Err(SimError::CommandValue { field, value: v });
        }
    }
    Ok(Twist2::new(t.linear.x, t.linear.y, t.angular.z))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn odometry_orientation_is_the_yaw_quaternion() {
        // REP 103: yaw counter-clockwise; a quarter turn is q = (0, 0, sin(pi/4), cos(pi/4)).
        let o = odom(7, "odom", "base_link", Pose2::new(1.0, 2.0, std::f64::consts::FRAC_PI_2), Twist2::new(0.3, 0.0, -0.2));
        let q = o.pose.pose.orientation;
        assert_abs_diff_eq!(q.z, std::f64::consts::FRAC_1_SQRT_2, epsilon = 1e-15);
        assert_abs_diff_eq!(q.w, std::f64::consts::FRAC_1_SQRT_2, epsilon = 1e-15);
        assert_abs_diff_eq!(q.yaw(), std::f64::consts::FRAC_PI_2, epsilon = 1e-12);
        assert_eq!((o.header.frame_id.as_str(), o.child_frame_id.as_str()), ("odom", "base_link"));
        assert_eq!(o.twist.twist.angular.z, -0.2);
    }

    #[test]
    fn commands_are_checked() {
        let mut s = TwistStamped { header: Header::new(0, "base_link"), twist: Twist::default() };
        s.twist.linear.x = 0.2;
        s.twist.angular.z = 0.5;
        assert_eq!(command(&s.clone().into(), "base_link").expect("ok"), Twist2::new(0.2, 0.0, 0.5));
        s.header.frame_id = "odom".into();
        assert!(matches!(command(&s.clone().into(), "base_link"), Err(SimError::CommandFrame { .. })));
        let mut t = Twist::default();
        t.angular.z = f64::NAN;
        assert!(matches!(command(&t.into(), "base_link"), Err(SimError::CommandValue { field: "angular.z", .. })));
        assert!(matches!(command(&Msg::Bool(Bool { data: true }), "base_link"), Err(SimError::CommandType { .. })));
    }

    #[test]
    fn stamps_count_from_the_epoch() {
        assert_eq!(stamp(1_000, 50), 1_050);
        assert_eq!(stamp(i64::MAX - 1, 10), i64::MAX);
        assert_eq!(clock(1_500_000_000).clock, Time { sec: 1, nanosec: 500_000_000 });
    }
}
