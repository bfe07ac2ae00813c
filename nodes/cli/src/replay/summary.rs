//! The replay summary: message counts per topic and publisher, time span, per-node figures
//! (messages in and out, last diagnostics), the mode timeline from the search state, and what
//! was skipped. Gathered record by record with bounded memory; printed as text and written as
//! `summary.json`.

use serde::Serialize;
use sillage_core::executor::Record;
use sillage_core::msg::{DiagnosticStatus, SearchState};
use sillage_core::{Msg, Nanos};
use std::collections::BTreeMap;

/// Mode transitions kept in the timeline; later ones are only counted.
const MAX_TRANSITIONS: usize = 10_000;

/// Name of a `SearchState.mode` value.
pub fn mode_name(mode: u8) -> &'static str {
    SearchState::mode_name(mode)
}

/// One mode change.
#[derive(Debug, Clone, Serialize)]
pub struct Transition {
    /// Seconds since the start of the replay.
    pub t: f64,
    /// Mode entered.
    pub mode: &'static str,
    /// Why (the arbiter's words).
    pub reason: String,
}

/// Last diagnostics status of one part of a node.
#[derive(Debug, Clone, Serialize)]
pub struct Status {
    /// 0 OK, 1 WARN, 2 ERROR, 3 STALE.
    pub level: u8,
    /// The status message.
    pub message: String,
    /// Key-value figures.
    pub values: BTreeMap<String, String>,
}

/// Gathers the summary while records flow.
#[derive(Debug, Default)]
pub struct Collector {
    t0: Option<Nanos>,
    last: Option<Nanos>,
    /// (publisher, topic, count), in order of first appearance (a handful of pairs, looked up
    /// without allocating).
    by_publisher: Vec<(String, String, u64)>,
    transitions: Vec<Transition>,
    transitions_dropped: u64,
    mode: Option<(u8, Nanos)>,
    time_in_mode: BTreeMap<&'static str, f64>,
    /// Last status by name, as received (copied into place, reusing its strings).
    diagnostics: BTreeMap<String, DiagnosticStatus>,
}

impl Collector {
    /// A collector whose times count from `t0` [ns] (the replay start).
    pub fn new(t0: Option<Nanos>) -> Collector {
        Collector { t0, ..Default::default() }
    }

    fn rel(&self, t: Nanos) -> f64 {
        sillage_core::time::secs(t - self.t0.unwrap_or(t))
    }

    /// Takes one delivered message.
    pub fn record(&mut self, r: &Record) {
        if self.t0.is_none() {
            self.t0 = Some(r.stamp);
        }
        self.last = Some(r.stamp);
        let who = r.publisher.unwrap_or("(input)");
        match self.by_publisher.iter_mut().find(|(w, t, _)| t == r.topic && w == who) {
            Some((_, _, n)) => *n += 1,
            None => self.by_publisher.push((who.to_string(), r.topic.to_string(), 1)),
        }
        match r.msg {
            Msg::SearchState(s) => {
                let changed = self.mode.is_none_or(|(m, _)| m != s.mode);
                if changed {
                    self.close_mode(r.stamp);
                    self.mode = Some((s.mode, r.stamp));
                    let tr = Transition { t: self.rel(r.stamp), mode: mode_name(s.mode), reason: s.reason.clone() };
                    if self.transitions.len() < MAX_TRANSITIONS {
                        self.transitions.push(tr);
                    } else {
                        self.transitions_dropped += 1;
                    }
                }
            }
            Msg::DiagnosticArray(d) => {
                for s in &d.status {
                    match self.diagnostics.get_mut(s.name.as_str()) {
                        Some(last) => copy_status(last, s),
                        None => {
                            self.diagnostics.insert(s.name.clone(), s.clone());
                        }
                    }
                }
            }
            _ => {}
        }
    }

    fn status(&self, name: &str) -> Option<Status> {
        let s = self.diagnostics.get(name)?;
        let values = s.values.iter().map(|kv| (kv.key.clone(), kv.value.clone())).collect();
        Some(Status { level: s.level, message: s.message.clone(), values })
    }

