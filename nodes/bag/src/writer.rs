//! Writing rosbag2 bags in MCAP: a bag folder with one `<folder>_0.mcap` file (profile `ros2`,
//! schemas = the `ros2msg` full definition text, channels with message encoding `cdr` and
//! `offered_qos_profiles` metadata, zstd-compressed chunks with message indexes and a summary)
//! and a `metadata.yaml` beside it (version 9). The same metadata goes into the MCAP file as
//! the `rosbag2` metadata record, key `serialized_metadata`, as rosbag2 does.
//!
//! Output is deterministic: the same messages give the same bytes, whatever the compression
//! runs on ([`WriterOptions::background`] moves MCAP framing and compression to a thread of its
//! own; the caller only encodes CDR). A writer dropped without [`BagWriter::finish`] still
//! closes its file properly (best effort, errors ignored).

use crate::error::BagError;
use crate::mcap_out::Backend;
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
    /// Chunk compression (default zstd).
    pub compression: Option<mcap::Compression>,
    /// Compression level (0: the codec's default).
    pub compression_level: u32,
    /// Target uncompressed chunk size [bytes].
    pub chunk_size: u64,
    /// Replace an existing output folder's files instead of refusing.
    pub overwrite: bool,
    /// `ros_distro` recorded in the metadata.
    pub ros_distro: String,
    /// Frame, compress and write on a thread of its own: [`BagWriter::write`] then only encodes
    /// CDR and queues the bytes, and a write error shows at a later write or at
    /// [`BagWriter::finish`]. The file's bytes are the same either way.
    pub background: bool,
}

impl Default for WriterOptions {
    fn default() -> Self {
        WriterOptions {
            compression: Some(mcap::Compression::Zstd),
            compression_level: 0,
            chunk_size: 768 * 1024,
            overwrite: false,
            ros_distro: "sillage".into(),
            background: false,
        }
    }
}

/// A topic registered with the writer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct TopicId(usize);

