//! The node core on the in-process executor: ports, publishing rate and evidence, channel
//! names, motion compensation, the cues end to end, bad input (counted warnings, `cue = NONE`,
//! no panic), diagnostics and parameter changes.

use proptest::prelude::*;
use sillage_bearing_decoder::node::{IN_CHEM, IN_ODOM, IN_ODOR_EVENTS, IN_WIND};
use sillage_bearing_decoder::{BearingDecoder, Params};
use sillage_core::executor::{Executor, Record};
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos, NodeCore, Outbox};

const MS: Nanos = 1_000_000;
const S: Nanos = 1_000_000_000;
const DEG: f64 = std::f64::consts::PI / 180.0;
const TRIANGLE: [(&str, f64, f64); 3] = [("left", 0.0, 0.1), ("right", 0.0, -0.1), ("front", 0.2, 0.0)];

/// An OdorEventArray with one event per (stamp, channel, polarity).

/// The defaults with onsets from the odor events (the tests below drive `odor_events`) and the
/// former 10 s window.
fn event_params() -> Params {
    let mut p = Params::default();
    p.timing.onsets = sillage_bearing_decoder::params::OnsetSource::FirstEvent;
    p.timing.window = 10.0;
    p
}

fn events(list: &[(Nanos, u16, i8)]) -> OdorEventArray {
    let stamp = list.iter().map(|e| e.0).max().unwrap_or(0);
    OdorEventArray {
        header: Header::new(stamp, ""),
        events: list.iter().map(|&(t, channel, polarity)| OdorEvent { stamp: Time::from_nanos(t), channel, polarity, level: 0.0 }).collect(),
    }
}

fn wind(from: f64, speed: f64, frame: &str) -> Vector3Stamped {
    // The vector points where the air goes: away from `from`.
    Vector3Stamped { header: Header::new(0, frame), vector: Vector3 { x: -speed * from.cos(), y: -speed * from.sin(), z: 0.0 } }
}

/// A direct driver: feeds messages to the core, collects what it publishes.
struct Drive {
    node: BearingDecoder,
    out: Outbox,
    published: Vec<(Nanos, OdorBearing)>,
}

impl Drive {
    fn new(p: Params) -> Drive {
        Drive { node: BearingDecoder::new(p).expect("valid"), out: Outbox::new(), published: Vec::new() }
    }
    fn send(&mut self, now: Nanos, input: usize, msg: impl Into<Msg>) {
        self.node.on_message(now, input, &msg.into(), &mut self.out);
        self.collect(now);
    }
    fn tick(&mut self, now: Nanos) -> OdorBearing {
        self.node.on_timer(now, 0, &mut self.out);
        self.collect(now);
        self.published.last().map(|p| p.1.clone()).expect("a tick publishes")
    }
    fn collect(&mut self, now: Nanos) {
        for (_, m) in self.out.drain() {
            if let Msg::OdorBearing(b) = m {
                self.published.push((now, b));
            }
        }
    }
    /// Onsets about every 700 ms (irregular, so no false lag lines up) on left, then on right
    /// `lag` [s] later, each followed by a falling event.
    fn pulses(&mut self, from: Nanos, n: usize, lag: f64, left: u16, right: u16) -> Nanos {
        self.pulses_every(from, n, lag, left, right, 700 * MS)
    }
    fn pulses_every(&mut self, from: Nanos, n: usize, lag: f64, left: u16, right: u16, period: Nanos) -> Nanos {
        let mut t = from;
        for k in 0..n as i64 {
            let tr = t + (lag * 1e9) as Nanos;
            let mut list = vec![(t, left, 1), (tr, right, 1), (t + 300 * MS, left, -1), (tr + 300 * MS, right, -1)];
            list.sort_by_key(|e| e.0);
            for e in list {
                self.send(e.0, IN_ODOR_EVENTS, events(&[e]));
            }
            t += period + (k * 7 % 5) * period / 10;
        }
        t
    }
}

