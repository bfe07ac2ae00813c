//! Message-level tests of the node core.

use super::*;
use sillage_core::msg::{ChemSample, DiagnosticStatus, Header, OdorEventArray};
use sillage_core::{Msg, Nanos, NodeCore, Outbox};

const MS: Nanos = 1_000_000;
const S: Nanos = 1_000_000_000;

fn sample(t: Nanos, names: &[&str], values: &[f64], quantity: u8) -> ChemSample {
    ChemSample {
        header: Header::new(t, "chem_board"),
        channels: names.iter().map(|s| s.to_string()).collect(),
        values: values.to_vec(),
        quantity,
    }
}

/// The arrays with events a sample produced (heartbeat arrays, which are empty, left out).
fn feed(e: &mut EventEncoder, s: ChemSample) -> Vec<OdorEventArray> {
    feed_all(e, s).into_iter().filter(|a| !a.events.is_empty()).collect()
}

/// Every array a sample produced, heartbeats included.
fn feed_all(e: &mut EventEncoder, s: ChemSample) -> Vec<OdorEventArray> {
    let mut out = Outbox::new();
    let t = s.header.stamp.to_nanos();
    e.on_message(t, 0, &Msg::ChemSample(s), &mut out);
    out.drain()
        .map(|(port, m)| {
            assert_eq!(port, 0);
            match m {
                Msg::OdorEventArray(a) => a,
                other => panic!("unexpected output {other:?}"),
            }
        })
        .collect()
}

fn concentration_encoder() -> EventEncoder {
    let mut p = Params::default();
    p.conditioning.baseline_time_constant = 0.0;
    p.encoding.delta = 0.1;
    EventEncoder::new(p).expect("valid")
}

fn diag(e: &EventEncoder, now: Nanos, part: &str) -> DiagnosticStatus {
    let mut out = Vec::new();
    e.diagnostics(now, &mut out);
    out.into_iter().find(|d| d.name == format!("event_encoder: {part}")).unwrap_or_else(|| panic!("no status for {part}"))
}

fn value<'a>(d: &'a DiagnosticStatus, key: &str) -> &'a str {
    d.values.iter().find(|kv| kv.key == key).map(|kv| kv.value.as_str()).unwrap_or_else(|| panic!("no {key} in {d:?}"))
}

const PPM: u8 = ChemSample::CONCENTRATION;

#[test]
fn events_carry_the_index_in_the_current_channels_array() {
    let mut e = concentration_encoder();
    feed(&mut e, sample(0, &["left", "right"], &[0.0, 0.0], PPM));
    let a = feed(&mut e, sample(100 * MS, &["left", "right"], &[0.25, 0.0], PPM));
    assert_eq!(a.len(), 1);
    assert_eq!(a[0].header.stamp.to_nanos(), 100 * MS);
    assert_eq!(a[0].header.frame_id, "chem_board");
    assert!(a[0].events.iter().all(|ev| ev.channel == 0));
    assert_eq!(a[0].events.len(), 2);
    // The board swaps the order: "left" is now index 1 and keeps its reference (0.2).
    let a = feed(&mut e, sample(200 * MS, &["right", "left"], &[0.0, 0.31], PPM));
    assert_eq!(a[0].events.len(), 1);
    assert_eq!(a[0].events[0].channel, 1);
    assert!((a[0].events[0].level - 0.3).abs() < 1e-12);
    assert_eq!(e.counts().channel_set_changes, 1);
    // No events: no message.
    assert!(feed(&mut e, sample(300 * MS, &["right", "left"], &[0.0, 0.31], PPM)).is_empty());
}

#[test]
fn events_of_all_channels_are_sorted_by_stamp() {
    let mut e = concentration_encoder();
    feed(&mut e, sample(0, &["a", "b"], &[0.0, 0.0], PPM));
    let a = feed(&mut e, sample(100 * MS, &["a", "b"], &[0.45, 0.35], PPM));
    let stamps: Vec<Nanos> = a[0].events.iter().map(|ev| ev.stamp.to_nanos()).collect();
    assert!(stamps.windows(2).all(|w| w[0] <= w[1]), "{stamps:?}");
    assert_eq!(a[0].events.len(), 4 + 3);
    assert_eq!(a[0].events.iter().filter(|ev| ev.channel == 1).count(), 3);
}

#[test]
fn old_samples_are_dropped_and_large_jumps_back_reset() {
    let mut e = concentration_encoder();
    feed(&mut e, sample(10 * S, &["a"], &[0.0], PPM));
    feed(&mut e, sample(10 * S + 100 * MS, &["a"], &[0.15], PPM));
    // 50 ms back (< backward_reset = 1 s): dropped, counted, no events.
    assert!(feed(&mut e, sample(10 * S + 50 * MS, &["a"], &[5.0], PPM)).is_empty());
    // Same stamp again: dropped too.
    assert!(feed(&mut e, sample(10 * S + 100 * MS, &["a"], &[5.0], PPM)).is_empty());
    assert_eq!(e.counts().dropped_old, 2);
    let w = e.take_warnings();
    assert_eq!(w.len(), 1, "rate-limited: {w:?}");
    assert!(w[0].contains("not newer"), "{w:?}");
    // The state survived: the next rise from 0.1 fires at 0.2.
    let a = feed(&mut e, sample(10 * S + 200 * MS, &["a"], &[0.22], PPM));
    assert_eq!(a[0].events.len(), 1);
    // A bag loop: 10 s back resets the channel, the new first sample is the reference.
    assert!(feed(&mut e, sample(100 * MS, &["a"], &[3.0], PPM)).is_empty());
    assert_eq!(e.counts().backward_resets, 1);
    let a = feed(&mut e, sample(200 * MS, &["a"], &[3.1], PPM));
    assert!((a[0].events[0].level - 3.1).abs() < 1e-12);
}

