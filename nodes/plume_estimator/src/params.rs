//! The node's parameters: one typed struct, units in brackets, validated as a whole.
//!
//! Published defaults are marked with their source; values the project chose are marked
//! "project default". The cascade's time constants follow docs/references.md's summary of
//! the 2016 bout method, which marks them as unverified there: "as summarised in
//! docs/references.md".

use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, NodeParams, ParamError};

/// Parameters of the plume estimator.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Params {
    /// Input handling: sample grid, gaps, stale samples.
    pub input: InputParams,
    /// The band-pass that turns the conditioned signal into a smoothed derivative.
    pub filter: FilterParams,
    /// Bout detection on the smoothed derivative.
    pub bouts: BoutParams,
    /// Windowed features and the output rate.
    pub features: FeatureParams,
    /// Distance model (fitted by `sillage calibrate`).
    pub distance: DistanceParams,
    /// The optional wind and odometry inputs (the distance model's wind covariate).
    pub wind: WindParams,
    /// Channel conditioning, shared with the event encoder (see
    /// `sillage_event_encoder::conditioning`): transform to "larger = more gas", calibration,
    /// baseline removal, rail and stuck detection. Node-wide (no per-channel overrides here).
    pub conditioning: crate::conditioning::ConditioningParams,
}

/// Input handling.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct InputParams {
    /// Rate of the uniform grid the filters run on [Hz]; 0 = the median rate of the first 8
    /// sample intervals (the samples before are used only to measure it). Set it to at most
    /// the sensor's rate: the grid is filled by linear interpolation, not low-pass decimation.
    pub sample_rate: f64,
    /// A channel gap longer than this restarts its filter chain at the next sample [s] (> 0);
    /// shorter gaps are bridged by linear interpolation on the grid.
    pub max_gap: f64,
    /// A sample whose stamp differs from the receive time by more than this is stale and
    /// dropped [s]; 0 = no check (bag replay with receive times far from stamps).
    pub max_age: f64,
    /// No accepted sample for this long: the input diagnostic turns STALE [s] (> 0).
    pub timeout: f64,
    /// A stamp more than this before the last accepted one restarts the estimator (a bag
    /// loop, a restarted simulation) instead of being dropped as out of order [s] (> 0).
    pub backward_reset: f64,
    /// Most channels tracked; further channels are ignored and reported (1..=64).
    pub max_channels: usize,
}

impl Default for InputParams {
    fn default() -> Self {
        InputParams { sample_rate: 0.0, max_gap: 1.0, max_age: 0.0, timeout: 2.0, backward_reset: 1.0, max_channels: 8 }
    }
}

/// Which filter produces the smoothed derivative.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FilterKind {
    /// Low-pass, first difference, exponential smoothing (the 2016 bout method).
    Cascade,
    /// One causal linear-phase FIR low-pass differentiator (the 2020 improvement).
    Fir,
}

/// The low-pass stage of the cascade.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LowPassKind {
    /// Gaussian kernel (truncated at 4 sigma, delayed by its radius to be causal).
    Gaussian,
    /// Butterworth (bilinear transform, second-order sections).
    Butterworth,
}

/// The band-pass.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FilterParams {
    /// `cascade` or `fir`.
    pub kind: FilterKind,
    /// Low-pass stage of the cascade: `gaussian` or `butterworth`.
    pub lowpass: LowPassKind,
    /// Standard deviation of the Gaussian low-pass [s] (> 0). Default 0.03 s: a kernel "of a
    /// few samples" at 100 Hz, as summarised in docs/references.md.
    pub gaussian_sigma: f64,
    /// Order of the Butterworth low-pass (1..=8). Project default.
    pub butterworth_order: usize,
    /// Cut-off (-3 dB) of the Butterworth low-pass [Hz] (below the grid's Nyquist frequency).
    /// Project default.
    pub butterworth_cutoff: f64,
    /// Half-life of the exponential smoothing of the derivative [s] (> 0). Default 0.3 s, as
    /// summarised in docs/references.md.
    pub ema_half_life: f64,
    /// Cut-off of the FIR low-pass differentiator [Hz]. The 2020 work tunes it jointly with
    /// the amplitude threshold per wind speed; this default is the project's.
    pub fir_cutoff: f64,
    /// Length of the FIR low-pass [s]: `round(fir_length * rate)` taps, made odd; its delay is
    /// half of it. Project default.
    pub fir_length: f64,
}

