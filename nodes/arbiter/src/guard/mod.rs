//! The guard: applied last to every command, whatever the strategy.
//!
//! Order of application (each step sees the previous one's output):
//! 1. non-finite components (NaN, inf) become 0 (counted);
//! 2. a differential drive gets `linear.y = 0`;
//! 3. e-stop latched: the command is exactly zero, at once, **bypassing the deceleration
//!    limits** (an e-stop means stop now; the base's own limits are the only ramp left);
//! 4. geofence ([`geofence`]);
//! 5. the guarded sector: when the scan is in use, the sector of `obstacle.sector_half_angle`
//!    around the commanded direction of planar motion (`atan2(linear.y, linear.x)` in
//!    base_link: forward, reverse, or sideways on a holonomic base) is looked up in the last
//!    scan ([`crate::inputs::ScanObs::sector`]). Blinded (fewer than
//!    `obstacle.min_valid_fraction` valid beams, no beam at all, or no scan yet): the target
//!    becomes zero, rotation included ([`GuardFlags::blinded`]; the node reports HALTED with
//!    the reason). Otherwise the slow zone caps the planar speed at
//!    `max_linear * (d - stop) / (slow - stop)` for the nearest range `d` in that sector;
//! 6. caps and acceleration/deceleration limits ([`limiter`]);
//! 7. obstacle stop: nearer than `obstacle.stop_distance` in the sector toward the motion of
//!    the limited command, its planar part becomes 0 at once, **bypassing the deceleration
//!    limit** (a collision is imminent); turning, and moving away from the obstacle, stay
//!    allowed.
//!
//! Every other stop (watchdog halts, blinded sectors, WAITING, DECLARED, the slow zone, the
//! fence) is a zero or lower *target* that ramps down under the deceleration limits: a stale
//! sensor is not an imminent collision, and braking harder than `max_linear_decel` can skid or
//! tip the base. The stopping distance is at most `v^2 / (2 decel)` (0.045 m with the
//! defaults).

pub mod estop;
pub mod geofence;
pub mod limiter;

use crate::drive::{Cmd, Drive};
use crate::geometry::Pose2;
use crate::inputs::{ScanObs, Sector};
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
    /// An obstacle is within the stop distance toward the motion (planar motion is zero).
    pub obstacle_stop: bool,
    /// The guarded sector toward the commanded motion was blinded (the target became zero).
    pub blinded: Option<Sector>,
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
    /// Commands zeroed because the guarded sector was blinded.
    pub blinded: u64,
}

/// What the guard knows of the scan.
#[derive(Debug, Clone, Copy)]
pub enum ScanInput<'a> {
    /// The scan is not in use (`obstacle.enabled` false and no scan received).
    Unused,
    /// In use, but no valid scan yet: every sector is blinded.
    Missing,
    /// The last accepted scan.
    Seen(&'a ScanObs),
}

impl ScanInput<'_> {
    /// The sector toward `direction` [rad, base_link] (`None`: the scan is not in use).
    pub fn sector(&self, direction: f64, half: f64) -> Option<Sector> {
        match self {
            ScanInput::Unused => None,
            ScanInput::Missing => Some(Sector { direction, beams: 0, valid: 0, nearest: f64::INFINITY }),
            ScanInput::Seen(s) => Some(s.sector(direction, half)),
        }
    }
}

