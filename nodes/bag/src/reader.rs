//! Opening bags (a folder with `metadata.yaml`, or a single `.mcap` / `.db3` file; several
//! bags at once) and reading their messages as one stream in log-time order.
//!
//! The files of all the bags are merged by log time; a file is opened only when the stream
//! reaches its first log time, so split bags are read one file after the other. Topics whose
//! type is not in sillage's vocabulary, whose encoding is not CDR or whose schema does not match
//! the declared type are skipped and counted; messages that fail to decode, exact duplicates
//! (same topic, log time and bytes) and log times that go backwards are warnings (errors with
//! [`ReadOptions::strict`]). Errors name the file, the topic and the offset or row.

use crate::decode::{decoder, DecodeFn};
use crate::error::{BagError, Warning};
use crate::mcap_read::McapSource;
use crate::metadata::Metadata;
use crate::schema::check_ros2msg;
use crate::source::{Source, Storage, TopicDecl};
use crate::sqlite_read::SqliteSource;
use sillage_core::{Msg, Nanos};
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Detailed warnings kept; further ones are only counted.
pub const MAX_WARNINGS: usize = 100;

/// One storage file of a bag.
#[derive(Debug, Clone, PartialEq)]
pub struct BagFile {
    /// The file.
    pub path: PathBuf,
    /// Its storage.
    pub storage: Storage,
}

/// An opened bag (or several bags read together).
#[derive(Debug, Clone)]
pub struct Bag {
    /// Name for output folders (the bag folder's or file's stem, `+`-joined for several).
    pub name: String,
    /// The storage files, in the order given (metadata order within a bag).
    pub files: Vec<BagFile>,
    /// `metadata.yaml` of each bag folder that has one.
    pub metadata: Vec<(PathBuf, Metadata)>,
    /// Things noticed while opening (missing metadata.yaml, missing files...).
    pub warnings: Vec<Warning>,
}

/// What to read.
#[derive(Debug, Clone)]
pub struct ReadOptions {
    /// First log time to read [ns, inclusive].
    pub start: Nanos,
    /// Last log time to read [ns, inclusive].
    pub end: Nanos,
    /// Only these topics (`None`: all).
    pub topics: Option<Vec<String>>,
    /// Turn tolerated problems (undecodable messages, schema mismatches, backward log times)
    /// into errors.
    pub strict: bool,
}

impl Default for ReadOptions {
    fn default() -> Self {
        ReadOptions { start: 0, end: Nanos::MAX, topics: None, strict: false }
    }
}

/// A decoded message with its log time and topic.
#[derive(Debug, Clone, PartialEq)]
pub struct BagMessage {
    /// Log (receive) time [ns since the epoch].
    pub log_time: Nanos,
    /// Topic name.
    pub topic: Arc<str>,
    /// Full ROS type name.
    pub type_name: &'static str,
    /// The message.
    pub msg: Msg,
}

/// A message still serialized: what [`Messages::next_raw`] yields.
#[derive(Debug, Clone, Copy)]
pub struct RawMessage<'a> {
    /// Log (receive) time [ns].
    pub log_time: Nanos,
    /// Topic name.
    pub topic: &'a str,
    /// Full ROS type name (sillage's spelling).
    pub type_name: &'static str,
    /// CDR bytes with the encapsulation header.
    pub data: &'a [u8],
}

/// Why a topic is not read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum SkipReason {
    /// Its type is not in sillage's vocabulary.
    UnknownType,
    /// Its message encoding is not CDR.
    Encoding(String),
    /// Its schema does not match sillage's definition of the type.
    SchemaMismatch(String),
    /// Not among [`ReadOptions::topics`].
    NotSelected,
}

impl std::fmt::Display for SkipReason {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SkipReason::UnknownType => f.write_str("type not used by the node graph"),
            SkipReason::Encoding(e) => write!(f, "message encoding '{e}' is not cdr"),
            SkipReason::SchemaMismatch(r) => write!(f, "schema does not match the type: {r}"),
            SkipReason::NotSelected => f.write_str("not selected"),
        }
    }
}

