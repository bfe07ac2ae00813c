//! A synthetic sensor stream for the benchmarks and the soak run (an invented scene: a robot
//! circling slowly at the edge of a plume in a large hall): two MOX channels `left` and
//! `right` at 100 Hz on `/chem` (resistance [ohm]), wind at 10 Hz on `/wind` (base_link) and
//! odometry at 50 Hz on `/odom`, generated in time order, O(1) per message and seeded.
//!
//! - Odor arrives as filaments, Poisson arrivals whose rate swings slowly (period 300 s)
//!   between 0.05 and 2.5 per second as the robot moves in and out of the plume; each is a
//!   0.3 s half-sine pulse of exponential amplitude (mean 8 ppm); the right sensor sees it
//!   0.25 s after the left one.
//! - Sensor: conductance ratio sqrt(1 + C / 5 ppm) through an asymmetric first-order lag (tau
//!   1.8 s rising, 11.1 s falling, the values docs/references.md quotes as unverified: here
//!   they only shape a test signal), Rs = R0 / ratio with R0 = 42 and 39 kohm, 0.2 % noise,
//!   rounded to 0.1 ohm.
//! - Log time = header stamp + 0.7 ms (chem), 0.9 ms (odom), 1.1 ms (wind), so the merged stream
//!   is in log-time order.

#![allow(dead_code)] // each bench binary uses part of it

use sillage_core::msg::*;
use sillage_core::{Msg, Nanos};
use std::collections::VecDeque;

/// Start of the synthetic recording [ns since the epoch] (invented).
pub const T0: Nanos = 1_790_000_000_000_000_000;
/// Generator tick [ns] (the chem period).
pub const TICK: Nanos = 10_000_000;

/// xorshift64* (seeded, deterministic).
struct Rng(u64);
impl Rng {
    fn f64(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn exp(&mut self) -> f64 {
        -(1.0 - self.f64()).ln()
    }
    fn normal(&mut self) -> f64 {
        // Box-Muller (one of the pair).
        let (u, v) = (1.0 - self.f64(), self.f64());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

/// One message of the stream.
pub struct Item {
    /// Log (arrival) time [ns].
    pub log_time: Nanos,
    /// Topic.
    pub topic: &'static str,
    /// The message.
    pub msg: Msg,
}

/// The stream: an iterator of [`Item`] in log-time order, `ticks` chem samples long.
pub struct Synth {
    k: i64,
    ticks: i64,
    rng: Rng,
    next_arrival: f64,
    pulses: VecDeque<(f64, f64)>,
    g: [f64; 2],
    queue: VecDeque<Item>,
}

const LAG: f64 = 0.25;
const WIDTH: f64 = 0.3;
const R0: [f64; 2] = [42_000.0, 39_000.0];

impl Synth {
    /// A stream of `seconds` of recording from `seed`.
    pub fn new(seconds: f64, seed: u64) -> Synth {
        Synth { k: 0, ticks: (seconds * 100.0).round() as i64, rng: Rng(seed | 1), next_arrival: 0.0, pulses: VecDeque::new(), g: [1.0; 2], queue: VecDeque::new() }
    }

    /// Messages in the whole stream (chem + odom + wind).
    pub fn len(seconds: f64) -> u64 {
        let ticks = (seconds * 100.0).round() as u64;
        ticks + ticks.div_ceil(2) + ticks.div_ceil(10)
    }

    fn rate(s: f64) -> f64 {
        let y = (2.0 * std::f64::consts::PI * s / 300.0).sin();
        0.05 + 2.45 * (-(y - 0.6) * (y - 0.6) / 0.08).exp()
    }

    fn concentration(&self, s: f64) -> f64 {
        self.pulses
            .iter()
            .map(|&(t0, ppm)| {
                let u = (s - t0) / WIDTH;
                if (0.0..1.0).contains(&u) { ppm * (std::f64::consts::PI * u).sin() } else { 0.0 }
            })
            .sum()
    }

    fn fill(&mut self) {
        let k = self.k;
        let s = k as f64 * 0.01;
        let t = T0 + k * TICK;
        // Filaments arriving up to now (thinned Poisson process, rate bound 2.5 /s).
        while self.next_arrival <= s {
            let a = self.next_arrival;
            if self.rng.f64() < Self::rate(a) / 2.5 {
                let ppm = 8.0 * self.rng.exp();
                self.pulses.push_back((a, ppm));
            }
            self.next_arrival += self.rng.exp() / 2.5;
        }
        while self.pulses.front().is_some_and(|&(t0, _)| t0 + WIDTH + LAG < s) {
            self.pulses.pop_front();
        }
        let c = [self.concentration(s), self.concentration(s - LAG)];
        let mut values = Vec::with_capacity(2);
        for i in 0..2 {
            let target = (1.0 + c[i] / 5.0).sqrt();
            let tau: f64 = if target > self.g[i] { 1.8 } else { 11.1 };
            self.g[i] += (target - self.g[i]) * (1.0 - (-0.01 / tau).exp());
            let rs = R0[i] / self.g[i] * (1.0 + 0.002 * self.rng.normal());
            values.push((rs * 10.0).round() / 10.0);
        }
        let chem = ChemSample { header: Header::new(t, "chem_link"), channels: vec!["left".into(), "right".into()], values, quantity: ChemSample::RESISTANCE };
        self.queue.push_back(Item { log_time: t + 700_000, topic: "/chem", msg: chem.into() });
        if k % 2 == 0 {
            // A 5 m circle at 0.1 m/s.
            let (r, w) = (5.0, 0.02);
            let yaw = w * s + std::f64::consts::FRAC_PI_2;
            let o = Odometry {
                header: Header::new(t, "odom"),
                child_frame_id: "base_link".into(),
                pose: PoseWithCovariance {
                    pose: Pose { position: Point { x: r * (w * s).cos(), y: r * (w * s).sin(), z: 0.0 }, orientation: Quaternion::from_yaw(yaw) },
                    ..Default::default()
                },
                twist: TwistWithCovariance { twist: Twist { linear: Vector3 { x: r * w, y: 0.0, z: 0.0 }, angular: Vector3 { x: 0.0, y: 0.0, z: w } }, ..Default::default() },
            };
            self.queue.push_back(Item { log_time: t + 900_000, topic: "/odom", msg: o.into() });
        }
        if k % 10 == 0 {
            let v = Vector3 { x: 0.4 + 0.05 * self.rng.normal(), y: 0.05 * self.rng.normal(), z: 0.0 };
            self.queue.push_back(Item { log_time: t + 1_100_000, topic: "/wind", msg: Vector3Stamped { header: Header::new(t, "base_link"), vector: v }.into() });
        }
        self.k += 1;
    }
}

impl Iterator for Synth {
    type Item = Item;
    fn next(&mut self) -> Option<Item> {
        if self.queue.is_empty() && self.k < self.ticks {
            self.fill();
        }
        self.queue.pop_front()
    }
}
