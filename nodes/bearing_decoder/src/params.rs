//! The node's parameters: one typed struct, units in brackets, validated at start-up with the
//! dotted key of the first bad value in the error.
//!
//! Sensor positions are parallel lists (`sensors.names`, `sensors.x`, `sensors.y`) because ROS
//! 2 parameters have no lists of maps, and a list in a parameter file replaces the default list
//! as a whole. Event channel indices are mapped to sensors by name: the names come from the
//! latest `chem` sample's `channels` when `chem` is connected, otherwise from `channel_names`.

use crate::air::AirSettings;
use sillage_air::AirParams;
use crate::geometry::{GeometryError, SensorArray};
use crate::rises::RiseSettings;
use crate::timing::TimingSettings;
use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, NodeParams, ParamError};
use sillage_core::time::nanos;
use sillage_event_encoder::conditioning::ConditioningParams;

/// Parameters of the node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Params {
    /// Fixed publishing rate of `odor_bearing` [Hz] (> 0).
    pub rate: f64,
    /// Also publish at once when an odor event array brings a new onset.
    pub publish_on_evidence: bool,
    /// Frame of the output and of base-fixed wind (REP 105 `base_link`).
    pub base_frame: String,
    /// Channel names by event channel index, used until a `chem` sample gives the list.
    pub channel_names: Vec<String>,
    /// Sensor positions.
    pub sensors: SensorParams,
    /// Wind and robot motion.
    pub wind: WindParams,
    /// Timing cue.
    pub timing: TimingParams,
    /// Front/back ambiguity of two-sensor cues.
    pub front_back: FrontBackParams,
    /// Amplitude cue.
    pub amplitude: AmplitudeParams,
    /// Cue fusion.
    pub fusion: FusionParams,
}

/// Sensor positions in base_link (REP 103: x forward, y left).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SensorParams {
    /// Sensor names (as in ChemSample.channels).
    pub names: Vec<String>,
    /// x of each sensor [m].
    pub x: Vec<f64>,
    /// y of each sensor [m].
    pub y: Vec<f64>,
    /// Response delay of each sensor, subtracted from its rise onsets [s] (finite; same length
    /// as `names`, or all zeros for none): aligns sensors whose responses lag each other.
    pub delay: Vec<f64>,
}

/// Wind and robot motion.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WindParams {
    /// Air speed used when no wind is measured [m/s] (>= 0; 0 = a wind measurement is needed).
    pub air_speed: f64,
    /// A wind message is valid this long [s] (> 0).
    pub timeout: f64,
    /// True wind speeds below this are still air: no timing bearing [m/s] (> 0; the shared
    /// `sillage_air` meaning and default).
    pub min_speed: f64,
    /// A base-frame wind message is the relative wind at the moving anemometer (true wind =
    /// relative + anemometer velocity from odometry); false: it is already the true wind.
    /// A message in the odometry's parent frame is always a true wind.
    pub relative: bool,
    /// Anemometer x in base_link (lever arm of the rotation term) [m].
    pub anemometer_x: f64,
    /// Anemometer y in base_link [m].
    pub anemometer_y: f64,
    /// An odometry message is valid this long [s] (> 0).
    pub odom_timeout: f64,
}

impl WindParams {
    /// The shared air parameters among these.
    pub fn air(&self) -> AirParams {
        AirParams { relative: self.relative, anemometer_x: self.anemometer_x, anemometer_y: self.anemometer_y, min_speed: self.min_speed }
    }
}

/// Where the timing cue takes its onsets from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OnsetSource {
    /// The slope peak of each rise of the conditioned `chem` signal (slow sensors).
    Rise,
    /// The first rising odor event after a fall or a quiet `onset_gap` (fast sensors).
    FirstEvent,
}

