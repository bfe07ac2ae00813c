//! The filament plume's time-averaged field has a Gaussian crosswind profile whose width
//! grows with downwind distance, as the time-averaged Gaussian plume model assumes.
//!
//! Reference for the expected width: Taylor's theorem of dispersion by continuous
//! movements (G. I. Taylor, "Diffusion by continuous movements", Proc. London Math. Soc.
//! 20:196-212, 1921): for a crosswind velocity with variance v^2 and exponential
//! autocorrelation of time scale T, the displacement variance after travel time t is
//! 2 v^2 T^2 (t/T - 1 + exp(-t/T)). Here v = U sigma_theta (small direction meander); the
//! random walk of filament centres adds 2 K t and the filament's own Gaussian R0^2 + gamma t.
//! The peak is checked against the reflected Gaussian plume at the source height,
//! Q / (2 pi U sy sz) (1 + exp(-2 H^2 / sz^2)) (Fundamentals of Air Pollution, 3rd ed.,
//! 1994, ch. 19), with sz from the vertical terms alone (the wind has no vertical meander):
//! this also checks that the filaments carry the released mass.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use sillage_world::arena::Aabb;
use sillage_world::filament::{FilamentParams, FilamentPlume, FilamentSource};
use sillage_world::wind::{WindField, WindParams};

const U: f64 = 1.0;
const SIGMA_THETA: f64 = 0.12;
const T_CORR: f64 = 4.0;
const K: f64 = 0.01;
const R0: f64 = 0.05;
const GAMMA: f64 = 0.005;
const SRC: [f64; 3] = [2.0, 20.0, 0.5];

/// Gaussian a exp(-(y - m)^2 / (2 s^2)) fitted by Gauss-Newton from the moment estimates;
/// returns (a, m, s, r_squared).
fn fit_gaussian(ys: &[f64], cs: &[f64]) -> (f64, f64, f64, f64) {
    let total: f64 = cs.iter().sum();
    let mut m = ys.iter().zip(cs).map(|(y, c)| y * c).sum::<f64>() / total;
    let mut s = (ys
        .iter()
        .zip(cs)
        .map(|(y, c)| (y - m).powi(2) * c)
        .sum::<f64>()
        / total)
        .sqrt();
    let mut a = cs.iter().cloned().fold(0.0, f64::max);
    for _ in 0..30 {
        let (mut jtj, mut jtr) = ([[0.0f64; 3]; 3], [0.0f64; 3]);
        for (&y, &c) in ys.iter().zip(cs) {
            let e = (-(y - m).powi(2) / (2.0 * s * s)).exp();
            let g = [
                e,
                a * e * (y - m) / (s * s),
                a * e * (y - m).powi(2) / (s * s * s),
            ];
            let r = c - a * e;
            for i in 0..3 {
                jtr[i] += g[i] * r;
                for j in 0..3 {
                    jtj[i][j] += g[i] * g[j];
                }
            }
        }
        let d = solve3(jtj, jtr);
        a += d[0];
        m += d[1];
        s = (s + d[2]).abs();
    }
    let mean_c = total / cs.len() as f64;
    let ss_tot: f64 = cs.iter().map(|c| (c - mean_c).powi(2)).sum();
    let ss_res: f64 = ys
        .iter()
        .zip(cs)
        .map(|(y, c)| (c - a * (-(y - m).powi(2) / (2.0 * s * s)).exp()).powi(2))
        .sum();
    (a, m, s, 1.0 - ss_res / ss_tot)
}

/// Solves a 3x3 system by Cramer's rule.
fn solve3(a: [[f64; 3]; 3], b: [f64; 3]) -> [f64; 3] {
    let det = |m: [[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det(a);
    let mut x = [0.0; 3];
    for (k, xk) in x.iter_mut().enumerate() {
        let mut m = a;
        for i in 0..3 {
            m[i][k] = b[i];
        }
        *xk = det(m) / d;
    }
    x
}

fn taylor_sigma(x: f64) -> f64 {
    let t = x / U;
    let v = U * SIGMA_THETA;
    let meander = 2.0 * v * v * T_CORR * T_CORR * (t / T_CORR - 1.0 + (-t / T_CORR).exp());
    (meander + 2.0 * K * t + R0 * R0 + GAMMA * t).sqrt()
}

#[test]
fn time_averaged_cross_section_is_gaussian_and_widens() {
    let params = FilamentParams {
        release_rate: 10.0,
        initial_radius: R0,
        growth_rate: GAMMA,
        relative_diffusivity: K,
        max_age: 40.0,
    };
    let source = FilamentSource {
        position: SRC,
        rate: 1e-3,
        params,
    };
    let bounds = Aabb::new(0.0, 0.0, 40.0, 40.0);
    let mut plume =
        FilamentPlume::new(vec![source], bounds, 100_000, ChaCha8Rng::seed_from_u64(21));
    let wind_params = WindParams {
        speed: U,
        direction: 0.0,
        direction_std: SIGMA_THETA,
        speed_std: 0.0,
        correlation_time: T_CORR,
    };
    let mut wind = WindField::new(wind_params, ChaCha8Rng::seed_from_u64(22));

    let distances = [3.0, 6.0, 12.0];
    let ys: Vec<f64> = (-32..=32).map(|k| k as f64 * 0.125).collect();
    let mut sums = vec![vec![0.0; ys.len()]; distances.len()];
    let (dt, warmup, average, every) = (0.05, 40.0, 900.0, 4);
    let steps = ((warmup + average) / dt) as usize;
    let mut samples = 0;
    for k in 1..=steps {
        let t = k as f64 * dt;
        wind.advance_to(t);
        plume.step_to(&wind, t);
        if t > warmup && k % every == 0 {
            samples += 1;
            for (row, &x) in sums.iter_mut().zip(&distances) {
                for (acc, &y) in row.iter_mut().zip(&ys) {
                    *acc += plume.concentration([SRC[0] + x, SRC[1] + y, SRC[2]]);
                }
            }
        }
    }
    let mut sigmas = Vec::new();
    for (row, &x) in sums.iter().zip(&distances) {
        let mean: Vec<f64> = row.iter().map(|s| s / samples as f64).collect();
        let (a, m, s, r2) = fit_gaussian(&ys, &mean);
        let expected = taylor_sigma(x);
        println!(
            "x = {x:4.1} m: fitted sigma_y = {s:.3} m (Taylor 1921 estimate {expected:.3} m), centre {m:+.3} m, peak {a:.3e} g/m^3, R^2 = {r2:.4}"
        );
        assert!(r2 > 0.97, "x = {x}: Gaussian fit R^2 = {r2}");
        assert!(m.abs() < 0.5 * s, "x = {x}: profile centre {m} off axis");
        assert!(
            (s / expected - 1.0).abs() < 0.3,
            "x = {x}: sigma {s} vs Taylor estimate {expected}"
        );
        let t = x / U;
        let sz = (2.0 * K * t + R0 * R0 + GAMMA * t).sqrt();
        let h = SRC[2];
        let peak = 1e-3 / (2.0 * std::f64::consts::PI * U * s * sz)
            * (1.0 + (-2.0 * h * h / (sz * sz)).exp());
        println!("           Gaussian-plume peak for that sigma_y {peak:.3e} g/m^3");
        assert!(
            (a / peak - 1.0).abs() < 0.15,
            "x = {x}: peak {a} vs plume formula {peak}"
        );
        sigmas.push(s);
    }
    assert!(
        sigmas.windows(2).all(|w| w[1] > w[0] * 1.2),
        "sigma must grow with distance: {sigmas:?}"
    );
}
