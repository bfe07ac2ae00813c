//! The cue metrics with a known truth, through the executor.
//!
//! 1. A synthetic decoder node publishes `odor_bearing` and `plume_features` with known
//!    errors against a robot that stands still in the demo world: the metrics must give
//!    those errors back.
//! 2. A closed-loop episode: every `odor_bearing` the graph published is graded again from
//!    the recorded `/odom` (the world's perfect pose) and the scenario's source position, a
//!    path independent of the runner's (which reads the world's state); the medians agree.

use sillage_core::executor::{Executor, Record};
use sillage_core::msg::{Header, OdorBearing, PlumeFeatures};
use sillage_core::time::{nanos, SECOND};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};
use sillage_sim::cues::{wrap, CueLog};
use sillage_sim::episode::truth_of;
use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
use sillage_stack::StackConfig;
use sillage_world::{Scenario, World};
use std::f64::consts::PI;

fn root() -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

fn demo() -> Scenario {
    Scenario::from_path(&root().join("config/scenarios/demo.yaml")).unwrap_or_else(|e| panic!("{e}"))
}

/// Publishes at 10 Hz: bearings `truth + 0.3` (TIMING) and `truth - 0.5` (AMPLITUDE) in
/// turn, and a distance twice the true one.
struct Synthetic {
    truth_bearing: f64,
    truth_distance: f64,
    k: u32,
}

impl NodeCore for Synthetic {
    fn name(&self) -> &str {
        "synthetic_decoder"
    }
    fn inputs(&self) -> Vec<Port> {
        Vec::new()
    }
    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<OdorBearing>("odor_bearing", Qos::Reliable), Port::of::<PlumeFeatures>("plume_features", Qos::Reliable)]
    }
    fn timers(&self) -> Vec<Nanos> {
        vec![SECOND / 10]
    }
    fn on_message(&mut self, _: Nanos, _: usize, _: &Msg, _: &mut Outbox) {}
    fn on_timer(&mut self, now: Nanos, _: usize, out: &mut Outbox) {
        self.k += 1;
        let (bearing, cue) = if self.k.is_multiple_of(2) { (self.truth_bearing + 0.3, OdorBearing::TIMING) } else { (self.truth_bearing - 0.5, OdorBearing::AMPLITUDE) };
        out.publish(0, OdorBearing { header: Header::new(now, "base_link"), bearing: wrap(bearing), lag: f64::NAN, confidence: 0.8, cue });
        let f = PlumeFeatures { header: Header::new(now, "base_link"), distance: 2.0 * self.truth_distance, distance_sigma: 1.0, ..Default::default() };
        out.publish(1, f);
    }
    fn params_yaml(&self) -> serde_yaml::Value {
        serde_yaml::Value::Null
    }
    fn set_params_yaml(&mut self, _: &serde_yaml::Value) -> Result<(), sillage_core::params::ParamError> {
        Ok(())
    }
}

