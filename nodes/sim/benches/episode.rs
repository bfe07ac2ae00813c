//! Benchmarks: one closed-loop episode of the demo scenario (world + stack + runner), and how
//! one simulated minute scales with the number of live filaments (set by the release rate).
//! Real-time factor = simulated seconds / measured seconds.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
use sillage_world::Scenario;
use std::hint::black_box;

fn demo() -> Scenario {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
    Scenario::from_path(&path).unwrap_or_else(|e| panic!("demo scenario: {e}"))
}

fn sim(scenario: Scenario, time_limit: Option<f64>) -> Sim {
    // No early end: declaring is switched off, so every episode runs its whole time limit and
    // runs are comparable (a declaration would end the episode).
    let options = RunOptions { time_limit, halt_timeout: 1e9, ..Default::default() };
    let file = std::env::temp_dir().join(format!("sillage-bench-episode-{}.yaml", std::process::id()));
    std::fs::write(&file, "arbiter:\n  ros__parameters:\n    declare:\n      enabled: false\n").unwrap_or_else(|e| panic!("{}: {e}", file.display()));
    let config = sillage_stack::StackConfig { params_file: Some(file), ..Default::default() };
    Sim { scenario, stack: StackSetup { config, strategy: None, ablate_odor_cues: false }, world: WorldParams::default(), options }
}

/// One whole demo episode (240 simulated seconds, laser on).
fn bench_episode(c: &mut Criterion) {
    let s = sim(demo(), None);
    let spec = EpisodeSpec::nth(&s.scenario, 0, 0);
    let mut g = c.benchmark_group("episode_demo");
    g.sample_size(10);
    g.throughput(Throughput::Elements(s.time_limit() as u64));
    g.bench_function("240_simulated_seconds", |b| {
        b.iter(|| black_box(s.run_episode(spec, &mut |_| {}).unwrap_or_else(|e| panic!("{e}")).sim_time))
    });
    g.finish();
}

/// One simulated minute of the closed loop (laser off) for 5, 10, 20 and 40 filaments/s.
fn bench_filament_scaling(c: &mut Criterion) {
    let mut g = c.benchmark_group("episode_filaments");
    g.sample_size(10);
    g.throughput(Throughput::Elements(60));
    for per_second in [5.0, 10.0, 20.0, 40.0] {
        let mut scenario = demo();
        scenario.laser = None;
        for src in &mut scenario.sources {
            src.filaments.release_rate = per_second;
        }
        let s = sim(scenario, Some(60.0));
        let spec = EpisodeSpec::nth(&s.scenario, 0, 0);
        g.bench_with_input(BenchmarkId::new("one_simulated_minute_per_second", per_second), &per_second, |b, _| {
            b.iter(|| black_box(s.run_episode(spec, &mut |_| {}).unwrap_or_else(|e| panic!("{e}")).sim_time))
        });
    }
    g.finish();
}

criterion_group!(benches, bench_episode, bench_filament_scaling);
criterion_main!(benches);
