// (Included by build.rs too, so no inner doc comments here.)
// The ROS 2 distributions sillage supports, shared by the build script (which refuses the
// others) and the library. r2r 0.9.7 also builds for some end-of-life distributions (foxy,
// galactic, iron) that sillage does not test against, and itself refuses names it does not
// know (e.g. kilted).

/// Supported `ROS_DISTRO` values: the LTS releases Humble, Jazzy and Lyrical, and Rolling.
pub const SUPPORTED_DISTROS: &[&str] = &["humble", "jazzy", "lyrical", "rolling"];

/// `Ok` for a supported `ROS_DISTRO`, else the message the build prints.
pub fn check_distro(distro: &str) -> Result<(), String> {
    if SUPPORTED_DISTROS.contains(&distro) {
        Ok(())
    } else {
        Err(format!(
            "sillage-ros2: ROS_DISTRO is '{distro}', which sillage does not support. Supported: {}. \
             Source one of them (e.g. `source /opt/ros/jazzy/setup.bash`) and build again; \
             to type-check without ROS use `--features doc-only`.",
            SUPPORTED_DISTROS.join(", ")
        ))
    }
}
