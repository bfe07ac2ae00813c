//! rosbag2's `metadata.yaml` (the `rosbag2_bagfile_information` map) and the QoS profiles it
//! and MCAP channels carry.
//!
//! Reading is tolerant: every field is optional, QoS profiles may be a YAML string (metadata
//! version <= 8, enums as integers) or a list (version 9, enums as lower-case names). Writing
//! produces version 9, the layout of ROS 2 Jazzy and later (and of the `rosbags` library).

use crate::error::BagError;
use serde::{Deserialize, Serialize};
use serde_yaml::Value;
use std::path::Path;

/// The metadata version sillage writes.
pub const WRITE_VERSION: u32 = 9;

/// `{nanoseconds: N}`.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct Duration {
    /// [ns]
    #[serde(default)]
    pub nanoseconds: i64,
}

/// `{nanoseconds_since_epoch: N}`.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct StartingTime {
    /// [ns since the epoch]
    #[serde(default)]
    pub nanoseconds_since_epoch: i64,
}

/// One topic as the metadata describes it.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct TopicMetadata {
    /// Fully qualified topic name.
    #[serde(default)]
    pub name: String,
    /// `pkg/msg/Type`.
    #[serde(default, rename = "type")]
    pub type_name: String,
    /// `cdr` for every bag sillage reads.
    #[serde(default)]
    pub serialization_format: String,
    /// QoS profiles: a YAML string (version <= 8) or a list (version 9).
    #[serde(default)]
    pub offered_qos_profiles: Value,
    /// RIHS01 hash of the type description (version >= 8; empty when unknown).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub type_description_hash: Option<String>,
}

/// A topic with its message count.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct TopicWithCount {
    /// The topic.
    #[serde(default)]
    pub topic_metadata: TopicMetadata,
    /// Messages on it.
    #[serde(default)]
    pub message_count: u64,
}

/// One storage file of the bag.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct FileInfo {
    /// Path relative to the bag folder.
    #[serde(default)]
    pub path: String,
    /// First log time.
    #[serde(default)]
    pub starting_time: StartingTime,
    /// Last minus first log time.
    #[serde(default)]
    pub duration: Duration,
    /// Messages in the file.
    #[serde(default)]
    pub message_count: u64,
}

/// The `rosbag2_bagfile_information` map.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Metadata {
    /// Format version (sillage writes 9).
    #[serde(default)]
    pub version: u32,
    /// `mcap` or `sqlite3`.
    #[serde(default)]
    pub storage_identifier: String,
    /// Storage files, relative to the bag folder, in recording order.
    #[serde(default)]
    pub relative_file_paths: Vec<String>,
    /// Last minus first log time.
    #[serde(default)]
    pub duration: Duration,
    /// First log time.
    #[serde(default)]
    pub starting_time: StartingTime,
    /// Messages in the bag.
    #[serde(default)]
    pub message_count: u64,
    /// Topics with counts.
    #[serde(default)]
    pub topics_with_message_count: Vec<TopicWithCount>,
    /// `""` or `zstd`.
    #[serde(default)]
    pub compression_format: String,
    /// `""`, `file` or `message`.
    #[serde(default)]
    pub compression_mode: String,
    /// Per-file figures (version >= 5).
    #[serde(default)]
    pub files: Vec<FileInfo>,
    /// Free key-value pairs.
    #[serde(default)]
    pub custom_data: Option<std::collections::BTreeMap<String, String>>,
    /// ROS distribution that wrote the bag.
    #[serde(default)]
    pub ros_distro: String,
}

#[derive(Serialize, Deserialize)]
struct MetadataFile {
    rosbag2_bagfile_information: Metadata,
}

impl Metadata {
    /// Parses `metadata.yaml` text; `path` only labels errors.
    pub fn parse(text: &str, path: &Path) -> Result<Metadata, BagError> {
        let f: MetadataFile = serde_yaml::from_str(text)
            .map_err(|e| BagError::Metadata { path: path.to_path_buf(), reason: e.to_string() })?;
        Ok(f.rosbag2_bagfile_information)
    }

