//! Behaviour modes and the record of transitions.
//!
//! Contract: the node's mode is decided every control tick with this precedence:
//! 1. HALTED while the e-stop is latched ("e-stop ...");
//! 2. HALTED while a required input is stale ("watchdog: ...");
//! 3. DECLARED once the source has been declared (sticky until a restart);
//! 4. otherwise the strategy's phase: WAITING, SURGING or CASTING.
//!
//! Every transition carries a non-empty reason, published in `search_state.reason`. A change
//! of the halting cause while HALTED (say, from a stale input to the e-stop) counts as a
//! transition too, so the published reason always says why the robot stands still.

use sillage_core::msg::SearchState;
use sillage_core::Nanos;

/// The behaviour mode (values are the SearchState constants).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Mode {
    /// Not searching: no contact yet, or the search gave up. Zero command.
    Waiting,
    /// In contact: moving toward the source.
    Surging,
    /// Contact lost: running a search pattern.
    Casting,
    /// The source was declared. Zero command.
    Declared,
    /// Stopped by the e-stop or the watchdogs. Zero command.
    Halted,
}

impl Mode {
    /// The SearchState `mode` constant.
    pub fn code(self) -> u8 {
        match self {
            Mode::Waiting => SearchState::WAITING,
            Mode::Surging => SearchState::SURGING,
            Mode::Casting => SearchState::CASTING,
            Mode::Declared => SearchState::DECLARED,
            Mode::Halted => SearchState::HALTED,
        }
    }

    /// The mode with this SearchState constant.
    pub fn from_code(code: u8) -> Option<Mode> {
        [Mode::Waiting, Mode::Surging, Mode::Casting, Mode::Declared, Mode::Halted].into_iter().find(|m| m.code() == code)
    }

    /// Upper-case name as in SearchState.
    pub fn name(self) -> &'static str {
        match self {
            Mode::Waiting => "WAITING",
            Mode::Surging => "SURGING",
            Mode::Casting => "CASTING",
            Mode::Declared => "DECLARED",
            Mode::Halted => "HALTED",
        }
    }
}

/// One transition.
#[derive(Debug, Clone, PartialEq)]
pub struct Transition {
    /// When [ns].
    pub at: Nanos,
    /// Previous mode.
    pub from: Mode,
    /// New mode.
    pub to: Mode,
    /// Why.
    pub reason: String,
}

/// The current mode and the last transition.
#[derive(Debug, Clone)]
pub struct ModeMachine {
    mode: Mode,
    reason: String,
    since: Option<Nanos>,
    count: u64,
    last: Option<Transition>,
}

impl Default for ModeMachine {
    fn default() -> Self {
        ModeMachine { mode: Mode::Waiting, reason: "start".into(), since: None, count: 0, last: None }
    }
}

impl ModeMachine {
    /// The current mode.
    pub fn mode(&self) -> Mode {
        self.mode
    }

    /// Why the current mode was entered.
    pub fn reason(&self) -> &str {
        &self.reason
    }

    /// When the current mode was entered [ns] (`None`: since start).
    pub fn since(&self) -> Option<Nanos> {
        self.since
    }

    /// Transitions so far.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// The last transition.
    pub fn last(&self) -> Option<&Transition> {
        self.last.as_ref()
    }

    /// Enters `to` at `now` for `reason` (an empty reason is recorded as "unspecified").
    pub fn enter(&mut self, now: Nanos, to: Mode, reason: String) {
        let reason = if reason.trim().is_empty() { "unspecified".to_string() } else { reason };
        self.last = Some(Transition { at: now, from: self.mode, to, reason: reason.clone() });
        self.mode = to;
        self.reason = reason;
        self.since = Some(now);
        self.count += 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_match_search_state_constants() {
        for m in [Mode::Waiting, Mode::Surging, Mode::Casting, Mode::Declared, Mode::Halted] {
            assert_eq!(Mode::from_code(m.code()), Some(m));
        }
        assert_eq!(Mode::Halted.code(), 4);
        assert_eq!(Mode::from_code(9), None);
        let mut mm = ModeMachine::default();
        mm.enter(5, Mode::Halted, " ".into());
        assert_eq!(mm.reason(), "unspecified");
        assert_eq!(mm.last().map(|t| t.from), Some(Mode::Waiting));
    }
}
