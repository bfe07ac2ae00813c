//! Typed errors of the world crate: every variant says what went wrong and where
//! (scenario file, key path, value).

use std::path::PathBuf;

/// Errors raised while loading or validating a scenario, or building a [`crate::World`].
#[derive(Debug, thiserror::Error)]
pub enum WorldError {
    /// The scenario file could not be read.
    #[error("{file}: cannot read scenario: {source}")]
    Read {
        /// File that was being read.
        file: PathBuf,
        /// Underlying I/O error.
        source: std::io::Error,
    },
    /// The YAML text does not match the schema (syntax error, unknown or missing key, wrong type).
    #[error("{file}: key `{key}`: {message}")]
    Parse {
        /// File name (or `<string>` for text given directly).
        file: String,
        /// Dotted path of the offending key (`.` for the document root).
        key: String,
        /// What the parser said, with line and column when known.
        message: String,
    },
    /// A value parses but is outside its allowed range or inconsistent with another value.
    #[error("{file}: key `{key}`: {reason}")]
    Invalid {
        /// File name (or `<string>`).
        file: String,
        /// Dotted path of the offending key.
        key: String,
        /// Why the value is rejected.
        reason: String,
    },
    /// A start-pose index outside the scenario's `robot.start_poses` list.
    #[error("start pose index {index} out of range: the scenario has {count} start poses")]
    StartPose {
        /// Requested index.
        index: usize,
        /// Number of start poses in the scenario.
        count: usize,
    },
}
