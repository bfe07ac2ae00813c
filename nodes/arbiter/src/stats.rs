//! Input counters for diagnostics: accepted, malformed, duplicated, reordered and restarted
//! messages per input, the last problem (with its time) and the node clock's backward jumps.

use crate::error::ArbiterError;
use crate::inputs::{Input, StampCheck, INPUTS};
use sillage_core::Nanos;

/// Counters of one input.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct InputCounts {
    /// Messages accepted.
    pub accepted: u64,
    /// Messages refused as malformed.
    pub malformed: u64,
    /// Messages dropped as duplicates (same header stamp).
    pub duplicates: u64,
    /// Messages dropped as out of order (older header stamp).
    pub out_of_order: u64,
    /// Source clock restarts (large backward stamp step; the message was accepted).
    pub restarts: u64,
}

/// Counters of every input.
#[derive(Debug, Clone, Default)]
pub struct InputStats {
    /// Per input, in port order.
    pub inputs: [InputCounts; INPUTS],
    /// Messages on an index that is no input.
    pub unknown: u64,
    /// Backward jumps of the node's clock.
    pub clock_jumps: u64,
    /// The last problem and when it happened.
    pub last_problem: Option<(Nanos, String)>,
}

impl InputStats {
    /// Counts a malformed message.
    pub fn malformed(&mut self, input: Option<Input>, now: Nanos, e: &ArbiterError) {
        match input {
            Some(i) => self.inputs[i.index()].malformed += 1,
            None => self.unknown += 1,
        }
        self.last_problem = Some((now, e.to_string()));
    }

    /// Counts the outcome of a stamp check; true when the message is to be used.
    pub fn stamp(&mut self, input: Input, now: Nanos, check: StampCheck) -> bool {
        let c = &mut self.inputs[input.index()];
        let (keep, what) = match check {
            StampCheck::Fresh => (true, None),
            StampCheck::Restart => {
                c.restarts += 1;
                (true, Some("stamp jumped back: source clock restart"))
            }
            StampCheck::Duplicate => {
                c.duplicates += 1;
                (false, Some("duplicated stamp: dropped"))
            }
            StampCheck::OutOfOrder => {
                c.out_of_order += 1;
                (false, Some("out-of-order stamp: dropped"))
            }
        };
        if keep {
            c.accepted += 1;
        }
        if let Some(w) = what {
            self.last_problem = Some((now, format!("topic '{}': {w}", input.topic())));
        }
        keep
    }

    /// Total malformed messages.
    pub fn total_malformed(&self) -> u64 {
        self.inputs.iter().map(|c| c.malformed).sum::<u64>() + self.unknown
    }
}