    /// Reads `metadata.yaml` from a file.
    pub fn read(path: &Path) -> Result<Metadata, BagError> {
        let text = std::fs::read_to_string(path).map_err(|e| BagError::io(path, e))?;
        Metadata::parse(&text, path)
    }

    /// The full file text (`rosbag2_bagfile_information:` and the map).
    pub fn to_yaml(&self) -> Result<String, serde_yaml::Error> {
        serde_yaml::to_string(&MetadataFile { rosbag2_bagfile_information: self.clone() })
    }

    /// The inner map alone, as rosbag2 stores it in an MCAP metadata record `rosbag2`
    /// (key `serialized_metadata`).
    pub fn to_inner_yaml(&self) -> Result<String, serde_yaml::Error> {
        serde_yaml::to_string(self)
    }
}

/// QoS history policy.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum History {
    /// Keep the last `depth` samples.
    KeepLast,
    /// Keep everything.
    KeepAll,
}

/// QoS reliability policy.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Reliability {
    /// Retransmit until received.
    Reliable,
    /// Send once.
    BestEffort,
}

/// QoS durability policy.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Durability {
    /// Late joiners get the last samples.
    TransientLocal,
    /// Late joiners get nothing old.
    Volatile,
}

/// The QoS profile a publisher offered, as rosbag2 records it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct QosProfile {
    /// History policy.
    pub history: History,
    /// History depth.
    pub depth: u32,
    /// Reliability policy.
    pub reliability: Reliability,
    /// Durability policy.
    pub durability: Durability,
}

impl From<sillage_core::Qos> for QosProfile {
    /// The rmw QoS profiles (rmw/qos_profiles.h, from memory): sensor data keep last 5 best effort volatile,
    /// reliable keep last 10, latched keep last 1 reliable transient local.
    fn from(q: sillage_core::Qos) -> QosProfile {
        use sillage_core::Qos;
        let (depth, reliability, durability) = match q {
            Qos::SensorData => (5, Reliability::BestEffort, Durability::Volatile),
            Qos::Reliable => (10, Reliability::Reliable, Durability::Volatile),
            Qos::Latched => (1, Reliability::Reliable, Durability::TransientLocal),
            Qos::Safety => (10, Reliability::BestEffort, Durability::Volatile),
        };
        QosProfile { history: History::KeepLast, depth, reliability, durability }
    }
}

/// rosbag2's "infinite" duration: {sec: 9223372036, nsec: 854775807}.
fn infinite() -> Value {
    let mut m = serde_yaml::Mapping::new();
    m.insert("sec".into(), 9_223_372_036i64.into());
    m.insert("nsec".into(), 854_775_807i64.into());
    Value::Mapping(m)
}

impl QosProfile {
    /// The profile as a version-9 YAML map (enums as lower-case names).
    pub fn to_value(&self) -> Value {
        let mut m = serde_yaml::Mapping::new();
        let s = |x: &str| Value::String(x.to_string());
        m.insert(s("history"), s(match self.history { History::KeepLast => "keep_last", History::KeepAll => "keep_all" }));
        m.insert(s("depth"), Value::from(self.depth));
        m.insert(s("reliability"), s(match self.reliability { Reliability::Reliable => "reliable", Reliability::BestEffort => "best_effort" }));
        m.insert(s("durability"), s(match self.durability { Durability::TransientLocal => "transient_local", Durability::Volatile => "volatile" }));
        m.insert(s("deadline"), infinite());
        m.insert(s("lifespan"), infinite());
        m.insert(s("liveliness"), s("automatic"));
        m.insert(s("liveliness_lease_duration"), infinite());
        m.insert(s("avoid_ros_namespace_conventions"), Value::Bool(false));
        Value::Mapping(m)
    }

