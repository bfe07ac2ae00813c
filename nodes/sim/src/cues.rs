//! How good the odor cues are in closed loop: the graph's `odor_bearing` and
//! `plume_features` against the world's truth, while the robot searches.
//!
//! Definitions (angles [rad] in the robot frame base_link, REP 103, wrapped to (-pi, pi];
//! distances planar [m]; the truth is the world's, never an estimate):
//! - *true source direction*: the angle of (nearest source - robot centre), turned by minus
//!   the robot's true yaw;
//! - *true upwind direction*: where the air comes from at the anemometer's position (the
//!   world's local wind velocity there, reversed), turned into the robot frame; undefined in
//!   still air (speed below [`STILL_AIR`]);
//! - *in plume*: the true concentration at one chemical channel at least reaches the
//!   threshold (default: the scenario's `sensors.mox.c0`, the lowest concentration the sensor
//!   model responds to); sampled every [`SAMPLE_PERIOD`] on the world's ticks, each sample
//!   standing for that much time;
//! - a sample is *covered by cue c* (timing, amplitude, fused) when the latest `odor_bearing`
//!   published at most [`BEARING_HOLD`] before it carries cue c and a finite bearing; `any`
//!   when it carries one of them. *Coverage* of c = covered in-plume samples / in-plume
//!   samples;
//! - *bearing error*: for every published `odor_bearing` with a finite bearing (in plume or
//!   not: it is what the arbiter is given), |wrap(bearing - true direction)| with the truth
//!   taken at the world tick that follows the message (at most one tick later); kept per cue
//!   and over all cues (`all`), against the source and, separately, against upwind;
//! - *distance error*: for every `plume_features` with a finite, positive `distance`,
//!   |ln(distance / true distance)| (0 is exact, ln 2 = 0.69 a factor of two either way);
//! - *first contact*: the first in-plume sample.
//!
//! Per episode each error is summarised by its sample size and median ([`ErrorStat`]).

use serde::Serialize;
use sillage_core::msg::OdorBearing;
use std::collections::BTreeMap;

/// Period of the in-plume and coverage samples [s].
pub const SAMPLE_PERIOD: f64 = 0.1;
/// A published bearing counts for samples at most this much later [s].
pub const BEARING_HOLD: f64 = 0.5;
/// Wind speeds below this have no upwind direction [m/s].
pub const STILL_AIR: f64 = 1e-6;

/// Cue labels, indexed by `OdorBearing.cue` (TIMING, AMPLITUDE, FUSED).
pub const CUE_NAMES: [&str; 3] = ["timing", "amplitude", "fused"];

/// The truth at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Truth {
    /// True source direction [rad], robot frame.
    pub source_direction: f64,
    /// True upwind direction [rad], robot frame (`None` in still air).
    pub upwind_direction: Option<f64>,
    /// Planar distance from the robot centre to the nearest source [m].
    pub distance: f64,
    /// Whether the robot is in the plume (see the module docs).
    pub in_plume: bool,
}

/// Wraps an angle to (-pi, pi] [rad].
pub fn wrap(a: f64) -> f64 {
    use std::f64::consts::{PI, TAU};
    let w = a.rem_euclid(TAU);
    if w > PI {
        w - TAU
    } else {
        w
    }
}

/// Direction [rad] in a frame of yaw `yaw` [rad] of the world vector (dx, dy).
pub fn direction_in_frame(dx: f64, dy: f64, yaw: f64) -> f64 {
    wrap(dy.atan2(dx) - yaw)
}

/// The upwind direction [rad] in a frame of yaw `yaw` of the air velocity `u` (world frame,
/// where the air goes to) [m/s]; `None` in still air.
pub fn upwind_in_frame(u: [f64; 2], yaw: f64) -> Option<f64> {
    (u[0].hypot(u[1]) >= STILL_AIR).then(|| direction_in_frame(-u[0], -u[1], yaw))
}

/// Sample size and median of one error.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ErrorStat {
    /// Values.
    pub n: usize,
    /// Median (type-7 quantile at 0.5) [rad for bearings, dimensionless for distances].
    pub median: f64,
}

impl ErrorStat {
    /// The median of `values` (`None` when empty).
    pub fn of(values: &mut [f64]) -> Option<ErrorStat> {
        values.sort_by(f64::total_cmp);
        crate::summary::quantile(values, 0.5).map(|median| ErrorStat { n: values.len(), median })
    }
}

