//! Speed caps and acceleration/deceleration limits.
//!
//! Contract, per command at time `now` [ns], with the previous command `p` at `t_prev`:
//! - the allowed time step is `dt = clamp(now - t_prev, 0, period)` [s], from the stamps the
//!   executor hands in (never wall time): a forward clock jump allows no more than one control
//!   period (the very first command counts one period from rest); a step *back* in time (a
//!   restarted simulation or bag loop) counts as one nominal period, so the limiter never
//!   repeats the previous command because the clock went back; a duplicated stamp allows no
//!   speeding up, but braking always gets at least one nominal period ([`Steps`]): the limiter
//!   never stands between a command and slowing down;
//! - each axis (linear.x, linear.y, angular.z) moves from `p` toward the capped target `q`:
//!   speeding up (same sign, growing) by at most `accel * dt`; slowing down by at most
//!   `decel * dt`; through zero by braking at `decel` first and speeding up at `accel` with
//!   the time left (the same rule as [`feasible`], which tests use as the reference);
//! - caps: `-max_reverse <= linear.x`, `|(linear.x, linear.y)| <= max_linear`,
//!   `|angular.z| <= max_angular`; when rate limiting pushes the planar norm over the cap, the
//!   axes that sped up give back part of their step (which keeps every axis feasible). Caps win
//!   over the deceleration limit only when the previous command is itself over a cap (after a
//!   run-time change of the caps).

use crate::drive::Cmd;
use crate::params::GuardParams;
use sillage_core::time::secs;
use sillage_core::Nanos;

/// Relative slack used by [`feasible`] for float rounding.
pub const SLACK: f64 = 1e-9;

/// The time steps [s] a command may use: `up` for speeding up, `down` (>= `up`) for braking.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Steps {
    /// Time for speeding up [s].
    pub up: f64,
    /// Time for braking [s].
    pub down: f64,
}

impl Steps {
    /// The same step for both.
    pub fn both(dt: f64) -> Steps {
        Steps { up: dt, down: dt }
    }
}

/// One axis: from `p` toward `q` within `dt` [s] under `accel` and `decel`.
pub fn step_axis(p: f64, q: f64, accel: f64, decel: f64, dt: f64) -> f64 {
    step_axis_in(p, q, accel, decel, Steps::both(dt))
}

/// One axis: from `p` toward `q`, braking for at most `dt.down` [s] at `decel` and speeding
/// up within `dt.up` [s] at `accel`.
pub fn step_axis_in(p: f64, q: f64, accel: f64, decel: f64, dt: Steps) -> f64 {
    if p == q {
        return q;
    }
    if p * q >= 0.0 && q.abs() >= p.abs() {
        let up = (q.abs() - p.abs()).min(accel * dt.up.max(0.0));
        return if q != 0.0 { q.signum() * (p.abs() + up) } else { p };
    }
    if p * q >= 0.0 {
        let down = (p.abs() - q.abs()).min(decel * dt.down.max(0.0));
        return p.signum() * (p.abs() - down);
    }
    // Crossing zero.
    let t_stop = p.abs() / decel;
    if t_stop >= dt.down {
        return p.signum() * (p.abs() - decel * dt.down.max(0.0));
    }
    q.signum() * q.abs().min(accel * (dt.up - t_stop).max(0.0))
}

/// Whether going from `p` to `v` within `dt` [s] respects `accel` and `decel` (with
/// [`SLACK`]).
pub fn feasible(p: f64, v: f64, accel: f64, decel: f64, dt: f64) -> bool {
    let tol = SLACK * (1.0 + p.abs() + v.abs());
    if p * v >= 0.0 {
        if v.abs() >= p.abs() {
            v.abs() - p.abs() <= accel * dt + tol
        } else {
            p.abs() - v.abs() <= decel * dt + tol
        }
    } else {
        p.abs() / decel + v.abs() / accel <= dt + tol * (1.0 / decel + 1.0 / accel)
    }
}

