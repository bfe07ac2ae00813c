use super::*;
use proptest::prelude::*;

const MS: Nanos = 1_000_000;

fn settings() -> RiseSettings {
    RiseSettings { slope: 0.02, slope_tau: 0.1, min_rise: 0.01, delay: 0.0 }
}

/// First-order (exponential) response of gain `a` to a concentration step at `t0` [s]:
/// `a (1 - exp(-(t - t0) / tau))` after the step (the single-time-constant MOX model).
fn step_response(t: f64, t0: f64, a: f64, tau: f64) -> f64 {
    if t <= t0 {
        0.0
    } else {
        a * (1.0 - (-(t - t0) / tau).exp())
    }
}

/// Time from a step to the maximum of `e^(-t/tau) - e^(-t/tau_s)` [s].
fn smoothing_delay(tau: f64, tau_s: f64) -> f64 {
    tau * tau_s * (tau / tau_s).ln() / (tau - tau_s)
}

/// Onsets of a sensor sampled every `dt` [s] for `n` samples.
fn onsets(d: &mut RiseDetector, dt: f64, n: usize, f: impl Fn(f64) -> f64) -> Vec<f64> {
    (0..n).filter_map(|k| d.push((k as f64 * dt * 1e9) as Nanos, f(k as f64 * dt))).map(|t| t as f64 * 1e-9).collect()
}

#[test]
fn a_plane_wave_over_two_sensors_gives_its_analytic_lag() {
    // Plane wave at 0.5 m/s from 40 deg over sensors 0.24 m apart along y: the arrival-time
    // difference is d sin(theta) / U (plane-wave geometry), here 0.3085 s. Both sensors are
    // first-order (tau 1.8 s) with gains 1.0 and 0.6: a fixed-level crossing would shift by
    // tau ln(1/(1 - c/a)) between them, the slope peak must not.
    let lag = 0.24 * 40f64.to_radians().sin() / 0.5;
    let t0 = 2.013;
    let mut a = RiseDetector::new(settings());
    let mut b = RiseDetector::new(settings());
    let ta = onsets(&mut a, 0.05, 200, |t| step_response(t, t0, 1.0, 1.8));
    let tb = onsets(&mut b, 0.05, 200, |t| 0.3 + step_response(t, t0 + lag, 0.6, 1.8));
    assert_eq!((ta.len(), tb.len()), (1, 1), "{ta:?} {tb:?}");
    assert!((tb[0] - ta[0] - lag).abs() < 0.01, "lag {} vs {lag}", tb[0] - ta[0]);
    // The onset itself: the smoothed slope of a step response is the first-order filter's
    // response to a decaying exponential, (e^(-t/tau) - e^(-t/tau_s)) up to a factor, whose
    // maximum is at tau tau_s ln(tau / tau_s) / (tau - tau_s) after the step; within a sample.
    assert!((ta[0] - t0 - smoothing_delay(1.8, 0.1)).abs() < 0.05, "{} vs {}", ta[0], t0 + smoothing_delay(1.8, 0.1));
}

#[test]
fn a_second_hit_during_the_decay_is_an_onset_and_noise_is_not() {
    // A hit at 1 s, decay (tau 11 s) from 3 s, a second hit at 6 s.
    let f = |t: f64| {
        let first = step_response(t, 1.0, 0.5, 1.8).min(step_response(3.0, 1.0, 0.5, 1.8));
        let decay = if t > 3.0 { first * (-(t - 3.0) / 11.0).exp() } else { first };
        decay + step_response(t, 6.0, 0.3, 1.8)
    };
    let mut d = RiseDetector::new(settings());
    let got = onsets(&mut d, 0.05, 240, f);
    assert_eq!(got.len(), 2, "{got:?}");
    let lag = smoothing_delay(1.8, 0.1);
    assert!((got[0] - 1.0 - lag).abs() < 0.05 && (got[1] - 6.0 - lag).abs() < 0.05, "{got:?}");
    // A bump below min_rise gains too little.
    let mut d = RiseDetector::new(RiseSettings { min_rise: 0.5, ..settings() });
    assert!(onsets(&mut d, 0.05, 240, f).is_empty());
}

#[test]
fn the_delay_is_subtracted_and_bad_samples_are_skipped() {
    let mut plain = RiseDetector::new(settings());
    let mut late = RiseDetector::new(RiseSettings { delay: 0.25, ..settings() });
    let f = |t: f64| step_response(t, 1.0, 1.0, 1.8);
    let a = onsets(&mut plain, 0.05, 100, f);
    let b = onsets(&mut late, 0.05, 100, |t| if (t - 1.2).abs() < 1e-9 { f64::NAN } else { f(t) });
    assert_eq!(a.len(), 1);
    assert_eq!(b.len(), 1);
    assert!((a[0] - b[0] - 0.25).abs() < 0.02, "{a:?} {b:?}");
    assert_eq!(late.push(0, 1.0), None, "an older stamp is ignored");
}

proptest! {
    /// The onset does not move with the sensor's gain or offset (a level crossing would).
    #[test]
    fn onsets_are_invariant_to_gain_and_offset(gain in 0.2f64..20.0, offset in -5.0f64..5.0, t0 in 1.0f64..1.05) {
        let mut unit = RiseDetector::new(settings());
        let mut scaled = RiseDetector::new(RiseSettings { slope: settings().slope * gain.min(1.0), ..settings() });
        let a = onsets(&mut unit, 0.05, 120, |t| step_response(t, t0, 1.0, 1.8));
        let b = onsets(&mut scaled, 0.05, 120, |t| offset + step_response(t, t0, gain, 1.8));
        prop_assert_eq!(a.len(), 1);
        prop_assert_eq!(b.len(), 1);
        prop_assert!((a[0] - b[0]).abs() < 1e-6, "{:?} {:?}", a, b);
    }

    /// Every onset lies within the samples seen, and onsets come in time order.
    #[test]
    fn onsets_are_ordered_and_inside_the_record(xs in proptest::collection::vec(-1.0f64..1.0, 2..200)) {
        let mut d = RiseDetector::new(settings());
        let mut last = Nanos::MIN;
        for (k, x) in xs.iter().enumerate() {
            if let Some(t) = d.push(k as Nanos * 50 * MS, *x) {
                prop_assert!(t >= 0 && t <= k as Nanos * 50 * MS && t >= last);
                last = t;
            }
        }
    }
}
