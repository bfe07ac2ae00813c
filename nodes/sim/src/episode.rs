//! The closed-loop episode: the world node and the stack in virtual time, until the source is
//! declared correctly, the time limit, or a terminal failure.
//!
//! How the loop runs (tick = the world node's timer period):
//! 1. the stack's executor runs up to the tick time `t` (its timers at `t` included); every
//!    `cmd_vel` it published on the way is handed to the world at its own stamp;
//! 2. the world node ticks at `t`; each of its messages is injected into the executor at `t`
//!    and the executor runs again up to `t` before the next one.
//!
//! The world thus sits at the graph's boundary exactly where a bag sits in `sillage replay`
//! (which injects message by message the same way), so replaying a recorded episode's inputs
//! reproduces the graph's outputs bit for bit. The world node itself is an ordinary
//! [`NodeCore`](sillage_core::NodeCore) and runs in any executor; here it is driven directly so
//! that the order of same-instant events matches replay.
//!
//! Outcomes: a correct declaration ends the episode. It is a *success* (the headline figure)
//! only when it is the episode's first declaration. A false declaration is counted; then,
//! unless `stop_on_false_declaration`, the runner plays the operator and sends
//! `e_stop_reset`, which makes the arbiter forget the declaration and search again; a correct
//! declaration after such a reset is *correct after resets* (a secondary figure: the operator
//! knew the truth). The episode also ends at the time limit, or as *stalled* when the arbiter
//! stays HALTED for `halt_timeout` (a terminal failure: inputs stopped or the e-stop latched).
//!
//! Alongside, every [`SAMPLE_PERIOD`](crate::cues::SAMPLE_PERIOD) the runner takes the
//! world's truth (pose, local wind, concentration at the sensors) and grades the graph's
//! `odor_bearing` and `plume_features` against it ([`crate::cues`] defines the figures).

use crate::cues::{self, CueLog, CueMetrics, Truth};
use crate::error::SimError;
use crate::metrics::{Declaration, ModeLog, Transition};
use crate::params::WorldParams;
use crate::setup::{build_stack, BuiltStack, StackSetup};
use crate::world_node::{WorldNode, NODE_NAME};
use serde::Serialize;
use sillage_core::executor::{remap_topic, resolve_topic, Executor, Placement, Record};
use sillage_core::msg::{Empty, SearchState};
use sillage_core::time::{nanos, secs};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, RosMessage};
use sillage_world::{Scenario, World};
use std::collections::BTreeMap;

/// Options of the episode loop.
#[derive(Debug, Clone, PartialEq)]
pub struct RunOptions {
    /// Episode length [s] (default: the scenario's `time_limit`).
    pub time_limit: Option<f64>,
    /// HALTED this long without a break is a terminal failure [s].
    pub halt_timeout: f64,
    /// End the episode at the first false declaration instead of restarting the search.
    pub stop_on_false_declaration: bool,
    /// Sample a [`Timeline`] at this period [s] (`None`: no timeline).
    pub timeline_period: Option<f64>,
    /// In-plume threshold on the true concentration at a sensor [g/m^3] (default: the
    /// scenario's `sensors.mox.c0`; see [`crate::cues`]).
    pub in_plume_threshold: Option<f64>,
}

impl Default for RunOptions {
    fn default() -> Self {
        RunOptions { time_limit: None, halt_timeout: 30.0, stop_on_false_declaration: false, timeline_period: None, in_plume_threshold: None }
    }
}

/// Which episode: its index, world seed and start pose.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct EpisodeSpec {
    /// Episode number (0-based).
    pub index: usize,
    /// World seed.
    pub seed: u64,
    /// Index into the scenario's start poses.
    pub start_pose: usize,
}

impl EpisodeSpec {
    /// Episode `index` of a run seeded with `base_seed`: world seed `base_seed + index`, start
    /// poses in turn.
    pub fn nth(scenario: &Scenario, base_seed: u64, index: usize) -> Self {
        let n = scenario.robot.start_poses.len().max(1);
        EpisodeSpec { index, seed: base_seed.wrapping_add(index as u64), start_pose: index % n }
    }
}

