//! Errors of the source mapper: what input was wrong and where.

use thiserror::Error;

/// A rejected input message.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum MapperError {
    /// The message is in a frame the mapper cannot use.
    #[error("{topic}: frame '{frame}' is not '{expected}'")]
    Frame { topic: &'static str, frame: String, expected: String },
    /// A field has a value the mapper cannot use.
    #[error("{topic}: field {field} = {value}: {reason}")]
    Field { topic: &'static str, field: &'static str, value: String, reason: &'static str },
}

impl MapperError {
    /// A bad field.
    pub fn field(topic: &'static str, field: &'static str, value: impl std::fmt::Display, reason: &'static str) -> MapperError {
        MapperError::Field { topic, field, value: value.to_string(), reason }
    }
}
