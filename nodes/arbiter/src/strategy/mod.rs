//! Behaviour strategies: what to do given the contact, the wind and the bearing. Every strategy
//! only proposes a [`Decision`] (a phase and a motion intent); the node turns the motion into a
//! command and the guard is applied last, whatever the strategy.
//!
//! Built-in strategies (parameter `strategy`):
//! - `cast_surge` ([`CastSurge`], default): surge upwind (steered toward the bearing) while in
//!   contact, cast crosswind with growing, alternating legs around the last contact after a loss;
//! - `zigzag` ([`Zigzag`]): an upwind zigzag whose angle resets on every contact and opens up
//!   after a loss;
//! - `spiral` ([`Spiral`]): an Archimedean spiral `r = b theta` around the last contact (or the
//!   start), for weak or unreliable wind (does not need the wind);
//! - `reactive` ([`Reactive`]): the bare bilateral baseline, turn toward the bearing and go
//!   forward (does not need the wind).
//!
//! # Adding a strategy
//! 1. Implement [`Strategy`] on your type: `name`, `uses_wind` (whether a stale `wind` must halt
//!    the robot), `step` (called once per control tick while the robot is neither halted nor
//!    declared; return the phase, a reason and a [`Motion`]) and `reset` (forget the search).
//!    Build on [`surge_heading`], [`Homing`] and [`Caster`] if they fit.
//! 2. Hand it to the node: `Arbiter::with_strategy(params, Box::new(MyStrategy::new()))`. The
//!    `strategy` parameter (and the built-ins' sections) are then ignored, also when changed
//!    at run time: your strategy stays.
//! 3. To make it selectable by name, add a [`crate::params::StrategyKind`] variant and a line in
//!    [`build`].
//!
//! `examples/custom_strategy.rs` is a complete, compiling example. Keep `step` pure: no clock,
//! no I/O, no randomness; the [`Context`] carries the time.

mod cast;
mod cast_surge;
mod reactive;
mod spiral;
mod sweep;
mod zigzag;

pub use cast::{CastStep, Caster, Ending, Homing};
pub use cast_surge::CastSurge;
pub use reactive::Reactive;
pub use spiral::Spiral;
pub use sweep::Sweep;
pub use zigzag::Zigzag;

use crate::contact::ContactView;
use crate::drive::Motion;
use crate::geometry::{wrap_angle, Pose2};
use crate::modes::Mode;
use crate::posterior::Posterior;
use crate::params::{Params, StrategyKind, SurgeParams};
use crate::wind::WindView;
use sillage_core::Nanos;
use std::borrow::Cow;

/// A usable bearing (cue not NONE, confidence >= `surge.min_confidence`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BearingView {
    /// Direction the odor comes from [rad, odom] (base_link bearing plus the yaw at arrival).
    pub odom: f64,
    /// The same relative to the current yaw [rad, base_link].
    pub body: f64,
    /// Confidence [0..1].
    pub confidence: f64,
}

/// Everything a strategy may look at in one step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Context {
    /// Current time [ns].
    pub now: Nanos,
    /// Pose of base_link in odom.
    pub pose: Pose2,
    /// Wind in odom.
    pub wind: WindView,
    /// The latest bearing if usable.
    pub bearing: Option<BearingView>,
    /// Contact state.
    pub contact: ContactView,
    /// Control period [s].
    pub period: f64,
    /// The source posterior, when one is fresh and `cues.use_posterior` is on.
    pub posterior: Option<Posterior>,
}

/// The search phase a strategy is in (the node adds HALTED and DECLARED).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Phase {
    /// Not searching: zero motion expected.
    Waiting,
    /// In contact, moving toward the source.
    Surging,
    /// Searching for the plume.
    Casting,
}

impl From<Phase> for Mode {
    fn from(p: Phase) -> Mode {
        match p {
            Phase::Waiting => Mode::Waiting,
            Phase::Surging => Mode::Surging,
            Phase::Casting => Mode::Casting,
        }
    }
}

/// A strategy's proposal for one step.
#[derive(Debug, Clone, PartialEq)]
pub struct Decision {
    /// The phase.
    pub phase: Phase,
    /// Why (used as the transition reason when the phase changes; never empty).
    pub reason: Cow<'static, str>,
    /// The motion intent.
    pub motion: Motion,
}

