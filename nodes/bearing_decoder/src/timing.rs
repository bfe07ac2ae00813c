//! The timing cue: onset lags between sensors turned into a bearing with a confidence.
//!
//! Per pair, the lag search is limited to what a plane wave can produce,
//! `|lag| <= |b| / c_lo * (1 + lag_margin)` with `c_lo = max(U - |v|, min_speed)` (U the air
//! speed, v the robot's speed), and never beyond `max_lag` (also the window when U is unknown).
//! Two sensors: the pair's lag, the air speed and the wind give the bearing
//! ([`crate::plane_wave::solve_pair`], [`crate::front_back::resolve`]); an unknown air speed
//! means no bearing. Three or more: every pair with enough matched onsets is a row of the
//! least-squares plane-wave fit; pairs that do not span the plane mean no bearing.
//!
//! Confidence (0..1) is the product of
//! - matches `n / (n + confidence_matches)` (n: inlier onset pairs; mean per pair for N sensors),
//! - consistency `1 / (1 + (sigma_theta / bearing_spread)^2)`, with sigma_theta the bearing
//!   spread the inlier lag spread implies: for two sensors `U sigma_lag / (d cos theta)`
//!   (docs/references.md, the plane-wave sensitivity; cos theta floored at 0.2 near the
//!   clamp), for N sensors `c sigma / r` (sigma: lag spread pooled with the fit residual, c: the
//!   fitted speed, r: the rms pair baseline),
//! - the inlier fraction,
//! - a clamp factor falling linearly from 1 at `|U lag / d| = 1` to 0 at `1 + lag_margin`,
//! - `unresolved_scale` when the front/back choice is a guess.

use crate::air::{AirContext, SpeedSource};
use crate::front_back::{resolve, Resolution};
use crate::geometry::{Layout, SensorArray};
use crate::lag::{LagEstimate, LagEstimator, LagSettings};
use crate::onsets::OnsetTrain;
use crate::plane_wave::{fit_plane, solve_pair, FitFailure, LagRow};
use sillage_core::Nanos;

/// Settings of the timing cue.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimingSettings {
    /// Correlogram bin [ns].
    pub bin: Nanos,
    /// Largest lag ever searched [s].
    pub max_lag: f64,
    /// Extra fraction of the plane-wave lag bound searched (noise near +-90 deg).
    pub lag_margin: f64,
    /// Matching half-width around the correlogram peak [ns].
    pub tolerance: Nanos,
    /// Outlier threshold [robust standard deviations].
    pub mad_k: f64,
    /// Fewest inlier onset pairs for a lag to count.
    pub min_matches: usize,
    /// Inlier pairs at which the match factor is 0.5.
    pub confidence_matches: f64,
    /// Implied bearing spread at which the consistency factor is 0.5 [rad].
    pub bearing_spread: f64,
    /// Air speeds below this are still air [m/s].
    pub min_speed: f64,
    /// Smallest angle between upwind and the sensor axis that settles front/back [rad].
    pub min_angle: f64,
    /// Confidence factor when front/back is unresolved (0..1).
    pub unresolved_scale: f64,
}

/// A bearing from timing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimingCue {
    /// Direction the odor comes from [rad], base_link.
    pub bearing: f64,
    /// Lag `t_b - t_a` of the first pair (measured for two sensors, fitted for more) [s].
    pub lag: f64,
    /// 0..1.
    pub confidence: f64,
    /// Inlier onset pairs used (summed over pairs).
    pub matches: usize,
    /// Inlier lag spread [s] (pooled over pairs).
    pub spread: f64,
    /// Front speed relative to the sensors [m/s] (from the air for two sensors, fitted for more).
    pub speed: f64,
    /// How the mirror candidate was settled.
    pub resolution: Resolution,
    /// Whether the lag exceeded the plane-wave bound and was clamped.
    pub clamped: bool,
    /// rms residual of the plane-wave fit [s] (N sensors only).
    pub residual: Option<f64>,
    /// Age of the estimate [s]: 0 when computed from the onsets now, > 0 when an earlier one
    /// is held (turned into the current base_link with the heading change).
    pub age: f64,
}

