//! The simulated world: wind, plume, robot, sensors and arena stepped together.
//!
//! Contract: `World::new(scenario, seed, start)` is deterministic in its inputs; `step`
//! advances virtual time (integer nanoseconds) in sub-steps no longer than
//! `scenario.physics_dt`, cut so that every sensor sample falls exactly on a sub-step end;
//! readings are queued with their stamps and drained by the caller. Frames: world = ENU
//! `odom` (odometry is perfect), sensor readings in `base_link`.
//! The anemometer reads the wind at its own world position; each MOX channel is a unit drawn
//! around the scenario's nominal parameters from its own seeded stream; a closed arena
//! (`room`) adds its well-mixed background to the plume everywhere, fed by the filaments
//! that age out inside the arena (their gas stays in the room, now well mixed) and emptied
//! by the ventilation; in the gaussian mode the room has no source (the plume is a steady
//! state that resolves all the gas).

use crate::anemometer::{self, AnemometerParams};
use crate::arena::Arena;
use crate::error::WorldError;
use crate::filament::FilamentPlume;
use crate::gaussian_plume::GaussianPlume;
use crate::geometry::{Pose2, Twist2};
use crate::laser::{self, LaserParams, LaserScan};
use crate::mox::MoxSensor;
use crate::robot::Robot;
use crate::room::Room;
use crate::sampling::SampleClock;
use crate::scenario::{PlumeSpec, Scenario, WindFieldKind};
use crate::wind::WindField;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// One sample of every chemical channel.
#[derive(Debug, Clone, PartialEq)]
pub struct ChemReading {
    /// Sample time [ns].
    pub stamp_ns: u64,
    /// Sensing resistance of each channel [ohm], in scenario order.
    pub resistances: Vec<f64>,
}

/// One anemometer reading.
#[derive(Debug, Clone, PartialEq)]
pub struct WindReading {
    /// Sample time [ns].
    pub stamp_ns: u64,
    /// Air velocity relative to the sensor, base_link [m/s], pointing where the air goes.
    pub velocity: [f64; 3],
}

/// A regular grid of points for concentration maps.
#[derive(Debug, Clone, PartialEq)]
pub struct GridSpec {
    /// Centre of cell (0, 0), world frame [m].
    pub origin: [f64; 2],
    /// Cell size [m].
    pub resolution: f64,
    /// Cells along x.
    pub nx: usize,
    /// Cells along y.
    pub ny: usize,
    /// Height of the map plane [m].
    pub z: f64,
}

impl GridSpec {
    /// World point of cell (i, j) (i along x, j along y).
    pub fn point(&self, i: usize, j: usize) -> [f64; 3] {
        [
            self.origin[0] + i as f64 * self.resolution,
            self.origin[1] + j as f64 * self.resolution,
            self.z,
        ]
    }
}

#[derive(Debug, Clone)]
enum PlumeModel {
    Filament(Box<FilamentPlume>),
    Gaussian(GaussianPlume),
}

impl PlumeModel {
    fn concentration(&self, p: [f64; 3]) -> f64 {
        match self {
            PlumeModel::Filament(f) => f.concentration(p),
            PlumeModel::Gaussian(g) => g.concentration(p),
        }
    }

    /// Concentrations on every cell of `grid`, row-major, appended to `out`.
    fn grid_concentrations(&self, grid: &GridSpec, out: &mut Vec<f64>) {
        let points = (0..grid.ny).flat_map(|j| (0..grid.nx).map(move |i| grid.point(i, j)));
        match self {
            PlumeModel::Filament(f) => f.concentrations(points, out),
            PlumeModel::Gaussian(g) => out.extend(points.map(|p| g.concentration(p))),
        }
    }
}

#[derive(Debug, Clone)]
struct MeanMap {
    grid: GridSpec,
    clock: SampleClock,
    sum: Vec<f64>,
    count: u64,
}

#[derive(Debug, Clone)]
struct Laser {
    params: LaserParams,
    clock: SampleClock,
    rng: ChaCha8Rng,
}

/// The simulated world (see the module docs).
#[derive(Debug, Clone)]
pub struct World {
    scenario: Scenario,
    arena: Arena,
    t_ns: u64,
    physics_dt_ns: u64,
    wind: WindField,
    plume: PlumeModel,
    robot: Robot,
    mox: Vec<MoxSensor>,
    mox_rngs: Vec<ChaCha8Rng>,
    room: Option<Room>,
    channels: Vec<String>,
    chem_clock: SampleClock,
    chem_out: Vec<ChemReading>,
    anemometer: AnemometerParams,
    anemometer_rng: ChaCha8Rng,
    anemometer_clock: SampleClock,
    wind_out: Vec<WindReading>,
    laser: Option<Laser>,
    scans_out: Vec<LaserScan>,
    mean_map: Option<MeanMap>,
}

