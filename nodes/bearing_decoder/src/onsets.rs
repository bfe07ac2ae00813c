//! Onset trains: which odor events start a rise, kept per sensor over a sliding window, each
//! with the robot's heading when it was taken.
//!
//! Contract: events of one sensor must come in non-decreasing stamp order (a late one is
//! refused with [`Push::OutOfOrder`], never reordered). A rising event is an *onset* when it
//! is the sensor's first event, follows a falling event, or comes more than `gap` after the
//! sensor's previous event; the further rising events of one rise (a send-on-delta encoder
//! emits one per level) are not onsets. Onsets older than `now - window` are dropped; at most
//! `capacity` are kept (the oldest go first), so memory is bounded and nothing allocates after
//! start-up. [`OnsetTrain::push_onset`] records an onset found elsewhere (the rise detector).
//! [`OnsetTrain::select_into`] keeps the onsets taken at nearly the current heading: lags of
//! onsets taken before the robot turned belong to another base_link frame.

use sillage_core::msg::OdorEvent;
use sillage_core::Nanos;

/// What [`OnsetTrain::push`] did with an event.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Push {
    /// A new onset was recorded.
    Onset,
    /// A valid event that is not an onset (falling, or a continuing rise).
    Other,
    /// Refused: stamped before the previous event of the sensor [ns].
    OutOfOrder { previous: Nanos },
    /// Refused: polarity neither +1 nor -1.
    BadPolarity,
}

/// The onsets of one sensor.
#[derive(Debug, Clone, PartialEq)]
pub struct OnsetTrain {
    onsets: Vec<Nanos>,
    yaws: Vec<Option<f64>>,
    capacity: usize,
    last_event: Option<(Nanos, i8)>,
}

impl OnsetTrain {
    /// An empty train holding at most `capacity` onsets.
    pub fn new(capacity: usize) -> OnsetTrain {
        let capacity = capacity.max(1);
        OnsetTrain { onsets: Vec::with_capacity(capacity), yaws: Vec::with_capacity(capacity), capacity, last_event: None }
    }

    /// Records an onset at `t` [ns] taken at heading `yaw` [rad] (odometry frame, when known);
    /// false (nothing recorded) when it is older than the newest onset held.
    pub fn push_onset(&mut self, t: Nanos, yaw: Option<f64>) -> bool {
        if self.onsets.last().is_some_and(|&last| t < last) {
            return false;
        }
        if self.onsets.len() == self.capacity {
            self.onsets.remove(0);
            self.yaws.remove(0);
        }
        self.onsets.push(t);
        self.yaws.push(yaw);
        true
    }

    /// Replaces `out`'s onsets by those of this train taken within `max_turn` [rad] of the
    /// heading `yaw` (all of them when `yaw` is unknown; onsets without a heading only then).
    pub fn select_into(&self, out: &mut OnsetTrain, yaw: Option<f64>, max_turn: f64) {
        out.onsets.clear();
        out.yaws.clear();
        for (&t, &y) in self.onsets.iter().zip(&self.yaws) {
            let keep = match (yaw, y) {
                (None, _) => true,
                (Some(now), Some(then)) => crate::geometry::angle_diff(now, then).abs() <= max_turn,
                (Some(_), None) => false,
            };
            if keep {
                out.onsets.push(t);
                out.yaws.push(y);
            }
        }
    }

    /// The heading of each onset held [rad], oldest first.
    pub fn yaws(&self) -> &[Option<f64>] {
        &self.yaws
    }

    /// Feeds one event stamped `t` [ns] with `polarity`; `gap` [ns] is the quiet time after
    /// which a rising event starts a new onset even without a falling one in between.
    pub fn push(&mut self, t: Nanos, polarity: i8, gap: Nanos) -> Push {
        self.push_at(t, polarity, gap, None)
    }

