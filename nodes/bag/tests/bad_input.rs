//! Bad and unusual input: every case gives a typed error naming file, topic and offset, or a
//! warning and a skip when the rest of the bag is sound.

#![allow(clippy::result_large_err)] // sillage_bag errors name file, topic and offset

use sillage_bag::{Bag, BagError, BagWriter, QosProfile, ReadOptions, SkipReason, WriterOptions};
use sillage_core::msg::*;
use sillage_core::Msg;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("sillage-bad-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).expect("mkdir");
    d
}

fn wind(t: i64, x: f64) -> Msg {
    Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x, y: 0.0, z: 0.0 } }.into()
}

/// A bag folder with `n` wind messages 10 ms apart, written by sillage.
fn wind_bag(dir: &Path, n: i64, compression: Option<mcap::Compression>) -> PathBuf {
    let mut w = BagWriter::create(dir, WriterOptions { compression, chunk_size: 4096, overwrite: true, ..Default::default() }).expect("creates");
    let qos = [QosProfile::from(sillage_core::Qos::SensorData)];
    for k in 0..n {
        let t = 1_000_000_000 + k * 10_000_000;
        w.write_on("/wind", t, &wind(t, k as f64), &qos).expect("writes");
    }
    w.finish().expect("finishes").file
}

fn read(path: &Path, strict: bool) -> (Vec<(i64, String)>, sillage_bag::ReadReport, Option<BagError>) {
    let bag = Bag::open(path).expect("opens");
    let mut it = bag.messages(&ReadOptions { strict, ..Default::default() }).expect("starts");
    let mut got = Vec::new();
    let mut err = None;
    for m in it.by_ref() {
        match m {
            Ok(m) => got.push((m.log_time, m.topic.to_string())),
            Err(e) => err = Some(e),
        }
    }
    (got, it.report().clone(), err)
}

/// A raw MCAP file written with the mcap crate: (topic, schema name, schema text, encoding,
/// [(log time, bytes)]) per channel, chunked or not.
/// (topic, schema name, schema text, message encoding, [(log time, bytes)]).
type RawChannel<'a> = (&'a str, &'a str, &'a str, &'a str, Vec<(u64, Vec<u8>)>);

