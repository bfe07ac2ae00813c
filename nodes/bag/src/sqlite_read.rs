//! sqlite3 storage files (`.db3`): a cursor in timestamp order.
//!
//! The topics come from the `topics` table (and, in bags of ROS 2 Iron and later, the schemas
//! from `message_definitions`); messages from one query ordered by (timestamp, id), run on a
//! reader thread that hands rows over in small batches through a bounded channel, so memory
//! stays bounded whatever the bag's length. Older bags (Humble and before) lack some tables
//! and columns; only `topics(id, name, type, serialization_format)` and
//! `messages(id, topic_id, timestamp, data)` are required.

use crate::error::{BagError, Location};
use crate::source::{Head, Source, TopicDecl};
use rusqlite::{Connection, OpenFlags};
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, Receiver};

const BATCH: usize = 512;
const BATCHES_IN_FLIGHT: usize = 4;

struct Row {
    id: i64,
    topic: i64,
    time: i64,
    data: Vec<u8>,
    crc: u32,
}

type Batch = Result<Vec<Row>, String>;

/// A cursor over one sqlite3 bag file.
pub struct SqliteSource {
    path: PathBuf,
    topics: HashMap<i64, TopicDecl>,
    first_time: Option<i64>,
    range: (i64, i64),
    rx: Option<Receiver<Batch>>,
    batch: Vec<Row>,
    pos: usize,
    started: bool,
}

fn sql_err(path: &Path, e: impl std::fmt::Display) -> BagError {
    BagError::Sqlite { path: path.to_path_buf(), reason: e.to_string() }
}

/// Opens the database read-only (no journal or lock files are created next to the bag).
pub(crate) fn open_db(path: &Path) -> Result<Connection, BagError> {
    let c = Connection::open_with_flags(path, OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX)
        .map_err(|e| sql_err(path, e))?;
    // A quick check that the file is a database at all (the header is read lazily).
    c.query_row("SELECT count(*) FROM sqlite_master", [], |r| r.get::<_, i64>(0)).map_err(|e| sql_err(path, e))?;
    Ok(c)
}

fn columns(c: &Connection, table: &str) -> Vec<String> {
    let Ok(mut st) = c.prepare(&format!("PRAGMA table_info({table})")) else { return Vec::new() };
    st.query_map([], |r| r.get::<_, String>(1)).map(|rows| rows.filter_map(Result::ok).collect()).unwrap_or_default()
}

/// The topics of a sqlite3 bag, by topic id.
pub(crate) fn read_topics(c: &Connection, path: &Path) -> Result<HashMap<i64, TopicDecl>, BagError> {
    let cols = columns(c, "topics");
    for need in ["id", "name", "type", "serialization_format"] {
        if !cols.iter().any(|x| x == need) {
            return Err(sql_err(path, format!("table 'topics' lacks column '{need}' (not a rosbag2 bag?)")));
        }
    }
    let qos_col = if cols.iter().any(|x| x == "offered_qos_profiles") { "offered_qos_profiles" } else { "''" };
    let mut defs: HashMap<String, (String, String)> = HashMap::new();
    let def_cols = columns(c, "message_definitions");
    if ["topic_type", "encoding", "encoded_message_definition"].iter().all(|n| def_cols.iter().any(|x| x == n)) {
        let mut st = c
            .prepare("SELECT topic_type, encoding, encoded_message_definition FROM message_definitions")
            .map_err(|e| sql_err(path, e))?;
        let rows = st
            .query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?, r.get::<_, String>(2)?)))
            .map_err(|e| sql_err(path, e))?;
        for row in rows {
            let (t, enc, text) = row.map_err(|e| sql_err(path, e))?;
            defs.insert(t, (enc, text));
        }
    }
    let mut st = c
        .prepare(&format!("SELECT id, name, type, serialization_format, {qos_col} FROM topics"))
        .map_err(|e| sql_err(path, e))?;
    let rows = st
        .query_map([], |r| {
            Ok((r.get::<_, i64>(0)?, r.get::<_, String>(1)?, r.get::<_, String>(2)?, r.get::<_, String>(3)?, r.get::<_, Option<String>>(4)?))
        })
        .map_err(|e| sql_err(path, e))?;
    let mut out = HashMap::new();
    for row in rows {
        let (id, name, type_name, encoding, qos) = row.map_err(|e| sql_err(path, e))?;
        let (schema_encoding, schema) = defs.get(&type_name).cloned().unwrap_or_default();
        out.insert(id, TopicDecl { name, type_name, encoding, schema_encoding, schema, qos: qos.unwrap_or_default() });
    }
    Ok(out)
}

