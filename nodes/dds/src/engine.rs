//! The transport-independent heart of the DDS executor: node cores wired to topics, inputs
//! decoded by sillage's own CDR codec, publications encoded by it, local delivery between the
//! nodes of one process, timers on the ROS clock, `/diagnostics`, and the intake guard.
//!
//! Contract with a transport (the `dds` module, or a test):
//! - create one subscription per [`Engine::inputs`] entry and one publication per
//!   [`Engine::outputs`] entry, with the DDS names and QoS given there;
//! - hand every received sample from a remote writer to [`Engine::on_sample`] (samples from
//!   this process's own writers must be skipped: they were already delivered locally);
//! - call [`Engine::poll_timers`] whenever [`Engine::wait_hint`] says so (or at least every
//!   100 ms), and report discovery through [`Engine::on_remote_writer`] /
//!   [`Engine::on_remote_reader`] / [`Engine::on_remote_lost`];
//! - pass system time (ns since the epoch) and a steady time (ns, any origin) in; the engine
//!   reads no clock itself.
//!
//! Publications of a node reach the other nodes of the process at once, in publication order
//! (first in, first out, like the in-process executor), and go to the wire encoded once.

use crate::clock::{ClockJump, ClockMode, RosClock, TimerId, Timers};
use crate::error::DdsError;
use crate::intake::{EndpointId, Intake, IntakeStats, Problem};
use crate::names;
use crate::qos::QosSpec;
use crate::setup::Setup;
use sillage_core::executor::{remap_topic, resolve_topic};
use sillage_core::msg::{Clock, DiagnosticArray, DiagnosticStatus, Header};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos, RosMessage};
use std::collections::{HashMap, VecDeque};

/// Name of the executor's own diagnostic status ("node: part" convention).
pub const STATUS_NAME: &str = "sillage_dds: transport";

/// Who an endpoint belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Owner {
    /// Port `port` of node `node`.
    Node { node: usize, port: usize },
    /// The executor's `/clock` subscription (simulated time).
    Clock,
    /// The executor's `/diagnostics` publication.
    Diagnostics,
}

/// One subscription or publication as the transport must create it.
#[derive(Debug, Clone, PartialEq)]
pub struct Endpoint {
    /// Owner.
    pub owner: Owner,
    /// Fully qualified ROS topic (after namespace and remaps).
    pub topic: String,
    /// DDS topic (`rt/...`).
    pub dds_topic: String,
    /// ROS type (`pkg/msg/Type`).
    pub type_name: &'static str,
    /// DDS type (`pkg::msg::dds_::Type_`).
    pub dds_type: String,
    /// DDS QoS.
    pub qos: QosSpec,
    /// The port's QoS class (`None` for the executor's own endpoints).
    pub class: Option<Qos>,
}

impl Endpoint {
    fn new(owner: Owner, topic: String, type_name: &'static str, qos: QosSpec, class: Option<Qos>) -> Result<Endpoint, DdsError> {
        let dds_topic = names::dds_topic(&topic)?;
        let dds_type = names::dds_type(type_name)?;
        Ok(Endpoint { owner, topic, dds_topic, type_name, dds_type, qos, class })
    }
}

/// Where the engine's publications go.
pub trait Wire {
    /// Publishes a CDR buffer (encapsulation header included) on output endpoint `output`.
    fn publish(&mut self, output: usize, cdr: &[u8]) -> Result<(), String>;
}

/// Engine settings.
#[derive(Debug, Clone)]
pub struct EngineOptions {
    /// Flood threshold per input [Hz].
    pub max_input_rate: f64,
    /// Period of `/diagnostics` [ns of ROS time].
    pub diagnostics_period: Nanos,
    /// Local deliveries allowed in one cascade before it is cut short.
    pub max_cascade: usize,
}

impl Default for EngineOptions {
    fn default() -> Self {
        EngineOptions { max_input_rate: 1000.0, diagnostics_period: sillage_core::time::SECOND, max_cascade: 10_000 }
    }
}

struct Slot {
    core: Box<dyn NodeCore>,
    fqn: String,
    outputs: Vec<usize>,
}

