//! Source mapper node core: a grid posterior over the odor source position, from the
//! detections and non-detections along the robot's path given the wind history.
//!
//! Topics (relative names, fixed):
//! - inputs: [`topics::ODOM`] (nav_msgs/Odometry, pose in odom), [`topics::WIND`]
//!   (geometry_msgs/Vector3Stamped, air velocity), [`topics::ODOR_EVENTS`]
//!   (sillage_msgs/OdorEventArray, the detections);
//! - outputs: [`topics::SOURCE_MAP`] (nav_msgs/OccupancyGrid in odom, the posterior scaled
//!   to 0-100), [`topics::SOURCE_POSTERIOR`] (geometry_msgs/PoseWithCovarianceStamped in odom,
//!   posterior mean and covariance).

pub mod topics;

/// Default ROS node name.
pub const NODE_NAME: &str = "source_mapper";