/// How an episode ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome {
    /// The first declaration was within the success radius.
    Success,
    /// Declared within the success radius after false declarations and operator resets.
    CorrectAfterReset,
    /// Ended at a false declaration (only with `stop_on_false_declaration`).
    FalseDeclaration,
    /// Reached the time limit.
    TimeLimit,
    /// HALTED for `halt_timeout`.
    Stalled,
}

/// Signals of one episode sampled over time (for plots).
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Timeline {
    /// Channel names.
    pub channels: Vec<String>,
    /// Sample times since the start [s].
    pub t: Vec<f64>,
    /// True concentration at each channel [g/m^3], `[sample][channel]`.
    pub concentration: Vec<Vec<f64>>,
    /// Last published resistance of each channel [ohm], `[sample][channel]`.
    pub resistance: Vec<Vec<f64>>,
    /// Arbiter mode (SearchState code; 255 before the first state).
    pub mode: Vec<u8>,
    /// Planar distance to the nearest source [m].
    pub distance: Vec<f64>,
    /// Whether the robot was in the plume ([`crate::cues`]).
    pub in_plume: Vec<bool>,
    /// Cue of the bearing that counted (`OdorBearing.cue`; NONE without one).
    pub cue: Vec<u8>,
    /// That bearing minus the true source direction, wrapped [rad] (NaN without one).
    pub bearing_error_source: Vec<f64>,
    /// That bearing minus the true upwind direction, wrapped [rad] (NaN without one).
    pub bearing_error_upwind: Vec<f64>,
    /// ln(latest plume_features distance / true distance) (NaN without an estimate).
    pub distance_log_ratio: Vec<f64>,
}

impl Timeline {
    /// One sample at `t` [s]: the world, the last `chem` values, the mode, the truth, the bearing
    /// that counts (cue, bearing [rad]) and the last distance estimate [m].
    #[allow(clippy::too_many_arguments)]
    fn push(&mut self, t: f64, w: &World, chem: &[f64], mode: u8, truth: &Truth, bearing: Option<(u8, f64)>, distance: f64) {
        self.t.push(t);
        self.concentration.push(w.sensor_concentrations());
        self.resistance.push(chem.to_vec());
        self.mode.push(mode);
        self.distance.push(truth.distance);
        self.in_plume.push(truth.in_plume);
        self.cue.push(bearing.map_or(sillage_core::msg::OdorBearing::NONE, |c| c.0));
        self.bearing_error_source.push(bearing.map_or(f64::NAN, |(_, b)| cues::wrap(b - truth.source_direction)));
        let up = truth.upwind_direction.unwrap_or(f64::NAN);
        self.bearing_error_upwind.push(bearing.map_or(f64::NAN, |(_, b)| cues::wrap(b - up)));
        self.distance_log_ratio.push((distance / truth.distance).ln());
    }
}

