//! The node's parameters: one typed struct, units in brackets, validated at start-up with the
//! dotted key of the first bad value in the error.

use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, NodeParams, ParamError};

/// Most cells a grid may have (memory: 24 bytes per cell).
pub const MAX_CELLS: usize = 4_000_000;

/// Parameters of the node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Params {
    /// Posterior updates per second [Hz] (> 0); each update covers 1 / rate of time.
    pub rate: f64,
    /// Publish `source_map` every this many updates (>= 1); `source_posterior` goes out at
    /// every update.
    pub map_every: u32,
    /// Frames (REP 105).
    pub frames: FrameParams,
    /// Where the grid lies and how fine it is.
    pub grid: GridParams,
    /// The encounter model.
    pub model: ModelParams,
    /// What counts as a hit.
    pub detection: DetectionParams,
    /// The wind history.
    pub wind: WindParams,
    /// Odometry.
    pub odom: OdomParams,
    /// What the posterior output and the diagnostics report.
    pub report: ReportParams,
}

/// Frames.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FrameParams {
    /// The world-fixed frame of odometry, of the grid and of the outputs.
    pub odom: String,
    /// The robot frame (wind readings in it are rotated by the odometry yaw).
    pub base: String,
}

/// Where the grid is placed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Anchor {
    /// Centred at (`center_x`, `center_y`) in odom.
    Fixed,
    /// Centred at the robot's first odometry position plus (`center_x`, `center_y`) plus
    /// `upwind_offset` along the first filtered upwind direction.
    Start,
}

/// The grid.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GridParams {
    /// Extent along x [m] (> 0; the cell count is extent / resolution, rounded).
    pub size_x: f64,
    /// Extent along y [m] (> 0).
    pub size_y: f64,
    /// Cell side [m] (> 0).
    pub resolution: f64,
    /// How the centre is chosen.
    pub anchor: Anchor,
    /// Centre x [m] (odom with `fixed`, offset from the start with `start`).
    pub center_x: f64,
    /// Centre y [m].
    pub center_y: f64,
    /// With `start`: the centre moves this far upwind of the start [m] (the source is upwind;
    /// 0 = no wind needed to place the grid).
    pub upwind_offset: f64,
}

/// The encounter model of Vergassola, Villermaux & Shraiman (2007), see [`crate::model`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ModelParams {
    /// Effective (turbulent) diffusivity D [m^2/s] (> 0).
    pub diffusivity: f64,
    /// Lifetime of the odor patches tau [s] (> 0).
    pub lifetime: f64,
    /// Emission rate R of the source [hits/s] (> 0).
    pub emission_rate: f64,
    /// Detector radius a [m] (> 0).
    pub detector_radius: f64,
}

/// Hits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct DetectionParams {
    /// A rising odor event counts as a hit only if it rises above this level [conditioned
    /// units, 0 = the channel's baseline] (finite).
    pub level: f64,
    /// Most hits counted in one update (>= 1); several sensors seeing one patch would count
    /// it several times.
    pub max_hits: u32,
}

/// The wind history.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WindParams {
    /// Time constant of the first-order low-pass applied in odom [s] (>= 0; 0 = none).
    pub filter_tau: f64,
    /// Add the robot's own velocity back (an anemometer on a moving robot measures the air
    /// relative to itself).
    pub ego_motion: bool,
    /// No wind reading for this long: no update [s] (> 0).
    pub timeout: f64,
}

/// Odometry.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct OdomParams {
    /// No odometry for this long: no update [s] (> 0).
    pub timeout: f64,
}

/// The point `source_posterior` carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Point {
    /// The posterior mean.
    Mean,
    /// The centre of the most probable cell.
    Map,
}

/// Reporting.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ReportParams {
    /// The position `source_posterior` carries; its covariance is the posterior second moment
    /// about that point.
    pub point: Point,
    /// Radius of the "mass within the radius of the MAP" diagnostic [m] (>= 0).
    pub radius: f64,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            rate: 2.0,
            map_every: 2,
            frames: FrameParams::default(),
            grid: GridParams::default(),
            model: ModelParams::default(),
            detection: DetectionParams::default(),
            wind: WindParams::default(),
            odom: OdomParams::default(),
            report: ReportParams::default(),
        }
    }
}

impl Default for FrameParams {
    fn default() -> Self {
        FrameParams { odom: "odom".into(), base: "base_link".into() }
    }
}

impl Default for GridParams {
    fn default() -> Self {
        GridParams { size_x: 50.0, size_y: 50.0, resolution: 0.25, anchor: Anchor::Start, center_x: 0.0, center_y: 0.0, upwind_offset: 15.0 }
    }
}

