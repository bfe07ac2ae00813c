//! Scenario files: the YAML schema of a simulated world, its loading and validation.
//!
//! Contract: unknown keys are rejected; every parse or validation error names the file
//! and the dotted key path (`sensors.channels[1].position`). Units are SI, angles in
//! radians, positions in the world (`odom`, ENU) frame unless the key says `base_link`;
//! concentrations in g/m^3 and release rates in g/s. Defaults are listed on each field.

use crate::anemometer::AnemometerParams;
use crate::arena::{Aabb, Arena};
use crate::error::WorldError;
use crate::filament::{FilamentParams, FilamentSource};
use crate::gaussian_plume::{StabilityClass, Terrain};
use crate::laser::LaserParams;
use crate::mox::MoxParams;
use crate::robot::{DriveKind, RobotLimits};
use crate::room::RoomParams;
use crate::wind::{WindGridParams, WindParams};
use serde::Deserialize;
use std::path::Path;

/// A complete simulated world.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Short name.
    pub name: String,
    /// Free text.
    #[serde(default)]
    pub description: String,
    /// Episode length limit [s].
    pub time_limit: f64,
    /// The robot has found the source when its centre is this close (planar) [m].
    pub success_radius: f64,
    /// Largest internal physics step [s] (default 0.01).
    #[serde(default = "default_physics_dt")]
    pub physics_dt: f64,
    /// Walls and obstacles.
    pub arena: ArenaSpec,
    /// Mean wind and meander.
    pub wind: WindSpec,
    /// Plume model.
    pub plume: PlumeSpec,
    /// Gas sources (at least one).
    pub sources: Vec<SourceSpec>,
    /// Chemical sensors on the robot.
    pub sensors: SensorsSpec,
    /// Anemometer on the robot.
    #[serde(default)]
    pub anemometer: AnemometerParams,
    /// Robot base.
    pub robot: RobotSpec,
    /// Optional planar laser scanner.
    #[serde(default)]
    pub laser: Option<LaserParams>,
    /// Closed arena: well-mixed background build-up (absent: open air, no background).
    #[serde(default)]
    pub room: Option<RoomParams>,
}

/// Arena rectangle and obstacles [m].
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ArenaSpec {
    /// Lower-left corner of the walls' inner faces (x, y) [m].
    pub min: [f64; 2],
    /// Upper-right corner (x, y) [m].
    pub max: [f64; 2],
    /// Axis-aligned box obstacles.
    #[serde(default)]
    pub obstacles: Vec<BoxSpec>,
}

/// An axis-aligned box obstacle [m].
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BoxSpec {
    /// Lower corner (x, y) [m].
    pub min: [f64; 2],
    /// Upper corner (x, y) [m].
    pub max: [f64; 2],
}

/// Mean wind and its meander.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct WindSpec {
    /// Mean speed [m/s].
    pub speed: f64,
    /// Direction the air goes to [rad], counter-clockwise from world +x.
    pub direction: f64,
    /// Meander (default: none).
    #[serde(default)]
    pub meander: MeanderSpec,
    /// `uniform` (one wind everywhere) or `grid` (potential flow around the obstacles with
    /// meandering corner winds). Default: `grid` with the filament plume, `uniform` with the
    /// gaussian one (the only combination the check accepts there).
    #[serde(default)]
    pub field: Option<WindFieldKind>,
    /// Options of the grid field.
    #[serde(default)]
    pub grid: WindGridParams,
}

/// Spatial structure of the wind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum WindFieldKind {
    /// The same wind everywhere (walls and obstacles do not deflect it).
    Uniform,
    /// Spatially varying incompressible flow on a grid.
    Grid,
}

/// Coloured-noise meander of the wind.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MeanderSpec {
    /// Standard deviation of the direction [rad] (default 0).
    #[serde(default)]
    pub direction_std: f64,
    /// Standard deviation of the speed [m/s] (default 0).
    #[serde(default)]
    pub speed_std: f64,
    /// Correlation time [s] (default 5).
    #[serde(default = "default_correlation_time")]
    pub correlation_time: f64,
}

impl Default for MeanderSpec {
    fn default() -> Self {
        Self {
            direction_std: 0.0,
            speed_std: 0.0,
            correlation_time: default_correlation_time(),
        }
    }
}

/// Which plume model produces the concentration field.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(tag = "mode", rename_all = "snake_case", deny_unknown_fields)]
pub enum PlumeSpec {
    /// Turbulent filament model (instantaneous, intermittent field).
    Filament {
        /// Cap on live filaments over all sources (default 20000).
        #[serde(default = "default_max_filaments")]
        max_filaments: usize,
    },
    /// Time-averaged Gaussian plume in the mean wind (for long outdoor ranges).
    Gaussian {
        /// Pasquill stability class A-F.
        stability_class: StabilityClass,
        /// Coefficient set: rural or urban (default rural).
        #[serde(default = "default_terrain")]
        terrain: Terrain,
        /// Floor on sigma_y and sigma_z near the source [m] (default 0.1).
        #[serde(default = "default_min_sigma")]
        min_sigma: f64,
    },
}

/// A gas source.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SourceSpec {
    /// Name.
    pub name: String,
    /// Position (x, y, height) [m], world frame.
    pub position: [f64; 3],
    /// Emission rate [g/s].
    pub release_rate: f64,
    /// Filament parameters (used in filament mode).
    #[serde(default)]
    pub filaments: FilamentParams,
}

/// Chemical sensor array.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SensorsSpec {
    /// Samples per second of every channel [Hz].
    pub sample_rate: f64,
    /// MOX parameters shared by the channels.
    #[serde(default)]
    pub mox: MoxParams,
    /// Channels (at least one; names unique).
    pub channels: Vec<ChannelSpec>,
}

