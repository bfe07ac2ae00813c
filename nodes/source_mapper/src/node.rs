//! The source mapper node core.
//!
//! Inputs (port order): `odom` (nav_msgs/Odometry, `frames.odom` -> `frames.base`), `wind`
//! (geometry_msgs/Vector3Stamped in `frames.base` or `frames.odom`, air velocity pointing where
//! the air goes to), `odor_events` (sillage_msgs/OdorEventArray). Outputs: `source_map`
//! (nav_msgs/OccupancyGrid), `source_posterior` (geometry_msgs/PoseWithCovarianceStamped).
//! One timer at `rate`.
//!
//! - Wind: each reading goes to odom (rotated by the latest odometry yaw when it is in
//!   `frames.base`; a base-frame reading before any odometry is skipped), the robot's velocity
//!   is added back with `wind.ego_motion`, and a first-order low-pass (`wind.filter_tau`) runs in
//!   odom. Its speed is V and its direction the model's wind direction.
//! - Hits: rising events whose level is above `detection.level`, counted between two updates,
//!   at most `detection.max_hits` per update.
//! - Each tick is one update over dt = 1 / `rate`: the robot's position is the mean of the
//!   odometry positions received since the last tick (the latest one if none came), and the
//!   grid posterior ([`crate::grid`]) takes the hits, or the non-detection, there. No update
//!   (and the hits of the period are dropped, counted) while odometry is older than
//!   `odom.timeout` or the wind older than `wind.timeout`. The grid is placed at the first
//!   update (`grid.anchor`).
//! - `source_posterior` (every update, stamp = tick time, frame `frames.odom`):
//!   `pose.pose.position` is the posterior mean (`report.point: mean`) or the centre of the
//!   most probable cell (`map`), z = 0, orientation identity. `pose.covariance` (6x6 row-major,
//!   x y z roll pitch yaw) holds in its x-y block the posterior second moment about that point,
//!   E[(X - p)(X - p)^T] [m^2] (the covariance itself for `mean`; for `map` it adds the
//!   squared offset of the mean); the z, roll, pitch and yaw variances are
//!   [`UNKNOWN_VARIANCE`] and their cross terms 0. By Markov's inequality the posterior mass
//!   within a radius r of the point is at least 1 - (cov_xx + cov_yy) / r^2.
//! - `source_map` (every `map_every` updates): the grid as placed, `data[i] = round(100 p_i /
//!   p_max)`: 100 at the most probable cell, the others relative to it (0-100, never -1).
//! - Diagnostics "source_mapper: posterior": `updates`, `skipped_no_odom`, `skipped_no_wind`,
//!   `hits` (counted in updates), `hits_dropped`, `entropy` [nats] and `entropy_uniform`
//!   (ln of the cell count, the prior's), `map_x`, `map_y` [m], `map_probability`,
//!   `mass_within_radius` (posterior mass of the cells within `report.radius` of the MAP
//!   cell's centre) with `radius`, `mean_x`, `mean_y`, `sigma_x`, `sigma_y` [m] (about the
//!   mean), `lambda` [m] and `wind_speed` [m/s] of the last update; "source_mapper: inputs":
//!   rejected messages per topic and the last error.

use crate::error::MapperError;
use crate::grid::{GridGeometry, Posterior};
use crate::k0::LnK0Table;
use crate::model::Kernel;
use crate::params::{Anchor, Params, Point};
use crate::topics;
use sillage_core::msg::*;
use sillage_core::params::{self, ParamError};
use sillage_core::time::{nanos, secs};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};

/// Variance published for the coordinates the mapper does not estimate (z, roll, pitch, yaw).
pub const UNKNOWN_VARIANCE: f64 = 1e6;

/// Input index of `odom`.
pub const IN_ODOM: usize = 0;
/// Input index of `wind`.
pub const IN_WIND: usize = 1;
/// Input index of `odor_events`.
pub const IN_EVENTS: usize = 2;
/// Output index of `source_map`.
pub const OUT_MAP: usize = 0;
/// Output index of `source_posterior`.
pub const OUT_POSTERIOR: usize = 1;

#[derive(Debug, Clone, Copy)]
struct OdomState {
    position: [f64; 2],
    yaw: f64,
    /// Planar velocity in base_link [m/s].
    velocity: [f64; 2],
    at: Nanos,
}

