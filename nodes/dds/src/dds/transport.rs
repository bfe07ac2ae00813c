//! The DDS side of the engine's endpoints: one `ros2-client` context (one DDS participant) per
//! process, one ROS node per core (so the nodes appear in the ROS graph), one publication per
//! output and one subscription per input, with the names and QoS the engine chose.
//!
//! Publications go through `ros2-client` publishers of [`Encoded`] payloads; subscriptions
//! are RustDDS readers with the [`RawAdapter`] (`ros2-client` offers no raw subscription), so
//! the node info that `ros2 node info` shows lists a node's publishers but not its
//! subscriptions. DDS discovery, which decides matching, sees both.

use super::raw::{Encoded, RawAdapter, RawSample};
use crate::engine::{Endpoint, Engine, Owner, Wire};
use crate::error::DdsError;
use crate::names;
use crate::qos::profile;
use ros2_client::dds::rustdds::no_key::SimpleDataReader;
use ros2_client::dds::rustdds::{self, DomainParticipant, QosPolicies, RTPSEntity, GUID};
use ros2_client::{Context, ContextOptions, MessageTypeName, Node, NodeName, NodeOptions, Publisher, QosProfile};
use sillage_core::cdr::HEADER_LE;
use std::collections::HashMap;

/// Name of the ROS node that owns the executor's own endpoints (`/clock`, `/diagnostics`).
pub const EXECUTOR_NODE: &str = "sillage_dds";

fn failed(what: impl Into<String>) -> impl FnOnce(String) -> DdsError {
    let what = what.into();
    move |reason| DdsError::Transport { what, reason }
}

/// A GUID as the engine's endpoint id.
pub fn endpoint_id(g: &GUID) -> u128 {
    u128::from_be_bytes(g.to_bytes())
}

/// The participant part (first 12 bytes) of a GUID.
fn prefix(g: &GUID) -> [u8; 12] {
    let b = g.to_bytes();
    let mut p = [0; 12];
    p.copy_from_slice(&b[..12]);
    p
}

/// Splits a fully qualified node name into (namespace, base name) for `ros2-client`.
fn node_name(fqn: &str) -> Result<NodeName, DdsError> {
    let (ns, base) = fqn.rsplit_once('/').unwrap_or(("", fqn));
    let ns = if ns.is_empty() { "/" } else { ns };
    NodeName::new(ns, base).map_err(|e| DdsError::BadArgument { arg: fqn.to_string(), reason: format!("not a ROS node name: {e:?}") })
}

/// The DDS entities of one process.
pub struct DdsTransport {
    participant: DomainParticipant,
    own: [u8; 12],
    publishers: Vec<Publisher<Encoded>>,
    readers: Vec<SimpleDataReader<RawSample, RawAdapter>>,
    // Dropping a node retracts it from the graph: keep them alive as long as the transport.
    _nodes: Vec<Node>,
    _context: Context,
}

struct Topics {
    context: Context,
    by_name: HashMap<String, rustdds::Topic>,
}

impl Topics {
    fn get(&mut self, ep: &Endpoint) -> Result<rustdds::Topic, DdsError> {
        if let Some(t) = self.by_name.get(&ep.dds_topic) {
            return Ok(t.clone());
        }
        let (pkg, name) = names::split_type(ep.type_name)?;
        let type_name = MessageTypeName::new(pkg, name);
        // The type name on the wire is made by ros2-client: it must be the one the engine
        // checks discovery against.
        if type_name.dds_msg_type() != ep.dds_type {
            return Err(DdsError::Transport {
                what: format!("topic {}", ep.dds_topic),
                reason: format!("ros2-client names the type {}, sillage expects {}", type_name.dds_msg_type(), ep.dds_type),
            });
        }
        let topic = self
            .context
            .create_topic(ep.dds_topic.clone(), type_name, &profile(&ep.qos))
            .map_err(|e| DdsError::Transport { what: format!("create topic {}", ep.dds_topic), reason: format!("{e:?}") })?;
        self.by_name.insert(ep.dds_topic.clone(), topic.clone());
        Ok(topic)
    }
}