    fn close_mode(&mut self, now: Nanos) {
        if let Some((m, since)) = self.mode {
            *self.time_in_mode.entry(mode_name(m)).or_default() += sillage_core::time::secs(now - since);
        }
    }

    /// Ends the collection at the last record.
    pub fn finish(&mut self) {
        if let Some(t) = self.last {
            self.close_mode(t);
            if let Some((m, _)) = self.mode {
                self.mode = Some((m, t));
            }
        }
    }
}

/// Copies `src` into `dst` keeping `dst`'s string buffers (a node's statuses keep their shape
/// from one second to the next, so this allocates nothing in the steady state).
fn copy_status(dst: &mut DiagnosticStatus, src: &DiagnosticStatus) {
    dst.level = src.level;
    dst.name.clone_from(&src.name);
    dst.message.clone_from(&src.message);
    dst.hardware_id.clone_from(&src.hardware_id);
    dst.values.truncate(src.values.len());
    for (d, s) in dst.values.iter_mut().zip(&src.values) {
        d.key.clone_from(&s.key);
        d.value.clone_from(&s.value);
    }
    let have = dst.values.len();
    dst.values.extend(src.values[have..].iter().cloned());
}

/// One topic of the output.
#[derive(Debug, Clone, Serialize)]
pub struct TopicLine {
    /// Topic.
    pub topic: String,
    /// Type.
    pub type_name: String,
    /// Messages delivered.
    pub count: u64,
    /// `input` or the publishing nodes.
    pub origin: String,
}

/// A bag topic that was not used.
#[derive(Debug, Clone, Serialize)]
pub struct SkippedLine {
    /// Topic.
    pub topic: String,
    /// Type.
    pub type_name: String,
    /// Messages.
    pub count: u64,
    /// Why.
    pub reason: String,
}

/// Figures of one node.
#[derive(Debug, Clone, Serialize)]
pub struct NodeLine {
    /// Fully qualified node name.
    pub node: String,
    /// Messages received per input topic.
    pub received: BTreeMap<String, u64>,
    /// Messages published per output topic.
    pub published: BTreeMap<String, u64>,
    /// Last diagnostics of its parts ("node: part").
    pub diagnostics: BTreeMap<String, Status>,
}

/// The whole summary (summary.json).
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// Bags replayed.
    pub bags: Vec<String>,
    /// First and last delivered message [ns since the epoch].
    pub start_ns: Option<Nanos>,
    /// Last delivered message [ns].
    pub end_ns: Option<Nanos>,
    /// Bag time covered [s].
    pub duration_s: f64,
    /// Wall-clock time of the replay [s].
    pub wall_s: f64,
    /// Bag time per wall time.
    pub real_time_factor: f64,
    /// Messages injected from the bags.
    pub injected: u64,
    /// Every topic of the output bag.
    pub topics: Vec<TopicLine>,
    /// Bag topics not read or not injected.
    pub skipped: Vec<SkippedLine>,
    /// Per-node figures.
    pub nodes: Vec<NodeLine>,
    /// Mode changes of the search state.
    pub mode_timeline: Vec<Transition>,
    /// Mode changes beyond the kept ones.
    pub mode_transitions_dropped: u64,
    /// Seconds spent in each mode.
    pub time_in_mode_s: BTreeMap<String, f64>,
    /// Executor counters.
    pub executor: BTreeMap<String, u64>,
    /// Reader warnings (the first ones) and how many more there were.
    pub warnings: Vec<String>,
    /// Warnings beyond the listed ones.
    pub warnings_dropped: u64,
    /// Why the replay stopped early (null when it ran to the end).
    pub interrupted: Option<String>,
    /// Damage and lost messages of the input bags (empty when intact).
    pub integrity: Vec<String>,
    /// Where the replay started, after the bag's first message [s] (`--start`); the mode
    /// timeline's times count from there.
    pub start_offset_s: f64,
    /// Output files.
    pub outputs: Vec<String>,
}

