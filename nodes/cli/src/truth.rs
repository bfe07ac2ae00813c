//! Ground truth in recorded bags, shared by `sillage calibrate` (distance labels) and the bag
//! objectives of `sillage tune` (bearing and distance error).
//!
//! A truth topic carries where the source is relative to the robot:
//! - `geometry_msgs/PointStamped`: the source position in the robot's frame (base_link), as it is;
//! - `nav_msgs/Odometry`: the robot's true pose in a fixed frame, with the source position in
//!   that frame given apart (`X,Y[,Z]`; without Z the distance is horizontal). The relative
//!   position is the source minus the robot's position, turned by minus the robot's yaw into
//!   base_link (REP 103: x forward, y left), so its angle is the true bearing of the source.

use anyhow::{bail, Result};
use sillage_bag::BagInfo;
use sillage_core::any::normalize_type_name;
use sillage_core::msg::{Odometry, PointStamped};
use sillage_core::{Msg, Nanos, RosMessage};

/// What a truth topic carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TruthKind {
    /// The robot's pose (needs the source position).
    Pose,
    /// The source relative to the robot.
    Relative,
}

/// The bag's topics as `name [type]`, for messages.
pub fn topic_list(info: &BagInfo) -> String {
    info.topics.iter().map(|t| format!("{} [{}]", t.name, t.type_name)).collect::<Vec<_>>().join(", ")
}

/// The kind of truth `topic` carries in the bag. `option` and `source_option` name the settings
/// in messages (e.g. `--truth` and `--source X,Y[,Z]`).
pub fn truth_kind(info: &BagInfo, topic: &str, has_source: bool, option: &str, source_option: &str) -> Result<TruthKind> {
    let Some(t) = info.topics.iter().find(|t| t.name == topic) else {
        bail!("{option} {topic}: not a topic of the bag (topics: {})", topic_list(info));
    };
    let ty = normalize_type_name(&t.type_name);
    if ty == Odometry::TYPE_NAME {
        anyhow::ensure!(has_source, "{option} {topic} is an Odometry topic: give the source position with {source_option}");
        Ok(TruthKind::Pose)
    } else if ty == PointStamped::TYPE_NAME {
        Ok(TruthKind::Relative)
    } else {
        bail!("{option} {topic} has type {ty}; expected {} or {}", PointStamped::TYPE_NAME, Odometry::TYPE_NAME)
    }
}

/// The source relative to the robot (base_link) [m] that a truth message gives; `source` is the
/// source position for an Odometry message. `None` for other messages or non-finite values.
pub fn relative_source(msg: &Msg, source: Option<&[f64]>) -> Option<[f64; 3]> {
    let r = match (msg, source) {
        (Msg::PointStamped(p), _) => [p.point.x, p.point.y, p.point.z],
        (Msg::Odometry(o), Some(s)) if s.len() >= 2 => {
            let pose = &o.pose.pose;
            let (dx, dy) = (s[0] - pose.position.x, s[1] - pose.position.y);
            let dz = s.get(2).map_or(0.0, |z| z - pose.position.z);
            let (sin, cos) = pose.orientation.yaw().sin_cos();
            [cos * dx + sin * dy, -sin * dx + cos * dy, dz]
        }
        _ => return None,
    };
    r.iter().all(|x| x.is_finite()).then_some(r)
}

/// Euclidean length of a relative position [m].
pub fn norm(r: &[f64; 3]) -> f64 {
    (r[0] * r[0] + r[1] * r[1] + r[2] * r[2]).sqrt()
}

/// The relative source position over time, interpolated between samples.
#[derive(Debug, Clone, Default)]
pub struct SourceTrack {
    samples: Vec<(Nanos, [f64; 3])>,
}

impl SourceTrack {
    /// Adds a sample (kept in time order).
    pub fn push(&mut self, t: Nanos, r: [f64; 3]) {
        let i = self.samples.partition_point(|s| s.0 <= t);
        self.samples.insert(i, (t, r));
    }

    /// Number of samples.
    pub fn len(&self) -> usize {
        self.samples.len()
    }

    /// The position at `t`, linear between the samples around it when they are at most
    /// `max_gap` [ns] apart (a sample at `t` is used as it is); `None` outside.
    pub fn at(&self, t: Nanos, max_gap: Nanos) -> Option<[f64; 3]> {
        let i = self.samples.partition_point(|s| s.0 < t);
        match (i.checked_sub(1).and_then(|j| self.samples.get(j)), self.samples.get(i)) {
            (_, Some((t1, r1))) if *t1 == t => Some(*r1),
            (Some((t0, r0)), Some((t1, r1))) if t1 - t0 <= max_gap => {
                let f = (t - t0) as f64 / (t1 - t0) as f64;
                Some(std::array::from_fn(|k| r0[k] + (r1[k] - r0[k]) * f))
            }
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::{Header, Point, Pose, Quaternion};

    fn odom(x: f64, y: f64, yaw: f64) -> Msg {
        let mut o = Odometry { header: Header::new(0, "odom"), ..Default::default() };
        o.pose.pose = Pose { position: Point { x, y, z: 0.0 }, orientation: Quaternion::from_yaw(yaw) };
        Msg::Odometry(Box::new(o))
    }

    #[test]
    fn the_source_is_turned_into_the_robot_frame() {
        // Robot at (1, 1) facing +y; source at (1, 3): straight ahead, 2 m.
        let r = relative_source(&odom(1.0, 1.0, std::f64::consts::FRAC_PI_2), Some(&[1.0, 3.0])).unwrap_or_default();
        assert!((r[0] - 2.0).abs() < 1e-12 && r[1].abs() < 1e-12, "{r:?}");
        // Facing +x, source at (1, 3): on the left (bearing +90 deg).
        let r = relative_source(&odom(1.0, 1.0, 0.0), Some(&[1.0, 3.0, 0.5])).unwrap_or_default();
        assert!((r[1].atan2(r[0]) - std::f64::consts::FRAC_PI_2).abs() < 1e-12 && (norm(&r) - 4.25f64.sqrt()).abs() < 1e-12);
        assert_eq!(relative_source(&odom(0.0, 0.0, 0.0), None), None, "odometry needs a source");
        let p = Msg::PointStamped(PointStamped { header: Header::new(0, "base_link"), point: Point { x: 3.0, y: 4.0, z: 0.0 } });
        assert_eq!(relative_source(&p, None).map(|r| norm(&r)), Some(5.0));
    }

    #[test]
    fn the_track_interpolates_within_the_gap_only() {
        let mut t = SourceTrack::default();
        t.push(20, [2.0, 0.0, 0.0]);
        t.push(10, [1.0, 0.0, 0.0]);
        t.push(100, [5.0, 0.0, 0.0]);
        assert_eq!(t.at(15, 50), Some([1.5, 0.0, 0.0]));
        assert_eq!(t.at(20, 50), Some([2.0, 0.0, 0.0]));
        assert_eq!(t.at(60, 50), None, "gap of 80 ns");
        assert_eq!(t.at(5, 50), None);
        assert_eq!(t.at(101, 50), None);
    }
}
