//! `sillage bag info` and `sillage replay` on damaged copies of the demo bag: a copy cut at
//! 60 % of its MCAP file and a copy with bytes flipped inside a chunk. The losses they report
//! must agree with the demo bag's metadata.yaml (an independent count written with the bag)
//! and the exit codes say whether messages were lost.

use std::path::{Path, PathBuf};
use std::process::Command;

fn demo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/demo/demo_bag")
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("sillage-integrity-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).expect("tmp");
    d
}

fn copy_demo(to: &Path) -> PathBuf {
    std::fs::create_dir_all(to).expect("dir");
    for e in std::fs::read_dir(demo()).expect("demo") {
        let e = e.expect("entry");
        std::fs::copy(e.path(), to.join(e.file_name())).expect("copy");
    }
    to.join("demo_bag_0.mcap")
}

fn sillage(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_sillage")).args(args).output().expect("runs")
}

fn info_json(bag: &Path, extra: &[&str]) -> (serde_json::Value, Option<i32>) {
    let mut a = vec!["bag", "info", bag.to_str().expect("utf-8"), "--json"];
    a.extend_from_slice(extra);
    let o = sillage(&a);
    (serde_json::from_slice(&o.stdout).expect("json"), o.status.code())
}

/// Per-topic counts of metadata.yaml, read with serde_yaml here (not through sillage).
fn metadata_counts() -> Vec<(String, u64)> {
    let v: serde_yaml::Value = serde_yaml::from_str(&std::fs::read_to_string(demo().join("metadata.yaml")).expect("meta")).expect("yaml");
    let mut out: Vec<(String, u64)> = v["rosbag2_bagfile_information"]["topics_with_message_count"]
        .as_sequence()
        .expect("topics")
        .iter()
        .map(|t| (t["topic_metadata"]["name"].as_str().expect("name").to_string(), t["message_count"].as_u64().expect("count")))
        .collect();
    out.sort();
    out
}

#[test]
fn an_intact_bag_reports_intact_with_exact_stamps() {
    let (v, code) = info_json(&demo(), &[]);
    assert_eq!(code, Some(0));
    assert_eq!(v["integrity"]["intact"], true);
    let total: u64 = metadata_counts().iter().map(|c| c.1).sum();
    assert_eq!(v["message_count"].as_u64(), Some(total));
    // The decimal string and the integer nanoseconds say the same instant, digit for digit.
    let ns = v["start_ns"].as_i64().expect("ns");
    assert_eq!(v["start_s"].as_str(), Some(format!("{}.{:09}", ns / 1_000_000_000, ns % 1_000_000_000).as_str()));
    let o = sillage(&["bag", "info", demo().to_str().expect("utf-8")]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("integrity  intact") && text.contains(" UTC "), "{text}");
}

#[test]
fn a_cut_copy_reports_what_was_lost_and_fails_unless_partial_is_allowed() {
    let d = tmp("cut");
    let file = copy_demo(&d.join("bag"));
    let len = std::fs::metadata(&file).expect("len").len();
    let f = std::fs::OpenOptions::new().write(true).open(&file).expect("open");
    f.set_len(len * 6 / 10).expect("truncate");
    let (v, code) = info_json(&d.join("bag"), &[]);
    assert_eq!(code, Some(1));
    assert_eq!(v["integrity"]["intact"], false);
    let dmg = &v["integrity"]["damage"][0];
    assert_eq!(dmg["kind"], "truncated");
    assert!(dmg["byte"].as_u64().is_some_and(|b| b > 0 && b <= len * 6 / 10), "{dmg}");
    // Every topic's shortfall against metadata.yaml, and the read counts add up to the
    // metadata's.
    let meta = metadata_counts();
    let mism = v["integrity"]["count_mismatches"].as_array().expect("mismatches");
    assert_eq!(mism.len(), meta.len());
    for (m, (topic, n)) in mism.iter().zip(&meta) {
        assert_eq!(m["topic"].as_str(), Some(topic.as_str()));
        assert_eq!(m["metadata"].as_u64(), Some(*n));
        assert!(m["read"].as_u64().is_some_and(|r| r < *n));
    }
    let read: u64 = mism.iter().map(|m| m["read"].as_u64().unwrap_or(0)).sum();
    assert_eq!(v["integrity"]["lost_messages"].as_u64(), Some(meta.iter().map(|c| c.1).sum::<u64>() - read));
    assert_eq!(info_json(&d.join("bag"), &["--allow-partial"]).1, Some(0));
    // Replay reads what is there, says what was lost, and fails unless allowed.
    let out = d.join("out");
    let o = sillage(&["replay", d.join("bag").to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--no-plots", "--quiet"]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("damaged") && err.contains("/chem"), "{err}");
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    assert!(s["injected"].as_u64().is_some_and(|n| n > 0 && n == read), "{}", s["injected"]);
    let o = sillage(&["replay", d.join("bag").to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--no-plots", "--quiet", "--allow-partial"]);
    assert_eq!(o.status.code(), Some(0), "{}", String::from_utf8_lossy(&o.stderr));
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_damaged_chunk_is_skipped_and_counted_from_its_index() {
    let d = tmp("chunk");
    let file = copy_demo(&d.join("bag"));
    let mut bytes = std::fs::read(&file).expect("read");
    // Bytes inside the second chunk's compressed records (its place from the file's summary).
    let src = sillage_bag::mcap_read::McapSource::open(&file, 0, i64::MAX).expect("opens");
    let ci = src.summary().expect("summary").chunk_indexes[1].clone();
    let mid = (ci.chunk_start_offset + ci.chunk_length / 2) as usize;
    for b in &mut bytes[mid..mid + 64] {
        *b ^= 0x5a;
    }
    std::fs::write(&file, &bytes).expect("write");
    let (v, code) = info_json(&d.join("bag"), &[]);
    assert_eq!(code, Some(1));
    let dmg = v["integrity"]["damage"].as_array().expect("damage");
    assert_eq!(dmg.len(), 1, "{dmg:?}");
    assert_eq!(dmg[0]["kind"], "chunk");
    assert_eq!(dmg[0]["byte"].as_u64(), Some(ci.chunk_start_offset));
    // The chunk's message index and metadata.yaml agree on what is missing, topic by topic.
    for m in v["integrity"]["count_mismatches"].as_array().expect("mismatches") {
        let lost = m["metadata"].as_u64().unwrap_or(0) - m["read"].as_u64().unwrap_or(0);
        let by_index = dmg[0]["lost"].as_array().expect("lost").iter().find(|l| l["topic"] == m["topic"]).and_then(|l| l["count"].as_u64());
        assert_eq!(by_index, Some(lost), "{m}");
    }
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_replay_that_fed_nothing_fails_with_the_cause() {
    let d = tmp("nothing");
    let file = copy_demo(&d.join("bag"));
    let f = std::fs::OpenOptions::new().write(true).open(&file).expect("open");
    f.set_len(600).expect("truncate");
    let out = d.join("out");
    let o = sillage(&["replay", d.join("bag").to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--no-plots", "--quiet"]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("no bag message fed the graph") && err.contains("cut off"), "{err}");
    // An intact bag whose topics the graph does not read: the cause is the names.
    let o = sillage(&["replay", demo().to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--no-plots", "--quiet", "--namespace", "robot9"]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("/robot9/chem") && err.contains("--remap"), "{err}");
    let _ = std::fs::remove_dir_all(&d);
}
