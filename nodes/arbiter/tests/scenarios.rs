//! Scenario tests on the in-process executor: the arbiter alone, scripted inputs, a kinematic
//! base closing the loop. Each asserts the mode sequence and the commanded motion relative to
//! the wind, with REP 103 signs (x forward, y left, angular.z > 0 turns left; "REP 103:
//! Standard Units of Measure and Coordinate Conventions", ROS Enhancement Proposal, 2010).
//! The surge-then-cast pattern follows the crosswind-surge algorithm ("Tracking an odor plume
//! in a laminar wind field with the crosswind-surge algorithm", EPFL, 2008-2010).

mod support;

use sillage_arbiter::geometry::{Pose2, Vec2};
use sillage_arbiter::{Mode, Params};
use std::f64::consts::{FRAC_PI_2, PI};
use support::*;

/// Air moving toward -x in odom at 1 m/s: it comes from +x, so upwind is +x.
const WIND_TO_MINUS_X: Vec2 = Vec2::new(-1.0, 0.0);

/// A plume region where the robot gets a rising event every 4th sample (5 Hz).
fn plume_where(inside: impl Fn(Vec2) -> bool + 'static) -> Plume {
    Box::new(move |p, t| {
        if inside(p) {
            let k = t / SAMPLE;
            Odor { rising: u32::from(k % 4 == 0), features: (0.5, 0.2, f64::NAN, f64::NAN), bearing: None }
        } else {
            Odor { features: (0.0, 0.0, f64::NAN, f64::NAN), ..Default::default() }
        }
    })
}

#[test]
fn surge_on_contact_heads_upwind() {
    // Odor everywhere from t = 2 s on; robot facing +x.
    let plume: Plume = Box::new(|p, t| if t >= s(2.0) { plume_where(|_| true)(p, t) } else { clean_air()(p, t) });
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, plume);
    sim.run(s(6.0));
    // Before the contact: the acquisition sweep, its first leg crosswind to the left (+y).
    assert_eq!(sim.modes(), vec![Mode::Casting, Mode::Surging], "{:?}", sim.states());
    assert!(sim.states().iter().filter(|(t, _)| *t < s(2.0)).all(|(_, st)| st.reason.contains("sweeping") && (st.heading_target - FRAC_PI_2).abs() < 1e-6));
    let y_contact = sim.pose_at(s(2.0)).position.y;
    let t_surge = sim.first(Mode::Surging).expect("surged");
    assert!(t_surge >= s(2.0) && t_surge <= s(2.2), "contact at 2 s, surge at {t_surge}");
    let st = sim.last_state();
    assert!(st.heading_target.abs() < 1e-6, "heading target upwind (+x), got {}", st.heading_target);
    assert!(st.reason.is_empty() || sim.states().iter().all(|(_, s)| !s.reason.is_empty()), "every state has a reason");
    // Forward only, within the 0.3 m/s cap, no lateral motion (differential drive).
    for (_, c) in sim.cmds() {
        assert!(c.vx >= 0.0 && c.vx <= 0.3 + 1e-12 && c.vy == 0.0);
    }
    assert!(sim.pose.position.x > 0.5, "moved upwind (+x): {:?}", sim.pose);
    assert!((sim.pose.position.y - y_contact).abs() < 0.2, "surged upwind, not sideways: {:?}", sim.pose);
}

#[test]
fn surge_turns_right_when_the_wind_comes_from_the_right() {
    // Robot facing +y (yaw pi/2), wind from +x: upwind is on its right, so angular.z < 0.
    let mut sim = Sim::new(Params::default(), Pose2 { position: Vec2::ZERO, yaw: FRAC_PI_2 }, WIND_TO_MINUS_X, plume_where(|_| true));
    sim.run(s(0.5));
    let first_moving = sim.cmds().into_iter().find(|(_, c)| c.wz != 0.0).expect("turns");
    assert!(first_moving.1.wz < 0.0, "REP 103: a right turn is negative, got {:?}", first_moving.1);
    sim.run(s(6.0));
    assert!(sim.pose.yaw.abs() < 0.1, "aligned upwind: yaw {}", sim.pose.yaw);
    assert!(sim.pose.position.x > 0.3);
}

