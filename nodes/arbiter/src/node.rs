//! The arbiter node core: inputs in, one guarded command per control tick out.
//!
//! Contract:
//! - every message is checked ([`crate::inputs`]); malformed ones are counted, diagnosed and
//!   dropped, as are duplicated and reordered stamps; accepted ones feed their watchdog;
//! - `e_stop = true` latches the guard and publishes a zero `cmd_vel` and a HALTED
//!   `search_state` in the same call, not only at the next tick; until one `e_stop` message
//!   has been heard the robot stays HALTED ("e_stop never heard"), unless `e_stop.required` is
//!   false (a robot without an e-stop topic);
//! - `e_stop_reset` only releases the e-stop latch; `search_restart` (and only it) makes the
//!   arbiter forget a declaration and search again (refused while the e-stop is latched, so a
//!   restart never moves the robot by itself out of an e-stop);
//! - a blinded guarded sector ([`crate::guard`]) halts the motion with the reason in
//!   `search_state` (HALTED, "scan blinded ...") for as long as it lasts;
//! - each control tick decides the mode ([`crate::modes`] precedence), steps the strategy
//!   unless halted or declared, turns its motion into a command ([`crate::drive`]), passes it
//!   through the guard ([`crate::guard`]) and publishes it; `search_state` goes out on every
//!   transition and at least every `state_period`; `source_estimate` once, on declaration;
//! - `search_state`: header in `frames.odom`; `heading_target` is the strategy's odom heading,
//!   NaN when the robot is not steering to one (stopped, body-twist strategies);
//!   `contact_age` is NaN before the first contact;
//! - the node's clock jumping back (a restarted simulation or bag loop) resets the
//!   watchdogs, stamp orders, wind, contact, declaration evidence and the strategy; the e-stop
//!   latch and a declaration stay.

use crate::avoid::Avoider;
use crate::contact::ContactDetector;
use crate::posterior::Posterior;
use crate::declare::Declarer;
use crate::plume_end::PlumeEndTracker;
use crate::drive::{Cmd, Drive, Motion};
use crate::error::ArbiterError;
use crate::geometry::{wrap_angle, Vec2};
use crate::guard::{Guard, ResetOutcome, ScanInput};
use crate::inputs::{self, BearingObs, Input, OdomObs, ScanObs, StampOrder};
use crate::modes::{Mode, ModeMachine};
use crate::params::Params;
use crate::stats::InputStats;
use crate::strategy::{self, BearingView, Context, Strategy};
use crate::watchdog::{InputSet, Watchdog};
use crate::wind::WindEstimator;
use sillage_core::msg::*;
use sillage_core::params::{self, NodeParams, ParamError};
use sillage_core::time::nanos;
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};

/// Default ROS node name.
pub const NODE_NAME: &str = "arbiter";

/// Output index of `cmd_vel`.
pub const OUT_CMD_VEL: usize = 0;
/// Output index of `search_state`.
pub const OUT_SEARCH_STATE: usize = 1;
/// Output index of `source_estimate`.
pub const OUT_SOURCE_ESTIMATE: usize = 2;

/// Why the robot is halted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HaltCause {
    /// The e-stop latch.
    EStop,
    /// No `e_stop` message heard yet (`e_stop.required`).
    EStopNeverHeard,
    /// These required inputs are stale.
    Stale(InputSet),
}

/// A declared source.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Declared {
    /// When [ns].
    pub at: Nanos,
    /// Where [m, odom].
    pub estimate: Vec2,
}

