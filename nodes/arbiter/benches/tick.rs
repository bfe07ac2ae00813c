//! Cost of the arbiter's hot path: one 20 Hz sample of every input plus a control tick, with
//! the robot surging (the guard, the watchdogs and the strategy all run).

use criterion::{criterion_group, criterion_main, Criterion};
use sillage_arbiter::{Arbiter, Params};
use sillage_core::msg::*;
use sillage_core::{Msg, NodeCore, Outbox};
use std::hint::black_box;

fn inputs(t: i64) -> Vec<(usize, Msg)> {
    let mut odom = Odometry { header: Header::new(t, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
    odom.pose.pose.orientation = Quaternion::from_yaw(0.1);
    let e = OdorEvent { stamp: Time::from_nanos(t), channel: 0, polarity: OdorEvent::RISING, level: 1.0 };
    vec![
        (4, odom.into()),
        (3, Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: -1.0, y: 0.1, z: 0.0 } }.into()),
        (2, OdorEventArray { header: Header::new(t, ""), events: vec![e] }.into()),
        (1, PlumeFeatures { header: Header::new(t, ""), bout_rate: 0.5, intermittency: 0.2, distance: f64::NAN, distance_sigma: f64::NAN, ..Default::default() }.into()),
        (0, OdorBearing { header: Header::new(t, "base_link"), bearing: 0.2, lag: 0.01, confidence: 0.8, cue: OdorBearing::TIMING }.into()),
    ]
}

fn bench(c: &mut Criterion) {
    let mut a = Arbiter::new(Params::default()).expect("valid");
    let mut out = Outbox::new();
    let mut t: i64 = 1_000_000_000;
    c.bench_function("arbiter: 5 inputs + 1 control tick", |b| {
        b.iter(|| {
            t += 100_000_000;
            for (i, m) in inputs(t) {
                a.on_message(t, i, &m, &mut out);
            }
            a.on_timer(t, 0, &mut out);
            black_box(out.drain().count());
        })
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