#[test]
fn known_errors_come_back_from_a_synthetic_stream() {
    let s = demo();
    let world = World::new(&s, 0, 0).unwrap_or_else(|e| panic!("{e}"));
    let truth = truth_of(&world, Some(s.sensors.mox.c0));
    // demo.yaml: start pose (11, 6, 3.1416), source at (3, 6): 8 m straight ahead, the
    // direction pi - 3.1416 = -7.35e-6 rad (by hand).
    assert!((truth.distance - 8.0).abs() < 1e-12, "{truth:?}");
    let yaw = s.robot.start_poses[0][2];
    assert!((truth.source_direction - (PI - yaw)).abs() < 1e-12, "{truth:?}");
    // Upwind: the air at the anemometer reversed, turned by minus the yaw. The demo's air
    // goes to +x and the robot faces -x, so upwind is about straight ahead.
    let u = world.wind_at([11.0, 6.0, s.anemometer.position[2]]);
    let up = truth.upwind_direction.expect("wind blows");
    assert!((wrap((-u[1]).atan2(-u[0]) - yaw) - up).abs() < 1e-9 && up.abs() < 1.0, "{u:?} -> {up}");

    let mut ex = Executor::new();
    ex.add(Box::new(Synthetic { truth_bearing: truth.source_direction, truth_distance: truth.distance, k: 0 })).expect("wires");
    let mut log = CueLog::new();
    ex.start(0);
    ex.run_until(nanos(2.0), &mut |r: &Record| match r.msg {
        Msg::OdorBearing(b) if r.topic == "/odor_bearing" => log.on_bearing(r.stamp, b.cue, b.bearing, &truth),
        Msg::PlumeFeatures(f) if r.topic == "/plume_features" => log.on_distance(f.distance, &truth),
        _ => {}
    })
    .expect("runs");
    let m = log.metrics();
    let src = &m.bearing_error_source;
    assert!((src["timing"].median - 0.3).abs() < 1e-9, "{src:?}");
    assert!((src["amplitude"].median - 0.5).abs() < 1e-9, "{src:?}");
    // 10 + 10 values, 0.3 and 0.5: the type-7 median is their mean.
    assert_eq!(src["all"].n, 20);
    assert!((src["all"].median - 0.4).abs() < 1e-9, "{src:?}");
    let d = m.distance_error.expect("distances");
    assert!((d.median - 2f64.ln()).abs() < 1e-12, "{d:?}");
    // Against upwind the timing error is |truth + 0.3 - up|.
    let want = wrap(truth.source_direction + 0.3 - up).abs();
    assert!((m.bearing_error_upwind["timing"].median - want).abs() < 1e-9);
}

#[test]
fn a_closed_loop_episode_agrees_with_a_regrading_from_the_recorded_odometry() {
    let s = demo();
    let source = s.sources[0].position;
    let sim = Sim {
        scenario: s,
        stack: StackSetup { config: StackConfig { params_file: Some(root().join("config/sim.yaml")), ..Default::default() }, strategy: Some("cast_surge".into()), ablate_odor_cues: false },
        world: WorldParams::default(),
        options: RunOptions { time_limit: Some(60.0), halt_timeout: 1e9, ..Default::default() },
    };
    let mut pose: Option<(f64, f64, f64)> = None;
    let mut errors: Vec<f64> = Vec::new();
    let mut bearings = 0usize;
    let r = sim
        .run_episode(EpisodeSpec::nth(&sim.scenario, 0, 0), &mut |r: &Record| match r.msg {
            Msg::Odometry(o) if r.topic == "/odom" => {
                let p = &o.pose.pose;
                pose = Some((p.position.x, p.position.y, p.orientation.yaw()));
            }
            Msg::OdorBearing(b) if r.topic == "/odor_bearing" => {
                bearings += 1;
                if let (Some((x, y, yaw)), true) = (pose, b.bearing.is_finite()) {
                    let truth = (source[1] - y).atan2(source[0] - x) - yaw;
                    errors.push(wrap(b.bearing - truth).abs());
                }
            }
            _ => {}
        })
        .unwrap_or_else(|e| panic!("{e}"));
    let c = &r.cues;
    assert!(bearings > 100, "{bearings} bearings published");
    assert!(errors.len() > 10, "finite bearings: {}", errors.len());
    errors.sort_by(f64::total_cmp);
    let n = errors.len();
    let median = if n % 2 == 1 { errors[n / 2] } else { 0.5 * (errors[n / 2 - 1] + errors[n / 2]) };
    let all = c.bearing_error_source["all"];
    assert_eq!(all.n, n, "same bearings graded");
    // The odometry is at most 20 ms older than the runner's truth (50 Hz vs 100 Hz ticks):
    // at <= 1.5 rad/s that is 0.03 rad of yaw.
    assert!((all.median - median).abs() < 0.03, "runner {} vs regraded {median}", all.median);
    assert!(c.in_plume_time > 0.0 && c.in_plume_time <= c.sampled_time + 1e-9, "{c:?}");
    let any = c.coverage["any"].expect("in plume");
    let parts: f64 = ["timing", "amplitude", "fused"].iter().map(|k| c.coverage[k].expect("in plume")).sum();
    assert!((0.0..=1.0).contains(&any) && (any - parts).abs() < 1e-9, "{:?}", c.coverage);
    assert!((c.sampled_time - r.sim_time).abs() <= 0.1 + 1e-9, "sampled {} of {}", c.sampled_time, r.sim_time);
}
