//! Input watchdogs: the arrival time of the last accepted message of every input, judged
//! against the `watchdog.*` timeouts on the node's clock (`now`, never header stamps).
//!
//! Contract: an input is stale when it was never received or its last accepted message is
//! older than its timeout. Which inputs are *required* (their staleness halts the robot):
//! `odom`, `odor_bearing`, `plume_features`, `odor_events` always; `wind` when the strategy
//! uses it; `scan` when `obstacle.enabled` or once a scan has been received; `e_stop` when
//! `watchdog.e_stop` > 0 (a heartbeat). `e_stop_reset` and `search_restart` are event topics
//! with no watchdog. (An e-stop never heard at all halts the robot by itself, see
//! `e_stop.required` in [`crate::params::EStopParams`].)

use crate::inputs::{Input, INPUTS};
use crate::params::WatchdogParams;
use sillage_core::time::secs;
use sillage_core::Nanos;
use std::fmt::Write;

/// A set of inputs as a bit mask (bit = port index).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct InputSet(pub u16);

impl InputSet {
    /// Adds `input`.
    pub fn insert(&mut self, input: Input) {
        self.0 |= 1 << input.index();
    }
    /// Whether `input` is in the set.
    pub fn contains(self, input: Input) -> bool {
        self.0 & (1 << input.index()) != 0
    }
    /// Whether the set is empty.
    pub fn is_empty(self) -> bool {
        self.0 == 0
    }
    /// The inputs in port order.
    pub fn iter(self) -> impl Iterator<Item = Input> {
        Input::ALL.into_iter().filter(move |i| self.contains(*i))
    }
}

/// Last accepted arrival time per input.
#[derive(Debug, Clone, Default)]
pub struct Watchdog {
    last: [Option<Nanos>; INPUTS],
}

impl Watchdog {
    /// Records an accepted message on `input` at `now`.
    pub fn feed(&mut self, input: Input, now: Nanos) {
        self.last[input.index()] = Some(now);
    }

    /// Whether `input` has ever been accepted (since the last reset).
    pub fn seen(&self, input: Input) -> bool {
        self.last[input.index()].is_some()
    }

    /// Age of the last accepted message [s], `None` if never received.
    pub fn age(&self, input: Input, now: Nanos) -> Option<f64> {
        self.last[input.index()].map(|t| secs(now.saturating_sub(t)))
    }

    /// The timeout of `input` [s] (`None`: no watchdog).
    pub fn timeout(p: &WatchdogParams, input: Input) -> Option<f64> {
        let t = match input {
            Input::OdorBearing => p.odor_bearing,
            Input::PlumeFeatures => p.plume_features,
            Input::OdorEvents => p.odor_events,
            Input::Wind => p.wind,
            Input::Odom => p.odom,
            Input::Scan => p.scan,
            Input::EStop => p.e_stop,
            Input::EStopReset | Input::SearchRestart | Input::SourcePosterior => 0.0,
        };
        (t > 0.0).then_some(t)
    }

    /// Whether `input` is stale at `now` under timeout `timeout` [s].
    pub fn is_stale(&self, input: Input, now: Nanos, timeout: f64) -> bool {
        match self.age(input, now) {
            None => true,
            Some(age) => age > timeout,
        }
    }

    /// The stale inputs among `required`.
    pub fn stale(&self, required: InputSet, p: &WatchdogParams, now: Nanos) -> InputSet {
        let mut out = InputSet::default();
        for i in required.iter() {
            if let Some(t) = Watchdog::timeout(p, i) {
                if self.is_stale(i, now, t) {
                    out.insert(i);
                }
            }
        }
        out
    }

    /// "wind stale (1.20 s > 1.00 s), odom never received" for the inputs in `set`.
    pub fn describe(&self, set: InputSet, p: &WatchdogParams, now: Nanos) -> String {
        let mut s = String::new();
        for (k, i) in set.iter().enumerate() {
            if k > 0 {
                s.push_str(", ");
            }
            let t = Watchdog::timeout(p, i).unwrap_or(0.0);
            match self.age(i, now) {
                None => {
                    let _ = write!(s, "{} never received", i.topic());
                }
                Some(a) => {
                    let _ = write!(s, "{} stale ({a:.2} s > {t:.2} s)", i.topic());
                }
            }
        }
        s
    }

    /// Forgets every arrival (after a backward clock jump every input counts as stale again).
    pub fn reset(&mut self) {
        self.last = [None; INPUTS];
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::time::SECOND;

    #[test]
    fn never_received_and_old_inputs_are_stale() {
        let p = WatchdogParams::default();
        let mut w = Watchdog::default();
        let mut req = InputSet::default();
        req.insert(Input::Wind);
        req.insert(Input::Odom);
        assert_eq!(w.stale(req, &p, 0), req, "before the first message every input is stale");
        w.feed(Input::Wind, 0);
        w.feed(Input::Odom, 0);
        assert!(w.stale(req, &p, SECOND / 2).is_empty(), "odom at exactly its 0.5 s timeout is fresh");
        let s = w.stale(req, &p, SECOND / 2 + 1);
        assert!(s.contains(Input::Odom) && !s.contains(Input::Wind));
        assert_eq!(w.describe(s, &p, SECOND), "odom stale (1.00 s > 0.50 s)");
        w.reset();
        assert_eq!(w.describe(InputSet(1 << 3), &p, 0), "wind never received");
        assert_eq!(Watchdog::timeout(&p, Input::EStop), None, "e_stop heartbeat off by default");
    }
}
