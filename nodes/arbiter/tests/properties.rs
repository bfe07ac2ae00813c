//! Property tests of the whole core over random input sequences: NaN and inf fields,
//! duplicated, reordered and random header stamps, node-clock jumps (forward and back), e-stop
//! toggles and resets, malformed messages, random parameters. For every published command:
//! - every component is finite;
//! - the caps hold (planar norm, reverse, yaw rate; differential drives never use linear.y);
//! - each axis obeys the acceleration/deceleration limits over the allowed step
//!   `clamp(now - t_prev, 0, period)` (reference: [`feasible`]), except for the documented
//!   bypasses: exactly zero while the e-stop is latched, and zero forward/lateral motion while a
//!   scanned obstacle is within the stop distance;
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
        1 => (0.0f32..3.0, prop::bool::weighted(0.9)).prop_map(|(d, ok)| Action::Scan(d, ok)),
    ]
}

fn params() -> impl Strategy<Value = Params> {
    (
        (0usize..4, any::<bool>(), any::<bool>(), 0.05f64..1.0, 0.0f64..1.0, 0.1f64..3.0),
        (0.05f64..5.0, 0.05f64..5.0, 0.05f64..5.0, 0.05f64..5.0),
        (any::<bool>(), any::<bool>(), prop::bool::weighted(0.7), 1.0f64..20.0),
    )
        .prop_map(|((s, holo, stamped, lin, rev, ang), (la, ld, aa, ad), (obst, fence, slow_watch, rate))| {
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

/// The independent model of the latch and of the obstacle state.
#[derive(Debug, Default)]
struct Model {
    latched: bool,
    cleared: bool,
    near: bool,
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
    let mut m = Model::default();
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
        match message(&st.action, stamp) {
            None => a.on_timer(now, 0, &mut out),
            Some((i, msg)) => {
                match st.action {
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
                    Action::Scan(d, true) => m.near = f64::from(d) <= p.obstacle.stop_distance,
                    _ => {}
                }
                a.on_message(now, i, &msg, &mut out);
            }
        }
        prop_assert_eq!(a.e_stop_latched(), m.latched, "latch state after {:?}", st.action);
        let mut zero_seen = false;
        for (idx, msg) in out.drain() {
            let mut bytes = Vec::new();
            msg.encode_into(&mut bytes).map_err(|e| TestCaseError::fail(e.to_string()))?;
            encoded.push(bytes);
            match idx {
                0 => {
                    let c = cmd_of(&msg).ok_or_else(|| TestCaseError::fail("cmd_vel is not a twist"))?;
                    prop_assert_eq!(matches!(msg, Msg::TwistStamped(_)), p.cmd_vel_stamped);
                    prop_assert!(c.is_finite(), "non-finite command {:?}", c);
                    prop_assert!(c.vx >= -g.max_reverse - 1e-12 && c.vx.hypot(c.vy) <= g.max_linear * (1.0 + 1e-9) + 1e-12, "caps {:?}", c);
                    prop_assert!(c.wz.abs() <= g.max_angular + 1e-12, "yaw cap {:?}", c);
                    if p.base == BaseKind::DiffDrive {
                        prop_assert_eq!(c.vy, 0.0);
                    }
                    if m.latched {
                        prop_assert_eq!(c, Cmd::ZERO, "latched: exactly zero");
                    } else {
                        let (t0, c0) = m.prev.unwrap_or((now, Cmd::ZERO));
                        let dt = effective_dt(m.prev.map(|_| t0), now, period);
                        let lin_ok = |v0: f64, v: f64| feasible(v0, v, g.max_linear_accel, g.max_linear_decel, dt);
                        let hard_stop = m.near && c.vx <= 0.0 && c.vy == 0.0;
                        prop_assert!(lin_ok(c0.vx, c.vx) || hard_stop, "vx {} -> {} in {} s", c0.vx, c.vx, dt);
                        prop_assert!(lin_ok(c0.vy, c.vy) || hard_stop, "vy {} -> {} in {} s", c0.vy, c.vy, dt);
                        prop_assert!(feasible(c0.wz, c.wz, g.max_angular_accel, g.max_angular_decel, dt), "wz {} -> {} in {} s", c0.wz, c.wz, dt);
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
    let strategy = (params(), prop::collection::vec((dt(), stamp(), action()).prop_map(|(dt, stamp, action)| Step { dt, stamp, action }), 1..300));
    runner
        .run(&strategy, |(p, steps)| {
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
