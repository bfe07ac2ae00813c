//! The stack as the simulator runs it: `sillage_stack::add_stack` with the user's parameter file
//! (or the defaults), then the robot description taken from the scenario and an optional
//! strategy override, merged into the parameters before any node is built.
//!
//! Geometry from the scenario (it is the truth about the simulated robot, so it always wins
//! over the parameter file): the bearing decoder's `channel_names`, `sensors.{names, x, y}`
//! (chemical channel positions in base_link) and `wind.anemometer_{x, y}`; the arbiter's
//! `base` (diff_drive / holonomic) and, with a laser, `obstacle.scan_yaw` (the mount yaw).
//! With `ablate_odor_cues` the arbiter's `cues.use_bearing` and `cues.use_posterior` are set
//! to false: the behaviour then sees the wind and the contact decision only.
//! The effective parameters of every node can be written out ([`effective_params_text`]) so
//! that `sillage replay --params` rebuilds the very same graph.

use crate::error::SimError;
use serde_yaml::{Mapping, Value};
use sillage_core::executor::{resolve_topic, Executor, Placement};
use sillage_core::time::SECOND;
use sillage_stack::{add_stack, node_fqn, NodeKind, StackConfig};
use sillage_world::robot::DriveKind;
use sillage_world::Scenario;

/// How to build the stack for the simulator.
#[derive(Debug, Clone, Default)]
pub struct StackSetup {
    /// Namespace, parameter file, remaps and nodes (as for `sillage replay`).
    pub config: StackConfig,
    /// Arbiter strategy replacing the file's (`cast_surge`, `zigzag`, `spiral`, `reactive`).
    pub strategy: Option<String>,
    /// Remove the odor direction cues from the arbiter (the ablation; see the module docs).
    pub ablate_odor_cues: bool,
}

/// A built stack: the executor (diagnostics at 1 Hz, clock not started) and where its nodes are.
pub struct BuiltStack {
    /// The executor holding the stack.
    pub executor: Executor,
    /// Executor index of each configured node, with its kind.
    pub nodes: Vec<(NodeKind, usize)>,
    /// Executor index of the arbiter.
    pub arbiter: usize,
    /// The type the arbiter publishes on `cmd_vel`.
    pub cmd_vel_type: &'static str,
}

fn map(pairs: Vec<(&str, Value)>) -> Value {
    let mut m = Mapping::new();
    for (k, v) in pairs {
        m.insert(Value::from(k), v);
    }
    Value::Mapping(m)
}

fn floats(v: impl Iterator<Item = f64>) -> Value {
    Value::Sequence(v.map(Value::from).collect())
}

/// The parameter changes that describe the scenario's robot to each node kind.
pub fn geometry_overrides(s: &Scenario) -> Vec<(NodeKind, Value)> {
    let ch = &s.sensors.channels;
    let names = Value::Sequence(ch.iter().map(|c| Value::from(c.name.as_str())).collect());
    let bearing = map(vec![
        ("channel_names", names.clone()),
        (
            "sensors",
            map(vec![("names", names), ("x", floats(ch.iter().map(|c| c.position[0]))), ("y", floats(ch.iter().map(|c| c.position[1])))]),
        ),
        ("wind", map(vec![("anemometer_x", Value::from(s.anemometer.position[0])), ("anemometer_y", Value::from(s.anemometer.position[1]))])),
    ]);
    let base = match s.robot.drive {
        DriveKind::DiffDrive => "diff_drive",
        DriveKind::Holonomic => "holonomic",
    };
    let anemometer = map(vec![("anemometer_x", Value::from(s.anemometer.position[0])), ("anemometer_y", Value::from(s.anemometer.position[1]))]);
    let mut arbiter = vec![("base", Value::from(base)), ("wind", anemometer)];
    if let Some(l) = &s.laser {
        arbiter.push(("obstacle", map(vec![("scan_yaw", Value::from(l.mount[2]))])));
    }
    vec![(NodeKind::BearingDecoder, bearing), (NodeKind::Arbiter, map(arbiter))]
}

/// Merges the dotted leaves of `overrides` into the nested parameter map `params`.
fn merged(params: Value, overrides: &Value) -> Value {
    sillage_core::params::flatten(overrides).into_iter().fold(params, |acc, (key, v)| sillage_core::params::set_key(&acc, &key, v))
}