#[test]
fn ports_timer_and_none_when_nothing_is_known() {
    let n = BearingDecoder::new(event_params()).expect("valid");
    let inputs: Vec<String> = n.inputs().iter().map(|p| p.topic.clone()).collect();
    assert_eq!(inputs, ["odor_events", "wind", "chem", "odom"]);
    assert_eq!(n.outputs()[0].topic, "odor_bearing");
    assert_eq!(n.outputs()[0].type_name, "sillage_msgs/msg/OdorBearing");
    assert_eq!(n.timers(), vec![100 * MS]);
    // On the executor with no input: a NONE message every 100 ms.
    let mut ex = Executor::new();
    ex.add(Box::new(n)).expect("wires");
    ex.start(0);
    let mut got = Vec::new();
    ex.run_until(S, &mut |r: &Record| {
        if let Msg::OdorBearing(b) = r.msg {
            got.push((r.stamp, b.clone()));
        }
    })
    .expect("runs");
    assert_eq!(got.len(), 10, "10 Hz for 1 s");
    for (t, b) in &got {
        assert_eq!(b.cue, OdorBearing::NONE);
        assert!(b.bearing.is_nan() && b.lag.is_nan() && b.confidence == 0.0);
        assert_eq!(b.header.frame_id, "base_link");
        assert_eq!(b.header.stamp.to_nanos(), *t);
    }
}

#[test]
fn timing_bearing_end_to_end_with_front_back_from_the_wind() {
    // d = 0.2 m, U = 0.5 m/s, lag 0.2 s: 30 deg in front, or 150 deg behind (docs/references.md).
    for (upwind, want) in [(20.0, 30.0), (170.0, 150.0)] {
        let mut d = Drive::new(event_params());
        d.send(0, IN_WIND, wind(upwind * DEG, 0.5, "base_link"));
        let before = d.published.len();
        let t = d.pulses(100 * MS, 8, 0.2, 0, 1);
        assert!(d.published.len() > before, "new onsets publish at once");
        d.send(t, IN_WIND, wind(upwind * DEG, 0.5, ""));
        let b = d.tick(t);
        assert_eq!(b.cue, OdorBearing::TIMING, "{b:?}");
        assert!((b.bearing - want * DEG).abs() < 1e-4, "{} vs {want}", b.bearing / DEG);
        assert!((b.lag - 0.2).abs() < 1e-6);
        assert!(b.confidence > 0.5, "{b:?}");
    }
}

#[test]
fn unresolved_front_back_and_clamp_are_said() {
    // Wind from the left, along the sensor axis: front/back cannot be settled.
    let mut d = Drive::new(event_params());
    d.send(0, IN_WIND, wind(90.0 * DEG, 0.5, ""));
    let t = d.pulses(100 * MS, 8, 0.2, 0, 1);
    d.send(t, IN_WIND, wind(90.0 * DEG, 0.5, ""));
    let b = d.tick(t);
    let e = d.node.last_estimate().expect("estimate");
    let timing = e.timing.as_ref().expect("timing cue");
    assert!(timing.resolution.is_unresolved(), "{timing:?}");
    assert!((b.bearing - 30.0 * DEG).abs() < 1e-4, "the forward candidate");
    assert!(d.node.stats().unresolved > 0);
    // unresolved_scale = 0: say nothing instead.
    let mut p = event_params();
    p.front_back.unresolved_scale = 0.0;
    let mut d = Drive::new(p);
    d.send(0, IN_WIND, wind(90.0 * DEG, 0.5, ""));
    let t = d.pulses(100 * MS, 8, 0.2, 0, 1);
    d.send(t, IN_WIND, wind(90.0 * DEG, 0.5, ""));
    assert_eq!(d.tick(t).cue, OdorBearing::NONE);
    // A lag beyond d / U (0.45 s > 0.4 s, within the 25 % margin): clamped to 90 deg.
    let mut d = Drive::new(event_params());
    d.send(0, IN_WIND, wind(60.0 * DEG, 0.5, ""));
    let t = d.pulses(100 * MS, 8, 0.45, 0, 1);
    d.send(t, IN_WIND, wind(60.0 * DEG, 0.5, ""));
    let b = d.tick(t);
    assert!((b.bearing - 90.0 * DEG).abs() < 1e-9, "{}", b.bearing / DEG);
    assert!(d.node.last_estimate().and_then(|e| e.timing.as_ref().ok()).is_some_and(|t| t.clamped));
}