/// Timing cue.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct TimingParams {
    /// Onsets from `rise` (the chem signal's slope peaks) or `first_event` (odor events).
    pub onsets: OnsetSource,
    /// Sliding window of onsets used for the lag [s] (>= 0; 0 = `2 (tau_rise + tau_decay)`,
    /// two full responses of the sensors).
    pub window: f64,
    /// Rise time constant of the sensors [s] (> 0; sizes the window).
    pub tau_rise: f64,
    /// Decay time constant of the sensors [s] (> 0; sizes the window).
    pub tau_decay: f64,
    /// Slope of the conditioned signal that starts a rise [conditioned units/s] (> 0).
    pub rise_slope: f64,
    /// Smoothing time constant of that slope [s] (>= 0).
    pub slope_tau: f64,
    /// Smallest gain of the conditioned signal over a rise [conditioned units] (>= 0).
    pub min_rise: f64,
    /// Onsets taken while the robot headed more than this away from its heading now are not
    /// paired (their lags belong to another frame) [rad] (> 0).
    pub max_turn: f64,
    /// While the onsets give no bearing, the last one is held this long [s], kept fixed in the
    /// odometry frame (turned with the heading) and its confidence falling linearly to zero
    /// (>= 0; 0 = off; needs odometry).
    pub hold: f64,
    /// Cross-correlation bin width [s] (> 0, well below the lags of interest).
    pub bin: f64,
    /// Largest lag ever searched [s] (> 0; the search also stops at the plane-wave bound).
    pub max_lag: f64,
    /// Extra fraction searched beyond the plane-wave bound spacing / air speed (>= 0).
    pub lag_margin: f64,
    /// A rising event this long after the sensor's previous event starts a new onset even
    /// without a falling event in between [s] (>= 0).
    pub onset_gap: f64,
    /// Onsets matched within this of the correlation peak lag [s] (> 0).
    pub match_tolerance: f64,
    /// Matched lags beyond this many robust standard deviations are outliers (> 0).
    pub outlier_mad: f64,
    /// Fewest inlier matched onsets for a lag (>= 1).
    pub min_matches: u32,
    /// Matched onsets at which their confidence factor is 0.5 (> 0).
    pub confidence_matches: f64,
    /// Bearing spread implied by the inlier lag spread (sensitivity U d lag / (d cos theta))
    /// at which the consistency factor is 0.5 [rad] (> 0).
    pub bearing_spread: f64,
    /// Most onsets kept per sensor (>= 2).
    pub max_onsets: u32,
}

/// Front/back ambiguity of two-sensor cues.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FrontBackParams {
    /// Upwind must be at least this far from the sensor axis to settle front/back [rad]
    /// (0..pi/2).
    pub min_angle: f64,
    /// Confidence factor when front/back cannot be settled (0..1; 0 = say nothing).
    pub unresolved_scale: f64,
}

/// Amplitude cue.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct AmplitudeParams {
    /// Use the amplitude cue (needs `chem`).
    pub enabled: bool,
    /// Smoothing time constant of the responses [s] (> 0).
    pub tau: f64,
    /// Smallest mean response for a cue [conditioned units] (>= 0).
    pub min_response: f64,
    /// Mean response at which the strength factor is 0.5 [conditioned units] (> 0).
    pub response_half: f64,
    /// Normalised contrast read as fully sideways (0..1].
    pub saturation: f64,
    /// Contrast spread at which the stability factor is 0.5 (> 0).
    pub contrast_spread: f64,
    /// Trust in the amplitude cue relative to timing (0..1).
    pub weight: f64,
    /// Gain of each sensor's conditioned response [-] (> 0; same length as `sensors.names`,
    /// or all ones for none): matches sensors of unequal sensitivity.
    pub gains: Vec<f64>,
    /// Two sensors: an amplitude angle further than this from upwind is not trusted; only the
    /// side (left/right) is published [rad] (0..pi; pi = always the angle).
    pub max_off_wind: f64,
    /// No chem sample for this long: no amplitude cue [s] (> 0).
    pub timeout: f64,
    /// Conditioning of the raw chem values (the event encoder's, see its docs).
    pub conditioning: ConditioningParams,
}

/// Cue fusion.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FusionParams {
    /// The weaker cue needs at least this fraction of the stronger's confidence to be fused
    /// (0..1; 1 = never fuse unless equal).
    pub min_ratio: f64,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            rate: 10.0,
            publish_on_evidence: true,
            base_frame: "base_link".into(),
            channel_names: vec!["left".into(), "right".into()],
            sensors: SensorParams::default(),
            wind: WindParams::default(),
            timing: TimingParams::default(),
            front_back: FrontBackParams::default(),
            amplitude: AmplitudeParams::default(),
            fusion: FusionParams::default(),
        }
    }
}

impl Default for SensorParams {
    /// Left and right at +-half of a 0.2 m spacing on the y axis.
    fn default() -> Self {
        SensorParams { names: vec!["left".into(), "right".into()], x: vec![0.0, 0.0], y: vec![0.1, -0.1], delay: vec![0.0, 0.0] }
    }
}

impl Default for WindParams {
    fn default() -> Self {
        let air = AirParams::default();
        WindParams {
            air_speed: 0.5,
            timeout: 1.0,
            min_speed: air.min_speed,
            relative: air.relative,
            anemometer_x: air.anemometer_x,
            anemometer_y: air.anemometer_y,
            odom_timeout: 0.5,
        }
    }
}

