//! rosbag2 bags without ROS: reading MCAP and sqlite3 storage (folder with `metadata.yaml`, or
//! a single file; split and several bags merged by log time) into sillage's [`Msg`]
//! vocabulary, writing MCAP bags any ROS 2 tool opens, and replaying bags through the
//! in-process executor in virtual bag time.
//!
//! - [`Bag::open`] / [`Bag::open_many`], then [`Bag::messages`]: an iterator of
//!   [`BagMessage`] (log time [ns], topic, type, [`Msg`]) in log-time order, with a
//!   [`ReadReport`] of skipped topics and warnings;
//! - [`BagWriter`]: an MCAP bag folder with `metadata.yaml`;
//! - [`bag_info`]: topics, types, counts, span and storage from the files' indexes;
//! - [`scan::scan`]: a full read with per-topic rates and gaps and an integrity check;
//! - [`replay`]: drives an [`sillage_core::executor::Executor`] from a bag.
//!
//! [`Msg`]: sillage_core::Msg

// Errors carry the file, topic and offset by design (a few strings); they are rare.
#![allow(clippy::result_large_err)]

pub mod decode;
pub mod error;
pub mod fuzzing;
pub mod info;
pub mod json;
pub mod mcap_check;
mod mcap_out;
pub mod mcap_read;
pub mod metadata;
pub mod reader;
pub mod replay;
pub mod scan;
pub mod schema;
pub mod source;
pub mod sqlite_read;
pub mod writer;

pub use error::{BagError, Damage, DamageKind, Location, Warning};
pub use info::{bag_info, BagInfo, FileSummary, TopicInfo};
pub use metadata::{Metadata, QosProfile};
pub use reader::{Bag, BagFile, BagMessage, Messages, RawMessage, ReadOptions, ReadReport, SkipReason, TopicReport};
pub use source::{Source, Storage, TopicDecl};
pub use writer::{BagWriter, TopicId, WriteSummary, WriterOptions};
/// Chunk compression of written bags (the mcap crate's).
pub use mcap::Compression;