/// Per-topic figures of a read.
#[derive(Debug, Clone, PartialEq)]
pub struct TopicReport {
    /// Topic name.
    pub name: String,
    /// Declared type.
    pub type_name: String,
    /// Messages yielded.
    pub read: u64,
    /// Messages skipped (whole topic skipped, undecodable, duplicates).
    pub skipped: u64,
    /// Why the whole topic is skipped, if it is.
    pub skip: Option<SkipReason>,
    /// `offered_qos_profiles` text of the first file that declared it.
    pub qos: String,
}

/// What a read saw besides the messages.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ReadReport {
    /// Every topic met, in order of first appearance.
    pub topics: Vec<TopicReport>,
    /// Warnings (the first [`MAX_WARNINGS`]).
    pub warnings: Vec<Warning>,
    /// Warnings beyond the kept ones.
    pub warnings_dropped: u64,
    /// Messages that failed to decode (skipped).
    pub decode_errors: u64,
    /// Exact duplicates skipped.
    pub duplicates: u64,
    /// Messages whose log time was before the previous one's.
    pub out_of_order: u64,
    /// Damage met and read around (not strict): skipped chunks, cut-off files.
    pub damage: Vec<crate::error::Damage>,
}

impl ReadReport {
    fn warn(&mut self, message: String) {
        if self.warnings.len() < MAX_WARNINGS {
            self.warnings.push(Warning { message });
        } else {
            self.warnings_dropped += 1;
        }
    }
}

fn file_index(name: &str) -> u64 {
    // `bag_12.mcap` -> 12, so split files sort numerically.
    let stem = name.rsplit_once('.').map_or(name, |(s, _)| s);
    stem.rsplit_once('_').and_then(|(_, n)| n.parse().ok()).unwrap_or(0)
}

impl Bag {
    /// Opens one bag: a folder (with `metadata.yaml`, or without: then its `.mcap` and `.db3`
    /// files are taken in index order, with a warning) or a single storage file.
    pub fn open(path: impl AsRef<Path>) -> Result<Bag, BagError> {
        let path = path.as_ref();
        let meta = std::fs::metadata(path).map_err(|e| BagError::io(path, e))?;
        let name = path.file_stem().and_then(|s| s.to_str()).unwrap_or("bag").to_string();
        let mut bag = Bag { name, files: Vec::new(), metadata: Vec::new(), warnings: Vec::new() };
        if meta.is_file() {
            let storage = Storage::detect(path)?;
            bag.files.push(BagFile { path: path.to_path_buf(), storage });
            return Ok(bag);
        }
        let meta_path = path.join("metadata.yaml");
        if meta_path.is_file() {
            let m = Metadata::read(&meta_path)?;
            if !m.storage_identifier.is_empty() && !["mcap", "sqlite3"].contains(&m.storage_identifier.as_str()) {
                return Err(BagError::UnsupportedStorage { path: meta_path, storage: m.storage_identifier });
            }
            match m.compression_mode.to_lowercase().as_str() {
                "file" => {
                    return Err(BagError::Metadata {
                        path: meta_path,
                        reason: format!("files are compressed whole ({}); decompress them first (ros2 bag convert)", m.compression_format),
                    })
                }
                "message" => {
                    return Err(BagError::Metadata {
                        path: meta_path,
                        reason: format!("messages are compressed one by one ({}); not supported, convert the bag first (ros2 bag convert)", m.compression_format),
                    })
                }
                _ => {}
            }
            for rel in &m.relative_file_paths {
                let p = path.join(rel);
                if p.is_file() {
                    let storage = Storage::detect(&p)?;
                    bag.files.push(BagFile { path: p, storage });
                } else {
                    bag.warnings.push(Warning { message: format!("{}: lists '{rel}', which is missing; skipped", meta_path.display()) });
                }
            }
            bag.metadata.push((meta_path, m));
        } else {
            let mut found: Vec<(u64, String, PathBuf)> = Vec::new();
            let dir = std::fs::read_dir(path).map_err(|e| BagError::io(path, e))?;
            for entry in dir {
                let entry = entry.map_err(|e| BagError::io(path, e))?;
                let p = entry.path();
                let fname = entry.file_name().to_string_lossy().into_owned();
                if p.is_file() && (fname.ends_with(".mcap") || fname.ends_with(".db3")) {
                    found.push((file_index(&fname), fname, p));
                }
            }
            if found.is_empty() {
                return Err(BagError::NotABag { path: path.to_path_buf() });
            }
            found.sort();
            bag.warnings.push(Warning {
                message: format!("{}: no metadata.yaml; reading the {} storage file(s) found in the folder", path.display(), found.len()),
            });
            for (_, _, p) in found {
                let storage = Storage::detect(&p)?;
                bag.files.push(BagFile { path: p, storage });
            }
        }
        if bag.files.is_empty() {
            return Err(BagError::NotABag { path: path.to_path_buf() });
        }
        Ok(bag)
    }

