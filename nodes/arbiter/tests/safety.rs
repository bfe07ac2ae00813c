//! Safety scenarios on the in-process executor: watchdog halts, the e-stop latch, the obstacle
//! stop, the geofence, the base kinds, the cmd_vel type and malformed inputs.
//! Conventions checked: REP 103 axes and signs; the velocity-smoother and collision-monitor
//! conventions of ROS navigation stacks (per-axis caps, accel/decel limits, stop zones, stale
//! sensor data stops the robot) as summarised in the project's ROS 2 notes (common practice).

mod support;

use sillage_arbiter::geometry::{Pose2, Vec2};
use sillage_arbiter::params::{BaseKind, FenceAction};
use sillage_arbiter::{Arbiter, Mode, Params};
use sillage_core::executor::{Executor, Record};
use sillage_core::msg::*;
use sillage_core::{Msg, NodeCore};
use support::*;

const WIND_TO_MINUS_X: Vec2 = Vec2::new(-1.0, 0.0);

fn odor_everywhere() -> Plume {
    Box::new(|_, t| Odor { rising: u32::from((t / SAMPLE) % 4 == 0), features: (0.5, 0.2, f64::NAN, f64::NAN), bearing: None })
}

fn status<'a>(d: &'a [DiagnosticStatus], name: &str) -> &'a DiagnosticStatus {
    d.iter().find(|s| s.name == name).unwrap_or_else(|| panic!("no status {name}"))
}

/// Asserts that commands from `t0` on decrease toward zero by at most `decel * period` per tick.
fn assert_ramps_down(sim: &Sim, t0: i64, decel: f64, period: f64) {
    let cmds: Vec<_> = sim.cmds().into_iter().filter(|(t, _)| *t >= t0).collect();
    for w in cmds.windows(2) {
        let (a, b) = (w[0].1.vx, w[1].1.vx);
        assert!(b <= a + 1e-12 && a - b <= decel * period + 1e-9, "{a} -> {b}");
    }
    assert_eq!(cmds.last().map(|c| c.1.vx), Some(0.0), "stopped");
}

#[test]
fn stale_wind_odom_or_chem_halt_and_resume() {
    for which in ["wind", "odom", "chem"] {
        let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
        sim.run(s(4.0));
        assert_eq!(sim.last_state().mode, Mode::Surging.code());
        let v_before = sim.vel.vx;
        assert!(v_before > 0.25 - 1e-9, "at full surge speed: {v_before}");
        match which {
            "wind" => sim.feed.wind = false,
            "odom" => sim.feed.odom = false,
            _ => sim.feed.chem = false,
        }
        let t_cut = sim.t;
        sim.run(s(7.0));
        let t_halt = sim.first(Mode::Halted).expect("halted");
        let timeout = match which {
            "wind" => 1.0,
            "odom" => 0.5,
            _ => 1.0, // odor_bearing and odor_events time out first (plume_features: 2 s)
        };
        // The last message came one sample before the cut; halt at the first tick past the timeout.
        let expect = t_cut - SAMPLE + s(timeout);
        assert!(t_halt > expect && t_halt <= expect + s(0.1), "{which}: halted at {t_halt}, timeout ends at {expect}");
        let reason = sim.states().into_iter().find(|(t, _)| *t == t_halt).expect("state").1.reason;
        let topic = match which {
            "chem" => "odor_bearing",
            w => w,
        };
        assert!(reason.starts_with("watchdog: ") && reason.contains(topic) && reason.contains("stale"), "{which}: {reason}");
        // The halt ramps down under the deceleration limit (1 m/s^2, 0.1 s per tick).
        assert_ramps_down(&sim, t_halt, 1.0, 0.1);
        let d = sim.diagnostics();
        assert_eq!(status(&d, "arbiter: watchdog").level, DiagnosticStatus::ERROR);
        sim.feed = Feed { wind: true, odom: true, chem: true };
        sim.run(s(9.0));
        assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Halted, Mode::Surging], "{which}");
        assert!(sim.last_state().reason.starts_with("inputs fresh again"), "{}", sim.last_state().reason);
        assert!(sim.vel.vx > 0.0, "moving again");
    }
}

#[test]
fn inputs_are_stale_before_their_first_message() {
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
    sim.feed.odom = false;
    sim.run(s(1.0));
    assert_eq!(sim.modes(), vec![Mode::Halted]);
    assert!(sim.last_state().reason.contains("odom never received"), "{}", sim.last_state().reason);
    assert!(sim.cmds().iter().all(|(_, c)| c.vx == 0.0 && c.wz == 0.0));
    sim.feed.odom = true;
    sim.run(s(2.0));
    assert_eq!(sim.modes(), vec![Mode::Halted, Mode::Surging]);
}

