//! Checks of the wind meander, the grid flow, the room background and the MOX law against
//! reference values made by tests/refs/world_field_refs.py with numpy 2.4.6 and scipy 1.17.1
//! (fixture tests/fixtures/world_field_refs.json; regenerate with
//! `python tests/refs/world_field_refs.py` in the venv of tests/refs/venv.sh):
//! - meander: analytic AR(1) / Ornstein-Uhlenbeck variance, autocorrelation, time constant
//!   and integral time scale (standard results), and numpy estimates of a series simulated
//!   by scipy.signal.lfilter, against the same estimators on our generated series;
//! - grid wind: face velocities of the discrete potential-flow problem solved directly with
//!   scipy.sparse.linalg.spsolve, its numpy divergence and solid-face velocities;
//! - room: the single-zone ventilation solution C(t) = Q / (V lambda) (1 - exp(-lambda t));
//! - MOX: Rs/R0 = (1 + C/C0)^-beta and its numpy.gradient log-log slope, tending to the
//!   power law's -beta (Clifford and Tuma) at high concentration.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde::Deserialize;
use sillage_world::arena::{Aabb, Arena};
use sillage_world::mox::MoxParams;
use sillage_world::noise::ColouredNoise;
use sillage_world::room::Room;
use sillage_world::wind::{WindField, WindParams, MEANDER_DT};
use sillage_world::wind_grid::{Edge, FlowGrid};

#[derive(Deserialize)]
struct Refs {
    made_by: String,
    meander: Vec<Meander>,
    flow: Flow,
    room: Vec<RoomCase>,
    mox: Vec<MoxCase>,
}

#[derive(Deserialize)]
struct Stats {
    variance: f64,
    acf: Vec<f64>,
    integral_time: f64,
    tau_from_lag1: f64,
}

#[derive(Deserialize)]
struct Analytic {
    variance: f64,
    acf: Vec<f64>,
    integral_time: f64,
    tau_from_lag1: f64,
    se_variance: f64,
    se_acf1: f64,
}

#[derive(Deserialize)]
struct Meander {
    std: f64,
    tau: f64,
    dt: f64,
    n: usize,
    horizon: usize,
    analytic: Analytic,
    scipy_series: Stats,
}

#[derive(Deserialize)]
struct Flow {
    arena: [f64; 4],
    resolution: f64,
    obstacles: Vec<[f64; 4]>,
    solid_walls: Vec<Edge>,
    corners: [[f64; 2]; 4],
    nx: usize,
    ny: usize,
    u: Vec<f64>,
    v: Vec<f64>,
    max_abs_divergence: f64,
    max_abs_solid_face_velocity: f64,
}

#[derive(Deserialize)]
struct RoomCase {
    q: f64,
    volume: f64,
    ach: f64,
    t: Vec<f64>,
    c: Vec<f64>,
}

#[derive(Deserialize)]
struct MoxCase {
    r0: f64,
    c0: f64,
    beta: f64,
    c: Vec<f64>,
    rs: Vec<f64>,
    loglog_slope: Vec<f64>,
}

fn refs() -> Refs {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/world_field_refs.json"
    );
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{path}: {e}"));
    let r: Refs = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"));
    assert!(r.made_by.contains("scipy 1.17.1"), "{}", r.made_by);
    r
}

/// Sample variance, autocorrelation at lags 0..=lags (unbiased per lag, normalised), and
/// the estimators the fixture uses.
fn estimates(x: &[f64], dt: f64, lags: usize, horizon: usize) -> Stats {
    let n = x.len();
    let mean = x.iter().sum::<f64>() / n as f64;
    let d: Vec<f64> = x.iter().map(|v| v - mean).collect();
    let cov = |k: usize| d.iter().zip(&d[k..]).map(|(a, b)| a * b).sum::<f64>() / (n - k) as f64;
    let c0 = cov(0);
    let rho: Vec<f64> = (0..=lags.max(horizon)).map(|k| cov(k) / c0).collect();
    let r = &rho[..=horizon];
    Stats {
        variance: d.iter().map(|v| v * v).sum::<f64>() / n as f64,
        acf: rho[..=lags].to_vec(),
        integral_time: dt * (r.iter().sum::<f64>() - 0.5 * r[0] - 0.5 * r[horizon]),
        tau_from_lag1: -dt / rho[1].ln(),
    }
}