fn stream(seed: u64, id: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(id);
    rng
}

impl World {
    /// Builds the world of a (validated) scenario at time 0 with the robot at rest at
    /// `start_poses[start]`. Every random process draws from its own stream of `seed`.
    pub fn new(scenario: &Scenario, seed: u64, start: usize) -> Result<Self, WorldError> {
        let count = scenario.robot.start_poses.len();
        let p = *scenario
            .robot
            .start_poses
            .get(start)
            .ok_or(WorldError::StartPose {
                index: start,
                count,
            })?;
        let arena = scenario.arena();
        let wind = match scenario.wind_field() {
            WindFieldKind::Uniform => WindField::new(scenario.wind_params(), stream(seed, 1)),
            WindFieldKind::Grid => WindField::with_grid(
                scenario.wind_params(),
                &scenario.wind.grid,
                &arena,
                stream(seed, 1),
            ),
        };
        let plume = match &scenario.plume {
            PlumeSpec::Filament { max_filaments } => PlumeModel::Filament(Box::new(
                FilamentPlume::new(
                    scenario.filament_sources(),
                    arena.bounds,
                    *max_filaments,
                    stream(seed, 2),
                )
                .with_walls(
                    arena.obstacles.clone(),
                    scenario.wind.grid.solid_walls.clone(),
                ),
            )),
            PlumeSpec::Gaussian {
                stability_class,
                terrain,
                min_sigma,
            } => PlumeModel::Gaussian(GaussianPlume {
                class: *stability_class,
                terrain: *terrain,
                wind_speed: scenario.wind.speed,
                wind_direction: scenario.wind.direction,
                min_sigma: *min_sigma,
                sources: scenario
                    .sources
                    .iter()
                    .map(|s| (s.position, s.release_rate))
                    .collect(),
            }),
        };
        let robot = Robot::new(
            scenario.robot.drive,
            scenario.robot.limits,
            scenario.robot.radius,
            Pose2::new(p[0], p[1], p[2]),
        );
        let n = scenario.sensors.channels.len();
        let laser = scenario.laser.clone().map(|params| Laser {
            clock: SampleClock::new(params.sample_rate),
            params,
            rng: stream(seed, 4),
        });
        let anemometer = scenario.anemometer.clone();
        let mut mox_rngs: Vec<ChaCha8Rng> = (0..n as u64).map(|i| stream(seed, 16 + i)).collect();
        let mox = mox_rngs
            .iter_mut()
            .enumerate()
            .map(|(i, rng)| {
                let (unit, drift) = scenario.mox_params(i).draw_unit(rng);
                MoxSensor::unit(unit, drift, rng)
            })
            .collect();
        let room = scenario
            .room
            .as_ref()
            .zip(scenario.room_volume())
            .map(|(r, v)| Room::new(v, r.air_changes_per_hour));
        Ok(Self {
            arena,
            t_ns: 0,
            physics_dt_ns: ((scenario.physics_dt * 1e9).round() as u64).max(1),
            wind,
            plume,
            robot,
            mox,
            mox_rngs,
            room,
            channels: scenario
                .sensors
                .channels
                .iter()
                .map(|c| c.name.clone())
                .collect(),
            chem_clock: SampleClock::new(scenario.sensors.sample_rate),
            chem_out: Vec::new(),
            anemometer_clock: SampleClock::new(anemometer.sample_rate),
            anemometer,
            anemometer_rng: stream(seed, 3),
            wind_out: Vec::new(),
            laser,
            scans_out: Vec::new(),
            mean_map: None,
            scenario: scenario.clone(),
        })
    }

    /// The scenario the world was built from.
    pub fn scenario(&self) -> &Scenario {
        &self.scenario
    }

    /// Arena geometry.
    pub fn arena(&self) -> &Arena {
        &self.arena
    }

    /// Virtual time [ns] since the start.
    pub fn time_ns(&self) -> u64 {
        self.t_ns
    }

    /// Virtual time [s] since the start.
    pub fn time(&self) -> f64 {
        self.t_ns as f64 * 1e-9
    }

    /// Sets the commanded body twist (base_link; held until replaced).
    pub fn set_command(&mut self, cmd: Twist2) {
        self.robot.set_command(cmd);
    }

    /// Advances the world by `dt` [s] (rounded to whole nanoseconds; negative is ignored).
    pub fn step(&mut self, dt: f64) {
        if dt > 0.0 {
            self.step_ns((dt * 1e9).round() as u64);
        }
    }

