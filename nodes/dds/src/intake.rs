//! The intake guard: what the executor does with input it cannot trust.
//!
//! Contract: no input from the network can stop the executor or reach a node core unchecked.
//! - a sample from a writer that discovery announced with another type than the topic's is
//!   dropped and counted (`wrong_type`); the announcement itself is counted once per remote
//!   endpoint (`type_conflicts`);
//! - a sample our CDR codec cannot decode is dropped and counted (`malformed`);
//! - more than `max_rate` samples per second on one input is a flood: the excess is dropped
//!   and counted (`flood_dropped`), except on latched inputs (the e-stop), which are never
//!   dropped because a stop must always get through;
//! - every kind of problem is logged with topic, type and reason at its 1st, 10th, 100th, ...
//!   occurrence per input and kind (the r2r executor's rule, `sillage_ros2::runtime::should_log`).
//!
//! Rates use a steady clock passed in by the caller (simulated time may stand still).

use sillage_core::Nanos;
use sillage_ros2::runtime::should_log;
use std::collections::{HashMap, HashSet};

/// Length of the flood-rate window [ns of steady time].
pub const RATE_WINDOW: Nanos = 1_000_000_000;

/// Identifies a remote DDS endpoint (its 16-byte GUID).
pub type EndpointId = u128;

/// Counters of the intake and of publication, since start.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct IntakeStats {
    /// Samples taken from the network (all inputs).
    pub samples: u64,
    /// Samples delivered to node cores from the network.
    pub delivered: u64,
    /// Publications delivered between nodes of this process.
    pub delivered_local: u64,
    /// Samples dropped because the CDR was malformed.
    pub malformed: u64,
    /// Samples dropped because their writer announced another type.
    pub wrong_type: u64,
    /// Remote endpoints announcing another type than ours on one of our topics.
    pub type_conflicts: u64,
    /// Samples dropped as a flood.
    pub flood_dropped: u64,
    /// Publications the middleware refused.
    pub publish_failures: u64,
    /// Publication cascades cut short (nodes publishing to each other without end).
    pub runaways: u64,
    /// `/clock` messages that moved time backwards.
    pub clock_jumps_back: u64,
}

impl IntakeStats {
    /// Number of bad inputs of every kind.
    pub fn bad_inputs(&self) -> u64 {
        self.malformed + self.wrong_type + self.type_conflicts + self.flood_dropped
    }
}

/// Kinds of logged problems.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Problem {
    /// Undecodable CDR.
    Malformed,
    /// Sample from a writer of another type.
    WrongType,
    /// Discovery announced another type.
    TypeConflict,
    /// Too many samples per second (onset).
    Flood,
    /// The summary of a flood window.
    FloodEnd,
    /// The middleware refused a publication.
    Publish,
    /// A publication cascade was cut short.
    Runaway,
    /// Simulated time went backwards.
    Clock,
}

#[derive(Debug, Clone, Copy, Default)]
struct Rate {
    window_start: Nanos,
    count: u64,
    dropped: u64,
}

/// The guard's state.
#[derive(Debug, Default)]
pub struct Intake {
    max_per_window: u64,
    rates: HashMap<usize, Rate>,
    bad_writers: HashSet<EndpointId>,
    seen_conflicts: HashSet<EndpointId>,
    logs: HashMap<(usize, Problem), u64>,
    lines: Vec<String>,
    /// Counters.
    pub stats: IntakeStats,
}

impl Intake {
    /// A guard that calls more than `max_rate` samples per second on one input a flood.
    pub fn new(max_rate: f64) -> Intake {
        let per_window = (max_rate * (RATE_WINDOW as f64) * 1e-9).ceil().max(1.0);
        Intake { max_per_window: per_window as u64, ..Intake::default() }
    }

    /// Records a problem about `input` (an endpoint index, or any key) and logs `line` at its
    /// 1st, 10th, 100th, ... occurrence.
    pub fn report(&mut self, input: usize, kind: Problem, line: impl FnOnce() -> String) {
        let n = self.logs.entry((input, kind)).or_default();
        *n += 1;
        if should_log(*n) {
            let count = *n;
            let mut text = line();
            if count > 1 {
                text.push_str(&format!(" (occurrence {count}; logging 1, 10, 100, ...)"));
            }
            self.lines.push(text);
        }
    }

    /// Takes the log lines written since the last call.
    pub fn drain_log(&mut self) -> Vec<String> {
        std::mem::take(&mut self.lines)
    }