#[test]
fn channel_names_come_from_chem_when_present() {
    let mut d = Drive::new(event_params());
    d.send(0, IN_WIND, wind(0.0, 0.5, ""));
    // The chem list puts right first: channel 0 is now the right sensor.
    let chem = ChemSample {
        header: Header::new(0, "chem"),
        channels: vec!["right".into(), "left".into(), "temp".into()],
        values: vec![0.0, 0.0, 21.0],
        quantity: ChemSample::RELATIVE,
    };
    d.send(0, IN_CHEM, chem);
    assert_eq!(d.node.channel_names(), ["right", "left", "temp"]);
    // Channel 0 (right) leads by 0.1 s: odor from the right (negative bearing).
    let t = d.pulses(100 * MS, 8, 0.1, 0, 1);
    d.send(t, IN_WIND, wind(0.0, 0.5, ""));
    let b = d.tick(t);
    let want = -(0.5f64 * 0.1 / 0.2).asin();
    assert!((b.bearing - want).abs() < 1e-4, "{} vs {}", b.bearing / DEG, want / DEG);
    // Events for the unplaced 'temp' channel and beyond the list are counted and dropped.
    d.send(t, IN_ODOR_EVENTS, events(&[(t, 2, 1), (t, 9, 1)]));
    assert_eq!(d.node.warnings().count("unplaced_channel"), 1);
    assert_eq!(d.node.warnings().count("unknown_channel"), 1);
}

#[test]
fn odometry_compensates_the_apparent_wind() {
    // True wind from 150 deg (behind left) at 0.5 m/s; the robot drives forward at 0.4 m/s, so
    // the anemometer sees apparent = true - v, which comes from 97 deg (nearly along the
    // sensor axis). The front still moves with the air: the lag is d sin(theta) / (U + v.u).
    let theta = 150.0 * DEG;
    let (u, v) = (0.5, 0.4);
    let lag = 0.2 * theta.sin() / (u + v * theta.cos());
    let apparent = Vector3Stamped {
        header: Header::new(0, "base_link"),
        vector: Vector3 { x: -u * theta.cos() - v, y: -u * theta.sin(), z: 0.0 },
    };
    let mut odom = Odometry::default();
    odom.twist.twist.linear.x = v;
    let run = |with_odom: bool| {
        let mut d = Drive::new(event_params());
        let mut t = 0;
        for k in 0..8 {
            if with_odom {
                d.send(t, IN_ODOM, odom.clone());
            }
            d.send(t, IN_WIND, apparent.clone());
            t = d.pulses_every(t + 10 * MS, 1, lag, 0, 1, (1300 + k * 370 % 700) * MS);
        }
        if with_odom {
            d.send(t, IN_ODOM, odom.clone());
        }
        d.send(t, IN_WIND, apparent.clone());
        let b = d.tick(t);
        let air = d.node.last_estimate().expect("estimate").air;
        (b, air)
    };
    let (b, air) = run(true);
    assert!(air.compensated);
    assert!((air.speed.expect("speed") - u).abs() < 1e-9);
    let err = sillage_bearing_decoder::geometry::angle_diff(b.bearing, theta).abs();
    assert!(err < 1e-4, "compensated: {} deg", b.bearing / DEG);
    let (b, air) = run(false);
    assert!(!air.compensated);
    let off = sillage_bearing_decoder::geometry::angle_diff(b.bearing, theta).abs();
    assert!(off > 45.0 * DEG, "uncompensated is far off: {} deg", b.bearing / DEG);
}