    /// A list of profiles as the YAML text MCAP channels carry in `offered_qos_profiles`.
    pub fn list_to_yaml(profiles: &[QosProfile]) -> String {
        let list = Value::Sequence(profiles.iter().map(QosProfile::to_value).collect());
        serde_yaml::to_string(&list).unwrap_or_default().trim_end().to_string()
    }

    /// Parses the profiles of a topic from either layout (string or list; integer or named
    /// enums); entries that cannot be understood are left out.
    pub fn parse_list(v: &Value) -> Vec<QosProfile> {
        let owned;
        let list = match v {
            Value::String(s) if s.trim().is_empty() => return Vec::new(),
            Value::String(s) => match serde_yaml::from_str::<Value>(s) {
                Ok(x) => {
                    owned = x;
                    &owned
                }
                Err(_) => return Vec::new(),
            },
            other => other,
        };
        let Value::Sequence(items) = list else { return Vec::new() };
        items.iter().filter_map(QosProfile::from_value).collect()
    }

    fn from_value(v: &Value) -> Option<QosProfile> {
        let get = |k: &str| v.get(k);
        // Integer values are rmw's enums: history 1 keep last, 2 keep all; reliability 1
        // reliable, 2 best effort; durability 1 transient local, 2 volatile (rmw_qos_profile_t).
        let name_or_int = |k: &str| -> Option<String> {
            match get(k)? {
                Value::String(s) => Some(s.to_lowercase()),
                Value::Number(n) => Some(n.to_string()),
                _ => None,
            }
        };
        let history = match name_or_int("history")?.as_str() {
            "keep_all" | "2" => History::KeepAll,
            _ => History::KeepLast,
        };
        let reliability = match name_or_int("reliability")?.as_str() {
            "best_effort" | "2" => Reliability::BestEffort,
            _ => Reliability::Reliable,
        };
        let durability = match name_or_int("durability")?.as_str() {
            "transient_local" | "1" => Durability::TransientLocal,
            _ => Durability::Volatile,
        };
        let depth = get("depth").and_then(Value::as_u64).unwrap_or(0) as u32;
        Some(QosProfile { history, depth, reliability, durability })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn qos_round_trips_through_both_layouts() {
        let p = QosProfile::from(sillage_core::Qos::Latched);
        let text = QosProfile::list_to_yaml(&[p]);
        assert!(text.contains("durability: transient_local"), "{text}");
        assert_eq!(QosProfile::parse_list(&Value::String(text)), vec![p]);
        // Version <= 8 layout: a string with rmw integers (as rosbag2 Humble writes it).
        let v8 = "- history: 3\n  depth: 0\n  reliability: 2\n  durability: 2\n  deadline:\n    sec: 0\n    nsec: 0\n";
        let q = QosProfile::parse_list(&Value::String(v8.into()));
        assert_eq!(q.len(), 1);
        assert_eq!(q[0].reliability, Reliability::BestEffort);
        assert_eq!(q[0].durability, Durability::Volatile);
    }

    #[test]
    fn metadata_parses_tolerantly_and_round_trips() {
        let text = "rosbag2_bagfile_information:\n  version: 5\n  storage_identifier: sqlite3\n  relative_file_paths:\n    - b_0.db3\n  duration:\n    nanoseconds: 10\n  topics_with_message_count:\n    - topic_metadata:\n        name: /chem\n        type: sillage_msgs/msg/ChemSample\n        serialization_format: cdr\n        offered_qos_profiles: ''\n      message_count: 3\n";
        let m = Metadata::parse(text, Path::new("m.yaml")).expect("parses");
        assert_eq!(m.storage_identifier, "sqlite3");
        assert_eq!(m.topics_with_message_count[0].message_count, 3);
        let again = Metadata::parse(&m.to_yaml().expect("dumps"), Path::new("m.yaml")).expect("parses");
        assert_eq!(again, m);
        let e = Metadata::parse("rosbag2_bagfile_information: [1, 2]", Path::new("x/metadata.yaml")).expect_err("bad");
        assert!(e.to_string().contains("x/metadata.yaml"), "{e}");
    }
}
