//! The crate's one error type: what went wrong and where (topic, type, file, key, argument).

use sillage_core::params::ParamFileError;
use thiserror::Error;

/// Errors of the DDS executor.
#[derive(Debug, Error)]
pub enum DdsError {
    /// A topic name (after namespacing and remapping) breaks the ROS 2 name rules.
    #[error("topic '{topic}' is not a valid ROS 2 name: {reason}")]
    BadTopicName { topic: String, reason: String },
    /// A type name is not `pkg/msg/Type` or `pkg/Type`.
    #[error("type '{type_name}' is not a ROS 2 message type name (pkg/msg/Type)")]
    BadTypeName { type_name: String },
    /// A port declares a type the vocabulary cannot encode or decode.
    #[error("node '{node}', topic '{topic}': type '{type_name}' is not part of the message vocabulary")]
    UnknownType { node: String, topic: String, type_name: String },
    /// Two ports on one topic declare different types.
    #[error("topic '{topic}' has conflicting types '{first}' and '{second}' (node '{node}')")]
    TypeConflict { topic: String, first: String, second: String, node: String },
    /// A node declares a timer with a period that is not positive.
    #[error("node '{node}' declares timer {index} with period {period} ns (must be > 0)")]
    BadTimer { node: String, index: usize, period: i64 },
    /// A parameter file could not be used.
    #[error(transparent)]
    Params(#[from] ParamFileError),
    /// `use_sim_time` is not a boolean.
    #[error("node '{node}': 'use_sim_time' must be true or false, found {found}")]
    UseSimTime { node: String, found: String },
    /// The ROS arguments are not usable (rcl grammar).
    #[error(transparent)]
    RosArgs(#[from] sillage_ros2::names::ArgsError),
    /// A node could not start (its parameters).
    #[error(transparent)]
    Runtime(#[from] sillage_ros2::runtime::RuntimeError),
    /// A command-line argument is wrong.
    #[error("argument '{arg}': {reason}")]
    BadArgument { arg: String, reason: String },
    /// The stack could not be built (unknown node kind, bad parameters).
    #[error(transparent)]
    Stack(#[from] sillage_stack::StackError),
    /// The DDS middleware refused to create an entity or failed.
    #[error("DDS: {what}: {reason}")]
    Transport { what: String, reason: String },
}
