//! Writing rosbag2 bags in MCAP: a bag folder with one `<folder>_0.mcap` file (profile `ros2`,
//! schemas = the `ros2msg` full definition text, channels with message encoding `cdr` and
//! `offered_qos_profiles` metadata, zstd-compressed chunks with message indexes and a summary)
//! and a `metadata.yaml` beside it (version 9). The same metadata goes into the MCAP file as
//! the `rosbag2` metadata record, key `serialized_metadata`, as rosbag2 does.
//!
//! Output is deterministic: the same messages give the same bytes. A writer dropped without
//! [`BagWriter::finish`] still closes its file properly (best effort, errors ignored).

use crate::error::BagError;
use crate::metadata::{Duration, FileInfo, Metadata, QosProfile, StartingTime, TopicMetadata, TopicWithCount, WRITE_VERSION};
use sillage_core::ros_type::full_definition;
use sillage_core::{Msg, Nanos};
use std::collections::{BTreeMap, HashMap};
use std::fs::File;
use std::io::BufWriter;
use std::path::{Path, PathBuf};

/// How to write.
#[derive(Debug, Clone)]
pub struct WriterOptions {
    /// Chunk compression (default zstd, as rosbag2's default MCAP preset).
    pub compression: Option<mcap::Compression>,
    /// Target uncompressed chunk size [bytes].
    pub chunk_size: u64,
    /// Replace an existing output folder's files instead of refusing.
    pub overwrite: bool,
    /// `ros_distro` recorded in the metadata.
    pub ros_distro: String,
}

impl Default for WriterOptions {
    fn default() -> Self {
        WriterOptions { compression: Some(mcap::Compression::Zstd), chunk_size: 768 * 1024, overwrite: false, ros_distro: "sillage".into() }
    }
}

/// A topic registered with the writer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct TopicId(usize);

struct TopicOut {
    name: String,
    type_name: &'static str,
    channel: u16,
    qos: Vec<QosProfile>,
    count: u64,
    sequence: u32,
}

/// What a finished bag holds.
#[derive(Debug, Clone, PartialEq)]
pub struct WriteSummary {
    /// The bag folder.
    pub dir: PathBuf,
    /// The MCAP file.
    pub file: PathBuf,
    /// The metadata written.
    pub metadata: Metadata,
}

/// Writes one rosbag2 bag folder.
pub struct BagWriter {
    dir: PathBuf,
    file: PathBuf,
    writer: Option<mcap::Writer<BufWriter<File>>>,
    opts: WriterOptions,
    schemas: HashMap<&'static str, u16>,
    topics: Vec<TopicOut>,
    by_name: HashMap<String, usize>,
    buf: Vec<u8>,
    first: Nanos,
    last: Nanos,
}

impl BagWriter {
    /// Creates the bag folder `dir` and its MCAP file `<folder name>_0.mcap`.
    pub fn create(dir: impl AsRef<Path>, opts: WriterOptions) -> Result<BagWriter, BagError> {
        let dir = dir.as_ref().to_path_buf();
        let name = dir.file_name().and_then(|s| s.to_str()).filter(|s| !s.is_empty()).unwrap_or("bag").to_string();
        let file = dir.join(format!("{name}_0.mcap"));
        let meta = dir.join("metadata.yaml");
        if !opts.overwrite && (file.exists() || meta.exists()) {
            return Err(BagError::Exists { path: dir });
        }
        std::fs::create_dir_all(&dir).map_err(|e| BagError::io(&dir, e))?;
        let _ = std::fs::remove_file(&meta); // a stale metadata.yaml must not describe the new file
        let f = File::create(&file).map_err(|e| BagError::io(&file, e))?;
        let w = mcap::WriteOptions::new()
            .profile("ros2")
            .library(format!("sillage-bag {}", env!("CARGO_PKG_VERSION")))
            .compression(opts.compression)
            .chunk_size(Some(opts.chunk_size))
            .compression_threads(0)
            .create(BufWriter::with_capacity(1 << 16, f))
            .map_err(|e| BagError::Write { path: file.clone(), reason: e.to_string() })?;
        Ok(BagWriter {
            dir,
            file,
            writer: Some(w),
            opts,
            schemas: HashMap::new(),
            topics: Vec::new(),
            by_name: HashMap::new(),
            buf: Vec::with_capacity(1024),
            first: Nanos::MAX,
            last: Nanos::MIN,
        })
    }