/// The effective time step [s] between a command at `t_prev` and one at `now` (a step back
/// in time counts as one nominal `period`).
pub fn effective_dt(t_prev: Option<Nanos>, now: Nanos, period: f64) -> f64 {
    match t_prev {
        None => period,
        Some(t) if now < t => period,
        Some(t) => secs(now.saturating_sub(t)).clamp(0.0, period),
    }
}

/// The steps a command at `now` may use after one at `t_prev`: braking gets at least `period`.
pub fn steps(t_prev: Option<Nanos>, now: Nanos, period: f64) -> Steps {
    let up = effective_dt(t_prev, now, period);
    Steps { up, down: up.max(period) }
}

/// Clamps `c` into the caps.
pub fn cap(c: Cmd, g: &GuardParams) -> Cmd {
    let mut c = Cmd { vx: c.vx.clamp(-g.max_reverse, g.max_linear), vy: c.vy.clamp(-g.max_linear, g.max_linear), wz: c.wz.clamp(-g.max_angular, g.max_angular) };
    let n = c.vx.hypot(c.vy);
    if n > g.max_linear && n > 0.0 {
        let k = g.max_linear / n;
        c.vx *= k;
        c.vy *= k;
    }
    c
}

/// The rate limiter's memory.
#[derive(Debug, Clone, Default)]
pub struct Limiter {
    prev: Cmd,
    t_prev: Option<Nanos>,
}

impl Limiter {
    /// The last command.
    pub fn prev(&self) -> Cmd {
        self.prev
    }

    /// The stamp of the last command.
    pub fn prev_stamp(&self) -> Option<Nanos> {
        self.t_prev
    }

    /// Records `c` as sent at `now` without limiting (the e-stop and hard stops).
    pub fn force(&mut self, now: Nanos, c: Cmd) {
        self.prev = c;
        self.t_prev = Some(now);
    }

    /// The command sent at `now` for `target`; returns it and whether limiting changed it.
    pub fn limit(&mut self, now: Nanos, target: Cmd, g: &GuardParams, period: f64) -> (Cmd, bool) {
        let q = cap(target, g);
        let dt = steps(self.t_prev, now, period);
        let p = self.prev;
        let mut v = Cmd {
            vx: step_axis_in(p.vx, q.vx, g.max_linear_accel, g.max_linear_decel, dt),
            vy: step_axis_in(p.vy, q.vy, g.max_linear_accel, g.max_linear_decel, dt),
            wz: step_axis_in(p.wz, q.wz, g.max_angular_accel, g.max_angular_decel, dt),
        };
        if v.vx.hypot(v.vy) > g.max_linear {
            shrink_growing_axes(&mut v, &p, g.max_linear);
        }
        let out = cap(v, g);
        let changed = out != target;
        self.force(now, out);
        (out, changed)
    }
}