const DIAG_TIMER: TimerId = (usize::MAX, 0);

/// The engine.
pub struct Engine {
    slots: Vec<Slot>,
    inputs: Vec<Endpoint>,
    outputs: Vec<Endpoint>,
    local: HashMap<String, Vec<usize>>,
    clock: RosClock,
    timers: Timers,
    started: bool,
    intake: Intake,
    outbox: Outbox,
    buf: Vec<u8>,
    queue: VecDeque<(usize, Msg)>,
    diag_output: usize,
    diag_period: Nanos,
    bad_at_last_report: (u64, u64),
    max_cascade: usize,
}

fn port_endpoints(
    ports: &[Port],
    node: usize,
    name: &str,
    fqn: &str,
    p: &sillage_core::executor::Placement,
) -> Result<Vec<Endpoint>, DdsError> {
    ports
        .iter()
        .enumerate()
        .map(|(port, pt)| {
            let topic = remap_topic(&pt.topic, p, name);
            if !Msg::is_known_type(pt.type_name) {
                return Err(DdsError::UnknownType { node: fqn.to_string(), topic, type_name: pt.type_name.to_string() });
            }
            Endpoint::new(Owner::Node { node, port }, topic, pt.type_name, QosSpec::of(pt.qos), Some(pt.qos))
        })
        .collect()
}

