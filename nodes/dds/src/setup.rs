//! From a [`RunConfig`] to hosted node cores and a clock mode: parameter files, `-p` rules,
//! namespaces, remaps and `use_sim_time`, read as the r2r executor reads them.
//!
//! rcl loads a ROS node's start-up parameters for the r2r executor; here
//! [`startup_params`] does the same without ROS: every `--params-file` in order, the sections
//! that select the node (`/**`, `**`, bare or fully qualified name, merged by
//! `sillage_core::params::section_for`, the keys r2r matches), flattened to dotted ROS
//! parameters, then every `-p name:=value`; a later value wins. The cores are then built by
//! the r2r executor's own [`NodeRuntime::start`] (which validates them and ignores ROS's own
//! parameters such as `use_sim_time`).
//!
//! All nodes of one process share one clock: `--use-sim-time`, or `use_sim_time: true` for
//! any node, turns simulated time on; nodes that disagree are refused.

use crate::args::RunConfig;
use crate::clock::ClockMode;
use crate::error::DdsError;
use serde_yaml::Value;
use sillage_core::executor::Placement;
use sillage_core::params::{section_for, ParamFileError};
use sillage_ros2::names::node_fqn;
use sillage_ros2::param_value::to_flat;
use sillage_ros2::{NodeRuntime, NodeSpec, ParamValue};
use std::collections::HashMap;

/// One hosted node core with its place in the graph.
pub struct PlacedNode {
    /// The core behind the r2r executor's byte interface.
    pub runtime: NodeRuntime,
    /// Namespace, name and remaps.
    pub placement: Placement,
}

/// Everything the executor runs.
pub struct Setup {
    /// The nodes, upstream first.
    pub nodes: Vec<PlacedNode>,
    /// The process's clock.
    pub clock: ClockMode,
}

/// Parameter files, each read once.
#[derive(Default)]
pub struct ParamFiles {
    docs: HashMap<String, Value>,
}

impl ParamFiles {
    fn doc(&mut self, file: &str) -> Result<&Value, ParamFileError> {
        if !self.docs.contains_key(file) {
            let text = std::fs::read_to_string(file).map_err(|source| ParamFileError::Io { file: file.to_string(), source })?;
            let doc: Value =
                serde_yaml::from_str(&text).map_err(|e| ParamFileError::Yaml { file: file.to_string(), reason: e.to_string() })?;
            self.docs.insert(file.to_string(), doc);
        }
        Ok(&self.docs[file])
    }
}

fn set(flat: &mut Vec<(String, ParamValue)>, key: String, v: ParamValue) {
    match flat.iter_mut().find(|(k, _)| *k == key) {
        Some(slot) => slot.1 = v,
        None => flat.push((key, v)),
    }
}

/// The flat start-up parameters of node `fqn` (see the module docs).
pub fn startup_params(cfg: &RunConfig, files: &mut ParamFiles, fqn: &str) -> Result<Vec<(String, ParamValue)>, DdsError> {
    let mut flat = Vec::new();
    for file in &cfg.ros.params_files {
        let section = section_for(files.doc(file)?, file, fqn)?;
        let values = to_flat(&section).map_err(|e| DdsError::BadArgument { arg: format!("--params-file {file}"), reason: e.to_string() })?;
        for (k, v) in values {
            set(&mut flat, k, v);
        }
    }
    for (k, text) in &cfg.ros.params {
        let arg = format!("-p {k}:={text}");
        let yaml: Value = serde_yaml::from_str(text).map_err(|e| DdsError::BadArgument { arg: arg.clone(), reason: e.to_string() })?;
        let v = ParamValue::from_yaml(k, &yaml).map_err(|e| DdsError::BadArgument { arg, reason: e.to_string() })?;
        set(&mut flat, k.clone(), v);
    }
    Ok(flat)
}

/// Where the start-up parameters came from, for error messages.
pub fn params_source(cfg: &RunConfig) -> String {
    let mut parts: Vec<String> = cfg.ros.params_files.clone();
    if !cfg.ros.params.is_empty() {
        parts.push("-p".into());
    }
    if parts.is_empty() {
        "(defaults)".into()
    } else {
        parts.join(", ")
    }
}

/// The `use_sim_time` of a node's flat parameters.
pub fn use_sim_time(flat: &[(String, ParamValue)], fqn: &str) -> Result<Option<bool>, DdsError> {
    match flat.iter().find(|(k, _)| k == "use_sim_time").map(|(_, v)| v) {
        None | Some(ParamValue::NotSet) => Ok(None),
        Some(ParamValue::Bool(b)) => Ok(Some(*b)),
        Some(other) => Err(DdsError::UseSimTime { node: fqn.to_string(), found: other.display() }),
    }
}

/// Hosts one node: its placement, start-up parameters and core; also returns its
/// `use_sim_time`.
pub fn host(spec: &NodeSpec, cfg: &RunConfig, files: &mut ParamFiles) -> Result<(PlacedNode, Option<bool>), DdsError> {
    let placement = cfg.ros.placement(&spec.name, &cfg.namespace);
    let fqn = node_fqn(&placement, &spec.name);
    let flat = startup_params(cfg, files, &fqn)?;
    let sim = use_sim_time(&flat, &fqn)?;
    let runtime = NodeRuntime::start(spec, &fqn, &flat, &params_source(cfg))?;
    Ok((PlacedNode { runtime, placement }, sim))
}