/// Builds the stack of `setup` for `scenario` (see the module docs): every node's parameters
/// are read from the parameter file (or the defaults), the overrides are merged in, and each
/// node is then built from that merged parameter text, exactly as `sillage replay --params`
/// builds it from [`effective_params_text`].
pub fn build_stack(setup: &StackSetup, scenario: &Scenario) -> Result<BuiltStack, SimError> {
    let cfg = &setup.config;
    let mut probe = Executor::new();
    let idx = add_stack(&mut probe, cfg)?;
    let nodes: Vec<(NodeKind, usize)> = cfg.nodes.iter().copied().zip(idx).collect();
    let mut overrides = geometry_overrides(scenario);
    if let Some(name) = &setup.strategy {
        overrides.push((NodeKind::Arbiter, map(vec![("strategy", Value::from(name.as_str()))])));
    }
    if setup.ablate_odor_cues {
        let off = map(vec![("use_bearing", Value::from(false)), ("use_posterior", Value::from(false))]);
        overrides.push((NodeKind::Arbiter, map(vec![("cues", off)])));
    }
    let mut doc = Mapping::new();
    for (kind, i) in &nodes {
        let mut params = probe.node(*i).map(|n| n.params_yaml()).unwrap_or(Value::Null);
        for (_, v) in overrides.iter().filter(|(k, _)| k == kind) {
            params = merged(params, v);
        }
        doc.insert(Value::from(node_fqn(*kind, &cfg.namespace)), map(vec![("ros__parameters", params)]));
    }
    let text = serde_yaml::to_string(&Value::Mapping(doc)).unwrap_or_default();
    let mut ex = Executor::new();
    ex.enable_diagnostics(SECOND).map_err(|error| SimError::Executor { episode: 0, error })?;
    let placement = Placement { namespace: cfg.namespace.clone(), name: None, remaps: cfg.remaps.clone() };
    let mut built_nodes = Vec::new();
    for (kind, _) in &nodes {
        let fqn = node_fqn(*kind, &cfg.namespace);
        let core = kind.build_from_str(Some(&text), "(parameters with the scenario's geometry and the strategy override)", &fqn).map_err(|e| {
            let what = match (setup.strategy.is_some(), setup.ablate_odor_cues) {
                (false, false) => "robot geometry from the scenario",
                (true, false) => "robot geometry from the scenario or strategy",
                (_, true) => "robot geometry from the scenario, strategy or cue ablation",
            };
            match e {
                sillage_core::params::ParamFileError::Param { error, .. } => SimError::Override { node: fqn.clone(), what: what.into(), error },
                other => SimError::Stack(other.into()),
            }
        })?;
        let i = ex.add_placed(core, &placement).map_err(|e| SimError::Stack(e.into()))?;
        built_nodes.push((*kind, i));
    }
    let arbiter = built_nodes.iter().find(|(k, _)| *k == NodeKind::Arbiter).map(|(_, i)| *i).ok_or(SimError::MissingNode("arbiter"))?;
    let topic = resolve_topic("cmd_vel", &cfg.namespace, NodeKind::Arbiter.name());
    let cmd_vel_type = ex.topic_type(&topic).ok_or(SimError::MissingNode("arbiter"))?;
    Ok(BuiltStack { executor: ex, nodes: built_nodes, arbiter, cmd_vel_type })
}

fn sections_text(ex: &Executor, nodes: &[(NodeKind, usize)], namespace: &str, extra: &[(&str, Value)]) -> String {
    let mut doc = Mapping::new();
    let mut section = |key: String, params: Value| {
        doc.insert(Value::from(key), map(vec![("ros__parameters", params)]));
    };
    for (kind, i) in nodes {
        if let Some(n) = ex.node(*i) {
            section(node_fqn(*kind, namespace), n.params_yaml());
        }
    }
    for (key, v) in extra {
        section((*key).to_string(), v.clone());
    }
    serde_yaml::to_string(&Value::Mapping(doc)).unwrap_or_default()
}

/// A ROS 2 parameter file with the current parameters of every node of `built` (keyed by the
/// fully qualified node name), plus `extra` sections (e.g. the world node's).
pub fn effective_params_text(built: &BuiltStack, namespace: &str, extra: &[(&str, Value)]) -> String {
    let body = sections_text(&built.executor, &built.nodes, namespace, extra);
    format!(
        "# Effective parameters of a `sillage sim` run: the parameter file, the robot geometry of the\n\
         # scenario and the strategy override applied. `sillage replay BAG --params THIS_FILE` rebuilds\n\
         # the same graph.\n{body}"
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> Scenario {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
        Scenario::from_path(&path).unwrap_or_else(|e| panic!("{e}"))
    }

    #[test]
    fn geometry_and_strategy_reach_the_nodes() {
        let s = demo();
        let setup = StackSetup { strategy: Some("reactive".into()), ..Default::default() };
        let b = build_stack(&setup, &s).expect("builds");
        let a = b.executor.node(b.arbiter).expect("arbiter").params_yaml();
        assert_eq!(a["strategy"], Value::from("reactive"));
        assert_eq!(a["base"], Value::from("diff_drive"));
        let (_, bi) = *b.nodes.iter().find(|(k, _)| *k == NodeKind::BearingDecoder).expect("decoder");
        let d = b.executor.node(bi).expect("decoder").params_yaml();
        // demo.yaml: left at (0.15, 0.12), right at (0.15, -0.12) in base_link.
        assert_eq!(d["sensors"]["y"], floats([0.12, -0.12].into_iter()));
        assert_eq!(d["sensors"]["x"], floats([0.15, 0.15].into_iter()));
        assert_eq!(b.cmd_vel_type, "geometry_msgs/msg/TwistStamped");
        let text = effective_params_text(&b, "", &[]);
        assert!(text.contains("/arbiter:") && text.contains("ros__parameters") && text.contains("reactive"), "{text}");
        assert_eq!(a["cues"]["use_bearing"], Value::from(true));
    }

    #[test]
    fn the_ablation_turns_the_direction_cues_off() {
        let setup = StackSetup { ablate_odor_cues: true, ..Default::default() };
        let b = build_stack(&setup, &demo()).expect("builds");
        let a = b.executor.node(b.arbiter).expect("arbiter").params_yaml();
        assert_eq!(a["cues"]["use_bearing"], Value::from(false));
        assert_eq!(a["cues"]["use_posterior"], Value::from(false));
        assert_eq!(a["strategy"], Value::from("cast_surge"));
    }

    #[test]
    fn an_unknown_strategy_is_refused_with_the_node_named() {
        let setup = StackSetup { strategy: Some("teleport".into()), ..Default::default() };
        let e = build_stack(&setup, &demo()).err().expect("refused");
        let m = e.to_string();
        assert!(m.contains("/arbiter") && m.contains("strategy"), "{m}");
    }
}