#[derive(Debug, Clone, Copy)]
struct WindState {
    filtered: [f64; 2],
    at: Nanos,
}

/// Counters (cumulative since start).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Counts {
    /// Updates applied.
    pub updates: u64,
    /// Ticks without fresh odometry.
    pub skipped_no_odom: u64,
    /// Ticks without a fresh wind estimate.
    pub skipped_no_wind: u64,
    /// Hits used by updates.
    pub hits: u64,
    /// Hits dropped (beyond `detection.max_hits`, or in a period without an update).
    pub hits_dropped: u64,
    /// Rejected messages per input (odom, wind, odor_events).
    pub rejected: [u64; 3],
}

/// What the last update used.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LastUpdate {
    /// Robot position [m, odom].
    pub robot: [f64; 2],
    /// Filtered wind [m/s, odom].
    pub wind: [f64; 2],
    /// Hits counted.
    pub hits: u32,
    /// The model of that update.
    pub kernel: Kernel,
}

/// The node core.
#[derive(Debug, Clone)]
pub struct SourceMapper {
    params: Params,
    dt: f64,
    odom: Option<OdomState>,
    position_sum: [f64; 2],
    positions: u32,
    wind: Option<WindState>,
    pending_hits: u32,
    posterior: Option<Posterior>,
    counts: Counts,
    last: Option<LastUpdate>,
    last_error: Option<MapperError>,
}

impl SourceMapper {
    /// A core with validated parameters.
    pub fn new(params: Params) -> Result<Self, ParamError> {
        use sillage_core::params::NodeParams;
        params.validate()?;
        Ok(SourceMapper {
            dt: 1.0 / params.rate,
            params,
            odom: None,
            position_sum: [0.0; 2],
            positions: 0,
            wind: None,
            pending_hits: 0,
            posterior: None,
            counts: Counts::default(),
            last: None,
            last_error: None,
        })
    }

    /// The parameters in use.
    pub fn params(&self) -> &Params {
        &self.params
    }

    /// The posterior, once the grid is placed.
    pub fn posterior(&self) -> Option<&Posterior> {
        self.posterior.as_ref()
    }

    /// Counters.
    pub fn counts(&self) -> &Counts {
        &self.counts
    }

    /// What the last update used.
    pub fn last_update(&self) -> Option<&LastUpdate> {
        self.last.as_ref()
    }

    /// The last rejected input.
    pub fn last_error(&self) -> Option<&MapperError> {
        self.last_error.as_ref()
    }

    fn frame_ok(frame: &str, expected: &str) -> bool {
        frame.is_empty() || frame == expected
    }

    fn on_odom(&mut self, now: Nanos, m: &Odometry) -> Result<(), MapperError> {
        let (t, f) = (topics::ODOM, &self.params.frames);
        if !Self::frame_ok(&m.header.frame_id, &f.odom) {
            return Err(MapperError::Frame { topic: t, frame: m.header.frame_id.clone(), expected: f.odom.clone() });
        }
        if !Self::frame_ok(&m.child_frame_id, &f.base) {
            return Err(MapperError::Frame { topic: t, frame: m.child_frame_id.clone(), expected: f.base.clone() });
        }
        let p = &m.pose.pose;
        let q = p.orientation;
        let norm = (q.x * q.x + q.y * q.y + q.z * q.z + q.w * q.w).sqrt();
        if !norm.is_finite() || (norm - 1.0).abs() > 0.1 {
            return Err(MapperError::field(t, "pose.pose.orientation", format!("|q| = {norm}"), "not a unit quaternion"));
        }
        let checks = [
            ("pose.pose.position.x", p.position.x),
            ("pose.pose.position.y", p.position.y),
            ("twist.twist.linear.x", m.twist.twist.linear.x),
            ("twist.twist.linear.y", m.twist.twist.linear.y),
        ];
        for (field, v) in checks {
            if !v.is_finite() {
                return Err(MapperError::field(t, field, v, "not finite"));
            }
        }
        let unit = Quaternion { x: q.x / norm, y: q.y / norm, z: q.z / norm, w: q.w / norm };
        let position = [p.position.x, p.position.y];
        self.odom = Some(OdomState { position, yaw: unit.yaw(), velocity: [m.twist.twist.linear.x, m.twist.twist.linear.y], at: now });
        self.position_sum = [self.position_sum[0] + position[0], self.position_sum[1] + position[1]];
        self.positions += 1;
        Ok(())
    }