/// Why the timing cue has nothing to say.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TimingSilence {
    /// No pair has onsets within the lag window of each other.
    NoMatches,
    /// Fewer inlier pairs than `min_matches`.
    TooFewMatches { matches: usize },
    /// Two sensors need the air speed (the source says why it is missing).
    NoAirSpeed { source: SpeedSource },
    /// The usable pairs do not span the plane (N sensors).
    Singular,
    /// The fitted lags are all below half a bin: no direction.
    NoDelay,
    /// The pair equation degenerated (`b - lag v` vanished).
    Degenerate,
}

impl TimingSilence {
    /// Lower-case name for diagnostics.
    pub fn as_str(&self) -> &'static str {
        match self {
            TimingSilence::NoMatches => "no_matches",
            TimingSilence::TooFewMatches { .. } => "too_few_matches",
            TimingSilence::NoAirSpeed { .. } => "no_air_speed",
            TimingSilence::Singular => "singular_fit",
            TimingSilence::NoDelay => "no_delay",
            TimingSilence::Degenerate => "degenerate",
        }
    }
}

/// The timing decoder with its scratch space.
#[derive(Debug, Clone)]
pub struct TimingDecoder {
    settings: TimingSettings,
    estimator: LagEstimator,
    rows: Vec<LagRow>,
}

fn factor(x: f64, half: f64) -> f64 {
    1.0 / (1.0 + (x / half).powi(2))
}

impl TimingDecoder {
    /// A decoder with `settings`.
    pub fn new(settings: TimingSettings) -> TimingDecoder {
        TimingDecoder { settings, estimator: LagEstimator::new(), rows: Vec::new() }
    }

    /// The settings in use.
    pub fn settings(&self) -> &TimingSettings {
        &self.settings
    }

    fn lag_settings(&self, length: f64, air: &AirContext) -> LagSettings {
        let s = &self.settings;
        let bound = match air.speed {
            Some(u) => {
                let c_lo = (u - air.velocity.norm()).max(s.min_speed);
                (length / c_lo * (1.0 + s.lag_margin)).min(s.max_lag)
            }
            None => s.max_lag,
        };
        let bin = s.bin.max(1);
        LagSettings {
            bin,
            k_max: (bound / (bin as f64 * 1e-9)).ceil() as i64,
            kernel: s.tolerance / bin,
            tolerance: s.tolerance,
            mad_k: s.mad_k,
        }
    }

    /// Confidence from the matches, the implied bearing spread [rad] and the inlier fraction.
    fn confidence(&self, matches: f64, sigma_theta: f64, inlier_fraction: f64) -> f64 {
        let s = &self.settings;
        matches / (matches + s.confidence_matches) * factor(sigma_theta, s.bearing_spread) * inlier_fraction
    }

    /// The timing bearing from the onset trains (one per sensor of `array`, pruned to the
    /// window) and the air.
    pub fn decode(&mut self, array: &SensorArray, trains: &[OnsetTrain], air: &AirContext) -> Result<TimingCue, TimingSilence> {
        match array.layout() {
            Layout::Pair => self.decode_pair(array, trains, air),
            Layout::Planar => self.decode_planar(array, trains, air),
        }
    }

    fn estimate(&mut self, array: &SensorArray, trains: &[OnsetTrain], pair: usize, air: &AirContext) -> Option<LagEstimate> {
        let p = &array.pairs()[pair];
        let ls = self.lag_settings(p.length(), air);
        self.estimator.estimate(trains[p.a].as_slice(), trains[p.b].as_slice(), &ls)
    }