fn chem(t: Nanos, left: f64, right: f64) -> ChemSample {
    ChemSample { header: Header::new(t, "chem"), channels: vec!["left".into(), "right".into()], values: vec![left, right], quantity: ChemSample::RELATIVE }
}

fn relative_params() -> Params {
    let mut p = event_params();
    p.amplitude.conditioning.baseline_time_constant = 0.0; // RELATIVE values are responses already
    p.amplitude.conditioning.stuck_time = 0.0;
    p
}

#[test]
fn amplitude_alone_and_fused_with_timing() {
    let mut d = Drive::new(relative_params());
    d.send(0, IN_WIND, wind(25.0 * DEG, 0.5, ""));
    let mut t = 0;
    for k in 0..300 {
        t = k * 10 * MS;
        d.send(t, IN_CHEM, chem(t, 0.30, 0.20)); // left stronger: contrast 0.2
    }
    let b = d.tick(t);
    assert_eq!(b.cue, OdorBearing::AMPLITUDE, "{b:?}");
    assert!(b.lag.is_nan());
    let want = (0.2f64 / 0.5).asin(); // contrast / saturation, front candidate (wind ahead-left)
    assert!((b.bearing - want).abs() < 1e-6, "{} vs {}", b.bearing / DEG, want / DEG);
    // Add timing evidence for 30 deg: both cues agree, the answer is fused between them.
    let t = d.pulses(t, 8, 0.2, 0, 1);
    for k in 0..20 {
        d.send(t + k * 10 * MS, IN_CHEM, chem(t + k * 10 * MS, 0.30, 0.20));
    }
    d.send(t, IN_WIND, wind(25.0 * DEG, 0.5, ""));
    let b = d.tick(t + 190 * MS);
    assert_eq!(b.cue, OdorBearing::FUSED, "{b:?}");
    assert!(b.bearing > want && b.bearing < 30.0 * DEG + 1e-6, "{}", b.bearing / DEG);
    assert!((b.lag - 0.2).abs() < 1e-6);
}

#[test]
fn amplitude_from_mox_resistance_through_the_default_conditioning() {
    // Default conditioning: log-conductance minus a slow baseline. 10 s of clean air at
    // 10 kOhm, then the left sensor falls to 7 kOhm and the right to 9 kOhm: responses
    // ln(10/7) = 0.357 and ln(10/9) = 0.105, contrast 0.545 > saturation 0.5: fully left.
    let mut d = Drive::new(event_params());
    d.send(0, IN_WIND, wind(0.0, 0.5, ""));
    let sample = |t: Nanos, l: f64, r: f64| ChemSample {
        header: Header::new(t, "chem"),
        channels: vec!["left".into(), "right".into()],
        values: vec![l, r],
        quantity: ChemSample::RESISTANCE,
    };
    let mut t = 0;
    for k in 0..1500 {
        t = k * 10 * MS;
        let (l, r) = if t < 10 * S { (10e3, 10e3) } else { (7e3, 9e3) };
        d.send(t, IN_CHEM, sample(t, l, r));
    }
    d.send(t, IN_WIND, wind(0.0, 0.5, ""));
    let b = d.tick(t);
    assert_eq!(b.cue, OdorBearing::AMPLITUDE, "{b:?}");
    assert!((b.bearing - 90.0 * DEG).abs() < 1e-6, "{}", b.bearing / DEG);
    let a = d.node.last_estimate().and_then(|e| e.amplitude).expect("amplitude on").expect("cue");
    assert!((a.contrast.y - 0.545).abs() < 0.01, "{a:?}");
    assert_eq!(d.node.warnings().total(), 0);
}

