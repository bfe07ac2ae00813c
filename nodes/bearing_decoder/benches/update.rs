//! One bearing update (the work of a timer tick) over a full 10 s window of onset events.
//! Target: well under 10 us.
use criterion::{criterion_group, criterion_main, Criterion};
use sillage_bearing_decoder::node::{IN_ODOR_EVENTS, IN_WIND};
use sillage_bearing_decoder::{BearingDecoder, Params};
use sillage_core::msg::{Header, OdorEvent, OdorEventArray, Time, Vector3, Vector3Stamped};
use sillage_core::{Msg, Nanos, NodeCore, Outbox};
use std::hint::black_box;

const MS: Nanos = 1_000_000;

/// A decoder holding `rate` onsets per second per sensor over 10 s (each with a falling event),
/// arriving from 30 deg at 0.5 m/s with a few ms of deterministic jitter; returns it and the
/// time of the last event.
fn loaded(p: Params, rate: f64) -> (BearingDecoder, Nanos) {
    let mut d = BearingDecoder::new(p).expect("valid");
    let mut out = Outbox::new();
    let n_sensors = d.array().len();
    let period = (1e9 / rate) as Nanos;
    let mut t = 0;
    for k in 0..(10.0 * rate) as i64 {
        t = 100 * MS + k * period;
        let mut list = Vec::new();
        for i in 0..n_sensors {
            let p = d.array().position(i);
            // Plane wave from 30 deg at 0.5 m/s, plus +-3 ms of jitter.
            let delay = -(p.x * 30f64.to_radians().cos() + p.y * 30f64.to_radians().sin()) / 0.5;
            let at = t + (delay * 1e9) as Nanos + ((k * 7 + i as i64 * 3) % 7 - 3) * MS;
            list.push(OdorEvent { stamp: Time::from_nanos(at), channel: i as u16, polarity: 1, level: 1.0 });
            list.push(OdorEvent { stamp: Time::from_nanos(at + period / 2), channel: i as u16, polarity: -1, level: 0.5 });
        }
        let msg: Msg = OdorEventArray { header: Header::new(t, ""), events: list }.into();
        d.on_message(t, IN_ODOR_EVENTS, &msg, &mut out);
        out.drain();
    }
    let wind: Msg = Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: -0.433, y: -0.25, z: 0.0 } }.into();
    d.on_message(t, IN_WIND, &wind, &mut out);
    (d, t)
}

fn bench(c: &mut Criterion) {
    let (mut pair, t) = loaded(Params::default(), 2.0);
    assert_eq!(pair.estimate(t).fused.cue, sillage_core::msg::OdorBearing::TIMING, "the bench measures a real bearing");
    c.bench_function("estimate_pair_10s_window_2hz", |b| b.iter(|| black_box(pair.estimate(black_box(t)))));
    let (mut dense, t) = loaded(Params::default(), 10.0);
    c.bench_function("estimate_pair_10s_window_10hz", |b| b.iter(|| black_box(dense.estimate(black_box(t)))));
    let mut out = Outbox::new();
    c.bench_function("timer_tick_publish_pair_2hz", |b| {
        b.iter(|| {
            pair.on_timer(black_box(t), 0, &mut out);
            out.drain().count()
        })
    });
    let p = Params::default().with_sensors(&[("left", 0.0, 0.1), ("right", 0.0, -0.1), ("front", 0.17, 0.0)]);
    let (mut tri, t) = loaded(p, 2.0);
    assert_ne!(tri.estimate(t).fused.cue, sillage_core::msg::OdorBearing::NONE);
    c.bench_function("estimate_triangle_10s_window_2hz", |b| b.iter(|| black_box(tri.estimate(black_box(t)))));
}

criterion_group!(benches, bench);
criterion_main!(benches);
