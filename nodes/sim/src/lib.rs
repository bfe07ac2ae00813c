//! The simulated world for sillage's node graph, and the closed-loop evaluation built on it.
//!
//! - [`world_node`]: [`WorldNode`], the world physics of `sillage-world` as a pure
//!   [`NodeCore`](sillage_core::NodeCore) (`cmd_vel` in; `chem`, `wind`, `odom`, `scan`,
//!   `/clock` out), usable by any executor, the ROS 2 one included; [`params`]: its parameters;
//!   [`convert`]: readings to ROS messages;
//! - [`setup`]: the stack as the simulator builds it (parameter file, robot geometry from the
//!   scenario, strategy override);
//! - [`episode`]: the seeded episode runner and its per-episode metrics; [`metrics`]: what is
//!   read from the graph's outputs; [`summary`]: statistics over episodes.
//!
//! Everything is deterministic: an episode is a pure function of the scenario, the parameters
//! and its seed, so results do not depend on how many run in parallel.

pub mod convert;
pub mod cues;
pub mod episode;
pub mod error;
pub mod host;
pub mod metrics;
pub mod params;
pub mod setup;
pub mod summary;
pub mod world_node;

pub use episode::{EpisodeResult, EpisodeSpec, Outcome, RunOptions, Sim, Timeline};
pub use error::SimError;
pub use host::build_world_node;
pub use params::WorldParams;
pub use setup::StackSetup;
pub use summary::Summary;
pub use world_node::{WorldNode, NODE_NAME};
