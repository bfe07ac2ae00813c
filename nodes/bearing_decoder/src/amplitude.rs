//! The amplitude cue (tropotaxis): compare the conditioned signals of the sensors at once.
//!
//! Each sensor's raw chem value goes through the event encoder's conditioning
//! ([`sillage_event_encoder::conditioning::Conditioner`]: larger = more gas, baseline removed),
//! negative responses count as zero, and each response is smoothed by an exponential moving
//! average with time constant `tau`. The normalised contrast is the least-squares gradient of
//! the responses over the sensor positions times the array's rms radius, divided by the mean
//! response: for two sensors `(r_a - r_b) / (r_a + r_b)` along the pair axis (from `b` to
//! `a`), in -1..1. Gain matching: each sensor's response is multiplied by its
//! `amplitude.gains` entry first (sensitivities from a calibration: a sensor twice as
//! sensitive gets 0.5), so unequal sensors do not fake a contrast.
//!
//! Bearing: for two sensors the contrast divided by `saturation` (clamped to -1..1) is taken as
//! the component of the arrival direction along the pair axis, and front/back is settled with
//! the wind as for the timing cue ([`crate::front_back`]); for three or more the gradient's
//! direction is the bearing. Mapping contrast to an angle assumes the stronger side faces the
//! source (common practice for bilateral comparison; no published calibration is used).
//!
//! Confidence (0..1) = `weight` x strength `r / (r + response_half)` x stability
//! `1 / (1 + (sigma / contrast_spread)^2)` (sigma: spread of the per-sample contrast over the
//! averaging time) x `unresolved_scale` if front/back is a guess (x `min(|contrast| /
//! saturation, 1)` for three or more sensors, where a flat field has no direction). A mean
//! response below `min_response`, or no sample for `timeout`, gives no cue.
//!
//! Side only: for two sensors the contrast says reliably which side (left/right of the pair
//! axis) has more odor, but its angle is uncalibrated and points at the plume's centre rather
//! than along the air. When the wind is known and the angle lies more than `max_off_wind` from
//! upwind, the cue is *side only*: the bearing lies exactly along the pair axis toward the
//! stronger sensor (for a left/right pair +pi/2 = left, -pi/2 = right), confidence = `weight` x strength x stability x `min(|contrast| /
//! saturation, 1)` (how clearly one side dominates). It is not fused with the timing cue.

use crate::front_back::{resolve, Resolution};
use crate::geometry::{angle, Layout, SensorArray, Vec2};
use nalgebra::Matrix2;
use sillage_core::Nanos;
use crate::params::{AmplitudeParams, FrontBackParams};
use sillage_core::time::nanos;
use sillage_event_encoder::conditioning::{Conditioner, SampleFault};

/// A bearing from amplitude.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AmplitudeCue {
    /// Direction the odor comes from [rad], base_link.
    pub bearing: f64,
    /// 0..1.
    pub confidence: f64,
    /// Normalised contrast vector (base_link, dimensionless; along the axis for a pair).
    pub contrast: Vec2,
    /// Mean smoothed response [conditioned units].
    pub response: f64,
    /// How the mirror candidate was settled.
    pub resolution: Resolution,
    /// Only the side is meant: `bearing` points along the pair axis to the stronger sensor.
    pub side_only: bool,
}

/// Why the amplitude cue has nothing to say.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AmplitudeSilence {
    /// Some sensor has no conditioned sample yet, or none for `timeout`.
    NoSignal,
    /// The mean response is below `min_response`.
    Weak {
        /// Mean smoothed response [conditioned units].
        response: f64,
    },
}

#[derive(Debug, Clone)]
struct SensorSignal {
    conditioner: Conditioner,
    smooth: Option<f64>,
    last: f64,
    t: Nanos,
}

/// The amplitude cue's state: one conditioner and smoother per sensor.
#[derive(Debug, Clone)]
pub struct Amplitude {
    settings: AmplitudeParams,
    front_back: FrontBackParams,
    sensors: Vec<SensorSignal>,
    /// (centroid offsets, inverse scatter) for the gradient fit.
    offsets: Vec<Vec2>,
    inv_scatter: Option<Matrix2<f64>>,
    axis: Vec2,
    layout: Layout,
    radius: f64,
    mean_c: Vec2,
    mean_c2: f64,
    stats_t: Option<Nanos>,
}

