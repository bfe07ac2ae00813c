//! The air around the robot: wind and robot motion, combined into the air speed and upwind
//! direction the cues need.
//!
//! Conventions: the wind vector points where the air goes to [m/s]; everything is returned in
//! `base_link` (REP 103). Relative and true wind, the lever arm and still air mean what
//! [`sillage_air`] says: a base-frame message is the relative wind at the moving anemometer
//! when `wind.relative` is true (true wind = relative + `v + omega x r_anemometer` from fresh
//! odometry; without fresh odometry the reading is used as it is); a message in the
//! odometry's parent frame (e.g. `odom`) is a ground-fixed true wind and is rotated into
//! base_link with the odometry's yaw. Between wind messages the stored true wind is turned
//! with the robot's yaw change.
//!
//! A measurement is valid for `wind.timeout`. A non-finite one makes the wind unusable for
//! that time (a broken anemometer must not be replaced by the configured speed); a speed below
//! `wind.min_speed` means still air: no air speed and no upwind direction. With no fresh
//! measurement the configured `wind.air_speed` is used (direction unknown; 0 = none).

use crate::geometry::{angle, Vec2};
use crate::warnings::InputWarning;
use nalgebra::Rotation2;
use sillage_air::{AirParams, Motion};
use sillage_core::msg::{Odometry, Vector3Stamped};
use sillage_core::Nanos;

/// Settings of [`Air`].
#[derive(Debug, Clone, PartialEq)]
pub struct AirSettings {
    /// The robot's base frame (wind in this frame or in `""` is base-fixed).
    pub base_frame: String,
    /// Relative vs true wind, lever arm and still-air speed (shared meaning).
    pub air: AirParams,
    /// How long a wind message is valid [ns].
    pub wind_timeout: Nanos,
    /// How long an odometry message is valid [ns].
    pub odom_timeout: Nanos,
    /// Air speed when no wind is measured [m/s]; 0 = none.
    pub air_speed: f64,
}

/// Where the air speed came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SpeedSource {
    /// A fresh wind measurement.
    Measured,
    /// The `wind.air_speed` parameter (no fresh measurement).
    Configured,
    /// A fresh measurement below `wind.min_speed`.
    StillAir,
    /// A fresh non-finite measurement.
    Invalid,
    /// No measurement and no configured speed.
    Unknown,
}

