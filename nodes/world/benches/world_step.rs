//! Benchmarks: one simulated second of world stepping with sensor sampling, for the demo
//! scenario and for filament plumes of growing size.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use sillage_world::{Scenario, Twist2, World};
use std::hint::black_box;
use std::path::Path;

fn demo() -> Scenario {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
    match Scenario::from_path(&path) {
        Ok(s) => s,
        Err(e) => panic!("demo scenario: {e}"),
    }
}

fn warmed(scenario: &Scenario, seconds: f64) -> World {
    let mut w = match World::new(scenario, 1, 0) {
        Ok(w) => w,
        Err(e) => panic!("world: {e}"),
    };
    w.set_command(Twist2::new(0.0, 0.0, 0.3));
    w.step(seconds);
    w.drain_chem().count();
    w.drain_wind().count();
    w.drain_scans().count();
    w
}

/// One simulated second (dt = 0.01 s, sensors at their scenario rates) of the demo world.
fn bench_demo_second(c: &mut Criterion) {
    let scenario = demo();
    let mut world = warmed(&scenario, 60.0);
    let mut g = c.benchmark_group("world_demo");
    g.throughput(Throughput::Elements(1));
    g.bench_function("one_simulated_second", |b| {
        b.iter(|| {
            for _ in 0..100 {
                world.step(0.01);
            }
            black_box(
                world.drain_chem().count()
                    + world.drain_wind().count()
                    + world.drain_scans().count(),
            )
        })
    });
    g.finish();
}

/// How a simulated second scales with the live filament count (set by the release rate).
fn bench_filament_scaling(c: &mut Criterion) {
    let base = demo();
    let mut g = c.benchmark_group("world_filaments");
    g.sample_size(20);
    for per_second in [5.0, 20.0, 80.0] {
        let mut s = base.clone();
        s.laser = None;
        for src in &mut s.sources {
            src.filaments.release_rate = per_second;
        }
        let mut world = warmed(&s, 60.0);
        let n = world.filament_count();
        g.bench_with_input(BenchmarkId::new("one_simulated_second", n), &n, |b, _| {
            b.iter(|| {
                for _ in 0..100 {
                    world.step(0.01);
                }
                black_box(world.drain_chem().count())
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench_demo_second, bench_filament_scaling);
criterion_main!(benches);