/// The cue metrics of one episode (see the module docs).
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct CueMetrics {
    /// Time in the plume [s].
    pub in_plume_time: f64,
    /// Time sampled [s].
    pub sampled_time: f64,
    /// Time of the first contact since the start [s].
    pub first_contact: Option<f64>,
    /// In-plume time covered by each cue (`timing`, `amplitude`, `fused`, `any`) [s].
    pub covered_time: BTreeMap<&'static str, f64>,
    /// Coverage of each cue (`None` without in-plume time).
    pub coverage: BTreeMap<&'static str, Option<f64>>,
    /// Bearing error against the true source direction, per cue and `all` [rad].
    pub bearing_error_source: BTreeMap<&'static str, ErrorStat>,
    /// Bearing error against the true upwind direction, per cue and `all` [rad].
    pub bearing_error_upwind: BTreeMap<&'static str, ErrorStat>,
    /// Distance error |ln(estimate / truth)|.
    pub distance_error: Option<ErrorStat>,
}

/// The latest published bearing: stamp [ns], cue, bearing [rad].
type Latest = (i64, u8, f64);

/// Accumulates the cue metrics of one episode.
#[derive(Debug, Clone, Default)]
pub struct CueLog {
    latest: Option<Latest>,
    in_plume: f64,
    sampled: f64,
    first_contact: Option<f64>,
    covered: [f64; 4],
    source: [Vec<f64>; 3],
    upwind: [Vec<f64>; 3],
    distance: Vec<f64>,
}

fn cue_index(cue: u8) -> Option<usize> {
    match cue {
        OdorBearing::TIMING => Some(0),
        OdorBearing::AMPLITUDE => Some(1),
        OdorBearing::FUSED => Some(2),
        _ => None,
    }
}

impl CueLog {
    /// An empty log.
    pub fn new() -> Self {
        CueLog::default()
    }

    /// One published `odor_bearing` (stamp [ns], cue, bearing [rad]) with the truth of its
    /// time.
    pub fn on_bearing(&mut self, stamp: i64, cue: u8, bearing: f64, truth: &Truth) {
        self.latest = Some((stamp, cue, bearing));
        let Some(i) = cue_index(cue).filter(|_| bearing.is_finite()) else { return };
        self.source[i].push(wrap(bearing - truth.source_direction).abs());
        if let Some(u) = truth.upwind_direction {
            self.upwind[i].push(wrap(bearing - u).abs());
        }
    }

    /// One `plume_features.distance` [m] with the truth of its time; NaN, infinite or
    /// non-positive estimates are not estimates and are skipped.
    pub fn on_distance(&mut self, estimate: f64, truth: &Truth) {
        if estimate.is_finite() && estimate > 0.0 && truth.distance > 0.0 {
            self.distance.push((estimate / truth.distance).ln().abs());
        }
    }

    /// The latest bearing that counts at `now` [ns] (cue, bearing), if any.
    pub fn current(&self, now: i64) -> Option<(u8, f64)> {
        let hold = sillage_core::time::nanos(BEARING_HOLD);
        self.latest.filter(|(s, _, b)| now - s <= hold && b.is_finite()).map(|(_, c, b)| (c, b))
    }

    /// One sample of `dt` [s] at `now` [ns] (`t` [s] since the start).
    pub fn sample(&mut self, now: i64, t: f64, dt: f64, truth: &Truth) {
        self.sampled += dt;
        if !truth.in_plume {
            return;
        }
        self.in_plume += dt;
        self.first_contact.get_or_insert(t);
        if let Some(i) = self.current(now).and_then(|(c, _)| cue_index(c)) {
            self.covered[i] += dt;
            self.covered[3] += dt;
        }
    }

