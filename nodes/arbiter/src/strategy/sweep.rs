//! Plume acquisition: crosswind sweeps that widen and walk downwind, for a robot that has no
//! contact (before the first one, or once a cast has given up), shared by the strategies.
//!
//! Contract of [`Sweep`] (parameters `sweep.*`, speed `cast.speed`): legs run crosswind, on
//! lines perpendicular to the upwind heading read at each leg's start (the robot's yaw when
//! the wind is unknown). Leg `k` ends at `origin + side_k * h_k * left + a_k * downwind`, with
//! `side_0 = +1` alternating, `h_0 = sweep.width_initial`, `h_k = min(h_{k-1} * sweep.growth,
//! sweep.width_max)`, and `a_k = a_{k-1} + sweep.spacing * dir`, `a_0 = 0`, `dir = +1`
//! (downwind) until `a_k > sweep.max_downwind`, then `-1` (upwind of the origin) until
//! `a_k < -sweep.max_upwind`, and so on: the sweep never ends. A plume that passes downwind of
//! the origin is crossed on the way downwind, a source upwind of it on the way back. A leg
//! ends within `cast.arrive_tolerance` of its end or after `cast.leg_time_factor` times its
//! nominal duration (a wall, an obstacle or the geofence in the way).

use super::Context;
use crate::drive::Motion;
use crate::geometry::Vec2;
use crate::params::{CastParams, SweepParams};
use sillage_core::time::nanos;
use sillage_core::Nanos;

/// The acquisition sweep.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sweep {
    origin: Vec2,
    leg: u32,
    side: f64,
    half: f64,
    along: f64,
    dir: f64,
    target: Vec2,
    deadline: Option<Nanos>,
}

/// The upwind heading for a sweep leg [rad, odom]: the wind's, else the robot's yaw.
fn heading(ctx: &Context) -> f64 {
    super::upwind(ctx).unwrap_or(ctx.pose.yaw)
}

impl Sweep {
    /// A sweep around `origin` [m, odom], its first leg starting now.
    pub fn start(origin: Vec2, s: &SweepParams, c: &CastParams, ctx: &Context) -> Sweep {
        let mut w = Sweep { origin, leg: 0, side: 1.0, half: s.width_initial, along: 0.0, dir: 1.0, target: origin, deadline: None };
        w.begin_leg(c, ctx);
        w
    }

    fn begin_leg(&mut self, c: &CastParams, ctx: &Context) {
        let up = heading(ctx);
        let left = Vec2::from_angle(up + std::f64::consts::FRAC_PI_2);
        let down = Vec2::from_angle(up) * -1.0;
        self.target = self.origin + left * (self.side * self.half) + down * self.along;
        let path = ctx.pose.position.distance(self.target);
        self.deadline = (c.speed > 0.0).then(|| ctx.now.saturating_add(nanos(c.leg_time_factor * path / c.speed + ctx.period)));
    }

    /// The current leg's index (0-based).
    pub fn leg(&self) -> u32 {
        self.leg
    }

    /// The current leg's end [m, odom].
    pub fn target(&self) -> Vec2 {
        self.target
    }

    /// How far downwind of the origin the current leg runs [m] (negative: upwind).
    pub fn along(&self) -> f64 {
        self.along
    }

    /// One step: the motion toward the current leg's end, the next leg on arrival.
    pub fn step(&mut self, s: &SweepParams, c: &CastParams, ctx: &Context) -> Motion {
        let arrived = ctx.pose.position.distance(self.target) <= c.arrive_tolerance;
        let late = self.deadline.is_some_and(|d| ctx.now > d);
        if arrived || late {
            self.leg = self.leg.saturating_add(1);
            self.side = -self.side;
            self.half = (self.half * s.growth).min(s.width_max);
            self.along += s.spacing * self.dir;
            if self.along > s.max_downwind {
                self.dir = -1.0;
            } else if self.along < -s.max_upwind {
                self.dir = 1.0;
            }
            self.begin_leg(c, ctx);
        }
        Motion::Heading { heading: (self.target - ctx.pose.position).angle(), speed: c.speed, face: Some(heading(ctx)) }
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_support::ctx;
    use super::*;
    use crate::geometry::Pose2;
    use approx::assert_abs_diff_eq;

    #[test]
    fn legs_alternate_widen_walk_downwind_then_come_back() {
        let s = SweepParams { width_initial: 1.0, growth: 2.0, width_max: 3.0, spacing: 1.0, max_downwind: 2.0, max_upwind: 1.0 };
        let c = CastParams::default();
        let mut x = ctx(0, Pose2::default(), false, 0);
        // Upwind is +x: left is +y, downwind is -x.
        let mut w = Sweep::start(Vec2::ZERO, &s, &c, &x);
        let mut ends = Vec::new();
        for k in 0..8 {
            ends.push(w.target());
            x.now = k + 1;
            x.pose.position = w.target();
            let _ = w.step(&s, &c, &x);
        }
        let want = [(0.0, 1.0), (-1.0, -2.0), (-2.0, 3.0), (-3.0, -3.0), (-2.0, 3.0), (-1.0, -3.0), (0.0, 3.0), (1.0, -3.0)];
        for (e, (wx, wy)) in ends.iter().zip(want) {
            assert_abs_diff_eq!(e.x, wx, epsilon = 1e-12);
            assert_abs_diff_eq!(e.y, wy, epsilon = 1e-12);
        }
        assert!(w.along() < -s.max_upwind, "past the upwind limit: turns downwind again");
        x.pose.position = w.target();
        let _ = w.step(&s, &c, &x);
        assert_abs_diff_eq!(w.along(), -1.0, epsilon = 1e-12);
    }

    #[test]
    fn a_blocked_leg_times_out_and_the_sweep_goes_on() {
        let s = SweepParams::default();
        let c = CastParams { speed: 0.5, leg_time_factor: 2.0, ..Default::default() };
        let x = ctx(0, Pose2::default(), false, 0);
        let mut w = Sweep::start(Vec2::ZERO, &s, &c, &x);
        let mut late = x;
        late.now = nanos(2.0 * 2.0 * s.width_initial / 0.5 + 0.2);
        let m = w.step(&s, &c, &late);
        assert_eq!(w.leg(), 1, "the first leg took too long");
        assert!(matches!(m, Motion::Heading { speed, .. } if speed == 0.5));
    }
}
