//! Source mapper node core: a grid posterior over the odor source position, from the
//! detections and non-detections along the robot's path given the wind history, under the
//! encounter model of infotaxis ([`model`]).
//!
//! Topics (relative names, fixed):
//! - inputs: [`topics::ODOM`] (nav_msgs/Odometry, pose in odom), [`topics::WIND`]
//!   (geometry_msgs/Vector3Stamped, air velocity), [`topics::ODOR_EVENTS`]
//!   (sillage_msgs/OdorEventArray, the detections);
//! - outputs: [`topics::SOURCE_MAP`] (nav_msgs/OccupancyGrid in odom, the posterior scaled
//!   to 0-100), [`topics::SOURCE_POSTERIOR`] (geometry_msgs/PoseWithCovarianceStamped in odom,
//!   posterior mean and covariance).
//!
//! Modules: [`k0`] (the Bessel function and its table), [`model`] (the encounter rate),
//! [`grid`] (the posterior), [`node`] (inputs, timer, outputs, diagnostics), [`params`].

pub mod error;
pub mod grid;
pub mod k0;
pub mod model;
pub mod node;
pub mod params;
pub mod topics;

pub use error::MapperError;
pub use node::SourceMapper;
pub use params::Params;

/// Default ROS node name.
pub const NODE_NAME: &str = "source_mapper";
