//! One channel's hot path: conditioning then encoding, as a plain struct with
//! [`Channel::step`]. No allocation per step (crossings go into a caller's reused buffer).

use crate::conditioning::{ConditioningParams, Conditioner, SampleFault};
use crate::encoding::{Crossing, EncodingParams, LevelEncoder};
use sillage_core::Nanos;

/// Per-channel counters.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ChannelCounts {
    /// Values accepted.
    pub accepted: u64,
    /// Values rejected, by fault kind: non-finite, non-positive, unknown quantity,
    /// unsupported, overflow (the order of [`FAULT_KINDS`]).
    pub rejected: [u64; 5],
    /// Gaps longer than the stale timeout (crossings after a gap are not interpolated).
    pub gaps: u64,
    /// Changes of quantity (each starts the channel over).
    pub quantity_changes: u64,
}

/// Fault kind names in the order of [`ChannelCounts::rejected`].
pub const FAULT_KINDS: [&str; 5] = ["non_finite", "non_positive", "unknown_quantity", "unsupported", "overflow"];

impl ChannelCounts {
    /// All rejected values.
    pub fn rejected_total(&self) -> u64 {
        self.rejected.iter().sum()
    }
}

/// Conditioner + encoder of one channel.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    conditioner: Conditioner,
    encoder: LevelEncoder,
    quantity: u8,
    gap: Nanos,
    last_valid: Option<Nanos>,
    last_raw: f64,
    last_fault: Option<(Nanos, SampleFault)>,
    counts: ChannelCounts,
}

impl Channel {
    /// A channel; `gap_timeout` [s] is the longest gap across which crossings are
    /// interpolated.
    pub fn new(c: &ConditioningParams, e: &EncodingParams, gap_timeout: f64) -> Channel {
        Channel {
            conditioner: Conditioner::new(c),
            encoder: LevelEncoder::new(e),
            quantity: 0,
            gap: sillage_core::time::nanos(gap_timeout),
            last_valid: None,
            last_raw: f64::NAN,
            last_fault: None,
            counts: ChannelCounts::default(),
        }
    }

    /// Replaces the parameters, keeping what the parts keep (see their `set_params`).
    pub fn set_params(&mut self, c: &ConditioningParams, e: &EncodingParams, gap_timeout: f64) {
        self.conditioner.set_params(c);
        self.encoder.set_params(e);
        self.gap = sillage_core::time::nanos(gap_timeout);
    }

    /// Sets the quantity of the values that follow (a ChemSample constant).
    #[inline]
    pub fn set_quantity(&mut self, quantity: u8) {
        self.quantity = quantity;
    }

    /// Conditions and encodes `raw` at `t` [ns]; appends published crossings to `out` and
    /// returns how many. A rejected value changes nothing but the counters.
    #[inline]
    pub fn step(&mut self, t: Nanos, raw: f64, out: &mut Vec<Crossing>) -> Result<usize, SampleFault> {
        let before = self.conditioner.quantity();
        let x = match self.conditioner.step(t, raw, self.quantity) {
            Ok(x) => x,
            Err(f) => {
                self.counts.rejected[fault_index(&f)] += 1;
                self.last_fault = Some((t, f));
                return Err(f);
            }
        };
        if before.is_some() && before != Some(self.quantity) {
            self.counts.quantity_changes += 1;
            self.encoder.reset();
            self.last_valid = None;
        }
        let interpolate = match self.last_valid {
            Some(last) if t.saturating_sub(last) > self.gap => {
                self.counts.gaps += 1;
                false
            }
            _ => true,
        };
        self.counts.accepted += 1;
        self.last_valid = Some(t);
        self.last_raw = raw;
        Ok(self.encoder.step(t, x, interpolate, out))
    }

    /// Forgets the signal history (baseline, R0, reference); counters are kept.
    pub fn reset(&mut self) {
        self.conditioner.reset();
        self.encoder.reset();
        self.last_valid = None;
    }

    /// The conditioner.
    pub fn conditioner(&self) -> &Conditioner {
        &self.conditioner
    }

    /// The encoder.
    pub fn encoder(&self) -> &LevelEncoder {
        &self.encoder
    }

    /// Counters.
    pub fn counts(&self) -> &ChannelCounts {
        &self.counts
    }

    /// Time of the last accepted value [ns].
    pub fn last_valid(&self) -> Option<Nanos> {
        self.last_valid
    }

    /// The last accepted raw value.
    pub fn last_raw(&self) -> f64 {
        self.last_raw
    }

    /// The last rejection and its time [ns].
    pub fn last_fault(&self) -> Option<(Nanos, SampleFault)> {
        self.last_fault
    }
}

fn fault_index(f: &SampleFault) -> usize {
    FAULT_KINDS.iter().position(|k| *k == f.kind()).unwrap_or(0)
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::ChemSample;

    #[test]
    fn mox_plume_hit_gives_rising_then_falling_events() {
        // A MOX channel at 10 kohm; a hit that halves Rs gives ln 2 = 0.693 of log-conductance,
        // so 13 rising events of delta 0.05, then the falling ones on recovery.
        let mut ch = Channel::new(&ConditioningParams::default(), &EncodingParams::default(), 1.0);
        ch.set_quantity(ChemSample::RESISTANCE);
        let mut out = Vec::new();
        let ms = 1_000_000;
        for k in 0..100 {
            ch.step(k * 10 * ms, 10_000.0, &mut out).expect("valid");
        }
        assert!(out.is_empty());
        for k in 100..200 {
            ch.step(k * 10 * ms, 5_000.0, &mut out).expect("valid");
        }
        assert_eq!(out.len(), 13);
        // A step between two samples: stamps spread over that interval, in order.
        assert!(out.iter().all(|c| c.polarity == 1 && (990 * ms..=1_000 * ms).contains(&c.stamp)));
        assert!(out.windows(2).all(|w| w[0].stamp < w[1].stamp));
        out.clear();
        for k in 200..400 {
            ch.step(k * 10 * ms, 10_000.0, &mut out).expect("valid");
        }
        assert!(out.len() >= 12 && out.iter().all(|c| c.polarity == -1), "{}", out.len());
        assert_eq!(ch.step(4_000 * ms, -1.0, &mut out).map_err(|f| f.kind()), Err("non_positive"));
        assert_eq!(ch.counts().rejected[1], 1);
        assert_eq!(ch.counts().accepted, 400);
    }

    #[test]
    fn gaps_and_quantity_changes() {
        let mut ch = Channel::new(&ConditioningParams::default(), &EncodingParams::default(), 0.5);
        ch.set_quantity(ChemSample::CONCENTRATION);
        let mut out = Vec::new();
        ch.step(0, 1.0, &mut out).expect("valid");
        ch.step(2_000_000_000, 1.2, &mut out).expect("valid");
        assert_eq!(ch.counts().gaps, 1);
        assert!(out.iter().all(|c| c.stamp == 2_000_000_000), "not interpolated across the gap");
        ch.set_quantity(ChemSample::VOLTAGE);
        out.clear();
        ch.step(2_100_000_000, 3.0, &mut out).expect("valid");
        assert_eq!(ch.counts().quantity_changes, 1);
        assert!(out.is_empty(), "a new quantity starts a new reference");
    }
}
