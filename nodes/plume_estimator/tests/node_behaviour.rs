//! The node core's contract: fixed-rate output through the in-process executor, bad input
//! counted and diagnosed (never a panic), irregular stamps and gaps, run-time parameters.

use proptest::prelude::*;
use sillage_core::executor::{Executor, Record};
use sillage_core::msg::{ChemSample, DiagnosticStatus, Header, PlumeFeatures};
use sillage_core::params::load_str;
use sillage_core::{Msg, Nanos, NodeCore, Outbox};
use sillage_plume_estimator::params::ThresholdMode;
use sillage_plume_estimator::{Params, PlumeEstimator, NODE_NAME};

const T0: Nanos = 1_000_000_000_000;
const MS: Nanos = 1_000_000;

fn chem(t: Nanos, names: &[&str], values: &[f64], quantity: u8) -> Msg {
    Msg::ChemSample(ChemSample {
        header: Header::new(t, "nose"),
        channels: names.iter().map(|s| s.to_string()).collect(),
        values: values.to_vec(),
        quantity,
    })
}

/// A clean-air signal with a square pulse of gas every `every` seconds after 6 s (RELATIVE
/// units, so conditioning passes it through).
fn signal(t: f64, every: f64) -> f64 {
    let noise = 1e-4 * ((t * 97.0).sin() + (t * 331.0).cos());
    let pulse = if t > 6.0 && (t - 6.0) % every < 0.2 { 1.0 } else { 0.0 };
    1.0 + 0.05 * pulse + noise
}

fn relative_params() -> Params {
    let mut p = Params::default();
    p.conditioning.baseline_time_constant = 0.0;
    p
}

fn find<'a>(d: &'a [DiagnosticStatus], name: &str) -> &'a DiagnosticStatus {
    d.iter().find(|s| s.name == name).unwrap_or_else(|| panic!("no status '{name}' in {:?}", d.iter().map(|s| &s.name).collect::<Vec<_>>()))
}

fn value<'a>(s: &'a DiagnosticStatus, key: &str) -> &'a str {
    s.values.iter().find(|kv| kv.key == key).map(|kv| kv.value.as_str()).unwrap_or_else(|| panic!("no value '{key}' in {}", s.name))
}

#[test]
fn publishes_at_the_step_rate_through_the_executor() {
    let mut ex = Executor::new();
    ex.add(Box::new(PlumeEstimator::new(relative_params()).expect("params"))).expect("adds");
    let mut features: Vec<(Nanos, PlumeFeatures)> = Vec::new();
    let mut sink = |r: &Record| {
        if let Msg::PlumeFeatures(f) = r.msg {
            features.push((r.stamp, f.clone()));
        }
    };
    for k in 0..3000 {
        // 100 Hz for 30 s, pulses every 2 s.
        let t = T0 + k * 10 * MS;
        ex.run_until(t, &mut sink).expect("runs");
        ex.inject(t, "/chem", chem(t, &["left", "right"], &[signal(k as f64 * 0.01, 2.0), signal(k as f64 * 0.01 + 0.05, 2.0)], 4)).expect("injects");
    }
    ex.run_until(T0 + 30_000 * MS, &mut sink).expect("runs");
    // A tick every 0.5 s from the first input: 60 in 30 s, stamped on the tick.
    assert_eq!(features.len(), 60);
    assert!(features.iter().enumerate().all(|(i, (t, f))| *t == T0 + (i as Nanos + 1) * 500 * MS && f.header.stamp.to_nanos() == *t));
    assert!(features.iter().all(|(_, f)| f.window == 20.0 && f.distance.is_nan()), "uncalibrated: NaN distance");
    // Early on there is too little valid data (learning, then half a window): NaN rates.
    assert!(features[5].1.bout_rate.is_nan());
    // At the end: 20 s window, pulses every 2 s since 6 s -> about 10 bouts per channel.
    let last = &features.last().expect("some").1;
    assert!((9..=11).contains(&last.bouts), "bouts {}", last.bouts);
    assert!((last.bout_rate - 0.5).abs() < 0.06, "rate {}", last.bout_rate);
    assert!(last.intermittency > 0.0 && last.intermittency < 0.5, "intermittency {}", last.intermittency);
    assert!(last.bout_amplitude > 0.0);
    assert!(last.edge_index >= 0.0 && last.edge_index < 0.5, "regular pulses vary little: {}", last.edge_index);
}

