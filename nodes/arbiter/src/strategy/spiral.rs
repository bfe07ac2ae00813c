//! `spiral`: an Archimedean spiral search for weak or unreliable wind (it does not need the
//! wind, so a stale `wind` does not halt it).
//!
//! Contract: the spiral is `c + b theta (cos(theta + phi0), sin(theta + phi0))` with
//! `b = spiral.spacing / (2 pi)` (successive turns `spacing` apart), centre `c` the last contact
//! point (or the start position before any contact, when `spiral.search_before_contact`) and
//! `phi0` the robot's yaw when the spiral starts. The robot pursues a carrot on the spiral kept
//! `spiral.lookahead` ahead of it (theta advances by `lookahead / sqrt(r^2 + b^2)` steps, the
//! local arc length of the spiral) at `spiral.speed`. In contact: SURGING toward the bearing, or
//! upwind when the wind is known, or straight on, at `surge.speed`; every loss restarts the
//! spiral at theta = 0 around the new last contact. When `r = b theta` exceeds
//! `spiral.max_radius`, `cast.on_limit` applies ([`Ending`]).

use super::{contact_reason, loss_reason, upwind, Context, Decision, Ending, Phase, Strategy};
use crate::drive::Motion;
use crate::geometry::Vec2;
use crate::params::{CastParams, SpiralParams, SurgeParams, SweepParams};
use std::f64::consts::TAU;

#[derive(Debug, Clone, PartialEq)]
enum State {
    Idle,
    Surge,
    Spiral { center: Vec2, phi0: f64, theta: f64 },
    End(Ending),
}

/// The spiral strategy.
#[derive(Debug, Clone)]
pub struct Spiral {
    surge: SurgeParams,
    cast: CastParams,
    sweep: SweepParams,
    p: SpiralParams,
    state: State,
}

/// The point of the spiral at `theta` [m, odom].
pub fn spiral_point(center: Vec2, b: f64, phi0: f64, theta: f64) -> Vec2 {
    center + Vec2::from_angle(theta + phi0) * (b * theta)
}

impl Spiral {
    /// A strategy that has not started.
    pub fn new(surge: SurgeParams, cast: CastParams, sweep: SweepParams, p: SpiralParams) -> Self {
        Spiral { surge, cast, sweep, p, state: State::Idle }
    }

    fn b(&self) -> f64 {
        self.p.spacing / TAU
    }

    /// The spiral's centre and current parameter theta [rad], when spiralling.
    pub fn progress(&self) -> Option<(Vec2, f64)> {
        match self.state {
            State::Spiral { center, theta, .. } => Some((center, theta)),
            _ => None,
        }
    }

    fn start(&mut self, center: Vec2, ctx: &Context, reason: String) -> Decision {
        self.state = State::Spiral { center, phi0: ctx.pose.yaw, theta: 0.0 };
        let mut d = self.pursue(ctx);
        d.reason = reason.into();
        d
    }

    fn pursue(&mut self, ctx: &Context) -> Decision {
        let b = self.b();
        let State::Spiral { center, phi0, theta } = &mut self.state else { return Decision::wait("not spiralling") };
        let (center, phi0) = (*center, *phi0);
        let pos = ctx.pose.position;
        // Advance the carrot until it is `lookahead` ahead (bounded work per step).
        for _ in 0..1000 {
            if spiral_point(center, b, phi0, *theta).distance(pos) >= self.p.lookahead {
                break;
            }
            let r = b * *theta;
            *theta += self.p.lookahead / (r * r + b * b).sqrt();
        }
        if b * *theta > self.p.max_radius {
            let why = format!("spiral limit (radius {:.2} m > {:.2} m)", b * *theta, self.p.max_radius);
            let (ending, d) = Ending::begin(&self.cast, &self.sweep, center, &why, ctx);
            self.state = State::End(ending);
            return d;
        }
        let target = spiral_point(center, b, phi0, *theta);
        Decision { phase: Phase::Casting, reason: "spiral search".into(), motion: Motion::toward(pos, target, self.p.speed) }
    }
}

impl Strategy for Spiral {
    fn name(&self) -> &str {
        "spiral"
    }

    fn uses_wind(&self) -> bool {
        false
    }

    fn step(&mut self, ctx: &Context) -> Decision {
        if ctx.contact.in_contact {
            let reason = if self.state == State::Surge { "surging".into() } else { contact_reason(ctx).into() };
            self.state = State::Surge;
            let heading = ctx.bearing.map(|b| b.odom).or_else(|| upwind(ctx)).unwrap_or(ctx.pose.yaw);
            return Decision { phase: Phase::Surging, reason, motion: Motion::heading(heading, self.surge.speed) };
        }
        match &mut self.state {
            State::Idle if self.p.search_before_contact => {
                self.start(ctx.pose.position, ctx, "no contact yet: spiral search around the start".into())
            }
            State::Idle => Decision::wait("waiting for a first contact"),
            State::Surge => {
                let center = ctx.contact.point.unwrap_or(ctx.pose.position);
                self.start(center, ctx, format!("{}: spiral around the last contact", loss_reason(ctx)))
            }
            State::Spiral { .. } => self.pursue(ctx),
            State::End(e) => e.step(&self.cast, &self.sweep, ctx),
        }
    }

    fn reset(&mut self) {
        self.state = State::Idle;
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_support::ctx;
    use super::*;
    use crate::geometry::Pose2;
    use approx::assert_abs_diff_eq;

    #[test]
    fn the_carrot_walks_an_archimedean_spiral() {
        let p = SpiralParams { spacing: 1.0, lookahead: 0.2, max_radius: 2.0, ..Default::default() };
        let mut s = Spiral::new(SurgeParams::default(), CastParams { on_limit: crate::params::LimitAction::GiveUp, ..Default::default() }, SweepParams::default(), p);
        let mut pose = Pose2::default();
        let d = s.step(&ctx(0, pose, false, 0));
        assert_eq!(d.phase, Phase::Casting);
        // Let the robot sit on the carrot each step: the carrot then moves 0.2 m along the
        // spiral, whose points satisfy r = b theta (b = 1 / 2 pi: one turn adds 1 m).
        let b = 1.0 / TAU;
        let mut turns = 0.0;
        for k in 0..200 {
            let Some((c, theta)) = s.progress() else { break };
            let target = spiral_point(c, b, 0.0, theta);
            assert_abs_diff_eq!(target.distance(c), b * theta, epsilon = 1e-9);
            pose.position = target;
            turns = theta / TAU;
            let _ = s.step(&ctx(k, pose, false, 0));
        }
        assert!(turns > 1.8, "about two turns before the 2 m limit, got {turns}");
        assert!(s.progress().is_none(), "limit reached");
        assert_eq!(s.step(&ctx(300, pose, false, 0)).phase, Phase::Waiting);
    }
}
