//! The simulated world as a node core: `cmd_vel` in; `chem`, `wind`, `odom`, `scan` and
//! `/clock` out, driven by one physics timer.
//!
//! Contract:
//! - pure and deterministic: the world is seeded (`seed`), time comes only from `now`; the
//!   world's time zero (its *epoch*) is the first time the node is called
//!   ([`WorldNode::initial_outputs`] or the first tick), which publishes the initial `odom`
//!   (robot at rest at the start pose) and `/clock`;
//! - each tick advances the physics to `now` and publishes, in this order: `/clock`, `odom`
//!   (when due at `odom_rate`), `e_stop` = false (when due, every [`E_STOP_PERIOD`]: the
//!   simulated robot's e-stop, never pressed, as a heartbeat), every `wind` reading, every `scan`, every `chem` sample taken
//!   since the last tick, stamped with their sample times (equal to `now` when the sensor
//!   rates divide `rate`). `chem` goes last: it is the only output whose consumers publish in
//!   turn, so every node sees this tick's pose and wind before the odor it causes;
//! - a `cmd_vel` first advances the physics to its arrival time under the previous command,
//!   then replaces the command (so the command timing is exact whatever the tick); a command
//!   of the wrong type or frame or with a non-finite component is dropped and counted; without
//!   a command for `cmd_timeout` the robot is commanded to stop (at exactly that time);
//! - outputs: `chem` (ChemSample, quantity RESISTANCE [ohm], channels named as in the
//!   scenario, frame `frames.base`), `wind` (Vector3Stamped, `frames.base`, the air velocity
//!   relative to the moving anemometer, pointing where the air goes to [m/s]), `odom`
//!   (Odometry, `frames.odom` -> `frames.base`, perfect pose and body twist), `/clock`
//!   (rosgraph_msgs/Clock), and `scan` (LaserScan, `frames.laser`) only when the scenario has a
//!   laser.
//!
//! As a ROS 2 node (a host binary of the r2r executor): read the scenario from the `scenario`
//! parameter, build the core with [`WorldNode::new`], drive its timer from the wall clock (the
//! world node itself must not use sim time: it is the source of `/clock`), and start the other
//! nodes with `use_sim_time: true`. Then a robot-less ROS setup runs the whole stack.

use crate::convert;
use crate::params::WorldParams;
use sillage_core::msg::*;
use sillage_core::params::{self, NodeParams, ParamError};
use sillage_core::time::nanos;
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};
use sillage_world::{Scenario, Twist2, World};

/// Default ROS node name.
pub const NODE_NAME: &str = "sim_world";

/// Every topic the world node may declare (`scan` only with a laser in the scenario), for
/// checks that have no scenario at hand (launch-file remaps).
pub const TOPICS: &[&str] = &["cmd_vel", "chem", "wind", "odom", "/clock", "e_stop", "scan"];

/// Input index of `cmd_vel`.
pub const IN_CMD_VEL: usize = 0;
/// Output index of `chem`.
pub const OUT_CHEM: usize = 0;
/// Output index of `wind`.
pub const OUT_WIND: usize = 1;
/// Output index of `odom`.
pub const OUT_ODOM: usize = 2;
/// Output index of `/clock`.
pub const OUT_CLOCK: usize = 3;
/// Output index of `e_stop` (std_msgs/Bool, always false).
pub const OUT_E_STOP: usize = 4;
/// Output index of `scan` (present only with a laser).
pub const OUT_SCAN: usize = 5;

/// Period of the simulated e-stop heartbeat [ns] (0.5 s).
pub const E_STOP_PERIOD: u64 = 500_000_000;

/// How long a refused command keeps the command diagnostics at WARN [s].
const RECENT_PROBLEM: f64 = 5.0;

/// Command counters.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct CommandStats {
    /// Commands applied.
    pub accepted: u64,
    /// Commands dropped (type, frame or non-finite value).
    pub rejected: u64,
    /// Times the command timeout stopped the robot.
    pub timeouts: u64,
}

/// The simulated-world node core (see the module docs).
#[derive(Debug)]
pub struct WorldNode {
    params: WorldParams,
    world: World,
    has_laser: bool,
    scan_time: f64,
    epoch: Option<Nanos>,
    odom_period: u64,
    next_odom: u64,
    next_e_stop: u64,
    last_cmd: Option<Nanos>,
    timed_out: bool,
    stats: CommandStats,
    last_problem: Option<(Nanos, String)>,
}

