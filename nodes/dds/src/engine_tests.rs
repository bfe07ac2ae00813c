//! Engine tests without a network: a recording wire stands in for DDS.

use super::*;
use crate::args::RunConfig;
use crate::setup::{self, PlacedNode, Setup};
use proptest::prelude::*;
use sillage_core::executor::Placement;
use sillage_core::msg::{Bool, Header, Twist, Vector3, Vector3Stamped};
use sillage_core::params::ParamError;
use sillage_core::{NodeCore, Outbox, Port};
use sillage_ros2::names::node_fqn;
use sillage_ros2::NodeSpec;
use std::sync::Arc;

const MS: Nanos = 1_000_000;
const S: Nanos = 1_000_000_000;

/// Publications seen on the wire: (output endpoint, CDR bytes).
#[derive(Default)]
struct Recorder {
    sent: Vec<(usize, Vec<u8>)>,
    fail: bool,
}

impl Wire for Recorder {
    fn publish(&mut self, output: usize, cdr: &[u8]) -> Result<(), String> {
        if self.fail {
            return Err("send window full".into());
        }
        self.sent.push((output, cdr.to_vec()));
        Ok(())
    }
}

impl Recorder {
    fn on(&self, e: &Engine, topic: &str) -> Vec<Msg> {
        self.sent
            .iter()
            .filter(|(o, _)| e.outputs()[*o].topic == topic)
            .map(|(o, b)| Msg::decode(e.outputs()[*o].type_name, b).expect("our own bytes decode"))
            .collect()
    }
}

/// Doubles `vector.x` of every wind input and stamps the output with `now`; ticks on a timer.
struct Relay {
    ticks: u32,
}

impl NodeCore for Relay {
    fn name(&self) -> &str {
        "relay"
    }
    fn inputs(&self) -> Vec<Port> {
        vec![Port::of::<Vector3Stamped>("wind", Qos::SensorData), Port::of::<Bool>("e_stop", Qos::Latched)]
    }
    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<Vector3Stamped>("wind2", Qos::Reliable), Port::of::<Bool>("tick", Qos::Reliable)]
    }
    fn timers(&self) -> Vec<Nanos> {
        vec![100 * MS]
    }
    fn on_message(&mut self, now: Nanos, _input: usize, msg: &Msg, out: &mut Outbox) {
        if let Msg::Vector3Stamped(m) = msg {
            let mut m = m.clone();
            m.vector.x *= 2.0;
            m.header.stamp = sillage_core::msg::Time::from_nanos(now);
            out.publish(0, m);
        }
    }
    fn on_timer(&mut self, _now: Nanos, _t: usize, out: &mut Outbox) {
        self.ticks += 1;
        out.publish(1, Bool { data: self.ticks % 2 == 0 });
    }
    fn params_yaml(&self) -> serde_yaml::Value {
        serde_yaml::Value::Mapping(serde_yaml::Mapping::new())
    }
    fn set_params_yaml(&mut self, _v: &serde_yaml::Value) -> Result<(), ParamError> {
        Ok(())
    }
}

/// Republishes every Bool on the topic it listens to: an endless cascade.
struct Echo;

impl NodeCore for Echo {
    fn name(&self) -> &str {
        "echo"
    }
    fn inputs(&self) -> Vec<Port> {
        vec![Port::of::<Bool>("ring", Qos::Reliable)]
    }
    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<Bool>("ring", Qos::Reliable)]
    }
    fn on_message(&mut self, _now: Nanos, _i: usize, msg: &Msg, out: &mut Outbox) {
        out.publish(0, msg.clone());
    }
    fn params_yaml(&self) -> serde_yaml::Value {
        serde_yaml::Value::Mapping(serde_yaml::Mapping::new())
    }
    fn set_params_yaml(&mut self, _v: &serde_yaml::Value) -> Result<(), ParamError> {
        Ok(())
    }
}

fn placed(make: fn() -> Box<dyn NodeCore>, ns: &str, remaps: &[(&str, &str)]) -> PlacedNode {
    let name = make().name().to_string();
    let defaults = make().params_yaml();
    let spec = NodeSpec::new(&name, Arc::new(move |_: &serde_yaml::Value, _: &str, _: &str| Ok(make())), defaults);
    let placement = Placement {
        namespace: ns.into(),
        name: None,
        remaps: remaps.iter().map(|(a, b)| (a.to_string(), b.to_string())).collect(),
    };
    let runtime = NodeRuntime::start(&spec, &node_fqn(&placement, &name), &[], "test").expect("starts");
    PlacedNode { runtime, placement }
}