/// The arbiter node core.
#[derive(Debug)]
pub struct Arbiter {
    pub(crate) params: Params,
    pub(crate) strategy: Box<dyn Strategy>,
    custom_strategy: bool,
    drive: Drive,
    pub(crate) guard: Guard,
    pub(crate) watchdog: Watchdog,
    stamps: StampOrder,
    wind: WindEstimator,
    pub(crate) contact: ContactDetector,
    declarer: Declarer,
    plume_end: PlumeEndTracker,
    was_in_contact: bool,
    pub(crate) modes: ModeMachine,
    odom: Option<OdomObs>,
    bearing: Option<(BearingObs, Option<f64>)>,
    last_bearing_odom: Option<f64>,
    pub(crate) scan: Option<ScanObs>,
    scan_seen: bool,
    e_stop_heard: bool,
    halt: Option<HaltCause>,
    note: Option<&'static str>,
    pub(crate) declared: Option<Declared>,
    pub(crate) stats: InputStats,
    last_now: Option<Nanos>,
    last_state_pub: Option<Nanos>,
    pub(crate) heading_target: f64,
    avoid: Avoider,
    posterior: Option<Posterior>,
}

impl Arbiter {
    /// A core with validated parameters and the built-in strategy they select.
    pub fn new(params: Params) -> Result<Self, ParamError> {
        params.validate()?;
        let s = strategy::build(&params);
        Ok(Arbiter::assemble(params, s, false))
    }

    /// A core driven by a strategy of your own (see [`crate::strategy`]); the guard, the
    /// watchdogs and the declaration apply as with the built-ins.
    pub fn with_strategy(params: Params, strategy: Box<dyn Strategy>) -> Result<Self, ParamError> {
        params.validate()?;
        Ok(Arbiter::assemble(params, strategy, true))
    }

    fn assemble(params: Params, strategy: Box<dyn Strategy>, custom_strategy: bool) -> Self {
        Arbiter {
            drive: Drive { p: params.drive.clone(), base: params.base },
            guard: Guard::new(&params),
            watchdog: Watchdog::default(),
            stamps: StampOrder::default(),
            wind: WindEstimator::new(params.wind.clone()),
            contact: ContactDetector::new(params.contact.clone()),
            declarer: Declarer::new(params.declare.clone()),
            plume_end: PlumeEndTracker::new(params.declare.plume_end.clone()),
            was_in_contact: false,
            modes: ModeMachine::default(),
            odom: None,
            bearing: None,
            last_bearing_odom: None,
            scan: None,
            scan_seen: false,
            e_stop_heard: false,
            halt: None,
            note: None,
            declared: None,
            stats: InputStats::default(),
            last_now: None,
            last_state_pub: None,
            heading_target: f64::NAN,
            avoid: Avoider::default(),
            posterior: None,
            strategy,
            custom_strategy,
            params,
        }
    }

    /// The parameters in use.
    pub fn params(&self) -> &Params {
        &self.params
    }

    /// The current mode.
    pub fn mode(&self) -> Mode {
        self.modes.mode()
    }

    /// Why the current mode was entered.
    pub fn reason(&self) -> &str {
        self.modes.reason()
    }

    /// The declared source, if any.
    pub fn declared(&self) -> Option<Declared> {
        self.declared
    }

    /// Whether the e-stop latch is set.
    pub fn e_stop_latched(&self) -> bool {
        self.guard.latch.is_latched()
    }

    /// The last command sent.
    pub fn last_command(&self) -> Cmd {
        self.guard.last()
    }

    /// The input counters.
    pub fn input_stats(&self) -> &InputStats {
        &self.stats
    }

    /// The inputs whose staleness halts the robot.
    pub fn required_inputs(&self) -> InputSet {
        let mut s = InputSet::default();
        for i in [Input::Odom, Input::OdorBearing, Input::PlumeFeatures, Input::OdorEvents] {
            s.insert(i);
        }
        if self.strategy.uses_wind() {
            s.insert(Input::Wind);
        }
        if self.scan_in_use() {
            s.insert(Input::Scan);
        }
        if self.params.watchdog.e_stop > 0.0 {
            s.insert(Input::EStop);
        }
        s
    }

    fn scan_in_use(&self) -> bool {
        self.params.obstacle.enabled || self.scan_seen
    }