/// The result and metrics of one episode (see [`crate::metrics`] for the definitions).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EpisodeResult {
    /// Which episode.
    pub spec: EpisodeSpec,
    /// How it ended.
    pub outcome: Outcome,
    /// The headline: the first declaration was correct (no operator reset before it).
    pub success: bool,
    /// A correct declaration happened, possibly after false ones and operator resets.
    pub correct_after_resets: bool,
    /// The robot centre came within the success radius of a source at some time (declared or
    /// not).
    pub reached: bool,
    /// Time of the correct declaration [s].
    pub time_to_declare: Option<f64>,
    /// From the first contact (first in-plume sample) to the first declaration [s].
    pub contact_to_declare: Option<f64>,
    /// Time the robot centre first came within the success radius of a source [s].
    pub time_to_reach: Option<f64>,
    /// Path length until then over the straight-line distance.
    pub reach_path_ratio: Option<f64>,
    /// Whether the first declaration was correct (`None`: none).
    pub first_declaration_correct: Option<bool>,
    /// Every declaration.
    pub declarations: Vec<Declaration>,
    /// Declarations outside the success radius.
    pub false_declarations: u32,
    /// Robot path length until the end [m].
    pub path_length: f64,
    /// Straight-line distance from the start to the nearest source [m].
    pub straight_distance: f64,
    /// `path_length / straight_distance`.
    pub path_ratio: f64,
    /// Smallest robot-to-source distance reached [m].
    pub min_distance: f64,
    /// Robot-to-source distance at the end [m].
    pub final_distance: f64,
    /// HALTED entries after start-up.
    pub halts: u32,
    /// HALTED entries before the first other mode.
    pub startup_halts: u32,
    /// Halt reasons without figures, with counts.
    pub halt_reasons: BTreeMap<String, u32>,
    /// The guard's obstacle stops (last arbiter diagnostics).
    pub obstacle_stops: Option<u64>,
    /// The guard's geofence interventions (last arbiter diagnostics).
    pub fence_interventions: Option<u64>,
    /// Collisions of the robot with walls and obstacles.
    pub collisions: u32,
    /// Simulated time [s].
    pub sim_time: f64,
    /// Mode transitions (all counted).
    pub transitions: u64,
    /// The first transitions.
    pub transition_log: Vec<Transition>,
    /// Time in each mode [s].
    pub time_in_mode: BTreeMap<&'static str, f64>,
    /// Why the episode stalled.
    pub stalled_reason: Option<String>,
    /// Closed-loop quality of the odor cues ([`crate::cues`]).
    pub cues: CueMetrics,
    /// The robot's path (x, y) [m], thinned to >= 5 cm steps.
    #[serde(skip)]
    pub path: Vec<[f64; 2]>,
    /// Sampled signals (with `timeline_period`).
    #[serde(skip)]
    pub timeline: Option<Timeline>,
}

/// A scenario with a stack configuration: builds and runs episodes.
#[derive(Debug, Clone)]
pub struct Sim {
    /// The world.
    pub scenario: Scenario,
    /// The stack.
    pub stack: StackSetup,
    /// World node parameters (seed and start pose are set per episode).
    pub world: WorldParams,
    /// Loop options.
    pub options: RunOptions,
}

/// Path points closer than this to the last kept one are dropped [m].
const PATH_STEP: f64 = 0.05;
/// Most path points kept (thinned by half beyond).
const MAX_PATH: usize = 20_000;

struct Topics {
    cmd_vel: String,
    search_state: String,
    source_estimate: String,
    chem: String,
    e_stop_reset: String,
    odor_bearing: String,
    plume_features: String,
}

/// Records flowing out of the executor: metrics, commands for the world, and the caller's sink.
struct Tap<'a> {
    topics: &'a Topics,
    log: ModeLog,
    commands: Vec<(Nanos, Msg)>,
    estimates: Vec<(Nanos, [f64; 2])>,
    last_chem: Vec<f64>,
    /// `odor_bearing` since the last tick: stamp, cue, bearing [rad].
    bearings: Vec<(Nanos, u8, f64)>,
    /// `plume_features.distance` since the last tick [m].
    distances: Vec<f64>,
    user: &'a mut dyn FnMut(&Record),
}

impl Tap<'_> {
    fn take(&mut self, r: &Record) {
        (self.user)(r);
        let t = r.topic;
        match r.msg {
            Msg::SearchState(s) if t == self.topics.search_state => self.log.on_state(r.stamp, s),
            Msg::PointStamped(p) if t == self.topics.source_estimate => self.estimates.push((r.stamp, [p.point.x, p.point.y])),
            Msg::DiagnosticArray(d) => self.log.on_diagnostics(d),
            Msg::ChemSample(c) if t == self.topics.chem => self.last_chem.clone_from(&c.values),
            Msg::OdorBearing(b) if t == self.topics.odor_bearing => self.bearings.push((r.stamp, b.cue, b.bearing)),
            Msg::PlumeFeatures(f) if t == self.topics.plume_features => self.distances.push(f.distance),
            m @ (Msg::Twist(_) | Msg::TwistStamped(_)) if t == self.topics.cmd_vel => self.commands.push((r.stamp, m.clone())),
            _ => {}
        }
    }
}

