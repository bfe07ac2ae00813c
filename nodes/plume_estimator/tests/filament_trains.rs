//! On synthetic filament trains (tests/common: Poisson arrivals whose rate falls with
//! distance, through a MOX response) the node's bout rate falls with distance, and a distance
//! model calibrated on some recordings predicts the distance of others; the error is printed
//! (`cargo test -p sillage-plume-estimator --test filament_trains -- --nocapture`).

mod common;

use common::Train;
use sillage_core::msg::{ChemSample, Header, PlumeFeatures};
use sillage_core::{Msg, Nanos, NodeCore, Outbox};
use sillage_plume_estimator::calibration::{fit, CalibrationPoint};
use sillage_plume_estimator::{Params, PlumeEstimator};

const DURATION: f64 = 150.0;

/// Runs the node with default parameters over one recording (RESISTANCE samples, so the
/// default conditioning takes the log-conductance); returns every published message.
fn run(params: &Params, train: &Train, distance: f64, seed: u64) -> (Vec<(f64, PlumeFeatures)>, usize) {
    let (r, filaments) = train.resistance(distance, DURATION, seed);
    let mut node = PlumeEstimator::new(params.clone()).expect("params");
    let mut out = Outbox::new();
    let t0: Nanos = 1_000_000_000_000;
    let period = (train.dt * 1e9).round() as Nanos;
    let step = (params.features.step * 1e9).round() as Nanos;
    let mut next_tick = t0 + step;
    let mut msgs = Vec::new();
    for (k, &v) in r.iter().enumerate() {
        let t = t0 + k as Nanos * period;
        while next_tick <= t {
            node.on_timer(next_tick, 0, &mut out);
            next_tick += step;
        }
        let m = ChemSample { header: Header::new(t, "nose"), channels: vec!["left".into()], values: vec![v], quantity: ChemSample::RESISTANCE };
        node.on_message(t, 0, &Msg::ChemSample(m), &mut out);
    }
    for (_, m) in out.drain() {
        if let Msg::PlumeFeatures(f) = m {
            msgs.push(((f.header.stamp.to_nanos() - t0) as f64 * 1e-9, f));
        }
    }
    (msgs, filaments)
}

/// Non-overlapping full windows after the clean-air start: one calibration point each.
fn windows(msgs: &[(f64, PlumeFeatures)], train: &Train, params: &Params) -> Vec<PlumeFeatures> {
    let w = params.features.window;
    let first = train.clean + w;
    msgs.iter()
        .filter(|(t, f)| *t >= first && ((t - first) / w).fract().abs() < 1e-6 && f.bout_rate.is_finite())
        .map(|(_, f)| f.clone())
        .collect()
}

#[test]
fn bout_rate_falls_with_distance() {
    let (params, train) = (Params::default(), Train::default());
    let distances = [0.5, 1.0, 2.0, 3.0, 4.0];
    let mut rates = Vec::new();
    for (i, &d) in distances.iter().enumerate() {
        let (mut sum, mut n, mut arrivals) = (0.0, 0, 0);
        for seed in 0..2 {
            let (msgs, filaments) = run(&params, &train, d, 100 + 10 * i as u64 + seed);
            arrivals += filaments;
            for f in windows(&msgs, &train, &params) {
                sum += f.bout_rate;
                n += 1;
            }
        }
        let rate = sum / n as f64;
        let true_rate = arrivals as f64 / (2.0 * (DURATION - train.clean));
        eprintln!("distance {d:.1} m: bout rate {rate:.3} Hz over {n} windows; filament rate {true_rate:.3} Hz (model {:.3})", train.rate(d));
        rates.push(rate);
    }
    assert!(rates.windows(2).all(|w| w[1] < w[0]), "bout rate must fall with distance: {rates:?}");
    assert!(rates[0] > 2.0 * rates[4], "and by a usable factor: {rates:?}");
}

#[test]
fn calibrated_distance_estimates_fresh_recordings() {
    let (params, train) = (Params::default(), Train::default());
    let mut points = Vec::new();
    for (i, d) in [0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0].into_iter().enumerate() {
        for seed in 0..3 {
            let (msgs, _) = run(&params, &train, d, 1000 + 10 * i as u64 + seed);
            points.extend(windows(&msgs, &train, &params).iter().filter(|f| f.bout_amplitude > 0.0).map(|f| CalibrationPoint {
                bout_rate: f.bout_rate,
                bout_amplitude: f.bout_amplitude,
                distance: d,
                wind_speed: f64::NAN,
            }));
        }
    }
    for use_amplitude in [false, true] {
        let model = fit(&points, use_amplitude).expect("fits");
        eprintln!(
            "fit (amplitude {use_amplitude}) on {} windows: ln d = {:.3} + {:.3} rate + {:.3} ln amp; R^2 {:.3}, residual std {:.3} ln m, LOO RMSE {:.3} m, LOO mean relative error {:.1} %",
            model.n, model.intercept, model.rate_coef, model.amplitude_coef, model.r_squared, model.residual_std, model.loo_rmse, 100.0 * model.loo_mean_relative
        );
        assert!(model.rate_coef < 0.0, "distance falls with bout rate");
        // The node loads the fit and estimates the distance of recordings it has not seen.
        let mut p = params.clone();
        p.distance = model.to_params();
        let (mut se, mut rel, mut inside, mut n) = (0.0, 0.0, 0, 0);
        for (i, d) in [0.75, 1.75, 2.75, 3.75].into_iter().enumerate() {
            let (msgs, _) = run(&p, &train, d, 5000 + 10 * i as u64);
            for f in windows(&msgs, &train, &p).iter().filter(|f| f.distance.is_finite()) {
                se += (f.distance - d).powi(2);
                rel += (f.distance - d).abs() / d;
                inside += usize::from((f.distance - d).abs() <= 2.0 * f.distance_sigma);
                n += 1;
            }
        }
        let (rmse, mre) = ((se / n as f64).sqrt(), rel / n as f64);
        eprintln!("  held-out recordings: {n} windows, RMSE {rmse:.3} m, mean relative error {:.1} %, within 2 sigma {:.0} %", 100.0 * mre, 100.0 * inside as f64 / n as f64);
        assert!(n >= 20, "enough held-out windows");
        assert!(mre < 0.5, "mean relative error {mre}");
    }
}
