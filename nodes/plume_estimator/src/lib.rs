//! Plume estimator node core: bouts in the chemical signal, windowed plume-structure
//! features, and a calibrated distance to the source.
//!
//! Pipeline per channel: conditioning ([`conditioning`]) → uniform grid ([`grid`]) →
//! band-pass to a smoothed derivative ([`chain`], built from [`filters`]) → bouts
//! ([`bouts`], threshold from [`noise`]) → per-step bins → window features ([`window`]) →
//! pooled over channels → distance ([`distance`], fitted by [`calibration`] from windows
//! labelled by [`labels`]). The node
//! ([`node`]) publishes `plume_features` every `features.step`; [`diagnostics`] reports
//! per-channel values.

pub mod bouts;
pub mod calibration;
pub mod chain;
pub mod channel;
pub mod conditioning;
pub mod diagnostics;
pub mod distance;
pub mod error;
pub mod filters;
pub mod grid;
pub mod labels;
pub mod node;
pub mod noise;
pub mod params;
pub mod wind;
pub mod window;

pub use error::PlumeError;
pub use node::PlumeEstimator;
pub use params::Params;

/// Default ROS node name.
pub const NODE_NAME: &str = "plume_estimator";
