//! The whole sillage stack (event_encoder, bearing_decoder, plume_estimator, arbiter) as four
//! ROS 2 nodes in one process. The simulated world node (`sillage_world`) will be a binary
//! like the per-node ones, passing its own `NodeSpec::new(name, builder)` to `run_main`.

fn main() -> std::process::ExitCode {
    let specs = sillage_stack::NodeKind::ALL.into_iter().map(sillage_ros2::NodeSpec::of_kind).collect();
    sillage_ros2::ros::run_main(specs)
}