    fn decode_pair(&mut self, array: &SensorArray, trains: &[OnsetTrain], air: &AirContext) -> Result<TimingCue, TimingSilence> {
        let speed = air.speed.ok_or(TimingSilence::NoAirSpeed { source: air.source })?;
        let e = self.estimate(array, trains, 0, air).ok_or(TimingSilence::NoMatches)?;
        let s = self.settings;
        if e.inliers < s.min_matches.max(1) {
            return Err(TimingSilence::TooFewMatches { matches: e.inliers });
        }
        let baseline = array.pairs()[0].baseline;
        let sol = solve_pair(&baseline, e.lag, speed, &air.velocity).ok_or(TimingSilence::Degenerate)?;
        let (bearing, resolution) = resolve(sol.axis, sol.half_angle, air.upwind, s.min_angle);
        let excess = (sol.ratio.abs() - 1.0).max(0.0);
        let clamp_factor = (1.0 - excess / s.lag_margin.max(1e-6)).clamp(0.0, 1.0);
        let unresolved = if resolution.is_unresolved() { s.unresolved_scale } else { 1.0 };
        let g = (baseline - air.velocity * e.lag).norm();
        let cos_theta = (1.0 - sol.ratio.clamp(-1.0, 1.0).powi(2)).sqrt().max(0.2);
        let sigma_theta = speed * e.spread / (g * cos_theta);
        let confidence = self.confidence(e.inliers as f64, sigma_theta, e.inlier_fraction()) * clamp_factor * unresolved;
        Ok(TimingCue {
            bearing,
            lag: e.lag,
            confidence: confidence.clamp(0.0, 1.0),
            matches: e.inliers,
            spread: e.spread,
            speed: speed + air.velocity.dot(&crate::geometry::unit(bearing)),
            resolution,
            clamped: sol.clamped(),
            residual: None,
            age: 0.0,
        })
    }