/// One chemical sensor channel.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChannelSpec {
    /// Channel name (as in ChemSample.channels).
    pub name: String,
    /// Position in base_link (x, y, z) [m].
    pub position: [f64; 3],
    /// Clean-air resistance of this unit [ohm] (default: sensors.mox.r0).
    #[serde(default)]
    pub r0: Option<f64>,
    /// Sensor type: `mox` (the MOX time constants) or `fast` (both time constants
    /// `sensors.mox.fast_tau`, about 0.1 s, for comparison) (default `mox`).
    #[serde(default)]
    pub kind: SensorKind,
}

/// Chemical sensor type.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SensorKind {
    /// Metal-oxide sensor with its slow, asymmetric dynamics.
    #[default]
    Mox,
    /// Fast sensor (same static law, time constant `fast_tau`).
    Fast,
}

/// Robot base.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RobotSpec {
    /// `diff_drive` or `holonomic`.
    #[serde(rename = "type")]
    pub drive: DriveKind,
    /// Footprint radius [m] (default 0.2).
    #[serde(default = "default_radius")]
    pub radius: f64,
    /// Velocity and acceleration limits.
    #[serde(default)]
    pub limits: RobotLimits,
    /// Start poses (x [m], y [m], yaw [rad]); an episode picks one by index.
    pub start_poses: Vec<[f64; 3]>,
}

fn default_physics_dt() -> f64 {
    0.01
}
fn default_correlation_time() -> f64 {
    5.0
}
fn default_max_filaments() -> usize {
    20_000
}
fn default_terrain() -> Terrain {
    Terrain::Rural
}
fn default_min_sigma() -> f64 {
    0.1
}
fn default_radius() -> f64 {
    0.2
}

impl Scenario {
    /// Parses and validates scenario text; `file` names it in errors.
    pub fn from_yaml_str(text: &str, file: &str) -> Result<Self, WorldError> {
        let de = serde_yaml::Deserializer::from_str(text);
        let scenario: Scenario = serde_path_to_error::deserialize(de).map_err(|e| {
            let mut key = e.path().to_string();
            let message = e.into_inner().to_string();
            // serde_yaml already prefixes some messages with the path: keep it once.
            let mut message = message
                .strip_prefix(&format!("{key}: "))
                .map(str::to_owned)
                .unwrap_or(message);
            // A missing field is named by its own dotted key, not by its parent's (`.` at the top).
            if let Some(rest) = message.strip_prefix("missing field `") {
                if let Some((field, tail)) = rest.split_once('`') {
                    key = if key == "." { field.to_owned() } else { format!("{key}.{field}") };
                    message = format!("missing (required){tail}");
                }
            }
            WorldError::Parse {
                file: file.to_owned(),
                key,
                message,
            }
        })?;
        scenario.validate(file)?;
        Ok(scenario)
    }

    /// Reads, parses and validates a scenario file.
    pub fn from_path(path: &Path) -> Result<Self, WorldError> {
        let text = std::fs::read_to_string(path).map_err(|source| WorldError::Read {
            file: path.to_owned(),
            source,
        })?;
        Self::from_yaml_str(&text, &path.display().to_string())
    }

    /// The arena as model geometry.
    pub fn arena(&self) -> Arena {
        let a = &self.arena;
        Arena {
            bounds: Aabb::new(a.min[0], a.min[1], a.max[0], a.max[1]),
            obstacles: a
                .obstacles
                .iter()
                .map(|b| Aabb::new(b.min[0], b.min[1], b.max[0], b.max[1]))
                .collect(),
        }
    }

    /// Wind model parameters.
    pub fn wind_params(&self) -> WindParams {
        WindParams {
            speed: self.wind.speed,
            direction: self.wind.direction,
            direction_std: self.wind.meander.direction_std,
            speed_std: self.wind.meander.speed_std,
            correlation_time: self.wind.meander.correlation_time,
        }
    }

    /// Filament sources.
    pub fn filament_sources(&self) -> Vec<FilamentSource> {
        self.sources
            .iter()
            .map(|s| FilamentSource {
                position: s.position,
                rate: s.release_rate,
                params: s.filaments.clone(),
            })
            .collect()
    }

    /// Nominal MOX parameters of channel `index` (shared parameters with the channel's own
    /// R0; a `fast` channel takes `fast_tau` for both time constants). Each unit is drawn
    /// around these by the world.
    pub fn mox_params(&self, index: usize) -> MoxParams {
        let mut p = self.sensors.mox.clone();
        if let Some(ch) = self.sensors.channels.get(index) {
            if let Some(r0) = ch.r0 {
                p.r0 = r0;
            }
            if ch.kind == SensorKind::Fast {
                p.tau_rise = p.fast_tau;
                p.tau_decay = p.fast_tau;
            }
        }
        p
    }

    /// The wind field kind in force (the default resolved from the plume mode).
    pub fn wind_field(&self) -> WindFieldKind {
        self.wind.field.unwrap_or(match self.plume {
            PlumeSpec::Filament { .. } => WindFieldKind::Grid,
            PlumeSpec::Gaussian { .. } => WindFieldKind::Uniform,
        })
    }

    /// Arena volume for the room model [m^3] (area times `room.height`), if closed.
    pub fn room_volume(&self) -> Option<f64> {
        let r = self.room.as_ref()?;
        let a = &self.arena;
        Some((a.max[0] - a.min[0]) * (a.max[1] - a.min[1]) * r.height)
    }

    /// Checks ranges and consistency; errors name `file` and the key.
    pub fn validate(&self, file: &str) -> Result<(), WorldError> {
        crate::scenario_check::validate(self, file)
    }
}