/// The direction of planar motion of `c` [rad, base_link] (`None`: no planar motion).
pub fn motion_direction(c: &Cmd) -> Option<f64> {
    (c.vx.hypot(c.vy) > 1e-9).then(|| c.vy.atan2(c.vx))
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

    /// The command to send at `now` for `target`, given the pose (for the fence) and the scan.
    pub fn apply(&mut self, now: Nanos, target: Cmd, pose: Option<&Pose2>, scan: ScanInput<'_>, drive: &Drive) -> Cmd {
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
        let toward = motion_direction(&c).and_then(|d| scan.sector(d, o.sector_half_angle));
        if let Some(sector) = toward {
            if sector.blinded(o.min_valid_fraction) {
                flags.blinded = Some(sector);
                c = Cmd::ZERO;
            } else if sector.nearest < o.slow_distance {
                let span = o.slow_distance - o.stop_distance;
                let k = if span > 0.0 { ((sector.nearest - o.stop_distance) / span).clamp(0.0, 1.0) } else { 0.0 };
                let cap = self.g.max_linear * k;
                let speed = c.vx.hypot(c.vy);
                if speed > cap {
                    let f = if speed > 0.0 { cap / speed } else { 0.0 };
                    c.vx *= f;
                    c.vy *= f;
                    flags.obstacle_slow = true;
                }
            }
        }
        let (mut out, limited) = self.limiter.limit(now, c, &self.g, self.period);
        flags.limited = limited;
        let mut cut = false;
        let moving = motion_direction(&out);
        let ahead = scan.sector(moving.unwrap_or(0.0), o.sector_half_angle);
        if ahead.is_some_and(|s| s.valid > 0 && s.nearest <= o.stop_distance) {
            flags.obstacle_stop = true;
            if moving.is_some() {
                cut = true;
                out.vx = 0.0;
                out.vy = 0.0;
            }
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
        self.counts.blinded += u64::from(flags.blinded.is_some());
        self.last_flags = flags;
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::inputs::Beam;
    use crate::params::DriveParams;

    fn drive() -> Drive {
        Drive { p: DriveParams::default(), base: BaseKind::DiffDrive }
    }

    /// A scan all around with range `front` within 0.5 rad of forward and `rest` elsewhere.
    fn around(front: f64, rest: f64) -> ScanObs {
        let beams = (0..63)
            .map(|k| {
                let a = -3.1 + 0.1 * k as f64;
                (a, Beam::Valid(if a.abs() <= 0.5 { front } else { rest }))
            })
            .collect();
        ScanObs { beams }
    }

    #[test]
    fn e_stop_zeroes_at_once_and_obstacle_stop_bypasses_decel() {
        let p = Params::default();
        let mut g = Guard::new(&p);
        let full = Cmd { vx: 0.3, vy: 0.5, wz: 0.2 };
        let mut t = 0;
        for _ in 0..20 {
            t += 100_000_000;
            g.apply(t, full, None, ScanInput::Unused, &drive());
        }
        assert_eq!(g.last().vx, 0.3);
        assert_eq!(g.last().vy, 0.0, "diff drive never uses linear.y");
        // Obstacle at 0.2 m < 0.3 m: forward zero now, turning allowed.
        let near = around(0.2, 9.0);
        let c = g.apply(t + 100_000_000, full, None, ScanInput::Seen(&near), &drive());
        assert_eq!(c.vx, 0.0);
        assert!(c.wz > 0.0);
        // Slow zone at 0.55 m (half way): cap 0.15, reached from 0 at 0.5 m/s^2 in 0.3 s.
        let half_way = around(0.55, 9.0);
        for k in 2..8 {
            g.apply(t + k * 100_000_000, full, None, ScanInput::Seen(&half_way), &drive());
        }
        assert!((g.last().vx - 0.15).abs() < 1e-9, "{:?}", g.last());
        g.latch.on_e_stop(true);
        assert_eq!(g.apply(t + 9 * 100_000_000, full, None, ScanInput::Unused, &drive()), Cmd::ZERO);
        let nan = Cmd { vx: f64::NAN, vy: 0.0, wz: f64::INFINITY };
        g.latch.on_e_stop(false);
        assert_eq!(g.latch.on_reset(), ResetOutcome::Released);
        assert_eq!(g.apply(t + 10 * 100_000_000, nan, None, ScanInput::Unused, &drive()), Cmd::ZERO);
        assert_eq!(g.counts.nonfinite, 1);
    }

    #[test]
    fn the_guarded_sector_follows_the_motion_and_blinded_means_no_motion() {
        let p = Params { base: BaseKind::Holonomic, guard: GuardParams { max_reverse: 0.3, ..Default::default() }, ..Default::default() };
        let holo = Drive { p: DriveParams::default(), base: BaseKind::Holonomic };
        let wall_ahead = around(0.2, 9.0);
        let run = |target: Cmd, scan: &ScanObs| {
            let mut g = Guard::new(&p);
            let mut c = Cmd::ZERO;
            for k in 1..=20 {
                c = g.apply(k * 100_000_000, target, None, ScanInput::Seen(scan), &holo);
            }
            (c, g.last_flags)
        };
        // A wall 0.2 m ahead: forward is cut, reverse and sideways are free.
        assert_eq!(run(Cmd { vx: 0.2, vy: 0.0, wz: 0.0 }, &wall_ahead).0.vx, 0.0);
        assert!((run(Cmd { vx: -0.2, vy: 0.0, wz: 0.0 }, &wall_ahead).0.vx + 0.2).abs() < 1e-12);
        assert!((run(Cmd { vx: 0.0, vy: 0.2, wz: 0.0 }, &wall_ahead).0.vy - 0.2).abs() < 1e-12);
        // The wall behind or to the left: reversing or going left is cut.
        let wall_behind = ScanObs { beams: wall_ahead.beams.iter().map(|&(a, b)| (crate::geometry::wrap_angle(a + std::f64::consts::PI), b)).collect() };
        assert_eq!(run(Cmd { vx: -0.2, vy: 0.0, wz: 0.0 }, &wall_behind).0.vx, 0.0);
        let wall_left = ScanObs { beams: wall_ahead.beams.iter().map(|&(a, b)| (crate::geometry::wrap_angle(a + std::f64::consts::FRAC_PI_2), b)).collect() };
        assert_eq!(run(Cmd { vx: 0.0, vy: 0.2, wz: 0.0 }, &wall_left).0.vy, 0.0);
        // A blinded sector toward the motion: no motion at all, rotation included.
        let blind_ahead = ScanObs { beams: wall_ahead.beams.iter().map(|&(a, b)| (a, if a.abs() <= 0.5 { Beam::Invalid } else { b })).collect() };
        let (c, f) = run(Cmd { vx: 0.2, vy: 0.0, wz: 0.3 }, &blind_ahead);
        assert_eq!(c, Cmd::ZERO);
        assert!(f.blinded.is_some_and(|s| s.valid == 0 && s.beams == 11), "{f:?}");
        assert!(run(Cmd { vx: -0.2, vy: 0.0, wz: 0.0 }, &blind_ahead).1.blinded.is_none(), "reversing looks behind");
        // No scan yet while it is in use: blinded.
        let mut g = Guard::new(&p);
        g.apply(100_000_000, Cmd { vx: 0.2, vy: 0.0, wz: 0.0 }, None, ScanInput::Missing, &holo);
        assert!(g.last_flags.blinded.is_some());
    }
}
