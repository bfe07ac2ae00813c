//! The mapper against outside references (tests/fixtures/mapper/mapper_refs.json, made by
//! tests/refs/mapper_refs.py with numpy 2.4.6 and scipy 1.17.1):
//! - K0 against `scipy.special.k0` and ln K0 against `log(scipy.special.k0e(z)) - z`;
//! - the grid posterior of a ten-step path against a brute-force numpy/scipy posterior of the
//!   same model (Vergassola, Villermaux & Shraiman, Nature 2007), written independently
//!   (scipy's K0, scipy.stats.poisson.logpmf, np.cov).

use serde::Deserialize;
use sillage_source_mapper::grid::{GridGeometry, Posterior};
use sillage_source_mapper::k0::{k0, ln_k0, LnK0Table};
use sillage_source_mapper::model::Kernel;
use sillage_source_mapper::params::ModelParams;

#[derive(Deserialize)]
struct Fixture {
    k0: Vec<K0Case>,
    posterior: PosteriorCase,
}

#[derive(Deserialize)]
struct K0Case {
    z: f64,
    k0: f64,
    ln_k0: f64,
}

#[derive(Deserialize)]
struct Grid {
    origin: [f64; 2],
    resolution: f64,
    width: usize,
    height: usize,
}

#[derive(Deserialize)]
struct Step {
    robot: [f64; 2],
    wind: [f64; 2],
    hits: u32,
    dt: f64,
}

#[derive(Deserialize)]
struct PosteriorCase {
    grid: Grid,
    model: ModelParams,
    steps: Vec<Step>,
    probabilities: Vec<f64>,
    mean: [f64; 2],
    covariance: [[f64; 2]; 2],
    entropy: f64,
    map_index: usize,
}

fn fixture() -> Fixture {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/fixtures/mapper/mapper_refs.json");
    serde_json::from_str(&std::fs::read_to_string(path).expect("fixture present")).expect("fixture JSON")
}

#[test]
fn k0_matches_scipy() {
    let f = fixture();
    assert!(f.k0.len() > 100);
    let table = LnK0Table::new();
    for c in &f.k0 {
        if c.k0 > 1e-300 {
            let got = k0(c.z);
            assert!((got - c.k0).abs() <= 1e-13 * c.k0, "K0({}) = {got}, scipy {}", c.z, c.k0);
        }
        let got = ln_k0(c.z);
        assert!((got - c.ln_k0).abs() <= 1e-13 * c.ln_k0.abs().max(1.0), "ln K0({}) = {got}, scipy {}", c.z, c.ln_k0);
        // The table's documented bound.
        let t = table.ln_k0(c.z);
        assert!((t - c.ln_k0).abs() <= 3e-7, "table ln K0({}) = {t}, scipy {}", c.z, c.ln_k0);
    }
}

fn run(case: &PosteriorCase, exact: bool) -> Posterior {
    let g = &case.grid;
    let mut post = Posterior::new(GridGeometry { origin: g.origin, resolution: g.resolution, width: g.width, height: g.height });
    let table = LnK0Table::shared();
    for s in &case.steps {
        let kernel = Kernel::new(&case.model, s.wind, s.dt);
        if exact {
            post.update_with(s.robot, &kernel, s.hits, ln_k0);
        } else {
            post.update(s.robot, &kernel, s.hits, table);
        }
    }
    post
}

fn compare(post: &Posterior, case: &PosteriorCase, rel: f64) {
    let p = post.probabilities();
    assert_eq!(p.len(), case.probabilities.len());
    for (i, (&a, &b)) in p.iter().zip(&case.probabilities).enumerate() {
        assert!((a - b).abs() <= rel * b + 1e-300, "cell {i}: {a} vs numpy {b} (rel {rel})");
    }
    let s = post.summary();
    assert_eq!(s.map_index, case.map_index);
    for k in 0..2 {
        assert!((s.mean[k] - case.mean[k]).abs() <= rel * 10.0, "mean {:?} vs {:?}", s.mean, case.mean);
        for l in 0..2 {
            let (a, b) = (s.covariance[k][l], case.covariance[k][l]);
            assert!((a - b).abs() <= rel * 10.0 * b.abs().max(1.0), "cov {:?} vs {:?}", s.covariance, case.covariance);
        }
    }
    assert!((s.entropy - case.entropy).abs() <= rel * case.entropy, "entropy {} vs {}", s.entropy, case.entropy);
}

#[test]
fn posterior_with_exact_k0_matches_the_brute_force_numpy_posterior() {
    let f = fixture();
    let post = run(&f.posterior, true);
    compare(&post, &f.posterior, 1e-9);
    // The case is informative: the MAP holds several times its uniform share.
    assert!(post.summary().map_probability > 10.0 / f.posterior.probabilities.len() as f64);
}

#[test]
fn posterior_with_the_k0_table_stays_within_the_table_error() {
    // ln K0 within 3e-7 per lookup, so each step's log likelihood is within 3e-7 (k + mu):
    // over ten steps the probabilities stay within 1e-4 relative.
    let f = fixture();
    compare(&run(&f.posterior, false), &f.posterior, 1e-4);
}