impl Amplitude {
    /// A fresh cue for `array` with `settings.conditioning` on every sensor.
    pub fn new(settings: &AmplitudeParams, front_back: &FrontBackParams, array: &SensorArray) -> Amplitude {
        let sensors = (0..array.len())
            .map(|_| SensorSignal { conditioner: Conditioner::new(&settings.conditioning), smooth: None, last: 0.0, t: 0 })
            .collect();
        let offsets: Vec<Vec2> = (0..array.len()).map(|i| array.position(i) - array.centroid()).collect();
        let scatter = offsets.iter().fold(Matrix2::zeros(), |m, d| m + d * d.transpose());
        let axis = array.pairs()[0].baseline.normalize();
        Amplitude {
            settings: settings.clone(),
            front_back: front_back.clone(),
            sensors,
            inv_scatter: scatter.try_inverse(),
            offsets,
            axis,
            layout: array.layout(),
            radius: array.rms_radius(),
            mean_c: Vec2::zeros(),
            mean_c2: 0.0,
            stats_t: None,
        }
    }

    /// Replaces the settings, keeping the conditioning and smoothing state (the conditioning
    /// parameters themselves are not replaced).
    pub fn set_settings(&mut self, settings: &AmplitudeParams, front_back: &FrontBackParams) {
        self.settings = settings.clone();
        self.front_back = front_back.clone();
    }

    fn alpha(&self, dt: Nanos) -> f64 {
        1.0 - (-(dt.max(0) as f64 * 1e-9) / self.settings.tau).exp()
    }

    /// Conditions and smooths one raw value of sensor `sensor` taken at `t` [ns]; returns the
    /// conditioned value (before negative responses are zeroed), `None` for an unknown sensor.
    pub fn on_value(&mut self, sensor: usize, t: Nanos, raw: f64, quantity: u8) -> Result<Option<f64>, SampleFault> {
        let alpha = match self.sensors.get(sensor) {
            Some(s) => self.alpha(t - s.t),
            None => return Ok(None),
        };
        let gain = self.settings.gains.get(sensor).copied().unwrap_or(1.0);
        let Some(s) = self.sensors.get_mut(sensor) else { return Ok(None) };
        let conditioned = s.conditioner.step(t, raw, quantity)?;
        let r = (gain * conditioned).max(0.0);
        s.smooth = Some(match s.smooth {
            Some(m) => m + alpha * (r - m),
            None => r,
        });
        s.last = r;
        s.t = t;
        Ok(Some(conditioned))
    }

    /// Closes one chem sample at `t` [ns]: updates the contrast statistics from the latest
    /// per-sensor responses.
    pub fn end_sample(&mut self, t: Nanos) {
        if self.sensors.iter().any(|s| s.smooth.is_none()) {
            return;
        }
        let mean = self.sensors.iter().map(|s| s.last).sum::<f64>() / self.sensors.len() as f64;
        if mean.is_nan() || mean < self.settings.min_response {
            return;
        }
        let c = self.contrast(|s| s.last, mean);
        let a = match self.stats_t {
            Some(t0) => self.alpha(t - t0),
            None => 1.0,
        };
        self.mean_c += (c - self.mean_c) * a;
        self.mean_c2 += (c.norm_squared() - self.mean_c2) * a;
        self.stats_t = Some(t);
    }

    fn contrast(&self, value: impl Fn(&SensorSignal) -> f64, mean: f64) -> Vec2 {
        match (self.layout, self.inv_scatter) {
            (Layout::Planar, Some(inv)) => {
                let cross = self.sensors.iter().zip(&self.offsets).fold(Vec2::zeros(), |acc, (s, d)| acc + d * (value(s) - mean));
                inv * cross * (self.radius / mean)
            }
            _ => {
                let (a, b) = (value(&self.sensors[0]), value(&self.sensors[1]));
                self.axis * ((a - b) / (a + b))
            }
        }
    }