/// The air as the cues see it at one instant (base_link).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AirContext {
    /// Ground speed of the air [m/s], when known.
    pub speed: Option<f64>,
    /// Direction the air comes from [rad], when measured.
    pub upwind: Option<f64>,
    /// Velocity of the sensors (the base) [m/s]; zero without fresh odometry.
    pub velocity: Vec2,
    /// Where `speed` came from.
    pub source: SpeedSource,
    /// Whether the wind was corrected for the robot's motion.
    pub compensated: bool,
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct OdomState {
    t: Nanos,
    velocity: Vec2,
    omega: f64,
    yaw: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum WindState {
    Valid { t: Nanos, true_wind: Vec2, yaw: Option<f64>, compensated: bool },
    Invalid { t: Nanos },
}

/// Latest wind and odometry.
#[derive(Debug, Clone, PartialEq)]
pub struct Air {
    settings: AirSettings,
    odom: Option<OdomState>,
    odom_frame: String,
    wind: Option<WindState>,
}

impl Air {
    /// No measurement yet.
    pub fn new(settings: AirSettings) -> Air {
        Air { settings, odom: None, odom_frame: String::new(), wind: None }
    }

    /// Replaces the settings, keeping the latest measurements.
    pub fn set_settings(&mut self, settings: AirSettings) {
        self.settings = settings;
    }

    fn fresh_odom(&self, now: Nanos) -> Option<&OdomState> {
        self.odom.as_ref().filter(|o| now - o.t <= self.settings.odom_timeout)
    }

    /// The robot's heading [rad, odometry frame] from the latest odometry, fresh or not (a
    /// heading ages slowly; the onsets are only compared with each other by it).
    pub fn yaw(&self) -> Option<f64> {
        self.odom.map(|o| o.yaw)
    }

    /// Takes an odometry message received at `now` [ns].
    pub fn on_odom(&mut self, now: Nanos, m: &Odometry) -> Result<(), InputWarning> {
        let lin = &m.twist.twist.linear;
        let omega = m.twist.twist.angular.z;
        let yaw = m.pose.pose.orientation.yaw();
        if !(lin.x.is_finite() && lin.y.is_finite() && omega.is_finite() && yaw.is_finite()) {
            return Err(InputWarning::NonFiniteOdom { stamp: m.header.stamp.to_nanos() });
        }
        if self.odom_frame != m.header.frame_id {
            self.odom_frame.clone_from(&m.header.frame_id);
        }
        self.odom = Some(OdomState { t: now, velocity: Vec2::new(lin.x, lin.y), omega, yaw });
        Ok(())
    }

    /// Takes a wind message received at `now` [ns].
    pub fn on_wind(&mut self, now: Nanos, m: &Vector3Stamped) -> Result<(), InputWarning> {
        let stamp = m.header.stamp.to_nanos();
        let w = Vec2::new(m.vector.x, m.vector.y);
        if !(w.x.is_finite() && w.y.is_finite()) {
            self.wind = Some(WindState::Invalid { t: now });
            return Err(InputWarning::NonFiniteWind { stamp });
        }
        let frame = m.header.frame_id.as_str();
        let odom = self.fresh_odom(now).copied();
        let (true_wind, compensated) = if frame.is_empty() || frame == self.settings.base_frame {
            let motion = odom.map(|o| Motion { velocity: [o.velocity.x, o.velocity.y], omega: o.omega });
            let t = self.settings.air.true_wind_base([w.x, w.y], motion.as_ref()).map_err(|_| InputWarning::NonFiniteWind { stamp })?;
            (Vec2::new(t.base[0], t.base[1]), t.compensated)
        } else if frame == self.odom_frame && odom.is_some() {
            let yaw = odom.map_or(0.0, |o| o.yaw);
            (Rotation2::new(-yaw) * w, true)
        } else {
            return Err(InputWarning::WindFrame { stamp, frame: frame.to_string() });
        };
        self.wind = Some(WindState::Valid { t: now, true_wind, yaw: odom.map(|o| o.yaw), compensated });
        let speed = true_wind.norm();
        if self.settings.air.is_still(speed) {
            return Err(InputWarning::StillAir { stamp, speed });
        }
        Ok(())
    }

    /// The air at `now` [ns].
    pub fn context(&self, now: Nanos) -> AirContext {
        let odom = self.fresh_odom(now);
        let velocity = odom.map_or(Vec2::zeros(), |o| o.velocity);
        let mut ctx = AirContext { speed: None, upwind: None, velocity, source: SpeedSource::Unknown, compensated: false };
        match self.wind {
            Some(WindState::Invalid { t }) if now - t <= self.settings.wind_timeout => ctx.source = SpeedSource::Invalid,
            Some(WindState::Valid { t, true_wind, yaw, compensated }) if now - t <= self.settings.wind_timeout => {
                let turn = match (yaw, odom) {
                    (Some(then), Some(o)) => then - o.yaw,
                    _ => 0.0,
                };
                let w = Rotation2::new(turn) * true_wind;
                ctx.compensated = compensated;
                if self.settings.air.is_still(w.norm()) {
                    ctx.source = SpeedSource::StillAir;
                } else {
                    ctx.speed = Some(w.norm());
                    ctx.upwind = Some(angle(&(-w)));
                    ctx.source = SpeedSource::Measured;
                }
            }
            _ if self.settings.air_speed > 0.0 => {
                ctx.speed = Some(self.settings.air_speed);
                ctx.source = SpeedSource::Configured;
            }
            _ => {}
        }
        ctx
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::{Header, Quaternion, Vector3};

    const MS: Nanos = 1_000_000;
    const DEG: f64 = std::f64::consts::PI / 180.0;

    fn settings() -> AirSettings {
        AirSettings {
            base_frame: "base_link".into(),
            air: AirParams { min_speed: 0.05, ..AirParams::default() },
            wind_timeout: 1000 * MS,
            odom_timeout: 500 * MS,
            air_speed: 0.5,
        }
    }

    fn wind(x: f64, y: f64, frame: &str) -> Vector3Stamped {
        Vector3Stamped { header: Header::new(0, frame), vector: Vector3 { x, y, z: 0.0 } }
    }

    fn odom(vx: f64, vy: f64, omega: f64, yaw: f64) -> Odometry {
        let mut o = Odometry::default();
        o.header.frame_id = "odom".into();
        o.twist.twist.linear = Vector3 { x: vx, y: vy, z: 0.0 };
        o.twist.twist.angular.z = omega;
        o.pose.pose.orientation = Quaternion::from_yaw(yaw);
        o
    }

    #[test]
    fn apparent_wind_is_compensated_with_odometry() {
        // True wind 0.5 m/s from the front (air goes to -x); robot drives forward at 0.3 m/s:
        // the anemometer sees apparent = true - v = (-0.8, 0).
        let mut air = Air::new(settings());
        air.on_odom(0, &odom(0.3, 0.0, 0.0, 0.0)).expect("valid");
        air.on_wind(10 * MS, &wind(-0.8, 0.0, "base_link")).expect("valid");
        let c = air.context(20 * MS);
        assert!(c.compensated && c.source == SpeedSource::Measured);
        assert!((c.speed.expect("speed") - 0.5).abs() < 1e-12);
        assert!(c.upwind.expect("upwind").abs() < 1e-12);
        assert_eq!(c.velocity, Vec2::new(0.3, 0.0));
    }

    #[test]
    fn rotation_at_an_offset_anemometer_and_odom_frame_wind() {
        // Turning in place at 1 rad/s with the anemometer 0.2 m ahead: it moves at +0.2 m/s in y.
        let mut s = settings();
        s.air.anemometer_x = 0.2;
        let mut air = Air::new(s);
        air.on_odom(0, &odom(0.0, 0.0, 1.0, 0.0)).expect("valid");
        air.on_wind(0, &wind(-0.5, -0.2, "")).expect("valid");
        assert!(air.context(0).upwind.expect("upwind").abs() < 1e-12);
        // A ground-fixed wind (odom frame) going to +y while the robot faces +y (yaw 90 deg):
        // in base_link the air goes forward (+x), so upwind is behind (180 deg).
        air.on_odom(MS, &odom(0.0, 0.0, 0.0, 90.0 * DEG)).expect("valid");
        air.on_wind(MS, &wind(0.0, 0.6, "odom")).expect("valid");
        let up = air.context(MS).upwind.expect("upwind");
        assert!((up.abs() - 180.0 * DEG).abs() < 1e-9, "{}", up / DEG);
        // The robot then turns to yaw 0: the same air now comes from the right (-90 deg).
        air.on_odom(2 * MS, &odom(0.0, 0.0, 0.0, 0.0)).expect("valid");
        let up = air.context(2 * MS).upwind.expect("upwind");
        assert!((up + 90.0 * DEG).abs() < 1e-9, "{}", up / DEG);
    }

    #[test]
    fn bad_still_stale_and_missing_wind() {
        let mut air = Air::new(settings());
        assert_eq!(air.context(0).source, SpeedSource::Configured);
        assert!(matches!(air.on_wind(0, &wind(f64::NAN, 0.0, "")), Err(InputWarning::NonFiniteWind { .. })));
        assert_eq!(air.context(10 * MS).source, SpeedSource::Invalid);
        assert_eq!(air.context(10 * MS).speed, None);
        assert_eq!(air.context(2000 * MS).source, SpeedSource::Configured, "invalid state expires");
        assert!(matches!(air.on_wind(3000 * MS, &wind(0.0, 0.0, "")), Err(InputWarning::StillAir { .. })));
        let c = air.context(3000 * MS);
        assert_eq!((c.source, c.speed, c.upwind), (SpeedSource::StillAir, None, None));
        assert!(matches!(air.on_wind(0, &wind(1.0, 0.0, "map")), Err(InputWarning::WindFrame { .. })));
        assert!(matches!(air.on_odom(0, &odom(f64::NAN, 0.0, 0.0, 0.0)), Err(InputWarning::NonFiniteOdom { .. })));
        let mut none = settings();
        none.air_speed = 0.0;
        assert_eq!(Air::new(none).context(0).source, SpeedSource::Unknown);
    }
}