    fn observe_clock(&mut self, now: Nanos) {
        if self.last_now.is_some_and(|last| now < last) {
            self.stats.clock_jumps += 1;
            self.stats.last_problem = Some((now, "the node's clock jumped back: inputs and search state reset".into()));
            self.watchdog.reset();
            self.stamps.reset();
            self.wind.reset();
            self.avoid.reset();
            self.posterior = None;
            self.forget_evidence();
            self.strategy.reset();
            self.last_state_pub = None;
        }
        self.last_now = Some(now);
    }

    fn accept<T>(&mut self, now: Nanos, input: Input, stamp: &Time, parsed: Result<T, ArbiterError>, apply: impl FnOnce(&mut Self, T)) {
        match parsed {
            Err(e) => self.stats.malformed(Some(input), now, &e),
            Ok(v) => {
                let check = self.stamps.check(input, stamp.to_nanos());
                if self.stats.stamp(input, now, check) {
                    self.watchdog.feed(input, now);
                    apply(self, v);
                }
            }
        }
    }

    /// Forgets every contact and all declaration evidence (search restart, clock jump).
    fn forget_evidence(&mut self) {
        self.contact.reset();
        self.declarer.reset();
        self.plume_end.reset();
        self.was_in_contact = false;
    }

    fn position(&self) -> Option<Vec2> {
        self.odom.map(|o| o.pose.position)
    }

    fn on_bearing(&mut self, b: BearingObs) {
        let odom_heading = match (b.bearing, self.odom) {
            (Some(bb), Some(o)) => Some(wrap_angle(o.pose.yaw + bb)),
            _ => None,
        };
        if b.bearing.is_some() && b.confidence >= self.params.surge.min_confidence {
            self.last_bearing_odom = odom_heading.or(self.last_bearing_odom);
        }
        self.bearing = Some((b, odom_heading));
    }

    fn bearing_view(&self, yaw: f64) -> Option<BearingView> {
        let (b, odom_heading) = self.bearing?;
        let body = b.bearing?;
        if b.confidence < self.params.surge.min_confidence {
            return None;
        }
        let odom = odom_heading.unwrap_or(wrap_angle(yaw + body));
        Some(BearingView { odom, body: wrap_angle(odom - yaw), confidence: b.confidence })
    }

    fn publish_cmd(&self, now: Nanos, c: Cmd, out: &mut Outbox) {
        if self.params.cmd_vel_stamped {
            out.publish(OUT_CMD_VEL, c.stamped(now, &self.params.frames.base));
        } else {
            out.publish(OUT_CMD_VEL, c.twist());
        }
    }

    fn publish_state(&mut self, now: Nanos, out: &mut Outbox) {
        let s = SearchState {
            header: Header::new(now, &self.params.frames.odom),
            mode: self.modes.mode().code(),
            reason: self.modes.reason().to_string(),
            heading_target: self.heading_target,
            contact_age: self.contact.view(now).age.unwrap_or(f64::NAN),
        };
        out.publish(OUT_SEARCH_STATE, s);
        self.last_state_pub = Some(now);
    }

    fn halt_reason(&self, cause: HaltCause, now: Nanos) -> String {
        match cause {
            HaltCause::EStop if self.guard.latch.is_cleared() => "e-stop latched: released, waiting for e_stop_reset".into(),
            HaltCause::EStop => "e-stop latched: e_stop is true".into(),
            HaltCause::EStopNeverHeard => "e_stop never heard: no motion until the e-stop topic has published once (e_stop.required)".into(),
            HaltCause::Stale(set) => format!("watchdog: {}", self.watchdog.describe(set, &self.params.watchdog, now)),
        }
    }

