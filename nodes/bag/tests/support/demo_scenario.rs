//! The demo bag's invented scenario, "workshop crossing": a small robot drives slowly (0.08 m/s)
//! straight across a weak, intermittent ethanol-like plume in a workshop, for one minute.
//!
//! - World frame = odom: the robot starts at (0, -2) m heading +y (yaw = pi/2) and ends near
//!   (0, 2.8) m. The vapour source sits at (-3.5, 0.3) m, upwind; the air flows towards +x at
//!   about 0.35 m/s with a slow crosswind meander.
//! - Odor arrives in filaments: Poisson arrivals (up to 2.5 per second near the plume axis)
//!   whose mean amplitude follows a Gaussian crosswind profile (sigma 0.52 m at the robot's
//!   3.5 m downwind distance), each a 0.3 s pulse. Two MOX sensors sit 0.1 m left and right of
//!   the robot's centre; since the robot heads +y, "left" is upwind, so filaments reach it about
//!   0.57 s earlier.
//! - Sensors: resistance [ohm], Rs = R0 / g with g following (1 + C/C0)^0.5 through an
//!   asymmetric first-order lag (tau 1.8 s rising, 11.1 s falling), C0 = 5 ppm, plus 0.2 %
//!   noise. Published at 50 Hz on /chem; wind (relative to the robot, in base_link) at 10 Hz on /wind;
//!   odometry at 50 Hz on /odom; /e_stop (false) at 1 Hz.
//!
//! All values are made up; the generator is seeded and deterministic.

#![allow(clippy::result_large_err)] // sillage_bag errors name file, topic and offset

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp, Normal};
use sillage_bag::{BagError, BagWriter, QosProfile, WriteSummary, WriterOptions};
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos, Qos};
use std::path::Path;

/// Start of the recording [ns since the epoch] (2026-01-12 09:30 UTC, invented).
pub const START: Nanos = 1_768_210_200_000_000_000;
/// Length [s].
pub const DURATION_S: f64 = 60.0;
/// Seed of the committed demo bag.
pub const SEED: u64 = 20_260_112;

const SPEED: f64 = 0.08;
const SOURCE: (f64, f64) = (-3.5, 0.3);
const WIND: f64 = 0.35;
const SENSOR_OFFSET: f64 = 0.1;

/// One filament passing the robot's line: arrival time at x = 0 [s], amplitude [ppm].
struct Filament {
    t0: f64,
    ppm: f64,
}

fn meander(t: f64) -> f64 {
    0.08 * (2.0 * std::f64::consts::PI * t / 23.0).sin() + 0.04 * (2.0 * std::f64::consts::PI * t / 7.3).sin()
}

fn robot_y(t: f64) -> f64 {
    -2.0 + SPEED * t
}