/// Odor everywhere until `t_off` [s] (the source then stops emitting), and afterwards only
/// where `later` says.
fn plume_until(t_off: f64, later: impl Fn(Vec2) -> bool + 'static) -> Plume {
    let on = plume_where(|_| true);
    let after = plume_where(later);
    Box::new(move |p, t| if t < s(t_off) { on(p, t) } else { after(p, t) })
}

#[test]
fn cast_after_loss_alternates_crosswind_with_growing_legs() {
    let mut p = Params::default();
    p.cast.leg_initial = 0.5;
    p.cast.growth = 1.5;
    p.cast.max_legs = 4;
    p.cast.on_limit = sillage_arbiter::params::LimitAction::GiveUp;
    // The scripted events all sit at level 1.0 and never fall: no sustained-level contact.
    p.contact.level_enter = 0.0;
    let mut sim = Sim::new(p.clone(), Pose2::default(), WIND_TO_MINUS_X, plume_until(3.0, |_| false));
    sim.run(s(60.0));
    assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Casting, Mode::Waiting], "{:?}", sim.last_state());
    assert!(sim.last_state().reason.contains("cast limit (4 legs"), "{}", sim.last_state().reason);
    let t_cast = sim.first(Mode::Casting).expect("cast");
    // Lost at the first tick more than 2 s (contact.loss_timeout) after the last hit, the
    // features message at 2.95 s.
    assert_eq!(t_cast, s(5.0));
    let cast_reason = &sim.states().into_iter().find(|(t, _)| *t == t_cast).expect("state").1.reason;
    assert!(cast_reason.starts_with("contact lost for 2."), "{cast_reason}");
    let anchor = sim.pose_at(s(2.95)).position;
    // The extremes of y between sign changes alternate, left (+y) first, growing by 1.5.
    let t_end = sim.first(Mode::Waiting).expect("gave up");
    let ys: Vec<f64> = sim.poses.iter().filter(|(t, _)| *t >= t_cast && *t <= t_end).map(|(_, p)| p.position.y).collect();
    let mut extremes: Vec<f64> = Vec::new();
    for &y in &ys {
        match extremes.last_mut() {
            Some(e) if e.signum() == y.signum() && y.abs() > e.abs() => *e = y,
            Some(e) if e.signum() == y.signum() => {}
            _ if y.abs() > 0.05 => extremes.push(y),
            _ => {}
        }
    }
    assert_eq!(extremes.len(), 4, "{extremes:?}");
    assert!(extremes[0] > 0.0, "first leg to the left of upwind (+y): {extremes:?}");
    for (k, e) in extremes.iter().enumerate() {
        let want = 0.5 * 1.5f64.powi(k as i32) * if k % 2 == 0 { 1.0 } else { -1.0 };
        assert!((e - want).abs() < 0.16, "leg {k}: y {e} vs {want} ({extremes:?})");
    }
    // After the first leg the robot runs along the anchor's crosswind line (x = anchor.x), and
    // the heading targets are crosswind (+-pi/2; upwind is 0).
    let t_line = t_cast + s(6.0);
    let on_line = sim.poses.iter().filter(|(t, _)| *t > t_line && *t <= t_end).all(|(_, q)| (q.position.x - anchor.x).abs() < 0.3);
    assert!(on_line, "anchor {anchor:?}");
    let crosswind = sim
        .states()
        .iter()
        .filter(|(t, st)| *t > t_line && st.mode == Mode::Casting.code() && st.heading_target.is_finite())
        .all(|(_, st)| (st.heading_target.abs() - FRAC_PI_2).abs() < 0.35);
    assert!(crosswind);
    // Waiting after giving up: the command is zero once the ramp is over.
    assert!(sim.cmds().iter().filter(|(t, _)| *t > t_end + s(1.0)).all(|(_, c)| c.vx == 0.0 && c.wz == 0.0));
}