fn feed(node: &mut PlumeEstimator, msgs: impl IntoIterator<Item = (Nanos, Msg)>) {
    let mut out = Outbox::new();
    for (now, m) in msgs {
        node.on_message(now, 0, &m, &mut out);
    }
}

#[test]
fn bad_input_is_counted_and_diagnosed() {
    let mut p = relative_params();
    p.input.max_age = 0.5;
    p.input.sample_rate = 100.0;
    p.input.max_channels = 2;
    let mut node = PlumeEstimator::new(p).expect("params");
    let ab = ["a", "b"];
    let mut msgs = Vec::new();
    for k in 0..100 {
        let t = T0 + k * 10 * MS;
        msgs.push((t, chem(t, &ab, &[1.0, 1.0], 4)));
    }
    let t = T0 + 1000 * MS;
    msgs.extend([
        (t, chem(t, &ab, &[f64::NAN, 1.0], 4)),                              // bad value (a)
        (t + 10 * MS, chem(t + 10 * MS, &ab, &[1.0, f64::INFINITY], 4)),     // bad value (b)
        (t + 20 * MS, chem(t + 5 * MS, &ab, &[1.0, 1.0], 4)),                // out of order
        (t + 30 * MS, chem(t + 10 * MS, &ab, &[1.0, 1.0], 4)),               // duplicate stamp
        (t + 2000 * MS, chem(t + 30 * MS, &ab, &[1.0, 1.0], 4)),             // stale (2 s old)
        (t + 2040 * MS, chem(t + 2040 * MS, &ab, &[1.0], 4)),                // malformed
        (t + 2050 * MS, chem(t + 2050 * MS, &ab, &[1.0, 1.0], 9)),           // unknown quantity x2
        (t + 2060 * MS, chem(t + 2060 * MS, &["a", "b", "c"], &[1.0, 1.0, 1.0], 4)), // too many
    ]);
    feed(&mut node, msgs);
    let c = *node.counts();
    assert_eq!((c.received, c.out_of_order, c.stale, c.malformed), (108, 2, 1, 1));
    assert_eq!(c.bad_values, 4, "NaN, inf and two unknown-quantity values");
    assert_eq!((c.too_many_channels, c.layout_changes), (1, 0), "a, b, c keeps the first two channels");
    let ins = node.inputs();
    assert_eq!((ins[0].faults[0], ins[1].faults[0], ins[0].faults[2]), (1, 1, 1), "non_finite a, b; unknown_quantity a");

    let mut d = Vec::new();
    node.diagnostics(t + 2070 * MS, &mut d);
    let input = find(&d, "plume_estimator: input");
    assert_eq!(input.level, DiagnosticStatus::WARN, "{}", input.message);
    assert_eq!(value(input, "out_of_order"), "2");
    assert_eq!(value(input, "stale"), "1");
    let a = find(&d, "plume_estimator: channel a");
    assert_eq!(value(a, "non_finite"), "1");
    assert_eq!(value(a, "last_skip"), "unknown_quantity");
    find(&d, "plume_estimator: channel b");
    find(&d, "plume_estimator: distance");
    // Much later with no input: STALE.
    let mut d = Vec::new();
    node.diagnostics(t + 10_000 * MS, &mut d);
    assert_eq!(find(&d, "plume_estimator: input").level, DiagnosticStatus::STALE);

    // A new layout rebuilds the channels.
    let t2 = t + 11_000 * MS;
    feed(&mut node, [(t2, chem(t2, &["x"], &[1.0], 4))]);
    assert_eq!(node.counts().layout_changes, 1);
    assert_eq!(node.channels().iter().map(|c| c.name()).collect::<Vec<_>>(), vec!["x"]);
    // Unstamped samples take the receive time; unnamed channels get index names.
    feed(&mut node, [(t2 + 10 * MS, chem(0, &[], &[1.0], 4))]);
    assert_eq!(node.channels()[0].name(), "channel0");
}

