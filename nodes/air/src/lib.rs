//! The air around a robot, with one meaning for every node that reads the wind.
//!
//! Conventions (REP 103, 2-D): a wind vector points where the air goes to [m/s]; angles are CCW
//! from +x [rad]; "upwind" is the direction the air comes from, `atan2(-w_y, -w_x)`.
//!
//! Contract:
//! - **Relative wind** is what an anemometer riding on the robot reads: the air velocity
//!   relative to the sensor, `relative = true - v_sensor`, in `base_link`.
//! - **True wind** is the air velocity over the ground, in `base_link` or in the odometry's
//!   parent frame (`odom`).
//! - `v_sensor = v + omega x r` is the velocity of the anemometer at lever arm `r` from the base
//!   origin (rigid-body kinematics), from the odometry twist (child frame, taken as base_link).
//! - A wind message in the base frame (or with an empty frame) is relative when
//!   [`AirParams::relative`] is true, and true wind otherwise. A wind message in the odometry's
//!   parent frame is always a true (ground-fixed) wind: nothing is added to it.
//! - A true wind slower than [`AirParams::min_speed`] is still air: it has no direction.
//!
//! Parameters, as every node declares them (under its `wind.` group): `relative`,
//! `anemometer_x`, `anemometer_y`, `min_speed` (see [`AirParams`]).

use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, ParamError};
use thiserror::Error;

/// A planar vector `[x, y]` in the frame the context names [m/s].
pub type Xy = [f64; 2];

/// Below this true wind speed the air counts as still [m/s] (the one default of every node).
pub const DEFAULT_MIN_SPEED: f64 = 0.1;

/// How the nodes read the wind topic (the `wind.` parameters they share).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct AirParams {
    /// A base-frame wind message is the relative wind at the moving anemometer (true wind =
    /// relative + anemometer velocity from odometry); false: it is already the true wind.
    pub relative: bool,
    /// Anemometer x in base_link (the lever arm of the rotation term) [m].
    pub anemometer_x: f64,
    /// Anemometer y in base_link [m].
    pub anemometer_y: f64,
    /// True wind speeds below this are still air: no upwind direction [m/s] (> 0).
    pub min_speed: f64,
}

impl Default for AirParams {
    fn default() -> Self {
        AirParams { relative: true, anemometer_x: 0.0, anemometer_y: 0.0, min_speed: DEFAULT_MIN_SPEED }
    }
}

impl AirParams {
    /// Checks the values; `prefix` is the group's dotted key (e.g. `"wind"`).
    pub fn check(&self, prefix: &str) -> Result<(), ParamError> {
        ensure(self.anemometer_x.is_finite(), &format!("{prefix}.anemometer_x"), "must be finite [m]")?;
        ensure(self.anemometer_y.is_finite(), &format!("{prefix}.anemometer_y"), "must be finite [m]")?;
        ensure(self.min_speed.is_finite() && self.min_speed > 0.0, &format!("{prefix}.min_speed"), "must be > 0 [m/s]")
    }

    /// The anemometer's lever arm in base_link [m].
    pub fn lever_arm(&self) -> Xy {
        [self.anemometer_x, self.anemometer_y]
    }

    /// Whether a true wind of `speed` [m/s] is still air.
    pub fn is_still(&self, speed: f64) -> bool {
        speed.is_nan() || speed < self.min_speed
    }

    /// The direction a true wind `w` comes from [rad], `None` in still air (or non-finite).
    pub fn upwind(&self, w: Xy) -> Option<f64> {
        let s = norm(w);
        (s.is_finite() && !self.is_still(s)).then(|| (-w[1]).atan2(-w[0]))
    }

    /// The true wind in base_link from a base-frame reading `reading` [m/s] and the robot's
    /// motion (fresh odometry, or `None`). Relative readings without motion are used as they
    /// are and flagged `compensated: false`.
    pub fn true_wind_base(&self, reading: Xy, motion: Option<&Motion>) -> Result<TrueWind, AirError> {
        finite(reading, "wind reading")?;
        match motion {
            Some(m) if self.relative => {
                m.check()?;
                let v = m.sensor_velocity(self.lever_arm());
                Ok(TrueWind { base: [reading[0] + v[0], reading[1] + v[1]], compensated: true })
            }
            _ => Ok(TrueWind { base: reading, compensated: !self.relative }),
        }
    }

    /// The relative wind the anemometer reads for a true wind `true_base` (base_link) — the
    /// inverse of [`AirParams::true_wind_base`] with motion.
    pub fn relative_wind_base(&self, true_base: Xy, motion: &Motion) -> Xy {
        let v = motion.sensor_velocity(self.lever_arm());
        [true_base[0] - v[0], true_base[1] - v[1]]
    }
}

/// The robot's motion from odometry: twist in base_link.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Motion {
    /// Linear velocity of the base origin, base_link [m/s].
    pub velocity: Xy,
    /// Yaw rate [rad/s].
    pub omega: f64,
}

impl Motion {
    /// Velocity of a point at `r` [m] in base_link: `v + omega x r` [m/s].
    pub fn sensor_velocity(&self, r: Xy) -> Xy {
        [self.velocity[0] - self.omega * r[1], self.velocity[1] + self.omega * r[0]]
    }

    fn check(&self) -> Result<(), AirError> {
        finite(self.velocity, "odometry velocity")?;
        if self.omega.is_finite() {
            Ok(())
        } else {
            Err(AirError::NonFinite { what: "odometry yaw rate" })
        }
    }
}

/// A true wind in base_link.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrueWind {
    /// Air velocity over the ground, base_link [m/s].
    pub base: Xy,
    /// Whether the value is known to be the true wind (a relative reading corrected with
    /// odometry, or a reading configured as true); false: a relative reading used as it is.
    pub compensated: bool,
}

/// Bad wind or motion values.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum AirError {
    /// A component is NaN or infinite.
    #[error("{what} is not finite")]
    NonFinite {
        /// Which value.
        what: &'static str,
    },
}

fn finite(v: Xy, what: &'static str) -> Result<(), AirError> {
    if v[0].is_finite() && v[1].is_finite() {
        Ok(())
    } else {
        Err(AirError::NonFinite { what })
    }
}

/// Euclidean norm of `v`.
pub fn norm(v: Xy) -> f64 {
    v[0].hypot(v[1])
}

/// `v` given in base_link, expressed in the parent frame of a robot at heading `yaw` [rad].
pub fn base_to_ground(v: Xy, yaw: f64) -> Xy {
    let (s, c) = yaw.sin_cos();
    [c * v[0] - s * v[1], s * v[0] + c * v[1]]
}

/// `v` given in the parent frame, expressed in base_link of a robot at heading `yaw` [rad].
pub fn ground_to_base(v: Xy, yaw: f64) -> Xy {
    base_to_ground(v, -yaw)
}

#[cfg(test)]
mod tests;
