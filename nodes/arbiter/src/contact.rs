//! Contact decision: whether the robot is in the plume, from rising odor events and from the
//! plume features, with hysteresis and a loss timeout.
//!
//! Contract (thresholds are the `contact.*` parameters):
//! - an *event hit* is at least `hits_required` rising events (polarity +1, any channel)
//!   arriving within the last `hit_window` seconds;
//! - a *feature hit* is a features message with `bout_rate >= bout_rate_enter` or
//!   `intermittency >= intermittency_enter`; while in contact the lower `*_exit` thresholds
//!   apply instead (hysteresis: the windowed features decay slowly after the plume is left);
//!   a feature hit keeps a contact going only within `feature_hold` seconds of the contact's
//!   last event hit (or of its start, if later), because windowed features outlast the plume
//!   by their window: without that limit a robot surging upwind overshoots the source by up
//!   to a window's worth of travel. A feature hit refused by that limit disarms feature hits
//!   until the features have fallen below the exit thresholds, so the same stale window cannot
//!   start a new contact right after the loss;
//! - a *level hit* is a sustained concentration above the clean-air baseline: on an events
//!   array, some channel's last event level (conditioned units, 0 = the channel's baseline)
//!   is at least `level_enter` (`level_exit` while in contact) and that channel is not
//!   falling: its last event rose less than `level_steady` seconds ago, or came `level_steady`
//!   seconds ago or more (a steady signal sends no events) on a channel that has sent falling
//!   events before (an encoder that publishes rises only, or a channel gone silent, would
//!   otherwise hold a level for ever). Smooth, time-averaged plumes send few events but hold a level; a
//!   signal decaying after the plume was left sends falling events and gives no level hit.
//!   `level_enter = 0` switches level hits off;
//! - every hit refreshes the last contact time; the robot is in contact until `loss_timeout`
//!   passes without a hit;
//! - the contact point is the robot's odom position at the last event hit (at the last feature
//!   hit only while no event hit has come yet): windowed features outlast the plume by their
//!   window, so where they still pass is not where the odor was.
//!
//! Times are the node's clock at arrival [ns].

use crate::geometry::Vec2;
use crate::inputs::{EventsObs, FeaturesObs};
use crate::params::ContactParams;
use sillage_core::time::{nanos, secs};
use sillage_core::Nanos;
use std::collections::VecDeque;

/// What the last hit was based on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HitCause {
    /// Rising odor events.
    Events,
    /// The bout rate.
    BoutRate,
    /// The intermittency.
    Intermittency,
    /// A sustained level above the baseline.
    Level,
}

impl HitCause {
    /// A short description for transition reasons.
    pub fn describe(self) -> &'static str {
        match self {
            HitCause::Events => "rising odor events",
            HitCause::BoutRate => "bout rate above threshold",
            HitCause::Intermittency => "intermittency above threshold",
            HitCause::Level => "sustained odor level above the baseline",
        }
    }
}

/// The contact state as strategies see it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ContactView {
    /// In contact now (a hit within `loss_timeout`).
    pub in_contact: bool,
    /// Time since the last hit [s], `None` before the first.
    pub age: Option<f64>,
    /// Where the robot was at the last hit (odom) [m], if odometry was known then.
    pub point: Option<Vec2>,
    /// Number of hits so far (strategies compare it to spot new hits).
    pub hits: u64,
    /// What the last hit was based on.
    pub cause: Option<HitCause>,
}

/// What makes `f` a feature hit at these thresholds, if anything. A zero threshold would make
/// every message a hit: only positive evidence counts.
fn feature_cause(f: &FeaturesObs, bout_rate: f64, intermittency: f64) -> Option<HitCause> {
    if f.bout_rate > 0.0 && f.bout_rate >= bout_rate {
        Some(HitCause::BoutRate)
    } else if f.intermittency > 0.0 && f.intermittency >= intermittency {
        Some(HitCause::Intermittency)
    } else {
        None
    }
}

/// The contact detector.
#[derive(Debug, Clone)]
pub struct ContactDetector {
    p: ContactParams,
    recent: VecDeque<Nanos>,
    last_hit: Option<Nanos>,
    point: Option<Vec2>,
    point_from_events: bool,
    hits: u64,
    cause: Option<HitCause>,
    started: Option<Nanos>,
    last_event_hit: Option<Nanos>,
    features_armed: bool,
    levels: Vec<ChannelLevel>,
}

/// The last event of one channel.
#[derive(Debug, Clone, Copy, PartialEq)]
struct ChannelLevel {
    channel: u32,
    level: f64,
    rising: bool,
    at: Nanos,
    falls_seen: bool,
}