#[test]
fn the_grid_rate_is_measured_and_gaps_restart_the_chain() {
    let mut node = PlumeEstimator::new(relative_params()).expect("params");
    // 50 Hz with +-3 ms jitter, then a 5 s gap (longer than max_gap = 1 s).
    let jitter = |k: i64| ((k * 7919) % 7 - 3) * MS;
    let mut msgs: Vec<(Nanos, Msg)> = (0..500).map(|k| T0 + k * 20 * MS + jitter(k)).map(|t| (t, chem(t, &["a"], &[1.0], 4))).collect();
    let resume = T0 + 15_000 * MS;
    msgs.extend((0..100).map(|k| resume + k * 20 * MS).map(|t| (t, chem(t, &["a"], &[1.0], 4))));
    feed(&mut node, msgs);
    let period = node.grid_period().expect("measured");
    assert!((period - 20 * MS).abs() <= 3 * MS, "median interval {period} ns");
    assert_eq!(node.counts().rate_probe, 8);
    assert_eq!(node.channels()[0].counts().restarts, 1);
}

/// Jittered stamps (up to +-40 % of the period) and dropped samples give the same bouts as a
/// regular stream: the grid interpolates them onto the design rate.
#[test]
fn irregular_stamps_give_the_same_bouts() {
    let count = |stamps: &[f64]| {
        let mut p = relative_params();
        p.input.sample_rate = 100.0;
        let mut node = PlumeEstimator::new(p).expect("params");
        feed(&mut node, stamps.iter().map(|&s| {
            let t = T0 + (s * 1e9).round() as Nanos;
            (t, chem(t, &["a"], &[signal(s, 1.3)], 4))
        }));
        node.channels()[0].counts().bouts
    };
    let regular: Vec<f64> = (0..4000).map(|k| k as f64 * 0.01).collect();
    let jittered: Vec<f64> = (0..4000).filter(|k| k % 17 != 5).map(|k| k as f64 * 0.01 + 0.004 * (((k * 7919) % 9) as f64 - 4.0) / 4.0).collect();
    let (a, b) = (count(&regular), count(&jittered));
    // Pulses every 1.3 s from 6 s to 40 s: 27 of them.
    assert!((26..=28).contains(&a), "regular: {a}");
    assert_eq!(a, b, "jittered and thinned stamps");
}

#[test]
fn a_measured_rate_too_low_for_the_filters_is_an_error_not_a_panic() {
    let mut p = relative_params();
    p.filter.kind = sillage_plume_estimator::params::FilterKind::Fir; // 2 Hz cut-off
    let mut node = PlumeEstimator::new(p).expect("params");
    feed(&mut node, (0..30).map(|k| T0 + k * 500 * MS).map(|t| (t, chem(t, &["a"], &[1.0], 4)))); // 2 Hz input
    let (key, err) = node.design_error().expect("design fails");
    assert_eq!(key, "filter.fir_cutoff");
    let mut d = Vec::new();
    node.diagnostics(T0 + 15_000 * MS, &mut d);
    let input = find(&d, "plume_estimator: input");
    assert_eq!(input.level, DiagnosticStatus::ERROR);
    assert!(input.message.contains("filter.fir_cutoff") && input.message.contains(&err.to_string()), "{}", input.message);
    let mut out = Outbox::new();
    node.on_timer(T0 + 15_000 * MS, 0, &mut out);
    assert_eq!(out.len(), 1, "still publishes (NaN features)");
}

