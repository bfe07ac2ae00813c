//! Offline validation of the files a robot runs with (what `sillage check` prints):
//! [`params_file`] for ROS 2 parameter files, [`launch_file`] for launch XML (and the
//! parameter files it references), [`caps`] for speed caps beyond common practice. Each check
//! returns every [`Problem`] it finds, each naming the file and the key or line.

pub mod caps;
pub mod launch_file;
pub mod params_file;

use sillage_stack::NodeKind;
use std::fmt;

/// How bad a problem is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    /// Works, but probably not as meant.
    Warning,
    /// Would fail or be ignored on the robot.
    Error,
}

/// One finding.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problem {
    /// The file.
    pub file: String,
    /// Where in it: a YAML key path (`/robot1/arbiter.ros__parameters.rate`) or a line number.
    pub key: String,
    /// Error or warning.
    pub severity: Severity,
    /// What is wrong, and what would be right.
    pub message: String,
}

impl Problem {
    pub(crate) fn error(file: &str, key: impl Into<String>, message: impl Into<String>) -> Problem {
        Problem { file: file.to_string(), key: key.into(), severity: Severity::Error, message: message.into() }
    }

    pub(crate) fn warning(file: &str, key: impl Into<String>, message: impl Into<String>) -> Problem {
        Problem { file: file.to_string(), key: key.into(), severity: Severity::Warning, message: message.into() }
    }

    /// Whether this is an error.
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}

impl fmt::Display for Problem {
    /// `file:key: error: message` (compiler style).
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sev = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        if self.key.is_empty() {
            write!(f, "{}: {sev}: {}", self.file, self.message)
        } else {
            write!(f, "{}:{}: {sev}: {}", self.file, self.key, self.message)
        }
    }
}

/// The node names sillage's parameter files may address, for messages.
pub(crate) fn known_nodes() -> String {
    NodeKind::ALL.iter().map(|k| k.name()).collect::<Vec<_>>().join(", ")
}