#[test]
fn return_to_the_last_contact_after_the_cast_limit() {
    let mut p = Params::default();
    p.cast.max_legs = 2;
    p.cast.on_limit = sillage_arbiter::params::LimitAction::Return;
    p.contact.level_enter = 0.0;
    let mut sim = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, plume_until(3.0, |_| false));
    sim.run(s(60.0));
    assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Casting, Mode::Waiting]);
    assert!(sim.last_state().reason.starts_with("returned to the last contact"), "{}", sim.last_state().reason);
    let anchor = sim.pose_at(s(2.95)).position;
    assert!(sim.pose.position.distance(anchor) < 0.25, "{:?} vs {anchor:?}", sim.pose.position);
}

#[test]
fn recontact_during_a_cast_surges_again() {
    // After the source pauses, odor comes back only in a strip left of the robot's path, which
    // the first (left) cast leg crosses.
    let mut p = Params::default();
    p.contact.level_enter = 0.0; // scripted events never fall (see above)
    let mut sim = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, plume_until(3.0, |q| q.y > 0.3 && q.y < 0.7));
    sim.run(s(20.0));
    let modes = sim.modes();
    assert!(modes.starts_with(&[Mode::Surging, Mode::Casting, Mode::Surging]), "{modes:?}");
    let t2 = sim.states().into_iter().filter(|(_, st)| st.mode == Mode::Surging.code()).map(|(t, _)| t).find(|&t| t > s(5.0)).expect("surged again");
    assert!(sim.pose_at(t2).position.y > 0.3);
}

#[test]
fn declare_at_the_source_publishes_the_estimate_and_stops() {
    // Source at (3, 0); near it (< 1 m) the features say 0.3 m with sigma 0.1 m, and the bearing
    // points at the source.
    let src = Vec2::new(3.0, 0.0);
    let plume: Plume = Box::new(move |p, t| {
        let k = t / SAMPLE;
        let d = p.distance(src);
        let near = d < 1.0;
        Odor {
            rising: u32::from(k % 4 == 0),
            features: if near { (2.0, 0.5, 0.3, 0.1) } else { (0.5, 0.2, f64::NAN, f64::NAN) },
            bearing: Some(((src - p).angle(), 0.9)),
        }
    });
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, plume);
    sim.run(s(30.0));
    assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Declared], "{:?}", sim.last_state());
    let t_decl = sim.first(Mode::Declared).expect("declared");
    let reason = sim.last_state().reason;
    assert!(reason.contains("distance 0.30 m") && reason.contains("held 3.0 s"), "{reason}");
    let sources: Vec<_> = sim.outs.iter().filter_map(|o| if let Out::Source(t, p) = o { Some((*t, p.clone())) } else { None }).collect();
    assert_eq!(sources.len(), 1, "published once");
    let (ts, est) = &sources[0];
    assert_eq!(*ts, t_decl);
    assert_eq!(est.header.frame_id, "odom");
    // The estimate is the position at declaration plus 0.3 m along the last bearing, which
    // pointed at the source.
    let at = sim.pose_at(t_decl).position;
    let e = Vec2::new(est.point.x, est.point.y);
    assert!((e.distance(at) - 0.3).abs() < 0.02, "{e:?} vs robot {at:?}");
    let off = sillage_arbiter::geometry::wrap_angle((e - at).angle() - (src - at).angle());
    assert!(off.abs() < 0.05, "along the bearing: {off}");
    // After the declaration the command ramps down under the 1 m/s^2 limit, then stays zero.
    let after: Vec<_> = sim.cmds().into_iter().filter(|(t, _)| *t >= t_decl).collect();
    for w in after.windows(2) {
        assert!(w[1].1.vx <= w[0].1.vx + 1e-12 && w[0].1.vx - w[1].1.vx <= 0.1 + 1e-9);
    }
    assert!(after.iter().skip(5).all(|(_, c)| c.vx == 0.0 && c.wz == 0.0), "zero once stopped");
    let moved = sim.pose.position.distance(sim.pose_at(t_decl + s(1.0)).position);
    assert!(moved < 1e-9, "stays put after declaring");
    // DECLARED is sticky: an e_stop_reset only concerns the e-stop latch and changes nothing;
    // search_restart restarts the search.
    sim.inject("/e_stop_reset", sillage_core::msg::Empty::default().into());
    sim.run(s(30.5));
    assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Declared], "e_stop_reset does not restart a search");
    sim.inject("/search_restart", sillage_core::msg::Empty::default().into());
    sim.run(s(31.0));
    assert_eq!(sim.modes(), vec![Mode::Surging, Mode::Declared, Mode::Surging]);
    assert!(sim.last_state().reason.starts_with("search restarted by search_restart"), "{}", sim.last_state().reason);
}