    fn decode_planar(&mut self, array: &SensorArray, trains: &[OnsetTrain], air: &AirContext) -> Result<TimingCue, TimingSilence> {
        let s = self.settings;
        let bin = s.bin.max(1) as f64 * 1e-9;
        let floor2 = bin * bin / 12.0; // variance of a uniform quantisation over one bin
        self.rows.clear();
        let (mut inliers, mut matched, mut var_sum, mut best) = (0usize, 0usize, 0.0, 0usize);
        for i in 0..array.pairs().len() {
            let Some(e) = self.estimate(array, trains, i, air) else { continue };
            best = best.max(e.inliers);
            if e.inliers < s.min_matches.max(1) {
                continue;
            }
            inliers += e.inliers;
            matched += e.matched;
            var_sum += e.inliers as f64 * e.spread * e.spread;
            let offset = -array.pairs()[i].baseline;
            self.rows.push(LagRow { offset, lag: e.lag, weight: e.inliers as f64 / (e.spread * e.spread + floor2) });
        }
        match self.rows.len() {
            0 if best == 0 => return Err(TimingSilence::NoMatches),
            0 => return Err(TimingSilence::TooFewMatches { matches: best }),
            1 => return Err(TimingSilence::Singular),
            _ => {}
        }
        let fit = fit_plane(&self.rows, 0.5 * bin).map_err(|f| match f {
            FitFailure::TooFewRows { .. } | FitFailure::Singular { .. } => TimingSilence::Singular,
            FitFailure::NoDelay => TimingSilence::NoDelay,
        })?;
        let pooled = (var_sum / inliers as f64).sqrt();
        let sigma = (pooled * pooled + fit.residual * fit.residual).sqrt();
        let per_pair = inliers as f64 / self.rows.len() as f64;
        let r = (self.rows.iter().map(|r| r.offset.norm_squared()).sum::<f64>() / self.rows.len() as f64).sqrt();
        let confidence = self.confidence(per_pair, sigma * fit.speed / r, inliers as f64 / matched.max(1) as f64);
        let first = &array.pairs()[0];
        Ok(TimingCue {
            bearing: fit.bearing,
            lag: (-first.baseline).dot(&fit.slowness),
            confidence: confidence.clamp(0.0, 1.0),
            matches: inliers,
            spread: pooled,
            speed: fit.speed,
            resolution: Resolution::Coincident,
            clamped: false,
            residual: Some(fit.residual),
            age: 0.0,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::{unit, Vec2};

    const MS: Nanos = 1_000_000;
    const DEG: f64 = std::f64::consts::PI / 180.0;

    fn settings() -> TimingSettings {
        TimingSettings {
            bin: 5 * MS,
            max_lag: 1.0,
            lag_margin: 0.25,
            tolerance: 50 * MS,
            mad_k: 3.0,
            min_matches: 3,
            confidence_matches: 5.0,
            bearing_spread: 5.0 * DEG,
            min_speed: 0.05,
            min_angle: 15.0 * DEG,
            unresolved_scale: 0.5,
        }
    }

    fn air(speed: Option<f64>, upwind: Option<f64>) -> AirContext {
        AirContext { speed, upwind, velocity: Vec2::zeros(), source: SpeedSource::Measured, compensated: false }
    }

    /// Onset trains for a front from `theta` at speed `c`: onsets every 0.8 s.
    fn trains(array: &SensorArray, theta: f64, c: f64, n: usize) -> Vec<OnsetTrain> {
        let s = -unit(theta) / c;
        (0..array.len())
            .map(|i| {
                let mut t = OnsetTrain::new(64);
                for k in 0..n {
                    let at = 1_000 * MS + k as Nanos * 800 * MS + (array.position(i).dot(&s) * 1e9).round() as Nanos;
                    t.push(at, 1, 10 * MS);
                    t.push(at + 300 * MS, -1, 10 * MS);
                }
                t
            })
            .collect()
    }

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn pair_gives_the_bearing_and_needs_the_air_speed() {
        let a = SensorArray::new(&names(&["left", "right"]), &[0.0, 0.0], &[0.1, -0.1]).expect("valid");
        let tr = trains(&a, 30.0 * DEG, 0.5, 10);
        let mut d = TimingDecoder::new(settings());
        let cue = d.decode(&a, &tr, &air(Some(0.5), Some(30.0 * DEG))).expect("cue");
        assert!((cue.lag - 0.2).abs() < 1e-6, "{cue:?}");
        assert!((cue.bearing - 30.0 * DEG).abs() < 1e-4);
        assert_eq!(cue.resolution, Resolution::ByWind);
        assert!(cue.confidence > 0.6, "{cue:?}");
        let unresolved = d.decode(&a, &tr, &air(Some(0.5), None)).expect("cue");
        assert_eq!(unresolved.resolution, Resolution::NoWind);
        assert!((unresolved.confidence - 0.5 * cue.confidence).abs() < 1e-12);
        assert_eq!(d.decode(&a, &tr, &air(None, None)), Err(TimingSilence::NoAirSpeed { source: SpeedSource::Measured }));
        let few = trains(&a, 30.0 * DEG, 0.5, 2);
        assert_eq!(d.decode(&a, &few, &air(Some(0.5), None)), Err(TimingSilence::TooFewMatches { matches: 2 }));
    }

    #[test]
    fn triangle_fits_the_full_direction_without_air_speed() {
        let a = SensorArray::new(&names(&["l", "r", "f"]), &[0.0, 0.0, 0.2], &[0.1, -0.1, 0.0]).expect("valid");
        let tr = trains(&a, -140.0 * DEG, 0.6, 10);
        let cue = TimingDecoder::new(settings()).decode(&a, &tr, &air(None, None)).expect("cue");
        assert!((cue.bearing + 140.0 * DEG).abs() < 0.01, "{}", cue.bearing / DEG);
        assert!((cue.speed - 0.6).abs() < 0.01, "{cue:?}");
        assert!(cue.residual.expect("fit") < 1e-3);
        // Only one sensor pair has onsets: the fit is singular.
        let mut one = tr.clone();
        one[2].clear();
        assert_eq!(TimingDecoder::new(settings()).decode(&a, &one, &air(None, None)), Err(TimingSilence::Singular));
    }
}
