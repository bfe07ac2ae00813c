//! Per-sample cost of the event encoder.
//!
//! - `channel_step/*`: one sample of one channel through [`Channel::step`] (conditioning +
//!   encoding), MOX resistance with the default log-conductance transform and baseline, on a
//!   slowly varying signal that crosses a level every few samples (target: well under 100 ns);
//! - `node_sample/4ch`: one ChemSample of 4 channels through the whole node core;
//! - `reference/ln_plus_exp`: one `ln` and one `exp`, to put the figures in scale on a loaded
//!   machine.

use criterion::{criterion_group, criterion_main, Criterion};
use sillage_core::msg::{ChemSample, Header};
use sillage_core::{Msg, NodeCore, Outbox};
use sillage_event_encoder::conditioning::{ConditioningParams, Transform};
use sillage_event_encoder::encoding::{EncodingParams, Mode};
use sillage_event_encoder::{Channel, EventEncoder, Params};
use std::hint::black_box;

const PERIOD: i64 = 10_000_000; // 100 Hz

/// A MOX resistance that wanders between about 6 and 10 kohm.
fn mox(k: i64) -> f64 {
    let s = k as f64 * 0.01;
    8_000.0 + 2_000.0 * (0.7 * s).sin() + 150.0 * (13.0 * s).sin()
}

fn bench_channel(c: &mut Criterion, name: &str, cp: ConditioningParams, ep: EncodingParams) {
    let mut ch = Channel::new(&cp, &ep, 1.0);
    ch.set_quantity(ChemSample::RESISTANCE);
    let mut out = Vec::with_capacity(64);
    let mut k = 0i64;
    for _ in 0..10_000 {
        out.clear();
        let _ = ch.step(k * PERIOD, mox(k), &mut out);
        k += 1;
    }
    // Precomputed inputs so the bench times the step, not the signal.
    let inputs: Vec<f64> = (0..4096).map(|i| mox(k + i)).collect();
    c.bench_function(name, |b| {
        b.iter(|| {
            out.clear();
            let raw = inputs[(k & 4095) as usize];
            let r = ch.step(black_box(k * PERIOD), black_box(raw), &mut out);
            k += 1;
            black_box(r)
        })
    });
}

fn channel_step(c: &mut Criterion) {
    bench_channel(c, "channel_step/log_conductance_send_on_delta", ConditioningParams::default(), EncodingParams::default());
    let cp = ConditioningParams { transform: Transform::R0Ratio, ..ConditioningParams::default() };
    let ep = EncodingParams { mode: Mode::LevelCrossing, hysteresis: 0.2, delta: 0.02, ..EncodingParams::default() };
    bench_channel(c, "channel_step/r0_ratio_level_crossing", cp, ep);
}

fn node_sample(c: &mut Criterion) {
    let mut e = EventEncoder::new(Params::default()).expect("valid defaults");
    let names: Vec<String> = ["front_left", "front_right", "rear_left", "rear_right"].iter().map(|s| s.to_string()).collect();
    let mut out = Outbox::new();
    let mut k = 0i64;
    let mut msg = Msg::ChemSample(ChemSample {
        header: Header::new(0, "chem_board"),
        channels: names,
        values: vec![0.0; 4],
        quantity: ChemSample::RESISTANCE,
    });
    let inputs: Vec<f64> = (0..4096).map(mox).collect();
    c.bench_function("node_sample/4ch", |b| {
        b.iter(|| {
            if let Msg::ChemSample(s) = &mut msg {
                s.header.stamp = sillage_core::msg::Time::from_nanos(k * PERIOD);
                for (i, v) in s.values.iter_mut().enumerate() {
                    *v = inputs[((k + 37 * i as i64) & 4095) as usize];
                }
            }
            e.on_message(k * PERIOD, 0, black_box(&msg), &mut out);
            out.drain().for_each(drop);
            k += 1;
        })
    });
}

/// Scale on a loaded machine: one `ln` and one `exp` of changing arguments.
fn reference(c: &mut Criterion) {
    let mut x = 1.5f64;
    c.bench_function("reference/ln_plus_exp", |b| {
        b.iter(|| {
            x = black_box(x) + 1e-9;
            black_box(x.ln() + (-x).exp())
        })
    });
}

criterion_group!(benches, channel_step, node_sample, reference);
criterion_main!(benches);