    /// Marks a remote writer as carrying another type; counted once per writer.
    pub fn mark_bad_writer(&mut self, writer: EndpointId) -> bool {
        self.bad_writers.insert(writer);
        self.note_conflict(writer)
    }

    /// Counts a type conflict of a remote endpoint once; true when it is new.
    pub fn note_conflict(&mut self, endpoint: EndpointId) -> bool {
        let new = self.seen_conflicts.insert(endpoint);
        if new {
            self.stats.type_conflicts += 1;
        }
        new
    }

    /// Forgets a remote endpoint that left (its GUID may be reused).
    pub fn forget(&mut self, endpoint: EndpointId) {
        self.bad_writers.remove(&endpoint);
        self.seen_conflicts.remove(&endpoint);
    }

    /// Whether a writer was announced with another type.
    pub fn is_bad_writer(&self, writer: EndpointId) -> bool {
        self.bad_writers.contains(&writer)
    }

    /// Counts one sample on `input` at steady time `steady`; returns false if it is over the
    /// flood limit and may be dropped (`droppable`), logging the flood once per window.
    pub fn admit(&mut self, input: usize, droppable: bool, steady: Nanos, topic: &str) -> bool {
        let max = self.max_per_window;
        let r = self.rates.entry(input).or_default();
        if steady - r.window_start >= RATE_WINDOW || steady < r.window_start {
            let (count, dropped) = (r.count, r.dropped);
            *r = Rate { window_start: steady, count: 0, dropped: 0 };
            if count > max {
                self.report(input, Problem::FloodEnd, || {
                    format!("flood on {topic}: {count} samples in one window of {RATE_WINDOW} ns (limit {max}), {dropped} dropped")
                });
            }
        }
        let r = self.rates.entry(input).or_default();
        r.count += 1;
        if r.count == max + 1 {
            let what = if droppable { "dropping the excess" } else { "latched input: nothing dropped" };
            self.report(input, Problem::Flood, || {
                format!("flood on {topic}: more than {max} samples within {RATE_WINDOW} ns; {what}")
            });
        }
        let r = self.rates.entry(input).or_default();
        if r.count > max && droppable {
            r.dropped += 1;
            self.stats.flood_dropped += 1;
            false
        } else {
            true
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const MS: Nanos = 1_000_000;

    #[test]
    fn floods_are_cut_at_the_limit_except_on_latched_inputs() {
        let mut g = Intake::new(100.0);
        let mut admitted = 0;
        // 1000 samples within 500 ms on input 0.
        for k in 0..1000 {
            if g.admit(0, true, k * MS / 2, "/chem") {
                admitted += 1;
            }
        }
        assert_eq!(admitted, 100);
        assert_eq!(g.stats.flood_dropped, 900);
        // The e-stop (not droppable) always passes, though counted.
        assert!((0..500).all(|k| g.admit(1, false, k * MS, "/e_stop")));
        assert_eq!(g.stats.flood_dropped, 900);
        // The next window reports the flood once and admits again.
        assert!(g.admit(0, true, 1200 * MS, "/chem"));
        let log = g.drain_log();
        assert_eq!(log.len(), 3, "onset on each input, then the summary of /chem: {log:?}");
        assert!(log.iter().any(|l| l.contains("flood on /e_stop") && l.contains("nothing dropped")), "{log:?}");
        assert!(log.iter().any(|l| l.contains("/chem") && l.contains("1000 samples") && l.contains("900 dropped")), "{log:?}");
    }

    #[test]
    fn repeated_problems_are_logged_at_1_10_100() {
        let mut g = Intake::new(1000.0);
        for k in 1..=150 {
            g.report(3, Problem::Malformed, || format!("bad {k}"));
        }
        assert_eq!(
            g.drain_log(),
            vec!["bad 1", "bad 10 (occurrence 10; logging 1, 10, 100, ...)", "bad 100 (occurrence 100; logging 1, 10, 100, ...)"]
        );
        g.report(4, Problem::Malformed, || "other input".into());
        g.report(3, Problem::Flood, || "other kind".into());
        assert_eq!(g.drain_log().len(), 2, "counts are per input and kind");
    }

    #[test]
    fn conflicts_count_once_per_endpoint() {
        let mut g = Intake::new(10.0);
        assert!(g.mark_bad_writer(7));
        assert!(!g.mark_bad_writer(7));
        assert!(g.is_bad_writer(7) && !g.is_bad_writer(8));
        assert!(g.note_conflict(9));
        assert_eq!(g.stats.type_conflicts, 2);
        g.forget(7);
        assert!(!g.is_bad_writer(7));
    }
}
