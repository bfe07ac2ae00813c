//! The transport-independent heart of the DDS executor: hosted node cores wired to topics,
//! local delivery between the nodes of one process, timers on the ROS clock, `/diagnostics`,
//! the zero command on shutdown, and the intake guard.
//!
//! Each core is hosted by the r2r executor's [`NodeRuntime`] (bytes in, bytes out: sillage's
//! own CDR codec both ways, the same counters and executor status), so both executors treat a
//! message, a parameter and a failure alike; this module adds what DDS without rcl needs.
//!
//! Contract with a transport (the `dds` module, or a test):
//! - create one subscription per [`Engine::inputs`] entry and one publication per
//!   [`Engine::outputs`] entry, with the DDS names and QoS given there;
//! - hand every received sample from a remote writer to [`Engine::on_sample`] (samples from
//!   this process's own writers must be skipped: they were delivered locally already);
//! - call [`Engine::poll_timers`] when [`Engine::wait_hint`] says so (or at least every 100
//!   ms); report discovery through [`Engine::on_remote_writer`], [`Engine::on_remote_reader`]
//!   and [`Engine::on_remote_lost`]; call [`Engine::stop`] before closing;
//! - pass system time (ns since the epoch) and a steady time (ns, any origin) in; the engine
//!   reads no clock itself.
//!
//! A node's publications reach the other nodes of the process at once, first in first out
//! (as in the in-process executor), and go to the wire once.

use crate::clock::{ClockJump, ClockMode, RosClock, TimerId, Timers};
use crate::error::DdsError;
use crate::intake::{EndpointId, Intake, IntakeStats, Problem};
use crate::names;
use crate::qos::{self, QosSpec};
use crate::setup::Setup;
use sillage_core::msg::{Clock, DiagnosticArray, DiagnosticStatus};
use sillage_core::{Msg, Nanos, Qos, RosMessage};
use sillage_ros2::names::resolved_ports;
use sillage_ros2::runtime::RuntimeError;
use sillage_ros2::{diagnostics, NodeRuntime};
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
    /// Local deliveries allowed in one cascade before it is cut short.
    pub max_cascade: usize,
}

impl Default for EngineOptions {
    fn default() -> Self {
        EngineOptions { max_input_rate: 1000.0, max_cascade: 10_000 }
    }
}

struct Slot {
    rt: NodeRuntime,
    outputs: Vec<usize>,
}

const DIAG_TIMER: TimerId = (usize::MAX, 0);
const KEY_CLOCK: usize = usize::MAX;
const KEY_OUTPUTS: usize = usize::MAX - 1;
const KEY_CASCADE: usize = usize::MAX - 2;

/// Publications waiting to go out: (node, node output, CDR).
type Pending = Vec<(usize, usize, Vec<u8>)>;

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
    queue: VecDeque<(usize, Vec<u8>)>,
    diag_output: usize,
    bad_at_last_report: (u64, u64),
    max_cascade: usize,
}

fn check_types(inputs: &[Endpoint], outputs: &[Endpoint], slots: &[Slot]) -> Result<(), DdsError> {
    let mut types: HashMap<&str, &'static str> = HashMap::new();
    for ep in inputs.iter().chain(outputs) {
        match types.get(ep.topic.as_str()) {
            Some(t) if *t != ep.type_name => {
                let node = match ep.owner {
                    Owner::Node { node, .. } => slots[node].rt.fqn().to_string(),
                    _ => "executor".to_string(),
                };
                return Err(DdsError::TypeConflict { topic: ep.topic.clone(), first: t.to_string(), second: ep.type_name.to_string(), node });
            }
            Some(_) => {}
            None => {
                types.insert(&ep.topic, ep.type_name);
            }
        }
    }
    Ok(())
}