    fn on_wind(&mut self, now: Nanos, m: &Vector3Stamped) -> Result<(), MapperError> {
        let t = topics::WIND;
        for (field, v) in [("vector.x", m.vector.x), ("vector.y", m.vector.y)] {
            if !v.is_finite() {
                return Err(MapperError::field(t, field, v, "not finite"));
            }
        }
        let f = &self.params.frames;
        let frame = m.header.frame_id.as_str();
        let in_odom = if Self::frame_ok(frame, &f.base) {
            false
        } else if frame == f.odom {
            true
        } else {
            return Err(MapperError::Frame { topic: t, frame: frame.to_string(), expected: f.base.clone() });
        };
        let ego = self.params.wind.ego_motion;
        let air = match (in_odom, self.odom) {
            (true, None) => [m.vector.x, m.vector.y],
            (true, Some(o)) => {
                let v = if ego { rotate(o.velocity, o.yaw) } else { [0.0; 2] };
                [m.vector.x + v[0], m.vector.y + v[1]]
            }
            // A base-frame reading cannot be rotated before the first odometry: skipped.
            (false, None) => return Ok(()),
            (false, Some(o)) => {
                let body = if ego { [m.vector.x + o.velocity[0], m.vector.y + o.velocity[1]] } else { [m.vector.x, m.vector.y] };
                rotate(body, o.yaw)
            }
        };
        let tau = self.params.wind.filter_tau;
        let filtered = match self.wind {
            Some(w) if tau > 0.0 => {
                let dt = secs(now.saturating_sub(w.at)).max(0.0);
                let alpha = 1.0 - (-dt / tau).exp();
                [w.filtered[0] + alpha * (air[0] - w.filtered[0]), w.filtered[1] + alpha * (air[1] - w.filtered[1])]
            }
            _ => air,
        };
        self.wind = Some(WindState { filtered, at: now });
        Ok(())
    }

    fn on_events(&mut self, m: &OdorEventArray) -> Result<(), MapperError> {
        let mut rising = 0u32;
        for e in &m.events {
            match e.polarity {
                OdorEvent::RISING => {
                    if e.level.is_nan() {
                        return Err(MapperError::field(topics::ODOR_EVENTS, "events[].level", e.level, "not a number"));
                    }
                    if e.level > self.params.detection.level {
                        rising = rising.saturating_add(1);
                    }
                }
                OdorEvent::FALLING => {}
                p => return Err(MapperError::field(topics::ODOR_EVENTS, "events[].polarity", p, "not +1 or -1")),
            }
        }
        self.pending_hits = self.pending_hits.saturating_add(rising);
        Ok(())
    }

    /// Where the grid goes, given the first odometry and wind (None: not yet possible).
    fn place(&self, odom: &OdomState, wind: [f64; 2]) -> Option<Posterior> {
        let g = &self.params.grid;
        let center = match g.anchor {
            Anchor::Fixed => [g.center_x, g.center_y],
            Anchor::Start => {
                let speed = wind[0].hypot(wind[1]);
                let up = if g.upwind_offset == 0.0 {
                    [0.0; 2]
                } else if speed > 0.0 {
                    [-wind[0] / speed * g.upwind_offset, -wind[1] / speed * g.upwind_offset]
                } else {
                    return None;
                };
                [odom.position[0] + g.center_x + up[0], odom.position[1] + g.center_y + up[1]]
            }
        };
        let (width, height) = g.cells();
        let r = g.resolution;
        let origin = [center[0] - 0.5 * width as f64 * r, center[1] - 0.5 * height as f64 * r];
        Some(Posterior::new(GridGeometry { origin, resolution: r, width, height }))
    }

