//! Plume-front declaration: the source is where the plume keeps ending upwind.
//!
//! Surging upwind through a plume, the robot loses it at its upwind end, the source, casts,
//! finds it again downwind and surges back to the same end. When successive contacts stop
//! advancing upwind, the upwind end of the plume has been found. This is the source-declaration
//! idea of moth-inspired plume tracing on robots (the upwind-most detection points of
//! successive re-acquisitions cluster at the source; Li, Farrell, Pang and Arrieta, IEEE
//! Transactions on Robotics 22(2), 2006, from memory); the thresholds here are ours.
//!
//! Contract (thresholds are the `declare.plume_end.*` parameters):
//! - a *contact period* runs from a contact to its loss; its *front* is the upwind-most odom
//!   position at which a rising-event hit arrived in it, upwind taken as the heading at the
//!   loss. Periods with fewer than `min_hits` event hits are ignored (a lone spurious event);
//! - the best front so far is replaced by a period's front that lies more than `advance`
//!   metres further upwind (progress: the stall count restarts); a front within `radius` of
//!   the best that does not advance it is a *stall* and the best front moves to the mean of
//!   the fronts that stalled on it; any other front (far downwind or aside) changes nothing;
//! - a period whose front hit arrived while the way ahead was blocked by an obstacle
//!   ([`crate::avoid`]) is dropped: a plume that ends at an obstacle face says where the robot
//!   was stopped, not where the odor starts;
//! - the source is declared once `min_stalls` stalls have accumulated, at the best front.
//!
//! Only event hits place fronts: windowed plume features outlast the plume by their window,
//! so a position where they still pass is not where the odor was.

use crate::geometry::Vec2;
use crate::params::PlumeEndParams;
use std::collections::VecDeque;

/// Most hit points remembered per contact period (the oldest are forgotten first).
const MAX_POINTS: usize = 256;

/// The plume-front tracker.
#[derive(Debug, Clone)]
pub struct PlumeEndTracker {
    p: PlumeEndParams,
    period: VecDeque<(Vec2, bool)>,
    best: Option<Vec2>,
    stalled: Vec<Vec2>,
}

impl PlumeEndTracker {
    /// No contact yet.
    pub fn new(p: PlumeEndParams) -> Self {
        PlumeEndTracker { p, period: VecDeque::new(), best: None, stalled: Vec::new() }
    }

    /// Replaces the thresholds and forgets the evidence.
    pub fn set_params(&mut self, p: PlumeEndParams) {
        self.p = p;
        self.reset();
    }

    /// A rising-event hit with the robot at `at` [m, odom]; `blocked`: an obstacle blocked
    /// the way ahead at that moment.
    pub fn on_event_hit(&mut self, at: Vec2, blocked: bool) {
        if self.period.len() == MAX_POINTS {
            self.period.pop_front();
        }
        self.period.push_back((at, blocked));
    }

    /// The contact was lost, the upwind heading being `upwind` [rad, odom] (`None`: unknown,
    /// the period is dropped: without a wind there is no upwind end).
    pub fn on_loss(&mut self, upwind: Option<f64>) {
        let points = std::mem::take(&mut self.period);
        let Some(upwind) = upwind else { return };
        if points.len() < self.p.min_hits as usize {
            return;
        }
        let u = Vec2::from_angle(upwind);
        let Some((front, blocked)) = points.into_iter().max_by(|a, b| a.0.dot(u).total_cmp(&b.0.dot(u))) else { return };
        if blocked {
            return;
        }
        let Some(best) = self.best else {
            self.best = Some(front);
            return;
        };
        if (front - best).dot(u) > self.p.advance {
            self.best = Some(front);
            self.stalled.clear();
        } else if front.distance(best) <= self.p.radius {
            if self.stalled.is_empty() {
                self.stalled.push(best);
            }
            self.stalled.push(front);
            let n = self.stalled.len() as f64;
            let sum = self.stalled.iter().fold(Vec2::new(0.0, 0.0), |s, &p| s + p);
            self.best = Some(sum * (1.0 / n));
        }
    }

    /// Stalls so far (fronts that did not advance the best one).
    pub fn stalls(&self) -> u32 {
        u32::try_from(self.stalled.len().saturating_sub(1)).unwrap_or(u32::MAX)
    }

    /// The best front so far [m, odom].
    pub fn best(&self) -> Option<Vec2> {
        self.best
    }

    /// The declaration, if the evidence suffices: the estimate and a reason.
    pub fn ready(&self) -> Option<(Vec2, String)> {
        let best = self.best?;
        (self.p.enabled && self.stalls() >= self.p.min_stalls).then(|| {
            (
                best,
                format!(
                    "source declared: the plume ended {} times within {:.2} m of ({:.2}, {:.2}) without advancing upwind",
                    self.stalls() + 1,
                    self.p.radius,
                    best.x,
                    best.y
                ),
            )
        })
    }