impl SqliteSource {
    /// Opens a `.db3` file for messages with timestamps in `[start, end]` [ns].
    pub fn open(path: &Path, start: i64, end: i64) -> Result<SqliteSource, BagError> {
        let c = open_db(path)?;
        let topics = read_topics(&c, path)?;
        let cols = columns(&c, "messages");
        for need in ["id", "topic_id", "timestamp", "data"] {
            if !cols.iter().any(|x| x == need) {
                return Err(sql_err(path, format!("table 'messages' lacks column '{need}'")));
            }
        }
        let first_time = c
            .query_row("SELECT MIN(timestamp) FROM messages WHERE timestamp >= ?1 AND timestamp <= ?2", [start, end], |r| {
                r.get::<_, Option<i64>>(0)
            })
            .map_err(|e| sql_err(path, e))?;
        Ok(SqliteSource { path: path.to_path_buf(), topics, first_time, range: (start, end), rx: None, batch: Vec::new(), pos: 0, started: false })
    }

    /// The topics of the file, by topic id.
    pub fn topics(&self) -> &HashMap<i64, TopicDecl> {
        &self.topics
    }

    fn spawn(&mut self) {
        let (tx, rx) = sync_channel::<Batch>(BATCHES_IN_FLIGHT);
        let path = self.path.clone();
        let (start, end) = self.range;
        std::thread::spawn(move || {
            let run = || -> Result<(), String> {
                let c = open_db(&path).map_err(|e| e.to_string())?;
                let mut st = c
                    .prepare(
                        "SELECT id, topic_id, timestamp, data FROM messages WHERE timestamp >= ?1 AND timestamp <= ?2 ORDER BY timestamp, id",
                    )
                    .map_err(|e| e.to_string())?;
                let mut rows = st.query([start, end]).map_err(|e| e.to_string())?;
                let mut batch = Vec::with_capacity(BATCH);
                while let Some(r) = rows.next().map_err(|e| e.to_string())? {
                    let data = r.get::<_, Option<Vec<u8>>>(3).map_err(|e| e.to_string())?.unwrap_or_default();
                    let row = Row {
                        id: r.get(0).map_err(|e| e.to_string())?,
                        topic: r.get(1).map_err(|e| e.to_string())?,
                        time: r.get(2).map_err(|e| e.to_string())?,
                        crc: crc32fast::hash(&data),
                        data,
                    };
                    batch.push(row);
                    if batch.len() == BATCH && tx.send(Ok(std::mem::replace(&mut batch, Vec::with_capacity(BATCH)))).is_err() {
                        return Ok(()); // the reader was dropped
                    }
                }
                if !batch.is_empty() {
                    let _ = tx.send(Ok(batch));
                }
                Ok(())
            };
            if let Err(e) = run() {
                let _ = tx.send(Err(e));
            }
        });
        self.rx = Some(rx);
    }
}

impl Source for SqliteSource {
    fn path(&self) -> &Path {
        &self.path
    }

    fn start_time(&self) -> Option<i64> {
        self.first_time
    }

    fn topic(&self, topic: i64) -> Option<TopicDecl> {
        self.topics.get(&topic).cloned()
    }

    fn advance(&mut self) -> Result<bool, BagError> {
        if !self.started {
            self.started = true;
            self.spawn();
        } else {
            self.pos += 1;
        }
        if self.pos < self.batch.len() {
            return Ok(true);
        }
        let Some(rx) = &self.rx else { return Ok(false) };
        match rx.recv() {
            Ok(Ok(batch)) => {
                self.batch = batch;
                self.pos = 0;
                Ok(!self.batch.is_empty())
            }
            Ok(Err(reason)) => {
                self.rx = None;
                let after = self.batch.last().map(|r| format!(" (after {})", Location::Row(r.id))).unwrap_or_default();
                Err(sql_err(&self.path, format!("reading messages{after}: {reason}")))
            }
            Err(_) => {
                self.rx = None;
                self.batch.clear();
                Ok(false)
            }
        }
    }

    fn head(&self) -> Option<Head<'_>> {
        let r = self.batch.get(self.pos)?;
        Some(Head { log_time: r.time, topic: r.topic, data: &r.data, at: Location::Row(r.id), crc: r.crc })
    }
}