impl Decision {
    /// Waiting with zero motion.
    pub fn wait(reason: impl Into<Cow<'static, str>>) -> Decision {
        Decision { phase: Phase::Waiting, reason: reason.into(), motion: Motion::Stop }
    }
}

/// A behaviour strategy.
pub trait Strategy: Send + std::fmt::Debug {
    /// Name (the `strategy` parameter value of built-ins).
    fn name(&self) -> &str;
    /// Whether the strategy needs the wind (then a stale `wind` input halts the robot).
    fn uses_wind(&self) -> bool {
        true
    }
    /// One control step.
    fn step(&mut self, ctx: &Context) -> Decision;
    /// Forgets the search (restart after a declaration, clock jump, parameter change).
    fn reset(&mut self);
}

/// The built-in strategy selected by `p.strategy`.
pub fn build(p: &Params) -> Box<dyn Strategy> {
    match p.strategy {
        StrategyKind::CastSurge => Box::new(CastSurge::new(p.surge.clone(), p.cast.clone(), p.sweep.clone())),
        StrategyKind::Zigzag => Box::new(Zigzag::new(p.surge.clone(), p.cast.clone(), p.sweep.clone(), p.zigzag.clone())),
        StrategyKind::Spiral => Box::new(Spiral::new(p.surge.clone(), p.cast.clone(), p.sweep.clone(), p.spiral.clone())),
        StrategyKind::Reactive => Box::new(Reactive::new(p.reactive.clone(), p.cast.clone(), p.sweep.clone())),
    }
}

/// The reference upwind heading [rad, odom]: the current reliable one, else the last one.
pub fn upwind(ctx: &Context) -> Option<f64> {
    ctx.wind.upwind.or(ctx.wind.last_upwind)
}

/// The surge heading [rad, odom]: upwind turned toward the bearing by `bearing_gain *
/// confidence` of the angle between them; the bearing alone without wind; `None` without both.
pub fn surge_heading(ctx: &Context, p: &SurgeParams) -> Option<f64> {
    match (upwind(ctx), ctx.bearing) {
        (Some(u), Some(b)) => Some(wrap_angle(u + p.bearing_gain * b.confidence * wrap_angle(b.odom - u))),
        (Some(u), None) => Some(u),
        (None, Some(b)) => Some(b.odom),
        (None, None) => None,
    }
}

/// "contact (rising odor events)" for transition reasons.
pub fn contact_reason(ctx: &Context) -> String {
    match ctx.contact.cause {
        Some(c) => format!("contact ({})", c.describe()),
        None => "contact".to_string(),
    }
}

/// "contact lost for 2.1 s" for transition reasons.
pub fn loss_reason(ctx: &Context) -> String {
    format!("contact lost for {:.1} s", ctx.contact.age.unwrap_or(f64::NAN))
}

#[cfg(test)]
pub(crate) mod test_support {
    use super::*;
    use crate::geometry::Vec2;

    /// A context at `now` with the robot at `pose`, wind from +x (upwind 0), no bearing.
    pub fn ctx(now: Nanos, pose: Pose2, in_contact: bool, hits: u64) -> Context {
        Context {
            now,
            pose,
            wind: WindView { upwind: Some(0.0), last_upwind: Some(0.0), speed: 1.0 },
            bearing: None,
            contact: ContactView { in_contact, age: Some(if in_contact { 0.0 } else { 3.0 }), point: Some(Vec2::ZERO), hits, cause: None },
            period: 0.1,
            posterior: None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::test_support::ctx;
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn surge_heading_blends_upwind_and_bearing() {
        let mut c = ctx(0, Pose2::default(), true, 1);
        let p = SurgeParams { bearing_gain: 0.5, ..Default::default() };
        assert_eq!(surge_heading(&c, &p), Some(0.0));
        c.bearing = Some(BearingView { odom: 1.0, body: 1.0, confidence: 0.8 });
        assert_abs_diff_eq!(surge_heading(&c, &p).expect("heading"), 0.4, epsilon = 1e-12);
        c.wind.upwind = None;
        c.wind.last_upwind = None;
        assert_eq!(surge_heading(&c, &p), Some(1.0));
        c.bearing = None;
        assert_eq!(surge_heading(&c, &p), None);
    }
}