#[test]
fn e_stop_stops_in_the_same_cycle_and_latches_until_reset() {
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
    sim.run(s(3.0));
    assert!(sim.vel.vx > 0.2);
    // Press between two ticks (ticks every 100 ms; now is 3.0 s + 20 ms).
    sim.run(s(3.0)); // no-op: keeps the clock at 3.0 s
    let t_press = sim.t + s(0.02);
    let mut seen = Vec::new();
    sim.ex.run_until(t_press, &mut |_r: &Record| {}).expect("runs");
    sim.ex.inject(t_press, "/e_stop", Bool { data: true }.into()).expect("injects");
    sim.ex
        .run_until(t_press, &mut |r: &Record| {
            if r.publisher.is_some() {
                seen.push((r.stamp, r.topic.to_string(), r.msg.clone()));
            }
        })
        .expect("runs");
    let cmd = seen.iter().find(|(_, topic, _)| topic == "/cmd_vel").expect("a command in the same cycle");
    assert_eq!(cmd.0, t_press, "published at the press, not at the next tick");
    let c = cmd_of(&cmd.2).expect("twist");
    assert_eq!((c.vx, c.vy, c.wz), (0.0, 0.0, 0.0), "zero at once, no deceleration ramp");
    let st = seen.iter().find_map(|(_, topic, m)| if let (true, Msg::SearchState(s)) = (topic == "/search_state", m) { Some(s.clone()) } else { None });
    assert_eq!(st.map(|s| (s.mode, s.reason)), Some((Mode::Halted.code(), "e-stop pressed".to_string())));
    sim.t = t_press;
    sim.vel = c;
    // A reset while still pressed is refused.
    sim.inject("/e_stop_reset", Empty::default().into());
    sim.run(s(4.0));
    assert!(sim.cmds().iter().filter(|(t, _)| *t >= t_press).all(|(_, c)| c.vx == 0.0 && c.wz == 0.0));
    assert_eq!(status(&sim.diagnostics(), "arbiter: guard").level, DiagnosticStatus::ERROR);
    // Released (false) but not reset: still halted.
    sim.inject("/e_stop", Bool { data: false }.into());
    sim.run(s(5.0));
    assert_eq!(sim.last_state().mode, Mode::Halted.code());
    assert!(sim.last_state().reason.contains("waiting for e_stop_reset"), "{}", sim.last_state().reason);
    assert!(sim.cmds().iter().filter(|(t, _)| *t >= t_press).all(|(_, c)| c.vx == 0.0));
    // Reset after the false: motion resumes, ramping up from zero.
    sim.inject("/e_stop_reset", Empty::default().into());
    sim.run(s(6.0));
    assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Halted, Mode::Surging]);
    assert!(sim.last_state().reason.starts_with("e-stop reset"), "{}", sim.last_state().reason);
    let after: Vec<_> = sim.cmds().into_iter().filter(|(t, _)| *t > s(5.0)).collect();
    assert!(after.first().is_some_and(|(_, c)| c.vx <= 0.05 + 1e-12), "ramps up at 0.5 m/s^2: {:?}", after.first());
    assert!(sim.vel.vx > 0.2);
}

#[test]
fn obstacle_in_the_forward_sector_stops_forward_motion() {
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
    let scan = |d: f32| -> Msg {
        LaserScan { angle_min: -1.0, angle_max: 1.0, angle_increment: 0.1, range_min: 0.05, range_max: 10.0, ranges: vec![d; 21], ..Default::default() }.into()
    };
    let run_with_scan = |sim: &mut Sim, d: f32, until: i64| {
        while sim.t < until {
            sim.inject("/scan", scan(d));
            let next = sim.t + SAMPLE;
            sim.run(next);
        }
    };
    run_with_scan(&mut sim, 5.0, s(3.0));
    assert!(sim.vel.vx > 0.2, "clear: full speed");
    // Every sample from now on carries a scan with an object at 0.25 m (< 0.3 m stop distance).
    let t0 = sim.t;
    run_with_scan(&mut sim, 0.25, t0 + s(1.0));
    let cmds: Vec<_> = sim.cmds().into_iter().filter(|(t, _)| *t > t0).collect();
    assert!(cmds.iter().all(|(_, c)| c.vx == 0.0), "zero forward at the first tick, bypassing the ramp");
    let d = sim.diagnostics();
    assert_eq!(status(&d, "arbiter: guard").message, "obstacle stop");
    // A scan that stops coming halts the robot (the scan has been received, so it is watched).
    sim.run(t0 + s(3.0));
    assert_eq!(sim.last_state().mode, Mode::Halted.code());
    assert!(sim.last_state().reason.contains("scan stale"), "{}", sim.last_state().reason);
}