/// Most channels whose levels are tracked (the oldest are forgotten first).
const MAX_LEVEL_CHANNELS: usize = 64;

impl ContactDetector {
    /// A detector with no contact yet.
    pub fn new(p: ContactParams) -> Self {
        let cap = p.hits_required as usize;
        ContactDetector {
            p,
            recent: VecDeque::with_capacity(cap),
            last_hit: None,
            point: None,
            point_from_events: false,
            hits: 0,
            cause: None,
            started: None,
            last_event_hit: None,
            features_armed: true,
            levels: Vec::new(),
        }
    }

    /// Replaces the thresholds, keeping the state.
    pub fn set_params(&mut self, p: ContactParams) {
        self.p = p;
        while self.recent.len() > self.p.hits_required as usize {
            self.recent.pop_front();
        }
    }

    fn hit(&mut self, now: Nanos, at: Option<Vec2>, cause: HitCause) {
        if !self.in_contact(now) {
            self.started = Some(now);
        }
        self.last_hit = Some(now);
        let by_events = cause == HitCause::Events;
        if by_events {
            self.last_event_hit = Some(now);
        }
        if at.is_some() && (by_events || !self.point_from_events) {
            self.point = at;
            self.point_from_events |= by_events;
        }
        self.hits += 1;
        self.cause = Some(cause);
    }

    /// Whether the robot is in contact at `now`.
    pub fn in_contact(&self, now: Nanos) -> bool {
        self.last_hit.is_some_and(|t| now.saturating_sub(t) <= nanos(self.p.loss_timeout))
    }

    /// Rising events arrived at `now`, the robot being at `at`.
    /// Returns whether they made a hit.
    pub fn on_events(&mut self, now: Nanos, e: EventsObs, at: Option<Vec2>) -> bool {
        let need = self.p.hits_required as usize;
        for _ in 0..e.rising.min(self.p.hits_required) {
            if self.recent.len() == need {
                self.recent.pop_front();
            }
            self.recent.push_back(now);
        }
        let window = nanos(self.p.hit_window);
        let hit = e.rising > 0 && self.recent.len() == need && self.recent.front().is_some_and(|&t| now.saturating_sub(t) <= window);
        if hit {
            self.hit(now, at, HitCause::Events);
        }
        hit
    }

    /// The events of one array (channel index, polarity +1/-1, level, stamp) arrived at `now`,
    /// the robot being at `at`; returns whether a sustained level made a hit.
    /// Each event carries its own stamp [ns] (data time, so that every executor sees the same
    /// ages whatever the transport delay); a stamp after `now` counts as `now`.
    pub fn on_levels(&mut self, now: Nanos, events: impl IntoIterator<Item = (u32, i8, f64, Nanos)>, at: Option<Vec2>) -> bool {
        for (channel, polarity, level, stamp) in events {
            if !level.is_finite() {
                continue;
            }
            let mut e = ChannelLevel { channel, level, rising: polarity > 0, at: stamp.min(now), falls_seen: polarity < 0 };
            match self.levels.iter_mut().find(|c| c.channel == channel) {
                Some(c) => {
                    e.falls_seen |= c.falls_seen;
                    *c = e;
                }
                None => {
                    if self.levels.len() == MAX_LEVEL_CHANNELS {
                        self.levels.remove(0);
                    }
                    self.levels.push(e);
                }
            }
        }
        if self.p.level_enter <= 0.0 {
            return false;
        }
        let threshold = if self.in_contact(now) { self.p.level_exit } else { self.p.level_enter };
        let steady = nanos(self.p.level_steady);
        let sustained = self.levels.iter().any(|c| {
            let old = now.saturating_sub(c.at) >= steady;
            c.level >= threshold && if old { c.falls_seen } else { c.rising }
        });
        if sustained {
            self.hit(now, at, HitCause::Level);
        }
        sustained
    }

    /// Features arrived at `now`, the robot being at `at`.
    pub fn on_features(&mut self, now: Nanos, f: &FeaturesObs, at: Option<Vec2>) {
        let in_contact = self.in_contact(now);
        let (rate, inter) = if in_contact {
            (self.p.bout_rate_exit, self.p.intermittency_exit)
        } else {
            (self.p.bout_rate_enter, self.p.intermittency_enter)
        };
        let Some(cause) = feature_cause(f, rate, inter) else {
            if feature_cause(f, self.p.bout_rate_exit, self.p.intermittency_exit).is_none() {
                self.features_armed = true;
            }
            return;
        };
        let allowed = if in_contact {
            let since = self.last_event_hit.max(self.started).unwrap_or(now);
            now.saturating_sub(since) <= nanos(self.p.feature_hold)
        } else {
            self.features_armed
        };
        if allowed {
            self.hit(now, at, cause);
        } else {
            self.features_armed = false;
        }
    }

