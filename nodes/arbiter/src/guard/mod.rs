//! The guard: applied last to every command, whatever the strategy.
//!
//! Order of application (each step sees the previous one's output):
//! 1. non-finite components (NaN, inf) become 0 (counted);
//! 2. a differential drive gets `linear.y = 0`;
//! 3. e-stop latched: the command is exactly zero, at once, **bypassing the deceleration
//!    limits** (an e-stop means stop now; the base's own limits are the only ramp left);
//! 4. geofence ([`geofence`]);
//! 5. obstacle slow zone: forward speed capped at `max_linear * (d - stop) / (slow - stop)`
//!    for the nearest range `d` in the forward sector;
//! 6. caps and acceleration/deceleration limits ([`limiter`]);
//! 7. obstacle stop: nearer than `obstacle.stop_distance`, forward `linear.x` and `linear.y`
//!    become 0 at once, **bypassing the deceleration limit** (a collision is imminent);
//!    turning and reversing (if `guard.max_reverse` > 0) stay allowed.
//!
//! Every other stop (watchdog halts, WAITING, DECLARED, the slow zone, the fence) is a zero or
//! lower *target* that ramps down under the deceleration limits: a stale sensor is not an
//! imminent collision, and braking harder than `max_linear_decel` can skid or tip the base.
//! The stopping distance is at most `v^2 / (2 decel)` (0.045 m with the defaults).

pub mod estop;
pub mod geofence;
pub mod limiter;

use crate::drive::{Cmd, Drive};
use crate::geometry::Pose2;
use crate::params::{BaseKind, GuardParams, ObstacleParams, Params};
pub use estop::{EStopLatch, ResetOutcome};
pub use geofence::{FenceVerdict, Geofence};
pub use limiter::Limiter;
use sillage_core::Nanos;

/// What the guard did to the last command.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct GuardFlags {
    /// Some component was not finite.
    pub nonfinite: bool,
    /// The e-stop zeroed it.
    pub e_stop: bool,
    /// The fence changed it.
    pub fence: Option<FenceVerdict>,
    /// The slow zone lowered the forward cap.
    pub obstacle_slow: bool,
    /// An obstacle is within the stop distance (forward and lateral motion are zero).
    pub obstacle_stop: bool,
    /// Caps or rate limits changed it.
    pub limited: bool,
}

/// Counters for diagnostics.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct GuardCounts {
    /// Commands with non-finite components.
    pub nonfinite: u64,
    /// Commands changed by the fence.
    pub fence: u64,
    /// Commands sent while an obstacle was within the stop distance.
    pub obstacle_stops: u64,
    /// Commands changed by caps or rate limits.
    pub limited: u64,
}

/// The guard.
#[derive(Debug, Clone)]
pub struct Guard {
    g: GuardParams,
    obstacle: ObstacleParams,
    base: BaseKind,
    period: f64,
    fence: Option<Geofence>,
    /// The e-stop latch.
    pub latch: EStopLatch,
    limiter: Limiter,
    /// Counters.
    pub counts: GuardCounts,
    /// Flags of the last command.
    pub last_flags: GuardFlags,
}

impl Guard {
    /// A guard from the node parameters (validated).
    pub fn new(p: &Params) -> Guard {
        let mut g = Guard {
            g: p.guard.clone(),
            obstacle: p.obstacle.clone(),
            base: p.base,
            period: p.period(),
            fence: None,
            latch: EStopLatch::default(),
            limiter: Limiter::default(),
            counts: GuardCounts::default(),
            last_flags: GuardFlags::default(),
        };
        g.set_params(p);
        g
    }

    /// Replaces the parameters; the latch and the last command stay.
    pub fn set_params(&mut self, p: &Params) {
        self.g = p.guard.clone();
        self.obstacle = p.obstacle.clone();
        self.base = p.base;
        self.period = p.period();
        self.fence = p.fence_polygon().map(|polygon| Geofence { polygon, action: p.geofence.action, margin: p.geofence.margin });
    }

    /// The last command sent.
    pub fn last(&self) -> Cmd {
        self.limiter.prev()
    }

    /// The zero command the e-stop sends at once at `now`.
    pub fn emergency_stop(&mut self, now: Nanos) -> Cmd {
        self.limiter.force(now, Cmd::ZERO);
        self.last_flags = GuardFlags { e_stop: true, ..Default::default() };
        Cmd::ZERO
    }

