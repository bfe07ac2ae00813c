//! Replay: drives an in-process [`Executor`] from a bag in virtual bag time.
//!
//! Each message on a graph input is injected at its log time after the executor has run up to
//! that time, so every node sees inputs and timers exactly as the robot's clock would have
//! delivered them. Every delivered message (inputs and node outputs) goes to the caller's
//! record callback. Topics the graph publishes itself are not injected (they are recomputed),
//! nor are topics no node subscribes to; both are counted. A read error or a failing record
//! callback stops the replay; what was computed until then has been handed to the callback, and
//! the outcome says why it stopped.

use crate::error::BagError;
use crate::reader::Messages;
use sillage_core::executor::{Executor, Record, TopicId};
use sillage_core::Nanos;
use std::collections::{BTreeMap, HashMap, HashSet};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// Which bag topics feed the graph.
#[derive(Debug, Clone, Default)]
pub struct Inputs {
    /// Graph inputs: topic -> the type the subscribing nodes expect.
    pub inject: HashMap<String, &'static str>,
    /// Topics some node publishes (recomputed, so not injected).
    pub outputs: HashSet<String>,
}

/// Why a bag topic was not injected.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum NotInjected {
    /// A node of the graph publishes it.
    Recomputed,
    /// No node subscribes to it.
    Unused,
    /// The graph expects another type on it.
    WrongType(&'static str),
}

/// What a replay did.
#[derive(Debug, Default)]
pub struct Outcome {
    /// Messages injected.
    pub injected: u64,
    /// Bag topics not injected: topic -> (type, count, why).
    pub not_injected: BTreeMap<String, (String, u64, Option<NotInjected>)>,
    /// First and last injected log time [ns].
    pub span: Option<(Nanos, Nanos)>,
    /// Why the replay stopped early, if it did.
    pub error: Option<BagError>,
    /// The stop flag ended the replay before the end of the bag.
    pub stopped: bool,
}

/// Replays `messages` into `ex`; `record` gets every delivered message, `progress` the current
/// log time from time to time.
pub fn replay(
    ex: &mut Executor,
    messages: &mut Messages,
    inputs: &Inputs,
    record: &mut dyn FnMut(&Record) -> Result<(), BagError>,
    progress: &mut dyn FnMut(Nanos),
) -> Outcome {
    replay_until(ex, messages, inputs, record, progress, &AtomicBool::new(false))
}

/// As [`replay`], stopping before the next bag message once `stop` is set (an interrupt);
/// what was injected until then is delivered and [`Outcome::stopped`] says so.
pub fn replay_until(
    ex: &mut Executor,
    messages: &mut Messages,
    inputs: &Inputs,
    record: &mut dyn FnMut(&Record) -> Result<(), BagError>,
    progress: &mut dyn FnMut(Nanos),
    stop: &AtomicBool,
) -> Outcome {
    let mut out = Outcome::default();
    let sink_error: std::cell::RefCell<Option<BagError>> = std::cell::RefCell::new(None);
    let mut n = 0u64;
    let mut sink = |r: &Record| {
        if sink_error.borrow().is_none() {
            if let Err(e) = record(r) {
                *sink_error.borrow_mut() = Some(e);
            }
        }
    };
    let mut last = None;
    // What to do with each bag topic, decided once: the reader hands out one `Arc` per topic.
    let mut seen: Vec<(Arc<str>, &'static str, Result<TopicId, NotInjected>)> = Vec::new();
    loop {
        if stop.load(Ordering::Relaxed) {
            out.stopped = true;
            break;
        }
        let Some(item) = messages.next() else { break };
        let m = match item {
            Ok(m) => m,
            Err(e) => {
                out.error = Some(e);
                break;
            }
        };
        let known = seen.iter().position(|(t, ty, _)| Arc::ptr_eq(t, &m.topic) && std::ptr::eq(*ty, m.type_name));
        let i = known.unwrap_or_else(|| {
            seen.push((m.topic.clone(), m.type_name, decide(ex, inputs, &m.topic, m.type_name)));
            seen.len() - 1
        });
        let id = match &seen[i].2 {
            Ok(id) => *id,
            Err(why) => {
                let e = out.not_injected.entry(m.topic.to_string()).or_insert_with(|| (m.type_name.to_string(), 0, Some(why.clone())));
                e.1 += 1;
                continue;
            }
        };
        let t = m.log_time;
        if let Err(e) = ex.run_until(t, &mut sink) {
            out.error = Some(BagError::Executor { log_time: t, reason: e.to_string() });
            break;
        }
        if let Some(e) = sink_error.borrow_mut().take() {
            out.error = Some(e);
            break;
        }
        if let Err(e) = ex.inject_on(t, id, m.msg) {
            out.error = Some(BagError::Executor { log_time: t, reason: e.to_string() });
            break;
        }
        out.injected += 1;
        out.span = Some(out.span.map_or((t, t), |(a, _)| (a, t)));
        last = Some(t);
        n += 1;
        if n.is_multiple_of(4096) {
            progress(t);
        }
    }
    // Deliver what was injected last (and what it causes), whatever stopped the loop.
    if let Some(t) = last {
        if let Err(e) = ex.run_until(t, &mut sink) {
            out.error.get_or_insert(BagError::Executor { log_time: t, reason: e.to_string() });
        }
        progress(t);
    }
    if let Some(e) = sink_error.into_inner() {
        out.error.get_or_insert(e);
    }
    out
}

/// Whether a bag topic of a type feeds the graph (and on which executor topic), or why not.
fn decide(ex: &Executor, inputs: &Inputs, topic: &str, type_name: &'static str) -> Result<TopicId, NotInjected> {
    match inputs.inject.get(topic) {
        Some(&t) if t == type_name => ex.topic_id(topic).ok_or(NotInjected::Unused),
        Some(&t) => Err(NotInjected::WrongType(t)),
        None if inputs.outputs.contains(topic) => Err(NotInjected::Recomputed),
        None => Err(NotInjected::Unused),
    }
}