/// What the summary is built from besides the collector.
pub struct Parts<'a> {
    /// Bags.
    pub bags: Vec<String>,
    /// Wall time [s].
    pub wall_s: f64,
    /// Injected count.
    pub injected: u64,
    /// topic -> (type, count) as the executor delivered.
    pub topic_counts: Vec<(String, String, u64)>,
    /// The graph's ports.
    pub graph: &'a super::graph::Graph,
    /// Skipped topics.
    pub skipped: Vec<SkippedLine>,
    /// Executor counters.
    pub executor: BTreeMap<String, u64>,
    /// Warnings.
    pub warnings: Vec<String>,
    /// Dropped warnings.
    pub warnings_dropped: u64,
    /// Error that stopped the replay.
    pub interrupted: Option<String>,
    /// Damage and lost messages of the input bags.
    pub integrity: Vec<String>,
    /// `--start` [s].
    pub start_offset_s: f64,
    /// Output files.
    pub outputs: Vec<String>,
}

impl Collector {
    /// The summary of what was collected.
    pub fn summary(&self, p: Parts<'_>) -> Summary {
        let duration_s = match (self.t0, self.last) {
            (Some(a), Some(b)) => sillage_core::time::secs(b - a),
            _ => 0.0,
        };
        let topics = p
            .topic_counts
            .iter()
            .filter(|(_, _, n)| *n > 0)
            .map(|(t, ty, n)| TopicLine {
                topic: t.clone(),
                type_name: ty.clone(),
                count: *n,
                origin: p.graph.publishers.get(t).map_or_else(|| "input".to_string(), |v| v.join(", ")),
            })
            .collect();
        let mut nodes: BTreeMap<String, NodeLine> = BTreeMap::new();
        let node_line = |n: &str| NodeLine { node: n.to_string(), received: BTreeMap::new(), published: BTreeMap::new(), diagnostics: BTreeMap::new() };
        let counts: BTreeMap<&str, u64> = p.topic_counts.iter().map(|(t, _, n)| (t.as_str(), *n)).collect();
        for (topic, subs) in &p.graph.subscribers {
            for n in subs {
                nodes.entry(n.clone()).or_insert_with(|| node_line(n)).received.insert(topic.clone(), counts.get(topic.as_str()).copied().unwrap_or(0));
            }
        }
        for (who, topic, n) in &self.by_publisher {
            if who != "(input)" {
                nodes.entry(who.clone()).or_insert_with(|| node_line(who)).published.insert(topic.clone(), *n);
            }
        }
        for name in self.diagnostics.keys() {
            let node = name.split(':').next().unwrap_or(name).trim();
            let key = nodes.keys().find(|k| k.rsplit('/').next() == Some(node.trim_start_matches('/'))).cloned();
            if let Some(k) = key {
                if let Some(line) = nodes.get_mut(&k) {
                    if let Some(st) = self.status(name) {
                        line.diagnostics.insert(name.clone(), st);
                    }
                }
            }
        }
        Summary {
            bags: p.bags,
            start_ns: self.t0,
            end_ns: self.last,
            duration_s,
            wall_s: p.wall_s,
            real_time_factor: if p.wall_s > 0.0 { duration_s / p.wall_s } else { 0.0 },
            injected: p.injected,
            topics,
            skipped: p.skipped,
            nodes: nodes.into_values().filter(|n| !n.node.starts_with('(')).collect(),
            mode_timeline: self.transitions.clone(),
            mode_transitions_dropped: self.transitions_dropped,
            time_in_mode_s: self.time_in_mode.iter().map(|(k, v)| (k.to_string(), *v)).collect(),
            executor: p.executor,
            warnings: p.warnings,
            warnings_dropped: p.warnings_dropped,
            interrupted: p.interrupted,
            integrity: p.integrity,
            start_offset_s: p.start_offset_s,
            outputs: p.outputs,
        }
    }
}

