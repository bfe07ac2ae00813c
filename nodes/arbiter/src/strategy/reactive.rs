//! `reactive`: the bare bilateral baseline, kept for comparison (it does not need the wind).
//!
//! Contract: with a usable bearing `b` (base_link, relative to the current yaw; the decoder's
//! timing or amplitude cue, i.e. the stronger side) the robot turns toward it with
//! `angular.z = reactive.turn_gain * b` and moves forward at `reactive.speed * max(0, cos b)`
//! (SURGING); without a bearing but in contact it goes straight on; otherwise it stops
//! (WAITING). No memory, no search pattern.

use super::{Context, Decision, Phase, Strategy};
use crate::drive::{Cmd, Motion};
use crate::params::ReactiveParams;

/// The reactive baseline.
#[derive(Debug, Clone)]
pub struct Reactive {
    p: ReactiveParams,
}

impl Reactive {
    /// The baseline with its gains.
    pub fn new(p: ReactiveParams) -> Self {
        Reactive { p }
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
        if let Some(b) = ctx.bearing {
            let cmd = Cmd { vx: self.p.speed * b.body.cos().max(0.0), vy: 0.0, wz: self.p.turn_gain * b.body };
            return Decision { phase: Phase::Surging, reason: "bearing: turning toward the odor".into(), motion: Motion::Body(cmd) };
        }
        if ctx.contact.in_contact {
            let cmd = Cmd { vx: self.p.speed, vy: 0.0, wz: 0.0 };
            return Decision { phase: Phase::Surging, reason: "contact without bearing: straight on".into(), motion: Motion::Body(cmd) };
        }
        Decision::wait("no bearing and no contact")
    }

    fn reset(&mut self) {}
}

#[cfg(test)]
mod tests {
    use super::super::test_support::ctx;
    use super::super::BearingView;
    use super::*;
    use crate::geometry::Pose2;

    #[test]
    fn turns_toward_the_bearing() {
        let mut s = Reactive::new(ReactiveParams::default());
        let mut c = ctx(0, Pose2::default(), false, 0);
        assert_eq!(s.step(&c).phase, Phase::Waiting);
        // Odor from the left (+0.5 rad): REP 103 angular.z > 0.
        c.bearing = Some(BearingView { odom: 0.5, body: 0.5, confidence: 1.0 });
        let Motion::Body(cmd) = s.step(&c).motion else { panic!("body motion") };
        assert!(cmd.wz > 0.0 && cmd.vx > 0.0);
        c.bearing = Some(BearingView { odom: -2.5, body: -2.5, confidence: 1.0 });
        let Motion::Body(cmd) = s.step(&c).motion else { panic!("body motion") };
        assert!(cmd.wz < 0.0 && cmd.vx == 0.0, "behind on the right: turn right in place");
    }
}
