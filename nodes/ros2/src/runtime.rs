//! [`NodeRuntime`]: one hosted node core behind a byte-level interface, the part of the ROS 2
//! executor that does not need ROS (so it is unit-tested here).
//!
//! The transport hands in CDR buffers (header included) with the current ROS time; the
//! runtime decodes them with sillage's codec ([`Msg::decode`]), calls the core, encodes what
//! the core published ([`Msg::encode_into`]) and hands the buffers to a sink with their output
//! index. It counts what it received, published and could not handle, for the diagnostics.
//! Parameters are read at start-up from flat ROS parameters ([`NodeRuntime::start`]) and can
//! change at run time ([`NodeRuntime::set_param`]): a change is validated like a parameter
//! file at start-up, and an invalid one is refused with the old values kept.

use crate::param_value::{coerce_like, to_flat, to_nested, ParamValue, Unrepresentable};
use crate::spec::{is_reserved, NodeSpec};
use sillage_core::cdr::CdrError;
use sillage_core::msg::{DiagnosticStatus, Header, Twist, TwistStamped};
use sillage_core::params::{set_key, ParamError, ParamFileError};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, RosMessage};
use thiserror::Error;

/// Errors of a hosted node.
#[derive(Debug, Error)]
pub enum RuntimeError {
    /// The start-up parameters are not valid for the node.
    #[error(transparent)]
    Params(#[from] ParamFileError),
    /// A start-up parameter cannot be used (ROS type or shape).
    #[error("{node}: {source}")]
    Unrepresentable {
        /// Fully qualified node name.
        node: String,
        /// The problem.
        source: Unrepresentable,
    },
    /// A node that publishes `/clock` was started with `use_sim_time: true`: it would wait
    /// for the clock it is meant to drive.
    #[error("{node}: publishes /clock, so it must run on wall time: set use_sim_time to false for this node (only the nodes it drives take true)")]
    ClockLoop {
        /// Fully qualified node name.
        node: String,
    },
    /// A received buffer could not be decoded as the topic's type.
    #[error("{node}: input '{topic}' ({type_name}): {source}")]
    Decode {
        /// Fully qualified node name.
        node: String,
        /// Declared topic.
        topic: String,
        /// ROS type of the topic.
        type_name: &'static str,
        /// Codec error (names the byte offset).
        source: CdrError,
    },
    /// The core published something its output cannot carry, or it could not be encoded.
    #[error("{node}: output '{topic}': {reason}")]
    Output {
        /// Fully qualified node name.
        node: String,
        /// Declared topic (or the output index if there is none).
        topic: String,
        /// What went wrong.
        reason: String,
    },
    /// The transport named an input, output or timer the node does not have.
    #[error("{node}: no {what} with index {index}")]
    NoSuchPort {
        /// Fully qualified node name.
        node: String,
        /// "input", "output" or "timer".
        what: &'static str,
        /// The index.
        index: usize,
    },
}

/// Why a run-time parameter change was refused; the node keeps its old values.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum ParamChangeError {
    /// The node has no such parameter.
    #[error("'{key}' is not a parameter of {node}")]
    Unknown {
        /// Dotted key.
        key: String,
        /// Fully qualified node name.
        node: String,
    },
    /// A ROS parameter that is only read at start-up.
    #[error("'{key}' is read at start-up only; restart the node to change it")]
    StartupOnly {
        /// Dotted key.
        key: String,
    },
    /// The value cannot be a parameter value.
    #[error(transparent)]
    Unrepresentable(#[from] Unrepresentable),
    /// The node's validation refused the value.
    #[error("{node}: {error}")]
    Invalid {
        /// Fully qualified node name.
        node: String,
        /// The node's error (names the key and the allowed range).
        error: ParamError,
    },
    /// The value is valid but changes the node's topics, types or timer periods, which the
    /// transport fixed at start-up.
    #[error("'{key}' changes the node's {what}; set it in the parameter file and restart the node")]
    NeedsRestart {
        /// Dotted key.
        key: String,
        /// "topics" or "timer periods".
        what: &'static str,
    },
}

impl ParamChangeError {
    fn from_file_error(node: &str, e: ParamFileError) -> ParamChangeError {
        match e {
            ParamFileError::Param { error, .. } => ParamChangeError::Invalid { node: node.to_string(), error },
            other => ParamChangeError::Invalid {
                node: node.to_string(),
                error: ParamError::Invalid { key: String::new(), reason: other.to_string() },
            },
        }
    }
}

/// Counters of one hosted node, since start-up.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RuntimeStats {
    /// Buffers received per input.
    pub received: Vec<u64>,
    /// Buffers per input that could not be decoded (dropped).
    pub decode_errors: Vec<u64>,
    /// Messages published per output.
    pub published: Vec<u64>,
    /// Publications the transport reported as failed, per output.
    pub publish_errors: Vec<u64>,
    /// Core publications dropped: wrong type for the output, no such output, or not
    /// encodable.
    pub bad_outputs: u64,
    /// Accepted run-time parameter changes.
    pub params_changed: u64,
    /// Refused run-time parameter changes.
    pub params_refused: u64,
}

