//! Event encoder node core: conditions each chemical sensor channel and turns it into
//! send-on-delta or level-crossing events.
//!
//! - input `chem` (`sillage_msgs/ChemSample`, sensor-data QoS): channels matched by name;
//! - output `odor_events` (`sillage_msgs/OdorEventArray`, reliable): one array per sample that
//!   produced events, `header` = the sample's header, events sorted by stamp;
//!   **`OdorEvent.channel` is the index into that sample's `channels` array**;
//! - diagnostics "event_encoder: input" and "event_encoder: <channel>".
//!
//! Layers: [`conditioning`] (shared with other nodes: larger = more gas) and [`encoding`] are
//! per-channel state machines; [`channel::Channel`] is the allocation-free hot path
//! (`step(t_ns, raw)`); [`node`] is the message-level code.

mod decay;
mod overrides;

pub mod channel;
pub mod conditioning;
pub mod diagnostics;
pub mod encoding;
pub mod error;
pub mod layout;
pub mod node;
pub mod params;
pub mod warnings;

pub use channel::Channel;
pub use error::InputError;
pub use node::{EventEncoder, InputCounts};
pub use params::{ChannelOverrides, Params};

/// Default ROS node name.
pub const NODE_NAME: &str = "event_encoder";

#[cfg(test)]
mod tests;
