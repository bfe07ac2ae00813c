//! The filter chain, bout detection and calibration fit against the fixture made by
//! tests/refs/plume_filters.py with scipy.signal 1.17.1 and numpy 2.4.6 (see the script for
//! which function computes what). Rust designs its own coefficients from dt; outputs must
//! agree within 1e-9 normwise relative (max|rust - ref| <= 1e-9 max|ref|); bout onsets,
//! peaks and counts exactly.

use serde_json::Value;
use sillage_core::msg::{ChemSample, Header};
use sillage_core::{Msg, NodeCore, Outbox};
use sillage_plume_estimator::bouts::BoutTracker;
use sillage_plume_estimator::calibration::{fit, CalibrationPoint};
use sillage_plume_estimator::chain::{fir_taps, BoutChain};
use sillage_plume_estimator::filters::{butterworth_lowpass, gaussian_kernel, lowpass_differentiator, Difference, Ema, Fir};
use sillage_plume_estimator::noise::robust_sigma;
use sillage_plume_estimator::params::{FilterKind, FilterParams, LowPassKind, ThresholdMode};
use sillage_plume_estimator::{Params, PlumeEstimator};

const TOL: f64 = 1e-9;

fn fixture() -> Value {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/fixtures/plume/plume_filters.json");
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{path}: {e} (run tests/refs/plume_filters.py)"));
    serde_json::from_str(&text).expect("fixture is JSON")
}

fn arr(v: &Value) -> Vec<f64> {
    v.as_array().expect("array").iter().map(|x| x.as_f64().expect("number")).collect()
}

fn num(v: &Value) -> f64 {
    v.as_f64().expect("number")
}

fn indices(v: &Value) -> Vec<usize> {
    v.as_array().expect("array").iter().map(|x| x.as_u64().expect("index") as usize).collect()
}

/// Normwise relative error max|a - b| / max|b|.
fn rel_err(a: &[f64], b: &[f64]) -> f64 {
    assert_eq!(a.len(), b.len());
    let scale = b.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    a.iter().zip(b).fold(0.0f64, |m, (x, y)| m.max((x - y).abs())) / scale
}

fn assert_close(what: &str, a: &[f64], b: &[f64]) {
    let e = rel_err(a, b);
    eprintln!("{what}: relative error {e:.2e}");
    assert!(e <= TOL, "{what}: relative error {e:e} > {TOL:e}");
}

#[test]
fn each_filter_stage_equals_scipy() {
    let doc = fixture();
    for case in doc["cases"].as_array().expect("cases") {
        let name = case["name"].as_str().expect("name");
        let dt = num(&case["dt"]);
        let x = arr(&case["x"]);

        // Gaussian kernel: scipy.signal.windows.gaussian, normalised; then lfilter.
        let g = &case["gaussian"];
        let h = gaussian_kernel(num(&g["sigma"]), dt).expect("designs");
        assert_close(&format!("{name} gaussian kernel"), &h, &arr(&g["kernel"]));
        let mut f = Fir::new(&h).expect("fir");
        let y_gauss = {
            f.prime(x[0]);
            x.iter().map(|&v| f.step(v)).collect::<Vec<_>>()
        };
        assert_close(&format!("{name} gaussian lfilter"), &y_gauss, &arr(&g["y"]));

        // Butterworth: scipy.signal.butter(output="sos") + sosfilt.
        for b in case["butterworth"].as_array().expect("butterworth") {
            let order = b["order"].as_u64().expect("order") as usize;
            let mut sos = butterworth_lowpass(order, num(&b["cutoff"]), dt).expect("designs");
            sos.prime(x[0]);
            let y: Vec<f64> = x.iter().map(|&v| sos.step(v)).collect();
            assert_close(&format!("{name} butterworth order {order} sosfilt"), &y, &arr(&b["y"]));
        }

        // First difference on scipy's Gaussian output: lfilter([1/dt, -1/dt], [1]).
        let u = arr(&g["y"]);
        let mut d = Difference::new(dt).expect("diff");
        let y_diff = {
            d.prime(u[0]);
            u.iter().map(|&v| d.step(v)).collect::<Vec<_>>()
        };
        assert_close(&format!("{name} difference"), &y_diff, &arr(&case["difference"]["y"]));

        // EMA as the first-order IIR lfilter([alpha], [1, alpha - 1]) on scipy's difference.
        let e = &case["ema"];
        let mut ema = Ema::new(num(&e["half_life"]), dt).expect("ema");
        assert!((ema.alpha() - num(&e["alpha"])).abs() <= 1e-15, "{name} alpha");
        let u = arr(&case["difference"]["y"]);
        ema.prime(u[0]);
        let y_ema: Vec<f64> = u.iter().map(|&v| ema.step(v)).collect();
        assert_close(&format!("{name} ema"), &y_ema, &arr(&e["y"]));

        // FIR low-pass differentiator: convolve(firwin(hamming), [1, -1]) / dt, lfilter.
        let fr = &case["fir"];
        let numtaps = fir_taps(num(&fr["length"]), dt);
        assert_eq!(numtaps as u64, fr["numtaps"].as_u64().expect("numtaps"));
        let taps = lowpass_differentiator(numtaps, num(&fr["cutoff"]), dt).expect("designs");
        assert_close(&format!("{name} fir taps"), &taps, &arr(&fr["taps"]));
        let mut f = Fir::new(&taps).expect("fir");
        f.prime(x[0]);
        let y_fir: Vec<f64> = x.iter().map(|&v| f.step(v)).collect();
        assert_close(&format!("{name} fir lfilter"), &y_fir, &arr(&fr["y"]));
    }
}

