//! The shared vocabulary of sillage.
//!
//! - [`msg`]: Rust mirrors of the `sillage_msgs` messages and of the standard ROS 2 messages the
//!   node graph uses, each with its ROS type name and `ros2msg` definition ([`RosMessage`]);
//! - [`cdr`]: the one ROS 2 CDR codec (XCDR1, 4-byte encapsulation header), with a direct
//!   path for Odometry ([`cdr_odometry`]);
//! - [`any`]: [`Msg`], the closed set of messages that travel between nodes;
//! - [`node`]: the [`NodeCore`] trait every pure node core implements;
//! - [`executor`]: the deterministic virtual-time in-process executor;
//! - [`params`]: typed node parameters loaded from ROS 2 parameter YAML;
//! - [`time`]: nanosecond time stamps.

pub mod any;
pub mod cdr;
pub mod cdr_odometry;
pub mod executor;
pub mod msg;
pub mod node;
pub mod params;
pub mod ros_type;
pub mod time;

pub use any::Msg;
pub use node::{NodeCore, Outbox, Port, Qos};
pub use ros_type::RosMessage;
pub use time::Nanos;