impl RuntimeStats {
    fn problems(&self) -> u64 {
        self.decode_errors.iter().sum::<u64>() + self.publish_errors.iter().sum::<u64>() + self.bad_outputs
    }
}

/// Whether the `count`-th occurrence of a repeated problem should be logged: the 1st, 10th,
/// 100th, ... (so a flood of bad messages does not flood the log).
pub fn should_log(count: u64) -> bool {
    count > 0 && {
        let mut c = count;
        while c % 10 == 0 {
            c /= 10;
        }
        c == 1
    }
}

/// What a core's ports and timers are; a parameter change may not alter it.
#[derive(Debug, Clone, PartialEq)]
struct Shape {
    inputs: Vec<Port>,
    outputs: Vec<Port>,
    timers: Vec<Nanos>,
}

impl Shape {
    fn of(core: &dyn NodeCore) -> Shape {
        Shape { inputs: core.inputs(), outputs: core.outputs(), timers: core.timers() }
    }

    fn difference(&self, other: &Shape) -> Option<&'static str> {
        if self.inputs != other.inputs || self.outputs != other.outputs {
            Some("topics or message types")
        } else if self.timers != other.timers {
            Some("timer periods")
        } else {
            None
        }
    }
}

/// One hosted node core.
pub struct NodeRuntime {
    spec: NodeSpec,
    fqn: String,
    core: Box<dyn NodeCore>,
    shape: Shape,
    outbox: Outbox,
    buf: Vec<u8>,
    stats: RuntimeStats,
    reported_problems: u64,
    last_problem: Option<String>,
}

impl std::fmt::Debug for NodeRuntime {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("NodeRuntime").field("fqn", &self.fqn).field("stats", &self.stats).finish_non_exhaustive()
    }
}