impl DdsTransport {
    /// Joins DDS domain `domain_id` and creates every endpoint of `engine`.
    pub fn open(engine: &Engine, domain_id: u16, namespace: &str) -> Result<DdsTransport, DdsError> {
        let context = Context::with_options(ContextOptions::new().domain_id(domain_id))
            .map_err(|e| DdsError::Transport { what: format!("join DDS domain {domain_id}"), reason: format!("{e:?}") })?;
        let options = || NodeOptions::new().enable_rosout(false).start_parameter_services(false);
        let mut nodes = Vec::new();
        let exec_fqn = sillage_core::executor::resolve_topic(EXECUTOR_NODE, namespace, EXECUTOR_NODE);
        for fqn in engine.node_names().into_iter().map(str::to_string).chain(std::iter::once(exec_fqn)) {
            let node = context
                .new_node(node_name(&fqn)?, options())
                .map_err(|e| DdsError::Transport { what: format!("create node {fqn}"), reason: format!("{e:?}") })?;
            nodes.push(node);
        }
        let exec = nodes.len() - 1;
        let mut topics = Topics { context: context.clone(), by_name: HashMap::new() };
        let mut publishers = Vec::new();
        for ep in engine.outputs() {
            let topic = topics.get(ep)?;
            let owner = match ep.owner {
                Owner::Node { node, .. } => node,
                _ => exec,
            };
            let p = nodes[owner]
                .create_publisher::<Encoded>(&topic, Some(profile(&ep.qos)))
                .map_err(|e| format!("{e:?}"))
                .map_err(failed(format!("create publisher on {}", ep.dds_topic)))?;
            publishers.push(p);
        }
        let participant = context.domain_participant();
        let subscriber = participant
            .create_subscriber(&QosPolicies::from(&QosProfile::subscription_default()))
            .map_err(|e| format!("{e:?}"))
            .map_err(failed("create the DDS subscriber"))?;
        let mut readers = Vec::new();
        for ep in engine.inputs() {
            let topic = topics.get(ep)?;
            let r = subscriber
                .create_simple_datareader_no_key::<RawSample, RawAdapter>(&topic, Some(QosPolicies::from(&profile(&ep.qos))))
                .map_err(|e| format!("{e:?}"))
                .map_err(failed(format!("create subscription on {}", ep.dds_topic)))?;
            readers.push(r);
        }
        let own = prefix(&participant.guid());
        Ok(DdsTransport { participant, own, publishers, readers, _nodes: nodes, _context: context })
    }

    /// The participant (for discovery events).
    pub fn participant(&self) -> &DomainParticipant {
        &self.participant
    }

    /// The subscriptions, in engine input order.
    pub fn readers_mut(&mut self) -> &mut [SimpleDataReader<RawSample, RawAdapter>] {
        &mut self.readers
    }

    /// Takes the next sample of input `input`: (writer, CDR with header), or `None`.
    pub fn take(&self, input: usize) -> Result<Option<(GUID, RawSample)>, String> {
        let Some(r) = self.readers.get(input) else { return Ok(None) };
        match r.try_take_one() {
            Ok(Some(dcc)) => {
                let w = dcc.writer_guid();
                Ok(Some((w, dcc.into_value())))
            }
            Ok(None) => Ok(None),
            Err(e) => Err(format!("{e:?}")),
        }
    }

    /// Re-arms the readers' notifications before a round of [`DdsTransport::take`].
    pub fn drain_notifications(&self) {
        for r in &self.readers {
            r.drain_read_notifications();
        }
    }

    /// Whether a writer belongs to this process.
    pub fn is_own(&self, writer: &GUID) -> bool {
        prefix(writer) == self.own
    }

    /// The output endpoint whose publisher has this GUID.
    pub fn output_of(&self, writer: &GUID) -> Option<usize> {
        self.publishers.iter().position(|p| p.guid() == *writer)
    }

    /// The input endpoint whose reader has this GUID.
    pub fn input_of(&self, reader: &GUID) -> Option<usize> {
        self.readers.iter().position(|r| r.guid() == *reader)
    }
}

impl Wire for DdsTransport {
    fn publish(&mut self, output: usize, cdr: &[u8]) -> Result<(), String> {
        let p = self.publishers.get(output).ok_or_else(|| format!("no publisher {output}"))?;
        if cdr.len() < 4 || cdr[..2] != HEADER_LE[..2] {
            return Err("sillage's encoder must write little-endian CDR".into());
        }
        p.publish(Encoded(cdr[4..].to_vec())).map_err(|e| format!("{e:?}"))
    }
}
