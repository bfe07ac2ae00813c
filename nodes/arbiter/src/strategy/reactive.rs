//! `reactive`: the bare bilateral baseline, kept for comparison (it does not need the wind).
//!
//! Contract: with a usable bearing `b` (base_link, relative to the current yaw; the decoder's
//! timing or amplitude cue, i.e. the stronger side) the robot turns toward it with
//! `angular.z = reactive.turn_gain * b` and moves forward at `reactive.speed * max(0, cos b)`
//! (SURGING); without a bearing but in contact it goes straight on; otherwise it looks for
//! the plume along a [`Sweep`] (CASTING) started where the odor was last gone. No other memory.

use super::{Context, Decision, Phase, Strategy, Sweep};
use crate::drive::{Cmd, Motion};
use crate::params::{CastParams, ReactiveParams, SweepParams};

/// The reactive baseline.
#[derive(Debug, Clone)]
pub struct Reactive {
    p: ReactiveParams,
    cast: CastParams,
    sweep: SweepParams,
    searching: Option<Sweep>,
}

impl Reactive {
    /// The baseline with its gains.
    pub fn new(p: ReactiveParams, cast: CastParams, sweep: SweepParams) -> Self {
        Reactive { p, cast, sweep, searching: None }
    }
}

impl Strategy for Reactive {
    fn name(&self) -> &str {
        "reactive"
    }

    fn uses_wind(&self) -> bool {
        false
    }

    fn step(&mut self, ctx: &Context) -> Decision {
        if ctx.bearing.is_some() || ctx.contact.in_contact {
            self.searching = None;
        }
        if let Some(b) = ctx.bearing {
            let cmd = Cmd { vx: self.p.speed * b.body.cos().max(0.0), vy: 0.0, wz: self.p.turn_gain * b.body };
            return Decision { phase: Phase::Surging, reason: "bearing: turning toward the odor".into(), motion: Motion::Body(cmd) };
        }
        if ctx.contact.in_contact {
            let cmd = Cmd { vx: self.p.speed, vy: 0.0, wz: 0.0 };
            return Decision { phase: Phase::Surging, reason: "contact without bearing: straight on".into(), motion: Motion::Body(cmd) };
        }
        let (sweep, cast) = (&self.sweep, &self.cast);
        let w = self.searching.get_or_insert_with(|| Sweep::start(ctx.pose.position, sweep, cast, ctx));
        Decision { phase: Phase::Casting, reason: "no bearing and no contact: sweeping for the plume".into(), motion: w.step(sweep, cast, ctx) }
    }

    fn reset(&mut self) {
        self.searching = None;
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_support::ctx;
    use super::super::BearingView;
    use super::*;
    use crate::geometry::Pose2;

    #[test]
    fn turns_toward_the_bearing() {
        let mut s = Reactive::new(ReactiveParams::default(), CastParams::default(), SweepParams::default());
        let mut c = ctx(0, Pose2::default(), false, 0);
        assert_eq!(s.step(&c).phase, Phase::Casting, "nothing: sweeping for the plume");
        // Odor from the left (+0.5 rad): REP 103 angular.z > 0.
        c.bearing = Some(BearingView { odom: 0.5, body: 0.5, confidence: 1.0 });
        let Motion::Body(cmd) = s.step(&c).motion else { panic!("body motion") };
        assert!(cmd.wz > 0.0 && cmd.vx > 0.0);
        c.bearing = Some(BearingView { odom: -2.5, body: -2.5, confidence: 1.0 });
        let Motion::Body(cmd) = s.step(&c).motion else { panic!("body motion") };
        assert!(cmd.wz < 0.0 && cmd.vx == 0.0, "behind on the right: turn right in place");
    }
}
