//! The in-process executor: a deterministic virtual-time event loop.
//!
//! Every delivery and timer tick is an event ordered by (time, sequence number): messages are
//! delivered in timestamp order, and events with equal stamps in the order they were scheduled,
//! so the same inputs always give the same outputs, bit for bit. Events stamped at the current
//! time (publications, inputs injected at the time the executor has run to) wait in a FIFO, the
//! others in a binary heap; the next event is the smaller (time, sequence) of the two heads, so
//! the split changes nothing in the order and spares most events the heap. A message a node publishes is
//! delivered at the time it was published (zero transport latency). Timers fire at
//! `start + k * period` exactly. Every delivered message (inputs and publications) is handed to
//! the caller's sink, which is how replay and the simulator record.

use crate::msg::{DiagnosticArray, DiagnosticStatus, Header};
use crate::node::{NodeCore, Outbox};
use crate::{Msg, Nanos};
use std::cmp::{Ordering, Reverse};
use std::collections::{BinaryHeap, HashMap, VecDeque};
use thiserror::Error;

/// Errors of the in-process executor.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum ExecutorError {
    /// Two ports on one topic declare different types.
    #[error("topic '{topic}' has conflicting types '{first}' and '{second}' (node '{node}')")]
    TypeConflict { topic: String, first: String, second: String, node: String },
    /// An injected message's type does not match the topic's declared type.
    #[error("input on topic '{topic}' at t={stamp} ns has type '{got}', the graph expects '{expected}'")]
    InputType { topic: String, stamp: Nanos, got: String, expected: String },
    /// Nodes kept publishing to each other without time advancing.
    #[error("more than {limit} events at t={stamp} ns: a publication loop between nodes?")]
    Runaway { stamp: Nanos, limit: usize },
    /// A timer period must be positive.
    #[error("node '{node}' declares timer {index} with period {period} ns (must be > 0)")]
    BadTimer { node: String, index: usize, period: Nanos },
}

/// How a node is placed in the graph.
#[derive(Debug, Clone, Default)]
pub struct Placement {
    /// Namespace (`""` or `/robot1`); relative topic names resolve inside it.
    pub namespace: String,
    /// Node name override (default: the core's own name).
    pub name: Option<String>,
    /// Topic remaps `from -> to` (declared or resolved names).
    pub remaps: Vec<(String, String)>,
}

/// Resolves a topic name in a namespace, as ROS 2 does for relative, absolute and private
/// (`~/x`) names.
pub fn resolve_topic(name: &str, namespace: &str, node: &str) -> String {
    let ns = namespace.trim_end_matches('/');
    let ns = if ns.is_empty() || ns.starts_with('/') { ns.to_string() } else { format!("/{ns}") };
    if name.starts_with('/') {
        name.to_string()
    } else if let Some(rest) = name.strip_prefix("~/") {
        format!("{ns}/{node}/{rest}")
    } else {
        format!("{ns}/{name}")
    }
}

/// Applies remap rules to a declared topic name and resolves it.
pub fn remap_topic(declared: &str, p: &Placement, node: &str) -> String {
    let resolved = resolve_topic(declared, &p.namespace, node);
    for (from, to) in &p.remaps {
        if from == declared || resolve_topic(from, &p.namespace, node) == resolved {
            return resolve_topic(to, &p.namespace, node);
        }
    }
    resolved
}

/// A topic of an [`Executor`]'s graph, found by [`Executor::topic_id`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct TopicId(usize);

/// One delivered message, as handed to the sink.
#[derive(Debug)]
pub struct Record<'a> {
    /// Delivery time [ns].
    pub stamp: Nanos,
    /// Fully qualified topic name.
    pub topic: &'a str,
    /// Publishing node (`None` for injected inputs).
    pub publisher: Option<&'a str>,
    /// The message.
    pub msg: &'a Msg,
}

enum Kind {
    Deliver { topic: usize, msg: Msg, from: Option<usize> },
    Timer { node: usize, timer: usize },
    Diagnostics,
}

struct Event {
    stamp: Nanos,
    seq: u64,
    kind: Kind,
}
impl PartialEq for Event {
    fn eq(&self, o: &Self) -> bool {
        (self.stamp, self.seq) == (o.stamp, o.seq)
    }
}
impl Eq for Event {}
impl PartialOrd for Event {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}
impl Ord for Event {
    fn cmp(&self, o: &Self) -> Ordering {
        (self.stamp, self.seq).cmp(&(o.stamp, o.seq))
    }
}

