//! Cost per sample per channel of the filter chain and bout tracking (target: < 200 ns), and
//! of the whole per-channel pipeline and the node (conditioning, grid, bins included).
//!
//! `cargo bench -p sillage-plume-estimator --bench chain`

use criterion::{criterion_group, criterion_main, BatchSize, Criterion, Throughput};
use sillage_core::msg::{ChemSample, Header};
use sillage_core::{Msg, NodeCore, Outbox};
use sillage_plume_estimator::bouts::BoutTracker;
use sillage_plume_estimator::chain::BoutChain;
use sillage_plume_estimator::channel::Channel;
use sillage_plume_estimator::params::{FilterKind, FilterParams, LowPassKind};
use sillage_plume_estimator::{Params, PlumeEstimator};
use std::hint::black_box;

const N: usize = 10_000;
const DT: f64 = 0.01;

/// A MOX-like test signal: baseline, a pulse train, a little deterministic noise.
fn signal() -> Vec<f64> {
    (0..N)
        .map(|k| {
            let t = k as f64 * DT;
            let pulse = if t % 1.7 < 0.2 { 0.05 } else { 0.0 };
            1.0 + pulse + 1e-4 * ((t * 97.0).sin() + (t * 331.0).cos())
        })
        .collect()
}

fn chains(c: &mut Criterion) {
    let x = signal();
    let mut g = c.benchmark_group("chain_and_bouts");
    g.throughput(Throughput::Elements(N as u64));
    for (name, kind, lowpass) in [
        ("cascade_gaussian", FilterKind::Cascade, LowPassKind::Gaussian),
        ("cascade_butterworth2", FilterKind::Cascade, LowPassKind::Butterworth),
        ("fir_101_taps", FilterKind::Fir, LowPassKind::Gaussian),
    ] {
        let p = FilterParams { kind, lowpass, ..FilterParams::default() };
        let chain = BoutChain::design(&p, DT).expect("designs");
        g.bench_function(name, |b| {
            b.iter_batched_ref(
                || (chain.clone(), BoutTracker::new()),
                |(chain, tracker)| {
                    let mut bouts = 0u32;
                    for (k, &v) in x.iter().enumerate() {
                        let e = chain.step(v);
                        if let Some(bt) = tracker.step(k as i64, e) {
                            bouts += u32::from(bt.amplitude > 1e-3);
                        }
                    }
                    black_box(bouts)
                },
                BatchSize::SmallInput,
            )
        });
    }
    g.finish();

    let mut g = c.benchmark_group("pipeline");
    g.throughput(Throughput::Elements(N as u64));
    let params = Params::default();
    let chain = BoutChain::design(&params.filter, DT).expect("designs");
    g.bench_function("channel_grid_chain_bouts_bins", |b| {
        b.iter_batched_ref(
            || Channel::new("a", &chain, 10_000_000, &params, 40),
            |ch| {
                for (k, &v) in x.iter().enumerate() {
                    ch.push(k as i64 * 10_000_000, v, v);
                }
                black_box(ch.counts().bouts)
            },
            BatchSize::SmallInput,
        )
    });
    // The node with two channels: the figure is per message (two channel samples).
    let msgs: Vec<Msg> = x
        .iter()
        .enumerate()
        .map(|(k, &v)| {
            let t = 1_000_000_000 + k as i64 * 10_000_000;
            Msg::ChemSample(ChemSample { header: Header::new(t, "nose"), channels: vec!["l".into(), "r".into()], values: vec![50e3 / v, 48e3 / v], quantity: 0 })
        })
        .collect();
    g.bench_function("node_two_channels_per_message", |b| {
        b.iter_batched_ref(
            || (PlumeEstimator::new(Params::default()).expect("params"), Outbox::new()),
            |(node, out)| {
                for m in &msgs {
                    let Msg::ChemSample(s) = m else { continue };
                    node.on_message(s.header.stamp.to_nanos(), 0, m, out);
                }
                black_box(node.counts().accepted)
            },
            BatchSize::SmallInput,
        )
    });
    g.finish();
}

criterion_group!(benches, chains);
criterion_main!(benches);