#[test]
fn bad_input_is_counted_and_says_none_without_panicking() {
    let mut d = Drive::new(event_params());
    // Out of order on one channel, bad polarity.
    d.send(2 * S, IN_ODOR_EVENTS, events(&[(2 * S, 0, 1)]));
    d.send(2 * S, IN_ODOR_EVENTS, events(&[(S, 0, -1), (2 * S, 1, 5)]));
    assert_eq!(d.node.warnings().count("out_of_order"), 1);
    assert_eq!(d.node.warnings().count("bad_polarity"), 1);
    // NaN wind: no timing bearing although the onsets are good.
    let t = d.pulses(3 * S, 8, 0.1, 0, 1);
    d.send(t, IN_WIND, wind(f64::NAN, 0.5, ""));
    assert_eq!(d.tick(t).cue, OdorBearing::NONE);
    assert_eq!(d.node.warnings().count("non_finite_wind"), 1);
    // Zero wind: still air, no timing bearing either.
    d.send(t + MS, IN_WIND, wind(0.0, 0.0, ""));
    assert_eq!(d.tick(t + MS).cue, OdorBearing::NONE);
    assert_eq!(d.node.warnings().count("still_air"), 1);
    // A wind frame that cannot be turned into base_link, NaN odometry, a malformed chem sample.
    d.send(t, IN_WIND, wind(0.0, 0.5, "map"));
    let mut odom = Odometry::default();
    odom.twist.twist.angular.z = f64::INFINITY;
    d.send(t, IN_ODOM, odom);
    let mut c = chem(t, 1.0, 1.0);
    c.values.pop();
    d.send(t, IN_CHEM, c);
    let mut c = chem(t, 1.0, f64::NAN);
    c.quantity = ChemSample::RELATIVE;
    d.send(t, IN_CHEM, c);
    for k in ["wind_frame", "non_finite_odom", "chem_shape", "chem_value"] {
        assert_eq!(d.node.warnings().count(k), 1, "{k}");
    }
    // Diagnostics: WARN with the latest warning, counters listed.
    let mut st = Vec::new();
    d.node.diagnostics(t, &mut st);
    assert_eq!(st.len(), 1);
    assert_eq!(st[0].name, "bearing_decoder: bearing");
    assert_eq!(st[0].level, DiagnosticStatus::WARN);
    assert!(st[0].message.contains("chem: channel 1"), "{}", st[0].message);
    let value = |k: &str| st[0].values.iter().find(|v| v.key == k).map(|v| v.value.clone());
    assert_eq!(value("out_of_order").as_deref(), Some("1"));
    assert_eq!(value("cue").as_deref(), Some("NONE"));
    // Much later with no new warnings: OK.
    let mut st = Vec::new();
    d.node.diagnostics(t + 60 * S, &mut st);
    assert_eq!(st[0].level, DiagnosticStatus::OK);
}

#[test]
fn a_planar_array_with_one_silent_sensor_warns_singular() {
    let mut d = Drive::new(event_params().with_sensors(&TRIANGLE));
    let t = d.pulses(100 * MS, 8, 0.1, 0, 1); // the front sensor never fires
    assert_eq!(d.tick(t).cue, OdorBearing::NONE);
    assert!(d.node.warnings().count("singular_fit") > 0);
}

#[test]
fn bad_parameters_are_refused_with_the_key() {
    let mut p = event_params();
    p.sensors.y = vec![0.1, 0.1];
    let e = BearingDecoder::new(p).expect_err("coincident sensors");
    assert_eq!(e.key(), "sensors.y");
    assert!(e.to_string().contains("coincident"), "{e}");
    let mut p = event_params();
    p.sensors.names = vec!["a".into(), "b".into(), "c".into()];
    p.sensors.x = vec![0.0, 0.1, 0.2];
    p.sensors.y = vec![0.0, 0.0, 0.0];
    p.channel_names = p.sensors.names.clone();
    let e = BearingDecoder::new(p).expect_err("collinear");
    assert!(e.to_string().contains("collinear"), "{e}");
}

