//! The crate's error type: what is wrong with an input message or a geofence polygon, and
//! where (topic, field, vertex). Malformed inputs are counted and diagnosed, never panicked on;
//! polygon errors become a [`sillage_core::params::ParamError`] on `geofence.polygon`.

use thiserror::Error;

/// Errors of the arbiter.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum ArbiterError {
    /// A field of an input message has a value the arbiter cannot use.
    #[error("topic '{topic}': field '{field}' = {value}: {reason}")]
    Field { topic: &'static str, field: &'static str, value: String, reason: &'static str },
    /// An input message is expressed in a frame the arbiter does not handle.
    #[error("topic '{topic}': frame '{frame}' is not '{expected}'")]
    Frame { topic: &'static str, frame: String, expected: String },
    /// A message of the wrong type arrived on an input, or on an index that is no input.
    #[error("input {index}: got a '{got}' message, expected '{expected}'")]
    WrongType { index: usize, got: &'static str, expected: &'static str },
    /// The geofence polygon is not a simple polygon.
    #[error("polygon: {reason}")]
    Polygon { reason: String },
}

impl ArbiterError {
    /// A [`ArbiterError::Field`] error with the value printed.
    pub fn field(topic: &'static str, field: &'static str, value: impl std::fmt::Display, reason: &'static str) -> Self {
        ArbiterError::Field { topic, field, value: value.to_string(), reason }
    }
}
