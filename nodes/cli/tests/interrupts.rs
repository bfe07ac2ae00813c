//! SIGINT / SIGTERM sent to a running `sillage replay` and `sillage sim`: the process finishes
//! its outputs for what was done (a closed output bag that sillage and rosbags read, a summary
//! saying it was interrupted) and exits with 128 + the signal number (130, 143: the POSIX
//! shell's report of a process ended by a signal, Shell Command Language 2.8.2).
//!
//! Each test waits for the command's own progress line on stderr (printed at each tenth of the
//! work when stderr is not a terminal) before signalling, so the signal lands mid-run without a
//! fixed sleep.

#![allow(clippy::result_large_err)]

#[path = "../../../tests/bench/synth.rs"]
mod synth;

use sillage_bag::{Bag, BagWriter, QosProfile, ReadOptions, WriterOptions};
use sillage_core::Qos;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("sillage-int-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..")
}

/// A synthetic bag of `seconds` of bag time (the benchmark stream).
fn long_bag(dir: &Path, seconds: f64) {
    let mut w = BagWriter::create(dir, WriterOptions { overwrite: true, ..Default::default() }).expect("creates");
    let q = [QosProfile::from(Qos::SensorData)];
    let chem = w.add_topic("/chem", "sillage_msgs/msg/ChemSample", &q).expect("topic");
    let wind = w.add_topic("/wind", "geometry_msgs/msg/Vector3Stamped", &q).expect("topic");
    let odom = w.add_topic("/odom", "nav_msgs/msg/Odometry", &q).expect("topic");
    for m in synth::Synth::new(seconds, 3) {
        let id = match m.topic {
            "/chem" => chem,
            "/wind" => wind,
            _ => odom,
        };
        w.write(id, m.log_time, &m.msg).expect("writes");
    }
    w.finish().expect("finishes");
}

/// Waits for the first progress line on the child's stderr, then sends `sig`; returns the
/// rest of stderr and the exit code.
fn signal_mid_run(mut child: Child, sig: i32, what: &str) -> (String, Option<i32>) {
    let err = child.stderr.take().expect("stderr piped");
    let mut lines = BufReader::new(err).lines();
    let mut seen = String::new();
    loop {
        match lines.next() {
            Some(Ok(l)) => {
                seen += &l;
                seen.push('\n');
                if l.starts_with(&format!("sillage {what} ·")) {
                    break;
                }
            }
            _ => panic!("{what} ended before its first progress line:\n{seen}"),
        }
    }
    // SAFETY: kill(2) with the child's pid and a valid signal number.
    let rc = unsafe { libc::kill(child.id() as i32, sig) };
    assert_eq!(rc, 0);
    for l in lines.map_while(Result::ok) {
        seen += &l;
        seen.push('\n');
    }
    let status = child.wait().expect("waits");
    (seen, status.code())
}