struct Slot {
    core: Box<dyn NodeCore>,
    name: String,
    outputs: Vec<usize>,
    timers: Vec<Nanos>,
}

struct Topic {
    name: String,
    type_name: &'static str,
    subs: Vec<(usize, usize)>,
    count: u64,
}

/// Counters the executor keeps.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ExecutorStats {
    /// Events processed.
    pub events: u64,
    /// Injected inputs stamped before the current time (delivered at the current time).
    pub late_inputs: u64,
    /// Publications whose type did not match the output port (dropped).
    pub type_mismatches: u64,
}

/// The deterministic virtual-time executor.
pub struct Executor {
    slots: Vec<Slot>,
    topics: Vec<Topic>,
    by_name: HashMap<String, usize>,
    /// Events stamped later than `now` when they were scheduled.
    queue: BinaryHeap<Reverse<Event>>,
    /// Events stamped `now`, in sequence order (all with the same stamp).
    ready: VecDeque<Event>,
    seq: u64,
    now: Nanos,
    started: bool,
    diag_period: Option<Nanos>,
    diag_topic: Option<usize>,
    outbox: Outbox,
    stats: ExecutorStats,
    /// Events allowed at one instant before [`ExecutorError::Runaway`].
    pub max_events_per_instant: usize,
    instant_events: usize,
}

impl Default for Executor {
    fn default() -> Self {
        Executor::new()
    }
}

impl Executor {
    /// An empty graph.
    pub fn new() -> Executor {
        Executor {
            slots: Vec::new(),
            topics: Vec::new(),
            by_name: HashMap::new(),
            queue: BinaryHeap::new(),
            ready: VecDeque::new(),
            seq: 0,
            now: Nanos::MIN,
            started: false,
            diag_period: None,
            diag_topic: None,
            outbox: Outbox::new(),
            stats: ExecutorStats::default(),
            max_events_per_instant: 1_000_000,
            instant_events: 0,
        }
    }

    fn topic(&mut self, name: &str, type_name: &'static str, node: &str) -> Result<usize, ExecutorError> {
        if let Some(&id) = self.by_name.get(name) {
            let t = &self.topics[id];
            if t.type_name != type_name {
                return Err(ExecutorError::TypeConflict {
                    topic: name.to_string(),
                    first: t.type_name.to_string(),
                    second: type_name.to_string(),
                    node: node.to_string(),
                });
            }
            return Ok(id);
        }
        self.topics.push(Topic { name: name.to_string(), type_name, subs: Vec::new(), count: 0 });
        self.by_name.insert(name.to_string(), self.topics.len() - 1);
        Ok(self.topics.len() - 1)
    }

    /// Adds a node at the root namespace with its own name and no remaps.
    pub fn add(&mut self, core: Box<dyn NodeCore>) -> Result<usize, ExecutorError> {
        self.add_placed(core, &Placement::default())
    }

    /// Adds a node with a namespace, name and remaps; returns its index.
    pub fn add_placed(&mut self, core: Box<dyn NodeCore>, p: &Placement) -> Result<usize, ExecutorError> {
        let name = p.name.clone().unwrap_or_else(|| core.name().to_string());
        let idx = self.slots.len();
        for (i, port) in core.inputs().iter().enumerate() {
            let t = self.topic(&remap_topic(&port.topic, p, &name), port.type_name, &name)?;
            self.topics[t].subs.push((idx, i));
        }
        let mut outputs = Vec::new();
        for port in core.outputs() {
            outputs.push(self.topic(&remap_topic(&port.topic, p, &name), port.type_name, &name)?);
        }
        let timers = core.timers();
        for (index, &period) in timers.iter().enumerate() {
            if period <= 0 {
                return Err(ExecutorError::BadTimer { node: name, index, period });
            }
        }
        let fqn = resolve_topic(&name, &p.namespace, &name);
        self.slots.push(Slot { core, name: fqn, outputs, timers });
        if self.started {
            self.schedule_timers(idx, self.now);
        }
        Ok(idx)
    }

    /// Publishes every node's diagnostics on `/diagnostics` every `period` [ns].
    pub fn enable_diagnostics(&mut self, period: Nanos) -> Result<(), ExecutorError> {
        let t = self.topic("/diagnostics", <DiagnosticArray as crate::RosMessage>::TYPE_NAME, "executor")?;
        self.diag_topic = Some(t);
        self.diag_period = Some(period.max(1));
        Ok(())
    }