impl Engine {
    /// Wires the nodes of `setup`; checks names, types, timers and type conflicts between ports.
    pub fn new(setup: Setup, opts: &EngineOptions) -> Result<Engine, DdsError> {
        let mut slots = Vec::new();
        let mut inputs = Vec::new();
        let mut outputs = Vec::new();
        for (node, placed) in setup.nodes.into_iter().enumerate() {
            let rt = placed.runtime;
            let fqn = rt.fqn().to_string();
            let ports: Vec<_> = rt.inputs().iter().chain(rt.outputs()).collect();
            let resolved = resolved_ports(rt.core(), &placed.placement);
            let mut outs = Vec::new();
            let n_in = rt.inputs().len();
            for (k, ((dir, _, topic, type_name), port)) in resolved.into_iter().zip(ports).enumerate() {
                if !Msg::is_known_type(type_name) {
                    return Err(DdsError::UnknownType { node: fqn, topic, type_name: type_name.to_string() });
                }
                let (owner_port, list) = if dir == "in" { (k, &mut inputs) } else { (k - n_in, &mut outputs) };
                let ep = Endpoint::new(Owner::Node { node, port: owner_port }, topic, type_name, QosSpec::of(port.qos), Some(port.qos))?;
                if dir != "in" {
                    outs.push(list.len());
                }
                list.push(ep);
            }
            for (index, &period) in rt.timers().iter().enumerate() {
                if period <= 0 {
                    return Err(DdsError::BadTimer { node: fqn, index, period });
                }
            }
            slots.push(Slot { rt, outputs: outs });
        }
        let diag_output = outputs.len();
        outputs.push(Endpoint::new(Owner::Diagnostics, diagnostics::TOPIC.into(), DiagnosticArray::TYPE_NAME, QosSpec::of(Qos::Reliable), None)?);
        if setup.clock == ClockMode::Simulated {
            inputs.push(Endpoint::new(Owner::Clock, "/clock".into(), Clock::TYPE_NAME, qos::CLOCK, None)?);
        }
        check_types(&inputs, &outputs, &slots)?;
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
            queue: VecDeque::new(),
            diag_output,
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
        self.slots.iter().map(|s| s.rt.fqn()).collect()
    }

    /// The hosted node at `index`.
    pub fn node(&self, index: usize) -> Option<&NodeRuntime> {
        self.slots.get(index).map(|s| &s.rt)
    }

    /// The clock mode.
    pub fn clock_mode(&self) -> ClockMode {
        self.clock.mode()
    }

    /// Counters since start.
    pub fn stats(&self) -> &IntakeStats {
        &self.intake.stats
    }

    /// Log lines written since the last call (problems, clock jumps).
    pub fn drain_log(&mut self) -> Vec<String> {
        self.intake.drain_log()
    }

    fn start(&mut self, system: Nanos) {
        if self.started {
            return;
        }
        self.started = true;
        let now = self.clock.now(system);
        for (node, slot) in self.slots.iter().enumerate() {
            for (index, &period) in slot.rt.timers().iter().enumerate() {
                self.timers.add((node, index), period, now);
            }
        }
        self.timers.add(DIAG_TIMER, diagnostics::PERIOD, now);
    }

    /// How long the transport may wait for input before calling [`Engine::poll_timers`]
    /// [ns of system time]; `None` with simulated time (timers wait for `/clock`).
    pub fn wait_hint(&mut self, system: Nanos) -> Option<Nanos> {
        self.start(system);
        if self.clock.mode() == ClockMode::Simulated {
            return None;
        }
        self.timers.next_deadline().map(|d| (d - system).max(0))
    }

    /// Fires the timers due at the current ROS time.
    pub fn poll_timers(&mut self, system: Nanos, wire: &mut dyn Wire) {
        self.start(system);
        if !self.clock.running() {
            return;
        }
        let now = self.clock.now(system);
        let mut due = Vec::new();
        self.timers.take_due(now, &mut due);
        for (node, index) in due {
            if (node, index) == DIAG_TIMER {
                self.publish_diagnostics(now, wire);
                continue;
            }
            let mut pending = Pending::new();
            let r = self.slots[node].rt.on_timer(now, index, &mut |o, b| pending.push((node, o, b.to_vec())));
            self.after_call(r, pending, now, wire);
        }
    }

