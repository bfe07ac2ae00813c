//! JSON form of messages (for dumps and comparisons with outside libraries): a map of ROS
//! field names in `.msg` order; `builtin_interfaces/Time` as `{sec, nanosec}`; sequences and
//! fixed arrays as lists; float32 values widened exactly to f64.

use sillage_core::Msg;

/// The message as a JSON value.
pub fn msg_to_json(msg: &Msg) -> serde_json::Value {
    macro_rules! each {
        ($($v:ident),*) => {
            match msg { $( Msg::$v(m) => serde_json::to_value(m), )* }
        };
    }
    each!(
        ChemSample, OdorEventArray, OdorBearing, PlumeFeatures, SearchState, Vector3Stamped, Odometry, Bool, Empty, LaserScan,
        Twist, TwistStamped, PointStamped, DiagnosticArray, Clock, OccupancyGrid, PoseWithCovarianceStamped
    )
    .unwrap_or(serde_json::Value::Null)
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::*;

    #[test]
    fn float32_is_widened_exactly_and_fields_keep_ros_names() {
        let m = LaserScan { angle_min: 0.1, ranges: vec![1.5, 0.1], ..Default::default() };
        let v = msg_to_json(&Msg::from(m));
        assert_eq!(v["angle_min"].as_f64(), Some(f64::from(0.1f32)));
        assert_eq!(v["ranges"][1].as_f64(), Some(f64::from(0.1f32)));
        assert_eq!(v["header"]["stamp"]["nanosec"].as_u64(), Some(0));
    }
}
