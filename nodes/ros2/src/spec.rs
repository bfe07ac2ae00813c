//! [`NodeSpec`]: how an executor builds one node core from parameters, so the ROS 2 executor
//! can host any core (the four stack nodes through [`NodeKind`], later the simulated world).

use serde_yaml::{Mapping, Value};
use sillage_core::params::ParamFileError;
use sillage_core::NodeCore;
use sillage_stack::NodeKind;
use std::sync::Arc;

/// Parameters a ROS node has that no node core knows: they are ROS's own, read at start-up
/// by rcl/r2r, and never passed to a core.
pub const RESERVED_PARAMS: &[&str] = &["use_sim_time"];

/// Whether `key` is one of ROS's own parameters ([`RESERVED_PARAMS`], or QoS overrides,
/// `qos_overrides.<topic>...`, which rclcpp reads at start-up).
pub fn is_reserved(key: &str) -> bool {
    RESERVED_PARAMS.contains(&key) || key.starts_with("qos_overrides.")
}

/// Builds a core from its nested `ros__parameters` (keys not given keep their defaults) for
/// the fully qualified node name; `source` names where the values came from, for errors.
pub type BuildFn = dyn Fn(&Value, &str, &str) -> Result<Box<dyn NodeCore>, ParamFileError> + Send + Sync;

/// One node an executor can host.
#[derive(Clone)]
pub struct NodeSpec {
    /// Default ROS node name.
    pub name: String,
    /// The builder.
    pub build: Arc<BuildFn>,
    /// The default parameter tree (nested), which gives every parameter its ROS type.
    pub default_params: Value,
}

impl std::fmt::Debug for NodeSpec {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("NodeSpec").field("name", &self.name).finish_non_exhaustive()
    }
}

/// Parameter-file text with one section `fqn: ros__parameters: params`.
pub fn section_text(fqn: &str, params: &Value) -> String {
    let mut inner = Mapping::new();
    inner.insert(Value::from("ros__parameters"), params.clone());
    let mut top = Mapping::new();
    top.insert(Value::from(fqn), Value::Mapping(inner));
    serde_yaml::to_string(&Value::Mapping(top)).unwrap_or_default()
}

impl NodeSpec {
    /// A spec from a name and a builder (the hook for cores outside the stack registry, e.g.
    /// the simulated world node).
    pub fn new(name: &str, build: Arc<BuildFn>, default_params: Value) -> NodeSpec {
        NodeSpec { name: name.to_string(), build, default_params }
    }

    /// The spec of a stack node: built through [`NodeKind::build_from_str`], so ROS and the
    /// offline tools validate parameters the same way.
    pub fn of_kind(kind: NodeKind) -> NodeSpec {
        let build = move |params: &Value, fqn: &str, source: &str| {
            kind.build_from_str(Some(&section_text(fqn, params)), source, fqn)
        };
        NodeSpec::new(kind.name(), Arc::new(build), kind.default_params())
    }

    /// The simulated world (`sillage_sim::WorldNode`): its `scenario` parameter names the
    /// scenario file, read at start-up; it has no defaults that build (a scenario is needed).
    pub fn world() -> NodeSpec {
        let build = |params: &Value, fqn: &str, source: &str| {
            sillage_sim::build_world_node(params, fqn, source).map(|n| Box::new(n) as Box<dyn NodeCore>)
        };
        let defaults = sillage_core::params::to_value(&sillage_sim::WorldParams::default());
        NodeSpec::new(sillage_sim::NODE_NAME, Arc::new(build), defaults)
    }

    /// The core with default parameters (fails for a core that needs a parameter, like the
    /// world's `scenario`).
    pub fn defaults(&self, fqn: &str) -> Result<Box<dyn NodeCore>, ParamFileError> {
        (self.build)(&Value::Mapping(Mapping::new()), fqn, "(defaults)")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kind_specs_build_and_validate() {
        for kind in NodeKind::ALL {
            let spec = NodeSpec::of_kind(kind);
            let core = spec.defaults("/r1/x").expect("defaults build");
            assert_eq!(core.params_yaml(), kind.default_params(), "{}", kind.name());
            let bad: Value = serde_yaml::from_str("no_such_parameter: 1").expect("yaml");
            let e = (spec.build)(&bad, "/r1/x", "--ros-args").err().expect("refused");
            let m = e.to_string();
            assert!(m.contains("--ros-args") && m.contains("no_such_parameter") && m.contains("/r1/x"), "{m}");
        }
        let world = NodeSpec::world();
        let e = world.defaults("/world").err().expect("a scenario is required");
        assert!(e.to_string().contains("scenario"), "{e}");
        assert!(world.default_params.get("rate").is_some() && world.default_params.get("scenario").is_some());
        assert!(is_reserved("use_sim_time") && is_reserved("qos_overrides./chem.subscription.depth") && !is_reserved("rate"));
    }
}