/// Hosts `specs` and decides the clock.
pub fn build_specs(specs: &[NodeSpec], cfg: &RunConfig) -> Result<Setup, DdsError> {
    let mut files = ParamFiles::default();
    let mut nodes = Vec::new();
    let mut sim: Option<(bool, String)> = None;
    for spec in specs {
        let (placed, v) = host(spec, cfg, &mut files)?;
        if let Some(v) = v {
            let fqn = placed.runtime.fqn().to_string();
            match &sim {
                Some((other, who)) if *other != v => {
                    return Err(DdsError::BadArgument {
                        arg: params_source(cfg),
                        reason: format!("use_sim_time is {other} for {who} but {v} for {fqn}: one process has one clock"),
                    })
                }
                _ => sim = Some((v, fqn)),
            }
        }
        nodes.push(placed);
    }
    let simulated = cfg.use_sim_time || sim.is_some_and(|(v, _)| v);
    Ok(Setup { nodes, clock: if simulated { ClockMode::Simulated } else { ClockMode::System } })
}

/// Hosts the configured stack nodes and decides the clock.
pub fn build(cfg: &RunConfig) -> Result<Setup, DdsError> {
    let specs: Vec<NodeSpec> = cfg.nodes.iter().map(|&k| NodeSpec::of_kind(k)).collect();
    build_specs(&specs, cfg)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cfg(argv: &[&str]) -> RunConfig {
        RunConfig::from_argv(std::iter::once("sillage_dds").chain(argv.iter().copied()), None).expect("valid")
    }

    fn write(name: &str, text: &str) -> String {
        let dir = std::env::temp_dir().join(format!("sillage-dds-setup-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("temp dir");
        let p = dir.join(name);
        std::fs::write(&p, text).expect("writes");
        p.display().to_string()
    }

    fn names(s: &Setup) -> Vec<&str> {
        s.nodes.iter().map(|n| n.runtime.fqn()).collect()
    }

    #[test]
    fn files_then_p_rules_with_key_selection() {
        let a = write("a.yaml", "/**:\n  ros__parameters:\n    use_sim_time: false\n    rate: 4\n/robot1/arbiter:\n  ros__parameters:\n    use_sim_time: true\n    guard:\n      max_linear: 0.2\n");
        let b = write("b.yaml", "arbiter:\n  ros__parameters:\n    guard.max_angular: 0.5\n");
        let c = cfg(&["--namespace", "/robot1", "--params-file", &a, "--params-file", &b, "-p", "guard.max_linear:=0.1"]);
        let mut files = ParamFiles::default();
        let flat = startup_params(&c, &mut files, "/robot1/arbiter").expect("loads");
        let get = |k: &str| flat.iter().find(|(n, _)| n == k).map(|(_, v)| v.clone());
        assert_eq!(get("use_sim_time"), Some(ParamValue::Bool(true)), "the fully qualified section wins over /**");
        assert_eq!(get("rate"), Some(ParamValue::Integer(4)));
        assert_eq!(get("guard.max_linear"), Some(ParamValue::Double(0.1)), "-p wins over the files");
        assert_eq!(get("guard.max_angular"), Some(ParamValue::Double(0.5)));
        let enc = startup_params(&c, &mut files, "/robot1/event_encoder").expect("loads");
        assert_eq!(use_sim_time(&enc, "/robot1/event_encoder").expect("bool"), Some(false));
        assert!(use_sim_time(&[("use_sim_time".into(), ParamValue::String("yes".into()))], "/a").is_err());
    }

    #[test]
    fn use_sim_time_in_a_file_builds_the_stack_on_simulated_time() {
        let p = write("sim.yaml", "/**:\n  ros__parameters:\n    use_sim_time: true\n");
        let s = build(&cfg(&["--params-file", &p, "--namespace", "/r2"])).expect("builds");
        assert_eq!(s.clock, ClockMode::Simulated);
        assert_eq!(names(&s), vec!["/r2/event_encoder", "/r2/bearing_decoder", "/r2/plume_estimator", "/r2/arbiter", "/r2/source_mapper"]);
        assert_eq!(build(&cfg(&[])).expect("defaults").clock, ClockMode::System);
        assert_eq!(build(&cfg(&["--use-sim-time", "--node", "arbiter"])).expect("flag").clock, ClockMode::Simulated);
    }

    #[test]
    fn bad_parameters_and_split_clocks_are_refused_with_names() {
        let p = write("bad.yaml", "arbiter:\n  ros__parameters:\n    no_such_key: 1.0\n");
        let e = build(&cfg(&["--params-file", &p])).err().expect("refused");
        assert!(e.to_string().contains("no_such_key") && e.to_string().contains("/arbiter"), "{e}");
        let p = write("split.yaml", "arbiter:\n  ros__parameters:\n    use_sim_time: true\nevent_encoder:\n  ros__parameters:\n    use_sim_time: false\n");
        let e = build(&cfg(&["--params-file", &p])).err().expect("refused");
        assert!(e.to_string().contains("one clock"), "{e}");
        let e = build(&cfg(&["--params-file", "/nonexistent/p.yaml"])).err().expect("refused");
        assert!(e.to_string().contains("/nonexistent/p.yaml"), "{e}");
        let e = build(&cfg(&["-p", "rate:=[1, a]"])).err().expect("refused");
        assert!(e.to_string().contains("-p rate:="), "{e}");
    }
}
