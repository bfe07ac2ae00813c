//! geometry_msgs.

use super::{ros_message, Header};
use serde::{Deserialize, Deserializer, Serialize, Serializer};

ros_message! {
    /// geometry_msgs/Vector3 [units of the user].
    #[derive(Default, Copy)]
    Vector3 = "geometry_msgs/msg/Vector3", "float64 x\nfloat64 y\nfloat64 z\n";
    { x: f64, y: f64, z: f64 }
}

ros_message! {
    /// geometry_msgs/Vector3Stamped (the wind input: air velocity [m/s], pointing where the air
    /// goes to).
    #[derive(Default)]
    Vector3Stamped = "geometry_msgs/msg/Vector3Stamped", "std_msgs/Header header\nVector3 vector\n";
    { header: Header, vector: Vector3 }
}

ros_message! {
    /// geometry_msgs/Point [m].
    #[derive(Default, Copy)]
    Point = "geometry_msgs/msg/Point", "float64 x\nfloat64 y\nfloat64 z\n";
    { x: f64, y: f64, z: f64 }
}

ros_message! {
    /// geometry_msgs/PointStamped (the source estimate).
    #[derive(Default)]
    PointStamped = "geometry_msgs/msg/PointStamped", "std_msgs/Header header\nPoint point\n";
    { header: Header, point: Point }
}

ros_message! {
    /// geometry_msgs/Quaternion; the default is the identity rotation (w = 1).
    #[derive(Copy)]
    Quaternion = "geometry_msgs/msg/Quaternion", "float64 x 0\nfloat64 y 0\nfloat64 z 0\nfloat64 w 1\n";
    { x: f64, y: f64, z: f64, w: f64 }
}

impl Default for Quaternion {
    fn default() -> Self {
        Quaternion { x: 0.0, y: 0.0, z: 0.0, w: 1.0 }
    }
}

impl Quaternion {
    /// A rotation of `yaw` [rad] about z.
    pub fn from_yaw(yaw: f64) -> Quaternion {
        let (s, c) = (yaw * 0.5).sin_cos();
        Quaternion { x: 0.0, y: 0.0, z: s, w: c }
    }

    /// The yaw [rad, -pi..pi] of this rotation (ZYX convention).
    pub fn yaw(&self) -> f64 {
        let siny = 2.0 * (self.w * self.z + self.x * self.y);
        let cosy = 1.0 - 2.0 * (self.y * self.y + self.z * self.z);
        siny.atan2(cosy)
    }
}

ros_message! {
    /// geometry_msgs/Pose.
    #[derive(Default, Copy)]
    Pose = "geometry_msgs/msg/Pose", "Point position\nQuaternion orientation\n";
    { position: Point, orientation: Quaternion }
}

/// A row-major 6x6 covariance, `float64[36]` on the wire (a fixed array: no length prefix).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Covariance(pub [f64; 36]);

impl Default for Covariance {
    fn default() -> Self {
        Covariance([0.0; 36])
    }
}

impl Serialize for Covariance {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        serde_big_array::BigArray::serialize(&self.0, s)
    }
}

impl<'de> Deserialize<'de> for Covariance {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        <[f64; 36] as serde_big_array::BigArray<'de, f64>>::deserialize(d).map(Covariance)
    }
}

ros_message! {
    /// geometry_msgs/PoseWithCovariance.
    #[derive(Default)]
    PoseWithCovariance = "geometry_msgs/msg/PoseWithCovariance", "Pose pose\nfloat64[36] covariance\n";
    { pose: Pose, covariance: Covariance }
}

ros_message! {
    /// geometry_msgs/PoseWithCovarianceStamped (the source posterior: mean position and its
    /// covariance in `header.frame_id`).
    #[derive(Default)]
    PoseWithCovarianceStamped = "geometry_msgs/msg/PoseWithCovarianceStamped", "std_msgs/Header header\nPoseWithCovariance pose\n";
    { header: Header, pose: PoseWithCovariance }
}

ros_message! {
    /// geometry_msgs/Twist: linear [m/s] and angular [rad/s] velocity.
    #[derive(Default, Copy)]
    Twist = "geometry_msgs/msg/Twist", "Vector3 linear\nVector3 angular\n";
    { linear: Vector3, angular: Vector3 }
}

ros_message! {
    /// geometry_msgs/TwistStamped.
    #[derive(Default)]
    TwistStamped = "geometry_msgs/msg/TwistStamped", "std_msgs/Header header\nTwist twist\n";
    { header: Header, twist: Twist }
}

ros_message! {
    /// geometry_msgs/TwistWithCovariance.
    #[derive(Default)]
    TwistWithCovariance = "geometry_msgs/msg/TwistWithCovariance", "Twist twist\nfloat64[36] covariance\n";
    { twist: Twist, covariance: Covariance }
}