impl Default for FilterParams {
    fn default() -> Self {
        FilterParams {
            kind: FilterKind::Cascade,
            lowpass: LowPassKind::Gaussian,
            gaussian_sigma: 0.03,
            butterworth_order: 2,
            butterworth_cutoff: 2.0,
            ema_half_life: 0.3,
            fir_cutoff: 2.0,
            fir_length: 1.0,
        }
    }
}

/// How the bout amplitude threshold is set.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ThresholdMode {
    /// `bouts.threshold` in derivative units.
    Absolute,
    /// `bouts.noise_factor` times the clean-air noise of the smoothed derivative, learned over
    /// the first `bouts.learn_time` of each channel (no bouts are counted until then).
    Noise,
}

/// Bout detection.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BoutParams {
    /// `absolute` or `noise`.
    pub threshold_mode: ThresholdMode,
    /// Smallest bout amplitude for `absolute` [signal units / s] (>= 0).
    pub threshold: f64,
    /// Threshold as a multiple of the clean-air noise for `noise` (> 0). Project default.
    pub noise_factor: f64,
    /// Count only runs whose smoothed derivative ends above zero (the signal really rises);
    /// off = every run above the threshold, also the recovery after a fast fall. Project
    /// default.
    pub positive_peak: bool,
    /// Clean-air learning time at the start of each channel [s] (> 0): the noise of the
    /// smoothed derivative is its robust standard deviation (1.4826 x median absolute
    /// deviation) over this time. The sensor must sit in clean air then.
    pub learn_time: f64,
}

impl Default for BoutParams {
    fn default() -> Self {
        BoutParams { threshold_mode: ThresholdMode::Noise, threshold: 0.0, noise_factor: 5.0, positive_peak: true, learn_time: 5.0 }
    }
}

/// What counts as odor time for the odor-time fraction (the PlumeFeatures `intermittency`
/// field carries that fraction).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OdorTimeRule {
    /// The rise phases of accepted bouts (from where the smoothed derivative turns positive
    /// to the peak): a MOX sensor's response rises only while fresh gas reaches it, its slow
    /// recovery says nothing about presence. The fraction is then the share of time in bout
    /// rises, not the intermittency of the concentration.
    RisePhases,
    /// The conditioned (baseline-free) signal exceeds `features.odor_level` (a level
    /// intermittency of the sensor response).
    AboveLevel,
}

/// Windowed features.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FeatureParams {
    /// Window length [s]; a whole multiple of `step` and of `rate_cv_window`. Project default.
    pub window: f64,
    /// Output period [s] (> 0): a PlumeFeatures message every `step`.
    pub step: f64,
    /// Sub-window length for the coefficient of variation of the bout rate (published as
    /// `edge_index`) [s]; a whole multiple of `step`, at most half the window.
    pub rate_cv_window: f64,
    /// Smallest fraction of the window with valid data for the rates to be published
    /// (0 < x <= 1); below it the rates, odor-time fraction and distance are NaN.
    pub min_coverage: f64,
    /// What counts as odor time: `rise_phases` or `above_level`.
    pub odor_time: OdorTimeRule,
    /// Level above which the signal counts as odor for `above_level` [conditioned signal
    /// units] (> 0 when `odor_time` is `above_level`).
    pub odor_level: f64,
}

impl Default for FeatureParams {
    fn default() -> Self {
        FeatureParams {
            window: 20.0,
            step: 0.5,
            rate_cv_window: 4.0,
            min_coverage: 0.5,
            odor_time: OdorTimeRule::RisePhases,
            odor_level: 0.0,
        }
    }
}

