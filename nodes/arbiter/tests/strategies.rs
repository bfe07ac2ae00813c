//! The other strategies on the in-process executor, each sharing the guard: zigzag, spiral and
//! the reactive baseline. REP 103 signs throughout (angular.z > 0 turns left).

mod support;

use sillage_arbiter::geometry::{wrap_angle, Pose2, Vec2};
use sillage_arbiter::params::StrategyKind;
use sillage_arbiter::{Mode, Params};
use std::f64::consts::TAU;
use support::*;

const WIND_TO_MINUS_X: Vec2 = Vec2::new(-1.0, 0.0);

fn params(kind: StrategyKind) -> Params {
    Params { strategy: kind, ..Params::default() }
}

fn odor(t_off: f64) -> Plume {
    Box::new(move |_, t| {
        if t < s(t_off) {
            Odor { rising: u32::from((t / SAMPLE) % 4 == 0), features: (0.5, 0.2, f64::NAN, f64::NAN), bearing: None }
        } else {
            Odor { features: (0.0, 0.0, f64::NAN, f64::NAN), ..Default::default() }
        }
    })
}

#[test]
fn zigzag_alternates_around_upwind_and_opens_after_a_loss() {
    let mut sim = Sim::new(params(StrategyKind::Zigzag), Pose2::default(), WIND_TO_MINUS_X, odor(15.0));
    sim.run(s(40.0));
    let modes = sim.modes();
    assert!(modes.starts_with(&[Mode::Surging, Mode::Casting]), "{modes:?}");
    // While surging the heading targets are upwind (0) +- 0.5 rad, alternating.
    let surging: Vec<f64> = sim.states().into_iter().filter(|(_, st)| st.mode == Mode::Surging.code()).map(|(_, st)| st.heading_target).collect();
    let mut sides: Vec<f64> = surging.iter().map(|h| h.signum()).collect();
    sides.dedup();
    assert!(sides.len() >= 3, "alternates: {surging:?}");
    assert!(surging.iter().all(|h| (h.abs() - 0.5).abs() < 1e-6), "{surging:?}");
    // The robot makes headway upwind (+x) while zigzagging.
    assert!(sim.pose_at(s(15.0)).position.x > 1.5, "{:?}", sim.pose_at(s(15.0)));
    // Out of contact the angle opens up: later casting headings are wider than 0.5 rad.
    let widest = sim.states().into_iter().filter(|(_, st)| st.mode == Mode::Casting.code()).map(|(_, st)| st.heading_target.abs()).fold(0.0, f64::max);
    assert!(widest > 0.9, "opened to {widest}");
}

#[test]
fn spiral_grows_as_r_equals_b_theta_and_ignores_the_wind() {
    let mut p = params(StrategyKind::Spiral);
    p.spiral.spacing = 0.5;
    p.spiral.max_radius = 1.6;
    p.cast.on_limit = sillage_arbiter::params::LimitAction::GiveUp;
    let mut sim = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, odor(0.0));
    sim.feed.wind = false; // no wind at all: the spiral does not need it
    sim.run(s(120.0));
    let modes = sim.modes();
    assert_eq!(modes, vec![Mode::Casting, Mode::Waiting], "{:?}", sim.last_state());
    assert!(sim.last_state().reason.contains("spiral limit"), "{}", sim.last_state().reason);
    // Archimedean spiral r = b theta with b = spacing / 2 pi (each turn adds `spacing` to the
    // radius; common practice): at polar angle a the spiral's radii are b (a + 2 pi k). The
    // robot (pursuing a carrot 0.3 m ahead) stays within a few centimetres of one of them.
    let b = 0.5 / TAU;
    let t_end = sim.first(Mode::Waiting).expect("limit");
    let path: Vec<Vec2> = sim.poses.iter().filter(|(t, _)| *t <= t_end).map(|(_, q)| q.position).collect();
    let mut worst: f64 = 0.0;
    let mut sum = 0.0;
    let mut checked = 0;
    for q in path.iter().filter(|q| q.norm() > 0.5) {
        let (r, a) = (q.norm(), q.angle().rem_euclid(TAU));
        let k = ((r / b - a) / TAU).round();
        let e = (r - b * (a + TAU * k)).abs();
        worst = worst.max(e);
        sum += e;
        checked += 1;
    }
    assert!(checked > 200, "checked {checked} points");
    // Points at random would be 0.125 m off on average and up to 0.25 m.
    let mean = sum / f64::from(checked);
    assert!(worst < 0.12 && mean < 0.04, "distance to the spiral: worst {worst} m, mean {mean} m");
    // Counter-clockwise (REP 103 positive yaw). The carrot starts where b theta = lookahead
    // (theta = 3.77 rad) and the limit is at theta = 1.6 / b = 20.1 rad: the robot turns about
    // (20.1 - 3.77) / 2 pi = 2.6 times.
    let turns: f64 = path.windows(2).filter(|w| w[0].norm() > 0.05).map(|w| wrap_angle(w[1].angle() - w[0].angle())).sum::<f64>() / TAU;
    assert!((turns - 2.6).abs() < 0.25, "turns {turns}");
    let r_end = path.last().map(|q| q.norm()).unwrap_or(0.0);
    assert!((r_end - 1.6).abs() < 0.35, "ends near the limit radius: {r_end}");
}

