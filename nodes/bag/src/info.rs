//! What `sillage bag info` shows: files, storage, topics with types and counts, time span.
//! Counts come from each file's own index (MCAP statistics, an sqlite3 `GROUP BY`); an MCAP
//! file without a summary is scanned.

use crate::error::BagError;
use crate::mcap_read::McapSource;
use crate::reader::{Bag, BagFile};
use crate::source::{Source, Storage};
use crate::sqlite_read::{open_db, read_topics};
use sillage_core::{Msg, Nanos};
use std::collections::BTreeMap;
use std::path::PathBuf;

/// One storage file.
#[derive(Debug, Clone, PartialEq)]
pub struct FileSummary {
    /// The file.
    pub path: PathBuf,
    /// Its storage.
    pub storage: Storage,
    /// Size [bytes].
    pub size: u64,
    /// Messages in it.
    pub message_count: u64,
    /// First and last log time [ns], if it has messages.
    pub span: Option<(Nanos, Nanos)>,
}

/// One topic over all files.
#[derive(Debug, Clone, PartialEq)]
pub struct TopicInfo {
    /// Topic name.
    pub name: String,
    /// Declared type.
    pub type_name: String,
    /// Message encoding.
    pub serialization_format: String,
    /// Messages.
    pub count: u64,
    /// Whether the type is in sillage's vocabulary (replay reads it).
    pub known: bool,
}

/// The whole bag.
#[derive(Debug, Clone, PartialEq)]
pub struct BagInfo {
    /// Files in order.
    pub files: Vec<FileSummary>,
    /// Topics sorted by name.
    pub topics: Vec<TopicInfo>,
    /// Total messages.
    pub message_count: u64,
    /// First and last log time [ns].
    pub span: Option<(Nanos, Nanos)>,
}

impl BagInfo {
    /// Last minus first log time [ns] (0 for an empty bag).
    pub fn duration(&self) -> Nanos {
        self.span.map_or(0, |(a, b)| b - a)
    }
}

type Counts = BTreeMap<(String, String, String), u64>;

fn merge_span(a: Option<(Nanos, Nanos)>, b: Option<(Nanos, Nanos)>) -> Option<(Nanos, Nanos)> {
    match (a, b) {
        (Some((a0, a1)), Some((b0, b1))) => Some((a0.min(b0), a1.max(b1))),
        (x, None) | (None, x) => x,
    }
}

fn mcap_file(f: &BagFile, counts: &mut Counts) -> Result<(u64, Option<(Nanos, Nanos)>), BagError> {
    let mut src = McapSource::open(&f.path, 0, Nanos::MAX)?;
    if let Some(s) = src.summary() {
        if let Some(st) = &s.stats {
            for (id, ch) in &s.channels {
                let n = st.channel_message_counts.get(id).copied().unwrap_or(0);
                let t = ch.schema.as_ref().map(|s| s.name.clone()).unwrap_or_default();
                *counts.entry((ch.topic.clone(), t, ch.message_encoding.clone())).or_default() += n;
            }
            let span = (st.message_count > 0).then_some((st.message_start_time as Nanos, st.message_end_time as Nanos));
            return Ok((st.message_count, span));
        }
    }
    let (mut n, mut span) = (0u64, None);
    let mut per: BTreeMap<i64, u64> = BTreeMap::new();
    while src.advance()? {
        if let Some(h) = src.head() {
            n += 1;
            *per.entry(h.topic).or_default() += 1;
            span = merge_span(span, Some((h.log_time, h.log_time)));
        }
    }
    for (id, c) in per {
        if let Some(d) = src.topic(id) {
            *counts.entry((d.name, d.type_name, d.encoding)).or_default() += c;
        }
    }
    Ok((n, span))
}

fn sqlite_file(f: &BagFile, counts: &mut Counts) -> Result<(u64, Option<(Nanos, Nanos)>), BagError> {
    let c = open_db(&f.path)?;
    let topics = read_topics(&c, &f.path)?;
    let err = |e: rusqlite::Error| BagError::Sqlite { path: f.path.clone(), reason: e.to_string() };
    let mut st = c.prepare("SELECT topic_id, COUNT(*), MIN(timestamp), MAX(timestamp) FROM messages GROUP BY topic_id").map_err(err)?;
    let rows = st.query_map([], |r| Ok((r.get::<_, i64>(0)?, r.get::<_, i64>(1)?, r.get::<_, i64>(2)?, r.get::<_, i64>(3)?))).map_err(err)?;
    let (mut n, mut span) = (0u64, None);
    let mut seen = std::collections::HashSet::new();
    for row in rows {
        let (id, c, a, b) = row.map_err(err)?;
        n += c as u64;
        span = merge_span(span, Some((a, b)));
        seen.insert(id);
        if let Some(d) = topics.get(&id) {
            *counts.entry((d.name.clone(), d.type_name.clone(), d.encoding.clone())).or_default() += c as u64;
        }
    }
    for (id, d) in &topics {
        if !seen.contains(id) {
            counts.entry((d.name.clone(), d.type_name.clone(), d.encoding.clone())).or_default();
        }
    }
    Ok((n, span))
}

/// Gathers the figures of every file of `bag`.
pub fn bag_info(bag: &Bag) -> Result<BagInfo, BagError> {
    let mut counts = Counts::new();
    let mut files = Vec::new();
    let mut span = None;
    let mut total = 0;
    for f in &bag.files {
        let size = std::fs::metadata(&f.path).map_err(|e| BagError::io(&f.path, e))?.len();
        let (n, s) = match f.storage {
            Storage::Mcap => mcap_file(f, &mut counts)?,
            Storage::Sqlite3 => sqlite_file(f, &mut counts)?,
        };
        total += n;
        span = merge_span(span, s);
        files.push(FileSummary { path: f.path.clone(), storage: f.storage, size, message_count: n, span: s });
    }
    let topics = counts
        .into_iter()
        .map(|((name, type_name, serialization_format), count)| TopicInfo { known: Msg::is_known_type(&type_name), name, type_name, serialization_format, count })
        .collect();
    Ok(BagInfo { files, topics, message_count: total, span })
}
