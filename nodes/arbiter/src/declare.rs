//! Source declaration: when the plume evidence says the robot is at the source.
//!
//! Contract (thresholds are the `declare.*` parameters): a features message *passes* when the
//! robot is in contact, `bout_rate >= min_bout_rate`, `intermittency >= min_intermittency`,
//! and the distance criterion holds: a usable distance (finite, with a finite sigma <=
//! `max_sigma`) must be <= `max_distance`; without a usable distance the message passes only
//! if `require_distance` is false. The source is declared once messages have passed without a
//! failing one in between for at least `dwell` seconds (a single passing message suffices when
//! `dwell` is 0).
//!
//! The estimate (odom frame): the robot position plus the calibrated distance along the last
//! valid bearing (or, without one, along the upwind heading); the position itself without a
//! usable distance or any direction.

use crate::geometry::{Vec2, Pose2};
use crate::inputs::FeaturesObs;
use crate::params::DeclareParams;
use sillage_core::time::{nanos, secs};
use sillage_core::Nanos;

/// The declaration evidence tracker.
#[derive(Debug, Clone)]
pub struct Declarer {
    p: DeclareParams,
    since: Option<Nanos>,
    last: Option<FeaturesObs>,
}

impl Declarer {
    /// No evidence yet.
    pub fn new(p: DeclareParams) -> Self {
        Declarer { p, since: None, last: None }
    }

    /// Replaces the thresholds and forgets the evidence.
    pub fn set_params(&mut self, p: DeclareParams) {
        self.p = p;
        self.since = None;
    }

    /// Whether `f` passes the thresholds.
    pub fn passes(&self, f: &FeaturesObs, in_contact: bool) -> bool {
        let p = &self.p;
        let distance_ok = match f.distance {
            Some((d, sigma)) if sigma <= p.max_sigma => d <= p.max_distance,
            _ => !p.require_distance,
        };
        p.enabled && in_contact && f.bout_rate >= p.min_bout_rate && f.intermittency >= p.min_intermittency && distance_ok
    }

    /// A features message at `now`.
    pub fn on_features(&mut self, now: Nanos, f: &FeaturesObs, in_contact: bool) {
        if self.passes(f, in_contact) {
            self.since.get_or_insert(now);
            self.last = Some(*f);
        } else {
            self.since = None;
        }
    }

    /// The reason to declare at `now`, if the evidence has held long enough.
    pub fn ready(&self, now: Nanos) -> Option<String> {
        let since = self.since?;
        let f = self.last?;
        if now.saturating_sub(since) < nanos(self.p.dwell) {
            return None;
        }
        let p = &self.p;
        let distance = match f.distance {
            Some((d, s)) if s <= p.max_sigma => format!("distance {d:.2} m (sigma {s:.2} m) <= {:.2} m", p.max_distance),
            _ => "no usable distance".to_string(),
        };
        Some(format!(
            "source declared: {distance}, bout rate {:.2} Hz >= {:.2} Hz, intermittency {:.2} >= {:.2}, held {:.1} s",
            f.bout_rate,
            p.min_bout_rate,
            f.intermittency,
            p.min_intermittency,
            secs(now.saturating_sub(since))
        ))
    }

    /// The source estimate [m, odom] from the pose, the last bearing [rad, odom] and the
    /// upwind heading [rad, odom].
    pub fn estimate(&self, pose: &Pose2, bearing_odom: Option<f64>, upwind: Option<f64>) -> Vec2 {
        let d = match self.last.and_then(|f| f.distance) {
            Some((d, s)) if s <= self.p.max_sigma => d,
            _ => return pose.position,
        };
        match bearing_odom.or(upwind) {
            Some(h) => pose.position + Vec2::from_angle(h) * d,
            None => pose.position,
        }
    }

    /// Forgets the evidence.
    pub fn reset(&mut self) {
        self.since = None;
        self.last = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use sillage_core::time::SECOND;

    fn near() -> FeaturesObs {
        FeaturesObs { bout_rate: 2.0, intermittency: 0.5, distance: Some((0.3, 0.1)) }
    }

    #[test]
    fn evidence_must_hold_for_the_dwell_time() {
        let mut d = Declarer::new(DeclareParams::default());
        d.on_features(0, &near(), true);
        assert!(d.ready(2 * SECOND).is_none());
        d.on_features(2 * SECOND, &FeaturesObs { bout_rate: 0.5, ..near() }, true);
        d.on_features(3 * SECOND, &near(), true);
        assert!(d.ready(5 * SECOND).is_none(), "a failing message restarts the dwell");
        let r = d.ready(6 * SECOND).expect("held 3 s");
        assert!(r.contains("distance 0.30 m") && r.contains("held 3.0 s"), "{r}");
        assert!(!d.passes(&near(), false), "out of contact never passes");
        assert!(!d.passes(&FeaturesObs { distance: Some((0.8, 0.1)), ..near() }, true));
        assert!(d.passes(&FeaturesObs { distance: Some((0.8, 0.9)), ..near() }, true), "too uncertain: treated as no distance");
        let strict = Declarer::new(DeclareParams { require_distance: true, ..Default::default() });
        assert!(!strict.passes(&FeaturesObs { distance: None, ..near() }, true));
    }

    #[test]
    fn estimate_adds_the_distance_along_the_bearing() {
        let mut d = Declarer::new(DeclareParams::default());
        d.on_features(0, &near(), true);
        let pose = Pose2 { position: Vec2::new(1.0, 1.0), yaw: 0.0 };
        let e = d.estimate(&pose, Some(std::f64::consts::FRAC_PI_2), Some(0.0));
        assert_abs_diff_eq!(e.x, 1.0, epsilon = 1e-12);
        assert_abs_diff_eq!(e.y, 1.3, epsilon = 1e-12);
        let e = d.estimate(&pose, None, Some(0.0));
        assert_abs_diff_eq!(e.x, 1.3, epsilon = 1e-12);
        d.on_features(SECOND, &FeaturesObs { distance: None, ..near() }, true);
        assert_eq!(d.estimate(&pose, Some(0.0), None), pose.position);
    }
}
