//! nav_msgs.

use super::{ros_message, Header, PoseWithCovariance, TwistWithCovariance};

ros_message! {
    /// nav_msgs/Odometry: pose in `header.frame_id` (odom), twist in `child_frame_id`
    /// (base_link).
    #[derive(Default)]
    Odometry = "nav_msgs/msg/Odometry",
        "std_msgs/Header header\nstring child_frame_id\ngeometry_msgs/PoseWithCovariance pose\ngeometry_msgs/TwistWithCovariance twist\n";
    { header: Header, child_frame_id: String, pose: PoseWithCovariance, twist: TwistWithCovariance }
}
