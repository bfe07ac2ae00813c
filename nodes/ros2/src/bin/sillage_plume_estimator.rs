//! ROS 2 node `plume_estimator` (run: `ros2 run sillage sillage_plume_estimator --ros-args --params-file FILE`).

fn main() -> std::process::ExitCode {
    sillage_ros2::ros::run_main(vec![sillage_ros2::NodeSpec::of_kind(sillage_stack::NodeKind::PlumeEstimator)])
}