impl NodeRuntime {
    /// Builds the core of `spec` for node `fqn` from the flat ROS parameters the node was
    /// started with (`--params-file`, `-p`; ROS's own, like `use_sim_time`, and values that
    /// are not set are skipped).
    /// Integers are accepted for doubles; unknown names and invalid values are errors that
    /// name the key, with `source` saying where the values came from.
    pub fn start(spec: &NodeSpec, fqn: &str, flat: &[(String, ParamValue)], source: &str) -> Result<NodeRuntime, RuntimeError> {
        let template = to_flat(&spec.default_params)
            .map_err(|source| RuntimeError::Unrepresentable { node: fqn.to_string(), source })?;
        let mut given: Vec<(String, ParamValue)> = Vec::new();
        // ROS's own parameters stay with ROS; a value rcl could not type (an empty list in a
        // parameter file arrives as "not set") keeps the default.
        for (k, v) in flat.iter().filter(|(k, v)| !is_reserved(k) && *v != ParamValue::NotSet) {
            let v = match template.iter().find(|(t, _)| t == k) {
                Some((_, t)) => coerce_like(t, v.clone()),
                None => v.clone(), // the builder reports the unknown key
            };
            given.push((k.clone(), v));
        }
        let nested = to_nested(given.iter().map(|(k, v)| (k.as_str(), v)));
        let core = (spec.build)(&nested, fqn, source)?;
        to_flat(&core.params_yaml()).map_err(|source| RuntimeError::Unrepresentable { node: fqn.to_string(), source })?;
        let sim_time = flat.iter().any(|(k, v)| k == "use_sim_time" && *v == ParamValue::Bool(true));
        if sim_time && core.outputs().iter().any(|p| p.topic == "/clock") {
            return Err(RuntimeError::ClockLoop { node: fqn.to_string() });
        }
        let shape = Shape::of(core.as_ref());
        let stats = RuntimeStats {
            received: vec![0; shape.inputs.len()],
            decode_errors: vec![0; shape.inputs.len()],
            published: vec![0; shape.outputs.len()],
            publish_errors: vec![0; shape.outputs.len()],
            ..RuntimeStats::default()
        };
        Ok(NodeRuntime {
            spec: spec.clone(),
            fqn: fqn.to_string(),
            core,
            shape,
            outbox: Outbox::new(),
            buf: Vec::with_capacity(256),
            stats,
            reported_problems: 0,
            last_problem: None,
        })
    }

    /// Fully qualified node name.
    pub fn fqn(&self) -> &str {
        &self.fqn
    }

    /// The hosted core.
    pub fn core(&self) -> &dyn NodeCore {
        self.core.as_ref()
    }

    /// Inputs, as fixed at start-up.
    pub fn inputs(&self) -> &[Port] {
        &self.shape.inputs
    }

    /// Outputs, as fixed at start-up.
    pub fn outputs(&self) -> &[Port] {
        &self.shape.outputs
    }

    /// Timer periods [ns], as fixed at start-up.
    pub fn timers(&self) -> &[Nanos] {
        &self.shape.timers
    }

    /// Counters since start-up.
    pub fn stats(&self) -> &RuntimeStats {
        &self.stats
    }

    fn note(&mut self, e: &RuntimeError) {
        self.last_problem = Some(e.to_string());
    }

    /// A buffer arrived on input `input` at ROS time `now` [ns]; what the core publishes goes
    /// to `sink(output index, CDR buffer)`. An undecodable buffer is counted, dropped and
    /// returned as the error (publication problems are counted and kept for diagnostics).
    pub fn on_input(&mut self, now: Nanos, input: usize, bytes: &[u8], sink: &mut dyn FnMut(usize, &[u8])) -> Result<(), RuntimeError> {
        let Some(port) = self.shape.inputs.get(input) else {
            return Err(RuntimeError::NoSuchPort { node: self.fqn.clone(), what: "input", index: input });
        };
        self.stats.received[input] += 1;
        let msg = match Msg::decode(port.type_name, bytes) {
            Ok(m) => m,
            Err(source) => {
                self.stats.decode_errors[input] += 1;
                let e = RuntimeError::Decode { node: self.fqn.clone(), topic: port.topic.clone(), type_name: port.type_name, source };
                self.note(&e);
                return Err(e);
            }
        };
        self.core.on_message(now, input, &msg, &mut self.outbox);
        self.flush(sink)
    }

    /// Timer `timer` fired at ROS time `now` [ns].
    pub fn on_timer(&mut self, now: Nanos, timer: usize, sink: &mut dyn FnMut(usize, &[u8])) -> Result<(), RuntimeError> {
        if timer >= self.shape.timers.len() {
            return Err(RuntimeError::NoSuchPort { node: self.fqn.clone(), what: "timer", index: timer });
        }
        self.core.on_timer(now, timer, &mut self.outbox);
        self.flush(sink)
    }

