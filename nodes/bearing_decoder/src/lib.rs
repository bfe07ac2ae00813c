//! Bearing decoder node core: the direction odor comes from, from the timing of odor onsets
//! across sensors and from the contrast of their signals.
//!
//! Inputs (in this order): `odor_events` (OdorEventArray, from the event encoder), `wind`
//! (Vector3Stamped, air velocity, pointing where the air goes to), `chem` (ChemSample, for the
//! channel names and the amplitude cue), `odom` (Odometry, for motion compensation). Output:
//! `odor_bearing` (OdorBearing, base_link, REP 103), at a fixed rate and on new evidence.
//!
//! Modules, upstream first:
//! - [`geometry`]: sensor positions, pairs, layout checks;
//! - [`channels`]: event channel index -> sensor, by name;
//! - [`onsets`]: onset trains per sensor over a sliding window;
//! - [`lag`]: event-train cross-correlation and matched-onset lag with outlier rejection;
//! - [`plane_wave`]: lag <-> bearing (two sensors) and the N-sensor least-squares fit;
//! - [`front_back`]: the two-sensor mirror ambiguity, settled with the wind;
//! - [`air`]: wind and odometry -> air speed, upwind direction, robot velocity;
//! - [`timing`]: the timing cue with its confidence;
//! - [`amplitude`]: the amplitude (tropotaxis) cue with its confidence;
//! - [`fusion`]: the two cues combined by confidence;
//! - [`warnings`]: typed, counted run-time input warnings; [`diagnostics`]: the status;
//! - [`params`]: the parameters; [`node`]: the [`NodeCore`](sillage_core::NodeCore).

pub mod air;
pub mod amplitude;
pub mod channels;
pub mod diagnostics;
pub mod front_back;
pub mod fusion;
pub mod geometry;
pub mod lag;
pub mod node;
pub mod onsets;
pub mod params;
pub mod plane_wave;
pub mod rises;
pub mod timing;
pub mod warnings;

pub use node::{BearingDecoder, Estimate};
pub use params::Params;

/// Default ROS node name.
pub const NODE_NAME: &str = "bearing_decoder";
