//! Property tests of the whole core over random input sequences: NaN and inf fields,
//! duplicated, reordered and random header stamps, node-clock jumps (forward and back), e-stop
//! toggles and resets, malformed messages, random parameters, blinded scans (all NaN or out of
//! range) and readings below `range_min`, run-time parameter changes (some above the hard
//! ceilings), and an e-stop that may never be heard. For every published command:
//! - every component is finite;
//! - the caps in force hold (planar norm, reverse, yaw rate; differential drives never use
//!   linear.y), and a run-time cap above its `limits.*` ceiling is refused (modelled below);
//! - each axis obeys the acceleration limit over the allowed step `clamp(now - t_prev, 0,
//!   period)` and the deceleration limit over at least one period (braking is always allowed;
//!   a step back in time counts as one period; reference: [`feasible`]), except for the
//!   documented bypasses: exactly zero while the e-stop is latched, zero planar motion toward
//!   a scanned obstacle within the stop distance, and a previous command over caps lowered at
//!   run time;
//! - after a step back of the node's clock, a non-zero previous command is never repeated;
//!   on a tick that leaves the node HALTED every axis brakes toward zero (or stays zero);
//! - while the last scan is blinded (no valid beam), the planar speed never grows; while it
//!   shows an obstacle within the stop distance (a reading below `range_min` included), no
//!   planar motion heads into the scanned field;
//! - until an `e_stop` message has been heard (`e_stop.required`), every command is zero;
//! - an `e_stop = true` message yields a zero command in the same call;
//! - the latch (modelled independently below) never releases without a reset after a false.
//!
//! Limits follow the velocity-smoother convention (per-axis accel/decel; through zero: brake,
//! then accelerate) of ROS navigation stacks (common practice).

use proptest::prelude::*;
use proptest::test_runner::{Config, TestRunner};
use sillage_arbiter::drive::Cmd;
use sillage_arbiter::guard::limiter::{effective_dt, feasible};
use sillage_arbiter::params::{BaseKind, StrategyKind};
use sillage_arbiter::{Arbiter, Mode, Params};
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos, NodeCore, Outbox};
use std::cell::Cell;

#[derive(Debug, Clone)]
enum Stamp {
    Now,
    Same,
    Older,
    Any(i64),
}

#[derive(Debug, Clone)]
enum Action {
    Tick,
    Wind(f64, f64, bool),
    Odom(f64, f64, f64, f64, bool),
    Events(u32, bool),
    Features(f64, f64, f64, f64),
    Bearing(f64, f64, u8),
    EStop(bool),
    Reset,
    Scan(f32, bool),
    Caps(f64, f64),
}

#[derive(Debug, Clone)]
struct Step {
    dt: Nanos,
    stamp: Stamp,
    action: Action,
}

fn num() -> impl Strategy<Value = f64> {
    prop_oneof![
        12 => -2.0f64..2.0,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
        1 => Just(0.0),
    ]
}

fn dt() -> impl Strategy<Value = Nanos> {
    prop_oneof![
        3 => Just(0i64),
        20 => 1_000_000i64..120_000_000,
        4 => Just(100_000_000i64),
        1 => 1_000_000_000i64..10_000_000_000,
        1 => -5_000_000_000i64..-1_000_000,
    ]
}

fn stamp() -> impl Strategy<Value = Stamp> {
    prop_oneof![
        12 => Just(Stamp::Now),
        2 => Just(Stamp::Same),
        2 => Just(Stamp::Older),
        1 => (0i64..20_000_000_000).prop_map(Stamp::Any),
    ]
}

