//! The shipped bag sweep (config/sweeps/demo_bag.yaml) as its comments tell: `sillage check`
//! accepts it before the bags exist, bags recorded by `sillage sim --record` make it run, and
//! shards merged rank like one run; a sweep may mix a scenario and a bag. A broken bag key
//! fails the check, naming the key.

use std::path::{Path, PathBuf};
use std::process::Command;

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..")
}

/// Runs `sillage ARGS` in `dir`; (success, stdout + stderr).
fn sillage(dir: &Path, args: &[&str]) -> (bool, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_sillage")).args(args).current_dir(dir).output().expect("runs sillage");
    (out.status.success(), format!("{}{}", String::from_utf8_lossy(&out.stdout), String::from_utf8_lossy(&out.stderr)))
}

/// A copy of the files the demo sweep names, in a tree of the same shape.
fn tree(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(format!("tune-bags-{name}"));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("config/sweeps")).expect("dir");
    std::fs::create_dir_all(dir.join("config/scenarios")).expect("dir");
    for f in ["config/sweeps/demo_bag.yaml", "config/scenarios/demo.yaml", "config/sim.yaml"] {
        std::fs::copy(repo().join(f), dir.join(f)).unwrap_or_else(|e| panic!("{f}: {e}"));
    }
    dir
}

#[test]
fn the_demo_bag_sweep_checks_runs_and_merges() {
    let dir = tree("run");
    let sweep = "config/sweeps/demo_bag.yaml";
    let (ok, text) = sillage(&dir, &["check", sweep]);
    assert!(ok && text.contains("ok (sweep file)"), "checked before the bags exist:\n{text}");

    // The recording commands of the sweep's comments, with 45 s episodes to keep this short.
    for s in ["0", "1", "2"] {
        let out = format!("out/sim-demo-{s}");
        let args = ["sim", "config/scenarios/demo.yaml", "--params", "config/sim.yaml", "--episodes", "1", "--seed", s, "--record", "--out", &out, "--quiet", "--no-plots", "--time-limit", "45"];
        let (ok, text) = sillage(&dir, &args);
        assert!(ok, "sim: {text}");
    }
    let (ok, text) = sillage(&dir, &["tune", sweep, "--quiet", "--no-plots", "--out", "out/whole"]);
    assert!(ok, "tune: {text}");
    println!("{text}");
    let csv = std::fs::read_to_string(dir.join("out/whole/ranking.csv")).expect("ranking");
    let head: Vec<&str> = csv.lines().next().unwrap_or_default().split(',').collect();
    let col = |name: &str| head.iter().position(|h| *h == name).unwrap_or_else(|| panic!("no column {name}: {head:?}"));
    let rows: Vec<Vec<&str>> = csv.lines().skip(1).map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 12, "4 x 3 points");
    for r in &rows {
        let num = |name: &str| r[col(name)].parse::<f64>().unwrap_or(f64::NAN);
        assert_eq!((num("cases"), num("errors")), (3.0, 0.0), "every bag scored: {r:?}");
        let (e, c) = (num("bearing_error_mean"), num("bearing_coverage_mean"));
        assert!((0.0..=180.0).contains(&e) && c > 0.0 && c <= 1.0, "bearing error {e} deg, coverage {c}");
    }
    let best = std::fs::read_to_string(dir.join("out/whole/best_params.yaml")).expect("best params");
    assert!(best.contains("/bearing_decoder:") && best.contains("saturation"), "{best}");

    for i in 0..2 {
        let (ok, text) = sillage(&dir, &["tune", sweep, "--quiet", "--no-plots", "--shard", &format!("{i}/2"), "--out", &format!("out/s{i}")]);
        assert!(ok, "shard {i}: {text}");
    }
    let (ok, text) = sillage(&dir, &["tune", "merge", "out/s0", "out/s1", "--out", "out/merged", "--no-plots"]);
    assert!(ok, "merge: {text}");
    let read = |d: &str| std::fs::read_to_string(dir.join(d).join("ranking.json")).expect("ranking.json");
    assert_eq!(read("out/merged"), read("out/whole"), "merged shards rank like one run");

    // One sweep over a scenario and a bag: scenario metrics come from the episode, bag metrics
    // from the replay, and the score adds both.
    let mixed = "name: mixed\nbase_params: ../sim.yaml\ndesign: {kind: grid}\nparameters:\n  - {key: bearing_decoder.amplitude.saturation, values: [0.25, 1.0]}\nevaluate:\n  scenarios: [../scenarios/demo.yaml]\n  seeds: 1\n  time_limit: 20.0\n  bags: [{path: ../../out/sim-demo-0/bag, name: seed0}]\n  truth: {topic: /odom, scenario: ../scenarios/demo.yaml, warmup: 5.0}\nobjective:\n  - {metric: min_distance, stat: median, weight: -0.1}\n  - {metric: bearing_error, stat: mean, weight: -0.01}\n";
    std::fs::write(dir.join("config/sweeps/mixed.yaml"), mixed).expect("writes");
    let (ok, text) = sillage(&dir, &["tune", "config/sweeps/mixed.yaml", "--quiet", "--no-plots", "--out", "out/mixed"]);
    assert!(ok, "mixed: {text}");
    let results = std::fs::read_to_string(dir.join("out/mixed/results.jsonl")).expect("results");
    let records: Vec<serde_json::Value> = results.lines().map(|l| serde_json::from_str(l).expect("json line")).collect();
    assert_eq!(records.len(), 4, "2 points x (1 episode + 1 bag)");
    for r in &records {
        let m = &r["metrics"];
        match r["case"].as_str() {
            Some("demo#0") => assert!(m["min_distance"].is_f64() && m.get("bearing_error").is_none(), "{r}"),
            Some("seed0") => assert!(m["bearing_error"].is_f64() && m.get("min_distance").is_none(), "{r}"),
            other => panic!("unexpected case {other:?}"),
        }
    }
    let ranked: serde_json::Value = serde_json::from_str(&read("out/mixed")).expect("ranking");
    for p in ranked.as_array().expect("points") {
        let terms = p["terms"].as_array().expect("terms");
        assert!(terms.iter().all(|t| t["n"] == 1 && t["estimate"].is_f64()), "{p}");
        let sum: f64 = terms.iter().map(|t| t["weight"].as_f64().unwrap_or(0.0) * t["estimate"].as_f64().unwrap_or(0.0)).sum();
        assert!((p["score"].as_f64().unwrap_or(f64::NAN) - sum).abs() < 1e-12, "{p}");
    }
}

#[test]
fn a_broken_bag_key_fails_the_check_naming_it() {
    let dir = tree("broken");
    let path = dir.join("config/sweeps/demo_bag.yaml");
    let text = std::fs::read_to_string(&path).expect("sweep");
    for (from, to, want) in [
        ("    topic: /odom", "    topc: /odom", "evaluate.truth: unknown field `topc`"),
        ("    warmup: 5.0", "    warmup: -5.0", "evaluate.truth.warmup: must be >= 0"),
        ("name: seed1}", "name: seed1, duration: 0.0}", "evaluate.bags[1].duration: must be > 0"),
        ("values: [0.25, 0.5, 0.75, 1.0]", "values: [0.25, 2.0]", "amplitude.saturation"),
    ] {
        assert!(text.contains(from), "{from}");
        std::fs::write(&path, text.replace(from, to)).expect("writes");
        let (ok, out) = sillage(&dir, &["check", "config/sweeps/demo_bag.yaml"]);
        assert!(!ok && out.contains(want), "want '{want}':\n{out}");
    }
}
