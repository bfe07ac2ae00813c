//! The sillage node graph: the registry of node kinds, each built from a parameter file, and
//! the whole stack placed in an in-process [`Executor`]. The ROS 2 executors use the same
//! registry, so every transport builds the same cores from the same files.

use serde_yaml::Value;
use sillage_core::executor::{Executor, ExecutorError, Placement};
use sillage_core::params::{self, NodeParams, ParamError, ParamFileError};
use sillage_core::NodeCore;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// Errors building the stack.
#[derive(Debug, Error)]
pub enum StackError {
    /// A parameter file could not be used.
    #[error(transparent)]
    Params(#[from] ParamFileError),
    /// The graph could not be wired.
    #[error(transparent)]
    Graph(#[from] ExecutorError),
    /// An unknown node kind was named.
    #[error("unknown node '{0}' (known: event_encoder, bearing_decoder, plume_estimator, arbiter, source_mapper)")]
    UnknownNode(String),
}

/// The node kinds of the stack.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum NodeKind {
    /// Conditions chemical channels and emits send-on-delta events.
    EventEncoder,
    /// Estimates the odor bearing from event timing and amplitude.
    BearingDecoder,
    /// Finds bouts and derives plume features and distance.
    PlumeEstimator,
    /// The behaviour state machine with its safety guard.
    Arbiter,
    /// The grid posterior over the source position.
    SourceMapper,
}

impl NodeKind {
    /// Every kind, in graph order (upstream first).
    pub const ALL: [NodeKind; 5] =
        [NodeKind::EventEncoder, NodeKind::BearingDecoder, NodeKind::PlumeEstimator, NodeKind::Arbiter, NodeKind::SourceMapper];

    /// The default ROS node name.
    pub fn name(self) -> &'static str {
        match self {
            NodeKind::EventEncoder => sillage_event_encoder::NODE_NAME,
            NodeKind::BearingDecoder => sillage_bearing_decoder::NODE_NAME,
            NodeKind::PlumeEstimator => sillage_plume_estimator::NODE_NAME,
            NodeKind::Arbiter => sillage_arbiter::NODE_NAME,
            NodeKind::SourceMapper => sillage_source_mapper::NODE_NAME,
        }
    }

    /// The kind with this default node name.
    pub fn from_name(name: &str) -> Result<NodeKind, StackError> {
        NodeKind::ALL.into_iter().find(|k| k.name() == name).ok_or_else(|| StackError::UnknownNode(name.to_string()))
    }

    /// The node's default parameters as a nested map.
    pub fn default_params(self) -> Value {
        match self {
            NodeKind::EventEncoder => params::to_value(&sillage_event_encoder::Params::default()),
            NodeKind::BearingDecoder => params::to_value(&sillage_bearing_decoder::Params::default()),
            NodeKind::PlumeEstimator => params::to_value(&sillage_plume_estimator::Params::default()),
            NodeKind::Arbiter => params::to_value(&sillage_arbiter::Params::default()),
            NodeKind::SourceMapper => params::to_value(&sillage_source_mapper::Params::default()),
        }
    }