struct TopicOut {
    name: String,
    type_name: &'static str,
    /// Index of the channel in registration order.
    channel: usize,
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
    out: Backend,
    opts: WriterOptions,
    /// Schema index by type, in registration order.
    schemas: HashMap<&'static str, usize>,
    topics: Vec<TopicOut>,
    by_name: HashMap<String, usize>,
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
            .compression_level(opts.compression_level)
            .chunk_size(Some(opts.chunk_size))
            .compression_threads(0)
            .create(BufWriter::with_capacity(1 << 16, f))
            .map_err(|e| BagError::Write { path: file.clone(), reason: e.to_string() })?;
        let out = Backend::new(&file, w, opts.background)?;
        Ok(BagWriter {
            dir,
            file,
            out,
            opts,
            schemas: HashMap::new(),
            topics: Vec::new(),
            by_name: HashMap::new(),
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
        if !self.out.is_open() {
            return Err(self.werr("writer already finished"));
        }
        let schema = match self.schemas.get(canonical) {
            Some(&s) => s,
            None => {
                let s = self.schemas.len();
                self.out.batch().schema(canonical, text);
                self.schemas.insert(canonical, s);
                s
            }
        };
        let mut meta = BTreeMap::new();
        meta.insert("offered_qos_profiles".to_string(), QosProfile::list_to_yaml(qos));
        let channel = self.topics.len();
        self.out.batch().channel(schema, name, meta);
        self.out.commit()?;
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
        self.put(topic, log_time, |data| {
            msg.append_to(data).map_err(|e| e.to_string())
        })
    }

    /// Writes serialized CDR bytes at `log_time` [ns].
    pub fn write_raw(&mut self, topic: TopicId, log_time: Nanos, data: &[u8]) -> Result<(), BagError> {
        self.put(topic, log_time, |buf| {
            buf.extend_from_slice(data);
            Ok(())
        })
    }

    /// Appends one message's bytes (by `fill`, an encoding error is its reason) and queues it.
    fn put(&mut self, topic: TopicId, log_time: Nanos, fill: impl FnOnce(&mut Vec<u8>) -> Result<(), String>) -> Result<(), BagError> {
        let file = &self.file;
        let t = self.topics.get_mut(topic.0).ok_or_else(|| BagError::Write { path: file.clone(), reason: "unknown topic id".into() })?;
        if !self.out.is_open() {
            return Err(BagError::Write { path: file.clone(), reason: "writer already finished".into() });
        }
        let time = u64::try_from(log_time).map_err(|_| BagError::Write { path: file.clone(), reason: format!("negative log time {log_time} ns") })?;
        let batch = self.out.batch();
        let data = batch.data();
        let before = data.len();
        if let Err(reason) = fill(data) {
            data.truncate(before);
            return Err(BagError::Encode { path: file.clone(), topic: t.name.clone(), reason });
        }
        let len = data.len() - before;
        batch.message(t.channel, t.sequence, time, len);
        t.sequence = t.sequence.wrapping_add(1);
        t.count += 1;
        self.first = self.first.min(log_time);
        self.last = self.last.max(log_time);
        self.out.commit()
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
        if !self.out.is_open() {
            return Err(self.werr("writer already finished"));
        }
        let inner = metadata.to_inner_yaml().map_err(|e| self.werr(e))?;
        let mut m = BTreeMap::new();
        m.insert("serialized_metadata".to_string(), inner);
        self.out.finish(mcap::records::Metadata { name: "rosbag2".into(), metadata: m })?;
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
        if self.out.is_open() {
            let _ = self.finish_inner();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::*;
    use sillage_core::Qos;

    fn write_bag(dir: &Path, background: bool, compression: Option<mcap::Compression>) -> (Vec<u8>, String) {
        let opts = WriterOptions { overwrite: true, background, compression, chunk_size: 64 * 1024, ..Default::default() };
        let mut w = BagWriter::create(dir, opts).expect("creates");
        let q = [QosProfile::from(Qos::SensorData)];
        for k in 0..20_000i64 {
            let t = 1_000_000_000 + k * 10_000_000;
            let chem = ChemSample { header: Header::new(t, "chem"), channels: vec!["l".into(), "r".into()], values: vec![k as f64, 0.5], quantity: 0 };
            w.write_on("/chem", t, &chem.into(), &q).expect("writes");
            if k % 5 == 0 {
                // A topic registered midway, and a boxed variant.
                let o = Odometry { header: Header::new(t, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
                w.write_on("/odom", t + 1, &o.into(), &q).expect("writes");
            }
        }
        let s = w.finish().expect("finishes");
        assert_eq!(s.metadata.message_count, 24_000);
        (std::fs::read(&s.file).expect("mcap"), std::fs::read_to_string(s.dir.join("metadata.yaml")).expect("yaml"))
    }

    #[test]
    fn writing_on_a_thread_gives_the_same_bytes() {
        let root = std::env::temp_dir().join(format!("sillage-writer-thread-{}", std::process::id()));
        for compression in [None, Some(mcap::Compression::Zstd), Some(mcap::Compression::Lz4)] {
            // Same folder name: the metadata names the file.
            let inline = write_bag(&root.join("inline").join("bag"), false, compression);
            let threaded = write_bag(&root.join("threaded").join("bag"), true, compression);
            assert!(inline.0.len() > 64 * 1024, "several chunks");
            assert!(inline.0 == threaded.0, "MCAP bytes differ ({compression:?})");
            assert_eq!(inline.1, threaded.1);
        }
        let _ = std::fs::remove_dir_all(&root);
    }

    #[test]
    fn a_threaded_writer_dropped_unfinished_still_closes_the_file() {
        let dir = std::env::temp_dir().join(format!("sillage-writer-drop-{}", std::process::id()));
        {
            let mut w = BagWriter::create(&dir, WriterOptions { overwrite: true, background: true, ..Default::default() }).expect("creates");
            let m: Msg = Bool { data: true }.into();
            w.write_on("/b", 5, &m, &[]).expect("writes");
        }
        let bag = crate::Bag::open(&dir).expect("opens");
        let n = bag.messages(&crate::ReadOptions::default()).expect("reads").count();
        assert_eq!(n, 1);
        let _ = std::fs::remove_dir_all(&dir);
    }
}
