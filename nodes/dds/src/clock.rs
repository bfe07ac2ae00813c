//! The ROS clock and the node timers of the DDS executor, as pure state machines: the caller
//! passes the system time in, nothing here reads a clock.
//!
//! - [`RosClock`]: system time, or, with `use_sim_time`, the last `/clock` message (zero until
//!   the first one arrives, as ROS 2 does).
//! - [`Timers`]: periodic timers on the ROS clock with rcl's semantics (from memory of rcl's
//!   `timer.c`): a timer created at time `t0` is due at `t0 + period`; when it fires late it
//!   fires once and its next call moves forward by as many whole periods as needed (missed
//!   ticks are skipped, never burst); when the clock jumps backwards (a simulation restart)
//!   each timer keeps the time it had left.

use sillage_core::Nanos;

/// Where ROS time comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ClockMode {
    /// The system clock (wall time since the Unix epoch).
    System,
    /// `/clock` messages (`use_sim_time: true`).
    Simulated,
}

/// What a `/clock` message did to ROS time.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ClockJump {
    /// Time went forward or stayed (normal).
    Forward,
    /// Time went back by this much [ns] (a simulation restart).
    Backward(Nanos),
    /// The clock is not simulated: the message is ignored.
    Ignored,
}

/// The ROS clock.
#[derive(Debug, Clone)]
pub struct RosClock {
    mode: ClockMode,
    sim_now: Nanos,
    sim_started: bool,
}

impl RosClock {
    /// A clock in `mode`.
    pub fn new(mode: ClockMode) -> RosClock {
        RosClock { mode, sim_now: 0, sim_started: false }
    }

    /// The mode.
    pub fn mode(&self) -> ClockMode {
        self.mode
    }

    /// ROS time [ns] given the system time `system` [ns since the epoch].
    pub fn now(&self, system: Nanos) -> Nanos {
        match self.mode {
            ClockMode::System => system,
            ClockMode::Simulated => self.sim_now,
        }
    }

    /// Whether simulated time has received a first `/clock` (always true for system time).
    pub fn running(&self) -> bool {
        self.mode == ClockMode::System || self.sim_started
    }

    /// A `/clock` message carrying `t` [ns].
    pub fn on_clock(&mut self, t: Nanos) -> ClockJump {
        if self.mode != ClockMode::Simulated {
            return ClockJump::Ignored;
        }
        let before = self.sim_now;
        self.sim_now = t;
        let first = !self.sim_started;
        self.sim_started = true;
        if !first && t < before {
            ClockJump::Backward(before - t)
        } else {
            ClockJump::Forward
        }
    }
}

/// Identifies one timer: (node index, timer index within the node).
pub type TimerId = (usize, usize);

#[derive(Debug, Clone)]
struct Entry {
    id: TimerId,
    period: Nanos,
    next: Nanos,
}

/// Periodic timers on the ROS clock.
#[derive(Debug, Clone, Default)]
pub struct Timers {
    entries: Vec<Entry>,
}

impl Timers {
    /// No timers.
    pub fn new() -> Timers {
        Timers::default()
    }

    /// Adds timer `id` with `period` [ns, > 0] created at ROS time `now`: first due at
    /// `now + period`.
    pub fn add(&mut self, id: TimerId, period: Nanos, now: Nanos) {
        let period = period.max(1);
        self.entries.push(Entry { id, period, next: now.saturating_add(period) });
    }

    /// Number of timers.
    pub fn len(&self) -> usize {
        self.entries.len()
    }

    /// Whether there are none.
    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// The earliest next call [ns of ROS time].
    pub fn next_deadline(&self) -> Option<Nanos> {
        self.entries.iter().map(|e| e.next).min()
    }

    /// Appends the timers due at `now` to `out` (each at most once, in order of their due
    /// time, then creation) and moves them to their next call.
    pub fn take_due(&mut self, now: Nanos, out: &mut Vec<TimerId>) {
        let mut due: Vec<(Nanos, usize)> =
            self.entries.iter().enumerate().filter(|(_, e)| e.next <= now).map(|(i, e)| (e.next, i)).collect();
        due.sort_unstable();
        for (_, i) in due {
            let e = &mut self.entries[i];
            out.push(e.id);
            // rcl: next += period, then skip whole periods already missed.
            e.next = e.next.saturating_add(e.period);
            if e.next <= now {
                let ahead = now - e.next;
                e.next = e.next.saturating_add((ahead / e.period + 1).saturating_mul(e.period));
            }
        }
    }

    /// The clock jumped back from `before` to `now`: every timer keeps the time it had left
    /// (at most one period).
    pub fn on_jump_back(&mut self, before: Nanos, now: Nanos) {
        for e in &mut self.entries {
            let left = (e.next - before).clamp(0, e.period);
            e.next = now.saturating_add(left);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const MS: Nanos = 1_000_000;

    #[test]
    fn sim_clock_is_zero_until_the_first_clock_message() {
        let mut c = RosClock::new(ClockMode::Simulated);
        assert_eq!(c.now(1_700_000_000_000_000_000), 0);
        assert!(!c.running());
        assert_eq!(c.on_clock(100 * 1000 * MS), ClockJump::Forward);
        assert!(c.running());
        assert_eq!(c.now(5), 100 * 1000 * MS);
        assert_eq!(c.on_clock(40 * 1000 * MS), ClockJump::Backward(60 * 1000 * MS));
        let mut s = RosClock::new(ClockMode::System);
        assert_eq!(s.on_clock(3), ClockJump::Ignored);
        assert_eq!(s.now(42), 42);
    }

    #[test]
    fn timers_fire_on_the_grid_and_skip_missed_ticks() {
        let mut t = Timers::new();
        t.add((0, 0), 100 * MS, 0);
        t.add((1, 0), 30 * MS, 0);
        let mut out = Vec::new();
        t.take_due(29 * MS, &mut out);
        assert!(out.is_empty());
        t.take_due(30 * MS, &mut out);
        assert_eq!(out, vec![(1, 0)]);
        out.clear();
        // 350 ms late: each timer fires once, then realigns to its grid.
        t.take_due(400 * MS, &mut out);
        assert_eq!(out, vec![(1, 0), (0, 0)], "earlier due time first");
        assert_eq!(t.next_deadline(), Some(420 * MS));
        out.clear();
        t.take_due(420 * MS, &mut out);
        assert_eq!(out, vec![(1, 0)]);
        out.clear();
        t.take_due(500 * MS, &mut out);
        assert_eq!(out, vec![(1, 0), (0, 0)]);
    }

    #[test]
    fn a_backward_jump_keeps_the_time_left() {
        let mut t = Timers::new();
        t.add((0, 0), 100 * MS, 1000 * MS); // due at 1100 ms
        t.on_jump_back(1070 * MS, 10 * MS);
        assert_eq!(t.next_deadline(), Some(40 * MS));
    }

    proptest! {
        /// However time advances, a timer never fires twice for one call and its next call
        /// stays in (now, now + period].
        #[test]
        fn next_call_stays_within_one_period(period in 1i64..1_000_000, steps in proptest::collection::vec(0i64..3_000_000, 1..50)) {
            let mut t = Timers::new();
            t.add((0, 0), period, 0);
            let mut now = 0;
            for s in steps {
                now += s;
                let mut out = Vec::new();
                t.take_due(now, &mut out);
                prop_assert!(out.len() <= 1);
                let next = t.next_deadline().unwrap_or(0);
                prop_assert!(next > now && next <= now + period, "now {} next {} period {}", now, next, period);
                prop_assert_eq!(next % period, 0, "stays on the grid of its creation time");
            }
        }
    }
}
