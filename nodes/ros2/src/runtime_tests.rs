//! Tests of [`NodeRuntime`] with the test core of `crate::testing`.

use super::*;
use crate::diagnostics;
use crate::testing;
use sillage_core::msg::{Bool, Vector3, Vector3Stamped};

fn started(flat: &[(&str, ParamValue)]) -> NodeRuntime {
    let flat: Vec<(String, ParamValue)> = flat.iter().map(|(k, v)| (k.to_string(), v.clone())).collect();
    NodeRuntime::start(&testing::spec(), "/r1/scaler", &flat, "--ros-args").expect("starts")
}

fn wind(x: f64) -> Vec<u8> {
    Msg::from(Vector3Stamped { header: Header::new(5, "base_link"), vector: Vector3 { x, y: 0.0, z: 0.0 } }).encode().expect("encodes")
}

fn gain(rt: &NodeRuntime) -> f64 {
    rt.core().params_yaml()["gain"].as_f64().expect("gain is a float")
}

#[test]
fn start_up_parameters_are_validated_and_integers_accepted_for_doubles() {
    let rt = started(&[
        ("gain", ParamValue::Integer(3)),
        ("limits.max_gain", ParamValue::Integer(4)),
        ("use_sim_time", ParamValue::Bool(true)),
        ("channels", ParamValue::StringArray(vec!["a".into()])),
        ("limits.max_gain", ParamValue::NotSet),
    ]);
    assert_eq!(rt.param("gain"), Some(ParamValue::Double(3.0)));
    assert_eq!(rt.param("limits.max_gain"), Some(ParamValue::Double(4.0)));
    assert_eq!(rt.param("channels"), Some(ParamValue::StringArray(vec!["a".into()])));
    assert_eq!(rt.param("use_sim_time"), None, "ROS's own parameter stays with ROS");
    let flat = |k: &str, v: ParamValue| vec![(k.to_string(), v)];
    for (bad, key) in [
        (flat("gain", ParamValue::Double(9.0)), "gain"),
        (flat("rate", ParamValue::String("fast".into())), "rate"),
        (flat("limits.max_speed", ParamValue::Double(1.0)), "limits.max_speed"),
    ] {
        let e = NodeRuntime::start(&testing::spec(), "/r1/scaler", &bad, "--params-file p.yaml").expect_err(key);
        let m = e.to_string();
        assert!(m.contains(key) && m.contains("p.yaml") && m.contains("/r1/scaler"), "{m}");
    }
}

#[test]
fn bytes_in_bytes_out_through_the_codec() {
    let mut rt = started(&[]);
    let mut sent: Vec<(usize, Vec<u8>)> = Vec::new();
    rt.on_input(1_000, 0, &wind(0.25), &mut |o, b| sent.push((o, b.to_vec()))).expect("handled");
    assert_eq!(sent.len(), 1);
    let Msg::TwistStamped(t) = Msg::decode(TwistStamped::TYPE_NAME, &sent[0].1).expect("decodes") else { panic!("type") };
    assert_eq!(t.twist.linear.x, 0.5);
    assert_eq!(t.header.stamp.to_nanos(), 1_000, "the core is driven with the ROS time given");
    rt.on_timer(2_000, 0, &mut |o, b| sent.push((o, b.to_vec()))).expect("tick");
    assert_eq!(sent[1].0, 1);
    assert_eq!(Msg::decode(Bool::TYPE_NAME, &sent[1].1).expect("decodes"), Msg::Bool(Bool { data: false }));
    assert_eq!(rt.stats().received, vec![1, 0]);
    assert_eq!(rt.stats().published, vec![1, 1]);
}