#[test]
fn bad_input_is_rejected_counted_and_nothing_encoded_is_lost() {
    let mut e = concentration_encoder();
    feed(&mut e, sample(0, &["a", "b"], &[0.0, 0.0], PPM));
    feed(&mut e, sample(100 * MS, &["a", "b"], &[0.15, 0.0], PPM));
    let before = e.channel("a").cloned();
    // Length mismatch and unknown quantity: the whole sample goes.
    assert!(feed(&mut e, sample(200 * MS, &["a", "b"], &[0.9], PPM)).is_empty());
    assert!(feed(&mut e, sample(300 * MS, &["a", "b"], &[0.9, 0.9], 42)).is_empty());
    assert_eq!(e.counts().rejected_samples(), 2);
    assert_eq!(e.channel("a").cloned(), before, "rejected samples change no channel");
    // NaN and inf on one channel: only that value goes, the other channel still encodes.
    let a = feed(&mut e, sample(400 * MS, &["a", "b"], &[f64::NAN, 0.25], PPM));
    assert_eq!(a[0].events.len(), 2);
    assert!(a[0].events.iter().all(|ev| ev.channel == 1));
    assert!(feed(&mut e, sample(500 * MS, &["a", "b"], &[f64::INFINITY, 0.25], PPM)).is_empty());
    assert_eq!(e.channel("a").map(|c| c.counts().rejected[0]), Some(2));
    let d = diag(&e, 500 * MS, "a");
    assert_eq!(d.level, DiagnosticStatus::WARN);
    assert!(d.message.contains("not finite"), "{}", d.message);
    // Negative and zero resistance on a MOX channel.
    let mut m = EventEncoder::new(Params::default()).expect("valid");
    feed(&mut m, sample(0, &["mox"], &[10_000.0], ChemSample::RESISTANCE));
    for (k, bad) in [-5.0, 0.0].into_iter().enumerate() {
        assert!(feed(&mut m, sample((k as i64 + 1) * S, &["mox"], &[bad], ChemSample::RESISTANCE)).is_empty());
    }
    assert_eq!(m.channel("mox").map(|c| c.counts().rejected[1]), Some(2));
    assert_eq!(m.counts().rejected_values, 2);
    // Empty and repeated names: those entries are rejected, the rest is encoded.
    let a = feed(&mut e, sample(600 * MS, &["a", "", "b", "a"], &[0.1, 1.0, 0.35, 9.0], PPM));
    assert_eq!(a[0].events.len(), 1, "b rises to 0.3 (index 2)");
    assert_eq!(a[0].events[0].channel, 2);
    let input = diag(&e, 600 * MS, "input");
    assert_eq!(input.level, DiagnosticStatus::WARN);
    let w = e.take_warnings().join("\n");
    assert!(w.contains("2 channel names but 1 values"), "{w}");
    // One warning per kind per warn_interval (10 s): the unknown quantity was held back, but
    // the input status names the last problem.
    assert!(!w.contains("unknown quantity"), "{w}");
    assert!(w.contains("value NaN is not finite"), "{w}");
    assert_eq!(e.counts().rejected_values, 2 + 2, "NaN, inf, empty name, repeated name");
    assert!(input.message.contains("repeats channels[0]"), "{}", input.message);
}

#[test]
fn channel_set_changes_are_handled_and_reported() {
    let mut e = concentration_encoder();
    feed(&mut e, sample(0, &["left", "right"], &[0.0, 0.0], PPM));
    feed(&mut e, sample(100 * MS, &["left", "right", "rear"], &[0.0, 0.0, 1.0], PPM));
    feed(&mut e, sample(200 * MS, &["rear"], &[1.0], PPM));
    assert_eq!(e.counts().channel_set_changes, 2);
    let input = diag(&e, 200 * MS, "input");
    assert!(value(&input, "last_channel_set_change").contains("channels removed: left, right"));
    assert_eq!(value(&input, "channels"), "rear");
    let left = diag(&e, 200 * MS, "left");
    assert_eq!(left.level, DiagnosticStatus::STALE);
    assert!(left.message.contains("not in the current channel set"));
    let w = e.take_warnings().join("\n");
    assert!(w.contains("channels added: rear"), "{w}");
}