fn action() -> impl Strategy<Value = Action> {
    prop_oneof![
        8 => Just(Action::Tick),
        4 => (num(), num(), any::<bool>()).prop_map(|(x, y, f)| Action::Wind(x, y, f)),
        5 => (num(), num(), num(), num(), prop::bool::weighted(0.9)).prop_map(|(x, y, yaw, v, ok)| Action::Odom(x, y, yaw, v, ok)),
        4 => (0u32..4, prop::bool::weighted(0.95)).prop_map(|(n, ok)| Action::Events(n, ok)),
        3 => (num(), num(), num(), num()).prop_map(|(r, i, d, s)| Action::Features(r.abs() * 2.0, i.abs() * 0.5, d.abs() * 0.4, s.abs() * 0.2)),
        3 => (num(), num(), 0u8..5).prop_map(|(b, c, cue)| Action::Bearing(b, c.abs() * 0.5, cue)),
        1 => any::<bool>().prop_map(Action::EStop),
        1 => Just(Action::Reset),
        2 => (range(), prop::bool::weighted(0.9)).prop_map(|(d, ok)| Action::Scan(d, ok)),
        1 => (0.05f64..2.0, 0.1f64..4.0).prop_map(|(lin, ang)| Action::Caps(lin, ang)),
    ]
}

/// A scan's uniform reading: in range, NaN, below `range_min` (0.01 m) or above `range_max`.
fn range() -> impl Strategy<Value = f32> {
    prop_oneof![
        6 => 0.01f32..3.0,
        1 => Just(f32::NAN),
        2 => Just(0.005f32),
        1 => Just(20.0f32),
    ]
}

fn params() -> impl Strategy<Value = Params> {
    (
        (0usize..4, any::<bool>(), any::<bool>(), 0.05f64..1.0, 0.0f64..1.0, 0.1f64..3.0),
        (0.05f64..5.0, 0.05f64..5.0, 0.05f64..5.0, 0.05f64..5.0),
        (any::<bool>(), any::<bool>(), prop::bool::weighted(0.7), 1.0f64..20.0),
        (1.0f64..2.0, prop::bool::weighted(0.85)),
    )
        .prop_map(|((s, holo, stamped, lin, rev, ang), (la, ld, aa, ad), (obst, fence, slow_watch, rate), (head, required))| {
            let mut p = Params {
                strategy: [StrategyKind::CastSurge, StrategyKind::Zigzag, StrategyKind::Spiral, StrategyKind::Reactive][s],
                base: if holo { BaseKind::Holonomic } else { BaseKind::DiffDrive },
                cmd_vel_stamped: stamped,
                rate,
                ..Params::default()
            };
            p.guard.max_linear = lin;
            p.guard.max_reverse = rev * lin;
            p.guard.max_angular = ang;
            p.guard.max_linear_accel = la;
            p.guard.max_linear_decel = ld;
            p.guard.max_angular_accel = aa;
            p.guard.max_angular_decel = ad;
            // The robot's declared limits, with some headroom over the caps.
            let l = &mut p.limits;
            (l.max_linear, l.max_reverse, l.max_angular) = (lin * head, rev * lin * head, ang * head);
            (l.max_linear_accel, l.max_linear_decel, l.max_angular_accel, l.max_angular_decel) = (la * head, ld * head, aa * head, ad * head);
            p.e_stop.required = required;
            p.obstacle.enabled = obst;
            if fence {
                p.geofence.enabled = true;
                p.geofence.polygon = vec![-3.0, -3.0, 3.0, -3.0, 3.0, 3.0, -3.0, 3.0];
            }
            if slow_watch {
                // Long timeouts so that random sequences often get the robot moving.
                let w = &mut p.watchdog;
                (w.odor_bearing, w.plume_features, w.odor_events, w.wind, w.odom, w.scan) = (5.0, 5.0, 5.0, 5.0, 5.0, 5.0);
            }
            p.surge.speed = 0.3;
            p.declare.dwell = 0.5;
            p
        })
}

fn header(stamp: Nanos, frame: &str) -> Header {
    Header::new(stamp, frame)
}

