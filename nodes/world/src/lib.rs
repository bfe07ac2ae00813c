//! Physics of the simulated world for sillage: meandering wind (uniform, or a potential
//! flow around the obstacles on a grid), a turbulent filament plume and a time-averaged
//! Gaussian plume, a well-mixed room background, MOX gas sensors with unit spread and
//! drift, an anemometer, robot kinematics, an arena with obstacles and a planar laser, and
//! YAML scenarios.
//!
//! Everything is pure and deterministic: randomness comes from seeded ChaCha8 streams,
//! time is virtual (nanoseconds), and the only I/O is [`Scenario::from_path`].
//! Units are SI; frames follow REP 103/105 (world = ENU `odom`, sensors in `base_link`);
//! wind vectors point where the air goes to.

pub mod anemometer;
pub mod arena;
pub mod error;
pub mod filament;
pub mod gaussian_plume;
pub mod geometry;
pub mod laser;
pub mod mox;
pub mod noise;
pub mod robot;
pub mod room;
pub mod sampling;
pub mod scenario;
mod scenario_check;
pub mod wind;
pub mod wind_grid;
pub mod world;

pub use error::WorldError;
pub use geometry::{Pose2, Twist2};
pub use scenario::Scenario;
pub use world::{ChemReading, GridSpec, WindReading, World};