    fn update(&mut self, now: Nanos, out: &mut Outbox) {
        let hits = std::mem::take(&mut self.pending_hits);
        let (sum, n) = (std::mem::take(&mut self.position_sum), std::mem::take(&mut self.positions));
        let Some(odom) = self.odom.filter(|o| now.saturating_sub(o.at) <= nanos(self.params.odom.timeout)) else {
            self.counts.skipped_no_odom += 1;
            self.counts.hits_dropped += u64::from(hits);
            return;
        };
        let Some(wind) = self.wind.filter(|w| now.saturating_sub(w.at) <= nanos(self.params.wind.timeout)) else {
            self.counts.skipped_no_wind += 1;
            self.counts.hits_dropped += u64::from(hits);
            return;
        };
        if self.posterior.is_none() {
            self.posterior = self.place(&odom, wind.filtered);
        }
        let Some(post) = self.posterior.as_mut() else {
            self.counts.skipped_no_wind += 1;
            self.counts.hits_dropped += u64::from(hits);
            return;
        };
        let robot = if n > 0 { [sum[0] / f64::from(n), sum[1] / f64::from(n)] } else { odom.position };
        let used = hits.min(self.params.detection.max_hits);
        let kernel = Kernel::new(&self.params.model, wind.filtered, self.dt);
        post.update(robot, &kernel, used, LnK0Table::shared());
        self.counts.updates += 1;
        self.counts.hits += u64::from(used);
        self.counts.hits_dropped += u64::from(hits - used);
        self.last = Some(LastUpdate { robot, wind: wind.filtered, hits: used, kernel });
        out.publish(OUT_POSTERIOR, self.posterior_msg(now));
        if self.counts.updates % u64::from(self.params.map_every) == 1 || self.params.map_every == 1 {
            if let Some(m) = self.map_msg(now) {
                out.publish(OUT_MAP, m);
            }
        }
    }

    /// The `source_posterior` message of the current posterior (None before the grid is
    /// placed).
    pub fn posterior_msg(&self, now: Nanos) -> PoseWithCovarianceStamped {
        let mut msg = PoseWithCovarianceStamped { header: Header::new(now, &self.params.frames.odom), ..Default::default() };
        let Some(post) = &self.posterior else { return msg };
        let s = post.summary();
        let point = match self.params.report.point {
            Point::Mean => s.mean,
            Point::Map => s.map,
        };
        let (ox, oy) = (s.mean[0] - point[0], s.mean[1] - point[1]);
        let c = &mut msg.pose.covariance.0;
        c[0] = s.covariance[0][0] + ox * ox;
        c[1] = s.covariance[0][1] + ox * oy;
        c[6] = c[1];
        c[7] = s.covariance[1][1] + oy * oy;
        for d in [14, 21, 28, 35] {
            c[d] = UNKNOWN_VARIANCE;
        }
        msg.pose.pose.position = sillage_core::msg::Point { x: point[0], y: point[1], z: 0.0 };
        msg
    }

    /// The `source_map` message of the current posterior (None before the grid is placed).
    pub fn map_msg(&self, now: Nanos) -> Option<OccupancyGrid> {
        let post = self.posterior.as_ref()?;
        let g = post.geometry();
        let pmax = post.summary().map_probability;
        let scale = if pmax > 0.0 { 100.0 / pmax } else { 0.0 };
        let data = post.probabilities().iter().map(|&p| (p * scale).round().clamp(0.0, 100.0) as i8).collect();
        Some(OccupancyGrid {
            header: Header::new(now, &self.params.frames.odom),
            info: MapMetaData {
                map_load_time: Time::from_nanos(now),
                resolution: g.resolution as f32,
                width: g.width as u32,
                height: g.height as u32,
                origin: Pose { position: sillage_core::msg::Point { x: g.origin[0], y: g.origin[1], z: 0.0 }, orientation: Quaternion::default() },
            },
            data,
        })
    }
}

/// `v` rotated by `yaw` [rad].
fn rotate(v: [f64; 2], yaw: f64) -> [f64; 2] {
    let (s, c) = yaw.sin_cos();
    [c * v[0] - s * v[1], s * v[0] + c * v[1]]
}

fn fmt(v: f64) -> String {
    format!("{v:.4}")
}

impl NodeCore for SourceMapper {
    fn name(&self) -> &str {
        crate::NODE_NAME
    }

    fn inputs(&self) -> Vec<Port> {
        vec![
            Port::of::<Odometry>(topics::ODOM, Qos::SensorData),
            Port::of::<Vector3Stamped>(topics::WIND, Qos::SensorData),
            Port::of::<OdorEventArray>(topics::ODOR_EVENTS, Qos::Reliable),
        ]
    }

