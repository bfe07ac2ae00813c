//! `sillage replay` and `sillage bag info` on the demo bag: outputs, determinism, and a
//! replay interrupted by a corrupt chunk that still leaves a readable output bag.

use sillage_bag::{Bag, ReadOptions};
use std::path::{Path, PathBuf};
use std::process::Command;

fn demo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/demo/demo_bag")
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("sillage-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn sillage(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_sillage")).args(args).output().expect("runs")
}

fn read_all(bag: &Path) -> Vec<(i64, String, Vec<u8>)> {
    let b = Bag::open(bag).expect("opens");
    b.messages(&ReadOptions { strict: true, ..Default::default() })
        .expect("reads")
        .map(|m| {
            let m = m.expect("message");
            (m.log_time, m.topic.to_string(), m.msg.encode().expect("encodes"))
        })
        .collect()
}

#[test]
fn replay_writes_bag_summary_and_plots_deterministically() {
    let out = tmp("demo");
    let o = sillage(&["replay", demo().to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--quiet"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("/chem") && text.contains("modes (times from the bag's first message):"), "{text}");
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    assert_eq!(s["injected"], 6660);
    assert!(s["interrupted"].is_null());
    let count = |t: &str| s["topics"].as_array().expect("topics").iter().find(|x| x["topic"] == t).map(|x| x["count"].as_u64().unwrap_or(0));
    assert_eq!(count("/chem"), Some(3000));
    assert_eq!(count("/odom"), Some(3000));
    for p in ["chem", "bearing", "plume", "cmd_vel", "wind", "modes", "trajectory"] {
        let f = out.join("plots").join(format!("{p}.svg"));
        assert!(std::fs::metadata(&f).map(|m| m.len() > 1000).unwrap_or(false), "{}", f.display());
    }
    // The output bag holds the inputs unchanged, plus the nodes' outputs.
    let input = read_all(&demo());
    let output = read_all(&out.join("bag"));
    let inputs_again: Vec<_> = output.iter().filter(|m| ["/chem", "/wind", "/odom", "/e_stop"].contains(&m.1.as_str())).cloned().collect();
    assert_eq!(inputs_again, input);
    assert!(output.len() > input.len());
    // Run B == run A, byte for byte.
    let again = tmp("demo-again");
    let o = sillage(&["replay", demo().to_str().expect("utf-8"), "--out", again.to_str().expect("utf-8"), "--quiet", "--no-plots"]);
    assert!(o.status.success());
    let a = std::fs::read(out.join("bag/bag_0.mcap")).expect("a");
    let b = std::fs::read(again.join("bag/bag_0.mcap")).expect("b");
    assert!(a == b, "two replays of the same bag differ");
    let _ = std::fs::remove_dir_all(&out);
    let _ = std::fs::remove_dir_all(&again);
}

#[test]
fn bag_compressions_hold_the_same_messages_and_no_bag_writes_none() {
    let demo = demo();
    let demo = demo.to_str().expect("utf-8");
    let mut bags = Vec::new();
    for c in ["zstd", "lz4", "none"] {
        let out = tmp(&format!("compression-{c}"));
        let o = sillage(&["replay", demo, "--out", out.to_str().expect("utf-8"), "--quiet", "--no-plots", "--bag-compression", c]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        bags.push((read_all(&out.join("bag")), std::fs::metadata(out.join("bag/bag_0.mcap")).expect("mcap").len()));
        let _ = std::fs::remove_dir_all(&out);
    }
    assert!(bags.iter().all(|b| b.0 == bags[0].0), "the compressions hold different messages");
    assert!(bags[0].1 < bags[1].1 && bags[1].1 < bags[2].1, "sizes zstd < lz4 < none: {:?}", bags.iter().map(|b| b.1).collect::<Vec<_>>());
    let out = tmp("no-bag");
    let o = sillage(&["replay", demo, "--out", out.to_str().expect("utf-8"), "--quiet", "--no-plots", "--no-bag"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!out.join("bag").exists());
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    assert_eq!(s["injected"], 6660);
    let topics: u64 = s["topics"].as_array().expect("topics").iter().map(|x| x["count"].as_u64().unwrap_or(0)).sum();
    assert_eq!(topics as usize, bags[0].0.len(), "the summary counts what the bag would hold");
    let _ = std::fs::remove_dir_all(&out);
}

#[test]
fn start_and_duration_select_a_window() {
    let out = tmp("window");
    let o = sillage(&["replay", demo().to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--quiet", "--no-plots", "--start", "10", "--duration", "5"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    // 5 s of 50 + 10 + 50 + 1 Hz streams: about 555 messages (window edges +-1 per stream).
    let n = s["injected"].as_u64().expect("count");
    assert!((550..=560).contains(&n), "{n}");
    let _ = std::fs::remove_dir_all(&out);
}

#[test]
fn a_corrupt_chunk_is_skipped_the_rest_replayed_and_the_replay_fails_saying_so() {
    let dir = tmp("corrupt");
    let bagdir = dir.join("broken");
    std::fs::create_dir_all(&bagdir).expect("mkdir");
    let src = demo().join("demo_bag_0.mcap");
    let mut bytes = std::fs::read(&src).expect("demo");
    // Corrupt the middle of the second chunk's compressed data.
    let s = sillage_bag::mcap_read::McapSource::open(&src, 0, i64::MAX).expect("opens");
    let chunks = &s.summary().expect("summary").chunk_indexes;
    assert!(chunks.len() >= 2, "the demo bag has {} chunks", chunks.len());
    let mid = (chunks[1].chunk_start_offset + chunks[1].chunk_length / 2) as usize;
    for b in &mut bytes[mid..mid + 64] {
        *b ^= 0x5a;
    }
    std::fs::write(bagdir.join("broken_0.mcap"), &bytes).expect("write");
    let out = dir.join("out");
    let o = sillage(&["replay", bagdir.to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--quiet", "--no-plots"]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("broken_0.mcap") && err.contains("chunk at byte") && err.contains("--allow-partial"), "{err}");
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    assert!(s["interrupted"].is_null(), "{}", s["interrupted"]);
    let damage = s["integrity"][0].as_str().unwrap_or("");
    assert!(damage.contains("broken_0.mcap") && damage.contains(&format!("byte {}", chunks[1].chunk_start_offset)), "{damage}");
    let got = read_all(&out.join("bag"));
    // Inputs from after the bad chunk were replayed too.
    let chem_after = got.iter().filter(|m| m.1 == "/chem" && m.0 as u64 > chunks[1].message_end_time).count();
    assert!(chem_after > 0, "nothing replayed after the bad chunk");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn bag_info_lists_topics_counts_and_storage() {
    let o = sillage(&["bag", "info", demo().to_str().expect("utf-8"), "--json"]);
    assert!(o.status.success());
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!(v["message_count"], 6660);
    assert_eq!(v["files"][0]["storage"], "mcap");
    let d = v["duration_s"].as_f64().expect("duration");
    assert!((d - 59.98).abs() < 0.01, "{d}");
    let o = sillage(&["bag", "info", PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/bags/rosbags_sqlite3").to_str().expect("utf-8")]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("sqlite3") && text.contains("/chatter") && text.contains("[not read by the node graph]"), "{text}");
}

#[test]
fn remaps_and_namespaces_move_the_graph_inputs() {
    let out = tmp("remap");
    let o = sillage(&[
        "replay", demo().to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--quiet", "--no-plots",
        "--remap", "wind:=/anemometer", "--duration", "2",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    let skipped = |t: &str| s["skipped"].as_array().expect("skipped").iter().find(|x| x["topic"] == t).map(|x| x["reason"].as_str().unwrap_or("").to_string());
    // /wind is no longer an input; /chem still is.
    assert_eq!(skipped("/wind").as_deref(), Some("no node subscribes to it"));
    assert!(skipped("/chem").is_none());
    let o = sillage(&["replay", demo().to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--quiet", "--no-plots", "--namespace", "r1", "--duration", "2"]);
    assert_eq!(o.status.code(), Some(1), "nothing fed the graph: a failure");
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    assert_eq!(s["injected"], 0, "in namespace /r1 the graph reads /r1/chem, which the bag lacks");
    assert!(String::from_utf8_lossy(&o.stderr).contains("/r1/chem"));
    let _ = std::fs::remove_dir_all(&out);
}
