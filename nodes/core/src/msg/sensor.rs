//! sensor_msgs.

use super::{ros_message, Header};

ros_message! {
    /// sensor_msgs/LaserScan: a planar scan; angles [rad] CCW from x, ranges [m].
    #[derive(Default)]
    LaserScan = "sensor_msgs/msg/LaserScan",
        "std_msgs/Header header\nfloat32 angle_min\nfloat32 angle_max\nfloat32 angle_increment\nfloat32 time_increment\nfloat32 scan_time\nfloat32 range_min\nfloat32 range_max\nfloat32[] ranges\nfloat32[] intensities\n";
    {
        header: Header, angle_min: f32, angle_max: f32, angle_increment: f32, time_increment: f32,
        scan_time: f32, range_min: f32, range_max: f32, ranges: Vec<f32>, intensities: Vec<f32>,
    }
}
