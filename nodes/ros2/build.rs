//! Refuses unsupported ROS 2 distributions when the `ros2` feature builds against a sourced
//! ROS (not under `doc-only`, where no ROS is used).

include!("src/distro.rs");

fn main() {
    println!("cargo:rerun-if-env-changed=ROS_DISTRO");
    println!("cargo:rerun-if-changed=src/distro.rs");
    let ros2 = std::env::var_os("CARGO_FEATURE_ROS2").is_some();
    let doc_only = std::env::var_os("CARGO_FEATURE_DOC_ONLY").is_some();
    if !ros2 || doc_only {
        return;
    }
    match std::env::var("ROS_DISTRO") {
        Ok(distro) => {
            if let Err(message) = check_distro(&distro) {
                eprintln!("{message}");
                std::process::exit(1);
            }
        }
        Err(_) => {
            eprintln!(
                "sillage-ros2: the `ros2` feature needs a sourced ROS 2 ({}) with sillage_msgs built \
                 (ROS_DISTRO is not set). To type-check without ROS use `--features doc-only`.",
                SUPPORTED_DISTROS.join(", ")
            );
            std::process::exit(1);
        }
    }
}