impl Engine {
    /// Wires the nodes of `setup`; checks names, types, timers and type conflicts between ports.
    pub fn new(setup: Setup, opts: &EngineOptions) -> Result<Engine, DdsError> {
        let mut slots = Vec::new();
        let mut inputs = Vec::new();
        let mut outputs = Vec::new();
        for (node, placed) in setup.nodes.into_iter().enumerate() {
            let name = placed.placement.name.clone().unwrap_or_else(|| placed.core.name().to_string());
            let fqn = resolve_topic(&name, &placed.placement.namespace, &name);
            inputs.extend(port_endpoints(&placed.core.inputs(), node, &name, &fqn, &placed.placement)?);
            let outs = port_endpoints(&placed.core.outputs(), node, &name, &fqn, &placed.placement)?;
            let first = outputs.len();
            outputs.extend(outs);
            for (index, &period) in placed.core.timers().iter().enumerate() {
                if period <= 0 {
                    return Err(DdsError::BadTimer { node: fqn, index, period });
                }
            }
            slots.push(Slot { core: placed.core, fqn, outputs: (first..outputs.len()).collect() });
        }
        let diag_output = outputs.len();
        outputs.push(Endpoint::new(
            Owner::Diagnostics,
            "/diagnostics".into(),
            DiagnosticArray::TYPE_NAME,
            QosSpec::of(Qos::Reliable),
            None,
        )?);
        if setup.clock == ClockMode::Simulated {
            inputs.push(Endpoint::new(Owner::Clock, "/clock".into(), Clock::TYPE_NAME, QosSpec::CLOCK, None)?);
        }
        let mut types: HashMap<&str, (&'static str, String)> = HashMap::new();
        for ep in inputs.iter().chain(outputs.iter()) {
            let who = match ep.owner {
                Owner::Node { node, .. } => slots[node].fqn.clone(),
                _ => "executor".to_string(),
            };
            match types.get(ep.topic.as_str()) {
                Some((t, _)) if *t != ep.type_name => {
                    return Err(DdsError::TypeConflict {
                        topic: ep.topic.clone(),
                        first: t.to_string(),
                        second: ep.type_name.to_string(),
                        node: who,
                    })
                }
                Some(_) => {}
                None => {
                    types.insert(&ep.topic, (ep.type_name, who));
                }
            }
        }
        let mut local: HashMap<String, Vec<usize>> = HashMap::new();
        for (i, ep) in inputs.iter().enumerate() {
            if let Owner::Node { .. } = ep.owner {
                local.entry(ep.topic.clone()).or_default().push(i);
            }
        }
        Ok(Engine {
            slots,
            inputs,
            outputs,
            local,
            clock: RosClock::new(setup.clock),
            timers: Timers::new(),
            started: false,
            intake: Intake::new(opts.max_input_rate),
            outbox: Outbox::new(),
            buf: Vec::with_capacity(256),
            queue: VecDeque::new(),
            diag_output,
            diag_period: opts.diagnostics_period.max(1),
            bad_at_last_report: (0, 0),
            max_cascade: opts.max_cascade.max(1),
        })
    }

    /// Subscriptions the transport must create.
    pub fn inputs(&self) -> &[Endpoint] {
        &self.inputs
    }

    /// Publications the transport must create.
    pub fn outputs(&self) -> &[Endpoint] {
        &self.outputs
    }

    /// Fully qualified node names, in setup order.
    pub fn node_names(&self) -> Vec<&str> {
        self.slots.iter().map(|s| s.fqn.as_str()).collect()
    }

    /// The clock mode.
    pub fn clock_mode(&self) -> ClockMode {
        self.clock.mode()
    }

    /// Current ROS time [ns] given the system time.
    pub fn ros_now(&self, system: Nanos) -> Nanos {
        self.clock.now(system)
    }

    /// Counters since start.
    pub fn stats(&self) -> &IntakeStats {
        &self.intake.stats
    }

    /// Log lines written since the last call (problems, clock jumps).
    pub fn drain_log(&mut self) -> Vec<String> {
        self.intake.drain_log()
    }

    /// The node core at `index`, to inspect its state.
    pub fn node(&self, index: usize) -> Option<&dyn NodeCore> {
        self.slots.get(index).map(|s| s.core.as_ref())
    }

    fn start(&mut self, system: Nanos) {
        if self.started {
            return;
        }
        self.started = true;
        let now = self.clock.now(system);
        let mut t = Timers::new();
        for (node, slot) in self.slots.iter().enumerate() {
            for (index, period) in slot.core.timers().into_iter().enumerate() {
                t.add((node, index), period, now);
            }
        }
        t.add(DIAG_TIMER, self.diag_period, now);
        self.timers = t;
    }

    /// How long the transport may wait for input before calling [`Engine::poll_timers`]
    /// [ns of system time]; `None` while simulated time waits for `/clock`.
    pub fn wait_hint(&mut self, system: Nanos) -> Option<Nanos> {
        self.start(system);
        if !self.clock.running() || self.clock.mode() == ClockMode::Simulated {
            return None;
        }
        self.timers.next_deadline().map(|d| (d - system).max(0))
    }

    /// Fires the timers due at the current ROS time.
    pub fn poll_timers(&mut self, system: Nanos, steady: Nanos, wire: &mut dyn Wire) {
        self.start(system);
        if !self.clock.running() {
            return;
        }
        let now = self.clock.now(system);
        let mut due = Vec::new();
        self.timers.take_due(now, &mut due);
        for (node, index) in due {
            if (node, index) == DIAG_TIMER {
                self.publish_diagnostics(now, steady, wire);
            } else {
                self.slots[node].core.on_timer(now, index, &mut self.outbox);
                self.flush(node, now, steady, wire);
                self.run_queue(now, steady, wire);
            }
        }
    }

    /// A sample from remote writer `writer` on input endpoint `input`.
    pub fn on_sample(&mut self, system: Nanos, steady: Nanos, input: usize, writer: EndpointId, cdr: &[u8], wire: &mut dyn Wire) {
        self.start(system);
        let Some(ep) = self.inputs.get(input) else { return };
        self.intake.stats.samples += 1;
        if self.intake.is_bad_writer(writer) {
            self.intake.stats.wrong_type += 1;
            let (topic, ty) = (ep.topic.clone(), ep.dds_type.clone());
            self.intake.report(input, Problem::WrongType, steady, || {
                format!("{topic}: dropped a sample from writer {writer:032x}, which announced another type than {ty}")
            });
            return;
        }
        let droppable = ep.class != Some(Qos::Latched);
        let topic = ep.topic.clone();
        if !self.intake.admit(input, droppable, steady, &topic) {
            return;
        }
        let msg = match Msg::decode(ep.type_name, cdr) {
            Ok(m) => m,
            Err(e) => {
                self.intake.stats.malformed += 1;
                self.intake.report(input, Problem::Malformed, steady, || {
                    format!("{topic}: dropped a malformed sample ({} bytes) from writer {writer:032x}: {e}", cdr.len())
                });
                return;
            }
        };
        match ep.owner {
            Owner::Clock => {
                if let Msg::Clock(c) = msg {
                    self.on_clock(system, steady, c.clock.to_nanos(), wire);
                }
            }
            Owner::Node { node, port } => {
                self.intake.stats.delivered += 1;
                let now = self.clock.now(system);
                self.slots[node].core.on_message(now, port, &msg, &mut self.outbox);
                self.flush(node, now, steady, wire);
                self.run_queue(now, steady, wire);
            }
            Owner::Diagnostics => {}
        }
    }

    fn on_clock(&mut self, system: Nanos, steady: Nanos, t: Nanos, wire: &mut dyn Wire) {
        let before = self.clock.now(system);
        if let ClockJump::Backward(by) = self.clock.on_clock(t) {
            self.intake.stats.clock_jumps_back += 1;
            self.timers.on_jump_back(before, t);
            self.intake.report(usize::MAX, Problem::Clock, steady, || {
                format!("/clock went back by {by} ns (to {t} ns): timers keep the time they had left")
            });
        }
        self.poll_timers(system, steady, wire);
    }

    /// Publishes what node `node` put in the outbox and queues local deliveries.
    fn flush(&mut self, node: usize, now: Nanos, steady: Nanos, wire: &mut dyn Wire) {
        let items: Vec<(usize, Msg)> = self.outbox.drain().collect();
        for (out, msg) in items {
            let ep = match self.slots[node].outputs.get(out) {
                Some(&ep) if self.outputs[ep].type_name == msg.type_name() => ep,
                _ => {
                    self.intake.stats.publish_failures += 1;
                    let (fqn, got) = (self.slots[node].fqn.clone(), msg.type_name());
                    self.intake.report(usize::MAX - 1, Problem::Publish, steady, || {
                        format!("{fqn}: published {got} on output {out}, which does not declare that type: dropped")
                    });
                    continue;
                }
            };
            self.send(ep, &msg, now, steady, wire);
        }
    }

    fn send(&mut self, ep: usize, msg: &Msg, _now: Nanos, steady: Nanos, wire: &mut dyn Wire) {
        let topic = &self.outputs[ep].topic;
        let result = msg.encode_into(&mut self.buf).map_err(|e| e.to_string()).and_then(|()| wire.publish(ep, &self.buf));
        if let Err(reason) = result {
            self.intake.stats.publish_failures += 1;
            let topic = topic.clone();
            self.intake.report(self.inputs.len() + ep, Problem::Publish, steady, || format!("{topic}: publication failed: {reason}"));
        }
        if let Some(subs) = self.local.get(&self.outputs[ep].topic) {
            for &input in subs {
                self.queue.push_back((input, msg.clone()));
            }
        }
    }

    fn run_queue(&mut self, now: Nanos, steady: Nanos, wire: &mut dyn Wire) {
        let mut n = 0;
        while let Some((input, msg)) = self.queue.pop_front() {
            n += 1;
            if n > self.max_cascade {
                let left = self.queue.len() + 1;
                self.queue.clear();
                self.intake.stats.runaways += 1;
                let limit = self.max_cascade;
                self.intake.report(usize::MAX - 2, Problem::Runaway, steady, || {
                    format!("more than {limit} local deliveries in one cascade (nodes publishing to each other without end?): {left} dropped")
                });
                return;
            }
            let Owner::Node { node, port } = self.inputs[input].owner else { continue };
            self.intake.stats.delivered_local += 1;
            self.slots[node].core.on_message(now, port, &msg, &mut self.outbox);
            self.flush(node, now, steady, wire);
        }
    }

    fn transport_status(&mut self) -> DiagnosticStatus {
        let s = self.intake.stats.clone();
        let now_bad = (s.bad_inputs(), s.publish_failures + s.runaways);
        let fresh = now_bad.0 > self.bad_at_last_report.0 || now_bad.1 > self.bad_at_last_report.1;
        self.bad_at_last_report = now_bad;
        let level = if fresh { DiagnosticStatus::WARN } else { DiagnosticStatus::OK };
        let message = if s.bad_inputs() == 0 && now_bad.1 == 0 {
            "ok".to_string()
        } else {
            format!(
                "since start: {} malformed, {} wrong type, {} type conflicts, {} flood-dropped, {} publish failures, {} runaways",
                s.malformed, s.wrong_type, s.type_conflicts, s.flood_dropped, s.publish_failures, s.runaways
            )
        };
        let clock = match self.clock.mode() {
            ClockMode::System => "system",
            ClockMode::Simulated => "simulated",
        };
        DiagnosticStatus::with(
            level,
            STATUS_NAME,
            &message,
            &[
                ("clock", clock.to_string()),
                ("samples", s.samples.to_string()),
                ("delivered", s.delivered.to_string()),
                ("delivered_local", s.delivered_local.to_string()),
                ("malformed", s.malformed.to_string()),
                ("wrong_type", s.wrong_type.to_string()),
                ("type_conflicts", s.type_conflicts.to_string()),
                ("flood_dropped", s.flood_dropped.to_string()),
                ("publish_failures", s.publish_failures.to_string()),
                ("runaways", s.runaways.to_string()),
                ("clock_jumps_back", s.clock_jumps_back.to_string()),
            ],
        )
    }

    fn publish_diagnostics(&mut self, now: Nanos, steady: Nanos, wire: &mut dyn Wire) {
        let mut status = Vec::new();
        for s in &self.slots {
            s.core.diagnostics(now, &mut status);
        }
        status.push(self.transport_status());
        let msg = Msg::DiagnosticArray(DiagnosticArray { header: Header::new(now, ""), status });
        self.send(self.diag_output, &msg, now, steady, wire);
        self.run_queue(now, steady, wire);
    }

    fn conflict_line(&mut self, key: usize, steady: Nanos, line: String) {
        self.intake.report(key, Problem::TypeConflict, steady, || line);
    }

    /// Discovery announced remote writer `writer` on `dds_topic` with type `dds_type`.
    pub fn on_remote_writer(&mut self, steady: Nanos, dds_topic: &str, dds_type: &str, writer: EndpointId) {
        for (i, ours) in mismatched(&self.inputs, dds_topic, dds_type) {
            if self.intake.mark_bad_writer(writer) {
                self.conflict_line(i, steady, format!(
                    "writer {writer:032x} on {dds_topic} announces type {dds_type}, sillage expects {ours}: its samples will be dropped"
                ));
            }
        }
        let n = self.inputs.len();
        for (i, ours) in mismatched(&self.outputs, dds_topic, dds_type) {
            if self.intake.note_conflict(writer) {
                self.conflict_line(n + i, steady, format!(
                    "another writer ({writer:032x}) publishes {dds_type} on {dds_topic}, where sillage publishes {ours}"
                ));
            }
        }
    }

    /// Discovery announced remote reader `reader` on `dds_topic` expecting `dds_type`.
    pub fn on_remote_reader(&mut self, steady: Nanos, dds_topic: &str, dds_type: &str, reader: EndpointId) {
        let n = self.inputs.len();
        for (i, ours) in mismatched(&self.outputs, dds_topic, dds_type) {
            if self.intake.note_conflict(reader) {
                self.conflict_line(n + i, steady, format!(
                    "a subscription ({reader:032x}) on {dds_topic} expects {dds_type}, but sillage publishes {ours} there: it will get nothing (check the type parameters)"
                ));
            }
        }
    }

    /// A remote endpoint left.
    pub fn on_remote_lost(&mut self, endpoint: EndpointId) {
        self.intake.forget(endpoint);
    }
}

/// Endpoints on `dds_topic` whose type is not `dds_type`: (index, our DDS type).
fn mismatched(eps: &[Endpoint], dds_topic: &str, dds_type: &str) -> Vec<(usize, String)> {
    eps.iter()
        .enumerate()
        .filter(|(_, ep)| ep.dds_topic == dds_topic && ep.dds_type != dds_type)
        .map(|(i, ep)| (i, ep.dds_type.clone()))
        .collect()
}

#[cfg(test)]
#[path = "engine_tests.rs"]
mod tests;