#[test]
fn parameter_changes_keep_the_evidence_or_are_refused() {
    let mut d = Drive::new(event_params());
    d.send(0, IN_WIND, wind(20.0 * DEG, 0.5, ""));
    let t = d.pulses(100 * MS, 8, 0.2, 0, 1);
    let v: serde_yaml::Value = serde_yaml::from_str("timing: {bearing_spread: 0.2}").expect("yaml");
    d.node.set_params_yaml(&v).expect("valid change");
    assert_eq!(d.node.params().timing.bearing_spread, 0.2);
    d.send(t, IN_WIND, wind(20.0 * DEG, 0.5, ""));
    assert_eq!(d.tick(t).cue, OdorBearing::TIMING, "onsets kept across the change");
    let bad: serde_yaml::Value = serde_yaml::from_str("wind: {min_speed: -1.0}").expect("yaml");
    let e = d.node.set_params_yaml(&bad).expect_err("refused");
    assert_eq!(e.key(), "wind.min_speed");
    assert_eq!(d.node.params().wind.min_speed, sillage_air::DEFAULT_MIN_SPEED, "old values kept");
    let yaml = d.node.params_yaml();
    assert_eq!(yaml["timing"]["bearing_spread"], serde_yaml::Value::from(0.2));
}

/// Arbitrary input sequences.
#[derive(Debug, Clone)]
enum Op {
    Ev(i64, u16, i8),
    Wind(f64, f64, u8),
    Chem(Vec<f64>, u8, u8),
    Odom(f64, f64, f64),
    Tick,
}

fn op() -> impl Strategy<Value = Op> {
    let num = prop_oneof![-5.0f64..5.0, Just(f64::NAN), Just(f64::INFINITY), Just(0.0)];
    prop_oneof![
        4 => (0i64..3_000, 0u16..4, prop_oneof![Just(1i8), Just(-1i8), any::<i8>()]).prop_map(|(t, c, p)| Op::Ev(t, c, p)),
        1 => (num.clone(), num.clone(), 0u8..3).prop_map(|(x, y, f)| Op::Wind(x, y, f)),
        1 => (proptest::collection::vec(num.clone(), 0..4), 0u8..6, 0u8..3).prop_map(|(v, q, n)| Op::Chem(v, q, n)),
        1 => (num.clone(), num.clone(), num).prop_map(|(x, y, w)| Op::Odom(x, y, w)),
        1 => Just(Op::Tick),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]
    #[test]
    fn any_input_gives_well_formed_output(ops in proptest::collection::vec(op(), 1..200), triangle in any::<bool>()) {
        let mut p = relative_params();
        if triangle {
            p = p.with_sensors(&TRIANGLE);
        }
        let mut d = Drive::new(p);
        let mut now = 0;
        for o in ops {
            now += 7 * MS;
            match o {
                Op::Ev(dt, c, pol) => d.send(now, IN_ODOR_EVENTS, events(&[(now - dt * MS, c, pol)])),
                Op::Wind(x, y, f) => {
                    let frame = ["", "base_link", "odom"][f as usize];
                    d.send(now, IN_WIND, Vector3Stamped { header: Header::new(now, frame), vector: Vector3 { x, y, z: 0.0 } });
                }
                Op::Chem(values, q, n) => {
                    let names = ["left", "right", "front"][..n as usize].iter().map(|s| s.to_string()).collect();
                    d.send(now, IN_CHEM, ChemSample { header: Header::new(now, ""), channels: names, values, quantity: q });
                }
                Op::Odom(x, y, w) => {
                    let mut o = Odometry::default();
                    o.header.frame_id = "odom".into();
                    o.twist.twist.linear = Vector3 { x, y, z: 0.0 };
                    o.twist.twist.angular.z = w;
                    d.send(now, IN_ODOM, o);
                }
                Op::Tick => { d.tick(now); }
            }
        }
        d.tick(now);
        for (_, b) in &d.published {
            prop_assert!((0.0..=1.0).contains(&b.confidence), "{b:?}");
            prop_assert_eq!(b.cue == OdorBearing::NONE, b.bearing.is_nan(), "{:?}", b);
            prop_assert!(b.cue <= OdorBearing::NONE);
            prop_assert!(b.bearing.is_nan() || b.bearing.abs() <= std::f64::consts::PI + 1e-12);
        }
        let mut st = Vec::new();
        d.node.diagnostics(now, &mut st);
        prop_assert_eq!(st.len(), 1);
    }
}