#[test]
fn reactive_turns_toward_the_bearing() {
    // Odor always from 1 rad to the left of the robot's start heading, in odom.
    let plume: Plume = Box::new(|_, t| Odor { rising: u32::from((t / SAMPLE) % 4 == 0), features: (0.5, 0.2, f64::NAN, f64::NAN), bearing: Some((1.0, 0.9)) });
    let mut sim = Sim::new(params(StrategyKind::Reactive), Pose2::default(), WIND_TO_MINUS_X, plume);
    sim.feed.wind = false; // the baseline does not need wind either
    sim.run(s(0.5));
    let first_turn = sim.cmds().into_iter().find(|(_, c)| c.wz != 0.0).expect("turns").1;
    assert!(first_turn.wz > 0.0, "REP 103: odor on the left means angular.z > 0, got {first_turn:?}");
    sim.run(s(8.0));
    assert_eq!(sim.modes(), vec![Mode::Surging]);
    assert!((sim.pose.yaw - 1.0).abs() < 0.1, "faces the odor: yaw {}", sim.pose.yaw);
    assert!(sim.pose.position.norm() > 0.5 && (sim.pose.position.angle() - 1.0).abs() < 0.3, "{:?}", sim.pose.position);
}

#[test]
fn without_the_bearing_cue_the_reactive_baseline_goes_straight_but_stays_watchdogged() {
    // The same plume as above, the bearing 1 rad to the left: ablated, it must not turn.
    let plume = || -> Plume { Box::new(|_, t| Odor { rising: u32::from((t / SAMPLE) % 4 == 0), features: (0.5, 0.2, f64::NAN, f64::NAN), bearing: Some((1.0, 0.9)) }) };
    let mut p = params(StrategyKind::Reactive);
    p.cues.use_bearing = false;
    let mut sim = Sim::new(p.clone(), Pose2::default(), WIND_TO_MINUS_X, plume());
    sim.feed.wind = false;
    sim.run(s(8.0));
    assert_eq!(sim.modes(), vec![Mode::Surging], "{:?}", sim.last_state());
    assert!(sim.last_state().reason.contains("without bearing"), "{}", sim.last_state().reason);
    assert!(sim.pose.yaw.abs() < 1e-9 && sim.pose.position.x > 0.5, "straight on: {:?}", sim.pose);
    // The control: with the cue the same loop turns toward the odor.
    p.cues.use_bearing = true;
    let mut on = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, plume());
    on.feed.wind = false;
    on.run(s(8.0));
    assert!((on.pose.yaw - 1.0).abs() < 0.1, "with the cue it faces the odor: {}", on.pose.yaw);
}

#[test]
fn without_the_bearing_cue_a_silent_odor_bearing_still_halts() {
    use sillage_core::executor::{Executor, Record};
    use sillage_core::msg::SearchState;
    let mut p = params(StrategyKind::Reactive);
    p.cues.use_bearing = false;
    let mut ex = Executor::new();
    ex.add(Box::new(sillage_arbiter::Arbiter::new(p).expect("valid"))).expect("wires");
    let mut last: Option<SearchState> = None;
    let mut take = |r: &Record| {
        if let sillage_core::Msg::SearchState(st) = r.msg {
            last = Some(st.clone());
        }
    };
    // Everything but odor_bearing, at 20 Hz, for 3 s (the e-stop heard once at the start).
    ex.inject(0, "/e_stop", sillage_core::Msg::Bool(sillage_core::msg::Bool { data: false })).expect("input");
    let mut t = 0;
    while t < s(3.0) {
        for (topic, m) in [
            ("/odom", odom_msg(t, &Pose2::default(), &sillage_arbiter::drive::Cmd::ZERO)),
            ("/wind", wind_msg(t, WIND_TO_MINUS_X)),
            ("/odor_events", events_msg(t, 1)),
            ("/plume_features", features_msg(t, (0.5, 0.2, f64::NAN, f64::NAN))),
        ] {
            ex.inject(t, topic, m).expect("input");
        }
        ex.run_until(t, &mut take).expect("runs");
        t += SAMPLE;
    }
    let st = last.expect("a state");
    assert_eq!(st.mode, Mode::Halted.code(), "{st:?}");
    assert!(st.reason.contains("odor_bearing"), "{}", st.reason);
}

#[test]
fn a_stale_wind_halts_only_the_strategies_that_use_it() {
    for (kind, halts) in [(StrategyKind::CastSurge, true), (StrategyKind::Zigzag, true), (StrategyKind::Spiral, false), (StrategyKind::Reactive, false)] {
        let mut sim = Sim::new(params(kind), Pose2::default(), WIND_TO_MINUS_X, odor(100.0));
        sim.feed.wind = false;
        sim.run(s(2.0));
        let halted = sim.last_state().mode == Mode::Halted.code();
        assert_eq!(halted, halts, "{kind:?}: {:?}", sim.last_state());
    }
}