#[test]
fn geofence_stop_keeps_the_robot_inside() {
    let mut p = Params::default();
    p.geofence.enabled = true;
    p.geofence.polygon = vec![-1.0, -1.0, 2.0, -1.0, 2.0, 1.0, -1.0, 1.0];
    p.geofence.margin = 0.4;
    for action in [FenceAction::Stop, FenceAction::TurnBack] {
        p.geofence.action = action;
        let mut sim = Sim::new(p.clone(), Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
        sim.run(s(30.0));
        let max_x = sim.poses.iter().map(|(_, q)| q.position.x).fold(f64::MIN, f64::max);
        assert!(max_x < 2.0, "{action:?}: never crosses the fence at x = 2, max x {max_x}");
        assert!(max_x > 1.4, "{action:?}: but gets near it, max x {max_x}");
        let d = sim.diagnostics();
        let guard = status(&d, "arbiter: guard");
        let n: u64 = guard.values.iter().find(|kv| kv.key == "fence_interventions").and_then(|kv| kv.value.parse().ok()).expect("counter");
        assert!(n > 0, "{action:?}: the fence acted");
    }
}

#[test]
fn holonomic_casts_sideways_and_diff_drive_never_does() {
    for base in [BaseKind::DiffDrive, BaseKind::Holonomic] {
        let mut p = Params { base, ..Params::default() };
        // The test's events all sit at level 1.0 and never fall: the sustained-level rule
        // would hold the contact 3 s longer and put the first leg behind the robot.
        p.contact.level_enter = 0.0;
        let plume: Plume = Box::new(|q, t| if t < s(3.0) { odor_everywhere()(q, t) } else { Odor { features: (0.0, 0.0, f64::NAN, f64::NAN), ..Default::default() } });
        let mut sim = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, plume);
        sim.run(s(15.0));
        let max_vy = sim.cmds().iter().map(|(_, c)| c.vy.abs()).fold(0.0, f64::max);
        match base {
            BaseKind::DiffDrive => assert_eq!(max_vy, 0.0),
            BaseKind::Holonomic => {
                assert!(max_vy > 0.1, "casting strafes: {max_vy}");
                // Facing upwind while strafing: the yaw stays near 0.
                assert!(sim.poses.iter().all(|(_, q)| q.yaw.abs() < 0.2), "keeps facing upwind");
            }
        }
        assert!(sim.modes().contains(&Mode::Casting));
    }
}

#[test]
fn cmd_vel_type_follows_the_parameter() {
    for stamped in [true, false] {
        let p = Params { cmd_vel_stamped: stamped, ..Params::default() };
        let mut ex = Executor::new();
        ex.add(Box::new(Arbiter::new(p).expect("valid"))).expect("wires");
        ex.start(0);
        let want = if stamped { "geometry_msgs/msg/TwistStamped" } else { "geometry_msgs/msg/Twist" };
        assert_eq!(ex.topic_type("/cmd_vel"), Some(want));
        let mut n = 0;
        ex.run_until(1_000_000_000, &mut |r: &Record| {
            if r.topic == "/cmd_vel" {
                assert_eq!(r.msg.type_name(), want);
                n += 1;
            }
        })
        .expect("runs");
        assert_eq!(n, 10, "10 Hz control rate for 1 s");
    }
}

#[test]
fn malformed_inputs_are_counted_diagnosed_and_fail_safe() {
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
    sim.run(s(3.0));
    assert_eq!(sim.last_state().mode, Mode::Surging.code());
    // From now on every wind reading is NaN.
    sim.feed.wind = false;
    let t0 = sim.t;
    for k in 0..30 {
        sim.inject("/wind", wind_msg(sim.t, Vec2::new(f64::NAN, 0.0)));
        sim.run(t0 + (k + 1) * SAMPLE);
    }
    let d = sim.diagnostics();
    let inputs = status(&d, "arbiter: inputs");
    assert_eq!(inputs.level, DiagnosticStatus::WARN);
    assert!(inputs.message.contains("'wind'") && inputs.message.contains("vector.x"), "{}", inputs.message);
    let wind = inputs.values.iter().find(|kv| kv.key == "wind").expect("wind counters");
    assert!(wind.value.contains("malformed 30"), "{}", wind.value);
    // Dropped readings do not feed the watchdog: the robot halts.
    assert_eq!(sim.last_state().mode, Mode::Halted.code());
    assert!(sim.last_state().reason.contains("wind stale"));
    // Other malformed inputs.
    let mut a = Arbiter::new(Params::default()).expect("valid");
    let mut out = sillage_core::Outbox::new();
    let bad_bearing = OdorBearing { header: Header::new(1, "base_link"), bearing: f64::INFINITY, lag: 0.0, confidence: 0.5, cue: OdorBearing::TIMING };
    a.on_message(1, 0, &bad_bearing.into(), &mut out);
    a.on_message(2, 4, &Bool { data: true }.into(), &mut out);
    a.on_message(3, 99, &Bool { data: true }.into(), &mut out);
    let bad_events = OdorEventArray { header: Header::new(4, ""), events: vec![OdorEvent { polarity: 0, ..Default::default() }] };
    a.on_message(4, 2, &bad_events.into(), &mut out);
    let st = a.input_stats();
    assert_eq!(st.inputs[0].malformed, 1);
    assert_eq!(st.inputs[4].malformed, 1, "a Bool on the odom input");
    assert_eq!(st.inputs[2].malformed, 1);
    assert_eq!(st.unknown, 1);
    assert_eq!(st.total_malformed(), 4);
    assert!(out.is_empty(), "nothing published for bad input");
}

