//! Crosswind casting and the return to the last contact, shared by the strategies.
//!
//! Contract of [`Caster`]: legs are crosswind, on the line through the anchor (the last contact
//! point) perpendicular to the upwind heading at the loss. Leg `k` ends at
//! `anchor + side_k * h_k * left`, with `left` the unit vector 90 deg counter-clockwise from
//! upwind, `side_0 = +1` (left first) alternating, and half-widths `h_0 = cast.leg_initial`,
//! `h_k = min(h_{k-1} * cast.growth, cast.leg_max)`. A leg ends when its end point is within
//! `cast.arrive_tolerance`, or after `cast.leg_time_factor` times its nominal duration (path
//! length / speed, so a blocked robot moves on). After `cast.max_legs` legs the caster reports
//! [`CastStep::Limit`].

use super::{Context, Decision, Phase, Sweep};
use crate::drive::Motion;
use crate::geometry::Vec2;
use crate::params::{CastParams, LimitAction, SweepParams};
use sillage_core::time::nanos;
use sillage_core::Nanos;

/// One step of casting.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CastStep {
    /// Keep going.
    Leg(Motion),
    /// `cast.max_legs` legs done without contact.
    Limit,
}

/// The casting pattern.
#[derive(Debug, Clone, PartialEq)]
pub struct Caster {
    anchor: Vec2,
    upwind: f64,
    left: Vec2,
    leg: u32,
    side: f64,
    half: f64,
    target: Vec2,
    deadline: Option<Nanos>,
}

impl Caster {
    /// Starts casting around `anchor` [m, odom] across `upwind` [rad, odom].
    pub fn start(anchor: Vec2, upwind: f64, p: &CastParams, ctx: &Context) -> Caster {
        let left = Vec2::from_angle(upwind + std::f64::consts::FRAC_PI_2);
        let mut c = Caster { anchor, upwind, left, leg: 0, side: 1.0, half: p.leg_initial, target: anchor, deadline: None };
        c.begin_leg(p, ctx);
        c
    }

    fn begin_leg(&mut self, p: &CastParams, ctx: &Context) {
        self.target = self.anchor + self.left * (self.side * self.half);
        let path = ctx.pose.position.distance(self.target);
        self.deadline = (p.speed > 0.0).then(|| ctx.now.saturating_add(nanos(p.leg_time_factor * path / p.speed + ctx.period)));
    }

    /// The current leg's index (0-based).
    pub fn leg(&self) -> u32 {
        self.leg
    }

    /// The current leg's end point [m, odom].
    pub fn target(&self) -> Vec2 {
        self.target
    }

    /// The anchor [m, odom].
    pub fn anchor(&self) -> Vec2 {
        self.anchor
    }

    /// One step: the motion toward the current leg's end, moving to the next leg on arrival.
    pub fn step(&mut self, p: &CastParams, ctx: &Context) -> CastStep {
        let arrived = ctx.pose.position.distance(self.target) <= p.arrive_tolerance;
        let late = self.deadline.is_some_and(|d| ctx.now > d);
        if arrived || late {
            self.leg += 1;
            if self.leg >= p.max_legs {
                return CastStep::Limit;
            }
            self.side = -self.side;
            self.half = (self.half * p.growth).min(p.leg_max);
            self.begin_leg(p, ctx);
        }
        let heading = (self.target - ctx.pose.position).angle();
        CastStep::Leg(Motion::Heading { heading, speed: p.speed, face: Some(self.upwind) })
    }
}

/// Driving back to a point (the last contact), then reporting arrival.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Homing {
    /// Where to go [m, odom].
    pub target: Vec2,
}

impl Homing {
    /// The motion toward the target, `None` once within `tolerance` [m].
    pub fn step(&self, ctx: &Context, speed: f64, tolerance: f64) -> Option<Motion> {
        (ctx.pose.position.distance(self.target) > tolerance).then(|| Motion::toward(ctx.pose.position, self.target, speed))
    }
}

/// What a search pattern does after its limit (`cast.on_limit`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Ending {
    /// Driving back to the last contact (CASTING).
    Homing(Homing),
    /// Search over: waiting for a contact (WAITING).
    Done,
    /// Searching on: acquisition sweeps around the most likely region (CASTING).
    Search(Sweep),
}

