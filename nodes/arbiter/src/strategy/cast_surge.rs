//! `cast_surge`: surge while in contact, cast after a loss (the default strategy).
//!
//! Contract: before the first contact, plume acquisition: CASTING along a [`Sweep`] around the
//! position of the first step (crosswind legs widening downwind). In contact: SURGING along [`surge_heading`] at
//! `surge.speed` (straight ahead when neither wind nor bearing gives a direction). When the
//! contact is lost (`contact.loss_timeout` without a hit): CASTING with a [`Caster`] anchored at
//! the last contact point across the upwind heading at the loss (the surge heading when the
//! wind is unknown). A new contact returns to SURGING and the next cast starts again from the
//! first leg. After `cast.max_legs` legs `cast.on_limit` applies ([`Ending`]).

use super::{contact_reason, loss_reason, surge_heading, upwind, CastStep, Caster, Context, Decision, Ending, Phase, Strategy, Sweep};
use crate::drive::Motion;
use crate::params::{CastParams, SurgeParams, SweepParams};

#[derive(Debug, Clone, PartialEq)]
enum State {
    Idle,
    Acquire(Sweep),
    Surge,
    Cast(Caster),
    End(Ending),
}

/// The cast-and-surge strategy.
#[derive(Debug, Clone)]
pub struct CastSurge {
    surge: SurgeParams,
    cast: CastParams,
    sweep: SweepParams,
    state: State,
}

impl CastSurge {
    /// A strategy waiting for its first contact.
    pub fn new(surge: SurgeParams, cast: CastParams, sweep: SweepParams) -> Self {
        CastSurge { surge, cast, sweep, state: State::Idle }
    }

    fn surge(&self, ctx: &Context) -> Motion {
        Motion::heading(surge_heading(ctx, &self.surge).unwrap_or(ctx.pose.yaw), self.surge.speed)
    }
}

impl Strategy for CastSurge {
    fn name(&self) -> &str {
        "cast_surge"
    }

    fn step(&mut self, ctx: &Context) -> Decision {
        if ctx.contact.in_contact {
            let reason = if self.state == State::Surge { "surging upwind".into() } else { contact_reason(ctx).into() };
            self.state = State::Surge;
            return Decision { phase: Phase::Surging, reason, motion: self.surge(ctx) };
        }
        match &mut self.state {
            State::Idle => {
                let mut sweep = Sweep::start(ctx.pose.position, &self.sweep, &self.cast, ctx);
                let motion = sweep.step(&self.sweep, &self.cast, ctx);
                self.state = State::Acquire(sweep);
                Decision { phase: Phase::Casting, reason: "no contact yet: sweeping across the wind for the plume".into(), motion }
            }
            State::Acquire(sweep) => Decision { phase: Phase::Casting, reason: "sweeping for the plume".into(), motion: sweep.step(&self.sweep, &self.cast, ctx) },
            State::Surge => {
                let anchor = ctx.contact.point.unwrap_or(ctx.pose.position);
                let across = upwind(ctx).or_else(|| surge_heading(ctx, &self.surge)).unwrap_or(ctx.pose.yaw);
                let mut caster = Caster::start(anchor, across, &self.cast, ctx);
                let motion = match caster.step(&self.cast, ctx) {
                    CastStep::Leg(m) => m,
                    CastStep::Limit => Motion::Stop,
                };
                self.state = State::Cast(caster);
                let reason = format!("{}: casting across the wind from the last contact", loss_reason(ctx));
                Decision { phase: Phase::Casting, reason: reason.into(), motion }
            }
            State::Cast(caster) => match caster.step(&self.cast, ctx) {
                CastStep::Leg(motion) => Decision { phase: Phase::Casting, reason: "casting".into(), motion },
                CastStep::Limit => {
                    let why = format!("cast limit ({} legs without contact)", self.cast.max_legs);
                    let (ending, d) = Ending::begin(&self.cast, &self.sweep, caster.anchor(), &why, ctx);
                    self.state = State::End(ending);
                    d
                }
            },
            State::End(ending) => ending.step(&self.cast, &self.sweep, ctx),
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
    use crate::geometry::{Pose2, Vec2};
    use crate::params::LimitAction;

    #[test]
    fn surge_then_cast_then_give_up_or_return() {
        for action in [LimitAction::GiveUp, LimitAction::Return, LimitAction::Search] {
            let cast = CastParams { max_legs: 2, on_limit: action, ..Default::default() };
            let mut s = CastSurge::new(SurgeParams::default(), cast.clone(), SweepParams::default());
            let pose = Pose2 { position: Vec2::new(2.0, 0.0), yaw: 0.0 };
            let first = s.step(&ctx(0, pose, false, 0));
            assert_eq!(first.phase, Phase::Casting, "no contact yet: acquisition sweep");
            assert!(first.reason.contains("sweeping"), "{}", first.reason);
            let d = s.step(&ctx(1, pose, true, 1));
            assert_eq!(d.phase, Phase::Surging);
            assert_eq!(d.motion.heading_target(), 0.0, "upwind is +x");
            let d = s.step(&ctx(2, pose, false, 1));
            assert_eq!(d.phase, Phase::Casting);
            assert!(d.reason.starts_with("contact lost"), "{}", d.reason);
            // Walk the legs: the first goes to the left of the anchor (0, 0).
            let State::Cast(c) = &s.state else { panic!("casting") };
            assert!(c.target().distance(Vec2::new(0.0, cast.leg_initial)) < 1e-12);
            let mut p = pose;
            let mut last = d;
            for k in 0..cast.max_legs {
                let State::Cast(c) = &s.state else { break };
                p.position = c.target();
                last = s.step(&ctx(3 + i64::from(k), p, false, 1));
            }
            match action {
                LimitAction::GiveUp => assert_eq!(last.phase, Phase::Waiting),
                LimitAction::Return => {
                    assert_eq!(last.phase, Phase::Casting);
                    assert!(last.reason.contains("returning"), "{}", last.reason);
                    let home = s.step(&ctx(10, Pose2::default(), false, 1));
                    assert_eq!(home.phase, Phase::Waiting, "at the anchor: {}", home.reason);
                }
                LimitAction::Search => {
                    assert_eq!(last.phase, Phase::Casting);
                    assert!(last.reason.contains("sweeping around the last contact"), "{}", last.reason);
                    // It never ends: a thousand steps later it is still sweeping.
                    let mut p = Pose2::default();
                    for k in 0..1000 {
                        let State::End(Ending::Search(w)) = &s.state else { panic!("searching") };
                        p.position = w.target();
                        assert_eq!(s.step(&ctx(20 + k, p, false, 1)).phase, Phase::Casting);
                    }
                }
            }
        }
    }
}
