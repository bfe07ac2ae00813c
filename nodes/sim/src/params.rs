//! Parameters of the simulated-world node (`sim_world: ros__parameters:`), with documented
//! defaults and units; [`NodeParams::validate`] names the dotted key it rejects.
//!
//! Start-up-only keys: `rate`, `cmd_vel_stamped`, `seed`, `start_pose` and `scenario` fix the
//! timer, the input port type and the world itself, so a run-time change of them is refused.

use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, NodeParams, ParamError};

/// Frame names (REP 105).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Frames {
    /// Odometry frame: `odom.header.frame_id` (the world frame, ENU).
    pub odom: String,
    /// Robot body frame: `odom.child_frame_id`, `wind` and `chem` frames, expected frame of a
    /// stamped `cmd_vel`.
    pub base: String,
    /// Frame of `scan` (the scanner, mounted in base_link as the scenario's `laser.mount` says).
    pub laser: String,
}

impl Default for Frames {
    fn default() -> Self {
        Frames { odom: "odom".into(), base: "base_link".into(), laser: "laser".into() }
    }
}

/// Parameters of the simulated-world node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WorldParams {
    /// Scenario file [path]; read by the host at start-up (the core itself gets the parsed
    /// scenario and does no I/O). Empty: the host supplies the scenario otherwise.
    pub scenario: String,
    /// Seed of every random process of the world (start-up only).
    pub seed: u64,
    /// Index into the scenario's `robot.start_poses` (start-up only).
    pub start_pose: usize,
    /// Timer rate [Hz]: the world advances and publishes on each tick (start-up only). Sensor
    /// rates that divide it give stamps equal to the publication time.
    pub rate: f64,
    /// Odometry publication rate [Hz] (<= `rate`).
    pub odom_rate: f64,
    /// Publish `/clock` on every tick.
    pub publish_clock: bool,
    /// `cmd_vel` type: true geometry_msgs/TwistStamped, false geometry_msgs/Twist; must match
    /// the arbiter's parameter of the same name (start-up only).
    pub cmd_vel_stamped: bool,
    /// Without a command for this long the robot is commanded to stop [s] (0: hold the last
    /// command forever).
    pub cmd_timeout: f64,
    /// Frame names.
    pub frames: Frames,
}

impl Default for WorldParams {
    fn default() -> Self {
        WorldParams {
            scenario: String::new(),
            seed: 0,
            start_pose: 0,
            rate: 100.0,
            odom_rate: 50.0,
            publish_clock: true,
            cmd_vel_stamped: true,
            cmd_timeout: 0.5,
            frames: Frames::default(),
        }
    }
}

fn frame(name: &str, key: &str) -> Result<(), ParamError> {
    ensure(!name.is_empty() && !name.contains(char::is_whitespace), key, "must be a non-empty frame name without spaces")
}

impl NodeParams for WorldParams {
    fn validate(&self) -> Result<(), ParamError> {
        ensure(
            self.rate.is_finite() && self.rate > 0.0 && self.rate <= 10_000.0,
            "rate",
            format!("must be in (0, 10000] [Hz], got {}", self.rate),
        )?;
        ensure(
            self.odom_rate.is_finite() && self.odom_rate > 0.0 && self.odom_rate <= self.rate,
            "odom_rate",
            format!("must be in (0, rate = {}] [Hz], got {}", self.rate, self.odom_rate),
        )?;
        ensure(
            self.cmd_timeout.is_finite() && self.cmd_timeout >= 0.0,
            "cmd_timeout",
            format!("must be >= 0 [s], got {}", self.cmd_timeout),
        )?;
        frame(&self.frames.odom, "frames.odom")?;
        frame(&self.frames.base, "frames.base")?;
        frame(&self.frames.laser, "frames.laser")?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::params;

    #[test]
    fn defaults_validate_and_bad_values_name_their_key() {
        assert_eq!(WorldParams::default().validate(), Ok(()));
        let v: serde_yaml::Value = serde_yaml::from_str("odom_rate: 500.0").expect("yaml");
        let e = params::from_value::<WorldParams>(&v).expect_err("above rate");
        assert_eq!(e.key(), "odom_rate");
        let v: serde_yaml::Value = serde_yaml::from_str("frames: {laser: 'a b'}").expect("yaml");
        assert_eq!(params::from_value::<WorldParams>(&v).expect_err("space").key(), "frames.laser");
        let v: serde_yaml::Value = serde_yaml::from_str("no_such: 1").expect("yaml");
        assert_eq!(params::from_value::<WorldParams>(&v).expect_err("unknown").key(), "no_such");
        // Integers are accepted for float keys (ROS parameter files often carry them).
        let v: serde_yaml::Value = serde_yaml::from_str("rate: 200\nodom_rate: 20").expect("yaml");
        assert_eq!(params::from_value::<WorldParams>(&v).expect("ints").rate, 200.0);
    }
}