fn relay() -> Box<dyn NodeCore> {
    Box::new(Relay { ticks: 0 })
}

fn engine(nodes: Vec<PlacedNode>, clock: ClockMode, max_rate: f64) -> Engine {
    Engine::new(Setup { nodes, clock }, &EngineOptions { max_input_rate: max_rate, ..EngineOptions::default() }).expect("wires")
}

fn input(e: &Engine, topic: &str) -> usize {
    e.inputs().iter().position(|ep| ep.topic == topic).unwrap_or_else(|| panic!("no input {topic}"))
}

fn wind(x: f64) -> Vec<u8> {
    Msg::from(Vector3Stamped { header: Header::new(5 * S, "base_link"), vector: Vector3 { x, y: 0.0, z: 0.0 } })
        .encode()
        .expect("encodes")
}

fn estop(on: bool) -> Vec<u8> {
    Msg::from(Bool { data: on }).encode().expect("encodes")
}

#[test]
fn the_stack_is_wired_with_dds_names_and_the_declared_types() {
    let cfg = RunConfig::from_argv(["sillage_dds", "--namespace", "/r1", "--use-sim-time"], None).expect("valid");
    let e = Engine::new(setup::build(&cfg).expect("builds"), &EngineOptions::default()).expect("wires");
    assert_eq!(e.node_names(), vec!["/r1/event_encoder", "/r1/bearing_decoder", "/r1/plume_estimator", "/r1/arbiter", "/r1/source_mapper"]);
    let chem = &e.inputs()[input(&e, "/r1/chem")];
    assert_eq!(chem.dds_topic, "rt/r1/chem");
    assert_eq!(chem.dds_type, "sillage_msgs::msg::dds_::ChemSample_");
    assert_eq!(chem.qos, QosSpec::of(Qos::SensorData));
    let clock = &e.inputs()[input(&e, "/clock")];
    assert_eq!((clock.dds_topic.as_str(), clock.dds_type.as_str()), ("rt/clock", "rosgraph_msgs::msg::dds_::Clock_"));
    let cmd = e.outputs().iter().find(|ep| ep.topic == "/r1/cmd_vel").expect("the arbiter publishes cmd_vel");
    assert!(["geometry_msgs/msg/Twist", "geometry_msgs/msg/TwistStamped"].contains(&cmd.type_name), "{}", cmd.type_name);
    assert!(e.outputs().iter().any(|ep| ep.dds_topic == "rt/diagnostics" && ep.owner == Owner::Diagnostics));
    for ep in e.inputs().iter().chain(e.outputs()) {
        assert_eq!(ep.dds_topic, format!("rt{}", ep.topic));
        assert_eq!(ep.dds_type, names::dds_type(ep.type_name).expect("valid"));
    }
}

#[test]
fn publications_reach_local_nodes_at_once_and_the_wire_once() {
    let a = placed(relay, "/r", &[]);
    let b = placed(relay, "/r", &[("wind", "wind2"), ("wind2", "wind3"), ("tick", "tick_b")]);
    // Two nodes with one name would clash in ROS; here only topics matter.
    let mut e = engine(vec![a, b], ClockMode::System, 1000.0);
    let mut w = Recorder::default();
    let i = input(&e, "/r/wind");
    e.on_sample(7 * S, 0, i, 1, &wind(1.5), &mut w);
    let w2 = w.on(&e, "/r/wind2");
    let w3 = w.on(&e, "/r/wind3");
    assert_eq!(w2.len(), 1);
    assert_eq!(w3.len(), 1);
    let Msg::Vector3Stamped(m) = &w3[0] else { panic!("type") };
    assert_eq!(m.vector.x, 6.0, "doubled by both nodes");
    assert_eq!(m.header.stamp.to_nanos(), 7 * S, "cores get ROS time (system time here)");
    assert_eq!((e.stats().delivered, e.stats().delivered_local), (1, 1));
}

