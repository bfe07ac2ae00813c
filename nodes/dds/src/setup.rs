//! From a [`RunConfig`] to placed node cores and a clock mode: parameter files, namespaces,
//! remaps and `use_sim_time`, exactly as the other executors read them.
//!
//! `use_sim_time` is a ROS parameter of every node, not of the node cores (whose parameter
//! structs refuse unknown keys), so it is taken out of the parameter file before the cores see
//! it. Its value for a node follows the same key selection and merge order as every other
//! parameter (`sillage_core::params::selecting_keys`). All nodes of one process share one clock:
//! `--use-sim-time` or `use_sim_time: true` for any of them turns simulated time on, and nodes
//! that disagree in the file are refused.

use crate::args::{Remap, RunConfig};
use crate::clock::ClockMode;
use crate::error::DdsError;
use serde_yaml::Value;
use sillage_core::executor::{resolve_topic, Placement};
use sillage_core::params::{selecting_keys, ParamFileError};
use sillage_core::NodeCore;
use sillage_stack::NodeKind;

/// One node core with its place in the graph.
pub struct PlacedNode {
    /// Which kind of node.
    pub kind: NodeKind,
    /// The core, built from the parameter file.
    pub core: Box<dyn NodeCore>,
    /// Namespace, name and remaps.
    pub placement: Placement,
    /// Fully qualified node name (e.g. `/robot1/arbiter`).
    pub fqn: String,
}

/// Everything the executor runs.
pub struct Setup {
    /// The nodes, upstream first.
    pub nodes: Vec<PlacedNode>,
    /// The process's clock.
    pub clock: ClockMode,
}

/// `use_sim_time` values found in a parameter file: (node key, value), in file order.
pub type SimTimeKeys = Vec<(String, Value)>;

/// Removes `use_sim_time` from every `ros__parameters` section of a parsed parameter file and
/// returns what was found.
pub fn strip_use_sim_time(doc: &mut Value) -> SimTimeKeys {
    let mut found = Vec::new();
    let Value::Mapping(top) = doc else { return found };
    for (key, section) in top.iter_mut() {
        let Some(Value::Mapping(params)) = section.get_mut("ros__parameters") else { continue };
        if let Some(v) = params.remove("use_sim_time") {
            found.push((key.as_str().unwrap_or("?").to_string(), v));
        }
    }
    found
}

/// The `use_sim_time` of node `fqn` from the stripped keys (last selecting key wins).
pub fn use_sim_time_for(found: &SimTimeKeys, file: &str, fqn: &str) -> Result<Option<bool>, DdsError> {
    let mut value = None;
    for key in selecting_keys(fqn) {
        for (k, v) in found.iter().filter(|(k, _)| *k == key) {
            match v {
                Value::Bool(b) => value = Some(*b),
                other => {
                    let found = serde_yaml::to_string(other).unwrap_or_default().trim().to_string();
                    return Err(DdsError::UseSimTime { file: file.to_string(), node: k.clone(), found });
                }
            }
        }
    }
    Ok(value)
}

fn placement(cfg: &RunConfig, name: &str) -> Placement {
    let remaps = cfg
        .remaps
        .iter()
        .filter(|r: &&Remap| r.node.as_deref().is_none_or(|n| n == name))
        .map(|r| (r.from.clone(), r.to.clone()))
        .collect();
    Placement { namespace: cfg.namespace.clone(), name: None, remaps }
}