#[test]
fn diagnostics_say_stale_ok_saturated_and_dead() {
    let mut p = Params::default();
    p.conditioning.rail_low = 0.0;
    p.conditioning.rail_high = 4.0;
    p.conditioning.stuck_time = 1.0;
    p.stale_timeout = 0.5;
    let mut e = EventEncoder::new(p).expect("valid");
    assert_eq!(diag(&e, 0, "input").level, DiagnosticStatus::STALE);
    let volts = ChemSample::VOLTAGE;
    for k in 0..5 {
        feed(&mut e, sample(k * 100 * MS, &["ok", "rail", "stuck"], &[1.0 + k as f64 * 0.01, 4.0, 2.0], volts));
    }
    assert_eq!(diag(&e, 400 * MS, "ok").level, DiagnosticStatus::OK);
    assert_eq!(diag(&e, 400 * MS, "ok").message, "ok");
    assert!(diag(&e, 400 * MS, "rail").message.starts_with("saturated"));
    for k in 5..=12 {
        feed(&mut e, sample(k * 100 * MS, &["ok", "rail", "stuck"], &[1.0 + k as f64 * 0.01, 3.0, 2.0], volts));
    }
    let stuck = diag(&e, 1200 * MS, "stuck");
    assert_eq!(stuck.level, DiagnosticStatus::ERROR);
    assert!(stuck.message.starts_with("dead"), "{}", stuck.message);
    assert_eq!(value(&stuck, "status"), "dead");
    // No sample for 1 s > stale_timeout.
    let ok = diag(&e, 2200 * MS, "ok");
    assert_eq!(ok.level, DiagnosticStatus::STALE);
    assert!(ok.message.contains("no sample for 1.0 s"), "{}", ok.message);
    assert_eq!(diag(&e, 2200 * MS, "input").level, DiagnosticStatus::STALE);
    assert_eq!(value(&ok, "accepted"), "13");
}

#[test]
fn per_channel_overrides_and_runtime_parameter_changes() {
    let text = "event_encoder:\n  ros__parameters:\n    conditioning.baseline_time_constant: 0.0\n    encoding.delta: 0.1\n    channels.fine.delta: 0.01\n";
    let p: Params = sillage_core::params::load_str(text, "p.yaml", "/event_encoder").expect("loads");
    let mut e = EventEncoder::new(p).expect("valid");
    feed(&mut e, sample(0, &["coarse", "fine"], &[0.0, 0.0], PPM));
    let a = feed(&mut e, sample(100 * MS, &["coarse", "fine"], &[0.105, 0.105], PPM));
    let per = |i: u16| a[0].events.iter().filter(|ev| ev.channel == i).count();
    assert_eq!((per(0), per(1)), (1, 10));
    // A bad run-time change is refused and the old values stay.
    let bad = sillage_core::params::set_key(&e.params_yaml(), "encoding.delta", serde_yaml::Value::from(-1.0));
    assert!(e.set_params_yaml(&bad).is_err());
    assert_eq!(e.params().encoding.delta, 0.1);
    let good = sillage_core::params::set_key(&e.params_yaml(), "channels.coarse.delta", serde_yaml::Value::from(0.05));
    e.set_params_yaml(&good).expect("valid");
    let a = feed(&mut e, sample(200 * MS, &["coarse", "fine"], &[0.2, 0.105], PPM));
    assert_eq!(a[0].events.len(), 2, "coarse now steps 0.05 from its reference 0.1");
}

#[test]
fn the_stack_builds_the_node_from_the_shipped_file() {
    let text = include_str!("../../../config/event_encoder.yaml");
    let p: Params = sillage_core::params::load_str(text, "event_encoder.yaml", "/robot1/event_encoder").expect("loads");
    let e = EventEncoder::new(p).expect("valid");
    assert_eq!(e.name(), NODE_NAME);
    assert_eq!(e.inputs()[0].type_name, "sillage_msgs/msg/ChemSample");
    assert_eq!(e.outputs()[0].type_name, "sillage_msgs/msg/OdorEventArray");
    assert!(e.timers().is_empty());
}

#[test]
fn quiet_channels_send_empty_heartbeat_arrays_at_the_set_period() {
    // 100 Hz of a constant signal for 2 s: no crossings, so only heartbeats (every 0.25 s of
    // sample time, the first sample included) go out.
    let mut e = concentration_encoder();
    let mut arrays = Vec::new();
    for k in 0..200i64 {
        arrays.extend(feed_all(&mut e, sample(k * 10 * MS, &["a"], &[0.5], PPM)));
    }
    assert!(arrays.iter().all(|a| a.events.is_empty()));
    assert_eq!(arrays.len(), 8, "t = 0, 0.25, ..., 1.75 s");
    let stamps: Vec<Nanos> = arrays.iter().map(|a| a.header.stamp.to_nanos()).collect();
    assert!(stamps.windows(2).all(|w| w[1] - w[0] == 250 * MS), "{stamps:?}");
    // Off: nothing at all.
    let mut p = e.params().clone();
    p.heartbeat = 0.0;
    let mut quiet = EventEncoder::new(p).expect("valid");
    let n: usize = (0..200i64).map(|k| feed_all(&mut quiet, sample(k * 10 * MS, &["a"], &[0.5], PPM)).len()).sum();
    assert_eq!(n, 0);
}