    /// The state at `now`.
    pub fn view(&self, now: Nanos) -> ContactView {
        ContactView {
            in_contact: self.in_contact(now),
            age: self.last_hit.map(|t| secs(now.saturating_sub(t))),
            point: self.point,
            hits: self.hits,
            cause: self.cause,
        }
    }

    /// Forgets every contact (search restart, clock jump).
    pub fn reset(&mut self) {
        *self = ContactDetector::new(self.p.clone());
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::time::SECOND;

    fn feats(rate: f64, inter: f64) -> FeaturesObs {
        FeaturesObs { bout_rate: rate, intermittency: inter, distance: None }
    }

    #[test]
    fn events_need_enough_hits_within_the_window() {
        let p = ContactParams { hits_required: 3, hit_window: 1.0, ..Default::default() };
        let mut c = ContactDetector::new(p);
        assert!(!c.on_events(0, EventsObs { rising: 2 }, Some(Vec2::new(1.0, 2.0))), "2 of 3");
        assert!(!c.in_contact(0));
        c.on_events(2 * SECOND, EventsObs { rising: 1 }, None);
        assert!(!c.in_contact(2 * SECOND), "the first two are outside the 1 s window");
        assert!(c.on_events(2 * SECOND + SECOND / 2, EventsObs { rising: 2 }, Some(Vec2::new(3.0, 0.0))), "3 within 1 s");
        let v = c.view(2 * SECOND + SECOND / 2);
        assert!(v.in_contact && v.hits == 1 && v.point == Some(Vec2::new(3.0, 0.0)));
        // Lost after loss_timeout (2 s default).
        assert!(c.in_contact(4 * SECOND + SECOND / 2));
        assert!(!c.in_contact(4 * SECOND + SECOND / 2 + 1));
    }

    #[test]
    fn a_level_is_dated_by_its_event_stamp_not_its_arrival() {
        let p = ContactParams { level_enter: 0.2, level_exit: 0.1, level_steady: 3.0, ..Default::default() };
        // A rise stamped at 0 s, delivered at 2.9 s, then a fall seen: at 3.5 s the level is
        // 3.5 s old by its stamp (steady, falls seen: a hit); by its arrival it would still be
        // rising-fresh and also hit, so check the other side: a rise stamped 0 s and arriving
        // at 3.5 s is old on arrival and, with no fall seen, gives no hit.
        let mut late = ContactDetector::new(p.clone());
        assert!(!late.on_levels(3 * SECOND + SECOND / 2, [(0, 1, 0.5, 0)], None), "old on arrival, no falls seen");
        let mut fresh = ContactDetector::new(p);
        assert!(fresh.on_levels(3 * SECOND + SECOND / 2, [(0, 1, 0.5, 3 * SECOND)], None), "a fresh rise is a hit");
    }

    #[test]
    fn a_sustained_level_holds_a_contact_and_a_falling_one_does_not() {
        let p = ContactParams { level_enter: 0.2, level_exit: 0.1, level_steady: 3.0, ..Default::default() };
        let mut c = ContactDetector::new(p);
        assert!(!c.on_levels(0, [(0, 1, 0.15, 0)], None), "below level_enter");
        assert!(!c.on_levels(0, [(0, -1, 0.05, 0)], None), "channel 0 back near its baseline");
        assert!(c.on_levels(SECOND, [(1, 1, 0.25, SECOND)], Some(Vec2::new(4.0, 0.0))), "channel 1 rose above level_enter");
        assert_eq!(c.view(SECOND).cause, Some(HitCause::Level));
        assert_eq!(c.view(SECOND).point, Some(Vec2::new(4.0, 0.0)));
        // Falling on channel 1 but still above the exit level: no hit while it falls.
        assert!(!c.on_levels(2 * SECOND, [(1, -1, 0.2, 2 * SECOND)], None));
        // No new event for 3 s: a steady signal above level_exit is a hit again (empty arrays).
        assert!(c.in_contact(3 * SECOND));
        assert!(!c.on_levels(4 * SECOND, [], None));
        assert!(!c.in_contact(4 * SECOND), "the falling stretch gave no hit: lost after loss_timeout");
        assert!(c.on_levels(5 * SECOND, [], None), "steady for 3 s at 0.2 >= level_enter");
        // Decayed below the exit level: nothing, and the contact times out.
        c.on_levels(6 * SECOND, [(1, -1, 0.05, 6 * SECOND), (0, -1, 0.0, 6 * SECOND)], None);
        for k in 7..=12 {
            assert!(!c.on_levels(k * SECOND, [], None));
        }
        assert!(!c.in_contact(12 * SECOND));
        // A channel that never sent a falling event gets no credit for a steady level.
        let mut rises_only = ContactDetector::new(ContactParams { level_enter: 0.2, level_exit: 0.1, level_steady: 3.0, ..Default::default() });
        assert!(rises_only.on_levels(0, [(0, 1, 0.5, 0)], None));
        assert!(!rises_only.on_levels(10 * SECOND, [], None), "no falls seen: no steady hold");
        let mut off = ContactDetector::new(ContactParams { level_enter: 0.0, ..Default::default() });
        assert!(!off.on_levels(0, [(0, 1, 5.0, 0)], None), "level_enter 0 switches level hits off");
        assert!(!off.on_levels(0, [(0, 1, f64::NAN, 0)], None));
    }

    #[test]
    fn features_use_hysteresis() {
        let mut c = ContactDetector::new(ContactParams::default());
        c.on_features(0, &feats(0.2, 0.05), None);
        assert!(!c.in_contact(0), "0.2 Hz is below the 0.3 Hz entry threshold");
        c.on_features(0, &feats(0.3, 0.0), None);
        assert!(c.in_contact(0));
        c.on_features(SECOND, &feats(0.15, 0.0), None);
        assert_eq!(c.view(SECOND).age, Some(0.0), "0.15 Hz keeps a contact (exit 0.1 Hz)");
        c.on_features(2 * SECOND, &feats(0.0, 0.05), None);
        assert_eq!(c.view(2 * SECOND).cause, Some(HitCause::Intermittency));
        c.on_features(3 * SECOND, &feats(0.0, 0.0), None);
        assert_eq!(c.view(3 * SECOND).age, Some(1.0), "no evidence: no refresh");
    }

    #[test]
    fn the_contact_point_follows_event_hits_once_there_are_any() {
        let mut c = ContactDetector::new(ContactParams::default());
        c.on_features(0, &feats(1.0, 0.5), Some(Vec2::new(9.0, 0.0)));
        assert_eq!(c.view(0).point, Some(Vec2::new(9.0, 0.0)), "features place it while there is nothing better");
        c.on_events(SECOND, EventsObs { rising: 1 }, Some(Vec2::new(8.0, 0.0)));
        c.on_features(2 * SECOND, &feats(1.0, 0.5), Some(Vec2::new(7.0, 0.0)));
        let v = c.view(2 * SECOND);
        assert_eq!((v.point, v.cause), (Some(Vec2::new(8.0, 0.0)), Some(HitCause::BoutRate)), "features refresh the contact, not the point");
        c.on_events(3 * SECOND, EventsObs { rising: 1 }, Some(Vec2::new(6.5, 0.0)));
        assert_eq!(c.view(3 * SECOND).point, Some(Vec2::new(6.5, 0.0)));
    }

    #[test]
    fn stale_features_hold_a_contact_only_briefly_and_cannot_restart_it() {
        let p = ContactParams { feature_hold: 3.0, loss_timeout: 2.0, ..Default::default() };
        let mut c = ContactDetector::new(p);
        c.on_events(0, EventsObs { rising: 1 }, Some(Vec2::new(5.0, 0.0)));
        // Features still pass once the events have stopped (the window remembers the plume).
        for k in 1..=10 {
            c.on_features(k * SECOND, &feats(1.0, 0.5), Some(Vec2::new(5.0 - 0.3 * k as f64, 0.0)));
        }
        let v = c.view(10 * SECOND);
        assert!(!v.in_contact, "held 3 s past the last event, then lost 2 s later");
        assert_eq!(v.age, Some(7.0));
        assert_eq!(v.point, Some(Vec2::new(5.0, 0.0)));
        c.on_features(11 * SECOND, &feats(1.0, 0.5), None);
        assert!(!c.in_contact(11 * SECOND), "a stale window cannot start a new contact");
        c.on_features(12 * SECOND, &feats(0.05, 0.01), None);
        c.on_features(13 * SECOND, &feats(0.5, 0.2), None);
        assert!(c.in_contact(13 * SECOND), "re-armed once the features fell below the exit thresholds");
        // A contact the features started lasts feature_hold without events, then ends.
        for k in 14..=16 {
            c.on_features(k * SECOND, &feats(0.5, 0.2), None);
        }
        assert_eq!(c.view(16 * SECOND).age, Some(0.0), "3 s after its start: still held");
        c.on_features(17 * SECOND, &feats(0.5, 0.2), None);
        assert_eq!(c.view(17 * SECOND).age, Some(1.0), "4 s after its start: refused");
    }
}