    /// [`OnsetTrain::push`] with the robot's heading `yaw` [rad] at the event.
    pub fn push_at(&mut self, t: Nanos, polarity: i8, gap: Nanos, yaw: Option<f64>) -> Push {
        if polarity != OdorEvent::RISING && polarity != OdorEvent::FALLING {
            return Push::BadPolarity;
        }
        let onset = match self.last_event {
            Some((previous, _)) if t < previous => return Push::OutOfOrder { previous },
            None => polarity == OdorEvent::RISING,
            Some((previous, last_pol)) => {
                polarity == OdorEvent::RISING && (last_pol == OdorEvent::FALLING || t - previous > gap)
            }
        };
        self.last_event = Some((t, polarity));
        if !onset {
            return Push::Other;
        }
        self.push_onset(t, yaw);
        Push::Onset
    }

    /// Drops onsets stamped before `start` [ns].
    pub fn prune(&mut self, start: Nanos) {
        let old = self.onsets.partition_point(|&t| t < start);
        self.onsets.drain(..old);
        self.yaws.drain(..old);
    }

    /// The onsets held, oldest first.
    pub fn as_slice(&self) -> &[Nanos] {
        &self.onsets
    }

    /// Number of onsets held.
    pub fn len(&self) -> usize {
        self.onsets.len()
    }

    /// Whether no onset is held.
    pub fn is_empty(&self) -> bool {
        self.onsets.is_empty()
    }

    /// Forgets everything (e.g. when the channel list changes).
    pub fn clear(&mut self) {
        self.onsets.clear();
        self.yaws.clear();
        self.last_event = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const MS: Nanos = 1_000_000;

    #[test]
    fn a_rise_is_one_onset_until_it_falls_or_pauses() {
        let mut t = OnsetTrain::new(8);
        assert_eq!(t.push(0, 1, 500 * MS), Push::Onset);
        assert_eq!(t.push(100 * MS, 1, 500 * MS), Push::Other, "same rise, next level");
        assert_eq!(t.push(200 * MS, -1, 500 * MS), Push::Other);
        assert_eq!(t.push(300 * MS, 1, 500 * MS), Push::Onset, "after a fall");
        assert_eq!(t.push(900 * MS, 1, 500 * MS), Push::Onset, "after a quiet gap");
        assert_eq!(t.as_slice(), &[0, 300 * MS, 900 * MS]);
    }

    #[test]
    fn late_and_malformed_events_are_refused() {
        let mut t = OnsetTrain::new(8);
        t.push(10 * MS, -1, MS);
        assert_eq!(t.push(5 * MS, 1, MS), Push::OutOfOrder { previous: 10 * MS });
        assert_eq!(t.push(20 * MS, 0, MS), Push::BadPolarity);
        assert_eq!(t.push(20 * MS, 1, MS), Push::Onset, "equal-or-later stamps are fine");
        assert_eq!(t.len(), 1);
    }

    #[test]
    fn onsets_taken_at_another_heading_are_not_selected() {
        let mut t = OnsetTrain::new(4);
        assert!(t.push_onset(0, Some(3.1)));
        assert!(t.push_onset(10, Some(-3.1)), "across the +-pi seam: 0.08 rad apart");
        assert!(t.push_onset(20, Some(2.0)));
        assert!(t.push_onset(30, None));
        assert!(!t.push_onset(5, Some(0.0)), "older than the newest");
        let mut out = OnsetTrain::new(4);
        t.select_into(&mut out, Some(3.14), 0.2);
        assert_eq!(out.as_slice(), &[0, 10]);
        t.select_into(&mut out, None, 0.2);
        assert_eq!(out.as_slice(), &[0, 10, 20, 30]);
        t.prune(15);
        assert_eq!((t.as_slice(), t.yaws()), (&[20, 30][..], &[Some(2.0), None][..]));
    }

    #[test]
    fn window_and_capacity_bound_the_train() {
        let mut t = OnsetTrain::new(3);
        for k in 0..5 {
            t.push(k * 100 * MS, 1, 10 * MS);
            t.push(k * 100 * MS + 50 * MS, -1, 10 * MS);
        }
        assert_eq!(t.as_slice(), &[200 * MS, 300 * MS, 400 * MS], "oldest dropped at capacity");
        t.prune(250 * MS);
        assert_eq!(t.as_slice(), &[300 * MS, 400 * MS]);
        t.clear();
        assert!(t.is_empty());
    }
}