    /// Forgets the evidence.
    pub fn reset(&mut self) {
        self.period.clear();
        self.best = None;
        self.stalled.clear();
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    const WEST: f64 = std::f64::consts::PI; // upwind: the wind blows toward +x

    fn period(t: &mut PlumeEndTracker, xs: &[f64], y: f64) {
        for &x in xs {
            t.on_event_hit(Vec2::new(x, y), false);
        }
        t.on_loss(Some(WEST));
    }

    fn tracker() -> PlumeEndTracker {
        PlumeEndTracker::new(PlumeEndParams { enabled: true, min_hits: 2, advance: 0.3, radius: 0.6, min_stalls: 2 })
    }

    #[test]
    fn progress_restarts_and_stalls_declare_at_their_mean() {
        let mut t = tracker();
        period(&mut t, &[9.0, 8.0, 7.0], 0.0); // front x = 7
        assert_eq!(t.best(), Some(Vec2::new(7.0, 0.0)));
        period(&mut t, &[8.0, 6.9], 0.0); // 0.1 m further: a stall
        assert_eq!(t.stalls(), 1);
        assert!(t.ready().is_none());
        period(&mut t, &[6.0, 5.0], 0.2); // 1.95 m further upwind: progress
        assert_eq!((t.stalls(), t.best()), (0, Some(Vec2::new(5.0, 0.2))));
        period(&mut t, &[6.0, 5.2], 0.0);
        period(&mut t, &[5.5, 4.9], -0.2);
        let (at, why) = t.ready().expect("two stalls");
        assert_abs_diff_eq!(at.x, (5.0 + 5.2 + 4.9) / 3.0, epsilon = 1e-12);
        assert_abs_diff_eq!(at.y, 0.0, epsilon = 1e-12);
        assert!(why.contains("3 times"), "{why}");
    }

    #[test]
    fn lone_events_far_fronts_and_unknown_wind_change_nothing() {
        let mut t = tracker();
        period(&mut t, &[3.0, 2.0], 0.0);
        period(&mut t, &[1.0], 0.0); // one hit: ignored
        assert_eq!(t.best(), Some(Vec2::new(2.0, 0.0)));
        period(&mut t, &[6.0, 5.0], 0.0); // re-acquired far downwind: neither progress nor stall
        period(&mut t, &[2.5, 2.1], 1.5); // aside: 1.5 m off the best front
        assert_eq!((t.stalls(), t.best()), (0, Some(Vec2::new(2.0, 0.0))));
        t.on_event_hit(Vec2::new(0.0, 0.0), false);
        t.on_event_hit(Vec2::new(0.0, 0.0), false);
        t.on_loss(None);
        assert_eq!(t.best(), Some(Vec2::new(2.0, 0.0)), "no wind: no upwind end");
        let mut off = t.clone();
        off.set_params(PlumeEndParams { enabled: false, ..PlumeEndParams::default() });
        assert!(off.best().is_none(), "new parameters forget the evidence");
        period(&mut off, &[2.0, 2.0], 0.0);
        period(&mut off, &[2.0, 2.0], 0.0);
        period(&mut off, &[2.0, 2.0], 0.0);
        assert!(off.stalls() >= 2 && off.ready().is_none(), "disabled never declares");
    }

    #[test]
    fn a_period_blocked_by_an_obstacle_never_counts() {
        let mut t = tracker();
        for _ in 0..5 {
            t.on_event_hit(Vec2::new(4.1, 0.0), false);
            t.on_event_hit(Vec2::new(4.0, 0.0), true);
            t.on_loss(Some(WEST));
        }
        assert_eq!((t.best(), t.stalls()), (None, 0), "five ends at an obstacle face: nothing");
        period(&mut t, &[4.1, 4.0], 0.0);
        period(&mut t, &[4.1, 4.0], 0.0);
        period(&mut t, &[4.1, 4.0], 0.0);
        assert!(t.ready().is_some(), "the same ends, unblocked, declare");
    }

    #[test]
    fn the_front_is_taken_upwind_at_the_loss() {
        let mut t = tracker();
        // The wind blows toward +y: upwind is -y, so the front is the point with the least y.
        for p in [Vec2::new(0.0, 3.0), Vec2::new(5.0, 1.0), Vec2::new(-2.0, 2.0)] {
            t.on_event_hit(p, false);
        }
        t.on_loss(Some(-std::f64::consts::FRAC_PI_2));
        assert_eq!(t.best(), Some(Vec2::new(5.0, 1.0)));
    }

    proptest::proptest! {
        /// Whatever the contacts: the estimate lies within the bounding box of the hit points,
        /// a declaration needs `min_stalls` stalls and the rule switched on, and a period with
        /// fewer than `min_hits` hits changes nothing.
        #[test]
        fn estimates_stay_among_the_hits(
            periods in proptest::collection::vec(
                (proptest::collection::vec((-20.0f64..20.0, -20.0f64..20.0), 0..6), -3.2f64..3.2),
                0..12,
            ),
            min_hits in 1u32..4,
            min_stalls in 1u32..4,
            enabled in proptest::bool::ANY,
        ) {
            let p = PlumeEndParams { enabled, min_hits, advance: 0.3, radius: 1.0, min_stalls };
            let mut t = PlumeEndTracker::new(p);
            let (mut lo, mut hi) = (Vec2::new(f64::INFINITY, f64::INFINITY), Vec2::new(f64::NEG_INFINITY, f64::NEG_INFINITY));
            for (points, upwind) in &periods {
                let before = (t.best(), t.stalls());
                for &(x, y) in points {
                    t.on_event_hit(Vec2::new(x, y), false);
                }
                t.on_loss(Some(*upwind));
                if points.len() < min_hits as usize {
                    proptest::prop_assert_eq!((t.best(), t.stalls()), before);
                } else {
                    for &(x, y) in points {
                        lo = Vec2::new(lo.x.min(x), lo.y.min(y));
                        hi = Vec2::new(hi.x.max(x), hi.y.max(y));
                    }
                }
                if let Some(b) = t.best() {
                    proptest::prop_assert!(b.x >= lo.x - 1e-9 && b.x <= hi.x + 1e-9 && b.y >= lo.y - 1e-9 && b.y <= hi.y + 1e-9, "{b:?} outside {lo:?}..{hi:?}");
                }
                match t.ready() {
                    Some((at, _)) => {
                        proptest::prop_assert!(enabled && t.stalls() >= min_stalls);
                        proptest::prop_assert_eq!(Some(at), t.best());
                    }
                    None => proptest::prop_assert!(!enabled || t.stalls() < min_stalls || t.best().is_none()),
                }
            }
        }
    }
}
