//! Errors of the simulator crate: each says what went wrong and where (topic, field, key,
//! scenario file, episode).

use sillage_core::executor::ExecutorError;
use sillage_core::params::ParamError;
use sillage_stack::StackError;
use sillage_world::WorldError;

/// Errors of the world node and the episode runner.
#[derive(Debug, thiserror::Error)]
pub enum SimError {
    /// A `cmd_vel` message of a type the node does not take.
    #[error("cmd_vel: type '{got}' is neither geometry_msgs/msg/Twist nor TwistStamped")]
    CommandType {
        /// Type received.
        got: &'static str,
    },
    /// A stamped `cmd_vel` in another frame than the robot body.
    #[error("cmd_vel: header.frame_id '{frame}' (expected '{expected}' or empty)")]
    CommandFrame {
        /// Frame received.
        frame: String,
        /// The body frame.
        expected: String,
    },
    /// A non-finite `cmd_vel` component.
    #[error("cmd_vel: {field} = {value} is not finite")]
    CommandValue {
        /// Field path in the Twist.
        field: &'static str,
        /// The value.
        value: f64,
    },
    /// The scenario or the world could not be built.
    #[error(transparent)]
    World(#[from] WorldError),
    /// A parameter of the world node is wrong.
    #[error("sim_world: {0}")]
    Param(#[from] ParamError),
    /// The stack could not be built from its parameter file.
    #[error(transparent)]
    Stack(#[from] StackError),
    /// A parameter override derived from the scenario (geometry) or asked for (strategy) was
    /// refused by a node.
    #[error("node '{node}': override {what}: {error}")]
    Override {
        /// Fully qualified node name.
        node: String,
        /// Which override.
        what: String,
        /// The node's refusal.
        error: ParamError,
    },
    /// The executor refused the graph or ran away.
    #[error("episode {episode}: {error}")]
    Executor {
        /// Episode index.
        episode: usize,
        /// The executor's error.
        error: ExecutorError,
    },
    /// The arbiter's `cmd_vel` type and the world's disagree.
    #[error("cmd_vel type mismatch: the arbiter publishes '{arbiter}', the world node takes '{world}'")]
    CommandTypeMismatch {
        /// Type declared by the arbiter.
        arbiter: String,
        /// Type declared by the world node.
        world: String,
    },
    /// A node the runner needs is missing from the configured stack.
    #[error("the stack has no '{0}' node (the episode runner needs it)")]
    MissingNode(&'static str),
}