impl WorldNode {
    /// The world of `scenario` (validated) with the seed and start pose of `params`.
    pub fn new(scenario: &Scenario, params: WorldParams) -> Result<Self, crate::SimError> {
        params.validate()?;
        let world = World::new(scenario, params.seed, params.start_pose)?;
        let scan_time = scenario.laser.as_ref().map(|l| 1.0 / l.sample_rate).unwrap_or(0.0);
        Ok(WorldNode {
            odom_period: u64::try_from(nanos(1.0 / params.odom_rate)).unwrap_or(u64::MAX).max(1),
            next_odom: 0,
            next_e_stop: 0,
            has_laser: scenario.laser.is_some(),
            scan_time,
            world,
            epoch: None,
            last_cmd: None,
            timed_out: false,
            stats: CommandStats::default(),
            last_problem: None,
            params,
        })
    }

    /// The parameters in use.
    pub fn params(&self) -> &WorldParams {
        &self.params
    }

    /// The world (ground truth: read it, do not step it).
    pub fn world(&self) -> &World {
        &self.world
    }

    /// Mutable access to the world before the first call, e.g. to start a mean map.
    pub fn world_mut(&mut self) -> &mut World {
        &mut self.world
    }

    /// Command counters.
    pub fn command_stats(&self) -> &CommandStats {
        &self.stats
    }

    /// The world's time zero [ns] once the node has been called.
    pub fn epoch(&self) -> Option<Nanos> {
        self.epoch
    }

    /// Sets the epoch to `now` and publishes the initial state (odom at rest, `/clock`); does
    /// nothing once the epoch is set. A host calls it when it starts the node; otherwise the
    /// first tick does it.
    pub fn initial_outputs(&mut self, now: Nanos, out: &mut Outbox) {
        if self.epoch.is_some() {
            return;
        }
        self.epoch = Some(now);
        if self.params.publish_clock {
            out.publish(OUT_CLOCK, convert::clock(now));
        }
        self.publish_odom(now, out);
        self.publish_e_stop(out);
    }

    fn publish_e_stop(&mut self, out: &mut Outbox) {
        out.publish(OUT_E_STOP, Bool { data: false });
        self.next_e_stop = self.world.time_ns().saturating_add(E_STOP_PERIOD);
    }

    fn publish_odom(&mut self, now: Nanos, out: &mut Outbox) {
        let f = &self.params.frames;
        out.publish(OUT_ODOM, convert::odom(now, &f.odom, &f.base, self.world.robot_pose(), self.world.robot_twist()));
        self.next_odom = self.world.time_ns().saturating_add(self.odom_period);
    }

    /// World time [ns] of node time `t` (0 before the epoch).
    fn world_time(&self, epoch: Nanos, t: Nanos) -> u64 {
        u64::try_from(t.saturating_sub(epoch)).unwrap_or(0)
    }

    /// Steps the physics to `now`, stopping the robot at the command timeout on the way.
    fn advance(&mut self, epoch: Nanos, now: Nanos) {
        let target = self.world_time(epoch, now);
        if let (Some(last), false) = (self.last_cmd, self.timed_out) {
            let timeout = nanos(self.params.cmd_timeout);
            if timeout > 0 && now.saturating_sub(last) > timeout {
                let stop_at = self.world_time(epoch, last.saturating_add(timeout));
                self.step_to(stop_at);
                self.world.set_command(Twist2::default());
                self.timed_out = true;
                self.stats.timeouts += 1;
            }
        }
        self.step_to(target);
    }

    fn step_to(&mut self, world_ns: u64) {
        let now = self.world.time_ns();
        if world_ns > now {
            self.world.step_ns(world_ns - now);
        }
    }

    fn tick(&mut self, epoch: Nanos, now: Nanos, out: &mut Outbox) {
        self.advance(epoch, now);
        let f = self.params.frames.clone();
        if self.params.publish_clock {
            out.publish(OUT_CLOCK, convert::clock(now));
        }
        if self.world.time_ns() >= self.next_odom {
            self.publish_odom(now, out);
        }
        if self.world.time_ns() >= self.next_e_stop {
            self.publish_e_stop(out);
        }
        for w in self.world.drain_wind() {
            out.publish(OUT_WIND, convert::wind(epoch, &f.base, &w));
        }
        let scans: Vec<_> = self.world.drain_scans().collect();
        for s in &scans {
            out.publish(OUT_SCAN, convert::scan(epoch, &f.laser, s, self.scan_time));
        }
        let chem: Vec<_> = self.world.drain_chem().collect();
        let names = self.world.channel_names();
        for c in &chem {
            out.publish(OUT_CHEM, convert::chem(epoch, &f.base, names, c));
        }
    }
}

impl NodeCore for WorldNode {
    fn name(&self) -> &str {
        NODE_NAME
    }

    fn inputs(&self) -> Vec<Port> {
        let cmd = if self.params.cmd_vel_stamped {
            Port::of::<TwistStamped>("cmd_vel", Qos::Reliable)
        } else {
            Port::of::<Twist>("cmd_vel", Qos::Reliable)
        };
        vec![cmd]
    }

