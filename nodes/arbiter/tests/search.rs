//! Search behaviours through the in-process executor, each with a control that shows the test
//! can fail: plume acquisition before the first contact, recovery that never waits,
//! obstacle bypass on the laser, declaration from the source posterior, and contact from a
//! sustained odor level (smooth plumes). Signs follow REP 103 (x forward, y left).

mod support;

use sillage_arbiter::geometry::{Pose2, Vec2};
use sillage_arbiter::params::LimitAction;
use sillage_arbiter::{Mode, Params};
use sillage_core::msg::*;
use sillage_core::Msg;
use std::f64::consts::PI;
use support::*;

/// Air moving toward -x at 1 m/s: upwind is +x.
const WIND_TO_MINUS_X: Vec2 = Vec2::new(-1.0, 0.0);

/// Rising events every 4th sample and mild features inside `inside`, clean air elsewhere.
fn plume_where(inside: impl Fn(Vec2) -> bool + 'static) -> Plume {
    Box::new(move |p, t| {
        if inside(p) {
            Odor { rising: u32::from((t / SAMPLE) % 4 == 0), features: (0.5, 0.2, f64::NAN, f64::NAN), bearing: None }
        } else {
            Odor { features: (0.0, 0.0, f64::NAN, f64::NAN), ..Default::default() }
        }
    })
}

fn path_length(sim: &Sim, from: i64, to: i64) -> f64 {
    let pts: Vec<Vec2> = sim.poses.iter().filter(|(t, _)| *t >= from && *t <= to).map(|(_, p)| p.position).collect();
    pts.windows(2).map(|w| w[0].distance(w[1])).sum()
}

#[test]
fn a_robot_beside_the_plume_sweeps_across_the_wind_and_finds_it() {
    // The plume runs along the wind 2.5 m to the left of the start (y in 2..3), and 3 m to the
    // right in the control: the sweep widens on both sides and finds either.
    for strip in [(2.0, 3.0), (-3.5, -2.5)] {
        let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, plume_where(move |q| q.y > strip.0 && q.y < strip.1));
        sim.run(s(120.0));
        let t = sim.first(Mode::Surging).unwrap_or_else(|| panic!("strip {strip:?}: never found the plume: {:?}", sim.last_state()));
        let at = sim.pose_at(t).position;
        assert!(at.y > strip.0 - 0.2 && at.y < strip.1 + 0.2, "contact in the strip: {at:?}");
        assert_eq!(sim.modes()[0], Mode::Casting, "searching from the start, not waiting");
    }
    // Control: with the old behaviour (no acquisition) the robot would never move; a plume that
    // is nowhere is never found, and the search keeps moving for the whole run.
    let mut sim = Sim::new(Params::default(), Pose2::default(), WIND_TO_MINUS_X, clean_air());
    sim.run(s(200.0));
    assert!(sim.first(Mode::Surging).is_none());
    assert!(!sim.modes().contains(&Mode::Waiting), "{:?}", sim.modes());
    assert!(path_length(&sim, s(100.0), s(200.0)) > 10.0, "still searching after 100 s");
}

#[test]
fn after_the_cast_limit_the_search_goes_on_and_follows_the_posterior() {
    let mut p = Params::default();
    p.cast.max_legs = 2;
    p.contact.level_enter = 0.0; // scripted events never fall
    assert_eq!(p.cast.on_limit, LimitAction::Search, "the default never waits");
    // Odor for 3 s, then nowhere. A tight posterior at (6, -4) once the contact is lost.
    let mean = Vec2::new(6.0, -4.0);
    let run = |use_posterior: bool| {
        let mut q = p.clone();
        q.cues.use_posterior = use_posterior;
        let plume: Plume = Box::new(|x, t| if t < s(3.0) { plume_where(|_| true)(x, t) } else { clean_air()(x, t) });
        let mut sim = Sim::new(q, Pose2::default(), WIND_TO_MINUS_X, plume);
        sim.extra = Some(Box::new(move |t, _| if t > s(4.0) { vec![("/source_posterior", posterior_msg(t, mean, 0.3))] } else { vec![] }));
        sim.run(s(150.0));
        sim
    };
    let with = run(true);
    assert!(!with.modes().contains(&Mode::Waiting), "{:?}", with.modes());
    let nearest = |sim: &Sim| sim.poses.iter().map(|(_, q)| q.position.distance(mean)).fold(f64::INFINITY, f64::min);
    assert!(nearest(&with) < 1.5, "went to the posterior: {}", nearest(&with));
    assert!(path_length(&with, s(100.0), s(150.0)) > 5.0, "still searching");
    // Control: the posterior switched off, the sweep stays around the last contact instead.
    let without = run(false);
    assert!(!without.modes().contains(&Mode::Waiting));
    assert!(nearest(&without) > 2.5, "{}", nearest(&without));
}

