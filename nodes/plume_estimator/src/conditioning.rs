//! Channel conditioning in front of the bout chain: the event encoder's shared
//! [`Conditioner`] (raw value → "larger = more gas", baseline removed), plus the linear
//! response the std/mean proximity indicator needs.
//!
//! The bout chain gets the conditioned, baseline-free value. The std/mean indicator ("Indicators
//! of gas source proximity using metal oxide sensors in a turbulent environment", 2006) needs a
//! response with a positive clean-air level, so it gets the transformed value before baseline
//! removal, in linear units: for `log_conductance` that is `exp(value)` (the conductance [S]),
//! otherwise the transformed value itself (conductance, R0/R, or the pass-through value). The
//! ratio does not depend on the unit, so G and G/G0 give the same indicator.
//!
//! A value the conditioner rejects is counted by kind and skipped. A channel the conditioner
//! reports *dead* (raw value stuck for `conditioning.stuck_time`) is skipped too: a stuck
//! sensor shows no bouts, which would read as "far from the source".

use crate::params::Params;
use sillage_core::Nanos;
pub use sillage_event_encoder::conditioning::{ChannelStatus, Conditioner, ConditioningParams, SampleFault, Transform};

/// Fault kinds counted per channel, in [`SampleFault::kind`] spelling.
pub const FAULT_KINDS: [&str; 6] = ["non_finite", "non_positive", "unknown_quantity", "unsupported", "overflow", "dead"];

/// Why a value did not reach the bout chain.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Skip {
    /// The conditioner rejected it.
    Fault(SampleFault),
    /// The channel is dead (stuck raw value).
    Dead,
}

impl Skip {
    /// Short name (one of [`FAULT_KINDS`]).
    pub fn kind(&self) -> &'static str {
        match self {
            Skip::Fault(f) => f.kind(),
            Skip::Dead => "dead",
        }
    }
}

/// One channel's conditioning state and fault counters.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelInput {
    conditioner: Conditioner,
    /// Skipped values by kind, in [`FAULT_KINDS`] order.
    pub faults: [u64; FAULT_KINDS.len()],
    /// The last skip.
    pub last_fault: Option<Skip>,
}

impl ChannelInput {
    /// A channel input with the node's conditioning parameters.
    pub fn new(p: &Params) -> ChannelInput {
        ChannelInput { conditioner: Conditioner::new(&p.conditioning), faults: [0; FAULT_KINDS.len()], last_fault: None }
    }

    /// (conditioned value, linear response) of `raw` (in `quantity` units) at `t` [ns].
    #[inline]
    pub fn condition(&mut self, t: Nanos, raw: f64, quantity: u8) -> Result<(f64, f64), Skip> {
        let r = match self.conditioner.step(t, raw, quantity) {
            Ok(_) if self.conditioner.status() == ChannelStatus::Dead => Err(Skip::Dead),
            Ok(x) => {
                let y = self.conditioner.transformed().unwrap_or(f64::NAN);
                let level = if self.conditioner.transform() == Transform::LogConductance { y.exp() } else { y };
                Ok((x, level))
            }
            Err(f) => Err(Skip::Fault(f)),
        };
        if let Err(s) = r {
            let k = s.kind();
            if let Some(i) = FAULT_KINDS.iter().position(|n| *n == k) {
                self.faults[i] += 1;
            }
            self.last_fault = Some(s);
        }
        r
    }

    /// Values skipped in total.
    pub fn skipped(&self) -> u64 {
        self.faults.iter().sum()
    }

    /// The conditioner (for its status, baseline, transform).
    pub fn conditioner(&self) -> &Conditioner {
        &self.conditioner
    }
}
