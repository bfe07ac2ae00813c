//! Diagnostics: "plume_estimator: input", "plume_estimator: channel <name>" (one per
//! channel, with its own window features), "plume_estimator: features" (the pooled values as
//! published) and "plume_estimator: distance".

use crate::conditioning::ChannelStatus;
use crate::node::PlumeEstimator;
use crate::params::ThresholdMode;
use crate::window::Features;
use sillage_core::msg::DiagnosticStatus;
use sillage_core::Nanos;

const OK: u8 = DiagnosticStatus::OK;
const WARN: u8 = DiagnosticStatus::WARN;
const ERROR: u8 = DiagnosticStatus::ERROR;
const STALE: u8 = DiagnosticStatus::STALE;

/// Name of an unnamed channel (ChemSample without `channels`).
pub fn index_name(i: usize) -> String {
    format!("channel{i}")
}

/// Whether `name` is [`index_name`]`(i)` (without allocating: checked per sample).
pub fn is_index_name(name: &str, i: usize) -> bool {
    name.strip_prefix("channel").and_then(|n| n.parse::<usize>().ok()) == Some(i)
}

fn name(part: &str) -> String {
    format!("{}: {part}", crate::NODE_NAME)
}

fn opt(v: Option<f64>) -> String {
    v.map_or_else(|| "unknown".to_string(), |x| x.to_string())
}

/// `cv_window`: the counting time of one sub-window (`features.rate_cv_window` times the
/// channels pooled) [s], for the CV a Poisson train of the same rate
/// would show (`1 / sqrt(rate * cv_window)`): a `bout_rate_cv` near it is counting noise.
fn feature_values(f: &Features, cv_window: f64) -> Vec<(&'static str, String)> {
    let poisson_cv = 1.0 / (f.bout_rate * cv_window).sqrt();
    vec![
        ("bouts", f.bouts.to_string()),
        ("bout_rate_hz", f.bout_rate.to_string()),
        ("bout_amplitude", f.bout_amplitude.to_string()),
        ("odor_time_fraction", f.odor_time_fraction.to_string()),
        ("bout_rate_cv", f.bout_rate_cv.to_string()),
        ("bout_rate_cv_poisson", poisson_cv.to_string()),
        ("std_over_mean", f.std_over_mean.to_string()),
        ("coverage", f.coverage.to_string()),
        ("valid_time_s", f.valid.to_string()),
    ]
}

/// Appends the node's statuses to `out`.
pub fn report(n: &PlumeEstimator, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
    input(n, now, out);
    let p = n.params();
    for (ch, inp) in n.channels().iter().zip(n.inputs()) {
        let c = ch.counts();
        let status = inp.conditioner().status();
        let (level, message) = if matches!(status, ChannelStatus::Dead | ChannelStatus::Saturated) {
            (WARN, format!("sensor {}: its samples are {}", status.as_str(), if status == ChannelStatus::Dead { "skipped" } else { "used, baseline frozen" }))
        } else if !ch.ready() {
            (WARN, format!("learning clean-air noise ({:.0} %): no bouts counted yet", 100.0 * ch.learning_progress()))
        } else if ch.features.coverage < p.features.min_coverage {
            (WARN, format!("valid data for {:.0} % of the window (needs {:.0} %)", 100.0 * ch.features.coverage, 100.0 * p.features.min_coverage))
        } else {
            (OK, format!("{} bouts, {:.3} Hz", ch.features.bouts, ch.features.bout_rate))
        };
        let mut v = feature_values(&ch.features, p.features.rate_cv_window);
        v.extend([
            ("threshold", opt(ch.threshold())),
            ("noise_sigma", opt(ch.noise())),
            ("bouts_total", c.bouts.to_string()),
            ("runs_below_threshold", c.rejected.to_string()),
            ("restarts", c.restarts.to_string()),
            ("samples", c.samples.to_string()),
            ("skipped_values", inp.skipped().to_string()),
            ("last_skip", inp.last_fault.map_or("none", |s| s.kind()).to_string()),
            ("conditioning", inp.conditioner().status().as_str().to_string()),
            ("transform", inp.conditioner().transform().as_str().to_string()),
            ("baseline", opt(inp.conditioner().baseline())),
            ("smoothed_derivative", ch.last_derivative().to_string()),
        ]);
        for (kind, count) in crate::conditioning::FAULT_KINDS.iter().zip(inp.faults) {
            if count > 0 {
                v.push((kind, count.to_string()));
            }
        }
        if let Some(b) = ch.last_bout() {
            v.extend([
                ("last_bout_onset_ns", b.onset.to_string()),
                ("last_bout_peak_ns", b.peak.to_string()),
                ("last_bout_amplitude", b.amplitude.to_string()),
            ]);
        }
        out.push(DiagnosticStatus::with(level, &name(&format!("channel {}", ch.name())), &message, &v));
    }
    features(n, out);
    distance(n, out);
}