    /// Opens several bags to be read as one stream.
    pub fn open_many<P: AsRef<Path>>(paths: &[P]) -> Result<Bag, BagError> {
        let mut all = Bag { name: String::new(), files: Vec::new(), metadata: Vec::new(), warnings: Vec::new() };
        let mut names = Vec::new();
        for p in paths {
            let b = Bag::open(p)?;
            names.push(b.name);
            all.files.extend(b.files);
            all.metadata.extend(b.metadata);
            all.warnings.extend(b.warnings);
        }
        all.name = names.join("+");
        Ok(all)
    }

    /// Opens a cursor over one file.
    pub fn open_file(file: &BagFile, opts: &ReadOptions) -> Result<Box<dyn Source>, BagError> {
        Ok(match file.storage {
            Storage::Mcap => {
                let mut s = McapSource::open(&file.path, opts.start, opts.end)?;
                s.set_salvage(!opts.strict);
                Box::new(s)
            }
            Storage::Sqlite3 => Box::new(SqliteSource::open(&file.path, opts.start, opts.end)?),
        })
    }

    /// Messages of every file in log-time order.
    pub fn messages(&self, opts: &ReadOptions) -> Result<Messages, BagError> {
        let mut pending = Vec::new();
        for (i, f) in self.files.iter().enumerate() {
            let s = Bag::open_file(f, opts)?;
            pending.push((s.start_time().unwrap_or(Nanos::MIN), i, s));
        }
        pending.sort_by_key(|(t, i, _)| (*t, *i));
        pending.reverse(); // pop() takes the earliest
        let mut report = ReadReport::default();
        for w in &self.warnings {
            report.warn(w.message.clone());
        }
        Ok(Messages {
            pending,
            active: Vec::new(),
            current: None,
            topics: Vec::new(),
            by_key: HashMap::new(),
            report,
            opts: opts.clone(),
            last_time: Nanos::MIN,
            failed: false,
        })
    }
}

/// What the merger knows about one topic (by name and declared type).
struct TopicState {
    name: Arc<str>,
    msg_type: Option<&'static str>,
    decode: Option<DecodeFn>,
    skip: Option<SkipReason>,
    last: Option<(Nanos, u32)>,
}

/// One open file with its topic ids mapped to merged topics.
struct Active {
    order: usize,
    /// Log time of the source's current message.
    time: Nanos,
    source: Box<dyn Source>,
    map: HashMap<i64, usize>,
    /// Fast path for small ids (MCAP channels, sqlite topic ids): `usize::MAX` = unmapped.
    small: Vec<usize>,
}

/// The merged stream of a [`Bag`]: decoded messages through [`Iterator`], or serialized ones
/// through [`Messages::next_raw`]. After an error the stream ends.
pub struct Messages {
    pending: Vec<(Nanos, usize, Box<dyn Source>)>,
    active: Vec<Active>,
    current: Option<(usize, usize)>,
    topics: Vec<TopicState>,
    by_key: HashMap<(String, String), usize>,
    report: ReadReport,
    opts: ReadOptions,
    last_time: Nanos,
    failed: bool,
}


impl Messages {
    /// What the read saw so far (topics, skips, warnings).
    pub fn report(&self) -> &ReadReport {
        &self.report
    }