/// Distance model `ln(d / 1 m) = intercept + rate_coef * bout_rate [+ amplitude_coef *
/// ln(bout_amplitude)]`, fitted by `sillage calibrate`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct DistanceParams {
    /// Whether the coefficients below are a fit; `false` publishes NaN distances.
    pub calibrated: bool,
    /// Intercept [ln m].
    pub intercept: f64,
    /// Coefficient of the bout rate [ln m per Hz] (negative: rate falls with distance).
    pub rate_coef: f64,
    /// Whether the model uses the bout amplitude.
    pub use_amplitude: bool,
    /// Coefficient of ln(bout amplitude) [ln m per ln(signal units / s)].
    pub amplitude_coef: f64,
    /// Whether the model uses the mean true wind speed over the window (needs `wind`).
    pub use_wind: bool,
    /// Coefficient of ln(wind speed / (1 m/s)) [ln m per ln(m/s)].
    pub wind_coef: f64,
    /// Standard deviation of the calibration residuals [ln m] (>= 0). `distance_sigma =
    /// distance * sqrt(residual_std^2 + rate_coef^2 * bout_rate / T)` with T the pooled valid
    /// time of the window: the residual and the Poisson counting error of the rate,
    /// propagated to first order.
    pub residual_std: f64,
}

/// The optional wind input (for the distance model's wind covariate). Relative vs true wind,
/// lever arm and still air mean what `sillage_air` says, as in every node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WindParams {
    /// Below this mean true wind speed the air is still and the wind model gives no distance
    /// [m/s] (> 0).
    pub min_speed: f64,
    /// A base_link wind message is the relative wind at the moving anemometer (true wind =
    /// relative + anemometer velocity from odometry); false: it is already the true wind.
    pub relative: bool,
    /// Anemometer x in base_link [m].
    pub anemometer_x: f64,
    /// Anemometer y in base_link [m].
    pub anemometer_y: f64,
    /// An odometry message is valid this long for the compensation [s] (> 0).
    pub odom_timeout: f64,
}

impl Default for WindParams {
    fn default() -> Self {
        let a = sillage_air::AirParams::default();
        WindParams { min_speed: a.min_speed, relative: a.relative, anemometer_x: a.anemometer_x, anemometer_y: a.anemometer_y, odom_timeout: 0.5 }
    }
}

impl WindParams {
    /// The shared air parameters among these.
    pub fn air(&self) -> sillage_air::AirParams {
        sillage_air::AirParams { relative: self.relative, anemometer_x: self.anemometer_x, anemometer_y: self.anemometer_y, min_speed: self.min_speed }
    }
}

impl Default for DistanceParams {
    fn default() -> Self {
        DistanceParams {
            calibrated: false,
            intercept: 0.0,
            rate_coef: 0.0,
            use_amplitude: false,
            amplitude_coef: 0.0,
            use_wind: false,
            wind_coef: 0.0,
            residual_std: 0.0,
        }
    }
}

fn positive(v: f64) -> bool {
    v.is_finite() && v > 0.0
}

/// Whether `a` is a whole multiple of `b` (to 1e-6 relative); returns the multiple.
pub(crate) fn multiple(a: f64, b: f64) -> Option<usize> {
    let k = (a / b).round();
    ((a / b - k).abs() <= 1e-6 * k.max(1.0) && (1.0..=1e6).contains(&k)).then_some(k as usize)
}