    /// The command to send at `now` for `target`, given the pose (for the fence) and the nearest
    /// range in the forward sector (`None`: no scan in use).
    pub fn apply(&mut self, now: Nanos, target: Cmd, pose: Option<&Pose2>, nearest: Option<f64>, drive: &Drive) -> Cmd {
        let mut flags = GuardFlags::default();
        let clean = |v: f64, bad: &mut bool| {
            if v.is_finite() {
                v
            } else {
                *bad = true;
                0.0
            }
        };
        let mut c = Cmd { vx: clean(target.vx, &mut flags.nonfinite), vy: clean(target.vy, &mut flags.nonfinite), wz: clean(target.wz, &mut flags.nonfinite) };
        if self.base == BaseKind::DiffDrive {
            c.vy = 0.0;
        }
        if self.latch.is_latched() {
            return self.finish(now, Cmd::ZERO, GuardFlags { e_stop: true, ..flags }, true);
        }
        if let (Some(f), Some(pose)) = (&self.fence, pose) {
            let (fc, verdict) = f.apply(c, pose, drive);
            if verdict != FenceVerdict::Clear {
                flags.fence = Some(verdict);
                c = Cmd { vy: if self.base == BaseKind::DiffDrive { 0.0 } else { fc.vy }, ..fc };
            }
        }
        let o = &self.obstacle;
        let nearest = nearest.filter(|d| !d.is_nan());
        if let Some(d) = nearest {
            if d < o.slow_distance && c.vx > 0.0 {
                let span = o.slow_distance - o.stop_distance;
                let k = if span > 0.0 { ((d - o.stop_distance) / span).clamp(0.0, 1.0) } else { 0.0 };
                let cap = self.g.max_linear * k;
                if c.vx > cap {
                    c.vx = cap;
                    flags.obstacle_slow = true;
                }
            }
        }
        let (mut out, limited) = self.limiter.limit(now, c, &self.g, self.period);
        flags.limited = limited;
        let mut cut = false;
        if nearest.is_some_and(|d| d <= o.stop_distance) {
            flags.obstacle_stop = true;
            cut = out.vx > 0.0 || out.vy != 0.0;
            out.vx = out.vx.min(0.0);
            out.vy = 0.0;
        }
        self.finish(now, out, flags, cut)
    }

    fn finish(&mut self, now: Nanos, c: Cmd, flags: GuardFlags, force: bool) -> Cmd {
        // Defensive: nothing above can make a non-finite value from finite ones.
        let c = if c.is_finite() { c } else { Cmd::ZERO };
        if force {
            self.limiter.force(now, c);
        }
        self.counts.nonfinite += u64::from(flags.nonfinite);
        self.counts.fence += u64::from(flags.fence.is_some());
        self.counts.obstacle_stops += u64::from(flags.obstacle_stop);
        self.counts.limited += u64::from(flags.limited);
        self.last_flags = flags;
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::params::DriveParams;

    fn drive() -> Drive {
        Drive { p: DriveParams::default(), base: BaseKind::DiffDrive }
    }

    #[test]
    fn e_stop_zeroes_at_once_and_obstacle_stop_bypasses_decel() {
        let p = Params::default();
        let mut g = Guard::new(&p);
        let full = Cmd { vx: 0.3, vy: 0.5, wz: 0.2 };
        let mut t = 0;
        for _ in 0..20 {
            t += 100_000_000;
            g.apply(t, full, None, None, &drive());
        }
        assert_eq!(g.last().vx, 0.3);
        assert_eq!(g.last().vy, 0.0, "diff drive never uses linear.y");
        // Obstacle at 0.2 m < 0.3 m: forward zero now, turning allowed.
        let c = g.apply(t + 100_000_000, full, None, Some(0.2), &drive());
        assert_eq!(c.vx, 0.0);
        assert!(c.wz > 0.0);
        // Slow zone at 0.55 m (half way): cap 0.15, reached from 0 at 0.5 m/s^2 in 0.3 s.
        for k in 2..8 {
            g.apply(t + k * 100_000_000, full, None, Some(0.55), &drive());
        }
        assert!((g.last().vx - 0.15).abs() < 1e-9, "{:?}", g.last());
        g.latch.on_e_stop(true);
        assert_eq!(g.apply(t + 9 * 100_000_000, full, None, None, &drive()), Cmd::ZERO);
        let nan = Cmd { vx: f64::NAN, vy: 0.0, wz: f64::INFINITY };
        g.latch.on_e_stop(false);
        assert_eq!(g.latch.on_reset(), ResetOutcome::Released);
        assert_eq!(g.apply(t + 10 * 100_000_000, nan, None, None, &drive()), Cmd::ZERO);
        assert_eq!(g.counts.nonfinite, 1);
    }
}
