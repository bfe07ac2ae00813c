//! The optional wind input: the mean true wind speed over the features window, for the
//! distance model's wind covariate.
//!
//! Contract: a wind message in the odometry's parent frame (the `header.frame_id` of the
//! latest odometry) is a true wind; any other frame is base-fixed and, with `wind.relative`,
//! the relative wind at the anemometer, corrected with fresh odometry (`sillage_air`). A
//! relative reading without fresh odometry, or a non-finite one, is not used (counted): its
//! speed would include the robot's own motion. Speeds are averaged over the samples of the
//! last `window`; a mean below `wind.min_speed` is still air (no speed). A speed does not
//! depend on the frame's rotation, so no heading is needed.

use crate::params::WindParams;
use sillage_air::{norm, Motion};
use sillage_core::msg::{Odometry, Vector3Stamped};
use sillage_core::time::nanos;
use sillage_core::Nanos;
use std::collections::VecDeque;

/// Most wind samples kept (a bound on memory for very fast anemometers).
const MAX_SAMPLES: usize = 10_000;

/// Mean true wind speed over a window.
#[derive(Debug, Clone, PartialEq)]
pub struct WindSpeed {
    params: WindParams,
    window: Nanos,
    odom: Option<(Nanos, Motion, String)>,
    samples: VecDeque<(Nanos, f64)>,
    /// Wind messages not used (non-finite, or relative without fresh odometry).
    pub unused: u64,
}

impl WindSpeed {
    /// Nothing heard yet; `window` [s] is the features window.
    pub fn new(params: WindParams, window: f64) -> WindSpeed {
        WindSpeed { params, window: nanos(window), odom: None, samples: VecDeque::new(), unused: 0 }
    }

    /// Takes an odometry message received at `now` [ns].
    pub fn on_odom(&mut self, now: Nanos, m: &Odometry) {
        let l = &m.twist.twist.linear;
        let motion = Motion { velocity: [l.x, l.y], omega: m.twist.twist.angular.z };
        self.odom = Some((now, motion, m.header.frame_id.clone()));
    }

    /// Takes a wind message received at `now` [ns]; false when it was not used.
    pub fn on_wind(&mut self, now: Nanos, m: &Vector3Stamped) -> bool {
        let reading = [m.vector.x, m.vector.y];
        let fresh = self.odom.as_ref().filter(|o| now - o.0 <= nanos(self.params.odom_timeout));
        let ground = fresh.is_some_and(|o| !o.2.is_empty() && o.2 == m.header.frame_id);
        let speed = if ground {
            Some(norm(reading)).filter(|s| s.is_finite())
        } else {
            match self.params.air().true_wind_base(reading, fresh.map(|o| &o.1)) {
                Ok(t) if t.compensated => Some(norm(t.base)),
                _ => None,
            }
        };
        let Some(speed) = speed else {
            self.unused += 1;
            return false;
        };
        if self.samples.len() == MAX_SAMPLES {
            self.samples.pop_front();
        }
        self.samples.push_back((now, speed));
        true
    }

    /// Mean true wind speed over the window ending at `now` [m/s]; `None` without samples or
    /// in still air.
    pub fn mean(&mut self, now: Nanos) -> Option<f64> {
        while self.samples.front().is_some_and(|s| s.0 <= now - self.window) {
            self.samples.pop_front();
        }
        if self.samples.is_empty() {
            return None;
        }
        let m = self.samples.iter().map(|s| s.1).sum::<f64>() / self.samples.len() as f64;
        (!self.params.air().is_still(m)).then_some(m)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::{Header, Vector3};

    const S: Nanos = 1_000_000_000;

    fn wind(x: f64, y: f64, frame: &str) -> Vector3Stamped {
        Vector3Stamped { header: Header::new(0, frame), vector: Vector3 { x, y, z: 0.0 } }
    }

    fn odom(vx: f64) -> Odometry {
        let mut o = Odometry::default();
        o.header.frame_id = "odom".into();
        o.twist.twist.linear.x = vx;
        o
    }

    #[test]
    fn relative_readings_are_corrected_and_averaged_over_the_window() {
        let mut w = WindSpeed::new(WindParams::default(), 10.0);
        assert!(!w.on_wind(0, &wind(-0.9, 0.0, "base_link")), "no odometry: relative reading unused");
        w.on_odom(0, &odom(0.4));
        // 0.4 m/s forward into a 0.5 m/s head wind reads 0.9 m/s.
        assert!(w.on_wind(0, &wind(-0.9, 0.0, "base_link")));
        w.on_odom(S, &odom(0.4));
        assert!(w.on_wind(S, &wind(0.3, 0.4, "odom")), "odom frame: true wind, 0.5 m/s");
        assert!((w.mean(2 * S).expect("speed") - 0.5).abs() < 1e-12);
        assert_eq!(w.mean(11 * S), None, "window passed");
        assert!(!w.on_wind(11 * S, &wind(f64::NAN, 0.0, "base_link")));
        assert_eq!(w.unused, 2);
        w.on_odom(12 * S, &odom(0.0));
        assert!(w.on_wind(12 * S, &wind(0.05, 0.0, "base_link")));
        assert_eq!(w.mean(12 * S), None, "still air");
    }
}
