//! `zigzag`: an upwind zigzag that opens up after a loss.
//!
//! Contract: before the first contact, plume acquisition along a [`Sweep`] (CASTING). Then the robot runs legs at `+-angle` (left
//! first, alternating) around the surge heading ([`surge_heading`]), at `surge.speed`; a leg
//! ends after `leg_length` metres of travel. Every new contact resets the angle to
//! `zigzag.angle_initial` and the leg length to `zigzag.leg_length`. Each leg that ends out of
//! contact multiplies the angle by `zigzag.angle_growth` (up to `zigzag.angle_max`) and the
//! leg length by `cast.growth` (up to `cast.leg_max`, or `zigzag.leg_length` if larger). Phase:
//! SURGING while in contact, CASTING out of contact; after `cast.max_legs` legs without contact
//! `cast.on_limit` applies ([`Ending`], homing to the last contact point).

use super::{contact_reason, loss_reason, surge_heading, Context, Decision, Ending, Phase, Strategy, Sweep};
use crate::drive::Motion;
use crate::geometry::Vec2;
use crate::params::{CastParams, SurgeParams, SweepParams, ZigzagParams};

#[derive(Debug, Clone, PartialEq)]
enum State {
    Idle,
    Acquire(Sweep),
    Run { from: Vec2, side: f64, angle: f64, length: f64, legs_out: u32, phase: Phase },
    End(Ending),
}

/// The zigzag strategy.
#[derive(Debug, Clone)]
pub struct Zigzag {
    surge: SurgeParams,
    cast: CastParams,
    sweep: SweepParams,
    z: ZigzagParams,
    seen_hits: u64,
    state: State,
}

impl Zigzag {
    /// A strategy waiting for its first contact.
    pub fn new(surge: SurgeParams, cast: CastParams, sweep: SweepParams, z: ZigzagParams) -> Self {
        Zigzag { surge, cast, sweep, z, seen_hits: 0, state: State::Idle }
    }

    /// The current zigzag angle [rad] (`None` when not zigzagging).
    pub fn angle(&self) -> Option<f64> {
        match self.state {
            State::Run { angle, .. } => Some(angle),
            _ => None,
        }
    }
}

impl Strategy for Zigzag {
    fn name(&self) -> &str {
        "zigzag"
    }

    fn step(&mut self, ctx: &Context) -> Decision {
        let new_hit = ctx.contact.hits != self.seen_hits;
        self.seen_hits = ctx.contact.hits;
        let mut entered = false;
        if new_hit && ctx.contact.in_contact {
            match &mut self.state {
                State::Run { angle, length, legs_out, .. } => {
                    *angle = self.z.angle_initial;
                    *length = self.z.leg_length;
                    *legs_out = 0;
                }
                _ => {
                    self.state = State::Run {
                        from: ctx.pose.position,
                        side: 1.0,
                        angle: self.z.angle_initial,
                        length: self.z.leg_length,
                        legs_out: 0,
                        phase: Phase::Waiting,
                    };
                    entered = true;
                }
            }
        }
        let (max_len, max_legs) = (self.cast.leg_max.max(self.z.leg_length), self.cast.max_legs);
        let State::Run { from, side, angle, length, legs_out, phase } = &mut self.state else {
            return match &mut self.state {
                State::End(e) => e.step(&self.cast, &self.sweep, ctx),
                State::Acquire(w) => Decision { phase: Phase::Casting, reason: "sweeping for the plume".into(), motion: w.step(&self.sweep, &self.cast, ctx) },
                _ => {
                    let mut w = Sweep::start(ctx.pose.position, &self.sweep, &self.cast, ctx);
                    let motion = w.step(&self.sweep, &self.cast, ctx);
                    self.state = State::Acquire(w);
                    Decision { phase: Phase::Casting, reason: "no contact yet: sweeping across the wind for the plume".into(), motion }
                }
            };
        };
        if ctx.pose.position.distance(*from) >= *length {
            *from = ctx.pose.position;
            *side = -*side;
            if !ctx.contact.in_contact {
                *legs_out += 1;
                *angle = (*angle * self.z.angle_growth).min(self.z.angle_max);
                *length = (*length * self.cast.growth).min(max_len);
            }
        }
        if *legs_out >= max_legs {
            let anchor = ctx.contact.point.unwrap_or(ctx.pose.position);
            let why = format!("zigzag limit ({max_legs} legs without contact)");
            let (ending, d) = Ending::begin(&self.cast, &self.sweep, anchor, &why, ctx);
            self.state = State::End(ending);
            return d;
        }
        let base = surge_heading(ctx, &self.surge).unwrap_or(ctx.pose.yaw);
        let motion = Motion::heading(base + *side * *angle, self.surge.speed);
        let now_phase = if ctx.contact.in_contact { Phase::Surging } else { Phase::Casting };
        let reason = if entered || (now_phase == Phase::Surging && *phase != Phase::Surging) {
            format!("{}: zigzag upwind", contact_reason(ctx)).into()
        } else if now_phase != *phase {
            format!("{}: zigzag opening up", loss_reason(ctx)).into()
        } else {
            "zigzag".into()
        };
        *phase = now_phase;
        Decision { phase: now_phase, reason, motion }
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
    fn legs_alternate_and_open_up_out_of_contact() {
        let z = ZigzagParams { leg_length: 1.0, angle_initial: 0.4, angle_growth: 1.5, angle_max: 1.2 };
        let mut s = Zigzag::new(SurgeParams::default(), CastParams { max_legs: 3, on_limit: crate::params::LimitAction::Return, ..Default::default() }, SweepParams::default(), z);
        let mut pose = Pose2::default();
        let d = s.step(&ctx(0, pose, true, 1));
        assert_eq!(d.phase, Phase::Surging);
        assert_abs_diff_eq!(d.motion.heading_target(), 0.4, epsilon = 1e-12);
        pose.position = Vec2::new(1.0, 0.0);
        let d = s.step(&ctx(1, pose, true, 1));
        assert_abs_diff_eq!(d.motion.heading_target(), -0.4, epsilon = 1e-12);
        // Out of contact: each finished leg opens the angle by 1.5 up to 1.2 rad.
        pose.position = Vec2::new(2.0, 0.0);
        let d = s.step(&ctx(2, pose, false, 1));
        assert_eq!(d.phase, Phase::Casting);
        assert_abs_diff_eq!(d.motion.heading_target(), 0.6, epsilon = 1e-12);
        pose.position = Vec2::new(2.0, 1.6);
        let d = s.step(&ctx(3, pose, false, 1));
        assert_abs_diff_eq!(d.motion.heading_target(), -0.9, epsilon = 1e-12);
        // A new contact resets the angle.
        let d = s.step(&ctx(4, pose, true, 2));
        assert_abs_diff_eq!(d.motion.heading_target(), -0.4, epsilon = 1e-12);
        assert_eq!(d.phase, Phase::Surging);
        assert!(d.reason.starts_with("contact"), "{}", d.reason);
    }
}
