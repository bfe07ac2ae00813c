//! Errors of the sweep logic; each names the file and the key, line or point it is about.

use thiserror::Error;

/// Errors of `sillage-tune`.
#[derive(Debug, Error)]
pub enum TuneError {
    /// A file could not be read or written.
    #[error("{file}: {source}")]
    Io {
        /// The file.
        file: String,
        /// The cause.
        source: std::io::Error,
    },
    /// The sweep file is not valid YAML or does not match the schema.
    #[error("{file}: {key}: {reason}")]
    Schema {
        /// The sweep file.
        file: String,
        /// Dotted path of the offending key in the sweep file (`.` for the top level).
        key: String,
        /// What is wrong.
        reason: String,
    },
    /// A parameter to vary is wrong (unknown, empty range, type...).
    #[error("{file}: parameter '{key}': {reason}")]
    Parameter {
        /// The sweep file.
        file: String,
        /// The dotted parameter key (`node.param`).
        key: String,
        /// What is wrong.
        reason: String,
    },
    /// The objective is wrong.
    #[error("{file}: objective[{index}] '{metric}': {reason}")]
    Objective {
        /// The sweep file.
        file: String,
        /// Index of the term.
        index: usize,
        /// Its metric.
        metric: String,
        /// What is wrong.
        reason: String,
    },
    /// A point's parameter file is refused by a node.
    #[error("point {point}: {reason}")]
    PointParams {
        /// Point id.
        point: String,
        /// The node's refusal (file, node and key).
        reason: String,
    },
    /// A results file line could not be read.
    #[error("{file}:{line}: {reason}")]
    Results {
        /// The results file.
        file: String,
        /// 1-based line number.
        line: usize,
        /// What is wrong.
        reason: String,
    },
    /// Results of another sweep (its fingerprint differs).
    #[error("{file}: results of another sweep (fingerprint {found}, this sweep {expected}); use another --out folder")]
    Mismatch {
        /// The manifest or results file.
        file: String,
        /// Fingerprint found.
        found: String,
        /// Fingerprint expected.
        expected: String,
    },
    /// A `--shard I/N` that is not one.
    #[error("shard '{0}': expected I/N with 0 <= I < N (e.g. 0/4)")]
    Shard(String),
}

impl TuneError {
    /// An I/O error on `file`.
    pub fn io(file: impl AsRef<std::path::Path>, source: std::io::Error) -> TuneError {
        TuneError::Io { file: file.as_ref().display().to_string(), source }
    }
}
