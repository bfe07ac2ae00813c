//! The node core driven directly and on the in-process executor: ports, update and publishing
//! rate, the posterior message and its covariance, the map message, wind frames, stale and bad
//! inputs, diagnostics and parameter changes.

use sillage_core::executor::Executor;
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos, NodeCore, Outbox};
use sillage_source_mapper::node::{IN_EVENTS, IN_ODOM, IN_WIND, OUT_MAP, OUT_POSTERIOR, UNKNOWN_VARIANCE};
use sillage_source_mapper::params::{Anchor, Point as ReportPoint};
use sillage_source_mapper::{Params, SourceMapper};

const MS: Nanos = 1_000_000;

fn odom(x: f64, y: f64, yaw: f64, vx: f64) -> Odometry {
    let mut o = Odometry { header: Header::new(0, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
    o.pose.pose.position = Point { x, y, z: 0.0 };
    o.pose.pose.orientation = Quaternion::from_yaw(yaw);
    o.twist.twist.linear.x = vx;
    o
}

fn wind(x: f64, y: f64, frame: &str) -> Vector3Stamped {
    Vector3Stamped { header: Header::new(0, frame), vector: Vector3 { x, y, z: 0.0 } }
}

fn hits(n: usize, level: f64) -> OdorEventArray {
    let e = OdorEvent { polarity: OdorEvent::RISING, level, ..Default::default() };
    OdorEventArray { header: Header::new(0, ""), events: vec![e; n] }
}

fn small() -> Params {
    let mut p = Params::default();
    p.grid.size_x = 20.0;
    p.grid.size_y = 12.0;
    p.grid.resolution = 0.5;
    p.grid.anchor = Anchor::Fixed;
    p.grid.center_x = 5.0;
    p.grid.center_y = 0.0;
    p.wind.ego_motion = false;
    p
}

struct Drive {
    node: SourceMapper,
    out: Outbox,
    maps: Vec<OccupancyGrid>,
    posteriors: Vec<PoseWithCovarianceStamped>,
}

impl Drive {
    fn new(p: Params) -> Drive {
        Drive { node: SourceMapper::new(p).expect("valid"), out: Outbox::new(), maps: Vec::new(), posteriors: Vec::new() }
    }
    fn send(&mut self, now: Nanos, input: usize, m: impl Into<Msg>) {
        self.node.on_message(now, input, &m.into(), &mut self.out);
    }
    fn tick(&mut self, now: Nanos) {
        self.node.on_timer(now, 0, &mut self.out);
        for (o, m) in self.out.drain() {
            match (o, m) {
                (OUT_MAP, Msg::OccupancyGrid(g)) => self.maps.push(*g),
                (OUT_POSTERIOR, Msg::PoseWithCovarianceStamped(p)) => self.posteriors.push(*p),
                other => panic!("unexpected output {other:?}"),
            }
        }
    }
    /// A crosswind sweep 8 m downwind (+x wind) of a source at (0, 0): hits while |y| < 1.
    fn sweep(&mut self, from: Nanos, ticks: i64, wind_frame: &str, yaw: f64) -> Nanos {
        let mut t = from;
        for k in 0..ticks {
            let y = -4.0 + 8.0 * k as f64 / ticks as f64;
            self.send(t, IN_ODOM, odom(8.0, y, yaw, 0.0));
            let (s, c) = yaw.sin_cos();
            // The same air (+x at 0.5 m/s) in odom, or in base_link for a robot turned by yaw.
            let w = if wind_frame == "odom" { wind(0.5, 0.0, "odom") } else { wind(0.5 * c, -0.5 * s, wind_frame) };
            self.send(t, IN_WIND, w);
            if y.abs() < 1.0 {
                self.send(t, IN_EVENTS, hits(1, 0.2));
            }
            t += 500 * MS;
            self.tick(t);
        }
        t
    }
}

#[test]
fn declares_its_ports_and_rate() {
    let n = SourceMapper::new(Params::default()).expect("defaults");
    let ins: Vec<_> = n.inputs().into_iter().map(|p| (p.topic, p.type_name)).collect();
    assert_eq!(
        ins,
        vec![
            ("odom".to_string(), "nav_msgs/msg/Odometry"),
            ("wind".to_string(), "geometry_msgs/msg/Vector3Stamped"),
            ("odor_events".to_string(), "sillage_msgs/msg/OdorEventArray")
        ]
    );
    let outs: Vec<_> = n.outputs().into_iter().map(|p| (p.topic, p.type_name)).collect();
    assert_eq!(
        outs,
        vec![
            ("source_map".to_string(), "nav_msgs/msg/OccupancyGrid"),
            ("source_posterior".to_string(), "geometry_msgs/msg/PoseWithCovarianceStamped")
        ]
    );
    assert_eq!(n.timers(), vec![500 * MS]);
}

#[test]
fn a_sweep_through_the_plume_locates_the_source_upwind() {
    let mut d = Drive::new(small());
    d.sweep(0, 40, "odom", 0.0);
    assert_eq!(d.posteriors.len(), 40);
    assert_eq!(d.maps.len(), 20, "map_every = 2");
    let last = d.posteriors.last().expect("published");
    assert_eq!(last.header.frame_id, "odom");
    let p = last.pose.pose.position;
    assert!(p.x < 8.0 && p.y.abs() < 1.5, "the mean is upwind of the sweep, near its axis: {p:?}");
    let c = &last.pose.covariance.0;
    assert!(c[0] > 0.0 && c[7] > 0.0 && c[0] * c[7] >= c[1] * c[1], "{c:?}");
    assert_eq!(c[1], c[6]);
    assert_eq!([c[14], c[21], c[28], c[35]], [UNKNOWN_VARIANCE; 4]);
    let post = d.node.posterior().expect("placed");
    let s = post.summary();
    assert!((s.mean[0] - p.x).abs() < 1e-12 && (s.covariance[0][0] - c[0]).abs() < 1e-12);
    // The map: grid geometry in odom, 100 at the MAP cell, values 0..=100.
    let m = d.maps.last().expect("map");
    assert_eq!((m.info.width, m.info.height, m.info.resolution), (40, 24, 0.5));
    assert_eq!((m.info.origin.position.x, m.info.origin.position.y), (-5.0, -6.0));
    assert_eq!(m.data.len(), 40 * 24);
    assert_eq!(m.data[s.map_index], 100);
    assert!(m.data.iter().all(|&v| (0..=100).contains(&v)));
    assert!(post.summary().entropy < (960f64).ln() - 1.0);
    // y = -4 + 0.2 k is strictly inside (-1, 1) for k = 16..=24.
    assert_eq!(d.node.counts().hits, 9);
}

#[test]
fn base_frame_wind_is_rotated_by_the_odometry_yaw() {
    let mut a = Drive::new(small());
    a.sweep(0, 20, "odom", 1.0);
    let mut b = Drive::new(small());
    b.sweep(0, 20, "base_link", 1.0);
    let (pa, pb) = (a.node.posterior().expect("a"), b.node.posterior().expect("b"));
    for (x, y) in pa.probabilities().iter().zip(pb.probabilities()) {
        assert!((x - y).abs() <= 1e-9 * x.max(*y) + 1e-300);
    }
}

#[test]
fn map_point_carries_the_second_moment_about_the_map_cell() {
    let mut p = small();
    p.report.point = ReportPoint::Map;
    let mut d = Drive::new(p);
    d.sweep(0, 30, "odom", 0.0);
    let s = *d.node.posterior().expect("placed").summary();
    let m = d.posteriors.last().expect("published");
    assert_eq!([m.pose.pose.position.x, m.pose.pose.position.y], s.map);
    let off = s.mean[0] - s.map[0];
    assert!((m.pose.covariance.0[0] - (s.covariance[0][0] + off * off)).abs() < 1e-12);
}

#[test]
fn stale_or_missing_inputs_mean_no_update_and_hits_are_counted_as_dropped() {
    let mut d = Drive::new(small());
    d.send(0, IN_EVENTS, hits(2, 0.5));
    d.tick(500 * MS);
    assert_eq!(d.node.counts().skipped_no_odom, 1);
    d.send(600 * MS, IN_ODOM, odom(8.0, 0.0, 0.0, 0.0));
    d.tick(1000 * MS);
    assert_eq!(d.node.counts().skipped_no_wind, 1);
    d.send(1100 * MS, IN_WIND, wind(0.5, 0.0, "odom"));
    d.tick(1500 * MS);
    assert_eq!(d.node.counts().skipped_no_odom, 2, "odometry 0.9 s old is stale (odom.timeout 0.5 s)");
    assert!(d.posteriors.is_empty());
    assert_eq!(d.node.counts().hits_dropped, 2);
    d.send(1600 * MS, IN_ODOM, odom(8.0, 0.0, 0.0, 0.0));
    d.send(1600 * MS, IN_EVENTS, hits(5, 0.5));
    d.send(1600 * MS, IN_EVENTS, hits(3, -0.1));
    d.tick(2000 * MS);
    assert_eq!(d.posteriors.len(), 1);
    // Five above the level, capped at detection.max_hits = 2; the three below the level are no hits.
    assert_eq!((d.node.counts().hits, d.node.counts().hits_dropped), (2, 5));
}

#[test]
fn bad_inputs_are_rejected_with_the_topic_and_field_named() {
    let mut d = Drive::new(small());
    d.send(0, IN_ODOM, odom(f64::NAN, 0.0, 0.0, 0.0));
    let mut wrong = odom(0.0, 0.0, 0.0, 0.0);
    wrong.header.frame_id = "map".into();
    d.send(0, IN_ODOM, wrong);
    d.send(0, IN_WIND, wind(0.5, 0.0, "laser"));
    let mut e = hits(1, 0.5);
    e.events[0].polarity = 0;
    d.send(0, IN_EVENTS, e);
    assert_eq!(d.node.counts().rejected, [2, 1, 1]);
    let msg = d.node.last_error().expect("error").to_string();
    assert!(msg.contains("odor_events") && msg.contains("polarity"), "{msg}");
    let mut diag = Vec::new();
    d.node.diagnostics(0, &mut diag);
    let inputs = diag.iter().find(|s| s.name == "source_mapper: inputs").expect("inputs status");
    assert_eq!(inputs.level, DiagnosticStatus::WARN);
    assert!(inputs.values.iter().any(|kv| kv.key == "rejected_odom" && kv.value == "2"));
}

#[test]
fn diagnostics_report_entropy_mass_and_updates() {
    let mut d = Drive::new(small());
    let mut diag = Vec::new();
    d.node.diagnostics(0, &mut diag);
    assert_eq!(diag[0].level, DiagnosticStatus::WARN, "no grid yet");
    d.sweep(0, 30, "odom", 0.0);
    diag.clear();
    d.node.diagnostics(0, &mut diag);
    let get = |k: &str| diag[0].values.iter().find(|kv| kv.key == k).map(|kv| kv.value.clone()).unwrap_or_default();
    assert_eq!(diag[0].name, "source_mapper: posterior");
    assert_eq!(get("updates"), "30");
    let mass: f64 = get("mass_within_radius").parse().expect("number");
    let post = d.node.posterior().expect("placed");
    assert!((mass - post.mass_within_map(0.5)).abs() < 1e-6);
    let h: f64 = get("entropy").parse().expect("number");
    assert!((h - post.summary().entropy).abs() < 1e-4);
    let uniform: f64 = get("entropy_uniform").parse().expect("number");
    assert!((uniform - 960f64.ln()).abs() < 1e-4, "ln of the 40 x 24 cells: {uniform}");
}

#[test]
fn parameter_changes_keep_the_posterior_unless_the_grid_changes() {
    let mut d = Drive::new(small());
    d.sweep(0, 10, "odom", 0.0);
    let before = d.node.posterior().expect("placed").summary().entropy;
    let v: serde_yaml::Value = serde_yaml::from_str("model: {emission_rate: 3.0}").expect("yaml");
    d.node.set_params_yaml(&v).expect("valid");
    assert_eq!(d.node.posterior().expect("kept").summary().entropy, before);
    let bad: serde_yaml::Value = serde_yaml::from_str("grid: {resolution: 0.0}").expect("yaml");
    assert_eq!(d.node.set_params_yaml(&bad).expect_err("invalid").key(), "grid.resolution");
    let v: serde_yaml::Value = serde_yaml::from_str("grid: {resolution: 1.0}").expect("yaml");
    d.node.set_params_yaml(&v).expect("valid");
    assert!(d.node.posterior().is_none(), "a new grid starts over at the next update");
}

#[test]
fn start_anchor_places_the_grid_upwind_of_the_first_pose() {
    let mut p = small();
    p.grid.anchor = Anchor::Start;
    p.grid.center_x = 0.0;
    p.grid.upwind_offset = 6.0;
    let mut d = Drive::new(p);
    d.send(0, IN_ODOM, odom(30.0, 2.0, 0.0, 0.0));
    d.send(0, IN_WIND, wind(0.0, -0.8, "odom"));
    d.tick(500 * MS);
    let c = d.node.posterior().expect("placed").geometry().center();
    assert!((c[0] - 30.0).abs() < 1e-12 && (c[1] - 8.0).abs() < 1e-12, "{c:?}");
}

#[test]
fn runs_on_the_executor() {
    let mut ex = Executor::new();
    ex.add(Box::new(SourceMapper::new(small()).expect("valid"))).expect("added");
    ex.start(0);
    for k in 0..20 {
        let t = k * 100 * MS;
        ex.inject(t, "/odom", odom(8.0, 0.0, 0.0, 0.0).into()).expect("odom");
        ex.inject(t, "/wind", wind(0.5, 0.0, "odom").into()).expect("wind");
    }
    let mut posteriors = 0;
    let mut maps = 0;
    ex.run_until(2000 * MS, &mut |r| match r.topic {
        "/source_posterior" => posteriors += 1,
        "/source_map" => maps += 1,
        _ => {}
    })
    .expect("runs");
    assert_eq!((posteriors, maps), (4, 2));
}