    fn werr(&self, e: impl std::fmt::Display) -> BagError {
        BagError::Write { path: self.file.clone(), reason: e.to_string() }
    }

    /// Registers a topic of a vocabulary type with its offered QoS profiles; registering the
    /// same name and type again returns the same id.
    pub fn add_topic(&mut self, name: &str, type_name: &str, qos: &[QosProfile]) -> Result<TopicId, BagError> {
        if let Some(&i) = self.by_name.get(name) {
            let t = &self.topics[i];
            if t.type_name != sillage_core::any::normalize_type_name(type_name).as_ref() {
                return Err(BagError::TopicType { path: self.file.clone(), topic: name.into(), existing: t.type_name.into(), got: type_name.into() });
            }
            return Ok(TopicId(i));
        }
        let Some((canonical, _)) =
            sillage_core::any::DEFINITIONS.iter().find(|(n, _)| *n == sillage_core::any::normalize_type_name(type_name).as_ref())
        else {
            return Err(BagError::Encode { path: self.file.clone(), topic: name.into(), reason: format!("type '{type_name}' is not in sillage's vocabulary") });
        };
        let canonical: &'static str = canonical;
        let text = full_definition(canonical)
            .ok_or_else(|| BagError::Encode { path: self.file.clone(), topic: name.into(), reason: format!("no definition of '{canonical}'") })?;
        let w = self.writer.as_mut().ok_or_else(|| BagError::Write { path: self.file.clone(), reason: "writer already finished".into() })?;
        let schema = match self.schemas.get(canonical) {
            Some(&s) => s,
            None => {
                let s = w.add_schema(canonical, "ros2msg", text.as_bytes()).map_err(|e| BagError::Write { path: self.file.clone(), reason: e.to_string() })?;
                self.schemas.insert(canonical, s);
                s
            }
        };
        let mut meta = BTreeMap::new();
        meta.insert("offered_qos_profiles".to_string(), QosProfile::list_to_yaml(qos));
        let channel = w.add_channel(schema, name, "cdr", &meta).map_err(|e| BagError::Write { path: self.file.clone(), reason: e.to_string() })?;
        self.topics.push(TopicOut { name: name.into(), type_name: canonical, channel, qos: qos.to_vec(), count: 0, sequence: 0 });
        self.by_name.insert(name.into(), self.topics.len() - 1);
        Ok(TopicId(self.topics.len() - 1))
    }

    /// The id of a registered topic.
    pub fn topic(&self, name: &str) -> Option<TopicId> {
        self.by_name.get(name).map(|&i| TopicId(i))
    }

    /// Writes a message at `log_time` [ns]; its type must be the topic's.
    pub fn write(&mut self, topic: TopicId, log_time: Nanos, msg: &Msg) -> Result<(), BagError> {
        let t = self.topics.get(topic.0).ok_or_else(|| self.werr("unknown topic id"))?;
        if msg.type_name() != t.type_name {
            return Err(BagError::TopicType { path: self.file.clone(), topic: t.name.clone(), existing: t.type_name.into(), got: msg.type_name().into() });
        }
        let mut buf = std::mem::take(&mut self.buf);
        let r = msg
            .encode_into(&mut buf)
            .map_err(|e| BagError::Encode { path: self.file.clone(), topic: t.name.clone(), reason: e.to_string() })
            .and_then(|()| self.write_raw(topic, log_time, &buf));
        self.buf = buf;
        r
    }

