//! Channel conditioning in front of the bout chain (placeholder until the shared conditioner
//! is available): finite values pass unchanged.

use crate::params::Params;
use sillage_core::Nanos;

/// One channel's conditioning state and fault counters.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ChannelInput {
    /// Values rejected.
    pub faults: u64,
    /// Kind of the last rejection.
    pub last_fault: Option<&'static str>,
}

impl ChannelInput {
    /// A channel input for the node's parameters.
    pub fn new(_p: &Params) -> ChannelInput {
        ChannelInput::default()
    }

    /// (conditioned value, transformed value before baseline removal) of `raw` at `t`.
    #[inline]
    pub fn condition(&mut self, _t: Nanos, raw: f64, _quantity: u8) -> Result<(f64, f64), &'static str> {
        if raw.is_finite() {
            Ok((raw, raw))
        } else {
            self.faults += 1;
            self.last_fault = Some("non_finite");
            Err("non_finite")
        }
    }

    /// Short status word for diagnostics.
    pub fn status(&self) -> &'static str {
        "ok"
    }
}