impl NodeParams for Params {
    fn validate(&self) -> Result<(), ParamError> {
        let i = &self.input;
        ensure(i.sample_rate.is_finite() && i.sample_rate >= 0.0, "input.sample_rate", "must be >= 0 [Hz] (0 = measure)")?;
        ensure(i.sample_rate == 0.0 || (0.1..=100_000.0).contains(&i.sample_rate), "input.sample_rate", "must be in 0.1..=100000 [Hz] or 0")?;
        ensure(positive(i.max_gap), "input.max_gap", "must be > 0 [s]")?;
        ensure(i.max_age.is_finite() && i.max_age >= 0.0, "input.max_age", "must be >= 0 [s] (0 = off)")?;
        ensure(positive(i.timeout), "input.timeout", "must be > 0 [s]")?;
        ensure(positive(i.backward_reset), "input.backward_reset", "must be > 0 [s]")?;
        ensure((1..=64).contains(&i.max_channels), "input.max_channels", "must be in 1..=64")?;

        let f = &self.filter;
        ensure(positive(f.gaussian_sigma), "filter.gaussian_sigma", "must be > 0 [s]")?;
        ensure(
            (1..=crate::filters::MAX_BUTTERWORTH_ORDER).contains(&f.butterworth_order),
            "filter.butterworth_order",
            format!("must be in 1..={}", crate::filters::MAX_BUTTERWORTH_ORDER),
        )?;
        ensure(positive(f.butterworth_cutoff), "filter.butterworth_cutoff", "must be > 0 [Hz]")?;
        ensure(positive(f.ema_half_life), "filter.ema_half_life", "must be > 0 [s]")?;
        ensure(positive(f.fir_cutoff), "filter.fir_cutoff", "must be > 0 [Hz]")?;
        ensure(positive(f.fir_length), "filter.fir_length", "must be > 0 [s]")?;

        let b = &self.bouts;
        ensure(b.threshold.is_finite() && b.threshold >= 0.0, "bouts.threshold", "must be >= 0 [signal units / s]")?;
        ensure(positive(b.noise_factor), "bouts.noise_factor", "must be > 0")?;
        ensure(positive(b.learn_time) && b.learn_time <= 600.0, "bouts.learn_time", "must be in (0, 600] [s]")?;

        let w = &self.features;
        ensure(positive(w.step), "features.step", "must be > 0 [s]")?;
        ensure(positive(w.window), "features.window", "must be > 0 [s]")?;
        let bins = multiple(w.window, w.step);
        ensure(bins.is_some(), "features.window", format!("must be a whole multiple of features.step ({} s)", w.step))?;
        ensure(bins.is_some_and(|n| n <= 100_000), "features.window", "must be at most 100000 steps")?;
        ensure(positive(w.rate_cv_window), "features.rate_cv_window", "must be > 0 [s]")?;
        ensure(multiple(w.rate_cv_window, w.step).is_some(), "features.rate_cv_window", format!("must be a whole multiple of features.step ({} s)", w.step))?;
        ensure(
            multiple(w.window, w.rate_cv_window).is_some_and(|m| m >= 2),
            "features.rate_cv_window",
            format!("must divide features.window ({} s) into at least 2 parts", w.window),
        )?;
        ensure(w.min_coverage.is_finite() && w.min_coverage > 0.0 && w.min_coverage <= 1.0, "features.min_coverage", "must be in (0, 1]")?;
        ensure(w.odor_level.is_finite() && w.odor_level >= 0.0, "features.odor_level", "must be >= 0")?;
        ensure(
            w.odor_time != OdorTimeRule::AboveLevel || w.odor_level > 0.0,
            "features.odor_level",
            "must be > 0 when features.odor_time is 'above_level'",
        )?;

        self.conditioning.check("conditioning")?;

        let d = &self.distance;
        ensure(d.intercept.is_finite(), "distance.intercept", "must be finite [ln m]")?;
        ensure(d.rate_coef.is_finite(), "distance.rate_coef", "must be finite [ln m / Hz]")?;
        ensure(d.amplitude_coef.is_finite(), "distance.amplitude_coef", "must be finite")?;
        ensure(d.wind_coef.is_finite(), "distance.wind_coef", "must be finite [ln m / ln(m/s)]")?;
        self.wind.air().check("wind")?;
        ensure(positive(self.wind.odom_timeout), "wind.odom_timeout", "must be > 0 [s]")?;
        ensure(d.residual_std.is_finite() && d.residual_std >= 0.0, "distance.residual_std", "must be >= 0 [ln m]")?;

        if i.sample_rate > 0.0 {
            let dt = crate::grid::period_ns(i.sample_rate) as f64 * 1e-9;
            crate::chain::BoutChain::design(f, dt).map_err(|e| ParamError::OutOfRange { key: design_key(f, &e).into(), reason: e.to_string() })?;
        }
        Ok(())
    }
}

/// The parameter a design error is about.
pub(crate) fn design_key(f: &FilterParams, e: &crate::filters::PlumeError) -> &'static str {
    use crate::filters::PlumeError;
    match (f.kind, f.lowpass, e) {
        (_, _, PlumeError::Period { .. }) => "input.sample_rate",
        (FilterKind::Fir, _, PlumeError::Size { .. }) => "filter.fir_length",
        (FilterKind::Fir, _, _) => "filter.fir_cutoff",
        (FilterKind::Cascade, LowPassKind::Gaussian, _) => "filter.gaussian_sigma",
        (FilterKind::Cascade, LowPassKind::Butterworth, PlumeError::Size { .. }) => "filter.butterworth_order",
        (FilterKind::Cascade, LowPassKind::Butterworth, _) => "filter.butterworth_cutoff",
    }
}