    /// The metrics so far.
    pub fn metrics(&self) -> CueMetrics {
        let names = [CUE_NAMES[0], CUE_NAMES[1], CUE_NAMES[2], "any"];
        let covered_time: BTreeMap<&'static str, f64> = names.iter().copied().zip(self.covered).collect();
        let coverage = covered_time.iter().map(|(k, v)| (*k, (self.in_plume > 0.0).then(|| v / self.in_plume))).collect();
        let per_cue = |v: &[Vec<f64>; 3]| {
            let mut m = BTreeMap::new();
            for (name, values) in CUE_NAMES.iter().zip(v) {
                if let Some(s) = ErrorStat::of(&mut values.clone()) {
                    m.insert(*name, s);
                }
            }
            let mut all: Vec<f64> = v.iter().flatten().copied().collect();
            if let Some(s) = ErrorStat::of(&mut all) {
                m.insert("all", s);
            }
            m
        };
        CueMetrics {
            in_plume_time: self.in_plume,
            sampled_time: self.sampled,
            first_contact: self.first_contact,
            covered_time,
            coverage,
            bearing_error_source: per_cue(&self.source),
            bearing_error_upwind: per_cue(&self.upwind),
            distance_error: ErrorStat::of(&mut self.distance.clone()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use sillage_core::time::SECOND;
    use std::f64::consts::PI;

    fn truth(source: f64, upwind: Option<f64>, distance: f64, in_plume: bool) -> Truth {
        Truth { source_direction: source, upwind_direction: upwind, distance, in_plume }
    }

    #[test]
    fn directions_follow_rep_103() {
        // Source 1 m north of a robot facing east: 90 deg to the left.
        assert_abs_diff_eq!(direction_in_frame(0.0, 1.0, 0.0), PI / 2.0, epsilon = 1e-12);
        // The same source seen by a robot facing north: straight ahead.
        assert_abs_diff_eq!(direction_in_frame(0.0, 1.0, PI / 2.0), 0.0, epsilon = 1e-12);
        // Air going east comes from the west: behind a robot facing east.
        assert_abs_diff_eq!(upwind_in_frame([0.5, 0.0], 0.0).expect("wind").abs(), PI, epsilon = 1e-12);
        assert_eq!(upwind_in_frame([0.0, 0.0], 0.0), None);
        assert_abs_diff_eq!(wrap(3.0 * PI / 2.0), -PI / 2.0, epsilon = 1e-12);
        assert_abs_diff_eq!(wrap(-PI), PI, epsilon = 1e-12);
    }

    #[test]
    fn errors_wrap_across_the_back_and_are_kept_per_cue() {
        let mut log = CueLog::new();
        // Truth at 179 deg, bearing at -179 deg: 2 deg apart, not 358.
        let t = truth(179f64.to_radians(), Some(0.0), 4.0, true);
        log.on_bearing(0, OdorBearing::TIMING, (-179f64).to_radians(), &t);
        log.on_bearing(0, OdorBearing::AMPLITUDE, 170f64.to_radians(), &t);
        log.on_bearing(0, OdorBearing::NONE, f64::NAN, &t);
        let m = log.metrics();
        assert_abs_diff_eq!(m.bearing_error_source["timing"].median, 2f64.to_radians(), epsilon = 1e-12);
        assert_abs_diff_eq!(m.bearing_error_source["amplitude"].median, 9f64.to_radians(), epsilon = 1e-12);
        assert_eq!(m.bearing_error_source["all"].n, 2);
        assert_abs_diff_eq!(m.bearing_error_upwind["timing"].median, 179f64.to_radians(), epsilon = 1e-12);
        assert!(!m.bearing_error_source.contains_key("fused"));
    }

    #[test]
    fn distance_error_is_the_absolute_log_ratio() {
        let mut log = CueLog::new();
        let t = truth(0.0, None, 4.0, false);
        for d in [8.0, 2.0, 4.0, f64::NAN, 0.0, -1.0] {
            log.on_distance(d, &t);
        }
        let m = log.metrics();
        let d = m.distance_error.expect("three estimates");
        // ln 2, ln 2, 0: median ln 2.
        assert_eq!(d.n, 3);
        assert_abs_diff_eq!(d.median, 2f64.ln(), epsilon = 1e-12);
    }

    #[test]
    fn coverage_counts_in_plume_samples_with_a_recent_bearing() {
        let mut log = CueLog::new();
        let plume = truth(0.0, None, 1.0, true);
        let clear = truth(0.0, None, 1.0, false);
        log.on_bearing(0, OdorBearing::FUSED, 0.1, &plume);
        // In plume at 0.1 .. 1.0 s (10 samples); the bearing counts up to 0.5 s (5 samples).
        for k in 1..=10 {
            log.sample(k * SECOND / 10, k as f64 * 0.1, 0.1, &plume);
        }
        for k in 11..=20 {
            log.sample(k * SECOND / 10, k as f64 * 0.1, 0.1, &clear);
        }
        let m = log.metrics();
        assert_abs_diff_eq!(m.in_plume_time, 1.0, epsilon = 1e-9);
        assert_abs_diff_eq!(m.sampled_time, 2.0, epsilon = 1e-9);
        assert_abs_diff_eq!(m.coverage["fused"].expect("in plume"), 0.5, epsilon = 1e-9);
        assert_abs_diff_eq!(m.coverage["any"].expect("in plume"), 0.5, epsilon = 1e-9);
        assert_eq!(m.coverage["timing"], Some(0.0));
        assert_abs_diff_eq!(m.first_contact.expect("contact"), 0.1, epsilon = 1e-12);
        assert_eq!(CueLog::new().metrics().coverage["any"], None);
    }
}
