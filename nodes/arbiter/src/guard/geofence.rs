//! The geofence: a simple polygon in the odom frame the robot must not leave.
//!
//! Contract: a command's planar velocity, rotated into odom, defines a look-ahead point
//! `q = position + margin * direction`. The command may keep its linear part when `q` is
//! inside the polygon, or when the robot is outside already and the motion heads toward the
//! nearest boundary point (so it can come back in). Otherwise:
//! - `stop`: the linear part is zeroed; rotation stays allowed, so a strategy that turns the
//!   robot back in can continue;
//! - `turn_back`: the command becomes a turn toward the inside (from `q` to its nearest
//!   boundary point, or from the robot to its nearest boundary point when outside) at the
//!   heading gain, with forward speed only while roughly facing inward (as [`crate::drive`]).
//!
//! Pure rotations are never refused. The fence is a safety net, not a planner: a strategy that
//! keeps steering out will stand (stop) or dither (turn_back) at the fence.

use crate::drive::{Cmd, Drive, Motion};
use crate::geometry::{Polygon, Pose2};
use crate::params::FenceAction;

/// What the fence did to a command.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FenceVerdict {
    /// The command stays.
    Clear,
    /// Its linear part was zeroed.
    Stopped,
    /// It was replaced by a turn back inside.
    TurnedBack,
}

/// The fence.
#[derive(Debug, Clone, PartialEq)]
pub struct Geofence {
    /// The polygon [m, odom].
    pub polygon: Polygon,
    /// The action at the fence.
    pub action: FenceAction,
    /// Look-ahead [m].
    pub margin: f64,
}

impl Geofence {
    /// Applies the fence to `c` at `pose`; `drive` steers the turn back.
    pub fn apply(&self, c: Cmd, pose: &Pose2, drive: &Drive) -> (Cmd, FenceVerdict) {
        let v = pose.to_odom(crate::geometry::Vec2::new(c.vx, c.vy));
        let speed = v.norm();
        if speed <= 1e-9 {
            return (c, FenceVerdict::Clear);
        }
        let p = pose.position;
        let q = p + v * (self.margin / speed);
        let inside_p = self.polygon.contains(p);
        if self.polygon.contains(q) {
            return (c, FenceVerdict::Clear);
        }
        let toward_boundary = self.polygon.nearest_on_boundary(p) - p;
        if !inside_p && v.dot(toward_boundary) > 0.0 {
            return (c, FenceVerdict::Clear);
        }
        match self.action {
            FenceAction::Stop => (Cmd { vx: 0.0, vy: 0.0, wz: c.wz }, FenceVerdict::Stopped),
            FenceAction::TurnBack => {
                let inward = if inside_p { self.polygon.nearest_on_boundary(q) - q } else { toward_boundary };
                let heading = if inward.norm() > 1e-9 { inward.angle() } else { (-v).angle() };
                (drive.command(&Motion::heading(heading, speed), pose), FenceVerdict::TurnedBack)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::Vec2;
    use crate::params::{BaseKind, DriveParams};

    fn fence(action: FenceAction) -> Geofence {
        let polygon = Polygon::from_flat(&[0.0, 0.0, 4.0, 0.0, 4.0, 4.0, 0.0, 4.0]).expect("square");
        Geofence { polygon, action, margin: 0.5 }
    }

    #[test]
    fn motion_out_is_refused_motion_in_is_kept() {
        let drive = Drive { p: DriveParams::default(), base: BaseKind::DiffDrive };
        let f = fence(FenceAction::Stop);
        let fwd = Cmd { vx: 0.2, vy: 0.0, wz: 0.1 };
        let near_east = Pose2 { position: Vec2::new(3.7, 2.0), yaw: 0.0 };
        assert_eq!(f.apply(fwd, &near_east, &drive), (Cmd { vx: 0.0, vy: 0.0, wz: 0.1 }, FenceVerdict::Stopped));
        let facing_in = Pose2 { yaw: std::f64::consts::PI, ..near_east };
        assert_eq!(f.apply(fwd, &facing_in, &drive).1, FenceVerdict::Clear);
        let outside_coming_back = Pose2 { position: Vec2::new(4.5, 2.0), yaw: std::f64::consts::PI };
        assert_eq!(f.apply(fwd, &outside_coming_back, &drive).1, FenceVerdict::Clear);
        assert_eq!(f.apply(Cmd { vx: 0.0, vy: 0.0, wz: 1.0 }, &near_east, &drive).1, FenceVerdict::Clear);
        // Turn back: facing +x at the east edge, the inside is to the west: turn (either way,
        // the error is pi) with no forward speed until facing inward.
        let t = fence(FenceAction::TurnBack);
        let (c, v) = t.apply(fwd, &near_east, &drive);
        assert_eq!(v, FenceVerdict::TurnedBack);
        assert!(c.vx == 0.0 && c.wz.abs() > 1.0, "{c:?}");
        let heading_ne = Pose2 { yaw: 0.3, ..near_east };
        let (c, _) = t.apply(fwd, &heading_ne, &drive);
        assert!(c.wz > 0.0, "facing north-east: the shorter turn inward is to the left, {c:?}");
    }
}