    fn push(&mut self, stamp: Nanos, kind: Kind) {
        self.seq += 1;
        let ev = Event { stamp, seq: self.seq, kind };
        // `ready` only ever holds events at `now` (the clock does not move past it while it is
        // not empty), so its sequence numbers increase from front to back.
        if stamp == self.now && self.ready.front().is_none_or(|f| f.stamp == stamp) {
            self.ready.push_back(ev);
        } else {
            self.queue.push(Reverse(ev));
        }
    }

    /// The stamp of the next event, if any.
    fn next_stamp(&self) -> Option<Nanos> {
        match (self.ready.front(), self.queue.peek()) {
            (Some(r), Some(Reverse(q))) => Some(r.stamp.min(q.stamp)),
            (Some(r), None) => Some(r.stamp),
            (None, Some(Reverse(q))) => Some(q.stamp),
            (None, None) => None,
        }
    }

    /// Takes the next event in (stamp, sequence) order.
    fn pop(&mut self) -> Option<Event> {
        let from_ready = match (self.ready.front(), self.queue.peek()) {
            (Some(r), Some(Reverse(q))) => (r.stamp, r.seq) < (q.stamp, q.seq),
            (Some(_), None) => true,
            (None, _) => false,
        };
        if from_ready {
            self.ready.pop_front()
        } else {
            self.queue.pop().map(|Reverse(e)| e)
        }
    }

    fn schedule_timers(&mut self, node: usize, t0: Nanos) {
        let periods = self.slots[node].timers.clone();
        for (timer, period) in periods.into_iter().enumerate() {
            self.push(t0.saturating_add(period), Kind::Timer { node, timer });
        }
    }

    /// Starts the clock at `t0`: timers first fire at `t0 + period`. Called implicitly by the
    /// first [`Executor::inject`] or [`Executor::run_until`].
    pub fn start(&mut self, t0: Nanos) {
        if self.started {
            return;
        }
        self.started = true;
        self.now = t0;
        for n in 0..self.slots.len() {
            self.schedule_timers(n, t0);
        }
        if let Some(p) = self.diag_period {
            self.push(t0.saturating_add(p), Kind::Diagnostics);
        }
    }