/// Our series for a case: at the uniform wind's own meander step, the direction of the
/// generated wind (minus its mean); otherwise the coloured-noise process at the case's step.
fn our_series(m: &Meander, seed: u64) -> Vec<f64> {
    if (m.dt - MEANDER_DT).abs() < 1e-12 {
        let params = WindParams {
            speed: 1.0,
            direction: 0.3,
            direction_std: m.std,
            speed_std: 0.0,
            correlation_time: m.tau,
        };
        let mut w = WindField::new(params, ChaCha8Rng::seed_from_u64(seed));
        (1..=m.n)
            .map(|k| {
                let t = k as f64 * m.dt;
                w.advance_to(t);
                let v = w.velocity([0.0; 3], t);
                v[1].atan2(v[0]) - 0.3
            })
            .collect()
    } else {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut p = ColouredNoise::new(m.std, m.tau, &mut rng);
        (0..m.n).map(|_| p.advance(m.dt, &mut rng)).collect()
    }
}

#[test]
fn meander_statistics_match_ar1_values_and_scipy_estimates() {
    for m in refs().meander {
        let a = &m.analytic;
        let ours = estimates(&our_series(&m, 77), m.dt, a.acf.len() - 1, m.horizon);
        let sp = &m.scipy_series;
        println!(
            "std {} tau {} dt {}: variance {:.5} / scipy {:.5} / AR(1) {:.5}; tau(lag 1) {:.3} / {:.3} / {:.3}; integral time (3 tau) {:.3} / {:.3} / {:.3}",
            m.std, m.tau, m.dt, ours.variance, sp.variance, a.variance, ours.tau_from_lag1,
            sp.tau_from_lag1, a.tau_from_lag1, ours.integral_time, sp.integral_time, a.integral_time
        );
        // Variance and lag-1 correlation within 4 large-sample standard errors of AR(1).
        assert!(
            (ours.variance - a.variance).abs() < 4.0 * a.se_variance,
            "variance {}",
            ours.variance
        );
        assert!(
            (ours.acf[1] - a.acf[1]).abs() < 4.0 * a.se_acf1,
            "rho(1) {}",
            ours.acf[1]
        );
        // Time scales: sampling error of a few percent for these lengths (the scipy series
        // shows the same spread); ours and scipy's must agree with each other too.
        assert!(
            (ours.tau_from_lag1 / a.tau_from_lag1 - 1.0).abs() < 0.06,
            "tau {}",
            ours.tau_from_lag1
        );
        assert!(
            (ours.integral_time / a.integral_time - 1.0).abs() < 0.10,
            "T {}",
            ours.integral_time
        );
        assert!((ours.tau_from_lag1 / sp.tau_from_lag1 - 1.0).abs() < 0.09);
        assert!((ours.integral_time / sp.integral_time - 1.0).abs() < 0.14);
        assert!((ours.variance / sp.variance - 1.0).abs() < 0.15);
        // The whole autocorrelation to lag 40 follows a^k.
        for (k, (o, want)) in ours.acf.iter().zip(&a.acf).enumerate() {
            assert!((o - want).abs() < 0.05, "lag {k}: {o} vs {want}");
        }
    }
}

