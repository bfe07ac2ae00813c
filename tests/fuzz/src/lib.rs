//! Bodies of the fuzz targets added beside sillage-bag's own (`cdr_decode`, `mcap_reader`,
//! whose bodies live in `sillage_bag::fuzzing`), shared by the libFuzzer targets in
//! `fuzz_targets/` and by the coverage-free mutation driver (`examples/drive.rs`) used where
//! libFuzzer cannot run. Each takes arbitrary bytes and must return (typed errors are fine);
//! a panic, a hang or an unbounded allocation is a finding.

use sillage_core::msg::{ChemSample, Header, Odometry, Vector3, Vector3Stamped};
use sillage_core::{Msg, Nanos};
use sillage_stack::NodeKind;
use std::path::PathBuf;

/// A file path private to this process (in /dev/shm when it exists: no disk writes).
fn scratch(name: &str) -> PathBuf {
    let dir = if std::path::Path::new("/dev/shm").is_dir() { PathBuf::from("/dev/shm") } else { std::env::temp_dir() };
    dir.join(format!("sillage-fuzz-{}-{name}", std::process::id()))
}

/// The bytes as a sqlite3 bag file (`.db3`): opened with `Bag::open`, summarised with
/// `bag_info`, and read to the end (at most 100 000 messages), every known type decoded.
pub fn sqlite_reader(data: &[u8]) {
    let path = scratch("fuzz.db3");
    if std::fs::write(&path, data).is_err() {
        return;
    }
    if let Ok(bag) = sillage_bag::Bag::open(&path) {
        let _ = sillage_bag::bag_info(&bag);
        if let Ok(messages) = bag.messages(&sillage_bag::ReadOptions::default()) {
            for m in messages.take(100_000) {
                if m.is_err() {
                    break;
                }
            }
        }
    }
    let _ = std::fs::remove_file(&path);
}

/// The bytes (as UTF-8) as a ROS 2 parameter file: every node kind built from it, under its
/// bare and a namespaced name; a node that builds also takes the parsed YAML as a run-time
/// change of each node's own `ros__parameters`.
pub fn params_text(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else { return };
    for kind in NodeKind::ALL {
        for fqn in [format!("/{}", kind.name()), format!("/robot1/{}", kind.name())] {
            if let Ok(mut node) = kind.build_from_str(Some(text), "fuzz.yaml", &fqn) {
                if let Ok(serde_yaml::Value::Mapping(m)) = serde_yaml::from_str::<serde_yaml::Value>(text) {
                    for (_, section) in m {
                        if let Some(p) = section.get("ros__parameters") {
                            let _ = node.set_params_yaml(p);
                        }
                    }
                }
            }
        }
    }
}

/// Structure-aware parameters: byte 0 picks a node kind, bytes 1-2 one of its parameters
/// (dotted key of the defaults), the rest (UTF-8) is the new value as YAML. When the node
/// accepts the value, a short scripted input (2 s of chem at 50 Hz, wind, odometry) runs the
/// whole stack with it: a value that validates must not make a node panic or hang.
pub fn params_values(data: &[u8]) {
    let [kind_byte, k0, k1, rest @ ..] = data else { return };
    let Ok(value_text) = std::str::from_utf8(rest) else { return };
    let Ok(value) = serde_yaml::from_str::<serde_yaml::Value>(value_text) else { return };
    let kind = NodeKind::ALL[*kind_byte as usize % NodeKind::ALL.len()];
    let defaults = kind.default_params();
    let keys = sillage_core::params::flatten(&defaults);
    if keys.is_empty() {
        return;
    }
    let (key, _) = &keys[usize::from(u16::from_le_bytes([*k0, *k1])) % keys.len()];
    let changed = sillage_core::params::set_key(&defaults, key, value);
    let mut ros = serde_yaml::Mapping::new();
    ros.insert("ros__parameters".into(), changed);
    let mut file = serde_yaml::Mapping::new();
    file.insert(kind.name().into(), serde_yaml::Value::Mapping(ros));
    let Ok(text) = serde_yaml::to_string(&file) else { return };
    if kind.build_from_str(Some(&text), "fuzz.yaml", &format!("/{}", kind.name())).is_err() {
        return;
    }
    let path = scratch("params.yaml");
    if std::fs::write(&path, &text).is_err() {
        return;
    }
    let cfg = sillage_stack::StackConfig { params_file: Some(path.clone()), ..Default::default() };
    let built = sillage_stack::build(&cfg);
    let _ = std::fs::remove_file(&path);
    let Ok(mut ex) = built else { return };
    let mut sink = |_: &sillage_core::executor::Record| {};
    for (t, topic, msg) in scripted_inputs() {
        if ex.run_until(t, &mut sink).is_err() || ex.inject(t, topic, msg).is_err() {
            return;
        }
    }
}

/// Two seconds of inputs: chem (two channels, a rising pulse) at 50 Hz, odometry at 50 Hz,
/// wind at 10 Hz.
pub fn scripted_inputs() -> Vec<(Nanos, &'static str, Msg)> {
    let t0: Nanos = 1_000_000_000_000;
    let mut out = Vec::new();
    for k in 0..100i64 {
        let t = t0 + k * 20_000_000;
        let s = k as f64 * 0.02;
        let pulse = if (0.8..1.2).contains(&s) { 0.5 } else { 0.0 };
        let chem = ChemSample {
            header: Header::new(t, "chem_link"),
            channels: vec!["left".into(), "right".into()],
            values: vec![40_000.0 * (1.0 - pulse) + k as f64, 38_000.0 * (1.0 - 0.8 * pulse) - k as f64],
            quantity: ChemSample::RESISTANCE,
        };
        out.push((t, "/chem", chem.into()));
        out.push((t + 1, "/odom", Odometry { header: Header::new(t, "odom"), child_frame_id: "base_link".into(), ..Default::default() }.into()));
        if k % 5 == 0 {
            out.push((t + 2, "/wind", Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: 0.5, y: 0.1, z: 0.0 } }.into()));
        }
    }
    out
}

/// The bytes (as UTF-8) as a simulation scenario; a scenario that loads builds a world
/// (seed 1, first start) that steps five times by 50 ms.
pub fn scenario_text(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let Ok(scenario) = sillage_world::Scenario::from_yaml_str(text, "fuzz.yaml") else { return };
    if let Ok(mut world) = sillage_world::World::new(&scenario, 1, 0) {
        for _ in 0..5 {
            world.step(0.05);
        }
    }
}