impl Default for TimingParams {
    fn default() -> Self {
        TimingParams {
            onsets: OnsetSource::Rise,
            window: 0.0,
            tau_rise: 1.8,
            tau_decay: 11.1,
            rise_slope: 0.02,
            slope_tau: 0.1,
            min_rise: 0.01,
            max_turn: 30f64.to_radians(),
            hold: 5.0,
            bin: 0.005,
            max_lag: 1.0,
            lag_margin: 0.25,
            onset_gap: 0.5,
            match_tolerance: 0.1,
            outlier_mad: 3.0,
            min_matches: 2,
            confidence_matches: 5.0,
            bearing_spread: 5f64.to_radians(),
            max_onsets: 256,
        }
    }
}

impl Default for FrontBackParams {
    fn default() -> Self {
        FrontBackParams { min_angle: 15f64.to_radians(), unresolved_scale: 0.5 }
    }
}

impl Default for AmplitudeParams {
    fn default() -> Self {
        AmplitudeParams {
            enabled: true,
            tau: 1.0,
            min_response: 0.02,
            response_half: 0.1,
            saturation: 0.5,
            contrast_spread: 0.2,
            weight: 0.5,
            gains: vec![1.0, 1.0],
            max_off_wind: 20f64.to_radians(),
            timeout: 1.0,
            conditioning: ConditioningParams::default(),
        }
    }
}

impl Default for FusionParams {
    fn default() -> Self {
        FusionParams { min_ratio: 0.1 }
    }
}

fn positive(v: f64, key: &str, unit: &str) -> Result<(), ParamError> {
    ensure(v.is_finite() && v > 0.0, key, format!("must be > 0 {unit}"))
}

fn non_negative(v: f64, key: &str, unit: &str) -> Result<(), ParamError> {
    ensure(v.is_finite() && v >= 0.0, key, format!("must be >= 0 {unit}"))
}

fn unit_interval(v: f64, key: &str) -> Result<(), ParamError> {
    ensure((0.0..=1.0).contains(&v), key, "must be in 0..1")
}

impl Params {
    /// These parameters with the sensors `(name, x [m], y [m])` in base_link, which also
    /// become the channel list used before a chem sample arrives.
    pub fn with_sensors(mut self, sensors: &[(&str, f64, f64)]) -> Params {
        self.channel_names = sensors.iter().map(|s| s.0.to_string()).collect();
        self.sensors = SensorParams {
            names: self.channel_names.clone(),
            x: sensors.iter().map(|s| s.1).collect(),
            y: sensors.iter().map(|s| s.2).collect(),
            delay: vec![0.0; sensors.len()],
        };
        self
    }

    /// The sensor layout (checked).
    pub fn sensor_array(&self) -> Result<SensorArray, ParamError> {
        let s = &self.sensors;
        SensorArray::new(&s.names, &s.x, &s.y).map_err(|e| {
            let key = match &e {
                GeometryError::Lengths { xs, names, .. } if xs != names => "sensors.x",
                GeometryError::Lengths { .. } => "sensors.y",
                GeometryError::TooFew { .. } | GeometryError::BadName { .. } => "sensors.names",
                GeometryError::NonFinite { .. } | GeometryError::Coincident { .. } | GeometryError::Collinear { .. } => "sensors.y",
            };
            ParamError::OutOfRange { key: key.into(), reason: e.to_string() }
        })
    }

    /// Settings of the air state.
    pub fn air_settings(&self) -> AirSettings {
        let w = &self.wind;
        AirSettings {
            base_frame: self.base_frame.clone(),
            air: w.air(),
            wind_timeout: nanos(w.timeout),
            odom_timeout: nanos(w.odom_timeout),
            air_speed: w.air_speed,
        }
    }

    /// The onset window in use [s]: `timing.window`, or two full responses of the sensors.
    pub fn window(&self) -> f64 {
        let t = &self.timing;
        if t.window > 0.0 {
            t.window
        } else {
            2.0 * (t.tau_rise + t.tau_decay)
        }
    }

    /// Settings of the rise detector of sensor `i` (of `sensors.names`).
    pub fn rise_settings(&self, i: usize) -> RiseSettings {
        let t = &self.timing;
        RiseSettings { slope: t.rise_slope, slope_tau: t.slope_tau, min_rise: t.min_rise, delay: self.sensors.delay.get(i).copied().unwrap_or(0.0) }
    }