    /// A sample from remote writer `writer` on input endpoint `input`.
    pub fn on_sample(&mut self, system: Nanos, steady: Nanos, input: usize, writer: EndpointId, cdr: &[u8], wire: &mut dyn Wire) {
        self.start(system);
        let Some(ep) = self.inputs.get(input) else { return };
        self.intake.stats.samples += 1;
        let (topic, owner, droppable) = (ep.topic.clone(), ep.owner, !ep.class.is_some_and(Qos::is_priority));
        if self.intake.is_bad_writer(writer) {
            self.intake.stats.wrong_type += 1;
            let ty = ep.dds_type.clone();
            self.intake.report(input, Problem::WrongType, || {
                format!("{topic}: dropped a sample from writer {writer:032x}, which announced another type than {ty}")
            });
            return;
        }
        let label = match owner {
            Owner::Node { node, .. } => format!("{topic} ({})", self.slots[node].rt.fqn()),
            _ => topic.clone(),
        };
        if !self.intake.admit(input, droppable, steady, &label) {
            return;
        }
        match owner {
            Owner::Clock => match Msg::decode(Clock::TYPE_NAME, cdr) {
                Ok(Msg::Clock(c)) => self.on_clock(system, c.clock.to_nanos(), wire),
                Ok(_) => {}
                Err(e) => {
                    self.intake.stats.malformed += 1;
                    self.intake.report(input, Problem::Malformed, || format!("{topic}: dropped a malformed sample from writer {writer:032x}: {e}"));
                }
            },
            Owner::Node { node, port } => {
                let now = self.clock.now(system);
                let mut pending = Pending::new();
                let r = self.slots[node].rt.on_input(now, port, cdr, &mut |o, b| pending.push((node, o, b.to_vec())));
                if let Err(e @ RuntimeError::Decode { .. }) = &r {
                    self.intake.stats.malformed += 1;
                    let len = cdr.len();
                    self.intake.report(input, Problem::Malformed, || {
                        format!("{topic}: dropped a malformed sample ({len} bytes) from writer {writer:032x}: {e}")
                    });
                    return;
                }
                self.intake.stats.delivered += 1;
                self.after_call(r, pending, now, wire);
            }
            Owner::Diagnostics => {}
        }
    }

    fn on_clock(&mut self, system: Nanos, t: Nanos, wire: &mut dyn Wire) {
        let before = self.clock.now(system);
        if let ClockJump::Backward(by) = self.clock.on_clock(t) {
            self.intake.stats.clock_jumps_back += 1;
            self.timers.on_jump_back(before, t);
            self.intake.report(KEY_CLOCK, Problem::Clock, || {
                format!("/clock went back by {by} ns (to {t} ns): timers keep the time they had left")
            });
        }
        self.poll_timers(system, wire);
    }

    /// Publishes what a node call produced, logs its problem, and runs the local deliveries.
    fn after_call(&mut self, r: Result<(), RuntimeError>, pending: Pending, now: Nanos, wire: &mut dyn Wire) {
        if let Err(e) = r {
            self.intake.report(KEY_OUTPUTS, Problem::Publish, || e.to_string());
        }
        self.dispatch(pending, wire);
        self.run_queue(now, wire);
    }

    fn dispatch(&mut self, pending: Pending, wire: &mut dyn Wire) {
        for (node, out, bytes) in pending {
            let Some(&ep) = self.slots[node].outputs.get(out) else { continue };
            if let Err(reason) = wire.publish(ep, &bytes) {
                self.intake.stats.publish_failures += 1;
                self.slots[node].rt.note_publish_error(out, &reason);
                let topic = self.outputs[ep].topic.clone();
                self.intake.report(self.inputs.len() + ep, Problem::Publish, || format!("{topic}: publication failed: {reason}"));
            }
            self.enqueue_local(ep, bytes);
        }
    }

    fn enqueue_local(&mut self, ep: usize, bytes: Vec<u8>) {
        if let Some(subs) = self.local.get(&self.outputs[ep].topic) {
            for &input in subs {
                self.queue.push_back((input, bytes.clone()));
            }
        }
    }

