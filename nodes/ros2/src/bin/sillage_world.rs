//! ROS 2 node `sim_world`: the simulated world of a scenario file, driving a simulated robot
//! from `cmd_vel` and publishing `chem`, `wind`, `odom`, `scan` (if the scenario has a laser)
//! and `/clock`. It runs on wall time (it is the source of `/clock`); start the stack with
//! `use_sim_time:=true` (launch/sim.launch.xml does both).
//!
//! `ros2 run sillage sillage_world --ros-args -p scenario:=config/scenarios/demo.yaml`

fn main() -> std::process::ExitCode {
    sillage_ros2::ros::run_main(vec![sillage_ros2::NodeSpec::world()])
}