    /// Advances the world by `dt_ns` [ns].
    pub fn step_ns(&mut self, dt_ns: u64) {
        let end = self.t_ns.saturating_add(dt_ns);
        while self.t_ns < end {
            let next = self.next_event(end);
            self.substep(next);
        }
    }

    fn next_event(&self, end: u64) -> u64 {
        let mut next = end.min(self.t_ns + self.physics_dt_ns);
        next = next
            .min(self.chem_clock.next_ns())
            .min(self.anemometer_clock.next_ns());
        if let Some(l) = &self.laser {
            next = next.min(l.clock.next_ns());
        }
        if let Some(m) = &self.mean_map {
            next = next.min(m.clock.next_ns());
        }
        next.max(self.t_ns + 1)
    }

    fn substep(&mut self, next: u64) {
        let h = (next - self.t_ns) as f64 * 1e-9;
        let t_next = next as f64 * 1e-9;
        self.wind.advance_to(t_next);
        let mut into_room = 0.0;
        if let PlumeModel::Filament(f) = &mut self.plume {
            f.step_to(&self.wind, t_next);
            into_room = f.take_retired_mass() / h;
        }
        if let Some(r) = &mut self.room {
            r.step(into_room, h);
        }
        self.robot.step(&self.arena, h);
        self.t_ns = next;
        let pose = self.robot.pose();
        let bg = self.background();
        for ((sensor, ch), rng) in self
            .mox
            .iter_mut()
            .zip(&self.scenario.sensors.channels)
            .zip(self.mox_rngs.iter_mut())
        {
            let c = self.plume.concentration(pose.body_to_world(ch.position)) + bg;
            sensor.update(c, h);
            sensor.advance_baseline(h, rng);
        }
        self.sample(pose);
    }

    fn sample(&mut self, pose: Pose2) {
        let now = self.t_ns;
        if let Some(stamp_ns) = self.chem_clock.take_due(now) {
            let resistances = self
                .mox
                .iter()
                .zip(self.mox_rngs.iter_mut())
                .map(|(s, rng)| s.read(rng))
                .collect();
            self.chem_out.push(ChemReading {
                stamp_ns,
                resistances,
            });
        }
        if let Some(stamp_ns) = self.anemometer_clock.take_due(now) {
            let at = pose.body_to_world(self.anemometer.position);
            let u = self.wind.velocity(at, self.time());
            let velocity = anemometer::measure(
                &self.anemometer,
                u,
                &pose,
                &self.robot.twist(),
                &mut self.anemometer_rng,
            );
            self.wind_out.push(WindReading { stamp_ns, velocity });
        }
        if let Some(l) = &mut self.laser {
            if let Some(stamp) = l.clock.take_due(now) {
                self.scans_out.push(laser::scan(
                    &l.params,
                    &self.arena,
                    &pose,
                    stamp,
                    &mut l.rng,
                ));
            }
        }
        if let Some(m) = &mut self.mean_map {
            if m.clock.take_due(now).is_some() {
                let mut snapshot = Vec::with_capacity(m.sum.len());
                self.plume.grid_concentrations(&m.grid, &mut snapshot);
                let bg = self.room.as_ref().map_or(0.0, Room::concentration);
                for (s, c) in m.sum.iter_mut().zip(snapshot) {
                    *s += c + bg;
                }
                m.count += 1;
            }
        }
    }

    /// Well-mixed background concentration now [g/m^3] (0 in open air).
    pub fn background(&self) -> f64 {
        self.room.as_ref().map_or(0.0, Room::concentration)
    }

    /// The drawn MOX units (parameters, baseline) in channel order.
    pub fn sensors(&self) -> &[MoxSensor] {
        &self.mox
    }

    /// The wind field.
    pub fn wind(&self) -> &WindField {
        &self.wind
    }

    /// Chemical channel names, in the order of [`ChemReading::resistances`].
    pub fn channel_names(&self) -> &[String] {
        &self.channels
    }