impl Summary {
    /// The summary as the text `sillage replay` prints.
    pub fn text(&self) -> String {
        use std::fmt::Write;
        let mut s = String::new();
        let _ = writeln!(s, "replay of {}", self.bags.join(", "));
        let _ = writeln!(
            s,
            "bag time {:.3} s in {:.3} s wall (real-time factor {:.1}), {} messages injected",
            self.duration_s, self.wall_s, self.real_time_factor, self.injected
        );
        let _ = writeln!(s, "\ntopics:");
        let w = self.topics.iter().map(|t| t.topic.len()).max().unwrap_or(5).max(5);
        for t in &self.topics {
            let _ = writeln!(s, "  {:<w$}  {:>8}  {:<38}  {}", t.topic, t.count, t.type_name, t.origin);
        }
        if !self.skipped.is_empty() {
            let _ = writeln!(s, "\nnot used:");
            for t in &self.skipped {
                let _ = writeln!(s, "  {:<w$}  {:>8}  {:<38}  {}", t.topic, t.count, t.type_name, t.reason);
            }
        }
        let _ = writeln!(s, "\nnodes:");
        for n in &self.nodes {
            let inp: Vec<String> = n.received.iter().map(|(t, c)| format!("{t} {c}")).collect();
            let out: Vec<String> = n.published.iter().map(|(t, c)| format!("{t} {c}")).collect();
            let _ = writeln!(s, "  {}: in [{}], out [{}]", n.node, inp.join(", "), out.join(", "));
            for (name, st) in &n.diagnostics {
                let level = ["OK", "WARN", "ERROR", "STALE"].get(st.level as usize).copied().unwrap_or("?");
                if st.message.trim().eq_ignore_ascii_case(level) || st.message.trim().is_empty() {
                    let _ = writeln!(s, "    {name}: {level}");
                } else {
                    let _ = writeln!(s, "    {name}: {level}: {}", st.message);
                }
            }
        }
        if self.start_offset_s > 0.0 {
            let _ = writeln!(s, "\nmodes (times from the replay's start, {:.3} s after the bag's first message):", self.start_offset_s);
        } else {
            let _ = writeln!(s, "\nmodes (times from the bag's first message):");
        }
        if self.mode_timeline.is_empty() {
            let _ = writeln!(s, "  (no search state published)");
        }
        for tr in self.mode_timeline.iter().take(40) {
            let _ = writeln!(s, "  {:>9.3} s  {:<9} {}", tr.t, tr.mode, tr.reason);
        }
        if self.mode_timeline.len() > 40 {
            let _ = writeln!(s, "  ... {} more in summary.json", self.mode_timeline.len() - 40 + self.mode_transitions_dropped as usize);
        }
        if !self.time_in_mode_s.is_empty() {
            let parts: Vec<String> = self.time_in_mode_s.iter().map(|(m, t)| format!("{m} {t:.1} s")).collect();
            let _ = writeln!(s, "  time in mode: {}", parts.join(", "));
        }
        let ex: Vec<String> = self.executor.iter().map(|(k, v)| format!("{k} {v}")).collect();
        let _ = writeln!(s, "\nexecutor: {}", ex.join(", "));
        if !self.warnings.is_empty() {
            let _ = writeln!(s, "\nwarnings:");
            for w in &self.warnings {
                let _ = writeln!(s, "  {w}");
            }
            if self.warnings_dropped > 0 {
                let _ = writeln!(s, "  ... and {} more", self.warnings_dropped);
            }
        }
        if !self.integrity.is_empty() {
            let _ = writeln!(s, "\nINPUT DAMAGED:");
            for l in &self.integrity {
                let _ = writeln!(s, "  {l}");
            }
        }
        if let Some(e) = &self.interrupted {
            let _ = writeln!(s, "\nINTERRUPTED: {e}\n  the outputs hold what was computed until then");
        }
        let _ = writeln!(s, "\noutputs:");
        for o in &self.outputs {
            let _ = writeln!(s, "  {o}");
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn copied_statuses_equal_their_source_whatever_the_shapes() {
        let a = DiagnosticStatus::with(0, "n: a", "ok", &[("x", "1".into()), ("y", "2".into())]);
        let b = DiagnosticStatus::with(1, "n: a", "late", &[("x", "10".into())]);
        let c = DiagnosticStatus::with(2, "n: a", "bad", &[("x", "1".into()), ("y", "2".into()), ("z", "3".into())]);
        let mut d = a.clone();
        for src in [&b, &c, &a, &b] {
            copy_status(&mut d, src);
            assert_eq!(&d, src);
        }
    }
}
