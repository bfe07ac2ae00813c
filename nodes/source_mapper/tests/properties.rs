//! Invariants of the grid posterior on random paths, winds and hit counts: it sums to one,
//! stays non-negative and finite, and does not move when the grid and the world (path) are
//! translated together.

use proptest::prelude::*;
use sillage_source_mapper::grid::{GridGeometry, Posterior};
use sillage_source_mapper::k0::LnK0Table;
use sillage_source_mapper::model::Kernel;
use sillage_source_mapper::params::ModelParams;

#[derive(Debug, Clone)]
struct Step {
    robot: [f64; 2],
    wind: [f64; 2],
    hits: u32,
}

fn steps() -> impl Strategy<Value = Vec<Step>> {
    proptest::collection::vec(
        ((-8.0..8.0f64, -8.0..8.0f64), (-2.0..2.0f64, -2.0..2.0f64), prop_oneof![4 => Just(0u32), 2 => 1u32..3, 1 => 3u32..6]),
        1..25,
    )
    .prop_map(|v| v.into_iter().map(|((x, y), (wx, wy), hits)| Step { robot: [x, y], wind: [wx, wy], hits }).collect())
}

fn model() -> impl Strategy<Value = ModelParams> {
    (0.02..1.0f64, 1.0..60.0f64, 0.5..20.0f64, 0.02..0.3f64).prop_map(|(diffusivity, lifetime, emission_rate, detector_radius)| ModelParams {
        diffusivity,
        lifetime,
        emission_rate,
        detector_radius,
    })
}

fn run(g: GridGeometry, m: &ModelParams, steps: &[Step], shift: [f64; 2], check: &mut dyn FnMut(&Posterior)) -> Posterior {
    let mut post = Posterior::new(GridGeometry { origin: [g.origin[0] + shift[0], g.origin[1] + shift[1]], ..g });
    for s in steps {
        let kernel = Kernel::new(m, s.wind, 0.5);
        post.update([s.robot[0] + shift[0], s.robot[1] + shift[1]], &kernel, s.hits, LnK0Table::shared());
        check(&post);
    }
    post
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn sums_to_one_and_stays_non_negative(
        w in 2usize..30, h in 2usize..30, res in 0.1..1.0f64, ox in -10.0..0.0f64, oy in -10.0..0.0f64,
        m in model(), steps in steps(),
    ) {
        let g = GridGeometry { origin: [ox, oy], resolution: res, width: w, height: h };
        let mut failures = Vec::new();
        run(g, &m, &steps, [0.0; 2], &mut |post| {
            let p = post.probabilities();
            let sum: f64 = p.iter().sum();
            if (sum - 1.0).abs() > 1e-12 { failures.push(format!("sum {sum}")); }
            if let Some(bad) = p.iter().find(|v| !(v.is_finite() && **v >= 0.0)) { failures.push(format!("value {bad}")); }
            let s = post.summary();
            if !(s.entropy.is_finite() && s.entropy >= -1e-12 && s.entropy <= (p.len() as f64).ln() + 1e-9) {
                failures.push(format!("entropy {}", s.entropy));
            }
            if !(s.covariance[0][0] >= 0.0 && s.covariance[1][1] >= 0.0) { failures.push(format!("cov {:?}", s.covariance)); }
        });
        prop_assert!(failures.is_empty(), "{:?}", failures);
    }

    #[test]
    fn translating_grid_and_world_together_changes_nothing(
        w in 2usize..25, h in 2usize..25, res in 0.1..1.0f64, m in model(), steps in steps(),
        tx in -500.0..500.0f64, ty in -500.0..500.0f64,
    ) {
        let g = GridGeometry { origin: [-6.0, -5.0], resolution: res, width: w, height: h };
        let a = run(g, &m, &steps, [0.0; 2], &mut |_| {});
        let b = run(g, &m, &steps, [tx, ty], &mut |_| {});
        for (i, (pa, pb)) in a.probabilities().iter().zip(b.probabilities()).enumerate() {
            // Translation only changes rounding in r - r0 (about 1e-13 m at 500 m).
            prop_assert!((pa - pb).abs() <= 1e-6 * pa.max(*pb) + 1e-12, "cell {}: {} vs {}", i, pa, pb);
        }
        let (sa, sb) = (a.summary(), b.summary());
        prop_assert!((sa.mean[0] + tx - sb.mean[0]).abs() < 1e-6 && (sa.mean[1] + ty - sb.mean[1]).abs() < 1e-6);
        prop_assert!((sa.entropy - sb.entropy).abs() < 1e-6);
    }
}