impl Ending {
    /// The ending for `cast.on_limit`, and the first decision; `why` says which limit.
    pub fn begin(p: &CastParams, sw: &SweepParams, anchor: Vec2, why: &str, ctx: &Context) -> (Ending, Decision) {
        match p.on_limit {
            LimitAction::Search => {
                let (origin, around) = match ctx.posterior {
                    Some(q) => (q.mean, "the posterior mean"),
                    None => (anchor, "the last contact"),
                };
                let mut sweep = Sweep::start(origin, sw, p, ctx);
                let motion = sweep.step(sw, p, ctx);
                (Ending::Search(sweep), Decision { phase: Phase::Casting, reason: format!("{why}: sweeping around {around}").into(), motion })
            }
            LimitAction::GiveUp => (Ending::Done, Decision::wait(format!("{why}: giving up"))),
            LimitAction::Return => {
                let h = Homing { target: anchor };
                let motion = h.step(ctx, p.speed, p.arrive_tolerance).unwrap_or(Motion::Stop);
                (Ending::Homing(h), Decision { phase: Phase::Casting, reason: format!("{why}: returning to the last contact").into(), motion })
            }
        }
    }

    /// One step of the ending.
    pub fn step(&mut self, p: &CastParams, sw: &SweepParams, ctx: &Context) -> Decision {
        match self {
            Ending::Search(sweep) => Decision { phase: Phase::Casting, reason: "sweeping for the plume".into(), motion: sweep.step(sw, p, ctx) },
            Ending::Done => Decision::wait("search over: waiting for a contact"),
            Ending::Homing(h) => match h.step(ctx, p.speed, p.arrive_tolerance) {
                Some(motion) => Decision { phase: Phase::Casting, reason: "returning to the last contact".into(), motion },
                None => {
                    *self = Ending::Done;
                    Decision::wait("returned to the last contact: waiting for a contact")
                }
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_support::ctx;
    use super::*;
    use crate::geometry::Pose2;
    use approx::assert_abs_diff_eq;

    #[test]
    fn legs_alternate_and_grow_around_the_anchor() {
        let p = CastParams { leg_initial: 0.5, growth: 2.0, leg_max: 1.5, max_legs: 4, ..Default::default() };
        let mut c0 = ctx(0, Pose2::default(), false, 1);
        // Upwind is +x, so "left" is +y.
        let mut c = Caster::start(Vec2::new(1.0, 0.0), 0.0, &p, &c0);
        let mut ends = Vec::new();
        for _ in 0..3 {
            ends.push(c.target());
            c0.pose.position = c.target();
            assert!(matches!(c.step(&p, &c0), CastStep::Leg(_)));
        }
        ends.push(c.target());
        let ys: Vec<f64> = ends.iter().map(|e| e.y).collect();
        for (y, want) in ys.iter().zip([0.5, -1.0, 1.5, -1.5]) {
            assert_abs_diff_eq!(*y, want, epsilon = 1e-12);
        }
        assert!(ends.iter().all(|e| (e.x - 1.0).abs() < 1e-12), "legs stay on the anchor's crosswind line");
        c0.pose.position = c.target();
        assert_eq!(c.step(&p, &c0), CastStep::Limit);
    }

    #[test]
    fn a_blocked_leg_times_out() {
        let p = CastParams { speed: 0.2, leg_initial: 1.0, leg_time_factor: 2.0, ..Default::default() };
        let c0 = ctx(0, Pose2::default(), false, 1);
        let mut c = Caster::start(Vec2::ZERO, 0.0, &p, &c0);
        // Nominal 1 m / 0.2 m/s = 5 s, times 2, plus a period: the leg ends after 10.1 s.
        let mut late = c0;
        late.now = nanos(10.0);
        assert!(matches!(c.step(&p, &late), CastStep::Leg(_)));
        assert_eq!(c.leg(), 0);
        late.now = nanos(10.2);
        assert!(matches!(c.step(&p, &late), CastStep::Leg(_)));
        assert_eq!(c.leg(), 1);
    }
}
