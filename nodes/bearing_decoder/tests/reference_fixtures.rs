//! Checks against outside references: fixtures made by tests/refs/bearing_xcorr.py and
//! tests/refs/bearing_planewave.py with numpy 2.4.6 and scipy 1.17.1 (regenerate with
//! `BLESS=1 bash tests/refs/check_fixtures.sh`; CI checks they are reproducible).

use serde_json::Value;
use sillage_bearing_decoder::front_back::resolve;
use sillage_bearing_decoder::geometry::Vec2;
use sillage_bearing_decoder::lag::{correlate, peak, smooth, LagEstimator, LagSettings};
use sillage_bearing_decoder::plane_wave::{fit_plane, pair_lag, solve_pair, LagRow};

fn load(name: &str) -> Value {
    let path = format!("{}/../../tests/fixtures/bearing/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn ints(v: &Value) -> Vec<i64> {
    v.as_array().expect("array").iter().map(|x| x.as_i64().expect("integer")).collect()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array().expect("array").iter().map(|x| x.as_f64().expect("number")).collect()
}

fn f(v: &Value, key: &str) -> f64 {
    v[key].as_f64().unwrap_or_else(|| panic!("{key}"))
}

/// The lag estimate equals the lag scipy.signal.correlate with correlation_lags finds on the
/// same event trains (restricted to the lag window, smoothed with scipy.signal.convolve), and
/// the whole correlogram matches count for count.
#[test]
fn correlogram_and_coarse_lag_match_scipy() {
    let doc = load("xcorr_cases.json");
    let cases = doc["cases"].as_array().expect("cases");
    assert!(cases.len() >= 15);
    for c in cases {
        let name = c["name"].as_str().expect("name");
        let (a, b) = (ints(&c["a_ns"]), ints(&c["b_ns"]));
        let (bin, k_max, kernel) = (c["bin_ns"].as_i64().expect("bin"), c["k_max"].as_i64().expect("k"), c["kernel"].as_i64().expect("w"));
        let mut counts = Vec::new();
        correlate(&a, &b, bin, k_max, &mut counts);
        let want: Vec<u32> = ints(&c["counts"]).into_iter().map(|x| x as u32).collect();
        assert_eq!(counts, want, "{name}: correlogram");
        let mut sm = Vec::new();
        smooth(&counts, kernel, &mut sm);
        let want_sm: Vec<u32> = ints(&c["smoothed"]).into_iter().map(|x| x as u32).collect();
        assert_eq!(sm, want_sm, "{name}: smoothed correlogram");
        let want_peak = c["peak_bins"].as_i64();
        assert_eq!(peak(&sm, k_max).map(|p| p.0), want_peak, "{name}: peak");
        // The estimator's coarse lag is that peak.
        let s = LagSettings { bin, k_max, kernel, tolerance: (kernel * bin).max(bin), mad_k: 3.0 };
        let e = LagEstimator::new().estimate(&a, &b, &s);
        assert_eq!(e.map(|e| (e.coarse * 1e9 / bin as f64).round() as i64), want_peak, "{name}: estimator");
        // Noise-free trains: the fine lag is the true lag to the nanosecond rounding.
        if let (Some(e), 0.0) = (e, f(c, "jitter_s")) {
            if name.starts_with("clean") || name.starts_with("fine") {
                assert!((e.lag - f(c, "true_lag_s")).abs() < 2e-9, "{name}: fine lag {} vs {}", e.lag, f(c, "true_lag_s"));
            }
        }
    }
}

/// Bearings for known delays, spacings and air speeds against numpy.arcsin of the plane-wave
/// relation lag = d sin(theta) / U (docs/references.md "Bilateral direction"), including
/// the clamp at |U lag / d| > 1; the mirror candidate is pi - theta.
#[test]
fn pair_bearings_match_numpy_arcsin() {
    let doc = load("planewave_cases.json");
    let v0 = Vec2::zeros();
    for c in doc["pairs"].as_array().expect("pairs") {
        let (d, u, lag) = (f(c, "d"), f(c, "speed"), f(c, "lag"));
        let sol = solve_pair(&Vec2::new(0.0, d), lag, u, &v0).expect("solvable");
        assert_eq!(sol.clamped(), c["clamped"].as_bool().expect("bool"), "{c}");
        let (back, front) = sol.candidates();
        let want = f(c, "front_bearing");
        assert!((front - want).abs() < 1e-12, "{c}: {front} vs {want}");
        let mirror = sillage_bearing_decoder::geometry::angle_diff(back, std::f64::consts::PI - want);
        assert!(mirror.abs() < 1e-12, "{c}: back candidate {back}");
        // Unresolved (no wind): the front candidate is given.
        assert!((resolve(sol.axis, sol.half_angle, None, 0.26).0 - want).abs() < 1e-12);
    }
}

/// The closed-form inversion with robot motion against scipy.optimize.brentq on the forward
/// model lag = b.u / (U + v.u).
#[test]
fn moving_pair_bearings_match_brentq() {
    let doc = load("planewave_cases.json");
    for c in doc["moving_pairs"].as_array().expect("moving") {
        let b = Vec2::new(0.0, f(c, "d"));
        let v = Vec2::new(f(c, "vx"), f(c, "vy"));
        let (u, lag, want) = (f(c, "speed"), f(c, "lag"), f(c, "front_bearing"));
        assert!((pair_lag(&b, want, u, &v) - lag).abs() < 1e-12);
        let sol = solve_pair(&b, lag, u, &v).expect("solvable");
        let (got, _) = resolve(sol.axis, sol.half_angle, None, 0.0);
        assert!((got - want).abs() < 1e-9, "{c}: {got} vs {want}");
    }
}

/// The N-sensor fit against numpy.linalg.lstsq on the same rows and weights.
#[test]
fn plane_fit_matches_numpy_lstsq() {
    let doc = load("planewave_cases.json");
    for c in doc["fits"].as_array().expect("fits") {
        let pos: Vec<Vec2> = c["positions"].as_array().expect("pos").iter().map(|p| {
            let p = floats(p);
            Vec2::new(p[0], p[1])
        }).collect();
        let (lags, weights) = (floats(&c["lags"]), floats(&c["weights"]));
        let rows: Vec<LagRow> = c["pairs"].as_array().expect("pairs").iter().enumerate().map(|(i, p)| {
            let p = ints(p);
            LagRow { offset: pos[p[1] as usize] - pos[p[0] as usize], lag: lags[i], weight: weights[i] }
        }).collect();
        let fit = fit_plane(&rows, 1e-6).expect("fits");
        let s = floats(&c["slowness"]);
        let scale = Vec2::new(s[0], s[1]).norm();
        assert!((fit.slowness - Vec2::new(s[0], s[1])).norm() < 1e-9 * scale, "{c}");
        assert!((fit.bearing - f(c, "bearing")).abs() < 1e-9);
        assert!((fit.speed - f(c, "speed")).abs() < 1e-9 * fit.speed);
        assert!((fit.residual - f(c, "residual")).abs() < 1e-12 + 1e-9 * fit.residual, "{} vs {}", fit.residual, f(c, "residual"));
    }
}