    fn on_e_stop(&mut self, now: Nanos, pressed: bool, out: &mut Outbox) {
        self.watchdog.feed(Input::EStop, now);
        self.e_stop_heard = true;
        self.stats.inputs[Input::EStop.index()].accepted += 1;
        let was_cleared = self.guard.latch.is_cleared();
        self.guard.latch.on_e_stop(pressed);
        if pressed {
            let zero = self.guard.emergency_stop(now);
            self.publish_cmd(now, zero, out);
            if self.halt != Some(HaltCause::EStop) || self.modes.mode() != Mode::Halted || was_cleared {
                self.halt = Some(HaltCause::EStop);
                self.heading_target = f64::NAN;
                self.modes.enter(now, Mode::Halted, "e-stop pressed".into());
                self.publish_state(now, out);
            }
        } else if self.guard.latch.is_cleared() && !was_cleared && self.halt == Some(HaltCause::EStop) {
            self.modes.enter(now, Mode::Halted, self.halt_reason(HaltCause::EStop, now));
            self.publish_state(now, out);
        }
    }

    fn on_reset(&mut self, now: Nanos) {
        self.stats.inputs[Input::EStopReset.index()].accepted += 1;
        match self.guard.latch.on_reset() {
            ResetOutcome::Released => self.note = Some("e-stop reset"),
            ResetOutcome::Refused => {
                self.stats.last_problem = Some((now, "e_stop_reset refused: e_stop has not been false since it was pressed".into()));
            }
            ResetOutcome::NotLatched => {
                let what = if self.declared.is_some() { "; to search again after a declaration, use search_restart" } else { "" };
                self.stats.last_problem = Some((now, format!("e_stop_reset ignored: the e-stop is not latched{what}")));
            }
        }
    }

    fn on_restart(&mut self, now: Nanos) {
        self.stats.inputs[Input::SearchRestart.index()].accepted += 1;
        if self.guard.latch.is_latched() {
            self.stats.last_problem = Some((now, "search_restart refused: the e-stop is latched (release it with e_stop_reset first)".into()));
        } else if self.declared.take().is_some() {
            self.strategy.reset();
            self.forget_evidence();
            self.note = Some("search restarted by search_restart");
        } else {
            self.stats.last_problem = Some((now, "search_restart ignored: no source declared".into()));
        }
    }

