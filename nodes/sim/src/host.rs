//! Building the world node from ROS-style parameters, for hosts that read their parameters
//! from a parameter file (the r2r binary `sillage_world`, `sillage check`): the `scenario`
//! parameter names the scenario file, which is read here, once, at start-up.

use crate::params::WorldParams;
use crate::world_node::WorldNode;
use sillage_core::params::{self, ParamError, ParamFileError};
use std::path::Path;

/// The world node of the nested parameters `value` (keys not given keep their defaults):
/// validates them, reads and validates the scenario file they name. `source` names where the
/// values came from and `node` the node, for errors; every error names the key (`scenario`
/// for a missing, unreadable or invalid scenario file, with the file's own message).
pub fn build_world_node(value: &serde_yaml::Value, node: &str, source: &str) -> Result<WorldNode, ParamFileError> {
    let wrap = |error: ParamError| ParamFileError::Param { file: source.to_string(), node: node.to_string(), error };
    let p: WorldParams = params::from_value(value).map_err(wrap)?;
    if p.scenario.trim().is_empty() {
        return Err(wrap(ParamError::Invalid {
            key: "scenario".into(),
            reason: "required: the path of a scenario file (config/scenarios/*.yaml)".into(),
        }));
    }
    let scenario = sillage_world::Scenario::from_path(Path::new(&p.scenario))
        .map_err(|e| wrap(ParamError::Invalid { key: "scenario".into(), reason: e.to_string() }))?;
    WorldNode::new(&scenario, p).map_err(|e| wrap(ParamError::Invalid { key: "scenario".into(), reason: e.to_string() }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::NodeCore;

    fn value(text: &str) -> serde_yaml::Value {
        serde_yaml::from_str(text).expect("yaml")
    }

    fn demo_path() -> String {
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml").display().to_string()
    }

    #[test]
    fn builds_from_a_scenario_path_and_keeps_the_values() {
        let node = build_world_node(&value(&format!("scenario: {}\nseed: 7\nrate: 200", demo_path())), "/world", "f.yaml")
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(node.params().seed, 7);
        assert_eq!(node.params().rate, 200.0);
        assert_eq!(node.timers(), vec![5_000_000]);
        let topics: Vec<String> = node.outputs().into_iter().map(|p| p.topic).collect();
        assert!(topics.iter().any(|t| t == "/clock") && topics.iter().any(|t| t == "chem"), "{topics:?}");
    }

    #[test]
    fn errors_name_the_file_the_node_and_the_key() {
        let e = build_world_node(&value("seed: 1"), "/r1/world", "p.yaml").err().expect("no scenario");
        let m = e.to_string();
        assert!(m.starts_with("p.yaml: node '/r1/world': ") && m.contains("scenario") && m.contains("required"), "{m}");
        let e = build_world_node(&value("scenario: /no/such/file.yaml"), "/world", "p.yaml").err().expect("missing file");
        let m = e.to_string();
        assert!(m.contains("scenario") && m.contains("/no/such/file.yaml"), "{m}");
        let e = build_world_node(&value(&format!("scenario: {}\nrate: -1", demo_path())), "/world", "p.yaml").err().expect("rate");
        assert!(e.to_string().contains("rate"), "{e}");
        let e = build_world_node(&value(&format!("scenario: {}\nrated: 1", demo_path())), "/world", "p.yaml").err().expect("unknown");
        assert!(e.to_string().contains("rated"), "{e}");
    }

    #[test]
    fn an_invalid_scenario_file_is_refused_with_its_own_message() {
        let dir = std::env::temp_dir().join(format!("sillage-host-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("dir");
        let bad = dir.join("bad.yaml");
        std::fs::write(&bad, "arena: [1, 2\n").expect("write");
        let e = build_world_node(&value(&format!("scenario: {}", bad.display())), "/world", "p.yaml").err().expect("bad");
        assert!(e.to_string().contains("bad.yaml"), "{e}");
        let _ = std::fs::remove_dir_all(&dir);
    }
}
