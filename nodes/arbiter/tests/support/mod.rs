//! Test harness: the arbiter alone on the in-process executor, closed by a tiny scripted world
//! (a kinematic base integrating the published `cmd_vel`, an anemometer reading the air
//! relative to the moving robot, and a plume given as a function of position and time).
//! Inputs are injected at 20 Hz; the arbiter's own timer runs at its control rate.

#![allow(dead_code)]

use sillage_arbiter::drive::Cmd;
use sillage_arbiter::geometry::{Pose2, Vec2};
use sillage_arbiter::{Arbiter, Mode, Params};
use sillage_core::executor::{Executor, Record};
use sillage_core::msg::*;
use sillage_core::time::SECOND;
use sillage_core::{Msg, Nanos};

/// Sensor sample period of the harness [ns] (20 Hz).
pub const SAMPLE: Nanos = 50_000_000;

/// What the plume gives at one sample.
#[derive(Debug, Clone, Copy, Default)]
pub struct Odor {
    /// Rising events in this sample.
    pub rising: u32,
    /// Features (bout rate [Hz], intermittency, distance [m], sigma [m]).
    pub features: (f64, f64, f64, f64),
    /// Bearing in odom [rad] and confidence, if any.
    pub bearing: Option<(f64, f64)>,
}

/// A plume: odor at a position [m, odom] and time [ns].
pub type Plume = Box<dyn Fn(Vec2, Nanos) -> Odor>;

/// No odor anywhere.
pub fn clean_air() -> Plume {
    Box::new(|_, _| Odor { features: (0.0, 0.0, f64::NAN, f64::NAN), ..Default::default() })
}

/// Which inputs the harness publishes.
#[derive(Debug, Clone, Copy)]
pub struct Feed {
    pub wind: bool,
    pub odom: bool,
    pub chem: bool,
}

/// One output of the arbiter.
#[derive(Debug, Clone)]
pub enum Out {
    Cmd(Nanos, Cmd),
    State(Nanos, SearchState),
    Source(Nanos, PointStamped),
}