    /// The scan as the guard sees it.
    fn scan_input(scan: &Option<ScanObs>, in_use: bool) -> ScanInput<'_> {
        match (scan, in_use) {
            (_, false) => ScanInput::Unused,
            (None, true) => ScanInput::Missing,
            (Some(s), true) => ScanInput::Seen(s),
        }
    }

    fn context(&self, now: Nanos, odom: &OdomObs) -> Context {
        Context {
            now,
            pose: odom.pose,
            wind: self.wind.view(),
            bearing: self.bearing_view(odom.pose.yaw),
            contact: self.contact.view(now),
            period: self.params.period(),
            posterior: self.usable_posterior(now),
        }
    }

    /// The posterior, if fresh and `cues.use_posterior` is on.
    fn usable_posterior(&self, now: Nanos) -> Option<Posterior> {
        self.posterior.filter(|q| self.params.cues.use_posterior && q.fresh(now, &self.params.declare.posterior))
    }

    /// The strategy's motion, bent around obstacles ([`crate::avoid`]) when a scan is in use.
    fn avoid_obstacles(&mut self, now: Nanos, motion: Motion, yaw: f64) -> Motion {
        let Motion::Heading { heading, speed, face } = motion else { return motion };
        if !(self.params.avoid.enabled && self.scan_seen) || speed <= 0.0 {
            return motion;
        }
        let want = wrap_angle(heading - yaw);
        match self.avoid.steer(now, want, &self.params.avoid) {
            Some(body) => Motion::Heading { heading: wrap_angle(yaw + body), speed, face },
            None => motion,
        }
    }

    /// One control tick at `now`.
    fn tick(&mut self, now: Nanos, out: &mut Outbox) {
        let stale = self.watchdog.stale(self.required_inputs(), &self.params.watchdog, now);
        let halt = if self.guard.latch.is_latched() {
            Some(HaltCause::EStop)
        } else if self.params.e_stop.required && !self.e_stop_heard {
            Some(HaltCause::EStopNeverHeard)
        } else if !stale.is_empty() || self.odom.is_none() {
            let mut s = stale;
            if self.odom.is_none() {
                s.insert(Input::Odom);
            }
            Some(HaltCause::Stale(s))
        } else {
            None
        };
        let mut changed = false;
        let mut motion = Motion::Stop;
        let mut strategy_mode: Option<(Mode, String)> = None;
        if let Some(cause) = halt {
            if self.halt != Some(cause) || self.modes.mode() != Mode::Halted {
                let reason = self.halt_reason(cause, now);
                self.modes.enter(now, Mode::Halted, reason);
                changed = true;
            }
            self.halt = Some(cause);
        } else if let Some(odom) = self.odom {
            let note = match self.halt.take() {
                Some(HaltCause::EStop) => Some("e-stop reset"),
                Some(HaltCause::EStopNeverHeard) => Some("e_stop heard"),
                Some(HaltCause::Stale(_)) => Some("inputs fresh again"),
                None => None,
            };
            let note = self.note.take().or(note);
            if self.declared.is_some() {
                if self.modes.mode() != Mode::Declared {
                    self.modes.enter(now, Mode::Declared, format!("{}: source already declared", note.unwrap_or("resumed")));
                    changed = true;
                }
            } else {
                let ctx = self.context(now, &odom);
                let decision = self.strategy.step(&ctx);
                let upwind = ctx.wind.upwind.or(ctx.wind.last_upwind);
                if self.was_in_contact && !ctx.contact.in_contact {
                    self.plume_end.on_loss(upwind);
                }
                self.was_in_contact = ctx.contact.in_contact;
                let by_features = self.declarer.ready(now).filter(|_| ctx.contact.in_contact).map(|reason| {
                    (self.declarer.estimate(&odom.pose, self.last_bearing_odom, upwind), reason)
                });
                let by_plume_end = || self.plume_end.ready().filter(|_| self.params.declare.enabled);
                let by_posterior = || {
                    ctx.posterior.filter(|_| self.params.declare.enabled).and_then(|q| q.ready(odom.pose.position, ctx.contact.hits, &self.params.declare.posterior))
                };
                if let Some((estimate, reason)) = by_features.or_else(by_plume_end).or_else(by_posterior) {
                    self.declared = Some(Declared { at: now, estimate });
                    self.modes.enter(now, Mode::Declared, reason);
                    let p = PointStamped { header: Header::new(now, &self.params.frames.odom), point: Point { x: estimate.x, y: estimate.y, z: 0.0 } };
                    out.publish(OUT_SOURCE_ESTIMATE, p);
                    changed = true;
                } else {
                    let mode = Mode::from(decision.phase);
                    if mode != self.modes.mode() {
                        let reason = match note {
                            Some(n) => format!("{n}: {}", decision.reason),
                            None => decision.reason.into_owned(),
                        };
                        strategy_mode = Some((mode, reason));
                    }
                    motion = self.avoid_obstacles(now, decision.motion, odom.pose.yaw);
                }
            }
        }
        self.heading_target = motion.heading_target();
        let pose = self.odom.map(|o| o.pose);
        let target = match &pose {
            Some(p) => self.drive.command(&motion, p),
            None => Cmd::ZERO,
        };
        let scan = Arbiter::scan_input(&self.scan, self.scan_in_use());
        let cmd = self.guard.apply(now, target, pose.as_ref(), scan, &self.drive);
        if let (Some(s), None) = (self.guard.last_flags.blinded, halt) {
            // Blinded toward the commanded motion: HALTED while it lasts (the strategy keeps
            // stepping, so the search resumes where it was once the sector is clear).
            if self.modes.mode() != Mode::Halted {
                let reason = format!(
                    "scan blinded toward {:.0} deg: {} of {} beams valid (obstacle.min_valid_fraction {})",
                    s.direction.to_degrees(),
                    s.valid,
                    s.beams,
                    self.params.obstacle.min_valid_fraction
                );
                self.modes.enter(now, Mode::Halted, reason);
                changed = true;
            }
            self.heading_target = f64::NAN;
        } else if let Some((mode, reason)) = strategy_mode {
            self.modes.enter(now, mode, reason);
            changed = true;
        }
        self.publish_cmd(now, cmd, out);
        let due = self.last_state_pub.is_none_or(|t| now.saturating_sub(t) >= nanos(self.params.state_period));
        if changed || due {
            self.publish_state(now, out);
        }
    }

    fn reconfigure(&mut self, next: Params) {
        let strategy_changed = next.strategy != self.params.strategy
            || next.surge != self.params.surge
            || next.cast != self.params.cast
            || next.zigzag != self.params.zigzag
            || next.spiral != self.params.spiral
            || next.reactive != self.params.reactive;
        if strategy_changed && !self.custom_strategy {
            self.strategy = strategy::build(&next);
            self.note = Some("parameters changed");
        }
        if next.declare != self.params.declare {
            self.declarer.set_params(next.declare.clone());
            self.plume_end.set_params(next.declare.plume_end.clone());
        }
        self.drive = Drive { p: next.drive.clone(), base: next.base };
        self.guard.set_params(&next);
        self.contact.set_params(next.contact.clone());
        self.wind.set_params(next.wind.clone());
        self.params = next;
    }
}