#[test]
fn duplicated_and_reordered_stamps_are_dropped() {
    let mut a = Arbiter::new(Params::default()).expect("valid");
    let mut out = sillage_core::Outbox::new();
    let w = |t| wind_msg(t, Vec2::new(-1.0, 0.0));
    a.on_message(10, 3, &w(2_000_000_000), &mut out);
    a.on_message(11, 3, &w(2_000_000_000), &mut out);
    a.on_message(12, 3, &w(1_900_000_000), &mut out);
    a.on_message(13, 3, &w(2_100_000_000), &mut out);
    let c = a.input_stats().inputs[3];
    assert_eq!((c.accepted, c.duplicates, c.out_of_order), (2, 1, 1));
}

#[test]
fn e_stop_heartbeat_halts_when_silent() {
    let mut p = Params::default();
    p.watchdog.e_stop = 0.5;
    let mut sim = Sim::without_e_stop(p, Pose2::default(), WIND_TO_MINUS_X, odor_everywhere());
    sim.run(s(1.0));
    assert_eq!(sim.modes(), vec![Mode::Halted], "no heartbeat yet");
    assert!(sim.last_state().reason.contains("e_stop never heard"), "{}", sim.last_state().reason);
    for k in 0..20 {
        sim.inject("/e_stop", Bool { data: false }.into());
        sim.run(s(1.0) + (k + 1) * s(0.1));
    }
    assert_eq!(sim.last_state().mode, Mode::Surging.code(), "heartbeat present: {:?}", sim.last_state());
    sim.run(s(4.0));
    assert_eq!(sim.last_state().mode, Mode::Halted.code());
    assert!(sim.last_state().reason.contains("e_stop stale"), "{}", sim.last_state().reason);
}

#[test]
fn a_backward_clock_jump_resets_inputs_but_keeps_the_latch() {
    let mut a = Arbiter::new(Params::default()).expect("valid");
    let mut out = sillage_core::Outbox::new();
    let t0 = 10_000_000_000;
    let feed = |a: &mut Arbiter, out: &mut sillage_core::Outbox, t: i64| {
        a.on_message(t, 4, &odom_msg(t, &Pose2::default(), &sillage_arbiter::drive::Cmd::ZERO), out);
        a.on_message(t, 3, &wind_msg(t, Vec2::new(-1.0, 0.0)), out);
        a.on_message(t, 2, &events_msg(t, 1), out);
        a.on_message(t, 1, &features_msg(t, (0.5, 0.2, f64::NAN, f64::NAN)), out);
        a.on_message(t, 0, &bearing_msg(t, None), out);
    };
    a.on_message(t0, 5, &Bool { data: false }.into(), &mut out);
    feed(&mut a, &mut out, t0);
    a.on_timer(t0, 0, &mut out);
    assert_eq!(a.mode(), Mode::Surging);
    a.on_message(t0, 5, &Bool { data: true }.into(), &mut out);
    a.on_message(t0, 5, &Bool { data: false }.into(), &mut out);
    // The clock restarts at 1 s (a looping bag): every input counts as stale again.
    let t1 = 1_000_000_000;
    a.on_timer(t1, 0, &mut out);
    assert_eq!(a.input_stats().clock_jumps, 1);
    assert!(a.e_stop_latched(), "a clock jump does not release the latch");
    feed(&mut a, &mut out, t1);
    a.on_timer(t1 + 100_000_000, 0, &mut out);
    assert_eq!(a.mode(), Mode::Halted);
    a.on_message(t1 + 100_000_000, 6, &Empty::default().into(), &mut out);
    a.on_timer(t1 + 200_000_000, 0, &mut out);
    assert_eq!(a.mode(), Mode::Surging, "{}", a.reason());
    assert!(a.reason().starts_with("e-stop reset"), "{}", a.reason());
    let mut d = Vec::new();
    a.diagnostics(t1 + 200_000_000, &mut d);
    let names: Vec<&str> = d.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, ["arbiter: mode", "arbiter: guard", "arbiter: watchdog", "arbiter: inputs"]);
    assert!(d[0].message.starts_with("SURGING"), "{}", d[0].message);
}
