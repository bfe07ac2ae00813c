//! Rate-limited warnings: a core does no I/O, so warnings queue here for the executor (or a
//! test) to take, at most one per kind per `warn_interval`; the others are counted and the
//! next one that passes says how many were held back.

use sillage_core::Nanos;
use std::collections::VecDeque;

/// What a warning is about (each kind is rate-limited on its own).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum WarnKind {
    /// A sample not newer than the last one was dropped.
    OldSample,
    /// A large step back in time reset the channels.
    BackwardReset,
    /// A whole sample was rejected.
    BadSample,
    /// One channel's value was rejected.
    BadValue,
    /// The channel set changed.
    ChannelSet,
}

const KINDS: [WarnKind; 5] =
    [WarnKind::OldSample, WarnKind::BackwardReset, WarnKind::BadSample, WarnKind::BadValue, WarnKind::ChannelSet];

/// Most warnings kept until taken (older ones are dropped first and counted).
pub const QUEUE_CAP: usize = 64;

/// The rate limiter and queue.
#[derive(Debug, Clone, PartialEq)]
pub struct Warnings {
    interval: Nanos,
    last: [Option<Nanos>; 5],
    held: [u64; 5],
    queue: VecDeque<String>,
    suppressed: u64,
    latest: Option<String>,
}

impl Warnings {
    /// At most one warning per kind per `interval` [s].
    pub fn new(interval: f64) -> Warnings {
        Warnings {
            interval: sillage_core::time::nanos(interval),
            last: [None; 5],
            held: [0; 5],
            queue: VecDeque::new(),
            suppressed: 0,
            latest: None,
        }
    }

    /// Changes the interval [s].
    pub fn set_interval(&mut self, interval: f64) {
        self.interval = sillage_core::time::nanos(interval);
    }

    /// Warns about `kind` at `now` [ns]; `text` is only built when the warning passes.
    pub fn warn(&mut self, now: Nanos, kind: WarnKind, text: impl FnOnce() -> String) {
        let i = KINDS.iter().position(|k| *k == kind).unwrap_or(0);
        if let Some(last) = self.last[i] {
            if now >= last && now.saturating_sub(last) < self.interval {
                self.held[i] += 1;
                self.suppressed += 1;
                return;
            }
        }
        let mut msg = text();
        if self.held[i] > 0 {
            msg.push_str(&format!(" ({} similar warnings held back)", self.held[i]));
            self.held[i] = 0;
        }
        self.last[i] = Some(now);
        if self.queue.len() == QUEUE_CAP {
            self.queue.pop_front();
            self.suppressed += 1;
        }
        self.latest = Some(msg.clone());
        self.queue.push_back(msg);
    }

    /// Takes the queued warnings, oldest first.
    pub fn take(&mut self) -> Vec<String> {
        self.queue.drain(..).collect()
    }

    /// Warnings held back or dropped so far.
    pub fn suppressed(&self) -> u64 {
        self.suppressed
    }

    /// The last warning that passed.
    pub fn latest(&self) -> Option<&str> {
        self.latest.as_deref()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_per_kind_per_interval_and_the_held_count_is_told() {
        let mut w = Warnings::new(1.0);
        for k in 0..10 {
            w.warn(k * 100_000_000, WarnKind::BadValue, || format!("bad {k}"));
        }
        w.warn(0, WarnKind::OldSample, || "old".into());
        assert_eq!(w.take(), vec!["bad 0".to_string(), "old".to_string()]);
        assert_eq!(w.suppressed(), 9);
        w.warn(1_000_000_000, WarnKind::BadValue, || "bad again".into());
        assert_eq!(w.take(), vec!["bad again (9 similar warnings held back)".to_string()]);
        assert_eq!(w.latest(), Some("bad again (9 similar warnings held back)"));
    }
}