impl NodeCore for Arbiter {
    fn name(&self) -> &str {
        NODE_NAME
    }

    fn inputs(&self) -> Vec<Port> {
        vec![
            Port::of::<OdorBearing>("odor_bearing", Qos::Reliable),
            Port::of::<PlumeFeatures>("plume_features", Qos::Reliable),
            Port::of::<OdorEventArray>("odor_events", Qos::Reliable),
            Port::of::<Vector3Stamped>("wind", Qos::SensorData),
            Port::of::<Odometry>("odom", Qos::SensorData),
            Port::of::<Bool>("e_stop", Qos::Safety),
            Port::of::<Empty>("e_stop_reset", Qos::Reliable),
            Port::of::<LaserScan>("scan", Qos::SensorData),
            Port::of::<Empty>("search_restart", Qos::Reliable),
            Port::of::<PoseWithCovarianceStamped>("source_posterior", Qos::Reliable),
        ]
    }

    fn outputs(&self) -> Vec<Port> {
        let cmd = if self.params.cmd_vel_stamped {
            Port::of::<TwistStamped>("cmd_vel", Qos::Reliable)
        } else {
            Port::of::<Twist>("cmd_vel", Qos::Reliable)
        };
        vec![cmd, Port::of::<SearchState>("search_state", Qos::Latched), Port::of::<PointStamped>("source_estimate", Qos::Reliable)]
    }

