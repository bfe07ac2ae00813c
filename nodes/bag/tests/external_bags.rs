//! Bags written by outside libraries are read with the values those libraries wrote.
//!
//! The fixture bags in tests/fixtures/bags/ were written by tests/refs/bag_make_fixtures.py
//! with rosbags 0.11.9 (MCAP, metadata v9; sqlite3, metadata v8) and with mcap 1.6.0 +
//! mcap-ros2-support 0.6.0 (a single MCAP file without metadata.yaml); expected.jsonl holds
//! the values given to those writers.

use sillage_bag::json::msg_to_json;
use sillage_bag::{Bag, BagWriter, QosProfile, ReadOptions, SkipReason, WriterOptions};
use std::path::PathBuf;

fn fixtures() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/bags")
}

fn expected() -> Vec<serde_json::Value> {
    let text = std::fs::read_to_string(fixtures().join("expected.jsonl")).expect("expected.jsonl");
    text.lines().map(|l| serde_json::from_str(l).expect("json")).collect()
}

fn dump(path: &std::path::Path) -> (Vec<serde_json::Value>, sillage_bag::ReadReport) {
    let bag = Bag::open(path).expect("opens");
    let mut it = bag.messages(&ReadOptions { strict: true, ..Default::default() }).expect("reads");
    let mut out = Vec::new();
    for m in it.by_ref() {
        let m = m.expect("message");
        out.push(serde_json::json!({"log_time": m.log_time, "topic": &*m.topic, "type": m.type_name, "value": msg_to_json(&m.msg)}));
    }
    (out, it.report().clone())
}

#[test]
fn rosbags_and_mcap_ros2_bags_read_identically() {
    let want = expected();
    assert_eq!(want.len(), 35);
    for name in ["rosbags_mcap", "rosbags_sqlite3", "mcap_ros2.mcap"] {
        let (got, report) = dump(&fixtures().join(name));
        assert_eq!(got.len(), want.len(), "{name}");
        for (g, w) in got.iter().zip(&want) {
            assert_eq!(g, w, "{name}");
        }
        let chatter = report.topics.iter().find(|t| t.name == "/chatter").expect("unknown topic reported");
        assert_eq!((chatter.skipped, chatter.skip.clone()), (3, Some(SkipReason::UnknownType)), "{name}");
        assert!(report.warnings.is_empty(), "{name}: {:?}", report.warnings);
    }
}

#[test]
fn what_sillage_writes_reads_back_identically() {
    let dir = std::env::temp_dir().join(format!("sillage-copy-{}", std::process::id())).join("copy");
    let bag = Bag::open(fixtures().join("rosbags_sqlite3")).expect("opens");
    let mut w = BagWriter::create(&dir, WriterOptions { overwrite: true, ..Default::default() }).expect("creates");
    let qos = [QosProfile::from(sillage_core::Qos::Reliable)];
    for m in bag.messages(&ReadOptions::default()).expect("reads") {
        let m = m.expect("message");
        w.write_on(&m.topic, m.log_time, &m.msg, &qos).expect("writes");
    }
    let s = w.finish().expect("finishes");
    assert_eq!(s.metadata.message_count, 35);
    let (got, _) = dump(&dir);
    assert_eq!(got, expected());
    // The single file alone (without metadata.yaml) reads the same.
    let (alone, _) = dump(&s.file);
    assert_eq!(alone, expected());
    let _ = std::fs::remove_dir_all(dir.parent().expect("parent"));
}