#[test]
fn parameters_validate_change_at_run_time_and_load_from_the_default_file() {
    let bad = Params { features: sillage_plume_estimator::params::FeatureParams { window: 21.3, ..Default::default() }, ..Default::default() };
    let e = PlumeEstimator::new(bad).expect_err("window not a multiple of step");
    assert_eq!(e.key(), "features.window");
    let mut p = Params::default();
    p.input.sample_rate = 10.0; // Nyquist 5 Hz
    p.filter.lowpass = sillage_plume_estimator::params::LowPassKind::Butterworth;
    p.filter.butterworth_cutoff = 6.0;
    assert_eq!(PlumeEstimator::new(p).expect_err("cut-off above Nyquist").key(), "filter.butterworth_cutoff");

    let mut node = PlumeEstimator::new(relative_params()).expect("params");
    let set = |k: &str, v: serde_yaml::Value| sillage_core::params::set_key(&serde_yaml::Value::Null, k, v);
    node.set_params_yaml(&set("distance.calibrated", true.into())).expect("distance changes in place");
    assert!(node.params().distance.calibrated);
    let e = node.set_params_yaml(&set("features.step", 1.0.into())).expect_err("step is fixed");
    assert_eq!(e.key(), "features.step");
    let e = node.set_params_yaml(&set("bouts.noise_factor", (-1.0).into())).expect_err("range");
    assert_eq!(e.key(), "bouts.noise_factor");
    node.set_params_yaml(&set("bouts.threshold_mode", "absolute".into())).expect("rebuilds");
    assert_eq!(node.params().bouts.threshold_mode, ThresholdMode::Absolute);

    // The shipped parameter file loads as it is and equals the defaults it documents.
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../config/plume_estimator.yaml");
    let text = std::fs::read_to_string(path).expect("config/plume_estimator.yaml");
    let p: Params = load_str(&text, path, &format!("/{NODE_NAME}")).expect("loads");
    assert_eq!(p, Params::default());
    // ... and sets every parameter (so it documents every one).
    let doc: serde_yaml::Value = serde_yaml::from_str(&text).expect("yaml");
    let section = sillage_core::params::section_for(&doc, path, &format!("/{NODE_NAME}")).expect("section");
    let keys = |v: &serde_yaml::Value| sillage_core::params::flatten(v).into_iter().map(|(k, _)| k).collect::<std::collections::BTreeSet<_>>();
    let missing: Vec<String> = keys(&sillage_core::params::to_value(&Params::default())).difference(&keys(&section)).cloned().collect();
    assert!(missing.is_empty(), "config/plume_estimator.yaml lacks {missing:?}");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    /// Arbitrary message sequences (stamps jumping back and forth, any values, layouts and
    /// quantities) never panic, and published fields stay in their ranges.
    #[test]
    fn arbitrary_input_never_panics(steps in proptest::collection::vec(
        (-50i64..200, 0usize..4, proptest::collection::vec(prop_oneof![Just(f64::NAN), Just(f64::INFINITY), Just(-1.0), -1e6f64..1e6, 0.5f64..2.0], 0..4), 0u8..6, any::<bool>()),
        1..400,
    )) {
        let mut p = Params::default();
        p.bouts.learn_time = 0.2;
        p.input.max_age = 5.0;
        let mut node = PlumeEstimator::new(p).expect("params");
        let mut out = Outbox::new();
        let mut t = T0;
        let names = ["a", "b", "c", "d"];
        for (dt, n, values, quantity, tick) in steps {
            t += dt * MS;
            let now = t + (dt % 7) * 100 * MS;
            node.on_message(now, 0, &chem(t, &names[..n], &values, quantity), &mut out);
            if tick {
                node.on_timer(now, 0, &mut out);
            }
        }
        let mut d = Vec::new();
        node.diagnostics(t, &mut d);
        prop_assert!(d.iter().all(|s| s.name.starts_with("plume_estimator: ")));
        for (_, m) in out.drain() {
            let Msg::PlumeFeatures(f) = m else { panic!("only PlumeFeatures") };
            prop_assert!(f.bout_rate.is_nan() || f.bout_rate >= 0.0);
            prop_assert!(f.intermittency.is_nan() || (0.0..=1.0).contains(&f.intermittency));
            prop_assert!(f.edge_index.is_nan() || f.edge_index >= 0.0);
            prop_assert!(f.bout_amplitude.is_nan() || f.bout_amplitude > 0.0);
        }
    }
}