/// Events of one sample given the position [m, odom] and time [ns] (replaces `Odor::rising`).
pub type Events = Box<dyn Fn(Vec2, Nanos) -> Vec<OdorEvent>>;
/// Extra inputs at each sample given the time and the pose: (topic, message).
pub type Extra = Box<dyn FnMut(Nanos, &Pose2) -> Vec<(&'static str, Msg)>>;

/// The closed loop.
pub struct Sim {
    pub ex: Executor,
    pub t: Nanos,
    pub pose: Pose2,
    pub vel: Cmd,
    pub wind: Vec2,
    pub plume: Plume,
    pub feed: Feed,
    pub outs: Vec<Out>,
    pub poses: Vec<(Nanos, Pose2)>,
    pub holonomic: bool,
    /// When set, the odor events of each sample.
    pub events: Option<Events>,
    /// When set, more inputs at each sample (scan, posterior).
    pub extra: Option<Extra>,
}

pub fn odom_msg(t: Nanos, pose: &Pose2, vel: &Cmd) -> Msg {
    let mut m = Odometry { header: Header::new(t, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
    m.pose.pose.position = Point { x: pose.position.x, y: pose.position.y, z: 0.0 };
    m.pose.pose.orientation = Quaternion::from_yaw(pose.yaw);
    m.twist.twist = vel.twist();
    m.into()
}

pub fn wind_msg(t: Nanos, body: Vec2) -> Msg {
    Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: body.x, y: body.y, z: 0.0 } }.into()
}

pub fn events_msg(t: Nanos, rising: u32) -> Msg {
    let e = OdorEvent { stamp: Time::from_nanos(t), channel: 0, polarity: OdorEvent::RISING, level: 1.0 };
    OdorEventArray { header: Header::new(t, "base_link"), events: vec![e; rising as usize] }.into()
}

pub fn features_msg(t: Nanos, f: (f64, f64, f64, f64)) -> Msg {
    PlumeFeatures {
        header: Header::new(t, "base_link"),
        window: 5.0,
        bouts: 0,
        bout_rate: f.0,
        bout_amplitude: 0.0,
        intermittency: f.1,
        distance: f.2,
        distance_sigma: f.3,
        edge_index: f64::NAN,
    }
    .into()
}

pub fn bearing_msg(t: Nanos, bearing: Option<(f64, f64)>) -> Msg {
    match bearing {
        Some((b, c)) => OdorBearing { header: Header::new(t, "base_link"), bearing: b, lag: f64::NAN, confidence: c, cue: OdorBearing::FUSED },
        None => OdorBearing { header: Header::new(t, "base_link"), bearing: f64::NAN, lag: f64::NAN, confidence: 0.0, cue: OdorBearing::NONE },
    }
    .into()
}

pub fn cmd_of(msg: &Msg) -> Option<Cmd> {
    let t = match msg {
        Msg::TwistStamped(m) => {
            assert_eq!(m.header.frame_id, "base_link", "cmd_vel frame");
            m.twist
        }
        Msg::Twist(t) => *t,
        _ => return None,
    };
    Some(Cmd { vx: t.linear.x, vy: t.linear.y, wz: t.angular.z })
}

impl Sim {
    /// A loop with the arbiter built from `p`, the robot at `pose`, the air moving at `wind`
    /// [m/s, odom], and `plume`.
    /// The e-stop publishes `false` once at the start (`e_stop.required`).
    pub fn new(p: Params, pose: Pose2, wind: Vec2, plume: Plume) -> Sim {
        let mut sim = Sim::without_e_stop(p, pose, wind, plume);
        sim.inject("/e_stop", Msg::Bool(sillage_core::msg::Bool { data: false }));
        sim
    }

    /// As [`Sim::new`], with an e-stop topic that never publishes.
    pub fn without_e_stop(p: Params, pose: Pose2, wind: Vec2, plume: Plume) -> Sim {
        let holonomic = p.base == sillage_arbiter::params::BaseKind::Holonomic;
        let mut ex = Executor::new();
        ex.add(Box::new(Arbiter::new(p).expect("valid parameters"))).expect("wires");
        Sim {
            ex,
            t: 0,
            pose,
            vel: Cmd::ZERO,
            wind,
            plume,
            feed: Feed { wind: true, odom: true, chem: true },
            outs: Vec::new(),
            poses: Vec::new(),
            events: None,
            extra: None,
            holonomic,
        }
    }

    /// Injects a message at the current time.
    pub fn inject(&mut self, topic: &str, msg: Msg) {
        assert!(self.ex.inject(self.t, topic, msg).expect("type matches"), "topic {topic} is an input");
    }

    fn sample(&mut self) {
        let t = self.t;
        if self.feed.odom {
            let m = odom_msg(t, &self.pose, &self.vel);
            self.inject("/odom", m);
        }
        if self.feed.wind {
            // The anemometer reads the air relative to the moving robot, in base_link.
            let v_odom = self.pose.to_odom(Vec2::new(self.vel.vx, self.vel.vy));
            let body = self.pose.to_body(self.wind - v_odom);
            self.inject("/wind", wind_msg(t, body));
        }
        if self.feed.chem {
            let o = (self.plume)(self.pose.position, t);
            let events = match &self.events {
                Some(f) => OdorEventArray { header: Header::new(t, "base_link"), events: f(self.pose.position, t) }.into(),
                None => events_msg(t, o.rising),
            };
            self.inject("/odor_events", events);
            self.inject("/plume_features", features_msg(t, o.features));
            let b = o.bearing.map(|(h, c)| (sillage_arbiter::geometry::wrap_angle(h - self.pose.yaw), c));
            self.inject("/odor_bearing", bearing_msg(t, b));
        }
        if let Some(mut f) = self.extra.take() {
            let pose = self.pose;
            for (topic, m) in f(t, &pose) {
                self.inject(topic, m);
            }
            self.extra = Some(f);
        }
    }

    /// Runs the loop until `until` [ns].
    pub fn run(&mut self, until: Nanos) {
        while self.t < until {
            self.sample();
            let next = self.t + SAMPLE;
            let outs = &mut self.outs;
            let mut last_cmd = None;
            self.ex
                .run_until(next, &mut |r: &Record| {
                    if r.publisher.is_none() {
                        return;
                    }
                    match r.topic {
                        "/cmd_vel" => {
                            let c = cmd_of(r.msg).expect("a twist");
                            last_cmd = Some(c);
                            outs.push(Out::Cmd(r.stamp, c));
                        }
                        "/search_state" => {
                            if let Msg::SearchState(s) = r.msg {
                                outs.push(Out::State(r.stamp, s.clone()));
                            }
                        }
                        "/source_estimate" => {
                            if let Msg::PointStamped(p) = r.msg {
                                outs.push(Out::Source(r.stamp, p.clone()));
                            }
                        }
                        _ => {}
                    }
                })
                .expect("runs");
            if let Some(c) = last_cmd {
                self.vel = c;
            }
            self.integrate(SAMPLE as f64 * 1e-9);
            self.t = next;
            self.poses.push((self.t, self.pose));
        }
    }

    fn integrate(&mut self, dt: f64) {
        let c = self.vel;
        let mid = self.pose.yaw + 0.5 * c.wz * dt;
        let v = Vec2::new(c.vx, if self.holonomic { c.vy } else { 0.0 }).rotated(mid);
        self.pose.position = self.pose.position + v * dt;
        self.pose.yaw = sillage_arbiter::geometry::wrap_angle(self.pose.yaw + c.wz * dt);
    }

    /// The distinct consecutive modes published so far.
    pub fn modes(&self) -> Vec<Mode> {
        let mut v: Vec<Mode> = Vec::new();
        for o in &self.outs {
            if let Out::State(_, s) = o {
                let m = Mode::from_code(s.mode).expect("known mode");
                if v.last() != Some(&m) {
                    v.push(m);
                }
            }
        }
        v
    }

    /// The published states.
    pub fn states(&self) -> Vec<(Nanos, SearchState)> {
        self.outs.iter().filter_map(|o| if let Out::State(t, s) = o { Some((*t, s.clone())) } else { None }).collect()
    }

    /// The published commands.
    pub fn cmds(&self) -> Vec<(Nanos, Cmd)> {
        self.outs.iter().filter_map(|o| if let Out::Cmd(t, c) = o { Some((*t, *c)) } else { None }).collect()
    }

    /// The first time mode `m` was published.
    pub fn first(&self, m: Mode) -> Option<Nanos> {
        self.states().into_iter().find(|(_, s)| s.mode == m.code()).map(|(t, _)| t)
    }

    /// The last published state.
    pub fn last_state(&self) -> SearchState {
        self.states().last().map(|(_, s)| s.clone()).expect("a state was published")
    }

    /// The pose at time `t` (the last one recorded at or before it).
    pub fn pose_at(&self, t: Nanos) -> Pose2 {
        self.poses.iter().rev().find(|(pt, _)| *pt <= t).map(|(_, p)| *p).unwrap_or(self.pose)
    }

    /// Diagnostics of the arbiter now.
    pub fn diagnostics(&self) -> Vec<DiagnosticStatus> {
        let mut v = Vec::new();
        self.ex.node(0).expect("node").diagnostics(self.t, &mut v);
        v
    }
}

/// Seconds to nanoseconds.
pub fn s(x: f64) -> Nanos {
    (x * SECOND as f64).round() as Nanos
}