fn run_to(ex: &mut Executor, t: Nanos, tap: &mut Tap, episode: usize) -> Result<(), SimError> {
    ex.run_until(t, &mut |r: &Record| tap.take(r)).map_err(|error| SimError::Executor { episode, error })
}

fn inject(ex: &mut Executor, t: Nanos, topic: &str, publisher: &str, msg: Msg, tap: &mut Tap, episode: usize) -> Result<(), SimError> {
    if ex.topic_type(topic).is_none() {
        // Not a graph input (e.g. /clock): still part of what the world published.
        (tap.user)(&Record { stamp: t, topic, publisher: Some(publisher), msg: &msg });
        return Ok(());
    }
    ex.inject(t, topic, msg).map_err(|error| SimError::Executor { episode, error })?;
    run_to(ex, t, tap, episode)
}

fn distance_to_sources(scenario: &Scenario, p: [f64; 2]) -> f64 {
    scenario.sources.iter().map(|s| (s.position[0] - p[0]).hypot(s.position[1] - p[1])).fold(f64::INFINITY, f64::min)
}

/// The world's truth now ([`crate::cues`]); `threshold` [g/m^3] decides in-plume (and is only
/// evaluated when given: the concentration at the sensors costs a plume query).
pub fn truth_of(w: &World, threshold: Option<f64>) -> Truth {
    let s = w.scenario();
    let p = w.robot_pose();
    let nearest = s.sources.iter().min_by(|a, b| {
        let d = |q: &[f64; 3]| (q[0] - p.x).hypot(q[1] - p.y);
        d(&a.position).total_cmp(&d(&b.position))
    });
    let source_direction = nearest.map_or(f64::NAN, |n| cues::direction_in_frame(n.position[0] - p.x, n.position[1] - p.y, p.yaw));
    let wind = w.wind_at(p.body_to_world(s.anemometer.position));
    let in_plume = threshold.is_some_and(|c| w.sensor_concentrations().iter().any(|x| *x >= c));
    Truth { source_direction, upwind_direction: cues::upwind_in_frame(wind, p.yaw), distance: w.nearest_source_distance(), in_plume }
}

impl Sim {
    /// The episode length [s].
    pub fn time_limit(&self) -> f64 {
        self.options.time_limit.unwrap_or(self.scenario.time_limit)
    }

    /// Builds the stack as an episode would (to check the setup, or write its parameters).
    pub fn build_stack(&self) -> Result<BuiltStack, SimError> {
        build_stack(&self.stack, &self.scenario)
    }

    /// The world node of episode `spec`, its `cmd_vel` type matched to the arbiter's.
    pub fn world_node(&self, spec: &EpisodeSpec, arbiter_cmd_type: &str) -> Result<WorldNode, SimError> {
        let stamped = arbiter_cmd_type == <sillage_core::msg::TwistStamped as RosMessage>::TYPE_NAME;
        let params = WorldParams { seed: spec.seed, start_pose: spec.start_pose, cmd_vel_stamped: stamped, ..self.world.clone() };
        let node = WorldNode::new(&self.scenario, params)?;
        let world_type = node.inputs()[0].type_name;
        if world_type != arbiter_cmd_type {
            return Err(SimError::CommandTypeMismatch { arbiter: arbiter_cmd_type.into(), world: world_type.into() });
        }
        Ok(node)
    }

