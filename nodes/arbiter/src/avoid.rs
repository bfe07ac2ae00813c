//! Local obstacle avoidance: the heading a strategy wants, bent just enough to pass what the
//! laser sees, so a robot surging upwind goes around an obstacle instead of sliding along its
//! face.
//!
//! Contract (thresholds are the `avoid.*` parameters):
//! - the last scan is kept as points in base_link (beam angle plus `obstacle.scan_yaw`; the
//!   scanner's offset from the base origin is neglected); only ranges within
//!   `[range_min, range_max]` and below `look_ahead + half_width` count;
//! - a direction `d` (base_link) is *free* when no point lies in the corridor ahead along `d`:
//!   `0 < p.d < look_ahead` and `|p x d| < half_width`;
//! - [`Avoider::steer`] keeps a free wanted heading as it is; otherwise it tries headings
//!   `step`, `2 step`, ... away on both sides up to `max_turn`, first on the side it chose the
//!   last time it was blocked (so it does not dither at a face), and returns the nearest free
//!   one; `None` when none is free (the guard's obstacle stop then holds the robot);
//! - [`Avoider::blocked_since`] says when the wanted heading was last not free (the plume-end
//!   declaration does not trust a plume that ends at an obstacle face).
//!
//! Pure: no clock; the caller passes the time.

use crate::geometry::{wrap_angle, Vec2};
use crate::params::AvoidParams;
use sillage_core::msg::LaserScan;
use sillage_core::Nanos;

/// Most scan points kept.
const MAX_POINTS: usize = 2048;

/// The avoidance state.
#[derive(Debug, Clone, Default)]
pub struct Avoider {
    points: Vec<Vec2>,
    side: f64,
    blocked_at: Option<Nanos>,
}

impl Avoider {
    /// Replaces the scan (already checked by the obstacle sector; bad beams are skipped).
    pub fn on_scan(&mut self, m: &LaserScan, scan_yaw: f64, p: &AvoidParams) {
        self.points.clear();
        let (rmin, rmax) = (f64::from(m.range_min), f64::from(m.range_max));
        let reach = p.look_ahead + p.half_width;
        let (a0, inc) = (f64::from(m.angle_min), f64::from(m.angle_increment));
        for (i, &r) in m.ranges.iter().enumerate() {
            let r = f64::from(r);
            if !(r.is_finite() && r >= rmin && r <= rmax && r < reach) || self.points.len() == MAX_POINTS {
                continue;
            }
            self.points.push(Vec2::from_angle(a0 + inc * i as f64 + scan_yaw) * r);
        }
    }

    /// Forgets the scan and the side (clock jump).
    pub fn reset(&mut self) {
        *self = Avoider::default();
    }

    /// Whether the corridor along `dir` [rad, base_link] is clear.
    pub fn free(&self, dir: f64, p: &AvoidParams) -> bool {
        let d = Vec2::from_angle(dir);
        self.points.iter().all(|q| {
            let along = q.dot(d);
            let across = (q.x * d.y - q.y * d.x).abs();
            !(along > 0.0 && along < p.look_ahead && across < p.half_width)
        })
    }

    /// The heading to take [rad, base_link] for the wanted one `want` at `now`.
    pub fn steer(&mut self, now: Nanos, want: f64, p: &AvoidParams) -> Option<f64> {
        if self.free(want, p) {
            return Some(want);
        }
        self.blocked_at = Some(now);
        let first = if self.side == 0.0 { 1.0 } else { self.side };
        let steps = (p.max_turn / p.step).floor() as u32;
        for k in 1..=steps {
            for side in [first, -first] {
                let dir = wrap_angle(want + side * p.step * f64::from(k));
                if self.free(dir, p) {
                    self.side = side;
                    return Some(dir);
                }
            }
        }
        None
    }

    /// When the wanted heading was last blocked.
    pub fn blocked_since(&self) -> Option<Nanos> {
        self.blocked_at
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::Header;

    /// A scan of a wall `x = d` in front of the robot (beams every degree over +-90 deg).
    fn wall(d: f64) -> LaserScan {
        let inc = 1f64.to_radians();
        let a0 = -std::f64::consts::FRAC_PI_2;
        let ranges = (0..181).map(|i| {
            let a = a0 + inc * f64::from(i);
            (if a.cos() > 1e-3 { d / a.cos() } else { 100.0 }).min(30.0) as f32
        });
        LaserScan {
            header: Header::default(),
            angle_min: a0 as f32,
            angle_max: (-a0) as f32,
            angle_increment: inc as f32,
            time_increment: 0.0,
            scan_time: 0.1,
            range_min: 0.05,
            range_max: 30.0,
            ranges: ranges.collect(),
            intensities: Vec::new(),
        }
    }

    #[test]
    fn a_wall_ahead_bends_the_heading_to_one_side_and_keeps_it() {
        let p = AvoidParams::default();
        let mut a = Avoider::default();
        a.on_scan(&wall(0.8), 0.0, &p);
        assert!(!a.free(0.0, &p), "the wall is 0.8 m ahead, within the look-ahead");
        let first = a.steer(1, 0.0, &p).expect("a way along the wall");
        // Along a wall at distance d the corridor is clear once the heading is within
        // asin-free reach: the nearest free heading is at least 60 deg off (geometry of a
        // half-width corridor against a line), and the side sticks.
        assert!(first.abs() > 0.9 && first.abs() <= std::f64::consts::FRAC_PI_2 + 1e-9, "{first}");
        let again = a.steer(2, 0.0, &p).expect("still a way");
        assert_eq!(again.signum(), first.signum(), "same side as before");
        assert_eq!(a.blocked_since(), Some(2));
        a.on_scan(&wall(10.0), 0.0, &p);
        assert_eq!(a.steer(3, 0.0, &p), Some(0.0), "far wall: the wanted heading is kept");
        assert_eq!(a.blocked_since(), Some(2));
    }

    #[test]
    fn a_post_is_passed_by_a_small_bend() {
        let p = AvoidParams::default();
        let mut a = Avoider::default();
        // One point 0.6 m dead ahead: the corridor (half-width 0.45 m) clears once the point
        // is 0.45 m off the centre line, at asin(0.45 / 0.6) = 48.6 deg.
        let mut s = wall(100.0);
        s.ranges.iter_mut().for_each(|r| *r = 29.0);
        s.ranges[90] = 0.6;
        a.on_scan(&s, 0.0, &p);
        let d = a.steer(0, 0.0, &p).expect("free");
        let need = (p.half_width / 0.6f64).asin();
        assert!(d.abs() >= need && d.abs() < need + p.step + 1e-9, "{d} vs {need}");
    }
}