#[test]
fn malformed_and_wrong_type_samples_are_dropped_counted_and_logged() {
    let mut e = engine(vec![placed(relay, "", &[])], ClockMode::System, 1000.0);
    let mut w = Recorder::default();
    let i = input(&e, "/wind");
    let good = wind(1.0);
    // Truncated payload (52 - 9 = 43 bytes), unsupported encapsulation (XCDR2), no header.
    for bad in [&good[..good.len() - 9], &[0x00, 0x07, 0x00, 0x00, 1, 2, 3, 4][..], &[0x00][..]] {
        e.on_sample(S, 0, i, 1, bad, &mut w);
    }
    assert_eq!(e.stats().malformed, 3);
    assert!(w.sent.is_empty(), "nothing reaches the node");
    let log = e.drain_log();
    assert_eq!(log.len(), 1, "logged at the 1st, 10th, 100th occurrence: {log:?}");
    assert!(log[0].starts_with("/wind: dropped a malformed sample (43 bytes)"), "{log:?}");
    assert!(log[0].contains("geometry_msgs/msg/Vector3Stamped"), "names the type: {log:?}");
    let d = e.node(0).expect("node").stats().decode_errors.clone();
    assert_eq!(d, vec![3, 0], "the hosted node counts them per input too");
    for bad in [&[0x00, 0x07, 0x00, 0x00, 1, 2, 3, 4][..]; 7] {
        e.on_sample(S, 0, i, 1, bad, &mut w);
    }
    let log = e.drain_log();
    assert!(log.len() == 1 && log[0].contains("unsupported encapsulation") && log[0].contains("occurrence 10"), "{log:?}");

    // A writer announced as std_msgs/String on rt/wind: even decodable bytes are dropped.
    e.on_remote_writer("rt/wind", "std_msgs::msg::dds_::String_", 0xbad);
    e.on_remote_writer("rt/wind", "geometry_msgs::msg::dds_::Vector3Stamped_", 0x900d);
    e.on_sample(S, 0, i, 0xbad, &good, &mut w);
    assert_eq!(e.stats().wrong_type, 1);
    assert!(w.sent.is_empty());
    e.on_sample(S, 0, i, 0x900d, &good, &mut w);
    assert_eq!(w.on(&e, "/wind2").len(), 1, "the well-typed writer still gets through");
    // A subscription expecting Twist on our Vector3Stamped output.
    e.on_remote_reader("rt/wind2", "geometry_msgs::msg::dds_::Twist_", 0xfeed);
    e.on_remote_reader("rt/wind2", "geometry_msgs::msg::dds_::Twist_", 0xfeed);
    assert_eq!(e.stats().type_conflicts, 2, "one writer, one reader, each counted once");
    let log = e.drain_log();
    assert!(log.iter().any(|l| l.contains("announces type std_msgs::msg::dds_::String_")), "{log:?}");
    assert!(log.iter().any(|l| l.contains("expects geometry_msgs::msg::dds_::Twist_")), "{log:?}");
    assert!(log.iter().any(|l| l.contains("announced another type")), "{log:?}");
}

#[test]
fn floods_are_limited_but_the_latched_e_stop_always_passes() {
    let mut e = engine(vec![placed(relay, "", &[])], ClockMode::System, 100.0);
    let mut w = Recorder::default();
    let (iw, ie) = (input(&e, "/wind"), input(&e, "/e_stop"));
    for k in 0..1000 {
        e.on_sample(S, k * MS / 10, iw, 1, &wind(1.0), &mut w);
        e.on_sample(S, k * MS / 10, ie, 2, &estop(k == 999), &mut w);
    }
    assert_eq!(e.stats().flood_dropped, 900);
    assert_eq!(w.on(&e, "/wind2").len(), 100);
    assert_eq!(e.stats().delivered, 100 + 1000, "every e-stop sample reached the node");
    assert!(e.drain_log().iter().any(|l| l.contains("flood on /wind")));
}

#[test]
fn simulated_time_drives_timers_from_clock_messages() {
    let mut e = engine(vec![placed(relay, "", &[])], ClockMode::Simulated, 1000.0);
    let mut w = Recorder::default();
    let ic = input(&e, "/clock");
    let clock = |t: Nanos| Msg::from(Clock { clock: sillage_core::msg::Time::from_nanos(t) }).encode().expect("encodes");
    for k in 0..50 {
        e.poll_timers(1_700_000_000 * S + k * S, &mut w);
    }
    assert_eq!(e.wait_hint(0), None);
    assert!(w.sent.is_empty(), "no /clock yet: ROS time stands at zero");
    // Inputs before the first /clock see ROS time 0.
    e.on_sample(1_700_000_000 * S, 0, input(&e, "/wind"), 1, &wind(1.0), &mut w);
    let Msg::Vector3Stamped(m) = &w.on(&e, "/wind2")[0] else { panic!("type") };
    assert_eq!(m.header.stamp.to_nanos(), 0);
    // First /clock: every timer is overdue and fires once; then one tick per 100 ms.
    for k in 0..=20 {
        e.on_sample(0, 0, ic, 9, &clock(100 * S + k * 50 * MS), &mut w);
    }
    let ticks = w.on(&e, "/tick").len();
    assert_eq!(ticks, 1 + 10, "one catch-up tick, then 100.1 .. 101.0 s");
    let diags = w.on(&e, "/diagnostics");
    assert_eq!(diags.len(), 2, "at 100 s and 101 s");
    let Msg::DiagnosticArray(d) = &diags[1] else { panic!("type") };
    assert_eq!(d.header.stamp.to_nanos(), 101 * S, "stamped in simulated time");
    // A restart of the simulation: no burst of ticks, counted and logged.
    e.on_sample(0, 0, ic, 9, &clock(10 * S), &mut w);
    e.on_sample(0, 0, ic, 9, &clock(10 * S + 60 * MS), &mut w);
    assert_eq!(e.stats().clock_jumps_back, 1);
    assert_eq!(w.on(&e, "/tick").len(), ticks, "no burst after the jump");
    e.on_sample(0, 0, ic, 9, &clock(10 * S + 100 * MS), &mut w);
    assert_eq!(w.on(&e, "/tick").len(), ticks + 1, "the tick due 100 ms after 101.0 s comes 100 ms after the jump");
    assert!(e.drain_log().iter().any(|l| l.contains("/clock went back")));
}

