//! What one episode did, read from the graph's own outputs: the arbiter's `search_state`
//! (modes, their reasons, HALTED entries), its `source_estimate` (declarations) and the
//! `/diagnostics` counters of its guard; the ground truth comes from the world.
//!
//! Definitions (units SI):
//! - a *declaration* is one `source_estimate`; it is *correct* when the estimate (not the
//!   robot position) lies within the scenario's `success_radius` of the nearest true source
//!   (planar distance);
//! - *success* (the headline) is a correct **first** declaration: no operator reset before
//!   it. *Correct after resets* (secondary) is any correct declaration, also one that follows
//!   false declarations the runner reset as an all-knowing operator would;
//! - *time in mode*: the time between a `search_state` entering a mode and the next one
//!   entering another (the last mode until the episode end), summed per mode;
//! - *first contact*: the first in-plume sample of the world's truth; *contact to
//!   declaration*: from it to the first declaration (correct or not), when both happen in
//!   that order;
//! - the odor cues' figures (in-plume coverage per cue, bearing errors against the true source
//!   and upwind directions, distance error) are defined in [`crate::cues`];
//! - a *halt* is an entry into HALTED; those before the first non-HALTED mode are start-up
//!   halts (inputs not received yet) and counted apart; reasons are kept without their numbers
//!   (`watchdog: odor_bearing stale`), each with its count.

use serde::Serialize;
use sillage_core::msg::{DiagnosticArray, SearchState};
use sillage_core::time::secs;
use sillage_core::Nanos;
use std::collections::BTreeMap;

/// Mode transitions kept per episode; later ones are only counted.
pub const MAX_TRANSITIONS: usize = 2_000;

/// Name of a `SearchState.mode` value.
pub fn mode_name(mode: u8) -> &'static str {
    SearchState::mode_name(mode)
}

/// A transition reason without its figures: parenthesised parts and numbers dropped.
pub fn reason_kind(reason: &str) -> String {
    let mut out = String::new();
    let mut depth = 0u32;
    for c in reason.chars() {
        match c {
            '(' => depth += 1,
            ')' => depth = depth.saturating_sub(1),
            _ if depth > 0 => {}
            _ => out.push(c),
        }
    }
    let words: Vec<&str> = out.split_whitespace().filter(|w| !w.chars().any(|c| c.is_ascii_digit())).collect();
    words.join(" ").replace(" ,", ",").trim_end_matches([',', ':']).to_string()
}

/// One mode change.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transition {
    /// Time since the episode start [s].
    pub t: f64,
    /// Mode entered.
    pub mode: &'static str,
    /// The arbiter's reason.
    pub reason: String,
}

/// One source declaration.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Declaration {
    /// Time since the episode start [s].
    pub t: f64,
    /// The arbiter's estimate (x, y) [m, odom].
    pub estimate: [f64; 2],
    /// Planar distance of the estimate to the nearest source [m].
    pub error: f64,
    /// Planar distance of the robot centre to the nearest source at that time [m].
    pub robot_distance: f64,
    /// Whether `error <= success_radius`.
    pub correct: bool,
}

/// Mode and declaration bookkeeping of one episode.
#[derive(Debug, Clone, Default)]
pub struct ModeLog {
    t0: Nanos,
    mode: Option<(u8, Nanos)>,
    left_startup: bool,
    /// Transitions (the first [`MAX_TRANSITIONS`]).
    pub transitions: Vec<Transition>,
    /// All transitions counted.
    pub transition_count: u64,
    /// Entries into HALTED after start-up.
    pub halts: u32,
    /// Entries into HALTED before the first other mode.
    pub startup_halts: u32,
    /// Halt reasons (after start-up) without figures, with counts.
    pub halt_reasons: BTreeMap<String, u32>,
    /// Time spent in each mode [s] (up to the last transition; see [`ModeLog::finish`]).
    pub time_in_mode: BTreeMap<&'static str, f64>,
    /// Obstacle stops and geofence interventions of the guard (last diagnostics).
    pub guard_counts: Option<(u64, u64)>,
}

