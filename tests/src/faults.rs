//! Fault injection for the in-process executor.
//!
//! A [`Stream`] is the list of outside messages fed to an [`Executor`], each with its arrival
//! time (the time it is injected, as a bag's log time). The fault functions take a stream and
//! return a faulty one; [`run`] feeds a stream to the full stack (`sillage_stack::build`) the
//! way bag replay does (run the executor up to the arrival time, then inject) and records every
//! delivered message. Nothing in the node crates or in the executor is changed: faults live in
//! the input only.
//!
//! Arrival order is the stream order. Every function keeps it, except [`delay`], which sorts
//! by arrival time (stable) after shifting, so apply a backward [`clock_jump`] last.
//!
//! The executor's virtual time never runs backwards: a message that arrives "before" the
//! current time (a backward clock jump) is delivered at the current time and counted in
//! `ExecutorStats::late_inputs`. What a backward jump shows the nodes is therefore header
//! stamps that jump back, not a clock that does.

use sillage_arbiter::params::GuardParams;
use sillage_core::executor::{Executor, Record};
use sillage_core::msg::{ChemSample, DiagnosticStatus, Header, SearchState, TwistStamped};
use sillage_core::time::SECOND;
use sillage_core::{Msg, Nanos};
use std::path::{Path, PathBuf};
use thiserror::Error;

/// Errors of the fault harness (set-up problems, never a fault's effect).
#[derive(Debug, Error)]
pub enum FaultError {
    /// The input bag could not be read.
    #[error("reading {path}: {reason}")]
    Bag { path: PathBuf, reason: String },
    /// The stack could not be built from the parameter text.
    #[error("building the stack: {0}")]
    Stack(String),
    /// The executor refused an input or stopped.
    #[error("executor at t={at} ns: {reason}")]
    Executor { at: Nanos, reason: String },
    /// A temporary parameter file could not be written.
    #[error("writing {path}: {source}")]
    Io { path: PathBuf, source: std::io::Error },
}

/// One outside message: arrival time [ns], fully qualified topic, message.
#[derive(Debug, Clone, PartialEq)]
pub struct Input {
    /// Arrival (injection) time [ns].
    pub at: Nanos,
    /// Topic, fully qualified (`/wind`).
    pub topic: String,
    /// The message.
    pub msg: Msg,
}

/// Outside messages in arrival order.
pub type Stream = Vec<Input>;

/// Reads a bag (folder or file) into a stream, arrival = log time.
pub fn bag_stream(path: &Path) -> Result<Stream, FaultError> {
    let err = |e: sillage_bag::BagError| FaultError::Bag { path: path.to_path_buf(), reason: e.to_string() };
    let bag = sillage_bag::Bag::open(path).map_err(err)?;
    let mut out = Vec::new();
    for m in bag.messages(&sillage_bag::ReadOptions::default()).map_err(err)? {
        let m = m.map_err(err)?;
        out.push(Input { at: m.log_time, topic: m.topic.to_string(), msg: m.msg });
    }
    Ok(out)
}

/// The committed demo bag (tests/fixtures/demo/demo_bag: 60 s, chem 50 Hz with channels
/// `left` and `right`, wind 10 Hz, odom 50 Hz, e_stop false at 1 Hz) as a stream.
pub fn demo_stream() -> Result<Stream, FaultError> {
    bag_stream(&crate::fixture("demo/demo_bag"))
}