fn chain_params(kind: FilterKind) -> FilterParams {
    FilterParams { kind, lowpass: LowPassKind::Gaussian, ..FilterParams::default() }
}

#[test]
fn whole_chains_equal_the_scipy_cascade() {
    let doc = fixture();
    for case in doc["cases"].as_array().expect("cases") {
        let dt = num(&case["dt"]);
        let x = arr(&case["x"]);
        for (kind, key) in [(FilterKind::Cascade, &case["ema"]["y"]), (FilterKind::Fir, &case["fir"]["y"])] {
            let mut c = BoutChain::design(&chain_params(kind), dt).expect("designs");
            let y: Vec<f64> = x.iter().map(|&v| c.step(v)).collect();
            assert_close(&format!("{} {kind:?} chain", case["name"]), &y, &arr(key));
        }
    }
}

fn tracker_bouts(e: &[f64], threshold: f64, positive_peak: bool) -> (Vec<usize>, Vec<usize>, Vec<f64>, usize) {
    let mut tr = BoutTracker::new();
    let (mut on, mut pk, mut amp, mut candidates) = (Vec::new(), Vec::new(), Vec::new(), 0);
    for (n, &v) in e.iter().enumerate() {
        if let Some(b) = tr.step(n as i64, v) {
            candidates += 1;
            if b.amplitude >= threshold && (b.peak_value > 0.0 || !positive_peak) {
                on.push(b.onset as usize);
                pk.push(b.peak as usize);
                amp.push(b.amplitude);
            }
        }
    }
    (on, pk, amp, candidates)
}

#[test]
fn bouts_equal_the_vectorised_numpy_detector() {
    let doc = fixture();
    for case in doc["cases"].as_array().expect("cases") {
        for b in case["bouts"].as_array().expect("bouts") {
            let what = format!("{} {} positive_peak={}", case["name"], b["signal"], b["positive_peak"]);
            let e = arr(&case[b["signal"].as_str().expect("signal")]["y"]);
            let clean = b["noise_samples"].as_u64().expect("samples") as usize;
            let mut head = e[..clean].to_vec();
            let sigma = robust_sigma(&mut head);
            assert!((sigma / num(&b["noise_sigma"]) - 1.0).abs() <= 1e-12, "{what}: noise {sigma} vs numpy");
            let positive = b["positive_peak"].as_bool().expect("flag");
            let (on, pk, amp, candidates) = tracker_bouts(&e, num(&b["threshold"]), positive);
            assert_eq!(on, indices(&b["onsets"]), "{what}: onsets");
            assert_eq!(pk, indices(&b["peaks"]), "{what}: peaks");
            assert_eq!(candidates as u64, b["candidates"].as_u64().expect("candidates"), "{what}: rising runs");
            assert_close(&format!("{what} amplitudes"), &amp, &arr(&b["amplitudes"]));
        }
    }
}