#[test]
fn bad_input_and_bad_output_are_counted_not_fatal() {
    let mut rt = started(&[]);
    let mut n = 0;
    // Truncated buffer: the codec names the problem; nothing is published.
    let e = rt.on_input(0, 0, &wind(1.0)[..10], &mut |_, _| n += 1).expect_err("undecodable");
    assert!(matches!(e, RuntimeError::Decode { ref topic, .. } if topic == "wind"), "{e}");
    // The test core publishes a Bool on the TwistStamped output: dropped and counted.
    let e = rt.on_input(0, 1, &Msg::from(Bool { data: true }).encode().expect("enc"), &mut |_, _| n += 1).expect_err("bad output");
    assert!(e.to_string().contains("cmd_vel"), "{e}");
    assert!(matches!(rt.on_timer(0, 7, &mut |_, _| n += 1), Err(RuntimeError::NoSuchPort { what: "timer", .. })));
    assert_eq!(n, 0);
    assert_eq!(rt.stats().decode_errors, vec![1, 0]);
    assert_eq!(rt.stats().bad_outputs, 1);
    // It keeps working afterwards.
    rt.on_input(0, 0, &wind(1.0), &mut |_, _| n += 1).expect("fine");
    assert_eq!(n, 1);
}

#[test]
fn run_time_changes_are_validated_and_refusals_keep_the_old_value() {
    let mut rt = started(&[]);
    // Accepted, integer for a double.
    assert_eq!(rt.set_param("gain", ParamValue::Integer(4)), Ok(ParamValue::Double(4.0)));
    assert_eq!(gain(&rt), 4.0);
    // Out of range (checked against another parameter): refused, old value kept.
    let e = rt.set_param("gain", ParamValue::Double(6.0)).expect_err("range");
    assert!(matches!(&e, ParamChangeError::Invalid { error: ParamError::OutOfRange { key, .. }, .. } if key == "gain"), "{e}");
    assert_eq!(gain(&rt), 4.0);
    // Wrong type, unknown key, ROS's own parameter.
    assert!(matches!(rt.set_param("gain", ParamValue::String("x".into())), Err(ParamChangeError::Invalid { .. })));
    assert!(matches!(rt.set_param("gian", ParamValue::Double(1.0)), Err(ParamChangeError::Unknown { .. })));
    assert!(matches!(rt.set_param("use_sim_time", ParamValue::Bool(true)), Err(ParamChangeError::StartupOnly { .. })));
    // Valid for the node but not for the transport: output type and timer period are fixed.
    assert!(matches!(rt.set_param("stamped", ParamValue::Bool(false)), Err(ParamChangeError::NeedsRestart { what: "topics or message types", .. })));
    assert_eq!(rt.param("stamped"), Some(ParamValue::Bool(true)));
    assert!(matches!(rt.set_param("rate", ParamValue::Double(20.0)), Err(ParamChangeError::NeedsRestart { what: "timer periods", .. })));
    assert_eq!(rt.param("rate"), Some(ParamValue::Double(10.0)));
    assert_eq!(gain(&rt), 4.0);
    // check_param validates without applying.
    assert!(rt.check_param("limits.max_gain", ParamValue::Double(3.0)).is_err(), "would make gain 4 out of range");
    assert!(rt.check_param("limits.max_gain", ParamValue::Double(8.0)).is_ok());
    assert_eq!(rt.param("limits.max_gain"), Some(ParamValue::Double(5.0)));
    assert_eq!((rt.stats().params_changed, rt.stats().params_refused), (1, 6));
}

#[test]
fn stop_commands_zero_every_velocity_output() {
    let mut rt = started(&[]);
    let mut sent = Vec::new();
    rt.stop_commands(42, &mut |o, b| sent.push((o, b.to_vec()))).expect("stops");
    assert_eq!(sent.len(), 1);
    let Msg::TwistStamped(t) = Msg::decode(TwistStamped::TYPE_NAME, &sent[0].1).expect("decodes") else { panic!("type") };
    assert_eq!((t.twist, t.header.frame_id.as_str(), t.header.stamp.to_nanos()), (Twist::default(), "base_link", 42));
    let mut plain = NodeRuntime::start(&testing::spec(), "/s", &[("stamped".into(), ParamValue::Bool(false))], "-p").expect("starts");
    let mut sent = Vec::new();
    plain.stop_commands(0, &mut |o, b| sent.push((o, b.to_vec()))).expect("stops");
    assert_eq!(Msg::decode(Twist::TYPE_NAME, &sent[0].1).expect("decodes"), Msg::Twist(Twist::default()));
}

