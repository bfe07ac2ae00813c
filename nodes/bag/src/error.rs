//! The crate's one error type: every variant says what went wrong and where (file, topic,
//! byte offset or row), so a user can find the bad record.

use std::path::PathBuf;
use thiserror::Error;

/// Where in a bag file something was found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Location {
    /// Byte offset in the file (an MCAP record or chunk start).
    Offset(u64),
    /// Byte offset of a chunk record in the file.
    Chunk(u64),
    /// Byte offset of a chunk in the file, and of a record inside the decompressed chunk.
    InChunk { chunk: u64, record: u64 },
    /// Row id in the sqlite3 `messages` table.
    Row(i64),
    /// Nowhere more precise than the file.
    File,
}

impl std::fmt::Display for Location {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Location::Offset(o) => write!(f, "byte {o}"),
            Location::Chunk(c) => write!(f, "chunk at byte {c}"),
            Location::InChunk { chunk, record } => write!(f, "chunk at byte {chunk}, record at byte {record} of the chunk"),
            Location::Row(r) => write!(f, "messages row {r}"),
            Location::File => write!(f, "whole file"),
        }
    }
}

/// Errors of bag reading, writing and replay.
#[derive(Debug, Error)]
pub enum BagError {
    /// The file or folder could not be read or written.
    #[error("{path}: {source}")]
    Io { path: PathBuf, source: std::io::Error },
    /// The path is neither a bag folder nor a `.mcap` / `.db3` file.
    #[error("{path}: not a rosbag2 bag (expected a folder with metadata.yaml, or a .mcap or .db3 file)")]
    NotABag { path: PathBuf },
    /// `metadata.yaml` is not valid rosbag2 metadata.
    #[error("{path}: bad rosbag2 metadata: {reason}")]
    Metadata { path: PathBuf, reason: String },
    /// The storage plugin named in the metadata is not one sillage reads.
    #[error("{path}: storage '{storage}' is not supported (mcap and sqlite3 are)")]
    UnsupportedStorage { path: PathBuf, storage: String },
    /// An MCAP file is malformed (bad magic, truncated record, bad CRC, bad index...).
    #[error("{path}: {at}: MCAP: {reason}")]
    Mcap { path: PathBuf, at: Location, reason: String },
    /// A chunk's CRC does not match its content.
    #[error("{path}: chunk at byte {offset}: CRC mismatch (saved {saved:08x}, computed {computed:08x})")]
    ChunkCrc { path: PathBuf, offset: u64, saved: u32, computed: u32 },
    /// A chunk uses a compression sillage cannot decode.
    #[error("{path}: chunk at byte {offset}: unsupported compression '{compression}' (zstd, lz4 and none are)")]
    Compression { path: PathBuf, offset: u64, compression: String },
    /// An sqlite3 bag could not be read.
    #[error("{path}: sqlite3: {reason}")]
    Sqlite { path: PathBuf, reason: String },
    /// A message could not be decoded as its declared type.
    #[error("{path}: topic '{topic}' ({type_name}), log time {log_time} ns, {at}: {reason}")]
    Decode { path: PathBuf, topic: String, type_name: String, log_time: i64, at: Location, reason: String },
    /// A topic's schema does not match sillage's definition of the type it declares.
    #[error("{path}: topic '{topic}': schema of '{type_name}' does not match sillage's definition: {reason}")]
    SchemaMismatch { path: PathBuf, topic: String, type_name: String, reason: String },
    /// A topic uses a message encoding other than CDR.
    #[error("{path}: topic '{topic}': message encoding '{encoding}' is not supported (cdr is)")]
    Encoding { path: PathBuf, topic: String, encoding: String },
    /// Log times go backwards (in strict mode).
    #[error("{path}: topic '{topic}', {at}: log time {log_time} ns is before the previous message's {previous} ns")]
    NonMonotonic { path: PathBuf, topic: String, at: Location, log_time: i64, previous: i64 },
    /// The MCAP writer failed.
    #[error("{path}: writing MCAP: {reason}")]
    Write { path: PathBuf, reason: String },
    /// A message could not be encoded for writing.
    #[error("{path}: topic '{topic}': cannot encode: {reason}")]
    Encode { path: PathBuf, topic: String, reason: String },
    /// A topic was written with two different types, or a message with a type other than its
    /// topic's.
    #[error("{path}: topic '{topic}' is '{existing}', cannot write '{got}'")]
    TopicType { path: PathBuf, topic: String, existing: String, got: String },
    /// The output exists already and would be overwritten.
    #[error("{path}: exists already, not overwriting")]
    Exists { path: PathBuf },
    /// The executor refused an input or ran away.
    #[error("replay at {log_time} ns: {reason}")]
    Executor { log_time: i64, reason: String },
}

impl BagError {
    /// An I/O error on `path`.
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> BagError {
        BagError::Io { path: path.into(), source }
    }
}

/// Something the reader skipped or tolerated, reported instead of an error.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    /// What happened and where (file, topic, offset).
    pub message: String,
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.message)
    }
}

/// What kind of damage a read met.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DamageKind {
    /// The file ends before its end records (a recording or copy cut off).
    Truncated,
    /// A chunk could not be read (bad CRC, bad compression, cut, bad index entry); skipped.
    Chunk,
    /// The records from here on cannot be parsed; reading the file stopped.
    Unreadable,
}

/// Damage found while reading a file: where, what, and the messages known to be lost there.
#[derive(Debug, Clone, PartialEq)]
pub struct Damage {
    /// The file.
    pub path: PathBuf,
    /// Byte offset of the damaged chunk, or where the file stops making sense [bytes].
    pub offset: u64,
    /// Its kind.
    pub kind: DamageKind,
    /// What the reader said.
    pub reason: String,
    /// Messages lost there per topic, when the file's index says (a skipped chunk).
    pub lost: Vec<(String, u64)>,
}

impl std::fmt::Display for Damage {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let what = match self.kind {
            DamageKind::Truncated => "file cut off",
            DamageKind::Chunk => "damaged chunk skipped",
            DamageKind::Unreadable => "unreadable from here on",
        };
        write!(f, "{}: byte {}: {what} ({})", self.path.display(), self.offset, self.reason)?;
        if !self.lost.is_empty() {
            let l: Vec<String> = self.lost.iter().map(|(t, n)| format!("{t} {n}")).collect();
            write!(f, "; lost: {}", l.join(", "))?;
        }
        Ok(())
    }
}
