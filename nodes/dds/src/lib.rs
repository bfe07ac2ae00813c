//! sillage over DDS, without a ROS installation: a third executor for the node cores that
//! speaks the ROS 2 wire protocol (RTPS/DDS, XCDR1) through `ros2-client` and RustDDS, both
//! pure Rust. It runs the stack (or one node) on a companion computer that has no ROS.
//!
//! The pure parts build and test without the `dds` feature:
//! - [`names`]: ROS names to DDS topic and type names (`/cmd_vel` -> `rt/cmd_vel`), the one place;
//! - [`qos`]: each port class's DDS profile;
//! - [`clock`]: the ROS clock (system or `/clock`) and rcl-like timers;
//! - [`args`] and [`setup`]: the command line, parameter files, namespaces, remaps, `use_sim_time`;
//! - [`intake`]: the guard against malformed, mistyped and flooding input;
//! - [`engine`]: wiring, CDR decoding and encoding with sillage's own codec, local delivery,
//!   timers and `/diagnostics`, independent of any transport.
//!
//! With `dds`, [`dds`] moves the engine's bytes over DDS and [`dds::run`] is the executor loop.

pub mod args;
pub mod clock;
pub mod engine;
pub mod error;
pub mod intake;
pub mod names;
pub mod qos;
pub mod setup;

#[cfg(feature = "dds")]
pub mod dds;

pub use error::DdsError;