    /// Encodes and hands out what the core published; the first problem is returned after
    /// every good message went out.
    fn flush(&mut self, sink: &mut dyn FnMut(usize, &[u8])) -> Result<(), RuntimeError> {
        let mut first: Option<RuntimeError> = None;
        let items: Vec<(usize, Msg)> = self.outbox.drain().collect();
        for (out, msg) in items {
            let problem = match self.shape.outputs.get(out) {
                None => Some(("?".to_string(), format!("the core published on output {out}, which does not exist"))),
                Some(port) if port.type_name != msg.type_name() => {
                    Some((port.topic.clone(), format!("the core published {}, the output carries {}", msg.type_name(), port.type_name)))
                }
                Some(port) => match msg.encode_into(&mut self.buf) {
                    Ok(()) => {
                        self.stats.published[out] += 1;
                        sink(out, &self.buf);
                        None
                    }
                    Err(e) => Some((port.topic.clone(), e.to_string())),
                },
            };
            if let Some((topic, reason)) = problem {
                self.stats.bad_outputs += 1;
                let e = RuntimeError::Output { node: self.fqn.clone(), topic, reason };
                self.note(&e);
                first.get_or_insert(e);
            }
        }
        first.map_or(Ok(()), Err)
    }

    /// The transport could not publish on output `output`.
    pub fn note_publish_error(&mut self, output: usize, reason: &str) {
        if let Some(c) = self.stats.publish_errors.get_mut(output) {
            *c += 1;
        }
        let topic = self.shape.outputs.get(output).map(|p| p.topic.clone()).unwrap_or_default();
        self.last_problem = Some(format!("publishing on '{topic}' failed: {reason}"));
    }

    /// Zero velocity commands for every velocity output (Twist or TwistStamped), stamped
    /// `now`, for a stop on shutdown. `frame_id` of stamped commands is `base_link` (REP 105).
    pub fn stop_commands(&mut self, now: Nanos, sink: &mut dyn FnMut(usize, &[u8])) -> Result<(), RuntimeError> {
        for (i, port) in self.shape.outputs.iter().enumerate() {
            if port.type_name == Twist::TYPE_NAME {
                self.outbox.publish(i, Twist::default());
            } else if port.type_name == TwistStamped::TYPE_NAME {
                self.outbox.publish(i, TwistStamped { header: Header::new(now, "base_link"), twist: Twist::default() });
            }
        }
        self.flush(sink)
    }

    /// Current parameters as flat ROS parameters (what `ros2 param list/get` shows).
    pub fn flat_params(&self) -> Vec<(String, ParamValue)> {
        // Representability was checked at start-up and on every change.
        to_flat(&self.core.params_yaml()).unwrap_or_default()
    }

    /// The current value of one parameter.
    pub fn param(&self, key: &str) -> Option<ParamValue> {
        self.flat_params().into_iter().find(|(k, _)| k == key).map(|(_, v)| v)
    }