/// The message (input index, message) for a step; `None` for a tick.
fn message(a: &Action, stamp: Nanos) -> Option<(usize, Msg)> {
    Some(match *a {
        Action::Tick => return None,
        Action::Wind(x, y, odom) => {
            (3, Vector3Stamped { header: header(stamp, if odom { "odom" } else { "base_link" }), vector: Vector3 { x, y, z: 0.0 } }.into())
        }
        Action::Odom(x, y, yaw, v, ok) => {
            let mut m = Odometry { header: header(stamp, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
            m.pose.pose.position = Point { x: x * 2.0, y: y * 2.0, z: 0.0 };
            m.pose.pose.orientation = if ok { Quaternion::from_yaw(yaw) } else { Quaternion { x: 0.0, y: 0.0, z: 0.0, w: 0.0 } };
            m.twist.twist.linear.x = v;
            (4, m.into())
        }
        Action::Events(n, ok) => {
            let e = OdorEvent { stamp: Time::from_nanos(stamp), channel: 0, polarity: if ok { 1 } else { 5 }, level: 1.0 };
            (2, OdorEventArray { header: header(stamp, ""), events: vec![e; n as usize] }.into())
        }
        Action::Features(r, i, d, s) => (
            1,
            PlumeFeatures { header: header(stamp, ""), window: 5.0, bouts: 1, bout_rate: r, bout_amplitude: 1.0, intermittency: i, distance: d, distance_sigma: s, edge_index: f64::NAN }.into(),
        ),
        Action::Bearing(b, c, cue) => (0, OdorBearing { header: header(stamp, "base_link"), bearing: b, lag: 0.0, confidence: c, cue }.into()),
        Action::EStop(v) => (5, Bool { data: v }.into()),
        Action::Reset => (6, Empty::default().into()),
        Action::Caps(..) => return None,
        Action::Scan(d, ok) => {
            // Unstamped (always accepted when well formed), uniform ranges.
            let m = LaserScan {
                header: header(0, "laser"),
                angle_min: -1.5,
                angle_max: 1.5,
                angle_increment: if ok { 0.1 } else { 0.0 },
                range_min: 0.01,
                range_max: 10.0,
                ranges: vec![d; 31],
                ..Default::default()
            };
            (7, m.into())
        }
    })
}

/// The independent model of the latch, the e-stop, the caps in force and the scan.
#[derive(Debug)]
struct Model {
    latched: bool,
    cleared: bool,
    heard: bool,
    near: bool,
    blind: bool,
    caps: (f64, f64),
    prev: Option<(Nanos, Cmd)>,
}

fn cmd_of(m: &Msg) -> Option<Cmd> {
    let t = match m {
        Msg::TwistStamped(s) => s.twist,
        Msg::Twist(t) => *t,
        _ => return None,
    };
    Some(Cmd { vx: t.linear.x, vy: t.linear.y, wz: t.angular.z })
}

/// Runs `steps`; checks every invariant; returns the encoded outputs and whether it moved.
fn run(p: &Params, steps: &[Step]) -> Result<(Vec<Vec<u8>>, bool), TestCaseError> {
    let mut a = Arbiter::new(p.clone()).map_err(|e| TestCaseError::fail(e.to_string()))?;
    let g = &p.guard;
    let period = 1.0 / p.rate;
    let mut m = Model { latched: false, cleared: false, heard: false, near: false, blind: false, caps: (g.max_linear, g.max_angular), prev: None };
    let mut now: Nanos = 1_000_000_000;
    let mut last_stamp: Nanos = now;
    let mut out = Outbox::new();
    let mut encoded = Vec::new();
    let mut moved = false;
    for st in steps {
        now = now.saturating_add(st.dt).max(0);
        let stamp = match st.stamp {
            Stamp::Now => now,
            Stamp::Same => last_stamp,
            Stamp::Older => last_stamp - 50_000_000,
            Stamp::Any(t) => t,
        };
        last_stamp = stamp;
        let mut pressed = false;
        let stepped_back = m.prev.is_some_and(|(t, _)| now < t);
        if let Action::Caps(lin, ang) = st.action {
            // Accepted exactly when within the start-up ceilings and still >= max_reverse.
            let want = lin <= p.limits.max_linear && ang <= p.limits.max_angular && g.max_reverse <= lin;
            let yaml = format!("guard:\n  max_linear: {lin:?}\n  max_angular: {ang:?}\n");
            let v: serde_yaml::Value = serde_yaml::from_str(&yaml).map_err(|e| TestCaseError::fail(e.to_string()))?;
            let got = a.set_params_yaml(&v);
            prop_assert_eq!(got.is_ok(), want, "run-time caps {} m/s, {} rad/s under ceilings {:?}: {:?}", lin, ang, p.limits, got);
            if want {
                m.caps = (lin, ang);
            } else if let Err(e) = got {
                prop_assert!(e.to_string().contains("guard.max_"), "the refusal names the key: {}", e);
            }
            continue;
        }
        match message(&st.action, stamp) {
            None => a.on_timer(now, 0, &mut out),
            Some((i, msg)) => {
                match st.action {
                    Action::EStop(_) if !m.heard => {
                        m.heard = true;
                        if let Action::EStop(true) = st.action {
                            (m.latched, m.cleared, pressed) = (true, false, true);
                        }
                    }
                    Action::EStop(true) => {
                        m.latched = true;
                        m.cleared = false;
                        pressed = true;
                    }
                    Action::EStop(false) if m.latched => m.cleared = true,
                    Action::Reset if m.latched && m.cleared => {
                        m.latched = false;
                        m.cleared = false;
                    }
                    Action::Scan(d, true) => {
                        // REP 117: NaN and readings above range_max (10 m) are invalid; below
                        // range_min (0.01 m) is an obstacle too close to measure.
                        let valid = !d.is_nan() && d <= 10.0;
                        m.blind = !valid;
                        m.near = valid && f64::from(d) <= p.obstacle.stop_distance;
                    }
                    _ => {}
                }
                a.on_message(now, i, &msg, &mut out);
            }
        }
        prop_assert_eq!(a.e_stop_latched(), m.latched, "latch state after {:?}", st.action);
        let mut zero_seen = false;
        let halted_tick = matches!(st.action, Action::Tick) && a.mode() == Mode::Halted;
        for (idx, msg) in out.drain() {
            let mut bytes = Vec::new();
            msg.encode_into(&mut bytes).map_err(|e| TestCaseError::fail(e.to_string()))?;
            encoded.push(bytes);
            match idx {
                0 => {
                    let c = cmd_of(&msg).ok_or_else(|| TestCaseError::fail("cmd_vel is not a twist"))?;
                    prop_assert_eq!(matches!(msg, Msg::TwistStamped(_)), p.cmd_vel_stamped);
                    prop_assert!(c.is_finite(), "non-finite command {:?}", c);
                    let (max_linear, max_angular) = m.caps;
                    prop_assert!(c.vx >= -g.max_reverse - 1e-12 && c.vx.hypot(c.vy) <= max_linear * (1.0 + 1e-9) + 1e-12, "caps {:?} {:?}", c, m.caps);
                    prop_assert!(c.wz.abs() <= max_angular + 1e-12, "yaw cap {:?}", c);
                    if p.e_stop.required && !m.heard {
                        prop_assert_eq!(c, Cmd::ZERO, "e_stop never heard: no motion");
                    }
                    if p.base == BaseKind::DiffDrive {
                        prop_assert_eq!(c.vy, 0.0);
                    }
                    if m.latched {
                        prop_assert_eq!(c, Cmd::ZERO, "latched: exactly zero");
                    } else {
                        let (t0, c0) = m.prev.unwrap_or((now, Cmd::ZERO));
                        // Reference steps from the contract: a step back counts one period;
                        // braking always gets at least one period.
                        let dt = if m.prev.is_some() && now < t0 { period } else { effective_dt(m.prev.map(|_| t0), now, period) };
                        let ok = |v0: f64, v: f64, accel: f64, decel: f64| {
                            let braking = v0 * v >= 0.0 && v.abs() <= v0.abs();
                            feasible(v0, v, accel, decel, if braking { dt.max(period) } else { dt })
                        };
                        let lin_ok = |v0: f64, v: f64| ok(v0, v, g.max_linear_accel, g.max_linear_decel);
                        let hard_stop = m.near && c.vx.hypot(c.vy) == 0.0;
                        let over_caps = c0.vx.hypot(c0.vy) > max_linear || c0.wz.abs() > max_angular || c0.vx < -g.max_reverse;
                        prop_assert!(lin_ok(c0.vx, c.vx) || hard_stop || over_caps, "vx {} -> {} in {} s", c0.vx, c.vx, dt);
                        prop_assert!(lin_ok(c0.vy, c.vy) || hard_stop || over_caps, "vy {} -> {} in {} s", c0.vy, c.vy, dt);
                        prop_assert!(ok(c0.wz, c.wz, g.max_angular_accel, g.max_angular_decel) || over_caps, "wz {} -> {} in {} s", c0.wz, c.wz, dt);
                        if halted_tick && m.prev.is_some() {
                            // HALTED: the target is zero, and braking is always allowed.
                            let brakes = |v0: f64, v: f64| v0 == 0.0 && v == 0.0 || v.abs() < v0.abs() && v0 * v >= 0.0;
                            prop_assert!(brakes(c0.vx, c.vx) && brakes(c0.vy, c.vy) && brakes(c0.wz, c.wz), "HALTED ({}), yet {:?} -> {:?} in {} s", a.reason(), c0, c, dt);
                        }
                        if stepped_back && c0 != Cmd::ZERO && m.prev.is_some() {
                            prop_assert!(c != c0, "the clock stepped back: the previous command {:?} repeated", c0);
                        }
                        if m.blind {
                            prop_assert!(c.vx.hypot(c.vy) <= c0.vx.hypot(c0.vy) + 1e-12, "blinded scan: planar speed grew {:?} -> {:?}", c0, c);
                        }
                        if m.near && c.vx.hypot(c.vy) > 0.0 {
                            // The scan spans +-1.5 rad and the sector is +-0.5 rad wide.
                            let dir = c.vy.atan2(c.vx).abs();
                            prop_assert!(dir > 2.0 - 1e-9, "an obstacle within the stop distance, yet {:?} heads into it", c);
                        }
                    }
                    moved |= c != Cmd::ZERO;
                    zero_seen |= c == Cmd::ZERO;
                    m.prev = Some((now, c));
                }
                1 => {
                    let Msg::SearchState(s) = &msg else { return Err(TestCaseError::fail("search_state type")) };
                    prop_assert!(!s.reason.is_empty());
                    prop_assert!(Mode::from_code(s.mode).is_some());
                    if m.latched {
                        prop_assert_eq!(s.mode, Mode::Halted.code());
                    }
                }
                2 => {
                    let Msg::PointStamped(e) = &msg else { return Err(TestCaseError::fail("source_estimate type")) };
                    prop_assert!(e.point.x.is_finite() && e.point.y.is_finite());
                }
                _ => return Err(TestCaseError::fail("unknown output")),
            }
        }
        if pressed {
            prop_assert!(zero_seen, "e_stop = true must publish a zero command in the same call");
        }
    }
    Ok((encoded, moved))
}

#[test]
fn random_sequences_keep_every_guarantee() {
    let mut runner = TestRunner::new(Config { cases: 256, failure_persistence: None, ..Config::default() });
    let moving = Cell::new(0u32);
    let strategy = (params(), prop::bool::weighted(0.8), prop::collection::vec((dt(), stamp(), action()).prop_map(|(dt, stamp, action)| Step { dt, stamp, action }), 1..300));
    runner
        .run(&strategy, |(p, heard_first, mut steps)| {
            if heard_first {
                steps.insert(0, Step { dt: 0, stamp: Stamp::Now, action: Action::EStop(false) });
            }
            let (a, moved) = run(&p, &steps)?;
            let (b, _) = run(&p, &steps)?;
            prop_assert!(a == b, "two runs of the same inputs differ");
            moving.set(moving.get() + u32::from(moved));
            Ok(())
        })
        .unwrap_or_else(|e| panic!("{e}"));
    eprintln!("{} of 256 cases moved", moving.get());
    // The random inputs must exercise motion, or the limits above were never tested.
    assert!(moving.get() > 20, "only {} of 256 cases ever moved", moving.get());
}