#[test]
fn system_time_timers_and_wait_hints() {
    let mut e = engine(vec![placed(relay, "", &[])], ClockMode::System, 1000.0);
    let mut w = Recorder::default();
    let t0 = 1_700_000_000 * S;
    assert_eq!(e.wait_hint(t0), Some(100 * MS));
    e.poll_timers(t0 + 99 * MS, &mut w);
    assert!(w.on(&e, "/tick").is_empty());
    assert_eq!(e.wait_hint(t0 + 99 * MS), Some(MS));
    e.poll_timers(t0 + 100 * MS, &mut w);
    assert_eq!(w.on(&e, "/tick").len(), 1);
    e.poll_timers(t0 + 1000 * MS, &mut w);
    let d = w.on(&e, "/diagnostics");
    assert_eq!(d.len(), 1);
    let Msg::DiagnosticArray(d) = &d[0] else { panic!("type") };
    let status = d.status.iter().find(|s| s.name == STATUS_NAME).expect("transport status");
    assert_eq!(status.level, DiagnosticStatus::OK);
    assert!(status.values.iter().any(|kv| kv.key == "clock" && kv.value == "system"));
}

#[test]
fn diagnostics_warn_about_fresh_bad_input_and_publish_failures_are_counted() {
    let mut e = engine(vec![placed(relay, "", &[])], ClockMode::System, 1000.0);
    let mut w = Recorder::default();
    let i = input(&e, "/wind");
    e.poll_timers(0, &mut w);
    e.on_sample(0, 0, i, 1, &[0, 1, 0, 0, 7], &mut w);
    e.poll_timers(S, &mut w);
    e.poll_timers(2 * S, &mut w);
    let d = w.on(&e, "/diagnostics");
    let status = |m: &Msg| {
        let Msg::DiagnosticArray(a) = m else { panic!("type") };
        a.status.iter().find(|s| s.name == STATUS_NAME).cloned().expect("transport status")
    };
    let (first, second) = (status(&d[0]), status(&d[1]));
    assert_eq!(first.level, DiagnosticStatus::WARN);
    assert!(first.values.iter().any(|kv| kv.key == "malformed" && kv.value == "1"));
    assert!(first.message.contains("1 malformed"), "{}", first.message);
    assert_eq!(second.level, DiagnosticStatus::OK, "nothing new since the last report");
    w.fail = true;
    e.on_sample(3 * S, 0, i, 1, &wind(1.0), &mut w);
    assert_eq!(e.stats().publish_failures, 1);
    assert!(e.drain_log().iter().any(|l| l.contains("/wind2: publication failed: send window full")));
}

#[test]
fn endless_cascades_between_nodes_are_cut_short() {
    let mut e = Engine::new(
        Setup { nodes: vec![placed(|| Box::new(Echo), "", &[])], clock: ClockMode::System },
        &EngineOptions { max_cascade: 50, ..EngineOptions::default() },
    )
    .expect("wires");
    let mut w = Recorder::default();
    e.on_sample(0, 0, 0, 1, &estop(true), &mut w);
    assert_eq!(e.stats().runaways, 1);
    assert_eq!(e.stats().delivered_local, 50);
    assert_eq!(w.sent.len(), 51, "every publication still went out once");
    assert!(e.drain_log().iter().any(|l| l.contains("more than 50 local deliveries")));
}

