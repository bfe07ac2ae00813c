//! The node abstraction: a pure, deterministic core that the executors drive.
//!
//! A core declares its inputs, outputs and timers once; then an executor calls
//! [`NodeCore::on_message`] for every message on an input and [`NodeCore::on_timer`] for every
//! timer tick, always with the current time, and publishes what the core put in the
//! [`Outbox`]. A core does no I/O, reads no clock, starts no thread and draws no unseeded random
//! number: given the same calls it produces the same outputs.

use crate::msg::DiagnosticStatus;
use crate::params::ParamError;
use crate::{Msg, Nanos};

/// Quality-of-service class of a port; each executor maps it onto its transport.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Qos {
    /// High-rate sensor streams: best effort, keep last 5, volatile.
    SensorData,
    /// Ordinary data and commands: reliable, keep last 10, volatile.
    Reliable,
    /// Latched state (search state): reliable, keep last 1, transient local.
    Latched,
    /// Safety inputs (the e-stop): best effort, keep last 10, volatile, a subscription that
    /// matches every publisher (reliable or best effort, volatile or transient local); never
    /// dropped by an executor's flood limits and served first.
    Safety,
}

impl Qos {
    /// Whether an executor must serve this class first and never drop it under a flood.
    pub fn is_priority(self) -> bool {
        matches!(self, Qos::Latched | Qos::Safety)
    }
}

/// One input or output of a node: a topic name (relative unless it starts with `/`), the
/// full ROS type name and the QoS class.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Port {
    /// Topic name as the node declares it, before namespacing and remapping.
    pub topic: String,
    /// Full ROS type name, e.g. `sillage_msgs/msg/ChemSample`.
    pub type_name: &'static str,
    /// QoS class.
    pub qos: Qos,
}

impl Port {
    /// A port on `topic` carrying `T`.
    pub fn of<T: crate::RosMessage>(topic: &str, qos: Qos) -> Port {
        Port { topic: topic.to_string(), type_name: T::TYPE_NAME, qos }
    }
}

/// Messages a core publishes during one call: (output index, message).
#[derive(Debug, Default)]
pub struct Outbox {
    pub(crate) items: Vec<(usize, Msg)>,
}

impl Outbox {
    /// An empty outbox.
    pub fn new() -> Outbox {
        Outbox::default()
    }

    /// Publishes `msg` on output `output` (index into [`NodeCore::outputs`]).
    pub fn publish(&mut self, output: usize, msg: impl Into<Msg>) {
        self.items.push((output, msg.into()));
    }

    /// Takes the published messages in publication order, keeping the allocation.
    pub fn drain(&mut self) -> std::vec::Drain<'_, (usize, Msg)> {
        self.items.drain(..)
    }

    /// Number of messages waiting.
    pub fn len(&self) -> usize {
        self.items.len()
    }

    /// Whether nothing is waiting.
    pub fn is_empty(&self) -> bool {
        self.items.is_empty()
    }
}

/// A pure, deterministic node core.
pub trait NodeCore: Send {
    /// The default ROS node name (e.g. `event_encoder`).
    fn name(&self) -> &str;
    /// Inputs, in the order their indices are passed to [`NodeCore::on_message`].
    fn inputs(&self) -> Vec<Port>;
    /// Outputs, in the order their indices are used with [`Outbox::publish`].
    fn outputs(&self) -> Vec<Port>;
    /// Timer periods [ns], in the order their indices are passed to [`NodeCore::on_timer`].
    fn timers(&self) -> Vec<Nanos> {
        Vec::new()
    }
    /// A message arrived on input `input` at time `now` [ns].
    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, out: &mut Outbox);
    /// Timer `timer` fired at time `now` [ns].
    fn on_timer(&mut self, _now: Nanos, _timer: usize, _out: &mut Outbox) {}
    /// Current health, appended to `out` (published on /diagnostics at about 1 Hz by the
    /// executors). Names follow "node: part".
    fn diagnostics(&self, _now: Nanos, _out: &mut Vec<DiagnosticStatus>) {}
    /// Current parameters as a nested YAML map (what a parameter file's `ros__parameters`
    /// holds).
    fn params_yaml(&self) -> serde_yaml::Value;
    /// Replaces the parameters (a nested map as in [`NodeCore::params_yaml`]); validated as at
    /// start-up, and on error the old values are kept.
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError>;
}