    fn timers(&self) -> Vec<Nanos> {
        vec![nanos(self.params.period())]
    }

    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, out: &mut Outbox) {
        self.observe_clock(now);
        let frames = &self.params.frames;
        match (Input::from_index(input), msg) {
            (Some(Input::OdorBearing), Msg::OdorBearing(m)) => {
                let parsed = inputs::bearing(m, frames);
                // Fed to the watchdog either way; ignored for behaviour when the cue is ablated.
                self.accept(now, Input::OdorBearing, &m.header.stamp, parsed, |s, b| {
                    if s.params.cues.use_bearing {
                        s.on_bearing(b);
                    } else {
                        s.bearing = None;
                        s.last_bearing_odom = None;
                    }
                });
            }
            (Some(Input::PlumeFeatures), Msg::PlumeFeatures(m)) => {
                self.accept(now, Input::PlumeFeatures, &m.header.stamp, inputs::features(m), |s, f| {
                    let at = s.position();
                    s.contact.on_features(now, &f, at);
                    let in_contact = s.contact.in_contact(now);
                    s.declarer.on_features(now, &f, in_contact);
                });
            }
            (Some(Input::OdorEvents), Msg::OdorEventArray(m)) => {
                self.accept(now, Input::OdorEvents, &m.header.stamp, inputs::events(m, self.params.contact.min_event_level), |s, e| {
                    let at = s.position();
                    let levels = m.events.iter().map(|ev| (u32::from(ev.channel), ev.polarity, ev.level, ev.stamp.to_nanos()));
                    s.contact.on_levels(now, levels, at);
                    let hit = s.contact.on_events(now, e, at);
                    if let (true, Some(at)) = (hit, at) {
                        let blocked = s.avoid.blocked_since().is_some_and(|t| now.saturating_sub(t) <= nanos(s.params.avoid.distrust));
                        s.plume_end.on_event_hit(at, blocked);
                    }
                });
            }
            (Some(Input::Wind), Msg::Vector3Stamped(m)) => {
                let parsed = inputs::wind(m, frames);
                self.accept(now, Input::Wind, &m.header.stamp, parsed, |s, w| {
                    let odom = s.odom;
                    s.wind.on_wind(now, w, odom.as_ref());
                });
            }
            (Some(Input::Odom), Msg::Odometry(m)) => {
                let parsed = inputs::odom(m, frames);
                self.accept(now, Input::Odom, &m.header.stamp, parsed, |s, o| s.odom = Some(o));
            }
            (Some(Input::Scan), Msg::LaserScan(m)) => {
                let parsed = inputs::scan(m, &self.params.obstacle);
                self.accept(now, Input::Scan, &m.header.stamp, parsed, |s, d| {
                    s.scan = Some(d);
                    s.scan_seen = true;
                    let yaw = s.params.obstacle.scan_yaw;
                    s.avoid.on_scan(m, yaw, &s.params.avoid);
                });
            }
            (Some(Input::SourcePosterior), Msg::PoseWithCovarianceStamped(m)) => {
                let parsed = inputs::posterior(now, m, frames);
                self.accept(now, Input::SourcePosterior, &m.header.stamp, parsed, |s, q| s.posterior = Some(q));
            }
            (Some(Input::EStop), Msg::Bool(b)) => self.on_e_stop(now, b.data, out),
            (Some(Input::EStopReset), Msg::Empty(_)) => self.on_reset(now),
            (Some(Input::SearchRestart), Msg::Empty(_)) => self.on_restart(now),
            (which, other) => {
                let expected = which.map(|i| self.inputs()[i.index()].type_name).unwrap_or("no input");
                let e = ArbiterError::WrongType { index: input, got: other.type_name(), expected };
                self.stats.malformed(which, now, &e);
            }
        }
    }

    fn on_timer(&mut self, now: Nanos, _timer: usize, out: &mut Outbox) {
        self.observe_clock(now);
        self.tick(now, out);
    }

    fn diagnostics(&self, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        crate::diagnostics::report(self, now, out);
    }

    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }

    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        let mut next = self.params.clone();
        params::apply(&mut next, value)?;
        let fixed = |key: &str| ParamError::Invalid { key: key.to_string(), reason: "can only be set at start-up (restart the node)".into() };
        if next.rate != self.params.rate {
            return Err(fixed("rate"));
        }
        if next.cmd_vel_stamped != self.params.cmd_vel_stamped {
            return Err(fixed("cmd_vel_stamped"));
        }
        if next.base != self.params.base {
            return Err(fixed("base"));
        }
        if next.limits != self.params.limits {
            let changed = next.limits.pairs(&next.guard).into_iter().zip(self.params.limits.pairs(&next.guard)).find(|(a, b)| a.3 != b.3);
            let key = changed.map(|(a, _)| a.2).unwrap_or("limits");
            return Err(ParamError::Invalid {
                key: key.to_string(),
                reason: "is a hard ceiling of the guard caps: it can only be set at start-up (restart the node)".into(),
            });
        }
        if next.e_stop != self.params.e_stop {
            return Err(fixed("e_stop.required"));
        }
        self.reconfigure(next);
        Ok(())
    }
}