    /// Runs one episode; `sink` sees every message in delivery order (graph inputs, node
    /// outputs, `/diagnostics`, and the world's messages no node takes, such as `/clock`).
    pub fn run_episode(&self, spec: EpisodeSpec, sink: &mut dyn FnMut(&Record)) -> Result<EpisodeResult, SimError> {
        let built = self.build_stack()?;
        let mut ex = built.executor;
        let mut world = self.world_node(&spec, built.cmd_vel_type)?;
        let ns = self.stack.config.namespace.as_str();
        let placement = Placement { namespace: ns.to_string(), name: None, remaps: self.stack.config.remaps.clone() };
        let world_topics: Vec<String> = world.outputs().iter().map(|p| remap_topic(&p.topic, &placement, NODE_NAME)).collect();
        let world_fqn = resolve_topic(NODE_NAME, ns, NODE_NAME);
        let r = |t: &str| remap_topic(t, &placement, "arbiter");
        let topics = Topics {
            cmd_vel: r("cmd_vel"),
            search_state: r("search_state"),
            source_estimate: r("source_estimate"),
            chem: world_topics[crate::world_node::OUT_CHEM].clone(),
            e_stop_reset: r("e_stop_reset"),
            odor_bearing: r("odor_bearing"),
            plume_features: r("plume_features"),
        };
        let t0: Nanos = 0;
        let tick = world.timers()[0];
        let limit = nanos(self.time_limit());
        let halt_timeout = nanos(self.options.halt_timeout);
        let sample_every = self.options.timeline_period.map(|p| (nanos(p) / tick).max(1));
        let cue_every = (nanos(cues::SAMPLE_PERIOD) / tick).max(1);
        let threshold = self.options.in_plume_threshold.unwrap_or(self.scenario.sensors.mox.c0);
        let mut cue_log = CueLog::new();
        let mut last_distance = f64::NAN;
        let start = world.world().robot_pose();
        let straight = distance_to_sources(&self.scenario, [start.x, start.y]);
        let mut tap = Tap {
            topics: &topics,
            log: ModeLog::new(t0),
            commands: Vec::new(),
            estimates: Vec::new(),
            last_chem: Vec::new(),
            bearings: Vec::new(),
            distances: Vec::new(),
            user: sink,
        };
        let mut timeline = sample_every.map(|_| Timeline { channels: world.world().channel_names().to_vec(), ..Default::default() });
        let mut path = vec![[start.x, start.y]];
        let mut path_step = PATH_STEP;
        let mut declarations: Vec<Declaration> = Vec::new();
        let mut min_distance = world.world().nearest_source_distance();
        let mut outbox = Outbox::new();
        let mut stalled_reason = None;
        let mut reach: Option<(f64, f64)> = None;

        run_to(&mut ex, t0, &mut tap, spec.index)?;
        world.initial_outputs(t0, &mut outbox);
        for (out, msg) in outbox.drain().collect::<Vec<_>>() {
            inject(&mut ex, t0, &world_topics[out], &world_fqn, msg, &mut tap, spec.index)?;
        }
        let mut k: i64 = 0;
        let outcome = loop {
            k += 1;
            let t = t0 + k * tick;
            run_to(&mut ex, t, &mut tap, spec.index)?;
            for (ts, cmd) in std::mem::take(&mut tap.commands) {
                world.on_message(ts, crate::world_node::IN_CMD_VEL, &cmd, &mut outbox);
            }
            world.on_timer(t, 0, &mut outbox);
            for (out, msg) in outbox.drain().collect::<Vec<_>>() {
                inject(&mut ex, t, &world_topics[out], &world_fqn, msg, &mut tap, spec.index)?;
            }
            let w = world.world();
            let p = w.robot_pose();
            min_distance = min_distance.min(w.nearest_source_distance());
            if reach.is_none() && min_distance <= self.scenario.success_radius {
                reach = Some((secs(t - t0), w.robot().distance_travelled()));
            }
            if path.last().is_some_and(|q: &[f64; 2]| (q[0] - p.x).hypot(q[1] - p.y) >= path_step) {
                path.push([p.x, p.y]);
                if path.len() > MAX_PATH {
                    path = path.iter().step_by(2).copied().collect();
                    path_step *= 2.0;
                }
            }
            let cue_due = k % cue_every == 0;
            let timeline_due = sample_every.is_some_and(|every| k % every == 0);
            if cue_due || timeline_due || !tap.bearings.is_empty() || !tap.distances.is_empty() {
                let truth = truth_of(w, cue_due.then_some(threshold));
                for (ts, cue, b) in std::mem::take(&mut tap.bearings) {
                    cue_log.on_bearing(ts, cue, b, &truth);
                }
                for d in std::mem::take(&mut tap.distances) {
                    cue_log.on_distance(d, &truth);
                    last_distance = d;
                }
                if cue_due {
                    cue_log.sample(t, secs(t - t0), secs(cue_every * tick), &truth);
                }
                if let Some(tl) = timeline.as_mut().filter(|_| timeline_due) {
                    let truth = if cue_due { truth } else { truth_of(w, Some(threshold)) };
                    let mode = tap.log.mode().map_or(255, |(m, _)| m);
                    tl.push(secs(t - t0), w, &tap.last_chem, mode, &truth, cue_log.current(t), last_distance);
                }
            }
            let mut success = false;
            let mut false_now = false;
            for (ts, e) in std::mem::take(&mut tap.estimates) {
                let error = distance_to_sources(&self.scenario, e);
                let correct = error <= self.scenario.success_radius;
                declarations.push(Declaration { t: secs(ts - t0), estimate: e, error, robot_distance: w.nearest_source_distance(), correct });
                success |= correct;
                false_now |= !correct;
            }
            if success {
                break if declarations.first().is_some_and(|d| d.correct) { Outcome::Success } else { Outcome::CorrectAfterReset };
            }
            if false_now {
                if self.options.stop_on_false_declaration {
                    break Outcome::FalseDeclaration;
                }
                let reset = Msg::Empty(Empty::default());
                inject(&mut ex, t, &topics.e_stop_reset, "(operator)", reset, &mut tap, spec.index)?;
            }
            if let Some((SearchState::HALTED, since)) = tap.log.mode() {
                if t - since >= halt_timeout {
                    stalled_reason = tap.log.transitions.iter().rev().find(|x| x.mode == "HALTED").map(|x| x.reason.clone());
                    break Outcome::Stalled;
                }
            }
            if t - t0 >= limit {
                break Outcome::TimeLimit;
            }
        };
        let t_end = t0 + k * tick;
        tap.log.finish(t_end);
        let w = world.world();
        let path_length = w.robot().distance_travelled();
        let end = w.robot_pose();
        if path.last().is_some_and(|q| q != &[end.x, end.y]) {
            path.push([end.x, end.y]);
        }
        let correct = declarations.iter().find(|d| d.correct);
        let log = tap.log;
        let cues = cue_log.metrics();
        Ok(EpisodeResult {
            spec,
            outcome,
            success: declarations.first().is_some_and(|d| d.correct),
            correct_after_resets: correct.is_some(),
            contact_to_declare: match (cues.first_contact, declarations.first()) {
                (Some(c), Some(d)) if d.t >= c => Some(d.t - c),
                _ => None,
            },
            reached: reach.is_some(),
            time_to_reach: reach.map(|r| r.0),
            reach_path_ratio: reach.map(|r| r.1 / straight).filter(|x| x.is_finite()),
            time_to_declare: correct.map(|d| d.t),
            first_declaration_correct: declarations.first().map(|d| d.correct),
            false_declarations: declarations.iter().filter(|d| !d.correct).count() as u32,
            declarations,
            path_length,
            straight_distance: straight,
            path_ratio: if straight > 0.0 { path_length / straight } else { f64::INFINITY },
            min_distance,
            final_distance: w.nearest_source_distance(),
            halts: log.halts,
            startup_halts: log.startup_halts,
            halt_reasons: log.halt_reasons,
            obstacle_stops: log.guard_counts.map(|g| g.0),
            fence_interventions: log.guard_counts.map(|g| g.1),
            collisions: w.collisions(),
            sim_time: secs(t_end - t0),
            transitions: log.transition_count,
            transition_log: log.transitions,
            time_in_mode: log.time_in_mode,
            stalled_reason,
            cues,
            path,
            timeline,
        })
    }
}
