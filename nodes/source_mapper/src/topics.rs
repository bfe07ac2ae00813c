//! The source mapper's topic names (relative, before namespacing and remapping).

/// Input: nav_msgs/Odometry, the robot pose in `odom`.
pub const ODOM: &str = "odom";
/// Input: geometry_msgs/Vector3Stamped, air velocity [m/s] pointing where the air goes to.
pub const WIND: &str = "wind";
/// Input: sillage_msgs/OdorEventArray, send-on-delta odor events (detections).
pub const ODOR_EVENTS: &str = "odor_events";
/// Output: nav_msgs/OccupancyGrid in `odom`, the posterior per cell scaled to 0-100.
pub const SOURCE_MAP: &str = "source_map";
/// Output: geometry_msgs/PoseWithCovarianceStamped in `odom`, posterior mean and covariance.
pub const SOURCE_POSTERIOR: &str = "source_posterior";