    /// The type a topic carries, if some node uses it.
    pub fn topic_type(&self, topic: &str) -> Option<&'static str> {
        self.by_name.get(topic).map(|&t| self.topics[t].type_name)
    }

    /// Topics that some node subscribes to (the graph's inputs and internal links).
    pub fn subscribed_topics(&self) -> Vec<(&str, &'static str)> {
        self.topics.iter().filter(|t| !t.subs.is_empty()).map(|t| (t.name.as_str(), t.type_name)).collect()
    }

    /// Every topic with its type and the number of messages delivered on it so far.
    pub fn topic_counts(&self) -> Vec<(&str, &'static str, u64)> {
        self.topics.iter().map(|t| (t.name.as_str(), t.type_name, t.count)).collect()
    }

    /// Fully qualified names of the nodes, in the order they were added.
    pub fn node_names(&self) -> Vec<&str> {
        self.slots.iter().map(|s| s.name.as_str()).collect()
    }

    /// The node at `index`, to read its state after a run.
    pub fn node(&self, index: usize) -> Option<&dyn NodeCore> {
        self.slots.get(index).map(|s| s.core.as_ref())
    }

    /// The node at `index`, mutably (for parameter changes between runs).
    pub fn node_mut(&mut self, index: usize) -> Option<&mut (dyn NodeCore + 'static)> {
        self.slots.get_mut(index).map(|s| s.core.as_mut())
    }

    /// Current virtual time [ns].
    pub fn now(&self) -> Nanos {
        self.now
    }

    /// Counters.
    pub fn stats(&self) -> &ExecutorStats {
        &self.stats
    }

    /// Queues an outside message on `topic` at `stamp`. Topics no node uses are ignored
    /// (returns `Ok(false)`); a message stamped before the current time is delivered now and
    /// counted in [`ExecutorStats::late_inputs`].
    pub fn inject(&mut self, stamp: Nanos, topic: &str, msg: Msg) -> Result<bool, ExecutorError> {
        self.start(stamp);
        let Some(&t) = self.by_name.get(topic) else { return Ok(false) };
        self.inject_on(stamp, TopicId(t), msg).map(|()| true)
    }

    /// The id of a topic of the graph, for [`Executor::inject_on`] (`None`: no node uses it).
    pub fn topic_id(&self, topic: &str) -> Option<TopicId> {
        self.by_name.get(topic).map(|&t| TopicId(t))
    }

    /// As [`Executor::inject`], on a topic found once by [`Executor::topic_id`] (no name
    /// lookup per message).
    pub fn inject_on(&mut self, stamp: Nanos, topic: TopicId, msg: Msg) -> Result<(), ExecutorError> {
        self.start(stamp);
        let t = topic.0;
        let expected = self.topics.get(t).map(|tp| tp.type_name).ok_or_else(|| ExecutorError::InputType {
            topic: format!("(topic id {t})"),
            stamp,
            got: msg.type_name().to_string(),
            expected: "a topic of this executor".to_string(),
        })?;
        let got = msg.type_name();
        // Type names are the vocabulary's static strings: equal pointers are the common case.
        if !std::ptr::eq(got, expected) && got != expected {
            let topic = self.topics[t].name.clone();
            return Err(ExecutorError::InputType { topic, stamp, got: got.to_string(), expected: expected.to_string() });
        }
        let stamp = if stamp < self.now {
            self.stats.late_inputs += 1;
            self.now
        } else {
            stamp
        };
        self.push(stamp, Kind::Deliver { topic: t, msg, from: None });
        Ok(())
    }

    /// Processes every event stamped at or before `t`, handing each delivered message to
    /// `sink`; the clock ends at `t`.
    pub fn run_until(&mut self, t: Nanos, sink: &mut dyn FnMut(&Record)) -> Result<(), ExecutorError> {
        self.start(t);
        while let Some(stamp) = self.next_stamp() {
            if stamp > t {
                break;
            }
            let Some(ev) = self.pop() else { break };
            if ev.stamp != self.now {
                self.instant_events = 0;
            }
            self.now = ev.stamp;
            self.instant_events += 1;
            if self.instant_events > self.max_events_per_instant {
                return Err(ExecutorError::Runaway { stamp: self.now, limit: self.max_events_per_instant });
            }
            self.stats.events += 1;
            self.process(ev, sink);
        }
        if t > self.now {
            self.now = t;
            self.instant_events = 0;
        }
        Ok(())
    }

    fn process(&mut self, ev: Event, sink: &mut dyn FnMut(&Record)) {
        let now = ev.stamp;
        match ev.kind {
            Kind::Deliver { topic, msg, from } => {
                let tp = &mut self.topics[topic];
                tp.count += 1;
                sink(&Record {
                    stamp: now,
                    topic: &tp.name,
                    publisher: from.map(|n| self.slots[n].name.as_str()),
                    msg: &msg,
                });
                for i in 0..self.topics[topic].subs.len() {
                    let (node, input) = self.topics[topic].subs[i];
                    self.slots[node].core.on_message(now, input, &msg, &mut self.outbox);
                    self.flush(node, now);
                }
            }
            Kind::Timer { node, timer } => {
                let period = self.slots[node].timers[timer];
                self.push(now.saturating_add(period), Kind::Timer { node, timer });
                self.slots[node].core.on_timer(now, timer, &mut self.outbox);
                self.flush(node, now);
            }
            Kind::Diagnostics => {
                if let (Some(p), Some(t)) = (self.diag_period, self.diag_topic) {
                    self.push(now.saturating_add(p), Kind::Diagnostics);
                    let mut status: Vec<DiagnosticStatus> = Vec::new();
                    for s in &self.slots {
                        s.core.diagnostics(now, &mut status);
                    }
                    let msg = Msg::DiagnosticArray(DiagnosticArray { header: Header::new(now, ""), status });
                    self.push(now, Kind::Deliver { topic: t, msg, from: None });
                }
            }
        }
    }

    fn flush(&mut self, node: usize, now: Nanos) {
        if self.outbox.items.is_empty() {
            return;
        }
        // Taken out and put back, so the outbox keeps its allocation.
        let mut items = std::mem::take(&mut self.outbox.items);
        for (out, msg) in items.drain(..) {
            match self.slots[node].outputs.get(out) {
                Some(&t) if std::ptr::eq(self.topics[t].type_name, msg.type_name()) || self.topics[t].type_name == msg.type_name() => {
                    self.push(now, Kind::Deliver { topic: t, msg, from: Some(node) });
                }
                _ => self.stats.type_mismatches += 1,
            }
        }
        self.outbox.items = items;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::msg::{Bool, Vector3, Vector3Stamped};
    use crate::node::{Port, Qos};
    use crate::params::ParamError;

    /// Doubles the x of every vector it gets and counts ticks on a 100 ms timer.
    struct Doubler {
        ticks: u32,
    }
    impl NodeCore for Doubler {
        fn name(&self) -> &str {
            "doubler"
        }
        fn inputs(&self) -> Vec<Port> {
            vec![Port::of::<Vector3Stamped>("wind", Qos::SensorData)]
        }
        fn outputs(&self) -> Vec<Port> {
            vec![Port::of::<Vector3Stamped>("wind2", Qos::Reliable), Port::of::<Bool>("tick", Qos::Reliable)]
        }
        fn timers(&self) -> Vec<Nanos> {
            vec![100_000_000]
        }
        fn on_message(&mut self, _now: Nanos, _i: usize, msg: &Msg, out: &mut Outbox) {
            if let Msg::Vector3Stamped(m) = msg {
                let mut m = m.clone();
                m.vector.x *= 2.0;
                out.publish(0, m);
            }
        }
        fn on_timer(&mut self, _now: Nanos, _t: usize, out: &mut Outbox) {
            self.ticks += 1;
            out.publish(1, Bool { data: self.ticks % 2 == 0 });
        }
        fn params_yaml(&self) -> serde_yaml::Value {
            serde_yaml::Value::Null
        }
        fn set_params_yaml(&mut self, _v: &serde_yaml::Value) -> Result<(), ParamError> {
            Ok(())
        }
    }

    fn wind(t: Nanos, x: f64) -> Msg {
        Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x, y: 0.0, z: 0.0 } }.into()
    }

    fn run_once() -> Vec<(Nanos, String, Vec<u8>)> {
        let mut ex = Executor::new();
        ex.add_placed(Box::new(Doubler { ticks: 0 }), &Placement { namespace: "/r1".into(), ..Default::default() })
            .expect("adds");
        let mut log = Vec::new();
        let mut sink = |r: &Record| log.push((r.stamp, r.topic.to_string(), r.msg.encode().expect("encodes")));
        for k in 0..20i64 {
            let t = 1_000_000_000 + k * 37_000_000;
            ex.run_until(t, &mut sink).expect("runs");
            ex.inject(t, "/r1/wind", wind(t, k as f64)).expect("injects");
        }
        ex.run_until(2_000_000_000, &mut sink).expect("runs");
        log
    }

    #[test]
    fn deterministic_and_in_timestamp_order() {
        let a = run_once();
        let b = run_once();
        assert_eq!(a, b, "two runs must be bit-identical");
        assert!(a.windows(2).all(|w| w[0].0 <= w[1].0), "records in stamp order");
        let doubled = a.iter().filter(|r| r.1 == "/r1/wind2").count();
        assert_eq!(doubled, 20);
        // Timers at t0 + k*100 ms for t0 = 1 s up to 2 s: 10 ticks.
        assert_eq!(a.iter().filter(|r| r.1 == "/r1/tick").count(), 10);
        // A publication is delivered right after the input that caused it.
        let i = a.iter().position(|r| r.1 == "/r1/wind").expect("input");
        assert_eq!(a[i + 1].1, "/r1/wind2");
        assert_eq!(a[i + 1].0, a[i].0);
    }

    #[test]
    fn late_inputs_and_wrong_types_are_reported() {
        let mut ex = Executor::new();
        ex.add(Box::new(Doubler { ticks: 0 })).expect("adds");
        let mut n = 0;
        ex.run_until(5_000, &mut |_r: &Record| n += 1).expect("runs");
        ex.inject(10, "/wind", wind(10, 1.0)).expect("late but fine");
        assert_eq!(ex.stats().late_inputs, 1);
        assert!(matches!(ex.inject(6_000, "/wind", Bool { data: true }.into()), Err(ExecutorError::InputType { .. })));
        assert_eq!(ex.inject(6_000, "/unused", Bool { data: true }.into()), Ok(false));
    }

    #[test]
    fn names_resolve_like_ros() {
        assert_eq!(resolve_topic("chem", "", "n"), "/chem");
        assert_eq!(resolve_topic("chem", "/robot1", "n"), "/robot1/chem");
        assert_eq!(resolve_topic("chem", "robot1/", "n"), "/robot1/chem");
        assert_eq!(resolve_topic("/abs", "/robot1", "n"), "/abs");
        assert_eq!(resolve_topic("~/dbg", "/r", "n"), "/r/n/dbg");
        let p = Placement { namespace: "/r".into(), remaps: vec![("chem".into(), "sensors/chem".into())], name: None };
        assert_eq!(remap_topic("chem", &p, "n"), "/r/sensors/chem");
        let p = Placement { namespace: "".into(), remaps: vec![("/wind".into(), "/anemo".into())], name: None };
        assert_eq!(remap_topic("wind", &p, "n"), "/anemo");
    }
}