#[test]
fn sigint_during_replay_closes_the_bag_and_writes_an_interrupted_summary() {
    let dir = tmp("replay");
    let input = dir.join("in");
    long_bag(&input, 1200.0);
    let out = dir.join("out");
    let child = Command::new(env!("CARGO_BIN_EXE_sillage"))
        .args(["replay", input.to_str().expect("utf-8"), "--out", out.to_str().expect("utf-8"), "--no-plots"])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawns");
    let (stderr, code) = signal_mid_run(child, libc::SIGINT, "replay");
    assert_eq!(code, Some(130), "{stderr}");
    assert!(stderr.contains("stopped by SIGINT"), "{stderr}");
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    let why = s["interrupted"].as_str().unwrap_or("");
    assert!(why.contains("SIGINT"), "{why}");
    let injected = s["injected"].as_u64().expect("count");
    let total = 1200 * (100 + 10 + 50);
    assert!(injected > 0 && injected < total, "injected {injected} of {total}");
    // The output bag is closed: its summary section is there (indexed reading, no warning) and
    // metadata.yaml counts what the file holds.
    let b = Bag::open(out.join("bag")).expect("opens");
    assert!(b.warnings.is_empty(), "{:?}", b.warnings);
    let mut it = b.messages(&ReadOptions { strict: true, ..Default::default() }).expect("reads");
    let mut n = 0u64;
    for m in it.by_ref() {
        m.expect("message");
        n += 1;
    }
    assert!(it.report().warnings.is_empty(), "{:?}", it.report().warnings);
    let meta = &b.metadata[0].1;
    assert_eq!(meta.message_count, n);
    // rosbags (an independent reader of rosbag2 folders) opens it and counts the same.
    if let Ok(venv) = std::env::var("SILLAGE_VENV") {
        let py = Path::new(&venv).join("bin/python");
        let script = "import sys\nfrom rosbags.rosbag2 import Reader\nwith Reader(sys.argv[1]) as r:\n    print(sum(1 for _ in r.messages()), r.message_count)\n";
        let o = Command::new(py).args(["-c", script, out.join("bag").to_str().expect("utf-8")]).output().expect("python runs");
        assert!(o.status.success(), "rosbags: {}", String::from_utf8_lossy(&o.stderr));
        let text = String::from_utf8_lossy(&o.stdout);
        assert_eq!(text.trim(), format!("{n} {n}"), "rosbags read {text}");
    } else {
        eprintln!("SILLAGE_VENV not set: the rosbags read-back is skipped");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sigterm_during_sim_keeps_the_finished_episodes() {
    let out = tmp("sim");
    let scenario = repo().join("config/scenarios/demo.yaml");
    let child = Command::new(env!("CARGO_BIN_EXE_sillage"))
        .args(["sim", scenario.to_str().expect("utf-8"), "--episodes", "60", "--jobs", "2", "--time-limit", "8", "--no-plots", "--out", out.to_str().expect("utf-8")])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawns");
    let (stderr, code) = signal_mid_run(child, libc::SIGTERM, "sim");
    assert_eq!(code, Some(143), "{stderr}");
    let text = std::fs::read_to_string(out.join("summary.txt")).expect("summary.txt");
    let line = text.lines().find(|l| l.starts_with("INTERRUPTED: ")).unwrap_or_else(|| panic!("{text}"));
    assert!(line.contains("SIGTERM"), "{line}");
    let episodes: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("episodes.json")).expect("episodes")).expect("json");
    let n = episodes.as_array().map_or(0, Vec::len);
    assert!((6..60).contains(&n), "{n} episodes kept");
    assert!(line.contains(&format!("{n} of 60 episodes")), "{line}");
    // The episodes kept are 0..n, in order.
    for (i, e) in episodes.as_array().into_iter().flatten().enumerate() {
        assert_eq!(e["spec"]["index"].as_u64(), Some(i as u64));
    }
    let _ = std::fs::remove_dir_all(&out);
}

#[test]
fn sigint_during_tune_keeps_the_finished_cases_and_a_rerun_resumes() {
    let dir = tmp("tune");
    std::fs::create_dir_all(&dir).expect("dir");
    let scenario = repo().join("config/scenarios/demo.yaml");
    let sweep = dir.join("sweep.yaml");
    std::fs::write(
        &sweep,
        format!(
            "name: interrupted\ndesign: {{kind: grid}}\nparameters:\n  - {{key: arbiter.surge.speed, min: 0.15, max: 0.35, steps: 5}}\n\
             evaluate:\n  scenarios: [{}]\n  seeds: 8\n  time_limit: 6.0\nobjective:\n  - {{metric: success, stat: rate, weight: 1.0}}\n",
            scenario.display()
        ),
    )
    .expect("sweep");
    let out = dir.join("out");
    let run = || {
        Command::new(env!("CARGO_BIN_EXE_sillage"))
            .args(["tune", sweep.to_str().expect("utf-8"), "--jobs", "2", "--no-plots", "--out", out.to_str().expect("utf-8")])
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .expect("spawns")
    };
    let (stderr, code) = signal_mid_run(run(), libc::SIGINT, "tune");
    assert_eq!(code, Some(130), "{stderr}");
    let text = std::fs::read_to_string(out.join("summary.txt")).expect("summary.txt");
    assert!(text.starts_with("INTERRUPTED: ") && text.contains("SIGINT") && text.contains("of the shard's 40 cases"), "{text}");
    let done = std::fs::read_to_string(out.join("results.jsonl")).expect("results").lines().count();
    assert!((4..40).contains(&done), "{done} cases kept");
    assert!(out.join("ranking.csv").is_file());
    // The same command resumes: it skips what is there and finishes the rest.
    let o = Command::new(env!("CARGO_BIN_EXE_sillage"))
        .args(["tune", sweep.to_str().expect("utf-8"), "--jobs", "2", "--no-plots", "--quiet", "--out", out.to_str().expect("utf-8")])
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(String::from_utf8_lossy(&o.stderr).contains(&format!("{done} already done")), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(std::fs::read_to_string(out.join("results.jsonl")).expect("results").lines().count(), 40);
    let _ = std::fs::remove_dir_all(&dir);
}
