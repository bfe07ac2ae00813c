//! The e-stop latch.
//!
//! Contract: `e_stop = true` latches at once. The latch releases only on an `e_stop_reset`
//! that arrives while the latch is set, after an `e_stop = false` that itself came after the
//! last `true`. A reset before that false (or while the e-stop is still true) is refused and
//! counted; a reset while not latched does nothing here. Nothing else (clock jumps, parameter
//! changes, stale inputs) releases the latch.

/// What a reset did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ResetOutcome {
    /// The latch was released.
    Released,
    /// The latch stays: the e-stop has not been seen false since it was pressed.
    Refused,
    /// Nothing was latched.
    NotLatched,
}

/// The latch.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct EStopLatch {
    latched: bool,
    cleared: bool,
    /// Presses (`true` while not latched).
    pub presses: u64,
    /// Refused resets.
    pub refused: u64,
    /// Releases.
    pub releases: u64,
}

impl EStopLatch {
    /// Whether motion is forbidden.
    pub fn is_latched(&self) -> bool {
        self.latched
    }

    /// Whether the e-stop has been seen false since it latched (a reset would release it).
    pub fn is_cleared(&self) -> bool {
        self.latched && self.cleared
    }

    /// An `e_stop` message.
    pub fn on_e_stop(&mut self, pressed: bool) {
        if pressed {
            if !self.latched {
                self.presses += 1;
            }
            self.latched = true;
            self.cleared = false;
        } else if self.latched {
            self.cleared = true;
        }
    }

    /// An `e_stop_reset` message.
    pub fn on_reset(&mut self) -> ResetOutcome {
        if !self.latched {
            ResetOutcome::NotLatched
        } else if self.cleared {
            self.latched = false;
            self.cleared = false;
            self.releases += 1;
            ResetOutcome::Released
        } else {
            self.refused += 1;
            ResetOutcome::Refused
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn release_needs_false_then_reset() {
        let mut l = EStopLatch::default();
        assert_eq!(l.on_reset(), ResetOutcome::NotLatched);
        l.on_e_stop(true);
        assert_eq!(l.on_reset(), ResetOutcome::Refused, "still pressed");
        l.on_e_stop(false);
        l.on_e_stop(true);
        assert_eq!(l.on_reset(), ResetOutcome::Refused, "pressed again after the false");
        l.on_e_stop(false);
        assert!(l.is_latched(), "false alone does not release");
        assert_eq!(l.on_reset(), ResetOutcome::Released);
        assert!(!l.is_latched());
        assert_eq!((l.presses, l.refused, l.releases), (1, 2, 1));
    }
}
