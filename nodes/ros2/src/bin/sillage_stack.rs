//! The whole sillage stack (event_encoder, bearing_decoder, plume_estimator, arbiter) as four
//! ROS 2 nodes in one process (the simulated world is `sillage_world`, a process of its own).

fn main() -> std::process::ExitCode {
    let specs = sillage_stack::NodeKind::ALL.into_iter().map(sillage_ros2::NodeSpec::of_kind).collect();
    sillage_ros2::ros::run_main(specs)
}
