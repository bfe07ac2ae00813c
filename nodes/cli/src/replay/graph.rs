//! What the node graph subscribes to and publishes, topic by topic, with QoS classes: which
//! bag topics to inject, which to leave out because the graph recomputes them, and the QoS
//! profiles to record in the output bag.

use sillage_bag::replay::Inputs;
use sillage_core::executor::{remap_topic, Placement};
use sillage_core::Qos;
use sillage_stack::{node_fqn, StackConfig};
use std::collections::{BTreeMap, HashMap};

/// The graph's ports by resolved topic name.
#[derive(Debug, Default)]
pub struct Graph {
    /// topic -> (type, QoS of the first port declaring it).
    pub topics: BTreeMap<String, (&'static str, Qos)>,
    /// topic -> subscribing nodes.
    pub subscribers: BTreeMap<String, Vec<String>>,
    /// topic -> publishing nodes.
    pub publishers: BTreeMap<String, Vec<String>>,
}

impl Graph {
    /// Builds every configured node once (as the stack does) and reads its ports.
    pub fn of(cfg: &StackConfig) -> anyhow::Result<Graph> {
        let mut g = Graph::default();
        let placement = Placement { namespace: cfg.namespace.clone(), name: None, remaps: cfg.remaps.clone() };
        for &kind in &cfg.nodes {
            let fqn = node_fqn(kind, &cfg.namespace);
            let core = kind.build(cfg.params_file.as_deref(), &fqn)?;
            for (ports, map) in [(core.inputs(), &mut g.subscribers), (core.outputs(), &mut g.publishers)] {
                for p in ports {
                    let topic = remap_topic(&p.topic, &placement, core.name());
                    g.topics.entry(topic.clone()).or_insert((p.type_name, p.qos));
                    map.entry(topic).or_default().push(fqn.clone());
                }
            }
        }
        // The executor publishes every node's diagnostics.
        g.topics.entry("/diagnostics".into()).or_insert(("diagnostic_msgs/msg/DiagnosticArray", Qos::Reliable));
        g.publishers.entry("/diagnostics".into()).or_default().push("(executor)".into());
        Ok(g)
    }

    /// Bag topics to inject: subscribed and published by no node.
    pub fn inputs(&self) -> Inputs {
        let mut inject = HashMap::new();
        for t in self.subscribers.keys() {
            if !self.publishers.contains_key(t) {
                if let Some((ty, _)) = self.topics.get(t) {
                    inject.insert(t.clone(), *ty);
                }
            }
        }
        Inputs { inject, outputs: self.publishers.keys().cloned().collect() }
    }

    /// QoS class of a topic (reliable when the graph does not declare it).
    pub fn qos(&self, topic: &str) -> Qos {
        self.topics.get(topic).map_or(Qos::Reliable, |(_, q)| *q)
    }
}