impl ModeLog {
    /// A log whose times count from `t0` [ns].
    pub fn new(t0: Nanos) -> Self {
        ModeLog { t0, ..Default::default() }
    }

    /// The current mode and since when [ns].
    pub fn mode(&self) -> Option<(u8, Nanos)> {
        self.mode
    }

    /// Takes one `search_state` at `now`.
    pub fn on_state(&mut self, now: Nanos, s: &SearchState) {
        if self.mode.is_some_and(|(m, _)| m == s.mode) {
            return;
        }
        if let Some((m, since)) = self.mode {
            *self.time_in_mode.entry(mode_name(m)).or_default() += secs(now - since);
        }
        self.mode = Some((s.mode, now));
        self.transition_count += 1;
        if self.transitions.len() < MAX_TRANSITIONS {
            self.transitions.push(Transition { t: secs(now - self.t0), mode: mode_name(s.mode), reason: s.reason.clone() });
        }
        if s.mode == SearchState::HALTED {
            if self.left_startup {
                self.halts += 1;
                *self.halt_reasons.entry(reason_kind(&s.reason)).or_default() += 1;
            } else {
                self.startup_halts += 1;
            }
        } else {
            self.left_startup = true;
        }
    }

    /// Takes one `/diagnostics` array (keeps the arbiter guard's intervention counters).
    pub fn on_diagnostics(&mut self, d: &DiagnosticArray) {
        for s in d.status.iter().filter(|s| s.name.ends_with("arbiter: guard")) {
            let get = |k: &str| s.values.iter().find(|v| v.key == k).and_then(|v| v.value.parse::<u64>().ok());
            if let (Some(o), Some(f)) = (get("obstacle_stops"), get("fence_interventions")) {
                self.guard_counts = Some((o, f));
            }
        }
    }

    /// Closes the time-in-mode account at `now`.
    pub fn finish(&mut self, now: Nanos) {
        if let Some((m, since)) = self.mode {
            *self.time_in_mode.entry(mode_name(m)).or_default() += secs(now - since);
            self.mode = Some((m, now));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::Header;
    use sillage_core::time::SECOND;

    fn state(t: Nanos, mode: u8, reason: &str) -> SearchState {
        SearchState { header: Header::new(t, "odom"), mode, reason: reason.into(), heading_target: 0.0, contact_age: 0.0 }
    }

    #[test]
    fn reasons_lose_their_figures() {
        assert_eq!(reason_kind("watchdog: odor_bearing stale (1.20 s > 1.00 s), plume_features never received"), "watchdog: odor_bearing stale, plume_features never received");
        assert_eq!(reason_kind("contact lost for 2.1 s: casting across the wind"), "contact lost for s: casting across the wind");
    }

    #[test]
    fn halts_after_start_up_are_counted_with_reasons() {
        let mut log = ModeLog::new(0);
        log.on_state(0, &state(0, SearchState::HALTED, "watchdog: odom never received"));
        log.on_state(SECOND, &state(SECOND, SearchState::WAITING, "waiting"));
        log.on_state(2 * SECOND, &state(2 * SECOND, SearchState::WAITING, "waiting"));
        log.on_state(3 * SECOND, &state(3 * SECOND, SearchState::HALTED, "watchdog: wind stale (1.5 s > 1.0 s)"));
        log.on_state(4 * SECOND, &state(4 * SECOND, SearchState::SURGING, "contact"));
        log.finish(10 * SECOND);
        assert_eq!((log.startup_halts, log.halts, log.transition_count), (1, 1, 4));
        assert_eq!(log.halt_reasons.get("watchdog: wind stale"), Some(&1));
        assert_eq!(log.time_in_mode.get("WAITING"), Some(&2.0));
        assert_eq!(log.time_in_mode.get("SURGING"), Some(&6.0));
        assert_eq!(log.time_in_mode.get("HALTED"), Some(&2.0));
    }
}