fn input(n: &PlumeEstimator, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
    let c = n.counts();
    let p = &n.params().input;
    let grid_rate = n.grid_period().map(|t| 1e9 / t as f64);
    let input_rate = n.input_interval().filter(|v| *v > 0.0).map(|v| 1.0 / v);
    let age = n.last_arrival().map(|t| (now - t) as f64 * 1e-9);
    let recent = n.recent_rejections();
    let (level, message) = if let Some((key, e)) = n.design_error() {
        (ERROR, format!("filter design failed for the measured grid rate: {key}: {e}"))
    } else if age.is_none() {
        (STALE, "no chemical sample yet".to_string())
    } else if age.is_some_and(|a| a > p.timeout) {
        (STALE, format!("no sample for {:.1} s (timeout {} s)", age.unwrap_or(0.0), p.timeout))
    } else if grid_rate.is_none() {
        (WARN, format!("measuring the sample rate ({} of {} intervals)", c.rate_probe, crate::node::RATE_PROBE_INTERVALS))
    } else if recent > 0 {
        (WARN, format!("{recent} samples or values rejected in the last window (stale, out of order, malformed, bad value)"))
    } else if let (Some(g), Some(i)) = (grid_rate, input_rate) {
        if (i / g - 1.0).abs() > 0.25 {
            (WARN, format!("input rate {i:.2} Hz differs from the grid rate {g:.2} Hz by more than 25 %"))
        } else {
            (OK, "receiving".to_string())
        }
    } else {
        (OK, "receiving".to_string())
    };
    let v = vec![
        ("received", c.received.to_string()),
        ("accepted", c.accepted.to_string()),
        ("stale", c.stale.to_string()),
        ("out_of_order", c.out_of_order.to_string()),
        ("backward_resets", c.backward_resets.to_string()),
        ("malformed", c.malformed.to_string()),
        ("bad_values", c.bad_values.to_string()),
        ("rate_probe", c.rate_probe.to_string()),
        ("layout_changes", c.layout_changes.to_string()),
        ("too_many_channels", c.too_many_channels.to_string()),
        ("channels", n.channels().len().to_string()),
        ("grid_rate_hz", opt(grid_rate)),
        ("input_rate_hz", opt(input_rate)),
        ("chain_delay_s", opt(n.chain().map(|c| c.delay()))),
        ("last_sample_age_s", opt(age)),
    ];
    out.push(DiagnosticStatus::with(level, &name("input"), &message, &v));
}

fn features(n: &PlumeEstimator, out: &mut Vec<DiagnosticStatus>) {
    let p = n.params();
    let Some(last) = n.last_published() else {
        out.push(DiagnosticStatus::with(WARN, &name("features"), "no output tick yet", &[]));
        return;
    };
    let f = &last.combined;
    let mode = match p.bouts.threshold_mode {
        ThresholdMode::Absolute => "absolute",
        ThresholdMode::Noise => "noise",
    };
    let (level, message) = if f.coverage >= p.features.min_coverage {
        (OK, format!("pooled over {} channels", n.channels().iter().filter(|c| c.features.valid > 0.0).count()))
    } else {
        (WARN, format!("too little valid data ({:.0} % of the window): rates are NaN", 100.0 * f.coverage))
    };
    let pooled = n.channels().iter().filter(|c| c.features.valid > 0.0).count().max(1) as f64;
    let mut v = feature_values(f, p.features.rate_cv_window * pooled);
    v.extend([
        ("window_s", p.features.window.to_string()),
        ("combine", "pooled: sums over channels before dividing; bouts = per-channel mean".to_string()),
        ("threshold_mode", mode.to_string()),
        ("stamp_ns", last.stamp.to_string()),
    ]);
    out.push(DiagnosticStatus::with(level, &name("features"), &message, &v));
}

fn distance(n: &PlumeEstimator, out: &mut Vec<DiagnosticStatus>) {
    let d = &n.params().distance;
    let last = n.last_published();
    let value = last.map_or(f64::NAN, |l| l.distance);
    let sigma = last.map_or(f64::NAN, |l| l.distance_sigma);
    let (level, message) = if !d.calibrated {
        (OK, "uncalibrated: distance is NaN (run 'sillage calibrate')".to_string())
    } else if value.is_nan() {
        (WARN, "calibrated, but the features it needs are unavailable".to_string())
    } else {
        (OK, format!("{value:.2} m +- {sigma:.2} m"))
    };
    let v = vec![
        ("calibrated", d.calibrated.to_string()),
        ("distance_m", value.to_string()),
        ("distance_sigma_m", sigma.to_string()),
        ("intercept", d.intercept.to_string()),
        ("rate_coef", d.rate_coef.to_string()),
        ("use_amplitude", d.use_amplitude.to_string()),
        ("amplitude_coef", d.amplitude_coef.to_string()),
        ("residual_std", d.residual_std.to_string()),
    ];
    out.push(DiagnosticStatus::with(level, &name("distance"), &message, &v));
}