#[test]
fn grid_flow_matches_scipy_sparse_and_has_no_divergence() {
    let f = refs().flow;
    let arena = Arena {
        bounds: Aabb::new(f.arena[0], f.arena[1], f.arena[2], f.arena[3]),
        obstacles: f
            .obstacles
            .iter()
            .map(|b| Aabb::new(b[0], b[1], b[2], b[3]))
            .collect(),
    };
    let field = FlowGrid::new(&arena, f.resolution, &f.solid_walls).field(&f.corners);
    assert_eq!((field.nx, field.ny), (f.nx, f.ny));
    let scale = f.u.iter().chain(&f.v).fold(0.0f64, |m, x| m.max(x.abs()));
    for (k, (a, b)) in field.u.iter().zip(&f.u).enumerate() {
        assert!((a - b).abs() < 1e-8 * scale, "u face {k}: {a} vs scipy {b}");
    }
    for (k, (a, b)) in field.v.iter().zip(&f.v).enumerate() {
        assert!((a - b).abs() < 1e-8 * scale, "v face {k}: {a} vs scipy {b}");
    }
    let mut max_div = 0.0f64;
    for j in 0..field.ny {
        for i in 0..field.nx {
            max_div = max_div.max(field.divergence(i, j).abs());
        }
    }
    println!(
        "max |div| ours {max_div:.2e} 1/s, scipy {:.2e} 1/s; max |solid face velocity| scipy {:.1e} m/s",
        f.max_abs_divergence, f.max_abs_solid_face_velocity
    );
    assert!(
        max_div < 1e-12 * scale / f.resolution
            && f.max_abs_divergence < 1e-12 * scale / f.resolution
    );
    assert!(f.max_abs_solid_face_velocity < 1e-12);
    // The solid north wall carries nothing across it.
    assert!((0..field.nx).all(|i| field.v_face(i, field.ny).abs() < 1e-12 * scale));
}

#[test]
fn room_matches_the_single_zone_solution() {
    for r in refs().room {
        let mut room = Room::new(r.volume, r.ach);
        let mut t = 0.0;
        // Uneven steps (as the world's sub-steps are): 0.01 s .. 7 s.
        let steps: [f64; 5] = [0.01, 0.37, 2.5, 7.0, 0.2];
        for (target, want) in r.t.iter().zip(&r.c) {
            let mut k = 0;
            while t < *target - 1e-12 {
                let h = steps[k % steps.len()].min(target - t);
                room.step(r.q, h);
                t += h;
                k += 1;
            }
            let got = room.concentration();
            assert!(
                (got - want).abs() <= 1e-9 * want.abs() + 1e-18,
                "Q {} V {} ACH {} t {target}: {got} vs {want}",
                r.q,
                r.volume,
                r.ach
            );
        }
    }
}

#[test]
fn mox_law_matches_the_published_curve_form() {
    for m in refs().mox {
        let p = MoxParams {
            r0: m.r0,
            c0: m.c0,
            beta: m.beta,
            ..MoxParams::default()
        };
        for (c, rs) in m.c.iter().zip(&m.rs) {
            let got = p.steady_resistance(*c);
            assert!((got / rs - 1.0).abs() < 1e-12, "C {c}: {got} vs {rs}");
        }
        // Local log-log slope of our law (fine central difference) against numpy.gradient on
        // the coarse grid of the fixture (its own error is O(h^2), h = 0.23 in ln C).
        for (k, (c, want)) in m.c.iter().zip(&m.loglog_slope).enumerate() {
            let e: f64 = 1e-5;
            let slope = (p.steady_resistance(c * e.exp()).ln()
                - p.steady_resistance(c / e.exp()).ln())
                / (2.0 * e);
            let tol = if k == 0 || k == m.c.len() - 1 {
                0.05
            } else {
                0.01
            } * m.beta;
            assert!(
                (slope - want).abs() < tol,
                "C {c}: slope {slope} vs numpy {want}"
            );
        }
        // Ends: the power law's -beta far above C0, flat (clean air) far below.
        let last = m.loglog_slope[m.loglog_slope.len() - 1];
        assert!((last + m.beta).abs() < 0.01 * m.beta && m.loglog_slope[0].abs() < 0.01 * m.beta);
    }
}