    fn run_queue(&mut self, now: Nanos, wire: &mut dyn Wire) {
        let mut n = 0;
        while let Some((input, bytes)) = self.queue.pop_front() {
            n += 1;
            if n > self.max_cascade {
                let left = self.queue.len() + 1;
                self.queue.clear();
                self.intake.stats.runaways += 1;
                let limit = self.max_cascade;
                self.intake.report(KEY_CASCADE, Problem::Runaway, || {
                    format!("more than {limit} local deliveries in one cascade (nodes publishing to each other without end?): {left} dropped")
                });
                return;
            }
            let Owner::Node { node, port } = self.inputs[input].owner else { continue };
            self.intake.stats.delivered_local += 1;
            let mut pending = Pending::new();
            let r = self.slots[node].rt.on_input(now, port, &bytes, &mut |o, b| pending.push((node, o, b.to_vec())));
            if let Err(e) = r {
                self.intake.report(KEY_OUTPUTS, Problem::Publish, || e.to_string());
            }
            self.dispatch(pending, wire);
        }
    }

    /// Publishes a zero command on every velocity output (Twist or TwistStamped) of every
    /// node, as the r2r executor does on SIGINT or SIGTERM, before the transport closes.
    pub fn stop(&mut self, system: Nanos, wire: &mut dyn Wire) {
        let now = self.clock.now(system);
        for node in 0..self.slots.len() {
            let mut pending = Pending::new();
            let r = self.slots[node].rt.stop_commands(now, &mut |o, b| pending.push((node, o, b.to_vec())));
            if let Err(e) = r {
                self.intake.report(KEY_OUTPUTS, Problem::Publish, || e.to_string());
            }
            self.dispatch(pending, wire);
        }
        self.queue.clear();
    }

    fn transport_status(&mut self) -> DiagnosticStatus {
        let s = self.intake.stats.clone();
        let now_bad = (s.bad_inputs(), s.publish_failures + s.runaways);
        let fresh = now_bad.0 > self.bad_at_last_report.0 || now_bad.1 > self.bad_at_last_report.1;
        self.bad_at_last_report = now_bad;
        let level = if fresh { DiagnosticStatus::WARN } else { DiagnosticStatus::OK };
        let message = if now_bad == (0, 0) {
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

    fn publish_diagnostics(&mut self, now: Nanos, wire: &mut dyn Wire) {
        let mut array = diagnostics::collect(now, self.slots.iter_mut().map(|s| &mut s.rt));
        array.status.push(self.transport_status());
        match Msg::DiagnosticArray(array).encode() {
            Ok(bytes) => {
                if let Err(reason) = wire.publish(self.diag_output, &bytes) {
                    self.intake.stats.publish_failures += 1;
                    self.intake.report(self.inputs.len() + self.diag_output, Problem::Publish, || format!("/diagnostics: publication failed: {reason}"));
                }
                self.enqueue_local(self.diag_output, bytes);
                self.run_queue(now, wire);
            }
            Err(e) => self.intake.report(KEY_OUTPUTS, Problem::Publish, || format!("/diagnostics: {e}")),
        }
    }

    /// Discovery announced remote writer `writer` on `dds_topic` with type `dds_type`.
    pub fn on_remote_writer(&mut self, dds_topic: &str, dds_type: &str, writer: EndpointId) {
        for (i, ours) in mismatched(&self.inputs, dds_topic, dds_type) {
            if self.intake.mark_bad_writer(writer) {
                self.intake.report(i, Problem::TypeConflict, || {
                    format!("writer {writer:032x} on {dds_topic} announces type {dds_type}, sillage expects {ours}: its samples will be dropped")
                });
            }
        }
        let n = self.inputs.len();
        for (i, ours) in mismatched(&self.outputs, dds_topic, dds_type) {
            if self.intake.note_conflict(writer) {
                self.intake.report(n + i, Problem::TypeConflict, || {
                    format!("another writer ({writer:032x}) publishes {dds_type} on {dds_topic}, where sillage publishes {ours}")
                });
            }
        }
    }

    /// Discovery announced remote reader `reader` on `dds_topic` expecting `dds_type`.
    pub fn on_remote_reader(&mut self, dds_topic: &str, dds_type: &str, reader: EndpointId) {
        let n = self.inputs.len();
        for (i, ours) in mismatched(&self.outputs, dds_topic, dds_type) {
            if self.intake.note_conflict(reader) {
                self.intake.report(n + i, Problem::TypeConflict, || {
                    format!("a subscription ({reader:032x}) on {dds_topic} expects {dds_type}, but sillage publishes {ours} there: it will get nothing (check the type parameters)")
                });
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
