//! Saturation and dead-channel detection on the raw reading.
//!
//! - Saturated: the raw value sits at or beyond a rail (`rail_low`, `rail_high`, in raw units;
//!   detection is on when `rail_low < rail_high`), e.g. an ADC at full scale or an open circuit.
//! - Dead: the raw value has not changed by more than `stuck_tolerance` for `stuck_time`
//!   seconds (`stuck_time = 0` turns this off). A live sensor always shows some noise.

use sillage_core::Nanos;

/// Health trackers of one channel.
#[derive(Debug, Clone, PartialEq)]
pub struct Health {
    rail_low: f64,
    rail_high: f64,
    stuck_ns: Nanos,
    stuck_tolerance: f64,
    stuck_ref: Option<f64>,
    stuck_since: Nanos,
    saturated: bool,
    dead: bool,
}

impl Health {
    /// Trackers for rails [raw units] and the stuck rule (`stuck_time` [s]).
    pub fn new(rail_low: f64, rail_high: f64, stuck_time: f64, stuck_tolerance: f64) -> Health {
        Health {
            rail_low,
            rail_high,
            stuck_ns: sillage_core::time::nanos(stuck_time.max(0.0)),
            stuck_tolerance,
            stuck_ref: None,
            stuck_since: 0,
            saturated: false,
            dead: false,
        }
    }

    /// Whether the last reading was at a rail.
    pub fn saturated(&self) -> bool {
        self.saturated
    }

    /// Whether the reading has been stuck for `stuck_time`.
    pub fn dead(&self) -> bool {
        self.dead
    }

    /// Forgets the history.
    pub fn reset(&mut self) {
        self.stuck_ref = None;
        self.saturated = false;
        self.dead = false;
    }

    /// Takes a finite raw reading at `t` [ns].
    #[inline]
    pub fn update(&mut self, t: Nanos, raw: f64) {
        self.saturated = self.rail_low < self.rail_high && (raw <= self.rail_low || raw >= self.rail_high);
        match self.stuck_ref {
            Some(r) if (raw - r).abs() <= self.stuck_tolerance => {}
            _ => {
                self.stuck_ref = Some(raw);
                self.stuck_since = t;
            }
        }
        self.dead = self.stuck_ns > 0 && t.saturating_sub(self.stuck_since) >= self.stuck_ns;
    }

    /// Seconds the reading has been unchanged, at the last update time `t` [ns].
    pub fn stuck_for(&self, t: Nanos) -> f64 {
        if self.stuck_ref.is_some() { sillage_core::time::secs(t.saturating_sub(self.stuck_since)) } else { 0.0 }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    const S: Nanos = 1_000_000_000;

    #[test]
    fn rails_and_stuck_values() {
        let mut h = Health::new(0.0, 4095.0, 2.0, 0.0);
        h.update(0, 4095.0);
        assert!(h.saturated());
        h.update(S / 10, 2000.0);
        assert!(!h.saturated());
        h.update(S / 5, -1.0);
        assert!(h.saturated(), "beyond the low rail");
        // Constant for 2 s: dead; any change revives it.
        for k in 0..=20 {
            h.update(S + k * S / 10, 1234.0);
        }
        assert!(h.dead());
        assert!((h.stuck_for(3 * S) - 2.0).abs() < 1e-9);
        h.update(4 * S, 1234.5);
        assert!(!h.dead());
        // Rails off when low >= high.
        let mut off = Health::new(0.0, 0.0, 0.0, 0.0);
        off.update(0, 1e300);
        off.update(100 * S, 1e300);
        assert!(!off.saturated() && !off.dead());
    }
}