/// Writes the demo bag folder `dir` with `seed`, over `duration_s` seconds.
pub fn write_demo(dir: &Path, seed: u64, duration_s: f64, overwrite: bool) -> Result<WriteSummary, BagError> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let noise = Normal::new(0.0, 1.0).map_err(|e| BagError::Encode { path: dir.into(), topic: "-".into(), reason: e.to_string() })?;
    let gap = Exp::new(1.0).map_err(|e| BagError::Encode { path: dir.into(), topic: "-".into(), reason: e.to_string() })?;

    // Filaments: thinned Poisson process with the crosswind profile at the robot's position.
    let sigma = 0.1 + 0.12 * (0.0 - SOURCE.0);
    let mut filaments = Vec::new();
    let mut t = 0.0;
    while t < duration_s + 2.0 {
        t += gap.sample(&mut rng) / 2.5;
        let dy = robot_y(t) - (SOURCE.1 + meander(t));
        let p = (-dy * dy / (2.0 * sigma * sigma)).exp();
        if rng.random::<f64>() < p {
            filaments.push(Filament { t0: t, ppm: 4.0 + 10.0 * gap.sample(&mut rng) });
        }
    }
    let lag = 2.0 * SENSOR_OFFSET / WIND;
    let conc = |t: f64, delay: f64| -> f64 {
        filaments
            .iter()
            .map(|f| {
                let u = (t - f.t0 - delay) / 0.3;
                if (0.0..1.0).contains(&u) { f.ppm * (std::f64::consts::PI * u).sin() } else { 0.0 }
            })
            .sum()
    };

    let mut w = BagWriter::create(dir, WriterOptions { overwrite, ..Default::default() })?;
    let sensor = [QosProfile::from(Qos::SensorData)];
    let chem = w.add_topic("/chem", "sillage_msgs/msg/ChemSample", &sensor)?;
    let wind = w.add_topic("/wind", "geometry_msgs/msg/Vector3Stamped", &sensor)?;
    let odom = w.add_topic("/odom", "nav_msgs/msg/Odometry", &sensor)?;
    let estop = w.add_topic("/e_stop", "std_msgs/msg/Bool", &[QosProfile::from(Qos::Latched)])?;

    let r0 = [42_000.0, 39_000.0];
    let mut g = [1.0f64, 1.0];
    let dt_chem = 0.02;
    // Events of all streams, merged by time: (stamp, order, message, topic).
    let n_chem = (duration_s / dt_chem).round() as i64;
    let mut out: Vec<(Nanos, u8, Msg)> = Vec::new();
    for k in 0..n_chem {
        let t = k as f64 * dt_chem;
        let c = [conc(t, 0.0), conc(t, lag)];
        let mut values = Vec::with_capacity(2);
        for i in 0..2 {
            let target = (1.0 + c[i] / 5.0).sqrt();
            let tau = if target > g[i] { 1.8 } else { 11.1 };
            g[i] += (target - g[i]) * (1.0 - (-dt_chem / tau).exp());
            let rs = r0[i] / g[i] * (1.0 + 0.002 * noise.sample(&mut rng));
            values.push((rs * 10.0).round() / 10.0);
        }
        let stamp = START + (t * 1e9).round() as Nanos;
        let msg = ChemSample {
            header: Header::new(stamp, "chem_link"),
            channels: vec!["left".into(), "right".into()],
            values,
            quantity: ChemSample::RESISTANCE,
        };
        out.push((stamp, 0, msg.into()));
    }
    let n_wind = (duration_s * 10.0).round() as i64;
    for k in 0..n_wind {
        let t = k as f64 * 0.1;
        // Air velocity in the world minus the robot's, rotated into base_link (yaw = pi/2).
        let (ax, ay) = (WIND + 0.05 * noise.sample(&mut rng), 0.1 * meander(t) / 0.08 * 0.5);
        let (rx, ry) = (ax, ay - SPEED);
        let v = Vector3 { x: ry + 0.02 * noise.sample(&mut rng), y: -rx + 0.02 * noise.sample(&mut rng), z: 0.0 };
        let stamp = START + (t * 1e9).round() as Nanos + 3_000_000;
        out.push((stamp, 1, Vector3Stamped { header: Header::new(stamp, "base_link"), vector: v }.into()));
    }
    let n_odom = (duration_s * 50.0).round() as i64;
    let mut cov = Covariance::default();
    for (i, v) in [1e-4, 1e-4, 1e6, 1e6, 1e6, 4e-4].into_iter().enumerate() {
        cov.0[i * 7] = v;
    }
    for k in 0..n_odom {
        let t = k as f64 * 0.02;
        let wobble = 0.01 * (t * 0.9).sin();
        let yaw = std::f64::consts::FRAC_PI_2 + wobble;
        let stamp = START + (t * 1e9).round() as Nanos + 1_000_000;
        let msg = Odometry {
            header: Header::new(stamp, "odom"),
            child_frame_id: "base_link".into(),
            pose: PoseWithCovariance {
                pose: Pose { position: Point { x: 0.001 * (t * 0.9).cos() - 0.001, y: robot_y(t), z: 0.0 }, orientation: Quaternion::from_yaw(yaw) },
                covariance: cov,
            },
            twist: TwistWithCovariance {
                twist: Twist { linear: Vector3 { x: SPEED, y: 0.0, z: 0.0 }, angular: Vector3 { x: 0.0, y: 0.0, z: 0.009 * (t * 0.9).cos() } },
                covariance: cov,
            },
        };
        out.push((stamp, 2, msg.into()));
    }
    for k in 0..(duration_s as i64) {
        let stamp = START + k * 1_000_000_000 + 500_000;
        out.push((stamp, 3, Bool { data: false }.into()));
    }
    out.sort_by_key(|(t, o, _)| (*t, *o));
    // Receive time: the stamp plus a small transport delay (0.5-2.5 ms); written in receive
    // order, as a recorder does.
    let mut timed: Vec<(Nanos, u8, Msg)> =
        out.into_iter().map(|(stamp, o, msg)| (stamp + 500_000 + (rng.random::<f64>() * 2e6) as Nanos, o, msg)).collect();
    timed.sort_by_key(|(t, o, _)| (*t, *o));
    let topics = [chem, wind, odom, estop];
    for (log_time, o, msg) in &timed {
        w.write(topics[*o as usize], *log_time, msg)?;
    }
    w.finish()
}