#[test]
fn reverse_wind_frame_check_heads_minus_x() {
    // Wind toward +x: the source is at -x; the robot facing +x must turn around (either way)
    // and then head -x.
    let mut sim = Sim::new(Params::default(), Pose2::default(), Vec2::new(1.0, 0.0), plume_where(|_| true));
    sim.run(s(12.0));
    assert!(sim.last_state().heading_target.abs() > PI - 1e-6, "{}", sim.last_state().heading_target);
    assert!(sim.pose.position.x < -0.5, "{:?}", sim.pose);
}

#[test]
fn the_source_is_declared_where_the_plume_keeps_ending_upwind() {
    // A plume that ends at its source, (5, 0): odor only downwind of it (x < 5), in a wedge
    // that widens downwind (half-width 0.1 m + 0.3 m per metre), no distance cue at all. The robot surges to the end, loses the plume, casts
    // across the last contact point, finds the plume again and surges back to the same end;
    // the second stall declares (declare.plume_end defaults: radius 0.6 m, 2 stalls).
    // Near a source the events are dense: one per sample (20 Hz) inside the plume.
    let src = Vec2::new(5.0, 0.0);
    let plume: Plume = Box::new(move |p, _t| {
        let inside = p.x < src.x && p.y.abs() < 0.1 + 0.3 * (src.x - p.x);
        let features = if inside { (0.5, 0.2, f64::NAN, f64::NAN) } else { (0.0, 0.0, f64::NAN, f64::NAN) };
        Odor { rising: u32::from(inside), features, bearing: None }
    });
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, plume);
    sim.run(s(120.0));
    let modes = sim.modes();
    assert_eq!(modes.last(), Some(&Mode::Declared), "{modes:?}");
    assert!(modes.iter().filter(|m| **m == Mode::Casting).count() >= 2, "two losses before declaring: {modes:?}");
    let reason = sim.last_state().reason;
    assert!(reason.contains("the plume ended 3 times"), "{reason}");
    let sources: Vec<_> = sim.outs.iter().filter_map(|o| if let Out::Source(_, p) = o { Some(p.clone()) } else { None }).collect();
    assert_eq!(sources.len(), 1, "published once");
    let e = Vec2::new(sources[0].point.x, sources[0].point.y);
    // The ends are event-hit positions just inside the plume: within a sample's travel of
    // x = 5, wherever along the crosswind cast line the robot re-entered.
    assert!(e.distance(src) < 0.5, "estimate {e:?}, source {src:?}");
    assert!(e.x < src.x, "the estimate is where odor was sensed: {e:?}");
}

#[test]
fn stale_features_do_not_carry_the_surge_past_the_plume() {
    // Odor events only up to x = 3, but the features stay high everywhere (a 20 s window that
    // remembers the plume): the contact ends 3 s after the last event (contact.feature_hold)
    // plus the 2 s loss timeout, not 20 s later.
    let plume: Plume = Box::new(|p, t| {
        let k = t / SAMPLE;
        Odor { rising: u32::from(p.x < 3.0 && k % 4 == 0), features: (0.8, 0.4, f64::NAN, f64::NAN), bearing: None }
    });
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, plume);
    sim.run(s(40.0));
    let cast = sim.first(Mode::Casting).expect("the contact is lost");
    let at = sim.pose_at(cast).position;
    // 0.3 m/s surge for at most 5 s past x = 3.
    assert!(at.x < 3.0 + 0.3 * 5.0 + 0.2, "cast starts at {at:?}");
}
