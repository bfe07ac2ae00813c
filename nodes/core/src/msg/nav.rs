//! nav_msgs.

use super::{ros_message, Header, Pose, PoseWithCovariance, Time, TwistWithCovariance};

ros_message! {
    /// nav_msgs/Odometry: pose in `header.frame_id` (odom), twist in `child_frame_id`
    /// (base_link).
    #[derive(Default)]
    Odometry = "nav_msgs/msg/Odometry",
        "std_msgs/Header header\nstring child_frame_id\ngeometry_msgs/PoseWithCovariance pose\ngeometry_msgs/TwistWithCovariance twist\n";
    { header: Header, child_frame_id: String, pose: PoseWithCovariance, twist: TwistWithCovariance }
}

ros_message! {
    /// nav_msgs/MapMetaData: `resolution` [m/cell], `width` and `height` [cells], `origin` the
    /// pose of the corner of cell (0, 0) that has the smallest x and y.
    #[derive(Default)]
    MapMetaData = "nav_msgs/msg/MapMetaData",
        "builtin_interfaces/Time map_load_time\nfloat32 resolution\nuint32 width\nuint32 height\ngeometry_msgs/Pose origin\n";
    { map_load_time: Time, resolution: f32, width: u32, height: u32, origin: Pose }
}

ros_message! {
    /// nav_msgs/OccupancyGrid: a 2-D grid, `data` row-major from cell (0, 0), x fastest (cell
    /// (1, 0) second, cell (0, 1) at index `info.width`); the values are up to the publisher
    /// (-1 commonly means unknown).
    #[derive(Default)]
    OccupancyGrid = "nav_msgs/msg/OccupancyGrid", "std_msgs/Header header\nMapMetaData info\nint8[] data\n";
    { header: Header, info: MapMetaData, data: Vec<i8> }
}