    /// Removes and returns the chemical samples taken since the last call.
    pub fn drain_chem(&mut self) -> std::vec::Drain<'_, ChemReading> {
        self.chem_out.drain(..)
    }

    /// Removes and returns the anemometer readings taken since the last call.
    pub fn drain_wind(&mut self) -> std::vec::Drain<'_, WindReading> {
        self.wind_out.drain(..)
    }

    /// Removes and returns the laser scans taken since the last call (none without a laser).
    pub fn drain_scans(&mut self) -> std::vec::Drain<'_, LaserScan> {
        self.scans_out.drain(..)
    }

    /// Noise-free resistance of every channel now [ohm].
    pub fn sensor_resistances(&self) -> Vec<f64> {
        self.mox.iter().map(MoxSensor::resistance).collect()
    }

    /// Concentration [g/m^3] at each chemical channel's position now.
    pub fn sensor_concentrations(&self) -> Vec<f64> {
        let pose = self.robot.pose();
        self.scenario
            .sensors
            .channels
            .iter()
            .map(|c| self.plume.concentration(pose.body_to_world(c.position)) + self.background())
            .collect()
    }

    /// Noise-free anemometer value now [m/s], base_link.
    pub fn anemometer_now(&self) -> [f64; 3] {
        let pose = self.robot.pose();
        let u = self
            .wind
            .velocity(pose.body_to_world(self.anemometer.position), self.time());
        anemometer::relative_air_velocity(&self.anemometer, u, &pose, &self.robot.twist())
    }

    /// True air velocity [m/s] at world point `p` now (world frame).
    pub fn wind_at(&self, p: [f64; 3]) -> [f64; 2] {
        self.wind.velocity(p, self.time())
    }

    /// One noise-free laser scan from the current pose (`None` without a laser).
    pub fn laser_scan_now(&self) -> Option<LaserScan> {
        let l = self.laser.as_ref()?;
        let params = LaserParams {
            noise_std: 0.0,
            ..l.params.clone()
        };
        let mut rng = stream(0, 0);
        Some(laser::scan(
            &params,
            &self.arena,
            &self.robot.pose(),
            self.t_ns,
            &mut rng,
        ))
    }

    /// Robot pose (world = odom frame).
    pub fn robot_pose(&self) -> Pose2 {
        self.robot.pose()
    }

    /// Robot body twist (base_link) [m/s, m/s, rad/s].
    pub fn robot_twist(&self) -> Twist2 {
        self.robot.twist()
    }

    /// The robot model (limits, collisions, path length).
    pub fn robot(&self) -> &Robot {
        &self.robot
    }

    /// Collisions so far.
    pub fn collisions(&self) -> u32 {
        self.robot.collisions()
    }

    /// True source positions [m] (x, y, height), world frame.
    pub fn source_positions(&self) -> Vec<[f64; 3]> {
        self.scenario.sources.iter().map(|s| s.position).collect()
    }

    /// Planar distance from the robot centre to the nearest source [m].
    pub fn nearest_source_distance(&self) -> f64 {
        let p = self.robot.pose();
        self.scenario
            .sources
            .iter()
            .map(|s| (s.position[0] - p.x).hypot(s.position[1] - p.y))
            .fold(f64::INFINITY, f64::min)
    }

    /// True when the robot is within the scenario's success radius of a source.
    pub fn source_reached(&self) -> bool {
        self.nearest_source_distance() <= self.scenario.success_radius
    }

    /// True once the virtual time has reached the scenario's time limit.
    pub fn time_limit_reached(&self) -> bool {
        self.time() >= self.scenario.time_limit
    }

    /// Instantaneous concentration [g/m^3] at world point `p` [m].
    pub fn concentration_at(&self, p: [f64; 3]) -> f64 {
        self.plume.concentration(p) + self.background()
    }

    /// Live filaments (0 in the gaussian mode).
    pub fn filament_count(&self) -> usize {
        match &self.plume {
            PlumeModel::Filament(f) => f.filament_count(),
            PlumeModel::Gaussian(_) => 0,
        }
    }

    /// Instantaneous concentration on a grid [g/m^3], row-major (index j * nx + i).
    pub fn concentration_map(&self, grid: &GridSpec) -> Vec<f64> {
        let mut out = Vec::with_capacity(grid.nx * grid.ny);
        self.plume.grid_concentrations(grid, &mut out);
        let bg = self.background();
        out.iter_mut().for_each(|c| *c += bg);
        out
    }

    /// Starts (or restarts) averaging the concentration on `grid` every `period` [s].
    pub fn start_mean_map(&mut self, grid: GridSpec, period: f64) {
        let mut clock = SampleClock::new(1.0 / period.max(1e-9));
        while clock.next_ns() <= self.t_ns {
            clock.take_due(self.t_ns);
        }
        let sum = vec![0.0; grid.nx * grid.ny];
        self.mean_map = Some(MeanMap {
            grid,
            clock,
            sum,
            count: 0,
        });
    }

    /// The mean concentration map so far [g/m^3] (row-major) and the number of snapshots
    /// averaged; `None` if averaging was never started. In the gaussian mode the field is
    /// already a time average, so this equals [`World::concentration_map`].
    pub fn mean_map(&self) -> Option<(&GridSpec, Vec<f64>, u64)> {
        let m = self.mean_map.as_ref()?;
        let k = m.count.max(1) as f64;
        Some((&m.grid, m.sum.iter().map(|s| s / k).collect(), m.count))
    }
}