    /// The nested parameters with `key` set to `value`, after the type checks.
    fn candidate(&self, key: &str, value: ParamValue) -> Result<serde_yaml::Value, ParamChangeError> {
        if is_reserved(key) {
            return Err(ParamChangeError::StartupOnly { key: key.to_string() });
        }
        let current = self.core.params_yaml();
        let template = self
            .flat_params()
            .into_iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v)
            .ok_or_else(|| ParamChangeError::Unknown { key: key.to_string(), node: self.fqn.clone() })?;
        let value = coerce_like(&template, value);
        Ok(set_key(&current, key, value.to_yaml()))
    }

    /// Validates a change without applying it (a fresh core is built from the candidate
    /// parameters, exactly as at start-up).
    pub fn check_param(&self, key: &str, value: ParamValue) -> Result<(), ParamChangeError> {
        let candidate = self.candidate(key, value)?;
        let fresh = (self.spec.build)(&candidate, &self.fqn, "parameter change")
            .map_err(|e| ParamChangeError::from_file_error(&self.fqn, e))?;
        to_flat(&fresh.params_yaml())?;
        match self.shape.difference(&Shape::of(fresh.as_ref())) {
            Some(what) => Err(ParamChangeError::NeedsRestart { key: key.to_string(), what }),
            None => Ok(()),
        }
    }

    /// Applies a run-time change of one parameter; on success returns the value as the node
    /// now holds it (integers given for doubles come back as doubles). On error nothing
    /// changed, and the refusal is counted for the diagnostics.
    pub fn set_param(&mut self, key: &str, value: ParamValue) -> Result<ParamValue, ParamChangeError> {
        let result = self.try_set(key, value);
        match &result {
            Ok(_) => self.stats.params_changed += 1,
            Err(e) => {
                self.stats.params_refused += 1;
                self.last_problem = Some(format!("refused parameter change: {e}"));
            }
        }
        result
    }

    fn try_set(&mut self, key: &str, value: ParamValue) -> Result<ParamValue, ParamChangeError> {
        let old = self.core.params_yaml();
        let candidate = self.candidate(key, value)?;
        self.core
            .set_params_yaml(&candidate)
            .map_err(|error| ParamChangeError::Invalid { node: self.fqn.clone(), error })?;
        let restore = |core: &mut Box<dyn NodeCore>| {
            // `old` was valid a moment ago, so restoring it cannot fail.
            let _ = core.set_params_yaml(&old);
        };
        if let Err(e) = to_flat(&self.core.params_yaml()) {
            restore(&mut self.core);
            return Err(e.into());
        }
        if let Some(what) = self.shape.difference(&Shape::of(self.core.as_ref())) {
            restore(&mut self.core);
            return Err(ParamChangeError::NeedsRestart { key: key.to_string(), what });
        }
        self.param(key).ok_or_else(|| ParamChangeError::Unknown { key: key.to_string(), node: self.fqn.clone() })
    }

    /// The executor's own status of this node, "`<fqn without the leading />: executor`"
    /// (unique when several robots share /diagnostics): WARN when messages were
    /// dropped or publications failed since the last report, else OK; values give the
    /// counters. Call once per diagnostics period.
    pub fn executor_status(&mut self) -> DiagnosticStatus {
        let problems = self.stats.problems();
        let new = problems.saturating_sub(self.reported_problems);
        self.reported_problems = problems;
        let (level, message) = if new > 0 {
            (DiagnosticStatus::WARN, format!("{new} problem(s) since the last report; last: {}", self.last_problem.as_deref().unwrap_or("?")))
        } else {
            (DiagnosticStatus::OK, "running".to_string())
        };
        let mut values: Vec<(String, String)> = vec![("node".into(), self.fqn.clone())];
        for (i, port) in self.shape.inputs.iter().enumerate() {
            values.push((format!("in {}: received", port.topic), self.stats.received[i].to_string()));
            if self.stats.decode_errors[i] > 0 {
                values.push((format!("in {}: undecodable", port.topic), self.stats.decode_errors[i].to_string()));
            }
        }
        for (i, port) in self.shape.outputs.iter().enumerate() {
            values.push((format!("out {}: published", port.topic), self.stats.published[i].to_string()));
            if self.stats.publish_errors[i] > 0 {
                values.push((format!("out {}: failed", port.topic), self.stats.publish_errors[i].to_string()));
            }
        }
        values.push(("bad core outputs".into(), self.stats.bad_outputs.to_string()));
        values.push(("parameter changes accepted".into(), self.stats.params_changed.to_string()));
        values.push(("parameter changes refused".into(), self.stats.params_refused.to_string()));
        if let Some(p) = &self.last_problem {
            values.push(("last problem".into(), p.clone()));
        }
        let pairs: Vec<(&str, String)> = values.iter().map(|(k, v)| (k.as_str(), v.clone())).collect();
        DiagnosticStatus::with(level, &format!("{}: executor", self.fqn.trim_start_matches('/')), &message, &pairs)
    }
}

#[cfg(test)]
#[path = "runtime_tests.rs"]
mod tests;