/// Builds the configured nodes and decides the clock.
pub fn build(cfg: &RunConfig) -> Result<Setup, DdsError> {
    let (text, label, found) = match &cfg.params_file {
        None => (None, "(defaults)".to_string(), Vec::new()),
        Some(path) => {
            let label = path.display().to_string();
            let raw = std::fs::read_to_string(path).map_err(|source| ParamFileError::Io { file: label.clone(), source })?;
            match serde_yaml::from_str::<Value>(&raw) {
                Ok(mut doc) => {
                    let found = strip_use_sim_time(&mut doc);
                    let text = if found.is_empty() { raw } else { serde_yaml::to_string(&doc).unwrap_or(raw) };
                    (Some(text), label, found)
                }
                // Let the parameter loader report the YAML error with its position.
                Err(_) => (Some(raw), label, Vec::new()),
            }
        }
    };
    let mut nodes = Vec::new();
    let mut sim: Option<(bool, String)> = None;
    for &kind in &cfg.nodes {
        let fqn = resolve_topic(kind.name(), &cfg.namespace, kind.name());
        let core = kind.build_from_str(text.as_deref(), &label, &fqn)?;
        if let Some(v) = use_sim_time_for(&found, &label, &fqn)? {
            match &sim {
                Some((other, who)) if *other != v => {
                    return Err(DdsError::BadArgument {
                        arg: format!("--params-file {label}"),
                        reason: format!("use_sim_time is {other} for {who} but {v} for {fqn}: one process has one clock"),
                    })
                }
                _ => sim = Some((v, fqn.clone())),
            }
        }
        nodes.push(PlacedNode { kind, core, placement: placement(cfg, kind.name()), fqn });
    }
    let simulated = cfg.use_sim_time || sim.is_some_and(|(v, _)| v);
    Ok(Setup { nodes, clock: if simulated { ClockMode::Simulated } else { ClockMode::System } })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::args::Args;
    use clap::Parser;

    fn cfg(argv: &[&str]) -> RunConfig {
        Args::try_parse_from(std::iter::once("sillage_dds").chain(argv.iter().copied()))
            .expect("parses")
            .resolve(None)
            .expect("valid")
    }

    fn write(name: &str, text: &str) -> std::path::PathBuf {
        let dir = std::env::temp_dir().join(format!("sillage-dds-setup-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("temp dir");
        let p = dir.join(name);
        std::fs::write(&p, text).expect("writes");
        p
    }

    #[test]
    fn use_sim_time_follows_key_selection_and_is_hidden_from_the_cores() {
        let text = "/**:\n  ros__parameters:\n    use_sim_time: false\n/robot1/arbiter:\n  ros__parameters:\n    use_sim_time: true\n";
        let mut doc: Value = serde_yaml::from_str(text).expect("yaml");
        let found = strip_use_sim_time(&mut doc);
        assert_eq!(found.len(), 2);
        assert!(!serde_yaml::to_string(&doc).expect("yaml").contains("use_sim_time"));
        assert_eq!(use_sim_time_for(&found, "p.yaml", "/robot1/arbiter").expect("bool"), Some(true));
        assert_eq!(use_sim_time_for(&found, "p.yaml", "/robot1/event_encoder").expect("bool"), Some(false));
        assert_eq!(use_sim_time_for(&Vec::new(), "p.yaml", "/arbiter").expect("none"), None);
        let bad = vec![("/**".to_string(), Value::from("yes"))];
        let e = use_sim_time_for(&bad, "p.yaml", "/arbiter").expect_err("not a bool");
        assert!(e.to_string().contains("p.yaml") && e.to_string().contains("yes"), "{e}");
    }

    #[test]
    fn a_file_with_use_sim_time_builds_the_stack_on_simulated_time() {
        let p = write("sim.yaml", "/**:\n  ros__parameters:\n    use_sim_time: true\n");
        let s = build(&cfg(&["--params-file", p.to_str().expect("utf-8"), "--namespace", "/r2"])).expect("builds");
        assert_eq!(s.clock, ClockMode::Simulated);
        let names: Vec<&str> = s.nodes.iter().map(|n| n.fqn.as_str()).collect();
        assert_eq!(names, vec!["/r2/event_encoder", "/r2/bearing_decoder", "/r2/plume_estimator", "/r2/arbiter"]);
        assert_eq!(build(&cfg(&[])).expect("defaults").clock, ClockMode::System);
        assert_eq!(build(&cfg(&["--use-sim-time", "--node", "arbiter"])).expect("flag").clock, ClockMode::Simulated);
    }

    #[test]
    fn node_specific_remaps_reach_only_their_node_and_bad_keys_are_named() {
        let s = build(&cfg(&["-r", "arbiter:odom:=/ekf/odom", "-r", "wind:=/anemometer"])).expect("builds");
        for n in &s.nodes {
            let has_odom = n.placement.remaps.iter().any(|(f, _)| f == "odom");
            assert_eq!(has_odom, n.kind == NodeKind::Arbiter, "{}", n.fqn);
            assert!(n.placement.remaps.iter().any(|(f, t)| f == "wind" && t == "/anemometer"));
        }
        let p = write("bad.yaml", "arbiter:\n  ros__parameters:\n    use_sim_time: true\n    no_such_key: 1.0\n");
        let e = build(&cfg(&["--params-file", p.to_str().expect("utf-8")])).err().expect("refused");
        assert!(e.to_string().contains("no_such_key"), "{e}");
        let p = write("split.yaml", "arbiter:\n  ros__parameters:\n    use_sim_time: true\nevent_encoder:\n  ros__parameters:\n    use_sim_time: false\n");
        let e = build(&cfg(&["--params-file", p.to_str().expect("utf-8")])).err().expect("refused");
        assert!(e.to_string().contains("one clock"), "{e}");
    }
}