impl Default for ModelParams {
    fn default() -> Self {
        ModelParams { diffusivity: 0.125, lifetime: 30.0, emission_rate: 5.0, detector_radius: 0.1 }
    }
}

impl Default for DetectionParams {
    fn default() -> Self {
        DetectionParams { level: 0.0, max_hits: 2 }
    }
}

impl Default for WindParams {
    fn default() -> Self {
        WindParams { filter_tau: 2.0, ego_motion: true, timeout: 1.0 }
    }
}

impl Default for OdomParams {
    fn default() -> Self {
        OdomParams { timeout: 0.5 }
    }
}

impl Default for ReportParams {
    fn default() -> Self {
        ReportParams { point: Point::Mean, radius: 0.5 }
    }
}

fn positive(v: f64, key: &str, unit: &str) -> Result<(), ParamError> {
    ensure(v.is_finite() && v > 0.0, key, format!("must be finite and > 0 {unit}"))
}

fn non_negative(v: f64, key: &str, unit: &str) -> Result<(), ParamError> {
    ensure(v.is_finite() && v >= 0.0, key, format!("must be finite and >= 0 {unit}"))
}

impl GridParams {
    /// Cells along x and y.
    pub fn cells(&self) -> (usize, usize) {
        ((self.size_x / self.resolution).round().max(1.0) as usize, (self.size_y / self.resolution).round().max(1.0) as usize)
    }
}

impl NodeParams for Params {
    fn validate(&self) -> Result<(), ParamError> {
        positive(self.rate, "rate", "[Hz]")?;
        ensure(self.rate <= 1000.0, "rate", "must be <= 1000 [Hz]")?;
        ensure(self.map_every >= 1, "map_every", "must be >= 1")?;
        ensure(!self.frames.odom.is_empty(), "frames.odom", "must not be empty")?;
        ensure(!self.frames.base.is_empty(), "frames.base", "must not be empty")?;
        ensure(self.frames.odom != self.frames.base, "frames.base", "must differ from frames.odom")?;
        let g = &self.grid;
        positive(g.size_x, "grid.size_x", "[m]")?;
        positive(g.size_y, "grid.size_y", "[m]")?;
        positive(g.resolution, "grid.resolution", "[m]")?;
        ensure(g.resolution <= g.size_x.min(g.size_y), "grid.resolution", "must not exceed grid.size_x or grid.size_y")?;
        let (w, h) = (g.size_x / g.resolution, g.size_y / g.resolution);
        ensure(w.round() * h.round() <= MAX_CELLS as f64, "grid.resolution", format!("gives {:.0} x {:.0} cells, more than {MAX_CELLS}", w.round(), h.round()))?;
        ensure(g.center_x.is_finite(), "grid.center_x", "must be finite [m]")?;
        ensure(g.center_y.is_finite(), "grid.center_y", "must be finite [m]")?;
        ensure(g.upwind_offset.is_finite(), "grid.upwind_offset", "must be finite [m]")?;
        let m = &self.model;
        positive(m.diffusivity, "model.diffusivity", "[m^2/s]")?;
        positive(m.lifetime, "model.lifetime", "[s]")?;
        positive(m.emission_rate, "model.emission_rate", "[1/s]")?;
        positive(m.detector_radius, "model.detector_radius", "[m]")?;
        ensure(self.detection.level.is_finite(), "detection.level", "must be finite")?;
        ensure(self.detection.max_hits >= 1, "detection.max_hits", "must be >= 1")?;
        non_negative(self.wind.filter_tau, "wind.filter_tau", "[s]")?;
        positive(self.wind.timeout, "wind.timeout", "[s]")?;
        positive(self.odom.timeout, "odom.timeout", "[s]")?;
        non_negative(self.report.radius, "report.radius", "[m]")?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::params;

    #[test]
    fn defaults_validate_and_give_a_200_by_200_grid() {
        let p = Params::default();
        p.validate().expect("defaults are valid");
        assert_eq!(p.grid.cells(), (200, 200));
    }

    #[test]
    fn errors_name_the_dotted_key() {
        let cases: [(&str, &str); 6] = [
            ("rate: 0.0", "rate"),
            ("grid: {resolution: -1.0}", "grid.resolution"),
            ("grid: {size_x: 1000.0, resolution: 0.01}", "grid.resolution"),
            ("model: {diffusivity: 0.0}", "model.diffusivity"),
            ("detection: {max_hits: 0}", "detection.max_hits"),
            ("grid: {anchor: nowhere}", "grid.anchor"),
        ];
        for (yaml, key) in cases {
            let v: serde_yaml::Value = serde_yaml::from_str(yaml).expect("yaml");
            let e = params::from_value::<Params>(&v).expect_err(yaml);
            assert_eq!(e.key(), key, "{yaml}: {e}");
        }
    }
}