/// The header of a stamped message, mutably.
pub fn header_mut(msg: &mut Msg) -> Option<&mut Header> {
    match msg {
        Msg::ChemSample(m) => Some(&mut m.header),
        Msg::OdorEventArray(m) => Some(&mut m.header),
        Msg::OdorBearing(m) => Some(&mut m.header),
        Msg::PlumeFeatures(m) => Some(&mut m.header),
        Msg::SearchState(m) => Some(&mut m.header),
        Msg::Vector3Stamped(m) => Some(&mut m.header),
        Msg::Odometry(m) => Some(&mut m.header),
        Msg::LaserScan(m) => Some(&mut m.header),
        Msg::TwistStamped(m) => Some(&mut m.header),
        Msg::PointStamped(m) => Some(&mut m.header),
        Msg::DiagnosticArray(m) => Some(&mut m.header),
        Msg::OccupancyGrid(m) => Some(&mut m.header),
        Msg::PoseWithCovarianceStamped(m) => Some(&mut m.header),
        Msg::Clock(_) | Msg::Bool(_) | Msg::Empty(_) | Msg::Twist(_) => None,
    }
}

/// A small seeded generator (splitmix64) so that random faults are reproducible.
#[derive(Debug, Clone)]
pub struct SplitMix(u64);

impl SplitMix {
    /// A generator from `seed`.
    pub fn new(seed: u64) -> SplitMix {
        SplitMix(seed)
    }
    /// The next value, uniform in [0, 1).
    pub fn next_f64(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Drops each message on one of `topics` with probability `p` (seeded).
pub fn drop_random(stream: Stream, topics: &[&str], p: f64, seed: u64) -> Stream {
    let mut rng = SplitMix::new(seed);
    stream.into_iter().filter(|m| !(topics.contains(&m.topic.as_str()) && rng.next_f64() < p)).collect()
}

/// Drops every message on `topic` arriving in `[from, to)` (a drop-out of that input).
pub fn drop_window(stream: Stream, topic: &str, from: Nanos, to: Nanos) -> Stream {
    stream.into_iter().filter(|m| !(m.topic == topic && (from..to).contains(&m.at))).collect()
}

/// Delays every message on `topic` arriving at or after `from` by `by` [ns] (its header is
/// kept: transport latency); the stream is then sorted by arrival (stable).
pub fn delay(mut stream: Stream, topic: &str, from: Nanos, by: Nanos) -> Stream {
    for m in stream.iter_mut().filter(|m| m.topic == topic && m.at >= from) {
        m.at = m.at.saturating_add(by);
    }
    stream.sort_by_key(|m| m.at);
    stream
}

/// Sends every message on `topic` arriving at or after `from` twice (same stamp, same arrival).
pub fn duplicate(stream: Stream, topic: &str, from: Nanos) -> Stream {
    let mut out = Vec::with_capacity(stream.len() * 2);
    for m in stream {
        if m.topic == topic && m.at >= from {
            out.push(m.clone());
        }
        out.push(m);
    }
    out
}

/// Swaps the messages of consecutive pairs on `topic` from `from` on: the later-stamped one
/// arrives first, in the earlier one's arrival slot. Returns the stream and the number of
/// swapped pairs.
pub fn reorder_pairs(mut stream: Stream, topic: &str, from: Nanos) -> (Stream, usize) {
    let idx: Vec<usize> = stream.iter().enumerate().filter(|(_, m)| m.topic == topic && m.at >= from).map(|(i, _)| i).collect();
    let mut swapped = 0;
    for pair in idx.chunks_exact(2) {
        let (a, b) = (pair[0], pair[1]);
        let (ta, tb) = (stream[a].at, stream[b].at);
        stream.swap(a, b);
        stream[a].at = ta;
        stream[b].at = tb;
        swapped += 1;
    }
    (stream, swapped)
}

fn map_chem(stream: &mut Stream, topic: &str, mut f: impl FnMut(Nanos, &mut ChemSample)) {
    for m in stream.iter_mut().filter(|m| m.topic == topic) {
        let at = m.at;
        if let Msg::ChemSample(s) = &mut m.msg {
            f(at, s);
        }
    }
}

/// A stuck sensor: channel `channel` of every ChemSample on `topic` keeps, from `from` on,
/// the value it had in the last sample before `from`. Returns the stream and that value.
pub fn stick(mut stream: Stream, topic: &str, channel: &str, from: Nanos) -> (Stream, Option<f64>) {
    let mut held: Option<f64> = None;
    map_chem(&mut stream, topic, |at, s| {
        let Some(i) = s.channels.iter().position(|c| c == channel) else { return };
        if at < from {
            held = s.values.get(i).copied();
        } else if let (Some(v), Some(slot)) = (held, s.values.get_mut(i)) {
            *slot = v;
        }
    });
    (stream, held)
}

/// A saturated sensor: channel `channel` reads `rail` for samples arriving in `[from, to)`.
pub fn saturate(mut stream: Stream, topic: &str, channel: &str, from: Nanos, to: Nanos, rail: f64) -> Stream {
    map_chem(&mut stream, topic, |at, s| {
        if (from..to).contains(&at) {
            if let Some(i) = s.channels.iter().position(|c| c == channel) {
                s.values[i] = rail;
            }
        }
    });
    stream
}

/// A clock jump of the input side: every message arriving at or after `at` arrives `by` [ns]
/// later (earlier if negative) and carries a header stamp shifted by `by` (as after a bag loop
/// or a restarted recorder); order is kept.
pub fn clock_jump(mut stream: Stream, at: Nanos, by: Nanos) -> Stream {
    for m in stream.iter_mut().filter(|m| m.at >= at) {
        m.at = m.at.saturating_add(by);
        if let Some(h) = header_mut(&mut m.msg) {
            h.stamp = sillage_core::msg::Time::from_nanos(h.stamp.to_nanos().saturating_add(by));
        }
    }
    stream
}

/// A bag played in a loop: the messages arriving before `until`, then the same messages again
/// with their header stamps unchanged (the stamps jump back at the loop) and arrival times
/// moved on by `until - first arrival` (the player's receive clock keeps running).
pub fn bag_loop(stream: &[Input], until: Nanos) -> Stream {
    let first: Stream = stream.iter().filter(|m| m.at < until).cloned().collect();
    let Some(t0) = first.first().map(|m| m.at) else { return first };
    let again = first.iter().cloned().map(|mut m| {
        m.at += until - t0;
        m
    });
    first.iter().cloned().chain(again).collect()
}

/// Inserts `msg` on `topic` arriving at `at` (after the messages that arrive at the same
/// time), e.g. an `e_stop` press or an `e_stop_reset`.
pub fn insert(mut stream: Stream, at: Nanos, topic: &str, msg: Msg) -> Stream {
    let pos = stream.iter().position(|m| m.at > at).unwrap_or(stream.len());
    stream.insert(pos, Input { at, topic: topic.to_string(), msg });
    stream
}

/// One delivered message, owned.
#[derive(Debug, Clone)]
pub struct Rec {
    /// Delivery time [ns].
    pub stamp: Nanos,
    /// Topic.
    pub topic: String,
    /// Publishing node (`None` for inputs and the executor's diagnostics).
    pub publisher: Option<String>,
    /// The message.
    pub msg: Msg,
}

/// What a run delivered.
#[derive(Debug)]
pub struct Run {
    /// Every delivered message in delivery order.
    pub records: Vec<Rec>,
    /// The executor's counters at the end.
    pub stats: sillage_core::executor::ExecutorStats,
}

/// Builds the full stack (`sillage_stack::build`) from parameter-file text (`None`:
/// defaults), feeds `stream` as bag replay does and runs `tail` [ns] past the last arrival.
pub fn run(stream: &[Input], params: Option<&str>, tail: Nanos) -> Result<Run, FaultError> {
    let file = match params {
        Some(text) => Some(temp_params(text)?),
        None => None,
    };
    let cfg = sillage_stack::StackConfig { params_file: file.clone(), ..Default::default() };
    let built = sillage_stack::build(&cfg).map_err(|e| FaultError::Stack(e.to_string()));
    if let Some(f) = &file {
        let _ = std::fs::remove_file(f);
    }
    let mut ex: Executor = built?;
    let mut records = Vec::new();
    let mut sink = |r: &Record| {
        records.push(Rec { stamp: r.stamp, topic: r.topic.to_string(), publisher: r.publisher.map(str::to_string), msg: r.msg.clone() });
    };
    let mut last = None;
    for m in stream {
        let fail = |e: sillage_core::executor::ExecutorError| FaultError::Executor { at: m.at, reason: e.to_string() };
        ex.run_until(m.at, &mut sink).map_err(fail)?;
        ex.inject(m.at, &m.topic, m.msg.clone()).map_err(fail)?;
        last = Some(last.map_or(m.at, |l: Nanos| l.max(m.at)));
    }
    if let Some(t) = last {
        ex.run_until(t.saturating_add(tail), &mut sink).map_err(|e| FaultError::Executor { at: t, reason: e.to_string() })?;
    }
    let stats = ex.stats().clone();
    Ok(Run { records, stats })
}

fn temp_params(text: &str) -> Result<PathBuf, FaultError> {
    use std::sync::atomic::{AtomicU64, Ordering};
    static N: AtomicU64 = AtomicU64::new(0);
    let path = std::env::temp_dir().join(format!("sillage-faults-{}-{}.yaml", std::process::id(), N.fetch_add(1, Ordering::Relaxed)));
    std::fs::write(&path, text).map_err(|source| FaultError::Io { path: path.clone(), source })?;
    Ok(path)
}

impl Run {
    /// Messages on `topic`.
    pub fn on<'a>(&'a self, topic: &'a str) -> impl Iterator<Item = &'a Rec> + 'a {
        self.records.iter().filter(move |r| r.topic == topic)
    }

    /// Every `cmd_vel` as (delivery time, (linear.x, linear.y, angular.z)); TwistStamped or
    /// Twist.
    pub fn cmd_vels(&self) -> Vec<(Nanos, [f64; 3])> {
        self.on("/cmd_vel")
            .filter_map(|r| match &r.msg {
                Msg::TwistStamped(TwistStamped { twist, .. }) | Msg::Twist(twist) => {
                    Some((r.stamp, [twist.linear.x, twist.linear.y, twist.angular.z]))
                }
                _ => None,
            })
            .collect()
    }

    /// Every `search_state` with its delivery time.
    pub fn states(&self) -> Vec<(Nanos, &SearchState)> {
        self.on("/search_state")
            .filter_map(|r| match &r.msg {
                Msg::SearchState(s) => Some((r.stamp, s)),
                _ => None,
            })
            .collect()
    }

    /// The first `search_state` at or after `from` in mode `mode`.
    pub fn first_state(&self, from: Nanos, mode: u8) -> Option<(Nanos, &SearchState)> {
        self.states().into_iter().find(|(t, s)| *t >= from && s.mode == mode)
    }

    /// The mode published last at or before `t` (`None` before the first).
    pub fn mode_at(&self, t: Nanos) -> Option<u8> {
        self.states().into_iter().take_while(|(at, _)| *at <= t).last().map(|(_, s)| s.mode)
    }

    /// Every published diagnostic status named `name`, with the array's delivery time.
    pub fn diagnostics(&self, name: &str) -> Vec<(Nanos, &DiagnosticStatus)> {
        self.on("/diagnostics")
            .filter_map(|r| match &r.msg {
                Msg::DiagnosticArray(a) => Some((r.stamp, a)),
                _ => None,
            })
            .flat_map(|(t, a)| a.status.iter().filter(|s| s.name == name).map(move |s| (t, s)))
            .collect()
    }

    /// Number of messages published by the nodes on `topic`.
    pub fn count(&self, topic: &str) -> usize {
        self.on(topic).count()
    }
}

/// The value of key `key` in a diagnostic status.
pub fn diag_value<'a>(s: &'a DiagnosticStatus, key: &str) -> Option<&'a str> {
    s.values.iter().find(|kv| kv.key == key).map(|kv| kv.value.as_str())
}