/// A box obstacle's scan from `pose` (beams every 2 deg over +-135 deg, range 10 m).
fn scan_of_box(t: i64, pose: &Pose2, lo: Vec2, hi: Vec2) -> Msg {
    let inc = 2f64.to_radians();
    let a0 = -0.75 * PI;
    let n = 136;
    let ranges = (0..n)
        .map(|i| {
            let d = Vec2::from_angle(pose.yaw + a0 + inc * f64::from(i));
            // Slab intersection of the ray with the axis-aligned box.
            let (mut t0, mut t1) = (0.0f64, 10.0f64);
            for (o, v, l, h) in [(pose.position.x, d.x, lo.x, hi.x), (pose.position.y, d.y, lo.y, hi.y)] {
                if v.abs() < 1e-12 {
                    if o < l || o > h {
                        t0 = f64::INFINITY;
                    }
                } else {
                    let (a, b) = ((l - o) / v, (h - o) / v);
                    t0 = t0.max(a.min(b));
                    t1 = t1.min(a.max(b));
                }
            }
            if t0 <= t1 && t0 < 10.0 {
                t0 as f32
            } else {
                f32::INFINITY
            }
        })
        .collect();
    LaserScan {
        header: Header::new(t, "base_link"),
        angle_min: a0 as f32,
        angle_max: (a0 + inc * f64::from(n - 1)) as f32,
        angle_increment: inc as f32,
        time_increment: 0.0,
        scan_time: 0.05,
        range_min: 0.05,
        range_max: 10.0,
        ranges,
        intensities: Vec::new(),
    }
    .into()
}

/// Distance from a point to an axis-aligned box [m] (0 inside).
fn box_distance(p: Vec2, lo: Vec2, hi: Vec2) -> f64 {
    let dx = (lo.x - p.x).max(0.0).max(p.x - hi.x);
    let dy = (lo.y - p.y).max(0.0).max(p.y - hi.y);
    (dx * dx + dy * dy).sqrt()
}

#[test]
fn surging_upwind_the_robot_goes_around_an_obstacle_and_keeps_the_heading() {
    // Odor everywhere; a 0.4 m x 1.6 m box square across the way 2 m upwind.
    let (lo, hi) = (Vec2::new(2.0, -0.8), Vec2::new(2.4, 0.8));
    let run = |avoid: bool| {
        let mut p = Params::default();
        p.avoid.enabled = avoid;
        let mut sim = Sim::new(p, Pose2 { position: Vec2::new(0.0, 0.1), yaw: 0.0 }, WIND_TO_MINUS_X, plume_where(|_| true));
        sim.extra = Some(Box::new(move |t, pose| vec![("/scan", scan_of_box(t, pose, lo, hi))]));
        sim.run(s(40.0));
        sim
    };
    let sim = run(true);
    assert!(sim.pose.position.x > 4.0, "past the box: {:?}", sim.pose);
    let closest = sim.poses.iter().map(|(_, q)| box_distance(q.position, lo, hi)).fold(f64::INFINITY, f64::min);
    assert!(closest > 0.25, "kept clear: {closest}");
    assert!(sim.pose.yaw.abs() < 0.3, "back on the upwind heading: {}", sim.pose.yaw);
    // Control: without the avoidance the guard's obstacle stop holds it at the face.
    let stuck = run(false);
    assert!(stuck.pose.position.x < 2.0, "stopped at the face: {:?}", stuck.pose);
}