#[test]
fn diagnostics_aggregate_every_node_and_warn_once_per_burst() {
    let mut a = started(&[]);
    let mut b = NodeRuntime::start(&testing::spec(), "/r2/scaler", &[], "-").expect("starts");
    let _ = a.on_input(0, 0, &[0, 1], &mut |_, _| {});
    let arr = diagnostics::collect(3 * diagnostics::PERIOD, [&mut a, &mut b]);
    assert_eq!(arr.header.stamp.to_nanos(), 3_000_000_000);
    let names: Vec<&str> = arr.status.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, ["r1/scaler: executor", "scaler: core", "r2/scaler: executor", "scaler: core"]);
    assert_eq!(arr.status[0].level, DiagnosticStatus::WARN);
    assert!(arr.status[0].message.contains("1 problem"), "{}", arr.status[0].message);
    assert!(arr.status[0].values.iter().any(|kv| kv.key == "in wind: undecodable" && kv.value == "1"));
    assert_eq!(arr.status[2].level, DiagnosticStatus::OK);
    // No new problem: back to OK, the counters stay.
    let arr = diagnostics::collect(4 * diagnostics::PERIOD, [&mut a]);
    assert_eq!(arr.status[0].level, DiagnosticStatus::OK);
    assert!(arr.status[0].values.iter().any(|kv| kv.key == "in wind: received" && kv.value == "1"));
}

#[test]
fn repeated_problems_are_logged_sparsely() {
    let logged: Vec<u64> = (0..=2000).filter(|&c| should_log(c)).collect();
    assert_eq!(logged, [1, 10, 100, 1000]);
}

fn world_flat(extra: &[(&str, ParamValue)]) -> Vec<(String, ParamValue)> {
    let demo = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
    let mut flat = vec![("scenario".to_string(), ParamValue::String(demo.display().to_string()))];
    flat.extend(extra.iter().map(|(k, v)| (k.to_string(), v.clone())));
    flat
}

#[test]
fn the_world_node_runs_through_the_runtime_on_wall_time_only() {
    let spec = crate::NodeSpec::world();
    let mut rt = NodeRuntime::start(&spec, "/world", &world_flat(&[("seed", ParamValue::Integer(3))]), "-p").expect("starts");
    assert_eq!(rt.param("seed"), Some(ParamValue::Integer(3)));
    let outputs: Vec<String> = rt.outputs().iter().map(|p| p.topic.clone()).collect();
    let clock = outputs.iter().position(|t| t == "/clock").expect("publishes /clock");
    let chem = outputs.iter().position(|t| t == "chem").expect("publishes chem");
    let mut sent: Vec<(usize, Vec<u8>)> = Vec::new();
    let period = rt.timers()[0];
    for k in 0..=20 {
        rt.on_timer(1_000_000_000 + k * period, 0, &mut |o, b| sent.push((o, b.to_vec()))).expect("tick");
    }
    let last_clock = sent.iter().rev().find(|(o, _)| *o == clock).expect("a clock");
    let Msg::Clock(c) = Msg::decode(sillage_core::msg::Clock::TYPE_NAME, &last_clock.1).expect("decodes") else { panic!("type") };
    assert_eq!(c.clock.to_nanos(), 1_000_000_000 + 20 * period, "the clock is the host's time");
    assert!(sent.iter().any(|(o, _)| *o == chem), "chem samples within 0.2 s");
    // A start-up-only parameter cannot change at run time; the old value stays.
    assert!(rt.set_param("seed", ParamValue::Integer(4)).is_err());
    assert_eq!(rt.param("seed"), Some(ParamValue::Integer(3)));
    // The source of /clock must not wait for /clock.
    let e = NodeRuntime::start(&spec, "/world", &world_flat(&[("use_sim_time", ParamValue::Bool(true))]), "-p").expect_err("loop");
    assert!(matches!(e, RuntimeError::ClockLoop { .. }), "{e}");
    let e = NodeRuntime::start(&spec, "/world", &[], "p.yaml").expect_err("no scenario");
    assert!(e.to_string().contains("scenario") && e.to_string().contains("p.yaml"), "{e}");
}