    /// Writes serialized CDR bytes at `log_time` [ns].
    pub fn write_raw(&mut self, topic: TopicId, log_time: Nanos, data: &[u8]) -> Result<(), BagError> {
        let file = &self.file;
        let t = self.topics.get_mut(topic.0).ok_or_else(|| BagError::Write { path: file.clone(), reason: "unknown topic id".into() })?;
        let w = self.writer.as_mut().ok_or_else(|| BagError::Write { path: file.clone(), reason: "writer already finished".into() })?;
        let time = u64::try_from(log_time).map_err(|_| BagError::Write { path: file.clone(), reason: format!("negative log time {log_time} ns") })?;
        let header = mcap::records::MessageHeader { channel_id: t.channel, sequence: t.sequence, log_time: time, publish_time: time };
        w.write_to_known_channel(&header, data).map_err(|e| BagError::Write { path: file.clone(), reason: e.to_string() })?;
        t.sequence = t.sequence.wrapping_add(1);
        t.count += 1;
        self.first = self.first.min(log_time);
        self.last = self.last.max(log_time);
        Ok(())
    }

    /// Registers the topic on first use (with `qos`) and writes the message.
    pub fn write_on(&mut self, topic: &str, log_time: Nanos, msg: &Msg, qos: &[QosProfile]) -> Result<(), BagError> {
        let id = match self.topic(topic) {
            Some(id) => id,
            None => self.add_topic(topic, msg.type_name(), qos)?,
        };
        self.write(id, log_time, msg)
    }

    /// Messages written so far.
    pub fn message_count(&self) -> u64 {
        self.topics.iter().map(|t| t.count).sum()
    }

    fn metadata(&self) -> Metadata {
        let count = self.message_count();
        let (start, duration) = if count == 0 { (0, 0) } else { (self.first, self.last - self.first) };
        let rel = self.file.file_name().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default();
        Metadata {
            version: WRITE_VERSION,
            storage_identifier: "mcap".into(),
            relative_file_paths: vec![rel.clone()],
            duration: Duration { nanoseconds: duration },
            starting_time: StartingTime { nanoseconds_since_epoch: start },
            message_count: count,
            topics_with_message_count: self
                .topics
                .iter()
                .map(|t| TopicWithCount {
                    topic_metadata: TopicMetadata {
                        name: t.name.clone(),
                        type_name: t.type_name.into(),
                        serialization_format: "cdr".into(),
                        offered_qos_profiles: serde_yaml::Value::Sequence(t.qos.iter().map(QosProfile::to_value).collect()),
                        type_description_hash: Some(String::new()),
                    },
                    message_count: t.count,
                })
                .collect(),
            compression_format: String::new(),
            compression_mode: String::new(),
            files: vec![FileInfo {
                path: rel,
                starting_time: StartingTime { nanoseconds_since_epoch: start },
                duration: Duration { nanoseconds: duration },
                message_count: count,
            }],
            custom_data: None,
            ros_distro: self.opts.ros_distro.clone(),
        }
    }

    fn finish_inner(&mut self) -> Result<WriteSummary, BagError> {
        let metadata = self.metadata();
        let Some(mut w) = self.writer.take() else { return Err(self.werr("writer already finished")) };
        let inner = metadata.to_inner_yaml().map_err(|e| self.werr(e))?;
        let mut m = BTreeMap::new();
        m.insert("serialized_metadata".to_string(), inner);
        w.write_metadata(&mcap::records::Metadata { name: "rosbag2".into(), metadata: m }).map_err(|e| self.werr(e))?;
        w.finish().map_err(|e| self.werr(e))?;
        let mut out = w.into_inner();
        std::io::Write::flush(&mut out).map_err(|e| BagError::io(&self.file, e))?;
        let text = metadata.to_yaml().map_err(|e| self.werr(e))?;
        let meta_path = self.dir.join("metadata.yaml");
        std::fs::write(&meta_path, text).map_err(|e| BagError::io(&meta_path, e))?;
        Ok(WriteSummary { dir: self.dir.clone(), file: self.file.clone(), metadata })
    }

    /// Writes the summary, the `rosbag2` metadata record and `metadata.yaml`.
    pub fn finish(mut self) -> Result<WriteSummary, BagError> {
        self.finish_inner()
    }
}

impl Drop for BagWriter {
    fn drop(&mut self) {
        if self.writer.is_some() {
            let _ = self.finish_inner();
        }
    }
}