fn posterior_msg(t: i64, mean: Vec2, sigma: f64) -> Msg {
    let mut m = PoseWithCovarianceStamped { header: Header::new(t, "odom"), ..Default::default() };
    m.pose.pose.position = Point { x: mean.x, y: mean.y, z: 0.0 };
    m.pose.pose.orientation = Quaternion::from_yaw(0.0);
    m.pose.covariance.0[0] = sigma * sigma;
    m.pose.covariance.0[7] = sigma * sigma;
    m.into()
}

#[test]
fn a_concentrated_posterior_declares_at_its_mean_only_when_used() {
    // Contact everywhere (features below the declaration thresholds, no plume end): only the
    // posterior can declare. Its mean (2, 0.3), sigma 0.15 m: mass within 0.5 m 0.996.
    let mean = Vec2::new(2.0, 0.3);
    let run = |use_posterior: bool| {
        let mut p = Params::default();
        p.declare.posterior.enabled = true;
        p.cues.use_posterior = use_posterior;
        let mut sim = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, plume_where(|_| true));
        sim.extra = Some(Box::new(move |t, _| vec![("/source_posterior", posterior_msg(t, mean, 0.15))]));
        sim.run(s(30.0));
        sim
    };
    let sim = run(true);
    let sources: Vec<PointStamped> = sim.outs.iter().filter_map(|o| if let Out::Source(_, p) = o { Some(p.clone()) } else { None }).collect();
    assert_eq!(sources.len(), 1, "{:?}", sim.last_state());
    assert!((sources[0].point.x - mean.x).abs() < 1e-9 && (sources[0].point.y - mean.y).abs() < 1e-9);
    assert!(sim.last_state().reason.contains("posterior mass"), "{}", sim.last_state().reason);
    let t = sim.first(Mode::Declared).expect("declared");
    assert!(sim.pose_at(t).position.distance(mean) <= 1.0 + 0.05, "declared once within declare.posterior.near");
    // Control: cues.use_posterior off, the same run never declares.
    let off = run(false);
    assert!(off.first(Mode::Declared).is_none(), "{:?}", off.last_state());
}

#[test]
fn a_sustained_level_keeps_a_smooth_plume_contact_without_events() {
    // A smooth plume: one rise to 0.6 on channel 0 at 0.5 s, a small fall to 0.55 at 1 s (the
    // encoder sends both polarities), then a steady signal, no more events.
    let events: fn(Vec2, i64) -> Vec<OdorEvent> = |_, t| {
        let ev = |pol, level| OdorEvent { stamp: Time::from_nanos(t), channel: 0, polarity: pol, level };
        if t == s(0.5) {
            vec![ev(OdorEvent::RISING, 0.6)]
        } else if t == s(1.0) {
            vec![ev(OdorEvent::FALLING, 0.55)]
        } else {
            vec![]
        }
    };
    let run = |level_enter: f64| {
        let mut p = Params::default();
        p.contact.level_enter = level_enter;
        p.contact.level_exit = level_enter.min(p.contact.level_exit);
        let mut sim = Sim::new(p, Pose2::default(), WIND_TO_MINUS_X, clean_air());
        sim.events = Some(Box::new(events));
        sim.run(s(30.0));
        sim
    };
    let sim = run(0.2);
    let surge = sim.first(Mode::Surging).expect("contact from the rise");
    assert!(surge <= s(0.7), "{surge}");
    // Held: after the fall, 3 s of steady signal restore the contact at once (contact lost
    // at most between 1 + 2 s and 1 + 3 s), then it stays through the run.
    let late: Vec<_> = sim.states().into_iter().filter(|(t, _)| *t > s(5.0)).collect();
    assert!(!late.is_empty() && late.iter().all(|(_, st)| st.mode == Mode::Surging.code()), "{:?}", sim.last_state());
    assert!(sim.pose.position.x > 5.0, "surged upwind: {:?}", sim.pose);
    // Control: level hits off, the single rise gives a contact that is lost 2 s later.
    let off = run(0.0);
    assert!(off.states().into_iter().filter(|(t, _)| *t > s(5.0)).all(|(_, st)| st.mode != Mode::Surging.code()));
}