/// The node end to end (grid, chain, noise learning, threshold, bouts) on the fixture input.
#[test]
fn node_counts_the_numpy_bouts() {
    let doc = fixture();
    for case in doc["cases"].as_array().expect("cases") {
        let dt = num(&case["dt"]);
        let x = arr(&case["x"]);
        for b in case["bouts"].as_array().expect("bouts") {
            let kind = if b["signal"] == "fir" { FilterKind::Fir } else { FilterKind::Cascade };
            let clean = b["noise_samples"].as_u64().expect("samples") as usize;
            let mut p = Params::default();
            p.input.sample_rate = 1.0 / dt;
            p.filter = chain_params(kind);
            p.bouts.threshold_mode = ThresholdMode::Noise;
            p.bouts.noise_factor = num(&b["noise_factor"]);
            p.bouts.positive_peak = b["positive_peak"].as_bool().expect("flag");
            p.bouts.learn_time = clean as f64 * dt;
            // RELATIVE values pass through; with baseline removal off the chain sees the input.
            p.conditioning.baseline_time_constant = 0.0;
            let mut node = PlumeEstimator::new(p).expect("valid params");
            let mut out = Outbox::new();
            let t0: i64 = 1_700_000_000_000_000_000;
            let period = (dt * 1e9).round() as i64;
            for (k, &v) in x.iter().enumerate() {
                let t = t0 + k as i64 * period;
                let m = ChemSample { header: Header::new(t, "nose"), channels: vec!["a".into()], values: vec![v], quantity: 4 };
                node.on_message(t, 0, &Msg::ChemSample(m), &mut out);
            }
            // Bouts the numpy detector found, detected (one sample after the peak) once the
            // threshold was known (at the last clean-air sample).
            let peaks = indices(&b["peaks"]);
            let expected: Vec<usize> = peaks.into_iter().filter(|&pk| pk + 1 >= clean - 1).collect();
            let ch = &node.channels()[0];
            assert_eq!(ch.counts().bouts as usize, expected.len(), "{} {}: bouts counted by the node", case["name"], b["signal"]);
            let last = ch.last_bout().expect("a bout");
            assert_eq!(((last.peak - t0) / period) as usize, *expected.last().expect("some"));
            assert!((ch.threshold().expect("learned") / num(&b["threshold"]) - 1.0).abs() < 1e-9);
        }
    }
}

#[test]
fn calibration_equals_numpy_least_squares_and_explicit_loo() {
    let doc = fixture();
    let c = &doc["calibration"];
    let points: Vec<CalibrationPoint> = c["points"]
        .as_array()
        .expect("points")
        .iter()
        .map(|p| {
            let v = arr(p);
            CalibrationPoint { bout_rate: v[0], bout_amplitude: v[1], distance: v[2], wind_speed: f64::NAN }
        })
        .collect();
    for (key, use_amplitude) in [("rate_only", false), ("with_amplitude", true)] {
        let r = &c[key];
        let f = fit(&points, use_amplitude).expect("fits");
        let coef = arr(&r["coef"]);
        let mine = if use_amplitude { vec![f.intercept, f.rate_coef, f.amplitude_coef] } else { vec![f.intercept, f.rate_coef] };
        assert_close(&format!("{key} coefficients"), &mine, &coef);
        for (name, value) in [
            ("r_squared", f.r_squared),
            ("residual_std", f.residual_std),
            ("rmse", f.rmse),
            ("loo_rmse", f.loo_rmse),
            ("loo_rmse_ln", f.loo_rmse_ln),
            ("loo_mean_relative", f.loo_mean_relative),
        ] {
            let want = num(&r[name]);
            assert!((value - want).abs() <= TOL * want.abs(), "{key} {name}: {value} vs numpy {want}");
        }
    }
}
