//! ROS 2 node `source_mapper` (run: `ros2 run sillage sillage_source_mapper --ros-args --params-file FILE`).

fn main() -> std::process::ExitCode {
    sillage_ros2::ros::run_main(vec![sillage_ros2::NodeSpec::of_kind(sillage_stack::NodeKind::SourceMapper)])
}