    /// Settings of the timing cue.
    pub fn timing_settings(&self) -> TimingSettings {
        let t = &self.timing;
        TimingSettings {
            bin: nanos(t.bin).max(1),
            max_lag: t.max_lag,
            lag_margin: t.lag_margin,
            tolerance: nanos(t.match_tolerance),
            mad_k: t.outlier_mad,
            min_matches: t.min_matches as usize,
            confidence_matches: t.confidence_matches,
            bearing_spread: t.bearing_spread,
            min_speed: self.wind.min_speed,
            min_angle: self.front_back.min_angle,
            unresolved_scale: self.front_back.unresolved_scale,
        }
    }
}

impl NodeParams for Params {
    fn validate(&self) -> Result<(), ParamError> {
        positive(self.rate, "rate", "[Hz]")?;
        ensure(!self.base_frame.is_empty(), "base_frame", "must not be empty")?;
        let array = self.sensor_array()?;
        ensure(!self.channel_names.is_empty(), "channel_names", "must name at least one channel")?;
        for (i, n) in self.channel_names.iter().enumerate() {
            ensure(!self.channel_names[..i].contains(n), "channel_names", format!("'{n}' appears twice"))?;
        }
        let placed = self.channel_names.iter().filter(|n| array.index_of(n).is_some()).count();
        ensure(placed >= 2, "channel_names", format!("only {placed} of them are in sensors.names; the cues need two"))?;
        let w = &self.wind;
        non_negative(w.air_speed, "wind.air_speed", "[m/s]")?;
        positive(w.timeout, "wind.timeout", "[s]")?;
        w.air().check("wind")?;
        positive(w.odom_timeout, "wind.odom_timeout", "[s]")?;
        let t = &self.timing;
        non_negative(t.window, "timing.window", "[s]")?;
        positive(t.tau_rise, "timing.tau_rise", "[s]")?;
        positive(t.tau_decay, "timing.tau_decay", "[s]")?;
        positive(t.rise_slope, "timing.rise_slope", "[conditioned units/s]")?;
        non_negative(t.slope_tau, "timing.slope_tau", "[s]")?;
        non_negative(t.min_rise, "timing.min_rise", "[conditioned units]")?;
        positive(t.max_turn, "timing.max_turn", "[rad]")?;
        non_negative(t.hold, "timing.hold", "[s]")?;
        let s = &self.sensors;
        let no_delays = s.delay.iter().all(|&d| d == 0.0);
        ensure(no_delays || s.delay.len() == s.names.len(), "sensors.delay", format!("has {} values for {} sensors", s.delay.len(), s.names.len()))?;
        ensure(s.delay.iter().all(|d| d.is_finite()), "sensors.delay", "must be finite [s]")?;
        positive(t.bin, "timing.bin", "[s]")?;
        ensure(t.bin >= 1e-6, "timing.bin", "must be >= 1e-6 [s]")?;
        positive(t.max_lag, "timing.max_lag", "[s]")?;
        ensure(t.max_lag / t.bin <= 100_000.0, "timing.max_lag", "must be at most 100000 bins (timing.bin)")?;
        ensure(t.max_lag < self.window(), "timing.max_lag", "must be shorter than the onset window (timing.window, or 2 (tau_rise + tau_decay))")?;
        non_negative(t.lag_margin, "timing.lag_margin", "")?;
        non_negative(t.onset_gap, "timing.onset_gap", "[s]")?;
        positive(t.match_tolerance, "timing.match_tolerance", "[s]")?;
        positive(t.outlier_mad, "timing.outlier_mad", "")?;
        ensure(t.min_matches >= 1, "timing.min_matches", "must be >= 1")?;
        positive(t.confidence_matches, "timing.confidence_matches", "")?;
        positive(t.bearing_spread, "timing.bearing_spread", "[rad]")?;
        ensure(t.max_onsets >= 2, "timing.max_onsets", "must be >= 2")?;
        let f = &self.front_back;
        ensure(
            f.min_angle.is_finite() && (0.0..std::f64::consts::FRAC_PI_2).contains(&f.min_angle),
            "front_back.min_angle",
            "must be in [0, pi/2) [rad]",
        )?;
        unit_interval(f.unresolved_scale, "front_back.unresolved_scale")?;
        let a = &self.amplitude;
        positive(a.tau, "amplitude.tau", "[s]")?;
        non_negative(a.min_response, "amplitude.min_response", "[conditioned units]")?;
        positive(a.response_half, "amplitude.response_half", "[conditioned units]")?;
        ensure(a.saturation > 0.0 && a.saturation <= 1.0, "amplitude.saturation", "must be in (0, 1]")?;
        positive(a.contrast_spread, "amplitude.contrast_spread", "")?;
        unit_interval(a.weight, "amplitude.weight")?;
        let ones = a.gains.iter().all(|&g| g == 1.0);
        ensure(ones || a.gains.len() == self.sensors.names.len(), "amplitude.gains", format!("has {} values for {} sensors", a.gains.len(), self.sensors.names.len()))?;
        ensure(a.gains.iter().all(|g| g.is_finite() && *g > 0.0), "amplitude.gains", "must be > 0")?;
        ensure((0.0..=std::f64::consts::PI).contains(&a.max_off_wind), "amplitude.max_off_wind", "must be in 0..pi [rad]")?;
        positive(a.timeout, "amplitude.timeout", "[s]")?;
        a.conditioning.check("amplitude.conditioning")?;
        unit_interval(self.fusion.min_ratio, "fusion.min_ratio")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::params::{from_value, load_str, to_value};

    #[test]
    fn defaults_are_valid_and_round_trip() {
        let p = Params::default();
        p.validate().expect("defaults valid");
        assert_eq!(from_value::<Params>(&to_value(&p)).expect("round trip"), p);
    }

    fn key_of(yaml: &str) -> String {
        let text = format!("bearing_decoder:\n  ros__parameters:\n{yaml}");
        match load_str::<Params>(&text, "p.yaml", "/bearing_decoder") {
            Err(sillage_core::params::ParamFileError::Param { error, .. }) => error.key().to_string(),
            other => panic!("expected a parameter error, got {other:?}"),
        }
    }

    #[test]
    fn bad_values_name_their_key() {
        assert_eq!(key_of("    rate: 0.0\n"), "rate");
        assert_eq!(key_of("    sensors:\n      y: [0.1, 0.1]\n"), "sensors.y", );
        assert_eq!(key_of("    sensors:\n      x: [0.0]\n"), "sensors.x");
        assert_eq!(
            key_of("    sensors:\n      names: [a, b, c]\n      x: [0.0, 0.0, 0.0]\n      y: [0.1, 0.0, -0.1]\n"),
            "sensors.y",
            "collinear"
        );
        assert_eq!(key_of("    channel_names: [left, middle]\n"), "channel_names");
        assert_eq!(key_of("    wind:\n      min_speed: .nan\n"), "wind.min_speed");
        assert_eq!(key_of("    timing:\n      bin: -0.01\n"), "timing.bin");
        assert_eq!(key_of("    timing:\n      max_lag: 30.0\n"), "timing.max_lag");
        assert_eq!(key_of("    sensors:\n      delay: [0.1]\n"), "sensors.delay");
        assert_eq!(key_of("    timing:\n      max_turn: 0.0\n"), "timing.max_turn");
        assert_eq!(key_of("    timing:\n      onsets: peaks\n"), "timing.onsets");
        assert_eq!(key_of("    front_back:\n      unresolved_scale: 2.0\n"), "front_back.unresolved_scale");
        assert_eq!(key_of("    amplitude:\n      conditioning:\n        gain: 0.0\n"), "amplitude.conditioning.gain");
        assert_eq!(key_of("    timing:\n      no_such: 1\n"), "timing.no_such");
    }

    #[test]
    fn the_shipped_parameter_file_holds_the_defaults() {
        let text = include_str!("../../../config/bearing_decoder.yaml");
        let p: Params = load_str(text, "config/bearing_decoder.yaml", "/bearing_decoder").expect("loads");
        assert_eq!(p, Params::default());
        // Every key of the defaults appears in the file (no silently missing documentation).
        let doc: serde_yaml::Value = serde_yaml::from_str(text).expect("yaml");
        let file_keys: Vec<String> = sillage_core::params::flatten(&doc["bearing_decoder"]["ros__parameters"]).into_iter().map(|(k, _)| k).collect();
        for (k, _) in sillage_core::params::flatten(&to_value(&Params::default())) {
            assert!(file_keys.contains(&k), "config/bearing_decoder.yaml lacks '{k}'");
        }
    }

    #[test]
    fn a_file_sets_a_triangle_and_integers_pass_for_floats() {
        let text = "bearing_decoder:\n  ros__parameters:\n    rate: 20\n    channel_names: [l, r, f]\n    sensors:\n      names: [l, r, f]\n      x: [0.0, 0.0, 0.15]\n      y: [0.1, -0.1, 0.0]\n";
        let p: Params = load_str(text, "p.yaml", "/bearing_decoder").expect("loads");
        assert_eq!(p.rate, 20.0);
        assert_eq!(p.sensor_array().expect("valid").layout(), crate::geometry::Layout::Planar);
    }
}