    /// Builds the core from parameter-file text (`None`: defaults) for node `fqn`.
    pub fn build_from_str(self, text: Option<&str>, file: &str, fqn: &str) -> Result<Box<dyn NodeCore>, ParamFileError> {
        fn make<P: NodeParams, N: NodeCore + 'static>(
            text: Option<&str>,
            file: &str,
            fqn: &str,
            ctor: fn(P) -> Result<N, ParamError>,
        ) -> Result<Box<dyn NodeCore>, ParamFileError> {
            let p: P = match text {
                Some(t) => params::load_str(t, file, fqn)?,
                None => P::default(),
            };
            let n = ctor(p).map_err(|error| ParamFileError::Param { file: file.to_string(), node: fqn.to_string(), error })?;
            Ok(Box::new(n))
        }
        match self {
            NodeKind::EventEncoder => make(text, file, fqn, sillage_event_encoder::EventEncoder::new),
            NodeKind::BearingDecoder => make(text, file, fqn, sillage_bearing_decoder::BearingDecoder::new),
            NodeKind::PlumeEstimator => make(text, file, fqn, sillage_plume_estimator::PlumeEstimator::new),
            NodeKind::Arbiter => make(text, file, fqn, sillage_arbiter::Arbiter::new),
            NodeKind::SourceMapper => make(text, file, fqn, sillage_source_mapper::SourceMapper::new),
        }
    }

    /// Builds the core from a parameter file (`None`: defaults) for node `fqn`.
    pub fn build(self, file: Option<&Path>, fqn: &str) -> Result<Box<dyn NodeCore>, ParamFileError> {
        match file {
            None => self.build_from_str(None, "(defaults)", fqn),
            Some(path) => {
                let label = path.display().to_string();
                let text = std::fs::read_to_string(path).map_err(|source| ParamFileError::Io { file: label.clone(), source })?;
                self.build_from_str(Some(&text), &label, fqn)
            }
        }
    }
}

/// How to build the stack.
#[derive(Debug, Clone)]
pub struct StackConfig {
    /// Namespace of every node (`""` for the root).
    pub namespace: String,
    /// Parameter file (`None`: defaults).
    pub params_file: Option<PathBuf>,
    /// Topic remaps applied to every node.
    pub remaps: Vec<(String, String)>,
    /// Nodes to include.
    pub nodes: Vec<NodeKind>,
}

impl Default for StackConfig {
    fn default() -> Self {
        StackConfig { namespace: String::new(), params_file: None, remaps: Vec::new(), nodes: NodeKind::ALL.to_vec() }
    }
}

/// The fully qualified node name of `kind` in `namespace`.
pub fn node_fqn(kind: NodeKind, namespace: &str) -> String {
    sillage_core::executor::resolve_topic(kind.name(), namespace, kind.name())
}

/// Places the configured nodes in `ex`; returns their indices in `cfg.nodes` order.
pub fn add_stack(ex: &mut Executor, cfg: &StackConfig) -> Result<Vec<usize>, StackError> {
    let text = match &cfg.params_file {
        Some(p) => Some(std::fs::read_to_string(p).map_err(|source| ParamFileError::Io { file: p.display().to_string(), source })?),
        None => None,
    };
    let label = cfg.params_file.as_ref().map(|p| p.display().to_string()).unwrap_or_else(|| "(defaults)".into());
    let mut idx = Vec::new();
    for &kind in &cfg.nodes {
        let core = kind.build_from_str(text.as_deref(), &label, &node_fqn(kind, &cfg.namespace))?;
        let placement = Placement { namespace: cfg.namespace.clone(), name: None, remaps: cfg.remaps.clone() };
        idx.push(ex.add_placed(core, &placement)?);
    }
    Ok(idx)
}

/// A new executor holding the configured stack, with diagnostics at 1 Hz.
pub fn build(cfg: &StackConfig) -> Result<Executor, StackError> {
    let mut ex = Executor::new();
    ex.enable_diagnostics(sillage_core::time::SECOND)?;
    add_stack(&mut ex, cfg)?;
    Ok(ex)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_stack_wires_and_names_bad_keys() {
        let ex = build(&StackConfig { namespace: "/r1".into(), ..Default::default() }).expect("builds");
        assert_eq!(ex.node_names(), vec!["/r1/event_encoder", "/r1/bearing_decoder", "/r1/plume_estimator", "/r1/arbiter", "/r1/source_mapper"]);
        assert_eq!(ex.topic_type("/r1/chem"), Some("sillage_msgs/msg/ChemSample"));
        let bad = "arbiter:\n  ros__parameters:\n    no_such_key: 1.0\n";
        let e = NodeKind::Arbiter.build_from_str(Some(bad), "p.yaml", "/arbiter").err().expect("refused");
        let m = e.to_string();
        assert!(m.contains("p.yaml") && m.contains("no_such_key") && m.contains("/arbiter"), "{m}");
    }
}