/// Pulls the axes whose magnitude grew back toward `p` until `|(vx, vy)| = max`.
fn shrink_growing_axes(v: &mut Cmd, p: &Cmd, max: f64) {
    let grew = |v: f64, p: f64| v.abs() > p.abs();
    let (gx, gy) = (grew(v.vx, p.vx), grew(v.vy, p.vy));
    // |(p_i + s d_i) for growing i, v_j otherwise| = max, solved for s in [0, 1].
    let (dx, dy) = (if gx { v.vx - p.vx } else { 0.0 }, if gy { v.vy - p.vy } else { 0.0 });
    let (bx, by) = (if gx { p.vx } else { v.vx }, if gy { p.vy } else { v.vy });
    let a = dx * dx + dy * dy;
    let b = 2.0 * (bx * dx + by * dy);
    let c = bx * bx + by * by - max * max;
    if a <= 0.0 || c > 0.0 {
        return; // Nothing grew, or even s = 0 is over the cap: `cap` scales (caps win).
    }
    let s = ((-b + (b * b - 4.0 * a * c).max(0.0).sqrt()) / (2.0 * a)).clamp(0.0, 1.0) * (1.0 - 1e-12);
    v.vx = bx + s * dx;
    v.vy = by + s * dy;
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn axis_steps_follow_accel_decel_and_zero_crossing() {
        // Speeding up 0 -> 1 at 0.5 m/s^2 over 0.1 s: 0.05.
        assert!((step_axis(0.0, 1.0, 0.5, 1.0, 0.1) - 0.05).abs() < 1e-12);
        // Slowing 1 -> 0 at 1 m/s^2: 0.9.
        assert!((step_axis(1.0, 0.0, 0.5, 1.0, 0.1) - 0.9).abs() < 1e-12);
        // Crossing: 0.05 -> -1 with decel 1, accel 0.5, dt 0.1: 0.05 s to stop, then 0.025.
        assert!((step_axis(0.05, -1.0, 0.5, 1.0, 0.1) + 0.025).abs() < 1e-12);
        assert_eq!(step_axis(0.3, 0.0, 0.5, 1.0, 0.0), 0.3, "no time, no change");
        assert!(feasible(0.05, -0.025, 0.5, 1.0, 0.1));
        assert!(!feasible(0.05, -0.03, 0.5, 1.0, 0.1));
        assert_eq!(effective_dt(Some(10), 5, 0.1), 0.1, "a step back counts one nominal period");
        assert_eq!(effective_dt(Some(10), 10, 0.1), 0.0);
        assert_eq!(effective_dt(Some(0), 10_000_000_000, 0.1), 0.1);
        // A duplicated stamp: no speeding up, braking for one nominal period.
        assert_eq!(steps(Some(10), 10, 0.1), Steps { up: 0.0, down: 0.1 });
        assert!((step_axis_in(0.3, 0.0, 0.5, 1.0, steps(Some(10), 10, 0.1)) - 0.2).abs() < 1e-12);
        assert_eq!(step_axis_in(0.1, 0.3, 0.5, 1.0, steps(Some(10), 10, 0.1)), 0.1);
    }

    #[test]
    fn a_clock_step_back_never_repeats_the_previous_command() {
        let g = GuardParams::default();
        let mut l = Limiter::default();
        l.force(5_000_000_000, Cmd { vx: 0.3, vy: 0.0, wz: 0.5 });
        let (v, _) = l.limit(1_000_000_000, Cmd::ZERO, &g, 0.1);
        // One nominal period of braking: 0.3 - 1.0 * 0.1 and 0.5 - 4.0 * 0.1.
        assert!((v.vx - 0.2).abs() < 1e-12 && (v.wz - 0.1).abs() < 1e-12, "{v:?}");
    }

    proptest! {
        #[test]
        fn limited_commands_are_feasible_and_capped(
            px in -0.3f64..0.3, py in -0.3f64..0.3, pw in -1.0f64..1.0,
            qx in -2.0f64..2.0, qy in -2.0f64..2.0, qw in -3.0f64..3.0,
            dt_ms in 0i64..300, accel in 0.05f64..5.0, decel in 0.05f64..5.0,
        ) {
            let g = GuardParams { max_reverse: 0.3, max_linear_accel: accel, max_linear_decel: decel, ..Default::default() };
            let p = cap(Cmd { vx: px, vy: py, wz: pw }, &g);
            let mut l = Limiter::default();
            l.force(0, p);
            let (v, _) = l.limit(dt_ms * 1_000_000, Cmd { vx: qx, vy: qy, wz: qw }, &g, 0.1);
            let dt = (dt_ms as f64 * 1e-3).min(0.1);
            // Braking gets one nominal period even on a duplicated stamp: check speeding up
            // against `dt` and braking against the period.
            let ok = |p: f64, v: f64, a: f64, d: f64| {
                if p * v >= 0.0 && v.abs() <= p.abs() { feasible(p, v, a, d, 0.1) } else { feasible(p, v, a, d, dt) }
            };
            prop_assert!(ok(p.vx, v.vx, accel, decel), "vx {} -> {} dt {}", p.vx, v.vx, dt);
            prop_assert!(ok(p.vy, v.vy, accel, decel), "vy {} -> {} dt {}", p.vy, v.vy, dt);
            prop_assert!(ok(p.wz, v.wz, g.max_angular_accel, g.max_angular_decel));
            prop_assert!(v.vx.hypot(v.vy) <= g.max_linear * (1.0 + SLACK));
            prop_assert!(v.vx >= -g.max_reverse && v.wz.abs() <= g.max_angular);
        }
    }
}