    fn outputs(&self) -> Vec<Port> {
        let mut v = vec![
            Port::of::<ChemSample>("chem", Qos::SensorData),
            Port::of::<Vector3Stamped>("wind", Qos::SensorData),
            Port::of::<Odometry>("odom", Qos::SensorData),
            Port::of::<Clock>("/clock", Qos::Reliable),
            Port::of::<Bool>("e_stop", Qos::Reliable),
        ];
        if self.has_laser {
            v.push(Port::of::<LaserScan>("scan", Qos::SensorData));
        }
        v
    }

    fn timers(&self) -> Vec<Nanos> {
        vec![nanos(1.0 / self.params.rate).max(1)]
    }

    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, _out: &mut Outbox) {
        if input != IN_CMD_VEL {
            return;
        }
        match convert::command(msg, &self.params.frames.base) {
            Ok(cmd) => {
                if let Some(epoch) = self.epoch {
                    self.advance(epoch, now);
                }
                self.world.set_command(cmd);
                self.last_cmd = Some(now);
                self.timed_out = false;
                self.stats.accepted += 1;
            }
            Err(e) => {
                self.stats.rejected += 1;
                self.last_problem = Some((now, e.to_string()));
            }
        }
    }

    fn on_timer(&mut self, now: Nanos, _timer: usize, out: &mut Outbox) {
        match self.epoch {
            None => self.initial_outputs(now, out),
            Some(epoch) => self.tick(epoch, now, out),
        }
    }

    fn diagnostics(&self, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        let w = &self.world;
        let p = w.robot_pose();
        let (level, msg) = if w.robot().is_blocked() {
            (DiagnosticStatus::WARN, "robot blocked by a wall or obstacle")
        } else {
            (DiagnosticStatus::OK, "ok")
        };
        let values = [
            ("x", format!("{:.3}", p.x)),
            ("y", format!("{:.3}", p.y)),
            ("yaw", format!("{:.3}", p.yaw)),
            ("collisions", w.collisions().to_string()),
            ("distance_travelled", format!("{:.3}", w.robot().distance_travelled())),
            ("nearest_source_distance", format!("{:.3}", w.nearest_source_distance())),
            ("filaments", w.filament_count().to_string()),
            ("world_time", format!("{:.3}", w.time())),
        ];
        out.push(DiagnosticStatus::with(level, "sim_world: robot", msg, &values));
        let recent = self.last_problem.as_ref().filter(|(t, _)| now.saturating_sub(*t) <= nanos(RECENT_PROBLEM));
        let (level, msg) = match recent {
            Some((_, m)) => (DiagnosticStatus::WARN, m.as_str()),
            None => (DiagnosticStatus::OK, "ok"),
        };
        let s = &self.stats;
        let values = [
            ("accepted", s.accepted.to_string()),
            ("rejected", s.rejected.to_string()),
            ("timeouts", s.timeouts.to_string()),
            ("last_problem", self.last_problem.as_ref().map(|(_, m)| m.clone()).unwrap_or_else(|| "none".into())),
        ];
        out.push(DiagnosticStatus::with(level, "sim_world: cmd_vel", msg, &values));
    }

    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }

    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        let mut next = self.params.clone();
        params::apply(&mut next, value)?;
        let fixed = |key: &str| ParamError::Invalid { key: key.to_string(), reason: "can only be set at start-up (restart the node)".into() };
        let p = &self.params;
        for (changed, key) in [
            (next.scenario != p.scenario, "scenario"),
            (next.seed != p.seed, "seed"),
            (next.start_pose != p.start_pose, "start_pose"),
            (next.rate != p.rate, "rate"),
            (next.cmd_vel_stamped != p.cmd_vel_stamped, "cmd_vel_stamped"),
        ] {
            if changed {
                return Err(fixed(key));
            }
        }
        self.odom_period = u64::try_from(nanos(1.0 / next.odom_rate)).unwrap_or(u64::MAX).max(1);
        self.params = next;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::executor::{Executor, Record};
    use sillage_core::time::SECOND;

    fn demo() -> Scenario {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
        Scenario::from_path(&path).unwrap_or_else(|e| panic!("{e}"))
    }

    fn forward(t: Nanos, vx: f64) -> Msg {
        let mut c = TwistStamped { header: Header::new(t, "base_link"), twist: Twist::default() };
        c.twist.linear.x = vx;
        c.into()
    }

    /// The node as an ordinary core in the in-process executor: a command injected on
    /// `cmd_vel` moves the robot, and every output comes at its rate with its frames.
    #[test]
    fn runs_in_an_executor_and_drives_the_robot() {
        let s = demo();
        let node = WorldNode::new(&s, WorldParams { cmd_timeout: 0.0, ..Default::default() }).expect("node");
        let mut ex = Executor::new();
        ex.add(Box::new(node)).expect("adds");
        let mut log: Vec<(Nanos, String, Msg)> = Vec::new();
        let mut sink = |r: &Record| log.push((r.stamp, r.topic.to_string(), r.msg.clone()));
        ex.run_until(0, &mut sink).expect("runs");
        ex.inject(0, "/cmd_vel", forward(0, 0.2)).expect("injects");
        ex.run_until(2 * SECOND, &mut sink).expect("runs");
        let count = |t: &str| log.iter().filter(|r| r.1 == t).count();
        // 100 Hz ticks from 10 ms (the first tick sets the epoch at 10 ms and publishes the
        // initial state), so 200 clocks; odom at 50 Hz; chem 20 Hz, wind and scan 10 Hz.
        assert_eq!(count("/clock"), 200);
        assert_eq!(count("/odom"), 100);
        assert_eq!(count("/chem"), 39);
        assert_eq!(count("/wind"), 19);
        assert_eq!(count("/scan"), 19);
        let Some((_, _, Msg::Odometry(o))) = log.iter().rev().find(|r| r.1 == "/odom") else { panic!("no odom") };
        assert_eq!((o.header.frame_id.as_str(), o.child_frame_id.as_str()), ("odom", "base_link"));
        // Start (11, 6) facing -x (yaw pi): 0.2 m/s reached after 0.25 s at 0.8 m/s^2, so
        // after t = 1.99 s of motion the distance is 0.2 t - 0.2 * 0.25 / 2 (kinematics).
        let d = 0.2 * 1.99 - 0.2 * 0.25 / 2.0;
        assert!((o.pose.pose.position.x - (11.0 - d)).abs() < 2e-3, "x = {}", o.pose.pose.position.x);
        assert!((o.twist.twist.linear.x - 0.2).abs() < 1e-12);
        let Some((_, _, Msg::ChemSample(c))) = log.iter().find(|r| r.1 == "/chem") else { panic!("no chem") };
        assert_eq!(c.channels, vec!["left".to_string(), "right".to_string()]);
        assert_eq!(c.quantity, ChemSample::RESISTANCE);
        let Some((_, _, Msg::Vector3Stamped(w))) = log.iter().rev().find(|r| r.1 == "/wind") else { panic!("no wind") };
        // Facing -x into a 0.5 m/s wind towards +x while driving at 0.2 m/s: the relative air
        // goes to -x in base_link at about 0.7 m/s (meander and noise aside).
        assert!(w.vector.x < -0.4 && w.header.frame_id == "base_link", "{:?}", w.vector);
        let Some((_, _, Msg::LaserScan(l))) = log.iter().find(|r| r.1 == "/scan") else { panic!("no scan") };
        assert_eq!((l.header.frame_id.as_str(), l.ranges.len()), ("laser", 543));
    }

    #[test]
    fn the_e_stop_is_published_false_every_half_second() {
        let mut node = WorldNode::new(&demo(), WorldParams::default()).expect("node");
        let mut out = Outbox::new();
        let mut e_stops = Vec::new();
        for k in 0..=300 {
            node.on_timer(k * 10_000_000, 0, &mut out);
            for (i, m) in out.drain() {
                if i == OUT_E_STOP {
                    assert_eq!(m, Msg::Bool(Bool { data: false }));
                    e_stops.push(k * 10);
                }
            }
        }
        // At the epoch, then every 500 ms of world time over 3 s [ms].
        assert_eq!(e_stops, [0, 500, 1000, 1500, 2000, 2500, 3000]);
        assert_eq!(node.outputs()[OUT_E_STOP].topic, "e_stop");
    }

    #[test]
    fn commands_time_out_and_bad_ones_are_dropped() {
        let s = demo();
        let mut node = WorldNode::new(&s, WorldParams::default()).expect("node");
        let mut out = Outbox::new();
        node.initial_outputs(0, &mut out);
        assert_eq!(out.drain().count(), 3, "initial clock, odom and e_stop");
        node.on_message(0, IN_CMD_VEL, &forward(0, 0.3), &mut out);
        let mut odd = TwistStamped { header: Header::new(0, "map"), twist: Twist::default() };
        odd.twist.linear.x = 1.0;
        node.on_message(0, IN_CMD_VEL, &odd.into(), &mut out);
        assert_eq!((node.command_stats().accepted, node.command_stats().rejected), (1, 1));
        for k in 1..=300 {
            node.on_timer(k * 10_000_000, 0, &mut out);
        }
        // 0.5 s without a command: stopped (then at rest within 0.3 / 0.8 s of braking).
        assert_eq!(node.command_stats().timeouts, 1);
        assert_eq!(node.world().robot_twist(), Twist2::default());
        assert!(node.set_params_yaml(&serde_yaml::from_str("seed: 3").expect("yaml")).is_err());
        assert!(node.set_params_yaml(&serde_yaml::from_str("cmd_timeout: 1.0").expect("yaml")).is_ok());
    }
}
