//! ROS 2 integration of sillage.
//!
//! Always built (no ROS needed, unit-tested):
//! - [`qos`]: the QoS profile of each port class and the publisher/subscription matching rules;
//! - [`names`]: `--ros-args` parsing and where a node's topics resolve;
//! - [`param_value`]: ROS parameter values and the nested-YAML <-> flat-parameter conversion;
//! - [`spec`]: [`NodeSpec`], how an executor builds a core (the stack's [`NodeKind`]s, or
//!   any other core such as the simulated world node);
//! - [`runtime`]: [`NodeRuntime`], a hosted core behind a CDR-bytes interface with start-up
//!   and run-time parameter validation and counters;
//! - [`diagnostics`]: the 1 Hz /diagnostics aggregation;
//! - [`check`]: offline validation of parameter and launch files (`sillage check`);
//! - [`distro`]: the supported ROS 2 distributions.
//!
//! Behind the `ros2` feature: [`ros`], the r2r executor that runs any set of cores as ROS 2
//! nodes in one process, and the node binaries (`sillage_event_encoder`, ...,
//! `sillage_stack`).
//!
//! [`NodeKind`]: sillage_stack::NodeKind

#![cfg_attr(test, allow(clippy::unwrap_used, clippy::expect_used))]

pub mod check;
pub mod diagnostics;
/// The ROS 2 distributions sillage supports (also read by the build script).
pub mod distro;
pub mod names;
pub mod param_value;
pub mod qos;
pub mod runtime;
pub mod spec;
#[cfg(test)]
mod testing;

#[cfg(feature = "ros2")]
pub mod ros;

pub use param_value::ParamValue;
pub use runtime::NodeRuntime;
pub use spec::NodeSpec;

/// The executables the `sillage` ROS 2 package installs (in `lib/sillage/`), with what each
/// runs.
pub const BINARIES: &[(&str, &str)] = &[
    ("sillage_event_encoder", "event_encoder"),
    ("sillage_bearing_decoder", "bearing_decoder"),
    ("sillage_plume_estimator", "plume_estimator"),
    ("sillage_arbiter", "arbiter"),
    ("sillage_source_mapper", "source_mapper"),
    ("sillage_stack", "event_encoder, bearing_decoder, plume_estimator, arbiter, source_mapper"),
    ("sillage_world", "sim_world (the simulated world: chem, wind, odom, scan, /clock; cmd_vel in)"),
];

/// The executable of the simulated world node.
pub const WORLD_BINARY: &str = "sillage_world";

#[cfg(test)]
mod tests {
    #[test]
    fn supported_distributions() {
        // ROS 2 distributions with r2r 0.9.7 support that are maintained at the end of 2026
        // (REP 2000 release dates, from memory).
        for d in ["humble", "jazzy", "lyrical", "rolling"] {
            assert!(crate::distro::check_distro(d).is_ok(), "{d}");
        }
        for d in ["kilted", "iron", "foxy", ""] {
            let m = crate::distro::check_distro(d).expect_err(d);
            assert!(m.contains("humble, jazzy, lyrical, rolling"), "{m}");
        }
    }
}