    fn outputs(&self) -> Vec<Port> {
        vec![
            Port::of::<OccupancyGrid>(topics::SOURCE_MAP, Qos::Reliable),
            Port::of::<PoseWithCovarianceStamped>(topics::SOURCE_POSTERIOR, Qos::Reliable),
        ]
    }

    fn timers(&self) -> Vec<Nanos> {
        vec![nanos(self.dt).max(1)]
    }

    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, _out: &mut Outbox) {
        let r = match (input, msg) {
            (IN_ODOM, Msg::Odometry(m)) => self.on_odom(now, m),
            (IN_WIND, Msg::Vector3Stamped(m)) => self.on_wind(now, m),
            (IN_EVENTS, Msg::OdorEventArray(m)) => self.on_events(m),
            _ => return,
        };
        if let Err(e) = r {
            if let Some(c) = self.counts.rejected.get_mut(input) {
                *c += 1;
            }
            self.last_error = Some(e);
        }
    }

    fn on_timer(&mut self, now: Nanos, _timer: usize, out: &mut Outbox) {
        self.update(now, out);
    }

    fn diagnostics(&self, _now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        let c = &self.counts;
        let mut values = vec![
            ("updates", c.updates.to_string()),
            ("skipped_no_odom", c.skipped_no_odom.to_string()),
            ("skipped_no_wind", c.skipped_no_wind.to_string()),
            ("hits", c.hits.to_string()),
            ("hits_dropped", c.hits_dropped.to_string()),
        ];
        let (level, message) = match &self.posterior {
            None => (DiagnosticStatus::WARN, "no grid yet (waiting for odometry and wind)"),
            Some(post) => {
                let s = post.summary();
                values.extend([
                    ("entropy", fmt(s.entropy)),
                    ("entropy_uniform", fmt((post.geometry().cells() as f64).ln())),
                    ("map_x", fmt(s.map[0])),
                    ("map_y", fmt(s.map[1])),
                    ("map_probability", format!("{:.6}", s.map_probability)),
                    ("mass_within_radius", format!("{:.6}", post.mass_within_map(self.params.report.radius))),
                    ("radius", fmt(self.params.report.radius)),
                    ("mean_x", fmt(s.mean[0])),
                    ("mean_y", fmt(s.mean[1])),
                    ("sigma_x", fmt(s.covariance[0][0].sqrt())),
                    ("sigma_y", fmt(s.covariance[1][1].sqrt())),
                ]);
                if let Some(l) = &self.last {
                    values.push(("lambda", fmt(l.kernel.lambda)));
                    values.push(("wind_speed", fmt(l.wind[0].hypot(l.wind[1]))));
                }
                (DiagnosticStatus::OK, "updating")
            }
        };
        out.push(DiagnosticStatus::with(level, "source_mapper: posterior", message, &values));
        let r = &c.rejected;
        let err = self.last_error.as_ref().map(|e| e.to_string()).unwrap_or_default();
        let level = if r.iter().any(|&n| n > 0) { DiagnosticStatus::WARN } else { DiagnosticStatus::OK };
        out.push(DiagnosticStatus::with(
            level,
            "source_mapper: inputs",
            if err.is_empty() { "ok" } else { &err },
            &[("rejected_odom", r[0].to_string()), ("rejected_wind", r[1].to_string()), ("rejected_odor_events", r[2].to_string())],
        ));
    }

    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }

    /// Validates and applies new parameters. The posterior, the inputs and the counters are
    /// kept while the grid parameters stay the same; a new grid starts from the uniform prior.
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        let mut p = self.params.clone();
        params::apply(&mut p, value)?;
        let mut next = SourceMapper::new(p)?;
        if next.params.grid == self.params.grid {
            next.posterior = self.posterior.take();
        }
        next.odom = self.odom;
        next.wind = self.wind;
        next.position_sum = self.position_sum;
        next.positions = self.positions;
        next.pending_hits = self.pending_hits;
        next.counts = self.counts;
        next.last = self.last;
        next.last_error = self.last_error.take();
        *self = next;
        Ok(())
    }
}