/// A broken guard invariant on one `cmd_vel`.
#[derive(Debug, Clone, PartialEq)]
pub struct Violation {
    /// Delivery time of the offending command [ns].
    pub at: Nanos,
    /// What is wrong.
    pub what: String,
}

/// Checks the guard's documented invariants on every command of `cmds` (delivery time,
/// [linear.x, linear.y, angular.z]) under caps `g` with control period `period` [s] on a
/// differential drive:
/// - every component finite; `linear.y = 0`;
/// - caps: `-max_reverse <= linear.x`, `|(linear.x, linear.y)| <= max_linear`,
///   `|angular.z| <= max_angular`;
/// - rate limits between consecutive commands with `dt = clamp(t - t_prev, 0, period)`: an axis
///   speeding up by at most `accel * dt`, slowing down by at most `decel * dt`, crossing zero
///   within `|p| / decel + |v| / accel <= dt` (the usual velocity-smoother rule, common
///   practice); exempt are commands at instants in `exempt` (the e-stop's immediate zero).
///
/// A slack of 1e-9 relative absorbs float rounding.
pub fn check_guard(cmds: &[(Nanos, [f64; 3])], g: &GuardParams, period: f64, exempt: &[Nanos]) -> Vec<Violation> {
    let mut out = Vec::new();
    let tol = |a: f64, b: f64| 1e-9 * (1.0 + a.abs() + b.abs());
    let mut prev: Option<(Nanos, [f64; 3])> = None;
    for &(t, c) in cmds {
        let [vx, vy, wz] = c;
        let mut bad = |what: String| out.push(Violation { at: t, what });
        if !c.iter().all(|v| v.is_finite()) {
            bad(format!("non-finite command {c:?}"));
        }
        if vy != 0.0 {
            bad(format!("linear.y = {vy} on a differential drive"));
        }
        if vx < -g.max_reverse - tol(vx, g.max_reverse) {
            bad(format!("linear.x = {vx} below -max_reverse = {}", -g.max_reverse));
        }
        if vx.hypot(vy) > g.max_linear + tol(vx, g.max_linear) {
            bad(format!("|linear| = {} above max_linear = {}", vx.hypot(vy), g.max_linear));
        }
        if wz.abs() > g.max_angular + tol(wz, g.max_angular) {
            bad(format!("|angular.z| = {} above max_angular = {}", wz.abs(), g.max_angular));
        }
        // The first command counts one period from rest.
        let (dt, p) = match prev {
            None => (period, [0.0; 3]),
            Some((tp, p)) => (sillage_core::time::secs(t.saturating_sub(tp)).clamp(0.0, period), p),
        };
        {
            if !exempt.contains(&t) {
                let axes = [
                    ("linear.x", p[0], vx, g.max_linear_accel, g.max_linear_decel),
                    ("linear.y", p[1], vy, g.max_linear_accel, g.max_linear_decel),
                    ("angular.z", p[2], wz, g.max_angular_accel, g.max_angular_decel),
                ];
                for (axis, p, v, acc, dec) in axes {
                    let ok = if p * v >= 0.0 {
                        if v.abs() >= p.abs() {
                            v.abs() - p.abs() <= acc * dt + tol(p, v)
                        } else {
                            p.abs() - v.abs() <= dec * dt + tol(p, v)
                        }
                    } else {
                        p.abs() / dec + v.abs() / acc <= dt + tol(p, v) * (1.0 / dec + 1.0 / acc)
                    };
                    if !ok {
                        bad(format!("{axis} {p} -> {v} in dt = {dt} s breaks accel {acc} / decel {dec}"));
                    }
                }
            }
        }
        prev = Some((t, c));
    }
    out
}

/// Seconds to nanoseconds (exact for the round values tests use).
pub fn s(sec: f64) -> Nanos {
    sillage_core::time::nanos(sec)
}

/// One second [ns].
pub const S: Nanos = SECOND;