    /// The amplitude bearing at `now` [ns], given the upwind direction when known.
    pub fn cue(&self, now: Nanos, upwind: Option<f64>) -> Result<AmplitudeCue, AmplitudeSilence> {
        let st = &self.settings;
        let timeout = nanos(st.timeout);
        let mut sum = 0.0;
        for s in &self.sensors {
            match s.smooth {
                Some(m) if now - s.t <= timeout => sum += m,
                _ => return Err(AmplitudeSilence::NoSignal),
            }
        }
        let response = sum / self.sensors.len() as f64;
        if response.is_nan() || response < st.min_response || response <= 0.0 {
            return Err(AmplitudeSilence::Weak { response });
        }
        let contrast = self.contrast(|s| s.smooth.unwrap_or(0.0), response);
        let variance = (self.mean_c2 - self.mean_c.norm_squared()).max(0.0);
        let stability = 1.0 / (1.0 + variance / (st.contrast_spread * st.contrast_spread));
        let strength = response / (response + st.response_half);
        let (bearing, resolution, shape) = match self.layout {
            Layout::Planar => (angle(&contrast), Resolution::Coincident, (contrast.norm() / st.saturation).min(1.0)),
            Layout::Pair => {
                let along = (contrast.dot(&self.axis) / st.saturation).clamp(-1.0, 1.0);
                let (b, r) = resolve(angle(&self.axis), along.acos(), upwind, self.front_back.min_angle);
                (b, r, if r.is_unresolved() { self.front_back.unresolved_scale } else { 1.0 })
            }
        };
        let confidence = (st.weight * strength * stability * shape).clamp(0.0, 1.0);
        if self.layout == Layout::Pair {
            let along = contrast.dot(&self.axis);
            let off_wind = upwind.is_some_and(|u| crate::geometry::angle_diff(bearing, u).abs() > st.max_off_wind);
            if off_wind && along != 0.0 {
                let side = if along > 0.0 { self.axis } else { -self.axis };
                let clarity = (along.abs() / st.saturation).min(1.0);
                let confidence = (st.weight * strength * stability * clarity).clamp(0.0, 1.0);
                return Ok(AmplitudeCue { bearing: angle(&side), confidence, contrast, response, resolution, side_only: true });
            }
        }
        Ok(AmplitudeCue { bearing, confidence, contrast, response, resolution, side_only: false })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::ChemSample;
    use sillage_event_encoder::conditioning::ConditioningParams;

    const MS: Nanos = 1_000_000;
    const DEG: f64 = std::f64::consts::PI / 180.0;

    fn settings() -> AmplitudeParams {
        // RELATIVE values passed through with no baseline removal: the test drives responses.
        let conditioning = ConditioningParams { baseline_time_constant: 0.0, stuck_time: 0.0, ..ConditioningParams::default() };
        AmplitudeParams {
            enabled: true,
            tau: 0.5,
            min_response: 0.01,
            response_half: 0.05,
            saturation: 0.5,
            contrast_spread: 0.2,
            weight: 1.0,
            gains: vec![1.0, 1.0],
            max_off_wind: std::f64::consts::PI,
            timeout: 1.0,
            conditioning,
        }
    }

    #[test]
    fn gains_match_sensors_and_off_wind_angles_say_only_the_side() {
        // Left twice as sensitive as right, same exposure: without matching a contrast of 1/3
        // appears; with gains [0.5, 1.0] none (ahead, 0 deg, within any max_off_wind).
        let mut st = settings();
        let mut plain = Amplitude::new(&st, &FrontBackParams::default(), &pair());
        let t = feed(&mut plain, 20, &[0.4, 0.2]);
        let c = plain.cue(t, Some(0.0)).expect("cue");
        assert!((c.contrast.y - 1.0 / 3.0).abs() < 1e-9 && !c.side_only, "{:?}", c.contrast);
        st.gains = vec![0.5, 1.0];
        let mut matched = Amplitude::new(&st, &FrontBackParams::default(), &pair());
        let t = feed(&mut matched, 20, &[0.4, 0.2]);
        let c = matched.cue(t, Some(0.0)).expect("cue");
        assert!(c.contrast.norm() < 1e-9 && c.bearing.abs() < 1e-9, "{:?}", c);
        // Unmatched, with max_off_wind 20 deg: the angle (about 42 deg) is off the upwind
        // direction (0), so only the side is said: left, +90 deg.
        st.gains = vec![1.0, 1.0];
        st.max_off_wind = 20.0 * DEG;
        let mut side = Amplitude::new(&st, &FrontBackParams::default(), &pair());
        let t = feed(&mut side, 20, &[0.4, 0.2]);
        let c = side.cue(t, Some(0.0)).expect("cue");
        assert!(c.side_only && (c.bearing - 90.0 * DEG).abs() < 1e-12, "{:?}", c);
        assert!((c.confidence - c.response / (c.response + st.response_half) * (1.0 / 3.0) / 0.5).abs() < 1e-6, "{:?}", c);
        // Without a wind direction the angle cannot be judged: no side-only answer.
        assert!(!side.cue(t, None).expect("cue").side_only);
    }

    fn new(array: &SensorArray) -> Amplitude {
        Amplitude::new(&settings(), &FrontBackParams::default(), array)
    }

    fn feed(a: &mut Amplitude, n: usize, values: &[f64]) -> Nanos {
        let mut t = 0;
        for k in 0..n {
            t = k as Nanos * 10 * MS;
            for (i, v) in values.iter().enumerate() {
                a.on_value(i, t, *v, ChemSample::RELATIVE).expect("valid");
            }
            a.end_sample(t);
        }
        t
    }

    fn pair() -> SensorArray {
        let names = vec!["left".to_string(), "right".to_string()];
        SensorArray::new(&names, &[0.0, 0.0], &[0.1, -0.1]).expect("valid")
    }

    #[test]
    fn stronger_left_means_odor_from_the_left() {
        let mut a = new(&pair());
        let t = feed(&mut a, 200, &[0.3, 0.1]);
        // Contrast (0.3 - 0.1) / 0.4 = 0.5 = saturation: fully to the left.
        let cue = a.cue(t, Some(0.0)).expect("cue");
        assert!((cue.contrast.y - 0.5).abs() < 1e-9, "{cue:?}");
        assert!((cue.bearing - 90.0 * DEG).abs() < 1e-6);
        assert!((cue.confidence - 0.8).abs() < 1e-9, "strength 0.2 / (0.2 + 0.05), stable: {cue:?}");
        // Half the saturation: 30 deg, the front candidate given upwind ahead-left.
        let mut a = new(&pair());
        let t = feed(&mut a, 200, &[0.25, 0.15]);
        let cue = a.cue(t, Some(20.0 * DEG)).expect("cue");
        assert!((cue.bearing - 30.0 * DEG).abs() < 1e-6, "{}", cue.bearing / DEG);
        let behind = a.cue(t, Some(160.0 * DEG)).expect("cue");
        assert!((behind.bearing - 150.0 * DEG).abs() < 1e-6);
    }

    #[test]
    fn weak_stale_and_faulty_signals() {
        let mut a = new(&pair());
        assert_eq!(a.cue(0, None), Err(AmplitudeSilence::NoSignal));
        let t = feed(&mut a, 50, &[0.001, 0.001]);
        assert!(matches!(a.cue(t, None), Err(AmplitudeSilence::Weak { .. })));
        assert_eq!(a.cue(t + 2000 * MS, None), Err(AmplitudeSilence::NoSignal));
        assert!(a.on_value(0, t, f64::NAN, ChemSample::RELATIVE).is_err());
        assert!(a.on_value(0, t, -5.0, ChemSample::RESISTANCE).is_err());
    }

    #[test]
    fn triangle_gradient_points_at_the_strong_side() {
        let names: Vec<String> = ["l", "r", "f"].iter().map(|s| s.to_string()).collect();
        let tri = SensorArray::new(&names, &[0.0, 0.0, 0.2], &[0.1, -0.1, 0.0]).expect("valid");
        let mut a = new(&tri);
        // A linear field increasing towards -y (the right): r = 0.2 - 0.5 y.
        let t = feed(&mut a, 100, &[0.15, 0.25, 0.2]);
        let cue = a.cue(t, None).expect("cue");
        assert!((cue.bearing + 90.0 * DEG).abs() < 1e-9, "{}", cue.bearing / DEG);
        assert_eq!(cue.resolution, Resolution::Coincident);
    }
}