#[test]
fn conflicting_port_types_and_bad_names_are_refused() {
    struct Clash;
    impl NodeCore for Clash {
        fn name(&self) -> &str {
            "clash"
        }
        fn inputs(&self) -> Vec<Port> {
            vec![Port::of::<Bool>("x", Qos::Reliable)]
        }
        fn outputs(&self) -> Vec<Port> {
            vec![Port::of::<Vector3Stamped>("x", Qos::Reliable)]
        }
        fn on_message(&mut self, _n: Nanos, _i: usize, _m: &Msg, _o: &mut Outbox) {}
        fn params_yaml(&self) -> serde_yaml::Value {
            serde_yaml::Value::Null
        }
        fn set_params_yaml(&mut self, _v: &serde_yaml::Value) -> Result<(), ParamError> {
            Ok(())
        }
    }
    let err = |nodes| Engine::new(Setup { nodes, clock: ClockMode::System }, &EngineOptions::default()).err().expect("refused");
    let e = err(vec![placed(|| Box::new(Clash), "", &[])]);
    assert!(matches!(e, DdsError::TypeConflict { ref topic, .. } if topic == "/x"), "{e}");
    let e = err(vec![placed(relay, "", &[("wind", "/odd-name")])]);
    assert!(matches!(e, DdsError::BadTopicName { ref topic, .. } if topic == "/odd-name"), "{e}");
}

#[test]
fn stopping_publishes_a_zero_command_on_the_velocity_output() {
    let mut e = stack_engine();
    let mut w = Recorder::default();
    e.stop(1_700_000_000 * S, &mut w);
    let cmds = w.on(&e, "/cmd_vel");
    assert_eq!(cmds.len(), 1);
    let twist = match &cmds[0] {
        Msg::TwistStamped(t) => t.twist,
        Msg::Twist(t) => *t,
        other => panic!("{other:?}"),
    };
    assert_eq!(twist, Twist::default());
}

fn stack_engine() -> Engine {
    let cfg = RunConfig::from_argv(["sillage_dds"], None).expect("valid");
    Engine::new(setup::build(&cfg).expect("builds"), &EngineOptions::default()).expect("wires")
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    /// Whatever arrives on the stack's inputs (random bytes, or valid samples with bytes
    /// flipped), the executor keeps running and every sample is accounted for.
    #[test]
    fn garbage_on_every_stack_input_is_accounted_for(
        samples in proptest::collection::vec((0usize..64, proptest::collection::vec(any::<u8>(), 0..96), any::<bool>()), 1..40)
    ) {
        let mut e = stack_engine();
        let mut w = Recorder::default();
        let n = e.inputs().len();
        let mut t = 1_700_000_000 * S;
        for (k, (which, bytes, flip)) in samples.iter().enumerate() {
            let i = which % n;
            let data = if *flip {
                // A valid default message of the input's type with the payload overwritten.
                let ty = e.inputs()[i].type_name;
                let mut b = default_of(ty);
                for (j, x) in bytes.iter().enumerate() {
                    if 4 + j < b.len() {
                        b[4 + j] ^= x;
                    }
                }
                b
            } else {
                bytes.clone()
            };
            t += 10 * MS;
            e.on_sample(t, k as i64 * MS, i, 1, &data, &mut w);
            e.poll_timers(t, &mut w);
        }
        let s = e.stats().clone();
        prop_assert_eq!(s.samples, samples.len() as u64);
        prop_assert_eq!(s.delivered + s.malformed + s.flood_dropped + s.wrong_type, s.samples);
        for (o, b) in &w.sent {
            prop_assert!(Msg::decode(e.outputs()[*o].type_name, b).is_ok(), "sillage's own output decodes");
        }
    }
}

/// The CDR of a default message of a vocabulary type.
fn default_of(type_name: &str) -> Vec<u8> {
    use sillage_core::msg::*;
    let m: Msg = match type_name {
        "sillage_msgs/msg/ChemSample" => ChemSample { channels: vec!["left".into(), "right".into()], values: vec![1.0, 2.0], ..Default::default() }.into(),
        "sillage_msgs/msg/OdorEventArray" => OdorEventArray { events: vec![OdorEvent::default()], ..Default::default() }.into(),
        "sillage_msgs/msg/OdorBearing" => OdorBearing::default().into(),
        "sillage_msgs/msg/PlumeFeatures" => PlumeFeatures::default().into(),
        "geometry_msgs/msg/Vector3Stamped" => Vector3Stamped::default().into(),
        "nav_msgs/msg/Odometry" => Odometry::default().into(),
        "std_msgs/msg/Bool" => Bool::default().into(),
        "std_msgs/msg/Empty" => Empty::default().into(),
        "sensor_msgs/msg/LaserScan" => LaserScan { ranges: vec![1.0; 8], ..Default::default() }.into(),
        _ => Bool::default().into(),
    };
    m.encode().expect("encodes")
}
