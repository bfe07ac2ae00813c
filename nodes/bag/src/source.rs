//! What one storage file offers the merging reader: its topics and a cursor over its messages
//! in log-time order, one message at a time, with bounded memory.

use crate::error::{BagError, Location};

use std::path::Path;

/// A topic (MCAP channel, sqlite3 `topics` row) as a file declares it.
#[derive(Debug, Clone, PartialEq)]
pub struct TopicDecl {
    /// Topic name.
    pub name: String,
    /// Declared type, `pkg/msg/Type`.
    pub type_name: String,
    /// Message encoding (`cdr`).
    pub encoding: String,
    /// Schema encoding (`ros2msg`, `ros2idl`, or empty when the file has none).
    pub schema_encoding: String,
    /// Schema text (empty when the file has none).
    pub schema: String,
    /// `offered_qos_profiles` as stored (YAML text).
    pub qos: String,
}

/// The message a cursor currently points at.
#[derive(Debug, Clone)]
pub struct Head<'a> {
    /// Log (receive) time [ns].
    pub log_time: i64,
    /// The file's own topic id (MCAP channel id, sqlite3 topic id).
    pub topic: i64,
    /// Serialized message (CDR with encapsulation header).
    pub data: &'a [u8],
    /// Where the message is in the file.
    pub at: Location,
    /// CRC-32 of `data` (duplicate detection).
    pub crc: u32,
}

/// A cursor over one storage file.
pub trait Source {
    /// The file.
    fn path(&self) -> &Path;
    /// First log time of the file's messages (for merging split bags), if known.
    fn start_time(&self) -> Option<i64>;
    /// The topic with the file's id `topic`, if the file declared it.
    fn topic(&self, topic: i64) -> Option<TopicDecl>;
    /// Moves to the next message (the first call moves to the first one); `Ok(false)` at the
    /// end.
    fn advance(&mut self) -> Result<bool, BagError>;
    /// The current message (after `advance` returned `Ok(true)`).
    fn head(&self) -> Option<Head<'_>>;
    /// Things tolerated so far (truncation at the end of a file, ...), drained.
    fn take_warnings(&mut self) -> Vec<String> {
        Vec::new()
    }
    /// Damage met so far (in salvage mode: skipped chunks, a cut-off end), drained.
    fn take_damage(&mut self) -> Vec<crate::error::Damage> {
        Vec::new()
    }
}

/// Which storage a file uses, by magic bytes (then by extension).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Storage {
    /// MCAP (`rosbag2_storage_mcap`).
    Mcap,
    /// sqlite3 (`rosbag2_storage_default_plugins`).
    Sqlite3,
}

impl Storage {
    /// The rosbag2 storage identifier.
    pub fn identifier(self) -> &'static str {
        match self {
            Storage::Mcap => "mcap",
            Storage::Sqlite3 => "sqlite3",
        }
    }

    /// Detects the storage of a file from its first bytes (MCAP magic or "SQLite format 3").
    pub fn detect(path: &Path) -> Result<Storage, BagError> {
        use std::io::Read;
        let mut f = std::fs::File::open(path).map_err(|e| BagError::io(path, e))?;
        let mut magic = [0u8; 16];
        let mut n = 0;
        while n < magic.len() {
            let k = f.read(&mut magic[n..]).map_err(|e| BagError::io(path, e))?;
            if k == 0 {
                break;
            }
            n += k;
        }
        if n >= 8 && magic[..8] == *mcap::MAGIC {
            return Ok(Storage::Mcap);
        }
        if n == 16 && &magic == b"SQLite format 3\0" {
            return Ok(Storage::Sqlite3);
        }
        let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
        let at = Location::Offset(0);
        match ext {
            "mcap" => Err(BagError::Mcap { path: path.to_path_buf(), at, reason: "bad magic (not an MCAP file)".into() }),
            "db3" => Err(BagError::Sqlite { path: path.to_path_buf(), reason: "not an SQLite database (bad header)".into() }),
            _ => Err(BagError::NotABag { path: path.to_path_buf() }),
        }
    }
}
