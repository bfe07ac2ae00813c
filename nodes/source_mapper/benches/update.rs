//! One posterior update of the default 200 x 200 grid (target: <= 2 ms on one core), for a
//! non-detection and for a detection, with the default model and a 0.5 m/s wind.

use criterion::{criterion_group, criterion_main, Criterion};
use sillage_source_mapper::grid::{GridGeometry, Posterior};
use sillage_source_mapper::k0::LnK0Table;
use sillage_source_mapper::model::Kernel;
use sillage_source_mapper::params::Params;
use std::hint::black_box;

fn update(c: &mut Criterion) {
    let p = Params::default();
    let (width, height) = p.grid.cells();
    let geometry = GridGeometry { origin: [-25.0, -25.0], resolution: p.grid.resolution, width, height };
    let kernel = Kernel::new(&p.model, [0.45, 0.2], 1.0 / p.rate);
    let table = LnK0Table::shared();
    let mut post = Posterior::new(geometry);
    let mut step = 0u32;
    c.bench_function("update_200x200_no_hit", |b| {
        b.iter(|| {
            step = step.wrapping_add(1);
            let x = f64::from(step % 100) * 0.1 - 5.0;
            post.update(black_box([x, 1.0]), &kernel, 0, table);
        })
    });
    let mut post = Posterior::new(geometry);
    c.bench_function("update_200x200_hit", |b| {
        b.iter(|| {
            step = step.wrapping_add(1);
            let x = f64::from(step % 100) * 0.1 - 5.0;
            post.update(black_box([x, 1.0]), &kernel, 1, table);
        })
    });
}

criterion_group!(benches, update);
criterion_main!(benches);