fn raw_mcap(path: &Path, chunked: bool, channels: &[RawChannel<'_>]) {
    let f = std::io::BufWriter::new(std::fs::File::create(path).expect("create"));
    let mut w = mcap::WriteOptions::new().profile("ros2").use_chunks(chunked).create(f).expect("writer");
    let mut ids = Vec::new();
    for (topic, schema, text, enc, _) in channels {
        let s = w.add_schema(schema, "ros2msg", text.as_bytes()).expect("schema");
        ids.push(w.add_channel(s, topic, enc, &BTreeMap::new()).expect("channel"));
    }
    let mut all: Vec<(u64, usize, &Vec<u8>)> = Vec::new();
    for (i, c) in channels.iter().enumerate() {
        for (t, d) in &c.4 {
            all.push((*t, i, d));
        }
    }
    // File order = the order given (not sorted), so tests can make non-monotonic files.
    for (seq, (t, i, d)) in all.into_iter().enumerate() {
        let h = mcap::records::MessageHeader { channel_id: ids[i], sequence: seq as u32, log_time: t, publish_time: t };
        w.write_to_known_channel(&h, d).expect("message");
    }
    w.finish().expect("finish");
}

fn wind_bytes(t: i64, x: f64) -> Vec<u8> {
    wind(t, x).encode().expect("encodes")
}

const V3S: &str = "geometry_msgs/msg/Vector3Stamped";

fn v3s_schema() -> String {
    sillage_core::ros_type::full_definition(V3S).expect("known")
}

#[test]
fn bad_magic_names_the_file() {
    let d = tmp("magic");
    let p = d.join("x.mcap");
    std::fs::write(&p, b"this is not an mcap file at all").expect("write");
    let e = Bag::open(&p).expect_err("refused");
    assert!(matches!(e, BagError::Mcap { .. }), "{e}");
    assert!(e.to_string().contains("x.mcap") && e.to_string().contains("bad magic"), "{e}");
    let q = d.join("y.db3");
    std::fs::write(&q, b"garbage garbage garbage").expect("write");
    let e = Bag::open(&q).expect_err("refused");
    assert!(matches!(e, BagError::Sqlite { .. }) && e.to_string().contains("y.db3"), "{e}");
}

#[test]
fn truncated_file_reads_up_to_the_cut_with_a_warning() {
    let d = tmp("trunc");
    let file = wind_bag(&d.join("b"), 2000, Some(mcap::Compression::Zstd));
    let bytes = std::fs::read(&file).expect("read");
    let cut = d.join("cut");
    std::fs::create_dir_all(&cut).expect("mkdir");
    std::fs::write(cut.join("cut_0.mcap"), &bytes[..bytes.len() * 6 / 10]).expect("write");
    let (got, report, err) = read(&cut, false);
    assert!(err.is_none(), "{err:?}");
    assert!(got.len() > 500 && got.len() < 2000, "{}", got.len());
    assert!(got.windows(2).all(|w| w[0].0 < w[1].0));
    let text: Vec<String> = report.warnings.iter().map(ToString::to_string).collect();
    assert!(text.iter().any(|w| w.contains("no metadata.yaml")), "{text:?}");
    assert!(text.iter().any(|w| w.contains("cut_0.mcap") && w.contains("ends early")), "{text:?}");
}

#[test]
fn corrupt_chunk_fails_its_crc_with_file_and_offset_in_strict_mode_and_is_skipped_otherwise() {
    let d = tmp("crc");
    let file = wind_bag(&d.join("b"), 500, None);
    let mut bytes = std::fs::read(&file).expect("read");
    let src = sillage_bag::mcap_read::McapSource::open(&file, 0, i64::MAX).expect("opens");
    let ci = src.summary().expect("summary").chunk_indexes[1].clone();
    // A byte inside the second chunk's (uncompressed) records.
    let at = (ci.chunk_start_offset + ci.chunk_length - 40) as usize;
    bytes[at] ^= 0xff;
    std::fs::write(&file, &bytes).expect("write");
    let (got, _, err) = read(&d.join("b"), true);
    match err {
        Some(BagError::ChunkCrc { path, offset, saved, computed }) => {
            assert_eq!(path, file);
            assert_eq!(offset, ci.chunk_start_offset);
            assert_ne!(saved, computed);
        }
        other => panic!("expected a CRC error, got {other:?}"),
    }
    assert!(!got.is_empty(), "the first chunk was read before the bad one");
    // Not strict: the bad chunk is skipped, the rest read, and the loss is located and counted
    // from the chunk's message index (records outside the chunk), which must agree with what
    // is missing from the 500 written.
    let (got, report, err) = read(&d.join("b"), false);
    assert!(err.is_none(), "{err:?}");
    assert_eq!(report.damage.len(), 1, "{:?}", report.damage);
    let dmg = &report.damage[0];
    assert_eq!((dmg.kind, dmg.offset), (sillage_bag::DamageKind::Chunk, ci.chunk_start_offset));
    let lost: u64 = dmg.lost.iter().map(|l| l.1).sum();
    assert_eq!(dmg.lost.iter().map(|l| l.0.as_str()).collect::<Vec<_>>(), vec!["/wind"]);
    assert_eq!(got.len() as u64 + lost, 500);
    assert!(lost > 0 && got.last().map(|m| m.0) == Some(1_000_000_000 + 499 * 10_000_000), "read on after the bad chunk");
}

#[test]
fn metadata_listing_a_missing_file_warns_and_reads_the_rest() {
    let d = tmp("missing");
    wind_bag(&d.join("b"), 10, None);
    let meta = d.join("b/metadata.yaml");
    let text = std::fs::read_to_string(&meta).expect("meta").replace("relative_file_paths:\n  - b_0.mcap", "relative_file_paths:\n  - b_0.mcap\n  - b_1.mcap");
    std::fs::write(&meta, text).expect("write");
    let (got, report, err) = read(&d.join("b"), true);
    assert!(err.is_none());
    assert_eq!(got.len(), 10);
    assert!(report.warnings.iter().any(|w| w.message.contains("b_1.mcap") && w.message.contains("missing")), "{:?}", report.warnings);
    std::fs::write(&meta, "rosbag2_bagfile_information: [").expect("write");
    let e = Bag::open(d.join("b")).expect_err("bad yaml");
    assert!(matches!(e, BagError::Metadata { .. }) && e.to_string().contains("metadata.yaml"), "{e}");
}

#[test]
fn schema_mismatch_and_unknown_encoding_skip_the_topic() {
    let d = tmp("schema");
    let p = d.join("s.mcap");
    let wrong = "std_msgs/Header header\nfloat32 x\n================================================================================\nMSG: std_msgs/Header\nbuiltin_interfaces/Time stamp\nstring frame_id\n";
    let good = v3s_schema();
    raw_mcap(
        &p,
        true,
        &[
            ("/wind", V3S, wrong, "cdr", vec![(10, wind_bytes(10, 1.0))]),
            ("/wind_json", V3S, &good, "json", vec![(11, b"{}".to_vec())]),
            ("/wind_ok", V3S, &good, "cdr", vec![(12, wind_bytes(12, 2.0))]),
        ],
    );
    let (got, report, err) = read(&p, false);
    assert!(err.is_none(), "{err:?}");
    assert_eq!(got, vec![(12, "/wind_ok".to_string())]);
    let skip = |t: &str| report.topics.iter().find(|x| x.name == t).and_then(|x| x.skip.clone());
    assert!(matches!(skip("/wind"), Some(SkipReason::SchemaMismatch(_))));
    assert_eq!(skip("/wind_json"), Some(SkipReason::Encoding("json".into())));
    assert!(report.warnings.iter().any(|w| w.message.contains("s.mcap") && w.message.contains("'/wind'")), "{:?}", report.warnings);
    let (_, _, err) = read(&p, true);
    let e = err.expect("strict refuses");
    assert!(matches!(e, BagError::SchemaMismatch { ref topic, .. } if topic == "/wind"), "{e}");
}

#[test]
fn backward_log_times_warn_and_strict_refuses() {
    let d = tmp("order");
    let p = d.join("o.mcap");
    let s = v3s_schema();
    // Unchunked file (no chunk index): read front to back, in file order.
    raw_mcap(&p, false, &[("/wind", V3S, &s, "cdr", vec![(100, wind_bytes(100, 1.0)), (300, wind_bytes(300, 2.0)), (200, wind_bytes(200, 3.0))])]);
    let (got, report, err) = read(&p, false);
    assert!(err.is_none());
    assert_eq!(got.iter().map(|g| g.0).collect::<Vec<_>>(), vec![100, 300, 200]);
    assert_eq!(report.out_of_order, 1);
    assert!(report.warnings.iter().any(|w| w.message.contains("200 ns is before") && w.message.contains("o.mcap")), "{:?}", report.warnings);
    let (got, _, err) = read(&p, true);
    assert_eq!(got.len(), 2);
    assert!(matches!(err, Some(BagError::NonMonotonic { log_time: 200, previous: 300, .. })), "{err:?}");
}

#[test]
fn exact_duplicates_are_skipped_equal_stamps_with_other_data_kept() {
    let d = tmp("dup");
    let p = d.join("d.mcap");
    let s = v3s_schema();
    raw_mcap(&p, true, &[("/wind", V3S, &s, "cdr", vec![(100, wind_bytes(100, 1.0)), (100, wind_bytes(100, 1.0)), (100, wind_bytes(100, 2.0))])]);
    let (got, report, _) = read(&p, true);
    assert_eq!(got.len(), 2);
    assert_eq!(report.duplicates, 1);
    assert!(report.warnings.iter().any(|w| w.message.contains("duplicate")));
}

#[test]
fn undecodable_message_is_skipped_with_its_location() {
    let d = tmp("decode");
    let p = d.join("m.mcap");
    let s = v3s_schema();
    raw_mcap(&p, true, &[("/wind", V3S, &s, "cdr", vec![(100, wind_bytes(100, 1.0)), (200, vec![0, 1, 0, 0, 9]), (300, wind_bytes(300, 3.0))])]);
    let (got, report, err) = read(&p, false);
    assert!(err.is_none());
    assert_eq!(got.len(), 2);
    assert_eq!(report.decode_errors, 1);
    let (_, _, err) = read(&p, true);
    let e = err.expect("strict refuses");
    let text = e.to_string();
    assert!(matches!(e, BagError::Decode { log_time: 200, .. }), "{e}");
    assert!(text.contains("m.mcap") && text.contains("'/wind'") && text.contains("chunk at byte"), "{text}");
}

#[test]
fn split_and_several_bags_merge_in_log_time_order() {
    let d = tmp("split");
    // Two files of one bag, overlapping in time, listed in metadata order.
    let s = v3s_schema();
    let b = d.join("split");
    std::fs::create_dir_all(&b).expect("mkdir");
    raw_mcap(&b.join("split_0.mcap"), true, &[("/wind", V3S, &s, "cdr", (0..50).map(|k| (k * 20, wind_bytes(k as i64 * 20, 0.0))).collect())]);
    raw_mcap(&b.join("split_1.mcap"), true, &[("/wind2", V3S, &s, "cdr", (0..50).map(|k| (k * 20 + 10, wind_bytes(k as i64 * 20 + 10, 0.0))).collect())]);
    let meta = "rosbag2_bagfile_information:\n  version: 9\n  storage_identifier: mcap\n  relative_file_paths:\n    - split_0.mcap\n    - split_1.mcap\n";
    std::fs::write(b.join("metadata.yaml"), meta).expect("meta");
    let (got, _, err) = read(&b, true);
    assert!(err.is_none());
    assert_eq!(got.len(), 100);
    assert!(got.windows(2).all(|w| w[0].0 < w[1].0), "merged by log time");
    assert_eq!(got[1].1, "/wind2");
    // An sqlite3 bag and an MCAP bag read together: both hold the same 35 messages, so the
    // second copy of each is an exact duplicate and is skipped.
    let fixtures = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/bags");
    let both = Bag::open_many(&[fixtures.join("rosbags_sqlite3"), fixtures.join("mcap_ros2.mcap")]).expect("opens");
    let mut it = both.messages(&ReadOptions::default()).expect("reads");
    let times: Vec<i64> = it.by_ref().map(|m| m.expect("message").log_time).collect();
    assert_eq!(times.len(), 35);
    assert_eq!(it.report().duplicates, 35);
    assert!(times.windows(2).all(|w| w[0] <= w[1]));
}

#[test]
fn humble_style_sqlite_bag_without_qos_or_definitions_reads() {
    let d = tmp("humble");
    let p = d.join("h_0.db3");
    let c = rusqlite::Connection::open(&p).expect("db");
    // The tables of rosbag2's sqlite3 plugin before Iron (no message_definitions, no
    // offered_qos_profiles, no index).
    c.execute_batch(
        "CREATE TABLE topics(id INTEGER PRIMARY KEY, name TEXT NOT NULL, type TEXT NOT NULL, serialization_format TEXT NOT NULL);
         CREATE TABLE messages(id INTEGER PRIMARY KEY, topic_id INTEGER NOT NULL, timestamp INTEGER NOT NULL, data BLOB NOT NULL);
         INSERT INTO topics VALUES (1, '/wind', 'geometry_msgs/msg/Vector3Stamped', 'cdr');
         INSERT INTO topics VALUES (2, '/tf', 'tf2_msgs/msg/TFMessage', 'cdr');",
    )
    .expect("schema");
    // Rows inserted out of time order: the reader orders them by timestamp.
    for (id, t) in [(1, 300i64), (2, 100), (3, 200)] {
        c.execute("INSERT INTO messages VALUES (?1, 1, ?2, ?3)", rusqlite::params![id, t, wind_bytes(t, 1.0)]).expect("row");
    }
    c.execute("INSERT INTO messages VALUES (4, 2, 150, x'00010000')", []).expect("row");
    // A row that is not CDR at all.
    c.execute("INSERT INTO messages VALUES (5, 1, 250, x'ff')", []).expect("row");
    drop(c);
    let (got, report, err) = read(&p, false);
    assert!(err.is_none());
    assert_eq!(got.iter().map(|g| g.0).collect::<Vec<_>>(), vec![100, 200, 300]);
    let tf = report.topics.iter().find(|t| t.name == "/tf").expect("tf");
    assert_eq!((tf.skipped, tf.skip.clone()), (1, Some(SkipReason::UnknownType)));
    assert!(report.warnings.iter().any(|w| w.message.contains("messages row 5")), "{:?}", report.warnings);
}

#[test]
fn writer_refuses_to_overwrite_and_wrong_types() {
    let d = tmp("writer");
    wind_bag(&d.join("b"), 3, None);
    let e = BagWriter::create(d.join("b"), WriterOptions::default()).err().expect("refused");
    assert!(matches!(e, BagError::Exists { .. }), "{e}");
    let mut w = BagWriter::create(d.join("c"), WriterOptions::default()).expect("creates");
    let id = w.add_topic("/wind", V3S, &[]).expect("topic");
    let e = w.write(id, 5, &Bool { data: true }.into()).expect_err("wrong type");
    assert!(matches!(e, BagError::TopicType { .. }), "{e}");
    let e = w.add_topic("/tf", "tf2_msgs/msg/TFMessage", &[]).expect_err("unknown type");
    assert!(e.to_string().contains("tf2_msgs/msg/TFMessage"), "{e}");
    // Dropped without finish: the file is still closed properly and readable.
    w.write(id, 5, &wind(5, 1.0)).expect("writes");
    drop(w);
    let (got, _, err) = read(&d.join("c"), true);
    assert!(err.is_none());
    assert_eq!(got, vec![(5, "/wind".to_string())]);
}