    fn resolve_topic(&mut self, active: usize, local: i64) -> Result<usize, BagError> {
        let a = &self.active[active];
        let path = a.source.path().to_path_buf();
        let decl = a.source.topic(local).unwrap_or_else(|| TopicDecl {
            name: format!("(unknown topic id {local})"),
            type_name: String::new(),
            encoding: String::new(),
            schema_encoding: String::new(),
            schema: String::new(),
            qos: String::new(),
        });
        let key = (decl.name.clone(), decl.type_name.clone());
        if let Some(&g) = self.by_key.get(&key) {
            return Ok(g);
        }
        let found = decoder(&decl.type_name);
        let msg_type = found.map(|(n, _)| n);
        let mut skip = None;
        if self.opts.topics.as_ref().is_some_and(|t| !t.contains(&decl.name)) {
            skip = Some(SkipReason::NotSelected);
        } else if msg_type.is_none() {
            skip = Some(SkipReason::UnknownType);
        } else if decl.encoding != "cdr" {
            if self.opts.strict {
                return Err(BagError::Encoding { path, topic: decl.name, encoding: decl.encoding });
            }
            self.report.warn(format!("{}: topic '{}': message encoding '{}' is not cdr; topic skipped", path.display(), decl.name, decl.encoding));
            skip = Some(SkipReason::Encoding(decl.encoding.clone()));
        } else if let Some(t) = msg_type {
            let checked = match decl.schema_encoding.as_str() {
                "ros2msg" | "" => check_ros2msg(t, &decl.schema),
                _ => Ok(()), // ros2idl and others: trust the declared type
            };
            if let Err(reason) = checked {
                if self.opts.strict {
                    return Err(BagError::SchemaMismatch { path, topic: decl.name, type_name: decl.type_name, reason });
                }
                self.report.warn(format!(
                    "{}: topic '{}': schema of '{}' does not match sillage's definition ({reason}); topic skipped",
                    path.display(),
                    decl.name,
                    decl.type_name
                ));
                skip = Some(SkipReason::SchemaMismatch(reason));
            }
        }
        let g = self.topics.len();
        self.topics.push(TopicState { name: decl.name.as_str().into(), msg_type, decode: found.map(|(_, f)| f), skip: skip.clone(), last: None });
        self.report.topics.push(TopicReport { name: decl.name, type_name: decl.type_name, read: 0, skipped: 0, skip, qos: decl.qos });
        self.by_key.insert(key, g);
        Ok(g)
    }

    fn global_topic(&mut self, active: usize, local: i64) -> Result<usize, BagError> {
        let a = &self.active[active];
        if let Some(&g) = usize::try_from(local).ok().and_then(|i| a.small.get(i)).filter(|g| **g != usize::MAX) {
            return Ok(g);
        }
        if let Some(&g) = a.map.get(&local) {
            return Ok(g);
        }
        let g = self.resolve_topic(active, local)?;
        let a = &mut self.active[active];
        match usize::try_from(local) {
            Ok(i) if i < 1 << 16 => {
                if a.small.len() <= i {
                    a.small.resize(i + 1, usize::MAX);
                }
                a.small[i] = g;
            }
            _ => {
                a.map.insert(local, g);
            }
        }
        Ok(g)
    }

    fn collect_warnings(&mut self, i: usize) {
        for w in self.active[i].source.take_warnings() {
            self.report.warn(w);
        }
        self.report.damage.extend(self.active[i].source.take_damage());
    }

    /// Moves to the next message of any file: (active index, topic index).
    fn step(&mut self) -> Result<Option<(usize, usize)>, BagError> {
        if let Some((i, _)) = self.current.take() {
            let more = self.active[i].source.advance();
            self.collect_warnings(i);
            if more? {
                let a = &mut self.active[i];
                let Some((t, local)) = a.source.head().map(|h| (h.log_time, h.topic)) else { return Ok(None) };
                a.time = t;
                // Fast path: one file open and the next one starts later.
                if self.active.len() == 1 && self.pending.last().is_none_or(|p| p.0 > t) {
                    let g = self.global_topic(i, local)?;
                    self.current = Some((i, g));
                    return Ok(Some((i, g)));
                }
            } else {
                self.active.swap_remove(i);
            }
        }
        loop {
            let min = self.active.iter().map(|a| a.time).min();
            let open_next = match self.pending.last() {
                Some((t, _, _)) => min.is_none_or(|m| *t <= m),
                None => false,
            };
            if !open_next {
                break;
            }
            if let Some((_, order, mut source)) = self.pending.pop() {
                let more = source.advance();
                let warnings = source.take_warnings();
                for w in warnings {
                    self.report.warn(w);
                }
                self.report.damage.extend(source.take_damage());
                if more? {
                    let time = source.head().map_or(Nanos::MIN, |h| h.log_time);
                    self.active.push(Active { order, time, source, map: HashMap::new(), small: Vec::new() });
                }
            }
        }
        let best = self.active.iter().enumerate().map(|(i, a)| (a.time, a.order, i)).min().map(|(_, _, i)| i);
        let Some(i) = best else { return Ok(None) };
        let Some(local) = self.active[i].source.head().map(|h| h.topic) else { return Ok(None) };
        let g = self.global_topic(i, local)?;
        self.current = Some((i, g));
        Ok(Some((i, g)))
    }

    /// Steps to the next message that is to be yielded: checks skips, duplicates and order.
    fn next_wanted(&mut self) -> Result<Option<(usize, usize)>, BagError> {
        loop {
            let Some((i, g)) = self.step()? else { return Ok(None) };
            let Some(h) = self.active[i].source.head() else { continue };
            let t = &mut self.topics[g];
            if t.skip.is_some() {
                self.report.topics[g].skipped += 1;
                continue;
            }
            let crc = h.crc;
            if t.last == Some((h.log_time, crc)) {
                self.report.topics[g].skipped += 1;
                self.report.duplicates += 1;
                let msg = format!(
                    "{}: topic '{}', {}: exact duplicate of the previous message at {} ns; skipped",
                    self.active[i].source.path().display(),
                    t.name,
                    h.at,
                    h.log_time
                );
                self.report.warn(msg);
                continue;
            }
            t.last = Some((h.log_time, crc));
            if h.log_time < self.last_time {
                let path = self.active[i].source.path().to_path_buf();
                if self.opts.strict {
                    return Err(BagError::NonMonotonic { path, topic: t.name.to_string(), at: h.at, log_time: h.log_time, previous: self.last_time });
                }
                self.report.out_of_order += 1;
                let msg = format!(
                    "{}: topic '{}', {}: log time {} ns is before the previous message's {} ns (delivered late)",
                    path.display(),
                    t.name,
                    h.at,
                    h.log_time,
                    self.last_time
                );
                self.report.warn(msg);
            } else {
                self.last_time = h.log_time;
            }
            return Ok(Some((i, g)));
        }
    }

    /// The next message, still serialized.
    pub fn next_raw(&mut self) -> Option<Result<RawMessage<'_>, BagError>> {
        if self.failed {
            return None;
        }
        match self.next_wanted() {
            Ok(Some((i, g))) => {
                self.report.topics[g].read += 1;
                let h = self.active[i].source.head()?;
                let t = &self.topics[g];
                Some(Ok(RawMessage { log_time: h.log_time, topic: &t.name, type_name: t.msg_type.unwrap_or(""), data: h.data }))
            }
            Ok(None) => None,
            Err(e) => {
                self.failed = true;
                Some(Err(e))
            }
        }
    }

    fn decode_current(&mut self, i: usize, g: usize) -> Result<Option<BagMessage>, BagError> {
        let Some(h) = self.active[i].source.head() else { return Ok(None) };
        let t = &self.topics[g];
        let type_name = t.msg_type.unwrap_or("");
        let decoded = match t.decode {
            Some(f) => f(h.data),
            None => Msg::decode(type_name, h.data),
        };
        match decoded {
            Ok(msg) => {
                self.report.topics[g].read += 1;
                Ok(Some(BagMessage { log_time: h.log_time, topic: t.name.clone(), type_name, msg }))
            }
            Err(e) => {
                let path = self.active[i].source.path().to_path_buf();
                let err = BagError::Decode {
                    path,
                    topic: t.name.to_string(),
                    type_name: type_name.to_string(),
                    log_time: h.log_time,
                    at: h.at.clone(),
                    reason: e.to_string(),
                };
                if self.opts.strict {
                    return Err(err);
                }
                self.report.topics[g].skipped += 1;
                self.report.decode_errors += 1;
                self.report.warn(format!("{err}; skipped"));
                Ok(None)
            }
        }
    }
}

impl Iterator for Messages {
    type Item = Result<BagMessage, BagError>;

    fn next(&mut self) -> Option<Self::Item> {
        if self.failed {
            return None;
        }
        loop {
            let r = self.next_wanted().and_then(|c| match c {
                Some((i, g)) => self.decode_current(i, g).map(|m| (true, m)),
                None => Ok((false, None)),
            });
            match r {
                Ok((_, Some(m))) => return Some(Ok(m)),
                Ok((true, None)) => continue,
                Ok((false, _)) => return None,
                Err(e) => {
                    self.failed = true;
                    return Some(Err(e));
                }
            }
        }
    }
}
